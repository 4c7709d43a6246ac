//! Quantiles and tail probabilities of the chi-square, F, normal and Student t distributions.
//!
//! Thin, validated wrappers over statrs 0.19: every argument is checked (so nothing panics and
//! nothing returns NaN), tail p-values come from the survival function `sf` (never `1 - cdf`,
//! which loses all precision in the far tail), and upper-tail chi-square quantiles for tiny
//! probabilities are solved on the survival function directly.

use statrs::distribution::{ChiSquared, Continuous, ContinuousCDF, FisherSnedecor, StudentsT};

use super::{check_positive, check_probability, StatsError};
use crate::tol;

fn chi_squared(dof: f64) -> Result<ChiSquared, StatsError> {
    check_positive("chi-square degrees of freedom", dof)?;
    ChiSquared::new(dof).map_err(|_| StatsError::InvalidParameter {
        name: "chi-square degrees of freedom",
        value: dof,
        expected: "a finite number greater than 0",
    })
}

fn check_statistic(x: f64) -> Result<f64, StatsError> {
    if x.is_nan() {
        Err(StatsError::InvalidParameter {
            name: "test statistic",
            value: x,
            expected: "a number (not NaN)",
        })
    } else {
        Ok(x)
    }
}

/// Chi-square distribution function `P(X <= x)`, `X ~ chi2(dof)`.
pub fn chi2_cdf(x: f64, dof: f64) -> Result<f64, StatsError> {
    let dist = chi_squared(dof)?;
    Ok(if check_statistic(x)? <= 0.0 {
        0.0
    } else {
        dist.cdf(x)
    })
}

/// Chi-square survival function (upper-tail p-value) `P(X > x)`, `X ~ chi2(dof)`.
pub fn chi2_sf(x: f64, dof: f64) -> Result<f64, StatsError> {
    let dist = chi_squared(dof)?;
    Ok(if check_statistic(x)? <= 0.0 {
        1.0
    } else {
        dist.sf(x)
    })
}

/// Chi-square quantile: the `x` with `P(X <= x) = p`, `X ~ chi2(dof)`.
///
/// For `p > 0.5` the upper tail is solved on the survival function (see
/// [`chi2_upper_quantile`]), so quantiles near 1 keep full relative precision.
pub fn chi2_quantile(p: f64, dof: f64) -> Result<f64, StatsError> {
    check_probability(p)?;
    if p > 0.5 {
        return chi2_upper_quantile(1.0 - p, dof);
    }
    Ok(chi_squared(dof)?.inverse_cdf(p))
}

/// Upper-tail chi-square quantile: the `x` with `P(X > x) = q`.
///
/// Safeguarded Newton iteration on `sf(x) - q` (Press et al., *Numerical Recipes*, `rtsafe`),
/// inside a bracket found by doubling; accurate for `q` down to the smallest normal double.
pub fn chi2_upper_quantile(q: f64, dof: f64) -> Result<f64, StatsError> {
    check_probability(q)?;
    let dist = chi_squared(dof)?;
    if q >= 0.5 {
        return Ok(dist.inverse_cdf(1.0 - q));
    }
    let (mut low, mut high) = (dof.max(1.0) * 0.5, dof.max(1.0) * 2.0);
    while dist.sf(low) < q {
        low *= 0.5;
    }
    while dist.sf(high) > q {
        high *= 2.0;
    }
    let mut x = 0.5 * (low + high);
    for _ in 0..tol::QUANTILE_MAX_ITER {
        let excess = dist.sf(x) - q;
        if excess > 0.0 {
            low = x;
        } else {
            high = x;
        }
        let mut next = x + excess / dist.pdf(x);
        if !next.is_finite() || next <= low || next >= high {
            next = 0.5 * (low + high);
        }
        let converged = (next - x).abs() <= tol::QUANTILE_REL * x.abs();
        x = next;
        if converged || high - low <= tol::QUANTILE_REL * x.abs() {
            break;
        }
    }
    Ok(x)
}

/// Two-sided chi-square interval `[chi2(a/2), chi2(1 - a/2)]` with `a = 1 - level`.
pub fn chi2_interval(level: f64, dof: f64) -> Result<(f64, f64), StatsError> {
    let tail = 0.5 * (1.0 - check_probability(level)?);
    Ok((chi2_quantile(tail, dof)?, chi2_upper_quantile(tail, dof)?))
}

fn fisher(d1: f64, d2: f64) -> Result<FisherSnedecor, StatsError> {
    check_positive("F numerator degrees of freedom", d1)?;
    check_positive("F denominator degrees of freedom", d2)?;
    FisherSnedecor::new(d1, d2).map_err(|_| StatsError::InvalidParameter {
        name: "F degrees of freedom",
        value: d1,
        expected: "finite numbers greater than 0",
    })
}

/// F distribution quantile: the `x` with `P(F <= x) = p`, `F ~ F(d1, d2)`.
pub fn f_quantile(p: f64, d1: f64, d2: f64) -> Result<f64, StatsError> {
    check_probability(p)?;
    Ok(fisher(d1, d2)?.inverse_cdf(p))
}

/// F survival function (upper-tail p-value) `P(F > x)`.
pub fn f_sf(x: f64, d1: f64, d2: f64) -> Result<f64, StatsError> {
    let dist = fisher(d1, d2)?;
    Ok(if check_statistic(x)? <= 0.0 {
        1.0
    } else {
        dist.sf(x)
    })
}

/// Standard normal quantile `z` with `Phi(z) = p`.
pub fn normal_quantile(p: f64) -> Result<f64, StatsError> {
    check_probability(p)?;
    Ok(statrs::distribution::Normal::standard().inverse_cdf(p))
}

/// Standard normal survival function `P(Z > z)`.
pub fn normal_sf(z: f64) -> Result<f64, StatsError> {
    Ok(statrs::distribution::Normal::standard().sf(check_statistic(z)?))
}

fn students_t(dof: f64) -> Result<StudentsT, StatsError> {
    check_positive("t degrees of freedom", dof)?;
    StudentsT::new(0.0, 1.0, dof).map_err(|_| StatsError::InvalidParameter {
        name: "t degrees of freedom",
        value: dof,
        expected: "a finite number greater than 0",
    })
}

/// Student t quantile `t` with `P(T <= t) = p`, `T ~ t(dof)`.
pub fn t_quantile(p: f64, dof: f64) -> Result<f64, StatsError> {
    check_probability(p)?;
    Ok(students_t(dof)?.inverse_cdf(p))
}

/// Student t survival function `P(T > t)`.
pub fn t_sf(t: f64, dof: f64) -> Result<f64, StatsError> {
    Ok(students_t(dof)?.sf(check_statistic(t)?))
}
