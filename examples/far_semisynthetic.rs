//! Which property of the simulator's clean deviation series raises the false-alarm rate: each
//! clean session is solved once, and the drift analysis is run on (real) its screened deviation
//! series, (semi) synthetic white-plus-AR(1) noise drawn with the session's own per-frame
//! covariances, and (flat) the same noise with every frame given the session's mean covariance.
//!
//! Usage: cargo run --release --example far_semisynthetic -- SECONDS N ALPHA

use std::cell::RefCell;

use mountdrift::commands::audit::{audit_frames_with_mounts, simulated, Setup};
use mountdrift::session::Policy;
use mountdrift::sim::{preset, Simulation};
use mountdrift::stats::information::{Information, Spectrum};
use mountdrift::stats::penalty::stream_seed;
use mountdrift::stats::screening::screen_gross_errors;
use mountdrift::stats::series::DeviationSample;
use nalgebra::{Matrix6, Vector6};
use rand::SeedableRng;
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

mod common;

const SHARE: f64 = 0.265;
const RHO: f64 = 0.8;

fn synthetic(real: &[DeviationSample], seed: u64, flat: bool) -> Vec<DeviationSample> {
    let mut rng = Pcg64Mcg::seed_from_u64(seed);
    let mut draw = || Vector6::from_fn(|_, _| StandardNormal.sample(&mut rng));
    let mean = real.iter().map(|s| s.covariance).sum::<Matrix6<f64>>() / real.len() as f64;
    let innovation = (1.0 - RHO * RHO).sqrt();
    let mut e: Vector6<f64> = draw();
    real.iter()
        .map(|s| {
            e = e * RHO + draw() * innovation;
            let unit = draw() * (1.0 - SHARE).sqrt() + e * SHARE.sqrt();
            let covariance = if flat { mean } else { s.covariance };
            DeviationSample {
                deviation: Spectrum::new(&covariance, 0.0).sqrt() * unit,
                covariance,
                ..s.clone()
            }
        })
        .collect()
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let seconds: f64 = args[0].parse().expect("SECONDS");
    let runs: u64 = args[1].parse().expect("N");
    let alpha: f64 = args[2].parse().expect("ALPHA");
    let analysis = common::Analysis::new(alpha);
    let alarm = |samples: &[DeviationSample]| {
        let (alarm, lag1) = analysis.alarm(samples);
        (usize::from(alarm), lag1)
    };
    let mut counts = [0usize; 3];
    for seed in 1..=runs {
        let mut scenario = preset("clean").expect("known preset");
        scenario.duration_s = seconds;
        scenario.seed = seed;
        scenario.mount_events.clear();
        let sim = Simulation::new(&scenario).expect("valid scenario");
        let setup = Setup::from_simulation(&sim, "clean");
        let captured = RefCell::new(Vec::new());
        let capture =
            |records: &[mountdrift::offset::frames::FrameRecord],
             covariances: &[Option<mountdrift::stats::packed::PackedSym6>]| {
                *captured.borrow_mut() = records
                    .iter()
                    .zip(covariances)
                    .filter_map(|(r, covariance)| {
                        Some(DeviationSample {
                            frame: r.frame as i64,
                            time_s: r.time_s,
                            deviation: r.deviation?,
                            covariance: covariance.as_ref()?.to_matrix(),
                        })
                    })
                    .collect::<Vec<_>>();
                Vec::new()
            };
        audit_frames_with_mounts(
            &setup,
            sim.frames().map(simulated),
            &Policy::default(),
            &|_| {},
            Some(&capture),
        )
        .expect("audit runs");
        let all = captured.into_inner();
        let information: Vec<Information> = all
            .iter()
            .enumerate()
            .map(|(i, s)| Information::from_covariance(&s.covariance, i).unwrap())
            .collect();
        let x: Vec<Vector6<f64>> = all.iter().map(|s| s.deviation).collect();
        let keep = screen_gross_errors(&x, &information, 10, 1e-6)
            .unwrap()
            .keep;
        let real: Vec<DeviationSample> = all
            .iter()
            .zip(&keep)
            .filter(|(_, k)| **k)
            .map(|(s, _)| s.clone())
            .collect();
        let r = alarm(&real);
        let semi = alarm(&synthetic(&real, stream_seed(99, seed), false));
        let flat = alarm(&synthetic(&real, stream_seed(99, seed), true));
        for (c, a) in counts.iter_mut().zip([r.0, semi.0, flat.0]) {
            *c += a;
        }
        println!(
            "seed {seed}: n {} real {} ({:.2}) semi {} ({:.2}) flat {} ({:.2})",
            real.len(),
            r.0,
            r.1,
            semi.0,
            semi.1,
            flat.0,
            flat.1
        );
    }
    println!(
        "alpha {alpha}, {runs} sessions: real {} semi {} flat {} (expected {:.1})",
        counts[0],
        counts[1],
        counts[2],
        alpha * runs as f64
    );
}
