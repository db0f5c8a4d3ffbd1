//! Unit vocabulary of the file formats and conversion to SI.
//!
//! Mechanism files state rate-parameter units in a `[units]` table (amount, length, time,
//! activation energy); scenario files write quantities as `"VALUE UNIT"` strings. Everything is
//! converted once, at load, to SI: mol, m3, s, J/mol, K, Pa.

use crate::{AVOGADRO, GAS_CONSTANT};

/// Amount unit of rate-parameter concentrations.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum AmountUnit {
    /// Moles.
    Mol,
    /// Molecules (1 mol = N_A molecules).
    Molecule,
}

impl AmountUnit {
    /// Spellings accepted in files.
    pub const ACCEPTED: &'static [&'static str] = &["mol", "molecule"];

    /// Parses a unit name as written in a file.
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "mol" => Some(AmountUnit::Mol),
            "molecule" => Some(AmountUnit::Molecule),
            _ => None,
        }
    }

    /// Moles per unit amount (1 for mol, 1/N_A for molecule).
    pub fn to_mol_factor(self) -> f64 {
        match self {
            AmountUnit::Mol => 1.0,
            AmountUnit::Molecule => 1.0 / AVOGADRO,
        }
    }
}

/// Length unit of rate-parameter concentrations (concentration = amount / length^3).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LengthUnit {
    /// Centimetre.
    Cm,
    /// Metre.
    M,
}

impl LengthUnit {
    /// Spellings accepted in files.
    pub const ACCEPTED: &'static [&'static str] = &["cm", "m"];

    /// Parses a unit name as written in a file.
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "cm" => Some(LengthUnit::Cm),
            "m" => Some(LengthUnit::M),
            _ => None,
        }
    }

    /// Metres per unit length.
    pub fn to_m_factor(self) -> f64 {
        match self {
            LengthUnit::Cm => 1e-2,
            LengthUnit::M => 1.0,
        }
    }
}

/// Time unit of rate parameters.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum TimeUnit {
    /// Second.
    S,
    /// Millisecond.
    Ms,
    /// Minute (60 s).
    Min,
    /// Hour (3600 s).
    H,
}

impl TimeUnit {
    /// Spellings accepted in mechanism files.
    pub const ACCEPTED: &'static [&'static str] = &["s", "ms", "min", "h"];

    /// Parses a unit name as written in a file.
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "s" => Some(TimeUnit::S),
            "ms" => Some(TimeUnit::Ms),
            "min" => Some(TimeUnit::Min),
            "h" => Some(TimeUnit::H),
            _ => None,
        }
    }

    /// Seconds per unit time.
    pub fn to_s_factor(self) -> f64 {
        match self {
            TimeUnit::S => 1.0,
            TimeUnit::Ms => 1e-3,
            TimeUnit::Min => 60.0,
            TimeUnit::H => 3600.0,
        }
    }
}

/// Unit of activation energies.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum EnergyUnit {
    /// J/mol.
    JPerMol,
    /// kJ/mol.
    KjPerMol,
    /// cal/mol, thermochemical calorie (4.184 J).
    CalPerMol,
    /// kcal/mol, thermochemical kilocalorie (4184 J).
    KcalPerMol,
    /// Kelvin: the value given is Ea/R.
    Kelvin,
}

impl EnergyUnit {
    /// Spellings accepted in files.
    pub const ACCEPTED: &'static [&'static str] = &["J/mol", "kJ/mol", "cal/mol", "kcal/mol", "K"];

    /// Parses a unit name as written in a file.
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "J/mol" => Some(EnergyUnit::JPerMol),
            "kJ/mol" => Some(EnergyUnit::KjPerMol),
            "cal/mol" => Some(EnergyUnit::CalPerMol),
            "kcal/mol" => Some(EnergyUnit::KcalPerMol),
            "K" => Some(EnergyUnit::Kelvin),
            _ => None,
        }
    }

    /// J/mol per unit (for `Kelvin`, the gas constant R in J/(mol K)).
    pub fn to_j_per_mol_factor(self) -> f64 {
        match self {
            EnergyUnit::JPerMol => 1.0,
            EnergyUnit::KjPerMol => 1e3,
            EnergyUnit::CalPerMol => 4.184,
            EnergyUnit::KcalPerMol => 4184.0,
            EnergyUnit::Kelvin => GAS_CONSTANT,
        }
    }
}

/// The units in which a step's rate parameters are written.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct RateUnits {
    /// Amount unit of concentrations.
    pub amount: AmountUnit,
    /// Length unit of concentrations (volume = length^3).
    pub length: LengthUnit,
    /// Time unit.
    pub time: TimeUnit,
    /// Activation-energy unit.
    pub activation_energy: EnergyUnit,
}

impl Default for RateUnits {
    /// The file-format defaults: mol, cm, s, J/mol.
    fn default() -> Self {
        RateUnits {
            amount: AmountUnit::Mol,
            length: LengthUnit::Cm,
            time: TimeUnit::S,
            activation_energy: EnergyUnit::JPerMol,
        }
    }
}

impl RateUnits {
    /// mol/m3 per unit concentration (amount / length^3).
    pub fn concentration_factor(&self) -> f64 {
        let l = self.length.to_m_factor();
        self.amount.to_mol_factor() / (l * l * l)
    }

    /// Converts a pre-exponential factor of a step of overall order `order` from
    /// (concentration)^(1-order)/time in these units to (mol/m3)^(1-order)/s.
    pub fn prefactor_to_si(&self, prefactor: f64, order: f64) -> f64 {
        prefactor * self.concentration_factor().powf(1.0 - order) / self.time.to_s_factor()
    }

    /// Converts an activation energy in these units to J/mol.
    pub fn activation_energy_to_si(&self, value: f64) -> f64 {
        value * self.activation_energy.to_j_per_mol_factor()
    }
}

/// Concentration unit of scenario values and of output columns.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ConcentrationUnit {
    /// mol/m3 (SI).
    MolPerM3,
    /// mol/L (= mol/dm3).
    MolPerLitre,
    /// mol/cm3.
    MolPerCm3,
    /// molecule/cm3.
    MoleculePerCm3,
}

impl ConcentrationUnit {
    /// Spellings accepted in files (the first of each pair is the canonical label).
    pub const ACCEPTED: &'static [&'static str] =
        &["mol/m3", "mol/L", "mol/dm3", "mol/cm3", "molecule/cm3"];

    /// Parses a unit name as written in a file.
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "mol/m3" => Some(ConcentrationUnit::MolPerM3),
            "mol/L" | "mol/l" | "mol/dm3" => Some(ConcentrationUnit::MolPerLitre),
            "mol/cm3" => Some(ConcentrationUnit::MolPerCm3),
            "molecule/cm3" => Some(ConcentrationUnit::MoleculePerCm3),
            _ => None,
        }
    }

    /// Factor that turns a value in this unit into mol/m3.
    pub fn to_si_factor(&self) -> f64 {
        match self {
            ConcentrationUnit::MolPerM3 => 1.0,
            ConcentrationUnit::MolPerLitre => 1e3,
            ConcentrationUnit::MolPerCm3 => 1e6,
            ConcentrationUnit::MoleculePerCm3 => 1e6 / AVOGADRO,
        }
    }

    /// The unit as written in files and CSV headers, e.g. `"mol/m3"`.
    pub fn label(&self) -> &'static str {
        match self {
            ConcentrationUnit::MolPerM3 => "mol/m3",
            ConcentrationUnit::MolPerLitre => "mol/L",
            ConcentrationUnit::MolPerCm3 => "mol/cm3",
            ConcentrationUnit::MoleculePerCm3 => "molecule/cm3",
        }
    }
}

/// Temperature units accepted in scenario quantities.
pub const TEMPERATURE_UNITS: &[&str] = &["K", "C"];
/// Pressure units accepted in scenario quantities.
pub const PRESSURE_UNITS: &[&str] = &["Pa", "kPa", "MPa", "bar", "atm", "Torr"];
/// Time units accepted in scenario quantities.
pub const SCENARIO_TIME_UNITS: &[&str] = &["s", "ms", "us", "min", "h"];

/// Converts a temperature `value` in `unit` (`K` or `C`) to kelvin.
pub fn temperature_to_k(value: f64, unit: &str) -> Option<f64> {
    match unit {
        "K" => Some(value),
        "C" | "degC" | "°C" => Some(value + 273.15),
        _ => None,
    }
}

/// Converts a pressure `value` in `unit` to Pa (1 atm = 101325 Pa, 1 Torr = 101325/760 Pa).
pub fn pressure_to_pa(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "Pa" => 1.0,
        "kPa" => 1e3,
        "MPa" => 1e6,
        "bar" => 1e5,
        "atm" => 101_325.0,
        "Torr" => 101_325.0 / 760.0,
        _ => return None,
    };
    Some(value * factor)
}

/// Converts a time `value` in `unit` (s, ms, us, min, h) to seconds.
pub fn time_to_s(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "s" => 1.0,
        "ms" => 1e-3,
        "us" | "µs" => 1e-6,
        "min" => 60.0,
        "h" => 3600.0,
        _ => return None,
    };
    Some(value * factor)
}

/// Splits a quantity string `"VALUE UNIT"` into its number and unit text.
///
/// Errors describe what is wrong (no unit, unreadable number).
pub fn split_quantity(text: &str) -> Result<(f64, &str), String> {
    let trimmed = text.trim();
    let mut parts = trimmed.splitn(2, char::is_whitespace);
    let number = parts.next().unwrap_or("");
    let unit = parts.next().map(str::trim).unwrap_or("");
    let value: f64 = number.parse().map_err(|_| {
        format!("`{text}` is not a quantity: expected \"VALUE UNIT\", e.g. \"1 atm\"")
    })?;
    if unit.is_empty() {
        return Err(format!(
            "`{text}` has no unit: write \"VALUE UNIT\" or give a plain number"
        ));
    }
    Ok((value, unit))
}

#[cfg(test)]
mod tests {
    use super::*;

    fn rel(a: f64, b: f64) -> f64 {
        ((a - b) / b).abs()
    }

    #[test]
    fn one_step_in_four_unit_systems_gives_one_si_rate_constant() {
        // A bimolecular step (m = 2) with A = 1e-11 cm3/(molecule s), n = 0, Ea/R = 1000 K.
        // Independent expectation: A_SI = 1e-11 * 1e-6 m3/cm3 * N_A = 6.02214076e6 m3/(mol s)
        // (SI 2019 exact Avogadro constant); Ea = 1000 K * R = 8314.462618 J/mol.
        let expected_a = 1e-11 * 1e-6 * 6.022_140_76e23;
        let expected_ea = 1000.0 * 8.314_462_618;
        let t: f64 = 800.0;
        let expected_k = expected_a * (-expected_ea / (8.314_462_618 * t)).exp();

        let systems = [
            // (amount, length, time, energy, A in those units, Ea in those units)
            ("molecule", "cm", "s", "K", 1e-11, 1000.0),
            (
                "mol",
                "cm",
                "s",
                "kJ/mol",
                1e-11 * 6.022_140_76e23,
                8.314_462_618,
            ),
            (
                "mol",
                "m",
                "s",
                "cal/mol",
                1e-17 * 6.022_140_76e23,
                8_314.462_618 / 4.184,
            ),
            (
                "mol",
                "cm",
                "s",
                "kcal/mol",
                1e-11 * 6.022_140_76e23,
                8.314_462_618 / 4.184,
            ),
            (
                "mol",
                "m",
                "min",
                "J/mol",
                60.0 * 1e-17 * 6.022_140_76e23,
                8_314.462_618,
            ),
            ("molecule", "m", "ms", "J/mol", 1e-3 * 1e-17, 8_314.462_618),
        ];
        for (amount, length, time, energy, a, ea) in systems {
            let units = RateUnits {
                amount: AmountUnit::parse(amount).unwrap(),
                length: LengthUnit::parse(length).unwrap(),
                time: TimeUnit::parse(time).unwrap(),
                activation_energy: EnergyUnit::parse(energy).unwrap(),
            };
            let a_si = units.prefactor_to_si(a, 2.0);
            let ea_si = units.activation_energy_to_si(ea);
            let k = a_si * (-ea_si / (crate::GAS_CONSTANT * t)).exp();
            assert!(
                rel(k, expected_k) < 1e-12,
                "{amount}/{length}/{time}/{energy}: {k} vs {expected_k}"
            );
        }
    }

    #[test]
    fn molecule_prefactors_differ_by_powers_of_avogadro() {
        // Source: SI 2019 exact Avogadro constant; A(mol) = A(molecule) * N_A^(m-1) at equal
        // length and time units.
        let mol = RateUnits::default();
        let molecule = RateUnits {
            amount: AmountUnit::Molecule,
            ..RateUnits::default()
        };
        let na = 6.022_140_76e23;
        let first = molecule.prefactor_to_si(3.0, 1.0) / mol.prefactor_to_si(3.0, 1.0);
        let second = molecule.prefactor_to_si(3.0, 2.0) / mol.prefactor_to_si(3.0, 2.0);
        let third = molecule.prefactor_to_si(3.0, 3.0) / mol.prefactor_to_si(3.0, 3.0);
        assert!(rel(first, 1.0) < 1e-15);
        assert!(rel(second, na) < 1e-12);
        assert!(rel(third, na * na) < 1e-12);
    }

    #[test]
    fn calorie_is_thermochemical() {
        // Common practice: the thermochemical calorie, 1 cal = 4.184 J exactly.
        let units = RateUnits {
            activation_energy: EnergyUnit::CalPerMol,
            ..RateUnits::default()
        };
        assert_eq!(units.activation_energy_to_si(1000.0), 4184.0);
    }

    #[test]
    fn scenario_quantities_convert_to_si() {
        // Sources: 1 atm = 101325 Pa and 0 C = 273.15 K by definition; 1 Torr = 1/760 atm.
        assert_eq!(pressure_to_pa(1.0, "atm"), Some(101_325.0));
        assert!(rel(pressure_to_pa(760.0, "Torr").unwrap(), 101_325.0) < 1e-15);
        assert_eq!(pressure_to_pa(2.0, "bar"), Some(2e5));
        assert!(rel(temperature_to_k(25.0, "C").unwrap(), 298.15) < 1e-15);
        assert_eq!(time_to_s(2.0, "h"), Some(7200.0));
        assert!(rel(time_to_s(5.0, "us").unwrap(), 5e-6) < 1e-15);
        assert_eq!(split_quantity("1e-6 s"), Ok((1e-6, "s")));
        assert!(split_quantity("12").is_err());
        assert!(split_quantity("fast s").is_err());
        // 1 mol/L = 1000 mol/m3; 1 molecule/cm3 = 1e6/N_A mol/m3.
        assert_eq!(
            ConcentrationUnit::parse("mol/L").unwrap().to_si_factor(),
            1e3
        );
        assert!(
            rel(
                ConcentrationUnit::MoleculePerCm3.to_si_factor(),
                1e6 / 6.022_140_76e23
            ) < 1e-15
        );
    }
}
