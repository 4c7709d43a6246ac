//! Built-in scenarios, each an invented aircraft installation of its own (camera, probe layout,
//! drogue size, frame rate): `demo` (a bracket slip in a realistic five-minute session), `clean`
//! (no mount event), `creep` (a slow ramp), `loose` (vibration) and `wrong-nominal` (a constant
//! error of the nominal mount file). All numbers are invented for illustration.

use crate::session::{
    CameraFile, DistortionFile, ModelFile, ModelPointFile, MountFile, ObjectKind,
};

use super::scenario::{
    Approach, Correlated, DeviationSpec, DrogueMotion, Hold, MountEvent, Move, NoiseSpec,
    Occlusion, Outliers, Phase, RampEvent, ReceiverMotion, Scenario, Sinusoid, Source, StepEvent,
    VibrationEvent, Wander,
};

/// Names accepted by [`preset`].
pub fn preset_names() -> &'static [&'static str] {
    &["demo", "clean", "creep", "loose", "wrong-nominal"]
}

/// The built-in scenario of this name.
pub fn preset(name: &str) -> Option<Scenario> {
    let scenario = match name {
        "demo" => demo(),
        "clean" => clean(),
        "creep" => creep(),
        "loose" => loose(),
        "wrong-nominal" => wrong_nominal(),
        _ => return None,
    };
    Some(Scenario {
        origin: format!("preset '{name}'"),
        ..scenario
    })
}

/// Five minutes at 30 Hz; the camera on the canopy frame sees a starboard probe in the lower
/// right of the image. At 120 s, in contact, the camera bracket slips by a few millimetres and a
/// few tenths of a degree.
fn demo() -> Scenario {
    let camera = pinhole(
        1280,
        960,
        880.0,
        (641.3, 478.6),
        [-0.11, 0.025, 3e-4, -2e-4, -0.001],
        0.6,
    );
    Scenario {
        name: Some("demo: bracket slip during contact".into()),
        seed: 20_240_917,
        frame_rate_hz: 30.0,
        duration_s: 300.0,
        camera: Source::Inline(camera),
        probe: Source::Inline(probe_model([2.20, 0.74, -0.48], [4.35, 0.78, -0.58], 1.0)),
        drogue: Source::Inline(drogue_model(0.30, 0.42, 0.085)),
        mount: Source::Inline(mount([1.15, 0.30, -0.98], [2.0, -3.5, 0.4])),
        approach: approach(14.0, 50.0, 0.45, 110.0, 0.6),
        drogue_motion: drogue_motion(
            [0.08, 0.22, 0.18],
            5.0,
            [0.0, 0.12, 0.08],
            0.11,
            [1.2, 1.5, 3.0],
            0.7,
        ),
        receiver_motion: receiver_motion([0.25, 0.4, 0.5], 0.2),
        noise: NoiseSpec {
            pixel_sigma: 0.45,
            correlated: Some(Correlated {
                sigma_px: 0.35,
                coefficient: 0.85,
            }),
            outliers: Some(Outliers {
                fraction: 0.015,
                min_px: 20.0,
                max_px: 80.0,
            }),
            dropout_probability: 0.02,
            frame_missing_probability: 0.004,
            occlusions: vec![
                occlusion(ObjectKind::Drogue, &["rim_4", "rim_5"], 150.0, 165.0),
                occlusion(ObjectKind::Probe, &["fairing_top"], 230.0, 236.0),
            ],
            stated_sigma_px: None,
        },
        nominal_error: None,
        mount_events: vec![MountEvent::Step(StepEvent {
            at_s: 120.0,
            translation_mm: [1.8, -2.6, 3.1],
            rotation_deg: [0.22, -0.35, 0.12],
        })],
        render_every: None,
        origin: String::new(),
    }
}

/// Three minutes at 25 Hz with a wide fisheye above a centreline probe; the mount never moves.
fn clean() -> Scenario {
    let camera = fisheye(
        1024,
        768,
        330.0,
        (512.4, 383.1),
        [0.018, -0.009, 0.0025, -4e-4],
        0.7,
    );
    Scenario {
        name: Some("clean: centreline probe, fisheye, no mount event".into()),
        seed: 5_150_331,
        frame_rate_hz: 25.0,
        duration_s: 180.0,
        camera: Source::Inline(camera),
        probe: Source::Inline(probe_model([2.05, 0.0, -0.66], [3.95, 0.0, -0.74], -1.0)),
        drogue: Source::Inline(drogue_model(0.31, 0.45, 0.09)),
        mount: Source::Inline(mount([0.95, -0.32, -0.92], [-12.0, 2.0, -0.3])),
        approach: approach(10.0, 30.0, 0.35, 70.0, 0.5),
        drogue_motion: drogue_motion(
            [0.06, 0.18, 0.15],
            4.0,
            [0.0, 0.09, 0.06],
            0.14,
            [1.0, 1.2, 2.5],
            0.9,
        ),
        receiver_motion: receiver_motion([0.2, 0.3, 0.4], 0.17),
        noise: realistic_noise(0.5, 0.3, 0.8),
        nominal_error: None,
        mount_events: Vec::new(),
        render_every: None,
        origin: String::new(),
    }
}

/// Four minutes at 20 Hz, a port probe seen by a high-resolution camera; the mount creeps
/// 4 mm down and 0.5° in pitch between 60 s and 180 s.
fn creep() -> Scenario {
    let camera = pinhole(
        1920,
        1080,
        1180.0,
        (958.2, 541.7),
        [-0.09, 0.018, -2e-4, 1e-4, 0.0],
        0.5,
    );
    Scenario {
        name: Some("creep: slow mount ramp".into()),
        seed: 880_412,
        frame_rate_hz: 20.0,
        duration_s: 240.0,
        camera: Source::Inline(camera),
        probe: Source::Inline(probe_model(
            [2.35, -0.80, -0.52],
            [4.60, -0.84, -0.60],
            -1.0,
        )),
        drogue: Source::Inline(drogue_model(0.29, 0.40, 0.08)),
        mount: Source::Inline(mount([1.05, -0.26, -1.02], [-2.0, -3.0, 0.2])),
        approach: approach(20.0, 40.0, 0.4, 100.0, 0.5),
        drogue_motion: drogue_motion(
            [0.07, 0.2, 0.16],
            6.0,
            [0.0, 0.1, 0.07],
            0.09,
            [1.0, 1.3, 2.8],
            0.6,
        ),
        receiver_motion: receiver_motion([0.2, 0.35, 0.45], 0.22),
        noise: realistic_noise(0.4, 0.3, 0.85),
        nominal_error: None,
        mount_events: vec![MountEvent::Ramp(RampEvent {
            from_s: 60.0,
            to_s: 180.0,
            translation_mm: [0.0, 0.0, 4.0],
            rotation_deg: [0.0, 0.5, 0.0],
        })],
        render_every: None,
        origin: String::new(),
    }
}

/// One minute at 60 Hz, a short wide-angle camera low on the starboard side; the bracket is
/// loose and flexes at 13.5 Hz.
fn loose() -> Scenario {
    let camera = pinhole(
        1024,
        768,
        600.0,
        (510.9, 385.2),
        [-0.16, 0.04, 1e-4, 3e-4, -0.004],
        0.8,
    );
    Scenario {
        name: Some("loose: flexing camera bracket".into()),
        seed: 31_337_021,
        frame_rate_hz: 60.0,
        duration_s: 60.0,
        camera: Source::Inline(camera),
        probe: Source::Inline(probe_model([1.95, 0.66, -0.36], [3.70, 0.70, -0.44], 1.0)),
        drogue: Source::Inline(drogue_model(0.30, 0.43, 0.085)),
        mount: Source::Inline(mount([1.25, 0.22, -0.70], [3.0, -2.0, 0.0])),
        approach: approach(8.0, 10.0, 0.5, 25.0, 0.6),
        drogue_motion: drogue_motion(
            [0.05, 0.16, 0.12],
            3.5,
            [0.0, 0.08, 0.05],
            0.16,
            [1.1, 1.4, 3.2],
            0.8,
        ),
        receiver_motion: receiver_motion([0.3, 0.45, 0.5], 0.25),
        noise: realistic_noise(0.55, 0.35, 0.8),
        nominal_error: None,
        mount_events: vec![MountEvent::Vibration(VibrationEvent {
            amplitude_mm: [0.6, 0.4, 0.8],
            amplitude_deg: [0.05, 0.08, 0.04],
            frequency_hz: 13.5,
            from_s: None,
            to_s: None,
        })],
        render_every: None,
        origin: String::new(),
    }
}

/// Two minutes at 30 Hz, a fisheye above a port probe; the mount never moves but the nominal
/// file is off by a few millimetres and most of a degree.
fn wrong_nominal() -> Scenario {
    let camera = fisheye(
        1280,
        1024,
        410.0,
        (639.0, 512.8),
        [0.012, -0.006, 0.0015, -2e-4],
        0.7,
    );
    Scenario {
        name: Some("wrong-nominal: constant error of the nominal mount".into()),
        seed: 77_000_913,
        frame_rate_hz: 30.0,
        duration_s: 120.0,
        camera: Source::Inline(camera),
        probe: Source::Inline(probe_model(
            [2.10, -0.70, -0.70],
            [4.05, -0.72, -0.80],
            -1.0,
        )),
        drogue: Source::Inline(drogue_model(0.305, 0.44, 0.09)),
        mount: Source::Inline(mount([1.10, -0.18, -1.08], [10.0, 3.0, 0.5])),
        approach: approach(11.0, 25.0, 0.4, 45.0, 0.5),
        drogue_motion: drogue_motion(
            [0.07, 0.2, 0.17],
            5.0,
            [0.0, 0.1, 0.08],
            0.12,
            [1.2, 1.4, 3.0],
            0.75,
        ),
        receiver_motion: receiver_motion([0.25, 0.35, 0.45], 0.19),
        noise: realistic_noise(0.5, 0.3, 0.85),
        nominal_error: Some(DeviationSpec {
            translation_mm: [6.0, -4.0, 3.0],
            rotation_deg: [0.8, -0.5, 0.3],
        }),
        mount_events: Vec::new(),
        render_every: None,
        origin: String::new(),
    }
}

fn pinhole(
    w: u32,
    h: u32,
    f: f64,
    (cx, cy): (f64, f64),
    [k1, k2, p1, p2, k3]: [f64; 5],
    sigma: f64,
) -> CameraFile {
    let distortion = DistortionFile {
        k1,
        k2,
        p1: Some(p1),
        p2: Some(p2),
        k3,
        k4: None,
    };
    camera_file("pinhole", w, h, f, (cx, cy), distortion, sigma)
}

fn fisheye(
    w: u32,
    h: u32,
    f: f64,
    (cx, cy): (f64, f64),
    [k1, k2, k3, k4]: [f64; 4],
    sigma: f64,
) -> CameraFile {
    let distortion = DistortionFile {
        k1,
        k2,
        p1: None,
        p2: None,
        k3,
        k4: Some(k4),
    };
    camera_file("fisheye", w, h, f, (cx, cy), distortion, sigma)
}

fn camera_file(
    model: &str,
    w: u32,
    h: u32,
    f: f64,
    (cx, cy): (f64, f64),
    distortion: DistortionFile,
    pixel_sigma: f64,
) -> CameraFile {
    CameraFile {
        model: model.into(),
        width: w,
        height: h,
        fx: f,
        fy: f,
        cx,
        cy,
        skew: 0.0,
        distortion,
        pixel_sigma,
    }
}

/// A model point with coordinates rounded to 0.1 mm, so the files read like measured data.
fn point(id: &str, xyz: [f64; 3]) -> ModelPointFile {
    // Adding 0.0 turns a rounded -0.0 into 0.0.
    let xyz = xyz.map(|c| (c * 1e4).round() / 1e4 + 0.0);
    ModelPointFile { id: id.into(), xyz }
}

/// A straight refuelling probe from `root` to `tip` (body frame, m) with four features on its
/// axis and four on the fairing and mast off the axis. Points on one line leave the roll about
/// that line unobservable; the off-axis features fix it. `outboard` is +1 when the probe sits on
/// the starboard side (the fairing bulges to +y), −1 for port or centreline layouts.
fn probe_model(root: [f64; 3], tip: [f64; 3], outboard: f64) -> ModelFile {
    let along = |s: f64| [0, 1, 2].map(|i| root[i] + s * (tip[i] - root[i]));
    let off = |dx: f64, dy: f64, dz: f64| [root[0] + dx, root[1] + dy, root[2] + dz];
    let length_m = (0..3)
        .map(|i| (tip[i] - root[i]).powi(2))
        .sum::<f64>()
        .sqrt();
    ModelFile {
        reference: "nozzle_tip".into(),
        points: vec![
            point("nozzle_tip", tip),
            point("nozzle_collar", along(1.0 - 0.17 / length_m)),
            point("tube_mid", along(0.5)),
            point("tube_root", along(0.0)),
            point("fairing_top", off(-0.24, 0.0, -0.15)),
            point("fairing_outboard", off(-0.14, 0.13 * outboard, 0.01)),
            point("light_housing", off(0.28, -0.09 * outboard, -0.09)),
            point("mast_step", off(0.42, 0.05 * outboard, 0.10)),
        ],
    }
}

/// A basket of `radius` (m) whose rim lies `depth` (m) aft of the coupling: eight rim markers
/// and three on the coupling (its centre, the reference, and two markers `marker` m off it),
/// which lie off the rim plane and so break the planar two-fold ambiguity of the rim alone.
fn drogue_model(radius: f64, depth: f64, marker: f64) -> ModelFile {
    let mut points: Vec<ModelPointFile> = (0..8)
        .map(|k| {
            let a = (22.5 + 45.0 * k as f64).to_radians();
            point(
                &format!("rim_{k}"),
                [-depth, radius * a.cos(), radius * a.sin()],
            )
        })
        .collect();
    points.push(point("coupling", [0.0, 0.0, 0.0]));
    points.push(point("coupling_top", [0.0, 0.0, -marker]));
    points.push(point("coupling_right", [0.0, marker, 0.0]));
    ModelFile {
        reference: "coupling".into(),
        points,
    }
}

fn mount(position_m: [f64; 3], angles_deg: [f64; 3]) -> MountFile {
    MountFile::new(position_m, angles_deg)
}

/// Station-keeping at `range_m`, closing to contact, holding contact, backing off to the same
/// range and station-keeping to the end.
fn approach(
    range_m: f64,
    station_s: f64,
    close_m_s: f64,
    contact_s: f64,
    back_off_m_s: f64,
) -> Approach {
    Approach {
        start_range_m: range_m,
        phases: vec![
            Phase::Station(Hold {
                duration_s: Some(station_s),
            }),
            Phase::Close(Move {
                speed_m_s: close_m_s,
                to_range_m: None,
            }),
            Phase::Contact(Hold {
                duration_s: Some(contact_s),
            }),
            Phase::BackOff(Move {
                speed_m_s: back_off_m_s,
                to_range_m: Some(range_m),
            }),
            Phase::Station(Hold { duration_s: None }),
        ],
    }
}

fn wave(amplitude: [f64; 3], frequency_hz: f64, phase_deg: [f64; 3]) -> Sinusoid {
    Sinusoid {
        amplitude,
        frequency_hz,
        phase_deg,
    }
}

fn drogue_motion(
    wander_sigma_m: [f64; 3],
    wander_tau_s: f64,
    sway_m: [f64; 3],
    sway_hz: f64,
    oscillation_deg: [f64; 3],
    oscillation_hz: f64,
) -> DrogueMotion {
    DrogueMotion {
        wander: Some(Wander {
            sigma_m: wander_sigma_m,
            time_constant_s: wander_tau_s,
        }),
        sway_m: vec![wave(sway_m, sway_hz, [0.0, 0.0, 90.0])],
        oscillation_deg: vec![wave(oscillation_deg, oscillation_hz, [0.0, 60.0, 130.0])],
        fade_range_m: 2.0,
    }
}

fn receiver_motion(amplitude_deg: [f64; 3], frequency_hz: f64) -> ReceiverMotion {
    ReceiverMotion {
        attitude_deg: vec![wave(amplitude_deg, frequency_hz, [45.0, 0.0, 100.0])],
    }
}

/// White plus correlated pixel noise with the usual losses: 1.5% outliers of 20-80 px, 2%
/// dropouts, 0.3% missing frames.
fn realistic_noise(white_px: f64, correlated_px: f64, coefficient: f64) -> NoiseSpec {
    NoiseSpec {
        pixel_sigma: white_px,
        correlated: Some(Correlated {
            sigma_px: correlated_px,
            coefficient,
        }),
        outliers: Some(Outliers {
            fraction: 0.015,
            min_px: 20.0,
            max_px: 80.0,
        }),
        dropout_probability: 0.02,
        frame_missing_probability: 0.003,
        occlusions: Vec::new(),
        stated_sigma_px: None,
    }
}

fn occlusion(object: ObjectKind, points: &[&str], from_s: f64, to_s: f64) -> Occlusion {
    Occlusion {
        object,
        points: Some(points.iter().map(|p| p.to_string()).collect()),
        from_s,
        to_s,
    }
}
