//! [`DiffError`]: why a diff, a revert or the reading of a mechanism failed.

use stoik_kinetics::CompileError;
use stoik_mechanism::{LoadError, MechanismProblem};

/// Which of the two mechanisms of a diff an error concerns.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Which {
    /// The old mechanism (the reference).
    Old,
    /// The new mechanism (the edited one).
    New,
}

impl std::fmt::Display for Which {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Which::Old => "old",
            Which::New => "new",
        })
    }
}

/// Why a diff, a revert or the reading of a mechanism failed.
#[derive(Debug, thiserror::Error)]
#[non_exhaustive]
pub enum DiffError {
    /// A mechanism file could not be read or is invalid (every problem, located).
    #[error(transparent)]
    Load(#[from] LoadError),
    /// A `REV:path` argument could not be read through `git`.
    #[error("{spec}: {reason}")]
    Git {
        /// The argument as given, e.g. `HEAD~1:mechanisms/h2.toml`.
        spec: String,
        /// What went wrong (git missing, unknown revision, path not in the revision...).
        reason: String,
    },
    /// A mechanism built by hand breaks the rules of `Kinetics::compile`.
    #[error("the {which} mechanism does not compile: {source}")]
    Compile {
        /// Which mechanism.
        which: Which,
        /// The compiler's reason.
        #[source]
        source: CompileError,
    },
    /// An option of the diff is out of range.
    #[error("{what}: {value} is out of range ({rule})")]
    BadOption {
        /// The option, e.g. `"temperatures_k"`.
        what: &'static str,
        /// The refused value.
        value: f64,
        /// What is accepted.
        rule: &'static str,
    },
    /// The edit to revert does not belong to this pair of mechanisms (an index out of range
    /// or naming another species or step).
    #[error("cannot revert {edit}: it does not describe these mechanisms ({reason})")]
    EditMismatch {
        /// The edit, in words.
        edit: String,
        /// What does not match.
        reason: String,
    },
    /// Reverting the edit alone would leave a mechanism that refers to something missing
    /// (e.g. reverting a species addition while steps still use the species).
    #[error("cannot revert {edit} alone: {reason}")]
    RevertConflict {
        /// The edit, in words.
        edit: String,
        /// What still depends on it; revert that first.
        reason: String,
    },
    /// The reverted mechanism breaks a rule of [`stoik_mechanism::Mechanism::validate`].
    #[error("reverting {edit} gives an invalid mechanism: {}", problems.iter().map(|p| p.to_string()).collect::<Vec<_>>().join("; "))]
    InvalidRevert {
        /// The edit, in words.
        edit: String,
        /// Every problem of the result.
        problems: Vec<MechanismProblem>,
    },
}
