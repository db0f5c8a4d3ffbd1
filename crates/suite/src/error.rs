//! Why a suite could not be loaded, recorded or verified.

use stoik_mechanism::LoadError;

/// Why a suite or baseline could not be used. A case whose run fails is not an error of the
/// suite: it is reported in that case's result ([`crate::CaseResult`]) and the other cases
/// still run.
#[derive(Debug, thiserror::Error)]
pub enum SuiteError {
    /// A suite, baseline, scenario or mechanism file could not be read or is invalid: every
    /// problem found, located (file:line:column).
    #[error(transparent)]
    Load(#[from] LoadError),
    /// A file could not be written.
    #[error("error: cannot write {path}: {reason}")]
    Write {
        /// The path.
        path: String,
        /// The system's reason.
        reason: String,
    },
}
