//! Screening of a deviation series for isolated gross errors (a frame whose pose solution fell
//! into a wrong minimum), before the change-point search: a frame far from BOTH the median of the
//! frames just before it and the median of the frames just after it, in units of its own
//! information, is set aside.
//!
//! A median resists a lone wild frame (Tukey 1977, Exploratory Data Analysis), and comparing
//! with each side separately preserves edges: a frame right after a genuine shift agrees with the
//! frames after it, so a shift is never screened out. The scale is robust too: the median of the statistics, matched to the
//! median of the chi-square distribution with the frame's rank, absorbs correlated noise and
//! vibration that make every frame scatter more than its covariance says.

use nalgebra::Vector6;
use rayon::prelude::*;

use super::distributions::chi2_quantile;
use super::information::Information;
use super::StatsError;

/// Result of screening: which samples to keep and the statistic of each.
#[derive(Debug, Clone, PartialEq)]
pub struct Screening {
    pub keep: Vec<bool>,
    /// `(x_t − med_t)ᵀ W_t (x_t − med_t)` per sample.
    pub statistic: Vec<f64>,
    /// Robust scale: median statistic over the median of chi-square with the median rank.
    pub scale: f64,
    /// Threshold applied to `statistic / scale`.
    pub threshold: f64,
}

/// Flags samples whose distance from the component-wise median of the `half` samples before and
/// from that of the `half` samples after (the smaller of the two) exceeds the chi-square
/// `(1 − alpha)` quantile (at the sample's rank) times the robust scale.
pub fn screen_gross_errors(
    x: &[Vector6<f64>],
    information: &[Information],
    half: usize,
    alpha: f64,
) -> Result<Screening, StatsError> {
    if x.len() != information.len() {
        return Err(StatsError::LengthMismatch {
            what: "deviations and information matrices",
            left: x.len(),
            right: information.len(),
        });
    }
    let n = x.len();
    let statistic: Vec<f64> = (0..n)
        .into_par_iter()
        .map(|t| {
            let before = (t > 0).then(|| median(&x[t.saturating_sub(half)..t]));
            let after = (t + 1 < n).then(|| median(&x[t + 1..(t + 1 + half).min(n)]));
            [before, after]
                .into_iter()
                .flatten()
                .map(|m| information[t].mahalanobis2(&(x[t] - m)))
                .fold(f64::INFINITY, f64::min)
        })
        .map(|s| if s.is_finite() { s } else { 0.0 })
        .collect();
    let scale = robust_scale(&statistic, information)?;
    let mut threshold_by_rank = [f64::INFINITY; 7];
    for (rank, t) in threshold_by_rank.iter_mut().enumerate().skip(1) {
        *t = chi2_quantile(1.0 - alpha, rank as f64)?;
    }
    let keep = statistic
        .iter()
        .zip(information)
        .map(|(s, w)| *s <= scale * threshold_by_rank[w.rank()])
        .collect();
    Ok(Screening {
        keep,
        statistic,
        scale,
        threshold: threshold_by_rank[6],
    })
}

/// Median of the statistics over the chi-square median at the median rank (at least 1).
fn robust_scale(statistic: &[f64], information: &[Information]) -> Result<f64, StatsError> {
    if statistic.is_empty() {
        return Ok(1.0);
    }
    let mut ranks: Vec<usize> = information.iter().map(Information::rank).collect();
    let mid = ranks.len() / 2;
    let rank = (*ranks.select_nth_unstable(mid).1).max(1);
    let mut values = statistic.to_vec();
    let median = *values.select_nth_unstable_by(mid, f64::total_cmp).1;
    Ok((median / chi2_quantile(0.5, rank as f64)?).max(1.0))
}

/// Component-wise median of a non-empty run of samples (the upper median for even counts).
pub fn median(x: &[Vector6<f64>]) -> Vector6<f64> {
    let mut column = Vec::with_capacity(x.len());
    Vector6::from_fn(|k, _| {
        column.clear();
        column.extend(x.iter().map(|v| v[k]));
        let mid = column.len() / 2;
        *column.select_nth_unstable_by(mid, f64::total_cmp).1
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use nalgebra::Matrix6;

    fn unit(n: usize) -> Vec<Information> {
        (0..n)
            .map(|i| Information::from_covariance(&Matrix6::identity(), i).unwrap())
            .collect()
    }

    #[test]
    fn median_resists_a_spike() {
        // Hand-worked: the median of 1, 2, 100, 3 is the upper median 3.
        let x: Vec<Vector6<f64>> = [1.0, 2.0, 100.0, 3.0]
            .iter()
            .map(|&v| Vector6::repeat(v))
            .collect();
        assert!(median(&x).iter().all(|v| (v - 3.0).abs() < 1e-12));
    }

    #[test]
    fn a_lone_wild_frame_is_screened_and_a_step_is_not() {
        // Deterministic noise of unit scale, a step of 8 at index 50, a spike of 60 at index 20.
        let mut x: Vec<Vector6<f64>> = (0..100)
            .map(|i| {
                let noise = (((i * 37) % 11) as f64 - 5.0) / 5.0;
                Vector6::repeat(noise + if i >= 50 { 8.0 } else { 0.0 })
            })
            .collect();
        x[20] += Vector6::repeat(60.0);
        let s = screen_gross_errors(&x, &unit(100), 10, 1e-6).unwrap();
        let dropped: Vec<usize> = (0..100).filter(|&i| !s.keep[i]).collect();
        assert_eq!(dropped, vec![20]);
    }
}
