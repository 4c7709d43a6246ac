//! Axis layout for plots: data ranges from the smallest and largest value shown, linear or
//! logarithmic mapping to pixels, and round tick positions with their labels. Layout only: no
//! statistics.

/// The span of values an axis shows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Span {
    pub lo: f64,
    pub hi: f64,
}

impl Span {
    /// The smallest span holding every finite value; `None` when there is none.
    pub fn of(values: impl IntoIterator<Item = f64>) -> Option<Self> {
        values
            .into_iter()
            .filter(|v| v.is_finite())
            .fold(None, |span, v| Some(Span::include(span, v)))
    }

    fn include(span: Option<Span>, v: f64) -> Span {
        match span {
            None => Span { lo: v, hi: v },
            Some(s) => Span {
                lo: s.lo.min(v),
                hi: s.hi.max(v),
            },
        }
    }

    /// Widened by `fraction` of its width on each side; a zero-width span is opened around its
    /// value so that a constant series still gets an axis.
    pub fn padded(self, fraction: f64) -> Span {
        let width = self.hi - self.lo;
        if width > 0.0 {
            let pad = width * fraction;
            return Span {
                lo: self.lo - pad,
                hi: self.hi + pad,
            };
        }
        let half = if self.lo.abs() > 0.0 {
            self.lo.abs() * 0.1
        } else {
            1.0
        };
        Span {
            lo: self.lo - half,
            hi: self.hi + half,
        }
    }

    /// For a logarithmic axis: positive, widened by a factor on each side.
    pub fn padded_log(self, floor: f64) -> Span {
        let lo = self.lo.max(floor);
        let hi = self.hi.max(lo);
        if hi > lo {
            Span {
                lo: lo / 1.5,
                hi: hi * 1.5,
            }
        } else {
            Span {
                lo: lo / 3.0,
                hi: hi * 3.0,
            }
        }
    }
}

/// Maps values on one axis to pixels.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Scale {
    pub span: Span,
    pub px_lo: f64,
    pub px_hi: f64,
    pub log: bool,
}

impl Scale {
    /// The pixel position of a value; values outside the span land on its edge.
    pub fn px(&self, value: f64) -> f64 {
        let (v, lo, hi) = if self.log {
            let floor = self.span.lo;
            (
                value.max(floor).log10(),
                self.span.lo.log10(),
                self.span.hi.log10(),
            )
        } else {
            (value, self.span.lo, self.span.hi)
        };
        let t = ((v - lo) / (hi - lo)).clamp(0.0, 1.0);
        self.px_lo + t * (self.px_hi - self.px_lo)
    }

    /// Round tick values inside the span, about `target` of them.
    pub fn ticks(&self, target: usize) -> Vec<f64> {
        if self.log {
            log_ticks(self.span)
        } else {
            linear_ticks(self.span, target)
        }
    }

    /// Tick labels, all with the same number of decimals.
    pub fn tick_labels(&self, ticks: &[f64]) -> Vec<String> {
        if self.log {
            ticks.iter().map(|&t| log_label(t)).collect()
        } else {
            let step = if ticks.len() > 1 {
                ticks[1] - ticks[0]
            } else {
                1.0
            };
            ticks.iter().map(|&t| linear_label(t, step)).collect()
        }
    }
}

/// A step of 1, 2 or 5 times a power of ten giving about `target` ticks.
fn nice_step(width: f64, target: usize) -> f64 {
    let raw = width / target.max(1) as f64;
    let magnitude = 10f64.powf(raw.log10().floor());
    let mantissa = raw / magnitude;
    let nice = if mantissa < 1.5 {
        1.0
    } else if mantissa < 3.5 {
        2.0
    } else if mantissa < 7.5 {
        5.0
    } else {
        10.0
    };
    nice * magnitude
}

fn linear_ticks(span: Span, target: usize) -> Vec<f64> {
    let width = span.hi - span.lo;
    if !(width > 0.0 && width.is_finite()) {
        return vec![span.lo];
    }
    let step = nice_step(width, target);
    let first = (span.lo / step).ceil() as i64;
    let last = (span.hi / step).floor() as i64;
    (first..=last).map(|k| k as f64 * step).collect()
}

fn log_ticks(span: Span) -> Vec<f64> {
    let first = span.lo.log10().ceil() as i32;
    let last = span.hi.log10().floor() as i32;
    let decades: Vec<f64> = (first..=last).map(|e| 10f64.powi(e)).collect();
    if decades.len() >= 3 {
        // Many decades: every other one when crowded.
        let stride = if decades.len() > 8 { 2 } else { 1 };
        return decades.into_iter().step_by(stride).collect();
    }
    let mut ticks = Vec::new();
    for e in (first - 1)..=(last + 1) {
        for m in [1.0, 2.0, 5.0] {
            let t = m * 10f64.powi(e);
            if t >= span.lo && t <= span.hi {
                ticks.push(t);
            }
        }
    }
    ticks
}

fn linear_label(value: f64, step: f64) -> String {
    let decimals = if step > 0.0 {
        (-step.log10().floor()).max(0.0) as usize
    } else {
        0
    };
    let text = format!("{value:.decimals$}");
    if text
        .trim_start_matches('-')
        .chars()
        .all(|c| c == '0' || c == '.')
    {
        text.trim_start_matches('-').to_string()
    } else {
        text.replace('-', "\u{2212}")
    }
}

fn log_label(value: f64) -> String {
    if (1e-3..1e5).contains(&value) {
        let decimals = (-value.log10().floor()).max(0.0) as usize;
        format!("{value:.decimals$}")
    } else {
        let exponent = value.log10().round() as i32;
        let mantissa = value / 10f64.powi(exponent);
        if (mantissa - 1.0).abs() < 1e-9 {
            format!("1e{exponent}")
        } else {
            format!("{mantissa:.0}e{exponent}")
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn scale(lo: f64, hi: f64, log: bool) -> Scale {
        Scale {
            span: Span { lo, hi },
            px_lo: 0.0,
            px_hi: 100.0,
            log,
        }
    }

    #[test]
    fn spans_skip_non_finite_values() {
        let span = Span::of([3.0, f64::NAN, -1.0, f64::INFINITY]).unwrap();
        assert_eq!((span.lo, span.hi), (-1.0, 3.0));
        assert!(Span::of([f64::NAN]).is_none());
    }

    #[test]
    fn constant_series_gets_an_open_span() {
        let s = Span { lo: 0.0, hi: 0.0 }.padded(0.05);
        assert!(s.lo < 0.0 && s.hi > 0.0);
        let s = Span { lo: 50.0, hi: 50.0 }.padded(0.05);
        assert_eq!((s.lo, s.hi), (45.0, 55.0));
    }

    #[test]
    fn linear_ticks_are_round() {
        let s = scale(-0.3, 9.7, false);
        assert_eq!(s.ticks(5), vec![0.0, 2.0, 4.0, 6.0, 8.0]);
        let labels = s.tick_labels(&[-0.5, 0.0, 0.5]);
        assert_eq!(labels, ["\u{2212}0.5", "0.0", "0.5"]);
    }

    #[test]
    fn log_ticks_follow_decades() {
        let s = scale(0.05, 3000.0, true);
        assert_eq!(s.ticks(5), vec![0.1, 1.0, 10.0, 100.0, 1000.0]);
        let narrow = scale(0.3, 4.0, true);
        assert_eq!(narrow.ticks(5), vec![0.5, 1.0, 2.0]);
        assert_eq!(narrow.tick_labels(&[0.5, 1.0, 2e6]), ["0.5", "1", "2e6"]);
    }

    #[test]
    fn mapping_clamps_to_the_axis() {
        let s = scale(0.0, 10.0, false);
        let near = |a: f64, b: f64| (a - b).abs() < 1e-9;
        assert!(near(s.px(5.0), 50.0));
        assert!(near(s.px(20.0), 100.0), "clamped to the edge");
        let l = scale(1.0, 100.0, true);
        assert!(near(l.px(10.0), 50.0));
        assert!(near(l.px(0.0), 0.0), "non-positive values sit on the floor");
    }
}
