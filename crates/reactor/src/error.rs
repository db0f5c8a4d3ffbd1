//! Why an integration did not return profiles: bad arguments ([`ReactorError`]) or a solver
//! failure part way ([`IntegrationFailure`](crate::IntegrationFailure), with the profile computed so far).

use crate::Profiles;

/// What kind of failure stopped an integration.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FailureKind {
    /// The budget of accepted steps per call ([`IntegrationOptions::max_steps`](crate::IntegrationOptions::max_steps)) ran out.
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
    /// A stop was requested through the run's [`RunMonitor`](crate::RunMonitor) (Ctrl-C in
    /// the binary).
    Interrupted,
    /// The wall-clock limit ([`IntegrationOptions::wall_time_limit_s`](crate::IntegrationOptions::wall_time_limit_s))
    /// ran out.
    WallTimeLimit,
    /// Any other solver error (see [`IntegrationFailure::reason`]).
    Other,
}

/// The state component that changed fastest relative to its error weight when an
/// integration failed: the largest |dy_i/dt| / (atol_i + rtol |y_i|), with the requested
/// tolerances.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FastestComponent {
    /// Species index (mechanism order), or `None` for the temperature state.
    pub index: Option<usize>,
    /// Its value (mol/m3, or K for the temperature).
    pub value: f64,
    /// Its time derivative (mol/(m3 s), or K/s).
    pub rate_per_s: f64,
    /// Its requested absolute tolerance (mol/m3 or K).
    pub absolute_tolerance: f64,
    /// |rate| / (atol + rtol |value|): tolerance units per second (1/s).
    pub relative_rate_per_s: f64,
    /// Whether the component's error weight in the solver, atol + rtol |value| with the
    /// solver's tolerances (the requested ones over
    /// [`TOLERANCE_SAFETY_FACTOR`](crate::TOLERANCE_SAFETY_FACTOR)), is within a few units of
    /// round-off of its value (below 8 machine epsilons times |value|): no step can meet
    /// such a tolerance.
    pub tolerance_unreachable: bool,
    /// The step whose term in this species' production rate is the largest in magnitude at
    /// the failure; `None` for the temperature or when no step involves the species.
    pub driving_step: Option<DrivingStep>,
}

/// The step that contributes most to a species' rate of change at a failure.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DrivingStep {
    /// Step index (mechanism order).
    pub index: usize,
    /// Its term nu q in the species' production rate, mol/(m3 s).
    pub rate_mol_per_m3_s: f64,
    /// Its effective forward rate constant at the failure (third-body and pressure factors
    /// included), (m3/mol)^(m-1)/s for forward order m.
    pub forward_rate_constant: f64,
    /// Its reverse rate constant at the failure (0 for an irreversible step), SI units of
    /// its reverse order (third-body factor not included).
    pub reverse_rate_constant: f64,
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
    /// Steps whose rate constant (effective forward, with third-body and pressure factors,
    /// or reverse) is NaN or infinite at the state of the failure, mechanism order.
    pub nonfinite_steps: Vec<usize>,
    /// The output rows produced before the failure (for [`BatchIntegrator`](crate::BatchIntegrator), the single row
    /// of the state at `time_s`), with the statistics up to the failure.
    pub partial: Profiles,
    /// The solver's own error, when the solver reported one (not for an interruption or
    /// the wall-clock limit).
    #[source]
    pub source: Option<SolverError>,
}

/// An error of the diffsol solver, kept typed as the source of [`ReactorError::Setup`] and
/// [`IntegrationFailure`](crate::IntegrationFailure). Two are equal when their messages are (diffsol's error type does
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
    /// A per-step buffer has the wrong length.
    #[error("{what} has {found} values but the mechanism has {expected} steps")]
    WrongStepCount {
        /// Which argument.
        what: &'static str,
        /// Number of steps.
        expected: usize,
        /// Length given.
        found: usize,
    },
    /// Extents were asked for without [`crate::BatchIntegrator::track_extents`].
    #[error("extents are not tracked: call track_extents first")]
    ExtentsNotTracked,
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
    /// The wall-clock limit is not a positive finite number of seconds.
    #[error("the wall-time limit must be positive and finite, got {0} s")]
    BadWallTimeLimit(f64),
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
    /// A watched step rate names a step the mechanism does not have.
    #[error(
        "watched step rate: step index {step} is out of range (the mechanism has {n_steps} steps)"
    )]
    StepOutOfRange {
        /// The offending step index.
        step: usize,
        /// Number of steps of the mechanism.
        n_steps: usize,
    },
    /// A watched window is empty, reversed or not finite.
    #[error(
        "watched window [{from_s}, {to_s}] s must be finite with its start at or before its end"
    )]
    BadWindow {
        /// Start of the window, s.
        from_s: f64,
        /// End of the window, s.
        to_s: f64,
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
    /// Heat exchange is malformed or combined with a model that cannot take it.
    #[error("bad heat exchange: {0}")]
    BadHeatExchange(String),
    /// The flow of a stirred tank is malformed (residence time, inlet temperature or inlet
    /// concentrations), or its inlet does not have one concentration per species.
    #[error("bad stirred-tank flow: {0}")]
    BadFlow(String),
    /// The plug flow is malformed (mass flow, area or pressure profile, wall, molar masses)
    /// or combined with a model that cannot take it.
    #[error("bad plug flow: {0}")]
    BadPlugFlow(String),
    /// A semi-batch reactor is malformed (initial volume, feeds, their schedules or
    /// temperatures) or combined with a model that cannot take it.
    #[error("bad semi-batch feed: {0}")]
    BadFeed(String),
    /// The liquid-phase energy description is malformed (heat capacity, density, reaction
    /// enthalpies) or combined with a model that cannot take it.
    #[error("bad liquid phase: {0}")]
    BadLiquidPhase(String),
    /// User terms ([`UserTerms`](crate::UserTerms)) that the model cannot take, or whose
    /// declared Jacobian entries lie outside the state.
    #[error("bad user terms: {0}")]
    BadUserTerms(String),
    /// The analysis asked for is not available for this reactor model.
    #[error("not available for this reactor: {0}")]
    NotSupported(String),
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
