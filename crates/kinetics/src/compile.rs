//! Mechanism -> flat arrays.

use crate::falloff::{Collider, CompiledFalloff, CompiledTable, TablePoint};
use crate::{CompiledArrhenius, JacobianPattern, Kinetics, OrderTerm, ThirdBodyKind};
use stoik_mechanism::{
    Arrhenius, Mechanism, PressureDependence, StoichTerm, ThirdBody, GAS_CONSTANT,
};

/// The Arrhenius factor of a pressure table's step: 1 (the table supplies the rate constant).
const UNIT_RATE: CompiledArrhenius = CompiledArrhenius {
    pre_exponential_si: 1.0,
    temperature_exponent: 0.0,
    activation_temperature_k: 0.0,
};

fn compile_arrhenius(p: &Arrhenius) -> CompiledArrhenius {
    CompiledArrhenius {
        pre_exponential_si: p.pre_exponential_si,
        temperature_exponent: p.temperature_exponent,
        activation_temperature_k: p.activation_energy_j_per_mol / GAS_CONSTANT,
    }
}

fn order_term(species: usize, order: f64) -> OrderTerm {
    let integer_order = (order.fract() == 0.0 && order.abs() <= 64.0).then_some(order as i32);
    OrderTerm {
        species,
        order,
        integer_order,
    }
}

/// Sums repeated species (`B + B` is order 2 in B) and drops zero orders.
fn merge(pairs: impl IntoIterator<Item = (usize, f64)>) -> Vec<(usize, f64)> {
    let mut merged: Vec<(usize, f64)> = Vec::new();
    for (s, x) in pairs {
        match merged.iter_mut().find(|(t, _)| *t == s) {
            Some(entry) => entry.1 += x,
            None => merged.push((s, x)),
        }
    }
    merged.retain(|&(_, x)| x != 0.0);
    merged
}

fn side(terms: &[StoichTerm]) -> impl Iterator<Item = (usize, f64)> + '_ {
    terms.iter().map(|t| (t.species, t.coefficient))
}

pub(crate) fn compile(mechanism: &Mechanism) -> Kinetics {
    let n_species = mechanism.species.len();
    let n_steps = mechanism.steps.len();
    let mut k = Kinetics {
        n_species,
        n_steps,
        forward: Vec::with_capacity(n_steps),
        reverse: Vec::with_capacity(n_steps),
        forward_start: vec![0],
        forward_terms: Vec::new(),
        reverse_start: vec![0],
        reverse_terms: Vec::new(),
        net_start: vec![0],
        net_terms: Vec::new(),
        third_body: Vec::with_capacity(n_steps),
        third_body_corrections: Vec::new(),
        needs_total: false,
        pressure_steps: Vec::new(),
        falloff: Vec::new(),
        falloff_steps: Vec::new(),
        tables: Vec::new(),
        table_points: Vec::new(),
        table_sets: Vec::new(),
        column_start: vec![0],
        columns: Vec::new(),
        entry_start: vec![0],
        entry_positions: Vec::new(),
        pattern: JacobianPattern::from_entries(n_species, Vec::new()),
        species_thermo: mechanism.species.iter().map(|s| s.thermo).collect(),
        reverse_from_thermo: Vec::with_capacity(n_steps),
        delta_moles: Vec::with_capacity(n_steps),
        conserved: std::sync::OnceLock::new(),
    };
    let mut pattern_entries: Vec<(usize, usize)> = Vec::new();
    let mut slot_of_species = vec![usize::MAX; n_species];

    for (j, step) in mechanism.steps.iter().enumerate() {
        let forward = match &step.pressure_dependence {
            None => compile_arrhenius(&step.forward),
            Some(PressureDependence::Falloff {
                low_pressure,
                high_pressure,
                chemically_activated,
                ..
            }) => compile_arrhenius(if *chemically_activated {
                low_pressure
            } else {
                high_pressure
            }),
            Some(PressureDependence::Table { .. }) => UNIT_RATE,
        };
        k.forward.push(forward);
        k.reverse.push(step.reverse.as_ref().map(compile_arrhenius));

        let forward_orders = match &step.forward_orders {
            // Explicit orders replace the coefficient of listed species only.
            Some(explicit) => {
                let mut orders = merge(side(&step.reactants));
                for &(s, order) in explicit {
                    match orders.iter_mut().find(|(t, _)| *t == s) {
                        Some(entry) => entry.1 = order,
                        None => orders.push((s, order)),
                    }
                }
                orders.retain(|&(_, o)| o != 0.0);
                orders
            }
            None => merge(side(&step.reactants)),
        };
        k.forward_terms
            .extend(forward_orders.iter().map(|&(s, o)| order_term(s, o)));
        k.forward_start.push(k.forward_terms.len());
        // Reverse orders for explicit and thermochemical reverse rate constants alike.
        let reverse_orders = if step.reverse.is_some() || step.reversible {
            merge(side(&step.products))
        } else {
            Vec::new()
        };
        k.reverse_terms
            .extend(reverse_orders.iter().map(|&(s, o)| order_term(s, o)));
        k.reverse_start.push(k.reverse_terms.len());

        let net = merge(
            side(&step.products).chain(step.reactants.iter().map(|t| (t.species, -t.coefficient))),
        );
        k.net_terms.extend(net.iter().copied());
        k.net_start.push(k.net_terms.len());
        k.reverse_from_thermo.push(step.reverse_from_thermo());
        k.delta_moles.push(net.iter().map(|&(_, nu)| nu).sum());

        // Jacobian columns: kinetic dependencies, then third-body efficiencies.
        let mut columns = ColumnSet::new(&mut slot_of_species);
        for &(s, _) in forward_orders.iter().chain(&reverse_orders) {
            columns.add(s, 0.0);
        }
        // The collider's columns carry d[M]/dc (the efficiency).
        let collider = match &step.third_body {
            None => None,
            Some(ThirdBody::Species(s)) => {
                columns.add(*s, 1.0);
                Some(Collider::Species(*s))
            }
            Some(ThirdBody::Mixture {
                default_efficiency,
                efficiencies,
            }) => {
                k.needs_total = true;
                let start = k.third_body_corrections.len();
                for (s, e) in efficiency_by_species(n_species, *default_efficiency, efficiencies) {
                    if e != *default_efficiency {
                        k.third_body_corrections.push((s, e - default_efficiency));
                    }
                    if e != 0.0 {
                        columns.add(s, e);
                    }
                }
                let end = k.third_body_corrections.len();
                Some(Collider::Mixture {
                    default_efficiency: *default_efficiency,
                    start,
                    end,
                })
            }
        };
        let kind = match (&step.pressure_dependence, collider) {
            (None, None) => ThirdBodyKind::None,
            (None, Some(Collider::Species(s))) => ThirdBodyKind::Species(s),
            (
                None,
                Some(Collider::Mixture {
                    default_efficiency,
                    start,
                    end,
                }),
            ) => ThirdBodyKind::Mixture {
                default_efficiency,
                start,
                end,
            },
            (
                Some(PressureDependence::Falloff {
                    low_pressure,
                    high_pressure,
                    broadening,
                    chemically_activated,
                }),
                collider,
            ) => {
                let other = if *chemically_activated {
                    high_pressure
                } else {
                    low_pressure
                };
                // The loader requires a bath gas; without one, every species collides.
                let collider = match collider {
                    Some(collider) => collider,
                    None => {
                        k.needs_total = true;
                        for s in 0..n_species {
                            columns.add(s, 1.0);
                        }
                        Collider::Mixture {
                            default_efficiency: 1.0,
                            start: 0,
                            end: 0,
                        }
                    }
                };
                k.falloff.push(CompiledFalloff {
                    other_limit: compile_arrhenius(other),
                    chemically_activated: *chemically_activated,
                    broadening: *broadening,
                    collider,
                });
                k.falloff_steps.push(j);
                ThirdBodyKind::Falloff(k.falloff.len() - 1)
            }
            (Some(PressureDependence::Table { points }), _) => {
                // P = (sum c) R T: every species is a column with d(sum c)/dc = 1.
                k.needs_total = true;
                for s in 0..n_species {
                    columns.add(s, 1.0);
                }
                let start = k.table_points.len();
                for point in points {
                    let set_start = k.table_sets.len();
                    k.table_sets
                        .extend(point.rate_sets.iter().map(compile_arrhenius));
                    k.table_points.push(TablePoint {
                        ln_pressure: point.pressure_pa.ln(),
                        set_start,
                        set_end: k.table_sets.len(),
                    });
                }
                k.tables.push(CompiledTable {
                    start,
                    end: k.table_points.len(),
                });
                ThirdBodyKind::Table(k.tables.len() - 1)
            }
        };
        if matches!(kind, ThirdBodyKind::Falloff(_) | ThirdBodyKind::Table(_)) {
            k.pressure_steps.push(j);
        }
        k.third_body.push(kind);
        let columns = columns.finish();
        for &(col, _) in &columns {
            for &(row, _) in &net {
                pattern_entries.push((row, col));
            }
        }
        k.columns.extend(columns);
        k.column_start.push(k.columns.len());
    }

    k.pattern = JacobianPattern::from_entries(n_species, pattern_entries);
    for j in 0..n_steps {
        let rows = &k.net_terms[k.net_start[j]..k.net_start[j + 1]];
        for &(col, _) in &k.columns[k.column_start[j]..k.column_start[j + 1]] {
            for &(row, _) in rows {
                // Every (row, col) pushed above is in the pattern by construction.
                let pos = k.pattern.position(row, col).unwrap_or(usize::MAX);
                k.entry_positions.push(pos);
            }
        }
        k.entry_start.push(k.entry_positions.len());
    }
    k
}

/// The unique Jacobian columns of one step, in insertion order, with their third-body
/// efficiency; `slot` maps a species to its place (usize::MAX = absent) and is reset by
/// `finish`, so building a step costs O(columns), not O(columns^2).
struct ColumnSet<'a> {
    slot: &'a mut [usize],
    columns: Vec<(usize, f64)>,
}

impl<'a> ColumnSet<'a> {
    fn new(slot: &'a mut [usize]) -> Self {
        ColumnSet {
            slot,
            columns: Vec::new(),
        }
    }

    fn add(&mut self, species: usize, efficiency: f64) {
        match self.slot[species] {
            usize::MAX => {
                self.slot[species] = self.columns.len();
                self.columns.push((species, efficiency));
            }
            at => self.columns[at].1 += efficiency,
        }
    }

    fn finish(self) -> Vec<(usize, f64)> {
        for &(s, _) in &self.columns {
            self.slot[s] = usize::MAX;
        }
        self.columns
    }
}

/// Every species' efficiency in a mixture third body (the last listed value wins).
fn efficiency_by_species(
    n_species: usize,
    default_efficiency: f64,
    efficiencies: &[(usize, f64)],
) -> Vec<(usize, f64)> {
    let mut all: Vec<(usize, f64)> = (0..n_species).map(|s| (s, default_efficiency)).collect();
    for &(s, e) in efficiencies {
        if let Some(entry) = all.get_mut(s) {
            entry.1 = e;
        }
    }
    all
}
