//! Small dense linear algebra for the pose solver on fixed-size matrices (no allocation): a
//! Cholesky solve and a cyclic Jacobi symmetric eigen-decomposition. nalgebra's general routines
//! are correct but carry generic overhead that dominates a pose solve at these sizes (3 to 8).

// Index loops mirror the textbook algorithms; iterator forms would obscure them.
#![allow(clippy::needless_range_loop)]

use nalgebra::{SMatrix, SVector};

/// Cholesky factor `A = L Lᵀ` of a symmetric positive definite matrix (Golub and Van Loan,
/// Matrix Computations, 4th ed., alg. 4.2.1); only the lower triangle of `A` is read.
pub(crate) struct Cholesky<const N: usize> {
    l: [[f64; N]; N],
    /// `1 / L_jj`: one division per pivot, multiplications everywhere else (the divisions are
    /// the long chain of a small solve).
    inv_diag: [f64; N],
}

impl<const N: usize> Cholesky<N> {
    /// `None` when `A` is not (numerically) positive definite.
    pub(crate) fn new(a: &SMatrix<f64, N, N>) -> Option<Self> {
        let mut l = [[0.0f64; N]; N];
        let mut inv_diag = [0.0f64; N];
        for j in 0..N {
            let mut d = a[(j, j)];
            for k in 0..j {
                d -= l[j][k] * l[j][k];
            }
            if !(d > 0.0 && d.is_finite()) {
                return None;
            }
            let djj = d.sqrt();
            let inv = 1.0 / djj;
            l[j][j] = djj;
            inv_diag[j] = inv;
            for i in j + 1..N {
                let mut s = a[(i, j)];
                for k in 0..j {
                    s -= l[i][k] * l[j][k];
                }
                l[i][j] = s * inv;
            }
        }
        Some(Self { l, inv_diag })
    }

    /// Solves `A x = b` by forward and back substitution.
    pub(crate) fn solve(&self, b: &SVector<f64, N>) -> SVector<f64, N> {
        let l = &self.l;
        let mut y = [0.0f64; N];
        for i in 0..N {
            let mut s = b[i];
            for k in 0..i {
                s -= l[i][k] * y[k];
            }
            y[i] = s * self.inv_diag[i];
        }
        let mut x = SVector::<f64, N>::zeros();
        for i in (0..N).rev() {
            let mut s = y[i];
            for k in i + 1..N {
                s -= l[k][i] * x[k];
            }
            x[i] = s * self.inv_diag[i];
        }
        x
    }

    /// `A⁻¹`, column by column.
    pub(crate) fn inverse(&self) -> SMatrix<f64, N, N> {
        let mut inv = SMatrix::<f64, N, N>::zeros();
        for k in 0..N {
            let mut e = SVector::<f64, N>::zeros();
            e[k] = 1.0;
            inv.set_column(k, &self.solve(&e));
        }
        (inv + inv.transpose()) * 0.5
    }
}

/// Solves `A x = b` for symmetric positive definite `A`; `None` when it is not.
pub(crate) fn cholesky_solve<const N: usize>(
    a: &SMatrix<f64, N, N>,
    b: &SVector<f64, N>,
) -> Option<SVector<f64, N>> {
    Cholesky::new(a).map(|c| c.solve(b))
}

/// Eigenvalues (unsorted) of a symmetric matrix by Householder tridiagonalisation followed by
/// implicit symmetric QR steps with the Wilkinson shift (Golub and Van Loan, Matrix Computations,
/// 4th ed., algorithms 8.3.1 and 8.3.2). Accurate to a few rounding errors of the largest
/// eigenvalue. Only the lower triangle is read.
pub(crate) fn tridiagonal_eigenvalues<const N: usize>(a: &SMatrix<f64, N, N>) -> SVector<f64, N> {
    let mut t = lower_to_full(a);
    tridiagonalize(&mut t);
    // Diagonal d and subdiagonal e (e[k] = T[k+1][k]).
    let mut d = [0.0f64; N];
    let mut e = [0.0f64; N];
    for k in 0..N {
        d[k] = t[k][k];
        if k + 1 < N {
            e[k] = t[k + 1][k];
        }
    }
    let mut hi = N.saturating_sub(1);
    let mut steps = 0;
    while hi > 0 && steps < 30 * N {
        if negligible(&d, &e, hi - 1) {
            hi -= 1;
            continue;
        }
        let mut lo = hi - 1;
        while lo > 0 && !negligible(&d, &e, lo - 1) {
            lo -= 1;
        }
        qr_step(&mut d, &mut e, lo, hi);
        steps += 1;
    }
    SVector::<f64, N>::from_fn(|i, _| d[i])
}

/// Whether e[k] (coupling k and k+1) is negligible against its diagonal neighbours.
fn negligible<const N: usize>(d: &[f64; N], e: &[f64; N], k: usize) -> bool {
    e[k].abs() <= f64::EPSILON * (d[k].abs() + d[k + 1].abs())
}

/// One implicit symmetric QR step with the Wilkinson shift on the unreduced block lo..=hi of
/// the tridiagonal (d, e), chasing the bulge down with Givens rotations G = [c s; −s c],
/// T ← Gᵀ T G in the plane (k, k+1).
fn qr_step<const N: usize>(d: &mut [f64; N], e: &mut [f64; N], lo: usize, hi: usize) {
    let half = 0.5 * (d[hi - 1] - d[hi]);
    let e2 = e[hi - 1] * e[hi - 1];
    let sign = if half < 0.0 { -1.0 } else { 1.0 };
    let mu = d[hi] - e2 / (half + sign * (half * half + e2).sqrt());
    let mut x = d[lo] - mu;
    let mut z = e[lo];
    for k in lo..hi {
        let r = (x * x + z * z).sqrt();
        if r <= f64::MIN_POSITIVE {
            break;
        }
        let (c, s) = (x / r, -z / r);
        if k > lo {
            e[k - 1] = r;
        }
        let (a, b, dd) = (d[k], e[k], d[k + 1]);
        d[k] = c * c * a - 2.0 * c * s * b + s * s * dd;
        d[k + 1] = s * s * a + 2.0 * c * s * b + c * c * dd;
        e[k] = c * s * (a - dd) + (c * c - s * s) * b;
        if k + 1 < hi {
            // The rotation pushes the bulge to T[k+2][k].
            x = e[k];
            z = -s * e[k + 1];
            e[k + 1] *= c;
        }
    }
}

/// Householder reduction to tridiagonal form, `T = Qᵀ A Q` (eigenvalues unchanged).
fn tridiagonalize<const N: usize>(t: &mut [[f64; N]; N]) {
    for k in 0..N.saturating_sub(2) {
        let mut v = [0.0f64; N];
        let mut norm2 = 0.0;
        for i in k + 1..N {
            v[i] = t[i][k];
            norm2 += v[i] * v[i];
        }
        let norm = norm2.sqrt();
        if norm <= f64::MIN_POSITIVE {
            continue;
        }
        let alpha = if v[k + 1] > 0.0 { -norm } else { norm };
        v[k + 1] -= alpha;
        let vtv: f64 = v[k + 1..].iter().map(|x| x * x).sum();
        if vtv <= f64::MIN_POSITIVE {
            continue;
        }
        let beta = 2.0 / vtv;
        // H = I − β v vᵀ; H T H = T − v wᵀ − w vᵀ with p = β T v, w = p − (β pᵀv / 2) v.
        let mut p = [0.0f64; N];
        for i in k..N {
            p[i] = beta * (k + 1..N).map(|j| t[i][j] * v[j]).sum::<f64>();
        }
        let kk = 0.5 * beta * (k + 1..N).map(|j| p[j] * v[j]).sum::<f64>();
        let mut w = [0.0f64; N];
        for i in k..N {
            w[i] = p[i] - kk * v[i];
        }
        for i in k..N {
            for j in k..N {
                t[i][j] -= v[i] * w[j] + w[i] * v[j];
            }
        }
    }
}

/// Maximum number of Jacobi sweeps; cyclic Jacobi converges quadratically and needs 5 to 8
/// sweeps at these sizes.
const JACOBI_MAX_SWEEPS: usize = 30;

/// Eigen-decomposition of a symmetric matrix by the cyclic Jacobi method (Golub and Van Loan,
/// Matrix Computations, 4th ed., section 8.5): returns eigenvalues (unsorted) and the orthonormal
/// eigenvectors as columns, `A = V diag(λ) Vᵀ`. Only the lower triangle is read.
///
/// An off-diagonal entry below `rel_tol` times the geometric mean of its two diagonal entries is
/// treated as zero (the relative criterion of Demmel and Veselić, SIAM J. Matrix Anal. Appl.
/// 13(4), 1992): for a positive semi-definite matrix the eigenvalues are then accurate to about
/// `rel_tol²` relative, also the small ones, and the eigenvectors to about `rel_tol` over the
/// relative gap.
pub(crate) fn symmetric_eigen<const N: usize>(
    a: &SMatrix<f64, N, N>,
    rel_tol: f64,
) -> (SVector<f64, N>, SMatrix<f64, N, N>) {
    let mut m = lower_to_full(a);
    let mut v = [[0.0f64; N]; N];
    for (i, row) in v.iter_mut().enumerate() {
        row[i] = 1.0;
    }
    for _ in 0..JACOBI_MAX_SWEEPS {
        if !sweep(&mut m, &mut v, rel_tol) {
            break;
        }
    }
    let values = SVector::<f64, N>::from_fn(|i, _| m[i][i]);
    let vectors = SMatrix::<f64, N, N>::from_fn(|i, j| v[i][j]);
    (values, vectors)
}

fn lower_to_full<const N: usize>(a: &SMatrix<f64, N, N>) -> [[f64; N]; N] {
    let mut m = [[0.0f64; N]; N];
    for i in 0..N {
        for j in 0..=i {
            m[i][j] = a[(i, j)];
            m[j][i] = a[(i, j)];
        }
    }
    m
}

/// One cyclic sweep over all (p, q) pairs; false when the matrix was already diagonal to the
/// tolerance.
fn sweep<const N: usize>(m: &mut [[f64; N]; N], v: &mut [[f64; N]; N], rel_tol: f64) -> bool {
    let mut rotated = false;
    for p in 0..N {
        for q in p + 1..N {
            let apq = m[p][q];
            let scale = (m[p][p] * m[q][q]).abs().sqrt();
            // The second test settles entries next to a (near-)zero eigenvalue, where the
            // relative test cannot: they move the eigenvalues by under rel_tol² of the larger.
            let floor = rel_tol * rel_tol * (m[p][p].abs() + m[q][q].abs());
            if apq.abs() <= rel_tol * scale || apq.abs() <= floor || apq.abs() < f64::MIN_POSITIVE {
                continue;
            }
            rotated = true;
            // sym.schur2: zero the (p, q) entry with J = [c s; −s c], B = Jᵀ A J.
            let tau = (m[q][q] - m[p][p]) / (2.0 * apq);
            let t = tau.signum() / (tau.abs() + (1.0 + tau * tau).sqrt());
            let c = 1.0 / (1.0 + t * t).sqrt();
            let s = t * c;
            rotate_columns(m, p, q, c, s);
            for k in 0..N {
                let (pk, qk) = (m[p][k], m[q][k]);
                m[p][k] = c * pk - s * qk;
                m[q][k] = s * pk + c * qk;
            }
            m[p][q] = 0.0;
            m[q][p] = 0.0;
            rotate_columns(v, p, q, c, s);
        }
    }
    rotated
}

fn rotate_columns<const N: usize>(m: &mut [[f64; N]; N], p: usize, q: usize, c: f64, s: f64) {
    for row in m.iter_mut() {
        let (kp, kq) = (row[p], row[q]);
        row[p] = c * kp - s * kq;
        row[q] = s * kp + c * kq;
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use nalgebra::{Matrix6, Vector6};

    fn spd() -> Matrix6<f64> {
        let a = Matrix6::from_fn(|i, j| (((i * 7 + j * 3) % 5) as f64 - 2.0) * 0.3);
        a * a.transpose() + Matrix6::from_diagonal(&Vector6::new(1.0, 2.0, 3.0, 1e-6, 5.0, 1e3))
    }

    #[test]
    fn cholesky_solves_against_nalgebra_lu() {
        let a = spd();
        let b = Vector6::new(1.0, -2.0, 0.5, 3.0, 0.0, 1.0);
        let x = cholesky_solve(&a, &b).unwrap();
        assert_relative_eq!(x, a.lu().solve(&b).unwrap(), max_relative = 1e-9);
        assert!(cholesky_solve(&(-a), &b).is_none());
    }

    #[test]
    fn jacobi_reconstructs_and_matches_nalgebra_eigenvalues() {
        let a = spd();
        let (values, vectors) = symmetric_eigen(&a, 1e-14);
        let mut qr: Vec<f64> = tridiagonal_eigenvalues(&a).iter().copied().collect();
        qr.sort_by(f64::total_cmp);
        let back = vectors * Matrix6::from_diagonal(&values) * vectors.transpose();
        assert_relative_eq!(back, a, epsilon = 1e-10 * a.norm());
        assert_relative_eq!(
            vectors.transpose() * vectors,
            Matrix6::identity(),
            epsilon = 1e-13
        );
        let mut ours: Vec<f64> = values.iter().copied().collect();
        let mut theirs: Vec<f64> = a.symmetric_eigen().eigenvalues.iter().copied().collect();
        ours.sort_by(f64::total_cmp);
        theirs.sort_by(f64::total_cmp);
        for ((o, t), q) in ours.iter().zip(&theirs).zip(&qr) {
            assert_relative_eq!(o, t, epsilon = 1e-12 * 1e3, max_relative = 1e-9);
            assert_relative_eq!(q, t, epsilon = 1e-12 * 1e3, max_relative = 1e-9);
        }
    }

    #[test]
    fn tridiagonal_qr_recovers_known_spectra() {
        // Eigenvalues from 1e-9 to 1e3, repeated and negative ones, in a rotated basis.
        let q = nalgebra::Rotation3::new(nalgebra::Vector3::new(0.3, -0.7, 1.1)).into_inner();
        let mut basis = Matrix6::identity();
        basis.fixed_view_mut::<3, 3>(0, 0).copy_from(&q);
        basis.fixed_view_mut::<3, 3>(3, 3).copy_from(&(q * q));
        let mix = Matrix6::from_fn(|i, j| {
            if i == j {
                0.8
            } else if i + 1 == j {
                0.6
            } else {
                0.0
            }
        });
        let basis = basis * mix.qr().q();
        for spectrum in [
            [1e3, 2.0, 2.0, 1e-3, 1e-6, 1e-9],
            [5.0, -3.0, 1.0, 1.0, 0.0, 7.0],
            [1.0, 1.0, 1.0, 1.0, 1.0, 1.0],
        ] {
            let a = basis * Matrix6::from_diagonal(&Vector6::from(spectrum)) * basis.transpose();
            let mut got: Vec<f64> = tridiagonal_eigenvalues(&a).iter().copied().collect();
            let mut want = spectrum.to_vec();
            got.sort_by(f64::total_cmp);
            want.sort_by(f64::total_cmp);
            for (g, w) in got.iter().zip(&want) {
                assert!((g - w).abs() <= 1e-12 * 1e3, "{got:?} vs {want:?}");
            }
        }
    }
}
