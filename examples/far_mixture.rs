//! False-alarm count of the drift analysis on clean series whose noise is a mixture of white
//! noise and an AR(1) component (the structure of per-keypoint white plus correlated detection
//! errors), with the per-frame covariance varying from frame to frame.
//!
//! Usage: cargo run --release --example far_mixture -- N TRIALS ALPHA SHARE RHO [JITTER] [STEP]
//!
//! With `STEP` the first axis shifts by that many marginal standard deviations at the middle of
//! each series, and the count is one of detections (power) instead of false alarms.

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

fn series(
    seed: u64,
    n: usize,
    share: f64,
    rho: f64,
    (jitter, step): (f64, f64),
) -> Vec<DeviationSample> {
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
            let mut x = (white * (1.0 - share).sqrt() + e * share.sqrt()) * scale;
            if 2 * t >= n {
                x[0] += step;
            }
            DeviationSample {
                frame: t as i64,
                time_s: t as f64 / 25.0,
                deviation: x,
                covariance: Matrix6::identity() * (0.7 * scale * scale),
            }
        })
        .collect()
}

/// How many series got each null class, as `class:count` pairs in increasing class.
fn class_counts(outcomes: &[common::Outcome]) -> String {
    let mut counts: Vec<(f64, usize)> = Vec::new();
    for o in outcomes {
        match counts.iter_mut().find(|(c, _)| *c == o.null_lag1) {
            Some(entry) => entry.1 += 1,
            None => counts.push((o.null_lag1, 1)),
        }
    }
    counts.sort_by(|a, b| a.0.total_cmp(&b.0));
    counts
        .iter()
        .map(|(c, k)| format!("{c}:{k}"))
        .collect::<Vec<_>>()
        .join(" ")
}

fn main() {
    let args: Vec<f64> = std::env::args()
        .skip(1)
        .map(|a| a.parse().expect("numeric arguments"))
        .collect();
    let (n, trials, alpha, share, rho) =
        (args[0] as usize, args[1] as u64, args[2], args[3], args[4]);
    let jitter = args.get(5).copied().unwrap_or(0.0);
    let step = args.get(6).copied().unwrap_or(0.0);
    let analysis = common::Analysis::new(alpha);
    let outcomes: Vec<common::Outcome> = (0..trials)
        .map(|i| analysis.outcome(&series(stream_seed(77, i), n, share, rho, (jitter, step))))
        .collect();
    let alarms = outcomes.iter().filter(|o| o.alarm).count();
    let median = |f: fn(&common::Outcome) -> f64| {
        common::median(&mut outcomes.iter().map(f).collect::<Vec<_>>())
    };
    let classes = class_counts(&outcomes);
    println!(
        "n={n} share={share} rho={rho} jitter={jitter} step={step} alpha={alpha}: {alarms} of {trials} \
         (expected {:.1}); null lag1 median {:.2}; medians: lag1 {:.3}, scale_lag1 {:.3}, \
         studentiser {:.3}, penalty {:.2}; classes {classes}",
        alpha * trials as f64,
        median(|o| o.null_lag1),
        median(|o| o.lag1),
        median(|o| o.scale_lag1),
        median(|o| o.mean_factor),
        median(|o| o.penalty),
    );
}
