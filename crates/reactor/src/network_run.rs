//! Integrating a [`TankNetwork`] in time: its equations as diffsol operators and the step
//! loop (one BDF solver over the whole network's state, dense or fixed-pattern sparse LU).

use diffsol::{
    ConstantOp, FaerSparseMat, NalgebraLU, NalgebraMat, NonLinearOp, NonLinearOpJacobian,
    OdeBuilder, OdeEquations, OdeEquationsRef, OdeSolverConfig, OdeSolverMethod,
    OdeSolverStopReason, Op, ParameterisedOp, UnitCallable, Vector,
};

use crate::equations::{Backend, JacobianTarget};
use crate::failure::{Diagnosis, Halt};
use crate::fixed_lu::FixedPatternSolver;
use crate::integrator::{
    deadline, default_newton_tolerance, meaningfully_negative, minimum_step, validate_options,
    Control, ABSOLUTE_MINIMUM_STEP_S, MAX_NEGATIVE_REJECTIONS, NEGATIVE_STEP_SHRINK,
    TEMPERATURE_ABSOLUTE_TOLERANCE_K,
};
use crate::network::{NetworkError, NetworkProfiles, NetworkSystem, TankNetwork, TankProfile};
use crate::{
    IntegrationOptions, LinearAlgebra, ReactorError, SolverError, SolverStats,
    TOLERANCE_SAFETY_FACTOR,
};
use stoik_kinetics::Kinetics;

/// The network's equations for diffsol on backend `M`.
pub(crate) struct NetworkEquations<M: Backend> {
    pub(crate) system: NetworkSystem,
    initial: Vec<f64>,
    /// Values in state-pattern order (dense backend and Jacobian-vector products).
    values: std::cell::RefCell<Vec<f64>>,
    non_negative: bool,
    sparsity: Option<M::Sparsity>,
    ctx: M::C,
}

impl<M: Backend> NetworkEquations<M> {
    fn new(system: NetworkSystem, initial: Vec<f64>, non_negative: bool) -> Self {
        let sparsity = M::pattern_sparsity(&system.pattern);
        NetworkEquations {
            values: std::cell::RefCell::new(vec![0.0; system.pattern.nnz()]),
            system,
            initial,
            non_negative,
            sparsity,
            ctx: M::C::default(),
        }
    }

    fn n_states(&self) -> usize {
        self.system.n_states()
    }

    /// Writes the Jacobian into `jac`; `false` for a matrix of unexpected shape.
    fn fill_jacobian(&self, t_s: f64, y: &[f64], jac: &mut M) -> bool {
        let pattern = &self.system.pattern;
        let Some(target) = M::target(jac, pattern) else {
            return false;
        };
        match target {
            JacobianTarget::Sparse(values) => self.system.jacobian_values(t_s, y, values),
            JacobianTarget::Dense(data) => {
                let mut values = self.values.borrow_mut();
                self.system.jacobian_values(t_s, y, &mut values);
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
        true
    }
}

/// The right-hand side operator.
pub(crate) struct NetworkRhs<'a, M: Backend> {
    eqn: &'a NetworkEquations<M>,
}

/// The initial-condition operator.
pub(crate) struct NetworkInit<'a, M: Backend> {
    eqn: &'a NetworkEquations<M>,
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

impl_op!(NetworkRhs);
impl_op!(NetworkInit);

impl<M: Backend> NonLinearOp for NetworkRhs<'_, M> {
    fn call_inplace(&self, x: &M::V, t: f64, y: &mut M::V) {
        self.eqn
            .system
            .state_derivative(t, M::slice(x), M::slice_mut(y));
    }
}

impl<M: Backend> NonLinearOpJacobian for NetworkRhs<'_, M> {
    fn jac_mul_inplace(&self, x: &M::V, t: f64, v: &M::V, y: &mut M::V) {
        let eqn = self.eqn;
        let pattern = &eqn.system.pattern;
        let mut values = eqn.values.borrow_mut();
        eqn.system.jacobian_values(t, M::slice(x), &mut values);
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
        if !self.eqn.fill_jacobian(t, M::slice(x), y) {
            self._default_jacobian_inplace(x, t, y);
        }
    }

    fn jacobian_sparsity(&self) -> Option<M::Sparsity> {
        self.eqn.sparsity.clone()
    }
}

impl<M: Backend> ConstantOp for NetworkInit<'_, M> {
    fn call_inplace(&self, _t: f64, y: &mut M::V) {
        for (dst, &src) in M::slice_mut(y).iter_mut().zip(&self.eqn.initial) {
            *dst = src;
        }
    }
}

impl<M: Backend> Op for NetworkEquations<M> {
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

impl<'a, M: Backend> OdeEquationsRef<'a> for NetworkEquations<M> {
    type Mass = ParameterisedOp<'a, UnitCallable<M>>;
    type Rhs = NetworkRhs<'a, M>;
    type Root = ParameterisedOp<'a, UnitCallable<M>>;
    type Init = NetworkInit<'a, M>;
    type Out = ParameterisedOp<'a, UnitCallable<M>>;
    type Reset = ParameterisedOp<'a, UnitCallable<M>>;
}

impl<M: Backend> OdeEquations for NetworkEquations<M> {
    fn rhs(&self) -> NetworkRhs<'_, M> {
        NetworkRhs { eqn: self }
    }
    fn mass(&self) -> Option<<Self as OdeEquationsRef<'_>>::Mass> {
        None
    }
    fn init(&self) -> NetworkInit<'_, M> {
        NetworkInit { eqn: self }
    }
    fn set_params(&mut self, _p: &Self::V) {}
    fn get_params(&self, _p: &mut Self::V) {}
}

/// Builds the problem of `$eqn` on backend `$M`, opens a BDF solver on the linear solver
/// `$LS` and steps it to the end (a macro: diffsol's solver bounds are only met by the
/// concrete backends).
macro_rules! run {
    ($M:ty, $LS:ty, $eqn:expr, $atol:expr, $t0:expr, $outputs:expr, $options:expr) => {{
        let (outputs, options, t0): (&[f64], &IntegrationOptions, f64) = ($outputs, $options, $t0);
        // The solver's tolerances: the requested ones over TOLERANCE_SAFETY_FACTOR, as in a
        // single reactor.
        let rtol = options.relative_tolerance / TOLERANCE_SAFETY_FACTOR;
        let mut problem = OdeBuilder::<$M>::new()
            .rtol(rtol)
            .atol($atol)
            .build_from_eqn($eqn)
            .map_err(|e| ReactorError::Setup(SolverError::new(e)))?;
        problem.t0 = t0;
        problem.ode_options.max_number_timesteps = options.max_steps;
        problem.ode_options.min_timestep = ABSOLUTE_MINIMUM_STEP_S;
        problem.ode_options.nonlinear_solver_tolerance = options
            .newton_tolerance
            .unwrap_or_else(|| default_newton_tolerance(rtol));
        let mut solver = problem
            .bdf::<$LS>()
            .map_err(|e| ReactorError::Setup(SolverError::new(e)))?;
        finish::<$M, _>(&mut solver, t0, outputs, options)
    }};
}

/// Integrates the network `network` of `kinetics` from its tanks' initial states at
/// `output_times_s[0]` (s) and returns every tank's concentrations and temperature at every
/// time of `output_times_s` (finite, strictly increasing; the first row is the initial
/// state). One BDF solver runs over the network's whole state with the analytic Jacobian on
/// its block pattern (see [`crate::TankNetwork`]); `options` give the tolerances (the
/// absolute tolerance of each species applies in every tank; temperatures get 1e-6 K), the
/// linear algebra ([`LinearAlgebra::Auto`] picks dense up to
/// [`DENSE_MAX_SPECIES`](crate::DENSE_MAX_SPECIES) states), the step budget, non-negativity,
/// the monitor and the wall-time limit; watches and invariant projection do not apply.
///
/// Errors: [`NetworkError::Reactor`] for bad options or output times,
/// [`NetworkError::Invalid`] for a species without thermochemistry when a tank solves its
/// energy balance, [`NetworkError::Failed`] with the rows reached when the solver stops
/// early.
pub fn simulate_network(
    kinetics: &Kinetics,
    network: &TankNetwork,
    output_times_s: &[f64],
    options: &IntegrationOptions,
) -> Result<NetworkProfiles, NetworkError> {
    validate_options(kinetics, 300.0, options)?;
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
    let system = NetworkSystem::new(kinetics, network)?;
    let pattern = &system.pattern;
    let choice = TankNetwork::resolve(options.linear_algebra, pattern.n(), pattern.fill_fraction());
    let initial = network.initial_state();
    let mut atol = Vec::with_capacity(network.n_states());
    for tank in network.tanks() {
        atol.extend_from_slice(&options.absolute_tolerances_mol_per_m3);
        if tank.solves_energy() {
            atol.push(TEMPERATURE_ABSOLUTE_TOLERANCE_K);
        }
    }
    atol.iter_mut().for_each(|a| *a /= TOLERANCE_SAFETY_FACTOR);
    if choice.is_sparse() {
        let eqn =
            NetworkEquations::<FaerSparseMat<f64>>::new(system, initial, options.non_negative);
        let result: Result<NetworkProfiles, NetworkError> = run!(
            FaerSparseMat<f64>,
            FixedPatternSolver,
            eqn,
            atol,
            t0,
            output_times_s,
            options
        );
        result.map(|mut p| {
            p.linear_algebra_used = LinearAlgebra::Sparse;
            p
        })
    } else {
        let eqn = NetworkEquations::<NalgebraMat<f64>>::new(system, initial, options.non_negative);
        let result: Result<NetworkProfiles, NetworkError> = run!(
            NalgebraMat<f64>,
            NalgebraLU<f64>,
            eqn,
            atol,
            t0,
            output_times_s,
            options
        );
        result.map(|mut p| {
            p.linear_algebra_used = LinearAlgebra::Dense;
            p
        })
    }
}

/// Steps an opened solver to the end and gathers the profiles and statistics.
fn finish<'a, M, S>(
    solver: &mut S,
    t0: f64,
    outputs: &[f64],
    options: &IntegrationOptions,
) -> Result<NetworkProfiles, NetworkError>
where
    M: Backend + 'a,
    S: OdeSolverMethod<'a, NetworkEquations<M>>,
{
    let problem = solver.problem();
    let net = &problem.eqn.system.net;
    let mut profiles = NetworkProfiles {
        times_s: Vec::with_capacity(outputs.len()),
        tanks: net
            .tanks()
            .iter()
            .map(|t| TankProfile {
                name: t.name.clone(),
                concentrations_mol_per_m3: Vec::with_capacity(outputs.len()),
                temperatures_k: Vec::with_capacity(outputs.len()),
            })
            .collect(),
        ..Default::default()
    };
    let record = |p: &mut NetworkProfiles, t: f64, y: &[f64]| {
        p.times_s.push(t);
        for (j, tank) in p.tanks.iter_mut().enumerate() {
            tank.concentrations_mol_per_m3
                .push(net.concentrations_in(j, y).to_vec());
            tank.temperatures_k.push(net.temperature_in(j, y));
        }
    };
    let mut negative = 0.0f64;
    record(&mut profiles, t0, &problem.eqn.initial);
    let mut buffer = M::V::zeros(net.n_states(), problem.eqn.context().clone());
    let control = Control {
        monitor: options.monitor.as_ref(),
        deadline: deadline(options.wall_time_limit_s),
    };
    let mut rejections = 0;
    // The jackets' history points (coolant temperature, U A): the solver stops at each, so
    // no step straddles a kink of the equations.
    let t_last = outputs.last().copied().unwrap_or(t0);
    let mut breaks: Vec<f64> = net
        .tanks()
        .iter()
        .filter_map(|t| match &t.energy {
            crate::Energy::HeatExchange(x) => Some(x),
            _ => None,
        })
        .flat_map(|x| {
            let ua = x.ua_history().map_or(&[][..], |(times, _)| times);
            x.coolant().times_s().iter().chain(ua).copied()
        })
        .filter(|&t| t > t0 && t < t_last)
        .collect();
    breaks.sort_by(f64::total_cmp);
    breaks.dedup();
    let result = drive(
        solver,
        &outputs[1..],
        &breaks,
        &mut buffer,
        &mut |t, y| {
            // Temperatures are positive: the minimum over the state is that of the
            // concentrations whenever one is negative.
            for v in y {
                negative = negative.min(*v);
            }
            record(&mut profiles, t, y)
        },
        &mut rejections,
        control,
    );
    let s = solver.get_statistics();
    let eqn = &problem.eqn;
    profiles.stats = SolverStats {
        steps: s.number_of_steps,
        rhs_evaluations: eqn.system.rhs_evaluations.get(),
        jacobian_evaluations: eqn.system.jacobian_evaluations.get(),
        factorizations: s.number_of_linear_solver_setups,
        error_test_failures: s.number_of_error_test_failures,
        nonlinear_failures: s.number_of_nonlinear_solver_fails,
        negative_step_rejections: rejections,
        most_negative_concentration_mol_per_m3: negative,
        invariant_projections: 0,
    };
    match result {
        Ok(()) => Ok(profiles),
        Err(halt) => {
            let time_s = solver.state().t;
            let diagnosis = Diagnosis::of_halt(&halt, None, Vec::new());
            if profiles.times_s.last().is_some_and(|&t| time_s > t) {
                let y = M::slice(solver.state().y).to_vec();
                record(&mut profiles, time_s, &y);
            }
            Err(NetworkError::Failed {
                time_s,
                reason: diagnosis.message,
                partial: Box::new(profiles),
            })
        }
    }
}

/// Steps `solver` to the last output (hit exactly), handing each output time and state to
/// `record` (interpolated inside steps). Non-negativity as in the batch step loop: a step
/// going below minus an absolute tolerance is taken back and retried at a quarter of its
/// size from the last accepted state projected onto non-negative values.
fn drive<'a, M, S>(
    solver: &mut S,
    outputs: &[f64],
    breaks: &[f64],
    buffer: &mut M::V,
    record: &mut dyn FnMut(f64, &[f64]),
    rejections: &mut usize,
    control: Control<'_>,
) -> Result<(), Halt>
where
    M: Backend + 'a,
    S: OdeSolverMethod<'a, NetworkEquations<M>>,
{
    let Some(&t_end) = outputs.last() else {
        return Ok(());
    };
    // The solver stops at each break (sorted, inside the run) and at the end.
    let mut stops = breaks.iter().copied().chain(std::iter::once(t_end));
    let mut stop = stops.next().unwrap_or(t_end);
    solver.set_stop_time(stop)?;
    let mut next = 0;
    let mut consecutive = 0;
    while next < outputs.len() {
        let t_before = solver.state().t;
        *solver.config_mut().as_base_mut().minimum_timestep = minimum_step(t_before);
        let reason = solver.step()?;
        let t = solver.state().t;
        let negative =
            meaningfully_negative(M::slice(solver.state().y), M::slice(&solver.problem().atol));
        if solver.problem().eqn.non_negative
            && consecutive < MAX_NEGATIVE_REJECTIONS
            && t > t_before
            && negative
        {
            solver.state_mut_back(t_before)?;
            let problem = solver.problem();
            let state = solver.state_mut();
            let y = M::slice_mut(state.y);
            y.iter_mut().for_each(|c| *c = c.max(0.0));
            problem
                .eqn
                .system
                .state_derivative(t_before, y, M::slice_mut(state.dy));
            *state.h = NEGATIVE_STEP_SHRINK * (t - t_before);
            solver.set_stop_time(stop)?;
            consecutive += 1;
            *rejections += 1;
            continue;
        }
        consecutive = 0;
        let stopped = matches!(reason, OdeSolverStopReason::TstopReached);
        while next < outputs.len() && (outputs[next] < t || (stopped && outputs[next] <= t)) {
            if outputs[next] == t {
                record(t, M::slice(solver.state().y));
            } else {
                solver.interpolate_inplace(outputs[next], buffer)?;
                record(outputs[next], M::slice(buffer));
            }
            next += 1;
        }
        let at_end = stopped && stop >= t_end;
        control.after_step(t, at_end)?;
        if at_end {
            break;
        }
        if stopped {
            // A break reached: on to the next stop.
            stop = stops.next().unwrap_or(t_end);
            solver.set_stop_time(stop)?;
        }
    }
    Ok(())
}
