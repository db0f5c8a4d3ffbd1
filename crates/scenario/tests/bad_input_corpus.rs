//! Runs every scenario file of `tests/bad-input/` (`*.scenario.toml`) through the loader and
//! the resolution against its mechanism, and checks the diagnostics against the expectations
//! written at the top of each file:
//!
//! ```text
//! # expect: LINE:COL: substring of the message                      <- an error
//! # expect: LINE:COL: substring of the message | substring of the help
//! # expect-warning: LINE:COL: substring of the message                <- a warning
//! ```
//!
//! Every expectation must be met by a diagnostic of that severity at exactly that location,
//! and the numbers of errors and warnings must equal the numbers of expectations. The
//! expectations were written by hand from the file-format specification
//! (docs/file-format.md), not copied from the program's output.

use std::path::{Path, PathBuf};
use std::sync::Arc;
use stoik_mechanism::{load_mechanism, Diagnostic, Diagnostics, LoadError, Severity};
use stoik_scenario::{parse_scenario, RunPlan, ScenarioError};

fn corpus() -> PathBuf {
    stoik_testsupport::tests_dir().join("bad-input")
}

struct Expectation {
    severity: Severity,
    line: usize,
    column: usize,
    text: String,
}

fn expectations(text: &str, file: &str) -> Vec<Expectation> {
    let mut out = Vec::new();
    for line in text.lines() {
        let (severity, rest) = if let Some(rest) = line.strip_prefix("# expect-warning: ") {
            (Severity::Warning, rest)
        } else if let Some(rest) = line.strip_prefix("# expect: ") {
            (Severity::Error, rest)
        } else {
            continue;
        };
        let mut parts = rest.splitn(3, ':');
        let line_no = parts.next().and_then(|s| s.trim().parse().ok());
        let column = parts.next().and_then(|s| s.trim().parse().ok());
        let (Some(line_no), Some(column), Some(text)) = (line_no, column, parts.next()) else {
            panic!("{file}: malformed expectation line `{line}`");
        };
        out.push(Expectation {
            severity,
            line: line_no,
            column,
            text: text.trim().to_string(),
        });
    }
    out
}

/// All diagnostics of a scenario file: its own, then (if it parsed) those of resolving it
/// against its mechanism, which must itself load cleanly.
fn check_scenario(text: &str, file: &str, dir: &Path) -> Vec<Diagnostic> {
    match parse_scenario(text, file, dir) {
        Err(LoadError::Invalid { diagnostics }) => diagnostics.0,
        Err(e) => panic!("{file}: {e}"),
        Ok((scenario, warnings)) => {
            let mechanism = load_mechanism(&scenario.mechanism_path)
                .unwrap_or_else(|e| panic!("{file}: its mechanism does not load:\n{e}"));
            let mut all = warnings.0;
            match RunPlan::new(scenario, Diagnostics::default(), Arc::new(mechanism)) {
                Ok(_) => {}
                Err(ScenarioError::Load(LoadError::Invalid { diagnostics })) => {
                    all.extend(diagnostics.0)
                }
                Err(e) => panic!("{file}: {e}"),
            }
            all
        }
    }
}

fn show(diagnostics: &[Diagnostic]) -> String {
    diagnostics.iter().map(|d| format!("{d}\n")).collect()
}

#[test]
fn every_scenario_of_the_corpus_reports_exactly_its_expected_problems() {
    let dir = corpus();
    let mut paths: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("corpus folder")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.to_string_lossy().ends_with(".scenario.toml"))
        .collect();
    paths.sort();
    let mut bad_files = 0;
    let mut largest_error_set = 0;
    let mut failures = Vec::new();
    for path in &paths {
        let file = path
            .file_name()
            .and_then(|n| n.to_str())
            .unwrap_or("?")
            .to_string();
        let text = std::fs::read_to_string(path).expect("readable corpus file");
        let expected = expectations(&text, &file);
        let diagnostics = check_scenario(&text, &file, &dir);
        let expected_errors = expected
            .iter()
            .filter(|e| e.severity == Severity::Error)
            .count();
        let expected_warnings = expected.len() - expected_errors;
        if expected_errors > 0 {
            bad_files += 1;
        }
        largest_error_set = largest_error_set.max(expected_errors);
        for e in &expected {
            let (message_part, help_part) = match e.text.split_once(" | ") {
                Some((m, h)) => (m, Some(h)),
                None => (e.text.as_str(), None),
            };
            let found = diagnostics.iter().any(|d| {
                let at = d.location.map(|l| (l.line, l.column));
                let help_ok = match help_part {
                    None => true,
                    Some(h) => d.help.as_deref().is_some_and(|text| text.contains(h)),
                };
                d.severity == e.severity
                    && at == Some((e.line, e.column))
                    && d.message.contains(message_part)
                    && help_ok
            });
            if !found {
                failures.push(format!(
                    "{file}: expected {:?} at {}:{} containing `{}`; got:\n{}",
                    e.severity,
                    e.line,
                    e.column,
                    e.text,
                    show(&diagnostics)
                ));
            }
        }
        let errors = diagnostics
            .iter()
            .filter(|d| d.severity == Severity::Error)
            .count();
        let warnings = diagnostics.len() - errors;
        if errors != expected_errors || warnings != expected_warnings {
            failures.push(format!(
                "{file}: expected {expected_errors} error(s) and {expected_warnings} warning(s), got {errors} and {warnings}:\n{}",
                show(&diagnostics)
            ));
        }
    }
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    // At least 15 malformed scenario files, one of them with several problems at once.
    assert!(bad_files >= 15, "only {bad_files} malformed scenario files");
    assert!(largest_error_set >= 3);
}
