//! Draws an overlay outcome on its frame image: detected keypoints, the model points reprojected
//! from the dual-object solution, where a fixed-offset pipeline (nominal mount) would have put
//! the probe with lines showing the offset, a magnified inset around the probe reference point
//! (offsets are often a few pixels), a legend, and the errors in pixels as text. Reads the
//! outcome only; computes nothing but layout.
//!
//! Visual language: shape says what a mark is, colour repeats it (Okabe-Ito palette, which stays
//! distinguishable with the common colour-vision deficiencies), and every mark has a dark halo so
//! it reads on bright and dark backgrounds alike.
//! - detected keypoint: yellow ring with a yellow centre dot (hollow square for a keypoint the
//!   solver gated out as an outlier);
//! - reprojected model point: bluish-green x whose arms leave the centre free;
//! - probe under the nominal mount: vermillion diamond, joined to the reprojected probe point by
//!   a dashed vermillion line.

mod panel;

use std::io::{self, Write};

use ab_glyph::FontRef;
use image::RgbImage;

use crate::commands::overlay::{FixedOffsetLayer, ObjectOverlay, OverlayOutcome};
use crate::sim::render::paint::{self, Colour, Px};
use crate::sim::render::write_png;

/// Detected keypoints (Okabe-Ito yellow).
pub const DETECTION_COLOUR: Colour = [240, 228, 66];
/// Model points reprojected from the dual-object solution (Okabe-Ito bluish green).
pub const REPROJECTION_COLOUR: Colour = [0, 158, 115];
/// The probe where a fixed-offset pipeline puts it (Okabe-Ito vermillion).
pub const FIXED_OFFSET_COLOUR: Colour = [213, 94, 0];
const HALO: Colour = [16, 16, 20];

/// The bundled font (DejaVu Sans Mono Bold, subset; see assets/fonts/README.md).
const FONT_BYTES: &[u8] = include_bytes!("../../assets/fonts/DejaVuSansMono-Bold-subset.ttf");

/// Marker sizes in units of the image height / 480 (a 640x480 frame draws at 1).
const RING_RADIUS: f64 = 7.0;
const STROKE: f64 = 1.0;
const DOT_RADIUS: f64 = 1.6;
const CROSS_INNER: f64 = 2.6;
const CROSS_OUTER: f64 = 5.6;
const DIAMOND_RADIUS: f64 = 6.0;
const DASH: f64 = 5.0;
const GAP: f64 = 3.5;
const HALO_WIDTH: f64 = 1.2;
/// Smallest half-width of a line (px): thinner lines never cover a pixel fully.
const MIN_STROKE_PX: f64 = 1.0;
/// Smallest radius of a detection's centre dot (px).
const MIN_DOT_RADIUS_PX: f64 = 1.5;
/// Smallest shrink factor of an object's marks.
const MIN_MARK_SCALE: f64 = 0.75;

/// Draws the overlay on a copy of the frame image.
pub fn draw_overlay(outcome: &OverlayOutcome) -> RgbImage {
    let mut img = outcome.frame_image.clone();
    let unit = (f64::from(img.height()) / 480.0).max(1.0);
    draw_layers(&mut img, outcome, unit, &View::IDENTITY);
    if let Ok(font) = FontRef::try_from_slice(FONT_BYTES) {
        panel::draw_boxes(&mut img, outcome, &font, unit);
    }
    img
}

/// Draws the overlay and encodes it as PNG.
pub fn write_overlay_png(w: &mut dyn Write, outcome: &OverlayOutcome) -> io::Result<()> {
    write_png(w, &draw_overlay(outcome))
}

/// The text lines the overlay shows (and the command line prints).
pub fn overlay_text_lines(outcome: &OverlayOutcome) -> Vec<String> {
    let mut lines = vec![format!(
        "frame {} at {:.3} s",
        outcome.frame, outcome.time_s
    )];
    lines.push(object_line(&outcome.probe, "probe "));
    lines.push(object_line(&outcome.drogue, "drogue"));
    match &outcome.fixed_offset {
        FixedOffsetLayer::Shown(f) => {
            let px = |v: Option<f64>| v.map_or("n/a".to_string(), |d| format!("{d:.2} px"));
            lines.push(format!(
                "fixed offset: probe shifted {} at {} (RMS {})",
                px(f.reference_displacement_px),
                f.reference_id,
                px(f.rms_displacement_px)
            ));
            if let Some(mm) = f.vector_error_mm {
                lines.push(format!("fixed-offset vector error, this frame: {mm:.1} mm"));
            }
        }
        FixedOffsetLayer::NoNominalMount => {
            lines.push("no nominal mount: fixed-offset layer not drawn".to_string());
        }
        FixedOffsetLayer::ProbeNotSolved => {
            lines.push("probe not solved: fixed-offset layer not drawn".to_string());
        }
    }
    lines
}

fn object_line(object: &ObjectOverlay, name: &str) -> String {
    match (&object.rms_reprojection_px, &object.rejection_message) {
        (Some(rms), _) => {
            let gated = match object.keypoints.len().saturating_sub(object.inliers) {
                0 => String::new(),
                1 => ", 1 outlier".to_string(),
                n => format!(", {n} outliers"),
            };
            format!(
                "{name} reprojection RMS {rms:.2} px over {} keypoints{gated}",
                object.inliers
            )
        }
        (None, Some(message)) => format!("{name} not solved: {message}"),
        (None, None) => format!("{name} not solved"),
    }
}

/// Maps frame pixels to canvas pixels: `(p − origin) · zoom`.
struct View {
    origin: Px,
    zoom: f64,
}

impl View {
    const IDENTITY: View = View {
        origin: Px::new(0.0, 0.0),
        zoom: 1.0,
    };

    fn map(&self, p: Px) -> Px {
        (p - self.origin) * self.zoom
    }
}

/// Draws every mark, bottom to top: the detection rings, the fixed-offset probe (hollow, so
/// the rings show through), the reprojection crosses (inside the rings, so both stay visible),
/// the detection centre dots (which no other mark hides).
fn draw_layers(canvas: &mut RgbImage, outcome: &OverlayOutcome, unit: f64, view: &View) {
    let marks = |object: &ObjectOverlay| Marks {
        unit: unit * object_scale(object, unit, view.zoom),
    };
    let objects = [&outcome.probe, &outcome.drogue];
    for object in objects {
        let m = marks(object);
        for k in &object.keypoints {
            m.detection_outline(canvas, view.map(k.detected_px), k.inlier == Some(false));
        }
    }
    if let FixedOffsetLayer::Shown(fixed) = &outcome.fixed_offset {
        let m = marks(&outcome.probe);
        for shift in &fixed.points {
            if let (Some(a), Some(b)) = (shift.observed_px, shift.fixed_offset_px) {
                m.dashed(canvas, view.map(a), view.map(b), FIXED_OFFSET_COLOUR);
            }
        }
        for p in fixed.points.iter().filter_map(|s| s.fixed_offset_px) {
            m.diamond(canvas, view.map(p), FIXED_OFFSET_COLOUR);
        }
    }
    for object in objects {
        let m = marks(object);
        for p in &object.model_points {
            m.cross(canvas, view.map(p.px), REPROJECTION_COLOUR);
        }
    }
    for object in objects {
        let m = marks(object);
        for k in &object.keypoints {
            m.detection_dot(canvas, view.map(k.detected_px));
        }
    }
}

/// Shrinks an object's marks (down to `MIN_MARK_SCALE`) when its keypoints, as drawn, lie
/// closer together than two ring radii, so a distant drogue stays readable.
fn object_scale(object: &ObjectOverlay, unit: f64, zoom: f64) -> f64 {
    let points: Vec<Px> = object.keypoints.iter().map(|k| k.detected_px).collect();
    let closest = points
        .iter()
        .enumerate()
        .flat_map(|(i, a)| points[i + 1..].iter().map(move |b| (a - b).norm()))
        .fold(f64::INFINITY, f64::min);
    (closest * zoom / (2.0 * RING_RADIUS * unit)).clamp(MIN_MARK_SCALE, 1.0)
}

/// Every frame pixel a mark is drawn at, for placing boxes where they hide nothing.
fn marked_points(outcome: &OverlayOutcome) -> Vec<Px> {
    let mut points = Vec::new();
    for object in [&outcome.probe, &outcome.drogue] {
        points.extend(object.keypoints.iter().map(|k| k.detected_px));
        points.extend(object.model_points.iter().map(|p| p.px));
    }
    if let FixedOffsetLayer::Shown(f) = &outcome.fixed_offset {
        points.extend(f.points.iter().filter_map(|s| s.fixed_offset_px));
    }
    points
}

/// Marker shapes at one scale.
struct Marks {
    unit: f64,
}

impl Marks {
    /// Draws a shape twice: wide in the halo colour, then at its own width and colour.
    fn with_halo(
        &self,
        img: &mut RgbImage,
        colour: Colour,
        draw: impl Fn(&mut RgbImage, f64, Colour),
    ) {
        let width = self.stroke();
        draw(img, width + HALO_WIDTH * self.unit, HALO);
        draw(img, width, colour);
    }

    /// Half-width of a line (px), at least `MIN_STROKE_PX` so lines keep their full colour.
    fn stroke(&self) -> f64 {
        (STROKE * self.unit).max(MIN_STROKE_PX)
    }

    fn detection(&self, img: &mut RgbImage, p: Px, outlier: bool) {
        self.detection_outline(img, p, outlier);
        self.detection_dot(img, p);
    }

    /// The ring (a hollow square for an outlier).
    fn detection_outline(&self, img: &mut RgbImage, p: Px, outlier: bool) {
        let r = RING_RADIUS * self.unit;
        if outlier {
            let corners = [
                (-1.0, -1.0),
                (1.0, -1.0),
                (1.0, 1.0),
                (-1.0, 1.0),
                (-1.0, -1.0),
            ]
            .map(|(x, y)| p + Px::new(x, y) * r * 0.85);
            self.with_halo(img, DETECTION_COLOUR, |img, w, c| {
                paint::polyline(img, &corners, w, c)
            });
        } else {
            self.with_halo(img, DETECTION_COLOUR, |img, w, c| {
                paint::ring(img, p, r, w, c)
            });
        }
    }

    /// The centre dot, never below `MIN_DOT_RADIUS_PX` so the pixel nearest the detection is
    /// fully covered (coverage `r + 1/2 − d` reaches 1 at `d = √2/2` for `r ≥ 1.21`).
    fn detection_dot(&self, img: &mut RgbImage, p: Px) {
        let dot = (DOT_RADIUS * self.unit).max(MIN_DOT_RADIUS_PX);
        paint::disc(img, p, dot + HALO_WIDTH * self.unit, HALO);
        paint::disc(img, p, dot, DETECTION_COLOUR);
    }

    /// An x whose arms leave the centre free, so a detection under it stays visible.
    fn cross(&self, img: &mut RgbImage, p: Px, colour: Colour) {
        let (inner, outer) = (CROSS_INNER * self.unit, CROSS_OUTER * self.unit);
        let arms = [(1.0, 1.0), (1.0, -1.0), (-1.0, 1.0), (-1.0, -1.0)]
            .map(|(x, y)| Px::new(x, y) / std::f64::consts::SQRT_2);
        self.with_halo(img, colour, |img, w, c| {
            for d in arms {
                paint::capsule(img, p + d * inner, p + d * outer, w, c);
            }
        });
    }

    fn diamond(&self, img: &mut RgbImage, p: Px, colour: Colour) {
        let r = DIAMOND_RADIUS * self.unit;
        let corners = [
            (0.0, -1.0),
            (1.0, 0.0),
            (0.0, 1.0),
            (-1.0, 0.0),
            (0.0, -1.0),
        ]
        .map(|(x, y)| p + Px::new(x, y) * r);
        self.with_halo(img, colour, |img, w, c| {
            paint::polyline(img, &corners, w, c)
        });
    }

    /// A dashed line from `a` to `b`.
    fn dashed(&self, img: &mut RgbImage, a: Px, b: Px, colour: Colour) {
        let length = (b - a).norm();
        if !length.is_finite() || length <= 0.0 {
            return;
        }
        let dir = (b - a) / length;
        let (dash, period) = (DASH * self.unit, (DASH + GAP) * self.unit);
        let starts: Vec<f64> = (0..)
            .map(|i| f64::from(i) * period)
            .take_while(|s| *s < length)
            .collect();
        let thin = 0.6 * self.stroke();
        for (width, c) in [(thin + HALO_WIDTH * self.unit, HALO), (thin, colour)] {
            for s in &starts {
                let end = (s + dash).min(length);
                paint::capsule(img, a + dir * *s, a + dir * end, width, c);
            }
        }
    }
}
