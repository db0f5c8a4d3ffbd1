//! `stoik fit-thermo`: NASA 7-coefficient polynomials fitted to tabulated cp, H - H(298.15 K)
//! and S (NIST-JANAF tab-separated layout), written as a stoik thermo file with residuals.
//! The file's numbers read back as the fitted `f64` values exactly; the printed table is a
//! short form for people.

use crate::error::CliError;
use crate::FitThermoArgs;
use stoik::thermo::{fit_nasa7, read_janaf_tsv, thermo_file_entry, thermo_file_header};

/// Fits every table and writes the thermo file.
pub fn fit_thermo(args: &FitThermoArgs) -> Result<(), CliError> {
    let mut file = thermo_file_header(&[
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
        let at = format!("{}: error: ", path.display());
        let text = std::fs::read_to_string(path).map_err(|e| CliError::fit(&at, e))?;
        let table = read_janaf_tsv(&text).map_err(|e| CliError::fit(&at, e))?;
        let (lo, hi) = table
            .temperature_span_k()
            .ok_or_else(|| CliError::fit(&at, "no rows above 0 K"))?;
        let points = table.points(args.low_k.max(lo), args.high_k.min(hi));
        let fit = fit_nasa7(
            &points,
            args.common_temperature_k,
            table.h298_formation_j_per_mol,
            None,
        )
        .map_err(|e| CliError::fit(format!("{at}cannot fit: "), e))?;
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
        let entry = thermo_file_entry(&name, &origin, &fit)
            .map_err(|e| CliError::fit(&at, format!("{e}; nothing written")))?;
        file.push_str(&entry);
    }
    crate::out_file::write_text(&args.output, &file)
        .map_err(|e| CliError::write(&args.output, e))?;
    println!("wrote {}", args.output.display());
    Ok(())
}
