//! Whole-audit speed: the built-in demo (9,000 frames, 8 probe and 11 drogue keypoints) in
//! memory, with the process-wide calibrations warm and cold (read from the precomputed null
//! distributions, or all simulated), and a 100,000-frame session of the
//! same scenario read from disk (detections CSV, camera, models, mount). Figures are recorded in
//! docs/benchmarks.md ("Audit speed and memory").

use std::hint::black_box;
use std::path::Path;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use mountdrift::commands::audit::{self, AuditOptions, SessionSource, Setup};
use mountdrift::session::Policy;
use mountdrift::sim::{preset, writer::write_session, Simulation};
use mountdrift::stats::drift::Calibrators;
use mountdrift::stats::online::{OnlineCalibrator, OnlineSettings};
use mountdrift::stats::penalty::{CalibrationSettings, PenaltyCalibrator};

fn demo(c: &mut Criterion) {
    let mut group = c.benchmark_group("audit_demo_9000_frames");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(60));
    let options = AuditOptions {
        source: SessionSource::Demo,
        policy: Policy::default(),
    };
    group.bench_function("warm_calibration", |b| {
        b.iter(|| audit::run(black_box(&options), &|_| {}).unwrap())
    });
    let scenario = preset(audit::DEMO_PRESET).unwrap();
    let simulation = Simulation::new(&scenario).unwrap();
    let setup = Setup::from_simulation(&simulation, "demo");
    // A fresh process: the calibrators read the precomputed null distributions.
    group.bench_function("cold_calibration", |b| {
        b.iter(|| {
            let calibrators = Calibrators::default();
            let frames = simulation.frames().map(audit::simulated);
            audit::audit_frames_with(&setup, frames, &Policy::default(), &calibrators, &|_| {})
                .unwrap()
        })
    });
    // The same without them: every null distribution simulated.
    group.bench_function("cold_simulated_calibration", |b| {
        b.iter(|| {
            let calibrators = Calibrators {
                penalty: PenaltyCalibrator::simulating(CalibrationSettings::default()),
                online: OnlineCalibrator::simulating(OnlineSettings::default()),
            };
            let frames = simulation.frames().map(audit::simulated);
            audit::audit_frames_with(&setup, frames, &Policy::default(), &calibrators, &|_| {})
                .unwrap()
        })
    });
    group.finish();
}

/// Writes the demo scenario stretched to `frames` frames into `dir`.
fn write_demo_session(dir: &Path, frames: usize) -> std::path::PathBuf {
    let mut scenario = preset(audit::DEMO_PRESET).unwrap();
    scenario.duration_s = frames as f64 / scenario.frame_rate_hz;
    let simulation = Simulation::new(&scenario).unwrap();
    write_session(&simulation, &scenario, dir, false).unwrap();
    dir.join("session.yaml")
}

fn session_100k(c: &mut Criterion) {
    let dir = tempfile::tempdir().unwrap();
    let manifest = write_demo_session(dir.path(), 100_000);
    let options = AuditOptions {
        source: SessionSource::Manifest(manifest),
        policy: Policy::default(),
    };
    let mut group = c.benchmark_group("audit_session_100k_frames");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(120));
    group.bench_function("from_disk_warm_calibration", |b| {
        b.iter(|| audit::run(black_box(&options), &|_| {}).unwrap())
    });
    group.finish();
}

criterion_group!(benches, demo, session_100k);
criterion_main!(benches);
