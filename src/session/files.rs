//! The serde "file" structs of the camera, keypoint model and mount formats (docs/formats.md).
//!
//! They mirror the documented formats exactly (unknown keys are errors); each converts into the
//! validated domain type of `camera`, `model` or `geometry`, and back for writers such as the
//! simulator. Reading goes through `session::located`, which adds line numbers to the checks.

use nalgebra::Vector3;
use serde::{Deserialize, Serialize};

use crate::camera::{Camera, CameraError, Distortion};
use crate::geometry::{Mount, YawPitchRoll};
use crate::model::{KeypointModel, ModelError, ModelPoint};

/// The `camera` file.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CameraFile {
    pub model: String,
    pub width: u32,
    pub height: u32,
    pub fx: f64,
    pub fy: f64,
    pub cx: f64,
    pub cy: f64,
    #[serde(default, skip_serializing_if = "is_zero")]
    pub skew: f64,
    #[serde(default)]
    pub distortion: DistortionFile,
    #[serde(default = "default_pixel_sigma")]
    pub pixel_sigma: f64,
}

/// Distortion coefficients as written; missing terms are 0. Pinhole uses k1, k2, p1, p2, k3;
/// fisheye uses k1..k4.
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DistortionFile {
    #[serde(default)]
    pub k1: f64,
    #[serde(default)]
    pub k2: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub p1: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub p2: Option<f64>,
    #[serde(default)]
    pub k3: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub k4: Option<f64>,
}

pub(super) fn default_pixel_sigma() -> f64 {
    1.0
}

fn is_zero(x: &f64) -> bool {
    *x == 0.0
}

/// Why a camera file was refused after parsing.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CameraFileError {
    #[error("unknown camera model '{0}' (expected 'pinhole' or 'fisheye')")]
    UnknownModel(String),
    #[error("{0} is not a coefficient of the {1} model")]
    WrongCoefficient(&'static str, &'static str),
    #[error(transparent)]
    Invalid(#[from] CameraError),
}

impl CameraFile {
    pub fn to_camera(&self) -> Result<Camera, CameraFileError> {
        let d = &self.distortion;
        let distortion = match self.model.as_str() {
            "pinhole" => {
                if d.k4.is_some() {
                    return Err(CameraFileError::WrongCoefficient("k4", "pinhole"));
                }
                Distortion::BrownConrady {
                    k1: d.k1,
                    k2: d.k2,
                    p1: d.p1.unwrap_or(0.0),
                    p2: d.p2.unwrap_or(0.0),
                    k3: d.k3,
                }
            }
            "fisheye" => {
                if d.p1.is_some() || d.p2.is_some() {
                    return Err(CameraFileError::WrongCoefficient("p1/p2", "fisheye"));
                }
                Distortion::KannalaBrandt {
                    k1: d.k1,
                    k2: d.k2,
                    k3: d.k3,
                    k4: d.k4.unwrap_or(0.0),
                }
            }
            other => return Err(CameraFileError::UnknownModel(other.to_string())),
        };
        Ok(Camera::new(
            self.width,
            self.height,
            self.fx,
            self.fy,
            self.cx,
            self.cy,
            self.skew,
            distortion,
            self.pixel_sigma,
        )?)
    }

    /// The file form of a camera (for writers such as the simulator).
    pub fn from_camera(cam: &Camera) -> Self {
        let distortion = match cam.distortion {
            Distortion::BrownConrady { k1, k2, p1, p2, k3 } => DistortionFile {
                k1,
                k2,
                p1: Some(p1),
                p2: Some(p2),
                k3,
                k4: None,
            },
            Distortion::KannalaBrandt { k1, k2, k3, k4 } => DistortionFile {
                k1,
                k2,
                p1: None,
                p2: None,
                k3,
                k4: Some(k4),
            },
        };
        Self {
            model: cam.distortion.model_name().to_string(),
            width: cam.width,
            height: cam.height,
            fx: cam.fx,
            fy: cam.fy,
            cx: cam.cx,
            cy: cam.cy,
            skew: cam.skew,
            distortion,
            pixel_sigma: cam.pixel_sigma,
        }
    }
}

/// A keypoint model file: `reference: ID` and `points: [{id, xyz}]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelFile {
    pub reference: String,
    pub points: Vec<ModelPointFile>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelPointFile {
    pub id: String,
    pub xyz: [f64; 3],
}

impl ModelFile {
    pub fn to_model(&self) -> Result<KeypointModel, ModelError> {
        let points = self
            .points
            .iter()
            .map(|p| ModelPoint {
                id: p.id.clone(),
                xyz_m: Vector3::from(p.xyz),
            })
            .collect();
        KeypointModel::new(points, &self.reference)
    }

    pub fn from_model(model: &KeypointModel) -> Self {
        Self {
            reference: model.reference_id().to_string(),
            points: model
                .points()
                .iter()
                .map(|p| ModelPointFile {
                    id: p.id.clone(),
                    xyz: p.xyz_m.into(),
                })
                .collect(),
        }
    }
}

/// A mount file: `position_m`, `yaw_deg`, `pitch_deg`, `roll_deg`, and, as written by
/// `mountdrift survey`, optionally its uncertainty (`covariance`, `ci95`) and the camera it was
/// surveyed with (`camera`). The audit reads the pose and accepts the other keys.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MountFile {
    pub position_m: [f64; 3],
    pub yaw_deg: f64,
    pub pitch_deg: f64,
    pub roll_deg: f64,
    /// Covariance of the mount's error, 6x6 row by row, in the order x, y, z (mm, body axes),
    /// yaw, pitch, roll (deg): the deviation of the true mount from this one in the audit's
    /// convention (translation `p_true − p` in body axes, Z-Y-X angles of `R_BS^T R_BS,true`).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub covariance: Option<[[f64; 6]; 6]>,
    /// 95% half-widths of the same six quantities.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub ci95: Option<MountCi95File>,
    /// The camera the mount was surveyed with, so a later comparison can tell a camera swap.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub camera: Option<CameraFile>,
}

/// 95% half-widths of a surveyed mount: position in mm (body axes), angles in degrees.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MountCi95File {
    pub position_mm: [f64; 3],
    pub yaw_deg: f64,
    pub pitch_deg: f64,
    pub roll_deg: f64,
}

impl MountFile {
    pub fn to_mount(&self) -> Mount {
        Mount {
            position_m: Vector3::from(self.position_m),
            attitude: YawPitchRoll::new(
                self.yaw_deg.to_radians(),
                self.pitch_deg.to_radians(),
                self.roll_deg.to_radians(),
            ),
        }
    }

    pub fn from_mount(m: &Mount) -> Self {
        let [yaw_deg, pitch_deg, roll_deg] = m.attitude.to_degrees();
        Self::new(m.position_m.into(), [yaw_deg, pitch_deg, roll_deg])
    }

    /// A plain mount file (no uncertainty, no camera): position in m, yaw, pitch, roll in deg.
    pub fn new(position_m: [f64; 3], [yaw_deg, pitch_deg, roll_deg]: [f64; 3]) -> Self {
        Self {
            position_m,
            yaw_deg,
            pitch_deg,
            roll_deg,
            covariance: None,
            ci95: None,
            camera: None,
        }
    }
}
