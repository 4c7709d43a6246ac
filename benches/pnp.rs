//! Speed of the pose solver: one 16-keypoint object solved to the maximum-likelihood optimum with
//! covariance, from the global start (cold) and from the previous frame's pose (warm), for a
//! non-planar object and for a near-planar drogue-like ring where the mirror minimum is refined
//! too. Fixed seeds; figures are recorded in docs/benchmarks.md (section "PnP").

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion};
use mountdrift::camera::{Camera, Distortion};
use mountdrift::model::{KeypointModel, ModelPoint};
use mountdrift::pnp::{solve_pose, PnpOptions, PoseStatus};
use mountdrift::session::Observation;
use nalgebra::{Isometry3, Translation3, UnitQuaternion, Vector2, Vector3};
use rand::{RngExt, SeedableRng};
use rand_distr::{Distribution, Normal};
use rand_pcg::Pcg64Mcg;

fn camera() -> Camera {
    let d = Distortion::BrownConrady {
        k1: -0.12,
        k2: 0.03,
        p1: 0.0004,
        p2: -0.0003,
        k3: 0.0,
    };
    Camera::new(1280, 960, 1100.0, 1100.0, 640.0, 480.0, 0.0, d, 1.0).expect("valid camera")
}

fn model(points: &[Vector3<f64>]) -> KeypointModel {
    let pts = points
        .iter()
        .enumerate()
        .map(|(i, p)| ModelPoint {
            id: format!("k{i}"),
            xyz_m: *p,
        })
        .collect();
    KeypointModel::new(pts, "k0").expect("valid model")
}

/// 16 points spread through a 1.2 x 0.8 x 0.6 m volume.
fn nonplanar_points(rng: &mut Pcg64Mcg) -> Vec<Vector3<f64>> {
    (0..16)
        .map(|_| {
            Vector3::new(
                rng.random_range(-0.6..0.6),
                rng.random_range(-0.4..0.4),
                rng.random_range(-0.3..0.3),
            )
        })
        .collect()
}

/// A 0.6 m ring of 12 points plus 4 points 0.25 m behind it (a drogue-like target).
fn drogue_points() -> Vec<Vector3<f64>> {
    let mut pts: Vec<Vector3<f64>> = (0..12)
        .map(|k| {
            let a = f64::from(k) * std::f64::consts::TAU / 12.0;
            Vector3::new(0.3 * a.cos(), 0.3 * a.sin(), 0.0)
        })
        .collect();
    for k in 0..4 {
        let a = f64::from(k) * std::f64::consts::FRAC_PI_2 + 0.3;
        pts.push(Vector3::new(0.12 * a.cos(), 0.12 * a.sin(), 0.25));
    }
    pts
}

fn observe(
    cam: &Camera,
    pts: &[Vector3<f64>],
    pose: &Isometry3<f64>,
    rng: &mut Pcg64Mcg,
) -> Vec<Observation> {
    let noise = Normal::new(0.0, 1.0).expect("valid normal");
    pts.iter()
        .enumerate()
        .map(|(i, p)| {
            let px = cam
                .project(&(pose * nalgebra::Point3::from(*p)).coords)
                .expect("visible");
            Observation {
                point: i,
                px: px + Vector2::new(noise.sample(rng), noise.sample(rng)),
                sigma_px: 1.0,
            }
        })
        .collect()
}

fn pose(rvec: [f64; 3], t: [f64; 3]) -> Isometry3<f64> {
    Isometry3::from_parts(
        Translation3::new(t[0], t[1], t[2]),
        UnitQuaternion::from_scaled_axis(Vector3::from(rvec)),
    )
}

fn bench_case(
    c: &mut Criterion,
    name: &str,
    pts: &[Vector3<f64>],
    truth: &Isometry3<f64>,
    rng: &mut Pcg64Mcg,
) {
    let cam = camera();
    let m = model(pts);
    let obs = observe(&cam, pts, truth, rng);
    let options = PnpOptions::default();
    let solved = solve_pose(&cam, &m, &obs, None, &options);
    assert!(
        matches!(solved, PoseStatus::Solved(_)),
        "{name}: {solved:?}"
    );
    let previous = truth * pose([0.004, -0.003, 0.002], [0.01, -0.02, 0.03]);
    c.bench_function(&format!("pnp/{name}/cold"), |b| {
        b.iter(|| solve_pose(black_box(&cam), &m, black_box(&obs), None, &options))
    });
    c.bench_function(&format!("pnp/{name}/warm"), |b| {
        b.iter(|| {
            solve_pose(
                black_box(&cam),
                &m,
                black_box(&obs),
                Some(&previous),
                &options,
            )
        })
    });
}

fn pnp(c: &mut Criterion) {
    let mut rng = Pcg64Mcg::seed_from_u64(20_261_201);
    let pts = nonplanar_points(&mut rng);
    let truth = pose([0.3, -0.5, 0.2], [0.2, -0.1, 6.0]);
    bench_case(c, "nonplanar16", &pts, &truth, &mut rng);
    let truth = pose([2.9, 0.2, -0.1], [0.3, 0.4, 15.0]);
    bench_case(c, "drogue16_15m", &drogue_points(), &truth, &mut rng);
}

criterion_group!(benches, pnp);
criterion_main!(benches);
