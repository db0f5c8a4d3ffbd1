//! What a run produces: the profiles at the output times, their checks and derived
//! quantities (pressure, mole fractions), and the element balance along them.

use crate::{LinearAlgebra, Located, ReactorError, SolverStats, Watch};
use stoik_mechanism::Mechanism;

/// Concentration-time profiles of one run.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Profiles {
    /// Output times in s (those requested, in order).
    pub times_s: Vec<f64>,
    /// Concentrations in mol/m3: one row per output time, each with one value per species in
    /// mechanism order.
    pub concentrations_mol_per_m3: Vec<Vec<f64>>,
    /// Temperature (K) at each output time.
    pub temperatures_k: Vec<f64>,
    /// dT/dt (K/s) at each output time, from the model's equations (0 when isothermal);
    /// empty for the one-row partial profile of a stepping session.
    pub temperature_rates_k_per_s: Vec<f64>,
    /// Volume (m3) at each output time for a model that tracks it (a
    /// [`SemiBatch`](crate::SemiBatch)); empty otherwise.
    pub volumes_m3: Vec<f64>,
    /// Solver statistics of the run.
    pub stats: SolverStats,
    /// The linear algebra actually used ([`LinearAlgebra::Dense`] or
    /// [`LinearAlgebra::Sparse`]).
    pub linear_algebra_used: LinearAlgebra,
    /// Each watch of [`IntegrationOptions::watch`](crate::IntegrationOptions::watch) with what it found on the solver's steps
    /// (`None`: a crossing not reached); on a failure, what was found up to it.
    pub located: Vec<(Watch, Option<Located>)>,
}

impl Profiles {
    /// Checks that the vectors agree: one concentration row and one temperature per output
    /// time, the rates dT/dt empty or one per time, and every row of the same length. A
    /// profile from the integrators always passes; one built by hand may not.
    pub fn validate(&self) -> Result<(), ReactorError> {
        let rows = self.times_s.len();
        let check = |what: &'static str, found: usize| {
            if found == rows {
                Ok(())
            } else {
                Err(ReactorError::InconsistentProfiles {
                    what,
                    expected: rows,
                    found,
                })
            }
        };
        check("concentrations", self.concentrations_mol_per_m3.len())?;
        check("temperatures", self.temperatures_k.len())?;
        if !self.temperature_rates_k_per_s.is_empty() {
            check("temperature rates", self.temperature_rates_k_per_s.len())?;
        }
        if !self.volumes_m3.is_empty() {
            check("volumes", self.volumes_m3.len())?;
        }
        let width = self.concentrations_mol_per_m3.first().map_or(0, Vec::len);
        match self
            .concentrations_mol_per_m3
            .iter()
            .find(|row| row.len() != width)
        {
            Some(row) => Err(ReactorError::InconsistentProfiles {
                what: "a concentration row",
                expected: width,
                found: row.len(),
            }),
            None => Ok(()),
        }
    }

    /// What `watch` found, if it was watched and found.
    pub fn located(&self, watch: Watch) -> Option<Located> {
        self.located
            .iter()
            .find(|(w, _)| *w == watch)
            .and_then(|(_, found)| *found)
    }

    /// Ideal-gas pressure (Pa) of row `row`: P = (sum_i c_i) R T; `None` past the end.
    pub fn pressure_pa(&self, row: usize) -> Option<f64> {
        let c = self.concentrations_mol_per_m3.get(row)?;
        let t = self.temperatures_k.get(row)?;
        Some(c.iter().sum::<f64>() * stoik_mechanism::GAS_CONSTANT * t)
    }

    /// Mole fractions of row `row` (dimensionless, summing to 1): x_i = c_i / sum_k c_k;
    /// `None` past the end or when the total concentration is not positive.
    pub fn mole_fractions(&self, row: usize) -> Option<Vec<f64>> {
        let c = self.concentrations_mol_per_m3.get(row)?;
        let total: f64 = c.iter().sum();
        (total > 0.0).then(|| c.iter().map(|x| x / total).collect())
    }
}

/// Element totals at the start and end of a profile and their largest drift.
#[derive(Debug, Clone, PartialEq)]
pub struct ElementBalance {
    /// Element totals (mol/m3 of atoms, one per element of the mechanism) in the first row.
    pub start: Vec<f64>,
    /// Element totals in the last row.
    pub end: Vec<f64>,
    /// Largest `|total(t) - total(t0)| / |total(t0)|` over all rows and elements with a
    /// nonzero initial total (dimensionless); 0 for an empty profile.
    pub max_relative_drift: f64,
}

/// Element totals of `profiles` for `mechanism` (species without composition count for
/// nothing). In a closed reactor they are invariant; the drift measures integration error.
pub fn element_balance(mechanism: &Mechanism, profiles: &Profiles) -> ElementBalance {
    let rows = &profiles.concentrations_mol_per_m3;
    let n_elements = mechanism.elements.len();
    let (Some(first), Some(last)) = (rows.first(), rows.last()) else {
        return ElementBalance {
            start: vec![0.0; n_elements],
            end: vec![0.0; n_elements],
            max_relative_drift: 0.0,
        };
    };
    let start = mechanism.element_totals(first);
    let mut max_relative_drift: f64 = 0.0;
    for row in rows {
        for (now, initial) in mechanism.element_totals(row).iter().zip(&start) {
            if *initial != 0.0 {
                max_relative_drift = max_relative_drift.max(((now - initial) / initial).abs());
            }
        }
    }
    ElementBalance {
        start,
        end: mechanism.element_totals(last),
        max_relative_drift,
    }
}
