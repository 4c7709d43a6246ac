//! Plot primitives on top of the SVG writer: a figure with a title, a legend row and a grid of
//! panels; each panel has axes with round ticks and draws layers (markers, lines, estimate bands,
//! reference rules). Series are told apart by marker shape and line dash as well as by colour.

use super::scale::{Scale, Span};
use super::svg::{coord, Anchor, Stroke, Svg, TextStyle};

/// Colours of the Okabe-Ito palette (Okabe and Ito 2008, "Color Universal Design"), chosen to
/// stay distinguishable with the common colour-vision deficiencies.
pub mod colors {
    pub const BLACK: &str = "#000000";
    pub const ORANGE: &str = "#E69F00";
    pub const SKY: &str = "#56B4E9";
    pub const GREEN: &str = "#009E73";
    pub const BLUE: &str = "#0072B2";
    pub const VERMILLION: &str = "#D55E00";
    pub const PURPLE: &str = "#CC79A7";
    pub const GREY: &str = "#6E6E6E";
    pub(crate) const GRID: &str = "#E4E4E4";
    pub(crate) const FRAME: &str = "#9A9A9A";
    pub(crate) const SHADE: &str = "#F1F1F1";
}

/// Shape drawn at each point of a series.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Marker {
    Dot,
    Square,
    Triangle,
    /// A triangle pointing down (off-scale values below the axis).
    TriangleDown,
    Diamond,
    Cross,
}

impl Marker {
    /// Where each mark's path starts, relative to its centre, px.
    fn start_offset(self) -> (f64, f64) {
        match self {
            Marker::Dot | Marker::Square => (0.0, 0.0),
            Marker::Triangle => (0.0, -3.4),
            Marker::TriangleDown => (0.0, 3.4),
            Marker::Diamond => (0.0, -3.0),
            Marker::Cross => (-2.5, -2.5),
        }
    }

    /// The mark drawn from its start with relative commands, and where that leaves the pen
    /// relative to the start (a closed shape returns to it).
    fn shape(self) -> (&'static str, (f64, f64)) {
        match self {
            Marker::Dot | Marker::Square => ("h0", (0.0, 0.0)),
            Marker::Triangle => ("l3 5.2h-6z", (0.0, 0.0)),
            Marker::TriangleDown => ("l3-5.2h-6z", (0.0, 0.0)),
            Marker::Diamond => ("l3 3-3 3-3-3z", (0.0, 0.0)),
            Marker::Cross => ("l5 5m0-5l-5 5", (0.0, 5.0)),
        }
    }

    /// Side of the thinning cell for this mark, px: about its size.
    pub(crate) fn cell_px(self) -> f64 {
        match self {
            Marker::Dot | Marker::Square => 3.0,
            Marker::Triangle | Marker::TriangleDown | Marker::Diamond | Marker::Cross => 4.5,
        }
    }

    /// One path holding a mark at each centre (px): the first placed absolutely, the others by
    /// relative moves in tenths of a pixel, which keeps long series compact.
    fn path(self, centres: impl Iterator<Item = (f64, f64)>) -> String {
        let tenths = |v: f64| (v * 10.0).round() as i64;
        let (dx, dy) = self.start_offset();
        let (shape, (ex, ey)) = self.shape();
        let (ex, ey) = (tenths(ex), tenths(ey));
        let mut data = String::new();
        let mut pen: Option<(i64, i64)> = None;
        for (x, y) in centres {
            let start = (tenths(x + dx), tenths(y + dy));
            match pen {
                None => data.push_str(&format!(
                    "M{} {}",
                    coord(start.0 as f64 / 10.0),
                    coord(start.1 as f64 / 10.0)
                )),
                Some(p) => {
                    data.push_str(&format!("m{} {}", rel(start.0 - p.0), rel(start.1 - p.1)))
                }
            }
            data.push_str(shape);
            pen = Some((start.0 + ex, start.1 + ey));
        }
        data
    }

    fn draw(self, svg: &mut Svg, data: &str, color: &'static str) {
        match self {
            Marker::Dot => svg.stroked_path(data, &Stroke::solid(color, 3.4), true),
            Marker::Square => svg.stroked_path(data, &Stroke::solid(color, 3.0), false),
            Marker::Triangle | Marker::TriangleDown | Marker::Diamond => {
                svg.filled_path(data, color, 0.75)
            }
            Marker::Cross => svg.stroked_path(data, &Stroke::solid(color, 1.4), false),
        }
    }
}

/// A relative offset given in tenths of a pixel, as short as SVG allows.
fn rel(tenths: i64) -> String {
    let sign = if tenths < 0 { "-" } else { "" };
    let a = tenths.unsigned_abs();
    if a.is_multiple_of(10) {
        format!("{sign}{}", a / 10)
    } else {
        format!("{sign}{}.{}", a / 10, a % 10)
    }
}

/// Something drawn in a panel.
#[derive(Debug, Clone, PartialEq)]
pub enum Layer {
    /// Separate points, each with a marker.
    Points {
        points: Vec<(f64, f64)>,
        color: &'static str,
        marker: Marker,
    },
    /// Points joined by a line, with optional markers.
    Line {
        points: Vec<(f64, f64)>,
        stroke: Stroke,
        marker: Option<Marker>,
    },
    /// An estimate over an x stretch with its band `y ± half_width`.
    Band {
        x: (f64, f64),
        y: f64,
        half_width: f64,
        stroke: Stroke,
    },
    /// A horizontal reference line across the panel, labelled at its right end.
    HRule {
        y: f64,
        stroke: Stroke,
        label: Option<String>,
    },
    /// A vertical line across the panel, labelled at its top.
    VRule {
        x: f64,
        stroke: Stroke,
        label: Option<String>,
    },
    /// A light grey stretch of x across the panel (`hi` may be infinite: to the right edge),
    /// labelled inside its top left corner.
    Shade {
        x: (f64, f64),
        label: Option<String>,
    },
}

impl Layer {
    fn x_values(&self) -> Vec<f64> {
        match self {
            Layer::Points { points, .. } | Layer::Line { points, .. } => {
                points.iter().map(|p| p.0).collect()
            }
            Layer::Band { x, .. } => vec![x.0, x.1],
            Layer::HRule { .. } => Vec::new(),
            Layer::VRule { x, .. } => vec![*x],
            Layer::Shade { x, .. } => vec![x.0],
        }
    }

    fn y_values(&self) -> Vec<f64> {
        match self {
            Layer::Points { points, .. } | Layer::Line { points, .. } => {
                points.iter().map(|p| p.1).collect()
            }
            Layer::Band { y, half_width, .. } => vec![y - half_width, y + half_width],
            Layer::HRule { y, .. } => vec![*y],
            Layer::VRule { .. } | Layer::Shade { .. } => Vec::new(),
        }
    }

    /// Bands and rules need finite positions (points are filtered one by one).
    fn is_drawable(&self) -> bool {
        match self {
            Layer::Points { .. } | Layer::Line { .. } => true,
            Layer::Band {
                x, y, half_width, ..
            } => [x.0, x.1, *y, *half_width].iter().all(|v| v.is_finite()),
            Layer::HRule { y, .. } => y.is_finite(),
            Layer::VRule { x, .. } => x.is_finite(),
            Layer::Shade { x, .. } => x.0.is_finite() && !x.1.is_nan(),
        }
    }

    fn has_data(&self) -> bool {
        match self {
            Layer::Points { points, .. } | Layer::Line { points, .. } => !points.is_empty(),
            Layer::Band { .. } => true,
            Layer::HRule { .. } | Layer::VRule { .. } | Layer::Shade { .. } => false,
        }
    }
}

/// One legend item: a sample of the line, band and/or marker, and its label.
#[derive(Debug, Clone, PartialEq)]
pub struct LegendEntry {
    pub label: String,
    pub stroke: Option<Stroke>,
    pub marker: Option<(Marker, &'static str)>,
    /// Draw a band behind the line sample.
    pub band: bool,
}

impl LegendEntry {
    pub fn marker(label: &str, marker: Marker, color: &'static str) -> Self {
        Self {
            label: label.to_string(),
            stroke: None,
            marker: Some((marker, color)),
            band: false,
        }
    }

    pub fn line(label: &str, stroke: Stroke) -> Self {
        Self {
            label: label.to_string(),
            stroke: Some(stroke),
            marker: None,
            band: false,
        }
    }
}

/// One set of axes.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Panel {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub x_log: bool,
    pub y_log: bool,
    /// Fixed value spans; `None` takes the smallest and largest value drawn, padded.
    pub x_span: Option<Span>,
    pub y_span: Option<Span>,
    pub layers: Vec<Layer>,
    /// Shown in the middle of the panel when it has no data.
    pub empty_note: String,
    /// A short note right-aligned below the frame (e.g. how many values lie beyond the axis).
    pub note: String,
}

/// A titled figure with a legend and a grid of panels.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    pub title: String,
    pub width: f64,
    pub columns: usize,
    pub panel_height: f64,
    pub legend: Vec<LegendEntry>,
    pub panels: Vec<Panel>,
}

const MARGIN: f64 = 12.0;
const TITLE_BAND: f64 = 34.0;
const LEGEND_ROW: f64 = 22.0;
const AXIS_LEFT: f64 = 68.0;
const AXIS_RIGHT: f64 = 14.0;
const PANEL_TOP: f64 = 24.0;
const AXIS_BOTTOM: f64 = 44.0;
const TICK_SIZE: f64 = 11.0;
const LABEL_SIZE: f64 = 12.0;

/// Width of the data area of each panel of a figure `width` wide with `columns` panels a row;
/// callers thin long series to this many pixel columns.
pub fn plot_area_width(width: f64, columns: usize) -> f64 {
    let cell = (width - 2.0 * MARGIN) / columns.max(1) as f64;
    (cell - AXIS_LEFT - AXIS_RIGHT).max(10.0)
}

/// Height of the data area of a panel `panel_height` tall.
pub fn plot_area_height(panel_height: f64) -> f64 {
    (panel_height - PANEL_TOP - AXIS_BOTTOM).max(10.0)
}

/// Rough text width for layout (no font metrics are available without a font file).
fn text_width(text: &str, size: f64) -> f64 {
    text.chars().count() as f64 * size * 0.56
}

impl Figure {
    /// Draws the figure as an SVG document.
    pub fn render(&self) -> String {
        let rows = self.panels.len().div_ceil(self.columns.max(1)).max(1);
        let legend_lines = self.legend_lines();
        let top = TITLE_BAND + legend_lines.len() as f64 * LEGEND_ROW;
        let height = top + rows as f64 * self.panel_height + MARGIN;
        let mut svg = Svg::new(self.width, height, &self.title);
        let mut title = TextStyle::plain(16.0, Anchor::Start);
        title.bold = true;
        svg.text((MARGIN, 24.0), &self.title, &title);
        for (i, line) in legend_lines.iter().enumerate() {
            self.draw_legend_line(&mut svg, line, TITLE_BAND + i as f64 * LEGEND_ROW + 14.0);
        }
        let cell_w = (self.width - 2.0 * MARGIN) / self.columns.max(1) as f64;
        for (i, panel) in self.panels.iter().enumerate() {
            let (row, col) = (i / self.columns.max(1), i % self.columns.max(1));
            let origin = (
                MARGIN + col as f64 * cell_w,
                top + row as f64 * self.panel_height,
            );
            draw_panel(&mut svg, panel, origin, (cell_w, self.panel_height));
        }
        svg.finish()
    }

    /// Legend entries split into rows that fit the width.
    fn legend_lines(&self) -> Vec<Vec<&LegendEntry>> {
        let mut lines: Vec<Vec<&LegendEntry>> = Vec::new();
        let mut used = f64::INFINITY;
        for entry in &self.legend {
            let w = legend_entry_width(entry);
            if used + w > self.width - 2.0 * MARGIN {
                lines.push(Vec::new());
                used = 0.0;
            }
            if let Some(line) = lines.last_mut() {
                line.push(entry);
            }
            used += w;
        }
        lines
    }

    fn draw_legend_line(&self, svg: &mut Svg, entries: &[&LegendEntry], y: f64) {
        let mut x = MARGIN;
        for entry in entries {
            draw_legend_sample(svg, entry, (x, y));
            let text = TextStyle::plain(LABEL_SIZE, Anchor::Start);
            svg.text((x + 34.0, y + 4.0), &entry.label, &text);
            x += legend_entry_width(entry);
        }
    }
}

fn legend_entry_width(entry: &LegendEntry) -> f64 {
    34.0 + text_width(&entry.label, LABEL_SIZE) + 22.0
}

fn draw_legend_sample(svg: &mut Svg, entry: &LegendEntry, (x, y): (f64, f64)) {
    if entry.band {
        let color = entry.stroke.map_or(colors::GREY, |s| s.color);
        let data = format!("M{x} {}h28v12h-28z", coord(y - 6.0));
        svg.filled_path(&data, color, 0.2);
    }
    if let Some(stroke) = &entry.stroke {
        svg.line((x, y), (x + 28.0, y), stroke);
    }
    if let Some((marker, color)) = entry.marker {
        marker.draw(svg, &marker.path(std::iter::once((x + 14.0, y))), color);
    }
}

/// The scales of a panel whose data area is `area` = (left, top, width, height).
fn panel_scales(panel: &Panel, area: (f64, f64, f64, f64)) -> (Scale, Scale) {
    let xs = panel.layers.iter().flat_map(Layer::x_values);
    let x_span = panel
        .x_span
        .or_else(|| {
            if panel.x_log {
                auto_y_span(xs, true)
            } else {
                Span::of(xs).map(|s| s.padded(0.01))
            }
        })
        .unwrap_or(Span { lo: 0.0, hi: 1.0 });
    let ys = panel.layers.iter().flat_map(Layer::y_values);
    let y_span = panel.y_span.or_else(|| auto_y_span(ys, panel.y_log));
    let y_span = y_span.unwrap_or(if panel.y_log {
        Span { lo: 0.1, hi: 10.0 }
    } else {
        Span { lo: 0.0, hi: 1.0 }
    });
    let x = Scale {
        span: x_span,
        px_lo: area.0,
        px_hi: area.0 + area.2,
        log: panel.x_log,
    };
    let y = Scale {
        span: y_span,
        px_lo: area.1 + area.3,
        px_hi: area.1,
        log: panel.y_log,
    };
    (x, y)
}

fn auto_y_span(values: impl Iterator<Item = f64>, log: bool) -> Option<Span> {
    if log {
        let span = Span::of(values.filter(|v| *v > 0.0))?;
        Some(span.padded_log(span.hi * 1e-6))
    } else {
        Span::of(values).map(|s| s.padded(0.06))
    }
}

fn draw_panel(svg: &mut Svg, panel: &Panel, origin: (f64, f64), size: (f64, f64)) {
    let area = (
        origin.0 + AXIS_LEFT,
        origin.1 + PANEL_TOP,
        size.0 - AXIS_LEFT - AXIS_RIGHT,
        size.1 - PANEL_TOP - AXIS_BOTTOM,
    );
    let (x, y) = panel_scales(panel, area);
    let mut title = TextStyle::plain(13.0, Anchor::Start);
    title.bold = true;
    svg.text((area.0, origin.1 + 16.0), &panel.title, &title);
    draw_axes(svg, panel, &x, &y, area);
    if panel.layers.iter().any(Layer::has_data) {
        // Labels above the frame must not run into the panel title.
        let title_end = area.0 + text_width(&panel.title, 13.0) * 1.1 + 8.0;
        draw_note(svg, &panel.note, area);
        for layer in &panel.layers {
            draw_layer(svg, layer, (&x, &y), (title_end, area.0 + area.2));
        }
    } else {
        let note = TextStyle::plain(LABEL_SIZE, Anchor::Middle);
        let centre = (area.0 + area.2 / 2.0, area.1 + area.3 / 2.0);
        svg.text(centre, &panel.empty_note, &note);
    }
    let frame = Stroke::solid(colors::FRAME, 1.0);
    svg.rect((area.0, area.1), (area.2, area.3), "none", Some(&frame));
}

fn draw_axes(svg: &mut Svg, panel: &Panel, x: &Scale, y: &Scale, area: (f64, f64, f64, f64)) {
    let grid = Stroke::solid(colors::GRID, 1.0);
    let bottom = area.1 + area.3;
    let x_ticks = x.ticks(((area.2 / 90.0) as usize).clamp(2, 10));
    for (t, label) in x_ticks.iter().zip(x.tick_labels(&x_ticks)) {
        let px = x.px(*t);
        svg.line((px, area.1), (px, bottom), &grid);
        let style = TextStyle::plain(TICK_SIZE, Anchor::Middle);
        svg.text((px, bottom + 15.0), &label, &style);
    }
    let y_ticks = y.ticks(((area.3 / 45.0) as usize).clamp(2, 8));
    for (t, label) in y_ticks.iter().zip(y.tick_labels(&y_ticks)) {
        let py = y.px(*t);
        svg.line((area.0, py), (area.0 + area.2, py), &grid);
        let style = TextStyle::plain(TICK_SIZE, Anchor::End);
        svg.text((area.0 - 5.0, py + 4.0), &label, &style);
    }
    let label = TextStyle::plain(LABEL_SIZE, Anchor::Middle);
    if !panel.x_label.is_empty() {
        svg.text(
            (area.0 + area.2 / 2.0, bottom + 34.0),
            &panel.x_label,
            &label,
        );
    }
    let mut vertical = label;
    vertical.vertical = true;
    let at = (area.0 - AXIS_LEFT + 16.0, area.1 + area.3 / 2.0);
    svg.text(at, &panel.y_label, &vertical);
}

/// The panel's note below the right end of the frame, on the line of the x axis label (which
/// is centred and short, so the two never meet on a panel of a few hundred pixels).
fn draw_note(svg: &mut Svg, note: &str, area: (f64, f64, f64, f64)) {
    if note.is_empty() {
        return;
    }
    let mut style = TextStyle::plain(TICK_SIZE, Anchor::End);
    style.color = colors::GREY;
    svg.text((area.0 + area.2, area.1 + area.3 + 34.0), note, &style);
}

/// Draws one layer; labels above the frame stay within `free` = (title end, note start), px.
fn draw_layer(svg: &mut Svg, layer: &Layer, (x, y): (&Scale, &Scale), free: (f64, f64)) {
    if !layer.is_drawable() {
        return;
    }
    match layer {
        Layer::Points {
            points,
            color,
            marker,
        } => draw_markers(svg, points, *marker, color, x, y),
        Layer::Shade { x: stretch, label } => draw_shade(svg, *stretch, label.as_deref(), (x, y)),
        Layer::Line {
            points,
            stroke,
            marker,
        } => {
            svg.stroked_path(&polyline(points, x, y), stroke, true);
            if let Some(m) = marker {
                draw_markers(svg, points, *m, stroke.color, x, y);
            }
        }
        Layer::Band {
            x: (x0, x1),
            y: mid,
            half_width,
            stroke,
        } => draw_band(svg, (*x0, *x1), *mid, *half_width, stroke, (x, y)),
        Layer::HRule {
            y: v,
            stroke,
            label,
        } => {
            let py = y.px(*v);
            svg.line((x.px_lo, py), (x.px_hi, py), stroke);
            if let Some(label) = label {
                let style = TextStyle::plain(TICK_SIZE, Anchor::End);
                svg.text((x.px_hi - 4.0, py - 4.0), label, &style);
            }
        }
        Layer::VRule {
            x: v,
            stroke,
            label,
        } => {
            let px = x.px(*v);
            svg.line((px, y.px_hi), (px, y.px_lo), stroke);
            if let Some(label) = label {
                draw_rule_label(svg, label, px, y.px_hi - 4.0, free);
            }
        }
    }
}

/// The label of a vertical line, above the frame: right of the line, or left of it when there
/// is no room on the right; left out where it would cover the panel title or note (`free`
/// is the stretch between them, px).
fn draw_rule_label(svg: &mut Svg, label: &str, px: f64, top: f64, (left, right): (f64, f64)) {
    let width = text_width(label, TICK_SIZE);
    let placement = if px + 3.0 + width <= right {
        Some((px + 3.0, Anchor::Start, px + 3.0))
    } else if px - 3.0 <= right {
        Some((px - 3.0, Anchor::End, px - 3.0 - width))
    } else {
        None
    };
    if let Some((at, anchor, left_end)) = placement {
        if left_end >= left {
            svg.text((at, top), label, &TextStyle::plain(TICK_SIZE, anchor));
        }
    }
}

fn draw_band(
    svg: &mut Svg,
    (x0, x1): (f64, f64),
    mid: f64,
    half_width: f64,
    stroke: &Stroke,
    (x, y): (&Scale, &Scale),
) {
    let (left, right) = (x.px(x0), x.px(x1));
    let (upper, lower) = (y.px(mid + half_width), y.px(mid - half_width));
    let data = format!(
        "M{} {}H{}V{}H{}z",
        coord(left),
        coord(upper),
        coord(right),
        coord(lower),
        coord(left)
    );
    svg.filled_path(&data, stroke.color, 0.2);
    let py = y.px(mid);
    svg.line((left, py), (right, py), stroke);
}

fn draw_shade(svg: &mut Svg, (lo, hi): (f64, f64), label: Option<&str>, (x, y): (&Scale, &Scale)) {
    let (left, right) = (x.px(lo), x.px(hi.min(x.span.hi)));
    if right - left < 1.0 {
        return;
    }
    svg.rect(
        (left, y.px_hi),
        (right - left, y.px_lo - y.px_hi),
        colors::SHADE,
        None,
    );
    if let Some(label) = label {
        if text_width(label, TICK_SIZE) + 8.0 <= right - left {
            let mut style = TextStyle::plain(TICK_SIZE, Anchor::Start);
            style.color = colors::GREY;
            svg.text((left + 4.0, y.px_hi + 14.0), label, &style);
        }
    }
}

fn polyline(points: &[(f64, f64)], x: &Scale, y: &Scale) -> String {
    let mut data = String::with_capacity(points.len() * 12);
    for &(px, py) in points {
        if !(px.is_finite() && py.is_finite()) {
            continue;
        }
        data.push(if data.is_empty() { 'M' } else { 'L' });
        data.push_str(&coord(x.px(px)));
        data.push(' ');
        data.push_str(&coord(y.px(py)));
    }
    data
}

/// Marks at each point; points beyond the y axis are drawn as triangles on the frame's top
/// or bottom edge (pointing outwards), so that they are seen without stretching the axis.
fn draw_markers(
    svg: &mut Svg,
    points: &[(f64, f64)],
    marker: Marker,
    color: &'static str,
    x: &Scale,
    y: &Scale,
) {
    let finite = || points.iter().filter(|p| p.0.is_finite() && p.1.is_finite());
    let (lo, hi) = (y.span.lo, y.span.hi);
    let inside = finite()
        .filter(|p| p.1 >= lo && p.1 <= hi)
        .map(|&(px, py)| (x.px(px), y.px(py)));
    marker.draw(svg, &marker.path(inside), color);
    // The triangle's apex sits on the edge.
    let above = finite()
        .filter(|p| p.1 > hi)
        .map(|&(px, _)| (x.px(px), y.px_hi + 3.4));
    Marker::Triangle.draw(svg, &Marker::Triangle.path(above), color);
    let below = finite()
        .filter(|p| p.1 < lo)
        .map(|&(px, _)| (x.px(px), y.px_lo - 3.4));
    Marker::TriangleDown.draw(svg, &Marker::TriangleDown.path(below), color);
}

#[cfg(test)]
mod tests {
    use super::*;

    fn figure(layers: Vec<Layer>) -> Figure {
        Figure {
            title: "t".into(),
            width: 600.0,
            columns: 1,
            panel_height: 200.0,
            legend: vec![LegendEntry::marker("points", Marker::Dot, colors::BLUE)],
            panels: vec![Panel {
                title: "p".into(),
                y_label: "y".into(),
                layers,
                empty_note: "nothing here".into(),
                ..Panel::default()
            }],
        }
    }

    #[test]
    fn empty_panels_say_so() {
        let svg = figure(vec![]).render();
        assert!(svg.contains(">nothing here</text>"));
    }

    #[test]
    fn rendering_is_deterministic_and_marks_every_point() {
        let points = vec![(0.0, 1.0), (1.0, 2.0), (2.0, 0.5)];
        let layers = vec![
            Layer::Points {
                points,
                color: colors::BLUE,
                marker: Marker::Dot,
            },
            Layer::HRule {
                y: 1.5,
                stroke: Stroke::dashed(colors::BLACK, 1.0, "6 4"),
                label: Some("limit".into()),
            },
        ];
        let a = figure(layers.clone()).render();
        assert_eq!(a, figure(layers).render());
        assert_eq!(
            a.matches("h0").count(),
            3 + 1,
            "three points and the legend sample"
        );
        assert!(a.contains(">limit</text>"));
    }
}
