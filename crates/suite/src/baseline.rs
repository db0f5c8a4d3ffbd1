//! The baseline file (TOML, format version 1): the value of every observable of a suite as
//! recorded, at full round-trip precision, with its provenance (content hashes of the files
//! each case ran, stoik's version, the solver tolerances, the date) and the solver noise
//! estimated at recording.

use crate::error::SuiteError;
use std::fmt::Write as _;
use std::path::Path;
use stoik_mechanism::{
    parse_document, Diagnostics, LoadError, Report, SourceLocation, SpannedValue as Value,
};
use stoik_thermo::{toml_float, toml_string};
use toml::de::{DeTable, DeValue};

/// The baseline format version this crate reads and writes (`stoik_baseline = 1`).
pub const BASELINE_FORMAT_VERSION: i64 = 1;

/// What an input file of a case is.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum InputRole {
    /// The scenario file.
    Scenario,
    /// The mechanism file the scenario names.
    Mechanism,
    /// A thermo file the mechanism reads.
    Thermo,
}

impl InputRole {
    /// The role as written in baseline files.
    pub fn label(self) -> &'static str {
        match self {
            InputRole::Scenario => "scenario",
            InputRole::Mechanism => "mechanism",
            InputRole::Thermo => "thermo",
        }
    }

    fn parse(text: &str) -> Option<InputRole> {
        match text {
            "scenario" => Some(InputRole::Scenario),
            "mechanism" => Some(InputRole::Mechanism),
            "thermo" => Some(InputRole::Thermo),
            _ => None,
        }
    }
}

/// One file a case ran, and its content hash.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct InputFile {
    /// What the file is.
    pub role: InputRole,
    /// Its path relative to the suite file's folder (as the suite's files name it).
    pub path: String,
    /// SHA-256 of its bytes (64 lowercase hexadecimal digits).
    pub sha256: String,
}

/// One recorded observable.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RecordedValue {
    /// The value, in the observable's SI unit.
    pub value: f64,
    /// The solver noise estimated at recording: |value - value at a 100 times tighter
    /// relative tolerance|, same unit; `None` when not estimated.
    pub noise: Option<f64>,
}

/// One recorded case.
#[derive(Debug, Clone)]
pub struct BaselineCase {
    /// The case name (as expanded in the suite).
    pub name: String,
    /// The files it ran: the scenario, the mechanism, the mechanism's thermo files.
    pub inputs: Vec<InputFile>,
    /// The relative tolerance of the integration (dimensionless).
    pub relative_tolerance: f64,
    /// The default absolute tolerance of the integration, mol/m3.
    pub absolute_tolerance_mol_per_m3: f64,
    /// The observables recorded, by name, in the suite's order.
    pub observables: Vec<(String, RecordedValue)>,
    /// Where the case is in the baseline file, when read from one.
    pub(crate) location: Option<SourceLocation>,
}

impl PartialEq for BaselineCase {
    /// Equal content; where a case was read from does not count.
    fn eq(&self, other: &Self) -> bool {
        self.name == other.name
            && self.inputs == other.inputs
            && self.relative_tolerance.to_bits() == other.relative_tolerance.to_bits()
            && self.absolute_tolerance_mol_per_m3.to_bits()
                == other.absolute_tolerance_mol_per_m3.to_bits()
            && self.observables.len() == other.observables.len()
            && self
                .observables
                .iter()
                .zip(&other.observables)
                .all(|(a, b)| {
                    a.0 == b.0
                        && a.1.value.to_bits() == b.1.value.to_bits()
                        && a.1.noise.map(f64::to_bits) == b.1.noise.map(f64::to_bits)
                })
    }
}

impl BaselineCase {
    /// The recorded value of observable `name`.
    pub fn value(&self, name: &str) -> Option<RecordedValue> {
        self.observables
            .iter()
            .find(|(n, _)| n == name)
            .map(|(_, v)| *v)
    }

    /// The input of `role` (the first one for thermo files).
    pub fn input(&self, role: InputRole) -> Option<&InputFile> {
        self.inputs.iter().find(|i| i.role == role)
    }

    /// Where the case is written in the baseline file it was read from.
    pub fn location(&self) -> Option<SourceLocation> {
        self.location
    }
}

/// A baseline: the recorded values of a suite with their provenance. Equality compares
/// content bit for bit (values as `f64` bits), not where it was read from.
#[derive(Debug, Clone)]
pub struct Baseline {
    /// The suite file it was recorded from (its path as given to the recorder).
    pub suite: String,
    /// SHA-256 of the suite file's bytes.
    pub suite_sha256: String,
    /// The version of stoik that recorded it.
    pub stoik_version: String,
    /// When it was recorded: UTC, RFC 3339.
    pub recorded_utc: String,
    /// The cases recorded (cases whose run failed are left out).
    pub cases: Vec<BaselineCase>,
    /// The label of the file it was read from (empty when built in memory).
    pub(crate) file: String,
}

impl PartialEq for Baseline {
    fn eq(&self, other: &Self) -> bool {
        self.suite == other.suite
            && self.suite_sha256 == other.suite_sha256
            && self.stoik_version == other.stoik_version
            && self.recorded_utc == other.recorded_utc
            && self.cases == other.cases
    }
}

impl Baseline {
    /// A baseline built in memory.
    pub fn new(
        suite: String,
        suite_sha256: String,
        stoik_version: String,
        recorded_utc: String,
        cases: Vec<BaselineCase>,
    ) -> Baseline {
        Baseline {
            suite,
            suite_sha256,
            stoik_version,
            recorded_utc,
            cases,
            file: String::new(),
        }
    }

    /// The case named `name`.
    pub fn case(&self, name: &str) -> Option<&BaselineCase> {
        self.cases.iter().find(|c| c.name == name)
    }

    /// The label of the file the baseline was read from (empty when built in memory).
    pub fn file(&self) -> &str {
        &self.file
    }

    /// Reads the baseline file at `path`; diagnostics name the path as given.
    pub fn load(path: &Path) -> Result<Baseline, LoadError> {
        let label = path.display().to_string();
        let text = stoik_mechanism::read_input_text(path).map_err(|e| e.into_load_error(&label))?;
        parse_baseline(&text, &label)
    }

    /// The baseline as TOML text: every number in the shortest form that reads back as the
    /// same `f64` ([`stoik_thermo::toml_float`]). Every value is finite (the recorder keeps
    /// only finite values; a baseline built by hand with a NaN or infinity is refused with
    /// [`SuiteError::Write`]).
    pub fn to_toml(&self) -> Result<String, SuiteError> {
        let number = |x: f64, what: &str| {
            toml_float(x).ok_or_else(|| SuiteError::Write {
                path: self.suite.clone(),
                reason: format!("{what} is {x}, not finite; nothing was written"),
            })
        };
        let mut out = String::new();
        out.push_str("# Baseline of a stoik regression suite (written by `stoik suite record`).\n");
        out.push_str("# Every value is SI and reads back as the same double-precision number.\n");
        let _ = writeln!(out, "stoik_baseline = {BASELINE_FORMAT_VERSION}");
        let _ = writeln!(out, "suite = {}", toml_string(&self.suite));
        let _ = writeln!(out, "suite_sha256 = {}", toml_string(&self.suite_sha256));
        let _ = writeln!(out, "stoik_version = {}", toml_string(&self.stoik_version));
        let _ = writeln!(out, "recorded = {}", toml_string(&self.recorded_utc));
        for case in &self.cases {
            let _ = writeln!(out, "\n[[case]]");
            let _ = writeln!(out, "name = {}", toml_string(&case.name));
            let _ = writeln!(
                out,
                "relative_tolerance = {}",
                number(case.relative_tolerance, "a relative tolerance")?
            );
            let _ = writeln!(
                out,
                "absolute_tolerance = {}",
                number(case.absolute_tolerance_mol_per_m3, "an absolute tolerance")?
            );
            for input in &case.inputs {
                let _ = writeln!(out, "[[case.input]]");
                let _ = writeln!(out, "role = {}", toml_string(input.role.label()));
                let _ = writeln!(out, "path = {}", toml_string(&input.path));
                let _ = writeln!(out, "sha256 = {}", toml_string(&input.sha256));
            }
            for (name, v) in &case.observables {
                let _ = writeln!(out, "[[case.observable]]");
                let _ = writeln!(out, "name = {}", toml_string(name));
                let _ = writeln!(out, "value = {}", number(v.value, "an observable value")?);
                if let Some(noise) = v.noise {
                    let _ = writeln!(out, "noise = {}", number(noise, "a noise estimate")?);
                }
            }
        }
        Ok(out)
    }

    /// Writes the baseline to `path` atomically: to a temporary file in the same folder,
    /// renamed over `path` only when complete (an earlier file survives any failure).
    pub fn write(&self, path: &Path) -> Result<(), SuiteError> {
        let text = self.to_toml()?;
        crate::write::write_text_atomically(path, &text).map_err(|e| SuiteError::Write {
            path: path.display().to_string(),
            reason: e.to_string(),
        })
    }
}

/// Parses baseline text; `file_label` names the file in diagnostics. Every problem is
/// reported at once, located.
pub fn parse_baseline(text: &str, file_label: &str) -> Result<Baseline, LoadError> {
    let mut r = Report::new(text, file_label);
    let Some(doc) = parse_document(text, &mut r) else {
        return Err(r.into_error());
    };
    let baseline = read_baseline(&mut r, doc.get_ref(), file_label);
    let diagnostics: Diagnostics = r.finish();
    match baseline {
        Some(b) if !diagnostics.has_errors() => Ok(b),
        _ => Err(LoadError::Invalid { diagnostics }),
    }
}

const TOP_KEYS: &[&str] = &[
    "stoik_baseline",
    "suite",
    "suite_sha256",
    "stoik_version",
    "recorded",
    "case",
];

fn required_string(
    r: &mut Report<'_>,
    table: &DeTable<'_>,
    key: &str,
    at: usize,
) -> Option<String> {
    match table.get(key) {
        Some(v) => r.string(key, v).map(str::to_string),
        None => {
            r.error(at, format!("missing `{key}`"), None);
            None
        }
    }
}

fn finite(r: &mut Report<'_>, key: &str, v: &Value<'_>) -> Option<f64> {
    let x = r.number(key, v)?;
    if x.is_finite() {
        Some(x)
    } else {
        r.error(v.span().start, format!("`{key}` must be finite"), None);
        None
    }
}

fn hex_hash(r: &mut Report<'_>, key: &str, v: &Value<'_>) -> Option<String> {
    let s = r.string(key, v)?;
    if s.len() == 64
        && s.bytes()
            .all(|b| b.is_ascii_digit() || (b'a'..=b'f').contains(&b))
    {
        Some(s.to_string())
    } else {
        r.error(
            v.span().start,
            format!("`{key}` must be a SHA-256 digest: 64 lowercase hexadecimal digits"),
            None,
        );
        None
    }
}

fn tables<'v, 'i>(
    r: &mut Report<'_>,
    key: &str,
    v: &'v Value<'i>,
) -> Vec<(&'v DeTable<'i>, usize)> {
    match v.get_ref() {
        DeValue::Array(items) => items
            .iter()
            .filter_map(|item| r.table(key, item).map(|t| (t, item.span().start)))
            .collect(),
        _ => {
            r.wrong_type(key, v, "an array of tables");
            Vec::new()
        }
    }
}

fn read_baseline(r: &mut Report<'_>, root: &DeTable<'_>, file: &str) -> Option<Baseline> {
    r.check_keys(root, TOP_KEYS, "the baseline file");
    r.format_version(
        root,
        "stoik_baseline",
        "baseline",
        BASELINE_FORMAT_VERSION,
        "a baseline is written by `stoik suite record`; its first key is `stoik_baseline = 1`"
            .to_string(),
    );
    let suite = required_string(r, root, "suite", 0);
    let suite_sha256 = match root.get("suite_sha256") {
        Some(v) => hex_hash(r, "suite_sha256", v),
        None => {
            r.file_error("missing `suite_sha256`", None);
            None
        }
    };
    let stoik_version = required_string(r, root, "stoik_version", 0);
    let recorded_utc = required_string(r, root, "recorded", 0);
    let mut cases = Vec::new();
    if let Some(v) = root.get("case") {
        for (table, at) in tables(r, "case", v) {
            if let Some(case) = read_case(r, table, at) {
                if cases.iter().any(|c: &BaselineCase| c.name == case.name) {
                    r.error(at, format!("duplicate case `{}`", case.name), None);
                }
                cases.push(case);
            }
        }
    }
    Some(Baseline {
        suite: suite?,
        suite_sha256: suite_sha256?,
        stoik_version: stoik_version?,
        recorded_utc: recorded_utc?,
        cases,
        file: file.to_string(),
    })
}

fn read_case(r: &mut Report<'_>, table: &DeTable<'_>, at: usize) -> Option<BaselineCase> {
    r.check_keys(
        table,
        &[
            "name",
            "relative_tolerance",
            "absolute_tolerance",
            "input",
            "observable",
        ],
        "[[case]]",
    );
    let name = required_string(r, table, "name", at);
    let mut number = |key: &str| match table.get(key) {
        Some(v) => finite(r, key, v),
        None => {
            r.error(at, format!("missing `{key}`"), None);
            None
        }
    };
    let relative_tolerance = number("relative_tolerance");
    let absolute_tolerance = number("absolute_tolerance");
    let mut inputs = Vec::new();
    let mut ok = true;
    if let Some(v) = table.get("input") {
        for (t, at) in tables(r, "input", v) {
            r.check_keys(t, &["role", "path", "sha256"], "[[case.input]]");
            let role = match t.get("role") {
                Some(v) => r.one_of(
                    "role",
                    v,
                    "input role",
                    &["scenario", "mechanism", "thermo"],
                    InputRole::parse,
                ),
                None => {
                    r.error(at, "missing `role`", None);
                    None
                }
            };
            let path = required_string(r, t, "path", at);
            let sha256 = match t.get("sha256") {
                Some(v) => hex_hash(r, "sha256", v),
                None => {
                    r.error(at, "missing `sha256`", None);
                    None
                }
            };
            match (role, path, sha256) {
                (Some(role), Some(path), Some(sha256)) => {
                    inputs.push(InputFile { role, path, sha256 })
                }
                _ => ok = false,
            }
        }
    }
    if ok && !inputs.iter().any(|i| i.role == InputRole::Mechanism) {
        r.error(at, "the case lists no `mechanism` input", None);
    }
    let mut observables: Vec<(String, RecordedValue)> = Vec::new();
    if let Some(v) = table.get("observable") {
        for (t, at) in tables(r, "observable", v) {
            r.check_keys(t, &["name", "value", "noise"], "[[case.observable]]");
            let name = required_string(r, t, "name", at);
            let value = match t.get("value") {
                Some(v) => finite(r, "value", v),
                None => {
                    r.error(at, "missing `value`", None);
                    None
                }
            };
            let noise = match t.get("noise") {
                Some(v) => finite(r, "noise", v).map(Some),
                None => Some(None),
            };
            match (name, value, noise) {
                (Some(name), Some(value), Some(noise)) => {
                    if observables.iter().any(|(n, _)| *n == name) {
                        r.error(at, format!("duplicate observable `{name}`"), None);
                    }
                    observables.push((name, RecordedValue { value, noise }));
                }
                _ => ok = false,
            }
        }
    }
    let location = Some(r.location(at));
    if !ok {
        return None;
    }
    Some(BaselineCase {
        name: name?,
        inputs,
        relative_tolerance: relative_tolerance?,
        absolute_tolerance_mol_per_m3: absolute_tolerance?,
        observables,
        location,
    })
}
