//! The detections CSV (`frame,time_s,object,point,u,v[,sigma_px]`): a reader that streams one
//! [`FrameDetections`] per frame, checking every row, and the matching writer.
//!
//! Rows of a frame are together and frames come in increasing order, so the reader keeps one
//! frame and one look-ahead row in memory whatever the file size.

use std::collections::HashMap;
use std::io::{Read, Write};
use std::path::Path;

use nalgebra::Vector2;

use super::csv_table::{number, CsvSource, CsvTable, CsvWriteError, TableSpec};
use super::error::{Column, InputError, Problem};
use super::{FrameDetections, ObjectKind, Observation};
use crate::model::KeypointModel;

const SPEC: TableSpec = TableSpec {
    required: &["frame", "time_s", "object", "point", "u", "v"],
    optional: &["sigma_px"],
    header: "frame,time_s,object,point,u,v[,sigma_px]",
};
// Column positions in SPEC.
const FRAME: usize = 0;
const TIME: usize = 1;
const OBJECT: usize = 2;
const POINT: usize = 3;
const U: usize = 4;
const V: usize = 5;
const SIGMA: usize = 6;

/// The point ids of one model, looked up by the raw bytes of a CSV field.
struct PointIds {
    object: ObjectKind,
    index: HashMap<Box<[u8]>, usize>,
    /// The ids in model order.
    ids: Vec<String>,
}

impl PointIds {
    fn new(object: ObjectKind, model: &KeypointModel) -> Self {
        let ids: Vec<String> = model.points().iter().map(|p| p.id.clone()).collect();
        let index = ids
            .iter()
            .enumerate()
            .map(|(i, id)| (id.as_bytes().into(), i))
            .collect();
        Self { object, index, ids }
    }
}

/// One checked row.
struct Row {
    frame: u64,
    time_s: f64,
    object: ObjectKind,
    observation: Observation,
    line: u64,
}

/// Streams a detections CSV frame by frame. After the first error it yields nothing more.
pub struct DetectionReader {
    table: CsvTable,
    probe: PointIds,
    drogue: PointIds,
    default_sigma_px: f64,
    /// First row of the next frame, read while finishing the current one.
    pending: Option<Row>,
    /// Frame number and time of the last frame yielded.
    previous: Option<(u64, f64)>,
    finished: bool,
}

impl DetectionReader {
    /// Opens a detections source. `default_sigma_px` (the camera's `pixel_sigma`) applies to
    /// rows without a `sigma_px`.
    pub fn open(
        source: &CsvSource,
        probe: &KeypointModel,
        drogue: &KeypointModel,
        default_sigma_px: f64,
    ) -> Result<Self, InputError> {
        let table = CsvTable::open(source, &SPEC)?;
        Ok(Self::with_table(table, probe, drogue, default_sigma_px))
    }

    /// Reads detections from any reader; `path` names it in messages.
    pub fn from_reader(
        input: impl Read + 'static,
        path: &Path,
        probe: &KeypointModel,
        drogue: &KeypointModel,
        default_sigma_px: f64,
    ) -> Result<Self, InputError> {
        let table = CsvTable::from_reader(Box::new(input), path, 0, &SPEC)?;
        Ok(Self::with_table(table, probe, drogue, default_sigma_px))
    }

    fn with_table(
        table: CsvTable,
        probe: &KeypointModel,
        drogue: &KeypointModel,
        default_sigma_px: f64,
    ) -> Self {
        Self {
            table,
            probe: PointIds::new(ObjectKind::Probe, probe),
            drogue: PointIds::new(ObjectKind::Drogue, drogue),
            default_sigma_px,
            pending: None,
            previous: None,
            finished: false,
        }
    }

    /// Reads and checks the next row on its own (not yet against its frame).
    fn read_row(&mut self) -> Result<Option<Row>, InputError> {
        if !self.table.next_row()? {
            return Ok(None);
        }
        let t = &self.table;
        let object = match t.raw(OBJECT).unwrap_or_default() {
            b"probe" => ObjectKind::Probe,
            b"drogue" => ObjectKind::Drogue,
            _ => {
                let found = t.text(OBJECT)?;
                let problem = Problem::expected("\"probe\" or \"drogue\"", found);
                return Err(t.error(Some(OBJECT), problem));
            }
        };
        let ids = match object {
            ObjectKind::Probe => &self.probe,
            ObjectKind::Drogue => &self.drogue,
        };
        let raw_point = t.raw(POINT).unwrap_or_default();
        let Some(&point) = ids.index.get(raw_point) else {
            let listing = ids.ids.join(", ");
            let expected = format!("a point id of the {} model ({listing})", object.name());
            let problem = Problem::expected(expected, t.text(POINT)?);
            return Err(t.error(Some(POINT), problem));
        };
        let observation = Observation {
            point,
            px: Vector2::new(t.finite(U)?, t.finite(V)?),
            sigma_px: self.sigma_px()?,
        };
        Ok(Some(Row {
            frame: t.count(FRAME)?,
            time_s: t.finite(TIME)?,
            object,
            observation,
            line: t.line(),
        }))
    }

    /// The row's `sigma_px`, or the default when the column is absent or the cell empty.
    fn sigma_px(&self) -> Result<f64, InputError> {
        let t = &self.table;
        if t.raw(SIGMA).is_none_or(|cell| cell.is_empty()) {
            return Ok(self.default_sigma_px);
        }
        let sigma_px = t.finite(SIGMA)?;
        if sigma_px > 0.0 {
            Ok(sigma_px)
        } else {
            let expected = "a positive number of pixels";
            Err(t.error(Some(SIGMA), Problem::expected(expected, t.text(SIGMA)?)))
        }
    }

    fn row_error(&self, row: &Row, column: &str, problem: Problem) -> InputError {
        let column = Some(Column::Named(column.to_string()));
        InputError::at(self.table.path(), row.line, column, problem)
    }

    /// A frame starts with this row: it must come after the previous frame.
    fn start_frame(&self, row: Row) -> Result<FrameDetections, InputError> {
        if let Some((previous, previous_s)) = self.previous {
            if row.frame <= previous {
                let problem = Problem::FrameOrder {
                    frame: row.frame,
                    previous,
                };
                return Err(self.row_error(&row, "frame", problem));
            }
            if row.time_s <= previous_s {
                let problem = Problem::TimeOrder {
                    frame: row.frame,
                    time_s: row.time_s,
                    previous,
                    previous_s,
                };
                return Err(self.row_error(&row, "time_s", problem));
            }
        }
        // Room for every point of each model: one allocation per object and frame, none on
        // the way.
        let mut frame = FrameDetections {
            frame: row.frame,
            time_s: row.time_s,
            probe: Vec::with_capacity(self.probe.ids.len()),
            drogue: Vec::with_capacity(self.drogue.ids.len()),
        };
        self.add(&mut frame, row)?;
        Ok(frame)
    }

    /// Adds a row of the same frame: same time, keypoint not yet seen.
    fn add(&self, frame: &mut FrameDetections, row: Row) -> Result<(), InputError> {
        // Every row of a frame carries the same written time, so exact equality is intended.
        #[allow(clippy::float_cmp)]
        if row.time_s != frame.time_s {
            let problem = Problem::TimeWithinFrame {
                frame: frame.frame,
                first_s: frame.time_s,
                time_s: row.time_s,
            };
            return Err(self.row_error(&row, "time_s", problem));
        }
        let (list, ids) = match row.object {
            ObjectKind::Probe => (&mut frame.probe, &self.probe),
            ObjectKind::Drogue => (&mut frame.drogue, &self.drogue),
        };
        if list.iter().any(|o| o.point == row.observation.point) {
            let problem = Problem::DuplicateKeypoint {
                object: ids.object.name(),
                id: ids.ids[row.observation.point].clone(),
                frame: frame.frame,
            };
            return Err(self.row_error(&row, "point", problem));
        }
        list.push(row.observation);
        Ok(())
    }

    fn next_frame(&mut self) -> Result<Option<FrameDetections>, InputError> {
        let first = match self.pending.take() {
            Some(row) => row,
            None => match self.read_row()? {
                Some(row) => row,
                None => return Ok(None),
            },
        };
        let mut frame = self.start_frame(first)?;
        while let Some(row) = self.read_row()? {
            if row.frame != frame.frame {
                self.pending = Some(row);
                break;
            }
            self.add(&mut frame, row)?;
        }
        self.previous = Some((frame.frame, frame.time_s));
        Ok(Some(frame))
    }
}

impl Iterator for DetectionReader {
    type Item = Result<FrameDetections, InputError>;

    fn next(&mut self) -> Option<Self::Item> {
        if self.finished {
            return None;
        }
        let next = self.next_frame().transpose();
        if !matches!(next, Some(Ok(_))) {
            self.finished = true;
        }
        next
    }
}

/// Writes detections in the format [`DetectionReader`] reads.
pub struct DetectionWriter<W: Write> {
    csv: csv::Writer<W>,
    probe_ids: Vec<String>,
    drogue_ids: Vec<String>,
    with_sigma: bool,
}

impl<W: Write> DetectionWriter<W> {
    /// Writes the header; `with_sigma` adds the `sigma_px` column.
    pub fn new(
        out: W,
        probe: &KeypointModel,
        drogue: &KeypointModel,
        with_sigma: bool,
    ) -> Result<Self, CsvWriteError> {
        let mut csv = csv::Writer::from_writer(out);
        let mut header = SPEC.required.to_vec();
        if with_sigma {
            header.push("sigma_px");
        }
        csv.write_record(&header)?;
        let ids = |m: &KeypointModel| m.points().iter().map(|p| p.id.clone()).collect();
        Ok(Self {
            csv,
            probe_ids: ids(probe),
            drogue_ids: ids(drogue),
            with_sigma,
        })
    }

    /// Writes every keypoint of a frame, probe first.
    pub fn write_frame(&mut self, frame: &FrameDetections) -> Result<(), CsvWriteError> {
        let objects = [
            (ObjectKind::Probe, &frame.probe),
            (ObjectKind::Drogue, &frame.drogue),
        ];
        for (object, observations) in objects {
            for observation in observations {
                self.write_row(frame, object, observation)?;
            }
        }
        Ok(())
    }

    fn write_row(
        &mut self,
        frame: &FrameDetections,
        object: ObjectKind,
        observation: &Observation,
    ) -> Result<(), CsvWriteError> {
        let ids = match object {
            ObjectKind::Probe => &self.probe_ids,
            ObjectKind::Drogue => &self.drogue_ids,
        };
        let id = ids
            .get(observation.point)
            .ok_or(CsvWriteError::UnknownPoint {
                object: object.name(),
                index: observation.point,
            })?;
        let mut row = vec![
            frame.frame.to_string(),
            number("time_s", frame.time_s)?,
            object.name().to_string(),
            id.clone(),
            number("u", observation.px.x)?,
            number("v", observation.px.y)?,
        ];
        if self.with_sigma {
            row.push(number("sigma_px", observation.sigma_px)?);
        }
        self.csv.write_record(&row)?;
        Ok(())
    }

    /// Flushes and returns the underlying writer.
    pub fn finish(self) -> Result<W, CsvWriteError> {
        self.csv
            .into_inner()
            .map_err(|e| CsvWriteError::Csv(csv::Error::from(e.into_error())))
    }
}
