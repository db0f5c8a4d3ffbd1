//! stoik's thermochemistry.
//!
//! * [`Nasa7`]: the two-range, 7-coefficient polynomial form of McBride, Gordon & Reno
//!   (1993), NASA TM-4513, for the heat capacity, enthalpy and entropy of an ideal-gas
//!   species at the standard pressure [`P_STANDARD_PA`] = 1e5 Pa.
//! * [`fit_nasa7`]: a joint, weighted, equality-constrained linear least-squares fit of
//!   such polynomials to tabulated cp, H - H(298.15 K) and S.
//! * [`read_janaf_tsv`]: a reader for NIST-JANAF tables (M. W. Chase Jr., *NIST-JANAF
//!   Thermochemical Tables*, 4th ed., J. Phys. Chem. Ref. Data Monograph 9, 1998)
//!   stored as tab-separated text.
//! * [`thermo_file_entry`]: fitted polynomials as a stoik thermo file; [`toml_float`] is the
//!   number form of every TOML file stoik writes (shortest digits that read back exactly).
//!
//! Units are SI throughout (K, J/mol, J/(mol K), Pa); every name that carries a
//! dimensional quantity says its unit, except the physical constants [`GAS_CONSTANT`],
//! [`AVOGADRO`] and [`BOLTZMANN`] (defined here once for all of stoik), whose documentation
//! gives it.
#![warn(missing_docs)]

mod constants;
mod error;
mod fit;
mod janaf;
mod nasa7;
mod write;

pub use constants::{AVOGADRO, BOLTZMANN, GAS_CONSTANT};
pub use error::FitError;
pub use fit::{fit_nasa7, Nasa7Fit, ThermoPoint, MIN_POINTS_PER_RANGE};
pub use janaf::{read_janaf_tsv, JanafRow, JanafTable};
pub use nasa7::Nasa7;
pub use write::{
    thermo_file_entry, thermo_file_header, toml_comment_text, toml_float, toml_string,
    PLAIN_DECIMAL_BELOW, PLAIN_DECIMAL_FROM,
};

/// Standard-state pressure in Pa (1 bar) to which the polynomials' entropy and Gibbs
/// energy refer.
pub const P_STANDARD_PA: f64 = 1.0e5;

/// Reference temperature in K (298.15 K) at which formation enthalpies are given and
/// at which H - H(298.15) vanishes.
pub const T_REFERENCE_K: f64 = 298.15;
