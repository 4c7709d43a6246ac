//! `mountdrift survey` and `mountdrift compare` through the binary, on sessions written by
//! `mountdrift simulate` into temporary folders: the survey's mount file is accepted by `audit`
//! as the nominal mount and by `compare` as BEFORE; exit codes 0 (unchanged), 1 (changed) and
//! 2 (bad input, naming the file).

use std::fs;
use std::path::{Path, PathBuf};

use assert_cmd::Command;
use serde_json::Value;

fn mountdrift() -> Command {
    let mut cmd = Command::cargo_bin("mountdrift").expect("the binary is built");
    cmd.env("NO_COLOR", "1");
    cmd
}

/// Runs mountdrift with `args` and returns its output.
fn run(args: &[&dyn AsRef<std::ffi::OsStr>]) -> std::process::Output {
    mountdrift()
        .args(args.iter().map(|a| a.as_ref()))
        .output()
        .unwrap()
}

/// The exit code of a run, with its output on failure.
fn code(out: &std::process::Output) -> Option<i32> {
    if !out.status.success() {
        eprintln!(
            "stdout:\n{}\nstderr:\n{}",
            String::from_utf8_lossy(&out.stdout),
            String::from_utf8_lossy(&out.stderr)
        );
    }
    out.status.code()
}

/// A 20 s session of the `creep` installation (its ramp starts at 60 s: the mount holds still).
fn simulate(dir: &Path, name: &str, seed: u64) -> PathBuf {
    let out = dir.join(name);
    mountdrift()
        .args([
            "simulate",
            "--preset",
            "creep",
            "--duration",
            "20",
            "--seed",
        ])
        .arg(seed.to_string())
        .arg("--out")
        .arg(&out)
        .assert()
        .success();
    out.join("session.yaml")
}

fn json(output: &[u8]) -> Value {
    serde_json::from_slice(output).expect("valid JSON on standard output")
}

/// The survey file with its position moved by `dx_m` along body x.
fn shifted(survey: &Path, dx_m: f64, out: &Path) {
    let text = fs::read_to_string(survey).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let at = lines.iter().position(|l| l == "position_m:").unwrap() + 1;
    let x: f64 = lines[at].trim_start_matches("- ").parse().unwrap();
    lines[at] = format!("- {}", x + dx_m);
    fs::write(out, lines.join("\n") + "\n").unwrap();
}

#[test]
fn survey_feeds_audit_and_compare() {
    let dir = tempfile::tempdir().unwrap();
    let first = simulate(dir.path(), "first", 11);
    let second = simulate(dir.path(), "second", 12);
    let mount = dir.path().join("surveyed.yaml");

    // Survey: exit 0 (20 s of frames meets the one-third precision rule at default tolerances).
    let out = run(&[&"survey", &first, &"--out", &mount, &"--json"]);
    assert_eq!(code(&out), Some(0));
    let report = json(&out.stdout);
    assert_eq!(report["schema"], "mountdrift.survey.v1");
    assert_eq!(report["precision"]["sufficient"], true);
    let text = fs::read_to_string(&mount).unwrap();
    for needle in [
        "# Frames used: 0 to",
        "covariance:",
        "ci95:",
        "camera:",
        "position_m:",
    ] {
        assert!(text.contains(needle), "{needle} missing from:\n{text}");
    }

    // Audit of the second session with the survey as its nominal mount.
    let manifest = fs::read_to_string(&second).unwrap();
    let with_survey = manifest.replace("mount: mount.yaml", "mount: ../surveyed.yaml");
    assert_ne!(
        manifest, with_survey,
        "the simulated manifest names mount.yaml"
    );
    let audited = second.with_file_name("with_survey.yaml");
    fs::write(&audited, with_survey).unwrap();
    let out = run(&[&"audit", &audited, &"--json"]);
    assert_ne!(code(&out), Some(2));
    let audit = json(&out.stdout);
    assert_eq!(
        audit["inputs"]["nominal_mount"]["position_m"],
        report["mount"]["position_m"]
    );

    // Compare the survey (BEFORE) with the second session: unchanged, exit 0.
    let out = run(&[&"compare", &mount, &second, &"--json"]);
    assert_eq!(code(&out), Some(0));
    let compared = json(&out.stdout);
    assert_eq!(compared["outcome"], "unchanged");
    assert_eq!(compared["gate"], "pass");
    for key in [
        "translation_mm",
        "rotation_deg",
        "translation_ci95_mm",
        "rotation_ci95_deg",
        "change_test",
        "equivalence",
    ] {
        assert!(!compared[key].is_null(), "{key}");
    }
    assert_eq!(compared["before"]["kind"], "survey_file");
    assert_eq!(compared["cameras"]["same"], true);

    // 12 mm along x (beyond the 5 mm tolerance): changed, exit 1, with the report files.
    let moved = dir.path().join("moved.yaml");
    shifted(&mount, 0.012, &moved);
    let report_dir = dir.path().join("gate");
    let out = run(&[&"compare", &mount, &moved, &"--out", &report_dir]);
    assert_eq!(code(&out), Some(1));
    let summary = String::from_utf8(out.stdout).unwrap();
    assert!(summary.starts_with("CHANGED"), "{summary}");
    for name in ["report.json", "report.html", "plot_change.svg"] {
        assert!(report_dir.join(name).is_file(), "{name}");
    }
    let html = fs::read_to_string(report_dir.join("report.html")).unwrap();
    assert!(html.contains("<svg") && !html.contains("<script"));

    // A policy that allows 20 mm lets the same change pass.
    let policy = dir.path().join("policy.yaml");
    fs::write(&policy, "max_translation_mm: 20\n").unwrap();
    mountdrift()
        .arg("compare")
        .arg(&mount)
        .arg(&moved)
        .arg("--policy")
        .arg(&policy)
        .assert()
        .code(0);
}

#[test]
fn bad_input_exits_2_naming_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("no_such_session.yaml");
    let out = run(&[&"compare", &missing, &missing]);
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("no_such_session.yaml"));

    // A plain mount file has no covariance: it cannot be a reference.
    let plain = dir.path().join("plain_mount.yaml");
    fs::write(
        &plain,
        "position_m: [1, 0, -1]\nyaw_deg: 0\npitch_deg: 0\nroll_deg: 0\n",
    )
    .unwrap();
    let out = run(&[&"compare", &plain, &plain]);
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(
        stderr.contains("plain_mount.yaml") && stderr.contains("covariance"),
        "{stderr}"
    );

    // A broken covariance is located in its file.
    let broken = dir.path().join("broken_survey.yaml");
    let rows = "covariance: [[1, 2, 0, 0, 0, 0], [0, 1, 0, 0, 0, 0], [0, 0, 1, 0, 0, 0], \
                [0, 0, 0, 1, 0, 0], [0, 0, 0, 0, 1, 0], [0, 0, 0, 0, 0, 1]]\n";
    fs::write(
        &broken,
        format!("position_m: [1, 0, -1]\nyaw_deg: 0\npitch_deg: 0\nroll_deg: 0\n{rows}"),
    )
    .unwrap();
    let out = mountdrift()
        .arg("compare")
        .arg(&broken)
        .arg(&broken)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("broken_survey.yaml line 5"), "{stderr}");

    // A survey of a missing session writes nothing.
    let target = dir.path().join("never.yaml");
    let out = mountdrift()
        .arg("survey")
        .arg(&missing)
        .arg("--out")
        .arg(&target)
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(!target.exists());
}
