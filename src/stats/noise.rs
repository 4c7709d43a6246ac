//! The effective noise of a whitened deviation series, estimated from the data.
//!
//! The per-frame covariance describes white detection noise. Real series also carry
//! frame-to-frame correlated detection errors and genuine mount vibration, so the scatter of a
//! segment mean is larger than the covariance predicts, by a factor that depends on the time
//! scale. A change-point test compares the means of adjacent segments, so the relevant quantity
//! at scale `τ` is the covariance of the difference of two adjacent `τ`-sample means, scaled so
//! that white noise with the predicted covariance gives the identity:
//!
//! `G(τ) = (τ/2) · E[Δ_t Δ_tᵀ]`, `Δ_t = mean(z[t..t+τ]) − mean(z[t−τ..t])`.
//!
//! This is the overlapping Allan variance (IEEE Std 1139-2008; Allan 1966) in matrix form. For
//! white noise `G(τ) = I` at every scale; for AR(1) noise with coefficient ρ it grows towards the
//! long-run variance ratio `(1+ρ)/(1−ρ)`; for a vibration of period P it peaks near `τ ≈ P/2`.
//! The inflation used by the change-point search is, per principal direction `u_j` of the pooled
//! `G`, one Richardson step `2G(4m) − G(2m)` towards the long-run variance (see
//! [`richardson_long_run`]), guarded below by a fraction of the largest `u_jᵀ G(τ) u_j` over the
//! scales from the minimum segment length up to a fraction of the series
//! ([`RICHARDSON_FLOOR_FRACTION`]; the largest `G(τ)` alone when the series is too short for
//! two scales, i.e. shorter than four minimum segment lengths): `Γ = U diag(κ_j) Uᵀ`. Both the raw `G(τ)` and their maximum are biased by an
//! amount that depends on the shape of the correlation, which made white-plus-AR data less well
//! studentised than the AR(1) null; the extrapolation is unbiased to first order for every shape.
//! It is a studentiser: the penalty is calibrated for exactly this estimator, so it is not
//! floored at 1 (a floor would make white noise a special case of the calibration). For
//! intervals a long-run version is used,
//! floored at 1 (never more precise than the per-frame covariances claim).
//! Windows are taken inside given segments only, so known mean shifts do not inflate it.
//! A series shorter than [`EXTENSION_MIN_MULTIPLE`] minimum lengths is studentised at the minimum
//! length alone, from the median of the squared window differences along each direction: there
//! an unknown shift's windows are too large a share for the mean (`robust_directional_allan`).
//!
//! The same pass measures the lag-1 autocorrelation of each principal direction (of the residuals
//! about the segment means, and a shift-robust version from a semivariogram): the penalty
//! calibration simulates AR(1) noise with that coefficient so that the estimation error of `Γ`
//! under correlated noise is accounted for (`penalty` module).

use nalgebra::{Matrix6, Vector6};
use rayon::prelude::*;

use super::information::Spectrum;

/// The studentiser `κ_j` is the Richardson extrapolation, but never below this fraction of the
/// largest scaled Allan variance of the direction: the step `2G(4m) − G(2m)` can fall near or
/// below zero by estimation noise on short series, and a vanishing studentiser would blow up the
/// scan. The guard is applied identically to the penalty's simulated nulls, so it does not bias
/// the calibration (the fraction is common practice for such a guard, not derived).
pub const RICHARDSON_FLOOR_FRACTION: f64 = 0.5;

/// Series of at least this many minimum segment lengths always get the scale `2m` (and the
/// long-run extrapolation); shorter ones keep `G(m)` alone. On shorter series a difference of two
/// `2m`-windows spans a large part of the series and a step inside it inflates the pooled
/// extrapolation in every direction: 3 mm steps in white-noise sessions of 160 and 200 samples
/// (`m = 10`) were found in 3 of 20 with the extrapolation against 20 of 20 without it, while at
/// 240 and 300 samples both found 20 of 20 (docs/benchmarks.md). An empirical bound, not derived.
pub const EXTENSION_MIN_MULTIPLE: usize = 24;

/// Which scales the inflation is estimated at.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NoiseScales {
    /// Smallest scale (samples): the minimum segment length of the change-point search.
    pub min_scale: usize,
    /// Largest scale as a fraction of the number of samples (longer windows are too few to
    /// estimate anything; larger scales reuse the largest estimate).
    pub max_scale_fraction: f64,
    /// Largest scale as a multiple of the smallest: beyond it the estimates only add noise to
    /// the maximum (AR(1) noise with ρ = 0.9 reaches 97% of its long-run variance at 32 x 10
    /// samples), and the long-run extrapolation covers the rest.
    pub max_scale_multiple: usize,
}

impl NoiseScales {
    /// The default grid for a minimum segment length: from it up to a sixteenth of the series
    /// or 32 times itself, whichever is smaller, and at least twice itself on series of
    /// [`EXTENSION_MIN_MULTIPLE`] minimum lengths or more.
    pub fn for_min_size(min_size: usize) -> Self {
        Self {
            min_scale: min_size.max(1),
            max_scale_fraction: 0.0625,
            max_scale_multiple: 32,
        }
    }

    /// Whether an `n`-sample series holds fewer than [`EXTENSION_MIN_MULTIPLE`] minimum segment
    /// lengths: it is studentised at the smallest scale alone, robustly (see
    /// `estimate_effective_noise`).
    pub fn is_short(&self, n: usize) -> bool {
        n < EXTENSION_MIN_MULTIPLE * self.min_scale
    }

    /// Whether the grid of an `n`-sample series reaches `2 · min_scale` only by the floor (the
    /// fraction alone would stop at the smallest scale): such short series are studentised by
    /// a pooled extrapolation (see `estimate_effective_noise`).
    pub fn is_extended(&self, n: usize) -> bool {
        ((n as f64 * self.max_scale_fraction).floor() as usize) < 2 * self.min_scale
            && !self.is_short(n)
    }

    /// Scales from `min_scale` upward by factors of 2 up to `max_scale_fraction · n` and
    /// `max_scale_multiple · min_scale`, but always up to `2 · min_scale` when the series holds
    /// [`EXTENSION_MIN_MULTIPLE`] minimum segment lengths.
    ///
    /// The second scale is what the long-run extrapolation needs: with `G(m)` alone, a short
    /// series (below `32 m` at the default fraction) was studentised by the Allan variance at
    /// the minimum segment length, which reaches a share of the long-run variance that depends
    /// on the shape of the correlation (white plus 26.5% AR(0.8): 1.75 of 3.12, AR(0.5): 2.40
    /// of 3.0). The class of its null, matched to that ratio, came out far too weak (median
    /// coefficient 0.28 for a true 0.515) and 300-sample series of that mixture raised false
    /// change points at 6.1% for a rate of 1% (docs/benchmarks.md). The pair `(m, 2m)` is noisy
    /// on a few hundred samples, but the null is studentised by the same estimator.
    pub fn grid(&self, n: usize) -> Vec<usize> {
        let by_length = (n as f64 * self.max_scale_fraction).floor() as usize;
        let top =
            by_length
                .min(self.max_scale_multiple * self.min_scale)
                .max(if self.is_short(n) {
                    self.min_scale
                } else {
                    2 * self.min_scale
                });
        let mut scales = Vec::new();
        let mut tau = self.min_scale.max(1);
        while tau <= top && 2 * tau <= n {
            scales.push(tau);
            tau *= 2;
        }
        scales
    }
}

/// The effective-noise inflation of a whitened series and how it was obtained.
#[derive(Debug, Clone, PartialEq)]
pub struct EffectiveNoise {
    /// `Γ`: the covariance of the whitened noise at the scales that matter (identity when the
    /// predicted covariance explains the scatter). Used by the change-point search, whose
    /// penalty is calibrated for exactly this estimator.
    pub inflation: Matrix6<f64>,
    /// `Γ_∞`: `Γ` with each direction raised to the long-run variance its AR(1) coefficient
    /// implies beyond the scales examined (`uᵀG(τ)u · G_AR(∞)/G_AR(τ)`, averaged over the
    /// largest scales); used for the intervals of segment means, which average over more samples
    /// than any window.
    pub long_run_inflation: Matrix6<f64>,
    /// The long-run factors per direction (the eigenvalues of `Γ_∞`).
    pub long_run_factors: Vector6<f64>,
    /// Principal directions `u_j` (columns) in the whitened coordinates.
    pub directions: Matrix6<f64>,
    /// `κ_j` per direction; zero for inactive coordinates.
    pub factors: Vector6<f64>,
    /// The scales (samples) at which each `κ_j` was attained.
    pub scale_of_max: [usize; 6],
    /// The scales examined.
    pub scales: Vec<usize>,
    /// Number of windows at the smallest scale (how much data the estimate rests on).
    pub windows: usize,
    /// Largest lag-1 autocorrelation over the principal directions of the residuals about each
    /// segment's mean, corrected for its small-sample bias `−(1+3ρ)/N` (Kendall 1954; `N` lag-1
    /// pairs). Precise (standard error about `1/√N`), but an undeclared mean shift inflates it.
    pub lag1: f64,
    /// A shift-robust version from the semivariogram (see `robust_lag1_and_variance`), noisier; used
    /// before any segment is known.
    pub lag1_robust: f64,
    /// The AR(1) coefficient with the data's ratio of the studentiser to the marginal variance,
    /// pooled over the directions (`ar1_matching_long_run` of `Σκ_j / Σ var_j`, variances of the
    /// residuals about the segment means). White noise plus slowly correlated noise has a small
    /// lag-1 coefficient but a large ratio; the penalty's null takes the larger of the two.
    pub scale_lag1: f64,
    /// The same against the far robust semivariogram as the marginal variance (shift-robust).
    pub scale_lag1_robust: f64,
}

impl EffectiveNoise {
    /// No inflation: the predicted covariance is taken as it is.
    pub fn identity(dim: usize) -> Self {
        let factors = Vector6::from_fn(|i, _| if i < dim { 1.0 } else { 0.0 });
        Self {
            inflation: Matrix6::from_diagonal(&factors),
            long_run_inflation: Matrix6::from_diagonal(&factors),
            long_run_factors: factors,
            directions: Matrix6::identity(),
            factors,
            scale_of_max: [0; 6],
            scales: Vec::new(),
            windows: 0,
            lag1: 0.0,
            lag1_robust: 0.0,
            scale_lag1: 0.0,
            scale_lag1_robust: 0.0,
        }
    }

    /// The point estimate of the AR(1) coefficient of the clean series the penalty is calibrated
    /// on: the larger of the lag-1 coefficient and the one matching the ratio of long-run to
    /// marginal variance (the shift-robust versions when `robust`, before any segment is known).
    /// The class used is this rounded up to the calibration grid.
    pub fn null_lag1(&self, robust: bool) -> f64 {
        if robust {
            self.lag1_robust.max(self.scale_lag1_robust)
        } else {
            self.lag1.max(self.scale_lag1)
        }
    }

    /// The largest factor: how many times the predicted variance the worst direction scatters.
    pub fn max_factor(&self) -> f64 {
        self.factors.max()
    }

    /// `Γ^{-1/2}`, the matrix that maps whitened samples to samples whose effective noise is
    /// white with unit variance.
    pub fn inverse_sqrt(&self) -> Matrix6<f64> {
        Spectrum::new(&self.inflation, 0.0).inverse_sqrt()
    }
}

/// Prefix sums of a vector series, for window means in O(1).
struct PrefixSums(Vec<Vector6<f64>>);

impl PrefixSums {
    fn new(z: &[Vector6<f64>]) -> Self {
        let mut sums = Vec::with_capacity(z.len() + 1);
        sums.push(Vector6::zeros());
        for v in z {
            let next = sums[sums.len() - 1] + v;
            sums.push(next);
        }
        Self(sums)
    }

    fn window_mean(&self, start: usize, len: usize) -> Vector6<f64> {
        (self.0[start + len] - self.0[start]) / len as f64
    }
}

/// The differences `δ_t = mean(z[t..t+τ]) − mean(z[t−τ..t])` of all windows `t−τ..t+τ` that lie
/// inside one of `segments`.
fn window_differences<'a>(
    sums: &'a PrefixSums,
    segments: &'a [(usize, usize)],
    tau: usize,
) -> impl Iterator<Item = Vector6<f64>> + 'a {
    segments
        .iter()
        .filter(move |&&(start, end)| end - start >= 2 * tau)
        .flat_map(move |&(start, end)| {
            (start + tau..=end - tau)
                .map(move |t| sums.window_mean(t, tau) - sums.window_mean(t - tau, tau))
        })
}

/// `G(τ)` from all windows `t−τ..t+τ` that lie inside one of `segments`, and their count.
fn scaled_allan(
    sums: &PrefixSums,
    segments: &[(usize, usize)],
    tau: usize,
) -> (Matrix6<f64>, usize) {
    let mut acc = Matrix6::zeros();
    let mut count = 0;
    for delta in window_differences(sums, segments, tau) {
        acc += delta * delta.transpose();
        count += 1;
    }
    if count > 0 {
        acc *= tau as f64 / (2.0 * count as f64);
    }
    (acc, count)
}

/// `u_jᵀ G(τ) u_j` for every direction `u_j` (columns of `directions`) from the median of the
/// squared window differences along it instead of their mean:
/// `τ/2 · median((u_jᵀδ_t)²) / median(χ²₁)`, the same quantity for Gaussian noise; zero without
/// windows. On a short series the windows straddling one mean shift are a large share of all
/// windows (two in ten at 120 samples and `τ = 10`), and their mean grows with the square of the
/// shift. A large shift then read as noise and was not found, while a small one was
/// (`sensitivity` of 6 s sessions: 2 and 3 mm found 4 of 4, 6 and 8 mm 0 of 4). The median moves
/// by a bounded amount.
fn robust_directional_allan(
    sums: &PrefixSums,
    segments: &[(usize, usize)],
    tau: usize,
    directions: &Matrix6<f64>,
) -> Vector6<f64> {
    let mut squares: [Vec<f64>; 6] = Default::default();
    for delta in window_differences(sums, segments, tau) {
        let along = directions.tr_mul(&delta);
        for (j, list) in squares.iter_mut().enumerate() {
            list.push(along[j] * along[j]);
        }
    }
    Vector6::from_fn(|j, _| {
        let list = &mut squares[j];
        if list.is_empty() {
            return 0.0;
        }
        let mid = list.len() / 2;
        let (_, median, _) = list.select_nth_unstable_by(mid, f64::total_cmp);
        tau as f64 / 2.0 * *median / CHI2_1_MEDIAN
    })
}

/// On a short series, how far the long-run variance lies beyond the smallest scale `m`, for the
/// choice of the null class only: the pooled Richardson ratio `(2 Σκ_j(2m) − Σκ_j(m)) / Σκ_j(m)`
/// of the robust directional Allan variances over the active directions (at least 1; 1 when the
/// longest segment is shorter than `4m`). The studentiser keeps the scale `m`; the class sets how
/// conservative the penalty's and the online detector's null is where the noise has long memory.
fn short_series_class_ratio(
    sums: &PrefixSums,
    segments: &[(usize, usize)],
    m: usize,
    directions: &Matrix6<f64>,
    factors: &Vector6<f64>,
) -> f64 {
    let longest = segments.iter().map(|(a, b)| b - a).max().unwrap_or(0);
    let lower: f64 = factors.sum();
    if 4 * m > longest || lower <= 0.0 {
        return 1.0;
    }
    let at_double = robust_directional_allan(sums, segments, 2 * m, directions);
    let upper: f64 = (0..6)
        .filter(|&j| factors[j] > 0.0)
        .map(|j| at_double[j])
        .sum();
    (richardson_long_run(lower, upper) / lower).max(1.0)
}

/// Estimates the effective-noise inflation `Γ` of the whitened series `z` (active coordinates
/// `0..dim`), using windows inside `segments` (sample ranges believed free of mean shifts; frames
/// to be left out, such as frames with a rank-deficient information, split the segments).
pub fn estimate_effective_noise(
    z: &[Vector6<f64>],
    dim: usize,
    segments: &[(usize, usize)],
    scales: &NoiseScales,
) -> EffectiveNoise {
    let sums = PrefixSums::new(z);
    let longest = segments.iter().map(|(a, b)| b - a).max().unwrap_or(0);
    let grid: Vec<usize> = scales
        .grid(z.len())
        .into_iter()
        .filter(|&t| 2 * t <= longest)
        .collect();
    let estimates: Vec<(usize, Matrix6<f64>, usize)> = grid
        .par_iter()
        .map(|&tau| {
            let (g, count) = scaled_allan(&sums, segments, tau);
            (tau, g, count)
        })
        .collect::<Vec<_>>()
        .into_iter()
        .filter(|(_, _, count)| *count > 0)
        .collect();
    if estimates.is_empty() {
        return EffectiveNoise::identity(dim);
    }
    let pooled = estimates.iter().map(|(_, g, _)| g).sum::<Matrix6<f64>>() / estimates.len() as f64;
    let directions = Spectrum::new(&pooled, 0.0).vectors;
    let mut factors = Vector6::zeros();
    let mut scale_of_max = [0; 6];
    let short = scales.is_short(z.len());
    // Short series: the smallest scale alone, from the median of the window differences.
    let robust =
        short.then(|| robust_directional_allan(&sums, segments, estimates[0].0, &directions));
    let pooled_ratio = if scales.is_extended(z.len()) {
        short_series_ratio(&estimates)
    } else {
        None
    };
    for j in 0..6 {
        let u = directions.column(j);
        if u.rows(dim, 6 - dim).norm() > 0.5 {
            continue; // an inactive coordinate (zero in every sample)
        }
        for (tau, g, _) in &estimates {
            let k = u.dot(&(g * u));
            if k > factors[j] {
                factors[j] = k;
                scale_of_max[j] = *tau;
            }
        }
        if let Some(robust) = &robust {
            factors[j] = robust[j];
            scale_of_max[j] = estimates[0].0;
        } else if let Some(ratio) = pooled_ratio {
            // Series just long enough for `2m`: the pooled extrapolation ratio on the precise
            // smallest scale.
            let k = u.dot(&(estimates[0].1 * u)) * ratio;
            factors[j] = k.max(RICHARDSON_FLOOR_FRACTION * factors[j]);
        } else if let Some((tau, lower, upper)) = richardson_pair(&estimates, scales.min_scale) {
            // The extrapolation alone, not the largest of it and the raw `G(τ)`: a maximum over
            // candidates is biased upward by an amount that depends on how close the raw ones
            // come to the long-run variance, i.e. on the shape of the correlation, so AR(1)
            // nulls were studentised more conservatively than white-plus-AR data (mixture
            // 46 of 300 at α = 0.1, 30 expected; see docs/benchmarks.md).
            let k = richardson_long_run(u.dot(&(lower * u)), u.dot(&(upper * u)));
            let floor = RICHARDSON_FLOOR_FRACTION * factors[j];
            if k < floor {
                factors[j] = floor;
            } else {
                factors[j] = k;
                scale_of_max[j] = tau;
            }
        }
    }
    let inflation = directions * Matrix6::from_diagonal(&factors) * directions.transpose();
    let far_lags: Vec<usize> = (2..=4)
        .map(|k| (k * scales.min_scale).min(z.len() / 4).max(2))
        .collect();
    let (robust, far_variance) =
        robust_lag1_and_variance(z, segments, &directions, &factors, &far_lags);
    let (lag1, pairs, variance) = residual_lag1(z, segments, &directions, &factors);
    let corrected = |rho: f64| (rho + (1.0 + 3.0 * rho.max(0.0)) / pairs.max(1) as f64).min(1.0);
    // The AR(1) coefficient with the data's ratio of the studentiser `κ_j` to the marginal
    // variance: against the residual variance (precise) and against the far semivariogram
    // (shift-robust).
    // Pooled over the directions (the trace): the eigenvalues of a noisy estimate spread about
    // the truth, so their largest ratio would call white noise correlated; correlation confined
    // to one direction is still caught by the lag-1 coefficient.
    let class_ratio = if short {
        short_series_class_ratio(&sums, segments, scales.min_scale, &directions, &factors)
    } else {
        1.0
    };
    let at_scale = |marginal: &Vector6<f64>| {
        let active = (0..6).filter(|&j| factors[j] > 0.0 && marginal[j] > 0.0);
        let (studentiser, variance) =
            active.fold((0.0, 0.0), |(k, v), j| (k + factors[j], v + marginal[j]));
        if variance > 0.0 {
            ar1_matching_long_run(class_ratio * studentiser / variance)
        } else {
            0.0
        }
    };
    let scale_lag1 = at_scale(&variance);
    let scale_lag1_robust = at_scale(&far_variance);
    let long_run = Vector6::from_fn(|j, _| {
        if factors[j] <= 0.0 {
            return 0.0;
        }
        factors[j].max(1.0).max(long_run_extrapolation(
            &estimates,
            &directions.column(j).into(),
            lag1[j],
        ))
    });
    EffectiveNoise {
        inflation,
        long_run_inflation: directions * Matrix6::from_diagonal(&long_run) * directions.transpose(),
        long_run_factors: long_run,
        directions,
        factors,
        scale_of_max,
        scales: estimates.iter().map(|(t, _, _)| *t).collect(),
        windows: estimates[0].2,
        lag1: corrected(lag1.max()),
        lag1_robust: corrected(robust.max()),
        scale_lag1,
        scale_lag1_robust,
    }
}

/// On a series shorter than the scale grid's own reach ([`NoiseScales::is_extended`]): the
/// Richardson extrapolation of the trace over the trace at the smallest scale,
/// `(2 tr G(2m) − tr G(m)) / tr G(m)`, applied to every direction's `G(m)`. The per-direction step
/// on a few hundred samples is noisy enough (the window of `2m` holds a fifteenth of a
/// 300-sample series) to cost a clean step of 1.5 sigma in pure AR(0.6) noise half its detections;
/// pooled over the directions the ratio's noise falls by about the square root of the dimension,
/// and `G(m)` is the most precise scale. It assumes the directions share the shape of their
/// correlation (true of the simulator's sessions: long-run ratios 2.47 to 3.03 over the six
/// whitened directions); correlation confined to one direction is still caught by the lag-1
/// coefficient of the null class. `None` without the two scales or with a zero trace.
fn short_series_ratio(estimates: &[(usize, Matrix6<f64>, usize)]) -> Option<f64> {
    match estimates {
        [(_, lower, _), (_, upper, _), ..] if lower.trace() > 0.0 => {
            Some(richardson_long_run(lower.trace(), upper.trace()) / lower.trace())
        }
        _ => None,
    }
}

/// The scales `(2m, 4m)` of the Richardson step (`m` the smallest scale), or the two largest
/// when the series is too short for `4m`: returns the upper scale and `G` at both. Fixed small
/// scales keep the step's noise low on long series (its variance grows with the scale, and on
/// long series the bias left at `4m` is small anyway).
fn richardson_pair(
    estimates: &[(usize, Matrix6<f64>, usize)],
    min_scale: usize,
) -> Option<(usize, Matrix6<f64>, Matrix6<f64>)> {
    let at = |tau: usize| estimates.iter().find(|(t, _, _)| *t == tau);
    match (at(2 * min_scale), at(4 * min_scale)) {
        (Some(lower), Some(upper)) => Some((upper.0, lower.1, upper.1)),
        _ => match estimates {
            [.., lower, upper] => Some((upper.0, lower.1, upper.1)),
            _ => None,
        },
    }
}

/// The long-run variance from the scaled Allan variances at two scales `τ` and `2τ`:
/// `2 G(2τ) − G(τ)`. For any series with summable autocovariance `G(τ) = λ − c/τ + o(1/τ)`
/// (`λ` the long-run variance, `c = 3 Σ k γ(k)`; from `G(τ) = τ(Var mean_τ − Cov(adjacent
/// means))`), so one Richardson step (Richardson 1911, Phil. Trans. R. Soc. A 210:307-357)
/// removes the leading bias, whose size depends on the shape of the correlation: at `τ = 40` the
/// Allan variance of AR(1) noise with ρ = 0.5 reaches 95% of `λ`, that of the mixture 75% white
/// plus 25% AR(0.8) with the same `λ` only 87.5%; extrapolated, both reach 99.6-100%.
pub fn richardson_long_run(at_tau: f64, at_double: f64) -> f64 {
    2.0 * at_double - at_tau
}

/// Lag-1 autocorrelation of each active principal direction of the residuals about each
/// segment's mean (pairs inside segments), the number of pairs, and the residual variance of
/// each direction.
fn residual_lag1(
    z: &[Vector6<f64>],
    segments: &[(usize, usize)],
    directions: &Matrix6<f64>,
    factors: &Vector6<f64>,
) -> (Vector6<f64>, usize, Vector6<f64>) {
    let mut lag0 = Vector6::<f64>::zeros();
    let mut lag1 = Vector6::<f64>::zeros();
    let mut pairs = 0;
    let mut count = 0;
    for &(start, end) in segments.iter().filter(|(a, b)| b - a >= 2) {
        count += end - start;
        let mean = z[start..end].iter().sum::<Vector6<f64>>() / (end - start) as f64;
        let residual = |t: usize| directions.transpose() * (z[t] - mean);
        let mut previous = residual(start);
        lag0 += previous.component_mul(&previous);
        for t in start + 1..end {
            let current = residual(t);
            lag0 += current.component_mul(&current);
            lag1 += current.component_mul(&previous);
            previous = current;
            pairs += 1;
        }
    }
    let rho = Vector6::from_fn(|j, _| {
        if factors[j] > 0.0 && lag0[j] > 0.0 {
            (lag1[j] / lag0[j]).clamp(0.0, 1.0)
        } else {
            0.0
        }
    });
    (rho, pairs, lag0 / count.max(1) as f64)
}

/// The long-run variance of direction `u` extrapolated from the large scales: the mean over the
/// scales `τ >= τ_max/4` of `uᵀG(τ)u · G_AR(∞)/G_AR(τ)` for the direction's AR(1) coefficient
/// (averaging a few scales halves the noise of the single largest one).
fn long_run_extrapolation(
    estimates: &[(usize, Matrix6<f64>, usize)],
    u: &Vector6<f64>,
    rho: f64,
) -> f64 {
    let top = estimates[estimates.len() - 1].0;
    let upper: Vec<f64> = estimates
        .iter()
        .filter(|(tau, _, _)| 4 * tau >= top)
        .map(|(tau, g, _)| u.dot(&(g * u)) * ar1_long_run_ratio(rho, *tau))
        .collect();
    upper.iter().sum::<f64>() / upper.len() as f64
}

/// `G(τ)` of AR(1) noise with coefficient ρ and unit marginal variance (white noise: 1), from
/// the autocovariance `ρ^|k|`: `G(τ) = (τ/2)(2 Var(mean_τ) − 2 Cov(adjacent means))`.
pub fn ar1_scaled_allan(rho: f64, tau: usize) -> f64 {
    if rho <= 0.0 || tau == 0 {
        return 1.0;
    }
    let t = tau as f64;
    let var_mean: f64 = (1..tau)
        .map(|k| 2.0 * (t - k as f64) * rho.powi(k as i32))
        .sum::<f64>()
        + t;
    let cov_adjacent: f64 = (1..2 * tau)
        .map(|k| k.min(2 * tau - k) as f64 * rho.powi(k as i32))
        .sum();
    (t / 2.0) * 2.0 * (var_mean - cov_adjacent) / (t * t)
}

/// The AR(1) coefficient with the same long-run over marginal variance ratio `λ`:
/// `(1+ρ)/(1−ρ) = λ`, i.e. `ρ = (λ−1)/(λ+1)` (zero for `λ ≤ 1`: white or anti-persistent).
/// A mixture of white noise and slowly correlated noise (white plus correlated detection errors)
/// has a small lag-1 autocorrelation but a long-run variance several times its marginal one;
/// its studentised scan behaves like AR(1) noise with this coefficient, not like the one matched
/// at lag 1.
pub fn ar1_matching_long_run(ratio: f64) -> f64 {
    if ratio > 1.0 {
        (ratio - 1.0) / (ratio + 1.0)
    } else {
        0.0
    }
}

/// `G(∞)/G(τ)` for AR(1) noise with coefficient ρ: how much of the long-run variance
/// `(1+ρ)/(1−ρ)` the scaled Allan variance at scale τ still misses. From the autocovariance
/// `ρ^|k|`: `G(τ) = (τ/2)(2 Var(mean_τ) − 2 Cov(adjacent means))`.
pub fn ar1_long_run_ratio(rho: f64, tau: usize) -> f64 {
    if rho <= 0.0 || tau == 0 {
        return 1.0;
    }
    let allan = ar1_scaled_allan(rho, tau);
    let long_run = (1.0 + rho) / (1.0 - rho).max(f64::EPSILON);
    (long_run / allan).max(1.0)
}

/// Median of a chi-square variable with one degree of freedom: the robust variogram below
/// divides by it so that it estimates `E[(z_{t+k} − z_t)²]/2` for Gaussian increments.
const CHI2_1_MEDIAN: f64 = 0.454_936_423_119_572_8;

/// Robust semivariogram `D(k) = median((u_{t+k} − u_t)²)/(2 · 0.4549)` of one direction over
/// pairs inside the segments (a median, so that the few pairs straddling an unknown mean shift
/// do not move it). `None` without pairs.
fn robust_semivariogram(
    u: &[f64],
    segments: &[(usize, usize)],
    lag: usize,
    squares: &mut Vec<u64>,
) -> Option<f64> {
    // Squares are never negative (nor NaN for finite samples), and the bit patterns of
    // non-negative doubles order as the numbers do: selecting on the integers is exact.
    squares.clear();
    for &(a, b) in segments.iter().filter(|(a, b)| b - a > lag) {
        squares.extend((a..b - lag).map(|t| (u[t + lag] - u[t]).powi(2).to_bits()));
    }
    if squares.is_empty() {
        return None;
    }
    let mid = squares.len() / 2;
    let median = f64::from_bits(*squares.select_nth_unstable(mid).1);
    Some(median / (2.0 * CHI2_1_MEDIAN))
}

/// Per active principal direction, from the robust semivariogram: the lag-1 autocorrelation
/// `ρ = 1 − D(1)/D̄` and the marginal variance `D̄` (for AR(1) noise `D(k) = γ₀(1 − ρ^k)`, and
/// `D̄ ≈ γ₀`, the mean of `D` at two, three and four minimum segment lengths, once `ρ^k` is small
/// there). Differences of nearby samples are untouched by mean shifts (a few pairs across an
/// unknown shift do not move the robust estimate). A fast vibration adds about as much to `D(1)`
/// as to `D̄` and does not look like correlated noise; a slow one does (the penalty then errs
/// high). Zero for inactive directions and where it cannot be measured. The directions are
/// independent and measured in parallel.
fn robust_lag1_and_variance(
    z: &[Vector6<f64>],
    segments: &[(usize, usize)],
    directions: &Matrix6<f64>,
    factors: &Vector6<f64>,
    far_lags: &[usize],
) -> (Vector6<f64>, Vector6<f64>) {
    let measured: Vec<(usize, f64, f64)> = (0..6)
        .into_par_iter()
        .filter(|&j| factors[j] > 0.0)
        .filter_map(|j| {
            let direction = directions.column(j);
            let u: Vec<f64> = z.iter().map(|v| direction.dot(v)).collect();
            let mut squares = Vec::with_capacity(u.len());
            let near = robust_semivariogram(&u, segments, 1, &mut squares);
            let far: Option<Vec<f64>> = far_lags
                .iter()
                .map(|&lag| robust_semivariogram(&u, segments, lag, &mut squares))
                .collect();
            let far = far.map(|d| d.iter().sum::<f64>() / d.len() as f64)?;
            let lag1 = match near.filter(|_| far > 0.0) {
                Some(near) => (1.0 - near / far).clamp(0.0, 1.0),
                None => 0.0,
            };
            Some((j, lag1, far))
        })
        .collect();
    let mut lag1 = Vector6::zeros();
    let mut variance = Vector6::zeros();
    for (j, rho, far) in measured {
        lag1[j] = rho;
        variance[j] = far;
    }
    (lag1, variance)
}
