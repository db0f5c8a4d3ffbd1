//! The real `stoik` binary's `rates` and `flux`: exit statuses, located errors, the CSV,
//! DOT and SVG files.

mod common;

use common::{repo, stoik, text};
use std::path::{Path, PathBuf};

fn scratch(name: &str) -> PathBuf {
    common::scratch("analysis", name)
}

fn demo() -> String {
    repo()
        .join("mechanisms/hydrogen-oxygen.scenario.toml")
        .to_string_lossy()
        .into_owned()
}

/// A -> B, k = 2.5 1/s, c_A(0) = 3 mol/m3, isothermal, to 2 s; returns the scenario path.
fn first_order(dir: &Path) -> String {
    std::fs::write(
        dir.join("a-to-b.toml"),
        "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\ntime = \"s\"\n\
         [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
         [[step]]\nequation = \"A -> B\"\nforward = { prefactor = 2.5 }\n",
    )
    .unwrap();
    let scenario = dir.join("a-to-b.scenario.toml");
    std::fs::write(
        &scenario,
        "stoik_scenario = 1\nmechanism = \"a-to-b.toml\"\n[reactor]\ntemperature = \"300 K\"\n\
         [initial]\nconcentrations = { A = 3.0 }\n[output]\nend_time = \"2 s\"\n\
         grid = { spacing = \"linear\", points = 3 }\n\
         [solver]\nrelative_tolerance = 1e-11\nabsolute_tolerance = 1e-16\n",
    )
    .unwrap();
    scenario.to_string_lossy().into_owned()
}

#[test]
fn rates_csv_follows_the_first_order_closed_form() {
    // First-order kinetics, integrated rate law (any physical-chemistry textbook): B is made
    // at k c0 exp(-k t), and over [t1, t2] by c0 (exp(-k t1) - exp(-k t2)).
    let dir = scratch("first-order");
    let scenario = first_order(&dir);
    let out = stoik(
        &[
            "rates",
            &scenario,
            "--species",
            "B,A",
            "--times",
            "0.3",
            "--window",
            "0.2,0.9",
            "--csv",
            "b.csv",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let csv = std::fs::read_to_string(dir.join("b.csv")).unwrap();
    let mut lines = csv.lines();
    assert_eq!(
        lines.next(),
        Some("species,from_s,to_s,step,equation,contribution,unit,share")
    );
    let rows: Vec<Vec<&str>> = lines.map(|l| l.split(',').collect()).collect();
    assert_eq!(rows.len(), 4);
    let (k, c0): (f64, f64) = (2.5, 3.0);
    for row in &rows {
        let value: f64 = row[5].parse().unwrap();
        // Every number reads back as written (shortest round-trip form).
        assert_eq!(format!("{value:e}"), row[5]);
        let expected = if row[1] == row[2] {
            assert_eq!(row[6], "mol/(m3 s)");
            k * c0 * (-k * 0.3f64).exp()
        } else {
            assert_eq!((row[1], row[2], row[6]), ("2e-1", "9e-1", "mol/m3"));
            c0 * ((-k * 0.2f64).exp() - (-k * 0.9f64).exp())
        };
        let signed = if row[0] == "B" { expected } else { -expected };
        assert!((value - signed).abs() <= 1e-8 * expected, "{row:?}");
        assert_eq!(row[7], "1e0");
    }
    assert!(text(&out.stdout).contains("R1    A -> B"));
}

#[test]
fn flux_writes_dot_and_svg_of_the_hydrogen_demo() {
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
            "--svg",
            "h.svg",
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(0), "{}", text(&out.stderr));
    let dot = std::fs::read_to_string(dir.join("h.dot")).unwrap();
    assert!(dot.starts_with("digraph \"H_flux\" {"));
    assert!(dot.contains("\"H2\" -> \"H2O\""));
    let svg = std::fs::read_to_string(dir.join("h.svg")).unwrap();
    // XML 1.0 well-formedness by an independent parser.
    let doc = roxmltree::Document::parse(&svg).expect("well-formed SVG");
    assert_eq!(doc.root_element().tag_name().name(), "svg");
    // One arrow head (a polygon in the edge colour) per DOT edge.
    let edges = dot.lines().filter(|l| l.contains(" -> ")).count();
    let edge_color = stoik::plot::color_hex(stoik::plot::EDGE_COLOR);
    assert_eq!(
        doc.descendants()
            .filter(|n| n.has_tag_name("polygon") && n.attribute("fill") == Some(&edge_color))
            .count(),
        edges
    );
}

#[test]
fn bad_analysis_input_is_located_at_its_flag_with_exit_2() {
    let dir = scratch("bad");
    let demo = demo();
    let cases: [(&[&str], &[&str]); 8] = [
        (
            &["rates", &demo, "--species", "OH,XY", "--times", "1e-4"],
            &["--species", "unknown species `XY`"],
        ),
        (
            &["rates", &demo, "--species", "oh", "--times", "1e-4"],
            &["--species", "did you mean `OH`"],
        ),
        (
            &["rates", &demo, "--species", "OH", "--times", "5e-3"],
            &["--times", "outside the run [0, 2e-3] s"],
        ),
        (
            &["rates", &demo, "--species", "OH", "--window", "3e-4,1e-4"],
            &["--window", "0 <= start < end <= 2e-3 s"],
        ),
        (&["rates", &demo, "--species", "OH"], &["--times/--window"]),
        (
            &["flux", &demo, "--element", "C", "--time", "1e-4"],
            &["--element", "unknown element `C`", "H, O"],
        ),
        (
            &["flux", &demo, "--element", "H", "--time=-1e-4"],
            &["--time", "outside the run"],
        ),
        (
            &[
                "flux",
                &demo,
                "--element",
                "H",
                "--window",
                "0,1e-4",
                "--threshold",
                "2",
            ],
            &["--threshold", "between 0 and 1"],
        ),
    ];
    for (args, needles) in cases {
        let out = stoik(args, &dir);
        let err = text(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {err}");
        for n in needles {
            assert!(err.contains(n), "{args:?}: `{n}` not in {err}");
        }
    }
}

#[test]
fn analysis_outputs_never_overwrite_an_input() {
    let dir = scratch("inputs");
    let scenario = first_order(&dir);
    let before = std::fs::read_to_string(&scenario).unwrap();
    let out = stoik(
        &[
            "rates",
            &scenario,
            "--species",
            "B",
            "--times",
            "1",
            "--csv",
            &scenario,
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(2));
    assert!(text(&out.stderr).contains("--csv"), "{}", text(&out.stderr));
    assert!(text(&out.stderr).contains("refusing to overwrite an input"));
    let out = stoik(
        &[
            "flux",
            &scenario,
            "--element",
            "H",
            "--time",
            "1",
            "--svg",
            "a-to-b.toml",
        ],
        &dir,
    );
    // No element declared in this mechanism: refused before anything is written.
    assert_eq!(out.status.code(), Some(2));
    assert!(
        text(&out.stderr)
            .contains("--element: unknown element `H`; the mechanism's elements are none"),
        "{}",
        text(&out.stderr)
    );
    // The demo's mechanism as the DOT output: refused, located at --dot.
    let mechanism = repo().join("mechanisms/hydrogen-oxygen.toml");
    let mechanism_before = std::fs::read_to_string(&mechanism).unwrap();
    let out = stoik(
        &[
            "flux",
            &demo(),
            "--element",
            "H",
            "--time",
            "1e-4",
            "--dot",
            mechanism.to_str().unwrap(),
        ],
        &dir,
    );
    assert_eq!(out.status.code(), Some(2));
    let err = text(&out.stderr);
    assert!(
        err.contains("--dot") && err.contains("refusing to overwrite an input"),
        "{err}"
    );
    assert_eq!(
        std::fs::read_to_string(&mechanism).unwrap(),
        mechanism_before
    );
    assert_eq!(std::fs::read_to_string(&scenario).unwrap(), before);
    assert!(std::fs::read_to_string(dir.join("a-to-b.toml"))
        .unwrap()
        .contains("A -> B"));
}
