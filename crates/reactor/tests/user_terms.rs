//! User terms inside the integrator ([`UserTerms`]): a throughflow written by the user makes
//! a closed batch a stirred tank, a heat term makes an energy-solving liquid follow Newton's
//! law of cooling, the user's Jacobian contributions decide the Newton iteration's cost, and
//! the coupled run against operator splitting of the same term.

mod common;

use common::*;
use stoik_reactor::{
    BatchSystem, Energy, IntegrationOptions, LinearAlgebra, LiquidPhase, OwnedIntegrator,
    ReactorError, ReactorModel, SolverStats, StirredFlow, UserJacobian, UserTerms,
};

/// The throughflow of a stirred tank written as a user term: `S_i = (c_in,i - c_i) / tau`,
/// with the Jacobian `-1/tau` on the diagonal scaled by `jacobian_factor` (1: exact).
struct Throughflow {
    rate_per_s: f64,
    inlet: Vec<f64>,
    jacobian_factor: f64,
}

impl UserTerms for Throughflow {
    fn jacobian_entries(&self, n: usize) -> Vec<(usize, usize)> {
        (0..n).map(|i| (i, i)).collect()
    }
    fn add_rates(&mut self, _t: f64, c: &[f64], _temp: f64, rates: &mut [f64], _heat: &mut f64) {
        for ((r, c), c_in) in rates.iter_mut().zip(c).zip(&self.inlet) {
            *r += self.rate_per_s * (c_in - c);
        }
    }
    fn add_jacobian(&mut self, _t: f64, c: &[f64], _temp: f64, jac: &mut UserJacobian<'_>) {
        for i in 0..c.len() {
            jac.add(i, i, -self.rate_per_s * self.jacobian_factor);
        }
    }
}

/// The start-up of a first-order stirred tank: an empty tank (c_A = 0) fed at c_in from
/// t = 0, A -> B at rate k c_A. The linear ODE dc_A/dt = (c_in - c_A)/tau - k c_A gives
/// c_A(t) = c_in / (1 + k tau) (1 - exp(-(k + 1/tau) t)) (H. S. Fogler, *Elements of Chemical
/// Reaction Engineering*, 4th ed., ch. 5, unsteady CSTR; O. Levenspiel, *Chemical Reaction
/// Engineering*, 3rd ed., ch. 5 for the steady state), and the total c_A + c_B follows
/// dC/dt = (c_in - C)/tau.
fn startup(k: f64, tau: f64, c_in: f64, t: f64) -> (f64, f64) {
    let a = c_in / (1.0 + k * tau) * (1.0 - (-(k + 1.0 / tau) * t).exp());
    let total = c_in * (1.0 - (-t / tau).exp());
    (a, total - a)
}

#[test]
fn user_throughflow_makes_the_batch_a_first_order_stirred_tank() {
    let (k, tau, c_in) = (2.0, 0.5, 3.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let times = [0.0, 0.05, 0.2, 0.5, 1.0, 2.0, 5.0, 20.0];
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system = BatchSystem::new(&kin, T, &options(2, 1e-10, 1e-14, la)).unwrap();
        system
            .set_user_terms(Throughflow {
                rate_per_s: 1.0 / tau,
                inlet: vec![c_in, 0.0],
                jacobian_factor: 1.0,
            })
            .unwrap();
        assert!(system.has_user_terms());
        let p = system.integrate(&[0.0, 0.0], &times).unwrap();
        for (row, &t) in p.concentrations_mol_per_m3.iter().zip(&times).skip(1) {
            let (a, b) = startup(k, tau, c_in, t);
            assert_close(&format!("{la:?} c_A({t})"), row[0], a, 1e-8, 1e-13);
            assert_close(&format!("{la:?} c_B({t})"), row[1], b, 1e-8, 1e-13);
        }
        // After forty residence times the steady conversion k tau / (1 + k tau) (the
        // first-order design equation, Levenspiel ch. 5).
        let last = &p.concentrations_mol_per_m3[times.len() - 1];
        let conversion = 1.0 - last[0] / c_in;
        assert_close(
            &format!("{la:?} conversion"),
            conversion,
            k * tau / (1.0 + k * tau),
            1e-9,
            0.0,
        );

        // The same tank through the model's own stirred flow: the two agree to the
        // tolerance (the built-in flow is checked against the same closed form in
        // tests/stirred_tank.rs).
        let model = ReactorModel {
            flow: Some(StirredFlow::new(tau, vec![c_in, 0.0], 300.0).unwrap()),
            ..Default::default()
        };
        let mut tank =
            BatchSystem::with_model(&kin, &model, T, &options(2, 1e-10, 1e-14, la)).unwrap();
        let q = tank.integrate(&[0.0, 0.0], &times).unwrap();
        for (row, built_in) in p
            .concentrations_mol_per_m3
            .iter()
            .zip(&q.concentrations_mol_per_m3)
        {
            assert_close(
                &format!("{la:?} against the built-in tank"),
                row[0],
                built_in[0],
                1e-8,
                1e-13,
            );
        }

        // Detached, the batch is closed again: c_A = c_A0 exp(-k t) (first-order decay).
        system.clear_user_terms();
        let p = system.integrate(&[1.0, 0.0], &[0.0, 0.5]).unwrap();
        assert_close(
            "closed batch",
            p.concentrations_mol_per_m3[1][0],
            (-k * 0.5f64).exp(),
            1e-8,
            0.0,
        );
    }
}

/// Heat into the reactor `U A / V (T_c - T)` (W/m3) with its derivative `-U A / V` in the
/// temperature column of the heat row.
struct Jacket {
    ua_per_volume: f64,
    coolant_k: f64,
}

impl UserTerms for Jacket {
    fn jacobian_entries(&self, n: usize) -> Vec<(usize, usize)> {
        vec![(n, n)]
    }
    fn add_rates(&mut self, _t: f64, _c: &[f64], temp: f64, _r: &mut [f64], heat: &mut f64) {
        *heat += self.ua_per_volume * (self.coolant_k - temp);
    }
    fn add_jacobian(&mut self, _t: f64, _c: &[f64], _temp: f64, jac: &mut UserJacobian<'_>) {
        let n = jac.n_species();
        jac.add(n, n, -self.ua_per_volume);
    }
}

#[test]
fn user_heat_term_follows_newtons_law_of_cooling() {
    // A liquid (rho cp = 4e6 J/(m3 K)) whose only step releases no heat, cooled through a
    // user jacket U A / V = 4e4 W/(m3 K) at T_c = 300 K from 350 K: Newton's law of cooling,
    // T(t) = T_c + (T_0 - T_c) exp(-t U A / (V rho cp)) (any heat-transfer text, e.g.
    // F. P. Incropera et al., *Fundamentals of Heat and Mass Transfer*, lumped capacitance,
    // ch. 5), time constant 100 s.
    let (rho_cp, ua_v, t_c, t0) = (4e6, 4e4, 300.0, 350.0);
    let k = 0.01;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let model = ReactorModel {
        energy: Energy::Adiabatic,
        liquid: Some(LiquidPhase::per_volume(rho_cp, vec![0.0]).unwrap()),
        ..Default::default()
    };
    let times = [0.0, 10.0, 50.0, 100.0, 300.0, 600.0];
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system =
            BatchSystem::with_model(&kin, &model, t0, &options(2, 1e-10, 1e-14, la)).unwrap();
        system
            .set_user_terms(Jacket {
                ua_per_volume: ua_v,
                coolant_k: t_c,
            })
            .unwrap();
        let p = system.integrate(&[1.0, 0.0], &times).unwrap();
        for (i, &t) in times.iter().enumerate() {
            let expected = t_c + (t0 - t_c) * (-t * ua_v / rho_cp).exp();
            assert_close(
                &format!("{la:?} T({t})"),
                p.temperatures_k[i],
                expected,
                1e-9,
                0.0,
            );
            // The reported dT/dt includes the user's heat: -(T - T_c) U A / (V rho cp).
            let rate = -(expected - t_c) * ua_v / rho_cp;
            assert_close(
                &format!("{la:?} dT/dt({t})"),
                p.temperature_rates_k_per_s[i],
                rate,
                1e-7,
                1e-12,
            );
            // The step goes on: c_A = exp(-k t) (first-order decay).
            assert_close(
                &format!("{la:?} c_A({t})"),
                p.concentrations_mol_per_m3[i][0],
                (-k * t).exp(),
                1e-8,
                1e-14,
            );
        }
    }
}

#[test]
fn exact_user_jacobian_costs_fewer_factorizations_than_a_wrong_one() {
    // A stiff throughflow (tau = 1 ms) around a slow step (k = 1 1/s), integrated over 2 s:
    // the user's Jacobian -1/tau dominates the Newton matrix. With a wrong one (a third of
    // the true value) Newton still converges, on shorter steps and with more matrix
    // rebuilds. Both runs meet the closed form of the start-up (Fogler ch. 5).
    let (k, tau, c_in) = (1.0, 1e-3, 2.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let end = 2.0;
    let run = |factor: f64, la: LinearAlgebra| -> (SolverStats, f64) {
        let mut system = BatchSystem::new(&kin, T, &options(2, 1e-8, 1e-12, la)).unwrap();
        system
            .set_user_terms(Throughflow {
                rate_per_s: 1.0 / tau,
                inlet: vec![c_in, 0.0],
                jacobian_factor: factor,
            })
            .unwrap();
        let p = system.integrate(&[0.0, 0.0], &[0.0, end]).unwrap();
        (p.stats, p.concentrations_mol_per_m3[1][0])
    };
    let (a_end, _) = startup(k, tau, c_in, end);
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let (exact, a_exact) = run(1.0, la);
        let (wrong, a_wrong) = run(1.0 / 3.0, la);
        println!("{la:?} exact Jacobian: {exact:?}\n{la:?} wrong Jacobian: {wrong:?}");
        assert_close(&format!("{la:?} exact"), a_exact, a_end, 1e-6, 0.0);
        assert_close(&format!("{la:?} wrong"), a_wrong, a_end, 1e-6, 0.0);
        assert!(
            exact.factorizations < wrong.factorizations,
            "{la:?}: exact {} factorizations, wrong {}",
            exact.factorizations,
            wrong.factorizations
        );
        assert!(
            exact.nonlinear_failures < wrong.nonlinear_failures,
            "{la:?}: exact {} Newton failures, wrong {}",
            exact.nonlinear_failures,
            wrong.nonlinear_failures
        );
    }
}

#[test]
fn coupled_user_term_against_operator_splitting() {
    // The start-up of the first-order tank (Fogler ch. 5) two ways at rtol 1e-8: the
    // throughflow as a user term inside the integrator, and Strang splitting of the same
    // term (half a step of exact throughflow, the reaction over the step in the
    // integrator, half a step of throughflow; the splitting step a tenth of the residence
    // time). Errors against the closed form and the solver's work for both
    // (docs/embedding.md quotes them).
    let (k, tau, c_in) = (2.0, 0.5, 3.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let end = 2.5;
    let opts = options(2, 1e-8, 1e-12, LinearAlgebra::Dense);
    let (a_end, b_end) = startup(k, tau, c_in, end);

    let mut coupled = BatchSystem::new(&kin, T, &opts).unwrap();
    coupled
        .set_user_terms(Throughflow {
            rate_per_s: 1.0 / tau,
            inlet: vec![c_in, 0.0],
            jacobian_factor: 1.0,
        })
        .unwrap();
    let p = coupled.integrate(&[0.0, 0.0], &[0.0, end]).unwrap();
    let c = &p.concentrations_mol_per_m3[1];
    let coupled_error = ((c[0] - a_end) / a_end)
        .abs()
        .max(((c[1] - b_end) / b_end).abs());

    println!(
        "coupled: error {coupled_error:.2e}, {} steps, {} factorizations, {} rhs",
        p.stats.steps, p.stats.factorizations, p.stats.rhs_evaluations
    );
    assert!(coupled_error < 1e-6, "coupled error {coupled_error:e}");
    let mut previous_error = f64::INFINITY;
    for parts in [10.0, 100.0] {
        let mut split = BatchSystem::new(&kin, T, &opts).unwrap();
        let mut it = split.integrator(&[0.0, 0.0]).unwrap();
        let dt = tau / parts;
        let stops = (end / dt).round() as usize;
        let half = (-0.5 * dt / tau).exp();
        let inlet = [c_in, 0.0];
        let mut state = [0.0; 2];
        for i in 1..=stops {
            state.copy_from_slice(it.state());
            for (s, c_in) in state.iter_mut().zip(&inlet) {
                *s = c_in + (*s - c_in) * half;
            }
            it.set_state(&state).unwrap();
            it.advance_to(i as f64 * dt).unwrap();
            state.copy_from_slice(it.state());
            for (s, c_in) in state.iter_mut().zip(&inlet) {
                *s = c_in + (*s - c_in) * half;
            }
            it.set_state(&state).unwrap();
        }
        let split_stats = *it.stats();
        let split_error = ((state[0] - a_end) / a_end)
            .abs()
            .max(((state[1] - b_end) / b_end).abs());
        println!(
            "Strang splitting ({stops} stops): error {split_error:.2e}, {} steps, {} \
             factorizations, {} rhs",
            split_stats.steps, split_stats.factorizations, split_stats.rhs_evaluations
        );
        // Splitting carries its O(dt^2) splitting error, far above the coupled run's, and
        // restarts the solver at every stop.
        assert!(split_error > 100.0 * coupled_error, "split {split_error:e}");
        assert!(split_stats.factorizations > p.stats.factorizations);
        // Second order: a tenth of the step, about a hundredth of the error.
        assert!(split_error < previous_error / 50.0, "split {split_error:e}");
        previous_error = split_error;
    }
}

#[test]
fn user_terms_are_refused_where_they_cannot_be_honoured() {
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1.0)]);
    let opts = options(2, 1e-8, 1e-12, LinearAlgebra::Dense);
    // A heat row in a model without the energy balance.
    let mut system = BatchSystem::new(&kin, T, &opts).unwrap();
    let err = system
        .set_user_terms(Jacket {
            ua_per_volume: 1.0,
            coolant_k: 300.0,
        })
        .unwrap_err();
    assert!(matches!(err, ReactorError::BadUserTerms(_)), "{err}");
    assert!(err.to_string().contains("(2, 2)"), "{err}");
    assert!(!system.has_user_terms());
    // Constant pressure.
    let model = ReactorModel {
        constraint: stoik_reactor::Constraint::ConstantPressure,
        ..Default::default()
    };
    let mut system = BatchSystem::with_model(&kin, &model, T, &opts).unwrap();
    let err = system
        .set_user_terms(Throughflow {
            rate_per_s: 1.0,
            inlet: vec![1.0, 0.0],
            jacobian_factor: 1.0,
        })
        .unwrap_err();
    assert!(err.to_string().contains("constant pressure"), "{err}");
}

#[test]
fn owned_integrator_with_user_terms_steps_on_another_thread() {
    // The owned session keeps the user terms (they are Send) and steps on a worker thread;
    // the terms' parameters change on the live session through `user_terms_mut`.
    let (k, tau, c_in) = (2.0, 0.5, 3.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let opts: IntegrationOptions = options(2, 1e-10, 1e-14, LinearAlgebra::Sparse);
    let mut system = BatchSystem::new(&kin, T, &opts).unwrap();
    system
        .set_user_terms(Throughflow {
            rate_per_s: 1.0 / tau,
            inlet: vec![c_in, 0.0],
            jacobian_factor: 1.0,
        })
        .unwrap();
    let mut unit = OwnedIntegrator::new(system, &[0.0, 0.0]).unwrap();
    let t1 = 1.0;
    let handle = std::thread::spawn(move || {
        let mut c = [0.0; 2];
        unit.advance_to(t1, &mut c).unwrap();
        (unit, c)
    });
    let (mut unit, c) = handle.join().unwrap();
    let (a1, _) = startup(k, tau, c_in, t1);
    assert_close("c_A(t1) on the worker", c[0], a1, 1e-8, 0.0);
    // The feed stops at t1 (inlet 0): from there c_A = c_A(t1) exp(-(k + 1/tau)(t - t1)).
    unit.with(|it| {
        let mut terms = it.user_terms_mut::<Throughflow>().unwrap();
        terms.inlet[0] = 0.0;
    });
    assert!(unit.with(|it| it.user_terms_mut::<Jacket>().is_none()));
    let mut c2 = [0.0; 2];
    unit.advance_to(t1 + 0.5, &mut c2).unwrap();
    assert_close(
        "c_A after the feed stops",
        c2[0],
        a1 * (-(k + 1.0 / tau) * 0.5f64).exp(),
        1e-7,
        0.0,
    );
}
