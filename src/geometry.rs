//! Rotations, rigid transforms and the frame conventions of the design (section 2).
//!
//! Frames: camera optical C (x right, y down, z forward), receiver body B (x forward, y right,
//! z down), the camera's boresight frame S (x optical axis, y image-right, z image-down) and the
//! drogue model frame D. `T_AB` maps coordinates in B into A: `x_A = R_AB x_B + p_AB`.
//! Angles are radians here; degrees only appear at the file and report boundary.

use nalgebra::{Isometry3, Matrix3, Rotation3, Translation3, UnitQuaternion, Vector3};

/// `Mperm`: the axes of the optical frame C written in the boresight frame S. Its columns are
/// C's x (image right = S's y), C's y (image down = S's z) and C's z (optical axis = S's x).
pub fn optical_in_boresight() -> Rotation3<f64> {
    Rotation3::from_matrix_unchecked(Matrix3::new(
        0.0, 0.0, 1.0, //
        1.0, 0.0, 0.0, //
        0.0, 1.0, 0.0,
    ))
}

/// Z-Y-X (3-2-1) Tait-Bryan angles, active rotation `R = Rz(yaw) Ry(pitch) Rx(roll)`, radians.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct YawPitchRoll {
    pub yaw: f64,
    pub pitch: f64,
    pub roll: f64,
}

impl YawPitchRoll {
    pub fn new(yaw: f64, pitch: f64, roll: f64) -> Self {
        Self { yaw, pitch, roll }
    }

    /// The rotation `Rz(yaw) Ry(pitch) Rx(roll)`. nalgebra takes the angles roll first.
    pub fn to_rotation(self) -> Rotation3<f64> {
        Rotation3::from_euler_angles(self.roll, self.pitch, self.yaw)
    }

    /// Inverse of [`to_rotation`](Self::to_rotation): roll = atan2(R32, R33),
    /// pitch = -asin(R31), yaw = atan2(R21, R11) (singular at pitch = ±90°).
    pub fn from_rotation(r: &Rotation3<f64>) -> Self {
        let (roll, pitch, yaw) = r.euler_angles();
        Self { yaw, pitch, roll }
    }

    /// As `[yaw, pitch, roll]` in degrees, the order every file and report uses.
    pub fn to_degrees(self) -> [f64; 3] {
        [
            self.yaw.to_degrees(),
            self.pitch.to_degrees(),
            self.roll.to_degrees(),
        ]
    }

    /// Jacobian of (yaw, pitch, roll) with respect to a right (body-frame) perturbation
    /// `R exp([w]x)`, columns ordered (wx, wy, wz). This is the inverse of the Euler-rate matrix of
    /// the Z-Y-X sequence: roll' = wx + sin(roll) tan(pitch) wy + cos(roll) tan(pitch) wz,
    /// pitch' = cos(roll) wy - sin(roll) wz, yaw' = (sin(roll) wy + cos(roll) wz) / cos(pitch).
    pub fn rate_jacobian(self) -> Matrix3<f64> {
        let (sr, cr) = self.roll.sin_cos();
        let (tp, cp) = (self.pitch.tan(), self.pitch.cos());
        Matrix3::new(
            0.0,
            sr / cp,
            cr / cp, // yaw
            0.0,
            cr,
            -sr, // pitch
            1.0,
            sr * tp,
            cr * tp, // roll
        )
    }
}

/// Nominal or observed mount: the camera pose in the body frame, as position of the camera centre
/// and the yaw/pitch/roll of its boresight frame S.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Mount {
    pub position_m: Vector3<f64>,
    pub attitude: YawPitchRoll,
}

impl Mount {
    /// `R_BS`, the boresight frame in body axes.
    pub fn boresight_rotation(&self) -> Rotation3<f64> {
        self.attitude.to_rotation()
    }

    /// `T_BC` (camera optical frame to body): `R_BC = R_BS Mperm`, translation `p_BC`.
    pub fn body_from_camera(&self) -> Isometry3<f64> {
        let r_bc = self.boresight_rotation() * optical_in_boresight();
        Isometry3::from_parts(
            Translation3::from(self.position_m),
            UnitQuaternion::from_rotation_matrix(&r_bc),
        )
    }

    /// The mount whose `T_BC` is the given transform (inverse of
    /// [`body_from_camera`](Self::body_from_camera)).
    pub fn from_body_from_camera(t_bc: &Isometry3<f64>) -> Self {
        let r_bs = t_bc.rotation.to_rotation_matrix() * optical_in_boresight().inverse();
        Self {
            position_m: t_bc.translation.vector,
            attitude: YawPitchRoll::from_rotation(&r_bs),
        }
    }
}

/// Deviation of one mount from a reference mount: translation in body axes (m) and the rotation
/// `ΔR = R_BS,ref^T R_BS,other` as Z-Y-X angles (rad).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct MountDeviation {
    pub translation_m: Vector3<f64>,
    pub rotation: YawPitchRoll,
}

impl MountDeviation {
    /// `other` relative to `reference` (observed minus nominal, or later segment minus earlier).
    pub fn between(reference: &Mount, other: &Mount) -> Self {
        let delta = reference.boresight_rotation().inverse() * other.boresight_rotation();
        Self {
            translation_m: other.position_m - reference.position_m,
            rotation: YawPitchRoll::from_rotation(&delta),
        }
    }

    /// The 6-vector used by the statistics: translation in mm, then yaw, pitch, roll in degrees.
    pub fn to_report_vector(&self) -> nalgebra::Vector6<f64> {
        let t = self.translation_m * 1000.0;
        let r = self.rotation.to_degrees();
        nalgebra::Vector6::new(t.x, t.y, t.z, r[0], r[1], r[2])
    }

    /// Inverse of [`to_report_vector`](Self::to_report_vector): mm and degrees back to metres
    /// and radians.
    pub fn from_report_vector(v: &nalgebra::Vector6<f64>) -> Self {
        Self {
            translation_m: nalgebra::Vector3::new(v[0], v[1], v[2]) / 1000.0,
            rotation: YawPitchRoll::new(v[3].to_radians(), v[4].to_radians(), v[5].to_radians()),
        }
    }

    /// Applies this deviation to a reference mount (inverse of [`between`](Self::between)).
    pub fn apply_to(&self, reference: &Mount) -> Mount {
        let r = reference.boresight_rotation() * self.rotation.to_rotation();
        Mount {
            position_m: reference.position_m + self.translation_m,
            attitude: YawPitchRoll::from_rotation(&r),
        }
    }
}

/// Skew-symmetric matrix `[v]x` with `[v]x w = v × w`.
pub fn skew(v: &Vector3<f64>) -> Matrix3<f64> {
    Matrix3::new(0.0, -v.z, v.y, v.z, 0.0, -v.x, -v.y, v.x, 0.0)
}

/// Rotation from a rotation vector (Rodrigues), `exp([w]x)`.
pub fn exp_so3(w: &Vector3<f64>) -> Rotation3<f64> {
    Rotation3::new(*w)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use std::f64::consts::FRAC_PI_2;

    #[test]
    fn zero_mount_looks_along_body_x() {
        // Hand-worked (DESIGN section 2): all angles 0, the optical axis (C's z) is body +x,
        // image right (C's x) is body +y, image down (C's y) is body +z.
        let m = Mount {
            position_m: Vector3::zeros(),
            attitude: YawPitchRoll::new(0.0, 0.0, 0.0),
        };
        let t = m.body_from_camera();
        assert_relative_eq!(t.rotation * Vector3::z(), Vector3::x(), epsilon = 1e-15);
        assert_relative_eq!(t.rotation * Vector3::x(), Vector3::y(), epsilon = 1e-15);
        assert_relative_eq!(t.rotation * Vector3::y(), Vector3::z(), epsilon = 1e-15);
    }

    #[test]
    fn pitch_up_raises_boresight() {
        // Hand-worked: pitch +90° about body y turns body x (forward) into -z (up, as z is down).
        let m = Mount {
            position_m: Vector3::zeros(),
            attitude: YawPitchRoll::new(0.0, FRAC_PI_2, 0.0),
        };
        let axis = m.body_from_camera().rotation * Vector3::z();
        assert_relative_eq!(axis, -Vector3::z(), epsilon = 1e-15);
        // A small pitch of 10° gives a boresight (cos 10°, 0, -sin 10°).
        let m = Mount {
            position_m: Vector3::zeros(),
            attitude: YawPitchRoll::new(0.0, 10f64.to_radians(), 0.0),
        };
        let axis = m.body_from_camera().rotation * Vector3::z();
        let (s, c) = 10f64.to_radians().sin_cos();
        assert_relative_eq!(axis, Vector3::new(c, 0.0, -s), epsilon = 1e-15);
    }

    #[test]
    fn yaw_right_turns_boresight_to_starboard() {
        // Hand-worked: yaw +90° about body z (down) turns forward into right (+y).
        let m = Mount {
            position_m: Vector3::zeros(),
            attitude: YawPitchRoll::new(FRAC_PI_2, 0.0, 0.0),
        };
        let axis = m.body_from_camera().rotation * Vector3::z();
        assert_relative_eq!(axis, Vector3::y(), epsilon = 1e-15);
    }

    #[test]
    fn roll_turns_image_right_downward() {
        // Hand-worked: roll +90° about the boresight turns image-right (body +y) into body +z.
        let m = Mount {
            position_m: Vector3::zeros(),
            attitude: YawPitchRoll::new(0.0, 0.0, FRAC_PI_2),
        };
        let right = m.body_from_camera().rotation * Vector3::x();
        assert_relative_eq!(right, Vector3::z(), epsilon = 1e-15);
    }

    #[test]
    #[allow(clippy::approx_constant)] // the published example prints 0.7854 and 0.7071
    fn dcm_matches_mathworks_angle2dcm_example() {
        // MathWorks Aerospace Toolbox `angle2dcm` documentation (CHECK_VALUES.md section 8):
        // yaw 0.7854, pitch 0.1, roll 0 gives the passive nav-to-body DCM with rows
        // (0.7036, 0.7036, -0.0998), (-0.7071, 0.7071, 0), (0.0706, 0.0706, 0.9950).
        // Our active R_BS is its transpose.
        let r = YawPitchRoll::new(0.7854, 0.1, 0.0).to_rotation();
        let dcm = r.matrix().transpose();
        let expected = Matrix3::new(
            0.7036, 0.7036, -0.0998, -0.7071, 0.7071, 0.0, 0.0706, 0.0706, 0.9950,
        );
        assert_relative_eq!(dcm, expected, epsilon = 5e-5);
    }

    #[test]
    fn dcm_matches_scipy_zyx_anchor() {
        // scipy Rotation.from_euler('ZYX', [30, 20, 10], degrees=True), CHECK_VALUES.md
        // section 8 [COMP]: passive DCM rows (0.813798, 0.469846, -0.342020),
        // (-0.440970, 0.882564, 0.163176), (0.378522, 0.018028, 0.925417).
        let ypr = YawPitchRoll::new(30f64.to_radians(), 20f64.to_radians(), 10f64.to_radians());
        let dcm = ypr.to_rotation().matrix().transpose();
        let expected = Matrix3::new(
            0.813798, 0.469846, -0.342020, -0.440970, 0.882564, 0.163176, 0.378522, 0.018028,
            0.925417,
        );
        assert_relative_eq!(dcm, expected, epsilon = 1e-6);
        let back = YawPitchRoll::from_rotation(&ypr.to_rotation());
        assert_relative_eq!(back.yaw, ypr.yaw, epsilon = 1e-14);
        assert_relative_eq!(back.pitch, ypr.pitch, epsilon = 1e-14);
        assert_relative_eq!(back.roll, ypr.roll, epsilon = 1e-14);
        // Quaternion, scalar first, from the same anchor.
        let q = UnitQuaternion::from_rotation_matrix(&ypr.to_rotation());
        assert_relative_eq!(q.w, 0.951549, epsilon = 1e-6);
        assert_relative_eq!(q.i, 0.038135, epsilon = 1e-6);
        assert_relative_eq!(q.j, 0.189308, epsilon = 1e-6);
        assert_relative_eq!(q.k, 0.239298, epsilon = 1e-6);
    }

    #[test]
    fn mount_round_trips_and_deviation_inverts() {
        let nominal = Mount {
            position_m: Vector3::new(1.2, -0.3, -0.4),
            attitude: YawPitchRoll::new(0.05, -0.12, 0.02),
        };
        let back = Mount::from_body_from_camera(&nominal.body_from_camera());
        assert_relative_eq!(back.position_m, nominal.position_m, epsilon = 1e-14);
        assert_relative_eq!(back.attitude.yaw, nominal.attitude.yaw, epsilon = 1e-14);
        assert_relative_eq!(back.attitude.pitch, nominal.attitude.pitch, epsilon = 1e-14);
        assert_relative_eq!(back.attitude.roll, nominal.attitude.roll, epsilon = 1e-14);
        // Hand-worked: a pure 0.5° pitch added on top of the nominal boresight, 2 mm aft.
        let dev = MountDeviation {
            translation_m: Vector3::new(-0.002, 0.0, 0.0),
            rotation: YawPitchRoll::new(0.0, 0.5f64.to_radians(), 0.0),
        };
        let moved = dev.apply_to(&nominal);
        let again = MountDeviation::between(&nominal, &moved);
        let v = again.to_report_vector();
        assert_relative_eq!(v[0], -2.0, epsilon = 1e-12);
        assert_relative_eq!(v[4], 0.5, epsilon = 1e-12);
        assert_relative_eq!(v[3], 0.0, epsilon = 1e-12);
        assert_relative_eq!(v[5], 0.0, epsilon = 1e-12);
    }

    #[test]
    fn rate_jacobian_matches_finite_differences() {
        let ypr = YawPitchRoll::new(0.3, -0.4, 0.7);
        let r0 = ypr.to_rotation();
        let jac = ypr.rate_jacobian();
        let h = 1e-7;
        for k in 0..3 {
            let mut w = Vector3::zeros();
            w[k] = h;
            let plus = YawPitchRoll::from_rotation(&(r0 * exp_so3(&w)));
            w[k] = -h;
            let minus = YawPitchRoll::from_rotation(&(r0 * exp_so3(&w)));
            let d = Vector3::new(
                plus.yaw - minus.yaw,
                plus.pitch - minus.pitch,
                plus.roll - minus.roll,
            ) / (2.0 * h);
            assert_relative_eq!(d, jac.column(k).into_owned(), epsilon = 1e-7);
        }
    }
}
