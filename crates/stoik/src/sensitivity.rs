//! `stoik sensitivity`: which rate constants matter for an observable, over the library's
//! `stoik::analysis::observable_sensitivity` and `profile_sensitivities`. Flags, files and
//! printing only.

use crate::csv_out::{number, UNDEFINED};
use crate::error::CliError;
use crate::out_file::{write_atomically, write_text, OutputPaths};
use crate::report::{ProfileChoice, SensitivityText};
use crate::run::{describe_reactor, ignition_lines, record_inputs, report_species};
use crate::{MethodArg, SensitivityArgs};
use std::io::Write;
use stoik::analysis::{
    observable_sensitivity_with, profile_sensitivities, AnalysisError, ExtraParameters, Method,
    Observable, ObservableSensitivity, ProfileSensitivities, StateQuantity,
};
use stoik::kinetics::FalloffLimit;
use stoik::mechanism::Mechanism;
use stoik::reactor::Profiles;
use stoik::scenario::RunPlan;

fn at_flag(flag: &'static str) -> impl Fn(AnalysisError) -> CliError {
    move |source| CliError::Analysis { flag, source }
}

fn of_run(error: AnalysisError) -> CliError {
    match error {
        AnalysisError::Scenario(e) => CliError::Scenario(e),
        AnalysisError::StepOutOfRange { .. } => CliError::Analysis {
            flag: "--steps",
            source: error,
        },
        other => CliError::AnalysisRun(other),
    }
}

/// Step numbers `R3`, `r3` or `3` (1-based) into mechanism indices.
fn parse_steps(texts: &[String], mechanism: &Mechanism) -> Result<Vec<usize>, CliError> {
    let n_steps = mechanism.steps.len();
    texts
        .iter()
        .map(|t| {
            let t = t.trim();
            let digits = t.strip_prefix(['R', 'r']).unwrap_or(t);
            match digits.parse::<usize>() {
                Ok(0) | Err(_) => Err(CliError::BadFlag(format!(
                    "--steps: `{t}` is not a step number (R1 to R{n_steps})"
                ))),
                Ok(k) if k > n_steps => Err(CliError::Analysis {
                    flag: "--steps",
                    source: AnalysisError::StepOutOfRange {
                        step: k - 1,
                        n_steps,
                    },
                }),
                Ok(k) => Ok(k - 1),
            }
        })
        .collect()
}

fn equation(mechanism: &Mechanism, j: usize) -> &str {
    mechanism.steps.get(j).map_or("?", |s| s.equation.as_str())
}

/// A CSV field: quoted when it holds a comma, a quote or a line break.
fn field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// `stoik sensitivity`.
pub fn sensitivity(args: &SensitivityArgs) -> Result<(), CliError> {
    let plan = crate::analysis::time_plan(&args.scenario, "sensitivity")?;
    let mechanism = plan.mechanism().clone();
    let observable = Observable::parse(&mechanism, &args.of).map_err(at_flag("--of"))?;
    let steps = if args.steps.is_empty() {
        None
    } else {
        Some(parse_steps(&args.steps, &mechanism)?)
    };
    let method = match args.method {
        MethodArg::Forward => Method::Forward,
        MethodArg::Adjoint => Method::Adjoint,
    };
    let mut outputs = OutputPaths::new();
    record_inputs(&mut outputs, &args.scenario, &plan);
    if let Some(csv) = &args.csv {
        outputs.output("--csv", csv)?;
    }
    if let Some(csv) = &args.profile_csv {
        outputs.output("--profile-csv", csv)?;
    }
    if let Some(svg) = &args.svg {
        outputs.output("--svg", svg)?;
    }
    if let Some(csv) = &args.falloff_limits_csv {
        outputs.output("--falloff-limits-csv", csv)?;
    }
    if let Some(csv) = &args.enthalpies_csv {
        outputs.output("--enthalpies-csv", csv)?;
    }
    if let Some(report) = &args.report {
        outputs.output("--report", report)?;
    }
    if args.top == 0 && (args.svg.is_some() || args.report.is_some()) {
        return Err(CliError::BadFlag(
            "--top 0 leaves no bar to draw for --svg/--report; give --top 1 or more".into(),
        ));
    }
    let choice = ProfileChoice {
        species: report_species(&args.report_species, &mechanism)?,
        mole_fractions: args.report_mole_fractions,
    };
    let profile = match &args.profile_csv {
        Some(_) => Some(profile_sensitivities(&plan, steps.as_deref()).map_err(of_run)?),
        None => None,
    };
    let extra = ExtraParameters {
        falloff_limits: args.falloff_limits,
        enthalpies: args.enthalpies,
    };
    let result = observable_sensitivity_with(&plan, observable, method, steps.as_deref(), extra)
        .map_err(of_run)?;
    let mut printed = ranked_lines(&mechanism, &result, args.top);
    if args.falloff_limits {
        printed.extend(limit_lines(&mechanism, &result, args.top));
    }
    if args.enthalpies {
        printed.extend(enthalpy_lines(&mechanism, &result, args.top));
    }
    for line in &printed {
        println!("{line}");
    }
    if result.value == 0.0 {
        let warning = format!(
            "warning: {} is zero: the normalized coefficients are undefined ({UNDEFINED})",
            observable.describe(&mechanism)
        );
        eprintln!("{warning}");
        printed.push(warning);
    }
    if let Some(csv) = &args.csv {
        write_atomically(csv, |w| write_ranked_csv(w, &mechanism, &result))
            .map_err(|e| CliError::write(csv, e))?;
        println!("wrote {}", csv.display());
    }
    if let Some(csv) = &args.falloff_limits_csv {
        write_atomically(csv, |w| write_limits_csv(w, &mechanism, &result))
            .map_err(|e| CliError::write(csv, e))?;
        println!("wrote {}", csv.display());
    }
    if let Some(csv) = &args.enthalpies_csv {
        write_atomically(csv, |w| write_enthalpies_csv(w, &mechanism, &result))
            .map_err(|e| CliError::write(csv, e))?;
        println!("wrote {}", csv.display());
    }
    if let (Some(csv), Some(profile)) = (&args.profile_csv, &profile) {
        let mut undefined = 0usize;
        write_atomically(csv, |w| {
            write_profile_csv(w, &mechanism, profile, &mut undefined)
        })
        .map_err(|e| CliError::write(csv, e))?;
        if undefined > 0 {
            eprintln!(
                "warning: {}: {undefined} normalized coefficient(s) of zero values written as {UNDEFINED}",
                csv.display()
            );
        }
        println!("wrote {}", csv.display());
    }
    if let Some(svg) = &args.svg {
        let chart = crate::report::sensitivity_chart(svg, &mechanism, &result, args.top)?;
        write_text(svg, &chart).map_err(|e| CliError::write(svg, e))?;
        println!("wrote {}", svg.display());
    }
    if let Some(report) = &args.report {
        // A plain run of the scenario for the profile figures and the run summary (the
        // sensitivity integration does not keep its profile).
        let outcome = plan.run()?;
        let mut run_lines = run_lines(&plan, outcome.profiles());
        if let Some(f) = outcome.failure() {
            run_lines.push(format!(
                "the plain run FAILED; its profiles stop at the failure: {f}"
            ));
        }
        run_lines.extend(ignition_lines(&plan, &outcome));
        run_lines.extend(outcome.warnings.iter().map(|w| w.to_string()));
        let page = crate::report::sensitivity_page(
            report,
            &args.scenario,
            &plan,
            &result,
            args.top,
            &SensitivityText {
                printed: &printed,
                run: Some((outcome.profiles(), run_lines)),
            },
            &choice,
        )?;
        crate::report::write(report, &page)?;
        println!("wrote {}", report.display());
    }
    Ok(())
}

/// The lines on the run under a sensitivity report: the scenario and reactor, and the final
/// state.
fn run_lines(plan: &RunPlan, profiles: &Profiles) -> Vec<String> {
    let mechanism = plan.mechanism();
    let mut lines = vec![format!(
        "{}: {} species, {} steps; {}",
        plan.scenario().title.as_deref().unwrap_or("scenario"),
        mechanism.species.len(),
        mechanism.steps.len(),
        describe_reactor(plan)
    )];
    if let (Some(t), Some(temperature)) = (profiles.times_s.last(), profiles.temperatures_k.last())
    {
        let rows = profiles.times_s.len();
        lines.push(format!(
            "final state at t = {t:.6e} s: T = {temperature:.2} K, P = {:.6e} Pa",
            profiles.pressure_pa(rows - 1).unwrap_or(f64::NAN),
        ));
    }
    lines
}

/// The ranked table as printed: one line per step, largest |d ln G/d ln k| first.
fn ranked_lines(mechanism: &Mechanism, r: &ObservableSensitivity, top: usize) -> Vec<String> {
    let mut lines = Vec::new();
    let unit = r.observable.unit();
    let method = match r.method {
        Method::Forward => "forward",
        Method::Adjoint => "adjoint",
    };
    lines.push(format!(
        "{} = {:.6e} {unit}; sensitivities to ln k of {} step(s) ({method}; {} forward, {} backward solver steps)",
        r.observable.describe(mechanism),
        r.value,
        r.ranked.len(),
        r.stats.forward_steps,
        r.stats.backward_steps,
    ));
    let header = format!("dG/d ln k ({unit})");
    let width = header.len().max(14);
    lines.push(format!(
        "  {:>4}  {:<6} {:>14}  {header:>width$}  equation",
        "rank", "step", "d ln G/d ln k",
    ));
    for (rank, s) in r.ranked.iter().take(top).enumerate() {
        lines.push(format!(
            "  {:>4}  {:<6} {:>14.6e}  {:>width$.6e}  {}",
            rank + 1,
            format!("R{}", s.step + 1),
            s.normalized,
            s.derivative,
            equation(mechanism, s.step)
        ));
    }
    if r.ranked.len() > top {
        lines.push(format!(
            "  ({} more; --top N or --csv for all)",
            r.ranked.len() - top
        ));
    }
    lines
}

/// The name of a falloff limit in tables: `k0` or `kinf`.
fn limit_name(limit: FalloffLimit) -> &'static str {
    match limit {
        FalloffLimit::Low => "k0",
        FalloffLimit::High => "kinf",
    }
}

/// The falloff limits' table as printed: each limit of each chosen falloff step alone.
fn limit_lines(mechanism: &Mechanism, r: &ObservableSensitivity, top: usize) -> Vec<String> {
    let unit = r.observable.unit();
    if r.falloff_limits.is_empty() {
        return vec!["no falloff step among the chosen steps: no limits to rank".to_string()];
    }
    let mut lines = vec![
        "each falloff limit alone (the two of a step sum to its d ln G/d ln k above):".to_string(),
    ];
    let header = format!("dG/d ln k ({unit})");
    let width = header.len().max(14);
    lines.push(format!(
        "  {:>4}  {:<6} {:<5} {:>14}  {header:>width$}  equation",
        "rank", "step", "limit", "d ln G/d ln k",
    ));
    for (rank, s) in r.falloff_limits.iter().take(top).enumerate() {
        lines.push(format!(
            "  {:>4}  {:<6} {:<5} {:>14.6e}  {:>width$.6e}  {}",
            rank + 1,
            format!("R{}", s.step + 1),
            limit_name(s.limit),
            s.normalized,
            s.derivative,
            equation(mechanism, s.step)
        ));
    }
    if r.falloff_limits.len() > top {
        lines.push(format!(
            "  ({} more; --top N or --falloff-limits-csv for all)",
            r.falloff_limits.len() - top
        ));
    }
    lines
}

/// The formation enthalpies' table as printed.
fn enthalpy_lines(mechanism: &Mechanism, r: &ObservableSensitivity, top: usize) -> Vec<String> {
    let unit = r.observable.unit();
    if r.enthalpies.is_empty() {
        return vec!["no species has thermochemistry: no formation enthalpies to rank".to_string()];
    }
    let mut lines = vec![
        "formation enthalpies (d ln G/dH_f in 1/(kJ/mol): relative change per kJ/mol):".to_string(),
    ];
    let header = format!("dG/dH_f ({unit} per J/mol)");
    let width = header.len().max(14);
    lines.push(format!(
        "  {:>4}  {:<12} {:>20}  {header:>width$}",
        "rank", "species", "d ln G/dH_f (mol/kJ)",
    ));
    for (rank, s) in r.enthalpies.iter().take(top).enumerate() {
        let name = mechanism
            .species
            .get(s.species)
            .map_or("?", |x| x.name.as_str());
        lines.push(format!(
            "  {:>4}  {:<12} {:>20.6e}  {:>width$.6e}",
            rank + 1,
            name,
            s.normalized_per_kj_per_mol,
            s.derivative,
        ));
    }
    if r.enthalpies.len() > top {
        lines.push(format!(
            "  ({} more; --top N or --enthalpies-csv for all)",
            r.enthalpies.len() - top
        ));
    }
    lines
}

/// The falloff-limit CSV: `rank,step,equation,limit,normalized,derivative,unit,value`, every
/// limit, largest |normalized| first; numbers in shortest round-trip form.
fn write_limits_csv(
    w: &mut impl Write,
    mechanism: &Mechanism,
    r: &ObservableSensitivity,
) -> Result<(), std::io::Error> {
    writeln!(
        w,
        "rank,step,equation,limit,normalized,derivative,unit,value"
    )?;
    let value = number(r.value).ok_or_else(|| non_finite("the observable's value".into()))?;
    for (rank, s) in r.falloff_limits.iter().enumerate() {
        let what = || format!("{} of step R{}", limit_name(s.limit), s.step + 1);
        let derivative = number(s.derivative)
            .ok_or_else(|| non_finite(format!("the derivative for {}", what())))?;
        let normalized = match number(s.normalized) {
            Some(x) => x,
            None if r.value == 0.0 => UNDEFINED.to_string(),
            None => {
                return Err(non_finite(format!(
                    "the normalized coefficient of {}",
                    what()
                )))
            }
        };
        writeln!(
            w,
            "{},R{},{},{},{normalized},{derivative},{},{value}",
            rank + 1,
            s.step + 1,
            field(equation(mechanism, s.step)),
            limit_name(s.limit),
            r.observable.unit(),
        )?;
    }
    Ok(())
}

/// The formation-enthalpy CSV:
/// `rank,species,normalized_per_kj_per_mol,derivative_per_j_per_mol,unit,value`, every species
/// with thermochemistry, largest |normalized| first; numbers in shortest round-trip form.
fn write_enthalpies_csv(
    w: &mut impl Write,
    mechanism: &Mechanism,
    r: &ObservableSensitivity,
) -> Result<(), std::io::Error> {
    writeln!(
        w,
        "rank,species,normalized_per_kj_per_mol,derivative_per_j_per_mol,unit,value"
    )?;
    let value = number(r.value).ok_or_else(|| non_finite("the observable's value".into()))?;
    for (rank, s) in r.enthalpies.iter().enumerate() {
        let name = mechanism
            .species
            .get(s.species)
            .map_or("?", |x| x.name.as_str());
        let derivative = number(s.derivative)
            .ok_or_else(|| non_finite(format!("the derivative for H_f of {name}")))?;
        let normalized = match number(s.normalized_per_kj_per_mol) {
            Some(x) => x,
            None if r.value == 0.0 => UNDEFINED.to_string(),
            None => {
                return Err(non_finite(format!(
                    "the normalized coefficient of H_f of {name}"
                )))
            }
        };
        writeln!(
            w,
            "{},{},{normalized},{derivative},{},{value}",
            rank + 1,
            field(name),
            r.observable.unit(),
        )?;
    }
    Ok(())
}

fn non_finite(what: String) -> std::io::Error {
    std::io::Error::new(
        std::io::ErrorKind::InvalidData,
        format!("{what} is not finite; no CSV was written"),
    )
}

/// The ranked CSV: `rank,step,equation,normalized,derivative,unit,value`; numbers in
/// shortest round-trip form, an undefined normalized coefficient (zero value) as `nan`.
fn write_ranked_csv(
    w: &mut impl Write,
    mechanism: &Mechanism,
    r: &ObservableSensitivity,
) -> Result<(), std::io::Error> {
    writeln!(w, "rank,step,equation,normalized,derivative,unit,value")?;
    let value = number(r.value).ok_or_else(|| non_finite("the observable's value".into()))?;
    for (rank, s) in r.ranked.iter().enumerate() {
        let derivative = number(s.derivative)
            .ok_or_else(|| non_finite(format!("the derivative for step R{}", s.step + 1)))?;
        let normalized = match number(s.normalized) {
            Some(x) => x,
            None if r.value == 0.0 => UNDEFINED.to_string(),
            None => {
                return Err(non_finite(format!(
                    "the normalized coefficient of step R{}",
                    s.step + 1
                )))
            }
        };
        writeln!(
            w,
            "{},R{},{},{normalized},{derivative},{},{value}",
            rank + 1,
            s.step + 1,
            field(equation(mechanism, s.step)),
            r.observable.unit(),
        )?;
    }
    Ok(())
}

/// The profile CSV: `time_s,quantity,step,equation,value,derivative,normalized`, one row per
/// output time, quantity and step.
fn write_profile_csv(
    w: &mut impl Write,
    mechanism: &Mechanism,
    p: &ProfileSensitivities,
    undefined: &mut usize,
) -> Result<(), std::io::Error> {
    writeln!(
        w,
        "time_s,quantity,step,equation,value,derivative,normalized"
    )?;
    let names: Vec<String> = p
        .quantities
        .iter()
        .map(|q| match q {
            StateQuantity::Species(i) => field(&mechanism.species[*i].name),
            StateQuantity::Temperature => "T".to_string(),
        })
        .collect();
    for (row, &t) in p.times_s.iter().enumerate() {
        let time = number(t).ok_or_else(|| non_finite(format!("output time {t}")))?;
        for (q, name) in names.iter().enumerate() {
            let value =
                number(p.values[row][q]).ok_or_else(|| non_finite(format!("{name} at {t:e} s")))?;
            for (k, &step) in p.steps.iter().enumerate() {
                let derivative = number(p.derivatives[row][k][q]).ok_or_else(|| {
                    non_finite(format!("d{name}/d ln k of R{} at {t:e} s", step + 1))
                })?;
                let normalized = match p.normalized(row, k, q).and_then(number) {
                    Some(x) => x,
                    None => {
                        *undefined += 1;
                        UNDEFINED.to_string()
                    }
                };
                writeln!(
                    w,
                    "{time},{name},R{},{},{value},{derivative},{normalized}",
                    step + 1,
                    field(equation(mechanism, step))
                )?;
            }
        }
    }
    Ok(())
}
