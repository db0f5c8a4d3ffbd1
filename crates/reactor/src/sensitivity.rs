//! Local sensitivities of a batch reactor to its parameters ([`Parameter`]): the rate
//! constants of its steps, each limit of a falloff step alone, and species' formation
//! enthalpies.
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
//! column and `A` the model's linear map from production rates to the state derivative (the
//! identity at constant volume; the temperature row `-e_i/C` of an adiabatic model; the
//! dilution terms at constant pressure). A falloff limit alone enters through
//! [`Kinetics::falloff_limit_rates`], a formation enthalpy (J/mol) through the reverse rates
//! from `kf/Kc` ([`Kinetics::reverse_rates_from_thermo`]) and the heat release; see
//! `docs/sensitivity.md`.
//!
//! - [`forward_sensitivities`] / [`forward_parameter_sensitivities`]: the sensitivities
//!   `s_j = dy/dp_j` of the whole state (concentrations and temperature) at output times:
//!   the state by diffsol's BDF, the sensitivities along its accepted steps with the same
//!   formula, each step's linear sensitivity equations of all parameters solved once,
//!   exactly, as one block with `I - c J` factorized at the step's end (staggered direct
//!   corrector; sensitivities out of the error test). See `DirectSensitivities` for why
//!   not diffsol's own forward sensitivities.
//! - [`adjoint_sensitivity`] / [`adjoint_parameter_sensitivity`]: the gradient of one scalar
//!   [`Target`] with respect to every chosen parameter in one backward pass:
//!   `dlambda/dt = -J^T lambda` from the target's terminal vector, and
//!   `dG/dp_j = int lambda^T df/dp_j dt + direct term`, the integral by Gauss-Legendre quadrature on the pieces of the backward and forward steps.
//!   The forward trajectory is kept as interpolation samples of every accepted step.
//!
//! Targets that are times (an ignition delay, a peak time) are differentiated through the
//! implicit function theorem: at a root of `phi(t, y(t), p) = 0`,
//! `dt/dp = -(grad_y phi . s + dphi/dp) / (dphi/dt)`.

use std::cell::{Cell, RefCell};

use diffsol::{
    ConstantOp, DiffsolError, FaerContext, FaerSparseMat, FaerVec, Matrix, NonLinearOp,
    NonLinearOpJacobian, OdeBuilder, OdeEquations, OdeEquationsRef, OdeSolverConfig,
    OdeSolverMethod, OdeSolverProblem, OdeSolverStopReason, Op, ParameterisedOp, UnitCallable,
    Vector, VectorCommon,
};
use faer::sparse::SymbolicSparseColMat;
use stoik_kinetics::{FalloffLimit, Kinetics, GAS_CONSTANT};
use stoik_sparse::FixedPatternLu;

use crate::equations::{Backend, BatchEquations};
use crate::fixed_lu::FixedPatternSolver;
use crate::integrator::{
    check_state, default_newton_tolerance, validate_options, ABSOLUTE_MINIMUM_STEP_S,
    TEMPERATURE_ABSOLUTE_TOLERANCE_K,
};
use crate::model::{energy_thermo, Energy, ReactorModel};
use crate::{IntegrationOptions, ReactorError, TOLERANCE_SAFETY_FACTOR};

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
    /// `d value / dp` for each parameter, in the order asked (units of the value per unit
    /// of the parameter: per unit of ln k, or per J/mol for an enthalpy).
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
    /// The parameters, in the order asked.
    pub parameters: Vec<Parameter>,
    /// Output times (s), as asked.
    pub times_s: Vec<f64>,
    /// Per output time: the state (concentrations in mol/m3, then the temperature in K when
    /// solved).
    pub states: Vec<Vec<f64>>,
    /// Per output time, per parameter: `dy/dp` over the state (mol/m3, K per unit of the
    /// parameter).
    pub sensitivities: Vec<Vec<Vec<f64>>>,
    /// Per target asked: its value and gradient.
    pub targets: Vec<TargetSensitivity>,
    /// Counters.
    pub stats: SensitivityStats,
}

/// The gradient of one target from one backward pass.
#[derive(Debug, Clone, PartialEq)]
pub struct AdjointSensitivity {
    /// The parameters, in the order asked.
    pub parameters: Vec<Parameter>,
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
    /// A species index is out of range.
    #[error("species index {species} is out of range: the mechanism has {n_species} species")]
    SpeciesOutOfRange {
        /// The index given.
        species: usize,
        /// Number of species.
        n_species: usize,
    },
    /// A falloff limit was asked of a step that has no falloff.
    #[error("step {step} is not a falloff or chemically activated step: it has no separate pressure limits")]
    NotFalloff {
        /// The step (mechanism index).
        step: usize,
    },
    /// A formation enthalpy was asked of a species without thermochemistry.
    #[error("species {species} has no thermochemistry: its formation enthalpy is not a parameter")]
    NoThermochemistry {
        /// The species (mechanism index).
        species: usize,
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

/// A parameter of local sensitivities.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Parameter {
    /// `ln kf` of step `j` (dimensionless): its forward rate constant as
    /// [`Kinetics::scale_forward`] scales it (a reverse rate constant from `kf/Kc` follows,
    /// both limits of a falloff step together).
    RateConstant(usize),
    /// `ln k0` of falloff or chemically activated step `j` (dimensionless): its low-pressure
    /// limit alone ([`Kinetics::scale_falloff_limit`]).
    LowPressureLimit(usize),
    /// `ln kinf` of falloff or chemically activated step `j` (dimensionless): its
    /// high-pressure limit alone.
    HighPressureLimit(usize),
    /// The standard formation enthalpy of species `i`, in J/mol: a shift of its enthalpy at
    /// every temperature ([`Kinetics::shift_formation_enthalpy`]). It moves the equilibrium
    /// constants (`d ln Kc_j/dH_i = -nu_ij/(R T)`), hence the reverse rate constants from
    /// `kf/Kc`, and the heat release of a reactor that solves the energy balance.
    FormationEnthalpy(usize),
}

/// The parameters' derivatives of the state derivative, `df/dp_b = A(y) w_b + d_b u(y)`:
/// `w_b = sum_j a_bj nu_j` a combination of steps' stoichiometric columns (`A` the model's
/// map from production rates, [`ModelEquations::chemistry_map`]), and `d_b u` the direct
/// change of the heat release (enthalpies only; `u` from
/// [`ModelEquations::heat_release_direction`], `d_b` the species' production rate).
struct ParameterSet {
    parameters: Vec<Parameter>,
    /// Per formation-enthalpy parameter: the steps whose reverse rate constant is `kf/Kc`
    /// and that change the species, with `nu_ij`; empty for the others.
    enthalpy_steps: Vec<Vec<(usize, f64)>>,
    any_enthalpy: bool,
}

/// Scratch and results of one evaluation of a [`ParameterSet`].
struct ParameterDerivatives {
    /// Per parameter: `(step j, a_bj)` (mol/(m3 s) per unit of the parameter).
    weights: Vec<Vec<(usize, f64)>>,
    /// Per parameter: `d_b` (mol/(m3 s) per J/mol for an enthalpy, else 0).
    direct: Vec<f64>,
    scaling: Vec<f64>,
    reverse: Vec<f64>,
    production: Vec<f64>,
    /// `u`, the state's length.
    heat: Vec<f64>,
    /// Dense `w_b` (species) and a column (state).
    w: Vec<f64>,
    column: Vec<f64>,
}

impl ParameterSet {
    /// Checks `parameters` against `kinetics` (and, for enthalpies, its thermochemistry).
    fn new(kinetics: &Kinetics, parameters: &[Parameter]) -> Result<Self, SensitivityError> {
        let n_steps = kinetics.n_steps();
        let n_species = kinetics.n_species();
        let mut enthalpy_steps = Vec::with_capacity(parameters.len());
        for &p in parameters {
            let mut list = Vec::new();
            match p {
                Parameter::RateConstant(step) if step >= n_steps => {
                    return Err(SensitivityError::StepOutOfRange { step, n_steps });
                }
                Parameter::LowPressureLimit(step) | Parameter::HighPressureLimit(step) => {
                    if step >= n_steps {
                        return Err(SensitivityError::StepOutOfRange { step, n_steps });
                    }
                    if !kinetics.is_falloff(step) {
                        return Err(SensitivityError::NotFalloff { step });
                    }
                }
                Parameter::FormationEnthalpy(species) => {
                    if species >= n_species {
                        return Err(SensitivityError::SpeciesOutOfRange { species, n_species });
                    }
                    if kinetics.species_thermo()[species].is_none() {
                        return Err(SensitivityError::NoThermochemistry { species });
                    }
                    for j in 0..n_steps {
                        if let Some(&(_, nu)) =
                            kinetics.net_changes(j).iter().find(|(i, _)| *i == species)
                        {
                            list.push((j, nu));
                        }
                    }
                }
                Parameter::RateConstant(_) => {}
            }
            enthalpy_steps.push(list);
        }
        Ok(ParameterSet {
            any_enthalpy: parameters
                .iter()
                .any(|p| matches!(p, Parameter::FormationEnthalpy(_))),
            parameters: parameters.to_vec(),
            enthalpy_steps,
        })
    }

    fn len(&self) -> usize {
        self.parameters.len()
    }

    fn scratch(&self, kinetics: &Kinetics, m: usize) -> ParameterDerivatives {
        ParameterDerivatives {
            weights: self.parameters.iter().map(|_| Vec::new()).collect(),
            direct: vec![0.0; self.len()],
            scaling: vec![0.0; kinetics.n_steps()],
            reverse: vec![0.0; kinetics.n_steps()],
            production: vec![0.0; kinetics.n_species()],
            heat: vec![0.0; m],
            w: vec![0.0; kinetics.n_species()],
            column: vec![0.0; m],
        }
    }

    /// Fills `d.weights`, `d.direct` and `d.heat` at `(t, y)`; returns the temperature (K).
    fn evaluate(&self, eqn: &Core, t: f64, y: &[f64], d: &mut ParameterDerivatives) -> f64 {
        let kinetics = &eqn.kinetics;
        let n = kinetics.n_species();
        let c = &y[..n];
        let temperature_k = eqn.with_rate_constants(t, y, |k, temperature_k| {
            kinetics.scaling_rates(k, c, &mut d.scaling);
            if self.any_enthalpy {
                kinetics.reverse_rates_from_thermo(k, c, &mut d.reverse);
                kinetics.production_rates(k, c, &mut d.production);
            }
            for (b, &p) in self.parameters.iter().enumerate() {
                let weights = &mut d.weights[b];
                weights.clear();
                d.direct[b] = 0.0;
                match p {
                    Parameter::RateConstant(j) => weights.push((j, d.scaling[j])),
                    Parameter::LowPressureLimit(j) | Parameter::HighPressureLimit(j) => {
                        let (low, high) = kinetics.falloff_limit_rates(k, c, j).unwrap_or_default();
                        let a = if matches!(p, Parameter::LowPressureLimit(_)) {
                            low
                        } else {
                            high
                        };
                        weights.push((j, a));
                    }
                    Parameter::FormationEnthalpy(i) => {
                        let rt = GAS_CONSTANT * temperature_k;
                        for &(j, nu) in &self.enthalpy_steps[b] {
                            if d.reverse[j] != 0.0 {
                                weights.push((j, -nu * d.reverse[j] / rt));
                            }
                        }
                        d.direct[b] = d.production[i];
                    }
                }
            }
            temperature_k
        });
        if self.any_enthalpy {
            eqn.model_equations()
                .heat_release_direction(temperature_k, y, &mut d.heat);
        }
        temperature_k
    }

    /// After [`evaluate`](Self::evaluate): calls `each(b, column)` with the dense `df/dp_b`.
    fn for_each_column(
        &self,
        eqn: &Core,
        temperature_k: f64,
        y: &[f64],
        d: &mut ParameterDerivatives,
        mut each: impl FnMut(usize, &[f64]),
    ) {
        let kinetics = &eqn.kinetics;
        let equations = eqn.model_equations();
        for b in 0..self.len() {
            d.w.iter_mut().for_each(|x| *x = 0.0);
            for &(j, a) in &d.weights[b] {
                for &(i, nu) in kinetics.net_changes(j) {
                    d.w[i] += nu * a;
                }
            }
            equations.chemistry_map(temperature_k, y, &d.w, &mut d.column);
            if d.direct[b] != 0.0 {
                for (o, u) in d.column.iter_mut().zip(&d.heat) {
                    *o += d.direct[b] * u;
                }
            }
            each(b, &d.column);
        }
    }

    /// The dense `df/dp` of every parameter at `(t, y)` (allocates).
    fn columns(&self, eqn: &Core, t: f64, y: &[f64]) -> Vec<Vec<f64>> {
        let mut d = self.scratch(&eqn.kinetics, eqn.n_states());
        let temperature_k = self.evaluate(eqn, t, y, &mut d);
        let mut out = vec![Vec::new(); self.len()];
        self.for_each_column(eqn, temperature_k, y, &mut d, |b, column| {
            out[b] = column.to_vec()
        });
        out
    }

    /// The step of a central difference in parameter `b` at temperature `temperature_k`:
    /// [`RATE_MAXIMUM_STEP`] in ln k, that times `R T` (J/mol) for an enthalpy.
    fn difference_step(&self, b: usize, temperature_k: f64) -> f64 {
        match self.parameters[b] {
            Parameter::FormationEnthalpy(_) => RATE_MAXIMUM_STEP * GAS_CONSTANT * temperature_k,
            _ => RATE_MAXIMUM_STEP,
        }
    }
}

/// The equations of `base` with parameter `parameter` moved by `delta` (in ln k, or J/mol).
fn perturbed_core(base: &Core, parameter: Parameter, delta: f64) -> Result<Core, ReactorError> {
    let mut kinetics = base.kinetics.clone();
    match parameter {
        Parameter::RateConstant(j) => {
            kinetics.scale_forward(j, delta.exp());
        }
        Parameter::LowPressureLimit(j) => {
            kinetics.scale_falloff_limit(j, FalloffLimit::Low, delta.exp());
        }
        Parameter::HighPressureLimit(j) => {
            kinetics.scale_falloff_limit(j, FalloffLimit::High, delta.exp());
        }
        Parameter::FormationEnthalpy(i) => {
            kinetics.shift_formation_enthalpy(i, delta);
        }
    }
    let thermo = energy_thermo(&kinetics, &base.model)?;
    Core::new(
        kinetics,
        base.model.clone(),
        thermo,
        base.temperature_k(),
        base.initial.clone(),
    )
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
    if model.plug.is_some() {
        return Err(ReactorError::BadPlugFlow(
            "sensitivities are not available for a plug flow".into(),
        ));
    }
    if model.is_extended() {
        return Err(ReactorError::NotSupported(
            "sensitivities of semi-batch and liquid-phase reactors are not implemented".into(),
        ));
    }
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

/// The solver's absolute tolerances of the state (mol/m3 per species, K): the requested ones
/// over [`TOLERANCE_SAFETY_FACTOR`], as in a plain run.
fn state_atol(model: &ReactorModel, options: &IntegrationOptions) -> Vec<f64> {
    let mut atol = options.absolute_tolerances_mol_per_m3.clone();
    if model.solves_energy() {
        atol.push(TEMPERATURE_ABSOLUTE_TOLERANCE_K);
    }
    atol.iter_mut().for_each(|a| *a /= TOLERANCE_SAFETY_FACTOR);
    atol
}

/// The solver's relative tolerance: the requested one over [`TOLERANCE_SAFETY_FACTOR`], as in
/// a plain run.
fn solver_rtol(options: &IntegrationOptions) -> f64 {
    options.relative_tolerance / TOLERANCE_SAFETY_FACTOR
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
// Forward: the state with diffsol's staggered forward sensitivities.

/// The reactor equations of the state, integrated by diffsol's BDF, with the chosen
/// parameters for [`DirectSensitivities`] (`df/dp`, one column per parameter).
struct ParamEquations {
    eqn: Core,
    set: ParameterSet,
    m: usize,
    initial: Vec<f64>,
    /// Jacobian values at `jac_point` (time and state), valid when `jac_valid`.
    jac: RefCell<Vec<f64>>,
    jac_point: RefCell<(f64, Vec<f64>)>,
    jac_valid: Cell<bool>,
    scratch: RefCell<ParameterDerivatives>,
    /// Whether `df/dp_b` is the stoichiometric combination `w_b` itself, its rows of fixed
    /// species aside (a constant-volume reactor without energy balance): then its entries
    /// come from the steps' stoichiometry, without a dense column.
    stoichiometric_columns: bool,
    /// Per species: held fixed (its row of `df/dp` is zero).
    fixed: Vec<bool>,
    evaluations: Cell<usize>,
    ctx: FaerContext,
}

impl ParamEquations {
    fn new(eqn: Core, set: ParameterSet, initial: &[f64]) -> Self {
        let m = eqn.n_states();
        let nnz = eqn.state_pattern().nnz();
        let model = &eqn.model;
        let stoichiometric_columns = model.constraint == crate::model::Constraint::ConstantVolume
            && !model.solves_energy()
            && model.plug.is_none()
            && m == eqn.kinetics.n_species();
        let mut fixed = vec![false; eqn.kinetics.n_species()];
        for &i in &model.conditions.fixed_species {
            if let Some(f) = fixed.get_mut(i) {
                *f = true;
            }
        }
        ParamEquations {
            m,
            stoichiometric_columns,
            fixed,
            initial: initial.to_vec(),
            jac: RefCell::new(vec![0.0; nnz]),
            jac_point: RefCell::new((f64::NAN, vec![f64::NAN; m])),
            jac_valid: Cell::new(false),
            scratch: RefCell::new(set.scratch(&eqn.kinetics, m)),
            evaluations: Cell::new(0),
            ctx: FaerContext::default(),
            set,
            eqn,
        }
    }

    fn n_params(&self) -> usize {
        self.set.len()
    }

    /// The Jacobian values at `(t, y)`, evaluated only when the point changed.
    fn jacobian_at(&self, t: f64, y: &[f64]) -> std::cell::Ref<'_, Vec<f64>> {
        {
            let mut point = self.jac_point.borrow_mut();
            if !(self.jac_valid.get() && point.0 == t && point.1 == y) {
                self.eqn.jacobian_values(t, y, &mut self.jac.borrow_mut());
                point.0 = t;
                point.1.copy_from_slice(y);
                self.jac_valid.set(true);
            }
        }
        self.jac.borrow()
    }

    /// Calls `each(b, column)` with `df/dp_b` at `(t, y)` for every parameter `b`.
    fn for_each_column(&self, t: f64, y: &[f64], each: impl FnMut(usize, &[f64])) {
        let mut d = self.scratch.borrow_mut();
        let temperature_k = self.set.evaluate(&self.eqn, t, y, &mut d);
        self.set
            .for_each_column(&self.eqn, temperature_k, y, &mut d, each);
    }

    /// Calls `each(b, i, value)` for the entries of `df/dp_b` at `(t, y)` that can be
    /// nonzero, every parameter `b` (an entry may come in several parts, to be added).
    fn for_each_entry(&self, t: f64, y: &[f64], mut each: impl FnMut(usize, usize, f64)) {
        if !self.stoichiometric_columns {
            self.for_each_column(t, y, |b, column| {
                for (i, &v) in column.iter().enumerate() {
                    if v != 0.0 {
                        each(b, i, v);
                    }
                }
            });
            return;
        }
        let mut d = self.scratch.borrow_mut();
        self.set.evaluate(&self.eqn, t, y, &mut d);
        let kinetics = &self.eqn.kinetics;
        for (b, weights) in d.weights.iter().enumerate() {
            for &(j, a) in weights {
                for &(i, nu) in kinetics.net_changes(j) {
                    if !self.fixed[i] {
                        each(b, i, nu * a);
                    }
                }
            }
        }
    }
}

struct ParamRhs<'a> {
    eqn: &'a ParamEquations,
}

struct ParamInit<'a> {
    eqn: &'a ParamEquations,
}

macro_rules! impl_param_op {
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
                self.eqn.m
            }
            fn nout(&self) -> usize {
                self.eqn.m
            }
            fn nparams(&self) -> usize {
                0
            }
        }
    };
}

impl_param_op!(ParamRhs);
impl_param_op!(ParamInit);

impl NonLinearOp for ParamRhs<'_> {
    fn call_inplace(&self, x: &FaerVec<f64>, t: f64, y: &mut FaerVec<f64>) {
        let eqn = self.eqn;
        eqn.evaluations.set(eqn.evaluations.get() + 1);
        eqn.eqn.state_derivative(
            t,
            <FaerSparseMat<f64> as Backend>::slice(x),
            <FaerSparseMat<f64> as Backend>::slice_mut(y),
        );
    }
}

impl NonLinearOpJacobian for ParamRhs<'_> {
    /// `J v` for every column (batch lane) of `v`.
    fn jac_mul_inplace(&self, x: &FaerVec<f64>, t: f64, v: &FaerVec<f64>, y: &mut FaerVec<f64>) {
        let eqn = self.eqn;
        let jac = eqn.jacobian_at(t, <FaerSparseMat<f64> as Backend>::slice(x));
        let pattern = eqn.eqn.state_pattern();
        let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
        let v = v.inner();
        let y = y.inner_mut();
        for lane in 0..v.ncols().min(y.ncols()) {
            csc_mul(
                starts,
                rows,
                &jac,
                v.col_as_slice(lane),
                y.col_as_slice_mut(lane),
            );
        }
    }

    fn jacobian_inplace(&self, x: &FaerVec<f64>, t: f64, y: &mut FaerSparseMat<f64>) {
        self.eqn.eqn.rhs().jacobian_inplace(x, t, y);
    }

    fn jacobian_sparsity(&self) -> Option<SymbolicSparseColMat<usize>> {
        self.eqn.eqn.rhs().jacobian_sparsity()
    }
}

impl ConstantOp for ParamInit<'_> {
    fn call_inplace(&self, _t: f64, y: &mut FaerVec<f64>) {
        <FaerSparseMat<f64> as Backend>::slice_mut(y).copy_from_slice(&self.eqn.initial);
    }
}

impl Op for ParamEquations {
    type T = f64;
    type V = FaerVec<f64>;
    type M = FaerSparseMat<f64>;
    type C = FaerContext;

    fn context(&self) -> &Self::C {
        &self.ctx
    }
    fn nstates(&self) -> usize {
        self.m
    }
    fn nout(&self) -> usize {
        self.m
    }
    fn nparams(&self) -> usize {
        0
    }
}

impl<'a> OdeEquationsRef<'a> for ParamEquations {
    type Mass = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
    type Rhs = ParamRhs<'a>;
    type Root = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
    type Init = ParamInit<'a>;
    type Out = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
    type Reset = ParameterisedOp<'a, UnitCallable<FaerSparseMat<f64>>>;
}

impl OdeEquations for ParamEquations {
    fn rhs(&self) -> ParamRhs<'_> {
        ParamRhs { eqn: self }
    }
    fn mass(&self) -> Option<<Self as OdeEquationsRef<'_>>::Mass> {
        None
    }
    fn init(&self) -> ParamInit<'_> {
        ParamInit { eqn: self }
    }
    fn set_params(&mut self, _p: &Self::V) {}
    fn get_params(&self, _p: &mut Self::V) {}
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
        .unwrap_or_else(|| default_newton_tolerance(solver_rtol(options)));
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
    options: &IntegrationOptions,
    mut on_step: impl FnMut(&S, f64, f64) -> Result<(), SensitivityError>,
    mut at_stop: impl FnMut(&S, f64) -> Result<(), SensitivityError>,
) -> Result<usize, SensitivityError>
where
    E: OdeEquations<T = f64> + 'a,
    S: OdeSolverMethod<'a, E>,
{
    let mut steps = 0;
    // The run's monitor and wall-clock limit (per integration pass).
    let control = crate::integrator::Control {
        monitor: options.monitor.as_ref(),
        deadline: crate::integrator::deadline(options.wall_time_limit_s),
    };
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
            let after = solver.state().t;
            on_step(solver, before, after)?;
            let finished = matches!(reason, OdeSolverStopReason::TstopReached);
            control
                .after_step(after, finished)
                .map_err(|halt| SensitivityError::Failed {
                    time_s: after,
                    reason: crate::failure::Diagnosis::of_halt(&halt, None, Vec::new()).message,
                })?;
            if matches!(reason, OdeSolverStopReason::TstopReached) {
                break;
            }
        }
        at_stop(solver, stop)?;
    }
    Ok(steps)
}

/// Highest order of diffsol's BDF.
const MAX_ORDER: usize = 5;
/// Backward differences kept per sensitivity: orders 0 to `MAX_ORDER + 2`, as diffsol keeps
/// for the state (the two beyond the order carry the last correction and its change).
const DIFFERENCES: usize = MAX_ORDER + 3;
/// `kappa` of the numerical differentiation formulas of each order, the values diffsol's BDF
/// uses for the state (Shampine and Reichelt 1997, "The MATLAB ODE suite", Table 1).
const NDF_KAPPA: [f64; MAX_ORDER + 1] = [0.0, -0.1850, -1.0 / 9.0, -0.0823, -0.0415, 0.0];

/// The forward sensitivities of every parameter, stepped along the state's accepted steps.
///
/// Each step uses the state's own formula (diffsol's variable-order numerical differentiation
/// formulas in backward differences, with its order and step size) on the linear sensitivity
/// equations `ds/dt = J s + df/dp`, and solves them once, exactly, with `I - c J` evaluated
/// and factorized at the step's end (a staggered direct corrector, Caracotsios and Stewart
/// 1985, Comput. Chem. Eng. 9:359): with the history `H` of the step,
///
/// `(I - c J(t_n+1, y_n+1)) s_n+1 = H + c df/dp(t_n+1, y_n+1)`,
///
/// one block triangular solve for all parameters (`m x P`, row-major), `H = D_0 + sum_(j=1..k)
/// (1 - alpha_k gamma_j) D_j` from the backward differences `D_j` (the prediction minus
/// diffsol's `psi`) and `c = h alpha_k`. The differences are updated, rescaled at a change of
/// step size (`D <- D R U`) and interpolated as diffsol does for the state.
///
/// Why not diffsol's own forward sensitivities: its staggered corrector solves the same
/// equations by iteration with the state's Newton matrix, which is evaluated at an earlier
/// state and step size, and its convergence test needs a second update to measure a rate, so
/// every step costs two block products with `J` and two block solves (2,186 of each for 1,087
/// steps on the benchmark case; a looser derivative tolerance hardly changes that). Here a
/// step costs one evaluation of `J`, one sparse factorization and one block solve, no block
/// product (the history enters through `H`), and the sensitivities are exact up to rounding
/// at every step rather than to the derivative tolerance: 5.2 times a plain run against 10.5
/// (medians of five alternating runs in one loaded session, the forward run 1.8 to 2.2 times
/// faster; benches/README.md), 4.42 times with the passes over the blocks compiled for AVX2
/// (`step` chooses that copy at run time). diffsol's options offer no
/// single-iteration corrector, so patching it was the alternative.
///
/// The history is kept as differences, not as values on the step grid: values would save
/// memory traffic (one pass over `k + 1` blocks per step) but their formula weights alternate
/// in sign and reach tens, and the rounding that puts into an undamped mode (a conserved total
/// of the sensitivities) was measured ten times larger (`A <=> B` at equilibrium: 2.4e-15
/// against 4.6e-16 mol/m3 in `d(c_A + c_B)/d ln k`, exactly zero).
struct DirectSensitivities {
    m: usize,
    p: usize,
    /// Backward differences: entry `(i, j, b)` (state `i`, difference `j`, parameter `b`) at
    /// `(i * DIFFERENCES + j) * p + b`, on the grid of step size `h`.
    diff: Vec<f64>,
    /// Step size the differences are scaled to (s).
    h: f64,
    /// Order and step size (s) the state's solver will try next.
    order: usize,
    h_next: f64,
    /// Order of the last step taken (for interpolation inside it).
    last_order: usize,
    /// Time (s) of the end of the last step.
    t: f64,
    /// Row-major `m x p` block: right-hand sides, then the solution.
    block: Vec<f64>,
    /// The order whose history `H` the block holds, made ahead by the last step's update.
    prepared: Option<usize>,
    /// Jacobian values (state pattern).
    jac: Vec<f64>,
    /// `I - c J` on the pattern of `lu` (the state pattern with every diagonal entry).
    newton: Vec<f64>,
    jac_to_newton: Vec<usize>,
    diagonal: Vec<usize>,
    lu: FixedPatternLu,
    gamma: [f64; MAX_ORDER + 1],
    alpha: [f64; MAX_ORDER + 1],
    /// Scratch of a rescale: one state's differences.
    row: Vec<f64>,
}

/// `out = sum_(j<=order) weights_j D_j` for one state's differences `d` (`DIFFERENCES` blocks
/// of `out.len()` lanes).
#[inline(always)]
fn history_row(out: &mut [f64], d: &[f64], weights: &[f64; MAX_ORDER + 1], order: usize) {
    let p = out.len();
    out.copy_from_slice(&d[..p]);
    for (j, &w) in weights.iter().enumerate().take(order + 1).skip(1) {
        for (o, x) in out.iter_mut().zip(&d[j * p..(j + 1) * p]) {
            *o += w * x;
        }
    }
}

/// One step's update of every state's differences from the solved sensitivities (see
/// [`DirectSensitivities::step`]); with `next`, the next step's history is written over the
/// block in the same pass.
struct UpdatePass<'w> {
    p: usize,
    order: usize,
    next: Option<(usize, &'w [f64; MAX_ORDER + 1])>,
}

impl UpdatePass<'_> {
    /// Runs the pass; false if a sensitivity is not finite.
    #[inline(always)]
    fn run(&self, diff: &mut [f64], block: &mut [f64]) -> bool {
        let (p, order) = (self.p, self.order);
        // The differences at the new point: with the correction d = s_new - sum_(j<=order) D_j,
        // D_(order+2) = d - D_(order+1), then D_j += D_(j+1) from j = order + 1 down to 0.
        // When the solver's next step keeps the step size, its history H is made in the same
        // pass, while each state's differences are in cache (one pass over them per step).
        let mut finite = true;
        for (d, s_new) in diff
            .chunks_exact_mut(DIFFERENCES * p)
            .zip(block.chunks_exact_mut(p))
        {
            // Not short-circuiting, so that it vectorizes.
            finite &= s_new.iter().fold(true, |ok, v| ok & v.is_finite());
            let (head, tail) = d.split_at_mut((order + 2) * p);
            let last = &mut tail[..p];
            last.copy_from_slice(s_new);
            for column in head.chunks_exact(p) {
                for (l, x) in last.iter_mut().zip(column) {
                    *l -= x;
                }
            }
            for j in (0..=order + 1).rev() {
                let (lower, upper) = d.split_at_mut((j + 1) * p);
                for (x, y) in lower[j * p..].iter_mut().zip(&upper[..p]) {
                    *x += y;
                }
            }
            if let Some((next_order, weights)) = self.next {
                history_row(s_new, d, weights, next_order);
            }
        }
        finite
    }
}

impl DirectSensitivities {
    /// Sensitivities zero at `(t0, y0)` (the initial state does not depend on the
    /// parameters), with the state's solver about to try order `order` and step `h0`.
    fn new(
        params: &ParamEquations,
        t0: f64,
        y0: &[f64],
        h0: f64,
        order: usize,
    ) -> Result<Self, SensitivityError> {
        let (m, p) = (params.m, params.n_params());
        let pattern = params.eqn.state_pattern();
        let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
        let mut newton_starts = Vec::with_capacity(m + 1);
        let mut newton_rows = Vec::with_capacity(rows.len() + m);
        let mut jac_to_newton = vec![0; rows.len()];
        let mut diagonal = vec![0; m];
        newton_starts.push(0);
        for col in 0..m {
            let mut placed = false;
            for q in starts[col]..starts[col + 1] {
                let r = rows[q];
                if !placed && r > col {
                    diagonal[col] = newton_rows.len();
                    newton_rows.push(col);
                    placed = true;
                }
                if r == col {
                    diagonal[col] = newton_rows.len();
                    placed = true;
                }
                jac_to_newton[q] = newton_rows.len();
                newton_rows.push(r);
            }
            if !placed {
                diagonal[col] = newton_rows.len();
                newton_rows.push(col);
            }
            newton_starts.push(newton_rows.len());
        }
        let lu =
            crate::fixed_lu::shared_analysis(m, &newton_starts, &newton_rows).ok_or_else(|| {
                SensitivityError::Failed {
                    time_s: t0,
                    reason: "the sparse analysis of the sensitivity matrix failed".into(),
                }
            })?;
        let mut gamma = [0.0; MAX_ORDER + 1];
        let mut alpha = [0.0; MAX_ORDER + 1];
        for i in 1..=MAX_ORDER {
            gamma[i] = gamma[i - 1] + 1.0 / i as f64;
            alpha[i] = 1.0 / ((1.0 - NDF_KAPPA[i]) * gamma[i]);
        }
        // First order: s(t0) = 0 and h0 ds/dt(t0) = h0 df/dp(t0, y0).
        let mut diff = vec![0.0; m * DIFFERENCES * p];
        params.for_each_column(t0, y0, |b, column| {
            for (i, &v) in column.iter().enumerate() {
                diff[(i * DIFFERENCES + 1) * p + b] = h0 * v;
            }
        });
        Ok(DirectSensitivities {
            m,
            p,
            diff,
            h: h0,
            order,
            h_next: h0,
            last_order: order,
            t: t0,
            block: vec![0.0; m * p],
            prepared: None,
            jac: vec![0.0; rows.len()],
            newton: vec![0.0; newton_rows.len()],
            jac_to_newton,
            diagonal,
            lu,
            gamma,
            alpha,
            row: vec![0.0; (MAX_ORDER + 1) * p],
        })
    }

    /// Re-expresses the differences of orders `0..=order` (the interpolating polynomial of
    /// the history) on the grid of step size `factor * h`: `D <- D R U` (Shampine and Reichelt
    /// 1997, section 3.2; the rescale diffsol applies to the state).
    #[inline(always)]
    fn rescale(&mut self, order: usize, factor: f64) {
        let n = order + 1;
        // r[i][j] = prod_(l=1..i) (l - 1 - f j) / l.
        let r = |f: f64| {
            let mut r = [[0.0; MAX_ORDER + 1]; MAX_ORDER + 1];
            r[0] = [1.0; MAX_ORDER + 1];
            for i in 1..n {
                let (above, rows) = r.split_at_mut(i);
                for (j, (x, &previous)) in rows[0].iter_mut().zip(&above[i - 1]).enumerate() {
                    *x = previous * ((i - 1) as f64 - f * j as f64) / i as f64;
                }
            }
            r
        };
        let (rf, u) = (r(factor), r(1.0));
        let mut ru = [[0.0; MAX_ORDER + 1]; MAX_ORDER + 1];
        for i in 0..n {
            for j in 0..n {
                ru[i][j] = (0..n).map(|l| rf[i][l] * u[l][j]).sum();
            }
        }
        let p = self.p;
        let row = &mut self.row[..n * p];
        for d in self.diff.chunks_exact_mut(DIFFERENCES * p) {
            row.copy_from_slice(&d[..n * p]);
            for j in 0..n {
                let out = &mut d[j * p..(j + 1) * p];
                out.iter_mut().for_each(|x| *x = 0.0);
                for (l, ru_l) in ru.iter().enumerate().take(n) {
                    let a = ru_l[j];
                    if a != 0.0 {
                        for (o, x) in out.iter_mut().zip(&row[l * p..(l + 1) * p]) {
                            *o += a * x;
                        }
                    }
                }
            }
        }
    }

    /// Advances the sensitivities over the state's step from `before` to `after` (s), `y` the
    /// state at `after`; `h_next` and `order_next` are what the state's solver will try next.
    fn step(
        &mut self,
        params: &ParamEquations,
        before: f64,
        after: f64,
        y: &[f64],
        h_next: f64,
        order_next: usize,
    ) -> Result<(), SensitivityError> {
        #[cfg(target_arch = "x86_64")]
        if std::arch::is_x86_feature_detected!("avx2") {
            // SAFETY: the processor has AVX2 (checked on the line above).
            return unsafe { self.step_avx2(params, before, after, y, h_next, order_next) };
        }
        self.step_portable(params, before, after, y, h_next, order_next)
    }

    /// [`Self::step_portable`] compiled for AVX2: the passes over the `m x P` blocks (the
    /// rescale, the history, the update of the differences) run 4 lanes per instruction
    /// instead of SSE2's 2. The same operations in the same order on every lane (no fused
    /// multiply-add is enabled), so the results are bitwise those of the portable build.
    ///
    /// # Safety
    /// The processor must support AVX2.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn step_avx2(
        &mut self,
        params: &ParamEquations,
        before: f64,
        after: f64,
        y: &[f64],
        h_next: f64,
        order_next: usize,
    ) -> Result<(), SensitivityError> {
        self.step_portable(params, before, after, y, h_next, order_next)
    }

    #[inline(always)]
    fn step_portable(
        &mut self,
        params: &ParamEquations,
        before: f64,
        after: f64,
        y: &[f64],
        h_next: f64,
        order_next: usize,
    ) -> Result<(), SensitivityError> {
        let (p, order) = (self.p, self.order.clamp(1, MAX_ORDER));
        // The step size the solver tried, unless a rejected attempt shrank it (then the
        // times' difference, exact to rounding).
        let measured = after - before;
        let h = if (measured - self.h_next).abs() <= 1e-8 * self.h_next.abs() {
            self.h_next
        } else {
            measured
        };
        if h != self.h {
            self.rescale(order, h / self.h);
            self.h = h;
            self.prepared = None;
        }
        let c = h * self.alpha[order];
        // I - c J at the end of the step, factorized.
        params.eqn.jacobian_values(after, y, &mut self.jac);
        self.newton.iter_mut().for_each(|x| *x = 0.0);
        for (&q, &v) in self.jac_to_newton.iter().zip(&self.jac) {
            self.newton[q] = -c * v;
        }
        for &d in &self.diagonal {
            self.newton[d] += 1.0;
        }
        let failure = |reason: &str| SensitivityError::Failed {
            time_s: after,
            reason: format!("sensitivity step: {reason}"),
        };
        self.lu
            .factorize(&self.newton)
            .map_err(|e| failure(&e.to_string()))?;
        // Right-hand side: the history H (made by the last step's update when it knew this
        // step's order and step size), plus c df/dp.
        if self.prepared != Some(order) {
            let weights = self.history_weights(order);
            for (out, d) in self
                .block
                .chunks_exact_mut(p)
                .zip(self.diff.chunks_exact(DIFFERENCES * p))
            {
                history_row(out, d, &weights, order);
            }
        }
        self.prepared = None;
        // + c df/dp (a rate constant's column is sparse in a constant-volume reactor).
        let block = &mut self.block;
        params.for_each_entry(after, y, |b, i, v| block[i * p + b] += c * v);
        self.lu
            .solve_rows_in_place(&mut self.block, p)
            .map_err(|e| failure(&e.to_string()))?;
        // The differences at the new point: with the correction d = s_new - sum_(j<=order) D_j,
        // D_(order+2) = d - D_(order+1), then D_j += D_(j+1) from j = order + 1 down to 0.
        // When the solver's next step keeps the step size, its history H is made in the same
        // pass, while each state's differences are in cache (one pass over them per step).
        let next_order = order_next.clamp(1, MAX_ORDER);
        let prepare = h_next == self.h;
        let next_weights = self.history_weights(next_order);
        let pass = UpdatePass {
            p,
            order,
            next: prepare.then_some((next_order, &next_weights)),
        };
        let finite = pass.run(&mut self.diff, &mut self.block);
        if !finite {
            return Err(failure("the sensitivities are not finite"));
        }
        self.prepared = prepare.then_some(next_order);
        self.last_order = order;
        self.order = order_next;
        self.h_next = h_next;
        self.t = after;
        Ok(())
    }

    /// Weights of `D_0..D_order` in the history `H` of an order-`order` step: the prediction
    /// `sum_j D_j` minus `psi = alpha_k sum_(j>=1) gamma_j D_j`.
    fn history_weights(&self, order: usize) -> [f64; MAX_ORDER + 1] {
        let mut weights = [0.0; MAX_ORDER + 1];
        weights[0] = 1.0;
        for (w, &gamma) in weights.iter_mut().zip(&self.gamma).take(order + 1).skip(1) {
            *w = 1.0 - self.alpha[order] * gamma;
        }
        weights
    }

    /// The sensitivities (per parameter, over the state) at `t` inside the last step, from
    /// the step's interpolating polynomial.
    fn interpolate(&self, t: f64) -> Vec<Vec<f64>> {
        let (p, h) = (self.p, self.h);
        let mut weights = [0.0; MAX_ORDER + 1];
        weights[0] = 1.0;
        let mut factor = 1.0;
        for (i, w) in weights
            .iter_mut()
            .enumerate()
            .take(self.last_order + 1)
            .skip(1)
        {
            factor *= (t - (self.t - h * (i - 1) as f64)) / (h * i as f64);
            *w = factor;
        }
        let mut out = vec![vec![0.0; self.m]; p];
        for (i, d) in self.diff.chunks_exact(DIFFERENCES * p).enumerate() {
            for (j, &w) in weights.iter().enumerate().take(self.last_order + 1) {
                if w == 0.0 {
                    continue;
                }
                for (b, &x) in d[j * p..(j + 1) * p].iter().enumerate() {
                    out[b][i] += w * x;
                }
            }
        }
        out
    }
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

/// Forward sensitivities of the state to the rate constants of `steps` (mechanism indices):
/// [`forward_parameter_sensitivities`] with [`Parameter::RateConstant`] of each.
///
/// Errors: as for [`forward_parameter_sensitivities`].
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
    let parameters: Vec<Parameter> = steps.iter().map(|&j| Parameter::RateConstant(j)).collect();
    forward_parameter_sensitivities(
        kinetics,
        model,
        temperature_k,
        initial_mol_per_m3,
        output_times_s,
        options,
        &parameters,
        targets,
    )
}

/// Forward sensitivities of the state to `parameters` at every time of `output_times_s` (s;
/// finite, increasing; the first is the start), and of each of `targets` (their times inside
/// the run).
///
/// The run is the reactor `model` of `kinetics` from `initial_mol_per_m3` (mol/m3) at
/// `temperature_k` (K, as for [`crate::BatchSystem::with_model`]) with the tolerances of
/// `options`. The state is integrated by diffsol's BDF; after each of its accepted steps the
/// linear sensitivity equations of all parameters are advanced by the same formula (order and
/// step size) and solved at once, exactly, with `I - c J` factorized at the step's end
/// (staggered direct corrector); they do not take part in the local error test, so the steps
/// are the state's. Non-negativity
/// and invariant projection are not applied (the sensitivities would need the same
/// projection); at tight tolerances the state matches a plain run to the tolerance.
///
/// Errors: [`SensitivityError`] for bad input (a step or species out of range, a falloff
/// limit of a step without falloff, the enthalpy of a species without thermochemistry), and
/// when the integration fails.
#[allow(clippy::too_many_arguments)]
pub fn forward_parameter_sensitivities(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    initial_mol_per_m3: &[f64],
    output_times_s: &[f64],
    options: &IntegrationOptions,
    parameters: &[Parameter],
    targets: &[Target],
) -> Result<ForwardSensitivities, SensitivityError> {
    let set = ParameterSet::new(kinetics, parameters)?;
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
    let p = set.len();
    let params = ParamEquations::new(eqn, set, &initial);
    let mut problem = OdeBuilder::<FaerSparseMat<f64>>::new()
        .rtol(solver_rtol(options))
        .atol(atol_state.clone())
        .t0(t0)
        .build_from_eqn(params)
        .map_err(|e| failed(t0, e))?;
    configure(&mut problem, options);
    let problem = problem;

    let mut wanted: Vec<f64> = output_times_s.to_vec();
    wanted.extend(targets.iter().map(Target::time_s));
    let stops = stop_times(model, &wanted);
    // The state and its sensitivities (one vector per parameter) at every stop (output and
    // target times).
    let mut recorded: Vec<(f64, Vec<f64>, Vec<Vec<f64>>)> = Vec::with_capacity(stops.len());
    recorded.push((t0, initial.clone(), vec![vec![0.0; m]; p]));
    let mut pending: Vec<f64> = stops.iter().copied().filter(|&t| t > t0).collect();
    pending.reverse();
    // One stop at the end: outputs inside steps are interpolated, so the solver's steps do
    // not depend on the output grid (breakpoints of a prescribed history are stops).
    let mut hard_stops: Vec<f64> = stop_times(model, &[t0, t_end]);
    hard_stops.retain(|&t| t > t0);
    let mut solver = problem
        .bdf::<FixedPatternSolver>()
        .map_err(|e| failed(t0, e))?;
    // Without parameters, the state alone.
    let mut direct = if p == 0 {
        None
    } else {
        Some(DirectSensitivities::new(
            &problem.eqn,
            t0,
            &initial,
            solver.state().h,
            solver.order(),
        )?)
    };
    let mut y_buf = FaerVec::<f64>::zeros(m, problem.eqn.ctx);
    let forward_steps = march::<ParamEquations, _>(
        &mut solver,
        &hard_stops,
        options,
        |s, before, after| {
            if let Some(direct) = direct.as_mut() {
                let state = s.state();
                direct.step(
                    &problem.eqn,
                    before,
                    after,
                    <FaerSparseMat<f64> as Backend>::slice(state.y),
                    state.h,
                    s.order(),
                )?;
            }
            while let Some(&t) = pending.last() {
                if t > after {
                    break;
                }
                s.interpolate_inplace(t, &mut y_buf)
                    .map_err(|e| failed(after, e))?;
                let y = <FaerSparseMat<f64> as Backend>::slice(&y_buf).to_vec();
                let sens = direct
                    .as_ref()
                    .map(|d| d.interpolate(t))
                    .unwrap_or_default();
                recorded.push((t, y, sens));
                pending.pop();
            }
            Ok(())
        },
        |_, _| Ok(()),
    )?;
    let find = |t: f64| {
        recorded
            .iter()
            .find(|(rt, _, _)| *rt == t)
            .map(|(_, y, s)| (y, s))
    };
    let mut times_s = Vec::with_capacity(output_times_s.len());
    let mut states = Vec::with_capacity(output_times_s.len());
    let mut sensitivities = Vec::with_capacity(output_times_s.len());
    for &t in output_times_s {
        let (y, s) = find(t).ok_or_else(|| SensitivityError::Failed {
            time_s: t,
            reason: "output time not reached".into(),
        })?;
        times_s.push(t);
        states.push(y.clone());
        sensitivities.push(s.clone());
    }
    let params = &problem.eqn;
    let eqn = &params.eqn;
    let pointwise = Pointwise { eqn };
    let mut target_results = Vec::with_capacity(targets.len());
    for target in targets {
        let t = target.time_s();
        let (y, s) = find(t).ok_or_else(|| SensitivityError::Failed {
            time_s: t,
            reason: "target time not reached".into(),
        })?;
        let i = target.state();
        let result = match *target {
            Target::Value { .. } => TargetSensitivity {
                value: y[i],
                gradient: s.iter().map(|sj| sj[i]).collect(),
            },
            Target::Crossing { .. } => {
                let slope = nonzero(pointwise.f(t, y)[i], t)?;
                TargetSensitivity {
                    value: t,
                    gradient: s.iter().map(|sj| -sj[i] / slope).collect(),
                }
            }
            Target::Peak { .. } => {
                // d(dy_i/dt)/dp_j = (J s_j + df/dp_j)_i.
                let slope = nonzero(pointwise.rate_slope(t, y, i), t)?;
                let row = pointwise.jac_row(t, y, i);
                let mut gradient = vec![0.0; p];
                params.for_each_column(t, y, |b, column| {
                    let js: f64 = row.iter().zip(&s[b]).map(|(r, x)| r * x).sum();
                    gradient[b] = -(js + column[i]) / slope;
                });
                TargetSensitivity { value: t, gradient }
            }
            Target::RateMaximum { .. } => {
                let slope = nonzero(second_derivative_slope(eqn, t, y, i, &atol_state), t)?;
                let mut gradient = Vec::with_capacity(p);
                let temperature_k = eqn.temperature_at(t, y);
                for (b, (sj, &parameter)) in s.iter().zip(parameters).enumerate() {
                    let e = params.set.difference_step(b, temperature_k);
                    let up = perturbed_core(eqn, parameter, e)?;
                    let down = perturbed_core(eqn, parameter, -e)?;
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
        rhs_evaluations: params.evaluations.get(),
    };
    Ok(ForwardSensitivities {
        parameters: parameters.to_vec(),
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

/// The least Newton tolerance of the backward (adjoint) pass, in units of the error weights.
///
/// The state's default, `sqrt(rtol)` (about 5e-5 at the solver's rtol of 2.5e-9), assumes
/// that rounding perturbs a Newton update by a few units of the last place of the state. The
/// adjoint equations `J^T lambda` can cancel far more: on Robertson's problem at late times
/// `(J^T lambda)_B = 1e4 c_C (lambda_A - lambda_B) + ...` with `lambda` near 1, and the second
/// Newton update of the (linear) equations measured 4e-5 of the weights, pure rounding, larger
/// than the first; diffsol's test then declared divergence, and the backward pass to 1e9 s
/// took 30,652 steps (9,649 failed iterations, no failed error test, accepted errors near
/// 1e-11 of the tolerance) and to 1e11 s ran out of its 100,000 steps. With this floor the
/// pass to 1e9 s takes 456 steps and to 1e11 s 83,523 (0.19 s); the gradient moves by 2e-6
/// relative on the largest entries (against the forward method: 2e-6 at 1e11 s). Looser
/// floors are faster (0.03: 2,568 steps; 0.2: 406) but moved the smallest entry by 6e-3 and
/// 16 %. Set [`IntegrationOptions::newton_tolerance`] to override (then no floor applies).
const ADJOINT_NEWTON_TOLERANCE_FLOOR: f64 = 1e-3;

/// Three-point Gauss-Legendre nodes on [-1, 1] and weights.
const GAUSS: [(f64, f64); 3] = [
    (-0.774_596_669_241_483_4, 5.0 / 9.0),
    (0.0, 8.0 / 9.0),
    (0.774_596_669_241_483_4, 5.0 / 9.0),
];

/// The gradient of one `target` with respect to the rate constants of `steps` (mechanism
/// indices) by the adjoint method: [`adjoint_parameter_sensitivity`] with
/// [`Parameter::RateConstant`] of each.
///
/// Errors: as for [`adjoint_parameter_sensitivity`].
pub fn adjoint_sensitivity(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    initial_mol_per_m3: &[f64],
    options: &IntegrationOptions,
    steps: &[usize],
    target: Target,
) -> Result<AdjointSensitivity, SensitivityError> {
    let parameters: Vec<Parameter> = steps.iter().map(|&j| Parameter::RateConstant(j)).collect();
    adjoint_parameter_sensitivity(
        kinetics,
        model,
        temperature_k,
        initial_mol_per_m3,
        options,
        &parameters,
        target,
    )
}

/// The gradient of one `target` with respect to `parameters` by the adjoint method: one
/// forward pass (state only, kept as interpolation samples of each step), one backward pass of the adjoint equations from the target's time to the start, with the
/// parameter integrals accumulated on the way. Arguments as for [`forward_sensitivities`].
///
/// The cost is about two plain runs plus, per backward step, nine rate-of-progress
/// evaluations and a pass over the chosen steps' stoichiometry, independent of the number of
/// parameters otherwise; a [`Target::RateMaximum`] also needs two evaluations of the
/// equations with each step scaled (the terminal condition by central differences).
/// Memory: five states per forward step.
///
/// Errors: [`SensitivityError`] for bad input, and when an integration fails.
pub fn adjoint_parameter_sensitivity(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    initial_mol_per_m3: &[f64],
    options: &IntegrationOptions,
    parameters: &[Parameter],
    target: Target,
) -> Result<AdjointSensitivity, SensitivityError> {
    let set = ParameterSet::new(kinetics, parameters)?;
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
            .rtol(solver_rtol(options))
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
            options,
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
    let p = set.len();
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
            let direct = set
                .columns(&eqn, t_star, &y_star)
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
            let temperature_k = eqn.temperature_at(t_star, &y_star);
            for (b, &parameter) in parameters.iter().enumerate() {
                let e = set.difference_step(b, temperature_k);
                let plus = perturbed_core(&eqn, parameter, e)?;
                let minus = perturbed_core(&eqn, parameter, -e)?;
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
    let atol_adjoint = vec![scale * solver_rtol(options) * 1e-3; m];
    let adjoint = AdjointEquations::new(eqn, trajectory, t_star, terminal);
    let mut problem = OdeBuilder::<FaerSparseMat<f64>>::new()
        .rtol(solver_rtol(options))
        .atol(atol_adjoint)
        .t0(0.0)
        .build_from_eqn(adjoint)
        .map_err(|e| failed(t_star, e))?;
    configure(&mut problem, options);
    if options.newton_tolerance.is_none() {
        problem.ode_options.nonlinear_solver_tolerance = problem
            .ode_options
            .nonlinear_solver_tolerance
            .max(ADJOINT_NEWTON_TOLERANCE_FLOOR);
    }
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
    let mut d = set.scratch(kinetics, m);
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
        options,
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
                    // t_star - t can round past the backward step's ends by an ulp of
                    // t_star (a late target and a short piece): clamp into the step.
                    let tau = (t_star - t).clamp(tau_a, tau_b);
                    s.interpolate_inplace(tau, &mut lambda)
                        .map_err(|e| failed(t, e))?;
                    traj.at(t, &mut y);
                    let temperature_k = set.evaluate(&adj.eqn, t, &y, &mut d);
                    let lam = <FaerSparseMat<f64> as Backend>::slice(&lambda);
                    equations.chemistry_map_transpose(temperature_k, &y, lam, &mut v);
                    let heat: f64 = if set.any_enthalpy {
                        lam.iter().zip(&d.heat).map(|(l, u)| l * u).sum()
                    } else {
                        0.0
                    };
                    for (b, g) in gradient.iter_mut().enumerate() {
                        let mut sum = d.direct[b] * heat;
                        for &(j, a) in &d.weights[b] {
                            let dot: f64 = kinetics
                                .net_changes(j)
                                .iter()
                                .map(|&(i, nu)| nu * v[i])
                                .sum();
                            sum += a * dot;
                        }
                        *g += w * half * sum;
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
        parameters: parameters.to_vec(),
        target: TargetSensitivity { value, gradient },
        stats,
    })
}
