//! The gate policy (`--policy FILE`): tolerances a session is judged against, with defaults for
//! missing keys and range checks that name the offending line.
//!
//! Defaults: the 30 mm vector tolerance near contact is a common-practice figure; every other
//! default is a project default, a placeholder the user must replace with values from their own
//! approved data.

use std::path::Path;

use serde::{Deserialize, Serialize};

use super::error::{InputError, Problem};
use super::yaml::{self, error_at, Spanned};

/// Gate tolerances.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Policy {
    /// Largest acceptable mount translation (deviation or shift), mm. Project default 5 mm.
    pub max_translation_mm: f64,
    /// Largest acceptable mount rotation (any of yaw, pitch, roll), degrees. Project default 0.25°.
    pub max_rotation_deg: f64,
    /// Largest acceptable fixed-offset error of the probe-to-drogue vector near contact, mm.
    /// Default 30 mm, a common-practice figure.
    pub max_vector_error_mm: f64,
    /// Ranges (probe-to-drogue distance) up to this count as "near contact", m. Project default.
    pub contact_range_m: f64,
    /// Probability that a clean session raises a false change-point alarm. Project default 0.01.
    pub false_alarm_rate: f64,
}

impl Default for Policy {
    fn default() -> Self {
        Self {
            max_translation_mm: 5.0,
            max_rotation_deg: 0.25,
            max_vector_error_mm: 30.0,
            contact_range_m: 15.0,
            false_alarm_rate: 0.01,
        }
    }
}

/// The policy file with locations; every key optional.
#[derive(Debug, Default, Deserialize)]
#[serde(deny_unknown_fields)]
struct PolicyDoc {
    #[serde(default)]
    max_translation_mm: Option<Spanned<f64>>,
    #[serde(default)]
    max_rotation_deg: Option<Spanned<f64>>,
    #[serde(default)]
    max_vector_error_mm: Option<Spanned<f64>>,
    #[serde(default)]
    contact_range_m: Option<Spanned<f64>>,
    #[serde(default)]
    false_alarm_rate: Option<Spanned<f64>>,
}

impl Policy {
    /// Reads a policy file; missing keys take their defaults.
    pub fn load(path: &Path) -> Result<Self, InputError> {
        Self::from_yaml_str(&yaml::read_text(path)?, path)
    }

    /// Parses policy YAML text; `path` names it in messages. Empty text gives the defaults.
    pub fn from_yaml_str(text: &str, path: &Path) -> Result<Self, InputError> {
        let doc: Option<PolicyDoc> = yaml::from_str(text, path)?;
        let doc = doc.unwrap_or_default();
        let d = Self::default();
        let positive = |key, value: &Option<Spanned<f64>>, default| {
            checked(path, key, value.as_ref(), default, Rule::Positive)
        };
        Ok(Self {
            max_translation_mm: positive(
                "max_translation_mm",
                &doc.max_translation_mm,
                d.max_translation_mm,
            )?,
            max_rotation_deg: positive(
                "max_rotation_deg",
                &doc.max_rotation_deg,
                d.max_rotation_deg,
            )?,
            max_vector_error_mm: positive(
                "max_vector_error_mm",
                &doc.max_vector_error_mm,
                d.max_vector_error_mm,
            )?,
            contact_range_m: positive("contact_range_m", &doc.contact_range_m, d.contact_range_m)?,
            false_alarm_rate: checked(
                path,
                "false_alarm_rate",
                doc.false_alarm_rate.as_ref(),
                d.false_alarm_rate,
                Rule::Rate,
            )?,
        })
    }
}

/// The range a policy value must lie in.
#[derive(Clone, Copy)]
enum Rule {
    /// Finite and above 0.
    Positive,
    /// A per-session probability in (0, 0.5): above one half a "false alarm" is the usual case.
    Rate,
}

/// The written value if it obeys the rule, the default if the key is absent.
fn checked(
    path: &Path,
    key: &'static str,
    value: Option<&Spanned<f64>>,
    default: f64,
    rule: Rule,
) -> Result<f64, InputError> {
    let Some(spanned) = value else {
        return Ok(default);
    };
    let x = spanned.value;
    let (ok, expected) = match rule {
        Rule::Positive => (x.is_finite() && x > 0.0, "a positive finite number"),
        Rule::Rate => (
            x > 0.0 && x < 0.5,
            "a probability strictly between 0 and 0.5",
        ),
    };
    if ok {
        return Ok(x);
    }
    let problem = Problem::OutOfRange {
        key,
        expected,
        found: x,
    };
    Err(error_at(path, &spanned.referenced, problem))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn parse(text: &str) -> Result<Policy, InputError> {
        Policy::from_yaml_str(text, Path::new("policy.yaml"))
    }

    #[test]
    fn missing_keys_take_defaults() {
        let p = parse("max_rotation_deg: 0.1\n").unwrap();
        assert_relative_eq!(p.max_rotation_deg, 0.1);
        assert_relative_eq!(p.max_translation_mm, 5.0);
        assert_relative_eq!(p.false_alarm_rate, 0.01);
        assert_eq!(parse("").unwrap(), Policy::default());
        assert_eq!(parse("# nothing set\n").unwrap(), Policy::default());
    }

    #[test]
    fn out_of_range_values_are_located() {
        let e = parse("max_translation_mm: 3\nmax_rotation_deg: -1\n").unwrap_err();
        assert_eq!(e.line, Some(2));
        assert!(
            e.to_string()
                .contains("max_rotation_deg: expected a positive"),
            "{e}"
        );
        let e = parse("false_alarm_rate: 0.5\n").unwrap_err();
        assert!(e.to_string().contains("strictly between 0 and 0.5"), "{e}");
        assert!(parse("contact_range_m: .inf\n").is_err());
    }

    #[test]
    fn typo_is_an_error() {
        let e = parse("max_translation: 3\n").unwrap_err();
        assert_eq!(e.line, Some(1));
    }
}
