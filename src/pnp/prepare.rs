//! Per-frame preparation for the pose solver: checks the observations, undistorts them, gathers
//! model/pixel correspondences, and describes the shape (centroid, principal axes, extents) of the
//! observed model points so degenerate sets are refused before any solving.

use nalgebra::{Matrix3, Vector2, Vector3};

use super::linalg::symmetric_eigen;

use super::{Rejection, RejectionReason};
use crate::camera::Camera;
use crate::model::KeypointModel;
use crate::session::Observation;
use crate::tol;

/// One usable keypoint: its model point, pixel, weight and undistorted normalised point.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Correspondence {
    pub(crate) model_m: Vector3<f64>,
    pub(crate) px: Vector2<f64>,
    /// 1 / sigma_px: whitens the pixel residual.
    pub(crate) inv_sigma: f64,
    /// Undistorted point on the normalised image plane, for the global starts; zero until
    /// `undistort_all` has run.
    pub(crate) normalized: Vector2<f64>,
    /// Position of the observation in the caller's slice.
    pub(crate) observation: usize,
}

/// Checks the observations and gathers them with their model points. Undistortion is a separate
/// step (`undistort_all`): only the global start needs normalised points, so a frame solved from
/// its warm start skips it.
pub(crate) fn gather(
    model: &KeypointModel,
    obs: &[Observation],
) -> Result<Vec<Correspondence>, Rejection> {
    if obs.len() < 4 {
        return Err(too_few(obs.len()));
    }
    let mut pts = Vec::with_capacity(obs.len());
    for (i, o) in obs.iter().enumerate() {
        check_observation(model, o)?;
        pts.push(Correspondence {
            model_m: model.points()[o.point].xyz_m,
            px: o.px,
            inv_sigma: 1.0 / o.sigma_px,
            normalized: Vector2::zeros(),
            observation: i,
        });
    }
    Ok(pts)
}

/// Undistorts every keypoint; those that cannot be undistorted (outside the lens model's valid
/// radius) are dropped and end up reported as non-inliers. Fewer than 4 left rejects the frame.
pub(crate) fn undistort_all(
    camera: &Camera,
    pts: &mut Vec<Correspondence>,
) -> Result<(), Rejection> {
    let total = pts.len();
    pts.retain_mut(|c| match camera.undistort(&c.px) {
        Ok(x) => {
            c.normalized = x;
            true
        }
        Err(_) => false,
    });
    if pts.len() < 4 {
        return Err(Rejection::new(
            RejectionReason::UndistortionFailed,
            format!(
                "{} of {total} keypoints could not be undistorted (outside the lens model's \
                 valid radius), leaving {} of the 4 needed",
                total - pts.len(),
                pts.len()
            ),
        ));
    }
    Ok(())
}

fn too_few(n: usize) -> Rejection {
    Rejection::new(
        RejectionReason::TooFewPoints,
        format!("{n} keypoints detected; a pose needs at least 4"),
    )
}

fn check_observation(model: &KeypointModel, o: &Observation) -> Result<(), Rejection> {
    if o.point >= model.len() {
        return Err(Rejection::new(
            RejectionReason::InvalidObservation,
            format!(
                "a keypoint names model point {} but the model has {} points",
                o.point,
                model.len()
            ),
        ));
    }
    if !(o.px.x.is_finite() && o.px.y.is_finite()) {
        return Err(Rejection::new(
            RejectionReason::InvalidObservation,
            format!(
                "keypoint '{}' has a non-finite pixel position",
                model.points()[o.point].id
            ),
        ));
    }
    if !(o.sigma_px.is_finite() && o.sigma_px > 0.0) {
        return Err(Rejection::new(
            RejectionReason::InvalidObservation,
            format!(
                "keypoint '{}' has sigma_px {} (must be a positive number of pixels)",
                model.points()[o.point].id,
                o.sigma_px
            ),
        ));
    }
    Ok(())
}

/// Shape of a set of model points: centroid, principal axes (columns, by decreasing extent,
/// right-handed) and RMS extents along them (metres).
#[derive(Debug, Clone, Copy)]
pub(crate) struct PointGeometry {
    pub(crate) centroid_m: Vector3<f64>,
    pub(crate) axes: Matrix3<f64>,
    pub(crate) extent_m: Vector3<f64>,
}

impl PointGeometry {
    /// Principal component analysis of the points (scatter matrix eigen-decomposition).
    pub(crate) fn of(points: impl Iterator<Item = Vector3<f64>> + Clone) -> Self {
        let mut n: f64 = 0.0;
        let mut sum = Vector3::zeros();
        for p in points.clone() {
            n += 1.0;
            sum += p;
        }
        let centroid_m = sum / n.max(1.0);
        let mut scatter = Matrix3::zeros();
        for p in points {
            let d = p - centroid_m;
            scatter += d * d.transpose();
        }
        let (values, vectors) = symmetric_eigen(&(scatter / n.max(1.0)), tol::START_EIGEN_REL);
        let mut order = [0usize, 1, 2];
        order.sort_by(|&a, &b| values[b].total_cmp(&values[a]));
        let mut axes = Matrix3::from_columns(&[
            vectors.column(order[0]).into_owned(),
            vectors.column(order[1]).into_owned(),
            vectors.column(order[2]).into_owned(),
        ]);
        let e3 = axes.column(0).cross(&axes.column(1));
        axes.set_column(2, &e3);
        let extent_m = Vector3::from_fn(|k, _| values[order[k]].max(0.0).sqrt());
        Self {
            centroid_m,
            axes,
            extent_m,
        }
    }

    /// Refuses coincident and collinear sets: their pose is not determined.
    pub(crate) fn check(&self) -> Result<(), Rejection> {
        let scale = 1.0 + self.centroid_m.norm();
        if self.extent_m[0] <= tol::PNP_COINCIDENT_REL * scale {
            return Err(Rejection::new(
                RejectionReason::DegenerateGeometry,
                "the observed model points coincide; their pose is not determined",
            ));
        }
        if self.extent_m[1] <= tol::PNP_COLLINEAR_REL * self.extent_m[0] {
            return Err(Rejection::new(
                RejectionReason::DegenerateGeometry,
                "the observed model points are collinear; the roll about their line is not \
                 determined (add off-axis keypoints)",
            ));
        }
        Ok(())
    }

    /// Thickness relative to length: 0 for a plane, about 1 for a blob.
    pub(crate) fn planarity(&self) -> f64 {
        self.extent_m[2] / self.extent_m[0]
    }

    /// RMS distance of the points from their centroid.
    pub(crate) fn rms_radius_m(&self) -> f64 {
        self.extent_m.norm()
    }

    /// Unit normal of the best-fit plane (the axis of least extent).
    pub(crate) fn normal(&self) -> Vector3<f64> {
        self.axes.column(2).into_owned()
    }
}

/// Noise-free correspondences of `model` seen from `truth`, with unit weights: the shared input of
/// the start solvers' unit tests.
#[cfg(test)]
pub(crate) fn exact_correspondences(
    model: &[[f64; 3]],
    truth: &super::pose::Pose,
) -> Vec<Correspondence> {
    model
        .iter()
        .enumerate()
        .map(|(i, p)| {
            let m = Vector3::from(*p);
            let x = truth.transform(&m);
            let normalized = Vector2::new(x.x / x.z, x.y / x.z);
            Correspondence {
                model_m: m,
                px: normalized,
                inv_sigma: 1.0,
                normalized,
                observation: i,
            }
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn principal_axes_of_a_box() {
        // Hand-worked: the 8 corners of a 4 x 2 x 1 box have RMS extents 2, 1, 0.5 along x, y, z.
        let mut pts = Vec::new();
        for &x in &[-2.0, 2.0] {
            for &y in &[-1.0, 1.0] {
                for &z in &[-0.5, 0.5] {
                    pts.push(Vector3::new(x, y, z) + Vector3::new(1.0, 2.0, 3.0));
                }
            }
        }
        let g = PointGeometry::of(pts.iter().copied());
        assert_relative_eq!(g.extent_m, Vector3::new(2.0, 1.0, 0.5), epsilon = 1e-12);
        assert_relative_eq!(g.centroid_m, Vector3::new(1.0, 2.0, 3.0), epsilon = 1e-12);
        assert_relative_eq!(g.normal().z.abs(), 1.0, epsilon = 1e-12);
        assert_relative_eq!(g.axes.determinant(), 1.0, epsilon = 1e-12);
        assert!(g.check().is_ok());
    }

    #[test]
    fn collinear_points_are_refused() {
        let pts = (0..5).map(|i| Vector3::new(0.1 * f64::from(i), 0.0, 1.0));
        let g = PointGeometry::of(pts);
        let err = g.check().unwrap_err();
        assert_eq!(err.reason, RejectionReason::DegenerateGeometry);
    }
}
