//! Writing fitted polynomials as a stoik thermo file (`stoik_thermo = 1`), the format read
//! by `stoik_mechanism::parse_thermo`.

use crate::{Nasa7Fit, T_REFERENCE_K};
use std::fmt::Write as _;

/// A float that TOML reads back exactly: Rust's shortest round-trip form, which always has
/// a decimal point or an exponent (`200.0`, `-3.03e-12`).
fn float(v: f64) -> String {
    format!("{v:?}")
}

fn list(a: &[f64; 7]) -> String {
    a.iter().map(|&v| float(v)).collect::<Vec<_>>().join(", ")
}

/// The file header: format version and `source_lines` as comments (cite the data source).
pub fn thermo_file_header(source_lines: &[&str]) -> String {
    let mut text = String::from("# Thermochemical data for stoik (format: stoik_thermo = 1).\n");
    for line in source_lines {
        text.push_str("# ");
        text.push_str(line);
        text.push('\n');
    }
    text.push_str("\nstoik_thermo = 1\n");
    text
}

/// One `[[species]]` entry for `name` with the fit's residuals and continuity as comments;
/// `origin` says where the table came from (one comment line).
pub fn thermo_file_entry(name: &str, origin: &str, fit: &Nasa7Fit) -> String {
    let p = &fit.polynomial;
    let (j_cp, j_h, j_s) = fit.continuity;
    let mut t = String::new();
    // Writing into a String cannot fail.
    let _ = writeln!(t);
    let _ = writeln!(t, "# {name}: {origin}");
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
    let _ = writeln!(t, "name = \"{name}\"");
    let _ = writeln!(
        t,
        "temperature_ranges_k = [{}, {}, {}]",
        float(p.t_low_k),
        float(p.t_mid_k),
        float(p.t_high_k)
    );
    let _ = writeln!(t, "coefficients_low = [{}]", list(&p.low));
    let _ = writeln!(t, "coefficients_high = [{}]", list(&p.high));
    t
}
