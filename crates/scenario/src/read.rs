//! Readers shared by the sections of a scenario file: quantities written as a number or as
//! `"VALUE UNIT"`, tables keyed by species name (kept with their locations until they are
//! matched against a mechanism), and the lookup that matches those names.

use std::collections::HashMap;
use stoik_mechanism::{
    nearest_name, positive_finite_problem, show_number, value_as_number, Diagnostic, Mechanism,
    Report, SourceLocation, SpannedValue as Value,
};
use stoik_mechanism::{split_quantity, ConcentrationUnit};
use toml::de::{DeTable, DeValue};

/// Converts a value in a named unit to SI; `None` for an unknown unit.
pub(crate) type Converter = fn(f64, &str) -> Option<f64>;

/// A concentration in mol/m3 from a value in `unit`.
pub(crate) fn concentration_to_si(value: f64, unit: &str) -> Option<f64> {
    ConcentrationUnit::parse(unit).map(|u| value * u.to_si_factor())
}

/// Reads a quantity: a number in `default_unit` or a string "VALUE UNIT", converted to SI
/// with `convert`; `accepted` lists the unit spellings for messages.
pub(crate) fn quantity(
    r: &mut Report<'_>,
    key: &str,
    value: &Value<'_>,
    default_unit: &str,
    convert: Converter,
    accepted: &[&str],
) -> Option<f64> {
    let at = value.span().start;
    match value.get_ref() {
        DeValue::Integer(_) | DeValue::Float(_) => {
            let x = value_as_number(value.get_ref())?;
            convert(x, default_unit)
        }
        DeValue::String(s) => match split_quantity(s) {
            Err(message) => {
                r.error(at, format!("`{key}`: {message}"), None);
                None
            }
            Ok((x, unit)) => match convert(x, unit) {
                Some(si) => Some(si),
                None => {
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
                    None
                }
            },
        },
        _ => {
            r.wrong_type(key, value, "a number or a string \"VALUE UNIT\"");
            None
        }
    }
}

/// A concentration (mol/m3): a bare number is in the unit whose SI factor is `factor`
/// (`None`: that unit was itself invalid), a string carries its own unit.
pub(crate) fn concentration(
    r: &mut Report<'_>,
    key: &str,
    value: &Value<'_>,
    factor: Option<f64>,
) -> Option<f64> {
    match value.get_ref() {
        DeValue::Integer(_) | DeValue::Float(_) => {
            value_as_number(value.get_ref()).and_then(|x| factor.map(|f| x * f))
        }
        _ => quantity(
            r,
            key,
            value,
            "mol/m3",
            concentration_to_si,
            ConcentrationUnit::ACCEPTED,
        ),
    }
}

/// Records an error unless `x` is positive and finite.
pub(crate) fn require_positive(
    r: &mut Report<'_>,
    key: &str,
    value: &Value<'_>,
    x: f64,
) -> Option<f64> {
    match positive_finite_problem(x) {
        None => Some(x),
        Some(problem) => {
            r.error(
                value.span().start,
                format!("`{key}` {problem}; it must be positive and finite"),
                None,
            );
            None
        }
    }
}

/// Records an error unless `x` lies in `[low, high]` (given in `unit`, both included); NaN
/// and infinities are outside every range.
pub(crate) fn require_in_range(
    r: &mut Report<'_>,
    key: &str,
    at: usize,
    x: f64,
    (low, high): (f64, f64),
    unit: &str,
) -> Option<f64> {
    if x >= low && x <= high {
        Some(x)
    } else {
        r.error(
            at,
            format!(
                "`{key}` is {} {unit}; it must be between {} and {} {unit}",
                show_number(x),
                show_number(low),
                show_number(high)
            ),
            None,
        );
        None
    }
}

/// Reads a concentration unit name.
pub(crate) fn concentration_unit(
    r: &mut Report<'_>,
    key: &str,
    value: &Value<'_>,
) -> Option<ConcentrationUnit> {
    r.one_of(
        key,
        value,
        "concentration unit",
        ConcentrationUnit::ACCEPTED,
        ConcentrationUnit::parse,
    )
}

/// Reads an optional sub-table `key` of `root`, checking its keys against `allowed`.
pub(crate) fn section<'v, 'i>(
    r: &mut Report<'_>,
    root: &'v DeTable<'i>,
    key: &str,
    allowed: &[&str],
) -> Option<&'v DeTable<'i>> {
    let value = root.get(key)?;
    let table = r.table(key, value)?;
    r.check_keys(table, allowed, &format!("[{key}]"));
    Some(table)
}

/// A species-name-keyed value from the file, kept with its location for later resolution.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct NamedValue {
    pub(crate) name: String,
    /// mol/m3 for concentrations and tolerances; dimensionless for mole fractions; mol/(m3 s)
    /// for emissions; 1/s for deposition; 0 for a bare name.
    pub(crate) value: f64,
    pub(crate) location: SourceLocation,
}

/// Reads a string naming a species (value 0), located at `value`.
pub(crate) fn bare_name(r: &mut Report<'_>, key: &str, value: &Value<'_>) -> Option<NamedValue> {
    let name = r.string(key, value)?.to_string();
    Some(NamedValue {
        name,
        value: 0.0,
        location: r.location(value.span().start),
    })
}

/// Reads a table of species name -> value, converting each value with `read`; the entries
/// keep file order.
pub(crate) fn named_values(
    r: &mut Report<'_>,
    table: &DeTable<'_>,
    mut read: impl FnMut(&mut Report<'_>, &str, &Value<'_>) -> Option<f64>,
) -> Option<Vec<NamedValue>> {
    let mut out = Vec::with_capacity(table.len());
    let mut ok = true;
    for (key, value) in table.iter() {
        let name: &str = key.get_ref();
        match read(r, name, value) {
            Some(x) => out.push(NamedValue {
                name: name.to_string(),
                value: x,
                location: r.location(key.span().start),
            }),
            None => ok = false,
        }
    }
    // Keep file order (the parser's map is sorted by key).
    out.sort_by_key(|n| (n.location.line, n.location.column));
    ok.then_some(out)
}

/// Species names of a mechanism, for resolving the names a scenario uses.
pub(crate) struct SpeciesLookup<'m> {
    index: HashMap<&'m str, usize>,
    mechanism: &'m Mechanism,
    file: &'m str,
}

impl<'m> SpeciesLookup<'m> {
    /// The lookup of `mechanism`'s species; diagnostics name the scenario file `file`.
    pub(crate) fn new(mechanism: &'m Mechanism, file: &'m str) -> Self {
        let index = mechanism
            .species
            .iter()
            .enumerate()
            .map(|(i, s)| (s.name.as_str(), i))
            .collect();
        SpeciesLookup {
            index,
            mechanism,
            file,
        }
    }

    /// The index of `named`'s species, or an error (located, with the nearest species name)
    /// pushed to `diagnostics`; `what` names the place in the scenario.
    pub(crate) fn find(
        &self,
        named: &NamedValue,
        what: &str,
        diagnostics: &mut Vec<Diagnostic>,
    ) -> Option<usize> {
        let found = self.index.get(named.name.as_str()).copied();
        if found.is_none() {
            let mut d = Diagnostic::error(
                self.file,
                Some(named.location),
                format!(
                    "unknown species `{}` in {what}: the mechanism does not declare it",
                    named.name
                ),
            );
            if let Some(near) = nearest_name(
                &named.name,
                self.mechanism.species.iter().map(|s| s.name.as_str()),
            ) {
                d = d.with_help(format!("did you mean `{near}`?"));
            }
            diagnostics.push(d);
        }
        found
    }
}
