//! Driving diffsol's BDF solver: [`BatchSystem`], [`BatchIntegrator`] and
//! [`integrate`](crate::integrate).
//!
//! diffsol's solver borrows its problem (`Bdf<'a, ..>` holds `&'a OdeSolverProblem`), so the
//! two live in two objects: [`BatchSystem`] owns the problem (the equations with their copy of
//! the kinetics, the rate constants, the tolerances), and [`BatchIntegrator<'a>`] borrows it
//! and owns one live solver for its whole session. Every operation of a session steps or
//! modifies that same solver in place:
//!
//! - `advance_to` sets a stop time and steps;
//! - `set_state`, `set_temperature` and `reset` write the new state (or re-evaluate the rate
//!   constants in place) through diffsol's `state_mut`, which makes the solver's next step
//!   restart at first order from the modified state, reusing its buffers. Before that step we
//!   recompute the state derivative `dy = w(y)` (the first-order restart builds its
//!   difference table from it), choose a fresh initial step size (the estimate of Hairer,
//!   Norsett and Wanner, *Solving ODEs I*, section II.4, as diffsol uses for a new state,
//!   here on preallocated scratch), and re-evaluate the solver's cached Jacobian at the new
//!   state (diffsol's `jacobian()`, in place). diffsol itself does not re-evaluate the
//!   Jacobian on a state change; it rebuilds the Newton matrix from the cached Jacobian when the
//!   step coefficient `h * alpha_order` moved beyond its threshold, which the restart at order 1
//!   with a fresh step size almost always does. Should it not, Newton's convergence test
//!   rejects the stale matrix and diffsol rebuilds it: the result is right either way.

#[cfg(feature = "bench-internals")]
use diffsol::FaerSparseLU;
use diffsol::{
    Bdf, DiffsolError, FaerSparseMat, NalgebraLU, NalgebraMat, OdeBuilder, OdeSolverConfig,
    OdeSolverMethod, OdeSolverProblem, OdeSolverStopReason, Op, Vector,
};
use stoik_kinetics::Kinetics;

use crate::equations::{Backend, BatchEquations};
use crate::failure::{Diagnosis, Halt};
use crate::fixed_lu::FixedPatternSolver;
use crate::invariants::Invariants;
use crate::model::{energy_thermo, Constraint, Energy, HeatExchange, ReactorModel, StirredFlow};
use crate::user_terms::{Held, UserTerms};
use crate::watch::{gauss_legendre_3_nodes, Quantity, Watch, Watcher};
use crate::{
    FastestComponent, IntegrationError, IntegrationFailure, IntegrationOptions, LinearAlgebra,
    Profiles, ReactorError, RunMonitor, SolverError, SolverStats, TOLERANCE_SAFETY_FACTOR,
};
use std::time::{Duration, Instant};

/// What the step loop checks after every accepted step besides the solver: the run's
/// monitor (publish progress, honour a stop request) and the wall-clock deadline.
#[derive(Debug, Clone, Copy, Default)]
pub(crate) struct Control<'a> {
    pub(crate) monitor: Option<&'a RunMonitor>,
    /// The deadline and the limit (s) it came from.
    pub(crate) deadline: Option<(Instant, f64)>,
}

impl Control<'_> {
    /// Publishes an accepted step ending at `t` and says whether the loop must stop (never
    /// when the step `finished` the call).
    #[inline]
    pub(crate) fn after_step(&self, t: f64, finished: bool) -> Result<(), Halt> {
        if let Some(monitor) = self.monitor {
            monitor.step_taken(t);
            if finished {
                return Ok(());
            }
            if monitor.is_interrupted() {
                return Err(Halt::Interrupted);
            }
        }
        if let Some((deadline, limit_s)) = self.deadline {
            if !finished && Instant::now() >= deadline {
                return Err(Halt::WallTime(limit_s));
            }
        }
        Ok(())
    }
}

/// The deadline of a call starting now with a wall-clock limit of `limit_s` seconds.
pub(crate) fn deadline(limit_s: Option<f64>) -> Option<(Instant, f64)> {
    let limit = limit_s?;
    // Limits beyond what `Instant` can represent are no limit.
    let deadline = Instant::now().checked_add(Duration::try_from_secs_f64(limit).ok()?)?;
    Some((deadline, limit))
}

/// Checks the options and the temperature of a [`BatchSystem`].
pub(crate) fn validate_options(
    kinetics: &Kinetics,
    temperature_k: f64,
    options: &IntegrationOptions,
) -> Result<(), ReactorError> {
    let n = kinetics.n_species();
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
    if let Some(tol) = options.newton_tolerance {
        if !(tol.is_finite() && tol > 0.0) {
            return Err(ReactorError::BadNewtonTolerance(tol));
        }
    }
    if let Some(limit) = options.wall_time_limit_s {
        if !(limit.is_finite() && limit > 0.0) {
            return Err(ReactorError::BadWallTimeLimit(limit));
        }
    }
    check_watches(kinetics.n_species(), kinetics.n_steps(), &options.watch)
}

/// Checks that every watched concentration names a species of the mechanism, every watched
/// step rate a step, and every window is ordered and finite.
fn check_watches(n_species: usize, n_steps: usize, watches: &[Watch]) -> Result<(), ReactorError> {
    for watch in watches {
        match watch.quantity() {
            Quantity::Concentration(species) if species >= n_species => {
                return Err(ReactorError::SpeciesOutOfRange {
                    what: "watched concentration",
                    species,
                    n_species,
                });
            }
            Quantity::StepRate(step) if step >= n_steps => {
                return Err(ReactorError::StepOutOfRange { step, n_steps });
            }
            _ => {}
        }
        if let Watch::WindowIntegral { from_s, to_s, .. } = *watch {
            if !(from_s.is_finite() && to_s.is_finite() && from_s <= to_s) {
                return Err(ReactorError::BadWindow { from_s, to_s });
            }
        }
    }
    Ok(())
}

pub(crate) fn check_state(n: usize, c: &[f64], what: &'static str) -> Result<(), ReactorError> {
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

/// Running integrals of every step's net rate of progress (mol/m3), accumulated on the
/// solver's accepted steps.
pub(crate) struct Extents {
    /// Integral of q_j since the last take, per step (mol/m3).
    sums: Vec<f64>,
    /// Scratch: rates of progress at one node.
    q: Vec<f64>,
}

impl Extents {
    fn new(n_steps: usize) -> Extents {
        Extents {
            sums: vec![0.0; n_steps],
            q: vec![0.0; n_steps],
        }
    }
}

/// Adds the integral of every step's rate of progress over the accepted step `[a, b]`
/// (three-point Gauss-Legendre on the solver's interpolant, as the window integrals of the
/// watches) to `x`. No allocation.
fn accumulate_extents<'a, M, S>(solver: &S, a: f64, b: f64, buffer: &mut M::V, x: &mut Extents)
where
    M: Backend + 'a,
    S: OdeSolverMethod<'a, BatchEquations<M>>,
{
    if b <= a {
        return;
    }
    let eqn = &solver.problem().eqn;
    let n = eqn.kinetics.n_species();
    for (tq, w) in gauss_legendre_3_nodes(a, b) {
        if solver.interpolate_inplace(tq, buffer).is_err() {
            x.q.iter_mut().for_each(|q| *q = f64::NAN);
        } else {
            let y = M::slice(buffer);
            eqn.rates_for(tq, y);
            eqn.kinetics
                .rates_of_progress(&eqn.rate_constants.borrow(), &y[..n], &mut x.q);
        }
        for (s, q) in x.sums.iter_mut().zip(&x.q) {
            *s += w * q;
        }
    }
}

/// Steps `solver` to `outputs.last()` (a stop time, hit exactly) and hands every output time
/// with its state to `record`: by interpolation inside the steps, by the state itself at the
/// stop. Outputs must lie strictly after the solver's time and increase strictly.
#[allow(clippy::too_many_arguments)]
fn drive<'a, M, S>(
    solver: &mut S,
    outputs: &[f64],
    buffer: &mut M::V,
    scratch: &mut [f64],
    mut watcher: Option<&mut Watcher>,
    mut extents: Option<&mut Extents>,
    mut invariants: Option<&mut Invariants>,
    projections: &mut usize,
    record: &mut dyn FnMut(f64, &[f64]),
    negative: &mut f64,
    rejections: &mut usize,
    control: Control<'_>,
) -> Result<(), Halt>
where
    M: Backend + 'a,
    S: OdeSolverMethod<'a, BatchEquations<M>>,
{
    let Some(&t_end) = outputs.last() else {
        return Ok(());
    };
    solver.set_stop_time(t_end)?;
    let mut next = 0;
    let mut consecutive_rejections = 0;
    while next < outputs.len() {
        let t_before = solver.state().t;
        // The smallest step allowed is relative to the time reached: diffsol's default is an
        // absolute 2.2e-16 s, which refused valid runs whose natural first steps are shorter
        // (species starting at zero with tiny absolute tolerances; docs/solver-fidelity.md).
        *solver.config_mut().as_base_mut().minimum_timestep = minimum_step(t_before);
        let reason = solver.step()?;
        let t = solver.state().t;
        // Non-negativity in the step acceptance: a step whose solution goes more negative
        // than a species' absolute tolerance is taken back and retried from the last accepted
        // point with a quarter of the step size (the right-hand side stays exact).
        if solver.problem().eqn.non_negative
            && consecutive_rejections < MAX_NEGATIVE_REJECTIONS
            && t > t_before
            && meaningfully_negative(M::slice(solver.state().y), M::slice(&solver.problem().atol))
        {
            solver.state_mut_back(t_before)?;
            // The retry restarts at first order anyway, so the last accepted state is also
            // projected onto c >= 0: its negative values lie within the absolute tolerance
            // (it was accepted), and removing them removes the seed of the excursion.
            let problem = solver.problem();
            let state = solver.state_mut();
            let y = M::slice_mut(state.y);
            y.iter_mut().for_each(|c| *c = c.max(0.0));
            problem
                .eqn
                .state_derivative(t_before, y, M::slice_mut(state.dy));
            *state.h = NEGATIVE_STEP_SHRINK * (t - t_before);
            solver.set_stop_time(t_end)?;
            consecutive_rejections += 1;
            *rejections += 1;
            continue;
        }
        consecutive_rejections = 0;
        most_negative(M::slice(solver.state().y), negative);
        if let Some(watcher) = watcher.as_deref_mut() {
            let solver = &*solver;
            let mut at = |tq: f64, q: Quantity| {
                let eqn = &solver.problem().eqn;
                let n = eqn.kinetics.n_species();
                if tq == t && q == Quantity::TemperatureRate && eqn.model.solves_energy() {
                    // At a step end the solver's own derivative serves to bracket a maximum
                    // (the refinement inside the bracket evaluates the model exactly); it saves
                    // one right-hand side per step.
                    M::slice(solver.state().dy)[n]
                } else if tq == t {
                    eqn.quantity(q, t, M::slice(solver.state().y), scratch)
                } else if solver.interpolate_inplace(tq, buffer).is_ok() {
                    eqn.quantity(q, tq, M::slice(buffer), scratch)
                } else {
                    f64::NAN
                }
            };
            watcher.after_step(t, &mut at);
        }
        if let Some(x) = extents.as_deref_mut() {
            accumulate_extents::<M, S>(solver, t_before, t, buffer, x);
        }
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
        // Linear invariants back on their values when round-off has moved them (see the
        // `invariants` module); the solver restarts from the corrected state. This comes after
        // the outputs and watches of the step: diffsol cannot interpolate inside a step once
        // its state has been modified ("Step size is zero after calling state_mut()").
        if let Some(inv) = invariants.as_deref_mut() {
            let problem = solver.problem();
            let atol = M::slice(&problem.atol);
            let mut corrected = false;
            {
                let y = M::slice(solver.state().y);
                scratch[..y.len()].copy_from_slice(y);
                if inv.project(&mut scratch[..y.len()], atol, problem.rtol) {
                    corrected = true;
                }
            }
            if corrected {
                let state = solver.state_mut();
                let y = M::slice_mut(state.y);
                let m = y.len();
                y.copy_from_slice(&scratch[..m]);
                problem.eqn.state_derivative(t, y, M::slice_mut(state.dy));
                solver.set_stop_time(t_end)?;
                *projections += 1;
            }
        }
        control.after_step(t, stopped)?;
        if stopped {
            break;
        }
    }
    Ok(())
}

/// The smallest step size (s) allowed at time `t_s`: ten units of round-off of `t_s` (a
/// shorter step would not change the time it is added to; scipy's `solve_ivp` uses the same
/// bound), and never below [`ABSOLUTE_MINIMUM_STEP_S`].
pub(crate) fn minimum_step(t_s: f64) -> f64 {
    (10.0 * f64::EPSILON * t_s.abs()).max(ABSOLUTE_MINIMUM_STEP_S)
}

/// The Newton convergence tolerance for relative tolerance `rtol`, in units of the error
/// weights: `max(10 eps / rtol, min(0.03, sqrt(rtol)))`, the choice of scipy's BDF (after
/// Shampine & Reichelt's ode15s, SIAM J. Sci. Comput. 18, 1997). diffsol's default, a fixed
/// 0.2, left Newton errors that are a sizeable fraction of the local error test: on the
/// published test problems stoik's global errors were then up to 7 times scipy BDF's at the
/// same tolerances (docs/solver-fidelity.md).
pub(crate) fn default_newton_tolerance(rtol: f64) -> f64 {
    (10.0 * f64::EPSILON / rtol).max(0.03f64.min(rtol.sqrt()))
}

/// The absolute floor of the step size (s): far below any chemical time scale, and well above
/// the subnormal range so that products with rates stay normal.
pub(crate) const ABSOLUTE_MINIMUM_STEP_S: f64 = 1e-200;

/// Retries of one step that goes negative before it is accepted anyway (its negative value is
/// then reported in [`SolverStats::most_negative_concentration_mol_per_m3`]).
pub(crate) const MAX_NEGATIVE_REJECTIONS: usize = 10;

/// Step-size factor after a step went meaningfully negative.
pub(crate) const NEGATIVE_STEP_SHRINK: f64 = 0.25;

/// Whether some concentration is below minus its absolute tolerance: values within the
/// absolute tolerance of zero are indistinguishable from zero to the error control.
pub(crate) fn meaningfully_negative(y: &[f64], atol: &[f64]) -> bool {
    y.iter().zip(atol).any(|(y, a)| *y < -a)
}

/// The weighted root-mean-square norm of `x` with weights `atol_i + rtol |y_i|`.
fn weighted_rms(x: &[f64], y: &[f64], atol: &[f64], rtol: f64) -> f64 {
    if x.is_empty() {
        return 0.0;
    }
    let sum: f64 = x
        .iter()
        .zip(y)
        .zip(atol)
        .map(|((x, y), a)| {
            let r = x / (a + rtol * y.abs());
            r * r
        })
        .sum();
    (sum / x.len() as f64).sqrt()
}

/// Initial step size (s) for a first-order start from `y` with derivative `f0 = w(y)`: the
/// estimate of Hairer, Norsett and Wanner, *Solving Ordinary Differential Equations I*,
/// section II.4 (the one diffsol applies to a new state), computed in the preallocated
/// scratch `y1`, `f1` (one right-hand-side evaluation, no allocation).
#[allow(clippy::too_many_arguments)]
fn initial_step<M: Backend>(
    eqn: &BatchEquations<M>,
    t: f64,
    y: &[f64],
    f0: &[f64],
    atol: &[f64],
    rtol: f64,
    y1: &mut [f64],
    f1: &mut [f64],
) -> f64 {
    let d0 = weighted_rms(y, y, atol, rtol);
    let d1 = weighted_rms(f0, y, atol, rtol);
    let h0 = if d0 < 1e-5 || d1 < 1e-5 {
        1e-6
    } else {
        0.01 * d0 / d1
    };
    for ((y1, y), f0) in y1.iter_mut().zip(y).zip(f0) {
        *y1 = y + h0 * f0;
    }
    eqn.state_derivative(t + h0, y1, f1);
    for (f1, f0) in f1.iter_mut().zip(f0) {
        *f1 -= f0;
    }
    let d2 = weighted_rms(f1, y, atol, rtol) / h0;
    let max_d = d1.max(d2);
    // BDF restarts at order 1: h1 = (0.01 / max_d)^(1 / (order + 1))
    let h1 = if max_d < 1e-15 {
        (h0 * 1e-3).max(1e-6)
    } else {
        (0.01 / max_d).sqrt()
    };
    (100.0 * h0).min(h1)
}

/// One live diffsol solver with the scratch its session needs, generic over the backend `M`
/// and the solver type `S` (a [`Bdf`] on `M`'s LU).
struct Stepper<M: Backend, S> {
    solver: S,
    /// Interpolation output (one state vector).
    buffer: M::V,
    /// Scratch of the initial-step estimate (one state each).
    probe_y: Vec<f64>,
    probe_w: Vec<f64>,
    /// Accepted steps allowed per call.
    max_steps: usize,
    /// Progress and stop requests, and the wall-clock limit per call (s).
    monitor: Option<RunMonitor>,
    wall_time_limit_s: Option<f64>,
    /// The state's linear invariants, kept by projection (`None`: none, or not kept).
    invariants: Option<Invariants>,
    /// The equations' right-hand-side and Jacobian counters when the session began.
    rhs_base: usize,
    jacobian_base: usize,
}

impl<'a, M, S> Stepper<M, S>
where
    M: Backend + 'a,
    S: OdeSolverMethod<'a, BatchEquations<M>>,
{
    /// Builds a solver on `problem`, whose initial state and time are set (see
    /// [`prepare_problem`]): the allocating step.
    fn open(
        problem: &'a OdeSolverProblem<BatchEquations<M>>,
        limits: &Limits,
        make: impl FnOnce(&'a OdeSolverProblem<BatchEquations<M>>) -> Result<S, DiffsolError>,
    ) -> Result<Self, ReactorError> {
        let initial = problem.eqn.initial.as_slice();
        let rhs_base = problem.eqn.rhs_evaluations.get();
        let jacobian_base = problem.eqn.jacobian_evaluations.get();
        let solver = make(problem).map_err(|e| ReactorError::Setup(SolverError::new(e)))?;
        let n = initial.len();
        let mut invariants = Invariants::new(&problem.eqn.laws, n);
        if let Some(inv) = invariants.as_mut() {
            inv.set_reference(initial);
        }
        Ok(Stepper {
            invariants,
            solver,
            buffer: M::V::zeros(n, problem.eqn.context().clone()),
            probe_y: vec![0.0; n],
            probe_w: vec![0.0; n],
            max_steps: limits.max_steps,
            monitor: limits.monitor.clone(),
            wall_time_limit_s: limits.wall_time_limit_s,
            rhs_base,
            jacobian_base,
        })
    }

    /// The full state (concentrations, then the temperature when it is solved).
    fn state(&self) -> &[f64] {
        M::slice(self.solver.state().y)
    }

    /// The concentrations (mol/m3).
    fn concentrations(&self) -> &[f64] {
        &self.state()[..self.solver.problem().eqn.kinetics.n_species()]
    }

    fn time(&self) -> f64 {
        self.solver.state().t
    }

    fn temperature(&self) -> f64 {
        let eqn = &self.solver.problem().eqn;
        eqn.temperature_at(self.time(), self.state())
    }

    /// Steps to `outputs` (see [`drive`]) with a budget of `max_steps` accepted steps. After a
    /// failure the solver is restarted at its last accepted state.
    #[allow(clippy::too_many_arguments)]
    fn advance(
        &mut self,
        outputs: &[f64],
        watcher: Option<&mut Watcher>,
        extents: Option<&mut Extents>,
        projections: &mut usize,
        record: &mut dyn FnMut(f64, &[f64]),
        negative: &mut f64,
        rejections: &mut usize,
        deadline: Option<(Instant, f64)>,
    ) -> Result<(), Halt> {
        let budget = self
            .solver
            .get_statistics()
            .number_of_steps
            .saturating_add(self.max_steps);
        *self
            .solver
            .config_mut()
            .as_base_mut()
            .maximum_number_timesteps = budget;
        let result = drive::<M, S>(
            &mut self.solver,
            outputs,
            &mut self.buffer,
            &mut self.probe_w,
            watcher,
            extents,
            self.invariants.as_mut(),
            projections,
            record,
            negative,
            rejections,
            Control {
                monitor: self.monitor.as_ref(),
                deadline,
            },
        );
        if result.is_err() {
            self.restart(None, None);
        }
        result
    }

    /// Modifies the solver's state in place (time `time_s` if given, concentrations `c` if
    /// given) and prepares a first-order restart from it: `dy = w(y)`, a fresh initial step
    /// size, and the cached Jacobian re-evaluated at the new state. No allocation.
    fn restart(&mut self, time_s: Option<f64>, c: Option<&[f64]>) {
        let problem = self.solver.problem();
        let eqn = &problem.eqn;
        let atol = M::slice(&problem.atol);
        let rtol = problem.rtol;
        let state = self.solver.state_mut();
        if let Some(c) = c {
            M::slice_mut(state.y)[..c.len()].copy_from_slice(c);
        }
        if let Some(t) = time_s {
            *state.t = t;
            // Starting over: a semi-batch's volume goes back to its initial value.
            if let Some(semi) = &eqn.model.semi_batch {
                if let Some(v) = M::slice_mut(state.y).last_mut() {
                    *v = semi.initial_volume_m3();
                }
            }
        }
        let t = *state.t;
        let y = M::slice(state.y);
        if c.is_some() {
            if let Some(inv) = self.invariants.as_mut() {
                inv.set_reference(y);
            }
        }
        let dy = M::slice_mut(state.dy);
        eqn.state_derivative(t, y, dy);
        *state.h = initial_step(
            eqn,
            t,
            y,
            dy,
            atol,
            rtol,
            &mut self.probe_y,
            &mut self.probe_w,
        );
        // Re-evaluates the solver's cached right-hand-side Jacobian at the new state, in
        // place; the returned borrow is released at once.
        drop(self.solver.jacobian());
    }

    /// The state component changing fastest relative to its error weight at the current
    /// state: the largest |f_i| / (atol_i + rtol |y_i|), with its value and rate, reported
    /// with the requested tolerances (the solver's times [`TOLERANCE_SAFETY_FACTOR`], exact
    /// for a power of two).
    fn fastest_component(&mut self) -> Option<FastestComponent> {
        let t = self.time();
        let problem = self.solver.problem();
        let y = M::slice(self.solver.state().y);
        problem.eqn.state_derivative(t, y, &mut self.probe_w);
        let atol = M::slice(&problem.atol);
        let rtol = problem.rtol;
        let n = problem.eqn.kinetics.n_species();
        (0..y.len())
            .map(|i| {
                let weight = atol[i] + rtol * y[i].abs();
                (i, (self.probe_w[i] / weight).abs())
            })
            .filter(|(_, r)| r.is_finite())
            .max_by(|a, b| a.1.total_cmp(&b.1))
            .map(|(i, r)| FastestComponent {
                index: (i < n).then_some(i),
                value: y[i],
                rate_per_s: self.probe_w[i],
                absolute_tolerance: atol[i] * TOLERANCE_SAFETY_FACTOR,
                relative_rate_per_s: r / TOLERANCE_SAFETY_FACTOR,
                // The weight the solver itself must meet.
                tolerance_unreachable: atol[i] + rtol * y[i].abs()
                    <= 8.0 * f64::EPSILON * y[i].abs(),
                driving_step: (i < n)
                    .then(|| problem.eqn.driving_step(i, &y[..n]))
                    .flatten(),
            })
    }

    /// Steps whose effective forward or reverse rate constant is NaN or infinite at the
    /// current state.
    fn nonfinite_steps(&mut self) -> Vec<usize> {
        let t = self.time();
        let problem = self.solver.problem();
        let y = M::slice(self.solver.state().y);
        problem.eqn.state_derivative(t, y, &mut self.probe_w);
        problem.eqn.nonfinite_steps(y)
    }

    /// `quantity` at the current state (no allocation).
    /// Rates of progress of every step at the current state (mol/(m3 s)) into `out`.
    fn step_rates(&self, out: &mut [f64]) {
        let (t, y) = (self.time(), self.state());
        let eqn = &self.solver.problem().eqn;
        let n = eqn.kinetics.n_species();
        eqn.rates_for(t, y);
        eqn.kinetics
            .rates_of_progress(&eqn.rate_constants.borrow(), &y[..n], out);
    }

    /// dq_j/dT at fixed concentrations (mol/(m3 s K)) at the current state into `out`.
    fn step_rate_slopes(&self, out: &mut [f64]) {
        let (t, y) = (self.time(), self.state());
        let eqn = &self.solver.problem().eqn;
        let n = eqn.kinetics.n_species();
        let temperature_k = eqn.rates_for(t, y);
        let k = eqn.rate_constants.borrow();
        let mut scratch = eqn.scratch.borrow_mut();
        let slopes = scratch.slopes_mut();
        eqn.kinetics
            .evaluate_rate_constant_slopes(temperature_k, &k, slopes);
        eqn.kinetics
            .rates_of_progress_slopes(&k, slopes, &y[..n], out);
    }

    /// Calls `sink(step, species, dq_dc)` at the current state.
    fn for_each_rate_derivative(&self, sink: &mut dyn FnMut(usize, usize, f64)) {
        let (t, y) = (self.time(), self.state());
        let eqn = &self.solver.problem().eqn;
        let n = eqn.kinetics.n_species();
        eqn.rates_for(t, y);
        eqn.kinetics
            .for_each_rate_derivative(&eqn.rate_constants.borrow(), &y[..n], |j, i, d| {
                sink(j, i, d)
            });
    }

    fn quantity_now(&mut self, quantity: Quantity) -> f64 {
        let t = self.time();
        let eqn = &self.solver.problem().eqn;
        eqn.quantity(
            quantity,
            t,
            M::slice(self.solver.state().y),
            &mut self.probe_w,
        )
    }

    /// Sets the temperature (K); returns whether anything changed. A changed temperature
    /// restarts the solver at first order from the current state (an isothermal model's
    /// rate constants change, an energy-solving model's temperature state is set). With
    /// `keep_step`, the first step after the restart is the current step size (the error
    /// test shrinks it if the new rate constants call for it) instead of a fresh starting
    /// step.
    fn set_temperature(&mut self, temperature_k: f64, keep_step: bool) -> bool {
        let eqn = &self.solver.problem().eqn;
        let n = eqn.kinetics.n_species();
        if eqn.model.solves_energy() {
            if M::slice(self.solver.state().y)[n] == temperature_k {
                return false;
            }
            M::slice_mut(self.solver.state_mut().y)[n] = temperature_k;
        } else {
            if eqn.temperature_k() == temperature_k {
                return false;
            }
            eqn.set_temperature(temperature_k);
        }
        let h = self.solver.state().h;
        self.restart(None, None);
        if keep_step {
            *self.solver.state_mut().h = h;
        }
        true
    }

    /// Writes the session's counts into `stats` (keeping its positivity report).
    fn fill_stats(&self, stats: &mut SolverStats) {
        let s = self.solver.get_statistics();
        stats.steps = s.number_of_steps;
        stats.factorizations = s.number_of_linear_solver_setups;
        stats.error_test_failures = s.number_of_error_test_failures;
        stats.nonlinear_failures = s.number_of_nonlinear_solver_fails;
        let eqn = &self.solver.problem().eqn;
        stats.rhs_evaluations = eqn.rhs_evaluations.get() - self.rhs_base;
        stats.jacobian_evaluations = eqn.jacobian_evaluations.get() - self.jacobian_base;
    }
}

type DenseEquations = BatchEquations<NalgebraMat<f64>>;
type SparseEquations = BatchEquations<FaerSparseMat<f64>>;
type DenseStepper<'a> = Stepper<NalgebraMat<f64>, Bdf<'a, DenseEquations, NalgebraLU<f64>>>;
type SparseStepper<'a> = Stepper<FaerSparseMat<f64>, Bdf<'a, SparseEquations, FixedPatternSolver>>;
#[cfg(feature = "bench-internals")]
type SparseFaerStepper<'a> =
    Stepper<FaerSparseMat<f64>, Bdf<'a, SparseEquations, FaerSparseLU<f64>>>;

/// The live solver of one backend.
enum Session<'a> {
    Dense(Box<DenseStepper<'a>>),
    Sparse(Box<SparseStepper<'a>>),
    #[cfg(feature = "bench-internals")]
    SparseFaer(Box<SparseFaerStepper<'a>>),
}

/// Runs `$body` with `$s` bound to the stepper of either backend.
macro_rules! with_stepper {
    ($session:expr, $s:ident => $body:expr) => {
        match $session {
            Session::Dense($s) => $body,
            Session::Sparse($s) => $body,
            #[cfg(feature = "bench-internals")]
            Session::SparseFaer($s) => $body,
        }
    };
}

mod plug_run;

/// The diffsol problem of one backend (both sparse solvers share the sparse problem).
enum Problem {
    Dense(Box<OdeSolverProblem<DenseEquations>>),
    Sparse(Box<OdeSolverProblem<SparseEquations>>),
}

fn build_problem<M: Backend>(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    options: &IntegrationOptions,
) -> Result<OdeSolverProblem<BatchEquations<M>>, ReactorError> {
    let thermo = energy_thermo(kinetics, model)?;
    let m = model.n_states(kinetics.n_species());
    let mut eqn = BatchEquations::<M>::new(
        kinetics.clone(),
        model.clone(),
        thermo,
        temperature_k,
        vec![0.0; m],
    )?;
    eqn.non_negative = options.non_negative;
    if options.keep_invariants {
        eqn.laws = state_laws(kinetics, model);
    }
    if !eqn.has_valid_structure() {
        return Err(ReactorError::BadPattern);
    }
    // The solver works to the requested tolerances over TOLERANCE_SAFETY_FACTOR (see there);
    // everything reported keeps the requested ones.
    let mut atol = options.absolute_tolerances_mol_per_m3.clone();
    if model.solves_energy() {
        atol.push(TEMPERATURE_ABSOLUTE_TOLERANCE_K);
    }
    if model.plug.is_some() {
        atol.push(DISTANCE_ABSOLUTE_TOLERANCE_M);
    }
    if let Some(semi) = &model.semi_batch {
        atol.push(VOLUME_ABSOLUTE_TOLERANCE * semi.initial_volume_m3());
    }
    atol.iter_mut().for_each(|a| *a /= TOLERANCE_SAFETY_FACTOR);
    let rtol = options.relative_tolerance / TOLERANCE_SAFETY_FACTOR;
    let mut problem = OdeBuilder::<M>::new()
        .rtol(rtol)
        .atol(atol)
        .build_from_eqn(eqn)
        .map_err(|e| ReactorError::Setup(SolverError::new(e)))?;
    problem.ode_options.max_number_timesteps = options.max_steps;
    problem.ode_options.min_timestep = ABSOLUTE_MINIMUM_STEP_S;
    problem.ode_options.nonlinear_solver_tolerance = options
        .newton_tolerance
        .unwrap_or_else(|| default_newton_tolerance(rtol));
    Ok(problem)
}

/// The conserved combinations of a model's state: the kinetics' own for a closed reactor at
/// constant volume (the temperature state, if any, takes no part); none at constant pressure
/// (the volume changes, so concentrations are not conserved), in a stirred tank, or with box
/// conditions that add or remove species or hold them fixed.
fn state_laws(kinetics: &Kinetics, model: &ReactorModel) -> Vec<Vec<f64>> {
    let c = &model.conditions;
    let open = !c.fixed_species.is_empty()
        || !c.emissions.is_empty()
        || !c.deposition.is_empty()
        || model.flow.is_some()
        || model.semi_batch.is_some();
    if open || model.constraint != Constraint::ConstantVolume {
        return Vec::new();
    }
    kinetics.conserved_combinations().to_vec()
}

/// Absolute tolerance of the distance state of a plug flow (m): a nanometre; the relative
/// tolerance times the distance takes over after the first steps. Divided like the others by
/// [`TOLERANCE_SAFETY_FACTOR`] for the solver.
pub(crate) const DISTANCE_ABSOLUTE_TOLERANCE_M: f64 = 1e-9;

/// Requested absolute tolerance of the temperature state (K), divided like the others by
/// [`TOLERANCE_SAFETY_FACTOR`] for the solver; the relative tolerance times the temperature
/// is far larger in practice.
pub(crate) const TEMPERATURE_ABSOLUTE_TOLERANCE_K: f64 = 1e-6;

/// Absolute tolerance of the volume state, relative to the initial volume (dimensionless),
/// divided like the others by [`TOLERANCE_SAFETY_FACTOR`] for the solver; the relative
/// tolerance times the volume is far larger in practice.
pub(crate) const VOLUME_ABSOLUTE_TOLERANCE: f64 = 1e-12;

/// The batch-reactor equations of one compiled mechanism, set up once for repeated use.
///
/// Holds a copy of the kinetics, the rate constants at the current temperature, the
/// tolerances and the step budget. Integrate with it as often as needed, from any initial
/// state ([`integrate`](Self::integrate)), or open a stepping session on it
/// ([`integrator`](Self::integrator)).
///
/// # Cost model
///
/// - [`BatchSystem::new`] allocates: the kinetics copy, the rate-constant arrays, scratch for
///   Jacobian-vector products, the tolerance vector and (sparse path) the Jacobian pattern.
/// - [`integrator`](Self::integrator) and [`integrate`](Self::integrate) allocate one diffsol
///   BDF solver each: its state and difference table, the Newton matrix and LU (on the sparse
///   path also the symbolic analysis of the fixed pattern: ordering, fill pattern and factor
///   storage, shared between solvers of the same pattern), plus
///   a few state-sized scratch vectors. [`integrate`](Self::integrate) also allocates the
///   output rows.
/// - [`set_temperature`](Self::set_temperature) re-evaluates the rate constants in place: no
///   allocation.
///
/// The system is the mechanism's owner for its integrators: the temperature is shared, so
/// [`BatchIntegrator::set_temperature`] changes the system's temperature too, and an
/// integrator borrows the system exclusively while it lives.
pub struct BatchSystem {
    problem: Problem,
    model: ReactorModel,
    linear_algebra_used: LinearAlgebra,
    n_species: usize,
    limits: Limits,
    /// Quantities to locate on the solver's steps in [`integrate`](Self::integrate).
    watches: Vec<Watch>,
}

impl BatchSystem {
    /// Sets up `kinetics` (copied) at `temperature_k` (K) with `options` (tolerances, linear
    /// algebra, step budget per call).
    pub fn new(
        kinetics: &Kinetics,
        temperature_k: f64,
        options: &IntegrationOptions,
    ) -> Result<BatchSystem, ReactorError> {
        Self::with_model(kinetics, &ReactorModel::default(), temperature_k, options)
    }

    /// Sets up `kinetics` (copied) in the reactor `model` with `options`. `temperature_k`
    /// (K) is the held temperature of an isothermal model and the initial temperature of an
    /// adiabatic one (a prescribed model takes its history instead). A model with pressure
    /// held constant always uses dense linear algebra: its Jacobian is full (the expansion
    /// term couples every pair of species).
    pub fn with_model(
        kinetics: &Kinetics,
        model: &ReactorModel,
        temperature_k: f64,
        options: &IntegrationOptions,
    ) -> Result<BatchSystem, ReactorError> {
        validate_options(kinetics, temperature_k, options)?;
        let conditions = &model.conditions;
        conditions.validate(kinetics.n_species(), kinetics.n_steps())?;
        crate::plug::validate(model, kinetics.n_species())?;
        if let Some(flow) = &model.flow {
            if flow.inlet_mol_per_m3().len() != kinetics.n_species() {
                return Err(ReactorError::BadFlow(format!(
                    "the inlet has {} concentrations for {} species",
                    flow.inlet_mol_per_m3().len(),
                    kinetics.n_species()
                )));
            }
        }
        let needs_closed_volume = !conditions.fixed_species.is_empty()
            || !conditions.emissions.is_empty()
            || !conditions.deposition.is_empty();
        if needs_closed_volume
            && (model.constraint != Constraint::ConstantVolume || model.solves_energy())
        {
            return Err(ReactorError::BadBoxConditions(
                "fixed species, emissions and deposition need constant volume without the energy balance".into(),
            ));
        }
        let mut used = options.linear_algebra.resolve(kinetics);
        if model.constraint == Constraint::ConstantPressure || model.is_extended() {
            used = LinearAlgebra::Dense;
        }
        let temperature_k = match &model.energy {
            Energy::Prescribed(history) => history.temperature_at(0.0),
            _ => temperature_k,
        };
        let problem = match used {
            used if used.is_sparse() => {
                Problem::Sparse(Box::new(build_problem::<FaerSparseMat<f64>>(
                    kinetics,
                    model,
                    temperature_k,
                    options,
                )?))
            }
            _ => Problem::Dense(Box::new(build_problem::<NalgebraMat<f64>>(
                kinetics,
                model,
                temperature_k,
                options,
            )?)),
        };
        Ok(BatchSystem {
            problem,
            model: model.clone(),
            linear_algebra_used: if used.is_sparse() {
                used
            } else {
                LinearAlgebra::Dense
            },
            n_species: kinetics.n_species(),
            limits: Limits {
                max_steps: options.max_steps,
                monitor: options.monitor.clone(),
                wall_time_limit_s: options.wall_time_limit_s,
            },
            watches: options.watch.clone(),
        })
    }

    /// Number of species (the length of every state vector).
    pub fn n_species(&self) -> usize {
        self.n_species
    }

    /// The held temperature (K): the last one set on the system or on one of its
    /// integrators (isothermal), or the initial temperature of the next integration
    /// (adiabatic; prescribed: the history's value at t = 0).
    pub fn temperature(&self) -> f64 {
        match &self.problem {
            Problem::Dense(p) => p.eqn.temperature_k(),
            Problem::Sparse(p) => p.eqn.temperature_k(),
        }
    }

    /// Changes the temperature (K) for the integrations that follow; the rate constants are
    /// re-evaluated in place (no allocation).
    pub fn set_temperature(&mut self, temperature_k: f64) -> Result<(), ReactorError> {
        check_temperature(temperature_k)?;
        if matches!(self.model.energy, Energy::Prescribed(_)) {
            return Err(ReactorError::TemperaturePrescribed);
        }
        match &self.problem {
            Problem::Dense(p) => p.eqn.set_temperature(temperature_k),
            Problem::Sparse(p) => p.eqn.set_temperature(temperature_k),
        }
        Ok(())
    }

    /// The linear algebra in use ([`LinearAlgebra::Dense`] or [`LinearAlgebra::Sparse`]).
    pub fn linear_algebra_used(&self) -> LinearAlgebra {
        self.linear_algebra_used
    }

    /// Opens a stepping session starting from `initial_mol_per_m3` (mol/m3, one per species)
    /// at t = 0 s, at the system's current temperature. Allocates the session's solver (see
    /// the cost model of [`BatchSystem`] and [`BatchIntegrator`]).
    pub fn integrator(
        &mut self,
        initial_mol_per_m3: &[f64],
    ) -> Result<BatchIntegrator<'_>, ReactorError> {
        check_state(self.n_species, initial_mol_per_m3, "initial state")?;
        if self.model.plug.is_some() {
            return Err(ReactorError::BadPlugFlow(
                "a plug flow runs whole (integrate_plug_flow), not in a stepping session".into(),
            ));
        }
        self.open(0.0, initial_mol_per_m3)
    }

    /// The reactor model of the system (as given: changes of the flow or the heat exchange
    /// on a live [`BatchIntegrator`] last for that session only).
    pub fn model(&self) -> &ReactorModel {
        &self.model
    }

    /// Attaches `terms`, the user's sources in the species and energy balances with their
    /// Jacobian contributions (see [`UserTerms`] for the equations and units), replacing
    /// any attached before. Every integration and session that follows sees them in every
    /// right-hand side and Jacobian evaluation. Allocates once: the Jacobian pattern is
    /// extended by the terms' declared entries ([`UserTerms::jacobian_entries`]) and the
    /// sparse factorization is analysed afresh for it.
    ///
    /// Errors: a model at constant pressure or a plug flow; declared entries outside the
    /// state (all listed at once). On error the system keeps no user terms.
    pub fn set_user_terms(&mut self, terms: impl UserTerms) -> Result<(), ReactorError> {
        let boxed = || -> Box<dyn crate::user_terms::ErasedTerms> { Box::new(Held(terms)) };
        let result = match &mut self.problem {
            Problem::Dense(p) => p.eqn.set_user_terms(Some(boxed())),
            Problem::Sparse(p) => p.eqn.set_user_terms(Some(boxed())),
        };
        if result.is_err() {
            self.clear_user_terms();
        }
        result
    }

    /// Detaches the user terms (the Jacobian pattern goes back to the model's own).
    pub fn clear_user_terms(&mut self) {
        // Detaching cannot fail.
        let _ = match &mut self.problem {
            Problem::Dense(p) => p.eqn.set_user_terms(None),
            Problem::Sparse(p) => p.eqn.set_user_terms(None),
        };
    }

    /// The attached user terms, if they are of type `T` (to change their parameters
    /// between integrations).
    pub fn user_terms_mut<T: UserTerms>(&mut self) -> Option<std::cell::RefMut<'_, T>> {
        match &self.problem {
            Problem::Dense(p) => p.eqn.user_terms_as::<T>(),
            Problem::Sparse(p) => p.eqn.user_terms_as::<T>(),
        }
    }

    /// Whether user terms are attached.
    pub fn has_user_terms(&self) -> bool {
        match &self.problem {
            Problem::Dense(p) => p.eqn.has_user_terms(),
            Problem::Sparse(p) => p.eqn.has_user_terms(),
        }
    }

    fn open(&mut self, t0: f64, initial: &[f64]) -> Result<BatchIntegrator<'_>, ReactorError> {
        self.prepare(t0, initial);
        self.open_prepared()
    }

    /// Sets the problem's initial state (concentrations, then the temperature when it is
    /// solved) and time (s) for the next session.
    pub(crate) fn prepare(&mut self, t0: f64, initial: &[f64]) {
        let temperature = self.model.solves_energy().then(|| self.temperature());
        let volume = self
            .model
            .semi_batch
            .as_ref()
            .map(|s| s.initial_volume_m3());
        let set = |initial_state: &mut Vec<f64>, problem_t0: &mut f64| {
            let n = initial.len();
            initial_state[..n].copy_from_slice(initial);
            if let Some(t) = temperature {
                initial_state[n] = t;
            }
            if let (Some(v), Some(last)) = (volume, initial_state.last_mut()) {
                *last = v;
            }
            *problem_t0 = t0;
        };
        // A session starts from the model's flow and heat exchange as given.
        match &mut self.problem {
            Problem::Dense(p) => {
                p.eqn.live.reset(&self.model);
                set(&mut p.eqn.initial, &mut p.t0)
            }
            Problem::Sparse(p) => {
                p.eqn.live.reset(&self.model);
                set(&mut p.eqn.initial, &mut p.t0)
            }
        }
    }

    /// Opens a session from the state [`prepare`](Self::prepare) set.
    pub(crate) fn open_prepared(&self) -> Result<BatchIntegrator<'_>, ReactorError> {
        let max_steps = &self.limits;
        let linear_algebra_used = self.linear_algebra_used;
        let session = match &self.problem {
            Problem::Dense(p) => Session::Dense(Box::new(Stepper::open(p, max_steps, |p| {
                p.bdf::<NalgebraLU<f64>>()
            })?)),
            Problem::Sparse(p) => match linear_algebra_used {
                #[cfg(feature = "bench-internals")]
                LinearAlgebra::SparseFaer => {
                    Session::SparseFaer(Box::new(Stepper::open(p, max_steps, |p| {
                        p.bdf::<FaerSparseLU<f64>>()
                    })?))
                }
                _ => Session::Sparse(Box::new(Stepper::open(p, max_steps, |p| {
                    p.bdf::<FixedPatternSolver>()
                })?)),
            },
        };
        let initial = with_stepper!(&session, s => s.state());
        let mut stats = SolverStats::default();
        most_negative(initial, &mut stats.most_negative_concentration_mol_per_m3);
        let n_steps = with_stepper!(&session, s => s.solver.problem().eqn.kinetics.n_steps());
        let mut integrator = BatchIntegrator {
            session,
            linear_algebra_used,
            stats,
            watcher: Watcher::default(),
            extents: None,
            step_scratch: vec![0.0; 2 * n_steps],
            deadline: None,
            keep_history_on_box_changes: false,
        };
        integrator.refresh_stats();
        Ok(integrator)
    }

    /// Integrates from `initial_mol_per_m3` (mol/m3, one per species) at `output_times_s[0]`
    /// (s) at the system's current temperature and returns the concentrations at every time
    /// of `output_times_s` (finite, strictly increasing; the first row is the initial state).
    /// See [`crate::integrate`], which this is without the set-up.
    pub fn integrate(
        &mut self,
        initial_mol_per_m3: &[f64],
        output_times_s: &[f64],
    ) -> Result<Profiles, IntegrationError> {
        check_state(self.n_species, initial_mol_per_m3, "initial state")?;
        if self.model.plug.is_some() {
            return Err(ReactorError::BadPlugFlow(
                "a plug flow reports against distance and residence time: use integrate_plug_flow"
                    .into(),
            )
            .into());
        }
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
        let model = self.model.clone();
        let n = self.n_species;
        let held_k = self.temperature();
        let watches = self.watches.clone();
        let mut integrator = self.open(t0, initial_mol_per_m3)?;
        let mut profiles = Profiles {
            times_s: Vec::with_capacity(output_times_s.len()),
            concentrations_mol_per_m3: Vec::with_capacity(output_times_s.len()),
            temperatures_k: Vec::with_capacity(output_times_s.len()),
            temperature_rates_k_per_s: Vec::new(),
            volumes_m3: Vec::new(),
            stats: SolverStats::default(),
            linear_algebra_used: integrator.linear_algebra_used,
            located: Vec::new(),
        };
        let (times, rows, temperatures, volumes) = (
            &mut profiles.times_s,
            &mut profiles.concentrations_mol_per_m3,
            &mut profiles.temperatures_k,
            &mut profiles.volumes_m3,
        );
        let last = std::cell::Cell::new(t0);
        let mut record = |t: f64, y: &[f64]| {
            last.set(t);
            times.push(t);
            rows.push(y[..n].to_vec());
            temperatures.push(model.temperature(t, y, n, held_k));
            if let Some(v) = model.volume(y, n) {
                volumes.push(v);
            }
        };
        record(t0, integrator.full_state());
        integrator.watch(&watches);
        let result = integrator.run(&output_times_s[1..], &mut record);
        let time_s = integrator.time();
        // A failed run keeps the state it reached (the last accepted step) as its last row,
        // off the output grid, so the profile so far ends where the run stopped.
        if result.is_err() && time_s > last.get() {
            record(time_s, integrator.full_state());
        }
        profiles.located = integrator.watcher.results();
        profiles.stats = integrator.stats;
        drop(integrator);
        profiles.temperature_rates_k_per_s = self.temperature_rates(&profiles);
        match result {
            Ok(()) => Ok(profiles),
            Err(d) => Err(IntegrationFailure {
                time_s,
                reason: d.message,
                kind: d.kind,
                fastest: d.fastest.map(|f| *f),
                nonfinite_steps: d.nonfinite_steps,
                partial: profiles,
                source: d.source,
            }
            .into()),
        }
    }

    /// dT/dt (K/s) at every row of `profiles` from the model's equations.
    fn temperature_rates(&self, profiles: &Profiles) -> Vec<f64> {
        let rows = profiles
            .times_s
            .iter()
            .zip(&profiles.concentrations_mol_per_m3)
            .zip(&profiles.temperatures_k)
            .enumerate();
        let volume = |row: usize| profiles.volumes_m3.get(row).copied();
        match &self.problem {
            Problem::Dense(p) => rows
                .map(|(r, ((&t, c), &temp))| p.eqn.temperature_rate(t, c, temp, volume(r)))
                .collect(),
            Problem::Sparse(p) => rows
                .map(|(r, ((&t, c), &temp))| p.eqn.temperature_rate(t, c, temp, volume(r)))
                .collect(),
        }
    }
}

pub(crate) fn integrate(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    initial: &[f64],
    output_times_s: &[f64],
    options: &IntegrationOptions,
) -> Result<Profiles, IntegrationError> {
    check_state(kinetics.n_species(), initial, "initial state")?;
    let mut system = BatchSystem::with_model(kinetics, model, temperature_k, options)?;
    system.integrate(initial, output_times_s)
}

/// A stepping session on a [`BatchSystem`], for process models that interleave reaction with
/// other processes (operator splitting): advance to a time, read or change the state or the
/// temperature, continue.
///
/// # Cost model
///
/// Opening the session ([`BatchSystem::integrator`]) allocates one diffsol BDF solver; the
/// session keeps that solver for its whole life. After that nothing allocates in steady use:
///
/// - [`advance_to`](Self::advance_to) steps the same solver to a stop time it hits exactly
///   (continuing with its step size, order and history); the Jacobian is filled into the
///   solver's existing matrix and the LU factorizations reuse their storage.
/// - [`set_state`](Self::set_state), [`set_temperature`](Self::set_temperature) and
///   [`reset`](Self::reset) modify the solver in place (the rate constants are re-evaluated
///   into their arrays) and make it restart at first order from the new state with a fresh
///   initial step size and a Jacobian re-evaluated at that state; each costs two
///   right-hand-side evaluations and one Jacobian evaluation, and the next step one LU
///   factorization.
///
/// Exceptions: the session's first step allocates the Newton solver's two work vectors
/// (diffsol creates them lazily), and a solver failure allocates its error (message and
/// one-row partial profile). The sparse path ([`LinearAlgebra::Sparse`]) factorizes on storage
/// sized by its symbolic phase and never allocates afterwards, except the first time a
/// diagonal pivot is rejected (its pivoting fallback is built then). With a prescribed temperature history, each call that spans breakpoints allocates their
/// list. The test `tests/allocations.rs` counts allocations on both paths: zero per round
/// of `advance_to` + `set_state` + `set_temperature` after the first, and zero per round of
/// `advance_to` + the box-condition setters + a change of [`UserTerms`] + `restart` (the
/// user terms' own code must not allocate either).
pub struct BatchIntegrator<'a> {
    session: Session<'a>,
    linear_algebra_used: LinearAlgebra,
    stats: SolverStats,
    /// Quantities located on the solver's steps (empty for a stepping session).
    watcher: Watcher,
    /// Extents of the steps, when tracked ([`BatchIntegrator::track_extents`]).
    extents: Option<Extents>,
    /// Two per-step buffers (rates, enthalpies) for the heat release.
    step_scratch: Vec<f64>,
    /// The wall-clock deadline of the current call, with its limit (s).
    deadline: Option<(Instant, f64)>,
    /// Whether a changed box condition keeps the integration history (else: a restart).
    keep_history_on_box_changes: bool,
}

/// The limits of every call of a system's integrators: the step budget, the wall-clock
/// limit (s) and the monitor.
#[derive(Debug, Clone)]
struct Limits {
    max_steps: usize,
    monitor: Option<RunMonitor>,
    wall_time_limit_s: Option<f64>,
}

impl BatchIntegrator<'_> {
    /// Integrates from the current time to `t_s` (s, not before the current time) and
    /// returns the concentrations there (mol/m3). The solver stops exactly at `t_s`.
    ///
    /// On a solver failure the integrator is left at the last accepted step (see
    /// [`time`](Self::time) and [`state`](Self::state)) and restarts from there on the next
    /// call; the failure's partial profile is that single state.
    pub fn advance_to(&mut self, t_s: f64) -> Result<&[f64], IntegrationError> {
        let now = self.time();
        if !(t_s.is_finite() && t_s >= now) {
            return Err(ReactorError::TimeNotAhead {
                requested_s: t_s,
                current_s: now,
            }
            .into());
        }
        if t_s > now {
            let mut record = |_: f64, _: &[f64]| {};
            if let Err(d) = self.run(&[t_s], &mut record) {
                let time_s = self.time();
                return Err(IntegrationFailure {
                    time_s,
                    reason: d.message,
                    kind: d.kind,
                    fastest: d.fastest.map(|f| *f),
                    nonfinite_steps: d.nonfinite_steps,
                    source: d.source,
                    partial: Profiles {
                        times_s: vec![time_s],
                        concentrations_mol_per_m3: vec![self.state().to_vec()],
                        temperatures_k: vec![self.temperature()],
                        temperature_rates_k_per_s: Vec::new(),
                        volumes_m3: Vec::new(),
                        stats: self.stats,
                        linear_algebra_used: self.linear_algebra_used,
                        located: Vec::new(),
                    },
                }
                .into());
            }
        }
        Ok(self.state())
    }

    /// Starts locating `watches` on the solver's steps from the current state.
    fn watch(&mut self, watches: &[Watch]) {
        self.watcher = Watcher::new(watches);
        let t = self.time();
        let session = &mut self.session;
        self.watcher.start(
            t,
            &mut |q| with_stepper!(&mut *session, s => s.quantity_now(q)),
        );
    }

    /// Steps through `outputs` (strictly after the current time, increasing), recording each;
    /// updates the statistics also on failure.
    ///
    /// A prescribed temperature history's and the feed schedules' breakpoints inside the
    /// interval become stop times (a slope jumps there): the solver stops exactly on each
    /// and restarts.
    fn run(
        &mut self,
        outputs: &[f64],
        record: &mut dyn FnMut(f64, &[f64]),
    ) -> Result<(), Diagnosis> {
        let now = self.time();
        self.deadline = with_stepper!(&self.session, s => deadline(s.wall_time_limit_s));
        let breakpoints: Vec<f64> = match outputs.last() {
            Some(&end) => self.session_model().breakpoints_between(now, end),
            None => Vec::new(),
        };
        let mut result = Ok(());
        let mut from = 0;
        for b in breakpoints {
            let upto = from + outputs[from..].partition_point(|&t| t <= b);
            let mut segment = outputs[from..upto].to_vec();
            let stop_only = segment.last() != Some(&b);
            if stop_only {
                segment.push(b);
            }
            let mut filtered = |t: f64, y: &[f64]| {
                if !(stop_only && t == b) {
                    record(t, y);
                }
            };
            result = self.run_segment(&segment, &mut filtered);
            if result.is_err() {
                break;
            }
            with_stepper!(&mut self.session, s => s.restart(None, None));
            // The interpolant starts afresh at the breakpoint.
            self.watcher.restarted();
            from = upto;
        }
        if result.is_ok() && from < outputs.len() {
            result = self.run_segment(&outputs[from..], record);
        }
        self.refresh_stats();
        result
    }

    /// The model of the session's system.
    fn session_model(&self) -> &ReactorModel {
        with_stepper!(&self.session, s => &s.solver.problem().eqn.model)
    }

    /// Steps through `outputs` without breakpoints (see [`Self::run`]).
    fn run_segment(
        &mut self,
        outputs: &[f64],
        record: &mut dyn FnMut(f64, &[f64]),
    ) -> Result<(), Diagnosis> {
        let negative = &mut self.stats.most_negative_concentration_mol_per_m3;
        let rejections = &mut self.stats.negative_step_rejections;
        let projections = &mut self.stats.invariant_projections;
        let watcher = (!self.watcher.is_empty()).then_some(&mut self.watcher);
        let extents = self.extents.as_mut();
        let deadline = self.deadline;
        let result = with_stepper!(&mut self.session, s => s.advance(outputs, watcher, extents, projections, record, negative, rejections, deadline));
        let reason = result.map_err(|e| match e {
            Halt::Solver(_) => {
                let fastest = with_stepper!(&mut self.session, s => s.fastest_component());
                let nonfinite = with_stepper!(&mut self.session, s => s.nonfinite_steps());
                Diagnosis::of_halt(&e, fastest, nonfinite)
            }
            _ => Diagnosis::of_halt(&e, None, Vec::new()),
        });
        most_negative(
            with_stepper!(&self.session, s => s.state()),
            &mut self.stats.most_negative_concentration_mol_per_m3,
        );
        self.refresh_stats();
        reason
    }

    fn refresh_stats(&mut self) {
        with_stepper!(&self.session, s => s.fill_stats(&mut self.stats));
    }

    /// Current concentrations (mol/m3).
    pub fn state(&self) -> &[f64] {
        with_stepper!(&self.session, s => s.concentrations())
    }

    /// The full solver state: the concentrations (mol/m3), then the temperature (K) when
    /// the energy balance is solved.
    pub fn full_state(&self) -> &[f64] {
        with_stepper!(&self.session, s => s.state())
    }

    /// Current time (s).
    pub fn time(&self) -> f64 {
        with_stepper!(&self.session, s => s.time())
    }

    /// Current temperature (K).
    pub fn temperature(&self) -> f64 {
        with_stepper!(&self.session, s => s.temperature())
    }

    /// Replaces the concentrations (mol/m3) at the current time, e.g. after adding a feed
    /// (no allocation). Concentrations equal to the current ones, bit for bit, change
    /// nothing and cost nothing; otherwise the solver restarts from them at first order (a
    /// jump in the state invalidates the difference table, which encodes the trajectory
    /// before the jump).
    pub fn set_state(&mut self, c_mol_per_m3: &[f64]) -> Result<(), ReactorError> {
        check_state(self.state().len(), c_mol_per_m3, "new state")?;
        if self.state() == c_mol_per_m3 {
            return Ok(());
        }
        with_stepper!(&mut self.session, s => s.restart(None, Some(c_mol_per_m3)));
        self.after_change(c_mol_per_m3);
        Ok(())
    }

    /// Changes the reactor temperature (K) from the current time on (also for the
    /// [`BatchSystem`]); no allocation.
    ///
    /// - The temperature already held, bit for bit: nothing changes and nothing is
    ///   recomputed (a call per operator-splitting stop at a held temperature is free).
    /// - Otherwise the solver restarts from the current state at first order with a fresh
    ///   starting step, and the Jacobian is re-evaluated: isothermal models at the new rate
    ///   constants, adiabatic models from the new temperature state. This keeps the
    ///   requested tolerances however often the temperature changes;
    ///   [`set_temperature_keep_step`](Self::set_temperature_keep_step) is the cheaper
    ///   choice for frequent small changes (docs/embedding.md compares them).
    /// - Prescribed models: an error ([`ReactorError::TemperaturePrescribed`]).
    pub fn set_temperature(&mut self, temperature_k: f64) -> Result<(), ReactorError> {
        self.change_temperature(temperature_k, false)
    }

    /// As [`set_temperature`](Self::set_temperature), but the first step after a change is
    /// the current step size instead of a fresh starting step (the error test shrinks it
    /// when the new rate constants call for it). On 1,800 operator-splitting stops with a
    /// temperature that changes at each, this took 2.8 times fewer steps than
    /// [`set_temperature`](Self::set_temperature); every step after a change then works
    /// near the tolerance, so the global error grows with the number of changes (there:
    /// 7e-5 relative at rtol 1e-8, against 4e-7; docs/embedding.md). No allocation.
    pub fn set_temperature_keep_step(&mut self, temperature_k: f64) -> Result<(), ReactorError> {
        self.change_temperature(temperature_k, true)
    }

    fn change_temperature(
        &mut self,
        temperature_k: f64,
        keep_step: bool,
    ) -> Result<(), ReactorError> {
        check_temperature(temperature_k)?;
        if matches!(self.session_model().energy, Energy::Prescribed(_)) {
            return Err(ReactorError::TemperaturePrescribed);
        }
        if with_stepper!(&mut self.session, s => s.set_temperature(temperature_k, keep_step)) {
            self.refresh_stats();
        }
        Ok(())
    }

    /// Restarts the solver at the current time and state: first order, a fresh starting
    /// step, the Jacobian re-evaluated (no allocation). For changes the solver cannot see,
    /// e.g. made through shared state of user code between advances, and after a change of
    /// the box conditions ([`set_residence_time_s`](Self::set_residence_time_s) and the
    /// other setters) when [`keep_history_on_box_changes`](Self::keep_history_on_box_changes)
    /// is on and a fresh start is wanted after all.
    pub fn restart(&mut self) {
        with_stepper!(&mut self.session, s => s.restart(None, None));
        self.refresh_stats();
    }

    /// Starts over from `c_mol_per_m3` (mol/m3) at `time_s` (s, any finite time, also
    /// earlier than the current one), keeping the solver, its buffers and the statistics
    /// counts (no allocation). A semi-batch's volume starts over at its initial value. Use it to run the same system many times without opening a
    /// new session.
    pub fn reset(&mut self, time_s: f64, c_mol_per_m3: &[f64]) -> Result<(), ReactorError> {
        check_state(self.state().len(), c_mol_per_m3, "new state")?;
        if !time_s.is_finite() {
            return Err(ReactorError::TimeNotAhead {
                requested_s: time_s,
                current_s: self.time(),
            });
        }
        with_stepper!(&mut self.session, s => s.restart(Some(time_s), Some(c_mol_per_m3)));
        self.after_change(c_mol_per_m3);
        Ok(())
    }

    /// Changes the residence time `V / q` (s, finite and positive) of a stirred tank from
    /// the current time on; no allocation.
    ///
    /// The box-condition setters (this one,
    /// [`set_inlet_mol_per_m3`](Self::set_inlet_mol_per_m3),
    /// [`set_inlet_temperature_k`](Self::set_inlet_temperature_k),
    /// [`set_coolant_temperature_k`](Self::set_coolant_temperature_k),
    /// [`set_ua_per_volume_w_per_m3_k`](Self::set_ua_per_volume_w_per_m3_k),
    /// [`set_ua_total_w_per_k`](Self::set_ua_total_w_per_k)) share one behaviour:
    ///
    /// - the value already in force, bit for bit: nothing changes and nothing is computed
    ///   (the solver's statistics are those of a run without the call);
    /// - otherwise the equations change from the current time on and the solver restarts
    ///   from the current state as [`restart`](Self::restart) does (first order, a fresh
    ///   starting step, the Jacobian re-evaluated for the new equations), as
    ///   [`set_temperature`](Self::set_temperature) does for a changed temperature. With
    ///   [`keep_history_on_box_changes(true)`](Self::keep_history_on_box_changes) the solver
    ///   keeps its integration history instead (step size, order, difference table; the state
    ///   is continuous) and its error test adapts on the next steps: measured slower and less
    ///   accurate for a step change (docs/embedding.md, "Changing the box conditions");
    /// - the change lasts for this session: the [`BatchSystem`]'s model keeps the values it
    ///   was given, and the next session starts from them;
    /// - an error, changing nothing, for a value out of range or a model without a stirred
    ///   tank flow ([`ReactorError::BadFlow`]) or heat exchange
    ///   ([`ReactorError::BadHeatExchange`]).
    pub fn set_residence_time_s(&mut self, residence_time_s: f64) -> Result<(), ReactorError> {
        self.change_flow(|flow| {
            if flow.residence_time_s() == residence_time_s {
                return Ok(false);
            }
            flow.set_residence_time_s(residence_time_s).map(|()| true)
        })
    }

    /// Changes the inlet concentrations (mol/m3, one per species, finite and not negative)
    /// of a stirred tank from the current time on; no allocation. See
    /// [`set_residence_time_s`](Self::set_residence_time_s) for the cost and the history.
    pub fn set_inlet_mol_per_m3(&mut self, inlet_mol_per_m3: &[f64]) -> Result<(), ReactorError> {
        self.change_flow(|flow| {
            if flow.inlet_mol_per_m3() == inlet_mol_per_m3 {
                return Ok(false);
            }
            flow.set_inlet_mol_per_m3(inlet_mol_per_m3).map(|()| true)
        })
    }

    /// Changes the inlet temperature (K, finite and positive) of a stirred tank from the
    /// current time on; no allocation. It enters the energy balance of an energy-solving
    /// model only: elsewhere a change is recorded and costs nothing. See
    /// [`set_residence_time_s`](Self::set_residence_time_s).
    pub fn set_inlet_temperature_k(
        &mut self,
        inlet_temperature_k: f64,
    ) -> Result<(), ReactorError> {
        // Without the energy balance the inlet temperature enters no equation: no restart.
        let matters = self.session_model().solves_energy();
        self.change_flow(|flow| {
            if flow.inlet_temperature_k() == inlet_temperature_k {
                return Ok(false);
            }
            flow.set_inlet_temperature_k(inlet_temperature_k)
                .map(|()| matters)
        })
    }

    /// Holds the coolant of a jacketed vessel at `temperature_k` (K, finite and positive)
    /// from the current time on, replacing its history; no allocation when the coolant is
    /// already held at one temperature. See
    /// [`set_residence_time_s`](Self::set_residence_time_s).
    pub fn set_coolant_temperature_k(&mut self, temperature_k: f64) -> Result<(), ReactorError> {
        self.change_exchange(|x| {
            let c = x.coolant();
            if c.times_s().len() == 1 && c.temperatures_k()[0] == temperature_k {
                return Ok(false);
            }
            x.set_coolant_temperature_k(temperature_k).map(|()| true)
        })
    }

    /// Changes U A / V (W/(m3 K), finite, not negative) of a heat exchange given per volume,
    /// from the current time on; no allocation. See
    /// [`set_residence_time_s`](Self::set_residence_time_s).
    pub fn set_ua_per_volume_w_per_m3_k(&mut self, ua_per_volume: f64) -> Result<(), ReactorError> {
        self.change_exchange(|x| {
            if x.ua_total_w_per_k().is_none() && x.ua_per_volume_w_per_m3_k() == ua_per_volume {
                return Ok(false);
            }
            x.set_ua_per_volume_w_per_m3_k(ua_per_volume).map(|()| true)
        })
    }

    /// Changes U A (W/K, finite, not negative) of a heat exchange given as a total, from the
    /// current time on; no allocation. See
    /// [`set_residence_time_s`](Self::set_residence_time_s).
    pub fn set_ua_total_w_per_k(&mut self, ua_w_per_k: f64) -> Result<(), ReactorError> {
        self.change_exchange(|x| {
            if x.ua_total_w_per_k() == Some(ua_w_per_k) {
                return Ok(false);
            }
            x.set_ua_total_w_per_k(ua_w_per_k).map(|()| true)
        })
    }

    /// The stirred-tank flow in force (with the changes made in this session), `None` for a
    /// closed reactor. Allocates (a copy).
    pub fn stirred_flow(&self) -> Option<StirredFlow> {
        with_stepper!(&self.session, s => s.solver.problem().eqn.live.flow.as_ref().map(|f| f.borrow().clone()))
    }

    /// The heat exchange in force (with the changes made in this session), `None` without
    /// one. Allocates (a copy).
    pub fn heat_exchange(&self) -> Option<HeatExchange> {
        with_stepper!(&self.session, s => s.solver.problem().eqn.live.exchange.as_ref().map(|x| x.borrow().clone()))
    }

    /// The attached user terms, if they are of type `T`: changing their parameters changes
    /// the equations from the current time on, which the solver cannot see: call
    /// [`restart`](Self::restart) after a change that puts a jump into the right-hand side
    /// (the box-condition setters do it themselves; docs/embedding.md measures why). No
    /// allocation.
    pub fn user_terms_mut<T: UserTerms>(&mut self) -> Option<std::cell::RefMut<'_, T>> {
        with_stepper!(&self.session, s => s.solver.problem().eqn.user_terms_as::<T>())
    }

    /// Chooses what a changed box condition does to the solver from now on in this session:
    /// `false` (the default) restarts it from the current state at first order with a fresh
    /// starting step; `true` keeps its integration history (docs/embedding.md compares the
    /// two). Same-value calls cost nothing either way.
    pub fn keep_history_on_box_changes(&mut self, keep: bool) {
        self.keep_history_on_box_changes = keep;
    }

    /// After a box condition changed: the restart unless the history is kept.
    fn after_box_change(&mut self, changed: bool) {
        if changed && !self.keep_history_on_box_changes {
            self.restart();
        }
    }

    /// Applies `change` to the live stirred-tank flow (it returns whether anything changed).
    fn change_flow(
        &mut self,
        change: impl FnOnce(&mut StirredFlow) -> Result<bool, ReactorError>,
    ) -> Result<(), ReactorError> {
        let changed = with_stepper!(&self.session, s => {
            let Some(flow) = &s.solver.problem().eqn.live.flow else {
                return Err(ReactorError::BadFlow(
                    "the reactor has no stirred-tank flow to change".into(),
                ));
            };
            let mut flow = flow.borrow_mut();
            change(&mut flow)
        })?;
        self.after_box_change(changed);
        Ok(())
    }

    /// Applies `change` to the live heat exchange (it returns whether anything changed).
    fn change_exchange(
        &mut self,
        change: impl FnOnce(&mut HeatExchange) -> Result<bool, ReactorError>,
    ) -> Result<(), ReactorError> {
        let changed = with_stepper!(&self.session, s => {
            let Some(x) = &s.solver.problem().eqn.live.exchange else {
                return Err(ReactorError::BadHeatExchange(
                    "the reactor has no heat exchange to change".into(),
                ));
            };
            let mut x = x.borrow_mut();
            change(&mut x)
        })?;
        self.after_box_change(changed);
        Ok(())
    }

    fn after_change(&mut self, c: &[f64]) {
        most_negative(c, &mut self.stats.most_negative_concentration_mol_per_m3);
        self.refresh_stats();
    }

    /// The number of steps of the mechanism.
    fn n_steps(&self) -> usize {
        with_stepper!(&self.session, s => s.solver.problem().eqn.kinetics.n_steps())
    }

    /// Writes every step's net rate of progress q_j (mol/(m3 s)) at the current time and
    /// state into `out` (length: the number of steps), with the rate constants the solver
    /// uses there (temperature, pressure factors, photolysis). No allocation.
    pub fn step_rates(&self, out: &mut [f64]) -> Result<(), ReactorError> {
        self.check_step_buffer(out)?;
        with_stepper!(&self.session, s => s.step_rates(out));
        Ok(())
    }

    /// Writes dq_j/dT (mol/(m3 s K)), each step's rate temperature derivative at fixed
    /// concentrations, at the current state into `out` (length: the number of steps). With
    /// [`for_each_rate_derivative`](Self::for_each_rate_derivative) these are the pieces of
    /// the Jacobian of a heat balance written as `sum_j (-dH_j) q_j`. No allocation.
    pub fn step_rate_temperature_slopes(&self, out: &mut [f64]) -> Result<(), ReactorError> {
        self.check_step_buffer(out)?;
        with_stepper!(&self.session, s => s.step_rate_slopes(out));
        Ok(())
    }

    /// Calls `sink(step, species, dq_dc)` for every nonzero partial derivative of a step's
    /// rate of progress with respect to a concentration at the current state (units
    /// (mol/(m3 s))/(mol/m3); third bodies and falloff factors included). No allocation.
    pub fn for_each_rate_derivative(&self, mut sink: impl FnMut(usize, usize, f64)) {
        with_stepper!(&self.session, s => s.for_each_rate_derivative(&mut sink));
    }

    /// Writes each step's standard reaction enthalpy dH_j (J/mol) at the current temperature
    /// into `out` (length: the number of steps): the given constants of a [`LiquidPhase`](crate::LiquidPhase),
    /// else from the species' thermochemistry, an error when a species of the mechanism has
    /// none. No allocation.
    pub fn step_enthalpies(&self, out: &mut [f64]) -> Result<(), ReactorError> {
        self.check_step_buffer(out)?;
        if let Some(liquid) = &self.session_model().liquid {
            out.copy_from_slice(liquid.step_enthalpies_j_per_mol());
            return Ok(());
        }
        let kinetics = with_stepper!(&self.session, s => &s.solver.problem().eqn.kinetics);
        if let Some(species) = kinetics.species_thermo().iter().position(Option::is_none) {
            return Err(ReactorError::MissingThermo { species });
        }
        kinetics.reaction_enthalpies(self.temperature(), out);
        Ok(())
    }

    /// The heat released by the steps per unit volume, `sum_j (-dH_j) q_j` (W/m3), at the
    /// current time and state (positive when exothermic steps dominate); an error when a
    /// species has no thermochemistry. No allocation.
    pub fn heat_release_rate_w_per_m3(&mut self) -> Result<f64, ReactorError> {
        let mut buffer = std::mem::take(&mut self.step_scratch);
        let n = buffer.len() / 2;
        let (q, dh) = buffer.split_at_mut(n);
        let result = self
            .step_rates(q)
            .and_then(|()| self.step_enthalpies(dh))
            .map(|()| -q.iter().zip(dh.iter()).map(|(q, h)| q * h).sum::<f64>());
        self.step_scratch = buffer;
        result
    }

    /// Starts (or restarts at zero) integrating every step's rate of progress on the
    /// solver's accepted steps: the extents xi_j = integral of q_j dt (mol/m3) over the
    /// advances that follow, read with [`take_extents`](Self::take_extents). Three-point
    /// Gauss-Legendre on the solver's interpolant per step, so the extents are accurate to
    /// the integration tolerance whatever the advance length; costs three rate evaluations
    /// per step. Allocates the running sums once.
    pub fn track_extents(&mut self) {
        let n = self.n_steps();
        match &mut self.extents {
            Some(x) => x.sums.iter_mut().for_each(|s| *s = 0.0),
            None => self.extents = Some(Extents::new(n)),
        }
    }

    /// Writes the extents (mol/m3) accumulated since [`track_extents`](Self::track_extents)
    /// or the previous take into `out` (length: the number of steps) and starts the next
    /// period at zero; an error when extents are not tracked. Over an advance,
    /// `c_i(end) - c_i(start) = sum_j nu_ij xi_j` for a closed constant-volume reactor. No
    /// allocation.
    pub fn take_extents(&mut self, out: &mut [f64]) -> Result<(), ReactorError> {
        self.check_step_buffer(out)?;
        let Some(x) = &mut self.extents else {
            return Err(ReactorError::ExtentsNotTracked);
        };
        out.copy_from_slice(&x.sums);
        x.sums.iter_mut().for_each(|s| *s = 0.0);
        Ok(())
    }

    fn check_step_buffer(&self, out: &[f64]) -> Result<(), ReactorError> {
        if out.len() == self.n_steps() {
            Ok(())
        } else {
            Err(ReactorError::WrongStepCount {
                what: "per-step buffer",
                expected: self.n_steps(),
                found: out.len(),
            })
        }
    }

    /// Solver statistics accumulated since the session was opened.
    pub fn stats(&self) -> &SolverStats {
        &self.stats
    }

    /// The linear algebra in use ([`LinearAlgebra::Dense`] or [`LinearAlgebra::Sparse`]).
    pub fn linear_algebra_used(&self) -> LinearAlgebra {
        self.linear_algebra_used
    }
}
