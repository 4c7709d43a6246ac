//! The sensitivity study end to end on a short simulated scenario (fixtures/sensitivity): false
//! alarms counted on clean sessions, certain detection of a large step and rare detection of a
//! tiny one, steps injected along the right axis, and outcomes that depend on the options only.
//! Truth comes from our own seeded simulator (STYLE 13).

use std::path::PathBuf;

use mountdrift::commands::sensitivity::{
    self, trial_scenario, trial_seed, Axis, Injection, SensitivityOptions, StepWindow,
};
use mountdrift::commands::simulate::ScenarioSource;
use mountdrift::sim::scenario::MountEvent;
use mountdrift::sim::Scenario;
use mountdrift::stats::penalty::CalibrationSettings;

fn scenario_path() -> PathBuf {
    PathBuf::from(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/sensitivity/short_station.yaml"
    ))
}

/// A small study: few trials, one axis, and a lighter penalty calibration than the audit's
/// default (fewer null runs), to keep the test quick.
fn small_study(trials: u64, axis: Axis, sizes: &[f64]) -> SensitivityOptions {
    let mut options = SensitivityOptions::new(ScenarioSource::Path(scenario_path()));
    options.trials = trials;
    options.axes = vec![axis];
    options.translation_sizes_mm = sizes.to_vec();
    options.rotation_sizes_deg = sizes.to_vec();
    options.calibration = CalibrationSettings {
        runs: 200,
        ..CalibrationSettings::default()
    };
    options
}

#[test]
fn large_steps_are_found_tiny_ones_are_not_and_false_alarms_are_counted() {
    // Known truth: a 5 mm slip along x is tens of per-frame standard deviations of the mean of
    // 120 frames, a 0.01 mm slip a small fraction of one.
    let options = small_study(6, Axis::X, &[0.01, 5.0]);
    let outcome = sensitivity::run(&options, &|_| {}).unwrap();
    assert_eq!(outcome.sessions, 18);
    assert_eq!(outcome.scenario.frames, 240);
    assert_eq!(outcome.scenario.removed_mount_events, 1);
    assert_eq!(outcome.detection.step_frame, 120);
    assert_eq!(outcome.detection.tolerance_frames, 20);

    let fa = &outcome.false_alarm;
    assert_eq!(fa.trials, 6);
    assert_eq!(fa.unsearched, 0);
    // The penalty is set for 1% false alarms; 2 or more of 6 would have probability < 0.2%.
    assert!(fa.sessions_with_change_point <= 1, "{fa:?}");
    let [lo, hi] = fa.rate_ci95.unwrap();
    assert!(lo <= fa.rate && fa.rate <= hi);

    let points = &outcome.axes[0].points;
    let (tiny, large) = (&points[0], &points[1]);
    assert!(tiny.detected <= 1, "{tiny:?}");
    assert_eq!(large.detected, 6, "{large:?}");
    assert!((large.probability - 1.0).abs() < 1e-12);
    let delay = large.median_delay_frames.unwrap();
    assert!(
        delay.abs() <= 2.0,
        "a 5 mm step is located to a frame or two: {delay}"
    );
    // Detected with certainty at 5 mm, (almost) never at 0.01 mm: the 95% point lies between.
    let mds = outcome.axes[0].min_detectable.size().unwrap();
    assert!(mds > 0.01 && mds < 5.0, "{mds}");
}

#[test]
fn the_outcome_depends_on_the_options_not_on_scheduling() {
    let options = small_study(3, Axis::Pitch, &[0.2]);
    let json = |o: &sensitivity::SensitivityOutcome| serde_json::to_string(o).unwrap();
    let parallel = sensitivity::run(&options, &|_| {}).unwrap();
    let single = rayon::ThreadPoolBuilder::new()
        .num_threads(1)
        .build()
        .unwrap()
        .install(|| sensitivity::run(&options, &|_| {}))
        .unwrap();
    assert_eq!(json(&parallel), json(&single));
    let again = sensitivity::run(&options, &|_| {}).unwrap();
    assert_eq!(json(&parallel), json(&again));
}

#[test]
fn progress_counts_every_session() {
    let options = small_study(2, Axis::Roll, &[0.2]);
    let seen = std::sync::Mutex::new(Vec::new());
    sensitivity::run(&options, &|n| seen.lock().unwrap().push(n)).unwrap();
    let mut seen = seen.into_inner().unwrap();
    seen.sort_unstable();
    assert_eq!(seen, (1..=options.session_count()).collect::<Vec<_>>());
}

#[test]
fn seeds_differ_across_trials_axes_and_sizes() {
    let base = 271_828;
    let cells = [
        Injection::Clean,
        Injection::Step {
            axis: Axis::X,
            size: 1.0,
        },
        Injection::Step {
            axis: Axis::Y,
            size: 1.0,
        },
        Injection::Step {
            axis: Axis::X,
            size: 2.0,
        },
    ];
    let mut seeds: Vec<u64> = cells
        .iter()
        .flat_map(|&c| (0..50).map(move |t| trial_seed(base, t, c)))
        .collect();
    let count = seeds.len();
    seeds.sort_unstable();
    seeds.dedup();
    assert_eq!(seeds.len(), count);
    assert_eq!(
        trial_seed(base, 7, cells[1]),
        trial_seed(base, 7, cells[1]),
        "a seed is a function of its inputs"
    );
}

#[test]
fn steps_are_injected_along_the_named_axis_at_the_step_time() {
    let clean = Scenario::from_path(&scenario_path()).unwrap();
    let window = StepWindow {
        step_frame: 120,
        step_time_s: 6.0,
        tolerance_frames: 20,
    };
    for axis in Axis::ALL {
        let scenario = trial_scenario(&clean, &window, 99, Injection::Step { axis, size: 0.3 });
        assert_eq!(scenario.seed, 99);
        let [MountEvent::Step(step)] = scenario.mount_events.as_slice() else {
            panic!("one step expected: {:?}", scenario.mount_events);
        };
        assert!((step.at_s - 6.0).abs() < 1e-12);
        let mut six = [0.0; 6];
        six[..3].copy_from_slice(&step.translation_mm);
        six[3..].copy_from_slice(&step.rotation_deg);
        for (i, v) in six.iter().enumerate() {
            let want = if i == axis.index() { 0.3 } else { 0.0 };
            assert!((v - want).abs() < 1e-15, "{axis:?}: {six:?}");
        }
    }
}

#[test]
fn bad_options_are_refused_with_the_field_named() {
    let mut options = small_study(1, Axis::X, &[1.0, 0.5]);
    let e = sensitivity::run(&options, &|_| {}).unwrap_err();
    assert!(e.to_string().contains("sizes must increase"), "{e}");
    options.translation_sizes_mm = vec![0.5, 1.0];
    options.trials = 0;
    let e = sensitivity::run(&options, &|_| {}).unwrap_err();
    assert!(e.to_string().contains("trials"), "{e}");
    options.trials = 1;
    options.axes = vec![Axis::X, Axis::X];
    assert!(sensitivity::run(&options, &|_| {}).is_err());
    options.axes = vec![Axis::X];
    options.duration_s = Some(-3.0);
    assert!(options.validate().is_err());
}
