//! Continuous stirred tanks: feed and outflow in the species and energy balances, checked
//! against the closed forms of the textbook tank (first- and second-order steps, the
//! variable-volumetric-flow design equation at constant pressure) and the steady-flow first
//! law (adiabatic and cooled tanks).

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::{Arrhenius, GAS_CONSTANT as R};
use stoik_reactor::{
    BatchSystem, Constraint, Energy, HeatExchange, LinearAlgebra, ReactorError, ReactorModel,
    StirredFlow, TemperatureHistory,
};
use stoik_thermo::Nasa7;

fn tank(constraint: Constraint, energy: Energy, flow: StirredFlow) -> ReactorModel {
    ReactorModel {
        constraint,
        energy,
        flow: Some(flow),
        ..Default::default()
    }
}

#[test]
fn first_order_step_approaches_the_design_equation() {
    // A -> B, k = 2 1/s, tau = 0.5 s, feed 3 mol/m3 of A into a tank holding 1 of A and 0.5
    // of B. The linear ODE dc_A/dt = (c_in - c_A)/tau - k c_A has the closed form
    // c_A = s + (c_A0 - s) e^{-(k + 1/tau) t}, s = c_in / (1 + k tau) (the first-order
    // design equation of the stirred tank: O. Levenspiel, Chemical Reaction Engineering, 3rd
    // ed., ch. 5); the total follows dC/dt = (C_in - C)/tau.
    let (k, tau, c_in) = (2.0, 0.5, 3.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let flow = StirredFlow::new(tau, vec![c_in, 0.0], 300.0).unwrap();
    let model = tank(Constraint::ConstantVolume, Energy::Isothermal, flow);
    let c0 = [1.0, 0.5];
    let times = [0.0, 0.1, 0.5, 1.0, 3.0, 10.0];
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system =
            BatchSystem::with_model(&kin, &model, 300.0, &options(2, 1e-10, 1e-14, la)).unwrap();
        let p = system.integrate(&c0, &times).unwrap();
        let s = c_in / (1.0 + k * tau);
        for (row, &t) in p.concentrations_mol_per_m3.iter().zip(&times) {
            let a = s + (c0[0] - s) * (-(k + 1.0 / tau) * t).exp();
            let total = c_in + (c0[0] + c0[1] - c_in) * (-t / tau).exp();
            assert_close(&format!("{la:?} c_A({t})"), row[0], a, 1e-8, 1e-12);
            assert_close(&format!("{la:?} c_B({t})"), row[1], total - a, 1e-8, 1e-12);
        }
    }
}

#[test]
fn second_order_step_reaches_the_quadratic_steady_state() {
    // A + A -> B at rate k c_A^2 (dc_A/dt = -2 k c_A^2): the steady tank solves
    // c_in - c = 2 k tau c^2, c = (-1 + sqrt(1 + 8 k tau c_in)) / (4 k tau) (second-order
    // design equation, Levenspiel ch. 5). Forty residence times from an empty tank.
    let (k, tau, c_in) = (0.7, 2.0, 5.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 2.0)], &[(1, 1.0)], k)]);
    let flow = StirredFlow::new(tau, vec![c_in, 0.0], 300.0).unwrap();
    let model = tank(Constraint::ConstantVolume, Energy::Isothermal, flow);
    let mut system = BatchSystem::with_model(
        &kin,
        &model,
        300.0,
        &options(2, 1e-10, 1e-14, LinearAlgebra::Dense),
    )
    .unwrap();
    let p = system.integrate(&[0.0, 0.0], &[0.0, 40.0 * tau]).unwrap();
    let end = &p.concentrations_mol_per_m3[1];
    let expected = (-1.0 + (1.0 + 8.0 * k * tau * c_in).sqrt()) / (4.0 * k * tau);
    assert_close("steady c_A", end[0], expected, 1e-8, 1e-12);
    // Every A that reacted left as half as much B.
    assert_close("steady c_B", end[1], (c_in - expected) / 2.0, 1e-8, 1e-12);
}

#[test]
fn gas_tank_at_constant_pressure_matches_the_variable_flow_design_equation() {
    // A -> 2 B in the gas phase at fixed T and P, pure A fed: the outflow grows with the
    // moles made. The design equation with v = v0 (1 + eps X), eps = 1 (H. S. Fogler,
    // Elements of Chemical Reaction Engineering, 4th ed., sections 3.4 and 5.2):
    // tau0 = V / v0 = X (1 + eps X) / (k (1 - X)), with c_A / c_A0 = (1 - X) / (1 + eps X).
    // The total concentration stays P / (R T) = c_A0 all along.
    let (k, tau, c_a0) = (1.5, 0.8, 40.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 2.0)], k)]);
    let flow = StirredFlow::new(tau, vec![c_a0, 0.0], 500.0).unwrap();
    let model = tank(Constraint::ConstantPressure, Energy::Isothermal, flow);
    let mut system = BatchSystem::with_model(
        &kin,
        &model,
        500.0,
        &options(2, 1e-10, 1e-12, LinearAlgebra::Dense),
    )
    .unwrap();
    // Start full of inert-free B at the same total concentration.
    let times = [0.0, 0.3, 1.0, 30.0 * tau];
    let p = system.integrate(&[0.0, c_a0], &times).unwrap();
    for (row, t) in p.concentrations_mol_per_m3.iter().zip(&times) {
        assert_close(&format!("total at {t}"), row[0] + row[1], c_a0, 1e-9, 1e-12);
    }
    let end = &p.concentrations_mol_per_m3[3];
    let r = end[0] / c_a0;
    let x = (1.0 - r) / (1.0 + r);
    let tau_design = x * (1.0 + x) / (k * (1.0 - x));
    assert_close("tau from the design equation", tau_design, tau, 1e-8, 0.0);
}

/// A species with the constant heat capacity of a monatomic ideal gas, cp = 5/2 R (kinetic
/// theory), and enthalpy H = R (5/2 T + h0_over_r).
fn monatomic(h0_over_r: f64) -> Nasa7 {
    let a = [2.5, 0.0, 0.0, 0.0, 0.0, h0_over_r, 4.0];
    Nasa7::new(200.0, 1000.0, 6000.0, a, a).unwrap()
}

/// A -> B (Arrhenius) in a diluent D; A lies `q` J/mol above B (exothermic by q).
fn exothermic(pre: f64, ea: f64, q: f64) -> Kinetics {
    let mut m = mechanism(
        &["A", "B", "D"],
        vec![arrhenius_step(
            &[(0, 1.0)],
            &[(1, 1.0)],
            Arrhenius {
                pre_exponential_si: pre,
                temperature_exponent: 0.0,
                activation_energy_j_per_mol: ea,
            },
        )],
    );
    for (species, h0) in m.species.iter_mut().zip([q / R, 0.0, 0.0]) {
        species.thermo = Some(monatomic(h0));
    }
    Kinetics::compile(&m).unwrap()
}

#[test]
fn adiabatic_and_cooled_tanks_satisfy_the_steady_flow_energy_balance() {
    // Steady state of an exothermic first-order step: the species balance
    // c_A = c_in / (1 + k(T) tau), and the steady-flow first law for the constant-density
    // tank, C cp (T - T_in) / tau + U A / V (T - T_c) = q k(T) c_A (the heat-generation and
    // heat-removal lines of C. van Heerden, Ind. Eng. Chem. 45 (1953) 1242; Fogler ch. 8).
    // With cp = 5/2 R and no change in moles both are exact closed forms to check.
    let (pre, ea, q) = (5e6, 8e4, 6e4);
    let kin = exothermic(pre, ea, q);
    let (tau, c_in, diluent, t_in) = (10.0, 2.0, 38.0, 450.0);
    let flow = StirredFlow::new(tau, vec![c_in, 0.0, diluent], t_in).unwrap();
    let coolant = TemperatureHistory::new(vec![0.0], vec![440.0]).unwrap();
    for (label, energy, ua) in [
        ("adiabatic", Energy::Adiabatic, 0.0),
        (
            "cooled",
            Energy::HeatExchange(HeatExchange::new(50.0, coolant.clone()).unwrap()),
            50.0,
        ),
    ] {
        let model = tank(Constraint::ConstantVolume, energy, flow.clone());
        let mut system = BatchSystem::with_model(
            &kin,
            &model,
            t_in,
            &options(3, 1e-10, 1e-14, LinearAlgebra::Dense),
        )
        .unwrap();
        let p = system
            .integrate(&[0.0, 0.0, c_in + diluent], &[0.0, 60.0 * tau])
            .unwrap();
        let (c, t) = (&p.concentrations_mol_per_m3[1], p.temperatures_k[1]);
        let k = pre * (-ea / (R * t)).exp();
        assert_close(
            &format!("{label}: c_A"),
            c[0],
            c_in / (1.0 + k * tau),
            1e-7,
            1e-12,
        );
        let removal = (c_in + diluent) * 2.5 * R * (t - t_in) / tau + ua * (t - 440.0);
        let generation = q * k * c[0];
        assert_close(
            &format!("{label}: heat generated against removed"),
            generation,
            removal,
            1e-6,
            0.0,
        );
        if ua == 0.0 {
            assert!(t > t_in + 1.0, "{label}: the tank warms ({t} K)");
        }
    }
}

#[test]
fn bad_flows_are_refused() {
    assert!(matches!(
        StirredFlow::new(0.0, vec![1.0], 300.0),
        Err(ReactorError::BadFlow(_))
    ));
    assert!(matches!(
        StirredFlow::new(1.0, vec![-1.0], 300.0),
        Err(ReactorError::BadFlow(_))
    ));
    assert!(matches!(
        StirredFlow::new(1.0, vec![1.0], f64::NAN),
        Err(ReactorError::BadFlow(_))
    ));
    // An inlet for the wrong number of species.
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1.0)]);
    let model = tank(
        Constraint::ConstantVolume,
        Energy::Isothermal,
        StirredFlow::new(1.0, vec![1.0], 300.0).unwrap(),
    );
    let err = BatchSystem::with_model(
        &kin,
        &model,
        300.0,
        &options(2, 1e-6, 1e-12, LinearAlgebra::Dense),
    )
    .err()
    .unwrap();
    assert!(matches!(err, ReactorError::BadFlow(_)), "{err}");
}
