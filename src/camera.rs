//! Camera models: pinhole with Brown-Conrady distortion and fisheye with Kannala-Brandt
//! equidistant distortion; projection, analytic Jacobians and iterative undistortion.
//!
//! Conventions follow OpenCV (calib3d and calib3d fisheye documentation): optical frame x right,
//! y down, z forward; pixels u right, v down, the centre of the top-left pixel at (0, 0).
//! `skew` is the K[0][1] entry in pixels for both models: `u = fx·x + skew·y + cx` (OpenCV's
//! fisheye `alpha` equals `skew / fx`). This module knows nothing of files.

use nalgebra::{Matrix2, Matrix2x3, Vector2, Vector3};

use crate::tol;

/// A point in pixels (u right, v down).
pub type PixelPoint = Vector2<f64>;
/// An undistorted point on the normalised image plane z = 1 (x/z, y/z).
pub type NormalizedPoint = Vector2<f64>;

/// Lens distortion model.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
#[serde(tag = "model", rename_all = "snake_case")]
pub enum Distortion {
    /// Brown-Conrady radial + tangential, OpenCV coefficient order (k1, k2, p1, p2, k3).
    BrownConrady {
        k1: f64,
        k2: f64,
        p1: f64,
        p2: f64,
        k3: f64,
    },
    /// Kannala-Brandt equidistant: θd = θ(1 + k1θ² + k2θ⁴ + k3θ⁶ + k4θ⁸).
    KannalaBrandt { k1: f64, k2: f64, k3: f64, k4: f64 },
}

impl Distortion {
    /// Short name as written in camera files: `pinhole` or `fisheye`.
    pub fn model_name(&self) -> &'static str {
        match self {
            Distortion::BrownConrady { .. } => "pinhole",
            Distortion::KannalaBrandt { .. } => "fisheye",
        }
    }

    fn coefficients(&self) -> [f64; 5] {
        match *self {
            Distortion::BrownConrady { k1, k2, p1, p2, k3 } => [k1, k2, p1, p2, k3],
            Distortion::KannalaBrandt { k1, k2, k3, k4 } => [k1, k2, k3, k4, 0.0],
        }
    }
}

/// Why intrinsics were refused.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum CameraError {
    #[error("image width and height must be positive (got {width} x {height})")]
    NonPositiveSize { width: u32, height: u32 },
    #[error("{name} must be a positive finite number of pixels (got {value})")]
    NonPositiveFocal { name: &'static str, value: f64 },
    #[error("{name} must be a finite number (got {value})")]
    NonFinite { name: &'static str, value: f64 },
    #[error("pixel_sigma must be a positive finite number of pixels (got {0})")]
    NonPositiveSigma(f64),
}

/// Why a pixel could not be undistorted.
#[derive(Debug, Clone, Copy, PartialEq, Eq, thiserror::Error)]
pub enum UndistortFailure {
    #[error("Newton iteration did not converge")]
    NotConverged,
    #[error("the point lies beyond the radius where the distortion model is invertible")]
    OutsideValidRadius,
}

/// Validated camera intrinsics.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct Camera {
    pub width: u32,
    pub height: u32,
    pub fx: f64,
    pub fy: f64,
    pub cx: f64,
    pub cy: f64,
    pub skew: f64,
    pub distortion: Distortion,
    /// One-sigma keypoint noise in pixels assumed when a detection gives none.
    pub pixel_sigma: f64,
}

/// Distorted normalised point and its 2x2 Jacobian with respect to the undistorted one.
struct Distorted {
    point: Vector2<f64>,
    jacobian: Matrix2<f64>,
}

impl Camera {
    /// Checks sizes, focal lengths, finiteness and sigma.
    #[allow(clippy::too_many_arguments)]
    pub fn new(
        width: u32,
        height: u32,
        fx: f64,
        fy: f64,
        cx: f64,
        cy: f64,
        skew: f64,
        distortion: Distortion,
        pixel_sigma: f64,
    ) -> Result<Self, CameraError> {
        if width == 0 || height == 0 {
            return Err(CameraError::NonPositiveSize { width, height });
        }
        for (name, value) in [("fx", fx), ("fy", fy)] {
            if !(value.is_finite() && value > 0.0) {
                return Err(CameraError::NonPositiveFocal { name, value });
            }
        }
        let names = ["k1", "k2", "p1", "p2", "k3"];
        let fisheye_names = ["k1", "k2", "k3", "k4", "k4"];
        let coeff_names = match distortion {
            Distortion::BrownConrady { .. } => names,
            Distortion::KannalaBrandt { .. } => fisheye_names,
        };
        let scalars = [("cx", cx), ("cy", cy), ("skew", skew)];
        let coeffs = coeff_names.iter().copied().zip(distortion.coefficients());
        for (name, value) in scalars.into_iter().chain(coeffs) {
            if !value.is_finite() {
                return Err(CameraError::NonFinite { name, value });
            }
        }
        if !(pixel_sigma.is_finite() && pixel_sigma > 0.0) {
            return Err(CameraError::NonPositiveSigma(pixel_sigma));
        }
        Ok(Self {
            width,
            height,
            fx,
            fy,
            cx,
            cy,
            skew,
            distortion,
            pixel_sigma,
        })
    }

    /// Pinhole camera without distortion, for tests and simulations.
    pub fn ideal(width: u32, height: u32, f: f64, cx: f64, cy: f64) -> Self {
        let none = Distortion::BrownConrady {
            k1: 0.0,
            k2: 0.0,
            p1: 0.0,
            p2: 0.0,
            k3: 0.0,
        };
        Self::new(width, height, f, f, cx, cy, 0.0, none, 1.0).expect("valid ideal camera")
    }

    /// Whether a pixel lies on the sensor (pixel centres 0..width-1, with half a pixel margin).
    pub fn in_image(&self, px: &PixelPoint) -> bool {
        px.x >= -0.5
            && px.y >= -0.5
            && px.x <= f64::from(self.width) - 0.5
            && px.y <= f64::from(self.height) - 0.5
    }

    /// Projects a camera-frame point to pixels; `None` when it is not in front of the camera.
    pub fn project(&self, p_c: &Vector3<f64>) -> Option<PixelPoint> {
        if p_c.z <= tol::MIN_DEPTH_M {
            return None;
        }
        let x = Vector2::new(p_c.x / p_c.z, p_c.y / p_c.z);
        Some(self.distorted_to_pixel(&self.distort(&x).point))
    }

    /// Projects a camera-frame point and returns the 2x3 Jacobian d(pixel)/d(point).
    pub fn project_with_jacobian(
        &self,
        p_c: &Vector3<f64>,
    ) -> Option<(PixelPoint, Matrix2x3<f64>)> {
        if p_c.z <= tol::MIN_DEPTH_M {
            return None;
        }
        let iz = 1.0 / p_c.z;
        let x = Vector2::new(p_c.x * iz, p_c.y * iz);
        let d = self.distort(&x);
        let d_norm = Matrix2x3::new(iz, 0.0, -x.x * iz, 0.0, iz, -x.y * iz);
        let jac = self.focal_matrix() * d.jacobian * d_norm;
        Some((self.distorted_to_pixel(&d.point), jac))
    }

    /// Pixel of an undistorted normalised point, with d(pixel)/d(normalised point).
    pub fn normalized_to_pixel(&self, x: &NormalizedPoint) -> (PixelPoint, Matrix2<f64>) {
        let d = self.distort(x);
        (
            self.distorted_to_pixel(&d.point),
            self.focal_matrix() * d.jacobian,
        )
    }

    /// Undistorts a pixel to the normalised image plane by Newton's method on the distortion map,
    /// with a check that the result re-projects onto the input and lies where the map is
    /// invertible. Failure is a value, never NaN.
    pub fn undistort(&self, px: &PixelPoint) -> Result<NormalizedPoint, UndistortFailure> {
        let target = self.pixel_to_distorted(px);
        let mut x = target;
        for _ in 0..tol::UNDISTORT_MAX_ITER {
            let d = self.distort(&x);
            let residual = d.point - target;
            let step = d
                .jacobian
                .try_inverse()
                .map(|inv| inv * residual)
                .ok_or(UndistortFailure::OutsideValidRadius)?;
            x -= step;
            if !x.iter().all(|c| c.is_finite()) {
                return Err(UndistortFailure::NotConverged);
            }
            if step.norm() <= tol::UNDISTORT_STEP * (1.0 + x.norm()) {
                return self.accept_undistorted(px, x);
            }
        }
        Err(UndistortFailure::NotConverged)
    }

    fn accept_undistorted(
        &self,
        px: &PixelPoint,
        x: NormalizedPoint,
    ) -> Result<NormalizedPoint, UndistortFailure> {
        if !self.radially_invertible(x.norm()) {
            return Err(UndistortFailure::OutsideValidRadius);
        }
        let (back, _) = self.normalized_to_pixel(&x);
        if (back - px).norm() > tol::UNDISTORT_RESIDUAL_PX {
            return Err(UndistortFailure::NotConverged);
        }
        Ok(x)
    }

    /// Whether the radial part of the distortion is still increasing at undistorted radius `r`,
    /// so that the point has a unique undistortion.
    fn radially_invertible(&self, r: f64) -> bool {
        match self.distortion {
            Distortion::BrownConrady { k1, k2, k3, .. } => {
                let r2 = r * r;
                // d/dr [r (1 + k1 r² + k2 r⁴ + k3 r⁶)]
                1.0 + r2 * (3.0 * k1 + r2 * (5.0 * k2 + 7.0 * k3 * r2)) > tol::MIN_RADIAL_SLOPE
            }
            Distortion::KannalaBrandt { k1, k2, k3, k4 } => {
                let t2 = r.atan().powi(2);
                let slope =
                    1.0 + t2 * (3.0 * k1 + t2 * (5.0 * k2 + t2 * (7.0 * k3 + 9.0 * k4 * t2)));
                slope > tol::MIN_RADIAL_SLOPE
            }
        }
    }

    /// The 2x2 upper-left of K: pixel = K2 · distorted + (cx, cy).
    fn focal_matrix(&self) -> Matrix2<f64> {
        Matrix2::new(self.fx, self.skew, 0.0, self.fy)
    }

    fn distorted_to_pixel(&self, xd: &Vector2<f64>) -> PixelPoint {
        Vector2::new(
            self.fx * xd.x + self.skew * xd.y + self.cx,
            self.fy * xd.y + self.cy,
        )
    }

    fn pixel_to_distorted(&self, px: &PixelPoint) -> Vector2<f64> {
        let y = (px.y - self.cy) / self.fy;
        Vector2::new((px.x - self.cx - self.skew * y) / self.fx, y)
    }

    fn distort(&self, x: &Vector2<f64>) -> Distorted {
        match self.distortion {
            Distortion::BrownConrady { k1, k2, p1, p2, k3 } => {
                brown_conrady(x, [k1, k2, p1, p2, k3])
            }
            Distortion::KannalaBrandt { k1, k2, k3, k4 } => kannala_brandt(x, [k1, k2, k3, k4]),
        }
    }
}

/// Brown-Conrady as in OpenCV's `projectPoints`: with r² = x² + y² and
/// radial = 1 + k1 r² + k2 r⁴ + k3 r⁶,
/// x'' = x·radial + 2 p1 x y + p2 (r² + 2x²), y'' = y·radial + p1 (r² + 2y²) + 2 p2 x y.
fn brown_conrady(x: &Vector2<f64>, [k1, k2, p1, p2, k3]: [f64; 5]) -> Distorted {
    let (a, b) = (x.x, x.y);
    let r2 = a * a + b * b;
    let radial = 1.0 + r2 * (k1 + r2 * (k2 + r2 * k3));
    // d(radial)/d(r²)
    let g = k1 + r2 * (2.0 * k2 + 3.0 * k3 * r2);
    let point = Vector2::new(
        a * radial + 2.0 * p1 * a * b + p2 * (r2 + 2.0 * a * a),
        b * radial + p1 * (r2 + 2.0 * b * b) + 2.0 * p2 * a * b,
    );
    let jacobian = Matrix2::new(
        radial + 2.0 * a * a * g + 2.0 * p1 * b + 6.0 * p2 * a,
        2.0 * a * b * g + 2.0 * p1 * a + 2.0 * p2 * b,
        2.0 * a * b * g + 2.0 * p1 * a + 2.0 * p2 * b,
        radial + 2.0 * b * b * g + 6.0 * p1 * b + 2.0 * p2 * a,
    );
    Distorted { point, jacobian }
}

/// Kannala-Brandt as in OpenCV's `fisheye::projectPoints`: r = |x|, θ = atan r,
/// θd = θ(1 + k1θ² + k2θ⁴ + k3θ⁶ + k4θ⁸), distorted point = (θd / r)·x.
fn kannala_brandt(x: &Vector2<f64>, [k1, k2, k3, k4]: [f64; 4]) -> Distorted {
    let r2 = x.norm_squared();
    let r = r2.sqrt();
    // s = θd / r and q = (ds/dr) / r; near the axis use their series s ≈ 1 + (k1 - 1/3) r².
    let (s, q) = if r < 1e-8 {
        (1.0 + (k1 - 1.0 / 3.0) * r2, 2.0 * (k1 - 1.0 / 3.0))
    } else {
        let theta = r.atan();
        let t2 = theta * theta;
        let poly = 1.0 + t2 * (k1 + t2 * (k2 + t2 * (k3 + t2 * k4)));
        let theta_d = theta * poly;
        let dpoly = 1.0 + t2 * (3.0 * k1 + t2 * (5.0 * k2 + t2 * (7.0 * k3 + 9.0 * k4 * t2)));
        let dtheta_d_dr = dpoly / (1.0 + r2);
        let s = theta_d / r;
        (s, (dtheta_d_dr - s) / r2)
    };
    let (a, b) = (x.x, x.y);
    let point = Vector2::new(s * a, s * b);
    let jacobian = Matrix2::new(s + a * a * q, a * b * q, a * b * q, s + b * b * q);
    Distorted { point, jacobian }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn bc_camera() -> Camera {
        let d = Distortion::BrownConrady {
            k1: -0.2,
            k2: 0.05,
            p1: 0.001,
            p2: -0.0005,
            k3: 0.01,
        };
        Camera::new(640, 480, 800.0, 800.0, 320.0, 240.0, 0.0, d, 1.0).unwrap()
    }

    fn kb_camera() -> Camera {
        let d = Distortion::KannalaBrandt {
            k1: 0.1,
            k2: -0.05,
            k3: 0.01,
            k4: -0.002,
        };
        Camera::new(640, 480, 800.0, 800.0, 320.0, 240.0, 0.0, d, 1.0).unwrap()
    }

    #[test]
    fn brown_conrady_matches_opencv_anchor() {
        // cv2.projectPoints anchor, CHECK_VALUES.md section 7 [COMP] (OpenCV 4.14).
        let cam = bc_camera();
        let cases = [
            ([0.3, -0.2, 1.0], [553.748073, 84.237285]),
            ([0.0, 0.0, 2.0], [320.0, 240.0]),
            ([-0.5, 0.4, 2.5], [161.954881, 366.467583]),
            ([0.1, 0.1, 0.5], [477.492019, 397.588019]),
        ];
        for (p, uv) in cases {
            let px = cam.project(&Vector3::from(p)).unwrap();
            assert_relative_eq!(px, Vector2::from(uv), epsilon = 1e-6);
        }
    }

    #[test]
    fn kannala_brandt_matches_opencv_anchor() {
        // cv2.fisheye.projectPoints anchor, CHECK_VALUES.md section 7 [COMP] (OpenCV 4.14).
        let cam = kb_camera();
        let cases = [
            ([0.3, -0.2, 1.0], [552.939788, 84.706808]),
            ([-0.5, 0.4, 2.5], [162.412948, 366.069641]),
            ([0.1, 0.1, 0.5], [477.067499, 397.067499]),
        ];
        for (p, uv) in cases {
            let px = cam.project(&Vector3::from(p)).unwrap();
            assert_relative_eq!(px, Vector2::from(uv), epsilon = 1e-6);
        }
    }

    #[test]
    fn undistort_inverts_projection() {
        for cam in [bc_camera(), kb_camera()] {
            let p = Vector3::new(-0.31, 0.22, 1.3);
            let px = cam.project(&p).unwrap();
            let x = cam.undistort(&px).unwrap();
            assert_relative_eq!(x, Vector2::new(p.x / p.z, p.y / p.z), epsilon = 1e-12);
        }
    }

    #[test]
    fn refuses_bad_intrinsics() {
        let d = bc_camera().distortion;
        assert!(Camera::new(0, 480, 800.0, 800.0, 1.0, 1.0, 0.0, d, 1.0).is_err());
        assert!(Camera::new(640, 480, -1.0, 800.0, 1.0, 1.0, 0.0, d, 1.0).is_err());
        assert!(Camera::new(640, 480, 800.0, 800.0, f64::NAN, 1.0, 0.0, d, 1.0).is_err());
        assert!(Camera::new(640, 480, 800.0, 800.0, 1.0, 1.0, 0.0, d, 0.0).is_err());
    }

    #[test]
    fn undistort_beyond_fold_is_a_status() {
        // Strong barrel distortion folds over at r ≈ 1.29 (1 + 3 k1 r² = 0 with k1 = -0.2);
        // a pixel far outside the fold has no valid undistortion.
        let d = Distortion::BrownConrady {
            k1: -0.2,
            k2: 0.0,
            p1: 0.0,
            p2: 0.0,
            k3: 0.0,
        };
        let cam = Camera::new(640, 480, 800.0, 800.0, 320.0, 240.0, 0.0, d, 1.0).unwrap();
        let far = Vector2::new(320.0 + 800.0 * 1.5, 240.0);
        assert!(cam.undistort(&far).is_err());
    }
}
