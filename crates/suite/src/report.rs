//! Reports of a verification: a terminal table for people, JUnit XML for CI systems (one
//! test case per observable) and a Markdown summary for a pull-request comment. Failures
//! come first in each.

use crate::file::short;
use crate::regress::{ObservableResult, Status, Verdict, Verification};
use std::fmt::Write as _;

fn or_dash(x: Option<f64>) -> String {
    x.map_or_else(|| "-".to_string(), short)
}

fn change(o: &ObservableResult) -> String {
    o.relative_change()
        .map_or_else(|| "-".to_string(), |r| format!("{:+.3e}", r))
}

fn factor(o: &ObservableResult) -> String {
    o.factor()
        .map_or_else(|| "-".to_string(), |f| format!("{f:.6}"))
}

/// The observables sorted with the failures first (moved, errors, not recorded, passed,
/// skipped), suite order within each group.
pub fn sorted_observables(v: &Verification) -> Vec<&ObservableResult> {
    let mut all: Vec<&ObservableResult> = v.observables().collect();
    all.sort_by_key(|o| o.status.rank());
    all
}

/// A count line: how many observables passed, moved, errored, were new or skipped.
pub fn summary_line(v: &Verification) -> String {
    let count = |f: &dyn Fn(&Status) -> bool| v.observables().filter(|o| f(&o.status)).count();
    format!(
        "{} observable(s): {} within tolerance, {} moved, {} error(s), {} not in the baseline, {} skipped",
        v.observables().count(),
        count(&|s| *s == Status::Pass),
        count(&|s| *s == Status::Moved),
        count(&|s| matches!(s, Status::Error(_))),
        count(&|s| *s == Status::NotRecorded),
        count(&|s| *s == Status::Skipped),
    )
}

/// The terminal report: one row per observable (status, case, observable, baseline, new
/// value, relative change, factor, tolerance, unit), failures first; then the errors in
/// words, the validation against measured values, and the count line.
pub fn terminal_report(v: &Verification) -> String {
    let header = [
        "status",
        "case",
        "observable",
        "baseline",
        "new",
        "change",
        "factor",
        "tolerance",
        "unit",
    ];
    let rows: Vec<[String; 9]> = sorted_observables(v)
        .into_iter()
        .map(|o| {
            [
                o.status.label().to_string(),
                o.case.clone(),
                o.name.clone(),
                or_dash(o.baseline),
                or_dash(o.new),
                change(o),
                factor(o),
                o.tolerance.to_string(),
                o.unit.to_string(),
            ]
        })
        .collect();
    let mut widths = header.map(str::len);
    for row in &rows {
        for (w, cell) in widths.iter_mut().zip(row) {
            *w = (*w).max(cell.chars().count());
        }
    }
    let mut out = String::new();
    let line = |cells: &[String], out: &mut String| {
        let text: Vec<String> = cells
            .iter()
            .zip(widths)
            .map(|(c, w)| format!("{c:<w$}"))
            .collect();
        let _ = writeln!(out, "{}", text.join("  ").trim_end());
    };
    line(&header.map(String::from), &mut out);
    for row in &rows {
        line(row, &mut out);
    }
    let mut errors: Vec<String> = v
        .cases
        .iter()
        .filter_map(|c| c.error.as_ref().map(|e| format!("case `{}`: {e}", c.name)))
        .collect();
    errors.extend(v.observables().filter_map(|o| {
        match &o.status {
            Status::Error(e)
                if !v
                    .cases
                    .iter()
                    .any(|c| c.name == o.case && c.error.is_some()) =>
            {
                Some(format!("case `{}`, observable `{}`: {e}", o.case, o.name))
            }
            _ => None,
        }
    }));
    for e in errors {
        let _ = writeln!(out, "error: {e}");
    }
    let validated: Vec<&ObservableResult> =
        v.observables().filter(|o| o.measured.is_some()).collect();
    if !validated.is_empty() {
        let _ = writeln!(
            out,
            "validation against measured values (not part of the verdict):"
        );
        for o in validated {
            if let (Some(m), Some(agrees)) = (o.measured, o.agrees_with_measurement()) {
                let _ = writeln!(
                    out,
                    "  {} / {}: computed {} {}, measured {} +- {}: {}",
                    o.case,
                    o.name,
                    or_dash(o.new),
                    o.unit,
                    short(m.value),
                    short(m.uncertainty),
                    if agrees { "agrees" } else { "DISAGREES" }
                );
            }
        }
    }
    let _ = writeln!(out, "{}", summary_line(v));
    out
}

/// Text escaped for XML attribute values and character data.
fn xml_escape(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for ch in text.chars() {
        match ch {
            '&' => out.push_str("&amp;"),
            '<' => out.push_str("&lt;"),
            '>' => out.push_str("&gt;"),
            '"' => out.push_str("&quot;"),
            '\'' => out.push_str("&apos;"),
            // Characters XML 1.0 does not allow are replaced.
            c if (c as u32) < 0x20 && !matches!(c, '\t' | '\n' | '\r') => out.push('\u{fffd}'),
            c => out.push(c),
        }
    }
    out
}

/// The verification as JUnit XML: `<testsuites>` with one `<testsuite>` per case and one
/// `<testcase>` per observable (`<failure type="moved">` for a move, `<error>` for no value,
/// `<skipped/>` for a skipped case). Laid out by the Apache Ant JUnit schema as published
/// by Windy Road (`JUnit.xsd`, github.com/windyroad/JUnit-Schema, Apache License 2.0):
/// every required attribute (`package`, `id`, `name`, `timestamp` without zone, `hostname`,
/// `tests`, `failures`, `errors`, `time`), and `properties`, `system-out` and `system-err`
/// in every suite. `timestamp` is the run's date (`YYYY-MM-DDTHH:MM:SS`, UTC).
pub fn junit_xml(v: &Verification, timestamp_utc: &str) -> String {
    let stamp: String = timestamp_utc.chars().take(19).collect();
    let package = v.title.clone().unwrap_or_else(|| v.suite.clone());
    let mut out = String::from("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n<testsuites>\n");
    for (id, case) in v.cases.iter().enumerate() {
        let failures = case
            .observables
            .iter()
            .filter(|o| o.status == Status::Moved)
            .count();
        let errors = case
            .observables
            .iter()
            .filter(|o| matches!(o.status, Status::Error(_) | Status::NotRecorded))
            .count();
        let skipped = case
            .observables
            .iter()
            .filter(|o| o.status == Status::Skipped)
            .count();
        let _ = writeln!(
            out,
            "  <testsuite package=\"{}\" id=\"{id}\" name=\"{}\" timestamp=\"{stamp}\" hostname=\"localhost\" tests=\"{}\" failures=\"{failures}\" errors=\"{errors}\" skipped=\"{skipped}\" time=\"{:.3}\">",
            xml_escape(&package),
            xml_escape(&case.name),
            case.observables.len(),
            case.seconds
        );
        out.push_str("    <properties>\n");
        for input in &case.changed_inputs {
            let _ = writeln!(
                out,
                "      <property name=\"changed-{}\" value=\"{}\"/>",
                input.role.label(),
                xml_escape(&input.path)
            );
        }
        out.push_str("    </properties>\n");
        for o in &case.observables {
            let _ = write!(
                out,
                "    <testcase name=\"{}\" classname=\"{}\" time=\"0\"",
                xml_escape(&o.name),
                xml_escape(&case.name)
            );
            let detail = format!(
                "baseline {} {unit}, new {} {unit}, change {}, factor {}, tolerance {}",
                or_dash(o.baseline),
                or_dash(o.new),
                change(o),
                factor(o),
                o.tolerance,
                unit = o.unit
            );
            match &o.status {
                Status::Pass => out.push_str("/>\n"),
                Status::Skipped => out.push_str(">\n      <skipped/>\n    </testcase>\n"),
                Status::Moved => {
                    let _ = write!(
                        out,
                        ">\n      <failure type=\"moved\" message=\"moved beyond tolerance: {}\">{}</failure>\n    </testcase>\n",
                        xml_escape(&detail),
                        xml_escape(&detail)
                    );
                }
                Status::Error(e) => {
                    let _ = write!(
                        out,
                        ">\n      <error type=\"no-value\" message=\"{}\">{}</error>\n    </testcase>\n",
                        xml_escape(e),
                        xml_escape(e)
                    );
                }
                Status::NotRecorded => {
                    out.push_str(">\n      <error type=\"not-recorded\" message=\"the baseline holds no value for this observable\"></error>\n    </testcase>\n");
                }
            }
        }
        let _ = writeln!(out, "    <system-out></system-out>");
        let _ = writeln!(
            out,
            "    <system-err>{}</system-err>",
            xml_escape(case.error.as_deref().unwrap_or(""))
        );
        out.push_str("  </testsuite>\n");
    }
    out.push_str("</testsuites>\n");
    out
}

/// Text safe in a Markdown table cell.
fn md_cell(text: &str) -> String {
    text.replace('|', "\\|").replace('\n', " ")
}

/// A Markdown summary for a pull-request comment: the verdict, a table of the observables
/// that did not pass (moved first), the errors, and the count line.
pub fn markdown_summary(v: &Verification) -> String {
    let mut out = String::new();
    let title = v.title.clone().unwrap_or_else(|| v.suite.clone());
    let verdict = match v.verdict() {
        Verdict::AllWithin => "every observable within tolerance",
        Verdict::Moved => "observables moved beyond tolerance",
        Verdict::Errors => "some observables gave no value",
    };
    let _ = writeln!(out, "### stoik suite: {}\n", md_cell(&title));
    let _ = writeln!(
        out,
        "**{verdict}** (baseline recorded {})\n",
        v.baseline_recorded_utc
    );
    let not_passed: Vec<&ObservableResult> = sorted_observables(v)
        .into_iter()
        .filter(|o| !matches!(o.status, Status::Pass | Status::Skipped))
        .collect();
    if !not_passed.is_empty() {
        out.push_str(
            "| status | case | observable | baseline | new | change | factor | tolerance |\n",
        );
        out.push_str("|---|---|---|---:|---:|---:|---:|---|\n");
        for o in not_passed {
            let _ = writeln!(
                out,
                "| {} | {} | {} | {} | {} | {} | {} | {} |",
                o.status.label(),
                md_cell(&o.case),
                md_cell(&o.name),
                or_dash(o.baseline).to_string() + " " + o.unit,
                or_dash(o.new).to_string() + " " + o.unit,
                change(o),
                factor(o),
                o.tolerance
            );
        }
        out.push('\n');
        for o in v.observables() {
            if let Status::Error(e) = &o.status {
                let _ = writeln!(
                    out,
                    "- `{}` / `{}`: {}",
                    md_cell(&o.case),
                    md_cell(&o.name),
                    md_cell(e)
                );
            }
        }
    }
    let _ = writeln!(out, "\n{}", summary_line(v));
    out
}
