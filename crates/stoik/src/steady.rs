//! `stoik steady` and `stoik continuation`: steady states of a stirred tank and branches of
//! them against one parameter. The reactor crate solves; this file applies the flags, writes
//! the CSV and SVG and prints.

use crate::csv_out::number;
use crate::error::CliError;
use crate::out_file::{write_atomically, write_text, OutputPaths};
use crate::run::{closing_cautions, describe_reactor, record_inputs, RUNAWAY_RISE_K};
use crate::{ContinuationArgs, ParameterArg, SteadyArgs};
use std::io::Write;
use std::path::Path;
use stoik::kinetics::Kinetics;
use stoik::mechanism::GAS_CONSTANT;
use stoik::reactor::{
    continuation as follow, steady_state, Branch, BranchEnd, ContinuationOptions,
    ContinuationParameter, SteadyOptions, SteadyState,
};
use stoik::scenario::{RunPlan, ScenarioError};

impl ParameterArg {
    fn parameter(self) -> ContinuationParameter {
        match self {
            ParameterArg::ResidenceTime => ContinuationParameter::ResidenceTime,
            ParameterArg::InletTemperature => ContinuationParameter::InletTemperature,
            ParameterArg::CoolantTemperature => ContinuationParameter::CoolantTemperature,
        }
    }
}

/// The plan of a tank scenario and its compiled mechanism; a scenario without `[flow]` is
/// refused.
fn tank_plan(scenario: &Path, command: &str) -> Result<(RunPlan, Kinetics), CliError> {
    let plan = RunPlan::load(scenario)?;
    if plan.model().flow.is_none() {
        return Err(CliError::BadFlag(format!(
            "{}: the scenario has no [flow] section: `stoik {command}` needs a continuous stirred tank (add [flow] with residence_time, inlet_temperature and the inlet composition)",
            scenario.display()
        )));
    }
    let kinetics = Kinetics::compile(plan.mechanism()).map_err(ScenarioError::from)?;
    Ok((plan, kinetics))
}

/// The caution lines: the runaway line when a steady state is more than [`RUNAWAY_RISE_K`]
/// above the feed (energy balance solved), then the general caution.
fn caution_lines(plan: &RunPlan, hottest_rise_k: f64) -> Vec<String> {
    let mut lines = Vec::new();
    if plan.model().solves_energy()
        && hottest_rise_k > RUNAWAY_RISE_K
        && plan.model().liquid.is_some()
    {
        lines.push(format!(
            "CAUTION: thermal runaway possible (steady temperature {hottest_rise_k:.0} K above the feed): the tank has hot steady states, reached when the heat released outgrows the cooling."
        ));
    } else if plan.model().solves_energy() && hottest_rise_k > RUNAWAY_RISE_K {
        let mechanism = plan.mechanism();
        let has = |name: &str| mechanism.species.iter().any(|s| s.name == name);
        let hydrogen = if has("H2") && has("O2") {
            " Hydrogen-oxygen mixtures are explosive."
        } else {
            ""
        };
        lines.push(format!(
            "CAUTION: ignition or thermal runaway detected (steady temperature {hottest_rise_k:.0} K above the feed). This mixture is flammable or explosive under these conditions.{hydrogen}"
        ));
    }
    lines.extend(closing_cautions(plan.model()));
    lines
}

fn feed_temperature(plan: &RunPlan) -> f64 {
    plan.model()
        .flow
        .as_ref()
        .map_or(plan.temperature_k(), |f| f.inlet_temperature_k())
}

/// `stoik steady`.
pub fn steady(args: &SteadyArgs) -> Result<(), CliError> {
    let (plan, kinetics) = tank_plan(&args.scenario, "steady")?;
    let mut outputs = OutputPaths::new();
    record_inputs(&mut outputs, &args.scenario, &plan);
    if let Some(csv) = &args.csv {
        outputs.output("--csv", csv)?;
    }
    let options = SteadyOptions {
        transient_first: !args.newton,
        ..SteadyOptions::from_integration(plan.options())
    };
    let s = steady_state(
        &kinetics,
        plan.model(),
        plan.temperature_k(),
        plan.initial_mol_per_m3(),
        &options,
    )?;
    let mechanism = plan.mechanism();
    let unit = plan.output_concentration_unit();
    let c = &s.concentrations_mol_per_m3;
    let total: f64 = c.iter().sum();
    let pressure = total * GAS_CONSTANT * s.temperature_k;
    let mut lines = vec![format!(
        "{}: {} species, {} steps; {}",
        plan.scenario().title.as_deref().unwrap_or("scenario"),
        mechanism.species.len(),
        mechanism.steps.len(),
        describe_reactor(&plan)
    )];
    // A liquid's pressure is not sum(c) R T: left out.
    lines.push(if plan.model().liquid.is_some() {
        format!(
            "steady state: T = {:.4} K; concentrations [{}]:",
            s.temperature_k,
            unit.label()
        )
    } else {
        format!(
            "steady state: T = {:.4} K, P = {:.6e} Pa; concentrations [{}]:",
            s.temperature_k,
            pressure,
            unit.label()
        )
    });
    let mut order: Vec<usize> = (0..c.len()).collect();
    order.sort_by(|&a, &b| c[b].total_cmp(&c[a]));
    for &i in order.iter().take(12) {
        lines.push(format!(
            "  {:<16} {:>14.6e}",
            mechanism.species[i].name,
            c[i] / unit.to_si_factor()
        ));
    }
    if order.len() > 12 {
        lines.push(format!("  ... {} more species", order.len() - 12));
    }
    lines.push(convergence_line(&s));
    let st = &s.stability;
    lines.push(format!(
        "stability: {} (largest eigenvalue real part {:e} 1/s, {} eigenvalues{})",
        if st.stable { "stable" } else { "unstable" },
        st.largest_real_part_per_s,
        st.eigenvalues_per_s.len(),
        if plan.model().constraint == stoik::reactor::Constraint::ConstantPressure {
            ", on the constant-pressure invariant"
        } else {
            ""
        }
    ));
    for (re, im) in st.eigenvalues_per_s.iter().take(4) {
        lines.push(if *im == 0.0 {
            format!("  {re:.6e} 1/s")
        } else {
            format!(
                "  {re:.6e} {} {:.6e}i 1/s",
                if *im < 0.0 { "-" } else { "+" },
                im.abs()
            )
        });
    }
    if let Some(csv) = &args.csv {
        let mut header = vec!["temperature [K]".to_string(), "pressure [Pa]".to_string()];
        header.extend(
            mechanism
                .species
                .iter()
                .map(|sp| format!("{} [{}]", sp.name, unit.label())),
        );
        header.push("stable [1 = yes]".into());
        header.push("largest eigenvalue real part [1/s]".into());
        let mut row = vec![s.temperature_k, pressure];
        row.extend(c.iter().map(|v| v / unit.to_si_factor()));
        row.push(f64::from(u8::from(st.stable)));
        row.push(st.largest_real_part_per_s);
        write_table(csv, &header, &[row])?;
        lines.push(format!("wrote {}", csv.display()));
    }
    lines.extend(caution_lines(
        &plan,
        s.temperature_k - feed_temperature(&plan),
    ));
    for line in &lines {
        println!("{line}");
    }
    Ok(())
}

fn convergence_line(s: &SteadyState) -> String {
    format!(
        "convergence: {} ({} Newton iterations, {} pseudo-transient steps, {} s integrated); scaled residual {:.3e}, last correction {:.3e}",
        s.path.name(),
        s.newton_iterations,
        s.pseudo_transient_steps,
        s.integrated_time_s,
        s.scaled_residual,
        s.scaled_correction
    )
}

/// Writes a CSV table atomically, every number in round-trip form; a value that is not
/// finite refuses the file.
fn write_table(path: &Path, header: &[String], rows: &[Vec<f64>]) -> Result<(), CliError> {
    write_atomically(path, |w| -> std::io::Result<()> {
        let quoted: Vec<String> = header.iter().map(|h| csv_field(h)).collect();
        writeln!(w, "{}", quoted.join(","))?;
        for (r, row) in rows.iter().enumerate() {
            let mut cells = Vec::with_capacity(row.len());
            for (i, &v) in row.iter().enumerate() {
                cells.push(number(v).ok_or_else(|| {
                    std::io::Error::other(format!(
                        "value of column `{}` in row {} is {v}, not a finite number",
                        header[i],
                        r + 1
                    ))
                })?);
            }
            writeln!(w, "{}", cells.join(","))?;
        }
        Ok(())
    })
    .map_err(|e| CliError::write(path, e))
}

/// A header field quoted when it holds a comma or a quote.
fn csv_field(text: &str) -> String {
    if text.contains([',', '"', '\n']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// `stoik continuation`.
pub fn continuation(args: &ContinuationArgs) -> Result<(), CliError> {
    let (plan, kinetics) = tank_plan(&args.scenario, "continuation")?;
    let mut outputs = OutputPaths::new();
    record_inputs(&mut outputs, &args.scenario, &plan);
    if let Some(csv) = &args.csv {
        outputs.output("--csv", csv)?;
    }
    if let Some(svg) = &args.svg {
        outputs.output("--svg", svg)?;
    }
    let parameter = args.parameter.parameter();
    let options = ContinuationOptions::new(SteadyOptions {
        transient_first: !args.newton,
        ..SteadyOptions::from_integration(plan.options())
    });
    let branch = follow(
        &kinetics,
        plan.model(),
        plan.temperature_k(),
        plan.initial_mol_per_m3(),
        parameter,
        args.from,
        args.to,
        &options,
    )?;
    let mechanism = plan.mechanism();
    let unit = plan.output_concentration_unit();
    let label = format!(
        "{} [{}]",
        parameter.name().replace('-', " "),
        parameter.unit()
    );
    let mut lines = vec![format!(
        "{}: {} species, {} steps; {}",
        plan.scenario().title.as_deref().unwrap_or("scenario"),
        mechanism.species.len(),
        mechanism.steps.len(),
        describe_reactor(&plan)
    )];
    lines.push(format!(
        "start at {} = {:e} {}: T = {:.4} K; {}",
        parameter.name(),
        args.from,
        parameter.unit(),
        branch.start.temperature_k,
        convergence_line(&branch.start)
    ));
    lines.push(format!(
        "branch: {} points, {} corrector iterations; {}",
        branch.points.len(),
        branch.corrector_iterations,
        end_words(&branch)
    ));
    let unstable = branch.points.iter().filter(|p| !p.stable).count();
    lines.push(format!(
        "stability: {} stable points, {} unstable points",
        branch.points.len() - unstable,
        unstable
    ));
    if branch.turning_points.is_empty() {
        lines.push("turning points: none".into());
    }
    for (i, tp) in branch.turning_points.iter().enumerate() {
        lines.push(format!(
            "turning point {}: {} = {:.9e} {}, T = {:.6} K",
            i + 1,
            parameter.name(),
            tp.parameter,
            parameter.unit(),
            tp.temperature_k
        ));
    }
    let (t_lo, t_hi) = branch
        .points
        .iter()
        .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), p| {
            (a.min(p.temperature_k), b.max(p.temperature_k))
        });
    lines.push(format!(
        "temperature on the branch: {t_lo:.3} K to {t_hi:.3} K"
    ));
    if let Some(csv) = &args.csv {
        let mut header = vec![label.clone(), "temperature [K]".to_string()];
        header.extend(
            mechanism
                .species
                .iter()
                .map(|sp| format!("{} [{}]", sp.name, unit.label())),
        );
        header.push("stable [1 = yes]".into());
        header.push("largest eigenvalue real part [1/s]".into());
        let rows: Vec<Vec<f64>> = branch
            .points
            .iter()
            .map(|p| {
                let mut row = vec![p.parameter, p.temperature_k];
                row.extend(
                    p.concentrations_mol_per_m3
                        .iter()
                        .map(|v| v / unit.to_si_factor()),
                );
                row.push(f64::from(u8::from(p.stable)));
                row.push(p.largest_real_part_per_s);
                row
            })
            .collect();
        write_table(csv, &header, &rows)?;
        lines.push(format!("wrote {} ({} rows)", csv.display(), rows.len()));
    }
    if let Some(svg) = &args.svg {
        let parameters: Vec<f64> = branch.points.iter().map(|p| p.parameter).collect();
        let temperatures: Vec<f64> = branch.points.iter().map(|p| p.temperature_k).collect();
        let stable: Vec<bool> = branch.points.iter().map(|p| p.stable).collect();
        let turning: Vec<(f64, f64)> = branch
            .turning_points
            .iter()
            .map(|t| (t.parameter, t.temperature_k))
            .collect();
        let title = format!(
            "{}: steady temperature against the {}",
            plan.scenario().title.as_deref().unwrap_or("scenario"),
            parameter.name().replace('-', " ")
        );
        let text = stoik::plot::branch_svg(&stoik::plot::BranchPlot {
            title: &title,
            parameter_label: &label,
            parameters: &parameters,
            temperatures_k: &temperatures,
            stable: &stable,
            turning_points: &turning,
            log_parameter: parameter == ContinuationParameter::ResidenceTime,
        })
        .map_err(|source| CliError::Plot {
            path: svg.clone(),
            source,
        })?;
        write_text(svg, &text).map_err(|e| CliError::write(svg, e))?;
        lines.push(format!("wrote {}", svg.display()));
    }
    let feed = feed_temperature(&plan);
    let rise = branch
        .points
        .iter()
        .map(|p| {
            let inlet = if parameter == ContinuationParameter::InletTemperature {
                p.parameter
            } else {
                feed
            };
            p.temperature_k - inlet
        })
        .fold(f64::NEG_INFINITY, f64::max);
    lines.extend(caution_lines(&plan, rise));
    for line in &lines {
        println!("{line}");
    }
    match branch.end {
        BranchEnd::ReachedEnd | BranchEnd::LeftAtStart => Ok(()),
        _ => Err(CliError::BranchIncomplete(end_words(&branch))),
    }
}

fn end_words(branch: &Branch) -> String {
    match branch.end {
        BranchEnd::ReachedEnd => "reached the end of the range".into(),
        BranchEnd::LeftAtStart => "turned back and left the range at its start".into(),
        BranchEnd::PointBudget => "stopped: the point budget ran out".into(),
        BranchEnd::StepTooSmall => "stopped: the corrector failed even at the smallest step".into(),
        BranchEnd::Unphysical => {
            "stopped: the branch left the physical states (negative concentration or temperature)"
                .into()
        }
    }
}
