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
//! - [`ReactorConservation`] holds the conservation laws of a mechanism in a reactor (element
//!   totals and moieties, with a box model's open species left out; per unit mass at
//!   constant pressure) and measures their drift along a profile against the allowance of
//!   the tolerances ([`ConservationDrift`]).
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
mod failure;
mod fixed_lu;
mod ignition;
mod integrator;
mod invariants;
mod model;
mod watch;

pub use atmosphere::{
    cos_solar_zenith, solar_declination_rad, BoxConditions, PhotolysisForm, PhotolysisRate, Sun,
};
pub use batch::{integrate_batch, integrate_batch_serial, BatchCase, BatchError};
pub use conservation::{
    ConservationBasis, ConservationCheckError, ConservationDrift, ReactorConservation,
    ROUNDING_PER_STEP,
};
pub use ignition::{ignition_delay, IgnitionCriterion, IgnitionDelay};
pub use integrator::{BatchIntegrator, BatchSystem};
pub use model::{Constraint, Energy, ReactorModel, TemperatureHistory};
pub use watch::{Located, Quantity, Watch};

use stoik_kinetics::Kinetics;
use stoik_mechanism::Mechanism;

/// Largest number of species for which [`LinearAlgebra::Auto`] picks dense linear algebra
/// regardless of fill. Set by the `dense_vs_sparse` benchmark (benches/README.md) with the
/// fixed-pattern sparse LU: on hub-structured synthetic mechanisms sparse/dense time is 1.05
/// at 25 species, 0.73 at 50, 0.45 at 100, 0.21 at 200 and 0.08 at 400, so the crossover lies
/// between 25 and 50 species.
pub const DENSE_MAX_SPECIES: usize = 40;

/// Jacobian fill fraction (stored entries / n^2) above which [`LinearAlgebra::Auto`] picks
/// dense linear algebra at any size: a sparse LU gains little on a matrix that full.
/// Provisional, like [`DENSE_MAX_SPECIES`].
pub const DENSE_MIN_FILL: f64 = 0.3;

/// Linear algebra for the Newton iterations of the BDF method.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum LinearAlgebra {
    /// Dense when the mechanism has at most [`DENSE_MAX_SPECIES`] species or its Jacobian
    /// pattern is fuller than [`DENSE_MIN_FILL`]; sparse otherwise.
    #[default]
    Auto,
    /// Dense matrices (nalgebra) and dense LU with partial pivoting.
    Dense,
    /// Compressed-sparse-column matrices on the kinetics' Jacobian pattern and stoik's own
    /// fixed-pattern sparse LU ([`stoik_sparse::FixedPatternLu`]): ordering and fill pattern
    /// computed once per solver, then per Newton matrix a numeric refactorization with
    /// diagonal pivots (falling back to faer's pivoting sparse LU for that one matrix when a
    /// pivot is tiny).
    Sparse,
    /// The same sparse matrices with faer's sparse LU (diffsol's `FaerSparseLU`: partial
    /// pivoting, which redoes its symbolic work at every numeric factorization). Only with
    /// the `bench-internals` feature, for the comparison benchmark; on hub-structured
    /// mechanisms it is much slower than [`LinearAlgebra::Sparse`] (benches/README.md,
    /// "Sparse LU: fixed-pattern refactorization vs faer").
    #[cfg(feature = "bench-internals")]
    SparseFaer,
}

impl LinearAlgebra {
    /// The concrete choice ([`LinearAlgebra::Dense`] or [`LinearAlgebra::Sparse`]) for
    /// `kinetics`; the other choices are returned unchanged.
    pub fn resolve(self, kinetics: &Kinetics) -> LinearAlgebra {
        match self {
            LinearAlgebra::Auto => {
                let n = kinetics.n_species();
                let fill = kinetics.jacobian_pattern().fill_fraction();
                if n <= DENSE_MAX_SPECIES || fill > DENSE_MIN_FILL {
                    LinearAlgebra::Dense
                } else {
                    LinearAlgebra::Sparse
                }
            }
            other => other,
        }
    }

    /// Whether this choice uses sparse matrices.
    pub(crate) fn is_sparse(self) -> bool {
        match self {
            LinearAlgebra::Sparse => true,
            #[cfg(feature = "bench-internals")]
            LinearAlgebra::SparseFaer => true,
            _ => false,
        }
    }
}

/// Settings of one integration.
#[derive(Debug, Clone, PartialEq)]
pub struct IntegrationOptions {
    /// Relative tolerance of the local error test (dimensionless, > 0).
    pub relative_tolerance: f64,
    /// Absolute tolerance of each species' local error in mol/m3 (> 0), one per species in
    /// mechanism order. Set it well below the smallest concentration that matters.
    pub absolute_tolerances_mol_per_m3: Vec<f64>,
    /// Dense or sparse linear algebra (or automatic choice).
    pub linear_algebra: LinearAlgebra,
    /// Maximum number of accepted BDF steps per call ([`integrate`] or
    /// [`BatchIntegrator::advance_to`]); exceeding it is an [`IntegrationFailure`].
    pub max_steps: usize,
    /// Keep concentrations non-negative through the step acceptance (default `true`): a
    /// step whose solution falls below minus a species' absolute tolerance is taken back,
    /// the last accepted state is projected onto c >= 0 (a change within the absolute
    /// tolerance) and the step is retried at a quarter of its size, at most 10 times in a
    /// row. The right-hand side is never clipped, so the Jacobian stays exact. The
    /// projection can change element totals by at most the absolute tolerances.
    pub non_negative: bool,
    /// Quantities to locate on the solver's own steps during [`integrate`] and
    /// [`simulate`] (maxima and threshold crossings, refined on the solver's interpolant to
    /// the integration tolerance, independent of the output grid); the results are in
    /// [`Profiles::located`]. Empty by default. Stepping sessions ignore them.
    pub watch: Vec<Watch>,
    /// Keep the mechanism's conserved combinations ([`Kinetics::conserved_combinations`]:
    /// element totals, moieties) on their initial values (default `true`): when round-off
    /// has moved one by more than a hundredth of the error weights of its species, the state
    /// is projected back (the smallest correction in the error-weighted norm) and the solver
    /// restarts from it. Applies to closed constant-volume reactors without box conditions.
    pub keep_invariants: bool,
    /// Convergence tolerance of the Newton iterations, in units of the error weights
    /// `atol_i + rtol |y_i|` (dimensionless). `None` (the default) uses
    /// `max(10 eps / rtol, min(0.03, sqrt(rtol)))`, 1e-3 at rtol 1e-6 and 1e-5 at rtol 1e-10,
    /// which keeps Newton errors well below the local error test. A looser value such as 0.2
    /// saves about 40 % of the right-hand-side evaluations at the price of larger global
    /// errors.
    pub newton_tolerance: Option<f64>,
}

impl IntegrationOptions {
    /// Defaults for `n_species` species: relative tolerance 1e-6, absolute tolerance 1e-12
    /// mol/m3 for every species, [`LinearAlgebra::Auto`], at most 100,000 steps per call,
    /// non-negativity enforced.
    pub fn new(n_species: usize) -> IntegrationOptions {
        IntegrationOptions {
            relative_tolerance: 1e-6,
            absolute_tolerances_mol_per_m3: vec![1e-12; n_species],
            linear_algebra: LinearAlgebra::Auto,
            max_steps: 100_000,
            non_negative: true,
            watch: Vec::new(),
            keep_invariants: true,
            newton_tolerance: None,
        }
    }
}

/// Work done by the solver (counts, dimensionless) and the positivity report.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct SolverStats {
    /// Accepted BDF steps.
    pub steps: usize,
    /// Right-hand-side evaluations `w(c)` (including those for the initial step size).
    pub rhs_evaluations: usize,
    /// Evaluations of the analytic Jacobian `dw/dc`.
    pub jacobian_evaluations: usize,
    /// Newton-matrix set-ups, each one numeric LU factorization of `I - h gamma J`.
    pub factorizations: usize,
    /// Steps rejected by the local error test.
    pub error_test_failures: usize,
    /// Newton iterations that failed to converge.
    pub nonlinear_failures: usize,
    /// Steps taken back and retried with a smaller step size because their solution went
    /// more negative than a species' absolute tolerance (non-negativity enforced in the step
    /// acceptance; the right-hand side itself is never clipped).
    pub negative_step_rejections: usize,
    /// Most negative concentration (mol/m3) seen in the state after any accepted step or at
    /// any output time; 0 if none went below zero.
    pub most_negative_concentration_mol_per_m3: f64,
    /// Times the state was projected back onto the conserved combinations (see
    /// [`IntegrationOptions::keep_invariants`]); each restarts the solver at first order.
    pub invariant_projections: usize,
}

/// The counts as one line for people and logs: `597 steps, 895 right-hand sides,
/// 12 Jacobians, 65 factorizations, 5 error-test failures, 0 nonlinear failures`.
impl std::fmt::Display for SolverStats {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        write!(
            f,
            "{} steps, {} right-hand sides, {} Jacobians, {} factorizations, {} error-test failures, {} nonlinear failures",
            self.steps,
            self.rhs_evaluations,
            self.jacobian_evaluations,
            self.factorizations,
            self.error_test_failures,
            self.nonlinear_failures
        )
    }
}

/// Concentration-time profiles of one run.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Profiles {
    /// Output times in s (those requested, in order).
    pub times_s: Vec<f64>,
    /// Concentrations in mol/m3: one row per output time, each with one value per species in
    /// mechanism order.
    pub concentrations_mol_per_m3: Vec<Vec<f64>>,
    /// Temperature (K) at each output time.
    pub temperatures_k: Vec<f64>,
    /// dT/dt (K/s) at each output time, from the model's equations (0 when isothermal);
    /// empty for the one-row partial profile of a stepping session.
    pub temperature_rates_k_per_s: Vec<f64>,
    /// Solver statistics of the run.
    pub stats: SolverStats,
    /// The linear algebra actually used ([`LinearAlgebra::Dense`] or
    /// [`LinearAlgebra::Sparse`]).
    pub linear_algebra_used: LinearAlgebra,
    /// Each watch of [`IntegrationOptions::watch`] with what it found on the solver's steps
    /// (`None`: a crossing not reached); on a failure, what was found up to it.
    pub located: Vec<(Watch, Option<Located>)>,
}

/// What kind of failure stopped an integration.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FailureKind {
    /// The budget of accepted steps per call ([`IntegrationOptions::max_steps`]) ran out.
    StepBudget {
        /// Accepted steps taken in the call.
        steps: usize,
    },
    /// The step size fell to the round-off level of the time reached (ten units of
    /// round-off of t).
    StepSizeTooSmall,
    /// The local error test rejected too many attempts at one step.
    ErrorTestFailures {
        /// Rejected attempts counted by the solver.
        count: usize,
    },
    /// Newton's iteration failed to converge too many times in one step.
    NewtonFailures {
        /// Failures in the step.
        count: usize,
    },
    /// Any other solver error (see [`IntegrationFailure::reason`]).
    Other,
}

/// The state component that changed fastest relative to its error weight when an
/// integration failed: the largest |dy_i/dt| / (atol_i + rtol |y_i|).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FastestComponent {
    /// Species index (mechanism order), or `None` for the temperature state.
    pub index: Option<usize>,
    /// Its value (mol/m3, or K for the temperature).
    pub value: f64,
    /// Its time derivative (mol/(m3 s), or K/s).
    pub rate_per_s: f64,
    /// Its absolute tolerance (mol/m3 or K).
    pub absolute_tolerance: f64,
    /// |rate| / (atol + rtol |value|): tolerance units per second (1/s).
    pub relative_rate_per_s: f64,
}

/// An integration that stopped before its end: the solver reported an error.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[error("integration failed at t = {time_s:e} s: {reason}")]
pub struct IntegrationFailure {
    /// Time reached (s): the end of the last accepted step.
    pub time_s: f64,
    /// What happened, in words.
    pub reason: String,
    /// What happened, as a kind.
    pub kind: FailureKind,
    /// The component changing fastest relative to its tolerance at the failure; see
    /// [`IntegrationFailure::advice`] for a user-facing explanation with species names.
    pub fastest: Option<FastestComponent>,
    /// The output rows produced before the failure (for [`BatchIntegrator`], the single row
    /// of the state at `time_s`), with the statistics up to the failure.
    pub partial: Profiles,
    /// The solver's own error, when the solver reported one.
    #[source]
    pub source: Option<SolverError>,
}

/// An error of the diffsol solver, kept typed as the source of [`ReactorError::Setup`] and
/// [`IntegrationFailure`]. Two are equal when their messages are (diffsol's error type does
/// not compare).
#[derive(Debug, Clone, thiserror::Error)]
#[error(transparent)]
pub struct SolverError(std::sync::Arc<diffsol::error::DiffsolError>);

impl SolverError {
    pub(crate) fn new(error: diffsol::error::DiffsolError) -> Self {
        SolverError(std::sync::Arc::new(error))
    }

    /// diffsol's error.
    pub fn diffsol_error(&self) -> &diffsol::error::DiffsolError {
        &self.0
    }
}

impl PartialEq for SolverError {
    fn eq(&self, other: &Self) -> bool {
        self.0.to_string() == other.0.to_string()
    }
}

/// A bad argument: nothing was integrated.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ReactorError {
    /// The Newton tolerance is not a positive finite number.
    #[error("Newton tolerance must be positive and finite, got {0}")]
    BadNewtonTolerance(f64),
    /// A per-species vector has the wrong length.
    #[error("{what} has {found} values but the mechanism has {expected} species")]
    WrongLength {
        /// Which argument.
        what: &'static str,
        /// Number of species.
        expected: usize,
        /// Length given.
        found: usize,
    },
    /// A concentration is NaN or infinite.
    #[error("{what}: concentration of species {species} is not finite ({value} mol/m3)")]
    NonFiniteConcentration {
        /// Which argument.
        what: &'static str,
        /// Species index.
        species: usize,
        /// The offending value (mol/m3).
        value: f64,
    },
    /// No output times were given.
    #[error("no output times given")]
    NoOutputTimes,
    /// Output times are not finite and strictly increasing.
    #[error("output times must be finite and strictly increasing: t[{index}] = {value} s")]
    OutputTimesNotIncreasing {
        /// Index of the first offending time.
        index: usize,
        /// Its value (s).
        value: f64,
    },
    /// A requested time lies before the integrator's current time (or is not finite).
    #[error("cannot advance to t = {requested_s} s: the integrator is at t = {current_s} s")]
    TimeNotAhead {
        /// Requested time (s).
        requested_s: f64,
        /// Current time (s).
        current_s: f64,
    },
    /// The temperature is not finite and positive.
    #[error("temperature must be finite and positive, got {0} K")]
    BadTemperature(f64),
    /// The relative tolerance is not finite and positive.
    #[error("relative tolerance must be finite and positive, got {0}")]
    BadRelativeTolerance(f64),
    /// An absolute tolerance is not finite and positive.
    #[error(
        "absolute tolerance of species {species} must be finite and positive, got {value} mol/m3"
    )]
    BadAbsoluteTolerance {
        /// Species index.
        species: usize,
        /// The offending value (mol/m3).
        value: f64,
    },
    /// `max_steps` is zero.
    #[error("max_steps must be at least 1")]
    NoSteps,
    /// The kinetics' Jacobian pattern is malformed (a defect of the kinetics compiler).
    #[error("the Jacobian pattern of the kinetics is malformed")]
    BadPattern,
    /// A [`Profiles`] whose vectors disagree in length (see [`Profiles::validate`]).
    #[error("inconsistent profiles: {what} has {found} entries, expected {expected}")]
    InconsistentProfiles {
        /// Which vector.
        what: &'static str,
        /// Expected length (the number of output times, or of species for a row).
        expected: usize,
        /// Length found.
        found: usize,
    },
    /// An index argument names a species the mechanism does not have.
    #[error(
        "{what}: species index {species} is out of range (the mechanism has {n_species} species)"
    )]
    SpeciesOutOfRange {
        /// Which argument.
        what: &'static str,
        /// The offending species index.
        species: usize,
        /// Number of species of the mechanism.
        n_species: usize,
    },
    /// A prescribed temperature history is malformed.
    #[error("bad temperature history: {0}")]
    BadTemperatureHistory(String),
    /// The energy balance needs thermochemistry for every species.
    #[error("species {species} has no thermochemistry, which the energy balance needs")]
    MissingThermo {
        /// Species index.
        species: usize,
    },
    /// Box conditions are malformed or combined with a model that cannot take them.
    #[error("bad box conditions: {0}")]
    BadBoxConditions(String),
    /// The temperature follows a prescribed history and cannot be set.
    #[error("the temperature follows a prescribed history and cannot be set")]
    TemperaturePrescribed,
    /// diffsol refused to set the problem up.
    #[error("could not set up the solver: {0}")]
    Setup(#[source] SolverError),
}

/// Why an integration did not return profiles.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum IntegrationError {
    /// Bad arguments; nothing was integrated.
    #[error(transparent)]
    InvalidArgument(#[from] ReactorError),
    /// The solver failed part way; the failure carries the partial profile.
    #[error(transparent)]
    Failed(Box<IntegrationFailure>),
}

impl From<IntegrationFailure> for IntegrationError {
    fn from(failure: IntegrationFailure) -> Self {
        IntegrationError::Failed(Box::new(failure))
    }
}

impl IntegrationError {
    /// The solver failure, if this is one.
    pub fn failure(&self) -> Option<&IntegrationFailure> {
        match self {
            IntegrationError::Failed(failure) => Some(failure),
            IntegrationError::InvalidArgument(_) => None,
        }
    }
}

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

impl Profiles {
    /// Checks that the vectors agree: one concentration row and one temperature per output
    /// time, the rates dT/dt empty or one per time, and every row of the same length. A
    /// profile from the integrators always passes; one built by hand may not.
    pub fn validate(&self) -> Result<(), ReactorError> {
        let rows = self.times_s.len();
        let check = |what: &'static str, found: usize| {
            if found == rows {
                Ok(())
            } else {
                Err(ReactorError::InconsistentProfiles {
                    what,
                    expected: rows,
                    found,
                })
            }
        };
        check("concentrations", self.concentrations_mol_per_m3.len())?;
        check("temperatures", self.temperatures_k.len())?;
        if !self.temperature_rates_k_per_s.is_empty() {
            check("temperature rates", self.temperature_rates_k_per_s.len())?;
        }
        let width = self.concentrations_mol_per_m3.first().map_or(0, Vec::len);
        match self
            .concentrations_mol_per_m3
            .iter()
            .find(|row| row.len() != width)
        {
            Some(row) => Err(ReactorError::InconsistentProfiles {
                what: "a concentration row",
                expected: width,
                found: row.len(),
            }),
            None => Ok(()),
        }
    }

    /// What `watch` found, if it was watched and found.
    pub fn located(&self, watch: Watch) -> Option<Located> {
        self.located
            .iter()
            .find(|(w, _)| *w == watch)
            .and_then(|(_, found)| *found)
    }

    /// Ideal-gas pressure (Pa) of row `row`: P = (sum_i c_i) R T; `None` past the end.
    pub fn pressure_pa(&self, row: usize) -> Option<f64> {
        let c = self.concentrations_mol_per_m3.get(row)?;
        let t = self.temperatures_k.get(row)?;
        Some(c.iter().sum::<f64>() * stoik_mechanism::GAS_CONSTANT * t)
    }

    /// Mole fractions of row `row` (dimensionless, summing to 1): x_i = c_i / sum_k c_k;
    /// `None` past the end or when the total concentration is not positive.
    pub fn mole_fractions(&self, row: usize) -> Option<Vec<f64>> {
        let c = self.concentrations_mol_per_m3.get(row)?;
        let total: f64 = c.iter().sum();
        (total > 0.0).then(|| c.iter().map(|x| x / total).collect())
    }
}

/// Element totals at the start and end of a profile and their largest drift.
#[derive(Debug, Clone, PartialEq)]
pub struct ElementBalance {
    /// Element totals (mol/m3 of atoms, one per element of the mechanism) in the first row.
    pub start: Vec<f64>,
    /// Element totals in the last row.
    pub end: Vec<f64>,
    /// Largest `|total(t) - total(t0)| / |total(t0)|` over all rows and elements with a
    /// nonzero initial total (dimensionless); 0 for an empty profile.
    pub max_relative_drift: f64,
}

/// Element totals of `profiles` for `mechanism` (species without composition count for
/// nothing). In a closed reactor they are invariant; the drift measures integration error.
pub fn element_balance(mechanism: &Mechanism, profiles: &Profiles) -> ElementBalance {
    let rows = &profiles.concentrations_mol_per_m3;
    let n_elements = mechanism.elements.len();
    let (Some(first), Some(last)) = (rows.first(), rows.last()) else {
        return ElementBalance {
            start: vec![0.0; n_elements],
            end: vec![0.0; n_elements],
            max_relative_drift: 0.0,
        };
    };
    let start = mechanism.element_totals(first);
    let mut max_relative_drift: f64 = 0.0;
    for row in rows {
        for (now, initial) in mechanism.element_totals(row).iter().zip(&start) {
            if *initial != 0.0 {
                max_relative_drift = max_relative_drift.max(((now - initial) / initial).abs());
            }
        }
    }
    ElementBalance {
        start,
        end: mechanism.element_totals(last),
        max_relative_drift,
    }
}
