//! Rendering a sensitivity outcome: the terminal table, the CSV, the plot files a study gets and
//! the curves they draw. The outcome is written by hand, so every number checked is known.

use std::path::PathBuf;

use mountdrift::commands::sensitivity::{
    Axis, AxisSensitivity, CalibrationUsed, DelaySource, DetectionRule, FalseAlarm, IntervalMethod,
    MinDetectable, SensitivityOutcome, ShiftPoint, StudiedScenario, SENSITIVITY_SCHEMA,
};
use mountdrift::commands::simulate::ScenarioSource;
use mountdrift::report::sensitivity::{
    delay_curves, probability_curves, write_sensitivity_csv, write_sensitivity_summary,
    SensitivityFile, SENSITIVITY_CSV_HEADER,
};
use mountdrift::report::TerminalStyle;

fn point(size: f64, detected: u64, delay_frames: Option<f64>) -> ShiftPoint {
    ShiftPoint {
        size,
        trials: 20,
        detected,
        probability: detected as f64 / 20.0,
        probability_ci95: Some([0.1, 0.9]),
        monotone_probability: detected as f64 / 20.0,
        sessions_with_change_point: detected,
        median_delay_frames: delay_frames,
        median_delay_s: delay_frames.map(|f| f / 20.0),
        unsearched: 0,
    }
}

fn outcome() -> SensitivityOutcome {
    SensitivityOutcome {
        schema: SENSITIVITY_SCHEMA,
        tool_version: "test",
        scenario: StudiedScenario {
            source: ScenarioSource::Path(PathBuf::from("rig.yaml")),
            name: Some("hand-written".into()),
            base_seed: 5,
            frame_rate_hz: 20.0,
            duration_s: 12.0,
            frames: 240,
            removed_mount_events: 0,
        },
        trials: 20,
        sessions: 100,
        level: 0.95,
        power: 0.95,
        interval_method: IntervalMethod::ClopperPearson,
        interval_reference: IntervalMethod::ClopperPearson.reference().into(),
        detection: DetectionRule {
            step_frame: 120,
            step_time_s: 6.0,
            tolerance_frames: 20,
            rule: "a change point within 20 frames".into(),
        },
        delay_source: DelaySource::OfflineChangePoint,
        false_alarm: FalseAlarm {
            target_rate: 0.01,
            trials: 20,
            sessions_with_change_point: 1,
            rate: 0.05,
            rate_ci95: Some([0.001265, 0.248733]),
            unsearched: 0,
        },
        axes: vec![
            AxisSensitivity {
                axis: Axis::Y,
                unit: "mm",
                points: vec![point(0.5, 2, None), point(1.0, 20, Some(-1.5))],
                min_detectable: MinDetectable::Interpolated { size: 0.97368 },
            },
            AxisSensitivity {
                axis: Axis::Roll,
                unit: "deg",
                points: vec![point(0.05, 0, None), point(0.1, 11, Some(3.0))],
                min_detectable: MinDetectable::NotReached { largest: 0.1 },
            },
        ],
        calibration: CalibrationUsed {
            runs: 1000,
            seed: 1,
            max_simulated_samples: 1000,
        },
        warnings: Vec::new(),
    }
}

#[test]
fn the_table_shows_rates_sizes_and_minimum_detectable_shifts() {
    let mut bytes = Vec::new();
    write_sensitivity_summary(&mut bytes, &outcome(), TerminalStyle::PLAIN).unwrap();
    let text = String::from_utf8(bytes).unwrap();
    assert!(text.starts_with("Sensitivity of hand-written\n"), "{text}");
    assert!(
        text.contains("False alarms on clean sessions: 1 of 20 (5.0%, 95% interval 0.1% to 24.9%); target 1.0%"),
        "{text}"
    );
    let row = text.lines().find(|l| l.contains("y     1 mm")).unwrap();
    assert!(row.contains("20/20") && row.contains("1.00") && row.contains("-1.5 frames (-0.07 s)"));
    assert!(text.contains("  y      0.974 mm\n"), "{text}");
    assert!(
        text.contains("  roll   not reached (above 0.100 deg)\n"),
        "{text}"
    );
    assert!(text.contains("Clopper & Pearson 1934"));
}

#[test]
fn the_csv_has_a_false_alarm_row_then_one_row_per_step() {
    let mut bytes = Vec::new();
    write_sensitivity_csv(&mut bytes, &outcome()).unwrap();
    let text = String::from_utf8(bytes).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines[0], SENSITIVITY_CSV_HEADER.join(","));
    assert_eq!(
        lines[1],
        "false_alarm,,,0,20,1,0.050000,0.001265,0.248733,,1,,,0,,"
    );
    assert_eq!(
        lines[3],
        "step,y,mm,1,20,20,1.000000,0.100000,0.900000,1.000000,20,-1.5,-0.0750,0,0.973680,offline_change_point"
    );
    assert_eq!(
        lines[4],
        "step,roll,deg,0.05,20,0,0.000000,0.100000,0.900000,0.000000,0,,,0,,offline_change_point"
    );
    assert_eq!(lines.len(), 6);
}

#[test]
fn plots_are_drawn_per_unit_from_the_outcome() {
    let mut o = outcome();
    assert_eq!(SensitivityFile::for_outcome(&o).len(), 6);
    let p = probability_curves(&o, "deg");
    assert_eq!(p.curves.len(), 1);
    assert_eq!(p.curves[0].label, "roll");
    assert_eq!(p.curves[0].points, vec![(0.05, 0.0), (0.1, 0.55)]);
    // Sizes never detected have no delay and are left out of the delay curve.
    let d = delay_curves(&o, "mm");
    assert_eq!(d.curves[0].points, vec![(1.0, -0.075)]);
    o.axes.truncate(1);
    let files: Vec<&str> = SensitivityFile::for_outcome(&o)
        .iter()
        .map(|f| f.name())
        .collect();
    assert_eq!(
        files,
        [
            "sensitivity.json",
            "sensitivity.csv",
            "plot_detection_probability_mm.svg",
            "plot_detection_delay_mm.svg"
        ]
    );
    for file in SensitivityFile::for_outcome(&o) {
        let mut bytes = Vec::new();
        file.write(&o, &mut bytes).unwrap();
        assert!(!bytes.is_empty(), "{}", file.name());
    }
}
