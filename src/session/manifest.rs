//! The session manifest: a YAML file whose entries are paths (relative to the manifest's folder)
//! or the content written inline, loaded into a validated [`Session`].
//!
//! Camera, models and mount are read and checked at load time; the detections and truth CSVs are
//! only checked to exist, then streamed on demand ([`Session::detections`], [`Session::truth`]).

use std::fs;
use std::path::{Path, PathBuf};

use serde::de::DeserializeOwned;
use serde::Deserialize;

use super::csv_table::CsvSource;
use super::detections::DetectionReader;
use super::error::{InputError, Problem};
use super::located::{CameraDoc, Entry, ModelDoc, MountDoc};
use super::truth::TruthReader;
use super::yaml::{self, error_at, Location, Spanned};
use crate::camera::Camera;
use crate::geometry::Mount;
use crate::model::KeypointModel;

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct ManifestDoc {
    camera: Spanned<Entry<CameraDoc>>,
    probe: Spanned<Entry<ModelDoc>>,
    drogue: Spanned<Entry<ModelDoc>>,
    #[serde(default)]
    mount: Option<Spanned<Entry<MountDoc>>>,
    detections: Spanned<String>,
    #[serde(default)]
    truth: Option<Spanned<String>>,
    #[serde(default)]
    frames: Option<Spanned<String>>,
}

/// The file each part of a session was read from (the manifest itself for inline content), for
/// messages about the session's content.
#[derive(Debug, Clone, PartialEq)]
pub struct SessionSources {
    pub manifest: PathBuf,
    pub camera: PathBuf,
    pub probe: PathBuf,
    pub drogue: PathBuf,
    pub mount: Option<PathBuf>,
}

/// A loaded and validated session.
#[derive(Debug, Clone)]
pub struct Session {
    pub camera: Camera,
    /// Probe keypoints in the receiver body frame B.
    pub probe: KeypointModel,
    /// Drogue keypoints in the drogue frame D.
    pub drogue: KeypointModel,
    /// The nominal mount; without it only drift within the session can be reported.
    pub mount: Option<Mount>,
    pub detections: CsvSource,
    pub truth: Option<CsvSource>,
    /// Folder of frame images named by frame number.
    pub frames_dir: Option<PathBuf>,
    pub sources: SessionSources,
}

impl Session {
    /// Reads a manifest and everything it names except the CSVs, which stream later.
    pub fn load(manifest: &Path) -> Result<Self, InputError> {
        Self::from_yaml_str(&yaml::read_text(manifest)?, manifest)
    }

    /// Parses manifest text; relative paths resolve against the folder of `manifest`, which
    /// also names the text in messages.
    pub fn from_yaml_str(text: &str, manifest: &Path) -> Result<Self, InputError> {
        let doc: ManifestDoc = yaml::from_str(text, manifest)?;
        let loader = Loader {
            manifest,
            folder: manifest.parent().unwrap_or(Path::new("")),
        };
        let (camera, camera_path) =
            loader.entry(doc.camera, "camera file", CameraDoc::into_camera)?;
        let (probe, probe_path) =
            loader.entry(doc.probe, "probe model file", ModelDoc::into_model)?;
        let (drogue, drogue_path) =
            loader.entry(doc.drogue, "drogue model file", ModelDoc::into_model)?;
        let mount = doc
            .mount
            .map(|m| loader.entry(m, "mount file", MountDoc::into_mount))
            .transpose()?;
        let frames_dir = doc.frames.map(|f| loader.folder_entry(&f)).transpose()?;
        Ok(Self {
            camera,
            probe,
            drogue,
            detections: loader.csv_entry(doc.detections, "detections file")?,
            truth: doc
                .truth
                .map(|t| loader.csv_entry(t, "truth file"))
                .transpose()?,
            frames_dir,
            sources: SessionSources {
                manifest: manifest.to_path_buf(),
                camera: camera_path,
                probe: probe_path,
                drogue: drogue_path,
                mount: mount.as_ref().map(|(_, path)| path.clone()),
            },
            mount: mount.map(|(m, _)| m),
        })
    }

    /// Streams the detections, frame by frame.
    pub fn detections(&self) -> Result<DetectionReader, InputError> {
        DetectionReader::open(
            &self.detections,
            &self.probe,
            &self.drogue,
            self.camera.pixel_sigma,
        )
    }

    /// Streams the truth rows, when the session has truth.
    pub fn truth(&self) -> Result<Option<TruthReader>, InputError> {
        self.truth.as_ref().map(TruthReader::open).transpose()
    }
}

/// Resolves and reads the entries of one manifest.
struct Loader<'a> {
    manifest: &'a Path,
    folder: &'a Path,
}

impl Loader<'_> {
    /// Reads an entry from its file or from the manifest, then validates it. Returns the value
    /// and the file it came from.
    fn entry<T: DeserializeOwned, U>(
        &self,
        entry: Spanned<Entry<T>>,
        what: &'static str,
        validate: impl FnOnce(T, &Path) -> Result<U, InputError>,
    ) -> Result<(U, PathBuf), InputError> {
        match entry.value {
            Entry::Inline(doc) => Ok((validate(doc, self.manifest)?, self.manifest.into())),
            Entry::Path(written) => {
                let path = self.existing(&written, what, &entry.referenced, Kind::File)?;
                let doc = yaml::read_file(&path)?;
                Ok((validate(doc, &path)?, path))
            }
        }
    }

    /// A CSV entry: text with a line break is the CSV itself, anything else a path.
    fn csv_entry(
        &self,
        entry: Spanned<String>,
        what: &'static str,
    ) -> Result<CsvSource, InputError> {
        if entry.value.contains('\n') {
            return Ok(CsvSource::Inline {
                path: self.manifest.into(),
                first_line: entry.referenced.line(),
                text: entry.value,
            });
        }
        let path = self.existing(&entry.value, what, &entry.referenced, Kind::File)?;
        Ok(CsvSource::File(path))
    }

    fn folder_entry(&self, entry: &Spanned<String>) -> Result<PathBuf, InputError> {
        self.existing(
            &entry.value,
            "frames folder",
            &entry.referenced,
            Kind::Folder,
        )
    }

    /// The path written in the manifest, resolved, if it exists and is of the right kind;
    /// otherwise an error at the manifest line that names it.
    fn existing(
        &self,
        written: &str,
        what: &'static str,
        at: &Location,
        kind: Kind,
    ) -> Result<PathBuf, InputError> {
        let path = self.folder.join(written);
        let problem = match (fs::metadata(&path), kind) {
            (Ok(m), Kind::File) if m.is_file() => return Ok(path),
            (Ok(m), Kind::Folder) if m.is_dir() => return Ok(path),
            (Ok(_), _) => Problem::WrongKind {
                what,
                path,
                kind: kind.name(),
            },
            (Err(error), _) => Problem::MissingFile { what, path, error },
        };
        Err(error_at(self.manifest, at, problem))
    }
}

#[derive(Clone, Copy)]
enum Kind {
    File,
    Folder,
}

impl Kind {
    fn name(self) -> &'static str {
        match self {
            Kind::File => "a file",
            Kind::Folder => "a folder",
        }
    }
}
