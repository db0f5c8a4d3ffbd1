//! Which steps control a run: rates of production and element-flux paths.
//!
//! The analysis starts from a [`RunPlan`](stoik_scenario::RunPlan) and a list of
//! [`Span`]s (instants and time windows). [`step_rates`] runs the plan once and returns the
//! net rate of progress of every step at each span:
//! - at an instant `t` (s): `q_j(t)` in mol/(m3 s), from the state at an output time placed
//!   exactly at `t` and the rate constants the reactor uses there (temperature, pressure
//!   factors, photolysis J(t));
//! - over a window `[t1, t2]` (s): the integral of `q_j` in mol/m3, located on the solver's
//!   own steps ([`stoik_reactor::Watch::WindowIntegral`] of
//!   [`stoik_reactor::Quantity::StepRate`]): three-point Gauss-Legendre quadrature of the
//!   solver's interpolant on the part of each step inside the window, so accurate to the
//!   integration tolerance whatever the output grid.
//!
//! From those:
//! - [`species_budget`]: each step's contribution `nu_ij q_j` to the net chemical
//!   production rate of species `i` (or to its integral over a window), production and
//!   consumption ranked apart, with shares of their totals.
//! - [`element_transfers`] and [`flux_graph`]: the flow of one element's atoms from species
//!   to species through each step, normalized to the largest edge and cut at a relative
//!   threshold; [`to_dot`] writes it as Graphviz DOT text (the crate `stoik-plot` draws it
//!   as SVG).
//!
//! Which rate constants matter (local sensitivities, see `stoik_reactor`'s sensitivity
//! functions for the equations):
//! - [`observable_sensitivity`]: `dG/d ln k` and `d ln G/d ln k` of one [`Observable`] (a
//!   final or peak value, a peak time, the ignition delay) for every step, by the forward or
//!   the adjoint [`Method`], ranked by magnitude;
//! - [`profile_sensitivities`]: `dy/d ln k` of every species and the temperature at the
//!   plan's output times (forward).
//!
//! Box-model terms that are not steps (emissions, deposition, fixed species) and the
//! dilution of a constant-pressure reactor are not part of the budgets: they list chemical
//! production only, which sums to [`stoik_kinetics::Kinetics::production_rates`].

#![warn(missing_docs)]

mod budget;
mod dot;
mod error;
mod flux;
mod rates;
mod sensitivity;

pub use budget::{species_budget, Contribution, SpeciesBudget};
pub use dot::{step_label, to_dot};
pub use error::AnalysisError;
pub use flux::{
    element_index, element_transfers, flux_graph, ElementTransfer, FluxEdge, FluxGraph,
    DEFAULT_THRESHOLD,
};
pub use rates::{species_index, step_rates, step_rates_at_state, Span, StepRates};
pub use sensitivity::{
    observable_sensitivity, observable_sensitivity_with, profile_sensitivities,
    EnthalpySensitivity, ExtraParameters, LimitSensitivity, Method, Observable,
    ObservableSensitivity, ProfileSensitivities, StateQuantity, StepSensitivity, MAX_FORWARD_STATE,
    MAX_PROFILE_VALUES,
};
