//! Keypoint detection errors of a simulated session: white pixel noise, a frame-to-frame
//! correlated AR(1) component per keypoint, gross outliers, dropouts, occlusion intervals and
//! whole missing frames; plus the seeded random streams everything draws from.
//!
//! Every keypoint consumes the same number of random draws in every frame whether or not it is
//! visible, so changing the geometry never shifts the noise of other keypoints or frames.

use std::f64::consts::TAU;

use nalgebra::Vector2;
use rand::RngExt;
use rand_distr::StandardNormal;
use rand_pcg::Pcg64Mcg;

use crate::model::KeypointModel;
use crate::session::ObjectKind;

use super::scenario::{NoiseSpec, Occlusion};
use super::validate::Checker;
use super::SimError;

/// Stream of the drogue's random walk.
pub const STREAM_WANDER: u64 = 1;
/// Stream of the keypoint errors and missing frames.
pub const STREAM_DETECTION: u64 = 2;
/// Stream of the phases of mount vibration events.
pub const STREAM_VIBRATION: u64 = 3;

/// SplitMix64 finaliser (Steele, Lea and Flood, "Fast splittable pseudorandom number
/// generators", OOPSLA 2014): spreads nearby integers over the whole 64-bit range.
fn splitmix64(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// The generator of one named stream of one seed: a 128-bit PCG state derived from
/// `(seed, stream)`, so streams are independent of each other and of draw order elsewhere.
pub fn stream_rng(seed: u64, stream: u64) -> Pcg64Mcg {
    let high = splitmix64(seed);
    let low = splitmix64(stream ^ high.rotate_left(29));
    Pcg64Mcg::new((u128::from(high) << 64) | u128::from(low))
}

/// A validated occlusion: a time interval and which points of the object it hides.
#[derive(Debug, Clone, PartialEq)]
struct OcclusionModel {
    object: ObjectKind,
    hidden: Vec<bool>,
    from_s: f64,
    to_s: f64,
}

/// The detection error model in internal form.
#[derive(Debug, Clone, PartialEq)]
pub struct NoiseModel {
    white_px: f64,
    ar_coefficient: f64,
    ar_sigma_px: f64,
    outlier_fraction: f64,
    outlier_min_px: f64,
    outlier_max_px: f64,
    dropout_probability: f64,
    frame_missing_probability: f64,
    occlusions: Vec<OcclusionModel>,
    stated_sigma_px: f64,
}

/// What happens to one keypoint in one frame.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct PointError {
    pub offset_px: Vector2<f64>,
    pub dropped: bool,
}

impl NoiseModel {
    /// Checks the noise spec; `camera_sigma_px` is the default stated sigma for a noise-free run.
    pub fn new(
        spec: &NoiseSpec,
        probe: &KeypointModel,
        drogue: &KeypointModel,
        camera_sigma_px: f64,
        check: &Checker,
    ) -> Result<Self, SimError> {
        check.non_negative(spec.pixel_sigma, "noise.pixel_sigma")?;
        let (ar_coefficient, ar_sigma_px) = correlated_parts(spec, check)?;
        let (outlier_fraction, outlier_min_px, outlier_max_px) = outlier_parts(spec, check)?;
        check.probability(spec.dropout_probability, "noise.dropout_probability")?;
        check.probability(
            spec.frame_missing_probability,
            "noise.frame_missing_probability",
        )?;
        let occlusions = spec
            .occlusions
            .iter()
            .enumerate()
            .map(|(i, o)| {
                occlusion_model(o, probe, drogue, &format!("noise.occlusions[{i}]"), check)
            })
            .collect::<Result<_, _>>()?;
        let total = spec.pixel_sigma.hypot(ar_sigma_px);
        let stated_sigma_px = match spec.stated_sigma_px {
            Some(s) => {
                check.positive(s, "noise.stated_sigma_px")?;
                s
            }
            None if total > 0.0 => total,
            None => camera_sigma_px,
        };
        Ok(Self {
            white_px: spec.pixel_sigma,
            ar_coefficient,
            ar_sigma_px,
            outlier_fraction,
            outlier_min_px,
            outlier_max_px,
            dropout_probability: spec.dropout_probability,
            frame_missing_probability: spec.frame_missing_probability,
            occlusions,
            stated_sigma_px,
        })
    }

    /// The `sigma_px` written with every detection.
    pub fn stated_sigma_px(&self) -> f64 {
        self.stated_sigma_px
    }

    /// Whether point `index` of `object` is hidden by an occlusion at `t_s`.
    pub fn occluded(&self, object: ObjectKind, index: usize, t_s: f64) -> bool {
        self.occlusions
            .iter()
            .any(|o| o.object == object && o.hidden[index] && t_s >= o.from_s && t_s < o.to_s)
    }
}

fn correlated_parts(spec: &NoiseSpec, check: &Checker) -> Result<(f64, f64), SimError> {
    let Some(c) = &spec.correlated else {
        return Ok((0.0, 0.0));
    };
    check.non_negative(c.sigma_px, "noise.correlated.sigma_px")?;
    check.require(
        (0.0..1.0).contains(&c.coefficient),
        "noise.correlated.coefficient",
        format!("must lie in [0, 1) (got {})", c.coefficient),
    )?;
    Ok((c.coefficient, c.sigma_px))
}

fn outlier_parts(spec: &NoiseSpec, check: &Checker) -> Result<(f64, f64, f64), SimError> {
    let Some(o) = &spec.outliers else {
        return Ok((0.0, 0.0, 0.0));
    };
    check.probability(o.fraction, "noise.outliers.fraction")?;
    check.non_negative(o.min_px, "noise.outliers.min_px")?;
    check.non_negative(o.max_px, "noise.outliers.max_px")?;
    check.require(
        o.max_px >= o.min_px,
        "noise.outliers.max_px",
        format!("must be at least min_px ({})", o.min_px),
    )?;
    Ok((o.fraction, o.min_px, o.max_px))
}

fn occlusion_model(
    o: &Occlusion,
    probe: &KeypointModel,
    drogue: &KeypointModel,
    field: &str,
    check: &Checker,
) -> Result<OcclusionModel, SimError> {
    check.non_negative(o.from_s, &format!("{field}.from_s"))?;
    check.require(o.to_s > o.from_s, field, "to_s must come after from_s")?;
    let model = match o.object {
        ObjectKind::Probe => probe,
        ObjectKind::Drogue => drogue,
    };
    let mut hidden = vec![o.points.is_none(); model.len()];
    for id in o.points.iter().flatten() {
        let index = model.index_of(id).ok_or_else(|| {
            check.invalid(
                field,
                format!("'{id}' is not a point of the {:?} model", o.object),
            )
        })?;
        hidden[index] = true;
    }
    Ok(OcclusionModel {
        object: o.object,
        hidden,
        from_s: o.from_s,
        to_s: o.to_s,
    })
}

/// The running detection-error process: one AR(1) state per keypoint slot.
#[derive(Debug, Clone)]
pub struct DetectionNoise<'a> {
    model: &'a NoiseModel,
    rng: Pcg64Mcg,
    ar_state_px: Vec<Vector2<f64>>,
    started: Vec<bool>,
}

impl<'a> DetectionNoise<'a> {
    /// `slots` is the number of keypoints tracked (probe points, then drogue points).
    pub fn new(model: &'a NoiseModel, rng: Pcg64Mcg, slots: usize) -> Self {
        Self {
            model,
            rng,
            ar_state_px: vec![Vector2::zeros(); slots],
            started: vec![false; slots],
        }
    }

    /// Whether the next frame is missing as a whole (one uniform draw per frame).
    pub fn frame_missing(&mut self) -> bool {
        self.rng.random::<f64>() < self.model.frame_missing_probability
    }

    /// The error of keypoint `slot` in this frame (eight draws, always).
    pub fn point_error(&mut self, slot: usize) -> PointError {
        let white = self.normal2() * self.model.white_px;
        let correlated = self.advance_ar(slot);
        let is_outlier = self.rng.random::<f64>() < self.model.outlier_fraction;
        let size_u = self.rng.random::<f64>();
        let angle_rad = self.rng.random::<f64>() * TAU;
        let dropped = self.rng.random::<f64>() < self.model.dropout_probability;
        let mut offset_px = white + correlated;
        if is_outlier {
            let m = self.model;
            let size_px = m.outlier_min_px + (m.outlier_max_px - m.outlier_min_px) * size_u;
            offset_px += Vector2::new(angle_rad.cos(), angle_rad.sin()) * size_px;
        }
        PointError { offset_px, dropped }
    }

    fn normal2(&mut self) -> Vector2<f64> {
        Vector2::new(
            self.rng.sample(StandardNormal),
            self.rng.sample(StandardNormal),
        )
    }

    /// AR(1) step, started from the stationary distribution.
    fn advance_ar(&mut self, slot: usize) -> Vector2<f64> {
        let eps = self.normal2();
        let (phi, sigma) = (self.model.ar_coefficient, self.model.ar_sigma_px);
        let state = if self.started[slot] {
            self.ar_state_px[slot] * phi + eps * (sigma * (1.0 - phi * phi).sqrt())
        } else {
            eps * sigma
        };
        self.started[slot] = true;
        self.ar_state_px[slot] = state;
        state
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn streams_are_reproducible_and_distinct() {
        // Source: SplitMix64 reference output (Vigna's splitmix64.c, state 0; value recalled from
        // memory): the first value is
        // 0xE220A8397B1DCDAF.
        assert_eq!(splitmix64(0), 0xE220_A839_7B1D_CDAF);
        let draw = |seed, stream| {
            let mut rng = stream_rng(seed, stream);
            [(); 4].map(|_| rng.random::<u64>())
        };
        assert_eq!(draw(7, STREAM_WANDER), draw(7, STREAM_WANDER));
        assert_ne!(draw(7, STREAM_WANDER), draw(7, STREAM_DETECTION));
        assert_ne!(draw(7, STREAM_WANDER), draw(8, STREAM_WANDER));
    }
}
