//! `stoik fit-thermo`: NASA 7-coefficient polynomials fitted to tabulated cp, H - H(298.15 K)
//! and S (NIST-JANAF tab-separated layout), written as a stoik thermo file with residuals.
//! The file's numbers read back as the fitted `f64` values exactly; the printed table is a
//! short form for people.

use crate::error::CliError;
use crate::out_file::OutputPaths;
use crate::FitThermoArgs;
use stoik::mechanism::{read_input_text, InputError};
use stoik::thermo::{fit_nasa7, read_janaf_tsv, thermo_file_entry, thermo_file_header};

/// Checks that a temperature flag is a finite number of kelvin above 0.
fn temperature_flag(flag: &str, value: f64) -> Result<(), CliError> {
    if value.is_finite() && value > 0.0 {
        Ok(())
    } else {
        Err(CliError::BadFlag(format!(
            "{flag}: must be a finite temperature above 0 K, got {value}"
        )))
    }
}

/// Checks the temperature flags: each finite and positive, `--low-k` below `--high-k` and the
/// common temperature between them.
fn check_flags(args: &FitThermoArgs) -> Result<(), CliError> {
    temperature_flag("--low-k", args.low_k)?;
    temperature_flag("--high-k", args.high_k)?;
    temperature_flag("--common-temperature-k", args.common_temperature_k)?;
    if args.low_k >= args.high_k {
        return Err(CliError::BadFlag(format!(
            "--low-k ({} K) must be below --high-k ({} K)",
            args.low_k, args.high_k
        )));
    }
    if !(args.low_k < args.common_temperature_k && args.common_temperature_k < args.high_k) {
        return Err(CliError::BadFlag(format!(
            "--common-temperature-k ({} K) must lie between --low-k ({} K) and --high-k ({} K)",
            args.common_temperature_k, args.low_k, args.high_k
        )));
    }
    Ok(())
}

/// The species name of every table (its file stem, or the `--rename` given for that stem).
///
/// Errors: a `--rename` without `=`, or two tables that would give one species name (two
/// tables of one stem, two renames to one name, a rename onto another table's name); the
/// message names both tables.
fn species_names(args: &FitThermoArgs) -> Result<Vec<String>, CliError> {
    let mut renames = Vec::new();
    for r in &args.rename {
        let Some((from, to)) = r.split_once('=') else {
            return Err(CliError::BadFlag(format!(
                "--rename {r:?}: expected FILESTEM=NAME, e.g. Ar=AR"
            )));
        };
        renames.push((from, to));
    }
    let mut names: Vec<String> = Vec::new();
    for (i, path) in args.tables.iter().enumerate() {
        let stem = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_default();
        let name = renames
            .iter()
            .find(|(from, _)| *from == stem)
            .map_or_else(|| stem.clone(), |(_, to)| to.to_string());
        if let Some(j) = names.iter().position(|n| *n == name) {
            return Err(CliError::BadFlag(format!(
                "tables {} and {} both give species {name:?}; one thermo file holds each species once (use --rename FILESTEM=NAME)",
                args.tables[j].display(),
                args.tables[i].display()
            )));
        }
        names.push(name);
    }
    Ok(names)
}

/// Fits every table and writes the thermo file.
pub fn fit_thermo(args: &FitThermoArgs) -> Result<(), CliError> {
    check_flags(args)?;
    let names = species_names(args)?;
    let mut outputs = OutputPaths::new();
    for table in &args.tables {
        outputs.input(table);
    }
    outputs.output("-o/--output", &args.output)?;
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
    for (path, name) in args.tables.iter().zip(names) {
        let at = format!("{}: error: ", path.display());
        let text = read_input_text(path).map_err(|e| match e {
            InputError::InvalidUtf8 { .. } => CliError::fit(format!("{}:", path.display()), e),
            _ => CliError::fit(&at, e),
        })?;
        let table = read_janaf_tsv(&text).map_err(|e| CliError::fit(&at, e))?;
        // Conclusions about the whole table (too few rows, a range not covered) are located
        // where the table ends: its last non-empty line.
        let last_line = text
            .lines()
            .enumerate()
            .filter(|(_, l)| !l.trim().is_empty())
            .last()
            .map_or(1, |(i, _)| i + 1);
        let at_end = format!("{}:{last_line}:1: error: ", path.display());
        let (lo, hi) = table
            .temperature_span_k()
            .ok_or_else(|| CliError::fit(&at_end, "no rows above 0 K"))?;
        let points = table.points(args.low_k.max(lo), args.high_k.min(hi));
        let fit = fit_nasa7(
            &points,
            args.common_temperature_k,
            table.h298_formation_j_per_mol,
            None,
        )
        .map_err(|e| {
            CliError::fit(
                format!(
                    "{at_end}cannot fit with --low-k {} K, --common-temperature-k {} K, --high-k {} K (the table ends here): ",
                    args.low_k, args.common_temperature_k, args.high_k
                ),
                e,
            )
        })?;
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
