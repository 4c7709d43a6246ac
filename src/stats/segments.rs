//! Segment estimates: information-weighted means with 95% intervals, shifts between segments and
//! the uncertainty of a change point's location.
//!
//! Everything is rank-aware: a direction no frame of a segment observes has no estimate and no
//! interval (`None`), instead of the zero variance a pseudo-inverse would suggest.

use nalgebra::{Matrix6, Vector6};
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

use super::distributions::normal_quantile;
use super::information::information_sum_spectrum;
use super::StatsError;

/// A weighted mean of a range of samples with its covariance and per-axis intervals.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SegmentMean {
    /// First sample index and one past the last.
    pub start: usize,
    pub end: usize,
    /// `μ = (Σ W_i)⁺ Σ W_i x_i`.
    pub mean: Vector6<f64>,
    /// `(Σ W_i)⁺`, the covariance of `μ` under the (effective) information `W_i`.
    pub covariance: Matrix6<f64>,
    /// `z_{(1+level)/2} √(covariance_jj)` per axis, `None` for an axis the segment does not
    /// observe.
    pub half_width: [Option<f64>; 6],
    /// Rank of `Σ W_i` (observable directions).
    pub rank: usize,
}

/// The information-weighted mean of `x[start..end]` with information matrices `w` (typically
/// the effective, inflated information), with two-sided `level` intervals per axis.
///
/// `μ = A⁺ b`, `Cov(μ) = A⁺` with `A = Σ W_i`, `b = Σ W_i x_i` (the generalised least-squares
/// estimate of a constant mean; Aitken 1935). The interval is normal: the effective information
/// already carries the noise inflation estimated from the data.
pub fn weighted_mean(
    x: &[Vector6<f64>],
    w: &[Matrix6<f64>],
    start: usize,
    end: usize,
    level: f64,
) -> Result<SegmentMean, StatsError> {
    if start >= end || end > x.len() || x.len() != w.len() {
        return Err(StatsError::InvalidParameter {
            name: "segment range",
            value: end as f64,
            expected: "a non-empty range inside the series (start < end <= samples)",
        });
    }
    weighted_mean_by(x, start, end, level, |i| w[i])
}

/// [`weighted_mean`] with the information of sample `i` given by `w(i)` (formed on demand,
/// e.g. from a model, instead of stored for the whole series).
pub fn weighted_mean_by(
    x: &[Vector6<f64>],
    start: usize,
    end: usize,
    level: f64,
    w: impl Fn(usize) -> Matrix6<f64>,
) -> Result<SegmentMean, StatsError> {
    if start >= end || end > x.len() {
        return Err(StatsError::InvalidParameter {
            name: "segment range",
            value: end as f64,
            expected: "a non-empty range inside the series (start < end <= samples)",
        });
    }
    let z = normal_quantile(0.5 + 0.5 * level)?;
    let (a, b) = (start..end).fold((Matrix6::zeros(), Vector6::zeros()), |(a, b), i| {
        let wi = w(i);
        (a + wi, b + wi * x[i])
    });
    let spectrum = information_sum_spectrum(&a);
    let covariance = spectrum.pseudo_inverse();
    let observable = spectrum.observable_axes();
    let half_width =
        std::array::from_fn(|j| observable[j].then(|| z * covariance[(j, j)].max(0.0).sqrt()));
    Ok(SegmentMean {
        start,
        end,
        mean: covariance * b,
        covariance,
        half_width,
        rank: spectrum.rank,
    })
}

/// The shift between two segment means (`after − before`) with per-axis half-widths from the
/// summed covariances; `None` on an axis either segment does not observe.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Shift {
    pub shift: Vector6<f64>,
    pub covariance: Matrix6<f64>,
    pub half_width: [Option<f64>; 6],
}

/// `Δ = μ_after − μ_before`, `Cov(Δ) = Cov(μ_before) + Cov(μ_after)` (independent segments).
pub fn shift_between(
    before: &SegmentMean,
    after: &SegmentMean,
    level: f64,
) -> Result<Shift, StatsError> {
    let z = normal_quantile(0.5 + 0.5 * level)?;
    let covariance = before.covariance + after.covariance;
    let half_width = std::array::from_fn(|j| match (before.half_width[j], after.half_width[j]) {
        (Some(_), Some(_)) => Some(z * covariance[(j, j)].max(0.0).sqrt()),
        _ => None,
    });
    Ok(Shift {
        shift: after.mean - before.mean,
        covariance,
        half_width,
    })
}

/// Monte Carlo settings of the change-point location interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct LocationSettings {
    pub runs: usize,
    pub seed: u64,
}

/// A two-sided interval `[lo, hi]` (sample offsets relative to the estimated change point,
/// `lo <= 0 <= hi`) covering the true location with probability `level`.
///
/// Hinkley (1970, Biometrika 57:1-17): for a mean shift δ with known segment means, the
/// estimate minus the truth is the minimiser of a two-sided random walk whose step for a frame
/// `i` moved across the boundary is `s_i + 2√s_i ξ_i`, `s_i = δᵀ W_i δ`, `ξ_i ~ N(0,1)` (the
/// change in `Σ (x−μ)ᵀW(x−μ)`). The walk is simulated with the frames actually next to the
/// change point (`before`: the `s_i` of the frames before it, nearest first; `after`: from it
/// onwards) and the interval is read from the quantiles of the minimiser: if `k̂ − k ~ D` then
/// `k ∈ [k̂ − q_{(1+level)/2}(D), k̂ − q_{(1−level)/2}(D)]`.
pub fn location_interval(
    before: &[f64],
    after: &[f64],
    level: f64,
    settings: &LocationSettings,
) -> Result<(i64, i64), StatsError> {
    super::check_probability(level)?;
    let mut rng = Pcg64Mcg::seed_from_u64(settings.seed);
    let mut offsets: Vec<i64> = (0..settings.runs.max(1))
        .map(|_| walk_minimiser(before, after, &mut rng))
        .collect();
    offsets.sort_unstable();
    let tail = 0.5 * (1.0 - level);
    let pick = |p: f64| {
        let r = offsets.len();
        offsets[((p * r as f64).floor() as usize).min(r - 1)]
    };
    let (low, high) = (pick(tail), pick(1.0 - tail));
    Ok(((-high).min(0), (-low).max(0)))
}

/// The walk stops once its drift exceeds this many units: a minimum beyond that point would
/// need a Gaussian excursion of more than about 8 sigma.
const WALK_DRIFT_LIMIT: f64 = 64.0;

/// Position of the minimum of one simulated two-sided walk (positive: after the boundary).
fn walk_minimiser(before: &[f64], after: &[f64], rng: &mut Pcg64Mcg) -> i64 {
    let mut best = (0.0, 0i64);
    for (steps, sign) in [(after, 1i64), (before, -1i64)] {
        let (mut level, mut drift) = (0.0, 0.0);
        for (j, &s) in steps.iter().enumerate() {
            let xi: f64 = StandardNormal.sample(rng);
            level += s + 2.0 * s.max(0.0).sqrt() * xi;
            drift += s;
            if level < best.0 {
                best = (level, sign * (j as i64 + 1));
            }
            if drift > WALK_DRIFT_LIMIT {
                break;
            }
        }
    }
    best.1
}
