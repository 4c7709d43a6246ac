//! `mountdrift sensitivity` through the real binary: the table on standard output, JSON with
//! `--json` (and nothing on standard error), the output folder's files, and usage errors that
//! exit with code 2 and write nothing. Sessions come from our own seeded simulator.

use std::fs;
use std::path::Path;

use assert_cmd::Command;

fn scenario() -> String {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/sensitivity/short_station.yaml")
        .display()
        .to_string()
}

fn sensitivity(args: &[&str]) -> Command {
    let mut cmd = Command::cargo_bin("mountdrift").unwrap();
    cmd.arg("sensitivity").arg(scenario()).args(args);
    cmd
}

/// Two trials per cell of 6 s sessions: enough to exercise every output, quick to run.
const QUICK: [&str; 4] = ["--trials", "2", "--duration", "6"];

#[test]
fn writes_the_table_and_the_output_folder() {
    let root = tempfile::tempdir().unwrap();
    let out = root.path().join("study");
    let assert = sensitivity(&QUICK)
        .args(["--axes", "x,yaw", "--sizes", "mm=5", "--sizes", "deg=0.2"])
        .arg("--out")
        .arg(&out)
        .env("NO_COLOR", "1")
        .assert()
        .success();
    let stdout = String::from_utf8(assert.get_output().stdout.clone()).unwrap();
    assert!(
        stdout.contains("False alarms on clean sessions:"),
        "{stdout}"
    );
    assert!(
        stdout.contains("Minimum detectable step at 95% power"),
        "{stdout}"
    );
    assert!(stdout.contains("Clopper-Pearson"), "{stdout}");
    assert!(!stdout.contains('\x1b'), "NO_COLOR is honoured");

    let mut names: Vec<String> = fs::read_dir(&out)
        .unwrap()
        .map(|e| e.unwrap().file_name().into_string().unwrap())
        .collect();
    names.sort();
    assert_eq!(
        names,
        [
            "plot_detection_delay_deg.svg",
            "plot_detection_delay_mm.svg",
            "plot_detection_probability_deg.svg",
            "plot_detection_probability_mm.svg",
            "sensitivity.csv",
            "sensitivity.json",
        ]
    );
    let json: serde_json::Value =
        serde_json::from_str(&fs::read_to_string(out.join("sensitivity.json")).unwrap()).unwrap();
    assert_eq!(json["schema"], "mountdrift.sensitivity.v1");
    assert_eq!(json["sessions"], 6);
    assert_eq!(json["axes"][1]["axis"], "yaw");
    assert_eq!(json["axes"][1]["unit"], "deg");
    let csv = fs::read_to_string(out.join("sensitivity.csv")).unwrap();
    let lines: Vec<&str> = csv.lines().collect();
    assert!(lines[0].starts_with("kind,axis,unit,size,trials,detected,probability,"));
    assert!(lines[1].starts_with("false_alarm,,,0,2,"), "{csv}");
    assert!(lines[2].starts_with("step,x,mm,5,2,"), "{csv}");
    assert!(lines[3].starts_with("step,yaw,deg,0.2,2,"), "{csv}");
    let svg = fs::read_to_string(out.join("plot_detection_probability_mm.svg")).unwrap();
    assert!(svg.starts_with("<svg") && svg.contains("Detection probability"));
}

#[test]
fn json_goes_to_stdout_without_progress() {
    let assert = sensitivity(&QUICK)
        .args(["--axes", "z", "--sizes", "mm=3", "--json"])
        .assert()
        .success();
    let output = assert.get_output();
    assert!(output.stderr.is_empty());
    let json: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(json["trials"], 2);
    assert_eq!(json["axes"][0]["points"][0]["size"], 3.0);
    // The audit runs an online detector, and a 3 mm step raises its alarm in these sessions.
    assert_eq!(json["delay_source"], "online_alarm");
}

#[test]
fn usage_errors_exit_2_and_write_nothing() {
    let root = tempfile::tempdir().unwrap();
    let out = root.path().join("never");
    let cases: [(&[&str], &str); 4] = [
        (&["--sizes", "cm=1,2"], "neither mm nor deg"),
        (&["--axes", "x,surge"], "not an axis"),
        (&["--sizes", "mm=2,1"], "sizes must increase"),
        (&["--trials", "0"], "trials"),
    ];
    for (args, message) in cases {
        let assert = sensitivity(args).arg("--out").arg(&out).assert().code(2);
        let stderr = String::from_utf8(assert.get_output().stderr.clone()).unwrap();
        assert!(stderr.contains(message), "{args:?}: {stderr}");
        assert!(!out.exists(), "{args:?} wrote {}", out.display());
    }
    let assert = Command::cargo_bin("mountdrift")
        .unwrap()
        .args(["sensitivity", "--preset", "no-such-preset", "--trials", "1"])
        .assert()
        .code(2);
    let stderr = String::from_utf8_lossy(&assert.get_output().stderr).to_string();
    assert!(stderr.contains("unknown preset"), "{stderr}");
}
