//! Segment costs evaluated in O(d) or O(d³) time from prefix sums, for the change-point search.
//!
//! A cost `C(start, end)` is the negative log-likelihood (up to constants, times 2) of the samples
//! `start..end` under one constant mean. Both costs here never increase when a segment is split,
//! which is what makes PELT's pruning with `K = 0` exact (Killick et al. 2012, section 3).

use nalgebra::{Matrix6, Vector6};
use rayon::prelude::*;

use super::information::information_sum_spectrum;
use super::StatsError;

/// A segment cost over a fixed series of `n_samples()` samples.
pub trait SegmentCost {
    /// Number of samples in the series.
    fn n_samples(&self) -> usize;

    /// The cost of the samples `start..end` (`start < end <= n_samples()`).
    fn cost(&self, start: usize, end: usize) -> f64;

    /// `out[i] = cost(starts[i], end)`: the inner loop of the search, which a cost may specialise
    /// (the results must equal [`cost`](Self::cost) exactly).
    fn costs_to(&self, starts: &[usize], end: usize, out: &mut [f64]) {
        for (o, &start) in out.iter_mut().zip(starts) {
            *o = self.cost(start, end);
        }
    }
}

/// Sum of squared deviations from the segment mean over all columns, as the Python package
/// ruptures' `CostL2`: `C = Σ_i ‖x_i − x̄‖²` = `(end − start) · Σ_features var(x[start..end])`.
///
/// Evaluated as `Σ‖x‖² − ‖Σx‖²/m` from prefix sums of the column-centred data (centring keeps
/// the subtraction well conditioned when the data sit far from zero). Up to seven columns the
/// prefix sums of one sample fill one 64-byte row, so an evaluation is two row loads and a few
/// vector operations.
#[derive(Debug, Clone)]
pub struct L2Cost {
    n: usize,
    dim: usize,
    layout: Layout,
}

#[derive(Debug, Clone)]
enum Layout {
    /// Columns `0..dim` hold the prefix sums, column 7 the prefix sum of squares (dim <= 7).
    Packed(Vec<[f64; 8]>),
    /// Rows of `dim` prefix sums followed by the prefix sum of squares.
    Wide(Vec<f64>),
}

const PACKED_COLUMNS: usize = 7;

impl L2Cost {
    /// Builds the cost of a row-major signal with `dim` columns (`signal.len() = n · dim`).
    pub fn new(signal: &[f64], dim: usize) -> Result<Self, StatsError> {
        if dim == 0 || !signal.len().is_multiple_of(dim) {
            return Err(StatsError::InvalidParameter {
                name: "signal columns",
                value: dim as f64,
                expected: "a positive number that divides the signal length",
            });
        }
        if let Some(index) = signal.iter().position(|v| !v.is_finite()) {
            return Err(StatsError::NonFinite {
                index: index / dim,
                what: "signal value",
            });
        }
        let n = signal.len() / dim;
        let layout = if dim <= PACKED_COLUMNS {
            Layout::Packed(packed_prefix_rows(signal, dim))
        } else {
            Layout::Wide(centred_prefix_rows(signal, dim))
        };
        Ok(Self { n, dim, layout })
    }

    /// Builds the cost of a series of 6-vectors.
    pub fn from_vectors(rows: &[Vector6<f64>]) -> Result<Self, StatsError> {
        let flat: Vec<f64> = rows.iter().flat_map(|r| r.iter().copied()).collect();
        Self::new(&flat, 6)
    }

    /// Number of columns.
    pub fn dim(&self) -> usize {
        self.dim
    }
}

fn column_means(signal: &[f64], dim: usize) -> Vec<f64> {
    let n = (signal.len() / dim).max(1) as f64;
    let mut means = vec![0.0; dim];
    for row in signal.chunks_exact(dim) {
        means.iter_mut().zip(row).for_each(|(m, v)| *m += v);
    }
    means.iter_mut().for_each(|m| *m /= n);
    means
}

/// Prefix sums of the column-centred signal in 64-byte rows: sums in columns `0..dim`, the sum
/// of squares in column 7.
fn packed_prefix_rows(signal: &[f64], dim: usize) -> Vec<[f64; 8]> {
    let means = column_means(signal, dim);
    let mut rows = Vec::with_capacity(signal.len() / dim + 1);
    let mut acc = [0.0; 8];
    rows.push(acc);
    for row in signal.chunks_exact(dim) {
        for j in 0..dim {
            let centred = row[j] - means[j];
            acc[j] += centred;
            acc[PACKED_COLUMNS] += centred * centred;
        }
        rows.push(acc);
    }
    rows
}

/// Prefix sums of the column-centred signal: `n + 1` rows of `dim` sums and the sum of squares.
fn centred_prefix_rows(signal: &[f64], dim: usize) -> Vec<f64> {
    let n = signal.len() / dim;
    let means = column_means(signal, dim);
    let stride = dim + 1;
    let mut rows = vec![0.0; (n + 1) * stride];
    for (i, row) in signal.chunks_exact(dim).enumerate() {
        let (done, next) = rows.split_at_mut((i + 1) * stride);
        let prev = &done[i * stride..];
        let mut square = prev[dim];
        for j in 0..dim {
            let centred = row[j] - means[j];
            next[j] = prev[j] + centred;
            square += centred * centred;
        }
        next[dim] = square;
    }
    rows
}

impl SegmentCost for L2Cost {
    fn n_samples(&self) -> usize {
        self.n
    }

    #[inline]
    fn cost(&self, start: usize, end: usize) -> f64 {
        match &self.layout {
            Layout::Packed(rows) => packed_cost(&rows[start], &rows[end], end - start),
            Layout::Wide(rows) => {
                let stride = self.dim + 1;
                let lo = &rows[start * stride..(start + 1) * stride];
                let hi = &rows[end * stride..(end + 1) * stride];
                let between: f64 = (0..self.dim).map(|j| (hi[j] - lo[j]).powi(2)).sum();
                let within = (hi[self.dim] - lo[self.dim]) - between / (end - start) as f64;
                if end - start <= 1 {
                    0.0
                } else {
                    within.max(0.0)
                }
            }
        }
    }

    fn costs_to(&self, starts: &[usize], end: usize, out: &mut [f64]) {
        let Layout::Packed(rows) = &self.layout else {
            for (o, &start) in out.iter_mut().zip(starts) {
                *o = self.cost(start, end);
            }
            return;
        };
        let hi = &rows[end];
        for (o, &start) in out.iter_mut().zip(starts) {
            *o = packed_cost(&rows[start], hi, end - start);
        }
    }
}

/// The L2 cost from two packed prefix rows. The sum of squares is added as a fixed tree, which
/// keeps the dependency chain short (several candidates are evaluated in flight).
#[inline(always)]
fn packed_cost(lo: &[f64; 8], hi: &[f64; 8], len: usize) -> f64 {
    let d: [f64; 8] = std::array::from_fn(|j| hi[j] - lo[j]);
    let between = ((d[0] * d[0] + d[1] * d[1]) + (d[2] * d[2] + d[3] * d[3]))
        + ((d[4] * d[4] + d[5] * d[5]) + d[6] * d[6]);
    let within = (d[PACKED_COLUMNS] - between / len as f64).max(0.0);
    // A single sample is its own mean: exactly zero, as ruptures computes it.
    if len <= 1 {
        0.0
    } else {
        within
    }
}

/// The [`L2Cost`] evaluated in numpy's floating-point order, as ruptures 1.1.10 computes it:
/// `x[start..end].var(axis=0).sum() * (end − start)`.
///
/// Mathematically equal to [`L2Cost`]; it exists because segmentations can tie exactly (data on
/// a grid such as multiples of 0.1), and then rounding decides which one ruptures reports. To
/// reproduce ruptures bit for bit the sums follow numpy 2: a one-column reduction uses numpy's
/// pairwise summation, a multi-column reduction over axis 0 adds rows in order, and the variance
/// is `Σ(x − Σx/m)²/m`. Each evaluation is O(m·d); use [`L2Cost`] for real work.
#[derive(Debug, Clone)]
pub struct NumpyOrderL2Cost {
    dim: usize,
    signal: Vec<f64>,
}

impl NumpyOrderL2Cost {
    /// Builds the cost of a row-major signal with `dim` columns.
    pub fn new(signal: &[f64], dim: usize) -> Result<Self, StatsError> {
        L2Cost::new(signal, dim)?;
        Ok(Self {
            dim,
            signal: signal.to_vec(),
        })
    }

    fn column(&self, start: usize, end: usize, j: usize) -> impl Iterator<Item = f64> + '_ {
        (start..end).map(move |i| self.signal[i * self.dim + j])
    }

    /// numpy's sum over axis 0 of one column of `start..end`.
    fn axis0_sum(&self, values: impl Iterator<Item = f64>) -> f64 {
        if self.dim == 1 {
            numpy_pairwise_sum(&values.collect::<Vec<_>>())
        } else {
            values.fold(0.0, |acc, v| acc + v)
        }
    }
}

impl SegmentCost for NumpyOrderL2Cost {
    fn n_samples(&self) -> usize {
        self.signal.len() / self.dim
    }

    fn cost(&self, start: usize, end: usize) -> f64 {
        let m = (end - start) as f64;
        let variances: Vec<f64> = (0..self.dim)
            .map(|j| {
                let mean = self.axis0_sum(self.column(start, end, j)) / m;
                let squares = self.column(start, end, j).map(|v| (v - mean) * (v - mean));
                self.axis0_sum(squares) / m
            })
            .collect();
        numpy_pairwise_sum(&variances) * m
    }
}

/// numpy's pairwise summation of a contiguous double array (`pairwise_sum_DOUBLE`, block size
/// 128, eight accumulators), started from the additive identity 0 as `np.add.reduce` does.
pub fn numpy_pairwise_sum(values: &[f64]) -> f64 {
    0.0 + pairwise_block(values)
}

fn pairwise_block(a: &[f64]) -> f64 {
    let n = a.len();
    if n < 8 {
        a.iter().fold(0.0, |acc, v| acc + v)
    } else if n <= 128 {
        let mut r = [0.0; 8];
        r.copy_from_slice(&a[..8]);
        let full = n - n % 8;
        for chunk in a[8..full].chunks_exact(8) {
            r.iter_mut().zip(chunk).for_each(|(acc, v)| *acc += v);
        }
        let head = ((r[0] + r[1]) + (r[2] + r[3])) + ((r[4] + r[5]) + (r[6] + r[7]));
        a[full..].iter().fold(head, |acc, v| acc + v)
    } else {
        let half = n / 2;
        let split = half - half % 8;
        pairwise_block(&a[..split]) + pairwise_block(&a[split..])
    }
}

/// Information-weighted Gaussian cost `C = Σ_i (y_i − μ)ᵀ Ω_i (y_i − μ)` with the weighted mean
/// `μ = (Σ Ω_i)⁺ Σ Ω_i y_i`, i.e. `C = Σ y_iᵀΩ_i y_i − bᵀ A⁺ b` with `A = Σ Ω_i`, `b = Σ Ω_i y_i`.
///
/// Prefix sums of `Ω_i` (21 distinct entries), `Ω_i y_i` and `y_iᵀ Ω_i y_i` give each segment's
/// sums in O(d²); the quadratic form takes one packed 6x6 `LDLᵀ` factorisation, or the eigen
/// pseudo-inverse when a segment's information is singular (a direction unobserved in all of
/// its frames), so an unobservable direction adds neither cost nor degrees of freedom.
#[derive(Debug, Clone)]
pub struct InformationCost {
    n: usize,
    /// Prefix sums per sample boundary, one 224-byte row each: the 21 packed entries of `Σ Ω_i`
    /// ([`UPPER`] order), then `Σ Ω_i y_i` (6), then `Σ y_iᵀ Ω_i y_i`.
    rows: Vec<[f64; ROW]>,
    /// 1 on the diagonal of the inactive coordinates (so that the factorisation sees a regular
    /// matrix there), 0 elsewhere.
    padding: [f64; 6],
}

/// Entries of one prefix row of [`InformationCost`].
const ROW: usize = 28;
/// Offset of `Σ Ω_i y_i` and of `Σ y_iᵀ Ω_i y_i` in a row.
const WEIGHTED: usize = 21;
const SQUARE: usize = 27;

const UPPER: [(usize, usize); 21] = {
    let mut pairs = [(0, 0); 21];
    let mut k = 0;
    let mut i = 0;
    while i < 6 {
        let mut j = i;
        while j < 6 {
            pairs[k] = (i, j);
            k += 1;
            j += 1;
        }
        i += 1;
    }
    pairs
};

impl InformationCost {
    /// Builds the cost of samples `y` with information matrices `omega`. Coordinates at or
    /// beyond `active_dim` must be zero in every `y_i` and `Ω_i` (a reduced common frame padded to
    /// six); they are ignored.
    pub fn new(
        y: &[Vector6<f64>],
        omega: &[Matrix6<f64>],
        active_dim: usize,
    ) -> Result<Self, StatsError> {
        if y.len() != omega.len() {
            return Err(StatsError::LengthMismatch {
                what: "samples and information matrices",
                left: y.len(),
                right: omega.len(),
            });
        }
        Ok(Self::from_frames(y.len(), active_dim, |i| (y[i], omega[i])))
    }

    /// Builds the cost of `n` samples whose sample `y_i` and information `Ω_i` come from
    /// `frame(i)` (same conditions as [`new`](Self::new)). The per-frame terms are formed in
    /// parallel, the prefix sums in order.
    pub fn from_frames(
        n: usize,
        active_dim: usize,
        frame: impl Fn(usize) -> (Vector6<f64>, Matrix6<f64>) + Sync,
    ) -> Self {
        let mut rows = vec![[0.0; ROW]; n + 1];
        rows[1..].par_iter_mut().enumerate().for_each(|(i, row)| {
            let (yi, wi) = frame(i);
            let wy = wi * yi;
            for (k, &(r, c)) in UPPER.iter().enumerate() {
                row[k] = wi[(r, c)];
            }
            row[WEIGHTED..SQUARE].copy_from_slice(wy.as_slice());
            row[SQUARE] = yi.dot(&wy);
        });
        for i in 1..=n {
            let previous = rows[i - 1];
            rows[i].iter_mut().zip(previous).for_each(|(v, p)| *v += p);
        }
        let padding = std::array::from_fn(|r| if r >= active_dim { 1.0 } else { 0.0 });
        Self { n, rows, padding }
    }

    /// The sums `(A, b, q)` = `(Σ Ω_i, Σ Ω_i y_i, Σ y_iᵀ Ω_i y_i)` over `start..end`.
    pub fn segment_sums(&self, start: usize, end: usize) -> (Matrix6<f64>, Vector6<f64>, f64) {
        let (lo, hi) = (&self.rows[start], &self.rows[end]);
        let mut a = Matrix6::zeros();
        for (k, &(r, c)) in UPPER.iter().enumerate() {
            let v = hi[k] - lo[k];
            a[(r, c)] = v;
            a[(c, r)] = v;
        }
        let b = Vector6::from_fn(|r, _| hi[WEIGHTED + r] - lo[WEIGHTED + r]);
        (a, b, hi[SQUARE] - lo[SQUARE])
    }
}

impl SegmentCost for InformationCost {
    fn n_samples(&self) -> usize {
        self.n
    }

    fn cost(&self, start: usize, end: usize) -> f64 {
        let (lo, hi) = (&self.rows[start], &self.rows[end]);
        let mut packed: [f64; 21] = std::array::from_fn(|k| hi[k] - lo[k]);
        for (r, pad) in self.padding.iter().enumerate() {
            packed[packed_index(r, r)] += pad;
        }
        let b: [f64; 6] = std::array::from_fn(|r| hi[WEIGHTED + r] - lo[WEIGHTED + r]);
        let q = hi[SQUARE] - lo[SQUARE];
        let explained = ldl_quadratic(&packed, &b).unwrap_or_else(|| {
            let (a, b, _) = self.segment_sums(start, end);
            b.dot(&(information_sum_spectrum(&a).pseudo_inverse() * b))
        });
        (q - explained).max(0.0)
    }

    /// Evaluates [`LANES`] starts at a time with the factorisations in lockstep (independent
    /// dependency chains, and vector registers where the target has them); each lane performs
    /// exactly the operations of [`cost`](SegmentCost::cost), so the results are the same. The
    /// last few starts go in a group of two or four (a group costs about what a single
    /// evaluation does: the time goes in the chain of divisions, which the lanes share).
    fn costs_to(&self, starts: &[usize], end: usize, out: &mut [f64]) {
        let mut groups = starts.chunks_exact(LANES);
        let mut outs = out.chunks_exact_mut(LANES);
        for (group, o) in (&mut groups).zip(&mut outs) {
            let group: &[usize; LANES] = group.try_into().expect("chunks of LANES");
            o.copy_from_slice(&self.group_costs(group, end));
        }
        let (rest, rest_out) = (groups.remainder(), outs.into_remainder());
        match *rest {
            [] => {}
            [start] => rest_out[0] = self.cost(start, end),
            [a, b] => rest_out.copy_from_slice(&self.group_costs(&[a, b], end)),
            [a, b, c, ..] => rest_out.copy_from_slice(&self.group_costs(&[a, b, c, c], end)[..3]),
        }
    }
}

impl InformationCost {
    /// The costs of `L` starts to `end` in lockstep.
    #[allow(clippy::needless_range_loop)] // a lane index runs over several arrays at once
    #[inline]
    fn group_costs<const L: usize>(&self, group: &[usize; L], end: usize) -> [f64; L] {
        let hi = &self.rows[end];
        let lo: [&[f64; ROW]; L] = std::array::from_fn(|s| &self.rows[group[s]]);
        let mut a: [[f64; L]; 21] =
            std::array::from_fn(|k| std::array::from_fn(|s| hi[k] - lo[s][k]));
        for (r, pad) in self.padding.iter().enumerate() {
            a[packed_index(r, r)].iter_mut().for_each(|v| *v += pad);
        }
        let b: [[f64; L]; 6] = std::array::from_fn(|r| {
            std::array::from_fn(|s| hi[WEIGHTED + r] - lo[s][WEIGHTED + r])
        });
        let explained = ldl_quadratic_lanes(&a, &b);
        std::array::from_fn(|s| match explained[s] {
            Some(e) => (hi[SQUARE] - lo[s][SQUARE] - e).max(0.0),
            None => self.cost(group[s], end),
        })
    }
}

/// Candidate starts [`InformationCost`] evaluates together.
const LANES: usize = 4;

/// Position of entry `(i, j)`, `i <= j`, in the packed upper triangle of [`UPPER`].
const fn packed_index(i: usize, j: usize) -> usize {
    i * 6 - i * (i + 1) / 2 + j
}

/// `bᵀ A⁻¹ b` for a symmetric 6x6 matrix given as its packed upper triangle, by the `LDLᵀ`
/// factorisation (Golub & Van Loan, *Matrix Computations*, algorithm 4.1.2). `None` when a pivot
/// is not positive or is negligible against the largest (below
/// [`crate::tol::INFORMATION_SUM_RANK_REL`]): the matrix is singular up to rounding and the
/// pseudo-inverse must be used instead.
///
/// Row by row (Crout order): `u_jk = l_jk d_k` is formed first and `l_jk = u_jk / d_k` with one
/// reciprocal per pivot, and the forward substitution `y = L⁻¹ b` runs in the same pass, so an
/// evaluation takes six divisions.
#[inline]
fn ldl_quadratic(a: &[f64; 21], b: &[f64; 6]) -> Option<f64> {
    let a: [[f64; 1]; 21] = std::array::from_fn(|k| [a[k]]);
    let b: [[f64; 1]; 6] = std::array::from_fn(|r| [b[r]]);
    ldl_quadratic_lanes(&a, &b)[0]
}

/// [`ldl_quadratic`] of `L` matrices at once (`a[k][s]`, `b[r][s]`: entry of lane `s`), every lane
/// with the same operations in the same order as one alone.
#[inline(always)]
#[allow(clippy::needless_range_loop)] // a lane index runs over several arrays at once
fn ldl_quadratic_lanes<const L: usize>(a: &[[f64; L]; 21], b: &[[f64; L]; 6]) -> [Option<f64>; L] {
    let mut l = [[[0.0f64; L]; 6]; 6];
    let mut d = [[0.0f64; L]; 6];
    let mut inverse = [[0.0f64; L]; 6];
    let mut y = [[0.0f64; L]; 6];
    let mut quadratic = [0.0f64; L];
    let mut valid = [true; L];
    for j in 0..6 {
        let mut u = [[0.0f64; L]; 6];
        for k in 0..j {
            let mut v = a[packed_index(k, j)];
            for m in 0..k {
                for s in 0..L {
                    v[s] -= u[m][s] * l[k][m][s];
                }
            }
            u[k] = v;
            for s in 0..L {
                l[j][k][s] = v[s] * inverse[k][s];
            }
        }
        let mut pivot = a[packed_index(j, j)];
        let mut rhs = b[j];
        for k in 0..j {
            for s in 0..L {
                pivot[s] -= u[k][s] * l[j][k][s];
                rhs[s] -= l[j][k][s] * y[k][s];
            }
        }
        for s in 0..L {
            // A lane whose pivot is not positive has no factorisation; it goes on with
            // meaningless numbers and is discarded.
            if pivot[s].is_nan() || pivot[s] <= 0.0 {
                valid[s] = false;
            }
            d[j][s] = pivot[s];
            inverse[j][s] = 1.0 / pivot[s];
            y[j][s] = rhs[s];
            quadratic[s] += rhs[s] * rhs[s] * inverse[j][s];
        }
    }
    std::array::from_fn(|s| {
        let (d_min, d_max) = d.iter().fold((f64::INFINITY, 0.0f64), |(lo, hi), row| {
            (lo.min(row[s]), hi.max(row[s]))
        });
        (valid[s] && d_min > crate::tol::INFORMATION_SUM_RANK_REL * d_max).then_some(quadratic[s])
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The packed LDLᵀ quadratic form equals nalgebra's Cholesky solve on SPD matrices, and
    /// declines singular ones.
    #[test]
    fn ldl_quadratic_matches_cholesky_solve() {
        for seed in 0..20u32 {
            let m =
                Matrix6::from_fn(|i, j| ((seed as usize * 7 + i * 13 + j * 29) % 17) as f64 - 8.0);
            let a = m * m.transpose() + Matrix6::identity() * 0.5;
            let b = Vector6::from_fn(|i, _| (i as f64 - 2.5) * (seed as f64 + 1.0));
            let packed: [f64; 21] = std::array::from_fn(|k| a[UPPER[k]]);
            let expected = b.dot(&a.cholesky().unwrap().solve(&b));
            let ours = ldl_quadratic(&packed, &b.into()).unwrap();
            assert!(
                (ours - expected).abs() <= 1e-9 * expected.abs().max(1.0),
                "{ours} vs {expected}"
            );
        }
        let v = Vector6::new(1.0, 2.0, 0.0, -1.0, 0.5, 3.0);
        let singular = v * v.transpose();
        let packed: [f64; 21] = std::array::from_fn(|k| singular[UPPER[k]]);
        assert_eq!(ldl_quadratic(&packed, &v.into()), None);
        assert_eq!(packed_index(0, 0), 0);
        assert_eq!(
            packed_index(2, 4),
            UPPER.iter().position(|&p| p == (2, 4)).unwrap()
        );
    }

    /// Lockstep evaluation gives the single evaluations bit for bit, also where a lane's
    /// segment is singular and falls back to the pseudo-inverse.
    #[test]
    fn lanes_equal_single_evaluations_bit_for_bit() {
        let n = 64;
        let y: Vec<Vector6<f64>> = (0..n)
            .map(|i| Vector6::from_fn(|r, _| ((i * 7 + r * 3) % 11) as f64 - 5.0))
            .collect();
        let omega: Vec<Matrix6<f64>> = (0..n)
            .map(|i| {
                let v = Vector6::from_fn(|r, _| ((i * 5 + r * 13) % 7) as f64 - 3.0);
                let rank_one = v * v.transpose();
                if i % 3 == 0 {
                    rank_one
                } else {
                    rank_one + Matrix6::identity() * 0.5
                }
            })
            .collect();
        let cost = InformationCost::new(&y, &omega, 6).unwrap();
        // Every count of leftover starts after the groups of four (0 to 3), and groups alone.
        for count in [1, 2, 3, 4, 5, 6, 7, 49] {
            let starts: Vec<usize> = (0..count).map(|k| (k * 7) % 49).collect();
            let mut out = vec![0.0; starts.len()];
            cost.costs_to(&starts, 49, &mut out);
            for (&start, &o) in starts.iter().zip(&out) {
                let single = cost.cost(start, 49).to_bits();
                assert_eq!(o.to_bits(), single, "start {start} of {count}");
            }
        }
    }
}
