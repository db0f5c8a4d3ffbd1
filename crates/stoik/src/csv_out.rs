//! Profiles as CSV: one row per output time, units in the header.

use std::io::{self, Write};
use stoik::mechanism::{Mechanism, GAS_CONSTANT};
use stoik::reactor::Profiles;

/// Quotes a CSV field when it holds a comma, quote or line break (species such as `1,3-C4H6`).
fn field(text: &str) -> String {
    if text.contains([',', '"', '\n', '\r']) {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
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

/// Writes the header and rows: time, every species' concentration (SI mol/m3 divided by
/// `si_per_unit`, labelled `unit_label`), then the temperature, the ideal-gas pressure
/// P = sum(c) R T, the mass density sum(c_i M_i) when every species has a composition, and
/// every species' mole fraction c_i / sum(c).
pub fn write_profiles(
    out: &mut impl Write,
    mechanism: &Mechanism,
    profiles: &Profiles,
    si_per_unit: f64,
    unit_label: &str,
) -> io::Result<()> {
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
    for ((t, row), temperature_k) in profiles
        .times_s
        .iter()
        .zip(&profiles.concentrations_mol_per_m3)
        .zip(&profiles.temperatures_k)
    {
        write!(out, "{t:.9e}")?;
        for c in row {
            write!(out, ",{:.9e}", c / si_per_unit)?;
        }
        let total: f64 = row.iter().sum();
        write!(
            out,
            ",{temperature_k:.9e},{:.9e}",
            total * GAS_CONSTANT * temperature_k
        )?;
        if let Some(m) = &masses {
            let density: f64 = row.iter().zip(m).map(|(c, m)| c * m).sum();
            write!(out, ",{density:.9e}")?;
        }
        for c in row {
            let x = if total > 0.0 { c / total } else { f64::NAN };
            write!(out, ",{x:.9e}")?;
        }
        writeln!(out)?;
    }
    Ok(())
}
