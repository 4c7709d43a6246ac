//! The audit's SVG plots, drawn from the outcome alone: mount deviation per axis, the per-frame
//! consistency statistic d2, the fixed-offset error against range and time, and the reprojection
//! fit. Long series are thinned to the extremes of each pixel column before drawing.

use std::collections::BTreeMap;

use crate::commands::audit::{AuditOutcome, FixedOffset, FrameRow};

use super::chart::{
    colors, plot_area_height, plot_area_width, Figure, Layer, LegendEntry, Marker, Panel,
};
use super::decimate::Raster;
use super::format::fixed;
use super::scale::Span;
use super::svg::Stroke;

/// Width of every audit plot, px (the HTML report scales them to the page).
pub const PLOT_WIDTH: f64 = 1000.0;

/// All plots of one audit, rendered once and shared by the SVG files and the HTML report.
#[derive(Debug, Clone, PartialEq)]
pub struct AuditPlots {
    pub deviation: String,
    pub d2: String,
    pub fixed_offset: String,
    pub fit: String,
}

impl AuditPlots {
    pub fn render(outcome: &AuditOutcome) -> Self {
        Self {
            deviation: deviation_svg(outcome),
            d2: d2_svg(outcome),
            fixed_offset: fixed_offset_svg(outcome),
            fit: fit_svg(outcome),
        }
    }
}

const FRAME_POINTS: &str = colors::BLUE;
const ESTIMATE: Stroke = Stroke::solid(colors::VERMILLION, 2.0);
const CHANGE: Stroke = Stroke::dashed(colors::PURPLE, 1.6, "7 4");
const ALARM: Stroke = Stroke::dashed(colors::ORANGE, 1.6, "2 3");
const LIMIT: Stroke = Stroke::dashed(colors::BLACK, 1.4, "9 4");
const TIME_LABEL: &str = "time (s)";
const DEVIATION_PANEL_HEIGHT: f64 = 200.0;
const SINGLE_PANEL_HEIGHT: f64 = 330.0;
const ERROR_PANEL_HEIGHT: f64 = 320.0;

/// Axis names and units of the six deviation components, in the order of `FrameRow::deviation`.
const DEVIATION_AXES: [(&str, &str); 6] = [
    ("x (forward)", "mm"),
    ("y (right)", "mm"),
    ("z (down)", "mm"),
    ("yaw", "deg"),
    ("pitch", "deg"),
    ("roll", "deg"),
];

fn time_span(rows: &[FrameRow]) -> Option<Span> {
    Span::of(rows.iter().map(|r| r.time_s))
}

/// Where a series is drawn: the x span shared by the figure, the data area size in pixels
/// and whether the y axis is logarithmic.
#[derive(Debug, Clone, Copy)]
struct Canvas {
    x_span: Option<Span>,
    /// The panel's fixed y span, when it has one (values beyond are drawn on its edge).
    y_span: Option<Span>,
    size_px: (f64, f64),
    log_y: bool,
}

impl Canvas {
    fn new(x_span: Option<Span>, columns: usize, panel_height: f64, log_y: bool) -> Self {
        let size_px = (
            plot_area_width(PLOT_WIDTH, columns),
            plot_area_height(panel_height),
        );
        Self {
            x_span,
            y_span: None,
            size_px,
            log_y,
        }
    }

    fn with_y_span(self, y_span: Option<Span>) -> Self {
        Self { y_span, ..self }
    }
}

/// Most marks one series may draw: past this the thinning cells grow, so a huge session with
/// noise filling its whole panel still gives a file of a few hundred kilobytes.
const MARK_BUDGET: usize = 6000;

/// One series thinned to a mark per small cell of the data area (passes over the rows: the
/// smallest and largest value first, then the cells, again with larger cells if over budget).
/// With a fixed y span the cells cover that span, and the values beyond it (drawn on the edge)
/// are thinned on their own so that they never hide a value inside.
fn thinned(
    rows: &[FrameRow],
    canvas: Canvas,
    marker: Marker,
    x: impl Fn(&FrameRow) -> Option<f64>,
    y: impl Fn(&FrameRow) -> Option<f64>,
) -> Vec<(f64, f64)> {
    let pairs = || rows.iter().filter_map(|r| Some((x(r)?, y(r)?)));
    let ys = pairs().map(|p| p.1).filter(|v| !canvas.log_y || *v > 0.0);
    let (Some(x_span), Some(y_span)) = (canvas.x_span, canvas.y_span.or_else(|| Span::of(ys)))
    else {
        return Vec::new();
    };
    let inside = |v: f64| v >= y_span.lo && v <= y_span.hi;
    let mut cell_px = marker.cell_px();
    loop {
        let grid = || Raster::new(x_span, y_span, canvas.log_y, canvas.size_px, cell_px);
        let (mut within, mut beyond) = (grid(), grid());
        for (px, py) in pairs() {
            let raster = if inside(py) { &mut within } else { &mut beyond };
            raster.push(px, py);
        }
        if within.len() + beyond.len() <= MARK_BUDGET {
            let mut points = within.into_points();
            points.extend(beyond.into_points());
            return points;
        }
        // Cells scale with the square root of the excess (the marks fill an area).
        cell_px *= ((within.len() + beyond.len()) as f64 / MARK_BUDGET as f64).sqrt() * 1.05;
    }
}

/// Change points (and the online alarm) as vertical lines; labelled when `label` is set.
fn event_rules(outcome: &AuditOutcome, label: bool) -> Vec<Layer> {
    let mut rules: Vec<Layer> = outcome
        .change_points
        .iter()
        .map(|cp| Layer::VRule {
            x: cp.time_s,
            stroke: CHANGE,
            label: label.then(|| format!("change at frame {}", cp.frame)),
        })
        .collect();
    if let Some(alarm) = &outcome.online_alarm {
        rules.push(Layer::VRule {
            x: alarm.time_s,
            stroke: ALARM,
            label: None,
        });
    }
    rules
}

fn event_legend(outcome: &AuditOutcome) -> Vec<LegendEntry> {
    let mut legend = Vec::new();
    if !outcome.change_points.is_empty() {
        legend.push(LegendEntry::line("change point", CHANGE));
    }
    if outcome.online_alarm.is_some() {
        legend.push(LegendEntry::line("online alarm", ALARM));
    }
    legend
}

/// (a) Mount deviation against time, one panel per axis, with segment estimates and bands.
pub fn deviation_svg(outcome: &AuditOutcome) -> String {
    let reference = if outcome.inputs.nominal_mount.is_some() {
        "nominal"
    } else {
        "first segment"
    };
    let mut legend = vec![
        LegendEntry::marker("per frame", Marker::Dot, FRAME_POINTS),
        LegendEntry {
            band: true,
            ..LegendEntry::line("segment estimate with 95% interval", ESTIMATE)
        },
    ];
    legend.extend(event_legend(outcome));
    let span = time_span(&outcome.rows);
    let canvas = Canvas::new(span, 2, DEVIATION_PANEL_HEIGHT, false);
    // Row-major grid: translations on the left, rotations on the right.
    let order = [0, 3, 1, 4, 2, 5];
    let panels: Vec<Panel> = order
        .iter()
        .enumerate()
        .map(|(slot, &axis)| deviation_panel(outcome, axis, slot, canvas))
        .collect();
    if panels.iter().any(|p| !p.note.is_empty()) {
        legend.push(LegendEntry::marker(
            "frame beyond the axis (on its edge)",
            Marker::Triangle,
            FRAME_POINTS,
        ));
    }
    Figure {
        title: format!("Mount deviation from the {reference}"),
        width: PLOT_WIDTH,
        columns: 2,
        panel_height: DEVIATION_PANEL_HEIGHT,
        legend,
        panels,
    }
    .render()
}

fn deviation_panel(outcome: &AuditOutcome, axis: usize, slot: usize, canvas: Canvas) -> Panel {
    let (name, unit) = DEVIATION_AXES[axis];
    let y_span = deviation_y_span(outcome, axis);
    let canvas = canvas.with_y_span(y_span);
    let points = thinned(
        &outcome.rows,
        canvas,
        Marker::Dot,
        |r| Some(r.time_s),
        |r| r.deviation.map(|d| d[axis]),
    );
    let mut layers = vec![Layer::Points {
        points,
        color: FRAME_POINTS,
        marker: Marker::Dot,
    }];
    for segment in &outcome.segments {
        let dev = &segment.mount_deviation;
        let (value, half) = if axis < 3 {
            (dev.translation_mm[axis], dev.translation_ci95_mm[axis])
        } else {
            (dev.rotation_deg[axis - 3], dev.rotation_ci95_deg[axis - 3])
        };
        layers.push(Layer::Band {
            x: (segment.first_time_s, segment.last_time_s),
            y: value,
            half_width: half,
            stroke: ESTIMATE,
        });
    }
    layers.extend(event_rules(outcome, slot < 2));
    let beyond = y_span.map_or(0, |span| {
        let outside = |v: &f64| *v < span.lo || *v > span.hi;
        outcome
            .rows
            .iter()
            .filter_map(|r| r.deviation.map(|d| d[axis]))
            .filter(outside)
            .count()
    });
    Panel {
        title: format!("{name}, {unit}"),
        y_span,
        note: match beyond {
            0 => String::new(),
            1 => "1 frame beyond the axis".into(),
            n => format!("{n} frames beyond the axis"),
        },
        x_label: if slot >= 4 {
            TIME_LABEL.into()
        } else {
            String::new()
        },
        y_label: unit.into(),
        x_span: canvas.x_span.map(|s| s.padded(0.01)),
        layers,
        empty_note: "no solved frames".into(),
        ..Panel::default()
    }
}

/// How far outside a segment's quartiles a frame may lie and still set the axis, in
/// interquartile ranges: Tukey's "far out" fence (Tukey 1977, Exploratory Data Analysis),
/// about 4.7 standard deviations for Gaussian scatter, so ordinary noise is never cut.
const FAR_OUT_IQR: f64 = 3.0;

/// The y span of one deviation axis: each segment's estimate band and the frames within the
/// far-out fences of their own segment, padded. A few wild frames (a mis-detected keypoint
/// can throw one frame's mount by decimetres) would otherwise squash every estimate and band
/// into one line; the frames beyond are drawn on the frame's edge and counted. Layout only.
fn deviation_y_span(outcome: &AuditOutcome, axis: usize) -> Option<Span> {
    let mut by_segment: BTreeMap<Option<u32>, Vec<f64>> = BTreeMap::new();
    for r in &outcome.rows {
        if let Some(v) = r.deviation.map(|d| d[axis]).filter(|v| v.is_finite()) {
            by_segment.entry(r.segment).or_default().push(v);
        }
    }
    let kept = by_segment.into_values().flat_map(|mut values| {
        values.sort_by(f64::total_cmp);
        let rank = |q: f64| values[((q * values.len() as f64) as usize).min(values.len() - 1)];
        let (q1, q3) = (rank(0.25), rank(0.75));
        let reach = FAR_OUT_IQR * (q3 - q1);
        let (lo, hi) = (q1 - reach, q3 + reach);
        values.into_iter().filter(move |v| *v >= lo && *v <= hi)
    });
    let bands = outcome.segments.iter().flat_map(|s| {
        let dev = &s.mount_deviation;
        let (value, half) = if axis < 3 {
            (dev.translation_mm[axis], dev.translation_ci95_mm[axis])
        } else {
            (dev.rotation_deg[axis - 3], dev.rotation_ci95_deg[axis - 3])
        };
        [value - half, value + half]
    });
    Span::of(kept.chain(bands)).map(|s| s.padded(0.06))
}

/// (b) The per-frame consistency statistic d2 against time, with the frame threshold.
pub fn d2_svg(outcome: &AuditOutcome) -> String {
    let span = time_span(&outcome.rows);
    let canvas = Canvas::new(span, 1, SINGLE_PANEL_HEIGHT, true);
    let points = thinned(
        &outcome.rows,
        canvas,
        Marker::Dot,
        |r| Some(r.time_s),
        |r| r.d2,
    );
    let mut layers = vec![Layer::Points {
        points,
        color: FRAME_POINTS,
        marker: Marker::Dot,
    }];
    let mut legend = vec![LegendEntry::marker(
        "d2 of each frame",
        Marker::Dot,
        FRAME_POINTS,
    )];
    if let Some(nc) = &outcome.nominal_consistency {
        let label = format!(
            "frame threshold {} (6 dof, level {})",
            fixed(nc.frame_threshold_d2, 2),
            nc.frame_alpha
        );
        layers.push(Layer::HRule {
            y: nc.frame_threshold_d2,
            stroke: LIMIT,
            label: None,
        });
        legend.push(LegendEntry::line(&label, LIMIT));
    }
    layers.extend(event_rules(outcome, true));
    legend.extend(event_legend(outcome));
    let empty_note = if outcome.nominal_consistency.is_none() {
        "no nominal mount: the consistency test needs one"
    } else {
        "no frame was tested"
    };
    single_panel_figure(
        "Consistency with the nominal mount (d2 per frame, log scale)",
        legend,
        Panel {
            title: String::new(),
            x_label: TIME_LABEL.into(),
            y_label: "d2 (chi-square)".into(),
            y_log: true,
            x_span: span.map(|s| s.padded(0.01)),
            layers,
            empty_note: empty_note.into(),
            ..Panel::default()
        },
    )
}

fn single_panel_figure(title: &str, legend: Vec<LegendEntry>, panel: Panel) -> String {
    Figure {
        title: title.into(),
        width: PLOT_WIDTH,
        columns: 1,
        panel_height: SINGLE_PANEL_HEIGHT,
        legend,
        panels: vec![panel],
    }
    .render()
}

/// The error series of the fixed-offset plot: accessor, label, marker, colour.
type ErrorSeries = (
    fn(&FrameRow) -> Option<f64>,
    &'static str,
    Marker,
    &'static str,
);

const ERROR_SERIES: [ErrorSeries; 3] = [
    (
        |r| r.fixed_error_mm,
        "fixed-offset error, estimated (segment mount)",
        Marker::Dot,
        colors::BLUE,
    ),
    (
        |r| r.true_fixed_error_mm,
        "fixed-offset error against truth",
        Marker::Cross,
        colors::VERMILLION,
    ),
    (
        |r| r.true_dual_error_mm,
        "dual-object error against truth",
        Marker::Triangle,
        colors::GREEN,
    ),
];

/// (c) Fixed-offset error against range and against time, with the policy tolerance, on a
/// logarithmic axis (errors span from a fraction of a millimetre near contact to decimetres
/// far out). The tolerance applies within the contact range only: the range panel shades the
/// ranges beyond it and draws the tolerance up to it; the time panel shows the frames within it.
pub fn fixed_offset_svg(outcome: &AuditOutcome) -> String {
    let rows = &outcome.rows;
    let present: Vec<&ErrorSeries> = ERROR_SERIES
        .iter()
        .filter(|s| rows.iter().any(|r| s.0(r).is_some()))
        .collect();
    let mut legend: Vec<LegendEntry> = present
        .iter()
        .map(|s| LegendEntry::marker(s.1, s.2, s.3))
        .collect();
    let contact_m = outcome.fixed_offset.as_ref().map(|fo| fo.contact_range_m);
    let range_span = Span::of(rows.iter().filter_map(|r| r.range_m).chain(contact_m));
    let by_range = Canvas::new(range_span, 2, ERROR_PANEL_HEIGHT, true);
    let by_time = Canvas::new(time_span(rows), 2, ERROR_PANEL_HEIGHT, true);
    let by_range = error_layers(rows, &present, by_range, |r| r.range_m);
    // The time panel shows only the frames within the contact range.
    let near_time = move |r: &FrameRow| {
        let near = contact_m.is_none_or(|c| r.range_m.is_some_and(|m| m <= c));
        near.then_some(r.time_s)
    };
    let by_time = error_layers(rows, &present, by_time, near_time);
    let time_title = match contact_m {
        Some(c) => format!("against time, ranges up to {} m", fixed(c, 1)),
        None => "against time".into(),
    };
    let mut panels = [
        error_panel("against range", "probe-to-drogue range (m)", by_range),
        error_panel(&time_title, TIME_LABEL, by_time),
    ];
    panels[1].x_span = time_span(rows).map(|s| s.padded(0.01));
    if let Some(fo) = &outcome.fixed_offset {
        tolerance_layers(fo, &mut panels, &mut legend);
    }
    panels[1].layers.extend(event_rules(outcome, false));
    legend.extend(event_legend(outcome));
    Figure {
        title: "Probe-to-drogue vector error (log scale)".into(),
        width: PLOT_WIDTH,
        columns: 2,
        panel_height: ERROR_PANEL_HEIGHT,
        legend,
        panels: panels.into(),
    }
    .render()
}

/// The tolerance (up to the contact range in the range panel, across the time panel, which
/// shows only frames within it) and the shaded ranges beyond the contact range.
fn tolerance_layers(fo: &FixedOffset, panels: &mut [Panel; 2], legend: &mut Vec<LegendEntry>) {
    let tolerance = |from: f64, to: f64| Layer::Line {
        points: vec![(from, fo.tolerance_mm), (to, fo.tolerance_mm)],
        stroke: LIMIT,
        marker: None,
    };
    panels[0].layers.insert(
        0,
        Layer::Shade {
            x: (fo.contact_range_m, f64::INFINITY),
            label: Some("beyond contact range: no tolerance".into()),
        },
    );
    panels[0].layers.push(tolerance(0.0, fo.contact_range_m));
    panels[1].layers.push(Layer::HRule {
        y: fo.tolerance_mm,
        stroke: LIMIT,
        label: None,
    });
    let contact = Stroke::dashed(colors::GREY, 1.4, "2 3");
    panels[0].layers.push(Layer::VRule {
        x: fo.contact_range_m,
        stroke: contact,
        label: Some("contact range".into()),
    });
    legend.push(LegendEntry::line(
        &format!(
            "tolerance {} mm (applies within {} m)",
            fixed(fo.tolerance_mm, 1),
            fixed(fo.contact_range_m, 1)
        ),
        LIMIT,
    ));
    legend.push(LegendEntry::line("contact range", contact));
}

fn error_layers(
    rows: &[FrameRow],
    series: &[&ErrorSeries],
    canvas: Canvas,
    x: impl Fn(&FrameRow) -> Option<f64> + Copy,
) -> Vec<Layer> {
    // Drawn in reverse so that the first series (dots, the smallest marks) ends on top.
    series
        .iter()
        .rev()
        .map(|s| Layer::Points {
            points: thinned(rows, canvas, s.2, x, s.0),
            color: s.3,
            marker: s.2,
        })
        .collect()
}

fn error_panel(title: &str, x_label: &str, layers: Vec<Layer>) -> Panel {
    Panel {
        title: title.into(),
        x_label: x_label.into(),
        y_label: "error (mm)".into(),
        y_log: true,
        layers,
        empty_note: "no nominal mount and no truth: nothing to compare".into(),
        ..Panel::default()
    }
}

/// (d) Reprojection fit (chi-square per degree of freedom) of both objects against time.
pub fn fit_svg(outcome: &AuditOutcome) -> String {
    let rows = &outcome.rows;
    let span = time_span(rows);
    let canvas = Canvas::new(span, 1, SINGLE_PANEL_HEIGHT, true);
    let probe = thinned(
        rows,
        canvas,
        Marker::Dot,
        |r| Some(r.time_s),
        |r| r.probe_fit,
    );
    let drogue = thinned(
        rows,
        canvas,
        Marker::Diamond,
        |r| Some(r.time_s),
        |r| r.drogue_fit,
    );
    let unity = Stroke::dashed(colors::BLACK, 1.4, "2 3");
    let mut legend = vec![
        LegendEntry::marker("probe", Marker::Dot, colors::BLUE),
        LegendEntry::marker("drogue", Marker::Diamond, colors::VERMILLION),
        LegendEntry::line("1: the stated pixel sigma holds", unity),
    ];
    // The probe's dots go on top of the drogue's larger diamonds.
    let mut layers = vec![
        Layer::Points {
            points: drogue,
            color: colors::VERMILLION,
            marker: Marker::Diamond,
        },
        Layer::Points {
            points: probe,
            color: colors::BLUE,
            marker: Marker::Dot,
        },
        Layer::HRule {
            y: 1.0,
            stroke: unity,
            label: None,
        },
    ];
    let sigma = &outcome.pixel_sigma;
    if let Some(estimated) = sigma.estimated {
        let level = (estimated / sigma.assumed).powi(2);
        let stroke = Stroke::dashed(colors::GREEN, 2.0, "10 3 2 3");
        legend.push(LegendEntry::line(
            &format!("(estimated / stated sigma)\u{b2} = {}", fixed(level, 2)),
            stroke,
        ));
        layers.push(Layer::HRule {
            y: level,
            stroke,
            label: None,
        });
    }
    single_panel_figure(
        "Reprojection fit (chi-square per degree of freedom, log scale)",
        legend,
        Panel {
            x_label: TIME_LABEL.into(),
            y_label: "chi-square / dof".into(),
            y_log: true,
            x_span: span.map(|s| s.padded(0.01)),
            layers,
            empty_note: "no solved poses".into(),
            ..Panel::default()
        },
    )
}
