//! Running plans: one scenario, or many over mechanisms compiled once and integrated in
//! parallel. A run returns its profile (or the partial profile of a failure), the ignition
//! delay, the drift of the conservation laws and every warning: those of the scenario and
//! mechanism files and the thermochemistry used outside its fitted range.

use crate::error::ScenarioError;
use crate::plan::RunPlan;
use std::path::Path;
use std::sync::Arc;
use stoik_kinetics::{compiled_rate_constant_range_errors, Kinetics};
use stoik_mechanism::{Diagnostic, Diagnostics, LoadError, Mechanism};
use stoik_reactor::{
    ignition_delay, integrate_batch, simulate, simulate_plug_flow, BatchError,
    ConservationCheckError, ConservationDrift, IgnitionCriterion, IgnitionDelay, IntegrationError,
    IntegrationFailure, PlugOutputs, Profiles, ReactorConservation,
};

/// Something a run's user should know that did not stop it.
#[derive(Debug, Clone, PartialEq)]
pub enum RunWarning {
    /// A warning of the scenario or mechanism file (located).
    File(Diagnostic),
    /// A species' thermochemistry was used outside the temperature range of its polynomials
    /// (which then extrapolate).
    ThermoRange {
        /// The species.
        species: String,
        /// Lowest temperature of the polynomials' range (K).
        valid_low_k: f64,
        /// Highest temperature of the polynomials' range (K).
        valid_high_k: f64,
        /// Lowest temperature of the run (K).
        run_low_k: f64,
        /// Highest temperature of the run (K).
        run_high_k: f64,
    },
}

impl std::fmt::Display for RunWarning {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            RunWarning::File(d) => write!(f, "{d}"),
            RunWarning::ThermoRange {
                species,
                valid_low_k,
                valid_high_k,
                run_low_k,
                run_high_k,
            } => {
                let span = if run_low_k == run_high_k {
                    format!("at {run_low_k} K")
                } else {
                    format!("between {run_low_k:.1} and {run_high_k:.1} K")
                };
                write!(
                    f,
                    "warning: the run {span} leaves the range of species `{species}`'s thermochemistry ({valid_low_k} to {valid_high_k} K); its polynomials are extrapolated"
                )
            }
        }
    }
}

/// Warnings for the species of `mechanism` whose thermochemistry a run between `low_k` and
/// `high_k` (K) uses outside the range of its polynomials.
pub fn thermo_range_warnings(mechanism: &Mechanism, low_k: f64, high_k: f64) -> Vec<RunWarning> {
    mechanism
        .species
        .iter()
        .filter_map(|s| {
            let p = s.thermo.as_ref()?;
            (low_k < p.t_low_k || high_k > p.t_high_k).then(|| RunWarning::ThermoRange {
                species: s.name.clone(),
                valid_low_k: p.t_low_k,
                valid_high_k: p.t_high_k,
                run_low_k: low_k,
                run_high_k: high_k,
            })
        })
        .collect()
}

/// The conservation laws of a run's mechanism in its reactor and their drift along the
/// profile.
#[derive(Debug, Clone, PartialEq)]
pub struct ConservationCheck {
    /// The laws (element totals, moieties; per volume or per mass).
    pub laws: ReactorConservation,
    /// Each law's drift against the allowance of the tolerances, in the laws' order.
    pub drifts: Vec<ConservationDrift>,
}

/// What a run produced.
#[derive(Debug, Clone)]
pub struct RunOutcome {
    /// The profiles at every output time, or the failure that stopped the integration
    /// (carrying the rows computed before it).
    pub result: Result<Profiles, Box<IntegrationFailure>>,
    /// The criterion of the ignition delay, when the plan reports one.
    pub ignition: Option<IgnitionCriterion>,
    /// The ignition delay by that criterion; `None` when not reported or not found.
    pub ignition_delay: Option<IgnitionDelay>,
    /// The conservation laws and their drift, or why they could not be checked.
    pub conservation: Result<ConservationCheck, ConservationCheckError>,
    /// Warnings: the files' first, then the thermochemistry range at the planned
    /// temperatures, then (adiabatic runs) over the temperatures reached.
    pub warnings: Vec<RunWarning>,
    /// For a plug flow, the distance from the inlet (m) of every row of the profiles (complete
    /// or partial), whose times are then residence times; `None` for other reactors.
    pub distances_m: Option<Vec<f64>>,
}

impl RunOutcome {
    /// The profiles: complete, or up to the failure.
    pub fn profiles(&self) -> &Profiles {
        match &self.result {
            Ok(p) => p,
            Err(f) => &f.partial,
        }
    }

    /// The failure, if the integration stopped early.
    pub fn failure(&self) -> Option<&IntegrationFailure> {
        self.result.as_ref().err().map(|f| &**f)
    }
}

/// Loads the scenario file at `path` and its mechanism, and runs it.
pub fn run_scenario(path: &Path) -> Result<RunOutcome, ScenarioError> {
    RunPlan::load(path)?.run()
}

impl RunPlan {
    /// Compiles the mechanism and runs the plan. An integration that fails part way gives an
    /// outcome with the failure and the partial profile; invalid arguments give an error.
    pub fn run(&self) -> Result<RunOutcome, ScenarioError> {
        let kinetics = Kinetics::compile(self.mechanism())?;
        self.run_compiled(&kinetics)
    }

    /// Runs the plan on `kinetics`, compiled from [`RunPlan::mechanism`] (a process model
    /// running many plans of one mechanism compiles it once).
    ///
    /// Refused before integrating ([`ScenarioError::Load`], located at the steps): a rate
    /// constant that is NaN or infinite at a planned temperature
    /// ([`RunPlan::rate_constant_errors`]).
    pub fn run_compiled(&self, kinetics: &Kinetics) -> Result<RunOutcome, ScenarioError> {
        self.refuse_nonfinite_rate_constants(kinetics)?;
        if self.model().plug.is_some() {
            return self.run_plug_flow(kinetics);
        }
        let result = simulate(
            kinetics,
            self.model(),
            self.temperature_k(),
            self.initial_mol_per_m3(),
            self.output_times_s(),
            self.options(),
        );
        self.outcome(result)
    }

    /// Runs the plan's plug flow at its output distances.
    fn run_plug_flow(&self, kinetics: &Kinetics) -> Result<RunOutcome, ScenarioError> {
        let distances = self.output_distances_m();
        let result = simulate_plug_flow(
            kinetics,
            self.model(),
            self.temperature_k(),
            self.initial_mol_per_m3(),
            &PlugOutputs::Distances(distances.to_vec()),
            self.options(),
        );
        // Rows come at the requested distances in order, so a partial profile's rows are at
        // the first distances.
        let result = result.map(|p| p.profiles);
        let rows = match &result {
            Ok(p) => p.times_s.len(),
            Err(IntegrationError::Failed(f)) => f.partial.times_s.len(),
            Err(IntegrationError::InvalidArgument(_)) => 0,
        };
        let mut outcome = self.outcome(result)?;
        outcome.distances_m = Some(distances[..rows.min(distances.len())].to_vec());
        Ok(outcome)
    }

    /// Errors for the steps whose forward or reverse rate constant is NaN or infinite
    /// somewhere in the plan's temperature span ([`RunPlan::planned_temperature_span_k`], at
    /// the temperatures [`compiled_rate_constant_range_errors`] samples): the run would fail
    /// there. Each is located at its step in the mechanism file, with the span in its help.
    /// `kinetics` must be compiled from [`RunPlan::mechanism`].
    pub fn rate_constant_errors(&self, kinetics: &Kinetics) -> Vec<Diagnostic> {
        let span = self.planned_temperature_span_k();
        let label = self.scenario().mechanism_path.display().to_string();
        let plan = if span.0 == span.1 {
            format!("{} K", span.0)
        } else {
            format!("{} K to {} K", span.0, span.1)
        };
        compiled_rate_constant_range_errors(kinetics, self.mechanism(), &label, span)
            .into_iter()
            .map(|d| {
                d.with_help(format!(
                    "the scenario runs at {plan}; check the step's prefactor, temperature exponent and activation energy (sign and units), or the scenario's temperature"
                ))
            })
            .collect()
    }

    fn refuse_nonfinite_rate_constants(&self, kinetics: &Kinetics) -> Result<(), ScenarioError> {
        let errors = self.rate_constant_errors(kinetics);
        if errors.is_empty() {
            Ok(())
        } else {
            Err(LoadError::Invalid {
                diagnostics: Diagnostics(errors),
            }
            .into())
        }
    }

    /// The outcome of an integration of this plan.
    fn outcome(
        &self,
        result: Result<Profiles, IntegrationError>,
    ) -> Result<RunOutcome, ScenarioError> {
        let result = match result {
            Ok(p) => Ok(p),
            Err(IntegrationError::Failed(f)) => Err(f),
            Err(IntegrationError::InvalidArgument(e)) => return Err(e.into()),
        };
        let mechanism = self.mechanism();
        let mut warnings: Vec<RunWarning> = self
            .file_warnings()
            .iter()
            .cloned()
            .map(RunWarning::File)
            .collect();
        let (low, high) = self.planned_temperature_span_k();
        warnings.extend(thermo_range_warnings(mechanism, low, high));
        let profiles = match &result {
            Ok(p) => p,
            Err(f) => &f.partial,
        };
        if self.model().solves_energy() {
            let (low, high) = profiles
                .temperatures_k
                .iter()
                .fold((f64::INFINITY, 0.0f64), |(lo, hi), &t| {
                    (lo.min(t), hi.max(t))
                });
            warnings.extend(thermo_range_warnings(mechanism, low, high));
        }
        let ignition = self.ignition();
        let ignition_delay = ignition
            .map(|c| ignition_delay(profiles, c))
            .transpose()?
            .flatten();
        let conservation =
            ReactorConservation::new(mechanism, self.model()).map(|laws| ConservationCheck {
                drifts: laws.drifts(profiles, self.options()),
                laws,
            });
        Ok(RunOutcome {
            result,
            ignition,
            ignition_delay,
            conservation,
            warnings,
            distances_m: None,
        })
    }
}

/// Runs `plans` in parallel (rayon), each distinct mechanism compiled once (plans share a
/// mechanism when they hold the same [`RunPlan::mechanism_file`], as those of
/// [`load_plans`] do); `progress` is called after each run. Results come back in plan order.
pub fn run_batch(
    plans: &[RunPlan],
    progress: &(dyn Fn() + Sync),
) -> Vec<Result<RunOutcome, ScenarioError>> {
    let mut results: Vec<Option<Result<RunOutcome, ScenarioError>>> =
        plans.iter().map(|_| None).collect();
    let mut done = vec![false; plans.len()];
    for first in 0..plans.len() {
        if done[first] {
            continue;
        }
        let shared = plans[first].mechanism_file();
        let members: Vec<usize> = (first..plans.len())
            .filter(|&i| !done[i] && Arc::ptr_eq(plans[i].mechanism_file(), shared))
            .collect();
        let kinetics = match Kinetics::compile(&shared.mechanism) {
            Ok(k) => k,
            Err(e) => {
                for &i in &members {
                    done[i] = true;
                    results[i] = Some(Err(ScenarioError::Compile(e.clone())));
                }
                continue;
            }
        };
        // Plans with a rate constant that is not finite at their temperatures are refused
        // before integrating, as `RunPlan::run` refuses them.
        let members: Vec<usize> = members
            .into_iter()
            .filter(
                |&i| match plans[i].refuse_nonfinite_rate_constants(&kinetics) {
                    Ok(()) => true,
                    Err(e) => {
                        done[i] = true;
                        results[i] = Some(Err(e));
                        false
                    }
                },
            )
            .collect();
        // Plug flows report at distances: run one by one.
        let (plugs, members): (Vec<usize>, Vec<usize>) = members
            .into_iter()
            .partition(|&i| plans[i].model().plug.is_some());
        for i in plugs {
            done[i] = true;
            results[i] = Some(plans[i].run_plug_flow(&kinetics));
            progress();
        }
        let cases: Vec<_> = members.iter().map(|&i| plans[i].batch_case()).collect();
        let outcomes = integrate_batch(&kinetics, &cases, progress);
        for (&i, outcome) in members.iter().zip(outcomes) {
            done[i] = true;
            let result = match outcome {
                Ok(p) => Ok(p),
                Err(BatchError::Integration(e)) => Err(e),
                Err(e) => {
                    results[i] = Some(Err(ScenarioError::Batch(e)));
                    continue;
                }
            };
            results[i] = Some(plans[i].outcome(result));
        }
    }
    results.into_iter().flatten().collect()
}

/// Loads the scenario files at `paths` into plans, loading each mechanism file once and
/// sharing it between the plans that name it. One result per path, in order.
pub fn load_plans(paths: &[impl AsRef<Path>]) -> Vec<Result<RunPlan, ScenarioError>> {
    let mut mechanisms: Vec<(std::path::PathBuf, Arc<stoik_mechanism::MechanismFile>)> = Vec::new();
    paths
        .iter()
        .map(|path| {
            let (scenario, warnings) = crate::file::load_scenario(path.as_ref())?;
            let known = mechanisms
                .iter()
                .find(|(p, _)| *p == scenario.mechanism_path)
                .map(|(_, m)| Arc::clone(m));
            let mechanism = match known {
                Some(m) => m,
                None => {
                    let m = Arc::new(stoik_mechanism::load_mechanism(&scenario.mechanism_path)?);
                    mechanisms.push((scenario.mechanism_path.clone(), Arc::clone(&m)));
                    m
                }
            };
            RunPlan::new(scenario, warnings, mechanism)
        })
        .collect()
}
