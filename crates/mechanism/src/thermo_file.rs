//! The thermo file (TOML, `stoik_thermo = 1`): NASA 7-coefficient polynomials per species,
//! shareable between mechanisms. Every problem of a file is reported at once, located.
//!
//! ```toml
//! stoik_thermo = 1
//! [[species]]
//! name = "H2O"
//! temperature_ranges_k = [200.0, 1000.0, 6000.0]   # low, common (mid), high
//! coefficients_low = [a1, a2, a3, a4, a5, a6, a7]  # below the common temperature
//! coefficients_high = [a1, a2, a3, a4, a5, a6, a7] # from the common temperature up
//! ```
//! The coefficients follow McBride, Gordon & Reno (1993), NASA TM-4513. cp, H and S must be
//! continuous at the common temperature; a jump above [`CONTINUITY_TOLERANCE`] (relative) is
//! an error that reports its size.

use crate::toml_walk::{parse_document, Report, Value};
use crate::{LoadError, SourceLocation};
use std::collections::HashMap;
use std::path::Path;
use stoik_thermo::Nasa7;
use toml::de::{DeTable, DeValue};

/// The thermo format version this crate reads (`stoik_thermo = 1`).
pub const THERMO_FORMAT_VERSION: i64 = 1;

/// Largest accepted relative jump of cp/R, H/(RT) or S/R at the common temperature.
pub const CONTINUITY_TOLERANCE: f64 = 1e-4;

const TOP_KEYS: &[&str] = &["stoik_thermo", "title", "description", "species"];
/// Keys of a polynomial table (a thermo file's `[[species]]` without `name` and `note`;
/// also a mechanism's inline `[species.thermo]`).
pub(crate) const POLYNOMIAL_KEYS: &[&str] = &[
    "temperature_ranges_k",
    "coefficients_low",
    "coefficients_high",
];
const SPECIES_KEYS: &[&str] = &[
    "name",
    "temperature_ranges_k",
    "coefficients_low",
    "coefficients_high",
    "note",
];

/// One species' polynomials as read from a thermo file.
#[derive(Debug, Clone, PartialEq)]
pub struct ThermoEntry {
    /// Species name as written.
    pub name: String,
    /// The two-range polynomial.
    pub polynomial: Nasa7,
    /// Where the entry starts in the file.
    pub location: SourceLocation,
}

/// A loaded thermo file.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ThermoFile {
    /// Entries in file order; names are unique.
    pub entries: Vec<ThermoEntry>,
}

impl ThermoFile {
    /// The entry for species `name`, if any.
    pub fn get(&self, name: &str) -> Option<&ThermoEntry> {
        self.entries.iter().find(|e| e.name == name)
    }
}

/// Reads and loads the thermo file at `path`.
pub fn load_thermo(path: &Path) -> Result<ThermoFile, LoadError> {
    let label = path.display().to_string();
    let text = crate::read_input_text(path).map_err(|e| e.into_load_error(&label))?;
    parse_thermo(&text, &label)
}

/// Parses thermo-file text; `file_label` names the file in diagnostics.
pub fn parse_thermo(text: &str, file_label: &str) -> Result<ThermoFile, LoadError> {
    let mut r = Report::new(text, file_label);
    let Some(doc) = parse_document(text, &mut r) else {
        return Err(r.into_error());
    };
    let top = doc.get_ref();
    r.check_keys(top, TOP_KEYS, "the thermo file");
    match top.get("stoik_thermo") {
        None => r.error(
            0,
            "missing format version `stoik_thermo`",
            Some("the first line of a version-1 thermo file is `stoik_thermo = 1`".into()),
        ),
        Some(v) => match r.number("stoik_thermo", v) {
            Some(x) if x == THERMO_FORMAT_VERSION as f64 => {}
            Some(x) => r.error(
                v.span().start,
                format!("unsupported thermo format version {x}; this stoik reads version {THERMO_FORMAT_VERSION}"),
                None,
            ),
            None => {}
        },
    }
    let mut file = ThermoFile::default();
    let mut seen: HashMap<String, usize> = HashMap::new();
    if let Some(species) = top.get("species") {
        match species.get_ref() {
            DeValue::Array(items) => {
                for item in items.iter() {
                    if let Some(entry) = read_entry(&mut r, item) {
                        if let Some(line) = seen.get(&entry.name) {
                            r.error(
                                item.span().start,
                                format!(
                                    "thermo for species `{}` is given twice (first at line {line})",
                                    entry.name
                                ),
                                None,
                            );
                        } else {
                            seen.insert(entry.name.clone(), entry.location.line);
                            file.entries.push(entry);
                        }
                    }
                }
            }
            _ => r.wrong_type("species", species, "an array of tables ([[species]])"),
        }
    }
    let diagnostics = r.finish();
    if diagnostics.has_errors() {
        return Err(LoadError::Invalid { diagnostics });
    }
    Ok(file)
}

/// Reads an array of exactly `N` finite numbers.
fn numbers<const N: usize>(r: &mut Report<'_>, key: &str, value: &Value<'_>) -> Option<[f64; N]> {
    let DeValue::Array(items) = value.get_ref() else {
        r.wrong_type(key, value, &format!("an array of {N} numbers"));
        return None;
    };
    if items.len() != N {
        r.error(
            value.span().start,
            format!("`{key}` must hold {N} numbers, found {}", items.len()),
            None,
        );
        return None;
    }
    let mut out = [0.0; N];
    let mut ok = true;
    for (slot, item) in out.iter_mut().zip(items.iter()) {
        match r.number(key, item) {
            Some(x) if x.is_finite() => *slot = x,
            Some(x) => {
                r.error(
                    item.span().start,
                    format!("`{key}` holds {x}; every coefficient must be finite"),
                    None,
                );
                ok = false;
            }
            None => ok = false,
        }
    }
    ok.then_some(out)
}

fn read_entry(r: &mut Report<'_>, item: &Value<'_>) -> Option<ThermoEntry> {
    let table = r.table("species", item)?;
    r.check_keys(table, SPECIES_KEYS, "a thermo [[species]] table");
    let at = item.span().start;
    let name = match table.get("name") {
        Some(v) => r.string("name", v).map(str::to_string),
        None => {
            r.error(at, "thermo [[species]] has no `name`", None);
            None
        }
    };
    let polynomial = read_polynomial(r, table, at, name.as_deref(), "thermo [[species]]");
    let (name, polynomial) = (name?, polynomial?);
    Some(ThermoEntry {
        name,
        polynomial,
        location: r.location(at),
    })
}

/// Reads the three polynomial keys (`temperature_ranges_k`, `coefficients_low`,
/// `coefficients_high`) of `table` (which starts at byte `at`) and checks them, continuity
/// included; every problem is reported. `name` names the species in messages, `context` the
/// table (e.g. "thermo [[species]]"). Shared by thermo files and a mechanism's inline
/// `[species.thermo]` tables.
pub(crate) fn read_polynomial(
    r: &mut Report<'_>,
    table: &DeTable<'_>,
    at: usize,
    name: Option<&str>,
    context: &str,
) -> Option<Nasa7> {
    let mut get = |key: &str| {
        let value = table.get(key);
        if value.is_none() {
            r.error(at, format!("{context} has no `{key}`"), None);
        }
        value
    };
    let (ranges, low, high) = (
        get("temperature_ranges_k"),
        get("coefficients_low"),
        get("coefficients_high"),
    );
    let ranges = ranges.and_then(|v| numbers::<3>(r, "temperature_ranges_k", v));
    let low = low.and_then(|v| numbers::<7>(r, "coefficients_low", v));
    let high = high.and_then(|v| numbers::<7>(r, "coefficients_high", v));
    let (name, [t_low, t_mid, t_high], low, high) = (name?, ranges?, low?, high?);
    let polynomial = match Nasa7::new(t_low, t_mid, t_high, low, high) {
        Ok(p) => p,
        Err(e) => {
            r.error(
                at,
                format!("thermo for `{name}`: {e}"),
                Some("temperature_ranges_k must be increasing: [low, common, high] in K".into()),
            );
            return None;
        }
    };
    let (d_cp, d_h, d_s) = polynomial.continuity_jumps();
    let relative = |jump: f64, value: f64| jump.abs() / value.abs().max(1.0);
    let worst = relative(d_cp, polynomial.cp_over_r(t_mid))
        .max(relative(d_h, polynomial.h_over_rt(t_mid)))
        .max(relative(d_s, polynomial.s_over_r(t_mid)));
    if worst > CONTINUITY_TOLERANCE {
        r.error(
            at,
            format!(
                "thermo for `{name}` is not continuous at {t_mid} K: jumps cp/R {d_cp:.3e}, H/(RT) {d_h:.3e}, S/R {d_s:.3e} (low minus high)"
            ),
            Some(format!("refit the two ranges with a common value at {t_mid} K (stoik fit-thermo)")),
        );
        return None;
    }
    Some(polynomial)
}
