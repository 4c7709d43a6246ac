//! Where an audit's frames come from: a session on disk (detections joined with truth by frame
//! number, both streamed) or the built-in demo simulated in memory.

use std::path::Path;

use crate::camera::Camera;
use crate::geometry::Mount;
use crate::model::KeypointModel;
use crate::session::{
    DetectionReader, FrameDetections, InputError, Session, TruthReader, TruthRow,
};
use crate::sim::{SimFrame, Simulation};

/// One frame's detections with the truth for that frame, when there is any.
pub type FrameInput = Result<(FrameDetections, Option<TruthRow>), InputError>;

/// Everything about a session but its frames.
#[derive(Debug, Clone)]
pub struct Setup {
    /// The manifest path, or a name for a simulated session.
    pub name: String,
    pub camera: Camera,
    pub probe: KeypointModel,
    pub drogue: KeypointModel,
    pub nominal: Option<Mount>,
    pub has_truth: bool,
}

impl Setup {
    pub fn from_session(session: &Session, manifest: &Path) -> Self {
        Self {
            name: manifest.display().to_string(),
            camera: session.camera.clone(),
            probe: session.probe.clone(),
            drogue: session.drogue.clone(),
            nominal: session.mount,
            has_truth: session.truth.is_some(),
        }
    }

    pub fn from_simulation(sim: &Simulation, name: &str) -> Self {
        Self {
            name: name.to_string(),
            camera: sim.camera().clone(),
            probe: sim.probe().clone(),
            drogue: sim.drogue().clone(),
            nominal: Some(*sim.nominal_mount()),
            has_truth: true,
        }
    }
}

/// A simulated frame as audit input.
pub fn simulated(frame: SimFrame) -> FrameInput {
    let truth = TruthRow {
        frame: frame.truth.frame,
        time_s: frame.truth.time_s,
        mount: frame.truth.mount,
        vector_m: frame.truth.vector_m,
    };
    Ok((frame.detections, Some(truth)))
}

/// Detections joined with truth rows of the same frame number; truth rows for frames without
/// detections are skipped. Both files are read once, in order.
pub struct JoinedFrames {
    detections: DetectionReader,
    truth: Option<std::iter::Peekable<TruthReader>>,
}

impl JoinedFrames {
    pub fn new(detections: DetectionReader, truth: Option<TruthReader>) -> Self {
        Self {
            detections,
            truth: truth.map(Iterator::peekable),
        }
    }

    fn truth_for(&mut self, frame: u64) -> Result<Option<TruthRow>, InputError> {
        let Some(rows) = self.truth.as_mut() else {
            return Ok(None);
        };
        while let Some(next) = rows.peek() {
            match next {
                Err(_) => return rows.next().transpose().map(|_| None),
                Ok(row) if row.frame < frame => {
                    rows.next();
                }
                Ok(row) if row.frame == frame => return rows.next().transpose(),
                Ok(_) => return Ok(None),
            }
        }
        Ok(None)
    }
}

impl Iterator for JoinedFrames {
    type Item = FrameInput;

    fn next(&mut self) -> Option<FrameInput> {
        let detections = match self.detections.next()? {
            Ok(d) => d,
            Err(e) => return Some(Err(e)),
        };
        Some(
            self.truth_for(detections.frame)
                .map(|truth| (detections, truth)),
        )
    }
}
