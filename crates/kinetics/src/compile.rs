//! Mechanism -> [`Kinetics`]: one function per part of a step (rate parameters, orders, net
//! changes, collider, pressure dependence, Jacobian columns), then the Jacobian pattern and
//! each step's entry positions in it.

use crate::falloff::{Collider, CompiledFalloff};
use crate::rows::RowLists;
use crate::{CompileError, CompiledArrhenius, JacobianPattern, Kinetics, OrderTerm, ThirdBodyKind};
use stoik_mechanism::{
    Arrhenius, Mechanism, PressureDependence, Step, StoichTerm, ThirdBody, GAS_CONSTANT,
};

/// The Arrhenius factor of a pressure table's step: 1 (the table supplies the rate constant).
const UNIT_RATE: CompiledArrhenius = CompiledArrhenius {
    pre_exponential_si: 1.0,
    temperature_exponent: 0.0,
    activation_temperature_k: 0.0,
};

/// Checks `mechanism` ([`crate::validate`]) and compiles it.
pub(crate) fn compile(mechanism: &Mechanism) -> Result<Kinetics, CompileError> {
    crate::validate::validate(mechanism)?;
    let n_species = mechanism.species.len();
    let n_steps = mechanism.steps.len();
    let mut k = Kinetics {
        n_species,
        n_steps,
        species_names: mechanism.species.iter().map(|s| s.name.clone()).collect(),
        forward: Vec::with_capacity(n_steps),
        reverse: Vec::with_capacity(n_steps),
        forward_orders: RowLists::new(),
        reverse_orders: RowLists::new(),
        net: RowLists::new(),
        species_terms: RowLists::new(),
        third_body: Vec::with_capacity(n_steps),
        mixtures: RowLists::new(),
        needs_total: false,
        pressure_steps: Vec::new(),
        falloff: Vec::new(),
        tables: RowLists::new(),
        table_sets: RowLists::new(),
        columns: RowLists::new(),
        entries: RowLists::new(),
        pattern: JacobianPattern::diagonal(n_species),
        species_thermo: mechanism.species.iter().map(|s| s.thermo).collect(),
        reverse_from_thermo: Vec::with_capacity(n_steps),
        delta_moles: Vec::with_capacity(n_steps),
        conserved: std::sync::OnceLock::new(),
    };
    let mut slot_of_species = vec![usize::MAX; n_species];
    for (j, step) in mechanism.steps.iter().enumerate() {
        add_step(&mut k, j, step, &mut slot_of_species);
    }
    k.pattern = jacobian_pattern(&k);
    k.entries = entry_positions(&k);
    k.species_terms = species_terms(&k);
    Ok(k)
}

/// Per species, the (step, nu) of the steps that change it, in the order in which the
/// scattered production-rate sums add them: the steps without pressure dependence by index,
/// then the pressure-dependent ones in the order of `pressure_steps`.
fn species_terms(k: &Kinetics) -> RowLists<(usize, f64)> {
    let mut per_species: Vec<Vec<(usize, f64)>> = vec![Vec::new(); k.n_species];
    let mut is_pressure = vec![false; k.n_steps];
    k.pressure_steps.iter().for_each(|&j| is_pressure[j] = true);
    let pressure = k.pressure_steps.iter().copied();
    let plain = (0..k.n_steps).filter(|&j| !is_pressure[j]);
    for j in plain.chain(pressure) {
        for &(s, nu) in k.net.row(j) {
            per_species[s].push((j, nu));
        }
    }
    let mut rows = RowLists::new();
    for terms in per_species {
        rows.push_row(terms);
    }
    rows
}

/// Appends step `j` to every per-step list of `k`.
fn add_step(k: &mut Kinetics, j: usize, step: &Step, slot_of_species: &mut [usize]) {
    k.forward.push(forward_rate(step));
    k.reverse.push(step.reverse.as_ref().map(compile_arrhenius));
    let forward = forward_orders(step);
    let reverse = reverse_orders(step);
    let net = net_changes(step);
    k.forward_orders
        .push_row(forward.iter().map(|&(s, o)| order_term(s, o)));
    k.reverse_orders
        .push_row(reverse.iter().map(|&(s, o)| order_term(s, o)));
    k.reverse_from_thermo.push(step.reverse_from_thermo());
    k.delta_moles.push(net.iter().map(|&(_, nu)| nu).sum());
    k.net.push_row(net);

    // Jacobian columns: kinetic dependencies, then the collider's (with d[M]/dc, the
    // efficiency).
    let mut columns = ColumnSet::new(slot_of_species);
    for &(s, _) in forward.iter().chain(&reverse) {
        columns.add(s, 0.0);
    }
    let collider = compile_collider(k, step.third_body.as_ref(), &mut columns);
    let kind = match &step.pressure_dependence {
        None => plain_kind(collider),
        Some(dependence) => {
            k.pressure_steps.push(j);
            compile_pressure_dependence(k, j, dependence, collider, &mut columns)
        }
    };
    k.third_body.push(kind);
    k.columns.push_row(columns.finish());
}

fn compile_arrhenius(p: &Arrhenius) -> CompiledArrhenius {
    CompiledArrhenius {
        pre_exponential_si: p.pre_exponential_si,
        temperature_exponent: p.temperature_exponent,
        activation_temperature_k: p.activation_energy_j_per_mol / GAS_CONSTANT,
    }
}

/// The Arrhenius part kept in `Kinetics::forward`: the step's own parameters, kinf of a
/// falloff step, k0 of a chemically activated one, 1 for a pressure table.
fn forward_rate(step: &Step) -> CompiledArrhenius {
    match &step.pressure_dependence {
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

/// The forward orders: the reactant coefficients, with explicit orders replacing those of
/// the species they list.
fn forward_orders(step: &Step) -> Vec<(usize, f64)> {
    let mut orders = merge(side(&step.reactants));
    if let Some(explicit) = &step.forward_orders {
        for &(s, order) in explicit {
            match orders.iter_mut().find(|(t, _)| *t == s) {
                Some(entry) => entry.1 = order,
                None => orders.push((s, order)),
            }
        }
        orders.retain(|&(_, o)| o != 0.0);
    }
    orders
}

/// The reverse orders (product coefficients), for explicit and thermochemical reverse rate
/// constants alike; none for an irreversible step.
fn reverse_orders(step: &Step) -> Vec<(usize, f64)> {
    if step.reverse.is_some() || step.reversible {
        merge(side(&step.products))
    } else {
        Vec::new()
    }
}

/// The nonzero net stoichiometric changes, products minus reactants.
fn net_changes(step: &Step) -> Vec<(usize, f64)> {
    merge(side(&step.products).chain(step.reactants.iter().map(|t| (t.species, -t.coefficient))))
}

/// The collider of a third body (a mixture's corrections go to `k.mixtures`), adding its
/// species to the step's Jacobian columns with their efficiencies.
fn compile_collider(
    k: &mut Kinetics,
    third_body: Option<&ThirdBody>,
    columns: &mut ColumnSet,
) -> Option<Collider> {
    match third_body? {
        ThirdBody::Species(s) => {
            columns.add(*s, 1.0);
            Some(Collider::Species(*s))
        }
        ThirdBody::Mixture {
            default_efficiency,
            efficiencies,
        } => {
            k.needs_total = true;
            let all = efficiency_by_species(k.n_species, *default_efficiency, efficiencies);
            for &(s, e) in &all {
                if e != 0.0 {
                    columns.add(s, e);
                }
            }
            k.mixtures.push_row(
                all.into_iter()
                    .filter(|&(_, e)| e != *default_efficiency)
                    .map(|(s, e)| (s, e - default_efficiency)),
            );
            Some(Collider::Mixture {
                default_efficiency: *default_efficiency,
                mixture: k.mixtures.len() - 1,
            })
        }
    }
}

/// The rate factor of a step without pressure dependence: 1 or its third body's [M].
fn plain_kind(collider: Option<Collider>) -> ThirdBodyKind {
    match collider {
        None => ThirdBodyKind::None,
        Some(Collider::Species(s)) => ThirdBodyKind::Species(s),
        Some(Collider::Mixture {
            default_efficiency,
            mixture,
        }) => ThirdBodyKind::Mixture {
            default_efficiency,
            mixture,
        },
    }
}

/// Compiles the falloff parameters or pressure table of step `j`.
fn compile_pressure_dependence(
    k: &mut Kinetics,
    j: usize,
    dependence: &PressureDependence,
    collider: Option<Collider>,
    columns: &mut ColumnSet,
) -> ThirdBodyKind {
    match dependence {
        PressureDependence::Falloff {
            low_pressure,
            high_pressure,
            broadening,
            chemically_activated,
        } => {
            let other = if *chemically_activated {
                high_pressure
            } else {
                low_pressure
            };
            // The loader requires a bath gas; without one, every species collides.
            let collider = collider.unwrap_or_else(|| {
                k.needs_total = true;
                for s in 0..k.n_species {
                    columns.add(s, 1.0);
                }
                k.mixtures.push_row([]);
                Collider::Mixture {
                    default_efficiency: 1.0,
                    mixture: k.mixtures.len() - 1,
                }
            });
            k.falloff.push(CompiledFalloff {
                step: j,
                other_limit: compile_arrhenius(other),
                chemically_activated: *chemically_activated,
                broadening: *broadening,
                collider,
            });
            ThirdBodyKind::Falloff(k.falloff.len() - 1)
        }
        PressureDependence::Table { points } => {
            // P = (sum c) R T: every species is a column with d(sum c)/dc = 1.
            k.needs_total = true;
            for s in 0..k.n_species {
                columns.add(s, 1.0);
            }
            k.tables
                .push_row(points.iter().map(|point| point.pressure_pa.ln()));
            for point in points {
                k.table_sets
                    .push_row(point.rate_sets.iter().map(compile_arrhenius));
            }
            ThirdBodyKind::Table(k.tables.len() - 1)
        }
    }
}

/// The Jacobian pattern: every (net row, column) pair of every step, plus the diagonal
/// (every index was checked against the number of species).
fn jacobian_pattern(k: &Kinetics) -> JacobianPattern {
    let mut entries = Vec::new();
    for (rows, columns) in k.net.rows().zip(k.columns.rows()) {
        for &(col, _) in columns {
            entries.extend(rows.iter().map(|&(row, _)| (row, col)));
        }
    }
    JacobianPattern::from_entries_in_range(k.n_species, entries)
}

/// Per step, for each column slot and net row, the position of J[row, col] in the pattern.
fn entry_positions(k: &Kinetics) -> RowLists<usize> {
    RowLists::from_rows(k.net.rows().zip(k.columns.rows()).map(|(rows, columns)| {
        columns.iter().flat_map(move |&(col, _)| {
            // Every (row, col) is in the pattern by construction.
            rows.iter()
                .map(move |&(row, _)| k.pattern.position(row, col).unwrap_or(usize::MAX))
        })
    }))
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
