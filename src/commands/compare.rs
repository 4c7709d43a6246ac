//! The maintenance gate: did the mount change between two sessions (or against a surveyed
//! reference), and is the change within tolerance? Options in, a serialisable outcome out;
//! never prints and writes no files.
//!
//! Steps: load each side (survey a session's stable part, or read a survey file), form the
//! change AFTER relative to BEFORE with its covariance, test "changed at all" (Wald chi-square)
//! and "equivalent within tolerance" (two one-sided tests per axis), compare the cameras, and
//! decide `unchanged`, `changed` or `inconclusive`.

use std::path::PathBuf;

use nalgebra::{Matrix6, Vector6};
use serde::Serialize;

use crate::commands::audit::Gate;
use crate::commands::survey::{
    propagation, GateWarning, GateWarningCode, SurveyError, SurveyOutcome, AXES,
};
use crate::session::{InputError, Policy};
use crate::stats::distributions::normal_quantile;
use crate::stats::multivariate::{observed_projector, tost, wald_on_observed};
use crate::stats::StatsError;
use crate::tol;

pub mod camera;
pub mod side;

pub use crate::stats::multivariate::WaldTest;
pub use camera::{CameraComparison, CameraDifference};
pub use side::{Side, SideKind, SideSummary};

/// Version of the comparison report layout.
pub const COMPARE_SCHEMA: &str = "mountdrift.compare.v1";

/// Level α of both tests; the equivalence intervals have level `1 − 2α` = 90%.
pub const ALPHA: f64 = 0.05;

/// Validated options of a comparison.
#[derive(Debug, Clone, PartialEq)]
pub struct CompareOptions {
    /// A session manifest or a survey mount file.
    pub before: PathBuf,
    /// A session manifest or a survey mount file.
    pub after: PathBuf,
    pub policy: Policy,
}

/// Why a comparison could not be made.
#[derive(Debug, thiserror::Error)]
pub enum CompareError {
    #[error(transparent)]
    Input(#[from] InputError),
    /// Boxed: a survey error carries a whole audit error.
    #[error(transparent)]
    Survey(Box<SurveyError>),
    #[error("the statistics could not be computed: {0}")]
    Statistics(#[from] StatsError),
}

impl From<SurveyError> for CompareError {
    fn from(e: SurveyError) -> Self {
        CompareError::Survey(Box::new(e))
    }
}

/// The answer of the gate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ChangeOutcome {
    /// Every axis is shown to be within tolerance (its 90% interval lies inside it).
    Unchanged,
    /// An axis's estimate is beyond its tolerance.
    Changed,
    /// No estimate is beyond tolerance, but an interval straddles it (or an axis is not
    /// observed): record longer sessions.
    Inconclusive,
}

impl ChangeOutcome {
    pub fn name(self) -> &'static str {
        match self {
            ChangeOutcome::Unchanged => "unchanged",
            ChangeOutcome::Changed => "changed",
            ChangeOutcome::Inconclusive => "inconclusive",
        }
    }
}

/// The "changed at all" test.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChangeTest {
    pub method: String,
    pub statistic: f64,
    pub dof: usize,
    pub p_value: Option<f64>,
    pub alpha: f64,
    /// `p_value < alpha`: a change is detected, whatever its size.
    pub significant: bool,
}

/// How one axis fared in the equivalence test.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum AxisResult {
    /// The 90% interval lies inside ±tolerance.
    Equivalent,
    /// The estimate itself is beyond the tolerance.
    Beyond,
    /// The estimate is within tolerance but the interval crosses it.
    Straddles,
    /// The keypoints of a side do not observe this axis.
    Unobserved,
}

/// One axis of the equivalence test.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AxisEquivalence {
    pub axis: &'static str,
    pub unit: &'static str,
    pub estimate: f64,
    pub standard_error: Option<f64>,
    /// The 90% (`1 − 2α`) interval.
    pub interval: Option<[f64; 2]>,
    pub tolerance: f64,
    /// The larger of the two one-sided p-values (equivalent when below α).
    pub p_value: Option<f64>,
    /// The whole interval lies outside ±tolerance: beyond tolerance with confidence.
    pub interval_outside: bool,
    pub result: AxisResult,
}

/// The equivalence test, all axes.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct EquivalenceTest {
    pub method: String,
    pub alpha: f64,
    pub level: f64,
    pub axes: Vec<AxisEquivalence>,
}

/// What the comparison found; `report.json` is this struct.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CompareOutcome {
    pub schema: &'static str,
    pub tool_version: &'static str,
    pub outcome: ChangeOutcome,
    /// `pass` only when `unchanged`; the exit code follows it.
    pub gate: Gate,
    /// One sentence per axis that is not shown equivalent, with what to do.
    pub reasons: Vec<String>,
    /// The change of AFTER relative to BEFORE: `p_after − p_before` in body axes (mm) and the
    /// Z-Y-X yaw, pitch, roll of `R_before^T R_after` (deg).
    pub translation_mm: [f64; 3],
    pub rotation_deg: [f64; 3],
    /// 95% half-widths; `null` on an axis a side does not observe.
    pub translation_ci95_mm: [Option<f64>; 3],
    pub rotation_ci95_deg: [Option<f64>; 3],
    /// Covariance of the change (same order and units), row by row.
    pub covariance: [[f64; 6]; 6],
    pub change_test: ChangeTest,
    pub equivalence: EquivalenceTest,
    pub before: SideSummary,
    pub after: SideSummary,
    pub cameras: CameraComparison,
    pub policy: Policy,
    pub warnings: Vec<GateWarning>,
}

/// Compares the two files of the options; `progress` hears frames solved (both sessions).
pub fn run(
    options: &CompareOptions,
    progress: &dyn Fn(u64),
) -> Result<CompareOutcome, CompareError> {
    let before = side::load(&options.before, &options.policy, progress)?;
    let after = side::load(&options.after, &options.policy, progress)?;
    compare_sides(&before, &after, &options.policy)
}

/// Compares two surveys (e.g. of sessions simulated in memory).
pub fn compare_surveys(
    before: &SurveyOutcome,
    after: &SurveyOutcome,
    policy: &Policy,
) -> Result<CompareOutcome, CompareError> {
    compare_sides(
        &Side::from_survey(before),
        &Side::from_survey(after),
        policy,
    )
}

/// The comparison of two loaded sides.
pub fn compare_sides(
    before: &Side,
    after: &Side,
    policy: &Policy,
) -> Result<CompareOutcome, CompareError> {
    let (change, a_before, a_after) = propagation::change_between(&before.mount, &after.mount);
    let mapped = [
        propagation::transform(&a_before, &before.covariance),
        propagation::transform(&a_after, &after.covariance),
    ];
    let covariance = mapped[0] + mapped[1];
    let projector = observed_projector(&mapped);
    let observed = observed_axes(&projector);
    let estimate = change.to_report_vector();
    let wald = wald_on_observed(&estimate, &covariance, &projector)?;
    let axes = axis_tests(&estimate, &covariance, &observed, policy)?;
    let outcome = decide(&axes);
    let half = half_widths(&covariance, &observed)?;
    let cameras = camera::compare_cameras(before.camera.as_ref(), after.camera.as_ref());
    let mut warnings: Vec<GateWarning> = camera::camera_warning(&cameras).into_iter().collect();
    warnings.extend(shift_warnings(before, after));
    Ok(CompareOutcome {
        schema: COMPARE_SCHEMA,
        tool_version: env!("CARGO_PKG_VERSION"),
        outcome,
        gate: if outcome == ChangeOutcome::Unchanged {
            Gate::Pass
        } else {
            Gate::Fail
        },
        reasons: reasons(&axes),
        translation_mm: [estimate[0], estimate[1], estimate[2]],
        rotation_deg: [estimate[3], estimate[4], estimate[5]],
        translation_ci95_mm: [half[0], half[1], half[2]],
        rotation_ci95_deg: [half[3], half[4], half[5]],
        covariance: std::array::from_fn(|r| std::array::from_fn(|c| covariance[(r, c)])),
        change_test: change_test(wald),
        equivalence: EquivalenceTest {
            method: "Two one-sided tests per axis (Schuirmann 1987), normal reference".into(),
            alpha: ALPHA,
            level: 1.0 - 2.0 * ALPHA,
            axes,
        },
        before: before.summary.clone(),
        after: after.summary.clone(),
        cameras,
        policy: *policy,
        warnings,
    })
}

/// Whether each axis lies in the observed subspace (up to [`tol::AXIS_OBSERVABLE_RESIDUAL`]).
pub fn observed_axes(projector: &Matrix6<f64>) -> [bool; 6] {
    std::array::from_fn(|k| 1.0 - projector[(k, k)] <= tol::AXIS_OBSERVABLE_RESIDUAL)
}

fn change_test(wald: WaldTest) -> ChangeTest {
    ChangeTest {
        method: "Wald chi-square on the observed directions, effective covariances".into(),
        statistic: wald.statistic,
        dof: wald.dof,
        p_value: wald.p_value,
        alpha: ALPHA,
        significant: wald.p_value.is_some_and(|p| p < ALPHA),
    }
}

fn half_widths(
    covariance: &Matrix6<f64>,
    observed: &[bool; 6],
) -> Result<[Option<f64>; 6], StatsError> {
    let z = normal_quantile(1.0 - ALPHA / 2.0)?;
    Ok(std::array::from_fn(|k| {
        observed[k].then(|| z * covariance[(k, k)].max(0.0).sqrt())
    }))
}

fn axis_tests(
    estimate: &Vector6<f64>,
    covariance: &Matrix6<f64>,
    observed: &[bool; 6],
    policy: &Policy,
) -> Result<Vec<AxisEquivalence>, StatsError> {
    AXES.iter()
        .enumerate()
        .map(|(k, &(axis, unit))| {
            let tolerance = if k < 3 {
                policy.max_translation_mm
            } else {
                policy.max_rotation_deg
            };
            let se = covariance[(k, k)].max(0.0).sqrt();
            let mut test = AxisEquivalence {
                axis,
                unit,
                estimate: estimate[k],
                standard_error: None,
                interval: None,
                tolerance,
                p_value: None,
                interval_outside: false,
                result: AxisResult::Unobserved,
            };
            if !(observed[k] && se > 0.0) {
                return Ok(test);
            }
            // Normal reference: `se` comes from an effective covariance estimated from hundreds
            // of frames (its own error is a few percent).
            let pair = tost(estimate[k], se, tolerance, ALPHA, None)?;
            let (lo, hi) = pair.interval;
            test.standard_error = Some(se);
            test.interval = Some([lo, hi]);
            test.p_value = Some(pair.p_value);
            test.interval_outside = lo > tolerance || hi < -tolerance;
            test.result = if estimate[k].abs() > tolerance {
                AxisResult::Beyond
            } else if pair.equivalent {
                AxisResult::Equivalent
            } else {
                AxisResult::Straddles
            };
            Ok(test)
        })
        .collect()
}

/// `changed` if any estimate is beyond tolerance; else `unchanged` if every axis is shown
/// equivalent; else `inconclusive`.
pub fn decide(axes: &[AxisEquivalence]) -> ChangeOutcome {
    if axes.iter().any(|a| a.result == AxisResult::Beyond) {
        ChangeOutcome::Changed
    } else if axes.iter().all(|a| a.result == AxisResult::Equivalent) {
        ChangeOutcome::Unchanged
    } else {
        ChangeOutcome::Inconclusive
    }
}

fn reasons(axes: &[AxisEquivalence]) -> Vec<String> {
    axes.iter().filter_map(reason).collect()
}

fn reason(a: &AxisEquivalence) -> Option<String> {
    if a.result == AxisResult::Unobserved {
        return Some(format!(
            "{} is not observed by the probe keypoints: equivalence cannot be shown",
            a.axis
        ));
    }
    let [lo, hi] = a.interval?;
    let interval = format!("90% interval {lo:+.3} to {hi:+.3} {}", a.unit);
    match a.result {
        AxisResult::Equivalent | AxisResult::Unobserved => None,
        AxisResult::Beyond => Some(format!(
            "{} changed by {:+.3} {} ({interval}), beyond the ±{} {} tolerance{}",
            a.axis,
            a.estimate,
            a.unit,
            a.tolerance,
            a.unit,
            if a.interval_outside {
                ""
            } else {
                " (the interval still reaches inside it)"
            }
        )),
        AxisResult::Straddles => Some(format!(
            "{} changed by {:+.3} {}, but its {interval} crosses the ±{} {} tolerance: {}",
            a.axis,
            a.estimate,
            a.unit,
            a.tolerance,
            a.unit,
            longer_sessions(a)
        )),
    }
}

/// How much longer both sessions would have to be for the interval to fit, if the estimate held
/// (the standard error shrinks as `1/√n`).
fn longer_sessions(a: &AxisEquivalence) -> String {
    let (Some(se), Some([lo, hi])) = (a.standard_error, a.interval) else {
        return "record longer sessions".into();
    };
    let half = 0.5 * (hi - lo);
    let room = a.tolerance - a.estimate.abs();
    if room <= 0.0 || se <= 0.0 {
        return "record longer sessions".into();
    }
    let factor = (half / room).powi(2);
    format!("sessions about {factor:.1} times as long would decide it if the estimate held")
}

fn shift_warnings(before: &Side, after: &Side) -> Vec<GateWarning> {
    [("BEFORE", before), ("AFTER", after)]
        .into_iter()
        .filter(|(_, s)| s.summary.change_points > 0)
        .map(|(name, s)| {
            let used = s.summary.used.as_ref();
            GateWarning::new(
                GateWarningCode::MountMoved,
                format!(
                    "the {name} session ({}) contains {} change point(s): only its last stable \
                     stretch, frames {} to {}, was compared",
                    s.summary.path,
                    s.summary.change_points,
                    used.map_or(0, |u| u.first_frame),
                    used.map_or(0, |u| u.last_frame)
                ),
                "the mount moved while that session was recorded: audit it before trusting the \
                 gate",
            )
        })
        .collect()
}
