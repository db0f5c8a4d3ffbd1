//! Networks of constant-density stirred tanks: tanks in series, recycles, splits and
//! second-order steps against the textbook closed forms of the stirred tank, a start-up
//! transient against the linear ODE's solution, the steady state of the network solver, and
//! the energy and element balances of a whole network over its inflows and outflows.

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::{Arrhenius, GAS_CONSTANT as R};
use stoik_reactor::{
    network_steady_state, simulate_network, Constraint, Energy, HeatExchange, LinearAlgebra,
    NetworkError, NetworkProblem, NetworkTank, SteadyOptions, SteadyPath, Stream, TankNetwork,
    TemperatureHistory,
};
use stoik_thermo::Nasa7;

const T_HELD: f64 = 330.0;

fn feed(to: &str, q: f64, c: Vec<f64>, t: f64) -> Stream {
    Stream::Feed {
        to: to.into(),
        volumetric_flow_m3_per_s: q,
        inlet_mol_per_m3: c,
        inlet_temperature_k: t,
    }
}

fn transfer(from: &str, to: &str, q: f64) -> Stream {
    Stream::Transfer {
        from: from.into(),
        to: to.into(),
        volumetric_flow_m3_per_s: q,
    }
}

fn outlet(from: &str, q: f64) -> Stream {
    Stream::Outlet {
        from: from.into(),
        volumetric_flow_m3_per_s: q,
    }
}

/// `count` equal isothermal tanks of total volume `volume` in series, fed `q` of `c_in`.
fn series(count: usize, volume: f64, q: f64, c_in: Vec<f64>) -> TankNetwork {
    let n = c_in.len();
    let names: Vec<String> = (0..count).map(|i| format!("t{i}")).collect();
    let tanks = names
        .iter()
        .map(|name| NetworkTank::new(name, volume / count as f64, vec![0.0; n], T_HELD))
        .collect();
    let mut streams = vec![feed(&names[0], q, c_in, T_HELD)];
    for pair in names.windows(2) {
        streams.push(transfer(&pair[0], &pair[1], q));
    }
    streams.push(outlet(&names[count - 1], q));
    TankNetwork::new(n, tanks, streams).unwrap()
}

fn steady_options(n: usize) -> SteadyOptions {
    let mut o = SteadyOptions::new(n);
    o.relative_tolerance = 1e-12;
    o
}

/// The last row's concentration of species `i` in tank `tank`.
fn last(p: &stoik_reactor::NetworkProfiles, tank: usize, i: usize) -> f64 {
    p.tanks[tank].concentrations_mol_per_m3.last().unwrap()[i]
}

#[test]
fn tanks_in_series_tend_to_plug_flow() {
    // N equal first-order tanks in series of total residence time tau: the outlet is
    // c_N / c_0 = (1 + k tau / N)^-N (O. Levenspiel, Chemical Reaction Engineering, 3rd ed.,
    // ch. 6), which tends to the plug-flow result exp(-k tau) as N grows, the error falling
    // like 1/N (the next term of the expansion of (1 + x/N)^-N is x^2 exp(-x) / (2N)).
    let (k, volume, q, c0) = (0.5, 4.0, 1.0, 2.0);
    let tau = volume / q;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let plug = (-k * tau).exp();
    let mut errors = Vec::new();
    for count in [1usize, 2, 5, 10, 50] {
        let net = series(count, volume, q, vec![c0, 0.0]);
        // Transient: 20 overall residence times from empty tanks (the slowest mode decays
        // like exp(-(k + N / tau) t) times a polynomial, far below the tolerance by then).
        let la = if count > 10 {
            LinearAlgebra::Sparse
        } else {
            LinearAlgebra::Dense
        };
        let p = simulate_network(
            &kin,
            &net,
            &[0.0, 20.0 * tau],
            &options(2, 1e-10, 1e-14, la),
        )
        .unwrap();
        let expected = (1.0 + k * tau / count as f64).powi(-(count as i32));
        let ratio = last(&p, count - 1, 0) / c0;
        assert_close(
            &format!("N = {count}: transient outlet"),
            ratio,
            expected,
            1e-8,
            0.0,
        );
        // Steady state of the network solver (Newton on the whole network).
        let s = network_steady_state(&kin, &net, &steady_options(2)).unwrap();
        let outlet = s.tanks[count - 1].concentrations_mol_per_m3[0] / c0;
        assert_close(
            &format!("N = {count}: steady outlet"),
            outlet,
            expected,
            1e-10,
            0.0,
        );
        // Every A that reacted became B.
        assert_close(
            &format!("N = {count}: B at the outlet"),
            s.tanks[count - 1].concentrations_mol_per_m3[1],
            c0 * (1.0 - expected),
            1e-10,
            1e-14,
        );
        let error = (outlet - plug).abs();
        println!(
            "N = {count:2}: c_N/c_0 = {outlet:.12}, |error against exp(-k tau)| = {error:.3e}"
        );
        errors.push((count, error));
    }
    for pair in errors.windows(2) {
        assert!(pair[1].1 < pair[0].1, "error does not shrink: {errors:?}");
    }
    // First-order convergence in 1/N: N times the error tends to x^2 exp(-x) / 2, x = k tau.
    let (count, error) = errors[errors.len() - 1];
    let x = k * tau;
    assert_close(
        "N error at N = 50",
        count as f64 * error,
        x * x * (-x).exp() / 2.0,
        0.05,
        0.0,
    );
}

#[test]
fn a_recycle_around_a_stirred_tank_changes_nothing() {
    // A well-mixed tank's outlet does not depend on a recycle of its own contents (textbook
    // fact; Levenspiel ch. 6): c = c_in / (1 + k V / q) with and without it.
    let (k, volume, q, r, c_in) = (0.3, 2.0, 0.5, 4.0, 3.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let expected = c_in / (1.0 + k * volume / q);
    for recycle in [false, true] {
        let tanks = vec![NetworkTank::new("r", volume, vec![1.0, 0.0], T_HELD)];
        let mut streams = vec![feed("r", q, vec![c_in, 0.0], T_HELD), outlet("r", q)];
        if recycle {
            streams.push(transfer("r", "r", r));
        }
        let net = TankNetwork::new(2, tanks, streams).unwrap();
        let s = network_steady_state(&kin, &net, &steady_options(2)).unwrap();
        assert_close(
            &format!("recycle {recycle}"),
            s.tanks[0].concentrations_mol_per_m3[0],
            expected,
            1e-10,
            0.0,
        );
        let p = simulate_network(
            &kin,
            &net,
            &[0.0, 40.0 * volume / q],
            &options(2, 1e-10, 1e-14, LinearAlgebra::Dense),
        )
        .unwrap();
        assert_close(
            &format!("recycle {recycle}, transient"),
            last(&p, 0, 0),
            expected,
            1e-8,
            0.0,
        );
    }
}

#[test]
fn a_recycle_to_an_earlier_tank_matches_the_linear_balances() {
    // Two tanks, the second's contents partly sent back to the first. The steady balances
    // (Levenspiel ch. 6, one per tank) are linear:
    //   q c0 + r c2 = (q + r + k V1) c1,   (q + r) c1 = (q + r + k V2) c2,
    // solved here by substitution.
    let (k, v1, v2, q, r, c0) = (0.4, 1.0, 3.0, 0.5, 1.5, 2.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let tanks = vec![
        NetworkTank::new("first", v1, vec![0.0; 2], T_HELD),
        NetworkTank::new("second", v2, vec![0.0; 2], T_HELD),
    ];
    let streams = vec![
        feed("first", q, vec![c0, 0.0], T_HELD),
        transfer("first", "second", q + r),
        transfer("second", "first", r),
        outlet("second", q),
    ];
    let net = TankNetwork::new(2, tanks, streams).unwrap();
    let g = (q + r) / (q + r + k * v2); // c2 = g c1
    let c1 = q * c0 / (q + r + k * v1 - r * g);
    let c2 = g * c1;
    let s = network_steady_state(&kin, &net, &steady_options(2)).unwrap();
    assert_close(
        "c1",
        s.tanks[0].concentrations_mol_per_m3[0],
        c1,
        1e-10,
        0.0,
    );
    assert_close(
        "c2",
        s.tanks[1].concentrations_mol_per_m3[0],
        c2,
        1e-10,
        0.0,
    );
}

#[test]
fn a_split_into_parallel_tanks_follows_each_branch() {
    // A tank whose outflow splits into two tanks of different volumes: each branch is a
    // first-order tank fed by the first one, c_b = c_a / (1 + k V_b / q_b) (Levenspiel ch. 6).
    let (k, va, vb, vc, q1, q2, c0) = (0.7, 1.0, 2.0, 0.5, 0.3, 0.9, 5.0);
    let q = q1 + q2;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let tanks = vec![
        NetworkTank::new("a", va, vec![0.0; 2], T_HELD),
        NetworkTank::new("b", vb, vec![0.0; 2], T_HELD),
        NetworkTank::new("c", vc, vec![0.0; 2], T_HELD),
    ];
    let streams = vec![
        feed("a", q, vec![c0, 0.0], T_HELD),
        transfer("a", "b", q1),
        transfer("a", "c", q2),
        outlet("b", q1),
        outlet("c", q2),
    ];
    let net = TankNetwork::new(2, tanks, streams).unwrap();
    let ca = c0 / (1.0 + k * va / q);
    let s = network_steady_state(&kin, &net, &steady_options(2)).unwrap();
    assert_close("a", s.tanks[0].concentrations_mol_per_m3[0], ca, 1e-10, 0.0);
    let b = ca / (1.0 + k * vb / q1);
    let c = ca / (1.0 + k * vc / q2);
    assert_close("b", s.tanks[1].concentrations_mol_per_m3[0], b, 1e-10, 0.0);
    assert_close("c", s.tanks[2].concentrations_mol_per_m3[0], c, 1e-10, 0.0);
    let p = simulate_network(
        &kin,
        &net,
        &[0.0, 60.0],
        &options(2, 1e-10, 1e-14, LinearAlgebra::Sparse),
    )
    .unwrap();
    assert_close("b, transient", last(&p, 1, 0), b, 1e-8, 0.0);
    assert_close("c, transient", last(&p, 2, 0), c, 1e-8, 0.0);
}

#[test]
fn second_order_tanks_in_series_solve_the_quadratic_per_tank() {
    // A + B -> C at rate k c_A c_B. Each steady tank of residence time tau with inlet
    // (a, b) converts the extent x of k tau (a - x)(b - x) = x (second-order design
    // equation, Levenspiel ch. 5): x = (s - sqrt(s^2 - 4 (k tau)^2 a b)) / (2 k tau),
    // s = k tau (a + b) + 1, the root with x <= min(a, b). Three tanks of different volumes.
    let k = 0.08;
    let kin = kinetics(
        &["A", "B", "C"],
        vec![step(&[(0, 1.0), (1, 1.0)], &[(2, 1.0)], k)],
    );
    let volumes = [1.0, 2.5, 0.7];
    let q = 0.4;
    let (a0, b0) = (10.0, 6.0);
    let names = ["x", "y", "z"];
    let tanks = names
        .iter()
        .zip(volumes)
        .map(|(name, v)| NetworkTank::new(name, v, vec![0.0; 3], T_HELD))
        .collect();
    let streams = vec![
        feed("x", q, vec![a0, b0, 0.0], T_HELD),
        transfer("x", "y", q),
        transfer("y", "z", q),
        outlet("z", q),
    ];
    let net = TankNetwork::new(3, tanks, streams).unwrap();
    let s = network_steady_state(&kin, &net, &steady_options(3)).unwrap();
    let p = simulate_network(
        &kin,
        &net,
        &[0.0, 400.0],
        &options(3, 1e-10, 1e-14, LinearAlgebra::Dense),
    )
    .unwrap();
    let (mut a, mut b, mut c) = (a0, b0, 0.0);
    for (j, v) in volumes.iter().enumerate() {
        let kt = k * v / q;
        let sum = kt * (a + b) + 1.0;
        let x = (sum - (sum * sum - 4.0 * kt * kt * a * b).sqrt()) / (2.0 * kt);
        a -= x;
        b -= x;
        c += x;
        let got = &s.tanks[j].concentrations_mol_per_m3;
        assert_close(&format!("tank {j}: A"), got[0], a, 1e-10, 0.0);
        assert_close(&format!("tank {j}: B"), got[1], b, 1e-10, 0.0);
        assert_close(&format!("tank {j}: C"), got[2], c, 1e-10, 0.0);
        assert_close(
            &format!("tank {j}: A, transient"),
            last(&p, j, 0),
            a,
            1e-8,
            0.0,
        );
    }
}

#[test]
fn start_up_of_the_first_tank_follows_the_step_response() {
    // An empty first-order tank fed c_in from t = 0: dc/dt = (c_in - c)/tau - k c, so
    // c(t) = s (1 - exp(-(k + 1/tau) t)), s = c_in / (1 + k tau) (Levenspiel ch. 5, the
    // linear ODE's solution). The second tank in series does not act back on the first.
    let (k, volume, q, c_in) = (1.5, 0.8, 0.4, 2.0);
    let tau = volume / q;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let tanks = vec![
        NetworkTank::new("first", volume, vec![0.0; 2], T_HELD),
        NetworkTank::new("second", 2.0 * volume, vec![0.0; 2], T_HELD),
    ];
    let streams = vec![
        feed("first", q, vec![c_in, 0.0], T_HELD),
        transfer("first", "second", q),
        outlet("second", q),
    ];
    let net = TankNetwork::new(2, tanks, streams).unwrap();
    let times = [0.0, 0.05, 0.2, 0.5, 1.0, 2.0, 5.0];
    let s = c_in / (1.0 + k * tau);
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let p = simulate_network(&kin, &net, &times, &options(2, 1e-10, 1e-14, la)).unwrap();
        assert_eq!(p.times_s, times);
        for (row, &t) in p.tanks[0].concentrations_mol_per_m3.iter().zip(&times) {
            let expected = s * (1.0 - (-(k + 1.0 / tau) * t).exp());
            assert_close(&format!("{la:?} c_A({t})"), row[0], expected, 1e-8, 1e-13);
        }
    }
}

/// A species with the constant heat capacity of a monatomic ideal gas, cp = 5/2 R (kinetic
/// theory), and enthalpy H = R (5/2 T + h0_over_r).
fn monatomic(h0_over_r: f64) -> Nasa7 {
    let a = [2.5, 0.0, 0.0, 0.0, 0.0, h0_over_r, 4.0];
    Nasa7::new(200.0, 1000.0, 6000.0, a, a).unwrap()
}

/// A + B -> C (Arrhenius), releasing `q` J/mol, in a diluent D; every species with a
/// constant heat capacity.
fn exothermic(pre: f64, ea: f64, q: f64) -> Kinetics {
    let mut m = mechanism(
        &["A", "B", "C", "D"],
        vec![arrhenius_step(
            &[(0, 1.0), (1, 1.0)],
            &[(2, 1.0)],
            Arrhenius {
                pre_exponential_si: pre,
                temperature_exponent: 0.0,
                activation_energy_j_per_mol: ea,
            },
        )],
    );
    for (species, h0) in m.species.iter_mut().zip([q / R, 0.0, 0.0, 0.0]) {
        species.thermo = Some(monatomic(h0));
    }
    Kinetics::compile(&m).unwrap()
}

#[test]
fn an_exothermic_network_balances_energy_and_elements_over_its_streams() {
    // Steady-flow first law over the whole network (Fogler, Elements of Chemical Reaction
    // Engineering, 4th ed., ch. 8; common practice): at a steady state the enthalpy the feeds
    // bring plus the heat the jackets exchange equals the enthalpy the outlets carry, and
    // every element's molar flow in equals its flow out. Elements: X in A and C, Y in B and
    // C (C = AB); D is inert. An adiabatic tank, a jacketed one with a recycle back to the
    // first, two feeds at different temperatures and two outlets.
    let (pre, ea, q_heat) = (2e6, 5e4, 9e4);
    let kin = exothermic(pre, ea, q_heat);
    let h = |i: usize, t: f64| {
        let th = kin.species_thermo()[i].unwrap();
        R * t * th.h_over_rt(t)
    };
    let coolant = TemperatureHistory::new(vec![0.0], vec![320.0]).unwrap();
    let ua = 400.0;
    let jacket = HeatExchange::total(ua, coolant).unwrap();
    let tanks = vec![
        NetworkTank::new("hot", 0.5, vec![0.0, 0.0, 0.0, 40.0], 380.0)
            .with_energy(Energy::Adiabatic),
        NetworkTank::new("cooled", 1.0, vec![0.0, 0.0, 0.0, 40.0], 360.0)
            .with_energy(Energy::HeatExchange(jacket)),
    ];
    let feeds = [
        ("hot", 0.02, vec![3.0, 0.0, 0.0, 37.0], 350.0),
        ("cooled", 0.01, vec![0.0, 4.0, 0.0, 36.0], 300.0),
    ];
    let mut streams: Vec<Stream> = feeds
        .iter()
        .map(|(to, q, c, t)| feed(to, *q, c.clone(), *t))
        .collect();
    streams.extend([
        transfer("hot", "cooled", 0.05),
        transfer("cooled", "hot", 0.03),
        outlet("cooled", 0.025),
        outlet("cooled", 0.005),
    ]);
    let net = TankNetwork::new(4, tanks, streams).unwrap();
    let s = network_steady_state(&kin, &net, &steady_options(4)).unwrap();
    let (t_hot, t_cooled) = (s.tanks[0].temperature_k, s.tanks[1].temperature_k);
    let out = &s.tanks[1].concentrations_mol_per_m3;
    // Every species has the same molar heat capacity: the inflows of the adiabatic tank mix
    // at the mole-weighted mean temperature, and the reaction heats the tank above it.
    let (feed_moles, recycle_moles) = (0.02 * 40.0, 0.03 * out.iter().sum::<f64>());
    let mixed = (feed_moles * 350.0 + recycle_moles * t_cooled) / (feed_moles + recycle_moles);
    assert!(
        t_hot > mixed + 1.0,
        "the adiabatic tank warms above its mixed inflow ({t_hot} K against {mixed} K)"
    );
    let out_flow = 0.03;
    let enthalpy_in: f64 = feeds
        .iter()
        .map(|(_, q, c, t)| q * (0..4).map(|i| c[i] * h(i, *t)).sum::<f64>())
        .sum();
    let exchanged = ua * (320.0 - t_cooled);
    let enthalpy_out = out_flow * (0..4).map(|i| out[i] * h(i, t_cooled)).sum::<f64>();
    let magnitude = enthalpy_in.abs() + exchanged.abs() + enthalpy_out.abs();
    let energy_error = (enthalpy_in + exchanged - enthalpy_out).abs() / magnitude;
    println!("energy balance: in {enthalpy_in:e} W + jacket {exchanged:e} W, out {enthalpy_out:e} W, relative error {energy_error:.1e}");
    assert!(
        energy_error < 1e-10,
        "energy balance error {energy_error:e}"
    );
    assert!(exchanged < 0.0, "the jacket removes heat ({exchanged} W)");
    for (element, atoms) in [("X", [1.0, 0.0, 1.0, 0.0]), ("Y", [0.0, 1.0, 1.0, 0.0])] {
        let flow = |c: &[f64]| -> f64 { c.iter().zip(atoms).map(|(c, a)| c * a).sum() };
        let inflow: f64 = feeds.iter().map(|(_, q, c, _)| q * flow(c)).sum();
        let outflow = out_flow * flow(out);
        let error = (inflow - outflow).abs() / inflow;
        println!("element {element}: in {inflow:e} mol/s, out {outflow:e} mol/s, relative error {error:.1e}");
        assert!(error < 1e-10, "element {element}: balance error {error:e}");
    }
    // The reaction ran: C leaves the network.
    assert!(out[2] > 0.1, "C at the outlet: {}", out[2]);
    // The transient from the tanks' initial states reaches the same state.
    let p = simulate_network(
        &kin,
        &net,
        &[0.0, 3000.0],
        &options(4, 1e-10, 1e-12, LinearAlgebra::Dense),
    )
    .unwrap();
    assert_close(
        "transient T of the cooled tank",
        *p.tanks[1].temperatures_k.last().unwrap(),
        t_cooled,
        1e-7,
        0.0,
    );
}

#[test]
fn network_steady_state_reports_how_it_converged() {
    // The same network from a guess far off (empty tanks) converges; from its own steady
    // state Newton converges at once. (Closed form: Levenspiel ch. 6, as above.)
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 2.0)]);
    let net = series(3, 3.0, 1.0, vec![1.0, 0.0]);
    let s = network_steady_state(&kin, &net, &steady_options(2)).unwrap();
    assert!(s.scaled_correction < 1.0);
    assert!(s.stability.stable, "{:?}", s.stability);
    // Linear tanks in series: the Jacobian is block triangular with the eigenvalue
    // -(k + 1/tau) = -3 1/s for A and -1/tau = -1 1/s for B in every tank (each a Jordan
    // block of size 3, whose computed eigenvalues scatter by about eps^(1/3)).
    let eigen = &s.stability.eigenvalues_per_s;
    assert_eq!(eigen.len(), 6);
    for (expected, found) in [(-1.0, &eigen[..3]), (-3.0, &eigen[3..])] {
        for (re, im) in found {
            assert_close("eigenvalue", *re, expected, 1e-4, 0.0);
            assert!(im.abs() < 1e-4);
        }
    }
    assert_close(
        "outlet",
        s.tanks[2].concentrations_mol_per_m3[0],
        (1.0f64 + 2.0).powi(-3),
        1e-10,
        0.0,
    );
    let mut o = steady_options(2);
    o.transient_first = true;
    let t = network_steady_state(&kin, &net, &o).unwrap();
    // Newton was skipped: pseudo-transient steps were taken, and the path that converged
    // says whether the time-integration fall-back was needed (with the time it integrated).
    assert!(t.pseudo_transient_steps > 0);
    assert_ne!(t.path, SteadyPath::Newton);
    assert_eq!(
        t.integrated_time_s > 0.0,
        t.path == SteadyPath::TimeIntegration
    );
    println!(
        "transient first: {} after {} pseudo-transient steps, {} Newton iterations, {:e} s integrated",
        t.path.name(),
        t.pseudo_transient_steps,
        t.newton_iterations,
        t.integrated_time_s
    );
    assert_close(
        "outlet after pseudo-transient steps",
        t.tanks[2].concentrations_mol_per_m3[0],
        (1.0f64 + 2.0).powi(-3),
        1e-10,
        0.0,
    );
}

#[test]
fn networks_the_model_cannot_take_are_refused() {
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 2.0)]);
    // A gas tank at constant pressure, and an energy balance without thermochemistry.
    let mut gas = NetworkTank::new("gas", 1.0, vec![0.0; 2], 300.0);
    gas.constraint = Constraint::ConstantPressure;
    let Err(NetworkError::Invalid(problems)) = TankNetwork::new(
        2,
        vec![gas],
        vec![feed("gas", 1.0, vec![1.0, 0.0], 300.0), outlet("gas", 1.0)],
    ) else {
        panic!("a constant-pressure tank was accepted")
    };
    assert!(
        matches!(&problems[..], [NetworkProblem::BadTank { tank: 0, reason, .. }] if reason.contains("constant pressure"))
    );
    let hot = NetworkTank::new("hot", 1.0, vec![0.0; 2], 300.0).with_energy(Energy::Adiabatic);
    let net = TankNetwork::new(
        2,
        vec![hot],
        vec![feed("hot", 1.0, vec![1.0, 0.0], 300.0), outlet("hot", 1.0)],
    )
    .unwrap();
    let Err(NetworkError::Invalid(problems)) = simulate_network(
        &kin,
        &net,
        &[0.0, 1.0],
        &options(2, 1e-6, 1e-12, LinearAlgebra::Dense),
    ) else {
        panic!("an energy balance without thermochemistry was accepted")
    };
    assert_eq!(problems.len(), 2, "{problems:?}");
    // Flow imbalance names the tank and both flows.
    let Err(NetworkError::Invalid(problems)) = TankNetwork::new(
        2,
        vec![NetworkTank::new("leaky", 1.0, vec![0.0; 2], 300.0)],
        vec![
            feed("leaky", 1.0, vec![1.0, 0.0], 300.0),
            outlet("leaky", 0.9),
        ],
    ) else {
        panic!("an imbalance was accepted")
    };
    assert!(matches!(
        &problems[..],
        [NetworkProblem::FlowImbalance { tank: 0, inflow_m3_per_s, outflow_m3_per_s, .. }]
            if *inflow_m3_per_s == 1.0 && *outflow_m3_per_s == 0.9
    ));
}

/// Two equal adiabatic tanks in series holding a constant-density liquid with one
/// first-order exothermic step A -> B, described by `rho cp` and the step's enthalpy.
/// Each tank's steady state solves, with X the conversion within the tank and the tank's
/// inlet at (c_in, T_in), the mole balance c = c_in / (1 + k(T) tau) and the adiabatic
/// energy balance rho cp (T - T_in) = -dH (c_in - c) (the heat-generation / heat-removal
/// construction of a stirred tank, Fogler, "Elements of Chemical Reaction Engineering",
/// ch. 8; from memory). The test solves that one-variable equation for T by bisection on a
/// bracket holding the single (hot) root and compares with the network's steady state.
#[test]
fn adiabatic_liquid_tanks_in_series_match_the_energy_balance_construction() {
    let (pre, ea, dh, rho_cp) = (4e8, 75e3, -6e4, 4.0e6);
    let (c0, t0, tau) = (2000.0, 330.0, 600.0);
    let kin = kinetics(
        &["A", "B"],
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
    let k = |t: f64| pre * (-ea / (R * t)).exp();
    let volume = 1.0;
    let q = volume / tau;
    let tanks = vec![
        NetworkTank::new("first", volume, vec![c0, 0.0], 400.0).with_energy(Energy::Adiabatic),
        NetworkTank::new("second", volume, vec![c0, 0.0], 400.0).with_energy(Energy::Adiabatic),
    ];
    let streams = vec![
        feed("first", q, vec![c0, 0.0], t0),
        transfer("first", "second", q),
        outlet("second", q),
    ];
    let liquid = stoik_reactor::LiquidPhase::per_volume(rho_cp, vec![dh]).unwrap();
    let net = TankNetwork::new(2, tanks, streams)
        .unwrap()
        .with_liquid(liquid);
    let mut options = steady_options(2);
    options.absolute_tolerance_k = 1e-9;
    let s = network_steady_state(&kin, &net, &options).unwrap();
    // The construction, tank by tank: g(T) = rho cp (T - T_in) + dH (c_in - c(T)).
    let mut inlet = (c0, t0);
    for (j, tank) in s.tanks.iter().enumerate() {
        let (c_in, t_in) = inlet;
        let c_of = |t: f64| c_in / (1.0 + k(t) * tau);
        let g = |t: f64| rho_cp * (t - t_in) + dh * (c_in - c_of(t));
        let rise = -dh * c_in / rho_cp;
        let (mut lo, mut hi) = (t_in + 0.5 * rise, t_in + rise + 1.0);
        assert!(g(lo) < 0.0 && g(hi) > 0.0, "tank {j}: bracket");
        for _ in 0..200 {
            let mid = 0.5 * (lo + hi);
            if g(mid) < 0.0 {
                lo = mid;
            } else {
                hi = mid;
            }
        }
        let t = 0.5 * (lo + hi);
        let c = c_of(t);
        eprintln!(
            "tank {j}: T {} against {t}, c_A {} against {c}",
            tank.temperature_k, tank.concentrations_mol_per_m3[0]
        );
        assert!((tank.temperature_k - t).abs() < 1e-7 * t, "tank {j}: T");
        assert!(
            (tank.concentrations_mol_per_m3[0] - c).abs() < 1e-7 * c_in,
            "tank {j}: c_A"
        );
        // A + B is conserved through both tanks.
        let total = tank.concentrations_mol_per_m3.iter().sum::<f64>();
        assert!((total - c0).abs() < 1e-8 * c0, "tank {j}: A + B = {total}");
        inlet = (c, t);
    }
}

/// A jacketed liquid tank (no heat of reaction) whose jacket U A falls from 4 kW/K to zero
/// between 2,000 and 2,100 s (`with_ua_history`): before, the temperature relaxes as
/// `T_ss + (T0 - T_ss) exp(-(q/V + U A/(V rho cp)) t)` with `T_ss` the flow- and
/// jacket-weighted mean of feed and coolant temperatures; after, as `T_f + (T(t2) - T_f)
/// exp(-(q/V) (t - t2))` (linear first-order ODE, Newton's law of cooling with a feed;
/// common practice). The history's points are stops of the solver.
#[test]
fn a_network_jacket_whose_ua_is_switched_off_follows_the_two_exponentials() {
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1e-3)]);
    let (volume, q, rho_cp, ua) = (1.0, 1e-3, 4e6, 4000.0);
    let (t_feed, t_coolant, t0) = (320.0, 280.0, 340.0);
    let coolant = TemperatureHistory::new(vec![0.0], vec![t_coolant]).unwrap();
    let jacket = HeatExchange::total(ua, coolant)
        .and_then(|x| x.with_ua_history(vec![0.0, 2000.0, 2100.0], vec![ua, ua, 0.0]))
        .unwrap();
    let tanks = vec![NetworkTank::new("vessel", volume, vec![1.0, 0.0], t0)
        .with_energy(Energy::HeatExchange(jacket))];
    let streams = vec![
        feed("vessel", q, vec![1.0, 0.0], t_feed),
        outlet("vessel", q),
    ];
    let liquid = stoik_reactor::LiquidPhase::per_volume(rho_cp, vec![0.0]).unwrap();
    let net = TankNetwork::new(2, tanks, streams)
        .unwrap()
        .with_liquid(liquid);
    let times = [0.0, 1000.0, 2000.0, 2100.0, 3000.0, 5000.0];
    let p = simulate_network(
        &kin,
        &net,
        &times,
        &options(2, 1e-10, 1e-12, LinearAlgebra::Dense),
    )
    .unwrap();
    let temps = &p.tanks[0].temperatures_k;
    let (a_on, a_off) = (q / volume + ua / (volume * rho_cp), q / volume);
    let t_ss = (q / volume * t_feed + ua / (volume * rho_cp) * t_coolant) / a_on;
    for (i, &t) in times.iter().enumerate().take(3) {
        let expected = t_ss + (t0 - t_ss) * (-a_on * t).exp();
        assert!(
            (temps[i] - expected).abs() < 1e-7,
            "t = {t}: {} vs {expected}",
            temps[i]
        );
    }
    let t2 = temps[3];
    // The ramp cools less than a held jacket and more than none.
    assert!(t2 > t_ss + (t0 - t_ss) * (-a_on * 2100.0).exp());
    for (i, &t) in times.iter().enumerate().skip(4) {
        let expected = t_feed + (t2 - t_feed) * (-a_off * (t - 2100.0)).exp();
        assert!(
            (temps[i] - expected).abs() < 1e-7,
            "t = {t}: {} vs {expected}",
            temps[i]
        );
    }
}
