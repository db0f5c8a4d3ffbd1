//! Axes with ticks chosen here (not by plotters' defaults), so the tick labels are known and
//! testable: decades on a logarithmic axis, 1-2-5 steps on a linear one.
//!
//! A logarithmic axis is drawn in transformed coordinates: the chart's value is `log10(v)`,
//! its ticks sit at `log10` of round numbers and their labels show the numbers themselves.

use plotters::coord::ranged1d::{DefaultFormatting, KeyPointHint, Ranged};
use std::ops::Range;

/// How an axis maps values.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AxisScale {
    /// Logarithmic when the positive data span at least [`AUTO_LOG_DECADES`] decades,
    /// linear otherwise.
    Auto,
    /// Linear.
    Linear,
    /// Logarithmic (base 10); values that are not positive are not drawn.
    Log,
}

/// Decades of positive data from which [`AxisScale::Auto`] chooses a logarithmic axis: 3
/// (the largest at least 1000 times the smallest positive value).
pub const AUTO_LOG_DECADES: f64 = 3.0;

impl AxisScale {
    /// Whether the axis is logarithmic for data whose smallest positive value is
    /// `min_positive` and largest value `max` (both in the data's unit; `None`: no positive
    /// value, which gives a linear axis under `Auto`).
    pub fn is_log(self, min_positive: Option<f64>, max: f64) -> bool {
        match self {
            AxisScale::Linear => false,
            AxisScale::Log => true,
            AxisScale::Auto => {
                min_positive.is_some_and(|lo| max > 0.0 && (max / lo).log10() >= AUTO_LOG_DECADES)
            }
        }
    }
}

/// One axis in chart coordinates (already `log10` for a logarithmic axis), with its ticks.
#[derive(Debug, Clone)]
pub(crate) struct Axis {
    lo: f64,
    hi: f64,
    /// Tick positions in chart coordinates, inside `[lo, hi]`.
    pub ticks: Vec<f64>,
    /// Whether the chart coordinate is `log10` of the value.
    pub log: bool,
    /// Tick step of a linear axis (for label digits); 1 on a logarithmic one.
    step: f64,
}

impl Axis {
    /// A linear axis over `[lo, hi]` (data units) padded by `pad` of the span on each side,
    /// with 1-2-5 ticks (about six).
    pub fn linear(lo: f64, hi: f64, pad: f64) -> Axis {
        let (mut lo, mut hi) = if hi > lo {
            (lo, hi)
        } else if lo == 0.0 {
            (-1.0, 1.0)
        } else {
            (lo - 0.1 * lo.abs(), hi + 0.1 * hi.abs())
        };
        let span = hi - lo;
        lo -= pad * span;
        hi += pad * span;
        let step = nice_step((hi - lo) / 6.0);
        let first = (lo / step).ceil() as i64;
        let last = (hi / step).floor() as i64;
        let ticks = (first..=last).map(|k| k as f64 * step).collect();
        Axis {
            lo,
            hi,
            ticks,
            log: false,
            step,
        }
    }

    /// A logarithmic axis over the positive `[lo, hi]` (data units), padded by `pad` of its
    /// span in decades; ticks at the powers of ten inside (every n-th when there are more
    /// than ten), or at 1, 2 and 5 times them when fewer than three powers fall inside.
    pub fn log(lo: f64, hi: f64, pad: f64) -> Axis {
        let (mut lo, mut hi) = (lo.log10(), hi.log10());
        if hi - lo < 1e-9 {
            lo -= 0.5;
            hi += 0.5;
        }
        let span = hi - lo;
        lo -= pad * span;
        hi += pad * span;
        let first = lo.ceil() as i64;
        let last = hi.floor() as i64;
        let decades = (last - first + 1).max(0) as usize;
        let ticks: Vec<f64> = if decades >= 3 {
            let every = decades.div_ceil(10).max(1);
            (first..=last).step_by(every).map(|k| k as f64).collect()
        } else {
            (lo.floor() as i64..=hi.ceil() as i64)
                .flat_map(|k| [1.0f64, 2.0, 5.0].map(|m| k as f64 + m.log10()))
                .filter(|&t| t >= lo && t <= hi)
                .collect()
        };
        Axis {
            lo,
            hi,
            ticks,
            log: true,
            step: 1.0,
        }
    }

    /// A data value in chart coordinates (`None` when it cannot be drawn: not positive on a
    /// logarithmic axis).
    pub fn to_chart(&self, v: f64) -> Option<f64> {
        if self.log {
            (v > 0.0).then(|| v.log10())
        } else {
            Some(v)
        }
    }

    /// The tick label of chart coordinate `t`.
    pub fn label(&self, t: f64) -> String {
        if self.log {
            let exponent = t.floor();
            let mantissa = 10f64.powf(t - exponent).round();
            format!("{mantissa}e{exponent}")
        } else {
            linear_label(t, self.step, self.lo.abs().max(self.hi.abs()))
        }
    }
}

/// The 1, 2 or 5 times a power of ten nearest above `raw` (> 0).
fn nice_step(raw: f64) -> f64 {
    let raw = if raw > 0.0 && raw.is_finite() {
        raw
    } else {
        1.0
    };
    let power = 10f64.powf(raw.log10().floor());
    let m = raw / power;
    let nice = if m <= 1.0 {
        1.0
    } else if m <= 2.0 {
        2.0
    } else if m <= 5.0 {
        5.0
    } else {
        10.0
    };
    nice * power
}

/// A tick label on a linear axis of step `step` whose values reach `magnitude`: plain
/// decimals with the step's digits, or scientific notation for very large or small values.
fn linear_label(t: f64, step: f64, magnitude: f64) -> String {
    let t = if (t / step).abs() < 1e-9 { 0.0 } else { t };
    if !(1e-2..1e5).contains(&magnitude) {
        let digits = ((magnitude.log10().floor() - step.log10().floor()).max(0.0) as usize).min(6);
        format!("{t:.digits$e}")
    } else {
        let decimals = (-step.log10().floor()).max(0.0) as usize;
        format!("{t:.decimals$}")
    }
}

impl Ranged for Axis {
    type FormatOption = DefaultFormatting;
    type ValueType = f64;

    fn map(&self, value: &f64, limit: (i32, i32)) -> i32 {
        let fraction = (value - self.lo) / (self.hi - self.lo);
        let length = f64::from(limit.1 - limit.0);
        limit.0 + (length * fraction + 1e-3).floor() as i32
    }

    fn key_points<Hint: KeyPointHint>(&self, _hint: Hint) -> Vec<f64> {
        self.ticks.clone()
    }

    fn range(&self) -> Range<f64> {
        self.lo..self.hi
    }
}

/// `text` with control characters replaced by U+FFFD (XML 1.0 cannot hold most of them) and
/// cut to `max` characters (an ellipsis marks the cut).
pub(crate) fn clean_label(text: &str, max: usize) -> String {
    let cleaned: String = text
        .chars()
        .map(|c| if c.is_control() { '\u{FFFD}' } else { c })
        .collect();
    if cleaned.chars().count() > max {
        let mut cut: String = cleaned.chars().take(max.saturating_sub(1)).collect();
        cut.push('\u{2026}');
        cut
    } else {
        cleaned
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nice_steps_are_one_two_five() {
        assert_eq!(nice_step(0.13), 0.2);
        assert_eq!(nice_step(3.0), 5.0);
        assert_eq!(nice_step(7.0), 10.0);
    }

    #[test]
    fn log_ticks_are_the_decades_inside() {
        let a = Axis::log(1e-6, 1e2, 0.0);
        assert_eq!(a.ticks, (-6..=2).map(f64::from).collect::<Vec<_>>());
        assert_eq!(a.label(-3.0), "1e-3");
    }
}
