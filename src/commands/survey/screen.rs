//! The gross-frame screen of a survey: a frame whose probe pose jumps far from its neighbours
//! (a wrong PnP minimum that still fits its keypoints) is left out before the statistics, so a
//! single bad frame cannot open a spurious segment or pull the mount estimate.
//!
//! Each axis of each frame's deviation is compared with the median of its neighbours (a window
//! of [`tol::GROSS_FRAME_HALF_WINDOW`] solved frames each side) in units of their robust scale
//! `1.4826 · MAD` (Hampel 1974, JASA 69:383-393: the MAD scaled to estimate a normal standard
//! deviation); beyond [`tol::GROSS_FRAME_ROBUST_SIGMA`] on any axis the frame is gross. The
//! filter is a Hampel identifier on a moving window (Pearson 2002, IEEE Trans. Control Systems
//! Technology 10:55-63).

use nalgebra::Vector6;

use crate::offset::frames::FrameRecord;
use crate::tol;

/// Scale of the median absolute deviation that estimates a normal standard deviation
/// (`1 / Φ⁻¹(3/4)`).
const MAD_TO_SIGMA: f64 = 1.482_602_218_505_602;

fn median(values: &mut [f64]) -> f64 {
    values.sort_by(f64::total_cmp);
    let n = values.len();
    if n % 2 == 1 {
        values[n / 2]
    } else {
        0.5 * (values[n / 2 - 1] + values[n / 2])
    }
}

/// Frames whose deviation is a gross outlier against its neighbours, in increasing order.
pub fn gross_frames(records: &[FrameRecord]) -> Vec<u64> {
    let samples: Vec<(u64, Vector6<f64>)> = records
        .iter()
        .filter_map(|r| r.deviation.map(|d| (r.frame, d)))
        .collect();
    outliers(&samples)
        .into_iter()
        .map(|i| samples[i].0)
        .collect()
}

/// Indices of the gross samples of a series (Hampel identifier, moving window).
pub fn outliers(samples: &[(u64, Vector6<f64>)]) -> Vec<usize> {
    let n = samples.len();
    let window = 2 * tol::GROSS_FRAME_HALF_WINDOW + 1;
    if n < window {
        return Vec::new();
    }
    let mut out = Vec::new();
    let mut values = Vec::with_capacity(window);
    for t in 0..n {
        // The window stays whole at the ends of the series.
        let start = t
            .saturating_sub(tol::GROSS_FRAME_HALF_WINDOW)
            .min(n - window);
        let gross = (0..6).any(|axis| {
            values.clear();
            values.extend(samples[start..start + window].iter().map(|s| s.1[axis]));
            let centre = median(&mut values);
            values.iter_mut().for_each(|v| *v = (*v - centre).abs());
            let scale = MAD_TO_SIGMA * median(&mut values);
            scale > 0.0
                && (samples[t].1[axis] - centre).abs() > tol::GROSS_FRAME_ROBUST_SIGMA * scale
        });
        if gross {
            out.push(t);
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};
    use rand_pcg::Pcg64Mcg;

    fn series(n: usize, step_at: usize, step: f64) -> Vec<(u64, Vector6<f64>)> {
        let mut rng = Pcg64Mcg::seed_from_u64(7);
        (0..n)
            .map(|t| {
                let shift = if t >= step_at { step } else { 0.0 };
                let v = Vector6::from_fn(|_, _| {
                    let e: f64 = StandardNormal.sample(&mut rng);
                    e + shift
                });
                (t as u64, v)
            })
            .collect()
    }

    #[test]
    fn isolated_jumps_are_flagged_and_steps_are_not() {
        let mut s = series(400, 200, 25.0);
        s[57].1[2] += 60.0;
        s[310].1[4] -= 40.0;
        assert_eq!(outliers(&s), vec![57, 310]);
    }

    #[test]
    fn constant_or_short_series_flag_nothing() {
        let flat: Vec<(u64, Vector6<f64>)> = (0..100).map(|t| (t, Vector6::zeros())).collect();
        assert!(outliers(&flat).is_empty());
        let mut short = series(20, 100, 0.0);
        short[3].1[0] = 1e6;
        assert!(outliers(&short).is_empty());
    }
}
