//! The `simulate` job: a scenario (file or preset) in, a session written to a folder, and a
//! serialisable account of what was written out. No printing.

use std::path::{Path, PathBuf};

use serde::Serialize;

use crate::sim::writer::{self, SessionCounts};
use crate::sim::{self, Scenario, SimError, Simulation};

/// Where the scenario comes from.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum ScenarioSource {
    /// A scenario YAML file.
    Path(PathBuf),
    /// A built-in scenario (see [`sim::preset_names`]).
    Preset(String),
}

/// Validated options of `mountdrift simulate`.
#[derive(Debug, Clone, PartialEq)]
pub struct SimulateOptions {
    pub scenario: ScenarioSource,
    pub out_dir: PathBuf,
    /// Replaces the scenario's seed.
    pub seed: Option<u64>,
    /// Replaces the scenario's duration (s).
    pub duration_s: Option<f64>,
    /// Also write `poses.csv` with the exact true poses of both objects in the camera frame.
    pub poses: bool,
    /// Replaces the scenario's `render_every`: a synthetic image of every Nth frame.
    pub render_every: Option<u64>,
}

impl SimulateOptions {
    /// Options that write the session of `scenario` into `out_dir` unchanged.
    pub fn new(scenario: ScenarioSource, out_dir: impl Into<PathBuf>) -> Self {
        Self {
            scenario,
            out_dir: out_dir.into(),
            seed: None,
            duration_s: None,
            poses: false,
            render_every: None,
        }
    }
}

/// What `simulate` wrote.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SimulateOutcome {
    pub scenario: ScenarioSource,
    pub scenario_name: Option<String>,
    pub seed: u64,
    pub frame_rate_hz: f64,
    pub duration_s: f64,
    pub out_dir: PathBuf,
    /// The manifest to give to `mountdrift audit`.
    pub session: PathBuf,
    pub counts: SessionCounts,
    /// Mount events in the scenario (steps, ramps, vibrations).
    pub mount_events: usize,
    pub nominal_error: bool,
    pub files: Vec<String>,
}

/// Loads the scenario, applies the overrides, simulates and writes the session.
pub fn run(options: &SimulateOptions) -> Result<SimulateOutcome, SimError> {
    let mut scenario = load(&options.scenario)?;
    if let Some(seed) = options.seed {
        scenario.seed = seed;
    }
    if let Some(duration_s) = options.duration_s {
        scenario.duration_s = duration_s;
    }
    if let Some(every) = options.render_every {
        scenario.render_every = Some(every);
    }
    let simulation = Simulation::new(&scenario)?;
    let counts = writer::write_session(&simulation, &scenario, &options.out_dir, options.poses)?;
    Ok(SimulateOutcome {
        scenario: options.scenario.clone(),
        scenario_name: scenario.name.clone(),
        seed: scenario.seed,
        frame_rate_hz: scenario.frame_rate_hz,
        duration_s: scenario.duration_s,
        out_dir: options.out_dir.clone(),
        session: options.out_dir.join(writer::SESSION_FILE),
        counts,
        mount_events: simulation.mount_event_count(),
        nominal_error: scenario.nominal_error.is_some(),
        files: written_files(options.poses, scenario.render_every.is_some()),
    })
}

/// The scenario named by a source: a file (with the files it names) or a preset.
pub fn load(source: &ScenarioSource) -> Result<Scenario, SimError> {
    match source {
        ScenarioSource::Path(path) => Scenario::from_path(Path::new(path)),
        ScenarioSource::Preset(name) => sim::preset(name).ok_or_else(|| SimError::UnknownPreset {
            name: name.clone(),
            available: sim::preset_names().join(", "),
        }),
    }
}

fn written_files(poses: bool, frames: bool) -> Vec<String> {
    let mut files = vec![
        writer::SESSION_FILE,
        writer::CAMERA_FILE,
        writer::PROBE_FILE,
        writer::DROGUE_FILE,
        writer::MOUNT_FILE,
        writer::DETECTIONS_FILE,
        writer::TRUTH_FILE,
        writer::SCENARIO_FILE,
    ];
    if poses {
        files.push(writer::POSES_FILE);
    }
    if frames {
        files.push(crate::sim::render::FRAMES_DIR);
    }
    files.into_iter().map(String::from).collect()
}
