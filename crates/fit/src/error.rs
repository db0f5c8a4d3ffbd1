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
    #[error("{points} data point(s) ({}) cannot determine {parameters} parameters: at least {needed} are needed{}", line_list(lines), if *weighted { "" } else { " (one more than the parameters, to estimate the scatter; or give an `uncertainty` column)" })]
    TooFewPoints {
        /// Number of points.
        points: usize,
        /// 1-based lines of the points in the data file.
        lines: Vec<usize>,
        /// Number needed.
        needed: usize,
        /// Number of parameters.
        parameters: usize,
        /// Whether the points have uncertainties.
        weighted: bool,
    },
    /// Too few distinct temperatures for the model.
    #[error("the points ({}) are at {distinct} distinct temperature(s) ({}): a {parameters}-parameter fit needs at least {parameters}", line_list(lines), temperatures_k.iter().map(|t| format!("{t} K")).collect::<Vec<_>>().join(", "))]
    TooFewTemperatures {
        /// 1-based lines of the points in the data file.
        lines: Vec<usize>,
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
    #[error(
        "the fitted {quantity} is {value}, not a finite number{}; no snippet is written",
        driver_text(driver)
    )]
    NonFinite {
        /// Which value (`prefactor`, `temperature_exponent`, `activation_energy`).
        quantity: String,
        /// The point whose rate constant drives the value out of range (the largest measured
        /// k for an overflow), when the fit has points.
        driver: Option<Driver>,
        /// The value (NaN or infinite), in the snippet's units.
        value: f64,
    },
    /// A fitted value that must be positive in the mechanism snippet is not (e.g. a
    /// prefactor that underflows to 0 in the snippet's units).
    #[error("the fitted {quantity} is {value:e} in the snippet's units, not positive (it underflows){}; no snippet is written", driver_text(driver))]
    NotPositive {
        /// Which value (`prefactor`).
        quantity: String,
        /// The point whose rate constant drives the value out of range (the smallest measured
        /// k for an underflow), when the fit has points.
        driver: Option<Driver>,
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

/// The data point that drives a fitted value out of the range of `f64`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Driver {
    /// 1-based line of the point in the data file.
    pub line: usize,
    /// Its measured rate constant in SI, (m3/mol)^(m-1)/s.
    pub rate_constant_si: f64,
}

impl RateFitError {
    /// The 1-based line of the data file to look at first, for errors about the data set as a
    /// whole (too few points or temperatures, a fitted value out of range); `None` for the
    /// others (`Invalid` locates each of its problems itself).
    pub fn line(&self) -> Option<usize> {
        match self {
            RateFitError::TooFewPoints { lines, .. }
            | RateFitError::TooFewTemperatures { lines, .. } => lines.first().copied(),
            RateFitError::NonFinite { driver, .. } | RateFitError::NotPositive { driver, .. } => {
                driver.map(|d| d.line)
            }
            _ => None,
        }
    }
}

/// `line 4`, `lines 2-3` or `lines 2, 5-7, 9` (runs of consecutive lines joined); `no rows`
/// when empty.
fn line_list(lines: &[usize]) -> String {
    let mut runs: Vec<(usize, usize)> = Vec::new();
    for &l in lines {
        match runs.last_mut() {
            Some((_, end)) if l == *end + 1 => *end = l,
            _ => runs.push((l, l)),
        }
    }
    let text: Vec<String> = runs
        .iter()
        .map(|&(a, b)| {
            if a == b {
                a.to_string()
            } else {
                format!("{a}-{b}")
            }
        })
        .collect();
    match lines.len() {
        0 => "no rows".to_string(),
        1 => format!("line {}", text[0]),
        _ => format!("lines {}", text.join(", ")),
    }
}

/// `, driven by the rate constant 1e300 (SI) at line 7` or nothing.
fn driver_text(driver: &Option<Driver>) -> String {
    match driver {
        Some(d) => format!(
            ", driven by the rate constant {:e} (SI) at line {}",
            d.rate_constant_si, d.line
        ),
        None => String::new(),
    }
}
