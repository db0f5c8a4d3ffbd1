//! # stoik-mechanism
//!
//! The mechanism model of stoik and its text formats: species, elements and steps held in SI
//! units ([`Mechanism`]), the TOML mechanism and thermo file formats (version 1), and their
//! validation, which reports every problem of a file at once with file:line:column. The
//! scenario format (what to run) lives in `stoik-scenario`, which reads its file with the
//! same located-diagnostics helpers ([`Report`]).
//!
//! This crate never evaluates a rate: it converts units once, at load, and checks the input.

#![warn(missing_docs)]

pub mod diagnostics;
pub mod elements;
pub mod equation;
pub mod mechanism_file;
pub mod model;
pub mod suggest;
pub mod thermo_file;
mod toml_walk;
pub mod units;

pub use diagnostics::{Diagnostic, Diagnostics, LoadError, Severity};
pub use mechanism_file::{load_mechanism, parse_mechanism, parse_mechanism_in, MechanismFile};
pub use model::{
    Arrhenius, Broadening, Element, Mechanism, PressureDependence, PressurePoint, SourceLocation,
    Species, Step, StoichTerm, ThirdBody,
};
pub use suggest::nearest_name;
pub use thermo_file::{load_thermo, parse_thermo, ThermoEntry, ThermoFile};
// Reading helpers for span-keeping TOML trees with located diagnostics, shared with the
// scenario reader of `stoik-scenario`.
pub use toml_walk::{
    non_negative_finite_problem, parse_document, positive_finite_problem, show_number, type_name,
    value_as_number, Report, Value as SpannedValue,
};
pub use units::ConcentrationUnit;

/// Molar gas constant R in J/(mol K) (SI 2019 exact value, CODATA).
pub const GAS_CONSTANT: f64 = 8.314462618;
/// Avogadro constant N_A in 1/mol (SI 2019 exact value).
pub const AVOGADRO: f64 = 6.02214076e23;
/// Boltzmann constant k_B in J/K (SI 2019 exact value).
pub const BOLTZMANN: f64 = 1.380649e-23;
