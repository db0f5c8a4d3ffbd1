//! `--report FILE.html` of `run`, `rates`, `flux` and `sensitivity`: one self-contained HTML
//! page (inline CSS and SVG, no script, nothing fetched) assembled with `stoik::plot`, written
//! atomically; and the sensitivity bar chart of `stoik sensitivity --svg`.
//!
//! Every page: the title, the files read, the caution, what the command printed, then the
//! command's own sections. Every user string (species names, equations, file names) is
//! escaped by `stoik::plot::HtmlReport`.

use crate::error::CliError;
use crate::out_file::write_text;
use crate::run::RunText;
use crate::run_analyses::{RunAnalyses, TOP};
use std::path::Path;
use stoik::analysis::{species_budget, Contribution, FluxGraph, ObservableSensitivity, StepRates};
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

/// What the profile figures of a page show: the species (`None`: the
/// [`DEFAULT_PLOTTED_SPECIES`] largest by peak) and whether as mole fractions instead of
/// concentrations in the scenario's output unit.
#[derive(Debug, Clone, Default)]
pub struct ProfileChoice {
    /// Species indices of `--report-species`, checked against the mechanism.
    pub species: Option<Vec<usize>>,
    /// `--report-mole-fractions`: plot x_i = c_i / sum_k c_k (dimensionless).
    pub mole_fractions: bool,
}

/// The page of `stoik run` (`path`: the report file, named in errors): the profile figures
/// ([`profile_figures`]), then the summary as printed (warnings and the failure too).
pub fn run_page(
    path: &Path,
    scenario: &Path,
    plan: &RunPlan,
    profiles: &Profiles,
    text: &RunText,
    choice: &ProfileChoice,
    analyses: &RunAnalyses,
) -> Result<HtmlReport, CliError> {
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
    lines.extend(analyses.notes.iter().cloned());
    if let Some(figures) = profile_figures(path, plan, profiles, choice)? {
        // The figures first: on a laptop screen they are what the page opens on.
        report.figure_section("Profiles", &figures);
    }
    let mechanism = plan.mechanism();
    if let Some(result) = &analyses.sensitivity {
        let heading = format!(
            "Sensitivities of the {}",
            result.observable.describe(mechanism)
        );
        add_sensitivity_section(&mut report, path, mechanism, result, TOP, &heading)?;
    }
    if let Some((rates, species)) = &analyses.rates {
        add_rates_sections(&mut report, path, mechanism, rates, species, TOP)?;
    }
    if let Some(graph) = &analyses.flux {
        add_flux_sections(
            &mut report,
            path,
            mechanism,
            graph,
            [
                &format!("Flux of {} atoms over the run", graph.symbol),
                &format!("Edges of the {} flux", graph.symbol),
            ],
        )?;
    }
    report.text_section("Run summary", &lines);
    Ok(report)
}

/// The two profile figures of a run with their captions: the concentrations (in the
/// scenario's output unit) or mole fractions of the chosen species, and the temperature,
/// against time. `None` when the run has no output row.
///
/// Mole fractions of a row whose total concentration is not positive are undefined (NaN)
/// and refuse the report, as any NaN does.
pub fn profile_figures(
    path: &Path,
    plan: &RunPlan,
    profiles: &Profiles,
    choice: &ProfileChoice,
) -> Result<Option<Vec<(String, String)>>, CliError> {
    let mechanism = plan.mechanism();
    let rows = &profiles.concentrations_mol_per_m3;
    if rows.is_empty() {
        return Ok(None);
    }
    let n = mechanism.species.len();
    let (columns, value_axis, quantity): (Vec<Vec<f64>>, String, &str) = if choice.mole_fractions {
        let fractions: Vec<Option<Vec<f64>>> = (0..rows.len())
            .map(|r| profiles.mole_fractions(r))
            .collect();
        let columns = (0..n)
            .map(|i| {
                fractions
                    .iter()
                    .map(|x| {
                        x.as_ref()
                            .and_then(|x| x.get(i))
                            .copied()
                            .unwrap_or(f64::NAN)
                    })
                    .collect()
            })
            .collect();
        (columns, "mole fraction [-]".to_string(), "mole fraction")
    } else {
        let unit = plan.output_concentration_unit();
        let factor = unit.to_si_factor();
        let columns = (0..n)
            .map(|i| {
                rows.iter()
                    .map(|r| r.get(i).copied().unwrap_or(f64::NAN) / factor)
                    .collect()
            })
            .collect();
        (
            columns,
            format!("concentration [{}]", unit.label()),
            "concentration",
        )
    };
    let chosen = match &choice.species {
        Some(list) => list.clone(),
        None => {
            let peaks: Vec<f64> = columns
                .iter()
                .map(|c| c.iter().copied().fold(f64::NEG_INFINITY, f64::max))
                .collect();
            largest_series(&peaks, DEFAULT_PLOTTED_SPECIES)
        }
    };
    let series: Vec<Series> = chosen
        .iter()
        .filter_map(|&i| {
            Some(Series {
                label: mechanism.species.get(i)?.name.as_str(),
                values: columns.get(i)?.as_slice(),
            })
        })
        .collect();
    let species_plot = profile_svg(&ProfilePlot {
        title: if choice.mole_fractions {
            "Mole fractions"
        } else {
            "Concentrations"
        },
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
    let caption = if choice.species.is_some() {
        "Species chosen with --report-species.".to_string()
    } else {
        format!(
            "The {} species of largest peak {quantity} (choose others with --report-species).",
            chosen.len()
        )
    };
    Ok(Some(vec![
        (caption, species_plot),
        (String::new(), temperature),
    ]))
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
    let mut report = page("Rates of production", scenario, plan);
    report.text_section("Summary", printed);
    add_rates_sections(&mut report, path, plan.mechanism(), rates, species, top)?;
    Ok(report)
}

/// Per span and species of `rates`: a table of every contributing step ranked by magnitude
/// and a bar chart of the `top` largest of each side (`path`: the report, named in errors).
pub fn add_rates_sections(
    report: &mut HtmlReport,
    path: &Path,
    mechanism: &Mechanism,
    rates: &[StepRates],
    species: &[usize],
    top: usize,
) -> Result<(), CliError> {
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
    Ok(())
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
    let mut report = page(&format!("Flux of {} atoms", graph.symbol), scenario, plan);
    report.text_section("Summary", printed);
    add_flux_sections(
        &mut report,
        path,
        plan.mechanism(),
        graph,
        ["Flux graph", "Edges"],
    )?;
    Ok(report)
}

/// The flux graph drawn and every edge with its carrying steps' equations, under the two
/// `headings` (`path`: the report, named in errors).
pub fn add_flux_sections(
    report: &mut HtmlReport,
    path: &Path,
    mechanism: &Mechanism,
    graph: &FluxGraph,
    headings: [&str; 2],
) -> Result<(), CliError> {
    let svg = flux_graph_svg(graph, mechanism).map_err(plot_error(path))?;
    report.figure_section(headings[0], &[(String::new(), svg)]);
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
        headings[1],
        "Net flow of atoms between pairs of species, largest first.",
        &table,
        &[],
    );
    Ok(())
}

/// The bar chart of the `top` largest sensitivities of `result`, largest |S| first (top to
/// bottom): the normalized coefficients `d ln G/d ln k` (dimensionless), or, when the
/// observable's value is zero (the normalized coefficients undefined), the derivatives
/// `dG/d ln k` in the observable's unit. `path` is the file named in errors.
pub fn sensitivity_chart(
    path: &Path,
    mechanism: &Mechanism,
    result: &ObservableSensitivity,
    top: usize,
) -> Result<String, CliError> {
    let observable = result.observable.describe(mechanism);
    let shown = top.min(result.ranked.len());
    let (bars, axis) = if result.value == 0.0 {
        let bars = result
            .ranked
            .iter()
            .take(top)
            .map(|s| {
                let (label, equation) = step_text(mechanism, s.step);
                (format!("{label} {equation}"), s.derivative)
            })
            .collect::<Vec<_>>();
        (
            bars,
            format!("dG/d ln k [{}], G = {observable}", result.observable.unit()),
        )
    } else {
        (
            result.labelled(mechanism, top),
            format!("d ln G/d ln k [-], G = {observable}"),
        )
    };
    bar_chart_svg(
        &format!(
            "Sensitivity of the {observable} to ln k: the {shown} largest of {}",
            result.ranked.len()
        ),
        &axis,
        &bars,
    )
    .map_err(plot_error(path))
}

/// What `stoik sensitivity` printed and ran, for its report.
pub struct SensitivityText<'a> {
    /// The lines printed (the observable, the ranked table).
    pub printed: &'a [String],
    /// The plain run of the scenario: its profiles and the lines describing it (reactor,
    /// final state, ignition delay, cautions), with the warnings of the files.
    pub run: Option<(&'a Profiles, Vec<String>)>,
}

/// The page of `stoik sensitivity`: the ranked sensitivities (bar chart of the `top`
/// largest, then a table of every step, at most 60 rows, short numbers with the full
/// precision in each cell's `title`), the run's profile figures, and the summary.
pub fn sensitivity_page(
    path: &Path,
    scenario: &Path,
    plan: &RunPlan,
    result: &ObservableSensitivity,
    top: usize,
    text: &SensitivityText,
    choice: &ProfileChoice,
) -> Result<HtmlReport, CliError> {
    let mechanism = plan.mechanism();
    let observable = result.observable.describe(mechanism);
    let title = plan
        .scenario()
        .title
        .as_deref()
        .unwrap_or("stoik sensitivity");
    let mut report = page(
        &format!("{title}: sensitivity of the {observable}"),
        scenario,
        plan,
    );
    add_sensitivity_section(&mut report, path, mechanism, result, top, "Sensitivities")?;
    let mut lines = text.printed.to_vec();
    if let Some((profiles, run_lines)) = &text.run {
        if let Some(figures) = profile_figures(path, plan, profiles, choice)? {
            report.figure_section("Profiles of the run", &figures);
        }
        lines.push(String::new());
        lines.extend(run_lines.iter().cloned());
    }
    report.text_section("Summary", &lines);
    Ok(report)
}

/// The ranked sensitivities of `result`: bar chart of the `top` largest, then a table of
/// every step (at most 60 rows; short numbers, full precision in each cell's `title`), under
/// `heading`.
pub fn add_sensitivity_section(
    report: &mut HtmlReport,
    path: &Path,
    mechanism: &Mechanism,
    result: &ObservableSensitivity,
    top: usize,
    heading: &str,
) -> Result<(), CliError> {
    let observable = result.observable.describe(mechanism);
    let unit = result.observable.unit();
    let method = match result.method {
        stoik::analysis::Method::Forward => "forward",
        stoik::analysis::Method::Adjoint => "adjoint",
    };
    let chart = sensitivity_chart(path, mechanism, result, top)?;
    let mut table = Table::new(&[
        "rank".to_string(),
        "step".to_string(),
        "equation".to_string(),
        "d ln G/d ln k [-]".to_string(),
        format!("dG/d ln k [{unit}]"),
    ]);
    let short = |v: f64| {
        if v.is_finite() {
            format!("{v:.4e}")
        } else {
            "undefined".to_string()
        }
    };
    for (k, s) in result.ranked.iter().take(MAX_TABLE_ROWS).enumerate() {
        let (label, equation) = step_text(mechanism, s.step);
        table.row_with_titles(
            vec![
                (k + 1).to_string(),
                label,
                equation,
                short(s.normalized),
                short(s.derivative),
            ],
            vec![
                String::new(),
                String::new(),
                String::new(),
                format!("{:e}", s.normalized),
                format!("{:e}", s.derivative),
            ],
        );
    }
    if result.ranked.len() > MAX_TABLE_ROWS {
        table.row(vec![
            String::new(),
            String::new(),
            format!(
                "... {} more steps (all are in --csv)",
                result.ranked.len() - MAX_TABLE_ROWS
            ),
        ]);
    }
    let intro = format!(
        "G = {observable} = {:.6e} {unit} ({method} method). The parameter of a step is ln k of its forward rate constant; S = d ln G/d ln k is the relative change of G per relative change of k (S = -0.8: 1 % larger k, 0.8 % smaller G). Bars: the {} largest |S| (--top); blue positive, red negative. Table: every step ranked, full precision on hover.",
        result.value,
        top.min(result.ranked.len())
    );
    report.chart_and_table_section(heading, &intro, &chart, &table);
    if !result.falloff_limits.is_empty() {
        let mut table = Table::new(&[
            "rank".to_string(),
            "step".to_string(),
            "equation".to_string(),
            "limit".to_string(),
            "d ln G/d ln k [-]".to_string(),
            format!("dG/d ln k [{unit}]"),
        ]);
        for (k, s) in result
            .falloff_limits
            .iter()
            .take(MAX_TABLE_ROWS)
            .enumerate()
        {
            let (label, equation) = step_text(mechanism, s.step);
            let limit = match s.limit {
                stoik::kinetics::FalloffLimit::Low => "k0",
                stoik::kinetics::FalloffLimit::High => "kinf",
            };
            table.row_with_titles(
                vec![
                    (k + 1).to_string(),
                    label,
                    equation,
                    limit.to_string(),
                    short(s.normalized),
                    short(s.derivative),
                ],
                vec![
                    String::new(),
                    String::new(),
                    String::new(),
                    String::new(),
                    format!("{:e}", s.normalized),
                    format!("{:e}", s.derivative),
                ],
            );
        }
        report.table_and_charts_section(
            "Each falloff limit alone",
            "ln k0 (low-pressure limit) and ln kinf (high-pressure limit) of each chosen falloff step scaled on their own; the two of a step sum to its coefficient above. Full precision on hover.",
            &table,
            &[],
        );
    }
    if !result.enthalpies.is_empty() {
        let mut table = Table::new(&[
            "rank".to_string(),
            "species".to_string(),
            "d ln G/dH_f [mol/kJ]".to_string(),
            format!("dG/dH_f [{unit} per J/mol]"),
        ]);
        for (k, s) in result.enthalpies.iter().take(MAX_TABLE_ROWS).enumerate() {
            let name = mechanism
                .species
                .get(s.species)
                .map_or("?", |x| x.name.as_str());
            table.row_with_titles(
                vec![
                    (k + 1).to_string(),
                    name.to_string(),
                    short(s.normalized_per_kj_per_mol),
                    short(s.derivative),
                ],
                vec![
                    String::new(),
                    String::new(),
                    format!("{:e}", s.normalized_per_kj_per_mol),
                    format!("{:e}", s.derivative),
                ],
            );
        }
        report.table_and_charts_section(
            "Formation enthalpies",
            "The relative change of G for a formation enthalpy 1 kJ/mol higher (it moves the equilibrium constants, hence reverse rates, and the heat release). Full precision on hover.",
            &table,
            &[],
        );
    }
    Ok(())
}
