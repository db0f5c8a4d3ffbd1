//! The typed result of a diff: [`MechanismDiff`] and its [`Edit`]s.

use stoik_mechanism::{Arrhenius, PressureDependence};

/// Thermochemistry of one species compared between the two mechanisms: formation enthalpy
/// H(298.15 K) and Gibbs energy G(1000 K) = H - T S at the standard pressure 1e5 Pa, from the
/// NASA 7-coefficient polynomials (McBride, Gordon & Reno 1993, NASA TM-4513). `None` where a
/// mechanism gives the species no thermochemistry.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThermoChange {
    /// H(298.15 K) in the old mechanism, J/mol.
    pub old_h298_j_per_mol: Option<f64>,
    /// H(298.15 K) in the new mechanism, J/mol.
    pub new_h298_j_per_mol: Option<f64>,
    /// G(1000 K) in the old mechanism, J/mol.
    pub old_g1000_j_per_mol: Option<f64>,
    /// G(1000 K) in the new mechanism, J/mol.
    pub new_g1000_j_per_mol: Option<f64>,
}

impl ThermoChange {
    /// H_new(298.15 K) - H_old(298.15 K) in J/mol, when both mechanisms give thermochemistry.
    pub fn delta_h298_j_per_mol(&self) -> Option<f64> {
        Some(self.new_h298_j_per_mol? - self.old_h298_j_per_mol?)
    }

    /// G_new(1000 K) - G_old(1000 K) in J/mol, when both mechanisms give thermochemistry.
    pub fn delta_g1000_j_per_mol(&self) -> Option<f64> {
        Some(self.new_g1000_j_per_mol? - self.old_g1000_j_per_mol?)
    }
}

/// The collision partner of a step, by species name.
#[derive(Debug, Clone, PartialEq)]
pub enum Collider {
    /// No third body.
    None,
    /// Every species collides with its efficiency (a mixture third body).
    Mixture,
    /// Only the named species collides.
    Species(String),
}

/// One third-body efficiency that differs between the two mechanisms (dimensionless).
#[derive(Debug, Clone, PartialEq)]
pub struct EfficiencyChange {
    /// The species, or `None` for the default efficiency of unlisted species.
    pub species: Option<String>,
    /// Its efficiency in the old step (the old default when it is not listed there).
    pub old: f64,
    /// Its efficiency in the new step (the new default when it is not listed there).
    pub new: f64,
}

/// What differs in a matched step (beyond the tolerance of [`crate::DiffOptions`]).
#[derive(Debug, Clone, PartialEq)]
pub enum StepAspect {
    /// Forward Arrhenius parameters (SI): for a falloff step the high-pressure limit, for a
    /// chemically activated step the low-pressure limit. When the new step is written the
    /// other way round ([`StepAspect::Orientation`]), `new` is its reverse parameters.
    Forward {
        /// Old parameters.
        old: Arrhenius,
        /// New parameters.
        new: Arrhenius,
    },
    /// Explicit reverse Arrhenius parameters (SI); `None`: from thermochemistry (kf/Kc) or
    /// none (one-way step).
    Reverse {
        /// Old parameters.
        old: Option<Arrhenius>,
        /// New parameters.
        new: Option<Arrhenius>,
    },
    /// One-way (`->`) against both ways (`<=>`).
    Reversibility {
        /// The old step runs both ways.
        old: bool,
        /// The new step runs both ways.
        new: bool,
    },
    /// The new step is written the other way round (its reactants are the old products) and
    /// its parameters are not the old ones swapped.
    Orientation,
    /// The kind of collision partner.
    ThirdBody {
        /// Old partner.
        old: Collider,
        /// New partner.
        new: Collider,
    },
    /// Third-body efficiencies of a mixture partner (both steps have one).
    Efficiencies(Vec<EfficiencyChange>),
    /// The pressure dependence (falloff, chemically activated, pressure table, or none) or
    /// one of its parameters (SI).
    PressureDependence {
        /// Old form.
        old: Option<PressureDependence>,
        /// New form.
        new: Option<PressureDependence>,
    },
    /// Explicit forward reaction orders.
    ReactionOrders,
}

/// The ratio of a matched step's rate constants, new over old, at one condition. Both are the
/// compiled kinetics' effective rate constants (for a third-body step they include [M], for
/// a pressure-dependent step the falloff or table factor) at the bath gas of
/// [`crate::DiffOptions`], in the old step's direction. May be NaN or infinite when an old
/// rate constant underflows to 0 or overflows.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RateRatio {
    /// Temperature, K.
    pub temperature_k: f64,
    /// Pressure of the bath gas, Pa; `None` for a step whose rate constant does not depend on
    /// the bath gas in either mechanism (no third body, no pressure dependence).
    pub pressure_pa: Option<f64>,
    /// k_new / k_old of the forward direction (dimensionless).
    pub forward: f64,
    /// kr_new / kr_old, when both steps run both ways (explicit reverse parameters or kf/Kc
    /// from thermochemistry); `None` otherwise.
    pub reverse: Option<f64>,
}

/// One kinetic edit between the old and the new mechanism. Indices are 0-based positions in
/// `Mechanism::species` or `Mechanism::steps` of the mechanism named by the field.
#[derive(Debug, Clone, PartialEq)]
pub enum Edit {
    /// A species only the new mechanism declares.
    SpeciesAdded {
        /// Its name.
        name: String,
        /// Index in the new mechanism.
        new_index: usize,
    },
    /// A species only the old mechanism declares.
    SpeciesRemoved {
        /// Its name.
        name: String,
        /// Index in the old mechanism.
        old_index: usize,
    },
    /// A species whose elemental composition changed (`None`: abstract species).
    SpeciesComposition {
        /// Its name.
        name: String,
        /// Index in the old mechanism.
        old_index: usize,
        /// Index in the new mechanism.
        new_index: usize,
        /// Old composition as (element symbol, atom count), sorted by symbol.
        old: Option<Vec<(String, f64)>>,
        /// New composition as (element symbol, atom count), sorted by symbol.
        new: Option<Vec<(String, f64)>>,
    },
    /// A species whose thermochemistry (NASA 7-coefficient polynomials) changed, appeared or
    /// disappeared.
    SpeciesThermo {
        /// Its name.
        name: String,
        /// Index in the old mechanism.
        old_index: usize,
        /// Index in the new mechanism.
        new_index: usize,
        /// H(298.15 K) and G(1000 K) before and after.
        change: ThermoChange,
        /// New-mechanism indices of the steps present in both mechanisms whose reverse rate
        /// constant comes from thermochemistry (kf/Kc) and involves this species: their
        /// reverse rates move with this edit.
        reverse_rates_affected: Vec<usize>,
    },
    /// A step only the new mechanism has.
    StepAdded {
        /// Its canonical equation (see [`crate::canonical_equation`]).
        equation: String,
        /// Index in the new mechanism.
        new_index: usize,
    },
    /// A step only the old mechanism has.
    StepRemoved {
        /// Its canonical equation.
        equation: String,
        /// Index in the old mechanism.
        old_index: usize,
    },
    /// A step of both mechanisms (same canonical equation) whose kinetics changed.
    StepChanged {
        /// The canonical equation.
        equation: String,
        /// Index in the old mechanism.
        old_index: usize,
        /// Index in the new mechanism.
        new_index: usize,
        /// What differs.
        aspects: Vec<StepAspect>,
        /// k_new/k_old at every temperature (and pressure, for steps that depend on the bath
        /// gas) of the options.
        ratios: Vec<RateRatio>,
    },
}

impl Edit {
    /// A short description: `step changed: H + O2 <=> O + OH`, `species added: CH4`.
    pub fn describe(&self) -> String {
        match self {
            Edit::SpeciesAdded { name, .. } => format!("species added: {name}"),
            Edit::SpeciesRemoved { name, .. } => format!("species removed: {name}"),
            Edit::SpeciesComposition { name, .. } => format!("species composition: {name}"),
            Edit::SpeciesThermo { name, .. } => format!("species thermochemistry: {name}"),
            Edit::StepAdded { equation, .. } => format!("step added: {equation}"),
            Edit::StepRemoved { equation, .. } => format!("step removed: {equation}"),
            Edit::StepChanged { equation, .. } => format!("step changed: {equation}"),
        }
    }
}

/// The kinetic edits between two mechanisms, from [`crate::diff_mechanisms`].
#[derive(Debug, Clone, PartialEq)]
pub struct MechanismDiff {
    /// Every edit: species edits in old order (removed, composition, thermochemistry), then
    /// added species in new order; then step edits in old order (changed, removed), then added
    /// steps in new order.
    pub edits: Vec<Edit>,
    /// Steps present in both mechanisms without kinetic change, as (old index, new index).
    pub unchanged_steps: Vec<(usize, usize)>,
    /// Temperatures of the ratios, K.
    pub temperatures_k: Vec<f64>,
    /// Bath-gas pressures of the ratios of pressure-dependent steps, Pa.
    pub pressures_pa: Vec<f64>,
    /// Relative tolerance under which two SI values count as equal.
    pub relative_tolerance: f64,
    /// Number of species of the old and of the new mechanism.
    pub species_counts: (usize, usize),
    /// Number of steps of the old and of the new mechanism.
    pub step_counts: (usize, usize),
}

impl MechanismDiff {
    /// Whether the mechanisms differ kinetically (at least one edit).
    pub fn has_kinetic_change(&self) -> bool {
        !self.edits.is_empty()
    }
}
