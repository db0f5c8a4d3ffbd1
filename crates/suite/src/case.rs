//! A case made ready to run: its scenario planned with the case's overrides, the times of
//! its observables added to the output grid, the maxima and crossings it needs watched on
//! the solver's steps, and its species matched against the mechanism. Then run, and every
//! observable evaluated on the outcome.

use crate::baseline::{InputFile, InputRole};
use crate::file::{DelayCriterion, ObservableKind, Suite, SuiteCase};
use crate::hash::file_sha256;
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use stoik_mechanism::{
    nearest_name, show_number, Diagnostic, Diagnostics, LoadError, MechanismFile,
};
use stoik_reactor::{ignition_delay, Energy, IgnitionCriterion, Profiles, Quantity, Watch};
use stoik_scenario::{OutputTimes, RunPlan, ScenarioError};

/// How one observable is read off a run.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Probe {
    AtTime {
        species: usize,
        time_s: f64,
        mole_fraction: bool,
    },
    PeakValue(usize),
    PeakTime(usize),
    Crossing {
        species: usize,
        level: f64,
    },
    FinalTemperature,
    Delay(IgnitionCriterion),
    Integral(usize),
}

/// A case ready to run ([`prepare_cases`]): the plan with the case's overrides, and its
/// observables matched against the plan's mechanism.
#[derive(Debug, Clone)]
pub struct PreparedCase {
    case: SuiteCase,
    suite_file: String,
    plan: RunPlan,
    probes: Vec<Probe>,
    inputs: Vec<InputFile>,
}

/// The values of one run of a case, one per observable in the case's order: the value in
/// its SI unit, or why it could not be read (no ignition found, a level never reached...).
#[derive(Debug, Clone, PartialEq)]
pub struct CaseValues {
    /// The values, in the order of [`SuiteCase::observables`].
    pub values: Vec<Result<f64, String>>,
}

impl PreparedCase {
    /// The case as written in the suite (sweeps expanded).
    pub fn case(&self) -> &SuiteCase {
        &self.case
    }

    /// The plan run for the case.
    pub fn plan(&self) -> &RunPlan {
        &self.plan
    }

    /// The files the case runs, with their content hashes (scenario, mechanism, thermo
    /// files), paths relative to the suite's folder.
    pub fn inputs(&self) -> &[InputFile] {
        &self.inputs
    }

    /// This case prepared again on another mechanism (the scenario, overrides and
    /// observables unchanged; species matched again by name). The hook for attributing a
    /// move to edits: run the case on a mechanism with some edits reverted.
    pub fn with_mechanism(&self, mechanism: Arc<MechanismFile>) -> Result<PreparedCase, LoadError> {
        let plan = RunPlan::new(
            self.plan.scenario().clone(),
            Diagnostics::default(),
            mechanism,
        )
        .map_err(|e| scenario_load_error(e, &self.suite_file, &self.case))?;
        let mut diagnostics = Vec::new();
        let prepared = prepare_from_plan(&self.case, &self.suite_file, plan, &mut diagnostics);
        match prepared {
            Some(mut p) if diagnostics.is_empty() => {
                p.inputs = self.inputs.clone();
                Ok(p)
            }
            _ => Err(LoadError::Invalid {
                diagnostics: Diagnostics(diagnostics),
            }),
        }
    }

    /// Runs the case (at `relative_tolerance` instead of the scenario's, when given) and
    /// reads every observable. `Err` when the run itself fails (refused, or the integration
    /// stops before the end): the message names the reason.
    pub fn run(&self, relative_tolerance: Option<f64>) -> Result<CaseValues, String> {
        let mut plan = self.plan.clone();
        if let Some(rtol) = relative_tolerance {
            plan.set_relative_tolerance(rtol)
                .map_err(|e| e.to_string())?;
        }
        let outcome = plan.run().map_err(|e| e.to_string())?;
        if let Some(f) = outcome.failure() {
            return Err(format!("the integration failed: {f}"));
        }
        let profiles = outcome.profiles();
        Ok(CaseValues {
            values: self
                .probes
                .iter()
                .map(|p| read_probe(profiles, *p))
                .map(|v| match v {
                    Ok(x) if !x.is_finite() => Err(format!("the value is {x}, not finite")),
                    other => other,
                })
                .collect(),
        })
    }
}

/// Reads one observable off a complete profile.
fn read_probe(profiles: &Profiles, probe: Probe) -> Result<f64, String> {
    let times = &profiles.times_s;
    match probe {
        Probe::AtTime {
            species,
            time_s,
            mole_fraction,
        } => {
            let row = times
                .iter()
                .position(|&t| t == time_s)
                .ok_or_else(|| format!("no output row at {} s", show_number(time_s)))?;
            if mole_fraction {
                profiles
                    .mole_fractions(row)
                    .and_then(|x| x.get(species).copied())
                    .ok_or_else(|| "the total concentration is not positive".to_string())
            } else {
                profiles.concentrations_mol_per_m3[row]
                    .get(species)
                    .copied()
                    .ok_or_else(|| "species out of range".to_string())
            }
        }
        Probe::PeakValue(i) | Probe::PeakTime(i) => {
            let found = profiles
                .located(Watch::Maximum(Quantity::Concentration(i)))
                .ok_or_else(|| "the maximum was not located".to_string())?;
            Ok(if matches!(probe, Probe::PeakValue(_)) {
                found.value
            } else {
                found.time_s
            })
        }
        Probe::Crossing { species, level } => profiles
            .located(Watch::Crossing {
                quantity: Quantity::Concentration(species),
                value: level,
            })
            .map(|l| l.time_s)
            .ok_or_else(|| {
                format!(
                    "the concentration never reaches {} mol/m3 before the end time",
                    show_number(level)
                )
            }),
        Probe::FinalTemperature => profiles
            .temperatures_k
            .last()
            .copied()
            .ok_or_else(|| "the profile is empty".to_string()),
        Probe::Delay(criterion) => match ignition_delay(profiles, criterion) {
            Ok(Some(d)) => Ok(d.delay_s),
            Ok(None) => Err("no ignition found by the criterion before the end time".into()),
            Err(e) => Err(e.to_string()),
        },
        Probe::Integral(i) => profiles
            .located(Watch::Integral(Quantity::Concentration(i)))
            .map(|l| l.value)
            .ok_or_else(|| "the integral was not computed".to_string()),
    }
}

/// A scenario problem of a case as located diagnostics: the scenario's own, or one at the
/// case in the suite file.
fn scenario_load_error(e: ScenarioError, suite_file: &str, case: &SuiteCase) -> LoadError {
    match e {
        ScenarioError::Load(l) => l,
        other => LoadError::Invalid {
            diagnostics: Diagnostics(vec![Diagnostic::error(
                suite_file,
                case.location,
                format!("case `{}`: {other}", case.name),
            )]),
        },
    }
}

fn load_diagnostics(e: LoadError) -> Vec<Diagnostic> {
    match e {
        LoadError::Invalid { diagnostics } => diagnostics.0,
        LoadError::Io { file, reason } => {
            vec![Diagnostic::error(
                &file,
                None,
                format!("cannot read file: {reason}"),
            )]
        }
    }
}

/// `path` relative to `folder` when it lies inside it, else as it is; `/` separated.
fn relative_label(path: &Path, folder: &Path) -> String {
    let shown = path.strip_prefix(folder).unwrap_or(path);
    shown
        .components()
        .map(|c| c.as_os_str().to_string_lossy().into_owned())
        .collect::<Vec<_>>()
        .join("/")
}

/// Applies a case's overrides and observables to `plan`; problems go to `diagnostics`.
fn prepare_from_plan(
    case: &SuiteCase,
    suite_file: &str,
    mut plan: RunPlan,
    diagnostics: &mut Vec<Diagnostic>,
) -> Option<PreparedCase> {
    let at_case = |message: String| Diagnostic::error(suite_file, case.location, message);
    let before = diagnostics.len();
    let refused = |what: &str, r: Result<(), ScenarioError>, diagnostics: &mut Vec<Diagnostic>| {
        if let Err(e) = r {
            diagnostics.push(at_case(format!(
                "case `{}`: the {what} override: {e}",
                case.name
            )));
        }
    };
    if let Some(t) = case.temperature_k {
        let r = plan.set_temperature_k(t);
        refused("temperature", r, diagnostics);
    }
    if let Some(p) = case.pressure_pa {
        let r = plan.set_pressure_pa(p);
        refused("pressure", r, diagnostics);
    }
    if let Some(c) = &case.initial {
        let r = plan.set_initial_composition(c);
        refused("initial composition", r, diagnostics);
    }
    if let Some(end) = case.end_time_s {
        let r = plan.set_end_time_s(end);
        refused("end time", r, diagnostics);
    }
    let names: Vec<&str> = plan
        .mechanism()
        .species
        .iter()
        .map(|s| s.name.as_str())
        .collect();
    let end_time = plan.scenario().end_time_s;
    let initial_k = match &plan.model().energy {
        Energy::Prescribed(h) => h.temperature_at(0.0),
        _ => plan.temperature_k(),
    };
    let mut probes = Vec::new();
    let mut extra_times = Vec::new();
    let mut watches = Vec::new();
    for o in &case.observables {
        let at = |message: String| Diagnostic::error(suite_file, o.location, message);
        let species = match o.kind.species() {
            Some(name) => match names.iter().position(|n| *n == name) {
                Some(i) => Some(i),
                None => {
                    let mut d = at(format!(
                        "observable `{}` of case `{}`: unknown species `{name}` (not in the mechanism `{}`)",
                        o.name,
                        case.name,
                        plan.scenario().mechanism_path.display()
                    ));
                    if let Some(near) = nearest_name(name, names.iter().copied()) {
                        d = d.with_help(format!("did you mean `{near}`?"));
                    }
                    diagnostics.push(d);
                    continue;
                }
            },
            None => None,
        };
        let i = species.unwrap_or(0);
        let probe = match &o.kind {
            ObservableKind::Concentration { time_s, .. }
            | ObservableKind::MoleFraction { time_s, .. } => {
                if *time_s > end_time {
                    diagnostics.push(at(format!(
                        "observable `{}` of case `{}`: time {} s is after the end time {} s",
                        o.name,
                        case.name,
                        show_number(*time_s),
                        show_number(end_time)
                    )));
                    continue;
                }
                extra_times.push(*time_s);
                Probe::AtTime {
                    species: i,
                    time_s: *time_s,
                    mole_fraction: matches!(o.kind, ObservableKind::MoleFraction { .. }),
                }
            }
            ObservableKind::PeakValue { .. } => Probe::PeakValue(i),
            ObservableKind::PeakTime { .. } => Probe::PeakTime(i),
            ObservableKind::CrossingTime {
                level_mol_per_m3, ..
            } => Probe::Crossing {
                species: i,
                level: *level_mol_per_m3,
            },
            ObservableKind::FinalTemperature => Probe::FinalTemperature,
            ObservableKind::Integral { .. } => Probe::Integral(i),
            ObservableKind::IgnitionDelay { criterion } => {
                let c = match criterion {
                    DelayCriterion::Scenario => match plan.ignition() {
                        Some(c) => c,
                        None => {
                            diagnostics.push(at(format!(
                                "observable `{}` of case `{}`: the scenario reports no ignition delay (isothermal, no `[ignition]` section)",
                                o.name, case.name
                            )).with_help("name a `criterion` on the observable, or add `[ignition]` to the scenario"));
                            continue;
                        }
                    },
                    DelayCriterion::MaxTemperatureRate => IgnitionCriterion::MaxTemperatureRate,
                    DelayCriterion::SpeciesPeak(_) => IgnitionCriterion::SpeciesMaximum(i),
                    DelayCriterion::TemperatureRise(k) => IgnitionCriterion::TemperatureRise(*k),
                };
                Probe::Delay(c)
            }
        };
        match probe {
            Probe::PeakValue(i) | Probe::PeakTime(i) => {
                watches.push(Watch::Maximum(Quantity::Concentration(i)))
            }
            Probe::Crossing { species, level } => watches.push(Watch::Crossing {
                quantity: Quantity::Concentration(species),
                value: level,
            }),
            Probe::Delay(c) => watches.extend(c.watches(initial_k)),
            Probe::Integral(i) => watches.push(Watch::Integral(Quantity::Concentration(i))),
            _ => {}
        }
        probes.push(probe);
    }
    if !extra_times.is_empty() {
        let mut times: Vec<f64> = plan.output_times_s().to_vec();
        times.extend(extra_times);
        times.sort_by(f64::total_cmp);
        times.dedup();
        let r = plan.set_output_times(OutputTimes::List(times));
        refused("output times", r, diagnostics);
    }
    // Only the watches the plan does not hold already (the scenario's ignition ones).
    let mut new_watches: Vec<Watch> = Vec::new();
    for w in watches {
        if !plan.options().watch.contains(&w) && !new_watches.contains(&w) {
            new_watches.push(w);
        }
    }
    plan.add_watches(&new_watches);
    (diagnostics.len() == before).then(|| PreparedCase {
        case: case.clone(),
        suite_file: suite_file.to_string(),
        plan,
        probes,
        inputs: Vec::new(),
    })
}

/// The files `plan` depends on, with their hashes.
fn inputs_of(plan: &RunPlan, scenario: &Path, folder: &Path) -> Result<Vec<InputFile>, String> {
    let mut files: Vec<(InputRole, PathBuf)> = vec![
        (InputRole::Scenario, scenario.to_path_buf()),
        (InputRole::Mechanism, plan.scenario().mechanism_path.clone()),
    ];
    files.extend(
        plan.mechanism_file()
            .thermo_files
            .iter()
            .map(|p| (InputRole::Thermo, p.clone())),
    );
    files
        .into_iter()
        .map(|(role, path)| {
            Ok(InputFile {
                role,
                path: relative_label(&path, folder),
                sha256: file_sha256(&path)?,
            })
        })
        .collect()
}

/// Prepares every case of `suite`: each scenario file is loaded (with its mechanism) once
/// and shared by the cases that name it. Every problem of every case is reported at once,
/// located in the suite, scenario or mechanism file.
pub fn prepare_cases(suite: &Suite) -> Result<Vec<PreparedCase>, LoadError> {
    let mut plans: HashMap<PathBuf, Result<(RunPlan, Vec<InputFile>), ()>> = HashMap::new();
    let mut diagnostics = Vec::new();
    let mut prepared = Vec::new();
    for case in &suite.cases {
        let entry = plans
            .entry(case.scenario_path.clone())
            .or_insert_with(|| match RunPlan::load(&case.scenario_path) {
                Ok(plan) => match inputs_of(&plan, &case.scenario_path, &suite.folder) {
                    Ok(inputs) => Ok((plan, inputs)),
                    Err(message) => {
                        diagnostics.push(Diagnostic::error(&suite.file, case.location, message));
                        Err(())
                    }
                },
                Err(e) => {
                    diagnostics.extend(load_diagnostics(scenario_load_error(e, &suite.file, case)));
                    Err(())
                }
            });
        let Ok((plan, inputs)) = entry else {
            continue;
        };
        let (plan, inputs) = (plan.clone(), inputs.clone());
        if let Some(mut p) = prepare_from_plan(case, &suite.file, plan, &mut diagnostics) {
            p.inputs = inputs;
            prepared.push(p);
        }
    }
    if diagnostics.is_empty() {
        Ok(prepared)
    } else {
        Err(LoadError::Invalid {
            diagnostics: Diagnostics(diagnostics),
        })
    }
}
