//! Rank-aware information matrices: the pseudo-inverse of a 6x6 covariance and its rank.
//!
//! A pose covariance can be singular (a direction the keypoints cannot observe). The information
//! `W = P⁺` is then zero in that direction, so a test statistic `xᵀ W x` ignores it and counts
//! only `rank(W)` degrees of freedom, instead of being inflated by an arbitrary value there.

use nalgebra::{Matrix6, SymmetricEigen, Vector6};

use super::StatsError;
use crate::tol;

/// The eigen-decomposition of a symmetric 6x6 matrix with the eigenvalues below a relative
/// floor treated as exact zeros.
#[derive(Debug, Clone)]
pub struct Spectrum {
    /// Eigenvalues, zeroed where below the floor.
    pub values: Vector6<f64>,
    /// Orthonormal eigenvectors as columns.
    pub vectors: Matrix6<f64>,
    /// Number of eigenvalues above the floor.
    pub rank: usize,
    /// The smallest eigenvalue before the floor was applied (negative only by rounding, or for
    /// a matrix that is not positive semi-definite).
    pub smallest_raw: f64,
}

impl Spectrum {
    /// Decomposes the symmetric part of `m`; eigenvalues at or below `rel_floor` times the largest
    /// absolute eigenvalue become zero.
    pub fn new(m: &Matrix6<f64>, rel_floor: f64) -> Self {
        let sym = (m + m.transpose()) * 0.5;
        let eig = SymmetricEigen::new(sym);
        let largest = eig.eigenvalues.amax();
        let smallest_raw = eig.eigenvalues.min();
        let floor = rel_floor * largest;
        let mut values = eig.eigenvalues;
        let mut rank = 0;
        for v in values.iter_mut() {
            if *v > floor && largest > 0.0 {
                rank += 1;
            } else {
                *v = 0.0;
            }
        }
        Self {
            values,
            vectors: eig.eigenvectors,
            rank,
            smallest_raw,
        }
    }

    fn map(&self, f: impl Fn(f64) -> f64) -> Matrix6<f64> {
        let mapped = self.values.map(|v| if v > 0.0 { f(v) } else { 0.0 });
        self.vectors * Matrix6::from_diagonal(&mapped) * self.vectors.transpose()
    }

    /// Moore-Penrose pseudo-inverse `V diag(1/λ) Vᵀ` over the non-zero eigenvalues.
    pub fn pseudo_inverse(&self) -> Matrix6<f64> {
        self.map(|v| 1.0 / v)
    }

    /// Symmetric square root `V diag(√λ) Vᵀ`.
    pub fn sqrt(&self) -> Matrix6<f64> {
        self.map(f64::sqrt)
    }

    /// Symmetric pseudo-inverse square root `V diag(1/√λ) Vᵀ`.
    pub fn inverse_sqrt(&self) -> Matrix6<f64> {
        self.map(|v| 1.0 / v.sqrt())
    }

    /// Orthogonal projector onto the range (the span of eigenvectors with non-zero eigenvalue).
    pub fn range_projector(&self) -> Matrix6<f64> {
        self.map(|_| 1.0)
    }

    /// For each axis, whether its unit vector lies in the range (up to
    /// [`tol::AXIS_OBSERVABLE_RESIDUAL`]): only then is that coordinate of an estimate defined.
    pub fn observable_axes(&self) -> [bool; 6] {
        let projector = self.range_projector();
        std::array::from_fn(|axis| {
            let residual = 1.0 - projector[(axis, axis)];
            residual <= tol::AXIS_OBSERVABLE_RESIDUAL
        })
    }
}

/// A frame's information matrix `W = P⁺` (pseudo-inverse of its covariance) and its rank.
#[derive(Debug, Clone, PartialEq)]
pub struct Information {
    matrix: Matrix6<f64>,
    rank: usize,
}

impl Information {
    /// Validates a covariance (finite, symmetric, positive semi-definite up to rounding) and
    /// takes its pseudo-inverse. An unobservable direction is written as a zero variance, as the
    /// pseudo-inverse of a singular Fisher information leaves it (eigenvalue below
    /// [`tol::COVARIANCE_RANK_REL`] of the largest); a huge variance is an observable but
    /// uninformative direction and counts as a degree of freedom. `index` only labels the error.
    pub fn from_covariance(covariance: &Matrix6<f64>, index: usize) -> Result<Self, StatsError> {
        if covariance.iter().any(|v| !v.is_finite()) {
            return Err(StatsError::NonFinite {
                index,
                what: "covariance",
            });
        }
        let scale = covariance.amax();
        let asymmetry = (covariance - covariance.transpose()).amax();
        let spectrum = Spectrum::new(covariance, tol::COVARIANCE_RANK_REL);
        let raw_min = spectrum.smallest_raw;
        let limit = tol::COVARIANCE_ASYMMETRY_REL * scale;
        if asymmetry > limit || raw_min < -limit {
            return Err(StatsError::NotCovariance {
                index,
                asymmetry,
                min_eigenvalue: raw_min,
            });
        }
        Ok(Self {
            matrix: spectrum.pseudo_inverse(),
            rank: spectrum.rank,
        })
    }

    /// The information matrix `W`.
    pub fn matrix(&self) -> &Matrix6<f64> {
        &self.matrix
    }

    /// The number of observable directions `r = rank(W)`.
    pub fn rank(&self) -> usize {
        self.rank
    }

    /// The squared Mahalanobis length `xᵀ W x` (chi-square with `rank` dof when `x ~ N(0, P)`).
    pub fn mahalanobis2(&self, x: &Vector6<f64>) -> f64 {
        x.dot(&(self.matrix * x))
    }
}

/// Pseudo-inverse and rank of a sum of information matrices, with the floor
/// [`tol::INFORMATION_SUM_RANK_REL`].
pub fn information_sum_spectrum(sum: &Matrix6<f64>) -> Spectrum {
    Spectrum::new(sum, tol::INFORMATION_SUM_RANK_REL)
}
