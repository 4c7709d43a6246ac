//! The audit's decisions: the verdict (`shifted`, `off_nominal`, `stable`), the gate against the
//! policy with its reasons, and the warnings a person should read, each with advice.

use crate::session::Policy;
use crate::stats::consistency::ChiSquareTest;
use crate::stats::distributions::f_sf;
use crate::stats::information::Spectrum;

use super::analysis::Analysis;
use super::outcome::*;

/// `shifted` when a change point was found; else `off_nominal` when the mount differs from the
/// nominal beyond the false-alarm level; else `stable`.
pub fn verdict(
    change_points: &[ChangePoint],
    nominal: Option<&NominalConsistency>,
    policy: &Policy,
) -> Verdict {
    if !change_points.is_empty() {
        Verdict::Shifted
    } else if nominal.is_some_and(|n| n.session_p_value < policy.false_alarm_rate) {
        Verdict::OffNominal
    } else {
        Verdict::Stable
    }
}

/// Probability that the mount equals the reference (nominal) throughout: the Wald chi-square of
/// each segment's mean under its effective covariance (pseudo-inverse, dof = rank), the smallest
/// p-value Bonferroni-corrected over segments. Without segments, the sum of the per-frame
/// chi-squares.
pub fn session_p_value(analysis: &Analysis) -> f64 {
    let Some(drift) = &analysis.drift else {
        let total = analysis
            .frame_tests
            .iter()
            .fold((0.0, 0), |(s, d), t: &ChiSquareTest| {
                (s + t.statistic, d + t.dof)
            });
        return ChiSquareTest::new(total.0, total.1).p_value.unwrap_or(1.0);
    };
    let k = drift.segments.len().max(1) as f64;
    // The long-run noise factor behind each segment's covariance was estimated from windows of
    // this many samples (one when no correlation was estimated).
    let batch = drift
        .noise
        .scale_of_max
        .iter()
        .copied()
        .max()
        .unwrap_or(0)
        .max(1);
    drift
        .segments
        .iter()
        .map(|s| {
            let spectrum = Spectrum::new(&s.mean.covariance, crate::tol::RANK_REL_EIG);
            let information = spectrum.pseudo_inverse();
            let d2 = s.mean.mean.dot(&(information * s.mean.mean));
            let batches = (s.mean.end - s.mean.start) / batch;
            studentised_p_value(d2.max(0.0), spectrum.rank, batches)
        })
        .fold(1.0_f64, |p, q| p.min((q * k).min(1.0)))
}

/// p-value of `d² = μᵀ Σ̂⁺ μ` for a mean whose covariance `Σ̂` rests on a noise level estimated
/// from `batches` windows, i.e. with `ν = batches − 1` degrees of freedom (batch means: Schmeiser
/// 1982, Operations Research 30:556-568): Hotelling's T² (Hotelling 1931, Ann. Math. Statist.
/// 2:360-378), `(ν − p + 1)/(ν p) · d² ~ F(p, ν − p + 1)` for rank `p`, which tends to the
/// chi-square with `p` dof as `ν` grows. With fewer batches than that needs the mean cannot be
/// tested (p-value 1).
pub fn studentised_p_value(d2: f64, rank: usize, batches: usize) -> f64 {
    let p = rank as f64;
    let nu = batches.saturating_sub(1) as f64;
    if rank == 0 || nu < p {
        return 1.0;
    }
    let denominator = nu - p + 1.0;
    f_sf(denominator / (nu * p) * d2, p, denominator).unwrap_or(1.0)
}

fn beyond(translation_mm: &[f64; 3], rotation_deg: &[f64; 3], policy: &Policy) -> bool {
    let t = translation_mm.iter().map(|v| v * v).sum::<f64>().sqrt();
    let r = rotation_deg.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
    t > policy.max_translation_mm || r > policy.max_rotation_deg
}

fn size(translation_mm: &[f64; 3], rotation_deg: &[f64; 3]) -> String {
    let t = translation_mm.iter().map(|v| v * v).sum::<f64>().sqrt();
    let r = rotation_deg.iter().fold(0.0_f64, |m, v| m.max(v.abs()));
    format!("{t:.2} mm and {r:.3} deg")
}

/// Why the gate fails; empty when it passes.
pub fn gate_reasons(
    change_points: &[ChangePoint],
    segments: &[Segment],
    fixed: Option<&FixedOffset>,
    has_nominal: bool,
    policy: &Policy,
) -> Vec<String> {
    let limits = format!(
        "tolerance {} mm, {} deg",
        policy.max_translation_mm, policy.max_rotation_deg
    );
    let mut reasons = Vec::new();
    for c in change_points {
        if beyond(&c.translation_mm, &c.rotation_deg, policy) {
            reasons.push(format!(
                "the mount shifted by {} at frame {} ({limits})",
                size(&c.translation_mm, &c.rotation_deg),
                c.frame
            ));
        }
    }
    if has_nominal {
        for s in segments {
            let d = &s.mount_deviation;
            if beyond(&d.translation_mm, &d.rotation_deg, policy) {
                reasons.push(format!(
                    "frames {} to {} sit {} from the nominal mount ({limits})",
                    s.first_frame,
                    s.last_frame,
                    size(&d.translation_mm, &d.rotation_deg)
                ));
            }
        }
    }
    if let Some(f) = fixed.filter(|f| f.frames_over_tolerance > 0) {
        reasons.push(format!(
            "a fixed-offset pipeline errs by more than {} mm within {} m in {} frames (first at frame {})",
            f.tolerance_mm,
            f.contact_range_m,
            f.frames_over_tolerance,
            f.first_frame_over_tolerance.unwrap_or_default()
        ));
    }
    reasons
}

fn warning(code: WarningCode, message: String, advice: &str) -> Warning {
    Warning {
        code,
        message,
        advice: advice.to_string(),
    }
}

/// Warnings, each once, with advice.
pub fn warnings(outcome: &AuditOutcome, analysis: &Analysis) -> Vec<Warning> {
    let mut out = Vec::new();
    let f = &outcome.frames;
    if outcome.inputs.nominal_mount.is_none() {
        out.push(warning(
            WarningCode::NoNominalMount,
            "no nominal mount given: drift is measured within the session only".into(),
            "add `mount:` to the session to test the nominal and size the fixed-offset error",
        ));
    }
    if !outcome.pixel_sigma.consistent {
        if let Some(est) = outcome.pixel_sigma.estimated {
            out.push(warning(
                WarningCode::PixelSigmaMismatch,
                format!(
                    "keypoint noise is {est:.2} px, not the stated {:.2} px",
                    outcome.pixel_sigma.assumed
                ),
                "set the camera's pixel_sigma (or the sigma_px column) to the measured value; every test scales with it",
            ));
        }
    }
    if f.total > 0 && f.rejected * 10 > f.total {
        out.push(warning(
            WarningCode::ManyRejectedFrames,
            format!(
                "{} of {} frames have no probe solution",
                f.rejected, f.total
            ),
            "check the probe detector and the probe model ids; see rejected_by_reason",
        ));
    }
    if f.solved > 0 && f.probe_ill_conditioned * 2 > f.solved {
        out.push(warning(
            WarningCode::ProbeIllConditioned,
            format!(
                "{} of {} probe solutions are ill-conditioned",
                f.probe_ill_conditioned, f.solved
            ),
            "few or nearly collinear probe keypoints: add off-axis features to the probe model",
        ));
    }
    if f.both_solved > 0 && f.drogue_ambiguous * 20 > f.both_solved {
        out.push(warning(
            WarningCode::DrogueAmbiguous,
            format!(
                "{} drogue solutions have a second minimum as good",
                f.drogue_ambiguous
            ),
            "a flat or distant drogue is two-fold ambiguous: add off-plane drogue features",
        ));
    }
    if f.total > 0 && f.both_solved == 0 {
        out.push(warning(
            WarningCode::NoDrogue,
            "no frame has both poses: no probe-to-drogue vector".into(),
            "check the drogue detections and model",
        ));
    }
    match &analysis.drift {
        None => out.push(warning(
            WarningCode::FewFrames,
            format!("only {} solved frames: too few for a change-point search", f.solved),
            "record a longer session",
        )),
        Some(d) if d.noise_factor > 2.0 => out.push(warning(
            WarningCode::CorrelatedNoise,
            format!(
                "the deviation scatters {:.1}x more (in variance) than the per-frame noise explains",
                d.noise_factor
            ),
            "detections err alike frame to frame or the mount vibrates; the tests allow for it, but intervals widen",
        )),
        Some(_) => {}
    }
    let loose = outcome.segments.iter().filter(|s| s.scatter.excess).count();
    if loose > 0 {
        out.push(warning(
            WarningCode::ExcessScatter,
            format!("{loose} segment(s) scatter more than the keypoint noise explains"),
            "a loose or vibrating mount, or correlated detection errors: inspect the bracket",
        ));
    }
    out
}

#[cfg(test)]
mod tests {
    use super::studentised_p_value;

    /// At the 1% point of Hotelling's T² the p-value is 0.01. One-sample form `T² ~ ((n−1)p/(n−p))
    /// F(p, n−p)` (NIST/SEMATECH Dataplot, one-sample Hotelling) with `ν = n − 1 = 55` batches'
    /// degrees of freedom and `p = 6`: `F_0.99(6, 50) = 3.186434` (CHECK_VALUES.md section 2,
    /// scipy.stats.f.ppf), so the critical `d² = 55·6/50 · 3.186434`.
    #[test]
    fn the_hotelling_one_percent_point_has_p_value_one_percent() {
        let critical = 55.0 * 6.0 / 50.0 * 3.186434;
        assert!((studentised_p_value(critical, 6, 56) - 0.01).abs() < 1e-6);
        // The chi-square's own 1% point (16.812 for 6 dof, NIST/SEMATECH e-Handbook 1.3.6.7.4)
        // is far from significant with so few batches...
        assert!(studentised_p_value(16.812, 6, 56) > 0.03);
        // ...and is the limit with many.
        assert!((studentised_p_value(16.812, 6, 10_000_000) - 0.01).abs() < 1e-4);
    }

    #[test]
    fn too_few_batches_or_no_rank_cannot_reject() {
        assert!(studentised_p_value(1e6, 6, 6) >= 1.0);
        assert!(studentised_p_value(1e6, 0, 1000) >= 1.0);
        assert!(studentised_p_value(1e6, 6, 8) < 1e-3);
    }
}
