//! Sensitivity study cost (criterion, fixed seeds): one simulated and audited session with a
//! warm shared penalty calibration (the per-session cost of a large study), and a small whole
//! study including its calibration.

use std::hint::black_box;
use std::path::PathBuf;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use mountdrift::commands::sensitivity::trial::run_trial;
use mountdrift::commands::sensitivity::{
    self, trial_scenario, Axis, Injection, SensitivityOptions, StepWindow,
};
use mountdrift::commands::simulate::ScenarioSource;
use mountdrift::session::Policy;
use mountdrift::sim::{preset, Scenario};
use mountdrift::stats::drift::Calibrators;

fn short_station() -> PathBuf {
    PathBuf::from(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/fixtures/sensitivity/short_station.yaml"
    ))
}

/// A session of `clean` with a 1 mm step along x at mid-session.
fn stepped(mut clean: Scenario) -> (Scenario, StepWindow) {
    clean.mount_events.clear();
    let frames = clean.frame_count();
    let window = StepWindow {
        step_frame: frames / 2,
        step_time_s: (frames / 2) as f64 / clean.frame_rate_hz,
        tolerance_frames: 30,
    };
    let injection = Injection::Step {
        axis: Axis::X,
        size: 1.0,
    };
    let scenario = trial_scenario(&clean, &window, 12_345, injection);
    (scenario, window)
}

fn one_session(c: &mut Criterion, name: &str, clean: Scenario) {
    let (scenario, window) = stepped(clean);
    let policy = Policy::default();
    let calibrators = Calibrators::default();
    // Warm the calibration cache: a large study pays for each null distribution once.
    run_trial(&scenario, &window, &policy, &calibrators).unwrap();
    let mut group = c.benchmark_group("sensitivity");
    group.sample_size(10);
    group.bench_function(name, |b| {
        b.iter(|| black_box(run_trial(&scenario, &window, &policy, &calibrators).unwrap()))
    });
    group.finish();
}

fn sessions(c: &mut Criterion) {
    let short = Scenario::from_path(&short_station()).unwrap();
    one_session(c, "session_short_station_240_frames", short);
    let mut demo = preset("demo").unwrap();
    demo.duration_s = 60.0;
    one_session(c, "session_demo_60s_1800_frames", demo);
}

fn small_study(c: &mut Criterion) {
    let mut options = SensitivityOptions::new(ScenarioSource::Path(short_station()));
    options.trials = 6;
    options.axes = vec![Axis::X];
    options.translation_sizes_mm = vec![0.5, 5.0];
    let mut group = c.benchmark_group("sensitivity");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(30));
    group.bench_function("study_short_station_18_sessions", |b| {
        b.iter(|| black_box(sensitivity::run(&options, &|_| {}).unwrap()))
    });
    group.finish();
}

criterion_group!(benches, sessions, small_study);
criterion_main!(benches);
