//! Thinning long series for drawing. Scatter: the first point in each small cell of the plot
//! area is kept, so a million frames draw as at most one mark per cell and look the same as all
//! of them would (every occupied cell, extremes included, keeps a mark). Lines: per pixel column
//! the points with the smallest and largest value are kept. Layout only: nothing is estimated.

use super::scale::Span;

/// Keeps the first point falling in each cell of a grid over the plot area.
#[derive(Debug, Clone)]
pub struct Raster {
    x: Span,
    y: Span,
    log_y: bool,
    columns: usize,
    rows: usize,
    occupied: Vec<bool>,
    kept: Vec<(f64, f64)>,
}

impl Raster {
    /// A grid of `cell_px` cells over the value spans `x` and `y` drawn on `size_px`
    /// (width, height) pixels.
    pub fn new(x: Span, y: Span, log_y: bool, size_px: (f64, f64), cell_px: f64) -> Self {
        let columns = ((size_px.0 / cell_px).ceil() as usize).max(1);
        let rows = ((size_px.1 / cell_px).ceil() as usize).max(1);
        Self {
            x,
            y,
            log_y,
            columns,
            rows,
            occupied: vec![false; columns * rows],
            kept: Vec::new(),
        }
    }

    fn cell(span: Span, value: f64, count: usize, log: bool) -> usize {
        let (v, lo, hi) = if log {
            let floor = span.lo.max(f64::MIN_POSITIVE);
            (
                value.max(floor).log10(),
                floor.log10(),
                span.hi.max(floor).log10(),
            )
        } else {
            (value, span.lo, span.hi)
        };
        let width = hi - lo;
        if width.is_nan() || width <= 0.0 {
            return 0;
        }
        let t = ((v - lo) / width).clamp(0.0, 1.0);
        ((t * count as f64) as usize).min(count - 1)
    }

    /// Offers a point; points with a non-finite coordinate cannot be drawn and are skipped.
    pub fn push(&mut self, x: f64, y: f64) {
        if !(x.is_finite() && y.is_finite()) {
            return;
        }
        let c = Self::cell(self.x, x, self.columns, false);
        let r = Self::cell(self.y, y, self.rows, self.log_y);
        let slot = &mut self.occupied[r * self.columns + c];
        if !*slot {
            *slot = true;
            self.kept.push((x, y));
        }
    }

    pub fn len(&self) -> usize {
        self.kept.len()
    }

    /// The kept points, in the order they were offered.
    pub fn into_points(self) -> Vec<(f64, f64)> {
        self.kept
    }
}

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
    fn raster_keeps_one_point_per_cell_and_every_extreme() {
        let span = Span { lo: 0.0, hi: 1.0 };
        let mut r = Raster::new(span, Span { lo: -1.0, hi: 1.0 }, false, (300.0, 60.0), 3.0);
        for i in 0..1_000_000u32 {
            let x = f64::from(i) / 1e6;
            r.push(x, (f64::from(i) * 0.37).sin());
        }
        r.push(0.5, f64::NAN);
        let kept = r.into_points();
        assert!(kept.len() <= 100 * 20, "{}", kept.len());
        assert!(
            kept.len() > 1000,
            "a filled band keeps most cells: {}",
            kept.len()
        );
        let top = kept.iter().map(|p| p.1).fold(f64::MIN, f64::max);
        assert!(top > 0.9, "the top cell row is drawn: {top}");
    }

    #[test]
    fn raster_on_a_log_axis_separates_decades() {
        let x = Span { lo: 0.0, hi: 1.0 };
        let mut r = Raster::new(
            x,
            Span {
                lo: 0.01,
                hi: 100.0,
            },
            true,
            (3.0, 12.0),
            3.0,
        );
        for y in [0.02, 0.03, 50.0, 60.0, -1.0] {
            r.push(0.5, y);
        }
        assert_eq!(r.into_points(), vec![(0.5, 0.02), (0.5, 50.0)]);
    }

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
