//! Why a scenario could not be run.

use stoik_kinetics::CompileError;
use stoik_mechanism::LoadError;
use stoik_reactor::{BatchError, ReactorError};

/// Why a scenario could not be planned or run. A run whose integration fails part way is not
/// an error: its [`crate::RunOutcome`] carries the failure and the partial profile.
#[derive(Debug, thiserror::Error)]
pub enum ScenarioError {
    /// The scenario or its mechanism could not be read, or is invalid: every problem found,
    /// located (file:line:column).
    #[error(transparent)]
    Load(#[from] LoadError),
    /// An override value is out of range.
    #[error("{what} must be {requirement}, got {value}")]
    BadOverride {
        /// What was overridden, e.g. `"relative tolerance"`.
        what: &'static str,
        /// What it must be, e.g. `"between 0 and 1"`.
        requirement: &'static str,
        /// The value given (in the unit of the requirement).
        value: f64,
    },
    /// An initial composition override was refused.
    #[error("{reason}")]
    BadComposition {
        /// Why (an unknown species, a negative value, fractions not summing to 1...).
        reason: String,
    },
    /// The temperature follows a prescribed history, which a single temperature cannot
    /// override.
    #[error("the temperature follows a prescribed `temperature_history` and cannot be overridden; edit the history instead")]
    TemperaturePrescribed,
    /// The mechanism breaks the rules a compiled mechanism relies on (only possible for one
    /// built by hand; a loaded file is checked when read).
    #[error(transparent)]
    Compile(#[from] CompileError),
    /// The reactor refused the plan's arguments; nothing was integrated.
    #[error(transparent)]
    Reactor(#[from] ReactorError),
    /// A batch case was refused (plans carry no rate multipliers, so this does not happen
    /// for plans run by [`crate::run_batch`]).
    #[error(transparent)]
    Batch(BatchError),
}
