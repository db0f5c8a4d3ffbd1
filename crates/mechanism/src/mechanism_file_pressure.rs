//! Pressure-dependent steps in the mechanism file: the `falloff`, `chemically_activated`,
//! `termolecular_300k` and `pressure_table` keys of a `[[step]]` (see `docs/file-format.md`).
//!
//! The keys are read into file-unit values here; [`Loader::apply_pressure_form`] converts
//! them to SI once the step's order is known.

use super::{Loader, RawArrhenius, ARRHENIUS_KEYS};
use crate::suggest::nearest_name;
use crate::toml_walk::{positive_finite_problem, show_number, Value};
use crate::units::{pressure_to_pa, split_quantity, RateUnits, PRESSURE_UNITS};
use crate::{Arrhenius, Broadening, PressureDependence, PressurePoint, Step};
use toml::de::{DeTable, DeValue};

/// The step keys that make a step pressure dependent (at most one per step).
const PRESSURE_KEYS: &[&str] = &[
    "falloff",
    "chemically_activated",
    "termolecular_300k",
    "pressure_table",
];
const FALLOFF_KEYS: &[&str] = &["low_pressure", "broadening", "troe", "sri"];
const ACTIVATED_KEYS: &[&str] = &["high_pressure", "broadening", "troe", "sri"];
const BROADENING_NAMES: &[&str] = &["lindemann", "troe", "sri"];
const TROE_KEYS: &[&str] = &["a", "t3", "t1", "t2"];
const SRI_KEYS: &[&str] = &["a", "b", "c", "d", "e"];
const TERMOLECULAR_KEYS: &[&str] = &[
    "low_pressure_300k",
    "low_pressure_exponent",
    "high_pressure_300k",
    "high_pressure_exponent",
    "center",
];
/// The constant broadening centre of the atmospheric evaluations (JPL Publication 19-5,
/// Burkholder et al. 2019, section 2).
const DEFAULT_TERMOLECULAR_CENTER: f64 = 0.6;

/// A pressure form as written in the file (file units).
#[derive(Debug, Clone)]
pub(super) enum RawPressureForm {
    /// `falloff` (other = low-pressure limit) or `chemically_activated` (other =
    /// high-pressure limit).
    Falloff {
        other: RawArrhenius,
        broadening: Broadening,
        chemically_activated: bool,
    },
    /// `termolecular_300k`: k0 = k0_300 (T/300)^-n, kinf = kinf_300 (T/300)^-m.
    Termolecular {
        low_300: f64,
        low_exponent: f64,
        high_300: f64,
        high_exponent: f64,
        center: f64,
    },
    /// `pressure_table`: (pressure in Pa, rate set), in file order.
    Table { entries: Vec<(f64, RawArrhenius)> },
}

impl RawPressureForm {
    /// The forward rate parameters this form implies when the step gives no `forward`.
    pub(super) fn implied_forward(&self) -> Option<RawArrhenius> {
        match self {
            RawPressureForm::Falloff { .. } => None,
            RawPressureForm::Termolecular {
                high_300,
                high_exponent,
                ..
            } => Some(at_300k(*high_300, *high_exponent)),
            RawPressureForm::Table { entries } => {
                let top = entries
                    .iter()
                    .map(|(p, _)| *p)
                    .fold(f64::NEG_INFINITY, f64::max);
                entries.iter().find(|(p, _)| *p == top).map(|(_, a)| *a)
            }
        }
    }
}

/// k(T) = k300 (T/300 K)^-n written as an Arrhenius set: A = k300 300^n, exponent -n.
fn at_300k(k300: f64, exponent: f64) -> RawArrhenius {
    RawArrhenius {
        prefactor: k300 * 300f64.powf(exponent),
        temperature_exponent: -exponent,
        activation_energy: 0.0,
    }
}

impl Loader<'_> {
    /// Reads the step's pressure form, if any. The outer `None` means a problem was
    /// reported; `Some(None)` means the step is not pressure dependent.
    pub(super) fn read_pressure_form(
        &mut self,
        table: &DeTable<'_>,
    ) -> Option<Option<(RawPressureForm, usize)>> {
        let given: Vec<(&str, usize)> = PRESSURE_KEYS
            .iter()
            .filter_map(|&name| {
                table
                    .get_key_value(name)
                    .map(|(k, _)| (name, k.span().start))
            })
            .collect();
        if given.len() > 1 {
            let names: Vec<String> = given.iter().map(|(n, _)| format!("`{n}`")).collect();
            self.r.error(
                given[1].1,
                format!(
                    "a step takes one pressure form, this one has {}",
                    names.join(" and ")
                ),
                None,
            );
            return None;
        }
        let Some(&(name, key_at)) = given.first() else {
            return Some(None);
        };
        let value = table.get(name)?;
        let form = match name {
            "falloff" => self.read_falloff(value, false),
            "chemically_activated" => self.read_falloff(value, true),
            "termolecular_300k" => self.read_termolecular(value),
            _ => self.read_pressure_table(value),
        }?;

        // Combinations with other step keys.
        let mut ok = true;
        let is_table = matches!(form, RawPressureForm::Table { .. });
        if is_table {
            if let Some((k, _)) = table.get_key_value("third_body") {
                self.r.error(
                    k.span().start,
                    "a step with `pressure_table` has no `third_body`: its pressure is the mixture's total pressure",
                    Some("remove `third_body`".to_string()),
                );
                ok = false;
            }
        } else if !table.contains_key("third_body") {
            self.r.error(
                key_at,
                format!("`{name}` needs the bath gas: add `third_body`"),
                Some("`third_body = {}` (every species collides with efficiency 1), `third_body = { efficiency = { H2O = 6 } }` or `third_body = { species = \"N2\" }`".to_string()),
            );
            ok = false;
        }
        if !matches!(form, RawPressureForm::Falloff { .. }) {
            if let Some((k, _)) = table.get_key_value("forward") {
                self.r.error(
                    k.span().start,
                    format!(
                        "a step with `{name}` has no `forward`: `{name}` gives its rate constant"
                    ),
                    Some("remove `forward`".to_string()),
                );
                ok = false;
            }
        }
        if let Some((k, _)) = table.get_key_value("reverse") {
            self.r.error(
                k.span().start,
                format!("a step with `{name}` cannot have explicit `reverse` parameters; its reverse rate constant follows from thermochemistry (kr = kf / Kc)"),
                Some("remove `reverse` and give thermochemistry for the step's species, or use `->`".to_string()),
            );
            ok = false;
        }
        ok.then_some(Some((form, key_at)))
    }

    fn read_falloff(
        &mut self,
        value: &Value<'_>,
        chemically_activated: bool,
    ) -> Option<RawPressureForm> {
        let (key, limit_key, allowed) = if chemically_activated {
            ("chemically_activated", "high_pressure", ACTIVATED_KEYS)
        } else {
            ("falloff", "low_pressure", FALLOFF_KEYS)
        };
        let table = self.r.table(key, value)?;
        self.r.check_keys(table, allowed, &format!("`{key}`"));
        let other = match table.get(limit_key) {
            None => {
                self.r.error(
                    value.span().start,
                    format!("`{key}` has no `{limit_key}` rate parameters"),
                    Some(format!(
                        "e.g. {limit_key} = {{ prefactor = 1e16, temperature_exponent = 0, activation_energy = 0 }}"
                    )),
                );
                None
            }
            Some(v) => self.read_arrhenius(limit_key, v),
        };
        let broadening = self.read_broadening(table, value.span().start, key);
        Some(RawPressureForm::Falloff {
            other: other?,
            broadening: broadening?,
            chemically_activated,
        })
    }

    fn read_broadening(&mut self, table: &DeTable<'_>, at: usize, key: &str) -> Option<Broadening> {
        let Some(v) = table.get("broadening") else {
            self.r.error(
                at,
                format!("`{key}` has no `broadening`"),
                Some(format!(
                    "write one of: {} (\"lindemann\" is F = 1)",
                    BROADENING_NAMES.join(", ")
                )),
            );
            return None;
        };
        let kind = self
            .r
            .one_of("broadening", v, "broadening", BROADENING_NAMES, |t| {
                BROADENING_NAMES.iter().position(|&n| n == t)
            })?;
        // The parameter table of the other forms must not be given.
        let mut ok = true;
        for (i, name) in ["troe", "sri"].into_iter().enumerate() {
            if let Some((k, _)) = table.get_key_value(name) {
                if kind != i + 1 {
                    self.r.error(
                        k.span().start,
                        format!(
                            "`{name}` parameters are given but `broadening` is \"{}\"",
                            BROADENING_NAMES[kind]
                        ),
                        Some(format!(
                            "write `broadening = \"{name}\"` or remove `{name}`"
                        )),
                    );
                    ok = false;
                }
            }
        }
        let broadening = match kind {
            0 => Some(Broadening::Lindemann),
            1 => self.read_troe(table, v.span().start),
            _ => self.read_sri(table, v.span().start),
        };
        if ok {
            broadening
        } else {
            None
        }
    }

    /// A parameter of a broadening table: `None` if missing (reported when `required`) or
    /// bad (reported); `positive` asks for a positive value.
    fn broadening_parameter(
        &mut self,
        table: &DeTable<'_>,
        owner: &str,
        name: &str,
        positive: bool,
        at: usize,
        required: bool,
    ) -> Option<f64> {
        let Some(v) = table.get(name) else {
            if required {
                self.r.error(
                    at,
                    format!("`{owner}` has no `{name}`"),
                    Some(format!("`{owner}` needs {}", required_list(owner))),
                );
            }
            return None;
        };
        let x = self.r.number(name, v)?;
        let problem = if positive {
            positive_finite_problem(x)
        } else if x.is_finite() {
            None
        } else {
            Some(if x.is_nan() { "is NaN" } else { "is infinite" })
        };
        if let Some(problem) = problem {
            let must = if positive {
                "a positive finite number"
            } else {
                "a finite number"
            };
            self.r.error(
                v.span().start,
                format!("`{owner}.{name}` {problem}; it must be {must}"),
                None,
            );
            return None;
        }
        Some(x)
    }

    fn read_troe(&mut self, table: &DeTable<'_>, broadening_at: usize) -> Option<Broadening> {
        let Some(v) = table.get("troe") else {
            self.r.error(
                broadening_at,
                "`broadening = \"troe\"` needs a `troe` table",
                Some("e.g. troe = { a = 0.5, t3 = 100, t1 = 1000, t2 = 1000 } (temperatures in K; t2 is optional)".to_string()),
            );
            return None;
        };
        let t = self.r.table("troe", v)?;
        self.r.check_keys(t, TROE_KEYS, "`troe`");
        let at = v.span().start;
        let a = self.broadening_parameter(t, "troe", "a", false, at, true);
        let t3 = self.broadening_parameter(t, "troe", "t3", true, at, true);
        let t1 = self.broadening_parameter(t, "troe", "t1", true, at, true);
        let t2_given = t.contains_key("t2");
        let t2 = self.broadening_parameter(t, "troe", "t2", false, at, false);
        if t2_given && t2.is_none() {
            return None;
        }
        Some(Broadening::Troe {
            a: a?,
            t3_k: t3?,
            t1_k: t1?,
            t2_k: t2,
        })
    }

    fn read_sri(&mut self, table: &DeTable<'_>, broadening_at: usize) -> Option<Broadening> {
        let Some(v) = table.get("sri") else {
            self.r.error(
                broadening_at,
                "`broadening = \"sri\"` needs an `sri` table",
                Some("e.g. sri = { a = 0.45, b = 797, c = 979 } (b and c in K; d and e optional, both or neither)".to_string()),
            );
            return None;
        };
        let t = self.r.table("sri", v)?;
        self.r.check_keys(t, SRI_KEYS, "`sri`");
        let at = v.span().start;
        let a = self.broadening_parameter(t, "sri", "a", false, at, true);
        let b = self.broadening_parameter(t, "sri", "b", false, at, true);
        let c = self.broadening_parameter(t, "sri", "c", true, at, true);
        let (d_given, e_given) = (t.contains_key("d"), t.contains_key("e"));
        if d_given != e_given {
            self.r.error(
                at,
                "`sri` takes 3 parameters (a, b, c) or 5 (a, b, c, d, e), not 4",
                Some(if d_given {
                    "add `e` (e = 0 leaves out the T^e factor)".to_string()
                } else {
                    "add `d` (d = 1 leaves out the factor)".to_string()
                }),
            );
            return None;
        }
        let d = self.broadening_parameter(t, "sri", "d", true, at, false);
        let e = self.broadening_parameter(t, "sri", "e", false, at, false);
        if d_given && (d.is_none() || e.is_none()) {
            return None;
        }
        Some(Broadening::Sri {
            a: a?,
            b_k: b?,
            c_k: c?,
            d: d.unwrap_or(1.0),
            e: e.unwrap_or(0.0),
        })
    }

    fn read_termolecular(&mut self, value: &Value<'_>) -> Option<RawPressureForm> {
        let t = self.r.table("termolecular_300k", value)?;
        self.r
            .check_keys(t, TERMOLECULAR_KEYS, "`termolecular_300k`");
        let at = value.span().start;
        let owner = "termolecular_300k";
        let low_300 = self.broadening_parameter(t, owner, "low_pressure_300k", true, at, true);
        let high_300 = self.broadening_parameter(t, owner, "high_pressure_300k", true, at, true);
        let low_exponent = match t.contains_key("low_pressure_exponent") {
            true => self.broadening_parameter(t, owner, "low_pressure_exponent", false, at, false),
            false => Some(0.0),
        };
        let high_exponent = match t.contains_key("high_pressure_exponent") {
            true => self.broadening_parameter(t, owner, "high_pressure_exponent", false, at, false),
            false => Some(0.0),
        };
        let center = match t.get("center") {
            None => Some(DEFAULT_TERMOLECULAR_CENTER),
            Some(v) => {
                let x = self.r.number("center", v)?;
                if x > 0.0 && x <= 1.0 {
                    Some(x)
                } else {
                    self.r.error(
                        v.span().start,
                        format!(
                            "`termolecular_300k.center` is {}; it must be in (0, 1]",
                            show_number(x)
                        ),
                        None,
                    );
                    None
                }
            }
        };
        Some(RawPressureForm::Termolecular {
            low_300: low_300?,
            low_exponent: low_exponent?,
            high_300: high_300?,
            high_exponent: high_exponent?,
            center: center?,
        })
    }

    fn read_pressure_table(&mut self, value: &Value<'_>) -> Option<RawPressureForm> {
        let DeValue::Array(items) = value.get_ref() else {
            self.r.wrong_type(
                "pressure_table",
                value,
                "an array of tables, e.g. [{ pressure = \"1 atm\", prefactor = 1e13 }]",
            );
            return None;
        };
        if items.is_empty() {
            self.r.error(
                value.span().start,
                "`pressure_table` is empty",
                Some("list at least one `{ pressure = \"1 atm\", prefactor = ... }`".to_string()),
            );
            return None;
        }
        let mut allowed: Vec<&str> = ARRHENIUS_KEYS.to_vec();
        allowed.push("pressure");
        let mut entries = Vec::with_capacity(items.len());
        let mut ok = true;
        for item in items.iter() {
            let Some(t) = self.r.table("pressure_table", item) else {
                ok = false;
                continue;
            };
            let pressure = match t.get("pressure") {
                None => {
                    self.r.error(
                        item.span().start,
                        "`pressure_table` entry has no `pressure`",
                        Some("e.g. pressure = \"1 atm\"".to_string()),
                    );
                    None
                }
                Some(v) => self.read_pressure(v),
            };
            let rate = self.read_arrhenius_keys("pressure_table", item, &allowed);
            match (pressure, rate) {
                (Some(p), Some(a)) => entries.push((p, a)),
                _ => ok = false,
            }
        }
        ok.then_some(RawPressureForm::Table { entries })
    }

    /// A pressure written as "VALUE UNIT", in Pa; must be positive.
    fn read_pressure(&mut self, v: &Value<'_>) -> Option<f64> {
        let at = v.span().start;
        let text = self.r.string("pressure", v)?;
        let (x, unit) = match split_quantity(text) {
            Ok(q) => q,
            Err(message) => {
                self.r.error(at, format!("`pressure`: {message}"), None);
                return None;
            }
        };
        let Some(pa) = pressure_to_pa(x, unit) else {
            let help = nearest_name(unit, PRESSURE_UNITS.iter().copied())
                .map(|near| format!("did you mean `{near}`?"));
            self.r.error(
                at,
                format!(
                    "unknown unit `{unit}` for `pressure`; accepted: {}",
                    PRESSURE_UNITS.join(", ")
                ),
                help,
            );
            return None;
        };
        if let Some(problem) = positive_finite_problem(pa) {
            self.r.error(
                at,
                format!("`pressure` {problem}; it must be positive"),
                None,
            );
            return None;
        }
        Some(pa)
    }

    /// Converts the pressure form to SI and stores it in `step` (whose `forward` is already
    /// in SI, for overall order `order`, the reactants' order); warns about the clamp outside a pressure table. `false` if a converted value
    /// is out of range (reported).
    pub(super) fn apply_pressure_form(
        &mut self,
        step: &mut Step,
        form: RawPressureForm,
        units: RateUnits,
        order: f64,
        key_at: usize,
    ) -> bool {
        let convert = |raw: &RawArrhenius, order: f64| Arrhenius {
            pre_exponential_si: units.prefactor_to_si(raw.prefactor, order),
            temperature_exponent: raw.temperature_exponent,
            activation_energy_j_per_mol: units.activation_energy_to_si(raw.activation_energy),
        };
        let dependence = match form {
            RawPressureForm::Falloff {
                other,
                broadening,
                chemically_activated,
            } => {
                if chemically_activated {
                    PressureDependence::Falloff {
                        low_pressure: step.forward,
                        high_pressure: convert(&other, order - 1.0),
                        broadening,
                        chemically_activated,
                    }
                } else {
                    PressureDependence::Falloff {
                        low_pressure: convert(&other, order + 1.0),
                        high_pressure: step.forward,
                        broadening,
                        chemically_activated,
                    }
                }
            }
            RawPressureForm::Termolecular {
                low_300,
                low_exponent,
                center,
                ..
            } => PressureDependence::Falloff {
                low_pressure: convert(&at_300k(low_300, low_exponent), order + 1.0),
                high_pressure: step.forward,
                broadening: Broadening::FixedCenter { center },
                chemically_activated: false,
            },
            RawPressureForm::Table { mut entries } => {
                entries.sort_by(|a, b| a.0.total_cmp(&b.0));
                let mut points: Vec<PressurePoint> = Vec::new();
                for (pressure_pa, raw) in &entries {
                    let set = convert(raw, order);
                    match points.last_mut() {
                        Some(last) if last.pressure_pa == *pressure_pa => last.rate_sets.push(set),
                        _ => points.push(PressurePoint {
                            pressure_pa: *pressure_pa,
                            rate_sets: vec![set],
                        }),
                    }
                }
                if let (Some(first), Some(last)) = (points.first(), points.last()) {
                    let (low, high) = (first.pressure_pa, last.pressure_pa);
                    self.r.warning(
                        key_at,
                        format!(
                            "step `{}`: its pressure table covers {} Pa ({} atm) to {} Pa ({} atm); outside that range the rate constant is held at the nearest tabulated pressure",
                            step.equation,
                            show_number(low),
                            show_number(low / 101_325.0),
                            show_number(high),
                            show_number(high / 101_325.0)
                        ),
                        None,
                    );
                }
                PressureDependence::Table { points }
            }
        };
        let all_finite = |a: &Arrhenius| {
            positive_finite_problem(a.pre_exponential_si).is_none()
                && a.activation_energy_j_per_mol.is_finite()
        };
        let fine = match &dependence {
            PressureDependence::Falloff {
                low_pressure,
                high_pressure,
                ..
            } => all_finite(low_pressure) && all_finite(high_pressure),
            PressureDependence::Table { points } => {
                points.iter().flat_map(|p| &p.rate_sets).all(all_finite)
            }
        };
        if !fine {
            self.r.error(
                key_at,
                "pressure-dependent rate parameters are out of range once converted to SI units",
                Some("check the prefactors' magnitudes and the step's units".to_string()),
            );
            return false;
        }
        step.pressure_dependence = Some(dependence);
        true
    }
}

/// The required parameters of a broadening table, for help texts.
fn required_list(owner: &str) -> &'static str {
    match owner {
        "troe" => "`a`, `t3` and `t1` (and optionally `t2`), temperatures in K",
        "sri" => "`a`, `b` and `c` (and optionally both `d` and `e`), b and c in K",
        _ => "`low_pressure_300k` and `high_pressure_300k` (exponents default to 0, center to 0.6)",
    }
}
