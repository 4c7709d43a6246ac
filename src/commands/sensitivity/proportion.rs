//! Confidence intervals for a binomial proportion: `x` successes (detections, false alarms) in
//! `n` independent trials. Plain numbers in; nothing here knows about sessions.

use serde::Serialize;
use statrs::distribution::{Beta, ContinuousCDF};

use crate::stats::distributions::normal_quantile;

/// Which interval a study reports.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum IntervalMethod {
    /// Exact (conservative) interval: coverage is at least the level for every true proportion.
    #[default]
    ClopperPearson,
    /// Score interval: coverage close to the level on average, shorter than Clopper-Pearson.
    Wilson,
}

impl IntervalMethod {
    /// The interval at `level` for `successes` of `trials`; `None` when there are no trials,
    /// more successes than trials, or the level is not strictly between 0 and 1.
    pub fn interval(self, successes: u64, trials: u64, level: f64) -> Option<[f64; 2]> {
        match self {
            IntervalMethod::ClopperPearson => clopper_pearson(successes, trials, level),
            IntervalMethod::Wilson => wilson(successes, trials, level),
        }
    }

    /// The method and where it is published.
    pub fn reference(self) -> &'static str {
        match self {
            IntervalMethod::ClopperPearson => {
                "Clopper-Pearson exact interval (Clopper & Pearson 1934, Biometrika 26:404-413)"
            }
            IntervalMethod::Wilson => {
                "Wilson score interval (Wilson 1927, JASA 22:209-212; Brown, Cai & DasGupta 2001, Statistical Science 16:101-133)"
            }
        }
    }
}

fn valid(successes: u64, trials: u64, level: f64) -> bool {
    trials > 0 && successes <= trials && level > 0.0 && level < 1.0
}

/// Clopper-Pearson interval (Clopper & Pearson 1934): with `α = 1 − level`,
/// `lower = B⁻¹(α/2; x, n − x + 1)` (0 when `x = 0`) and `upper = B⁻¹(1 − α/2; x + 1, n − x)`
/// (1 when `x = n`), `B⁻¹(q; a, b)` the quantile of the Beta(a, b) distribution.
pub fn clopper_pearson(successes: u64, trials: u64, level: f64) -> Option<[f64; 2]> {
    if !valid(successes, trials, level) {
        return None;
    }
    let alpha = 1.0 - level;
    let (x, n) = (successes as f64, trials as f64);
    let lower = if successes == 0 {
        0.0
    } else {
        Beta::new(x, n - x + 1.0).ok()?.inverse_cdf(alpha / 2.0)
    };
    let upper = if successes == trials {
        1.0
    } else {
        Beta::new(x + 1.0, n - x)
            .ok()?
            .inverse_cdf(1.0 - alpha / 2.0)
    };
    Some([lower, upper])
}

/// Wilson score interval (Wilson 1927; Brown, Cai & DasGupta 2001, eq. 4): with `p̂ = x/n` and
/// `z` the `1 − α/2` normal quantile,
/// `(p̂ + z²/(2n) ± z √(p̂(1 − p̂)/n + z²/(4n²))) / (1 + z²/n)`.
pub fn wilson(successes: u64, trials: u64, level: f64) -> Option<[f64; 2]> {
    if !valid(successes, trials, level) {
        return None;
    }
    let z = normal_quantile(1.0 - (1.0 - level) / 2.0).ok()?;
    let n = trials as f64;
    let p = successes as f64 / n;
    let z2 = z * z;
    let centre = p + z2 / (2.0 * n);
    let half = z * (p * (1.0 - p) / n + z2 / (4.0 * n * n)).sqrt();
    let scale = 1.0 + z2 / n;
    Some([
        ((centre - half) / scale).max(0.0),
        ((centre + half) / scale).min(1.0),
    ])
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn no_interval_without_trials_or_with_a_bad_level() {
        assert_eq!(clopper_pearson(0, 0, 0.95), None);
        assert_eq!(wilson(3, 2, 0.95), None);
        assert_eq!(wilson(1, 2, 1.0), None);
    }

    #[test]
    fn extremes_touch_the_bounds() {
        let [lo, hi] = clopper_pearson(0, 10, 0.95).unwrap();
        assert!(lo.abs() < 1e-15 && hi < 1.0);
        let [lo, hi] = clopper_pearson(10, 10, 0.95).unwrap();
        assert!(lo > 0.0 && (hi - 1.0).abs() < 1e-15);
    }
}
