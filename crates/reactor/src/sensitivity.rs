//! Local sensitivities of a batch reactor to the rate constants of its steps.
//!
//! The parameter of step `j` is `ln k_j`, the log of its forward rate constant, scaled the
//! way [`Kinetics::scale_forward`] scales it: a reverse rate constant from `kf/Kc` follows
//! (the equilibrium constant is thermochemistry's), explicit reverse parameters do not, and
//! both limits of a falloff step scale together. Every rate of progress is linear in that
//! scale, so the parameter derivative of the state derivative is exact:
//!
//! `df/d ln k_j = A(y) nu_j r_j(y)`,
//!
//! with `r_j = dq_j/d ln k_j` ([`Kinetics::scaling_rates`]: the net rate of progress, or the
//! forward rate alone for explicit reverse parameters), `nu_j` the step's net stoichiometric
//! column and `A`
//! the model's linear map from production rates to the state derivative (the identity at
//! constant volume; the temperature row `-e_i/C` of an adiabatic model; the dilution terms at
//! constant pressure).
//!
//! - [`forward_sensitivities`]: the sensitivities `s_j = dy/d ln k_j` of the whole state
//!   (concentrations and temperature) at output times, integrated with the state as one
//!   augmented system `(y, s_1, ..., s_P)` with `ds_j/dt = J s_j + df/d ln k_j` (simultaneous
//!   corrector). The Newton matrix of the augmented system is taken block diagonal: one
//!   factorization of the state's `I - c J` serves every block.
//! - [`adjoint_sensitivity`]: the gradient of one scalar [`Target`] with respect to every
//!   chosen rate constant in one backward pass: `dlambda/dt = -J^T lambda` from the target's
//!   terminal vector, and `dG/d ln k_j = int lambda^T df/d ln k_j dt + direct term`, the
//!   integral by Gauss-Legendre quadrature on the pieces of the backward and forward steps.
//!   The forward trajectory is kept as interpolation samples of every accepted step.
//!
//! Targets that are times (an ignition delay, a peak time) are differentiated through the
//! implicit function theorem: at a root of `phi(t, y(t), p) = 0`,
//! `dt/dp = -(grad_y phi . s + dphi/dp) / (dphi/dt)`.

use std::cell::{Cell, RefCell};
use std::rc::Rc;

use diffsol::{
    Bdf, ConstantOp, DiffsolError, FaerContext, FaerSparseMat, FaerVec, LaError, LaLinearOp,
    Matrix, MatrixCommon, NonLinearOp, NonLinearOpJacobian, OdeBuilder, OdeEquations,
    OdeEquationsRef, OdeSolverConfig, OdeSolverMethod, OdeSolverProblem, OdeSolverStopReason, Op,
    ParameterisedOp, UnitCallable, Vector,
};
use diffsol_la::error::LinearSolverError;
use diffsol_la::LinearSolver as LaLinearSolver;
use faer::sparse::SymbolicSparseColMat;
use stoik_kinetics::Kinetics;
use stoik_sparse::FixedPatternLu;

use crate::equations::{Backend, BatchEquations};
use crate::fixed_lu::FixedPatternSolver;
use crate::integrator::{
    check_state, default_newton_tolerance, validate_options, ABSOLUTE_MINIMUM_STEP_S,
    TEMPERATURE_ABSOLUTE_TOLERANCE_K,
};
use crate::model::{energy_thermo, Energy, ReactorModel};
use crate::{IntegrationOptions, ReactorError};

type Core = BatchEquations<FaerSparseMat<f64>>;

/// A scalar of a run whose sensitivities are wanted. `state` indexes the state vector:
/// species in mechanism order, then the temperature (index `n_species`) of a model that solves
/// the energy balance.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Target {
    /// The value of state component `state` at `time_s` (s): a concentration (mol/m3) or
    /// the temperature (K).
    Value {
        /// State index.
        state: usize,
        /// Time (s).
        time_s: f64,
    },
    /// The time (s) at which state component `state` crosses the value it has at `time_s`
    /// (a threshold such as an ignition temperature rise): `dt/dp = -s / (dy/dt)`.
    Crossing {
        /// State index.
        state: usize,
        /// Time of the crossing (s).
        time_s: f64,
    },
    /// The time (s) of a maximum (or minimum) of state component `state` at `time_s`, where
    /// `dy/dt = 0`: `dt/dp = -(d(dy/dt)/dp) / (d2y/dt2)`.
    Peak {
        /// State index.
        state: usize,
        /// Time of the peak (s).
        time_s: f64,
    },
    /// The time (s) of the maximum of the rate `dy/dt` of state component `state` (the
    /// steepest rise of the temperature, a common ignition criterion), where `d2y/dt2 = 0`.
    RateMaximum {
        /// State index.
        state: usize,
        /// Time of the maximum rate (s).
        time_s: f64,
    },
}

impl Target {
    /// The time (s) at which the target is evaluated.
    pub fn time_s(&self) -> f64 {
        match *self {
            Target::Value { time_s, .. }
            | Target::Crossing { time_s, .. }
            | Target::Peak { time_s, .. }
            | Target::RateMaximum { time_s, .. } => time_s,
        }
    }

    /// The state index the target looks at.
    pub fn state(&self) -> usize {
        match *self {
            Target::Value { state, .. }
            | Target::Crossing { state, .. }
            | Target::Peak { state, .. }
            | Target::RateMaximum { state, .. } => state,
        }
    }

    /// Whether the target is a time (s) rather than a state value.
    pub fn is_time(&self) -> bool {
        !matches!(self, Target::Value { .. })
    }
}

/// The value of a [`Target`] and its derivatives.
#[derive(Debug, Clone, PartialEq)]
pub struct TargetSensitivity {
    /// The target: a state value (mol/m3 or K) or a time (s).
    pub value: f64,
    /// `d value / d ln k_j` for each chosen step, in the order asked (units of the value).
    pub gradient: Vec<f64>,
}

/// Counters of a sensitivity computation.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct SensitivityStats {
    /// Accepted steps of the forward integration (state, or state and sensitivities).
    pub forward_steps: usize,
    /// Accepted steps of the backward (adjoint) integration; 0 for forward sensitivities.
    pub backward_steps: usize,
    /// Right-hand-side evaluations of the integrated systems.
    pub rhs_evaluations: usize,
}

/// Forward sensitivities along a run.
#[derive(Debug, Clone, PartialEq)]
pub struct ForwardSensitivities {
    /// The steps whose rate constants are the parameters, in the order asked.
    pub steps: Vec<usize>,
    /// Output times (s), as asked.
    pub times_s: Vec<f64>,
    /// Per output time: the state (concentrations in mol/m3, then the temperature in K when
    /// solved).
    pub states: Vec<Vec<f64>>,
    /// Per output time, per parameter: `dy/d ln k_j` over the state (mol/m3, K).
    pub sensitivities: Vec<Vec<Vec<f64>>>,
    /// Per target asked: its value and gradient.
    pub targets: Vec<TargetSensitivity>,
    /// Counters.
    pub stats: SensitivityStats,
}

/// The gradient of one target from one backward pass.
#[derive(Debug, Clone, PartialEq)]
pub struct AdjointSensitivity {
    /// The steps whose rate constants are the parameters, in the order asked.
    pub steps: Vec<usize>,
    /// The target's value and gradient.
    pub target: TargetSensitivity,
    /// Counters.
    pub stats: SensitivityStats,
}

/// Why sensitivities could not be computed.
#[derive(Debug, thiserror::Error)]
pub enum SensitivityError {
    /// The reactor set-up was refused (options, model, initial state).
    #[error(transparent)]
    Reactor(#[from] ReactorError),
    /// A step index is out of range.
    #[error("step index {step} is out of range: the mechanism has {n_steps} steps")]
    StepOutOfRange {
        /// The index given.
        step: usize,
        /// Number of steps.
        n_steps: usize,
    },
    /// A target's state index is out of range.
    #[error("state index {state} is out of range: the state has {n_states} components")]
    StateOutOfRange {
        /// The index given.
        state: usize,
        /// Length of the state.
        n_states: usize,
    },
    /// A target time lies outside the run.
    #[error("target time {time_s:e} s is outside the run [{start_s:e}, {end_s:e}] s")]
    TimeOutsideRun {
        /// Target time (s).
        time_s: f64,
        /// Start (s).
        start_s: f64,
        /// End (s).
        end_s: f64,
    },
    /// The target is degenerate at its time (a crossing with zero slope, a peak with zero
    /// curvature): its time derivative is not defined.
    #[error("the target at {time_s:e} s is degenerate: its time derivative there is {slope:e}")]
    Degenerate {
        /// Target time (s).
        time_s: f64,
        /// The vanishing derivative.
        slope: f64,
    },
    /// The integration failed.
    #[error("sensitivity integration failed at t = {time_s:e} s: {reason}")]
    Failed {
        /// Time reached (s).
        time_s: f64,
        /// diffsol's message.
        reason: String,
    },
}

/// The state's evaluator: the reactor equations of `kinetics` in `model`, with the full
/// initial state.
fn core(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    initial_mol_per_m3: &[f64],
    options: &IntegrationOptions,
) -> Result<(Core, Vec<f64>), ReactorError> {
    validate_options(kinetics, temperature_k, options)?;
    check_state(kinetics.n_species(), initial_mol_per_m3, "initial state")?;
    model
        .conditions
        .validate(kinetics.n_species(), kinetics.n_steps())?;
    let temperature_k = match &model.energy {
        Energy::Prescribed(history) => history.temperature_at(0.0),
        _ => temperature_k,
    };
    let thermo = energy_thermo(kinetics, model)?;
    let mut initial = initial_mol_per_m3.to_vec();
    if model.solves_energy() {
        initial.push(temperature_k);
    }
    let eqn = Core::new(
        kinetics.clone(),
        model.clone(),
        thermo,
        temperature_k,
        initial.clone(),
    )?;
    if !eqn.has_valid_structure() {
        return Err(ReactorError::BadPattern);
    }
    Ok((eqn, initial))
}

/// The state's absolute tolerances (mol/m3 per species, K).
fn state_atol(model: &ReactorModel, options: &IntegrationOptions) -> Vec<f64> {
    let mut atol = options.absolute_tolerances_mol_per_m3.clone();
    if model.solves_energy() {
        atol.push(TEMPERATURE_ABSOLUTE_TOLERANCE_K);
    }
    atol
}

fn check_steps(kinetics: &Kinetics, steps: &[usize]) -> Result<(), SensitivityError> {
    match steps.iter().find(|&&j| j >= kinetics.n_steps()) {
        Some(&step) => Err(SensitivityError::StepOutOfRange {
            step,
            n_steps: kinetics.n_steps(),
        }),
        None => Ok(()),
    }
}

fn check_target(
    target: &Target,
    n_states: usize,
    start_s: f64,
    end_s: f64,
) -> Result<(), SensitivityError> {
    if target.state() >= n_states {
        return Err(SensitivityError::StateOutOfRange {
            state: target.state(),
            n_states,
        });
    }
    let time_s = target.time_s();
    if !(time_s >= start_s && time_s <= end_s) {
        return Err(SensitivityError::TimeOutsideRun {
            time_s,
            start_s,
            end_s,
        });
    }
    Ok(())
}

/// Pointwise derivatives of the reactor equations (exact, from the analytic Jacobian).
struct Pointwise<'a> {
    eqn: &'a Core,
}

impl Pointwise<'_> {
    fn m(&self) -> usize {
        self.eqn.n_states()
    }

    fn f(&self, t: f64, y: &[f64]) -> Vec<f64> {
        let mut f = vec![0.0; self.m()];
        self.eqn.state_derivative(t, y, &mut f);
        f
    }

    /// `J v`.
    fn jac_mul(&self, t: f64, y: &[f64], v: &[f64]) -> Vec<f64> {
        let pattern = self.eqn.state_pattern();
        let mut values = vec![0.0; pattern.nnz()];
        self.eqn.jacobian_values(t, y, &mut values);
        let mut out = vec![0.0; self.m()];
        csc_mul(
            pattern.column_starts(),
            pattern.row_indices(),
            &values,
            v,
            &mut out,
        );
        out
    }

    /// Row `i` of `J` (dense).
    fn jac_row(&self, t: f64, y: &[f64], i: usize) -> Vec<f64> {
        let pattern = self.eqn.state_pattern();
        let mut values = vec![0.0; pattern.nnz()];
        self.eqn.jacobian_values(t, y, &mut values);
        let mut row = vec![0.0; self.m()];
        let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
        for col in 0..self.m() {
            for p in starts[col]..starts[col + 1] {
                if rows[p] == i {
                    row[col] = values[p];
                }
            }
        }
        row
    }

    /// `df/d ln k_j` for every step of `steps` (each a state-length vector).
    fn parameter_columns(&self, t: f64, y: &[f64], steps: &[usize]) -> Vec<Vec<f64>> {
        let kinetics = &self.eqn.kinetics;
        let n = kinetics.n_species();
        let mut q = vec![0.0; kinetics.n_steps()];
        let temperature_k = self.eqn.scaling_rates(t, y, &mut q);
        let equations = self.eqn.model_equations();
        let mut w = vec![0.0; n];
        steps
            .iter()
            .map(|&j| {
                w.iter_mut().for_each(|x| *x = 0.0);
                for &(i, nu) in kinetics.net_changes(j) {
                    w[i] = nu * q[j];
                }
                let mut out = vec![0.0; self.m()];
                equations.chemistry_map(temperature_k, y, &w, &mut out);
                out
            })
            .collect()
    }

    /// `d/dt f_i` along the trajectory: `(J f)_i + df_i/dt` (the explicit time dependence of
    /// a prescribed temperature or photolysis by central differences in t alone).
    fn rate_slope(&self, t: f64, y: &[f64], i: usize) -> f64 {
        let f = self.f(t, y);
        let jf = self.jac_mul(t, y, &f)[i];
        jf + self.explicit_time_derivative(t, y, i)
    }

    fn explicit_time_derivative(&self, t: f64, y: &[f64], i: usize) -> f64 {
        let model = &self.eqn.model;
        let time_dependent = matches!(model.energy, Energy::Prescribed(_))
            || !model.conditions.photolysis.is_empty();
        if !time_dependent {
            return 0.0;
        }
        let h = 1e-7 * t.abs().max(1e-12);
        (self.f(t + h, y)[i] - self.f(t - h, y)[i]) / (2.0 * h)
    }
}

/// `out += A v` for a compressed-sparse-column `A`.
fn csc_mul(starts: &[usize], rows: &[usize], values: &[f64], v: &[f64], out: &mut [f64]) {
    out.iter_mut().for_each(|x| *x = 0.0);
    for (col, &vc) in v.iter().enumerate().take(starts.len().saturating_sub(1)) {
        if vc == 0.0 {
            continue;
        }
        for p in starts[col]..starts[col + 1] {
            out[rows[p]] += values[p] * vc;
        }
    }
}

/// `phi = d2y_i/dt2` of the equations of `kinetics` (a [`Target::RateMaximum`] is a root of
/// it), at `(t, y)`.
fn second_derivative(eqn: &Core, t: f64, y: &[f64], i: usize) -> f64 {
    Pointwise { eqn }.rate_slope(t, y, i)
}

/// The equations of `base` with step `j`'s rate constants multiplied by `factor`.
fn scaled_core(base: &Core, j: usize, factor: f64) -> Result<Core, ReactorError> {
    let mut kinetics = base.kinetics.clone();
    kinetics.scale_forward(j, factor);
    let thermo = energy_thermo(&kinetics, &base.model)?;
    Core::new(
        kinetics,
        base.model.clone(),
        thermo,
        base.temperature_k(),
        base.initial.clone(),
    )
}

/// Relative step of the central differences of a [`Target::RateMaximum`] in ln k and along
/// the state.
const RATE_MAXIMUM_STEP: f64 = 1e-5;

/// Time step (s) for central differences along the trajectory at `(t, y)` with derivative
/// `f`: a change of about [`RATE_MAXIMUM_STEP`] of the fastest-moving component.
fn trajectory_step(y: &[f64], f: &[f64], atol: &[f64]) -> f64 {
    let rate = y
        .iter()
        .zip(f)
        .zip(atol)
        .map(|((y, f), a)| f.abs() / (y.abs() + a))
        .fold(0.0, f64::max);
    if rate > 0.0 {
        RATE_MAXIMUM_STEP / rate
    } else {
        1e-9
    }
}

/// `d phi/dt` along the trajectory for `phi = d2y_i/dt2`.
fn second_derivative_slope(eqn: &Core, t: f64, y: &[f64], i: usize, atol: &[f64]) -> f64 {
    let p = Pointwise { eqn };
    let f = p.f(t, y);
    let h = trajectory_step(y, &f, atol);
    let plus: Vec<f64> = y.iter().zip(&f).map(|(y, f)| y + h * f).collect();
    let minus: Vec<f64> = y.iter().zip(&f).map(|(y, f)| y - h * f).collect();
    (second_derivative(eqn, t + h, &plus, i) - second_derivative(eqn, t - h, &minus, i)) / (2.0 * h)
}

// ---------------------------------------------------------------------------------------
// Forward: the augmented system.

/// The state and its sensitivities as one system `(y, s_1, ..., s_P)` (shared by the
/// problem and its linear solver, [`BlockSolver`]).
struct SensEquations {
    core: Rc<SensCore>,
}

impl std::ops::Deref for SensEquations {
    type Target = SensCore;
    fn deref(&self) -> &SensCore {
        &self.core
    }
}

/// What the augmented system evaluates with.
struct SensCore {
    eqn: Core,
    steps: Vec<usize>,
    m: usize,
    /// Absolute tolerances of the state (the scale of difference quotients).
    atol: Vec<f64>,
    /// Time and augmented state of the last Jacobian evaluation (the Newton matrix's point).
    lin: RefCell<(f64, Vec<f64>)>,
    /// The augmented derivative there, and scratch for a perturbed evaluation.
    base: RefCell<Vec<f64>>,
    probe: RefCell<Vec<f64>>,
    probe_out: RefCell<Vec<f64>>,
    /// Augmented sparsity: the state's Jacobian pattern in the first block, the diagonal
    /// elsewhere (the other blocks' values are never used: see [`BlockSolver`]).
    sparsity: SymbolicSparseColMat<usize>,
    initial: Vec<f64>,
    jac: RefCell<Vec<f64>>,
    q: RefCell<Vec<f64>>,
    w: RefCell<Vec<f64>>,
    column: RefCell<Vec<f64>>,
    evaluations: Cell<usize>,
    ctx: FaerContext,
}

impl SensEquations {
    fn new(eqn: Core, steps: Vec<usize>, initial_state: &[f64], atol: Vec<f64>) -> Self {
        let m = eqn.n_states();
        let p = steps.len();
        let n_total = m * (1 + p);
        let pattern = eqn.state_pattern();
        let mut starts = pattern.column_starts().to_vec();
        let mut rows = pattern.row_indices().to_vec();
        for col in m..n_total {
            rows.push(col);
            starts.push(rows.len());
        }
        let sparsity = SymbolicSparseColMat::new_checked(n_total, n_total, starts, None, rows);
        let mut initial = vec![0.0; n_total];
        initial[..m].copy_from_slice(initial_state);
        let nnz = pattern.nnz();
        let n_species = eqn.kinetics.n_species();
        let n_steps = eqn.kinetics.n_steps();
        SensEquations {
            core: Rc::new(SensCore {
                lin: RefCell::new((0.0, vec![0.0; n_total])),
                base: RefCell::new(vec![0.0; n_total]),
                probe: RefCell::new(vec![0.0; n_total]),
                probe_out: RefCell::new(vec![0.0; n_total]),
                atol,
                steps,
                m,
                sparsity,
                initial,
                jac: RefCell::new(vec![0.0; nnz]),
                q: RefCell::new(vec![0.0; n_steps]),
                w: RefCell::new(vec![0.0; n_species]),
                column: RefCell::new(vec![0.0; m]),
                evaluations: Cell::new(0),
                ctx: FaerContext::default(),
                eqn,
            }),
        }
    }
}

impl SensCore {
    fn n_total(&self) -> usize {
        self.m * (1 + self.steps.len())
    }

    /// Adds `c H_j x0` to each block `j` of `rest`, with `H_j x0` the difference quotient of
    /// the augmented derivative along `x0` (state part only) at the Newton matrix's point.
    fn coupling(&self, x0: &[f64], c: f64, rest: &mut [f64]) {
        let m = self.m;
        let lin = self.lin.borrow();
        let (t, point) = (&lin.0, &lin.1);
        let scale = x0
            .iter()
            .zip(&point[..m])
            .zip(&self.atol)
            .map(|((x, y), a)| x.abs() / (y.abs() + a))
            .fold(0.0, f64::max);
        if scale == 0.0 || !scale.is_finite() {
            return;
        }
        let sigma = f64::EPSILON.sqrt() / scale;
        let mut probe = self.probe.borrow_mut();
        probe.copy_from_slice(point);
        for (p, x) in probe[..m].iter_mut().zip(x0) {
            *p += sigma * x;
        }
        let mut out = self.probe_out.borrow_mut();
        self.derivative(*t, &probe, &mut out);
        let base = self.base.borrow();
        for ((r, o), b) in rest.iter_mut().zip(&out[m..]).zip(&base[m..]) {
            *r += c * (o - b) / sigma;
        }
    }

    /// The augmented derivative at `(t, x)`.
    fn derivative(&self, t: f64, x: &[f64], out: &mut [f64]) {
        self.evaluations.set(self.evaluations.get() + 1);
        let m = self.m;
        let (y, sens) = x.split_at(m);
        let (f, sens_out) = out.split_at_mut(m);
        self.eqn.state_derivative(t, y, f);
        let pattern = self.eqn.state_pattern();
        let mut jac = self.jac.borrow_mut();
        self.eqn.jacobian_values(t, y, &mut jac);
        let mut q = self.q.borrow_mut();
        let temperature_k = self.eqn.scaling_rates(t, y, &mut q);
        let mut w = self.w.borrow_mut();
        let mut column = self.column.borrow_mut();
        let equations = self.eqn.model_equations();
        let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
        for (b, &j) in self.steps.iter().enumerate() {
            let s = &sens[b * m..(b + 1) * m];
            let o = &mut sens_out[b * m..(b + 1) * m];
            csc_mul(starts, rows, &jac, s, o);
            w.iter_mut().for_each(|x| *x = 0.0);
            for &(i, nu) in self.eqn.kinetics.net_changes(j) {
                w[i] = nu * q[j];
            }
            equations.chemistry_map(temperature_k, y, &w, &mut column);
            for (o, c) in o.iter_mut().zip(column.iter()) {
                *o += c;
            }
        }
    }
}

struct SensRhs<'a> {
    eqn: &'a SensEquations,
}

struct SensInit<'a> {
    eqn: &'a SensEquations,
}

macro_rules! impl_sens_op {
    ($name:ident) => {
        impl Op for $name<'_> {
            type T = f64;
            type V = FaerVec<f64>;
            type M = FaerSparseMat<f64>;
            type C = FaerContext;

            fn context(&self) -> &Self::C {
                &self.eqn.ctx
            }
            fn nstates(&self) -> usize {
                self.eqn.n_total()
            }
            fn nout(&self) -> usize {
                self.eqn.n_total()
            }
            fn nparams(&self) -> usize {
                0
            }
        }
    };
}

impl_sens_op!(SensRhs);
impl_sens_op!(SensInit);

impl NonLinearOp for SensRhs<'_> {
    fn call_inplace(&self, x: &FaerVec<f64>, t: f64, y: &mut FaerVec<f64>) {
        self.eqn.derivative(
            t,
            <FaerSparseMat<f64> as Backend>::slice(x),
            <FaerSparseMat<f64> as Backend>::slice_mut(y),
        );
    }
}

impl NonLinearOpJacobian for SensRhs<'_> {
    fn jac_mul_inplace(&self, x: &FaerVec<f64>, t: f64, v: &FaerVec<f64>, y: &mut FaerVec<f64>) {
        // The block-diagonal part (each block the state's Jacobian); the second-order
        // coupling of the sensitivities to the state is left out, as in the Newton matrix.
        let m = self.eqn.m;
        let x = <FaerSparseMat<f64> as Backend>::slice(x);
        let v = <FaerSparseMat<f64> as Backend>::slice(v);
        let y = <FaerSparseMat<f64> as Backend>::slice_mut(y);
        let pattern = self.eqn.eqn.state_pattern();
        let mut jac = self.eqn.jac.borrow_mut();
        self.eqn.eqn.jacobian_values(t, &x[..m], &mut jac);
        for (vb, yb) in v.chunks(m).zip(y.chunks_mut(m)) {
            csc_mul(pattern.column_starts(), pattern.row_indices(), &jac, vb, yb);
        }
    }

    fn jacobian_inplace(&self, x: &FaerVec<f64>, t: f64, y: &mut FaerSparseMat<f64>) {
        let m = self.eqn.m;
        let x = <FaerSparseMat<f64> as Backend>::slice(x);
        let pattern = self.eqn.eqn.state_pattern();
        let nnz = pattern.nnz();
        let Some(matrix) = y.inner_mut().first_mut() else {
            return;
        };
        let values = matrix.val_mut();
        if values.len() != nnz + m * self.eqn.steps.len() {
            return;
        }
        self.eqn.eqn.jacobian_values(t, &x[..m], &mut values[..nnz]);
        // The other blocks' diagonals carry -1, so that the Newton matrix holds 1 + c there:
        // the linear solver reads the step coefficient c from it (see `BlockSolver`).
        values[nnz..].iter_mut().for_each(|v| *v = -1.0);
        let mut lin = self.eqn.lin.borrow_mut();
        lin.0 = t;
        lin.1.copy_from_slice(x);
    }

    fn jacobian_sparsity(&self) -> Option<SymbolicSparseColMat<usize>> {
        Some(self.eqn.sparsity.clone())
    }
}

impl ConstantOp for SensInit<'_> {
    fn call_inplace(&self, _t: f64, y: &mut FaerVec<f64>) {
        <FaerSparseMat<f64> as Backend>::slice_mut(y).copy_from_slice(&self.eqn.initial);
    }
}

impl Op for SensEquations {
    type T = f64;
    type V = FaerVec<f64>;
    type M = FaerSparseMat<f64>;
    type C = FaerContext;

    fn context(&self) -> &Self::C {
        &self.ctx
    }
    fn nstates(&self) -> usize {
        self.n_total()
    }
    fn nout(&self) -> usize {
        self.n_total()
    }
    fn nparams(&self) -> usize {
        0
    }
}

impl<'a> OdeEquationsRef<'a> for SensEquations {
    type Mass = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
    type Rhs = SensRhs<'a>;
    type Root = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
    type Init = SensInit<'a>;
    type Out = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
    type Reset = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
}

impl OdeEquations for SensEquations {
    fn rhs(&self) -> SensRhs<'_> {
        SensRhs { eqn: self }
    }
    fn mass(&self) -> Option<<Self as OdeEquationsRef<'_>>::Mass> {
        None
    }
    fn init(&self) -> SensInit<'_> {
        SensInit { eqn: self }
    }
    fn set_params(&mut self, _p: &Self::V) {}
    fn get_params(&self, _p: &mut Self::V) {}
}

/// Linear solver of the augmented Newton matrix `I - c J_aug`, which is block lower
/// triangular: diagonal blocks `I - c J` (the state's, factorized once by
/// [`FixedPatternLu`] and applied to every block), and below them `-c H_j` with
/// `H_j = d(J s_j + df/d ln k_j)/dy`. The solve is by block forward substitution:
/// `x_0 = (I - c J)^-1 b_0`, `x_j = (I - c J)^-1 (b_j + c H_j x_0)`, every `H_j x_0` from
/// one difference quotient of the augmented derivative along `x_0` at the matrix's point.
/// Without the `H_j` terms (block diagonal) Newton's iterations failed to converge wherever
/// the sensitivities are large (thousands of failures through an ignition).
struct BlockSolver {
    m: usize,
    core: Option<Rc<SensCore>>,
    /// The step coefficient of the Newton matrix.
    c: f64,
    matrix: Option<FaerSparseMat<f64>>,
    /// Positions in the matrix values of the first block's entries, in block order.
    positions: Vec<usize>,
    block_values: Vec<f64>,
    lu: Option<FixedPatternLu>,
    factorized: bool,
}

impl BlockSolver {
    fn new(m: usize, core: Option<Rc<SensCore>>) -> Self {
        BlockSolver {
            m,
            core,
            c: 0.0,
            matrix: None,
            positions: Vec::new(),
            block_values: Vec::new(),
            lu: None,
            factorized: false,
        }
    }
}

impl Default for BlockSolver {
    fn default() -> Self {
        BlockSolver::new(0, None)
    }
}

impl LaLinearSolver<FaerSparseMat<f64>> for BlockSolver {
    fn set_sparsity<
        C: LaLinearOp<T = f64, V = FaerVec<f64>, M = FaerSparseMat<f64>, C = FaerContext>,
    >(
        &mut self,
        op: &C,
    ) {
        self.factorized = false;
        self.lu = None;
        self.matrix = op.sparsity().map(|s| {
            FaerSparseMat::new_from_sparsity(op.nrows(), op.ncols(), Some(s), *op.context())
        });
        let Some(block) = self.matrix.as_ref().and_then(|m| m.inner().first()) else {
            return;
        };
        let symbolic = block.symbolic();
        let (col_ptr, row_idx) = (symbolic.col_ptr(), symbolic.row_idx());
        let m = self.m.min(block.ncols());
        let mut starts = vec![0];
        let mut rows = Vec::new();
        self.positions.clear();
        for col in 0..m {
            let entries = col_ptr[col]..col_ptr[col + 1];
            for (p, &row) in entries.clone().zip(&row_idx[entries]) {
                if row < m {
                    rows.push(row);
                    self.positions.push(p);
                }
            }
            starts.push(rows.len());
        }
        self.block_values = vec![0.0; rows.len()];
        self.lu = FixedPatternLu::new(m, &starts, &rows).ok();
    }

    fn set_linearisation<
        C: LaLinearOp<T = f64, V = FaerVec<f64>, M = FaerSparseMat<f64>, C = FaerContext>,
    >(
        &mut self,
        op: &C,
    ) {
        self.factorized = false;
        let Some(matrix) = self.matrix.as_mut() else {
            return;
        };
        op.matrix_inplace(matrix);
        let Some(block) = matrix.inner().first() else {
            return;
        };
        let values = block.val();
        for (dst, &p) in self.block_values.iter_mut().zip(&self.positions) {
            *dst = values[p];
        }
        if let Some(lu) = self.lu.as_mut() {
            self.factorized = lu.factorize(&self.block_values).is_ok();
        }
        if let Some(core) = &self.core {
            let nnz = core.eqn.state_pattern().nnz();
            self.c = values.get(nnz).map_or(0.0, |v| v - 1.0);
            let lin = core.lin.borrow();
            core.derivative(lin.0, &lin.1, &mut core.base.borrow_mut());
        }
    }

    fn solve_in_place(&self, x: &mut FaerVec<f64>) -> Result<(), LaError> {
        let lu = match (&self.lu, self.factorized) {
            (Some(lu), true) if self.m > 0 => lu,
            _ => return Err(LaError::from(LinearSolverError::LuNotInitialized)),
        };
        let fail = |_| LaError::from(LinearSolverError::LuSolveFailed);
        let m = self.m;
        let data = x.inner_mut();
        for column in 0..data.ncols() {
            let rhs = data.col_as_slice_mut(column);
            let (first, rest) = rhs.split_at_mut(m);
            lu.solve_in_place(first).map_err(fail)?;
            if let (Some(core), false) = (&self.core, rest.is_empty()) {
                if self.c != 0.0 {
                    core.coupling(first, self.c, rest);
                }
            }
            for block in rest.chunks_mut(m) {
                lu.solve_in_place(block).map_err(fail)?;
            }
        }
        Ok(())
    }

    fn solve_transpose_in_place(&self, x: &mut FaerVec<f64>) -> Result<(), LaError> {
        let lu = match (&self.lu, self.factorized) {
            (Some(lu), true) if self.m > 0 => lu,
            _ => return Err(LaError::from(LinearSolverError::LuNotInitialized)),
        };
        let data = x.inner_mut();
        for column in 0..data.ncols() {
            for block in data.col_as_slice_mut(column).chunks_mut(self.m) {
                lu.solve_transpose_in_place(block)
                    .map_err(|_| LaError::from(LinearSolverError::LuSolveFailed))?;
            }
        }
        Ok(())
    }
}

/// Problem settings shared by the forward and backward integrations.
fn configure<E>(problem: &mut OdeSolverProblem<E>, options: &IntegrationOptions)
where
    E: OdeEquations<T = f64>,
{
    problem.ode_options.max_number_timesteps = options.max_steps;
    problem.ode_options.min_timestep = ABSOLUTE_MINIMUM_STEP_S;
    problem.ode_options.nonlinear_solver_tolerance = options
        .newton_tolerance
        .unwrap_or_else(|| default_newton_tolerance(options.relative_tolerance));
}

fn failed(time_s: f64, e: DiffsolError) -> SensitivityError {
    SensitivityError::Failed {
        time_s,
        reason: e.to_string(),
    }
}

/// Steps `solver` through `stops` (increasing, after its time), calling `on_step(solver,
/// t_before, t_after)` after each accepted step and `at_stop(solver, t)` at each stop.
fn march<'a, E, S>(
    solver: &mut S,
    stops: &[f64],
    mut on_step: impl FnMut(&S, f64, f64) -> Result<(), SensitivityError>,
    mut at_stop: impl FnMut(&S, f64) -> Result<(), SensitivityError>,
) -> Result<usize, SensitivityError>
where
    E: OdeEquations<T = f64> + 'a,
    S: OdeSolverMethod<'a, E>,
{
    let mut steps = 0;
    for &stop in stops {
        if stop <= solver.state().t {
            at_stop(solver, stop)?;
            continue;
        }
        solver
            .set_stop_time(stop)
            .map_err(|e| failed(solver.state().t, e))?;
        loop {
            let before = solver.state().t;
            *solver.config_mut().as_base_mut().minimum_timestep =
                crate::integrator::minimum_step(before);
            let reason = solver.step().map_err(|e| failed(before, e))?;
            steps += 1;
            on_step(solver, before, solver.state().t)?;
            if matches!(reason, OdeSolverStopReason::TstopReached) {
                break;
            }
        }
        at_stop(solver, stop)?;
    }
    Ok(steps)
}

/// Sorted, de-duplicated stop times: `times`, plus the breakpoints of a prescribed history.
fn stop_times(model: &ReactorModel, times: &[f64]) -> Vec<f64> {
    let mut stops: Vec<f64> = times.to_vec();
    if let (Energy::Prescribed(history), Some(&first), Some(&last)) =
        (&model.energy, times.first(), times.last())
    {
        stops.extend(history.breakpoints_between(first, last));
    }
    stops.sort_by(f64::total_cmp);
    stops.dedup();
    stops
}

/// Forward sensitivities of the state to the rate constants of `steps` (mechanism indices),
/// at every time of `output_times_s` (s; finite, increasing; the first is the start), and of
/// each of `targets` (their times inside the run).
///
/// The run is the reactor `model` of `kinetics` from `initial_mol_per_m3` (mol/m3) at
/// `temperature_k` (K, as for [`crate::BatchSystem::with_model`]) with the tolerances of
/// `options`, which also apply to the sensitivities (in the state's units). Non-negativity
/// and invariant projection are not applied (the sensitivities would need the same
/// projection); at tight tolerances the state matches a plain run to the tolerance.
///
/// Errors: [`SensitivityError`] for bad input, and when the integration fails.
#[allow(clippy::too_many_arguments)]
pub fn forward_sensitivities(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    initial_mol_per_m3: &[f64],
    output_times_s: &[f64],
    options: &IntegrationOptions,
    steps: &[usize],
    targets: &[Target],
) -> Result<ForwardSensitivities, SensitivityError> {
    check_steps(kinetics, steps)?;
    let (eqn, initial) = core(kinetics, model, temperature_k, initial_mol_per_m3, options)?;
    let m = eqn.n_states();
    let Some((&t0, &t_end)) = output_times_s.first().zip(output_times_s.last()) else {
        return Err(ReactorError::NoOutputTimes.into());
    };
    if let Some(index) = output_times_s
        .iter()
        .enumerate()
        .position(|(i, t)| !t.is_finite() || (i > 0 && *t <= output_times_s[i - 1]))
    {
        return Err(ReactorError::OutputTimesNotIncreasing {
            index,
            value: output_times_s[index],
        }
        .into());
    }
    for target in targets {
        check_target(target, m, t0, t_end)?;
    }
    let atol_state = state_atol(model, options);
    let p = steps.len();
    let mut atol = Vec::with_capacity(m * (1 + p));
    for _ in 0..=p {
        atol.extend_from_slice(&atol_state);
    }
    let sens = SensEquations::new(eqn, steps.to_vec(), &initial, atol_state.clone());
    let mut problem = OdeBuilder::<FaerSparseMat<f64>>::new()
        .rtol(options.relative_tolerance)
        .atol(atol)
        .t0(t0)
        .build_from_eqn(sens)
        .map_err(|e| failed(t0, e))?;
    configure(&mut problem, options);
    let problem = problem;
    let state = problem
        .bdf_state::<BlockSolver>()
        .map_err(|e| failed(t0, e))?;
    let mut solver: Bdf<'_, SensEquations, BlockSolver> = Bdf::new(
        &problem,
        state,
        BlockSolver::new(m, Some(Rc::clone(&problem.eqn.core))),
    )
    .map_err(|e| failed(t0, e))?;

    let mut wanted: Vec<f64> = output_times_s.to_vec();
    wanted.extend(targets.iter().map(Target::time_s));
    let stops = stop_times(model, &wanted);
    let n_total = m * (1 + p);
    // The augmented state at every stop (output and target times).
    let mut recorded: Vec<(f64, Vec<f64>)> = Vec::with_capacity(stops.len());
    recorded.push((t0, problem.eqn.initial.clone()));
    let mut buffer = FaerVec::<f64>::zeros(n_total, problem.eqn.ctx);
    let mut pending: Vec<f64> = stops.iter().copied().filter(|&t| t > t0).collect();
    pending.reverse();
    let forward_steps = {
        let recorded = &mut recorded;
        let pending = &mut pending;
        let buffer = &mut buffer;
        let solver = &mut solver;
        // One stop at the end: outputs inside steps are interpolated, so the solver's steps
        // do not depend on the output grid (breakpoints of a prescribed history are stops).
        let mut hard_stops: Vec<f64> = stop_times(model, &[t0, t_end]);
        hard_stops.retain(|&t| t > t0);
        march::<SensEquations, _>(
            solver,
            &hard_stops,
            |s, _before, after| {
                while let Some(&t) = pending.last() {
                    if t > after {
                        break;
                    }
                    s.interpolate_inplace(t, buffer)
                        .map_err(|e| failed(after, e))?;
                    recorded.push((t, <FaerSparseMat<f64> as Backend>::slice(buffer).to_vec()));
                    pending.pop();
                }
                Ok(())
            },
            |_, _| Ok(()),
        )?
    };
    let find = |t: f64| recorded.iter().find(|(rt, _)| *rt == t).map(|(_, x)| x);
    let mut times_s = Vec::with_capacity(output_times_s.len());
    let mut states = Vec::with_capacity(output_times_s.len());
    let mut sensitivities = Vec::with_capacity(output_times_s.len());
    for &t in output_times_s {
        let x = find(t).ok_or_else(|| SensitivityError::Failed {
            time_s: t,
            reason: "output time not reached".into(),
        })?;
        times_s.push(t);
        states.push(x[..m].to_vec());
        sensitivities.push(x[m..].chunks(m.max(1)).map(<[f64]>::to_vec).collect());
    }
    let eqn = &problem.eqn.eqn;
    let mut derivative = vec![0.0; n_total];
    let mut target_results = Vec::with_capacity(targets.len());
    for target in targets {
        let t = target.time_s();
        let x = find(t).ok_or_else(|| SensitivityError::Failed {
            time_s: t,
            reason: "target time not reached".into(),
        })?;
        let (y, s) = x.split_at(m);
        problem.eqn.derivative(t, x, &mut derivative);
        let (f, ds) = derivative.split_at(m);
        let i = target.state();
        let pointwise = Pointwise { eqn };
        let result = match *target {
            Target::Value { .. } => TargetSensitivity {
                value: y[i],
                gradient: s.chunks(m).map(|sj| sj[i]).collect(),
            },
            Target::Crossing { .. } => {
                let slope = nonzero(f[i], t)?;
                TargetSensitivity {
                    value: t,
                    gradient: s.chunks(m).map(|sj| -sj[i] / slope).collect(),
                }
            }
            Target::Peak { .. } => {
                let slope = nonzero(pointwise.rate_slope(t, y, i), t)?;
                TargetSensitivity {
                    value: t,
                    gradient: ds.chunks(m).map(|dj| -dj[i] / slope).collect(),
                }
            }
            Target::RateMaximum { .. } => {
                let slope = nonzero(second_derivative_slope(eqn, t, y, i, &atol_state), t)?;
                let mut gradient = Vec::with_capacity(p);
                for (b, &j) in steps.iter().enumerate() {
                    let sj = &s[b * m..(b + 1) * m];
                    let e = RATE_MAXIMUM_STEP;
                    let up = scaled_core(eqn, j, e.exp())?;
                    let down = scaled_core(eqn, j, (-e).exp())?;
                    let y_up: Vec<f64> = y.iter().zip(sj).map(|(y, s)| y + e * s).collect();
                    let y_down: Vec<f64> = y.iter().zip(sj).map(|(y, s)| y - e * s).collect();
                    let d = (second_derivative(&up, t, &y_up, i)
                        - second_derivative(&down, t, &y_down, i))
                        / (2.0 * e);
                    gradient.push(-d / slope);
                }
                TargetSensitivity { value: t, gradient }
            }
        };
        target_results.push(result);
    }
    let stats = SensitivityStats {
        forward_steps,
        backward_steps: 0,
        rhs_evaluations: problem.eqn.evaluations.get(),
    };
    Ok(ForwardSensitivities {
        steps: steps.to_vec(),
        times_s,
        states,
        sensitivities,
        targets: target_results,
        stats,
    })
}

fn nonzero(slope: f64, time_s: f64) -> Result<f64, SensitivityError> {
    if slope != 0.0 && slope.is_finite() {
        Ok(slope)
    } else {
        Err(SensitivityError::Degenerate { time_s, slope })
    }
}

// ---------------------------------------------------------------------------------------
// Adjoint.

/// The forward trajectory: per accepted step, the state at a quarter, half, three quarters
/// and the end of the step (from the solver's interpolant), for degree-4 interpolation.
struct Trajectory {
    m: usize,
    /// Step ends; `times[0]` is the start.
    times: Vec<f64>,
    /// `samples[k]`: 5 states (start, 1/4, 1/2, 3/4, end) of step `k` (ending at
    /// `times[k + 1]`), flattened.
    samples: Vec<Vec<f64>>,
}

impl Trajectory {
    /// The step containing `t` (clamped).
    fn step_of(&self, t: f64) -> usize {
        let k = self.times.partition_point(|&x| x < t);
        k.saturating_sub(1)
            .min(self.samples.len().saturating_sub(1))
    }

    fn at(&self, t: f64, out: &mut [f64]) {
        let k = self.step_of(t);
        let (a, b) = (self.times[k], self.times[k + 1]);
        let h = b - a;
        let nodes = [a, a + 0.25 * h, a + 0.5 * h, a + 0.75 * h, b];
        let mut weights = [1.0; 5];
        for (i, w) in weights.iter_mut().enumerate() {
            for (j, &xj) in nodes.iter().enumerate() {
                if i != j {
                    *w *= (t - xj) / (nodes[i] - xj);
                }
            }
        }
        let s = &self.samples[k];
        let m = self.m;
        out.iter_mut().for_each(|x| *x = 0.0);
        for (i, &w) in weights.iter().enumerate() {
            for (o, &v) in out.iter_mut().zip(&s[i * m..(i + 1) * m]) {
                *o += w * v;
            }
        }
    }
}

/// The adjoint equations in reversed time `tau = t* - t`: `dlambda/dtau = J(y(t* - tau))^T
/// lambda`.
struct AdjointEquations {
    eqn: Core,
    trajectory: Trajectory,
    t_star: f64,
    terminal: Vec<f64>,
    /// `J^T` pattern (compressed sparse column) and, per entry of `J`, its position there.
    transposed: SymbolicSparseColMat<usize>,
    transpose_map: Vec<usize>,
    jac: RefCell<Vec<f64>>,
    y: RefCell<Vec<f64>>,
    evaluations: Cell<usize>,
    ctx: FaerContext,
}

impl AdjointEquations {
    fn new(eqn: Core, trajectory: Trajectory, t_star: f64, terminal: Vec<f64>) -> Self {
        let pattern = eqn.state_pattern();
        let m = pattern.n();
        let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
        let mut counts = vec![0usize; m + 1];
        for &r in rows {
            counts[r + 1] += 1;
        }
        for i in 0..m {
            counts[i + 1] += counts[i];
        }
        let t_starts = counts.clone();
        let mut next = counts;
        let mut t_rows = vec![0; rows.len()];
        let mut map = vec![0; rows.len()];
        for col in 0..m {
            for p in starts[col]..starts[col + 1] {
                let r = rows[p];
                let dst = next[r];
                next[r] += 1;
                t_rows[dst] = col;
                map[p] = dst;
            }
        }
        let transposed = SymbolicSparseColMat::new_checked(m, m, t_starts, None, t_rows);
        AdjointEquations {
            jac: RefCell::new(vec![0.0; pattern.nnz()]),
            y: RefCell::new(vec![0.0; m]),
            evaluations: Cell::new(0),
            ctx: FaerContext::default(),
            transposed,
            transpose_map: map,
            eqn,
            trajectory,
            t_star,
            terminal,
        }
    }

    fn m(&self) -> usize {
        self.terminal.len()
    }

    /// Jacobian values at the forward state of reversed time `tau`, into `self.jac`.
    fn jacobian_at(&self, tau: f64) {
        let t = self.t_star - tau;
        let mut y = self.y.borrow_mut();
        self.trajectory.at(t, &mut y);
        self.eqn.jacobian_values(t, &y, &mut self.jac.borrow_mut());
    }
}

struct AdjointRhs<'a> {
    eqn: &'a AdjointEquations,
}

struct AdjointInit<'a> {
    eqn: &'a AdjointEquations,
}

macro_rules! impl_adjoint_op {
    ($name:ident) => {
        impl Op for $name<'_> {
            type T = f64;
            type V = FaerVec<f64>;
            type M = FaerSparseMat<f64>;
            type C = FaerContext;

            fn context(&self) -> &Self::C {
                &self.eqn.ctx
            }
            fn nstates(&self) -> usize {
                self.eqn.m()
            }
            fn nout(&self) -> usize {
                self.eqn.m()
            }
            fn nparams(&self) -> usize {
                0
            }
        }
    };
}

impl_adjoint_op!(AdjointRhs);
impl_adjoint_op!(AdjointInit);

impl NonLinearOp for AdjointRhs<'_> {
    fn call_inplace(&self, x: &FaerVec<f64>, tau: f64, y: &mut FaerVec<f64>) {
        let eqn = self.eqn;
        eqn.evaluations.set(eqn.evaluations.get() + 1);
        eqn.jacobian_at(tau);
        let lambda = <FaerSparseMat<f64> as Backend>::slice(x);
        let out = <FaerSparseMat<f64> as Backend>::slice_mut(y);
        let pattern = eqn.eqn.state_pattern();
        let jac = eqn.jac.borrow();
        let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
        // (J^T lambda)_col = sum_row J[row, col] lambda_row
        for (col, o) in out.iter_mut().enumerate().take(pattern.n()) {
            *o = (starts[col]..starts[col + 1])
                .map(|p| jac[p] * lambda[rows[p]])
                .sum();
        }
    }
}

impl NonLinearOpJacobian for AdjointRhs<'_> {
    fn jac_mul_inplace(&self, _x: &FaerVec<f64>, tau: f64, v: &FaerVec<f64>, y: &mut FaerVec<f64>) {
        // Linear equations: the Jacobian-vector product is the right-hand side at v.
        self.call_inplace(v, tau, y);
    }

    fn jacobian_inplace(&self, _x: &FaerVec<f64>, tau: f64, y: &mut FaerSparseMat<f64>) {
        let eqn = self.eqn;
        eqn.jacobian_at(tau);
        let Some(matrix) = y.inner_mut().first_mut() else {
            return;
        };
        if matrix.symbolic().col_ptr() != eqn.transposed.col_ptr()
            || matrix.symbolic().row_idx() != eqn.transposed.row_idx()
        {
            return;
        }
        let values = matrix.val_mut();
        for (&dst, &v) in eqn.transpose_map.iter().zip(eqn.jac.borrow().iter()) {
            values[dst] = v;
        }
    }

    fn jacobian_sparsity(&self) -> Option<SymbolicSparseColMat<usize>> {
        Some(self.eqn.transposed.clone())
    }
}

impl ConstantOp for AdjointInit<'_> {
    fn call_inplace(&self, _t: f64, y: &mut FaerVec<f64>) {
        <FaerSparseMat<f64> as Backend>::slice_mut(y).copy_from_slice(&self.eqn.terminal);
    }
}

impl Op for AdjointEquations {
    type T = f64;
    type V = FaerVec<f64>;
    type M = FaerSparseMat<f64>;
    type C = FaerContext;

    fn context(&self) -> &Self::C {
        &self.ctx
    }
    fn nstates(&self) -> usize {
        self.m()
    }
    fn nout(&self) -> usize {
        self.m()
    }
    fn nparams(&self) -> usize {
        0
    }
}

impl<'a> OdeEquationsRef<'a> for AdjointEquations {
    type Mass = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
    type Rhs = AdjointRhs<'a>;
    type Root = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
    type Init = AdjointInit<'a>;
    type Out = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
    type Reset = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
}

impl OdeEquations for AdjointEquations {
    fn rhs(&self) -> AdjointRhs<'_> {
        AdjointRhs { eqn: self }
    }
    fn mass(&self) -> Option<<Self as OdeEquationsRef<'_>>::Mass> {
        None
    }
    fn init(&self) -> AdjointInit<'_> {
        AdjointInit { eqn: self }
    }
    fn set_params(&mut self, _p: &Self::V) {}
    fn get_params(&self, _p: &mut Self::V) {}
}

/// Three-point Gauss-Legendre nodes on [-1, 1] and weights.
const GAUSS: [(f64, f64); 3] = [
    (-0.774_596_669_241_483_4, 5.0 / 9.0),
    (0.0, 8.0 / 9.0),
    (0.774_596_669_241_483_4, 5.0 / 9.0),
];

/// The gradient of one `target` with respect to the rate constants of `steps` by the adjoint
/// method: one forward pass (state only, kept as interpolation samples of each step), one
/// backward pass of the adjoint equations from the target's time to the start, with the
/// parameter integrals accumulated on the way. Arguments as for [`forward_sensitivities`].
///
/// The cost is about two plain runs plus, per backward step, nine rate-of-progress
/// evaluations and a pass over the chosen steps' stoichiometry, independent of the number of
/// parameters otherwise; a [`Target::RateMaximum`] also needs two evaluations of the
/// equations with each step scaled (the terminal condition by central differences).
/// Memory: five states per forward step.
///
/// Errors: [`SensitivityError`] for bad input, and when an integration fails.
pub fn adjoint_sensitivity(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    initial_mol_per_m3: &[f64],
    options: &IntegrationOptions,
    steps: &[usize],
    target: Target,
) -> Result<AdjointSensitivity, SensitivityError> {
    check_steps(kinetics, steps)?;
    let (eqn, initial) = core(kinetics, model, temperature_k, initial_mol_per_m3, options)?;
    let m = eqn.n_states();
    let t0 = 0.0;
    let t_star = target.time_s();
    check_target(&target, m, t0, f64::INFINITY)?;
    if !(t_star > t0 && t_star.is_finite()) {
        return Err(SensitivityError::TimeOutsideRun {
            time_s: t_star,
            start_s: t0,
            end_s: f64::INFINITY,
        });
    }
    let atol_state = state_atol(model, options);

    // Forward pass.
    let (eqn, trajectory, forward_steps, forward_evaluations) = {
        let mut problem = OdeBuilder::<FaerSparseMat<f64>>::new()
            .rtol(options.relative_tolerance)
            .atol(atol_state.clone())
            .t0(t0)
            .build_from_eqn(eqn)
            .map_err(|e| failed(t0, e))?;
        configure(&mut problem, options);
        let problem = problem;
        let base = problem.eqn.rhs_evaluations.get();
        let mut solver = problem
            .bdf::<FixedPatternSolver>()
            .map_err(|e| failed(t0, e))?;
        let mut trajectory = Trajectory {
            m,
            times: vec![t0],
            samples: Vec::new(),
        };
        let mut buffer = FaerVec::<f64>::zeros(m, *problem.eqn.context());
        let mut previous = initial.clone();
        let stops = stop_times(model, &[t0, t_star]);
        let stops: Vec<f64> = stops.into_iter().filter(|&t| t > t0).collect();
        let steps_taken = march::<Core, _>(
            &mut solver,
            &stops,
            |s, before, after| {
                let mut sample = Vec::with_capacity(5 * m);
                sample.extend_from_slice(&previous);
                for frac in [0.25, 0.5, 0.75] {
                    s.interpolate_inplace(before + frac * (after - before), &mut buffer)
                        .map_err(|e| failed(after, e))?;
                    sample.extend_from_slice(<FaerSparseMat<f64> as Backend>::slice(&buffer));
                }
                let end = <FaerSparseMat<f64> as Backend>::slice(s.state().y);
                sample.extend_from_slice(end);
                previous.copy_from_slice(end);
                trajectory.times.push(after);
                trajectory.samples.push(sample);
                Ok(())
            },
            |_, _| Ok(()),
        )?;
        drop(solver);
        let evaluations = problem.eqn.rhs_evaluations.get() - base;
        (problem.eqn, trajectory, steps_taken, evaluations)
    };
    if trajectory.samples.is_empty() {
        return Err(SensitivityError::Failed {
            time_s: t0,
            reason: "no step taken".into(),
        });
    }

    // Terminal condition and direct term at t*.
    let mut y_star = vec![0.0; m];
    trajectory.at(t_star, &mut y_star);
    let i = target.state();
    let pointwise = Pointwise { eqn: &eqn };
    let p = steps.len();
    let (value, terminal, direct) = match target {
        Target::Value { .. } => {
            let mut a = vec![0.0; m];
            a[i] = 1.0;
            (y_star[i], a, vec![0.0; p])
        }
        Target::Crossing { .. } => {
            let slope = nonzero(pointwise.f(t_star, &y_star)[i], t_star)?;
            let mut a = vec![0.0; m];
            a[i] = -1.0 / slope;
            (t_star, a, vec![0.0; p])
        }
        Target::Peak { .. } => {
            let slope = nonzero(pointwise.rate_slope(t_star, &y_star, i), t_star)?;
            let a: Vec<f64> = pointwise
                .jac_row(t_star, &y_star, i)
                .iter()
                .map(|r| -r / slope)
                .collect();
            let direct = pointwise
                .parameter_columns(t_star, &y_star, steps)
                .iter()
                .map(|c| -c[i] / slope)
                .collect();
            (t_star, a, direct)
        }
        Target::RateMaximum { .. } => {
            let slope = nonzero(
                second_derivative_slope(&eqn, t_star, &y_star, i, &atol_state),
                t_star,
            )?;
            let mut a = vec![0.0; m];
            for (k, ak) in a.iter_mut().enumerate() {
                let h = RATE_MAXIMUM_STEP * (y_star[k].abs() + atol_state[k]);
                let mut up = y_star.clone();
                let mut down = y_star.clone();
                up[k] += h;
                down[k] -= h;
                let d = (second_derivative(&eqn, t_star, &up, i)
                    - second_derivative(&eqn, t_star, &down, i))
                    / (2.0 * h);
                *ak = -d / slope;
            }
            let mut direct = Vec::with_capacity(p);
            for &j in steps {
                let e = RATE_MAXIMUM_STEP;
                let plus = scaled_core(&eqn, j, e.exp())?;
                let minus = scaled_core(&eqn, j, (-e).exp())?;
                let d = (second_derivative(&plus, t_star, &y_star, i)
                    - second_derivative(&minus, t_star, &y_star, i))
                    / (2.0 * e);
                direct.push(-d / slope);
            }
            (t_star, a, direct)
        }
    };

    // Backward pass.
    let scale = terminal
        .iter()
        .fold(0.0f64, |a, x| a.max(x.abs()))
        .max(1e-300);
    let atol_adjoint = vec![scale * options.relative_tolerance * 1e-3; m];
    let adjoint = AdjointEquations::new(eqn, trajectory, t_star, terminal);
    let mut problem = OdeBuilder::<FaerSparseMat<f64>>::new()
        .rtol(options.relative_tolerance)
        .atol(atol_adjoint)
        .t0(0.0)
        .build_from_eqn(adjoint)
        .map_err(|e| failed(t_star, e))?;
    configure(&mut problem, options);
    let problem = problem;
    let mut solver = problem
        .bdf::<FixedPatternSolver>()
        .map_err(|e| failed(t_star, e))?;
    let adj = &problem.eqn;
    let kinetics = &adj.eqn.kinetics;
    let equations = adj.eqn.model_equations();
    let mut gradient = direct;
    let mut lambda = FaerVec::<f64>::zeros(m, adj.ctx);
    let mut y = vec![0.0; m];
    let mut v = vec![0.0; kinetics.n_species()];
    let mut q = vec![0.0; kinetics.n_steps()];
    // Backward stops: the target time mapped from every breakpoint, then the start.
    let mut stops: Vec<f64> = stop_times(model, &[t0, t_star])
        .into_iter()
        .map(|t| t_star - t)
        .filter(|&tau| tau > 0.0)
        .collect();
    stops.sort_by(f64::total_cmp);
    let backward_steps = march::<AdjointEquations, _>(
        &mut solver,
        &stops,
        |s, tau_a, tau_b| {
            // Pieces of [t_star - tau_b, t_star - tau_a] between forward step ends.
            let (t_lo, t_hi) = (t_star - tau_b, t_star - tau_a);
            let traj = &s.problem().eqn.trajectory;
            let mut cuts = vec![t_lo];
            let first = traj.times.partition_point(|&x| x <= t_lo);
            cuts.extend(
                traj.times[first..]
                    .iter()
                    .copied()
                    .take_while(|&x| x < t_hi),
            );
            cuts.push(t_hi);
            for piece in cuts.windows(2) {
                let (a, b) = (piece[0], piece[1]);
                let (mid, half) = (0.5 * (a + b), 0.5 * (b - a));
                for (x, w) in GAUSS {
                    let t = mid + half * x;
                    s.interpolate_inplace(t_star - t, &mut lambda)
                        .map_err(|e| failed(t, e))?;
                    traj.at(t, &mut y);
                    let temperature_k = adj.eqn.scaling_rates(t, &y, &mut q);
                    equations.chemistry_map_transpose(
                        temperature_k,
                        &y,
                        <FaerSparseMat<f64> as Backend>::slice(&lambda),
                        &mut v,
                    );
                    for (g, &j) in gradient.iter_mut().zip(steps) {
                        let dot: f64 = kinetics
                            .net_changes(j)
                            .iter()
                            .map(|&(i, nu)| nu * v[i])
                            .sum();
                        *g += w * half * q[j] * dot;
                    }
                }
            }
            Ok(())
        },
        |_, _| Ok(()),
    )?;
    let stats = SensitivityStats {
        forward_steps,
        backward_steps,
        rhs_evaluations: forward_evaluations + adj.evaluations.get(),
    };
    Ok(AdjointSensitivity {
        steps: steps.to_vec(),
        target: TargetSensitivity { value, gradient },
        stats,
    })
}
