//! Runs every mechanism file of `tests/bad-input/` (`*.mech.toml`; the scenario files are
//! checked by stoik-scenario's own corpus test) through the loader and checks the
//! diagnostics against the expectations written at the top of each file:
//!
//! ```text
//! # expect: LINE:COL: substring of the message                      <- an error
//! # expect: LINE:COL: substring of the message | substring of the help
//! # expect-warning: LINE:COL: substring of the message                <- a warning
//! ```
//!
//! Every expectation must be met by a diagnostic of that severity at exactly that location,
//! and the numbers of errors and warnings must equal the numbers of expectations, so a file
//! also proves that nothing else is reported. The expectations were written by hand from the
//! file-format specification (docs/file-format.md), not copied from the program's output.

use std::path::{Path, PathBuf};
use stoik_mechanism::{parse_mechanism, parse_mechanism_in, Diagnostic, LoadError, Severity};

/// The corpus folder, `tests/bad-input/`.
fn corpus() -> PathBuf {
    stoik_testsupport::tests_dir().join("bad-input")
}

#[derive(Debug)]
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

fn diagnostics_of(result: Result<Vec<Diagnostic>, LoadError>, file: &str) -> Vec<Diagnostic> {
    match result {
        Ok(d) => d,
        Err(LoadError::Invalid { diagnostics }) => diagnostics.0,
        Err(e) => panic!("{file}: {e}"),
    }
}

/// All diagnostics of a mechanism file (relative `thermo_files` start from `dir`).
fn check_mechanism(text: &str, file: &str, dir: &Path) -> Vec<Diagnostic> {
    diagnostics_of(
        parse_mechanism_in(text, file, Some(dir)).map(|m| m.warnings.0),
        file,
    )
}

fn show(diagnostics: &[Diagnostic]) -> String {
    diagnostics
        .iter()
        .map(|d| format!("{d}\n"))
        .collect::<String>()
}

#[test]
fn every_corpus_file_reports_exactly_its_expected_problems() {
    let dir = corpus();
    let mut paths: Vec<PathBuf> = std::fs::read_dir(&dir)
        .expect("corpus folder")
        .map(|e| e.expect("entry").path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
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
        // Scenario and network-scenario files are checked by the scenario crate's tests.
        let diagnostics = if file.ends_with(".scenario.toml") || file.ends_with(".network.toml") {
            continue;
        } else if file.ends_with(".mech.toml") {
            check_mechanism(&text, &file, &dir)
        } else {
            panic!("{file}: corpus files end in .mech.toml, .scenario.toml or .network.toml");
        };
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
    // The corpus is meant to be broad: at least 30 malformed mechanism files, one of them
    // with many problems at once, plus the clean mechanism the scenarios use.
    assert!(bad_files >= 30, "only {bad_files} malformed files");
    assert!(largest_error_set >= 3);
    assert!(paths.iter().any(|p| p.ends_with("good.mech.toml")));
}

#[test]
fn truncated_files_give_located_errors_not_panics() {
    // Robustness: every prefix of a valid file (cut at character boundaries) must either load
    // or be rejected with located diagnostics; the full file must load. A prefix that ends
    // right after `stoik_mechanism = 1` has no steps, so it must be rejected.
    let path = corpus().join("good.mech.toml");
    let text = std::fs::read_to_string(&path).expect("good mechanism");
    let mut rejected = 0;
    for (cut, _) in text.char_indices().step_by(7) {
        match parse_mechanism(&text[..cut], "cut.toml") {
            Ok(_) => {}
            Err(LoadError::Invalid { diagnostics }) => {
                assert!(diagnostics.has_errors());
                assert!(diagnostics.iter().all(|d| d.location.is_some()));
                rejected += 1;
            }
            Err(e) => panic!("unexpected {e}"),
        }
    }
    assert!(rejected > 0);
    let version_end = text.find("stoik_mechanism = 1").expect("version line") + 20;
    assert!(parse_mechanism(&text[..version_end], "cut.toml").is_err());
    assert!(parse_mechanism(&text, "full.toml").is_ok());
}
