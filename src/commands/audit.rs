//! The audit job: did the camera-to-probe mount move during a session, when, by how much, and
//! what error would a fixed-offset pipeline have made? Options in, a serialisable outcome out;
//! never prints and writes no files.
//!
//! Steps: open the session (or simulate the demo), solve both objects in every frame, run the
//! tests on the mount deviation series, decide verdict and gate, and assemble the report.

use std::path::PathBuf;

use crate::session::{InputError, Policy, Session};
use crate::sim::{self, SimError, Simulation};
use crate::stats::penalty::{CalibrationSettings, PenaltyCalibrator};
use crate::stats::StatsError;

mod analysis;
mod assemble;
mod input;
mod outcome;
mod solve;
mod verdict;

pub use input::{simulated, FrameInput, Setup};
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
            let session = Session::load(path)?;
            let setup = Setup::from_session(&session, path);
            let frames = input::JoinedFrames::new(session.detections()?, session.truth()?);
            audit_frames(&setup, frames, &options.policy, progress)
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
    let calibrator = PenaltyCalibrator::new(CalibrationSettings::default());
    audit_frames_with(setup, frames, policy, &calibrator, progress)
}

/// [`audit_frames`] with a penalty calibrator the caller keeps, so that many sessions of the
/// same length and noise class (a sensitivity study) share one simulated null distribution
/// instead of simulating it for every session.
pub fn audit_frames_with(
    setup: &Setup,
    frames: impl Iterator<Item = FrameInput>,
    policy: &Policy,
    calibrator: &PenaltyCalibrator,
    progress: &dyn Fn(u64),
) -> Result<AuditOutcome, AuditError> {
    let solved = solve::solve_all(setup, frames, progress)?;
    let analysis = analysis::analyse(
        &solved,
        policy.false_alarm_rate,
        setup.camera.pixel_sigma,
        calibrator,
    )?;
    Ok(assemble::build(setup, &solved, &analysis, policy))
}
