//! Shared helpers for the camera and pose tests: cameras and problems read from the OpenCV
//! fixtures (fixtures/opencv/, written by scripts/opencv_reference.py), synthetic targets,
//! observations and pose conversions. Not every test file uses every helper.
#![allow(dead_code)]

use std::path::Path;

use mountdrift::camera::{Camera, Distortion};
use mountdrift::model::{KeypointModel, ModelPoint};
use mountdrift::session::Observation;
use nalgebra::{Isometry3, Point3, Rotation3, Translation3, UnitQuaternion, Vector2, Vector3};
use serde_json::Value;

/// Reads a fixture from fixtures/opencv/.
pub fn fixture(name: &str) -> Value {
    let path = Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("fixtures/opencv")
        .join(name);
    let text = std::fs::read_to_string(&path).expect("fixture present");
    serde_json::from_str(&text).expect("fixture is JSON")
}

pub fn f64s(v: &Value) -> Vec<f64> {
    v.as_array()
        .expect("array")
        .iter()
        .map(|x| x.as_f64().expect("number"))
        .collect()
}

pub fn vec3(v: &Value) -> Vector3<f64> {
    Vector3::from_vec(f64s(v))
}

pub fn vec2(v: &Value) -> Vector2<f64> {
    Vector2::from_vec(f64s(v))
}

/// A camera as written in the fixtures (OpenCV coefficient order).
pub fn camera_from_fixture(c: &Value) -> Camera {
    let d = f64s(&c["distortion"]);
    let distortion = match c["model"].as_str().expect("model") {
        "pinhole" => Distortion::BrownConrady {
            k1: d[0],
            k2: d[1],
            p1: d[2],
            p2: d[3],
            k3: d[4],
        },
        _ => Distortion::KannalaBrandt {
            k1: d[0],
            k2: d[1],
            k3: d[2],
            k4: d[3],
        },
    };
    let num = |k: &str| c[k].as_f64().expect("number");
    Camera::new(
        c["width"].as_u64().expect("width") as u32,
        c["height"].as_u64().expect("height") as u32,
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

pub fn model_from_points(points: &[Vector3<f64>]) -> KeypointModel {
    let pts = points
        .iter()
        .enumerate()
        .map(|(i, p)| ModelPoint {
            id: format!("p{i}"),
            xyz_m: *p,
        })
        .collect();
    KeypointModel::new(pts, "p0").expect("valid model")
}

pub fn observations(pixels: &[Vector2<f64>], sigma_px: f64) -> Vec<Observation> {
    pixels
        .iter()
        .enumerate()
        .map(|(i, px)| Observation {
            point: i,
            px: *px,
            sigma_px,
        })
        .collect()
}

/// `T_CO` from an OpenCV (rvec, tvec) pair.
pub fn pose_from_rvec(rvec: &Vector3<f64>, tvec: &Vector3<f64>) -> Isometry3<f64> {
    Isometry3::from_parts(
        Translation3::from(*tvec),
        UnitQuaternion::from_scaled_axis(*rvec),
    )
}

/// Left-perturbation tangent (δθ, δt) taking `reference` to `pose`.
pub fn tangent(pose: &Isometry3<f64>, reference: &Isometry3<f64>) -> nalgebra::Vector6<f64> {
    let dr = (pose.rotation * reference.rotation.inverse()).scaled_axis();
    let dt = pose.translation.vector - reference.translation.vector;
    nalgebra::Vector6::new(dr.x, dr.y, dr.z, dt.x, dt.y, dt.z)
}

/// Perfect pixels of model points seen from `pose`.
pub fn project_all(
    cam: &Camera,
    points: &[Vector3<f64>],
    pose: &Isometry3<f64>,
) -> Vec<Vector2<f64>> {
    points
        .iter()
        .map(|p| {
            cam.project(&(pose * Point3::from(*p)).coords)
                .expect("in front")
        })
        .collect()
}

/// Jacobian of OpenCV's rotation vector `log(R)` with respect to a left perturbation
/// `R = exp([δθ]x) R̂`, by central differences (no closed form to get wrong).
pub fn rvec_jacobian(rotation: &UnitQuaternion<f64>) -> nalgebra::Matrix3<f64> {
    let h = 1e-6;
    let mut j = nalgebra::Matrix3::zeros();
    for k in 0..3 {
        let mut d = Vector3::zeros();
        d[k] = h;
        let plus = (Rotation3::new(d) * rotation.to_rotation_matrix()).scaled_axis();
        let minus = (Rotation3::new(-d) * rotation.to_rotation_matrix()).scaled_axis();
        j.set_column(k, &((plus - minus) / (2.0 * h)));
    }
    j
}

/// Covariance in the tangent space mapped to OpenCV's (rvec, tvec) parameters.
pub fn covariance_in_rvec_tvec(
    cov: &nalgebra::Matrix6<f64>,
    rotation: &UnitQuaternion<f64>,
) -> nalgebra::Matrix6<f64> {
    let mut b = nalgebra::Matrix6::identity();
    b.fixed_view_mut::<3, 3>(0, 0)
        .copy_from(&rvec_jacobian(rotation));
    b * cov * b.transpose()
}

/// A drogue-like target: a 0.6 m ring of 12 points plus 4 points 0.25 m behind it.
pub fn drogue_points() -> Vec<Vector3<f64>> {
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
pub mod stress;
