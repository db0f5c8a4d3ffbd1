//! `--report FILE.html` of the real binary's `run`, `rates`, `flux` and `sensitivity` (and
//! `sensitivity --svg`): the sections of each
//! page, a page with nothing fetched from outside, hostile names escaped, a report path
//! onto an input refused. The numbers shown are the library's (tested against outside
//! sources in their own crates); here the page's content is checked against what the
//! command prints and against the files it read.

mod common;

use common::{repo, stoik, text};
use std::path::{Path, PathBuf};

fn scratch(name: &str) -> PathBuf {
    common::scratch("report", name)
}

fn demo() -> String {
    repo()
        .join("mechanisms/hydrogen-oxygen.scenario.toml")
        .to_string_lossy()
        .into_owned()
}

/// Checks what every report holds: one HTML document, the caution, no script and no
/// address outside the page (the SVG namespace is a name, not a fetch).
fn self_contained(html: &str) {
    assert!(html.starts_with("<!DOCTYPE html>"));
    assert_eq!(html.matches("</html>").count(), 1);
    assert!(html.contains(
        "Simulation is no substitute for local codes, standards and licensed engineering review."
    ));
    assert!(!html.contains("<script"));
    for attribute in ["src=", "href=\"http", "url(", "@import"] {
        assert!(!html.contains(attribute), "{attribute} in the page");
    }
    let addresses = html.matches("http").count();
    let namespaces = html.matches("xmlns=\"http://www.w3.org/2000/svg\"").count();
    assert_eq!(addresses, namespaces);
}

#[test]
fn run_report_holds_the_printed_summary_and_the_profile_plots() {
    let dir = scratch("run");
    let out = stoik(
        &[
            "run",
            &demo(),
            "-o",
            "h2.csv",
            "--report",
            "h2.html",
            "--report-without-analyses",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let stdout = text(&out.stdout);
    assert!(stdout.contains("wrote h2.html"));
    let html = std::fs::read_to_string(dir.join("h2.html")).unwrap();
    self_contained(&html);
    for section in ["Run summary", "Profiles"] {
        assert!(html.contains(&format!("<h2>{section}</h2>")), "{section}");
    }
    // Every line the run printed before the report is on the page (escaped).
    for line in stdout.lines().filter(|l| !l.starts_with("wrote h2.html")) {
        assert!(html.contains(&stoik::plot::escape(line)), "missing: {line}");
    }
    // Two plots: concentrations (the 8 largest species) and temperature.
    assert_eq!(html.matches("<svg").count(), 2);
    assert!(html.contains("The 8 species of largest peak concentration"));
    // The plotted species are the 8 of largest peak concentration in the CSV.
    let csv = common::Table::read(&dir.join("h2.csv"));
    let mut peaks: Vec<(f64, String)> = csv
        .header
        .iter()
        .enumerate()
        .filter_map(|(k, h)| {
            let name = h.strip_suffix(" [mol/m3]")?;
            let peak = csv.rows.iter().map(|r| r[k]).fold(f64::MIN, f64::max);
            Some((peak, name.to_string()))
        })
        .collect();
    assert!(peaks.len() > 8, "{:?}", csv.header);
    peaks.sort_by(|a, b| b.0.total_cmp(&a.0));
    for (_, name) in &peaks[..8] {
        // plotters writes a text element's content on a line of its own.
        assert!(
            html.contains(&format!(">\n{name}\n</text>")),
            "{name} not plotted"
        );
    }
}

#[test]
fn rates_report_has_a_table_and_a_bar_chart_per_species_and_instant() {
    let dir = scratch("rates");
    let out = stoik(
        &[
            "rates",
            &demo(),
            "--species",
            "OH,H2O",
            "--times",
            "1e-4,2.2e-4",
            "--top",
            "3",
            "--report",
            "r.html",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let html = std::fs::read_to_string(dir.join("r.html")).unwrap();
    self_contained(&html);
    assert!(html.contains("<h2>Summary</h2>"));
    for species in ["OH", "H2O"] {
        for t in ["1e-4", "2.2e-4"] {
            assert!(
                html.contains(&format!("<h2>{species} at t = {t} s")),
                "{species} at {t}"
            );
        }
    }
    // Four (species, instant) pairs: four tables and four charts.
    assert_eq!(html.matches("<table>").count(), 4);
    assert_eq!(html.matches("<svg").count(), 4);
    for line in text(&out.stdout)
        .lines()
        .filter(|l| !l.starts_with("wrote"))
    {
        assert!(html.contains(&stoik::plot::escape(line)), "missing: {line}");
    }
}

#[test]
fn flux_report_has_the_graph_and_its_edges() {
    let dir = scratch("flux");
    let out = stoik(
        &[
            "flux",
            &demo(),
            "--element",
            "H",
            "--time",
            "2.2e-4",
            "--dot",
            "h.dot",
            "--report",
            "f.html",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let html = std::fs::read_to_string(dir.join("f.html")).unwrap();
    self_contained(&html);
    for section in ["Summary", "Flux graph", "Edges"] {
        assert!(html.contains(&format!("<h2>{section}</h2>")), "{section}");
    }
    assert_eq!(html.matches("<svg").count(), 1);
    // One table row per DOT edge.
    let dot = std::fs::read_to_string(dir.join("h.dot")).unwrap();
    let edges = dot.lines().filter(|l| l.contains(" -> ")).count();
    assert_eq!(html.matches("<tr>").count(), edges + 1);
}

/// A -> B with hostile species and file names.
fn hostile(dir: &Path) -> String {
    std::fs::write(
        dir.join("m&<x>.toml"),
        "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\ntime = \"s\"\n\
         [[species]]\nname = \"<i>A&amp;\"\n[[species]]\nname = \"B\\\"'\"\n\
         [[step]]\nequation = \"<i>A&amp; -> B\\\"'\"\nforward = { prefactor = 2.5 }\n",
    )
    .unwrap();
    let scenario = dir.join("s<&>.scenario.toml");
    std::fs::write(
        &scenario,
        "stoik_scenario = 1\ntitle = \"<script>x</script>\"\nmechanism = \"m&<x>.toml\"\n\
         [reactor]\ntemperature = \"300 K\"\n\
         [initial]\nconcentrations = { \"<i>A&amp;\" = 3.0 }\n[output]\nend_time = \"2 s\"\n\
         grid = { spacing = \"linear\", points = 5 }\n",
    )
    .unwrap();
    scenario.to_string_lossy().into_owned()
}

#[test]
fn hostile_names_are_escaped_on_every_page() {
    let dir = scratch("hostile");
    let scenario = hostile(&dir);
    for args in [
        vec!["run", &scenario, "-o", "h.csv", "--report", "run.html"],
        vec![
            "rates",
            &scenario,
            "--species",
            "<i>A&amp;",
            "--times",
            "0.5",
            "--report",
            "rates.html",
        ],
        vec![
            "sensitivity",
            &scenario,
            "--of",
            "final:<i>A&amp;",
            "--report",
            "sens.html",
        ],
    ] {
        let out = stoik(&args, &dir);
        assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
        let html = std::fs::read_to_string(dir.join(args[args.len() - 1])).unwrap();
        assert!(!html.contains("<script"), "{}", args[0]);
        assert!(!html.contains("<i>"), "{}", args[0]);
        assert!(html.contains("&lt;i&gt;A&amp;amp;"), "{}", args[0]);
        assert!(html.contains("m&amp;&lt;x&gt;.toml"), "{}", args[0]);
        // Inside the SVG too (escaped by plotters): no raw tag from a name.
        assert!(!html.contains("<i>A"));
    }
}

#[test]
fn a_report_onto_an_input_is_refused_before_the_run() {
    let dir = scratch("onto-input");
    let scenario = hostile(&dir);
    let mechanism = dir.join("m&<x>.toml");
    let before = std::fs::read(&mechanism).unwrap();
    for args in [
        vec!["run", &scenario, "-o", "x.csv", "--report", "m&<x>.toml"],
        vec![
            "rates",
            &scenario,
            "--species",
            "B\"'",
            "--times",
            "1",
            "--report",
            "m&<x>.toml",
        ],
    ] {
        let out = stoik(&args, &dir);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{err}");
        assert!(err.contains("--report"), "{err}");
        assert!(err.contains("m&<x>.toml"), "{err}");
        assert!(err.contains("refusing to overwrite an input"), "{err}");
        assert!(!dir.join("x.csv").exists());
    }
    assert_eq!(std::fs::read(&mechanism).unwrap(), before);
    // The demo's scenario as the flux report: refused, located at --report.
    let copy = scratch("onto-input-demo");
    let out = stoik(
        &[
            "flux",
            &demo(),
            "--element",
            "H",
            "--time",
            "1e-4",
            "--report",
            &demo(),
        ],
        &copy,
    );
    assert_eq!(out.status.code(), Some(2));
    let err = text(&out.stderr);
    assert!(
        err.contains("--report") && err.contains("hydrogen-oxygen.scenario.toml"),
        "{err}"
    );
}

#[test]
fn report_species_are_checked_before_the_run() {
    let dir = scratch("species");
    let out = stoik(
        &[
            "run",
            &demo(),
            "-o",
            "a.csv",
            "--report",
            "a.html",
            "--report-species",
            "OH,XY",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("--report-species: unknown species `XY`"));
    assert!(!dir.join("a.csv").exists() && !dir.join("a.html").exists());
    let out = stoik(
        &[
            "run",
            &demo(),
            "-o",
            "b.csv",
            "--report",
            "b.html",
            "--report-species",
            "OH,H2O",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let html = std::fs::read_to_string(dir.join("b.html")).unwrap();
    assert!(html.contains("Species chosen with --report-species."));
    // The legend holds exactly the two species (and the temperature's T).
    for name in ["OH", "H2O"] {
        assert!(html.contains(&format!(">\n{name}\n</text>")), "{name}");
    }
    assert!(!html.contains(">\nAR\n</text>"));
}

#[test]
fn a_failed_run_still_writes_its_report_with_the_partial_profile() {
    // The demo with a step budget far too small: exit 3, the partial CSV and a report that
    // says the run failed.
    let dir = scratch("failed");
    let demo_text = std::fs::read_to_string(demo()).unwrap();
    let mechanism = repo().join("mechanisms/hydrogen-oxygen.toml");
    let scenario = demo_text
        .replace(
            "mechanism = \"hydrogen-oxygen.toml\"",
            &format!("mechanism = '{}'", mechanism.display()),
        )
        .replace("[solver]\n", "[solver]\nmax_steps = 30\n");
    assert_ne!(scenario, demo_text);
    std::fs::write(dir.join("short.scenario.toml"), scenario).unwrap();
    let out = stoik(
        &[
            "run",
            "short.scenario.toml",
            "-o",
            "s.csv",
            "--report",
            "s.html",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(3), "{}", text(&out.stderr));
    assert!(dir.join("s.partial.csv").exists());
    let html = std::fs::read_to_string(dir.join("s.html")).unwrap();
    self_contained(&html);
    assert!(html.contains("The run failed: its profiles stop at the failure"));
    assert!(html
        .contains("the run FAILED; its profiles stop at the failure: integration failed at t = "));
    assert_eq!(html.matches("<svg").count(), 2);
}

/// The cells of the `<td ... title="...">` attributes of `html`, in page order.
fn titles(html: &str) -> Vec<&str> {
    html.split("<td")
        .skip(1)
        .filter_map(|cell| {
            let head = &cell[..cell.find('>')?];
            let start = head.find("title=\"")? + "title=\"".len();
            let len = head[start..].find('"')?;
            Some(&head[start..start + len])
        })
        .collect()
}

#[test]
fn sensitivity_report_ranks_the_steps_as_the_csv_does_with_chart_and_profiles() {
    let dir = scratch("sensitivity");
    let out = stoik(
        &[
            "sensitivity",
            &demo(),
            "--of",
            "ignition-delay",
            "--top",
            "6",
            "--csv",
            "s.csv",
            "--svg",
            "s.svg",
            "--report",
            "s.html",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let stdout = text(&out.stdout);
    assert!(stdout.contains("wrote s.svg") && stdout.contains("wrote s.html"));
    let html = std::fs::read_to_string(dir.join("s.html")).unwrap();
    self_contained(&html);
    for section in ["Sensitivities", "Profiles of the run", "Summary"] {
        assert!(html.contains(&format!("<h2>{section}</h2>")), "{section}");
    }
    // The bar chart, the concentrations and the temperature.
    assert_eq!(html.matches("<svg").count(), 3);
    // The ignition caution of the run is in the summary.
    assert!(html.contains("CAUTION: ignition or thermal runaway detected"));
    for line in stdout.lines().filter(|l| !l.starts_with("wrote")) {
        assert!(html.contains(&stoik::plot::escape(line)), "missing: {line}");
    }
    // The CSV's ranking: rank,step,equation,normalized,derivative,unit,value.
    let csv = std::fs::read_to_string(dir.join("s.csv")).unwrap();
    let ranked: Vec<Vec<&str>> = csv
        .lines()
        .skip(1)
        .map(|l| l.split(',').collect())
        .collect();
    assert_eq!(ranked.len(), 13, "every step of the demo");
    // The table rows carry the steps in the CSV's order and, in their title attributes,
    // the CSV's full-precision numbers (normalized, derivative) exactly.
    let mut at = 0;
    for row in &ranked {
        let cell = format!("<td>{}</td>", row[1]);
        let found = html[at..]
            .find(&cell)
            .unwrap_or_else(|| panic!("{} out of order", row[1]));
        at += found + cell.len();
    }
    let expected: Vec<&str> = ranked.iter().flat_map(|r| [r[3], r[4]]).collect();
    assert_eq!(titles(&html), expected);
    // The --svg chart: well-formed, one bar per ranked step shown (the --top 6), in the
    // CSV's order, each bar's colour the sign of its coefficient.
    let svg = std::fs::read_to_string(dir.join("s.svg")).unwrap();
    let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    let positive = stoik::plot::color_hex(stoik::plot::POSITIVE_COLOR);
    let negative = stoik::plot::color_hex(stoik::plot::NEGATIVE_COLOR);
    let bars: Vec<bool> = doc
        .descendants()
        .filter(|n| n.has_tag_name("rect"))
        .filter_map(|n| match n.attribute("fill") {
            Some(f) if f == positive => Some(false),
            Some(f) if f == negative => Some(true),
            _ => None,
        })
        .collect();
    let top: Vec<&Vec<&str>> = ranked.iter().take(6).collect();
    let signs: Vec<bool> = top
        .iter()
        .map(|r| r[3].parse::<f64>().unwrap() < 0.0)
        .collect();
    assert_eq!(bars, signs);
    let labels: Vec<String> = doc
        .descendants()
        .filter(|n| n.has_tag_name("text"))
        .filter_map(|n| n.text())
        .map(|t| t.trim().to_string())
        .filter(|t| t.starts_with('R') && t[1..].starts_with(|c: char| c.is_ascii_digit()))
        .collect();
    let expected: Vec<String> = top.iter().map(|r| format!("{} {}", r[1], r[2])).collect();
    assert_eq!(labels, expected);
    // The page's chart is the same drawing.
    assert!(html.contains(svg[svg.find("<svg").unwrap()..].trim_end()));
}

#[test]
fn sensitivity_of_a_first_order_product_matches_the_closed_form() {
    // A -> B, k = 2.5 /s, B(0) = 0: B(t) = A0 (1 - e^{-kt}) (the integrated first-order rate
    // law, Atkins' Physical Chemistry), so d ln B/d ln k = k t e^{-kt} / (1 - e^{-kt}); at
    // t = 2 s, kt = 5.
    let dir = scratch("sensitivity-closed-form");
    let scenario = hostile(&dir);
    let out = stoik(
        &[
            "sensitivity",
            &scenario,
            "--of",
            "final:B\"'",
            "--report",
            "b.html",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let html = std::fs::read_to_string(dir.join("b.html")).unwrap();
    self_contained(&html);
    let kt: f64 = 5.0;
    let exact = kt * (-kt).exp() / (1.0 - (-kt).exp());
    let shown: f64 = titles(&html)[0].parse().unwrap();
    assert!(
        (shown - exact).abs() < 1e-4 * exact,
        "{shown} against {exact}"
    );
}

#[test]
fn sensitivity_outputs_are_checked_before_the_run() {
    let dir = scratch("sensitivity-outputs");
    let scenario = hostile(&dir);
    for (args, flag, reason) in [
        (
            vec!["--svg", "m&<x>.toml"],
            "--svg",
            "refusing to overwrite an input",
        ),
        (
            vec!["--report", "s<&>.scenario.toml"],
            "--report",
            "refusing to overwrite an input",
        ),
        (
            vec!["--svg", "same", "--report", "./same"],
            "--report",
            "outputs must be distinct",
        ),
        (
            vec!["--csv", "c.csv", "--report", "c.csv"],
            "--report",
            "outputs must be distinct",
        ),
    ] {
        let mut argv = vec!["sensitivity", &scenario, "--of", "final:B\"'"];
        argv.extend(args);
        let out = stoik(&argv, &dir);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{err}");
        assert!(err.contains(flag) && err.contains(reason), "{err}");
        assert!(!dir.join("same").exists() && !dir.join("c.csv").exists());
    }
    // No bar to draw: refused before the run, nothing written.
    let out = stoik(
        &[
            "sensitivity",
            &scenario,
            "--of",
            "final:B\"'",
            "--top",
            "0",
            "--csv",
            "c.csv",
            "--svg",
            "z.svg",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("--top 0 leaves no bar to draw"));
    assert!(text(&out.stdout).is_empty());
    assert!(!dir.join("c.csv").exists() && !dir.join("z.svg").exists());
}

/// The `[mole fraction]` columns of a run's CSV.
fn mole_fraction_columns(csv: &common::Table) -> Vec<(String, Vec<f64>)> {
    csv.header
        .iter()
        .enumerate()
        .filter_map(|(k, h)| {
            let name = h.strip_suffix(" [mole fraction]")?;
            Some((name.to_string(), csv.rows.iter().map(|r| r[k]).collect()))
        })
        .collect()
}

#[test]
fn mole_fraction_plots_have_their_axis_and_scale() {
    // The hydrogen demo: mole fractions from 0.85 (AR) down to radicals near 1e-6 and less,
    // so the axis is logarithmic; the plotted species are the 8 of largest peak mole
    // fraction in the CSV.
    let dir = scratch("mole-fractions");
    let out = stoik(
        &[
            "run",
            &demo(),
            "-o",
            "x.csv",
            "--report",
            "x.html",
            "--report-mole-fractions",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let html = std::fs::read_to_string(dir.join("x.html")).unwrap();
    self_contained(&html);
    assert!(html.contains("mole fraction [-] (log scale)"));
    assert!(!html.contains("concentration [mol/m3]"));
    assert!(html.contains("The 8 species of largest peak mole fraction"));
    let csv = common::Table::read(&dir.join("x.csv"));
    let mut columns = mole_fraction_columns(&csv);
    columns.sort_by(|a, b| {
        let peak = |c: &[f64]| c.iter().copied().fold(f64::MIN, f64::max);
        peak(&b.1).total_cmp(&peak(&a.1))
    });
    for (name, _) in &columns[..8] {
        assert!(html.contains(&format!(">\n{name}\n</text>")), "{name}");
    }
    assert!(!html.contains(&format!(">\n{}\n</text>", columns[8].0)));
    // A -> B over 2 s at k = 2.5 /s: mole fractions between 0.0067 and 1 (A = e^{-kt} of
    // the total, B the rest), less than three decades: a linear axis.
    let scenario = hostile(&dir);
    let out = stoik(
        &[
            "sensitivity",
            &scenario,
            "--of",
            "final:B\"'",
            "--report",
            "ab.html",
            "--report-mole-fractions",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let html = std::fs::read_to_string(dir.join("ab.html")).unwrap();
    assert!(html.contains("mole fraction [-]"));
    assert!(!html.contains("mole fraction [-] (log scale)"));
}

#[test]
fn run_report_holds_sensitivities_rates_of_production_and_the_flux_of_the_run() {
    let dir = scratch("run-analyses");
    let out = stoik(
        &[
            "run",
            &demo(),
            "-o",
            "h2.csv",
            "--report",
            "h2.html",
            "--report-rates-of",
            "OH,H2O",
            "--report-flux-element",
            "H",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let html = std::fs::read_to_string(dir.join("h2.html")).unwrap();
    self_contained(&html);
    for section in [
        "Profiles",
        "Sensitivities of the ignition delay",
        "Flux of H atoms over the run",
        "Edges of the H flux",
        "Run summary",
    ] {
        assert!(html.contains(&format!("<h2>{section}</h2>")), "{section}");
    }
    // Concentrations, temperature, the sensitivity chart, one rates chart per species, the
    // flux graph.
    assert_eq!(html.matches("<svg").count(), 6);

    // The sensitivities are those of `stoik sensitivity` (forward method) on the same
    // scenario, number for number (full precision in the table's title attributes).
    let out = stoik(
        &[
            "sensitivity",
            &demo(),
            "--of",
            "ignition-delay",
            "--csv",
            "s.csv",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let csv = std::fs::read_to_string(dir.join("s.csv")).unwrap();
    let ranked: Vec<Vec<&str>> = csv
        .lines()
        .skip(1)
        .map(|l| l.split(',').collect())
        .collect();
    let expected: Vec<&str> = ranked.iter().flat_map(|r| [r[3], r[4]]).collect();
    assert_eq!(titles(&html), expected);
    // Common practice (trade fact, no source): near 1100 K the chain-branching step
    // H + O2 -> O + OH has the largest, negative sensitivity of the hydrogen ignition delay.
    assert!(ranked[0][2].contains("H + O2") && ranked[0][2].contains("O + OH"));
    assert!(ranked[0][3].parse::<f64>().unwrap() < 0.0);

    // The rates of production are those of `stoik rates` over the whole run (the demo ends
    // at 2 ms): every contribution is on the page as printed there.
    let out = stoik(
        &[
            "rates",
            &demo(),
            "--species",
            "OH,H2O",
            "--window",
            "0,2e-3",
            "--csv",
            "r.csv",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let rates = std::fs::read_to_string(dir.join("r.csv")).unwrap();
    let mut checked = 0;
    for line in rates.lines().skip(1) {
        let fields: Vec<&str> = line.split(',').collect();
        let value: f64 = fields[5].parse().unwrap();
        assert!(
            html.contains(&format!("<td class=\"num\">{value:.4e}</td>")),
            "{line} not on the page"
        );
        checked += 1;
    }
    assert!(checked > 10, "{checked} contributions");

    // The flux graph is that of `stoik flux` over the same window: one table row per DOT
    // edge.
    let out = stoik(
        &[
            "flux",
            &demo(),
            "--element",
            "H",
            "--window",
            "0,2e-3",
            "--dot",
            "f.dot",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let dot = std::fs::read_to_string(dir.join("f.dot")).unwrap();
    let edges = dot.matches(" -> ").count();
    assert!(edges > 3, "{dot}");
    let table = &html[html.find("<h2>Edges of the H flux</h2>").unwrap()..];
    let table = &table[..table.find("</table>").unwrap()];
    assert_eq!(
        table.matches("<tr>").count(),
        edges + 1,
        "header and one row per edge"
    );
}

#[test]
fn run_report_analyses_default_sensibly_and_bad_flags_are_refused_before_the_run() {
    let dir = scratch("run-analyses-defaults");
    // Robertson's problem: abstract species (no atoms: no flux), no ignition: the
    // sensitivity of the final value of the main product (C, absent at the start).
    let scenario = repo()
        .join("mechanisms/robertson.scenario.toml")
        .to_string_lossy()
        .into_owned();
    let out = stoik(
        &["run", &scenario, "-o", "r.csv", "--report", "r.html"],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let html = std::fs::read_to_string(dir.join("r.html")).unwrap();
    assert!(html.contains("element flux left out: no species of the mechanism declares atoms"));
    assert!(!html.contains("Flux of"));
    let heading = html
        .split("<h2>Sensitivities of the final ")
        .nth(1)
        .and_then(|rest| rest.split("</h2>").next())
        .expect("a sensitivity section");
    let csv = common::Table::read(&dir.join("r.csv"));
    let last = csv.rows.last().unwrap();
    // The default product: the species absent at the start with the largest peak.
    let first = &csv.rows[0];
    let product = csv
        .header
        .iter()
        .enumerate()
        .filter_map(|(k, h)| Some((k, h.strip_suffix(" [mol/m3]")?)))
        .filter(|(k, _)| first[*k] == 0.0)
        .max_by(|a, b| {
            let peak = |k: usize| csv.rows.iter().map(|r| r[k]).fold(f64::MIN, f64::max);
            peak(a.0).total_cmp(&peak(b.0))
        })
        .map(|(_, name)| name)
        .unwrap();
    assert_eq!(heading, product, "final value of {product} = {last:?}");

    for (flag, value, message) in [
        ("--report-rates-of", "OH,XO", "XO"),
        ("--report-flux-element", "Zz", "Zz"),
        ("--report-sensitivity-of", "final:nope", "nope"),
    ] {
        let out = stoik(
            &[
                "run",
                &demo(),
                "-o",
                "bad.csv",
                "--report",
                "bad.html",
                flag,
                value,
            ],
            &dir,
        );
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{flag}: {err}");
        assert!(err.contains(flag) && err.contains(message), "{err}");
        assert!(!dir.join("bad.csv").exists() && !dir.join("bad.html").exists());
    }
}
