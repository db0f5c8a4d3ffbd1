//! # stoik-mechanism
//!
//! The mechanism model of stoik and its text formats: species, elements and steps held in SI
//! units ([`Mechanism`]), the TOML mechanism file format (version 1), the scenario file that says
//! what to run, and their validation, which reports every problem of a file at once with
//! file:line:column.
//!
//! This crate never evaluates a rate: it converts units once, at load, and checks the input.

#![warn(missing_docs)]

pub mod diagnostics;
pub mod elements;
pub mod equation;
pub mod mechanism_file;
pub mod model;
pub mod scenario;
pub mod scenario_box;
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
pub use scenario::{
    load_scenario, parse_scenario, IgnitionChoice, LinearAlgebraChoice, OutputTimes, ReactorKind,
    ResolvedScenario, Scenario,
};
pub use scenario_box::{PhotolysisForm, ResolvedBox, Sun};
pub use suggest::nearest_name;
pub use thermo_file::{load_thermo, parse_thermo, ThermoEntry, ThermoFile};
pub use units::ConcentrationUnit;

/// Molar gas constant R in J/(mol K) (SI 2019 exact value, CODATA).
pub const GAS_CONSTANT: f64 = 8.314462618;
/// Avogadro constant N_A in 1/mol (SI 2019 exact value).
pub const AVOGADRO: f64 = 6.02214076e23;
/// Boltzmann constant k_B in J/K (SI 2019 exact value).
pub const BOLTZMANN: f64 = 1.380649e-23;
