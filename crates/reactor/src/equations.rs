//! The isothermal constant-volume batch equations `dc/dt = w(c)` as diffsol operators.
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

use crate::fixed_lu::FixedPatternSolver;

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

    /// Overwrites `jac` with `dw/dc` at `c`. Returns `false` when the matrix does not have
    /// the expected shape (it was not built from [`Backend::pattern_sparsity`]).
    fn fill_jacobian(kinetics: &Kinetics, k: &RateConstants, c: &[f64], jac: &mut Self) -> bool;
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

    fn fill_jacobian(kinetics: &Kinetics, k: &RateConstants, c: &[f64], jac: &mut Self) -> bool {
        let n = kinetics.n_species();
        let data = jac.inner_mut().as_mut_slice();
        if data.len() != n * n {
            return false;
        }
        kinetics.jacobian_dense(k, c, data);
        true
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
        // faer's constructor panics on a malformed pattern, so check its invariants first
        // (sorted, unique rows per column; consistent column starts).
        if !pattern_is_valid(pattern) {
            return None;
        }
        Some(SymbolicSparseColMat::new_checked(
            pattern.n,
            pattern.n,
            pattern.column_starts.clone(),
            None,
            pattern.row_indices.clone(),
        ))
    }

    fn fill_jacobian(kinetics: &Kinetics, k: &RateConstants, c: &[f64], jac: &mut Self) -> bool {
        let pattern = kinetics.jacobian_pattern();
        // The matrix was built from our own pattern (see `sparsity`), so its values array is
        // aligned entry by entry with `jacobian_sparse`'s output: write straight into it.
        let Some(matrix) = jac.inner_mut().first_mut() else {
            return false;
        };
        if matrix.symbolic().col_ptr() != pattern.column_starts.as_slice()
            || matrix.symbolic().row_idx() != pattern.row_indices.as_slice()
        {
            return false;
        }
        kinetics.jacobian_sparse(k, c, matrix.val_mut());
        true
    }
}

/// Whether `pattern` satisfies faer's compressed-sparse-column invariants.
pub(crate) fn pattern_is_valid(pattern: &JacobianPattern) -> bool {
    let n = pattern.n;
    let starts = &pattern.column_starts;
    if starts.len() != n + 1
        || starts.first() != Some(&0)
        || starts.last() != Some(&pattern.row_indices.len())
    {
        return false;
    }
    starts.windows(2).all(|w| {
        w[0] <= w[1]
            && pattern.row_indices[w[0]..w[1]]
                .windows(2)
                .all(|r| r[0] < r[1])
            && pattern.row_indices[w[0]..w[1]].iter().all(|&r| r < n)
    })
}

/// `dc/dt = w(c)` for a closed isothermal constant-volume batch reactor.
///
/// The rate constants live in interior-mutable storage so that the temperature can change
/// while a diffsol solver holds a shared reference to the problem (see
/// [`BatchEquations::set_temperature`]); they are overwritten in place, never reallocated.
pub(crate) struct BatchEquations<M: Backend> {
    pub(crate) kinetics: Kinetics,
    /// Rate constants at the current temperature (SI).
    rate_constants: RefCell<RateConstants>,
    /// The temperature the rate constants were evaluated at (K).
    temperature_k: Cell<f64>,
    /// Initial concentrations (mol/m3) used when a solver state is built.
    pub(crate) initial: Vec<f64>,
    /// Scratch for Jacobian-vector products (length `nnz`), allocated once.
    jac_values: RefCell<Vec<f64>>,
    pub(crate) rhs_evaluations: Cell<usize>,
    pub(crate) jacobian_evaluations: Cell<usize>,
    /// Enforce non-negativity in the step acceptance (see `IntegrationOptions::non_negative`).
    pub(crate) non_negative: bool,
    sparsity: Option<M::Sparsity>,
    ctx: M::C,
}

impl<M: Backend> BatchEquations<M> {
    /// Equations for `kinetics` at `temperature_k` (K) starting from `initial` (mol/m3).
    pub(crate) fn new(kinetics: Kinetics, temperature_k: f64, initial: Vec<f64>) -> Self {
        let rate_constants = kinetics.rate_constants(temperature_k);
        let nnz = kinetics.jacobian_pattern().nnz();
        let sparsity = M::pattern_sparsity(kinetics.jacobian_pattern());
        Self {
            kinetics,
            rate_constants: RefCell::new(rate_constants),
            temperature_k: Cell::new(temperature_k),
            initial,
            jac_values: RefCell::new(vec![0.0; nnz]),
            rhs_evaluations: Cell::new(0),
            jacobian_evaluations: Cell::new(0),
            non_negative: true,
            sparsity,
            ctx: M::C::default(),
        }
    }

    /// Re-evaluates the rate constants at `temperature_k` (K) in place, without allocating.
    ///
    /// Takes `&self`: a live solver borrows the equations. The rate constants are only
    /// borrowed inside a right-hand-side or Jacobian evaluation, which never calls back here,
    /// so the exclusive borrow cannot conflict.
    pub(crate) fn set_temperature(&self, temperature_k: f64) {
        self.kinetics
            .evaluate_rate_constants(temperature_k, &mut self.rate_constants.borrow_mut());
        self.temperature_k.set(temperature_k);
    }

    /// The temperature of the rate constants (K).
    pub(crate) fn temperature_k(&self) -> f64 {
        self.temperature_k.get()
    }

    /// `w = w(c)` (mol/(m3 s)), counted as one right-hand-side evaluation.
    pub(crate) fn production_rates(&self, c: &[f64], w: &mut [f64]) {
        self.rhs_evaluations.set(self.rhs_evaluations.get() + 1);
        self.kinetics
            .production_rates(&self.rate_constants.borrow(), c, w);
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
                self.eqn.kinetics.n_species()
            }
            fn nout(&self) -> usize {
                self.eqn.kinetics.n_species()
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
    fn call_inplace(&self, x: &M::V, _t: f64, y: &mut M::V) {
        self.eqn.production_rates(M::slice(x), M::slice_mut(y));
    }
}

impl<M: Backend> NonLinearOpJacobian for BatchRhs<'_, M> {
    fn jac_mul_inplace(&self, x: &M::V, _t: f64, v: &M::V, y: &mut M::V) {
        // Not on BDF's hot path (it factorizes the full Jacobian); computed exactly from the
        // sparse Jacobian into preallocated scratch.
        let eqn = self.eqn;
        let pattern = eqn.kinetics.jacobian_pattern();
        let mut values = eqn.jac_values.borrow_mut();
        eqn.kinetics
            .jacobian_sparse(&eqn.rate_constants.borrow(), M::slice(x), &mut values);
        let v = M::slice(v);
        let y = M::slice_mut(y);
        y.iter_mut().for_each(|e| *e = 0.0);
        for (col, &vc) in v.iter().enumerate().take(pattern.n) {
            if vc == 0.0 {
                continue;
            }
            for p in pattern.column_starts[col]..pattern.column_starts[col + 1] {
                y[pattern.row_indices[p]] += values[p] * vc;
            }
        }
    }

    fn jacobian_inplace(&self, x: &M::V, t: f64, y: &mut M) {
        let eqn = self.eqn;
        eqn.jacobian_evaluations
            .set(eqn.jacobian_evaluations.get() + 1);
        let filled = M::fill_jacobian(&eqn.kinetics, &eqn.rate_constants.borrow(), M::slice(x), y);
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
        self.kinetics.n_species()
    }
    fn nout(&self) -> usize {
        self.kinetics.n_species()
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
