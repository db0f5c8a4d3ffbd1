//! Helpers for walking a span-preserving TOML tree by hand and collecting located problems.
//!
//! Shared by stoik's file readers: the mechanism and thermo files here, the scenario file in
//! `stoik-scenario`. Every format is read with `toml::de::DeTable::parse`, which keeps the
//! byte span of every key and value; [`Report`] turns spans into 1-based line:column (columns
//! counted in characters) and gathers every diagnostic of a file so that all are reported at
//! once.

use crate::suggest::nearest_name;
use crate::{Diagnostic, Diagnostics, LoadError, Severity, SourceLocation};
use toml::de::{DeTable, DeValue};
use toml::Spanned;

/// A spanned TOML value.
pub type Value<'i> = Spanned<DeValue<'i>>;

/// Collects the diagnostics of one file and locates byte offsets in it.
pub struct Report<'t> {
    text: &'t str,
    file: String,
    line_starts: Vec<usize>,
    diagnostics: Vec<Diagnostic>,
}

impl<'t> Report<'t> {
    /// A report for `text`, whose diagnostics name the file `file`.
    pub fn new(text: &'t str, file: &str) -> Self {
        let mut line_starts = vec![0];
        line_starts.extend(text.match_indices('\n').map(|(i, _)| i + 1));
        Report {
            text,
            file: file.to_string(),
            line_starts,
            diagnostics: Vec::new(),
        }
    }

    /// 1-based line and character column of byte offset `byte`.
    pub fn location(&self, byte: usize) -> SourceLocation {
        let byte = byte.min(self.text.len());
        let line = self.line_starts.partition_point(|&s| s <= byte);
        let start = self.line_starts[line.saturating_sub(1)];
        let column = match self.text.get(start..byte) {
            Some(prefix) => prefix.chars().count() + 1,
            None => byte - start + 1,
        };
        SourceLocation { line, column }
    }

    /// Records an error at byte offset `at`, with an optional help text.
    pub fn error(&mut self, at: usize, message: impl Into<String>, help: Option<String>) {
        self.push(Severity::Error, Some(at), message.into(), help);
    }

    /// Records an error about the whole file (reported at 1:1).
    pub fn file_error(&mut self, message: impl Into<String>, help: Option<String>) {
        self.push(Severity::Error, Some(0), message.into(), help);
    }

    /// Records a warning at byte offset `at`.
    pub fn warning(&mut self, at: usize, message: impl Into<String>, help: Option<String>) {
        self.push(Severity::Warning, Some(at), message.into(), help);
    }

    fn push(
        &mut self,
        severity: Severity,
        at: Option<usize>,
        message: String,
        help: Option<String>,
    ) {
        let location = at.map(|b| self.location(b));
        self.diagnostics.push(Diagnostic {
            severity,
            file: self.file.clone(),
            location,
            message,
            help,
        });
    }

    /// Number of errors recorded so far.
    pub fn error_count(&self) -> usize {
        self.diagnostics
            .iter()
            .filter(|d| d.severity == Severity::Error)
            .count()
    }

    /// The diagnostics in file order (stable for equal locations).
    pub fn finish(mut self) -> Diagnostics {
        self.diagnostics
            .sort_by_key(|d| d.location.map(|l| (l.line, l.column)).unwrap_or((0, 0)));
        Diagnostics(self.diagnostics)
    }

    /// Checks that every key of `table` is one of `allowed`; unknown keys are errors with a
    /// nearest-key suggestion. `context` names the table in messages, e.g. `"[[step]]"`.
    pub fn check_keys(&mut self, table: &DeTable<'_>, allowed: &[&str], context: &str) {
        for (key, _) in table.iter() {
            let name: &str = key.get_ref();
            if allowed.contains(&name) {
                continue;
            }
            let help = match nearest_name(name, allowed.iter().copied()) {
                Some(near) => format!("did you mean `{near}`?"),
                None => format!("allowed keys here: {}", allowed.join(", ")),
            };
            self.error(
                key.span().start,
                format!("unknown key `{name}` in {context}"),
                Some(help),
            );
        }
    }

    /// Checks the format-version key `key` of a file's top table `root`: present, an integer,
    /// equal to `expected`. `what` names the file kind in messages ("mechanism", "suite"...);
    /// `help` goes with a missing key.
    pub fn format_version(
        &mut self,
        root: &DeTable<'_>,
        key: &str,
        what: &str,
        expected: i64,
        help: String,
    ) {
        match root.get(key) {
            None => self.file_error(format!("missing format version `{key}`"), Some(help)),
            Some(v) => match v.get_ref() {
                DeValue::Integer(_) => {
                    let version = value_as_number(v.get_ref());
                    if version != Some(expected as f64) {
                        self.error(
                            v.span().start,
                            format!(
                                "unsupported {what} format version {}; this stoik reads version {expected}",
                                version.map(show_number).unwrap_or_default()
                            ),
                            None,
                        );
                    }
                }
                _ => self.wrong_type(key, v, &format!("the integer {expected}")),
            },
        }
    }

    /// Records a "wrong type" error for `key` whose value `value` is not `expected`.
    pub fn wrong_type(&mut self, key: &str, value: &Value<'_>, expected: &str) {
        self.error(
            value.span().start,
            format!(
                "`{key}` must be {expected}, not {}",
                type_name(value.get_ref())
            ),
            None,
        );
    }

    /// Reads a number (TOML integer or float); a wrong type is recorded and gives `None`.
    pub fn number(&mut self, key: &str, value: &Value<'_>) -> Option<f64> {
        match value_as_number(value.get_ref()) {
            Some(x) => Some(x),
            None => {
                self.wrong_type(key, value, "a number");
                None
            }
        }
    }

    /// Reads a string; a wrong type is recorded and gives `None`.
    pub fn string<'v>(&mut self, key: &str, value: &'v Value<'_>) -> Option<&'v str> {
        match value.get_ref() {
            DeValue::String(s) => Some(s.as_ref()),
            _ => {
                self.wrong_type(key, value, "a string");
                None
            }
        }
    }

    /// Reads a string that must be one of `accepted` and maps it with `parse`; an unknown
    /// word is recorded as "unknown {what} `word`; accepted: ..." with the nearest accepted
    /// word as a suggestion.
    pub fn one_of<T>(
        &mut self,
        key: &str,
        value: &Value<'_>,
        what: &str,
        accepted: &[&str],
        parse: impl Fn(&str) -> Option<T>,
    ) -> Option<T> {
        let text = self.string(key, value)?;
        let parsed = parse(text);
        if parsed.is_none() {
            let help = nearest_name(text, accepted.iter().copied())
                .map(|near| format!("did you mean `{near}`?"));
            self.error(
                value.span().start,
                format!("unknown {what} `{text}`; accepted: {}", accepted.join(", ")),
                help,
            );
        }
        parsed
    }

    /// Reads a boolean; a wrong type is recorded and gives `None`.
    pub fn boolean(&mut self, key: &str, value: &Value<'_>) -> Option<bool> {
        match value.get_ref() {
            DeValue::Boolean(b) => Some(*b),
            _ => {
                self.wrong_type(key, value, "true or false");
                None
            }
        }
    }

    /// Reads a table; a wrong type is recorded and gives `None`.
    pub fn table<'v, 'i>(&mut self, key: &str, value: &'v Value<'i>) -> Option<&'v DeTable<'i>> {
        match value.get_ref() {
            DeValue::Table(t) => Some(t),
            _ => {
                self.wrong_type(key, value, "a table");
                None
            }
        }
    }

    /// Reads a non-negative integer; a wrong type or sign is recorded and gives `None`.
    pub fn count(&mut self, key: &str, value: &Value<'_>) -> Option<u64> {
        if let DeValue::Integer(i) = value.get_ref() {
            if let Ok(n) = u64::from_str_radix(&i.as_str().replace('_', ""), i.radix()) {
                return Some(n);
            }
            self.error(
                value.span().start,
                format!("`{key}` must be a non-negative integer, got {i}"),
                None,
            );
            return None;
        }
        self.wrong_type(key, value, "a non-negative integer");
        None
    }

    /// Byte offset where the content of string value `value` starts in the file, when the
    /// file text of the value is exactly the string between single-line quotes (no escapes),
    /// so that offsets inside the string map one-to-one onto the file.
    pub fn string_content_start(&self, value: &Value<'_>, content: &str) -> Option<usize> {
        let span = value.span();
        let raw = self.text.get(span.clone())?;
        let inner = raw
            .strip_prefix('"')
            .and_then(|r| r.strip_suffix('"'))
            .or_else(|| raw.strip_prefix('\'').and_then(|r| r.strip_suffix('\'')))?;
        (inner == content).then_some(span.start + 1)
    }

    /// Turns the report into the loader's error value.
    pub fn into_error(self) -> LoadError {
        LoadError::Invalid {
            diagnostics: self.finish(),
        }
    }
}

/// The TOML type of `value`, for messages.
pub fn type_name(value: &DeValue<'_>) -> &'static str {
    match value {
        DeValue::String(_) => "a string",
        DeValue::Integer(_) => "an integer",
        DeValue::Float(_) => "a float",
        DeValue::Boolean(_) => "a boolean",
        DeValue::Datetime(_) => "a date-time",
        DeValue::Array(_) => "an array",
        DeValue::Table(_) => "a table",
    }
}

/// A TOML integer or float as `f64` (floats keep `inf` and `nan`), else `None`.
pub fn value_as_number(value: &DeValue<'_>) -> Option<f64> {
    match value {
        DeValue::Integer(i) => {
            let digits = i.as_str().replace('_', "");
            match i128::from_str_radix(&digits, i.radix()) {
                Ok(n) => Some(n as f64),
                // Only digits, too long for i128: still a finite number in decimal.
                Err(_) if i.radix() == 10 => digits.parse().ok(),
                Err(_) => None,
            }
        }
        DeValue::Float(f) => f.as_str().replace('_', "").parse().ok(),
        _ => None,
    }
}

/// Parses `text` as a TOML document; a syntax error is recorded in `report` with its location.
pub fn parse_document<'i>(text: &'i str, report: &mut Report<'_>) -> Option<Spanned<DeTable<'i>>> {
    match DeTable::parse(text) {
        Ok(doc) => Some(doc),
        Err(error) => {
            let at = error.span().map(|s| s.start).unwrap_or(0);
            report.error(at, format!("TOML syntax error: {}", error.message()), None);
            None
        }
    }
}

/// Checks that `x` is finite and positive; returns the problem in words otherwise.
pub fn positive_finite_problem(x: f64) -> Option<&'static str> {
    if x.is_nan() {
        Some("is NaN")
    } else if x.is_infinite() {
        Some("is infinite")
    } else if x <= 0.0 {
        Some(if x == 0.0 { "is zero" } else { "is negative" })
    } else {
        None
    }
}

/// Checks that `x` is finite and not negative; returns the problem in words otherwise.
pub fn non_negative_finite_problem(x: f64) -> Option<&'static str> {
    if x.is_nan() {
        Some("is NaN")
    } else if x.is_infinite() {
        Some("is infinite")
    } else if x < 0.0 {
        Some("is negative")
    } else {
        None
    }
}

/// Formats a number for messages: integers without a decimal point, very large and very
/// small magnitudes (1e15 and above, below 1e-4) in exponent form (`1e308`, `5e-324`), every
/// form with the shortest digits that read back as the same `f64`.
pub fn show_number(x: f64) -> String {
    if x.is_finite() && x == x.trunc() && x.abs() < 1e15 {
        format!("{}", x as i64)
    } else if x.is_finite() && x != 0.0 && (x.abs() >= 1e15 || x.abs() < 1e-4) {
        format!("{x:e}")
    } else {
        format!("{x}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_in_messages_are_short_and_read_back() {
        // Expected strings: the decimal and exponent forms of each value; each reads back as
        // the same f64 (IEEE 754 round trip of Rust's shortest-digit formatting).
        for (x, shown) in [
            (1e308, "1e308"),
            (5e-324, "5e-324"),
            (-1.5e-7, "-1.5e-7"),
            (600.0, "600"),
            (0.25, "0.25"),
            (f64::NAN, "NaN"),
            (f64::INFINITY, "inf"),
        ] {
            assert_eq!(show_number(x), shown);
            let back: f64 = shown.parse().expect("reads back");
            assert!(back == x || (x.is_nan() && back.is_nan()));
        }
    }

    #[test]
    fn locations_count_lines_and_characters() {
        // Hand count: "a\nλx = 1\n": byte 4 is `x`... `λ` is two bytes (bytes 2-3), so `x` is
        // byte 4, line 2, character column 2.
        let report = Report::new("a\nλx = 1\n", "t");
        assert_eq!(report.location(0), SourceLocation { line: 1, column: 1 });
        assert_eq!(report.location(4), SourceLocation { line: 2, column: 2 });
        assert_eq!(report.location(2), SourceLocation { line: 2, column: 1 });
    }
}
