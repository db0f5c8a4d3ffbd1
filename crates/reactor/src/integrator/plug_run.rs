//! The plug-flow run: the solver steps in the residence time with the distance as the last
//! state, and reports at requested distances (or residence times) from its interpolant.

use diffsol::{DiffsolError, OdeSolverConfig, OdeSolverMethod, OdeSolverStopReason};

use super::{
    check_state, deadline, meaningfully_negative, minimum_step, most_negative, BatchSystem,
    Control, Session, MAX_NEGATIVE_REJECTIONS, NEGATIVE_STEP_SHRINK,
};
use crate::equations::{Backend, BatchEquations};
use crate::failure::{Diagnosis, Halt};
use crate::plug::{PlugFlowProfiles, PlugOutputs};
use crate::{IntegrationError, IntegrationFailure, Profiles, ReactorError, SolverStats};

/// Bisection and regula falsi (Illinois variant) iterations allowed to place one distance.
const MAX_ROOT_ITERATIONS: usize = 200;

impl BatchSystem {
    /// Runs the plug flow of the system's model (see [`crate::simulate_plug_flow`]) from the
    /// inlet concentrations `initial_mol_per_m3` (mol/m3) at the system's temperature.
    pub fn integrate_plug_flow(
        &mut self,
        initial_mol_per_m3: &[f64],
        outputs: &PlugOutputs,
    ) -> Result<PlugFlowProfiles, IntegrationError> {
        check_state(self.n_species, initial_mol_per_m3, "initial state")?;
        if self.model.plug.is_none() {
            return Err(
                ReactorError::BadPlugFlow("the reactor model has no plug flow".into()).into(),
            );
        }
        outputs.check()?;
        let by_distance = matches!(outputs, PlugOutputs::Distances(_));
        let targets = outputs.values()[1..].to_vec();
        let n = self.n_species;
        let max_steps = self.limits.max_steps;
        let monitor = self.limits.monitor.clone();
        let deadline = deadline(self.limits.wall_time_limit_s);
        let mut integrator = self.open(0.0, initial_mol_per_m3)?;
        let mut rows: Vec<(f64, Vec<f64>)> = vec![(0.0, integrator.full_state().to_vec())];
        let mut record = |t: f64, y: &[f64]| rows.push((t, y.to_vec()));
        let negative = &mut integrator.stats.most_negative_concentration_mol_per_m3;
        let rejections = &mut integrator.stats.negative_step_rejections;
        let result = with_stepper!(&mut integrator.session, s => {
            let budget = s.solver.get_statistics().number_of_steps.saturating_add(max_steps);
            *s.solver.config_mut().as_base_mut().maximum_number_timesteps = budget;
            let control = Control { monitor: monitor.as_ref(), deadline };
            let r = drive_plug::<_, _>(&mut s.solver, &targets, by_distance, &mut s.buffer, &mut record, negative, rejections, control);
            r.map_err(|e| match e {
                Halt::Solver(_) => {
                    let fastest = s.fastest_component();
                    let nonfinite = s.nonfinite_steps();
                    Diagnosis::of_halt(&e, fastest, nonfinite)
                }
                _ => Diagnosis::of_halt(&e, None, Vec::new()),
            })
        });
        integrator.refresh_stats();
        let stats = integrator.stats;
        let time_s = integrator.time();
        let linear_algebra_used = integrator.linear_algebra_used;
        drop(integrator);
        let out = self.plug_profiles(rows, n, stats, linear_algebra_used);
        match result {
            Ok(()) => Ok(out),
            Err(d) => Err(IntegrationFailure {
                time_s,
                reason: d.message,
                kind: d.kind,
                fastest: d.fastest.map(|f| *f),
                nonfinite_steps: d.nonfinite_steps,
                partial: out.profiles,
                source: d.source,
            }
            .into()),
        }
    }

    /// The profiles of the recorded full states `rows` (residence time, state).
    fn plug_profiles(
        &self,
        rows: Vec<(f64, Vec<f64>)>,
        n: usize,
        stats: SolverStats,
        linear_algebra_used: crate::LinearAlgebra,
    ) -> PlugFlowProfiles {
        let mut out = PlugFlowProfiles {
            distances_m: Vec::with_capacity(rows.len()),
            velocities_m_per_s: Vec::with_capacity(rows.len()),
            profiles: Profiles {
                times_s: Vec::with_capacity(rows.len()),
                concentrations_mol_per_m3: Vec::with_capacity(rows.len()),
                temperatures_k: Vec::with_capacity(rows.len()),
                temperature_rates_k_per_s: Vec::with_capacity(rows.len()),
                stats,
                linear_algebra_used,
                located: Vec::new(),
                volumes_m3: Vec::new(),
            },
        };
        for (t, y) in rows {
            let (temperature_k, f) = match &self.problem {
                super::Problem::Dense(p) => p.eqn.full_derivative(t, &y),
                super::Problem::Sparse(p) => p.eqn.full_derivative(t, &y),
            };
            let p = &mut out.profiles;
            p.times_s.push(t);
            p.concentrations_mol_per_m3.push(y[..n].to_vec());
            p.temperatures_k.push(temperature_k);
            p.temperature_rates_k_per_s.push(match &self.model.energy {
                crate::Energy::Isothermal => 0.0,
                crate::Energy::Prescribed(h) => h.slope_at(t),
                _ => f[n],
            });
            out.distances_m.push(y[y.len() - 1]);
            out.velocities_m_per_s.push(f[f.len() - 1]);
        }
        out
    }
}

#[allow(clippy::too_many_arguments)]
/// Steps `solver` until the last of `targets` is passed (distances in m when `by_distance`,
/// else residence times in s; increasing, after the current state) and hands each target's
/// residence time and state to `record`, from the solver's interpolant. Distances are placed
/// by bracketed root finding of the interpolated distance over the step that reaches them.
fn drive_plug<'a, M, S>(
    solver: &mut S,
    targets: &[f64],
    by_distance: bool,
    buffer: &mut M::V,
    record: &mut dyn FnMut(f64, &[f64]),
    negative: &mut f64,
    rejections: &mut usize,
    control: Control<'_>,
) -> Result<(), Halt>
where
    M: Backend + 'a,
    S: OdeSolverMethod<'a, BatchEquations<M>>,
{
    let mut next = 0;
    let mut consecutive_rejections = 0;
    let last = |y: &[f64]| y[y.len() - 1];
    let mut z_before = last(M::slice(solver.state().y));
    if !by_distance {
        if let Some(&end) = targets.last() {
            solver.set_stop_time(end)?;
        }
    }
    while next < targets.len() {
        let t_before = solver.state().t;
        *solver.config_mut().as_base_mut().minimum_timestep = minimum_step(t_before);
        let reason = solver.step()?;
        let t = solver.state().t;
        // Non-negativity in the step acceptance, as for the batch reactors (see `drive`).
        if solver.problem().eqn.non_negative
            && consecutive_rejections < MAX_NEGATIVE_REJECTIONS
            && t > t_before
            && meaningfully_negative(M::slice(solver.state().y), M::slice(&solver.problem().atol))
        {
            solver.state_mut_back(t_before)?;
            let problem = solver.problem();
            let state = solver.state_mut();
            let y = M::slice_mut(state.y);
            let n = problem.eqn.kinetics.n_species();
            y[..n].iter_mut().for_each(|c| *c = c.max(0.0));
            problem
                .eqn
                .state_derivative(t_before, y, M::slice_mut(state.dy));
            *state.h = NEGATIVE_STEP_SHRINK * (t - t_before);
            if !by_distance {
                if let Some(&end) = targets.last() {
                    solver.set_stop_time(end)?;
                }
            }
            consecutive_rejections += 1;
            *rejections += 1;
            continue;
        }
        consecutive_rejections = 0;
        most_negative(M::slice(solver.state().y), negative);
        let z_after = last(M::slice(solver.state().y));
        let stopped = matches!(reason, OdeSolverStopReason::TstopReached);
        let reached = if by_distance { z_after } else { t };
        while next < targets.len()
            && (targets[next] < reached || (targets[next] == reached && (by_distance || stopped)))
        {
            let target = targets[next];
            let tk = if by_distance {
                locate_distance::<M, S>(solver, target, (t_before, z_before), (t, z_after), buffer)?
            } else {
                target
            };
            if tk == t {
                record(t, M::slice(solver.state().y));
            } else {
                solver.interpolate_inplace(tk, buffer)?;
                let row = M::slice_mut(buffer);
                if by_distance {
                    // The root finding leaves the interpolated distance within round-off of
                    // the target; report the target itself.
                    let z = row.len() - 1;
                    row[z] = target;
                }
                most_negative(row, negative);
                record(tk, row);
            }
            next += 1;
        }
        z_before = z_after;
        control.after_step(t, stopped || next >= targets.len())?;
        if stopped {
            break;
        }
    }
    Ok(())
}

/// The residence time in `[a.0, b.0]` (s) where the solver's interpolated distance equals
/// `target` (m), given the distances `a.1 < target <= b.1` at the ends: regula falsi with the
/// Illinois modification, safeguarded by bisection, until the bracket is within a few units
/// of round-off of the time or the distance is hit exactly.
fn locate_distance<'a, M, S>(
    solver: &S,
    target: f64,
    a: (f64, f64),
    b: (f64, f64),
    buffer: &mut M::V,
) -> Result<f64, DiffsolError>
where
    M: Backend + 'a,
    S: OdeSolverMethod<'a, BatchEquations<M>>,
{
    let (mut ta, mut fa) = (a.0, a.1 - target);
    let (mut tb, mut fb) = (b.0, b.1 - target);
    if fb == 0.0 {
        return Ok(tb);
    }
    let mut side = 0i8;
    for iteration in 0..MAX_ROOT_ITERATIONS {
        if tb - ta <= 4.0 * f64::EPSILON * tb.abs() {
            break;
        }
        let mut tm = if iteration % 4 == 3 || fb == fa {
            0.5 * (ta + tb)
        } else {
            (ta * fb - tb * fa) / (fb - fa)
        };
        if !(tm > ta && tm < tb) {
            tm = 0.5 * (ta + tb);
        }
        solver.interpolate_inplace(tm, buffer)?;
        let y = M::slice(buffer);
        let fm = y[y.len() - 1] - target;
        if fm == 0.0 {
            return Ok(tm);
        }
        if fm < 0.0 {
            ta = tm;
            fa = fm;
            if side == -1 {
                fb *= 0.5;
            }
            side = -1;
        } else {
            tb = tm;
            fb = fm;
            if side == 1 {
                fa *= 0.5;
            }
            side = 1;
        }
    }
    // The end whose distance is closer to the target.
    Ok(if fa.abs() < fb.abs() { ta } else { tb })
}
