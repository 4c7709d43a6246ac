//! Two-fold pose ambiguity of planar and weak-perspective targets: the mirror (Necker) minimum.
//!
//! Under affine projection a plane tilted one way and its reflection about the plane
//! perpendicular to the line of sight project alike, so the reprojection cost has two minima
//! that perspective separates only weakly (Collins and Bartoli, IJCV 2014; Schweighofer and
//! Pinz, PAMI 2006). For a point set whose relief off its best-fit plane projects to few
//! standard deviations, the mirror of the refined pose (`R' = S R F`, with S the reflection
//! along the line of sight to the centroid and F the reflection of the model across its plane)
//! starts a second refinement; the better minimum is reported and the other kept with the cost
//! difference.

use nalgebra::Matrix3;

use super::pose::Pose;
use super::prepare::PointGeometry;
use super::refine::{robust_solve, Problem, Solution};
use super::PoseStart;
use crate::tol;

/// The other minimum.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Alternative {
    pub(crate) pose: Pose,
    pub(crate) gated_cost: f64,
}

/// Refines the mirror of `solution` when the target is planar or its relief is weakly seen;
/// swaps it in when it fits better. Returns the other minimum when it is distinct.
pub(crate) fn examine(
    problem: &Problem,
    geometry: &PointGeometry,
    solution: &mut Solution,
) -> Option<Alternative> {
    if !relief_is_weak(problem, geometry, &solution.pose) {
        return None;
    }
    let start = mirror(&solution.pose, geometry)?;
    let mut other = robust_solve(problem, start, PoseStart::Mirror)?;
    if !other.converged {
        return None;
    }
    let d = other.pose.minus(&solution.pose);
    if d.dot(&(solution.normal.h * d)) < tol::MIRROR_SAME_CHI2 {
        return None;
    }
    if other.gated_cost < solution.gated_cost {
        std::mem::swap(solution, &mut other);
    }
    Some(Alternative {
        pose: other.pose,
        gated_cost: other.gated_cost,
    })
}

/// Whether the model's relief off its best-fit plane, seen from the current pose, spans fewer
/// than `tol::MIRROR_RELIEF_SIGMA` standard deviations: `f · 2 s₃ / z < k σ`, with s₃ the RMS
/// distance from the plane and z the depth of the centroid. Always true for planar sets.
fn relief_is_weak(problem: &Problem, geometry: &PointGeometry, pose: &Pose) -> bool {
    let depth = pose.transform(&geometry.centroid_m).z;
    if depth <= 0.0 {
        return false;
    }
    let focal = (problem.camera.fx * problem.camera.fy).sqrt();
    let n = problem.pts.len() as f64;
    let inv_var: f64 = problem.pts.iter().map(|c| c.inv_sigma * c.inv_sigma).sum();
    let sigma_px = (n / inv_var).sqrt();
    let relief_px = focal * 2.0 * geometry.extent_m[2] / depth;
    relief_px < tol::MIRROR_RELIEF_SIGMA * sigma_px
}

/// The mirror pose: reflect the model across its best-fit plane (F) and the camera-frame
/// offsets along the line of sight to the centroid (S); `R' = S R F` is a rotation, and the
/// centroid stays where it was seen.
pub(crate) fn mirror(pose: &Pose, geometry: &PointGeometry) -> Option<Pose> {
    let c = geometry.centroid_m;
    let q = pose.transform(&c);
    if q.z <= 0.0 {
        return None;
    }
    let w = q.normalize();
    let n = geometry.normal();
    let s = Matrix3::identity() - 2.0 * w * w.transpose();
    let f = Matrix3::identity() - 2.0 * n * n.transpose();
    let r = s * pose.r * f;
    let out = Pose { r, t: q - r * c };
    out.is_finite().then_some(out)
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::{Rotation3, Vector3};

    #[test]
    fn mirror_is_a_rotation_that_keeps_the_centroid() {
        let pts = [
            Vector3::new(-0.3, 0.0, 0.0),
            Vector3::new(0.3, 0.0, 0.0),
            Vector3::new(0.0, 0.3, 0.0),
            Vector3::new(0.0, -0.3, 0.02),
        ];
        let g = PointGeometry::of(pts.iter().copied());
        let pose = Pose {
            r: Rotation3::new(Vector3::new(0.4, 0.1, 0.0)).into_inner(),
            t: Vector3::new(0.2, 0.1, 10.0),
        };
        let m = mirror(&pose, &g).unwrap();
        assert!((m.r.determinant() - 1.0).abs() < 1e-12);
        assert!((m.r * m.r.transpose() - Matrix3::identity()).norm() < 1e-12);
        let c = g.centroid_m;
        assert!((m.transform(&c) - pose.transform(&c)).norm() < 1e-12);
        // The mirror of the mirror is the original pose.
        assert!(mirror(&m, &g).unwrap().minus(&pose).norm() < 1e-12);
    }
}
