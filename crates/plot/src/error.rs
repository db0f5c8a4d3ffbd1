//! Why a plot could not be drawn.

/// Why a plot could not be drawn. Nothing is ever drawn from a NaN or an infinity: such a
/// value is refused with the series and position named.
#[derive(Debug, thiserror::Error)]
pub enum PlotError {
    /// A value to plot is NaN or infinite.
    #[error(
        "{what}: value {index} of `{series}` is {value}, not a finite number; nothing was drawn"
    )]
    NonFinite {
        /// Which input (e.g. `time`, `values`, `bar value`).
        what: &'static str,
        /// The series or bar label.
        series: String,
        /// 0-based position of the value in its series.
        index: usize,
        /// The value itself (NaN or an infinity).
        value: f64,
    },
    /// Nothing to draw: no series, no bars or no points.
    #[error("nothing to plot: {0}")]
    Empty(String),
    /// A series does not have one value per time.
    #[error("series `{series}` has {values} values for {times} times")]
    LengthMismatch {
        /// The series label.
        series: String,
        /// Its number of values.
        values: usize,
        /// The number of times.
        times: usize,
    },
    /// A logarithmic axis was asked for data with no positive value.
    #[error("a logarithmic {axis} axis needs a positive value; the data has none")]
    NoPositiveValue {
        /// `time` or `value`.
        axis: &'static str,
    },
    /// The drawing library failed (writing into a string; not expected).
    #[error("drawing failed: {0}")]
    Draw(String),
}

impl PlotError {
    /// A drawing error of plotters, as text.
    pub(crate) fn draw(error: impl std::fmt::Display) -> Self {
        PlotError::Draw(error.to_string())
    }
}
