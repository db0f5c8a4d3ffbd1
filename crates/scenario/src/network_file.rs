//! The network scenario: a scenario file with `[[tank]]` and `[[stream]]` instead of one
//! `[reactor]`, run as a [`stoik_reactor::TankNetwork`].
//!
//! ```toml
//! stoik_scenario = 1
//! mechanism = "my-mechanism.toml"
//!
//! [[tank]]
//! name = "first"
//! volume = "2 m3"
//! energy = "jacketed"          # "isothermal" (default), "adiabatic" or "jacketed"
//! temperature = "330 K"        # held (isothermal) or initial
//! jacket_ua = "5 kW/K"         # jacketed only: U A of the jacket
//! coolant_temperature = "300 K"
//! initial = { A = "0 mol/L" }  # concentrations at the start (absent species: 0)
//!
//! [[stream]]                   # a feed: no `from`
//! to = "first"
//! volumetric_flow = "10 L/s"
//! temperature = "310 K"
//! concentrations = { A = "2 mol/L" }
//!
//! [[stream]]                   # a transfer (a recycle when it goes back)
//! from = "first"
//! to = "second"
//! volumetric_flow = "10 L/s"
//!
//! [[stream]]                   # an outlet: no `to`
//! from = "second"
//! volumetric_flow = "10 L/s"
//! ```
//!
//! `[output]` and `[solver]` are those of every scenario. Every problem is reported at
//! once, located: an unknown key, a stream naming a tank that is not defined, a tank no
//! stream enters or leaves, a flow that is zero or negative, a feed without its
//! concentrations or temperature, a tank whose volumetric inflow differs from its outflow,
//! and (against the mechanism) unknown species and missing thermochemistry.

use std::path::{Path, PathBuf};

use stoik_mechanism::{
    parse_document, temperature_to_k, ConcentrationUnit, Diagnostic, Diagnostics, LoadError,
    Mechanism, Report, SourceLocation, SpannedValue as Value, TEMPERATURE_UNITS,
};
use stoik_reactor::{
    Energy, HeatExchange, IntegrationOptions, LinearAlgebra, NetworkError, NetworkProblem,
    NetworkTank, Stream, TankNetwork, TemperatureHistory, FLOW_BALANCE_TOLERANCE,
};
use toml::de::{DeTable, DeValue};

use crate::file::{OutputTimes, TEMPERATURE_RANGE_K};
use crate::read::{
    concentration, named_values, quantity, require_in_range, require_positive, NamedValue,
    SpeciesLookup,
};
use crate::sections::{
    read_output, read_solver, read_ua_history_as, ua_to_w_per_k, volume_to_m3,
    volumetric_flow_to_m3_per_s, Ua, UA_UNITS, VOLUMETRIC_FLOW_UNITS, VOLUME_UNITS,
};

const TOP_KEYS: &[&str] = &[
    "stoik_scenario",
    "title",
    "mechanism",
    "tank",
    "stream",
    "output",
    "solver",
    "liquid",
];
const TANK_KEYS: &[&str] = &[
    "name",
    "volume",
    "energy",
    "temperature",
    "jacket_ua",
    "jacket_ua_history",
    "coolant_temperature",
    "initial",
];
const STREAM_KEYS: &[&str] = &[
    "from",
    "to",
    "volumetric_flow",
    "temperature",
    "concentrations",
];
/// Energy models of a tank as written in files (`[[tank]] energy`).
pub const TANK_ENERGY_NAMES: [&str; 3] = ["isothermal", "adiabatic", "jacketed"];

/// Whether `text` is a network scenario: a scenario (`stoik_scenario`) with `[[tank]]`.
pub fn is_network_scenario_text(text: &str) -> bool {
    DeTable::parse(text)
        .map(|doc| {
            let root = doc.get_ref();
            root.contains_key("stoik_scenario") && root.contains_key("tank")
        })
        .unwrap_or(false)
}

/// A tank as written.
#[derive(Debug, Clone, PartialEq)]
struct TankSpec {
    name: String,
    /// The `name` value.
    at: SourceLocation,
    at_byte: usize,
    /// The `energy` key (or the name).
    energy_at: SourceLocation,
    volume_m3: f64,
    energy: Energy,
    temperature_k: f64,
    initial: Vec<NamedValue>,
    /// Whether every value could be read (otherwise defaults stand in).
    complete: bool,
}

/// A stream as written.
#[derive(Debug, Clone, PartialEq)]
struct StreamSpec {
    at: SourceLocation,
    /// Tank names with their byte offsets.
    from: Option<(String, usize)>,
    to: Option<(String, usize)>,
    flow_m3_per_s: f64,
    flow_at: SourceLocation,
    feed_temperature_k: Option<f64>,
    feed: Option<Vec<NamedValue>>,
    /// Whether every value could be read (otherwise the flow may be NaN).
    complete: bool,
}

/// A parsed network scenario (SI units, species still named). Resolve it against its
/// mechanism with [`NetworkScenario::resolve`].
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkScenario {
    /// Optional title.
    pub title: Option<String>,
    /// The mechanism file, resolved against the scenario file's folder.
    pub mechanism_path: PathBuf,
    /// Simulated time span (s, from t = 0).
    pub end_time_s: f64,
    /// Output times.
    pub output: OutputTimes,
    /// Unit of the output concentration columns.
    pub output_concentration_unit: ConcentrationUnit,
    /// Relative tolerance (dimensionless).
    pub relative_tolerance: f64,
    /// Absolute tolerance of every species in every tank (mol/m3).
    pub absolute_tolerance_mol_per_m3: f64,
    /// Linear algebra of the Newton iterations.
    pub linear_algebra: LinearAlgebra,
    /// Maximum number of integrator steps.
    pub max_steps: usize,
    /// Newton tolerance (`None`: the integrator's default).
    pub newton_tolerance: Option<f64>,
    /// Wall-clock limit of the integration (s).
    pub wall_time_limit_s: Option<f64>,
    tanks: Vec<TankSpec>,
    streams: Vec<StreamSpec>,
    /// `[liquid]`: every energy-solving tank described as a constant-density liquid.
    liquid: Option<crate::vessel_sections::LiquidSpec>,
    file: String,
}

/// A network scenario matched against its mechanism: the network, the output times and
/// the integration options.
#[derive(Debug, Clone)]
pub struct NetworkPlan {
    /// The checked network.
    pub network: TankNetwork,
    /// Output times (s), 0 first.
    pub output_times_s: Vec<f64>,
    /// Integration options.
    pub options: IntegrationOptions,
}

/// Reads and parses the network scenario at `path`.
pub fn load_network_scenario(path: &Path) -> Result<(NetworkScenario, Diagnostics), LoadError> {
    let label = path.display().to_string();
    let text = stoik_mechanism::read_input_text(path).map_err(|e| e.into_load_error(&label))?;
    let base = path.parent().unwrap_or_else(|| Path::new(""));
    parse_network_scenario(&text, &label, base)
}

/// Parses and checks network scenario text (`file_label` names the file in diagnostics,
/// `base_dir` is the folder the mechanism path is relative to). Every problem at once.
pub fn parse_network_scenario(
    text: &str,
    file_label: &str,
    base_dir: &Path,
) -> Result<(NetworkScenario, Diagnostics), LoadError> {
    let mut r = Report::new(text, file_label);
    let Some(doc) = parse_document(text, &mut r) else {
        return Err(r.into_error());
    };
    let scenario = read(&mut r, doc.get_ref(), base_dir, file_label);
    let diagnostics = r.finish();
    match scenario {
        Some(s) if !diagnostics.has_errors() => Ok((s, diagnostics)),
        _ => Err(LoadError::Invalid { diagnostics }),
    }
}

/// The array of tables `key` of `root` (absent: empty), each with its start.
fn tables<'v, 'i>(
    r: &mut Report<'_>,
    root: &'v DeTable<'i>,
    key: &str,
) -> Vec<(usize, &'v DeTable<'i>)> {
    let Some(value) = root.get(key) else {
        return Vec::new();
    };
    match value.get_ref() {
        DeValue::Array(items) => items
            .iter()
            .filter_map(|item| match item.get_ref() {
                DeValue::Table(t) => Some((item.span().start, t)),
                _ => {
                    r.wrong_type(key, item, &format!("a table ([[{key}]])"));
                    None
                }
            })
            .collect(),
        _ => {
            r.wrong_type(key, value, &format!("an array of tables ([[{key}]])"));
            Vec::new()
        }
    }
}

fn read(
    r: &mut Report<'_>,
    root: &DeTable<'_>,
    base_dir: &Path,
    file: &str,
) -> Option<NetworkScenario> {
    r.check_keys(root, TOP_KEYS, "the network scenario file");
    r.format_version(
        root,
        "stoik_scenario",
        "scenario",
        crate::SCENARIO_FORMAT_VERSION,
        "the first line of a version-1 scenario is `stoik_scenario = 1`".to_string(),
    );
    let title = root
        .get("title")
        .and_then(|v| r.string("title", v).map(str::to_string));
    let mechanism_path = match root.get("mechanism") {
        None => {
            r.file_error(
                "missing `mechanism` (the mechanism file to run)",
                Some("e.g. mechanism = \"my-mechanism.toml\"".to_string()),
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
    let output = read_output(r, root, false);
    let solver = read_solver(r, root, output.unit);
    let liquid = crate::vessel_sections::read_liquid(r, root);
    let unit_factor = output.unit.map(|u| u.to_si_factor());
    let tanks: Vec<Option<TankSpec>> = tables(r, root, "tank")
        .into_iter()
        .map(|(at, t)| read_tank(r, at, t, unit_factor))
        .collect();
    if tanks.is_empty() {
        r.file_error(
            "a network scenario needs at least one [[tank]]",
            Some("e.g. [[tank]] name = \"first\" volume = \"1 m3\" temperature = \"300 K\"".into()),
        );
    }
    let streams: Vec<Option<StreamSpec>> = tables(r, root, "stream")
        .into_iter()
        .map(|(at, t)| read_stream(r, at, t, unit_factor))
        .collect();
    // The topology is checked on what could be read (a stream whose flow could not be read
    // counts with a NaN flow: its tanks are connected, their balance is not judged), so that
    // every problem is reported at once.
    // A tank with a name takes part even when another of its values could not be read.
    let complete = streams
        .iter()
        .all(|s| s.as_ref().is_some_and(|s| s.complete))
        && tanks.iter().all(|t| t.as_ref().is_some_and(|t| t.complete));
    let streams: Vec<StreamSpec> = streams.into_iter().flatten().collect();
    let tanks: Vec<TankSpec> = tanks.into_iter().flatten().collect();
    check_topology(r, &tanks, &streams);
    let liquid = liquid?;
    if !complete {
        return None;
    }
    Some(NetworkScenario {
        title,
        mechanism_path: mechanism_path?,
        end_time_s: output.end_time_s?,
        output: output.times?,
        output_concentration_unit: output.unit?,
        relative_tolerance: solver.relative_tolerance?,
        absolute_tolerance_mol_per_m3: solver.absolute_tolerance_mol_per_m3?,
        linear_algebra: solver.linear_algebra?,
        max_steps: solver.max_steps?,
        newton_tolerance: solver.newton_tolerance?,
        wall_time_limit_s: solver.wall_time_limit_s?,
        tanks,
        streams,
        liquid,
        file: file.to_string(),
    })
}

/// A temperature key (K) in the scenario range.
fn temperature(r: &mut Report<'_>, key: &str, v: &Value<'_>) -> Option<f64> {
    quantity(r, key, v, "K", temperature_to_k, TEMPERATURE_UNITS)
        .and_then(|x| require_in_range(r, key, v.span().start, x, TEMPERATURE_RANGE_K, "K"))
}

/// A table of species concentrations (`key = { A = "1 mol/L" }`).
fn concentrations(
    r: &mut Report<'_>,
    key: &str,
    v: &Value<'_>,
    factor: Option<f64>,
) -> Option<Vec<NamedValue>> {
    let table = r.table(key, v)?;
    let values = named_values(r, table, |r, name, value| {
        let x = concentration(r, name, value, factor)?;
        if x.is_finite() && x >= 0.0 {
            Some(x)
        } else {
            r.error(
                value.span().start,
                format!("concentration of `{name}` must be finite and not negative"),
                None,
            );
            None
        }
    })?;
    Some(values)
}

fn read_tank(
    r: &mut Report<'_>,
    at: usize,
    t: &DeTable<'_>,
    factor: Option<f64>,
) -> Option<TankSpec> {
    r.check_keys(t, TANK_KEYS, "[[tank]]");
    let name = match t.get("name") {
        Some(v) => r.string("name", v).map(|s| (s.to_string(), v.span().start)),
        None => {
            r.error(
                at,
                "[[tank]] needs a `name` (streams refer to tanks by name)",
                Some("e.g. name = \"first\"".into()),
            );
            None
        }
    };
    let volume = match t.get("volume") {
        Some(v) => quantity(r, "volume", v, "m3", volume_to_m3, VOLUME_UNITS)
            .and_then(|x| require_positive(r, "volume", v, x)),
        None => {
            r.error(
                at,
                "[[tank]] needs its `volume`",
                Some("e.g. volume = \"2 m3\"".into()),
            );
            None
        }
    };
    let temperature_k = match t.get("temperature") {
        Some(v) => temperature(r, "temperature", v),
        None => {
            r.error(
                at,
                "[[tank]] needs its `temperature` (held when isothermal, initial otherwise)",
                Some("e.g. temperature = \"330 K\"".into()),
            );
            None
        }
    };
    let energy_value = t.get("energy");
    let energy_name = match energy_value {
        Some(v) => r.one_of("energy", v, "tank energy model", &TANK_ENERGY_NAMES, |s| {
            TANK_ENERGY_NAMES.contains(&s).then(|| s.to_string())
        }),
        None => Some("isothermal".to_string()),
    };
    let jacket_keys = ["jacket_ua", "jacket_ua_history", "coolant_temperature"];
    let energy = match energy_name.as_deref() {
        Some("jacketed") => {
            let ua = match (t.get("jacket_ua"), t.get("jacket_ua_history")) {
                (Some(v), None) => quantity(r, "jacket_ua", v, "W/K", ua_to_w_per_k, UA_UNITS)
                    .and_then(|x| require_positive(r, "jacket_ua", v, x))
                    .map(Ua::Constant),
                (None, Some(v)) => read_ua_history_as(r, v, "jacket_ua_history"),
                (Some(_), Some(v)) => {
                    r.error(
                        v.span().start,
                        "give `jacket_ua` or `jacket_ua_history`, not both",
                        None,
                    );
                    None
                }
                (None, None) => {
                    r.error(
                        at,
                        "a jacketed tank needs `jacket_ua` (U A of its jacket) or `jacket_ua_history`",
                        Some("e.g. jacket_ua = \"5 kW/K\"".into()),
                    );
                    None
                }
            };
            let coolant = match t.get("coolant_temperature") {
                Some(v) => temperature(r, "coolant_temperature", v),
                None => {
                    r.error(
                        at,
                        "a jacketed tank needs `coolant_temperature`",
                        Some("e.g. coolant_temperature = \"300 K\"".into()),
                    );
                    None
                }
            };
            match (ua, coolant) {
                (Some(ua), Some(tc)) => TemperatureHistory::new(vec![0.0], vec![tc])
                    .and_then(|h| match ua {
                        Ua::Constant(ua) => HeatExchange::total(ua, h),
                        Ua::History(times, values) => HeatExchange::total(values[0], h)
                            .and_then(|x| x.with_ua_history(times, values)),
                    })
                    .ok()
                    .map(Energy::HeatExchange),
                _ => None,
            }
        }
        Some(name) => {
            for key in jacket_keys {
                if let Some((k, _)) = t.get_key_value(key) {
                    r.error(
                        k.span().start,
                        format!("`{key}` is for a jacketed tank; this tank is {name}"),
                        Some("give energy = \"jacketed\" or remove the key".into()),
                    );
                }
            }
            Some(if name == "adiabatic" {
                Energy::Adiabatic
            } else {
                Energy::Isothermal
            })
        }
        None => None,
    };
    let initial = match t.get("initial") {
        Some(v) => concentrations(r, "initial", v, factor),
        None => Some(Vec::new()),
    };
    let (name, name_byte) = name?;
    let complete =
        volume.is_some() && energy.is_some() && temperature_k.is_some() && initial.is_some();
    Some(TankSpec {
        name,
        at: r.location(name_byte),
        at_byte: name_byte,
        energy_at: r.location(energy_value.map_or(name_byte, |v| v.span().start)),
        volume_m3: volume.unwrap_or(f64::NAN),
        energy: energy.unwrap_or(Energy::Isothermal),
        temperature_k: temperature_k.unwrap_or(f64::NAN),
        initial: initial.unwrap_or_default(),
        complete,
    })
}

fn read_stream(
    r: &mut Report<'_>,
    at: usize,
    t: &DeTable<'_>,
    factor: Option<f64>,
) -> Option<StreamSpec> {
    r.check_keys(t, STREAM_KEYS, "[[stream]]");
    let mut end = |key: &str| -> Option<Option<(String, usize)>> {
        match t.get(key) {
            None => Some(None),
            Some(v) => r
                .string(key, v)
                .map(|s| Some((s.to_string(), v.span().start))),
        }
    };
    let (from, to) = (end("from"), end("to"));
    let flow = match t.get("volumetric_flow") {
        Some(v) => quantity(
            r,
            "volumetric_flow",
            v,
            "m3/s",
            volumetric_flow_to_m3_per_s,
            VOLUMETRIC_FLOW_UNITS,
        )
        .and_then(|x| require_positive(r, "volumetric_flow", v, x))
        .map(|x| (x, r.location(v.span().start))),
        None => {
            r.error(
                at,
                "[[stream]] needs its `volumetric_flow`",
                Some("e.g. volumetric_flow = \"10 L/s\"".into()),
            );
            None
        }
    };
    let (from, to) = (from?, to?);
    let mut complete = true;
    let is_feed = from.is_none();
    if from.is_none() && to.is_none() {
        complete = false;
        r.error(
            at,
            "[[stream]] needs `from` (the tank it leaves), `to` (the tank it enters), or both",
            Some("a feed has only `to`, an outlet only `from`".into()),
        );
    }
    let (mut feed_temperature_k, mut feed) = (None, None);
    if is_feed {
        match t.get("temperature") {
            Some(v) => {
                feed_temperature_k = temperature(r, "temperature", v);
                complete &= feed_temperature_k.is_some();
            }
            None => {
                complete = error_false(
                    r,
                    at,
                    "a feed (a stream without `from`) needs its `temperature`",
                    Some("e.g. temperature = \"300 K\"".into()),
                )
            }
        }
        match t.get("concentrations") {
            Some(v) => {
                feed = concentrations(r, "concentrations", v, factor);
                complete &= feed.is_some();
            }
            None => {
                complete = error_false(
                    r,
                    at,
                    "a feed (a stream without `from`) needs its `concentrations`",
                    Some("e.g. concentrations = { A = \"2 mol/L\" }".into()),
                )
            }
        }
    } else {
        for key in ["temperature", "concentrations"] {
            if let Some((k, _)) = t.get_key_value(key) {
                r.error(
                    k.span().start,
                    format!("`{key}` is for a feed; a stream with `from` carries the contents of its tank"),
                    None,
                );
            }
        }
    }
    let (flow_m3_per_s, flow_at) = match flow {
        Some(f) => f,
        None => {
            complete = false;
            (f64::NAN, r.location(at))
        }
    };
    Some(StreamSpec {
        complete,
        at: r.location(at),
        from,
        to,
        flow_m3_per_s,
        flow_at,
        feed_temperature_k,
        feed,
    })
}

/// Records an error and gives `false` (the stream is incomplete).
fn error_false(r: &mut Report<'_>, at: usize, message: &str, help: Option<String>) -> bool {
    r.error(at, message, help);
    false
}

/// Undefined and duplicate tank names, unconnected tanks and volumetric flow imbalances.
fn check_topology(r: &mut Report<'_>, tanks: &[TankSpec], streams: &[StreamSpec]) {
    let mut errors: Vec<(usize, String, Option<String>)> = Vec::new();
    for (i, tank) in tanks.iter().enumerate() {
        if let Some(first) = tanks[..i].iter().find(|t| t.name == tank.name) {
            errors.push((
                tank.at_byte,
                format!(
                    "tank `{}` is defined twice (first at line {})",
                    tank.name, first.at.line
                ),
                None,
            ));
        }
    }
    let index = |name: &str| tanks.iter().position(|t| t.name == name);
    let mut inflow = vec![0.0; tanks.len()];
    let mut outflow = vec![0.0; tanks.len()];
    let mut touched = vec![false; tanks.len()];
    let mut judged = vec![true; tanks.len()];
    for s in streams {
        for (end, flows) in [(&s.from, &mut outflow), (&s.to, &mut inflow)] {
            if let Some((name, at)) = end {
                match index(name) {
                    Some(j) => {
                        touched[j] = true;
                        if s.flow_m3_per_s.is_finite() {
                            flows[j] += s.flow_m3_per_s;
                        } else {
                            judged[j] = false;
                        }
                    }
                    None => {
                        let names: Vec<&str> = tanks.iter().map(|t| t.name.as_str()).collect();
                        errors.push((
                            *at,
                            format!("no tank is named `{name}`"),
                            Some(format!("the tanks are: {}", names.join(", "))),
                        ))
                    }
                }
            }
        }
    }
    for (j, tank) in tanks.iter().enumerate() {
        if !touched[j] {
            errors.push((
                tank.at_byte,
                format!(
                    "tank `{}` is not connected: no [[stream]] enters or leaves it",
                    tank.name
                ),
                Some("give it a stream `to` it and one `from` it, or remove it".into()),
            ));
        } else if judged[j]
            && (inflow[j] - outflow[j]).abs() > FLOW_BALANCE_TOLERANCE * inflow[j].max(outflow[j])
        {
            errors.push((
                tank.at_byte,
                format!(
                    "tank `{}`: the volumetric flow in ({} m3/s) differs from the flow out ({} m3/s)",
                    tank.name,
                    stoik_mechanism::show_number(inflow[j]),
                    stoik_mechanism::show_number(outflow[j])
                ),
                Some("a tank of constant density and volume needs the same flow in and out; check the streams' volumetric_flow".into()),
            ));
        }
    }
    for (at, message, help) in errors {
        r.error(at, message, help);
    }
}

impl NetworkScenario {
    /// The file label the scenario was parsed from.
    pub fn file_label(&self) -> &str {
        &self.file
    }

    /// Names of the tanks, in file order.
    pub fn tank_names(&self) -> Vec<&str> {
        self.tanks.iter().map(|t| t.name.as_str()).collect()
    }

    /// Matches the scenario against `mechanism`: species names (all unknown names at once,
    /// located, with the nearest name), the network's own checks and the thermochemistry the
    /// energy balances need (located at the tank's `energy`).
    pub fn resolve(&self, mechanism: &Mechanism) -> Result<NetworkPlan, LoadError> {
        let file = self.file.as_str();
        let n = mechanism.species.len();
        let lookup = SpeciesLookup::new(mechanism, file);
        let mut diagnostics = Vec::new();
        let vector = |values: &[NamedValue], what: &str, d: &mut Vec<Diagnostic>| {
            let mut c = vec![0.0; n];
            for v in values {
                if let Some(i) = lookup.find(v, what, d) {
                    c[i] = v.value;
                }
            }
            c
        };
        let tanks: Vec<NetworkTank> = self
            .tanks
            .iter()
            .map(|t| NetworkTank {
                name: t.name.clone(),
                volume_m3: t.volume_m3,
                constraint: stoik_reactor::Constraint::ConstantVolume,
                energy: t.energy.clone(),
                initial_mol_per_m3: vector(&t.initial, "[[tank]] initial", &mut diagnostics),
                temperature_k: t.temperature_k,
            })
            .collect();
        let streams: Vec<Stream> = self
            .streams
            .iter()
            .map(|s| match (&s.from, &s.to) {
                (None, to) => Stream::Feed {
                    to: to.as_ref().map(|t| t.0.clone()).unwrap_or_default(),
                    volumetric_flow_m3_per_s: s.flow_m3_per_s,
                    inlet_mol_per_m3: vector(
                        s.feed.as_deref().unwrap_or(&[]),
                        "[[stream]] concentrations",
                        &mut diagnostics,
                    ),
                    inlet_temperature_k: s.feed_temperature_k.unwrap_or(f64::NAN),
                },
                (Some(from), Some(to)) => Stream::Transfer {
                    from: from.0.clone(),
                    to: to.0.clone(),
                    volumetric_flow_m3_per_s: s.flow_m3_per_s,
                },
                (Some(from), None) => Stream::Outlet {
                    from: from.0.clone(),
                    volumetric_flow_m3_per_s: s.flow_m3_per_s,
                },
            })
            .collect();
        let network = match TankNetwork::new(n, tanks, streams) {
            Ok(net) => Some(net),
            Err(NetworkError::Invalid(problems)) => {
                for p in problems {
                    let at = match &p {
                        NetworkProblem::DuplicateName { tank, .. }
                        | NetworkProblem::BadTank { tank, .. }
                        | NetworkProblem::Unconnected { tank, .. }
                        | NetworkProblem::FlowImbalance { tank, .. } => {
                            self.tanks.get(*tank).map(|t| t.at)
                        }
                        NetworkProblem::UnknownTank { stream, .. }
                        | NetworkProblem::BadFeed { stream, .. } => {
                            self.streams.get(*stream).map(|s| s.at)
                        }
                        NetworkProblem::BadFlow { stream, .. } => {
                            self.streams.get(*stream).map(|s| s.flow_at)
                        }
                        _ => None,
                    };
                    diagnostics.push(Diagnostic::error(file, at, p.to_string()));
                }
                None
            }
            Err(other) => {
                diagnostics.push(Diagnostic::error(file, None, other.to_string()));
                None
            }
        };
        let energy_solved = self.tanks.iter().any(|t| t.energy != Energy::Isothermal);
        let liquid = self
            .liquid
            .as_ref()
            .map(|l| l.resolve(mechanism, energy_solved, file, &mut diagnostics));
        let network = match (network, liquid) {
            (Some(net), Some(Some(phase))) => Some(net.with_liquid(phase)),
            (net, None) => net,
            (None, Some(_)) | (_, Some(None)) => None,
        };
        let ideal_gas = self.liquid.is_none();
        if let Some(tank) = self
            .tanks
            .iter()
            .find(|t| ideal_gas && t.energy != Energy::Isothermal)
        {
            for (i, species) in mechanism.species.iter().enumerate() {
                if species.thermo.is_none() {
                    diagnostics.push(
                        Diagnostic::error(
                            file,
                            Some(tank.energy_at),
                            format!(
                                "tank `{}` solves its energy balance, which needs the thermochemistry of every species; `{}` (species {}) has none",
                                tank.name, species.name, i + 1
                            ),
                        )
                        .with_help("give the species thermo data in the mechanism, or make the tank isothermal"),
                    );
                }
            }
        }
        let times = crate::plan::output_times(self.end_time_s, &self.output);
        if let Err(message) = &times {
            diagnostics.push(Diagnostic::error(file, None, message.clone()));
        }
        match (network, times) {
            (Some(network), Ok(output_times_s)) if diagnostics.is_empty() => {
                let mut options = IntegrationOptions::new(n);
                options.relative_tolerance = self.relative_tolerance;
                options.absolute_tolerances_mol_per_m3 =
                    vec![self.absolute_tolerance_mol_per_m3; n];
                options.linear_algebra = self.linear_algebra;
                options.max_steps = self.max_steps;
                options.newton_tolerance = self.newton_tolerance;
                options.wall_time_limit_s = self.wall_time_limit_s;
                Ok(NetworkPlan {
                    network,
                    output_times_s,
                    options,
                })
            }
            _ => Err(LoadError::Invalid {
                diagnostics: Diagnostics(diagnostics),
            }),
        }
    }
}
