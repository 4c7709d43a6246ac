//! Deterministic and random motion of a simulated session: the approach range profile, the
//! drogue's wander, sway and oscillation, the receiver's attitude sway, and the true mount's
//! events over time. Everything here is a function of time (and of a seeded random walk state);
//! nothing here projects or draws detection noise.

use std::f64::consts::TAU;

use nalgebra::{Isometry3, Translation3, UnitQuaternion, Vector3};
use rand::RngExt;
use rand_distr::StandardNormal;
use rand_pcg::Pcg64Mcg;

use crate::geometry::{Mount, MountDeviation, YawPitchRoll};
use crate::tol;

use super::scenario::{
    Approach, DeviationSpec, DrogueMotion, MountEvent, Phase, ReceiverMotion, Sinusoid,
    VibrationEvent,
};
use super::validate::Checker;
use super::SimError;

/// One leg of the range profile: range moves linearly from `from_m` to `to_m` over
/// `[start_s, end_s)`; `end_s` is infinite for a final hold.
#[derive(Debug, Clone, PartialEq)]
struct Leg {
    start_s: f64,
    end_s: f64,
    from_m: f64,
    to_m: f64,
}

/// Range of the drogue reference ahead of the probe reference (m) as a function of time.
#[derive(Debug, Clone, PartialEq)]
pub struct RangeProfile {
    start_m: f64,
    legs: Vec<Leg>,
}

impl RangeProfile {
    /// Builds the legs, checking that each phase can follow the one before it.
    pub fn new(approach: &Approach, check: &Checker) -> Result<Self, SimError> {
        check.non_negative(approach.start_range_m, "approach.start_range_m")?;
        let mut legs = Vec::with_capacity(approach.phases.len());
        let (mut time_s, mut range_m): (f64, f64) = (0.0, approach.start_range_m);
        for (i, phase) in approach.phases.iter().enumerate() {
            let field = format!("approach.phases[{i}]");
            check.require(
                time_s.is_finite(),
                &field,
                "follows a phase without duration_s, which lasts to the end",
            )?;
            let (duration_s, to_m) = phase_leg(phase, range_m, &field, check)?;
            legs.push(Leg {
                start_s: time_s,
                end_s: time_s + duration_s,
                from_m: range_m,
                to_m,
            });
            time_s += duration_s;
            range_m = to_m;
        }
        Ok(Self {
            start_m: approach.start_range_m,
            legs,
        })
    }

    /// Range at time `t_s` (m); after the last leg the range holds.
    pub fn range_m(&self, t_s: f64) -> f64 {
        let Some(leg) = self.legs.iter().find(|l| t_s < l.end_s) else {
            return self.legs.last().map_or(self.start_m, |l| l.to_m);
        };
        if t_s <= leg.start_s || !leg.end_s.is_finite() {
            return leg.from_m;
        }
        let fraction = (t_s - leg.start_s) / (leg.end_s - leg.start_s);
        leg.from_m + (leg.to_m - leg.from_m) * fraction
    }
}

/// Duration and end range of one phase starting at `range_m`.
fn phase_leg(
    phase: &Phase,
    range_m: f64,
    field: &str,
    check: &Checker,
) -> Result<(f64, f64), SimError> {
    match phase {
        Phase::Station(hold) => {
            check.require(
                range_m > tol::SIM_CONTACT_RANGE_M,
                field,
                "station-keeping needs a range above 0 (use contact)",
            )?;
            Ok((hold_duration(hold.duration_s, field, check)?, range_m))
        }
        Phase::Contact(hold) => {
            check.require(
                range_m <= tol::SIM_CONTACT_RANGE_M,
                field,
                format!("contact needs range 0, but the range here is {range_m} m (close first)"),
            )?;
            Ok((hold_duration(hold.duration_s, field, check)?, 0.0))
        }
        Phase::Close(m) => {
            let to_m = m.to_range_m.unwrap_or(0.0);
            check.non_negative(to_m, &format!("{field}.close.to_range_m"))?;
            check.require(to_m < range_m, field, "closing must reduce the range")?;
            move_leg(m.speed_m_s, range_m, to_m, field, check)
        }
        Phase::BackOff(m) => {
            let to_m = m.to_range_m.ok_or_else(|| {
                check.invalid(
                    field,
                    "back_off needs to_range_m (the range to back off to)",
                )
            })?;
            check.require(to_m > range_m, field, "backing off must increase the range")?;
            check.finite(to_m, &format!("{field}.back_off.to_range_m"))?;
            move_leg(m.speed_m_s, range_m, to_m, field, check)
        }
    }
}

fn hold_duration(duration_s: Option<f64>, field: &str, check: &Checker) -> Result<f64, SimError> {
    match duration_s {
        Some(d) => {
            check.positive(d, &format!("{field}.duration_s"))?;
            Ok(d)
        }
        None => Ok(f64::INFINITY),
    }
}

fn move_leg(
    speed_m_s: f64,
    from_m: f64,
    to_m: f64,
    field: &str,
    check: &Checker,
) -> Result<(f64, f64), SimError> {
    check.positive(speed_m_s, &format!("{field}.speed_m_s"))?;
    Ok(((to_m - from_m).abs() / speed_m_s, to_m))
}

/// A validated sinusoid in internal units (radians for phases; amplitudes as given, scaled by
/// the caller's unit factor).
#[derive(Debug, Clone, PartialEq)]
pub struct Wave {
    amplitude: Vector3<f64>,
    omega_rad_s: f64,
    phase_rad: Vector3<f64>,
}

impl Wave {
    fn new(s: &Sinusoid, unit: f64, field: &str, check: &Checker) -> Result<Self, SimError> {
        check.finite3(s.amplitude, &format!("{field}.amplitude"))?;
        check.finite3(s.phase_deg, &format!("{field}.phase_deg"))?;
        check.positive(s.frequency_hz, &format!("{field}.frequency_hz"))?;
        Ok(Self {
            amplitude: Vector3::from(s.amplitude) * unit,
            omega_rad_s: TAU * s.frequency_hz,
            phase_rad: Vector3::from(s.phase_deg.map(f64::to_radians)),
        })
    }

    fn value(&self, t_s: f64) -> Vector3<f64> {
        let arg = self.omega_rad_s * t_s;
        Vector3::from_fn(|i, _| self.amplitude[i] * (arg + self.phase_rad[i]).sin())
    }
}

fn waves(
    list: &[Sinusoid],
    unit: f64,
    field: &str,
    check: &Checker,
) -> Result<Vec<Wave>, SimError> {
    list.iter()
        .enumerate()
        .map(|(i, s)| Wave::new(s, unit, &format!("{field}[{i}]"), check))
        .collect()
}

fn wave_sum(list: &[Wave], t_s: f64) -> Vector3<f64> {
    list.iter().map(|w| w.value(t_s)).sum()
}

/// Mean-reverting random walk (Ornstein-Uhlenbeck), advanced exactly over each frame interval:
/// `x_{k+1} = a x_k + sqrt(1 − a²) σ ε`, `a = exp(−Δt/τ)` (Gillespie, Phys. Rev. E 54, 2084,
/// 1996), started from its stationary distribution.
#[derive(Debug, Clone)]
pub struct WanderState {
    decay: f64,
    innovation_m: Vector3<f64>,
    sigma_m: Vector3<f64>,
    position_m: Vector3<f64>,
    started: bool,
}

impl WanderState {
    /// Advances one frame and returns the new wander (m). Draws 3 normals every call.
    pub fn step(&mut self, rng: &mut Pcg64Mcg) -> Vector3<f64> {
        let eps = Vector3::from_fn(|_, _| rng.sample::<f64, _>(StandardNormal));
        self.position_m = if self.started {
            self.position_m * self.decay + self.innovation_m.component_mul(&eps)
        } else {
            self.sigma_m.component_mul(&eps)
        };
        self.started = true;
        self.position_m
    }
}

/// The relative motion of the drogue in the body frame.
#[derive(Debug, Clone, PartialEq)]
pub struct DroguePath {
    range: RangeProfile,
    wander_sigma_m: Vector3<f64>,
    wander_tau_s: f64,
    sway_m: Vec<Wave>,
    oscillation_rad: Vec<Wave>,
    receiver_rad: Vec<Wave>,
    fade_range_m: f64,
}

/// The true relative pose of the drogue at one instant.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DroguePose {
    /// `T_BD`: drogue model frame to body.
    pub body_from_drogue: Isometry3<f64>,
    /// `v = x_B(drogue reference) − x_B(probe reference)` (m).
    pub vector_m: Vector3<f64>,
}

impl DroguePath {
    pub fn new(
        approach: &Approach,
        drogue: &DrogueMotion,
        receiver: &ReceiverMotion,
        check: &Checker,
    ) -> Result<Self, SimError> {
        let (wander_sigma_m, wander_tau_s) = match &drogue.wander {
            Some(w) => {
                check.non_negative3(w.sigma_m, "drogue_motion.wander.sigma_m")?;
                check.positive(w.time_constant_s, "drogue_motion.wander.time_constant_s")?;
                (Vector3::from(w.sigma_m), w.time_constant_s)
            }
            None => (Vector3::zeros(), 1.0),
        };
        check.positive(drogue.fade_range_m, "drogue_motion.fade_range_m")?;
        let deg = 1f64.to_radians();
        Ok(Self {
            range: RangeProfile::new(approach, check)?,
            wander_sigma_m,
            wander_tau_s,
            sway_m: waves(&drogue.sway_m, 1.0, "drogue_motion.sway_m", check)?,
            oscillation_rad: waves(
                &drogue.oscillation_deg,
                deg,
                "drogue_motion.oscillation_deg",
                check,
            )?,
            receiver_rad: waves(
                &receiver.attitude_deg,
                deg,
                "receiver_motion.attitude_deg",
                check,
            )?,
            fade_range_m: drogue.fade_range_m,
        })
    }

    /// A fresh wander process for a frame interval of `dt_s`.
    pub fn wander(&self, dt_s: f64) -> WanderState {
        let decay = (-dt_s / self.wander_tau_s).exp();
        WanderState {
            decay,
            innovation_m: self.wander_sigma_m * (1.0 - decay * decay).sqrt(),
            sigma_m: self.wander_sigma_m,
            position_m: Vector3::zeros(),
            started: false,
        }
    }

    /// Range of the drogue ahead of the probe at `t_s` (m), before wander and sway.
    pub fn range_m(&self, t_s: f64) -> f64 {
        self.range.range_m(t_s)
    }

    /// The drogue pose at `t_s` given the current wander; `probe_ref_m` and `drogue_ref_m` are
    /// the two models' reference points in their own frames.
    pub fn pose(
        &self,
        t_s: f64,
        wander_m: &Vector3<f64>,
        probe_ref_m: &Vector3<f64>,
        drogue_ref_m: &Vector3<f64>,
    ) -> DroguePose {
        let range_m = self.range.range_m(t_s);
        let fade = (range_m / self.fade_range_m).min(1.0);
        let offset_m =
            Vector3::new(range_m, 0.0, 0.0) + (wander_m + wave_sum(&self.sway_m, t_s)) * fade;
        // The receiver's attitude sway turns the tanker-fixed scene about the probe reference.
        let sway = rotation_from_ypr(&wave_sum(&self.receiver_rad, t_s)).inverse();
        let vector_m = sway * offset_m;
        let attitude = sway * rotation_from_ypr(&wave_sum(&self.oscillation_rad, t_s));
        let origin_m = probe_ref_m + vector_m - attitude * drogue_ref_m;
        DroguePose {
            body_from_drogue: Isometry3::from_parts(Translation3::from(origin_m), attitude),
            vector_m,
        }
    }
}

fn rotation_from_ypr(ypr_rad: &Vector3<f64>) -> UnitQuaternion<f64> {
    let r = YawPitchRoll::new(ypr_rad.x, ypr_rad.y, ypr_rad.z).to_rotation();
    UnitQuaternion::from_rotation_matrix(&r)
}

/// One event of the true mount in internal units.
#[derive(Debug, Clone, PartialEq)]
enum EventModel {
    Step {
        at_s: f64,
        deviation: DeviationSpec,
    },
    Ramp {
        from_s: f64,
        to_s: f64,
        deviation: DeviationSpec,
    },
    Vibration {
        amplitude: DeviationSpec,
        omega_rad_s: f64,
        phase_rad: [f64; 6],
        from_s: f64,
        to_s: f64,
    },
}

impl EventModel {
    /// The deviation this event contributes at `t_s`, if any.
    fn deviation_at(&self, t_s: f64) -> Option<MountDeviation> {
        match self {
            EventModel::Step { at_s, deviation } => (t_s >= *at_s).then(|| deviation.scaled(1.0)),
            EventModel::Ramp {
                from_s,
                to_s,
                deviation,
            } => (t_s > *from_s)
                .then(|| deviation.scaled(((t_s - from_s) / (to_s - from_s)).min(1.0))),
            EventModel::Vibration {
                amplitude,
                omega_rad_s,
                phase_rad,
                from_s,
                to_s,
            } => (t_s >= *from_s && t_s < *to_s).then(|| {
                let s = phase_rad.map(|p| (omega_rad_s * t_s + p).sin());
                let spec = DeviationSpec {
                    translation_mm: [0, 1, 2].map(|i| amplitude.translation_mm[i] * s[i]),
                    rotation_deg: [0, 1, 2].map(|i| amplitude.rotation_deg[i] * s[i + 3]),
                };
                spec.scaled(1.0)
            }),
        }
    }
}

/// The true mount over time: the initial mount with each active event's deviation applied in
/// list order (`MountDeviation::apply_to`).
#[derive(Debug, Clone, PartialEq)]
pub struct MountTimeline {
    initial: Mount,
    events: Vec<EventModel>,
}

impl MountTimeline {
    /// `vibration_phases_rad` supplies six phases per vibration event (drawn by the caller from
    /// a seeded stream, so the flex is not in phase on every axis).
    pub fn new(
        initial: Mount,
        events: &[MountEvent],
        vibration_phases_rad: &mut impl FnMut() -> f64,
        check: &Checker,
    ) -> Result<Self, SimError> {
        let models = events
            .iter()
            .enumerate()
            .map(|(i, e)| {
                event_model(
                    e,
                    &format!("mount_events[{i}]"),
                    vibration_phases_rad,
                    check,
                )
            })
            .collect::<Result<_, _>>()?;
        Ok(Self {
            initial,
            events: models,
        })
    }

    /// The true mount at `t_s`.
    pub fn mount_at(&self, t_s: f64) -> Mount {
        self.events
            .iter()
            .filter_map(|e| e.deviation_at(t_s))
            .fold(self.initial, |m, d| d.apply_to(&m))
    }

    pub fn initial(&self) -> &Mount {
        &self.initial
    }

    pub fn event_count(&self) -> usize {
        self.events.len()
    }
}

fn event_model(
    event: &MountEvent,
    field: &str,
    phases: &mut impl FnMut() -> f64,
    check: &Checker,
) -> Result<EventModel, SimError> {
    match event {
        MountEvent::Step(s) => {
            let f = format!("{field}.step");
            check.non_negative(s.at_s, &format!("{f}.at_s"))?;
            let deviation = named_deviation(s.translation_mm, s.rotation_deg, &f, check)?;
            Ok(EventModel::Step {
                at_s: s.at_s,
                deviation,
            })
        }
        MountEvent::Ramp(r) => {
            let f = format!("{field}.ramp");
            check.non_negative(r.from_s, &format!("{f}.from_s"))?;
            check.finite(r.to_s, &format!("{f}.to_s"))?;
            check.require(r.to_s > r.from_s, &f, "a ramp needs to_s after from_s")?;
            let deviation = named_deviation(r.translation_mm, r.rotation_deg, &f, check)?;
            Ok(EventModel::Ramp {
                from_s: r.from_s,
                to_s: r.to_s,
                deviation,
            })
        }
        MountEvent::Vibration(v) => {
            vibration_model(v, &format!("{field}.vibration"), phases, check)
        }
    }
}

fn vibration_model(
    v: &VibrationEvent,
    field: &str,
    phases: &mut impl FnMut() -> f64,
    check: &Checker,
) -> Result<EventModel, SimError> {
    check.positive(v.frequency_hz, &format!("{field}.frequency_hz"))?;
    let names = [
        format!("{field}.amplitude_mm"),
        format!("{field}.amplitude_deg"),
    ];
    let amplitude = deviation(
        v.amplitude_mm,
        v.amplitude_deg,
        [&names[0], &names[1]],
        check,
    )?;
    let from_s = v.from_s.unwrap_or(0.0);
    let to_s = v.to_s.unwrap_or(f64::INFINITY);
    check.non_negative(from_s, &format!("{field}.from_s"))?;
    check.require(to_s > from_s, field, "to_s must come after from_s")?;
    Ok(EventModel::Vibration {
        amplitude,
        omega_rad_s: TAU * v.frequency_hz,
        phase_rad: [(); 6].map(|_| phases()),
        from_s,
        to_s,
    })
}

/// A checked step or ramp deviation under `field` (`translation_mm`, `rotation_deg`).
fn named_deviation(
    translation_mm: [f64; 3],
    rotation_deg: [f64; 3],
    field: &str,
    check: &Checker,
) -> Result<DeviationSpec, SimError> {
    let names = [
        format!("{field}.translation_mm"),
        format!("{field}.rotation_deg"),
    ];
    deviation(translation_mm, rotation_deg, [&names[0], &names[1]], check)
}

/// A checked deviation; `fields` names the translation and rotation entries in errors.
fn deviation(
    translation_mm: [f64; 3],
    rotation_deg: [f64; 3],
    fields: [&str; 2],
    check: &Checker,
) -> Result<DeviationSpec, SimError> {
    check.finite3(translation_mm, fields[0])?;
    check.finite3(rotation_deg, fields[1])?;
    Ok(DeviationSpec {
        translation_mm,
        rotation_deg,
    })
}

/// The nominal mount written for the pipeline: `error` applied to the true initial mount.
pub fn nominal_mount(
    true_initial: &Mount,
    error: Option<&DeviationSpec>,
    check: &Checker,
) -> Result<Mount, SimError> {
    match error {
        Some(e) => {
            let fields = ["nominal_error.translation_mm", "nominal_error.rotation_deg"];
            let spec = deviation(e.translation_mm, e.rotation_deg, fields, check)?;
            Ok(spec.scaled(1.0).apply_to(true_initial))
        }
        None => Ok(*true_initial),
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::sim::noise::stream_rng;
    use crate::sim::scenario::{Hold, Move};

    fn check() -> Checker<'static> {
        Checker::new("test")
    }

    #[test]
    fn range_profile_follows_the_phases() {
        // Hand-worked: 14 m for 50 s, close at 0.5 m/s (28 s), contact 20 s, back off at
        // 1 m/s to 10 m (10 s), then hold.
        let approach = Approach {
            start_range_m: 14.0,
            phases: vec![
                Phase::Station(Hold {
                    duration_s: Some(50.0),
                }),
                Phase::Close(Move {
                    speed_m_s: 0.5,
                    to_range_m: None,
                }),
                Phase::Contact(Hold {
                    duration_s: Some(20.0),
                }),
                Phase::BackOff(Move {
                    speed_m_s: 1.0,
                    to_range_m: Some(10.0),
                }),
                Phase::Station(Hold { duration_s: None }),
            ],
        };
        let profile = RangeProfile::new(&approach, &check()).unwrap();
        for (t, r) in [
            (0.0, 14.0),
            (49.0, 14.0),
            (64.0, 7.0),
            (78.0, 0.0),
            (97.9, 0.0),
            (103.0, 5.0),
            (500.0, 10.0),
        ] {
            assert!(
                (profile.range_m(t) - r).abs() < 1e-12,
                "t {t}: {}",
                profile.range_m(t)
            );
        }
    }

    #[test]
    fn impossible_phase_orders_are_refused() {
        let contact_first = Approach {
            start_range_m: 5.0,
            phases: vec![Phase::Contact(Hold::default())],
        };
        assert!(RangeProfile::new(&contact_first, &check()).is_err());
        let after_endless = Approach {
            start_range_m: 5.0,
            phases: vec![
                Phase::Station(Hold::default()),
                Phase::Station(Hold::default()),
            ],
        };
        assert!(RangeProfile::new(&after_endless, &check()).is_err());
        let back_off_without_target = Approach {
            start_range_m: 0.0,
            phases: vec![Phase::BackOff(Move {
                speed_m_s: 1.0,
                to_range_m: None,
            })],
        };
        assert!(RangeProfile::new(&back_off_without_target, &check()).is_err());
    }

    #[test]
    fn wander_has_the_ornstein_uhlenbeck_moments() {
        // Source: exact OU update (Gillespie 1996): stationary variance σ², lag-1 correlation
        // exp(-Δt/τ) = exp(-0.05) = 0.951229. 200 000 steps: the variance has a standard error
        // near 1.5 %, the correlation near 0.0007.
        let path = DroguePath {
            range: RangeProfile {
                start_m: 5.0,
                legs: Vec::new(),
            },
            wander_sigma_m: Vector3::new(1.0, 2.0, 0.5),
            wander_tau_s: 2.0,
            sway_m: Vec::new(),
            oscillation_rad: Vec::new(),
            receiver_rad: Vec::new(),
            fade_range_m: 1.0,
        };
        let mut state = path.wander(0.1);
        let mut rng = stream_rng(3, 1);
        let n = 200_000;
        let (mut sq, mut lag) = (Vector3::zeros(), Vector3::zeros());
        let mut previous = state.step(&mut rng);
        for _ in 0..n {
            let x = state.step(&mut rng);
            sq += x.component_mul(&x);
            lag += x.component_mul(&previous);
            previous = x;
        }
        let variance = sq / n as f64;
        for i in 0..3 {
            let sigma2 = path.wander_sigma_m[i].powi(2);
            assert!(
                (variance[i] / sigma2 - 1.0).abs() < 0.06,
                "axis {i}: {}",
                variance[i]
            );
            assert!((lag[i] / sq[i] - 0.951229).abs() < 0.005, "axis {i}");
        }
    }

    #[test]
    fn ramp_and_vibration_scale_as_specified() {
        let initial = Mount {
            position_m: Vector3::new(1.0, 0.2, -0.9),
            attitude: YawPitchRoll::new(0.03, -0.06, 0.01),
        };
        let events = vec![
            MountEvent::Ramp(super::super::scenario::RampEvent {
                from_s: 10.0,
                to_s: 20.0,
                translation_mm: [4.0, 0.0, -2.0],
                rotation_deg: [0.0, 0.6, 0.0],
            }),
            MountEvent::Vibration(super::super::scenario::VibrationEvent {
                amplitude_mm: [0.0, 0.5, 0.0],
                amplitude_deg: [0.0, 0.0, 0.0],
                frequency_hz: 7.0,
                from_s: Some(30.0),
                to_s: Some(40.0),
            }),
        ];
        let mut phase = || 0.25;
        let timeline = MountTimeline::new(initial, &events, &mut phase, &check()).unwrap();
        let dev =
            |t: f64| MountDeviation::between(&initial, &timeline.mount_at(t)).to_report_vector();
        assert!(dev(10.0).norm() < 1e-12);
        // Hand-worked: halfway through the ramp, half the deviation.
        let half = dev(15.0);
        assert!((half[0] - 2.0).abs() < 1e-9 && (half[2] + 1.0).abs() < 1e-9);
        assert!((half[4] - 0.3).abs() < 1e-9);
        let full = dev(25.0);
        assert!((full[0] - 4.0).abs() < 1e-9 && (full[4] - 0.6).abs() < 1e-9);
        // Vibration: 0.5 mm · sin(2π·7·t + 0.25) on y, on top of the completed ramp.
        let t = 31.013;
        let expected_mm = 0.5 * (TAU * 7.0 * t + 0.25).sin();
        assert!((dev(t)[1] - expected_mm).abs() < 1e-9);
        assert!((dev(45.0)[1]).abs() < 1e-12);
    }
}
