//! Typed errors of the thermochemistry crate.

use thiserror::Error;

/// Everything that can go wrong when building, fitting or reading thermochemical data.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum FitError {
    /// Fewer usable table points than the fit needs.
    #[error("too few table points: {found} given, at least {needed} needed")]
    TooFewPoints {
        /// Number of points given (temperatures above 0 K).
        found: usize,
        /// Minimum number of points required.
        needed: usize,
    },
    /// The points do not cover both temperature ranges (below and above the common
    /// temperature) with enough points each.
    #[error(
        "table points do not cover both ranges around t_mid = {t_mid_k} K: \
         {below} point(s) at or below, {above} at or above, at least {needed} needed in each"
    )]
    RangesNotCovered {
        /// The common (middle) temperature in K.
        t_mid_k: f64,
        /// Number of points with T <= t_mid.
        below: usize,
        /// Number of points with T >= t_mid.
        above: usize,
        /// Minimum number of points required in each range.
        needed: usize,
    },
    /// An input value is NaN or infinite where a finite number is required.
    #[error("non-finite input: {what}")]
    NonFiniteInput {
        /// Which value (and at which temperature) was not finite.
        what: String,
    },
    /// A value to be written is NaN or infinite: stoik writes finite numbers only.
    #[error("cannot write a non-finite number: {what}")]
    NonFiniteOutput {
        /// Which value (key and position) was not finite.
        what: String,
    },
    /// A temperature is zero or negative, or the temperature limits are out of order.
    #[error("invalid temperature: {what}")]
    InvalidTemperature {
        /// Description of the offending temperature(s).
        what: String,
    },
    /// The least-squares system or its constraints are rank deficient.
    #[error("singular system: {what}")]
    Singular {
        /// Which part of the solve was rank deficient.
        what: String,
    },
    /// A line of a JANAF table could not be parsed.
    #[error("JANAF table, line {line}, column {column}: {message}")]
    Parse {
        /// 1-based line number in the text.
        line: usize,
        /// 1-based column (in characters) of the offending cell, or where a missing one
        /// would start.
        column: usize,
        /// What was wrong with the line.
        message: String,
    },
    /// A JANAF table lacks a usable row at the 298.15 K reference temperature: none, or one
    /// whose entropy or formation enthalpy is not finite. Located at that row, or at the
    /// header line when there is none.
    #[error("JANAF table, line {line}, column {column}: {message}")]
    MissingReferenceRow {
        /// 1-based line number.
        line: usize,
        /// 1-based column (in characters).
        column: usize,
        /// What is missing.
        message: String,
    },
}
