//! A deviation series as the statistics see it: validated samples, rank-aware information, one
//! common whitening, and the effective (noise-inflated) information of every frame.
//!
//! Whitening once with the mean information `W̄ = L̄ᵀL̄` makes all axes commensurate (mm and
//! degrees) and, when every frame has the same information, turns the information-weighted
//! Gaussian cost into the plain squared-error cost of the whitened samples (O(d) per segment).

use nalgebra::{Matrix6, Vector6};
use rayon::prelude::*;

use super::cost::{InformationCost, L2Cost, SegmentCost};
use super::information::{information_sum_spectrum, Information, Spectrum};
use super::packed::PackedSym6;
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

/// A validated deviation series with each frame's information `W_t = P_t⁺`. Of the covariance
/// only the diagonal (the per-axis variances) is kept: the information carries the rest.
#[derive(Debug, Clone)]
pub struct DeviationSeries {
    frames: Vec<i64>,
    times_s: Vec<f64>,
    deviations: Vec<Vector6<f64>>,
    variances: Vec<Vector6<f64>>,
    information: Vec<Information>,
}

impl DeviationSeries {
    /// Validates the samples: finite values, frame numbers strictly increasing, covariances
    /// symmetric positive semi-definite. The first invalid sample is reported.
    pub fn new(samples: &[DeviationSample]) -> Result<Self, StatsError> {
        Self::build(
            samples.iter().map(|s| s.frame).collect(),
            samples.iter().map(|s| s.time_s).collect(),
            samples.iter().map(|s| s.deviation).collect(),
            |i| samples[i].covariance,
        )
    }

    /// [`DeviationSeries::new`] from samples whose covariances are stored packed (symmetric by
    /// construction), without a full 6x6 matrix per sample in memory.
    pub fn from_packed(
        frames: Vec<i64>,
        times_s: Vec<f64>,
        deviations: Vec<Vector6<f64>>,
        covariances: &[PackedSym6],
    ) -> Result<Self, StatsError> {
        let n = frames.len();
        if times_s.len() != n || deviations.len() != n || covariances.len() != n {
            return Err(StatsError::LengthMismatch {
                what: "series frames and their times, deviations and covariances",
                left: n,
                right: times_s.len().min(deviations.len()).min(covariances.len()),
            });
        }
        Self::build(frames, times_s, deviations, |i| covariances[i].to_matrix())
    }

    /// Validates the samples and inverts each covariance `covariance(i)` once (equal lengths
    /// are the callers' to ensure).
    fn build(
        frames: Vec<i64>,
        times_s: Vec<f64>,
        deviations: Vec<Vector6<f64>>,
        covariance: impl Fn(usize) -> Matrix6<f64> + Sync,
    ) -> Result<Self, StatsError> {
        let n = frames.len();
        let first_bad_covariance = |end: usize| -> Result<(), StatsError> {
            (0..end).try_for_each(|i| Information::from_covariance(&covariance(i), i).map(|_| ()))
        };
        for index in 0..n {
            let (frame, time_s, deviation) = (frames[index], times_s[index], deviations[index]);
            if let Some(&previous) = index.checked_sub(1).map(|p| &frames[p]) {
                if frame <= previous {
                    // An earlier sample with a bad covariance is reported first.
                    first_bad_covariance(index)?;
                    return Err(StatsError::FramesNotIncreasing {
                        index,
                        frame,
                        previous,
                    });
                }
            }
            if !time_s.is_finite() || deviation.iter().any(|v| !v.is_finite()) {
                first_bad_covariance(index)?;
                return Err(StatsError::NonFinite {
                    index,
                    what: "time or deviation",
                });
            }
        }
        let information = (0..n)
            .into_par_iter()
            .map(|index| Information::from_covariance(&covariance(index), index))
            .collect::<Result<Vec<_>, _>>();
        let information = match information {
            Ok(information) => information,
            // Any failing sample will do for rayon; report the first one.
            Err(error) => return Err(first_bad_covariance(n).err().unwrap_or(error)),
        };
        let variances = (0..n).map(|i| covariance(i).diagonal()).collect();
        Ok(Self {
            frames,
            times_s,
            deviations,
            variances,
            information,
        })
    }

    /// Keeps the samples whose flag is set (in order); `keep` has one flag per sample.
    pub fn retain(&mut self, keep: &[bool]) -> Result<(), StatsError> {
        if keep.len() != self.len() {
            return Err(StatsError::LengthMismatch {
                what: "series samples and their keep flags",
                left: self.len(),
                right: keep.len(),
            });
        }
        fn filter<T>(v: &mut Vec<T>, keep: &[bool]) {
            let mut flags = keep.iter();
            v.retain(|_| *flags.next().unwrap_or(&false));
            v.shrink_to_fit();
        }
        filter(&mut self.frames, keep);
        filter(&mut self.times_s, keep);
        filter(&mut self.deviations, keep);
        filter(&mut self.variances, keep);
        filter(&mut self.information, keep);
        Ok(())
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

    /// The per-axis variances (covariance diagonals) of each sample.
    pub fn variances(&self) -> &[Vector6<f64>] {
        &self.variances
    }

    pub fn information(&self) -> &[Information] {
        &self.information
    }
}

/// The error of the first sample whose covariance is not a covariance, if any.
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
        let (sum, weighted) = series.information.iter().zip(&series.deviations).fold(
            (Matrix6::zeros(), Vector6::zeros()),
            |(a, b), (w, x)| {
                let w = w.matrix();
                (a + w, b + w * x)
            },
        );
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
///
/// `Ω̃_t` is not stored: it is formed on demand from the nominal root `Ω_t^{1/2}` (decomposed once
/// per frame) as `Ω_t^{1/2} Γ_a⁻¹ Ω_t^{1/2}` (`Γ_a` the active block of `Γ`), the same matrix as
/// the definition whenever `Ω_t` has the full rank of the series and both are well conditioned
/// ([`tol::EFFECTIVE_FAST_CONDITION`]); other frames take the definition's eigen path.
#[derive(Debug, Clone)]
pub struct EffectiveModel<'a> {
    series: &'a DeviationSeries,
    pub whitening: CommonWhitening,
    pub z: Vec<Vector6<f64>>,
    /// Whether every frame has the mean information (then `Ω̃_t = Γ⁻¹` for all `t`).
    pub common: bool,
    /// `Ω_t^{1/2}` per frame (whitened coordinates).
    roots: Vec<PackedSym6>,
    /// Condition number of `Ω_t` over the active coordinates; infinite when the frame does not
    /// have the full rank of the series (not regular).
    conditions: Vec<f64>,
    /// The current inflation.
    inflation: Inflation,
}

/// A noise inflation `Γ` prepared for forming effective information matrices.
#[derive(Debug, Clone)]
pub struct Inflation {
    matrix: Matrix6<f64>,
    /// `Γ⁺` (eigen path, no floor): the effective information of every frame in a common series.
    pseudo_inverse: Matrix6<f64>,
    /// `Γ_a⁻¹` padded with zeros, when the active block is positive definite.
    active_inverse: Option<Matrix6<f64>>,
    /// `tr(Γ_a) · tr(Γ_a⁻¹)`, an upper bound on the condition number of `Γ_a`.
    condition: f64,
}

impl Inflation {
    /// Prepares `Γ` for a series with `dim` active whitened coordinates.
    pub fn new(matrix: &Matrix6<f64>, dim: usize) -> Self {
        let padded = Matrix6::from_fn(|r, c| match (r < dim, c < dim) {
            (true, true) => 0.5 * (matrix[(r, c)] + matrix[(c, r)]),
            (false, false) if r == c => 1.0,
            _ => 0.0,
        });
        let active_inverse = padded.cholesky().map(|ch| {
            let inverse = ch.inverse();
            Matrix6::from_fn(|r, c| {
                if r < dim && c < dim {
                    0.5 * (inverse[(r, c)] + inverse[(c, r)])
                } else {
                    0.0
                }
            })
        });
        let active_trace = (0..dim).map(|k| padded[(k, k)]).sum::<f64>();
        let condition = active_inverse
            .map(|inverse| active_trace * inverse.trace())
            .filter(|c| c.is_finite())
            .unwrap_or(f64::INFINITY);
        Self {
            matrix: *matrix,
            pseudo_inverse: Spectrum::new(matrix, 0.0).pseudo_inverse(),
            active_inverse: active_inverse.filter(|_| condition.is_finite()),
            condition,
        }
    }
}

impl<'a> EffectiveModel<'a> {
    /// Whitens a series (no inflation yet: `Γ = I`).
    pub fn new(series: &'a DeviationSeries) -> Result<Self, StatsError> {
        let whitening = CommonWhitening::new(series)?;
        let dim = whitening.dim;
        let z: Vec<Vector6<f64>> = series
            .deviations
            .par_iter()
            .map(|x| whitening.whiten(x))
            .collect();
        let identity = active_identity(dim);
        let limit = tol::COMMON_INFORMATION_REL * (dim as f64).sqrt();
        // Unzipped as they are made: no per-frame tuple vector beside the two results.
        let (roots, tagged): (Vec<PackedSym6>, Vec<(f64, bool)>) = series
            .information
            .par_iter()
            .map(|w| {
                let omega = whitening.information_in_whitened(&w.matrix());
                let spectrum = Spectrum::new(&omega, tol::INFORMATION_SUM_RANK_REL);
                let condition = if spectrum.rank == dim {
                    let kept = spectrum.values.iter().filter(|v| **v > 0.0);
                    let (low, high) = kept.fold((f64::INFINITY, 0.0f64), |(lo, hi), &v| {
                        (lo.min(v), hi.max(v))
                    });
                    high / low
                } else {
                    f64::INFINITY
                };
                let common = (omega - identity).norm() <= limit;
                (
                    PackedSym6::from_matrix(&spectrum.sqrt()),
                    (condition, common),
                )
            })
            .unzip();
        let common = tagged.iter().all(|t| t.1);
        let conditions = tagged.into_iter().map(|t| t.0).collect();
        Ok(Self {
            series,
            inflation: Inflation::new(&identity, dim),
            whitening,
            z,
            common,
            roots,
            conditions,
        })
    }

    /// Applies a noise inflation `Γ` (whitened coordinates).
    pub fn inflate(&mut self, inflation: &Matrix6<f64>) {
        self.inflation = self.inflation_for(inflation);
    }

    /// Prepares another inflation (e.g. the long-run one) for [`effective_with`](Self::effective_with).
    pub fn inflation_for(&self, inflation: &Matrix6<f64>) -> Inflation {
        Inflation::new(inflation, self.whitening.dim)
    }

    /// `Ω̃_t` under the current inflation.
    pub fn effective(&self, t: usize) -> Matrix6<f64> {
        self.effective_with(t, &self.inflation)
    }

    /// `Ω̃_t` under a given inflation.
    pub fn effective_with(&self, t: usize, inflation: &Inflation) -> Matrix6<f64> {
        if self.common {
            return inflation.pseudo_inverse;
        }
        if let Some(inverse) = &inflation.active_inverse {
            if self.conditions[t] * inflation.condition <= tol::EFFECTIVE_FAST_CONDITION {
                let root = self.roots[t].to_matrix();
                return root * inverse * root;
            }
        }
        let omega = self.nominal(t);
        let root = Spectrum::new(&omega, tol::INFORMATION_SUM_RANK_REL).inverse_sqrt();
        let covariance = root * inflation.matrix * root;
        Spectrum::new(&covariance, tol::INFORMATION_SUM_RANK_REL).pseudo_inverse()
    }

    /// `Ω_t` (nominal, whitened coordinates).
    pub fn nominal(&self, t: usize) -> Matrix6<f64> {
        let w = self.series.information[t].matrix();
        self.whitening.information_in_whitened(&w)
    }

    /// Frames whose nominal information has the full rank of the series (others break the
    /// windows of the noise estimate: their unobserved components are arbitrary).
    pub fn regular(&self) -> Vec<bool> {
        self.conditions.iter().map(|c| c.is_finite()).collect()
    }

    /// The segment cost under the effective information.
    pub fn cost(&self) -> Result<EffectiveCost, StatsError> {
        if self.common {
            Ok(EffectiveCost::Common(L2Cost::from_vectors(
                &self.effective_whitened(),
            )?))
        } else {
            Ok(EffectiveCost::PerFrame(InformationCost::from_frames(
                self.z.len(),
                self.whitening.dim,
                |t| (self.z[t], self.effective(t)),
            )))
        }
    }

    /// The effective-whitened samples `Ω̃_t^{1/2} z_t`: unit white noise under the effective model.
    pub fn effective_whitened(&self) -> Vec<Vector6<f64>> {
        if self.common {
            let map = Spectrum::new(&self.inflation.pseudo_inverse, 0.0).sqrt();
            return self.z.iter().map(|z| map * z).collect();
        }
        self.z
            .par_iter()
            .enumerate()
            .map(|(t, z)| Spectrum::new(&self.effective(t), 0.0).sqrt() * z)
            .collect()
    }

    /// Effective information of frame `t` under `inflation`, in the original coordinates.
    pub fn effective_original(&self, t: usize, inflation: &Inflation) -> Matrix6<f64> {
        self.whitening
            .information_in_original(&self.effective_with(t, inflation))
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

#[cfg(test)]
mod tests {
    use super::*;

    fn sample(frame: i64, covariance: Matrix6<f64>) -> DeviationSample {
        DeviationSample {
            frame,
            time_s: frame as f64 / 30.0,
            deviation: Vector6::repeat(0.1 * frame as f64),
            covariance,
        }
    }

    #[test]
    fn packed_and_full_covariances_give_the_same_series() {
        let covariance = Matrix6::from_fn(|r, c| if r == c { 2.0 + r as f64 } else { 0.1 });
        let samples: Vec<_> = (0..4).map(|f| sample(f, covariance)).collect();
        let full = DeviationSeries::new(&samples).unwrap();
        let packed = DeviationSeries::from_packed(
            samples.iter().map(|s| s.frame).collect(),
            samples.iter().map(|s| s.time_s).collect(),
            samples.iter().map(|s| s.deviation).collect(),
            &vec![PackedSym6::from_matrix(&covariance); 4],
        )
        .unwrap();
        assert_eq!(full.frames(), packed.frames());
        assert_eq!(full.variances(), packed.variances());
        assert_eq!(full.information(), packed.information());
    }

    #[test]
    fn reports_the_first_bad_sample() {
        let good = Matrix6::identity();
        let mut bad = Matrix6::identity();
        bad[(0, 0)] = -1.0;
        let unordered = [sample(1, good), sample(3, good), sample(2, good)];
        assert!(matches!(
            DeviationSeries::new(&unordered),
            Err(StatsError::FramesNotIncreasing { index: 2, .. })
        ));
        // A bad covariance before the unordered frame is named first.
        let both = [sample(1, good), sample(3, bad), sample(2, good)];
        assert!(matches!(
            DeviationSeries::new(&both),
            Err(StatsError::NotCovariance { index: 1, .. })
        ));
        let lengths = DeviationSeries::from_packed(vec![1, 2], vec![0.0], vec![], &[]);
        assert!(matches!(lengths, Err(StatsError::LengthMismatch { .. })));
    }
}
