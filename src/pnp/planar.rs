//! Planar global start: a homography from the model plane to the normalised image (DLT with
//! Hartley's normalisation), then IPPE (Collins and Bartoli, "Infinitesimal plane-based pose
//! estimation", IJCV 109(3), 2014), which decomposes the homography's first-order behaviour at
//! one plane point into the two rotations that explain it: both planar solutions.
//!
//! Near-planar sets use their best-fit plane (the offsets from it are dropped here and recovered
//! by the refinement).

use nalgebra::{Matrix2, Matrix3, Rotation3, SMatrix, SVector, Vector2, Vector3};

use super::linalg::cholesky_solve;
use super::pose::Pose;
use super::prepare::{Correspondence, PointGeometry};

/// Both IPPE poses `T_CO` (either may be `None` if its translation is not determined).
pub(crate) fn ippe_starts(pts: &[Correspondence], g: &PointGeometry) -> [Option<Pose>; 2] {
    let plane: Vec<Vector2<f64>> = pts
        .iter()
        .map(|c| {
            let d = g.axes.transpose() * (c.model_m - g.centroid_m);
            Vector2::new(d.x, d.y)
        })
        .collect();
    let Some(h) = homography(&plane, pts) else {
        return [None, None];
    };
    // The plane origin (the centroid) maps to v; J is the homography's Jacobian there.
    let v = Vector2::new(h[(0, 2)], h[(1, 2)]);
    let j = Matrix2::new(
        h[(0, 0)] - h[(2, 0)] * v.x,
        h[(0, 1)] - h[(2, 1)] * v.x,
        h[(1, 0)] - h[(2, 0)] * v.y,
        h[(1, 1)] - h[(2, 1)] * v.y,
    );
    let Some(rotations) = ippe_rotations(&v, &j) else {
        return [None, None];
    };
    rotations.map(|r_plane| {
        let t_plane = translation_for(&r_plane, &plane, pts)?;
        // x_C = Rp Eᵀ (p − c) + tp, with E the principal axes.
        let r = r_plane * g.axes.transpose();
        let pose = Pose {
            r,
            t: t_plane - r * g.centroid_m,
        };
        pose.is_finite().then_some(pose)
    })
}

/// Hartley normalisation: translate to the mean and scale to RMS distance √2.
fn normalizer(points: impl Iterator<Item = Vector2<f64>> + Clone) -> Matrix3<f64> {
    let mut n = 0.0;
    let mut mean = Vector2::zeros();
    for p in points.clone() {
        n += 1.0;
        mean += p;
    }
    mean /= n;
    let ms: f64 = points.map(|p| (p - mean).norm_squared()).sum::<f64>() / n;
    let s = if ms > 0.0 { (2.0 / ms).sqrt() } else { 1.0 };
    Matrix3::new(s, 0.0, -s * mean.x, 0.0, s, -s * mean.y, 0.0, 0.0, 1.0)
}

fn apply(t: &Matrix3<f64>, p: &Vector2<f64>) -> Vector2<f64> {
    Vector2::new(t[(0, 0)] * p.x + t[(0, 2)], t[(1, 1)] * p.y + t[(1, 2)])
}

/// DLT homography plane → normalised image with h33 = 1 (safe: the plane origin is the observed
/// centroid, which lies in front of the camera, so h33 is its depth up to scale). Returned with
/// h33 = 1; `None` when the points do not determine it (e.g. three of four collinear).
fn homography(plane: &[Vector2<f64>], pts: &[Correspondence]) -> Option<Matrix3<f64>> {
    let tp = normalizer(plane.iter().copied());
    let ti = normalizer(pts.iter().map(|c| c.normalized));
    let mut ata = SMatrix::<f64, 8, 8>::zeros();
    let mut atb = SVector::<f64, 8>::zeros();
    for (p, c) in plane.iter().zip(pts) {
        let x = apply(&tp, p);
        let u = apply(&ti, &c.normalized);
        let r0 = SVector::<f64, 8>::from([x.x, x.y, 1.0, 0.0, 0.0, 0.0, -u.x * x.x, -u.x * x.y]);
        let r1 = SVector::<f64, 8>::from([0.0, 0.0, 0.0, x.x, x.y, 1.0, -u.y * x.x, -u.y * x.y]);
        ata.syger(1.0, &r0, &r0, 1.0);
        ata.syger(1.0, &r1, &r1, 1.0);
        atb += r0 * u.x + r1 * u.y;
    }
    let h = cholesky_solve(&ata, &atb)?;
    let hn = Matrix3::new(h[0], h[1], h[2], h[3], h[4], h[5], h[6], h[7], 1.0);
    let full = ti.try_inverse()? * hn * tp;
    let scale = full[(2, 2)];
    let out = full / scale;
    (scale.abs() > 0.0 && out.iter().all(|c| c.is_finite())).then_some(out)
}

/// The two rotations (plane frame → camera) consistent with a plane point seen at normalised
/// position v where the homography has Jacobian J.
///
/// Derivation (after Collins and Bartoli 2014): with the plane point at depth d along
/// (v, 1), the projection's Jacobian is (1/d)[I | −v], so J = (1/d)[I | −v] R[:, 0:2]. Let Rv
/// rotate the optical axis onto (v, 1) and write R = Rv Q; then [I | −v] Rv = [B | 0] and
/// Q's top-left 2x2 block is d B⁻¹J. That block has largest singular value 1, which fixes d; the
/// third row (b1, b2) of Q's first two columns follows from their unit length and orthogonality
/// up to a common sign: the two solutions.
fn ippe_rotations(v: &Vector2<f64>, j: &Matrix2<f64>) -> Option<[Matrix3<f64>; 2]> {
    let ray = Vector3::new(v.x, v.y, 1.0).normalize();
    let rv = Rotation3::rotation_between(&Vector3::z(), &ray)?.into_inner();
    let b = Matrix2::new(
        rv[(0, 0)] - v.x * rv[(2, 0)],
        rv[(0, 1)] - v.x * rv[(2, 1)],
        rv[(1, 0)] - v.y * rv[(2, 0)],
        rv[(1, 1)] - v.y * rv[(2, 1)],
    );
    let a = b.try_inverse()? * j;
    // Largest singular value of a 2x2: √ of the larger eigenvalue of AᵀA.
    let ata = a.transpose() * a;
    let (tr, det) = (ata.trace(), ata.determinant());
    let gamma = (0.5 * (tr + (tr * tr - 4.0 * det).max(0.0).sqrt())).sqrt();
    if !(gamma.is_finite() && gamma > 0.0) {
        return None;
    }
    let q = a / gamma;
    let c = Matrix2::identity() - q.transpose() * q;
    let b1 = c[(0, 0)].max(0.0).sqrt();
    let b2 = c[(1, 1)].max(0.0).sqrt() * if c[(0, 1)] < 0.0 { -1.0 } else { 1.0 };
    Some([1.0, -1.0].map(|sign| {
        let c1 = Vector3::new(q[(0, 0)], q[(1, 0)], sign * b1);
        let c2 = Vector3::new(q[(0, 1)], q[(1, 1)], sign * b2);
        rv * Matrix3::from_columns(&[c1, c2, c1.cross(&c2)])
    }))
}

/// Translation minimising the algebraic image error for a known rotation: for each point,
/// [1 0 −u; 0 1 −v] (R p + t) = 0, solved by linear least squares.
fn translation_for(
    r_plane: &Matrix3<f64>,
    plane: &[Vector2<f64>],
    pts: &[Correspondence],
) -> Option<Vector3<f64>> {
    let mut ata = Matrix3::zeros();
    let mut atb = Vector3::zeros();
    for (p, c) in plane.iter().zip(pts) {
        let x = r_plane * Vector3::new(p.x, p.y, 0.0);
        let (u, v) = (c.normalized.x, c.normalized.y);
        let m = SMatrix::<f64, 2, 3>::new(1.0, 0.0, -u, 0.0, 1.0, -v);
        ata += m.transpose() * m;
        atb -= m.transpose() * (m * x);
    }
    let t = cholesky_solve(&ata, &atb)?;
    (t.z > 0.0).then_some(t)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::pnp::prepare::exact_correspondences;

    #[test]
    fn both_planar_solutions_of_a_tilted_square() {
        // Noise-free square: one IPPE solution is the truth (Collins and Bartoli 2014); the other
        // is the mirror tilt, also in front of the camera.
        let truth = Pose {
            r: Rotation3::new(Vector3::new(0.4, 0.1, -0.2)).into_inner(),
            t: Vector3::new(0.1, -0.05, 2.0),
        };
        let model = [
            [-0.1, 0.1, 0.0],
            [0.1, 0.1, 0.0],
            [0.1, -0.1, 0.0],
            [-0.1, -0.1, 0.0],
            [0.05, 0.02, 0.0],
        ];
        let pts = exact_correspondences(&model, &truth);
        let g = PointGeometry::of(pts.iter().map(|c| c.model_m));
        let [a, b] = ippe_starts(&pts, &g);
        let (a, b) = (a.unwrap(), b.unwrap());
        let err = a.minus(&truth).norm().min(b.minus(&truth).norm());
        assert!(err < 1e-9, "closest IPPE solution off by {err}");
        assert!(a.minus(&b).norm() > 0.1, "the two solutions must differ");
    }
}
