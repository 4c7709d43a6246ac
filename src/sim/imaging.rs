//! Image formation for the simulator: which camera-frame points a real lens would show, and
//! where (noise-free). A point must be in front of the camera and inside the radius where the
//! lens distortion is still one-to-one; beyond that fold a distortion polynomial would wrap a
//! point from outside the field of view back onto the sensor, which no real lens does.

use nalgebra::Vector3;

use crate::camera::{Camera, Distortion, PixelPoint};
use crate::tol;

/// Largest normalised radius scanned for a pinhole fold (tan 84°): no keypoint camera for this
/// job has a wider pinhole field.
const PINHOLE_SCAN_MAX_RADIUS: f64 = 10.0;

/// A camera with the radius beyond which it shows nothing.
#[derive(Debug, Clone, PartialEq)]
pub struct Imager {
    camera: Camera,
    /// Largest undistorted normalised radius `sqrt(x² + y²)` (with x = X/Z, y = Y/Z) imaged.
    max_radius: f64,
}

impl Imager {
    pub fn new(camera: Camera) -> Self {
        let max_radius = fold_radius(&camera.distortion);
        Self { camera, max_radius }
    }

    pub fn camera(&self) -> &Camera {
        &self.camera
    }

    /// The noise-free pixel of a camera-frame point, or `None` when the lens cannot see it.
    /// The image bounds are checked by the caller after adding detection noise.
    pub fn ideal_pixel(&self, p_c: &Vector3<f64>) -> Option<PixelPoint> {
        if p_c.z <= tol::MIN_DEPTH_M {
            return None;
        }
        // radius = sqrt(x² + y²) / z, compared squared to spare a square root per keypoint.
        let limit = self.max_radius * p_c.z;
        if p_c.x * p_c.x + p_c.y * p_c.y >= limit * limit {
            return None;
        }
        self.camera.project(p_c)
    }
}

/// First radius where the radial distortion stops increasing (infinite if it never does within
/// the scanned range).
fn fold_radius(distortion: &Distortion) -> f64 {
    match *distortion {
        Distortion::BrownConrady { k1, k2, k3, .. } => {
            // d/dr [r (1 + k1 r² + k2 r⁴ + k3 r⁶)] = 1 + 3 k1 r² + 5 k2 r⁴ + 7 k3 r⁶
            let slope = |r: f64| {
                let r2 = r * r;
                1.0 + r2 * (3.0 * k1 + r2 * (5.0 * k2 + 7.0 * k3 * r2))
            };
            first_fold(slope, PINHOLE_SCAN_MAX_RADIUS).unwrap_or(f64::INFINITY)
        }
        Distortion::KannalaBrandt { k1, k2, k3, k4 } => {
            // d/dθ [θ (1 + k1 θ² + k2 θ⁴ + k3 θ⁶ + k4 θ⁸)]
            let slope = |t: f64| {
                let t2 = t * t;
                1.0 + t2 * (3.0 * k1 + t2 * (5.0 * k2 + t2 * (7.0 * k3 + 9.0 * k4 * t2)))
            };
            first_fold(slope, std::f64::consts::FRAC_PI_2).map_or(f64::INFINITY, f64::tan)
        }
    }
}

fn first_fold(slope: impl Fn(f64) -> f64, max: f64) -> Option<f64> {
    let steps = (max / tol::SIM_FOLD_SCAN_STEP) as usize;
    (1..=steps)
        .map(|i| i as f64 * tol::SIM_FOLD_SCAN_STEP)
        .find(|&x| slope(x) <= tol::MIN_RADIAL_SLOPE)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn brown_conrady_fold_matches_closed_form() {
        // Hand-worked: with only k1 < 0 the slope 1 + 3 k1 r² vanishes at r = 1/sqrt(-3 k1);
        // k1 = -0.2 gives 1.290994.
        let d = Distortion::BrownConrady {
            k1: -0.2,
            k2: 0.0,
            p1: 0.0,
            p2: 0.0,
            k3: 0.0,
        };
        assert!((fold_radius(&d) - 1.290994).abs() < 2.0 * tol::SIM_FOLD_SCAN_STEP);
    }

    #[test]
    fn points_beyond_the_fold_are_not_imaged() {
        let d = Distortion::BrownConrady {
            k1: -0.2,
            k2: 0.0,
            p1: 0.0,
            p2: 0.0,
            k3: 0.0,
        };
        let cam = Camera::new(640, 480, 400.0, 400.0, 320.0, 240.0, 0.0, d, 1.0).unwrap();
        let imager = Imager::new(cam);
        assert!(imager.ideal_pixel(&Vector3::new(0.5, 0.0, 1.0)).is_some());
        // Radius 2 lies beyond the fold at 1.29: the polynomial would put it back at
        // x'' = 2 (1 - 0.8) = 0.4, inside the image, yet a real lens does not see it.
        assert!(imager.ideal_pixel(&Vector3::new(2.0, 0.0, 1.0)).is_none());
        assert!(imager.ideal_pixel(&Vector3::new(0.0, 0.0, -1.0)).is_none());
    }

    #[test]
    fn undistorted_fisheye_never_folds() {
        let d = Distortion::KannalaBrandt {
            k1: 0.0,
            k2: 0.0,
            k3: 0.0,
            k4: 0.0,
        };
        assert!(fold_radius(&d).is_infinite());
    }
}
