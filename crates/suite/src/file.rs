//! The suite file (TOML, format version 1): the cases to run (a scenario file with optional
//! overrides and sweeps) and, per case, the named observables to watch with their tolerances
//! and optional measured values. Read with located diagnostics, every problem at once.

use crate::read::{number_or_quantity, Dimension};
use std::path::{Path, PathBuf};
use stoik_mechanism::{
    parse_document, show_number, Diagnostics, LoadError, Report, SourceLocation,
    SpannedValue as Value,
};
use stoik_scenario::Composition;
use toml::de::{DeTable, DeValue};

/// The suite format version this crate reads (`stoik_suite = 1`).
pub const SUITE_FORMAT_VERSION: i64 = 1;

/// How far an observable may move from its baseline value and still pass.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Tolerance {
    /// |new - baseline| <= r |baseline| (dimensionless r > 0).
    Relative(f64),
    /// |new - baseline| <= a, in the observable's own SI unit (a > 0).
    Absolute(f64),
    /// max(new/baseline, baseline/new) <= f (f > 1), both of one sign: a band symmetric in
    /// log space, the natural one for rate-driven quantities (delays, half-lives).
    Factor(f64),
}

impl Tolerance {
    /// Whether `new` is within this tolerance of `baseline`. Equal values always pass; NaN
    /// never does.
    pub fn holds(&self, baseline: f64, new: f64) -> bool {
        if baseline == new {
            return true;
        }
        match *self {
            Tolerance::Relative(r) => (new - baseline).abs() <= r * baseline.abs(),
            Tolerance::Absolute(a) => (new - baseline).abs() <= a,
            Tolerance::Factor(f) => {
                if baseline == 0.0 || new == 0.0 || (baseline < 0.0) != (new < 0.0) {
                    return false;
                }
                let ratio = new / baseline;
                ratio.max(1.0 / ratio) <= f
            }
        }
    }

    /// The absolute change (in the observable's unit) this tolerance allows around
    /// `baseline`: r |b|, a, or (f - 1) |b| (the smaller side of the log band).
    pub fn allowance(&self, baseline: f64) -> f64 {
        match *self {
            Tolerance::Relative(r) => r * baseline.abs(),
            Tolerance::Absolute(a) => a,
            Tolerance::Factor(f) => (1.0 - 1.0 / f) * baseline.abs(),
        }
    }
}

impl std::fmt::Display for Tolerance {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match *self {
            Tolerance::Relative(r) => write!(f, "rel {}", short(r)),
            Tolerance::Absolute(a) => write!(f, "abs {}", short(a)),
            Tolerance::Factor(x) => write!(f, "factor {}", short(x)),
        }
    }
}

/// A number with 7 significant digits at most, for people.
pub(crate) fn short(x: f64) -> String {
    let text = format!("{x:.6e}");
    let value: f64 = text.parse().unwrap_or(x);
    show_number(value)
}

/// A value measured by experiment, for validation (reported apart from the regression
/// against the baseline; it never changes the verdict of a verification).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measured {
    /// The measured value, in the observable's SI unit.
    pub value: f64,
    /// Its uncertainty (one half-width of the band accepted as agreement), same unit.
    pub uncertainty: f64,
}

/// How an ignition-delay observable locates ignition.
#[derive(Debug, Clone, PartialEq)]
pub enum DelayCriterion {
    /// The scenario's own criterion (its `[ignition]` section, or the largest dT/dt for an
    /// adiabatic reactor).
    Scenario,
    /// The time of the largest dT/dt.
    MaxTemperatureRate,
    /// The time a species peaks.
    SpeciesPeak(String),
    /// The first time the temperature exceeds its initial value by this many K.
    TemperatureRise(f64),
}

/// What an observable measures. Species are named as in the mechanism; every value is SI.
#[derive(Debug, Clone, PartialEq)]
pub enum ObservableKind {
    /// Concentration of a species at a time (value in mol/m3).
    Concentration {
        /// The species.
        species: String,
        /// The time, s.
        time_s: f64,
    },
    /// Mole fraction of a species at a time (dimensionless).
    MoleFraction {
        /// The species.
        species: String,
        /// The time, s.
        time_s: f64,
    },
    /// The largest concentration of a species (mol/m3), located on the solver's steps.
    PeakValue {
        /// The species.
        species: String,
    },
    /// The time of a species' largest concentration (s), located on the solver's steps.
    PeakTime {
        /// The species.
        species: String,
    },
    /// The first time a species' concentration reaches a level (s), located on the
    /// solver's steps.
    CrossingTime {
        /// The species.
        species: String,
        /// The level, mol/m3.
        level_mol_per_m3: f64,
    },
    /// The temperature at the end time (K).
    FinalTemperature,
    /// The ignition delay (s).
    IgnitionDelay {
        /// The criterion.
        criterion: DelayCriterion,
    },
    /// The time integral of a species' concentration from 0 to the end time (mol s/m3),
    /// on the solver's steps (independent of the output grid).
    Integral {
        /// The species.
        species: String,
    },
}

impl ObservableKind {
    /// The SI unit of the observable's values.
    pub fn unit(&self) -> &'static str {
        match self {
            ObservableKind::Concentration { .. } | ObservableKind::PeakValue { .. } => "mol/m3",
            ObservableKind::MoleFraction { .. } => "1",
            ObservableKind::PeakTime { .. }
            | ObservableKind::CrossingTime { .. }
            | ObservableKind::IgnitionDelay { .. } => "s",
            ObservableKind::FinalTemperature => "K",
            ObservableKind::Integral { .. } => "mol s/m3",
        }
    }

    fn dimension(&self) -> Dimension {
        match self {
            ObservableKind::Concentration { .. } | ObservableKind::PeakValue { .. } => {
                Dimension::Concentration
            }
            ObservableKind::MoleFraction { .. } | ObservableKind::Integral { .. } => {
                Dimension::Plain
            }
            ObservableKind::PeakTime { .. }
            | ObservableKind::CrossingTime { .. }
            | ObservableKind::IgnitionDelay { .. } => Dimension::Time,
            ObservableKind::FinalTemperature => Dimension::Temperature,
        }
    }

    /// The species the observable names, if any.
    pub fn species(&self) -> Option<&str> {
        match self {
            ObservableKind::Concentration { species, .. }
            | ObservableKind::MoleFraction { species, .. }
            | ObservableKind::PeakValue { species }
            | ObservableKind::PeakTime { species }
            | ObservableKind::CrossingTime { species, .. }
            | ObservableKind::Integral { species } => Some(species),
            ObservableKind::IgnitionDelay {
                criterion: DelayCriterion::SpeciesPeak(species),
            } => Some(species),
            _ => None,
        }
    }
}

/// One named observable of a case.
#[derive(Debug, Clone, PartialEq)]
pub struct Observable {
    /// Its name, unique within the case (a `times` list gives one observable per time,
    /// named `NAME t=TIME s`).
    pub name: String,
    /// What it measures.
    pub kind: ObservableKind,
    /// How far it may move from the baseline (its own, or the suite's default).
    pub tolerance: Tolerance,
    /// A measured value to validate against, if given.
    pub measured: Option<Measured>,
    /// Where it is written in the suite file.
    pub location: Option<SourceLocation>,
}

/// One case: a scenario with overrides, and its observables. A sweep (`temperatures`,
/// `pressures`) is expanded into one case per value (per pair for both), named
/// `NAME T=VALUE K` and `NAME P=VALUE Pa`.
#[derive(Debug, Clone, PartialEq)]
pub struct SuiteCase {
    /// The case name, unique within the suite.
    pub name: String,
    /// The scenario file, resolved against the suite file's folder.
    pub scenario_path: PathBuf,
    /// Temperature override, K.
    pub temperature_k: Option<f64>,
    /// Pressure override, Pa.
    pub pressure_pa: Option<f64>,
    /// End time override, s.
    pub end_time_s: Option<f64>,
    /// Initial composition override (`mole_fractions` or `concentrations`), species by name.
    pub initial: Option<Composition>,
    /// The observables.
    pub observables: Vec<Observable>,
    /// Where the case is written in the suite file.
    pub location: Option<SourceLocation>,
}

/// A parsed suite file: its cases, sweeps expanded.
#[derive(Debug, Clone, PartialEq)]
pub struct Suite {
    /// Optional title.
    pub title: Option<String>,
    /// The file label the suite was read from (diagnostics name it).
    pub file: String,
    /// The folder relative paths start from.
    pub folder: PathBuf,
    /// The default tolerance of the observables that give none.
    pub default_tolerance: Tolerance,
    /// The cases in file order, sweeps expanded in the order of their values.
    pub cases: Vec<SuiteCase>,
    /// SHA-256 of the suite file's bytes (lowercase hex).
    pub sha256: String,
}

impl Suite {
    /// Reads and parses the suite file at `path`; scenario paths are resolved against its
    /// folder. Diagnostics name the path as given.
    pub fn load(path: &Path) -> Result<Suite, LoadError> {
        let label = path.display().to_string();
        let text = stoik_mechanism::read_input_text(path).map_err(|e| e.into_load_error(&label))?;
        let folder = path.parent().unwrap_or_else(|| Path::new(""));
        parse_suite(&text, &label, folder)
    }

    /// The case named `name`.
    pub fn case(&self, name: &str) -> Option<&SuiteCase> {
        self.cases.iter().find(|c| c.name == name)
    }
}

/// Parses suite text; `file_label` names the file in diagnostics and `folder` is where
/// relative scenario paths start. Every problem is reported at once.
pub fn parse_suite(text: &str, file_label: &str, folder: &Path) -> Result<Suite, LoadError> {
    let mut r = Report::new(text, file_label);
    let Some(doc) = parse_document(text, &mut r) else {
        return Err(r.into_error());
    };
    let suite = read_suite(&mut r, doc.get_ref(), file_label, folder);
    let mut diagnostics: Diagnostics = r.finish();
    match suite {
        Some(mut s) if !diagnostics.has_errors() => {
            s.sha256 = crate::hash::sha256_hex(text.as_bytes());
            Ok(s)
        }
        Some(s) => {
            // Every problem at once: the cases that did read are matched against their
            // scenarios and mechanisms too (unknown species, refused overrides).
            if let Err(LoadError::Invalid { diagnostics: more }) = crate::case::prepare_cases(&s) {
                diagnostics.0.extend(more.0);
            }
            Err(LoadError::Invalid { diagnostics })
        }
        None => Err(LoadError::Invalid { diagnostics }),
    }
}

const TOP_KEYS: &[&str] = &["stoik_suite", "title", "tolerance", "case"];
const CASE_KEYS: &[&str] = &[
    "name",
    "scenario",
    "temperature",
    "temperatures",
    "pressure",
    "pressures",
    "end_time",
    "mole_fractions",
    "concentrations",
    "observable",
];
const OBSERVABLE_KEYS: &[&str] = &[
    "name",
    "kind",
    "species",
    "time",
    "times",
    "level",
    "criterion",
    "rise",
    "tolerance",
    "measured",
];
/// The observable kinds as written in suite files.
pub const OBSERVABLE_KINDS: &[&str] = &[
    "concentration",
    "mole-fraction",
    "peak",
    "peak-time",
    "crossing-time",
    "final-temperature",
    "ignition-delay",
    "integral",
];
const CRITERIA: &[&str] = &[
    "scenario",
    "max-temperature-rate",
    "species-peak",
    "temperature-rise",
];

fn read_suite(r: &mut Report<'_>, root: &DeTable<'_>, file: &str, folder: &Path) -> Option<Suite> {
    r.check_keys(root, TOP_KEYS, "the suite file");
    read_version(r, root);
    let title = root
        .get("title")
        .and_then(|v| r.string("title", v).map(str::to_string));
    let default_tolerance = match root.get("tolerance") {
        Some(v) => read_tolerance(r, v, Dimension::Plain, true),
        None => Some(Tolerance::Relative(1e-3)),
    };
    let mut cases = Vec::new();
    match root.get("case") {
        None => r.file_error(
            "no `[[case]]`: a suite needs at least one case",
            Some("add `[[case]]` with `name`, `scenario` and `[[case.observable]]`".into()),
        ),
        Some(v) => match v.get_ref() {
            DeValue::Array(items) => {
                for item in items.iter() {
                    if let Some(t) = r.table("case", item) {
                        let at = item.span().start;
                        cases.extend(
                            read_case(r, t, item, folder, default_tolerance)
                                .into_iter()
                                .map(|c| (c, at)),
                        );
                    }
                }
            }
            _ => r.wrong_type("case", v, "an array of tables `[[case]]`"),
        },
    }
    // Names must be unique after sweeps are expanded.
    for (i, (case, at)) in cases.iter().enumerate() {
        if cases[..i].iter().any(|(c, _)| c.name == case.name) {
            r.error(
                *at,
                format!("duplicate case name `{}`", case.name),
                Some("give every case (and every swept value) its own name".into()),
            );
        }
    }
    let cases = cases.into_iter().map(|(c, _)| c).collect();
    Some(Suite {
        title,
        file: file.to_string(),
        folder: folder.to_path_buf(),
        default_tolerance: default_tolerance?,
        cases,
        sha256: String::new(),
    })
}

fn read_version(r: &mut Report<'_>, root: &DeTable<'_>) {
    r.format_version(
        root,
        "stoik_suite",
        "suite",
        SUITE_FORMAT_VERSION,
        "the first line of a version-1 suite is `stoik_suite = 1`".to_string(),
    );
}

/// Reads `{ relative = r }`, `{ absolute = a }` or `{ factor = f }` (exactly one key).
fn read_tolerance(
    r: &mut Report<'_>,
    value: &Value<'_>,
    dimension: Dimension,
    suite_wide: bool,
) -> Option<Tolerance> {
    let table = r.table("tolerance", value)?;
    r.check_keys(table, &["relative", "absolute", "factor"], "`tolerance`");
    let given: Vec<_> = table.iter().collect();
    if given.len() != 1 {
        r.error(
            value.span().start,
            "`tolerance` needs exactly one of `relative`, `absolute`, `factor`",
            Some("e.g. tolerance = { factor = 1.05 } (5 % either way in log space)".into()),
        );
        return None;
    }
    let (key, v) = given[0];
    let at = v.span().start;
    match key.get_ref().as_ref() {
        "relative" => {
            let x = r.number("relative", v)?;
            if !(x.is_finite() && x > 0.0) {
                r.error(
                    at,
                    format!(
                        "`relative` must be positive and finite, got {}",
                        show_number(x)
                    ),
                    None,
                );
                return None;
            }
            Some(Tolerance::Relative(x))
        }
        "absolute" => {
            if suite_wide {
                r.error(
                    at,
                    "the suite-wide `tolerance` cannot be `absolute`: observables have different units",
                    Some("give `absolute` on each observable instead".into()),
                );
                return None;
            }
            let x = number_or_quantity(r, "absolute", v, dimension)?;
            if !(x.is_finite() && x > 0.0) {
                r.error(
                    at,
                    format!(
                        "`absolute` must be positive and finite, got {}",
                        show_number(x)
                    ),
                    None,
                );
                return None;
            }
            Some(Tolerance::Absolute(x))
        }
        "factor" => {
            let x = r.number("factor", v)?;
            if !(x.is_finite() && x > 1.0) {
                r.error(
                    at,
                    format!(
                        "`factor` must be finite and above 1, got {}",
                        show_number(x)
                    ),
                    Some(
                        "a factor of 1.05 accepts values from baseline/1.05 to baseline*1.05"
                            .into(),
                    ),
                );
                return None;
            }
            Some(Tolerance::Factor(x))
        }
        _ => None,
    }
}

/// A list of quantities (`temperatures`, `pressures`, `times`), each a number in the
/// dimension's default unit or a "VALUE UNIT" string.
fn read_list(
    r: &mut Report<'_>,
    key: &str,
    value: &Value<'_>,
    dimension: Dimension,
) -> Option<Vec<f64>> {
    let DeValue::Array(items) = value.get_ref() else {
        r.wrong_type(key, value, "an array");
        return None;
    };
    if items.is_empty() {
        r.error(value.span().start, format!("`{key}` is empty"), None);
        return None;
    }
    let mut out = Vec::new();
    let mut ok = true;
    for item in items.iter() {
        match number_or_quantity(r, key, item, dimension) {
            Some(x) => out.push(x),
            None => ok = false,
        }
    }
    ok.then_some(out)
}

fn read_case(
    r: &mut Report<'_>,
    table: &DeTable<'_>,
    value: &Value<'_>,
    folder: &Path,
    default_tolerance: Option<Tolerance>,
) -> Vec<SuiteCase> {
    r.check_keys(table, CASE_KEYS, "[[case]]");
    let at = value.span().start;
    let location = Some(r.location(at));
    let name = match table.get("name") {
        Some(v) => r.string("name", v).map(str::to_string),
        None => {
            r.error(at, "a `[[case]]` needs a `name`", None);
            None
        }
    };
    if let (Some(n), Some(v)) = (&name, table.get("name")) {
        if n.trim().is_empty() {
            r.error(v.span().start, "the case `name` is empty", None);
        }
    }
    let scenario_path = match table.get("scenario") {
        None => {
            r.error(
                at,
                "a `[[case]]` needs a `scenario` (the scenario file to run)",
                Some("e.g. scenario = \"my.scenario.toml\", relative to this file's folder".into()),
            );
            None
        }
        Some(v) => r.string("scenario", v).and_then(|s| {
            let path = folder.join(s);
            if path.is_file() {
                Some(path)
            } else {
                r.error(
                    v.span().start,
                    format!(
                        "scenario file `{s}` not found (looked for `{}`)",
                        path.display()
                    ),
                    Some("the path is relative to the suite file's folder".into()),
                );
                None
            }
        }),
    };
    let single_and_list = |r: &mut Report<'_>, one: &str, many: &str, dim: Dimension| match (
        table.get(one),
        table.get(many),
    ) {
        (Some(_), Some(v)) => {
            r.error(
                v.span().start,
                format!("give `{one}` or `{many}`, not both"),
                None,
            );
            None
        }
        (Some(v), None) => number_or_quantity(r, one, v, dim).map(|x| vec![Some(x)]),
        (None, Some(v)) => read_list(r, many, v, dim).map(|l| l.into_iter().map(Some).collect()),
        (None, None) => Some(vec![None]),
    };
    let temperatures = single_and_list(r, "temperature", "temperatures", Dimension::Temperature);
    let pressures = single_and_list(r, "pressure", "pressures", Dimension::Pressure);
    let end_time_s = match table.get("end_time") {
        Some(v) => number_or_quantity(r, "end_time", v, Dimension::Time).map(Some),
        None => Some(None),
    };
    let initial = match (table.get("mole_fractions"), table.get("concentrations")) {
        (Some(_), Some(v)) => {
            r.error(
                v.span().start,
                "give `mole_fractions` or `concentrations`, not both",
                None,
            );
            None
        }
        (Some(v), None) => read_composition(r, "mole_fractions", v, Dimension::Plain)
            .map(|c| Some(Composition::MoleFractions(c))),
        (None, Some(v)) => read_composition(r, "concentrations", v, Dimension::Concentration)
            .map(|c| Some(Composition::ConcentrationsMolPerM3(c))),
        (None, None) => Some(None),
    };
    let mut observables = Vec::new();
    match table.get("observable") {
        None => r.error(
            at,
            "a `[[case]]` needs at least one `[[case.observable]]`",
            None,
        ),
        Some(v) => match v.get_ref() {
            DeValue::Array(items) => {
                for item in items.iter() {
                    if let Some(t) = r.table("observable", item) {
                        let at = item.span().start;
                        observables.extend(
                            read_observable(r, t, item, default_tolerance)
                                .into_iter()
                                .map(|o| (o, at)),
                        );
                    }
                }
            }
            _ => r.wrong_type("observable", v, "an array of tables `[[case.observable]]`"),
        },
    }
    for (i, (o, at)) in observables.iter().enumerate() {
        if observables[..i].iter().any(|(p, _)| p.name == o.name) {
            r.error(
                *at,
                format!("duplicate observable name `{}` in this case", o.name),
                None,
            );
        }
    }
    let observables: Vec<Observable> = observables.into_iter().map(|(o, _)| o).collect();
    let (
        Some(name),
        Some(scenario_path),
        Some(temperatures),
        Some(pressures),
        Some(end_time_s),
        Some(initial),
    ) = (
        name,
        scenario_path,
        temperatures,
        pressures,
        end_time_s,
        initial,
    )
    else {
        return Vec::new();
    };
    let swept_t = temperatures.len() > 1 || table.contains_key("temperatures");
    let swept_p = pressures.len() > 1 || table.contains_key("pressures");
    let mut cases = Vec::new();
    for &t in &temperatures {
        for &p in &pressures {
            let mut label = name.clone();
            if let (true, Some(t)) = (swept_t, t) {
                label.push_str(&format!(" T={} K", show_number(t)));
            }
            if let (true, Some(p)) = (swept_p, p) {
                label.push_str(&format!(" P={} Pa", show_number(p)));
            }
            cases.push(SuiteCase {
                name: label,
                scenario_path: scenario_path.clone(),
                temperature_k: t,
                pressure_pa: p,
                end_time_s,
                initial: initial.clone(),
                observables: observables.clone(),
                location,
            });
        }
    }
    cases
}

/// Reads a species-keyed table of values (`{ H2 = 0.1, O2 = "5 mol/m3" }`) in `dimension`;
/// problems recorded at their values. Species names are matched against the mechanism when
/// the case is prepared.
fn read_composition(
    r: &mut Report<'_>,
    key: &str,
    value: &Value<'_>,
    dimension: Dimension,
) -> Option<Vec<(String, f64)>> {
    let table = r.table(key, value)?;
    let mut out = Vec::new();
    let mut ok = true;
    for (name, v) in table.iter() {
        match number_or_quantity(r, key, v, dimension) {
            Some(x) if x.is_finite() && x >= 0.0 => out.push((name.get_ref().to_string(), x)),
            Some(x) => {
                r.error(
                    v.span().start,
                    format!(
                        "`{key}`: the value of `{}` must be finite and at least 0, got {x}",
                        name.get_ref()
                    ),
                    None,
                );
                ok = false;
            }
            None => ok = false,
        }
    }
    if out.is_empty() && ok {
        r.error(
            value.span().start,
            format!("`{key}` names no species"),
            None,
        );
        ok = false;
    }
    ok.then_some(out)
}

fn read_observable(
    r: &mut Report<'_>,
    table: &DeTable<'_>,
    value: &Value<'_>,
    default_tolerance: Option<Tolerance>,
) -> Vec<Observable> {
    r.check_keys(table, OBSERVABLE_KEYS, "[[case.observable]]");
    let at = value.span().start;
    let location = Some(r.location(at));
    let name = match table.get("name") {
        Some(v) => r.string("name", v).map(str::to_string),
        None => {
            r.error(at, "an observable needs a `name`", None);
            None
        }
    };
    let kind_name = match table.get("kind") {
        Some(v) => r.one_of("kind", v, "observable kind", OBSERVABLE_KINDS, |s| {
            OBSERVABLE_KINDS.contains(&s).then(|| s.to_string())
        }),
        None => {
            r.error(
                at,
                "an observable needs a `kind`",
                Some(format!("one of: {}", OBSERVABLE_KINDS.join(", "))),
            );
            None
        }
    };
    let Some(kind_name) = kind_name else {
        return Vec::new();
    };
    let needs = |r: &mut Report<'_>, key: &str| -> bool {
        if table.contains_key(key) {
            true
        } else {
            r.error(
                at,
                format!("a `{kind_name}` observable needs `{key}`"),
                None,
            );
            false
        }
    };
    let species = |r: &mut Report<'_>| -> Option<String> {
        if !needs(r, "species") {
            return None;
        }
        table
            .get("species")
            .and_then(|v| r.string("species", v).map(str::to_string))
    };
    // Keys that only some kinds take.
    let allowed: &[&str] = match kind_name.as_str() {
        "concentration" | "mole-fraction" => &["species", "time", "times"],
        "peak" | "peak-time" | "integral" => &["species"],
        "crossing-time" => &["species", "level"],
        "final-temperature" => &[],
        _ => &["criterion", "species", "rise"],
    };
    for key in ["species", "time", "times", "level", "criterion", "rise"] {
        if let (Some(v), false) = (table.get_key_value(key), allowed.contains(&key)) {
            r.error(
                v.0.span().start,
                format!("a `{kind_name}` observable takes no `{key}`"),
                None,
            );
        }
    }
    let mut kinds: Vec<(Option<String>, ObservableKind)> = Vec::new();
    match kind_name.as_str() {
        "concentration" | "mole-fraction" => {
            let species = species(r);
            let times = match (table.get("time"), table.get("times")) {
                (Some(v), None) => {
                    number_or_quantity(r, "time", v, Dimension::Time).map(|t| vec![(None, t)])
                }
                (None, Some(v)) => read_list(r, "times", v, Dimension::Time)
                    .map(|l| l.into_iter().map(|t| (Some(t), t)).collect()),
                (Some(_), Some(v)) => {
                    r.error(v.span().start, "give `time` or `times`, not both", None);
                    None
                }
                (None, None) => {
                    r.error(
                        at,
                        format!("a `{kind_name}` observable needs `time` or `times`"),
                        None,
                    );
                    None
                }
            };
            if let (Some(species), Some(times)) = (species, times) {
                for (suffix, time_s) in times {
                    if !(time_s.is_finite() && time_s >= 0.0) {
                        r.error(
                            at,
                            format!(
                                "time {} s must be finite and not negative",
                                show_number(time_s)
                            ),
                            None,
                        );
                        continue;
                    }
                    let species = species.clone();
                    let kind = if kind_name == "concentration" {
                        ObservableKind::Concentration { species, time_s }
                    } else {
                        ObservableKind::MoleFraction { species, time_s }
                    };
                    kinds.push((suffix.map(|t| format!(" t={} s", show_number(t))), kind));
                }
            }
        }
        "peak" => {
            if let Some(species) = species(r) {
                kinds.push((None, ObservableKind::PeakValue { species }));
            }
        }
        "peak-time" => {
            if let Some(species) = species(r) {
                kinds.push((None, ObservableKind::PeakTime { species }));
            }
        }
        "integral" => {
            if let Some(species) = species(r) {
                kinds.push((None, ObservableKind::Integral { species }));
            }
        }
        "crossing-time" => {
            let species = species(r);
            let level = if needs(r, "level") {
                table
                    .get("level")
                    .and_then(|v| number_or_quantity(r, "level", v, Dimension::Concentration))
            } else {
                None
            };
            if let (Some(species), Some(level_mol_per_m3)) = (species, level) {
                kinds.push((
                    None,
                    ObservableKind::CrossingTime {
                        species,
                        level_mol_per_m3,
                    },
                ));
            }
        }
        "final-temperature" => kinds.push((None, ObservableKind::FinalTemperature)),
        _ => {
            let criterion = match table.get("criterion") {
                None => Some("scenario".to_string()),
                Some(v) => r.one_of("criterion", v, "ignition criterion", CRITERIA, |s| {
                    CRITERIA.contains(&s).then(|| s.to_string())
                }),
            };
            let criterion = match criterion.as_deref() {
                Some("scenario") => Some(DelayCriterion::Scenario),
                Some("max-temperature-rate") => Some(DelayCriterion::MaxTemperatureRate),
                Some("species-peak") => species(r).map(DelayCriterion::SpeciesPeak),
                Some("temperature-rise") => {
                    if needs(r, "rise") {
                        table.get("rise").and_then(|v| {
                            let x =
                                number_or_quantity(r, "rise", v, Dimension::TemperatureDifference)?;
                            if x.is_finite() && x > 0.0 {
                                Some(DelayCriterion::TemperatureRise(x))
                            } else {
                                r.error(
                                    v.span().start,
                                    "`rise` must be a positive number of K",
                                    None,
                                );
                                None
                            }
                        })
                    } else {
                        None
                    }
                }
                _ => None,
            };
            if let Some(criterion) = criterion {
                kinds.push((None, ObservableKind::IgnitionDelay { criterion }));
            }
        }
    }
    let dimension = kinds
        .first()
        .map_or(Dimension::Plain, |(_, k)| k.dimension());
    let tolerance = match table.get("tolerance") {
        Some(v) => read_tolerance(r, v, dimension, false),
        None => default_tolerance,
    };
    let measured = table
        .get("measured")
        .map(|v| read_measured(r, v, dimension))
        .unwrap_or(Some(None));
    let (Some(name), Some(tolerance), Some(measured)) = (name, tolerance, measured) else {
        return Vec::new();
    };
    if name.trim().is_empty() {
        if let Some(v) = table.get("name") {
            r.error(v.span().start, "the observable `name` is empty", None);
        }
    }
    if measured.is_some() && kinds.len() > 1 {
        r.error(
            at,
            "`measured` needs a single `time`, not a `times` list",
            None,
        );
    }
    kinds
        .into_iter()
        .map(|(suffix, kind)| Observable {
            name: format!("{name}{}", suffix.unwrap_or_default()),
            kind,
            tolerance,
            measured,
            location,
        })
        .collect()
}

/// Reads `measured = { value = ..., uncertainty = ... }` in the observable's dimension.
fn read_measured(
    r: &mut Report<'_>,
    value: &Value<'_>,
    dimension: Dimension,
) -> Option<Option<Measured>> {
    let table = r.table("measured", value)?;
    r.check_keys(table, &["value", "uncertainty"], "`measured`");
    let mut get = |key: &str| -> Option<f64> {
        match table.get(key) {
            Some(v) => {
                let x = number_or_quantity(r, key, v, dimension)?;
                if x.is_finite() {
                    Some(x)
                } else {
                    r.error(v.span().start, format!("`{key}` must be finite"), None);
                    None
                }
            }
            None => {
                r.error(
                    value.span().start,
                    format!("`measured` needs `{key}`"),
                    None,
                );
                None
            }
        }
    };
    let v = get("value");
    let u = get("uncertainty");
    let (v, u) = (v?, u?);
    if u < 0.0 {
        r.error(
            value.span().start,
            "`uncertainty` must not be negative",
            None,
        );
        return None;
    }
    Some(Some(Measured {
        value: v,
        uncertainty: u,
    }))
}
