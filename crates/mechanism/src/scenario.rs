//! The scenario file (TOML, format version 1): which mechanism to run, in which reactor, from
//! which initial state, with which output times and solver settings.
//!
//! [`parse_scenario`] checks the file on its own (every problem at once, with line:column);
//! [`Scenario::resolve`] then matches species names against a loaded [`Mechanism`] and turns
//! the initial state, tolerances and output grid into per-species SI vectors.

use crate::scenario_box::{read_box, BoxSpec, ResolvedBox};
use crate::suggest::nearest_name;
use crate::toml_walk::{parse_document, positive_finite_problem, show_number, Report, Value};
use crate::units::{
    pressure_to_pa, split_quantity, temperature_to_k, time_to_s, ConcentrationUnit, PRESSURE_UNITS,
    SCENARIO_TIME_UNITS, TEMPERATURE_UNITS,
};
use crate::{Diagnostic, Diagnostics, LoadError, Mechanism, SourceLocation, GAS_CONSTANT};
use std::collections::HashMap;
use std::path::{Path, PathBuf};
use toml::de::{DeTable, DeValue};

/// The scenario format version this crate reads (`stoik_scenario = 1`).
pub const SCENARIO_FORMAT_VERSION: i64 = 1;
/// Tolerance on the sum of initial mole fractions (must be 1 within this).
pub const MOLE_FRACTION_SUM_TOLERANCE: f64 = 1e-6;
/// Largest number of output points a grid may ask for (bounds memory on hostile input).
pub const MAX_GRID_POINTS: u64 = 10_000_000;

/// The kind of reactor to simulate: a closed ideal-gas batch reactor at constant volume or
/// constant pressure, with the temperature held, solved from the energy balance, or
/// prescribed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ReactorKind {
    /// Fixed temperature, fixed volume (`"isothermal-constant-volume"`).
    IsothermalConstantVolume,
    /// Fixed temperature, fixed pressure (`"isothermal-constant-pressure"`).
    IsothermalConstantPressure,
    /// No heat exchange, fixed volume (`"adiabatic-constant-volume"`).
    AdiabaticConstantVolume,
    /// No heat exchange, fixed pressure (`"adiabatic-constant-pressure"`).
    AdiabaticConstantPressure,
    /// Temperature from `temperature_history`, fixed volume
    /// (`"prescribed-temperature-constant-volume"`).
    PrescribedConstantVolume,
    /// Temperature from `temperature_history`, fixed pressure
    /// (`"prescribed-temperature-constant-pressure"`).
    PrescribedConstantPressure,
}

impl ReactorKind {
    /// Names accepted in files.
    pub const ACCEPTED: &'static [&'static str] = &[
        "isothermal-constant-volume",
        "isothermal-constant-pressure",
        "adiabatic-constant-volume",
        "adiabatic-constant-pressure",
        "prescribed-temperature-constant-volume",
        "prescribed-temperature-constant-pressure",
    ];

    const ALL: [ReactorKind; 6] = [
        ReactorKind::IsothermalConstantVolume,
        ReactorKind::IsothermalConstantPressure,
        ReactorKind::AdiabaticConstantVolume,
        ReactorKind::AdiabaticConstantPressure,
        ReactorKind::PrescribedConstantVolume,
        ReactorKind::PrescribedConstantPressure,
    ];

    /// The name as written in files.
    pub fn label(&self) -> &'static str {
        match self {
            ReactorKind::IsothermalConstantVolume => "isothermal-constant-volume",
            ReactorKind::IsothermalConstantPressure => "isothermal-constant-pressure",
            ReactorKind::AdiabaticConstantVolume => "adiabatic-constant-volume",
            ReactorKind::AdiabaticConstantPressure => "adiabatic-constant-pressure",
            ReactorKind::PrescribedConstantVolume => "prescribed-temperature-constant-volume",
            ReactorKind::PrescribedConstantPressure => "prescribed-temperature-constant-pressure",
        }
    }

    /// Parses a name as written in files.
    pub fn parse(text: &str) -> Option<Self> {
        Self::ALL.into_iter().find(|k| k.label() == text)
    }

    /// Whether the pressure (rather than the volume) is held constant.
    pub fn constant_pressure(&self) -> bool {
        matches!(
            self,
            ReactorKind::IsothermalConstantPressure
                | ReactorKind::AdiabaticConstantPressure
                | ReactorKind::PrescribedConstantPressure
        )
    }

    /// Whether the energy balance is solved (adiabatic kinds).
    pub fn adiabatic(&self) -> bool {
        matches!(
            self,
            ReactorKind::AdiabaticConstantVolume | ReactorKind::AdiabaticConstantPressure
        )
    }

    /// Whether the temperature follows `temperature_history`.
    pub fn prescribed(&self) -> bool {
        matches!(
            self,
            ReactorKind::PrescribedConstantVolume | ReactorKind::PrescribedConstantPressure
        )
    }
}

/// How the run reports an ignition delay (`[ignition]`).
#[derive(Debug, Clone, PartialEq)]
pub enum IgnitionChoice {
    /// Time of the largest dT/dt (`criterion = "max-temperature-rate"`).
    MaxTemperatureRate,
    /// Time of a species' peak (`criterion = "species-peak"`, `species = "OH"`).
    SpeciesPeak(String),
    /// First time the temperature has risen by this many K (`criterion =
    /// "temperature-rise"`, `rise = "400 K"`).
    TemperatureRise(f64),
}

/// When to write output rows (t = 0 is always the first row, `end_time` the last).
#[derive(Debug, Clone, PartialEq)]
pub enum OutputTimes {
    /// Explicit times in s, strictly increasing, within [0, end_time].
    List(Vec<f64>),
    /// `points` times evenly spaced from 0 to end_time inclusive (`points >= 2`).
    Linear {
        /// Number of output times, including 0 and end_time.
        points: usize,
    },
    /// t = 0, then `points` times log-spaced from `first_s` to end_time inclusive.
    Logarithmic {
        /// First positive output time in s (below end_time).
        first_s: f64,
        /// Number of log-spaced times, including `first_s` and end_time (`points >= 2`).
        points: usize,
    },
}

/// Which linear algebra the integrator should use.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LinearAlgebraChoice {
    /// Chosen by system size and fill.
    Auto,
    /// Dense LU.
    Dense,
    /// Sparse LU.
    Sparse,
}

impl LinearAlgebraChoice {
    /// Names accepted in files.
    pub const ACCEPTED: &'static [&'static str] = &["auto", "dense", "sparse"];

    /// Parses a name as written in a file.
    pub fn parse(text: &str) -> Option<Self> {
        match text {
            "auto" => Some(LinearAlgebraChoice::Auto),
            "dense" => Some(LinearAlgebraChoice::Dense),
            "sparse" => Some(LinearAlgebraChoice::Sparse),
            _ => None,
        }
    }
}

/// Species names of a mechanism, for resolving the names a scenario uses.
pub(crate) struct SpeciesLookup<'m> {
    index: HashMap<&'m str, usize>,
    mechanism: &'m Mechanism,
    file: &'m str,
}

impl<'m> SpeciesLookup<'m> {
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

/// A species-name-keyed value from the file, kept with its location for later resolution.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct NamedValue {
    pub(crate) name: String,
    /// mol/m3 for concentrations and tolerances; dimensionless for mole fractions.
    pub(crate) value: f64,
    pub(crate) location: SourceLocation,
}

#[derive(Debug, Clone, PartialEq)]
enum InitialState {
    /// Concentrations in mol/m3.
    Concentrations(Vec<NamedValue>),
    /// Mole fractions (sum 1).
    MoleFractions(Vec<NamedValue>),
}

/// A parsed scenario. The public fields may be changed (for example from command-line flags)
/// before [`Scenario::resolve`].
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    /// Optional title.
    pub title: Option<String>,
    /// The mechanism file, resolved against the scenario file's folder.
    pub mechanism_path: PathBuf,
    /// Reactor kind.
    pub reactor: ReactorKind,
    /// Temperature in K: the held one (isothermal), the initial one (adiabatic), or the
    /// history's first value (prescribed).
    pub temperature_k: f64,
    /// Prescribed temperature history as (time in s, temperature in K) points, for the
    /// prescribed kinds; times strictly increasing from 0.
    pub temperature_history: Option<Vec<(f64, f64)>>,
    /// How to report the ignition delay; `None` = by the largest dT/dt when the temperature
    /// is not held.
    pub ignition: Option<IgnitionChoice>,
    /// Pressure in Pa, when given (needed for mole fractions).
    pub pressure_pa: Option<f64>,
    /// Simulated time span in s (from t = 0).
    pub end_time_s: f64,
    /// Output times.
    pub output: OutputTimes,
    /// Unit of output concentration columns.
    pub output_concentration_unit: ConcentrationUnit,
    /// Relative tolerance of the integrator (dimensionless, in (0, 1)).
    pub relative_tolerance: f64,
    /// Default absolute tolerance in mol/m3 (per-species overrides are kept privately).
    pub absolute_tolerance_mol_per_m3: f64,
    /// Linear algebra choice.
    pub linear_algebra: LinearAlgebraChoice,
    /// Maximum number of integrator steps.
    pub max_steps: usize,
    initial: InitialState,
    tolerance_overrides: Vec<NamedValue>,
    ignition_species: Option<NamedValue>,
    box_spec: BoxSpec,
    file: String,
}

/// A scenario matched against a mechanism: per-species SI vectors and the output times.
#[derive(Debug, Clone, PartialEq)]
pub struct ResolvedScenario {
    /// Initial concentration of every mechanism species in mol/m3 (species order).
    pub initial_concentrations_mol_per_m3: Vec<f64>,
    /// Absolute tolerance of every species in mol/m3 (species order).
    pub absolute_tolerances_mol_per_m3: Vec<f64>,
    /// Output times in s: starts with 0.0, ends with end_time, strictly increasing.
    pub output_times_s: Vec<f64>,
    /// Mechanism index of the `[ignition]` species (criterion `species-peak`).
    pub ignition_species: Option<usize>,
    /// Box-model conditions (`[box]`, `[sun]`, `[[photolysis]]`), empty when not given.
    pub box_conditions: ResolvedBox,
}

/// Reads and parses the scenario file at `path`; the mechanism path is resolved against the
/// file's folder. Diagnostics name the path as given.
pub fn load_scenario(path: &Path) -> Result<(Scenario, Diagnostics), LoadError> {
    let label = path.display().to_string();
    let text = std::fs::read_to_string(path).map_err(|e| LoadError::Io {
        file: label.clone(),
        reason: e.to_string(),
    })?;
    let base = path.parent().unwrap_or_else(|| Path::new(""));
    parse_scenario(&text, &label, base)
}

/// Parses and validates scenario text; `file_label` names the file in diagnostics and
/// `base_dir` is the folder the `mechanism` path is relative to.
///
/// On success returns the scenario and its warnings; otherwise every problem found.
pub fn parse_scenario(
    text: &str,
    file_label: &str,
    base_dir: &Path,
) -> Result<(Scenario, Diagnostics), LoadError> {
    let mut r = Report::new(text, file_label);
    let Some(doc) = parse_document(text, &mut r) else {
        return Err(r.into_error());
    };
    let scenario = read_scenario(&mut r, doc.get_ref(), base_dir, file_label);
    let diagnostics = r.finish();
    match scenario {
        Some(s) if !diagnostics.has_errors() => Ok((s, diagnostics)),
        _ => Err(LoadError::Invalid { diagnostics }),
    }
}

const TOP_KEYS: &[&str] = &[
    "stoik_scenario",
    "title",
    "mechanism",
    "reactor",
    "initial",
    "output",
    "solver",
    "ignition",
    "box",
    "sun",
    "photolysis",
];
const REACTOR_KEYS: &[&str] = &["kind", "temperature", "pressure", "temperature_history"];
const HISTORY_KEYS: &[&str] = &["times", "temperatures"];
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
];

type Converter = fn(f64, &str) -> Option<f64>;

fn concentration_to_si(value: f64, unit: &str) -> Option<f64> {
    ConcentrationUnit::parse(unit).map(|u| value * u.to_si_factor())
}

/// Reads a quantity: a number in `default_unit` or a string "VALUE UNIT".
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
            let x = crate::toml_walk::value_as_number(value.get_ref())?;
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

/// Records an error unless `x` is positive and finite.
fn require_positive(r: &mut Report<'_>, key: &str, value: &Value<'_>, x: f64) -> Option<f64> {
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

fn concentration_unit(
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

/// Reads a table of species name -> value, converting each value with `read`.
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

fn read_version(r: &mut Report<'_>, root: &DeTable<'_>) {
    let help = Some("the first line of a version-1 scenario is `stoik_scenario = 1`".to_string());
    match root.get("stoik_scenario") {
        None => r.file_error("missing format version `stoik_scenario`", help),
        Some(v) => match v.get_ref() {
            DeValue::Integer(_) => {
                let version = crate::toml_walk::value_as_number(v.get_ref());
                if version != Some(SCENARIO_FORMAT_VERSION as f64) {
                    r.error(
                        v.span().start,
                        format!(
                            "unsupported scenario format version {}; this stoik reads version {SCENARIO_FORMAT_VERSION}",
                            version.map(show_number).unwrap_or_default()
                        ),
                        None,
                    );
                }
            }
            _ => r.wrong_type("stoik_scenario", v, "the integer 1"),
        },
    }
}

/// Reads an optional sub-table `key` of `root`, checking its keys.
fn section<'v, 'i>(
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

fn read_scenario(
    r: &mut Report<'_>,
    root: &DeTable<'_>,
    base_dir: &Path,
    file: &str,
) -> Option<Scenario> {
    r.check_keys(root, TOP_KEYS, "the scenario file");
    read_version(r, root);
    let title = root
        .get("title")
        .and_then(|v| r.string("title", v).map(str::to_string));

    // Mechanism path.
    let mechanism_path = match root.get("mechanism") {
        None => {
            r.file_error(
                "missing `mechanism` (the mechanism file to run)",
                Some(
                    "e.g. mechanism = \"my-mechanism.toml\", relative to this file's folder"
                        .to_string(),
                ),
            );
            None
        }
        Some(v) => r.string("mechanism", v).and_then(|name| {
            let path = base_dir.join(name);
            if path.is_file() {
                Some(path)
            } else {
                r.error(
                    v.span().start,
                    format!(
                        "mechanism file `{name}` not found (looked for `{}`)",
                        path.display()
                    ),
                    Some("the path is relative to the scenario file's folder".to_string()),
                );
                None
            }
        }),
    };

    // Reactor.
    let mut kind = Some(ReactorKind::IsothermalConstantVolume);
    let mut temperature_k = None;
    let mut pressure_pa = None;
    let mut pressure_given = false;
    let mut history: Option<Vec<(f64, f64)>> = None;
    let mut history_ok = true;
    match section(r, root, "reactor", REACTOR_KEYS) {
        None => {
            if !root.contains_key("reactor") {
                r.file_error(
                    "missing [reactor] section",
                    Some("e.g. [reactor] temperature = \"1000 K\"".to_string()),
                );
            }
        }
        Some(t) => {
            if let Some(v) = t.get("kind") {
                kind = r.one_of(
                    "kind",
                    v,
                    "reactor kind",
                    ReactorKind::ACCEPTED,
                    ReactorKind::parse,
                );
            }
            let prescribed = kind.is_some_and(|k| k.prescribed());
            match t.get("temperature_history") {
                Some(v) if prescribed => {
                    history = read_history(r, v);
                    history_ok = history.is_some();
                }
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
            match t.get("temperature") {
                None if prescribed => {
                    temperature_k = history.as_ref().and_then(|h| h.first().map(|p| p.1));
                }
                None => r.error(
                    0,
                    "missing `temperature` in [reactor]",
                    Some("e.g. temperature = \"1000 K\"".to_string()),
                ),
                Some(v) => {
                    temperature_k = quantity(
                        r,
                        "temperature",
                        v,
                        "K",
                        temperature_to_k,
                        TEMPERATURE_UNITS,
                    )
                    .and_then(|x| require_positive(r, "temperature", v, x));
                }
            }
            if let Some(v) = t.get("pressure") {
                pressure_given = true;
                pressure_pa = quantity(r, "pressure", v, "Pa", pressure_to_pa, PRESSURE_UNITS)
                    .and_then(|x| require_positive(r, "pressure", v, x));
            }
        }
    }

    // Initial state.
    let mut initial = None;
    match section(r, root, "initial", INITIAL_KEYS) {
        None => {
            if !root.contains_key("initial") {
                r.file_error(
                    "missing [initial] section",
                    Some(
                        "give `concentrations = { ... }` or `mole_fractions = { ... }`".to_string(),
                    ),
                );
            }
        }
        Some(t) => {
            let unit = match t.get("concentration_unit") {
                None => Some(ConcentrationUnit::MolPerM3),
                Some(v) => concentration_unit(r, "concentration_unit", v),
            };
            let concentrations = t.get_key_value("concentrations");
            let fractions = t.get_key_value("mole_fractions");
            match (concentrations, fractions) {
                (Some(_), Some((key, _))) => r.error(
                    key.span().start,
                    "give either `concentrations` or `mole_fractions` in [initial], not both",
                    None,
                ),
                (None, None) => r.error(
                    root.get("initial").map(|v| v.span().start).unwrap_or(0),
                    "[initial] needs `concentrations` or `mole_fractions`",
                    None,
                ),
                (Some((_, v)), None) => {
                    let factor = unit.map(|u| u.to_si_factor());
                    if let Some(table) = r.table("concentrations", v) {
                        let values = named_values(r, table, |r, name, value| {
                            let x = match value.get_ref() {
                                DeValue::Integer(_) | DeValue::Float(_) => {
                                    crate::toml_walk::value_as_number(value.get_ref())
                                        .and_then(|x| factor.map(|f| x * f))
                                }
                                _ => quantity(
                                    r,
                                    name,
                                    value,
                                    "mol/m3",
                                    concentration_to_si,
                                    ConcentrationUnit::ACCEPTED,
                                ),
                            }?;
                            if x.is_nan() || x.is_infinite() || x < 0.0 {
                                r.error(
                                    value.span().start,
                                    format!("initial concentration of `{name}` is {}; it must be finite and not negative", show_number(x)),
                                    None,
                                );
                                return None;
                            }
                            Some(x)
                        });
                        if unit.is_some() {
                            initial = values.map(InitialState::Concentrations);
                        }
                    }
                }
                (None, Some((key, v))) => {
                    if let Some(unit_value) = t.get("concentration_unit") {
                        r.warning(
                            unit_value.span().start,
                            "`concentration_unit` in [initial] is ignored with `mole_fractions`",
                            None,
                        );
                    }
                    if !pressure_given {
                        r.error(
                            key.span().start,
                            "`mole_fractions` need `pressure` in [reactor] (c_i = x_i P / (R T))",
                            Some("e.g. pressure = \"1 atm\"".to_string()),
                        );
                    }
                    if let Some(table) = r.table("mole_fractions", v) {
                        let values = named_values(r, table, |r, name, value| {
                            let x = r.number(name, value)?;
                            if !(0.0..=1.0).contains(&x) {
                                r.error(
                                    value.span().start,
                                    format!("mole fraction of `{name}` is {}; it must be between 0 and 1", show_number(x)),
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
                        initial = values.map(InitialState::MoleFractions);
                    }
                }
            }
        }
    }

    // Output.
    let mut end_time_s = None;
    let mut output = Some(OutputTimes::Linear { points: 101 });
    let mut output_unit = Some(ConcentrationUnit::MolPerM3);
    match section(r, root, "output", OUTPUT_KEYS) {
        None => {
            if !root.contains_key("output") {
                r.file_error(
                    "missing [output] section with `end_time`",
                    Some("e.g. [output] end_time = \"10 s\"".to_string()),
                );
            }
        }
        Some(t) => {
            match t.get("end_time") {
                None => r.error(
                    root.get("output").map(|v| v.span().start).unwrap_or(0),
                    "missing `end_time` in [output]",
                    Some("e.g. end_time = \"10 s\"".to_string()),
                ),
                Some(v) => {
                    end_time_s = quantity(r, "end_time", v, "s", time_to_s, SCENARIO_TIME_UNITS)
                        .and_then(|x| require_positive(r, "end_time", v, x));
                }
            }
            if let Some(v) = t.get("concentration_unit") {
                output_unit = concentration_unit(r, "concentration_unit", v);
            }
            match (t.get_key_value("times"), t.get_key_value("grid")) {
                (Some(_), Some((key, _))) => {
                    r.error(
                        key.span().start,
                        "give either `times` or `grid` in [output], not both",
                        None,
                    );
                    output = None;
                }
                (Some((_, v)), None) => output = read_times(r, v, end_time_s),
                (None, Some((_, v))) => output = read_grid(r, v, end_time_s),
                (None, None) => {}
            }
        }
    }

    // Solver.
    let mut relative_tolerance = Some(1e-6);
    let mut absolute_tolerance_mol_per_m3 =
        Some(1e-12 * output_unit.map(|u| u.to_si_factor()).unwrap_or(1.0));
    let mut tolerance_overrides = Some(Vec::new());
    let mut linear_algebra = Some(LinearAlgebraChoice::Auto);
    let mut max_steps = Some(100_000usize);
    if let Some(t) = section(r, root, "solver", SOLVER_KEYS) {
        let factor = output_unit.map(|u| u.to_si_factor()).unwrap_or(1.0);
        let mut tolerance = |r: &mut Report<'_>, name: &str, value: &Value<'_>| -> Option<f64> {
            let x = match value.get_ref() {
                DeValue::Integer(_) | DeValue::Float(_) => {
                    crate::toml_walk::value_as_number(value.get_ref()).map(|x| x * factor)
                }
                _ => quantity(
                    r,
                    name,
                    value,
                    "mol/m3",
                    concentration_to_si,
                    ConcentrationUnit::ACCEPTED,
                ),
            }?;
            require_positive(r, name, value, x)
        };
        if let Some(v) = t.get("relative_tolerance") {
            relative_tolerance = r.number("relative_tolerance", v).and_then(|x| {
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
            absolute_tolerance_mol_per_m3 = tolerance(r, "absolute_tolerance", v);
        }
        if let Some(v) = t.get("absolute_tolerance_for") {
            tolerance_overrides = r
                .table("absolute_tolerance_for", v)
                .and_then(|table| named_values(r, table, &mut tolerance));
        }
        if let Some(v) = t.get("linear_algebra") {
            linear_algebra = r.one_of(
                "linear_algebra",
                v,
                "linear algebra",
                LinearAlgebraChoice::ACCEPTED,
                LinearAlgebraChoice::parse,
            );
        }
        if let Some(v) = t.get("max_steps") {
            max_steps = r.count("max_steps", v).and_then(|n| {
                if n == 0 {
                    r.error(v.span().start, "`max_steps` must be at least 1", None);
                    None
                } else {
                    Some(usize::try_from(n).unwrap_or(usize::MAX))
                }
            });
        }
    }

    // Ignition report.
    let mut ignition = Some(None);
    let mut ignition_species = None;
    if let Some(t) = section(r, root, "ignition", IGNITION_KEYS) {
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
        ignition = match criterion {
            Some("species-peak") => match t.get("species") {
                Some(v) => r.string("species", v).map(|name| {
                    ignition_species = Some(NamedValue {
                        name: name.to_string(),
                        value: 0.0,
                        location: r.location(v.span().start),
                    });
                    Some(IgnitionChoice::SpeciesPeak(name.to_string()))
                }),
                None => {
                    r.error(
                        0,
                        "[ignition] criterion `species-peak` needs `species`",
                        Some("e.g. species = \"OH\"".to_string()),
                    );
                    None
                }
            },
            Some("temperature-rise") => match t.get("rise") {
                Some(v) => quantity(r, "rise", v, "K", kelvin_difference, &["K"])
                    .and_then(|x| require_positive(r, "rise", v, x))
                    .map(|x| Some(IgnitionChoice::TemperatureRise(x))),
                None => {
                    r.error(
                        0,
                        "[ignition] criterion `temperature-rise` needs `rise`",
                        Some("e.g. rise = \"400 K\"".to_string()),
                    );
                    None
                }
            },
            Some(_) => Some(Some(IgnitionChoice::MaxTemperatureRate)),
            None => None,
        };
    }
    let box_spec = read_box(r, root);
    if !history_ok {
        return None;
    }

    Some(Scenario {
        title,
        mechanism_path: mechanism_path?,
        reactor: kind?,
        temperature_k: temperature_k?,
        temperature_history: history,
        ignition: ignition?,
        ignition_species,
        box_spec: box_spec?,
        pressure_pa: if pressure_given {
            Some(pressure_pa?)
        } else {
            None
        },
        end_time_s: end_time_s?,
        output: output?,
        output_concentration_unit: output_unit?,
        relative_tolerance: relative_tolerance?,
        absolute_tolerance_mol_per_m3: absolute_tolerance_mol_per_m3?,
        linear_algebra: linear_algebra?,
        max_steps: max_steps?,
        initial: initial?,
        tolerance_overrides: tolerance_overrides?,
        file: file.to_string(),
    })
}

/// A temperature difference in K (`"400 K"`; only kelvin: a Celsius offset would be wrong).
fn kelvin_difference(value: f64, unit: &str) -> Option<f64> {
    (unit == "K").then_some(value)
}

/// Reads `temperature_history = { times = [...], temperatures = [...] }` into (s, K) points:
/// equal lengths, at least one point, times finite, >= 0 and strictly increasing, starting
/// at 0; temperatures positive.
fn read_history(r: &mut Report<'_>, value: &Value<'_>) -> Option<Vec<(f64, f64)>> {
    let table = r.table("temperature_history", value)?;
    r.check_keys(table, HISTORY_KEYS, "temperature_history");
    let at = value.span().start;
    let list =
        |r: &mut Report<'_>, key: &str, unit: &str, convert: Converter, accepted: &[&str]| {
            let Some(v) = table.get(key) else {
                r.error(at, format!("`temperature_history` needs `{key}`"), None);
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
        };
    let times = list(r, "times", "s", time_to_s, SCENARIO_TIME_UNITS);
    let temperatures = list(r, "temperatures", "K", temperature_to_k, TEMPERATURE_UNITS);
    let (times, temperatures) = (times?, temperatures?);
    if times.is_empty() || times.len() != temperatures.len() {
        r.error(
            at,
            format!(
                "`temperature_history` needs as many temperatures as times (at least one), got {} and {}",
                times.len(),
                temperatures.len()
            ),
            None,
        );
        return None;
    }
    let mut ok = true;
    if times[0].0 != 0.0 {
        r.error(
            times[0].1,
            "the first time of `temperature_history` must be 0 s",
            None,
        );
        ok = false;
    }
    for (i, &(t, pos)) in times.iter().enumerate() {
        if !t.is_finite() || (i > 0 && t <= times[i - 1].0) {
            r.error(
                pos,
                format!(
                    "`temperature_history` times must be finite and strictly increasing: {} s",
                    show_number(t)
                ),
                None,
            );
            ok = false;
        }
    }
    for &(x, pos) in &temperatures {
        if let Some(problem) = positive_finite_problem(x) {
            r.error(pos, format!("history temperature {problem}"), None);
            ok = false;
        }
    }
    ok.then(|| {
        times
            .iter()
            .zip(&temperatures)
            .map(|(t, x)| (t.0, x.0))
            .collect()
    })
}

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

impl Scenario {
    /// The file label the scenario was parsed from (used in resolution diagnostics).
    pub fn file_label(&self) -> &str {
        &self.file
    }

    /// Whether the initial state is given as mole fractions (which then depend on
    /// `temperature_k` and `pressure_pa`).
    pub fn uses_mole_fractions(&self) -> bool {
        matches!(self.initial, InitialState::MoleFractions(_))
    }

    /// Output times in s for the current `end_time_s` and `output`: 0.0 first, end_time last,
    /// strictly increasing; `Err` with a message if the settings are inconsistent.
    pub fn output_times_s(&self) -> Result<Vec<f64>, String> {
        let end = self.end_time_s;
        if positive_finite_problem(end).is_some() {
            return Err(format!("end time {end} s must be positive and finite"));
        }
        let mut times = vec![0.0];
        match &self.output {
            OutputTimes::List(list) => {
                for &t in list {
                    if !(t.is_finite() && (0.0..=end).contains(&t)) {
                        return Err(format!("output time {t} s is outside [0, {end}] s"));
                    }
                    let last = *times.last().unwrap_or(&0.0);
                    if t < last || (t == last && t != 0.0) {
                        return Err(format!(
                            "output times must be strictly increasing ({t} s after {last} s)"
                        ));
                    }
                    if t > last {
                        times.push(t);
                    }
                }
                if *times.last().unwrap_or(&0.0) < end {
                    times.push(end);
                }
            }
            OutputTimes::Linear { points } => {
                let n = (*points).max(2);
                times.extend((1..n).map(|i| end * i as f64 / (n - 1) as f64));
                if let Some(last) = times.last_mut() {
                    *last = end;
                }
            }
            OutputTimes::Logarithmic { first_s, points } => {
                let first = *first_s;
                if !(first > 0.0 && first < end) {
                    return Err(format!(
                        "first log output time {first} s must be in (0, {end}) s"
                    ));
                }
                let n = (*points).max(2);
                let ratio = (end / first).ln();
                times.extend((0..n).map(|i| first * (ratio * i as f64 / (n - 1) as f64).exp()));
                if let Some(last) = times.last_mut() {
                    *last = end;
                }
            }
        }
        Ok(times)
    }

    /// Matches species names against `mechanism` and computes the per-species initial
    /// concentrations (mol/m3), absolute tolerances (mol/m3) and the output times (s).
    ///
    /// Mole fractions become concentrations by the ideal gas law, c_i = x_i P / (R T).
    /// Unknown species are reported with the scenario file's line:column and the nearest
    /// mechanism species name.
    pub fn resolve(&self, mechanism: &Mechanism) -> Result<ResolvedScenario, LoadError> {
        let mut diagnostics = Vec::new();
        let species = SpeciesLookup::new(mechanism, &self.file);
        let lookup = |named: &NamedValue, what: &str, diagnostics: &mut Vec<Diagnostic>| {
            species.find(named, what, diagnostics)
        };
        let n = mechanism.species.len();

        let mut initial = vec![0.0; n];
        let temperature_ok = positive_finite_problem(self.temperature_k).is_none();
        if !temperature_ok {
            diagnostics.push(Diagnostic::error(
                &self.file,
                None,
                format!(
                    "temperature {} K must be positive and finite",
                    self.temperature_k
                ),
            ));
        }
        match &self.initial {
            InitialState::Concentrations(values) => {
                for named in values {
                    if let Some(i) = lookup(named, "[initial] concentrations", &mut diagnostics) {
                        initial[i] += named.value;
                    }
                }
            }
            InitialState::MoleFractions(values) => {
                let total = match self.pressure_pa {
                    Some(p) if positive_finite_problem(p).is_none() && temperature_ok => {
                        Some(p / (GAS_CONSTANT * self.temperature_k))
                    }
                    _ => {
                        diagnostics.push(Diagnostic::error(
                            &self.file,
                            None,
                            "mole fractions need a positive pressure and temperature",
                        ));
                        None
                    }
                };
                for named in values {
                    if let (Some(i), Some(total)) = (
                        lookup(named, "[initial] mole_fractions", &mut diagnostics),
                        total,
                    ) {
                        initial[i] += named.value * total;
                    }
                }
            }
        }

        let mut tolerances = vec![self.absolute_tolerance_mol_per_m3; n];
        if positive_finite_problem(self.absolute_tolerance_mol_per_m3).is_some() {
            diagnostics.push(Diagnostic::error(
                &self.file,
                None,
                format!(
                    "absolute tolerance {} mol/m3 must be positive and finite",
                    self.absolute_tolerance_mol_per_m3
                ),
            ));
        }
        for named in &self.tolerance_overrides {
            if let Some(i) = lookup(named, "[solver] absolute_tolerance_for", &mut diagnostics) {
                tolerances[i] = named.value;
            }
        }
        let ignition_species = self
            .ignition_species
            .as_ref()
            .and_then(|named| lookup(named, "[ignition] species", &mut diagnostics));
        let box_conditions =
            self.box_spec
                .resolve(mechanism, &species, &self.file, &mut diagnostics);
        let output_times_s = match self.output_times_s() {
            Ok(t) => t,
            Err(message) => {
                diagnostics.push(Diagnostic::error(&self.file, None, message));
                Vec::new()
            }
        };
        if diagnostics.is_empty() {
            Ok(ResolvedScenario {
                initial_concentrations_mol_per_m3: initial,
                absolute_tolerances_mol_per_m3: tolerances,
                output_times_s,
                ignition_species,
                box_conditions,
            })
        } else {
            diagnostics.sort_by_key(|d| d.location.map(|l| (l.line, l.column)).unwrap_or((0, 0)));
            Err(LoadError::Invalid {
                diagnostics: Diagnostics(diagnostics),
            })
        }
    }
}

#[cfg(test)]
#[path = "scenario_tests.rs"]
mod tests;
