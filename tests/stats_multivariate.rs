//! Hotelling T², Wald and TOST checked against a textbook worked example, scipy critical values
//! (fixture from scripts/stats_reference.py) and hand-worked cases.

use mountdrift::stats::multivariate::{
    hotelling_one_sample, hotelling_one_sample_critical, hotelling_two_sample,
    hotelling_two_sample_critical, tost, wald_difference,
};
use nalgebra::{DVector, Matrix6, Vector6};
use serde_json::Value;

fn fixture() -> Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/stats/scipy_reference.json"
    ))
    .expect("fixture fixtures/stats/scipy_reference.json (run scripts/stats_reference.py)");
    serde_json::from_str(&text).expect("valid scipy fixture")
}

fn rows(v: &Value) -> Vec<DVector<f64>> {
    v.as_array()
        .unwrap()
        .iter()
        .map(|r| {
            DVector::from_iterator(
                r.as_array().unwrap().len(),
                r.as_array().unwrap().iter().map(|x| x.as_f64().unwrap()),
            )
        })
        .collect()
}

/// Johnson & Wichern, *Applied Multivariate Statistical Analysis*, Exercise 5.1:
/// X = (2,12), (8,9), (6,9), (8,10), H0: μ = (7, 11) → x̄ = (6, 10), T² = 150/11 = 13.636,
/// critical value at α = 0.05: 3·F_.95(2,2) = 57.0, p = 0.1803 → do not reject
/// (CHECK_VALUES.md section 1).
#[test]
fn one_sample_hotelling_matches_johnson_wichern_exercise_5_1() {
    let data: Vec<DVector<f64>> = [(2.0, 12.0), (8.0, 9.0), (6.0, 9.0), (8.0, 10.0)]
        .iter()
        .map(|&(a, b)| DVector::from_vec(vec![a, b]))
        .collect();
    let test = hotelling_one_sample(&data, &DVector::from_vec(vec![7.0, 11.0]), 0.05).unwrap();
    assert!((test.t2 - 150.0 / 11.0).abs() < 1e-12, "T² {}", test.t2);
    assert!(
        (test.critical_t2 - 57.0).abs() < 1e-9,
        "critical {}",
        test.critical_t2
    );
    assert!((test.p_value - 0.1803).abs() < 5e-5, "p {}", test.p_value);
    assert!(test.t2 < test.critical_t2);
    assert_eq!((test.df1, test.df2), (2.0, 2.0));
    let fx = fixture();
    let reference = &fx["hotelling_one_sample"];
    assert!((test.p_value - reference["p_value"].as_f64().unwrap()).abs() < 1e-10);
}

/// Critical T² at α = 0.05, p = 6 (CHECK_VALUES.md section 1, scipy): one sample n = 20, 51,
/// 101 → 23.1886, 15.3885, 13.8666; two samples n1 = n2 = 20, 30, 50, 100 → 16.5085, 14.9403,
/// 13.8950, 13.2084.
#[test]
fn hotelling_critical_values_match_f_conversion_table() {
    for (n, t2) in [(20, 23.1886), (51, 15.3885), (101, 13.8666)] {
        let ours = hotelling_one_sample_critical(n, 6, 0.05).unwrap();
        assert!((ours - t2).abs() < 1e-4, "one-sample n {n}: {ours}");
    }
    for (n, t2) in [(20, 16.5085), (30, 14.9403), (50, 13.8950), (100, 13.2084)] {
        let ours = hotelling_two_sample_critical(n, n, 6, 0.05).unwrap();
        assert!((ours - t2).abs() < 1e-4, "two-sample n {n}: {ours}");
    }
    let fx = fixture();
    for row in fx["hotelling_two_sample_critical"].as_array().unwrap() {
        let n = row["n1"].as_u64().unwrap() as usize;
        let ours = hotelling_two_sample_critical(n, n, 6, 0.05).unwrap();
        assert!((ours - row["critical_t2"].as_f64().unwrap()).abs() < 1e-8);
    }
}

/// Two-sample pooled Hotelling T² on the fixture's seeded 3-D samples (numpy/scipy values).
#[test]
fn two_sample_hotelling_matches_numpy_scipy() {
    let fx = fixture();
    let reference = &fx["hotelling_two_sample"];
    let test = hotelling_two_sample(
        &rows(&reference["first"]),
        &rows(&reference["second"]),
        0.05,
    )
    .unwrap();
    let get = |k: &str| reference[k].as_f64().unwrap();
    assert!((test.t2 - get("t2")).abs() < 1e-9 * get("t2"));
    assert!((test.f - get("f")).abs() < 1e-9 * get("f"));
    assert!((test.p_value - get("p_value")).abs() < 1e-9);
    assert_eq!((test.df1, test.df2), (3.0, 23.0));
}

/// Hand-worked Wald test: a − b = (1, 2, 0, 0, 0, 3), Pa = diag(1, 1, 1, 1, 1, 0) (the sixth
/// direction unobservable in a), Pb = diag(1, 3, 1, 1, 1, 1). Only the directions both observe
/// count: W = 1²/2 + 2²/4 = 1.5 with 5 dof, p = P(chi2_5 > 1.5) (scipy `chi2.sf(1.5, 5)` =
/// 0.9130698).
#[test]
fn wald_test_ignores_directions_either_estimate_cannot_see() {
    let a = Vector6::new(1.0, 2.0, 0.0, 0.0, 0.0, 3.0);
    let b = Vector6::zeros();
    let pa = Matrix6::from_diagonal(&Vector6::new(1.0, 1.0, 1.0, 1.0, 1.0, 0.0));
    let pb = Matrix6::from_diagonal(&Vector6::new(1.0, 3.0, 1.0, 1.0, 1.0, 1.0));
    let test = wald_difference(&a, &pa, &b, &pb).unwrap();
    assert!((test.statistic - 1.5).abs() < 1e-12, "W {}", test.statistic);
    assert_eq!(test.dof, 5);
    assert!((test.p_value.unwrap() - 0.913_069_8).abs() < 1e-6);
}

/// Hand-worked TOST (Schuirmann 1987) at α = 0.05 with 20 dof, t_.95(20) = 1.7247
/// (CHECK_VALUES.md section 1):
/// - estimate 0.3, se 0.2, Δ = 1: 90% CI 0.3 ± 0.34494 = (−0.04494, 0.64494) inside (−1, 1) →
///   equivalent; the binding one-sided test is H0: θ >= 1, t = (1 − 0.3)/0.2 = 3.5.
/// - estimate 0.8, se 0.2, Δ = 1: CI (0.45506, 1.14494) crosses 1 → not equivalent, t = 1.0,
///   p = P(t_20 > 1) = 0.16463.
#[test]
fn tost_matches_hand_worked_examples() {
    let pass = tost(0.3, 0.2, 1.0, 0.05, Some(20.0)).unwrap();
    assert!((pass.interval.0 - (0.3 - 0.2 * 1.724_718)).abs() < 1e-5);
    assert!((pass.interval.1 - (0.3 + 0.2 * 1.724_718)).abs() < 1e-5);
    assert!(pass.equivalent && pass.p_value < 0.05);
    let fail = tost(0.8, 0.2, 1.0, 0.05, Some(20.0)).unwrap();
    assert!(!fail.equivalent);
    assert!(
        (fail.p_value - 0.164_628).abs() < 1e-5,
        "p {}",
        fail.p_value
    );
    // Normal version: z_.95 = 1.644854, interval 0.3 ± 0.328971.
    let z = tost(0.3, 0.2, 1.0, 0.05, None).unwrap();
    assert!((z.interval.1 - (0.3 + 0.2 * 1.644_854)).abs() < 1e-6);
    // Equivalence at level α is exactly "both one-sided p-values below α".
    for est in [-0.9, -0.5, 0.0, 0.62, 0.66, 0.7, 0.95] {
        let t = tost(est, 0.2, 1.0, 0.05, Some(20.0)).unwrap();
        assert_eq!(t.equivalent, t.p_value < 0.05, "estimate {est}");
    }
}

#[test]
fn invalid_inputs_are_errors() {
    let one = vec![DVector::from_vec(vec![1.0, 2.0])];
    assert!(hotelling_one_sample(&one, &DVector::from_vec(vec![0.0, 0.0]), 0.05).is_err());
    let collinear: Vec<DVector<f64>> = (0..5)
        .map(|i| DVector::from_vec(vec![i as f64, 2.0 * i as f64]))
        .collect();
    assert!(hotelling_one_sample(&collinear, &DVector::from_vec(vec![0.0, 0.0]), 0.05).is_err());
    assert!(tost(0.0, 0.0, 1.0, 0.05, None).is_err());
    assert!(tost(0.0, 1.0, 1.0, 0.6, None).is_err());
}
