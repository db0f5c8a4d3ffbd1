//! `--report FILE.html` of `run`, `rates` and `flux`: one self-contained HTML page (inline
//! CSS and SVG, no script, nothing fetched) assembled with `stoik::plot`, written atomically.
//!
//! Every page: the title, the files read, the caution, what the command printed, then the
//! command's own sections. Every user string (species names, equations, file names) is
//! escaped by `stoik::plot::HtmlReport`.

use crate::error::CliError;
use crate::out_file::write_text;
use crate::run::RunText;
use std::path::Path;
use stoik::analysis::{species_budget, Contribution, FluxGraph, StepRates};
use stoik::mechanism::Mechanism;
use stoik::plot::{
    bar_chart_svg, flux_graph_svg, largest_series, profile_svg, AxisScale, HtmlReport, PlotError,
    ProfilePlot, Series, Table,
};
use stoik::reactor::Profiles;
use stoik::scenario::RunPlan;

/// The caution every report carries, under the title and in the footer.
pub const REPORT_CAUTION: &str =
    "Simulation is no substitute for local codes, standards and licensed engineering review.";

/// Species plotted by default: the largest by peak concentration.
pub const DEFAULT_PLOTTED_SPECIES: usize = 8;

/// Rows of a rates table at most (the CSV holds every step).
const MAX_TABLE_ROWS: usize = 60;

/// A page with the title, the files read and the caution.
fn page(title: &str, scenario: &Path, plan: &RunPlan) -> HtmlReport {
    let mut report = HtmlReport::new(title);
    report.meta(&format!(
        "scenario {}; mechanism {}",
        scenario.display(),
        plan.scenario().mechanism_path.display()
    ));
    report.caution(REPORT_CAUTION);
    report
}

/// Writes `report` to `path` atomically. Each command builds its page with a `*_page`
/// function and writes it here, so further sections (local sensitivities: a ranked table and
/// its bar chart through `HtmlReport::table_and_chart_section`) can be added in between.
pub fn write(path: &Path, report: &HtmlReport) -> Result<(), CliError> {
    write_text(path, &report.render()).map_err(|e| CliError::write(path, e))
}

/// A plot error as the error of report `path`.
fn plot_error(path: &Path) -> impl Fn(PlotError) -> CliError + '_ {
    move |source| CliError::Plot {
        path: path.to_path_buf(),
        source,
    }
}

/// The page of `stoik run` (`path`: the report file, named in errors): the concentrations of `species` (default: the
/// [`DEFAULT_PLOTTED_SPECIES`] largest by peak) in the scenario's output unit and the
/// temperature against time, then the summary as printed (warnings and the failure too).
pub fn run_page(
    path: &Path,
    scenario: &Path,
    plan: &RunPlan,
    profiles: &Profiles,
    text: &RunText,
    species: &Option<Vec<usize>>,
) -> Result<HtmlReport, CliError> {
    let mechanism = plan.mechanism();
    let title = plan.scenario().title.as_deref().unwrap_or("stoik run");
    let mut report = page(&format!("{title}: run report"), scenario, plan);
    let mut lines = Vec::new();
    if let Some(f) = text.failure {
        report.meta("The run failed: its profiles stop at the failure (see the run summary).");
        lines.push(format!(
            "the run FAILED; its profiles stop at the failure: {f}"
        ));
    }
    lines.extend(text.summary.iter().cloned());
    lines.extend(text.warnings.iter().cloned());
    let rows = &profiles.concentrations_mol_per_m3;
    if rows.is_empty() {
        report.text_section("Run summary", &lines);
        return Ok(report);
    }
    let unit = plan.output_concentration_unit();
    let factor = unit.to_si_factor();
    let n = mechanism.species.len();
    let columns: Vec<Vec<f64>> = (0..n)
        .map(|i| {
            rows.iter()
                .map(|r| r.get(i).copied().unwrap_or(f64::NAN) / factor)
                .collect()
        })
        .collect();
    let chosen = match species {
        Some(list) => list.clone(),
        None => {
            let peaks: Vec<f64> = columns
                .iter()
                .map(|c| c.iter().copied().fold(f64::NEG_INFINITY, f64::max))
                .collect();
            largest_series(&peaks, DEFAULT_PLOTTED_SPECIES)
        }
    };
    let value_axis = format!("concentration [{}]", unit.label());
    let series: Vec<Series> = chosen
        .iter()
        .filter_map(|&i| {
            Some(Series {
                label: mechanism.species.get(i)?.name.as_str(),
                values: columns.get(i)?.as_slice(),
            })
        })
        .collect();
    let concentrations = profile_svg(&ProfilePlot {
        title: "Concentrations",
        times_s: &profiles.times_s,
        series,
        value_axis_label: &value_axis,
        time_scale: AxisScale::Auto,
        value_scale: AxisScale::Auto,
    })
    .map_err(plot_error(path))?;
    let temperature = profile_svg(&ProfilePlot {
        title: "Temperature",
        times_s: &profiles.times_s,
        series: vec![Series {
            label: "T",
            values: &profiles.temperatures_k,
        }],
        value_axis_label: "temperature [K]",
        time_scale: AxisScale::Auto,
        value_scale: AxisScale::Linear,
    })
    .map_err(plot_error(path))?;
    let caption = if species.is_some() {
        "Species chosen with --report-species.".to_string()
    } else {
        format!(
            "The {} species of largest peak concentration (choose others with --report-species).",
            chosen.len()
        )
    };
    // The figures first: on a laptop screen they are what the page opens on.
    report.figure_section(
        "Profiles",
        &[(caption, concentrations), (String::new(), temperature)],
    );
    report.text_section("Run summary", &lines);
    Ok(report)
}

/// `R<n>` and the equation of step `j`.
fn step_text(mechanism: &Mechanism, j: usize) -> (String, String) {
    (
        format!("R{}", j + 1),
        mechanism
            .steps
            .get(j)
            .map_or_else(|| "?".to_string(), |s| s.equation.clone()),
    )
}

/// The page of `stoik rates`: the printed budgets, then per span and species a table of
/// every contributing step ranked by magnitude and a bar chart of the `top` largest of each
/// side.
pub fn rates_page(
    path: &Path,
    scenario: &Path,
    plan: &RunPlan,
    rates: &[StepRates],
    species: &[usize],
    top: usize,
    printed: &[String],
) -> Result<HtmlReport, CliError> {
    let mechanism = plan.mechanism();
    let mut report = page("Rates of production", scenario, plan);
    report.text_section("Summary", printed);
    for r in rates {
        for &i in species {
            let b = species_budget(mechanism, r, i);
            let unit = r.span.rate_unit();
            let name = mechanism.species.get(i).map_or("?", |s| s.name.as_str());
            let mut ranked: Vec<&Contribution> = b.all.iter().collect();
            ranked.sort_by(|a, c| c.value.abs().total_cmp(&a.value.abs()));
            let mut table = Table::new(&[
                "rank".to_string(),
                "step".to_string(),
                "equation".to_string(),
                format!("contribution [{unit}]"),
                "share of its side".to_string(),
            ]);
            for (k, c) in ranked.iter().take(MAX_TABLE_ROWS).enumerate() {
                let (label, equation) = step_text(mechanism, c.step);
                table.row(vec![
                    (k + 1).to_string(),
                    label,
                    equation,
                    format!("{:.4e}", c.value),
                    format!("{:.2} %", 100.0 * c.share),
                ]);
            }
            if ranked.len() > MAX_TABLE_ROWS {
                table.row(vec![
                    String::new(),
                    String::new(),
                    format!(
                        "... {} more steps (all are in --csv)",
                        ranked.len() - MAX_TABLE_ROWS
                    ),
                ]);
            }
            let mut bars: Vec<(String, f64)> = b
                .production
                .iter()
                .take(top)
                .chain(b.consumption.iter().take(top).rev())
                .map(|c| {
                    let (label, equation) = step_text(mechanism, c.step);
                    (format!("{label} {equation}"), c.value)
                })
                .collect();
            bars.sort_by(|a, c| c.1.total_cmp(&a.1));
            let title = format!(
                "{name} at {} (T = {:.1} K)",
                r.span.describe(),
                r.temperature_k
            );
            let intro = format!(
                "net {:.6e}, production {:.6e}, consumption {:.6e} {unit}; contributions nu q, positive where the step makes {name}.",
                b.net, b.production_total, b.consumption_total
            );
            if bars.is_empty() {
                report.table_and_charts_section(&title, &intro, &table, &[]);
            } else {
                let svg = bar_chart_svg(
                    &format!("{name}: largest {top} of each side"),
                    &format!("contribution [{unit}]"),
                    &bars,
                )
                .map_err(plot_error(path))?;
                report.table_and_chart_section(&title, &intro, &table, &svg);
            }
        }
    }
    Ok(report)
}

/// The page of `stoik flux`: the printed table, the graph drawn, and every edge with its
/// carrying steps' equations.
pub fn flux_page(
    path: &Path,
    scenario: &Path,
    plan: &RunPlan,
    graph: &FluxGraph,
    printed: &[String],
) -> Result<HtmlReport, CliError> {
    let mechanism = plan.mechanism();
    let mut report = page(&format!("Flux of {} atoms", graph.symbol), scenario, plan);
    report.text_section("Summary", printed);
    let svg = flux_graph_svg(graph, mechanism).map_err(plot_error(path))?;
    report.figure_section("Flux graph", &[(String::new(), svg)]);
    let unit = format!(
        "mol of atoms{}",
        graph.span.rate_unit().trim_start_matches("mol")
    );
    let mut table = Table::new(&[
        "from".to_string(),
        "to".to_string(),
        "relative".to_string(),
        format!("flux [{unit}]"),
        "carrying steps (share of the edge)".to_string(),
    ]);
    let name = |i: usize| mechanism.species.get(i).map_or("?", |s| s.name.as_str());
    for e in &graph.edges {
        let steps: Vec<String> = e
            .steps
            .iter()
            .map(|&(s, v)| {
                let (label, equation) = step_text(mechanism, s);
                format!("{label} {equation} ({:.1} %)", 100.0 * v / e.flux)
            })
            .collect();
        table.row(vec![
            name(e.from).to_string(),
            name(e.to).to_string(),
            format!("{:.3}", e.relative),
            format!("{:.4e}", e.flux),
            steps.join("; "),
        ]);
    }
    report.table_and_charts_section(
        "Edges",
        "Net flow of atoms between pairs of species, largest first.",
        &table,
        &[],
    );
    Ok(report)
}
