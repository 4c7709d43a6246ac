//! The audit job: options in, a serialisable outcome out; never prints and writes no files.
//!
//! Steps: load and validate the session, then stream every detection frame (and the truth rows,
//! when present) through the input checks, and summarise what was read.

use std::path::PathBuf;

use serde::Serialize;

use crate::session::{DetectionReader, InputError, Policy, Session, TruthReader};

mod outcome;
pub use outcome::*;

/// Validated options of an audit.
#[derive(Debug, Clone, PartialEq)]
pub struct AuditOptions {
    /// The session manifest.
    pub session: PathBuf,
    /// Gate tolerances.
    pub policy: Policy,
}

/// Why an audit could not be carried out.
#[derive(Debug, thiserror::Error)]
pub enum AuditError {
    #[error(transparent)]
    Input(#[from] InputError),
}

/// What an audit found.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ReadSummary {
    /// The manifest, as given.
    pub session: String,
    pub nominal_mount: bool,
    pub frames: FrameSummary,
    /// Truth rows read, when the session has truth.
    pub truth_rows: Option<u64>,
    pub policy: Policy,
}

/// Counts of the detection frames and keypoints read.
#[derive(Debug, Clone, PartialEq, Default, Serialize)]
pub struct FrameSummary {
    pub total: u64,
    pub first_frame: u64,
    pub last_frame: u64,
    pub first_time_s: f64,
    pub last_time_s: f64,
    /// Frames with at least one probe (drogue) keypoint.
    pub with_probe: u64,
    pub with_drogue: u64,
    /// Keypoint rows per object.
    pub probe_keypoints: u64,
    pub drogue_keypoints: u64,
}

/// Runs the audit.
pub fn run(options: &AuditOptions) -> Result<ReadSummary, AuditError> {
    let session = Session::load(&options.session)?;
    let frames = summarise_frames(session.detections()?)?;
    let truth_rows = session.truth()?.map(count_truth).transpose()?;
    Ok(ReadSummary {
        session: options.session.display().to_string(),
        nominal_mount: session.mount.is_some(),
        frames,
        truth_rows,
        policy: options.policy,
    })
}

fn summarise_frames(reader: DetectionReader) -> Result<FrameSummary, InputError> {
    let mut summary = FrameSummary::default();
    for frame in reader {
        let frame = frame?;
        if summary.total == 0 {
            summary.first_frame = frame.frame;
            summary.first_time_s = frame.time_s;
        }
        summary.total += 1;
        summary.last_frame = frame.frame;
        summary.last_time_s = frame.time_s;
        summary.with_probe += u64::from(!frame.probe.is_empty());
        summary.with_drogue += u64::from(!frame.drogue.is_empty());
        summary.probe_keypoints += frame.probe.len() as u64;
        summary.drogue_keypoints += frame.drogue.len() as u64;
    }
    Ok(summary)
}

fn count_truth(reader: TruthReader) -> Result<u64, InputError> {
    reader.map(|row| row.map(|_| 1)).sum()
}
