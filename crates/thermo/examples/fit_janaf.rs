//! Fits two-range 7-coefficient polynomials to the NIST-JANAF tables of the
//! hydrogen-oxygen species and writes them as a stoik thermo TOML file.
//!
//! Run: `cargo run -p stoik-thermo --example fit_janaf -- <janaf dir> <output .toml>`

use std::path::PathBuf;
use std::process::ExitCode;

use stoik_thermo::{fit_nasa7, read_janaf_tsv, thermo_file_entry, thermo_file_header};

/// (JANAF file stem, species name used in stoik mechanisms).
const SPECIES: [(&str, &str); 9] = [
    ("H2", "H2"),
    ("O2", "O2"),
    ("H2O", "H2O"),
    ("OH", "OH"),
    ("H", "H"),
    ("O", "O"),
    ("HO2", "HO2"),
    ("N2", "N2"),
    ("Ar", "AR"),
];

/// Requested temperature ranges, K: low limit, common temperature, high limit.
const T_LOW_K: f64 = 200.0;
const T_MID_K: f64 = 1000.0;
const T_HIGH_K: f64 = 6000.0;

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    if args.len() != 2 {
        eprintln!("usage: fit_janaf <directory with JANAF .tsv files> <output .toml>");
        return ExitCode::from(2);
    }
    match run(&PathBuf::from(&args[0]), &PathBuf::from(&args[1])) {
        Ok(()) => ExitCode::SUCCESS,
        Err(e) => {
            eprintln!("fit_janaf: {e}");
            ExitCode::FAILURE
        }
    }
}

fn run(dir: &std::path::Path, out: &std::path::Path) -> Result<(), Box<dyn std::error::Error>> {
    let mut toml = thermo_file_header(&[
        "Source: NIST-JANAF Thermochemical Tables, 4th ed., M. W. Chase Jr., J. Phys. Chem. Ref. Data Monograph 9 (1998).",
        "Fitted by stoik's fit_nasa7 (7-coefficient polynomials, McBride, Gordon & Reno 1993 form):",
        "cp/R = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4, H/(R T) = a1 + a2 T/2 + a3 T^2/3 + a4 T^3/4 + a5 T^4/5 + a6/T,",
        "S/R = a1 ln T + a2 T + a3 T^2/2 + a4 T^3/3 + a5 T^4/4 + a7; T in K, standard pressure 1e5 Pa.",
        "Joint weighted least squares on the JANAF cp, H - H(298.15 K) and S rows; cp, d cp/dT, H and S continuous",
        "at the common temperature; H(298.15 K) equal to the JANAF formation enthalpy.",
        "Note: JANAF's HO2 formation enthalpy (2.092 kJ/mol) is about 10 kJ/mol below later evaluations and its OH",
        "value differs from later ones by about 1.7 kJ/mol.",
    ]);
    println!(
        "{:<4} {:>6} {:>6} {:>6} {:>5} {:>11} {:>11} {:>11} {:>11} {:>10} {:>10} {:>10}",
        "name",
        "T_low",
        "T_mid",
        "T_high",
        "n",
        "max|dcp|/cp",
        "rms dcp/cp",
        "max|dS|/S",
        "rms dS/S",
        "max|dH|",
        "rms dH",
        "jumps"
    );
    for (stem, name) in SPECIES {
        let path = dir.join(format!("{stem}.tsv"));
        let text = std::fs::read_to_string(&path)
            .map_err(|e| format!("cannot read {}: {e}", path.display()))?;
        let table = read_janaf_tsv(&text).map_err(|e| format!("{}: {e}", path.display()))?;
        let (span_lo, span_hi) = table
            .temperature_span_k()
            .ok_or_else(|| format!("{}: no rows above 0 K", path.display()))?;
        let t_low = T_LOW_K.max(span_lo);
        let t_high = T_HIGH_K.min(span_hi);
        let points = table.points(t_low, t_high);
        let fit = fit_nasa7(&points, T_MID_K, table.h298_formation_j_per_mol, None)
            .map_err(|e| format!("{name}: {e}"))?;
        let (j_cp, j_h, j_s) = fit.continuity;
        let max_jump = j_cp.abs().max(j_h.abs()).max(j_s.abs());
        println!(
            "{:<4} {:>6.0} {:>6.0} {:>6.0} {:>5} {:>11.3e} {:>11.3e} {:>11.3e} {:>11.3e} {:>10.2} {:>10.2} {:>10.1e}",
            name,
            fit.polynomial.t_low_k,
            fit.polynomial.t_mid_k,
            fit.polynomial.t_high_k,
            fit.n_points,
            fit.max_relative_error_cp,
            fit.rms_relative_error_cp,
            fit.max_relative_error_s,
            fit.rms_relative_error_s,
            fit.max_abs_error_h_j_per_mol,
            fit.rms_abs_error_h_j_per_mol,
            max_jump
        );
        toml.push_str(&thermo_file_entry(
            name,
            &format!("JANAF table \"{}\" {}", table.name, table.formula),
            &fit,
        )?);
    }
    if let Some(parent) = out.parent() {
        if !parent.as_os_str().is_empty() {
            std::fs::create_dir_all(parent)?;
        }
    }
    std::fs::write(out, toml).map_err(|e| format!("cannot write {}: {e}", out.display()))?;
    println!("wrote {}", out.display());
    Ok(())
}
