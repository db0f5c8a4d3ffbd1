//! Steady states of a [`TankNetwork`]: the damped Newton, pseudo-transient continuation and
//! time-integration fall-back of the single tank (see the `steady` module) applied to the
//! whole network's state, with the network's analytic Jacobian (made dense for the LU and
//! the eigenvalues; fine for the hundreds of states of a network of small mechanisms).

use nalgebra::{DMatrix, DVector};
use stoik_kinetics::Kinetics;

use crate::model::Energy;
use crate::network::{NetworkError, NetworkSystem, TankNetwork};
use crate::steady::{eigen_stability, newton, pseudo_transient, NewtonRun, SteadyProblem};
use crate::{simulate_network, Stability, SteadyError, SteadyOptions, SteadyPath};

/// The steady state of one tank of a network.
#[derive(Debug, Clone, PartialEq)]
pub struct TankSteadyState {
    /// The tank's name.
    pub name: String,
    /// Concentrations (mol/m3), one per species.
    pub concentrations_mol_per_m3: Vec<f64>,
    /// Temperature (K): solved, or the held one of an isothermal tank.
    pub temperature_k: f64,
}

/// A steady state of a network and how it was found.
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkSteadyState {
    /// Each tank's steady state, in the network's order.
    pub tanks: Vec<TankSteadyState>,
    /// The whole state vector (see [`TankNetwork::offset`]).
    pub state: Vec<f64>,
    /// The method that converged.
    pub path: SteadyPath,
    /// Newton iterations, all attempts together.
    pub newton_iterations: usize,
    /// Pseudo-transient steps taken (0 when Newton converged first).
    pub pseudo_transient_steps: usize,
    /// Time integrated by the fall-back (s; 0 when not used).
    pub integrated_time_s: f64,
    /// The final residual scaled per state, `max_i tau |f_i| / (rtol |y_i| + atol_i)`, with
    /// `tau` the network's time scale ([`TankNetwork::time_scale_s`]).
    pub scaled_residual: f64,
    /// The last Newton correction scaled the same way (below 1 at convergence).
    pub scaled_correction: f64,
    /// Eigenvalues of the network's Jacobian and stability.
    pub stability: Stability,
}

/// The network's equations as a steady-state problem.
struct NetworkSteady {
    system: NetworkSystem,
    values: Vec<f64>,
    /// The time the equations are evaluated at (s): the end of the coolant histories.
    t_eval: f64,
    tau: f64,
}

impl NetworkSteady {
    fn rhs(&self, y: &[f64]) -> Vec<f64> {
        let mut f = vec![0.0; y.len()];
        self.system.state_derivative(self.t_eval, y, &mut f);
        f
    }

    fn jacobian(&mut self, y: &[f64]) -> DMatrix<f64> {
        self.system
            .jacobian_values(self.t_eval, y, &mut self.values);
        let pattern = &self.system.pattern;
        let m = pattern.n();
        let (starts, rows) = (pattern.column_starts(), pattern.row_indices());
        let mut j = DMatrix::zeros(m, m);
        for col in 0..m {
            for p in starts[col]..starts[col + 1] {
                j[(rows[p], col)] = self.values[p];
            }
        }
        j
    }
}

impl SteadyProblem for NetworkSteady {
    fn size(&self) -> usize {
        self.system.n_states()
    }

    fn residence_time_s(&self) -> f64 {
        self.tau
    }

    fn residual(&self, y: &[f64]) -> Vec<f64> {
        self.rhs(y)
    }

    fn residual_jacobian(&mut self, y: &[f64]) -> DMatrix<f64> {
        self.jacobian(y)
    }

    fn weights(&self, y: &[f64], options: &SteadyOptions) -> Vec<f64> {
        let net = &self.system.net;
        let n = net.n_species();
        let mut w = Vec::with_capacity(y.len());
        for (j, tank) in net.tanks().iter().enumerate() {
            let o = net.offset(j);
            for i in 0..n {
                let atol = options
                    .absolute_tolerances_mol_per_m3
                    .get(i)
                    .copied()
                    .unwrap_or(1e-14);
                w.push(options.relative_tolerance * y[o + i].abs() + atol);
            }
            if tank.solves_energy() {
                w.push(options.relative_tolerance * y[o + n].abs() + options.absolute_tolerance_k);
            }
        }
        w
    }

    fn admissible(&self, y: &[f64]) -> bool {
        if y.iter().any(|v| !v.is_finite()) {
            return false;
        }
        let net = &self.system.net;
        (0..net.tanks().len()).all(|j| {
            let c = net.concentrations_in(j, y);
            let floor = -1e-6 * c.iter().map(|c| c.abs()).sum::<f64>();
            c.iter().all(|&v| v >= floor) && net.temperature_in(j, y) > 0.0
        })
    }
}

/// The steady state of the network `network` of `kinetics`, searched from the tanks'
/// initial states (the guess; their temperatures start the energy-solving tanks). Coolant
/// histories are taken at their last values. Damped Newton first (unless
/// [`SteadyOptions::transient_first`]), then pseudo-transient continuation, then time
/// integration over [`SteadyOptions::fallback_residence_times`] of the network's time scale
/// ([`TankNetwork::time_scale_s`]) followed by Newton. Converged when a full Newton
/// correction is below `relative_tolerance |y_i| + absolute tolerance_i` in every state.
///
/// Errors: [`NetworkError::Invalid`] for a species without thermochemistry when a tank
/// solves its energy balance, [`NetworkError::Steady`] when no method converges (with how
/// far each got) or the fall-back's integration fails.
pub fn network_steady_state(
    kinetics: &Kinetics,
    network: &TankNetwork,
    options: &SteadyOptions,
) -> Result<NetworkSteadyState, NetworkError> {
    let system = NetworkSystem::new(kinetics, network)?;
    let t_eval = network
        .tanks()
        .iter()
        .filter_map(|t| match &t.energy {
            Energy::HeatExchange(x) => Some(x.settled_time_s()),
            _ => None,
        })
        .fold(0.0, f64::max);
    let mut problem = NetworkSteady {
        values: vec![0.0; system.pattern.nnz()],
        system,
        t_eval,
        tau: network.time_scale_s(),
    };
    let start = network.initial_state();
    let mut y = start.clone();
    let first = if options.transient_first {
        NewtonRun {
            iterations: 0,
            converged: false,
            correction: f64::INFINITY,
            reason: String::new(),
        }
    } else {
        newton(&mut problem, &mut y, options, options.max_newton_iterations)
    };
    let mut newton_iterations = first.iterations;
    let (mut steps, mut integrated) = (0, 0.0);
    let mut path = SteadyPath::Newton;
    let mut converged = first.converged;
    let mut correction = first.correction;
    let mut reason = first.reason;
    if !converged {
        y.clone_from(&start);
        let (s, iterations, ok, why) = pseudo_transient(&mut problem, &mut y, options);
        steps = s;
        newton_iterations += iterations;
        converged = ok;
        path = SteadyPath::PseudoTransient;
        reason = why;
    }
    if !converged {
        let end = t_eval + options.fallback_residence_times * problem.tau;
        let profiles = simulate_network(kinetics, network, &[0.0, end], &options.integration)
            .map_err(|e| match e {
                NetworkError::Failed { time_s, reason, .. } => {
                    NetworkError::Steady(Box::new(SteadyError::NotConverged {
                        reason: format!(
                            "the time-integration fall-back failed at t = {time_s:e} s: {reason}"
                        ),
                        newton_iterations,
                        pseudo_transient_steps: steps,
                        integrated_time_s: time_s,
                        scaled_residual: f64::NAN,
                    }))
                }
                other => other,
            })?;
        integrated = end;
        let n = network.n_species();
        for (j, tank) in profiles.tanks.iter().enumerate() {
            let o = network.offset(j);
            y[o..o + n].copy_from_slice(&tank.concentrations_mol_per_m3[1]);
            if network.tanks()[j].solves_energy() {
                y[o + n] = tank.temperatures_k[1];
            }
        }
        let run = newton(&mut problem, &mut y, options, options.max_newton_iterations);
        newton_iterations += run.iterations;
        converged = run.converged;
        correction = run.correction;
        path = SteadyPath::TimeIntegration;
        reason = run.reason;
    }
    let f = problem.residual(&y);
    let w = problem.weights(&y, options);
    let scaled_residual = problem.scaled_residual(&f, &w);
    if !converged {
        return Err(NetworkError::Steady(Box::new(SteadyError::NotConverged {
            reason,
            newton_iterations,
            pseudo_transient_steps: steps,
            integrated_time_s: integrated,
            scaled_residual,
        })));
    }
    let jacobian = problem.jacobian(&y);
    if path != SteadyPath::Newton || correction.is_infinite() {
        if let Some(dy) = jacobian
            .clone()
            .lu()
            .solve(&DVector::from_iterator(f.len(), f.iter().map(|v| -v)))
        {
            correction = dy
                .iter()
                .zip(&w)
                .fold(0.0f64, |a, (d, w)| a.max(d.abs() / w));
        }
    }
    let stability = eigen_stability(jacobian);
    let tanks = network
        .tanks()
        .iter()
        .enumerate()
        .map(|(j, tank)| TankSteadyState {
            name: tank.name.clone(),
            concentrations_mol_per_m3: network.concentrations_in(j, &y).to_vec(),
            temperature_k: network.temperature_in(j, &y),
        })
        .collect();
    Ok(NetworkSteadyState {
        tanks,
        state: y,
        path,
        newton_iterations,
        pseudo_transient_steps: steps,
        integrated_time_s: integrated,
        scaled_residual,
        scaled_correction: correction,
        stability,
    })
}
