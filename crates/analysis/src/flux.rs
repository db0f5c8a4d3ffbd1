//! The flow of one element's atoms between species through each step.
//!
//! Transfer rule (the usual atom-count pairing of element-flux analysis): in step `j` with
//! net rate of progress `q_j >= 0`, reactant `a` (coefficient `nu_a`, `n_E(a)` atoms of
//! element E) passes atoms to product `b` (coefficient `nu_b`, `n_E(b)` atoms) at the rate
//!
//! ```text
//! F_j(a -> b) = q_j * (nu_a n_E(a)) * (nu_b n_E(b)) / A_j,    A_j = sum over products p of nu_p n_E(p)
//! ```
//!
//! in mol of atoms per m3 and s (per m3 over a window, where `q_j` is the window integral).
//! Each reactant's atoms are shared among the products in proportion to the atoms each
//! product receives. Summed over the products, the flow out of `a` through step `j` is
//! `q_j nu_a n_E(a)`: exactly the element it consumes there. A step with `q_j < 0` runs
//! backwards: the same rule with the sides exchanged and `|q_j|`. Sides are the gross
//! sides of the equation (a species on both sides passes atoms to itself; such self
//! transfers are kept by [`element_transfers`] and left out of the graph).
//!
//! The graph nets the two directions between a pair of species: its edge `a -> b` carries
//! `sum_j F_j(a -> b) - sum_j F_j(b -> a)` when that is positive.

use crate::{AnalysisError, Span, StepRates};
use stoik_mechanism::{Mechanism, StoichTerm};

/// An unordered pair of species, the lower index first.
type Pair = (usize, usize);

/// The default relative threshold of a flux graph: edges below 1 % of the largest are
/// left out.
pub const DEFAULT_THRESHOLD: f64 = 0.01;

/// Atoms of one element passed from one species to another by one step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ElementTransfer {
    /// Step index.
    pub step: usize,
    /// Species giving the atoms.
    pub from: usize,
    /// Species receiving them.
    pub to: usize,
    /// Rate, non-negative: mol of atoms/(m3 s) at an instant, mol of atoms/m3 over a window.
    pub rate: f64,
}

/// One edge of a flux graph: the net flow of the element from one species to another.
#[derive(Debug, Clone, PartialEq)]
pub struct FluxEdge {
    /// Species giving the atoms.
    pub from: usize,
    /// Species receiving them.
    pub to: usize,
    /// Net flow, positive: mol of atoms/(m3 s) at an instant, mol of atoms/m3 over a window.
    pub flux: f64,
    /// `flux` over the largest edge's flux, in (0, 1].
    pub relative: f64,
    /// The carrying steps with their signed part of `flux` (negative: that step carries
    /// atoms the other way), largest magnitude first.
    pub steps: Vec<(usize, f64)>,
}

/// The element-flux graph of one element at one span.
#[derive(Debug, Clone, PartialEq)]
pub struct FluxGraph {
    /// Element index (into `Mechanism::elements`).
    pub element: usize,
    /// Element symbol.
    pub symbol: String,
    /// The span.
    pub span: Span,
    /// Flux of the largest edge before the cut (same unit as [`FluxEdge::flux`]); 0 when
    /// nothing flows.
    pub largest: f64,
    /// The relative threshold applied (edges with `relative < threshold` are left out).
    pub threshold: f64,
    /// Edges kept, largest first.
    pub edges: Vec<FluxEdge>,
    /// Species on some kept edge, in mechanism order.
    pub nodes: Vec<usize>,
}

/// The index of element `symbol` among the mechanism's elements (exact spelling).
///
/// Errors: [`AnalysisError::UnknownElement`] listing the mechanism's elements.
pub fn element_index(mechanism: &Mechanism, symbol: &str) -> Result<usize, AnalysisError> {
    mechanism
        .elements
        .iter()
        .position(|e| e.symbol == symbol)
        .ok_or_else(|| AnalysisError::UnknownElement {
            symbol: symbol.to_string(),
            known: known_elements(mechanism),
        })
}

/// The mechanism's element symbols, comma-separated, or `none (no species declares atoms)`.
fn known_elements(mechanism: &Mechanism) -> String {
    if mechanism.elements.is_empty() {
        return "none (no species declares atoms)".to_string();
    }
    mechanism
        .elements
        .iter()
        .map(|e| e.symbol.as_str())
        .collect::<Vec<_>>()
        .join(", ")
}

/// Atoms of `element` in every species (dimensionless counts).
///
/// Errors: [`AnalysisError::NoComposition`] for the first species without a composition.
fn atom_counts(mechanism: &Mechanism, element: usize) -> Result<Vec<f64>, AnalysisError> {
    mechanism
        .species
        .iter()
        .map(|s| {
            s.composition
                .as_ref()
                .map(|atoms| {
                    atoms
                        .iter()
                        .filter(|&&(e, _)| e == element)
                        .map(|&(_, n)| n)
                        .sum()
                })
                .ok_or_else(|| AnalysisError::NoComposition {
                    species: s.name.clone(),
                })
        })
        .collect()
}

/// Every transfer of `element`'s atoms by every step at step rates `rates` (one per step of
/// `mechanism`, mol/(m3 s) or their window integrals in mol/m3), by the rule of the module
/// documentation; transfers of zero rate are left out.
///
/// Errors: [`AnalysisError::NoComposition`] when a species has no elemental composition.
pub fn element_transfers(
    mechanism: &Mechanism,
    element: usize,
    rates: &[f64],
) -> Result<Vec<ElementTransfer>, AnalysisError> {
    let atoms = atom_counts(mechanism, element)?;
    let carried = |t: &StoichTerm| t.coefficient * atoms[t.species];
    let mut out = Vec::new();
    for (step, (s, &q)) in mechanism.steps.iter().zip(rates).enumerate() {
        let (givers, receivers) = if q >= 0.0 {
            (&s.reactants, &s.products)
        } else {
            (&s.products, &s.reactants)
        };
        let total: f64 = receivers.iter().map(carried).sum();
        if total <= 0.0 || q == 0.0 {
            continue;
        }
        for a in givers.iter().filter(|t| carried(t) > 0.0) {
            for b in receivers.iter().filter(|t| carried(t) > 0.0) {
                out.push(ElementTransfer {
                    step,
                    from: a.species,
                    to: b.species,
                    rate: q.abs() * carried(a) * carried(b) / total,
                });
            }
        }
    }
    Ok(out)
}

/// The flux graph of `element` at `rates`: transfers summed per pair of species, the two
/// directions netted, self transfers left out, normalized to the largest edge, edges below
/// `threshold` (relative, in [0, 1]) cut.
///
/// Errors: [`AnalysisError::BadThreshold`]; [`AnalysisError::NoComposition`].
pub fn flux_graph(
    mechanism: &Mechanism,
    element: usize,
    rates: &StepRates,
    threshold: f64,
) -> Result<FluxGraph, AnalysisError> {
    if !(0.0..=1.0).contains(&threshold) {
        return Err(AnalysisError::BadThreshold(threshold));
    }
    let symbol = mechanism
        .elements
        .get(element)
        .map(|e| e.symbol.clone())
        .ok_or_else(|| AnalysisError::UnknownElement {
            symbol: format!("#{element}"),
            known: known_elements(mechanism),
        })?;
    let transfers = element_transfers(mechanism, element, &rates.rates)?;
    // Per unordered pair (low, high): signed per-step parts, positive from low to high.
    let mut pairs: Vec<(Pair, Vec<(usize, f64)>)> = Vec::new();
    for t in transfers.iter().filter(|t| t.from != t.to) {
        let (key, sign) = if t.from < t.to {
            ((t.from, t.to), 1.0)
        } else {
            ((t.to, t.from), -1.0)
        };
        let index = match pairs.iter().position(|(k, _)| *k == key) {
            Some(i) => i,
            None => {
                pairs.push((key, Vec::new()));
                pairs.len() - 1
            }
        };
        let parts = &mut pairs[index].1;
        match parts.iter_mut().find(|(s, _)| *s == t.step) {
            Some((_, v)) => *v += sign * t.rate,
            None => parts.push((t.step, sign * t.rate)),
        }
    }
    let mut edges: Vec<FluxEdge> = pairs
        .into_iter()
        .filter_map(|((low, high), parts)| {
            let net: f64 = parts.iter().map(|&(_, v)| v).sum();
            if net == 0.0 || !net.is_finite() {
                return None;
            }
            let sign = net.signum();
            let (from, to) = if net > 0.0 { (low, high) } else { (high, low) };
            let mut steps: Vec<(usize, f64)> =
                parts.into_iter().map(|(s, v)| (s, sign * v)).collect();
            steps.sort_by(|a, b| b.1.abs().total_cmp(&a.1.abs()));
            Some(FluxEdge {
                from,
                to,
                flux: net.abs(),
                relative: 0.0,
                steps,
            })
        })
        .collect();
    let largest = edges.iter().fold(0.0f64, |m, e| m.max(e.flux));
    for e in &mut edges {
        e.relative = e.flux / largest;
    }
    edges.retain(|e| e.relative >= threshold);
    edges.sort_by(|a, b| b.flux.total_cmp(&a.flux));
    let mut nodes: Vec<usize> = edges.iter().flat_map(|e| [e.from, e.to]).collect();
    nodes.sort_unstable();
    nodes.dedup();
    Ok(FluxGraph {
        element,
        symbol,
        span: rates.span,
        largest,
        threshold,
        edges,
        nodes,
    })
}
