//! The sensitivity job: how small a mount shift the audit's change-point test can see in a given
//! installation, how often it raises a false alarm, and how late it detects. Options in, a
//! serialisable [`SensitivityOutcome`] out; never prints and writes no files.
//!
//! Steps: load the scenario and remove its mount events (the clean scenario); simulate and audit
//! `trials` clean sessions (false alarms) and, for every axis and ladder size, `trials` sessions
//! with a step injected at mid-session (detections and delays); summarise each cell with a
//! binomial confidence interval and read the minimum detectable shift off each axis's ladder.
//! Sessions run in parallel and in memory; each draws its noise from a seed derived from the base
//! seed, the trial index, the axis and the size, so the outcome does not depend on scheduling.

use std::sync::atomic::{AtomicU64, Ordering};

use rayon::prelude::*;

use crate::commands::audit::AuditError;
use crate::commands::simulate::{self, ScenarioSource};
use crate::session::Policy;
use crate::sim::{Scenario, SimError, Simulation};
use crate::stats::drift::Calibrators;
use crate::stats::penalty::{CalibrationSettings, PenaltyCalibrator};

pub mod ladder;
mod outcome;
pub mod proportion;
pub mod trial;

pub use ladder::{
    median, min_detectable, monotone_fit, MinDetectable, DEFAULT_ROTATION_SIZES_DEG,
    DEFAULT_TRANSLATION_SIZES_MM,
};
pub use outcome::*;
pub use proportion::{clopper_pearson, wilson, IntervalMethod};
pub use trial::{trial_scenario, trial_seed, Injection, StepWindow};

use trial::TrialResult;

/// Confidence level of every interval in the study.
pub const LEVEL: f64 = 0.95;

/// Detection probability at which the minimum detectable shift is read.
pub const POWER: f64 = 0.95;

/// Smallest detection tolerance, frames; the tolerance is this or one second, whichever is more.
pub const MIN_TOLERANCE_FRAMES: u64 = 10;

/// Validated options of a study.
#[derive(Debug, Clone, PartialEq)]
pub struct SensitivityOptions {
    pub scenario: ScenarioSource,
    /// Sessions per cell (clean, and each axis and size).
    pub trials: u64,
    /// Replaces the scenario's duration (s).
    pub duration_s: Option<f64>,
    /// Replaces the scenario's seed as the base of every session's seed.
    pub seed: Option<u64>,
    /// Axes to inject steps along, in this order.
    pub axes: Vec<Axis>,
    /// Step sizes for x, y, z (mm) and for yaw, pitch, roll (deg), increasing.
    pub translation_sizes_mm: Vec<f64>,
    pub rotation_sizes_deg: Vec<f64>,
    pub interval: IntervalMethod,
    /// The audit's policy (its false-alarm rate sets the change-point penalty).
    pub policy: Policy,
    /// The audit's penalty calibration; the default is what `audit` itself uses.
    pub calibration: CalibrationSettings,
}

impl SensitivityOptions {
    /// Default study of a scenario: 100 trials per cell, all six axes, the default ladders.
    pub fn new(scenario: ScenarioSource) -> Self {
        Self {
            scenario,
            trials: 100,
            duration_s: None,
            seed: None,
            axes: Axis::ALL.to_vec(),
            translation_sizes_mm: DEFAULT_TRANSLATION_SIZES_MM.to_vec(),
            rotation_sizes_deg: DEFAULT_ROTATION_SIZES_DEG.to_vec(),
            interval: IntervalMethod::default(),
            policy: Policy::default(),
            calibration: CalibrationSettings::default(),
        }
    }

    /// The ladder of one axis.
    pub fn sizes(&self, axis: Axis) -> &[f64] {
        if axis.is_translation() {
            &self.translation_sizes_mm
        } else {
            &self.rotation_sizes_deg
        }
    }

    /// Sessions the study simulates and audits: `trials × (1 + Σ ladder lengths)`.
    pub fn session_count(&self) -> u64 {
        let cells: usize = 1 + self
            .axes
            .iter()
            .map(|&a| self.sizes(a).len())
            .sum::<usize>();
        self.trials * cells as u64
    }

    /// Checks everything that does not need the scenario.
    pub fn validate(&self) -> Result<(), SensitivityError> {
        let invalid = |field: &str, reason: &str| {
            Err(SensitivityError::Invalid {
                field: field.to_string(),
                reason: reason.to_string(),
            })
        };
        if self.trials == 0 {
            return invalid("trials", "must be at least 1");
        }
        if self.duration_s.is_some_and(|d| !(d.is_finite() && d > 0.0)) {
            return invalid("duration", "must be a number of seconds above 0");
        }
        if self.axes.is_empty() {
            return invalid("axes", "name at least one of x, y, z, yaw, pitch, roll");
        }
        let mut seen = self.axes.clone();
        seen.sort();
        seen.dedup();
        if seen.len() != self.axes.len() {
            return invalid("axes", "each axis may be named once");
        }
        for axis in &self.axes {
            check_ladder(axis.unit(), self.sizes(*axis))?;
        }
        Ok(())
    }
}

fn check_ladder(unit: &str, sizes: &[f64]) -> Result<(), SensitivityError> {
    let fail = |reason: String| {
        Err(SensitivityError::Invalid {
            field: format!("sizes ({unit})"),
            reason,
        })
    };
    if sizes.is_empty() {
        return fail("give at least one size".into());
    }
    if let Some(bad) = sizes.iter().find(|s| !(s.is_finite() && **s > 0.0)) {
        return fail(format!("{bad} is not a size above 0"));
    }
    if sizes.windows(2).any(|w| w[1] <= w[0]) {
        return fail("sizes must increase".into());
    }
    Ok(())
}

/// Why a study could not be carried out.
#[derive(Debug, thiserror::Error)]
pub enum SensitivityError {
    #[error("sensitivity option {field}: {reason}")]
    Invalid { field: String, reason: String },
    #[error(transparent)]
    Scenario(#[from] SimError),
    #[error("a simulated session could not be audited: {0}")]
    Audit(#[from] AuditError),
}

/// Everything the cells share.
struct Study {
    clean: Scenario,
    base_seed: u64,
    window: StepWindow,
    removed_events: u64,
    frames: u64,
}

/// Runs the study; `progress` hears the number of sessions audited so far (of
/// [`SensitivityOptions::session_count`]).
pub fn run(
    options: &SensitivityOptions,
    progress: &(dyn Fn(u64) + Sync),
) -> Result<SensitivityOutcome, SensitivityError> {
    options.validate()?;
    let study = prepare(options)?;
    let cells = cells(options);
    let calibrators = Calibrators {
        penalty: PenaltyCalibrator::new(options.calibration),
        ..Calibrators::default()
    };
    let jobs: Vec<(usize, u64)> = (0..cells.len())
        .flat_map(|c| (0..options.trials).map(move |t| (c, t)))
        .collect();
    let done = AtomicU64::new(0);
    let run_job = |&(cell, trial): &(usize, u64)| {
        let injection = cells[cell];
        let seed = trial_seed(study.base_seed, trial, injection);
        let scenario = trial::trial_scenario(&study.clean, &study.window, seed, injection);
        let result = trial::run_trial(&scenario, &study.window, &options.policy, &calibrators);
        progress(done.fetch_add(1, Ordering::Relaxed) + 1);
        result
    };
    // The first session runs alone: it fills the calibration cache (itself parallel) that the
    // others will mostly share, instead of every thread simulating the same null at once.
    let (first, rest) = jobs.split_first().ok_or(SensitivityError::Invalid {
        field: "trials".into(),
        reason: "must be at least 1".into(),
    })?;
    let mut results = vec![run_job(first)?];
    results.extend(
        rest.par_iter()
            .map(run_job)
            .collect::<Result<Vec<TrialResult>, AuditError>>()?,
    );
    let per_cell: Vec<&[TrialResult]> = results.chunks(options.trials as usize).collect();
    Ok(summarise(options, &study, &cells, &per_cell))
}

/// Loads the scenario, applies the overrides, removes its mount events and places the step.
fn prepare(options: &SensitivityOptions) -> Result<Study, SensitivityError> {
    let mut clean = simulate::load(&options.scenario)?;
    if let Some(duration_s) = options.duration_s {
        clean.duration_s = duration_s;
    }
    let removed_events = clean.mount_events.len() as u64;
    clean.mount_events.clear();
    let base_seed = options.seed.unwrap_or(clean.seed);
    clean.seed = base_seed;
    // Validates the clean scenario once, so every trial's simulation is known to build.
    let frames = Simulation::new(&clean)?.frame_count();
    let step_frame = frames / 2;
    let window = StepWindow {
        step_frame,
        // The simulator times frame k at exactly k / rate, so the step takes effect at this frame.
        step_time_s: step_frame as f64 / clean.frame_rate_hz,
        tolerance_frames: MIN_TOLERANCE_FRAMES.max(clean.frame_rate_hz.ceil() as u64),
    };
    Ok(Study {
        clean,
        base_seed,
        window,
        removed_events,
        frames,
    })
}

/// The cells in order: clean first, then each axis with its sizes.
fn cells(options: &SensitivityOptions) -> Vec<Injection> {
    let steps = options.axes.iter().flat_map(|&axis| {
        options
            .sizes(axis)
            .iter()
            .map(move |&size| Injection::Step { axis, size })
    });
    std::iter::once(Injection::Clean).chain(steps).collect()
}

fn summarise(
    options: &SensitivityOptions,
    study: &Study,
    cells: &[Injection],
    per_cell: &[&[TrialResult]],
) -> SensitivityOutcome {
    let online = per_cell
        .iter()
        .flat_map(|c| c.iter())
        .any(|r| r.online_delay_frames.is_some());
    let delay_source = if online {
        DelaySource::OnlineAlarm
    } else {
        DelaySource::OfflineChangePoint
    };
    let false_alarm = false_alarms(options, per_cell[0]);
    let mut axes = Vec::with_capacity(options.axes.len());
    for &axis in &options.axes {
        let points: Vec<ShiftPoint> = cells
            .iter()
            .zip(per_cell)
            .filter_map(|(cell, results)| match *cell {
                Injection::Step { axis: a, size } if a == axis => {
                    Some(shift_point(options, study, size, results, delay_source))
                }
                _ => None,
            })
            .collect();
        axes.push(axis_sensitivity(axis, points));
    }
    let mut outcome = SensitivityOutcome {
        schema: SENSITIVITY_SCHEMA,
        tool_version: env!("CARGO_PKG_VERSION"),
        scenario: studied_scenario(options, study),
        trials: options.trials,
        sessions: options.session_count(),
        level: LEVEL,
        power: POWER,
        interval_method: options.interval,
        interval_reference: options.interval.reference().to_string(),
        detection: detection_rule(&study.window),
        delay_source,
        false_alarm,
        axes,
        calibration: CalibrationUsed {
            runs: options.calibration.runs as u64,
            seed: options.calibration.seed,
            max_simulated_samples: options.calibration.max_simulated_samples as u64,
        },
        warnings: Vec::new(),
    };
    outcome.warnings = warnings(&outcome);
    outcome
}

fn studied_scenario(options: &SensitivityOptions, study: &Study) -> StudiedScenario {
    StudiedScenario {
        source: options.scenario.clone(),
        name: study.clean.name.clone(),
        base_seed: study.base_seed,
        frame_rate_hz: study.clean.frame_rate_hz,
        duration_s: study.clean.duration_s,
        frames: study.frames,
        removed_mount_events: study.removed_events,
    }
}

fn detection_rule(window: &StepWindow) -> DetectionRule {
    DetectionRule {
        step_frame: window.step_frame,
        step_time_s: window.step_time_s,
        tolerance_frames: window.tolerance_frames,
        rule: format!(
            "a change point within {} frames of the step frame, or whose 95% frame interval contains it",
            window.tolerance_frames
        ),
    }
}

fn false_alarms(options: &SensitivityOptions, results: &[TrialResult]) -> FalseAlarm {
    let trials = results.len() as u64;
    let alarms = results.iter().filter(|r| r.change_points > 0).count() as u64;
    FalseAlarm {
        target_rate: options.policy.false_alarm_rate,
        trials,
        sessions_with_change_point: alarms,
        rate: alarms as f64 / trials.max(1) as f64,
        rate_ci95: options.interval.interval(alarms, trials, LEVEL),
        unsearched: results.iter().filter(|r| !r.searched).count() as u64,
    }
}

fn shift_point(
    options: &SensitivityOptions,
    study: &Study,
    size: f64,
    results: &[TrialResult],
    delay_source: DelaySource,
) -> ShiftPoint {
    let trials = results.len() as u64;
    let detected = results
        .iter()
        .filter(|r| r.offline_delay_frames.is_some())
        .count() as u64;
    let delays: Vec<i64> = results
        .iter()
        .filter_map(|r| match delay_source {
            DelaySource::OnlineAlarm => r.online_delay_frames,
            DelaySource::OfflineChangePoint => r.offline_delay_frames,
        })
        .collect();
    let median_delay_frames = median(&delays);
    ShiftPoint {
        size,
        trials,
        detected,
        probability: detected as f64 / trials.max(1) as f64,
        probability_ci95: options.interval.interval(detected, trials, LEVEL),
        // Filled in by `axis_sensitivity` once the whole ladder is known.
        monotone_probability: detected as f64 / trials.max(1) as f64,
        sessions_with_change_point: results.iter().filter(|r| r.change_points > 0).count() as u64,
        median_delay_frames,
        median_delay_s: median_delay_frames.map(|f| f / study.clean.frame_rate_hz),
        unsearched: results.iter().filter(|r| !r.searched).count() as u64,
    }
}

fn axis_sensitivity(axis: Axis, mut points: Vec<ShiftPoint>) -> AxisSensitivity {
    let probability: Vec<f64> = points.iter().map(|p| p.probability).collect();
    let weights: Vec<f64> = points.iter().map(|p| p.trials as f64).collect();
    let fitted = monotone_fit(&probability, &weights);
    for (p, f) in points.iter_mut().zip(&fitted) {
        p.monotone_probability = *f;
    }
    let sizes: Vec<f64> = points.iter().map(|p| p.size).collect();
    let min_detectable =
        ladder::min_detectable(&sizes, &fitted, POWER).unwrap_or(MinDetectable::NotReached {
            largest: f64::INFINITY,
        });
    AxisSensitivity {
        axis,
        unit: axis.unit(),
        points,
        min_detectable,
    }
}

fn warning(code: SensitivityWarningCode, message: String, advice: &str) -> SensitivityWarning {
    SensitivityWarning {
        code,
        message,
        advice: advice.to_string(),
    }
}

fn warnings(outcome: &SensitivityOutcome) -> Vec<SensitivityWarning> {
    let mut out = Vec::new();
    let fa = &outcome.false_alarm;
    if let Some([lo, hi]) = fa.rate_ci95 {
        if lo > fa.target_rate {
            out.push(warning(
                SensitivityWarningCode::FalseAlarmsAboveTarget,
                format!(
                    "clean sessions raise a change point at a rate of {:.3} (95% interval {lo:.3} to {hi:.3}), above the target {}",
                    fa.rate, fa.target_rate
                ),
                "the detections below are inflated by false alarms; check the scenario's noise model (outliers, correlated noise) against the audit's assumptions",
            ));
        } else if hi > 3.0 * fa.target_rate {
            out.push(warning(
                SensitivityWarningCode::TooFewTrialsForTarget,
                format!(
                    "{} clean sessions cannot show a false-alarm rate as low as {} (upper 95% bound {hi:.3})",
                    fa.trials, fa.target_rate
                ),
                "for an upper bound near the target, run about 3/target trials or more (the rule of three, common practice)",
            ));
        }
    }
    let unsearched: u64 = fa.unsearched
        + outcome
            .axes
            .iter()
            .flat_map(|a| a.points.iter().map(|p| p.unsearched))
            .sum::<u64>();
    if unsearched > 0 {
        out.push(warning(
            SensitivityWarningCode::UnsearchedSessions,
            format!("{unsearched} sessions had too few solved frames for a change-point search"),
            "lengthen the sessions (--duration) or check that the scenario's probe is solvable",
        ));
    }
    let short: Vec<&str> = outcome
        .axes
        .iter()
        .filter(|a| a.min_detectable.size().is_none())
        .map(|a| a.axis.name())
        .collect();
    if !short.is_empty() {
        out.push(warning(
            SensitivityWarningCode::PowerNotReached,
            format!(
                "{} not detected with {:.0}% probability at any ladder size: {}",
                if short.len() == 1 {
                    "one axis is"
                } else {
                    "some axes are"
                },
                outcome.power * 100.0,
                short.join(", ")
            ),
            "extend the ladder with larger sizes (--sizes) to find the minimum detectable shift",
        ));
    }
    out
}
