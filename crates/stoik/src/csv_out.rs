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

/// `value` with the shortest digits that read back as exactly the same `f64` (Rust's
/// `LowerExp`: `0e0`, `6e2`, `1.01325e5`, `-2.5e-7`, `5e-324`), or `None` when it is NaN or
/// infinite.
pub fn number(value: f64) -> Option<String> {
    value.is_finite().then(|| format!("{value:e}"))
}

/// Molar mass of every species in kg/mol, when every species has an elemental composition.
pub fn molar_masses_kg_per_mol(mechanism: &Mechanism) -> Option<Vec<f64>> {
    (0..mechanism.species.len())
        .map(|i| mechanism.molar_mass_kg_per_mol(i))
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

impl std::error::Error for CsvError {
    fn source(&self) -> Option<&(dyn std::error::Error + 'static)> {
        match self {
            CsvError::Io(e) => Some(e),
            CsvError::NonFinite { .. } => None,
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
/// `si_per_unit`, labelled `unit_label`), then the temperature, the volume `volume [m3]`
/// when the profile has one (a semi-batch), the ideal-gas pressure
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
    write_rows(out, mechanism, None, profiles, si_per_unit, unit_label)
}

/// As [`write_profiles`], for a plug flow: the first two columns are `distance [m]` (one
/// per row, from `distances_m`) and `residence time [s]` (the profiles' times).
pub fn write_plug_profiles(
    out: &mut impl Write,
    mechanism: &Mechanism,
    distances_m: &[f64],
    profiles: &Profiles,
    si_per_unit: f64,
    unit_label: &str,
) -> Result<CsvNotes, CsvError> {
    write_rows(
        out,
        mechanism,
        Some(distances_m),
        profiles,
        si_per_unit,
        unit_label,
    )
}

fn write_rows(
    out: &mut impl Write,
    mechanism: &Mechanism,
    distances_m: Option<&[f64]>,
    profiles: &Profiles,
    si_per_unit: f64,
    unit_label: &str,
) -> Result<CsvNotes, CsvError> {
    let masses = molar_masses_kg_per_mol(mechanism);
    let mut header = match distances_m {
        Some(_) => vec!["distance [m]".to_string(), "residence time [s]".to_string()],
        None => vec!["time [s]".to_string()],
    };
    header.extend(
        mechanism
            .species
            .iter()
            .map(|s| format!("{} [{unit_label}]", s.name)),
    );
    header.push("temperature [K]".to_string());
    let with_volume = !profiles.volumes_m3.is_empty();
    if with_volume {
        header.push("volume [m3]".to_string());
    }
    header.push("pressure [Pa]".to_string());
    if masses.is_some() {
        header.push("density [kg/m3]".to_string());
    }
    header.extend(
        mechanism
            .species
            .iter()
            .map(|s| format!("{} [mole fraction]", s.name)),
    );
    // The csv crate quotes a field only when it must (species such as `1,3-C4H6`); rows end
    // with a bare line feed.
    let mut writer = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(out);
    writer.write_record(&header).map_err(io::Error::from)?;
    let mut notes = CsvNotes::default();
    let mut line: Vec<String> = Vec::with_capacity(header.len());
    for (i, ((&t, row), &temperature_k)) in profiles
        .times_s
        .iter()
        .zip(&profiles.concentrations_mol_per_m3)
        .zip(&profiles.temperatures_k)
        .enumerate()
    {
        let mut cells: Vec<f64> = Vec::with_capacity(header.len());
        if let Some(d) = distances_m {
            cells.push(d.get(i).copied().unwrap_or(f64::NAN));
        }
        cells.push(t);
        cells.extend(row.iter().map(|c| c / si_per_unit));
        cells.push(temperature_k);
        if with_volume {
            cells.push(profiles.volumes_m3.get(i).copied().unwrap_or(f64::NAN));
        }
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
            line.push(cell(value, &header[k], i, t)?);
        }
        match &fractions {
            Some(x) => {
                for (k, &value) in x.iter().enumerate() {
                    line.push(cell(value, &header[cells.len() + k], i, t)?);
                }
            }
            None => line.extend(mechanism.species.iter().map(|_| UNDEFINED.to_string())),
        }
        writer.write_record(&line).map_err(io::Error::from)?;
    }
    writer.flush()?;
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

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;
    use stoik::mechanism::parse_mechanism;
    use stoik::reactor::{LinearAlgebra, SolverStats};

    /// `number` read back by Rust's parser (correctly rounded, IEEE 754) gives the same bits.
    fn round_trips(v: f64) -> bool {
        number(v)
            .and_then(|t| t.parse::<f64>().ok())
            .map(f64::to_bits)
            == Some(v.to_bits())
    }

    #[test]
    fn extremes_round_trip_bit_for_bit() {
        // IEEE 754 binary64 limits: largest finite, smallest normal, smallest subnormal, the
        // largest subnormal, signed zeros, and neighbours of 1 (one unit in the last place).
        for v in [
            f64::MAX,
            f64::MIN,
            f64::MIN_POSITIVE,
            -f64::MIN_POSITIVE,
            f64::from_bits(1),
            -f64::from_bits(1),
            f64::from_bits((1 << 52) - 1),
            0.0,
            -0.0,
            1.0 + f64::EPSILON,
            1.0 - f64::EPSILON / 2.0,
            0.1,
            1e-300,
            8.314462618,
        ] {
            assert!(round_trips(v), "{v:e} -> {:?}", number(v));
        }
        // The forms themselves (Rust's LowerExp, shortest digits).
        assert_eq!(number(600.0).as_deref(), Some("6e2"));
        assert_eq!(number(101325.0).as_deref(), Some("1.01325e5"));
        assert_eq!(number(-0.0).as_deref(), Some("-0e0"));
        assert_eq!(number(f64::from_bits(1)).as_deref(), Some("5e-324"));
        assert_eq!(number(f64::NAN), None);
        assert_eq!(number(f64::INFINITY), None);
        assert_eq!(number(f64::NEG_INFINITY), None);
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(20_000))]

        /// Any finite f64 (every bit pattern: negatives, subnormals, extremes).
        #[test]
        fn any_finite_f64_round_trips(bits in any::<u64>()) {
            let v = f64::from_bits(bits);
            prop_assume!(v.is_finite());
            prop_assert!(round_trips(v), "{:e} -> {:?}", v, number(v));
        }

        /// Subnormals of either sign (exponent field zero).
        #[test]
        fn subnormals_round_trip(mantissa in 1u64..(1 << 52), negative in any::<bool>()) {
            let v = f64::from_bits(mantissa | (u64::from(negative) << 63));
            prop_assert!(round_trips(v), "{:e} -> {:?}", v, number(v));
        }
    }

    fn two_species() -> Mechanism {
        let text = "stoik_mechanism = 1\n[units]\nlength = \"m\"\n[[species]]\nname = \"A\"\n\
                    [[species]]\nname = \"B\"\n[[step]]\nequation = \"A -> B\"\n\
                    forward = { prefactor = 2.0 }\n";
        parse_mechanism(text, "<test>").expect("valid").mechanism
    }

    fn profiles(rows: Vec<Vec<f64>>) -> Profiles {
        let n = rows.len();
        Profiles {
            times_s: (0..n).map(|i| i as f64 * 0.5).collect(),
            concentrations_mol_per_m3: rows,
            temperatures_k: vec![300.0; n],
            temperature_rates_k_per_s: vec![0.0; n],
            volumes_m3: Vec::new(),
            stats: SolverStats::default(),
            linear_algebra_used: LinearAlgebra::Dense,
            located: Vec::new(),
        }
    }

    fn write(p: &Profiles) -> Result<(String, CsvNotes), CsvError> {
        let mut out = Vec::new();
        let notes = write_profiles(&mut out, &two_species(), p, 1.0, "mol/m3")?;
        Ok((String::from_utf8(out).expect("UTF-8"), notes))
    }

    #[test]
    fn a_zero_total_gives_undefined_mole_fractions_and_a_note() {
        // Row 2 has no molecules: x = c / sum(c) is 0/0 there; rows 1 and 3 are ordinary.
        let (csv, notes) = write(&profiles(vec![
            vec![1.0, 3.0],
            vec![0.0, 0.0],
            vec![0.25, 0.0],
        ]))
        .expect("written");
        let lines: Vec<&str> = csv.lines().collect();
        // x_A = 1/4 and x_B = 3/4 exactly; P = 4 mol/m3 * R * 300 K (ideal gas, textbook).
        assert_eq!(
            lines[1],
            format!(
                "0e0,1e0,3e0,3e2,{:e},2.5e-1,7.5e-1",
                4.0 * 8.314462618 * 300.0
            )
        );
        assert_eq!(lines[2], "5e-1,0e0,0e0,3e2,0e0,nan,nan");
        assert_eq!(
            lines[3],
            format!(
                "1e0,2.5e-1,0e0,3e2,{:e},1e0,0e0",
                0.25 * 8.314462618 * 300.0
            )
        );
        assert_eq!(notes.undefined_mole_fraction_rows, vec![2]);
        let warning = notes.warning("out.csv").expect("a warning");
        assert!(
            warning.contains("1 row(s) (first: data row 2)"),
            "{warning}"
        );
        assert!(warning.contains("written as `nan`"), "{warning}");
        // The marker reads back as NaN in Rust.
        assert!(UNDEFINED.parse::<f64>().expect("a float").is_nan());
    }

    #[test]
    fn a_non_finite_value_refuses_the_file_naming_column_and_row() {
        for bad in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            let err = write(&profiles(vec![
                vec![1.0, 0.0],
                vec![1.0, 0.0],
                vec![1.0, bad],
            ]))
            .expect_err("refused");
            match &err {
                CsvError::NonFinite {
                    column,
                    row,
                    time_s,
                    value,
                } => {
                    assert_eq!(column, "B [mol/m3]");
                    assert_eq!(*row, 3);
                    assert_eq!(*time_s, 1.0);
                    assert_eq!(value.to_bits(), bad.to_bits());
                }
                CsvError::Io(e) => panic!("unexpected I/O error {e}"),
            }
            let message = err.to_string();
            assert!(
                message.contains("column `B [mol/m3]`, data row 3 (line 4, t = 1e0 s)"),
                "{message}"
            );
        }
        // A finite concentration whose pressure overflows (1e306 mol/m3 * R * 300 K > f64::MAX).
        let err = write(&profiles(vec![vec![1e306, 0.0]])).expect_err("refused");
        assert!(
            err.to_string()
                .contains("column `pressure [Pa]`, data row 1"),
            "{err}"
        );
    }

    #[test]
    fn species_names_with_commas_and_quotes_are_quoted_and_read_back() {
        // RFC 4180: a field holding a comma or a quote is quoted, inner quotes doubled. The
        // header read back by the csv crate's reader gives the names exactly.
        let mut m = two_species();
        m.species[0].name = "1,3-C4H6".to_string();
        m.species[1].name = "A\"B".to_string();
        let mut out = Vec::new();
        write_profiles(&mut out, &m, &profiles(vec![vec![1.0, 3.0]]), 1.0, "mol/m3")
            .expect("written");
        let text = String::from_utf8(out).expect("UTF-8");
        assert!(
            text.starts_with("time [s],\"1,3-C4H6 [mol/m3]\",\"A\"\"B [mol/m3]\",temperature [K]"),
            "{text}"
        );
        let mut reader = csv::Reader::from_reader(text.as_bytes());
        let header = reader.headers().expect("header").clone();
        assert_eq!(&header[1], "1,3-C4H6 [mol/m3]");
        assert_eq!(&header[2], "A\"B [mol/m3]");
        let row = reader.records().next().expect("a row").expect("valid row");
        assert_eq!(row.len(), header.len());
        assert_eq!(row[1].parse::<f64>(), Ok(1.0));
        assert!(!text.contains('\r'));
    }
}
