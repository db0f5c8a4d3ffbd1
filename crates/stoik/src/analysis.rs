//! `stoik rates` and `stoik flux`: which steps make and destroy species, and where an
//! element's atoms go, over the library's `stoik::analysis`. Flags, files and printing only.

use crate::csv_out::number;
use crate::error::CliError;
use crate::out_file::{write_atomically, write_text, OutputPaths};
use crate::run::record_inputs;
use crate::{FluxArgs, RatesArgs, Window};
use std::io::Write;
use stoik::analysis::{
    element_index, flux_graph, species_budget, species_index, step_rates, to_dot, AnalysisError,
    Contribution, Span, StepRates,
};
use stoik::mechanism::Mechanism;
use stoik::plot::flux_graph_svg;
use stoik::scenario::RunPlan;

/// An analysis error of the value of `flag`.
fn at_flag(flag: &'static str) -> impl Fn(AnalysisError) -> CliError {
    move |source| CliError::Analysis { flag, source }
}

/// An error of the run itself (not of one flag).
fn of_run(error: AnalysisError) -> CliError {
    match error {
        AnalysisError::Scenario(e) => CliError::Scenario(e),
        other => CliError::AnalysisRun(other),
    }
}

/// The spans of `--time`/`--times` values and `--window` pairs, each checked against the
/// run's end with its flag named.
fn spans(
    plan: &RunPlan,
    times: &[f64],
    times_flag: &'static str,
    windows: &[Window],
) -> Result<Vec<Span>, CliError> {
    let end_s = plan.scenario().end_time_s;
    let mut out = Vec::new();
    for &t in times {
        let span = Span::Instant(t);
        span.check(end_s).map_err(at_flag(times_flag))?;
        out.push(span);
    }
    for w in windows {
        let span = Span::Window {
            from_s: w.from_s,
            to_s: w.to_s,
        };
        span.check(end_s).map_err(at_flag("--window"))?;
        out.push(span);
    }
    if out.is_empty() {
        return Err(CliError::BadFlag(format!(
            "{times_flag}/--window: give at least one time or window"
        )));
    }
    Ok(out)
}

/// `R<n> equation` of step `j` (1-based number).
fn step_name(mechanism: &Mechanism, j: usize) -> (String, &str) {
    (
        format!("R{}", j + 1),
        mechanism.steps.get(j).map_or("?", |s| s.equation.as_str()),
    )
}

/// The plan of a scenario run in time; a plug flow (`[plug_flow]`, which reports against
/// distance) is refused with the scenario's path and the command.
pub fn time_plan(scenario: &std::path::Path, command: &str) -> Result<RunPlan, CliError> {
    let plan = RunPlan::load(scenario)?;
    if plan.scenario().is_plug_flow() {
        return Err(CliError::BadFlag(format!(
            "{}: `stoik {command}` works on runs in time; a plug flow ([plug_flow]) runs with `stoik run`",
            scenario.display()
        )));
    }
    Ok(plan)
}

/// `stoik rates`: each step's contribution to the production of the chosen species.
pub fn rates(args: &RatesArgs) -> Result<(), CliError> {
    let plan = time_plan(&args.scenario, "rates")?;
    let mechanism = plan.mechanism().clone();
    let species: Vec<usize> = args
        .species
        .iter()
        .map(|name| species_index(&mechanism, name.trim()))
        .collect::<Result<_, _>>()
        .map_err(at_flag("--species"))?;
    let spans = spans(&plan, &args.times, "--times", &args.window)?;
    let mut outputs = OutputPaths::new();
    record_inputs(&mut outputs, &args.scenario, &plan);
    if let Some(csv) = &args.csv {
        outputs.output("--csv", csv)?;
    }
    if let Some(report) = &args.report {
        outputs.output("--report", report)?;
    }
    let rates = step_rates(&plan, &spans).map_err(of_run)?;
    if let Some(csv) = &args.csv {
        write_atomically(csv, |w| write_rates_csv(w, &mechanism, &rates, &species))
            .map_err(|e| CliError::write(csv, e))?;
    }
    let mut lines = Vec::new();
    for r in &rates {
        for &i in &species {
            lines.extend(budget_lines(&mechanism, r, i, args.top));
        }
    }
    for line in &lines {
        println!("{line}");
    }
    if let Some(csv) = &args.csv {
        println!("wrote {}", csv.display());
    }
    if let Some(report) = &args.report {
        let page = crate::report::rates_page(
            report,
            &args.scenario,
            &plan,
            &rates,
            &species,
            args.top,
            &lines,
        )?;
        crate::report::write(report, &page)?;
        println!("wrote {}", report.display());
    }
    Ok(())
}

/// One species' budget as printed: totals, then the top steps of each side.
fn budget_lines(
    mechanism: &Mechanism,
    rates: &StepRates,
    species: usize,
    top: usize,
) -> Vec<String> {
    let b = species_budget(mechanism, rates, species);
    let unit = rates.span.rate_unit();
    let mut lines = vec![format!(
        "{} at {} (T = {:.1} K), {unit}: net {:.6e}, production {:.6e}, consumption {:.6e}",
        mechanism.species[species].name,
        rates.span.describe(),
        rates.temperature_k,
        b.net,
        b.production_total,
        b.consumption_total
    )];
    for (side, list) in [
        ("production", &b.production),
        ("consumption", &b.consumption),
    ] {
        if list.is_empty() {
            lines.push(format!("  {side}: none"));
            continue;
        }
        lines.push(format!(
            "  {side} (top {} of {}):",
            top.min(list.len()),
            list.len()
        ));
        for c in list.iter().take(top) {
            lines.push(contribution_line(mechanism, c));
        }
    }
    lines
}

fn contribution_line(mechanism: &Mechanism, c: &Contribution) -> String {
    let (label, equation) = step_name(mechanism, c.step);
    format!(
        "    {:>6.2} %  {:>14.6e}  {label:<5} {equation}",
        100.0 * c.share,
        c.value
    )
}

/// A CSV field: quoted when it holds a comma, a quote or a line break.
fn field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// The rates CSV: one row per species, span and step with a nonzero net coefficient for the
/// species, in step order; numbers in shortest round-trip form.
fn write_rates_csv(
    w: &mut impl Write,
    mechanism: &Mechanism,
    rates: &[StepRates],
    species: &[usize],
) -> Result<(), std::io::Error> {
    writeln!(
        w,
        "species,from_s,to_s,step,equation,contribution,unit,share"
    )?;
    for r in rates {
        let (from, to) = match r.span {
            Span::Instant(t) => (t, t),
            Span::Window { from_s, to_s } => (from_s, to_s),
        };
        for &i in species {
            let b = species_budget(mechanism, r, i);
            for c in &b.all {
                let cells = [number(from), number(to), number(c.value), number(c.share)];
                let [Some(from), Some(to), Some(value), Some(share)] = cells else {
                    return Err(std::io::Error::new(
                        std::io::ErrorKind::InvalidData,
                        format!(
                            "the contribution of step R{} to {} at {} is not finite; no CSV was written",
                            c.step + 1,
                            mechanism.species[i].name,
                            r.span.describe()
                        ),
                    ));
                };
                writeln!(
                    w,
                    "{},{from},{to},{},{},{value},{},{share}",
                    field(&mechanism.species[i].name),
                    c.step + 1,
                    field(step_name(mechanism, c.step).1),
                    r.span.rate_unit(),
                )?;
            }
        }
    }
    Ok(())
}

/// `stoik flux`: the element-flux graph at an instant or over a window.
pub fn flux(args: &FluxArgs) -> Result<(), CliError> {
    let plan = time_plan(&args.scenario, "flux")?;
    let mechanism = plan.mechanism().clone();
    let element = element_index(&mechanism, args.element.trim()).map_err(at_flag("--element"))?;
    if !(0.0..=1.0).contains(&args.threshold) {
        return Err(CliError::Analysis {
            flag: "--threshold",
            source: AnalysisError::BadThreshold(args.threshold),
        });
    }
    let times: Vec<f64> = args.time.into_iter().collect();
    let windows: Vec<Window> = args.window.iter().copied().collect();
    let spans = spans(&plan, &times, "--time", &windows)?;
    let mut outputs = OutputPaths::new();
    record_inputs(&mut outputs, &args.scenario, &plan);
    if let Some(p) = &args.dot {
        outputs.output("--dot", p)?;
    }
    if let Some(p) = &args.svg {
        outputs.output("--svg", p)?;
    }
    if let Some(p) = &args.report {
        outputs.output("--report", p)?;
    }
    let rates = step_rates(&plan, &spans).map_err(of_run)?;
    let Some(r) = rates.first() else {
        return Err(CliError::AnalysisRun(AnalysisError::NothingAsked));
    };
    let graph = flux_graph(&mechanism, element, r, args.threshold).map_err(of_run)?;
    let unit = match r.span {
        Span::Instant(_) => "mol/(m3 s)",
        Span::Window { .. } => "mol/m3",
    };
    let mut lines = vec![format!(
        "flux of {} atoms at {} (T = {:.1} K): largest {:.6e} {unit} of atoms; {} edge(s) at or above {} of it",
        graph.symbol,
        r.span.describe(),
        r.temperature_k,
        graph.largest,
        graph.edges.len(),
        graph.threshold
    )];
    for e in &graph.edges {
        let steps: Vec<String> = e
            .steps
            .iter()
            .take(4)
            .map(|&(s, v)| format!("R{} {:.0} %", s + 1, 100.0 * v / e.flux))
            .collect();
        lines.push(format!(
            "  {:>8} -> {:<8} {:>6.3}  {:>13.6e}  {}",
            mechanism.species[e.from].name,
            mechanism.species[e.to].name,
            e.relative,
            e.flux,
            steps.join(", ")
        ));
    }
    for line in &lines {
        println!("{line}");
    }
    if let Some(p) = &args.dot {
        write_text(p, &to_dot(&graph, &mechanism)).map_err(|e| CliError::write(p, e))?;
        println!("wrote {}", p.display());
    }
    if let Some(p) = &args.svg {
        let svg = flux_graph_svg(&graph, &mechanism).map_err(|source| CliError::Plot {
            path: p.clone(),
            source,
        })?;
        write_text(p, &svg).map_err(|e| CliError::write(p, e))?;
        println!("wrote {}", p.display());
    }
    if let Some(p) = &args.report {
        let page = crate::report::flux_page(p, &args.scenario, &plan, &graph, &lines)?;
        crate::report::write(p, &page)?;
        println!("wrote {}", p.display());
    }
    Ok(())
}
