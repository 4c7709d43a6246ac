//! A small simulated session with rendered frames for the overlay tests: a 640x480 camera, a
//! clean scenario (0.4 px white noise, no outliers or losses), a nominal mount off by a few
//! millimetres and tenths of a degree, and an image of every 5th frame. Invented numbers.

#![allow(dead_code)]

use std::path::{Path, PathBuf};

use mountdrift::commands::simulate::{self, ScenarioSource, SimulateOptions};
use tempfile::TempDir;

pub const SCENARIO: &str = r#"
name: overlay bench, small camera, nominal off by a bracket shim
seed: 4242
frame_rate_hz: 10.0
duration_s: 1.0
render_every: 5
camera:
  model: pinhole
  width: 640
  height: 480
  fx: 500.0
  fy: 500.0
  cx: 322.5
  cy: 238.0
  distortion: {k1: -0.08, k2: 0.012, p1: 0.0002, p2: -0.0001, k3: 0.0}
  pixel_sigma: 0.4
probe:
  reference: tip
  points:
    - {id: tip, xyz: [4.1, 0.62, -0.52]}
    - {id: collar, xyz: [3.95, 0.615, -0.515]}
    - {id: mid, xyz: [3.1, 0.59, -0.49]}
    - {id: root, xyz: [2.1, 0.56, -0.46]}
    - {id: fairing_hi, xyz: [1.9, 0.56, -0.62]}
    - {id: fairing_out, xyz: [2.0, 0.70, -0.45]}
    - {id: lamp, xyz: [2.4, 0.48, -0.55]}
drogue:
  reference: hub
  points:
    - {id: rim_a, xyz: [-0.4, 0.28, 0.0]}
    - {id: rim_b, xyz: [-0.4, 0.0, 0.28]}
    - {id: rim_c, xyz: [-0.4, -0.28, 0.0]}
    - {id: rim_d, xyz: [-0.4, 0.0, -0.28]}
    - {id: rim_e, xyz: [-0.4, 0.198, 0.198]}
    - {id: rim_f, xyz: [-0.4, -0.198, -0.198]}
    - {id: hub, xyz: [0.0, 0.0, 0.0]}
    - {id: hub_top, xyz: [0.0, 0.0, -0.09]}
mount:
  position_m: [1.2, 0.25, -0.95]
  yaw_deg: 8.0
  pitch_deg: -13.0
  roll_deg: 0.5
nominal_error: {translation_mm: [2.0, -3.0, 1.5], rotation_deg: [0.4, -0.3, 0.2]}
approach:
  start_range_m: 6.0
  phases:
    - station: {}
noise:
  pixel_sigma: 0.4
"#;

/// The frame the tests overlay (rendered: a multiple of 5).
pub const FRAME: u64 = 5;

/// A simulated session in a temporary folder.
pub struct Bench {
    pub dir: TempDir,
}

impl Bench {
    /// Simulates [`SCENARIO`] (with `poses.csv`) into a fresh folder.
    pub fn new() -> Self {
        let dir = tempfile::tempdir().unwrap();
        let scenario = dir.path().join("scenario-in.yaml");
        std::fs::write(&scenario, SCENARIO).unwrap();
        let mut options =
            SimulateOptions::new(ScenarioSource::Path(scenario), dir.path().join("session"));
        options.poses = true;
        simulate::run(&options).unwrap();
        Self { dir }
    }

    pub fn path(&self, name: &str) -> PathBuf {
        self.dir.path().join("session").join(name)
    }

    pub fn manifest(&self) -> PathBuf {
        self.path("session.yaml")
    }

    /// Writes a copy of the manifest with one line changed (or removed when `to` is empty),
    /// beside the original so its relative paths still resolve.
    pub fn manifest_variant(&self, name: &str, from: &str, to: &str) -> PathBuf {
        let text = std::fs::read_to_string(self.manifest()).unwrap();
        assert!(text.contains(from), "the manifest has no {from:?}");
        let path = self.path(name);
        std::fs::write(&path, text.replacen(from, to, 1)).unwrap();
        path
    }
}

/// The detected pixels (u, v) of one frame, read straight from the detections CSV.
pub fn detected_pixels(csv: &Path, frame: u64) -> Vec<(String, f64, f64)> {
    let mut reader = csv::Reader::from_path(csv).unwrap();
    reader
        .records()
        .map(Result::unwrap)
        .filter(|r| r[0].parse::<u64>().unwrap() == frame)
        .map(|r| {
            (
                r[3].to_string(),
                r[4].parse().unwrap(),
                r[5].parse().unwrap(),
            )
        })
        .collect()
}
