//! Seeded synthetic sessions with known truth: one camera on the receiver sees its own probe and
//! the tanker's drogue while the true camera mount may slip, creep or vibrate.
//!
//! A [`Scenario`] (YAML, see `docs/scenarios.md`) describes geometry, approach, motion,
//! detection noise and mount events. [`Simulation::new`] validates it; [`Simulation::frames`]
//! yields the frames in order with their detections and truth, from seeded random streams, so the
//! same seed gives the same session. [`writer`] streams a session to disk in the formats of
//! DESIGN section 3. This module never prints and never reads the clock.

pub mod csvfmt;
pub mod imaging;
pub mod motion;
pub mod noise;
pub mod presets;
pub mod render;
pub mod scenario;
mod validate;
pub mod writer;

use std::path::PathBuf;

use nalgebra::{Isometry3, Vector3};
use rand::RngExt;

use crate::camera::Camera;
use crate::geometry::Mount;
use crate::model::{KeypointModel, ModelError};
use crate::session::{CameraFileError, FrameDetections, ObjectKind, Observation};

use imaging::Imager;
use motion::{DroguePath, MountTimeline, WanderState};
use noise::{DetectionNoise, NoiseModel, PointError};
pub use presets::{preset, preset_names};
pub use scenario::Scenario;
use validate::Checker;

/// Why a scenario could not be loaded or simulated, or a session not written.
#[derive(Debug, thiserror::Error)]
pub enum SimError {
    #[error("cannot read {path}: {source}", path = path.display())]
    Read {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error("{}: {message}", location(path, *line, *column))]
    Parse {
        path: PathBuf,
        line: Option<u64>,
        column: Option<u64>,
        message: String,
    },
    #[error("{origin}: {field}: {reason}")]
    Invalid {
        origin: String,
        field: String,
        reason: String,
    },
    #[error("{origin}: {field} names the file {path} which was never loaded (load the scenario with Scenario::from_path)", path = path.display())]
    Unresolved {
        origin: String,
        field: String,
        path: PathBuf,
    },
    #[error("{origin}: camera: {source}")]
    Camera {
        origin: String,
        source: CameraFileError,
    },
    #[error("{origin}: {field}: {source}")]
    Model {
        origin: String,
        field: &'static str,
        source: ModelError,
    },
    #[error("unknown preset '{name}' (available: {available})")]
    UnknownPreset { name: String, available: String },
    #[error("cannot write {path}: {source}", path = path.display())]
    Write {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error("cannot serialise the {what}: {message}")]
    Serialize { what: String, message: String },
}

fn location(path: &std::path::Path, line: Option<u64>, column: Option<u64>) -> String {
    match (line, column) {
        (Some(l), Some(c)) => format!("{}, line {l}, column {c}", path.display()),
        (Some(l), None) => format!("{}, line {l}", path.display()),
        _ => path.display().to_string(),
    }
}

/// The truth of one frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TruthFrame {
    pub frame: u64,
    pub time_s: f64,
    /// The true mount (camera pose in the body frame).
    pub mount: Mount,
    /// True probe-to-drogue vector in the body frame, `x_B(drogue ref) − x_B(probe ref)` (m).
    pub vector_m: Vector3<f64>,
    /// True `T_BD`: the drogue model frame in the body frame.
    pub body_from_drogue: Isometry3<f64>,
}

impl TruthFrame {
    /// `T_CB`: the probe (body frame) seen from the camera.
    pub fn camera_from_body(&self) -> Isometry3<f64> {
        self.mount.body_from_camera().inverse()
    }

    /// `T_CD`: the drogue seen from the camera.
    pub fn camera_from_drogue(&self) -> Isometry3<f64> {
        self.camera_from_body() * self.body_from_drogue
    }
}

/// One simulated frame: what the detector reports and what really happened.
#[derive(Debug, Clone, PartialEq)]
pub struct SimFrame {
    pub detections: FrameDetections,
    pub truth: TruthFrame,
}

/// A validated scenario, ready to generate frames.
#[derive(Debug, Clone, PartialEq)]
pub struct Simulation {
    imager: Imager,
    probe: KeypointModel,
    drogue: KeypointModel,
    nominal_mount: Mount,
    timeline: MountTimeline,
    path: DroguePath,
    noise: NoiseModel,
    seed: u64,
    frame_rate_hz: f64,
    frame_count: u64,
}

impl Simulation {
    /// Validates every part of the scenario; later generation cannot fail.
    pub fn new(scenario: &Scenario) -> Result<Self, SimError> {
        let origin = scenario_origin(scenario);
        let check = Checker::new(&origin);
        let frame_count = checked_frame_count(scenario, &check)?;
        let camera = load_camera(scenario, &origin)?;
        let probe = load_model(scenario, "probe", &origin)?;
        let drogue = load_model(scenario, "drogue", &origin)?;
        let (timeline, nominal_mount) = mount_story(scenario, &origin, &check)?;
        let path = DroguePath::new(
            &scenario.approach,
            &scenario.drogue_motion,
            &scenario.receiver_motion,
            &check,
        )?;
        let noise = NoiseModel::new(&scenario.noise, &probe, &drogue, camera.pixel_sigma, &check)?;
        Ok(Self {
            imager: Imager::new(camera),
            probe,
            drogue,
            nominal_mount,
            timeline,
            path,
            noise,
            seed: scenario.seed,
            frame_rate_hz: scenario.frame_rate_hz,
            frame_count,
        })
    }

    pub fn camera(&self) -> &Camera {
        self.imager.camera()
    }

    pub fn probe(&self) -> &KeypointModel {
        &self.probe
    }

    pub fn drogue(&self) -> &KeypointModel {
        &self.drogue
    }

    /// The mount the pipeline believes (written as `mount.yaml`).
    pub fn nominal_mount(&self) -> &Mount {
        &self.nominal_mount
    }

    /// The true mount at the start of the session.
    pub fn true_initial_mount(&self) -> &Mount {
        self.timeline.initial()
    }

    /// The true mount at `t_s`.
    pub fn true_mount_at(&self, t_s: f64) -> Mount {
        self.timeline.mount_at(t_s)
    }

    /// Range of the drogue ahead of the probe at `t_s` (m), before wander and sway.
    pub fn range_m(&self, t_s: f64) -> f64 {
        self.path.range_m(t_s)
    }

    pub fn seed(&self) -> u64 {
        self.seed
    }

    pub fn frame_rate_hz(&self) -> f64 {
        self.frame_rate_hz
    }

    /// Frames in the session, including those that will be missing.
    pub fn frame_count(&self) -> u64 {
        self.frame_count
    }

    pub fn mount_event_count(&self) -> usize {
        self.timeline.event_count()
    }

    /// The `sigma_px` stated with every detection.
    pub fn stated_sigma_px(&self) -> f64 {
        self.noise.stated_sigma_px()
    }

    /// The frames in order. Missing frames are skipped, leaving gaps in the frame numbers.
    pub fn frames(&self) -> SimFrames<'_> {
        let wander = self.path.wander(1.0 / self.frame_rate_hz);
        let slots = self.probe.len() + self.drogue.len();
        let detection_rng = noise::stream_rng(self.seed, noise::STREAM_DETECTION);
        SimFrames {
            sim: self,
            next_frame: 0,
            wander,
            wander_rng: noise::stream_rng(self.seed, noise::STREAM_WANDER),
            noise: DetectionNoise::new(&self.noise, detection_rng, slots),
            errors: Vec::with_capacity(slots),
            slots,
        }
    }

    /// Truth and detections of one frame from its wander and keypoint errors.
    fn render(&self, frame: u64, wander_m: &Vector3<f64>, errors: &[PointError]) -> SimFrame {
        let time_s = frame as f64 / self.frame_rate_hz;
        let mount = self.timeline.mount_at(time_s);
        let pose = self.path.pose(
            time_s,
            wander_m,
            &self.probe.reference_point(),
            &self.drogue.reference_point(),
        );
        let truth = TruthFrame {
            frame,
            time_s,
            mount,
            vector_m: pose.vector_m,
            body_from_drogue: pose.body_from_drogue,
        };
        let (probe_errors, drogue_errors) = errors.split_at(self.probe.len());
        let detections = FrameDetections {
            frame,
            time_s,
            probe: self.observe(
                ObjectKind::Probe,
                &truth.camera_from_body(),
                probe_errors,
                time_s,
            ),
            drogue: self.observe(
                ObjectKind::Drogue,
                &truth.camera_from_drogue(),
                drogue_errors,
                time_s,
            ),
        };
        SimFrame { detections, truth }
    }

    /// The keypoints of one object that a detector reports: visible to the lens, not occluded or
    /// dropped, and on the sensor after the detection error is added.
    fn observe(
        &self,
        object: ObjectKind,
        camera_from_model: &Isometry3<f64>,
        errors: &[PointError],
        time_s: f64,
    ) -> Vec<Observation> {
        let model = match object {
            ObjectKind::Probe => &self.probe,
            ObjectKind::Drogue => &self.drogue,
        };
        let sigma_px = self.noise.stated_sigma_px();
        let camera = self.imager.camera();
        model
            .points()
            .iter()
            .zip(errors)
            .enumerate()
            .filter(|(i, (_, e))| !e.dropped && !self.noise.occluded(object, *i, time_s))
            .filter_map(|(point, (p, e))| {
                let p_c = camera_from_model * nalgebra::Point3::from(p.xyz_m);
                let ideal = self.imager.ideal_pixel(&p_c.coords)?;
                let px = ideal + e.offset_px;
                camera.in_image(&px).then_some(Observation {
                    point,
                    px,
                    sigma_px,
                })
            })
            .collect()
    }
}

fn checked_frame_count(scenario: &Scenario, check: &Checker) -> Result<u64, SimError> {
    check.positive(scenario.frame_rate_hz, "frame_rate_hz")?;
    check.positive(scenario.duration_s, "duration_s")?;
    let frame_count = scenario.frame_count();
    check.require(
        (1..=scenario::MAX_FRAMES).contains(&frame_count),
        "duration_s",
        format!(
            "gives {frame_count} frames; at least 1 and at most {} are allowed",
            scenario::MAX_FRAMES
        ),
    )?;
    Ok(frame_count)
}

/// The true mount over time and the nominal mount written for the pipeline.
fn mount_story(
    scenario: &Scenario,
    origin: &str,
    check: &Checker,
) -> Result<(MountTimeline, Mount), SimError> {
    let file = scenario.mount.inline("mount", origin)?;
    check.finite3(file.position_m, "mount.position_m")?;
    let angles = [file.yaw_deg, file.pitch_deg, file.roll_deg];
    check.finite3(angles, "mount yaw_deg, pitch_deg, roll_deg")?;
    let true_initial = file.to_mount();
    let mut phase_rng = noise::stream_rng(scenario.seed, noise::STREAM_VIBRATION);
    let mut next_phase = || phase_rng.random::<f64>() * std::f64::consts::TAU;
    let events = &scenario.mount_events;
    let timeline = MountTimeline::new(true_initial, events, &mut next_phase, check)?;
    let nominal = motion::nominal_mount(&true_initial, scenario.nominal_error.as_ref(), check)?;
    Ok((timeline, nominal))
}

fn scenario_origin(scenario: &Scenario) -> String {
    if !scenario.origin.is_empty() {
        scenario.origin.clone()
    } else if let Some(name) = &scenario.name {
        format!("scenario '{name}'")
    } else {
        "scenario".to_string()
    }
}

fn load_camera(scenario: &Scenario, origin: &str) -> Result<Camera, SimError> {
    let file = scenario.camera.inline("camera", origin)?;
    file.to_camera().map_err(|source| SimError::Camera {
        origin: origin.to_string(),
        source,
    })
}

fn load_model(
    scenario: &Scenario,
    field: &'static str,
    origin: &str,
) -> Result<KeypointModel, SimError> {
    let source = match field {
        "probe" => &scenario.probe,
        _ => &scenario.drogue,
    };
    source
        .inline(field, origin)?
        .to_model()
        .map_err(|source| SimError::Model {
            origin: origin.to_string(),
            field,
            source,
        })
}

/// Iterator over the frames of a [`Simulation`]; holds the random walk and detection-error
/// states, so memory stays bounded however long the session.
#[derive(Debug, Clone)]
pub struct SimFrames<'a> {
    sim: &'a Simulation,
    next_frame: u64,
    wander: WanderState,
    wander_rng: rand_pcg::Pcg64Mcg,
    noise: DetectionNoise<'a>,
    errors: Vec<PointError>,
    slots: usize,
}

impl Iterator for SimFrames<'_> {
    type Item = SimFrame;

    fn next(&mut self) -> Option<SimFrame> {
        while self.next_frame < self.sim.frame_count {
            let frame = self.next_frame;
            self.next_frame += 1;
            // Every frame advances every random process, missing or not.
            let wander_m = self.wander.step(&mut self.wander_rng);
            let missing = self.noise.frame_missing();
            self.errors.clear();
            for slot in 0..self.slots {
                let e = self.noise.point_error(slot);
                self.errors.push(e);
            }
            if !missing {
                return Some(self.sim.render(frame, &wander_m, &self.errors));
            }
        }
        None
    }
}
