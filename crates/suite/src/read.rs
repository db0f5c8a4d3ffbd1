//! Quantities of the suite file: a bare number in the dimension's SI unit or a string
//! "VALUE UNIT" in any unit stoik's other files accept for that dimension.

use stoik_mechanism::{
    nearest_name, pressure_to_pa, split_quantity, temperature_to_k, time_to_s, value_as_number,
    ConcentrationUnit, Report, SpannedValue as Value, PRESSURE_UNITS, SCENARIO_TIME_UNITS,
    TEMPERATURE_UNITS,
};
use toml::de::DeValue;

/// The dimension of a quantity, which fixes its default unit and accepted spellings.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Dimension {
    /// s.
    Time,
    /// K.
    Temperature,
    /// A temperature difference in K (no offsets: only `K` is accepted).
    TemperatureDifference,
    /// Pa.
    Pressure,
    /// mol/m3.
    Concentration,
    /// A number without unit (mole fractions, integrals in mol s/m3).
    Plain,
}

impl Dimension {
    fn default_unit(self) -> &'static str {
        match self {
            Dimension::Time => "s",
            Dimension::Temperature | Dimension::TemperatureDifference => "K",
            Dimension::Pressure => "Pa",
            Dimension::Concentration => "mol/m3",
            Dimension::Plain => "",
        }
    }

    fn convert(self, x: f64, unit: &str) -> Option<f64> {
        match self {
            Dimension::Time => time_to_s(x, unit),
            Dimension::Temperature => temperature_to_k(x, unit),
            Dimension::TemperatureDifference => (unit == "K").then_some(x),
            Dimension::Pressure => pressure_to_pa(x, unit),
            Dimension::Concentration => {
                ConcentrationUnit::parse(unit).map(|u| x * u.to_si_factor())
            }
            Dimension::Plain => None,
        }
    }

    fn accepted(self) -> &'static [&'static str] {
        match self {
            Dimension::Time => SCENARIO_TIME_UNITS,
            Dimension::Temperature => TEMPERATURE_UNITS,
            Dimension::TemperatureDifference => &["K"],
            Dimension::Pressure => PRESSURE_UNITS,
            Dimension::Concentration => ConcentrationUnit::ACCEPTED,
            Dimension::Plain => &[],
        }
    }
}

/// Reads a quantity of `dimension`: a number in its SI unit, or "VALUE UNIT" (not for
/// [`Dimension::Plain`]). Problems are recorded in `r` at the value.
pub(crate) fn number_or_quantity(
    r: &mut Report<'_>,
    key: &str,
    value: &Value<'_>,
    dimension: Dimension,
) -> Option<f64> {
    let at = value.span().start;
    let x = match value.get_ref() {
        DeValue::Integer(_) | DeValue::Float(_) => value_as_number(value.get_ref()),
        DeValue::String(s) if dimension != Dimension::Plain => match split_quantity(s) {
            Err(message) => {
                r.error(at, format!("`{key}`: {message}"), None);
                return None;
            }
            Ok((x, unit)) => match dimension.convert(x, unit) {
                Some(si) => Some(si),
                None => {
                    let accepted = dimension.accepted();
                    let help = nearest_name(unit, accepted.iter().copied())
                        .map(|near| format!("did you mean `{near}`?"));
                    r.error(
                        at,
                        format!(
                            "unknown unit `{unit}` for `{key}`; accepted: {}",
                            accepted.join(", ")
                        ),
                        help,
                    );
                    return None;
                }
            },
        },
        _ => {
            let expected = if dimension == Dimension::Plain {
                "a number".to_string()
            } else {
                format!(
                    "a number (in {}) or a string \"VALUE UNIT\"",
                    dimension.default_unit()
                )
            };
            r.wrong_type(key, value, &expected);
            return None;
        }
    };
    match x {
        Some(x) if x.is_finite() => Some(x),
        _ => {
            r.error(at, format!("`{key}` must be a finite number"), None);
            None
        }
    }
}
