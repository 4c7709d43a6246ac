//! False-alarm count of the drift analysis on clean series whose noise is a mixture of white
//! noise and an AR(1) component (the structure of per-keypoint white plus correlated detection
//! errors), with the per-frame covariance varying from frame to frame.
//!
//! Usage: cargo run --release --example far_mixture -- N TRIALS ALPHA SHARE RHO [JITTER]

use mountdrift::stats::penalty::stream_seed;
use mountdrift::stats::series::DeviationSample;
use nalgebra::{Matrix6, Vector6};
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

mod common;

fn normal(rng: &mut Pcg64Mcg) -> f64 {
    Distribution::<f64>::sample(&StandardNormal, rng)
}

fn series(seed: u64, n: usize, share: f64, rho: f64, jitter: f64) -> Vec<DeviationSample> {
    let mut rng = Pcg64Mcg::seed_from_u64(seed);
    let innovation = (1.0 - rho * rho).sqrt();
    let mut e = Vector6::from_fn(|_, _| normal(&mut rng));
    (0..n)
        .map(|t| {
            let w = Vector6::from_fn(|_, _| normal(&mut rng));
            e = e * rho + w * innovation;
            let white = Vector6::from_fn(|_, _| normal(&mut rng));
            // Frames seeing fewer points are noisier by the factor they are said to be.
            let scale = 1.0 + jitter * rng.random::<f64>();
            let x = (white * (1.0 - share).sqrt() + e * share.sqrt()) * scale;
            DeviationSample {
                frame: t as i64,
                time_s: t as f64 / 25.0,
                deviation: x,
                covariance: Matrix6::identity() * (0.7 * scale * scale),
            }
        })
        .collect()
}

fn main() {
    let args: Vec<f64> = std::env::args()
        .skip(1)
        .map(|a| a.parse().expect("numeric arguments"))
        .collect();
    let (n, trials, alpha, share, rho) =
        (args[0] as usize, args[1] as u64, args[2], args[3], args[4]);
    let jitter = args.get(5).copied().unwrap_or(0.0);
    let analysis = common::Analysis::new(alpha);
    let (alarms, median_lag1) = analysis.count(trials, |i| {
        series(stream_seed(77, i), n, share, rho, jitter)
    });
    println!(
        "n={n} share={share} rho={rho} jitter={jitter} alpha={alpha}: {alarms} of {trials} \
         (expected {:.1}); null lag1 median {:.2}",
        alpha * trials as f64,
        median_lag1
    );
}
