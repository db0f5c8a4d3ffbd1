//! `stoik fit-thermo`: NASA 7-coefficient polynomials fitted to tabulated cp, H - H(298.15 K)
//! and S (NIST-JANAF tab-separated layout), written as a stoik thermo file with residuals.
//! The file's numbers read back as the fitted `f64` values exactly; the printed table is a
//! short form for people.

use crate::{FitThermoArgs, EXIT_BAD_INPUT, EXIT_OK};
use stoik::thermo::{fit_nasa7, read_janaf_tsv, thermo_file_entry, thermo_file_header};

/// Fits every table and writes the thermo file; returns the exit status.
pub fn fit_thermo(args: &FitThermoArgs) -> u8 {
    let mut text = thermo_file_header(&[
        "Fitted by `stoik fit-thermo` (7-coefficient polynomials, McBride, Gordon & Reno 1993 form;",
        "cp, d cp/dT, H and S continuous at the common temperature; H(298.15 K) = the table's formation enthalpy).",
        "Cite the source of the tables here.",
    ]);
    println!(
        "{:<10} {:>8} {:>8} {:>8} {:>6} {:>12} {:>12} {:>12}",
        "species",
        "T_low/K",
        "T_mid/K",
        "T_high/K",
        "points",
        "max|dcp|/cp",
        "max|dS|/S",
        "max|dH|/Jmol"
    );
    for path in &args.tables {
        let stem = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default();
        let name = args
            .rename
            .iter()
            .find_map(|r| {
                r.split_once('=')
                    .filter(|(from, _)| *from == stem)
                    .map(|(_, to)| to.to_string())
            })
            .unwrap_or_else(|| stem.clone());
        let table = match std::fs::read_to_string(path)
            .map_err(|e| e.to_string())
            .and_then(|t| read_janaf_tsv(&t).map_err(|e| e.to_string()))
        {
            Ok(t) => t,
            Err(e) => {
                eprintln!("{}: error: {e}", path.display());
                return EXIT_BAD_INPUT;
            }
        };
        let Some((lo, hi)) = table.temperature_span_k() else {
            eprintln!("{}: error: no rows above 0 K", path.display());
            return EXIT_BAD_INPUT;
        };
        let points = table.points(args.low_k.max(lo), args.high_k.min(hi));
        let fit = match fit_nasa7(
            &points,
            args.common_temperature_k,
            table.h298_formation_j_per_mol,
            None,
        ) {
            Ok(f) => f,
            Err(e) => {
                eprintln!("{}: error: cannot fit: {e}", path.display());
                return EXIT_BAD_INPUT;
            }
        };
        let p = &fit.polynomial;
        println!(
            "{:<10} {:>8.1} {:>8.1} {:>8.1} {:>6} {:>12.2e} {:>12.2e} {:>12.1}",
            name,
            p.t_low_k,
            p.t_mid_k,
            p.t_high_k,
            fit.n_points,
            fit.max_relative_error_cp,
            fit.max_relative_error_s,
            fit.max_abs_error_h_j_per_mol
        );
        let origin = format!(
            "table {} ({} {})",
            path.display(),
            table.name,
            table.formula
        );
        match thermo_file_entry(&name, &origin, &fit) {
            Ok(entry) => text.push_str(&entry),
            Err(e) => {
                eprintln!("{}: error: {e}; nothing written", path.display());
                return EXIT_BAD_INPUT;
            }
        }
    }
    if let Err(e) = crate::out_file::write_text(&args.output, &text) {
        eprintln!("error: cannot write {}: {e}", args.output.display());
        return EXIT_BAD_INPUT;
    }
    println!("wrote {}", args.output.display());
    EXIT_OK
}
