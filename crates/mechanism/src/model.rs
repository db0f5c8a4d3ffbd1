//! The in-memory mechanism: elements, species and steps, every number in SI units.
//!
//! Invariants (guaranteed by the loaders in this crate, relied on by `stoik-kinetics`):
//! - every species index in a step is `< species.len()`;
//! - every element index in a composition is `< elements.len()`;
//! - every rate parameter is finite and every pre-exponential factor is positive;
//! - pre-exponential factors are in SI: (mol/m3)^(1-m) / s for a step of overall order m
//!   (a third body counts one more), activation energies in J/mol;
//! - a reversible step without explicit reverse parameters (`reverse == None`) has
//!   thermochemistry ([`Species::thermo`]) for every species of its equation, so that its
//!   reverse rate constant follows from the equilibrium constant (kr = kf / Kc).

/// Where an item came from in a text file: 1-based line and column.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct SourceLocation {
    /// 1-based line number.
    pub line: usize,
    /// 1-based column number (in characters).
    pub column: usize,
}

/// A chemical element with its standard atomic weight.
#[derive(Debug, Clone, PartialEq)]
pub struct Element {
    /// Element symbol as written in species compositions, e.g. `"O"`.
    pub symbol: String,
    /// Standard atomic weight in kg/mol (IUPAC abridged value / 1000).
    pub atomic_weight_kg_per_mol: f64,
}

/// A species of the mechanism.
#[derive(Debug, Clone, PartialEq)]
pub struct Species {
    /// Name as written in equations, e.g. `"O(1D)"` or `"1,3-C4H6"`.
    pub name: String,
    /// Elemental composition as (element index, atom count) pairs; `None` for an abstract
    /// species (lumped species, test problems), which is then left out of balance checks.
    pub composition: Option<Vec<(usize, f64)>>,
    /// Free-text note from the file.
    pub note: Option<String>,
    /// Where the species was declared, if it came from a file.
    pub location: Option<SourceLocation>,
    /// Ideal-gas thermochemistry: NASA 7-coefficient polynomials (McBride, Gordon & Reno
    /// 1993, NASA TM-4513) for cp/R, H/(R T) and S/R at the standard pressure 1e5 Pa, with
    /// absolute enthalpies (H(298.15 K) is the formation enthalpy). `None` when the
    /// mechanism gives none; then reversible steps of this species need explicit reverse
    /// rate parameters.
    pub thermo: Option<stoik_thermo::Nasa7>,
    /// Hard-sphere collision diameter in m (file: `collision_diameter_nm`), used for the
    /// collision-limit plausibility check; `None` when not given.
    pub collision_diameter_m: Option<f64>,
}

/// One species with its stoichiometric coefficient on one side of a step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct StoichTerm {
    /// Index into [`Mechanism::species`].
    pub species: usize,
    /// Stoichiometric coefficient (positive; may be non-integer).
    pub coefficient: f64,
}

/// Modified Arrhenius rate constant `k = A T^n exp(-Ea / (R T))` in SI units.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Arrhenius {
    /// Pre-exponential factor A in SI: (mol/m3)^(1-m) / s for overall order m, per K^n.
    pub pre_exponential_si: f64,
    /// Temperature exponent n (dimensionless).
    pub temperature_exponent: f64,
    /// Activation energy Ea in J/mol.
    pub activation_energy_j_per_mol: f64,
}

impl Arrhenius {
    /// Evaluates `k(T)` in SI units at temperature `temperature_k` (K).
    pub fn rate_constant(&self, temperature_k: f64) -> f64 {
        let mut k = self.pre_exponential_si;
        if self.temperature_exponent != 0.0 {
            k *= temperature_k.powf(self.temperature_exponent);
        }
        if self.activation_energy_j_per_mol != 0.0 {
            k *= (-self.activation_energy_j_per_mol / (crate::GAS_CONSTANT * temperature_k)).exp();
        }
        k
    }
}

/// The collision partner of a third-body step.
#[derive(Debug, Clone, PartialEq)]
pub enum ThirdBody {
    /// Every species collides: `[M] = sum_i eff_i c_i`, with `eff_i = default_efficiency`
    /// unless overridden.
    Mixture {
        /// Efficiency of species not listed in `efficiencies` (dimensionless, usually 1).
        default_efficiency: f64,
        /// Per-species overrides as (species index, efficiency).
        efficiencies: Vec<(usize, f64)>,
    },
    /// Only one named species collides: `[M] = c_species`.
    Species(usize),
}

/// An elementary (or global) step.
#[derive(Debug, Clone, PartialEq)]
pub struct Step {
    /// The equation text as written in the file.
    pub equation: String,
    /// Reactant side (may be empty: a constant source).
    pub reactants: Vec<StoichTerm>,
    /// Product side (may be empty: a sink).
    pub products: Vec<StoichTerm>,
    /// Whether the step runs in both directions.
    pub reversible: bool,
    /// Forward rate constant.
    pub forward: Arrhenius,
    /// Explicit reverse rate constant; only reversible steps may have one. A reversible
    /// step with `None` takes its reverse rate constant from thermochemistry:
    /// kr(T) = kf(T) / Kc(T), which needs [`Species::thermo`] for all its species.
    pub reverse: Option<Arrhenius>,
    /// Collision partner, for third-body steps.
    pub third_body: Option<ThirdBody>,
    /// Explicit forward reaction orders as (species index, order); `None` means the orders
    /// equal the reactant stoichiometric coefficients.
    pub forward_orders: Option<Vec<(usize, f64)>>,
    /// The file declares this step a deliberate duplicate of another with the same
    /// stoichiometry (their rates add).
    pub allow_duplicate: bool,
    /// Free-text note from the file.
    pub note: Option<String>,
    /// Where the step was declared, if it came from a file.
    pub location: Option<SourceLocation>,
}

impl Step {
    /// Indices of the species of this step's equation (reactants, then products, each once;
    /// a third-body collider is not part of the equation) that have no
    /// [`Species::thermo`] in `species` (the mechanism's species list). Indices out of
    /// range count as lacking thermochemistry.
    pub fn species_lacking_thermo(&self, species: &[Species]) -> Vec<usize> {
        let mut out: Vec<usize> = Vec::new();
        for term in self.reactants.iter().chain(&self.products) {
            let has = species
                .get(term.species)
                .is_some_and(|s| s.thermo.is_some());
            if !has && !out.contains(&term.species) {
                out.push(term.species);
            }
        }
        out
    }

    /// Whether the reverse rate constant comes from thermochemistry (a reversible step
    /// without explicit reverse parameters).
    pub fn reverse_from_thermo(&self) -> bool {
        self.reversible && self.reverse.is_none()
    }

    /// Overall forward order m (sum of forward orders, plus one for a third body): the
    /// pre-exponential factor has units (mol/m3)^(1-m)/s.
    pub fn forward_order(&self) -> f64 {
        let base: f64 = match &self.forward_orders {
            Some(orders) => orders.iter().map(|(_, o)| o).sum(),
            None => self.reactants.iter().map(|t| t.coefficient).sum(),
        };
        base + if self.third_body.is_some() { 1.0 } else { 0.0 }
    }

    /// Overall reverse order (sum of product coefficients, plus one for a third body).
    pub fn reverse_order(&self) -> f64 {
        let base: f64 = self.products.iter().map(|t| t.coefficient).sum();
        base + if self.third_body.is_some() { 1.0 } else { 0.0 }
    }
}

/// A validated mechanism in SI units.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Mechanism {
    /// Optional title from the file.
    pub title: Option<String>,
    /// Elements used by species compositions.
    pub elements: Vec<Element>,
    /// Species; their order is the order of the state vector everywhere in stoik.
    pub species: Vec<Species>,
    /// Steps in file order.
    pub steps: Vec<Step>,
}

impl Mechanism {
    /// Index of the species called `name`, if any.
    pub fn species_index(&self, name: &str) -> Option<usize> {
        self.species.iter().position(|s| s.name == name)
    }

    /// Molar mass (kg/mol) of species `species` from its composition and the standard
    /// atomic weights; `None` for an abstract species or an index out of range.
    pub fn molar_mass_kg_per_mol(&self, species: usize) -> Option<f64> {
        let atoms = self.species.get(species)?.composition.as_ref()?;
        Some(
            atoms
                .iter()
                .map(|&(e, n)| n * self.elements[e].atomic_weight_kg_per_mol)
                .sum(),
        )
    }

    /// Element totals (mol/m3 of atoms) for concentrations `concentrations_mol_per_m3`,
    /// one entry per element; abstract species contribute nothing.
    pub fn element_totals(&self, concentrations_mol_per_m3: &[f64]) -> Vec<f64> {
        let mut totals = vec![0.0; self.elements.len()];
        for (species, &c) in self.species.iter().zip(concentrations_mol_per_m3) {
            if let Some(composition) = &species.composition {
                for &(element, count) in composition {
                    totals[element] += count * c;
                }
            }
        }
        totals
    }
}
