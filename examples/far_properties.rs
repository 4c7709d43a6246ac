//! False-alarm count of the drift analysis on clean synthetic series that add one property of
//! realistic deviation series at a time to a white-plus-AR(1) mixture: unequal correlated shares
//! per direction, a correlated part whose principal directions differ from the whitened axes,
//! a per-frame covariance that varies slowly (trend) instead of frame by frame.
//!
//! Usage: cargo run --release --example far_properties -- N TRIALS ALPHA MODE
//! MODE: base | unequal | rotated | slow | slow_shape

use mountdrift::stats::penalty::stream_seed;
use mountdrift::stats::series::DeviationSample;
use nalgebra::{Matrix6, Vector6};
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

mod common;

const RHO: f64 = 0.8;

fn normal(rng: &mut Pcg64Mcg) -> f64 {
    Distribution::<f64>::sample(&StandardNormal, rng)
}

/// A fixed rotation (QR of a seeded Gaussian matrix).
fn rotation() -> Matrix6<f64> {
    let mut rng = Pcg64Mcg::seed_from_u64(4242);
    Matrix6::from_fn(|_, _| normal(&mut rng)).qr().q()
}

fn series(seed: u64, n: usize, mode: &str) -> Vec<DeviationSample> {
    let mut rng = Pcg64Mcg::seed_from_u64(seed);
    let shares: Vector6<f64> = match mode {
        "unequal" | "rotated" => Vector6::new(0.05, 0.1, 0.2, 0.3, 0.4, 0.55),
        _ => Vector6::repeat(0.265),
    };
    let rot = if mode == "rotated" {
        rotation()
    } else {
        Matrix6::identity()
    };
    let innovation = (1.0 - RHO * RHO).sqrt();
    let mut e = Vector6::from_fn(|_, _| normal(&mut rng));
    let phase = rng.random::<f64>() * std::f64::consts::TAU;
    (0..n)
        .map(|t| {
            let w = Vector6::from_fn(|_, _| normal(&mut rng));
            e = e * RHO + w * innovation;
            let white = Vector6::from_fn(|_, _| normal(&mut rng));
            let base = white.component_mul(&shares.map(|s: f64| (1.0 - s).sqrt()))
                + e.component_mul(&shares.map(f64::sqrt));
            // Per-axis scale of the stated and actual noise.
            let scale = match mode {
                "slow" => Vector6::repeat(
                    1.0 + 0.3 * (std::f64::consts::TAU * t as f64 / n as f64 + phase).sin(),
                ),
                "slow_shape" => Vector6::from_fn(|i, _| {
                    let p = phase + i as f64;
                    1.0 + 0.3 * (std::f64::consts::TAU * t as f64 / n as f64 + p).sin()
                }),
                _ => Vector6::repeat(1.0 + 0.5 * rng.random::<f64>()),
            };
            let s = Matrix6::from_diagonal(&scale);
            let map = rot * s;
            DeviationSample {
                frame: t as i64,
                time_s: t as f64 / 25.0,
                deviation: map * base,
                covariance: map * map.transpose() * 0.7,
            }
        })
        .collect()
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let n: usize = args[0].parse().expect("N");
    let trials: u64 = args[1].parse().expect("TRIALS");
    let alpha: f64 = args[2].parse().expect("ALPHA");
    let mode = args[3].as_str();
    let analysis = common::Analysis::new(alpha);
    let (alarms, median_lag1) = analysis.count(trials, |i| series(stream_seed(77, i), n, mode));
    println!(
        "mode={mode} n={n} alpha={alpha}: {alarms} of {trials} (expected {:.1}); null lag1 median {:.2}",
        alpha * trials as f64,
        median_lag1
    );
}
