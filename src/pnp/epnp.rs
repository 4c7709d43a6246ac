//! EPnP global start for non-planar point sets (Lepetit, Moreno-Noguer and Fua, "EPnP: an
//! accurate O(n) solution to the PnP problem", IJCV 81(2), 2009).
//!
//! Each model point is a barycentric combination of four control points (the centroid and the
//! centroid plus each principal axis scaled by its RMS extent). The camera-frame control points
//! solve a homogeneous linear system; instead of the paper's 12x12 eigenproblem we eliminate the
//! x and y control coordinates in closed form (they are linear in the depths z), leaving a 4x4
//! symmetric eigenproblem for z with the same exact null space. The null-space combination is
//! fixed by the control-point distances (the paper's N = 1, 2, 3 cases, each polished by
//! Gauss-Newton on the betas). Because the control points are the whitened principal axes, the
//! least-squares absolute orientation over all points reduces to the polar factor of a 3x3 matrix
//! built from the control points alone.

use nalgebra::{Matrix3, Matrix4, Quaternion, SMatrix, SVector, UnitQuaternion, Vector3, Vector4};

use super::linalg::{cholesky_solve, symmetric_eigen, Cholesky};
use super::pose::Pose;
use super::prepare::{Correspondence, PointGeometry};
use crate::tol;

/// The four control points in the model frame and the map from a point to its barycentric
/// coordinates.
struct ControlPoints {
    world: [Vector3<f64>; 4],
    centroid: Vector3<f64>,
    /// Principal axes (columns) times their RMS extents: world control offsets c_k − c_0.
    scaled_axes: Matrix3<f64>,
    /// Rows: principal axes divided by their extents (model offset → barycentric weights 1..3).
    to_weights: Matrix3<f64>,
}

impl ControlPoints {
    fn new(g: &PointGeometry) -> Option<Self> {
        if g.extent_m[2] <= tol::PNP_PLANAR_REL * g.extent_m[0] {
            return None;
        }
        let mut world = [g.centroid_m; 4];
        let mut to_weights = Matrix3::zeros();
        let mut scaled_axes = Matrix3::zeros();
        for k in 0..3 {
            let axis = g.axes.column(k);
            world[k + 1] += axis * g.extent_m[k];
            scaled_axes.set_column(k, &(axis * g.extent_m[k]));
            to_weights.set_row(k, &(axis.transpose() / g.extent_m[k]));
        }
        Some(Self {
            world,
            centroid: g.centroid_m,
            scaled_axes,
            to_weights,
        })
    }

    fn alphas(&self, p: &Vector3<f64>) -> Vector4<f64> {
        let w = self.to_weights * (p - self.centroid);
        Vector4::new(1.0 - w.x - w.y - w.z, w.x, w.y, w.z)
    }
}

/// Camera-frame control points (x_j, y_j, z_j) satisfy, for each point with barycentric a and
/// normalised image point (u, v): aᵀx − u aᵀz = 0 and aᵀy − v aᵀz = 0. With G = Σ a aᵀ,
/// Gu = Σ u a aᵀ, Gv = Σ v a aᵀ, the least-squares x and y are G⁻¹Gu z and G⁻¹Gv z, and the
/// remaining cost is zᵀ S z with S = Σ (u² + v²) a aᵀ − Gu G⁻¹ Gu − Gv G⁻¹ Gv.
struct Reduced {
    bu: Matrix4<f64>,
    bv: Matrix4<f64>,
    s: Matrix4<f64>,
}

impl Reduced {
    fn new(pts: &[Correspondence], cp: &ControlPoints) -> Option<Self> {
        let mut g = Matrix4::zeros();
        let mut gu = Matrix4::zeros();
        let mut gv = Matrix4::zeros();
        let mut gq = Matrix4::zeros();
        for c in pts {
            let a = cp.alphas(&c.model_m);
            let (u, v) = (c.normalized.x, c.normalized.y);
            for i in 0..4 {
                for j in 0..=i {
                    let aa = a[i] * a[j];
                    g[(i, j)] += aa;
                    gu[(i, j)] += aa * u;
                    gv[(i, j)] += aa * v;
                    gq[(i, j)] += aa * (u * u + v * v);
                }
            }
        }
        for m in [&mut g, &mut gu, &mut gv, &mut gq] {
            m.fill_upper_triangle_with_lower_triangle();
        }
        let g_inv = Cholesky::new(&g)?.inverse();
        let bu = g_inv * gu;
        let bv = g_inv * gv;
        let s = gq - gu * bu - gv * bv;
        Some(Self {
            bu,
            bv,
            s: (s + s.transpose()) * 0.5,
        })
    }

    /// Camera-frame control points for the depth vector z.
    fn controls(&self, z: &Vector4<f64>) -> [Vector3<f64>; 4] {
        let x = self.bu * z;
        let y = self.bv * z;
        std::array::from_fn(|j| Vector3::new(x[j], y[j], z[j]))
    }

    /// The eigenvector of S's smallest eigenvalue by inverse iteration from equal depths (the
    /// true depths are all positive and similar), on S shifted to be safely positive definite.
    fn smallest_eigenvector(&self) -> Option<Vector4<f64>> {
        let shift = self.s.trace().abs() * tol::EPNP_INVERSE_SHIFT + f64::MIN_POSITIVE;
        let chol = Cholesky::new(&(self.s + Matrix4::identity() * shift))?;
        let mut z = Vector4::repeat(0.5);
        for _ in 0..tol::EPNP_INVERSE_ITER {
            z = chol.solve(&z);
            z /= z.norm();
        }
        z.iter().all(|c| c.is_finite()).then_some(z)
    }

    /// All four eigenvectors of S, by increasing eigenvalue, as control-point sets.
    fn basis(&self) -> Basis {
        let (values, vectors) = symmetric_eigen(&self.s, tol::START_EIGEN_REL);
        let mut order = [0usize, 1, 2, 3];
        order.sort_by(|&a, &b| values[a].total_cmp(&values[b]));
        order.map(|col| self.controls(&vectors.column(col).into_owned()))
    }
}

/// The null-space basis: for each of four candidate vectors, the camera-frame control points.
type Basis = [[Vector3<f64>; 4]; 4];

/// For each control-point pair, the Gram matrix of the basis differences: entry (k, l) is
/// Δv_k · Δv_l, so that |Σ β_k Δv_k|² = βᵀ D β.
type PairGrams = [Matrix4<f64>; 6];

/// A candidate pose with its mean squared normalised reprojection error.
type Scored = (f64, Pose);

/// The EPnP start. The closed-form N = 1 solution is kept when its mean squared error on the
/// normalised image is within `accept_error` (the noise level); otherwise the N = 1, 2, 3
/// hypotheses over the full null-space basis, each polished by Gauss-Newton on the betas, compete
/// and the one that reprojects best wins. Empty for (near-)planar sets, which IPPE handles.
pub(crate) fn epnp_starts(
    pts: &[Correspondence],
    g: &PointGeometry,
    accept_error: f64,
) -> Vec<Pose> {
    let Some(cp) = ControlPoints::new(g) else {
        return Vec::new();
    };
    let Some(reduced) = Reduced::new(pts, &cp) else {
        return Vec::new();
    };
    let rho = control_distances(&cp.world);
    let quick = reduced
        .smallest_eigenvector()
        .and_then(|z| single_vector(&reduced.controls(&z), &rho))
        .and_then(|control| score(pts, &cp, control));
    let best = match quick {
        Some(q) if q.0 <= accept_error => Some(q),
        _ => full_search(pts, &cp, &reduced, &rho)
            .into_iter()
            .chain(quick)
            .min_by(|a, b| a.0.total_cmp(&b.0)),
    };
    best.map(|(_, pose)| pose).into_iter().collect()
}

/// N = 1: scale β = Σ |Δc_w| |Δv| / Σ |Δv|² (the paper's closed form).
fn single_vector(v: &[Vector3<f64>; 4], rho: &[f64; 6]) -> Option<[Vector3<f64>; 4]> {
    let (mut num, mut den) = (0.0, 0.0);
    for (&(a, b), r) in PAIRS.iter().zip(rho) {
        let d2 = (v[a] - v[b]).norm_squared();
        num += r.sqrt() * d2.sqrt();
        den += d2;
    }
    (den > 0.0).then(|| v.map(|c| c * (num / den)))
}

/// The paper's N = 1, 2, 3 hypotheses over the four smallest eigenvectors, each refined by
/// Gauss-Newton on all four betas, with the best by reprojection error.
fn full_search(
    pts: &[Correspondence],
    cp: &ControlPoints,
    reduced: &Reduced,
    rho: &[f64; 6],
) -> Option<Scored> {
    let basis = reduced.basis();
    let grams = pair_grams(&basis);
    [
        beta_n1(&grams, rho),
        beta_n2(&grams, rho),
        beta_n3(&grams, rho),
    ]
    .into_iter()
    .flatten()
    .filter_map(|b| {
        let betas = gauss_newton_betas(&grams, rho, b);
        let control = std::array::from_fn(|j| (0..4).map(|k| basis[k][j] * betas[k]).sum());
        score(pts, cp, control)
    })
    .min_by(|a, b| a.0.total_cmp(&b.0))
}

const PAIRS: [(usize, usize); 6] = [(0, 1), (0, 2), (0, 3), (1, 2), (1, 3), (2, 3)];

fn control_distances(world: &[Vector3<f64>; 4]) -> [f64; 6] {
    PAIRS.map(|(a, b)| (world[a] - world[b]).norm_squared())
}

fn pair_grams(basis: &Basis) -> PairGrams {
    PAIRS.map(|(a, b)| {
        let d: [Vector3<f64>; 4] = std::array::from_fn(|k| basis[k][a] - basis[k][b]);
        Matrix4::from_fn(|k, l| d[k].dot(&d[l]))
    })
}

/// N = 1 over the basis: β1 from the closed form.
fn beta_n1(grams: &PairGrams, rho: &[f64; 6]) -> Option<Vector4<f64>> {
    let (mut num, mut den) = (0.0, 0.0);
    for (d, r) in grams.iter().zip(rho) {
        num += r.sqrt() * d[(0, 0)].sqrt();
        den += d[(0, 0)];
    }
    (den > 0.0).then(|| Vector4::new(num / den, 0.0, 0.0, 0.0))
}

/// N = 2: linear least squares for (β1², β1β2, β2²) from the six distance constraints.
fn beta_n2(grams: &PairGrams, rho: &[f64; 6]) -> Option<Vector4<f64>> {
    let mut l = SMatrix::<f64, 6, 3>::zeros();
    for (p, d) in grams.iter().enumerate() {
        l[(p, 0)] = d[(0, 0)];
        l[(p, 1)] = 2.0 * d[(0, 1)];
        l[(p, 2)] = d[(1, 1)];
    }
    let rhs = l.transpose() * SVector::<f64, 6>::from(*rho);
    let b = cholesky_solve(&(l.transpose() * l), &rhs)?;
    let b1 = b[0].abs().sqrt();
    let b2 = b[2].abs().sqrt() * b[1].signum();
    Some(Vector4::new(b1, b2, 0.0, 0.0))
}

/// N = 3: the six products (β1², β1β2, β1β3, β2², β2β3, β3²) from the six constraints.
fn beta_n3(grams: &PairGrams, rho: &[f64; 6]) -> Option<Vector4<f64>> {
    let mut l = SMatrix::<f64, 6, 6>::zeros();
    for (p, d) in grams.iter().enumerate() {
        l[(p, 0)] = d[(0, 0)];
        l[(p, 1)] = 2.0 * d[(0, 1)];
        l[(p, 2)] = 2.0 * d[(0, 2)];
        l[(p, 3)] = d[(1, 1)];
        l[(p, 4)] = 2.0 * d[(1, 2)];
        l[(p, 5)] = d[(2, 2)];
    }
    let b = l.lu().solve(&SVector::<f64, 6>::from(*rho))?;
    let b1 = b[0].abs().sqrt();
    if b1 <= 0.0 || !b1.is_finite() {
        return None;
    }
    Some(Vector4::new(b1, b[1] / b1, b[2] / b1, 0.0))
}

/// Gauss-Newton on the four betas: minimise Σ (βᵀ D_p β − |Δc_w,p|²)² over the six pairs.
fn gauss_newton_betas(grams: &PairGrams, rho: &[f64; 6], mut betas: Vector4<f64>) -> Vector4<f64> {
    for _ in 0..tol::EPNP_BETA_ITER {
        let mut jtj = Matrix4::zeros();
        let mut jtr = Vector4::zeros();
        for (d, r) in grams.iter().zip(rho) {
            let db = d * betas;
            let res = betas.dot(&db) - r;
            let j = db * 2.0;
            jtj += j * j.transpose();
            jtr += j * res;
        }
        let Some(step) = cholesky_solve(&jtj, &jtr) else {
            break;
        };
        betas -= step;
        if step.norm() <= tol::EPNP_BETA_STEP_REL * betas.norm() {
            break;
        }
    }
    betas
}

/// Signs the control points so the points lie in front (the null vector's sign is arbitrary),
/// turns them into a rigid pose and scores it by the mean squared reprojection error on the
/// normalised image plane. Rigidity matters: with few points any depths reproject exactly.
fn score(pts: &[Correspondence], cp: &ControlPoints, control: [Vector3<f64>; 4]) -> Option<Scored> {
    let depth: f64 = pts
        .iter()
        .map(|c| {
            let a = cp.alphas(&c.model_m);
            control[0].z * a[0] + control[1].z * a[1] + control[2].z * a[2] + control[3].z * a[3]
        })
        .sum();
    let control = if depth < 0.0 {
        control.map(|c| -c)
    } else {
        control
    };
    let pose = pose_from_controls(cp, &control)?;
    let mut err = 0.0;
    for c in pts {
        let x = pose.transform(&c.model_m);
        if x.z <= 0.0 {
            return None;
        }
        err += (x.xy() / x.z - c.normalized).norm_squared();
    }
    let err = err / pts.len() as f64;
    err.is_finite().then_some((err, pose))
}

/// Pose from camera-frame control points. With barycentric weights whitened by the principal
/// axes (Σ w wᵀ = n I, Σ w = 0), the least-squares rotation over all points (Kabsch 1976) is the
/// rotation closest to M = D Aᵀ, D the camera control offsets c_k − c_0 and A the world ones; the
/// translation puts the centroid at c_0.
fn pose_from_controls(cp: &ControlPoints, control: &[Vector3<f64>; 4]) -> Option<Pose> {
    let d = Matrix3::from_columns(&[
        control[1] - control[0],
        control[2] - control[0],
        control[3] - control[0],
    ]);
    let r = closest_rotation(&(d * cp.scaled_axes.transpose()))?;
    let pose = Pose {
        r,
        t: control[0] - r * cp.centroid,
    };
    pose.is_finite().then_some(pose)
}

/// The rotation R maximising tr(Rᵀ M): the orthogonal polar factor by Higham's scaled Newton
/// iteration X ← (γX + (γX)⁻ᵀ)/2, γ = |det X|^(−1/3) (Higham, SIAM J. Sci. Stat. Comput. 7(4),
/// 1986), when det M > 0; otherwise (or if it fails) Horn's quaternion method, which always
/// returns a proper rotation.
pub(crate) fn closest_rotation(m: &Matrix3<f64>) -> Option<Matrix3<f64>> {
    if m.determinant() > 0.0 {
        let mut x = *m;
        for _ in 0..tol::POLAR_MAX_ITER {
            let gamma = x.determinant().abs().powf(-1.0 / 3.0);
            let inv_t = (x * gamma).try_inverse()?.transpose();
            let next = (x * gamma + inv_t) * 0.5;
            let change = (next - x).norm();
            x = next;
            if change <= tol::POLAR_STEP * 3f64.sqrt() {
                return x.iter().all(|c| c.is_finite()).then_some(x);
            }
        }
    }
    horn_rotation(m)
}

/// Horn's method ("Closed-form solution of absolute orientation using unit quaternions", JOSA A
/// 4(4), 1987): the rotation is the eigenvector of the largest eigenvalue of a 4x4 symmetric
/// matrix built from M = Σ x pᵀ (camera points x against model points p).
fn horn_rotation(m: &Matrix3<f64>) -> Option<Matrix3<f64>> {
    // s[(a, b)] = Σ p_a x_b.
    let s = m.transpose();
    let (sxx, sxy, sxz) = (s[(0, 0)], s[(0, 1)], s[(0, 2)]);
    let (syx, syy, syz) = (s[(1, 0)], s[(1, 1)], s[(1, 2)]);
    let (szx, szy, szz) = (s[(2, 0)], s[(2, 1)], s[(2, 2)]);
    let horn = Matrix4::new(
        sxx + syy + szz,
        syz - szy,
        szx - sxz,
        sxy - syx, //
        syz - szy,
        sxx - syy - szz,
        sxy + syx,
        szx + sxz, //
        szx - sxz,
        sxy + syx,
        -sxx + syy - szz,
        syz + szy, //
        sxy - syx,
        szx + sxz,
        syz + szy,
        -sxx - syy + szz,
    );
    let (values, vectors) = symmetric_eigen(&horn, tol::START_EIGEN_REL);
    let q = vectors.column(values.imax());
    let quat = UnitQuaternion::from_quaternion(Quaternion::new(q[0], q[1], q[2], q[3]));
    let r = quat.to_rotation_matrix().into_inner();
    r.iter().all(|c| c.is_finite()).then_some(r)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::pnp::prepare::exact_correspondences;
    use nalgebra::Rotation3;

    fn truth() -> Pose {
        Pose {
            r: Rotation3::new(Vector3::new(0.1, -0.2, 0.3)).into_inner(),
            t: Vector3::new(0.05, -0.1, 4.0),
        }
    }

    #[test]
    fn exact_points_give_the_exact_pose() {
        // Noise-free data: EPnP recovers the pose exactly (Lepetit et al. 2009; the CHECK_VALUES.md
        // section 4 problem, where SQPnP does the same to 1e-13).
        let model = [
            [-0.5, -0.5, 0.0],
            [0.5, -0.5, 0.0],
            [0.5, 0.5, 0.0],
            [-0.5, 0.5, 0.0],
            [0.0, 0.0, 0.3],
            [0.25, -0.1, 0.15],
            [-0.3, 0.2, 0.25],
            [0.1, 0.35, -0.2],
        ];
        let pts = exact_correspondences(&model, &truth());
        let g = PointGeometry::of(pts.iter().map(|c| c.model_m));
        for accept in [0.0, 1.0] {
            let best = epnp_starts(&pts, &g, accept)[0];
            assert!(best.minus(&truth()).norm() < 1e-9, "accept {accept}");
        }
    }

    #[test]
    fn polar_and_horn_agree_on_the_closest_rotation() {
        // A rotation times a positive-definite stretch: its orthogonal polar factor is the rotation.
        let r = Rotation3::new(Vector3::new(0.3, -1.2, 2.0)).into_inner();
        let stretch = Matrix3::new(2.0, 0.3, 0.1, 0.3, 1.0, -0.2, 0.1, -0.2, 0.5);
        let m = r * stretch;
        let polar = closest_rotation(&m).unwrap();
        let horn = horn_rotation(&m).unwrap();
        assert!((polar - r).norm() < 1e-12);
        assert!((horn - r).norm() < 1e-9);
    }

    #[test]
    fn four_and_five_points_are_solved() {
        // The null space is 4- and 2-dimensional here: the N = 3 branch with Gauss-Newton.
        let model = [
            [-0.5, -0.4, 0.1],
            [0.6, -0.5, -0.2],
            [0.4, 0.5, 0.3],
            [-0.3, 0.45, -0.25],
            [0.05, 0.1, 0.4],
        ];
        for n in [5, 4] {
            let pts = exact_correspondences(&model[..n], &truth());
            let g = PointGeometry::of(pts.iter().map(|c| c.model_m));
            let err = epnp_starts(&pts, &g, 0.0)[0].minus(&truth()).norm();
            eprintln!("n={n} {err:e}");
            assert!(err < 1e-6, "n = {n}");
        }
    }
}
