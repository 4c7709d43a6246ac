//! Simulator throughput (criterion, fixed seeds): frames generated in memory, CSV formatting into
//! a sink, and a whole 1,000,000-frame session streamed to disk (the target: well under a minute
//! with bounded memory).

use std::hint::black_box;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use mountdrift::sim::writer::{self, CsvSinks};
use mountdrift::sim::{preset, Scenario, Simulation};

/// The demo preset stretched to `frames` frames (station-keeping after the first five minutes).
fn demo_with_frames(frames: u64) -> Scenario {
    let mut scenario = preset("demo").expect("demo preset");
    scenario.duration_s = frames as f64 / scenario.frame_rate_hz;
    scenario
}

fn frames_in_memory(c: &mut Criterion) {
    let sim = Simulation::new(&demo_with_frames(10_000)).unwrap();
    let mut group = c.benchmark_group("sim");
    group.throughput(Throughput::Elements(10_000));
    group.bench_function("frames_in_memory_10k", |b| {
        b.iter(|| {
            sim.frames()
                .map(|f| f.detections.probe.len() + f.detections.drogue.len())
                .sum::<usize>()
        })
    });
    group.finish();
}

fn csv_to_sink(c: &mut Criterion) {
    let sim = Simulation::new(&demo_with_frames(100_000)).unwrap();
    let mut group = c.benchmark_group("sim");
    group.throughput(Throughput::Elements(100_000));
    group.sample_size(10);
    group.bench_function("csv_to_sink_100k", |b| {
        b.iter(|| {
            let mut sinks = CsvSinks {
                detections: std::io::sink(),
                truth: std::io::sink(),
                poses: None,
            };
            black_box(sinks.write_all(&sim).unwrap())
        })
    });
    group.finish();
}

fn session_to_disk(c: &mut Criterion) {
    let scenario = demo_with_frames(1_000_000);
    let sim = Simulation::new(&scenario).unwrap();
    let dir = tempfile::tempdir().unwrap();
    let mut group = c.benchmark_group("sim");
    group.throughput(Throughput::Elements(1_000_000));
    group.sample_size(10);
    group.warm_up_time(Duration::from_secs(1));
    group.measurement_time(Duration::from_secs(60));
    group.bench_function("session_to_disk_1M", |b| {
        b.iter(|| black_box(writer::write_session(&sim, &scenario, dir.path(), false).unwrap()))
    });
    group.finish();
}

criterion_group!(benches, frames_in_memory, csv_to_sink, session_to_disk);
criterion_main!(benches);
