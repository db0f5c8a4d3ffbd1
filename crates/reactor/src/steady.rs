//! Steady states of continuous stirred tanks and their continuation in one parameter.
//!
//! A steady state solves `f(y) = 0` for the tank's state `y` (concentrations in mol/m3, then
//! the temperature in K when the energy balance is solved; see [`crate::model`] for `f`):
//!
//! 1. damped Newton with the analytic Jacobian (the step halved until the scaled residual
//!    falls), from the guess;
//! 2. when Newton stalls, pseudo-transient continuation: `(I/dt - J) dy = f`, `y += dy`, the
//!    pseudo time step grown by switched evolution relaxation `dt_new = dt |f_old| / |f_new|`
//!    (W. Mulder & B. van Leer, J. Comput. Phys. 59 (1985) 232; C. T. Kelley & D. E. Keyes,
//!    SIAM J. Numer. Anal. 35 (1998) 508), handing over to Newton once `dt` exceeds ten
//!    residence times;
//! 3. when that stalls too, time integration with [`BatchSystem`] over many residence times,
//!    then Newton from its end.
//!
//! The linear systems are solved with a dense LU (nalgebra, partial pivoting): fine for the
//! tens of states of a small mechanism; a large mechanism would want the sparse LU of the
//! time integration (not done yet).
//!
//! A tank at constant pressure conserves `P / R = T sum_i c_i` (ideal gas; `sum_i c_i` when
//! isothermal) along every trajectory, so its Jacobian is singular at a steady state (the
//! left null vector is the gradient of that invariant). The row of the most abundant species
//! in the guess is then replaced by the invariant held at the guess's value, and stability is
//! judged on the Jacobian restricted to the invariant's level set (one eigenvalue fewer).
//!
//! [`continuation`] follows a branch of steady states against the residence time (in
//! `ln tau`), the inlet temperature or the coolant temperature by pseudo-arclength
//! continuation (H. B. Keller, in *Applications of Bifurcation Theory*, Academic Press 1977;
//! E. L. Allgower & K. Georg, *Introduction to Numerical Continuation Methods*, SIAM 2003):
//! predictor along the tangent, Newton corrector on the system bordered by the arclength
//! condition, tangent from the bordered system, step size set by the corrector's iteration
//! count. Turning points (where the parameter component of the tangent changes sign) are
//! located by the secant method on that component.

use diffsol::NalgebraMat;
use nalgebra::{DMatrix, DVector};
use stoik_kinetics::Kinetics;

use crate::equations::BatchEquations;
use crate::model::{energy_thermo, Constraint, Energy};
use crate::{BatchSystem, IntegrationError, IntegrationOptions, ReactorError, ReactorModel};

/// Settings of a steady-state search.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyOptions {
    /// Relative tolerance of the converged state (dimensionless, > 0): Newton stops when its
    /// correction is below `relative_tolerance |y_i| + absolute tolerance_i` in every state.
    pub relative_tolerance: f64,
    /// Absolute tolerance of each species' concentration (mol/m3, > 0), one per species.
    pub absolute_tolerances_mol_per_m3: Vec<f64>,
    /// Absolute tolerance of the temperature (K, > 0).
    pub absolute_tolerance_k: f64,
    /// Newton iterations allowed per attempt.
    pub max_newton_iterations: usize,
    /// Pseudo-transient steps allowed.
    pub max_pseudo_transient_steps: usize,
    /// Length of the time-integration fall-back, in residence times.
    pub fallback_residence_times: f64,
    /// Tolerances and linear algebra of the time-integration fall-back.
    pub integration: IntegrationOptions,
    /// Start with pseudo-transient continuation instead of Newton (default `false`). A tank
    /// with several steady states then tends to settle where its transient from the guess
    /// goes (small pseudo time steps follow the transient), where Newton goes to the steady
    /// state nearest the guess in its own sense.
    pub transient_first: bool,
}

impl SteadyOptions {
    /// Defaults for `n_species` species: relative tolerance 1e-10, absolute tolerances
    /// 1e-14 mol/m3 and 1e-9 K, 50 Newton iterations, 2000 pseudo-transient steps, 200
    /// residence times of integration with [`IntegrationOptions::new`].
    pub fn new(n_species: usize) -> SteadyOptions {
        SteadyOptions::from_integration(&IntegrationOptions::new(n_species))
    }

    /// Defaults with the absolute tolerances of `integration` (also used by the fall-back).
    pub fn from_integration(integration: &IntegrationOptions) -> SteadyOptions {
        SteadyOptions {
            relative_tolerance: 1e-10,
            absolute_tolerances_mol_per_m3: integration.absolute_tolerances_mol_per_m3.clone(),
            absolute_tolerance_k: 1e-9,
            max_newton_iterations: 50,
            max_pseudo_transient_steps: 2000,
            fallback_residence_times: 200.0,
            integration: integration.clone(),
            transient_first: false,
        }
    }
}

/// Which method reached the steady state.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum SteadyPath {
    /// Damped Newton from the guess.
    Newton,
    /// Pseudo-transient continuation, finished by Newton.
    PseudoTransient,
    /// Time integration, finished by Newton.
    TimeIntegration,
}

impl SteadyPath {
    /// A short name: `newton`, `pseudo-transient` or `time-integration`.
    pub fn name(self) -> &'static str {
        match self {
            SteadyPath::Newton => "newton",
            SteadyPath::PseudoTransient => "pseudo-transient",
            SteadyPath::TimeIntegration => "time-integration",
        }
    }
}

/// Linear stability of a steady state: the eigenvalues of the Jacobian there (restricted to
/// the pressure invariant at constant pressure).
#[derive(Debug, Clone, PartialEq)]
pub struct Stability {
    /// Eigenvalues as (real part, imaginary part), 1/s, largest real part first.
    pub eigenvalues_per_s: Vec<(f64, f64)>,
    /// Largest real part (1/s).
    pub largest_real_part_per_s: f64,
    /// Whether every real part is negative (small perturbations decay).
    pub stable: bool,
}

/// A steady state and how it was found.
#[derive(Debug, Clone, PartialEq)]
pub struct SteadyState {
    /// Concentrations (mol/m3), one per species.
    pub concentrations_mol_per_m3: Vec<f64>,
    /// Temperature (K): solved, or the held one of an isothermal tank.
    pub temperature_k: f64,
    /// The method that converged.
    pub path: SteadyPath,
    /// Newton iterations, all attempts together.
    pub newton_iterations: usize,
    /// Pseudo-transient steps taken (0 when Newton converged first).
    pub pseudo_transient_steps: usize,
    /// Time integrated by the fall-back (s; 0 when not used).
    pub integrated_time_s: f64,
    /// The final residual scaled per state: `max_i tau |f_i| / (rtol |y_i| + atol_i)`
    /// (dimensionless; `tau` the residence time).
    pub scaled_residual: f64,
    /// The last Newton correction scaled the same way, `max_i |dy_i| / (rtol |y_i| + atol_i)`
    /// (below 1 at convergence).
    pub scaled_correction: f64,
    /// Eigenvalues and stability.
    pub stability: Stability,
}

/// Why no steady state or branch was returned.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SteadyError {
    /// The reactor model has no flow: a closed reactor has no steady state to solve for.
    #[error(
        "a steady state needs a stirred tank: the reactor has no flow (give a [flow] section)"
    )]
    NotATank,
    /// The model cannot be solved for a steady state (e.g. a prescribed temperature).
    #[error("no steady state for this tank: {0}")]
    Unsupported(String),
    /// A bad argument (state length, tolerances, flow).
    #[error(transparent)]
    Reactor(#[from] ReactorError),
    /// Newton, pseudo-transient continuation and time integration all failed.
    #[error("no steady state found: {reason} (after {newton_iterations} Newton iterations, {pseudo_transient_steps} pseudo-transient steps, {integrated_time_s:e} s integrated; scaled residual {scaled_residual:e})")]
    NotConverged {
        /// Why the last method stopped.
        reason: String,
        /// Newton iterations, all attempts.
        newton_iterations: usize,
        /// Pseudo-transient steps.
        pseudo_transient_steps: usize,
        /// Time integrated (s).
        integrated_time_s: f64,
        /// Scaled residual at the best state reached (see [`SteadyState::scaled_residual`]).
        scaled_residual: f64,
    },
    /// The time-integration fall-back failed.
    #[error("no steady state found: the time-integration fall-back failed: {0}")]
    Integration(Box<IntegrationError>),
    /// A continuation parameter that the tank does not have, or a bad range.
    #[error("continuation: {0}")]
    BadParameter(String),
}

/// Which parameter a branch of steady states is followed in.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ContinuationParameter {
    /// The residence time `tau` (s), followed in `ln tau`.
    ResidenceTime,
    /// The feed temperature (K); needs the energy balance.
    InletTemperature,
    /// The coolant temperature (K) of a tank with heat exchange.
    CoolantTemperature,
}

impl ContinuationParameter {
    /// The name on the command line: `residence-time`, `inlet-temperature`,
    /// `coolant-temperature`.
    pub fn name(self) -> &'static str {
        match self {
            ContinuationParameter::ResidenceTime => "residence-time",
            ContinuationParameter::InletTemperature => "inlet-temperature",
            ContinuationParameter::CoolantTemperature => "coolant-temperature",
        }
    }

    /// The parameter's unit: `s` or `K`.
    pub fn unit(self) -> &'static str {
        match self {
            ContinuationParameter::ResidenceTime => "s",
            _ => "K",
        }
    }

    /// The parameter named `name` (see [`name`](Self::name)).
    pub fn from_name(name: &str) -> Option<ContinuationParameter> {
        [
            ContinuationParameter::ResidenceTime,
            ContinuationParameter::InletTemperature,
            ContinuationParameter::CoolantTemperature,
        ]
        .into_iter()
        .find(|p| p.name() == name)
    }

    /// The internal continuation variable of value `value`: `ln tau` or the temperature.
    fn to_internal(self, value: f64) -> f64 {
        match self {
            ContinuationParameter::ResidenceTime => value.ln(),
            _ => value,
        }
    }

    fn value_of_internal(self, lambda: f64) -> f64 {
        match self {
            ContinuationParameter::ResidenceTime => lambda.exp(),
            _ => lambda,
        }
    }
}

/// Settings of a continuation.
#[derive(Debug, Clone, PartialEq)]
pub struct ContinuationOptions {
    /// Tolerances of the starting steady state and of the corrector.
    pub steady: SteadyOptions,
    /// First arclength step (scaled units: concentrations over the total concentration at
    /// the start, the temperature over its starting value, `ln tau`, or a temperature
    /// parameter over 5 % of its starting value).
    pub initial_step: f64,
    /// Largest arclength step (same units).
    pub max_step: f64,
    /// Smallest arclength step before the branch is given up.
    pub min_step: f64,
    /// Most points on the branch.
    pub max_points: usize,
    /// Corrector iterations allowed per step.
    pub max_corrector_iterations: usize,
}

impl ContinuationOptions {
    /// Defaults: steps 0.01 to 0.1, smallest 1e-9, 5000 points, 10 corrector iterations.
    pub fn new(steady: SteadyOptions) -> ContinuationOptions {
        ContinuationOptions {
            steady,
            initial_step: 0.01,
            max_step: 0.1,
            min_step: 1e-9,
            max_points: 5000,
            max_corrector_iterations: 10,
        }
    }
}

/// One steady state on a branch.
#[derive(Debug, Clone, PartialEq)]
pub struct BranchPoint {
    /// The parameter: residence time (s) or temperature (K).
    pub parameter: f64,
    /// Concentrations (mol/m3).
    pub concentrations_mol_per_m3: Vec<f64>,
    /// Temperature (K).
    pub temperature_k: f64,
    /// Whether every eigenvalue has a negative real part.
    pub stable: bool,
    /// Largest real part of the eigenvalues (1/s).
    pub largest_real_part_per_s: f64,
}

/// A turning point (fold) of a branch: the parameter is extreme there and two steady states
/// meet.
#[derive(Debug, Clone, PartialEq)]
pub struct TurningPoint {
    /// Position on the branch: between `points[after]` and `points[after + 1]`.
    pub after: usize,
    /// The parameter (s or K).
    pub parameter: f64,
    /// Concentrations (mol/m3).
    pub concentrations_mol_per_m3: Vec<f64>,
    /// Temperature (K).
    pub temperature_k: f64,
}

/// How a continuation ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum BranchEnd {
    /// The branch reached the end of the range.
    ReachedEnd,
    /// The branch turned back and left the range at its start.
    LeftAtStart,
    /// The point budget ran out.
    PointBudget,
    /// The corrector failed even at the smallest step.
    StepTooSmall,
    /// A state left the physical region (a concentration or the temperature went negative).
    Unphysical,
}

/// A branch of steady states.
#[derive(Debug, Clone, PartialEq)]
pub struct Branch {
    /// The parameter followed.
    pub parameter: ContinuationParameter,
    /// The points, in order along the branch (the first is the start).
    pub points: Vec<BranchPoint>,
    /// The turning points found.
    pub turning_points: Vec<TurningPoint>,
    /// How the starting steady state was found.
    pub start: SteadyState,
    /// How it ended.
    pub end: BranchEnd,
    /// Corrector iterations, all steps.
    pub corrector_iterations: usize,
}

/// A tank's equations on flat vectors, with the constant-pressure row replacement.
struct Tank {
    eq: BatchEquations<NalgebraMat<f64>>,
    n: usize,
    m: usize,
    /// The time the equations are evaluated at (s): the end of a coolant or U A history.
    t_eval: f64,
    /// Constant pressure: the replaced row and the invariant's value.
    invariant: Option<(usize, f64)>,
    /// Residence time at set-up (s), scale of the replaced row.
    tau0: f64,
    values: Vec<f64>,
}

impl Tank {
    fn new(
        kinetics: &Kinetics,
        model: &ReactorModel,
        temperature_k: f64,
        guess: &[f64],
    ) -> Result<Tank, SteadyError> {
        let Some(flow) = &model.flow else {
            return Err(SteadyError::NotATank);
        };
        let n = kinetics.n_species();
        if flow.inlet_mol_per_m3().len() != n {
            return Err(ReactorError::BadFlow(format!(
                "the inlet has {} concentrations for {} species",
                flow.inlet_mol_per_m3().len(),
                n
            ))
            .into());
        }
        if matches!(model.energy, Energy::Prescribed(_)) {
            return Err(SteadyError::Unsupported(
                "the temperature is prescribed as a function of time".into(),
            ));
        }
        if !model.conditions.fixed_species.is_empty() {
            return Err(SteadyError::Unsupported(
                "species held fixed (box conditions) are not supported".into(),
            ));
        }
        if guess.len() != n {
            return Err(ReactorError::WrongLength {
                what: "steady-state guess",
                expected: n,
                found: guess.len(),
            }
            .into());
        }
        if !(temperature_k.is_finite() && temperature_k > 0.0) {
            return Err(ReactorError::BadFlow(format!(
                "the temperature must be finite and positive, got {temperature_k:e} K"
            ))
            .into());
        }
        let thermo = energy_thermo(kinetics, model)?;
        let m = model.n_states(n);
        let mut initial = guess.to_vec();
        if model.solves_energy() {
            initial.push(temperature_k);
        }
        let t_eval = match &model.energy {
            Energy::HeatExchange(x) => x.settled_time_s(),
            _ => 0.0,
        };
        let eq = BatchEquations::<NalgebraMat<f64>>::new(
            kinetics.clone(),
            model.clone(),
            thermo,
            temperature_k,
            initial.clone(),
        )?;
        let values = vec![0.0; eq.state_pattern().nnz()];
        let mut tank = Tank {
            eq,
            n,
            m,
            t_eval,
            invariant: None,
            tau0: flow.residence_time_s(),
            values,
        };
        if model.constraint == Constraint::ConstantPressure {
            let row = (0..n)
                .max_by(|&a, &b| guess[a].total_cmp(&guess[b]))
                .unwrap_or(0);
            let value = tank.invariant_value(&initial);
            if !(value.is_finite() && value > 0.0) {
                return Err(SteadyError::Unsupported(
                    "the guess holds no gas (its total concentration is not positive)".into(),
                ));
            }
            tank.invariant = Some((row, value));
        }
        Ok(tank)
    }

    fn model(&self) -> &ReactorModel {
        &self.eq.model
    }

    /// The temperature of state `y` (K).
    fn temperature(&self, y: &[f64]) -> f64 {
        self.eq.temperature_at(self.t_eval, y)
    }

    /// `T sum c` (energy solved) or `sum c` (isothermal).
    fn invariant_value(&self, y: &[f64]) -> f64 {
        let total: f64 = y[..self.n].iter().sum();
        if self.eq.model.solves_energy() {
            total * y[self.n]
        } else {
            total
        }
    }

    /// Gradient of the invariant.
    fn invariant_gradient(&self, y: &[f64]) -> Vec<f64> {
        let mut g = vec![0.0; self.m];
        if self.eq.model.solves_energy() {
            let total: f64 = y[..self.n].iter().sum();
            g[..self.n].iter_mut().for_each(|v| *v = y[self.n]);
            g[self.n] = total;
        } else {
            g.iter_mut().for_each(|v| *v = 1.0);
        }
        g
    }

    /// `f(y)`, the time derivative.
    fn rhs(&self, y: &[f64]) -> Vec<f64> {
        let mut f = vec![0.0; self.m];
        self.eq.state_derivative(self.t_eval, y, &mut f);
        f
    }

    /// The dense Jacobian of `f`.
    fn jacobian(&mut self, y: &[f64]) -> DMatrix<f64> {
        self.eq.jacobian_values(self.t_eval, y, &mut self.values);
        let pattern = self.eq.state_pattern();
        let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
        let mut j = DMatrix::zeros(self.m, self.m);
        for col in 0..self.m {
            for p in starts[col]..starts[col + 1] {
                j[(rows[p], col)] = self.values[p];
            }
        }
        j
    }

    /// Eigenvalues of the Jacobian of `f` at `y` (restricted to the invariant's level set at
    /// constant pressure).
    fn stability(&mut self, y: &[f64]) -> Stability {
        let j = self.jacobian(y);
        let matrix = match self.invariant {
            None => j,
            Some((k, _)) => {
                // Coordinates z = y without y_k; y_k follows from the invariant:
                // dy_k/dz_j = -g_j / g_k.
                let g = self.invariant_gradient(y);
                let keep: Vec<usize> = (0..self.m).filter(|&i| i != k).collect();
                DMatrix::from_fn(keep.len(), keep.len(), |a, b| {
                    let (i, jj) = (keep[a], keep[b]);
                    j[(i, jj)] - j[(i, k)] * g[jj] / g[k]
                })
            }
        };
        eigen_stability(matrix)
    }

    /// Sets the continuation parameter to `value` (s or K).
    fn set_parameter(
        &mut self,
        parameter: ContinuationParameter,
        value: f64,
    ) -> Result<(), ReactorError> {
        let model = &mut self.eq.model;
        match parameter {
            ContinuationParameter::ResidenceTime => {
                if let Some(f) = &mut model.flow {
                    f.set_residence_time_s(value)?;
                }
            }
            ContinuationParameter::InletTemperature => {
                if let Some(f) = &mut model.flow {
                    f.set_inlet_temperature_k(value)?;
                }
            }
            ContinuationParameter::CoolantTemperature => {
                if let Energy::HeatExchange(x) = &mut model.energy {
                    x.set_coolant_temperature_k(value)?;
                    self.t_eval = 0.0;
                }
            }
        }
        // The equations evaluate the flow and the exchange in force: the model's, now.
        self.eq.live.reset(&self.eq.model);
        Ok(())
    }

    fn parameter(&self, parameter: ContinuationParameter) -> f64 {
        let model = &self.eq.model;
        match parameter {
            ContinuationParameter::ResidenceTime => self.residence_time_s(),
            ContinuationParameter::InletTemperature => model
                .flow
                .as_ref()
                .map_or(f64::NAN, |f| f.inlet_temperature_k()),
            ContinuationParameter::CoolantTemperature => match &model.energy {
                Energy::HeatExchange(x) => x.coolant().temperature_at(self.t_eval),
                _ => f64::NAN,
            },
        }
    }

    /// `dF/d lambda` at `y` for the internal parameter `lambda` (`ln tau` or a temperature).
    ///
    /// `f` is affine in `1/tau` and in the coolant temperature, and affine in the feed's
    /// enthalpy `H_in = sum_i c_in,i h_i(T_in)`, so the derivatives are exact differences:
    /// `df/d ln tau = f(tau) - f(tau/2)`, `df/dT_c = f(T_c + 1 K) - f(T_c)`, and
    /// `df/dT_in = (f(T_in + d) - f(T_in)) cp_in(T_in) / (H_in(T_in + d) - H_in(T_in))`.
    fn parameter_derivative(
        &mut self,
        parameter: ContinuationParameter,
        y: &[f64],
    ) -> Result<Vec<f64>, ReactorError> {
        let base = self.parameter(parameter);
        let f0 = self.residual(y);
        let (shifted, factor) = match parameter {
            ContinuationParameter::ResidenceTime => (base / 2.0, -1.0),
            ContinuationParameter::CoolantTemperature => (base + 1.0, 1.0),
            ContinuationParameter::InletTemperature => {
                let d = if base > 400.0 { -50.0 } else { 50.0 };
                let thermo = self.feed_enthalpy_parts(base, base + d);
                (base + d, thermo)
            }
        };
        self.set_parameter(parameter, shifted)?;
        let f1 = self.residual(y);
        self.set_parameter(parameter, base)?;
        Ok(f1.iter().zip(&f0).map(|(a, b)| (a - b) * factor).collect())
    }

    /// `cp_in(T) / (H_in(T2) - H_in(T))`, the factor turning the difference of `f` between
    /// feed temperatures `t` and `t2` into `df/dT_in` at `t` (1/K).
    fn feed_enthalpy_parts(&self, t: f64, t2: f64) -> f64 {
        use stoik_mechanism::GAS_CONSTANT as R;
        let inlet = self
            .eq
            .model
            .flow
            .as_ref()
            .map_or(&[][..], |f| f.inlet_mol_per_m3());
        let (mut cp, mut dh) = (0.0, 0.0);
        for (thermo, &c) in self.eq.kinetics.species_thermo().iter().zip(inlet) {
            if let Some(th) = thermo {
                cp += c * R * th.cp_over_r(t);
                dh += c * R * (t2 * th.h_over_rt(t2) - t * th.h_over_rt(t));
            }
        }
        cp / dh
    }
}

/// A system whose steady state `F(y) = 0` is solved by [`newton`] and [`pseudo_transient`]:
/// one stirred tank or a network of tanks.
pub(crate) trait SteadyProblem {
    /// Number of states.
    fn size(&self) -> usize;

    /// The time scale of the residual's scaling and of the pseudo time step (s): a residence
    /// time.
    fn residence_time_s(&self) -> f64;

    /// The function solved.
    fn residual(&self, y: &[f64]) -> Vec<f64>;

    /// The dense Jacobian of [`residual`](Self::residual).
    fn residual_jacobian(&mut self, y: &[f64]) -> DMatrix<f64>;

    /// Error weights `rtol |y_i| + atol_i`.
    fn weights(&self, y: &[f64], options: &SteadyOptions) -> Vec<f64>;

    /// Whether `y` is a physical state.
    fn admissible(&self, y: &[f64]) -> bool;

    /// `max_i tau |f_i| / w_i`.
    fn scaled_residual(&self, f: &[f64], w: &[f64]) -> f64 {
        let tau = self.residence_time_s();
        f.iter()
            .zip(w)
            .fold(0.0f64, |a, (f, w)| a.max(tau * f.abs() / w))
    }

    /// Root mean square of `tau f_i / w_i` (the merit function of the line search).
    fn merit(&self, f: &[f64], w: &[f64]) -> f64 {
        let tau = self.residence_time_s();
        let s: f64 = f.iter().zip(w).map(|(f, w)| (tau * f / w).powi(2)).sum();
        (s / f.len().max(1) as f64).sqrt()
    }
}

impl SteadyProblem for Tank {
    fn size(&self) -> usize {
        self.m
    }

    fn residence_time_s(&self) -> f64 {
        self.eq
            .model
            .flow
            .as_ref()
            .map_or(self.tau0, |f| f.residence_time_s())
    }

    /// The function solved: `f`, with the replaced row at constant pressure.
    fn residual(&self, y: &[f64]) -> Vec<f64> {
        let mut f = self.rhs(y);
        if let Some((k, i0)) = self.invariant {
            f[k] = (self.invariant_value(y) / i0 - 1.0) * y[k] / self.tau0;
        }
        f
    }

    /// The Jacobian of [`residual`](SteadyProblem::residual).
    fn residual_jacobian(&mut self, y: &[f64]) -> DMatrix<f64> {
        let mut j = self.jacobian(y);
        if let Some((k, i0)) = self.invariant {
            let g = self.invariant_gradient(y);
            for (col, gc) in g.iter().enumerate() {
                j[(k, col)] = y[k] * gc / (i0 * self.tau0);
            }
            j[(k, k)] += (self.invariant_value(y) / i0 - 1.0) / self.tau0;
        }
        j
    }

    /// Error weights `rtol |y_i| + atol_i`.
    fn weights(&self, y: &[f64], options: &SteadyOptions) -> Vec<f64> {
        (0..self.m)
            .map(|i| {
                let atol = if i < self.n {
                    options
                        .absolute_tolerances_mol_per_m3
                        .get(i)
                        .copied()
                        .unwrap_or(1e-14)
                } else {
                    options.absolute_tolerance_k
                };
                options.relative_tolerance * y[i].abs() + atol
            })
            .collect()
    }

    /// Whether `y` is a physical state: finite, concentrations above minus a millionth of
    /// the total, temperature positive.
    fn admissible(&self, y: &[f64]) -> bool {
        if y.iter().any(|v| !v.is_finite()) {
            return false;
        }
        let total: f64 = y[..self.n].iter().map(|c| c.abs()).sum();
        let floor = -1e-6 * total;
        y[..self.n].iter().all(|&c| c >= floor) && (self.m == self.n || y[self.n] > 0.0)
    }
}

/// Eigenvalues of `matrix` (1/s), largest real part first, and the stability they imply.
pub(crate) fn eigen_stability(matrix: DMatrix<f64>) -> Stability {
    // The Schur iteration's test on the subdiagonal is relative to the diagonal.
    // A stalled iteration is retried with a looser test (1e-12 and 1e-9 relative: the
    // eigenvalues then carry that relative error).
    let mut eigen: Vec<(f64, f64)> = [f64::EPSILON, 1e-12, 1e-9]
        .into_iter()
        .find_map(|eps| nalgebra::Schur::try_new(matrix.clone(), eps, 10_000))
        .map_or_else(
            || vec![(f64::NAN, 0.0)],
            |s| {
                s.complex_eigenvalues()
                    .iter()
                    .map(|z| (z.re, z.im))
                    .collect()
            },
        );
    eigen.sort_by(|a, b| b.0.total_cmp(&a.0));
    let largest = eigen.first().map_or(f64::NAN, |e| e.0);
    Stability {
        stable: largest < 0.0,
        largest_real_part_per_s: largest,
        eigenvalues_per_s: eigen,
    }
}

/// The result of one Newton attempt.
pub(crate) struct NewtonRun {
    pub(crate) iterations: usize,
    pub(crate) converged: bool,
    pub(crate) correction: f64,
    pub(crate) reason: String,
}

/// Damped Newton on `F(y) = 0` from `y` (updated in place).
pub(crate) fn newton<P: SteadyProblem>(
    tank: &mut P,
    y: &mut [f64],
    options: &SteadyOptions,
    max_iter: usize,
) -> NewtonRun {
    let mut run = NewtonRun {
        iterations: 0,
        converged: false,
        correction: f64::INFINITY,
        reason: String::new(),
    };
    for _ in 0..max_iter {
        run.iterations += 1;
        let f = tank.residual(y);
        let w = tank.weights(y, options);
        let merit = tank.merit(&f, &w);
        if !merit.is_finite() {
            run.reason = "the residual is not finite".into();
            return run;
        }
        let j = tank.residual_jacobian(y);
        let Some(dy) = j
            .lu()
            .solve(&DVector::from_iterator(f.len(), f.iter().map(|v| -v)))
        else {
            run.reason = "the Jacobian is singular".into();
            return run;
        };
        let correction = dy
            .iter()
            .zip(&w)
            .fold(0.0f64, |a, (d, w)| a.max(d.abs() / w));
        run.correction = correction;
        let mut lambda = 1.0;
        loop {
            let trial: Vec<f64> = y
                .iter()
                .zip(dy.iter())
                .map(|(a, d)| a + lambda * d)
                .collect();
            if tank.admissible(&trial) {
                // A full step below the tolerance is converged whatever the merit says
                // (the residual is then at round-off).
                if lambda == 1.0 && correction < 1.0 {
                    y.copy_from_slice(&trial);
                    run.converged = true;
                    return run;
                }
                let merit_trial = tank.merit(&tank.residual(&trial), &w);
                if merit_trial.is_finite() && merit_trial < (1.0 - 1e-4 * lambda) * merit {
                    y.copy_from_slice(&trial);
                    break;
                }
            }
            lambda *= 0.5;
            if lambda < 1e-4 {
                run.reason = "the damped Newton step does not reduce the residual".into();
                return run;
            }
        }
    }
    if run.reason.is_empty() {
        run.reason = format!("Newton did not converge in {max_iter} iterations");
    }
    run
}

/// Pseudo-transient continuation from `y`, handing over to Newton once the pseudo time step
/// exceeds ten residence times. Returns (steps, Newton iterations, converged, reason).
pub(crate) fn pseudo_transient<P: SteadyProblem>(
    tank: &mut P,
    y: &mut [f64],
    options: &SteadyOptions,
) -> (usize, usize, bool, String) {
    let tau = tank.residence_time_s();
    let mut dt = 1e-6 * tau;
    let mut f = tank.residual(y);
    let mut norm = tank.merit(&f, &tank.weights(y, options));
    let mut newton_iterations = 0;
    let mut steps = 0;
    let mut handed_over_at = 0.0;
    while steps < options.max_pseudo_transient_steps {
        steps += 1;
        let mut a = tank.residual_jacobian(y);
        a.neg_mut();
        for i in 0..tank.size() {
            a[(i, i)] += 1.0 / dt;
        }
        let rhs = DVector::from_column_slice(&f);
        let trial: Option<Vec<f64>> = a
            .lu()
            .solve(&rhs)
            .map(|dy| y.iter().zip(dy.iter()).map(|(a, d)| a + d).collect());
        match trial {
            Some(t) if tank.admissible(&t) => {
                let f_new = tank.residual(&t);
                let w_new = tank.weights(&t, options);
                let norm_new = tank.merit(&f_new, &w_new);
                if !norm_new.is_finite() {
                    dt *= 0.25;
                } else {
                    y.copy_from_slice(&t);
                    // Switched evolution relaxation.
                    dt *= (norm / norm_new.max(f64::MIN_POSITIVE)).min(1e3);
                    f = f_new;
                    norm = norm_new;
                }
            }
            _ => dt *= 0.25,
        }
        if dt < 1e-18 * tau {
            return (
                steps,
                newton_iterations,
                false,
                "the pseudo time step fell below 1e-18 residence times".into(),
            );
        }
        if dt > 10.0 * tau && dt > 10.0 * handed_over_at {
            handed_over_at = dt;
            let mut trial = y.to_vec();
            let run = newton(tank, &mut trial, options, options.max_newton_iterations);
            newton_iterations += run.iterations;
            if run.converged {
                y.copy_from_slice(&trial);
                return (steps, newton_iterations, true, String::new());
            }
        }
    }
    (
        steps,
        newton_iterations,
        false,
        format!(
            "pseudo-transient continuation did not converge in {} steps",
            options.max_pseudo_transient_steps
        ),
    )
}

/// The steady state of the stirred tank `model` of `kinetics`, searched from the guess
/// `guess_mol_per_m3` (mol/m3, one per species) at `temperature_k` (K: the held temperature
/// of an isothermal tank, the starting temperature otherwise). A coolant history is taken at
/// its last value (held after its last time). See the module documentation for the method.
///
/// Errors: [`SteadyError::NotATank`] without flow, [`SteadyError::Unsupported`] for a
/// prescribed temperature or fixed species, [`SteadyError::NotConverged`] or
/// [`SteadyError::Integration`] when no method converges.
pub fn steady_state(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    guess_mol_per_m3: &[f64],
    options: &SteadyOptions,
) -> Result<SteadyState, SteadyError> {
    let mut tank = Tank::new(kinetics, model, temperature_k, guess_mol_per_m3)?;
    solve(&mut tank, kinetics, temperature_k, options)
}

fn solve(
    tank: &mut Tank,
    kinetics: &Kinetics,
    temperature_k: f64,
    options: &SteadyOptions,
) -> Result<SteadyState, SteadyError> {
    let n = tank.n;
    let start = tank.eq.initial.clone();
    let mut y = start.clone();
    let first = if options.transient_first {
        NewtonRun {
            iterations: 0,
            converged: false,
            correction: f64::INFINITY,
            reason: String::new(),
        }
    } else {
        newton(tank, &mut y, options, options.max_newton_iterations)
    };
    let mut newton_iterations = first.iterations;
    let (mut steps, mut integrated) = (0, 0.0);
    let mut path = SteadyPath::Newton;
    let mut converged = first.converged;
    let mut correction = first.correction;
    let mut reason = first.reason;
    if !converged {
        y.clone_from(&start);
        let (s, iterations, ok, why) = pseudo_transient(tank, &mut y, options);
        steps = s;
        newton_iterations += iterations;
        converged = ok;
        path = SteadyPath::PseudoTransient;
        reason = why;
    }
    if !converged {
        // Time integration from the guess.
        let tau = tank.residence_time_s();
        let end = tank.t_eval + options.fallback_residence_times * tau;
        let model = tank.model().clone();
        let mut system =
            BatchSystem::with_model(kinetics, &model, temperature_k, &options.integration)?;
        let profiles = system
            .integrate(&start[..n], &[0.0, end])
            .map_err(|e| SteadyError::Integration(Box::new(e)))?;
        integrated = end;
        y[..n].copy_from_slice(&profiles.concentrations_mol_per_m3[1]);
        if tank.m > n {
            y[n] = profiles.temperatures_k[1];
        }
        let run = newton(tank, &mut y, options, options.max_newton_iterations);
        newton_iterations += run.iterations;
        converged = run.converged;
        correction = run.correction;
        path = SteadyPath::TimeIntegration;
        reason = run.reason;
    }
    let f = tank.residual(&y);
    let w = tank.weights(&y, options);
    let scaled_residual = tank.scaled_residual(&f, &w);
    if !converged {
        return Err(SteadyError::NotConverged {
            reason,
            newton_iterations,
            pseudo_transient_steps: steps,
            integrated_time_s: integrated,
            scaled_residual,
        });
    }
    if path != SteadyPath::Newton || correction.is_infinite() {
        // The correction of the converging attempt.
        let j = tank.residual_jacobian(&y);
        if let Some(dy) = j
            .lu()
            .solve(&DVector::from_iterator(f.len(), f.iter().map(|v| -v)))
        {
            correction = dy
                .iter()
                .zip(&w)
                .fold(0.0f64, |a, (d, w)| a.max(d.abs() / w));
        }
    }
    let stability = tank.stability(&y);
    Ok(SteadyState {
        concentrations_mol_per_m3: y[..n].to_vec(),
        temperature_k: tank.temperature(&y),
        path,
        newton_iterations,
        pseudo_transient_steps: steps,
        integrated_time_s: integrated,
        scaled_residual,
        scaled_correction: correction,
        stability,
    })
}

/// The bordered system of the continuation in scaled coordinates `u = (y / s_y, lambda /
/// s_lambda)`.
struct Follower<'t> {
    tank: &'t mut Tank,
    parameter: ContinuationParameter,
    scales: Vec<f64>,
}

impl Follower<'_> {
    fn m(&self) -> usize {
        self.tank.m
    }

    fn state(&self, u: &[f64]) -> Vec<f64> {
        u[..self.m()]
            .iter()
            .zip(&self.scales)
            .map(|(u, s)| u * s)
            .collect()
    }

    fn lambda(&self, u: &[f64]) -> f64 {
        u[self.m()] * self.scales[self.m()]
    }

    fn set(&mut self, u: &[f64]) -> Result<Vec<f64>, ReactorError> {
        let value = self.parameter.value_of_internal(self.lambda(u));
        self.tank.set_parameter(self.parameter, value)?;
        Ok(self.state(u))
    }

    /// `F` and its Jacobian with respect to `u` (m rows, m + 1 columns).
    fn evaluate(&mut self, u: &[f64]) -> Result<(Vec<f64>, DMatrix<f64>), ReactorError> {
        let y = self.set(u)?;
        let m = self.m();
        let f = self.tank.residual(&y);
        let jy = self.tank.residual_jacobian(&y);
        let jp = self.tank.parameter_derivative(self.parameter, &y)?;
        let mut g = DMatrix::zeros(m, m + 1);
        for col in 0..m {
            for row in 0..m {
                g[(row, col)] = jy[(row, col)] * self.scales[col];
            }
        }
        // d lambda / d u_lambda = s_lambda.
        for row in 0..m {
            g[(row, m)] = jp[row] * self.scales[m];
        }
        Ok((f, g))
    }

    /// The unit tangent at `u` oriented along `previous` (`G t = 0`, `previous . t = 1`
    /// before normalization).
    fn tangent(&mut self, u: &[f64], previous: &[f64]) -> Result<Option<Vec<f64>>, ReactorError> {
        let (_, g) = self.evaluate(u)?;
        let m = self.m();
        let mut a = DMatrix::zeros(m + 1, m + 1);
        a.view_mut((0, 0), (m, m + 1)).copy_from(&g);
        for (col, p) in previous.iter().enumerate() {
            a[(m, col)] = *p;
        }
        let mut b = DVector::zeros(m + 1);
        b[m] = 1.0;
        Ok(a.lu().solve(&b).map(|t| {
            let norm = t.norm();
            t.iter().map(|v| v / norm).collect()
        }))
    }

    /// Newton on `F(u) = 0`, `t . (u - u_pred) = 0` from `u_pred`; returns the point and
    /// the iterations, or `None` when it fails.
    fn correct(
        &mut self,
        predicted: &[f64],
        t: &[f64],
        options: &ContinuationOptions,
    ) -> Result<Option<(Vec<f64>, usize)>, ReactorError> {
        let m = self.m();
        let mut u = predicted.to_vec();
        for iteration in 1..=options.max_corrector_iterations {
            let y = self.state(&u);
            if !self.tank.admissible(&y) {
                return Ok(None);
            }
            let (f, g) = self.evaluate(&u)?;
            let mut a = DMatrix::zeros(m + 1, m + 1);
            a.view_mut((0, 0), (m, m + 1)).copy_from(&g);
            let mut b = DVector::zeros(m + 1);
            for i in 0..m {
                b[i] = -f[i];
            }
            let mut arc = 0.0;
            for (col, tc) in t.iter().enumerate() {
                a[(m, col)] = *tc;
                arc += tc * (u[col] - predicted[col]);
            }
            b[m] = -arc;
            let Some(du) = a.lu().solve(&b) else {
                return Ok(None);
            };
            let w = self.tank.weights(&y, &options.steady);
            let mut worst = 0.0f64;
            for i in 0..=m {
                u[i] += du[i];
                let weight = if i < m {
                    w[i] / self.scales[i]
                } else {
                    options.steady.relative_tolerance
                };
                worst = worst.max(du[i].abs() / weight);
            }
            if !u.iter().all(|v| v.is_finite()) {
                return Ok(None);
            }
            if worst < 1.0 {
                return Ok(Some((u, iteration)));
            }
        }
        Ok(None)
    }

    /// Newton in the state at fixed parameter `lambda` (internal units) from `u`.
    fn at_parameter(
        &mut self,
        u: &[f64],
        lambda: f64,
        options: &SteadyOptions,
    ) -> Result<Option<Vec<f64>>, ReactorError> {
        let m = self.m();
        let mut fixed = u.to_vec();
        fixed[m] = lambda / self.scales[m];
        let mut y = self.set(&fixed)?;
        let run = newton(self.tank, &mut y, options, options.max_newton_iterations);
        if !run.converged {
            return Ok(None);
        }
        for i in 0..m {
            fixed[i] = y[i] / self.scales[i];
        }
        Ok(Some(fixed))
    }

    fn point(&mut self, u: &[f64]) -> Result<BranchPoint, ReactorError> {
        let y = self.set(u)?;
        let stability = self.tank.stability(&y);
        Ok(BranchPoint {
            parameter: self.parameter.value_of_internal(self.lambda(u)),
            concentrations_mol_per_m3: y[..self.tank.n].to_vec(),
            temperature_k: self.tank.temperature(&y),
            stable: stability.stable,
            largest_real_part_per_s: stability.largest_real_part_per_s,
        })
    }

    /// Locates the turning point between `u0` (tangent `t0`) and the point at arclength `h`
    /// along it, where the parameter component of the tangent changes sign (secant method,
    /// Illinois variant, on that component as a function of the arclength).
    fn turning_point(
        &mut self,
        u0: &[f64],
        t0: &[f64],
        h: f64,
        t_end_lambda: f64,
        options: &ContinuationOptions,
    ) -> Result<Option<Vec<f64>>, ReactorError> {
        let m = self.m();
        let (mut a, mut fa) = (0.0, t0[m]);
        let (mut b, mut fb) = (h, t_end_lambda);
        let mut best: Option<Vec<f64>> = None;
        let mut side = 0;
        for _ in 0..60 {
            let s = (a * fb - b * fa) / (fb - fa);
            let predicted: Vec<f64> = u0.iter().zip(t0).map(|(u, t)| u + s * t).collect();
            let Some((u, _)) = self.correct(&predicted, t0, options)? else {
                return Ok(best);
            };
            let Some(t) = self.tangent(&u, t0)? else {
                return Ok(best);
            };
            let fs = t[m];
            best = Some(u);
            if fs.abs() < 1e-13 || (b - a).abs() < 1e-14 * h.max(1e-300) {
                break;
            }
            if (fs > 0.0) == (fa > 0.0) {
                a = s;
                fa = fs;
                if side == -1 {
                    fb *= 0.5;
                }
                side = -1;
            } else {
                b = s;
                fb = fs;
                if side == 1 {
                    fa *= 0.5;
                }
                side = 1;
            }
        }
        Ok(best)
    }
}

/// Follows the branch of steady states of the stirred tank `model` of `kinetics` in
/// `parameter` from `from` to `to` (s for the residence time, K for temperatures; finite,
/// positive, different), starting from the steady state found at `from` (searched from
/// `guess_mol_per_m3` at `temperature_k` as in [`steady_state`]). See the module
/// documentation for the method; every point carries its stability.
///
/// Errors: those of [`steady_state`] for the start, and [`SteadyError::BadParameter`] for a
/// parameter the tank does not have (the inlet temperature of an isothermal tank, the
/// coolant of a tank without heat exchange) or a bad range.
#[allow(clippy::too_many_arguments)]
pub fn continuation(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    guess_mol_per_m3: &[f64],
    parameter: ContinuationParameter,
    from: f64,
    to: f64,
    options: &ContinuationOptions,
) -> Result<Branch, SteadyError> {
    if !(from.is_finite() && to.is_finite() && from > 0.0 && to > 0.0) {
        return Err(SteadyError::BadParameter(format!(
            "the range of the {} must be finite and positive, got {from:e} to {to:e} {}",
            parameter.name(),
            parameter.unit()
        )));
    }
    if from == to {
        return Err(SteadyError::BadParameter(format!(
            "the range of the {} is empty: from and to are both {from:e} {}",
            parameter.name(),
            parameter.unit()
        )));
    }
    match parameter {
        ContinuationParameter::InletTemperature if !model.solves_energy() => {
            return Err(SteadyError::BadParameter(
                "the inlet temperature does not enter an isothermal tank (no energy balance)"
                    .into(),
            ))
        }
        ContinuationParameter::CoolantTemperature
            if !matches!(model.energy, Energy::HeatExchange(_)) =>
        {
            return Err(SteadyError::BadParameter(
                "the tank has no coolant (its reactor kind has no heat exchange)".into(),
            ))
        }
        _ => {}
    }
    let mut tank = Tank::new(kinetics, model, temperature_k, guess_mol_per_m3)?;
    tank.set_parameter(parameter, from)?;
    let start = solve(&mut tank, kinetics, temperature_k, &options.steady)?;
    let n = tank.n;
    let m = tank.m;
    let mut y0 = start.concentrations_mol_per_m3.clone();
    if m > n {
        y0.push(start.temperature_k);
    }
    let total: f64 = y0[..n].iter().map(|c| c.abs()).sum();
    // Every concentration is measured against the total: the arclength follows the major
    // species, the temperature and the parameter.
    let mut scales = vec![total.max(f64::MIN_POSITIVE); n];
    if m > n {
        scales.push(y0[n]);
    }
    let lambda0 = parameter.to_internal(from);
    let lambda_end = parameter.to_internal(to);
    scales.push(match parameter {
        ContinuationParameter::ResidenceTime => 1.0,
        _ => 0.05 * from,
    });
    let direction = (lambda_end - lambda0).signum();
    let mut follower = Follower {
        tank: &mut tank,
        parameter,
        scales,
    };
    let mut u: Vec<f64> = y0
        .iter()
        .zip(&follower.scales)
        .map(|(y, s)| y / s)
        .collect();
    u.push(lambda0 / follower.scales[m]);
    // Initial tangent: border with the parameter direction.
    let mut seed = vec![0.0; m + 1];
    seed[m] = direction;
    let Some(mut t) = follower.tangent(&u, &seed)? else {
        return Err(SteadyError::NotConverged {
            reason: "the Jacobian at the start of the branch is singular".into(),
            newton_iterations: start.newton_iterations,
            pseudo_transient_steps: start.pseudo_transient_steps,
            integrated_time_s: start.integrated_time_s,
            scaled_residual: start.scaled_residual,
        });
    };
    let mut points = vec![follower.point(&u)?];
    points[0].parameter = from;
    let mut turning_points = Vec::new();
    let mut h = options.initial_step;
    let mut corrector_iterations = 0;
    let (low, high) = (lambda0.min(lambda_end), lambda0.max(lambda_end));
    let end = loop {
        if points.len() >= options.max_points {
            break BranchEnd::PointBudget;
        }
        let predicted: Vec<f64> = u.iter().zip(&t).map(|(u, t)| u + h * t).collect();
        let Some((next, iterations)) = follower.correct(&predicted, &t, options)? else {
            h *= 0.5;
            if h < options.min_step {
                let y = follower.state(&predicted);
                break if follower.tank.admissible(&y) {
                    BranchEnd::StepTooSmall
                } else {
                    BranchEnd::Unphysical
                };
            }
            continue;
        };
        corrector_iterations += iterations;
        let Some(t_next) = follower.tangent(&next, &t)? else {
            h *= 0.5;
            if h < options.min_step {
                break BranchEnd::StepTooSmall;
            }
            continue;
        };
        let lambda_next = follower.lambda(&next);
        if lambda_next < low || lambda_next > high {
            // Close the branch exactly at the end of the range it left.
            let bound = if lambda_next > high { high } else { low };
            let leaving_at_end = bound == lambda_end;
            let lambda_prev = follower.lambda(&u);
            let share = (bound - lambda_prev) / (lambda_next - lambda_prev);
            let guess: Vec<f64> = u
                .iter()
                .zip(&next)
                .map(|(a, b)| a + share * (b - a))
                .collect();
            if let Some(last) = follower.at_parameter(&guess, bound, &options.steady)? {
                let mut p = follower.point(&last)?;
                // The bound exactly as given (not through exp(ln tau)).
                p.parameter = if leaving_at_end { to } else { from };
                points.push(p);
            }
            break if leaving_at_end {
                BranchEnd::ReachedEnd
            } else {
                BranchEnd::LeftAtStart
            };
        }
        if (t_next[m] > 0.0) != (t[m] > 0.0) {
            if let Some(fold) = follower.turning_point(&u, &t, h, t_next[m], options)? {
                let p = follower.point(&fold)?;
                turning_points.push(TurningPoint {
                    after: points.len() - 1,
                    parameter: p.parameter,
                    concentrations_mol_per_m3: p.concentrations_mol_per_m3,
                    temperature_k: p.temperature_k,
                });
            }
        }
        points.push(follower.point(&next)?);
        u = next;
        t = t_next;
        // Step-size control on the corrector's iteration count.
        h = match iterations {
            0..=2 => (h * 2.0).min(options.max_step),
            3 => (h * 1.3).min(options.max_step),
            4..=5 => h,
            _ => h * 0.5,
        };
    };
    Ok(Branch {
        parameter,
        points,
        turning_points,
        start,
        end,
        corrector_iterations,
    })
}
