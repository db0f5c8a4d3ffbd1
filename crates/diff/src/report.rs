//! The diff for people ([`diff_report`], a terminal report) and for machines ([`diff_toml`],
//! a TOML document whose numbers read back as the same `f64`).

use crate::compare::close;
use crate::edit::{Collider, Edit, MechanismDiff, RateRatio, StepAspect};
use stoik_mechanism::{Arrhenius, Broadening, PressureDependence};
use stoik_thermo::{toml_float, toml_string};

/// Version of the TOML form written by [`diff_toml`] (`stoik_diff = 1`).
pub const DIFF_FORMAT_VERSION: i64 = 1;

/// `value` in 7 significant digits for people: plain from 1e-3 up to 1e6, with an exponent
/// outside, trailing zeros left out (`2`, `0.5`, `1.234568e-7`).
pub(crate) fn short(value: f64) -> String {
    if !value.is_finite() || value == 0.0 {
        return format!("{value}");
    }
    let rounded = format!("{value:.6e}");
    let Some((mantissa, exponent)) = rounded.split_once('e') else {
        return rounded;
    };
    let exponent: i32 = exponent.parse().unwrap_or(0);
    if (-3..6).contains(&exponent) {
        let v: f64 = rounded.parse().unwrap_or(value);
        format!("{v}")
    } else {
        let mantissa = if mantissa.contains('.') {
            mantissa.trim_end_matches('0').trim_end_matches('.')
        } else {
            mantissa
        };
        format!("{mantissa}e{exponent}")
    }
}

fn collider_text(c: &Collider) -> String {
    match c {
        Collider::None => "none".to_string(),
        Collider::Mixture => "mixture (efficiencies)".to_string(),
        Collider::Species(name) => format!("species {name}"),
    }
}

fn pressure_text(p: &Option<PressureDependence>) -> String {
    match p {
        None => "none".to_string(),
        Some(PressureDependence::Falloff {
            broadening,
            chemically_activated,
            ..
        }) => {
            let form = match broadening {
                Broadening::Lindemann => "Lindemann",
                Broadening::Troe { .. } => "Troe",
                Broadening::Sri { .. } => "SRI",
                Broadening::FixedCenter { .. } => "fixed centre",
            };
            if *chemically_activated {
                format!("chemically activated ({form})")
            } else {
                format!("falloff ({form})")
            }
        }
        Some(PressureDependence::Table { points }) => {
            format!("pressure table ({} points)", points.len())
        }
    }
}

/// `A 1 -> 2, n 0.5, Ea 1000 J/mol`: each parameter once when equal, `old -> new` otherwise.
fn arrhenius_change(old: &Arrhenius, new: &Arrhenius, tol: f64) -> String {
    let part = |name: &str, a: f64, b: f64, unit: &str| {
        if close(a, b, tol) {
            format!("{name} {}{unit}", short(a))
        } else {
            format!("{name} {} -> {}{unit}", short(a), short(b))
        }
    };
    format!(
        "{}, {}, {}",
        part("A", old.pre_exponential_si, new.pre_exponential_si, " (SI)"),
        part("n", old.temperature_exponent, new.temperature_exponent, ""),
        part(
            "Ea",
            old.activation_energy_j_per_mol,
            new.activation_energy_j_per_mol,
            " J/mol"
        )
    )
}

fn arrhenius_text(a: &Option<Arrhenius>) -> String {
    match a {
        None => "kf/Kc from thermochemistry, or none".to_string(),
        Some(a) => format!(
            "A {} (SI), n {}, Ea {} J/mol",
            short(a.pre_exponential_si),
            short(a.temperature_exponent),
            short(a.activation_energy_j_per_mol)
        ),
    }
}

/// One line per aspect of a changed step, for people.
fn aspect_lines(aspect: &StepAspect, tol: f64) -> Vec<String> {
    match aspect {
        StepAspect::Forward { old, new } => {
            vec![format!("forward: {}", arrhenius_change(old, new, tol))]
        }
        StepAspect::Reverse { old, new } => match (old, new) {
            (Some(o), Some(n)) => vec![format!("reverse: {}", arrhenius_change(o, n, tol))],
            _ => vec![format!(
                "reverse: {} -> {}",
                arrhenius_text(old),
                arrhenius_text(new)
            )],
        },
        StepAspect::Reversibility { old, new } => {
            let arrow = |r: &bool| if *r { "<=>" } else { "->" };
            vec![format!("direction: {} -> {}", arrow(old), arrow(new))]
        }
        StepAspect::Orientation => vec!["written the other way round (sides swapped)".to_string()],
        StepAspect::ThirdBody { old, new } => vec![format!(
            "collision partner: {} -> {}",
            collider_text(old),
            collider_text(new)
        )],
        StepAspect::Efficiencies(changes) => changes
            .iter()
            .map(|c| {
                format!(
                    "efficiency {}: {} -> {}",
                    c.species.as_deref().unwrap_or("(default)"),
                    short(c.old),
                    short(c.new)
                )
            })
            .collect(),
        StepAspect::PressureDependence { old, new } => {
            let (o, n) = (pressure_text(old), pressure_text(new));
            if o == n {
                vec![format!("pressure dependence: {o}, parameters changed")]
            } else {
                vec![format!("pressure dependence: {o} -> {n}")]
            }
        }
        StepAspect::ReactionOrders => vec!["reaction orders changed".to_string()],
    }
}

/// The ratio table of a changed step: one row per direction (and pressure), one column per
/// temperature.
fn ratio_lines(ratios: &[RateRatio], temperatures_k: &[f64]) -> Vec<String> {
    let mut rows: Vec<(String, Vec<String>)> = Vec::new();
    for r in ratios {
        let label = |dir: &str| match r.pressure_pa {
            Some(p) => format!("{dir} at {} Pa", short(p)),
            None => dir.to_string(),
        };
        for (dir, value) in [("forward", Some(r.forward)), ("reverse", r.reverse)] {
            let Some(value) = value else { continue };
            let key = label(dir);
            match rows.iter_mut().find(|(k, _)| *k == key) {
                Some((_, cells)) => cells.push(short(value)),
                None => rows.push((key, vec![short(value)])),
            }
        }
    }
    // Forward rows first, then reverse rows, each in pressure order.
    rows.sort_by_key(|(k, _)| !k.starts_with("forward"));
    let width = rows.iter().map(|(k, _)| k.len()).max().unwrap_or(0).max(11);
    let mut header = format!("{:<width$}", "k_new/k_old");
    for t in temperatures_k {
        header.push_str(&format!("  {:>13}", format!("{} K", short(*t))));
    }
    let mut out = vec![header];
    for (k, cells) in rows {
        let mut line = format!("{k:<width$}");
        for c in cells {
            line.push_str(&format!("  {c:>13}"));
        }
        out.push(line);
    }
    out
}

/// The diff as a terminal report for people: the two sources with their sizes, the species
/// edits (`+` added, `-` removed, `~` changed, with H(298.15 K) and G(1000 K) in kJ/mol), the
/// step edits (each changed step with what differs and its k_new/k_old table) and a last line,
/// `no kinetic change` or the number of edits. Numbers in 7 significant digits.
pub fn diff_report(diff: &MechanismDiff, old_label: &str, new_label: &str) -> String {
    let tol = diff.relative_tolerance;
    let mut out = String::new();
    let mut line = |indent: usize, text: &str| {
        out.push_str(&" ".repeat(indent));
        out.push_str(text);
        out.push('\n');
    };
    line(
        0,
        &format!(
            "old: {old_label} ({} species, {} steps)",
            diff.species_counts.0, diff.step_counts.0
        ),
    );
    line(
        0,
        &format!(
            "new: {new_label} ({} species, {} steps)",
            diff.species_counts.1, diff.step_counts.1
        ),
    );
    let kj = |v: Option<f64>| v.map_or("none".to_string(), |v| short(v / 1000.0));
    let species: Vec<&Edit> = diff
        .edits
        .iter()
        .filter(|e| {
            matches!(
                e,
                Edit::SpeciesAdded { .. }
                    | Edit::SpeciesRemoved { .. }
                    | Edit::SpeciesComposition { .. }
                    | Edit::SpeciesThermo { .. }
            )
        })
        .collect();
    if !species.is_empty() {
        line(0, "");
        line(0, "species");
    }
    for e in species {
        match e {
            Edit::SpeciesAdded { name, new_index } => {
                line(2, &format!("+ {name}  (new #{})", new_index + 1))
            }
            Edit::SpeciesRemoved { name, old_index } => {
                line(2, &format!("- {name}  (old #{})", old_index + 1))
            }
            Edit::SpeciesComposition { name, old, new, .. } => {
                let text = |c: &Option<Vec<(String, f64)>>| match c {
                    None => "abstract".to_string(),
                    Some(atoms) => format!(
                        "{{{}}}",
                        atoms
                            .iter()
                            .map(|(s, n)| format!("{s}: {}", short(*n)))
                            .collect::<Vec<_>>()
                            .join(", ")
                    ),
                };
                line(
                    2,
                    &format!("~ {name}  composition {} -> {}", text(old), text(new)),
                )
            }
            Edit::SpeciesThermo {
                name,
                change,
                reverse_rates_affected,
                ..
            } => {
                line(2, &format!("~ {name}  thermochemistry"));
                let delta = |d: Option<f64>| {
                    d.map_or(String::new(), |d| {
                        format!(" (change {})", short(d / 1000.0))
                    })
                };
                line(
                    6,
                    &format!(
                        "H(298.15 K): {} -> {} kJ/mol{}",
                        kj(change.old_h298_j_per_mol),
                        kj(change.new_h298_j_per_mol),
                        delta(change.delta_h298_j_per_mol())
                    ),
                );
                line(
                    6,
                    &format!(
                        "G(1000 K):   {} -> {} kJ/mol{}",
                        kj(change.old_g1000_j_per_mol),
                        kj(change.new_g1000_j_per_mol),
                        delta(change.delta_g1000_j_per_mol())
                    ),
                );
                if !reverse_rates_affected.is_empty() {
                    line(
                        6,
                        &format!(
                            "moves the reverse rate (kf/Kc) of {} step(s) present in both: new #{}",
                            reverse_rates_affected.len(),
                            reverse_rates_affected
                                .iter()
                                .map(|j| (j + 1).to_string())
                                .collect::<Vec<_>>()
                                .join(", #")
                        ),
                    );
                }
            }
            _ => {}
        }
    }
    let steps: Vec<&Edit> = diff
        .edits
        .iter()
        .filter(|e| {
            matches!(
                e,
                Edit::StepAdded { .. } | Edit::StepRemoved { .. } | Edit::StepChanged { .. }
            )
        })
        .collect();
    if !steps.is_empty() {
        line(0, "");
        line(0, "steps");
    }
    for e in steps {
        match e {
            Edit::StepAdded {
                equation,
                new_index,
            } => line(2, &format!("+ {equation}  (new #{})", new_index + 1)),
            Edit::StepRemoved {
                equation,
                old_index,
            } => line(2, &format!("- {equation}  (old #{})", old_index + 1)),
            Edit::StepChanged {
                equation,
                old_index,
                new_index,
                aspects,
                ratios,
            } => {
                line(
                    2,
                    &format!(
                        "~ {equation}  (old #{}, new #{})",
                        old_index + 1,
                        new_index + 1
                    ),
                );
                for a in aspects {
                    for l in aspect_lines(a, tol) {
                        line(6, &l);
                    }
                }
                for l in ratio_lines(ratios, &diff.temperatures_k) {
                    line(6, &l);
                }
            }
            _ => {}
        }
    }
    line(0, "");
    let matched = diff.unchanged_steps.len()
        + diff
            .edits
            .iter()
            .filter(|e| matches!(e, Edit::StepChanged { .. }))
            .count();
    if diff.has_kinetic_change() {
        line(
            0,
            &format!(
                "{} kinetic change(s); {matched} step(s) matched, {} unchanged",
                diff.edits.len(),
                diff.unchanged_steps.len()
            ),
        );
    } else {
        line(
            0,
            &format!("no kinetic change ({matched} step(s) matched, all unchanged)"),
        );
    }
    out
}

/// Writes TOML values, collecting a warning for every number that is not finite.
struct TomlWriter {
    text: String,
    warnings: Vec<String>,
    table: String,
}

impl TomlWriter {
    fn number(&mut self, key: &str, value: f64) -> String {
        match toml_float(value) {
            Some(s) => s,
            None => {
                self.warnings.push(format!(
                    "{}{key} is {value}: written as the string \"{value}\"",
                    if self.table.is_empty() {
                        String::new()
                    } else {
                        format!("{}.", self.table)
                    }
                ));
                toml_string(&value.to_string())
            }
        }
    }

    fn key_number(&mut self, key: &str, value: f64) {
        let v = self.number(key, value);
        self.text.push_str(&format!("{key} = {v}\n"));
    }

    fn key_string(&mut self, key: &str, value: &str) {
        self.text
            .push_str(&format!("{key} = {}\n", toml_string(value)));
    }

    fn key_raw(&mut self, key: &str, value: impl std::fmt::Display) {
        self.text.push_str(&format!("{key} = {value}\n"));
    }

    fn array(&mut self, key: &str, values: &[f64]) {
        let items: Vec<String> = values.iter().map(|v| self.number(key, *v)).collect();
        self.text
            .push_str(&format!("{key} = [{}]\n", items.join(", ")));
    }

    fn arrhenius(&mut self, key: &str, a: &Arrhenius) {
        let p = self.number(key, a.pre_exponential_si);
        let n = self.number(key, a.temperature_exponent);
        let e = self.number(key, a.activation_energy_j_per_mol);
        self.text.push_str(&format!(
            "{key} = {{ pre_exponential_si = {p}, temperature_exponent = {n}, activation_energy_j_per_mol = {e} }}\n"
        ));
    }

    fn header(&mut self, name: &str) {
        self.table = name.to_string();
        self.text.push_str(&format!("\n[[{name}]]\n"));
    }
}

fn aspect_name(a: &StepAspect) -> &'static str {
    match a {
        StepAspect::Forward { .. } => "forward",
        StepAspect::Reverse { .. } => "reverse",
        StepAspect::Reversibility { .. } => "reversibility",
        StepAspect::Orientation => "orientation",
        StepAspect::ThirdBody { .. } => "third_body",
        StepAspect::Efficiencies(_) => "efficiencies",
        StepAspect::PressureDependence { .. } => "pressure_dependence",
        StepAspect::ReactionOrders => "reaction_orders",
    }
}

/// The diff as TOML for machines (`stoik_diff = 1`; described in `docs/diff.md`), with every
/// number in the shortest form that reads back as the same `f64`
/// ([`stoik_thermo::toml_float`]). Indices are 0-based, as in [`Edit`].
///
/// Returns the text and one warning per value that is not finite (a ratio whose old rate
/// constant underflows to 0, say); such a value is written as a string (`"inf"`, `"NaN"`),
/// never as a bare TOML `inf` or `nan`.
pub fn diff_toml(diff: &MechanismDiff, old_label: &str, new_label: &str) -> (String, Vec<String>) {
    let mut w = TomlWriter {
        text: String::new(),
        warnings: Vec::new(),
        table: String::new(),
    };
    w.key_raw("stoik_diff", DIFF_FORMAT_VERSION);
    w.key_string("old", old_label);
    w.key_string("new", new_label);
    w.key_raw("kinetic_change", diff.has_kinetic_change());
    w.key_number("relative_tolerance", diff.relative_tolerance);
    w.array("temperatures_k", &diff.temperatures_k);
    w.array("pressures_pa", &diff.pressures_pa);
    w.key_raw("old_species", diff.species_counts.0);
    w.key_raw("new_species", diff.species_counts.1);
    w.key_raw("old_steps", diff.step_counts.0);
    w.key_raw("new_steps", diff.step_counts.1);
    let pairs: Vec<String> = diff
        .unchanged_steps
        .iter()
        .map(|(i, j)| format!("[{i}, {j}]"))
        .collect();
    w.key_raw("unchanged_steps", format!("[{}]", pairs.join(", ")));
    for e in &diff.edits {
        match e {
            Edit::SpeciesAdded { name, new_index } => {
                w.header("species");
                w.key_string("edit", "added");
                w.key_string("name", name);
                w.key_raw("new_index", new_index);
            }
            Edit::SpeciesRemoved { name, old_index } => {
                w.header("species");
                w.key_string("edit", "removed");
                w.key_string("name", name);
                w.key_raw("old_index", old_index);
            }
            Edit::SpeciesComposition {
                name,
                old_index,
                new_index,
                old,
                new,
            } => {
                w.header("species");
                w.key_string("edit", "composition");
                w.key_string("name", name);
                w.key_raw("old_index", old_index);
                w.key_raw("new_index", new_index);
                for (key, atoms) in [("old_atoms", old), ("new_atoms", new)] {
                    if let Some(atoms) = atoms {
                        let items: Vec<String> = atoms
                            .iter()
                            .map(|(s, n)| format!("{} = {}", toml_string(s), w.number(key, *n)))
                            .collect();
                        w.key_raw(key, format!("{{ {} }}", items.join(", ")));
                    }
                }
            }
            Edit::SpeciesThermo {
                name,
                old_index,
                new_index,
                change,
                reverse_rates_affected,
            } => {
                w.header("species");
                w.key_string("edit", "thermo");
                w.key_string("name", name);
                w.key_raw("old_index", old_index);
                w.key_raw("new_index", new_index);
                for (key, value) in [
                    ("old_h298_j_per_mol", change.old_h298_j_per_mol),
                    ("new_h298_j_per_mol", change.new_h298_j_per_mol),
                    ("delta_h298_j_per_mol", change.delta_h298_j_per_mol()),
                    ("old_g1000_j_per_mol", change.old_g1000_j_per_mol),
                    ("new_g1000_j_per_mol", change.new_g1000_j_per_mol),
                    ("delta_g1000_j_per_mol", change.delta_g1000_j_per_mol()),
                ] {
                    if let Some(v) = value {
                        w.key_number(key, v);
                    }
                }
                let items: Vec<String> = reverse_rates_affected
                    .iter()
                    .map(|j| j.to_string())
                    .collect();
                w.key_raw("reverse_rates_affected", format!("[{}]", items.join(", ")));
            }
            Edit::StepAdded {
                equation,
                new_index,
            } => {
                w.header("step");
                w.key_string("edit", "added");
                w.key_string("equation", equation);
                w.key_raw("new_index", new_index);
            }
            Edit::StepRemoved {
                equation,
                old_index,
            } => {
                w.header("step");
                w.key_string("edit", "removed");
                w.key_string("equation", equation);
                w.key_raw("old_index", old_index);
            }
            Edit::StepChanged {
                equation,
                old_index,
                new_index,
                aspects,
                ratios,
            } => {
                w.header("step");
                w.key_string("edit", "changed");
                w.key_string("equation", equation);
                w.key_raw("old_index", old_index);
                w.key_raw("new_index", new_index);
                let names: Vec<String> = aspects
                    .iter()
                    .map(|a| toml_string(aspect_name(a)))
                    .collect();
                w.key_raw("aspects", format!("[{}]", names.join(", ")));
                for a in aspects {
                    match a {
                        StepAspect::Forward { old, new } => {
                            w.arrhenius("forward_old", old);
                            w.arrhenius("forward_new", new);
                        }
                        StepAspect::Reverse { old, new } => {
                            if let Some(o) = old {
                                w.arrhenius("reverse_old", o);
                            }
                            if let Some(n) = new {
                                w.arrhenius("reverse_new", n);
                            }
                        }
                        StepAspect::Reversibility { old, new } => {
                            w.key_raw("reversible_old", old);
                            w.key_raw("reversible_new", new);
                        }
                        StepAspect::ThirdBody { old, new } => {
                            w.key_string("third_body_old", &collider_text(old));
                            w.key_string("third_body_new", &collider_text(new));
                        }
                        _ => {}
                    }
                }
                for a in aspects {
                    if let StepAspect::Efficiencies(changes) = a {
                        for c in changes {
                            w.header("step.efficiency");
                            match &c.species {
                                Some(s) => w.key_string("species", s),
                                None => w.key_raw("default", true),
                            }
                            w.key_number("old", c.old);
                            w.key_number("new", c.new);
                        }
                    }
                }
                for r in ratios {
                    w.header("step.ratio");
                    w.key_number("temperature_k", r.temperature_k);
                    if let Some(p) = r.pressure_pa {
                        w.key_number("pressure_pa", p);
                    }
                    w.key_number("forward", r.forward);
                    if let Some(v) = r.reverse {
                        w.key_number("reverse", v);
                    }
                }
            }
        }
    }
    (w.text, w.warnings)
}
