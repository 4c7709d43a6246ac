//! Bad and good session inputs through the real `mountdrift audit` binary: every bad input exits
//! with code 2, names the file, the line (and column where it applies), and leaves no output.
//!
//! Each test copies the hand-written session in fixtures/sessions/minimal into a temporary folder
//! and breaks one thing. Line numbers below refer to those fixture files.

use std::fs;
use std::path::{Path, PathBuf};

use assert_cmd::Command;
use tempfile::TempDir;

/// A copy of the minimal session in a temporary folder.
struct Case {
    dir: TempDir,
}

impl Case {
    fn new() -> Self {
        let dir = tempfile::tempdir().unwrap();
        let fixture = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/sessions/minimal");
        for entry in fs::read_dir(fixture).unwrap() {
            let path = entry.unwrap().path();
            fs::copy(&path, dir.path().join(path.file_name().unwrap())).unwrap();
        }
        Self { dir }
    }

    fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join(name)
    }

    fn write(&self, name: &str, content: impl AsRef<[u8]>) -> &Self {
        fs::write(self.path(name), content).unwrap();
        self
    }

    fn read(&self, name: &str) -> String {
        fs::read_to_string(self.path(name)).unwrap()
    }

    /// Replaces the first occurrence of `from`, which must be present.
    fn replace(&self, name: &str, from: &str, to: &str) -> &Self {
        let text = self.read(name);
        assert!(text.contains(from), "{name} has no {from:?}");
        self.write(name, text.replacen(from, to, 1))
    }

    /// Sets field `field` (0-based) of line `line` (1-based) of a CSV file.
    fn set_field(&self, name: &str, line: usize, field: usize, value: &str) -> &Self {
        let text = self.read(name);
        let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
        let mut fields: Vec<&str> = lines[line - 1].split(',').collect();
        fields[field] = value;
        lines[line - 1] = fields.join(",");
        self.write(name, lines.join("\n") + "\n")
    }

    fn audit(&self, extra: &[&str]) -> assert_cmd::assert::Assert {
        Command::cargo_bin("mountdrift")
            .unwrap()
            .current_dir(self.dir.path())
            .args(["audit", "session.yaml", "--out", "out"])
            .args(extra)
            .assert()
    }

    /// Runs the audit, expects exit code 2, nothing on stdout and no output folder; returns
    /// stderr.
    fn bad(&self) -> String {
        self.bad_with(&[])
    }

    fn bad_with(&self, extra: &[&str]) -> String {
        let out = self.audit(extra).code(2).get_output().clone();
        assert!(out.stdout.is_empty(), "stdout: {:?}", out.stdout);
        assert!(!self.path("out").exists(), "an output folder was left");
        let stderr = String::from_utf8(out.stderr).unwrap();
        assert_eq!(
            stderr.lines().count(),
            1,
            "one error line expected: {stderr}"
        );
        assert!(!stderr.contains("panicked"), "{stderr}");
        stderr
    }
}

/// Asserts the message names the file, the line and (if given) the column, then the text.
fn assert_located(stderr: &str, file: &str, line: u64, column: Option<&str>, text: &str) {
    let place = match column {
        Some(c) => format!("error: {file} line {line}, column {c}: "),
        None => format!("error: {file} line {line}: "),
    };
    assert!(
        stderr.starts_with(&place),
        "expected {place:?} in {stderr:?}"
    );
    assert!(stderr.contains(text), "expected {text:?} in {stderr:?}");
}

/// Asserts the message names a YAML file and line, with a character column.
fn assert_yaml_located(stderr: &str, file: &str, line: u64, text: &str) {
    let place = format!("error: {file} line {line}, column ");
    assert!(
        stderr.starts_with(&place),
        "expected {place:?} in {stderr:?}"
    );
    assert!(stderr.contains(text), "expected {text:?} in {stderr:?}");
}

// ---- the valid session ----

#[test]
fn minimal_session_loads_and_writes_report() {
    let case = Case::new();
    let out = case.audit(&["--json"]).code(0).get_output().clone();
    let outcome: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(outcome["frames"]["total"], 4);
    // The hand-written keypoints were projected from the nominal mount (scripts/minimal_session.py):
    // every frame solves, both objects.
    assert_eq!(outcome["frames"]["solved"], 4);
    assert_eq!(outcome["frames"]["both_solved"], 4);
    assert_eq!(outcome["inputs"]["has_truth"], true);
    let mut written: Vec<String> = fs::read_dir(case.path("out"))
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    written.sort();
    for name in ["frames.csv", "report.html", "report.json"] {
        assert!(
            written.iter().any(|w| w == name),
            "{name} missing from {written:?}"
        );
    }
    assert!(written.iter().all(|w| !w.ends_with(".part")), "{written:?}");
    let report: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(case.path("out/report.json")).unwrap()).unwrap();
    assert_eq!(report, outcome);
    let frames = fs::read_to_string(case.path("out/frames.csv")).unwrap();
    assert_eq!(frames.lines().count(), 5, "header and one row per frame");
}

#[test]
fn crlf_and_bom_are_accepted() {
    let case = Case::new();
    for name in [
        "session.yaml",
        "camera.yaml",
        "probe.yaml",
        "drogue.yaml",
        "mount.yaml",
        "detections.csv",
        "truth.csv",
    ] {
        let text = case.read(name).replace('\n', "\r\n");
        case.write(name, format!("\u{feff}{text}"));
    }
    let out = case.audit(&["--json"]).code(0).get_output().clone();
    let outcome: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(outcome["frames"]["total"], 4);
}

#[test]
fn inline_entries_are_accepted() {
    let case = Case::new();
    let detections: String = case
        .read("detections.csv")
        .lines()
        .take(16)
        .map(|l| format!("  {l}\n"))
        .collect();
    let manifest = format!(
        "camera:\n  model: pinhole\n  width: 640\n  height: 480\n  fx: 520\n  fy: 520\n  \
         cx: 319.5\n  cy: 239.5\nprobe: probe.yaml\ndrogue: drogue.yaml\n\
         mount: {{position_m: [2.1, 0.45, -0.55], yaw_deg: 5, pitch_deg: -2, roll_deg: 0.5}}\n\
         detections: |\n{detections}"
    );
    case.write("session.yaml", manifest);
    let out = case.audit(&["--json"]).code(0).get_output().clone();
    let outcome: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(outcome["frames"]["total"], 1);
    assert_eq!(outcome["frames"]["both_solved"], 1);
    assert_eq!(outcome["inputs"]["has_truth"], false);
}

#[test]
fn error_in_inline_detections_points_into_the_manifest() {
    let case = Case::new();
    let detections: String = case
        .read("detections.csv")
        .lines()
        .take(4)
        .map(|l| format!("  {l}\n"))
        .collect();
    let manifest = format!(
        "camera: camera.yaml\nprobe: probe.yaml\ndrogue: drogue.yaml\ndetections: |\n{}",
        detections.replace("366.86", "x")
    );
    case.write("session.yaml", manifest);
    // The CSV header is on manifest line 5, its first row (the broken one) on line 6.
    let e = case.bad();
    assert_located(&e, "session.yaml", 6, Some("\"u\""), "found \"x\"");
}

// ---- detections CSV ----

#[test]
fn missing_csv_column() {
    let case = Case::new();
    case.replace("detections.csv", "point,u,v,", "point,u,");
    let e = case.bad();
    assert_located(&e, "detections.csv", 1, None, "expected a column \"v\"");
}

#[test]
fn unknown_csv_column() {
    let case = Case::new();
    case.replace("detections.csv", "sigma_px", "sigma_px,quality");
    let e = case.bad();
    assert_located(&e, "detections.csv", 1, None, "unknown column \"quality\"");
}

#[test]
fn non_numeric_coordinate() {
    let case = Case::new();
    case.set_field("detections.csv", 4, 4, "abc");
    let e = case.bad();
    assert_located(
        &e,
        "detections.csv",
        4,
        Some("\"u\""),
        "expected a finite number, found \"abc\"",
    );
}

#[test]
fn nan_coordinate() {
    let case = Case::new();
    case.set_field("detections.csv", 10, 5, "NaN");
    let e = case.bad();
    assert_located(&e, "detections.csv", 10, Some("\"v\""), "found \"NaN\"");
}

#[test]
fn infinite_time() {
    let case = Case::new();
    case.set_field("detections.csv", 20, 1, "inf");
    let e = case.bad();
    assert_located(
        &e,
        "detections.csv",
        20,
        Some("\"time_s\""),
        "found \"inf\"",
    );
}

#[test]
fn unknown_object() {
    let case = Case::new();
    case.set_field("detections.csv", 12, 2, "boom");
    let e = case.bad();
    let text = "expected \"probe\" or \"drogue\", found \"boom\"";
    assert_located(&e, "detections.csv", 12, Some("\"object\""), text);
}

#[test]
fn unknown_point_id() {
    let case = Case::new();
    case.set_field("detections.csv", 9, 3, "rim_9");
    let e = case.bad();
    let text = "expected a point id of the drogue model (coupler, rim_0,";
    assert_located(&e, "detections.csv", 9, Some("\"point\""), text);
}

#[test]
fn frame_out_of_order() {
    let case = Case::new();
    // Line 46 starts frame 130; make it frame 105, after frame 120.
    case.set_field("detections.csv", 46, 0, "105");
    let e = case.bad();
    assert_located(
        &e,
        "detections.csv",
        46,
        Some("\"frame\""),
        "frame 105 comes after frame 120",
    );
}

#[test]
fn frame_appearing_again_after_another_frame() {
    let case = Case::new();
    case.set_field("detections.csv", 46, 0, "110");
    let e = case.bad();
    let text = "frame 110 comes after frame 120";
    assert_located(&e, "detections.csv", 46, Some("\"frame\""), text);
}

#[test]
fn time_going_backwards() {
    let case = Case::new();
    // Line 17 starts frame 110.
    case.set_field("detections.csv", 17, 1, "3.0");
    let e = case.bad();
    let text = "time_s 3 of frame 110 is not later than time_s 3.3333 of frame 100";
    assert_located(&e, "detections.csv", 17, Some("\"time_s\""), text);
}

#[test]
fn time_differs_within_a_frame() {
    let case = Case::new();
    case.set_field("detections.csv", 30, 1, "3.7");
    let e = case.bad();
    let text = "expected the same time_s for every row of frame 110 (3.6667), found 3.7";
    assert_located(&e, "detections.csv", 30, Some("\"time_s\""), text);
}

#[test]
fn row_with_an_extra_field() {
    let case = Case::new();
    let text = case.read("detections.csv").replacen("0.5\n", "0.5,1\n", 3);
    case.write("detections.csv", text);
    let e = case.bad();
    assert_located(
        &e,
        "detections.csv",
        2,
        None,
        "expected 7 fields as in the header, found 8",
    );
}

#[test]
fn duplicated_keypoint_in_a_frame() {
    let case = Case::new();
    case.set_field("detections.csv", 3, 3, "tip");
    let e = case.bad();
    let text = "keypoint \"tip\" of the probe appears twice in frame 100";
    assert_located(&e, "detections.csv", 3, Some("\"point\""), text);
}

#[test]
fn negative_sigma() {
    let case = Case::new();
    case.set_field("detections.csv", 2, 6, "-0.5");
    let e = case.bad();
    let text = "expected a positive number of pixels, found \"-0.5\"";
    assert_located(&e, "detections.csv", 2, Some("\"sigma_px\""), text);
}

#[test]
fn empty_detections_file() {
    let case = Case::new();
    case.write("detections.csv", "");
    let e = case.bad();
    assert_located(&e, "detections.csv", 1, None, "the file is empty");
}

#[test]
fn header_without_rows() {
    let case = Case::new();
    case.write("detections.csv", "frame,time_s,object,point,u,v\n");
    let e = case.bad();
    assert_located(&e, "detections.csv", 2, None, "at least one data row");
}

#[test]
fn bad_truth_value() {
    let case = Case::new();
    case.set_field("truth.csv", 3, 9, "north");
    let e = case.bad();
    assert_located(&e, "truth.csv", 3, Some("\"vec_y_m\""), "found \"north\"");
}

// ---- camera ----

#[test]
fn non_positive_focal_length() {
    let case = Case::new();
    case.replace("camera.yaml", "fx: 520.0", "fx: 0");
    let e = case.bad();
    assert_yaml_located(&e, "camera.yaml", 5, "fx must be a positive finite number");
}

#[test]
fn non_positive_image_size() {
    let case = Case::new();
    case.replace("camera.yaml", "height: 480", "height: 0");
    let e = case.bad();
    assert_yaml_located(&e, "camera.yaml", 4, "width and height must be positive");
}

#[test]
fn unknown_camera_model() {
    let case = Case::new();
    case.replace("camera.yaml", "model: pinhole", "model: orthographic");
    let e = case.bad();
    assert_yaml_located(&e, "camera.yaml", 2, "unknown camera model 'orthographic'");
}

#[test]
fn missing_required_key() {
    let case = Case::new();
    case.replace("camera.yaml", "fy: 520.0\n", "");
    let e = case.bad();
    assert!(e.starts_with("error: camera.yaml line "), "{e}");
    assert!(e.contains("missing field `fy`"), "{e}");
}

#[test]
fn misspelt_key() {
    let case = Case::new();
    case.replace("camera.yaml", "pixel_sigma:", "pixel_sigam:");
    let e = case.bad();
    assert_yaml_located(&e, "camera.yaml", 10, "unknown field `pixel_sigam`");
}

// ---- keypoint models ----

#[test]
fn duplicate_point_id() {
    let case = Case::new();
    case.replace("probe.yaml", "id: collar", "id: tip");
    let e = case.bad();
    assert_yaml_located(&e, "probe.yaml", 5, "point id 'tip' appears more than once");
}

#[test]
fn fewer_than_four_points() {
    let case = Case::new();
    let drogue = case.read("drogue.yaml");
    let kept: Vec<&str> = drogue.lines().take(7).collect();
    case.write("drogue.yaml", kept.join("\n"));
    let e = case.bad();
    assert!(e.starts_with("error: drogue.yaml line "), "{e}");
    assert!(e.contains("at least 4 points (got 3)"), "{e}");
}

#[test]
fn reference_is_not_a_point() {
    let case = Case::new();
    case.replace("probe.yaml", "reference: tip", "reference: nose");
    let e = case.bad();
    let text = "reference 'nose' is not the id of a point";
    assert_yaml_located(&e, "probe.yaml", 2, text);
}

#[test]
fn vector_with_two_numbers() {
    let case = Case::new();
    case.replace("probe.yaml", "[4.60, 0.90, -0.40]", "[4.60, 0.90]");
    let e = case.bad();
    assert_yaml_located(
        &e,
        "probe.yaml",
        4,
        "invalid length 2, expected three numbers [x, y, z]",
    );
}

#[test]
fn vector_given_as_a_string() {
    let case = Case::new();
    case.replace("probe.yaml", "[3.00, 0.78, -0.30]", "left");
    let e = case.bad();
    assert_yaml_located(
        &e,
        "probe.yaml",
        8,
        "invalid type: string \"left\", expected three numbers [x, y, z]",
    );
}

// ---- manifest, mount, policy ----

#[test]
fn manifest_names_a_missing_file() {
    let case = Case::new();
    case.replace(
        "session.yaml",
        "drogue: drogue.yaml",
        "drogue: drogue_v2.yaml",
    );
    let e = case.bad();
    assert_yaml_located(
        &e,
        "session.yaml",
        4,
        "cannot find drogue model file \"drogue_v2.yaml\"",
    );
}

#[test]
fn manifest_names_a_missing_frames_folder() {
    let case = Case::new();
    let text = case.read("session.yaml") + "frames: images\n";
    case.write("session.yaml", text);
    let e = case.bad();
    assert_yaml_located(
        &e,
        "session.yaml",
        8,
        "cannot find frames folder \"images\"",
    );
}

#[test]
fn manifest_key_misspelt() {
    let case = Case::new();
    case.replace("session.yaml", "truth: truth.csv", "truths: truth.csv");
    let e = case.bad();
    assert_yaml_located(&e, "session.yaml", 7, "unknown field `truths`");
}

#[test]
fn file_that_is_not_yaml() {
    let case = Case::new();
    case.write("mount.yaml", "{{{ [ position_m:\n");
    let e = case.bad();
    assert_yaml_located(&e, "mount.yaml", 1, "");
}

#[test]
fn binary_file_instead_of_yaml() {
    let case = Case::new();
    case.write("mount.yaml", b"yaw_deg: 1\n\x89PNG\r\n\x1a\n\xff\xfe");
    let e = case.bad();
    assert_located(&e, "mount.yaml", 2, None, "expected UTF-8 text");
}

#[test]
fn csv_given_as_camera() {
    let case = Case::new();
    case.replace(
        "session.yaml",
        "camera: camera.yaml",
        "camera: detections.csv",
    );
    let e = case.bad();
    assert_yaml_located(&e, "detections.csv", 1, "");
}

#[test]
fn non_finite_mount_angle() {
    let case = Case::new();
    case.replace("mount.yaml", "pitch_deg: -2.0", "pitch_deg: .nan");
    let e = case.bad();
    assert_yaml_located(&e, "mount.yaml", 4, "pitch_deg: expected a finite number");
}

#[test]
fn policy_out_of_range() {
    let case = Case::new();
    case.write(
        "policy.yaml",
        "max_translation_mm: 4\nfalse_alarm_rate: 0.7\n",
    );
    let e = case.bad_with(&["--policy", "policy.yaml"]);
    assert_yaml_located(
        &e,
        "policy.yaml",
        2,
        "false_alarm_rate: expected a probability",
    );
}

#[test]
fn policy_file_missing() {
    let case = Case::new();
    let e = case.bad_with(&["--policy", "policy.yaml"]);
    assert!(
        e.starts_with("error: policy.yaml: cannot read the file"),
        "{e}"
    );
}

#[test]
fn usage_errors_exit_2() {
    let case = Case::new();
    case.audit(&["--colour"]).code(2);
    Command::cargo_bin("mountdrift")
        .unwrap()
        .arg("audit")
        .assert()
        .code(2);
}
