//! The mean of many frames' mount deviations for one fixed geometry of a preset (its true
//! mount), with white pixel noise and optional keypoint dropouts: each frame weighted by the
//! information at its own solution, by the information at the true mount (what the frame
//! records carry, docs/method.md), or not weighted. Means and standard errors come from
//! batches of 1000 frames.
//!
//! `cargo run --release --example pose_bias -- [PRESET [SIGMA_PX [BATCHES [DROPOUT]]]]`
//! (defaults: clean 0.5 20 0).

#[path = "../tests/weighting_common/mod.rs"]
mod weighting_common;

use mountdrift::offset::{deviation_jacobian, mount_deviation};
use mountdrift::pnp::{fisher_information, CovarianceSummary};
use mountdrift::pnp::{solve_pose, PnpOptions};
use mountdrift::session::Observation;
use mountdrift::sim::imaging::Imager;
use mountdrift::sim::presets::preset;
use mountdrift::sim::Simulation;
use nalgebra::Matrix6;
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, Normal};
use weighting_common::BatchMeans;

/// Prints a mean with its standard error and the batch spread.
fn report(name: &str, means: &BatchMeans) {
    println!("{name:<10} mean {:>8.4?}", means.mean().as_slice());
    println!(
        "{:<10} se   {:>8.4?}  batch sd {:.4?}",
        "",
        means.standard_error().as_slice(),
        means.batch_sd().as_slice()
    );
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let name = args.get(1).map(String::as_str).unwrap_or("clean");
    let sigma: f64 = args.get(2).and_then(|a| a.parse().ok()).unwrap_or(0.5);
    let batches: usize = args.get(3).and_then(|a| a.parse().ok()).unwrap_or(20);
    let dropout: f64 = args.get(4).and_then(|a| a.parse().ok()).unwrap_or(0.0);
    let per_batch = 1000;
    let sim = Simulation::new(&preset(name).unwrap()).unwrap();
    let imager = Imager::new(sim.camera().clone());
    let mount = *sim.true_initial_mount();
    let t_cb = mount.body_from_camera().inverse();
    let model = sim.probe();
    let j_ref = deviation_jacobian(&t_cb, &mount);
    let j_inv = j_ref.try_inverse().unwrap();
    let ideal: Vec<_> = model
        .points()
        .iter()
        .map(|p| imager.ideal_pixel(&(t_cb * nalgebra::Point3::from(p.xyz_m)).coords))
        .collect();
    let mut rng = rand_pcg::Pcg64Mcg::seed_from_u64(7);
    let n = Normal::new(0.0, sigma).unwrap();
    let opts = PnpOptions::default();
    let (mut own, mut truth, mut flat) = (
        BatchMeans::default(),
        BatchMeans::default(),
        BatchMeans::default(),
    );
    for _ in 0..batches {
        for _ in 0..per_batch {
            let mut obs = Vec::new();
            for (i, px) in ideal.iter().enumerate() {
                let keep = rng.random::<f64>() >= dropout;
                let e = nalgebra::Vector2::new(n.sample(&mut rng), n.sample(&mut rng));
                if let (true, Some(px)) = (keep, px) {
                    obs.push(Observation {
                        point: i,
                        px: px + e,
                        sigma_px: sigma,
                    });
                }
            }
            let Some(est) = solve_pose(sim.camera(), model, &obs, Some(&t_cb), &opts)
                .estimate()
                .cloned()
            else {
                continue;
            };
            let ds = mount_deviation(&est, &mount);
            own.add(&ds.information, &ds.value);
            let f = fisher_information(sim.camera(), model, &obs, &t_cb).unwrap();
            let cov = CovarianceSummary::of(&f, 1.0).covariance;
            let w_true = (j_ref * cov * j_ref.transpose())
                .try_inverse()
                .unwrap_or_else(|| j_inv.transpose() * f * j_inv);
            truth.add(&w_true, &ds.value);
            flat.add(&Matrix6::identity(), &ds.value);
        }
        own.close();
        truth.close();
        flat.close();
    }
    println!("{name} sigma {sigma} dropout {dropout}: {batches} batches of {per_batch}");
    report("own", &own);
    report("reference", &truth);
    report("unweighted", &flat);
}
