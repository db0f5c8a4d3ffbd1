//! Conservation laws of a reactor and their drift along a profile.
//!
//! The laws are those of the mechanism ([`stoik_kinetics::conservation_laws`]) with the
//! reactor's conditions applied:
//! - a box model's fixed, emitted and deposited species exchange matter with the
//!   surroundings (or are held by them): no law involves them;
//! - at constant volume, `l^T c` (mol/m3) is invariant;
//! - at constant pressure the volume changes, so `l^T c` is not invariant but the amount
//!   `l^T c V` is; with the mass `rho V` also invariant (rho = sum_i c_i M_i in kg/m3), the
//!   checked value is `l^T c / rho` in mol/kg. That needs the molar mass of every species
//!   and steps that conserve mass, otherwise the check is unavailable
//!   ([`ConservationCheckError`]).
//!
//! Why a drift is a symptom: with `l^T w(c) = 0` for every `c`, also `l^T J = 0` for the
//! analytic Jacobian `J = dw/dc` at any state, so `l^T (I - h gamma J) = l^T`. Each Newton
//! correction of the BDF method then changes `l^T c` by exactly what makes the new state
//! satisfy the BDF formula's linear combination of past states, which preserves `l^T c`;
//! the interpolation to output times is a linear combination of such states too. In exact
//! arithmetic BDF keeps linear invariants exactly, even with unconverged Newton iterations
//! (common practice; Shampine, "Conservation laws and the numerical solution of ODEs",
//! Comput. Math. Appl. 12B, 1986, cited from memory). At constant pressure `l^T c` and `rho` obey the same
//! linear equation `y' = -g y` with the same scalar `g` in each BDF step, so their ratio is
//! kept too. What remains is rounding and the non-negativity projection (which moves each
//! species by at most its absolute tolerance, see [`crate::IntegrationOptions::non_negative`]).
//!
//! The allowance ([`ConservationDrift::allowed`]) of a law with coefficients `l` is
//!
//! `allowed = rtol S + (1 + P) sum_i |l_i| atol_i + 8 eps (n + 1) S`,
//!
//! with `S = max over rows of sum_i |l_i| |c_i|` (the law's scale), `P` the number of
//! projections onto `c >= 0` (the steps retried because they went negative), `n` the number
//! of accepted steps and `eps` the f64 machine epsilon (per-mass values divide each term by
//! the row's density, the atol term by the smallest density). The first two terms are what
//! the error test would let one step put into `l^T c` if every species carried its full
//! per-step tolerance `rtol |c_i| + atol_i` (plus one `atol` per projection); the last bounds
//! the rounding of `n` steps, each a few operations per species. A drift above the allowance
//! means something other than the method's truncation error broke the invariant: rounding
//! amplified by an ill-conditioned Newton matrix, many projections, or a model error.

use stoik_kinetics::{conservation_laws, ConservationError, ConservationLaw};
use stoik_mechanism::Mechanism;

use crate::{Constraint, IntegrationOptions, Profiles, ReactorModel};

/// Rounding allowed per accepted step, in units of `eps S` (see the module documentation).
pub const ROUNDING_PER_STEP: f64 = 8.0;

/// What the values of a reactor's conservation laws are measured per.
#[derive(Debug, Clone, PartialEq)]
pub enum ConservationBasis {
    /// Per unit volume, `l^T c` in mol/m3: constant-volume reactors.
    PerVolume,
    /// Per unit mass, `l^T c / rho` in mol/kg with `rho = sum_i c_i M_i`: constant-pressure
    /// reactors, whose volume changes while their mass stays.
    PerMass {
        /// Molar mass of every species (kg/mol), in mechanism order.
        molar_masses_kg_per_mol: Vec<f64>,
    },
}

impl ConservationBasis {
    /// The unit of the laws' values: `"mol/m3"` or `"mol/kg"`.
    pub fn unit(&self) -> &'static str {
        match self {
            ConservationBasis::PerVolume => "mol/m3",
            ConservationBasis::PerMass { .. } => "mol/kg",
        }
    }

    /// The divisor of a row's values: 1, or the mass density (kg/m3).
    fn divisor(&self, c: &[f64]) -> f64 {
        match self {
            ConservationBasis::PerVolume => 1.0,
            ConservationBasis::PerMass {
                molar_masses_kg_per_mol,
            } => c
                .iter()
                .zip(molar_masses_kg_per_mol)
                .map(|(c, m)| c * m)
                .sum(),
        }
    }
}

/// Why a reactor's conservation laws cannot be checked.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ConservationCheckError {
    /// The mechanism's laws could not be computed exactly.
    #[error(transparent)]
    Laws(#[from] ConservationError),
    /// Constant pressure needs molar masses (the check is per unit mass).
    #[error("at constant pressure the volume changes and conservation is checked per unit mass, which needs the composition of every species (`{species}` has none)")]
    NoMolarMass {
        /// A species without composition.
        species: String,
    },
    /// Constant pressure needs steps that conserve mass.
    #[error("at constant pressure conservation is checked per unit mass, but step {step} (`{equation}`) changes the mass")]
    MassNotConserved {
        /// 1-based step number.
        step: usize,
        /// The step's equation.
        equation: String,
    },
}

/// The conservation laws of a mechanism in a reactor.
#[derive(Debug, Clone, PartialEq)]
pub struct ReactorConservation {
    /// The laws (see [`stoik_kinetics::conservation_laws`]), none involving an open species.
    pub laws: Vec<ConservationLaw>,
    /// Species exchanged with the surroundings or held by them (box-model fixed, emitted
    /// and deposited species), sorted.
    pub open_species: Vec<usize>,
    /// Per volume or per mass.
    pub basis: ConservationBasis,
}

/// How far one conservation law drifted along a profile. Values are in the unit of the
/// basis ([`ConservationBasis::unit`]: mol/m3 or mol/kg).
#[derive(Debug, Clone, PartialEq)]
pub struct ConservationDrift {
    /// The law's name (e.g. `"H atoms"`, `"A + B + C"`).
    pub name: String,
    /// The law's value in the first row.
    pub initial_value: f64,
    /// Largest `|value(t) - value(t0)|` over the rows.
    pub max_drift: f64,
    /// Time (s) of the row with the largest drift (the first row when nothing drifted).
    pub time_of_max_drift_s: f64,
    /// The law's scale `S`: largest `sum_i |l_i| |c_i|` over the rows.
    pub scale: f64,
    /// `max_drift / scale` (dimensionless); 0 when the scale is 0.
    pub relative_drift: f64,
    /// The drift the tolerances allow (module documentation).
    pub allowed: f64,
    /// Whether `max_drift > allowed`.
    pub exceeded: bool,
}

impl ReactorConservation {
    /// The conservation laws of `mechanism` in the reactor `model`.
    pub fn new(
        mechanism: &Mechanism,
        model: &ReactorModel,
    ) -> Result<ReactorConservation, ConservationCheckError> {
        let b = &model.conditions;
        let mut open_species: Vec<usize> = b
            .fixed_species
            .iter()
            .copied()
            .chain(b.emissions.iter().map(|e| e.0))
            .chain(b.deposition.iter().map(|d| d.0))
            .collect();
        if model.flow.is_some() || model.semi_batch.is_some() {
            // A stirred tank exchanges every species with its feed and outflow; a
            // semi-batch's feeds and changing volume move every concentration.
            open_species = (0..mechanism.species.len()).collect();
        }
        open_species.sort_unstable();
        open_species.dedup();
        let basis = match model.constraint {
            Constraint::ConstantVolume => ConservationBasis::PerVolume,
            Constraint::ConstantPressure => {
                let mut masses = Vec::with_capacity(mechanism.species.len());
                for (i, s) in mechanism.species.iter().enumerate() {
                    match mechanism.molar_mass_kg_per_mol(i) {
                        Some(m) => masses.push(m),
                        None => {
                            return Err(ConservationCheckError::NoMolarMass {
                                species: s.name.clone(),
                            })
                        }
                    }
                }
                for (j, step) in mechanism.steps.iter().enumerate() {
                    let mut change = Vec::new();
                    let signed = step
                        .products
                        .iter()
                        .map(|t| (t, 1.0))
                        .chain(step.reactants.iter().map(|t| (t, -1.0)));
                    for (t, sign) in signed {
                        // A hand-built mechanism may name a species it lacks.
                        let mass = masses
                            .get(t.species)
                            .ok_or(ConservationError::SpeciesOutOfRange(t.species))?;
                        change.push(sign * mass * t.coefficient);
                    }
                    let (net, size) = change
                        .iter()
                        .fold((0.0f64, 0.0f64), |(n, s), x| (n + x, s + x.abs()));
                    if net.abs() > 1e-9 * size {
                        return Err(ConservationCheckError::MassNotConserved {
                            step: j + 1,
                            equation: step.equation.clone(),
                        });
                    }
                }
                ConservationBasis::PerMass {
                    molar_masses_kg_per_mol: masses,
                }
            }
        };
        Ok(ReactorConservation {
            laws: conservation_laws(mechanism, &open_species)?,
            open_species,
            basis,
        })
    }

    /// The drift of every law along `profiles` integrated with `options` (its relative and
    /// absolute tolerances enter the allowance); one entry per law, in order. An empty
    /// profile gives zero drifts; per unit mass, rows without mass (density not positive) are
    /// skipped.
    pub fn drifts(
        &self,
        profiles: &Profiles,
        options: &IntegrationOptions,
    ) -> Vec<ConservationDrift> {
        let rows = &profiles.concentrations_mol_per_m3;
        let divisors: Vec<f64> = rows.iter().map(|c| self.basis.divisor(c)).collect();
        let smallest_divisor = divisors
            .iter()
            .filter(|d| **d > 0.0 && d.is_finite())
            .fold(f64::INFINITY, |m, &d| m.min(d));
        let stats = &profiles.stats;
        self.laws
            .iter()
            .map(|law| {
                let mut initial_value = 0.0;
                let mut max_drift: f64 = 0.0;
                let mut time_of_max_drift_s = profiles.times_s.first().copied().unwrap_or(0.0);
                let mut scale: f64 = 0.0;
                let mut first = true;
                for (r, c) in rows.iter().enumerate() {
                    let divisor = divisors[r];
                    if !(divisor > 0.0 && divisor.is_finite()) {
                        continue; // a per-mass row without mass
                    }
                    let value = law.value(c) / divisor;
                    let size: f64 = law
                        .terms()
                        .map(|(i, l)| (l * c.get(i).copied().unwrap_or(0.0)).abs())
                        .sum::<f64>()
                        / divisor;
                    scale = scale.max(size);
                    if first {
                        initial_value = value;
                        first = false;
                    } else if (value - initial_value).abs() > max_drift {
                        max_drift = (value - initial_value).abs();
                        time_of_max_drift_s = profiles.times_s.get(r).copied().unwrap_or(0.0);
                    }
                }
                let atol_term: f64 = law
                    .terms()
                    .map(|(i, l)| {
                        l.abs()
                            * options
                                .absolute_tolerances_mol_per_m3
                                .get(i)
                                .copied()
                                .unwrap_or(0.0)
                    })
                    .sum::<f64>()
                    / if smallest_divisor.is_finite() {
                        smallest_divisor
                    } else {
                        1.0
                    };
                let projections = stats.negative_step_rejections as f64;
                let allowed = options.relative_tolerance * scale
                    + (1.0 + projections) * atol_term
                    + ROUNDING_PER_STEP * f64::EPSILON * (stats.steps as f64 + 1.0) * scale;
                ConservationDrift {
                    name: law.name.clone(),
                    initial_value,
                    max_drift,
                    time_of_max_drift_s,
                    scale,
                    relative_drift: if scale > 0.0 { max_drift / scale } else { 0.0 },
                    allowed,
                    exceeded: max_drift > allowed,
                }
            })
            .collect()
    }
}
