//! Canonical equations: the form in which steps of two mechanisms are matched.
//!
//! A side of a step is its list of (species name, coefficient), repeats added up
//! (`H + H` is `2 H`) and sorted by name, written `2 H + O2` (coefficient 1 left out).
//! A step's *shape* is the unordered pair of its two side texts, the smaller (in byte
//! order) first: `A + B <=> C`, `C <=> B + A` and `A + B -> C` have one shape. Steps of the
//! two mechanisms are matched only within one shape (see [`crate::diff_mechanisms`]).

use stoik_mechanism::{Mechanism, StoichTerm};

/// One side: (species name, coefficient), sorted by name, repeats added up.
pub(crate) type Side = Vec<(String, f64)>;

/// The side of `terms` in `mechanism`, by species name.
pub(crate) fn side(mechanism: &Mechanism, terms: &[StoichTerm]) -> Side {
    let mut out: Side = Vec::new();
    for t in terms {
        let name = species_name(mechanism, t.species);
        match out.iter_mut().find(|(n, _)| *n == name) {
            Some(entry) => entry.1 += t.coefficient,
            None => out.push((name, t.coefficient)),
        }
    }
    out.sort_by(|a, b| a.0.cmp(&b.0));
    out
}

/// The name of species `index`, or `#index` when out of range (a mechanism built by hand).
pub(crate) fn species_name(mechanism: &Mechanism, index: usize) -> String {
    mechanism
        .species
        .get(index)
        .map_or_else(|| format!("#{index}"), |s| s.name.clone())
}

/// `2 H + O2`: the side written with coefficients other than 1 before the names.
pub(crate) fn side_text(side: &Side) -> String {
    side.iter()
        .map(|(name, c)| {
            if *c == 1.0 {
                name.clone()
            } else {
                format!("{c} {name}")
            }
        })
        .collect::<Vec<_>>()
        .join(" + ")
}

/// The shape of a step: its two side texts, smaller first, and whether the reactants are the
/// first side.
#[derive(Debug, Clone, PartialEq, Eq)]
pub(crate) struct Shape {
    /// The smaller side text.
    pub first: String,
    /// The larger side text.
    pub second: String,
    /// The step's reactants are `first`.
    pub reactants_first: bool,
}

/// The shape of step `step` of `mechanism` (`None` when out of range).
pub(crate) fn shape(mechanism: &Mechanism, step: usize) -> Option<Shape> {
    let s = mechanism.steps.get(step)?;
    let reactants = side_text(&side(mechanism, &s.reactants));
    let products = side_text(&side(mechanism, &s.products));
    Some(if reactants <= products {
        Shape {
            first: reactants,
            second: products,
            reactants_first: true,
        }
    } else {
        Shape {
            first: products,
            second: reactants,
            reactants_first: false,
        }
    })
}

/// The canonical equation of step `step` of `mechanism`, or `None` when `step` is out of
/// range: each side's species sorted by name with repeats added up (`H + H` is `2 H`), white
/// space normalised, the arrow `->` for a one-way step (sides as written) and `<=>` for a
/// step both ways (the smaller side text first, so `B <=> A` reads `A <=> B`). The spelling
/// of the arrow (`->` or `→`, `<=>` or `⇌`) and the order of terms do not show. A collision
/// partner is not part of the equation.
pub fn canonical_equation(mechanism: &Mechanism, step: usize) -> Option<String> {
    let s = mechanism.steps.get(step)?;
    if s.reversible {
        let shape = shape(mechanism, step)?;
        Some(format!("{} <=> {}", shape.first, shape.second))
    } else {
        Some(format!(
            "{} -> {}",
            side_text(&side(mechanism, &s.reactants)),
            side_text(&side(mechanism, &s.products))
        ))
    }
}
