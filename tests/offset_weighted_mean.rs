//! Frames weighted by their deviation information average to the true mount.
//!
//! The per-frame maximum-likelihood pose is unbiased to first order in the pixel noise. An
//! information-weighted mean of many frames stays unbiased only if the weights do not depend on
//! each frame's own noise (docs/method.md, audit pipeline step 2). The test simulates 20,000
//! frames of the clean preset's probe with white pixel noise and 5% keypoint dropouts; the
//! simulated true mount (equal to the nominal) is the reference. The weighted mean of the
//! frames' deviations must lie within 4.5 standard errors of zero on every axis. The standard
//! errors come from the scatter of 20 independent batch means.
//!
//! To show that the check can fail, the same mean is formed with each frame weighted at its own
//! solution. It must be off by more than 4.5 standard errors in x: that weighting puts about
//! +0.4 mm in x into this geometry at 0.5 px.

mod weighting_common;

use mountdrift::offset::frames::FrameSolver;
use mountdrift::offset::mount_deviation;
use mountdrift::pnp::{solve_pose, PnpOptions};
use mountdrift::sim::scenario::NoiseSpec;
use mountdrift::sim::{preset, Simulation};
use nalgebra::Vector6;
use weighting_common::BatchMeans;

const FRAMES: usize = 20_000;
const BATCHES: usize = 20;
const LIMIT_SE: f64 = 4.5;

#[test]
fn reference_weighted_mean_of_many_frames_is_unbiased() {
    let mut scenario = preset("clean").expect("preset exists");
    scenario.duration_s = FRAMES as f64 / scenario.frame_rate_hz;
    scenario.noise = NoiseSpec {
        pixel_sigma: 0.5,
        correlated: None,
        outliers: None,
        dropout_probability: 0.05,
        frame_missing_probability: 0.0,
        occlusions: Vec::new(),
        stated_sigma_px: None,
    };
    let sim = Simulation::new(&scenario).expect("valid scenario");
    let mount = *sim.true_initial_mount();
    let solver = FrameSolver::new(
        sim.camera(),
        sim.probe(),
        sim.drogue(),
        mount,
        PnpOptions::default(),
    );
    let mut frames: Vec<_> = sim.frames().map(|f| f.detections).collect();
    for f in &mut frames {
        f.drogue.clear();
    }
    let per_batch = frames.len() / BATCHES;
    let (mut at_reference, mut at_own) = (BatchMeans::default(), BatchMeans::default());
    let options = PnpOptions::default();
    let warm = mount.body_from_camera().inverse();
    for batch in frames.chunks_exact(per_batch) {
        for ((record, covariance), det) in solver.solve_batch(batch).into_iter().zip(batch) {
            let (Some(deviation), Some(covariance)) = (record.deviation, covariance) else {
                continue;
            };
            let information = covariance.to_matrix().try_inverse().expect("full rank");
            at_reference.add(&information, &deviation);
            let own = solve_pose(sim.camera(), sim.probe(), &det.probe, Some(&warm), &options);
            let own = mount_deviation(own.estimate().expect("solved"), &mount);
            at_own.add(&own.information, &own.value);
        }
        at_reference.close();
        at_own.close();
    }
    let z = z_scores(&at_reference);
    assert!(
        z.iter().all(|v| v.abs() < LIMIT_SE),
        "reference-weighted mean off by {z:?} standard errors"
    );
    let z_own = z_scores(&at_own);
    assert!(
        z_own[0] > LIMIT_SE,
        "own-solution weighting should show its bias in x; z = {z_own:?}"
    );
}

/// The grand mean in standard errors, per axis.
fn z_scores(means: &BatchMeans) -> Vector6<f64> {
    means.mean().component_div(&means.standard_error())
}
