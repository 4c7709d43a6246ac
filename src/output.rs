//! Output files written all or nothing: each file is written in full to a temporary file in the
//! output folder and renamed into place only when every file has been written, so an error
//! never leaves a half-written report. Used by the binary only; the library writes no files.

use std::fs;
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

use tempfile::NamedTempFile;

/// An output file that could not be written.
#[derive(Debug, thiserror::Error)]
#[error("cannot write \"{}\": {error}", path.display())]
pub struct OutputError {
    pub path: PathBuf,
    pub error: io::Error,
}

/// Files staged in an output folder, renamed into place by [`commit`](Self::commit).
pub struct StagedOutputs {
    dir: PathBuf,
    staged: Vec<(NamedTempFile, PathBuf)>,
    /// Whether this run created the folder (removed again if nothing is committed).
    created_dir: bool,
}

impl StagedOutputs {
    /// Creates the folder (and its parents) if needed.
    pub fn create(dir: &Path) -> Result<Self, OutputError> {
        let failed = |error| OutputError {
            path: dir.to_path_buf(),
            error,
        };
        let created_dir = !dir.exists();
        fs::create_dir_all(dir).map_err(failed)?;
        Ok(Self {
            dir: dir.to_path_buf(),
            staged: Vec::new(),
            created_dir,
        })
    }

    /// Writes one file's content to a temporary file beside its final name.
    pub fn add(
        &mut self,
        name: &str,
        render: impl FnOnce(&mut dyn Write) -> io::Result<()>,
    ) -> Result<(), OutputError> {
        let target = self.dir.join(name);
        let failed = |error| OutputError {
            path: target.clone(),
            error,
        };
        let mut temp = tempfile::Builder::new()
            .prefix(".mountdrift-")
            .suffix(".part")
            .tempfile_in(&self.dir)
            .map_err(failed)?;
        let mut writer = BufWriter::new(temp.as_file_mut());
        render(&mut writer).map_err(failed)?;
        writer.flush().map_err(failed)?;
        drop(writer);
        self.staged.push((temp, target));
        Ok(())
    }

    /// Renames every staged file to its final name.
    pub fn commit(mut self) -> Result<(), OutputError> {
        self.created_dir = false;
        for (temp, target) in std::mem::take(&mut self.staged) {
            temp.persist(&target).map_err(|e| OutputError {
                path: target,
                error: e.error,
            })?;
        }
        Ok(())
    }
}

/// Writes one file all or nothing: a temporary file beside it, renamed into place when full.
pub fn write_file_atomically(
    path: &Path,
    render: impl FnOnce(&mut dyn Write) -> io::Result<()>,
) -> Result<(), OutputError> {
    let failed = |error| OutputError {
        path: path.to_path_buf(),
        error,
    };
    let dir = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let mut temp = tempfile::Builder::new()
        .prefix(".mountdrift-")
        .suffix(".part")
        .tempfile_in(&dir)
        .map_err(failed)?;
    let mut writer = BufWriter::new(temp.as_file_mut());
    render(&mut writer).map_err(failed)?;
    writer.flush().map_err(failed)?;
    drop(writer);
    temp.persist(path).map_err(|e| failed(e.error))?;
    Ok(())
}

impl Drop for StagedOutputs {
    fn drop(&mut self) {
        // Delete the temporary files first, then the folder if this run made it and it is empty.
        self.staged.clear();
        if self.created_dir {
            let _ = fs::remove_dir(&self.dir);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn names(dir: &Path) -> Vec<String> {
        let mut names: Vec<_> = fs::read_dir(dir)
            .unwrap()
            .map(|e| e.unwrap().file_name().into_string().unwrap())
            .collect();
        names.sort();
        names
    }

    #[test]
    fn files_appear_only_on_commit() {
        let root = tempfile::tempdir().unwrap();
        let dir = root.path().join("a/b");
        let mut outputs = StagedOutputs::create(&dir).unwrap();
        outputs.add("one.txt", |w| w.write_all(b"1")).unwrap();
        outputs.add("two.txt", |w| w.write_all(b"2")).unwrap();
        assert!(names(&dir).iter().all(|n| n.ends_with(".part")));
        outputs.commit().unwrap();
        assert_eq!(names(&dir), ["one.txt", "two.txt"]);
        assert_eq!(fs::read_to_string(dir.join("two.txt")).unwrap(), "2");
    }

    #[test]
    fn a_failure_leaves_nothing() {
        let root = tempfile::tempdir().unwrap();
        let dir = root.path().join("out");
        let mut outputs = StagedOutputs::create(&dir).unwrap();
        outputs.add("one.txt", |w| w.write_all(b"1")).unwrap();
        let failed = outputs.add("two.txt", |_| Err(io::Error::other("renderer failed")));
        let e = failed.unwrap_err();
        assert!(e.to_string().contains("two.txt"), "{e}");
        drop(outputs);
        assert!(
            !dir.exists(),
            "the folder this run created is removed again"
        );
    }

    #[test]
    fn an_existing_folder_is_kept() {
        let root = tempfile::tempdir().unwrap();
        fs::write(root.path().join("old.txt"), "x").unwrap();
        let mut outputs = StagedOutputs::create(root.path()).unwrap();
        outputs.add("new.txt", |w| w.write_all(b"1")).unwrap();
        drop(outputs);
        assert_eq!(names(root.path()), ["old.txt"]);
    }
}
