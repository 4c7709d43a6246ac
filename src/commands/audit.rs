//! The audit job: did the camera-to-probe mount move during a session, when, by how much, and
//! what error would a fixed-offset pipeline have made? Options in, a serialisable outcome out;
//! never prints and writes no files.
//!
//! Steps: open the session (or simulate the demo), solve both objects in every frame, run the
//! tests on the mount deviation series, decide verdict and gate, and assemble the report.

use std::path::{Path, PathBuf};

use crate::offset::frames::FrameRecord;
use crate::session::{InputError, Policy, Session};
use crate::sim::{self, SimError, Simulation};
use crate::stats::drift::Calibrators;
use crate::stats::packed::PackedSym6;
use crate::stats::StatsError;

mod analysis;
mod assemble;
mod input;
mod mounts;
mod outcome;
mod solve;
mod verdict;

pub use input::{simulated, FrameInput, Setup};

pub use mounts::{SegmentMount, SessionMounts};
pub use outcome::*;

/// The name of the built-in demo scenario that `audit --demo` simulates in memory.
pub const DEMO_PRESET: &str = "demo";

/// Which session to audit.
#[derive(Debug, Clone, PartialEq)]
pub enum SessionSource {
    /// A session manifest on disk.
    Manifest(PathBuf),
    /// The built-in demo scenario, simulated in memory.
    Demo,
}

/// Validated options of an audit.
#[derive(Debug, Clone, PartialEq)]
pub struct AuditOptions {
    pub source: SessionSource,
    /// Gate tolerances and the false-alarm rate.
    pub policy: Policy,
}

/// Why an audit could not be carried out.
#[derive(Debug, thiserror::Error)]
pub enum AuditError {
    #[error(transparent)]
    Input(#[from] InputError),
    #[error(transparent)]
    Simulation(#[from] SimError),
    #[error("the statistics could not be computed: {0}")]
    Statistics(#[from] StatsError),
}

/// Runs the audit; `progress` hears the number of frames solved so far.
pub fn run(options: &AuditOptions, progress: &dyn Fn(u64)) -> Result<AuditOutcome, AuditError> {
    match &options.source {
        SessionSource::Manifest(path) => {
            audit_manifest_with_mounts(path, &options.policy, progress, None).map(|(o, _)| o)
        }
        SessionSource::Demo => {
            let scenario = sim::preset(DEMO_PRESET).ok_or_else(|| SimError::UnknownPreset {
                name: DEMO_PRESET.to_string(),
                available: sim::preset_names().join(", "),
            })?;
            let simulation = Simulation::new(&scenario)?;
            let setup = Setup::from_simulation(&simulation, "built-in demo (simulated)");
            let frames = simulation.frames().map(input::simulated);
            audit_frames(&setup, frames, &options.policy, progress)
        }
    }
}

/// Audits a stream of frames: solve, test, decide, assemble. Also used on sessions simulated in
/// memory (sensitivity studies).
pub fn audit_frames(
    setup: &Setup,
    frames: impl Iterator<Item = FrameInput>,
    policy: &Policy,
    progress: &dyn Fn(u64),
) -> Result<AuditOutcome, AuditError> {
    audit_frames_with(
        setup,
        frames,
        policy,
        analysis::shared_calibrators(),
        progress,
    )
}

/// [`audit_frames`] with penalty and online-threshold calibrators the caller chooses (lighter
/// simulations for tests, or a study's own). [`audit_frames`] uses one set shared by the whole
/// process.
pub fn audit_frames_with(
    setup: &Setup,
    frames: impl Iterator<Item = FrameInput>,
    policy: &Policy,
    calibrators: &Calibrators,
    progress: &dyn Fn(u64),
) -> Result<AuditOutcome, AuditError> {
    audit_inner(setup, frames, policy, progress, None, calibrators).map(|(outcome, _)| outcome)
}

/// Names the frames to leave out of the mount deviation series (e.g. gross pose errors), given
/// every solved frame.
pub type FrameScreen<'a> = &'a dyn Fn(&[FrameRecord], &[Option<PackedSym6>]) -> Vec<u64>;

/// [`audit_frames`], also returning each segment's mount with its effective covariance (what
/// `survey` and `compare` build on). With a `screen`, the frames it names keep their status but
/// leave the deviation series before the statistics run.
pub fn audit_frames_with_mounts(
    setup: &Setup,
    frames: impl Iterator<Item = FrameInput>,
    policy: &Policy,
    progress: &dyn Fn(u64),
    screen: Option<FrameScreen>,
) -> Result<(AuditOutcome, SessionMounts), AuditError> {
    let calibrators = analysis::shared_calibrators();
    audit_inner(setup, frames, policy, progress, screen, calibrators)
}

fn audit_inner(
    setup: &Setup,
    frames: impl Iterator<Item = FrameInput>,
    policy: &Policy,
    progress: &dyn Fn(u64),
    screen: Option<FrameScreen>,
    calibrators: &Calibrators,
) -> Result<(AuditOutcome, SessionMounts), AuditError> {
    let mut solved = solve::solve_all(setup, frames, progress)?;
    let mut screened = screen
        .map(|s| s(&solved.records, &solved.deviation_covariances))
        .unwrap_or_default();
    screened.sort_unstable();
    screened.dedup();
    let covariances = solved.deviation_covariances.iter_mut();
    for (r, covariance) in solved.records.iter_mut().zip(covariances) {
        if screened.binary_search(&r.frame).is_ok() {
            r.deviation = None;
            *covariance = None;
        }
    }
    let analysis = analysis::analyse(
        &mut solved,
        policy.false_alarm_rate,
        setup.camera.pixel_sigma,
        calibrators,
    )?;
    let outcome = assemble::build(setup, &solved, &analysis, policy);
    let mut mounts = mounts::collect(&solved, &analysis, &outcome, setup.nominal.is_some());
    mounts.screened_frames = screened;
    Ok((outcome, mounts))
}

/// Audits the session of a manifest on disk, returning the segment mounts as well.
pub fn audit_manifest_with_mounts(
    manifest: &Path,
    policy: &Policy,
    progress: &dyn Fn(u64),
    screen: Option<FrameScreen>,
) -> Result<(AuditOutcome, SessionMounts), AuditError> {
    let session = Session::load(manifest)?;
    let setup = Setup::from_session(&session, manifest);
    let frames = input::JoinedFrames::new(session.detections()?, session.truth()?);
    audit_frames_with_mounts(&setup, frames, policy, progress, screen)
}
