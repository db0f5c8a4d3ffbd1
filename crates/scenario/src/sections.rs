//! One reader per section of the scenario file: `[reactor]`, `[initial]`, `[output]`,
//! `[solver]` and `[ignition]` (the box sections are in `box_sections.rs`). Each reports its
//! own problems; a field is `None` when its value could not be read.

use crate::file::{
    parse_kind, IgnitionSpec, InitialState, OutputTimes, Thermal, LINEAR_ALGEBRA_NAMES,
    MAX_END_TIME_S, MAX_GRID_POINTS, MOLE_FRACTION_SUM_TOLERANCE, PRESSURE_RANGE_PA, REACTOR_KINDS,
    TEMPERATURE_RANGE_K,
};
use crate::read::{
    bare_name, concentration, concentration_unit, named_values, quantity, require_in_range,
    require_positive, section, Converter,
};
use stoik_mechanism::SourceLocation;
use stoik_mechanism::{
    pressure_to_pa, temperature_to_k, time_to_s, ConcentrationUnit, PRESSURE_UNITS,
    SCENARIO_TIME_UNITS, TEMPERATURE_UNITS,
};
use stoik_mechanism::{show_number, Report, SpannedValue as Value};
use stoik_reactor::{Constraint, Energy, HeatExchange, LinearAlgebra, TemperatureHistory};
use toml::de::{DeTable, DeValue};

const REACTOR_KEYS: &[&str] = &[
    "kind",
    "temperature",
    "pressure",
    "temperature_history",
    "ua",
    "ua_history",
    "volume",
    "coolant_temperature",
    "coolant_temperature_history",
];
/// The keys of a jacketed reactor's heat exchange.
const JACKET_KEYS: &[&str] = &[
    "ua",
    "ua_history",
    "volume",
    "coolant_temperature",
    "coolant_temperature_history",
];
/// Units of U A (heat-transfer coefficient times area).
pub(crate) const UA_UNITS: &[&str] = &["W/K", "kW/K"];
/// Units of a reactor volume.
pub(crate) const VOLUME_UNITS: &[&str] = &["m3", "L", "mL", "cm3"];

/// Converts U A in `unit` (W/K, kW/K) to W/K.
pub(crate) fn ua_to_w_per_k(value: f64, unit: &str) -> Option<f64> {
    match unit {
        "W/K" => Some(value),
        "kW/K" => Some(value * 1e3),
        _ => None,
    }
}

/// Converts a volume in `unit` (m3, L, mL, cm3) to m3.
pub(crate) fn volume_to_m3(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "m3" => 1.0,
        "L" => 1e-3,
        "mL" | "cm3" => 1e-6,
        _ => return None,
    };
    Some(value * factor)
}
const HISTORY_KEYS: &[&str] = &["times", "temperatures"];
/// The keys of `ua_history`.
const UA_HISTORY_KEYS: &[&str] = &["times", "values"];
const IGNITION_KEYS: &[&str] = &["criterion", "species", "rise"];
const IGNITION_CRITERIA: &[&str] = &["max-temperature-rate", "species-peak", "temperature-rise"];
const INITIAL_KEYS: &[&str] = &["concentrations", "concentration_unit", "mole_fractions"];
const OUTPUT_KEYS: &[&str] = &["end_time", "times", "grid", "concentration_unit"];
const GRID_KEYS: &[&str] = &["spacing", "points", "first"];
const SOLVER_KEYS: &[&str] = &[
    "relative_tolerance",
    "absolute_tolerance",
    "absolute_tolerance_for",
    "linear_algebra",
    "max_steps",
    "newton_tolerance",
    "wall_time_limit",
    "keep_invariants",
];

/// What `[reactor]` says.
pub(crate) struct ReactorSection {
    pub(crate) constraint: Option<Constraint>,
    /// `None` when the kind or the temperature history could not be read.
    pub(crate) energy: Option<Energy>,
    pub(crate) temperature_k: Option<f64>,
    pub(crate) pressure_pa: Option<f64>,
    pub(crate) pressure_given: bool,
    /// `[reactor] volume` (m3): the initial volume of a semi-batch or of a closed
    /// constant-pressure jacketed batch (their volume is a state).
    pub(crate) volume_m3: Option<f64>,
}

/// Reads `[reactor]`: kind, temperature (or history), pressure, and the volume and heat
/// exchange of jacketed kinds. With `[[feed]]` (`has_feeds`) the volume is required (the
/// initial volume of the semi-batch) and a jacket's U A is a total over the volume state, as
/// for a closed constant-pressure jacketed batch (without `[flow]`, `has_flow`).
pub(crate) fn read_reactor(
    r: &mut Report<'_>,
    root: &DeTable<'_>,
    has_feeds: bool,
    has_flow: bool,
) -> ReactorSection {
    let mut out = ReactorSection {
        constraint: Some(Constraint::ConstantVolume),
        energy: Some(Energy::Isothermal),
        temperature_k: None,
        pressure_pa: None,
        pressure_given: false,
        volume_m3: None,
    };
    let Some(t) = section(r, root, "reactor", REACTOR_KEYS) else {
        if !root.contains_key("reactor") {
            r.file_error(
                "missing [reactor] section",
                Some("e.g. [reactor] temperature = \"1000 K\"".to_string()),
            );
        }
        return out;
    };
    let mut thermal = Some(Thermal::Isothermal);
    if let Some(v) = t.get("kind") {
        let kind = r.one_of("kind", v, "reactor kind", &REACTOR_KINDS, parse_kind);
        out.constraint = kind.map(|k| k.0);
        thermal = kind.map(|k| k.1);
    }
    let prescribed = thermal == Some(Thermal::Prescribed);
    let mut history = None;
    match t.get("temperature_history") {
        Some(v) if prescribed => history = read_history(r, "temperature_history", v),
        Some(v) => r.error(
            v.span().start,
            "`temperature_history` is only for the prescribed-temperature reactor kinds",
            Some("e.g. kind = \"prescribed-temperature-constant-volume\"".to_string()),
        ),
        None if prescribed => r.error(
            0,
            "missing `temperature_history` in [reactor] for a prescribed-temperature kind",
            Some(
                "e.g. temperature_history = { times = [\"0 s\", \"1 ms\"], temperatures = [\"1000 K\", \"1200 K\"] }"
                    .to_string(),
            ),
        ),
        None => {}
    }
    let jacket = if thermal == Some(Thermal::Jacketed) {
        let at = t.get("kind").map_or(0, |v| v.span().start);
        read_jacket(r, t, at).and_then(|(ua, volume, coolant)| {
            out.volume_m3 = Some(volume);
            let closed_constant_pressure =
                out.constraint == Some(Constraint::ConstantPressure) && !has_flow;
            let total = has_feeds || closed_constant_pressure;
            let exchange = match &ua {
                Ua::Constant(ua) if total => HeatExchange::total(*ua, coolant).ok(),
                Ua::Constant(ua) => HeatExchange::new(ua / volume, coolant).ok(),
                Ua::History(times, values) if total => HeatExchange::total(values[0], coolant)
                    .and_then(|x| x.with_ua_history(times.clone(), values.clone()))
                    .ok(),
                Ua::History(times, values) => HeatExchange::new(values[0] / volume, coolant)
                    .and_then(|x| {
                        x.with_ua_history(
                            times.clone(),
                            values.iter().map(|v| v / volume).collect(),
                        )
                    })
                    .ok(),
            };
            exchange
        })
    } else {
        if has_feeds {
            match t.get("volume") {
                Some(v) => {
                    out.volume_m3 = quantity(r, "volume", v, "m3", volume_to_m3, VOLUME_UNITS)
                        .and_then(|x| require_positive(r, "volume", v, x));
                }
                None => r.error(
                    t.get("kind").map_or(0, |v| v.span().start),
                    "missing `volume` in [reactor]: a reactor with [[feed]] needs its initial volume",
                    Some("e.g. volume = \"0.5 m3\"".to_string()),
                ),
            }
        }
        for key in JACKET_KEYS {
            if has_feeds && *key == "volume" {
                continue;
            }
            if let Some(v) = t.get(*key) {
                r.error(
                    v.span().start,
                    format!("`{key}` is only for the jacketed reactor kind"),
                    Some("e.g. kind = \"jacketed-constant-volume\"".to_string()),
                );
            }
        }
        None
    };
    out.energy = match thermal {
        Some(Thermal::Isothermal) => Some(Energy::Isothermal),
        Some(Thermal::Adiabatic) => Some(Energy::Adiabatic),
        Some(Thermal::Prescribed) => history.clone().map(Energy::Prescribed),
        Some(Thermal::Jacketed) => jacket.map(Energy::HeatExchange),
        None => None,
    };
    match t.get("temperature") {
        None if prescribed => {
            out.temperature_k = history.as_ref().map(|h| h.temperature_at(0.0));
        }
        None => r.error(
            0,
            "missing `temperature` in [reactor]",
            Some("e.g. temperature = \"1000 K\"".to_string()),
        ),
        Some(v) => {
            out.temperature_k = quantity(
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
            });
        }
    }
    if let Some(v) = t.get("pressure") {
        out.pressure_given = true;
        out.pressure_pa = quantity(r, "pressure", v, "Pa", pressure_to_pa, PRESSURE_UNITS)
            .and_then(|x| {
                require_in_range(r, "pressure", v.span().start, x, PRESSURE_RANGE_PA, "Pa")
            });
    }
    out
}

/// The heat exchange of a jacketed reactor: `ua` and `volume` (U A / V), and the coolant's
/// temperature, fixed (`coolant_temperature`) or as a history
/// (`coolant_temperature_history`, as `temperature_history`).
/// A jacket's U A: constant (W/K) or through a history (times in s, U A in W/K).
pub(crate) enum Ua {
    Constant(f64),
    History(Vec<f64>, Vec<f64>),
}

/// Reads `ua_history = { times = [...], values = [...] }`: U A (W/K, kW/K) against time,
/// equal lengths, at least one point, the first time 0, times strictly increasing, values
/// finite and not negative; every problem at its item.
fn read_ua_history(r: &mut Report<'_>, value: &Value<'_>) -> Option<Ua> {
    read_ua_history_as(r, value, "ua_history")
}

/// [`read_ua_history`] for the key `key` (messages name it).
pub(crate) fn read_ua_history_as(r: &mut Report<'_>, value: &Value<'_>, key: &str) -> Option<Ua> {
    let table = r.table(key, value)?;
    r.check_keys(table, UA_HISTORY_KEYS, key);
    let at = value.span().start;
    let times = located_list(
        r,
        table,
        at,
        key,
        "times",
        "s",
        time_to_s,
        SCENARIO_TIME_UNITS,
    );
    let values = located_list(r, table, at, key, "values", "W/K", ua_to_w_per_k, UA_UNITS);
    let (times, values) = (times?, values?);
    if times.is_empty() || times.len() != values.len() {
        r.error(
            at,
            format!(
                "`{key}` needs as many values as times (at least one), got {} and {}",
                times.len(),
                values.len()
            ),
            Some("e.g. ua_history = { times = [\"0 h\", \"6 h\", \"6.1 h\"], values = [\"2.5 kW/K\", \"2.5 kW/K\", \"0 W/K\"] }".to_string()),
        );
        return None;
    }
    let mut ok = check_history_times(r, key, &times);
    for &(x, pos) in &values {
        if !(x.is_finite() && x >= 0.0) {
            r.error(
                pos,
                format!(
                    "`{key}` values must be finite and not negative, got {} W/K",
                    show_number(x)
                ),
                None,
            );
            ok = false;
        }
    }
    ok.then(|| {
        Ua::History(
            times.iter().map(|t| t.0).collect(),
            values.iter().map(|v| v.0).collect(),
        )
    })
}

fn read_jacket(
    r: &mut Report<'_>,
    t: &DeTable<'_>,
    at: usize,
) -> Option<(Ua, f64, TemperatureHistory)> {
    let hint = "e.g. ua = \"250 W/K\", volume = \"50 L\", coolant_temperature = \"300 K\"";
    let positive = |r: &mut Report<'_>, key: &str, unit: &str, convert: Converter, units| {
        let Some(v) = t.get(key) else {
            r.error(
                at,
                format!("missing `{key}` in [reactor] for the jacketed kind"),
                Some(hint.to_string()),
            );
            return None;
        };
        let x = quantity(r, key, v, unit, convert, units)?;
        if !(x.is_finite() && x >= 0.0) || (key == "volume" && x <= 0.0) {
            let what = if key == "volume" {
                "positive"
            } else {
                "not negative"
            };
            r.error(
                v.span().start,
                format!("`{key}` must be finite and {what}, got {}", show_number(x)),
                None,
            );
            return None;
        }
        Some(x)
    };
    let ua = match (t.get("ua"), t.get("ua_history")) {
        (_, None) => positive(r, "ua", "W/K", ua_to_w_per_k, UA_UNITS).map(Ua::Constant),
        (None, Some(v)) => read_ua_history(r, v),
        (Some(_), Some(v)) => {
            r.error(v.span().start, "give `ua` or `ua_history`, not both", None);
            None
        }
    };
    let volume = positive(r, "volume", "m3", volume_to_m3, VOLUME_UNITS);
    let coolant = match (
        t.get("coolant_temperature"),
        t.get("coolant_temperature_history"),
    ) {
        (Some(v), None) => quantity(
            r,
            "coolant_temperature",
            v,
            "K",
            temperature_to_k,
            TEMPERATURE_UNITS,
        )
        .and_then(|x| {
            require_in_range(
                r,
                "coolant_temperature",
                v.span().start,
                x,
                TEMPERATURE_RANGE_K,
                "K",
            )
        })
        .and_then(|x| TemperatureHistory::new(vec![0.0], vec![x]).ok()),
        (None, Some(v)) => read_history(r, "coolant_temperature_history", v),
        (Some(v), Some(_)) => {
            r.error(
                v.span().start,
                "give `coolant_temperature` or `coolant_temperature_history`, not both",
                None,
            );
            None
        }
        (None, None) => {
            r.error(
                at,
                "missing `coolant_temperature` (or `coolant_temperature_history`) in [reactor] for the jacketed kind",
                Some(hint.to_string()),
            );
            None
        }
    };
    Some((ua?, volume?, coolant?))
}

/// A temperature difference in K (`"400 K"`; only kelvin: a Celsius offset would be wrong).
fn kelvin_difference(value: f64, unit: &str) -> Option<f64> {
    (unit == "K").then_some(value)
}

/// Checks the time axis of the history `key` (located times in s, at least one): it starts at
/// 0 s and is finite and strictly increasing. Reports every problem; true when there is none.
fn check_history_times(r: &mut Report<'_>, key: &str, times: &[(f64, usize)]) -> bool {
    let mut ok = true;
    if times[0].0 != 0.0 {
        r.error(
            times[0].1,
            format!("the first time of `{key}` must be 0 s"),
            None,
        );
        ok = false;
    }
    for (i, &(t, pos)) in times.iter().enumerate() {
        if !t.is_finite() || (i > 0 && t <= times[i - 1].0) {
            r.error(
                pos,
                format!(
                    "`{key}` times must be finite and strictly increasing: {} s",
                    show_number(t)
                ),
                None,
            );
            ok = false;
        }
    }
    ok
}

/// Reads an array of quantities `key` of `table` (at `at`), each with its byte offset.
#[allow(clippy::too_many_arguments)]
pub(crate) fn located_list(
    r: &mut Report<'_>,
    table: &DeTable<'_>,
    at: usize,
    history: &str,
    key: &str,
    unit: &str,
    convert: Converter,
    accepted: &[&str],
) -> Option<Vec<(f64, usize)>> {
    let Some(v) = table.get(key) else {
        r.error(at, format!("`{history}` needs `{key}`"), None);
        return None;
    };
    let DeValue::Array(items) = v.get_ref() else {
        r.wrong_type(key, v, "an array");
        return None;
    };
    let mut out = Vec::with_capacity(items.len());
    for item in items.iter() {
        out.push((
            quantity(r, key, item, unit, convert, accepted)?,
            item.span().start,
        ));
    }
    Some(out)
}

/// Reads a history `key = { times = [...], temperatures = [...] }`: equal lengths, at
/// least one point, times finite, >= 0 and strictly increasing, starting at 0; temperatures
/// positive.
fn read_history(r: &mut Report<'_>, key: &str, value: &Value<'_>) -> Option<TemperatureHistory> {
    let table = r.table(key, value)?;
    r.check_keys(table, HISTORY_KEYS, key);
    let at = value.span().start;
    let times = located_list(
        r,
        table,
        at,
        key,
        "times",
        "s",
        time_to_s,
        SCENARIO_TIME_UNITS,
    );
    let temperatures = located_list(
        r,
        table,
        at,
        key,
        "temperatures",
        "K",
        temperature_to_k,
        TEMPERATURE_UNITS,
    );
    let (times, temperatures) = (times?, temperatures?);
    if times.is_empty() || times.len() != temperatures.len() {
        r.error(
            at,
            format!(
                "`{key}` needs as many temperatures as times (at least one), got {} and {}",
                times.len(),
                temperatures.len()
            ),
            None,
        );
        return None;
    }
    let mut ok = check_history_times(r, key, &times);
    for &(x, pos) in &temperatures {
        if require_in_range(r, "temperature", pos, x, TEMPERATURE_RANGE_K, "K").is_none() {
            ok = false;
        }
    }
    if !ok {
        return None;
    }
    let history = TemperatureHistory::new(
        times.iter().map(|t| t.0).collect(),
        temperatures.iter().map(|t| t.0).collect(),
    );
    match history {
        Ok(h) => Some(h),
        Err(e) => {
            r.error(at, e.to_string(), None);
            None
        }
    }
}

/// Reads `[initial]`: concentrations (with their unit) or mole fractions (which need the
/// pressure, `pressure_given`).
pub(crate) fn read_initial(
    r: &mut Report<'_>,
    root: &DeTable<'_>,
    pressure_given: bool,
) -> Option<InitialState> {
    let Some(t) = section(r, root, "initial", INITIAL_KEYS) else {
        if !root.contains_key("initial") {
            r.file_error(
                "missing [initial] section",
                Some("give `concentrations = { ... }` or `mole_fractions = { ... }`".to_string()),
            );
        }
        return None;
    };
    let at = root.get("initial").map(|v| v.span().start).unwrap_or(0);
    read_composition(
        r,
        t,
        at,
        [
            "initial",
            "concentrations",
            "mole_fractions",
            "initial concentration",
        ],
        pressure_given,
    )
}

/// Reads a composition from table `t` (located at `at`): concentrations under `keys[1]`
/// (with `concentration_unit`) or mole fractions under `keys[2]`, which need the pressure
/// (`pressure_given`). `keys[0]` names the section, `keys[3]` the quantity in messages.
fn read_composition(
    r: &mut Report<'_>,
    t: &DeTable<'_>,
    at: usize,
    keys: [&str; 4],
    pressure_given: bool,
) -> Option<InitialState> {
    let [section_name, conc_key, frac_key, what] = keys;
    let unit = match t.get("concentration_unit") {
        None => Some(ConcentrationUnit::MolPerM3),
        Some(v) => concentration_unit(r, "concentration_unit", v),
    };
    match (t.get_key_value(conc_key), t.get_key_value(frac_key)) {
        (Some(_), Some((key, _))) => {
            r.error(
                key.span().start,
                format!("give either `{conc_key}` or `{frac_key}` in [{section_name}], not both"),
                None,
            );
            None
        }
        (None, None) => {
            r.error(
                at,
                format!("[{section_name}] needs `{conc_key}` or `{frac_key}`"),
                None,
            );
            None
        }
        (Some((_, v)), None) => {
            let factor = unit.map(|u| u.to_si_factor());
            let table = r.table(conc_key, v)?;
            let values = named_values(r, table, |r, name, value| {
                let x = concentration(r, name, value, factor)?;
                if x.is_nan() || x.is_infinite() || x < 0.0 {
                    r.error(
                        value.span().start,
                        format!(
                            "{what} of `{name}` is {}; it must be finite and not negative",
                            show_number(x)
                        ),
                        None,
                    );
                    return None;
                }
                Some(x)
            });
            unit?;
            values.map(InitialState::Concentrations)
        }
        (None, Some((key, v))) => {
            if let Some(unit_value) = t.get("concentration_unit") {
                r.warning(
                    unit_value.span().start,
                    format!(
                        "`concentration_unit` in [{section_name}] is ignored with `{frac_key}`"
                    ),
                    None,
                );
            }
            if !pressure_given {
                r.error(
                    key.span().start,
                    format!("`{frac_key}` need `pressure` in [reactor] (c_i = x_i P / (R T))"),
                    Some("e.g. pressure = \"1 atm\"".to_string()),
                );
            }
            let table = r.table(frac_key, v)?;
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
            });
            if let Some(values) = &values {
                let sum: f64 = values.iter().map(|n| n.value).sum();
                if (sum - 1.0).abs() > MOLE_FRACTION_SUM_TOLERANCE {
                    r.error(
                        v.span().start,
                        format!("mole fractions sum to {sum}, not 1 (tolerance {MOLE_FRACTION_SUM_TOLERANCE:e})"),
                        Some("list every species with a nonzero fraction; fractions are not normalised".to_string()),
                    );
                }
            }
            values.map(InitialState::MoleFractions)
        }
    }
}

/// How the feed rate of a stirred tank is given.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum FeedRate {
    /// Residence time V / q (s).
    ResidenceTime(f64),
    /// Volumetric feed (m3/s) into a tank of the given volume (m3).
    Volumetric { m3_per_s: f64, volume_m3: f64 },
    /// Mass feed (kg/s) into a tank of the given volume (m3); the volumetric rate follows from
    /// the feed's density.
    Mass { kg_per_s: f64, volume_m3: f64 },
}

/// What `[flow]` says: the feed of a continuous stirred tank.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct FlowSpec {
    pub(crate) rate: FeedRate,
    /// Inlet temperature (K); `None` for the reactor's temperature.
    pub(crate) inlet_temperature_k: Option<f64>,
    pub(crate) inlet: InitialState,
    /// Where `[flow]` is (diagnostics of the resolution point there).
    pub(crate) at: SourceLocation,
}

const FLOW_KEYS: &[&str] = &[
    "residence_time",
    "volumetric_flow",
    "mass_flow",
    "volume",
    "inlet_temperature",
    "inlet_concentrations",
    "inlet_mole_fractions",
    "concentration_unit",
];
/// Units of a volumetric flow.
pub(crate) const VOLUMETRIC_FLOW_UNITS: &[&str] = &["m3/s", "L/s", "L/min", "mL/min", "m3/h"];
/// Units of a mass flow.
const MASS_FLOW_UNITS: &[&str] = &["kg/s", "g/s", "kg/h"];

pub(crate) fn volumetric_flow_to_m3_per_s(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "m3/s" => 1.0,
        "L/s" => 1e-3,
        "L/min" => 1e-3 / 60.0,
        "mL/min" => 1e-6 / 60.0,
        "m3/h" => 1.0 / 3600.0,
        _ => return None,
    };
    Some(value * factor)
}

fn mass_flow_to_kg_per_s(value: f64, unit: &str) -> Option<f64> {
    let factor = match unit {
        "kg/s" => 1.0,
        "g/s" => 1e-3,
        "kg/h" => 1.0 / 3600.0,
        _ => return None,
    };
    Some(value * factor)
}

/// Reads `[flow]` (absent: a closed reactor, `Some(None)`); `None` when it could not be read.
pub(crate) fn read_flow(
    r: &mut Report<'_>,
    root: &DeTable<'_>,
    pressure_given: bool,
) -> Option<Option<FlowSpec>> {
    if !root.contains_key("flow") {
        return Some(None);
    }
    let at = root.get("flow").map(|v| v.span().start).unwrap_or(0);
    let t = section(r, root, "flow", FLOW_KEYS)?;
    let positive = |r: &mut Report<'_>, key: &str, unit: &str, convert: Converter, units| {
        let v = t.get(key)?;
        let x = quantity(r, key, v, unit, convert, units)?;
        require_positive(r, key, v, x)
    };
    let hint =
        "e.g. residence_time = \"2 s\", or volumetric_flow = \"0.5 L/min\" with volume = \"2 L\"";
    let given: Vec<&str> = ["residence_time", "volumetric_flow", "mass_flow"]
        .into_iter()
        .filter(|k| t.contains_key(*k))
        .collect();
    let volume = if t.contains_key("volume") {
        positive(r, "volume", "m3", volume_to_m3, VOLUME_UNITS)
    } else {
        None
    };
    let rate = match given.as_slice() {
        ["residence_time"] => {
            if let Some(v) = t.get("volume") {
                r.warning(
                    v.span().start,
                    "`volume` in [flow] is not used with `residence_time`",
                    None,
                );
            }
            positive(r, "residence_time", "s", time_to_s, SCENARIO_TIME_UNITS)
                .map(FeedRate::ResidenceTime)
        }
        [key] => {
            let rate = if *key == "volumetric_flow" {
                positive(
                    r,
                    key,
                    "m3/s",
                    volumetric_flow_to_m3_per_s,
                    VOLUMETRIC_FLOW_UNITS,
                )
            } else {
                positive(r, key, "kg/s", mass_flow_to_kg_per_s, MASS_FLOW_UNITS)
            };
            if !t.contains_key("volume") {
                r.error(
                    at,
                    format!("`{key}` in [flow] needs the tank's `volume`"),
                    Some("e.g. volume = \"2 L\"".to_string()),
                );
            }
            match (rate, volume) {
                (Some(q), Some(v)) if *key == "volumetric_flow" => Some(FeedRate::Volumetric {
                    m3_per_s: q,
                    volume_m3: v,
                }),
                (Some(m), Some(v)) => Some(FeedRate::Mass {
                    kg_per_s: m,
                    volume_m3: v,
                }),
                _ => None,
            }
        }
        [] => {
            r.error(
                at,
                "[flow] needs the feed rate: `residence_time`, `volumetric_flow` or `mass_flow`",
                Some(hint.to_string()),
            );
            None
        }
        _ => {
            let second = t.get(given[1]).map_or(at, |v| v.span().start);
            r.error(
                second,
                format!(
                    "give one feed rate in [flow], not {}",
                    given
                        .iter()
                        .map(|k| format!("`{k}`"))
                        .collect::<Vec<_>>()
                        .join(" and ")
                ),
                None,
            );
            None
        }
    };
    let inlet_temperature_k = match t.get("inlet_temperature") {
        None => Some(None),
        Some(v) => quantity(
            r,
            "inlet_temperature",
            v,
            "K",
            temperature_to_k,
            TEMPERATURE_UNITS,
        )
        .and_then(|x| {
            require_in_range(
                r,
                "inlet_temperature",
                v.span().start,
                x,
                TEMPERATURE_RANGE_K,
                "K",
            )
        })
        .map(Some),
    };
    let inlet = read_composition(
        r,
        t,
        at,
        [
            "flow",
            "inlet_concentrations",
            "inlet_mole_fractions",
            "inlet concentration",
        ],
        pressure_given,
    );
    Some(Some(FlowSpec {
        rate: rate?,
        inlet_temperature_k: inlet_temperature_k?,
        inlet: inlet?,
        at: r.location(at),
    }))
}

/// What `[output]` says.
pub(crate) struct OutputSection {
    /// Where the output times are asked for: the `times` or `grid` key, else `[output]`.
    pub(crate) at: Option<SourceLocation>,
    pub(crate) end_time_s: Option<f64>,
    pub(crate) times: Option<OutputTimes>,
    pub(crate) unit: Option<ConcentrationUnit>,
}

/// Reads `[output]`: end time, times or grid, concentration unit. With `[plug_flow]`
/// (`plug`) the outputs are distances: `[output]` is optional and takes only the unit.
pub(crate) fn read_output(r: &mut Report<'_>, root: &DeTable<'_>, plug: bool) -> OutputSection {
    if plug {
        return read_plug_output(r, root);
    }
    let mut out = OutputSection {
        at: root.get("output").map(|v| r.location(v.span().start)),
        end_time_s: None,
        times: Some(OutputTimes::Linear { points: 101 }),
        unit: Some(ConcentrationUnit::MolPerM3),
    };
    let Some(t) = section(r, root, "output", OUTPUT_KEYS) else {
        if !root.contains_key("output") {
            r.file_error(
                "missing [output] section with `end_time`",
                Some("e.g. [output] end_time = \"10 s\"".to_string()),
            );
        }
        return out;
    };
    match t.get("end_time") {
        None => r.error(
            root.get("output").map(|v| v.span().start).unwrap_or(0),
            "missing `end_time` in [output]",
            Some("e.g. end_time = \"10 s\"".to_string()),
        ),
        Some(v) => {
            out.end_time_s = quantity(r, "end_time", v, "s", time_to_s, SCENARIO_TIME_UNITS)
                .and_then(|x| require_positive(r, "end_time", v, x))
                .and_then(|x| {
                    require_in_range(
                        r,
                        "end_time",
                        v.span().start,
                        x,
                        (f64::from_bits(1), MAX_END_TIME_S),
                        "s",
                    )
                });
        }
    }
    if let Some(v) = t.get("concentration_unit") {
        out.unit = concentration_unit(r, "concentration_unit", v);
    }
    match (t.get_key_value("times"), t.get_key_value("grid")) {
        (Some(_), Some((key, _))) => {
            r.error(
                key.span().start,
                "give either `times` or `grid` in [output], not both",
                None,
            );
            out.times = None;
        }
        (Some((key, v)), None) => {
            out.at = Some(r.location(key.span().start));
            out.times = read_times(r, v, out.end_time_s);
        }
        (None, Some((key, v))) => {
            out.at = Some(r.location(key.span().start));
            out.times = read_grid(r, v, out.end_time_s);
        }
        (None, None) => {}
    }
    out
}

/// `[output]` of a plug flow: only `concentration_unit`; time keys are refused at their key.
fn read_plug_output(r: &mut Report<'_>, root: &DeTable<'_>) -> OutputSection {
    let mut out = OutputSection {
        at: root.get("output").map(|v| r.location(v.span().start)),
        end_time_s: Some(0.0),
        times: Some(OutputTimes::Linear { points: 101 }),
        unit: Some(ConcentrationUnit::MolPerM3),
    };
    let Some(t) = section(r, root, "output", OUTPUT_KEYS) else {
        return out;
    };
    for key in ["end_time", "times", "grid"] {
        if let Some((k, _)) = t.get_key_value(key) {
            r.error(
                k.span().start,
                format!("`{key}` in [output] does not apply to a plug flow, which reports at distances along the tube"),
                Some("give `points` or `distances` in [plug_flow]".to_string()),
            );
        }
    }
    if let Some(v) = t.get("concentration_unit") {
        out.unit = concentration_unit(r, "concentration_unit", v);
    }
    out
}

/// Reads `times = [...]`: finite, >= 0, strictly increasing, not after `end_time_s`.
fn read_times(
    r: &mut Report<'_>,
    value: &Value<'_>,
    end_time_s: Option<f64>,
) -> Option<OutputTimes> {
    let DeValue::Array(items) = value.get_ref() else {
        r.wrong_type("times", value, "an array of times");
        return None;
    };
    let mut times = Vec::with_capacity(items.len());
    let mut ok = true;
    let mut previous: Option<f64> = None;
    for item in items.iter() {
        let Some(t) = quantity(r, "times", item, "s", time_to_s, SCENARIO_TIME_UNITS) else {
            ok = false;
            continue;
        };
        let at = item.span().start;
        if !t.is_finite() || t < 0.0 {
            r.error(
                at,
                format!("output time {} is not a finite time >= 0", show_number(t)),
                None,
            );
            ok = false;
        } else if previous.is_some_and(|p| t <= p) {
            r.error(
                at,
                format!(
                    "output times must be strictly increasing: {} s follows {} s",
                    show_number(t),
                    show_number(previous.unwrap_or(0.0))
                ),
                None,
            );
            ok = false;
        } else if end_time_s.is_some_and(|end| t > end) {
            r.error(
                at,
                format!(
                    "output time {} s is after `end_time` ({} s)",
                    show_number(t),
                    show_number(end_time_s.unwrap_or(0.0))
                ),
                None,
            );
            ok = false;
        }
        if t.is_finite() {
            previous = Some(previous.map_or(t, |p| p.max(t)));
        }
        times.push(t);
    }
    ok.then_some(OutputTimes::List(times))
}

/// Reads `grid = { spacing, points, first }`.
fn read_grid(
    r: &mut Report<'_>,
    value: &Value<'_>,
    end_time_s: Option<f64>,
) -> Option<OutputTimes> {
    let table = r.table("grid", value)?;
    r.check_keys(table, GRID_KEYS, "`grid`");
    let mut logarithmic = false;
    let mut ok = true;
    if let Some(v) = table.get("spacing") {
        match r.one_of("spacing", v, "grid spacing", &["linear", "log"], |t| {
            (t == "linear" || t == "log").then_some(t == "log")
        }) {
            Some(log) => logarithmic = log,
            None => ok = false,
        }
    }
    let points = match table.get("points") {
        None => Some(101),
        Some(v) => r.count("points", v).and_then(|n| {
            if !(2..=MAX_GRID_POINTS).contains(&n) {
                r.error(
                    v.span().start,
                    format!("`points` is {n}; it must be between 2 and {MAX_GRID_POINTS}"),
                    None,
                );
                None
            } else {
                usize::try_from(n).ok()
            }
        }),
    };
    let first = match (table.get("first"), logarithmic) {
        (Some(v), true) => quantity(r, "first", v, "s", time_to_s, SCENARIO_TIME_UNITS)
            .and_then(|x| require_positive(r, "first", v, x))
            .and_then(|x| {
                if end_time_s.is_some_and(|end| x >= end) {
                    r.error(v.span().start, "`first` must be before `end_time`", None);
                    None
                } else {
                    Some(x)
                }
            }),
        (None, true) => {
            r.error(
                value.span().start,
                "a log grid needs `first` (the first positive output time)",
                Some(
                    "e.g. grid = { spacing = \"log\", first = \"1e-6 s\", points = 50 }"
                        .to_string(),
                ),
            );
            None
        }
        (Some(v), false) => {
            r.error(
                v.span().start,
                "`first` applies only to `spacing = \"log\"`",
                None,
            );
            None
        }
        (None, false) => Some(0.0),
    };
    let (points, first) = (points?, first?);
    if !ok {
        return None;
    }
    Some(if logarithmic {
        OutputTimes::Logarithmic {
            first_s: first,
            points,
        }
    } else {
        OutputTimes::Linear { points }
    })
}

/// What `[solver]` says (defaults where it is silent).
pub(crate) struct SolverSection {
    pub(crate) relative_tolerance: Option<f64>,
    pub(crate) absolute_tolerance_mol_per_m3: Option<f64>,
    pub(crate) tolerance_overrides: Option<Vec<crate::read::NamedValue>>,
    pub(crate) linear_algebra: Option<LinearAlgebra>,
    pub(crate) max_steps: Option<usize>,
    pub(crate) newton_tolerance: Option<Option<f64>>,
    pub(crate) keep_invariants: Option<bool>,
    pub(crate) wall_time_limit_s: Option<Option<f64>>,
}

/// Reads `[solver]`; bare absolute tolerances are in the output concentration unit `unit`.
pub(crate) fn read_solver(
    r: &mut Report<'_>,
    root: &DeTable<'_>,
    unit: Option<ConcentrationUnit>,
) -> SolverSection {
    let factor = unit.map(|u| u.to_si_factor()).unwrap_or(1.0);
    let mut out = SolverSection {
        relative_tolerance: Some(1e-6),
        absolute_tolerance_mol_per_m3: Some(1e-12 * factor),
        tolerance_overrides: Some(Vec::new()),
        linear_algebra: Some(LinearAlgebra::Auto),
        max_steps: Some(100_000),
        newton_tolerance: Some(None),
        keep_invariants: Some(true),
        wall_time_limit_s: Some(None),
    };
    let Some(t) = section(r, root, "solver", SOLVER_KEYS) else {
        return out;
    };
    let mut tolerance = |r: &mut Report<'_>, name: &str, value: &Value<'_>| -> Option<f64> {
        let x = concentration(r, name, value, Some(factor))?;
        require_positive(r, name, value, x)
    };
    if let Some(v) = t.get("relative_tolerance") {
        out.relative_tolerance = r.number("relative_tolerance", v).and_then(|x| {
            if x > 0.0 && x < 1.0 {
                Some(x)
            } else {
                r.error(
                    v.span().start,
                    format!(
                        "`relative_tolerance` is {}; it must be between 0 and 1 (exclusive)",
                        show_number(x)
                    ),
                    None,
                );
                None
            }
        });
    }
    if let Some(v) = t.get("absolute_tolerance") {
        out.absolute_tolerance_mol_per_m3 = tolerance(r, "absolute_tolerance", v);
    }
    if let Some(v) = t.get("absolute_tolerance_for") {
        out.tolerance_overrides = r
            .table("absolute_tolerance_for", v)
            .and_then(|table| named_values(r, table, &mut tolerance));
    }
    if let Some(v) = t.get("linear_algebra") {
        out.linear_algebra = r.one_of(
            "linear_algebra",
            v,
            "linear algebra",
            &LINEAR_ALGEBRA_NAMES,
            crate::file::linear_algebra_from_name,
        );
    }
    if let Some(v) = t.get("max_steps") {
        out.max_steps = r.count("max_steps", v).and_then(|n| {
            if n == 0 {
                r.error(v.span().start, "`max_steps` must be at least 1", None);
                None
            } else {
                Some(usize::try_from(n).unwrap_or(usize::MAX))
            }
        });
    }
    if let Some(v) = t.get("newton_tolerance") {
        out.newton_tolerance = r
            .number("newton_tolerance", v)
            .and_then(|x| require_positive(r, "newton_tolerance", v, x))
            .map(Some);
    }
    if let Some(v) = t.get("keep_invariants") {
        out.keep_invariants = r.boolean("keep_invariants", v);
    }
    if let Some(v) = t.get("wall_time_limit") {
        out.wall_time_limit_s =
            quantity(r, "wall_time_limit", v, "s", time_to_s, SCENARIO_TIME_UNITS)
                .and_then(|x| require_positive(r, "wall_time_limit", v, x))
                .map(Some);
    }
    out
}

/// Reads `[ignition]`: `Some(None)` when absent, `None` when it could not be read.
pub(crate) fn read_ignition(
    r: &mut Report<'_>,
    root: &DeTable<'_>,
) -> Option<Option<IgnitionSpec>> {
    let Some(t) = section(r, root, "ignition", IGNITION_KEYS) else {
        return Some(None);
    };
    let criterion = match t.get("criterion") {
        None => Some("max-temperature-rate"),
        Some(v) => r.one_of(
            "criterion",
            v,
            "ignition criterion",
            IGNITION_CRITERIA,
            |x| IGNITION_CRITERIA.iter().copied().find(|c| *c == x),
        ),
    };
    match criterion? {
        "species-peak" => match t.get("species") {
            Some(v) => bare_name(r, "species", v).map(|n| Some(IgnitionSpec::SpeciesMaximum(n))),
            None => {
                r.error(
                    0,
                    "[ignition] criterion `species-peak` needs `species`",
                    Some("e.g. species = \"OH\"".to_string()),
                );
                None
            }
        },
        "temperature-rise" => match t.get("rise") {
            Some(v) => quantity(r, "rise", v, "K", kelvin_difference, &["K"])
                .and_then(|x| require_positive(r, "rise", v, x))
                .map(|x| Some(IgnitionSpec::TemperatureRise(x))),
            None => {
                r.error(
                    0,
                    "[ignition] criterion `temperature-rise` needs `rise`",
                    Some("e.g. rise = \"400 K\"".to_string()),
                );
                None
            }
        },
        _ => Some(Some(IgnitionSpec::MaxTemperatureRate)),
    }
}
