//! Writing fitted polynomials as a stoik thermo file (`stoik_thermo = 1`), the format read
//! by `stoik_mechanism::parse_thermo`, and the TOML number form shared by stoik's writers.

use crate::{FitError, Nasa7Fit, T_REFERENCE_K};
use std::fmt::Write as _;

/// Magnitudes from this bound (inclusive) up to [`PLAIN_DECIMAL_BELOW`] are written as plain
/// decimals by [`toml_float`]; others in exponent form.
pub const PLAIN_DECIMAL_FROM: f64 = 1e-3;
/// Magnitudes below this bound (and from [`PLAIN_DECIMAL_FROM`]) are written as plain
/// decimals by [`toml_float`]; others in exponent form.
pub const PLAIN_DECIMAL_BELOW: f64 = 1e6;

/// `value` as a TOML float that reads back as exactly the same `f64`, or `None` when `value` is
/// NaN or infinite (stoik never writes those; its readers refuse them).
///
/// The digits are the shortest that round-trip (Rust's `Display`/`LowerExp` of `f64`). Zero
/// and magnitudes in [1e-3, 1e6) are plain decimals with a decimal point (`0.0`, `-0.0`,
/// `200.0`, `0.0020364`, `-30293.72`); others use a decimal exponent (`1.0790630449316e15`,
/// `-3.03e-12`, `5e-324`). Both are TOML floats (TOML 1.0, "Float").
pub fn toml_float(value: f64) -> Option<String> {
    if !value.is_finite() {
        return None;
    }
    let magnitude = value.abs();
    Some(
        if magnitude == 0.0 || (PLAIN_DECIMAL_FROM..PLAIN_DECIMAL_BELOW).contains(&magnitude) {
            let text = format!("{value}");
            if text.contains('.') {
                text
            } else {
                text + ".0"
            }
        } else {
            format!("{value:e}")
        },
    )
}

/// `value` as a TOML string, quoted and escaped by the `toml` crate's serializer.
pub fn toml_string(value: &str) -> String {
    toml::Value::String(value.to_string()).to_string()
}

/// `text` made safe for one TOML comment line: line breaks and other control characters
/// (which TOML forbids in comments or which would end the comment) become spaces.
pub fn toml_comment_text(text: &str) -> String {
    text.chars()
        .map(|c| if c.is_control() { ' ' } else { c })
        .collect()
}

/// The file header: format version and `source_lines` as comments (cite the data source).
pub fn thermo_file_header(source_lines: &[&str]) -> String {
    let mut text = String::from("# Thermochemical data for stoik (format: stoik_thermo = 1).\n");
    for line in source_lines {
        text.push_str("# ");
        text.push_str(&toml_comment_text(line));
        text.push('\n');
    }
    text.push_str("\nstoik_thermo = 1\n");
    text
}

/// One `[[species]]` entry for `name` with the fit's residuals and continuity as comments;
/// `origin` says where the table came from (one comment line).
///
/// The temperatures (K) and coefficients are written by [`toml_float`], so a reader gets back
/// the fitted `f64` values bit for bit.
///
/// Errors: [`FitError::NonFiniteOutput`] when a temperature or coefficient of the fit is NaN or
/// infinite (nothing is written; the message names the key and position).
pub fn thermo_file_entry(name: &str, origin: &str, fit: &Nasa7Fit) -> Result<String, FitError> {
    let p = &fit.polynomial;
    let list = |key: &str, values: &[f64]| -> Result<String, FitError> {
        values
            .iter()
            .enumerate()
            .map(|(i, &v)| {
                toml_float(v).ok_or_else(|| FitError::NonFiniteOutput {
                    what: format!(
                        "species `{name}`: `{key}` entry {} is {v}; a thermo file holds finite numbers only",
                        i + 1
                    ),
                })
            })
            .collect::<Result<Vec<_>, _>>()
            .map(|v| format!("{key} = [{}]", v.join(", ")))
    };
    let ranges = list("temperature_ranges_k", &[p.t_low_k, p.t_mid_k, p.t_high_k])?;
    let low = list("coefficients_low", &p.low)?;
    let high = list("coefficients_high", &p.high)?;
    let (j_cp, j_h, j_s) = fit.continuity;
    let mut t = String::new();
    // Writing into a String cannot fail.
    let _ = writeln!(t);
    let _ = writeln!(
        t,
        "# {}: {}",
        toml_comment_text(name),
        toml_comment_text(origin)
    );
    // The residual comments are for people: a short form.
    let _ = writeln!(
        t,
        "# fit over {} points: cp max rel. error {:.2e} (rms {:.2e}); S max rel. error {:.2e} (rms {:.2e}); \
         H max abs. error {:.1} J/mol (rms {:.1} J/mol)",
        fit.n_points,
        fit.max_relative_error_cp,
        fit.rms_relative_error_cp,
        fit.max_relative_error_s,
        fit.rms_relative_error_s,
        fit.max_abs_error_h_j_per_mol,
        fit.rms_abs_error_h_j_per_mol
    );
    let _ = writeln!(
        t,
        "# jumps at {} K: cp/R {:.1e}, H/(RT) {:.1e}, S/R {:.1e}; H(298.15 K) = {:.1} J/mol",
        p.t_mid_k,
        j_cp,
        j_h,
        j_s,
        p.enthalpy_j_per_mol(T_REFERENCE_K)
    );
    let _ = writeln!(t, "[[species]]");
    let _ = writeln!(t, "name = {}", toml_string(name));
    let _ = writeln!(t, "{ranges}");
    let _ = writeln!(t, "{low}");
    let _ = writeln!(t, "{high}");
    Ok(t)
}
