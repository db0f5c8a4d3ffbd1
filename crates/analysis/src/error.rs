//! Why an analysis could not be made.

use stoik_scenario::ScenarioError;

/// Why an analysis could not be made. Each variant names the value at fault, so that a
/// caller can say which of its inputs (a flag, a field) it came from.
#[derive(Debug, thiserror::Error)]
pub enum AnalysisError {
    /// A species name the mechanism does not have.
    #[error("unknown species `{name}`{}", suggestion.as_deref().map(|s| format!(" (did you mean `{s}`?)")).unwrap_or_default())]
    UnknownSpecies {
        /// The name given.
        name: String,
        /// A species of the mechanism whose name differs only in letter case, if any.
        suggestion: Option<String>,
    },
    /// An element symbol the mechanism does not declare.
    #[error("unknown element `{symbol}`; the mechanism's elements are {known}")]
    UnknownElement {
        /// The symbol given.
        symbol: String,
        /// The mechanism's element symbols, comma-separated.
        known: String,
    },
    /// A species has no elemental composition, so element fluxes are undefined.
    #[error("species `{species}` has no elemental composition (`atoms`); element fluxes need every species' atoms")]
    NoComposition {
        /// The species' name.
        species: String,
    },
    /// An instant lies outside the run.
    #[error("time {time_s:e} s is outside the run [0, {end_s:e}] s")]
    TimeOutsideRun {
        /// The time given, s.
        time_s: f64,
        /// The end time of the run, s.
        end_s: f64,
    },
    /// A window is reversed, empty, not finite or reaches outside the run.
    #[error(
        "window [{from_s:e}, {to_s:e}] s must have 0 <= start < end <= {end_s:e} s (the run's end)"
    )]
    BadWindow {
        /// Start given, s.
        from_s: f64,
        /// End given, s.
        to_s: f64,
        /// The end time of the run, s.
        end_s: f64,
    },
    /// No instant and no window was asked for.
    #[error("no time and no window given")]
    NothingAsked,
    /// The relative threshold of a flux graph is not in [0, 1].
    #[error("threshold must be between 0 and 1 (a fraction of the largest flux), got {0}")]
    BadThreshold(f64),
    /// An observable that is not `ignition-delay`, `final:NAME`, `peak:NAME` or
    /// `peak-time:NAME`.
    #[error("unknown observable `{text}`; use ignition-delay, final:NAME, peak:NAME or peak-time:NAME (NAME a species or T)")]
    UnknownObservable {
        /// The text given.
        text: String,
    },
    /// A step index (0-based) beyond the mechanism's steps.
    #[error("step R{} is out of range: the mechanism has {n_steps} steps (R1 to R{n_steps})", step + 1)]
    StepOutOfRange {
        /// The index given (0-based).
        step: usize,
        /// Number of steps.
        n_steps: usize,
    },
    /// The temperature was asked for but the reactor does not solve the energy balance (it
    /// is held or prescribed, so it does not depend on any rate constant).
    #[error("the temperature is not solved in this reactor (isothermal or prescribed): it depends on no rate constant")]
    TemperatureNotSolved,
    /// The ignition delay was asked for but the scenario has no `[ignition]` criterion or
    /// the run did not ignite by it.
    #[error(
        "no ignition delay: the scenario has no [ignition] criterion or the run did not ignite"
    )]
    NoIgnition,
    /// A peak was asked for but the largest value is at the start or the end of the run.
    #[error("no peak inside the run: the largest value is at its start or end")]
    NoPeak,
    /// The forward sensitivities asked for would hold too many numbers in memory.
    #[error("{what} would hold {values} numbers (more than {limit}): choose fewer steps (--steps) or the adjoint method")]
    TooLarge {
        /// What: the augmented state or the profile.
        what: &'static str,
        /// How many numbers.
        values: usize,
        /// The limit.
        limit: usize,
    },
    /// The sensitivity integration failed.
    #[error("sensitivity computation failed: {0}")]
    SensitivityFailed(String),
    /// The analysis is not available for the scenario's reactor (e.g. sensitivities of a
    /// semi-batch or liquid-phase reactor); nothing was integrated.
    #[error("{0}")]
    NotAvailable(String),
    /// The scenario could not be planned or run.
    #[error(transparent)]
    Scenario(#[from] ScenarioError),
    /// The integration stopped before the last time asked for.
    #[error("the run failed at t = {reached_s:e} s, before the times asked for: {reason}")]
    RunFailed {
        /// How far it got, s.
        reached_s: f64,
        /// The failure, in words.
        reason: String,
    },
}
