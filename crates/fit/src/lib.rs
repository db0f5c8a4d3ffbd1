//! # stoik-fit
//!
//! Rate-parameter fitting: Arrhenius parameters from measured rate constants, with honest
//! uncertainties.
//!
//! - [`parse_rate_data`] / [`load_rate_data`] read a CSV of temperatures and rate constants
//!   with units (and optionally per-point uncertainties and pressures); the rate constant's
//!   unit gives the reaction order. Every problem is reported at once at file:line:column.
//! - [`fit_rate_constants`] fits ln k by linear least squares: the two-parameter form
//!   (ln k on 1/T) or the modified form with a temperature exponent (ln k on 1, ln T, 1/T),
//!   weighted by the uncertainties when given. The [`RateFit`] holds the parameters, their
//!   covariance, the residuals with studentized residuals, the form about a reference
//!   temperature, and [`FitWarning`]s with their numbers.
//! - [`report_text`], [`mechanism_snippet`] and [`svg_plot`] turn a fit into a printed report,
//!   a `[[step]]` ready to paste into a mechanism file, and a plot of ln k against 1000/T.
//!
//! Internally everything is SI: rate constants in (m3/mol)^(m-1)/s, Ea in J/mol, T in K.
//!
//! ```
//! use stoik_fit::{fit_rate_constants, parse_rate_data, FitOptions};
//!
//! // A first-order rate constant that doubles between 298.15 K and 308.15 K.
//! let csv = "temperature [K], rate_constant [s-1]\n298.15, 1.0\n308.15, 2.0\n";
//! let data = parse_rate_data(csv, "<inline>").unwrap();
//! let mut options = FitOptions::default();
//! // Two points and two parameters leave no scatter to estimate: state an uncertainty or
//! // expect an error.
//! assert!(fit_rate_constants(&data, &options).is_err());
//! let csv = "temperature [K], rate_constant [s-1], uncertainty [%]\n298.15, 1.0, 5\n308.15, 2.0, 5\n";
//! let data = parse_rate_data(csv, "<inline>").unwrap();
//! options.confidence = 0.95;
//! let fit = fit_rate_constants(&data, &options).unwrap();
//! // Ea = R ln 2 / (1/298.15 - 1/308.15) = 52.9489 kJ/mol.
//! assert!((fit.activation_energy_j_per_mol() / 1e3 - 52.9489).abs() < 1e-4);
//! ```

#![warn(missing_docs)]

pub mod data;
pub mod fit;
pub mod output;
pub mod stats;

pub use data::{
    load_rate_data, parse_rate_data, RateConstantUnit, RateData, RatePoint, UncertaintyKind,
    COLLISION_LIMIT_M3_PER_MOL_S,
};
pub use fit::{
    fit_rate_constants, BandPoint, FitOptions, FitWarning, Model, RateFit, ReferenceForm, Residual,
    Scatter,
};
pub use output::{mechanism_snippet, report_text, svg_plot};

#[cfg(test)]
mod tests;

use stoik_mechanism::Diagnostics;

/// Why data could not be read or fitted.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum FitError {
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
    /// A fitting option is out of range, or the data mixes points with and without
    /// uncertainties.
    #[error("{0}")]
    BadOption(String),
    /// A fitted value to be written in the mechanism snippet is NaN or infinite (e.g. a
    /// prefactor beyond the range of `f64`); stoik writes finite numbers only.
    #[error("the fitted {quantity} is {value}, not a finite number; no snippet is written")]
    NonFinite {
        /// Which value (`prefactor`, `temperature_exponent`, `activation_energy`).
        quantity: String,
        /// The value (NaN or infinite).
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
}
