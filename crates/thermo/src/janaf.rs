//! Reader for NIST-JANAF thermochemical tables stored as tab-separated text.
//!
//! Source of the layout: M. W. Chase Jr., *NIST-JANAF Thermochemical Tables*, 4th ed.,
//! J. Phys. Chem. Ref. Data Monograph 9 (1998): one title line (species name, then
//! formula and phase), one header line, then one row per temperature with the columns
//! T (K), Cp, S, -[G - H(298.15)]/T (J/(mol K)), H - H(298.15), formation enthalpy,
//! formation Gibbs energy (kJ/mol) and log10 Kf. Cells reading `INFINITE`, `+inf`,
//! `inf` or `-inf` are infinite.

use crate::{FitError, ThermoPoint, T_REFERENCE_K};

/// One row of a JANAF table, converted to SI (J, mol, K). Cells JANAF prints as
/// infinite are `f64::INFINITY` (or its negative).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct JanafRow {
    /// Temperature, K.
    pub t_k: f64,
    /// Heat capacity at constant pressure, J/(mol K).
    pub cp_j_per_mol_k: f64,
    /// Standard entropy (at 1e5 Pa), J/(mol K).
    pub s_j_per_mol_k: f64,
    /// Gibbs energy function -[G - H(298.15 K)]/T, J/(mol K).
    pub minus_g_minus_h298_over_t_j_per_mol_k: f64,
    /// H - H(298.15 K), J/mol.
    pub h_minus_h298_j_per_mol: f64,
    /// Standard formation enthalpy at T, J/mol.
    pub formation_enthalpy_j_per_mol: f64,
    /// Standard formation Gibbs energy at T, J/mol.
    pub formation_gibbs_j_per_mol: f64,
    /// log10 of the formation equilibrium constant Kf (pressures in bar), dimensionless.
    pub log10_kf: f64,
}

/// A parsed JANAF table.
#[derive(Debug, Clone, PartialEq)]
pub struct JanafTable {
    /// Species name from the title line, e.g. `Water (H2O)`.
    pub name: String,
    /// Formula and phase from the title line, e.g. `H2O1(g)` (empty if absent).
    pub formula: String,
    /// Rows in file order.
    pub rows: Vec<JanafRow>,
    /// Standard formation enthalpy at 298.15 K, J/mol (from the 298.15 K row).
    pub h298_formation_j_per_mol: f64,
    /// Standard entropy at 298.15 K, J/(mol K) (from the 298.15 K row).
    pub s298_j_per_mol_k: f64,
}

impl JanafTable {
    /// The row at temperature `t_k` (K) within 1e-6 K, if present.
    pub fn row_at(&self, t_k: f64) -> Option<&JanafRow> {
        self.rows.iter().find(|r| (r.t_k - t_k).abs() <= 1e-6)
    }

    /// Fitting points (T, Cp, H - H(298.15), S) for rows with
    /// `t_low_k <= T <= t_high_k` (K) and T > 0; rows with a non-finite Cp, S or
    /// H - H(298.15) are left out.
    pub fn points(&self, t_low_k: f64, t_high_k: f64) -> Vec<ThermoPoint> {
        self.rows
            .iter()
            .filter(|r| r.t_k > 0.0 && r.t_k >= t_low_k && r.t_k <= t_high_k)
            .filter(|r| {
                r.cp_j_per_mol_k.is_finite()
                    && r.s_j_per_mol_k.is_finite()
                    && r.h_minus_h298_j_per_mol.is_finite()
            })
            .map(|r| ThermoPoint {
                t_k: r.t_k,
                cp_j_per_mol_k: r.cp_j_per_mol_k,
                h_minus_h298_j_per_mol: r.h_minus_h298_j_per_mol,
                s_j_per_mol_k: r.s_j_per_mol_k,
            })
            .collect()
    }

    /// Lowest and highest tabulated temperatures above 0 K, in K (`None` if there are
    /// no such rows).
    pub fn temperature_span_k(&self) -> Option<(f64, f64)> {
        let ts = self.rows.iter().map(|r| r.t_k).filter(|&t| t > 0.0);
        let lo = ts.clone().fold(f64::INFINITY, f64::min);
        let hi = ts.fold(f64::NEG_INFINITY, f64::max);
        (lo.is_finite() && hi.is_finite()).then_some((lo, hi))
    }
}

/// Parses a JANAF table stored as tab-separated text (cells may also be separated by
/// runs of spaces). Blank lines are ignored. Energies in kJ/mol are converted to J/mol.
///
/// # Errors
/// [`FitError::Parse`] for a missing title or header line, a row without 8 cells, an
/// unreadable number or a non-finite temperature; [`FitError::MissingReferenceRow`]
/// when there is no 298.15 K row or its formation enthalpy or entropy is not finite.
pub fn read_janaf_tsv(text: &str) -> Result<JanafTable, FitError> {
    // (line number, raw line, trimmed line); columns count characters of the raw line.
    let mut lines = text
        .lines()
        .enumerate()
        .map(|(i, l)| (i + 1, l, l.trim()))
        .filter(|(_, _, l)| !l.is_empty());
    let parse = |line: usize, column: usize, message: String| FitError::Parse {
        line,
        column,
        message,
    };
    let (title_line, _, title) = lines
        .next()
        .ok_or_else(|| parse(1, 1, "empty text (expected a title line)".into()))?;
    let mut title_parts = title.split('\t').map(str::trim);
    let name = title_parts.next().unwrap_or_default().to_string();
    let formula = title_parts.next().unwrap_or_default().to_string();

    let (header_line, header_raw, header) = lines
        .next()
        .ok_or_else(|| parse(title_line + 1, 1, "missing header line".into()))?;
    if !header.starts_with("T(K)") {
        return Err(parse(
            header_line,
            column_of(header_raw, header),
            format!("expected a header line starting with \"T(K)\", found \"{header}\""),
        ));
    }

    let mut rows = Vec::new();
    let mut reference: Option<(usize, usize, usize)> = None;
    for (line, raw, text) in lines {
        let cells: Vec<&str> = if text.contains('\t') {
            text.split('\t').map(str::trim).collect()
        } else {
            text.split_whitespace().collect()
        };
        if cells.len() != 8 {
            // Where the ninth cell starts, or just after the last cell when one is missing.
            let column = match cells.get(8) {
                Some(extra) => column_of(raw, extra),
                None => column_of(raw, text) + text.chars().count(),
            };
            return Err(parse(
                line,
                column,
                format!("expected 8 cells, found {}", cells.len()),
            ));
        }
        let mut v = [0.0f64; 8];
        for (k, cell) in cells.iter().enumerate() {
            v[k] = parse_cell(cell).ok_or_else(|| {
                parse(
                    line,
                    column_of(raw, cell),
                    format!("cannot read number \"{cell}\" in column {}", k + 1),
                )
            })?;
        }
        if !v[0].is_finite() {
            return Err(parse(
                line,
                column_of(raw, cells[0]),
                "temperature is not finite".into(),
            ));
        }
        if reference.is_none() && (v[0] - T_REFERENCE_K).abs() <= 1e-6 {
            reference = Some((line, column_of(raw, cells[2]), column_of(raw, cells[5])));
        }
        rows.push(JanafRow {
            t_k: v[0],
            cp_j_per_mol_k: v[1],
            s_j_per_mol_k: v[2],
            minus_g_minus_h298_over_t_j_per_mol_k: v[3],
            h_minus_h298_j_per_mol: v[4] * 1e3,
            formation_enthalpy_j_per_mol: v[5] * 1e3,
            formation_gibbs_j_per_mol: v[6] * 1e3,
            log10_kf: v[7],
        });
    }
    let missing = |line, column, message: &str| FitError::MissingReferenceRow {
        line,
        column,
        message: message.to_string(),
    };
    let Some((line, s_column, h_column)) = reference else {
        return Err(missing(
            header_line,
            column_of(header_raw, header),
            "the table has no row at 298.15 K (needed for the formation enthalpy and S298)",
        ));
    };
    let row = rows
        .iter()
        .find(|r| (r.t_k - T_REFERENCE_K).abs() <= 1e-6)
        .ok_or_else(|| missing(line, 1, "the 298.15 K row was not kept"))?;
    if !row.s_j_per_mol_k.is_finite() {
        return Err(missing(
            line,
            s_column,
            "the entropy of the 298.15 K row is not finite",
        ));
    }
    if !row.formation_enthalpy_j_per_mol.is_finite() {
        return Err(missing(
            line,
            h_column,
            "the formation enthalpy of the 298.15 K row is not finite (kJ/mol beyond the range of f64)",
        ));
    }
    Ok(JanafTable {
        name,
        formula,
        h298_formation_j_per_mol: row.formation_enthalpy_j_per_mol,
        s298_j_per_mol_k: row.s_j_per_mol_k,
        rows,
    })
}

/// The 1-based column, in characters, where `part` (a slice of `raw`) starts in `raw`.
fn column_of(raw: &str, part: &str) -> usize {
    let offset = (part.as_ptr() as usize)
        .saturating_sub(raw.as_ptr() as usize)
        .min(raw.len());
    raw.get(..offset).map_or(offset, |p| p.chars().count()) + 1
}

fn parse_cell(cell: &str) -> Option<f64> {
    match cell.to_ascii_lowercase().as_str() {
        "infinite" | "+infinite" | "inf" | "+inf" => Some(f64::INFINITY),
        "-infinite" | "-inf" => Some(f64::NEG_INFINITY),
        s => s.parse::<f64>().ok().filter(|v| v.is_finite()),
    }
}
