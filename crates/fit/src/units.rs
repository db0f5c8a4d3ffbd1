//! Units of rate constants in the data file: (length^3/amount)^(m-1)/time.

use crate::RateFitError;
use stoik_mechanism::{AmountUnit, EnergyUnit, LengthUnit, RateUnits, TimeUnit};

/// Length units of rate-constant concentrations in the data file: the mechanism-file units
/// plus the decimetre (`L` is dm3).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DataLengthUnit {
    /// Centimetre.
    Cm,
    /// Decimetre (1 L = 1 dm3).
    Dm,
    /// Metre.
    M,
}

impl DataLengthUnit {
    /// Metres per unit length (m).
    pub fn to_m_factor(self) -> f64 {
        match self {
            DataLengthUnit::Cm => 1e-2,
            DataLengthUnit::Dm => 1e-1,
            DataLengthUnit::M => 1.0,
        }
    }
}

/// The unit of a rate constant of overall order m: (length^3/amount)^(m-1) / time.
///
/// Made only by [`RateConstantUnit::parse`], so the order always fits the arithmetic.
#[derive(Debug, Clone, PartialEq)]
pub struct RateConstantUnit {
    label: String,
    order: u32,
    amount: AmountUnit,
    length: DataLengthUnit,
    time: TimeUnit,
}

/// One whitespace-separated factor of a unit, e.g. `mol-1`.
enum Factor {
    Length(DataLengthUnit),
    Amount(AmountUnit),
    Time(TimeUnit),
}

/// The accumulated power of each kind of unit, with the unit of that kind.
#[derive(Default)]
struct Powers {
    length: Option<(DataLengthUnit, i64)>,
    amount: Option<(AmountUnit, i64)>,
    time: Option<(TimeUnit, i64)>,
}

/// Adds `exponent` to the power of `unit` in `slot`; `Err` when the slot holds another unit
/// of the same kind.
fn accumulate<U: PartialEq>(slot: &mut Option<(U, i64)>, unit: U, exponent: i64) -> Result<(), ()> {
    match slot {
        Some((held, sum)) if *held == unit => {
            *sum = sum.saturating_add(exponent);
            Ok(())
        }
        Some(_) => Err(()),
        None => {
            *slot = Some((unit, exponent));
            Ok(())
        }
    }
}

/// Reads one factor `BASE[EXPONENT]`; the exponent of `L` counts as three length powers.
fn parse_factor(token: &str) -> Result<(Factor, i64), String> {
    let split = token
        .find(|c: char| c.is_ascii_digit() || c == '-' || c == '+')
        .unwrap_or(token.len());
    let (base, exp_text) = token.split_at(split);
    let exponent = if exp_text.is_empty() {
        1
    } else {
        exp_text
            .parse::<i32>()
            .map(i64::from)
            .map_err(|_| format!("`{exp_text}` is not an integer exponent"))?
    };
    Ok(match base {
        "cm" => (Factor::Length(DataLengthUnit::Cm), exponent),
        "dm" => (Factor::Length(DataLengthUnit::Dm), exponent),
        "m" => (Factor::Length(DataLengthUnit::M), exponent),
        "L" | "l" => (Factor::Length(DataLengthUnit::Dm), 3 * exponent),
        _ => {
            if let Some(a) = AmountUnit::parse(base) {
                (Factor::Amount(a), exponent)
            } else if let Some(t) = TimeUnit::parse(base) {
                (Factor::Time(t), exponent)
            } else {
                return Err(format!("unknown unit `{base}`"));
            }
        }
    })
}

/// Sums the powers of every factor of `text`.
fn parse_powers(text: &str) -> Result<Powers, String> {
    let mut powers = Powers::default();
    for token in text.split_whitespace() {
        let (factor, exponent) = parse_factor(token)?;
        let added = match factor {
            Factor::Length(l) => accumulate(&mut powers.length, l, exponent),
            Factor::Amount(a) => accumulate(&mut powers.amount, a, exponent),
            Factor::Time(t) => accumulate(&mut powers.time, t, exponent),
        };
        added.map_err(|()| format!("`{token}` mixes units of one kind"))?;
    }
    Ok(powers)
}

/// Checks the powers form (volume/amount)^(m-1)/time; returns m.
fn order_of(powers: &Powers) -> Result<u32, String> {
    let time_exp = powers
        .time
        .as_ref()
        .map(|(_, e)| *e)
        .ok_or("no time unit")?;
    if time_exp != -1 {
        return Err("time must appear as `s-1` (or ms-1, min-1, h-1)".to_string());
    }
    let amount_exp = powers.amount.as_ref().map_or(0, |(_, e)| *e);
    let length_exp = powers.length.as_ref().map_or(0, |(_, e)| *e);
    if Some(length_exp) != amount_exp.checked_mul(-3) || amount_exp > 1 {
        return Err("volume and amount powers do not match".to_string());
    }
    // At most i32::MAX, so that `1 - order` is an i32 exponent.
    i32::try_from(1 - amount_exp)
        .ok()
        .and_then(|m| u32::try_from(m).ok())
        .ok_or_else(|| "the reaction order is out of range".to_string())
}

impl RateConstantUnit {
    /// The unit as written in the file, whitespace normalized, e.g. `dm3 mol-1 s-1`.
    pub fn label(&self) -> &str {
        &self.label
    }

    /// Overall reaction order m (0, 1, 2, 3, ...), dimensionless.
    pub fn order(&self) -> u32 {
        self.order
    }

    /// Amount unit of the concentrations (mol when the order is 1).
    pub fn amount(&self) -> AmountUnit {
        self.amount
    }

    /// Length unit of the concentrations (cm when the order is 1).
    pub fn length(&self) -> DataLengthUnit {
        self.length
    }

    /// Time unit.
    pub fn time(&self) -> TimeUnit {
        self.time
    }

    /// SI value of one unit: (m3/mol)^(m-1)/s per (length^3/amount)^(m-1)/time.
    pub fn to_si_factor(&self) -> f64 {
        let l = self.length.to_m_factor();
        let concentration = self.amount.to_mol_factor() / (l * l * l);
        // `order` <= i32::MAX (checked by `parse`), so `1 - order` does not overflow.
        concentration.powi(1 - self.order as i32) / self.time.to_s_factor()
    }

    /// The mechanism-file units closest to this unit: same amount and time; cm for dm;
    /// activation energies in `activation_energy`.
    pub fn mechanism_units(&self, activation_energy: EnergyUnit) -> RateUnits {
        RateUnits {
            amount: self.amount,
            length: match self.length {
                DataLengthUnit::M => LengthUnit::M,
                DataLengthUnit::Cm | DataLengthUnit::Dm => LengthUnit::Cm,
            },
            time: self.time,
            activation_energy,
        }
    }

    /// Parses a unit such as `cm3 molecule-1 s-1`: whitespace-separated factors
    /// `BASE[EXPONENT]` with BASE one of cm, dm, m, L (= dm3), mol, molecule, s, ms, min, h.
    ///
    /// Errors: [`RateFitError::BadUnit`] for an empty text, an unknown base, a non-integer
    /// exponent, two units of one kind, a time power other than -1, or volume and amount
    /// powers that do not form (volume/amount)^(m-1).
    pub fn parse(text: &str) -> Result<Self, RateFitError> {
        let bad = |reason: String| RateFitError::BadUnit {
            text: text.to_string(),
            reason,
        };
        if text.trim().is_empty() {
            return Err(bad("empty".to_string()));
        }
        let powers = parse_powers(text).map_err(bad)?;
        let order = order_of(&powers).map_err(bad)?;
        Ok(RateConstantUnit {
            label: text.split_whitespace().collect::<Vec<_>>().join(" "),
            order,
            amount: powers.amount.map_or(AmountUnit::Mol, |(a, _)| a),
            length: powers.length.map_or(DataLengthUnit::Cm, |(l, _)| l),
            time: powers.time.map_or(TimeUnit::S, |(t, _)| t),
        })
    }
}
