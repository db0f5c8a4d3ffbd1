//! # stoik-mechanism
//!
//! The mechanism model of stoik and its text formats: species, elements and steps held in SI
//! units ([`Mechanism`]), the TOML mechanism and thermo file formats (version 1), and their
//! validation, which reports every problem of a file at once with file:line:column. The
//! scenario format (what to run) lives in `stoik-scenario`, which reads its file with the
//! same located-diagnostics helpers ([`Report`]).
//!
//! This crate never evaluates a rate: it converts units once, at load, and checks the input.
//! A [`Mechanism`] built by hand is checked with [`Mechanism::validate`].

#![warn(missing_docs)]

mod constants;
mod diagnostics;
mod elements;
mod equation;
mod input;
mod mechanism_file;
mod model;
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
pub use input::{read_input_text, text_from_bytes, InputError, MAX_INPUT_BYTES};
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

// Reading helpers for span-keeping TOML trees with located diagnostics, shared with the
// scenario reader of `stoik-scenario`.
pub use toml_walk::{
    non_negative_finite_problem, parse_document, positive_finite_problem, show_number, type_name,
    value_as_number, Report, Value as SpannedValue,
};
