//! SVG plots of hand-built outcomes (invented demo numbers, see report_demo): well-formed XML,
//! deterministic, lines where the outcome puts them, and bounded size for a million frames.

mod report_demo;

use mountdrift::commands::audit::AuditOutcome;
use mountdrift::report::{
    d2_svg, detection_delay_svg, detection_probability_svg, deviation_svg, fit_svg,
    fixed_offset_svg, AuditPlots, Curve, CurveSet,
};

fn parse(svg: &str) -> roxmltree::Document<'_> {
    roxmltree::Document::parse(svg).unwrap_or_else(|e| panic!("not well-formed XML: {e}"))
}

fn paths_with<'a>(
    doc: &'a roxmltree::Document,
    attr: &str,
    value: &str,
) -> Vec<roxmltree::Node<'a, 'a>> {
    doc.descendants()
        .filter(|n| n.has_tag_name("path") && n.attribute(attr) == Some(value))
        .collect()
}

/// Pen positions after every move (`M`, absolute, or `m`, relative) of a path of dots or
/// lines; `h0` marks and `L` segments are skipped over.
fn move_points(data: &str) -> Vec<(f64, f64)> {
    let mut points = Vec::new();
    let mut pen = (0.0, 0.0);
    let mut rest = data;
    while let Some(start) = rest.find(['M', 'm']) {
        let relative = rest[start..].starts_with('m');
        let body = &rest[start + 1..];
        let end = body
            .find(|c: char| c.is_ascii_alphabetic())
            .unwrap_or(body.len());
        let numbers: Vec<f64> = body[..end]
            .split(' ')
            .filter_map(|s| s.parse().ok())
            .collect();
        if let [x, y] = numbers[..] {
            pen = if relative {
                (pen.0 + x, pen.1 + y)
            } else {
                (x, y)
            };
            points.push(pen);
        }
        rest = &body[end..];
    }
    points
}

fn texts(doc: &roxmltree::Document) -> Vec<String> {
    doc.descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text().map(String::from))
        .collect()
}

#[test]
fn every_plot_is_well_formed_and_deterministic() {
    for outcome in [
        report_demo::shifted_outcome(),
        report_demo::stable_outcome(),
    ] {
        let plots = AuditPlots::render(&outcome);
        for svg in [&plots.deviation, &plots.d2, &plots.fixed_offset, &plots.fit] {
            let doc = parse(svg);
            assert_eq!(doc.root_element().tag_name().name(), "svg");
        }
        assert_eq!(
            plots,
            AuditPlots::render(&outcome),
            "same outcome, same bytes"
        );
    }
}

#[test]
fn deviation_plot_has_six_panels_with_the_change_point() {
    let svg = deviation_svg(&report_demo::shifted_outcome());
    let doc = parse(&svg);
    let names = texts(&doc);
    for title in [
        "x (forward), mm",
        "y (right), mm",
        "z (down), mm",
        "yaw, deg",
        "pitch, deg",
        "roll, deg",
    ] {
        assert!(names.iter().any(|t| t == title), "missing panel {title}");
    }
    // Change point lines: one per panel plus the legend sample.
    let change_lines = paths_with(&doc, "stroke-dasharray", "7 4");
    assert_eq!(change_lines.len(), 7);
    // Two segments per panel, each a band under its estimate line.
    let bands = paths_with(&doc, "fill-opacity", "0.20");
    assert_eq!(bands.len(), 6 * 2 + 1);
}

#[test]
fn d2_threshold_separates_the_two_segments() {
    let outcome = report_demo::shifted_outcome();
    let doc_text = d2_svg(&outcome);
    let doc = parse(&doc_text);
    let threshold = paths_with(&doc, "stroke-dasharray", "9 4");
    // The threshold across the panel and its legend sample; the longer one is in the panel.
    let line = threshold
        .iter()
        .map(|n| move_points(n.attribute("d").unwrap())[0])
        .max_by(|a, b| a.0.partial_cmp(&b.0).unwrap().reverse())
        .unwrap();
    let dots = paths_with(&doc, "stroke-linecap", "round");
    let dots: Vec<(f64, f64)> = dots
        .iter()
        .flat_map(|n| move_points(n.attribute("d").unwrap()))
        .filter(|p| p.1 > 70.0) // leave out the legend sample
        .collect();
    assert!(dots.len() > 500, "{}", dots.len());
    // In the demo, frames before the step have d2 < 11 and after it d2 > 15; the threshold
    // (16.81) lies between, so on screen (y down) early dots are below the line.
    let split_x = dots.iter().map(|p| p.0).fold(f64::MIN, f64::max) * 0.6;
    let early_top = dots
        .iter()
        .filter(|p| p.0 < split_x - 20.0)
        .map(|p| p.1)
        .fold(f64::MAX, f64::min);
    assert!(
        early_top > line.1,
        "early dots reach {early_top}, line at {}",
        line.1
    );
    let late_bottom = dots
        .iter()
        .filter(|p| p.0 > split_x + 20.0)
        .map(|p| p.1)
        .fold(f64::MIN, f64::max);
    assert!(
        late_bottom > line.1 - 40.0,
        "some late dots sit near the line"
    );
}

#[test]
fn fixed_offset_plot_shows_truth_series_and_tolerance() {
    let svg = fixed_offset_svg(&report_demo::shifted_outcome());
    let doc = parse(&svg);
    let names = texts(&doc);
    for label in [
        "fixed-offset error, estimated (segment mount)",
        "fixed-offset error against truth",
        "dual-object error against truth",
        "tolerance 30.0 mm (applies within 15.0 m)",
    ] {
        assert!(names.iter().any(|t| t == label), "missing legend {label}");
    }
    let stable = fixed_offset_svg(&report_demo::stable_outcome());
    assert!(stable.contains("no nominal mount and no truth: nothing to compare"));
}

#[test]
fn fit_plot_draws_the_estimated_sigma_level() {
    let svg = fit_svg(&report_demo::shifted_outcome());
    // 1.12 px estimated against 1.00 px stated.
    assert!(
        svg.contains("(estimated / stated sigma)\u{b2} = 1.25"),
        "{svg}"
    );
    parse(&svg);
}

#[test]
fn a_session_without_frames_still_draws() {
    let mut outcome: AuditOutcome = report_demo::stable_outcome();
    outcome.rows.clear();
    outcome.segments.clear();
    let plots = AuditPlots::render(&outcome);
    assert!(plots.deviation.contains("no solved frames"));
    assert!(plots
        .d2
        .contains("no nominal mount: the consistency test needs one"));
    assert!(plots.fit.contains("no solved poses"));
    parse(&plots.deviation);
}

#[test]
fn a_million_frames_make_modest_files() {
    let mut outcome = report_demo::shifted_outcome();
    outcome.rows = report_demo::demo_rows(1_000_000, 600_000);
    let plots = AuditPlots::render(&outcome);
    let sizes = [
        plots.deviation.len(),
        plots.d2.len(),
        plots.fixed_offset.len(),
        plots.fit.len(),
    ];
    for size in sizes {
        assert!(size < 400_000, "plot of {size} bytes");
    }
    assert!(sizes.iter().sum::<usize>() < 1_000_000, "{sizes:?}");
    parse(&plots.deviation);
}

fn demo_curves() -> CurveSet {
    let axes = ["x <mm>", "yaw", "pitch"];
    CurveSet {
        title: "Detection probability (invented demo curves)".into(),
        x_label: "shift size".into(),
        y_label: "probability".into(),
        curves: axes
            .iter()
            .enumerate()
            .map(|(i, label)| Curve {
                label: label.to_string(),
                points: (0..=10)
                    .map(|k| {
                        let s = k as f64 * 0.5;
                        (s, 1.0 - (-(s / (1.0 + i as f64)).powi(2)).exp())
                    })
                    .collect(),
            })
            .collect(),
    }
}

#[test]
fn curve_sets_have_a_legend_entry_and_a_look_per_curve() {
    let set = demo_curves();
    let svg = detection_probability_svg(&set);
    let doc = parse(&svg);
    let names = texts(&doc);
    assert!(
        names.iter().any(|t| t == "x <mm>"),
        "labels are escaped and kept"
    );
    assert!(names.iter().any(|t| t == "1.0") && names.iter().any(|t| t == "0.0"));
    let dashes: std::collections::BTreeSet<_> = doc
        .descendants()
        .filter_map(|n| n.attribute("stroke-dasharray"))
        .collect();
    assert!(dashes.len() >= 2, "curves differ by dash, not colour alone");
    let delay = detection_delay_svg(&CurveSet {
        title: "Detection delay".into(),
        y_label: "frames".into(),
        ..set
    });
    parse(&delay);
}

#[test]
fn long_curves_are_thinned() {
    let curve = Curve {
        label: "long".into(),
        points: (0..200_000)
            .map(|i| (i as f64, (i as f64 * 0.01).sin()))
            .collect(),
    };
    let set = CurveSet {
        title: "t".into(),
        x_label: "x".into(),
        y_label: "y".into(),
        curves: vec![curve],
    };
    let svg = detection_delay_svg(&set);
    assert!(svg.len() < 60_000, "{}", svg.len());
    parse(&svg);
}

#[test]
fn values_that_are_not_finite_are_left_out() {
    let mut outcome = report_demo::shifted_outcome();
    outcome.segments[0].mount_deviation.translation_ci95_mm[0] = f64::NAN;
    outcome.change_points[0].time_s = f64::INFINITY;
    if let Some(fo) = outcome.fixed_offset.as_mut() {
        fo.tolerance_mm = f64::NAN;
    }
    outcome.rows[3].deviation = Some([f64::NAN; 6]);
    outcome.rows[4].d2 = Some(f64::INFINITY);
    let plots = AuditPlots::render(&outcome);
    for svg in [&plots.deviation, &plots.d2, &plots.fixed_offset, &plots.fit] {
        parse(svg);
        assert!(
            !svg.contains("NaN") && !svg.contains("inf"),
            "a non-finite value was drawn"
        );
    }
}

/// A text element's box as (left, top, right, bottom), px, from its position, size, anchor and
/// rotation, with the same rough glyph width the renderer lays out with (0.56 em a character,
/// which DejaVu Sans at these sizes stays under for digits and lower-case text).
fn text_box(node: &roxmltree::Node) -> (f64, f64, f64, f64) {
    let num = |a: &str| node.attribute(a).unwrap().parse::<f64>().unwrap();
    let (x, y, size) = (num("x"), num("y"), num("font-size"));
    let width = node.text().unwrap_or("").chars().count() as f64 * size * 0.56;
    let (before, after) = match node.attribute("text-anchor") {
        Some("end") => (width, 0.0),
        Some("middle") => (width / 2.0, width / 2.0),
        _ => (0.0, width),
    };
    if node.attribute("transform").is_some() {
        // Rotated a quarter turn anticlockwise about (x, y): the text runs upwards.
        (x - size * 0.8, y - after, x + size * 0.2, y + before)
    } else {
        (x - before, y - size * 0.8, x + after, y + size * 0.2)
    }
}

fn view_box(doc: &roxmltree::Document) -> (f64, f64) {
    let v: Vec<f64> = doc
        .root_element()
        .attribute("viewBox")
        .unwrap()
        .split(' ')
        .map(|s| s.parse().unwrap())
        .collect();
    (v[2], v[3])
}

/// Every text inside the viewBox and no two texts overlapping.
fn assert_text_laid_out(name: &str, svg: &str) {
    let doc = parse(svg);
    let (width, height) = view_box(&doc);
    let boxes: Vec<(String, (f64, f64, f64, f64))> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .map(|n| (n.text().unwrap_or("").to_string(), text_box(&n)))
        .collect();
    for (text, b) in &boxes {
        assert!(
            b.0 >= 0.0 && b.1 >= 0.0 && b.2 <= width && b.3 <= height,
            "{name}: '{text}' at {b:?} leaves the {width} x {height} view"
        );
    }
    for (i, (ta, a)) in boxes.iter().enumerate() {
        for (tb, b) in &boxes[i + 1..] {
            let overlap = a.0 < b.2 && b.0 < a.2 && a.1 < b.3 && b.1 < a.3;
            assert!(!overlap, "{name}: '{ta}' {a:?} overlaps '{tb}' {b:?}");
        }
    }
}

#[test]
fn plot_text_stays_in_view_and_never_overlaps() {
    let mut wild = report_demo::shifted_outcome();
    for (i, row) in wild.rows.iter_mut().enumerate().step_by(700) {
        if let Some(d) = row.deviation.as_mut() {
            d[i % 6] += 250.0;
        }
    }
    for outcome in [
        report_demo::shifted_outcome(),
        report_demo::stable_outcome(),
        wild,
    ] {
        let plots = AuditPlots::render(&outcome);
        assert_text_laid_out("deviation", &plots.deviation);
        assert_text_laid_out("d2", &plots.d2);
        assert_text_laid_out("fixed offset", &plots.fixed_offset);
        assert_text_laid_out("fit", &plots.fit);
    }
    assert_text_laid_out("curves", &detection_probability_svg(&demo_curves()));
    assert_text_laid_out("delays", &detection_delay_svg(&demo_curves()));
}

/// The y tick values of the first deviation panel (texts right-aligned left of the frame,
/// above the second row's title).
fn first_panel_y_ticks(doc: &roxmltree::Document) -> Vec<f64> {
    let y = |n: &roxmltree::Node| n.attribute("y").unwrap().parse::<f64>().unwrap();
    let second_row = doc
        .descendants()
        .find(|n| n.text() == Some("y (right), mm"))
        .map(|n| y(&n))
        .unwrap();
    doc.descendants()
        .filter(|n| n.has_tag_name("text") && n.attribute("text-anchor") == Some("end"))
        .filter(|n| n.attribute("x").unwrap().parse::<f64>().unwrap() < 100.0)
        .filter(|n| y(n) < second_row)
        .filter_map(|n| n.text()?.replace('\u{2212}', "-").parse().ok())
        .collect()
}

#[test]
fn a_few_wild_frames_do_not_stretch_the_deviation_axis() {
    let clean = deviation_svg(&report_demo::shifted_outcome());
    let clean_ticks = first_panel_y_ticks(&parse(&clean));
    let mut outcome = report_demo::shifted_outcome();
    // Three frames thrown 300 mm forward (a mis-detected keypoint does this).
    for f in [100, 1500, 2500] {
        outcome.rows[f].deviation.as_mut().unwrap()[0] = 300.0;
    }
    let svg = deviation_svg(&outcome);
    let doc = parse(&svg);
    let ticks = first_panel_y_ticks(&doc);
    let top = ticks.iter().cloned().fold(f64::MIN, f64::max);
    let clean_top = clean_ticks.iter().cloned().fold(f64::MIN, f64::max);
    assert!(
        top <= clean_top + 1e-9,
        "axis reaches {top} (without the wild frames {clean_top})"
    );
    let names = texts(&doc);
    assert!(
        names.iter().any(|t| t == "3 frames beyond the axis"),
        "{names:?}"
    );
    assert!(names
        .iter()
        .any(|t| t == "frame beyond the axis (on its edge)"));
    // Drawn as triangles pointing up on the frame's top edge.
    assert!(svg.contains("l3 5.2h-6z"));
}

#[test]
fn error_plot_is_logarithmic_and_bounds_the_tolerance_to_the_contact_range() {
    let svg = fixed_offset_svg(&report_demo::shifted_outcome());
    let doc = parse(&svg);
    let names = texts(&doc);
    assert!(names
        .iter()
        .any(|t| t == "against time, ranges up to 15.0 m"));
    assert!(names
        .iter()
        .any(|t| t == "beyond contact range: no tolerance"));
    assert!(names.iter().any(|t| t == "contact range"));
    // Decades on the error axis.
    for decade in ["1", "10", "100"] {
        assert!(
            names.iter().any(|t| t == decade),
            "missing tick {decade}: {names:?}"
        );
    }
}

#[test]
fn step_sizes_growing_by_factors_get_a_logarithmic_axis() {
    let sizes: [f64; 5] = [0.25, 0.5, 1.0, 2.0, 4.0];
    let set = CurveSet {
        title: "Detection probability (invented demo curve)".into(),
        x_label: "step size, mm".into(),
        y_label: "detection probability".into(),
        curves: vec![Curve {
            label: "x".into(),
            points: sizes.iter().map(|&s| (s, (s / 2.0).min(1.0))).collect(),
        }],
    };
    let svg = detection_probability_svg(&set);
    let doc = parse(&svg);
    // x tick labels are centred under the axis; on a log axis 0.5 -> 1 and 1 -> 2 are equal.
    let tick_x = |label: &str| {
        doc.descendants()
            .find(|n| n.text() == Some(label) && n.attribute("text-anchor") == Some("middle"))
            .unwrap_or_else(|| panic!("no x tick {label}"))
            .attribute("x")
            .unwrap()
            .parse::<f64>()
            .unwrap()
    };
    let (half, one, two) = (tick_x("0.5"), tick_x("1"), tick_x("2"));
    assert!(one - half > 50.0, "ticks {half} {one} {two}");
    assert!(
        ((one - half) - (two - one)).abs() < 0.5,
        "ticks {half} {one} {two}"
    );
    assert_text_laid_out("log curves", &svg);
}
