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
//!
//! A mechanism built by hand is checked against them (and a few SI sanity bounds) with
//! [`Mechanism::validate`].

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
    /// Evaluates `k(T)` in SI units at temperature `temperature_k` (K). Finite whenever k is:
    /// when a factor over- or underflows on its own (a tiny A times a huge T^n), k is formed in
    /// logarithms.
    pub fn rate_constant(&self, temperature_k: f64) -> f64 {
        let mut k = self.pre_exponential_si;
        if self.temperature_exponent != 0.0 {
            k *= temperature_k.powf(self.temperature_exponent);
        }
        if self.activation_energy_j_per_mol != 0.0 {
            k *= (-self.activation_energy_j_per_mol / (crate::GAS_CONSTANT * temperature_k)).exp();
        }
        if k.is_finite() && k != 0.0 || self.pre_exponential_si <= 0.0 || !temperature_k.is_finite()
        {
            k
        } else {
            // A factor over- or underflowed on its own (1e-50 x 3500^100): the product in
            // logarithms, finite whenever k itself is.
            (self.pre_exponential_si.ln() + self.temperature_exponent * temperature_k.ln()
                - self.activation_energy_j_per_mol / (crate::GAS_CONSTANT * temperature_k))
                .exp()
        }
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

/// The broadening factor F of a falloff step, a function of the reduced pressure
/// `Pr = k0 [M] / kinf` and the temperature. Temperatures are in K.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Broadening {
    /// F = 1 (Lindemann-Hinshelwood).
    Lindemann,
    /// Troe form (Gilbert, Luther & Troe, Ber. Bunsenges. Phys. Chem. 87, 169, 1983):
    /// log10 F = log10 Fcent / (1 + ((log10 Pr + c) / (n - 0.14 (log10 Pr + c)))^2) with
    /// c = -0.4 - 0.67 log10 Fcent, n = 0.75 - 1.27 log10 Fcent and
    /// Fcent = (1 - a) exp(-T/T3) + a exp(-T/T1) + exp(-T2/T) (the last term only in the
    /// 4-parameter form).
    Troe {
        /// Weight a (dimensionless).
        a: f64,
        /// T3 in K (positive).
        t3_k: f64,
        /// T1 in K (positive).
        t1_k: f64,
        /// T2 in K; `None` for the 3-parameter form.
        t2_k: Option<f64>,
    },
    /// SRI form (Stewart, Larson & Golden, Combust. Flame 75, 25, 1989):
    /// F = d [a exp(-b/T) + exp(-T/c)]^X T^e with X = 1 / (1 + (log10 Pr)^2); the
    /// 3-parameter form has d = 1 and e = 0.
    Sri {
        /// a (dimensionless).
        a: f64,
        /// b in K.
        b_k: f64,
        /// c in K (positive).
        c_k: f64,
        /// d (dimensionless, positive).
        d: f64,
        /// e (dimensionless temperature exponent).
        e: f64,
    },
    /// A temperature-independent centre: F = Fc^(1 / (1 + (log10 Pr)^2)), the form of the
    /// atmospheric evaluations (JPL Publication 19-5, Burkholder et al. 2019, section 2,
    /// with Fc = 0.6).
    FixedCenter {
        /// Fc (dimensionless, in (0, 1]).
        center: f64,
    },
}

/// One tabulated pressure of a pressure table with the Arrhenius sets that apply there
/// (their rate constants add).
#[derive(Debug, Clone, PartialEq)]
pub struct PressurePoint {
    /// Pressure in Pa (positive).
    pub pressure_pa: f64,
    /// One or more rate-constant sets, summed; SI units of the step's forward order.
    pub rate_sets: Vec<Arrhenius>,
}

/// How a step's forward rate constant depends on pressure (through the bath-gas
/// concentration `[M]` or the total pressure).
#[derive(Debug, Clone, PartialEq)]
pub enum PressureDependence {
    /// Falloff between a low-pressure limit k0 and a high-pressure limit kinf with reduced
    /// pressure `Pr = k0 [M] / kinf`, `[M]` from [`Step::third_body`]:
    /// - unimolecular/recombination falloff (`chemically_activated == false`):
    ///   `k = kinf Pr / (1 + Pr) F`; [`Step::forward`] is a copy of `high_pressure`;
    /// - chemically activated step (`chemically_activated == true`):
    ///   `k = k0 / (1 + Pr) F`; [`Step::forward`] is a copy of `low_pressure`.
    ///
    /// The low-pressure prefactor's order is one higher than the high-pressure one's.
    Falloff {
        /// k0: (mol/m3)^(-m)/s for a falloff step of reactant order m, (mol/m3)^(1-m)/s for
        /// a chemically activated one.
        low_pressure: Arrhenius,
        /// kinf: (mol/m3)^(1-m)/s for a falloff step, (mol/m3)^(2-m)/s for a chemically
        /// activated one.
        high_pressure: Arrhenius,
        /// Broadening factor F.
        broadening: Broadening,
        /// Whether this is a chemically activated step (see above).
        chemically_activated: bool,
    },
    /// Rate constants tabulated at several pressures, `ln k` interpolated linearly in
    /// `ln P` and held at the nearest end outside the table. The pressure is the ideal-gas
    /// pressure of the mixture, `P = (sum_i c_i) R T`. [`Step::forward`] is a copy of the
    /// first set at the highest pressure (for reports).
    Table {
        /// Points in increasing, distinct pressure (at least one).
        points: Vec<PressurePoint>,
    },
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
    /// Collision partner, for third-body steps; for a falloff step the bath gas whose
    /// concentration `[M]` enters the reduced pressure (it then multiplies no rate).
    pub third_body: Option<ThirdBody>,
    /// Pressure dependence of the forward rate constant (`None`: plain Arrhenius). A
    /// reversible pressure-dependent step takes its reverse rate constant from
    /// thermochemistry, kr = kf / Kc (it has no explicit `reverse`).
    pub pressure_dependence: Option<PressureDependence>,
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

    /// Overall forward order m (sum of forward orders, plus one for a third body that
    /// multiplies the rate): [`Step::forward`]'s pre-exponential factor has units
    /// (mol/m3)^(1-m)/s. The bath gas of a pressure-dependent step does not count.
    pub fn forward_order(&self) -> f64 {
        let base: f64 = match &self.forward_orders {
            Some(orders) => orders.iter().map(|(_, o)| o).sum(),
            None => self.reactants.iter().map(|t| t.coefficient).sum(),
        };
        base + self.third_body_order()
    }

    /// Overall reverse order (sum of product coefficients, plus one for a third body that
    /// multiplies the rate).
    pub fn reverse_order(&self) -> f64 {
        let base: f64 = self.products.iter().map(|t| t.coefficient).sum();
        base + self.third_body_order()
    }

    /// 1 when a third body multiplies the rate (a third-body step that is not pressure
    /// dependent), else 0.
    fn third_body_order(&self) -> f64 {
        if self.third_body.is_some() && self.pressure_dependence.is_none() {
            1.0
        } else {
            0.0
        }
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
    /// atomic weights; `None` for an abstract species, an index out of range or a
    /// composition that names an element index out of range.
    pub fn molar_mass_kg_per_mol(&self, species: usize) -> Option<f64> {
        let atoms = self.species.get(species)?.composition.as_ref()?;
        atoms.iter().try_fold(0.0, |sum, &(e, n)| {
            Some(sum + n * self.elements.get(e)?.atomic_weight_kg_per_mol)
        })
    }

    /// Element totals (mol/m3 of atoms) for concentrations `concentrations_mol_per_m3`,
    /// one entry per element; abstract species contribute nothing (nor do element indices
    /// out of range, which [`Mechanism::validate`] reports).
    pub fn element_totals(&self, concentrations_mol_per_m3: &[f64]) -> Vec<f64> {
        let mut totals = vec![0.0; self.elements.len()];
        for (species, &c) in self.species.iter().zip(concentrations_mol_per_m3) {
            for &(element, count) in species.composition.iter().flatten() {
                if let Some(total) = totals.get_mut(element) {
                    *total += count * c;
                }
            }
        }
        totals
    }
}
