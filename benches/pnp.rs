//! Speed of the pose solver: one 16-keypoint object solved to the maximum-likelihood optimum with
//! covariance, from the global start (cold) and from the previous frame's pose (warm). The
//! problems (a non-planar target at 6 m, and a drogue-like ring with relief at 15 m, where the
//! mirror minimum is examined too) are read from fixtures/opencv/bench_pnp.json, written by
//! scripts/bench_opencv_pnp.py, which times OpenCV on the same data; the non-planar one is also
//! timed with two keypoints displaced. Figures are recorded in docs/benchmarks.md (section "PnP").

use std::hint::black_box;
use std::path::Path;

use criterion::{criterion_group, criterion_main, Criterion};
use mountdrift::camera::{Camera, Distortion};
use mountdrift::model::{KeypointModel, ModelPoint};
use mountdrift::pnp::{solve_pose, PnpOptions, PoseStatus};
use mountdrift::session::Observation;
use nalgebra::{Isometry3, Translation3, UnitQuaternion, Vector2, Vector3};
use serde_json::Value;

fn numbers(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

fn camera(c: &Value) -> Camera {
    let d = numbers(&c["distortion"]);
    let distortion = Distortion::BrownConrady {
        k1: d[0],
        k2: d[1],
        p1: d[2],
        p2: d[3],
        k3: d[4],
    };
    let num = |k: &str| c[k].as_f64().expect("number");
    let size = |k: &str| c[k].as_u64().expect("size") as u32;
    Camera::new(
        size("width"),
        size("height"),
        num("fx"),
        num("fy"),
        num("cx"),
        num("cy"),
        num("skew"),
        distortion,
        1.0,
    )
    .expect("valid camera")
}

fn pose(rvec: &Value, tvec: &Value) -> Isometry3<f64> {
    Isometry3::from_parts(
        Translation3::from(Vector3::from_vec(numbers(tvec))),
        UnitQuaternion::from_scaled_axis(Vector3::from_vec(numbers(rvec))),
    )
}

struct Case {
    name: String,
    model: KeypointModel,
    obs: Vec<Observation>,
    previous: Isometry3<f64>,
}

fn case(p: &Value) -> Case {
    let points = p["object_points_m"]
        .as_array()
        .expect("points")
        .iter()
        .enumerate()
        .map(|(i, v)| ModelPoint {
            id: format!("k{i}"),
            xyz_m: Vector3::from_vec(numbers(v)),
        })
        .collect();
    let sigma = p["sigma_px"].as_f64().expect("sigma");
    let obs = p["pixels"]
        .as_array()
        .expect("pixels")
        .iter()
        .enumerate()
        .map(|(i, v)| Observation {
            point: i,
            px: Vector2::from_vec(numbers(v)),
            sigma_px: sigma,
        })
        .collect();
    Case {
        name: p["name"].as_str().expect("name").to_string(),
        model: KeypointModel::new(points, "k0").expect("valid model"),
        obs,
        previous: pose(&p["previous_rvec"], &p["previous_tvec"]),
    }
}

fn pnp(c: &mut Criterion) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/opencv/bench_pnp.json");
    let fixture: Value =
        serde_json::from_str(&std::fs::read_to_string(path).expect("fixture")).expect("JSON");
    let cam = camera(&fixture["camera"]);
    let options = PnpOptions::default();
    let mut cases: Vec<Case> = fixture["problems"]
        .as_array()
        .expect("problems")
        .iter()
        .map(case)
        .collect();
    // The first problem again with two keypoints displaced by about 50 px: the price of the
    // outlier handling (Huber stage, gate, subset starts).
    let mut dirty = case(&fixture["problems"][0]);
    dirty.name.push_str("_2outliers");
    dirty.obs[3].px += Vector2::new(45.0, -20.0);
    dirty.obs[11].px += Vector2::new(-30.0, 40.0);
    cases.push(dirty);
    for k in &cases {
        let solved = solve_pose(&cam, &k.model, &k.obs, None, &options);
        assert!(
            matches!(solved, PoseStatus::Solved(_)),
            "{}: {solved:?}",
            k.name
        );
        c.bench_function(&format!("pnp/{}/cold", k.name), |b| {
            b.iter(|| solve_pose(black_box(&cam), &k.model, black_box(&k.obs), None, &options))
        });
        c.bench_function(&format!("pnp/{}/warm", k.name), |b| {
            b.iter(|| {
                let warm = Some(black_box(&k.previous));
                solve_pose(black_box(&cam), &k.model, black_box(&k.obs), warm, &options)
            })
        });
    }
}

criterion_group!(benches, pnp);
criterion_main!(benches);
