//! # stoik-fit
//!
//! Rate-parameter fitting: Arrhenius parameters from measured rate constants, with honest
//! uncertainties.
//!
//! Internally everything is SI: rate constants in (m3/mol)^(m-1)/s for a reaction of overall
//! order m, activation energies in J/mol, temperatures in K, pressures in Pa.
//!
//! ## Contents
//!
//! **Reading data.** [`parse_rate_data`] / [`load_rate_data`] read a CSV of temperatures and
//! rate constants with units (optionally per-point uncertainties and pressures) into
//! [`RateData`] of [`RatePoint`]s; the [`RateConstantUnit`] of the `rate_constant` column
//! gives the reaction order, and [`UncertaintyKind`] says how the `uncertainty` column is read.
//! Every problem is reported at once at file:line:column.
//!
//! **Fitting.** [`fit_rate_constants`] fits ln k by weighted linear least squares in the form
//! chosen by [`Model`] and [`FitOptions`]. The [`RateFit`] holds the parameters and their
//! covariance (a [`ParameterMatrix`]), where the scatter came from ([`Scatter`]), each
//! [`Residual`], the form about a reference temperature ([`ReferenceForm`]), the confidence
//! band ([`BandPoint`]) and [`FitWarning`]s with their numbers.
//!
//! **Output.** [`report_text`], [`mechanism_snippet`] and [`svg_plot`] turn a fit into a printed
//! report, a `[[step]]` ready to paste into a mechanism file, and a plot of ln k against
//! 1000 K/T.
//!
//! **Errors and limits.** Every fallible call returns a [`RateFitError`];
//! [`COLLISION_LIMIT_M3_PER_MOL_S`] is the gas-kinetic limit the fit warns about.
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

mod data;
mod error;
mod fit;
mod least_squares;
mod matrix;
mod model;
mod plot;
mod read;
mod report;
mod result;
mod snippet;
mod stats;
mod text;
mod units;
mod warnings;

pub use data::{RateData, RatePoint, UncertaintyKind};
pub use error::{Driver, RateFitError};
pub use fit::{
    fit_rate_constants, CONFIDENCE_RANGE, DATA_TEMPERATURE_RANGE_K, LN_UNCERTAINTY_RANGE,
    REFERENCE_TEMPERATURE_RANGE_K,
};
pub use matrix::ParameterMatrix;
pub use model::{FitOptions, Model};
pub use plot::svg_plot;
pub use read::{load_rate_data, parse_rate_data};
pub use report::report_text;
pub use result::{BandPoint, RateFit, ReferenceForm, Residual, Scatter, MAX_BAND_POINTS};
pub use snippet::mechanism_snippet;
pub use units::{DataLengthUnit, RateConstantUnit};
pub use warnings::{FitWarning, COLLISION_LIMIT_M3_PER_MOL_S};

#[cfg(test)]
mod tests;
