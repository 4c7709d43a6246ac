//! `camera from-exif` on the fixture images of scripts/make_exif_images.py, checked against
//! exiftool's reading of the same files (fixtures/exif/exiftool_reading.json, which records the
//! exiftool version and command) and against the EXIF 2.3 (CIPA DC-008) tag definitions.

use std::collections::BTreeSet;
use std::path::{Path, PathBuf};

use mountdrift::commands::camera::{
    from_exif, render_camera_yaml, ExifIntrinsics, ExifTagError, ExifWarning, FocalMethod,
    FromExifError, FromExifOptions,
};
use mountdrift::session::CameraFile;
use serde_json::{Map, Value};

const FIXTURES: &str = concat!(env!("CARGO_MANIFEST_DIR"), "/fixtures/exif");

/// exiftool -n prints rationals to 10 significant digits; our readings are the exact fractions.
const EXIFTOOL_DIGITS_REL: f64 = 1e-9;

#[derive(serde::Deserialize)]
struct Record {
    cases: Vec<Case>,
}

#[derive(serde::Deserialize)]
struct Case {
    file: String,
    exiftool: Map<String, Value>,
}

fn record() -> Record {
    let text = std::fs::read_to_string(Path::new(FIXTURES).join("exiftool_reading.json")).unwrap();
    serde_json::from_str(&text).unwrap()
}

fn fixture(name: &str) -> PathBuf {
    Path::new(FIXTURES).join(name)
}

fn run(path: &Path) -> Result<ExifIntrinsics, FromExifError> {
    from_exif(&FromExifOptions {
        image: path.to_path_buf(),
    })
}

fn run_fixture(name: &str) -> ExifIntrinsics {
    run(&fixture(name)).unwrap_or_else(|e| panic!("{name}: {e}"))
}

/// exiftool's name for an EXIF 2.3 tag (exiftool renames three of the tags we use).
fn exiftool_name(exif_name: &str) -> &str {
    match exif_name {
        "PixelXDimension" => "ExifImageWidth",
        "PixelYDimension" => "ExifImageHeight",
        "FocalLengthIn35mmFilm" => "FocalLengthIn35mmFormat",
        other => other,
    }
}

fn num(reading: &Map<String, Value>, name: &str) -> Option<f64> {
    reading.get(name).and_then(Value::as_f64)
}

fn close(a: f64, b: f64, rel: f64) -> bool {
    (a - b).abs() <= rel * a.abs().max(b.abs())
}

/// Focal lengths (px) by hand from exiftool's numbers and the EXIF 2.3 tag definitions:
/// f = FocalLength[mm] × FocalPlaneResolution / unit[mm] (FocalPlaneResolutionUnit 2 = inch
/// = 25.4 mm, the default, 3 = cm; 4 = mm and 5 = µm as CIPA DC-008 allows, the same table as
/// exiftool's CalcScaleFactor35efl), × stored/EXIF pixel dimension, × DigitalZoomRatio; or the
/// 35 mm equivalent on the diagonal, FocalLengthIn35mmFilm × √(W² + H²) / 43.267.
fn hand_focal_px(r: &Map<String, Value>) -> Option<(f64, f64)> {
    let (w, h) = (num(r, "ImageWidth")?, num(r, "ImageHeight")?);
    let zoom = num(r, "DigitalZoomRatio").unwrap_or(1.0);
    if let (Some(f_mm), Some(res_x)) = (num(r, "FocalLength"), num(r, "FocalPlaneXResolution")) {
        let unit_mm = match num(r, "FocalPlaneResolutionUnit").unwrap_or(2.0) as u32 {
            2 => 25.4,
            3 => 10.0,
            4 => 1.0,
            5 => 0.001,
            _ => return None,
        };
        let res_y = num(r, "FocalPlaneYResolution").unwrap_or(res_x);
        let scale_x = w / num(r, "ExifImageWidth").unwrap_or(w);
        let scale_y = h / num(r, "ExifImageHeight").unwrap_or(h);
        let fx = f_mm * res_x / unit_mm * scale_x * zoom;
        return Some((fx, f_mm * res_y / unit_mm * scale_y * zoom));
    }
    let f35 = num(r, "FocalLengthIn35mmFormat").filter(|&f| f > 0.0)?;
    let f = f35 * w.hypot(h) / 43.267 * zoom;
    Some((f, f))
}

fn successful_cases() -> Vec<(Case, ExifIntrinsics)> {
    let cases: Vec<_> = record()
        .cases
        .into_iter()
        .filter(|c| hand_focal_px(&c.exiftool).is_some())
        .map(|c| {
            let outcome = run_fixture(&c.file);
            (c, outcome)
        })
        .collect();
    assert_eq!(cases.len(), 9, "fixture set changed");
    cases
}

#[test]
fn tag_readings_and_stored_size_equal_exiftool() {
    for (case, outcome) in successful_cases() {
        let reading = &case.exiftool;
        for used in &outcome.tags_used {
            let theirs = num(reading, exiftool_name(&used.tag))
                .unwrap_or_else(|| panic!("{}: exiftool has no {}", case.file, used.tag));
            assert!(
                close(used.value, theirs, EXIFTOOL_DIGITS_REL),
                "{}: {} ours {} exiftool {theirs}",
                case.file,
                used.tag,
                used.value
            );
        }
        assert_eq!(
            num(reading, "ImageWidth"),
            Some(outcome.camera.width.into())
        );
        assert_eq!(
            num(reading, "ImageHeight"),
            Some(outcome.camera.height.into())
        );
    }
}

#[test]
fn every_relevant_tag_exiftool_sees_is_used() {
    let plane_tags = [
        "FocalLength",
        "FocalPlaneXResolution",
        "FocalPlaneYResolution",
        "FocalPlaneResolutionUnit",
        "PixelXDimension",
        "PixelYDimension",
        "DigitalZoomRatio",
    ];
    let equivalent_tags = ["FocalLengthIn35mmFilm", "DigitalZoomRatio"];
    for (case, outcome) in successful_cases() {
        let relevant: &[&str] = match outcome.method {
            FocalMethod::FocalPlaneResolution => &plane_tags,
            FocalMethod::Equivalent35mm => &equivalent_tags,
        };
        let seen: BTreeSet<&str> = relevant
            .iter()
            .copied()
            .filter(|t| case.exiftool.contains_key(exiftool_name(t)))
            .collect();
        let used: BTreeSet<&str> = outcome.tags_used.iter().map(|t| t.tag.as_str()).collect();
        assert_eq!(seen, used, "{}", case.file);
    }
}

#[test]
fn focal_lengths_follow_the_exif_definitions() {
    for (case, outcome) in successful_cases() {
        let (fx, fy) = hand_focal_px(&case.exiftool).unwrap();
        let cam = &outcome.camera;
        assert!(
            close(cam.fx, fx, 1e-8),
            "{}: fx {} vs {fx}",
            case.file,
            cam.fx
        );
        assert!(
            close(cam.fy, fy, 1e-8),
            "{}: fy {} vs {fy}",
            case.file,
            cam.fy
        );
    }
}

/// exiftool's composite FocalLength35efl is its own focal-plane computation (sensor diagonal from
/// FocalPlaneX/YResolution and ExifImageWidth/Height). On the stored diagonal it gives the focal
/// length in pixels: f35efl × √(W² + H²) / √(36² + 24²). exiftool's composite ignores the
/// standard DigitalZoomRatio (it reads a maker-note zoom), so ours is that times the ratio.
/// Agreement to 1e-4: the fixtures' pixels are square to 8e-5 and 43.267 rounds √(36²+24²).
#[test]
fn focal_lengths_agree_with_exiftool_composite() {
    let mut checked = 0;
    for (case, outcome) in successful_cases() {
        let Some(f35efl) = num(&case.exiftool, "FocalLength35efl").filter(|&f| f > 0.0) else {
            continue;
        };
        let cam = &outcome.camera;
        let diagonal_px = f64::from(cam.width).hypot(f64::from(cam.height));
        let zoom = num(&case.exiftool, "DigitalZoomRatio").unwrap_or(1.0);
        let theirs = f35efl * diagonal_px / 36f64.hypot(24.0) * zoom;
        let ours = (cam.fx * cam.fy).sqrt();
        assert!(
            close(ours, theirs, 1e-4),
            "{}: {ours} vs {theirs}",
            case.file
        );
        checked += 1;
    }
    assert_eq!(checked, 8);
}

/// CHECK_VALUES.md section 7 worked example [COMP] scaled ten times down to 400 × 295 stored px:
/// f_x = 2917.34 px / 10, whether the density is per cm, per inch, or sensor-native in a file
/// resampled from 4000 × 2950 px. DigitalZoomRatio 2 doubles it.
#[test]
fn worked_example_from_files() {
    for (name, expected_px) in [
        ("cm.jpg", 291.734),
        ("inch.jpg", 291.734),
        ("no_unit.jpg", 291.734),
        ("resized.jpg", 291.734),
        ("zoom2.jpg", 583.468),
    ] {
        let fx = run_fixture(name).camera.fx;
        assert!((fx - expected_px).abs() < 5e-4, "{name}: {fx}");
    }
}

#[test]
fn warnings_say_what_was_assumed() {
    let generic = [
        ExifWarning::FocalUncertain,
        ExifWarning::PrincipalPointAssumed,
        ExifWarning::DistortionAssumedZero,
    ];
    let specific = |name: &str| {
        let outcome = run_fixture(name);
        assert!(outcome.approximate);
        assert_eq!(outcome.warnings[..3], generic, "{name}");
        outcome.warnings[3..].to_vec()
    };
    assert!(specific("cm.jpg").is_empty());
    assert_eq!(
        specific("no_unit.jpg"),
        [ExifWarning::ResolutionUnitAssumedInch]
    );
    assert!(matches!(
        specific("resized.jpg").as_slice(),
        [ExifWarning::Resampled { scale_x, scale_y }]
            if (scale_x - 0.1).abs() < 1e-12 && (scale_y - 0.1).abs() < 1e-12
    ));
    assert_eq!(specific("f35_only.jpg"), [ExifWarning::Equivalent35mm]);
    assert_eq!(
        specific("f35_with_focal.jpg"),
        [ExifWarning::Equivalent35mm]
    );
    assert!(matches!(
        specific("zoom2.jpg").as_slice(),
        [ExifWarning::DigitalZoom { ratio }] if (ratio - 2.0).abs() < 1e-12
    ));
}

#[test]
fn json_outcome_carries_warning_advice() {
    let json = serde_json::to_value(run_fixture("resized.jpg")).unwrap();
    assert_eq!(json["approximate"], true);
    assert_eq!(json["method"], "focal_plane_resolution");
    let warning = &json["warnings"][3];
    assert_eq!(warning["kind"], "resampled");
    assert!(warning["message"].as_str().unwrap().contains("resampled"));
    assert!((warning["scale_x"].as_f64().unwrap() - 0.1).abs() < 1e-12);
    let json = serde_json::to_value(run_fixture("f35_only.jpg")).unwrap();
    assert_eq!(json["method"], "equivalent_35mm");
    assert_eq!(json["warnings"][3]["kind"], "equivalent_35mm");
}

#[test]
fn camera_yaml_is_the_camera_format_with_a_header() {
    let outcome = run_fixture("cm.jpg");
    let yaml = render_camera_yaml(&outcome).unwrap();
    assert!(
        yaml.starts_with("# approximate intrinsics from EXIF of "),
        "{yaml}"
    );
    assert!(
        yaml.lines().next().unwrap().contains("FocalLength=4.5"),
        "{yaml}"
    );
    let parsed: CameraFile = serde_saphyr::from_str(&yaml).unwrap();
    assert_eq!(parsed, outcome.camera);
    let camera = parsed.to_camera().unwrap();
    // Principal point at ((W - 1)/2, (H - 1)/2) for the 400 x 295 image.
    assert!((camera.cx - 199.5).abs() < 1e-12 && (camera.cy - 147.0).abs() < 1e-12);
    assert_eq!(parsed.model, "pinhole");
}

fn error_of(path: &Path) -> FromExifError {
    let err = run(path).expect_err("expected an error");
    let message = err.to_string();
    assert!(message.contains(&path.display().to_string()), "{message}");
    err
}

#[test]
fn no_focal_tags_lists_what_is_missing() {
    let err = error_of(&fixture("no_focal.jpg"));
    let FromExifError::Tags {
        source: ExifTagError::NoFocalTags(missing),
        ..
    } = &err
    else {
        panic!("{err}");
    };
    let expected = [
        "FocalLength",
        "FocalPlaneXResolution",
        "FocalLengthIn35mmFilm",
    ];
    assert_eq!(missing, &expected);
}

#[test]
fn zero_over_zero_focal_length_is_refused() {
    let err = error_of(&fixture("bad_rational.jpg"));
    assert!(
        matches!(&err, FromExifError::Tags { source: ExifTagError::Invalid { tag, value, .. }, .. }
            if tag == "FocalLength" && value == "0/0"),
        "{err}"
    );
}

#[test]
fn image_without_exif_is_refused() {
    let err = error_of(&fixture("no_exif.jpg"));
    assert!(matches!(err, FromExifError::NoExif { .. }), "{err}");
}

#[test]
fn missing_file_is_refused() {
    let err = error_of(&fixture("there_is_no_such_image.jpg"));
    assert!(matches!(err, FromExifError::Unreadable { .. }), "{err}");
}

#[test]
fn text_file_named_jpg_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("notes.jpg");
    std::fs::write(&path, "mount survey notes, not a picture\n").unwrap();
    let err = error_of(&path);
    assert!(matches!(err, FromExifError::NotAnImage { .. }), "{err}");
}

#[test]
fn truncated_jpeg_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("cut.jpg");
    let bytes = std::fs::read(fixture("cm.jpg")).unwrap();
    std::fs::write(&path, &bytes[..60]).unwrap();
    let err = error_of(&path);
    assert!(matches!(err, FromExifError::BadExif { .. }), "{err}");
}
