//! The one error type of the crate.

use stoik_mechanism::Diagnostics;

/// Example rate-constant units, shown in messages.
pub(crate) const RATE_CONSTANT_UNIT_EXAMPLES: &str =
    "`s-1`, `cm3 mol-1 s-1`, `cm3 molecule-1 s-1`, `dm3 mol-1 s-1`, `L mol-1 s-1`, `m3 mol-1 s-1`, `cm6 molecule-2 s-1`";

/// Why rate data could not be read, fitted, written or plotted.
///
/// (Named apart from `stoik_thermo::FitError`, which reports failed thermodynamic fits.)
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum RateFitError {
    /// The data file could not be read at all.
    #[error("{file}: cannot read file: {reason}")]
    Io {
        /// The path as given.
        file: String,
        /// The operating system's message.
        reason: String,
    },
    /// The data file has problems; each is located at file:line:column.
    #[error("{diagnostics}")]
    Invalid {
        /// Every problem found, in file order.
        diagnostics: Diagnostics,
    },
    /// A text given as a rate-constant unit is not one.
    #[error("`{text}` is not a rate-constant unit ({reason}): expected (volume/amount)^(m-1)/time, e.g. {RATE_CONSTANT_UNIT_EXAMPLES}")]
    BadUnit {
        /// The text as given.
        text: String,
        /// What is wrong with it.
        reason: String,
    },
    /// Too few points for the model.
    #[error("{points} data point(s) cannot determine {parameters} parameters: at least {needed} are needed{}", if *weighted { "" } else { " (one more than the parameters, to estimate the scatter; or give an `uncertainty` column)" })]
    TooFewPoints {
        /// Number of points.
        points: usize,
        /// Number needed.
        needed: usize,
        /// Number of parameters.
        parameters: usize,
        /// Whether the points have uncertainties.
        weighted: bool,
    },
    /// Too few distinct temperatures for the model.
    #[error("the points are at {distinct} distinct temperature(s) ({}): a {parameters}-parameter fit needs at least {parameters}", temperatures_k.iter().map(|t| format!("{t} K")).collect::<Vec<_>>().join(", "))]
    TooFewTemperatures {
        /// Number of distinct temperatures.
        distinct: usize,
        /// Number of parameters.
        parameters: usize,
        /// The distinct temperatures, K.
        temperatures_k: Vec<f64>,
    },
    /// The design matrix is numerically rank-deficient.
    #[error(
        "the temperatures do not separate the parameters (rank-deficient least-squares problem)"
    )]
    Degenerate,
    /// A fitting option is out of range, the data mixes points with and without
    /// uncertainties, or a hand-built point has a non-positive or non-finite value.
    #[error("{0}")]
    BadOption(String),
    /// A fitted value to be written in the mechanism snippet is NaN or infinite (e.g. a
    /// prefactor beyond the range of `f64`); stoik writes finite numbers only.
    #[error("the fitted {quantity} is {value}, not a finite number; no snippet is written")]
    NonFinite {
        /// Which value (`prefactor`, `temperature_exponent`, `activation_energy`).
        quantity: String,
        /// The value (NaN or infinite), in the snippet's units.
        value: f64,
    },
    /// A fitted value that must be positive in the mechanism snippet is not (e.g. a
    /// prefactor that underflows to 0 in the snippet's units).
    #[error("the fitted {quantity} is {value:e} in the snippet's units, not positive (it underflows); no snippet is written")]
    NotPositive {
        /// Which value (`prefactor`).
        quantity: String,
        /// The value (zero or negative), in the snippet's units.
        value: f64,
    },
    /// The equation given for the mechanism snippet cannot be used.
    #[error("equation `{equation}`: {message}")]
    Equation {
        /// The equation as given.
        equation: String,
        /// What is wrong.
        message: String,
    },
    /// The plot could not be drawn (a value to plot is not finite, or the plotting library
    /// failed).
    #[error("cannot draw the plot: {0}")]
    Plot(String),
}
