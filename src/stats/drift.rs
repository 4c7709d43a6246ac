//! The offline drift analysis of one mount deviation series: change points with a calibrated
//! false-alarm rate, their sizes and locations with intervals, and the segments between them.
//!
//! Pipeline (details and references in `docs/method.md`):
//! 1. validate the samples and take each covariance's pseudo-inverse (rank-aware);
//! 2. whiten once with the mean information `W̄ = L̄ᵀL̄`: `z_t = L̄ x_t`, `Ω_t = L̄⁺ᵀ W_t L̄⁺`;
//! 3. estimate the effective-noise inflation `Γ` (correlated noise, vibration) from windows inside
//!    the current segments, calibrate the penalty for the requested false-alarm rate, run exact
//!    PELT with the information-weighted cost under the effective information, and repeat with
//!    the new segments until they no longer change (found shifts then stop inflating `Γ`);
//! 4. estimate each segment's mean, each change point's shift, p-value and location interval.

use nalgebra::{Matrix6, Vector6};

use super::changepoint::{pelt, Segmentation};
use super::consistency::{excess_scatter, ExcessScatter};
use super::cost::{InformationCost, L2Cost, SegmentCost};
use super::information::{information_sum_spectrum, Information, Spectrum};
use super::noise::{estimate_effective_noise, EffectiveNoise, NoiseScales};
use super::online::{session_alarm, OnlineCalibrator, SessionNull};
use super::penalty::{null_lag1, stream_seed, PenaltyCalibration, PenaltyCalibrator};
use super::segments::{
    location_interval, shift_between, weighted_mean, LocationSettings, SegmentMean, Shift,
};
use super::StatsError;
use crate::tol;

/// One solved frame: its 6-vector deviation (any units, e.g. mm and degrees) and covariance.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviationSample {
    pub frame: i64,
    pub time_s: f64,
    pub deviation: Vector6<f64>,
    /// Covariance of the deviation; may be singular (unobservable directions).
    pub covariance: Matrix6<f64>,
}

/// A validated deviation series with each frame's information `W_t = P_t⁺`.
#[derive(Debug, Clone)]
pub struct DeviationSeries {
    frames: Vec<i64>,
    times_s: Vec<f64>,
    deviations: Vec<Vector6<f64>>,
    covariances: Vec<Matrix6<f64>>,
    information: Vec<Information>,
}

impl DeviationSeries {
    /// Validates the samples: finite values, frame numbers strictly increasing, covariances
    /// symmetric positive semi-definite.
    pub fn new(samples: &[DeviationSample]) -> Result<Self, StatsError> {
        let mut series = Self {
            frames: Vec::with_capacity(samples.len()),
            times_s: Vec::with_capacity(samples.len()),
            deviations: Vec::with_capacity(samples.len()),
            covariances: Vec::with_capacity(samples.len()),
            information: Vec::with_capacity(samples.len()),
        };
        for (index, s) in samples.iter().enumerate() {
            if let Some(&previous) = series.frames.last() {
                if s.frame <= previous {
                    return Err(StatsError::FramesNotIncreasing {
                        index,
                        frame: s.frame,
                        previous,
                    });
                }
            }
            if !s.time_s.is_finite() || s.deviation.iter().any(|v| !v.is_finite()) {
                return Err(StatsError::NonFinite {
                    index,
                    what: "time or deviation",
                });
            }
            series
                .information
                .push(Information::from_covariance(&s.covariance, index)?);
            series.frames.push(s.frame);
            series.times_s.push(s.time_s);
            series.deviations.push(s.deviation);
            series.covariances.push(s.covariance);
        }
        Ok(series)
    }

    pub fn len(&self) -> usize {
        self.frames.len()
    }

    pub fn is_empty(&self) -> bool {
        self.frames.is_empty()
    }

    pub fn frames(&self) -> &[i64] {
        &self.frames
    }

    pub fn times_s(&self) -> &[f64] {
        &self.times_s
    }

    pub fn deviations(&self) -> &[Vector6<f64>] {
        &self.deviations
    }

    pub fn covariances(&self) -> &[Matrix6<f64>] {
        &self.covariances
    }

    pub fn information(&self) -> &[Information] {
        &self.information
    }
}

/// The common whitening `z = L̄ (x − c)` with `W̄ = L̄ᵀL̄` the mean information (rows beyond
/// its rank are zero) and `c` the overall information-weighted mean (for numerical range only).
#[derive(Debug, Clone, PartialEq)]
pub struct CommonWhitening {
    /// Rank of the mean information: the number of active whitened coordinates.
    pub dim: usize,
    /// `L̄` (6x6, rows `dim..` zero).
    pub to_whitened: Matrix6<f64>,
    /// `L̄⁺` (columns `dim..` zero).
    pub from_whitened: Matrix6<f64>,
    /// `c`.
    pub centre: Vector6<f64>,
}

impl CommonWhitening {
    /// Builds the whitening of a series; fails when nothing is observable.
    pub fn new(series: &DeviationSeries) -> Result<Self, StatsError> {
        let n = series.len().max(1) as f64;
        let (sum, weighted) = series
            .information
            .iter()
            .zip(&series.deviations)
            .fold((Matrix6::zeros(), Vector6::zeros()), |(a, b), (w, x)| {
                (a + w.matrix(), b + w.matrix() * x)
            });
        let spectrum = information_sum_spectrum(&(sum / n));
        if spectrum.rank == 0 {
            return Err(StatsError::Unobservable {
                what: "the deviation series",
            });
        }
        let mut to_whitened = Matrix6::zeros();
        let mut from_whitened = Matrix6::zeros();
        let active = (0..6).filter(|&k| spectrum.values[k] > 0.0);
        for (row, k) in active.enumerate() {
            let v = spectrum.vectors.column(k);
            let root = spectrum.values[k].sqrt();
            to_whitened.set_row(row, &(v.transpose() * root));
            from_whitened.set_column(row, &(v / root));
        }
        Ok(Self {
            dim: spectrum.rank,
            to_whitened,
            from_whitened,
            centre: information_sum_spectrum(&sum).pseudo_inverse() * weighted,
        })
    }

    /// `z = L̄ (x − c)`.
    pub fn whiten(&self, x: &Vector6<f64>) -> Vector6<f64> {
        self.to_whitened * (x - self.centre)
    }

    /// An information matrix in whitened coordinates, `L̄⁺ᵀ W L̄⁺`.
    pub fn information_in_whitened(&self, w: &Matrix6<f64>) -> Matrix6<f64> {
        self.from_whitened.transpose() * w * self.from_whitened
    }

    /// A whitened-coordinate information back in the original coordinates, `L̄ᵀ Ω L̄`.
    pub fn information_in_original(&self, omega: &Matrix6<f64>) -> Matrix6<f64> {
        self.to_whitened.transpose() * omega * self.to_whitened
    }
}

/// The series under the effective information: whitened samples and, per frame, the information
/// after the noise inflation `Γ`: `Ω̃_t = (Ω_t^{+1/2} Γ Ω_t^{+1/2})⁺` (equal to `Γ⁻¹` for a frame
/// with the mean information; an unobservable direction stays unobservable).
#[derive(Debug, Clone)]
pub struct EffectiveModel {
    pub whitening: CommonWhitening,
    pub z: Vec<Vector6<f64>>,
    /// `Ω_t` (nominal, whitened coordinates).
    pub nominal: Vec<Matrix6<f64>>,
    /// Whether every frame has the mean information (then `Ω̃_t = Γ⁻¹` for all `t`).
    pub common: bool,
    /// `Ω̃_t`.
    pub effective: Vec<Matrix6<f64>>,
}

impl EffectiveModel {
    /// Whitens a series (no inflation yet: `Γ = I`).
    pub fn new(series: &DeviationSeries) -> Result<Self, StatsError> {
        let whitening = CommonWhitening::new(series)?;
        let z: Vec<Vector6<f64>> = series
            .deviations
            .iter()
            .map(|x| whitening.whiten(x))
            .collect();
        let nominal: Vec<Matrix6<f64>> = series
            .information
            .iter()
            .map(|w| whitening.information_in_whitened(w.matrix()))
            .collect();
        let identity = active_identity(whitening.dim);
        let limit = tol::COMMON_INFORMATION_REL * (whitening.dim as f64).sqrt();
        let common = nominal.iter().all(|o| (o - identity).norm() <= limit);
        Ok(Self {
            effective: nominal.clone(),
            whitening,
            z,
            nominal,
            common,
        })
    }

    /// Applies a noise inflation `Γ` (whitened coordinates).
    pub fn inflate(&mut self, inflation: &Matrix6<f64>) {
        if self.common {
            let inverse = Spectrum::new(inflation, 0.0).pseudo_inverse();
            self.effective.iter_mut().for_each(|e| *e = inverse);
            return;
        }
        for (e, omega) in self.effective.iter_mut().zip(&self.nominal) {
            let root = Spectrum::new(omega, tol::INFORMATION_SUM_RANK_REL).inverse_sqrt();
            let covariance = root * inflation * root;
            *e = Spectrum::new(&covariance, tol::INFORMATION_SUM_RANK_REL).pseudo_inverse();
        }
    }

    /// Frames whose nominal information has the full rank of the series (others break the
    /// windows of the noise estimate: their unobserved components are arbitrary).
    pub fn regular(&self) -> Vec<bool> {
        let dim = self.whitening.dim;
        self.nominal
            .iter()
            .map(|o| Spectrum::new(o, tol::INFORMATION_SUM_RANK_REL).rank == dim)
            .collect()
    }

    /// The segment cost under the effective information.
    pub fn cost(&self) -> Result<EffectiveCost, StatsError> {
        if self.common {
            let map = Spectrum::new(&self.effective[0], 0.0).sqrt();
            let y: Vec<Vector6<f64>> = self.z.iter().map(|z| map * z).collect();
            Ok(EffectiveCost::Common(L2Cost::from_vectors(&y)?))
        } else {
            Ok(EffectiveCost::PerFrame(Box::new(InformationCost::new(
                &self.z,
                &self.effective,
                self.whitening.dim,
            )?)))
        }
    }

    /// The effective-whitened samples `Ω̃_t^{1/2} z_t`: unit white noise under the effective model.
    pub fn effective_whitened(&self) -> Vec<Vector6<f64>> {
        if self.common {
            let map = Spectrum::new(&self.effective[0], 0.0).sqrt();
            return self.z.iter().map(|z| map * z).collect();
        }
        self.z
            .iter()
            .zip(&self.effective)
            .map(|(z, e)| Spectrum::new(e, 0.0).sqrt() * z)
            .collect()
    }

    /// Effective information of every frame in the original coordinates.
    pub fn effective_original(&self) -> Vec<Matrix6<f64>> {
        self.effective
            .iter()
            .map(|o| self.whitening.information_in_original(o))
            .collect()
    }
}

/// The information-weighted cost under the effective information: the squared-error cost of
/// `Γ^{-1/2} z` when every frame has the mean information (identical, and O(d) per segment), the
/// general [`InformationCost`] otherwise.
#[derive(Debug, Clone)]
pub enum EffectiveCost {
    Common(L2Cost),
    PerFrame(Box<InformationCost>),
}

impl SegmentCost for EffectiveCost {
    fn n_samples(&self) -> usize {
        match self {
            Self::Common(c) => c.n_samples(),
            Self::PerFrame(c) => c.n_samples(),
        }
    }

    #[inline]
    fn cost(&self, start: usize, end: usize) -> f64 {
        match self {
            Self::Common(c) => c.cost(start, end),
            Self::PerFrame(c) => c.cost(start, end),
        }
    }
}

fn active_identity(dim: usize) -> Matrix6<f64> {
    Matrix6::from_fn(|r, c| if r == c && r < dim { 1.0 } else { 0.0 })
}

/// Options of the drift analysis.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DriftOptions {
    /// Minimum segment length in samples (solved frames); also the smallest noise scale.
    pub min_segment_samples: usize,
    /// Probability that a clean series raises any change point.
    pub false_alarm_rate: f64,
    /// Confidence level of all intervals.
    pub level: f64,
    /// Upper bound on noise-estimate / segmentation rounds.
    pub max_rounds: usize,
    /// Monte Carlo settings of the change-point location intervals.
    pub location: LocationSettings,
}

/// The simulated null distributions an analysis draws on (penalty and online threshold),
/// shared by all series analysed with it.
#[derive(Debug, Default)]
pub struct Calibrators {
    pub penalty: PenaltyCalibrator,
    pub online: OnlineCalibrator,
}

impl Default for DriftOptions {
    fn default() -> Self {
        Self {
            min_segment_samples: 10,
            false_alarm_rate: 0.01,
            level: 0.95,
            max_rounds: 5,
            location: LocationSettings {
                runs: 2000,
                seed: 0x6c6f_6361_7469_6f6e,
            },
        }
    }
}

/// A detected change point.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ChangePoint {
    /// Index of the first sample of the new segment.
    pub index: usize,
    pub frame: i64,
    pub time_s: f64,
    /// Interval for the frame at which the new segment starts.
    pub frame_interval: (i64, i64),
    /// Mean after minus mean before, with intervals under the effective noise.
    pub shift: Shift,
    /// Likelihood-ratio gain of keeping this change point (merging the two segments costs this
    /// much in the effective chi-square units).
    pub gain: f64,
    /// Probability that a clean series shows a change point at least this strong.
    pub p_value: f64,
}

/// A segment between change points.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct SegmentEstimate {
    pub first_frame: i64,
    pub last_frame: i64,
    /// Mean deviation with intervals under the effective noise.
    pub mean: SegmentMean,
    /// Scatter about the mean against the per-frame covariances.
    pub scatter: ExcessScatter,
}

/// When the online detector, replayed over the series, would have alarmed.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct OnlineAlarm {
    /// MEWMA smoothing constant and threshold (set for the session false-alarm rate).
    pub lambda: f64,
    pub threshold: f64,
    /// Samples used for the in-control mean before monitoring.
    pub warmup_samples: usize,
    /// Sample index and frame of the alarm, if it alarmed.
    pub index: Option<usize>,
    pub frame: Option<i64>,
    /// Alarm frame minus the first change point's frame (negative: it alarmed before it).
    pub delay_frames: Option<i64>,
}

impl OnlineAlarm {
    /// Alarm frame minus a given (e.g. true) change frame.
    pub fn delay_from(&self, change_frame: i64) -> Option<i64> {
        self.frame.map(|f| f - change_frame)
    }
}

/// Something the analysis wants the reader to know.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub enum DriftWarning {
    /// The noise is more correlated than any simulated null; the false-alarm rate may be higher.
    NoiseTooCorrelated { lag1: f64 },
    /// Segmentation and noise estimate did not settle within the round limit.
    NotConverged { rounds: usize },
    /// Some frames observe fewer directions than the series as a whole.
    RankDeficientFrames { count: usize },
}

/// The result of the drift analysis.
#[derive(Debug, Clone, serde::Serialize)]
pub struct DriftAnalysis {
    pub min_segment_samples: usize,
    pub penalty: PenaltyCalibration,
    #[serde(skip)]
    pub noise: EffectiveNoise,
    /// Largest noise inflation factor (1: the covariances explain the scatter).
    pub noise_factor: f64,
    /// Number of observable whitened directions.
    pub dim: usize,
    /// Whether all frames had the same information (the O(d) cost was used).
    pub common_information: bool,
    pub rounds: usize,
    pub change_points: Vec<ChangePoint>,
    pub segments: Vec<SegmentEstimate>,
    /// `None` when the series is not longer than the warm-up.
    pub online: Option<OnlineAlarm>,
    pub warnings: Vec<DriftWarning>,
}

/// Splits the segments of a segmentation at frames that are not regular.
fn noise_windows(segments: &[(usize, usize)], regular: &[bool]) -> Vec<(usize, usize)> {
    let mut out = Vec::new();
    for &(start, end) in segments {
        let breaks = (start..end)
            .filter(|&t| !regular[t])
            .chain(std::iter::once(end));
        let mut run_start = start;
        for stop in breaks {
            if stop > run_start {
                out.push((run_start, stop));
            }
            run_start = stop + 1;
        }
    }
    out
}

/// Runs the drift analysis (see the module docs).
pub fn analyse_drift(
    series: &DeviationSeries,
    options: &DriftOptions,
    calibrators: &Calibrators,
) -> Result<DriftAnalysis, StatsError> {
    let m = options.min_segment_samples.max(1);
    if series.len() < 2 * m {
        return Err(StatsError::TooFewSamples {
            what: "change-point analysis (two minimum-length segments)",
            needed: 2 * m,
            got: series.len(),
        });
    }
    let mut model = EffectiveModel::new(series)?;
    let regular = model.regular();
    let scales = NoiseScales::for_min_size(m);
    let mut segmentation = Segmentation {
        breakpoints: vec![series.len()],
        objective: 0.0,
    };
    let mut rounds = 0;
    let (noise, penalty, converged) = loop {
        rounds += 1;
        let windows = noise_windows(&segmentation.segments(), &regular);
        let noise = estimate_effective_noise(&model.z, model.whitening.dim, &windows, &scales);
        let penalty = calibrators.penalty.calibrate(
            series.len(),
            model.whitening.dim,
            m,
            options.false_alarm_rate,
            // Before any segment is known an undetected shift would inflate the residual
            // autocorrelation (and with it the penalty), so the first round uses the robust one.
            if rounds == 1 {
                noise.lag1_robust
            } else {
                noise.lag1
            },
        )?;
        model.inflate(&noise.inflation);
        let next = pelt(&model.cost()?, penalty.penalty, m)?;
        // The first round only finds the segments the precise lag-1 estimate needs.
        let settled = rounds > 1 && next.breakpoints == segmentation.breakpoints;
        segmentation = next;
        if settled || rounds >= options.max_rounds {
            break (noise, penalty, settled);
        }
    };
    let mut warnings = Vec::new();
    if null_lag1(noise.lag1).1 {
        warnings.push(DriftWarning::NoiseTooCorrelated { lag1: noise.lag1 });
    }
    if !converged {
        warnings.push(DriftWarning::NotConverged { rounds });
    }
    let deficient = regular.iter().filter(|r| !**r).count();
    if deficient > 0 {
        warnings.push(DriftWarning::RankDeficientFrames { count: deficient });
    }
    let mut long_run = model.clone();
    long_run.inflate(&noise.long_run_inflation);
    let estimates = describe(series, &model, &long_run, &segmentation, &penalty, options)?;
    let online = replay_online(
        series,
        &model,
        &penalty,
        &estimates.0,
        options,
        &calibrators.online,
    )?;
    Ok(DriftAnalysis {
        min_segment_samples: m,
        noise_factor: noise.max_factor(),
        dim: model.whitening.dim,
        common_information: model.common,
        rounds,
        penalty,
        noise,
        change_points: estimates.0,
        segments: estimates.1,
        online,
        warnings,
    })
}

/// Replays the online MEWMA over the effective-whitened series `Ω̃_t^{1/2} z_t`.
fn replay_online(
    series: &DeviationSeries,
    model: &EffectiveModel,
    penalty: &PenaltyCalibration,
    change_points: &[ChangePoint],
    options: &DriftOptions,
    calibrator: &OnlineCalibrator,
) -> Result<Option<OnlineAlarm>, StatsError> {
    let settings = calibrator.settings();
    if series.len() <= settings.warmup {
        return Ok(None);
    }
    let null = SessionNull {
        n: series.len(),
        dim: model.whitening.dim,
        lag1: penalty.null_lag1,
        min_size: options.min_segment_samples.max(1),
    };
    let chart = calibrator.calibrate(&null, options.false_alarm_rate)?;
    let y = model.effective_whitened();
    let index = session_alarm(&y, settings.warmup, &chart);
    let frame = index.map(|i| series.frames[i]);
    Ok(Some(OnlineAlarm {
        lambda: chart.lambda,
        threshold: chart.h,
        warmup_samples: settings.warmup,
        index,
        frame,
        delay_frames: frame.zip(change_points.first()).map(|(f, c)| f - c.frame),
    }))
}

/// Segment estimates and change points of a final segmentation: gains and p-values under the
/// search model (the one the penalty is calibrated for), intervals under the long-run model.
fn describe(
    series: &DeviationSeries,
    model: &EffectiveModel,
    long_run: &EffectiveModel,
    segmentation: &Segmentation,
    penalty: &PenaltyCalibration,
    options: &DriftOptions,
) -> Result<(Vec<ChangePoint>, Vec<SegmentEstimate>), StatsError> {
    let effective = long_run.effective_original();
    let x = &series.deviations;
    let spans = segmentation.segments();
    let mut segments = Vec::with_capacity(spans.len());
    for &(start, end) in &spans {
        segments.push(SegmentEstimate {
            first_frame: series.frames[start],
            last_frame: series.frames[end - 1],
            mean: weighted_mean(x, &effective, start, end, options.level)?,
            scatter: excess_scatter(
                &x[start..end],
                &series.information[start..end],
                &series.covariances[start..end],
            )?,
        });
    }
    let cost = model.cost()?;
    let mut change_points = Vec::with_capacity(spans.len().saturating_sub(1));
    for (k, pair) in spans.windows(2).enumerate() {
        let ((a, b), (_, c)) = (pair[0], pair[1]);
        let shift = shift_between(&segments[k].mean, &segments[k + 1].mean, options.level)?;
        let gain = cost.cost(a, c) - cost.cost(a, b) - cost.cost(b, c);
        let step = |i: usize| shift.shift.dot(&(effective[i] * shift.shift));
        let before: Vec<f64> = (a..b).rev().map(step).collect();
        let after: Vec<f64> = (b..c).map(step).collect();
        let settings = LocationSettings {
            runs: options.location.runs,
            seed: stream_seed(options.location.seed, k as u64),
        };
        let (lo, hi) = location_interval(&before, &after, options.level, &settings)?;
        let frame_at = |offset: i64| {
            let i = (b as i64 + offset).clamp(a as i64 + 1, c as i64 - 1) as usize;
            series.frames[i]
        };
        change_points.push(ChangePoint {
            index: b,
            frame: series.frames[b],
            time_s: series.times_s[b],
            frame_interval: (frame_at(lo), frame_at(hi)),
            shift,
            gain,
            p_value: penalty.p_value(gain),
        });
    }
    Ok((change_points, segments))
}
