//! Semi-batch reactors, jacketed batches at constant pressure and the liquid-phase energy
//! description, against closed forms of their balances.

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::{Arrhenius, GAS_CONSTANT as R};
use stoik_reactor::{
    simulate, Constraint, Energy, Feed, FeedSchedule, HeatExchange, LinearAlgebra, LiquidPhase,
    ReactorError, ReactorModel, SemiBatch, StirredFlow, TemperatureHistory,
};
use stoik_thermo::Nasa7;

/// A species of constant heat capacity `cp_over_r` (dimensionless cp/R) and no enthalpy
/// offset: H = R cp_over_r T.
fn constant_cp(cp_over_r: f64) -> Nasa7 {
    let a = [cp_over_r, 0.0, 0.0, 0.0, 0.0, 0.0, 4.0];
    Nasa7::new(200.0, 1000.0, 6000.0, a, a).unwrap()
}

fn run(
    kin: &Kinetics,
    model: &ReactorModel,
    t0: f64,
    c0: &[f64],
    times: &[f64],
) -> stoik_reactor::Profiles {
    let opts = options(c0.len(), 1e-11, 1e-14, LinearAlgebra::Dense);
    simulate(kin, model, t0, c0, times, &opts).unwrap_or_else(|e| panic!("{e}"))
}

/// Semi-batch, isothermal, constant density: a constant feed of A (concentration c_A0, rate
/// q) into a volume V0 free of A, first-order A -> B. Mole balance (O. Levenspiel, *Chemical
/// Reaction Engineering*, 3rd ed., ch. 5; H. S. Fogler, *Elements of Chemical Reaction
/// Engineering*, 4th ed., sec. 6.6 semibatch reactors): d(n_A)/dt = q c_A0 - k n_A,
/// V = V0 + q t, so n_A = (q c_A0 / k) (1 - e^{-k t}) and c_A = n_A / V. Both forms of the
/// feed (a volumetric stream, a species stream with molar volume 1/c_A0) give it.
#[test]
fn constant_feed_into_first_order_semi_batch_matches_the_closed_form() {
    let k = 2e-3;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let (c_feed, q, v0) = (2000.0, 1e-5, 0.4);
    let end = 3600.0;
    let volumetric = Feed::volumetric(
        vec![c_feed, 0.0],
        FeedSchedule::window(0.0, end, q).unwrap(),
        T,
    )
    .unwrap();
    let species = Feed::species(
        0,
        1.0 / c_feed,
        FeedSchedule::window(0.0, end, q * c_feed).unwrap(),
        T,
    )
    .unwrap();
    let times = [0.0, 60.0, 300.0, 900.0, 1800.0, 3600.0];
    for feed in [volumetric, species] {
        let model = ReactorModel {
            semi_batch: Some(SemiBatch::new(v0, vec![feed.clone()]).unwrap()),
            ..Default::default()
        };
        let p = run(&kin, &model, T, &[0.0, 0.0], &times);
        assert_eq!(p.volumes_m3.len(), times.len());
        for (row, &t) in times.iter().enumerate().skip(1) {
            let v = v0 + q * t;
            let n_a = q * c_feed / k * (1.0 - (-k * t).exp());
            let what = format!("{:?} t = {t}", feed.stream());
            assert_close(&format!("{what} V"), p.volumes_m3[row], v, 1e-9, 0.0);
            let c_a = p.concentrations_mol_per_m3[row][0];
            assert_close(
                &format!("{what} n_A"),
                c_a * p.volumes_m3[row],
                n_a,
                1e-7,
                0.0,
            );
            assert_close(&format!("{what} c_A"), c_a, n_a / v, 1e-7, 0.0);
            // Every mole fed is A or B: n_A + n_B = q c_A0 t.
            let n_b = p.concentrations_mol_per_m3[row][1] * p.volumes_m3[row];
            assert_close(
                &format!("{what} n_A + n_B"),
                n_a + n_b,
                q * c_feed * t,
                1e-7,
                0.0,
            );
        }
    }
}

/// A feed schedule ending before the end of the run: the volume stops at V0 + q t_stop and
/// the amount of A then decays as e^{-k (t - t_stop)} (the same mole balance without feed).
#[test]
fn a_feed_window_stops_the_volume_and_the_feed() {
    let k = 1e-3;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let (c_feed, q, v0, stop) = (1000.0, 2e-5, 1.0, 500.0);
    let feed = Feed::volumetric(
        vec![c_feed, 0.0],
        FeedSchedule::window(0.0, stop, q).unwrap(),
        T,
    )
    .unwrap();
    let model = ReactorModel {
        semi_batch: Some(SemiBatch::new(v0, vec![feed]).unwrap()),
        ..Default::default()
    };
    let times = [0.0, 250.0, 500.0, 800.0, 2000.0];
    let p = run(&kin, &model, T, &[0.0, 0.0], &times);
    let n_stop = q * c_feed / k * (1.0 - (-k * stop).exp());
    for (row, &t) in times.iter().enumerate().skip(1) {
        let (n_a, v) = if t <= stop {
            (q * c_feed / k * (1.0 - (-k * t).exp()), v0 + q * t)
        } else {
            (n_stop * (-k * (t - stop)).exp(), v0 + q * stop)
        };
        assert_close(&format!("V({t})"), p.volumes_m3[row], v, 1e-9, 0.0);
        let n = p.concentrations_mol_per_m3[row][0] * p.volumes_m3[row];
        assert_close(&format!("n_A({t})"), n, n_a, 1e-7, 0.0);
    }
}

/// An inert feed at T_f into an inert batch at T0, adiabatic, constant heat capacities: the
/// enthalpy balance of the open system (Fogler, sec. 11.2 / 13.5, energy balance with feed
/// streams) gives the mixing rule T = (n0 cp0 T0 + F t cp_f T_f) / (n0 cp0 + F t cp_f).
/// Checked at constant density with ideal-gas thermochemistry, at constant pressure (where
/// also V = n R T / P), and in the liquid description (T = (V0 T0 + q t T_f)/(V0 + q t)).
#[test]
fn feed_enthalpy_follows_the_mixing_rule() {
    // Species: the batch's inert B (cp = 3.5 R) and the fed inert F (cp = 2.5 R); an
    // irreversible step of negligible rate keeps the mechanism valid.
    let mut m = mechanism(&["B", "F"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1e-30)]);
    m.species[0].thermo = Some(constant_cp(3.5));
    m.species[1].thermo = Some(constant_cp(2.5));
    let kin = Kinetics::compile(&m).unwrap();
    let (t0, tf, c0, cf, q, v0) = (300.0, 450.0, 40.0, 30.0, 2e-4, 0.5);
    let n0 = c0 * v0;
    let flow = q * cf;
    let feed = Feed::volumetric(
        vec![0.0, cf],
        FeedSchedule::window(0.0, 1e4, q).unwrap(),
        tf,
    )
    .unwrap();
    let times = [0.0, 100.0, 500.0, 1000.0, 3000.0];
    for constraint in [Constraint::ConstantVolume, Constraint::ConstantPressure] {
        let model = ReactorModel {
            constraint,
            energy: Energy::Adiabatic,
            semi_batch: Some(SemiBatch::new(v0, vec![feed.clone()]).unwrap()),
            ..Default::default()
        };
        let p = run(&kin, &model, t0, &[c0, 0.0], &times);
        for (row, &t) in times.iter().enumerate() {
            let expected = (n0 * 3.5 * t0 + flow * t * 2.5 * tf) / (n0 * 3.5 + flow * t * 2.5);
            let what = format!("{constraint:?} T({t})");
            assert_close(&what, p.temperatures_k[row], expected, 1e-8, 0.0);
            if constraint == Constraint::ConstantPressure {
                // Ideal gas at P = c0 R T0: V = (n0 + F t) R T / P.
                let v = (n0 + flow * t) * expected / (c0 * t0);
                assert_close(&format!("{what} V"), p.volumes_m3[row], v, 1e-8, 0.0);
            }
        }
    }
    // Liquid: a fed volume brings the mixture's heat capacity per volume.
    let liquid = LiquidPhase::per_volume(4.0e6, vec![0.0]).unwrap();
    let model = ReactorModel {
        energy: Energy::Adiabatic,
        semi_batch: Some(SemiBatch::new(v0, vec![feed]).unwrap()),
        liquid: Some(liquid),
        ..Default::default()
    };
    let p = run(&kin, &model, t0, &[c0, 0.0], &times);
    for (row, &t) in times.iter().enumerate() {
        let expected = (v0 * t0 + q * t * tf) / (v0 + q * t);
        assert_close(
            &format!("liquid T({t})"),
            p.temperatures_k[row],
            expected,
            1e-8,
            0.0,
        );
    }
}

/// A closed batch at constant pressure in a jacket, no reaction, constant cp: Newton's law
/// of cooling T - T_c = (T0 - T_c) exp(-U A t / (m cp)) with m cp = n cp_molar (the linear
/// first-order ODE's closed form); the volume follows the ideal gas, V = n R T / P.
#[test]
fn closed_constant_pressure_jacketed_batch_cools_by_newtons_law() {
    let mut m = mechanism(&["N", "X"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1e-30)]);
    for s in &mut m.species {
        s.thermo = Some(constant_cp(3.5));
    }
    let kin = Kinetics::compile(&m).unwrap();
    let (t0, tc, c0, v0, ua) = (500.0, 300.0, 25.0, 2.0, 4.0);
    let n = c0 * v0;
    let tau = n * 3.5 * R / ua;
    let coolant = TemperatureHistory::new(vec![0.0], vec![tc]).unwrap();
    let model = ReactorModel {
        constraint: Constraint::ConstantPressure,
        energy: Energy::HeatExchange(HeatExchange::total(ua, coolant).unwrap()),
        semi_batch: Some(SemiBatch::new(v0, Vec::new()).unwrap()),
        ..Default::default()
    };
    let times: Vec<f64> = [0.0, 0.2, 0.5, 1.0, 2.0, 4.0]
        .iter()
        .map(|x| x * tau)
        .collect();
    let p = run(&kin, &model, t0, &[c0, 0.0], &times);
    for (row, &t) in times.iter().enumerate() {
        let expected = tc + (t0 - tc) * (-t / tau).exp();
        assert_close(
            &format!("T({t})"),
            p.temperatures_k[row],
            expected,
            1e-8,
            0.0,
        );
        let v = v0 * expected / t0;
        assert_close(&format!("V({t})"), p.volumes_m3[row], v, 1e-8, 0.0);
        let moles = p.concentrations_mol_per_m3[row][0] * p.volumes_m3[row];
        assert_close(&format!("n({t})"), moles, n, 1e-9, 0.0);
    }
}

/// A -> B, exothermic, in the liquid description: adiabatic with constant rho cp and dH,
/// the energy balance integrates to the adiabatic temperature-rise line
/// T = T0 + (-dH) (c_A0 - c_A) / (rho cp) at every output (Fogler, sec. 11.3, adiabatic
/// operation: T = T0 + (-dH) X c_A0 / (rho cp)); with k independent of T, c_A = c_A0 e^{-k t}
/// (first-order closed form).
#[test]
fn liquid_adiabatic_first_order_follows_the_temperature_rise_line() {
    let (c_a0, dh, cp_mass, rho, t0) = (2000.0, -8.0e4, 2.0e3, 900.0, 300.0);
    let rho_cp = rho * cp_mass;
    let phase = LiquidPhase::per_mass(cp_mass, rho, vec![dh]).unwrap();
    let times = [0.0, 100.0, 300.0, 600.0, 1200.0, 2400.0];
    // Temperature-dependent k (Ea = 75 kJ/mol): the line holds whatever c_A(t) is.
    let arrhenius = Arrhenius {
        pre_exponential_si: 2.0e9,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: 7.5e4,
    };
    let kin = kinetics(
        &["A", "B"],
        vec![arrhenius_step(&[(0, 1.0)], &[(1, 1.0)], arrhenius)],
    );
    let model = ReactorModel {
        energy: Energy::Adiabatic,
        liquid: Some(phase.clone()),
        ..Default::default()
    };
    let p = run(&kin, &model, t0, &[c_a0, 0.0], &times);
    let mut converted = 0.0;
    for (row, &t) in times.iter().enumerate() {
        let c_a = p.concentrations_mol_per_m3[row][0];
        let line = t0 + (-dh) * (c_a0 - c_a) / rho_cp;
        assert_close(
            &format!("T({t}) on the line"),
            p.temperatures_k[row],
            line,
            1e-9,
            0.0,
        );
        converted = 1.0 - c_a / c_a0;
    }
    assert!(
        converted > 0.9,
        "the run should convert most of A, got {converted}"
    );
    // Constant k: c_A = c_A0 e^{-k t} and the line.
    let k = 1e-3;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let p = run(&kin, &model, t0, &[c_a0, 0.0], &times);
    for (row, &t) in times.iter().enumerate() {
        let c_a = c_a0 * (-k * t).exp();
        assert_close(
            &format!("c_A({t})"),
            p.concentrations_mol_per_m3[row][0],
            c_a,
            1e-7,
            1e-9,
        );
        let temp = t0 + (-dh) * c_a0 * (1.0 - (-k * t).exp()) / rho_cp;
        assert_close(&format!("T({t})"), p.temperatures_k[row], temp, 1e-9, 0.0);
    }
}

/// The combinations without equations are refused with typed errors.
#[test]
fn mixed_and_incomplete_descriptions_are_refused() {
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1e-3)]);
    let phase = LiquidPhase::per_volume(4e6, vec![-5e4]).unwrap();
    let opts = options(2, 1e-8, 1e-12, LinearAlgebra::Dense);
    let refuse = |model: ReactorModel| {
        simulate(&kin, &model, T, &[1.0, 0.0], &[0.0, 1.0], &opts)
            .err()
            .and_then(|e| match e {
                stoik_reactor::IntegrationError::InvalidArgument(r) => Some(r),
                _ => None,
            })
            .unwrap_or_else(|| panic!("{model:?} should be refused"))
    };
    // Liquid at constant pressure.
    let e = refuse(ReactorModel {
        constraint: Constraint::ConstantPressure,
        energy: Energy::Adiabatic,
        liquid: Some(phase.clone()),
        ..Default::default()
    });
    assert!(matches!(e, ReactorError::BadLiquidPhase(ref m) if m.contains("constant density")));
    // One enthalpy per step.
    let e = refuse(ReactorModel {
        energy: Energy::Adiabatic,
        liquid: Some(LiquidPhase::per_volume(4e6, vec![1.0, 2.0]).unwrap()),
        ..Default::default()
    });
    assert!(
        matches!(e, ReactorError::BadLiquidPhase(ref m) if m.contains("2 reaction enthalpies"))
    );
    // A reversible step whose reverse needs thermochemistry.
    let mut m = mechanism(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1e-3)]);
    m.steps[0].reversible = true;
    for s in &mut m.species {
        // Thermochemistry the kinetics need to compile the step; the liquid description
        // does not use it.
        s.thermo = Some(constant_cp(3.5));
    }
    let thermo_reverse = Kinetics::compile(&m).unwrap();
    let e = simulate(
        &thermo_reverse,
        &ReactorModel {
            liquid: Some(phase.clone()),
            ..Default::default()
        },
        T,
        &[1.0, 0.0],
        &[0.0, 1.0],
        &opts,
    )
    .unwrap_err();
    assert!(e.to_string().contains("explicit reverse parameters"), "{e}");
    // A total U A without the volume state.
    let coolant = TemperatureHistory::new(vec![0.0], vec![300.0]).unwrap();
    let e = refuse(ReactorModel {
        energy: Energy::HeatExchange(HeatExchange::total(10.0, coolant.clone()).unwrap()),
        liquid: Some(phase.clone()),
        ..Default::default()
    });
    assert!(matches!(e, ReactorError::BadHeatExchange(_)));
    // Per-volume exchange at constant pressure without the volume state (as before).
    let mut gas = mechanism(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1e-3)]);
    for s in &mut gas.species {
        s.thermo = Some(constant_cp(3.5));
    }
    let gas = Kinetics::compile(&gas).unwrap();
    let e = simulate(
        &gas,
        &ReactorModel {
            constraint: Constraint::ConstantPressure,
            energy: Energy::HeatExchange(HeatExchange::new(10.0, coolant).unwrap()),
            ..Default::default()
        },
        T,
        &[1.0, 0.0],
        &[0.0, 1.0],
        &opts,
    )
    .unwrap_err();
    assert!(e.to_string().contains("volume"), "{e}");
    // Feeds with a stirred-tank flow; a feed of the wrong length.
    let feed = Feed::volumetric(
        vec![1.0, 0.0],
        FeedSchedule::window(0.0, 1.0, 1e-3).unwrap(),
        T,
    )
    .unwrap();
    let e = refuse(ReactorModel {
        semi_batch: Some(SemiBatch::new(1.0, vec![feed]).unwrap()),
        flow: Some(StirredFlow::new(10.0, vec![1.0, 0.0], T).unwrap()),
        ..Default::default()
    });
    assert!(matches!(e, ReactorError::BadFeed(_)));
    let short =
        Feed::volumetric(vec![1.0], FeedSchedule::window(0.0, 1.0, 1e-3).unwrap(), T).unwrap();
    let e = refuse(ReactorModel {
        semi_batch: Some(SemiBatch::new(1.0, vec![short]).unwrap()),
        ..Default::default()
    });
    assert!(matches!(e, ReactorError::BadFeed(ref m) if m.contains("1 concentrations")));
    // Bad numbers.
    assert!(SemiBatch::new(0.0, Vec::new()).is_err());
    assert!(FeedSchedule::points(vec![0.0, 0.0], vec![1.0, 1.0]).is_err());
    assert!(FeedSchedule::window(0.0, 1.0, -1.0).is_err());
    assert!(LiquidPhase::per_mass(2e3, f64::NAN, vec![0.0]).is_err());
    assert!(HeatExchange::total(
        -1.0,
        TemperatureHistory::new(vec![0.0], vec![300.0]).unwrap()
    )
    .is_err());
}

/// The piecewise-linear schedule: linear between points, zero outside, and its integral.
#[test]
fn feed_schedule_interpolates_and_integrates() {
    let s = FeedSchedule::points(vec![10.0, 20.0, 40.0], vec![0.0, 2.0, 1.0]).unwrap();
    assert_eq!(s.rate_at(5.0), 0.0);
    assert_eq!(s.rate_at(10.0), 0.0);
    assert_eq!(s.rate_at(15.0), 1.0);
    assert_eq!(s.rate_at(30.0), 1.5);
    assert_eq!(s.rate_at(40.0), 1.0);
    assert_eq!(s.rate_at(40.5), 0.0);
    // Trapezoids: 10 * 1 + 20 * 1.5 = 40.
    assert!((s.delivered_between(0.0, 100.0) - 40.0).abs() < 1e-12);
    assert!((s.delivered_between(15.0, 30.0) - (5.0 * 1.5 + 10.0 * 1.75)).abs() < 1e-12);
}

/// A stepping session on a semi-batch: the full state ends with the volume, which follows
/// V0 + q t (the feed's integral), and `reset` starts the volume over.
#[test]
fn stepping_session_carries_and_resets_the_volume() {
    use stoik_reactor::BatchSystem;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1e-3)]);
    let (q, v0) = (1e-4, 0.5);
    let feed = Feed::volumetric(
        vec![100.0, 0.0],
        FeedSchedule::window(0.0, 1e4, q).unwrap(),
        T,
    )
    .unwrap();
    let model = ReactorModel {
        semi_batch: Some(SemiBatch::new(v0, vec![feed]).unwrap()),
        ..Default::default()
    };
    let opts = options(2, 1e-10, 1e-14, LinearAlgebra::Sparse);
    let mut system = BatchSystem::with_model(&kin, &model, T, &opts).unwrap();
    // The dilution couples every pair: dense linear algebra whatever was asked.
    assert_eq!(system.linear_algebra_used(), LinearAlgebra::Dense);
    let mut session = system.integrator(&[0.0, 0.0]).unwrap();
    session.advance_to(100.0).unwrap();
    let first = session.full_state().to_vec();
    assert_eq!(first.len(), 3);
    assert_close("V(100)", first[2], v0 + q * 100.0, 1e-10, 0.0);
    session.reset(0.0, &[0.0, 0.0]).unwrap();
    assert_eq!(session.full_state()[2], v0);
    session.advance_to(100.0).unwrap();
    assert_close(
        "V(100) again",
        session.full_state()[2],
        first[2],
        1e-12,
        0.0,
    );
}

/// In the liquid description a stepping session's heat release is the given enthalpy times
/// the rate: sum_j (-dH_j) q_j = (-dH) k c_A for first-order A -> B (the rate law).
#[test]
fn liquid_heat_release_uses_the_given_step_enthalpy() {
    use stoik_reactor::BatchSystem;
    let (k, dh) = (1e-3, -8.0e4);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let model = ReactorModel {
        energy: Energy::Adiabatic,
        liquid: Some(LiquidPhase::per_volume(1.8e6, vec![dh]).unwrap()),
        ..Default::default()
    };
    let opts = options(2, 1e-10, 1e-14, LinearAlgebra::Dense);
    let mut system = BatchSystem::with_model(&kin, &model, 300.0, &opts).unwrap();
    let mut session = system.integrator(&[2000.0, 0.0]).unwrap();
    session.advance_to(500.0).unwrap();
    let c_a = session.state()[0];
    let mut enthalpies = [0.0];
    session.step_enthalpies(&mut enthalpies).unwrap();
    assert_eq!(enthalpies[0], dh);
    let release = session.heat_release_rate_w_per_m3().unwrap();
    assert_close("heat release", release, -dh * k * c_a, 1e-12, 0.0);
}
