//! The simulator against OpenCV: noise-free keypoints of two committed reference scenarios (a
//! pinhole camera with Brown-Conrady distortion and a Kannala-Brandt fisheye with skew) equal
//! the projections `cv2.projectPoints` / `cv2.fisheye.projectPoints` compute from the same true
//! poses. The OpenCV values come from `scripts/opencv_sim_reference.py` (opencv-python-headless
//! 5.0.0.93), committed in `fixtures/sim/opencv_sim_reference.json`; the sessions it read are
//! committed beside the scenarios and must be exactly what the simulator writes today.
//!
//! After an intended change of the simulator's output, rewrite the committed sessions with
//! `MOUNTDRIFT_BLESS=1 cargo test --test sim_opencv` and rerun the script.

use std::path::{Path, PathBuf};

use mountdrift::commands::simulate::{self, ScenarioSource, SimulateOptions};
use mountdrift::sim::{Scenario, Simulation};
use serde_json::Value;

const CASES: [&str; 2] = ["opencv_pinhole", "opencv_fisheye"];

/// Agreement required with OpenCV (px): both evaluate the same closed-form model in double
/// precision, so only rounding separates them.
const OPENCV_TOLERANCE_PX: f64 = 1e-6;

fn fixtures() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("fixtures/sim")
}

fn simulate_into(case: &str, out_dir: &Path) {
    let scenario = ScenarioSource::Path(fixtures().join(case).join("scenario.yaml"));
    let mut options = SimulateOptions::new(scenario, out_dir);
    options.poses = true;
    simulate::run(&options).expect("reference scenario simulates");
}

#[test]
fn committed_sessions_are_what_the_simulator_writes() {
    // Source: the sessions committed under fixtures/sim/*/session, which the OpenCV script read.
    for case in CASES {
        let committed = fixtures().join(case).join("session");
        if std::env::var_os("MOUNTDRIFT_BLESS").is_some() {
            simulate_into(case, &committed);
            continue;
        }
        let fresh = tempfile::tempdir().unwrap();
        simulate_into(case, fresh.path());
        let mut names: Vec<_> = std::fs::read_dir(fresh.path())
            .unwrap()
            .map(|e| e.unwrap().file_name())
            .collect();
        names.sort();
        assert_eq!(names.len(), 9, "{case}: session files");
        for name in names {
            let new = std::fs::read(fresh.path().join(&name)).unwrap();
            let old = std::fs::read(committed.join(&name))
                .unwrap_or_else(|e| panic!("{case}: committed {name:?} missing: {e}"));
            assert!(
                new == old,
                "{case}: {name:?} differs from the committed session"
            );
        }
    }
}

fn load_reference() -> Value {
    let text = std::fs::read_to_string(fixtures().join("opencv_sim_reference.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn pixel(value: &Value) -> [f64; 2] {
    [value[0].as_f64().unwrap(), value[1].as_f64().unwrap()]
}

#[test]
fn noise_free_keypoints_equal_opencv_projections() {
    // Source: cv2.projectPoints and cv2.fisheye.projectPoints (OpenCV 5.0.0), values written by
    // scripts/opencv_sim_reference.py into fixtures/sim/opencv_sim_reference.json.
    let reference = load_reference();
    assert!(reference["opencv_version"]
        .as_str()
        .unwrap()
        .starts_with('5'));
    for case in CASES {
        let scenario = Scenario::from_path(&fixtures().join(case).join("scenario.yaml")).unwrap();
        let sim = Simulation::new(&scenario).unwrap();
        let frames = reference["cases"][case]["frames"].as_array().unwrap();
        let mut compared = 0;
        let mut simulated = 0;
        for frame in sim.frames() {
            let d = &frame.detections;
            let expected = &frames[d.frame as usize];
            assert_eq!(expected["frame"].as_u64().unwrap(), d.frame);
            for (object, list) in [("probe", &d.probe), ("drogue", &d.drogue)] {
                for obs in list.iter() {
                    let [u, v] = pixel(&expected[object][obs.point]);
                    let err = (obs.px.x - u).hypot(obs.px.y - v);
                    assert!(
                        err < OPENCV_TOLERANCE_PX,
                        "{case} frame {} {object} point {}: ours {:?}, OpenCV ({u}, {v})",
                        d.frame,
                        obs.point,
                        obs.px
                    );
                    compared += 1;
                }
            }
            simulated += 1;
        }
        assert_eq!(simulated, frames.len(), "{case}: frames");
        // Every frame shows most of both objects, so the comparison covers the whole image.
        assert!(
            compared >= 15 * simulated,
            "{case}: only {compared} keypoints compared"
        );
    }
}
