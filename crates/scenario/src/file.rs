//! The scenario file (TOML, format version 1): which mechanism to run, in which reactor, from
//! which initial state, with which output times and solver settings.
//!
//! [`parse_scenario`] checks the file on its own (every problem at once, with line:column),
//! one reader per section (`sections.rs`, `box_sections.rs`); a [`crate::RunPlan`] then
//! matches the species names against a loaded mechanism and turns the scenario into reactor
//! terms.

use crate::box_sections::{read_box, BoxSpec};
use crate::read::NamedValue;
use crate::sections::{
    read_flow, read_ignition, read_initial, read_output, read_reactor, read_solver, FlowSpec,
    ReactorSection,
};
use crate::vessel_sections::{read_feeds, read_liquid, FeedSpec, LiquidSpec};
use std::path::{Path, PathBuf};
use stoik_mechanism::ConcentrationUnit;
use stoik_mechanism::{parse_document, Diagnostics, LoadError, Report, SourceLocation};
use stoik_reactor::{Constraint, Energy, LinearAlgebra};
use toml::de::{DeTable, DeValue};

/// The scenario format version this crate reads (`stoik_scenario = 1`).
pub const SCENARIO_FORMAT_VERSION: i64 = 1;
/// Tolerance on the sum of initial mole fractions (dimensionless; must be 1 within this).
pub const MOLE_FRACTION_SUM_TOLERANCE: f64 = 1e-6;
/// Largest number of output points a grid may ask for (bounds memory on hostile input).
pub const MAX_GRID_POINTS: u64 = 10_000_000;
/// Largest memory a run's profile may need, in bytes (512 MiB): output rows times
/// (species + 4) eight-byte values plus a 24-byte row header. A plan asking for more is
/// refused with the size it would need (see [`profile_bytes`]).
pub const MAX_PROFILE_BYTES: u64 = 512 * 1024 * 1024;

/// The memory in bytes the profile of a run with `rows` output times and `species` species
/// holds: per row the time, temperature, dT/dt, a spare value and one concentration per
/// species (8 bytes each) plus the row's vector header (24 bytes). Saturates instead of
/// overflowing.
pub fn profile_bytes(rows: usize, species: usize) -> u64 {
    let per_row = (species as u64)
        .saturating_add(4)
        .saturating_mul(8)
        .saturating_add(24);
    (rows as u64).saturating_mul(per_row)
}

/// Valid temperatures of a scenario (`[reactor] temperature`, history temperatures and the
/// temperature overrides), (lowest, highest) in K, both included: below 1 K an Arrhenius
/// factor with a negative activation temperature overflows, above 1e5 K no gas-phase
/// thermochemistry applies.
pub const TEMPERATURE_RANGE_K: (f64, f64) = (1.0, 1.0e5);
/// Valid pressures of a scenario (`[reactor] pressure` and the pressure override), (lowest,
/// highest) in Pa, both included: with [`TEMPERATURE_RANGE_K`] the total concentration
/// P / (R T) stays between about 1e-15 and 1e9 mol/m3, finite and positive.
pub const PRESSURE_RANGE_PA: (f64, f64) = (1.0e-9, 1.0e10);
/// Longest simulated time of a scenario (`[output] end_time` and the end-time override), s
/// (about 32 million years). The shortest is set by the output grid, whose times must be
/// distinct in double precision.
pub const MAX_END_TIME_S: f64 = 1.0e15;

/// Where the values a [`crate::RunPlan`] checks were written in the scenario file, so that a
/// problem found while resolving is reported at its key.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct Locations {
    /// `[reactor] kind` (or the `[reactor]` header when the kind is the default).
    pub(crate) reactor: Option<SourceLocation>,
    /// `[reactor] temperature` (or the history).
    pub(crate) temperature: Option<SourceLocation>,
    /// `[reactor] pressure`.
    pub(crate) pressure: Option<SourceLocation>,
    /// The `concentrations` or `mole_fractions` key of `[initial]`.
    pub(crate) initial: Option<SourceLocation>,
    /// `[output] end_time`.
    pub(crate) end_time: Option<SourceLocation>,
    /// `[output] times` or `grid` (or `end_time` when neither is given).
    pub(crate) output_times: Option<SourceLocation>,
    /// The `[box]` section.
    pub(crate) box_section: Option<SourceLocation>,
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

/// The initial state as written: concentrations or mole fractions of named species.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum InitialState {
    /// Concentrations in mol/m3.
    Concentrations(Vec<NamedValue>),
    /// Mole fractions (dimensionless, sum 1).
    MoleFractions(Vec<NamedValue>),
}

/// The `[ignition]` choice as written, the species still named.
#[derive(Debug, Clone, PartialEq)]
pub(crate) enum IgnitionSpec {
    /// The largest dT/dt (`criterion = "max-temperature-rate"`).
    MaxTemperatureRate,
    /// The peak of a species (`criterion = "species-peak"`, `species = "OH"`).
    SpeciesMaximum(NamedValue),
    /// A temperature rise in K (`criterion = "temperature-rise"`, `rise = "400 K"`).
    TemperatureRise(f64),
}

/// A parsed scenario file, every quantity in SI, species still named. Run it through a
/// [`crate::RunPlan`], which matches it against its mechanism and takes command-line style
/// overrides.
#[derive(Debug, Clone, PartialEq)]
pub struct Scenario {
    /// Optional title.
    pub title: Option<String>,
    /// The mechanism file, resolved against the scenario file's folder.
    pub mechanism_path: PathBuf,
    /// What the reactor holds constant (`[reactor] kind`, second half).
    pub constraint: Constraint,
    /// How the temperature evolves (`[reactor] kind`, first half; a prescribed kind carries
    /// its `temperature_history`).
    pub energy: Energy,
    /// Temperature in K: the held one (isothermal), the initial one (adiabatic), or the
    /// history's value at t = 0 (prescribed).
    pub temperature_k: f64,
    /// Pressure in Pa, when given (needed for mole fractions).
    pub pressure_pa: Option<f64>,
    /// Simulated time span in s (from t = 0); 0 for a plug flow, whose outputs are
    /// distances ([`Scenario::is_plug_flow`]).
    pub end_time_s: f64,
    /// Output times.
    pub output: OutputTimes,
    /// Unit of the output concentration columns.
    pub output_concentration_unit: ConcentrationUnit,
    /// Relative tolerance of the integrator (dimensionless, in (0, 1)).
    pub relative_tolerance: f64,
    /// Default absolute tolerance in mol/m3 (per-species overrides are kept privately).
    pub absolute_tolerance_mol_per_m3: f64,
    /// Linear algebra of the Newton iterations.
    pub linear_algebra: LinearAlgebra,
    /// Maximum number of integrator steps.
    pub max_steps: usize,
    /// Newton convergence tolerance in units of the error weights (dimensionless); `None`
    /// for the integrator's default.
    pub newton_tolerance: Option<f64>,
    /// Whether round-off drift of the conserved combinations is projected away.
    pub keep_invariants: bool,
    /// Longest wall-clock time of the integration (s); `None`: no limit.
    pub wall_time_limit_s: Option<f64>,
    pub(crate) initial: InitialState,
    pub(crate) tolerance_overrides: Vec<NamedValue>,
    pub(crate) ignition: Option<IgnitionSpec>,
    pub(crate) box_spec: BoxSpec,
    /// `[flow]`: the feed of a continuous stirred tank (`None`: a closed reactor).
    pub(crate) flow: Option<FlowSpec>,
    /// `[plug_flow]`: a steady plug-flow tube (`None`: not a plug flow).
    pub(crate) plug: Option<crate::plug_section::PlugSpec>,
    /// `[[feed]]`: the feeds of a semi-batch reactor (empty: none).
    pub(crate) feeds: Vec<FeedSpec>,
    /// `[liquid]`: the liquid-phase energy description (`None`: ideal-gas thermochemistry).
    pub(crate) liquid: Option<LiquidSpec>,
    /// `[reactor] volume` (m3) when the volume is a state (semi-batch, closed
    /// constant-pressure jacketed batch) or a jacket's U A / V needs it.
    pub(crate) volume_m3: Option<f64>,
    pub(crate) file: String,
    /// Where the output times are asked for (diagnostics about them point there).
    pub(crate) output_at: Option<SourceLocation>,
    pub(crate) locations: Locations,
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

    /// Whether the scenario is a steady plug flow (`[plug_flow]`): its outputs are distances
    /// along the tube, with the residence time of each.
    pub fn is_plug_flow(&self) -> bool {
        self.plug.is_some()
    }

    /// The reactor kind as written in files, e.g. `"adiabatic-constant-volume"`.
    pub fn kind_label(&self) -> &'static str {
        kind_label(self.constraint, &self.energy)
    }
}

/// Whether `text` is a scenario rather than a mechanism: its parsed TOML document has the
/// scenario format key `stoik_scenario` at the top level, however the key is quoted. Text
/// that is not TOML is not a scenario (a mechanism loader reports the same syntax error).
pub fn is_scenario_text(text: &str) -> bool {
    DeTable::parse(text)
        .map(|doc| doc.get_ref().contains_key("stoik_scenario"))
        .unwrap_or(false)
}

/// Reads and parses the scenario file at `path`; the mechanism path is resolved against the
/// file's folder. Diagnostics name the path as given.
pub fn load_scenario(path: &Path) -> Result<(Scenario, Diagnostics), LoadError> {
    let label = path.display().to_string();
    let text = stoik_mechanism::read_input_text(path).map_err(|e| e.into_load_error(&label))?;
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
    "flow",
    "plug_flow",
    "output",
    "solver",
    "ignition",
    "box",
    "sun",
    "photolysis",
    "feed",
    "liquid",
];

/// Reads every section (each reports its own problems) and assembles the scenario when all
/// of them were read.
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
    let mechanism_path = read_mechanism_path(r, root, base_dir);
    let has_feeds = root.contains_key("feed");
    let reactor = read_reactor(r, root, has_feeds, root.contains_key("flow"));
    let initial = read_initial(r, root, reactor.pressure_given);
    let plug = crate::plug_section::read_plug_flow(r, root);
    let plug_given = root.contains_key("plug_flow");
    let output = read_output(r, root, plug_given);
    let solver = read_solver(r, root, output.unit);
    let ignition = read_ignition(r, root);
    let box_spec = read_box(r, root);
    let flow = read_flow(r, root, reactor.pressure_given);
    let feeds = read_feeds(r, root);
    let liquid = read_liquid(r, root);
    mixed_descriptions(r, root, &reactor);
    let energy = reactor.energy?;
    Some(Scenario {
        title,
        mechanism_path: mechanism_path?,
        constraint: reactor.constraint?,
        energy,
        temperature_k: reactor.temperature_k?,
        ignition: ignition?,
        box_spec: box_spec?,
        flow: flow?,
        plug: plug?,
        feeds: feeds?,
        liquid: liquid?,
        volume_m3: reactor.volume_m3,
        pressure_pa: if reactor.pressure_given {
            Some(reactor.pressure_pa?)
        } else {
            None
        },
        end_time_s: output.end_time_s?,
        output: output.times?,
        output_at: output.at,
        output_concentration_unit: output.unit?,
        relative_tolerance: solver.relative_tolerance?,
        absolute_tolerance_mol_per_m3: solver.absolute_tolerance_mol_per_m3?,
        linear_algebra: solver.linear_algebra?,
        max_steps: solver.max_steps?,
        newton_tolerance: solver.newton_tolerance?,
        keep_invariants: solver.keep_invariants?,
        wall_time_limit_s: solver.wall_time_limit_s?,
        initial: initial?,
        tolerance_overrides: solver.tolerance_overrides?,
        file: file.to_string(),
        locations: locations(r, root),
    })
}

/// Refuses, at their keys, the settings that mix the liquid-phase description with the
/// ideal gas (a constant-pressure kind, a pressure, mole fractions) or that have no
/// equations (feeds with a stirred tank's `[flow]`).
fn mixed_descriptions(r: &mut Report<'_>, root: &DeTable<'_>, reactor: &ReactorSection) {
    let span = |path: &[&str]| -> Option<usize> {
        let (last, tables) = path.split_last()?;
        let mut table = root;
        for key in tables {
            match table.get(*key)?.get_ref() {
                DeValue::Table(t) => table = t,
                _ => return None,
            }
        }
        table.get_key_value(*last).map(|(k, _)| k.span().start)
    };
    if root.contains_key("liquid") {
        let liquid = span(&["liquid"]).unwrap_or(0);
        if reactor.constraint == Some(Constraint::ConstantPressure) {
            r.error(
                span(&["reactor", "kind"]).unwrap_or(liquid),
                "[liquid] describes a constant-density mixture: the reactor kind must be a constant-volume one (constant density with [[feed]]), not constant pressure, which is for ideal gases",
                Some("e.g. kind = \"adiabatic-constant-volume\" or \"jacketed-constant-volume\"".to_string()),
            );
        }
        if let Some(p) = span(&["reactor", "pressure"]) {
            r.error(
                p,
                "`pressure` is an ideal-gas setting; a scenario with [liquid] has no pressure (give [initial] concentrations)",
                None,
            );
        }
        if let Some(p) = span(&["initial", "mole_fractions"]) {
            r.error(
                p,
                "mole fractions convert to concentrations through the ideal gas (P / (R T)); with [liquid] give [initial] concentrations",
                None,
            );
        }
        if let Some(DeValue::Array(feeds)) = root.get("feed").map(|v| v.get_ref()) {
            for feed in feeds.iter() {
                if let DeValue::Table(t) = feed.get_ref() {
                    if let Some((k, _)) = t.get_key_value("mole_fractions") {
                        r.error(
                            k.span().start,
                            "feed mole fractions convert through the ideal gas; with [liquid] give the feed's `concentrations`",
                            None,
                        );
                    }
                }
            }
        }
        if let Some(p) = span(&["flow", "inlet_mole_fractions"]) {
            r.error(
                p,
                "inlet mole fractions convert through the ideal gas; with [liquid] give the stirred tank's `inlet_concentrations`",
                None,
            );
        }
        if let Some(p) = span(&["flow", "mass_flow"]) {
            r.error(
                p,
                "a mass flow converts through the species' molar masses, not the liquid's density; with [liquid] give `residence_time` or `volumetric_flow`",
                None,
            );
        }
    }
    if let (Some(p), true) = (span(&["flow"]), root.contains_key("feed")) {
        r.error(
            p,
            "a reactor with [[feed]] is a semi-batch without outflow; [flow] makes a stirred tank: give one or the other",
            None,
        );
    }
}

/// The location of the key `path` (a chain of table keys from the root), if written.
fn key_location(r: &Report<'_>, root: &DeTable<'_>, path: &[&str]) -> Option<SourceLocation> {
    let (last, tables) = path.split_last()?;
    let mut table = root;
    for key in tables {
        match table.get(*key)?.get_ref() {
            DeValue::Table(t) => table = t,
            _ => return None,
        }
    }
    let (key, _) = table.get_key_value(*last)?;
    Some(r.location(key.span().start))
}

/// Where the values that resolution checks were written.
fn locations(r: &Report<'_>, root: &DeTable<'_>) -> Locations {
    let at = |path: &[&str]| key_location(r, root, path);
    let end_time = at(&["output", "end_time"]);
    Locations {
        reactor: at(&["reactor", "kind"]).or_else(|| at(&["reactor"])),
        temperature: at(&["reactor", "temperature"])
            .or_else(|| at(&["reactor", "temperature_history"])),
        pressure: at(&["reactor", "pressure"]),
        initial: at(&["initial", "concentrations"])
            .or_else(|| at(&["initial", "mole_fractions"]))
            .or_else(|| at(&["initial"])),
        end_time,
        output_times: at(&["output", "times"])
            .or_else(|| at(&["output", "grid"]))
            .or(end_time),
        box_section: at(&["box"]),
    }
}

fn read_version(r: &mut Report<'_>, root: &DeTable<'_>) {
    r.format_version(
        root,
        "stoik_scenario",
        "scenario",
        SCENARIO_FORMAT_VERSION,
        "the first line of a version-1 scenario is `stoik_scenario = 1`".to_string(),
    );
}

/// Reads `mechanism = "path"` (relative to `base_dir`); the file must exist.
fn read_mechanism_path(r: &mut Report<'_>, root: &DeTable<'_>, base_dir: &Path) -> Option<PathBuf> {
    let Some(v) = root.get("mechanism") else {
        r.file_error(
            "missing `mechanism` (the mechanism file to run)",
            Some(
                "e.g. mechanism = \"my-mechanism.toml\", relative to this file's folder"
                    .to_string(),
            ),
        );
        return None;
    };
    let name = r.string("mechanism", v)?;
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
}

/// How the temperature evolves, as named in the first half of a reactor kind.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Thermal {
    Isothermal,
    Adiabatic,
    Prescribed,
    Jacketed,
}

/// The reactor kinds as written in files, with their meaning.
const KINDS: [(&str, Constraint, Thermal); 8] = [
    (
        "isothermal-constant-volume",
        Constraint::ConstantVolume,
        Thermal::Isothermal,
    ),
    (
        "isothermal-constant-pressure",
        Constraint::ConstantPressure,
        Thermal::Isothermal,
    ),
    (
        "adiabatic-constant-volume",
        Constraint::ConstantVolume,
        Thermal::Adiabatic,
    ),
    (
        "adiabatic-constant-pressure",
        Constraint::ConstantPressure,
        Thermal::Adiabatic,
    ),
    (
        "prescribed-temperature-constant-volume",
        Constraint::ConstantVolume,
        Thermal::Prescribed,
    ),
    (
        "prescribed-temperature-constant-pressure",
        Constraint::ConstantPressure,
        Thermal::Prescribed,
    ),
    (
        "jacketed-constant-volume",
        Constraint::ConstantVolume,
        Thermal::Jacketed,
    ),
    (
        "jacketed-constant-pressure",
        Constraint::ConstantPressure,
        Thermal::Jacketed,
    ),
];

/// Reactor kind names accepted in files (`[reactor] kind`).
pub const REACTOR_KINDS: [&str; 8] = [
    KINDS[0].0, KINDS[1].0, KINDS[2].0, KINDS[3].0, KINDS[4].0, KINDS[5].0, KINDS[6].0, KINDS[7].0,
];

/// The constraint and temperature law of a kind name.
pub(crate) fn parse_kind(text: &str) -> Option<(Constraint, Thermal)> {
    KINDS
        .iter()
        .find(|(name, _, _)| *name == text)
        .map(|&(_, c, t)| (c, t))
}

/// The file name of the reactor kind made of `constraint` and `energy`.
pub fn kind_label(constraint: Constraint, energy: &Energy) -> &'static str {
    let thermal = match energy {
        Energy::Isothermal => Thermal::Isothermal,
        Energy::Adiabatic => Thermal::Adiabatic,
        Energy::Prescribed(_) => Thermal::Prescribed,
        Energy::HeatExchange(_) => Thermal::Jacketed,
    };
    KINDS
        .iter()
        .find(|(_, c, t)| *c == constraint && *t == thermal)
        .map_or("?", |(name, _, _)| name)
}

/// Linear algebra names accepted in files (`[solver] linear_algebra`) and on the command
/// line.
pub const LINEAR_ALGEBRA_NAMES: [&str; 3] = ["auto", "dense", "sparse"];

/// The linear algebra of a name as written in files: `"auto"`, `"dense"` or `"sparse"`.
pub fn linear_algebra_from_name(text: &str) -> Option<LinearAlgebra> {
    match text {
        "auto" => Some(LinearAlgebra::Auto),
        "dense" => Some(LinearAlgebra::Dense),
        "sparse" => Some(LinearAlgebra::Sparse),
        _ => None,
    }
}
