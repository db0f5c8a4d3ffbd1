//! `stoik run`: integrate a scenario and write its profiles.

use crate::check::report_load_error;
use crate::csv_out::{write_profiles, CsvError, CsvNotes};
use crate::out_file::write_atomically;
use crate::{LinearAlgebraArg, RunArgs, EXIT_BAD_INPUT, EXIT_INTEGRATION_FAILED, EXIT_OK};
use std::path::{Path, PathBuf};
use std::time::Instant;
use stoik::kinetics::Kinetics;
use stoik::mechanism::ResolvedScenario;
use stoik::mechanism::{
    load_mechanism, load_scenario, IgnitionChoice, LinearAlgebraChoice, Mechanism, ReactorKind,
    Scenario,
};
use stoik::reactor::{
    self, ignition_delay, BoxConditions, Constraint, Energy, IgnitionCriterion, IgnitionDelay,
    IntegrationOptions, LinearAlgebra, PhotolysisRate, Profiles, ReactorModel, TemperatureHistory,
};

/// Temperature rise (K) above which an adiabatic run counts as an ignition or runaway for
/// the caution printed with the results.
pub const RUNAWAY_RISE_K: f64 = 50.0;

/// The caution printed with every run.
pub const CAUTION: &str = "Caution: simulation is no substitute for local codes, standards and licensed engineering review.";

fn bad_flag(message: &str) -> u8 {
    eprintln!("error: {message}");
    EXIT_BAD_INPUT
}

/// Runs a scenario; returns the exit status.
pub fn run(args: &RunArgs) -> u8 {
    let started = Instant::now();
    let (mut scenario, warnings) = match load_scenario(&args.scenario) {
        Ok(ok) => ok,
        Err(e) => {
            report_load_error(&e);
            return EXIT_BAD_INPUT;
        }
    };
    let file = match load_mechanism(&scenario.mechanism_path) {
        Ok(file) => file,
        Err(e) => {
            report_load_error(&e);
            return EXIT_BAD_INPUT;
        }
    };
    if !args.quiet {
        for d in warnings.iter().chain(file.warnings.iter()) {
            eprintln!("{d}");
        }
    }
    if let Some(t) = args.temperature_k {
        if !(t.is_finite() && t > 0.0) {
            return bad_flag(&format!(
                "--temperature-k must be a positive number of kelvin, got {t}"
            ));
        }
        if scenario.reactor.prescribed() {
            return bad_flag(
                "--temperature-k cannot override a prescribed temperature history; edit `temperature_history` instead",
            );
        }
        scenario.temperature_k = t;
    }
    if let Some(t) = args.end_time_s {
        if !(t.is_finite() && t > 0.0) {
            return bad_flag(&format!(
                "--end-time-s must be a positive number of seconds, got {t}"
            ));
        }
        scenario.end_time_s = t;
    }
    if let Some(r) = args.rtol {
        if !(r > 0.0 && r < 1.0) {
            return bad_flag(&format!("--rtol must lie between 0 and 1, got {r}"));
        }
        scenario.relative_tolerance = r;
    }
    if let Some(choice) = args.linear_algebra {
        scenario.linear_algebra = match choice {
            LinearAlgebraArg::Auto => LinearAlgebraChoice::Auto,
            LinearAlgebraArg::Dense => LinearAlgebraChoice::Dense,
            LinearAlgebraArg::Sparse => LinearAlgebraChoice::Sparse,
        };
    }
    let mechanism = &file.mechanism;
    if !args.quiet {
        let (low, high) = match &scenario.temperature_history {
            Some(points) => points.iter().fold((f64::INFINITY, 0.0f64), |(lo, hi), p| {
                (lo.min(p.1), hi.max(p.1))
            }),
            None => (scenario.temperature_k, scenario.temperature_k),
        };
        for line in thermo_range_warnings(mechanism, low, high) {
            eprintln!("{line}");
        }
    }
    let resolved = match scenario.resolve(mechanism) {
        Ok(r) => r,
        Err(e) => {
            report_load_error(&e);
            return EXIT_BAD_INPUT;
        }
    };
    let mut absolute = resolved.absolute_tolerances_mol_per_m3.clone();
    if let Some(a) = args.atol_mol_per_m3 {
        if !(a.is_finite() && a > 0.0) {
            return bad_flag(&format!(
                "--atol-mol-per-m3 must be a positive number, got {a}"
            ));
        }
        absolute.iter_mut().for_each(|x| *x = a);
    }

    let kinetics = match Kinetics::compile(mechanism) {
        Ok(k) => k,
        Err(e) => return bad_flag(&e.to_string()),
    };
    let mut options = integration_options(&scenario, absolute, !args.allow_negative);
    let model = match reactor_model(&scenario, &resolved) {
        Ok(m) => m,
        Err(e) => return bad_flag(&e),
    };
    // The ignition delay is located on the solver's own steps, not on the output grid.
    if let Some(criterion) = ignition_criterion(&scenario, resolved.ignition_species) {
        let initial_k = match &model.energy {
            Energy::Prescribed(history) => history.temperature_at(0.0),
            _ => scenario.temperature_k,
        };
        options.watch.extend(criterion.watches(initial_k));
    }
    let result = reactor::simulate(
        &kinetics,
        &model,
        scenario.temperature_k,
        &resolved.initial_concentrations_mol_per_m3,
        &resolved.output_times_s,
        &options,
    );
    let (profiles, failure) = match result {
        Ok(p) => (p, None),
        Err(reactor::IntegrationError::Failed(f)) => {
            let names: Vec<String> = mechanism.species.iter().map(|s| s.name.clone()).collect();
            let message = format!("{f}\n{}", f.advice(&names));
            (f.partial, Some(message))
        }
        Err(e) => {
            eprintln!("error: {e}");
            return EXIT_BAD_INPUT;
        }
    };
    let elapsed = started.elapsed();
    if scenario.reactor.adiabatic() && !args.quiet {
        let (low, high) = profiles
            .temperatures_k
            .iter()
            .fold((f64::INFINITY, 0.0f64), |(lo, hi), &t| {
                (lo.min(t), hi.max(t))
            });
        for line in thermo_range_warnings(mechanism, low, high) {
            eprintln!("{line}");
        }
    }

    let output = args
        .output
        .clone()
        .unwrap_or_else(|| PathBuf::from(format!("{}.csv", scenario_stem(&args.scenario))));
    match write_csv(&output, mechanism, &profiles, &scenario) {
        Ok(notes) => {
            // Printed even with --quiet: the file holds undefined values.
            if let Some(w) = notes.warning(&output.display().to_string()) {
                eprintln!("{w}");
            }
        }
        Err(e @ CsvError::NonFinite { .. }) => {
            eprintln!("error: {}: {e}", output.display());
            if let Some(message) = &failure {
                eprintln!("error: {message}");
            }
            return EXIT_INTEGRATION_FAILED;
        }
        Err(e) => {
            eprintln!("error: cannot write {}: {e}", output.display());
            return EXIT_BAD_INPUT;
        }
    }

    if !args.quiet {
        let conservation =
            crate::conservation_out::conservation_report(mechanism, &model, &profiles, &options);
        print_summary(
            &scenario,
            mechanism,
            &profiles,
            elapsed.as_secs_f64(),
            &output,
            &conservation.lines,
        );
        for warning in &conservation.warnings {
            eprintln!("{warning}");
        }
        print_ignition(&scenario, &resolved, mechanism, &profiles);
        println!("{CAUTION}");
    }
    match failure {
        Some(message) => {
            eprintln!("error: {message}");
            eprintln!(
                "the profile up to the failure ({} rows) was written to {}",
                profiles.times_s.len(),
                output.display()
            );
            EXIT_INTEGRATION_FAILED
        }
        None => EXIT_OK,
    }
}

/// The reactor model of a scenario.
pub fn reactor_model(
    scenario: &Scenario,
    resolved: &ResolvedScenario,
) -> Result<ReactorModel, String> {
    let kind = scenario.reactor;
    let constraint = if kind.constant_pressure() {
        Constraint::ConstantPressure
    } else {
        Constraint::ConstantVolume
    };
    let energy = if kind.adiabatic() {
        Energy::Adiabatic
    } else if kind.prescribed() {
        let points = scenario.temperature_history.clone().unwrap_or_default();
        let (times, temps) = points.into_iter().unzip();
        Energy::Prescribed(TemperatureHistory::new(times, temps).map_err(|e| e.to_string())?)
    } else {
        Energy::Isothermal
    };
    let b = &resolved.box_conditions;
    let photolysis = b
        .photolysis
        .iter()
        .map(|(step, form)| {
            (
                *step,
                PhotolysisRate {
                    form: form.clone(),
                    sun: b.sun,
                },
            )
        })
        .collect();
    Ok(ReactorModel {
        constraint,
        energy,
        conditions: BoxConditions {
            fixed_species: b.fixed_species.clone(),
            emissions: b.emissions_mol_per_m3_s.clone(),
            deposition: b.deposition_per_s.clone(),
            photolysis,
        },
    })
}

/// The ignition criterion of a scenario: its `[ignition]` choice, or the largest dT/dt for
/// adiabatic kinds; `None` otherwise.
pub fn ignition_criterion(
    scenario: &Scenario,
    ignition_species: Option<usize>,
) -> Option<IgnitionCriterion> {
    match &scenario.ignition {
        Some(IgnitionChoice::MaxTemperatureRate) => Some(IgnitionCriterion::MaxTemperatureRate),
        Some(IgnitionChoice::SpeciesPeak(_)) => {
            ignition_species.map(IgnitionCriterion::SpeciesMaximum)
        }
        Some(IgnitionChoice::TemperatureRise(k)) => Some(IgnitionCriterion::TemperatureRise(*k)),
        None if scenario.reactor.adiabatic() => Some(IgnitionCriterion::MaxTemperatureRate),
        None => None,
    }
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

/// Prints the ignition delay and, for an adiabatic run whose temperature rose by more than
/// [`RUNAWAY_RISE_K`], the hazard caution.
fn print_ignition(
    scenario: &Scenario,
    resolved: &stoik::mechanism::ResolvedScenario,
    mechanism: &Mechanism,
    profiles: &Profiles,
) {
    if let Some(criterion) = ignition_criterion(scenario, resolved.ignition_species) {
        match ignition_delay(profiles, criterion) {
            // Read by scripts (tests/scipy/ignition_check.py): full precision, the shortest
            // digits that read back as the same f64.
            Ok(Some(IgnitionDelay { delay_s, .. })) => println!(
                "ignition delay: {delay_s:e} s ({})",
                criterion_words(criterion, mechanism)
            ),
            Ok(None) => println!(
                "ignition delay: none found by the {} within the simulated time",
                criterion_words(criterion, mechanism)
            ),
            Err(e) => println!("ignition delay: not computed ({e})"),
        }
    }
    let rise = profiles
        .temperatures_k
        .iter()
        .fold(f64::NEG_INFINITY, |m, &t| m.max(t))
        - profiles.temperatures_k.first().copied().unwrap_or(0.0);
    if scenario.reactor.adiabatic() && rise > RUNAWAY_RISE_K {
        let has = |name: &str| mechanism.species.iter().any(|s| s.name == name);
        let hydrogen = if has("H2") && has("O2") {
            " Hydrogen-oxygen mixtures are explosive."
        } else {
            ""
        };
        println!(
            "CAUTION: ignition or thermal runaway detected (temperature rise {rise:.0} K). This mixture is flammable or explosive under these conditions.{hydrogen}"
        );
    }
}

/// Warnings for species whose thermochemistry is used outside the temperature range of its
/// polynomials (it then extrapolates).
///
/// `low_k` to `high_k` (K) is the temperature span of the run.
pub fn thermo_range_warnings(mechanism: &Mechanism, low_k: f64, high_k: f64) -> Vec<String> {
    let span = if low_k == high_k {
        format!("at {low_k} K")
    } else {
        format!("between {low_k:.1} and {high_k:.1} K")
    };
    mechanism
        .species
        .iter()
        .filter_map(|s| {
            let p = s.thermo.as_ref()?;
            (low_k < p.t_low_k || high_k > p.t_high_k).then(|| {
                format!(
                    "warning: the run {span} leaves the range of species `{}`'s thermochemistry ({} to {} K); its polynomials are extrapolated",
                    s.name, p.t_low_k, p.t_high_k
                )
            })
        })
        .collect()
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

/// Integration options of a scenario (SI tolerances already resolved per species).
pub fn integration_options(
    scenario: &Scenario,
    absolute_tolerances_mol_per_m3: Vec<f64>,
    non_negative: bool,
) -> IntegrationOptions {
    IntegrationOptions {
        relative_tolerance: scenario.relative_tolerance,
        absolute_tolerances_mol_per_m3,
        linear_algebra: match scenario.linear_algebra {
            LinearAlgebraChoice::Auto => LinearAlgebra::Auto,
            LinearAlgebraChoice::Dense => LinearAlgebra::Dense,
            LinearAlgebraChoice::Sparse => LinearAlgebra::Sparse,
        },
        max_steps: scenario.max_steps,
        non_negative,
        watch: Vec::new(),
        keep_invariants: true,
        newton_tolerance: None,
    }
}

/// Writes `profiles` as CSV in the scenario's output concentration unit, atomically (nothing
/// is left at `output` when the write fails or a value is not finite).
pub fn write_csv(
    output: &Path,
    mechanism: &Mechanism,
    profiles: &Profiles,
    scenario: &Scenario,
) -> Result<CsvNotes, CsvError> {
    let unit = scenario.output_concentration_unit;
    write_atomically(output, |w| {
        write_profiles(w, mechanism, profiles, unit.to_si_factor(), unit.label())
    })
}

fn print_summary(
    scenario: &Scenario,
    mechanism: &Mechanism,
    profiles: &Profiles,
    wall_s: f64,
    output: &std::path::Path,
    conservation: &[String],
) {
    let unit = scenario.output_concentration_unit;
    println!(
        "{}: {} species, {} steps; {}",
        scenario.title.as_deref().unwrap_or("scenario"),
        mechanism.species.len(),
        mechanism.steps.len(),
        describe_reactor(scenario)
    );
    let (Some(_), Some(last), Some(t_end)) = (
        profiles.concentrations_mol_per_m3.first(),
        profiles.concentrations_mol_per_m3.last(),
        profiles.times_s.last(),
    ) else {
        println!("no output rows");
        return;
    };
    let rows = profiles.times_s.len();
    println!(
        "final state at t = {t_end:.6e} s: T = {:.2} K, P = {:.6e} Pa; concentrations [{}]:",
        profiles.temperatures_k.last().copied().unwrap_or(f64::NAN),
        profiles.pressure_pa(rows - 1).unwrap_or(f64::NAN),
        unit.label()
    );
    let mut order: Vec<usize> = (0..last.len()).collect();
    order.sort_by(|&a, &b| last[b].total_cmp(&last[a]));
    for &i in order.iter().take(12) {
        println!(
            "  {:<16} {:>14.6e}",
            mechanism.species[i].name,
            last[i] / unit.to_si_factor()
        );
    }
    if order.len() > 12 {
        println!("  ... {} more species in the CSV", order.len() - 12);
    }
    for line in conservation {
        println!("{line}");
    }
    let s = &profiles.stats;
    println!(
        "solver: BDF, {:?} linear algebra; {} steps, {} right-hand sides, {} Jacobians, {} factorizations, {} error-test failures, {} nonlinear failures",
        profiles.linear_algebra_used,
        s.steps,
        s.rhs_evaluations,
        s.jacobian_evaluations,
        s.factorizations,
        s.error_test_failures,
        s.nonlinear_failures
    );
    if s.negative_step_rejections > 0 {
        println!(
            "steps retried because a concentration went below minus its absolute tolerance: {}",
            s.negative_step_rejections
        );
    }
    if s.invariant_projections > 0 {
        println!(
            "state projected back onto its conserved quantities (round-off drift above 1 % of the error weights): {} times",
            s.invariant_projections
        );
    }
    if s.most_negative_concentration_mol_per_m3 < 0.0 {
        println!(
            "most negative concentration seen: {:.3e} mol/m3",
            s.most_negative_concentration_mol_per_m3
        );
    }
    println!("wall time: {:.3} ms", wall_s * 1e3);
    println!(
        "wrote {} ({} rows, {} columns)",
        output.display(),
        profiles.times_s.len(),
        // time, species, temperature, pressure, and density when every species has atoms
        2 * mechanism.species.len()
            + 3
            + usize::from(mechanism.species.iter().all(|s| s.composition.is_some()))
    );
}

/// One line on the reactor of a scenario.
fn describe_reactor(scenario: &Scenario) -> String {
    let kind = scenario.reactor;
    let held = if kind.constant_pressure() {
        "constant pressure"
    } else {
        "constant volume"
    };
    match kind {
        ReactorKind::IsothermalConstantVolume | ReactorKind::IsothermalConstantPressure => {
            format!("isothermal {held} at {} K", scenario.temperature_k)
        }
        ReactorKind::AdiabaticConstantVolume | ReactorKind::AdiabaticConstantPressure => {
            format!("adiabatic {held}, starting at {} K", scenario.temperature_k)
        }
        ReactorKind::PrescribedConstantVolume | ReactorKind::PrescribedConstantPressure => {
            format!(
                "{held}, temperature prescribed through {} points",
                scenario.temperature_history.as_ref().map_or(0, Vec::len)
            )
        }
    }
}
