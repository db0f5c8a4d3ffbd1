//! # stoik-diff
//!
//! What changed, kinetically, between two mechanisms ([`diff_mechanisms`]): species added,
//! removed, or with another composition or thermochemistry (with the change of H(298.15 K) and
//! G(1000 K)); steps matched by their canonical equation ([`canonical_equation`]), never by
//! position, and reported added, removed or changed, a changed one with what differs
//! ([`StepAspect`]) and the ratios k_new/k_old of its compiled rate constants at chosen
//! temperatures and bath-gas pressures ([`RateRatio`]). A rewrite (steps or species
//! reordered, terms swapped, units converted, comments edited) has no edit.
//!
//! Every edit is a typed value ([`Edit`]) with its indices in both mechanisms, and
//! [`revert`] builds the new mechanism with one edit taken back, so that the effect of each
//! edit can be measured on its own.
//!
//! Either mechanism may come from a file or from a git revision ([`MechanismSource`],
//! [`load_mechanism_source`]). [`diff_report`] writes the diff for people, [`diff_toml`] for
//! machines. SI units throughout.

#![warn(missing_docs)]

mod canonical;
mod compare;
mod edit;
mod error;
mod report;
mod revert;
mod source;

// Comparing two mechanisms.
pub use canonical::canonical_equation;
pub use compare::{
    diff_mechanisms, DiffOptions, DEFAULT_PRESSURES_PA, DEFAULT_RELATIVE_TOLERANCE,
    DEFAULT_TEMPERATURES_K, ENTHALPY_TEMPERATURE_K, GIBBS_TEMPERATURE_K,
};
pub use edit::{
    Collider, Edit, EfficiencyChange, MechanismDiff, RateRatio, StepAspect, ThermoChange,
};
pub use error::{DiffError, Which};

// Taking one edit back.
pub use revert::revert;

// Where mechanisms come from, and the reports.
pub use report::{diff_report, diff_toml, DIFF_FORMAT_VERSION};
pub use source::{load_mechanism_source, MechanismSource};
