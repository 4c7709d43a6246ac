//! `mountdrift overlay`, `simulate --render-every` and `completions` through the real binary:
//! the PNG written is the overlay the library draws, bad input exits with code 2 and a message
//! naming the file or frame (and writes nothing), and completion scripts list the subcommands.

mod overlay_common;

use std::path::Path;

use assert_cmd::Command;
use mountdrift::commands::overlay::{self, OverlayOptions};
use mountdrift::report::overlay::{draw_overlay, DETECTION_COLOUR};
use overlay_common::{detected_pixels, Bench, FRAME};

fn mountdrift() -> Command {
    Command::cargo_bin("mountdrift").unwrap()
}

fn overlay_cmd(manifest: &Path, frame: u64, out: &Path) -> assert_cmd::assert::Assert {
    mountdrift()
        .arg("overlay")
        .arg(manifest)
        .args(["--frame", &frame.to_string(), "--out"])
        .arg(out)
        .assert()
}

fn stderr(assert: &assert_cmd::assert::Assert) -> String {
    String::from_utf8_lossy(&assert.get_output().stderr).into_owned()
}

#[test]
fn overlay_writes_the_png_the_library_draws() {
    let bench = Bench::new();
    let out = bench.dir.path().join("overlay.png");
    let assert = overlay_cmd(&bench.manifest(), FRAME, &out).success();
    let stdout = String::from_utf8_lossy(&assert.get_output().stdout).into_owned();
    assert!(stdout.contains("reprojection RMS"), "{stdout}");
    assert!(stdout.contains("fixed offset: probe shifted"), "{stdout}");
    let written = image::open(&out).unwrap().into_rgb8();
    assert_eq!((written.width(), written.height()), (640, 480));
    for (id, u, v) in detected_pixels(&bench.path("detections.csv"), FRAME) {
        let p = written.get_pixel(u.round() as u32, v.round() as u32).0;
        assert_eq!(p, DETECTION_COLOUR, "{id}");
    }
    let outcome = overlay::run(&OverlayOptions {
        session: bench.manifest(),
        frame: FRAME,
    })
    .unwrap();
    assert!(
        written == draw_overlay(&outcome),
        "the file is the library's drawing"
    );
}

#[test]
fn overlay_json_carries_the_numbers() {
    let bench = Bench::new();
    let out = bench.dir.path().join("overlay.png");
    let assert = mountdrift()
        .arg("overlay")
        .arg(bench.manifest())
        .args(["--frame", "5", "--json", "--out"])
        .arg(&out)
        .assert()
        .success();
    let json: serde_json::Value = serde_json::from_slice(&assert.get_output().stdout).unwrap();
    assert_eq!(json["frame"], 5);
    assert_eq!(json["fixed_offset"]["status"], "shown");
    assert_eq!(json["fixed_offset"]["reference_id"], "tip");
    assert_eq!(json["probe"]["keypoints"].as_array().unwrap().len(), 7);
    assert!(json["drogue"]["rms_reprojection_px"].as_f64().unwrap() < 2.0);
}

#[test]
fn a_missing_frame_image_names_the_paths_tried() {
    let bench = Bench::new();
    std::fs::remove_file(bench.path("frames/000005.png")).unwrap();
    let out = bench.dir.path().join("overlay.png");
    let assert = overlay_cmd(&bench.manifest(), FRAME, &out).code(2);
    let message = stderr(&assert);
    assert!(message.contains("no image of frame 5"), "{message}");
    assert!(
        message.contains("000005.png") && message.contains("5.jpeg"),
        "{message}"
    );
    assert!(!out.exists());
}

#[test]
fn an_image_of_the_wrong_size_is_refused() {
    let bench = Bench::new();
    let image_path = bench.path("frames/000005.png");
    image::RgbImage::new(320, 240).save(&image_path).unwrap();
    let out = bench.dir.path().join("overlay.png");
    let assert = overlay_cmd(&bench.manifest(), FRAME, &out).code(2);
    let message = stderr(&assert);
    assert!(message.contains("000005.png"), "{message}");
    assert!(
        message.contains("320 x 240") && message.contains("640 x 480"),
        "{message}"
    );
    assert!(message.contains("camera.yaml"), "{message}");
    assert!(!out.exists());
}

#[test]
fn an_image_that_is_not_an_image_is_refused() {
    let bench = Bench::new();
    std::fs::write(bench.path("frames/000005.png"), b"not a picture").unwrap();
    let out = bench.dir.path().join("overlay.png");
    let message = stderr(&overlay_cmd(&bench.manifest(), FRAME, &out).code(2));
    assert!(
        message.contains("cannot read the image") && message.contains("000005.png"),
        "{message}"
    );
}

#[test]
fn a_frame_without_detections_is_refused() {
    let bench = Bench::new();
    let out = bench.dir.path().join("overlay.png");
    let message = stderr(&overlay_cmd(&bench.manifest(), 999, &out).code(2));
    assert!(message.contains("frame 999 has no detections"), "{message}");
    assert!(message.contains("detections.csv"), "{message}");
    assert!(
        message.contains("the last frame with detections is 9"),
        "{message}"
    );
    assert!(!out.exists());
}

#[test]
fn a_session_without_a_frames_folder_is_refused() {
    let bench = Bench::new();
    let manifest = bench.manifest_variant("no-frames.yaml", "frames: frames\n", "");
    let out = bench.dir.path().join("overlay.png");
    let message = stderr(&overlay_cmd(&manifest, FRAME, &out).code(2));
    assert!(message.contains("no-frames.yaml"), "{message}");
    assert!(message.contains("names no frames folder"), "{message}");
    assert!(!out.exists());
}

#[test]
fn simulate_renders_every_nth_frame_on_request() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("clean");
    let assert = mountdrift()
        .args(["simulate", "--preset", "clean", "--duration", "0.2"])
        .args(["--render-every", "2", "--json", "--out"])
        .arg(&out)
        .assert()
        .success();
    let json: serde_json::Value = serde_json::from_slice(&assert.get_output().stdout).unwrap();
    assert_eq!(json["counts"]["frames_rendered"], 3);
    assert!(json["files"]
        .as_array()
        .unwrap()
        .iter()
        .any(|f| f == "frames"));
    // 25 Hz for 0.2 s: frames 0 to 4, of which 0, 2 and 4 are rendered, 1024 x 768 (fisheye).
    let mut names: Vec<String> = std::fs::read_dir(out.join("frames"))
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    names.sort();
    assert_eq!(names, ["000000.png", "000002.png", "000004.png"]);
    let size = image::image_dimensions(out.join("frames/000002.png")).unwrap();
    assert_eq!(size, (1024, 768));
    let manifest = std::fs::read_to_string(out.join("session.yaml")).unwrap();
    assert!(manifest.contains("frames: frames"), "{manifest}");
    let scenario = std::fs::read_to_string(out.join("scenario.yaml")).unwrap();
    assert!(
        scenario.contains("render_every: 2"),
        "the written scenario records it"
    );
    // Nothing temporary is left behind.
    let leftovers: Vec<_> = std::fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .filter(|n| n.starts_with(".mountdrift"))
        .collect();
    assert!(leftovers.is_empty(), "{leftovers:?}");
    // Rendering again replaces the folder whole.
    mountdrift()
        .args([
            "simulate",
            "--preset",
            "clean",
            "--duration",
            "0.2",
            "--render-every",
            "4",
            "--out",
        ])
        .arg(&out)
        .assert()
        .success();
    let count = std::fs::read_dir(out.join("frames")).unwrap().count();
    assert_eq!(count, 2, "frames 0 and 4 only");
}

#[test]
fn render_every_zero_is_a_usage_error() {
    let dir = tempfile::tempdir().unwrap();
    mountdrift()
        .args([
            "simulate",
            "--preset",
            "clean",
            "--render-every",
            "0",
            "--out",
        ])
        .arg(dir.path().join("x"))
        .assert()
        .code(2);
}

#[test]
fn render_every_zero_in_a_scenario_file_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let scenario = dir.path().join("zero.yaml");
    let text = overlay_common::SCENARIO.replace("render_every: 5", "render_every: 0");
    std::fs::write(&scenario, text).unwrap();
    let assert = mountdrift()
        .arg("simulate")
        .arg(&scenario)
        .arg("--out")
        .arg(dir.path().join("out"))
        .assert()
        .code(2);
    let message = stderr(&assert);
    assert!(
        message.contains("zero.yaml") && message.contains("render_every"),
        "{message}"
    );
    assert!(!dir.path().join("out").exists(), "nothing is written");
}

#[test]
fn completion_scripts_list_the_subcommands() {
    let bash = mountdrift()
        .args(["completions", "bash"])
        .assert()
        .success();
    let script = String::from_utf8_lossy(&bash.get_output().stdout).into_owned();
    for word in ["audit", "simulate", "overlay", "completions"] {
        assert!(script.contains(word), "bash script lacks {word}");
    }
    for shell in ["zsh", "fish"] {
        let out = mountdrift().args(["completions", shell]).assert().success();
        let script = String::from_utf8_lossy(&out.get_output().stdout).into_owned();
        assert!(
            script.contains("simulate") && script.contains("mountdrift"),
            "{shell}"
        );
    }
    mountdrift().args(["completions", "tcsh"]).assert().code(2);
}
