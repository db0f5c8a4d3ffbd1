//! Why an integration failed, in terms a user can act on: the kind of failure, the state
//! component that was changing fastest relative to its tolerance when it happened, and what
//! to try.

use diffsol::error::{DiffsolError, OdeSolverError};

use crate::{FailureKind, FastestComponent, IntegrationFailure, SolverError};

/// A failure as the step loop sees it, before it is given its time and partial profile.
pub(crate) struct Diagnosis {
    pub(crate) kind: FailureKind,
    pub(crate) message: String,
    pub(crate) fastest: Option<FastestComponent>,
    pub(crate) source: SolverError,
}

impl Diagnosis {
    pub(crate) fn new(error: &DiffsolError, fastest: Option<FastestComponent>) -> Diagnosis {
        let kind = match error {
            DiffsolError::OdeSolverError(e) => match e {
                OdeSolverError::TooManyTimesteps { num_steps, .. } => {
                    FailureKind::StepBudget { steps: *num_steps }
                }
                OdeSolverError::StepSizeTooSmall { .. } => FailureKind::StepSizeTooSmall,
                OdeSolverError::TooManyErrorTestFailures { num_failures, .. } => {
                    FailureKind::ErrorTestFailures {
                        count: *num_failures,
                    }
                }
                OdeSolverError::TooManyNonlinearSolverFailures { num_failures, .. } => {
                    FailureKind::NewtonFailures {
                        count: *num_failures,
                    }
                }
                _ => FailureKind::Other,
            },
            _ => FailureKind::Other,
        };
        let message = match &kind {
            FailureKind::StepBudget { steps } => {
                format!("the step budget ran out ({steps} accepted steps in this call)")
            }
            FailureKind::StepSizeTooSmall => {
                "the step size fell to the round-off level of the time reached".to_string()
            }
            FailureKind::ErrorTestFailures { count } => {
                format!("the local error test kept failing ({count} rejected steps in a row)")
            }
            FailureKind::NewtonFailures { count } => {
                format!("the Newton iterations did not converge ({count} failures in one step)")
            }
            FailureKind::Other => format!("the solver stopped: {error}"),
        };
        Diagnosis {
            kind,
            message,
            fastest,
            source: SolverError::new(error.clone()),
        }
    }
}

impl IntegrationFailure {
    /// A paragraph for the user: what happened, which species (named by `species_names`, in
    /// mechanism order) was changing fastest relative to its tolerance, and what to try.
    pub fn advice(&self, species_names: &[String]) -> String {
        let mut lines = Vec::new();
        if let Some(f) = &self.fastest {
            let name = match f.index {
                Some(i) => species_names
                    .get(i)
                    .cloned()
                    .unwrap_or_else(|| format!("species #{i}")),
                None => "the temperature".to_string(),
            };
            let unit = if f.index.is_some() { "mol/m3" } else { "K" };
            lines.push(format!(
                "fastest-changing component at the failure: {name} = {:.4e} {unit}, changing at {:.4e} {unit}/s ({:.3e} tolerance units per second; its absolute tolerance is {:.1e} {unit})",
                f.value, f.rate_per_s, f.relative_rate_per_s, f.absolute_tolerance
            ));
        }
        let tips: &[&str] = match self.kind {
            FailureKind::StepBudget { .. } => &[
                "raise the step budget (`[solver] max_steps`), or shorten the run",
                "a budget spent on tiny steps often means an absolute tolerance far below the concentrations that matter: raise it for the species named above",
            ],
            FailureKind::StepSizeTooSmall => &[
                "check the rate constants of the steps that make or destroy the species named above (units, exponents, a prefactor off by powers of ten)",
                "loosen the relative tolerance or raise that species' absolute tolerance (`[solver] absolute_tolerance_for`)",
                "a concentration driven negative by a fast step can stall the solver: keep non-negativity on (the default)",
            ],
            FailureKind::ErrorTestFailures { .. } | FailureKind::NewtonFailures { .. } => &[
                "the solution may be changing abruptly here (an ignition, a runaway, a switch in a prescribed history): check the rate constants of the species named above",
                "try a tighter relative tolerance (smaller steps before the event) or raise that species' absolute tolerance",
                "with a large mechanism, try `--linear-algebra dense` to rule out the sparse factorization",
            ],
            FailureKind::Other => &["report the input that causes this; it is not a known failure mode"],
        };
        lines.extend(tips.iter().map(|t| format!("try: {t}")));
        lines.join("\n")
    }
}
