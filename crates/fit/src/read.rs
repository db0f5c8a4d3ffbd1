//! The rate-data CSV reader: temperatures and rate constants with units, optionally per-point
//! uncertainties and pressures.
//!
//! ```text
//! # comment lines start with '#'; blank lines are skipped
//! temperature [K], rate_constant [dm3 mol-1 s-1], uncertainty [factor]
//! 700, 0.011, 1.1
//! 730, 0.035, 1.1
//! ```
//!
//! The first line that is neither blank nor a comment is the header: comma-separated columns
//! `NAME [UNIT]`. `temperature` and `rate_constant` are required; `uncertainty` and `pressure`
//! are optional; the order is free. Each line is one record, split into fields by the `csv`
//! crate (so a field may be quoted; a quoted field cannot span lines). Every problem is
//! reported at once, each at file:line:column with the offending text and what was expected.

use crate::{RateConstantUnit, RateData, RateFitError, RatePoint, UncertaintyKind};
use std::path::Path;
use stoik_mechanism::{nearest_name, Diagnostic, Diagnostics, LoadError, SourceLocation};
use stoik_mechanism::{pressure_to_pa, temperature_to_k, PRESSURE_UNITS, TEMPERATURE_UNITS};

/// Column names accepted in the header.
const COLUMN_NAMES: &[&str] = &["temperature", "rate_constant", "uncertainty", "pressure"];

/// Reads and parses the rate-data CSV at `path`; messages name the path as given.
///
/// Errors: [`RateFitError::Io`] when the file cannot be read, otherwise those of
/// [`parse_rate_data`].
pub fn load_rate_data(path: &Path) -> Result<RateData, RateFitError> {
    let label = path.display().to_string();
    let text =
        stoik_mechanism::read_input_text(path).map_err(|e| match e.into_load_error(&label) {
            LoadError::Invalid { diagnostics } => RateFitError::Invalid { diagnostics },
            LoadError::Io { file, reason } => RateFitError::Io { file, reason },
        })?;
    parse_rate_data(&text, &label)
}

/// Parses rate-data CSV text. `file_label` names the file in messages.
///
/// Temperatures are converted to K, rate constants to SI ((m3/mol)^(m-1)/s), pressures to
/// Pa, and uncertainties to standard uncertainties of ln k (dimensionless).
///
/// Errors: every problem at once as [`RateFitError::Invalid`] (unknown or duplicate column,
/// missing unit or unknown unit, missing required column, wrong field count, unreadable or
/// non-finite number, temperature <= 0 K, rate constant <= 0, uncertainty factor <= 1 or
/// other uncertainty <= 0, pressure <= 0, no data rows).
pub fn parse_rate_data(text: &str, file_label: &str) -> Result<RateData, RateFitError> {
    let mut diagnostics = Diagnostics::default();
    let rows = records(text, file_label, &mut diagnostics);
    let Some((header_row, data_rows)) = rows.split_first() else {
        diagnostics.push(
            // Located where the header should start (the file is empty or only comments).
            Diagnostic::error(
                file_label,
                Some(SourceLocation { line: 1, column: 1 }),
                "no header line and no data",
            )
            .with_help("the first line should be e.g. `temperature [K], rate_constant [s-1]`"),
        );
        return Err(RateFitError::Invalid { diagnostics });
    };
    let header = read_header(header_row, file_label, &mut diagnostics);
    let points: Vec<RatePoint> = data_rows
        .iter()
        .filter_map(|row| read_row(row, &header, file_label, &mut diagnostics))
        .collect();
    if points.is_empty() && !diagnostics.has_errors() {
        diagnostics.push(error_at(
            file_label,
            header.line,
            1,
            "no data rows after the header",
        ));
    }
    match header.rate_unit {
        Some(rate_constant_unit) if !diagnostics.has_errors() => Ok(RateData {
            source: file_label.to_string(),
            rate_constant_unit,
            uncertainty: header.uncertainty,
            points,
        }),
        _ => Err(RateFitError::Invalid { diagnostics }),
    }
}

/// An error at `line`:`column` (both 1-based) of `file`.
fn error_at(file: &str, line: usize, column: usize, message: impl Into<String>) -> Diagnostic {
    Diagnostic::error(file, Some(SourceLocation { line, column }), message)
}

// ---------------------------------------------------------------------------------------
// Records and fields.

/// One field of a record: its trimmed text and the 1-based character column where it starts.
struct Field {
    column: usize,
    text: String,
}

/// One record (a line that is neither blank nor a comment): its 1-based line and its fields.
struct Row {
    line: usize,
    fields: Vec<Field>,
}

/// The records of `text`, in file order; a leading byte-order mark is dropped.
fn records(text: &str, file: &str, diagnostics: &mut Diagnostics) -> Vec<Row> {
    let text = text.strip_prefix('\u{feff}').unwrap_or(text);
    let mut rows = Vec::new();
    let mut splitter = LineSplitter::new();
    for (index, line) in text.lines().enumerate() {
        let trimmed = line.trim();
        if trimmed.is_empty() || trimmed.starts_with('#') {
            continue;
        }
        match splitter.split(line) {
            Ok(fields) => rows.push(Row {
                line: index + 1,
                fields,
            }),
            Err(message) => diagnostics.push(error_at(file, index + 1, 1, message)),
        }
    }
    rows
}

/// Splits lines into fields with `csv-core` (the parser under the `csv` crate), one line at a
/// time so that every field keeps its line; the parser is built once per file (building one
/// per line took most of the time on large files).
struct LineSplitter {
    reader: csv_core::Reader,
    output: Vec<u8>,
    ends: Vec<usize>,
}

impl LineSplitter {
    fn new() -> Self {
        LineSplitter {
            reader: csv_core::ReaderBuilder::new().build(),
            output: Vec::new(),
            ends: Vec::new(),
        }
    }

    /// The fields of `line`, each with its column.
    fn split(&mut self, line: &str) -> Result<Vec<Field>, String> {
        use csv_core::ReadRecordResult;
        self.reader.reset();
        // A record's unescaped text is never longer than the line, and it has at most one
        // field more than the line has bytes.
        self.output.resize(line.len() + 1, 0);
        self.ends.resize(line.len() + 2, 0);
        let mut input = line.as_bytes();
        let (mut out_at, mut ends_at) = (0, 0);
        loop {
            let (result, read, written, ended) = self.reader.read_record(
                input,
                &mut self.output[out_at..],
                &mut self.ends[ends_at..],
            );
            input = &input[read..];
            out_at += written;
            ends_at += ended;
            match result {
                // The line is all given: an empty call ends the record.
                ReadRecordResult::InputEmpty => continue,
                ReadRecordResult::Record | ReadRecordResult::End => break,
                ReadRecordResult::OutputFull | ReadRecordResult::OutputEndsFull => {
                    return Err("the line is not readable as comma-separated values".to_string())
                }
            }
        }
        let mut start = 0;
        let mut contents = Vec::with_capacity(ends_at);
        for &end in &self.ends[..ends_at] {
            let bytes = self.output.get(start..end).unwrap_or_default();
            contents.push(String::from_utf8_lossy(bytes).into_owned());
            start = end;
        }
        Ok(located_fields(line, &csv::StringRecord::from(contents)))
    }
}

/// The fields of `record` (read from `line`), trimmed, each with the character column where
/// its text starts in `line`. A quoted field occupies its content, two quotes and one more
/// character per doubled quote.
fn located_fields(line: &str, record: &csv::StringRecord) -> Vec<Field> {
    let mut raw_start = 0;
    record
        .iter()
        .map(|content| {
            let quoted = line.get(raw_start..).is_some_and(|r| r.starts_with('"'));
            let lead = content.len() - content.trim_start().len();
            let text_start = raw_start + usize::from(quoted) + lead;
            let column = line.get(..text_start).map_or(1, |s| s.chars().count() + 1);
            let raw_len = if quoted {
                content.len() + 2 + content.matches('"').count()
            } else {
                content.len()
            };
            raw_start += raw_len + 1;
            Field {
                column,
                text: content.trim().to_string(),
            }
        })
        .collect()
}

// ---------------------------------------------------------------------------------------
// The header.

#[derive(Clone, Copy, PartialEq)]
enum Column {
    Temperature,
    RateConstant,
    Uncertainty,
    Pressure,
}

impl Column {
    fn from_name(name: &str) -> Option<Self> {
        match name {
            "temperature" => Some(Column::Temperature),
            "rate_constant" => Some(Column::RateConstant),
            "uncertainty" => Some(Column::Uncertainty),
            "pressure" => Some(Column::Pressure),
            _ => None,
        }
    }

    /// A header field for this column, shown in messages.
    fn example(self) -> &'static str {
        match self {
            Column::Temperature => "temperature [K]",
            Column::RateConstant => "rate_constant [cm3 mol-1 s-1]",
            Column::Uncertainty => "uncertainty [factor]",
            Column::Pressure => "pressure [Torr]",
        }
    }
}

/// What the header says about the columns.
struct Header {
    /// 1-based line of the header.
    line: usize,
    /// Per field: the column, or `None` when the field is unusable (already reported).
    columns: Vec<Option<Column>>,
    temperature_unit: String,
    rate_unit: Option<RateConstantUnit>,
    uncertainty: Option<UncertaintyKind>,
    pressure_unit: String,
}

/// Reads the header row; problems go to `diagnostics`.
fn read_header(row: &Row, file: &str, diagnostics: &mut Diagnostics) -> Header {
    let mut header = Header {
        line: row.line,
        columns: Vec::new(),
        temperature_unit: String::new(),
        rate_unit: None,
        uncertainty: None,
        pressure_unit: String::new(),
    };
    let mut seen: Vec<Column> = Vec::new();
    let mut uncertainty_unit: Option<(usize, String)> = None;
    for field in &row.fields {
        let column = match name_column(field, &mut seen, file, row.line) {
            Ok((kind, unit)) => match header.set_unit(kind, &unit) {
                Ok(()) => {
                    if kind == Column::Uncertainty {
                        uncertainty_unit = Some((field.column, unit));
                    }
                    Some(kind)
                }
                Err(problem) => {
                    diagnostics.push(problem_at(file, row.line, field.column, problem));
                    None
                }
            },
            Err(d) => {
                diagnostics.push(d);
                None
            }
        };
        header.columns.push(column);
    }
    if let Some((column, unit)) = uncertainty_unit {
        match uncertainty_kind(&unit, header.rate_unit.as_ref()) {
            Ok(kind) => header.uncertainty = Some(kind),
            Err(problem) => {
                diagnostics.push(problem_at(file, row.line, column, problem));
                for slot in &mut header.columns {
                    if *slot == Some(Column::Uncertainty) {
                        *slot = None;
                    }
                }
            }
        }
    }
    require_columns(&seen, file, row.line, diagnostics);
    header
}

/// The column a header field at `line` names and its unit: unknown, repeated or unit-less
/// columns are refused. Records the column in `seen`.
fn name_column(
    field: &Field,
    seen: &mut Vec<Column>,
    file: &str,
    line: usize,
) -> Result<(Column, String), Diagnostic> {
    let at = |message: String| error_at(file, line, field.column, message);
    let (name, unit) = match field.text.split_once('[') {
        Some((name, rest)) => (name.trim(), rest.strip_suffix(']').map(str::trim)),
        None => (field.text.as_str(), None),
    };
    let Some(kind) = Column::from_name(name) else {
        let d = at(format!(
            "unknown column `{name}`: expected one of {}",
            COLUMN_NAMES.join(", ")
        ));
        return Err(match nearest_name(name, COLUMN_NAMES.iter().copied()) {
            Some(near) => d.with_help(format!("did you mean `{near}`?")),
            None => d,
        });
    };
    if seen.contains(&kind) {
        return Err(at(format!("column `{name}` appears twice")));
    }
    seen.push(kind);
    match unit.filter(|u| !u.is_empty()) {
        Some(unit) => Ok((kind, unit.to_string())),
        None => Err(at(format!(
            "column `{name}` has no unit: expected `NAME [UNIT]`, e.g. `{}`",
            kind.example()
        ))),
    }
}

/// A message and an optional help text.
type Problem = (String, Option<String>);

/// `problem` as an error at `line`:`column` of `file`.
fn problem_at(file: &str, line: usize, column: usize, (message, help): Problem) -> Diagnostic {
    let d = error_at(file, line, column, message);
    match help {
        Some(help) => d.with_help(help),
        None => d,
    }
}

impl Header {
    /// Checks and records the unit of a column (the uncertainty's is read later, once the
    /// rate constant's is known).
    fn set_unit(&mut self, kind: Column, unit: &str) -> Result<(), Problem> {
        match kind {
            Column::Temperature => {
                self.temperature_unit = unit.to_string();
                if temperature_to_k(1.0, unit).is_none() {
                    return Err((
                        format!("unknown temperature unit `{unit}`"),
                        Some(format!("accepted: {}", TEMPERATURE_UNITS.join(", "))),
                    ));
                }
            }
            Column::RateConstant => match RateConstantUnit::parse(unit) {
                Ok(u) => self.rate_unit = Some(u),
                Err(e) => return Err((e.to_string(), None)),
            },
            Column::Uncertainty => {}
            Column::Pressure => {
                self.pressure_unit = unit.to_string();
                if pressure_to_pa(1.0, unit).is_none() {
                    return Err((
                        format!("unknown pressure unit `{unit}`"),
                        Some(format!("accepted: {}", PRESSURE_UNITS.join(", "))),
                    ));
                }
            }
        }
        Ok(())
    }
}

/// How an uncertainty column with unit `unit` is read; an absolute uncertainty must be of
/// the rate constant's order.
fn uncertainty_kind(
    unit: &str,
    rate_unit: Option<&RateConstantUnit>,
) -> Result<UncertaintyKind, Problem> {
    match unit {
        "factor" => return Ok(UncertaintyKind::Factor),
        "%" => return Ok(UncertaintyKind::Percent),
        _ => {}
    }
    match RateConstantUnit::parse(unit) {
        Ok(u) if rate_unit.map_or(u.order(), RateConstantUnit::order) == u.order() => {
            Ok(UncertaintyKind::Absolute(u))
        }
        Ok(u) => Err((
            format!(
                "uncertainty unit `{unit}` is of order {} but the rate constant's is of order {}",
                u.order(),
                rate_unit.map_or(0, RateConstantUnit::order)
            ),
            None,
        )),
        Err(_) => Err((
            format!("unknown uncertainty unit `{unit}`"),
            Some(
                "accepted: `factor` (k/f to k*f is one standard uncertainty), `%` (relative), or a rate-constant unit (absolute)"
                    .to_string(),
            ),
        )),
    }
}

/// Reports each required column the header lacks.
fn require_columns(seen: &[Column], file: &str, line: usize, diagnostics: &mut Diagnostics) {
    for (kind, name) in [
        (Column::Temperature, "temperature"),
        (Column::RateConstant, "rate_constant"),
    ] {
        if !seen.contains(&kind) {
            diagnostics.push(
                error_at(file, line, 1, format!("the header has no `{name}` column"))
                    .with_help(
                        "the header names the columns with units, e.g. `temperature [K], rate_constant [cm3 mol-1 s-1]`",
                    ),
            );
        }
    }
}

// ---------------------------------------------------------------------------------------
// Data rows.

/// A data row being read.
struct RowReader<'h> {
    header: &'h Header,
    point: RatePoint,
    /// The rate constant in the file's unit.
    raw_k: f64,
    /// The uncertainty cell: column, text and value, converted once the row is read.
    raw_uncertainty: Option<(usize, String, f64)>,
}

/// Reads one data row; `None` (with the problems in `diagnostics`) when it is unusable.
fn read_row(
    row: &Row,
    header: &Header,
    file: &str,
    diagnostics: &mut Diagnostics,
) -> Option<RatePoint> {
    if row.fields.len() != header.columns.len() {
        diagnostics.push(error_at(
            file,
            row.line,
            1,
            format!(
                "{} field(s) but the header has {} column(s)",
                row.fields.len(),
                header.columns.len()
            ),
        ));
        return None;
    }
    let mut reader = RowReader {
        header,
        point: RatePoint {
            temperature_k: f64::NAN,
            rate_constant_si: f64::NAN,
            ln_uncertainty: None,
            pressure_pa: None,
            line: row.line,
        },
        raw_k: f64::NAN,
        raw_uncertainty: None,
    };
    let mut row_ok = true;
    for (field, kind) in row.fields.iter().zip(&header.columns) {
        let Some(kind) = kind else { continue };
        if let Err(message) = reader.read_cell(*kind, field) {
            diagnostics.push(error_at(file, row.line, field.column, message));
            row_ok = false;
        }
    }
    if let Err((column, message)) = reader.convert_uncertainty() {
        diagnostics.push(error_at(file, row.line, column, message));
        row_ok = false;
    }
    row_ok.then_some(reader.point)
}

/// The value of a cell: a finite number.
fn finite_number(text: &str) -> Result<f64, String> {
    match text.parse::<f64>() {
        Ok(v) if v.is_finite() => Ok(v),
        _ => Err(format!("`{text}` is not a finite number")),
    }
}

impl RowReader<'_> {
    /// Reads the cell of column `kind`, converting to SI.
    fn read_cell(&mut self, kind: Column, field: &Field) -> Result<(), String> {
        let text = &field.text;
        let value = finite_number(text)?;
        match kind {
            Column::Temperature => {
                let unit = &self.header.temperature_unit;
                let t = temperature_to_k(value, unit).unwrap_or(f64::NAN);
                if t.is_nan() || t <= 0.0 {
                    return Err(format!("temperature `{text}` {unit} is not above 0 K"));
                }
                let (low, high) = crate::fit::DATA_TEMPERATURE_RANGE_K;
                if !(t >= low && t <= high) {
                    return Err(format!(
                        "temperature `{text}` {unit} is outside {low} K to {high:e} K, the range of measured rate constants stoik fits"
                    ));
                }
                self.point.temperature_k = t;
            }
            Column::RateConstant => {
                if value <= 0.0 {
                    return Err(format!(
                        "rate constant `{text}` is not positive: expected k > 0 (its logarithm is fitted)"
                    ));
                }
                self.raw_k = value;
                if let Some(u) = &self.header.rate_unit {
                    let si = value * u.to_si_factor();
                    if !(si > 0.0 && si.is_finite()) {
                        return Err(format!(
                            "rate constant `{text}` is {} in SI units: beyond the range of a double after the unit conversion",
                            if si > 0.0 { "infinite" } else { "zero" }
                        ));
                    }
                    self.point.rate_constant_si = si;
                }
            }
            Column::Uncertainty => {
                self.raw_uncertainty = Some((field.column, text.clone(), value));
            }
            Column::Pressure => {
                let unit = &self.header.pressure_unit;
                let p = pressure_to_pa(value, unit).unwrap_or(f64::NAN);
                if p.is_nan() || p <= 0.0 {
                    return Err(format!("pressure `{text}` {unit} is not positive"));
                }
                self.point.pressure_pa = Some(p);
            }
        }
        Ok(())
    }

    /// Turns the uncertainty cell into the standard uncertainty of ln k; on failure, the
    /// cell's column and the message.
    fn convert_uncertainty(&mut self) -> Result<(), (usize, String)> {
        let (Some((column, text, value)), Some(kind)) =
            (&self.raw_uncertainty, &self.header.uncertainty)
        else {
            return Ok(());
        };
        let value = *value;
        let sigma = match kind {
            UncertaintyKind::Factor if value > 1.0 => Some(value.ln()),
            UncertaintyKind::Percent if value > 0.0 => Some(value / 100.0),
            UncertaintyKind::Absolute(u) if value > 0.0 => {
                let k_si = self.raw_k
                    * self
                        .header
                        .rate_unit
                        .as_ref()
                        .map_or(f64::NAN, |r| r.to_si_factor());
                Some(value * u.to_si_factor() / k_si)
            }
            _ => None,
        };
        let (low, high) = crate::fit::LN_UNCERTAINTY_RANGE;
        match sigma {
            Some(s) if s.is_finite() && s >= low && s <= high => {
                self.point.ln_uncertainty = Some(s);
                Ok(())
            }
            Some(s) => Err((
                *column,
                format!(
                    "uncertainty `{text}` is a relative uncertainty of k (of ln k) of {s:e}; it must be between {low:e} and {high} (0.0001 % to a factor of e^10)"
                ),
            )),
            None => {
                let expected = if *kind == UncertaintyKind::Factor {
                    "a factor above 1"
                } else {
                    "a positive number"
                };
                Err((
                    *column,
                    format!("uncertainty `{text}` is not valid: expected {expected}"),
                ))
            }
        }
    }
}
