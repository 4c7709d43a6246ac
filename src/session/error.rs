//! The one error type for bad input: which file, which line and column, and what was expected.
//!
//! Every loader in `session` reports through [`InputError`], so a user always reads the same
//! shape of message: `detections.csv line 14, column "u": expected a finite number, found "abc"`.

use std::fmt;
use std::io;
use std::path::{Path, PathBuf};

use super::files::CameraFileError;
use crate::model::ModelError;

/// A column inside a line: a CSV column by its header name, or a YAML character column.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Column {
    /// A CSV column, named as in the header.
    Named(String),
    /// A 1-based character column of a YAML file.
    Number(u64),
}

/// Bad input, located in its file.
#[derive(Debug)]
pub struct InputError {
    /// The file the problem is in (the manifest, for content written inline in it).
    pub path: PathBuf,
    /// 1-based line, when the problem has one.
    pub line: Option<u64>,
    pub column: Option<Column>,
    pub problem: Problem,
}

impl InputError {
    /// A problem with a file as a whole (cannot be read, is empty...).
    pub fn in_file(path: &Path, problem: Problem) -> Self {
        Self {
            path: path.to_path_buf(),
            line: None,
            column: None,
            problem,
        }
    }

    /// A problem at a line and, optionally, a column.
    pub fn at(path: &Path, line: u64, column: Option<Column>, problem: Problem) -> Self {
        Self {
            path: path.to_path_buf(),
            line: Some(line),
            column,
            problem,
        }
    }
}

impl fmt::Display for InputError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}", self.path.display())?;
        if let Some(line) = self.line {
            write!(f, " line {line}")?;
        }
        match &self.column {
            Some(Column::Named(name)) => write!(f, ", column \"{name}\"")?,
            Some(Column::Number(col)) => write!(f, ", column {col}")?,
            None => {}
        }
        write!(f, ": {}", self.problem)
    }
}

impl std::error::Error for InputError {}

/// What is wrong, and what was expected instead.
#[derive(Debug, thiserror::Error)]
pub enum Problem {
    #[error("cannot read the file: {0}")]
    Read(io::Error),
    #[error("cannot find {what} \"{}\": {error}", path.display())]
    MissingFile {
        what: &'static str,
        path: PathBuf,
        error: io::Error,
    },
    #[error("expected {what} \"{}\" to be {kind}", path.display())]
    WrongKind {
        what: &'static str,
        path: PathBuf,
        kind: &'static str,
    },
    #[error("expected UTF-8 text, found bytes that are not UTF-8")]
    NotUtf8,
    /// A YAML syntax or structure error, as worded by the YAML parser.
    #[error("{0}")]
    Yaml(String),
    #[error("the file is empty: expected a header line \"{header}\"")]
    EmptyFile { header: &'static str },
    #[error("expected a column \"{missing}\" in the header (columns: {header})")]
    MissingColumn {
        missing: &'static str,
        header: &'static str,
    },
    #[error("unknown column \"{found}\" (expected columns: {header})")]
    UnknownColumn { found: String, header: &'static str },
    #[error("column \"{0}\" appears twice in the header")]
    DuplicateColumn(String),
    #[error("expected {expected} fields as in the header, found {found}")]
    FieldCount { expected: usize, found: usize },
    #[error("expected at least one data row after the header, found none")]
    NoRows,
    /// A value of the wrong kind: `expected a finite number, found "abc"`.
    #[error("expected {expected}, found \"{found}\"")]
    Expected { expected: String, found: String },
    #[error(
        "frame {frame} comes after frame {previous}: expected the rows of each frame \
         together, in increasing frame order"
    )]
    FrameOrder { frame: u64, previous: u64 },
    #[error(
        "time_s {time_s} of frame {frame} is not later than time_s {previous_s} of frame \
         {previous}: expected time to increase from frame to frame"
    )]
    TimeOrder {
        frame: u64,
        time_s: f64,
        previous: u64,
        previous_s: f64,
    },
    #[error("expected the same time_s for every row of frame {frame} ({first_s}), found {time_s}")]
    TimeWithinFrame {
        frame: u64,
        first_s: f64,
        time_s: f64,
    },
    #[error(
        "keypoint \"{id}\" of the {object} appears twice in frame {frame}: expected at most \
         one row per keypoint and frame"
    )]
    DuplicateKeypoint {
        object: &'static str,
        id: String,
        frame: u64,
    },
    #[error("{0}")]
    Camera(CameraFileError),
    #[error("{0}")]
    Model(ModelError),
    /// A value that parsed but is out of range: `max_rotation_deg: expected ..., found -1`.
    #[error("{key}: expected {expected}, found {found}")]
    OutOfRange {
        key: &'static str,
        expected: &'static str,
        found: f64,
    },
}

impl Problem {
    /// `expected {expected}, found "{found}"`.
    pub fn expected(expected: impl Into<String>, found: impl Into<String>) -> Self {
        Problem::Expected {
            expected: expected.into(),
            found: found.into(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn message_names_file_line_column_and_expectation() {
        let e = InputError::at(
            Path::new("detections.csv"),
            14,
            Some(Column::Named("u".into())),
            Problem::expected("a finite number", "abc"),
        );
        assert_eq!(
            e.to_string(),
            "detections.csv line 14, column \"u\": expected a finite number, found \"abc\""
        );
        let e = InputError::at(
            Path::new("camera.yaml"),
            3,
            Some(Column::Number(5)),
            Problem::Yaml("missing field `fy`".into()),
        );
        assert_eq!(
            e.to_string(),
            "camera.yaml line 3, column 5: missing field `fy`"
        );
    }
}
