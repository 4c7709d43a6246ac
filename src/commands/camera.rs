//! `camera from-exif`: approximate pinhole intrinsics from an image's EXIF focal tags.
//!
//! Tag meanings follow EXIF 2.3 (CIPA DC-008 / JEITA CP-3451C). The focal length in pixels comes
//! preferably from FocalLength × FocalPlaneXResolution (per resolution unit), rescaled when the
//! stored image was resampled from the EXIF pixel dimensions; otherwise from the 35 mm equivalent
//! on the image diagonal. The principal point is put at the image centre and distortion at zero,
//! so the outcome is always marked approximate. This file reads the image but never prints and
//! never writes files: the binary writes the YAML text that [`render_camera_yaml`] returns.

use std::fmt;
use std::io::Cursor;
use std::path::{Path, PathBuf};

use exif::{Exif, In, Tag, Value};
use serde::Serialize;

use crate::session::{CameraFile, CameraFileError, DistortionFile};
use crate::tol::EXIF_SCALE_MISMATCH_REL;

/// Diagonal of the 36 × 24 mm full frame, √(36² + 24²) = 43.267 mm: the crop factor behind
/// FocalLengthIn35mmFilm is taken on the diagonal.
pub const FULL_FRAME_DIAGONAL_MM: f64 = 43.267;

/// The default one-sigma keypoint noise (px) of a camera file.
const PIXEL_SIGMA_PX: f64 = 1.0;

/// What `camera from-exif` needs: the image to read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FromExifOptions {
    pub image: PathBuf,
}

/// How the focal length was obtained.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum FocalMethod {
    /// FocalLength × FocalPlaneX/YResolution (sensor density), the preferred route.
    FocalPlaneResolution,
    /// FocalLengthIn35mmFilm on the image diagonal, the fallback.
    #[serde(rename = "equivalent_35mm")]
    Equivalent35mm,
}

/// One EXIF tag that entered the result, by its EXIF 2.3 name, with its numeric value.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TagReading {
    pub tag: String,
    pub value: f64,
}

/// The outcome of `camera from-exif`: the camera file plus how it was derived.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ExifIntrinsics {
    pub image: PathBuf,
    /// Always true: EXIF gives nominal values, not a calibration.
    pub approximate: bool,
    pub method: FocalMethod,
    pub tags_used: Vec<TagReading>,
    pub warnings: Vec<ExifWarning>,
    pub camera: CameraFile,
}

/// Why the result is approximate or what was assumed, each with advice. Serialised as
/// `{kind, message}` plus the variant's numbers, so a JSON report carries the advice too.
#[derive(Debug, Clone, PartialEq)]
pub enum ExifWarning {
    FocalUncertain,
    PrincipalPointAssumed,
    DistortionAssumedZero,
    ResolutionUnitAssumedInch,
    SquarePixelsAssumed,
    PixelDimensionsMissing,
    Resampled { scale_x: f64, scale_y: f64 },
    CroppedOrRotated { scale_x: f64, scale_y: f64 },
    Equivalent35mm,
    DigitalZoom { ratio: f64 },
}

impl ExifWarning {
    /// A stable snake_case name for reports.
    pub fn kind(&self) -> &'static str {
        match self {
            Self::FocalUncertain => "focal_uncertain",
            Self::PrincipalPointAssumed => "principal_point_assumed",
            Self::DistortionAssumedZero => "distortion_assumed_zero",
            Self::ResolutionUnitAssumedInch => "resolution_unit_assumed_inch",
            Self::SquarePixelsAssumed => "square_pixels_assumed",
            Self::PixelDimensionsMissing => "pixel_dimensions_missing",
            Self::Resampled { .. } => "resampled",
            Self::CroppedOrRotated { .. } => "cropped_or_rotated",
            Self::Equivalent35mm => "equivalent_35mm",
            Self::DigitalZoom { .. } => "digital_zoom",
        }
    }
}

impl Serialize for ExifWarning {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let mut map = serializer.serialize_map(None)?;
        map.serialize_entry("kind", self.kind())?;
        map.serialize_entry("message", &self.to_string())?;
        match self {
            Self::Resampled { scale_x, scale_y } | Self::CroppedOrRotated { scale_x, scale_y } => {
                map.serialize_entry("scale_x", scale_x)?;
                map.serialize_entry("scale_y", scale_y)?;
            }
            Self::DigitalZoom { ratio } => map.serialize_entry("ratio", ratio)?,
            _ => {}
        }
        map.end()
    }
}

impl fmt::Display for ExifWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Self::FocalUncertain => f.write_str(
                "focal length from EXIF is nominal: allow about ±5-10 % (common practice, not a \
                 measurement); calibrate for a measured camera",
            ),
            Self::PrincipalPointAssumed => {
                f.write_str("principal point assumed at the image centre; calibrate to measure it")
            }
            Self::DistortionAssumedZero => f.write_str(
                "lens distortion assumed zero; calibrate if keypoints lie near the image edges",
            ),
            Self::ResolutionUnitAssumedInch => {
                f.write_str("FocalPlaneResolutionUnit missing: the EXIF default, inch, was assumed")
            }
            Self::SquarePixelsAssumed => {
                f.write_str("FocalPlaneYResolution missing: square pixels assumed (fy = fx)")
            }
            Self::PixelDimensionsMissing => f.write_str(
                "PixelXDimension/PixelYDimension missing: the stored image is assumed not \
                 resampled",
            ),
            Self::Resampled { scale_x, scale_y } => write!(
                f,
                "stored image is resampled from the EXIF pixel dimensions: focal length scaled \
                 by {scale_x:.6} (x) and {scale_y:.6} (y)"
            ),
            Self::CroppedOrRotated { scale_x, scale_y } => write!(
                f,
                "stored image does not scale the EXIF pixel dimensions evenly ({scale_x:.6} in \
                 x, {scale_y:.6} in y): it was probably cropped or rotated, so the focal length \
                 may be off; use the camera's original file"
            ),
            Self::Equivalent35mm => f.write_str(
                "focal length from FocalLengthIn35mmFilm on the image diagonal: the tag is a \
                 whole number of mm and its crop factor is maker-dependent, so expect a few % \
                 error",
            ),
            Self::DigitalZoom { ratio } => write!(
                f,
                "DigitalZoomRatio {ratio} multiplies the focal length (some makers already \
                 include it in FocalLengthIn35mmFilm)"
            ),
        }
    }
}

/// A problem with the EXIF tags themselves (the caller adds the file name).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ExifTagError {
    #[error(
        "no usable focal length tags (missing: {}); expected FocalLength with \
         FocalPlaneXResolution, or FocalLengthIn35mmFilm",
        .0.join(", ")
    )]
    NoFocalTags(Vec<&'static str>),
    #[error("EXIF tag {tag} is {value}; expected {expected}")]
    Invalid {
        tag: String,
        value: String,
        expected: &'static str,
    },
}

/// Why `camera from-exif` could not derive a camera; every message names the file.
#[derive(Debug, thiserror::Error)]
pub enum FromExifError {
    #[error("cannot read {}: {source}", .path.display())]
    Unreadable {
        path: PathBuf,
        source: std::io::Error,
    },
    #[error(
        "{} is not an image this command reads (expected a JPEG, PNG or TIFF file)",
        .path.display()
    )]
    NotAnImage { path: PathBuf },
    #[error("{}: broken image header ({reason})", .path.display())]
    BadHeader { path: PathBuf, reason: &'static str },
    #[error(
        "{} has no EXIF data (expected an Exif APP1 segment, a PNG eXIf chunk or TIFF tags); \
         write the camera file by hand or calibrate",
        .path.display()
    )]
    NoExif { path: PathBuf },
    #[error("{}: the EXIF data cannot be read ({reason})", .path.display())]
    BadExif { path: PathBuf, reason: String },
    #[error("{}: {source}", .path.display())]
    Tags { path: PathBuf, source: ExifTagError },
    #[error("{}: the derived camera is invalid: {source}", .path.display())]
    InvalidCamera {
        path: PathBuf,
        source: CameraFileError,
    },
}

/// Stored pixel grid of the image file.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct ImageSize {
    pub width_px: u32,
    pub height_px: u32,
}

/// The EXIF tags this command uses, as numbers. Rationals are already checked positive; a
/// FocalLengthIn35mmFilm of 0 ("unknown" in EXIF 2.3) and a DigitalZoomRatio with numerator 0
/// ("not used") read as absent.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct FocalTags {
    pub focal_length_mm: Option<f64>,
    pub plane_x_resolution: Option<f64>,
    pub plane_y_resolution: Option<f64>,
    pub plane_resolution_unit: Option<u32>,
    pub focal_length_35mm: Option<u32>,
    pub pixel_x_dimension: Option<u32>,
    pub pixel_y_dimension: Option<u32>,
    pub digital_zoom_ratio: Option<f64>,
}

/// Focal lengths (px) and how they were found.
#[derive(Debug, Clone, PartialEq)]
pub struct FocalEstimate {
    pub method: FocalMethod,
    pub fx_px: f64,
    pub fy_px: f64,
    pub tags_used: Vec<TagReading>,
    pub warnings: Vec<ExifWarning>,
}

/// Reads the image and derives approximate intrinsics from its EXIF tags.
pub fn from_exif(options: &FromExifOptions) -> Result<ExifIntrinsics, FromExifError> {
    let path = options.image.as_path();
    let bytes = std::fs::read(path).map_err(|source| FromExifError::Unreadable {
        path: path.to_path_buf(),
        source,
    })?;
    let format = ImageFormat::detect(&bytes).ok_or_else(|| FromExifError::NotAnImage {
        path: path.to_path_buf(),
    })?;
    let exif = read_exif(&bytes, path)?;
    let size = stored_size(&bytes, format, &exif).map_err(|reason| FromExifError::BadHeader {
        path: path.to_path_buf(),
        reason,
    })?;
    let tag_error = |source| FromExifError::Tags {
        path: path.to_path_buf(),
        source,
    };
    let tags = read_focal_tags(&exif).map_err(tag_error)?;
    let estimate = estimate_focal(&tags, size).map_err(tag_error)?;
    intrinsics_outcome(path, size, estimate)
}

/// Assembles the outcome and validates the camera through the camera file's own checks.
fn intrinsics_outcome(
    path: &Path,
    size: ImageSize,
    estimate: FocalEstimate,
) -> Result<ExifIntrinsics, FromExifError> {
    let camera = pinhole_camera_file(size, estimate.fx_px, estimate.fy_px);
    camera
        .to_camera()
        .map_err(|source| FromExifError::InvalidCamera {
            path: path.to_path_buf(),
            source,
        })?;
    let mut warnings = vec![
        ExifWarning::FocalUncertain,
        ExifWarning::PrincipalPointAssumed,
        ExifWarning::DistortionAssumedZero,
    ];
    warnings.extend(estimate.warnings);
    Ok(ExifIntrinsics {
        image: path.to_path_buf(),
        approximate: true,
        method: estimate.method,
        tags_used: estimate.tags_used,
        warnings,
        camera,
    })
}

/// A zero-distortion pinhole camera file with the principal point at the image centre.
pub fn pinhole_camera_file(size: ImageSize, fx_px: f64, fy_px: f64) -> CameraFile {
    let (cx, cy) = principal_point_px(size);
    CameraFile {
        model: "pinhole".to_string(),
        width: size.width_px,
        height: size.height_px,
        fx: fx_px,
        fy: fy_px,
        cx,
        cy,
        skew: 0.0,
        distortion: DistortionFile::default(),
        pixel_sigma: PIXEL_SIGMA_PX,
    }
}

/// Image centre in pixel coordinates whose origin is the centre of the top-left pixel:
/// ((W − 1)/2, (H − 1)/2).
pub fn principal_point_px(size: ImageSize) -> (f64, f64) {
    (
        (f64::from(size.width_px) - 1.0) / 2.0,
        (f64::from(size.height_px) - 1.0) / 2.0,
    )
}

/// Millimetres per FocalPlaneResolutionUnit code: 2 inch, 3 cm (EXIF 2.3); 4 mm, 5 µm (the
/// further units CIPA DC-008 allows for ResolutionUnit-type tags). `None` for any other code.
pub fn resolution_unit_mm(code: u32) -> Option<f64> {
    match code {
        2 => Some(25.4),
        3 => Some(10.0),
        4 => Some(1.0),
        5 => Some(0.001),
        _ => None,
    }
}

/// f[px] = FocalLength[mm] × FocalPlaneResolution[px/unit] / unit[mm], from the EXIF 2.3
/// definitions of FocalLength and FocalPlaneX/YResolution (pixels of the image per unit length
/// on the focal plane).
pub fn focal_px_from_plane_resolution(focal_mm: f64, pixels_per_unit: f64, unit_mm: f64) -> f64 {
    focal_mm * pixels_per_unit / unit_mm
}

/// f[px] ≈ f35[mm] × √(W² + H²)[px] / 43.267 mm: the 35 mm equivalent is defined through the
/// crop factor on the diagonal, so this holds for any aspect ratio (f35 × W / 36 only for 3:2).
pub fn focal_px_from_35mm(focal_35mm: f64, size: ImageSize) -> f64 {
    let diagonal_px = f64::from(size.width_px).hypot(f64::from(size.height_px));
    focal_35mm * diagonal_px / FULL_FRAME_DIAGONAL_MM
}

/// Chooses the route (focal-plane density first, 35 mm equivalent second) and applies digital zoom.
pub fn estimate_focal(tags: &FocalTags, size: ImageSize) -> Result<FocalEstimate, ExifTagError> {
    let mut estimate = match (tags.focal_length_mm, tags.plane_x_resolution) {
        (Some(focal_mm), Some(res_x)) => from_focal_plane(tags, focal_mm, res_x, size)?,
        _ => match tags.focal_length_35mm {
            Some(f35) => from_35mm(f35, size),
            None => return Err(ExifTagError::NoFocalTags(missing_focal_tags(tags))),
        },
    };
    if let Some(ratio) = tags.digital_zoom_ratio.filter(|&r| r > 1.0) {
        estimate.fx_px *= ratio;
        estimate.fy_px *= ratio;
        estimate.tags_used.push(reading("DigitalZoomRatio", ratio));
        estimate.warnings.push(ExifWarning::DigitalZoom { ratio });
    }
    Ok(estimate)
}

fn missing_focal_tags(tags: &FocalTags) -> Vec<&'static str> {
    [
        ("FocalLength", tags.focal_length_mm.is_none()),
        ("FocalPlaneXResolution", tags.plane_x_resolution.is_none()),
        ("FocalLengthIn35mmFilm", tags.focal_length_35mm.is_none()),
    ]
    .into_iter()
    .filter_map(|(name, missing)| missing.then_some(name))
    .collect()
}

fn from_focal_plane(
    tags: &FocalTags,
    focal_mm: f64,
    res_x: f64,
    size: ImageSize,
) -> Result<FocalEstimate, ExifTagError> {
    let mut warnings = Vec::new();
    let mut tags_used = vec![
        reading("FocalLength", focal_mm),
        reading("FocalPlaneXResolution", res_x),
    ];
    let res_y = match tags.plane_y_resolution {
        Some(res_y) => {
            tags_used.push(reading("FocalPlaneYResolution", res_y));
            res_y
        }
        None => {
            warnings.push(ExifWarning::SquarePixelsAssumed);
            res_x
        }
    };
    let unit_mm = plane_unit_mm(tags.plane_resolution_unit, &mut tags_used, &mut warnings)?;
    let (scale_x, scale_y) = resample_scale(tags, size, &mut tags_used, &mut warnings);
    Ok(FocalEstimate {
        method: FocalMethod::FocalPlaneResolution,
        fx_px: focal_px_from_plane_resolution(focal_mm, res_x, unit_mm) * scale_x,
        fy_px: focal_px_from_plane_resolution(focal_mm, res_y, unit_mm) * scale_y,
        tags_used,
        warnings,
    })
}

/// The resolution unit in mm; a missing tag takes the EXIF default (2, inch) with a warning.
fn plane_unit_mm(
    code: Option<u32>,
    tags_used: &mut Vec<TagReading>,
    warnings: &mut Vec<ExifWarning>,
) -> Result<f64, ExifTagError> {
    let Some(code) = code else {
        warnings.push(ExifWarning::ResolutionUnitAssumedInch);
        return Ok(25.4);
    };
    tags_used.push(reading("FocalPlaneResolutionUnit", f64::from(code)));
    resolution_unit_mm(code).ok_or_else(|| ExifTagError::Invalid {
        tag: "FocalPlaneResolutionUnit".to_string(),
        value: code.to_string(),
        expected: "2 (inch), 3 (cm), 4 (mm) or 5 (µm)",
    })
}

/// Stored size over EXIF pixel dimensions, per axis: the focal-plane density refers to the grid
/// the camera wrote, which a resized file no longer has.
fn resample_scale(
    tags: &FocalTags,
    size: ImageSize,
    tags_used: &mut Vec<TagReading>,
    warnings: &mut Vec<ExifWarning>,
) -> (f64, f64) {
    let (Some(exif_w), Some(exif_h)) = (tags.pixel_x_dimension, tags.pixel_y_dimension) else {
        warnings.push(ExifWarning::PixelDimensionsMissing);
        return (1.0, 1.0);
    };
    tags_used.push(reading("PixelXDimension", f64::from(exif_w)));
    tags_used.push(reading("PixelYDimension", f64::from(exif_h)));
    if exif_w == size.width_px && exif_h == size.height_px {
        return (1.0, 1.0);
    }
    let scale_x = f64::from(size.width_px) / f64::from(exif_w);
    let scale_y = f64::from(size.height_px) / f64::from(exif_h);
    if (scale_x - scale_y).abs() > EXIF_SCALE_MISMATCH_REL * scale_x.max(scale_y) {
        warnings.push(ExifWarning::CroppedOrRotated { scale_x, scale_y });
    } else {
        warnings.push(ExifWarning::Resampled { scale_x, scale_y });
    }
    (scale_x, scale_y)
}

fn from_35mm(focal_35mm: u32, size: ImageSize) -> FocalEstimate {
    let f_px = focal_px_from_35mm(f64::from(focal_35mm), size);
    FocalEstimate {
        method: FocalMethod::Equivalent35mm,
        fx_px: f_px,
        fy_px: f_px,
        tags_used: vec![reading("FocalLengthIn35mmFilm", f64::from(focal_35mm))],
        warnings: vec![ExifWarning::Equivalent35mm],
    }
}

fn reading(tag: &str, value: f64) -> TagReading {
    TagReading {
        tag: tag.to_string(),
        value,
    }
}

/// The camera file as YAML text, headed by comments saying it is approximate, which tags it came
/// from and what was assumed.
pub fn render_camera_yaml(
    outcome: &ExifIntrinsics,
) -> Result<String, serde_saphyr::SerializeError> {
    let tags: Vec<String> = outcome
        .tags_used
        .iter()
        .map(|t| format!("{}={}", t.tag, t.value))
        .collect();
    let mut text = format!(
        "# approximate intrinsics from EXIF of {}; tags used: {}\n",
        outcome.image.display(),
        tags.join(", ")
    );
    for warning in &outcome.warnings {
        text.push_str(&format!("# warning: {warning}\n"));
    }
    text.push_str(&serde_saphyr::to_string(&outcome.camera)?);
    Ok(text)
}

/// The containers whose stored size this command can read.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ImageFormat {
    Jpeg,
    Png,
    Tiff,
}

impl ImageFormat {
    /// By signature: JPEG SOI + marker prefix, the PNG signature, or a TIFF byte-order header.
    pub fn detect(bytes: &[u8]) -> Option<Self> {
        if bytes.starts_with(&[0xFF, 0xD8, 0xFF]) {
            Some(Self::Jpeg)
        } else if bytes.starts_with(PNG_SIGNATURE) {
            Some(Self::Png)
        } else if bytes.starts_with(b"II*\0") || bytes.starts_with(b"MM\0*") {
            Some(Self::Tiff)
        } else {
            None
        }
    }
}

const PNG_SIGNATURE: &[u8] = b"\x89PNG\r\n\x1a\n";

fn read_exif(bytes: &[u8], path: &Path) -> Result<Exif, FromExifError> {
    match exif::Reader::new().read_from_container(&mut Cursor::new(bytes)) {
        Ok(exif) => Ok(exif),
        Err(exif::Error::NotFound(_)) => Err(FromExifError::NoExif {
            path: path.to_path_buf(),
        }),
        Err(e) => Err(FromExifError::BadExif {
            path: path.to_path_buf(),
            reason: e.to_string(),
        }),
    }
}

/// The stored pixel grid: JPEG frame header, PNG IHDR, or the TIFF ImageWidth/ImageLength tags.
pub fn stored_size(
    bytes: &[u8],
    format: ImageFormat,
    exif: &Exif,
) -> Result<ImageSize, &'static str> {
    match format {
        ImageFormat::Jpeg => jpeg_size(bytes),
        ImageFormat::Png => png_size(bytes),
        ImageFormat::Tiff => tiff_size(exif),
    }
}

/// Width and height from the first JPEG start-of-frame segment (ITU-T T.81, B.2.2: SOFn markers
/// 0xC0-0xCF except DHT 0xC4, JPG 0xC8, DAC 0xCC; payload P, Y, X after the 2-byte length).
pub fn jpeg_size(bytes: &[u8]) -> Result<ImageSize, &'static str> {
    let mut pos = 2;
    loop {
        let marker = next_jpeg_marker(bytes, &mut pos).ok_or("no JPEG frame header")?;
        if matches!(marker, 0x01 | 0xD0..=0xD7) {
            continue;
        }
        if marker == 0xDA || marker == 0xD9 {
            return Err("no JPEG frame header before the image data");
        }
        let length = usize::from(be_u16(bytes, pos).ok_or("truncated JPEG segment")?);
        if matches!(marker, 0xC0..=0xCF) && !matches!(marker, 0xC4 | 0xC8 | 0xCC) {
            let height_px = be_u16(bytes, pos + 3).ok_or("truncated JPEG frame header")?;
            let width_px = be_u16(bytes, pos + 5).ok_or("truncated JPEG frame header")?;
            return positive_size(u32::from(width_px), u32::from(height_px));
        }
        pos += length;
    }
}

/// Skips fill bytes to the next marker code; `pos` ends just after the code.
fn next_jpeg_marker(bytes: &[u8], pos: &mut usize) -> Option<u8> {
    if *bytes.get(*pos)? != 0xFF {
        return None;
    }
    while *bytes.get(*pos)? == 0xFF {
        *pos += 1;
    }
    let marker = *bytes.get(*pos)?;
    *pos += 1;
    Some(marker)
}

/// Width and height from the PNG IHDR chunk, which must come first (PNG spec, 11.2.2).
pub fn png_size(bytes: &[u8]) -> Result<ImageSize, &'static str> {
    if bytes.get(12..16) != Some(b"IHDR".as_slice()) {
        return Err("PNG does not start with an IHDR chunk");
    }
    let width_px = be_u32(bytes, 16).ok_or("truncated PNG IHDR chunk")?;
    let height_px = be_u32(bytes, 20).ok_or("truncated PNG IHDR chunk")?;
    positive_size(width_px, height_px)
}

fn tiff_size(exif: &Exif) -> Result<ImageSize, &'static str> {
    let dimension = |tag| exif.get_field(tag, In::PRIMARY)?.value.get_uint(0);
    let width_px = dimension(Tag::ImageWidth).ok_or("TIFF has no ImageWidth")?;
    let height_px = dimension(Tag::ImageLength).ok_or("TIFF has no ImageLength")?;
    positive_size(width_px, height_px)
}

fn positive_size(width_px: u32, height_px: u32) -> Result<ImageSize, &'static str> {
    if width_px == 0 || height_px == 0 {
        return Err("image width or height is zero");
    }
    Ok(ImageSize {
        width_px,
        height_px,
    })
}

fn be_u16(bytes: &[u8], pos: usize) -> Option<u16> {
    Some(u16::from_be_bytes(
        bytes.get(pos..pos + 2)?.try_into().ok()?,
    ))
}

fn be_u32(bytes: &[u8], pos: usize) -> Option<u32> {
    Some(u32::from_be_bytes(
        bytes.get(pos..pos + 4)?.try_into().ok()?,
    ))
}

/// The focal tags of the primary image (its Exif IFD), checked and converted to numbers.
pub fn read_focal_tags(exif: &Exif) -> Result<FocalTags, ExifTagError> {
    Ok(FocalTags {
        focal_length_mm: positive_rational(exif, Tag::FocalLength)?,
        plane_x_resolution: positive_rational(exif, Tag::FocalPlaneXResolution)?,
        plane_y_resolution: positive_rational(exif, Tag::FocalPlaneYResolution)?,
        plane_resolution_unit: unsigned(exif, Tag::FocalPlaneResolutionUnit)?,
        focal_length_35mm: unsigned(exif, Tag::FocalLengthIn35mmFilm)?.filter(|&f| f > 0),
        pixel_x_dimension: unsigned(exif, Tag::PixelXDimension)?.filter(|&n| n > 0),
        pixel_y_dimension: unsigned(exif, Tag::PixelYDimension)?.filter(|&n| n > 0),
        digital_zoom_ratio: zoom_ratio(exif)?,
    })
}

fn field(exif: &Exif, tag: Tag) -> Option<&Value> {
    exif.get_field(tag, In::PRIMARY).map(|f| &f.value)
}

fn invalid(tag: Tag, value: &Value, expected: &'static str) -> ExifTagError {
    ExifTagError::Invalid {
        tag: tag.to_string(),
        value: value.display_as(tag).to_string(),
        expected,
    }
}

/// The first rational of a RATIONAL tag as (numerator, denominator).
fn rational(exif: &Exif, tag: Tag) -> Result<Option<(u32, u32)>, ExifTagError> {
    let Some(value) = field(exif, tag) else {
        return Ok(None);
    };
    match value {
        Value::Rational(v) if !v.is_empty() => Ok(Some((v[0].num, v[0].denom))),
        _ => Err(invalid(tag, value, "a RATIONAL value")),
    }
}

fn positive_rational(exif: &Exif, tag: Tag) -> Result<Option<f64>, ExifTagError> {
    match rational(exif, tag)? {
        None => Ok(None),
        Some((num, denom)) if num > 0 && denom > 0 => Ok(Some(f64::from(num) / f64::from(denom))),
        Some((num, denom)) => Err(ExifTagError::Invalid {
            tag: tag.to_string(),
            value: format!("{num}/{denom}"),
            expected: "a positive rational (numerator and denominator above 0)",
        }),
    }
}

/// DigitalZoomRatio: numerator 0 means digital zoom was not used (EXIF 2.3).
fn zoom_ratio(exif: &Exif) -> Result<Option<f64>, ExifTagError> {
    match rational(exif, Tag::DigitalZoomRatio)? {
        None | Some((0, _)) => Ok(None),
        Some((num, denom)) if denom > 0 => Ok(Some(f64::from(num) / f64::from(denom))),
        Some((num, denom)) => Err(ExifTagError::Invalid {
            tag: "DigitalZoomRatio".to_string(),
            value: format!("{num}/{denom}"),
            expected: "a rational with a denominator above 0",
        }),
    }
}

/// The first value of a BYTE, SHORT or LONG tag.
fn unsigned(exif: &Exif, tag: Tag) -> Result<Option<u32>, ExifTagError> {
    let Some(value) = field(exif, tag) else {
        return Ok(None);
    };
    value
        .get_uint(0)
        .map(Some)
        .ok_or_else(|| invalid(tag, value, "an unsigned integer"))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn size(width_px: u32, height_px: u32) -> ImageSize {
        ImageSize {
            width_px,
            height_px,
        }
    }

    /// CHECK_VALUES.md section 7 worked example [COMP]: 4000 × 2950 px on a 6.17 × 4.55 mm sensor,
    /// f = 4.5 mm; FocalPlaneXResolution 6482.98 px/cm or 16466.77 px/in → f_x = 2917.34 px.
    #[test]
    fn worked_example_from_focal_plane_resolution() {
        let fx_cm = focal_px_from_plane_resolution(4.5, 6482.98, resolution_unit_mm(3).unwrap());
        let fx_in = focal_px_from_plane_resolution(4.5, 16466.77, resolution_unit_mm(2).unwrap());
        assert!((fx_cm - 2917.34).abs() < 0.005, "{fx_cm}");
        assert!((fx_in - 2917.34).abs() < 0.005, "{fx_in}");
    }

    /// CHECK_VALUES.md section 7 worked example [COMP]: the diagonal formula gives 2917.43 px.
    /// Its "f35 = 25.40 mm" is the rounded display of 4.5 × 43.267 / √(6.17² + 4.55²) = 25.3972;
    /// the unrounded value reproduces 2917.43 (25.40 itself would give 2917.75).
    #[test]
    fn worked_example_from_35mm_uses_the_diagonal() {
        let f35_mm = 4.5 * FULL_FRAME_DIAGONAL_MM / 6.17_f64.hypot(4.55);
        let f_px = focal_px_from_35mm(f35_mm, size(4000, 2950));
        assert!((f_px - 2917.43).abs() < 0.005, "{f_px}");
        // The width-based form f35 × W / 36 (≈ 2821.9 px, CHECK_VALUES: wrong by 3.3 %) is not
        // what the function computes.
        let width_based_px = f35_mm * 4000.0 / 36.0;
        assert!((f_px / width_based_px - 1.0) > 0.03);
    }

    #[test]
    fn principal_point_is_the_centre_of_the_pixel_grid() {
        // Pixel centres run 0..W-1, so the middle of a 4-pixel row is at 1.5.
        let (cx, cy) = principal_point_px(size(4, 3));
        assert!((cx - 1.5).abs() < 1e-15 && (cy - 1.0).abs() < 1e-15);
    }

    #[test]
    fn unknown_resolution_unit_is_an_error() {
        assert!(resolution_unit_mm(1).is_none());
        let tags = FocalTags {
            focal_length_mm: Some(4.5),
            plane_x_resolution: Some(648.0),
            plane_resolution_unit: Some(7),
            ..FocalTags::default()
        };
        let err = estimate_focal(&tags, size(400, 295)).unwrap_err();
        assert!(
            err.to_string().contains("FocalPlaneResolutionUnit"),
            "{err}"
        );
    }

    #[test]
    fn uneven_scaling_warns_of_crop_or_rotation() {
        let tags = FocalTags {
            focal_length_mm: Some(4.5),
            plane_x_resolution: Some(6482.98),
            plane_resolution_unit: Some(3),
            pixel_x_dimension: Some(4000),
            pixel_y_dimension: Some(2950),
            ..FocalTags::default()
        };
        let est = estimate_focal(&tags, size(2950, 4000)).unwrap();
        assert!(matches!(
            est.warnings.as_slice(),
            [
                ExifWarning::SquarePixelsAssumed,
                ExifWarning::CroppedOrRotated { .. }
            ]
        ));
    }

    #[test]
    fn missing_tags_are_listed() {
        let tags = FocalTags {
            focal_length_mm: Some(4.5),
            ..FocalTags::default()
        };
        let err = estimate_focal(&tags, size(400, 295)).unwrap_err();
        assert_eq!(
            err,
            ExifTagError::NoFocalTags(vec!["FocalPlaneXResolution", "FocalLengthIn35mmFilm"])
        );
    }
}
