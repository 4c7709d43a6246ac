//! Thinning long series for drawing: per pixel column only the points with the smallest and
//! largest value are kept, so a million frames draw as at most two marks per column while every
//! extreme stays visible. Layout only: it picks minima and maxima, it estimates nothing.

/// Points kept for one pixel column.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Column {
    low: (f64, f64),
    high: (f64, f64),
}

/// Collects points into pixel columns over a fixed x span.
#[derive(Debug, Clone)]
pub struct Envelope {
    x_lo: f64,
    x_hi: f64,
    columns: Vec<Option<Column>>,
}

impl Envelope {
    /// `columns` pixel columns covering `x_lo..=x_hi`.
    pub fn new(x_lo: f64, x_hi: f64, columns: usize) -> Self {
        Self {
            x_lo,
            x_hi,
            columns: vec![None; columns.max(1)],
        }
    }

    fn column_of(&self, x: f64) -> usize {
        let n = self.columns.len();
        let width = self.x_hi - self.x_lo;
        if width.is_nan() || width <= 0.0 {
            return 0;
        }
        let t = ((x - self.x_lo) / width).clamp(0.0, 1.0);
        ((t * n as f64) as usize).min(n - 1)
    }

    /// Adds a point; points with a non-finite coordinate cannot be drawn and are skipped.
    pub fn push(&mut self, x: f64, y: f64) {
        if !(x.is_finite() && y.is_finite()) {
            return;
        }
        let i = self.column_of(x);
        let slot = &mut self.columns[i];
        *slot = Some(match *slot {
            None => Column {
                low: (x, y),
                high: (x, y),
            },
            Some(c) => Column {
                low: if y < c.low.1 { (x, y) } else { c.low },
                high: if y > c.high.1 { (x, y) } else { c.high },
            },
        });
    }

    /// The kept points, column by column (lower before upper, in x order within a column).
    pub fn points(&self) -> Vec<(f64, f64)> {
        let mut out = Vec::with_capacity(self.columns.len() * 2);
        for c in self.columns.iter().flatten() {
            if c.low == c.high {
                out.push(c.low);
            } else if c.low.0 <= c.high.0 {
                out.extend([c.low, c.high]);
            } else {
                out.extend([c.high, c.low]);
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn keeps_extremes_per_column() {
        let mut e = Envelope::new(0.0, 10.0, 2);
        for (x, y) in [(0.0, 1.0), (1.0, 5.0), (2.0, -3.0), (6.0, 2.0), (9.0, 2.0)] {
            e.push(x, y);
        }
        e.push(f64::NAN, 1.0);
        assert_eq!(e.points(), vec![(1.0, 5.0), (2.0, -3.0), (6.0, 2.0)]);
    }

    #[test]
    fn a_million_points_stay_within_two_per_column() {
        let mut e = Envelope::new(0.0, 1.0, 400);
        for i in 0..1_000_000u32 {
            let x = f64::from(i) / 1e6;
            e.push(x, (f64::from(i) * 0.37).sin());
        }
        let kept = e.points();
        assert!(kept.len() <= 800);
        let top = kept.iter().map(|p| p.1).fold(f64::MIN, f64::max);
        assert!(top > 0.999_99, "the global maximum survives: {top}");
    }
}
