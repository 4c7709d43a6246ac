//! Distribution quantiles and tail probabilities checked against the NIST/SEMATECH e-Handbook
//! tables and against scipy (fixture from scripts/stats_reference.py).

use mountdrift::stats::distributions::{
    chi2_cdf, chi2_interval, chi2_quantile, chi2_sf, chi2_upper_quantile, f_quantile, f_sf,
    normal_quantile, normal_sf, t_quantile, t_sf,
};
use mountdrift::stats::StatsError;
use serde_json::Value;

fn fixture() -> Value {
    let text = std::fs::read_to_string(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/stats/scipy_reference.json"
    ))
    .expect("fixture fixtures/stats/scipy_reference.json (run scripts/stats_reference.py)");
    serde_json::from_str(&text).expect("valid scipy fixture")
}

fn close(ours: f64, reference: f64, rel: f64) -> bool {
    (ours - reference).abs() <= rel * reference.abs().max(1e-300)
}

/// NIST/SEMATECH e-Handbook of Statistical Methods, section 1.3.6.7.4 "Critical values of the
/// chi-square distribution" (upper-tail table, printed to 3 decimals; CHECK_VALUES.md section 1).
/// Rows: dof; columns: P(X < x) = 0.90, 0.95, 0.975, 0.99, 0.999.
const NIST_CHI2: [(f64, [f64; 5]); 6] = [
    (1.0, [2.706, 3.841, 5.024, 6.635, 10.828]),
    (2.0, [4.605, 5.991, 7.378, 9.210, 13.816]),
    (3.0, [6.251, 7.815, 9.348, 11.345, 16.266]),
    (6.0, [10.645, 12.592, 14.449, 16.812, 22.458]),
    (12.0, [18.549, 21.026, 23.337, 26.217, 32.910]),
    (60.0, [74.397, 79.082, 83.298, 88.379, 99.607]),
];

#[test]
fn chi2_quantiles_match_nist_sematech_table() {
    let probs = [0.90, 0.95, 0.975, 0.99, 0.999];
    for (dof, row) in NIST_CHI2 {
        for (p, printed) in probs.iter().zip(row) {
            let ours = chi2_quantile(*p, dof).unwrap();
            // Printed to three decimals (NIST rounds dof 12 at 0.999 up to 32.910 from 32.9095).
            assert!(
                close(ours, printed, 1e-3),
                "dof {dof} p {p}: {ours} vs NIST {printed}"
            );
        }
    }
}

/// NIST/SEMATECH e-Handbook 1.3.6.7.4, lower-tail table for dof 60 (values exceeded with
/// probability 0.90 ... 0.999): 46.459, 43.188, 40.482, 37.485, 31.738.
#[test]
fn chi2_lower_tail_matches_nist_sematech_table() {
    let rows = [
        (0.10, 46.459),
        (0.05, 43.188),
        (0.025, 40.482),
        (0.01, 37.485),
        (0.001, 31.738),
    ];
    for (p, printed) in rows {
        let ours = chi2_quantile(p, 60.0).unwrap();
        assert!(
            close(ours, printed, 1e-3),
            "p {p}: {ours} vs NIST {printed}"
        );
    }
}

#[test]
fn chi2_quantiles_match_scipy_full_precision() {
    let fx = fixture();
    for row in fx["chi2_ppf"].as_array().unwrap() {
        let (dof, p, x) = (
            row["dof"].as_f64().unwrap(),
            row["p"].as_f64().unwrap(),
            row["x"].as_f64().unwrap(),
        );
        let ours = chi2_quantile(p, dof).unwrap();
        assert!(
            close(ours, x, 1e-9),
            "scipy chi2.ppf({p}, {dof}) = {x}, ours {ours}"
        );
    }
}

/// Far upper-tail quantiles (scipy `chi2.isf`) keep full relative precision because they are
/// solved on the survival function.
#[test]
fn chi2_upper_quantiles_match_scipy_isf_far_in_the_tail() {
    let fx = fixture();
    for row in fx["chi2_isf"].as_array().unwrap() {
        let (dof, q, x) = (
            row["dof"].as_f64().unwrap(),
            row["q"].as_f64().unwrap(),
            row["x"].as_f64().unwrap(),
        );
        let ours = chi2_upper_quantile(q, dof).unwrap();
        assert!(
            close(ours, x, 1e-9),
            "scipy chi2.isf({q}, {dof}) = {x}, ours {ours}"
        );
    }
}

#[test]
fn chi2_survival_matches_scipy_and_inverts_the_quantile() {
    let fx = fixture();
    for row in fx["chi2_sf"].as_array().unwrap() {
        let (dof, x, sf) = (
            row["dof"].as_f64().unwrap(),
            row["x"].as_f64().unwrap(),
            row["sf"].as_f64().unwrap(),
        );
        let ours = chi2_sf(x, dof).unwrap();
        assert!(
            close(ours, sf, 1e-8),
            "scipy chi2.sf({x}, {dof}) = {sf}, ours {ours}"
        );
    }
    for dof in [1.0, 6.0, 60.0] {
        for p in [0.01, 0.3, 0.9, 0.999] {
            let x = chi2_quantile(p, dof).unwrap();
            assert!(
                (chi2_cdf(x, dof).unwrap() - p).abs() < 1e-12,
                "cdf(quantile({p})) dof {dof}"
            );
        }
    }
}

/// CHECK_VALUES.md section 1 (scipy): two-sided 95% band for one chi2_6 draw [1.2373, 14.4494].
#[test]
fn chi2_two_sided_interval() {
    let (lo, hi) = chi2_interval(0.95, 6.0).unwrap();
    assert!(
        close(lo, 1.2373, 1e-4) && close(hi, 14.4494, 1e-4),
        "[{lo}, {hi}]"
    );
}

/// F critical values: CHECK_VALUES.md section 1 (scipy, agreeing with the NIST F table
/// 1.3.6.7.3 as recalled: F_.95(6,50) = 2.286, F_.95(6,100) = 2.191), and the fixture.
#[test]
fn f_quantiles_match_tables_and_scipy() {
    for (d1, d2, p, x) in [
        (6.0, 50.0, 0.95, 2.286436),
        (6.0, 50.0, 0.99, 3.186434),
        (6.0, 100.0, 0.95, 2.190601),
        (6.0, 100.0, 0.99, 2.987684),
        (6.0, 53.0, 0.95, 2.275388),
        (2.0, 2.0, 0.95, 19.0),
    ] {
        assert!(
            close(f_quantile(p, d1, d2).unwrap(), x, 1e-6),
            "F({d1},{d2}) at {p}"
        );
    }
    let fx = fixture();
    for row in fx["f_ppf"].as_array().unwrap() {
        let get = |k: &str| row[k].as_f64().unwrap();
        let ours = f_quantile(get("p"), get("d1"), get("d2")).unwrap();
        assert!(
            close(ours, get("x"), 1e-8),
            "scipy f.ppf {row}: ours {ours}"
        );
    }
    for row in fx["f_sf"].as_array().unwrap() {
        let get = |k: &str| row[k].as_f64().unwrap();
        let ours = f_sf(get("x"), get("d1"), get("d2")).unwrap();
        assert!(
            close(ours, get("sf"), 1e-8),
            "scipy f.sf {row}: ours {ours}"
        );
    }
}

/// Normal and Student t quantiles against scipy, and the CHECK_VALUES.md section 1 anchors
/// z_.95 = 1.644854, z_.975 = 1.959964, Bonferroni over 6 axes z = 2.6383, t_.95(10) = 1.8125.
#[test]
fn normal_and_t_quantiles_match_scipy() {
    assert!(close(normal_quantile(0.95).unwrap(), 1.644854, 1e-6));
    assert!(close(normal_quantile(0.975).unwrap(), 1.959964, 1e-6));
    assert!(close(
        normal_quantile(1.0 - 0.05 / 12.0).unwrap(),
        2.6383,
        1e-4
    ));
    assert!(close(t_quantile(0.95, 10.0).unwrap(), 1.8125, 1e-4));
    let fx = fixture();
    for row in fx["norm_ppf"].as_array().unwrap() {
        let (p, z) = (row["p"].as_f64().unwrap(), row["z"].as_f64().unwrap());
        let ours = normal_quantile(p).unwrap();
        assert!(
            (ours - z).abs() <= 1e-9 * z.abs().max(1.0),
            "norm.ppf({p}) = {z}, ours {ours}"
        );
        assert!(
            close(normal_sf(ours).unwrap(), 1.0 - p, 1e-8),
            "round trip at {p}"
        );
    }
    for row in fx["t_ppf"].as_array().unwrap() {
        let get = |k: &str| row[k].as_f64().unwrap();
        let ours = t_quantile(get("p"), get("dof")).unwrap();
        assert!(close(ours, get("t"), 1e-8), "t.ppf {row}: ours {ours}");
        assert!(close(t_sf(ours, get("dof")).unwrap(), 1.0 - get("p"), 1e-8));
    }
}

#[test]
fn invalid_arguments_are_errors_not_panics() {
    assert!(matches!(
        chi2_quantile(1.0, 3.0),
        Err(StatsError::ProbabilityOutOfRange { .. })
    ));
    assert!(matches!(
        chi2_quantile(0.5, 0.0),
        Err(StatsError::InvalidParameter { .. })
    ));
    assert!(matches!(
        chi2_sf(f64::NAN, 3.0),
        Err(StatsError::InvalidParameter { .. })
    ));
    assert!(matches!(
        f_quantile(1.5, 2.0, 2.0),
        Err(StatsError::ProbabilityOutOfRange { .. })
    ));
    assert!(matches!(
        t_quantile(0.0, 5.0),
        Err(StatsError::ProbabilityOutOfRange { .. })
    ));
    assert!(matches!(
        normal_quantile(f64::NAN),
        Err(StatsError::ProbabilityOutOfRange { .. })
    ));
    assert_eq!(chi2_sf(-1.0, 3.0), Ok(1.0));
}
