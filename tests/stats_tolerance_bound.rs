//! Wilks' one-sided nonparametric tolerance bound (the order statistic the change-point penalty
//! and the online threshold are taken at) and the binomial distribution function behind it,
//! against SciPy (`fixtures/binomial/tolerance_bounds.json`, from
//! `scripts/tolerance_reference.py`) and the sample sizes tabulated for Wilks' method at 95%/95%
//! (59, 93, 124, 153 runs for the first to fourth largest value; Wilks 1941, Ann. Math.
//! Statist. 12:91-96).

use mountdrift::stats::distributions::binomial_cdf;
use mountdrift::stats::penalty::tolerance_bound;
use rand::{RngExt, SeedableRng};
use rand_pcg::Pcg64Mcg;
use serde_json::Value;

fn fixture() -> Value {
    let path = concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/binomial/tolerance_bounds.json"
    );
    serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn ascending(n: usize) -> Vec<f64> {
    (0..n).map(|i| i as f64).collect()
}

#[test]
fn binomial_cdf_matches_scipy() {
    for case in fixture()["cdf"].as_array().unwrap() {
        let k = case["k"].as_u64().unwrap();
        let n = case["n"].as_u64().unwrap();
        let p = case["p"].as_f64().unwrap();
        let expected = case["cdf"].as_f64().unwrap();
        let got = binomial_cdf(k, n, p).unwrap();
        assert!(
            (got - expected).abs() <= 1e-10 * expected.max(1e-3),
            "P(Bin({n}, {p}) <= {k}): {got} against SciPy's {expected}"
        );
    }
    assert!(binomial_cdf(1, 10, 1.5).is_err());
}

#[test]
fn bounds_match_scipy() {
    for case in fixture()["bounds"].as_array().unwrap() {
        let runs = case["runs"].as_u64().unwrap() as usize;
        let rate = case["rate"].as_f64().unwrap();
        let confidence = case["confidence"].as_f64().unwrap();
        let bound = tolerance_bound(&ascending(runs), rate, confidence).unwrap();
        let j = case["exceeding_runs"].as_u64().unwrap() as usize;
        assert_eq!(bound.exceeding_runs, j, "R = {runs}, rate {rate}");
        assert_eq!(bound.value as usize, runs - 1 - j);
        let reached = case["confidence_reached"].as_f64().unwrap();
        assert!((bound.confidence - reached).abs() < 1e-10);
    }
}

#[test]
fn wilks_sample_sizes_at_95_95() {
    // The tabulated sizes (from the fixture, where SciPy recomputes them) are the smallest run
    // counts that reach 95% confidence with 0, 1, 2, 3 values above the bound.
    for case in fixture()["wilks_95_95_sizes"].as_array().unwrap() {
        let order = case["order"].as_u64().unwrap() as usize;
        let runs = case["runs"].as_u64().unwrap() as usize;
        assert_eq!(runs, [59, 93, 124, 153][order - 1]);
        let at = tolerance_bound(&ascending(runs), 0.05, 0.95).unwrap();
        assert_eq!(at.exceeding_runs, order - 1);
        assert!(at.confidence >= 0.95);
        let fewer = tolerance_bound(&ascending(runs - 1), 0.05, 0.95).unwrap();
        assert!(fewer.exceeding_runs < order - 1 || fewer.confidence < 0.95);
    }
}

#[test]
fn true_rate_exceeds_the_target_at_most_as_often_as_allowed() {
    // Uniform null values: the bound's true exceedance rate is 1 − value. Over 4000 draws of
    // R = 200 values at rate 0.05 and confidence 0.9, the rate may exceed 0.05 in at most 10% of
    // draws; allow three binomial standard errors.
    let mut rng = Pcg64Mcg::seed_from_u64(20261202);
    let draws = 4000;
    let mut over = 0;
    for _ in 0..draws {
        let mut values: Vec<f64> = (0..200).map(|_| rng.random::<f64>()).collect();
        values.sort_by(f64::total_cmp);
        let bound = tolerance_bound(&values, 0.05, 0.9).unwrap();
        over += usize::from(1.0 - bound.value > 0.05);
    }
    let allowed = 0.1 * draws as f64 + 3.0 * (draws as f64 * 0.1 * 0.9).sqrt();
    assert!(
        (over as f64) <= allowed,
        "{over} of {draws} draws over the rate"
    );
    // ... and not far below it: the bound is not merely conservative (exact 10% up to the
    // discreteness of j: 1 − P(Bin(200, 0.05) <= 5) ≈ 0.94 here).
    assert!(over as f64 >= 0.03 * draws as f64, "{over} of {draws}");
}

#[test]
fn rejects_bad_arguments() {
    assert!(tolerance_bound(&[], 0.01, 0.95).is_err());
    assert!(tolerance_bound(&[1.0], 1.5, 0.95).is_err());
    let one = tolerance_bound(&[1.0, 2.0], 0.01, 0.95).unwrap();
    assert_eq!(one.exceeding_runs, 0);
    assert!(one.confidence < 0.95);
}
