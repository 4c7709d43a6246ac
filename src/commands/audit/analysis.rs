//! The statistics of an audit: the deviation series handed to `stats` (drift analysis with
//! change points and segments, per-frame and windowed consistency with the nominal, pixel noise)
//! and the segment mounts the fixed-offset error is computed from.

use nalgebra::Vector6;
use rayon::prelude::*;

use crate::geometry::{Mount, MountDeviation};
use crate::stats::consistency::{
    estimate_pixel_noise, frame_consistency, windowed_consistency, ChiSquareTest,
    PixelNoiseEstimate,
};
use crate::stats::drift::Calibrators;
use crate::stats::drift::{analyse_drift, DriftAnalysis, DriftOptions};
use crate::stats::screening::screen_gross_errors;
use crate::stats::series::DeviationSeries;
use crate::stats::StatsError;

use super::solve::Solved;

/// Level of every confidence interval in the report.
pub const LEVEL: f64 = 0.95;

/// Per-frame consistency test level (a frame over its 99% chi-square quantile is counted).
pub const FRAME_ALPHA: f64 = 0.01;

/// Frames per window of the windowed consistency test (one second at 30 Hz).
pub const WINDOW_FRAMES: usize = 30;

/// Half-width (samples) of the running median a frame is screened against, and the per-frame
/// level at which a frame counts as a gross error: at 1e-6 a clean session of a million frames
/// loses about one frame.
const SCREEN_HALF_WINDOW: usize = 10;
const SCREEN_ALPHA: f64 = 1e-6;

/// What the statistics found.
#[derive(Debug, Clone)]
pub struct Analysis {
    /// Record index of each deviation sample (frames whose probe was solved and that passed
    /// the screening for gross errors).
    pub sample_records: Vec<usize>,
    /// Records set aside as gross errors (a pose far from all its neighbours).
    pub screened_records: Vec<usize>,
    /// `None` when the session has too few solved frames for a change-point search.
    pub drift: Option<DriftAnalysis>,
    /// Segment of each sample.
    pub sample_segment: Vec<usize>,
    /// Each segment's mount estimate (reference ⊕ segment mean deviation).
    pub segment_mounts: Vec<Mount>,
    /// Per-frame chi-square against the reference (the nominal); one per sample.
    pub frame_tests: Vec<ChiSquareTest>,
    pub windows: Vec<ChiSquareTest>,
    pub pixel: Option<PixelNoiseEstimate>,
}

/// The simulated null distributions (penalty, online threshold), shared by every audit in the
/// process: they depend only on the series' length, dimension and correlation class, so repeated
/// audits (sensitivity studies, tests) draw them once. Seeded, so sharing changes no result.
pub fn shared_calibrators() -> &'static Calibrators {
    static SHARED: std::sync::OnceLock<Calibrators> = std::sync::OnceLock::new();
    SHARED.get_or_init(Calibrators::default)
}

/// Runs every test on the solved session.
pub fn analyse(
    solved: &mut Solved,
    false_alarm_rate: f64,
    assumed_sigma_px: f64,
    calibrators: &Calibrators,
) -> Result<Analysis, StatsError> {
    // One validated series of every solved frame (each covariance inverted once, then freed);
    // the screened frames are then dropped from it in place.
    let (records, mut series) = deviation_series(solved)?;
    let screening = screen_gross_errors(
        series.deviations(),
        series.information(),
        SCREEN_HALF_WINDOW,
        SCREEN_ALPHA,
    )?;
    let mut sample_records = Vec::with_capacity(records.len());
    let mut screened_records = Vec::new();
    for (record, keep) in records.into_iter().zip(&screening.keep) {
        if *keep {
            sample_records.push(record);
        } else {
            screened_records.push(record);
        }
    }
    series.retain(&screening.keep)?;
    drop(screening);
    // The per-frame tests first (32 bytes a frame): the drift analysis is then handed the series
    // and frees its information matrices (176 bytes a frame) before the change-point search.
    let frame_tests: Vec<ChiSquareTest> = series
        .deviations()
        .par_iter()
        .zip(series.information())
        .map(|(deviation, w)| frame_consistency(deviation, w))
        .collect();
    let samples = series.len();
    let drift = run_drift(series, false_alarm_rate, calibrators)?;
    let sample_segment = segment_of_samples(drift.as_ref(), samples);
    let windows = if frame_tests.len() >= WINDOW_FRAMES {
        windowed_consistency(&frame_tests, WINDOW_FRAMES)?
    } else {
        Vec::new()
    };
    let segment_mounts = drift
        .as_ref()
        .map(|d| {
            d.segments
                .iter()
                .map(|s| mount_of(&solved.reference, &s.mean.mean))
                .collect()
        })
        .unwrap_or_default();
    Ok(Analysis {
        sample_records,
        screened_records,
        drift,
        sample_segment,
        segment_mounts,
        frame_tests,
        windows,
        pixel: pixel_noise(solved, assumed_sigma_px)?,
    })
}

/// The mount at `deviation` (report units) from `reference`.
pub fn mount_of(reference: &Mount, deviation: &Vector6<f64>) -> Mount {
    MountDeviation::from_report_vector(deviation).apply_to(reference)
}

/// The deviation series of the records whose probe was solved (and not screened), with the
/// record index of each sample. Takes the covariances over from `solved` (they are needed only
/// to form the series' information) and keeps the samples' in place, without a copy.
fn deviation_series(solved: &mut Solved) -> Result<(Vec<usize>, DeviationSeries), StatsError> {
    let mut covariances = std::mem::take(&mut solved.deviation_covariances);
    covariances.resize(solved.records.len(), None);
    let pairs = solved.records.iter().zip(covariances.iter_mut());
    for (r, covariance) in pairs {
        if r.deviation.is_none() {
            *covariance = None;
        }
    }
    let n = covariances.iter().filter(|c| c.is_some()).count();
    let mut records = Vec::with_capacity(n);
    let (mut frames, mut times_s, mut deviations) = (
        Vec::with_capacity(n),
        Vec::with_capacity(n),
        Vec::with_capacity(n),
    );
    for (i, (r, covariance)) in solved.records.iter().zip(&covariances).enumerate() {
        if let (Some(deviation), Some(_)) = (r.deviation, covariance) {
            records.push(i);
            frames.push(r.frame as i64);
            times_s.push(r.time_s);
            deviations.push(deviation);
        }
    }
    covariances.retain(Option::is_some);
    let series = DeviationSeries::from_packed_options(frames, times_s, deviations, &covariances)?;
    Ok((records, series))
}

fn run_drift(
    series: DeviationSeries,
    false_alarm_rate: f64,
    calibrators: &Calibrators,
) -> Result<Option<DriftAnalysis>, StatsError> {
    let options = DriftOptions {
        false_alarm_rate,
        level: LEVEL,
        ..DriftOptions::default()
    };
    if series.len() < 2 * options.min_segment_samples {
        return Ok(None);
    }
    analyse_drift(series, &options, calibrators).map(Some)
}

fn segment_of_samples(drift: Option<&DriftAnalysis>, n: usize) -> Vec<usize> {
    let Some(drift) = drift else {
        return vec![0; n];
    };
    let mut out = Vec::with_capacity(n);
    for (k, cp_end) in drift
        .change_points
        .iter()
        .map(|c| c.index)
        .chain(std::iter::once(n))
        .enumerate()
    {
        out.resize(cp_end, k);
    }
    out
}

/// Pixel noise from both objects' reprojection chi-squares (in units of the stated sigma).
fn pixel_noise(
    solved: &Solved,
    assumed_sigma_px: f64,
) -> Result<Option<PixelNoiseEstimate>, StatsError> {
    let fits = solved
        .records
        .iter()
        .flat_map(|r| [r.probe.as_ref().ok(), r.drogue.as_ref().ok()])
        .flatten();
    let (chi2, dof): (Vec<f64>, Vec<usize>) = fits.map(|f| (f.chi2, f.dof)).unzip();
    if dof.iter().sum::<usize>() == 0 {
        return Ok(None);
    }
    estimate_pixel_noise(&chi2, &dof, assumed_sigma_px, LEVEL).map(Some)
}
