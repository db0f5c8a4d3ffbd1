//! Each step's contribution to a species' net chemical production, ranked.

use crate::{Span, StepRates};
use stoik_mechanism::Mechanism;

/// One step's part in a species' production or consumption.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Contribution {
    /// Step index (mechanism order).
    pub step: usize,
    /// `nu q`: the step's net coefficient for the species times its rate of progress;
    /// mol/(m3 s) at an instant, mol/m3 over a window ([`Span::rate_unit`]). Positive when
    /// the step makes the species, negative when it destroys it.
    pub value: f64,
    /// `|value|` over the total of its side (production or consumption), dimensionless in
    /// [0, 1]; 0 when that total is 0.
    pub share: f64,
}

/// Which steps make and destroy one species at one span.
#[derive(Debug, Clone, PartialEq)]
pub struct SpeciesBudget {
    /// Species index.
    pub species: usize,
    /// The span.
    pub span: Span,
    /// Net chemical production: the sum of every contribution (mol/(m3 s) or mol/m3).
    pub net: f64,
    /// Sum of the positive contributions (same unit).
    pub production_total: f64,
    /// Sum of the negative contributions, as a positive number (same unit).
    pub consumption_total: f64,
    /// Steps that make the species, largest first.
    pub production: Vec<Contribution>,
    /// Steps that destroy it, largest magnitude first.
    pub consumption: Vec<Contribution>,
    /// Every step whose net coefficient for the species is not zero, in step order (zero
    /// contributions included).
    pub all: Vec<Contribution>,
}

/// Net stoichiometric coefficient of `species` in step `step`: products minus reactants.
pub(crate) fn net_coefficient(mechanism: &Mechanism, step: usize, species: usize) -> f64 {
    let s = &mechanism.steps[step];
    let side = |terms: &[stoik_mechanism::StoichTerm]| -> f64 {
        terms
            .iter()
            .filter(|t| t.species == species)
            .map(|t| t.coefficient)
            .sum()
    };
    side(&s.products) - side(&s.reactants)
}

/// The budget of species `species` (index into `mechanism.species`, which must be the
/// mechanism the rates were computed on) at `rates`: contribution `nu_ij q_j` of every step
/// `j` with a nonzero net coefficient `nu_ij`, production and consumption ranked apart with
/// their shares.
///
/// A species index out of range, or rates of another length than the steps, give an empty
/// budget (no step).
pub fn species_budget(mechanism: &Mechanism, rates: &StepRates, species: usize) -> SpeciesBudget {
    let all: Vec<Contribution> = if species < mechanism.species.len() {
        rates
            .rates
            .iter()
            .enumerate()
            .take(mechanism.steps.len())
            .filter_map(|(step, &q)| {
                let nu = net_coefficient(mechanism, step, species);
                (nu != 0.0).then_some(Contribution {
                    step,
                    value: nu * q,
                    share: 0.0,
                })
            })
            .collect()
    } else {
        Vec::new()
    };
    let production_total: f64 = all.iter().map(|c| c.value.max(0.0)).sum();
    let consumption_total: f64 = all.iter().map(|c| (-c.value).max(0.0)).sum();
    let all: Vec<Contribution> = all
        .into_iter()
        .map(|c| {
            let total = if c.value >= 0.0 {
                production_total
            } else {
                consumption_total
            };
            Contribution {
                share: if total > 0.0 {
                    c.value.abs() / total
                } else {
                    0.0
                },
                ..c
            }
        })
        .collect();
    let mut production: Vec<Contribution> = all.iter().copied().filter(|c| c.value > 0.0).collect();
    production.sort_by(|a, b| b.value.total_cmp(&a.value));
    let mut consumption: Vec<Contribution> =
        all.iter().copied().filter(|c| c.value < 0.0).collect();
    consumption.sort_by(|a, b| a.value.total_cmp(&b.value));
    SpeciesBudget {
        species,
        span: rates.span,
        net: all.iter().map(|c| c.value).sum(),
        production_total,
        consumption_total,
        production,
        consumption,
        all,
    }
}
