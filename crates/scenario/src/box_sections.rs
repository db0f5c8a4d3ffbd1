//! Box-model conditions of a scenario: `[box]` (fixed species, emissions, deposition),
//! `[sun]` (where and when) and `[[photolysis]]` (steps whose rate coefficient is a
//! photolysis rate J(t)), read into the reactor's [`BoxConditions`] once matched against a
//! mechanism.

use crate::read::{bare_name, named_values, quantity, NamedValue, SpeciesLookup};
use stoik_mechanism::{
    nearest_name, show_number, Diagnostic, Mechanism, Report, SourceLocation, SpannedValue as Value,
};
use stoik_mechanism::{time_to_s, ConcentrationUnit, SCENARIO_TIME_UNITS};
use stoik_reactor::{BoxConditions, PhotolysisForm, PhotolysisRate, Sun};
use toml::de::{DeTable, DeValue};

const BOX_KEYS: &[&str] = &["fixed_species", "emissions", "deposition"];
const SUN_KEYS: &[&str] = &["latitude", "day_of_year", "start_time"];
const PHOTOLYSIS_KEYS: &[&str] = &["step", "diurnal", "table"];
const DIURNAL_KEYS: &[&str] = &["scale", "cos_power", "sec_factor"];
const TABLE_KEYS: &[&str] = &["times", "rates"];
const RATE_UNITS: &[&str] = &["/s", "/min", "/h"];

/// A first-order rate coefficient in 1/s: `"2e-5 /s"`, `/min`, `/h`.
fn rate_to_per_s(value: f64, unit: &str) -> Option<f64> {
    match unit {
        "/s" | "1/s" | "s-1" => Some(value),
        "/min" | "1/min" | "min-1" => Some(value / 60.0),
        "/h" | "1/h" | "h-1" => Some(value / 3600.0),
        _ => None,
    }
}

/// An emission rate in mol/(m3 s): `"VALUE CONC/TIME"` with a concentration unit and
/// `/s`, `/min` or `/h`, e.g. `"3e5 molecule/cm3/s"`.
fn emission_to_si(value: f64, unit: &str) -> Option<f64> {
    let (conc, time) = unit.rsplit_once('/')?;
    let per = rate_to_per_s(1.0, &format!("/{time}"))?;
    ConcentrationUnit::parse(conc).map(|u| value * u.to_si_factor() * per)
}

const EMISSION_UNITS: &[&str] = &["mol/m3/s", "mol/L/s", "molecule/cm3/s", "mol/cm3/s"];

#[derive(Debug, Clone, PartialEq)]
struct PhotolysisEntry {
    equation: String,
    location: SourceLocation,
    /// Byte offset of the entry's `diurnal` or `table` value.
    at: usize,
    form: PhotolysisForm,
}

/// The box sections of a scenario, species and steps still named.
#[derive(Debug, Clone, PartialEq, Default)]
pub(crate) struct BoxSpec {
    fixed: Vec<NamedValue>,
    emissions: Vec<NamedValue>,
    deposition: Vec<NamedValue>,
    sun: Option<Sun>,
    photolysis: Vec<PhotolysisEntry>,
}

fn number_in(
    r: &mut Report<'_>,
    table: &DeTable<'_>,
    key: &str,
    context: &str,
    at: usize,
) -> Option<f64> {
    match table.get(key) {
        None => {
            r.error(at, format!("{context} needs `{key}`"), None);
            None
        }
        Some(v) => r.number(key, v),
    }
}

/// Records an error unless `x` is finite and not negative; `what` names the value in the
/// message, `unit` follows it.
fn non_negative(r: &mut Report<'_>, at: usize, what: &str, x: f64, unit: &str) -> Option<f64> {
    if x.is_finite() && x >= 0.0 {
        Some(x)
    } else {
        r.error(
            at,
            format!(
                "{what} is {} {unit}; it must be finite and not negative",
                show_number(x)
            )
            .replace(" ;", ";"),
            None,
        );
        None
    }
}

/// Records an error unless `x` is finite.
fn finite(r: &mut Report<'_>, at: usize, what: &str, x: f64, unit: &str) -> Option<f64> {
    if x.is_finite() {
        Some(x)
    } else {
        r.error(
            at,
            format!("{what} is {} {unit}; it must be finite", show_number(x)),
            None,
        );
        None
    }
}

/// Reads `[box]`, `[sun]` and `[[photolysis]]`; `None` when one of them had an error
/// (reported).
pub(crate) fn read_box(r: &mut Report<'_>, root: &DeTable<'_>) -> Option<BoxSpec> {
    let mut spec = BoxSpec::default();
    let mut ok = true;
    if let Some(v) = root.get("box") {
        if let Some(t) = r.table("box", v) {
            r.check_keys(t, BOX_KEYS, "[box]");
            if let Some(v) = t.get("fixed_species") {
                match v.get_ref() {
                    DeValue::Array(items) => {
                        for item in items.iter() {
                            match bare_name(r, "fixed_species", item) {
                                Some(named) => spec.fixed.push(named),
                                None => ok = false,
                            }
                        }
                    }
                    _ => {
                        r.wrong_type("fixed_species", v, "an array of species names");
                        ok = false;
                    }
                }
            }
            if let Some(v) = t.get("emissions") {
                match r.table("emissions", v).and_then(|table| {
                    named_values(r, table, |r, name, value| {
                        let x =
                            quantity(r, name, value, "mol/m3/s", emission_to_si, EMISSION_UNITS)?;
                        non_negative(
                            r,
                            value.span().start,
                            &format!("emission of `{name}`"),
                            x,
                            "mol/(m3 s)",
                        )
                    })
                }) {
                    Some(values) => spec.emissions = values,
                    None => ok = false,
                }
            }
            if let Some(v) = t.get("deposition") {
                match r.table("deposition", v).and_then(|table| {
                    named_values(r, table, |r, name, value| {
                        let x = quantity(r, name, value, "/s", rate_to_per_s, RATE_UNITS)?;
                        if x.is_finite() && x >= 0.0 {
                            Some(x)
                        } else {
                            r.error(
                                value.span().start,
                                format!("deposition rate of `{name}` must be finite and >= 0, got {} /s", show_number(x)),
                                None,
                            );
                            None
                        }
                    })
                }) {
                    Some(values) => spec.deposition = values,
                    None => ok = false,
                }
            }
        } else {
            ok = false;
        }
    }
    if let Some(v) = root.get("sun") {
        let at = v.span().start;
        match r.table("sun", v) {
            Some(t) => {
                r.check_keys(t, SUN_KEYS, "[sun]");
                let latitude = number_in(r, t, "latitude", "[sun]", at);
                let day = number_in(r, t, "day_of_year", "[sun]", at);
                let start = match t.get("start_time") {
                    None => Some(0.0),
                    Some(v) => quantity(r, "start_time", v, "s", time_to_s, SCENARIO_TIME_UNITS)
                        .and_then(|x| finite(r, v.span().start, "[sun] start_time", x, "s")),
                };
                if let Some(lat) = latitude.filter(|l| l.is_nan() || l.abs() > 90.0) {
                    r.error(
                        at,
                        format!(
                            "[sun] latitude {} deg is outside -90 to 90",
                            show_number(lat)
                        ),
                        None,
                    );
                    ok = false;
                }
                if let Some(d) = day.filter(|d| !(1.0..=366.0).contains(d)) {
                    r.error(
                        at,
                        format!("[sun] day_of_year {} is outside 1 to 366", show_number(d)),
                        None,
                    );
                    ok = false;
                }
                match (latitude, day, start) {
                    (Some(latitude_deg), Some(day_of_year), Some(start_solar_time_s)) => {
                        spec.sun = Some(Sun {
                            latitude_deg,
                            day_of_year,
                            start_solar_time_s,
                        })
                    }
                    _ => ok = false,
                }
            }
            None => ok = false,
        }
    }
    if let Some(v) = root.get("photolysis") {
        match v.get_ref() {
            DeValue::Array(items) => {
                for item in items.iter() {
                    match read_photolysis(r, item) {
                        Some(entry) => spec.photolysis.push(entry),
                        None => ok = false,
                    }
                }
            }
            _ => {
                r.wrong_type("photolysis", v, "an array of tables ([[photolysis]])");
                ok = false;
            }
        }
    }
    if spec.sun.is_none() && !root.contains_key("sun") {
        for p in spec
            .photolysis
            .iter()
            .filter(|p| matches!(p.form, PhotolysisForm::Diurnal { .. }))
        {
            r.error(
                p.at,
                format!(
                    "the `diurnal` photolysis rate of `{}` needs a [sun] section",
                    p.equation
                ),
                Some("e.g. [sun] latitude = 48.1, day_of_year = 172, start_time = \"6 h\"".into()),
            );
            ok = false;
        }
    }
    ok.then_some(spec)
}

fn read_photolysis(r: &mut Report<'_>, item: &Value<'_>) -> Option<PhotolysisEntry> {
    let at = item.span().start;
    let t = r.table("photolysis", item)?;
    r.check_keys(t, PHOTOLYSIS_KEYS, "[[photolysis]]");
    let (equation, location) = match t.get("step") {
        None => {
            r.error(
                at,
                "[[photolysis]] needs `step`, the equation of a mechanism step",
                Some("e.g. step = \"NO2 -> NO + O\"".into()),
            );
            return None;
        }
        Some(v) => (r.string("step", v)?.to_string(), r.location(v.span().start)),
    };
    let form_at = t
        .get("diurnal")
        .or_else(|| t.get("table"))
        .map_or(at, |v| v.span().start);
    let form = match (t.get("diurnal"), t.get("table")) {
        (Some(_), Some(_)) | (None, None) => {
            r.error(
                at,
                "[[photolysis]] needs exactly one of `diurnal` or `table`",
                None,
            );
            return None;
        }
        (Some(v), None) => {
            let d = r.table("diurnal", v)?;
            r.check_keys(d, DIURNAL_KEYS, "diurnal");
            let start = v.span().start;
            let scale = match d.get("scale") {
                None => {
                    r.error(start, "`diurnal` needs `scale` (1/s)", None);
                    None
                }
                Some(s) => quantity(r, "scale", s, "/s", rate_to_per_s, RATE_UNITS)
                    .and_then(|x| non_negative(r, s.span().start, "`scale`", x, "/s")),
            };
            let cos_power = number_in(r, d, "cos_power", "`diurnal`", start).and_then(|x| {
                let at = d.get("cos_power").map_or(start, |v| v.span().start);
                non_negative(r, at, "`cos_power`", x, "")
            });
            let sec_factor = match d.get("sec_factor") {
                None => Some(0.0),
                Some(s) => r
                    .number("sec_factor", s)
                    .and_then(|x| non_negative(r, s.span().start, "`sec_factor`", x, "")),
            };
            PhotolysisForm::Diurnal {
                scale_per_s: scale?,
                cos_power: cos_power?,
                sec_factor: sec_factor?,
            }
        }
        (None, Some(v)) => {
            let table = r.table("table", v)?;
            r.check_keys(table, TABLE_KEYS, "table");
            let start = v.span().start;
            let mut list = |key: &str,
                            unit: &str,
                            convert: fn(f64, &str) -> Option<f64>,
                            accepted: &[&str]| {
                let Some(value) = table.get(key) else {
                    r.error(start, format!("a photolysis `table` needs `{key}`"), None);
                    return None;
                };
                let DeValue::Array(items) = value.get_ref() else {
                    r.wrong_type(key, value, "an array");
                    return None;
                };
                let mut out = Vec::new();
                for item in items.iter() {
                    out.push(quantity(r, key, item, unit, convert, accepted)?);
                }
                Some(out)
            };
            let times = list("times", "s", time_to_s, SCENARIO_TIME_UNITS);
            let rates = list("rates", "/s", rate_to_per_s, RATE_UNITS);
            let (times_s, rates_per_s) = (times?, rates?);
            if times_s.is_empty()
                || times_s.len() != rates_per_s.len()
                || times_s
                    .windows(2)
                    .any(|w| w[1].partial_cmp(&w[0]) != Some(std::cmp::Ordering::Greater))
                || rates_per_s.iter().any(|x| !(x.is_finite() && *x >= 0.0))
            {
                r.error(
                    start,
                    format!(
                        "a photolysis `table` needs as many rates (>= 0) as strictly increasing times, at least one; got {} times and {} rates",
                        times_s.len(),
                        rates_per_s.len()
                    ),
                    None,
                );
                return None;
            }
            PhotolysisForm::Table {
                times_s,
                rates_per_s,
            }
        }
    };
    Some(PhotolysisEntry {
        equation,
        location,
        at: form_at,
        form,
    })
}

/// Equation text with runs of white space collapsed, for matching `step = "..."`.
fn normalized(equation: &str) -> String {
    equation.split_whitespace().collect::<Vec<_>>().join(" ")
}

impl BoxSpec {
    /// Matches names against `mechanism`; problems are pushed to `diagnostics` (of `file`).
    pub(crate) fn resolve(
        &self,
        mechanism: &Mechanism,
        species: &SpeciesLookup<'_>,
        file: &str,
        diagnostics: &mut Vec<Diagnostic>,
    ) -> BoxConditions {
        let mut lookup =
            |named: &NamedValue, what: &str| species.find(named, what, &mut *diagnostics);
        let mut out = BoxConditions::default();
        for n in &self.fixed {
            if let Some(i) = lookup(n, "[box] fixed_species") {
                out.fixed_species.push(i);
            }
        }
        for n in &self.emissions {
            if let Some(i) = lookup(n, "[box] emissions") {
                out.emissions.push((i, n.value));
            }
        }
        for n in &self.deposition {
            if let Some(i) = lookup(n, "[box] deposition") {
                out.deposition.push((i, n.value));
            }
        }
        for p in &self.photolysis {
            let wanted = normalized(&p.equation);
            let matches: Vec<usize> = mechanism
                .steps
                .iter()
                .enumerate()
                .filter(|(_, s)| normalized(&s.equation) == wanted)
                .map(|(j, _)| j)
                .collect();
            match matches.as_slice() {
                [j] => {
                    let step = &mechanism.steps[*j];
                    if step.reversible || step.third_body.is_some() || step.forward_order() != 1.0 {
                        diagnostics.push(Diagnostic::error(
                            file,
                            Some(p.location),
                            format!(
                                "photolysis step `{}` must be irreversible (`->`), first order and without a third body",
                                p.equation
                            ),
                        ));
                    } else {
                        out.photolysis.push((
                            *j,
                            PhotolysisRate {
                                form: p.form.clone(),
                                sun: self.sun,
                            },
                        ));
                    }
                }
                [] => {
                    let mut d = Diagnostic::error(
                        file,
                        Some(p.location),
                        format!("no step of the mechanism has the equation `{}`", p.equation),
                    );
                    if let Some(near) = nearest_name(
                        &p.equation,
                        mechanism.steps.iter().map(|s| s.equation.as_str()),
                    ) {
                        d = d.with_help(format!("did you mean `{near}`?"));
                    }
                    diagnostics.push(d);
                }
                _ => diagnostics.push(Diagnostic::error(
                    file,
                    Some(p.location),
                    format!(
                        "{} steps have the equation `{}`; photolysis needs exactly one",
                        matches.len(),
                        p.equation
                    ),
                )),
            }
        }
        out
    }
}
