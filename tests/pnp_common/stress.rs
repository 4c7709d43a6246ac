//! Random well-posed pose problems (seeded) and the gross-failure census over them, shared by
//! tests/pnp_stress.rs (a smaller run) and examples/pnp_stress.rs (the 100,000-problem run whose
//! figures docs/benchmarks.md records).
//!
//! A problem: a random lens (Brown-Conrady or Kannala-Brandt with skew), a target (non-planar,
//! planar, near-planar drogue-like ring with relief, or near-collinear probe-like; 6 to 16
//! points), a pose that keeps every point in the image with the target at least 60 px across, and
//! Gaussian pixel noise of 0.3 to 2 px. Well-posed means the Gaussian picture of the pose holds,
//! checked on the noise-free problem: the Cramér-Rao bound is below 0.02 rad in rotation and 2% of
//! the range in translation (beyond that the likelihood is visibly non-Gaussian and "sigma" loses
//! its meaning), and the mirror minimum, if any, is at least 100 (10 sigma squared) worse in
//! chi-square, so that noise cannot make it win. Poses that are not well-posed are redrawn.
//!
//! A gross failure is a rejected frame, or a reported pose more than 10 predicted standard
//! deviations from the truth (Mahalanobis distance with the solver's own information) unless the
//! frame is flagged ambiguous and its alternative is within 10.

use mountdrift::camera::{Camera, Distortion};
use mountdrift::pnp::{fisher_information, solve_pose, PnpOptions, PoseStatus};
use nalgebra::{Isometry3, Point3, Translation3, UnitQuaternion, Vector2, Vector3};
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, StandardNormal};
use rand_pcg::Pcg64Mcg;

use super::{model_from_points, observations, tangent};

pub const KINDS: [&str; 4] = ["non-planar", "planar", "drogue-like", "probe-like"];

/// Outcome of a census.
#[derive(Debug, Default)]
pub struct Census {
    pub solved: u64,
    pub per_kind: [u64; 4],
    /// Draws (target and pose) that were not well-posed and were replaced.
    pub redrawn: u64,
    pub failures: Vec<String>,
    pub flagged_ambiguous: u64,
    pub rescued_by_alternative: u64,
    pub worst_sigma: f64,
}

fn random_camera(rng: &mut Pcg64Mcg) -> Camera {
    if rng.random_bool(0.7) {
        let f = rng.random_range(500.0..2000.0);
        let d = Distortion::BrownConrady {
            k1: rng.random_range(-0.25..0.05),
            k2: rng.random_range(-0.02..0.06),
            p1: rng.random_range(-0.001..0.001),
            p2: rng.random_range(-0.001..0.001),
            k3: 0.0,
        };
        Camera::new(1280, 960, f, f, 640.0, 480.0, 0.0, d, 1.0).unwrap()
    } else {
        let f = rng.random_range(300.0..600.0);
        let d = Distortion::KannalaBrandt {
            k1: rng.random_range(-0.05..0.1),
            k2: rng.random_range(-0.02..0.02),
            k3: rng.random_range(-0.005..0.005),
            k4: 0.0,
        };
        let skew = rng.random_range(-1.0..1.0);
        Camera::new(1280, 960, f, f, 640.0, 480.0, skew, d, 1.0).unwrap()
    }
}

fn random_target(rng: &mut Pcg64Mcg, kind: usize) -> Vec<Vector3<f64>> {
    let n = rng.random_range(6..=16usize);
    let scale = rng.random_range(0.3..2.0) * 0.5;
    (0..n)
        .map(|i| {
            let u = Vector3::new(
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
                rng.random_range(-1.0..1.0),
            );
            let p = match kind {
                0 => Vector3::new(u.x, 0.7 * u.y, 0.5 * u.z),
                1 => Vector3::new(u.x, u.y, 0.0),
                2 => {
                    let a = std::f64::consts::TAU * i as f64 / n as f64;
                    let relief = if i % 4 == 3 { 0.4 } else { 0.0 };
                    Vector3::new(a.cos(), a.sin(), relief)
                }
                _ => Vector3::new(2.0 * u.x, 0.15 * u.y, 0.15 * u.z),
            };
            p * scale
        })
        .collect()
}

/// A pose keeping the whole target in the image, at least 60 px across.
fn random_pose(rng: &mut Pcg64Mcg, cam: &Camera, pts: &[Vector3<f64>]) -> Option<Isometry3<f64>> {
    let axis = Vector3::new(
        rng.random_range(-1.0..1.0),
        rng.random_range(-1.0..1.0),
        rng.random_range(-1.0..1.0),
    );
    let rot = UnitQuaternion::from_scaled_axis(axis.normalize() * rng.random_range(0.0..3.1));
    let size = pts.iter().map(|p| p.norm()).fold(0.0, f64::max);
    let max_range = cam.fx * 2.0 * size / 60.0;
    let range = rng.random_range((3.0 * size).min(0.5 * max_range)..max_range);
    let dir = Vector3::new(
        rng.random_range(-0.25..0.25),
        rng.random_range(-0.2..0.2),
        1.0,
    );
    let pose = Isometry3::from_parts(Translation3::from(dir.normalize() * range), rot);
    let visible = pts.iter().all(|p| {
        let c = pose * Point3::from(*p);
        c.z > 0.5 && cam.project(&c.coords).is_some_and(|px| cam.in_image(&px))
    });
    visible.then_some(pose)
}

/// Checked on the noise-free problem (see the module documentation).
fn well_posed(cam: &Camera, pts: &[Vector3<f64>], truth: &Isometry3<f64>, sigma: f64) -> bool {
    let exact: Vec<Vector2<f64>> = pts
        .iter()
        .map(|p| cam.project(&(truth * Point3::from(*p)).coords).unwrap())
        .collect();
    let model = model_from_points(pts);
    let obs = observations(&exact, sigma);
    let Some(crb) = fisher_information(cam, &model, &obs, truth).and_then(|i| i.try_inverse())
    else {
        return false;
    };
    let rot = (0..3).map(|k| crb[(k, k)]).fold(0.0, f64::max).sqrt();
    let trans = (crb[(3, 3)] + crb[(4, 4)] + crb[(5, 5)]).sqrt();
    if rot > 0.02 || trans > 0.02 * truth.translation.vector.norm() {
        return false;
    }
    match solve_pose(cam, &model, &obs, None, &PnpOptions::default()) {
        PoseStatus::Solved(e) => e.ambiguity.is_none_or(|a| a.delta_chi2 >= 100.0),
        PoseStatus::Rejected(_) => false,
    }
}

/// Solves `problems` well-posed random problems drawn from `seed` and counts gross failures.
pub fn census(problems: u64, seed: u64) -> Census {
    let options = PnpOptions::default();
    let mut out = Census::default();
    let mut draw = 0u64;
    while out.solved < problems {
        let mut rng = Pcg64Mcg::seed_from_u64(seed.wrapping_add(draw));
        draw += 1;
        // Equal shares of the four target kinds among the solved problems.
        let kind = (out.solved % 4) as usize;
        let cam = random_camera(&mut rng);
        let pts = random_target(&mut rng, kind);
        let sigma = rng.random_range(0.3..2.0);
        let Some(truth) =
            random_pose(&mut rng, &cam, &pts).filter(|t| well_posed(&cam, &pts, t, sigma))
        else {
            out.redrawn += 1;
            continue;
        };
        let pixels: Vec<Vector2<f64>> = pts
            .iter()
            .map(|p| {
                let px = cam.project(&(truth * Point3::from(*p)).coords).unwrap();
                let n: [f64; 2] = [
                    StandardNormal.sample(&mut rng),
                    StandardNormal.sample(&mut rng),
                ];
                px + Vector2::from(n) * sigma
            })
            .collect();
        out.solved += 1;
        out.per_kind[kind] += 1;
        let model = model_from_points(&pts);
        let est = match solve_pose(&cam, &model, &observations(&pixels, sigma), None, &options) {
            PoseStatus::Solved(e) => e,
            PoseStatus::Rejected(r) => {
                out.failures
                    .push(format!("draw {draw}: rejected: {}", r.message));
                continue;
            }
        };
        let sigmas = |pose: &Isometry3<f64>| {
            let e = tangent(pose, &truth);
            e.dot(&(est.information * e)).sqrt()
        };
        let err = sigmas(&est.pose);
        out.flagged_ambiguous += u64::from(est.ambiguous);
        if err <= 10.0 {
            out.worst_sigma = out.worst_sigma.max(err);
            continue;
        }
        let rescued = est.ambiguous
            && est
                .ambiguity
                .as_ref()
                .is_some_and(|a| sigmas(&a.alternative) <= 10.0);
        if rescued {
            out.rescued_by_alternative += 1;
        } else {
            out.failures.push(format!(
                "draw {draw}: {} target of {} points, {err:.1} sigma off",
                KINDS[kind],
                pts.len()
            ));
        }
    }
    out
}
