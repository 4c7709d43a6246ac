//! Rank-aware information matrices: the pseudo-inverse of a 6x6 covariance and its rank.
//!
//! A pose covariance can be singular (a direction the keypoints cannot observe). The information
//! `W = P⁺` is then zero in that direction, so a test statistic `xᵀ W x` ignores it and counts
//! only `rank(W)` degrees of freedom, instead of being inflated by an arbitrary value there.

use nalgebra::{Matrix6, SymmetricEigen, Vector6};

use super::packed::PackedSym6;
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

/// A frame's information matrix `W = P⁺` (pseudo-inverse of its covariance) and its rank,
/// stored as the 21 entries of its upper triangle (long series keep one per frame).
#[derive(Debug, Clone, PartialEq)]
pub struct Information {
    matrix: PackedSym6,
    rank: u8,
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
        let limit = tol::COVARIANCE_ASYMMETRY_REL * scale;
        if asymmetry <= limit {
            if let Some(inverse) = well_conditioned_inverse(covariance) {
                return Ok(Self {
                    matrix: PackedSym6::from_matrix(&inverse),
                    rank: 6,
                });
            }
        }
        let spectrum = Spectrum::new(covariance, tol::COVARIANCE_RANK_REL);
        let raw_min = spectrum.smallest_raw;
        if asymmetry > limit || raw_min < -limit {
            return Err(StatsError::NotCovariance {
                index,
                asymmetry,
                min_eigenvalue: raw_min,
            });
        }
        Ok(Self {
            matrix: PackedSym6::from_matrix(&spectrum.pseudo_inverse()),
            rank: spectrum.rank as u8,
        })
    }

    /// The information matrix `W`.
    pub fn matrix(&self) -> Matrix6<f64> {
        self.matrix.to_matrix()
    }

    /// The packed information matrix (21 upper-triangle entries).
    pub fn packed(&self) -> &PackedSym6 {
        &self.matrix
    }

    /// Diagonal entry `W_jj` (zero for an axis the frame does not observe at all).
    pub fn diagonal(&self, j: usize) -> f64 {
        self.matrix.get(j, j)
    }

    /// The number of observable directions `r = rank(W)`.
    pub fn rank(&self) -> usize {
        usize::from(self.rank)
    }

    /// The squared Mahalanobis length `xᵀ W x` (chi-square with `rank` dof when `x ~ N(0, P)`).
    pub fn mahalanobis2(&self, x: &Vector6<f64>) -> f64 {
        self.matrix.quadratic(x)
    }
}

/// The inverse of a covariance whose pseudo-inverse provably is its inverse, without an
/// eigen-decomposition: the Cholesky factorisation of the symmetric part succeeds (positive
/// definite) and `tr(P) · tr(P⁻¹)` is below [`tol::COVARIANCE_FAST_CONDITION`]. Since
/// `λ_max <= tr(P)` and `λ_min >= 1/tr(P⁻¹)`, every eigenvalue then lies far above the rank floor
/// [`tol::COVARIANCE_RANK_REL`] times the largest, so the eigen path would keep all six and return
/// the same matrix up to rounding. `None` sends the covariance down the eigen path.
fn well_conditioned_inverse(covariance: &Matrix6<f64>) -> Option<Matrix6<f64>> {
    let sym = (covariance + covariance.transpose()) * 0.5;
    let inverse = sym.cholesky()?.inverse();
    let bound = sym.trace() * inverse.trace();
    (bound.is_finite() && bound <= tol::COVARIANCE_FAST_CONDITION)
        .then(|| (inverse + inverse.transpose()) * 0.5)
}

/// Pseudo-inverse and rank of a sum of information matrices, with the floor
/// [`tol::INFORMATION_SUM_RANK_REL`].
pub fn information_sum_spectrum(sum: &Matrix6<f64>) -> Spectrum {
    Spectrum::new(sum, tol::INFORMATION_SUM_RANK_REL)
}
