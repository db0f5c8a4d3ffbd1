//! The rate-data CSV: temperatures and rate constants with units, optionally per-point
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
//! are optional; the order is free. Every problem is reported at once, each at
//! file:line:column with the offending text and what was expected.

use crate::FitError;
use std::path::Path;
use stoik_mechanism::{nearest_name, Diagnostic, Diagnostics, SourceLocation};
use stoik_mechanism::{
    pressure_to_pa, temperature_to_k, AmountUnit, EnergyUnit, LengthUnit, RateUnits, TimeUnit,
    PRESSURE_UNITS, TEMPERATURE_UNITS,
};

/// Column names accepted in the header.
pub const COLUMN_NAMES: &[&str] = &["temperature", "rate_constant", "uncertainty", "pressure"];

/// Example rate-constant units, shown in messages.
pub const RATE_CONSTANT_UNIT_EXAMPLES: &str =
    "`s-1`, `cm3 mol-1 s-1`, `cm3 molecule-1 s-1`, `dm3 mol-1 s-1`, `L mol-1 s-1`, `m3 mol-1 s-1`, `cm6 molecule-2 s-1`";

/// Length units of rate-constant concentrations in the data file: the mechanism-file units
/// plus the decimetre (`L` is dm3).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DataLengthUnit {
    /// Centimetre.
    Cm,
    /// Decimetre (1 L = 1 dm3).
    Dm,
    /// Metre.
    M,
}

impl DataLengthUnit {
    /// Metres per unit length.
    pub fn to_m_factor(self) -> f64 {
        match self {
            DataLengthUnit::Cm => 1e-2,
            DataLengthUnit::Dm => 1e-1,
            DataLengthUnit::M => 1.0,
        }
    }
}

/// The unit of a rate constant of overall order m: (length^3/amount)^(m-1) / time.
#[derive(Debug, Clone, PartialEq)]
pub struct RateConstantUnit {
    /// The unit as written in the file, e.g. `dm3 mol-1 s-1`.
    pub label: String,
    /// Overall reaction order m (0, 1, 2, 3, ...).
    pub order: u32,
    /// Amount unit of the concentrations (mol when the order is 1).
    pub amount: AmountUnit,
    /// Length unit of the concentrations (cm when the order is 1).
    pub length: DataLengthUnit,
    /// Time unit.
    pub time: TimeUnit,
}

impl RateConstantUnit {
    /// SI value of one unit: (m3/mol)^(m-1)/s per (length^3/amount)^(m-1)/time.
    pub fn to_si_factor(&self) -> f64 {
        let l = self.length.to_m_factor();
        let concentration = self.amount.to_mol_factor() / (l * l * l);
        concentration.powi(1 - self.order as i32) / self.time.to_s_factor()
    }

    /// The mechanism-file units closest to this unit: same amount and time; cm for dm.
    pub fn mechanism_units(&self, activation_energy: EnergyUnit) -> RateUnits {
        RateUnits {
            amount: self.amount,
            length: match self.length {
                DataLengthUnit::M => LengthUnit::M,
                DataLengthUnit::Cm | DataLengthUnit::Dm => LengthUnit::Cm,
            },
            time: self.time,
            activation_energy,
        }
    }

    /// Parses a unit such as `cm3 molecule-1 s-1`: whitespace-separated factors
    /// `BASE[EXPONENT]` with BASE one of cm, dm, m, L (= dm3), mol, molecule, s, ms, min, h.
    pub fn parse(text: &str) -> Result<Self, String> {
        let bad = |why: &str| {
            format!(
                "`{text}` is not a rate-constant unit ({why}): expected (volume/amount)^(m-1)/time, e.g. {RATE_CONSTANT_UNIT_EXAMPLES}"
            )
        };
        let mut length: Option<(DataLengthUnit, i32)> = None;
        let mut amount: Option<(AmountUnit, i32)> = None;
        let mut time: Option<(TimeUnit, i32)> = None;
        if text.trim().is_empty() {
            return Err(bad("empty"));
        }
        for token in text.split_whitespace() {
            let split = token
                .find(|c: char| c.is_ascii_digit() || c == '-' || c == '+')
                .unwrap_or(token.len());
            let (base, exp_text) = token.split_at(split);
            let exponent: i32 = if exp_text.is_empty() {
                1
            } else {
                exp_text
                    .parse()
                    .map_err(|_| bad(&format!("`{exp_text}` is not an integer exponent")))?
            };
            let (kind, unit_exponent) = match base {
                "cm" => (0, (Some(DataLengthUnit::Cm), None, None, exponent)),
                "dm" => (0, (Some(DataLengthUnit::Dm), None, None, exponent)),
                "m" => (0, (Some(DataLengthUnit::M), None, None, exponent)),
                "L" | "l" => (0, (Some(DataLengthUnit::Dm), None, None, 3 * exponent)),
                _ => {
                    if let Some(a) = AmountUnit::parse(base) {
                        (1, (None, Some(a), None, exponent))
                    } else if let Some(t) = TimeUnit::parse(base) {
                        (2, (None, None, Some(t), exponent))
                    } else {
                        return Err(bad(&format!("unknown unit `{base}`")));
                    }
                }
            };
            let (l, a, t, e) = unit_exponent;
            let clash = || bad(&format!("`{token}` mixes units of one kind"));
            match kind {
                0 => {
                    let l = l.unwrap_or(DataLengthUnit::Cm);
                    match &mut length {
                        Some((unit, sum)) if *unit == l => *sum += e,
                        Some(_) => return Err(clash()),
                        None => length = Some((l, e)),
                    }
                }
                1 => {
                    let a = a.unwrap_or(AmountUnit::Mol);
                    match &mut amount {
                        Some((unit, sum)) if *unit == a => *sum += e,
                        Some(_) => return Err(clash()),
                        None => amount = Some((a, e)),
                    }
                }
                _ => {
                    let t = t.unwrap_or(TimeUnit::S);
                    match &mut time {
                        Some((unit, sum)) if *unit == t => *sum += e,
                        Some(_) => return Err(clash()),
                        None => time = Some((t, e)),
                    }
                }
            }
        }
        let (time_unit, time_exp) = time.ok_or_else(|| bad("no time unit"))?;
        if time_exp != -1 {
            return Err(bad("time must appear as `s-1` (or ms-1, min-1, h-1)"));
        }
        let amount_exp = amount.map_or(0, |(_, e)| e);
        let length_exp = length.map_or(0, |(_, e)| e);
        if length_exp != -3 * amount_exp || amount_exp > 1 {
            return Err(bad("volume and amount powers do not match"));
        }
        Ok(RateConstantUnit {
            label: text.split_whitespace().collect::<Vec<_>>().join(" "),
            order: (1 - amount_exp) as u32,
            amount: amount.map_or(AmountUnit::Mol, |(a, _)| a),
            length: length.map_or(DataLengthUnit::Cm, |(l, _)| l),
            time: time_unit,
        })
    }
}

/// How the `uncertainty` column is to be read.
#[derive(Debug, Clone, PartialEq)]
pub enum UncertaintyKind {
    /// A multiplicative factor f > 1: the standard uncertainty of ln k is ln f.
    Factor,
    /// A relative uncertainty in percent: the standard uncertainty of ln k is value/100.
    Percent,
    /// An absolute standard uncertainty of k in the given unit (same order as k): the
    /// standard uncertainty of ln k is u/k (first-order propagation).
    Absolute(RateConstantUnit),
}

/// One measured rate constant.
#[derive(Debug, Clone, PartialEq)]
pub struct RatePoint {
    /// Temperature in K.
    pub temperature_k: f64,
    /// Rate constant in SI, (m3/mol)^(m-1)/s.
    pub rate_constant_si: f64,
    /// Standard uncertainty of ln k (dimensionless), when the file has an `uncertainty`
    /// column.
    pub ln_uncertainty: Option<f64>,
    /// Pressure in Pa, when the file has a `pressure` column.
    pub pressure_pa: Option<f64>,
    /// 1-based line of the row in the file.
    pub line: usize,
}

/// A data set read from a rate-data CSV.
#[derive(Debug, Clone, PartialEq)]
pub struct RateData {
    /// The file as the user named it (or a label such as `<string>`).
    pub source: String,
    /// Unit of the `rate_constant` column (gives the reaction order).
    pub rate_constant_unit: RateConstantUnit,
    /// How the `uncertainty` column is read, if there is one.
    pub uncertainty: Option<UncertaintyKind>,
    /// The rows, in file order.
    pub points: Vec<RatePoint>,
}

impl RateData {
    /// Overall reaction order m from the rate-constant unit.
    pub fn order(&self) -> u32 {
        self.rate_constant_unit.order
    }

    /// Lowest and highest temperature in K (NaN, NaN without points).
    pub fn temperature_range_k(&self) -> (f64, f64) {
        self.points
            .iter()
            .fold((f64::NAN, f64::NAN), |(lo, hi), p| {
                (lo.min(p.temperature_k), hi.max(p.temperature_k))
            })
    }
}

/// Reads and parses the rate-data CSV at `path`; messages name the path as given.
pub fn load_rate_data(path: &Path) -> Result<RateData, FitError> {
    let label = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| FitError::Io {
        file: label.clone(),
        reason: e.to_string(),
    })?;
    parse_rate_data(&text, &label)
}

#[derive(Clone, Copy, PartialEq)]
enum Column {
    Temperature,
    RateConstant,
    Uncertainty,
    Pressure,
}

/// Splits a line into comma-separated fields with the 1-based character column at which each
/// field's (trimmed) text starts.
fn fields(line: &str) -> Vec<(usize, &str)> {
    let mut out = Vec::new();
    let mut start_byte = 0;
    let mut pieces: Vec<(usize, &str)> = Vec::new();
    for (i, c) in line.char_indices() {
        if c == ',' {
            pieces.push((start_byte, &line[start_byte..i]));
            start_byte = i + 1;
        }
    }
    pieces.push((start_byte, &line[start_byte..]));
    for (byte, piece) in pieces {
        let lead = piece.len() - piece.trim_start().len();
        let column = line[..byte + lead].chars().count() + 1;
        out.push((column, piece.trim()));
    }
    out
}

/// Parses rate-data CSV text. `file_label` names the file in messages.
///
/// Errors: every problem at once as [`FitError::Invalid`] (unknown or duplicate column,
/// missing unit or unknown unit, missing required column, wrong field count, unreadable or
/// non-finite number, temperature <= 0 K, rate constant <= 0, uncertainty factor <= 1 or
/// other uncertainty <= 0, pressure <= 0, no data rows).
pub fn parse_rate_data(text: &str, file_label: &str) -> Result<RateData, FitError> {
    let mut diagnostics = Diagnostics::default();
    let at = |line: usize, column: usize| Some(SourceLocation { line, column });
    let mut lines = text
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l))
        .filter(|(_, l)| {
            let t = l.trim();
            !t.is_empty() && !t.starts_with('#')
        });
    let Some((header_line, header)) = lines
        .next()
        .map(|(n, l)| (n, l.trim_start_matches('\u{feff}')))
    else {
        diagnostics.push(
            Diagnostic::error(file_label, None, "no header line and no data")
                .with_help("the first line should be e.g. `temperature [K], rate_constant [s-1]`"),
        );
        return Err(FitError::Invalid { diagnostics });
    };

    // Header.
    let mut columns: Vec<Option<Column>> = Vec::new();
    let mut temperature_unit = String::new();
    let mut rate_unit: Option<RateConstantUnit> = None;
    let mut uncertainty: Option<UncertaintyKind> = None;
    let mut uncertainty_text: Option<(usize, String)> = None;
    let mut pressure_unit = String::new();
    let mut seen: Vec<Column> = Vec::new();
    for (column, field) in fields(header) {
        let (name, unit) = match field.split_once('[') {
            Some((name, rest)) => {
                let unit = rest.strip_suffix(']').map(str::trim);
                (name.trim(), unit)
            }
            None => (field, None),
        };
        let kind = match name {
            "temperature" => Some(Column::Temperature),
            "rate_constant" => Some(Column::RateConstant),
            "uncertainty" => Some(Column::Uncertainty),
            "pressure" => Some(Column::Pressure),
            _ => None,
        };
        let Some(kind) = kind else {
            let mut d = Diagnostic::error(
                file_label,
                at(header_line, column),
                format!(
                    "unknown column `{name}`: expected one of {}",
                    COLUMN_NAMES.join(", ")
                ),
            );
            if let Some(near) = nearest_name(name, COLUMN_NAMES.iter().copied()) {
                d = d.with_help(format!("did you mean `{near}`?"));
            }
            diagnostics.push(d);
            columns.push(None);
            continue;
        };
        if seen.contains(&kind) {
            diagnostics.push(Diagnostic::error(
                file_label,
                at(header_line, column),
                format!("column `{name}` appears twice"),
            ));
            columns.push(None);
            continue;
        }
        seen.push(kind);
        let example = match kind {
            Column::Temperature => "temperature [K]",
            Column::RateConstant => "rate_constant [cm3 mol-1 s-1]",
            Column::Uncertainty => "uncertainty [factor]",
            Column::Pressure => "pressure [Torr]",
        };
        let Some(unit) = unit.filter(|u| !u.is_empty()) else {
            diagnostics.push(Diagnostic::error(
                file_label,
                at(header_line, column),
                format!("column `{name}` has no unit: expected `NAME [UNIT]`, e.g. `{example}`"),
            ));
            columns.push(None);
            continue;
        };
        let mut ok = true;
        match kind {
            Column::Temperature => {
                if temperature_to_k(1.0, unit).is_none() {
                    diagnostics.push(
                        Diagnostic::error(
                            file_label,
                            at(header_line, column),
                            format!("unknown temperature unit `{unit}`"),
                        )
                        .with_help(format!("accepted: {}", TEMPERATURE_UNITS.join(", "))),
                    );
                    ok = false;
                }
                temperature_unit = unit.to_string();
            }
            Column::RateConstant => match RateConstantUnit::parse(unit) {
                Ok(u) => rate_unit = Some(u),
                Err(message) => {
                    diagnostics.push(Diagnostic::error(
                        file_label,
                        at(header_line, column),
                        message,
                    ));
                    ok = false;
                }
            },
            Column::Uncertainty => uncertainty_text = Some((column, unit.to_string())),
            Column::Pressure => {
                if pressure_to_pa(1.0, unit).is_none() {
                    diagnostics.push(
                        Diagnostic::error(
                            file_label,
                            at(header_line, column),
                            format!("unknown pressure unit `{unit}`"),
                        )
                        .with_help(format!("accepted: {}", PRESSURE_UNITS.join(", "))),
                    );
                    ok = false;
                }
                pressure_unit = unit.to_string();
            }
        }
        columns.push(if ok { Some(kind) } else { None });
    }
    if let Some((column, unit)) = &uncertainty_text {
        uncertainty = match unit.as_str() {
            "factor" => Some(UncertaintyKind::Factor),
            "%" => Some(UncertaintyKind::Percent),
            other => match RateConstantUnit::parse(other) {
                Ok(u) if rate_unit.as_ref().map(|r| r.order).unwrap_or(u.order) == u.order => {
                    Some(UncertaintyKind::Absolute(u))
                }
                Ok(u) => {
                    diagnostics.push(Diagnostic::error(
                        file_label,
                        at(header_line, *column),
                        format!(
                            "uncertainty unit `{other}` is of order {} but the rate constant's is of order {}",
                            u.order,
                            rate_unit.as_ref().map_or(0, |r| r.order)
                        ),
                    ));
                    None
                }
                Err(_) => {
                    diagnostics.push(
                        Diagnostic::error(
                            file_label,
                            at(header_line, *column),
                            format!("unknown uncertainty unit `{other}`"),
                        )
                        .with_help(
                            "accepted: `factor` (k/f to k*f is one standard uncertainty), `%` (relative), or a rate-constant unit (absolute)",
                        ),
                    );
                    None
                }
            },
        };
        if uncertainty.is_none() {
            if let Some(slot) = columns
                .iter_mut()
                .find(|c| **c == Some(Column::Uncertainty))
            {
                *slot = None;
            }
        }
    }
    for (kind, name) in [
        (Column::Temperature, "temperature"),
        (Column::RateConstant, "rate_constant"),
    ] {
        if !seen.contains(&kind) {
            diagnostics.push(
                Diagnostic::error(
                    file_label,
                    at(header_line, 1),
                    format!("the header has no `{name}` column"),
                )
                .with_help(
                    "the header names the columns with units, e.g. `temperature [K], rate_constant [cm3 mol-1 s-1]`",
                ),
            );
        }
    }

    // Rows.
    let mut points = Vec::new();
    for (line, row) in lines {
        let values = fields(row);
        if values.len() != columns.len() {
            diagnostics.push(Diagnostic::error(
                file_label,
                at(line, 1),
                format!(
                    "{} field(s) but the header has {} column(s)",
                    values.len(),
                    columns.len()
                ),
            ));
            continue;
        }
        let mut point = RatePoint {
            temperature_k: f64::NAN,
            rate_constant_si: f64::NAN,
            ln_uncertainty: None,
            pressure_pa: None,
            line,
        };
        let mut raw_k = f64::NAN;
        let mut raw_u: Option<(usize, &str, f64)> = None;
        let mut row_ok = true;
        for (&(column, text), kind) in values.iter().zip(&columns) {
            let Some(kind) = kind else { continue };
            let value = match text.parse::<f64>() {
                Ok(v) if v.is_finite() => v,
                _ => {
                    diagnostics.push(Diagnostic::error(
                        file_label,
                        at(line, column),
                        format!("`{text}` is not a finite number"),
                    ));
                    row_ok = false;
                    continue;
                }
            };
            let mut complain = |what: String| {
                diagnostics.push(Diagnostic::error(file_label, at(line, column), what));
            };
            match kind {
                Column::Temperature => {
                    let t = temperature_to_k(value, &temperature_unit).unwrap_or(f64::NAN);
                    if t > 0.0 {
                        point.temperature_k = t;
                    } else {
                        complain(format!(
                            "temperature `{text}` {temperature_unit} is not above 0 K"
                        ));
                        row_ok = false;
                    }
                }
                Column::RateConstant => {
                    if value > 0.0 {
                        raw_k = value;
                        if let Some(u) = &rate_unit {
                            point.rate_constant_si = value * u.to_si_factor();
                        }
                    } else {
                        complain(format!(
                            "rate constant `{text}` is not positive: expected k > 0 (its logarithm is fitted)"
                        ));
                        row_ok = false;
                    }
                }
                Column::Uncertainty => raw_u = Some((column, text, value)),
                Column::Pressure => {
                    let p = pressure_to_pa(value, &pressure_unit).unwrap_or(f64::NAN);
                    if p > 0.0 {
                        point.pressure_pa = Some(p);
                    } else {
                        complain(format!("pressure `{text}` {pressure_unit} is not positive"));
                        row_ok = false;
                    }
                }
            }
        }
        if let (Some((column, text, value)), Some(kind)) = (raw_u, &uncertainty) {
            let sigma = match kind {
                UncertaintyKind::Factor if value > 1.0 => Some(value.ln()),
                UncertaintyKind::Percent if value > 0.0 => Some(value / 100.0),
                UncertaintyKind::Absolute(u) if value > 0.0 => {
                    let k_si = raw_k * rate_unit.as_ref().map_or(f64::NAN, |r| r.to_si_factor());
                    Some(value * u.to_si_factor() / k_si)
                }
                _ => None,
            };
            match sigma {
                Some(s) => point.ln_uncertainty = Some(s),
                None => {
                    let expected = if *kind == UncertaintyKind::Factor {
                        "a factor above 1"
                    } else {
                        "a positive number"
                    };
                    diagnostics.push(Diagnostic::error(
                        file_label,
                        at(line, column),
                        format!("uncertainty `{text}` is not valid: expected {expected}"),
                    ));
                    row_ok = false;
                }
            }
        }
        if row_ok {
            points.push(point);
        }
    }
    if points.is_empty() && !diagnostics.has_errors() {
        diagnostics.push(Diagnostic::error(
            file_label,
            at(header_line, 1),
            "no data rows after the header",
        ));
    }
    match rate_unit {
        Some(rate_constant_unit) if !diagnostics.has_errors() => Ok(RateData {
            source: file_label.to_string(),
            rate_constant_unit,
            uncertainty,
            points,
        }),
        _ => Err(FitError::Invalid { diagnostics }),
    }
}

pub use stoik_mechanism::COLLISION_LIMIT_M3_PER_MOL_S;
