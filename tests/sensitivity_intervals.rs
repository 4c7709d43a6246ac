//! Binomial proportion intervals of the sensitivity study against outside references: SciPy's
//! `binomtest(...).proportion_ci` (fixture from scripts/binomial_reference.py) and the worked
//! examples of Newcombe (1998).

use mountdrift::commands::sensitivity::{clopper_pearson, wilson, IntervalMethod};
use serde::Deserialize;

#[derive(Deserialize)]
struct Fixture {
    cases: Vec<Case>,
}

#[derive(Deserialize)]
struct Case {
    successes: u64,
    trials: u64,
    level: f64,
    clopper_pearson: [f64; 2],
    wilson: [f64; 2],
}

fn fixture() -> Fixture {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/binomial/proportion_ci.json"
    ))
    .unwrap();
    serde_json::from_str(&text).unwrap()
}

fn assert_close(got: [f64; 2], want: [f64; 2], tol: f64, what: &str) {
    for i in 0..2 {
        assert!(
            (got[i] - want[i]).abs() <= tol,
            "{what}: bound {i} is {} but the reference says {}",
            got[i],
            want[i]
        );
    }
}

#[test]
fn clopper_pearson_matches_scipy_exact() {
    // Source: scipy 1.17.1 binomtest(k, n).proportion_ci(method="exact"),
    // fixtures/binomial/proportion_ci.json.
    let fixture = fixture();
    assert!(fixture.cases.len() >= 50);
    for c in &fixture.cases {
        let got = clopper_pearson(c.successes, c.trials, c.level).unwrap();
        let what = format!(
            "Clopper-Pearson {}/{} at {}",
            c.successes, c.trials, c.level
        );
        assert_close(got, c.clopper_pearson, 1e-9, &what);
    }
}

#[test]
fn wilson_matches_scipy_wilson() {
    // Source: scipy 1.17.1 binomtest(k, n).proportion_ci(method="wilson"),
    // fixtures/binomial/proportion_ci.json.
    for c in &fixture().cases {
        let got = wilson(c.successes, c.trials, c.level).unwrap();
        let what = format!("Wilson {}/{} at {}", c.successes, c.trials, c.level);
        assert_close(got, c.wilson, 1e-9, &what);
    }
}

#[test]
fn newcombe_1998_worked_examples() {
    // Source: Newcombe (1998), "Two-sided confidence intervals for the single proportion:
    // comparison of seven methods", Statistics in Medicine 17:857-872, Table II, methods 3
    // (Wilson score) and 5 (Clopper-Pearson exact), 95% intervals printed to 4 decimals.
    // Values recalled from memory; the SciPy fixture above agrees with every one of them.
    let examples: [(u64, u64, [f64; 2], [f64; 2]); 4] = [
        (81, 263, [0.2553, 0.3662], [0.2527, 0.3676]),
        (15, 148, [0.0624, 0.1605], [0.0578, 0.1617]),
        (0, 20, [0.0, 0.1611], [0.0, 0.1684]),
        (1, 29, [0.0061, 0.1718], [0.0009, 0.1776]),
    ];
    for (x, n, score, exact) in examples {
        assert_close(
            wilson(x, n, 0.95).unwrap(),
            score,
            5e-5,
            &format!("Wilson {x}/{n}"),
        );
        assert_close(
            clopper_pearson(x, n, 0.95).unwrap(),
            exact,
            5e-5,
            &format!("Clopper-Pearson {x}/{n}"),
        );
    }
}

#[test]
fn zero_successes_have_the_closed_form_upper_bound() {
    // Source: Clopper & Pearson (1934); for x = 0 the upper bound solves (1 − p)^n = α/2, so
    // p = 1 − (α/2)^(1/n) (e.g. Brown, Cai & DasGupta 2001, section 4.2.1).
    for n in [1_u64, 7, 30, 100, 3000] {
        let [lo, hi] = clopper_pearson(0, n, 0.95).unwrap();
        let want = 1.0 - 0.025_f64.powf(1.0 / n as f64);
        assert!(lo.abs() < 1e-15);
        assert!((hi - want).abs() < 1e-10, "n = {n}: {hi} vs {want}");
    }
}

#[test]
fn methods_name_their_reference_and_refuse_no_trials() {
    assert!(IntervalMethod::ClopperPearson
        .reference()
        .contains("Clopper & Pearson 1934"));
    assert!(IntervalMethod::Wilson.reference().contains("Wilson 1927"));
    assert_eq!(IntervalMethod::Wilson.interval(0, 0, 0.95), None);
    assert_eq!(IntervalMethod::ClopperPearson.interval(4, 3, 0.95), None);
}
