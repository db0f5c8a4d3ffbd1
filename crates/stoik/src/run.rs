//! `stoik run`: integrate a scenario and write its profiles. The scenario crate plans and
//! runs; this file applies the flags, writes the CSV and prints.

use crate::conservation_out::report_from_check;
use crate::csv_out::{write_plug_profiles, write_profiles, CsvError, CsvNotes};
use crate::error::CliError;
use crate::out_file::{partial_path, write_atomically, OutputPaths};
use crate::RunArgs;
use std::path::{Path, PathBuf};
use std::time::Instant;
use stoik::mechanism::Mechanism;
use stoik::reactor::{Constraint, Energy, IgnitionCriterion, IntegrationFailure, Profiles};
use stoik::scenario::{RunOutcome, RunPlan, ScenarioError};

/// Temperature rise (K) above which an adiabatic run counts as an ignition or runaway for
/// the caution printed with the results.
pub const RUNAWAY_RISE_K: f64 = 50.0;

/// The caution printed with every run.
pub const CAUTION: &str = "Caution: simulation is no substitute for local codes, standards and licensed engineering review.";
/// The caution printed with every liquid-phase run that solves the energy balance (jacketed or
/// adiabatic process vessels, the ground of thermal-runaway studies).
pub const PROCESS_SAFETY_CAUTION: &str = "Caution: an exothermic process vessel can run away; simulation is no substitute for process-safety review (measured kinetics, calorimetry) and local codes.";

/// The caution lines every run of `plan` ends with: the process-safety line for a liquid
/// phase solving its energy balance, then the general caution.
pub fn closing_cautions(model: &stoik::reactor::ReactorModel) -> Vec<String> {
    let mut lines = Vec::new();
    if model.liquid.is_some() && model.solves_energy() {
        lines.push(PROCESS_SAFETY_CAUTION.to_string());
    }
    lines.push(CAUTION.to_string());
    lines
}

/// Applies an override, naming its flag when the plan refuses it.
fn flag(name: &'static str, result: Result<(), ScenarioError>) -> Result<(), CliError> {
    result.map_err(|source| CliError::Flag { flag: name, source })
}

/// The plan of `args.scenario` with the flags applied.
fn plan(args: &RunArgs) -> Result<RunPlan, CliError> {
    let mut plan = RunPlan::load(&args.scenario)?;
    if let Some(t) = args.temperature_k {
        flag("--temperature-k", plan.set_temperature_k(t))?;
    }
    if let Some(t) = args.end_time_s {
        flag("--end-time-s", plan.set_end_time_s(t))?;
    }
    if let Some(r) = args.rtol {
        flag("--rtol", plan.set_relative_tolerance(r))?;
    }
    if let Some(a) = args.atol_mol_per_m3 {
        flag(
            "--atol-mol-per-m3",
            plan.set_absolute_tolerance_mol_per_m3(a),
        )?;
    }
    if let Some(choice) = args.linear_algebra {
        plan.set_linear_algebra(choice);
    }
    if let Some(limit) = args.wall_time_limit_s {
        flag(
            "--wall-time-limit-s",
            plan.set_wall_time_limit_s(Some(limit)),
        )?;
    }
    plan.set_non_negative(!args.allow_negative);
    Ok(plan)
}

/// The failure of a run in words, with advice naming the species.
fn failure_message(failure: &IntegrationFailure, mechanism: &Mechanism) -> String {
    let (names, equations) = names_and_equations(mechanism);
    format!("{failure}\n{}", failure.advice(&names, &equations))
}

/// The species names and step equations of `mechanism`, in mechanism order.
fn names_and_equations(mechanism: &Mechanism) -> (Vec<String>, Vec<String>) {
    (
        mechanism.species.iter().map(|s| s.name.clone()).collect(),
        mechanism.steps.iter().map(|s| s.equation.clone()).collect(),
    )
}

/// Runs a scenario.
pub fn run(args: &RunArgs) -> Result<(), CliError> {
    let started = Instant::now();
    let plan = plan(args)?;
    let output = args
        .output
        .clone()
        .unwrap_or_else(|| PathBuf::from(format!("{}.csv", scenario_stem(&args.scenario))));
    // Every output is checked before the integration, so a refused path costs no run time.
    let mut outputs = OutputPaths::new();
    record_inputs(&mut outputs, &args.scenario, &plan);
    let flag = if args.output.is_some() {
        "-o/--output"
    } else {
        "the default output (give another with -o)"
    };
    outputs.output(flag, &output)?;
    outputs.output(
        format!("{flag}, partial profile of a failed run"),
        &partial_path(&output),
    )?;
    if let Some(report) = &args.report {
        outputs.output("--report", report)?;
    }
    let choice = crate::report::ProfileChoice {
        species: report_species(&args.report_species, plan.mechanism())?,
        mole_fractions: args.report_mole_fractions,
    };
    let asked = crate::run_analyses::asked(args, plan.mechanism())?;
    // Ctrl-C stops the run at its next step; a run longer than a second shows its progress.
    let mut plan = plan;
    let monitor = crate::progress::interrupt_monitor();
    plan.set_monitor(Some(monitor.clone()));
    let progress = {
        let times = plan.output_times_s();
        let end = times.last().copied().unwrap_or(0.0);
        let first = times.iter().copied().find(|&t| t > 0.0).unwrap_or(end);
        crate::progress::RunProgress::start(&monitor, first, end, args.quiet)
    };
    let outcome = plan.run()?;
    progress.finish();
    let elapsed = started.elapsed();
    let mechanism = plan.mechanism();
    if !args.quiet {
        for warning in &outcome.warnings {
            eprintln!("{warning}");
        }
    }
    let profiles = outcome.profiles();
    // A failed run writes its partial profile beside the output, never over it.
    let target = output;
    let output = if outcome.failure().is_some() {
        partial_path(&target)
    } else {
        target.clone()
    };
    match write_csv(&output, &plan, profiles, outcome.distances_m.as_deref()) {
        // Printed even with --quiet: the file holds undefined values.
        Ok(notes) => {
            if let Some(w) = notes.warning(&output.display().to_string()) {
                eprintln!("{w}");
            }
        }
        Err(source @ CsvError::NonFinite { .. }) => {
            return Err(CliError::NonFinite {
                path: output,
                source,
                failure: outcome.failure().map(|f| failure_message(f, mechanism)),
            })
        }
        Err(e) => return Err(CliError::write(&output, e)),
    }
    let conservation =
        report_from_check(mechanism, &outcome.conservation, profiles, plan.options());
    let mut lines = summary_lines(
        &plan,
        profiles,
        outcome.distances_m.as_deref(),
        elapsed.as_secs_f64(),
        &output,
        &conservation.lines,
    );
    lines.extend(ignition_lines(&plan, &outcome));
    lines.extend(closing_cautions(plan.model()));
    if !args.quiet {
        for line in &lines {
            println!("{line}");
        }
        for warning in &conservation.warnings {
            eprintln!("{warning}");
        }
    }
    if let Some(path) = &args.report {
        let warnings: Vec<String> = outcome
            .warnings
            .iter()
            .map(|w| w.to_string())
            .chain(conservation.warnings.iter().cloned())
            .collect();
        let failure = outcome.failure().map(|f| failure_message(f, mechanism));
        // The analyses rerun the scenario: only for a run that completed.
        let analyses = if args.report_without_analyses || failure.is_some() {
            crate::run_analyses::RunAnalyses::default()
        } else {
            crate::run_analyses::analyse(&plan, &outcome, &asked)
        };
        let page = crate::report::run_page(
            path,
            &args.scenario,
            &plan,
            profiles,
            &RunText {
                summary: &lines,
                warnings: &warnings,
                failure: failure.as_deref(),
            },
            &choice,
            &analyses,
        )?;
        crate::report::write(path, &page)?;
        if !args.quiet {
            println!("wrote {}", path.display());
        }
    }
    match outcome.result {
        Ok(_) => Ok(()),
        Err(failure) if failure.kind == stoik::reactor::FailureKind::Interrupted => {
            Err(CliError::Interrupted {
                time_s: failure.time_s,
                rows: failure.partial.times_s.len(),
                output,
                target,
            })
        }
        Err(failure) => Err(CliError::IntegrationFailed {
            advice: {
                let (names, equations) = names_and_equations(mechanism);
                failure.advice(&names, &equations)
            },
            rows: failure.partial.times_s.len(),
            failure,
            output,
            target,
        }),
    }
}

/// What a run printed, for its report.
pub struct RunText<'a> {
    /// The summary lines as printed (the caution last).
    pub summary: &'a [String],
    /// Warnings of the files, the thermochemistry and the conservation check.
    pub warnings: &'a [String],
    /// The integration failure in words, when the run failed.
    pub failure: Option<&'a str>,
}

/// The species plotted in the report: those of `--report-species`, or the largest few by
/// peak (`None`: chosen after the run). Shared by `run` and `sensitivity`.
pub fn report_species(
    names: &[String],
    mechanism: &Mechanism,
) -> Result<Option<Vec<usize>>, CliError> {
    if names.is_empty() {
        return Ok(None);
    }
    if names.len() > stoik::plot::PALETTE.len() {
        return Err(CliError::BadFlag(format!(
            "--report-species: {} species given; at most {} are plotted (one colour each)",
            names.len(),
            stoik::plot::PALETTE.len()
        )));
    }
    names
        .iter()
        .map(|name| {
            mechanism.species_index(name.trim()).ok_or_else(|| {
                CliError::BadFlag(format!(
                    "--report-species: unknown species `{}`",
                    name.trim()
                ))
            })
        })
        .collect::<Result<Vec<_>, _>>()
        .map(Some)
}

/// Words for a criterion in the run summary.
fn criterion_words(c: IgnitionCriterion, mechanism: &Mechanism) -> String {
    match c {
        IgnitionCriterion::MaxTemperatureRate => "maximum of dT/dt".to_string(),
        IgnitionCriterion::SpeciesMaximum(i) => format!(
            "peak of {}",
            mechanism.species.get(i).map_or("?", |s| s.name.as_str())
        ),
        IgnitionCriterion::TemperatureRise(k) => format!("temperature rise of {k} K"),
    }
}

/// The lines on the ignition delay and, for an adiabatic run whose temperature rose by more than
/// [`RUNAWAY_RISE_K`], the hazard caution.
pub fn ignition_lines(plan: &RunPlan, outcome: &RunOutcome) -> Vec<String> {
    let mut lines = Vec::new();
    let mechanism = plan.mechanism();
    if let Some(criterion) = outcome.ignition {
        match outcome.ignition_delay {
            // Read by scripts (tests/scipy/ignition_check.py): full precision, the shortest
            // digits that read back as the same f64.
            Some(delay) => lines.push(format!(
                "ignition delay: {:e} s ({})",
                delay.delay_s,
                criterion_words(criterion, mechanism)
            )),
            None => lines.push(format!(
                "ignition delay: none found by the {} within the simulated time",
                criterion_words(criterion, mechanism)
            )),
        }
    }
    let temperatures = &outcome.profiles().temperatures_k;
    let rise = temperatures
        .iter()
        .fold(f64::NEG_INFINITY, |m, &t| m.max(t))
        - temperatures.first().copied().unwrap_or(0.0);
    if plan.model().solves_energy() && rise > RUNAWAY_RISE_K && plan.model().liquid.is_some() {
        lines.push(format!(
            "CAUTION: thermal runaway detected (temperature rise {rise:.0} K): the heat released outgrew the cooling under these conditions."
        ));
    } else if plan.model().solves_energy() && rise > RUNAWAY_RISE_K {
        let has = |name: &str| mechanism.species.iter().any(|s| s.name == name);
        let hydrogen = if has("H2") && has("O2") {
            " Hydrogen-oxygen mixtures are explosive."
        } else {
            ""
        };
        lines.push(format!(
            "CAUTION: ignition or thermal runaway detected (temperature rise {rise:.0} K). This mixture is flammable or explosive under these conditions.{hydrogen}"
        ));
    }
    lines
}

/// Records the files a plan was read from (the scenario, its mechanism, the mechanism's thermo
/// files) as inputs no output may overwrite.
pub fn record_inputs(outputs: &mut OutputPaths, scenario: &Path, plan: &RunPlan) {
    outputs.input(scenario);
    outputs.input(&plan.scenario().mechanism_path);
    for thermo in &plan.mechanism_file().thermo_files {
        outputs.input(thermo);
    }
}

/// The scenario file's name without `.toml` and `.scenario`: the default CSV name.
pub fn scenario_stem(path: &Path) -> String {
    path.file_stem()
        .map(|s| {
            s.to_string_lossy()
                .trim_end_matches(".scenario")
                .to_string()
        })
        .unwrap_or_else(|| "profiles".to_string())
}

/// Writes `profiles` as CSV in the plan's output concentration unit, atomically (nothing is
/// left at `output` when the write fails or a value is not finite); a plug flow's rows carry
/// their distance from the inlet (`distances_m`, m) and residence time.
pub fn write_csv(
    output: &Path,
    plan: &RunPlan,
    profiles: &Profiles,
    distances_m: Option<&[f64]>,
) -> Result<CsvNotes, CsvError> {
    let unit = plan.output_concentration_unit();
    write_atomically(output, |w| match distances_m {
        Some(d) => write_plug_profiles(
            w,
            plan.mechanism(),
            d,
            profiles,
            unit.to_si_factor(),
            unit.label(),
        ),
        None => write_profiles(
            w,
            plan.mechanism(),
            profiles,
            unit.to_si_factor(),
            unit.label(),
        ),
    })
}

/// The run summary, line by line: reactor, final state, conservation, solver, files.
fn summary_lines(
    plan: &RunPlan,
    profiles: &Profiles,
    distances_m: Option<&[f64]>,
    wall_s: f64,
    output: &std::path::Path,
    conservation: &[String],
) -> Vec<String> {
    let mut lines = Vec::new();
    let mechanism = plan.mechanism();
    let unit = plan.output_concentration_unit();
    lines.push(format!(
        "{}: {} species, {} steps; {}",
        plan.scenario().title.as_deref().unwrap_or("scenario"),
        mechanism.species.len(),
        mechanism.steps.len(),
        describe_reactor(plan)
    ));
    let (Some(_), Some(last), Some(t_end)) = (
        profiles.concentrations_mol_per_m3.first(),
        profiles.concentrations_mol_per_m3.last(),
        profiles.times_s.last(),
    ) else {
        lines.push("no output rows".to_string());
        return lines;
    };
    let rows = profiles.times_s.len();
    let place = match distances_m.and_then(|d| d.last()) {
        Some(z) => format!("z = {z:.6e} m (residence time {t_end:.6e} s)"),
        None => format!("t = {t_end:.6e} s"),
    };
    let final_temperature = profiles.temperatures_k.last().copied().unwrap_or(f64::NAN);
    let final_volume = profiles
        .volumes_m3
        .last()
        .map(|v| format!(", V = {v:.6e} m3"))
        .unwrap_or_default();
    if plan.model().liquid.is_some() {
        // A liquid phase has no ideal-gas pressure.
        lines.push(format!(
            "final state at {place}: T = {final_temperature:.2} K{final_volume}; concentrations [{}]:",
            unit.label()
        ));
    } else {
        lines.push(format!(
            "final state at {place}: T = {final_temperature:.2} K{final_volume}, P = {:.6e} Pa; concentrations [{}]:",
            profiles.pressure_pa(rows - 1).unwrap_or(f64::NAN),
            unit.label()
        ));
    }
    if !profiles.volumes_m3.is_empty() {
        let temperatures = &profiles.temperatures_k;
        let (hottest_row, hottest) =
            temperatures
                .iter()
                .enumerate()
                .fold(
                    (0, f64::NEG_INFINITY),
                    |m, (i, &t)| if t > m.1 { (i, t) } else { m },
                );
        lines.push(format!(
            "hottest: T = {hottest:.2} K at t = {:.6e} s",
            profiles.times_s[hottest_row]
        ));
    }
    let mut order: Vec<usize> = (0..last.len()).collect();
    order.sort_by(|&a, &b| last[b].total_cmp(&last[a]));
    for &i in order.iter().take(12) {
        lines.push(format!(
            "  {:<16} {:>14.6e}",
            mechanism.species[i].name,
            last[i] / unit.to_si_factor()
        ));
    }
    if order.len() > 12 {
        lines.push(format!(
            "  ... {} more species in the CSV",
            order.len() - 12
        ));
    }
    lines.extend(conservation.iter().cloned());
    let s = &profiles.stats;
    lines.push(format!(
        "solver: BDF, {:?} linear algebra; {s}",
        profiles.linear_algebra_used
    ));
    if s.negative_step_rejections > 0 {
        lines.push(format!(
            "steps retried because a concentration went below minus its absolute tolerance: {}",
            s.negative_step_rejections
        ));
    }
    if s.invariant_projections > 0 {
        lines.push(format!(
            "state projected back onto its conserved quantities (round-off drift above 1 % of the error weights): {} times",
            s.invariant_projections
        ));
    }
    if s.most_negative_concentration_mol_per_m3 < 0.0 {
        lines.push(format!(
            "most negative concentration seen: {:.3e} mol/m3",
            s.most_negative_concentration_mol_per_m3
        ));
    }
    lines.push(format!("wall time: {:.3} ms", wall_s * 1e3));
    lines.push(format!(
        "wrote {} ({} rows, {} columns)",
        output.display(),
        profiles.times_s.len(),
        // time (and distance), species, temperature, volume (semi-batch), pressure, and
        // density when every species has atoms
        2 * mechanism.species.len()
            + 3
            + usize::from(distances_m.is_some())
            + usize::from(!profiles.volumes_m3.is_empty())
            + usize::from(mechanism.species.iter().all(|s| s.composition.is_some()))
    ));
    lines
}

/// One line on the reactor of a plan.
pub fn describe_reactor(plan: &RunPlan) -> String {
    let model = plan.model();
    let held = match model.constraint {
        Constraint::ConstantPressure => "constant pressure",
        Constraint::ConstantVolume => "constant volume",
    };
    let t = plan.temperature_k();
    if let Some(plug) = &model.plug {
        let walled = plug.wall().map_or(String::new(), |w| {
            format!(
                ", wall at {} K with U = {} W/(m2 K)",
                w.wall_temperature_k(),
                w.coefficient_w_per_m2_k()
            )
        });
        let pressure = if plug.pressure_profile().is_some() {
            "pressure following its profile"
        } else {
            "constant pressure"
        };
        let energy = match &model.energy {
            Energy::Isothermal => format!("isothermal at {t} K"),
            Energy::Adiabatic if plug.wall().is_some() => format!("inlet at {t} K"),
            Energy::Adiabatic => format!("adiabatic, inlet at {t} K"),
            _ => describe_energy(model, held, t),
        };
        let length = plan.output_distances_m().last().copied().unwrap_or(0.0);
        return format!(
            "plug flow, {energy}, {pressure}{walled}; length {length} m, mass flow {:.6e} kg/s",
            plug.mass_flow_kg_per_s()
        );
    }
    let held = match (&model.semi_batch, model.constraint) {
        (Some(_), Constraint::ConstantVolume) => "constant density",
        _ => held,
    };
    let liquid = match &model.liquid {
        Some(l) => format!(
            "; liquid phase, rho cp = {} J/(m3 K), reaction enthalpies per step",
            l.heat_capacity_j_per_m3_k()
        ),
        None => String::new(),
    };
    let batch = match &model.semi_batch {
        Some(s) if s.feeds().is_empty() => {
            format!("; volume {} m3 at the start", s.initial_volume_m3())
        }
        Some(s) => format!(
            "; semi-batch, {} m3 at the start, {} feed{}",
            s.initial_volume_m3(),
            s.feeds().len(),
            if s.feeds().len() == 1 { "" } else { "s" }
        ),
        None => String::new(),
    };
    match &model.flow {
        None => format!("{}{batch}{liquid}", describe_energy(model, held, t)),
        Some(flow) => format!(
            "stirred tank, {}; residence time {} s, feed at {} K{liquid}",
            describe_energy(model, held, t),
            flow.residence_time_s(),
            flow.inlet_temperature_k()
        ),
    }
}

/// The temperature law of `model` with what it holds (`held`) and its temperature `t` (K).
fn describe_energy(model: &stoik::reactor::ReactorModel, held: &str, t: f64) -> String {
    match &model.energy {
        Energy::Isothermal => format!("isothermal {held} at {t} K"),
        Energy::Adiabatic => format!("adiabatic {held}, starting at {t} K"),
        Energy::HeatExchange(x) => {
            let coolant = x.coolant();
            let coolant = match coolant.temperatures_k() {
                [one] => format!("coolant at {one} K"),
                many => format!("coolant temperature through {} points", many.len()),
            };
            if let Some((times, values)) = x.ua_history() {
                let unit = if x.ua_total_w_per_k().is_some() {
                    "W/K"
                } else {
                    "W/(m3 K)"
                };
                let what = if x.ua_total_w_per_k().is_some() {
                    "U A"
                } else {
                    "U A / V"
                };
                return format!(
                    "jacketed {held}, starting at {t} K, {what} from {} {unit} through {} points to {} {unit}, {coolant}",
                    values[0],
                    times.len(),
                    values[values.len() - 1]
                );
            }
            match x.ua_total_w_per_k() {
                Some(ua) => {
                    format!("jacketed {held}, starting at {t} K, U A = {ua} W/K, {coolant}")
                }
                None => format!(
                    "jacketed {held}, starting at {t} K, U A / V = {} W/(m3 K), {coolant}",
                    x.ua_per_volume_w_per_m3_k()
                ),
            }
        }
        Energy::Prescribed(history) => format!(
            "{held}, temperature prescribed through {} points",
            history.times_s().len()
        ),
    }
}
