//! The two tests of the maintenance gate on a mount change with a known (effective) covariance:
//! the rank-aware Wald chi-square of "changed at all" and Schuirmann's two one-sided tests of
//! "equivalent within a tolerance", one axis at a time.
//!
//! Plain numbers in: no cameras, no files. (Kept beside the job until the crate's shared
//! multivariate statistics provide the same two tests.)

use nalgebra::{Matrix6, Vector6};
use serde::Serialize;

use crate::stats::distributions::{chi2_sf, normal_quantile, normal_sf};
use crate::stats::information::Spectrum;
use crate::stats::StatsError;
use crate::tol;

/// Projector onto the directions every covariance observes: the intersection of their ranges.
///
/// A covariance here is the pseudo-inverse of an information matrix, so a zero eigenvalue
/// marks a direction the data do not observe (infinite variance), not a perfectly known one.
/// The complement of the intersection is spanned by the null spaces, so
/// `Π = I − proj(Σ_i (I − proj(range C_i)))`.
pub fn observed_projector(covariances: &[Matrix6<f64>]) -> Matrix6<f64> {
    // Built from the null eigenvectors themselves (not `I − projector`, whose rounding of
    // about 1e-16 would count as spurious directions).
    let mut outside = Matrix6::zeros();
    for c in covariances {
        let spectrum = Spectrum::new(c, tol::INFORMATION_SUM_RANK_REL);
        for k in (0..6).filter(|&k| spectrum.values[k] <= 0.0) {
            let v = spectrum.vectors.column(k);
            outside += v * v.transpose();
        }
    }
    Matrix6::identity() - Spectrum::new(&outside, tol::INFORMATION_SUM_RANK_REL).range_projector()
}

/// Whether each axis lies in the observed subspace (up to [`tol::AXIS_OBSERVABLE_RESIDUAL`]).
pub fn observed_axes(projector: &Matrix6<f64>) -> [bool; 6] {
    std::array::from_fn(|k| 1.0 - projector[(k, k)] <= tol::AXIS_OBSERVABLE_RESIDUAL)
}

/// A Wald chi-square test of "no change".
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct WaldTest {
    pub statistic: f64,
    /// Observed directions (the rank of the change's covariance there).
    pub dof: usize,
    /// `None` when no direction is observed.
    pub p_value: Option<f64>,
}

/// Wald (1943, Trans. AMS 54:426-482) test of H0 `change = 0` for an estimate with covariance
/// `C`, restricted to the observed subspace `Π`: `W = dᵀ (Π C Π)⁺ d`, `d = Π · change`,
/// chi-square with `rank(Π C Π)` degrees of freedom under H0. Correlated frames are allowed for
/// by `C` itself (the effective covariance, inflated for them).
pub fn wald_no_change(
    change: &Vector6<f64>,
    covariance: &Matrix6<f64>,
    projector: &Matrix6<f64>,
) -> Result<WaldTest, StatsError> {
    if change
        .iter()
        .chain(covariance.iter())
        .any(|v| !v.is_finite())
    {
        return Err(StatsError::NonFinite {
            index: 0,
            what: "change or its covariance",
        });
    }
    let d = projector * change;
    let spectrum = Spectrum::new(
        &(projector * covariance * projector),
        tol::INFORMATION_SUM_RANK_REL,
    );
    let statistic = d.dot(&(spectrum.pseudo_inverse() * d)).max(0.0);
    let dof = spectrum.rank;
    let p_value = if dof > 0 {
        Some(chi2_sf(statistic, dof as f64)?)
    } else {
        None
    };
    Ok(WaldTest {
        statistic,
        dof,
        p_value,
    })
}

/// Two one-sided tests on one axis.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OneSidedPair {
    /// The `1 − 2α` interval `estimate ± z_{1−α} se`.
    pub interval: (f64, f64),
    /// The larger of the two one-sided p-values.
    pub p_value: f64,
    /// Both one-sided nulls rejected: the interval lies inside `(−margin, margin)`.
    pub equivalent: bool,
}

/// Schuirmann's (1987, J. Pharmacokinet. Biopharm. 15:657-680) two one-sided tests at level α
/// with a normal reference distribution: reject `θ ≤ −Δ` when `(est + Δ)/se > z_{1−α}` and
/// `θ ≥ Δ` when `(Δ − est)/se > z_{1−α}`; both reject exactly when the `1 − 2α` interval lies
/// inside `(−Δ, Δ)`. The normal quantile is used because `se` comes from an effective
/// covariance estimated from hundreds of frames (its own error is a few percent).
pub fn two_one_sided(
    estimate: f64,
    standard_error: f64,
    margin: f64,
    alpha: f64,
) -> Result<OneSidedPair, StatsError> {
    for (name, value) in [("standard error", standard_error), ("margin", margin)] {
        if !(value.is_finite() && value > 0.0) {
            return Err(StatsError::InvalidParameter {
                name,
                value,
                expected: "a finite number greater than 0",
            });
        }
    }
    if !estimate.is_finite() {
        return Err(StatsError::NonFinite {
            index: 0,
            what: "estimate",
        });
    }
    if !(alpha > 0.0 && alpha < 0.5) {
        return Err(StatsError::InvalidParameter {
            name: "alpha",
            value: alpha,
            expected: "a level in (0, 0.5)",
        });
    }
    let z = normal_quantile(1.0 - alpha)?;
    let interval = (estimate - z * standard_error, estimate + z * standard_error);
    let lower = normal_sf((estimate + margin) / standard_error)?;
    let upper = normal_sf((margin - estimate) / standard_error)?;
    Ok(OneSidedPair {
        interval,
        p_value: lower.max(upper),
        equivalent: interval.0 > -margin && interval.1 < margin,
    })
}
