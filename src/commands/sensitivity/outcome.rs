//! What a sensitivity study found, as data: the JSON file is exactly this struct, and the
//! terminal table, CSV and plots read it and compute nothing of their own. Units are in the
//! field names, or in `unit` where one field serves millimetres and degrees alike.

use serde::Serialize;

use crate::commands::simulate::ScenarioSource;

use super::ladder::MinDetectable;
use super::proportion::IntervalMethod;

/// Version of the layout; bump when a field changes meaning or disappears.
pub const SENSITIVITY_SCHEMA: &str = "mountdrift.sensitivity.v1";

/// One of the six mount directions a step is injected along (DESIGN section 2: translation in
/// body axes, rotation as Z-Y-X yaw, pitch, roll of the boresight frame).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum Axis {
    X,
    Y,
    Z,
    Yaw,
    Pitch,
    Roll,
}

impl Axis {
    pub const ALL: [Axis; 6] = [
        Axis::X,
        Axis::Y,
        Axis::Z,
        Axis::Yaw,
        Axis::Pitch,
        Axis::Roll,
    ];

    /// Position in the report's deviation 6-vector (x, y, z mm; yaw, pitch, roll deg).
    pub fn index(self) -> usize {
        self as usize
    }

    pub fn name(self) -> &'static str {
        match self {
            Axis::X => "x",
            Axis::Y => "y",
            Axis::Z => "z",
            Axis::Yaw => "yaw",
            Axis::Pitch => "pitch",
            Axis::Roll => "roll",
        }
    }

    /// The axis of this name (`x`, `y`, `z`, `yaw`, `pitch`, `roll`, any case).
    pub fn from_name(name: &str) -> Option<Axis> {
        Axis::ALL
            .into_iter()
            .find(|a| a.name().eq_ignore_ascii_case(name.trim()))
    }

    pub fn is_translation(self) -> bool {
        self.index() < 3
    }

    /// `mm` for translations, `deg` for rotations.
    pub fn unit(self) -> &'static str {
        if self.is_translation() {
            "mm"
        } else {
            "deg"
        }
    }
}

/// Where the detection delay comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DelaySource {
    /// The audit's real-time detector: alarm frame − step frame.
    OnlineAlarm,
    /// No real-time alarm was reported: the offline change point's frame − step frame.
    OfflineChangePoint,
}

impl DelaySource {
    /// A few words for plot titles.
    pub fn label(self) -> &'static str {
        match self {
            DelaySource::OnlineAlarm => "online alarm",
            DelaySource::OfflineChangePoint => "offline change point",
        }
    }

    pub fn describe(self) -> &'static str {
        match self {
            DelaySource::OnlineAlarm => "online alarm frame minus step frame",
            DelaySource::OfflineChangePoint => {
                "offline change-point frame minus step frame (the audit reported no online alarm)"
            }
        }
    }
}

/// The study's answer.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SensitivityOutcome {
    pub schema: &'static str,
    pub tool_version: &'static str,
    pub scenario: StudiedScenario,
    /// Sessions simulated and audited per cell (the clean cell and each axis and size).
    pub trials: u64,
    /// Sessions audited in all.
    pub sessions: u64,
    /// Confidence level of every interval.
    pub level: f64,
    /// Detection probability the minimum detectable shift is read at.
    pub power: f64,
    pub interval_method: IntervalMethod,
    pub interval_reference: String,
    pub detection: DetectionRule,
    pub delay_source: DelaySource,
    pub false_alarm: FalseAlarm,
    pub axes: Vec<AxisSensitivity>,
    /// The change-point penalty calibration shared by all sessions.
    pub calibration: CalibrationUsed,
    pub warnings: Vec<SensitivityWarning>,
}

/// The scenario the sessions were drawn from.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct StudiedScenario {
    pub source: ScenarioSource,
    pub name: Option<String>,
    /// Every session's seed is derived from this one, the trial index, the axis and the size.
    pub base_seed: u64,
    pub frame_rate_hz: f64,
    pub duration_s: f64,
    pub frames: u64,
    /// Mount events of the scenario left out of every session (the study injects its own step).
    pub removed_mount_events: u64,
}

/// When an injected step counts as detected.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DetectionRule {
    /// The first frame with the shifted mount (mid-session).
    pub step_frame: u64,
    pub step_time_s: f64,
    /// A change point this close to the step frame (either side) detects it.
    pub tolerance_frames: u64,
    pub rule: String,
}

/// Change points on clean sessions (the scenario without mount events).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct FalseAlarm {
    /// The false-alarm rate the audit's penalty is set for.
    pub target_rate: f64,
    pub trials: u64,
    /// Sessions with at least one change point.
    pub sessions_with_change_point: u64,
    pub rate: f64,
    pub rate_ci95: Option<[f64; 2]>,
    /// Sessions with too few solved frames for a change-point search.
    pub unsearched: u64,
}

/// Detection of steps along one axis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct AxisSensitivity {
    pub axis: Axis,
    /// Unit of `size` and of the minimum detectable shift: `mm` or `deg`.
    pub unit: &'static str,
    pub points: Vec<ShiftPoint>,
    /// Read off the monotone fit of the detection probabilities at `power`.
    pub min_detectable: MinDetectable,
}

/// One step size along one axis.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ShiftPoint {
    pub size: f64,
    pub trials: u64,
    /// Sessions where a change point matched the step (see `detection`).
    pub detected: u64,
    pub probability: f64,
    pub probability_ci95: Option<[f64; 2]>,
    /// The probability after the monotone fit over the ladder (pool-adjacent-violators).
    pub monotone_probability: f64,
    /// Sessions with any change point, matched to the step or not.
    pub sessions_with_change_point: u64,
    /// Median delay over the sessions that have one (see `delay_source`); `None` if none do.
    pub median_delay_frames: Option<f64>,
    pub median_delay_s: Option<f64>,
    /// Sessions with too few solved frames for a change-point search.
    pub unsearched: u64,
}

/// The penalty calibration settings used by every audit of the study.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct CalibrationUsed {
    pub runs: u64,
    pub seed: u64,
    pub max_simulated_samples: u64,
}

/// Something a person should know about the study, with what to do about it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SensitivityWarning {
    pub code: SensitivityWarningCode,
    pub message: String,
    pub advice: String,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum SensitivityWarningCode {
    /// The false-alarm rate is significantly above the target.
    FalseAlarmsAboveTarget,
    /// Too few clean sessions to show a rate as low as the target.
    TooFewTrialsForTarget,
    /// Some sessions had too few solved frames for a change-point search.
    UnsearchedSessions,
    /// Some axis never reached the power on its ladder.
    PowerNotReached,
}
