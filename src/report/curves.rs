//! Generic line plots of plain series, for the sensitivity job: detection probability against
//! shift size (one curve per axis) and detection delay against shift size. Each curve gets its
//! own colour, dash and marker, named in the legend.

use serde::{Deserialize, Serialize};

use super::chart::{colors, Figure, Layer, LegendEntry, Marker, Panel};
use super::decimate::Envelope;
use super::scale::Span;
use super::svg::Stroke;

/// Curves sharing one set of axes.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct CurveSet {
    pub title: String,
    pub x_label: String,
    pub y_label: String,
    pub curves: Vec<Curve>,
}

/// One named series of (x, y) points, drawn in the given order.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Curve {
    pub label: String,
    pub points: Vec<(f64, f64)>,
}

/// Looks of the curves in turn: colour, dash and marker all differ between neighbours.
const LOOKS: [(&str, Option<&str>, Marker); 6] = [
    (colors::BLUE, None, Marker::Dot),
    (colors::VERMILLION, Some("8 4"), Marker::Square),
    (colors::GREEN, Some("2 3"), Marker::Triangle),
    (colors::PURPLE, Some("10 3 2 3"), Marker::Diamond),
    (colors::ORANGE, Some("5 2"), Marker::Cross),
    (colors::SKY, Some("1 2"), Marker::Dot),
];

/// Past this many points a curve is thinned and drawn without markers.
const MARKED_POINTS: usize = 60;
const CURVE_WIDTH: f64 = 800.0;

/// Detection probability against shift size: the y axis runs from 0 to 1.
pub fn detection_probability_svg(set: &CurveSet) -> String {
    render(
        set,
        Some(Span {
            lo: -0.03,
            hi: 1.03,
        }),
    )
}

/// Detection delay (or any other quantity) against shift size: the y axis starts at 0.
pub fn detection_delay_svg(set: &CurveSet) -> String {
    let top = Span::of(set.curves.iter().flat_map(|c| c.points.iter().map(|p| p.1)));
    let y = top.map(|s| {
        Span {
            lo: 0.0,
            hi: s.hi.max(0.0),
        }
        .padded(0.04)
    });
    render(set, y)
}

/// Any curve set, axes from the smallest and largest values.
pub fn curve_set_svg(set: &CurveSet) -> String {
    render(set, None)
}

fn render(set: &CurveSet, y_span: Option<Span>) -> String {
    let mut legend = Vec::new();
    let mut layers = Vec::new();
    for (i, curve) in set.curves.iter().enumerate() {
        let (color, dash, marker) = LOOKS[i % LOOKS.len()];
        let stroke = Stroke {
            color,
            width: 2.0,
            dash,
        };
        let (points, marker) = drawable(&curve.points, marker);
        legend.push(LegendEntry {
            label: curve.label.clone(),
            stroke: Some(stroke),
            marker: marker.map(|m| (m, color)),
            band: false,
        });
        layers.push(Layer::Line {
            points,
            stroke,
            marker,
        });
    }
    let x_values = || set.curves.iter().flat_map(|c| c.points.iter().map(|p| p.0));
    let x_log = log_x_span(x_values());
    Figure {
        title: set.title.clone(),
        width: CURVE_WIDTH,
        columns: 1,
        panel_height: 380.0,
        legend,
        panels: vec![Panel {
            x_label: set.x_label.clone(),
            y_label: set.y_label.clone(),
            x_log: x_log.is_some(),
            x_span: x_log,
            y_span,
            layers,
            empty_note: "no curves".into(),
            ..Panel::default()
        }],
    }
    .render()
}

/// Sizes that grow by factors (0.25, 0.5, 1, 2, 4 mm) crowd into the left of a linear axis:
/// when every x is positive and they span at least this ratio, the x axis is logarithmic.
const LOG_X_RATIO: f64 = 8.0;

/// The x span of a logarithmic axis (a little wider than the values), or `None` for linear.
fn log_x_span(values: impl Iterator<Item = f64>) -> Option<Span> {
    let mut all_positive = true;
    let span = Span::of(values.inspect(|v| all_positive &= *v > 0.0))?;
    (all_positive && span.hi >= LOG_X_RATIO * span.lo).then(|| Span {
        lo: span.lo / 1.15,
        hi: span.hi * 1.15,
    })
}

/// A long curve thinned to the extremes of each pixel column (kept in x order).
fn drawable(points: &[(f64, f64)], marker: Marker) -> (Vec<(f64, f64)>, Option<Marker>) {
    if points.len() <= MARKED_POINTS {
        return (points.to_vec(), Some(marker));
    }
    let Some(span) = Span::of(points.iter().map(|p| p.0)) else {
        return (Vec::new(), None);
    };
    let mut envelope = Envelope::new(span.lo, span.hi, CURVE_WIDTH as usize);
    for &(x, y) in points {
        envelope.push(x, y);
    }
    (envelope.points(), None)
}
