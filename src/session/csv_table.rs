//! Shared streaming CSV machinery for the detections and truth files: where the text comes from
//! (a file or text written inline in the manifest), the header check (exactly the documented
//! column names, in any order), row-by-row reading into one reused record, and field parsing with
//! errors that name the file, the line and the column.
//!
//! Nothing here holds more than one row: a file of any size streams.

use std::fs::File;
use std::io::{self, BufReader, Cursor, Read};
use std::path::{Path, PathBuf};

use csv::{ByteRecord, ReaderBuilder};

use super::error::{Column, InputError, Problem};

/// Where a CSV's text comes from.
#[derive(Debug, Clone, PartialEq)]
pub enum CsvSource {
    /// A CSV file.
    File(PathBuf),
    /// CSV text written inside another file (the manifest): `path` names that file and
    /// `first_line` is the line of the CSV's header in it, so errors point into the manifest.
    Inline {
        path: PathBuf,
        first_line: u64,
        text: String,
    },
}

impl CsvSource {
    /// The file named in error messages.
    pub fn path(&self) -> &Path {
        match self {
            CsvSource::File(path) | CsvSource::Inline { path, .. } => path,
        }
    }

    /// The text as a reader, and the number of lines that precede it in its file.
    fn open(&self) -> Result<(Box<dyn Read>, u64), InputError> {
        match self {
            CsvSource::File(path) => {
                let file =
                    File::open(path).map_err(|e| InputError::in_file(path, Problem::Read(e)))?;
                Ok((Box::new(BufReader::new(file)), 0))
            }
            CsvSource::Inline {
                text, first_line, ..
            } => Ok((
                Box::new(Cursor::new(text.clone().into_bytes())),
                first_line.saturating_sub(1),
            )),
        }
    }
}

/// The columns a table must and may have.
pub(super) struct TableSpec {
    pub required: &'static [&'static str],
    pub optional: &'static [&'static str],
    /// The header as shown in messages.
    pub header: &'static str,
}

/// A CSV being read row by row. Columns are addressed by their position in the spec
/// (required ones first, then optional ones).
pub(super) struct CsvTable {
    reader: csv::Reader<Box<dyn Read>>,
    path: PathBuf,
    line_offset: u64,
    names: Vec<&'static str>,
    /// For each spec column, its index in the file's records (`None`: optional and absent).
    index: Vec<Option<usize>>,
    record: ByteRecord,
    /// Line of the header in the file.
    header_line: u64,
    /// Data rows read so far.
    rows: u64,
}

const UTF8_BOM: &[u8] = b"\xEF\xBB\xBF";

impl CsvTable {
    /// Opens a source and checks its header against the spec.
    pub fn open(source: &CsvSource, spec: &TableSpec) -> Result<Self, InputError> {
        let (input, line_offset) = source.open()?;
        Self::from_reader(input, source.path(), line_offset, spec)
    }

    /// Reads the header from any reader; `line_offset` lines precede the text in `path`.
    pub fn from_reader(
        input: Box<dyn Read>,
        path: &Path,
        line_offset: u64,
        spec: &TableSpec,
    ) -> Result<Self, InputError> {
        // Fields are trimmed (ASCII whitespace) where they are read, not by the reader: the
        // reader's own trimming builds a new record, two allocations, for every row.
        let reader = ReaderBuilder::new()
            .has_headers(false)
            .flexible(true)
            .from_reader(input);
        let names: Vec<_> = spec.required.iter().chain(spec.optional).copied().collect();
        let mut table = Self {
            reader,
            path: path.to_path_buf(),
            line_offset,
            index: vec![None; names.len()],
            names,
            record: ByteRecord::new(),
            header_line: line_offset + 1,
            rows: 0,
        };
        if !table.read_record()? {
            let problem = Problem::EmptyFile {
                header: spec.header,
            };
            return Err(InputError::at(path, line_offset + 1, None, problem));
        }
        table.header_line = table.line();
        table.map_header(spec)?;
        Ok(table)
    }

    fn map_header(&mut self, spec: &TableSpec) -> Result<(), InputError> {
        for (position, raw) in self.record.iter().enumerate() {
            let raw = raw.trim_ascii();
            let raw = raw.strip_prefix(UTF8_BOM).unwrap_or(raw).trim_ascii();
            let name = String::from_utf8_lossy(raw);
            let Some(k) = self.names.iter().position(|n| *n == name) else {
                let found = name.into_owned();
                let problem = Problem::UnknownColumn {
                    found,
                    header: spec.header,
                };
                return Err(self.error(None, problem));
            };
            if self.index[k].is_some() {
                return Err(self.error(None, Problem::DuplicateColumn(name.into_owned())));
            }
            self.index[k] = Some(position);
        }
        let missing = spec
            .required
            .iter()
            .zip(&self.index)
            .find(|(_, i)| i.is_none());
        if let Some((missing, _)) = missing {
            let problem = Problem::MissingColumn {
                missing,
                header: spec.header,
            };
            return Err(self.error(None, problem));
        }
        Ok(())
    }

    fn read_record(&mut self) -> Result<bool, InputError> {
        self.reader
            .read_byte_record(&mut self.record)
            .map_err(|e| self.csv_error(e))
    }

    /// Reads the next data row; `false` at the end of the text. A table without any data row is
    /// an error: every input table must say something.
    pub fn next_row(&mut self) -> Result<bool, InputError> {
        if !self.read_record()? {
            if self.rows == 0 {
                let after_header = self.header_line + 1;
                return Err(InputError::at(
                    &self.path,
                    after_header,
                    None,
                    Problem::NoRows,
                ));
            }
            return Ok(false);
        }
        self.rows += 1;
        let width = self.index.iter().flatten().count();
        if self.record.len() != width {
            let problem = Problem::FieldCount {
                expected: width,
                found: self.record.len(),
            };
            return Err(self.error(None, problem));
        }
        Ok(true)
    }

    /// The 1-based line of the current row in its file.
    pub fn line(&self) -> u64 {
        let in_text = self.record.position().map_or(1, |p| p.line());
        self.line_offset + in_text
    }

    pub fn path(&self) -> &Path {
        &self.path
    }

    /// The bytes of a column in the current row without surrounding ASCII whitespace (`None`:
    /// optional column absent).
    pub fn raw(&self, column: usize) -> Option<&[u8]> {
        self.index[column]
            .and_then(|i| self.record.get(i))
            .map(<[u8]>::trim_ascii)
    }

    /// The text of a column in the current row (the column must exist).
    pub fn text(&self, column: usize) -> Result<&str, InputError> {
        let raw = self.raw(column).unwrap_or_default();
        std::str::from_utf8(raw).map_err(|_| {
            let found = String::from_utf8_lossy(raw).into_owned();
            self.error(Some(column), Problem::expected("UTF-8 text", found))
        })
    }

    /// A finite number.
    pub fn finite(&self, column: usize) -> Result<f64, InputError> {
        if let Some(value) = self.raw(column).and_then(plain_decimal) {
            return Ok(value);
        }
        let text = self.text(column)?;
        match text.parse::<f64>() {
            Ok(value) if value.is_finite() => Ok(value),
            _ => Err(self.error(Some(column), Problem::expected("a finite number", text))),
        }
    }

    /// A non-negative whole number (frame numbers).
    pub fn count(&self, column: usize) -> Result<u64, InputError> {
        if let Some(value) = self.raw(column).and_then(plain_count) {
            return Ok(value);
        }
        let text = self.text(column)?;
        text.parse::<u64>().map_err(|_| {
            let expected = "a whole number of 0 or more";
            self.error(Some(column), Problem::expected(expected, text))
        })
    }

    /// An error at the current row, in the given column if any.
    pub fn error(&self, column: Option<usize>, problem: Problem) -> InputError {
        let column = column.map(|c| Column::Named(self.names[c].to_string()));
        InputError::at(&self.path, self.line(), column, problem)
    }

    fn csv_error(&self, e: csv::Error) -> InputError {
        let line = e
            .position()
            .map_or(self.line(), |p| p.line() + self.line_offset);
        let message = e.to_string();
        let problem = match e.into_kind() {
            csv::ErrorKind::Io(io) => Problem::Read(io),
            _ => Problem::Read(io::Error::new(io::ErrorKind::InvalidData, message)),
        };
        InputError::at(&self.path, line, None, problem)
    }
}

/// Largest integer below which every integer is an `f64`: `2^53`.
const EXACT_INTEGER_LIMIT: u64 = 1 << 53;

/// Powers of ten that are exact `f64` values (`10^22 < 2^53 · 2^22`).
const EXACT_POWERS_OF_TEN: [f64; 23] = [
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11, 1e12, 1e13, 1e14, 1e15, 1e16,
    1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
];

/// The value of a plain decimal (`[-]digits[.digits]`, at least one digit) whose digits, read
/// as one integer `m`, stay below `2^53`, with at most 22 of them after the point: then `m` and
/// `10^k` are exact and the one division `m / 10^k` is correctly rounded, so the result is the
/// one `str::parse::<f64>` gives (Clinger, "How to read floating point numbers accurately",
/// PLDI 1990, the exact fast path). `None` for anything else; the caller then parses the text.
fn plain_decimal(bytes: &[u8]) -> Option<f64> {
    let (negative, body) = match bytes.split_first() {
        Some((b'-', rest)) => (true, rest),
        _ => (false, bytes),
    };
    let mut mantissa: u64 = 0;
    let mut digits = 0usize;
    let mut decimals = None;
    for (i, &b) in body.iter().enumerate() {
        match b {
            b'0'..=b'9' => {
                mantissa = mantissa * 10 + u64::from(b - b'0');
                if mantissa >= EXACT_INTEGER_LIMIT {
                    return None;
                }
                digits += 1;
            }
            b'.' if decimals.is_none() => decimals = Some(i),
            _ => return None,
        }
    }
    if digits == 0 {
        return None;
    }
    let after_point = decimals.map_or(0, |i| body.len() - i - 1);
    let scale = EXACT_POWERS_OF_TEN.get(after_point)?;
    let magnitude = mantissa as f64 / scale;
    Some(if negative { -magnitude } else { magnitude })
}

/// The value of a whole number written as plain digits that fits in a `u64`; `None` for
/// anything else (the caller then parses the text).
fn plain_count(bytes: &[u8]) -> Option<u64> {
    if bytes.is_empty() {
        return None;
    }
    bytes.iter().try_fold(0u64, |n, &b| {
        let digit = b.checked_sub(b'0').filter(|d| *d <= 9)?;
        n.checked_mul(10)?.checked_add(u64::from(digit))
    })
}

/// Why a CSV could not be written.
#[derive(Debug, thiserror::Error)]
pub enum CsvWriteError {
    #[error("cannot write CSV: {0}")]
    Csv(#[from] csv::Error),
    #[error("keypoint index {index} is not a point of the {object} model")]
    UnknownPoint { object: &'static str, index: usize },
    #[error("{column} must be a finite number to be written (got {value})")]
    NonFinite { column: &'static str, value: f64 },
}

/// A number as CSV text: the shortest decimal that reads back to the same `f64`.
pub(super) fn number(column: &'static str, value: f64) -> Result<String, CsvWriteError> {
    if value.is_finite() {
        Ok(value.to_string())
    } else {
        Err(CsvWriteError::NonFinite { column, value })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    const SPEC: TableSpec = TableSpec {
        required: &["frame", "u"],
        optional: &["object"],
        header: "frame,u[,object]",
    };

    fn table(text: &str) -> CsvTable {
        let input = Box::new(Cursor::new(text.as_bytes().to_vec()));
        CsvTable::from_reader(input, Path::new("t.csv"), 0, &SPEC).unwrap()
    }

    #[test]
    fn fields_and_header_names_are_read_without_surrounding_whitespace() {
        let mut t = table("\u{feff} frame ,\tu, object\n 7 ,  1.25\t, probe \n8,2,\n");
        assert!(t.next_row().unwrap());
        assert_eq!(t.count(0).unwrap(), 7);
        assert_eq!(t.finite(1).unwrap().to_bits(), 1.25f64.to_bits());
        assert_eq!(t.raw(2), Some(&b"probe"[..]));
        assert_eq!(t.line(), 2);
        assert!(t.next_row().unwrap());
        assert_eq!(t.raw(2), Some(&b""[..]));
        assert!(!t.next_row().unwrap());
    }

    #[test]
    fn plain_decimals_read_as_the_standard_parser_reads_them() {
        // The reference is the standard library's correctly rounded parser.
        let mut texts: Vec<String> = [
            "0",
            "-0",
            "0.0",
            "-0.000",
            "1.",
            ".5",
            "-.5",
            "007.250",
            "652.3183936398212",
            "9007199254740991",
            "9007199254740992",
            "0.1",
            "0.30000000000000004",
            "123456789.012345",
            "1e5",
            "+1",
            "-",
            ".",
            "1.2.3",
            "",
            "1,5",
            "nan",
            "inf",
            "0.0000000000000000000001",
            "0.00000000000000000000001",
            " 1",
        ]
        .iter()
        .map(|s| s.to_string())
        .collect();
        // Shortest round-trip texts and fixed-decimal texts of many magnitudes.
        let mut x = 0.123_456_789_f64;
        for k in 0..400 {
            x = (x * 7.31 + 0.017 * k as f64) % 5000.0 - 1200.0;
            texts.push(x.to_string());
            texts.push(format!("{:.2}", x));
            texts.push(format!("{:.6}", x / 1000.0));
            texts.push((x * 1e-9).to_string());
        }
        for text in &texts {
            let fast = plain_decimal(text.as_bytes());
            let reference = text.parse::<f64>().ok();
            if let Some(v) = fast {
                let r = reference.expect("the fast path accepts only what the parser accepts");
                assert_eq!(v.to_bits(), r.to_bits(), "{text}");
            }
        }
        // The common forms take the fast path.
        assert_eq!(plain_decimal(b"652.3183936398212"), Some(652.3183936398212));
        assert_eq!(
            plain_decimal(b"-0").map(f64::to_bits),
            Some((-0.0f64).to_bits())
        );
        assert_eq!(plain_decimal(b"1e5"), None);
        assert_eq!(plain_decimal(b"9007199254740992"), None);
    }

    #[test]
    fn plain_counts_read_as_the_standard_parser_reads_them() {
        for text in ["0", "17", "0042", "18446744073709551615"] {
            assert_eq!(plain_count(text.as_bytes()), text.parse::<u64>().ok());
        }
        for text in ["", "+3", "-1", "1.0", "18446744073709551616", " 1"] {
            assert_eq!(plain_count(text.as_bytes()), None);
        }
    }

    #[test]
    fn a_field_of_only_spaces_is_empty() {
        let mut t = table("frame,u\n1,   \n");
        assert!(t.next_row().unwrap());
        assert_eq!(t.raw(1), Some(&b""[..]));
        assert!(t.finite(1).is_err());
    }
}
