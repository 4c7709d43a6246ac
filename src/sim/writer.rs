//! Writes a simulated session in the formats of DESIGN section 3: the manifest, camera, keypoint
//! models and nominal mount as YAML, detections and truth as CSV streamed frame by frame (memory
//! stays bounded however long the session). Every file is written under a temporary name and
//! renamed only when all of them are complete, so a failure leaves nothing half-written.
//!
//! Number formats are fixed, so the same scenario and seed give the same bytes: pixels with 4
//! decimals, times with 6 (s), truth positions with 6 (m) and angles with 6 (deg). The optional `poses.csv`
//! (true `T_CB` and `T_CD` as rotation vectors and translations) uses the shortest decimal that
//! reads back to the same double, so a reference projection can start from exact poses.
//!
//! With the scenario's `render_every: N`, a synthetic image of every Nth frame goes into the
//! `frames` folder (see [`super::render`]) and the manifest names it.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::{Path, PathBuf};

use serde::Serialize;
use tempfile::NamedTempFile;

use crate::model::KeypointModel;
use crate::session::{CameraFile, FrameDetections, ModelFile, MountFile};

use super::csvfmt::RowBuf;
use super::render::{FrameFolder, FRAMES_DIR};
use super::{Scenario, SimError, SimFrame, Simulation, TruthFrame};

pub const SESSION_FILE: &str = "session.yaml";
pub const CAMERA_FILE: &str = "camera.yaml";
pub const PROBE_FILE: &str = "probe.yaml";
pub const DROGUE_FILE: &str = "drogue.yaml";
pub const MOUNT_FILE: &str = "mount.yaml";
pub const DETECTIONS_FILE: &str = "detections.csv";
pub const TRUTH_FILE: &str = "truth.csv";
pub const SCENARIO_FILE: &str = "scenario.yaml";
pub const POSES_FILE: &str = "poses.csv";

pub const DETECTIONS_HEADER: &str = "frame,time_s,object,point,u,v,sigma_px";
pub const TRUTH_HEADER: &str = "frame,time_s,cam_x_m,cam_y_m,cam_z_m,cam_yaw_deg,cam_pitch_deg,\
cam_roll_deg,vec_x_m,vec_y_m,vec_z_m";
pub const POSES_HEADER: &str = "frame,time_s,probe_rx_rad,probe_ry_rad,probe_rz_rad,probe_tx_m,\
probe_ty_m,probe_tz_m,drogue_rx_rad,drogue_ry_rad,drogue_rz_rad,drogue_tx_m,drogue_ty_m,drogue_tz_m";

/// Output buffer per CSV file; large enough that writes reach the disk in big blocks.
const CSV_BUFFER_BYTES: usize = 1 << 20;

/// What was written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
pub struct SessionCounts {
    /// Frames in the scenario, missing ones included.
    pub frames_total: u64,
    /// Frames present in the session (each with a truth row).
    pub frames_written: u64,
    pub frames_missing: u64,
    pub detection_rows: u64,
    pub probe_rows: u64,
    pub drogue_rows: u64,
    /// Frame images written into the `frames` folder.
    pub frames_rendered: u64,
}

/// The session manifest as written (paths relative to it).
#[derive(Serialize)]
struct Manifest<'a> {
    camera: &'a str,
    probe: &'a str,
    drogue: &'a str,
    mount: &'a str,
    detections: &'a str,
    truth: &'a str,
    #[serde(skip_serializing_if = "Option::is_none")]
    frames: Option<&'a str>,
}

/// Writes the whole session into `out_dir` (created if needed); `poses` adds `poses.csv`.
pub fn write_session(
    sim: &Simulation,
    scenario: &Scenario,
    out_dir: &Path,
    poses: bool,
) -> Result<SessionCounts, SimError> {
    let render_every = checked_render_every(scenario)?;
    std::fs::create_dir_all(out_dir).map_err(|source| SimError::Write {
        path: out_dir.to_path_buf(),
        source,
    })?;
    let mut staged = Staged::new(out_dir);
    staged.yaml(
        CAMERA_FILE,
        &CameraFile::from_camera(sim.camera()),
        "camera",
    )?;
    staged.yaml(
        PROBE_FILE,
        &ModelFile::from_model(sim.probe()),
        "probe model",
    )?;
    staged.yaml(
        DROGUE_FILE,
        &ModelFile::from_model(sim.drogue()),
        "drogue model",
    )?;
    staged.yaml(
        MOUNT_FILE,
        &MountFile::from_mount(sim.nominal_mount()),
        "nominal mount",
    )?;
    staged.text(SCENARIO_FILE, &scenario.to_yaml()?)?;
    let mut frames = render_every
        .map(|every| FrameFolder::create(sim, every, out_dir))
        .transpose()
        .map_err(|source| SimError::Write {
            path: out_dir.join(FRAMES_DIR),
            source,
        })?;
    let mut counts = staged.streams(sim, poses, frames.as_mut())?;
    staged.text(
        SESSION_FILE,
        &manifest_text(scenario, sim, frames.is_some())?,
    )?;
    if let Some(folder) = frames {
        counts.frames_rendered = folder.commit(out_dir).map_err(|source| SimError::Write {
            path: out_dir.join(FRAMES_DIR),
            source,
        })?;
    }
    staged.commit()?;
    Ok(counts)
}

/// The scenario's `render_every`, refused when 0 (before anything is written).
fn checked_render_every(scenario: &Scenario) -> Result<Option<u64>, SimError> {
    if scenario.render_every == Some(0) {
        return Err(SimError::Invalid {
            origin: scenario.origin.clone(),
            field: "render_every".into(),
            reason: "expected a whole number of frames, at least 1, found 0".into(),
        });
    }
    Ok(scenario.render_every)
}

fn manifest_text(scenario: &Scenario, sim: &Simulation, frames: bool) -> Result<String, SimError> {
    let manifest = Manifest {
        camera: CAMERA_FILE,
        probe: PROBE_FILE,
        drogue: DROGUE_FILE,
        mount: MOUNT_FILE,
        detections: DETECTIONS_FILE,
        truth: TRUTH_FILE,
        frames: frames.then_some(FRAMES_DIR),
    };
    let body = serde_saphyr::to_string(&manifest).map_err(|e| SimError::Serialize {
        what: "session manifest".into(),
        message: e.to_string(),
    })?;
    let name = scenario.name.as_deref().unwrap_or("unnamed");
    Ok(format!(
        "# Simulated by mountdrift {} from scenario '{name}', seed {} (full scenario: {SCENARIO_FILE}).\n{body}",
        env!("CARGO_PKG_VERSION"),
        sim.seed(),
    ))
}

/// Files written under temporary names in the output folder, renamed together at the end.
struct Staged<'a> {
    dir: &'a Path,
    files: Vec<(NamedTempFile, &'static str)>,
}

impl<'a> Staged<'a> {
    fn new(dir: &'a Path) -> Self {
        Self {
            dir,
            files: Vec::new(),
        }
    }

    fn create(&self, name: &'static str) -> Result<NamedTempFile, SimError> {
        let mut builder = tempfile::Builder::new();
        builder.prefix(".mountdrift-").suffix(".tmp");
        // Temporary files are private by default; the session is an ordinary readable output.
        #[cfg(unix)]
        {
            use std::os::unix::fs::PermissionsExt;
            builder.permissions(std::fs::Permissions::from_mode(0o644));
        }
        builder
            .tempfile_in(self.dir)
            .map_err(|source| self.error(name, source))
    }

    fn error(&self, name: &str, source: std::io::Error) -> SimError {
        SimError::Write {
            path: self.dir.join(name),
            source,
        }
    }

    fn text(&mut self, name: &'static str, text: &str) -> Result<(), SimError> {
        let mut file = self.create(name)?;
        file.write_all(text.as_bytes())
            .map_err(|source| self.error(name, source))?;
        self.files.push((file, name));
        Ok(())
    }

    fn yaml<T: Serialize>(
        &mut self,
        name: &'static str,
        value: &T,
        what: &str,
    ) -> Result<(), SimError> {
        let text = serde_saphyr::to_string(value).map_err(|e| SimError::Serialize {
            what: what.to_string(),
            message: e.to_string(),
        })?;
        self.text(name, &text)
    }

    /// Streams detections, truth (and poses) through buffered temporary files, and offers every
    /// frame to the frame images, if any.
    fn streams(
        &mut self,
        sim: &Simulation,
        poses: bool,
        mut frames: Option<&mut FrameFolder>,
    ) -> Result<SessionCounts, SimError> {
        let detections = self.create(DETECTIONS_FILE)?;
        let truth = self.create(TRUTH_FILE)?;
        let pose_file = if poses {
            Some(self.create(POSES_FILE)?)
        } else {
            None
        };
        let mut sinks = CsvSinks {
            detections: buffered(&detections),
            truth: buffered(&truth),
            poses: pose_file.as_ref().map(buffered),
        };
        let counts = sinks
            .write_all_with(sim, |frame| match frames.as_deref_mut() {
                Some(folder) => folder.offer(&frame.truth),
                None => Ok(()),
            })
            .and_then(|c| sinks.flush().map(|()| c))
            .map_err(|source| SimError::Write {
                path: self.dir.to_path_buf(),
                source,
            })?;
        drop(sinks);
        self.files.push((detections, DETECTIONS_FILE));
        self.files.push((truth, TRUTH_FILE));
        if let Some(file) = pose_file {
            self.files.push((file, POSES_FILE));
        }
        Ok(counts)
    }

    /// Renames every staged file to its final name, in the order written (the manifest last).
    fn commit(self) -> Result<(), SimError> {
        for (file, name) in self.files {
            let target: PathBuf = self.dir.join(name);
            file.persist(&target).map_err(|e| SimError::Write {
                path: target,
                source: e.error,
            })?;
        }
        Ok(())
    }
}

fn buffered(file: &NamedTempFile) -> BufWriter<&File> {
    BufWriter::with_capacity(CSV_BUFFER_BYTES, file.as_file())
}

/// The CSV outputs of a session, to any writers (files, or a sink in benchmarks).
pub struct CsvSinks<W: Write> {
    pub detections: W,
    pub truth: W,
    pub poses: Option<W>,
}

impl<W: Write> CsvSinks<W> {
    /// Writes the headers and every frame of the simulation.
    pub fn write_all(&mut self, sim: &Simulation) -> std::io::Result<SessionCounts> {
        self.write_all_with(sim, |_| Ok(()))
    }

    /// As [`write_all`](Self::write_all), also handing every frame to `each` once written.
    pub fn write_all_with(
        &mut self,
        sim: &Simulation,
        mut each: impl FnMut(&SimFrame) -> std::io::Result<()>,
    ) -> std::io::Result<SessionCounts> {
        writeln!(self.detections, "{DETECTIONS_HEADER}")?;
        writeln!(self.truth, "{TRUTH_HEADER}")?;
        if let Some(p) = &mut self.poses {
            writeln!(p, "{POSES_HEADER}")?;
        }
        let mut counts = SessionCounts {
            frames_total: sim.frame_count(),
            ..SessionCounts::default()
        };
        let mut row = RowBuf::default();
        for frame in sim.frames() {
            let d = &frame.detections;
            write_detections(&mut self.detections, d, sim.probe(), sim.drogue(), &mut row)?;
            write_truth_row(&mut self.truth, &frame.truth, &mut row)?;
            if let Some(p) = &mut self.poses {
                write_pose_row(p, &frame.truth)?;
            }
            each(&frame)?;
            counts.frames_written += 1;
            counts.probe_rows += d.probe.len() as u64;
            counts.drogue_rows += d.drogue.len() as u64;
        }
        counts.detection_rows = counts.probe_rows + counts.drogue_rows;
        counts.frames_missing = counts.frames_total - counts.frames_written;
        Ok(counts)
    }

    pub fn flush(&mut self) -> std::io::Result<()> {
        self.detections.flush()?;
        self.truth.flush()?;
        if let Some(p) = &mut self.poses {
            p.flush()?;
        }
        Ok(())
    }
}

/// The detection rows of one frame: probe points, then drogue points, in model order.
pub fn write_detections(
    w: &mut impl Write,
    d: &FrameDetections,
    probe: &KeypointModel,
    drogue: &KeypointModel,
    row: &mut RowBuf,
) -> std::io::Result<()> {
    // Frame number and time are shared by every row of the frame: format them once.
    let prefix_len = row
        .clear()
        .uint(d.frame)
        .comma()
        .fixed(d.time_s, 6)
        .comma()
        .len();
    for (object, model, list) in [("probe", probe, &d.probe), ("drogue", drogue, &d.drogue)] {
        for obs in list.iter() {
            row.truncate(prefix_len)
                .text(object)
                .comma()
                .text(&model.points()[obs.point].id)
                .comma();
            row.fixed(obs.px.x, 4).comma().fixed(obs.px.y, 4).comma();
            row.fixed(obs.sigma_px, 4).newline();
            w.write_all(row.as_bytes())?;
        }
    }
    Ok(())
}

/// One truth row: the true mount and the true probe-to-drogue vector.
pub fn write_truth_row(
    w: &mut impl Write,
    t: &TruthFrame,
    row: &mut RowBuf,
) -> std::io::Result<()> {
    row.clear().uint(t.frame).comma().fixed(t.time_s, 6);
    let angles_deg = t.mount.attitude.to_degrees();
    let values = t
        .mount
        .position_m
        .iter()
        .chain(&angles_deg)
        .chain(t.vector_m.iter());
    for value in values {
        row.comma().fixed(*value, 6);
    }
    row.newline();
    w.write_all(row.as_bytes())
}

/// One pose row: `T_CB` and `T_CD` as rotation vector (rad) and translation (m), exact.
pub fn write_pose_row(w: &mut impl Write, t: &TruthFrame) -> std::io::Result<()> {
    write!(w, "{},{:.6}", t.frame, t.time_s)?;
    for pose in [t.camera_from_body(), t.camera_from_drogue()] {
        let r = pose.rotation.scaled_axis();
        let p = pose.translation.vector;
        write!(w, ",{},{},{},{},{},{}", r.x, r.y, r.z, p.x, p.y, p.z)?;
    }
    writeln!(w)
}
