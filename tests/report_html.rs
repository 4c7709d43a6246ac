//! report.html and the full set of audit files from hand-built outcomes (invented demo numbers,
//! see report_demo): verdict first, self-contained, text escaped, every file present.

mod report_demo;

use mountdrift::commands::audit::AuditOutcome;
use mountdrift::report::{audit_files, write_audit_html, AuditFile, AuditPlots, CAUTIONS};

fn html(outcome: &AuditOutcome) -> String {
    let mut out = Vec::new();
    write_audit_html(&mut out, outcome, &AuditPlots::render(outcome)).unwrap();
    String::from_utf8(out).unwrap()
}

fn position(page: &str, needle: &str) -> usize {
    page.find(needle)
        .unwrap_or_else(|| panic!("missing {needle}"))
}

#[test]
fn verdict_and_gate_open_the_page() {
    let page = html(&report_demo::shifted_outcome());
    assert!(page.starts_with("<!DOCTYPE html>\n<html lang=\"en\">"));
    let verdict = position(
        &page,
        "<div class=\"verdict-word\" id=\"verdict\">SHIFTED</div>",
    );
    let gate = position(
        &page,
        "<div class=\"gate fail\" id=\"gate\">gate FAIL</div>",
    );
    let sentence = position(
        &page,
        "The mount moved during the session: 1 change point at frame 1800",
    );
    let first_section = position(&page, "<section id=\"change-points\">");
    assert!(verdict < gate && gate < sentence && sentence < first_section);
    assert!(
        page.contains("over the 30.0 mm tolerance near contact"),
        "gate reasons are listed"
    );
}

#[test]
fn sections_come_in_order_with_their_plots() {
    let page = html(&report_demo::shifted_outcome());
    let order = [
        "id=\"change-points\"",
        "id=\"segments\"",
        "Mount deviation from the nominal",
        "id=\"fixed-offset\"",
        "<h3>By range</h3>",
        "Probe-to-drogue vector error",
        "id=\"consistency\"",
        "id=\"quality\"",
        "Rejected frames by reason",
        "id=\"warnings\"",
        "Reprojection fit",
        "id=\"inputs\"",
        "id=\"cautions\"",
    ];
    let positions: Vec<usize> = order.iter().map(|n| position(&page, n)).collect();
    assert!(positions.windows(2).all(|w| w[0] < w[1]), "{positions:?}");
    assert_eq!(page.matches("<svg ").count(), 4);
    for caution in CAUTIONS {
        assert!(page.contains(caution));
    }
    assert!(page.contains("1.10 to 1.14"), "estimated sigma interval");
    assert!(page.contains("Brown-Conrady k1 -0.12"), "camera inputs");
}

/// The cells of the table row whose first cells are `lead`, as text.
fn row_cells(page: &str, lead: &[&str]) -> Vec<String> {
    let wanted: String = lead.iter().map(|c| format!("<td>{c}</td>")).collect();
    let start = position(page, &format!("<tr>{wanted}"));
    let row = &page[start..start + page[start..].find("</tr>").unwrap()];
    row.split("<td")
        .skip(1)
        .map(|c| c[c.find('>').unwrap() + 1..c.find("</td>").unwrap()].to_string())
        .collect()
}

#[test]
fn truth_is_given_within_the_contact_range_and_by_range() {
    let page = html(&report_demo::shifted_outcome());
    let truth = position(&page, "<h3>Against truth</h3>");
    assert!(truth < position(&page, "Probe-to-drogue vector error"));
    // Within the policy's contact range (15 m) as well as over the whole session.
    let near = row_cells(&page, &["dual-object (both poses solved)", "within 15.0 m"]);
    assert_eq!(near[2..], ["1015", "0.7", "1.6", "2.2"]);
    let all = row_cells(&page, &["fixed-offset (nominal mount)", "all ranges"]);
    assert_eq!(all[2..], ["2920", "9.0", "37.8", "44.0"]);
    // And range by range, both pipelines side by side.
    let by_range = position(&page, "<h4>True error by range</h4>");
    assert!(truth < by_range);
    let fixed_offset_bin = row_cells(&page, &["0.0 to 5.0"]);
    assert_eq!(
        fixed_offset_bin.len(),
        5,
        "the fixed-offset table comes first"
    );
    let cells = row_cells(&page[by_range..], &["0.0 to 5.0"]);
    assert_eq!(cells[1..], ["240", "0.4", "0.9", "240", "34.0", "39.9"]);
}

#[test]
fn page_is_self_contained() {
    for outcome in [
        report_demo::shifted_outcome(),
        report_demo::stable_outcome(),
    ] {
        let page = html(&outcome);
        for forbidden in [
            "<script",
            "<link",
            "<img",
            "<iframe",
            "src=",
            "@import",
            "url(",
            "@font-face",
        ] {
            assert!(!page.contains(forbidden), "found {forbidden}");
        }
        for href in page.split("href=\"").skip(1) {
            assert!(href.starts_with('#'), "only in-page links: {}", &href[..20]);
        }
        // The only address is the SVG namespace name, which is never fetched.
        let addresses = page.matches("http").count();
        assert_eq!(
            addresses,
            page.matches("xmlns=\"http://www.w3.org/2000/svg\"").count()
        );
    }
}

#[test]
fn text_from_the_outcome_is_escaped() {
    let page = html(&report_demo::stable_outcome());
    assert!(
        !page.contains("<script>alert"),
        "markup in the session name is escaped"
    );
    assert!(page.contains(
        "night &lt;script&gt;alert(&quot;x&quot;)&lt;/script&gt; &amp; &#39;co&#39;.yaml"
    ));
    assert!(page.contains("No nominal mount was given &lt;so&gt; only drift"));
    assert!(page.contains("STABLE") && page.contains("gate PASS"));
}

#[test]
fn tags_are_balanced() {
    let page = html(&report_demo::shifted_outcome());
    for tag in [
        "section", "table", "figure", "svg", "tr", "ul", "dl", "main", "p",
    ] {
        let open =
            page.matches(&format!("<{tag}>")).count() + page.matches(&format!("<{tag} ")).count();
        let close = page.matches(&format!("</{tag}>")).count();
        assert_eq!(open, close, "<{tag}>");
    }
}

#[test]
fn all_files_are_produced_and_consistent() {
    let outcome = report_demo::shifted_outcome();
    let files = audit_files(&outcome).unwrap();
    let names: Vec<&str> = files.iter().map(|(n, _)| n.as_str()).collect();
    assert_eq!(
        names,
        [
            "report.json",
            "frames.csv",
            "report.html",
            "plot_deviation.svg",
            "plot_d2.svg",
            "plot_fixed_offset.svg",
            "plot_fit.svg"
        ]
    );
    assert_eq!(AuditFile::ALL.map(AuditFile::name), names[..]);
    let json: serde_json::Value = serde_json::from_slice(&files[0].1).unwrap();
    assert_eq!(json["verdict"], "shifted");
    assert_eq!(json["gate"], "fail");
    assert_eq!(json["change_points"][0]["frame"], 1800);
    assert!(
        json.get("rows").is_none(),
        "per-frame rows go to frames.csv only"
    );
    let csv = String::from_utf8(files[1].1.clone()).unwrap();
    assert_eq!(csv.lines().count(), 3001);
    let plots = AuditPlots::render(&outcome);
    assert_eq!(files[3].1, plots.deviation.as_bytes());
    let page = String::from_utf8(files[2].1.clone()).unwrap();
    assert!(page.contains(&plots.fit), "the page inlines the same plots");
    assert_eq!(files, audit_files(&outcome).unwrap(), "deterministic");
}
