//! frames.csv of a hand-built outcome (invented demo numbers, see report_demo): exact header,
//! fixed decimals, empty cells for missing values, and a round trip through the csv crate.

mod report_demo;

use mountdrift::commands::audit::FrameRow;
use mountdrift::report::{write_frames_csv, FRAMES_CSV_HEADER};

const HEADER: &str = "frame,time_s,status,dev_x_mm,dev_y_mm,dev_z_mm,dev_yaw_deg,dev_pitch_deg,\
dev_roll_deg,d2,dof,vec_x_m,vec_y_m,vec_z_m,fixed_error_mm,segment,range_m,probe_fit,drogue_fit,\
true_dual_error_mm,true_fixed_error_mm";

fn csv_text(rows: &[FrameRow]) -> String {
    let mut out = Vec::new();
    write_frames_csv(&mut out, rows).unwrap();
    String::from_utf8(out).unwrap()
}

fn cell(value: &str) -> Option<f64> {
    (!value.is_empty()).then(|| value.parse().unwrap())
}

fn close(written: Option<f64>, original: Option<f64>, decimals: i32) {
    match (written, original) {
        (None, None) => {}
        (Some(w), Some(o)) => {
            let half_unit = 0.5 * 10f64.powi(-decimals) + 1e-12;
            assert!((w - o).abs() <= half_unit, "{w} vs {o}");
        }
        other => panic!("presence differs: {other:?}"),
    }
}

#[test]
fn header_is_exact() {
    let text = csv_text(&[]);
    assert_eq!(text, format!("{HEADER}\n"));
    assert_eq!(FRAMES_CSV_HEADER.join(","), HEADER);
}

#[test]
fn rows_have_fixed_decimals_and_empty_cells() {
    let rows = report_demo::demo_rows(60, 30);
    let text = csv_text(&rows);
    let lines: Vec<&str> = text.lines().collect();
    assert_eq!(lines.len(), 61);
    // Frame 59 is rejected: only frame, time and status are filled.
    assert_eq!(
        lines[60],
        "59,1.966667,rejected:too_few_points,,,,,,,,,,,,,,,,,,"
    );
    // Frame 5 has no drogue: the probe's values are there, the vector's are not.
    let fields: Vec<&str> = lines[6].split(',').collect();
    assert_eq!(fields[2], "no_drogue:not_converged");
    assert_eq!(
        fields[3].split('.').nth(1).unwrap().len(),
        4,
        "mm with 4 decimals"
    );
    assert_eq!(
        fields[6].split('.').nth(1).unwrap().len(),
        6,
        "deg with 6 decimals"
    );
    assert!(fields[11..15].iter().all(|f| f.is_empty()), "{fields:?}");
    assert_eq!(text, csv_text(&rows), "the same rows give the same bytes");
}

#[test]
fn round_trip_through_the_csv_crate() {
    let rows = report_demo::demo_rows(3000, 1800);
    let text = csv_text(&rows);
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let header: Vec<String> = reader.headers().unwrap().iter().map(String::from).collect();
    assert_eq!(header, FRAMES_CSV_HEADER);
    let mut count = 0;
    for (record, row) in reader.records().zip(&rows) {
        let record = record.unwrap();
        let get = |name: &str| {
            let i = FRAMES_CSV_HEADER.iter().position(|h| *h == name).unwrap();
            record.get(i).unwrap().to_string()
        };
        assert_eq!(get("frame"), row.frame.to_string());
        assert_eq!(get("status"), row.status);
        close(cell(&get("time_s")), Some(row.time_s), 6);
        let dev_names = ["dev_x_mm", "dev_y_mm", "dev_z_mm"];
        for (k, name) in dev_names.iter().enumerate() {
            close(cell(&get(name)), row.deviation.map(|d| d[k]), 4);
        }
        close(cell(&get("dev_pitch_deg")), row.deviation.map(|d| d[4]), 6);
        close(cell(&get("d2")), row.d2, 4);
        assert_eq!(get("dof"), row.dof.map_or(String::new(), |d| d.to_string()));
        close(cell(&get("vec_z_m")), row.vector_m.map(|v| v[2]), 6);
        close(cell(&get("fixed_error_mm")), row.fixed_error_mm, 4);
        assert_eq!(
            get("segment"),
            row.segment.map_or(String::new(), |s| s.to_string())
        );
        close(cell(&get("range_m")), row.range_m, 6);
        close(cell(&get("probe_fit")), row.probe_fit, 4);
        close(cell(&get("drogue_fit")), row.drogue_fit, 4);
        close(cell(&get("true_dual_error_mm")), row.true_dual_error_mm, 4);
        close(
            cell(&get("true_fixed_error_mm")),
            row.true_fixed_error_mm,
            4,
        );
        count += 1;
    }
    assert_eq!(count, rows.len());
}

#[test]
fn statuses_with_commas_are_quoted() {
    let mut rows = report_demo::demo_rows(1, 1);
    rows[0].status = "rejected:odd, reason";
    let text = csv_text(&rows);
    let mut reader = csv::Reader::from_reader(text.as_bytes());
    let record = reader.records().next().unwrap().unwrap();
    assert_eq!(record.len(), FRAMES_CSV_HEADER.len());
    assert_eq!(&record[2], "rejected:odd, reason");
}
