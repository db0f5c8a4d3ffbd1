//! Introspection of a compiled mechanism for code that embeds stoik: species names, the
//! stoichiometric and element matrices, reaction orders and rate constants in chosen units.

use crate::{Kinetics, RateConstants, ThirdBodyKind};
use stoik_mechanism::{Mechanism, AVOGADRO};

/// Units in which [`Kinetics::rate_constants_in`] expresses rate constants of overall
/// concentration order `m` (the order of the rate law the constant multiplies).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum RateUnits {
    /// SI: (m3/mol)^(m-1)/s, stoik's internal units.
    Si,
    /// (cm3/mol)^(m-1)/s.
    CubicCentimetresPerMole,
    /// (cm3/molecule)^(m-1)/s.
    CubicCentimetresPerMolecule,
}

impl RateUnits {
    /// The factor that turns an SI rate constant of concentration order `order` into these
    /// units (dimensionless number).
    pub fn factor_from_si(self, order: f64) -> f64 {
        let per_m3_per_mol = match self {
            RateUnits::Si => return 1.0,
            RateUnits::CubicCentimetresPerMole => 1e6,
            RateUnits::CubicCentimetresPerMolecule => 1e6 / AVOGADRO,
        };
        per_m3_per_mol.powf(order - 1.0)
    }
}

/// The element matrix of a mechanism: `atoms[e][i]` atoms of element `e` in species `i`.
#[derive(Debug, Clone, PartialEq)]
pub struct ElementMatrix {
    /// Element symbols, in the mechanism's order (rows of `atoms`).
    pub elements: Vec<String>,
    /// Atom counts, one row per element, one column per species (dimensionless).
    pub atoms: Vec<Vec<f64>>,
    /// Species without a composition (their columns are zero).
    pub species_without_composition: Vec<usize>,
}

/// The element matrix of `mechanism` (see [`ElementMatrix`]).
pub fn element_matrix(mechanism: &Mechanism) -> ElementMatrix {
    let n = mechanism.species.len();
    let mut atoms = vec![vec![0.0; n]; mechanism.elements.len()];
    let mut species_without_composition = Vec::new();
    for (i, species) in mechanism.species.iter().enumerate() {
        match &species.composition {
            Some(terms) => {
                for &(e, count) in terms {
                    if let Some(row) = atoms.get_mut(e) {
                        row[i] += count;
                    }
                }
            }
            None => species_without_composition.push(i),
        }
    }
    ElementMatrix {
        elements: mechanism
            .elements
            .iter()
            .map(|e| e.symbol.clone())
            .collect(),
        atoms,
        species_without_composition,
    }
}

impl Kinetics {
    /// Species names, in the mechanism's order (state vector order).
    pub fn species_names(&self) -> &[String] {
        &self.species_names
    }

    /// The net stoichiometric matrix: `nu[i][j]` is the net change of species `i` in one
    /// occurrence of step `j` (products minus reactants, dimensionless; a third body does
    /// not count). One row per species, one column per step.
    pub fn stoichiometric_matrix(&self) -> Vec<Vec<f64>> {
        let mut nu = vec![vec![0.0; self.n_steps]; self.n_species];
        let columns = (0..self.n_steps).map(|j| self.net.row(j));
        for (j, column) in columns.enumerate() {
            for &(i, v) in column {
                nu[i][j] += v;
            }
        }
        nu
    }

    /// Whether step `step`'s reverse rate constant is taken from thermochemistry
    /// (`kf / Kc`: a reversible step without explicit reverse parameters); `None` when the
    /// step is out of range.
    pub fn reverse_from_thermochemistry(&self, step: usize) -> Option<bool> {
        self.reverse_from_thermo.get(step).copied()
    }

    /// The concentration orders (forward, reverse) of the rate constants
    /// [`RateConstants`] holds for step `step`: the sum of the reaction orders, plus one
    /// when the constant multiplies a third-body concentration (plain third body, and the
    /// low-pressure limit a chemically activated step keeps). Reverse is `None` for an
    /// irreversible step. `None` when the step is out of range.
    pub fn rate_constant_orders(&self, step: usize) -> Option<(f64, Option<f64>)> {
        if step >= self.n_steps {
            return None;
        }
        let extra = match self.third_body[step] {
            ThirdBodyKind::None | ThirdBodyKind::Table(_) => 0.0,
            ThirdBodyKind::Mixture { .. } | ThirdBodyKind::Species(_) => 1.0,
            ThirdBodyKind::Falloff(f) => {
                if self.falloff[f].chemically_activated {
                    1.0
                } else {
                    0.0
                }
            }
        };
        let forward: f64 = self.forward_orders.row(step).iter().map(|t| t.order).sum();
        let reverse = self.reverse_orders.row(step);
        let reversible = self.reverse[step].is_some() || self.reverse_from_thermo[step];
        let reverse = reversible.then(|| reverse.iter().map(|t| t.order).sum::<f64>() + extra);
        Some((forward + extra, reverse))
    }

    /// The forward and reverse rate constants of `k` (as [`Kinetics::evaluate_rate_constants`]
    /// fills them, SI) in `units`, each converted with its own concentration order
    /// ([`rate_constant_orders`](Self::rate_constant_orders)). Irreversible steps have a
    /// reverse constant of 0. Pressure-dependent steps give the limit or factor `k` keeps
    /// (see [`RateConstants`]).
    pub fn rate_constants_in(&self, k: &RateConstants, units: RateUnits) -> (Vec<f64>, Vec<f64>) {
        let mut forward = Vec::with_capacity(self.n_steps);
        let mut reverse = Vec::with_capacity(self.n_steps);
        for j in 0..self.n_steps {
            let (of, or) = self.rate_constant_orders(j).unwrap_or((1.0, None));
            forward.push(k.forward[j] * units.factor_from_si(of));
            reverse.push(or.map_or(0.0, |o| k.reverse[j] * units.factor_from_si(o)));
        }
        (forward, reverse)
    }
}

impl Kinetics {
    /// Writes each step's standard reaction enthalpy dH_j(T) = sum_i nu_ij H_i(T) (J/mol)
    /// at `temperature_k` (K) into `out` (length `n_steps`), from the species' NASA
    /// 7-coefficient polynomials; NaN for a step with a species without thermochemistry.
    /// The heat a step releases per unit volume and time is `-dH_j q_j` (W/m3). No
    /// allocation.
    pub fn reaction_enthalpies(&self, temperature_k: f64, out: &mut [f64]) {
        for (j, o) in out.iter_mut().enumerate().take(self.n_steps) {
            *o = self
                .net
                .row(j)
                .iter()
                .map(|&(i, nu)| {
                    self.species_thermo[i]
                        .as_ref()
                        .map_or(f64::NAN, |t| nu * t.enthalpy_j_per_mol(temperature_k))
                })
                .sum();
        }
    }
}
