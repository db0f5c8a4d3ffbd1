//! `--report FILE.html` of the real binary's `run`, `rates` and `flux`: the sections of each
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
        &["run", &demo(), "-o", "h2.csv", "--report", "h2.html"],
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
