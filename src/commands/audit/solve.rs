//! Streams an audit's frames through the per-frame solver in batches, keeping the frame records
//! and the truth aligned with them. Memory grows with the solved frames only (no image data,
//! no keypoints kept). The next batch is read while the current one is solved.

use crate::geometry::Mount;
use crate::offset::frames::{FrameRecord, FrameSolver};
use crate::offset::observed_mount;
use crate::pnp::{solve_pose, PnpOptions};
use crate::session::{FrameDetections, InputError};
use crate::stats::packed::PackedSym6;
use nalgebra::Vector3;

use super::input::{FrameInput, Setup};

/// Frames read before a parallel solve: big enough to keep both cores busy, small enough that
/// the keypoints in flight stay a few megabytes.
const BATCH_FRAMES: usize = 4096;

/// The solved session.
#[derive(Debug, Clone)]
pub struct Solved {
    pub records: Vec<FrameRecord>,
    /// The covariance of each record's mount deviation (packed), until the statistics take
    /// them over (then empty).
    pub deviation_covariances: Vec<Option<PackedSym6>>,
    /// The true probe-to-drogue vector in body axes (m) of each record's frame, when the
    /// session has truth (all the audit uses of a truth row).
    pub true_vector_m: Vec<Option<Vector3<f64>>>,
    /// The mount deviations are measured from: the nominal, or (without one) the observed
    /// mount of the first frame whose probe could be solved.
    pub reference: Mount,
}

/// Reads every frame and solves both objects in each.
pub fn solve_all(
    setup: &Setup,
    frames: impl Iterator<Item = FrameInput>,
    progress: &dyn Fn(u64),
) -> Result<Solved, InputError> {
    let mut solved = Solved {
        records: Vec::new(),
        deviation_covariances: Vec::new(),
        true_vector_m: Vec::new(),
        reference: setup.nominal.unwrap_or_else(|| Mount {
            position_m: Vector3::zeros(),
            attitude: crate::geometry::YawPitchRoll::new(0.0, 0.0, 0.0),
        }),
    };
    let mut reference_known = setup.nominal.is_some();
    let solver_for = |reference| {
        FrameSolver::new(
            &setup.camera,
            &setup.probe,
            &setup.drogue,
            reference,
            PnpOptions::default(),
        )
    };
    // One solver for the session (its reference geometry and covariances are kept across
    // batches), made again only when the first observed mount becomes the reference.
    let mut solver = solver_for(solved.reference);
    let mut frames = frames;
    let mut next = read_batch(&mut frames, &mut solved.true_vector_m)?;
    while !next.is_empty() {
        let batch = std::mem::take(&mut next);
        if !reference_known {
            if let Some(mount) = first_observed_mount(setup, &batch) {
                solved.reference = mount;
                reference_known = true;
                solver = solver_for(mount);
            }
        }
        let (records, read) = if rayon::current_thread_index().is_some() {
            // Already on a pool thread (audits run in parallel, e.g. a sensitivity study): a
            // blocking join here would hold a worker the solve itself needs, so no overlap.
            let records = solver.solve_batch(&batch);
            (records, read_batch(&mut frames, &mut solved.true_vector_m))
        } else {
            // The next batch is read on this thread while the pool solves this one.
            let (records, read) = std::thread::scope(|scope| {
                let solving = scope.spawn(|| solver.solve_batch(&batch));
                let read = read_batch(&mut frames, &mut solved.true_vector_m);
                (solving.join(), read)
            });
            let records = records.unwrap_or_else(|panic| std::panic::resume_unwind(panic));
            (records, read)
        };
        for (record, covariance) in records {
            solved.records.push(record);
            solved.deviation_covariances.push(covariance);
        }
        progress(solved.records.len() as u64);
        next = read?;
    }
    // The records grew by doubling; give back the unused tail before the statistics run.
    solved.records.shrink_to_fit();
    solved.deviation_covariances.shrink_to_fit();
    solved.true_vector_m.shrink_to_fit();
    Ok(solved)
}

/// Reads up to `BATCH_FRAMES` frames, appending their true vectors to `truth`; empty at the
/// end.
fn read_batch(
    frames: &mut impl Iterator<Item = FrameInput>,
    truth: &mut Vec<Option<Vector3<f64>>>,
) -> Result<Vec<FrameDetections>, InputError> {
    let mut batch = Vec::with_capacity(BATCH_FRAMES);
    for item in frames.by_ref().take(BATCH_FRAMES) {
        let (detections, row) = item?;
        batch.push(detections);
        truth.push(row.map(|t| t.vector_m));
    }
    Ok(batch)
}

/// The observed mount of the first frame in `batch` whose probe pose solves.
fn first_observed_mount(setup: &Setup, batch: &[FrameDetections]) -> Option<Mount> {
    let options = PnpOptions::default();
    batch.iter().find_map(|f| {
        solve_pose(&setup.camera, &setup.probe, &f.probe, None, &options)
            .estimate()
            .map(|e| observed_mount(&e.pose))
    })
}
