//! # stoik-mechanism
//!
//! The mechanism model of stoik and its text formats: species, elements and steps held in SI
//! units ([`Mechanism`]), the TOML mechanism file format (version 1), the scenario file that says
//! what to run, and their validation, which reports every problem of a file at once with
//! file:line:column.
//!
//! This crate never evaluates a rate: it converts units once, at load, and checks the input.
//! A [`Mechanism`] built by hand is checked with [`Mechanism::validate`].

#![warn(missing_docs)]

mod constants;
mod diagnostics;
mod elements;
mod equation;
mod mechanism_file;
mod model;
pub mod scenario;
pub mod scenario_box;
mod suggest;
mod thermo_file;
mod toml_walk;
mod units;
mod validate;

// The mechanism model (SI units) and its check.
pub use model::{
    Arrhenius, Broadening, Element, Mechanism, PressureDependence, PressurePoint, SourceLocation,
    Species, Step, StoichTerm, ThirdBody,
};
pub use validate::{MechanismItem, MechanismProblem};

// Reading files: mechanisms, thermo files, and what they report.
pub use diagnostics::{Diagnostic, Diagnostics, LoadError, Severity};
pub use mechanism_file::{
    load_mechanism, parse_mechanism, parse_mechanism_in, MechanismFile, MECHANISM_FORMAT_VERSION,
};
pub use thermo_file::{
    load_thermo, parse_thermo, ThermoEntry, ThermoFile, CONTINUITY_TOLERANCE, THERMO_FORMAT_VERSION,
};

// The building blocks of the formats: equations, element data, units, near-miss names.
pub use elements::standard_atomic_weight_kg_per_mol;
pub use equation::{parse_equation, EquationError, EquationTerm, ParsedEquation};
pub use suggest::nearest_name;
pub use units::{
    pressure_to_pa, split_quantity, temperature_to_k, time_to_s, AmountUnit, ConcentrationUnit,
    EnergyUnit, LengthUnit, RateUnits, TimeUnit, PRESSURE_UNITS, SCENARIO_TIME_UNITS,
    TEMPERATURE_UNITS,
};

// Constants: physical ones (the items of stoik-thermo) and the collision limit.
pub use constants::{AVOGADRO, BOLTZMANN, COLLISION_LIMIT_M3_PER_MOL_S, GAS_CONSTANT};

// The scenario format (what to run).
pub use scenario::{
    load_scenario, parse_scenario, IgnitionChoice, LinearAlgebraChoice, OutputTimes, ReactorKind,
    ResolvedScenario, Scenario,
};
pub use scenario_box::{PhotolysisForm, ResolvedBox, Sun};
