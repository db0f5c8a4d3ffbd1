//! The check of a [`Mechanism`] built by hand: the invariants that the file loaders
//! guarantee and `stoik-kinetics` relies on (see the `model` module), reported all at once.

use crate::model::{Arrhenius, Broadening, Mechanism, PressureDependence, Step, ThirdBody};
use std::fmt;

/// Heaviest atomic weight accepted, in kg/mol: the heaviest element weighs about 0.3 kg/mol,
/// so a larger value is most likely in g/mol.
const MAX_ATOMIC_WEIGHT_KG_PER_MOL: f64 = 1.0;
/// Largest collision diameter accepted, in m (10 nm; the loader applies the same bound):
/// molecular diameters are below a few nm, so a larger value is most likely not in m.
pub(crate) const MAX_COLLISION_DIAMETER_M: f64 = 1e-8;

/// The item of a [`Mechanism`] a [`MechanismProblem`] is about, by its index in
/// [`Mechanism::elements`], [`Mechanism::species`] or [`Mechanism::steps`] (0-based).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum MechanismItem {
    /// `elements[index]`.
    Element(usize),
    /// `species[index]`.
    Species(usize),
    /// `steps[index]`.
    Step(usize),
}

impl fmt::Display for MechanismItem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            MechanismItem::Element(i) => write!(f, "elements[{i}]"),
            MechanismItem::Species(i) => write!(f, "species[{i}]"),
            MechanismItem::Step(i) => write!(f, "steps[{i}]"),
        }
    }
}

/// One problem of a [`Mechanism`] found by [`Mechanism::validate`].
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
#[non_exhaustive]
pub enum MechanismProblem {
    /// A species index (in a step's sides, forward orders or third body) is not
    /// `< species.len()`.
    #[error("{item}: {what} refers to species index {index}, but there are {len} species")]
    SpeciesIndexOutOfRange {
        /// Where the index stands.
        item: MechanismItem,
        /// Which field holds it, e.g. `"a reactant"`.
        what: &'static str,
        /// The index.
        index: usize,
        /// The number of species.
        len: usize,
    },
    /// An element index of a species composition is not `< elements.len()`.
    #[error(
        "{item}: its composition refers to element index {index}, but there are {len} elements"
    )]
    ElementIndexOutOfRange {
        /// The species.
        item: MechanismItem,
        /// The index.
        index: usize,
        /// The number of elements.
        len: usize,
    },
    /// A number is outside its allowed range (for example a prefactor that is not finite
    /// and positive). `value` is in the SI unit of `what`.
    #[error("{item}: {what} is {value:e}; it must be {rule}")]
    ValueOutOfRange {
        /// Where the number stands.
        item: MechanismItem,
        /// Which number, with its SI unit, e.g. `"the forward prefactor (SI)"`.
        what: &'static str,
        /// The number, in the SI unit of `what`.
        value: f64,
        /// The rule it breaks, e.g. `"finite and positive"`.
        rule: &'static str,
    },
    /// A step whose fields contradict each other (for example reverse parameters on an
    /// irreversible step).
    #[error("{item}: {reason}")]
    Inconsistent {
        /// The step.
        item: MechanismItem,
        /// What is wrong.
        reason: &'static str,
    },
    /// A reversible step without reverse parameters takes kr = kf / Kc from
    /// thermochemistry, which this species of its equation lacks.
    #[error(
        "{item}: its reverse rate constant comes from thermochemistry (kr = kf / Kc), but \
         species index {species} has none; give `reverse` or the species' thermo"
    )]
    MissingThermo {
        /// The step.
        item: MechanismItem,
        /// Index of the species without [`crate::Species::thermo`].
        species: usize,
    },
}

impl Mechanism {
    /// Checks the invariants that the file loaders guarantee, for a mechanism built by hand:
    /// every species and element index in range; atomic weights finite, positive and in
    /// kg/mol (below 1 kg/mol); collision diameters finite, positive and in m (below 10 nm);
    /// atom counts finite and not negative; stoichiometric coefficients finite and positive;
    /// prefactors (SI) finite and positive; temperature exponents and activation energies
    /// (J/mol) finite; third-body efficiencies and reaction orders finite and not negative;
    /// broadening parameters in their ranges (Troe T3, T1 positive, SRI c and d positive,
    /// a fixed centre in (0, 1]); pressure tables with at least one point, each with at
    /// least one rate set, at finite positive and strictly increasing pressures (Pa); reverse
    /// parameters only on reversible steps that are not pressure dependent; thermochemistry
    /// for every species of a reversible step without reverse parameters.
    ///
    /// Returns every problem found (in the order elements, species, steps), or `Ok(())`.
    pub fn validate(&self) -> Result<(), Vec<MechanismProblem>> {
        let mut problems = Vec::new();
        for (i, element) in self.elements.iter().enumerate() {
            let w = element.atomic_weight_kg_per_mol;
            if !(w.is_finite() && w > 0.0 && w < MAX_ATOMIC_WEIGHT_KG_PER_MOL) {
                problems.push(MechanismProblem::ValueOutOfRange {
                    item: MechanismItem::Element(i),
                    what: "the atomic weight (kg/mol)",
                    value: w,
                    rule: "finite, positive and below 1 kg/mol (kg/mol, not g/mol)",
                });
            }
        }
        for i in 0..self.species.len() {
            self.check_species(i, &mut problems);
        }
        for (j, step) in self.steps.iter().enumerate() {
            StepCheck {
                mechanism: self,
                item: MechanismItem::Step(j),
                problems: &mut problems,
            }
            .check(step);
        }
        if problems.is_empty() {
            Ok(())
        } else {
            Err(problems)
        }
    }

    fn check_species(&self, i: usize, problems: &mut Vec<MechanismProblem>) {
        let species = &self.species[i];
        let item = MechanismItem::Species(i);
        for &(element, count) in species.composition.iter().flatten() {
            if element >= self.elements.len() {
                problems.push(MechanismProblem::ElementIndexOutOfRange {
                    item,
                    index: element,
                    len: self.elements.len(),
                });
            }
            if !(count.is_finite() && count >= 0.0) {
                problems.push(MechanismProblem::ValueOutOfRange {
                    item,
                    what: "an atom count",
                    value: count,
                    rule: "finite and not negative",
                });
            }
        }
        if let Some(d) = species.collision_diameter_m {
            if !(d.is_finite() && d > 0.0 && d < MAX_COLLISION_DIAMETER_M) {
                problems.push(MechanismProblem::ValueOutOfRange {
                    item,
                    what: "the collision diameter (m)",
                    value: d,
                    rule: "finite, positive and below 1e-8 m (m, not nm)",
                });
            }
        }
    }
}

/// The checks of one step, collecting into `problems`.
struct StepCheck<'a> {
    mechanism: &'a Mechanism,
    item: MechanismItem,
    problems: &'a mut Vec<MechanismProblem>,
}

impl StepCheck<'_> {
    fn check(&mut self, step: &Step) {
        for (terms, what) in [
            (&step.reactants, "a reactant"),
            (&step.products, "a product"),
        ] {
            for term in terms {
                self.species_index(term.species, what);
                self.value(
                    term.coefficient,
                    "a stoichiometric coefficient",
                    "finite and positive",
                    |x| x > 0.0,
                );
            }
        }
        for &(species, order) in step.forward_orders.iter().flatten() {
            self.species_index(species, "a forward order");
            self.value(order, "a reaction order", "finite and not negative", |x| {
                x >= 0.0
            });
        }
        self.arrhenius(&step.forward, "the forward prefactor (SI)");
        if let Some(reverse) = &step.reverse {
            self.arrhenius(reverse, "the reverse prefactor (SI)");
            if !step.reversible {
                self.inconsistent("an irreversible step has reverse rate parameters");
            }
        }
        match &step.third_body {
            None => {}
            Some(ThirdBody::Species(s)) => self.species_index(*s, "the third body"),
            Some(ThirdBody::Mixture {
                default_efficiency,
                efficiencies,
            }) => {
                self.efficiency(*default_efficiency);
                for &(s, e) in efficiencies {
                    self.species_index(s, "a third-body efficiency");
                    self.efficiency(e);
                }
            }
        }
        if let Some(dependence) = &step.pressure_dependence {
            self.pressure_dependence(dependence);
            if step.reverse.is_some() {
                self.inconsistent(
                    "a pressure-dependent step has reverse rate parameters; its reverse rate \
                     constant comes from thermochemistry",
                );
            }
        }
        if step.reverse_from_thermo() {
            let in_range = |&s: &usize| s < self.mechanism.species.len();
            for species in step.species_lacking_thermo(&self.mechanism.species) {
                if in_range(&species) {
                    self.problems.push(MechanismProblem::MissingThermo {
                        item: self.item,
                        species,
                    });
                }
            }
        }
    }

    fn species_index(&mut self, index: usize, what: &'static str) {
        let len = self.mechanism.species.len();
        if index >= len {
            self.problems
                .push(MechanismProblem::SpeciesIndexOutOfRange {
                    item: self.item,
                    what,
                    index,
                    len,
                });
        }
    }

    /// Reports `value` unless it is finite and `ok`.
    fn value(&mut self, value: f64, what: &'static str, rule: &'static str, ok: fn(f64) -> bool) {
        if !(value.is_finite() && ok(value)) {
            self.problems.push(MechanismProblem::ValueOutOfRange {
                item: self.item,
                what,
                value,
                rule,
            });
        }
    }

    fn inconsistent(&mut self, reason: &'static str) {
        self.problems.push(MechanismProblem::Inconsistent {
            item: self.item,
            reason,
        });
    }

    fn efficiency(&mut self, value: f64) {
        self.value(
            value,
            "a third-body efficiency",
            "finite and not negative",
            |x| x >= 0.0,
        );
    }

    fn arrhenius(&mut self, arrhenius: &Arrhenius, prefactor: &'static str) {
        self.value(
            arrhenius.pre_exponential_si,
            prefactor,
            "finite and positive",
            |x| x > 0.0,
        );
        self.value(
            arrhenius.temperature_exponent,
            "a temperature exponent",
            "finite",
            |_| true,
        );
        self.value(
            arrhenius.activation_energy_j_per_mol,
            "an activation energy (J/mol)",
            "finite",
            |_| true,
        );
    }

    fn pressure_dependence(&mut self, dependence: &PressureDependence) {
        match dependence {
            PressureDependence::Falloff {
                low_pressure,
                high_pressure,
                broadening,
                ..
            } => {
                self.arrhenius(low_pressure, "the low-pressure prefactor (SI)");
                self.arrhenius(high_pressure, "the high-pressure prefactor (SI)");
                self.broadening(broadening);
            }
            PressureDependence::Table { points } => {
                if points.is_empty() {
                    self.inconsistent("a pressure table has no points");
                }
                for point in points {
                    self.value(
                        point.pressure_pa,
                        "a pressure-table pressure (Pa)",
                        "finite and positive",
                        |x| x > 0.0,
                    );
                    if point.rate_sets.is_empty() {
                        self.inconsistent("a pressure-table point has no rate set");
                    }
                    for set in &point.rate_sets {
                        self.arrhenius(set, "a pressure-table prefactor (SI)");
                    }
                }
                if points.windows(2).any(|w| {
                    w[0].pressure_pa.partial_cmp(&w[1].pressure_pa)
                        != Some(std::cmp::Ordering::Less)
                }) {
                    self.inconsistent("the pressures of a pressure table do not increase strictly");
                }
            }
        }
    }

    fn broadening(&mut self, broadening: &Broadening) {
        let positive = |x: f64| x > 0.0;
        let any = |_: f64| true;
        match *broadening {
            Broadening::Lindemann => {}
            Broadening::Troe {
                a,
                t3_k,
                t1_k,
                t2_k,
            } => {
                self.value(a, "the Troe weight a", "finite", any);
                self.value(t3_k, "the Troe T3 (K)", "finite and positive", positive);
                self.value(t1_k, "the Troe T1 (K)", "finite and positive", positive);
                if let Some(t2) = t2_k {
                    self.value(t2, "the Troe T2 (K)", "finite", any);
                }
            }
            Broadening::Sri { a, b_k, c_k, d, e } => {
                self.value(a, "the SRI a", "finite", any);
                self.value(b_k, "the SRI b (K)", "finite", any);
                self.value(c_k, "the SRI c (K)", "finite and positive", positive);
                self.value(d, "the SRI d", "finite and positive", positive);
                self.value(e, "the SRI e", "finite", any);
            }
            Broadening::FixedCenter { center } => {
                self.value(center, "the broadening centre Fc", "in (0, 1]", |x| {
                    x > 0.0 && x <= 1.0
                });
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Element, PressurePoint, Species, StoichTerm};

    fn species(name: &str) -> Species {
        Species {
            name: name.to_string(),
            composition: None,
            note: None,
            location: None,
            thermo: None,
            collision_diameter_m: None,
        }
    }

    fn arrhenius(pre_exponential_si: f64) -> Arrhenius {
        Arrhenius {
            pre_exponential_si,
            temperature_exponent: 0.0,
            activation_energy_j_per_mol: 0.0,
        }
    }

    fn step(reactant: usize, product: usize, forward: Arrhenius) -> Step {
        let term = |species| StoichTerm {
            species,
            coefficient: 1.0,
        };
        Step {
            equation: "A -> B".to_string(),
            reactants: vec![term(reactant)],
            products: vec![term(product)],
            reversible: false,
            forward,
            reverse: None,
            third_body: None,
            pressure_dependence: None,
            forward_orders: None,
            allow_duplicate: false,
            note: None,
            location: None,
        }
    }

    #[test]
    fn every_bundled_mechanism_is_valid() {
        // The loaders guarantee the invariants (model module documentation); `validate`
        // must agree with them on every mechanism the project ships.
        let dir = stoik_testsupport::mechanisms_dir();
        let mut checked = 0;
        for entry in std::fs::read_dir(&dir).expect("mechanisms folder") {
            let path = entry.expect("entry").path();
            let name = path.file_name().and_then(|n| n.to_str()).unwrap_or("");
            let other_kind = [".scenario.toml", ".suite.toml", ".baseline.toml"]
                .iter()
                .any(|k| name.ends_with(k));
            if !name.ends_with(".toml") || other_kind {
                continue;
            }
            let file = crate::load_mechanism(&path).unwrap_or_else(|e| panic!("{e}"));
            assert_eq!(file.mechanism.validate(), Ok(()), "{name}");
            checked += 1;
        }
        assert!(checked >= 12, "{checked} mechanisms");
    }

    #[test]
    fn a_hand_built_mechanism_reports_every_problem_at_once() {
        // Two species A, B; one element O given in g/mol (16 instead of 0.016 kg/mol).
        let mut a = species("A");
        a.composition = Some(vec![(0, 1.0), (3, 1.0)]);
        a.collision_diameter_m = Some(0.35); // nm written as m
        let mut mechanism = Mechanism {
            title: None,
            elements: vec![Element {
                symbol: "O".to_string(),
                atomic_weight_kg_per_mol: 16.0,
            }],
            species: vec![a, species("B")],
            steps: vec![step(0, 1, arrhenius(1.0))],
        };
        assert_eq!(
            mechanism.validate(),
            Err(vec![
                MechanismProblem::ValueOutOfRange {
                    item: MechanismItem::Element(0),
                    what: "the atomic weight (kg/mol)",
                    value: 16.0,
                    rule: "finite, positive and below 1 kg/mol (kg/mol, not g/mol)",
                },
                MechanismProblem::ElementIndexOutOfRange {
                    item: MechanismItem::Species(0),
                    index: 3,
                    len: 1,
                },
                MechanismProblem::ValueOutOfRange {
                    item: MechanismItem::Species(0),
                    what: "the collision diameter (m)",
                    value: 0.35,
                    rule: "finite, positive and below 1e-8 m (m, not nm)",
                },
            ])
        );
        mechanism.elements[0].atomic_weight_kg_per_mol = 15.999e-3;
        mechanism.species[0].composition = Some(vec![(0, 1.0)]);
        mechanism.species[0].collision_diameter_m = Some(0.35e-9);
        assert_eq!(mechanism.validate(), Ok(()));

        // Steps: a product index past the two species, a negative prefactor, an irreversible
        // step with reverse parameters, a NaN efficiency, an empty pressure table, and a
        // reversible step without reverse parameters whose species lack thermochemistry.
        let mut bad = step(0, 2, arrhenius(-1.0));
        bad.reverse = Some(arrhenius(1.0));
        bad.third_body = Some(ThirdBody::Mixture {
            default_efficiency: 1.0,
            efficiencies: vec![(1, f64::NAN)],
        });
        let mut table = step(0, 1, arrhenius(1.0));
        table.pressure_dependence = Some(PressureDependence::Table { points: vec![] });
        let mut thermo = step(0, 1, arrhenius(1.0));
        thermo.reversible = true;
        mechanism.steps = vec![bad, table, thermo];
        let mut problems = mechanism.validate().expect_err("invalid");
        // NaN != NaN, so the efficiency's entry is compared by its text.
        let nan_efficiency = problems.remove(3);
        assert_eq!(
            nan_efficiency.to_string(),
            "steps[0]: a third-body efficiency is NaN; it must be finite and not negative"
        );
        let step0 = MechanismItem::Step(0);
        assert_eq!(
            problems,
            vec![
                MechanismProblem::SpeciesIndexOutOfRange {
                    item: step0,
                    what: "a product",
                    index: 2,
                    len: 2,
                },
                MechanismProblem::ValueOutOfRange {
                    item: step0,
                    what: "the forward prefactor (SI)",
                    value: -1.0,
                    rule: "finite and positive",
                },
                MechanismProblem::Inconsistent {
                    item: step0,
                    reason: "an irreversible step has reverse rate parameters",
                },
                MechanismProblem::Inconsistent {
                    item: MechanismItem::Step(1),
                    reason: "a pressure table has no points",
                },
                MechanismProblem::MissingThermo {
                    item: MechanismItem::Step(2),
                    species: 0,
                },
                MechanismProblem::MissingThermo {
                    item: MechanismItem::Step(2),
                    species: 1,
                },
            ]
        );
    }

    #[test]
    fn pressure_tables_must_increase_strictly() {
        let point = |pressure_pa| PressurePoint {
            pressure_pa,
            rate_sets: vec![arrhenius(1.0)],
        };
        let mut table = step(0, 1, arrhenius(1.0));
        table.pressure_dependence = Some(PressureDependence::Table {
            points: vec![point(1e5), point(1e4)],
        });
        let mechanism = Mechanism {
            species: vec![species("A"), species("B")],
            steps: vec![table],
            ..Mechanism::default()
        };
        assert_eq!(
            mechanism.validate(),
            Err(vec![MechanismProblem::Inconsistent {
                item: MechanismItem::Step(0),
                reason: "the pressures of a pressure table do not increase strictly",
            }])
        );
    }
}
