//! `frames.csv`: one row per frame with fixed decimals per column, so the same outcome always
//! gives the same bytes. A value that does not exist is an empty cell.

use std::io::{self, Write};

use crate::commands::audit::FrameRow;

/// The header, in order: the columns DESIGN section 5 names, then the extra ones.
pub const FRAMES_CSV_HEADER: [&str; 21] = [
    "frame",
    "time_s",
    "status",
    "dev_x_mm",
    "dev_y_mm",
    "dev_z_mm",
    "dev_yaw_deg",
    "dev_pitch_deg",
    "dev_roll_deg",
    "d2",
    "dof",
    "vec_x_m",
    "vec_y_m",
    "vec_z_m",
    "fixed_error_mm",
    "segment",
    "range_m",
    "probe_fit",
    "drogue_fit",
    "true_dual_error_mm",
    "true_fixed_error_mm",
];

/// Decimals per quantity: 0.1 µm for positions in mm, 1 µm for metres, 1e-6 degree.
const TIME_DECIMALS: usize = 6;
const MM_DECIMALS: usize = 4;
const DEG_DECIMALS: usize = 6;
const M_DECIMALS: usize = 6;
const STAT_DECIMALS: usize = 4;

fn number(value: Option<f64>, decimals: usize) -> String {
    match value {
        None => String::new(),
        Some(v) => {
            let text = format!("{v:.decimals$}");
            // "-0.0000" would differ from "0.0000" only by rounding noise.
            match text.strip_prefix('-') {
                Some(rest) if rest.chars().all(|c| c == '0' || c == '.') => rest.to_string(),
                _ => text,
            }
        }
    }
}

fn integer(value: Option<u64>) -> String {
    value.map_or(String::new(), |v| v.to_string())
}

fn record(row: &FrameRow) -> Vec<String> {
    let dev = |i: usize, d: usize| number(row.deviation.map(|v| v[i]), d);
    let vec = |i: usize| number(row.vector_m.map(|v| v[i]), M_DECIMALS);
    vec![
        row.frame.to_string(),
        number(Some(row.time_s), TIME_DECIMALS),
        row.status.to_string(),
        dev(0, MM_DECIMALS),
        dev(1, MM_DECIMALS),
        dev(2, MM_DECIMALS),
        dev(3, DEG_DECIMALS),
        dev(4, DEG_DECIMALS),
        dev(5, DEG_DECIMALS),
        number(row.d2, STAT_DECIMALS),
        integer(row.dof.map(u64::from)),
        vec(0),
        vec(1),
        vec(2),
        number(row.fixed_error_mm, MM_DECIMALS),
        integer(row.segment.map(u64::from)),
        number(row.range_m, M_DECIMALS),
        number(row.probe_fit, STAT_DECIMALS),
        number(row.drogue_fit, STAT_DECIMALS),
        number(row.true_dual_error_mm, MM_DECIMALS),
        number(row.true_fixed_error_mm, MM_DECIMALS),
    ]
}

/// Writes the header and one line per frame.
pub fn write_frames_csv(w: &mut dyn Write, rows: &[FrameRow]) -> io::Result<()> {
    let mut writer = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(w);
    writer.write_record(FRAMES_CSV_HEADER)?;
    for row in rows {
        writer.write_record(record(row))?;
    }
    writer.flush()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_have_fixed_decimals_and_no_negative_zero() {
        assert_eq!(number(Some(1.0), 4), "1.0000");
        assert_eq!(number(Some(-0.00001), 4), "0.0000");
        assert_eq!(number(Some(-2.5), 1), "-2.5");
        assert_eq!(number(None, 4), "");
        assert_eq!(number(Some(f64::NAN), 4), "NaN");
    }
}
