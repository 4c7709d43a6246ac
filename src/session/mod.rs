//! Session inputs: the YAML manifest and the files it names (camera, keypoint models, nominal
//! mount, detections CSV streamed frame by frame, truth CSV) and the gate policy, parsed and
//! validated. Bad input of any kind is an [`InputError`] naming the file, the line, the column
//! where it applies, and what was expected.
//!
//! The formats are documented in docs/formats.md. YAML goes through [`yaml`] only.

mod csv_table;
mod detections;
mod error;
mod files;
mod located;
mod manifest;
mod policy;
mod truth;
pub mod yaml;

use serde::{Deserialize, Serialize};

use crate::camera::PixelPoint;

pub use csv_table::{CsvSource, CsvWriteError};
pub use detections::{DetectionReader, DetectionWriter};
pub use error::{Column, InputError, Problem};
pub use files::{
    CameraFile, CameraFileError, DistortionFile, ModelFile, ModelPointFile, MountCi95File,
    MountFile,
};
pub use manifest::{Session, SessionSources};
pub use policy::Policy;
pub use truth::{TruthReader, TruthRow, TruthWriter};

/// Reads a mount file (the session mount format, with the optional survey keys `covariance`,
/// `ci95` and `camera`), every value checked and located on error.
pub fn read_mount_file(path: &std::path::Path) -> Result<MountFile, InputError> {
    let doc: located::MountDoc = yaml::read_file(path)?;
    doc.into_mount_file(path)
}

/// Which rigid object a keypoint belongs to.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum ObjectKind {
    Probe,
    Drogue,
}

/// One detected keypoint, already matched to its model point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Observation {
    /// Index of the point in its keypoint model.
    pub point: usize,
    pub px: PixelPoint,
    /// One-sigma detection noise (px): the CSV's `sigma_px`, else the camera's `pixel_sigma`.
    pub sigma_px: f64,
}

/// All keypoints of one frame, grouped by object.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct FrameDetections {
    pub frame: u64,
    pub time_s: f64,
    pub probe: Vec<Observation>,
    pub drogue: Vec<Observation>,
}

impl ObjectKind {
    /// The name used in files and messages: `probe` or `drogue`.
    pub fn name(self) -> &'static str {
        match self {
            ObjectKind::Probe => "probe",
            ObjectKind::Drogue => "drogue",
        }
    }
}
