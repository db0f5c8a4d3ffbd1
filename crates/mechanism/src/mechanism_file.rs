//! The mechanism file (TOML, format version 1): parsing, validation and conversion to SI.
//!
//! The TOML tree is walked by hand so that every problem of a file is collected, each at the
//! line:column of the offending key or value (see `docs/file-format.md` for the format).
//! Name lookups and duplicate detection use hash maps, so loading is linear in file size.

use self::pressure::RawPressureForm;
use crate::elements::{known_symbols, standard_atomic_weight_kg_per_mol};
use crate::equation::{parse_equation, EquationTerm};
use crate::suggest::nearest_name;
use crate::toml_walk::{
    non_negative_finite_problem, parse_document, positive_finite_problem, show_number, Report,
    Value,
};
use crate::units::{AmountUnit, EnergyUnit, LengthUnit, RateUnits, TimeUnit};
use crate::validate::MAX_COLLISION_DIAMETER_M;
use crate::{
    Arrhenius, Diagnostic, Diagnostics, Element, LoadError, Mechanism, Severity, Species, Step,
    StoichTerm, ThirdBody,
};
use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};
use stoik_thermo::Nasa7;
use toml::de::{DeTable, DeValue};

/// The mechanism format version this crate reads (`stoik_mechanism = 1`).
pub const MECHANISM_FORMAT_VERSION: i64 = 1;

/// A successfully loaded mechanism file: the mechanism in SI units and any warnings.
#[derive(Debug, Clone, PartialEq)]
pub struct MechanismFile {
    /// The validated mechanism (SI units).
    pub mechanism: Mechanism,
    /// Warnings found while loading (no errors: files with errors do not load).
    pub warnings: Diagnostics,
    /// The thermo files read (the `thermo_files` entries resolved against the mechanism's
    /// folder), in order: with the mechanism file itself, the inputs a run depends on.
    pub thermo_files: Vec<PathBuf>,
}

/// Reads and loads the mechanism file at `path`; diagnostics name the path as given.
/// Relative `thermo_files` paths are resolved against the folder of `path`.
pub fn load_mechanism(path: &Path) -> Result<MechanismFile, LoadError> {
    let label = path.display().to_string();
    let text = crate::read_input_text(path).map_err(|e| e.into_load_error(&label))?;
    let folder = path.parent().unwrap_or(Path::new(""));
    parse_mechanism_in(&text, &label, Some(folder))
}

/// Parses and validates mechanism text; `file_label` names the file in diagnostics.
///
/// The text has no folder, so a relative path in `thermo_files` is an error (absolute paths
/// work); use [`parse_mechanism_in`] to give the folder relative paths start from.
///
/// Returns every problem at once: `Err(LoadError::Invalid)` holds all errors and warnings
/// when there is at least one error.
pub fn parse_mechanism(text: &str, file_label: &str) -> Result<MechanismFile, LoadError> {
    parse_mechanism_in(text, file_label, None)
}

/// Parses and validates mechanism text like [`parse_mechanism`], resolving relative
/// `thermo_files` paths against `base_dir` (normally the folder of the mechanism file; an
/// empty path means the current directory). With `base_dir = None` a relative thermo-file
/// path is reported as an error.
///
/// Problems inside a thermo file are reported with that file's own path, line and column
/// (after the mechanism's own diagnostics).
pub fn parse_mechanism_in(
    text: &str,
    file_label: &str,
    base_dir: Option<&Path>,
) -> Result<MechanismFile, LoadError> {
    let mut loader = Loader {
        base_dir,
        thermo_sources: HashMap::new(),
        thermo_file_offsets: Vec::new(),
        thermo_file_labels: Vec::new(),
        thermo_file_paths: Vec::new(),
        external: Vec::new(),
        thermo_reported: Vec::new(),
        thermo_file_failed: false,
        r: Report::new(text, file_label),
        species: Vec::new(),
        species_index: HashMap::new(),
        elements: Vec::new(),
        element_index: HashMap::new(),
        usage: Vec::new(),
        default_collider: false,
        equation_failed: false,
        species_offsets: Vec::new(),
        suggestions: HashMap::new(),
    };
    let Some(doc) = parse_document(text, &mut loader.r) else {
        return Err(loader.r.into_error());
    };
    let mechanism = loader.load(doc.get_ref());
    let external = std::mem::take(&mut loader.external);
    let mut diagnostics = loader.r.finish();
    diagnostics.0.extend(external);
    if diagnostics.has_errors() {
        return Err(LoadError::Invalid { diagnostics });
    }
    debug_assert!(diagnostics.iter().all(|d| d.severity == Severity::Warning));
    Ok(MechanismFile {
        mechanism,
        warnings: diagnostics,
        thermo_files: loader.thermo_file_paths,
    })
}

const TOP_KEYS: &[&str] = &[
    "stoik_mechanism",
    "title",
    "description",
    "units",
    "species",
    "step",
    "thermo_files",
];
const UNITS_KEYS: &[&str] = &["amount", "length", "time", "activation_energy"];
const SPECIES_KEYS: &[&str] = &["name", "atoms", "note", "thermo", "collision_diameter_nm"];
const STEP_KEYS: &[&str] = &[
    "equation",
    "forward",
    "reverse",
    "third_body",
    "reaction_orders",
    "allow_duplicate",
    "units",
    "note",
    "falloff",
    "chemically_activated",
    "termolecular_300k",
    "pressure_table",
];
const ARRHENIUS_KEYS: &[&str] = &["prefactor", "temperature_exponent", "activation_energy"];
const THIRD_BODY_KEYS: &[&str] = &["efficiency", "default_efficiency", "species"];
/// Distinct unknown names for which a suggestion is computed (bounds work on hostile input).
const SUGGESTION_BUDGET: usize = 256;

/// How a species is used by the steps (for the "never used" warning).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
enum Usage {
    Unused,
    OnlyEfficiency,
    Used,
}

/// Rate parameters as written in the file (file units).
#[derive(Debug, Clone, Copy)]
struct RawArrhenius {
    prefactor: f64,
    temperature_exponent: f64,
    activation_energy: f64,
}

impl RawArrhenius {
    /// The temperature exponent and the activation energy in SI (J/mol), with a zero
    /// prefactor: the prefactor's conversion needs the step's order.
    fn without_prefactor(self, units: RateUnits) -> Arrhenius {
        Arrhenius {
            pre_exponential_si: 0.0,
            temperature_exponent: self.temperature_exponent,
            activation_energy_j_per_mol: units.activation_energy_to_si(self.activation_energy),
        }
    }
}

/// A step's rate parameters as written (file units), with the units they are in.
struct RawRates {
    units: RateUnits,
    forward: RawArrhenius,
    reverse: Option<RawArrhenius>,
    /// The pressure form and the byte offset of its key.
    pressure_form: Option<(RawPressureForm, usize)>,
}

/// Reactants and products (each `None` if a name did not resolve) and reversibility.
type ResolvedSides = (Option<Vec<StoichTerm>>, Option<Vec<StoichTerm>>, bool);

/// The kind of collision partner, part of the duplicate-step key.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
enum PartnerKind {
    None,
    Mixture,
    Species(usize),
}

/// Canonical stoichiometry of a step, for duplicate detection.
#[derive(Debug, Clone, PartialEq, Eq, Hash)]
struct StepKey {
    left: Vec<(usize, u64)>,
    right: Vec<(usize, u64)>,
    reversible: bool,
    partner: PartnerKind,
}

impl StepKey {
    fn of(step: &Step) -> Self {
        let canonical = |terms: &[StoichTerm]| {
            let mut v: Vec<(usize, u64)> = terms
                .iter()
                .map(|t| (t.species, t.coefficient.to_bits()))
                .collect();
            v.sort_unstable();
            v
        };
        let mut left = canonical(&step.reactants);
        let mut right = canonical(&step.products);
        // A <=> B and B <=> A are the same reversible step.
        if step.reversible && right < left {
            std::mem::swap(&mut left, &mut right);
        }
        let partner = match &step.third_body {
            None => PartnerKind::None,
            Some(ThirdBody::Mixture { .. }) => PartnerKind::Mixture,
            Some(ThirdBody::Species(i)) => PartnerKind::Species(*i),
        };
        StepKey {
            left,
            right,
            reversible: step.reversible,
            partner,
        }
    }
}

/// Where one species' polynomial came from in a thermo file.
struct ThermoSource {
    /// Index into `Loader::thermo_file_labels`.
    file: usize,
    /// Line of the entry in that file.
    line: usize,
    polynomial: Nasa7,
}

struct Loader<'t> {
    /// Folder relative thermo-file paths start from; `None`: relative paths are errors.
    base_dir: Option<&'t Path>,
    /// Species name -> every thermo-file entry for it, in `thermo_files` order.
    thermo_sources: HashMap<String, Vec<ThermoSource>>,
    /// Byte offset of each loaded thermo file's entry in `thermo_files`.
    thermo_file_offsets: Vec<usize>,
    /// Each loaded thermo file's path as written.
    thermo_file_labels: Vec<String>,
    /// Each loaded thermo file's path as resolved.
    thermo_file_paths: Vec<PathBuf>,
    /// Diagnostics located in other files (thermo files).
    external: Vec<Diagnostic>,
    /// Species whose thermochemistry was given but reported as invalid (a bad inline table,
    /// or entries in two thermo files); their steps are not reported again for lacking it.
    thermo_reported: Vec<usize>,
    /// Some thermo file could not be loaded (reported); "no thermochemistry" errors would
    /// mostly repeat that.
    thermo_file_failed: bool,
    r: Report<'t>,
    species: Vec<Species>,
    species_index: HashMap<String, usize>,
    elements: Vec<Element>,
    element_index: HashMap<String, usize>,
    usage: Vec<Usage>,
    /// Some mixture third body has a nonzero default efficiency.
    default_collider: bool,
    /// Some step's equation could not be read, so "unused" warnings would be noise.
    equation_failed: bool,
    /// Byte offset of each species' name (for warnings).
    species_offsets: Vec<usize>,
    suggestions: HashMap<String, Option<String>>,
}

impl Loader<'_> {
    fn load(&mut self, root: &DeTable<'_>) -> Mechanism {
        self.r.check_keys(root, TOP_KEYS, "the mechanism file");
        self.check_version(root);
        let mut title = None;
        if let Some(v) = root.get("title") {
            title = self.r.string("title", v).map(str::to_string);
        }
        if let Some(v) = root.get("description") {
            self.r.string("description", v);
        }
        if let Some(v) = root.get("thermo_files") {
            self.read_thermo_files(v);
        }
        let mut units = RateUnits::default();
        if let Some(v) = root.get("units") {
            if let Some(t) = self.r.table("units", v) {
                units = self.read_units(t, units, "[units]");
            }
        }
        if let Some(v) = root.get("species") {
            match v.get_ref() {
                DeValue::Array(items) => {
                    for item in items.iter() {
                        self.read_species(item);
                    }
                }
                _ => self
                    .r
                    .wrong_type("species", v, "an array of tables (`[[species]]`)"),
            }
        }
        self.usage = vec![Usage::Unused; self.species.len()];

        let mut steps: Vec<Step> = Vec::new();
        let mut step_offsets: Vec<usize> = Vec::new();
        let mut step_count = 0usize;
        match root.get_key_value("step") {
            None => self.r.file_error(
                "the mechanism has no steps",
                Some("add at least one `[[step]]` table".to_string()),
            ),
            Some((key, v)) => match v.get_ref() {
                DeValue::Array(items) => {
                    for item in items.iter() {
                        step_count += 1;
                        if let Some(step) = self.read_step(item, units) {
                            steps.push(step);
                            step_offsets.push(item.span().start);
                        }
                    }
                    if step_count == 0 {
                        self.r.error(
                            key.span().start,
                            "the mechanism has no steps",
                            Some("add at least one `[[step]]` table".to_string()),
                        );
                    }
                }
                _ => self
                    .r
                    .wrong_type("step", v, "an array of tables (`[[step]]`)"),
            },
        }
        self.check_duplicates(&steps, &step_offsets);
        // Without a readable equation for every step (or without steps), "never used" would
        // mostly repeat the errors already reported.
        if step_count > 0 && !self.equation_failed {
            self.warn_unused();
        }
        Mechanism {
            title,
            elements: std::mem::take(&mut self.elements),
            species: std::mem::take(&mut self.species),
            steps,
        }
    }

    fn check_version(&mut self, root: &DeTable<'_>) {
        self.r.format_version(
            root,
            "stoik_mechanism",
            "mechanism",
            MECHANISM_FORMAT_VERSION,
            "the first line of a version-1 mechanism is `stoik_mechanism = 1`".to_string(),
        );
    }

    /// Reads a units table over `base` (the file defaults or the file's `[units]`).
    fn read_units(&mut self, table: &DeTable<'_>, base: RateUnits, context: &str) -> RateUnits {
        self.r.check_keys(table, UNITS_KEYS, context);
        let mut units = base;
        for (key, value) in table.iter() {
            let name: &str = key.get_ref();
            let (accepted, what): (&[&str], &str) = match name {
                "amount" => (AmountUnit::ACCEPTED, "amount"),
                "length" => (LengthUnit::ACCEPTED, "length"),
                "time" => (TimeUnit::ACCEPTED, "time"),
                "activation_energy" => (EnergyUnit::ACCEPTED, "activation-energy"),
                _ => continue,
            };
            let Some(text) = self.r.string(name, value) else {
                continue;
            };
            let ok = match name {
                "amount" => AmountUnit::parse(text).map(|u| units.amount = u).is_some(),
                "length" => LengthUnit::parse(text).map(|u| units.length = u).is_some(),
                "time" => TimeUnit::parse(text).map(|u| units.time = u).is_some(),
                _ => EnergyUnit::parse(text)
                    .map(|u| units.activation_energy = u)
                    .is_some(),
            };
            if !ok {
                let help = match nearest_name(text, accepted.iter().copied()) {
                    Some(near) => format!("did you mean `{near}`?"),
                    None => format!("write one of: {}", accepted.join(", ")),
                };
                self.r.error(
                    value.span().start,
                    format!(
                        "unknown {what} unit `{text}`; accepted: {}",
                        accepted.join(", ")
                    ),
                    Some(help),
                );
            }
        }
        units
    }

    fn read_species(&mut self, item: &Value<'_>) {
        let at = item.span().start;
        let Some(table) = self.r.table("species", item) else {
            return;
        };
        self.r.check_keys(table, SPECIES_KEYS, "[[species]]");
        let name = match table.get("name") {
            None => {
                self.r.error(at, "species entry has no `name`", None);
                None
            }
            Some(v) => self.r.string("name", v).map(|n| (n, v.span().start)),
        };
        let composition = table.get("atoms").and_then(|v| self.read_atoms(v));
        let inline_thermo = table.get("thermo").map(|v| {
            let species_name = name.map(|(n, _)| n);
            self.read_inline_thermo(v, species_name)
        });
        let note = table
            .get("note")
            .and_then(|v| self.r.string("note", v).map(str::to_string));
        let collision_diameter_m = table.get("collision_diameter_nm").and_then(|v| {
            let d = self.r.number("collision_diameter_nm", v)?;
            match positive_finite_problem(d) {
                None if d * 1e-9 >= MAX_COLLISION_DIAMETER_M => {
                    self.r.error(
                        v.span().start,
                        format!("`collision_diameter_nm` is {}; molecular diameters are below 10 nm", show_number(d)),
                        Some("e.g. collision_diameter_nm = 0.35".to_string()),
                    );
                    None
                }
                None => Some(d * 1e-9),
                Some(problem) => {
                    self.r.error(
                        v.span().start,
                        format!("`collision_diameter_nm` {problem}; it must be positive and finite (nm)"),
                        Some("e.g. collision_diameter_nm = 0.35".to_string()),
                    );
                    None
                }
            }
        });
        let Some((name, name_at)) = name else {
            return;
        };
        if let Some(problem) = bad_species_name(name) {
            self.r
                .error(name_at, format!("species name `{name}` {problem}"), None);
            return;
        }
        if let Some(&first) = self.species_index.get(name) {
            let line = self.species[first].location.map(|l| l.line).unwrap_or(0);
            self.r.error(
                name_at,
                format!("species `{name}` is declared twice (first at line {line})"),
                None,
            );
            return;
        }
        self.species_index
            .insert(name.to_string(), self.species.len());
        self.species_offsets.push(name_at);
        let location = Some(self.r.location(name_at));
        // Inline thermochemistry wins over thermo files (a bad inline table was reported).
        let thermo = match inline_thermo {
            Some(inline) => {
                if inline.is_none() {
                    self.thermo_reported.push(self.species.len());
                }
                inline
            }
            None => self.thermo_from_files(name, name_at),
        };
        self.species.push(Species {
            name: name.to_string(),
            composition,
            note,
            location,
            thermo,
            collision_diameter_m,
        });
    }

    /// Reads `atoms = { H = 2, O = 1 }`; `None` on any problem (reported).
    fn read_atoms(&mut self, value: &Value<'_>) -> Option<Vec<(usize, f64)>> {
        let table = self.r.table("atoms", value)?;
        let mut composition = Vec::new();
        let mut ok = true;
        for (key, v) in table.iter() {
            let symbol: &str = key.get_ref();
            let Some(count) = self.r.number(symbol, v) else {
                ok = false;
                continue;
            };
            let Some(weight) = standard_atomic_weight_kg_per_mol(symbol) else {
                let help = nearest_name(symbol, known_symbols())
                    .map(|near| format!("did you mean `{near}`? (symbols are case-sensitive)"));
                self.r.error(
                    key.span().start,
                    format!("unknown element symbol `{symbol}`"),
                    help,
                );
                ok = false;
                continue;
            };
            // Only the electron pseudo-element may have a negative count (positive ions).
            let problem = if symbol == "E" {
                (!count.is_finite()).then_some("is not finite")
            } else {
                non_negative_finite_problem(count)
            };
            if let Some(problem) = problem {
                self.r.error(
                    v.span().start,
                    format!("atom count of `{symbol}` {problem}"),
                    None,
                );
                ok = false;
                continue;
            }
            if count == 0.0 {
                continue;
            }
            let element = match self.element_index.get(symbol) {
                Some(&e) => e,
                None => {
                    self.element_index
                        .insert(symbol.to_string(), self.elements.len());
                    self.elements.push(Element {
                        symbol: symbol.to_string(),
                        atomic_weight_kg_per_mol: weight,
                    });
                    self.elements.len() - 1
                }
            };
            composition.push((element, count));
        }
        ok.then_some(composition)
    }

    /// Index of species `name`, marking its use; an unknown name is reported at `at`.
    fn lookup(&mut self, name: &str, at: usize, usage: Usage) -> Option<usize> {
        if let Some(&i) = self.species_index.get(name) {
            if self.usage[i] < usage {
                self.usage[i] = usage;
            }
            return Some(i);
        }
        if name == "M" {
            self.r.error(
                at,
                "`M` is not a declared species; declare the collision partner with `third_body = {...}`",
                Some("write the step without `+ M`, e.g. `H + O2 -> HO2` with `third_body = {}`".to_string()),
            );
            return None;
        }
        let help = self
            .suggest(name)
            .map(|near| format!("did you mean `{near}`?"));
        self.r.error(at, format!("unknown species `{name}`"), help);
        None
    }

    fn suggest(&mut self, name: &str) -> Option<String> {
        if let Some(cached) = self.suggestions.get(name) {
            return cached.clone();
        }
        if self.suggestions.len() >= SUGGESTION_BUDGET {
            return None;
        }
        let near =
            nearest_name(name, self.species.iter().map(|s| s.name.as_str())).map(str::to_string);
        self.suggestions.insert(name.to_string(), near.clone());
        near
    }

    fn resolve_side(
        &mut self,
        terms: &[EquationTerm<'_>],
        base: Option<usize>,
        fallback: usize,
    ) -> Option<Vec<StoichTerm>> {
        let mut side: Vec<StoichTerm> = Vec::with_capacity(terms.len());
        let mut ok = true;
        for term in terms {
            let at = base.map(|b| b + term.offset).unwrap_or(fallback);
            match self.lookup(term.name, at, Usage::Used) {
                Some(species) => match side.iter_mut().find(|t| t.species == species) {
                    Some(existing) => existing.coefficient += term.coefficient,
                    None => side.push(StoichTerm {
                        species,
                        coefficient: term.coefficient,
                    }),
                },
                None => ok = false,
            }
        }
        ok.then_some(side)
    }

    fn read_arrhenius(&mut self, key: &str, value: &Value<'_>) -> Option<RawArrhenius> {
        self.read_arrhenius_keys(key, value, ARRHENIUS_KEYS)
    }

    /// Reads an Arrhenius table whose keys may be `allowed` (the Arrhenius keys and others
    /// read elsewhere).
    fn read_arrhenius_keys(
        &mut self,
        key: &str,
        value: &Value<'_>,
        allowed: &[&str],
    ) -> Option<RawArrhenius> {
        let table = self.r.table(key, value)?;
        self.r.check_keys(table, allowed, &format!("`{key}`"));
        let mut ok = true;
        let prefactor = match table.get("prefactor") {
            None => {
                self.r.error(
                    value.span().start,
                    format!("`{key}` has no `prefactor`"),
                    Some(format!("e.g. {key} = {{ prefactor = 1e13, temperature_exponent = 0, activation_energy = 0 }}")),
                );
                None
            }
            Some(v) => {
                let a = self.r.number("prefactor", v);
                if let Some(problem) = a.and_then(positive_finite_problem) {
                    self.r.error(
                        v.span().start,
                        format!("`prefactor` {problem}; it must be a positive finite number"),
                        None,
                    );
                    ok = false;
                }
                a
            }
        };
        let mut finite = |name: &str| -> Option<f64> {
            match table.get(name) {
                None => Some(0.0),
                Some(v) => {
                    let x = self.r.number(name, v)?;
                    if !x.is_finite() {
                        self.r.error(
                            v.span().start,
                            format!(
                                "`{name}` {}; it must be a finite number",
                                if x.is_nan() { "is NaN" } else { "is infinite" }
                            ),
                            None,
                        );
                        return None;
                    }
                    Some(x)
                }
            }
        };
        let temperature_exponent = finite("temperature_exponent");
        let activation_energy = finite("activation_energy");
        match (ok, prefactor, temperature_exponent, activation_energy) {
            (true, Some(prefactor), Some(temperature_exponent), Some(activation_energy)) => {
                Some(RawArrhenius {
                    prefactor,
                    temperature_exponent,
                    activation_energy,
                })
            }
            _ => None,
        }
    }

    fn read_third_body(&mut self, value: &Value<'_>) -> Option<ThirdBody> {
        let table = self.r.table("third_body", value)?;
        self.r.check_keys(table, THIRD_BODY_KEYS, "`third_body`");
        if let Some((key, v)) = table.get_key_value("species") {
            if table.contains_key("efficiency") || table.contains_key("default_efficiency") {
                self.r.error(
                    key.span().start,
                    "`third_body` takes either `species` or `efficiency`/`default_efficiency`, not both",
                    None,
                );
                return None;
            }
            let name = self.r.string("species", v)?;
            let at = self
                .r
                .string_content_start(v, name)
                .unwrap_or(v.span().start);
            return self.lookup(name, at, Usage::Used).map(ThirdBody::Species);
        }
        let mut ok = true;
        let mut default_efficiency = 1.0;
        if let Some(v) = table.get("default_efficiency") {
            match self.r.number("default_efficiency", v) {
                Some(x) => match non_negative_finite_problem(x) {
                    Some(problem) => {
                        self.r.error(v.span().start, format!("`default_efficiency` {problem}; efficiencies must be finite and not negative"), None);
                        ok = false;
                    }
                    None => default_efficiency = x,
                },
                None => ok = false,
            }
        }
        let mut efficiencies = Vec::new();
        if let Some(v) = table.get("efficiency") {
            match self.r.table("efficiency", v) {
                Some(t) => {
                    for (key, ev) in t.iter() {
                        let name: &str = key.get_ref();
                        let species = self.lookup(name, key.span().start, Usage::OnlyEfficiency);
                        let x = self.r.number(name, ev);
                        if let Some(problem) = x.and_then(non_negative_finite_problem) {
                            self.r.error(
                                ev.span().start,
                                format!("efficiency of `{name}` {problem}; efficiencies must be finite and not negative"),
                                None,
                            );
                            ok = false;
                        }
                        match (species, x) {
                            (Some(s), Some(x)) => {
                                // A species that collides (bath gas) takes part in the rates.
                                if x > 0.0 {
                                    self.usage[s] = Usage::Used;
                                }
                                efficiencies.push((s, x))
                            }
                            _ => ok = false,
                        }
                    }
                }
                None => ok = false,
            }
        }
        if ok && default_efficiency > 0.0 {
            self.default_collider = true;
        }
        ok.then_some(ThirdBody::Mixture {
            default_efficiency,
            efficiencies,
        })
    }

    fn read_orders(&mut self, value: &Value<'_>) -> Option<Vec<(usize, f64, usize)>> {
        let table = self.r.table("reaction_orders", value)?;
        let mut orders = Vec::new();
        let mut ok = true;
        for (key, v) in table.iter() {
            let name: &str = key.get_ref();
            let species = self.lookup(name, key.span().start, Usage::Used);
            let x = self.r.number(name, v);
            if let Some(problem) = x.and_then(non_negative_finite_problem) {
                self.r.error(
                    v.span().start,
                    format!("reaction order of `{name}` {problem}; orders must be finite and not negative"),
                    None,
                );
                ok = false;
            }
            match (species, x) {
                (Some(s), Some(x)) => orders.push((s, x, key.span().start)),
                _ => ok = false,
            }
        }
        ok.then_some(orders)
    }

    /// Reads one `[[step]]` table: every key is read (so that every problem is reported),
    /// then the step is converted to SI. `None` when a problem was reported.
    fn read_step(&mut self, item: &Value<'_>, file_units: RateUnits) -> Option<Step> {
        let at = item.span().start;
        let errors_before = self.r.error_count();
        let table = self.r.table("step", item)?;
        self.r.check_keys(table, STEP_KEYS, "[[step]]");
        let units = self.read_step_units(table, file_units);
        let (equation, equation_at, sides) = self.read_step_equation(table, at);
        let reversible = sides.as_ref().map(|s| s.2);
        let pressure_form = self.read_pressure_form(table);
        let forward = self.read_step_forward(table, at, &pressure_form);
        let reverse = self.read_step_reverse(table, sides.as_ref(), equation_at);
        let third_body = table
            .get("third_body")
            .and_then(|v| self.read_third_body(v));
        let orders = self.read_step_orders(table, reversible);
        let allow_duplicate = table
            .get("allow_duplicate")
            .and_then(|v| self.r.boolean("allow_duplicate", v))
            .unwrap_or(false);
        let note = table
            .get("note")
            .and_then(|v| self.r.string("note", v).map(str::to_string));

        if self.r.error_count() != errors_before {
            return None;
        }
        let (Some(reactants), Some(products), reversible) = sides? else {
            return None;
        };
        let rates = RawRates {
            units,
            forward: forward?,
            reverse,
            pressure_form: pressure_form.flatten(),
        };
        // The prefactors depend on the step's order; `convert_rates` sets them.
        let step = Step {
            equation,
            forward_orders: orders.map(|listed| forward_orders(&reactants, &listed)),
            reactants,
            products,
            reversible,
            forward: rates.forward.without_prefactor(units),
            reverse: reverse.map(|r| r.without_prefactor(units)),
            third_body,
            pressure_dependence: None,
            allow_duplicate,
            note,
            location: Some(self.r.location(at)),
        };
        self.convert_rates(step, rates, at, equation_at)
    }

    /// The step's own `units` table over the file's units.
    fn read_step_units(&mut self, table: &DeTable<'_>, file_units: RateUnits) -> RateUnits {
        match table.get("units").and_then(|v| self.r.table("units", v)) {
            Some(t) => self.read_units(t, file_units, "the step's `units`"),
            None => file_units,
        }
    }

    /// The step's `equation`: its text, where it starts (the step's start `at` when it has
    /// none) and its resolved sides, `None` when it is missing or unreadable (reported).
    fn read_step_equation(
        &mut self,
        table: &DeTable<'_>,
        at: usize,
    ) -> (String, usize, Option<ResolvedSides>) {
        let Some(v) = table.get("equation") else {
            self.equation_failed = true;
            self.r.error(
                at,
                "step has no `equation`",
                Some("e.g. equation = \"A + B -> C\"".to_string()),
            );
            return (String::new(), at, None);
        };
        let text = self.r.string("equation", v);
        self.equation_failed |= text.is_none();
        let Some(text) = text else {
            return (String::new(), at, None);
        };
        let equation_at = v.span().start;
        let base = self.r.string_content_start(v, text);
        let index = &self.species_index;
        let sides = match parse_equation(text, &|n: &str| index.contains_key(n)) {
            Ok(parsed) => {
                let reactants = self.resolve_side(&parsed.reactants, base, equation_at);
                let products = self.resolve_side(&parsed.products, base, equation_at);
                Some((reactants, products, parsed.reversible))
            }
            Err(errors) => {
                self.equation_failed = true;
                for e in errors {
                    let pos = base.map(|b| b + e.offset).unwrap_or(equation_at);
                    self.r.error(pos, e.message, e.help);
                }
                None
            }
        };
        (text.to_string(), equation_at, sides)
    }

    /// The step's `forward` rate parameters, or those its pressure form implies
    /// (`termolecular_300k` and `pressure_table` replace `forward`; a problem with them was
    /// reported already).
    fn read_step_forward(
        &mut self,
        table: &DeTable<'_>,
        at: usize,
        pressure_form: &Option<Option<(RawPressureForm, usize)>>,
    ) -> Option<RawArrhenius> {
        let implied_forward = match pressure_form {
            Some(Some((form, _))) => form.implied_forward(),
            _ => None,
        };
        let forward_implied = ["termolecular_300k", "pressure_table"]
            .iter()
            .any(|&k| table.contains_key(k));
        match table.get("forward") {
            None if forward_implied => implied_forward,
            None => {
                self.r.error(
                    at,
                    "step has no `forward` rate parameters",
                    Some("e.g. forward = { prefactor = 1e13, temperature_exponent = 0, activation_energy = 0 }".to_string()),
                );
                None
            }
            Some(v) => self.read_arrhenius("forward", v),
        }
    }

    /// The step's `reverse` rate parameters; without them, a reversible step must have
    /// thermochemistry for its species (checked here).
    fn read_step_reverse(
        &mut self,
        table: &DeTable<'_>,
        sides: Option<&ResolvedSides>,
        equation_at: usize,
    ) -> Option<RawArrhenius> {
        let Some((key, v)) = table.get_key_value("reverse") else {
            if let Some((Some(reactants), Some(products), true)) = sides {
                self.check_thermo_reverse(reactants, products, equation_at);
            }
            return None;
        };
        if sides.map(|s| s.2) == Some(false) {
            self.r.error(
                key.span().start,
                "irreversible step (`->`) cannot have `reverse` rate parameters",
                Some("write the equation with `<=>` to make the step reversible".to_string()),
            );
        }
        self.read_arrhenius("reverse", v)
    }

    /// The step's `reaction_orders` (only on irreversible steps) as (species, order, byte
    /// offset).
    fn read_step_orders(
        &mut self,
        table: &DeTable<'_>,
        reversible: Option<bool>,
    ) -> Option<Vec<(usize, f64, usize)>> {
        let (key, v) = table.get_key_value("reaction_orders")?;
        if reversible == Some(true) {
            self.r.error(
                key.span().start,
                "`reaction_orders` is only allowed on irreversible (`->`) steps",
                None,
            );
        }
        self.read_orders(v)
    }

    /// Sets the prefactors of `step` (whose exponents and activation energies are in SI
    /// already) from `rates`, converted to SI for the step's order, applies its pressure form
    /// and checks that the converted values are in range; then checks the step's balance.
    /// `None` when a problem was reported.
    fn convert_rates(
        &mut self,
        mut step: Step,
        rates: RawRates,
        at: usize,
        equation_at: usize,
    ) -> Option<Step> {
        let RawRates {
            units,
            forward,
            reverse,
            pressure_form,
        } = rates;
        // The bath gas of a pressure-dependent step does not add to the order of `forward`
        // (`pressure_dependence` is set below, after the conversion).
        let forward_order = if pressure_form.is_some() && step.third_body.is_some() {
            step.forward_order() - 1.0
        } else {
            step.forward_order()
        };
        step.forward.pre_exponential_si = units.prefactor_to_si(forward.prefactor, forward_order);
        let reverse_order = step.reverse_order();
        if let (Some(rev), Some(raw)) = (step.reverse.as_mut(), reverse) {
            rev.pre_exponential_si = units.prefactor_to_si(raw.prefactor, reverse_order);
        }
        if let Some((form, key_at)) = pressure_form {
            if !self.apply_pressure_form(&mut step, form, units, forward_order, key_at) {
                return None;
            }
        }
        let converted = [Some(step.forward), step.reverse];
        for arrhenius in converted.iter().flatten() {
            if positive_finite_problem(arrhenius.pre_exponential_si).is_some()
                || !arrhenius.activation_energy_j_per_mol.is_finite()
            {
                self.r.error(
                    at,
                    "rate parameters are out of range once converted to SI units",
                    Some("check the prefactor's magnitude and the step's units".to_string()),
                );
                return None;
            }
        }
        self.check_balance(&step, equation_at);
        Some(step)
    }
    /// A reversible step without `reverse` takes kr = kf / Kc from thermochemistry, which
    /// every species of its equation must have.
    fn check_thermo_reverse(
        &mut self,
        reactants: &[StoichTerm],
        products: &[StoichTerm],
        at: usize,
    ) {
        let mut lacking: Vec<&str> = Vec::new();
        for term in reactants.iter().chain(products) {
            if self.thermo_file_failed || self.thermo_reported.contains(&term.species) {
                // Its thermochemistry was given but is invalid (reported there).
                return;
            }
            let species = &self.species[term.species];
            if species.thermo.is_none() && !lacking.contains(&species.name.as_str()) {
                lacking.push(&species.name);
            }
        }
        if lacking.is_empty() {
            return;
        }
        let names: Vec<String> = lacking.iter().map(|n| format!("`{n}`")).collect();
        let message = format!(
            "reversible step needs reverse rate parameters or thermochemistry of all its species; no thermochemistry for {}",
            names.join(", ")
        );
        self.r.error(
            at,
            message,
            Some("add `reverse = { prefactor = ... }`, thermochemistry for those species (`thermo_files` or `[species.thermo]`), or use `->` for a one-way step".to_string()),
        );
    }

    /// Reads `thermo_files = ["path", ...]` and loads every file; problems inside a file are
    /// kept with that file's own locations.
    fn read_thermo_files(&mut self, value: &Value<'_>) {
        let DeValue::Array(items) = value.get_ref() else {
            self.r
                .wrong_type("thermo_files", value, "an array of file paths (strings)");
            self.thermo_file_failed = true;
            return;
        };
        let mut seen: HashMap<String, usize> = HashMap::new();
        for item in items.iter() {
            let at = item.span().start;
            let Some(written) = self.r.string("thermo_files", item) else {
                self.thermo_file_failed = true;
                continue;
            };
            if let Some(&first) = seen.get(written) {
                let line = self.r.location(first).line;
                self.r.error(
                    at,
                    format!("thermo file `{written}` is listed twice (first at line {line})"),
                    None,
                );
                continue;
            }
            seen.insert(written.to_string(), at);
            let relative = Path::new(written);
            let path: PathBuf = if relative.is_absolute() {
                relative.to_path_buf()
            } else {
                match self.base_dir {
                    Some(dir) => dir.join(relative),
                    None => {
                        self.r.error(
                            at,
                            format!("thermo file `{written}` is a relative path, but this mechanism text has no folder to resolve it from"),
                            Some("load the mechanism from its file (relative paths start from its folder) or give an absolute path".to_string()),
                        );
                        self.thermo_file_failed = true;
                        continue;
                    }
                }
            };
            let loaded = match crate::thermo_file::load_thermo(&path) {
                Ok(file) => file,
                Err(LoadError::Io { reason, .. }) => {
                    self.r.error(
                        at,
                        format!(
                            "cannot read thermo file `{written}` (looked for {}): {reason}",
                            path.display()
                        ),
                        Some(
                            "paths in `thermo_files` are relative to the mechanism file's folder"
                                .to_string(),
                        ),
                    );
                    self.thermo_file_failed = true;
                    continue;
                }
                Err(LoadError::Invalid { diagnostics }) => {
                    self.r.error(
                        at,
                        format!(
                            "thermo file `{}` has {} error(s) (listed with their own locations)",
                            path.display(),
                            diagnostics.error_count()
                        ),
                        None,
                    );
                    self.external.extend(diagnostics.0);
                    self.thermo_file_failed = true;
                    continue;
                }
            };
            let index = self.thermo_file_labels.len();
            self.thermo_file_labels.push(written.to_string());
            self.thermo_file_paths.push(path.clone());
            self.thermo_file_offsets.push(at);
            for entry in loaded.entries {
                self.thermo_sources
                    .entry(entry.name)
                    .or_default()
                    .push(ThermoSource {
                        file: index,
                        line: entry.location.line,
                        polynomial: entry.polynomial,
                    });
            }
        }
    }

    /// Reads an inline `[species.thermo]` table. The outer `Option` is "given"; the inner
    /// one is `None` when the table has problems (reported).
    fn read_inline_thermo(&mut self, value: &Value<'_>, name: Option<&str>) -> Option<Nasa7> {
        let table = self.r.table("thermo", value)?;
        self.r.check_keys(
            table,
            crate::thermo_file::POLYNOMIAL_KEYS,
            "the species' `thermo`",
        );
        crate::thermo_file::read_polynomial(
            &mut self.r,
            table,
            value.span().start,
            Some(name.unwrap_or("?")),
            "the species' `thermo`",
        )
    }

    /// The polynomial for species `name` from the thermo files; a species found in two
    /// files is an error (reported at the later file's entry in `thermo_files`).
    fn thermo_from_files(&mut self, name: &str, name_at: usize) -> Option<Nasa7> {
        let sources = self.thermo_sources.get(name)?;
        let first = sources.first()?;
        if let Some(second) = sources.get(1) {
            let message = format!(
                "species `{name}` (line {}) has thermochemistry in two thermo files: `{}` (line {}) and `{}` (line {})",
                self.r.location(name_at).line,
                self.thermo_file_labels[first.file],
                first.line,
                self.thermo_file_labels[second.file],
                second.line
            );
            let at = self.thermo_file_offsets[second.file];
            self.r.error(
                at,
                message,
                Some("remove one of the entries, or give the species an inline `thermo` table (it wins over files)".to_string()),
            );
            self.thermo_reported.push(self.species.len());
            return None;
        }
        Some(first.polynomial)
    }

    /// Element balance of a step whose species all have compositions. Steps with an empty
    /// side (sources and sinks) exchange matter with the surroundings and are not checked.
    fn check_balance(&mut self, step: &Step, at: usize) {
        if step.reactants.is_empty() || step.products.is_empty() {
            return;
        }
        let mut totals: [BTreeMap<usize, f64>; 2] = [BTreeMap::new(), BTreeMap::new()];
        for (side, terms) in [&step.reactants, &step.products].into_iter().enumerate() {
            for term in terms {
                let Some(composition) = &self.species[term.species].composition else {
                    return;
                };
                for &(element, count) in composition {
                    *totals[side].entry(element).or_insert(0.0) += term.coefficient * count;
                }
            }
        }
        let mut all: Vec<usize> = totals[0].keys().chain(totals[1].keys()).copied().collect();
        all.sort_unstable();
        all.dedup();
        let unbalanced = all.iter().any(|e| {
            let a = totals[0].get(e).copied().unwrap_or(0.0);
            let b = totals[1].get(e).copied().unwrap_or(0.0);
            (a - b).abs() > 1e-9 * a.abs().max(b.abs()).max(1.0)
        });
        if unbalanced {
            let show = |side: &BTreeMap<usize, f64>| {
                let parts: Vec<String> = all
                    .iter()
                    .map(|e| {
                        format!(
                            "{}: {}",
                            self.elements[*e].symbol,
                            show_number(side.get(e).copied().unwrap_or(0.0))
                        )
                    })
                    .collect();
                format!("{{{}}}", parts.join(", "))
            };
            let message = format!(
                "step `{}` is not balanced: reactants {} vs products {}",
                step.equation,
                show(&totals[0]),
                show(&totals[1])
            );
            self.r.error(at, message, None);
        }
    }

    fn check_duplicates(&mut self, steps: &[Step], offsets: &[usize]) {
        let mut first_of: HashMap<StepKey, usize> = HashMap::with_capacity(steps.len());
        for (j, step) in steps.iter().enumerate() {
            let key = StepKey::of(step);
            match first_of.get(&key) {
                None => {
                    first_of.insert(key, j);
                }
                Some(&first) => {
                    let both = steps[first].allow_duplicate && step.allow_duplicate;
                    if !both {
                        let line = steps[first].location.map(|l| l.line).unwrap_or(0);
                        self.r.error(
                            offsets[j],
                            format!(
                                "step `{}` has the same reactants, products and collision partner as the step at line {line}",
                                step.equation
                            ),
                            Some("if both are intended (their rates add), mark both with `allow_duplicate = true`".to_string()),
                        );
                    }
                }
            }
        }
    }

    fn warn_unused(&mut self) {
        for (i, usage) in self.usage.iter().enumerate() {
            // With a mixture third body of nonzero default efficiency, every species not
            // listed otherwise collides, so it takes part in the rates.
            if *usage == Usage::Used || (*usage == Usage::Unused && self.default_collider) {
                continue;
            }
            let species = &self.species[i];
            let suffix = if *usage == Usage::OnlyEfficiency {
                " (it appears only with zero third-body efficiency)"
            } else {
                ""
            };
            self.r.warning(
                self.species_offsets[i],
                format!(
                    "species `{}` is declared but never used in any step{suffix}",
                    species.name
                ),
                None,
            );
        }
    }
}

/// Why `name` cannot be a species name, if it cannot.
/// The forward orders of a step with `reaction_orders`: every reactant's order (its
/// coefficient unless `listed`), then the listed species that are not reactants. `listed`
/// holds (species, order, byte offset).
fn forward_orders(reactants: &[StoichTerm], listed: &[(usize, f64, usize)]) -> Vec<(usize, f64)> {
    let mut list: Vec<(usize, f64)> = reactants
        .iter()
        .map(|t| {
            let order = listed
                .iter()
                .find(|(s, _, _)| *s == t.species)
                .map(|(_, o, _)| *o)
                .unwrap_or(t.coefficient);
            (t.species, order)
        })
        .collect();
    for &(s, o, _) in listed {
        if !reactants.iter().any(|t| t.species == s) {
            list.push((s, o));
        }
    }
    list
}

fn bad_species_name(name: &str) -> Option<&'static str> {
    if name.is_empty() {
        Some("is empty")
    } else if name.chars().any(char::is_whitespace) {
        Some("contains whitespace (names are written without spaces in equations)")
    } else if matches!(name, "+" | "->" | "→" | "<=>" | "⇌") {
        Some("is a symbol of the equation grammar")
    } else if name.starts_with(|c: char| c.is_ascii_digit() || c == '.')
        && name.parse::<f64>().is_ok()
    {
        Some("is a number (it would read as a coefficient)")
    } else {
        None
    }
}

#[path = "mechanism_file_pressure.rs"]
mod pressure;

#[cfg(test)]
#[path = "mechanism_file_tests.rs"]
mod tests;
