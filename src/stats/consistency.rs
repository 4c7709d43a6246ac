//! Chi-square consistency tests: per frame, over sliding windows, the pixel noise behind the
//! reprojection residuals, excess scatter within a segment, and NEES acceptance intervals.

use nalgebra::{Matrix6, Vector6};
use rayon::prelude::*;

use super::distributions::{chi2_interval, chi2_quantile, chi2_sf, chi2_upper_quantile};
use super::information::{information_sum_spectrum, Information};
use super::packed::PackedSym6;
use super::series::InformationSummary;
use super::{check_positive, check_probability, StatsError};

/// A chi-square statistic with its degrees of freedom and upper-tail p-value.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct ChiSquareTest {
    pub statistic: f64,
    pub dof: usize,
    /// `P(chi2_dof > statistic)`; `None` when there are no degrees of freedom.
    pub p_value: Option<f64>,
}

impl ChiSquareTest {
    /// Builds the test; zero degrees of freedom give no p-value.
    pub fn new(statistic: f64, dof: usize) -> Self {
        let p_value = if dof == 0 {
            None
        } else {
            chi2_sf(statistic, dof as f64).ok()
        };
        Self {
            statistic,
            dof,
            p_value,
        }
    }
}

/// Per-frame consistency with the nominal: `d²_t = x_tᵀ W_t x_t ~ chi2(r_t)` when the mount is
/// nominal and the covariance is right (`W_t = P_t⁺`, `r_t = rank W_t`; an unobservable direction
/// adds nothing to either).
pub fn frame_consistency(deviation: &Vector6<f64>, information: &Information) -> ChiSquareTest {
    ChiSquareTest::new(information.mahalanobis2(deviation), information.rank())
}

/// Sliding-window consistency: for each window of `window` consecutive frames, the sum of the
/// per-frame `d²` against `chi2(Σ r_t)` (independent frames). Entry `i` covers frames
/// `i..i+window`.
pub fn windowed_consistency(
    frames: &[ChiSquareTest],
    window: usize,
) -> Result<Vec<ChiSquareTest>, StatsError> {
    if window == 0 || window > frames.len() {
        return Err(StatsError::TooFewSamples {
            what: "a consistency window",
            needed: window.max(1),
            got: frames.len(),
        });
    }
    let mut statistic: f64 = frames[..window].iter().map(|f| f.statistic).sum();
    let mut dof: usize = frames[..window].iter().map(|f| f.dof).sum();
    let mut sums = Vec::with_capacity(frames.len() - window + 1);
    sums.push((statistic, dof));
    for i in window..frames.len() {
        statistic += frames[i].statistic - frames[i - window].statistic;
        dof = dof + frames[i].dof - frames[i - window].dof;
        sums.push((statistic.max(0.0), dof));
    }
    // The running sums are sequential; the tail probabilities are independent.
    Ok(sums
        .into_par_iter()
        .map(|(statistic, dof)| ChiSquareTest::new(statistic, dof))
        .collect())
}

/// The pixel noise implied by reprojection residuals.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct PixelNoiseEstimate {
    /// The sigma the residuals were normalised with (px).
    pub assumed_px: f64,
    /// `assumed · √(Σχ² / Σdof)` (px).
    pub estimated_px: f64,
    /// Two-sided interval for the true sigma (px).
    pub interval_px: (f64, f64),
    /// `Σχ²` and `Σdof`.
    pub chi2_sum: f64,
    pub dof: usize,
    /// Two-sided p-value of "the assumed sigma is right": `2 min(P(X <= Σχ²), P(X >= Σχ²))`,
    /// `X ~ chi2(Σdof)`.
    pub p_value: f64,
}

/// Estimates the pixel noise from per-frame reprojection chi-square values `χ²_t` (residuals
/// normalised by `assumed_px`) and their degrees of freedom (`2n − 6` per pose).
///
/// If the true sigma is `σ`, `Σχ² · assumed²/σ² ~ chi2(D)` with `D = Σdof` (independent frames),
/// so `σ̂ = assumed·√(Σχ²/D)` and the `level` interval is
/// `assumed·√(Σχ²/chi2_D(1−a/2)) <= σ <= assumed·√(Σχ²/chi2_D(a/2))`, `a = 1 − level`.
pub fn estimate_pixel_noise(
    chi2: &[f64],
    dof: &[usize],
    assumed_px: f64,
    level: f64,
) -> Result<PixelNoiseEstimate, StatsError> {
    check_positive("assumed pixel sigma", assumed_px)?;
    check_probability(level)?;
    if chi2.len() != dof.len() {
        return Err(StatsError::LengthMismatch {
            what: "reprojection chi-square values and degrees of freedom",
            left: chi2.len(),
            right: dof.len(),
        });
    }
    if let Some(index) = chi2.iter().position(|c| !c.is_finite() || *c < 0.0) {
        return Err(StatsError::NonFinite {
            index,
            what: "reprojection chi-square (must be finite and >= 0)",
        });
    }
    let total_dof: usize = dof.iter().sum();
    if total_dof == 0 {
        return Err(StatsError::TooFewSamples {
            what: "pixel-noise estimation (residual degrees of freedom)",
            needed: 1,
            got: 0,
        });
    }
    let sum: f64 = chi2.iter().sum();
    let d = total_dof as f64;
    let (lo_q, hi_q) = chi2_interval(level, d)?;
    let lower_tail = 1.0 - chi2_sf(sum, d)?;
    Ok(PixelNoiseEstimate {
        assumed_px,
        estimated_px: assumed_px * (sum / d).sqrt(),
        interval_px: (
            assumed_px * (sum / hi_q).sqrt(),
            assumed_px * (sum / lo_q).sqrt(),
        ),
        chi2_sum: sum,
        dof: total_dof,
        p_value: (2.0 * lower_tail.min(chi2_sf(sum, d)?)).min(1.0),
    })
}

/// Excess scatter of a segment around its own mean.
#[derive(Debug, Clone, PartialEq, serde::Serialize)]
pub struct ExcessScatter {
    /// `Σ (x_i − μ̂)ᵀ W_i (x_i − μ̂)` against `chi2(Σ r_i − rank Σ W_i)`.
    pub test: ChiSquareTest,
    /// `statistic / dof`: how many times the predicted variance the data scatter (1 when the
    /// covariance explains the scatter); `None` without degrees of freedom.
    pub variance_factor: Option<f64>,
    /// Per axis: empirical variance about the mean over the mean predicted variance `P_jj`
    /// (`None` where an axis is not observed in every frame).
    pub axis_variance_factor: [Option<f64>; 6],
}

/// Tests whether a segment scatters more than its covariances predict (a loose mount or
/// vibration): the whitened residual sum about the information-weighted mean
/// `μ̂ = (Σ W_i)⁺ Σ W_i x_i` is `chi2(Σ r_i − rank Σ W_i)` for white noise with the predicted
/// covariance (one mean estimated in the observable directions).
pub fn excess_scatter(
    x: &[Vector6<f64>],
    information: &[Information],
    covariance: &[Matrix6<f64>],
) -> Result<ExcessScatter, StatsError> {
    let variances: Vec<Vector6<f64>> = covariance.iter().map(|p| p.diagonal()).collect();
    excess_scatter_with_variances(x, information, &variances)
}

/// [`excess_scatter`] from the per-frame variances (the covariance diagonals) alone, which is all
/// of the covariance the per-axis factors use.
pub fn excess_scatter_with_variances(
    x: &[Vector6<f64>],
    information: &[Information],
    variances: &[Vector6<f64>],
) -> Result<ExcessScatter, StatsError> {
    if x.is_empty() || x.len() != information.len() || x.len() != variances.len() {
        return Err(StatsError::LengthMismatch {
            what: "deviations, information matrices and covariances",
            left: x.len(),
            right: information.len().min(variances.len()),
        });
    }
    Ok(scatter(
        x,
        variances,
        |i| information[i].packed(),
        |i| InformationSummary::of(&information[i]),
    ))
}

/// [`excess_scatter_with_variances`] with each frame's information as a packed matrix
/// `information[i]` and its rank and observed axes `summaries[i]` (e.g. a matrix formed again
/// from a root, while the rank and axes were recorded from the original).
pub fn excess_scatter_packed(
    x: &[Vector6<f64>],
    information: &[PackedSym6],
    summaries: &[InformationSummary],
    variances: &[Vector6<f64>],
) -> Result<ExcessScatter, StatsError> {
    let n = x.len();
    if n == 0 || information.len() != n || summaries.len() != n || variances.len() != n {
        return Err(StatsError::LengthMismatch {
            what: "deviations, information matrices, their ranks and covariances",
            left: n,
            right: information.len().min(summaries.len()).min(variances.len()),
        });
    }
    Ok(scatter(x, variances, |i| &information[i], |i| summaries[i]))
}

/// The excess scatter of non-empty samples of equal lengths, frame `i`'s information being
/// `matrix(i)` with rank and observed axes `summary(i)`.
fn scatter<'w>(
    x: &[Vector6<f64>],
    variances: &[Vector6<f64>],
    matrix: impl Fn(usize) -> &'w PackedSym6,
    summary: impl Fn(usize) -> InformationSummary,
) -> ExcessScatter {
    let (a, b) =
        x.iter()
            .enumerate()
            .fold((Matrix6::zeros(), Vector6::zeros()), |(a, b), (i, xi)| {
                let w = matrix(i).to_matrix();
                (a + w, b + w * xi)
            });
    let spectrum = information_sum_spectrum(&a);
    let mean = spectrum.pseudo_inverse() * b;
    let statistic: f64 = x
        .iter()
        .enumerate()
        .map(|(i, xi)| matrix(i).quadratic(&(xi - mean)))
        .sum();
    let dof = (0..x.len()).map(|i| summary(i).rank()).sum::<usize>() - spectrum.rank;
    let test = ChiSquareTest::new(statistic, dof);
    let observed = std::array::from_fn(|j| (0..x.len()).all(|i| summary(i).observes(j)));
    ExcessScatter {
        variance_factor: (dof > 0).then(|| statistic / dof as f64),
        axis_variance_factor: axis_factors(x, observed, variances, &mean),
        test,
    }
}

fn axis_factors(
    x: &[Vector6<f64>],
    observed: [bool; 6],
    variances: &[Vector6<f64>],
    mean: &Vector6<f64>,
) -> [Option<f64>; 6] {
    let n = x.len();
    std::array::from_fn(|j| {
        let predicted: f64 = variances.iter().map(|p| p[j]).sum::<f64>() / n as f64;
        (observed[j] && n > 1 && predicted > 0.0).then(|| {
            let empirical: f64 = x.iter().map(|xi| (xi[j] - mean[j]).powi(2)).sum::<f64>();
            empirical / (n - 1) as f64 / predicted
        })
    })
}

/// Two-sided acceptance interval for the mean NEES of `runs` independent runs of an
/// `n_x`-dimensional estimate: `[chi2_{N n_x}(a/2)/N, chi2_{N n_x}(1−a/2)/N]`, `a = 1 − level`
/// (Bar-Shalom, Li & Kirubarajan 2001, *Estimation with Applications to Tracking and
/// Navigation*, section 5.4: `N ε̄ ~ chi2(N n_x)`).
pub fn nees_interval(n_x: usize, runs: usize, level: f64) -> Result<(f64, f64), StatsError> {
    if n_x == 0 || runs == 0 {
        return Err(StatsError::TooFewSamples {
            what: "a NEES interval (dimension and runs)",
            needed: 1,
            got: n_x.min(runs),
        });
    }
    let dof = (n_x * runs) as f64;
    let tail = 0.5 * (1.0 - check_probability(level)?);
    let n = runs as f64;
    Ok((
        chi2_quantile(tail, dof)? / n,
        chi2_upper_quantile(tail, dof)? / n,
    ))
}

/// A mean-NEES consistency check.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize)]
pub struct NeesTest {
    pub mean_nees: f64,
    pub interval: (f64, f64),
    /// Whether the mean lies inside the interval.
    pub consistent: bool,
}

/// Mean NEES `ε̄ = (1/N) Σ x̃_iᵀ P_i⁺ x̃_i` of estimation errors with their covariances, checked
/// against [`nees_interval`] (all errors must have the same rank `n_x`).
pub fn nees_test(
    errors: &[Vector6<f64>],
    information: &[Information],
    level: f64,
) -> Result<NeesTest, StatsError> {
    if errors.is_empty() || errors.len() != information.len() {
        return Err(StatsError::LengthMismatch {
            what: "estimation errors and their information matrices",
            left: errors.len(),
            right: information.len(),
        });
    }
    let n_x = information[0].rank();
    if let Some(index) = information.iter().position(|w| w.rank() != n_x) {
        return Err(StatsError::InvalidParameter {
            name: "NEES dimension (rank of the covariance)",
            value: information[index].rank() as f64,
            expected: "the same rank in every run",
        });
    }
    let mean_nees = errors
        .iter()
        .zip(information)
        .map(|(e, w)| w.mahalanobis2(e))
        .sum::<f64>()
        / errors.len() as f64;
    let interval = nees_interval(n_x, errors.len(), level)?;
    Ok(NeesTest {
        mean_nees,
        interval,
        consistent: mean_nees >= interval.0 && mean_nees <= interval.1,
    })
}
