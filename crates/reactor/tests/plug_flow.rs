//! Plug-flow reactors (a parcel followed along the tube): checked against the textbook closed
//! forms of the ideal plug flow (first-order design equation, variable-density design
//! equation, adiabatic temperature-conversion line, heat exchanger), the residence time as
//! the integral of rho A / mdot along the tube, and concentrations following the pressure.

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::{parse_mechanism, GAS_CONSTANT as R};
use stoik_reactor::{
    simulate_plug_flow, AxialProfile, BatchSystem, Constraint, Energy, IntegrationError,
    LinearAlgebra, PlugFlow, PlugFlowProfiles, PlugOutputs, ReactorError, ReactorModel,
    WallExchange,
};

fn plug_model(energy: Energy, plug: PlugFlow) -> ReactorModel {
    ReactorModel {
        constraint: Constraint::ConstantPressure,
        energy,
        plug: Some(plug),
        ..Default::default()
    }
}

fn run(
    kinetics: &Kinetics,
    model: &ReactorModel,
    temperature_k: f64,
    initial: &[f64],
    outputs: PlugOutputs,
    rtol: f64,
) -> PlugFlowProfiles {
    let opts = options(kinetics.n_species(), rtol, 1e-14, LinearAlgebra::Dense);
    simulate_plug_flow(kinetics, model, temperature_k, initial, &outputs, &opts)
        .unwrap_or_else(|e| panic!("{e}"))
}

/// Two species with constant heat capacities cp/R = 3.5 (A) and 4.5 (B), B lying 6000 K * R
/// below A in enthalpy (a6 = H(0)/R), and a third, C, of cp/R = 3.5; step `equation` with
/// Arrhenius parameters (activation energy in K).
fn constant_cp(equation: &str, prefactor: f64, ea_k: f64) -> Kinetics {
    let text = format!(
        r#"stoik_mechanism = 1
[units]
activation_energy = "K"
[[species]]
name = "A"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [3.5, 0, 0, 0, 0, 0, 0], coefficients_high = [3.5, 0, 0, 0, 0, 0, 0] }}
[[species]]
name = "B"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [4.5, 0, 0, 0, 0, -6000, 0], coefficients_high = [4.5, 0, 0, 0, 0, -6000, 0] }}
[[species]]
name = "C"
thermo = {{ temperature_ranges_k = [100, 1000, 5000], coefficients_low = [3.5, 0, 0, 0, 0, 0, 0], coefficients_high = [3.5, 0, 0, 0, 0, 0, 0] }}
[[step]]
equation = "{equation}"
forward = {{ prefactor = {prefactor}, activation_energy = {ea_k} }}
"#
    );
    let mech = parse_mechanism(&text, "constant-cp.toml")
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    Kinetics::compile(&mech).unwrap_or_else(|e| panic!("{e}"))
}

/// Conversion of A from the specific amounts n_A = c_A / rho (mol/kg), which only reaction
/// changes along a plug flow.
fn conversion(p: &PlugFlowProfiles, plug: &PlugFlow, row: usize) -> f64 {
    let c = &p.profiles.concentrations_mol_per_m3;
    let n_a = |r: usize| c[r][0] / plug.density_kg_per_m3(&c[r]);
    1.0 - n_a(row) / n_a(0)
}

#[test]
fn first_order_step_at_constant_density_follows_the_design_equation() {
    // A -> B, k = 3 1/s, equal molar masses: constant density, constant velocity u, space time
    // tau = z / u. Ideal plug flow, first order: X = 1 - exp(-k tau) (O. Levenspiel, Chemical
    // Reaction Engineering, 3rd ed., ch. 5).
    let k = 3.0;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let (area, mdot, m) = (2e-3, 1e-3, 0.028);
    let c0 = [40.0, 0.0];
    let plug = PlugFlow::new(
        mdot,
        AxialProfile::constant("area", area).unwrap(),
        vec![m, m],
    )
    .unwrap();
    let u = mdot / (c0[0] * m * area);
    let distances = vec![0.0, 0.1, 0.5, 1.0, 2.0];
    let model = plug_model(Energy::Isothermal, plug.clone());
    let p = run(
        &kin,
        &model,
        500.0,
        &c0,
        PlugOutputs::Distances(distances.clone()),
        1e-9,
    );
    for (row, &z) in distances.iter().enumerate().skip(1) {
        let tau = z / u;
        let x = conversion(&p, &plug, row);
        assert_close(&format!("X({z} m)"), x, 1.0 - (-k * tau).exp(), 1e-6, 0.0);
        assert_close(
            &format!("residence time at {z} m"),
            p.profiles.times_s[row],
            tau,
            1e-8,
            0.0,
        );
        assert_eq!(p.distances_m[row], z);
        assert_close("velocity", p.velocities_m_per_s[row], u, 1e-12, 0.0);
    }
}

#[test]
fn expanding_gas_reaches_the_conversion_of_the_variable_density_design_equation() {
    // A -> 2 B at constant T and P from pure A: eps_A = 1. Levenspiel (ch. 5, plug flow with
    // a change in density, first order): k tau = (1 + eps_A) ln(1 / (1 - X)) - eps_A X with
    // the space time tau = V / v0 = A z / v0, v0 = mdot / rho0 the inlet volumetric flow. The
    // distance where X = 0.5 is therefore z = v0 (2 ln 2 - 0.5) / (k A).
    let k = 5.0;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 2.0)], k)]);
    let (area, mdot, m) = (1e-3, 2e-4, 0.04);
    let c0 = [25.0, 0.0];
    let plug = PlugFlow::new(
        mdot,
        AxialProfile::constant("area", area).unwrap(),
        vec![m, m / 2.0],
    )
    .unwrap();
    let v0 = mdot / (c0[0] * m);
    let eps = 1.0;
    let design = |x: f64| ((1.0 + eps) * (1.0 / (1.0 - x)).ln() - eps * x) / k;
    let targets = [0.1, 0.5, 0.9];
    let mut distances = vec![0.0];
    distances.extend(targets.iter().map(|&x| v0 * design(x) / area));
    let model = plug_model(Energy::Isothermal, plug.clone());
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let opts = options(2, 1e-10, 1e-14, la);
        let p = simulate_plug_flow(
            &kin,
            &model,
            600.0,
            &c0,
            &PlugOutputs::Distances(distances.clone()),
            &opts,
        )
        .unwrap_or_else(|e| panic!("{e}"));
        for (row, &x) in targets.iter().enumerate() {
            assert_close(
                &format!("{la:?} X at z = {:e} m", distances[row + 1]),
                conversion(&p, &plug, row + 1),
                x,
                1e-7,
                0.0,
            );
            // Per unit mass the parcel is a first-order batch: X = 1 - exp(-k t) in the
            // residence time t (mass balance of the parcel; see the plug module's derivation).
            assert_close(
                &format!("{la:?} residence time at X = {x}"),
                p.profiles.times_s[row + 1],
                -(1.0 - x).ln() / k,
                1e-7,
                0.0,
            );
        }
    }
}

#[test]
fn adiabatic_plug_flow_follows_the_temperature_conversion_line() {
    // A -> B, adiabatic, constant species heat capacities (cp/R 3.5 and 4.5, Delta H(0) =
    // -6000 K R): the steady-flow energy balance of an adiabatic reactor (H. S. Fogler,
    // Elements of Chemical Reaction Engineering, 4th ed., ch. 8, eq. 8-29 with Delta cp) gives
    // T = (X (-Delta H(T_R)) + cp_A T0 + X Delta cp T_R) / (cp_A + X Delta cp) with T_R = 0:
    // T = (6000 X + 3.5 T0) / (3.5 + X).
    let kin = constant_cp("A -> B", 2e7, 10000.0);
    let (t0, pressure) = (800.0, 1e5);
    let c_a = pressure / (R * t0);
    let m = 0.03;
    let plug = PlugFlow::new(
        5e-4,
        AxialProfile::constant("area", 1e-3).unwrap(),
        vec![m, m, m],
    )
    .unwrap();
    let model = plug_model(Energy::Adiabatic, plug.clone());
    let distances: Vec<f64> = (0..=20).map(|i| 0.05 * i as f64).collect();
    let p = run(
        &kin,
        &model,
        t0,
        &[c_a, 0.0, 0.0],
        PlugOutputs::Distances(distances),
        1e-10,
    );
    let last = p.distances_m.len() - 1;
    let x_end = conversion(&p, &plug, last);
    assert!(
        x_end > 0.5,
        "the test should reach a sizeable conversion: {x_end}"
    );
    for row in 1..=last {
        let x = conversion(&p, &plug, row);
        let expected = (6000.0 * x + 3.5 * t0) / (3.5 + x);
        assert_close(
            &format!("T at X = {x}"),
            p.profiles.temperatures_k[row],
            expected,
            1e-8,
            0.0,
        );
    }
}

#[test]
fn residence_time_is_the_integral_of_density_times_area_over_the_mass_flow() {
    // No reaction that changes the density (A -> B, equal molar masses, isothermal): the
    // residence time to z is the integral of rho A(z) / mdot dz. The area is A0 up to half the
    // length and doubles linearly to the exit, so to the exit
    // t = rho / mdot (A0 L/2 + (A0 + 2 A0)/2 L/2) = 1.25 rho A0 L / mdot (trapezoid, exact for
    // a linear integrand). The conversion is 1 - exp(-k t) (first order in the parcel's time).
    let k = 0.8;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let (a0, len, mdot, m) = (1e-3, 2.0, 3e-4, 0.029);
    let area =
        AxialProfile::new("area", vec![0.0, len / 2.0, len], vec![a0, a0, 2.0 * a0]).unwrap();
    let plug = PlugFlow::new(mdot, area, vec![m, m]).unwrap();
    let c0 = [30.0, 5.0];
    let rho = (c0[0] + c0[1]) * m;
    let distances = vec![0.0, 0.5, 1.0, 1.5, 2.0];
    let model = plug_model(Energy::Isothermal, plug);
    let p = run(
        &kin,
        &model,
        400.0,
        &c0,
        PlugOutputs::Distances(distances.clone()),
        1e-11,
    );
    let integral = |z: f64| {
        let first = z.min(len / 2.0) * a0;
        let beyond = (z - len / 2.0).max(0.0);
        let a_z = a0 * (1.0 + beyond / (len / 2.0));
        first + beyond * (a0 + a_z) / 2.0
    };
    assert_close(
        "the closed form of the exit",
        integral(len),
        1.25 * a0 * len,
        1e-15,
        0.0,
    );
    for (row, &z) in distances.iter().enumerate() {
        let t = rho * integral(z) / mdot;
        assert_close(
            &format!("t({z} m)"),
            p.profiles.times_s[row],
            t,
            1e-8,
            1e-15,
        );
        let c_a = c0[0] * (-k * t).exp();
        assert_close(
            &format!("c_A({z} m)"),
            p.profiles.concentrations_mol_per_m3[row][0],
            c_a,
            1e-8,
            0.0,
        );
    }
}

#[test]
fn wall_exchange_brings_the_gas_to_the_wall_temperature_exponentially() {
    // Inert gas (species C; the step B -> C has no B to act on) in a circular tube with wall
    // coefficient U at T_wall: the heat-exchanger closed form for constant cp (e.g. F. P.
    // Incropera, D. P. DeWitt, Fundamentals of Heat and Mass Transfer, 6th ed., eq. 8.42b,
    // constant surface temperature): T_wall - T = (T_wall - T0) exp(-U P z / (mdot cp)), with P
    // the perimeter and cp the specific heat (J/(kg K)).
    let kin = constant_cp("B -> C", 1e3, 0.0);
    let (t0, t_wall, pressure, u_wall) = (400.0, 900.0, 2e5, 40.0);
    let m = 0.028;
    let (area, mdot) = (3e-4, 2e-3);
    let perimeter = 2.0 * (std::f64::consts::PI * area).sqrt();
    let cp_mass = 3.5 * R / m;
    let c = pressure / (R * t0);
    for given in [None, Some(perimeter)] {
        let plug = PlugFlow::new(
            mdot,
            AxialProfile::constant("area", area).unwrap(),
            vec![m, m, m],
        )
        .unwrap()
        .with_wall(WallExchange::new(u_wall, t_wall, given).unwrap());
        let model = plug_model(Energy::Adiabatic, plug);
        let distances: Vec<f64> = (0..=10).map(|i| 0.4 * i as f64).collect();
        let p = run(
            &kin,
            &model,
            t0,
            &[0.0, 0.0, c],
            PlugOutputs::Distances(distances.clone()),
            1e-10,
        );
        for (row, &z) in distances.iter().enumerate() {
            let expected = (t_wall - t0) * (-u_wall * perimeter * z / (mdot * cp_mass)).exp();
            assert_close(
                &format!("T_wall - T at {z} m (perimeter {given:?})"),
                t_wall - p.profiles.temperatures_k[row],
                expected,
                1e-7,
                0.0,
            );
        }
        let last = distances.len() - 1;
        assert!(t_wall - p.profiles.temperatures_k[last] < 0.5 * (t_wall - t0));
    }
}

#[test]
fn concentrations_follow_the_pressure_profile_at_fixed_temperature() {
    // Inert gas at fixed T along a pressure drop: the ideal-gas law at fixed composition and
    // temperature, c_i = x_i P / (R T), so c_i(z) = c_i(0) P(z) / P(0). The residence time is
    // the integral of rho A / mdot dz with rho = M P / (R T): trapezoids of the linear pieces.
    let kin = constant_cp("B -> C", 1e3, 0.0);
    let t = 500.0;
    let zs = vec![0.0, 1.0, 3.0];
    let ps = vec![3e5, 2.4e5, 1.5e5];
    let pressure = AxialProfile::new("pressure", zs.clone(), ps.clone()).unwrap();
    let (area, mdot, m) = (5e-4, 1e-3, 0.032);
    let plug = PlugFlow::new(
        mdot,
        AxialProfile::constant("area", area).unwrap(),
        vec![m, m, m],
    )
    .unwrap()
    .with_pressure_profile(pressure.clone());
    let x = [0.25, 0.75];
    let c_total = ps[0] / (R * t);
    let c0 = [x[0] * c_total, 0.0, x[1] * c_total];
    let distances = vec![0.0, 0.5, 1.0, 2.0, 3.0];
    let model = plug_model(Energy::Isothermal, plug);
    let p = run(
        &kin,
        &model,
        t,
        &c0,
        PlugOutputs::Distances(distances.clone()),
        1e-10,
    );
    let pressure_integral = |z: f64| {
        let mut sum = 0.0;
        for i in 0..zs.len() - 1 {
            let (a, b) = (zs[i], zs[i + 1].min(z));
            if b > a {
                sum += (b - a) * (pressure.value_at(a) + pressure.value_at(b)) / 2.0;
            }
        }
        sum
    };
    for (row, &z) in distances.iter().enumerate() {
        let ratio = pressure.value_at(z) / ps[0];
        let c = &p.profiles.concentrations_mol_per_m3[row];
        assert_close(&format!("c_A({z} m)"), c[0], c0[0] * ratio, 1e-8, 0.0);
        assert_close(&format!("c_C({z} m)"), c[2], c0[2] * ratio, 1e-8, 0.0);
        let t_res = m * area * pressure_integral(z) / (R * t * mdot);
        assert_close(
            &format!("t({z} m)"),
            p.profiles.times_s[row],
            t_res,
            1e-8,
            1e-15,
        );
    }
}

#[test]
fn outputs_in_residence_time_carry_the_distance() {
    // A -> B at constant density: z = u t (Levenspiel ch. 5, as above).
    let k = 2.0;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let (area, mdot, m) = (1e-3, 1e-3, 0.03);
    let plug = PlugFlow::new(
        mdot,
        AxialProfile::constant("area", area).unwrap(),
        vec![m, m],
    )
    .unwrap();
    let c0 = [20.0, 0.0];
    let u = mdot / (c0[0] * m * area);
    let times = vec![0.0, 0.1, 0.4, 1.0];
    let model = plug_model(Energy::Isothermal, plug);
    let p = run(
        &kin,
        &model,
        300.0,
        &c0,
        PlugOutputs::ResidenceTimes(times.clone()),
        1e-10,
    );
    assert_eq!(p.profiles.times_s, times);
    for (row, &t) in times.iter().enumerate() {
        assert_close(&format!("z({t} s)"), p.distances_m[row], u * t, 1e-9, 1e-15);
        assert_close(
            &format!("c_A({t} s)"),
            p.profiles.concentrations_mol_per_m3[row][0],
            c0[0] * (-k * t).exp(),
            1e-8,
            0.0,
        );
    }
}

#[test]
fn malformed_plug_flows_are_refused() {
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1.0)]);
    let area = AxialProfile::constant("area", 1e-3).unwrap();
    let opts = options(2, 1e-8, 1e-12, LinearAlgebra::Dense);
    let bad = |e: ReactorError| matches!(e, ReactorError::BadPlugFlow(_));
    assert!(PlugFlow::new(0.0, area.clone(), vec![0.03, 0.03]).is_err_and(bad));
    assert!(PlugFlow::new(1e-3, area.clone(), vec![0.03, -1.0]).is_err_and(bad));
    assert!(AxialProfile::new("area", vec![0.0, 1.0], vec![1e-3, -1e-3]).is_err_and(bad));
    assert!(AxialProfile::new("area", vec![0.0, 0.0], vec![1e-3, 1e-3]).is_err_and(bad));
    assert!(WallExchange::new(-1.0, 300.0, None).is_err_and(bad));
    let plug = PlugFlow::new(1e-3, area.clone(), vec![0.03, 0.03]).unwrap();
    // Constant volume, wrong number of molar masses, a wall without the energy balance.
    let cv = ReactorModel {
        plug: Some(plug.clone()),
        ..Default::default()
    };
    assert!(BatchSystem::with_model(&kin, &cv, 300.0, &opts).is_err_and(bad));
    let short = plug_model(
        Energy::Isothermal,
        PlugFlow::new(1e-3, area.clone(), vec![0.03]).unwrap(),
    );
    assert!(BatchSystem::with_model(&kin, &short, 300.0, &opts).is_err_and(bad));
    let walled = plug_model(
        Energy::Isothermal,
        plug.clone()
            .with_wall(WallExchange::new(10.0, 300.0, None).unwrap()),
    );
    assert!(BatchSystem::with_model(&kin, &walled, 300.0, &opts).is_err_and(bad));
    // Outputs must start at the inlet; time outputs go through integrate_plug_flow.
    let model = plug_model(Energy::Isothermal, plug);
    let outputs = PlugOutputs::Distances(vec![0.5, 1.0]);
    let err = simulate_plug_flow(&kin, &model, 300.0, &[1.0, 0.0], &outputs, &opts);
    assert!(matches!(
        err,
        Err(IntegrationError::InvalidArgument(
            ReactorError::BadPlugFlow(_)
        ))
    ));
    let mut system = BatchSystem::with_model(&kin, &model, 300.0, &opts).unwrap();
    assert!(system.integrate(&[1.0, 0.0], &[0.0, 1.0]).is_err());
    // Neither a stepping session nor sensitivities: the distance state has no place there.
    assert!(system.integrator(&[1.0, 0.0]).is_err_and(bad));
    let sensitivity = stoik_reactor::forward_sensitivities(
        &kin,
        &model,
        300.0,
        &[1.0, 0.0],
        &[0.0, 1.0],
        &opts,
        &[0],
        &[],
    );
    assert!(sensitivity.is_err());
}
