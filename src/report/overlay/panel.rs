//! The boxes drawn over an overlay: the legend with the numbers, and a magnified inset around the
//! probe reference point showing the fixed-offset displacement large enough to see, each in the
//! image corner where it hides fewest marks.

use ab_glyph::{FontRef, PxScale};
use image::{Rgb, RgbImage};
use imageproc::drawing::{draw_text_mut, text_size};

use super::{
    draw_layers, marked_points, overlay_text_lines, Marks, View, FIXED_OFFSET_COLOUR, HALO,
    HALO_WIDTH, REPROJECTION_COLOUR, RING_RADIUS, STROKE,
};
use crate::commands::overlay::{FixedOffsetLayer, OverlayOutcome};
use crate::sim::render::paint::{self, Colour, Px};

const PANEL: Colour = [18, 20, 26];
const PANEL_ALPHA: f64 = 0.8;
const TEXT: Colour = [244, 244, 240];
/// Shown in the inset where it reaches beyond the frame.
const OUTSIDE: Colour = [44, 44, 48];
/// Inset side (units of image height / 480); the displacement spans about this fraction of it.
const INSET_SIZE: f64 = 200.0;
const INSET_SPAN: f64 = 0.35;
const MIN_ZOOM: f64 = 2.0;
const MAX_ZOOM: f64 = 8.0;
/// Gap between a box and the image edge (units).
const MARGIN: f64 = 6.0;

/// A box's top-left corner and size (px).
#[derive(Debug, Clone, Copy)]
struct Area {
    x: f64,
    y: f64,
    w: f64,
    h: f64,
}

impl Area {
    fn overlaps(&self, other: &Area) -> bool {
        self.x < other.x + other.w
            && other.x < self.x + self.w
            && self.y < other.y + other.h
            && other.y < self.y + self.h
    }

    /// Marks whose drawing would reach into the area.
    fn covered(&self, marks: &[Px], reach: f64) -> usize {
        marks
            .iter()
            .filter(|p| {
                p.x > self.x - reach
                    && p.x < self.x + self.w + reach
                    && p.y > self.y - reach
                    && p.y < self.y + self.h + reach
            })
            .count()
    }
}

/// Draws the panel, then the inset in another corner.
pub(super) fn draw_boxes(img: &mut RgbImage, outcome: &OverlayOutcome, font: &FontRef, unit: f64) {
    let marks = marked_points(outcome);
    let panel = Panel::new(outcome, font, unit);
    let (w, h) = panel.size();
    let margin = MARGIN * unit;
    let panel_area = place(img, w, h, unit, &marks, None).unwrap_or(Area {
        x: margin,
        y: margin,
        w,
        h,
    });
    panel.draw(img, &panel_area);
    if let Some(inset) = Inset::of(outcome, unit) {
        if let Some(area) = place(img, inset.size, inset.size, unit, &marks, Some(&panel_area)) {
            inset.draw(img, outcome, font, unit, &area);
        }
    }
}

/// The image corner, of those where a `w` x `h` box fits without touching `avoid`, whose box
/// covers fewest marks (top left, top right, bottom left, bottom right on a tie).
fn place(
    img: &RgbImage,
    w: f64,
    h: f64,
    unit: f64,
    marks: &[Px],
    avoid: Option<&Area>,
) -> Option<Area> {
    let margin = MARGIN * unit;
    let (iw, ih) = (f64::from(img.width()), f64::from(img.height()));
    let reach = (RING_RADIUS + STROKE + HALO_WIDTH) * unit;
    [
        (margin, margin),
        (iw - w - margin, margin),
        (margin, ih - h - margin),
        (iw - w - margin, ih - h - margin),
    ]
    .into_iter()
    .map(|(x, y)| Area { x, y, w, h })
    .enumerate()
    .filter(|(_, a)| a.x >= 0.0 && a.y >= 0.0 && avoid.is_none_or(|b| !a.overlaps(b)))
    .min_by_key(|(i, a)| (a.covered(marks, reach), *i))
    .map(|(_, a)| a)
}

fn text_scale(unit: f64) -> PxScale {
    PxScale::from((13.0 * unit).clamp(13.0, 22.0) as f32)
}

fn draw_text(img: &mut RgbImage, font: &FontRef, scale: PxScale, x: f64, y: f64, text: &str) {
    let (tx, ty) = (
        x.round() as i32,
        (y + 0.12 * f64::from(scale.y)).round() as i32,
    );
    draw_text_mut(img, Rgb(TEXT), tx, ty, scale, font, text);
}

/// The legend and the numbers, in a translucent box.
struct Panel<'a> {
    font: &'a FontRef<'a>,
    scale: PxScale,
    unit: f64,
    legend: Vec<(LegendMark, &'static str)>,
    lines: Vec<String>,
}

#[derive(Clone, Copy)]
enum LegendMark {
    Detection,
    Outlier,
    Reprojection,
    FixedOffset,
}

impl<'a> Panel<'a> {
    fn new(outcome: &OverlayOutcome, font: &'a FontRef<'a>, unit: f64) -> Self {
        let mut legend = vec![
            (LegendMark::Detection, "detected keypoint"),
            (
                LegendMark::Reprojection,
                "model reprojected (dual-object solve)",
            ),
        ];
        let any_outlier = [&outcome.probe, &outcome.drogue]
            .iter()
            .any(|o| o.keypoints.iter().any(|k| k.inlier == Some(false)));
        if any_outlier {
            legend.insert(1, (LegendMark::Outlier, "keypoint gated out as outlier"));
        }
        if matches!(outcome.fixed_offset, FixedOffsetLayer::Shown(_)) {
            legend.push((
                LegendMark::FixedOffset,
                "probe with nominal mount (fixed offset)",
            ));
        }
        Self {
            font,
            scale: text_scale(unit),
            unit,
            legend,
            lines: overlay_text_lines(outcome),
        }
    }

    fn line_height(&self) -> f64 {
        f64::from(self.scale.y) * 1.35
    }

    fn padding(&self) -> f64 {
        8.0 * self.unit
    }

    fn swatch_width(&self) -> f64 {
        34.0 * self.unit
    }

    fn text_width(&self, text: &str) -> f64 {
        f64::from(text_size(self.scale, self.font, text).0)
    }

    /// Width and height of the box (px).
    fn size(&self) -> (f64, f64) {
        let legend_w = self
            .legend
            .iter()
            .map(|(_, label)| self.swatch_width() + self.text_width(label))
            .fold(0.0, f64::max);
        let lines_w = self
            .lines
            .iter()
            .map(|l| self.text_width(l))
            .fold(0.0, f64::max);
        let rows = (self.legend.len() + self.lines.len()) as f64;
        let pad = self.padding();
        (
            legend_w.max(lines_w) + 2.0 * pad,
            rows * self.line_height() + 3.0 * pad,
        )
    }

    fn draw(&self, img: &mut RgbImage, area: &Area) {
        paint::rect(
            img,
            area.x,
            area.y,
            area.x + area.w,
            area.y + area.h,
            PANEL,
            PANEL_ALPHA,
        );
        let pad = self.padding();
        let lh = self.line_height();
        let mut y = area.y + pad;
        let marks = Marks { unit: self.unit };
        for (mark, label) in &self.legend {
            let centre = Px::new(
                area.x + pad + 0.5 * self.swatch_width() - 4.0 * self.unit,
                y + 0.5 * lh,
            );
            self.swatch(img, &marks, *mark, centre);
            draw_text(
                img,
                self.font,
                self.scale,
                area.x + pad + self.swatch_width(),
                y,
                label,
            );
            y += lh;
        }
        y += pad;
        for line in &self.lines {
            draw_text(img, self.font, self.scale, area.x + pad, y, line);
            y += lh;
        }
    }

    fn swatch(&self, img: &mut RgbImage, marks: &Marks, mark: LegendMark, centre: Px) {
        match mark {
            LegendMark::Detection => marks.detection(img, centre, false),
            LegendMark::Outlier => marks.detection(img, centre, true),
            LegendMark::Reprojection => marks.cross(img, centre, REPROJECTION_COLOUR),
            LegendMark::FixedOffset => {
                let left = centre - Px::new(12.0 * self.unit, 0.0);
                marks.dashed(img, left, centre, FIXED_OFFSET_COLOUR);
                marks.diamond(
                    img,
                    centre + Px::new(4.0 * self.unit, 0.0),
                    FIXED_OFFSET_COLOUR,
                );
            }
        }
    }
}

/// A magnified view centred between the probe reference point as solved and as a fixed-offset
/// pipeline puts it.
struct Inset {
    centre: Px,
    /// The reference point as solved, and its name.
    observed: Px,
    reference_id: String,
    /// Side (px) and magnification (a whole number, 2 to 8).
    size: f64,
    zoom: f64,
    label: String,
}

impl Inset {
    /// Writes the reference point's name beside its solved position, on a dark tag.
    fn name_reference(
        &self,
        canvas: &mut RgbImage,
        view: &View,
        font: &FontRef,
        scale: PxScale,
        unit: f64,
    ) {
        let at = view.map(self.observed);
        let (w, h) = text_size(scale, font, &self.reference_id);
        let x = at.x + RING_RADIUS * 1.6 * unit;
        let y = at.y - RING_RADIUS * 1.6 * unit - f64::from(h);
        paint::rect(
            canvas,
            x - 3.0,
            y,
            x + f64::from(w) + 3.0,
            y + f64::from(h) + 3.0,
            PANEL,
            PANEL_ALPHA,
        );
        draw_text(canvas, font, scale, x, y, &self.reference_id);
    }

    /// The inset of the reference point's displacement, when both ends are known.
    fn of(outcome: &OverlayOutcome, unit: f64) -> Option<Self> {
        let FixedOffsetLayer::Shown(fixed) = &outcome.fixed_offset else {
            return None;
        };
        let shift = fixed.points.iter().find(|s| s.id == fixed.reference_id)?;
        let (a, b) = (shift.observed_px?, shift.fixed_offset_px?);
        let size = (INSET_SIZE * unit).round();
        let span = (b - a).norm().max(f64::EPSILON);
        let zoom = (INSET_SPAN * size / span).round().clamp(MIN_ZOOM, MAX_ZOOM);
        Some(Self {
            centre: (a + b) * 0.5,
            observed: a,
            size,
            zoom,
            label: format!("x{zoom:.0} around {}", fixed.reference_id),
            reference_id: fixed.reference_id.clone(),
        })
    }

    fn draw(
        &self,
        img: &mut RgbImage,
        outcome: &OverlayOutcome,
        font: &FontRef,
        unit: f64,
        area: &Area,
    ) {
        let n = self.size as u32;
        let half = Px::new(0.5 * self.size, 0.5 * self.size) / self.zoom;
        let view = View {
            origin: self.centre - half,
            zoom: self.zoom,
        };
        let frame = &outcome.frame_image;
        // Nearest frame pixel to each canvas pixel centre.
        let mut canvas = RgbImage::from_fn(n, n, |x, y| {
            let p = view.origin + Px::new(f64::from(x), f64::from(y)) / self.zoom;
            let (u, v) = (p.x.round(), p.y.round());
            let inside = u >= 0.0
                && v >= 0.0
                && u < f64::from(frame.width())
                && v < f64::from(frame.height());
            if inside {
                *frame.get_pixel(u as u32, v as u32)
            } else {
                Rgb(OUTSIDE)
            }
        });
        draw_layers(&mut canvas, outcome, unit, &view);
        let scale = text_scale(unit);
        self.name_reference(&mut canvas, &view, font, scale, unit);
        let strip = f64::from(scale.y) * 1.5;
        paint::rect(&mut canvas, 0.0, 0.0, self.size, strip, PANEL, PANEL_ALPHA);
        draw_text(
            &mut canvas,
            font,
            scale,
            6.0 * unit,
            0.15 * strip,
            &self.label,
        );
        let border = (STROKE * unit).ceil();
        paint::rect(
            img,
            area.x - border,
            area.y - border,
            area.x + area.w + border,
            area.y + area.h + border,
            HALO,
            1.0,
        );
        let (x0, y0) = (area.x.round() as u32, area.y.round() as u32);
        for (x, y, pixel) in canvas.enumerate_pixels() {
            if x0 + x < img.width() && y0 + y < img.height() {
                img.put_pixel(x0 + x, y0 + y, *pixel);
            }
        }
    }
}
