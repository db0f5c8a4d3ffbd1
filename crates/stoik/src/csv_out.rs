//! Profiles as CSV: one row per output time, units in the header.

use std::io::{self, Write};
use stoik::mechanism::Mechanism;

/// Quotes a CSV field when it holds a comma, quote or line break (species such as `1,3-C4H6`).
fn field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// Writes the header and rows. `to_unit` divides SI concentrations (mol/m3) into the output
/// unit labelled `unit_label`.
pub fn write_profiles(
    out: &mut impl Write,
    mechanism: &Mechanism,
    times_s: &[f64],
    concentrations_mol_per_m3: &[Vec<f64>],
    si_per_unit: f64,
    unit_label: &str,
) -> io::Result<()> {
    let mut header = vec!["time [s]".to_string()];
    header.extend(
        mechanism
            .species
            .iter()
            .map(|s| field(&format!("{} [{unit_label}]", s.name))),
    );
    writeln!(out, "{}", header.join(","))?;
    for (t, row) in times_s.iter().zip(concentrations_mol_per_m3) {
        write!(out, "{t:.9e}")?;
        for c in row {
            write!(out, ",{:.9e}", c / si_per_unit)?;
        }
        writeln!(out)?;
    }
    Ok(())
}
