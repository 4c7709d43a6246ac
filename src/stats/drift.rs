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

use nalgebra::Matrix6;
use rayon::prelude::*;

use super::changepoint::{pelt, Segmentation};
use super::consistency::{excess_scatter_packed, excess_scatter_with_variances, ExcessScatter};
use super::cost::SegmentCost;
use super::noise::{estimate_effective_noise, EffectiveNoise, NoiseScales};
use super::online::{session_alarm, OnlineCalibrator, SessionNull};
use super::packed::PackedSym6;
use super::penalty::{null_lag1, stream_seed, PenaltyCalibration, PenaltyCalibrator};
use super::segments::{
    location_interval, shift_between, weighted_mean_by, LocationSettings, SegmentMean, Shift,
};
use super::series::{DeviationSeries, EffectiveCost, EffectiveModel, Inflation};
use super::StatsError;

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
    /// The alarm with its delay after the first of `change_points`.
    fn after(self, change_points: &[ChangePoint]) -> Self {
        let delay_frames = self
            .frame
            .zip(change_points.first())
            .map(|(f, c)| f - c.frame);
        Self {
            delay_frames,
            ..self
        }
    }

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
    /// Largest long-run noise inflation (variance) factor over the principal directions, the
    /// one the intervals use: 1 when the per-frame covariances explain the scatter of means.
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

/// The series a drift analysis runs on: borrowed, or handed over (then its information matrices
/// are freed once the effective model has read them, before the change-point search: the
/// smallest footprint for a long series).
#[derive(Debug)]
pub enum DriftSeries<'s> {
    Borrowed(&'s DeviationSeries),
    Owned(DeviationSeries),
}

impl<'s> From<&'s DeviationSeries> for DriftSeries<'s> {
    fn from(series: &'s DeviationSeries) -> Self {
        Self::Borrowed(series)
    }
}

impl From<DeviationSeries> for DriftSeries<'_> {
    fn from(series: DeviationSeries) -> Self {
        Self::Owned(series)
    }
}

impl DriftSeries<'_> {
    fn len(&self) -> usize {
        match self {
            Self::Borrowed(series) => series.len(),
            Self::Owned(series) => series.len(),
        }
    }
}

/// Runs the drift analysis (see the module docs) on a borrowed series or one handed over
/// ([`DriftSeries`]). The results are the same but for the segments' excess scatter, which a
/// handed-over series forms from the model's roots where the matrices were freed (equal to
/// rounding, see [`EffectiveModel::detached`]).
pub fn analyse_drift<'s>(
    series: impl Into<DriftSeries<'s>>,
    options: &DriftOptions,
    calibrators: &Calibrators,
) -> Result<DriftAnalysis, StatsError> {
    let series = series.into();
    let m = options.min_segment_samples.max(1);
    if series.len() < 2 * m {
        return Err(StatsError::TooFewSamples {
            what: "change-point analysis (two minimum-length segments)",
            needed: 2 * m,
            got: series.len(),
        });
    }
    let owned;
    let (series, mut model) = match series {
        DriftSeries::Borrowed(series) => (series, EffectiveModel::new(series)?),
        DriftSeries::Owned(mut series) => {
            let information = series.take_information();
            owned = series;
            (&owned, EffectiveModel::detached(&owned, &information)?)
        }
    };
    let regular = model.regular();
    let scales = NoiseScales::for_min_size(m);
    let mut segmentation = Segmentation {
        breakpoints: vec![series.len()],
        objective: 0.0,
    };
    let mut rounds = 0;
    // The last round, when its search found no change point.
    let mut quiet_round: Option<QuietRound> = None;
    let (noise, penalty, converged, cost, online) = loop {
        rounds += 1;
        let windows = noise_windows(&segmentation.segments(), &regular);
        let z = model.whitened_samples();
        let noise = estimate_effective_noise(&z, model.whitening.dim, &windows, &scales);
        drop(z);
        let penalty = calibrators.penalty.calibrate(
            series.len(),
            model.whitening.dim,
            m,
            options.false_alarm_rate,
            // Before any segment is known an undetected shift would inflate the residual
            // autocorrelation (and with it the penalty), so the first round uses the robust one.
            noise.null_lag1(rounds == 1),
        )?;
        model.inflate(&noise.inflation);
        let cost = model.cost()?;
        // The same cost as a round that found no change point, at a penalty at least as large:
        // no change point at β means β ≥ β* (`penalty` module), so there is none at any larger
        // β either, and the search is not run again (a clean series needs one search, not two).
        let repeated = quiet_round
            .take()
            .filter(|q| q.inflation == noise.inflation && penalty.penalty >= q.penalty);
        // The online replay depends only on this round's model (its inflation) and its null
        // class: it runs on the other core while the (sequential) search runs, is kept if this
        // round is the last, and a repeated quiet round reuses it when the class is the same.
        let (next, online) = match repeated {
            Some(quiet) => (
                segmentation.clone(),
                quiet
                    .online
                    .filter(|o| o.null_lag1.to_bits() == penalty.null_lag1.to_bits()),
            ),
            None => {
                let (next, alarm) = rayon::join(
                    || pelt(&cost, penalty.penalty, m),
                    || online_alarm(series, &model, &penalty, options, &calibrators.online),
                );
                let online = RoundOnline {
                    null_lag1: penalty.null_lag1,
                    alarm,
                };
                (next?, Some(online))
            }
        };
        // The first round only finds the segments the precise lag-1 estimate needs.
        let settled = rounds > 1 && next.breakpoints == segmentation.breakpoints;
        segmentation = next;
        if settled || rounds >= options.max_rounds {
            break (noise, penalty, settled, cost, online);
        }
        if segmentation.change_points().is_empty() {
            quiet_round = Some(QuietRound {
                inflation: noise.inflation,
                penalty: penalty.penalty,
                online,
            });
        }
    };
    let mut warnings = Vec::new();
    if null_lag1(noise.null_lag1(false)).1 {
        warnings.push(DriftWarning::NoiseTooCorrelated {
            lag1: noise.null_lag1(false),
        });
    }
    if !converged {
        warnings.push(DriftWarning::NotConverged { rounds });
    }
    let deficient = regular.iter().filter(|r| !**r).count();
    if deficient > 0 {
        warnings.push(DriftWarning::RankDeficientFrames { count: deficient });
    }
    let long_run = model.inflation_for(&noise.long_run_inflation);
    // The search cost's prefix rows are the largest per-frame data: the gains are all the
    // estimates need of them, so they go before the segments are described.
    let gains = change_gains(&cost, &segmentation);
    drop(cost);
    let fit = FinalFit {
        model: &model,
        long_run: &long_run,
        gains: &gains,
        segmentation: &segmentation,
        penalty: &penalty,
    };
    let estimates = describe(series, &fit, options)?;
    let online = match online {
        Some(online) => online.alarm?,
        None => online_alarm(series, &model, &penalty, options, &calibrators.online)?,
    };
    let online = online.map(|alarm| alarm.after(&estimates.0));
    Ok(DriftAnalysis {
        min_segment_samples: m,
        noise_factor: noise.long_run_factors.max(),
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

/// A round whose search found no change point: what a following round with the same inflation
/// and a penalty at least as large can reuse.
struct QuietRound {
    inflation: Matrix6<f64>,
    penalty: f64,
    online: Option<RoundOnline>,
}

/// A round's online replay and the null class it was calibrated for.
struct RoundOnline {
    null_lag1: f64,
    alarm: Result<Option<OnlineAlarm>, StatsError>,
}

/// Replays the online MEWMA over the effective-whitened series `Ω̃_t^{1/2} z_t` (the delay to the
/// first change point is filled in by [`OnlineAlarm::after`]).
fn online_alarm(
    series: &DeviationSeries,
    model: &EffectiveModel,
    penalty: &PenaltyCalibration,
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
    Ok(Some(OnlineAlarm {
        lambda: chart.lambda,
        threshold: chart.h,
        warmup_samples: settings.warmup,
        index,
        frame: index.map(|i| series.frames()[i]),
        delay_frames: None,
    }))
}

/// The likelihood-ratio gain of each change point of `segmentation` under `cost`: what merging
/// the two segments around it would cost.
fn change_gains(cost: &EffectiveCost, segmentation: &Segmentation) -> Vec<f64> {
    let spans = segmentation.segments();
    spans
        .windows(2)
        .map(|pair| {
            let ((a, b), (_, c)) = (pair[0], pair[1]);
            cost.cost(a, c) - cost.cost(a, b) - cost.cost(b, c)
        })
        .collect()
}

/// The final round of the analysis: the model under the search inflation, the long-run
/// inflation of the intervals, the gains of the change points under the search cost, the
/// segmentation and its penalty.
struct FinalFit<'a> {
    model: &'a EffectiveModel<'a>,
    long_run: &'a Inflation,
    gains: &'a [f64],
    segmentation: &'a Segmentation,
    penalty: &'a PenaltyCalibration,
}

/// The excess scatter of samples `start..end`, from the series' information while the model has
/// it, else from the information the model forms again (formed in parallel, one segment at a
/// time).
fn segment_scatter(
    series: &DeviationSeries,
    model: &EffectiveModel,
    start: usize,
    end: usize,
) -> Result<ExcessScatter, StatsError> {
    let (x, variances) = (
        &series.deviations()[start..end],
        &series.variances()[start..end],
    );
    match model.information() {
        Some(information) => excess_scatter_with_variances(x, &information[start..end], variances),
        None => {
            let information: Vec<PackedSym6> = (start..end)
                .into_par_iter()
                .map(|t| model.nominal_original(t))
                .collect();
            let summaries = &series.summaries()[start..end];
            excess_scatter_packed(x, &information, summaries, variances)
        }
    }
}

/// Segment estimates and change points of a final segmentation: gains and p-values under the
/// search model (the one the penalty is calibrated for), intervals under the long-run model.
fn describe(
    series: &DeviationSeries,
    fit: &FinalFit,
    options: &DriftOptions,
) -> Result<(Vec<ChangePoint>, Vec<SegmentEstimate>), StatsError> {
    let effective = |i: usize| fit.model.effective_original(i, fit.long_run);
    let x = &series.deviations();
    let spans = fit.segmentation.segments();
    let mut segments = Vec::with_capacity(spans.len());
    for &(start, end) in &spans {
        segments.push(SegmentEstimate {
            first_frame: series.frames()[start],
            last_frame: series.frames()[end - 1],
            mean: weighted_mean_by(x, start, end, options.level, effective)?,
            scatter: segment_scatter(series, fit.model, start, end)?,
        });
    }
    let penalty = fit.penalty;
    let mut change_points = Vec::with_capacity(spans.len().saturating_sub(1));
    for (k, pair) in spans.windows(2).enumerate() {
        let ((a, b), (_, c)) = (pair[0], pair[1]);
        let shift = shift_between(&segments[k].mean, &segments[k + 1].mean, options.level)?;
        let gain = fit.gains[k];
        let step = |i: usize| shift.shift.dot(&(effective(i) * shift.shift));
        let before: Vec<f64> = (a..b).into_par_iter().rev().map(step).collect();
        let after: Vec<f64> = (b..c).into_par_iter().map(step).collect();
        let settings = LocationSettings {
            runs: options.location.runs,
            seed: stream_seed(options.location.seed, k as u64),
        };
        let (lo, hi) = location_interval(&before, &after, options.level, &settings)?;
        let frame_at = |offset: i64| {
            let i = (b as i64 + offset).clamp(a as i64 + 1, c as i64 - 1) as usize;
            series.frames()[i]
        };
        change_points.push(ChangePoint {
            index: b,
            frame: series.frames()[b],
            time_s: series.times_s()[b],
            frame_interval: (frame_at(lo), frame_at(hi)),
            shift,
            gain,
            p_value: penalty.p_value(gain),
        });
    }
    Ok((change_points, segments))
}
