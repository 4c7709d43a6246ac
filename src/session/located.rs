//! Located forms of the camera, model and mount files: the same keys as the public `*File`
//! structs, each value kept with its line and column, so that a check after parsing (a negative
//! focal length, a duplicate point id) can point at the offending entry.
//!
//! Also [`Entry`]: a manifest value that is either a path or the content written inline.

use std::fmt;
use std::marker::PhantomData;
use std::path::Path;

use nalgebra::Matrix6;
use serde::de::{self, value::MapAccessDeserializer, Deserializer, MapAccess, SeqAccess, Visitor};
use serde::Deserialize;

use super::error::{InputError, Problem};
use super::files::{default_pixel_sigma, MountCi95File, MountFile};
use super::files::{CameraFile, CameraFileError, DistortionFile, ModelFile, ModelPointFile};
use super::yaml::{error_at, Location, Spanned};
use crate::camera::{Camera, CameraError};
use crate::geometry::Mount;
use crate::model::{KeypointModel, ModelError};
use crate::tol;

/// A manifest entry: a path (relative to the manifest) or the content inline as a mapping.
#[derive(Debug)]
pub enum Entry<T> {
    Path(String),
    Inline(T),
}

impl<'de, T: Deserialize<'de>> Deserialize<'de> for Entry<T> {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_any(EntryVisitor(PhantomData))
    }
}

struct EntryVisitor<T>(PhantomData<T>);

impl<'de, T: Deserialize<'de>> Visitor<'de> for EntryVisitor<T> {
    type Value = Entry<T>;

    fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("a file path or the content as an inline mapping")
    }

    fn visit_str<E: de::Error>(self, path: &str) -> Result<Entry<T>, E> {
        Ok(Entry::Path(path.to_string()))
    }

    fn visit_map<A: MapAccess<'de>>(self, map: A) -> Result<Entry<T>, A::Error> {
        T::deserialize(MapAccessDeserializer::new(map)).map(Entry::Inline)
    }
}

/// Three numbers written `[x, y, z]`, with a message that says so when they are not.
#[derive(Debug, Clone, Copy)]
struct Xyz([f64; 3]);

impl<'de> Deserialize<'de> for Xyz {
    fn deserialize<D: Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        deserializer.deserialize_any(XyzVisitor)
    }
}

struct XyzVisitor;

impl<'de> Visitor<'de> for XyzVisitor {
    type Value = Xyz;

    fn expecting(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str("three numbers [x, y, z]")
    }

    fn visit_seq<A: SeqAccess<'de>>(self, mut seq: A) -> Result<Xyz, A::Error> {
        let mut xyz = [0.0; 3];
        for (i, slot) in xyz.iter_mut().enumerate() {
            *slot = seq
                .next_element()?
                .ok_or_else(|| de::Error::invalid_length(i, &self))?;
        }
        let mut extra = 0;
        while seq.next_element::<de::IgnoredAny>()?.is_some() {
            extra += 1;
        }
        if extra > 0 {
            return Err(de::Error::invalid_length(3 + extra, &self));
        }
        Ok(Xyz(xyz))
    }
}

/// The camera file with locations.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct CameraDoc {
    model: Spanned<String>,
    width: Spanned<u32>,
    height: Spanned<u32>,
    fx: Spanned<f64>,
    fy: Spanned<f64>,
    cx: Spanned<f64>,
    cy: Spanned<f64>,
    #[serde(default)]
    skew: Option<Spanned<f64>>,
    #[serde(default)]
    distortion: Option<Spanned<DistortionFile>>,
    #[serde(default)]
    pixel_sigma: Option<Spanned<f64>>,
}

impl CameraDoc {
    /// Validates into a camera; an error names the line of the offending key.
    pub fn into_camera(self, path: &Path) -> Result<Camera, InputError> {
        let file = CameraFile {
            model: self.model.value.clone(),
            width: self.width.value,
            height: self.height.value,
            fx: self.fx.value,
            fy: self.fy.value,
            cx: self.cx.value,
            cy: self.cy.value,
            skew: self.skew.as_ref().map_or(0.0, |s| s.value),
            distortion: self
                .distortion
                .as_ref()
                .map(|d| d.value)
                .unwrap_or_default(),
            pixel_sigma: self
                .pixel_sigma
                .as_ref()
                .map_or_else(default_pixel_sigma, |s| s.value),
        };
        file.to_camera().map_err(|e| {
            let location = self.location_of(&e);
            error_at(path, &location, Problem::Camera(e))
        })
    }

    fn location_of(&self, e: &CameraFileError) -> Location {
        let named = |name: &str| match name {
            "fx" => self.fx.referenced,
            "fy" => self.fy.referenced,
            "cx" => self.cx.referenced,
            "cy" => self.cy.referenced,
            "skew" => self
                .skew
                .as_ref()
                .map_or(self.model.referenced, |s| s.referenced),
            _ => self
                .distortion
                .as_ref()
                .map_or(self.model.referenced, |d| d.referenced),
        };
        match e {
            CameraFileError::UnknownModel(_) => self.model.referenced,
            CameraFileError::WrongCoefficient(..) => named("distortion"),
            CameraFileError::Invalid(CameraError::NonPositiveSize { width, .. }) => {
                if *width == 0 {
                    self.width.referenced
                } else {
                    self.height.referenced
                }
            }
            CameraFileError::Invalid(CameraError::NonPositiveFocal { name, .. }) => named(name),
            CameraFileError::Invalid(CameraError::NonFinite { name, .. }) => named(name),
            CameraFileError::Invalid(CameraError::NonPositiveSigma(_)) => self
                .pixel_sigma
                .as_ref()
                .map_or(self.model.referenced, |s| s.referenced),
        }
    }
}

/// A keypoint model file with locations.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct ModelDoc {
    reference: Spanned<String>,
    points: Spanned<Vec<PointDoc>>,
}

#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
struct PointDoc {
    id: Spanned<String>,
    xyz: Spanned<Xyz>,
}

impl ModelDoc {
    /// Validates into a keypoint model; an error names the line of the offending entry.
    pub fn into_model(self, path: &Path) -> Result<KeypointModel, InputError> {
        let file = ModelFile {
            reference: self.reference.value.clone(),
            points: self
                .points
                .value
                .iter()
                .map(|p| ModelPointFile {
                    id: p.id.value.clone(),
                    xyz: p.xyz.value.0,
                })
                .collect(),
        };
        file.to_model().map_err(|e| {
            let location = self.location_of(&e);
            error_at(path, &location, Problem::Model(e))
        })
    }

    fn location_of(&self, e: &ModelError) -> Location {
        let found = match e {
            ModelError::TooFewPoints(_) => None,
            ModelError::UnknownReference(_) => Some(self.reference.referenced),
            // The second occurrence is the offending one.
            ModelError::DuplicateId(id) => self.with_id(id).nth(1).map(|p| p.id.referenced),
            ModelError::NonFinite { id } => self.with_id(id).next().map(|p| p.xyz.referenced),
        };
        found.unwrap_or(self.points.referenced)
    }

    fn with_id<'a>(&'a self, id: &'a str) -> impl Iterator<Item = &'a PointDoc> + 'a {
        self.points.value.iter().filter(move |p| p.id.value == id)
    }
}

/// A mount file with locations.
#[derive(Debug, Deserialize)]
#[serde(deny_unknown_fields)]
pub struct MountDoc {
    position_m: Spanned<Xyz>,
    yaw_deg: Spanned<f64>,
    pitch_deg: Spanned<f64>,
    roll_deg: Spanned<f64>,
    #[serde(default)]
    covariance: Option<Spanned<[[f64; 6]; 6]>>,
    #[serde(default)]
    ci95: Option<Spanned<MountCi95File>>,
    #[serde(default)]
    camera: Option<Spanned<CameraDoc>>,
}

fn finite(path: &Path, key: &'static str, value: f64, at: &Location) -> Result<(), InputError> {
    if value.is_finite() {
        return Ok(());
    }
    let problem = Problem::OutOfRange {
        key,
        expected: "a finite number",
        found: value,
    };
    Err(error_at(path, at, problem))
}

impl MountDoc {
    /// Checks that every number is finite and converts to a mount.
    pub fn into_mount(self, path: &Path) -> Result<Mount, InputError> {
        Ok(self.into_mount_file(path)?.to_mount())
    }

    /// Checks every key (finite numbers, a symmetric positive semi-definite covariance,
    /// non-negative half-widths, a valid camera) and returns the file as written.
    pub fn into_mount_file(self, path: &Path) -> Result<MountFile, InputError> {
        for value in self.position_m.value.0 {
            finite(path, "position_m", value, &self.position_m.referenced)?;
        }
        for (key, angle) in [
            ("yaw_deg", &self.yaw_deg),
            ("pitch_deg", &self.pitch_deg),
            ("roll_deg", &self.roll_deg),
        ] {
            finite(path, key, angle.value, &angle.referenced)?;
        }
        let mut file = MountFile::new(
            self.position_m.value.0,
            [
                self.yaw_deg.value,
                self.pitch_deg.value,
                self.roll_deg.value,
            ],
        );
        if let Some(c) = &self.covariance {
            check_covariance(&c.value).map_err(|p| error_at(path, &c.referenced, p))?;
            file.covariance = Some(c.value);
        }
        if let Some(h) = &self.ci95 {
            let v = h.value;
            let all = [v.position_mm[0], v.position_mm[1], v.position_mm[2]];
            for x in all.into_iter().chain([v.yaw_deg, v.pitch_deg, v.roll_deg]) {
                // An axis the survey could not observe has an infinite half-width (`.inf`).
                if x.is_nan() || x < 0.0 {
                    let problem = Problem::OutOfRange {
                        key: "ci95",
                        expected: "half-widths of 0 or more (.inf for an axis not observed)",
                        found: x,
                    };
                    return Err(error_at(path, &h.referenced, problem));
                }
            }
            file.ci95 = Some(v);
        }
        if let Some(camera) = self.camera {
            let checked = camera.value.into_camera(path)?;
            file.camera = Some(CameraFile::from_camera(&checked));
        }
        Ok(file)
    }
}

/// A covariance as written must be finite, symmetric and positive semi-definite (each up to
/// rounding, [`tol::COVARIANCE_ASYMMETRY_REL`] of its largest entry).
fn check_covariance(rows: &[[f64; 6]; 6]) -> Result<(), Problem> {
    let m = Matrix6::from_fn(|r, c| rows[r][c]);
    if m.iter().any(|v| !v.is_finite()) {
        return Err(Problem::expected(
            "a 6x6 covariance of finite numbers",
            "a value that is not finite",
        ));
    }
    let limit = tol::COVARIANCE_ASYMMETRY_REL * m.amax();
    let asymmetry = (m - m.transpose()).amax();
    if asymmetry > limit {
        return Err(Problem::expected(
            "a symmetric 6x6 covariance",
            format!("entries differing by {asymmetry:e} across the diagonal"),
        ));
    }
    let smallest = m.symmetric_eigenvalues().min();
    if smallest < -limit {
        return Err(Problem::expected(
            "a positive semi-definite 6x6 covariance",
            format!("an eigenvalue of {smallest:e}"),
        ));
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::session::error::Column;
    use crate::session::yaml;

    fn model(text: &str) -> Result<KeypointModel, InputError> {
        yaml::from_str::<ModelDoc>(text, Path::new("m.yaml"))?.into_model(Path::new("m.yaml"))
    }

    const POINTS: &str = "points:\n  - {id: a, xyz: [0, 0, 0]}\n  - {id: b, xyz: [1, 0, 0]}\n  - {id: c, xyz: [0, 1, 0]}\n";

    #[test]
    fn duplicate_id_points_at_second_occurrence() {
        let text = format!("reference: a\n{POINTS}  - {{id: b, xyz: [0, 0, 1]}}\n");
        let e = model(&text).unwrap_err();
        assert_eq!(e.line, Some(6));
        assert!(e.to_string().contains("'b' appears more than once"), "{e}");
    }

    #[test]
    fn unknown_reference_points_at_reference() {
        let text = format!("reference: z\n{POINTS}  - {{id: d, xyz: [0, 0, 1]}}\n");
        let e = model(&text).unwrap_err();
        assert_eq!((e.line, e.column), (Some(1), Some(Column::Number(12))));
    }

    #[test]
    fn too_few_points_points_at_the_list() {
        let e = model(&format!("reference: a\n{POINTS}")).unwrap_err();
        assert_eq!(e.line, Some(3));
        assert!(e.to_string().contains("at least 4 points (got 3)"), "{e}");
    }

    #[test]
    fn negative_focal_points_at_fx() {
        let text = "model: pinhole\nwidth: 64\nheight: 48\nfx: -5\nfy: 50\ncx: 32\ncy: 24\n";
        let doc: CameraDoc = yaml::from_str(text, Path::new("c.yaml")).unwrap();
        let e = doc.into_camera(Path::new("c.yaml")).unwrap_err();
        assert_eq!(e.line, Some(4));
        assert!(e.to_string().contains("fx must be a positive"), "{e}");
    }

    #[test]
    fn written_files_read_back() {
        use crate::camera::Distortion;
        use crate::geometry::YawPitchRoll;
        use crate::model::ModelPoint;
        use nalgebra::Vector3;
        let path = Path::new("written.yaml");
        let fisheye = Distortion::KannalaBrandt {
            k1: 0.012,
            k2: -0.004,
            k3: 0.0007,
            k4: -1e-4,
        };
        let cameras = [
            Camera::new(1280, 1024, 410.5, 411.25, 639.5, 511.5, 0.3, fisheye, 0.8).unwrap(),
            Camera::ideal(640, 480, 520.0, 319.5, 239.5),
        ];
        for camera in cameras {
            let text = yaml::to_string(&CameraFile::from_camera(&camera)).unwrap();
            let doc: CameraDoc = yaml::from_str(&text, path).unwrap();
            assert_eq!(doc.into_camera(path).unwrap(), camera, "{text}");
        }
        let points = (0..5)
            .map(|i| ModelPoint {
                id: format!("p{i}"),
                xyz_m: Vector3::new(0.1 * f64::from(i), -1.5, 1e-3),
            })
            .collect();
        let model = KeypointModel::new(points, "p3").unwrap();
        let text = yaml::to_string(&ModelFile::from_model(&model)).unwrap();
        let doc: ModelDoc = yaml::from_str(&text, path).unwrap();
        assert_eq!(doc.into_model(path).unwrap(), model, "{text}");
        let mount = Mount {
            position_m: Vector3::new(2.1, 0.45, -0.55),
            attitude: YawPitchRoll::new(0.25, -0.5, 1.0),
        };
        let text = yaml::to_string(&MountFile::from_mount(&mount)).unwrap();
        let doc: MountDoc = yaml::from_str(&text, path).unwrap();
        let read = doc.into_mount(path).unwrap();
        // Degrees in the file, radians in the type: equal to rounding.
        assert_eq!(read.position_m, mount.position_m);
        let [a, b] = [read.attitude, mount.attitude];
        let close = |x: f64, y: f64| (x - y).abs() < 1e-15;
        assert!(close(a.yaw, b.yaw) && close(a.pitch, b.pitch) && close(a.roll, b.roll));
    }

    #[test]
    fn survey_keys_are_checked_and_located() {
        let head = "position_m: [1, 0, 0]\nyaw_deg: 0\npitch_deg: 0\nroll_deg: 0\n";
        let rows = |r1: &str| {
            let mut text = String::from("covariance:\n");
            for r in 0..6 {
                let row: Vec<String> = (0..6)
                    .map(|c| if r == c { "1".into() } else { "0".into() })
                    .collect();
                let row = if r == 1 {
                    r1.to_string()
                } else {
                    row.join(", ")
                };
                text.push_str(&format!("  - [{row}]\n"));
            }
            text
        };
        let read = |text: &str| {
            let doc: MountDoc = yaml::from_str(text, Path::new("m.yaml"))?;
            doc.into_mount_file(Path::new("m.yaml"))
        };
        let ok = format!("{head}{}ci95: {{position_mm: [1, 1, 1], yaw_deg: 0.1, pitch_deg: 0.1, roll_deg: 0.1}}\n", rows("0, 1, 0, 0, 0, 0"));
        let file = read(&ok).unwrap();
        assert!(file.covariance.is_some() && file.ci95.is_some());
        let asymmetric = format!("{head}{}", rows("0.5, 1, 0, 0, 0, 0"));
        let e = read(&asymmetric).unwrap_err();
        assert_eq!(e.line, Some(6), "{e}");
        assert!(e.to_string().contains("symmetric"), "{e}");
        let indefinite = format!("{head}{}", rows("0, -1, 0, 0, 0, 0"));
        assert!(read(&indefinite)
            .unwrap_err()
            .to_string()
            .contains("semi-definite"));
        let bad_ci = format!(
            "{head}ci95: {{position_mm: [1, -1, 1], yaw_deg: 0, pitch_deg: 0, roll_deg: 0}}\n"
        );
        assert_eq!(read(&bad_ci).unwrap_err().line, Some(5));
    }

    #[test]
    fn non_finite_mount_angle_is_refused() {
        let text = "position_m: [1, 0, 0]\nyaw_deg: 0\npitch_deg: .nan\nroll_deg: 0\n";
        let doc: MountDoc = yaml::from_str(text, Path::new("mount.yaml")).unwrap();
        let e = doc.into_mount(Path::new("mount.yaml")).unwrap_err();
        assert_eq!(e.line, Some(3));
    }
}
