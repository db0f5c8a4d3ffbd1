//! Box conditions changed on a live integrator: the inlet, the residence time of a stirred
//! tank and the coolant temperature and U A of a jacketed vessel, mid-run. After a change
//! the response is the closed-form solution of the new linear ODE from the state at the
//! change; a setter called with the value already in force costs nothing.

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_reactor::{
    BatchSystem, Energy, HeatExchange, LinearAlgebra, LiquidPhase, ReactorError, ReactorModel,
    SolverStats, StirredFlow, TemperatureHistory,
};

const K: f64 = 2.0;

fn first_order() -> Kinetics {
    kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], K)])
}

fn tank(tau: f64, inlet: [f64; 2]) -> ReactorModel {
    ReactorModel {
        flow: Some(StirredFlow::new(tau, inlet.to_vec(), 300.0).unwrap()),
        ..Default::default()
    }
}

/// The isothermal first-order stirred tank from `(a0, total0)` at time 0 with residence
/// time `tau` and inlet `c_in`: dc_A/dt = (c_in,A - c_A)/tau - k c_A and
/// dC/dt = (C_in - C)/tau, linear ODEs with the solutions
/// c_A = s + (a0 - s) exp(-(k + 1/tau) t), s = c_in,A / (1 + k tau), and
/// C = C_in + (C0 - C_in) exp(-t/tau) (H. S. Fogler, *Elements of Chemical Reaction
/// Engineering*, 4th ed., ch. 5, unsteady stirred tank; O. Levenspiel, *Chemical Reaction
/// Engineering*, 3rd ed., ch. 5). Returns (c_A, c_B).
fn tank_closed_form(a0: f64, total0: f64, tau: f64, c_in: [f64; 2], t: f64) -> (f64, f64) {
    let s = c_in[0] / (1.0 + K * tau);
    let a = s + (a0 - s) * (-(K + 1.0 / tau) * t).exp();
    let total_in = c_in[0] + c_in[1];
    let total = total_in + (total0 - total_in) * (-t / tau).exp();
    (a, total - a)
}

/// Runs the tank from `c0` to `t1`, applies `change` there (restarting the solver, or
/// keeping its history), and checks the outputs after `t1` against
/// `expected(t - t1, state at t1)`. Returns the statistics.
fn step_change(
    la: LinearAlgebra,
    model: &ReactorModel,
    c0: [f64; 2],
    t1: f64,
    keep_history: bool,
    change: &dyn Fn(&mut stoik_reactor::BatchIntegrator<'_>),
    expected: &dyn Fn(f64, [f64; 2]) -> (f64, f64),
) -> SolverStats {
    let mut system =
        BatchSystem::with_model(&first_order(), model, T, &options(2, 1e-10, 1e-14, la)).unwrap();
    let mut it = system.integrator(&c0).unwrap();
    let at_t1 = it.advance_to(t1).unwrap();
    let y1 = [at_t1[0], at_t1[1]];
    it.keep_history_on_box_changes(keep_history);
    change(&mut it);
    for dt in [0.01, 0.1, 0.3, 1.0, 3.0] {
        let c = it.advance_to(t1 + dt).unwrap();
        let (a, b) = expected(dt, y1);
        let mode = if keep_history {
            "history kept"
        } else {
            "restart"
        };
        assert_close(
            &format!("{la:?} {mode} c_A(t1 + {dt})"),
            c[0],
            a,
            1e-7,
            1e-12,
        );
        assert_close(
            &format!("{la:?} {mode} c_B(t1 + {dt})"),
            c[1],
            b,
            1e-7,
            1e-12,
        );
    }
    *it.stats()
}

#[test]
fn inlet_step_follows_the_closed_form_from_the_state_at_the_step() {
    let (tau, inlet1, inlet2, t1) = (0.5, [3.0, 0.0], [1.0, 0.5], 1.0);
    let model = tank(tau, inlet1);
    let c0 = [0.2, 0.1];
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        for keep_history in [false, true] {
            let stats = step_change(
                la,
                &model,
                c0,
                t1,
                keep_history,
                &|it| it.set_inlet_mol_per_m3(&inlet2).unwrap(),
                &|dt, y1| {
                    // The state at t1 is itself the closed form of the first period.
                    let (a1, b1) = tank_closed_form(c0[0], c0[0] + c0[1], tau, inlet1, t1);
                    assert_close("c_A(t1)", y1[0], a1, 1e-8, 1e-13);
                    assert_close("c_B(t1)", y1[1], b1, 1e-8, 1e-13);
                    tank_closed_form(y1[0], y1[0] + y1[1], tau, inlet2, dt)
                },
            );
            println!("inlet step, {la:?}, history kept {keep_history}: {stats:?}");
        }
    }
}

#[test]
fn residence_time_step_follows_the_closed_form_from_the_state_at_the_step() {
    let (tau1, tau2, inlet, t1) = (0.5, 0.2, [3.0, 0.0], 1.0);
    let model = tank(tau1, inlet);
    let c0 = [0.0, 0.0];
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        for keep_history in [false, true] {
            let stats = step_change(
                la,
                &model,
                c0,
                t1,
                keep_history,
                &|it| it.set_residence_time_s(tau2).unwrap(),
                &|dt, y1| tank_closed_form(y1[0], y1[0] + y1[1], tau2, inlet, dt),
            );
            println!("residence-time step, {la:?}, history kept {keep_history}: {stats:?}");
        }
    }
}

/// The solver's work counts of two runs must be equal.
fn assert_same_work(what: &str, with: &SolverStats, without: &SolverStats) {
    assert_eq!(with.steps, without.steps, "{what}: steps");
    assert_eq!(
        with.factorizations, without.factorizations,
        "{what}: factorizations"
    );
    assert_eq!(with.rhs_evaluations, without.rhs_evaluations, "{what}: rhs");
    assert_eq!(
        with.jacobian_evaluations, without.jacobian_evaluations,
        "{what}: Jacobians"
    );
    assert_eq!(
        with.error_test_failures, without.error_test_failures,
        "{what}: error tests"
    );
    assert_eq!(
        with.nonlinear_failures, without.nonlinear_failures,
        "{what}: Newton"
    );
}

#[test]
fn same_value_setters_cost_nothing() {
    // 200 stops of a stirred tank, with and without setting the residence time, the inlet
    // and the inlet temperature to the values in force at every stop: the same steps,
    // factorizations and evaluations, and the same state bit for bit. A real change at
    // every stop (the residence time alternating between 0.5 and 0.505 s) costs work, with
    // a restart after each change (the default) and with the history kept; both meet the
    // piecewise closed form (Fogler ch. 5, interval by interval).
    let (tau, inlet) = (0.5, [3.0, 0.0]);
    let model = tank(tau, inlet);
    let tau_at = |i: usize| if i.is_multiple_of(2) { tau } else { 1.01 * tau };
    let mut expected = (0.0, 0.0);
    for i in 1..=200 {
        // Interval i runs with the residence time set at stop i - 1 (tau at the start).
        let tau_i = if i == 1 { tau } else { tau_at(i - 1) };
        let (a, b) = expected;
        expected = tank_closed_form(a, a + b, tau_i, inlet, 0.02);
    }
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let run = |mode: u8| {
            let mut system =
                BatchSystem::with_model(&first_order(), &model, T, &options(2, 1e-8, 1e-12, la))
                    .unwrap();
            let mut it = system.integrator(&[0.0, 0.0]).unwrap();
            for i in 1..=200 {
                it.advance_to(0.02 * i as f64).unwrap();
                match mode {
                    1 => {
                        it.set_residence_time_s(tau).unwrap();
                        it.set_inlet_mol_per_m3(&inlet).unwrap();
                        it.set_inlet_temperature_k(300.0).unwrap();
                    }
                    2 => it.set_residence_time_s(tau_at(i)).unwrap(),
                    3 => {
                        it.keep_history_on_box_changes(true);
                        it.set_residence_time_s(tau_at(i)).unwrap();
                    }
                    _ => {}
                }
            }
            (*it.stats(), [it.state()[0], it.state()[1]])
        };
        let (without, c_without) = run(0);
        let (with, c_with) = run(1);
        println!("{la:?}: without {without:?}\n{la:?}: same values {with:?}");
        assert_same_work(&format!("{la:?}"), &with, &without);
        assert_eq!(c_with, c_without, "{la:?}: states");
        // The run itself: after 8 residence times the tank is within e^-8 of its start-up
        // closed form's value there (Fogler ch. 5).
        let (a, _) = tank_closed_form(0.0, 0.0, tau, inlet, 4.0);
        assert_close(&format!("{la:?} c_A(4 s)"), c_without[0], a, 1e-6, 0.0);
        for (mode, name) in [(2, "restarted"), (3, "history kept")] {
            let (changing, c) = run(mode);
            println!("{la:?}: changing, {name}: {changing:?}");
            assert!(
                changing.steps > without.steps,
                "{la:?} {name}: {changing:?}"
            );
            assert_close(&format!("{la:?} {name} c_A"), c[0], expected.0, 1e-6, 0.0);
            assert_close(&format!("{la:?} {name} c_B"), c[1], expected.1, 1e-6, 0.0);
        }
    }
}

fn jacketed_liquid(ua_per_volume: f64, coolant_k: f64) -> ReactorModel {
    let coolant = TemperatureHistory::new(vec![0.0], vec![coolant_k]).unwrap();
    ReactorModel {
        energy: Energy::HeatExchange(HeatExchange::new(ua_per_volume, coolant).unwrap()),
        liquid: Some(LiquidPhase::per_volume(4e6, vec![0.0]).unwrap()),
        ..Default::default()
    }
}

#[test]
fn coolant_and_ua_steps_follow_newtons_law_of_cooling() {
    // A jacketed liquid (rho cp = 4e6 J/(m3 K), U A / V = 4e4 W/(m3 K): time constant
    // theta = 100 s) whose step releases no heat, from 350 K with the coolant at 300 K. At
    // t1 = 50 s the coolant steps to 280 K, at t2 = 150 s U A / V doubles: between changes
    // T = T_c + (T(t_i) - T_c) exp(-(t - t_i) / theta) (Newton's law of cooling, lumped
    // capacitance: F. P. Incropera et al., *Fundamentals of Heat and Mass Transfer*, ch. 5).
    let (rho_cp, ua, t0) = (4e6, 4e4, 350.0);
    let model = jacketed_liquid(ua, 300.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 0.01)]);
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system =
            BatchSystem::with_model(&kin, &model, t0, &options(2, 1e-10, 1e-14, la)).unwrap();
        let mut it = system.integrator(&[1.0, 0.0]).unwrap();
        let cooling = |t_from: f64, temp_from: f64, coolant: f64, ua: f64, t: f64| {
            coolant + (temp_from - coolant) * (-(t - t_from) * ua / rho_cp).exp()
        };
        it.advance_to(50.0).unwrap();
        let t1_temp = it.temperature();
        // The temperature's absolute tolerance is 1e-6 K: 1e-8 relative at 300 K.
        assert_close(
            &format!("{la:?} T(50)"),
            t1_temp,
            cooling(0.0, t0, 300.0, ua, 50.0),
            1e-8,
            0.0,
        );
        it.set_coolant_temperature_k(280.0).unwrap();
        assert_eq!(
            it.heat_exchange().unwrap().coolant().temperatures_k(),
            &[280.0]
        );
        it.advance_to(150.0).unwrap();
        let t2_temp = it.temperature();
        assert_close(
            &format!("{la:?} T(150)"),
            t2_temp,
            cooling(50.0, t1_temp, 280.0, ua, 150.0),
            1e-8,
            0.0,
        );
        it.set_ua_per_volume_w_per_m3_k(2.0 * ua).unwrap();
        for t in [160.0, 200.0, 400.0] {
            it.advance_to(t).unwrap();
            let expected = cooling(150.0, t2_temp, 280.0, 2.0 * ua, t);
            assert_close(
                &format!("{la:?} T({t})"),
                it.temperature(),
                expected,
                1e-8,
                0.0,
            );
        }
        // Per-volume exchange: a total U A is refused, nothing changes.
        let err = it.set_ua_total_w_per_k(10.0).unwrap_err();
        assert!(matches!(err, ReactorError::BadHeatExchange(_)), "{err}");
        assert_eq!(
            it.heat_exchange().unwrap().ua_per_volume_w_per_m3_k(),
            2.0 * ua
        );
    }
}

#[test]
fn same_value_jacket_setters_cost_nothing() {
    let model = jacketed_liquid(4e4, 300.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 0.01)]);
    let run = |calls: bool| {
        let mut system = BatchSystem::with_model(
            &kin,
            &model,
            350.0,
            &options(2, 1e-8, 1e-12, LinearAlgebra::Dense),
        )
        .unwrap();
        let mut it = system.integrator(&[1.0, 0.0]).unwrap();
        for i in 1..=100 {
            it.advance_to(2.0 * i as f64).unwrap();
            if calls {
                it.set_coolant_temperature_k(300.0).unwrap();
                it.set_ua_per_volume_w_per_m3_k(4e4).unwrap();
            }
        }
        (*it.stats(), it.temperature())
    };
    let (without, t_without) = run(false);
    let (with, t_with) = run(true);
    assert_same_work("jacket", &with, &without);
    assert_eq!(t_with, t_without);
    // T(200 s) = 300 + 50 e^-2 (Newton's law of cooling, theta = 100 s).
    assert_close(
        "T(200)",
        t_without,
        300.0 + 50.0 * (-2.0f64).exp(),
        1e-7,
        0.0,
    );
}

#[test]
fn bad_changes_are_refused_and_change_nothing() {
    let model = tank(0.5, [3.0, 0.0]);
    let opts = options(2, 1e-8, 1e-12, LinearAlgebra::Dense);
    let mut system = BatchSystem::with_model(&first_order(), &model, T, &opts).unwrap();
    {
        let mut it = system.integrator(&[0.0, 0.0]).unwrap();
        assert!(matches!(
            it.set_residence_time_s(-1.0),
            Err(ReactorError::BadFlow(_))
        ));
        assert!(matches!(
            it.set_inlet_mol_per_m3(&[1.0]),
            Err(ReactorError::BadFlow(_))
        ));
        assert!(matches!(
            it.set_inlet_mol_per_m3(&[1.0, f64::NAN]),
            Err(ReactorError::BadFlow(_))
        ));
        assert!(matches!(
            it.set_coolant_temperature_k(300.0),
            Err(ReactorError::BadHeatExchange(_))
        ));
        let flow = it.stirred_flow().unwrap();
        assert_eq!(flow.residence_time_s(), 0.5);
        assert_eq!(flow.inlet_mol_per_m3(), &[3.0, 0.0]);
        it.set_residence_time_s(0.25).unwrap();
        assert_eq!(it.stirred_flow().unwrap().residence_time_s(), 0.25);
    }
    // A new session starts from the model's values: the tank approaches the first steady
    // state c_in / (1 + k tau) with tau = 0.5 s (Levenspiel ch. 5).
    let mut it = system.integrator(&[0.0, 0.0]).unwrap();
    assert_eq!(it.stirred_flow().unwrap().residence_time_s(), 0.5);
    let c = it.advance_to(20.0).unwrap();
    assert_close("steady c_A", c[0], 3.0 / (1.0 + K * 0.5), 1e-6, 0.0);
    drop(it);
    // A closed batch has no flow to change.
    let mut closed = BatchSystem::new(&first_order(), T, &opts).unwrap();
    let mut it = closed.integrator(&[1.0, 0.0]).unwrap();
    assert!(matches!(
        it.set_residence_time_s(1.0),
        Err(ReactorError::BadFlow(_))
    ));
    assert!(it.stirred_flow().is_none());
}

/// A species with the constant heat capacity of a monatomic ideal gas, cp = 5/2 R (kinetic
/// theory), and no heat of formation.
fn monatomic() -> stoik_thermo::Nasa7 {
    let a = [2.5, 0.0, 0.0, 0.0, 0.0, 0.0, 4.0];
    stoik_thermo::Nasa7::new(200.0, 1000.0, 6000.0, a, a).unwrap()
}

#[test]
fn inlet_temperature_step_follows_the_first_order_lag() {
    // An adiabatic stirred tank holding its feed (40 mol/m3 of an inert gas of constant
    // cp = 5/2 R, the step A -> B idle without A): the steady-flow energy balance
    // C cp dT/dt = C_in cp (T_in - T) / tau reduces to dT/dt = (T_in - T) / tau, so T follows
    // T_in with the first-order lag T = T_in + (T(t_i) - T_in) exp(-(t - t_i) / tau) (Fogler
    // ch. 8, unsteady energy balance of a stirred tank). T_in steps from 450 to 350 K at
    // t1 = 2 s. On an isothermal tank the same setter changes no equation and costs
    // nothing.
    let mut m = mechanism(&["A", "B", "D"], vec![step(&[(0, 1.0)], &[(1, 1.0)], K)]);
    for species in &mut m.species {
        species.thermo = Some(monatomic());
    }
    let kin = Kinetics::compile(&m).unwrap();
    let (tau, t0, t_in1, t_in2, t1) = (1.0, 400.0, 450.0, 350.0, 2.0);
    let feed = vec![0.0, 0.0, 40.0];
    let model = ReactorModel {
        energy: Energy::Adiabatic,
        flow: Some(StirredFlow::new(tau, feed.clone(), t_in1).unwrap()),
        ..Default::default()
    };
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system =
            BatchSystem::with_model(&kin, &model, t0, &options(3, 1e-10, 1e-14, la)).unwrap();
        let mut it = system.integrator(&feed).unwrap();
        it.advance_to(t1).unwrap();
        let temp1 = it.temperature();
        let lag = |from: f64, t_in: f64, dt: f64| t_in + (from - t_in) * (-dt / tau).exp();
        assert_close(
            &format!("{la:?} T(t1)"),
            temp1,
            lag(t0, t_in1, t1),
            1e-8,
            0.0,
        );
        it.set_inlet_temperature_k(t_in2).unwrap();
        for dt in [0.1, 1.0, 5.0] {
            it.advance_to(t1 + dt).unwrap();
            let expected = lag(temp1, t_in2, dt);
            assert_close(
                &format!("{la:?} T(t1 + {dt})"),
                it.temperature(),
                expected,
                1e-8,
                0.0,
            );
        }
    }
    // Isothermal: the inlet temperature enters no equation.
    let isothermal = tank(0.5, [3.0, 0.0]);
    let run = |change: bool| {
        let mut system = BatchSystem::with_model(
            &first_order(),
            &isothermal,
            T,
            &options(2, 1e-8, 1e-12, LinearAlgebra::Dense),
        )
        .unwrap();
        let mut it = system.integrator(&[0.0, 0.0]).unwrap();
        for i in 1..=50 {
            it.advance_to(0.02 * i as f64).unwrap();
            if change {
                it.set_inlet_temperature_k(300.0 + i as f64).unwrap();
            }
        }
        assert_eq!(
            it.stirred_flow().unwrap().inlet_temperature_k(),
            if change { 350.0 } else { 300.0 }
        );
        (*it.stats(), it.state()[0])
    };
    let (without, a_without) = run(false);
    let (with, a_with) = run(true);
    assert_same_work("isothermal inlet temperature", &with, &without);
    assert_eq!(a_with, a_without);
    let (a, _) = tank_closed_form(0.0, 0.0, 0.5, [3.0, 0.0], 1.0);
    assert_close("isothermal c_A(1 s)", a_without, a, 1e-6, 0.0);
}
