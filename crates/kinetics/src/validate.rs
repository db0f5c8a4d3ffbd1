//! The check [`crate::Kinetics::compile`] makes before compiling: [`Mechanism::validate`],
//! the invariants the mechanism loader guarantees, applied to any [`Mechanism`] (one built by
//! hand included), so that compiling and evaluating cannot index out of range or compute from
//! non-finite parameters.

use std::fmt;
use stoik_mechanism::{Mechanism, MechanismProblem};

/// Why a [`Mechanism`] cannot be compiled: every problem [`Mechanism::validate`] found, in the
/// order elements, species, steps (indices 0-based, in mechanism order).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub struct CompileError {
    /// The problems, at least one.
    pub problems: Vec<MechanismProblem>,
}

impl fmt::Display for CompileError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        let n = self.problems.len();
        write!(
            f,
            "the mechanism cannot be compiled ({n} problem{}):",
            if n == 1 { "" } else { "s" }
        )?;
        for problem in &self.problems {
            write!(f, "\n  {problem}")?;
        }
        Ok(())
    }
}

/// Checks `mechanism` (see [`CompileError`]).
pub(crate) fn validate(mechanism: &Mechanism) -> Result<(), CompileError> {
    mechanism
        .validate()
        .map_err(|problems| CompileError { problems })
}
