//! Shift ladders and what is read off them: the default sizes, a monotone fit of the detection
//! probabilities, the minimum detectable shift at a chosen power, and medians. Plain numbers in.

use serde::Serialize;

/// Default translation steps, mm: a doubling ladder from a quarter millimetre (well under the
/// noise of one frame) to 4 mm (a plainly visible bracket slip).
pub const DEFAULT_TRANSLATION_SIZES_MM: [f64; 5] = [0.25, 0.5, 1.0, 2.0, 4.0];

/// Default rotation steps, degrees: 0.01 to 0.2 deg, the range over which a camera 2-3 m from the
/// probe sees its keypoints move from a fraction of a pixel to several pixels.
pub const DEFAULT_ROTATION_SIZES_DEG: [f64; 5] = [0.01, 0.02, 0.05, 0.1, 0.2];

/// The smallest shift detected with the requested power.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
#[serde(tag = "status", rename_all = "snake_case")]
pub enum MinDetectable {
    /// Between two ladder sizes, linearly interpolated.
    Interpolated { size: f64 },
    /// The smallest ladder size already reaches the power: the true value is at most this.
    AtOrBelowSmallest { size: f64 },
    /// Not reached on the ladder: the true value is above the largest size.
    NotReached { largest: f64 },
}

impl MinDetectable {
    /// The size, `None` when the power is not reached on the ladder.
    pub fn size(&self) -> Option<f64> {
        match *self {
            MinDetectable::Interpolated { size } | MinDetectable::AtOrBelowSmallest { size } => {
                Some(size)
            }
            MinDetectable::NotReached { .. } => None,
        }
    }
}

/// The non-decreasing sequence nearest to `values` in weighted least squares: the
/// pool-adjacent-violators algorithm (Ayer, Brunk, Ewing, Reid & Silverman 1955, Annals of
/// Mathematical Statistics 26:641-647). Neighbours that decrease are pooled into their weighted
/// mean until none do. Monte Carlo noise can make a detection probability dip at a larger shift;
/// the fit removes such dips without moving the overall level. Zero weights count as one.
pub fn monotone_fit(values: &[f64], weights: &[f64]) -> Vec<f64> {
    // Blocks of pooled neighbours: (mean, total weight, count).
    let mut blocks: Vec<(f64, f64, usize)> = Vec::with_capacity(values.len());
    for (i, &v) in values.iter().enumerate() {
        let w = weights.get(i).copied().filter(|w| *w > 0.0).unwrap_or(1.0);
        blocks.push((v, w, 1));
        while blocks.len() >= 2 {
            let (m2, w2, c2) = blocks[blocks.len() - 1];
            let (m1, w1, c1) = blocks[blocks.len() - 2];
            if m1 <= m2 {
                break;
            }
            blocks.truncate(blocks.len() - 2);
            blocks.push(((m1 * w1 + m2 * w2) / (w1 + w2), w1 + w2, c1 + c2));
        }
    }
    blocks
        .into_iter()
        .flat_map(|(mean, _, count)| std::iter::repeat_n(mean, count))
        .collect()
}

/// The smallest size at which the monotone `probability` (one per increasing ladder size)
/// reaches `power`, interpolated linearly in size between the last size below it and the first
/// at or above it: `s = s₁ + (power − p₁)/(p₂ − p₁) · (s₂ − s₁)`.
pub fn min_detectable(sizes: &[f64], probability: &[f64], power: f64) -> Option<MinDetectable> {
    let largest = *sizes.last()?;
    let Some(k) = probability.iter().position(|&p| p >= power) else {
        return Some(MinDetectable::NotReached { largest });
    };
    if k == 0 {
        return Some(MinDetectable::AtOrBelowSmallest { size: sizes[0] });
    }
    let (s1, s2) = (sizes[k - 1], sizes[k]);
    let (p1, p2) = (probability[k - 1], probability[k]);
    let fraction = if p2 > p1 {
        (power - p1) / (p2 - p1)
    } else {
        1.0
    };
    Some(MinDetectable::Interpolated {
        size: s1 + fraction * (s2 - s1),
    })
}

/// The median of integers (mean of the middle two for an even count); `None` when empty.
pub fn median(values: &[i64]) -> Option<f64> {
    let mut sorted = values.to_vec();
    sorted.sort_unstable();
    let n = sorted.len();
    match n {
        0 => None,
        _ if n % 2 == 1 => Some(sorted[n / 2] as f64),
        _ => Some((sorted[n / 2 - 1] as f64 + sorted[n / 2] as f64) / 2.0),
    }
}
