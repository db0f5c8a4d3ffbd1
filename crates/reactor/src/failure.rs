//! Why an integration failed, in terms a user can act on: the kind of failure, the state
//! component that was changing fastest relative to its tolerance when it happened, and what
//! to try.

use diffsol::error::{DiffsolError, OdeSolverError};

use crate::{FailureKind, FastestComponent, IntegrationFailure, SolverError};

/// A failure as the step loop sees it, before it is given its time and partial profile.
pub(crate) struct Diagnosis {
    pub(crate) kind: FailureKind,
    pub(crate) message: String,
    /// Boxed: it is large, and the step loop returns a `Diagnosis` as its error.
    pub(crate) fastest: Option<Box<FastestComponent>>,
    pub(crate) nonfinite_steps: Vec<usize>,
    pub(crate) source: Option<SolverError>,
}

/// Why the step loop stopped early: the solver failed, or it was asked to stop.
#[derive(Debug)]
pub(crate) enum Halt {
    /// The solver reported an error.
    Solver(DiffsolError),
    /// The run's monitor asked for a stop.
    Interrupted,
    /// The wall-clock limit (s) ran out.
    WallTime(f64),
}

impl From<DiffsolError> for Halt {
    fn from(error: DiffsolError) -> Self {
        Halt::Solver(error)
    }
}

impl Diagnosis {
    /// The diagnosis of a halt: [`Diagnosis::new`] for a solver error; for a requested stop or
    /// the wall-clock limit, its kind and message (no advice on the state is needed).
    pub(crate) fn of_halt(
        halt: &Halt,
        fastest: Option<FastestComponent>,
        nonfinite_steps: Vec<usize>,
    ) -> Diagnosis {
        let (kind, message) = match halt {
            Halt::Solver(error) => return Diagnosis::new(error, fastest, nonfinite_steps),
            Halt::Interrupted => (
                FailureKind::Interrupted,
                "interrupted on request".to_string(),
            ),
            Halt::WallTime(limit_s) => (
                FailureKind::WallTimeLimit,
                format!("the wall-time limit of {limit_s} s ran out"),
            ),
        };
        Diagnosis {
            kind,
            message,
            fastest: None,
            nonfinite_steps: Vec::new(),
            source: None,
        }
    }

    pub(crate) fn new(
        error: &DiffsolError,
        fastest: Option<FastestComponent>,
        nonfinite_steps: Vec<usize>,
    ) -> Diagnosis {
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
            FailureKind::Other | FailureKind::Interrupted | FailureKind::WallTimeLimit => {
                format!("the solver stopped: {error}")
            }
        };
        Diagnosis {
            kind,
            message,
            fastest: fastest.map(Box::new),
            nonfinite_steps,
            source: Some(SolverError::new(error.clone())),
        }
    }
}

impl IntegrationFailure {
    /// A paragraph for the user: what happened; which species (named by `species_names`, in
    /// mechanism order) was changing fastest relative to its tolerance, and which step
    /// (`step_equations`, mechanism order) drives it; whether a rate constant is NaN or
    /// infinite or the tolerance cannot be met; and what to try.
    pub fn advice(&self, species_names: &[String], step_equations: &[String]) -> String {
        let step_name = |j: usize| {
            step_equations
                .get(j)
                .map(|e| format!("step {} `{e}`", j + 1))
                .unwrap_or_else(|| format!("step {}", j + 1))
        };
        let mut lines = Vec::new();
        if !self.nonfinite_steps.is_empty() {
            let listed: Vec<String> = self
                .nonfinite_steps
                .iter()
                .take(5)
                .map(|&j| step_name(j))
                .collect();
            let more = self.nonfinite_steps.len().saturating_sub(listed.len());
            lines.push(format!(
                "rate constant not finite (NaN or infinite) at the failure: {}{}; no step size can follow it: check that step's parameters and the temperature reached",
                listed.join(", "),
                if more > 0 { format!(" and {more} more") } else { String::new() }
            ));
        }
        let mut tolerance_unreachable = false;
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
            if let Some(d) = &f.driving_step {
                lines.push(format!(
                    "step driving {name}: {} contributes {:.4e} mol/m3/s (effective forward rate constant {:.4e}, reverse {:.4e}, SI units)",
                    step_name(d.index),
                    d.rate_mol_per_m3_s,
                    d.forward_rate_constant,
                    d.reverse_rate_constant
                ));
            }
            if f.tolerance_unreachable {
                tolerance_unreachable = true;
                lines.push(format!(
                    "the tolerance of {name} cannot be met: its error weight (absolute tolerance + relative tolerance x |value|) is within round-off of its value"
                ));
            }
        }
        let tips: &[&str] = match self.kind {
            FailureKind::StepBudget { .. } => &[
                "raise the step budget (`[solver] max_steps`), or shorten the run",
                "a budget spent on tiny steps often means an absolute tolerance far below the concentrations that matter: raise it for the species named above",
            ],
            FailureKind::StepSizeTooSmall => &[
                "check the rate constants of the steps named above (units, exponents, a prefactor off by powers of ten)",
                "loosen the relative tolerance or raise that species' absolute tolerance (`[solver] absolute_tolerance_for`)",
                "a concentration driven negative by a fast step can stall the solver: keep non-negativity on (the default)",
            ],
            FailureKind::ErrorTestFailures { .. } | FailureKind::NewtonFailures { .. } => &[
                "the solution may be changing abruptly here (an ignition, a runaway, a switch in a prescribed history): check the rate constants of the steps named above",
                "try a tighter relative tolerance (smaller steps before the event) or raise that species' absolute tolerance",
                "with a large mechanism, try `--linear-algebra dense` to rule out the sparse factorization",
            ],
            FailureKind::Interrupted => &["the profile up to the interruption is kept; rerun to continue"],
            FailureKind::WallTimeLimit => &[
                "raise the wall-time limit (`[solver] wall_time_limit`, `--wall-time-limit-s`), or shorten the run",
                "a run much slower than expected often spends its steps on a species with an absolute tolerance far below the concentrations that matter",
            ],
            FailureKind::Other => &["report the input that causes this; it is not a known failure mode"],
        };
        if tolerance_unreachable {
            lines.push("try: a relative tolerance of at least 1e-14 (double precision resolves about 2.2e-16 relative)".to_string());
        }
        lines.extend(tips.iter().map(|t| format!("try: {t}")));
        lines.join("\n")
    }
}
