//! Multivariate comparison tests for two sessions: Hotelling T² (one and two samples), the Wald
//! chi-square of a difference with known covariances, and per-axis TOST equivalence.

use nalgebra::{DMatrix, DVector, Matrix6, Vector6};

use super::distributions::{
    chi2_sf, f_quantile, f_sf, normal_quantile, normal_sf, t_quantile, t_sf,
};
use super::information::information_sum_spectrum;
use super::{check_positive, check_probability, StatsError};
use crate::tol;

/// A Hotelling T² test with its F conversion.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct HotellingTest {
    pub t2: f64,
    /// `F = c · T²` with its degrees of freedom.
    pub f: f64,
    pub df1: f64,
    pub df2: f64,
    pub p_value: f64,
    /// The T² value the statistic must exceed at the requested α.
    pub critical_t2: f64,
}

fn sample_mean(data: &[DVector<f64>]) -> DVector<f64> {
    data.iter()
        .fold(DVector::zeros(data[0].len()), |acc, x| acc + x)
        / data.len() as f64
}

/// Unbiased sample covariance (divisor `n − 1`).
fn sample_covariance(data: &[DVector<f64>], mean: &DVector<f64>) -> DMatrix<f64> {
    let p = mean.len();
    data.iter().fold(DMatrix::zeros(p, p), |acc, x| {
        let d = x - mean;
        acc + &d * d.transpose()
    }) / (data.len() - 1) as f64
}

fn check_samples(data: &[DVector<f64>], needed: usize) -> Result<usize, StatsError> {
    let p = data.first().map_or(0, |x| x.len());
    if p == 0 || data.len() < needed {
        return Err(StatsError::TooFewSamples {
            what: "a Hotelling T² test (more observations than dimensions)",
            needed,
            got: data.len(),
        });
    }
    if let Some(index) = data.iter().position(|x| x.len() != p) {
        return Err(StatsError::LengthMismatch {
            what: "observation dimensions",
            left: p,
            right: data[index].len(),
        });
    }
    if let Some(index) = data.iter().position(|x| x.iter().any(|v| !v.is_finite())) {
        return Err(StatsError::NonFinite {
            index,
            what: "observation",
        });
    }
    Ok(p)
}

/// `dᵀ S⁻¹ d` through a Cholesky factorisation; a singular covariance (up to rounding: a pivot
/// below [`tol::INFORMATION_SUM_RANK_REL`] of the largest) is an input error.
fn quadratic_form(s: DMatrix<f64>, d: &DVector<f64>) -> Result<f64, StatsError> {
    let singular = StatsError::InvalidParameter {
        name: "sample covariance",
        value: 0.0,
        expected: "a positive definite matrix (observations span every dimension)",
    };
    let chol = s.cholesky().ok_or(singular.clone())?;
    let pivots = chol.l_dirty().diagonal().map(|v| v * v);
    if pivots.min() <= tol::INFORMATION_SUM_RANK_REL * pivots.max() {
        return Err(singular);
    }
    Ok(d.dot(&chol.solve(d)))
}

/// The F conversion `F = c T² ~ F(df1, df2)` of a Hotelling statistic.
struct FConversion {
    c: f64,
    df1: f64,
    df2: f64,
}

impl FConversion {
    /// One sample of `n` observations in `p` dimensions: `c = (n − p)/((n − 1) p)`, `F(p, n − p)`.
    fn one_sample(n: usize, p: usize) -> Result<Self, StatsError> {
        if n <= p || p == 0 {
            return Err(StatsError::TooFewSamples {
                what: "a one-sample Hotelling T² (more observations than dimensions)",
                needed: p + 1,
                got: n,
            });
        }
        let (n, p) = (n as f64, p as f64);
        Ok(Self {
            c: (n - p) / ((n - 1.0) * p),
            df1: p,
            df2: n - p,
        })
    }

    /// Two samples: `c = (n1 + n2 − p − 1)/(p (n1 + n2 − 2))`, `F(p, n1 + n2 − p − 1)`.
    fn two_sample(n1: usize, n2: usize, p: usize) -> Result<Self, StatsError> {
        if n1 + n2 < p + 2 || n1 < 2 || n2 < 2 || p == 0 {
            return Err(StatsError::TooFewSamples {
                what: "a two-sample Hotelling T² (n1 + n2 >= p + 2, two per sample)",
                needed: p + 2,
                got: n1 + n2,
            });
        }
        let (total, p) = ((n1 + n2) as f64, p as f64);
        Ok(Self {
            c: (total - p - 1.0) / (p * (total - 2.0)),
            df1: p,
            df2: total - p - 1.0,
        })
    }

    fn critical_t2(&self, alpha: f64) -> Result<f64, StatsError> {
        Ok(f_quantile(1.0 - check_probability(alpha)?, self.df1, self.df2)? / self.c)
    }

    fn test(&self, t2: f64, alpha: f64) -> Result<HotellingTest, StatsError> {
        let f = self.c * t2;
        Ok(HotellingTest {
            t2,
            f,
            df1: self.df1,
            df2: self.df2,
            p_value: f_sf(f, self.df1, self.df2)?,
            critical_t2: self.critical_t2(alpha)?,
        })
    }
}

/// Critical one-sample T² at level α: `(n − 1) p/(n − p) · F_{1−α}(p, n − p)`.
pub fn hotelling_one_sample_critical(n: usize, p: usize, alpha: f64) -> Result<f64, StatsError> {
    FConversion::one_sample(n, p)?.critical_t2(alpha)
}

/// Critical two-sample T² at level α: `p (n1+n2−2)/(n1+n2−p−1) · F_{1−α}(p, n1+n2−p−1)`.
pub fn hotelling_two_sample_critical(
    n1: usize,
    n2: usize,
    p: usize,
    alpha: f64,
) -> Result<f64, StatsError> {
    FConversion::two_sample(n1, n2, p)?.critical_t2(alpha)
}

/// One-sample Hotelling T² of H0: mean = `mu0`: `T² = n (x̄ − μ0)ᵀ S⁻¹ (x̄ − μ0)`, and under H0
/// `T² (n − p)/((n − 1) p) ~ F(p, n − p)` (Hotelling 1931; Johnson & Wichern, *Applied
/// Multivariate Statistical Analysis*, section 5.2).
pub fn hotelling_one_sample(
    data: &[DVector<f64>],
    mu0: &DVector<f64>,
    alpha: f64,
) -> Result<HotellingTest, StatsError> {
    let p = check_samples(data, mu0.len() + 1)?;
    if p != mu0.len() {
        return Err(StatsError::LengthMismatch {
            what: "observation and hypothesised-mean dimensions",
            left: p,
            right: mu0.len(),
        });
    }
    let conversion = FConversion::one_sample(data.len(), p)?;
    let mean = sample_mean(data);
    let d = &mean - mu0;
    let t2 = data.len() as f64 * quadratic_form(sample_covariance(data, &mean), &d)?;
    conversion.test(t2, alpha)
}

/// Two-sample Hotelling T² of H0: equal means, pooled covariance
/// `S_p = ((n1−1)S1 + (n2−1)S2)/(n1+n2−2)`: `T² = n1 n2/(n1+n2) dᵀ S_p⁻¹ d`, and under H0
/// `T² (n1+n2−p−1)/(p (n1+n2−2)) ~ F(p, n1+n2−p−1)` (Johnson & Wichern, section 6.3).
pub fn hotelling_two_sample(
    first: &[DVector<f64>],
    second: &[DVector<f64>],
    alpha: f64,
) -> Result<HotellingTest, StatsError> {
    let p = check_samples(first, 2)?;
    if check_samples(second, 2)? != p {
        return Err(StatsError::LengthMismatch {
            what: "two-sample Hotelling dimensions",
            left: p,
            right: second[0].len(),
        });
    }
    let conversion = FConversion::two_sample(first.len(), second.len(), p)?;
    let (n1, n2) = (first.len() as f64, second.len() as f64);
    let (m1, m2) = (sample_mean(first), sample_mean(second));
    let pooled = (sample_covariance(first, &m1) * (n1 - 1.0)
        + sample_covariance(second, &m2) * (n2 - 1.0))
        / (n1 + n2 - 2.0);
    let t2 = n1 * n2 / (n1 + n2) * quadratic_form(pooled, &(&m1 - &m2))?;
    conversion.test(t2, alpha)
}

/// A Wald chi-square test.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct WaldTest {
    pub statistic: f64,
    /// Rank of the difference's covariance.
    pub dof: usize,
    /// `None` when the difference is not observable in any direction.
    pub p_value: Option<f64>,
}

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
        let spectrum = information_sum_spectrum(c);
        for k in (0..6).filter(|&k| spectrum.values[k] <= 0.0) {
            let v = spectrum.vectors.column(k);
            outside += v * v.transpose();
        }
    }
    Matrix6::identity() - information_sum_spectrum(&outside).range_projector()
}

/// Wald (1943, Trans. AMS 54:426-482) test of H0 `change = 0` for an estimate with covariance
/// `C`, restricted to the observed subspace `Π` ([`observed_projector`]):
/// `W = dᵀ (Π C Π)⁺ d`, `d = Π · change`, chi-square with `rank(Π C Π)` degrees of freedom
/// under H0. Correlated frames are allowed for by `C` itself (an effective covariance).
pub fn wald_on_observed(
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
    let spectrum = information_sum_spectrum(&(projector * covariance * projector));
    let statistic = d.dot(&(spectrum.pseudo_inverse() * d)).max(0.0);
    let dof = spectrum.rank;
    Ok(WaldTest {
        statistic,
        dof,
        p_value: (dof > 0)
            .then(|| chi2_sf(statistic, dof as f64))
            .transpose()?,
    })
}

/// Wald test of H0: `a = b` for independent estimates with covariances `Pa`, `Pb`:
/// [`wald_on_observed`] of `a − b` with covariance `Pa + Pb` on the directions both estimates
/// observe, `range(Pa) ∩ range(Pb)`.
pub fn wald_difference(
    a: &Vector6<f64>,
    cov_a: &Matrix6<f64>,
    b: &Vector6<f64>,
    cov_b: &Matrix6<f64>,
) -> Result<WaldTest, StatsError> {
    if a.iter().chain(b.iter()).any(|v| !v.is_finite()) {
        return Err(StatsError::NonFinite {
            index: 0,
            what: "estimate",
        });
    }
    let projector = observed_projector(&[*cov_a, *cov_b]);
    wald_on_observed(&(a - b), &(cov_a + cov_b), &projector)
}

/// Two one-sided tests (TOST) for equivalence of one quantity within `(−margin, margin)`.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct Equivalence {
    pub estimate: f64,
    /// The `1 − 2α` confidence interval.
    pub interval: (f64, f64),
    /// `max` of the two one-sided p-values.
    pub p_value: f64,
    /// Whether the interval lies inside `(−margin, margin)`.
    pub equivalent: bool,
}

/// Schuirmann's (1987, J. Pharmacokinet. Biopharm. 15:657-680) two one-sided tests at level α:
/// equivalence is declared iff both `H0: θ <= −Δ` and `H0: θ >= Δ` are rejected, i.e. iff the
/// `1 − 2α` interval `estimate ± q_{1−α} · se` lies inside `(−Δ, Δ)`. `q` is Student t with
/// `dof` degrees of freedom, or normal when `dof` is `None`.
pub fn tost(
    estimate: f64,
    standard_error: f64,
    margin: f64,
    alpha: f64,
    dof: Option<f64>,
) -> Result<Equivalence, StatsError> {
    check_positive("standard error", standard_error)?;
    check_positive("equivalence margin", margin)?;
    if !(alpha > 0.0 && alpha < 0.5) {
        return Err(StatsError::InvalidParameter {
            name: "TOST level alpha",
            value: alpha,
            expected: "a number in (0, 0.5) (the interval has level 1 − 2α)",
        });
    }
    if !estimate.is_finite() {
        return Err(StatsError::NonFinite {
            index: 0,
            what: "estimate",
        });
    }
    let q = match dof {
        Some(df) => t_quantile(1.0 - alpha, df)?,
        None => normal_quantile(1.0 - alpha)?,
    };
    let sf = |t: f64| match dof {
        Some(df) => t_sf(t, df),
        None => normal_sf(t),
    };
    // H0: θ <= −Δ is rejected for large (est + Δ)/se, H0: θ >= Δ for large (Δ − est)/se.
    let p_value =
        sf((estimate + margin) / standard_error)?.max(sf((margin - estimate) / standard_error)?);
    let interval = (estimate - q * standard_error, estimate + q * standard_error);
    Ok(Equivalence {
        estimate,
        interval,
        p_value,
        equivalent: interval.0 > -margin && interval.1 < margin,
    })
}
