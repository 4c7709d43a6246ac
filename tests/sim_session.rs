//! Simulated sessions end to end: the truth reproduces the detections, the same seed gives the
//! same bytes, presets show both objects, the noise has the statistics it claims, and bad
//! scenarios get errors that name the file, line, column or field.

use std::collections::HashMap;
use std::path::Path;

use approx::assert_relative_eq;
use mountdrift::commands::simulate::{self, ScenarioSource, SimulateOptions};
use mountdrift::geometry::{Mount, MountDeviation, YawPitchRoll};
use mountdrift::session::{CameraFile, ModelFile, MountFile};
use mountdrift::sim::{preset, preset_names, Scenario, SimError, Simulation};
use nalgebra::{Point3, Vector2, Vector3};

/// A noise-free scenario whose drogue keeps the body axes (no oscillation, no receiver sway), so
/// the truth file (mount and vector) fixes every keypoint; the mount slips at 1 s.
const ALIGNED: &str = r#"
name: aligned drogue, no noise
seed: 11
frame_rate_hz: 10.0
duration_s: 3.0
camera:
  model: pinhole
  width: 1280
  height: 960
  fx: 880.0
  fy: 880.0
  cx: 641.3
  cy: 478.6
  distortion: {k1: -0.11, k2: 0.025, p1: 0.0003, p2: -0.0002, k3: -0.001}
probe:
  reference: nozzle_tip
  points:
    - {id: nozzle_tip, xyz: [4.35, 0.78, -0.58]}
    - {id: tube_mid, xyz: [3.275, 0.76, -0.53]}
    - {id: tube_root, xyz: [2.2, 0.74, -0.48]}
    - {id: fairing_top, xyz: [1.96, 0.74, -0.63]}
    - {id: fairing_outboard, xyz: [2.06, 0.87, -0.47]}
    - {id: mast_step, xyz: [2.62, 0.79, -0.38]}
drogue:
  reference: coupling
  points:
    - {id: rim_n, xyz: [-0.42, 0.0, -0.3]}
    - {id: rim_e, xyz: [-0.42, 0.3, 0.0]}
    - {id: rim_s, xyz: [-0.42, 0.0, 0.3]}
    - {id: rim_w, xyz: [-0.42, -0.3, 0.0]}
    - {id: coupling, xyz: [0.0, 0.0, 0.0]}
    - {id: coupling_top, xyz: [0.0, 0.0, -0.085]}
mount:
  position_m: [1.15, 0.30, -0.98]
  yaw_deg: 2.0
  pitch_deg: -3.5
  roll_deg: 0.4
approach:
  start_range_m: 3.0
  phases:
    - close: {speed_m_s: 0.6}
    - contact: {}
drogue_motion:
  wander: {sigma_m: [0.05, 0.2, 0.15], time_constant_s: 2.0}
  sway_m: [{amplitude: [0.0, 0.1, 0.1], frequency_hz: 0.3}]
mount_events:
  - step: {at_s: 1.0, translation_mm: [2.0, -3.0, 4.0], rotation_deg: [0.3, -0.4, 0.2]}
"#;

fn scenario(text: &str) -> Scenario {
    Scenario::from_yaml(text, Path::new("inline.yaml"), Path::new(".")).unwrap()
}

fn write_scenario(dir: &Path, text: &str) -> std::path::PathBuf {
    let path = dir.join("scenario.yaml");
    std::fs::write(&path, text).unwrap();
    path
}

fn run_into(path: &Path, out: &Path, seed: Option<u64>) -> simulate::SimulateOutcome {
    let mut options = SimulateOptions::new(ScenarioSource::Path(path.to_path_buf()), out);
    options.seed = seed;
    simulate::run(&options).unwrap()
}

fn read_yaml<T: serde::de::DeserializeOwned>(path: &Path) -> T {
    serde_saphyr::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
}

fn csv_rows(path: &Path) -> Vec<HashMap<String, String>> {
    let mut reader = csv::Reader::from_path(path).unwrap();
    reader.deserialize().map(|r| r.unwrap()).collect()
}

fn num(row: &HashMap<String, String>, key: &str) -> f64 {
    row[key].parse().unwrap()
}

/// Written numbers are rounded: pixels to 1e-4 px, truth positions to 1 µm (worth about
/// 880 · 1e-6 / 1.2 ≈ 7e-4 px at the nearest point), so the files agree to about 1e-3 px.
const FILE_ROUNDING_PX: f64 = 2e-3;

#[test]
fn truth_file_reprojects_every_noise_free_keypoint() {
    // Source: DESIGN section 2 (x_B = R_BC x_C + p_BC; v = x_B(drogue ref) − x_B(probe ref)),
    // applied by hand to the written files with a drogue that keeps the body axes.
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("session");
    run_into(&write_scenario(dir.path(), ALIGNED), &out, None);
    let camera = read_yaml::<CameraFile>(&out.join("camera.yaml"))
        .to_camera()
        .unwrap();
    let probe = read_yaml::<ModelFile>(&out.join("probe.yaml"))
        .to_model()
        .unwrap();
    let drogue = read_yaml::<ModelFile>(&out.join("drogue.yaml"))
        .to_model()
        .unwrap();
    let truth: HashMap<u64, HashMap<String, String>> = csv_rows(&out.join("truth.csv"))
        .into_iter()
        .map(|r| (r["frame"].parse().unwrap(), r))
        .collect();
    let detections = csv_rows(&out.join("detections.csv"));
    assert_eq!(truth.len(), 30);
    assert_eq!(
        detections.len(),
        30 * 12,
        "every keypoint visible in every frame"
    );
    for row in &detections {
        let t = &truth[&row["frame"].parse::<u64>().unwrap()];
        let mount = Mount {
            position_m: Vector3::new(num(t, "cam_x_m"), num(t, "cam_y_m"), num(t, "cam_z_m")),
            attitude: YawPitchRoll::new(
                num(t, "cam_yaw_deg").to_radians(),
                num(t, "cam_pitch_deg").to_radians(),
                num(t, "cam_roll_deg").to_radians(),
            ),
        };
        let vector = Vector3::new(num(t, "vec_x_m"), num(t, "vec_y_m"), num(t, "vec_z_m"));
        let x_b = match row["object"].as_str() {
            "probe" => probe.points()[probe.index_of(&row["point"]).unwrap()].xyz_m,
            _ => {
                let p = drogue.points()[drogue.index_of(&row["point"]).unwrap()].xyz_m;
                probe.reference_point() + vector + (p - drogue.reference_point())
            }
        };
        let x_c = mount.body_from_camera().inverse() * Point3::from(x_b);
        let expected = camera.project(&x_c.coords).unwrap();
        let written = Vector2::new(num(row, "u"), num(row, "v"));
        assert!((written - expected).norm() < FILE_ROUNDING_PX, "{row:?}");
    }
}

#[test]
fn in_memory_truth_reprojects_exactly_and_applies_the_step() {
    // Source: DESIGN section 2 conventions and MountDeviation::between (geometry), checked on
    // unrounded values.
    let sim = Simulation::new(&scenario(ALIGNED)).unwrap();
    let initial = *sim.true_initial_mount();
    for frame in sim.frames() {
        let t = &frame.truth;
        let t_cb = t.mount.body_from_camera().inverse();
        for obs in &frame.detections.probe {
            let x_c = t_cb * Point3::from(sim.probe().points()[obs.point].xyz_m);
            assert_relative_eq!(
                obs.px,
                sim.camera().project(&x_c.coords).unwrap(),
                epsilon = 1e-9
            );
        }
        let drogue_ref = t.body_from_drogue * Point3::from(sim.drogue().reference_point());
        let probe_ref = sim.probe().reference_point();
        assert_relative_eq!(drogue_ref.coords - probe_ref, t.vector_m, epsilon = 1e-12);
        let deviation = MountDeviation::between(&initial, &t.mount).to_report_vector();
        let expected = if t.time_s >= 1.0 {
            nalgebra::Vector6::new(2.0, -3.0, 4.0, 0.3, -0.4, 0.2)
        } else {
            nalgebra::Vector6::zeros()
        };
        assert_relative_eq!(deviation, expected, epsilon = 1e-9);
    }
    assert_eq!(sim.nominal_mount(), &initial, "no nominal error configured");
}

#[test]
fn same_seed_same_bytes_other_seed_other_session() {
    // Source: the rand_pcg Pcg64Mcg generator is deterministic for a given state (rand_pcg
    // documentation); every random stream is derived from (seed, stream).
    let dir = tempfile::tempdir().unwrap();
    let path = write_scenario(dir.path(), &ALIGNED.replace("mount_events:", NOISE_BLOCK));
    let a = dir.path().join("a");
    let b = dir.path().join("b");
    let c = dir.path().join("c");
    run_into(&path, &a, None);
    run_into(&path, &b, None);
    run_into(&path, &c, Some(12));
    for name in [
        "session.yaml",
        "camera.yaml",
        "probe.yaml",
        "drogue.yaml",
        "mount.yaml",
    ] {
        assert_eq!(
            std::fs::read(a.join(name)).unwrap(),
            std::fs::read(b.join(name)).unwrap()
        );
    }
    for name in ["detections.csv", "truth.csv"] {
        let first = std::fs::read(a.join(name)).unwrap();
        assert_eq!(
            first,
            std::fs::read(b.join(name)).unwrap(),
            "{name} not reproducible"
        );
        assert_ne!(
            first,
            std::fs::read(c.join(name)).unwrap(),
            "{name} ignores the seed"
        );
    }
    let leftovers: Vec<_> = std::fs::read_dir(&a)
        .unwrap()
        .map(|e| e.unwrap().file_name().to_string_lossy().into_owned())
        .filter(|n| n.ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty(), "temporary files left: {leftovers:?}");
}

const NOISE_BLOCK: &str = "noise:
  pixel_sigma: 0.5
  correlated: {sigma_px: 0.3, coefficient: 0.8}
  outliers: {fraction: 0.02, min_px: 20.0, max_px: 80.0}
  dropout_probability: 0.05
  frame_missing_probability: 0.05
mount_events:";

#[test]
fn every_preset_shows_both_objects_in_most_frames() {
    // Source: the brief for the presets (common practice for a usable session: at least six
    // keypoints of each object in 90% of frames, enough for a well-posed PnP of each).
    for name in preset_names() {
        let scenario = preset(name).unwrap();
        let sim = Simulation::new(&scenario).unwrap();
        let (mut frames, mut good) = (0u64, 0u64);
        for frame in sim.frames() {
            frames += 1;
            let d = &frame.detections;
            good += u64::from(d.probe.len() >= 6 && d.drogue.len() >= 6);
        }
        assert!(frames > 0 && frames <= sim.frame_count());
        let share = good as f64 / frames as f64;
        assert!(
            share >= 0.9,
            "{name}: only {share:.3} of frames show both objects"
        );
    }
    assert!(preset("no-such-preset").is_none());
}

#[test]
fn presets_carry_their_advertised_mount_story() {
    // Source: the scenario definitions in docs/scenarios.md (each preset's event).
    let demo = Simulation::new(&preset("demo").unwrap()).unwrap();
    assert_relative_eq!(demo.frame_count() as f64 / demo.frame_rate_hz(), 300.0);
    let before = MountDeviation::between(demo.true_initial_mount(), &demo.true_mount_at(119.9));
    let after = MountDeviation::between(demo.true_initial_mount(), &demo.true_mount_at(120.1));
    assert!(before.to_report_vector().norm() < 1e-12);
    let v = after.to_report_vector();
    let shift_mm = v.fixed_rows::<3>(0).norm();
    let turn_deg = v.fixed_rows::<3>(3).norm();
    assert!(
        (2.0..10.0).contains(&shift_mm) && (0.1..1.0).contains(&turn_deg),
        "{v}"
    );
    for name in ["clean", "wrong-nominal"] {
        let sim = Simulation::new(&preset(name).unwrap()).unwrap();
        assert_eq!(sim.mount_event_count(), 0, "{name}");
        let end = sim.true_mount_at(1e4);
        assert!(
            MountDeviation::between(sim.true_initial_mount(), &end)
                .to_report_vector()
                .norm()
                < 1e-12
        );
    }
    let wrong = Simulation::new(&preset("wrong-nominal").unwrap()).unwrap();
    let error = MountDeviation::between(wrong.true_initial_mount(), wrong.nominal_mount());
    assert_relative_eq!(
        error.to_report_vector(),
        nalgebra::Vector6::new(6.0, -4.0, 3.0, 0.8, -0.5, 0.3),
        epsilon = 1e-9
    );
    let creep = Simulation::new(&preset("creep").unwrap()).unwrap();
    let mid = MountDeviation::between(creep.true_initial_mount(), &creep.true_mount_at(120.0));
    assert_relative_eq!(mid.to_report_vector()[2], 2.0, epsilon = 1e-9);
    let loose = Simulation::new(&preset("loose").unwrap()).unwrap();
    let peak = (0..600)
        .map(|k| {
            MountDeviation::between(
                loose.true_initial_mount(),
                &loose.true_mount_at(k as f64 / 600.0),
            )
        })
        .map(|d| d.translation_m.z.abs() * 1000.0)
        .fold(0.0, f64::max);
    assert!(peak > 0.7 && peak <= 0.8 + 1e-9, "vibration peak {peak} mm");
}

#[test]
fn demo_occlusion_hides_the_named_rim_points() {
    // Source: the demo preset's occlusion (rim_4 and rim_5 hidden from 150 s to 165 s).
    let sim = Simulation::new(&preset("demo").unwrap()).unwrap();
    let hidden = [
        sim.drogue().index_of("rim_4").unwrap(),
        sim.drogue().index_of("rim_5").unwrap(),
    ];
    let mut seen_inside = 0;
    let mut seen_outside = 0;
    for frame in sim
        .frames()
        .filter(|f| (140.0..175.0).contains(&f.truth.time_s))
    {
        let t = frame.truth.time_s;
        let count = frame
            .detections
            .drogue
            .iter()
            .filter(|o| hidden.contains(&o.point))
            .count();
        if (150.0..165.0).contains(&t) {
            seen_inside += count;
        } else {
            seen_outside += count;
        }
    }
    assert_eq!(seen_inside, 0);
    assert!(seen_outside > 500);
}

#[test]
fn scenario_errors_name_file_line_and_field() {
    let dir = tempfile::tempdir().unwrap();
    // Unknown key on line 5: serde-saphyr reports the location.
    let typo = ALIGNED.replacen("duration_s: 3.0", "duration_s: 3.0\nduraton_s: 4.0", 1);
    let path = write_scenario(dir.path(), &typo);
    let err = Scenario::from_path(&path).unwrap_err();
    match &err {
        SimError::Parse {
            path: p,
            line,
            column,
            ..
        } => {
            assert_eq!(p, &path);
            assert_eq!(*line, Some(6));
            assert_eq!(*column, Some(1));
        }
        other => panic!("expected a parse error, got {other}"),
    }
    let text = err.to_string();
    assert!(
        text.contains("scenario.yaml") && text.contains("line 6") && text.contains("duraton_s"),
        "{text}"
    );

    // Errors inside inline geometry keep their location.
    let path = write_scenario(
        dir.path(),
        &ALIGNED.replace("  width: 1280", "  widht: 1280"),
    );
    match Scenario::from_path(&path).unwrap_err() {
        SimError::Parse {
            line,
            column,
            message,
            ..
        } => {
            assert_eq!((line, column), (Some(8), Some(3)), "{message}");
            assert!(
                message.contains("widht") && !message.contains("line 8"),
                "{message}"
            );
        }
        other => panic!("expected a parse error, got {other}"),
    }

    // A semantic error names the field.
    let bad = ALIGNED.replace("close: {speed_m_s: 0.6}", "station: {duration_s: 1.0}");
    let err = Simulation::new(&scenario(&bad)).unwrap_err().to_string();
    assert!(
        err.contains("approach.phases[1]") && err.contains("contact needs range 0"),
        "{err}"
    );
    let bad = ALIGNED.replace("seed: 11", "seed: 11\nnoise: {dropout_probability: 1.5}");
    let err = Simulation::new(&scenario(&bad)).unwrap_err().to_string();
    assert!(err.contains("noise.dropout_probability"), "{err}");

    // A missing geometry file is named with its resolved path.
    let missing = with_paths(ALIGNED, &[("camera", "rig/none.yaml")]);
    let path = write_scenario(dir.path(), &missing);
    let err = Scenario::from_path(&path).unwrap_err();
    assert!(
        matches!(&err, SimError::Read { path: p, .. } if p.ends_with("rig/none.yaml")),
        "{err}"
    );

    // An unknown preset lists the known ones; nothing is written on failure.
    let out = dir.path().join("never");
    let options = SimulateOptions::new(ScenarioSource::Preset("demo2".into()), &out);
    let err = simulate::run(&options).unwrap_err().to_string();
    assert!(
        err.contains("demo2") && err.contains("wrong-nominal"),
        "{err}"
    );
    assert!(!out.exists());
}

#[test]
fn scenario_paths_resolve_relative_to_the_file() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir(dir.path().join("rig")).unwrap();
    let base = scenario(ALIGNED);
    let camera = base.camera.inline("camera", "test").unwrap();
    std::fs::write(
        dir.path().join("rig/cam.yaml"),
        serde_saphyr::to_string(camera).unwrap(),
    )
    .unwrap();
    let mount = MountFile::new([1.0, 0.2, -0.9], [1.0, -2.0, 0.0]);
    std::fs::write(
        dir.path().join("rig/mount.yaml"),
        serde_saphyr::to_string(&mount).unwrap(),
    )
    .unwrap();
    let text = with_paths(
        ALIGNED,
        &[("camera", "rig/cam.yaml"), ("mount", "rig/mount.yaml")],
    );
    let path = write_scenario(dir.path(), &text);
    let loaded = Scenario::from_path(&path).unwrap();
    assert_eq!(loaded.camera.inline("camera", "test").unwrap(), camera);
    assert_eq!(loaded.mount.inline("mount", "test").unwrap(), &mount);
    // The resolved scenario is self-contained: it reads back from its own YAML.
    let again = Scenario::from_yaml(
        &loaded.to_yaml().unwrap(),
        Path::new("again.yaml"),
        Path::new("/nonexistent"),
    )
    .unwrap();
    assert_eq!(
        Simulation::new(&again).unwrap(),
        Simulation::new(&loaded).unwrap()
    );
}

/// Replaces the inline blocks of the named top-level keys with file paths.
fn with_paths(text: &str, entries: &[(&str, &str)]) -> String {
    let mut out = String::new();
    let mut skipping = false;
    for line in text.lines() {
        let key = line.strip_suffix(':').unwrap_or("");
        if let Some((_, path)) = entries.iter().find(|(k, _)| *k == key) {
            out.push_str(&format!("{key}: {path}\n"));
            skipping = true;
            continue;
        }
        if skipping && line.starts_with("  ") {
            continue;
        }
        skipping = false;
        out.push_str(line);
        out.push('\n');
    }
    out
}

#[test]
fn detection_errors_have_the_stated_statistics() {
    // Source: AR(1) stationary moments (Box, Jenkins and Reinsel, Time Series Analysis, 4th ed.,
    // section 3.2.4: variance σ², lag-1 autocorrelation φ) plus independent white noise; and
    // binomial counts for outliers, dropouts and missing frames (bounds at 5 standard errors).
    let text = ALIGNED
        .replace("width: 1280", "width: 6000")
        .replace("height: 960", "height: 5000")
        .replace("cx: 641.3", "cx: 3000.0")
        .replace("cy: 478.6", "cy: 2500.0")
        .replace("duration_s: 3.0", "duration_s: 300.0")
        .replace("mount_events:", NOISE_STATS_BLOCK);
    let sim = Simulation::new(&scenario(&text)).unwrap();
    let slots = sim.probe().len() + sim.drogue().len();
    let mut previous: Vec<Option<(u64, Vector2<f64>)>> = vec![None; slots];
    let (mut sum_sq, mut n) = (0.0, 0u64);
    let (mut lag_sum, mut lag_n) = (0.0, 0u64);
    let (mut outliers, mut detected, mut frames) = (0u64, 0u64, 0u64);
    for frame in sim.frames() {
        frames += 1;
        let t = &frame.truth;
        let d = &frame.detections;
        let objects = [
            (&d.probe, t.camera_from_body(), sim.probe(), 0),
            (
                &d.drogue,
                t.camera_from_drogue(),
                sim.drogue(),
                sim.probe().len(),
            ),
        ];
        for (list, pose, model, offset) in objects {
            for obs in list.iter() {
                let x_c = pose * Point3::from(model.points()[obs.point].xyz_m);
                let error = obs.px - sim.camera().project(&x_c.coords).unwrap();
                detected += 1;
                let slot = offset + obs.point;
                if error.norm() > 15.0 {
                    outliers += 1;
                    previous[slot] = None;
                    continue;
                }
                sum_sq += error.norm_squared();
                n += 2;
                if let Some((f, e)) = previous[slot] {
                    if f + 1 == d.frame {
                        lag_sum += error.dot(&e);
                        lag_n += 2;
                    }
                }
                previous[slot] = Some((d.frame, error));
            }
        }
    }
    let variance = sum_sq / n as f64;
    let lag1 = lag_sum / lag_n as f64 / variance;
    // White 0.5 px and correlated 0.8 px with φ = 0.9: σ² = 0.25 + 0.64, ρ1 = 0.9 · 0.64 / 0.89.
    assert!((variance / 0.89 - 1.0).abs() < 0.08, "variance {variance}");
    assert!(
        (lag1 - 0.9 * 0.64 / 0.89).abs() < 0.03,
        "lag-1 autocorrelation {lag1}"
    );
    assert_relative_eq!(sim.stated_sigma_px(), 0.89f64.sqrt(), epsilon = 1e-15);
    let expect_frames = 3000.0 * 0.95;
    assert!((frames as f64 - expect_frames).abs() < 5.0 * (3000.0 * 0.05 * 0.95f64).sqrt());
    let possible = frames as f64 * slots as f64;
    let kept = 0.9;
    assert!((detected as f64 - possible * kept).abs() < 5.0 * (possible * 0.1 * 0.9).sqrt());
    let share = outliers as f64 / detected as f64;
    assert!(
        (share - 0.02).abs() < 5.0 * (0.02 * 0.98 / detected as f64).sqrt(),
        "outliers {share}"
    );
}

const NOISE_STATS_BLOCK: &str = "noise:
  pixel_sigma: 0.5
  correlated: {sigma_px: 0.8, coefficient: 0.9}
  outliers: {fraction: 0.02, min_px: 20.0, max_px: 80.0}
  dropout_probability: 0.1
  frame_missing_probability: 0.05
mount_events:";

#[test]
fn documented_example_scenario_runs() {
    // Source: the complete example in docs/scenarios.md, which must stay a valid scenario.
    let doc =
        std::fs::read_to_string(Path::new(env!("CARGO_MANIFEST_DIR")).join("docs/scenarios.md"))
            .unwrap();
    let start = doc.find("```yaml\n").expect("example block") + "```yaml\n".len();
    let end = start + doc[start..].find("```").unwrap();
    let example = scenario(&doc[start..end]);
    let sim = Simulation::new(&example).unwrap();
    assert_eq!(sim.frame_count(), 7200);
    assert_eq!(sim.mount_event_count(), 2);
    let error = MountDeviation::between(sim.true_initial_mount(), sim.nominal_mount());
    assert_relative_eq!(
        error.to_report_vector(),
        nalgebra::Vector6::new(1.0, 0.0, -1.5, 0.1, 0.0, 0.0),
        epsilon = 1e-9
    );
    let (mut frames, mut good) = (0, 0);
    for frame in sim.frames() {
        frames += 1;
        good +=
            usize::from(frame.detections.probe.len() >= 6 && frame.detections.drogue.len() >= 6);
    }
    assert!(good as f64 >= 0.9 * frames as f64, "{good} of {frames}");
}
