//! Semi-batch feeds (`[[feed]]`) and the liquid-phase energy description (`[liquid]`):
//! read with located diagnostics, then matched against a mechanism into the reactor's
//! [`Feed`]s and [`LiquidPhase`].

use crate::file::{Scenario, TEMPERATURE_RANGE_K};
use crate::read::{
    concentration, concentration_unit, named_values, quantity, require_in_range, require_positive,
    Converter, NamedValue, SpeciesLookup,
};
use crate::sections::{volumetric_flow_to_m3_per_s, VOLUMETRIC_FLOW_UNITS};
use stoik_mechanism::{
    nearest_name, show_number, temperature_to_k, time_to_s, ConcentrationUnit, Diagnostic,
    Mechanism, Report, SourceLocation, SpannedValue as Value, GAS_CONSTANT, SCENARIO_TIME_UNITS,
    TEMPERATURE_UNITS,
};
use stoik_reactor::{Feed, FeedSchedule, LiquidPhase};
use toml::de::{DeTable, DeValue};

const FEED_KEYS: &[&str] = &[
    "species",
    "molar_flow",
    "molar_volume",
    "concentrations",
    "concentration_unit",
    "mole_fractions",
    "volumetric_flow",
    "start",
    "stop",
    "temperature",
];
const SCHEDULE_KEYS: &[&str] = &["times", "rates"];
const LIQUID_KEYS: &[&str] = &["heat_capacity", "density", "reaction_enthalpies"];

/// Units of a molar flow.
const MOLAR_FLOW_UNITS: &[&str] = &["mol/s", "mol/min", "mol/h", "kmol/h"];
/// Units of a molar volume.
const MOLAR_VOLUME_UNITS: &[&str] = &["m3/mol", "L/mol", "mL/mol", "cm3/mol"];
/// Units of a mixture heat capacity: per mass or per volume.
const HEAT_CAPACITY_UNITS: &[&str] = &[
    "J/(kg K)",
    "kJ/(kg K)",
    "J/(m3 K)",
    "kJ/(m3 K)",
    "MJ/(m3 K)",
];
/// Units of a density.
const DENSITY_UNITS: &[&str] = &["kg/m3", "kg/L", "g/cm3", "g/mL"];
/// Units of a reaction enthalpy.
const ENTHALPY_UNITS: &[&str] = &["J/mol", "kJ/mol", "kcal/mol"];

fn molar_flow_to_mol_per_s(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "mol/s" => 1.0,
        "mol/min" => 1.0 / 60.0,
        "mol/h" => 1.0 / 3600.0,
        "kmol/h" => 1e3 / 3600.0,
        _ => return None,
    };
    Some(value * factor)
}

fn molar_volume_to_m3_per_mol(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "m3/mol" => 1.0,
        "L/mol" => 1e-3,
        "mL/mol" | "cm3/mol" => 1e-6,
        _ => return None,
    };
    Some(value * factor)
}

fn density_to_kg_per_m3(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "kg/m3" => 1.0,
        "kg/L" | "g/cm3" | "g/mL" => 1e3,
        _ => return None,
    };
    Some(value * factor)
}

fn enthalpy_to_j_per_mol(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "J/mol" => 1.0,
        "kJ/mol" => 1e3,
        // The thermochemical calorie, 4.184 J.
        "kcal/mol" => 4184.0,
        _ => return None,
    };
    Some(value * factor)
}

/// What a feed carries, species still named.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum FeedCarrier {
    /// One species at a molar flow (mol/s), adding `molar_volume` (m3/mol) per mole at
    /// constant density.
    Species {
        species: NamedValue,
        molar_volume_m3_per_mol: f64,
    },
    /// A solution of the given concentrations (mol/m3) at a volumetric flow (m3/s).
    Solution(Vec<NamedValue>),
    /// An ideal-gas mixture of the given mole fractions at a volumetric flow (m3/s), at the
    /// reactor's pressure and the feed temperature: c_i = x_i P / (R T_feed).
    Gas(Vec<NamedValue>),
}

/// When a feed runs and at what rate (mol/s or m3/s).
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum FeedTiming {
    /// A constant rate from `start_s` to `stop_s` (`None`: the end time).
    Constant {
        rate: f64,
        start_s: f64,
        stop_s: Option<f64>,
    },
    /// Linear between points, zero outside.
    Points { times_s: Vec<f64>, rates: Vec<f64> },
}

/// One `[[feed]]` entry as written.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct FeedSpec {
    pub(crate) carrier: FeedCarrier,
    pub(crate) timing: FeedTiming,
    /// Feed temperature (K); `None` for the reactor's temperature.
    pub(crate) temperature_k: Option<f64>,
    pub(crate) at: SourceLocation,
}

/// The mixture heat capacity as written.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum HeatCapacity {
    /// J/(kg K), with the density.
    PerMass {
        j_per_kg_k: f64,
        density_kg_per_m3: f64,
    },
    /// J/(m3 K).
    PerVolume(f64),
}

/// `[liquid]` as written, steps still named by their equations.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct LiquidSpec {
    pub(crate) heat_capacity: HeatCapacity,
    pub(crate) enthalpies: Vec<NamedValue>,
    pub(crate) at: SourceLocation,
}

/// Reads every `[[feed]]` (absent: `Some(vec![])`); `None` when one could not be read.
pub(crate) fn read_feeds(r: &mut Report<'_>, root: &DeTable<'_>) -> Option<Vec<FeedSpec>> {
    let Some(v) = root.get("feed") else {
        return Some(Vec::new());
    };
    let DeValue::Array(items) = v.get_ref() else {
        r.wrong_type(
            "feed",
            v,
            "an array of tables (write each feed as a [[feed]] section)",
        );
        return None;
    };
    let mut out = Vec::with_capacity(items.len());
    let mut ok = true;
    for item in items.iter() {
        match read_feed(r, item) {
            Some(f) => out.push(f),
            None => ok = false,
        }
    }
    ok.then_some(out)
}

/// A rate key: a quantity (constant) or `{ times = [...], rates = [...] }`.
enum RateValue {
    Constant(f64),
    Points(Vec<f64>, Vec<f64>),
}

fn read_rate(
    r: &mut Report<'_>,
    key: &str,
    v: &Value<'_>,
    unit: &str,
    convert: Converter,
    units: &[&str],
) -> Option<RateValue> {
    let non_negative = |r: &mut Report<'_>, x: f64, at: usize| {
        if x.is_finite() && x >= 0.0 {
            Some(x)
        } else {
            r.error(
                at,
                format!(
                    "`{key}` rate is {}; it must be finite and not negative",
                    show_number(x)
                ),
                None,
            );
            None
        }
    };
    let DeValue::Table(table) = v.get_ref() else {
        let x = quantity(r, key, v, unit, convert, units)?;
        return non_negative(r, x, v.span().start).map(RateValue::Constant);
    };
    r.check_keys(table, SCHEDULE_KEYS, key);
    let at = v.span().start;
    let list = |r: &mut Report<'_>, name: &str, unit: &str, convert: Converter, units: &[&str]| {
        let Some(value) = table.get(name) else {
            r.error(at, format!("`{key}` needs `{name}`"), None);
            return None;
        };
        let DeValue::Array(items) = value.get_ref() else {
            r.wrong_type(name, value, "an array");
            return None;
        };
        let mut out = Vec::with_capacity(items.len());
        for item in items.iter() {
            out.push((
                quantity(r, name, item, unit, convert, units)?,
                item.span().start,
            ));
        }
        Some(out)
    };
    let times = list(r, "times", "s", time_to_s, SCENARIO_TIME_UNITS);
    let rates = list(r, "rates", unit, convert, units);
    let (times, rates) = (times?, rates?);
    if times.len() < 2 || times.len() != rates.len() {
        r.error(
            at,
            format!(
                "`{key}` needs as many rates as times (at least two), got {} and {}",
                times.len(),
                rates.len()
            ),
            None,
        );
        return None;
    }
    let mut good = true;
    for (i, &(t, pos)) in times.iter().enumerate() {
        if !(t.is_finite() && t >= 0.0) || (i > 0 && t <= times[i - 1].0) {
            r.error(
                pos,
                format!(
                    "`{key}` times must be finite, not negative and strictly increasing: {} s",
                    show_number(t)
                ),
                None,
            );
            good = false;
        }
    }
    for &(x, pos) in &rates {
        good &= non_negative(r, x, pos).is_some();
    }
    good.then(|| {
        RateValue::Points(
            times.iter().map(|t| t.0).collect(),
            rates.iter().map(|x| x.0).collect(),
        )
    })
}

fn read_feed(r: &mut Report<'_>, item: &Value<'_>) -> Option<FeedSpec> {
    let t = r.table("feed", item)?;
    r.check_keys(t, FEED_KEYS, "[[feed]]");
    let at = item.span().start;
    let location = r.location(at);
    let hint = "e.g. species = \"A\" with molar_flow = \"0.2 mol/s\", or concentrations = { A = \"4 mol/L\" } with volumetric_flow = \"1 L/min\"";
    let rate = match (t.get("molar_flow"), t.get("volumetric_flow")) {
        (Some(v), None) => read_rate(
            r,
            "molar_flow",
            v,
            "mol/s",
            molar_flow_to_mol_per_s,
            MOLAR_FLOW_UNITS,
        )
        .map(|x| (true, x)),
        (None, Some(v)) => read_rate(
            r,
            "volumetric_flow",
            v,
            "m3/s",
            volumetric_flow_to_m3_per_s,
            VOLUMETRIC_FLOW_UNITS,
        )
        .map(|x| (false, x)),
        (Some(_), Some(v)) => {
            r.error(
                v.span().start,
                "give `molar_flow` (of one species) or `volumetric_flow` (of a solution) in a [[feed]], not both",
                None,
            );
            None
        }
        (None, None) => {
            r.error(
                at,
                "[[feed]] needs its rate: `molar_flow` or `volumetric_flow`",
                Some(hint.to_string()),
            );
            None
        }
    };
    // Which stream the feed is follows from its rate key, read or not.
    let molar = match (
        t.contains_key("molar_flow"),
        t.contains_key("volumetric_flow"),
    ) {
        (true, false) => Some(true),
        (false, true) => Some(false),
        _ => None,
    };
    // What the feed carries: `species` with a molar flow, `concentrations` with a volumetric
    // flow.
    let carrier = match molar {
        Some(true) => {
            for key in ["concentrations", "concentration_unit", "mole_fractions"] {
                if let Some(v) = t.get(key) {
                    r.error(
                        v.span().start,
                        format!("`{key}` goes with `volumetric_flow`; a `molar_flow` feeds one `species`"),
                        None,
                    );
                }
            }
            let species = match t.get("species") {
                Some(v) => r.string("species", v).map(|name| NamedValue {
                    name: name.to_string(),
                    value: 0.0,
                    location: r.location(v.span().start),
                }),
                None => {
                    r.error(
                        at,
                        "a [[feed]] with `molar_flow` needs `species`",
                        Some(hint.to_string()),
                    );
                    None
                }
            };
            let molar_volume = match t.get("molar_volume") {
                None => Some(0.0),
                Some(v) => quantity(
                    r,
                    "molar_volume",
                    v,
                    "m3/mol",
                    molar_volume_to_m3_per_mol,
                    MOLAR_VOLUME_UNITS,
                )
                .and_then(|x| {
                    if x.is_finite() && x >= 0.0 {
                        Some(x)
                    } else {
                        r.error(
                            v.span().start,
                            format!(
                                "`molar_volume` is {}; it must be finite and not negative",
                                show_number(x)
                            ),
                            None,
                        );
                        None
                    }
                }),
            };
            species
                .zip(molar_volume)
                .map(|(species, m)| FeedCarrier::Species {
                    species,
                    molar_volume_m3_per_mol: m,
                })
        }
        Some(false) => {
            for key in ["species", "molar_volume"] {
                if let Some(v) = t.get(key) {
                    r.error(
                        v.span().start,
                        format!("`{key}` goes with `molar_flow`; a `volumetric_flow` feeds a solution of `concentrations`"),
                        None,
                    );
                }
            }
            let unit = match t.get("concentration_unit") {
                None => Some(ConcentrationUnit::MolPerM3),
                Some(v) => concentration_unit(r, "concentration_unit", v),
            };
            match (t.get("concentrations"), t.get("mole_fractions")) {
                (Some(_), Some(v)) => {
                    r.error(
                        v.span().start,
                        "give `concentrations` or `mole_fractions` in a [[feed]], not both",
                        None,
                    );
                    None
                }
                (None, Some(v)) => {
                    let table = r.table("mole_fractions", v)?;
                    let values = named_values(r, table, |r, name, value| {
                        let x = r.number(name, value)?;
                        if !(0.0..=1.0).contains(&x) {
                            r.error(
                                value.span().start,
                                format!(
                                    "mole fraction of `{name}` is {}; it must be between 0 and 1",
                                    show_number(x)
                                ),
                                None,
                            );
                            return None;
                        }
                        Some(x)
                    })?;
                    let sum: f64 = values.iter().map(|n| n.value).sum();
                    if (sum - 1.0).abs() > crate::file::MOLE_FRACTION_SUM_TOLERANCE {
                        r.error(
                            v.span().start,
                            format!("feed mole fractions sum to {sum}, not 1"),
                            None,
                        );
                        return None;
                    }
                    Some(FeedCarrier::Gas(values))
                }
                (None, None) => {
                    r.error(
                        at,
                        "a [[feed]] with `volumetric_flow` needs `concentrations` (or, for a gas, `mole_fractions`)",
                        Some(hint.to_string()),
                    );
                    None
                }
                (Some(v), None) => {
                    let factor = unit.map(|u| u.to_si_factor());
                    let table = r.table("concentrations", v)?;
                    named_values(r, table, |r, name, value| {
                        let x = concentration(r, name, value, factor)?;
                        if !(x.is_finite() && x >= 0.0) {
                            r.error(
                                value.span().start,
                                format!(
                                    "feed concentration of `{name}` is {}; it must be finite and not negative",
                                    show_number(x)
                                ),
                                None,
                            );
                            return None;
                        }
                        Some(x)
                    })
                    .map(FeedCarrier::Solution)
                }
            }
        }
        None => None,
    };
    let time = |r: &mut Report<'_>, key: &str| -> Option<Option<f64>> {
        let Some(v) = t.get(key) else {
            return Some(None);
        };
        let x = quantity(r, key, v, "s", time_to_s, SCENARIO_TIME_UNITS)?;
        if !(x.is_finite() && x >= 0.0) {
            r.error(
                v.span().start,
                format!(
                    "`{key}` is {} s; it must be finite and not negative",
                    show_number(x)
                ),
                None,
            );
            return None;
        }
        Some(Some(x))
    };
    let start = time(r, "start");
    let stop = time(r, "stop");
    let timing = match rate {
        Some((_, RateValue::Constant(rate))) => {
            let (start, stop) = (start?, stop?);
            let start_s = start.unwrap_or(0.0);
            if let Some(stop_s) = stop {
                if stop_s <= start_s {
                    let pos = t.get("stop").map_or(at, |v| v.span().start);
                    r.error(
                        pos,
                        format!(
                            "`stop` ({} s) must come after `start` ({} s)",
                            show_number(stop_s),
                            show_number(start_s)
                        ),
                        None,
                    );
                    return None;
                }
            }
            Some(FeedTiming::Constant {
                rate,
                start_s,
                stop_s: stop,
            })
        }
        Some((_, RateValue::Points(times_s, rates))) => {
            for key in ["start", "stop"] {
                if let Some(v) = t.get(key) {
                    r.error(
                        v.span().start,
                        format!("`{key}` is for a constant rate; a rate given by points is zero before its first time and after its last"),
                        None,
                    );
                }
            }
            Some(FeedTiming::Points { times_s, rates })
        }
        None => None,
    };
    let temperature_k = match t.get("temperature") {
        None => Some(None),
        Some(v) => quantity(
            r,
            "temperature",
            v,
            "K",
            temperature_to_k,
            TEMPERATURE_UNITS,
        )
        .and_then(|x| {
            require_in_range(
                r,
                "temperature",
                v.span().start,
                x,
                TEMPERATURE_RANGE_K,
                "K",
            )
        })
        .map(Some),
    };
    Some(FeedSpec {
        carrier: carrier?,
        timing: timing?,
        temperature_k: temperature_k?,
        at: location,
    })
}

/// Reads `[liquid]` (absent: `Some(None)`); `None` when it could not be read.
pub(crate) fn read_liquid(r: &mut Report<'_>, root: &DeTable<'_>) -> Option<Option<LiquidSpec>> {
    let Some(v) = root.get("liquid") else {
        return Some(None);
    };
    let at = v.span().start;
    let t = r.table("liquid", v)?;
    r.check_keys(t, LIQUID_KEYS, "[liquid]");
    let hint = "e.g. heat_capacity = \"2.1 kJ/(kg K)\" with density = \"950 kg/m3\", or heat_capacity = \"2.0 MJ/(m3 K)\"";
    let capacity = match t.get("heat_capacity") {
        None => {
            r.error(
                at,
                "[liquid] needs the mixture's `heat_capacity` (per mass with `density`, or per volume)",
                Some(hint.to_string()),
            );
            None
        }
        Some(v) => read_heat_capacity(r, v),
    };
    let density = match t.get("density") {
        None => Some(None),
        Some(v) => quantity(
            r,
            "density",
            v,
            "kg/m3",
            density_to_kg_per_m3,
            DENSITY_UNITS,
        )
        .and_then(|x| require_positive(r, "density", v, x))
        .map(Some),
    };
    let heat_capacity = match (capacity, density) {
        (Some((x, true)), Some(Some(rho))) => Some(HeatCapacity::PerMass {
            j_per_kg_k: x,
            density_kg_per_m3: rho,
        }),
        (Some((_, true)), Some(None)) => {
            r.error(
                t.get("heat_capacity").map_or(at, |v| v.span().start),
                "a heat capacity per mass needs the mixture's `density` in [liquid]",
                Some("e.g. density = \"950 kg/m3\"".to_string()),
            );
            None
        }
        (Some((x, false)), Some(d)) => {
            if let (Some(_), Some(v)) = (d, t.get("density")) {
                r.warning(
                    v.span().start,
                    "`density` is not used with a heat capacity per volume",
                    None,
                );
            }
            Some(HeatCapacity::PerVolume(x))
        }
        _ => None,
    };
    let enthalpies = match t.get("reaction_enthalpies") {
        None => Some(Vec::new()),
        Some(v) => {
            let table = r.table("reaction_enthalpies", v)?;
            named_values(r, table, |r, name, value| {
                let x = quantity(
                    r,
                    name,
                    value,
                    "J/mol",
                    enthalpy_to_j_per_mol,
                    ENTHALPY_UNITS,
                )?;
                if !x.is_finite() {
                    r.error(
                        value.span().start,
                        format!("the reaction enthalpy of `{name}` must be finite"),
                        None,
                    );
                    return None;
                }
                Some(x)
            })
        }
    };
    Some(Some(LiquidSpec {
        heat_capacity: heat_capacity?,
        enthalpies: enthalpies?,
        at: r.location(at),
    }))
}

/// A heat capacity with its unit: (value in J/(kg K) or J/(m3 K), whether per mass). A
/// plain number is refused: the unit says which of the two it is.
fn read_heat_capacity(r: &mut Report<'_>, v: &Value<'_>) -> Option<(f64, bool)> {
    let at = v.span().start;
    let Some(text) = v.get_ref().as_str() else {
        r.error(
            at,
            "`heat_capacity` needs its unit, per mass or per volume: \"VALUE UNIT\"",
            Some(format!("accepted: {}", HEAT_CAPACITY_UNITS.join(", "))),
        );
        return None;
    };
    let parsed = stoik_mechanism::split_quantity(text);
    let (x, unit) = match parsed {
        Ok(p) => p,
        Err(message) => {
            r.error(at, format!("`heat_capacity`: {message}"), None);
            return None;
        }
    };
    let unit = unit.split_whitespace().collect::<Vec<_>>().join(" ");
    let (factor, per_mass) = match unit.as_str() {
        "J/(kg K)" => (1.0, true),
        "kJ/(kg K)" => (1e3, true),
        "J/(m3 K)" => (1.0, false),
        "kJ/(m3 K)" => (1e3, false),
        "MJ/(m3 K)" => (1e6, false),
        _ => {
            let help = nearest_name(&unit, HEAT_CAPACITY_UNITS.iter().copied())
                .map(|near| format!("did you mean `{near}`?"));
            r.error(
                at,
                format!(
                    "unknown unit `{unit}` for `heat_capacity`; accepted: {}",
                    HEAT_CAPACITY_UNITS.join(", ")
                ),
                help,
            );
            return None;
        }
    };
    let x = x * factor;
    if !(x.is_finite() && x > 0.0) {
        r.error(
            at,
            format!(
                "`heat_capacity` is {}; it must be finite and positive",
                show_number(x)
            ),
            None,
        );
        return None;
    }
    Some((x, per_mass))
}

/// Equation text with runs of white space collapsed, for matching steps by equation.
fn normalized(equation: &str) -> String {
    equation.split_whitespace().collect::<Vec<_>>().join(" ")
}

impl LiquidSpec {
    /// The reactor's liquid phase: one enthalpy per step, matched by equation (white space
    /// aside). Every step needs one when `energy_solved`; unlisted steps count 0 otherwise.
    /// Reversible steps whose reverse needs thermochemistry are refused. `None` after
    /// recording the problems.
    pub(crate) fn resolve(
        &self,
        mechanism: &Mechanism,
        energy_solved: bool,
        file: &str,
        diagnostics: &mut Vec<Diagnostic>,
    ) -> Option<LiquidPhase> {
        let start = diagnostics.len();
        let steps: Vec<String> = mechanism
            .steps
            .iter()
            .map(|s| normalized(&s.equation))
            .collect();
        let mut enthalpies = vec![None; steps.len()];
        for named in &self.enthalpies {
            let wanted = normalized(&named.name);
            let matches: Vec<usize> = (0..steps.len()).filter(|&j| steps[j] == wanted).collect();
            match matches.as_slice() {
                [j] => enthalpies[*j] = Some(named.value),
                [] => {
                    let mut d = Diagnostic::error(
                        file,
                        Some(named.location),
                        format!("no step of the mechanism has the equation `{}`", named.name),
                    );
                    if let Some(near) = nearest_name(
                        &named.name,
                        mechanism.steps.iter().map(|s| s.equation.as_str()),
                    ) {
                        d = d.with_help(format!("did you mean `{near}`?"));
                    }
                    diagnostics.push(d);
                }
                _ => diagnostics.push(Diagnostic::error(
                    file,
                    Some(named.location),
                    format!(
                        "{} steps have the equation `{}`; a reaction enthalpy needs exactly one",
                        matches.len(),
                        named.name
                    ),
                )),
            }
        }
        let missing: Vec<&str> = mechanism
            .steps
            .iter()
            .zip(&enthalpies)
            .filter(|(_, h)| h.is_none())
            .map(|(s, _)| s.equation.as_str())
            .collect();
        if energy_solved && !missing.is_empty() {
            diagnostics.push(
                Diagnostic::error(
                    file,
                    Some(self.at),
                    format!(
                        "the energy balance of the liquid phase needs a reaction enthalpy for every step; `reaction_enthalpies` has none for {}",
                        missing
                            .iter()
                            .map(|e| format!("`{e}`"))
                            .collect::<Vec<_>>()
                            .join(", ")
                    ),
                )
                .with_help("give each step's enthalpy, e.g. \"A -> B\" = \"-80 kJ/mol\" (0 for a thermoneutral step)"),
            );
        }
        for step in mechanism.steps.iter().filter(|s| s.reverse_from_thermo()) {
            diagnostics.push(
                Diagnostic::error(
                    file,
                    Some(self.at),
                    format!(
                        "step `{}` is reversible without explicit reverse parameters: its reverse rate constant needs an equilibrium constant from species thermochemistry, which the liquid-phase description does not use",
                        step.equation
                    ),
                )
                .with_help("give the step explicit reverse parameters in the mechanism, or make it irreversible (`->`)"),
            );
        }
        if diagnostics.len() > start {
            return None;
        }
        let dh: Vec<f64> = enthalpies.iter().map(|h| h.unwrap_or(0.0)).collect();
        let phase = match self.heat_capacity {
            HeatCapacity::PerMass {
                j_per_kg_k,
                density_kg_per_m3,
            } => LiquidPhase::per_mass(j_per_kg_k, density_kg_per_m3, dh),
            HeatCapacity::PerVolume(x) => LiquidPhase::per_volume(x, dh),
        };
        match phase {
            Ok(p) => Some(p),
            Err(e) => {
                diagnostics.push(Diagnostic::error(file, Some(self.at), e.to_string()));
                None
            }
        }
    }
}

impl FeedSpec {
    /// The reactor's feed: species matched, the temperature the reactor's when not given, a
    /// constant rate's window ending at the scenario's end time when `stop` is not given,
    /// mole fractions at the scenario's pressure. `None` after recording the problems.
    pub(crate) fn resolve(
        &self,
        scenario: &Scenario,
        n_species: usize,
        species: &SpeciesLookup<'_>,
        diagnostics: &mut Vec<Diagnostic>,
    ) -> Option<Feed> {
        let (reactor_temperature_k, pressure_pa, end_time_s) = (
            scenario.temperature_k,
            scenario.pressure_pa,
            scenario.end_time_s,
        );
        let file = scenario.file_label();
        let schedule = match &self.timing {
            FeedTiming::Constant {
                rate,
                start_s,
                stop_s,
            } => {
                let stop = stop_s.unwrap_or(end_time_s);
                if stop <= *start_s {
                    diagnostics.push(Diagnostic::error(
                        file,
                        Some(self.at),
                        format!(
                            "the feed starts at {} s, at or after the end of the run ({} s)",
                            show_number(*start_s),
                            show_number(stop)
                        ),
                    ));
                    return None;
                }
                FeedSchedule::window(*start_s, stop, *rate)
            }
            FeedTiming::Points { times_s, rates } => {
                FeedSchedule::points(times_s.clone(), rates.clone())
            }
        };
        let temperature_k = self.temperature_k.unwrap_or(reactor_temperature_k);
        let feed = match &self.carrier {
            FeedCarrier::Species {
                species: named,
                molar_volume_m3_per_mol,
            } => {
                let i = species.find(named, "[[feed]] species", diagnostics)?;
                schedule.and_then(|s| Feed::species(i, *molar_volume_m3_per_mol, s, temperature_k))
            }
            FeedCarrier::Solution(values) | FeedCarrier::Gas(values) => {
                let (what, scale) = match &self.carrier {
                    FeedCarrier::Gas(_) => match pressure_pa {
                        Some(p) => (
                            "[[feed]] mole_fractions",
                            p / (GAS_CONSTANT * temperature_k),
                        ),
                        None => {
                            diagnostics.push(
                                Diagnostic::error(
                                    file,
                                    Some(self.at),
                                    "feed `mole_fractions` need `pressure` in [reactor] (c_i = x_i P / (R T_feed))",
                                )
                                .with_help("e.g. pressure = \"1 atm\""),
                            );
                            return None;
                        }
                    },
                    _ => ("[[feed]] concentrations", 1.0),
                };
                let mut c = vec![0.0; n_species];
                let mut ok = true;
                for named in values {
                    match species.find(named, what, diagnostics) {
                        Some(i) => c[i] += named.value * scale,
                        None => ok = false,
                    }
                }
                if !ok {
                    return None;
                }
                schedule.and_then(|s| Feed::volumetric(c, s, temperature_k))
            }
        };
        match feed {
            Ok(f) => Some(f),
            Err(e) => {
                diagnostics.push(Diagnostic::error(file, Some(self.at), e.to_string()));
                None
            }
        }
    }
}
