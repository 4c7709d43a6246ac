//! Overlays of a simulated session with rendered frames (the library, no binary): marks land on
//! the detected pixels, the reprojection error is small on a clean session, the fixed-offset
//! displacement equals an independent projection of the probe through the nominal and the
//! observed mount (and the simulator's true mount), and a session without a nominal mount gets
//! no fixed-offset layer. The simulated frames themselves show the probe features where the
//! camera model (checked against OpenCV in tests/camera_opencv.rs) projects them.

mod overlay_common;

use std::path::Path;

use approx::assert_relative_eq;
use image::RgbImage;
use mountdrift::camera::Camera;
use mountdrift::commands::overlay::{self, FixedOffsetLayer, OverlayOptions, OverlayOutcome};
use mountdrift::geometry::{Mount, YawPitchRoll};
use mountdrift::pnp::{solve_pose, PnpOptions};
use mountdrift::report::overlay::{
    draw_overlay, overlay_text_lines, DETECTION_COLOUR, FIXED_OFFSET_COLOUR, REPROJECTION_COLOUR,
};
use mountdrift::session::Session;
use mountdrift::sim::render::FEATURE_FILL;
use nalgebra::{Isometry3, Point3, Translation3, UnitQuaternion, Vector3};
use overlay_common::{detected_pixels, Bench, FRAME};

fn overlay_of(manifest: &Path) -> OverlayOutcome {
    overlay::run(&OverlayOptions {
        session: manifest.to_path_buf(),
        frame: FRAME,
    })
    .unwrap()
}

fn pixel(img: &RgbImage, u: f64, v: f64) -> [u8; 3] {
    img.get_pixel(u.round() as u32, v.round() as u32).0
}

/// Whether some pixel within `radius` of (u, v) has exactly `colour`.
fn colour_near(img: &RgbImage, u: f64, v: f64, radius: i64, colour: [u8; 3]) -> bool {
    let (cu, cv) = (u.round() as i64, v.round() as i64);
    (cv - radius..=cv + radius).any(|y| {
        (cu - radius..=cu + radius).any(|x| {
            x >= 0
                && y >= 0
                && (x as u32) < img.width()
                && (y as u32) < img.height()
                && img.get_pixel(x as u32, y as u32).0 == colour
        })
    })
}

#[test]
fn the_overlay_marks_every_detection_and_reprojection_where_it_belongs() {
    let bench = Bench::new();
    let outcome = overlay_of(&bench.manifest());
    let img = draw_overlay(&outcome);
    assert_eq!((img.width(), img.height()), (640, 480), "the camera's size");
    // Detections read from the CSV itself, not from the outcome.
    let detections = detected_pixels(&bench.path("detections.csv"), FRAME);
    assert_eq!(detections.len(), 15, "7 probe and 8 drogue keypoints");
    for (id, u, v) in &detections {
        assert_eq!(
            pixel(&img, *u, *v),
            DETECTION_COLOUR,
            "no detection mark at {id} ({u}, {v})"
        );
    }
    // Every reprojected model point has bluish-green cross arms around it.
    for object in [&outcome.probe, &outcome.drogue] {
        assert!(!object.model_points.is_empty());
        for p in &object.model_points {
            assert!(
                colour_near(&img, p.px.x, p.px.y, 12, REPROJECTION_COLOUR),
                "no reprojection mark near {}",
                p.id
            );
        }
    }
    // The nominal mount is off, so the fixed-offset marks are drawn.
    assert!(img.pixels().any(|p| p.0 == FIXED_OFFSET_COLOUR));
    // The frame underneath is kept where nothing is drawn: the bottom-right corner is sky.
    assert_eq!(
        img.get_pixel(639, 479),
        outcome.frame_image.get_pixel(639, 479)
    );
}

#[test]
fn a_clean_session_reprojects_within_two_pixels() {
    let bench = Bench::new();
    let outcome = overlay_of(&bench.manifest());
    for object in [&outcome.probe, &outcome.drogue] {
        assert!(object.rejection.is_none());
        let rms = object.rms_reprojection_px.unwrap();
        // 0.4 px white noise per axis: the RMS 2-D residual is about 0.4·sqrt(2)·sqrt(1 − 6/2n).
        assert!(rms < 2.0, "{:?} reprojection RMS {rms} px", object.object);
        assert_eq!(
            object.inliers,
            object.keypoints.len(),
            "no outliers were simulated"
        );
        for k in &object.keypoints {
            let error = (k.detected_px - k.reprojected_px.unwrap()).norm();
            assert_relative_eq!(k.error_px.unwrap(), error, epsilon = 1e-12);
        }
    }
    let lines = overlay_text_lines(&outcome);
    assert!(
        lines
            .iter()
            .any(|l| l.starts_with("probe  reprojection RMS")),
        "{lines:?}"
    );
    // The per-frame vector error comes from this frame's mount, not from truth: it says so.
    assert!(
        lines
            .iter()
            .any(|l| l.starts_with("fixed-offset vector error, this frame: ")),
        "{lines:?}"
    );
}

/// `T_CB` of a mount: `(R_BC, p_BC)⁻¹`, built here from DESIGN section 2 directly.
fn camera_from_body(mount: &Mount) -> Isometry3<f64> {
    let r_bs = mount.attitude.to_rotation();
    let perm = nalgebra::Matrix3::new(0.0, 0.0, 1.0, 1.0, 0.0, 0.0, 0.0, 1.0, 0.0);
    let r_bc = nalgebra::Rotation3::from_matrix_unchecked(r_bs.matrix() * perm);
    Isometry3::from_parts(
        Translation3::from(mount.position_m),
        UnitQuaternion::from_rotation_matrix(&r_bc),
    )
    .inverse()
}

fn project(camera: &Camera, pose: &Isometry3<f64>, p: &Vector3<f64>) -> nalgebra::Vector2<f64> {
    camera.project(&(pose * Point3::from(*p)).coords).unwrap()
}

/// The true mount of a frame from truth.csv.
fn true_mount(truth_csv: &Path, frame: u64) -> Mount {
    let mut reader = csv::Reader::from_path(truth_csv).unwrap();
    let row = reader
        .records()
        .map(Result::unwrap)
        .find(|r| r[0].parse::<u64>().unwrap() == frame)
        .unwrap();
    let f = |i: usize| row[i].parse::<f64>().unwrap();
    Mount {
        position_m: Vector3::new(f(2), f(3), f(4)),
        attitude: YawPitchRoll::new(f(5).to_radians(), f(6).to_radians(), f(7).to_radians()),
    }
}

#[test]
fn the_fixed_offset_displacement_equals_an_independent_projection() {
    let bench = Bench::new();
    let outcome = overlay_of(&bench.manifest());
    let FixedOffsetLayer::Shown(fixed) = &outcome.fixed_offset else {
        panic!(
            "the session has a nominal mount: {:?}",
            outcome.fixed_offset
        );
    };
    // Independently: solve the probe from the frame's detections, project its reference point
    // with the observed pose and with T_CB of the nominal mount.
    let session = Session::load(&bench.manifest()).unwrap();
    let frame = session
        .detections()
        .unwrap()
        .map(Result::unwrap)
        .find(|f| f.frame == FRAME)
        .unwrap();
    let status = solve_pose(
        &session.camera,
        &session.probe,
        &frame.probe,
        None,
        &PnpOptions::default(),
    );
    let observed_pose = status.estimate().unwrap().pose;
    let nominal_pose = camera_from_body(&session.mount.unwrap());
    let tip = session.probe.reference_point();
    let fixed_px = project(&session.camera, &nominal_pose, &tip);
    let observed_px = project(&session.camera, &observed_pose, &tip);
    let displacement_px = (fixed_px - observed_px).norm();
    assert_eq!(fixed.reference_id, "tip");
    assert_relative_eq!(
        fixed.reference_displacement_px.unwrap(),
        displacement_px,
        epsilon = 1e-9
    );
    // Against the simulator's true mount: the observed pose differs from it by the pose noise
    // only (0.4 px keypoints), so the displacement agrees to a fraction of a pixel.
    let true_pose = camera_from_body(&true_mount(&bench.path("truth.csv"), FRAME));
    let true_displacement_px = (fixed_px - project(&session.camera, &true_pose, &tip)).norm();
    assert!(
        (displacement_px - true_displacement_px).abs() < 0.5,
        "{displacement_px} px vs {true_displacement_px} px with the true mount"
    );
    // The nominal error (a few mm, 0.3-0.4 deg) moves the tip, 2.9 m from the camera, by
    // several pixels.
    assert!(displacement_px > 2.0, "{displacement_px}");
    // Every probe point shifted, and the RMS summarises them.
    let shifts: Vec<f64> = fixed
        .points
        .iter()
        .map(|p| p.displacement_px.unwrap())
        .collect();
    let rms = (shifts.iter().map(|d| d * d).sum::<f64>() / shifts.len() as f64).sqrt();
    assert_relative_eq!(fixed.rms_displacement_px.unwrap(), rms, epsilon = 1e-12);
    assert!(fixed.vector_error_mm.unwrap() > 0.0);
}

#[test]
fn without_a_nominal_mount_the_fixed_offset_layer_is_left_out_and_said_so() {
    let bench = Bench::new();
    let manifest = bench.manifest_variant("no-mount.yaml", "mount: mount.yaml\n", "");
    let outcome = overlay_of(&manifest);
    assert_eq!(outcome.fixed_offset, FixedOffsetLayer::NoNominalMount);
    let img = draw_overlay(&outcome);
    assert!(img.pixels().all(|p| p.0 != FIXED_OFFSET_COLOUR));
    for (id, u, v) in detected_pixels(&bench.path("detections.csv"), FRAME) {
        assert_eq!(pixel(&img, u, v), DETECTION_COLOUR, "{id}");
    }
    let lines = overlay_text_lines(&outcome);
    assert!(
        lines
            .iter()
            .any(|l| l == "no nominal mount: fixed-offset layer not drawn"),
        "{lines:?}"
    );
}

/// `T_CB` and `T_CD` of a frame from poses.csv (rotation vectors and translations).
fn true_poses(poses_csv: &Path, frame: u64) -> (Isometry3<f64>, Isometry3<f64>) {
    let mut reader = csv::Reader::from_path(poses_csv).unwrap();
    let row = reader
        .records()
        .map(Result::unwrap)
        .find(|r| r[0].parse::<u64>().unwrap() == frame)
        .unwrap();
    let f = |i: usize| row[i].parse::<f64>().unwrap();
    let pose = |k: usize| {
        Isometry3::from_parts(
            Translation3::new(f(k + 3), f(k + 4), f(k + 5)),
            UnitQuaternion::from_scaled_axis(Vector3::new(f(k), f(k + 1), f(k + 2))),
        )
    };
    (pose(2), pose(8))
}

#[test]
fn simulated_frames_show_both_objects_where_the_camera_projects_them() {
    let bench = Bench::new();
    let manifest = std::fs::read_to_string(bench.manifest()).unwrap();
    assert!(manifest.contains("\nframes: frames\n"), "{manifest}");
    let mut names: Vec<String> = std::fs::read_dir(bench.path("frames"))
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    names.sort();
    assert_eq!(
        names,
        ["000000.png", "000005.png"],
        "every 5th of 10 frames"
    );
    let session = Session::load(&bench.manifest()).unwrap();
    for frame in [0, 5] {
        let img = image::open(bench.path(&format!("frames/{frame:06}.png")))
            .unwrap()
            .into_rgb8();
        assert_eq!((img.width(), img.height()), (640, 480));
        let (t_cb, t_cd) = true_poses(&bench.path("poses.csv"), frame);
        let probe_px: Vec<_> = session
            .probe
            .points()
            .iter()
            .map(|p| (p.id.as_str(), project(&session.camera, &t_cb, &p.xyz_m)))
            .collect();
        // Features drawn apart from the others (tip and collar nearly line up with the view
        // and cover each other): the pixel at each is the feature fill.
        let apart: Vec<_> = probe_px
            .iter()
            .filter(|(id, px)| {
                probe_px
                    .iter()
                    .all(|(other, q)| other == id || (px - q).norm() > 20.0)
            })
            .collect();
        assert!(apart.len() >= 4, "{probe_px:?}");
        for (id, px) in apart {
            assert_eq!(
                pixel(&img, px.x, px.y),
                FEATURE_FILL,
                "probe {id} in frame {frame}"
            );
        }
        // The drogue is small at 6 m: its hub differs from the sky of that image row.
        let hub = project(&session.camera, &t_cd, &session.drogue.reference_point());
        let sky = img.get_pixel(0, hub.y.round() as u32).0;
        let seen = pixel(&img, hub.x, hub.y);
        let difference = (0..3)
            .map(|i| (i32::from(seen[i]) - i32::from(sky[i])).abs())
            .max();
        assert!(difference.unwrap() > 30, "hub {seen:?} vs sky {sky:?}");
    }
}

#[test]
fn the_same_scenario_renders_the_same_frames() {
    let (a, b) = (Bench::new(), Bench::new());
    for name in ["frames/000000.png", "frames/000005.png"] {
        assert_eq!(
            std::fs::read(a.path(name)).unwrap(),
            std::fs::read(b.path(name)).unwrap(),
            "{name}"
        );
    }
}

#[test]
fn a_probe_that_cannot_be_solved_is_reported_and_its_keypoints_still_drawn() {
    let bench = Bench::new();
    // Keep only 3 probe keypoints of the frame: too few for a pose.
    let path = bench.path("detections.csv");
    let text = std::fs::read_to_string(&path).unwrap();
    let prefix = format!("{FRAME},");
    let mut probe_rows = 0;
    let kept: Vec<&str> = text
        .lines()
        .filter(|line| {
            if line.starts_with(&prefix) && line.contains(",probe,") {
                probe_rows += 1;
                probe_rows <= 3
            } else {
                true
            }
        })
        .collect();
    std::fs::write(&path, kept.join("\n") + "\n").unwrap();
    let outcome = overlay_of(&bench.manifest());
    assert_eq!(outcome.fixed_offset, FixedOffsetLayer::ProbeNotSolved);
    assert!(outcome.probe.rejection.is_some() && outcome.probe.model_points.is_empty());
    assert!(outcome.drogue.rms_reprojection_px.unwrap() < 2.0);
    let img = draw_overlay(&outcome);
    for (id, u, v) in detected_pixels(&path, FRAME) {
        assert_eq!(pixel(&img, u, v), DETECTION_COLOUR, "{id}");
    }
    let lines = overlay_text_lines(&outcome);
    assert!(
        lines.iter().any(|l| l.starts_with("probe  not solved:")),
        "{lines:?}"
    );
    assert!(
        lines
            .iter()
            .any(|l| l == "probe not solved: fixed-offset layer not drawn"),
        "{lines:?}"
    );
}
