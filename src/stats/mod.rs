//! Statistics of a mount deviation series: plain numbers in, no cameras.
//!
//! Inputs are `f64` slices and nalgebra fixed-size vectors and matrices; nothing here knows about
//! cameras, keypoints, poses or files, so every routine can be checked against reference
//! libraries and published tables on its own. The parts:
//!
//! - [`distributions`]: chi-square, F, normal and Student t quantiles and tail probabilities.
//! - [`information`]: rank-aware information matrices (pseudo-inverse of a covariance).
//! - [`packed`]: symmetric 6x6 matrices stored as their 21 upper-triangle entries.
//! - [`series`]: a validated deviation series, its common whitening and effective information.
//! - [`consistency`]: per-frame and windowed chi-square tests, pixel-noise estimate, excess
//!   scatter, NEES acceptance intervals.
//! - [`cost`] and [`changepoint`]: segment costs from prefix sums and exact PELT (also a mode that
//!   reproduces the Python package ruptures bit for bit in its breakpoints).
//! - [`noise`]: the effective (correlated, vibrating) noise level estimated from the data.
//! - [`penalty`]: the change-point penalty that gives a chosen false-alarm rate.
//! - [`null_table`]: the null distributions of the penalty and online threshold simulated ahead
//!   of time for the classes every long audit meets.
//! - [`segments`]: segment means, change-point shifts and location intervals.
//! - [`drift`]: the whole offline analysis of one deviation series.
//! - [`online`]: tabular CUSUM and MEWMA detectors, alarm frame and delay.
//! - [`multivariate`]: Hotelling T², Wald chi-square and TOST equivalence for comparing sessions.
//!
//! The formulas, assumptions and references are collected in `docs/method.md`.

pub mod changepoint;
pub mod consistency;
pub mod cost;
pub mod distributions;
pub mod drift;
pub mod information;
pub mod multivariate;
pub mod noise;
pub mod null_table;
pub mod online;
pub mod packed;
pub mod penalty;
pub mod screening;
pub mod segments;
pub mod series;

/// A failure of a statistics routine: always a bad argument, never a numerical accident.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum StatsError {
    /// A probability argument outside the open interval (0, 1).
    #[error("probability {value} is outside the open interval (0, 1)")]
    ProbabilityOutOfRange { value: f64 },
    /// A parameter outside its valid range.
    #[error("{name} = {value} is invalid: expected {expected}")]
    InvalidParameter {
        name: &'static str,
        value: f64,
        expected: &'static str,
    },
    /// Too few samples for the requested computation.
    #[error("{what} needs at least {needed} samples, got {got}")]
    TooFewSamples {
        what: &'static str,
        needed: usize,
        got: usize,
    },
    /// A value that must be finite is NaN or infinite.
    #[error("sample {index}: {what} is not finite")]
    NonFinite { index: usize, what: &'static str },
    /// A covariance matrix that is not symmetric positive semi-definite.
    #[error(
        "sample {index}: covariance is not symmetric positive semi-definite \
         (asymmetry {asymmetry:e}, smallest eigenvalue {min_eigenvalue:e})"
    )]
    NotCovariance {
        index: usize,
        asymmetry: f64,
        min_eigenvalue: f64,
    },
    /// Frame numbers must strictly increase along a series.
    #[error(
        "frame numbers must increase: sample {index} has frame {frame} after frame {previous}"
    )]
    FramesNotIncreasing {
        index: usize,
        frame: i64,
        previous: i64,
    },
    /// Two inputs that must have the same length do not.
    #[error("{what}: lengths differ ({left} vs {right})")]
    LengthMismatch {
        what: &'static str,
        left: usize,
        right: usize,
    },
    /// Nothing in the data is observable (all information matrices are zero).
    #[error("{what}: no direction is observable (information has rank 0)")]
    Unobservable { what: &'static str },
}

/// Checks that `p` lies in the open interval (0, 1).
pub(crate) fn check_probability(p: f64) -> Result<f64, StatsError> {
    if p > 0.0 && p < 1.0 {
        Ok(p)
    } else {
        Err(StatsError::ProbabilityOutOfRange { value: p })
    }
}

/// Checks that a parameter is finite and strictly positive.
pub(crate) fn check_positive(name: &'static str, value: f64) -> Result<f64, StatsError> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(StatsError::InvalidParameter {
            name,
            value,
            expected: "a finite number greater than 0",
        })
    }
}
