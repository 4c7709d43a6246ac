//! Small checks used while turning a scenario into a simulation; each failure names the scenario
//! (file or preset) and the field, and says what was expected.

use std::fmt::Display;

use super::SimError;

/// Builds `SimError::Invalid` for one scenario.
#[derive(Debug, Clone, Copy)]
pub struct Checker<'a> {
    origin: &'a str,
}

impl<'a> Checker<'a> {
    pub fn new(origin: &'a str) -> Self {
        Self { origin }
    }

    pub fn invalid(&self, field: &str, reason: impl Display) -> SimError {
        SimError::Invalid {
            origin: self.origin.to_string(),
            field: field.to_string(),
            reason: reason.to_string(),
        }
    }

    pub fn require(&self, ok: bool, field: &str, reason: impl Display) -> Result<(), SimError> {
        if ok {
            Ok(())
        } else {
            Err(self.invalid(field, reason))
        }
    }

    pub fn finite(&self, value: f64, field: &str) -> Result<(), SimError> {
        self.require(
            value.is_finite(),
            field,
            format!("must be a finite number (got {value})"),
        )
    }

    pub fn positive(&self, value: f64, field: &str) -> Result<(), SimError> {
        self.require(
            value.is_finite() && value > 0.0,
            field,
            format!("must be a positive finite number (got {value})"),
        )
    }

    pub fn non_negative(&self, value: f64, field: &str) -> Result<(), SimError> {
        self.require(
            value.is_finite() && value >= 0.0,
            field,
            format!("must be a finite number of at least 0 (got {value})"),
        )
    }

    pub fn probability(&self, value: f64, field: &str) -> Result<(), SimError> {
        self.require(
            (0.0..=1.0).contains(&value),
            field,
            format!("must be a probability between 0 and 1 (got {value})"),
        )
    }

    pub fn finite3(&self, values: [f64; 3], field: &str) -> Result<(), SimError> {
        self.require(
            values.iter().all(|v| v.is_finite()),
            field,
            format!("must be three finite numbers (got {values:?})"),
        )
    }

    pub fn non_negative3(&self, values: [f64; 3], field: &str) -> Result<(), SimError> {
        self.require(
            values.iter().all(|v| v.is_finite() && *v >= 0.0),
            field,
            format!("must be three finite numbers of at least 0 (got {values:?})"),
        )
    }
}
