//! `mountdrift camera from-exif` through the real binary: the camera file it writes loads as a
//! camera, and bad input exits with code 2 and leaves no file.

use assert_cmd::Command;
use mountdrift::session::CameraFile;

fn fixture(name: &str) -> std::path::PathBuf {
    std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/exif")
        .join(name)
}

#[test]
fn writes_a_camera_file_that_loads() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("camera.yaml");
    Command::cargo_bin("mountdrift")
        .unwrap()
        .args(["camera", "from-exif"])
        .arg(fixture("cm.jpg"))
        .arg("--out")
        .arg(&out)
        .assert()
        .success();
    let text = std::fs::read_to_string(&out).unwrap();
    assert!(text.starts_with("# approximate intrinsics from EXIF"));
    let file: CameraFile = serde_saphyr::from_str(&text).unwrap();
    let camera = file.to_camera().unwrap();
    // CHECK_VALUES.md section 7 worked example scaled to the 400 px fixture: 291.734 px.
    assert!((camera.fx - 291.734).abs() < 1e-3, "{}", camera.fx);
    assert!((camera.cx - 199.5).abs() < 1e-12);
}

#[test]
fn an_image_without_focal_tags_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("camera.yaml");
    let assert = Command::cargo_bin("mountdrift")
        .unwrap()
        .args(["camera", "from-exif"])
        .arg(fixture("no_focal.jpg"))
        .arg("--out")
        .arg(&out)
        .assert()
        .code(2);
    let stderr = String::from_utf8_lossy(&assert.get_output().stderr).to_string();
    assert!(stderr.contains("no_focal.jpg"), "{stderr}");
    assert!(!out.exists());
}
