//! The only module that calls the YAML library (serde-saphyr, pinned `~2.2`; see docs/yaml.md):
//! reading a YAML file or text into a serde type with errors located in the file, and writing YAML.
//!
//! Everything else in the crate goes through these few functions, so a change of YAML library or
//! of its API stays here.

use std::fs;
use std::path::Path;

use serde::de::DeserializeOwned;
use serde::Serialize;
pub use serde_saphyr::{Location, Spanned};

use super::error::{Column, InputError, Problem};

/// Why a value could not be written as YAML.
#[derive(Debug, thiserror::Error)]
#[error("cannot write YAML: {0}")]
pub struct YamlWriteError(String);

/// Parses YAML text (a UTF-8 byte-order mark and CRLF line ends are accepted). `path` names the
/// text in error messages.
pub fn from_str<T: DeserializeOwned>(text: &str, path: &Path) -> Result<T, InputError> {
    serde_saphyr::from_str(text).map_err(|e| located_error(&e, path))
}

/// Reads and parses a YAML file.
pub fn read_file<T: DeserializeOwned>(path: &Path) -> Result<T, InputError> {
    from_str(&read_text(path)?, path)
}

/// Writes a value as YAML text.
pub fn to_string<T: Serialize>(value: &T) -> Result<String, YamlWriteError> {
    serde_saphyr::to_string(value).map_err(|e| YamlWriteError(e.to_string()))
}

/// Reads a whole text file, refusing bytes that are not UTF-8 with the line where they occur.
pub fn read_text(path: &Path) -> Result<String, InputError> {
    let bytes = fs::read(path).map_err(|e| InputError::in_file(path, Problem::Read(e)))?;
    String::from_utf8(bytes).map_err(|e| {
        let valid = &e.as_bytes()[..e.utf8_error().valid_up_to()];
        let line = 1 + valid.iter().filter(|&&b| b == b'\n').count() as u64;
        InputError::at(path, line, None, Problem::NotUtf8)
    })
}

/// An error located at a YAML node (from a [`Spanned`] value).
pub fn error_at(path: &Path, location: &Location, problem: Problem) -> InputError {
    if location.line() == 0 {
        // Location unknown (the library reports line 0): name the file only.
        return InputError::in_file(path, problem);
    }
    InputError::at(
        path,
        location.line(),
        Some(Column::Number(location.column())),
        problem,
    )
}

/// The library's message without its own location suffix or snippet, placed in our format.
fn located_error(e: &serde_saphyr::Error, path: &Path) -> InputError {
    use serde_saphyr::MessageFormatter;
    let plain = e.without_snippet();
    let message = serde_saphyr::UserMessageFormatter.format_message(plain);
    // The formatter's text may quote user input: keep it on one line.
    let message: String = message.chars().filter(|c| !c.is_control()).collect();
    match plain.location() {
        Some(loc) => error_at(path, &loc, Problem::Yaml(message)),
        None => InputError::in_file(path, Problem::Yaml(message)),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[derive(Debug, serde::Deserialize, serde::Serialize, PartialEq)]
    #[serde(deny_unknown_fields)]
    struct Pair {
        a: f64,
        b: [f64; 3],
    }

    #[test]
    fn unknown_key_is_located() {
        let e = from_str::<Pair>("a: 1\nb: [1, 2, 3]\nc: 2\n", Path::new("x.yaml")).unwrap_err();
        assert_eq!(e.line, Some(3));
        assert_eq!(e.column, Some(Column::Number(1)));
        let text = e.to_string();
        assert!(
            text.starts_with("x.yaml line 3, column 1: unknown field `c`"),
            "{text}"
        );
    }

    #[test]
    fn bom_and_crlf_are_accepted() {
        let p: Pair = from_str("\u{feff}a: 1\r\nb: [1, 2, 3]\r\n", Path::new("x.yaml")).unwrap();
        assert_eq!(p.b.len(), 3);
    }

    #[test]
    fn short_vector_is_located() {
        let e = from_str::<Pair>("a: 1\nb: [1, 2]\n", Path::new("x.yaml")).unwrap_err();
        assert_eq!(e.line, Some(2));
        assert!(e.to_string().contains("length 3"), "{e}");
    }

    #[test]
    fn written_yaml_reads_back() {
        let p = Pair {
            a: 0.1,
            b: [1.5, -2.25, 1e-7],
        };
        let text = to_string(&p).unwrap();
        assert_eq!(from_str::<Pair>(&text, Path::new("x.yaml")).unwrap(), p);
    }
}
