//! A deviation series as the statistics see it: validated samples, rank-aware information, one
//! common whitening, and the effective (noise-inflated) information of every frame.
//!
//! Whitening once with the mean information `W̄ = L̄ᵀL̄` makes all axes commensurate (mm and
//! degrees) and, when every frame has the same information, turns the information-weighted
//! Gaussian cost into the plain squared-error cost of the whitened samples (O(d) per segment).

use nalgebra::{Matrix6, Vector6};

use super::cost::{InformationCost, L2Cost, SegmentCost};
use super::information::{information_sum_spectrum, Information, Spectrum};
use super::StatsError;
use crate::tol;

/// One solved frame: its 6-vector deviation (any units, e.g. mm and degrees) and covariance.
#[derive(Debug, Clone, PartialEq)]
pub struct DeviationSample {
    pub frame: i64,
    pub time_s: f64,
    pub deviation: Vector6<f64>,
    /// Covariance of the deviation; may be singular (unobservable directions).
    pub covariance: Matrix6<f64>,
}

/// A validated deviation series with each frame's information `W_t = P_t⁺`.
#[derive(Debug, Clone)]
pub struct DeviationSeries {
    frames: Vec<i64>,
    times_s: Vec<f64>,
    deviations: Vec<Vector6<f64>>,
    covariances: Vec<Matrix6<f64>>,
    information: Vec<Information>,
}

impl DeviationSeries {
    /// Validates the samples: finite values, frame numbers strictly increasing, covariances
    /// symmetric positive semi-definite.
    pub fn new(samples: &[DeviationSample]) -> Result<Self, StatsError> {
        let mut series = Self {
            frames: Vec::with_capacity(samples.len()),
            times_s: Vec::with_capacity(samples.len()),
            deviations: Vec::with_capacity(samples.len()),
            covariances: Vec::with_capacity(samples.len()),
            information: Vec::with_capacity(samples.len()),
        };
        for (index, s) in samples.iter().enumerate() {
            if let Some(&previous) = series.frames.last() {
                if s.frame <= previous {
                    return Err(StatsError::FramesNotIncreasing {
                        index,
                        frame: s.frame,
                        previous,
                    });
                }
            }
            if !s.time_s.is_finite() || s.deviation.iter().any(|v| !v.is_finite()) {
                return Err(StatsError::NonFinite {
                    index,
                    what: "time or deviation",
                });
            }
            series
                .information
                .push(Information::from_covariance(&s.covariance, index)?);
            series.frames.push(s.frame);
            series.times_s.push(s.time_s);
            series.deviations.push(s.deviation);
            series.covariances.push(s.covariance);
        }
        Ok(series)
    }

    pub fn len(&self) -> usize {
        self.frames.len()
    }

    pub fn is_empty(&self) -> bool {
        self.frames.is_empty()
    }

    pub fn frames(&self) -> &[i64] {
        &self.frames
    }

    pub fn times_s(&self) -> &[f64] {
        &self.times_s
    }

    pub fn deviations(&self) -> &[Vector6<f64>] {
        &self.deviations
    }

    pub fn covariances(&self) -> &[Matrix6<f64>] {
        &self.covariances
    }

    pub fn information(&self) -> &[Information] {
        &self.information
    }
}

/// The common whitening `z = L̄ (x − c)` with `W̄ = L̄ᵀL̄` the mean information (rows beyond
/// its rank are zero) and `c` the overall information-weighted mean (for numerical range only).
#[derive(Debug, Clone, PartialEq)]
pub struct CommonWhitening {
    /// Rank of the mean information: the number of active whitened coordinates.
    pub dim: usize,
    /// `L̄` (6x6, rows `dim..` zero).
    pub to_whitened: Matrix6<f64>,
    /// `L̄⁺` (columns `dim..` zero).
    pub from_whitened: Matrix6<f64>,
    /// `c`.
    pub centre: Vector6<f64>,
}

impl CommonWhitening {
    /// Builds the whitening of a series; fails when nothing is observable.
    pub fn new(series: &DeviationSeries) -> Result<Self, StatsError> {
        let n = series.len().max(1) as f64;
        let (sum, weighted) = series
            .information
            .iter()
            .zip(&series.deviations)
            .fold((Matrix6::zeros(), Vector6::zeros()), |(a, b), (w, x)| {
                (a + w.matrix(), b + w.matrix() * x)
            });
        let spectrum = information_sum_spectrum(&(sum / n));
        if spectrum.rank == 0 {
            return Err(StatsError::Unobservable {
                what: "the deviation series",
            });
        }
        let mut to_whitened = Matrix6::zeros();
        let mut from_whitened = Matrix6::zeros();
        let active = (0..6).filter(|&k| spectrum.values[k] > 0.0);
        for (row, k) in active.enumerate() {
            let v = spectrum.vectors.column(k);
            let root = spectrum.values[k].sqrt();
            to_whitened.set_row(row, &(v.transpose() * root));
            from_whitened.set_column(row, &(v / root));
        }
        Ok(Self {
            dim: spectrum.rank,
            to_whitened,
            from_whitened,
            centre: information_sum_spectrum(&sum).pseudo_inverse() * weighted,
        })
    }

    /// `z = L̄ (x − c)`.
    pub fn whiten(&self, x: &Vector6<f64>) -> Vector6<f64> {
        self.to_whitened * (x - self.centre)
    }

    /// An information matrix in whitened coordinates, `L̄⁺ᵀ W L̄⁺`.
    pub fn information_in_whitened(&self, w: &Matrix6<f64>) -> Matrix6<f64> {
        self.from_whitened.transpose() * w * self.from_whitened
    }

    /// A whitened-coordinate information back in the original coordinates, `L̄ᵀ Ω L̄`.
    pub fn information_in_original(&self, omega: &Matrix6<f64>) -> Matrix6<f64> {
        self.to_whitened.transpose() * omega * self.to_whitened
    }
}

/// The series under the effective information: whitened samples and, per frame, the information
/// after the noise inflation `Γ`: `Ω̃_t = (Ω_t^{+1/2} Γ Ω_t^{+1/2})⁺` (equal to `Γ⁻¹` for a frame
/// with the mean information; an unobservable direction stays unobservable).
#[derive(Debug, Clone)]
pub struct EffectiveModel {
    pub whitening: CommonWhitening,
    pub z: Vec<Vector6<f64>>,
    /// `Ω_t` (nominal, whitened coordinates).
    pub nominal: Vec<Matrix6<f64>>,
    /// Whether every frame has the mean information (then `Ω̃_t = Γ⁻¹` for all `t`).
    pub common: bool,
    /// `Ω̃_t`.
    pub effective: Vec<Matrix6<f64>>,
}

impl EffectiveModel {
    /// Whitens a series (no inflation yet: `Γ = I`).
    pub fn new(series: &DeviationSeries) -> Result<Self, StatsError> {
        let whitening = CommonWhitening::new(series)?;
        let z: Vec<Vector6<f64>> = series
            .deviations
            .iter()
            .map(|x| whitening.whiten(x))
            .collect();
        let nominal: Vec<Matrix6<f64>> = series
            .information
            .iter()
            .map(|w| whitening.information_in_whitened(w.matrix()))
            .collect();
        let identity = active_identity(whitening.dim);
        let limit = tol::COMMON_INFORMATION_REL * (whitening.dim as f64).sqrt();
        let common = nominal.iter().all(|o| (o - identity).norm() <= limit);
        Ok(Self {
            effective: nominal.clone(),
            whitening,
            z,
            nominal,
            common,
        })
    }

    /// Applies a noise inflation `Γ` (whitened coordinates).
    pub fn inflate(&mut self, inflation: &Matrix6<f64>) {
        if self.common {
            let inverse = Spectrum::new(inflation, 0.0).pseudo_inverse();
            self.effective.iter_mut().for_each(|e| *e = inverse);
            return;
        }
        for (e, omega) in self.effective.iter_mut().zip(&self.nominal) {
            let root = Spectrum::new(omega, tol::INFORMATION_SUM_RANK_REL).inverse_sqrt();
            let covariance = root * inflation * root;
            *e = Spectrum::new(&covariance, tol::INFORMATION_SUM_RANK_REL).pseudo_inverse();
        }
    }

    /// Frames whose nominal information has the full rank of the series (others break the
    /// windows of the noise estimate: their unobserved components are arbitrary).
    pub fn regular(&self) -> Vec<bool> {
        let dim = self.whitening.dim;
        self.nominal
            .iter()
            .map(|o| Spectrum::new(o, tol::INFORMATION_SUM_RANK_REL).rank == dim)
            .collect()
    }

    /// The segment cost under the effective information.
    pub fn cost(&self) -> Result<EffectiveCost, StatsError> {
        if self.common {
            Ok(EffectiveCost::Common(L2Cost::from_vectors(
                &self.effective_whitened(),
            )?))
        } else {
            Ok(EffectiveCost::PerFrame(InformationCost::new(
                &self.z,
                &self.effective,
                self.whitening.dim,
            )?))
        }
    }

    /// The effective-whitened samples `Ω̃_t^{1/2} z_t`: unit white noise under the effective model.
    pub fn effective_whitened(&self) -> Vec<Vector6<f64>> {
        if self.common {
            let map = Spectrum::new(&self.effective[0], 0.0).sqrt();
            return self.z.iter().map(|z| map * z).collect();
        }
        self.z
            .iter()
            .zip(&self.effective)
            .map(|(z, e)| Spectrum::new(e, 0.0).sqrt() * z)
            .collect()
    }

    /// Effective information of every frame in the original coordinates.
    pub fn effective_original(&self) -> Vec<Matrix6<f64>> {
        self.effective
            .iter()
            .map(|o| self.whitening.information_in_original(o))
            .collect()
    }
}

/// The information-weighted cost under the effective information: the squared-error cost of
/// `Γ^{-1/2} z` when every frame has the mean information (identical, and O(d) per segment), the
/// general [`InformationCost`] otherwise.
#[derive(Debug, Clone)]
pub enum EffectiveCost {
    Common(L2Cost),
    PerFrame(InformationCost),
}

impl SegmentCost for EffectiveCost {
    fn n_samples(&self) -> usize {
        match self {
            Self::Common(c) => c.n_samples(),
            Self::PerFrame(c) => c.n_samples(),
        }
    }

    #[inline]
    fn cost(&self, start: usize, end: usize) -> f64 {
        match self {
            Self::Common(c) => c.cost(start, end),
            Self::PerFrame(c) => c.cost(start, end),
        }
    }
}

fn active_identity(dim: usize) -> Matrix6<f64> {
    Matrix6::from_fn(|r, c| if r == c && r < dim { 1.0 } else { 0.0 })
}
