//! The change-point penalty that keeps the false-alarm rate of a clean series at a chosen level.
//!
//! For a series `y`, PELT with penalty β reports no change point exactly when
//! `C_0 <= C_k* + k β` for every `k >= 1` (`C_k*` the least cost with `k` change points), i.e.
//! when `β >= β*(y) = max_k (C_0 − C_k*)/k`. The false-alarm rate at β is `P(β*(Y) > β)` for a
//! clean series `Y`, so the penalty for rate α is the `1 − α` quantile of `β*` under the null.
//!
//! The null is the whole procedure applied to simulated clean series of the same length,
//! dimension and minimum segment length: stationary Gaussian AR(1) noise with unit variance
//! (white noise for ρ = 0); the effective-noise inflation is estimated from each simulated series
//! exactly as from the data (`noise` module) and the series is rescaled by it before the search.
//! The penalty therefore includes the estimation error of the inflation (a studentised
//! statistic). That error grows with the correlation (fewer effectively independent samples),
//! so ρ (the null class) is set from the data: the larger of its lag-1 autocorrelation and the
//! AR(1) coefficient matching its ratio of long-run to marginal variance
//! (`EffectiveNoise::null_lag1`), rounded up to a grid ([`NULL_LAG1_GRID`]) so that calibrations
//! can be shared. The penalty grows with ρ, so rounding up errs towards fewer false alarms; on
//! short series studentised by the pooled extrapolation (`noise::NoiseScales::is_extended`) it
//! need not (n = 300, dimension 6, α = 0.01: white class 0.2 38.1 against AR(0.75) 34.7), and
//! there the rule rests on the false-alarm rates measured (docs/benchmarks.md).
//!
//! The simulated quantile is itself uncertain: at α = 0.01 only a handful of runs lie above it,
//! and with 1000 runs two calibrator seeds gave penalties of 41.5 and 52.9 for the same null
//! (AR(0.7), 995 samples, dimension 6), whose true rates on 8000 fresh null series were 1.02% and
//! 0.09%. So the calibration simulates 4000 runs, and the penalty is not the plain `1 − α`
//! quantile but a one-sided nonparametric tolerance bound (Wilks 1941, Ann. Math. Statist.
//! 12:91-96): the order statistic with `j` runs above it, `j` the largest count with
//! `P(Binomial(R, α) <= j) <= 1 − γ`. For a continuous null the true exceedance rate of that order
//! statistic is Beta(j + 1, R − j) distributed, so it is at most α with confidence γ
//! ([`CALIBRATION_CONFIDENCE`]); the expected rate is `(j + 1)/(R + 1)`, 0.75% at R = 4000 and
//! α = 0.01 (`j = 29`; the same null then gave 44.27 and a true rate of 0.50%).
//!
//! Series longer than `max_simulated_samples` are simulated at that length and the rate is
//! scaled by `ln(n_sim/m) / ln(n/m)`: the tail probability of the maximal likelihood-ratio scan
//! grows like the logarithm of the range of segment lengths it covers (James, James & Siegmund
//! 1987, Biometrika 74:71-83, the approximation for the maximal chi-square statistic). With the
//! studentisation the longer series is also estimated more precisely, which the scaling ignores,
//! so the extrapolation errs towards fewer false alarms (white noise calibrated at 500 samples
//! for 2000 at α = 0.1 gave 3.7% on 1000 direct simulations; AR(1) ρ = 0.9 gave none).

use std::collections::HashMap;
use std::sync::{Arc, Mutex};

use nalgebra::Vector6;
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;
use rayon::prelude::*;

use super::changepoint::pelt;
use super::cost::{L2Cost, SegmentCost};
use super::distributions::binomial_cdf;
use super::noise::{estimate_effective_noise, NoiseScales};
use super::{check_probability, StatsError};

/// AR(1) coefficients at which null series are simulated; a data coefficient is rounded up to
/// the next one (and capped at the last).
pub const NULL_LAG1_GRID: [f64; 20] = [
    0.0, 0.1, 0.2, 0.3, 0.4, 0.5, 0.6, 0.7, 0.75, 0.8, 0.85, 0.88, 0.9, 0.92, 0.94, 0.95, 0.96,
    0.97, 0.98, 0.99,
];

/// The grid coefficient used for a data lag-1 autocorrelation bound, and whether it was capped
/// (the data are more correlated than any simulated null).
pub fn null_lag1(data_upper: f64) -> (f64, bool) {
    let last = NULL_LAG1_GRID[NULL_LAG1_GRID.len() - 1];
    match NULL_LAG1_GRID.iter().find(|&&g| g >= data_upper) {
        Some(&g) => (g, false),
        None => (last, true),
    }
}

/// Confidence `γ` that a calibrated threshold's false-alarm rate is at most the rate asked for
/// (see the module docs).
pub const CALIBRATION_CONFIDENCE: f64 = 0.95;

/// A threshold taken from simulated null values: how many runs lie above it and the confidence
/// that its true exceedance rate is at most the rate asked for.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ToleranceBound {
    pub value: f64,
    /// Runs whose value is above the bound (`j`).
    pub exceeding_runs: usize,
    /// `1 − P(Binomial(R, α) <= j)`: the confidence reached (below `γ` only when even the
    /// largest simulated value does not reach it: too few runs for so small a rate).
    pub confidence: f64,
}

/// The one-sided nonparametric upper tolerance bound of Wilks (1941): from `sorted` (ascending)
/// null values, the order statistic with the most runs `j` above it such that the probability
/// that its true exceedance rate is above `rate` is at most `1 − confidence`
/// (`P(Binomial(R, rate) <= j) <= 1 − confidence`); the largest value when no `j` qualifies.
pub fn tolerance_bound(
    sorted: &[f64],
    rate: f64,
    confidence: f64,
) -> Result<ToleranceBound, StatsError> {
    check_probability(rate)?;
    check_probability(confidence)?;
    let runs = sorted.len();
    if runs == 0 {
        return Err(StatsError::TooFewSamples {
            what: "a tolerance bound (simulated null values)",
            needed: 1,
            got: 0,
        });
    }
    let mut exceeding = 0;
    let mut below = binomial_cdf(0, runs as u64, rate)?;
    for j in 1..runs {
        let next = binomial_cdf(j as u64, runs as u64, rate)?;
        if next > 1.0 - confidence {
            break;
        }
        exceeding = j;
        below = next;
    }
    Ok(ToleranceBound {
        value: sorted[runs - 1 - exceeding],
        exceeding_runs: exceeding,
        confidence: 1.0 - below,
    })
}

/// How penalties are calibrated.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct CalibrationSettings {
    /// Number of simulated clean series.
    pub runs: usize,
    /// Seed of the simulation (each run derives its own stream from it and its index).
    pub seed: u64,
    /// Longest series simulated; longer ones are extrapolated (see the module docs).
    pub max_simulated_samples: usize,
}

impl Default for CalibrationSettings {
    fn default() -> Self {
        Self {
            runs: 4000,
            seed: 0x6d6f_756e_7464_7269,
            max_simulated_samples: 1000,
        }
    }
}

/// A calibrated penalty and how it was obtained (echoed in reports).
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct PenaltyCalibration {
    /// The penalty β per change point, in units of the effective (whitened) chi-square cost.
    pub penalty: f64,
    /// The false-alarm rate α it was set for (per series).
    pub false_alarm_rate: f64,
    /// The rate actually simulated (smaller than α when the series is longer than simulated).
    pub simulated_rate: f64,
    /// Monte Carlo standard error of the simulated rate, `√(a(1−a)/runs)`.
    pub rate_standard_error: f64,
    /// Simulated runs whose critical penalty lies above the penalty, and the confidence that
    /// the true rate is at most the simulated rate (Wilks' tolerance bound, module docs).
    pub exceeding_runs: usize,
    pub confidence: f64,
    /// Length of the series the penalty is for.
    pub n_samples: usize,
    /// Length of the simulated series.
    pub simulated_samples: usize,
    /// Dimension and minimum segment length.
    pub dim: usize,
    pub min_size: usize,
    /// AR(1) coefficient of the simulated null noise.
    pub null_lag1: f64,
    pub runs: usize,
    pub seed: u64,
    /// The simulated `β*` values, sorted (for p-values of found change points). Values at or
    /// below `censor` may be lower bounds (see [`PenaltyCalibrator`]); the penalty and the
    /// p-values of gains above it are exact.
    #[serde(skip)]
    pub null_critical: Arc<Vec<f64>>,
    /// Censoring level of the simulated values (−∞ when none is censored).
    #[serde(skip)]
    pub censor: f64,
    /// Number of runs only known to have `β*` at or below `censor`.
    #[serde(skip)]
    pub censored_runs: usize,
}

impl PenaltyCalibration {
    /// The probability that a clean series of this length shows a change point at least as
    /// strong (a likelihood-ratio gain at least `gain`): `(1 + #{β* >= gain})/(R + 1)`, scaled
    /// to the series length like the rate. A gain at or below the censoring level (never that of
    /// a detected change point, whose gain is at least the penalty) counts every censored run as
    /// exceeding it: an upper bound.
    pub fn p_value(&self, gain: f64) -> f64 {
        let mut exceed = self
            .null_critical
            .iter()
            .rev()
            .take_while(|&&b| b >= gain)
            .count();
        if gain <= self.censor {
            exceed = (exceed + self.censored_runs).min(self.runs);
        }
        let simulated = (1 + exceed) as f64 / (self.runs + 1) as f64;
        let scale = self.false_alarm_rate / self.simulated_rate;
        (simulated * scale).min(1.0)
    }
}

/// `β*(y) = max_k (C_0 − C_k*)/k`: the smallest penalty at which PELT reports no change point.
///
/// Found by the increasing sequence β ← (C_0 − C(S))/k(S) where S is PELT's segmentation at the
/// current β (Dinkelbach's method for a ratio; each step strictly increases β until PELT
/// returns the single segment), started from the best single split.
pub fn critical_penalty<C: SegmentCost>(cost: &C, min_size: usize) -> Result<f64, StatsError> {
    let start = best_single_split_gain(cost, min_size);
    Ok(critical_penalty_above(cost, min_size, start)?.unwrap_or(start))
}

/// `β*(y)` when it exceeds `start`, `None` when it does not (PELT at `start` reports no change
/// point, so `β* <= start`). Each Dinkelbach step β ← (C_0 − C(S))/k(S) is the ratio of a
/// segmentation, hence never above `β*`, so the iteration is exact from any start.
pub fn critical_penalty_above<C: SegmentCost>(
    cost: &C,
    min_size: usize,
    start: f64,
) -> Result<Option<f64>, StatsError> {
    let n = cost.n_samples();
    let whole = cost.cost(0, n);
    let mut beta = start;
    let mut moved = false;
    loop {
        let seg = pelt(cost, beta, min_size)?;
        let k = seg.change_points().len();
        if k == 0 {
            return Ok(moved.then_some(beta));
        }
        // The ratio from the segment costs themselves, not from `objective − β k`: it then
        // depends on the segmentation alone, so every start that reaches the same maximiser
        // returns the same number to the last bit.
        let next = split_gain(cost, whole, &seg.segments()) / k as f64;
        if next <= beta * (1.0 + 1e-12) {
            return Ok(Some(beta));
        }
        beta = next;
        moved = true;
    }
}

/// `max_t C(0, n) − C(0, t) − C(t, n)` over splits leaving `min_size` samples on each side.
pub fn best_single_split_gain<C: SegmentCost>(cost: &C, min_size: usize) -> f64 {
    let n = cost.n_samples();
    let whole = cost.cost(0, n);
    (min_size.max(1)..=n.saturating_sub(min_size.max(1)))
        .map(|t| split_gain(cost, whole, &[(0, t), (t, n)]))
        .fold(0.0, f64::max)
}

/// `C_0 − Σ C(segment)`: the cost a segmentation saves over the single segment, summed in one
/// order wherever it is needed (so equal segmentations give equal values).
fn split_gain<C: SegmentCost>(cost: &C, whole: f64, segments: &[(usize, usize)]) -> f64 {
    whole - segments.iter().map(|&(a, b)| cost.cost(a, b)).sum::<f64>()
}

/// SplitMix64 finaliser (Steele, Lea & Flood 2014): a well-mixed stream seed from a base seed
/// and a run index, so results do not depend on how rayon schedules the runs.
pub fn stream_seed(seed: u64, index: u64) -> u64 {
    let mut z = seed.wrapping_add(index.wrapping_add(1).wrapping_mul(0x9e37_79b9_7f4a_7c15));
    z = (z ^ (z >> 30)).wrapping_mul(0xbf58_476d_1ce4_e5b9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94d0_49bb_1331_11eb);
    z ^ (z >> 31)
}

/// Stationary AR(1) series with unit marginal variance in the first `dim` coordinates,
/// `e_t = ρ e_{t−1} + √(1−ρ²) w_t` (white noise for ρ = 0).
pub fn ar1_series(rng: &mut Pcg64Mcg, n: usize, dim: usize, rho: f64) -> Vec<Vector6<f64>> {
    let draw = |rng: &mut Pcg64Mcg| {
        Vector6::from_fn(|i, _| {
            if i < dim {
                StandardNormal.sample(rng)
            } else {
                0.0
            }
        })
    };
    let innovation = (1.0 - rho * rho).sqrt();
    let mut e = draw(rng);
    (0..n)
        .map(|_| {
            let w = draw(rng);
            e = e * rho + w * innovation;
            e
        })
        .collect()
}

/// One simulated clean series, rescaled by its own effective-noise estimate as the data are.
pub(crate) fn null_series(key: &NullKey, seed: u64) -> Vec<Vector6<f64>> {
    let mut rng = Pcg64Mcg::seed_from_u64(seed);
    let z = ar1_series(&mut rng, key.n, key.dim, NULL_LAG1_GRID[key.lag1_index]);
    let noise = estimate_effective_noise(
        &z,
        key.dim,
        &[(0, key.n)],
        &NoiseScales::for_min_size(key.min_size),
    );
    let map = noise.inverse_sqrt();
    z.iter().map(|v| map * v).collect()
}

/// The seed of simulated run `run` of the null `key`: one stream per noise class, one sub-stream
/// per run, so results do not depend on how the runs are scheduled.
pub(crate) fn run_seed(settings: &CalibrationSettings, key: &NullKey, run: u64) -> u64 {
    stream_seed(stream_seed(settings.seed, key.lag1_index as u64), run)
}

/// Rates up to this one are served by a censored null distribution (see
/// [`PenaltyCalibrator`]); larger ones simulate every `β*` in full.
pub const CENSOR_RATE: f64 = 0.2;

/// A simulated null distribution: the sorted `β*` values of the runs. Values at or below
/// `censor` may be lower bounds (runs only shown to have `β* <= censor`); `censored` counts them.
#[derive(Debug)]
pub(crate) struct NullDistribution {
    pub(crate) sorted: Arc<Vec<f64>>,
    pub(crate) censor: f64,
    pub(crate) censored: usize,
}

/// What a simulated null distribution depends on (besides the calibration settings).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub(crate) struct NullKey {
    pub(crate) n: usize,
    pub(crate) dim: usize,
    pub(crate) min_size: usize,
    /// Index of the AR(1) coefficient in [`NULL_LAG1_GRID`].
    pub(crate) lag1_index: usize,
    /// Whether runs whose `β*` is below the censoring level may stop early.
    pub(crate) censored: bool,
}

/// Calibrates penalties by simulation and remembers each simulated null distribution, so that
/// many series of the same length and noise class (simulations, sensitivity studies) share one.
/// The classes every long audit meets are simulated ahead of time (`null_table`): with the
/// default settings they are read instead of simulated, with identical results.
#[derive(Debug)]
pub struct PenaltyCalibrator {
    settings: CalibrationSettings,
    cache: Mutex<HashMap<NullKey, Arc<NullDistribution>>>,
    /// Whether the precomputed null distributions may serve a class.
    tabulated: bool,
}

impl Default for PenaltyCalibrator {
    fn default() -> Self {
        Self::new(CalibrationSettings::default())
    }
}

impl PenaltyCalibrator {
    /// A calibrator with the given settings (served by the precomputed null distributions where
    /// they were made with the same settings).
    pub fn new(settings: CalibrationSettings) -> Self {
        Self {
            settings,
            cache: Mutex::new(HashMap::new()),
            tabulated: true,
        }
    }

    /// A calibrator that simulates every null distribution it needs, never reading the
    /// precomputed ones (to make or check them).
    pub fn simulating(settings: CalibrationSettings) -> Self {
        Self {
            tabulated: false,
            ..Self::new(settings)
        }
    }

    /// The settings in use.
    pub fn settings(&self) -> &CalibrationSettings {
        &self.settings
    }

    /// The penalty for a series of `n` samples of dimension `dim` (1..=6), minimum segment
    /// length `min_size` and lag-1 autocorrelation bound `data_lag1`, such that a clean series
    /// raises a change point with probability `false_alarm_rate` (see the module docs).
    pub fn calibrate(
        &self,
        n: usize,
        dim: usize,
        min_size: usize,
        false_alarm_rate: f64,
        data_lag1: f64,
    ) -> Result<PenaltyCalibration, StatsError> {
        check_probability(false_alarm_rate)?;
        let min_size = min_size.max(1);
        if n < 2 * min_size {
            return Err(StatsError::TooFewSamples {
                what: "penalty calibration (two minimum-length segments)",
                needed: 2 * min_size,
                got: n,
            });
        }
        if !(1..=6).contains(&dim) || self.settings.runs == 0 {
            return Err(StatsError::InvalidParameter {
                name: "calibration dimension or runs",
                value: dim as f64,
                expected: "a dimension from 1 to 6 and at least one run",
            });
        }
        let (lag1, _) = null_lag1(data_lag1);
        let key = NullKey {
            n: n.min(self.settings.max_simulated_samples.max(2 * min_size)),
            dim,
            min_size,
            lag1_index: NULL_LAG1_GRID.iter().position(|&g| g >= lag1).unwrap_or(0),
            censored: false,
        };
        let rate = extrapolated_rate(false_alarm_rate, n, key.n, min_size);
        let key = NullKey {
            censored: rate <= CENSOR_RATE,
            ..key
        };
        let null = self.null_distribution(&key)?;
        let betas = null.sorted.clone();
        let bound = tolerance_bound(&betas, rate, CALIBRATION_CONFIDENCE)?;
        Ok(PenaltyCalibration {
            penalty: bound.value,
            false_alarm_rate,
            simulated_rate: rate,
            rate_standard_error: (rate * (1.0 - rate) / self.settings.runs as f64).sqrt(),
            exceeding_runs: bound.exceeding_runs,
            confidence: bound.confidence,
            n_samples: n,
            simulated_samples: key.n,
            dim,
            min_size,
            null_lag1: lag1,
            runs: self.settings.runs,
            seed: self.settings.seed,
            null_critical: betas,
            censor: null.censor,
            censored_runs: null.censored,
        })
    }

    /// The null distribution of `key`, simulated once.
    ///
    /// Uncensored, every run's `β*` is found by [`critical_penalty`]. Censored (rates up to
    /// [`CENSOR_RATE`]), only the upper tail is resolved: every run's best single-split gain
    /// `B_1 <= β*` is computed first, the censoring level `τ` is the order statistic of the `B_1`
    /// at rank `ceil((1 − CENSOR_RATE)·R)`, and a run with `B_1 < τ` is solved once at `τ`: if
    /// PELT reports no change point there, `β* <= τ` and `B_1` stands in for it; otherwise the
    /// Dinkelbach iteration continues from `τ` to the exact `β*`. Since `β*_i >= B_1,i` for every
    /// run, the order statistics of `β*` at ranks `>= ceil((1 − CENSOR_RATE)·R)` are `>= τ`, so
    /// every quantile for a rate up to `CENSOR_RATE` and every p-value above `τ` equal those of the
    /// uncensored distribution (`tests/stats_penalty_censored.rs` checks it). Most runs then
    /// need one search at a penalty well above their gains, where the search is cheapest.
    fn null_distribution(&self, key: &NullKey) -> Result<Arc<NullDistribution>, StatsError> {
        if let Some(found) = self.lock().get(key) {
            return Ok(found.clone());
        }
        let tabulated = self
            .tabulated
            .then(|| super::null_table::penalty_null(&self.settings, key))
            .flatten();
        let null = match tabulated {
            Some(null) => null,
            None => simulate_null(&self.settings, key)?,
        };
        let null = Arc::new(null);
        self.lock().insert(*key, null.clone());
        Ok(null)
    }

    fn lock(&self) -> std::sync::MutexGuard<'_, HashMap<NullKey, Arc<NullDistribution>>> {
        // A poisoned cache only means another thread panicked mid-insert; the map is still valid.
        self.cache.lock().unwrap_or_else(|e| e.into_inner())
    }
}

/// Simulates the null distribution of `key` (see [`PenaltyCalibrator`] for the censoring).
pub(crate) fn simulate_null(
    settings: &CalibrationSettings,
    key: &NullKey,
) -> Result<NullDistribution, StatsError> {
    let runs = 0..settings.runs as u64;
    let null = if key.censored {
        // The series are not kept between the passes (4000 of them would hold about 190 MB
        // at 1000 samples): the second pass draws each again from its own stream.
        let firsts: Vec<f64> = runs
            .into_par_iter()
            .map(|i| {
                let y = null_series(key, run_seed(settings, key, i));
                Ok(best_single_split_gain(
                    &L2Cost::from_vectors(&y)?,
                    key.min_size,
                ))
            })
            .collect::<Result<_, StatsError>>()?;
        let censor = upper_quantile(&sorted(firsts.clone()), CENSOR_RATE);
        let resolved = firsts
            .into_par_iter()
            .enumerate()
            .map(|(i, first)| {
                let y = null_series(key, run_seed(settings, key, i as u64));
                let cost = L2Cost::from_vectors(&y)?;
                Ok(
                    match critical_penalty_above(&cost, key.min_size, first.max(censor))? {
                        Some(beta) => (beta, false),
                        None if first >= censor => (first, false),
                        None => (first, true),
                    },
                )
            })
            .collect::<Result<Vec<(f64, bool)>, StatsError>>()?;
        let censored = resolved.iter().filter(|r| r.1).count();
        NullDistribution {
            sorted: Arc::new(sorted(resolved.into_iter().map(|r| r.0).collect())),
            censor,
            censored,
        }
    } else {
        let betas = runs
            .into_par_iter()
            .map(|i| {
                let y = null_series(key, run_seed(settings, key, i));
                critical_penalty(&L2Cost::from_vectors(&y)?, key.min_size)
            })
            .collect::<Result<Vec<f64>, StatsError>>()?;
        NullDistribution {
            sorted: Arc::new(sorted(betas)),
            censor: f64::NEG_INFINITY,
            censored: 0,
        }
    };
    Ok(null)
}

fn sorted(mut values: Vec<f64>) -> Vec<f64> {
    values.sort_by(f64::total_cmp);
    values
}

/// The rate to simulate at length `simulated` so that the rate at length `n` is `alpha`.
fn extrapolated_rate(alpha: f64, n: usize, simulated: usize, min_size: usize) -> f64 {
    if n <= simulated {
        return alpha;
    }
    let m = min_size as f64;
    let ratio = (simulated as f64 / m).ln() / (n as f64 / m).ln();
    alpha * ratio.clamp(0.0, 1.0)
}

/// The value exceeded by at most a fraction `rate` of the sorted sample: the order statistic at
/// rank `ceil((1 − rate)·R)`.
fn upper_quantile(sorted: &[f64], rate: f64) -> f64 {
    let r = sorted.len();
    let rank = ((1.0 - rate) * r as f64).ceil() as usize;
    sorted[rank.clamp(1, r) - 1]
}
