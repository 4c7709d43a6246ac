//! Fast fixed-point formatting of CSV rows. The standard library's exact `{:.N}` formatting falls
//! back to big-number arithmetic for many values, which made number formatting, not the disk,
//! the cost of a long session; scaling to an integer and printing its digits is about ten times
//! faster and just as deterministic.

use std::io::Write;

/// Powers of ten for the supported numbers of decimals.
const POW10: [f64; 10] = [1.0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9];

/// Largest scaled magnitude printed by the integer path: below 2^53 every integer is exact.
const EXACT_INTEGER_LIMIT: f64 = 9.0e15;

/// One CSV row assembled in a reusable buffer, then written in one call.
#[derive(Debug, Default)]
pub struct RowBuf {
    bytes: Vec<u8>,
}

impl RowBuf {
    pub fn clear(&mut self) -> &mut Self {
        self.bytes.clear();
        self
    }

    /// Keeps the first `len` bytes (a shared row prefix).
    pub fn truncate(&mut self, len: usize) -> &mut Self {
        self.bytes.truncate(len);
        self
    }

    pub fn len(&self) -> usize {
        self.bytes.len()
    }

    pub fn is_empty(&self) -> bool {
        self.bytes.is_empty()
    }

    pub fn text(&mut self, s: &str) -> &mut Self {
        self.bytes.extend_from_slice(s.as_bytes());
        self
    }

    pub fn comma(&mut self) -> &mut Self {
        self.bytes.push(b',');
        self
    }

    /// An unsigned integer in decimal.
    pub fn uint(&mut self, mut n: u64) -> &mut Self {
        let mut digits = [0u8; 20];
        let mut start = digits.len();
        loop {
            start -= 1;
            digits[start] = b'0' + (n % 10) as u8;
            n /= 10;
            if n == 0 {
                break;
            }
        }
        self.bytes.extend_from_slice(&digits[start..]);
        self
    }

    /// `x` rounded half away from zero to `decimals` (at most 9) places, e.g. `-12.3400`; a
    /// value that rounds to zero is written without a sign.
    pub fn fixed(&mut self, x: f64, decimals: usize) -> &mut Self {
        let scale = POW10[decimals];
        let scaled = (x.abs() * scale).round();
        if !scaled.is_finite() || scaled >= EXACT_INTEGER_LIMIT {
            // Huge or non-finite: rare, so the standard formatter is fine.
            let _ = write!(self.bytes, "{x:.decimals$}");
            return self;
        }
        let n = scaled as u64;
        if n != 0 && x < 0.0 {
            self.bytes.push(b'-');
        }
        let unit = scale as u64;
        self.uint(n / unit);
        if decimals > 0 {
            self.bytes.push(b'.');
            let frac = n % unit;
            let mut width = 1;
            while width < decimals && frac < POW10[decimals - width] as u64 {
                self.bytes.push(b'0');
                width += 1;
            }
            self.uint(frac);
        }
        self
    }

    pub fn newline(&mut self) -> &mut Self {
        self.bytes.push(b'\n');
        self
    }

    pub fn as_bytes(&self) -> &[u8] {
        &self.bytes
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fixed(x: f64, d: usize) -> String {
        let mut row = RowBuf::default();
        row.fixed(x, d);
        String::from_utf8(row.as_bytes().to_vec()).unwrap()
    }

    #[test]
    fn matches_the_standard_formatter_away_from_ties() {
        // Source: Rust's `{:.N}` formatting (exactly rounded), on values whose next digit is not
        // a tie, so both roundings agree.
        let values = [
            0.0,
            1.0,
            -1.0,
            0.37,
            12.345_678_9,
            -0.000_12,
            1_234.000_04,
            33_333.333_333_333,
            640.123_456,
            -3.999_999_9,
            1e-9,
            7.000_03e-5,
            999.999_94,
        ];
        for x in values {
            for d in [0, 1, 4, 6, 9] {
                let ours = fixed(x, d);
                let std = format!("{x:.d$}");
                let std = if std.trim_start_matches(['-', '0', '.']).is_empty() {
                    std.trim_start_matches('-').to_string()
                } else {
                    std
                };
                assert_eq!(ours, std, "x = {x}, decimals = {d}");
            }
        }
    }

    #[test]
    fn negative_values_rounding_to_zero_have_no_sign() {
        assert_eq!(fixed(-0.00001, 4), "0.0000");
        assert_eq!(fixed(-0.0, 2), "0.00");
        assert_eq!(fixed(-0.00005, 4), "-0.0001");
    }

    #[test]
    fn integers_print_in_full() {
        let mut row = RowBuf::default();
        row.uint(0).comma().uint(1_000_000).comma().uint(u64::MAX);
        assert_eq!(row.as_bytes(), b"0,1000000,18446744073709551615");
    }
}
