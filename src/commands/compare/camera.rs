//! Were the two sessions recorded with the same camera? Compares the intrinsics parameter by
//! parameter and, when they differ, says what that means for the comparison.

use serde::Serialize;

use crate::commands::survey::{GateWarning, GateWarningCode};
use crate::session::CameraFile;
use crate::tol;

/// The cameras of both sides, and where they differ.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CameraComparison {
    /// `None` for a survey file without a camera record.
    pub before: Option<CameraFile>,
    pub after: Option<CameraFile>,
    /// `None` when one side's camera is unknown.
    pub same: Option<bool>,
    pub differences: Vec<CameraDifference>,
}

/// One intrinsic parameter that differs.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CameraDifference {
    pub parameter: String,
    pub before: String,
    pub after: String,
}

fn same_number(a: f64, b: f64) -> bool {
    (a - b).abs() <= tol::CAMERA_SAME_REL * a.abs().max(b.abs()).max(1.0)
}

/// Every intrinsic as (name, value); the pixel noise is not an intrinsic and is left out.
fn numbers(c: &CameraFile) -> Vec<(&'static str, f64)> {
    let d = &c.distortion;
    vec![
        ("width", f64::from(c.width)),
        ("height", f64::from(c.height)),
        ("fx", c.fx),
        ("fy", c.fy),
        ("cx", c.cx),
        ("cy", c.cy),
        ("skew", c.skew),
        ("k1", d.k1),
        ("k2", d.k2),
        ("p1", d.p1.unwrap_or(0.0)),
        ("p2", d.p2.unwrap_or(0.0)),
        ("k3", d.k3),
        ("k4", d.k4.unwrap_or(0.0)),
    ]
}

/// Compares two cameras.
pub fn compare_cameras(
    before: Option<&CameraFile>,
    after: Option<&CameraFile>,
) -> CameraComparison {
    let differences = match (before, after) {
        (Some(b), Some(a)) => differences(b, a),
        _ => Vec::new(),
    };
    CameraComparison {
        before: before.cloned(),
        after: after.cloned(),
        same: (before.is_some() && after.is_some()).then_some(differences.is_empty()),
        differences,
    }
}

fn differences(before: &CameraFile, after: &CameraFile) -> Vec<CameraDifference> {
    let mut out = Vec::new();
    if before.model != after.model {
        out.push(CameraDifference {
            parameter: "model".into(),
            before: before.model.clone(),
            after: after.model.clone(),
        });
    }
    for ((name, b), (_, a)) in numbers(before).into_iter().zip(numbers(after)) {
        if !same_number(b, a) {
            out.push(CameraDifference {
                parameter: name.into(),
                before: format!("{b}"),
                after: format!("{a}"),
            });
        }
    }
    out
}

/// The warning for a camera change or an unknown camera; `None` when both are known and equal.
pub fn camera_warning(cameras: &CameraComparison) -> Option<GateWarning> {
    match cameras.same {
        Some(true) => None,
        Some(false) => {
            let listed: Vec<String> = cameras
                .differences
                .iter()
                .map(|d| format!("{} {} -> {}", d.parameter, d.before, d.after))
                .collect();
            let kind = if cameras
                .differences
                .iter()
                .any(|d| ["model", "width", "height"].contains(&d.parameter.as_str()))
            {
                "a different camera"
            } else {
                "a camera swap or a recalibration"
            };
            Some(GateWarning::new(
                GateWarningCode::CameraChanged,
                format!(
                    "the camera intrinsics differ ({kind}): {}",
                    listed.join(", ")
                ),
                "a new camera brings its own optical centre and boresight, so part of the mount \
                 change may be the new camera's calibration offset rather than a moved bracket. \
                 The comparison is of the as-installed camera poses, which is what a \
                 fixed-offset pipeline needs; make sure the AFTER session (and the pipeline) use \
                 the new camera's own calibration, not the old one's, and survey a new nominal \
                 mount with it",
            ))
        }
        None => Some(GateWarning::new(
            GateWarningCode::CameraUnknown,
            "one side has no camera record: a camera swap cannot be detected".into(),
            "compare against a survey file written by this version of mountdrift survey (it \
             records the camera), or check the camera serial numbers by hand",
        )),
    }
}
