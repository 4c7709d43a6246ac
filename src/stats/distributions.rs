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
/// Solved on the distribution function below the median and on the survival function above it
/// (see [`chi2_upper_quantile`]), so both far tails keep full relative precision.
pub fn chi2_quantile(p: f64, dof: f64) -> Result<f64, StatsError> {
    check_probability(p)?;
    if p > 0.5 {
        return chi2_upper_quantile(1.0 - p, dof);
    }
    let dist = chi_squared(dof)?;
    Ok(solve_tail(&dist, p, Tail::Lower))
}

/// Upper-tail chi-square quantile: the `x` with `P(X > x) = q`.
pub fn chi2_upper_quantile(q: f64, dof: f64) -> Result<f64, StatsError> {
    check_probability(q)?;
    if q > 0.5 {
        return chi2_quantile(1.0 - q, dof);
    }
    let dist = chi_squared(dof)?;
    Ok(solve_tail(&dist, q, Tail::Upper))
}

#[derive(Clone, Copy, PartialEq)]
enum Tail {
    Lower,
    Upper,
}

/// Solves `cdf(x) = prob` (lower tail) or `sf(x) = prob` (upper tail) for a distribution on
/// `(0, ∞)`: a bracket found by halving and doubling, then Newton steps safeguarded by geometric
/// bisection of the bracket (Press et al., *Numerical Recipes*, `rtsafe`; bisection in `log x`
/// because lower-tail quantiles of small degrees of freedom lie many decades below 1).
fn solve_tail(dist: &ChiSquared, prob: f64, tail: Tail) -> f64 {
    // Signed so that the residual increases with x in both tails.
    let residual = |x: f64| match tail {
        Tail::Lower => dist.cdf(x) - prob,
        Tail::Upper => prob - dist.sf(x),
    };
    let (mut low, mut high) = (1.0, 1.0);
    while residual(low) > 0.0 && low > f64::MIN_POSITIVE {
        low *= 0.5;
    }
    while residual(high) < 0.0 && high < f64::MAX / 2.0 {
        high *= 2.0;
    }
    let mut x = (low * high).sqrt();
    for _ in 0..tol::QUANTILE_MAX_ITER {
        let r = residual(x);
        if r > 0.0 {
            high = x;
        } else {
            low = x;
        }
        let mut next = x - r / dist.pdf(x);
        if !next.is_finite() || next <= low || next >= high {
            next = (low * high).sqrt();
        }
        let converged = (next - x).abs() <= tol::QUANTILE_REL * x;
        x = next;
        if converged || high - low <= tol::QUANTILE_REL * x {
            break;
        }
    }
    x
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

/// Binomial distribution function `P(X <= k)` for `X ~ Binomial(n, p)`.
pub fn binomial_cdf(k: u64, n: u64, p: f64) -> Result<f64, StatsError> {
    if !(0.0..=1.0).contains(&p) {
        return Err(StatsError::InvalidParameter {
            name: "binomial success probability",
            value: p,
            expected: "a probability from 0 to 1",
        });
    }
    let binomial =
        statrs::distribution::Binomial::new(p, n).map_err(|_| StatsError::InvalidParameter {
            name: "binomial success probability",
            value: p,
            expected: "a probability from 0 to 1",
        })?;
    Ok(statrs::distribution::DiscreteCDF::cdf(&binomial, k))
}
