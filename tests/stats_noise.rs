//! The effective-noise estimate and the penalty calibration: scaled Allan variance against the
//! AR(1) closed form, lag-1 estimates, and the critical penalty against PELT itself.

use mountdrift::stats::changepoint::pelt;
use mountdrift::stats::cost::L2Cost;
use mountdrift::stats::noise::{
    ar1_long_run_ratio, ar1_matching_long_run, ar1_scaled_allan, estimate_effective_noise,
    richardson_long_run, NoiseScales,
};
use mountdrift::stats::penalty::{
    ar1_series, critical_penalty, null_lag1, stream_seed, CalibrationSettings, PenaltyCalibrator,
};
use nalgebra::Vector6;
use rand::SeedableRng;
use rand_pcg::Pcg64Mcg;

/// `G(∞)/G(τ)` for AR(1) checked against a direct sum over the covariance of the difference of
/// two adjacent τ-means, `Var(Δ) = Σ_ij w_i w_j ρ^|i−j|` with weights ±1/τ.
#[test]
fn ar1_long_run_ratio_matches_direct_covariance_sum() {
    for (rho, tau) in [(0.5f64, 10usize), (0.9, 10), (0.9, 62), (0.97, 40)] {
        let weights: Vec<f64> = (0..2 * tau)
            .map(|i| if i < tau { -1.0 } else { 1.0 } / tau as f64)
            .collect();
        let var: f64 = (0..2 * tau)
            .flat_map(|i| (0..2 * tau).map(move |j| (i, j)))
            .map(|(i, j)| weights[i] * weights[j] * rho.powi((i as i32 - j as i32).abs()))
            .sum();
        let allan = tau as f64 / 2.0 * var;
        let expected = (1.0 + rho) / (1.0 - rho) / allan;
        let ours = ar1_long_run_ratio(rho, tau);
        assert!(
            (ours - expected).abs() < 1e-9 * expected,
            "ρ {rho} τ {tau}: {ours} vs {expected}"
        );
    }
    assert_eq!(ar1_long_run_ratio(0.0, 10), 1.0);
}

fn series(seed: u64, n: usize, rho: f64) -> Vec<Vector6<f64>> {
    ar1_series(&mut Pcg64Mcg::seed_from_u64(seed), n, 6, rho)
}

/// White noise: the factors stay near 1 (floored at 1; the largest is biased upwards by taking
/// the maximum over scales and directions of noisy estimates, about +0.2 to +0.4 here) and the
/// lag-1 estimate is near 0.
/// AR(1) ρ = 0.5 (long-run variance ratio (1+ρ)/(1−ρ) = 3): the long-run factors average
/// near 3 (each is an Allan variance at scales of a few hundred samples, about ±15% here) and
/// the robust lag-1 estimate is near 0.5.
#[test]
fn effective_noise_recovers_white_and_ar1_levels() {
    let scales = NoiseScales::for_min_size(10);
    let n = 40_000;
    let white = estimate_effective_noise(&series(1, n, 0.0), 6, &[(0, n)], &scales);
    let mut factors: Vec<f64> = white.factors.iter().copied().collect();
    factors.sort_by(f64::total_cmp);
    assert!(
        factors[5] < 1.6 && factors[2] < 1.15,
        "white factors {factors:?}"
    );
    assert!(white.lag1 < 0.05 && white.lag1_robust < 0.1);
    let ar = estimate_effective_noise(&series(2, n, 0.5), 6, &[(0, n)], &scales);
    let long_run = ar.long_run_factors;
    assert!(
        (long_run.mean() - 3.0).abs() < 0.3,
        "long-run factors {long_run:?}"
    );
    assert!(
        long_run.min() > 2.2 && long_run.max() < 4.6,
        "long-run factors {long_run:?}"
    );
    assert!((ar.lag1 - 0.5).abs() < 0.05, "lag1 {}", ar.lag1);
}

/// A vibration on one axis inflates that direction only; a fast one (period 3 samples) does not
/// look like correlated noise to the lag-1 estimate.
#[test]
fn vibration_inflates_its_own_direction() {
    let n = 4000;
    let mut z = series(3, n, 0.0);
    for (t, v) in z.iter_mut().enumerate() {
        v[2] += 2.0 * (std::f64::consts::TAU * t as f64 / 24.0).sin();
    }
    let noise = estimate_effective_noise(&z, 6, &[(0, n)], &NoiseScales::for_min_size(10));
    let mut factors: Vec<f64> = noise.factors.iter().copied().collect();
    factors.sort_by(f64::total_cmp);
    assert!(
        factors[5] > 5.0,
        "vibrating direction factor {}",
        factors[5]
    );
    assert!(factors[4] < 2.0, "second largest factor {}", factors[4]);
    let mut fast = series(6, n, 0.0);
    for (t, v) in fast.iter_mut().enumerate() {
        v[2] += 2.0 * (std::f64::consts::TAU * t as f64 / 3.0).sin();
    }
    let noise = estimate_effective_noise(&fast, 6, &[(0, n)], &NoiseScales::for_min_size(10));
    assert!(noise.lag1_robust < 0.1, "lag1 {}", noise.lag1_robust);
}

/// A mean shift inside the windows inflates the estimate; declaring the segments removes it.
#[test]
fn known_segments_keep_shifts_out_of_the_estimate() {
    let n = 2000;
    let mut z = series(4, n, 0.0);
    z.iter_mut().skip(1000).for_each(|v| v[0] += 3.0);
    let scales = NoiseScales::for_min_size(10);
    let mixed = estimate_effective_noise(&z, 6, &[(0, n)], &scales);
    let split = estimate_effective_noise(&z, 6, &[(0, 1000), (1000, n)], &scales);
    assert!(mixed.max_factor() > 3.0, "{}", mixed.max_factor());
    assert!(split.max_factor() < 1.6, "{}", split.max_factor());
}

/// β* is exactly the penalty at which PELT stops reporting change points.
#[test]
fn critical_penalty_is_the_threshold_of_pelt() {
    for i in 0..12 {
        let z = series(stream_seed(5, i), 150, 0.3);
        let cost = L2Cost::from_vectors(&z).unwrap();
        let beta = critical_penalty(&cost, 5).unwrap();
        assert!(pelt(&cost, beta * (1.0 + 1e-9), 5)
            .unwrap()
            .change_points()
            .is_empty());
        assert!(!pelt(&cost, beta * (1.0 - 1e-6), 5)
            .unwrap()
            .change_points()
            .is_empty());
    }
}

/// The calibration grid rounds a data coefficient up, and the penalty grows with it.
#[test]
fn penalty_grows_with_the_null_correlation() {
    assert_eq!(null_lag1(0.0), (0.0, false));
    assert_eq!(null_lag1(0.41), (0.5, false));
    assert_eq!(null_lag1(0.995), (0.99, true));
    let calibrator = PenaltyCalibrator::new(CalibrationSettings {
        runs: 300,
        ..Default::default()
    });
    let white = calibrator.calibrate(200, 3, 10, 0.05, 0.0).unwrap();
    let correlated = calibrator.calibrate(200, 3, 10, 0.05, 0.85).unwrap();
    assert!(
        correlated.penalty > white.penalty,
        "{} vs {}",
        correlated.penalty,
        white.penalty
    );
    assert_eq!(white.null_critical.len(), 300);
    // p-value of the calibrated penalty itself is about the rate.
    let p = white.p_value(white.penalty);
    assert!(p > 0.02 && p < 0.1, "p-value at the penalty {p}");
}

/// White noise plus slowly correlated noise (the structure of per-keypoint white plus AR(1)
/// detection errors): 73.5% of the variance white, 26.5% AR(1) with ρ = 0.8. Its lag-1
/// coefficient is only 0.265 · 0.8 = 0.21, but its long-run variance is
/// 0.735 + 0.265 · (1+0.8)/(1−0.8) = 3.12 times the marginal one (the AR(1) long-run variance,
/// Box & Jenkins, *Time Series Analysis*, ch. 3), which AR(1) noise with ρ = 2.12/4.12 = 0.51
/// shares: the null coefficient follows the long-run ratio, not lag 1. For white noise both stay
/// near 0.
#[test]
fn null_coefficient_follows_the_long_run_ratio_of_a_mixture() {
    let scales = NoiseScales::for_min_size(10);
    let n = 40_000;
    let mut rng = Pcg64Mcg::seed_from_u64(11);
    let slow = ar1_series(&mut rng, n, 6, 0.8);
    let white = ar1_series(&mut rng, n, 6, 0.0);
    let z: Vec<Vector6<f64>> = slow
        .iter()
        .zip(&white)
        .map(|(s, w)| s * 0.265f64.sqrt() + w * 0.735f64.sqrt())
        .collect();
    let mixture = estimate_effective_noise(&z, 6, &[(0, n)], &scales);
    assert!((mixture.lag1 - 0.21).abs() < 0.04, "lag1 {}", mixture.lag1);
    let expected = (3.12 - 1.0) / (3.12 + 1.0);
    for rho in [mixture.scale_lag1, mixture.scale_lag1_robust] {
        assert!((rho - expected).abs() < 0.05, "scale lag1 {rho}");
    }
    assert!((mixture.null_lag1(false) - mixture.scale_lag1).abs() < 1e-12);
    let white = estimate_effective_noise(&white, 6, &[(0, n)], &scales);
    assert!(white.scale_lag1 < 0.1, "white {}", white.scale_lag1);
    assert_eq!(ar1_matching_long_run(0.8), 0.0);
    assert!((ar1_matching_long_run(3.0) - 0.5).abs() < 1e-15);
}

/// The Richardson step `2G(2τ) − G(τ)` against the exact long-run variance, with `G` from the
/// AR(1) closed form (checked above against a direct covariance sum): AR(1) ρ = 0.5 and the
/// mixture 75% white + 25% AR(0.8), both with long-run variance 3 (Box & Jenkins, ch. 3). The
/// plain Allan variance at τ = 40 misses 5% and 12.5% of it; extrapolated, both are within 1%.
#[test]
fn richardson_step_removes_the_shape_dependent_allan_bias() {
    fn mixture(tau: usize) -> f64 {
        0.75 + 0.25 * ar1_scaled_allan(0.8, tau)
    }
    fn ar(tau: usize) -> f64 {
        ar1_scaled_allan(0.5, tau)
    }
    assert!((mixture(40) / 3.0 - 0.875).abs() < 0.005);
    assert!((ar(40) / 3.0 - 0.95).abs() < 0.005);
    for g in [mixture as fn(usize) -> f64, ar] {
        let extrapolated = richardson_long_run(g(20), g(40));
        assert!((extrapolated / 3.0 - 1.0).abs() < 0.01, "{extrapolated}");
    }
}

/// One seeded series of `n` whitened samples: white noise plus an AR(1) share, plus (optionally)
/// a sine vibration of amplitude `vibration` (in units of the white sigma) and period `period`
/// samples with a random phase, on every coordinate.
fn structured(
    seed: u64,
    n: usize,
    share: f64,
    rho: f64,
    vibration: f64,
    period: f64,
) -> Vec<Vector6<f64>> {
    let mut rng = Pcg64Mcg::seed_from_u64(seed);
    let slow = ar1_series(&mut rng, n, 6, rho);
    let white = ar1_series(&mut rng, n, 6, 0.0);
    let phase = ar1_series(&mut rng, 1, 6, 0.0)[0] * 3.0;
    (0..n)
        .map(|t| {
            let angle = std::f64::consts::TAU * t as f64 / period;
            slow[t] * share.sqrt()
                + white[t] * (1.0 - share).sqrt()
                + phase.map(|p| vibration * (angle + p).sin())
        })
        .collect()
}

/// Honest intervals for a mean: over 300 seeded series of 1000 samples (long enough for the scales 10, 20, 40
/// of the Richardson step with the default grid) the standardised error of
/// the series mean, `mean / √(λ̂/n)` with `λ̂` the long-run factor of each direction (the scaled
/// Allan variances with the Richardson step, section 8 of the method), has standard deviation
/// within 0.1 of 1 (1800 values per case; a standard error of about 0.017, and the estimate of
/// `λ` is itself noisy, which widens the t-like tails by a few percent; tolerance common
/// practice). Cases: 75% white + 25%
/// AR(0.8) (true long-run variance 3), the same with a 1-sigma vibration of period 9 samples,
/// and white noise. The mean of the noise is zero, so the error is the mean itself.
#[test]
fn long_run_variance_gives_segment_means_unit_standardised_error() {
    let n = 1000;
    let scales = NoiseScales::for_min_size(10);
    for (case, (share, vibration)) in [(0.25, 0.0), (0.25, 1.0), (0.0, 0.0)]
        .into_iter()
        .enumerate()
    {
        let mut errors = Vec::new();
        for i in 0..300 {
            let z = structured(
                stream_seed(40 + case as u64, i),
                n,
                share,
                0.8,
                vibration,
                9.0,
            );
            let noise = estimate_effective_noise(&z, 6, &[(0, n)], &scales);
            let mean = noise.directions.transpose() * z.iter().sum::<Vector6<f64>>() / n as f64;
            let lr = noise.long_run_factors;
            errors.extend((0..6).map(|j| mean[j] / (lr[j] / n as f64).sqrt()));
        }
        let sd = (errors.iter().map(|e| e * e).sum::<f64>() / errors.len() as f64).sqrt();
        eprintln!("case {case}: sd {sd:.3}");
        assert!(
            (sd - 1.0).abs() < 0.1,
            "case {case}: standardised error sd {sd}"
        );
    }
}
