//! Change-point search speed: exact PELT on a million 6-D samples, the ruptures-compatible search
//! on the 2000 x 6 signal timed in Python by scripts/bench_ruptures.py, the per-frame information
//! cost, PELT as published against the bound-tree search on long segments, and one penalty
//! calibration. Figures are recorded in docs/benchmarks.md.

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use mountdrift::stats::changepoint::{pelt, pelt_pruned, pelt_ruptures};
use mountdrift::stats::cost::{InformationCost, L2Cost};
use mountdrift::stats::penalty::{CalibrationSettings, PenaltyCalibrator};
use nalgebra::{Matrix6, Vector6};
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

/// The 2000 x 6 signal of scripts/bench_ruptures.py, row-major.
fn ruptures_signal() -> Vec<f64> {
    let mut out = Vec::with_capacity(2000 * 6);
    for i in 0..2000i64 {
        let level = if i < 600 {
            0.0
        } else if i < 1300 {
            3.0
        } else {
            1.0
        };
        for j in 0..6i64 {
            let a = ((37 * i + 13 * j) % 11 - 5) as f64 / 5.0;
            let b = ((53 * i + 7 * j) % 7 - 3) as f64 / 10.0;
            out.push(level * (1 + j) as f64 / 3.0 + a + b);
        }
    }
    out
}

/// White unit noise whose mean jumps (by about two sigma per axis) every `segment` samples.
fn stepped_series(n: usize, segment: usize, seed: u64) -> Vec<Vector6<f64>> {
    let mut rng = Pcg64Mcg::seed_from_u64(seed);
    let mut level = Vector6::zeros();
    (0..n)
        .map(|t| {
            if t % segment == 0 {
                level = Vector6::from_fn(|_, _| 2.0 * rng.random::<f64>() - 1.0) * 2.0;
            }
            level + Vector6::from_fn(|_, _| Distribution::<f64>::sample(&StandardNormal, &mut rng))
        })
        .collect()
}

fn ruptures_comparison(c: &mut Criterion) {
    let signal = ruptures_signal();
    let cost = L2Cost::new(&signal, 6).unwrap();
    let mut group = c.benchmark_group("ruptures_2000x6");
    group.bench_function("pelt_ruptures_min2_jump5", |b| {
        b.iter(|| pelt_ruptures(black_box(&cost), 50.0, 2, 5).unwrap())
    });
    group.bench_function("pelt_exact_min1", |b| {
        b.iter(|| pelt(black_box(&cost), 50.0, 1).unwrap())
    });
    group.finish();
}

fn million_samples(c: &mut Criterion) {
    let series = stepped_series(1_000_000, 200, 1);
    let mut group = c.benchmark_group("pelt_1m_6d");
    group.sample_size(10);
    group.bench_function("cost_from_prefix_sums", |b| {
        b.iter(|| L2Cost::from_vectors(black_box(&series)).unwrap())
    });
    let cost = L2Cost::from_vectors(&series).unwrap();
    group.bench_function("search_changes_every_200", |b| {
        b.iter(|| pelt(black_box(&cost), 40.0, 10).unwrap())
    });
    group.finish();
}

fn sparse_changes(c: &mut Criterion) {
    let mut group = c.benchmark_group("pelt_sparse_6d");
    group.sample_size(10);
    for n in [5_000usize, 20_000, 1_000_000] {
        let cost = L2Cost::from_vectors(&stepped_series(n, n / 4, 2)).unwrap();
        group.bench_function(format!("n{n}_four_segments"), |b| {
            b.iter(|| pelt(black_box(&cost), 40.0, 10).unwrap())
        });
    }
    // PELT as published on the same series, for the ratio (quadratic in the segment length).
    let cost = L2Cost::from_vectors(&stepped_series(20_000, 5_000, 2)).unwrap();
    group.bench_function("n20000_four_segments_pelt_pruned", |b| {
        b.iter(|| pelt_pruned(black_box(&cost), 40.0, 10).unwrap())
    });
    group.finish();
}

fn information_cost(c: &mut Criterion) {
    let series = stepped_series(20_000, 200, 3);
    let mut rng = Pcg64Mcg::seed_from_u64(4);
    let omega: Vec<Matrix6<f64>> = (0..series.len())
        .map(|_| Matrix6::identity() * (0.5 + rng.random::<f64>()))
        .collect();
    let cost = InformationCost::new(&series, &omega, 6).unwrap();
    let mut group = c.benchmark_group("information_cost_20k_6d");
    group.sample_size(10);
    group.bench_function("search_changes_every_200", |b| {
        b.iter(|| pelt(black_box(&cost), 40.0, 10).unwrap())
    });
    group.finish();
    // 100,000 frames of varying information without any change: the audit's case.
    let series = stepped_series(100_000, 100_000, 5);
    let omega: Vec<Matrix6<f64>> = (0..series.len())
        .map(|_| Matrix6::identity() * (0.5 + rng.random::<f64>()))
        .collect();
    let cost = InformationCost::new(&series, &omega, 6).unwrap();
    let mut group = c.benchmark_group("information_cost_100k_6d");
    group.sample_size(10);
    group.bench_function("search_no_change", |b| {
        b.iter(|| pelt(black_box(&cost), 40.0, 10).unwrap())
    });
    group.finish();
}

fn calibration(c: &mut Criterion) {
    let mut group = c.benchmark_group("penalty_calibration");
    group.sample_size(10);
    group.bench_function("n1000_dim6_runs1000", |b| {
        b.iter(|| {
            let calibrator = PenaltyCalibrator::new(CalibrationSettings::default());
            calibrator.calibrate(1000, 6, 10, 0.01, 0.0).unwrap()
        })
    });
    group.finish();
}

criterion_group!(
    benches,
    ruptures_comparison,
    million_samples,
    sparse_changes,
    information_cost,
    calibration
);
criterion_main!(benches);
