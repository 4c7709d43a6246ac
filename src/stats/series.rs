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

/// Distinct matrices a parallel task remembers with what was computed from them: frames that
/// used the same keypoints share their covariance (evaluated at the reference mount), and a
/// session has a few such sets (all points, and the usual dropouts).
const RECENT_MATRICES: usize = 8;

/// What was last computed from a few distinct keys, so a repeated key costs a comparison.
#[derive(Debug)]
struct Recent<K, V> {
    entries: Vec<(K, V)>,
    oldest: usize,
}

impl<K, V> Default for Recent<K, V> {
    fn default() -> Self {
        Self {
            entries: Vec::with_capacity(RECENT_MATRICES),
            oldest: 0,
        }
    }
}

impl<K: PartialEq, V: Clone> Recent<K, V> {
    /// The value remembered for `key`, or `compute(&key)` (remembered in place of the oldest).
    fn get_or_try_insert<E>(
        &mut self,
        key: K,
        compute: impl FnOnce(&K) -> Result<V, E>,
    ) -> Result<V, E> {
        if let Some((_, v)) = self.entries.iter().find(|(k, _)| *k == key) {
            return Ok(v.clone());
        }
        let v = compute(&key)?;
        if self.entries.len() < RECENT_MATRICES {
            self.entries.push((key, v.clone()));
        } else {
            self.entries[self.oldest] = (key, v.clone());
            self.oldest = (self.oldest + 1) % RECENT_MATRICES;
        }
        Ok(v)
    }

    /// [`get_or_try_insert`](Self::get_or_try_insert) for a computation that cannot fail.
    fn get_or_insert(&mut self, key: K, compute: impl FnOnce(&K) -> V) -> V {
        self.get_or_try_insert(key, |k| Ok::<V, std::convert::Infallible>(compute(k)))
            .unwrap_or_else(|never| match never {})
    }
}

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
/// only the diagonal (the per-axis variances) is kept: the information carries the rest. A long
/// series may hand its information matrices over ([`DeviationSeries::take_information`]) once
/// they are no longer needed; each frame's rank and observed axes stay.
#[derive(Debug, Clone)]
pub struct DeviationSeries {
    frames: Vec<i64>,
    times_s: Vec<f64>,
    deviations: Vec<Vector6<f64>>,
    variances: Vec<Vector6<f64>>,
    /// One per frame, or empty once taken.
    information: Vec<Information>,
    summaries: Vec<InformationSummary>,
}

/// What the statistics read of a frame's information besides the matrix: its rank and the axes
/// it observes at all (`W_jj > 0`), in two bytes.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct InformationSummary {
    rank: u8,
    /// Bit `j` set when `W_jj > 0`.
    observed: u8,
}

impl InformationSummary {
    pub fn of(information: &Information) -> Self {
        let observed = (0..6)
            .filter(|&j| information.diagonal(j) > 0.0)
            .fold(0u8, |bits, j| bits | (1 << j));
        Self {
            rank: information.rank() as u8,
            observed,
        }
    }

    /// `rank W`.
    pub fn rank(&self) -> usize {
        usize::from(self.rank)
    }

    /// Whether `W_jj > 0` for axis `j`.
    pub fn observes(&self, axis: usize) -> bool {
        self.observed & (1 << axis) != 0
    }
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
        Self::from_stored(frames, times_s, deviations, covariances, |c| Some(*c))
    }

    /// [`DeviationSeries::from_packed`] from covariances stored as options (e.g. beside frame
    /// records, filtered in place to the samples'), without copying them; a missing covariance
    /// is an error.
    pub fn from_packed_options(
        frames: Vec<i64>,
        times_s: Vec<f64>,
        deviations: Vec<Vector6<f64>>,
        covariances: &[Option<PackedSym6>],
    ) -> Result<Self, StatsError> {
        Self::from_stored(frames, times_s, deviations, covariances, |c| *c)
    }

    /// The packed constructors: equal lengths, every covariance present (`packed` of each).
    fn from_stored<T: Sync>(
        frames: Vec<i64>,
        times_s: Vec<f64>,
        deviations: Vec<Vector6<f64>>,
        covariances: &[T],
        packed: impl Fn(&T) -> Option<PackedSym6> + Sync,
    ) -> Result<Self, StatsError> {
        let n = frames.len();
        if times_s.len() != n || deviations.len() != n || covariances.len() != n {
            return Err(StatsError::LengthMismatch {
                what: "series frames and their times, deviations and covariances",
                left: n,
                right: times_s.len().min(deviations.len()).min(covariances.len()),
            });
        }
        if let Some(index) = covariances.iter().position(|c| packed(c).is_none()) {
            return Err(StatsError::NonFinite {
                index,
                what: "covariance (missing)",
            });
        }
        Self::build(frames, times_s, deviations, |i| {
            packed(&covariances[i]).map_or(Matrix6::repeat(f64::NAN), |c| c.to_matrix())
        })
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
        // Frames that used the same keypoints share one covariance (it is evaluated at the
        // reference mount): each is inverted once per parallel task.
        let information = (0..n)
            .into_par_iter()
            .map_init(Recent::default, |recent, index| {
                let c = covariance(index);
                recent.get_or_try_insert(c, |c| Information::from_covariance(c, index))
            })
            .collect::<Result<Vec<_>, _>>();
        let information = match information {
            Ok(information) => information,
            // Any failing sample will do for rayon; report the first one.
            Err(error) => return Err(first_bad_covariance(n).err().unwrap_or(error)),
        };
        let variances = (0..n).map(|i| covariance(i).diagonal()).collect();
        let summaries = information.iter().map(InformationSummary::of).collect();
        Ok(Self {
            frames,
            times_s,
            deviations,
            variances,
            information,
            summaries,
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
        filter(&mut self.summaries, keep);
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

    /// Each frame's information; empty once [taken](Self::take_information).
    pub fn information(&self) -> &[Information] {
        &self.information
    }

    /// Each frame's rank and observed axes (kept when the information is taken).
    pub fn summaries(&self) -> &[InformationSummary] {
        &self.summaries
    }

    /// Hands the information matrices over (the series keeps their summaries): a long series
    /// frees them once the effective model has read them ([`EffectiveModel::detached`]).
    pub fn take_information(&mut self) -> Vec<Information> {
        std::mem::take(&mut self.information)
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
        Self::of_samples(&series.deviations, &series.information)
    }

    /// The whitening of samples `x` with information `information` (one per sample).
    fn of_samples(x: &[Vector6<f64>], information: &[Information]) -> Result<Self, StatsError> {
        if x.len() != information.len() {
            return Err(StatsError::LengthMismatch {
                what: "series samples and their information matrices",
                left: x.len(),
                right: information.len(),
            });
        }
        let n = x.len().max(1) as f64;
        let (sum, weighted) = information.iter().zip(x).fold(
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
/// ([`tol::EFFECTIVE_FAST_CONDITION`]); other frames take the definition's eigen path. Nor are
/// the whitened samples `z_t = L̄ (x_t − c)` stored: each is formed from the deviation when read
/// (the same operations, so the same values).
#[derive(Debug, Clone)]
pub struct EffectiveModel<'a> {
    series: &'a DeviationSeries,
    /// Every frame's information, while the series holds it.
    information: Option<&'a [Information]>,
    /// A detached model's copies of the information of the frames whose nominal the root does
    /// not give back to rounding ([`tol::NOMINAL_FROM_ROOT_CONDITION`]), by frame index.
    kept: Vec<(usize, Information)>,
    pub whitening: CommonWhitening,
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
    /// Whitens a series (no inflation yet: `Γ = I`), reading each frame's information from the
    /// series whenever needed.
    pub fn new(series: &'a DeviationSeries) -> Result<Self, StatsError> {
        let mut model = Self::build(series, &series.information)?;
        model.information = Some(&series.information);
        Ok(model)
    }

    /// [`new`](Self::new) for a series whose information matrices `information` (one per frame)
    /// were [taken](DeviationSeries::take_information) and are freed after this call: the model
    /// keeps copies of the few frames whose nominal information its root does not give back to
    /// rounding, and forms the others' as `Ω_t = (Ω_t^{1/2})²`.
    pub fn detached(
        series: &'a DeviationSeries,
        information: &[Information],
    ) -> Result<Self, StatsError> {
        let mut model = Self::build(series, information)?;
        model.kept = model
            .conditions
            .iter()
            .enumerate()
            // Rank-deficient frames have an infinite condition.
            .filter(|(_, c)| c.is_nan() || **c > tol::NOMINAL_FROM_ROOT_CONDITION)
            .map(|(t, _)| (t, information[t].clone()))
            .collect();
        Ok(model)
    }

    /// The whitening, roots and conditions of `series` with information `information`.
    fn build(series: &'a DeviationSeries, information: &[Information]) -> Result<Self, StatsError> {
        let whitening = CommonWhitening::of_samples(&series.deviations, information)?;
        let dim = whitening.dim;
        let identity = active_identity(dim);
        let limit = tol::COMMON_INFORMATION_REL * (dim as f64).sqrt();
        // Unzipped as they are made: no per-frame tuple vector beside the two results.
        let (roots, tagged): (Vec<PackedSym6>, Vec<(f64, bool)>) = information
            .par_iter()
            .map_init(Recent::default, |recent, w| {
                recent.get_or_insert(w.matrix(), |w| root_and_tags(&whitening, w, dim, limit))
            })
            .unzip();
        let common = tagged.iter().all(|t| t.1);
        let conditions = tagged.into_iter().map(|t| t.0).collect();
        Ok(Self {
            series,
            information: None,
            kept: Vec::new(),
            inflation: Inflation::new(&identity, dim),
            whitening,
            common,
            roots,
            conditions,
        })
    }

    /// Number of frames.
    pub fn len(&self) -> usize {
        self.roots.len()
    }

    pub fn is_empty(&self) -> bool {
        self.roots.is_empty()
    }

    /// The whitened sample `z_t = L̄ (x_t − c)`.
    #[inline]
    pub fn z(&self, t: usize) -> Vector6<f64> {
        self.whitening.whiten(&self.series.deviations[t])
    }

    /// Every whitened sample (formed for the caller, e.g. the noise estimate).
    pub fn whitened_samples(&self) -> Vec<Vector6<f64>> {
        (0..self.len()).into_par_iter().map(|t| self.z(t)).collect()
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

    /// `Ω_t` (nominal, whitened coordinates): from the frame's information when the model has
    /// it, else the square of its root (the same to rounding, see [`EffectiveModel::detached`]).
    pub fn nominal(&self, t: usize) -> Matrix6<f64> {
        match self.exact_information(t) {
            Some(w) => self.whitening.information_in_whitened(&w.matrix()),
            None => {
                let root = self.roots[t].to_matrix();
                root * root
            }
        }
    }

    /// `W_t` (nominal, original coordinates), packed: the frame's information when the model
    /// has it, else `(Ω_t^{1/2} L̄)ᵀ (Ω_t^{1/2} L̄)` (the same to rounding: `L̄⁺ L̄` projects onto
    /// the range of the mean information, which holds that of every `W_t`).
    pub fn nominal_original(&self, t: usize) -> PackedSym6 {
        match self.exact_information(t) {
            Some(w) => *w.packed(),
            None => {
                let factor = self.roots[t].to_matrix() * self.whitening.to_whitened;
                PackedSym6::from_matrix(&(factor.transpose() * factor))
            }
        }
    }

    /// Every frame's information, when the model reads it from the series.
    pub fn information(&self) -> Option<&'a [Information]> {
        self.information
    }

    /// Frame `t`'s information, when the model has it.
    fn exact_information(&self, t: usize) -> Option<&Information> {
        match self.information {
            Some(all) => all.get(t),
            None => self
                .kept
                .binary_search_by_key(&t, |(index, _)| *index)
                .ok()
                .map(|k| &self.kept[k].1),
        }
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
                self.len(),
                self.whitening.dim,
                |t| (self.z(t), self.effective(t)),
            )))
        }
    }

    /// The effective-whitened samples `Ω̃_t^{1/2} z_t`: unit white noise under the effective model.
    pub fn effective_whitened(&self) -> Vec<Vector6<f64>> {
        if self.common {
            let map = Spectrum::new(&self.inflation.pseudo_inverse, 0.0).sqrt();
            return (0..self.len()).map(|t| map * self.z(t)).collect();
        }
        (0..self.len())
            .into_par_iter()
            .map_init(Recent::default, |recent, t| {
                // Equal roots give equal effective information: the key costs no product.
                let root = recent.get_or_insert(self.roots[t], |_| {
                    Spectrum::new(&self.effective(t), 0.0).sqrt()
                });
                root * self.z(t)
            })
            .collect()
    }

    /// Effective information of frame `t` under `inflation`, in the original coordinates.
    pub fn effective_original(&self, t: usize, inflation: &Inflation) -> Matrix6<f64> {
        self.whitening
            .information_in_original(&self.effective_with(t, inflation))
    }
}

/// A frame's information root `Ω_t^{1/2}` in the common whitening, its condition (infinite below
/// full rank `dim`) and whether `Ω_t` is the identity to within `limit` (Frobenius), from its
/// nominal information `w`.
fn root_and_tags(
    whitening: &CommonWhitening,
    w: &Matrix6<f64>,
    dim: usize,
    limit: f64,
) -> (PackedSym6, (f64, bool)) {
    let omega = whitening.information_in_whitened(w);
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
    let common = (omega - active_identity(dim)).norm() <= limit;
    (
        PackedSym6::from_matrix(&spectrum.sqrt()),
        (condition, common),
    )
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

    #[inline]
    fn costs_to(&self, starts: &[usize], end: usize, out: &mut [f64]) {
        match self {
            Self::Common(c) => c.costs_to(starts, end, out),
            Self::PerFrame(c) => c.costs_to(starts, end, out),
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
        let frames = || samples.iter().map(|s| s.frame).collect();
        let times = || samples.iter().map(|s| s.time_s).collect();
        let deviations = || samples.iter().map(|s| s.deviation).collect();
        let mut options = vec![Some(PackedSym6::from_matrix(&covariance)); 4];
        let optional =
            DeviationSeries::from_packed_options(frames(), times(), deviations(), &options)
                .unwrap();
        assert_eq!(optional.variances(), packed.variances());
        assert_eq!(optional.information(), packed.information());
        assert_eq!(optional.summaries(), packed.summaries());
        options[2] = None;
        let missing =
            DeviationSeries::from_packed_options(frames(), times(), deviations(), &options);
        assert!(matches!(
            missing,
            Err(StatsError::NonFinite { index: 2, .. })
        ));
    }

    /// A positive definite matrix with eigenvalues from 1 to `spread` (a rotation from the QR
    /// factor of a fixed matrix).
    fn spd(seed: usize, spread: f64) -> Matrix6<f64> {
        let a = Matrix6::from_fn(|i, j| (((seed * 31 + i * 7 + j * 13) % 11) as f64 - 5.0) / 5.0);
        let q = a.qr().q();
        let values = Vector6::from_fn(|i, _| spread.powf(i as f64 / 5.0));
        q * Matrix6::from_diagonal(&values) * q.transpose()
    }

    /// Forty frames of varying covariance: mostly well conditioned, one badly conditioned
    /// (kept by a detached model) and one rank-deficient.
    fn varied_series() -> DeviationSeries {
        let u = Vector6::new(0.3, -0.2, 0.9, 0.1, 0.0, 0.2).normalize();
        let projector = Matrix6::identity() - u * u.transpose();
        let samples: Vec<DeviationSample> = (0..40)
            .map(|t| {
                let covariance = match t {
                    7 => spd(70, 1e7),
                    12 => projector * spd(12, 20.0) * projector,
                    _ => spd(t, 1.0 + t as f64),
                };
                DeviationSample {
                    frame: t as i64,
                    time_s: t as f64 / 30.0,
                    deviation: Vector6::from_fn(|i, _| ((t * 5 + i * 3) % 7) as f64 * 0.1),
                    covariance,
                }
            })
            .collect();
        DeviationSeries::new(&samples).unwrap()
    }

    fn relative(a: &Matrix6<f64>, b: &Matrix6<f64>) -> f64 {
        (a - b).norm() / b.norm()
    }

    /// The whitened samples formed on demand are `L̄ (x_t − c)` (the definition of the common
    /// whitening, evaluated here by hand from its public parts).
    #[test]
    fn whitened_samples_are_formed_from_the_deviations() {
        let series = varied_series();
        let model = EffectiveModel::new(&series).unwrap();
        let w = &model.whitening;
        let z = model.whitened_samples();
        assert_eq!(z.len(), series.len());
        for (t, x) in series.deviations().iter().enumerate() {
            assert_eq!(z[t], w.to_whitened * (x - w.centre));
            assert_eq!(model.z(t), z[t]);
        }
    }

    /// A detached model (information freed) against one reading the series: the same roots, so
    /// the same effective information on the direct path bit for bit; the badly conditioned and
    /// rank-deficient frames keep their information, so their nominal is exact; the others'
    /// nominal, formed as the root squared, agrees to `cond · 1e-15` relative, as the backward
    /// stability of the symmetric eigen-decomposition gives (Golub & Van Loan, *Matrix
    /// Computations*, 4th ed., section 8.1: the computed `V Λ Vᵀ` is within a few `ε ‖Ω‖`).
    #[test]
    fn detached_model_agrees_with_the_series_information() {
        let mut series = varied_series();
        let exact: Vec<Information> = series.information().to_vec();
        let attached_model = EffectiveModel::new(&series).unwrap();
        let (nominal, original): (Vec<_>, Vec<_>) = (0..series.len())
            .map(|t| {
                (
                    attached_model.nominal(t),
                    attached_model.nominal_original(t),
                )
            })
            .unzip();
        let effective: Vec<_> = (0..series.len())
            .map(|t| attached_model.effective(t))
            .collect();
        drop(attached_model);
        let information = series.take_information();
        assert!(series.information().is_empty());
        assert_eq!(series.summaries().len(), series.len());
        let model = EffectiveModel::detached(&series, &information).unwrap();
        drop(information);
        assert!(model.information().is_none());
        let conditions = model.conditions.clone();
        assert!(conditions[7] > tol::NOMINAL_FROM_ROOT_CONDITION && conditions[12].is_infinite());
        assert_eq!(
            model.kept.iter().map(|k| k.0).collect::<Vec<_>>(),
            vec![7, 12]
        );
        for t in 0..series.len() {
            assert_eq!(model.effective(t), effective[t], "frame {t}");
            assert_eq!(series.summaries()[t], InformationSummary::of(&exact[t]));
            if t == 7 || t == 12 {
                assert_eq!(model.nominal(t), nominal[t]);
                assert_eq!(model.nominal_original(t), original[t]);
                continue;
            }
            let bound = 1e-15 * conditions[t].max(1.0) * 10.0;
            let error = relative(&model.nominal(t), &nominal[t]);
            assert!(error <= bound, "frame {t}: {error:e} > {bound:e}");
            let formed = model.nominal_original(t).to_matrix();
            let error = relative(&formed, &exact[t].matrix());
            assert!(error <= 1e-12, "frame {t}: {error:e}");
        }
    }

    /// Rank and observed axes of a rank-deficient information: the hand-built covariance
    /// diag(1, 2, 0, 4, 5, 6) leaves axis 2 unobserved and rank 5.
    #[test]
    fn summary_names_rank_and_observed_axes() {
        let p = Matrix6::from_diagonal(&Vector6::new(1.0, 2.0, 0.0, 4.0, 5.0, 6.0));
        let summary = InformationSummary::of(&Information::from_covariance(&p, 0).unwrap());
        assert_eq!(summary.rank(), 5);
        assert_eq!(
            (0..6).map(|j| summary.observes(j)).collect::<Vec<_>>(),
            vec![true, true, false, true, true, true]
        );
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
