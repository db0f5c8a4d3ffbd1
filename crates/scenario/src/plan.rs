//! The run plan: a scenario matched against its mechanism and turned, in this one place, into
//! the reactor's terms (reactor model, initial state, output times, integration options,
//! ignition criterion and the watches it needs). Overrides (a temperature, a tolerance, an
//! end time...) are applied through methods that check the value and resolve the plan again.

use crate::error::ScenarioError;
use crate::file::{
    IgnitionSpec, InitialState, OutputTimes, Scenario, MAX_END_TIME_S, MOLE_FRACTION_SUM_TOLERANCE,
    PRESSURE_RANGE_PA, TEMPERATURE_RANGE_K,
};
use crate::read::{NamedValue, SpeciesLookup};
use crate::sections::{FeedRate, FlowSpec};
use std::path::Path;
use std::sync::Arc;
use stoik_mechanism::ConcentrationUnit;
use stoik_mechanism::{
    load_mechanism, positive_finite_problem, show_number, Diagnostic, Diagnostics, LoadError,
    Mechanism, MechanismFile, GAS_CONSTANT,
};
use stoik_reactor::{
    BatchCase, Energy, Feed, IgnitionCriterion, IntegrationOptions, LinearAlgebra, LiquidPhase,
    ReactorModel, RunMonitor, SemiBatch, StirredFlow, Watch,
};

/// An initial composition given in place of a scenario's ([`RunPlan::set_initial_composition`]),
/// species by name.
#[derive(Debug, Clone, PartialEq)]
pub enum Composition {
    /// Mole fractions (dimensionless, summing to 1); converted to concentrations with the
    /// scenario's pressure and temperature, c_i = x_i P / (R T).
    MoleFractions(Vec<(String, f64)>),
    /// Concentrations, mol/m3.
    ConcentrationsMolPerM3(Vec<(String, f64)>),
}

/// A scenario resolved against its mechanism into reactor terms, ready to run
/// ([`RunPlan::run`], [`crate::run_batch`]).
///
/// Every value is SI: temperatures in K, concentrations and absolute tolerances in mol/m3,
/// times in s. The plan keeps the scenario it came from, so an override that changes how
/// the file's values convert (a temperature or pressure with mole fractions, an end time
/// with a grid) resolves the whole plan again; a rejected override leaves the plan as it was.
#[derive(Debug, Clone)]
pub struct RunPlan {
    scenario: Scenario,
    mechanism: Arc<MechanismFile>,
    file_warnings: Vec<Diagnostic>,
    absolute_tolerance_override_mol_per_m3: Option<f64>,
    non_negative: bool,
    /// Watches asked for by the caller ([`RunPlan::add_watches`]), kept across overrides.
    extra_watches: Vec<Watch>,
    /// The monitor of the plan's runs ([`RunPlan::set_monitor`]), kept across overrides.
    monitor: Option<RunMonitor>,
    resolved: Resolved,
}

/// The reactor terms of a plan.
#[derive(Debug, Clone)]
struct Resolved {
    model: ReactorModel,
    initial_mol_per_m3: Vec<f64>,
    output_times_s: Vec<f64>,
    /// Output distances (m) of a plug flow, 0 first and the length last; empty otherwise.
    output_distances_m: Vec<f64>,
    options: IntegrationOptions,
    ignition: Option<IgnitionCriterion>,
}

impl RunPlan {
    /// Loads the scenario file at `path` and its mechanism and resolves them.
    pub fn load(path: &Path) -> Result<RunPlan, ScenarioError> {
        let (scenario, warnings) = crate::file::load_scenario(path)?;
        let mechanism = Arc::new(load_mechanism(&scenario.mechanism_path)?);
        RunPlan::new(scenario, warnings, mechanism)
    }

    /// Resolves `scenario` (with its file's `warnings`) against `mechanism`: every species
    /// name of the scenario must be in the mechanism (all unknown names are reported at once,
    /// located, with the nearest name). The plan keeps the mechanism file's warnings too.
    pub fn new(
        scenario: Scenario,
        warnings: Diagnostics,
        mechanism: Arc<MechanismFile>,
    ) -> Result<RunPlan, ScenarioError> {
        let resolved = resolve(&scenario, &mechanism.mechanism, None, true)?;
        let mut file_warnings = warnings.0;
        file_warnings.extend(mechanism.warnings.0.iter().cloned());
        Ok(RunPlan {
            scenario,
            mechanism,
            file_warnings,
            absolute_tolerance_override_mol_per_m3: None,
            non_negative: true,
            extra_watches: Vec::new(),
            monitor: None,
            resolved,
        })
    }

    /// The scenario as read, with the overrides applied so far.
    pub fn scenario(&self) -> &Scenario {
        &self.scenario
    }

    /// The mechanism.
    pub fn mechanism(&self) -> &Mechanism {
        &self.mechanism.mechanism
    }

    /// The loaded mechanism file (shared between the plans of one batch).
    pub fn mechanism_file(&self) -> &Arc<MechanismFile> {
        &self.mechanism
    }

    /// Warnings of the scenario file, then of the mechanism file.
    pub fn file_warnings(&self) -> &[Diagnostic] {
        &self.file_warnings
    }

    /// The reactor: constraint, energy law (with its temperature history) and box conditions.
    pub fn model(&self) -> &ReactorModel {
        &self.resolved.model
    }

    /// Temperature in K: held (isothermal), initial (adiabatic), or the scenario's value for
    /// a prescribed history (which the reactor then ignores).
    pub fn temperature_k(&self) -> f64 {
        self.scenario.temperature_k
    }

    /// Initial concentration of every mechanism species in mol/m3 (species order).
    pub fn initial_mol_per_m3(&self) -> &[f64] {
        &self.resolved.initial_mol_per_m3
    }

    /// Output times in s: 0 first, the end time last, strictly increasing (only 0 for a
    /// plug flow, which reports at [`RunPlan::output_distances_m`]).
    pub fn output_times_s(&self) -> &[f64] {
        &self.resolved.output_times_s
    }

    /// Output distances in m of a plug flow: 0 first, the tube's length last, strictly
    /// increasing; empty for other reactors.
    pub fn output_distances_m(&self) -> &[f64] {
        &self.resolved.output_distances_m
    }

    /// Integration options: tolerances (absolute in mol/m3, per species), linear algebra,
    /// step budget, non-negativity, invariants, Newton tolerance and the watches of the
    /// ignition criterion.
    pub fn options(&self) -> &IntegrationOptions {
        &self.resolved.options
    }

    /// How the ignition delay is reported: the `[ignition]` choice, or the largest dT/dt
    /// when the reactor is adiabatic; `None` otherwise.
    pub fn ignition(&self) -> Option<IgnitionCriterion> {
        self.resolved.ignition
    }

    /// The unit of the output concentration columns.
    pub fn output_concentration_unit(&self) -> ConcentrationUnit {
        self.scenario.output_concentration_unit
    }

    /// The temperature span the run is planned at, (lowest, highest) in K: the held or
    /// initial temperature, or the extremes of a prescribed history.
    pub fn planned_temperature_span_k(&self) -> (f64, f64) {
        match &self.scenario.energy {
            Energy::Prescribed(history) => history
                .temperatures_k()
                .iter()
                .fold((f64::INFINITY, 0.0f64), |(lo, hi), &t| {
                    (lo.min(t), hi.max(t))
                }),
            _ => (self.scenario.temperature_k, self.scenario.temperature_k),
        }
    }

    /// This plan as one case of a reactor batch ([`stoik_reactor::integrate_batch`]).
    pub fn batch_case(&self) -> BatchCase {
        BatchCase {
            model: self.resolved.model.clone(),
            temperature_k: self.scenario.temperature_k,
            initial_mol_per_m3: self.resolved.initial_mol_per_m3.clone(),
            output_times_s: self.resolved.output_times_s.clone(),
            rate_multipliers: Vec::new(),
            options: self.resolved.options.clone(),
        }
    }

    /// Overrides the temperature (K, finite and positive): the held or initial one; mole
    /// fractions are converted again. Refused for a prescribed temperature history.
    pub fn set_temperature_k(&mut self, temperature_k: f64) -> Result<(), ScenarioError> {
        in_range(
            "temperature",
            "between 1 and 1e5 kelvin (TEMPERATURE_RANGE_K)",
            temperature_k,
            TEMPERATURE_RANGE_K,
        )?;
        if matches!(self.scenario.energy, Energy::Prescribed(_)) {
            return Err(ScenarioError::TemperaturePrescribed);
        }
        self.edit(|s| s.temperature_k = temperature_k)
    }

    /// Overrides the pressure (Pa, finite and positive); mole fractions are converted again.
    pub fn set_pressure_pa(&mut self, pressure_pa: f64) -> Result<(), ScenarioError> {
        in_range(
            "pressure",
            "between 1e-9 and 1e10 pascals (PRESSURE_RANGE_PA)",
            pressure_pa,
            PRESSURE_RANGE_PA,
        )?;
        self.edit(|s| s.pressure_pa = Some(pressure_pa))
    }

    /// Replaces the scenario's initial composition with `composition` (species by name of
    /// the plan's mechanism; other species start at zero). Mole fractions must be finite,
    /// non-negative and sum to 1 within [`crate::MOLE_FRACTION_SUM_TOLERANCE`], and need a
    /// scenario with a pressure; concentrations (mol/m3) finite and non-negative. A refused
    /// composition leaves the plan as it was.
    pub fn set_initial_composition(
        &mut self,
        composition: &Composition,
    ) -> Result<(), ScenarioError> {
        let (values, fractions) = match composition {
            Composition::MoleFractions(v) => (v, true),
            Composition::ConcentrationsMolPerM3(v) => (v, false),
        };
        let bad = |reason: String| Err(ScenarioError::BadComposition { reason });
        if values.is_empty() {
            return bad("no species given".into());
        }
        let species = &self.mechanism.mechanism.species;
        for (name, value) in values {
            if !species.iter().any(|s| &s.name == name) {
                let near =
                    stoik_mechanism::nearest_name(name, species.iter().map(|s| s.name.as_str()))
                        .map(|n| format!(" (did you mean `{n}`?)"))
                        .unwrap_or_default();
                return bad(format!("`{name}` is not a species of the mechanism{near}"));
            }
            if !(value.is_finite() && *value >= 0.0) {
                return bad(format!(
                    "the value of `{name}` must be finite and at least 0, got {value}"
                ));
            }
        }
        if fractions {
            let sum: f64 = values.iter().map(|(_, v)| v).sum();
            if (sum - 1.0).abs() > MOLE_FRACTION_SUM_TOLERANCE {
                return bad(format!(
                    "mole fractions sum to {sum}, not 1 (tolerance {MOLE_FRACTION_SUM_TOLERANCE:e})"
                ));
            }
            if self.scenario.pressure_pa.is_none() {
                return bad("mole fractions need a pressure, and the scenario gives none".into());
            }
        }
        let location = self.scenario.locations.initial.unwrap_or_default();
        let named: Vec<NamedValue> = values
            .iter()
            .map(|(name, value)| NamedValue {
                name: name.clone(),
                value: *value,
                location,
            })
            .collect();
        self.edit(|s| {
            s.initial = if fractions {
                InitialState::MoleFractions(named)
            } else {
                InitialState::Concentrations(named)
            }
        })
    }

    /// Overrides the end time (s, finite and positive); the output times follow.
    pub fn set_end_time_s(&mut self, end_time_s: f64) -> Result<(), ScenarioError> {
        if self.scenario.is_plug_flow() {
            return Err(ScenarioError::BadOverride {
                what: "end time",
                requirement:
                    "left out for a plug flow, which reports at the distances of [plug_flow]",
                value: end_time_s,
            });
        }
        in_range(
            "end time",
            "positive and at most 1e15 seconds (MAX_END_TIME_S)",
            end_time_s,
            (f64::from_bits(1), MAX_END_TIME_S),
        )?;
        self.edit(|s| s.end_time_s = end_time_s)
    }

    /// Overrides the output times (within the end time).
    pub fn set_output_times(&mut self, output: OutputTimes) -> Result<(), ScenarioError> {
        if self.scenario.is_plug_flow() {
            return Err(ScenarioError::BadOverride {
                what: "output times",
                requirement:
                    "left out for a plug flow, which reports at the distances of [plug_flow]",
                value: 0.0,
            });
        }
        self.edit(|s| s.output = output)
    }

    /// Overrides the relative tolerance (dimensionless, strictly between 0 and 1).
    pub fn set_relative_tolerance(&mut self, relative_tolerance: f64) -> Result<(), ScenarioError> {
        if !(relative_tolerance > 0.0 && relative_tolerance < 1.0) {
            return Err(ScenarioError::BadOverride {
                what: "relative tolerance",
                requirement: "between 0 and 1",
                value: relative_tolerance,
            });
        }
        self.edit(|s| s.relative_tolerance = relative_tolerance)
    }

    /// Overrides the absolute tolerance of every species, per-species values of the file
    /// included (mol/m3, finite and positive).
    pub fn set_absolute_tolerance_mol_per_m3(
        &mut self,
        absolute_tolerance_mol_per_m3: f64,
    ) -> Result<(), ScenarioError> {
        positive(
            "absolute tolerance",
            "a positive number of mol/m3",
            absolute_tolerance_mol_per_m3,
        )?;
        let old = self
            .absolute_tolerance_override_mol_per_m3
            .replace(absolute_tolerance_mol_per_m3);
        if let Err(e) = self.edit(|_| {}) {
            self.absolute_tolerance_override_mol_per_m3 = old;
            return Err(e);
        }
        Ok(())
    }

    /// Overrides the linear algebra of the Newton iterations.
    pub fn set_linear_algebra(&mut self, linear_algebra: LinearAlgebra) {
        self.scenario.linear_algebra = linear_algebra;
        self.resolved.options.linear_algebra = linear_algebra;
    }

    /// Overrides the step budget (at least 1).
    pub fn set_max_steps(&mut self, max_steps: usize) -> Result<(), ScenarioError> {
        if max_steps == 0 {
            return Err(ScenarioError::BadOverride {
                what: "step budget",
                requirement: "at least 1",
                value: 0.0,
            });
        }
        self.scenario.max_steps = max_steps;
        self.resolved.options.max_steps = max_steps;
        Ok(())
    }

    /// Overrides the wall-clock limit of the integration (s, finite and positive; `None`:
    /// no limit). Running out ends the run like a solver failure, with the profile so far.
    pub fn set_wall_time_limit_s(&mut self, limit_s: Option<f64>) -> Result<(), ScenarioError> {
        if let Some(limit) = limit_s {
            positive("wall-time limit", "a positive number of seconds", limit)?;
        }
        self.scenario.wall_time_limit_s = limit_s;
        self.resolved.options.wall_time_limit_s = limit_s;
        Ok(())
    }

    /// Follows and controls the plan's runs through `monitor` (progress, stop requests; see
    /// [`RunMonitor`]); `None` removes it. Kept across later overrides.
    pub fn set_monitor(&mut self, monitor: Option<RunMonitor>) {
        self.monitor = monitor.clone();
        self.resolved.options.monitor = monitor;
    }

    /// Whether non-negative concentrations are enforced in the step acceptance (default
    /// `true`).
    pub fn set_non_negative(&mut self, non_negative: bool) {
        self.non_negative = non_negative;
        self.resolved.options.non_negative = non_negative;
    }

    /// Adds quantities for the run to locate on the solver's own steps (maxima, crossings;
    /// see [`Watch`]), after those of the ignition criterion; what they find is in
    /// [`stoik_reactor::Profiles::located`]. Kept across later overrides. A species index
    /// beyond the mechanism's species is refused when the plan runs.
    pub fn add_watches(&mut self, watches: &[Watch]) {
        self.extra_watches.extend_from_slice(watches);
        self.resolved.options.watch.extend_from_slice(watches);
    }

    /// Applies `change` to a copy of the scenario and resolves it; keeps the result only
    /// when it resolves.
    fn edit(&mut self, change: impl FnOnce(&mut Scenario)) -> Result<(), ScenarioError> {
        let mut scenario = self.scenario.clone();
        change(&mut scenario);
        self.resolved = resolve(
            &scenario,
            &self.mechanism.mechanism,
            self.absolute_tolerance_override_mol_per_m3,
            self.non_negative,
        )?;
        self.resolved
            .options
            .watch
            .extend_from_slice(&self.extra_watches);
        self.resolved.options.monitor = self.monitor.clone();
        self.scenario = scenario;
        Ok(())
    }
}

/// Checks that an override lies in `[low, high]` (NaN never does).
fn in_range(
    what: &'static str,
    requirement: &'static str,
    value: f64,
    (low, high): (f64, f64),
) -> Result<(), ScenarioError> {
    if value >= low && value <= high {
        Ok(())
    } else {
        Err(ScenarioError::BadOverride {
            what,
            requirement,
            value,
        })
    }
}

/// Checks that an override is finite and positive.
fn positive(
    what: &'static str,
    requirement: &'static str,
    value: f64,
) -> Result<(), ScenarioError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(ScenarioError::BadOverride {
            what,
            requirement,
            value,
        })
    }
}

impl Scenario {
    /// Output times in s for the current `end_time_s` and `output`: 0.0 first, end_time last,
    /// strictly increasing; `Err` with a message if the settings are inconsistent.
    pub fn output_times_s(&self) -> Result<Vec<f64>, String> {
        output_times(self.end_time_s, &self.output)
    }
}

/// Output times in s for end time `end` (s) and the `output` setting: 0.0 first, `end`
/// last, strictly increasing; `Err` with a message if the settings are inconsistent.
pub(crate) fn output_times(end: f64, output: &OutputTimes) -> Result<Vec<f64>, String> {
    if positive_finite_problem(end).is_some() {
        return Err(format!("end time {end} s must be positive and finite"));
    }
    let mut times = vec![0.0];
    match output {
        OutputTimes::List(list) => {
            for &t in list {
                if !(t.is_finite() && (0.0..=end).contains(&t)) {
                    return Err(format!("output time {t} s is outside [0, {end}] s"));
                }
                let last = *times.last().unwrap_or(&0.0);
                if t < last || (t == last && t != 0.0) {
                    return Err(format!(
                        "output times must be strictly increasing ({t} s after {last} s)"
                    ));
                }
                if t > last {
                    times.push(t);
                }
            }
            if *times.last().unwrap_or(&0.0) < end {
                times.push(end);
            }
        }
        OutputTimes::Linear { points } => {
            let n = (*points).max(2);
            // i/(n-1) first: end * i could overflow for an end time near f64::MAX.
            times.extend((1..n).map(|i| end * (i as f64 / (n - 1) as f64)));
            if let Some(last) = times.last_mut() {
                *last = end;
            }
        }
        OutputTimes::Logarithmic { first_s, points } => {
            let first = *first_s;
            if !(first > 0.0 && first < end) {
                return Err(format!(
                    "first log output time {first} s must be in (0, {end}) s"
                ));
            }
            let n = (*points).max(2);
            let ratio = (end / first).ln();
            times.extend((0..n).map(|i| first * (ratio * i as f64 / (n - 1) as f64).exp()));
            if let Some(last) = times.last_mut() {
                *last = end;
            }
        }
    }
    if let Some(w) = times
        .windows(2)
        .find(|w| !(w[1].is_finite() && w[1] > w[0]))
    {
        return Err(format!(
                "the output times are not distinct in double precision ({} s then {} s); use fewer output points or a longer end time",
                w[0], w[1]
            ));
    }
    Ok(times)
}

/// Initial concentrations (mol/m3, species order) of `scenario`: mole fractions become
/// concentrations by the ideal gas law, c_i = x_i P / (R T).
fn initial_state(
    scenario: &Scenario,
    names: &[&str],
    find: &mut dyn FnMut(&NamedValue, &str) -> Option<usize>,
    diagnostics: &mut Vec<Diagnostic>,
) -> Vec<f64> {
    let file = &scenario.file;
    let at = &scenario.locations;
    let mut initial = vec![0.0; names.len()];
    let (low_k, high_k) = TEMPERATURE_RANGE_K;
    let temperature_ok = (low_k..=high_k).contains(&scenario.temperature_k);
    if !temperature_ok {
        diagnostics.push(Diagnostic::error(
            file,
            at.temperature,
            format!(
                "temperature {} K is outside {} to {} K",
                show_number(scenario.temperature_k),
                show_number(low_k),
                show_number(high_k)
            ),
        ));
    }
    match &scenario.initial {
        InitialState::Concentrations(values) => {
            for named in values {
                if let Some(i) = find(named, "[initial] concentrations") {
                    initial[i] += named.value;
                }
            }
        }
        InitialState::MoleFractions(values) => {
            let total = match scenario.pressure_pa {
                Some(p) if positive_finite_problem(p).is_none() && temperature_ok => {
                    Some(p / (GAS_CONSTANT * scenario.temperature_k))
                }
                _ => {
                    diagnostics.push(Diagnostic::error(
                        file,
                        at.pressure.or(at.initial),
                        "mole fractions need a positive pressure and temperature",
                    ));
                    None
                }
            };
            for named in values {
                if let (Some(i), Some(total)) = (find(named, "[initial] mole_fractions"), total) {
                    initial[i] += named.value * total;
                }
            }
        }
    }
    if temperature_ok && diagnostics.is_empty() {
        if let Some((i, &x)) = initial.iter().enumerate().find(|(_, x)| !x.is_finite()) {
            diagnostics.push(Diagnostic::error(
                file,
                at.initial,
                format!(
                    "the initial concentration of `{}` is {x} mol/m3, not finite",
                    names.get(i).copied().unwrap_or("?")
                ),
            ));
        } else if initial.iter().all(|&x| x == 0.0) {
            diagnostics.push(
                Diagnostic::error(
                    file,
                    at.initial,
                    "every initial concentration is zero: the mole fractions (c_i / sum c) of the output are undefined",
                )
                .with_help("give at least one species (a bath gas, say) a positive concentration"),
            );
        }
    }
    initial
}

/// Matches `scenario` against `mechanism` and builds the reactor terms; every unknown name
/// and inconsistent setting is reported at once.
fn resolve(
    scenario: &Scenario,
    mechanism: &Mechanism,
    absolute_tolerance_override_mol_per_m3: Option<f64>,
    non_negative: bool,
) -> Result<Resolved, LoadError> {
    let file = scenario.file.as_str();
    let mut diagnostics = Vec::new();
    let species = SpeciesLookup::new(mechanism, file);
    let mut find_diagnostics = Vec::new();
    let mut find =
        |named: &NamedValue, what: &str| species.find(named, what, &mut find_diagnostics);
    let n = mechanism.species.len();
    let names: Vec<&str> = mechanism.species.iter().map(|s| s.name.as_str()).collect();
    let initial = initial_state(scenario, &names, &mut find, &mut diagnostics);

    let atol = scenario.absolute_tolerance_mol_per_m3;
    let mut tolerances = vec![atol; n];
    if positive_finite_problem(atol).is_some() {
        diagnostics.push(Diagnostic::error(
            file,
            None,
            format!("absolute tolerance {atol} mol/m3 must be positive and finite"),
        ));
    }
    for named in &scenario.tolerance_overrides {
        if let Some(i) = find(named, "[solver] absolute_tolerance_for") {
            tolerances[i] = named.value;
        }
    }
    if let Some(a) = absolute_tolerance_override_mol_per_m3 {
        tolerances.iter_mut().for_each(|x| *x = a);
    }
    let ignition = match &scenario.ignition {
        Some(IgnitionSpec::MaxTemperatureRate) => Some(IgnitionCriterion::MaxTemperatureRate),
        Some(IgnitionSpec::SpeciesMaximum(named)) => {
            find(named, "[ignition] species").map(IgnitionCriterion::SpeciesMaximum)
        }
        Some(IgnitionSpec::TemperatureRise(k)) => Some(IgnitionCriterion::TemperatureRise(*k)),
        // Semi-batch and liquid-phase runs report no ignition delay unless asked for
        // ([ignition]): a maximum of dT/dt there is the feed's pace, not an ignition.
        None if scenario.plug.is_none()
            && matches!(scenario.energy, Energy::Adiabatic | Energy::HeatExchange(_))
            && scenario.feeds.is_empty()
            && scenario.liquid.is_none() =>
        {
            Some(IgnitionCriterion::MaxTemperatureRate)
        }
        None => None,
    };
    let flow = scenario
        .flow
        .as_ref()
        .and_then(|spec| stirred_flow(scenario, mechanism, spec, &mut find, &mut diagnostics));
    diagnostics.append(&mut find_diagnostics);
    let conditions = scenario
        .box_spec
        .resolve(mechanism, &species, file, &mut diagnostics);
    let output_times_s = match scenario.output_times_s() {
        _ if scenario.plug.is_some() => vec![0.0],
        Ok(t) => t,
        Err(message) => {
            diagnostics.push(Diagnostic::error(
                file,
                scenario.locations.output_times,
                message,
            ));
            Vec::new()
        }
    };
    // Memory is bounded by design: a grid whose profile would not fit is refused here,
    // before anything is allocated for it.
    let needed = crate::file::profile_bytes(output_times_s.len(), n);
    if needed > crate::file::MAX_PROFILE_BYTES {
        let mib = |b: u64| b / (1024 * 1024);
        diagnostics.push(
            Diagnostic::error(
                file,
                scenario.output_at,
                format!(
                    "{} output times of {n} species would need about {} MiB for the profile, above the limit of {} MiB",
                    output_times_s.len(),
                    mib(needed),
                    mib(crate::file::MAX_PROFILE_BYTES)
                ),
            )
            .with_help("ask for fewer output times (`points` of `grid`, or `times`)"),
        );
    }
    if let Some(spec) = &scenario.plug {
        // A plug-flow run holds each output's full solver state besides its profile row:
        // twice the rows of a profile.
        let rows = spec.distances_m.len();
        let needed = crate::file::profile_bytes(rows.saturating_mul(2), n);
        if needed > crate::file::MAX_PROFILE_BYTES {
            let mib = |b: u64| b / (1024 * 1024);
            diagnostics.push(
                Diagnostic::error(
                    file,
                    Some(spec.at),
                    format!(
                        "{rows} output distances of {n} species would need about {} MiB, above the limit of {} MiB",
                        mib(needed),
                        mib(crate::file::MAX_PROFILE_BYTES)
                    ),
                )
                .with_help("ask for fewer output distances (`points` or `distances` in [plug_flow])"),
            );
        }
    }
    let plug = scenario.plug.as_ref().and_then(|spec| {
        plug_problems(scenario, &mut diagnostics);
        let inlet_k = match &scenario.energy {
            Energy::Prescribed(history) => history.temperature_at(0.0),
            _ => scenario.temperature_k,
        };
        crate::plug_section::plug_flow(file, mechanism, spec, &initial, inlet_k, &mut diagnostics)
    });
    let output_distances_m = scenario
        .plug
        .as_ref()
        .map_or_else(Vec::new, |spec| spec.distances_m.clone());
    let (semi_batch, liquid) = vessel(scenario, mechanism, &species, &mut diagnostics);
    let model = ReactorModel {
        constraint: scenario.constraint,
        energy: scenario.energy.clone(),
        conditions,
        flow,
        plug,
        semi_batch,
        liquid,
    };
    model_problems(scenario, mechanism, &model, &mut diagnostics);
    if !diagnostics.is_empty() {
        diagnostics.sort_by_key(|d| d.location.map(|l| (l.line, l.column)).unwrap_or((0, 0)));
        return Err(LoadError::Invalid {
            diagnostics: Diagnostics(diagnostics),
        });
    }
    // The ignition delay is located on the solver's own steps, not on the output grid.
    let initial_k = match &scenario.energy {
        Energy::Prescribed(history) => history.temperature_at(0.0),
        _ => scenario.temperature_k,
    };
    let watch = ignition.map_or_else(Vec::new, |c| c.watches(initial_k));
    Ok(Resolved {
        model,
        initial_mol_per_m3: initial,
        output_times_s,
        output_distances_m,
        options: IntegrationOptions {
            relative_tolerance: scenario.relative_tolerance,
            absolute_tolerances_mol_per_m3: tolerances,
            linear_algebra: scenario.linear_algebra,
            max_steps: scenario.max_steps,
            non_negative,
            watch,
            keep_invariants: scenario.keep_invariants,
            newton_tolerance: scenario.newton_tolerance,
            wall_time_limit_s: scenario.wall_time_limit_s,
            monitor: None,
        },
        ignition,
    })
}

/// What a plug flow does not go with, located at the reactor kind or the section at fault:
/// a kind that does not hold the pressure, a jacket (the wall is the plug flow's), a wall
/// without the energy balance, a stirred-tank `[flow]`, `[box]` and `[ignition]`.
fn plug_problems(scenario: &Scenario, diagnostics: &mut Vec<Diagnostic>) {
    let Some(spec) = &scenario.plug else {
        return;
    };
    let file = scenario.file.as_str();
    let kind = scenario.kind_label();
    let mut at_kind = |message: String, help: &str| {
        diagnostics.push(
            Diagnostic::error(file, scenario.locations.reactor, message)
                .with_help(help.to_string()),
        );
    };
    if scenario.constraint != stoik_reactor::Constraint::ConstantPressure {
        at_kind(
            format!("a plug flow of gas holds the pressure (or follows `pressure_profile`): the `{kind}` kind holds the volume"),
            "use `isothermal-constant-pressure`, `adiabatic-constant-pressure` or `prescribed-temperature-constant-pressure`",
        );
    } else if matches!(scenario.energy, Energy::HeatExchange(_)) {
        at_kind(
            format!("the `{kind}` kind's jacket is for stirred tanks; a plug flow exchanges heat through its wall"),
            "use `adiabatic-constant-pressure` with `wall_heat_transfer_coefficient` and `wall_temperature` in [plug_flow]",
        );
    } else if spec.wall.is_some() && !matches!(scenario.energy, Energy::Adiabatic) {
        at_kind(
            format!("wall heat exchange needs the energy balance, which the `{kind}` kind does not solve"),
            "use `adiabatic-constant-pressure`: the energy balance with the wall's heat added",
        );
    }
    let mut at_section = |what: &str| {
        diagnostics.push(Diagnostic::error(
            file,
            Some(spec.at),
            format!("[plug_flow] does not go with {what}"),
        ));
    };
    if scenario.flow.is_some() {
        at_section("[flow] (a reactor is a stirred tank or a plug flow)");
    }
    if scenario.locations.box_section.is_some() {
        at_section("[box] (fixed species, emissions and deposition are for closed boxes)");
    }
    if scenario.ignition.is_some() {
        at_section("[ignition] (the ignition delay is measured in time; read the profile against distance instead)");
    }
}

/// What the reactor would refuse before integrating `model`, found here so that `check`
/// reports it located, with names: species without thermochemistry under the energy
/// balance, and box conditions on a reactor that cannot take them.
fn model_problems(
    scenario: &Scenario,
    mechanism: &Mechanism,
    model: &ReactorModel,
    diagnostics: &mut Vec<Diagnostic>,
) {
    let file = scenario.file.as_str();
    if model.solves_energy() && scenario.liquid.is_none() {
        let missing: Vec<&str> = mechanism
            .species
            .iter()
            .filter(|s| s.thermo.is_none())
            .map(|s| s.name.as_str())
            .collect();
        if !missing.is_empty() {
            diagnostics.push(
                Diagnostic::error(
                    file,
                    scenario.locations.reactor,
                    format!(
                        "the `{}` reactor solves the energy balance, which needs thermochemistry for every species; none for {}",
                        scenario.kind_label(),
                        missing
                            .iter()
                            .map(|n| format!("`{n}`"))
                            .collect::<Vec<_>>()
                            .join(", ")
                    ),
                )
                .with_help("give those species `thermo` or a `thermo_files` entry in the mechanism, use an isothermal kind, or describe a liquid phase with [liquid] (mixture heat capacity and reaction enthalpies)"),
            );
        }
    }
    let needs_volume_state = !scenario.feeds.is_empty()
        || (matches!(model.energy, Energy::HeatExchange(_))
            && model.constraint != stoik_reactor::Constraint::ConstantVolume
            && model.flow.is_none());
    if needs_volume_state && model.semi_batch.is_none() && scenario.volume_m3.is_none() {
        diagnostics.push(Diagnostic::error(
            file,
            scenario.locations.reactor,
            "this reactor's volume is a state: give its initial `volume` in [reactor]",
        ));
    }
    if model.semi_batch.is_some()
        && (!model.conditions.fixed_species.is_empty()
            || !model.conditions.emissions.is_empty()
            || !model.conditions.deposition.is_empty())
    {
        diagnostics.push(Diagnostic::error(
            file,
            scenario.locations.box_section.or(scenario.locations.reactor),
            "fixed species, emissions and deposition do not go with [[feed]] (a semi-batch reactor)",
        ));
    }
    let c = &model.conditions;
    let needs_closed_volume =
        !c.fixed_species.is_empty() || !c.emissions.is_empty() || !c.deposition.is_empty();
    if needs_closed_volume
        && (model.constraint != stoik_reactor::Constraint::ConstantVolume || model.solves_energy())
    {
        diagnostics.push(Diagnostic::error(
            file,
            scenario.locations.box_section.or(scenario.locations.reactor),
            format!(
                "fixed species, emissions and deposition need an isothermal or prescribed-temperature constant-volume reactor, not `{}`",
                scenario.kind_label()
            ),
        ));
    }
}

/// The volume state and feeds (`[[feed]]`, or a closed constant-pressure jacketed batch)
/// and the liquid phase (`[liquid]`) of `scenario`; problems recorded in `diagnostics`.
fn vessel(
    scenario: &Scenario,
    mechanism: &Mechanism,
    species: &SpeciesLookup<'_>,
    diagnostics: &mut Vec<Diagnostic>,
) -> (Option<SemiBatch>, Option<LiquidPhase>) {
    let file = scenario.file.as_str();
    let n = mechanism.species.len();
    let jacketed_closed_constant_pressure = matches!(scenario.energy, Energy::HeatExchange(_))
        && scenario.constraint == stoik_reactor::Constraint::ConstantPressure
        && scenario.flow.is_none();
    let semi_batch = if !scenario.feeds.is_empty() || jacketed_closed_constant_pressure {
        let feeds: Vec<Option<Feed>> = scenario
            .feeds
            .iter()
            .map(|f| f.resolve(scenario, n, species, diagnostics))
            .collect();
        match (
            scenario.volume_m3,
            feeds.into_iter().collect::<Option<Vec<_>>>(),
        ) {
            (Some(v), Some(feeds)) => match SemiBatch::new(v, feeds) {
                Ok(s) => Some(s),
                Err(e) => {
                    diagnostics.push(Diagnostic::error(
                        file,
                        scenario.locations.reactor,
                        e.to_string(),
                    ));
                    None
                }
            },
            _ => None,
        }
    } else {
        None
    };
    let energy_solved = matches!(scenario.energy, Energy::Adiabatic | Energy::HeatExchange(_));
    let liquid = scenario
        .liquid
        .as_ref()
        .and_then(|l| l.resolve(mechanism, energy_solved, file, diagnostics));
    (semi_batch, liquid)
}

/// The stirred-tank flow of `[flow]`: inlet concentrations (mole fractions at the pressure
/// and the inlet temperature), the inlet temperature (the reactor's when not given) and the
/// residence time from the feed rate (a mass feed through the inlet density
/// `sum_i c_in,i M_i`). `None` after recording the problems.
fn stirred_flow(
    scenario: &Scenario,
    mechanism: &Mechanism,
    spec: &FlowSpec,
    find: &mut dyn FnMut(&NamedValue, &str) -> Option<usize>,
    diagnostics: &mut Vec<Diagnostic>,
) -> Option<StirredFlow> {
    let file = scenario.file.as_str();
    let n = mechanism.species.len();
    let inlet_k = spec.inlet_temperature_k.unwrap_or(scenario.temperature_k);
    let mut inlet = vec![0.0; n];
    match &spec.inlet {
        InitialState::Concentrations(values) => {
            for named in values {
                if let Some(i) = find(named, "[flow] inlet_concentrations") {
                    inlet[i] += named.value;
                }
            }
        }
        InitialState::MoleFractions(values) => {
            let total = scenario.pressure_pa.map(|p| p / (GAS_CONSTANT * inlet_k));
            for named in values {
                if let (Some(i), Some(total)) = (find(named, "[flow] inlet_mole_fractions"), total)
                {
                    inlet[i] += named.value * total;
                }
            }
        }
    }
    let residence_time_s = match spec.rate {
        FeedRate::ResidenceTime(tau) => tau,
        FeedRate::Volumetric {
            m3_per_s,
            volume_m3,
        } => volume_m3 / m3_per_s,
        FeedRate::Mass {
            kg_per_s,
            volume_m3,
        } => {
            let mut density = 0.0;
            for (i, c) in inlet.iter().enumerate().filter(|(_, c)| **c > 0.0) {
                match mechanism.molar_mass_kg_per_mol(i) {
                    Some(m) => density += c * m,
                    None => {
                        diagnostics.push(
                            Diagnostic::error(
                                file,
                                Some(spec.at),
                                format!(
                                    "`mass_flow` needs the feed's density, but species `{}` has no molar mass (no elements)",
                                    mechanism.species[i].name
                                ),
                            )
                            .with_help("give `residence_time` or `volumetric_flow` instead"),
                        );
                        return None;
                    }
                }
            }
            if density <= 0.0 {
                diagnostics.push(Diagnostic::error(
                    file,
                    Some(spec.at),
                    "`mass_flow` needs a feed with a positive density (the inlet is empty)",
                ));
                return None;
            }
            volume_m3 * density / kg_per_s
        }
    };
    match StirredFlow::new(residence_time_s, inlet, inlet_k) {
        Ok(flow) => Some(flow),
        Err(e) => {
            diagnostics.push(Diagnostic::error(file, Some(spec.at), e.to_string()));
            None
        }
    }
}
