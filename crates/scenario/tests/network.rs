//! Network scenarios (`[[tank]]`, `[[stream]]`): the bad-input files `tests/bad-input/
//! *.network.toml` checked against the expectations written in them (`# expect: LINE:COL:
//! substring`, the location of the key or value named by docs/file-format.md, written by hand
//! from that specification), every problem at once; and the bundled demo resolved against its
//! mechanism.

use stoik_mechanism::{load_mechanism, LoadError, Severity};
use stoik_scenario::{is_network_scenario_text, load_network_scenario};

fn expectations(text: &str) -> Vec<(usize, usize, String)> {
    text.lines()
        .filter_map(|l| l.strip_prefix("# expect: "))
        .map(|rest| {
            let mut parts = rest.splitn(3, ':');
            let line = parts.next().unwrap().trim().parse().unwrap();
            let column = parts.next().unwrap().trim().parse().unwrap();
            (line, column, parts.next().unwrap().trim().to_string())
        })
        .collect()
}

#[test]
fn every_bad_network_file_reports_each_problem_at_its_place() {
    let dir = stoik_testsupport::tests_dir().join("bad-input");
    let mut files = 0;
    for entry in std::fs::read_dir(&dir).unwrap() {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        if !name.ends_with(".network.toml") {
            continue;
        }
        files += 1;
        let text = std::fs::read_to_string(&path).unwrap();
        assert!(is_network_scenario_text(&text), "{name}");
        let expected = expectations(&text);
        assert!(!expected.is_empty(), "{name}: no expectations");
        let diagnostics = match load_network_scenario(&path) {
            Err(LoadError::Invalid { diagnostics }) => diagnostics,
            Ok((scenario, _)) => {
                let mechanism = load_mechanism(&scenario.mechanism_path).unwrap();
                match scenario.resolve(&mechanism.mechanism) {
                    Err(LoadError::Invalid { diagnostics }) => diagnostics,
                    other => panic!("{name}: accepted ({:?})", other.map(|p| p.output_times_s)),
                }
            }
            Err(other) => panic!("{name}: {other}"),
        };
        let errors: Vec<_> = diagnostics
            .iter()
            .filter(|d| d.severity == Severity::Error)
            .collect();
        for (line, column, text) in &expected {
            // `message | help`: the help text is checked too.
            let (message, help) = match text.split_once(" | ") {
                Some((m, h)) => (m, Some(h)),
                None => (text.as_str(), None),
            };
            assert!(
                errors.iter().any(|d| d
                    .location
                    .is_some_and(|l| l.line == *line && l.column == *column)
                    && d.message.contains(message)
                    && help.is_none_or(|h| d.help.as_deref().is_some_and(|x| x.contains(h)))),
                "{name}: no error `{text}` at {line}:{column}; got:\n{diagnostics}"
            );
        }
        assert_eq!(
            errors.len(),
            expected.len(),
            "{name}: unexpected errors:\n{diagnostics}"
        );
    }
    assert!(files >= 3, "only {files} network files in the corpus");
}

#[test]
fn the_demo_network_resolves_with_balanced_tanks() {
    let path = stoik_testsupport::mechanism_path("tank-train.scenario.toml");
    let (scenario, _) = load_network_scenario(&path).unwrap();
    let mechanism = load_mechanism(&scenario.mechanism_path).unwrap();
    let plan = scenario.resolve(&mechanism.mechanism).unwrap();
    // As written in the file: 5 L/s fed, 2 L/s recycled, so 7 L/s flow through each tank
    // of 5 m3 (residence time 5 / 0.007 s).
    for j in 0..2 {
        let tau = plan.network.residence_time_s(j);
        assert!((tau - 5.0 / 0.007).abs() < 1e-9 * tau, "{tau}");
    }
    // `end_time = "6 h"`, 361 linear points.
    assert_eq!(plan.output_times_s.len(), 361);
    assert_eq!(plan.output_times_s.last(), Some(&21600.0));
}
