//! Profiles as CSV: one row per output time, units in the header.
//!
//! Numbers are written in the shortest form that reads back as the same `f64` ([`number`]).
//! A non-finite value is never written silently: a mole fraction of a row whose total
//! concentration is not positive is undefined and written as the marker [`UNDEFINED`] (the
//! writer reports those rows so the caller can warn); any other NaN or infinity refuses the
//! whole file with an error naming the column and row.

use std::fmt;
use std::io::{self, Write};
use stoik::mechanism::Mechanism;
use stoik::reactor::Profiles;

/// The cell written for a mole fraction when the row's total concentration is not positive
/// (mole fractions undefined). Rust's and Python's float parsers read it as NaN.
pub const UNDEFINED: &str = "nan";

/// Quotes a CSV field when it holds a comma, quote or line break (species such as `1,3-C4H6`).
fn field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// `value` with the shortest digits that read back as exactly the same `f64` (Rust's
/// `LowerExp`: `0e0`, `6e2`, `1.01325e5`, `-2.5e-7`, `5e-324`), or `None` when it is NaN or
/// infinite.
pub fn number(value: f64) -> Option<String> {
    value.is_finite().then(|| format!("{value:e}"))
}

/// Molar mass of every species in kg/mol, when every species has an elemental composition.
pub fn molar_masses_kg_per_mol(mechanism: &Mechanism) -> Option<Vec<f64>> {
    mechanism
        .species
        .iter()
        .map(|s| {
            s.composition.as_ref().map(|atoms| {
                atoms
                    .iter()
                    .map(|&(e, n)| n * mechanism.elements[e].atomic_weight_kg_per_mol)
                    .sum()
            })
        })
        .collect()
}

/// Why a CSV was not written.
#[derive(Debug)]
pub enum CsvError {
    /// Writing failed.
    Io(io::Error),
    /// A value other than an undefined mole fraction is NaN or infinite.
    NonFinite {
        /// The column's header field.
        column: String,
        /// 1-based data row (the file line is one more, after the header).
        row: usize,
        /// The row's time in s.
        time_s: f64,
        /// The offending value.
        value: f64,
    },
}

impl From<io::Error> for CsvError {
    fn from(e: io::Error) -> Self {
        CsvError::Io(e)
    }
}

impl fmt::Display for CsvError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            CsvError::Io(e) => write!(f, "{e}"),
            CsvError::NonFinite {
                column,
                row,
                time_s,
                value,
            } => write!(
                f,
                "column `{column}`, data row {row} (line {}, t = {time_s:e} s) is {value}; \
                 stoik writes finite numbers only, so no CSV was written",
                row + 1
            ),
        }
    }
}

/// What the caller must tell the user about a written CSV.
#[derive(Debug, Default, PartialEq)]
pub struct CsvNotes {
    /// 1-based data rows whose total concentration is not positive, so that their mole
    /// fractions are undefined and written as [`UNDEFINED`].
    pub undefined_mole_fraction_rows: Vec<usize>,
}

impl CsvNotes {
    /// The warning for the undefined mole fractions of the CSV at `file`, if any.
    pub fn warning(&self, file: &str) -> Option<String> {
        let rows = &self.undefined_mole_fraction_rows;
        let first = rows.first()?;
        Some(format!(
            "warning: {file}: the total concentration is not positive in {} row(s) (first: data row {first}); their mole fractions are undefined and written as `{UNDEFINED}`",
            rows.len()
        ))
    }
}

/// Writes the header and rows: time, every species' concentration (SI mol/m3 divided by
/// `si_per_unit`, labelled `unit_label`), then the temperature, the ideal-gas pressure
/// P = sum(c) R T ([`Profiles::pressure_pa`]), the mass density sum(c_i M_i) when every species
/// has a composition, and every species' mole fraction c_i / sum(c)
/// ([`Profiles::mole_fractions`]).
///
/// Errors: [`CsvError::NonFinite`] for a NaN or infinite value (the caller must discard what
/// was written), [`CsvError::Io`] when writing fails.
pub fn write_profiles(
    out: &mut impl Write,
    mechanism: &Mechanism,
    profiles: &Profiles,
    si_per_unit: f64,
    unit_label: &str,
) -> Result<CsvNotes, CsvError> {
    let masses = molar_masses_kg_per_mol(mechanism);
    let mut header = vec!["time [s]".to_string()];
    header.extend(
        mechanism
            .species
            .iter()
            .map(|s| field(&format!("{} [{unit_label}]", s.name))),
    );
    header.push("temperature [K]".to_string());
    header.push("pressure [Pa]".to_string());
    if masses.is_some() {
        header.push("density [kg/m3]".to_string());
    }
    header.extend(
        mechanism
            .species
            .iter()
            .map(|s| field(&format!("{} [mole fraction]", s.name))),
    );
    writeln!(out, "{}", header.join(","))?;
    let mut notes = CsvNotes::default();
    let mut line = String::new();
    for (i, ((&t, row), &temperature_k)) in profiles
        .times_s
        .iter()
        .zip(&profiles.concentrations_mol_per_m3)
        .zip(&profiles.temperatures_k)
        .enumerate()
    {
        let mut cells: Vec<f64> = Vec::with_capacity(header.len());
        cells.push(t);
        cells.extend(row.iter().map(|c| c / si_per_unit));
        cells.push(temperature_k);
        cells.push(profiles.pressure_pa(i).unwrap_or(f64::NAN));
        if let Some(m) = &masses {
            cells.push(row.iter().zip(m).map(|(c, m)| c * m).sum());
        }
        let fractions = profiles.mole_fractions(i);
        if fractions.is_none() {
            notes.undefined_mole_fraction_rows.push(i + 1);
        }
        line.clear();
        for (k, &value) in cells.iter().enumerate() {
            if k > 0 {
                line.push(',');
            }
            line.push_str(&cell(value, &header[k], i, t)?);
        }
        match &fractions {
            Some(x) => {
                for (k, &value) in x.iter().enumerate() {
                    line.push(',');
                    line.push_str(&cell(value, &header[cells.len() + k], i, t)?);
                }
            }
            None => {
                for _ in &mechanism.species {
                    line.push(',');
                    line.push_str(UNDEFINED);
                }
            }
        }
        writeln!(out, "{line}")?;
    }
    Ok(notes)
}

/// One numeric cell, or the error naming its column and (0-based) row `i`.
fn cell(value: f64, column: &str, i: usize, time_s: f64) -> Result<String, CsvError> {
    number(value).ok_or_else(|| CsvError::NonFinite {
        column: column.to_string(),
        row: i + 1,
        time_s,
        value,
    })
}
