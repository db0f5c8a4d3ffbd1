//! # stoik-scenario
//!
//! The scenario file of stoik (TOML, format version 1: which mechanism to run, in which
//! reactor, from which initial state, with which output times and solver settings) and
//! scenario runs as library calls.
//!
//! - [`parse_scenario`] / [`load_scenario`] read the file into a [`Scenario`] (SI units,
//!   species still named), reporting every problem at once with file:line:column.
//! - A [`RunPlan`] matches a scenario against its mechanism and resolves it, in one place,
//!   into the reactor's terms: [`stoik_reactor::ReactorModel`], initial concentrations,
//!   output times, [`stoik_reactor::IntegrationOptions`] and the ignition criterion.
//!   Command-line style overrides (temperature, pressure, end time, tolerances, linear
//!   algebra) are methods of the plan.
//! - [`RunPlan::run`] and [`run_scenario`] run one plan; [`run_batch`] runs many in parallel
//!   over mechanisms compiled once ([`load_plans`] shares them). Each run returns a
//!   [`RunOutcome`]: the profiles (or the failure with its partial profile), the ignition
//!   delay, the drift of the conservation laws and every warning ([`RunWarning`]: the
//!   scenario's and mechanism's own, and thermochemistry used outside its fitted range).
//!
//! A process model runs a bundled scenario with one call:
//!
//! ```
//! // The bundled `mechanisms/robertson.scenario.toml`; give your own file's path.
//! # let path = stoik_testsupport::mechanism_path("robertson.scenario.toml");
//! let outcome = stoik_scenario::run_scenario(&path).expect("the bundled scenario runs");
//! let profiles = outcome.result.expect("the integration completes");
//! let last = profiles.concentrations_mol_per_m3.last().expect("rows");
//! // Robertson's problem at t = 1e11 s: y3 = 0.9999999791665050 (reference solution of
//! // Mazzia & Magherini, Test Set for IVP Solvers, release 2.4).
//! assert_eq!(profiles.times_s.last(), Some(&1e11));
//! assert!((last[2] - 0.9999999791665050).abs() < 1e-9);
//! ```

#![warn(missing_docs)]

mod box_sections;
mod error;
mod file;
mod network_file;
mod plan;
mod plug_section;
mod read;
mod run;
mod sections;
mod vessel_sections;

pub use error::ScenarioError;
pub use file::{
    is_scenario_text, kind_label, linear_algebra_from_name, load_scenario, parse_scenario,
    profile_bytes, OutputTimes, Scenario, LINEAR_ALGEBRA_NAMES, MAX_END_TIME_S, MAX_GRID_POINTS,
    MAX_PROFILE_BYTES, MOLE_FRACTION_SUM_TOLERANCE, PRESSURE_RANGE_PA, REACTOR_KINDS,
    SCENARIO_FORMAT_VERSION, TEMPERATURE_RANGE_K,
};
pub use network_file::{
    is_network_scenario_text, load_network_scenario, parse_network_scenario, NetworkPlan,
    NetworkScenario, TANK_ENERGY_NAMES,
};
pub use plan::{Composition, RunPlan};
pub use run::{
    load_plans, run_batch, run_scenario, thermo_range_warnings, ConservationCheck, RunOutcome,
    RunWarning,
};

#[cfg(test)]
mod tests;
