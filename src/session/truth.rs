//! The truth CSV (true mount and true probe-to-drogue vector per frame, from simulations or
//! instrumented tests): a streaming reader of [`TruthRow`]s and the matching writer.

use std::io::{Read, Write};
use std::path::Path;

use nalgebra::Vector3;

use super::csv_table::{number, CsvSource, CsvTable, CsvWriteError, TableSpec};
use super::error::{InputError, Problem};
use crate::geometry::{Mount, YawPitchRoll};

const COLUMNS: &[&str] = &[
    "frame",
    "time_s",
    "cam_x_m",
    "cam_y_m",
    "cam_z_m",
    "cam_yaw_deg",
    "cam_pitch_deg",
    "cam_roll_deg",
    "vec_x_m",
    "vec_y_m",
    "vec_z_m",
];
const SPEC: TableSpec = TableSpec {
    required: COLUMNS,
    optional: &[],
    header: "frame,time_s,cam_x_m,cam_y_m,cam_z_m,cam_yaw_deg,cam_pitch_deg,cam_roll_deg,\
             vec_x_m,vec_y_m,vec_z_m",
};
const FRAME: usize = 0;
const TIME: usize = 1;
const CAM_X: usize = 2;
const CAM_YAW: usize = 5;
const VEC_X: usize = 8;

/// The truth for one frame: the true mount (camera pose in the body frame B) and the true
/// probe-to-drogue vector in B.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TruthRow {
    pub frame: u64,
    pub time_s: f64,
    pub mount: Mount,
    pub vector_m: Vector3<f64>,
}

/// Streams a truth CSV row by row. After the first error it yields nothing more.
pub struct TruthReader {
    table: CsvTable,
    previous: Option<(u64, f64)>,
    finished: bool,
}

impl TruthReader {
    pub fn open(source: &CsvSource) -> Result<Self, InputError> {
        Ok(Self::with_table(CsvTable::open(source, &SPEC)?))
    }

    /// Reads truth from any reader; `path` names it in messages.
    pub fn from_reader(input: impl Read + 'static, path: &Path) -> Result<Self, InputError> {
        let table = CsvTable::from_reader(Box::new(input), path, 0, &SPEC)?;
        Ok(Self::with_table(table))
    }

    fn with_table(table: CsvTable) -> Self {
        Self {
            table,
            previous: None,
            finished: false,
        }
    }

    fn vector(&self, first: usize) -> Result<Vector3<f64>, InputError> {
        let t = &self.table;
        Ok(Vector3::new(
            t.finite(first)?,
            t.finite(first + 1)?,
            t.finite(first + 2)?,
        ))
    }

    fn next_row(&mut self) -> Result<Option<TruthRow>, InputError> {
        if !self.table.next_row()? {
            return Ok(None);
        }
        let frame = self.table.count(FRAME)?;
        let time_s = self.table.finite(TIME)?;
        self.check_order(frame, time_s)?;
        let angles_deg = self.vector(CAM_YAW)?;
        let mount = Mount {
            position_m: self.vector(CAM_X)?,
            attitude: YawPitchRoll::new(
                angles_deg.x.to_radians(),
                angles_deg.y.to_radians(),
                angles_deg.z.to_radians(),
            ),
        };
        let vector_m = self.vector(VEC_X)?;
        self.previous = Some((frame, time_s));
        Ok(Some(TruthRow {
            frame,
            time_s,
            mount,
            vector_m,
        }))
    }

    fn check_order(&self, frame: u64, time_s: f64) -> Result<(), InputError> {
        let Some((previous, previous_s)) = self.previous else {
            return Ok(());
        };
        if frame <= previous {
            let problem = Problem::FrameOrder { frame, previous };
            return Err(self.table.error(Some(FRAME), problem));
        }
        if time_s <= previous_s {
            let problem = Problem::TimeOrder {
                frame,
                time_s,
                previous,
                previous_s,
            };
            return Err(self.table.error(Some(TIME), problem));
        }
        Ok(())
    }
}

impl Iterator for TruthReader {
    type Item = Result<TruthRow, InputError>;

    fn next(&mut self) -> Option<Self::Item> {
        if self.finished {
            return None;
        }
        let next = self.next_row().transpose();
        if !matches!(next, Some(Ok(_))) {
            self.finished = true;
        }
        next
    }
}

/// Writes truth rows in the format [`TruthReader`] reads.
pub struct TruthWriter<W: Write> {
    csv: csv::Writer<W>,
}

impl<W: Write> TruthWriter<W> {
    /// Writes the header.
    pub fn new(out: W) -> Result<Self, CsvWriteError> {
        let mut csv = csv::Writer::from_writer(out);
        csv.write_record(COLUMNS)?;
        Ok(Self { csv })
    }

    pub fn write_row(&mut self, row: &TruthRow) -> Result<(), CsvWriteError> {
        let [yaw_deg, pitch_deg, roll_deg] = row.mount.attitude.to_degrees();
        let p = &row.mount.position_m;
        let v = &row.vector_m;
        let values = [p.x, p.y, p.z, yaw_deg, pitch_deg, roll_deg, v.x, v.y, v.z];
        let mut fields = vec![row.frame.to_string(), number("time_s", row.time_s)?];
        for (column, value) in COLUMNS[CAM_X..].iter().zip(values) {
            fields.push(number(column, value)?);
        }
        self.csv.write_record(&fields)?;
        Ok(())
    }

    /// Flushes and returns the underlying writer.
    pub fn finish(self) -> Result<W, CsvWriteError> {
        self.csv
            .into_inner()
            .map_err(|e| CsvWriteError::Csv(csv::Error::from(e.into_error())))
    }
}
