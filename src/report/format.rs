//! Number and wording helpers shared by the terminal summary and the HTML report: fixed
//! decimals without negative zeros, signed values with 95% half-widths, p-values, and the
//! plain-language sentences that explain a verdict and a gate.

use crate::commands::audit::{AuditOutcome, Gate, Verdict};

/// `value` with `decimals` decimals; never `-0.00`; `n/a` for a value that is not finite.
pub fn fixed(value: f64, decimals: usize) -> String {
    if !value.is_finite() {
        return "n/a".into();
    }
    let text = format!("{value:.decimals$}");
    match text.strip_prefix('-') {
        Some(rest) if rest.chars().all(|c| c == '0' || c == '.') => rest.to_string(),
        _ => text,
    }
}

/// Decimals (from `min` up to `max`) needed for `lo` and `hi` to read differently, so that a
/// narrow interval is not printed as "0.60 to 0.60".
pub fn decimals_to_tell_apart(lo: f64, hi: f64, min: usize, max: usize) -> usize {
    (min..max)
        .find(|&d| fixed(lo, d) != fixed(hi, d))
        .unwrap_or(max)
}

/// `value` with an explicit sign (`+0.00` for zero).
pub fn signed(value: f64, decimals: usize) -> String {
    let text = fixed(value, decimals);
    if text.starts_with('-') || text == "n/a" {
        text
    } else {
        format!("+{text}")
    }
}

/// A signed value and its 95% half-width: `+4.10±0.35`.
pub fn with_ci(value: f64, half_width: f64, decimals: usize) -> String {
    format!(
        "{}\u{b1}{}",
        signed(value, decimals),
        fixed(half_width, decimals)
    )
}

/// A p-value: three decimals when it is not tiny, else scientific notation.
pub fn p_value(p: f64) -> String {
    if !p.is_finite() {
        "n/a".into()
    } else if p >= 0.001 {
        fixed(p, 3)
    } else if p > 0.0 {
        format!("{p:.1e}")
    } else {
        "< 1e-300".into()
    }
}

/// A rejection reason as written in the outcome (`probe: too_few_points`), made readable.
pub fn reason(text: &str) -> String {
    text.replace('_', " ")
}

/// The verdict in capitals, as the first word a person reads.
pub fn verdict_word(verdict: Verdict) -> &'static str {
    match verdict {
        Verdict::Shifted => "SHIFTED",
        Verdict::OffNominal => "OFF NOMINAL",
        Verdict::Stable => "STABLE",
    }
}

pub fn gate_word(gate: Gate) -> &'static str {
    match gate {
        Gate::Pass => "PASS",
        Gate::Fail => "FAIL",
    }
}

/// One plain-language sentence saying what the verdict means for this session.
pub fn verdict_sentence(outcome: &AuditOutcome) -> String {
    let has_nominal = outcome.inputs.nominal_mount.is_some();
    match outcome.verdict {
        Verdict::Shifted => match outcome.change_points.first() {
            Some(first) => {
                let count = outcome.change_points.len();
                let lead = if count == 1 {
                    "1 change point".to_string()
                } else {
                    format!("{count} change points, the first")
                };
                format!(
                    "The mount moved during the session: {lead} at frame {} (t = {} s).",
                    first.frame,
                    fixed(first.time_s, 2)
                )
            }
            None => "The mount moved during the session.".into(),
        },
        Verdict::OffNominal => {
            "The mount held still during the session but sits measurably away from the nominal \
             mount."
                .into()
        }
        Verdict::Stable if has_nominal => {
            "The mount held still during the session and agrees with the nominal mount.".into()
        }
        Verdict::Stable => "The mount held still during the session (no nominal mount was \
                            given to compare with)."
            .into(),
    }
}

/// One sentence for the gate: why it failed, or that every limit holds.
pub fn gate_sentence(outcome: &AuditOutcome) -> String {
    match outcome.gate {
        Gate::Pass => "The gate passes: every limit of the policy holds.".into(),
        Gate::Fail if outcome.gate_reasons.is_empty() => "The gate fails.".into(),
        Gate::Fail => format!("The gate fails: {}", outcome.gate_reasons.join(" ")),
    }
}

/// `1 change point`, `2 change points`.
pub fn plural(count: usize, one: &str, many: &str) -> String {
    if count == 1 {
        format!("1 {one}")
    } else {
        format!("{count} {many}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn no_negative_zero() {
        assert_eq!(fixed(-0.0004, 3), "0.000");
        assert_eq!(fixed(-0.0006, 3), "-0.001");
        assert_eq!(signed(0.0, 2), "+0.00");
        assert_eq!(signed(-1.234, 2), "-1.23");
        assert_eq!(fixed(f64::NAN, 2), "n/a");
    }

    #[test]
    fn intervals_and_p_values() {
        assert_eq!(with_ci(4.1, 0.35, 2), "+4.10\u{b1}0.35");
        assert_eq!(p_value(0.0412), "0.041");
        assert_eq!(p_value(2.1e-9), "2.1e-9");
        assert_eq!(p_value(0.0), "< 1e-300");
    }
}
