//! The closed batch-reactor equations (see [`crate::model`]) as diffsol operators.
//!
//! The operator traits are implemented directly (not through diffsol's closure builder) so
//! that the Jacobian is written analytically in one pass into a pattern known from the
//! stoichiometry: dense column-major for [`NalgebraMat`], compressed sparse column for
//! [`FaerSparseMat`]. Rate constants are evaluated once per temperature and stored here, in
//! place (interior mutability: the solver holds the equations by shared reference).

use std::cell::{Cell, RefCell};

use diffsol::{
    ConstantOp, FaerSparseMat, FaerVec, LinearSolver, Matrix, NalgebraLU, NalgebraMat, NalgebraVec,
    NonLinearOp, NonLinearOpJacobian, OdeEquations, OdeEquationsRef, Op, ParameterisedOp,
    UnitCallable, Vector, VectorCommon,
};
use faer::sparse::SymbolicSparseColMat;
use stoik_kinetics::{JacobianPattern, Kinetics, RateConstants};
use stoik_thermo::Nasa7;

use crate::fixed_lu::FixedPatternSolver;
use crate::model::{
    energy_terms, state_pattern, Constraint, Energy, LiveConditions, ModelEquations, ModelScratch,
    ReactorModel,
};
use crate::user_terms::{ErasedTerms, UserJacobian, UserTerms};
use crate::watch::Quantity;
use crate::{DrivingStep, ReactorError};

/// A host linear-algebra backend: how to see diffsol's vectors as slices and how to write
/// the analytic Jacobian into its matrix type.
pub(crate) trait Backend: Matrix<T = f64> {
    /// The LU solver used for the Newton matrix.
    type Solver: LinearSolver<Self>;

    /// The state vector as a slice (one batch lane).
    fn slice(v: &Self::V) -> &[f64];

    /// The state vector as a mutable slice (one batch lane).
    fn slice_mut(v: &mut Self::V) -> &mut [f64];

    /// The sparsity pattern handed to diffsol (`None` for dense).
    fn pattern_sparsity(pattern: &JacobianPattern) -> Option<Self::Sparsity>;

    /// The matrix storage to write the Jacobian into: column-major dense values, or the
    /// values of a compressed-sparse-column matrix in the order of `pattern`. `None` when the
    /// matrix does not have the expected shape (it was not built from
    /// [`Backend::pattern_sparsity`]).
    fn target<'m>(jac: &'m mut Self, pattern: &JacobianPattern) -> Option<JacobianTarget<'m>>;
}

/// Where the analytic Jacobian goes.
pub(crate) enum JacobianTarget<'m> {
    /// Column-major `n x n` values.
    Dense(&'m mut [f64]),
    /// Values in the order of the state's sparsity pattern.
    Sparse(&'m mut [f64]),
}

impl Backend for NalgebraMat<f64> {
    type Solver = NalgebraLU<f64>;

    fn slice(v: &NalgebraVec<f64>) -> &[f64] {
        v.batch_as_slice(0)
    }

    fn slice_mut(v: &mut NalgebraVec<f64>) -> &mut [f64] {
        v.batch_as_mut_slice(0)
    }

    fn pattern_sparsity(_pattern: &JacobianPattern) -> Option<Self::Sparsity> {
        None
    }

    fn target<'m>(jac: &'m mut Self, pattern: &JacobianPattern) -> Option<JacobianTarget<'m>> {
        let n = pattern.n();
        let data = jac.inner_mut().as_mut_slice();
        (data.len() == n * n).then_some(JacobianTarget::Dense(data))
    }
}

impl Backend for FaerSparseMat<f64> {
    type Solver = FixedPatternSolver;

    fn slice(v: &FaerVec<f64>) -> &[f64] {
        v.inner().col_as_slice(0)
    }

    fn slice_mut(v: &mut FaerVec<f64>) -> &mut [f64] {
        v.inner_mut().col_as_slice_mut(0)
    }

    fn pattern_sparsity(pattern: &JacobianPattern) -> Option<Self::Sparsity> {
        // faer's constructor panics on a malformed pattern; `JacobianPattern`'s constructors
        // guarantee faer's invariants (sorted, unique, in-range rows; consistent starts).
        Some(SymbolicSparseColMat::new_checked(
            pattern.n(),
            pattern.n(),
            pattern.column_starts().to_vec(),
            None,
            pattern.row_indices().to_vec(),
        ))
    }

    fn target<'m>(jac: &'m mut Self, pattern: &JacobianPattern) -> Option<JacobianTarget<'m>> {
        // The matrix was built from our own pattern (see `sparsity`), so its values array is
        // aligned entry by entry with the pattern: write straight into it.
        let matrix = jac.inner_mut().first_mut()?;
        if matrix.symbolic().col_ptr() != pattern.column_starts()
            || matrix.symbolic().row_idx() != pattern.row_indices()
        {
            return None;
        }
        Some(JacobianTarget::Sparse(matrix.val_mut()))
    }
}

/// The equations of a closed batch reactor ([`ReactorModel`]) for one compiled mechanism.
///
/// The rate constants live in interior-mutable storage so that the temperature can change
/// while a diffsol solver holds a shared reference to the problem (see
/// [`BatchEquations::set_temperature`]); they are overwritten in place, never reallocated.
/// When the temperature is a state (adiabatic) or a function of time (prescribed), they are
/// re-evaluated whenever an evaluation asks for a different temperature.
pub(crate) struct BatchEquations<M: Backend> {
    pub(crate) kinetics: Kinetics,
    /// The reactor model and the species polynomials its energy balance needs.
    pub(crate) model: ReactorModel,
    thermo: Vec<Nasa7>,
    /// Rate constants at `rates_at_k` (SI).
    pub(crate) rate_constants: RefCell<RateConstants>,
    /// The temperature the rate constants were evaluated at (K).
    rates_at_k: Cell<f64>,
    /// The isothermal temperature, or the initial one of the other models (K).
    held_k: Cell<f64>,
    /// Initial state (concentrations in mol/m3, then the temperature in K if solved) used
    /// when a solver state is built.
    pub(crate) initial: Vec<f64>,
    /// The Jacobian pattern of the state and the position of each kinetics entry in it.
    state_pattern: JacobianPattern,
    pattern_map: Vec<usize>,
    /// Per species: held at a fixed concentration (box conditions).
    fixed_mask: Vec<bool>,
    /// Position of each diagonal entry in the state pattern.
    diagonal_positions: Vec<usize>,
    /// Scratch for Jacobian values in state-pattern order, allocated once.
    jac_values: RefCell<Vec<f64>>,
    pub(crate) scratch: RefCell<ModelScratch>,
    /// Scratch of the right-hand side: the rates of progress of the steps (mol/(m3 s), one per
    /// step).
    progress: RefCell<Vec<f64>>,
    pub(crate) rhs_evaluations: Cell<usize>,
    pub(crate) jacobian_evaluations: Cell<usize>,
    /// Enforce non-negativity in the step acceptance (see `IntegrationOptions::non_negative`).
    pub(crate) non_negative: bool,
    /// Linear invariants of the state kept by projection (coefficients over the state).
    pub(crate) laws: Vec<Vec<f64>>,
    sparsity: Option<M::Sparsity>,
    ctx: M::C,
    /// The stirred-tank flow and heat exchange in force (changeable on a live solver).
    pub(crate) live: LiveConditions,
    /// The user's terms, when attached.
    user: Option<UserSlot>,
}

/// The user's terms with the scratch and positions their evaluation needs (allocated when
/// they are attached).
struct UserSlot {
    terms: RefCell<Box<dyn ErasedTerms>>,
    /// The model's own pattern, and the position of each of its entries in the state
    /// pattern (which adds the user's entries).
    base_pattern: JacobianPattern,
    base_to_state: Vec<usize>,
    /// Model Jacobian values in base-pattern order.
    base_values: RefCell<Vec<f64>>,
    /// Scratch species rates for the heat term's value inside a Jacobian evaluation.
    rates: RefCell<Vec<f64>>,
    /// Positions of the temperature row's entries (columns `0..=n`) in the state pattern
    /// (energy-solving models; empty otherwise).
    heat_positions: Vec<usize>,
    /// The model's linear invariants, set aside: user sources do not keep them.
    laws: Vec<Vec<f64>>,
}

impl<M: Backend> BatchEquations<M> {
    /// Equations of `model` for `kinetics` at (initial or held) temperature `temperature_k`
    /// (K), starting from `initial` (the state vector).
    pub(crate) fn new(
        kinetics: Kinetics,
        model: ReactorModel,
        thermo: Vec<Nasa7>,
        temperature_k: f64,
        initial: Vec<f64>,
    ) -> Result<Self, ReactorError> {
        let rate_constants = kinetics.rate_constants(temperature_k);
        let (state_pattern, pattern_map) =
            state_pattern(&kinetics, &model).map_err(|_| ReactorError::BadPattern)?;
        let sparsity = M::pattern_sparsity(&state_pattern);
        let scratch = ModelScratch::new(&kinetics);
        let mut fixed_mask = vec![false; state_pattern.n()];
        for &i in &model.conditions.fixed_species {
            if let Some(f) = fixed_mask.get_mut(i) {
                *f = true;
            }
        }
        let diagonal_positions = (0..state_pattern.n())
            .map(|i| state_pattern.position(i, i).unwrap_or(usize::MAX))
            .collect();
        let live = LiveConditions::of(&model);
        Ok(Self {
            fixed_mask,
            diagonal_positions,
            rate_constants: RefCell::new(rate_constants),
            rates_at_k: Cell::new(temperature_k),
            held_k: Cell::new(temperature_k),
            initial,
            jac_values: RefCell::new(vec![0.0; state_pattern.nnz()]),
            scratch: RefCell::new(scratch),
            progress: RefCell::new(vec![0.0; kinetics.n_steps()]),
            state_pattern,
            pattern_map,
            kinetics,
            model,
            thermo,
            rhs_evaluations: Cell::new(0),
            jacobian_evaluations: Cell::new(0),
            laws: Vec::new(),
            non_negative: true,
            sparsity,
            ctx: M::C::default(),
            live,
            user: None,
        })
    }

    /// Attaches `terms` (replacing any), extending the Jacobian pattern by their declared
    /// entries; `None` detaches. Allocates.
    pub(crate) fn set_user_terms(
        &mut self,
        terms: Option<Box<dyn ErasedTerms>>,
    ) -> Result<(), ReactorError> {
        let base_pattern = match self.user.take() {
            Some(slot) => {
                self.laws = slot.laws;
                slot.base_pattern
            }
            None => self.state_pattern.clone(),
        };
        // The model's own pattern first: on error the equations keep no user terms.
        self.install_pattern(base_pattern.clone());
        let Some(terms) = terms else {
            return Ok(());
        };
        let n = self.kinetics.n_species();
        let energy = self.model.solves_energy();
        if self.model.plug.is_some() {
            return Err(ReactorError::BadUserTerms(
                "a plug flow runs whole and takes no user terms".into(),
            ));
        }
        if self.model.constraint == Constraint::ConstantPressure {
            return Err(ReactorError::BadUserTerms(
                "user terms need a constant-volume (or constant-density) model: at constant pressure the expansion would couple every user source into every species row".into(),
            ));
        }
        let entries = terms.entries(n);
        let limit = if energy { n } else { n.saturating_sub(1) };
        let bad: Vec<String> = entries
            .iter()
            .filter(|&&(r, c)| r > limit || c > limit)
            .map(|(r, c)| format!("({r}, {c})"))
            .collect();
        if !bad.is_empty() {
            let what = if energy {
                format!("species 0..{n} and the temperature {n}")
            } else {
                format!("species 0..{n} (the model does not solve the energy balance)")
            };
            return Err(ReactorError::BadUserTerms(format!(
                "Jacobian entries {} are outside the state indices: expected {what}",
                bad.join(", ")
            )));
        }
        let m = self.state_pattern.n();
        let mut all: Vec<(usize, usize)> = Vec::with_capacity(base_pattern.nnz() + entries.len());
        let (starts, rows) = (base_pattern.column_starts(), base_pattern.row_indices());
        for col in 0..m {
            all.extend(rows[starts[col]..starts[col + 1]].iter().map(|&r| (r, col)));
        }
        all.extend(entries);
        let union = JacobianPattern::from_entries(m, all).map_err(|_| ReactorError::BadPattern)?;
        let mut base_to_state = Vec::with_capacity(base_pattern.nnz());
        for col in 0..m {
            for &r in &rows[starts[col]..starts[col + 1]] {
                base_to_state.push(union.position(r, col).ok_or(ReactorError::BadPattern)?);
            }
        }
        let heat_positions = if energy {
            (0..=n)
                .map(|k| union.position(n, k).ok_or(ReactorError::BadPattern))
                .collect::<Result<Vec<_>, _>>()?
        } else {
            Vec::new()
        };
        self.user = Some(UserSlot {
            terms: RefCell::new(terms),
            base_values: RefCell::new(vec![0.0; base_pattern.nnz()]),
            base_pattern,
            base_to_state,
            rates: RefCell::new(vec![0.0; n]),
            heat_positions,
            laws: std::mem::take(&mut self.laws),
        });
        self.install_pattern(union);
        Ok(())
    }

    /// Makes `pattern` the state pattern the solver sees, with everything sized from it.
    fn install_pattern(&mut self, pattern: JacobianPattern) {
        self.diagonal_positions = (0..pattern.n())
            .map(|i| pattern.position(i, i).unwrap_or(usize::MAX))
            .collect();
        self.jac_values = RefCell::new(vec![0.0; pattern.nnz()]);
        self.sparsity = M::pattern_sparsity(&pattern);
        self.state_pattern = pattern;
    }

    /// The attached user terms as `T`, if they are of that type.
    pub(crate) fn user_terms_as<T: UserTerms>(&self) -> Option<std::cell::RefMut<'_, T>> {
        let slot = self.user.as_ref()?;
        std::cell::RefMut::filter_map(slot.terms.borrow_mut(), |t| t.any_mut().downcast_mut::<T>())
            .ok()
    }

    /// Whether user terms are attached.
    pub(crate) fn has_user_terms(&self) -> bool {
        self.user.is_some()
    }

    /// The mixture heat capacity per volume of the energy balance (J/(m3 K)) at
    /// concentrations `c` (mol/m3) and temperature `temperature_k` (K).
    fn heat_capacity(&self, c: &[f64], temperature_k: f64) -> f64 {
        if let Some(liquid) = &self.model.liquid {
            return liquid.heat_capacity_j_per_m3_k();
        }
        let basis = self.model.energy_basis();
        self.thermo
            .iter()
            .zip(c)
            .map(|(thermo, &ci)| ci * energy_terms(thermo, temperature_k, basis).1)
            .sum()
    }

    /// Adds the user's sources at `(t_s, y)` (temperature `temperature_k`) to `f`. No
    /// allocation.
    fn add_user_rates(&self, t_s: f64, temperature_k: f64, y: &[f64], f: &mut [f64]) {
        let Some(slot) = &self.user else {
            return;
        };
        let n = self.kinetics.n_species();
        let mut heat = 0.0;
        slot.terms.borrow_mut().terms().add_rates(
            t_s,
            &y[..n],
            temperature_k,
            &mut f[..n],
            &mut heat,
        );
        if self.model.solves_energy() && heat != 0.0 {
            f[n] += heat / self.heat_capacity(&y[..n], temperature_k);
        }
    }

    /// Adds the user's Jacobian contributions at `(t_s, y)` to `values` (state-pattern
    /// order). No allocation.
    fn add_user_jacobian(&self, slot: &UserSlot, t_s: f64, y: &[f64], values: &mut [f64]) {
        let n = self.kinetics.n_species();
        let temperature_k = self.temperature_at(t_s, y);
        let c = &y[..n];
        let energy = self.model.solves_energy();
        let capacity = if energy {
            self.heat_capacity(c, temperature_k)
        } else {
            1.0
        };
        let mut terms = slot.terms.borrow_mut();
        let terms = terms.terms();
        let mut sink = UserJacobian {
            values: &mut *values,
            pattern: &self.state_pattern,
            n_species: n,
            heat_scale: energy.then(|| 1.0 / capacity),
        };
        terms.add_jacobian(t_s, c, temperature_k, &mut sink);
        if !energy || self.model.liquid.is_some() {
            return;
        }
        // The heat capacity depends on the state: d(Q/C)/dy_k gains -Q/C^2 dC/dy_k.
        let mut rates = slot.rates.borrow_mut();
        rates.iter_mut().for_each(|r| *r = 0.0);
        let mut heat = 0.0;
        terms.add_rates(t_s, c, temperature_k, &mut rates, &mut heat);
        if heat == 0.0 {
            return;
        }
        let factor = heat / (capacity * capacity);
        let basis = self.model.energy_basis();
        let mut capacity_slope = 0.0;
        for (k, (thermo, &ck)) in self.thermo.iter().zip(c).enumerate() {
            let (_, cap) = energy_terms(thermo, temperature_k, basis);
            values[slot.heat_positions[k]] -= factor * cap;
            // dk_i/dT = dcp_i/dT for cv = cp - R and for cp alike.
            capacity_slope +=
                ck * stoik_mechanism::GAS_CONSTANT * thermo.cp_slope_over_r(temperature_k);
        }
        values[slot.heat_positions[n]] -= factor * capacity_slope;
    }

    /// Number of states (species, plus the temperature when it is solved).
    pub(crate) fn n_states(&self) -> usize {
        self.state_pattern.n()
    }

    /// Sets the held (isothermal) temperature to `temperature_k` (K) and re-evaluates the
    /// rate constants in place, without allocating.
    ///
    /// Takes `&self`: a live solver borrows the equations. The rate constants are only
    /// borrowed inside a right-hand-side or Jacobian evaluation, which never calls back here,
    /// so the exclusive borrow cannot conflict.
    pub(crate) fn set_temperature(&self, temperature_k: f64) {
        self.held_k.set(temperature_k);
        self.rates_at(temperature_k);
    }

    /// Makes the rate constants those at `temperature_k` (K).
    fn rates_at(&self, temperature_k: f64) {
        if temperature_k != self.rates_at_k.get() {
            self.kinetics
                .evaluate_rate_constants(temperature_k, &mut self.rate_constants.borrow_mut());
            self.rates_at_k.set(temperature_k);
        }
    }

    /// The held temperature (K): the isothermal one, or the initial one of other models.
    pub(crate) fn temperature_k(&self) -> f64 {
        self.held_k.get()
    }

    /// The reactor temperature (K) at time `t_s` (s) and state `y`.
    pub(crate) fn temperature_at(&self, t_s: f64, y: &[f64]) -> f64 {
        self.model
            .temperature(t_s, y, self.kinetics.n_species(), self.held_k.get())
    }

    /// The value of `quantity` at time `t_s` (s) and state `y`; `f` is scratch of the state's
    /// length (a right-hand-side evaluation for dT/dt of an energy-solving model). No
    /// allocation.
    pub(crate) fn quantity(&self, quantity: Quantity, t_s: f64, y: &[f64], f: &mut [f64]) -> f64 {
        match quantity {
            Quantity::Concentration(i) => y.get(i).copied().unwrap_or(f64::NAN),
            Quantity::Temperature => self.temperature_at(t_s, y),
            Quantity::TemperatureRate => match &self.model.energy {
                Energy::Isothermal => 0.0,
                Energy::Prescribed(history) => history.slope_at(t_s),
                Energy::Adiabatic | Energy::HeatExchange(_) => {
                    self.state_derivative(t_s, y, f);
                    f[self.kinetics.n_species()]
                }
            },
            Quantity::StepRate(step) => {
                self.rates_for(t_s, y);
                let n = self.kinetics.n_species().min(y.len());
                self.kinetics
                    .rate_of_progress(&self.rate_constants.borrow(), &y[..n], step)
            }
        }
    }

    pub(crate) fn model_equations(&self) -> ModelEquations<'_> {
        ModelEquations {
            kinetics: &self.kinetics,
            model: &self.model,
            thermo: &self.thermo,
            live: Some(&self.live),
        }
    }

    /// `f = dy/dt` at time `t_s` (s) and state `y`, counted as one right-hand-side
    /// evaluation. No allocation.
    pub(crate) fn state_derivative(&self, t_s: f64, y: &[f64], f: &mut [f64]) {
        self.rhs_evaluations.set(self.rhs_evaluations.get() + 1);
        let temperature_k = self.rates_for(t_s, y);
        let k = self.rate_constants.borrow();
        let progress = &mut self.progress.borrow_mut();
        if self.is_plain() {
            self.kinetics
                .production_rates_and_progress(&k, y, f, progress);
        } else {
            self.model_equations()
                .rhs(&k, t_s, temperature_k, y, f, progress);
        }
        drop(k);
        self.add_user_rates(t_s, temperature_k, y, f);
        let n = self.kinetics.n_species();
        self.model.conditions.apply_to_rhs(&y[..n], &mut f[..n]);
    }

    /// The step with the largest term in species `species`' production rate at
    /// concentrations `c` (mol/m3), with the rate constants of the last evaluation (call
    /// [`state_derivative`](Self::state_derivative) at the state first). Allocates
    /// (diagnosis only).
    pub(crate) fn driving_step(&self, species: usize, c: &[f64]) -> Option<DrivingStep> {
        let k = self.rate_constants.borrow();
        let (index, rate) = self
            .kinetics
            .production_terms(&k, c, species)
            .into_iter()
            .filter(|(_, r)| !r.is_nan())
            .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))?;
        let mut effective = vec![0.0; self.kinetics.n_steps()];
        self.kinetics
            .effective_forward_rate_constants(&k, c, &mut effective);
        Some(DrivingStep {
            index,
            rate_mol_per_m3_s: rate,
            forward_rate_constant: effective[index],
            reverse_rate_constant: k.reverse[index],
        })
    }

    /// Steps whose effective forward or reverse rate constant is NaN or infinite at
    /// concentrations `c` (mol/m3), with the rate constants of the last evaluation.
    /// Allocates (diagnosis only).
    pub(crate) fn nonfinite_steps(&self, y: &[f64]) -> Vec<usize> {
        let n = self.kinetics.n_species();
        let Some(c) = y.get(..n) else {
            return Vec::new();
        };
        let k = self.rate_constants.borrow();
        let mut effective = vec![0.0; self.kinetics.n_steps()];
        self.kinetics
            .effective_forward_rate_constants(&k, c, &mut effective);
        (0..self.kinetics.n_steps())
            .filter(|&j| {
                !effective[j].is_finite() || !k.forward[j].is_finite() || !k.reverse[j].is_finite()
            })
            .collect()
    }

    /// Makes the rate constants those at time `t_s` and state `y` (temperature, then the
    /// photolysis rates of the box conditions); returns the temperature (K).
    pub(crate) fn rates_for(&self, t_s: f64, y: &[f64]) -> f64 {
        let temperature_k = self.temperature_at(t_s, y);
        self.rates_at(temperature_k);
        if !self.model.conditions.photolysis.is_empty() {
            self.model
                .conditions
                .apply_photolysis(t_s, &mut self.rate_constants.borrow_mut().forward);
        }
        temperature_k
    }

    /// Box conditions in the Jacobian: deposition on the diagonal, zero rows for fixed
    /// species; `dense` is the dimension of a column-major dense matrix, `None` for values
    /// in state-pattern order.
    fn box_jacobian(&self, values: &mut [f64], dense: Option<usize>) {
        let conditions = &self.model.conditions;
        if conditions.deposition.is_empty() && conditions.fixed_species.is_empty() {
            return;
        }
        for &(i, d) in &conditions.deposition {
            let pos = match dense {
                Some(m) => i * m + i,
                None => self.diagonal_positions[i],
            };
            if let Some(v) = values.get_mut(pos) {
                *v -= d;
            }
        }
        match dense {
            Some(m) => {
                for &i in &conditions.fixed_species {
                    for col in 0..m {
                        values[col * m + i] = 0.0;
                    }
                }
            }
            None => {
                for (v, &row) in values.iter_mut().zip(self.state_pattern.row_indices()) {
                    if self.fixed_mask[row] {
                        *v = 0.0;
                    }
                }
            }
        }
    }

    /// dT/dt (K/s) at time `t_s` (s), concentrations `c` (mol/m3), temperature
    /// `temperature_k` (K) and volume `volume_m3` (m3, for a model that tracks it);
    /// post-processing (allocates, not counted as an evaluation).
    pub(crate) fn temperature_rate(
        &self,
        t_s: f64,
        c: &[f64],
        temperature_k: f64,
        volume_m3: Option<f64>,
    ) -> f64 {
        match &self.model.energy {
            Energy::Isothermal => 0.0,
            Energy::Prescribed(history) => history.slope_at(t_s),
            Energy::Adiabatic | Energy::HeatExchange(_) => {
                let mut y = c.to_vec();
                y.push(temperature_k);
                if let Some(v) = volume_m3 {
                    y.push(v);
                }
                let mut f = vec![0.0; y.len()];
                let mut progress = vec![0.0; self.kinetics.n_steps()];
                let mut k = self.kinetics.rate_constants(temperature_k);
                self.model.conditions.apply_photolysis(t_s, &mut k.forward);
                self.model_equations()
                    .rhs(&k, t_s, temperature_k, &y, &mut f, &mut progress);
                self.add_user_rates(t_s, temperature_k, &y, &mut f);
                f[c.len()]
            }
        }
    }

    /// The temperature (K) and the state derivative `dy/dt` at time `t_s` (s) and full state
    /// `y`; post-processing (allocates, not counted as an evaluation).
    pub(crate) fn full_derivative(&self, t_s: f64, y: &[f64]) -> (f64, Vec<f64>) {
        let n = self.kinetics.n_species();
        let temperature_k = self.model.temperature(t_s, y, n, self.held_k.get());
        let mut f = vec![0.0; y.len()];
        let mut progress = vec![0.0; self.kinetics.n_steps()];
        let mut k = self.kinetics.rate_constants(temperature_k);
        self.model.conditions.apply_photolysis(t_s, &mut k.forward);
        self.model_equations()
            .rhs(&k, t_s, temperature_k, y, &mut f, &mut progress);
        self.add_user_rates(t_s, temperature_k, y, &mut f);
        self.model.conditions.apply_to_rhs(&y[..n], &mut f[..n]);
        (temperature_k, f)
    }

    /// Constant volume without an energy state: the Jacobian is the kinetics' own.
    fn is_plain(&self) -> bool {
        self.user.is_none()
            && self.model.constraint == Constraint::ConstantVolume
            && !self.model.solves_energy()
            && self.model.flow.is_none()
            && !self.model.is_extended()
    }

    /// Writes the Jacobian at `(t_s, y)` into `values` (state-pattern order): the model's,
    /// then the user's terms, then the box conditions.
    pub(crate) fn jacobian_values(&self, t_s: f64, y: &[f64], values: &mut [f64]) {
        match &self.user {
            None => self.model_jacobian(t_s, y, values),
            Some(slot) => {
                let mut base = slot.base_values.borrow_mut();
                self.model_jacobian(t_s, y, &mut base);
                values.iter_mut().for_each(|v| *v = 0.0);
                for (&p, &v) in slot.base_to_state.iter().zip(base.iter()) {
                    values[p] = v;
                }
                drop(base);
                self.add_user_jacobian(slot, t_s, y, values);
            }
        }
        self.box_jacobian(values, None);
    }

    /// Writes the model's own Jacobian at `(t_s, y)` into `values` (the model's pattern).
    fn model_jacobian(&self, t_s: f64, y: &[f64], values: &mut [f64]) {
        let temperature_k = self.rates_for(t_s, y);
        let k = self.rate_constants.borrow();
        if self.model.constraint == Constraint::ConstantVolume
            && !self.model.solves_energy()
            && self.model.flow.is_none()
            && !self.model.is_extended()
        {
            self.kinetics.jacobian_sparse(&k, y, values);
        } else {
            self.model_equations().jacobian(
                &k,
                t_s,
                temperature_k,
                y,
                &self.pattern_map,
                &mut self.scratch.borrow_mut(),
                values,
            );
        }
    }

    /// Writes the Jacobian at `(t_s, y)` into `jac`; `false` if `jac` has an unexpected shape.
    fn fill_jacobian(&self, t_s: f64, y: &[f64], jac: &mut M) -> bool {
        let Some(target) = M::target(jac, &self.state_pattern) else {
            return false;
        };
        match target {
            JacobianTarget::Sparse(values) => self.jacobian_values(t_s, y, values),
            JacobianTarget::Dense(data) => {
                if self.is_plain() {
                    self.rates_for(t_s, y);
                    self.kinetics
                        .jacobian_dense(&self.rate_constants.borrow(), y, data);
                    self.box_jacobian(data, Some(self.state_pattern.n()));
                } else {
                    let mut values = self.jac_values.borrow_mut();
                    self.jacobian_values(t_s, y, &mut values);
                    let pattern = &self.state_pattern;
                    let m = pattern.n();
                    let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
                    data.iter_mut().for_each(|x| *x = 0.0);
                    for col in 0..m {
                        for p in starts[col]..starts[col + 1] {
                            data[col * m + rows[p]] = values[p];
                        }
                    }
                }
            }
        }
        true
    }

    /// The Jacobian pattern of the state (compressed sparse column).
    pub(crate) fn state_pattern(&self) -> &JacobianPattern {
        &self.state_pattern
    }

    /// Calls `f(k, temperature)` with the rate constants the equations use at time `t_s` (s)
    /// and state `y` and the temperature (K) there.
    pub(crate) fn with_rate_constants<R>(
        &self,
        t_s: f64,
        y: &[f64],
        f: impl FnOnce(&RateConstants, f64) -> R,
    ) -> R {
        let temperature_k = self.rates_for(t_s, y);
        f(&self.rate_constants.borrow(), temperature_k)
    }

    /// Whether the sparse backend received a usable pattern (always true for dense).
    pub(crate) fn has_valid_structure(&self) -> bool {
        self.sparsity.is_some() || !M::is_sparse()
    }
}

/// The right-hand side operator (borrows the equations).
pub(crate) struct BatchRhs<'a, M: Backend> {
    eqn: &'a BatchEquations<M>,
}

/// The initial-condition operator (borrows the equations).
pub(crate) struct BatchInit<'a, M: Backend> {
    eqn: &'a BatchEquations<M>,
}

macro_rules! impl_op {
    ($name:ident) => {
        impl<M: Backend> Op for $name<'_, M> {
            type T = f64;
            type V = M::V;
            type M = M;
            type C = M::C;

            fn context(&self) -> &Self::C {
                &self.eqn.ctx
            }
            fn nstates(&self) -> usize {
                self.eqn.n_states()
            }
            fn nout(&self) -> usize {
                self.eqn.n_states()
            }
            fn nparams(&self) -> usize {
                0
            }
        }
    };
}

impl_op!(BatchRhs);
impl_op!(BatchInit);

impl<M: Backend> NonLinearOp for BatchRhs<'_, M> {
    fn call_inplace(&self, x: &M::V, t: f64, y: &mut M::V) {
        self.eqn.state_derivative(t, M::slice(x), M::slice_mut(y));
    }
}

impl<M: Backend> NonLinearOpJacobian for BatchRhs<'_, M> {
    fn jac_mul_inplace(&self, x: &M::V, t: f64, v: &M::V, y: &mut M::V) {
        // Not on BDF's hot path (it factorizes the full Jacobian); computed exactly from the
        // sparse Jacobian into preallocated scratch.
        let eqn = self.eqn;
        let pattern = &eqn.state_pattern;
        let mut values = eqn.jac_values.borrow_mut();
        eqn.jacobian_values(t, M::slice(x), &mut values);
        let v = M::slice(v);
        let y = M::slice_mut(y);
        y.iter_mut().for_each(|e| *e = 0.0);
        let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
        for (col, &vc) in v.iter().enumerate().take(pattern.n()) {
            if vc == 0.0 {
                continue;
            }
            for p in starts[col]..starts[col + 1] {
                y[rows[p]] += values[p] * vc;
            }
        }
    }

    fn jacobian_inplace(&self, x: &M::V, t: f64, y: &mut M) {
        let eqn = self.eqn;
        eqn.jacobian_evaluations
            .set(eqn.jacobian_evaluations.get() + 1);
        let filled = eqn.fill_jacobian(t, M::slice(x), y);
        if !filled {
            // A matrix of unexpected structure: fall back to diffsol's column-by-column
            // construction from Jacobian-vector products (slow, but correct).
            self._default_jacobian_inplace(x, t, y);
        }
    }

    fn jacobian_sparsity(&self) -> Option<M::Sparsity> {
        self.eqn.sparsity.clone()
    }
}

impl<M: Backend> ConstantOp for BatchInit<'_, M> {
    fn call_inplace(&self, _t: f64, y: &mut M::V) {
        for (dst, &src) in M::slice_mut(y).iter_mut().zip(&self.eqn.initial) {
            *dst = src;
        }
    }
}

impl<M: Backend> Op for BatchEquations<M> {
    type T = f64;
    type V = M::V;
    type M = M;
    type C = M::C;

    fn context(&self) -> &Self::C {
        &self.ctx
    }
    fn nstates(&self) -> usize {
        self.n_states()
    }
    fn nout(&self) -> usize {
        self.n_states()
    }
    fn nparams(&self) -> usize {
        0
    }
}

impl<'a, M: Backend> OdeEquationsRef<'a> for BatchEquations<M> {
    type Mass = ParameterisedOp<'a, UnitCallable<M>>;
    type Rhs = BatchRhs<'a, M>;
    type Root = ParameterisedOp<'a, UnitCallable<M>>;
    type Init = BatchInit<'a, M>;
    type Out = ParameterisedOp<'a, UnitCallable<M>>;
    type Reset = ParameterisedOp<'a, UnitCallable<M>>;
}

impl<M: Backend> OdeEquations for BatchEquations<M> {
    fn rhs(&self) -> BatchRhs<'_, M> {
        BatchRhs { eqn: self }
    }
    fn mass(&self) -> Option<<Self as OdeEquationsRef<'_>>::Mass> {
        None
    }
    fn init(&self) -> BatchInit<'_, M> {
        BatchInit { eqn: self }
    }
    fn set_params(&mut self, _p: &Self::V) {}
    fn get_params(&self, _p: &mut Self::V) {}
}
