//! Consistency tests (per-frame and windowed chi-square, pixel noise, excess scatter, NEES)
//! checked against Bar-Shalom et al.'s NEES intervals (CHECK_VALUES.md section 6), scipy values
//! and hand-worked cases.

use mountdrift::stats::consistency::{
    estimate_pixel_noise, excess_scatter, frame_consistency, nees_interval, nees_test,
    windowed_consistency, ChiSquareTest,
};
use mountdrift::stats::information::Information;
use nalgebra::{Matrix6, Vector6};
use rand::SeedableRng;
use rand_distr::{ChiSquared, Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;
use serde_json::Value;

/// Bar-Shalom, Li & Kirubarajan (2001), section 5.4: with N runs, N·ε̄ ~ chi2(N n_x); the
/// two-sided 95% region for n_x = 2, N = 50 is [1.4844, 2.5912] (the book prints [1.5, 2.6]);
/// 6-DOF: N = 50 → [5.0782, 6.9975], N = 100 → [5.3402, 6.6977], N = 1 → [1.2373, 14.4494];
/// n_x = 3, N = 50 → [2.3597, 3.7160]; NIS n_z = 1, N = 50 → [0.6471, 1.4284]; time average
/// n = 6, K = 200 → [5.5294, 6.4895] (CHECK_VALUES.md section 6, computed with scipy).
#[test]
fn nees_intervals_match_bar_shalom_values() {
    let cases = [
        (2, 50, 1.4844, 2.5912),
        (6, 50, 5.0782, 6.9975),
        (6, 100, 5.3402, 6.6977),
        (6, 1, 1.2373, 14.4494),
        (3, 50, 2.3597, 3.7160),
        (1, 50, 0.6471, 1.4284),
        (6, 200, 5.5294, 6.4895),
    ];
    for (n_x, runs, lo, hi) in cases {
        let (ours_lo, ours_hi) = nees_interval(n_x, runs, 0.95).unwrap();
        assert!(
            (ours_lo - lo).abs() < 1e-4 && (ours_hi - hi).abs() < 1e-4,
            "n_x {n_x} N {runs}: [{ours_lo}, {ours_hi}]"
        );
    }
    let fx: Value = serde_json::from_str(
        &std::fs::read_to_string(concat!(
            env!("CARGO_MANIFEST_DIR"),
            "/fixtures/stats/scipy_reference.json"
        ))
        .unwrap(),
    )
    .unwrap();
    for row in fx["nees_95"].as_array().unwrap() {
        let (n_x, runs) = (
            row["n_x"].as_u64().unwrap() as usize,
            row["runs"].as_u64().unwrap() as usize,
        );
        let (lo, hi) = nees_interval(n_x, runs, 0.95).unwrap();
        assert!((lo - row["lower"].as_f64().unwrap()).abs() < 1e-9 * lo);
        assert!((hi - row["upper"].as_f64().unwrap()).abs() < 1e-9 * hi);
    }
}

fn diag(v: [f64; 6]) -> Matrix6<f64> {
    Matrix6::from_diagonal(&Vector6::from_row_slice(&v))
}

/// Monte Carlo NEES: errors drawn from their own covariance are consistent, errors drawn from
/// twice the covariance are not (50 runs, 6-DOF, interval [5.0782, 6.9975]).
#[test]
fn nees_test_accepts_consistent_errors_and_rejects_overconfident_ones() {
    let p = diag([4.0, 1.0, 0.25, 1e-2, 4e-2, 9e-2]);
    let info = Information::from_covariance(&p, 0).unwrap();
    let root = p.map(f64::sqrt);
    let mut rng = Pcg64Mcg::seed_from_u64(3);
    let draw = |rng: &mut Pcg64Mcg, scale: f64| {
        root * Vector6::from_fn(|_, _| scale * Distribution::<f64>::sample(&StandardNormal, rng))
    };
    let good: Vec<Vector6<f64>> = (0..50).map(|_| draw(&mut rng, 1.0)).collect();
    let bad: Vec<Vector6<f64>> = (0..50).map(|_| draw(&mut rng, 2f64.sqrt())).collect();
    let infos = vec![info; 50];
    let accepted = nees_test(&good, &infos, 0.95).unwrap();
    assert!(accepted.consistent, "mean NEES {}", accepted.mean_nees);
    let rejected = nees_test(&bad, &infos, 0.95).unwrap();
    assert!(!rejected.consistent, "mean NEES {}", rejected.mean_nees);
}

/// Hand-worked rank-deficient frame: P = diag(1, 4, 0, 0, 0, 0) (four unobservable directions)
/// and x = (1, 2, 50, −7, 3, 9): d² = 1²/1 + 2²/4 = 2 with 2 dof (garbage in the unobservable
/// directions adds nothing), p = P(chi2_2 > 2) = e^{-1} = 0.367879.
#[test]
fn frame_chi_square_ignores_unobservable_directions() {
    let info = Information::from_covariance(&diag([1.0, 4.0, 0.0, 0.0, 0.0, 0.0]), 0).unwrap();
    let test = frame_consistency(&Vector6::new(1.0, 2.0, 50.0, -7.0, 3.0, 9.0), &info);
    assert!((test.statistic - 2.0).abs() < 1e-12);
    assert_eq!(test.dof, 2);
    assert!((test.p_value.unwrap() - (-1.0f64).exp()).abs() < 1e-12);
}

#[test]
fn windowed_sums_add_statistics_and_degrees_of_freedom() {
    let frames: Vec<ChiSquareTest> = [(1.0, 6), (2.0, 6), (3.0, 3), (4.0, 6)]
        .iter()
        .map(|&(s, d)| ChiSquareTest::new(s, d))
        .collect();
    let windows = windowed_consistency(&frames, 2).unwrap();
    let got: Vec<(f64, usize)> = windows.iter().map(|w| (w.statistic, w.dof)).collect();
    assert_eq!(got.len(), 3);
    for ((s, d), (es, ed)) in got.iter().zip([(3.0, 12), (5.0, 9), (7.0, 9)]) {
        assert!((s - es).abs() < 1e-12 && *d == ed);
    }
    // P(chi2_12 > 3) from scipy: 0.9955440.
    assert!((windows[0].p_value.unwrap() - 0.995_544_0).abs() < 1e-6);
    assert!(windowed_consistency(&frames, 5).is_err());
}

/// Pixel noise from reprojection chi-square sums 10 + 14 over 8 + 8 dof, assumed sigma 0.5 px:
/// σ̂ = 0.5·√(24/16) = 0.61237 px; 95% interval 0.5·√(24/28.84535) .. 0.5·√(24/6.90766)
/// (scipy chi2.ppf(0.975, 16) = 28.84535, chi2.ppf(0.025, 16) = 6.90766); two-sided p-value
/// 2·chi2.sf(24, 16) = 2·0.0895045.
#[test]
fn pixel_noise_estimate_matches_hand_worked_values() {
    let est = estimate_pixel_noise(&[10.0, 14.0], &[8, 8], 0.5, 0.95).unwrap();
    assert!((est.estimated_px - 0.5 * 1.5f64.sqrt()).abs() < 1e-12);
    assert!((est.interval_px.0 - 0.5 * (24.0 / 28.845_350_72f64).sqrt()).abs() < 1e-8);
    assert!((est.interval_px.1 - 0.5 * (24.0 / 6.907_664_35f64).sqrt()).abs() < 1e-8);
    assert!((est.p_value - 2.0 * 0.089_504_496_8).abs() < 1e-8);
    assert_eq!(est.dof, 16);
}

/// Coverage: the 95% interval holds the true sigma in about 95% of seeded simulated sessions
/// (400 sessions of 30 frames with 2n − 6 = 10 dof each, true sigma 1.3 × the assumed one).
#[test]
fn pixel_noise_interval_covers_the_true_sigma() {
    let mut rng = Pcg64Mcg::seed_from_u64(17);
    let chi = ChiSquared::new(10.0).unwrap();
    let (assumed, truth) = (0.8, 1.04);
    let covered = (0..400)
        .filter(|_| {
            let chi2: Vec<f64> = (0..30)
                .map(|_| chi.sample(&mut rng) * (truth / assumed) * (truth / assumed))
                .collect();
            let est = estimate_pixel_noise(&chi2, &[10; 30], assumed, 0.95).unwrap();
            est.interval_px.0 <= truth && truth <= est.interval_px.1
        })
        .count();
    // Binomial(400, 0.95): mean 380, sd 4.4; accept within 3 sd.
    assert!((367..=393).contains(&covered), "covered {covered} of 400");
}

/// Hand-worked excess scatter: x-axis deviations 1, −1, 3 (others 0) with P = I in three frames:
/// mean (1, 0, ...), statistic 0 + 4 + 4 = 8 with 18 − 6 = 12 dof, factor 2/3, p =
/// P(chi2_12 > 8) = 0.785130 (scipy); x-axis empirical variance 8/2 = 4 against predicted 1.
#[test]
fn excess_scatter_matches_hand_worked_values() {
    let x = [1.0, -1.0, 3.0].map(|v| Vector6::new(v, 0.0, 0.0, 0.0, 0.0, 0.0));
    let p = vec![Matrix6::identity(); 3];
    let info: Vec<Information> = p
        .iter()
        .map(|m| Information::from_covariance(m, 0).unwrap())
        .collect();
    let scatter = excess_scatter(&x, &info, &p).unwrap();
    assert!((scatter.test.statistic - 8.0).abs() < 1e-12);
    assert_eq!(scatter.test.dof, 12);
    assert!((scatter.variance_factor.unwrap() - 2.0 / 3.0).abs() < 1e-12);
    assert!((scatter.test.p_value.unwrap() - 0.785_130_387).abs() < 1e-8);
    assert!((scatter.axis_variance_factor[0].unwrap() - 4.0).abs() < 1e-12);
    assert_eq!(scatter.axis_variance_factor[1], Some(0.0));
}

/// A vibrating segment (sinusoid of 2 sigma amplitude on one axis) is flagged: its variance
/// factor on that axis is near 1 + 2²/2 = 3 and the test rejects, while a clean segment is not.
#[test]
fn excess_scatter_flags_vibration() {
    let p = diag([0.25, 0.25, 0.25, 1e-4, 1e-4, 1e-4]);
    let info = vec![Information::from_covariance(&p, 0).unwrap(); 400];
    let covs = vec![p; 400];
    let mut rng = Pcg64Mcg::seed_from_u64(23);
    let noise = |rng: &mut Pcg64Mcg| {
        p.map(f64::sqrt)
            * Vector6::from_fn(|_, _| Distribution::<f64>::sample(&StandardNormal, rng))
    };
    let clean: Vec<Vector6<f64>> = (0..400).map(|_| noise(&mut rng)).collect();
    let vibrating: Vec<Vector6<f64>> = (0..400)
        .map(|t| {
            noise(&mut rng) + Vector6::new(0.0, 0.0, 0.0, 0.0, 0.02 * (t as f64 * 0.7).sin(), 0.0)
        })
        .collect();
    let calm = excess_scatter(&clean, &info, &covs).unwrap();
    assert!(calm.test.p_value.unwrap() > 0.001);
    let loose = excess_scatter(&vibrating, &info, &covs).unwrap();
    assert!(loose.test.p_value.unwrap() < 1e-6);
    let pitch = loose.axis_variance_factor[4].unwrap();
    assert!((pitch - 3.0).abs() < 0.5, "pitch variance factor {pitch}");
}
