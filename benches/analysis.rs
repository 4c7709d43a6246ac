//! Speed of the statistics of a long audit: a 100,000-sample deviation series whose per-frame
//! covariance varies (as in a session with changing geometry), AR(1)-correlated noise and one mean
//! shift, validated into a series and run through the whole drift analysis with the process-wide
//! calibrations warm. Figures are recorded in docs/benchmarks.md ("Analysis speed and memory").

use std::hint::black_box;
use std::time::Duration;

use criterion::{criterion_group, criterion_main, Criterion};
use mountdrift::stats::drift::{analyse_drift, Calibrators, DriftOptions};
use mountdrift::stats::series::{DeviationSample, DeviationSeries};
use nalgebra::{Matrix6, Vector6};
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

/// Invented per-axis 1-sigma of the deviation (mm for x, y, z, degrees for the angles).
const SIGMA: [f64; 6] = [0.4, 0.3, 0.8, 0.05, 0.04, 0.08];

fn normal(rng: &mut Pcg64Mcg) -> f64 {
    Distribution::<f64>::sample(&StandardNormal, rng)
}

/// A covariance that drifts slowly with the frame (range and viewing angle change), with a
/// correlation between x and yaw as the geometry of a pose solve gives.
fn covariance_at(t: usize, n: usize) -> Matrix6<f64> {
    let phase = std::f64::consts::TAU * t as f64 / n as f64;
    let scale = Vector6::from_fn(|k, _| SIGMA[k] * (1.0 + 0.4 * (phase + k as f64).sin()));
    let mut correlation = Matrix6::identity();
    correlation[(0, 3)] = 0.5 * phase.cos();
    correlation[(3, 0)] = correlation[(0, 3)];
    let d = Matrix6::from_diagonal(&scale);
    d * correlation * d
}

fn samples(n: usize, shift_at: usize) -> Vec<DeviationSample> {
    let mut rng = Pcg64Mcg::seed_from_u64(0x616e_616c);
    let rho: f64 = 0.5;
    let innovation = (1.0 - rho * rho).sqrt();
    let mut e = Vector6::from_fn(|_, _| normal(&mut rng));
    let shift = Vector6::new(1.5, -1.0, 2.0, 0.2, -0.3, 0.1);
    (0..n)
        .map(|t| {
            let covariance = covariance_at(t, n);
            let root = covariance.cholesky().unwrap().l();
            e = e * rho + Vector6::from_fn(|_, _| normal(&mut rng)) * innovation;
            let mut x = root * e;
            if t >= shift_at {
                x += shift;
            }
            DeviationSample {
                frame: 2 * t as i64 + rng.random_range(0..2),
                time_s: t as f64 / 30.0,
                deviation: x,
                covariance,
            }
        })
        .collect()
}

fn analysis_100k(c: &mut Criterion) {
    let n = 100_000;
    let data = samples(n, 40_000);
    let calibrators = Calibrators::default();
    let options = DriftOptions::default();
    // Warm the calibrations once (they are shared by every audit of a process).
    let series = DeviationSeries::new(&data).unwrap();
    analyse_drift(&series, &options, &calibrators).unwrap();
    let mut group = c.benchmark_group("analysis_100k_varying_covariance");
    group.sample_size(10);
    group.measurement_time(Duration::from_secs(30));
    group.bench_function("series", |b| {
        b.iter(|| DeviationSeries::new(black_box(&data)).unwrap())
    });
    group.bench_function("drift_warm_calibration", |b| {
        b.iter(|| analyse_drift(black_box(&series), &options, &calibrators).unwrap())
    });
    group.finish();
}

criterion_group!(benches, analysis_100k);
criterion_main!(benches);
