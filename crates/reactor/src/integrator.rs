//! Driving diffsol's BDF solver: [`integrate`](crate::integrate) and [`BatchIntegrator`].
//!
//! diffsol's solver borrows its problem (`Bdf<'a, ..>` holds `&'a OdeSolverProblem`), so a
//! struct cannot own both without self-reference. [`BatchIntegrator`] therefore owns the
//! problem and the solver's *state* (`BdfState`: time, step size, order, difference table)
//! between calls, and builds a solver from that state on each
//! [`BatchIntegrator::advance_to`]. Continuing from a saved state keeps the step size, order
//! and history, so the integration itself is seamless; what each call costs is the solver
//! set-up: a Newton matrix, one Jacobian evaluation and LU factorization, and (sparse path)
//! the symbolic LU analysis of the fixed pattern. [`integrate`](crate::integrate) uses a
//! single solver for the whole run.

use diffsol::{
    Bdf, BdfState, DiffsolError, FaerSparseLU, FaerSparseMat, FaerVec, NalgebraLU, NalgebraMat,
    NalgebraVec, OdeBuilder, OdeSolverMethod, OdeSolverProblem, OdeSolverStopReason, Op, Vector,
};
use stoik_kinetics::Kinetics;

use crate::equations::{pattern_is_valid, Backend, BatchEquations};
use crate::{
    IntegrationError, IntegrationFailure, IntegrationOptions, LinearAlgebra, Profiles,
    ReactorError, SolverStats,
};

/// Checks the per-call arguments shared by [`crate::integrate`] and [`BatchIntegrator::new`].
fn validate(
    kinetics: &Kinetics,
    temperature_k: f64,
    initial: &[f64],
    options: &IntegrationOptions,
) -> Result<(), ReactorError> {
    let n = kinetics.n_species();
    check_state(n, initial, "initial state")?;
    check_temperature(temperature_k)?;
    let rtol = options.relative_tolerance;
    if !(rtol.is_finite() && rtol > 0.0) {
        return Err(ReactorError::BadRelativeTolerance(rtol));
    }
    let atol = &options.absolute_tolerances_mol_per_m3;
    if atol.len() != n {
        return Err(ReactorError::WrongLength {
            what: "absolute tolerances",
            expected: n,
            found: atol.len(),
        });
    }
    if let Some((species, &value)) = atol
        .iter()
        .enumerate()
        .find(|(_, a)| !(a.is_finite() && **a > 0.0))
    {
        return Err(ReactorError::BadAbsoluteTolerance { species, value });
    }
    if options.max_steps == 0 {
        return Err(ReactorError::NoSteps);
    }
    if !pattern_is_valid(kinetics.jacobian_pattern()) {
        return Err(ReactorError::BadPattern);
    }
    Ok(())
}

fn check_state(n: usize, c: &[f64], what: &'static str) -> Result<(), ReactorError> {
    if c.len() != n {
        return Err(ReactorError::WrongLength {
            what,
            expected: n,
            found: c.len(),
        });
    }
    if let Some((species, &value)) = c.iter().enumerate().find(|(_, x)| !x.is_finite()) {
        return Err(ReactorError::NonFiniteConcentration {
            what,
            species,
            value,
        });
    }
    Ok(())
}

fn check_temperature(temperature_k: f64) -> Result<(), ReactorError> {
    if temperature_k.is_finite() && temperature_k > 0.0 {
        Ok(())
    } else {
        Err(ReactorError::BadTemperature(temperature_k))
    }
}

fn most_negative(c: &[f64], so_far: &mut f64) {
    for &x in c {
        if x < *so_far {
            *so_far = x;
        }
    }
}

/// Steps `solver` to `outputs.last()` (a stop time, hit exactly) and hands every output time
/// with its state to `record`: by interpolation inside the steps, by the state itself at the
/// stop. Outputs must lie strictly after the solver's time and increase strictly.
fn drive<'a, M, S>(
    solver: &mut S,
    outputs: &[f64],
    buffer: &mut M::V,
    record: &mut dyn FnMut(f64, &[f64]),
    negative: &mut f64,
) -> Result<(), DiffsolError>
where
    M: Backend + 'a,
    S: OdeSolverMethod<'a, BatchEquations<M>>,
{
    let Some(&t_end) = outputs.last() else {
        return Ok(());
    };
    solver.set_stop_time(t_end)?;
    let mut next = 0;
    while next < outputs.len() {
        let reason = solver.step()?;
        let state = solver.state();
        let t = state.t;
        most_negative(M::slice(state.y), negative);
        let stopped = matches!(reason, OdeSolverStopReason::TstopReached);
        while next < outputs.len() && (outputs[next] < t || (stopped && outputs[next] <= t)) {
            if outputs[next] == t {
                record(t, M::slice(solver.state().y));
            } else {
                solver.interpolate_inplace(outputs[next], buffer)?;
                let row = M::slice(buffer);
                most_negative(row, negative);
                record(outputs[next], row);
            }
            next += 1;
        }
        if stopped {
            break;
        }
    }
    Ok(())
}

/// Counts that diffsol keeps per solver, accumulated over the solvers of one integrator.
fn add_solver_statistics<'a, M, S>(solver: &S, stats: &mut SolverStats)
where
    M: Backend + 'a,
    S: OdeSolverMethod<'a, BatchEquations<M>>,
{
    let s = solver.get_statistics();
    stats.steps += s.number_of_steps;
    stats.factorizations += s.number_of_linear_solver_setups;
    stats.error_test_failures += s.number_of_error_test_failures;
    stats.nonlinear_failures += s.number_of_nonlinear_solver_fails;
}

/// A solver failure inside one engine call: time reached and message.
struct StepFailure {
    time_s: f64,
    reason: String,
}

macro_rules! engine {
    ($name:ident, $mat:ty, $vec:ty, $ls:ty) => {
        /// The diffsol problem and the saved solver state of one linear-algebra backend.
        struct $name {
            problem: OdeSolverProblem<BatchEquations<$mat>>,
            /// The solver state after the last call; `None` forces a fresh start from
            /// `problem.eqn.initial` at `problem.t0` (first call, or after a change).
            saved: Option<BdfState<$vec>>,
        }

        impl $name {
            fn new(
                kinetics: &Kinetics,
                temperature_k: f64,
                initial: &[f64],
                t0: f64,
                options: &IntegrationOptions,
            ) -> Result<Self, ReactorError> {
                let eqn =
                    BatchEquations::<$mat>::new(kinetics.clone(), temperature_k, initial.to_vec());
                if !eqn.has_valid_structure() {
                    return Err(ReactorError::BadPattern);
                }
                let mut problem = OdeBuilder::<$mat>::new()
                    .rtol(options.relative_tolerance)
                    .atol(options.absolute_tolerances_mol_per_m3.clone())
                    .t0(t0)
                    .build_from_eqn(eqn)
                    .map_err(|e| ReactorError::Setup(e.to_string()))?;
                // diffsol's step budget is per solver; a solver lives for one call here.
                problem.ode_options.max_number_timesteps = options.max_steps;
                Ok(Self {
                    problem,
                    saved: None,
                })
            }

            /// Integrates to `outputs` (see [`drive`]); on return `current`/`time` hold the
            /// state reached, also on failure.
            fn advance(
                &mut self,
                outputs: &[f64],
                record: &mut dyn FnMut(f64, &[f64]),
                stats: &mut SolverStats,
                current: &mut [f64],
                time: &mut f64,
            ) -> Result<(), StepFailure> {
                let state = match self.saved.take() {
                    Some(state) => state,
                    None => self.problem.bdf_state::<$ls>().map_err(|e| StepFailure {
                        time_s: *time,
                        reason: e.to_string(),
                    })?,
                };
                let mut solver: Bdf<'_, BatchEquations<$mat>, $ls> = self
                    .problem
                    .bdf_solver::<$ls>(state)
                    .map_err(|e| StepFailure {
                        time_s: *time,
                        reason: e.to_string(),
                    })?;
                let mut buffer = <$vec>::zeros(current.len(), self.problem.eqn.context().clone());
                let result = drive::<$mat, _>(
                    &mut solver,
                    outputs,
                    &mut buffer,
                    record,
                    &mut stats.most_negative_concentration_mol_per_m3,
                );
                add_solver_statistics::<$mat, _>(&solver, stats);
                {
                    let state = solver.state();
                    current.copy_from_slice(<$mat as Backend>::slice(state.y));
                    *time = state.t;
                }
                let outcome = match result {
                    Ok(()) => {
                        self.saved = Some(solver.into_state());
                        Ok(())
                    }
                    Err(e) => {
                        drop(solver);
                        Err(StepFailure {
                            time_s: *time,
                            reason: e.to_string(),
                        })
                    }
                };
                let eqn = &self.problem.eqn;
                stats.rhs_evaluations = eqn.rhs_evaluations.get();
                stats.jacobian_evaluations = eqn.jacobian_evaluations.get();
                if outcome.is_err() {
                    // Restart from the last accepted state next time.
                    self.restart(current, *time);
                }
                outcome
            }

            /// Forgets the solver history: the next call starts afresh (first order, new
            /// initial step) from `c` at `t`.
            fn restart(&mut self, c: &[f64], t: f64) {
                self.problem.eqn.initial.copy_from_slice(c);
                self.problem.t0 = t;
                self.saved = None;
            }

            fn set_temperature(&mut self, temperature_k: f64) {
                self.problem.eqn.set_temperature(temperature_k);
            }
        }
    };
}

engine!(
    DenseEngine,
    NalgebraMat<f64>,
    NalgebraVec<f64>,
    NalgebraLU<f64>
);
engine!(
    SparseEngine,
    FaerSparseMat<f64>,
    FaerVec<f64>,
    FaerSparseLU<f64>
);

enum Engine {
    Dense(Box<DenseEngine>),
    Sparse(Box<SparseEngine>),
}

impl Engine {
    fn new(
        kinetics: &Kinetics,
        temperature_k: f64,
        initial: &[f64],
        t0: f64,
        options: &IntegrationOptions,
    ) -> Result<(Engine, LinearAlgebra), ReactorError> {
        match options.linear_algebra.resolve(kinetics) {
            LinearAlgebra::Sparse => Ok((
                Engine::Sparse(Box::new(SparseEngine::new(
                    kinetics,
                    temperature_k,
                    initial,
                    t0,
                    options,
                )?)),
                LinearAlgebra::Sparse,
            )),
            _ => Ok((
                Engine::Dense(Box::new(DenseEngine::new(
                    kinetics,
                    temperature_k,
                    initial,
                    t0,
                    options,
                )?)),
                LinearAlgebra::Dense,
            )),
        }
    }

    fn advance(
        &mut self,
        outputs: &[f64],
        record: &mut dyn FnMut(f64, &[f64]),
        stats: &mut SolverStats,
        current: &mut [f64],
        time: &mut f64,
    ) -> Result<(), StepFailure> {
        match self {
            Engine::Dense(e) => e.advance(outputs, record, stats, current, time),
            Engine::Sparse(e) => e.advance(outputs, record, stats, current, time),
        }
    }

    fn restart(&mut self, c: &[f64], t: f64) {
        match self {
            Engine::Dense(e) => e.restart(c, t),
            Engine::Sparse(e) => e.restart(c, t),
        }
    }

    fn set_temperature(&mut self, temperature_k: f64) {
        match self {
            Engine::Dense(e) => e.set_temperature(temperature_k),
            Engine::Sparse(e) => e.set_temperature(temperature_k),
        }
    }
}

pub(crate) fn integrate(
    kinetics: &Kinetics,
    temperature_k: f64,
    initial: &[f64],
    output_times_s: &[f64],
    options: &IntegrationOptions,
) -> Result<Profiles, IntegrationError> {
    validate(kinetics, temperature_k, initial, options)?;
    let Some(&t0) = output_times_s.first() else {
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
    let (mut engine, used) = Engine::new(kinetics, temperature_k, initial, t0, options)?;
    let mut profiles = Profiles {
        times_s: Vec::with_capacity(output_times_s.len()),
        concentrations_mol_per_m3: Vec::with_capacity(output_times_s.len()),
        stats: SolverStats::default(),
        linear_algebra_used: used,
    };
    profiles.times_s.push(t0);
    profiles.concentrations_mol_per_m3.push(initial.to_vec());
    most_negative(
        initial,
        &mut profiles.stats.most_negative_concentration_mol_per_m3,
    );
    let mut stats = profiles.stats;
    let mut current = initial.to_vec();
    let mut time = t0;
    let (times, rows) = (
        &mut profiles.times_s,
        &mut profiles.concentrations_mol_per_m3,
    );
    let mut record = |t: f64, c: &[f64]| {
        times.push(t);
        rows.push(c.to_vec());
    };
    let result = engine.advance(
        &output_times_s[1..],
        &mut record,
        &mut stats,
        &mut current,
        &mut time,
    );
    profiles.stats = stats;
    match result {
        Ok(()) => Ok(profiles),
        Err(failure) => Err(IntegrationFailure {
            time_s: failure.time_s,
            reason: failure.reason,
            partial: profiles,
        }
        .into()),
    }
}

/// A batch reactor integrated step by step, for process models that interleave reaction with
/// other processes (operator splitting): advance to a time, read or change the state or the
/// temperature, continue.
///
/// The kinetics are copied in once. Between calls the integrator keeps diffsol's solver
/// state (step size, order, history), so consecutive [`advance_to`](Self::advance_to) calls
/// continue the same integration; each call does build a new solver around that state (one
/// Jacobian evaluation and LU factorization, and on the sparse path one symbolic analysis of
/// the fixed pattern), because diffsol's solver borrows its problem. After
/// [`set_state`](Self::set_state) or [`set_temperature`](Self::set_temperature) the solver
/// restarts at first order with a fresh initial step from the new state; the compiled
/// kinetics, the Jacobian pattern and the rate-constant storage are reused.
pub struct BatchIntegrator {
    engine: Engine,
    linear_algebra_used: LinearAlgebra,
    current: Vec<f64>,
    time_s: f64,
    stats: SolverStats,
}

impl BatchIntegrator {
    /// An integrator for `kinetics` at `temperature_k` (K), starting from `initial_mol_per_m3`
    /// (mol/m3, one per species) at t = 0 s.
    pub fn new(
        kinetics: &Kinetics,
        temperature_k: f64,
        initial_mol_per_m3: &[f64],
        options: &IntegrationOptions,
    ) -> Result<BatchIntegrator, ReactorError> {
        validate(kinetics, temperature_k, initial_mol_per_m3, options)?;
        let (engine, linear_algebra_used) =
            Engine::new(kinetics, temperature_k, initial_mol_per_m3, 0.0, options)?;
        let mut stats = SolverStats::default();
        most_negative(
            initial_mol_per_m3,
            &mut stats.most_negative_concentration_mol_per_m3,
        );
        Ok(BatchIntegrator {
            engine,
            linear_algebra_used,
            current: initial_mol_per_m3.to_vec(),
            time_s: 0.0,
            stats,
        })
    }

    /// Integrates from the current time to `t_s` (s, not before the current time) and
    /// returns the concentrations there (mol/m3). The solver stops exactly at `t_s`.
    ///
    /// On a solver failure the integrator is left at the last accepted step (see
    /// [`time`](Self::time) and [`state`](Self::state)) and restarts from there on the next
    /// call; the failure's partial profile is that single state.
    pub fn advance_to(&mut self, t_s: f64) -> Result<&[f64], IntegrationError> {
        if !(t_s.is_finite() && t_s >= self.time_s) {
            return Err(ReactorError::TimeNotAhead {
                requested_s: t_s,
                current_s: self.time_s,
            }
            .into());
        }
        if t_s == self.time_s {
            return Ok(&self.current);
        }
        let mut record = |_: f64, _: &[f64]| {};
        let result = self.engine.advance(
            &[t_s],
            &mut record,
            &mut self.stats,
            &mut self.current,
            &mut self.time_s,
        );
        most_negative(
            &self.current,
            &mut self.stats.most_negative_concentration_mol_per_m3,
        );
        match result {
            Ok(()) => Ok(&self.current),
            Err(failure) => Err(IntegrationFailure {
                time_s: failure.time_s,
                reason: failure.reason,
                partial: Profiles {
                    times_s: vec![self.time_s],
                    concentrations_mol_per_m3: vec![self.current.clone()],
                    stats: self.stats,
                    linear_algebra_used: self.linear_algebra_used,
                },
            }
            .into()),
        }
    }

    /// Current concentrations (mol/m3).
    pub fn state(&self) -> &[f64] {
        &self.current
    }

    /// Current time (s).
    pub fn time(&self) -> f64 {
        self.time_s
    }

    /// Replaces the concentrations (mol/m3) at the current time, e.g. after adding a feed;
    /// the solver restarts from them.
    pub fn set_state(&mut self, c_mol_per_m3: &[f64]) -> Result<(), ReactorError> {
        check_state(self.current.len(), c_mol_per_m3, "new state")?;
        self.current.copy_from_slice(c_mol_per_m3);
        most_negative(
            &self.current,
            &mut self.stats.most_negative_concentration_mol_per_m3,
        );
        self.engine.restart(&self.current, self.time_s);
        Ok(())
    }

    /// Changes the reactor temperature (K) from the current time on: the rate constants are
    /// re-evaluated (no allocation) and the solver restarts from the current state.
    pub fn set_temperature(&mut self, temperature_k: f64) -> Result<(), ReactorError> {
        check_temperature(temperature_k)?;
        self.engine.set_temperature(temperature_k);
        self.engine.restart(&self.current, self.time_s);
        Ok(())
    }

    /// Solver statistics accumulated since creation.
    pub fn stats(&self) -> &SolverStats {
        &self.stats
    }

    /// The linear algebra in use ([`LinearAlgebra::Dense`] or [`LinearAlgebra::Sparse`]).
    pub fn linear_algebra_used(&self) -> LinearAlgebra {
        self.linear_algebra_used
    }
}
