//! The survey job: the as-installed mount (camera pose in the body frame) estimated from one
//! session, with its uncertainty, in the mount file format the audit reads as a nominal.
//! Options in, a serialisable outcome out; never prints and writes no files.
//!
//! Steps: audit the session (per-frame PnP with outlier rejection, drift analysis with the
//! effective-noise covariance), take the last segment between change points (the mount as it is
//! installed now), re-express its covariance about the surveyed mount, and check the precision
//! reached against the policy tolerances.

use std::path::PathBuf;

use nalgebra::{Matrix6, Vector3};
use serde::Serialize;

use crate::commands::audit::{
    self, AuditError, AuditOutcome, ChangePoint, Deviation, FrameCounts, FrameInput,
    PixelSigmaCheck, SegmentMount, SessionMounts, Setup, Warning,
};
use crate::offset::frames::FrameRecord;
use crate::session::{CameraFile, MountCi95File, MountFile, Policy};
use crate::stats::distributions::normal_quantile;
use crate::stats::packed::PackedSym6;

mod precision;
pub mod propagation;
pub mod screen;

pub use precision::{AxisPrecision, Precision, PRECISION_RATIO};

/// Version of the survey report layout.
pub const SURVEY_SCHEMA: &str = "mountdrift.survey.v1";

/// Level of the survey's intervals.
pub const LEVEL: f64 = 0.95;

/// Names of the six mount axes in report order, with their units.
pub const AXES: [(&str, &str); 6] = [
    ("x", "mm"),
    ("y", "mm"),
    ("z", "mm"),
    ("yaw", "deg"),
    ("pitch", "deg"),
    ("roll", "deg"),
];

/// Validated options of a survey.
#[derive(Debug, Clone, PartialEq)]
pub struct SurveyOptions {
    /// The session manifest.
    pub session: PathBuf,
    /// Tolerances the precision is judged against; the false-alarm rate of the change search.
    pub policy: Policy,
}

/// Why a survey could not be made.
#[derive(Debug, thiserror::Error)]
pub enum SurveyError {
    #[error(transparent)]
    Audit(#[from] AuditError),
    #[error(
        "{session}: {solved} frames have a probe solution; a survey needs at least {needed}: \
         record a longer session or check the probe detections"
    )]
    TooFewFrames {
        session: String,
        solved: u64,
        needed: u64,
    },
}

/// Which frames the survey used, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct UsedFrames {
    pub first_frame: u64,
    pub last_frame: u64,
    pub first_time_s: f64,
    pub last_time_s: f64,
    /// Frames with a probe solution inside the stretch.
    pub solved_frames: u64,
    /// Segment used (1-based) of how many the change-point search found.
    pub segment: usize,
    pub segments: usize,
    /// The selection rule in words.
    pub rule: String,
}

/// The surveyed mount relative to the session's nominal.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NominalOffset {
    pub nominal: MountFile,
    /// Surveyed minus nominal, with 95% half-widths (the audit's convention).
    pub deviation: Deviation,
}

/// Something the crew should know about a survey or a comparison, with what to do about it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct GateWarning {
    pub code: GateWarningCode,
    pub message: String,
    pub advice: String,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum GateWarningCode {
    /// The session has change points: only its last stable stretch was used.
    MountMoved,
    /// The stretch used scatters more than the keypoint noise explains.
    ExcessScatter,
    /// Many frames were left out as gross pose errors.
    ManyGrossFrames,
    /// The 95% half-widths are wider than the precision rule asks.
    PrecisionShort,
    /// An axis the keypoints do not observe.
    UnobservedAxis,
    /// The two sessions were recorded with different camera intrinsics.
    CameraChanged,
    /// A survey file without a camera record: a camera swap cannot be detected.
    CameraUnknown,
    /// One of the audit's warnings about the session, shown beside the gate's own.
    SessionWarning,
}

impl GateWarning {
    pub fn new(code: GateWarningCode, message: String, advice: &str) -> Self {
        Self {
            code,
            message,
            advice: advice.to_string(),
        }
    }
}

/// What a survey found. `mount` is written as the mount file; the rest is the report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SurveyOutcome {
    pub schema: &'static str,
    pub tool_version: &'static str,
    /// The manifest path (or a name for a simulated session).
    pub session: String,
    /// The as-installed mount with `covariance`, `ci95` and the `camera` it was surveyed with.
    pub mount: MountFile,
    pub used: UsedFrames,
    /// Change points of the session (the mount moved while it was recorded).
    pub change_points: Vec<ChangePoint>,
    pub frames: FrameCounts,
    /// Frames left out as gross pose errors (a probe pose far from its neighbours').
    pub screened_frames: Vec<u64>,
    pub pixel_sigma: PixelSigmaCheck,
    /// Largest ratio of the effective noise variance to the per-frame prediction (1: the
    /// covariances explain the scatter; above 1 the intervals were widened for it).
    pub noise_inflation: f64,
    pub precision: Precision,
    /// `None` when the session has no nominal mount.
    pub nominal: Option<NominalOffset>,
    pub warnings: Vec<GateWarning>,
    /// The audit's own warnings about the session (pixel noise, rejected frames, ...).
    pub session_warnings: Vec<Warning>,
}

/// The survey's screen of gross frames: it looks at the poses only, not their covariances.
fn gross_frames(records: &[FrameRecord], _: &[Option<PackedSym6>]) -> Vec<u64> {
    screen::gross_frames(records)
}

/// Surveys the session of a manifest; `progress` hears the number of frames solved so far.
pub fn run(options: &SurveyOptions, progress: &dyn Fn(u64)) -> Result<SurveyOutcome, SurveyError> {
    let (outcome, mounts) = audit::audit_manifest_with_mounts(
        &options.session,
        &options.policy,
        progress,
        Some(&gross_frames),
    )?;
    survey_from_audit(&outcome, &mounts, &options.policy)
}

/// Surveys a stream of frames (e.g. a session simulated in memory).
pub fn survey_frames(
    setup: &Setup,
    frames: impl Iterator<Item = FrameInput>,
    policy: &Policy,
    progress: &dyn Fn(u64),
) -> Result<SurveyOutcome, SurveyError> {
    let (outcome, mounts) =
        audit::audit_frames_with_mounts(setup, frames, policy, progress, Some(&gross_frames))?;
    survey_from_audit(&outcome, &mounts, policy)
}

/// The survey of an audited session: the last segment's mount and its uncertainty.
pub fn survey_from_audit(
    audit: &AuditOutcome,
    mounts: &SessionMounts,
    policy: &Policy,
) -> Result<SurveyOutcome, SurveyError> {
    let session = audit.inputs.session.clone();
    let Some(segment) = mounts.segments.last() else {
        return Err(SurveyError::TooFewFrames {
            session,
            solved: audit.frames.solved,
            needed: 2 * crate::stats::drift::DriftOptions::default().min_segment_samples as u64,
        });
    };
    let covariance = about_mount(segment);
    let half_widths = half_widths(&covariance, &segment.observable);
    let mut mount = MountFile::from_mount(&segment.mount);
    mount.covariance = Some(std::array::from_fn(|r| {
        std::array::from_fn(|c| covariance[(r, c)])
    }));
    mount.ci95 = Some(MountCi95File {
        position_mm: [half_widths[0], half_widths[1], half_widths[2]],
        yaw_deg: half_widths[3],
        pitch_deg: half_widths[4],
        roll_deg: half_widths[5],
    });
    mount.camera = Some(CameraFile::from_camera(&audit.inputs.camera));
    let used = used_frames(mounts);
    let precision = precision::check(&half_widths, policy, segment);
    let mut outcome = SurveyOutcome {
        schema: SURVEY_SCHEMA,
        tool_version: env!("CARGO_PKG_VERSION"),
        session,
        mount,
        used,
        change_points: audit.change_points.clone(),
        frames: audit.frames.clone(),
        screened_frames: mounts.screened_frames.clone(),
        pixel_sigma: audit.pixel_sigma.clone(),
        noise_inflation: audit.change_search.noise_inflation[0],
        precision,
        nominal: nominal_offset(audit),
        warnings: Vec::new(),
        session_warnings: audit.warnings.clone(),
    };
    outcome.warnings = warnings(&outcome, segment);
    Ok(outcome)
}

/// The segment's covariance re-expressed about its own mount (see [`propagation`]).
fn about_mount(segment: &SegmentMount) -> Matrix6<f64> {
    let angles = Vector3::new(
        segment.deviation[3],
        segment.deviation[4],
        segment.deviation[5],
    );
    let jacobian = propagation::reexpress_jacobian(&angles);
    propagation::transform(&jacobian, &segment.covariance)
}

/// `z_{0.975} √C_jj` per axis; infinite for an axis the segment does not observe.
pub fn half_widths(covariance: &Matrix6<f64>, observable: &[bool; 6]) -> [f64; 6] {
    let z = normal_quantile(0.5 + 0.5 * LEVEL).unwrap_or(1.959_963_984_540_054);
    std::array::from_fn(|k| {
        if observable[k] {
            z * covariance[(k, k)].max(0.0).sqrt()
        } else {
            f64::INFINITY
        }
    })
}

fn used_frames(mounts: &SessionMounts) -> UsedFrames {
    let count = mounts.segments.len();
    let last = &mounts.segments[count - 1];
    let rule = if count == 1 {
        "the whole session: no change point was found".to_string()
    } else {
        format!(
            "the last of {count} segments: the mount moved during the session, and the stretch \
             after the last change point is the mount as installed now (what the next flight \
             carries); earlier stretches describe a mount that no longer exists"
        )
    };
    UsedFrames {
        first_frame: last.first_frame,
        last_frame: last.last_frame,
        first_time_s: last.first_time_s,
        last_time_s: last.last_time_s,
        solved_frames: last.solved_frames,
        segment: count,
        segments: count,
        rule,
    }
}

fn nominal_offset(audit: &AuditOutcome) -> Option<NominalOffset> {
    let nominal = audit.inputs.nominal_mount.clone()?;
    let deviation = audit.segments.last()?.mount_deviation.clone();
    Some(NominalOffset { nominal, deviation })
}

fn axis_list(names: &[&str]) -> String {
    names.join(", ")
}

fn warnings(outcome: &SurveyOutcome, segment: &SegmentMount) -> Vec<GateWarning> {
    let mut out = Vec::new();
    if !outcome.change_points.is_empty() {
        let frames: Vec<String> = outcome
            .change_points
            .iter()
            .map(|c| c.frame.to_string())
            .collect();
        out.push(GateWarning::new(
            GateWarningCode::MountMoved,
            format!(
                "the mount moved during the session (change points at frames {}): only frames \
                 {} to {}, after the last one, were used",
                frames.join(", "),
                outcome.used.first_frame,
                outcome.used.last_frame
            ),
            "secure the mount, then survey a new session; audit this one to see what moved",
        ));
    }
    let screened = outcome.screened_frames.len() as u64;
    if screened * 20 > outcome.frames.solved.max(1) {
        out.push(GateWarning::new(
            GateWarningCode::ManyGrossFrames,
            format!(
                "{screened} of {} solved frames were left out as gross pose errors",
                outcome.frames.solved
            ),
            "check the probe detections for mislabelled keypoints, and the probe model",
        ));
    }
    if segment.excess_scatter {
        out.push(GateWarning::new(
            GateWarningCode::ExcessScatter,
            "the frames used scatter more than the keypoint noise explains".into(),
            "a loose or vibrating mount, or correlated detection errors: inspect the bracket \
             before adopting this survey",
        ));
    }
    let unobserved: Vec<&str> = outcome
        .precision
        .axes
        .iter()
        .filter(|a| a.half_width.is_none())
        .map(|a| a.axis)
        .collect();
    if !unobserved.is_empty() {
        out.push(GateWarning::new(
            GateWarningCode::UnobservedAxis,
            format!(
                "the probe keypoints do not observe {}",
                axis_list(&unobserved)
            ),
            "nearly collinear probe keypoints: add off-axis features to the probe model",
        ));
    }
    if !outcome.precision.sufficient && unobserved.is_empty() {
        out.push(precision::short_warning(&outcome.precision, &outcome.used));
    }
    out
}
