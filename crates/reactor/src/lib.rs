//! # stoik-reactor
//!
//! Closed batch reactors integrated in time with diffsol's BDF method.
//!
//! A [`ReactorModel`] says what is held constant (volume or pressure) and how the
//! temperature evolves (held, solved from the energy balance, or prescribed as a
//! piecewise-linear history); see the `model` module's equations. The state is the vector of
//! molar concentrations `c` (mol/m3, in the species order of the mechanism), plus the
//! temperature (K) when the energy balance is solved. The default model is isothermal at
//! constant volume, `dc/dt = w(c)`, with `w` the net production rates of
//! [`stoik_kinetics::Kinetics::production_rates`].
//!
//! - [`simulate`] runs any model from an initial state to a list of output times and returns
//!   [`Profiles`] (concentrations and temperatures, dT/dt, statistics); [`ignition_delay`]
//!   reads an ignition delay off them.
//! - [`integrate`] runs from an initial state to a list of output times and returns
//!   [`Profiles`] (concentrations at exactly those times, plus [`SolverStats`]).
//! - [`BatchSystem`] sets a compiled mechanism up once (kinetics copy, rate constants,
//!   tolerances) for repeated integrations under different conditions.
//! - [`BatchIntegrator`], opened on a [`BatchSystem`], is the stepping interface for process
//!   models (operator splitting): advance to a time, change the state (e.g. add a feed) or the
//!   temperature, continue. It keeps one live solver and does not allocate in steady use.
//!   A stirred tank's residence time and inlet and a jacket's coolant temperature and U A
//!   change on the live session too ([`BatchIntegrator::set_residence_time_s`] and its
//!   siblings; the value in force costs nothing).
//! - [`UserTerms`], attached to a [`BatchSystem`] ([`BatchSystem::set_user_terms`]), add the
//!   user's own sources to the species balances (mol/(m3 s)) and heat to the energy balance
//!   (W/m3), with their Jacobian contributions ([`UserJacobian`]): a unit operation's feeds,
//!   transfers and heat exchange inside the integrator instead of operator splitting.
//! - [`ReactorConservation`] holds the conservation laws of a mechanism in a reactor (element
//!   totals and moieties, with a box model's open species left out; per unit mass at
//!   constant pressure) and measures their drift along a profile against the allowance of
//!   the tolerances ([`ConservationDrift`]).
//! - A [`SemiBatch`] in the model makes the volume (m3) the last state and feeds species or
//!   solutions into the batch over time ([`Feed`], [`FeedSchedule`]); the same volume state
//!   lets a closed jacketed batch at constant pressure exchange heat through a total U A
//!   ([`HeatExchange::total`]). A [`LiquidPhase`] replaces the species' thermochemistry by a
//!   mixture heat capacity and a reaction enthalpy per step. Their Jacobian is dense.
//! - [`steady_state`] solves for the steady state of a stirred tank (damped Newton,
//!   pseudo-transient continuation, time integration as fall-back; dense LU) with the
//!   eigenvalues of its Jacobian; [`continuation`] follows steady states against the
//!   residence time, the feed or the coolant temperature (pseudo-arclength, turning points,
//!   stability of every point).
//! - [`simulate_plug_flow`] runs a steady plug flow ([`PlugFlow`] in
//!   [`ReactorModel::plug`]: mass flow, cross-section and pressure along the tube, wall heat
//!   exchange) as a parcel followed in its residence time, reporting at distances or residence
//!   times ([`PlugFlowProfiles`]).
//! - [`element_balance`] reports the element totals at the start and end of a profile.
//!
//! Numerics (see the design notes): the Jacobian is filled analytically from the kinetics in
//! one pass, into a dense matrix (nalgebra, LU with partial pivoting) for small systems or into
//! the fixed compressed-sparse-column pattern of the kinetics for large ones (factorized by
//! [`stoik_sparse::FixedPatternLu`]: ordering and fill once, allocation-free numeric
//! refactorization with diagonal pivots);
//! [`LinearAlgebra::Auto`] chooses. Tolerances are a scalar relative tolerance and one absolute
//! tolerance per species (mol/m3). Concentrations are never clipped inside the right-hand
//! side; the most negative value seen is reported in [`SolverStats`].
//!
//! Nothing here panics on user data: bad arguments give [`ReactorError`], solver failures give
//! [`IntegrationFailure`] with the profile computed so far.

#![warn(missing_docs)]

mod atmosphere;
mod batch;
mod conservation;
mod equations;
mod error;
mod extended;
mod failure;
mod fixed_lu;
mod ignition;
mod integrator;
mod invariants;
mod model;
mod monitor;
mod network;
mod network_run;
mod network_steady;
mod options;
mod owned;
mod plug;
mod profiles;
mod semibatch;
mod sensitivity;
mod steady;
mod user_terms;
mod watch;

pub use atmosphere::{
    cos_solar_zenith, solar_declination_rad, BoxConditions, PhotolysisForm, PhotolysisRate, Sun,
};
pub use batch::{integrate_batch, integrate_batch_serial, BatchCase, BatchError};
pub use conservation::{
    ConservationBasis, ConservationCheckError, ConservationDrift, ReactorConservation,
    ROUNDING_PER_STEP,
};
pub use error::{
    DrivingStep, FailureKind, FastestComponent, IntegrationError, IntegrationFailure, ReactorError,
    SolverError,
};
pub use ignition::{ignition_delay, IgnitionCriterion, IgnitionDelay};
pub use integrator::{BatchIntegrator, BatchSystem};
pub use model::{Constraint, Energy, HeatExchange, ReactorModel, StirredFlow, TemperatureHistory};
pub use monitor::RunMonitor;
pub use network::{
    NetworkError, NetworkProblem, NetworkProfiles, NetworkTank, Stream, TankNetwork, TankProfile,
    FLOW_BALANCE_TOLERANCE,
};
pub use network_run::simulate_network;
pub use network_steady::{network_steady_state, NetworkSteadyState, TankSteadyState};
pub use options::{
    IntegrationOptions, LinearAlgebra, SolverStats, DENSE_MAX_SPECIES, DENSE_MIN_FILL,
    TOLERANCE_SAFETY_FACTOR,
};
pub use owned::OwnedIntegrator;
pub use plug::{
    simulate_plug_flow, AxialProfile, PlugFlow, PlugFlowProfiles, PlugOutputs, WallExchange,
};
pub use profiles::{element_balance, ElementBalance, Profiles};
pub use semibatch::{Feed, FeedSchedule, FeedStream, LiquidPhase, SemiBatch};
pub use sensitivity::{
    adjoint_parameter_sensitivity, adjoint_sensitivity, forward_parameter_sensitivities,
    forward_sensitivities, AdjointSensitivity, ForwardSensitivities, Parameter, SensitivityError,
    SensitivityStats, Target, TargetSensitivity,
};
pub use steady::{
    continuation, steady_state, Branch, BranchEnd, BranchPoint, ContinuationOptions,
    ContinuationParameter, Stability, SteadyError, SteadyOptions, SteadyPath, SteadyState,
    TurningPoint,
};
pub use user_terms::{UserJacobian, UserTerms};
pub use watch::{Located, Quantity, Watch};

use stoik_kinetics::Kinetics;

/// Integrates the closed isothermal constant-volume batch reactor `dc/dt = w(c)` of
/// `kinetics` at `temperature_k` (K) from `initial_mol_per_m3` (mol/m3, one per species) at
/// `output_times_s[0]` (s), and returns the concentrations at every time of `output_times_s`
/// (finite, strictly increasing; the first row is the initial state).
///
/// One BDF solver runs over the whole interval: it stops exactly at the last output time and
/// interpolates (with its own interpolating polynomial, to the integration's accuracy) at the
/// intermediate ones, so outputs do not shorten steps.
pub fn integrate(
    kinetics: &Kinetics,
    temperature_k: f64,
    initial_mol_per_m3: &[f64],
    output_times_s: &[f64],
    options: &IntegrationOptions,
) -> Result<Profiles, IntegrationError> {
    integrator::integrate(
        kinetics,
        &ReactorModel::default(),
        temperature_k,
        initial_mol_per_m3,
        output_times_s,
        options,
    )
}

/// Integrates the closed batch reactor `model` (constant volume or pressure; isothermal,
/// adiabatic or prescribed temperature; see [`ReactorModel`]) of `kinetics` from
/// `initial_mol_per_m3` (mol/m3, one per species) at `output_times_s[0]` (s) and returns the
/// concentrations and temperatures at every time of `output_times_s` (finite, strictly
/// increasing; the first row is the initial state). `temperature_k` (K) is the held
/// temperature (isothermal) or the initial one (adiabatic); a prescribed model ignores it.
///
/// Pressure, density and mole fractions follow from each row: see [`Profiles::pressure_pa`]
/// and [`Profiles::mole_fractions`].
pub fn simulate(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    initial_mol_per_m3: &[f64],
    output_times_s: &[f64],
    options: &IntegrationOptions,
) -> Result<Profiles, IntegrationError> {
    integrator::integrate(
        kinetics,
        model,
        temperature_k,
        initial_mol_per_m3,
        output_times_s,
        options,
    )
}
