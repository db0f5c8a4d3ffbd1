//! Terms of the user's own inside the integrator: [`UserTerms`].
//!
//! A unit operation that adds a source to the species balances (a feed, an outflow, a
//! transfer to another phase) or heat to the energy balance (a jacket, a heater, a heat loss)
//! writes them as a [`UserTerms`] and attaches it to a [`BatchSystem`](crate::BatchSystem)
//! ([`set_user_terms`](crate::BatchSystem::set_user_terms)). The BDF solver then sees them in
//! every right-hand side and every Jacobian, as it sees the chemistry: no operator
//! splitting, no splitting error, and the step size follows the coupled problem.
//!
//! With the state `y = (c, T)` (concentrations in mol/m3, then the temperature in K when the
//! model solves the energy balance) and the model's own right-hand side `f(t, y)`:
//!
//! - species rows: `dc_i/dt = f_i + S_i(t, c, T)`, `S_i` in mol/(m3 s);
//! - temperature row (energy-solving models only): `dT/dt = f_T + Q(t, c, T) / C(c, T)`, `Q`
//!   in W/m3 (heat into the reactor per unit volume), `C` the mixture heat capacity per
//!   volume the model's energy balance uses (J/(m3 K)): `sum_i c_i cv_i(T)` in a closed
//!   constant-volume reactor, `sum_i c_i cp_i(T)` in the open ones, the given `rho cp` of a
//!   [`LiquidPhase`](crate::LiquidPhase).
//!
//! The Jacobian contributions are the partial derivatives of `S` and `Q` themselves; the
//! integrator adds them and divides the heat row by `C` (adding the `-Q/C^2 dC/dy` terms).
//! The rows and columns of the contributions are state indices: species `0..n`, and `n`
//! (the number of species) for the temperature column and the heat row. The entries are
//! declared once, when the terms are attached
//! ([`jacobian_entries`](UserTerms::jacobian_entries)): the sparse linear algebra's fixed
//! pattern includes them.
//!
//! Models at constant pressure are refused: their expansion term would couple every user
//! source into every species row, which a user term cannot see. A [`SemiBatch`](crate::SemiBatch)
//! volume state is not visible to user terms. Plug flows run whole and take no user terms.

use std::any::Any;

use stoik_kinetics::JacobianPattern;

/// Sources supplied by the user inside the integrator (see the module documentation for the
/// equations and units). Implementations must not allocate in
/// [`add_rates`](Self::add_rates) and [`add_jacobian`](Self::add_jacobian) if the session is
/// to stay allocation-free; both are called from the solver's right-hand side and Jacobian
/// evaluations, and must not panic.
///
/// `Send` so that an [`OwnedIntegrator`](crate::OwnedIntegrator) holding them can move to a
/// worker thread.
pub trait UserTerms: Send + 'static {
    /// The Jacobian entries the terms may write, as `(row, column)` state indices (species
    /// `0..n_species`, `n_species` the heat row and the temperature column of an
    /// energy-solving model); duplicates are allowed. Called once when the terms are
    /// attached (may allocate). Entries outside it are dropped by
    /// [`UserJacobian::add`].
    fn jacobian_entries(&self, n_species: usize) -> Vec<(usize, usize)>;

    /// Adds the sources at time `t_s` (s), concentrations `c` (mol/m3) and temperature
    /// `temperature_k` (K): `S_i` to `species_rates[i]` (mol/(m3 s), one per species) and
    /// the heat into the reactor per unit volume `Q` to `heat_w_per_m3` (W/m3; it starts at
    /// 0 and is ignored unless the model solves the energy balance).
    fn add_rates(
        &mut self,
        t_s: f64,
        c: &[f64],
        temperature_k: f64,
        species_rates: &mut [f64],
        heat_w_per_m3: &mut f64,
    );

    /// Adds the partial derivatives of `S` and `Q` at `(t_s, c, temperature_k)` through
    /// `jacobian`: `dS_i/dc_k` (1/s) at `(i, k)`, `dS_i/dT` (mol/(m3 s K)) at `(i, n)`,
    /// `dQ/dc_k` (W/mol) at `(n, k)` and `dQ/dT` (W/(m3 K)) at `(n, n)`, with `n` the number
    /// of species.
    fn add_jacobian(
        &mut self,
        t_s: f64,
        c: &[f64],
        temperature_k: f64,
        jacobian: &mut UserJacobian<'_>,
    );
}

/// Where [`UserTerms::add_jacobian`] writes: the solver's Jacobian values, in the order of
/// its pattern (dense or sparse alike).
pub struct UserJacobian<'a> {
    pub(crate) values: &'a mut [f64],
    pub(crate) pattern: &'a JacobianPattern,
    pub(crate) n_species: usize,
    /// `1 / C` (m3 K/J) of an energy-solving model; `None` without the energy balance.
    pub(crate) heat_scale: Option<f64>,
}

impl UserJacobian<'_> {
    /// Number of species; also the index of the heat row and the temperature column.
    pub fn n_species(&self) -> usize {
        self.n_species
    }

    /// Adds `value` to the derivative of row `row`'s source with respect to state `column`
    /// (units as in [`UserTerms::add_jacobian`]). Returns `false` and drops the value when
    /// the entry is outside the declared pattern, or names the temperature in a model that
    /// does not solve the energy balance.
    pub fn add(&mut self, row: usize, column: usize, value: f64) -> bool {
        let n = self.n_species;
        let energy = self.heat_scale.is_some();
        if row > n || column > n || (!energy && (row == n || column == n)) {
            return false;
        }
        let scale = if row == n {
            self.heat_scale.unwrap_or(0.0)
        } else {
            1.0
        };
        match self.pattern.position(row, column) {
            Some(p) => {
                self.values[p] += scale * value;
                true
            }
            None => false,
        }
    }
}

/// The user's terms behind an object-safe face that can also give them back by type.
pub(crate) trait ErasedTerms: Send {
    fn terms(&mut self) -> &mut dyn UserTerms;
    fn any_mut(&mut self) -> &mut dyn Any;
    fn entries(&self, n_species: usize) -> Vec<(usize, usize)>;
}

pub(crate) struct Held<T>(pub(crate) T);

impl<T: UserTerms> ErasedTerms for Held<T> {
    fn terms(&mut self) -> &mut dyn UserTerms {
        &mut self.0
    }
    fn any_mut(&mut self) -> &mut dyn Any {
        &mut self.0
    }
    fn entries(&self, n_species: usize) -> Vec<(usize, usize)> {
        self.0.jacobian_entries(n_species)
    }
}
