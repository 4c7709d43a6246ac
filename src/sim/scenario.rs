//! The scenario file: what a simulated session contains (geometry, approach, motion, detection
//! noise, mount events), parsed from YAML with unknown keys refused, and validated.
//!
//! The camera, keypoint models and mount may be written inline or as a path relative to the
//! scenario file, in exactly the formats a session uses. `Scenario::from_path` loads those files,
//! so a loaded scenario is self-contained and can be written back out (the simulator stores it
//! beside the session for provenance). This module only describes and checks; `motion` and
//! `noise` turn the description into numbers.

use std::fmt;
use std::marker::PhantomData;
use std::path::{Path, PathBuf};

use serde::de::{self, DeserializeOwned, MapAccess, Visitor};
use serde::{Deserialize, Deserializer, Serialize, Serializer};

use crate::geometry::{MountDeviation, YawPitchRoll};
use crate::session::{CameraFile, ModelFile, MountFile, ObjectKind};

use super::SimError;

/// Largest number of frames a scenario may ask for (about 9 hours at 30 Hz); guards against a
/// mistyped duration or rate filling a disk.
pub const MAX_FRAMES: u64 = 1_000_000_000;

/// A complete simulation scenario (see `docs/scenarios.md`).
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Scenario {
    /// Free text naming the scenario; written into the session manifest's comment.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub name: Option<String>,
    pub seed: u64,
    pub frame_rate_hz: f64,
    pub duration_s: f64,
    pub camera: Source<CameraFile>,
    pub probe: Source<ModelFile>,
    pub drogue: Source<ModelFile>,
    /// The true mount at the start of the session. The nominal mount written for the pipeline is
    /// this one unless `nominal_error` is set.
    pub mount: Source<MountFile>,
    pub approach: Approach,
    #[serde(default)]
    pub drogue_motion: DrogueMotion,
    #[serde(default)]
    pub receiver_motion: ReceiverMotion,
    #[serde(default)]
    pub noise: NoiseSpec,
    /// The nominal mount file's error relative to the true initial mount:
    /// `MountDeviation::between(true_initial, nominal)`.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub nominal_error: Option<DeviationSpec>,
    /// Changes of the true mount during the session, applied in list order.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub mount_events: Vec<MountEvent>,
    /// Render a synthetic image of every Nth frame (frame numbers divisible by N) into the
    /// session's `frames` folder; no images when absent.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub render_every: Option<u64>,
    /// Where the scenario came from (a file path or a preset), for error messages.
    #[serde(skip)]
    pub origin: String,
}

/// Content given inline or as a path relative to the scenario file.
#[derive(Debug, Clone, PartialEq)]
pub enum Source<T> {
    Path(PathBuf),
    Inline(T),
}

/// The range profile: the drogue reference ahead of the probe reference along body x.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Approach {
    pub start_range_m: f64,
    pub phases: Vec<Phase>,
}

/// One leg of the approach. A hold without `duration_s` lasts to the end and must come last.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Phase {
    /// Station-keeping astern of the drogue at the current range.
    Station(Hold),
    /// Closing at a constant speed to `to_range_m` (default 0: contact).
    Close(Move),
    /// In contact (range 0), the coupling latched.
    Contact(Hold),
    /// Backing off at a constant speed to `to_range_m` (required).
    BackOff(Move),
}

#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Hold {
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub duration_s: Option<f64>,
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Move {
    pub speed_m_s: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to_range_m: Option<f64>,
}

/// The drogue's own motion relative to where the approach puts it.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DrogueMotion {
    /// Slow random walk of the position (a mean-reverting Ornstein-Uhlenbeck process).
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub wander: Option<Wander>,
    /// Low-frequency position sinusoids; amplitudes in m along body x, y, z.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub sway_m: Vec<Sinusoid>,
    /// Attitude oscillation of the basket; amplitudes in deg of yaw, pitch, roll.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub oscillation_deg: Vec<Sinusoid>,
    /// Position wander and sway fade linearly to zero over this last stretch of range, so a
    /// latched drogue moves with the probe.
    #[serde(default = "default_fade_range_m")]
    pub fade_range_m: f64,
}

fn default_fade_range_m() -> f64 {
    2.0
}

impl Default for DrogueMotion {
    fn default() -> Self {
        Self {
            wander: None,
            sway_m: Vec::new(),
            oscillation_deg: Vec::new(),
            fade_range_m: default_fade_range_m(),
        }
    }
}

/// Ornstein-Uhlenbeck wander: stationary standard deviation per body axis and time constant.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Wander {
    pub sigma_m: [f64; 3],
    pub time_constant_s: f64,
}

/// `amplitude[i] · sin(2π f t + phase[i])` on three axes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Sinusoid {
    pub amplitude: [f64; 3],
    pub frequency_hz: f64,
    #[serde(default)]
    pub phase_deg: [f64; 3],
}

/// Small attitude motion of the receiver relative to the tanker, seen as a rotation of the
/// drogue's relative position and attitude about the probe reference.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ReceiverMotion {
    /// Sinusoids in deg of yaw, pitch, roll.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub attitude_deg: Vec<Sinusoid>,
}

/// Keypoint detection errors. Everything defaults to zero: no noise, no losses.
#[derive(Debug, Clone, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct NoiseSpec {
    /// White Gaussian noise per pixel axis (px, 1 sigma).
    #[serde(default)]
    pub pixel_sigma: f64,
    /// Frame-to-frame correlated error per keypoint.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub correlated: Option<Correlated>,
    /// Gross errors: a share of keypoints displaced by a large error.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub outliers: Option<Outliers>,
    /// Probability that a keypoint is missing from a frame.
    #[serde(default)]
    pub dropout_probability: f64,
    /// Probability that a whole frame is missing.
    #[serde(default)]
    pub frame_missing_probability: f64,
    /// Intervals in which named points are hidden.
    #[serde(default, skip_serializing_if = "Vec::is_empty")]
    pub occlusions: Vec<Occlusion>,
    /// The `sigma_px` written with each detection. Default: the total Gaussian sigma
    /// `sqrt(pixel_sigma² + correlated.sigma_px²)`, or the camera's `pixel_sigma` when that is 0.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub stated_sigma_px: Option<f64>,
}

/// AR(1) error per keypoint and pixel axis: `e_k = φ e_{k-1} + sqrt(1 − φ²) σ ε_k`, so `σ` is
/// its stationary standard deviation.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Correlated {
    pub sigma_px: f64,
    pub coefficient: f64,
}

/// A keypoint is an outlier with probability `fraction`; it is displaced in a uniformly random
/// direction by a distance uniform in `[min_px, max_px]`.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Outliers {
    pub fraction: f64,
    pub min_px: f64,
    pub max_px: f64,
}

/// Points of one object hidden during `[from_s, to_s)`; all of its points when `points` is absent.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct Occlusion {
    pub object: ObjectKind,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub points: Option<Vec<String>>,
    pub from_s: f64,
    pub to_s: f64,
}

/// A mount deviation as written: body translation (mm) and yaw/pitch/roll (deg).
#[derive(Debug, Clone, Copy, PartialEq, Default, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct DeviationSpec {
    #[serde(default)]
    pub translation_mm: [f64; 3],
    #[serde(default)]
    pub rotation_deg: [f64; 3],
}

impl DeviationSpec {
    /// The deviation scaled by `fraction` (angles scaled as Z-Y-X angles), in metres and radians.
    pub fn scaled(&self, fraction: f64) -> MountDeviation {
        let [yaw, pitch, roll] = self.rotation_deg.map(|a| (a * fraction).to_radians());
        MountDeviation {
            translation_m: nalgebra::Vector3::from(self.translation_mm) * (fraction / 1000.0),
            rotation: YawPitchRoll::new(yaw, pitch, roll),
        }
    }
}

/// A change of the true mount.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum MountEvent {
    /// A sudden shift (a bracket slip) at `at_s`.
    Step(StepEvent),
    /// A linear creep from `from_s` to `to_s`, reaching the full deviation at `to_s`.
    Ramp(RampEvent),
    /// A sinusoidal flex about the current mount (amplitude per axis).
    Vibration(VibrationEvent),
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct StepEvent {
    pub at_s: f64,
    #[serde(default)]
    pub translation_mm: [f64; 3],
    #[serde(default)]
    pub rotation_deg: [f64; 3],
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct RampEvent {
    pub from_s: f64,
    pub to_s: f64,
    #[serde(default)]
    pub translation_mm: [f64; 3],
    #[serde(default)]
    pub rotation_deg: [f64; 3],
}

#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct VibrationEvent {
    #[serde(default)]
    pub amplitude_mm: [f64; 3],
    #[serde(default)]
    pub amplitude_deg: [f64; 3],
    pub frequency_hz: f64,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub from_s: Option<f64>,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub to_s: Option<f64>,
}

impl Scenario {
    /// Reads a scenario file and the files it names (relative to its folder).
    pub fn from_path(path: &Path) -> Result<Self, SimError> {
        let text = std::fs::read_to_string(path).map_err(|source| SimError::Read {
            path: path.to_path_buf(),
            source,
        })?;
        let base = path.parent().unwrap_or_else(|| Path::new(""));
        Self::from_yaml(&text, path, base)
    }

    /// Parses scenario text; `path` names it in errors, `base` resolves relative file entries.
    pub fn from_yaml(text: &str, path: &Path, base: &Path) -> Result<Self, SimError> {
        let mut scenario: Scenario = parse_yaml(text, path)?;
        scenario.origin = path.display().to_string();
        scenario.camera.resolve(base)?;
        scenario.probe.resolve(base)?;
        scenario.drogue.resolve(base)?;
        scenario.mount.resolve(base)?;
        Ok(scenario)
    }

    /// Number of frames: `round(duration_s · frame_rate_hz)`, numbered from 0.
    pub fn frame_count(&self) -> u64 {
        (self.duration_s * self.frame_rate_hz).round() as u64
    }

    /// The scenario as YAML (all sources inline after loading).
    pub fn to_yaml(&self) -> Result<String, SimError> {
        serde_saphyr::to_string(self).map_err(|e| SimError::Serialize {
            what: "scenario".into(),
            message: e.to_string(),
        })
    }
}

/// Parses YAML into `T`, naming the file, line and column on failure.
pub(crate) fn parse_yaml<T: DeserializeOwned>(text: &str, path: &Path) -> Result<T, SimError> {
    serde_saphyr::from_str(text).map_err(|e| {
        let location = e.location();
        let (line, column) = (location.map(|l| l.line()), location.map(|l| l.column()));
        let mut message = e.without_snippet().to_string();
        // The location goes in front of the message; drop the copy the parser appends.
        if let (Some(l), Some(c)) = (line, column) {
            let suffix = format!(" at line {l}, column {c}");
            if let Some(stripped) = message.strip_suffix(&suffix) {
                message = stripped.to_string();
            }
        }
        SimError::Parse {
            path: path.to_path_buf(),
            line,
            column,
            message,
        }
    })
}

impl<T: DeserializeOwned> Source<T> {
    /// Loads a path entry (relative to `base`) so the source becomes inline.
    pub fn resolve(&mut self, base: &Path) -> Result<(), SimError> {
        if let Source::Path(relative) = self {
            let path = base.join(&*relative);
            let text = std::fs::read_to_string(&path).map_err(|source| SimError::Read {
                path: path.clone(),
                source,
            })?;
            *self = Source::Inline(parse_yaml(&text, &path)?);
        }
        Ok(())
    }
}

impl<T> Source<T> {
    /// The inline content; a path that was never loaded is an error naming the field.
    pub fn inline(&self, field: &str, origin: &str) -> Result<&T, SimError> {
        match self {
            Source::Inline(content) => Ok(content),
            Source::Path(path) => Err(SimError::Unresolved {
                origin: origin.to_string(),
                field: field.to_string(),
                path: path.clone(),
            }),
        }
    }
}

impl<T: Serialize> Serialize for Source<T> {
    fn serialize<S: Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        match self {
            Source::Path(path) => serializer.serialize_str(&path.to_string_lossy()),
            Source::Inline(content) => content.serialize(serializer),
        }
    }
}

impl<'de, T: Deserialize<'de>> Deserialize<'de> for Source<T> {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_any(SourceVisitor(PhantomData))
    }
}

/// Reads a string as a path and a mapping as inline content (keeping the inner type's own errors
/// and locations, which an untagged enum would lose).
struct SourceVisitor<T>(PhantomData<T>);

impl<'de, T: Deserialize<'de>> Visitor<'de> for SourceVisitor<T> {
    type Value = Source<T>;

    fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
        f.write_str("a file path relative to the scenario, or the content inline as a mapping")
    }

    fn visit_str<E: de::Error>(self, v: &str) -> Result<Self::Value, E> {
        Ok(Source::Path(PathBuf::from(v)))
    }

    fn visit_map<A: MapAccess<'de>>(self, map: A) -> Result<Self::Value, A::Error> {
        T::deserialize(de::value::MapAccessDeserializer::new(map)).map(Source::Inline)
    }
}
