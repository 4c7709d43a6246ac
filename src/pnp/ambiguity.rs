//! Two-fold pose ambiguity of planar and weak-perspective targets: the mirror (Necker) minimum.
//!
//! Under affine projection a plane tilted one way and its reflection about the plane
//! perpendicular to the line of sight project alike, so the reprojection cost has two minima
//! that perspective separates only weakly (Collins and Bartoli, IJCV 2014; Schweighofer and
//! Pinz, PAMI 2006). For a point set whose relief off its best-fit plane projects to few
//! standard deviations, the mirror of the refined pose (`R' = S R F`, with S the reflection
//! along the line of sight to the centroid and F the reflection of the model across its plane)
//! starts a second least-squares refinement over the same inliers; the better minimum is
//! reported and the other kept with the chi-square difference.

use nalgebra::Matrix3;

use super::pose::Pose;
use super::prepare::PointGeometry;
use super::refine::{gated_cost, levenberg_marquardt, robust_solve, Loss, Problem, Solution};
use super::PoseStart;
use crate::tol;

/// The other minimum, refined over the same inliers as the solution.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Alternative {
    pub(crate) pose: Pose,
    /// Chi-square over the solution's inliers.
    pub(crate) chi2: f64,
}

/// Refines the mirror of `solution` by least squares over its inliers when the target is planar
/// or its relief is weakly seen. If the mirror fits better it becomes the solution (re-gated from
/// its own pose) and the former solution, refined over the new inliers, the alternative. Returns
/// the alternative when it is a distinct minimum.
pub(crate) fn examine(
    problem: &Problem,
    geometry: &PointGeometry,
    solution: &mut Solution,
) -> Option<Alternative> {
    if !relief_is_weak(problem, geometry, &solution.pose) {
        return None;
    }
    let start = mirror(&solution.pose, geometry)?;
    let alt = distinct(refine_over(problem, &solution.inliers, start)?, solution)?;
    // The mirror may also explain points the solution gated out: compare over all points too.
    let fits_better =
        alt.chi2 < solution.normal.cost || gated_cost(problem, &alt.pose) < solution.gated_cost;
    let better = fits_better
        .then(|| robust_solve(problem, alt.pose, PoseStart::Mirror))
        .flatten()
        .filter(|s| s.converged && s.better_than(solution));
    let Some(better) = better else {
        return Some(alt);
    };
    let former = refine_over(problem, &better.inliers, solution.pose)?;
    *solution = better;
    distinct(former, solution)
}

/// Least squares over the given inliers from `start`; `None` unless it converges.
fn refine_over(problem: &Problem, inliers: &[bool], start: Pose) -> Option<Alternative> {
    let run = levenberg_marquardt(
        problem,
        inliers,
        Loss::Squared,
        start,
        tol::LM_STEP_CHI2,
        tol::LM_INITIAL_DAMPING,
    )?;
    run.converged.then_some(Alternative {
        pose: run.pose,
        chi2: run.normal.cost,
    })
}

/// The alternative unless it converged back onto the solution (closer than
/// `tol::MIRROR_SAME_CHI2` in the metric of the solution's information).
fn distinct(alt: Alternative, solution: &Solution) -> Option<Alternative> {
    let d = alt.pose.minus(&solution.pose);
    (d.dot(&(solution.normal.h * d)) >= tol::MIRROR_SAME_CHI2).then_some(alt)
}

/// Whether the model's relief off its best-fit plane, seen from the current pose, spans fewer
/// than `tol::MIRROR_RELIEF_SIGMA` standard deviations: `f · 2 s₃ / z < k σ`, with s₃ the RMS
/// distance from the plane and z the depth of the centroid. Always true for planar sets.
pub(crate) fn relief_is_weak(problem: &Problem, geometry: &PointGeometry, pose: &Pose) -> bool {
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
