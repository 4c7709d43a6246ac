//! Compact storage for symmetric 6x6 matrices (covariances, information): the 21 entries of the
//! upper triangle, row by row, instead of nalgebra's 36. Long sessions keep one or two such
//! matrices per frame, so this is where per-frame memory goes. Arithmetic stays in nalgebra:
//! unpack with [`PackedSym6::to_matrix`] where a full matrix is needed.

use nalgebra::{Matrix6, Vector6};

/// Number of stored entries: `6·7/2`.
pub const PACKED_LEN: usize = 21;

/// A symmetric 6x6 matrix stored as its upper triangle.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PackedSym6([f64; PACKED_LEN]);

impl PackedSym6 {
    /// Packs the symmetric part `(m + mᵀ)/2` of `m`.
    pub fn from_matrix(m: &Matrix6<f64>) -> Self {
        let mut out = [0.0; PACKED_LEN];
        for r in 0..6 {
            for c in r..6 {
                out[index(r, c)] = 0.5 * (m[(r, c)] + m[(c, r)]);
            }
        }
        Self(out)
    }

    /// The full matrix.
    pub fn to_matrix(&self) -> Matrix6<f64> {
        Matrix6::from_fn(|r, c| self.get(r, c))
    }

    /// Entry `(r, c)` (either order).
    #[inline]
    pub fn get(&self, r: usize, c: usize) -> f64 {
        let (a, b) = if r <= c { (r, c) } else { (c, r) };
        self.0[index(a, b)]
    }

    /// `M x`.
    pub fn mul_vector(&self, x: &Vector6<f64>) -> Vector6<f64> {
        Vector6::from_fn(|r, _| (0..6).map(|c| self.get(r, c) * x[c]).sum())
    }

    /// `xᵀ M x`.
    pub fn quadratic(&self, x: &Vector6<f64>) -> f64 {
        let mut total = 0.0;
        for r in 0..6 {
            total += self.0[index(r, r)] * x[r] * x[r];
            for c in r + 1..6 {
                total += 2.0 * self.0[index(r, c)] * x[r] * x[c];
            }
        }
        total
    }

    /// The packed entries (upper triangle, row by row).
    pub fn as_slice(&self) -> &[f64; PACKED_LEN] {
        &self.0
    }
}

impl From<&Matrix6<f64>> for PackedSym6 {
    fn from(m: &Matrix6<f64>) -> Self {
        Self::from_matrix(m)
    }
}

/// Position of `(r, c)`, `r <= c`, in the packed upper triangle (row-major): rows before `r`
/// hold `6 + 5 + … + (7 − r)` entries.
#[inline]
const fn index(r: usize, c: usize) -> usize {
    r * (13 - r) / 2 + (c - r)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn indices_cover_the_triangle_once() {
        let mut seen = [false; PACKED_LEN];
        for r in 0..6 {
            for c in r..6 {
                assert!(!seen[index(r, c)], "({r}, {c}) collides");
                seen[index(r, c)] = true;
            }
        }
        assert!(seen.iter().all(|&s| s));
    }

    #[test]
    fn agrees_with_nalgebra() {
        let a = Matrix6::from_fn(|r, c| (r * 7 + c * 3) as f64 * 0.1 - 1.3);
        let m = a * a.transpose() + Matrix6::identity();
        let p = PackedSym6::from_matrix(&m);
        assert_eq!(p.to_matrix(), m);
        let x = Vector6::new(0.3, -1.0, 2.0, 0.5, -0.7, 1.1);
        let reference = m * x;
        assert!((p.mul_vector(&x) - reference).amax() <= 1e-12 * reference.amax());
        let q = x.dot(&reference);
        assert!((p.quadratic(&x) - q).abs() <= 1e-12 * q.abs());
    }
}
