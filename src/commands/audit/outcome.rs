//! What an audit found, as data: the report JSON is exactly this struct (DESIGN section 5), and
//! every renderer (terminal, CSV, SVG, HTML) reads it and computes nothing of its own.
//!
//! Units are in the field names: `_mm`, `_deg`, `_m`, `_s`, `_px`. Angles are degrees here.
//! Per-frame rows are carried for `frames.csv` and the plots but left out of the JSON.

use std::collections::BTreeMap;

use serde::Serialize;

use crate::camera::Camera;
use crate::pnp::RejectionReason;
use crate::session::{MountFile, Policy};

/// Version of the report layout; bump when a field changes meaning or disappears.
pub const AUDIT_SCHEMA: &str = "mountdrift.audit.v1";

/// The audit's answer.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AuditOutcome {
    pub schema: &'static str,
    pub tool_version: &'static str,
    /// `shifted` (a significant change point), else `off_nominal`, else `stable`.
    pub verdict: Verdict,
    /// Against the policy; the exit code follows it.
    pub gate: Gate,
    /// Why the gate failed (empty when it passed), one sentence each.
    pub gate_reasons: Vec<String>,
    pub inputs: InputsSummary,
    pub frames: FrameCounts,
    pub pixel_sigma: PixelSigmaCheck,
    /// Consistency of the observed mount with the nominal one; `None` without a nominal.
    pub nominal_consistency: Option<NominalConsistency>,
    pub change_search: ChangeSearch,
    pub change_points: Vec<ChangePoint>,
    pub segments: Vec<Segment>,
    /// The error a fixed-offset pipeline makes; `None` without a nominal mount.
    pub fixed_offset: Option<FixedOffset>,
    /// True errors of both pipelines; `None` without truth.
    pub truth: Option<TruthComparison>,
    /// Where a real-time detector would have alarmed; `None` if it never did.
    pub online_alarm: Option<OnlineAlarm>,
    pub warnings: Vec<Warning>,
    /// One row per frame, for `frames.csv` and the plots (not part of the JSON).
    #[serde(skip)]
    pub rows: Vec<FrameRow>,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Verdict {
    Shifted,
    OffNominal,
    Stable,
}

impl Verdict {
    pub fn name(self) -> &'static str {
        match self {
            Verdict::Shifted => "shifted",
            Verdict::OffNominal => "off_nominal",
            Verdict::Stable => "stable",
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Gate {
    Pass,
    Fail,
}

impl Gate {
    pub fn name(self) -> &'static str {
        match self {
            Gate::Pass => "pass",
            Gate::Fail => "fail",
        }
    }
}

/// What was audited.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct InputsSummary {
    /// The manifest path, or `built-in demo`.
    pub session: String,
    pub camera: Camera,
    pub probe: ModelSummary,
    pub drogue: ModelSummary,
    pub nominal_mount: Option<MountFile>,
    pub policy: Policy,
    pub has_truth: bool,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ModelSummary {
    pub points: usize,
    pub reference: String,
}

/// Frames read, solved and rejected.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct FrameCounts {
    pub total: u64,
    /// Frames whose probe pose was solved (they carry a mount deviation).
    pub solved: u64,
    /// Frames whose probe pose could not be solved.
    pub rejected: u64,
    /// Frames with both poses solved (they carry a probe-to-drogue vector).
    pub both_solved: u64,
    /// Rejections by object and reason, e.g. `probe: too_few_points`.
    pub rejected_by_reason: BTreeMap<String, u64>,
    /// Solved frames flagged ill-conditioned (probe) or ambiguous (drogue).
    pub probe_ill_conditioned: u64,
    pub drogue_ambiguous: u64,
    /// Keypoints dropped as outliers, over all solved poses.
    pub outlier_keypoints: u64,
    /// Solved frames set aside before the change-point search because their mount lies far
    /// from all its neighbours' (a pose solution in a wrong minimum).
    pub gross_error_frames: u64,
}

/// Stated against estimated pixel noise.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct PixelSigmaCheck {
    /// The camera's `pixel_sigma` (or the detections' `sigma_px`, scaled), px.
    pub assumed: f64,
    /// Estimated from the reprojection residuals, px; `None` with no degrees of freedom.
    pub estimated: Option<f64>,
    pub estimated_ci95: Option<[f64; 2]>,
    /// The stated sigma lies inside the 95% interval of the estimate.
    pub consistent: bool,
    pub dof: u64,
}

/// Chi-square consistency of each frame's (and each window's) mount with the nominal.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NominalConsistency {
    /// Per-frame test level and the d2 threshold for a full-rank (6 dof) frame.
    pub frame_alpha: f64,
    pub frame_threshold_d2: f64,
    pub frames_tested: u64,
    pub frames_over_threshold: u64,
    pub window_frames: u64,
    pub windows: u64,
    pub windows_over_threshold: u64,
    /// The whole session's (noise-corrected) test of "mount equals nominal".
    pub session_p_value: f64,
}

/// How the offline change-point search was set up.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChangeSearch {
    pub method: String,
    pub penalty: f64,
    pub min_segment_frames: u64,
    pub false_alarm_rate: f64,
    /// Null sessions simulated to set the penalty (0 when set analytically).
    pub calibration_runs: u64,
    /// Confidence that the penalty's false-alarm rate is at most `false_alarm_rate`, given the
    /// Monte Carlo error of the calibration (Wilks' tolerance bound; 0 when not calibrated).
    pub calibration_confidence: f64,
    /// Ratio of the effective noise variance to the one the per-frame covariances predict, along
    /// the principal directions of the whitened deviation series, largest first (unobserved
    /// directions 0): above 1 when detections err alike frame to frame or the mount vibrates.
    pub noise_inflation: [f64; 6],
}

/// One change point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ChangePoint {
    /// First frame of the new segment.
    pub frame: u64,
    pub time_s: f64,
    pub frame_ci95: [u64; 2],
    /// The shift, later segment relative to the earlier one.
    pub translation_mm: [f64; 3],
    pub rotation_deg: [f64; 3],
    /// 95% half-widths.
    pub translation_ci95_mm: [f64; 3],
    pub rotation_ci95_deg: [f64; 3],
}

/// Mount deviation with 95% half-widths.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Deviation {
    pub translation_mm: [f64; 3],
    pub rotation_deg: [f64; 3],
    pub translation_ci95_mm: [f64; 3],
    pub rotation_ci95_deg: [f64; 3],
}

/// A stretch between change points.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Segment {
    pub first_frame: u64,
    pub last_frame: u64,
    pub first_time_s: f64,
    pub last_time_s: f64,
    pub solved_frames: u64,
    /// From the nominal mount, or (without one) from the first segment.
    pub mount_deviation: Deviation,
    /// Fixed-offset error computed with the segment's mount estimate; `None` without nominal.
    pub fixed_offset_error_mm: Option<ErrorStats>,
    pub scatter: ScatterCheck,
}

/// Excess scatter of the deviation series against what the noise explains (a loose mount).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ScatterCheck {
    /// Observed scatter over predicted, as a variance ratio.
    pub ratio: f64,
    pub p_value: f64,
    pub excess: bool,
}

#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct ErrorStats {
    pub frames: u64,
    pub median: f64,
    pub p95: f64,
    pub max: f64,
}

/// The fixed-offset pipeline's error in the probe-to-drogue vector.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FixedOffset {
    pub tolerance_mm: f64,
    pub contact_range_m: f64,
    pub frames_over_tolerance: u64,
    pub first_frame_over_tolerance: Option<u64>,
    pub max_error_mm: f64,
    pub by_range: Vec<RangeBin>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RangeBin {
    pub range_min_m: f64,
    pub range_max_m: f64,
    pub error_mm: ErrorStats,
}

/// True errors of both pipelines, from the truth file.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TruthComparison {
    pub dual_error_mm: ErrorStats,
    pub fixed_error_mm: Option<ErrorStats>,
    /// The same errors over the frames within the policy's contact range (measured range),
    /// where the vector-error tolerance applies.
    pub contact_range_m: f64,
    pub dual_within_contact_mm: Option<ErrorStats>,
    pub fixed_within_contact_mm: Option<ErrorStats>,
    /// Both pipelines' true errors by measured range, in the bins of the fixed-offset table.
    pub by_range: Vec<TruthRangeBin>,
}

/// True errors of both pipelines within one range bin.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TruthRangeBin {
    pub range_min_m: f64,
    pub range_max_m: f64,
    pub dual_error_mm: Option<ErrorStats>,
    pub fixed_error_mm: Option<ErrorStats>,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OnlineAlarm {
    pub detector: String,
    pub frame: u64,
    pub time_s: f64,
    /// Frames from the first change point to the alarm; `None` without a change point.
    pub delay_frames: Option<i64>,
}

/// Something a person should know, with what to do about it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Warning {
    pub code: WarningCode,
    pub message: String,
    pub advice: String,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum WarningCode {
    NoNominalMount,
    PixelSigmaMismatch,
    ManyRejectedFrames,
    ProbeIllConditioned,
    DrogueAmbiguous,
    CorrelatedNoise,
    ExcessScatter,
    NoDrogue,
    FewFrames,
}

/// One frame as written to `frames.csv` and drawn in the plots (about 250 bytes, nothing on the
/// heap: a long session keeps one per frame).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FrameRow {
    pub frame: u64,
    pub time_s: f64,
    /// `ok`, `no_drogue:<reason>`, `rejected:<reason>` or `gross_error` (solved, but set aside
    /// before the tests); see [`frame_status`].
    pub status: &'static str,
    /// Deviation from the nominal (or first segment): x, y, z mm, yaw, pitch, roll deg.
    pub deviation: Option<[f64; 6]>,
    pub d2: Option<f64>,
    pub dof: Option<u8>,
    /// Dual-object probe-to-drogue vector in body axes, m, and its length.
    pub vector_m: Option<[f64; 3]>,
    pub range_m: Option<f64>,
    /// Fixed-offset error from the segment's mount estimate, mm.
    pub fixed_error_mm: Option<f64>,
    pub segment: Option<u32>,
    /// Reprojection chi-square per degree of freedom (1 when the stated sigma holds).
    pub probe_fit: Option<f64>,
    pub drogue_fit: Option<f64>,
    /// With truth: errors of the dual-object and fixed-offset vectors, mm.
    pub true_dual_error_mm: Option<f64>,
    pub true_fixed_error_mm: Option<f64>,
}

/// The status text of a frame: `gross_error` when screened out, else from how each object fared.
pub fn frame_status(
    probe: Result<(), RejectionReason>,
    drogue: Result<(), RejectionReason>,
    screened: bool,
) -> &'static str {
    if screened {
        return "gross_error";
    }
    match (probe, drogue) {
        (Ok(()), Ok(())) => "ok",
        (Ok(()), Err(reason)) => no_drogue_status(reason),
        (Err(reason), _) => rejected_status(reason),
    }
}

/// Expands to a `match` from each rejection reason to `prefix` followed by its snake-case name
/// (the name the report JSON gives it; a unit test checks the two agree).
macro_rules! reason_text {
    ($reason:expr, $prefix:literal) => {
        match $reason {
            RejectionReason::TooFewPoints => concat!($prefix, "too_few_points"),
            RejectionReason::InvalidObservation => concat!($prefix, "invalid_observation"),
            RejectionReason::UndistortionFailed => concat!($prefix, "undistortion_failed"),
            RejectionReason::DegenerateGeometry => concat!($prefix, "degenerate_geometry"),
            RejectionReason::NotConverged => concat!($prefix, "not_converged"),
            RejectionReason::BehindCamera => concat!($prefix, "behind_camera"),
            RejectionReason::TooManyOutliers => concat!($prefix, "too_many_outliers"),
        }
    };
}

fn no_drogue_status(reason: RejectionReason) -> &'static str {
    reason_text!(reason, "no_drogue:")
}

fn rejected_status(reason: RejectionReason) -> &'static str {
    reason_text!(reason, "rejected:")
}

/// The snake-case name of a rejection reason, as the report JSON writes it.
pub fn rejection_name(reason: RejectionReason) -> &'static str {
    reason_text!(reason, "")
}

#[cfg(test)]
mod tests {
    use super::*;

    const REASONS: [RejectionReason; 7] = [
        RejectionReason::TooFewPoints,
        RejectionReason::InvalidObservation,
        RejectionReason::UndistortionFailed,
        RejectionReason::DegenerateGeometry,
        RejectionReason::NotConverged,
        RejectionReason::BehindCamera,
        RejectionReason::TooManyOutliers,
    ];

    #[test]
    fn status_texts_use_the_json_names_of_the_reasons() {
        for reason in REASONS {
            let json = serde_json::to_value(reason).unwrap();
            let name = json.as_str().unwrap();
            assert_eq!(rejection_name(reason), name);
            assert_eq!(
                frame_status(Err(reason), Ok(()), false),
                format!("rejected:{name}")
            );
            assert_eq!(
                frame_status(Ok(()), Err(reason), false),
                format!("no_drogue:{name}")
            );
            assert_eq!(frame_status(Ok(()), Err(reason), true), "gross_error");
        }
        assert_eq!(frame_status(Ok(()), Ok(()), false), "ok");
    }

    #[test]
    fn a_row_holds_nothing_on_the_heap_and_stays_small() {
        // Common practice for a per-frame type: a size guard, so growth is a decision.
        assert!(std::mem::size_of::<FrameRow>() <= 248);
    }
}
