//! The overlay job: one frame of a session with its image, the detected keypoints, both objects
//! solved in that frame (a cold solve), every model point reprojected from that dual-object
//! solution, and where a fixed-offset pipeline, which takes the probe pose from the nominal
//! mount, would have put the probe. Options in, an outcome (the frame image and the numbers in
//! pixels) out; it draws nothing and writes no files (`report::overlay` draws).

use std::path::{Path, PathBuf};

use image::RgbImage;
use nalgebra::{Isometry3, Point3};
use serde::Serialize;

use crate::camera::{Camera, PixelPoint};
use crate::geometry::Mount;
use crate::model::KeypointModel;
use crate::offset::{fixed_offset_error, observed_mount};
use crate::pnp::{solve_pose, PnpOptions, PoseStatus, RejectionReason};
use crate::session::{FrameDetections, InputError, ObjectKind, Observation, Session};

/// Validated options of `mountdrift overlay`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct OverlayOptions {
    /// The session manifest.
    pub session: PathBuf,
    /// The frame number, as in the detections and the image names.
    pub frame: u64,
}

/// Why an overlay could not be made.
#[derive(Debug, thiserror::Error)]
pub enum OverlayError {
    #[error(transparent)]
    Input(#[from] InputError),
    #[error(
        "{}: the session names no frames folder; add `frames: FOLDER` (images named by frame \
         number, e.g. 000123.png) to the manifest",
        manifest.display()
    )]
    NoFramesFolder { manifest: PathBuf },
    #[error("frame {frame} has no detections in {} ({})", path.display(), nearest_frames(*before, *after))]
    FrameNotDetected {
        frame: u64,
        path: PathBuf,
        /// The nearest frames with detections before and after it.
        before: Option<u64>,
        after: Option<u64>,
    },
    #[error("no image of frame {frame} in {}: tried {}", dir.display(), list_paths(tried))]
    MissingImage {
        frame: u64,
        dir: PathBuf,
        tried: Vec<PathBuf>,
    },
    #[error("cannot read the image {}: {message}", path.display())]
    UnreadableImage { path: PathBuf, message: String },
    #[error(
        "the image {} is {width} x {height} pixels, but the camera ({}) is {camera_width} x \
         {camera_height}: expected frames from this camera at full resolution",
        path.display(), camera.display()
    )]
    ImageSize {
        path: PathBuf,
        width: u32,
        height: u32,
        camera: PathBuf,
        camera_width: u32,
        camera_height: u32,
    },
}

fn nearest_frames(before: Option<u64>, after: Option<u64>) -> String {
    match (before, after) {
        (Some(b), Some(a)) => format!("the nearest frames with detections are {b} and {a}"),
        (Some(b), None) => format!("the last frame with detections is {b}"),
        (None, Some(a)) => format!("the first frame with detections is {a}"),
        (None, None) => "the file has no frames".to_string(),
    }
}

fn list_paths(paths: &[PathBuf]) -> String {
    let names: Vec<_> = paths.iter().map(|p| p.display().to_string()).collect();
    names.join(", ")
}

/// One detected keypoint and, when its object was solved, its reprojection.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct KeypointOverlay {
    pub id: String,
    pub detected_px: PixelPoint,
    pub sigma_px: f64,
    /// The model point projected with the solved pose.
    pub reprojected_px: Option<PixelPoint>,
    /// `|detected − reprojected|` (px).
    pub error_px: Option<f64>,
    /// Kept by the solver's outlier gate.
    pub inlier: Option<bool>,
}

/// A model point projected with a pose.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProjectedPoint {
    pub id: String,
    pub px: PixelPoint,
}

/// One object in the frame: its keypoints, and its model reprojected when it was solved.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ObjectOverlay {
    pub object: ObjectKind,
    /// Why the object could not be solved in this frame.
    pub rejection: Option<RejectionReason>,
    pub rejection_message: Option<String>,
    pub keypoints: Vec<KeypointOverlay>,
    /// Every model point in front of the camera, projected with the solved pose (the
    /// dual-object solution), detected or not.
    pub model_points: Vec<ProjectedPoint>,
    /// Root mean square of `error_px` over the inlier keypoints.
    pub rms_reprojection_px: Option<f64>,
    pub inliers: usize,
    #[serde(skip)]
    pub pose: Option<Isometry3<f64>>,
}

/// One probe model point where the dual-object solution sees it and where a fixed-offset
/// pipeline (nominal mount) assumes it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ProbeShift {
    pub id: String,
    pub observed_px: Option<PixelPoint>,
    pub fixed_offset_px: Option<PixelPoint>,
    pub displacement_px: Option<f64>,
}

/// Where a fixed-offset pipeline puts the probe, compared with the dual-object solution.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FixedOffsetProbe {
    pub points: Vec<ProbeShift>,
    /// The probe reference point (where it meets the drogue) and its displacement (px).
    pub reference_id: String,
    pub reference_displacement_px: Option<f64>,
    /// Root mean square displacement over the probe model points projected both ways (px).
    pub rms_displacement_px: Option<f64>,
    /// The fixed-offset error of the probe-to-drogue vector in this frame (mm), when the drogue
    /// was solved: `|(R_BC,nom − R_BC,obs) x_C + (p_BC,nom − p_BC,obs)|`.
    pub vector_error_mm: Option<f64>,
}

/// The fixed-offset layer, or why there is none.
#[derive(Debug, Clone, PartialEq, Serialize)]
#[serde(tag = "status", rename_all = "snake_case")]
pub enum FixedOffsetLayer {
    Shown(FixedOffsetProbe),
    /// The session has no nominal mount.
    NoNominalMount,
    /// The probe could not be solved in this frame, so there is no observed mount.
    ProbeNotSolved,
}

/// Everything an overlay shows, in pixels, and the frame image it is drawn on.
#[derive(Debug, Clone, Serialize)]
pub struct OverlayOutcome {
    pub session: PathBuf,
    pub frame: u64,
    pub time_s: f64,
    pub image: PathBuf,
    pub width: u32,
    pub height: u32,
    pub probe: ObjectOverlay,
    pub drogue: ObjectOverlay,
    pub fixed_offset: FixedOffsetLayer,
    /// The frame image as read (RGB).
    #[serde(skip)]
    pub frame_image: RgbImage,
}

/// Loads the session, finds the frame's detections and image, solves and projects.
pub fn run(options: &OverlayOptions) -> Result<OverlayOutcome, OverlayError> {
    let session = Session::load(&options.session)?;
    let frames_dir = session
        .frames_dir
        .clone()
        .ok_or_else(|| OverlayError::NoFramesFolder {
            manifest: options.session.clone(),
        })?;
    let detections = find_frame(&session, options.frame)?;
    let image_path = find_image(&frames_dir, options.frame)?;
    let frame_image = load_image(&image_path, &session)?;
    let solver = PnpOptions::default();
    let probe = object_overlay(
        &session.camera,
        &session.probe,
        ObjectKind::Probe,
        &detections.probe,
        &solver,
    );
    let drogue = object_overlay(
        &session.camera,
        &session.drogue,
        ObjectKind::Drogue,
        &detections.drogue,
        &solver,
    );
    let fixed_offset = fixed_offset_layer(&session, &probe, &drogue);
    Ok(OverlayOutcome {
        session: options.session.clone(),
        frame: detections.frame,
        time_s: detections.time_s,
        image: image_path,
        width: frame_image.width(),
        height: frame_image.height(),
        probe,
        drogue,
        fixed_offset,
        frame_image,
    })
}

/// Streams the detections up to the frame (they are in increasing frame order).
fn find_frame(session: &Session, frame: u64) -> Result<FrameDetections, OverlayError> {
    let mut before = None;
    let mut after = None;
    for item in session.detections()? {
        let detections = item?;
        if detections.frame == frame {
            return Ok(detections);
        }
        if detections.frame > frame {
            after = Some(detections.frame);
            break;
        }
        before = Some(detections.frame);
    }
    Err(OverlayError::FrameNotDetected {
        frame,
        path: session.detections.path().to_path_buf(),
        before,
        after,
    })
}

/// The names a frame's image may have, in the order tried.
pub fn image_candidates(frame: u64) -> Vec<String> {
    let mut names = Vec::new();
    for stem in [format!("{frame:06}"), frame.to_string()] {
        for ext in ["png", "jpg", "jpeg"] {
            let name = format!("{stem}.{ext}");
            if !names.contains(&name) {
                names.push(name);
            }
        }
    }
    names
}

fn find_image(dir: &Path, frame: u64) -> Result<PathBuf, OverlayError> {
    let tried: Vec<PathBuf> = image_candidates(frame)
        .into_iter()
        .map(|name| dir.join(name))
        .collect();
    match tried.iter().find(|p| p.is_file()) {
        Some(found) => Ok(found.clone()),
        None => Err(OverlayError::MissingImage {
            frame,
            dir: dir.to_path_buf(),
            tried,
        }),
    }
}

/// Decodes the image (format from its content) and checks it has the camera's size.
fn load_image(path: &Path, session: &Session) -> Result<RgbImage, OverlayError> {
    let unreadable = |message: String| OverlayError::UnreadableImage {
        path: path.to_path_buf(),
        message,
    };
    let decoded = image::ImageReader::open(path)
        .map_err(|e| unreadable(e.to_string()))?
        .with_guessed_format()
        .map_err(|e| unreadable(e.to_string()))?
        .decode()
        .map_err(|e| unreadable(e.to_string()))?;
    let camera = &session.camera;
    if (decoded.width(), decoded.height()) != (camera.width, camera.height) {
        return Err(OverlayError::ImageSize {
            path: path.to_path_buf(),
            width: decoded.width(),
            height: decoded.height(),
            camera: session.sources.camera.clone(),
            camera_width: camera.width,
            camera_height: camera.height,
        });
    }
    Ok(decoded.into_rgb8())
}

/// Pixel of a model point seen with `pose` (`T_CO`); `None` behind the camera.
fn project(
    camera: &Camera,
    pose: &Isometry3<f64>,
    model: &KeypointModel,
    index: usize,
) -> Option<PixelPoint> {
    camera.project(&(pose * Point3::from(model.points()[index].xyz_m)).coords)
}

/// Solves one object cold and measures its reprojection.
fn object_overlay(
    camera: &Camera,
    model: &KeypointModel,
    object: ObjectKind,
    observations: &[Observation],
    options: &PnpOptions,
) -> ObjectOverlay {
    let status = solve_pose(camera, model, observations, None, options);
    let estimate = status.estimate();
    let pose = estimate.map(|e| e.pose);
    let keypoints: Vec<KeypointOverlay> = observations
        .iter()
        .enumerate()
        .map(|(i, obs)| {
            let reprojected_px = pose
                .as_ref()
                .and_then(|p| project(camera, p, model, obs.point));
            KeypointOverlay {
                id: model.points()[obs.point].id.clone(),
                detected_px: obs.px,
                sigma_px: obs.sigma_px,
                reprojected_px,
                error_px: reprojected_px.map(|r| (obs.px - r).norm()),
                inlier: estimate.map(|e| e.inliers[i]),
            }
        })
        .collect();
    let model_points = match &pose {
        Some(p) => (0..model.len())
            .filter_map(|i| {
                project(camera, p, model, i).map(|px| ProjectedPoint {
                    id: model.points()[i].id.clone(),
                    px,
                })
            })
            .collect(),
        None => Vec::new(),
    };
    let inlier_errors: Vec<f64> = keypoints
        .iter()
        .filter(|k| k.inlier == Some(true))
        .filter_map(|k| k.error_px)
        .collect();
    let rejection = match &status {
        PoseStatus::Solved(_) => None,
        PoseStatus::Rejected(r) => Some(r.clone()),
    };
    ObjectOverlay {
        object,
        rejection: rejection.as_ref().map(|r| r.reason),
        rejection_message: rejection.map(|r| r.message),
        keypoints,
        model_points,
        rms_reprojection_px: root_mean_square(&inlier_errors),
        inliers: inlier_errors.len(),
        pose,
    }
}

/// `sqrt(mean(x²))`, `None` for no values.
fn root_mean_square(values: &[f64]) -> Option<f64> {
    (!values.is_empty())
        .then(|| (values.iter().map(|v| v * v).sum::<f64>() / values.len() as f64).sqrt())
}

/// The probe as a fixed-offset pipeline sees it: `T_CB` from the nominal mount
/// (`T_BC,nom⁻¹`) instead of the probe solution.
fn fixed_offset_layer(
    session: &Session,
    probe: &ObjectOverlay,
    drogue: &ObjectOverlay,
) -> FixedOffsetLayer {
    let Some(nominal) = session.mount else {
        return FixedOffsetLayer::NoNominalMount;
    };
    let Some(observed_pose) = probe.pose else {
        return FixedOffsetLayer::ProbeNotSolved;
    };
    let nominal_pose = nominal.body_from_camera().inverse();
    let model = &session.probe;
    let points: Vec<ProbeShift> = (0..model.len())
        .map(|i| {
            let observed_px = project(&session.camera, &observed_pose, model, i);
            let fixed_offset_px = project(&session.camera, &nominal_pose, model, i);
            let displacement_px = observed_px
                .zip(fixed_offset_px)
                .map(|(a, b)| (b - a).norm());
            ProbeShift {
                id: model.points()[i].id.clone(),
                observed_px,
                fixed_offset_px,
                displacement_px,
            }
        })
        .collect();
    let reference_id = model.reference_id().to_string();
    let reference_displacement_px = points
        .iter()
        .find(|p| p.id == reference_id)
        .and_then(|p| p.displacement_px);
    let displacements: Vec<f64> = points.iter().filter_map(|p| p.displacement_px).collect();
    FixedOffsetLayer::Shown(FixedOffsetProbe {
        reference_id,
        reference_displacement_px,
        rms_displacement_px: root_mean_square(&displacements),
        vector_error_mm: vector_error_mm(&nominal, &observed_pose, drogue, &session.drogue),
        points,
    })
}

/// The frame's fixed-offset error of the probe-to-drogue vector (mm), when the drogue was solved.
fn vector_error_mm(
    nominal: &Mount,
    observed_pose: &Isometry3<f64>,
    drogue: &ObjectOverlay,
    drogue_model: &KeypointModel,
) -> Option<f64> {
    let drogue_pose = drogue.pose?;
    let x_c = (drogue_pose * Point3::from(drogue_model.reference_point())).coords;
    let error_m = fixed_offset_error(nominal, &observed_mount(observed_pose), &x_c);
    Some(error_m.norm() * 1000.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn image_names_are_tried_padded_first_without_repeats() {
        assert_eq!(
            image_candidates(123),
            [
                "000123.png",
                "000123.jpg",
                "000123.jpeg",
                "123.png",
                "123.jpg",
                "123.jpeg"
            ]
        );
        assert_eq!(
            image_candidates(1_234_567),
            ["1234567.png", "1234567.jpg", "1234567.jpeg"]
        );
    }

    #[test]
    fn messages_name_the_nearest_frames() {
        let e = OverlayError::FrameNotDetected {
            frame: 7,
            path: PathBuf::from("d.csv"),
            before: Some(6),
            after: Some(9),
        };
        assert_eq!(
            e.to_string(),
            "frame 7 has no detections in d.csv (the nearest frames with detections are 6 and 9)"
        );
    }

    #[test]
    fn root_mean_square_of_a_3_4_pair() {
        // sqrt((9 + 16) / 2) = sqrt(12.5)
        assert!((root_mean_square(&[3.0, 4.0]).unwrap() - 12.5f64.sqrt()).abs() < 1e-15);
        assert_eq!(root_mean_square(&[]), None);
    }
}
