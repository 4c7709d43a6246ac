//! One session of a sensitivity study: the scenario with its own seed and (perhaps) an injected
//! step, simulated and audited in memory, and what its change points say about the step.

use crate::commands::audit::{self, AuditError, AuditOutcome, WarningCode};
use crate::session::Policy;
use crate::sim::scenario::{MountEvent, StepEvent};
use crate::sim::{Scenario, Simulation};
use crate::stats::drift::Calibrators;
use crate::stats::penalty::stream_seed;

use super::outcome::Axis;

/// What is done to the clean scenario.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Injection {
    /// Nothing: the false-alarm cell.
    Clean,
    /// A step of `size` (mm or deg) along `axis` at the study's step frame.
    Step { axis: Axis, size: f64 },
}

/// Where and how a step is judged detected.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StepWindow {
    pub step_frame: u64,
    pub step_time_s: f64,
    pub tolerance_frames: u64,
}

/// What one audited session says.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TrialResult {
    pub change_points: usize,
    /// Matched change point's frame − step frame (signed), when one matched.
    pub offline_delay_frames: Option<i64>,
    /// Online alarm frame − step frame, when the audit reported an alarm at or after the step.
    pub online_delay_frames: Option<i64>,
    /// Whether the audit's change-point search ran (enough solved frames).
    pub searched: bool,
}

/// The seed of one session, from the base seed, the trial index, the axis and the step size
/// (SplitMix64 chained over each), so no session's noise depends on how the work is scheduled
/// or on which other cells the study contains.
pub fn trial_seed(base_seed: u64, trial: u64, injection: Injection) -> u64 {
    let (axis_code, size_bits) = match injection {
        Injection::Clean => (0, 0),
        Injection::Step { axis, size } => (1 + axis.index() as u64, size.to_bits()),
    };
    let seed = stream_seed(base_seed, axis_code);
    stream_seed(stream_seed(seed, size_bits), trial)
}

/// The session's scenario: the clean scenario with the trial's seed and the injected step.
pub fn trial_scenario(
    clean: &Scenario,
    window: &StepWindow,
    seed: u64,
    injection: Injection,
) -> Scenario {
    let mut scenario = clean.clone();
    scenario.seed = seed;
    if let Injection::Step { axis, size } = injection {
        let mut step = StepEvent {
            at_s: window.step_time_s,
            translation_mm: [0.0; 3],
            rotation_deg: [0.0; 3],
        };
        match axis.index() {
            i @ 0..=2 => step.translation_mm[i] = size,
            i => step.rotation_deg[i - 3] = size,
        }
        scenario.mount_events = vec![MountEvent::Step(step)];
    }
    scenario
}

/// Simulates and audits one session in memory.
pub fn run_trial(
    scenario: &Scenario,
    window: &StepWindow,
    policy: &Policy,
    calibrators: &Calibrators,
) -> Result<TrialResult, AuditError> {
    let simulation = Simulation::new(scenario)?;
    let setup = audit::Setup::from_simulation(&simulation, "sensitivity trial (simulated)");
    let frames = simulation.frames().map(audit::simulated);
    let outcome = audit::audit_frames_with(&setup, frames, policy, calibrators, &|_| {})?;
    Ok(score(&outcome, window))
}

/// The change point nearest the step among those that match it: within the tolerance of the
/// step frame, or with a 95% frame interval that contains it.
pub fn score(outcome: &AuditOutcome, window: &StepWindow) -> TrialResult {
    let step = window.step_frame as i64;
    let offline_delay_frames = outcome
        .change_points
        .iter()
        .filter(|c| {
            let offset = c.frame as i64 - step;
            let covers =
                c.frame_ci95[0] <= window.step_frame && window.step_frame <= c.frame_ci95[1];
            offset.unsigned_abs() <= window.tolerance_frames || covers
        })
        .map(|c| c.frame as i64 - step)
        .min_by_key(|offset| offset.unsigned_abs());
    let online_delay_frames = outcome
        .online_alarm
        .as_ref()
        .filter(|a| a.frame >= window.step_frame)
        .map(|a| a.frame as i64 - step);
    TrialResult {
        change_points: outcome.change_points.len(),
        offline_delay_frames,
        online_delay_frames,
        searched: !outcome
            .warnings
            .iter()
            .any(|w| w.code == WarningCode::FewFrames),
    }
}
