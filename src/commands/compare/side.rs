//! One side of a comparison: a session (surveyed here, its stable part only) or a survey mount
//! file written earlier (one reference per aircraft). Which one a file is, is told by its keys:
//! a YAML mapping with `position_m` and `covariance` is a survey file, anything else a session.

use std::path::Path;

use nalgebra::Matrix6;
use serde::de::IgnoredAny;
use serde::{Deserialize, Serialize};

use crate::commands::survey::{self, GateWarning, SurveyOptions, SurveyOutcome, UsedFrames};
use crate::geometry::Mount;
use crate::session::{read_mount_file, yaml, CameraFile, InputError, MountFile, Policy, Problem};

use super::CompareError;

/// What kind of file a side was read from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SideKind {
    Session,
    SurveyFile,
}

/// One side as reported.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SideSummary {
    pub path: String,
    pub kind: SideKind,
    /// The mount compared, with its covariance and 95% half-widths.
    pub mount: MountFile,
    /// For a session: the frames used (its last stable stretch) and why.
    pub used: Option<UsedFrames>,
    /// For a session: how many change points it contains (the mount moved while recording).
    pub change_points: usize,
    /// For a session: the survey's warnings (mount moved, scatter, precision).
    pub warnings: Vec<GateWarning>,
}

/// A side ready to compare: the summary and the numbers behind it.
#[derive(Debug, Clone, PartialEq)]
pub struct Side {
    pub summary: SideSummary,
    pub mount: Mount,
    /// Covariance about the mount (x, y, z mm; yaw, pitch, roll deg).
    pub covariance: Matrix6<f64>,
    pub camera: Option<CameraFile>,
}

impl Side {
    /// A side from a survey of a session.
    pub fn from_survey(survey: &SurveyOutcome) -> Self {
        let mut side = Self::from_mount_file(&survey.mount, &survey.session, SideKind::Session);
        side.summary.used = Some(survey.used.clone());
        side.summary.change_points = survey.change_points.len();
        side.summary.warnings = survey.warnings.clone();
        side
    }

    /// A side from a mount file that carries a covariance; a file without one has none.
    fn from_mount_file(file: &MountFile, path: &str, kind: SideKind) -> Self {
        let rows = file.covariance.unwrap_or([[0.0; 6]; 6]);
        Self {
            mount: file.to_mount(),
            covariance: Matrix6::from_fn(|r, c| rows[r][c]),
            camera: file.camera.clone(),
            summary: SideSummary {
                path: path.to_string(),
                kind,
                mount: file.clone(),
                used: None,
                change_points: 0,
                warnings: Vec::new(),
            },
        }
    }
}

/// Only the keys that tell a survey file from a session manifest.
#[derive(Deserialize)]
struct Shape {
    #[serde(default)]
    position_m: Option<IgnoredAny>,
    #[serde(default)]
    covariance: Option<IgnoredAny>,
}

/// Tells what `path` holds.
pub fn kind_of(path: &Path) -> Result<SideKind, InputError> {
    let shape: Shape = yaml::read_file(path)?;
    match (shape.position_m, shape.covariance) {
        (Some(_), Some(_)) => Ok(SideKind::SurveyFile),
        (Some(_), None) => Err(InputError::in_file(
            path,
            Problem::expected(
                "a session manifest, or a survey mount file with `covariance` (written by \
                 mountdrift survey)",
                "a mount file without covariance",
            ),
        )),
        _ => Ok(SideKind::Session),
    }
}

/// Loads a side: reads a survey file, or surveys a session.
pub fn load(path: &Path, policy: &Policy, progress: &dyn Fn(u64)) -> Result<Side, CompareError> {
    match kind_of(path)? {
        SideKind::SurveyFile => {
            let file = read_mount_file(path)?;
            Ok(Side::from_mount_file(
                &file,
                &path.display().to_string(),
                SideKind::SurveyFile,
            ))
        }
        SideKind::Session => {
            let options = SurveyOptions {
                session: path.to_path_buf(),
                policy: *policy,
            };
            Ok(Side::from_survey(&survey::run(&options, progress)?))
        }
    }
}
