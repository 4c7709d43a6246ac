//! Camera projection and undistortion against OpenCV: fixtures/opencv/projection.json and
//! undistortion.json, written by scripts/opencv_reference.py with opencv-python-headless (PyPI)
//! 5.0.0.93 (cv2.projectPoints, cv2.fisheye.projectPoints, cv2.undistortPoints,
//! cv2.fisheye.undistortPoints).

mod pnp_common;

use pnp_common::{camera_from_fixture, fixture, vec2, vec3};

#[test]
fn projection_matches_opencv_to_a_micro_pixel() {
    // Source: OpenCV cv2.projectPoints (Brown-Conrady) and cv2.fisheye.projectPoints
    // (Kannala-Brandt, skew passed as alpha = skew / fx), 300 random points per camera.
    let fx = fixture("projection.json");
    let mut checked = 0;
    for case in fx["cases"].as_array().unwrap() {
        let cam = camera_from_fixture(&case["camera"]);
        for p in case["points"].as_array().unwrap() {
            let ours = cam.project(&vec3(&p["p_c"])).expect("in front");
            let err = (ours - vec2(&p["px"])).norm();
            assert!(
                err < 1e-6,
                "{}: {err} px",
                case["camera_name"].as_str().unwrap()
            );
            checked += 1;
        }
    }
    assert_eq!(checked, 6 * 300);
}

#[test]
fn opencv_pinhole_projection_ignores_skew() {
    // Source: the same script; OpenCV's projectPoints reads fx, fy, cx, cy only, which is why the
    // pinhole fixtures carry no skew (ours honours it: u = fx x + skew y + cx).
    let fx = fixture("projection.json");
    assert!(fx["pinhole_skew_effect_px"].as_f64().unwrap().abs() < 1e-12);
}

#[test]
fn undistortion_matches_opencv_to_1e9() {
    // Source: OpenCV cv2.undistortPoints / cv2.fisheye.undistortPoints with termination
    // (COUNT + EPS, 10000, 1e-15): the reference reprojects onto its pixel to < 1e-11 px.
    let fx = fixture("undistortion.json");
    assert!(fx["max_reprojection_error_px"].as_f64().unwrap() < 1e-11);
    let mut checked = 0;
    for case in fx["cases"].as_array().unwrap() {
        let cam = camera_from_fixture(&case["camera"]);
        for p in case["points"].as_array().unwrap() {
            let ours = cam.undistort(&vec2(&p["px"])).expect("undistortable");
            let err = (ours - vec2(&p["normalized"])).norm();
            assert!(
                err < 1e-9,
                "{}: {err}",
                case["camera_name"].as_str().unwrap()
            );
            checked += 1;
        }
    }
    assert_eq!(checked, 5 * 200);
}
