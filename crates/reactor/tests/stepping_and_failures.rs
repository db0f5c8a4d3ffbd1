//! The stepping interface, failure reporting, argument checks and element balances.

#![allow(clippy::needless_range_loop)]

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::GAS_CONSTANT;
use stoik_mechanism::{Element, Mechanism, Species};
use stoik_reactor::{
    element_balance, integrate, BatchSystem, FailureKind, IntegrationError, IntegrationOptions,
    LinearAlgebra, ReactorError, SolverStats,
};

#[test]
fn solver_statistics_read_as_the_summary_line() {
    // Counts of an earlier ozone-flask demo run, in the summary line's layout as README.md
    // shows it ("solver: BDF, Dense linear algebra; 707 steps, 1818 right-hand sides, ...").
    let stats = SolverStats {
        steps: 597,
        rhs_evaluations: 895,
        jacobian_evaluations: 12,
        factorizations: 65,
        error_test_failures: 5,
        nonlinear_failures: 0,
        ..SolverStats::default()
    };
    assert_eq!(
        stats.to_string(),
        "597 steps, 895 right-hand sides, 12 Jacobians, 65 factorizations, 5 error-test failures, 0 nonlinear failures"
    );
}

#[test]
fn ten_advances_equal_one_integration() {
    // Consecutive first-order steps A -> B -> C (Bateman closed form, Atkins' Physical
    // Chemistry, consecutive reactions): stepping in ten pieces of 1 s must reproduce both
    // the single integrate call and the closed form at t = 10 s.
    let (k1, k2) = (1.0, 0.3);
    let kin = kinetics(
        &["A", "B", "C"],
        vec![
            step(&[(0, 1.0)], &[(1, 1.0)], k1),
            step(&[(1, 1.0)], &[(2, 1.0)], k2),
        ],
    );
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let opts = options(3, 1e-9, 1e-15, la);
        let once = integrate(&kin, T, &[1.0, 0.0, 0.0], &[0.0, 10.0], &opts).unwrap();
        let mut system = BatchSystem::new(&kin, T, &opts).unwrap();
        let mut stepper = system.integrator(&[1.0, 0.0, 0.0]).unwrap();
        assert_eq!(stepper.linear_algebra_used(), la);
        for i in 1..=10 {
            stepper.advance_to(i as f64).unwrap();
            assert_eq!(stepper.time(), i as f64);
        }
        let t = 10.0;
        let a = (-k1 * t).exp();
        let b = k1 / (k2 - k1) * ((-k1 * t).exp() - (-k2 * t).exp());
        let expected = [a, b, 1.0 - a - b];
        for i in 0..3 {
            assert_close(
                &format!("{la:?} pieces vs one call, species {i}"),
                stepper.state()[i],
                once.concentrations_mol_per_m3[1][i],
                1e-7,
                1e-15,
            );
            assert_close(
                &format!("{la:?} pieces vs closed form, species {i}"),
                stepper.state()[i],
                expected[i],
                1e-7,
                // global error accumulates on the scale of the total, 1 mol/m3
                1e-10,
            );
        }
        assert!(stepper.stats().steps >= 10, "{:?}", stepper.stats());
        assert!(stepper.stats().rhs_evaluations > stepper.stats().steps);
    }
}

#[test]
fn adding_mass_mid_run_matches_first_order_solution() {
    // A -> B, k = 0.5 1/s, A0 = 1; at t1 = 1 s add dA = 0.7 mol/m3 of A. First-order decay
    // (Atkins, integrated rate laws) restarted at t1: A(t) = (A0 e^{-k t1} + dA) e^{-k (t - t1)};
    // B = A0 + dA - A.
    let (k, a0, da, t1) = (0.5, 1.0, 0.7, 1.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    let mut system =
        BatchSystem::new(&kin, T, &options(2, 1e-9, 1e-15, LinearAlgebra::Auto)).unwrap();
    let mut stepper = system.integrator(&[a0, 0.0]).unwrap();
    let mut c = stepper.advance_to(t1).unwrap().to_vec();
    assert_close("A(t1)", c[0], a0 * (-k * t1).exp(), 1e-7, 0.0);
    c[0] += da;
    stepper.set_state(&c).unwrap();
    assert_eq!(stepper.state(), c.as_slice());
    for t in [1.5, 2.0, 4.0] {
        let now = stepper.advance_to(t).unwrap();
        let a = (a0 * (-k * t1).exp() + da) * (-k * (t - t1)).exp();
        assert_close(&format!("A({t})"), now[0], a, 1e-7, 1e-15);
        assert_close(&format!("B({t})"), now[1], a0 + da - a, 1e-7, 1e-15);
    }
}

#[test]
fn temperature_change_switches_the_arrhenius_rate_constant() {
    // A -> B with k(T) = A exp(-Ea/(R T)) (Arrhenius; R = 8.314462618 J/(mol K), CODATA):
    // first order at T1 until t1, then at T2: A(t) = e^{-k1 t1} e^{-k2 (t - t1)}.
    let arrhenius = stoik_mechanism::Arrhenius {
        pre_exponential_si: 1e7,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: 50_000.0,
    };
    let kin = Kinetics::compile(&mechanism(
        &["A", "B"],
        vec![arrhenius_step(&[(0, 1.0)], &[(1, 1.0)], arrhenius)],
    ))
    .unwrap();
    let k_of = |t: f64| 1e7 * (-50_000.0 / (GAS_CONSTANT * t)).exp();
    let (t_1, t_2, time1) = (300.0, 330.0, 10.0);
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system = BatchSystem::new(&kin, t_1, &options(2, 1e-9, 1e-15, la)).unwrap();
        let mut stepper = system.integrator(&[1.0, 0.0]).unwrap();
        stepper.advance_to(time1).unwrap();
        stepper.set_temperature(t_2).unwrap();
        let a = stepper.advance_to(20.0).unwrap()[0];
        let expected = (-k_of(t_1) * time1).exp() * (-k_of(t_2) * (20.0 - time1)).exp();
        assert_close(&format!("{la:?} A(20 s)"), a, expected, 1e-7, 1e-15);
    }
}

#[test]
fn one_system_integrates_many_times_at_several_temperatures() {
    // A -> B with k(T) = A exp(-Ea/(R T)) (Arrhenius; R = 8.314462618 J/(mol K), CODATA):
    // A(t) = A0 exp(-k(T) t) (Atkins, first-order integrated law), run on one system at three
    // temperatures without rebuilding it.
    let arrhenius = stoik_mechanism::Arrhenius {
        pre_exponential_si: 1e7,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: 50_000.0,
    };
    let kin = Kinetics::compile(&mechanism(
        &["A", "B"],
        vec![arrhenius_step(&[(0, 1.0)], &[(1, 1.0)], arrhenius)],
    ))
    .unwrap();
    let k_of = |t: f64| 1e7 * (-50_000.0 / (GAS_CONSTANT * t)).exp();
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system = BatchSystem::new(&kin, 300.0, &options(2, 1e-9, 1e-15, la)).unwrap();
        for temperature in [300.0, 320.0, 310.0] {
            system.set_temperature(temperature).unwrap();
            assert_eq!(system.temperature(), temperature);
            let p = system.integrate(&[2.0, 0.0], &[0.0, 5.0, 10.0]).unwrap();
            assert_eq!(p.linear_algebra_used, la);
            for (t, c) in p.times_s.iter().zip(&p.concentrations_mol_per_m3) {
                let a = 2.0 * (-k_of(temperature) * t).exp();
                assert_close(
                    &format!("{la:?} A({t}) at {temperature} K"),
                    c[0],
                    a,
                    1e-7,
                    1e-15,
                );
            }
        }
        // A session changes the system's temperature too.
        let mut stepper = system.integrator(&[1.0, 0.0]).unwrap();
        stepper.set_temperature(330.0).unwrap();
        assert_eq!(stepper.temperature(), 330.0);
        drop(stepper);
        assert_eq!(system.temperature(), 330.0);
    }
}

#[test]
fn reset_starts_the_same_session_over() {
    // A -> B, k = 0.5 1/s: A(t) = A0 exp(-k t) (Atkins, first-order integrated law), from two
    // starts of one session: A0 = 1 at t = 0, then A0 = 3 at t = 0 again after a reset.
    let k = 0.5;
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system = BatchSystem::new(&kin, T, &options(2, 1e-9, 1e-15, la)).unwrap();
        let mut stepper = system.integrator(&[1.0, 0.0]).unwrap();
        let a = stepper.advance_to(4.0).unwrap()[0];
        assert_close(
            &format!("{la:?} first run A(4)"),
            a,
            (-k * 4.0).exp(),
            1e-7,
            1e-15,
        );
        stepper.reset(0.0, &[3.0, 0.0]).unwrap();
        assert_eq!(stepper.time(), 0.0);
        for t in [1.0, 4.0] {
            let c = stepper.advance_to(t).unwrap();
            let a = 3.0 * (-k * t).exp();
            assert_close(&format!("{la:?} second run A({t})"), c[0], a, 1e-7, 1e-15);
            assert_close(
                &format!("{la:?} second run B({t})"),
                c[1],
                3.0 - a,
                1e-7,
                1e-15,
            );
        }
    }
}

#[test]
fn step_limit_failure_keeps_partial_profile_and_names_time() {
    // Robertson needs hundreds of steps to t = 1e11 (Hairer & Wanner IV.10); ten are not
    // enough to reach even t = 40.
    let kin = robertson();
    let mut opts = options(3, 1e-8, 1e-20, LinearAlgebra::Dense);
    opts.max_steps = 10;
    let err = integrate(&kin, T, &[1.0, 0.0, 0.0], &[0.0, 1e-6, 40.0, 1e11], &opts).unwrap_err();
    let failure = err.failure().expect("a solver failure, not a bad argument");
    assert!(
        failure.time_s > 0.0 && failure.time_s < 40.0,
        "{}",
        failure.time_s
    );
    let message = err.to_string();
    assert!(
        message.starts_with(&format!(
            "integration failed at t = {:e} s: ",
            failure.time_s
        )),
        "{message}"
    );
    // The failure says why, in terms a user can act on.
    assert_eq!(failure.kind, FailureKind::StepBudget { steps: 10 });
    let fastest = failure
        .fastest
        .expect("the fastest-changing component is named");
    assert!(fastest.index.is_some_and(|i| i < 3));
    let names = ["A", "B", "C"].map(String::from);
    let equations = ["A -> B", "2 B -> B + C", "B + C -> A + C"].map(String::from);
    let advice = failure.advice(&names, &equations);
    assert!(advice.contains("max_steps"), "{advice}");
    assert!(
        advice.contains(&format!("{} = ", names[fastest.index.unwrap_or(0)])),
        "{advice}"
    );
    // The rows before the failure are kept: t = 0 and (if reached) 1e-6, never 40.
    let partial = &failure.partial;
    assert_eq!(partial.times_s[0], 0.0);
    assert_eq!(partial.concentrations_mol_per_m3[0], vec![1.0, 0.0, 0.0]);
    assert!(partial.times_s.iter().all(|&t| t <= failure.time_s));
    assert_eq!(
        partial.times_s.len(),
        partial.concentrations_mol_per_m3.len()
    );
    assert_eq!(partial.stats.steps, 10);

    // The stepping interface fails the same way and stays usable at the time reached.
    let mut system = BatchSystem::new(&kin, T, &opts).unwrap();
    let mut stepper = system.integrator(&[1.0, 0.0, 0.0]).unwrap();
    let err = stepper.advance_to(40.0).unwrap_err();
    let failure = err.failure().unwrap();
    assert_eq!(stepper.time(), failure.time_s);
    assert!(failure.time_s > 0.0 && failure.time_s < 40.0);
    assert_eq!(
        failure.partial.concentrations_mol_per_m3[0],
        stepper.state()
    );
    let sum: f64 = stepper.state().iter().sum();
    assert_close("y1 + y2 + y3 at failure", sum, 1.0, 1e-9, 0.0);

    // The step named as driving the fastest species is the largest term of its rate in
    // Robertson's equations written out by hand (Robertson 1966; Hairer & Wanner IV.10):
    // y1' = -0.04 y1 + 1e4 y2 y3, y2' = 0.04 y1 - 1e4 y2 y3 - 3e7 y2^2, y3' = 3e7 y2^2.
    let fastest = failure.fastest.expect("a fastest component");
    let i = fastest.index.expect("a species");
    let y = stepper.state().to_vec();
    // Per species, the terms of steps 1 (A -> B), 2 (2 B -> B + C), 3 (B + C -> A + C).
    let terms: [[f64; 3]; 3] = [
        [-0.04 * y[0], 0.0, 1e4 * y[1] * y[2]],
        [0.04 * y[0], -3e7 * y[1] * y[1], -1e4 * y[1] * y[2]],
        [0.0, 3e7 * y[1] * y[1], 0.0],
    ];
    let (step, term) = terms[i]
        .iter()
        .copied()
        .enumerate()
        .max_by(|a, b| a.1.abs().total_cmp(&b.1.abs()))
        .unwrap();
    let driving = fastest.driving_step.expect("a driving step");
    assert_eq!(driving.index, step, "species {i}: terms {:?}", terms[i]);
    assert_close("driving term", driving.rate_mol_per_m3_s, term, 1e-12, 0.0);
    assert_close(
        "its rate constant",
        driving.forward_rate_constant,
        [0.04, 3e7, 1e4][step],
        1e-15,
        0.0,
    );
    assert!(failure.nonfinite_steps.is_empty());
    assert!(!fastest.tolerance_unreachable);
    let advice = failure.advice(&names, &equations);
    assert!(
        advice.contains(&format!(
            "step {} `{}` contributes",
            step + 1,
            equations[step]
        )),
        "{advice}"
    );
}

#[test]
fn a_tolerance_below_round_off_is_named_unreachable() {
    // rtol 1e-17 is below the spacing of doubles near 1 (2.2e-16, IEEE 754): no step can
    // meet it, and the failure says so.
    let kin = robertson();
    let mut opts = options(3, 1e-17, 1e-40, LinearAlgebra::Dense);
    opts.max_steps = 200;
    let err = integrate(&kin, T, &[1.0, 0.0, 0.0], &[0.0, 1.0], &opts).unwrap_err();
    let failure = err.failure().expect("a solver failure");
    let fastest = failure.fastest.expect("a fastest component");
    assert!(fastest.tolerance_unreachable, "{fastest:?}");
    let advice = failure.advice(&["A", "B", "C"].map(String::from), &[]);
    assert!(advice.contains("cannot be met"), "{advice}");
}

#[test]
fn bad_arguments_are_typed_errors() {
    let kin = robertson();
    let opts = IntegrationOptions::new(3);
    fn bad<T: std::fmt::Debug>(r: Result<T, IntegrationError>) -> ReactorError {
        match r {
            Err(IntegrationError::InvalidArgument(e)) => e,
            other => panic!("expected a bad-argument error, got {other:?}"),
        }
    }
    assert_eq!(
        bad(integrate(&kin, T, &[1.0, 0.0], &[0.0, 1.0], &opts)),
        ReactorError::WrongLength {
            what: "initial state",
            expected: 3,
            found: 2
        }
    );
    assert_eq!(
        bad(integrate(
            &kin,
            T,
            &[1.0, 0.0, 0.0],
            &[0.0, 1.0, 1.0],
            &opts
        )),
        ReactorError::OutputTimesNotIncreasing {
            index: 2,
            value: 1.0
        }
    );
    assert_eq!(
        bad(integrate(
            &kin,
            T,
            &[1.0, f64::NAN, 0.0],
            &[0.0, 1.0],
            &opts
        ))
        .to_string(),
        "initial state: concentration of species 1 is not finite (NaN mol/m3)"
    );
    assert_eq!(
        bad(integrate(&kin, T, &[1.0, 0.0, 0.0], &[], &opts)),
        ReactorError::NoOutputTimes
    );
    assert_eq!(
        bad(integrate(&kin, -1.0, &[1.0, 0.0, 0.0], &[0.0, 1.0], &opts)),
        ReactorError::BadTemperature(-1.0)
    );
    let mut short = opts.clone();
    short.absolute_tolerances_mol_per_m3.pop();
    assert!(matches!(
        bad(integrate(&kin, T, &[1.0, 0.0, 0.0], &[0.0, 1.0], &short)),
        ReactorError::WrongLength { found: 2, .. }
    ));
    let mut system = BatchSystem::new(&kin, T, &opts).unwrap();
    let mut stepper = system.integrator(&[1.0, 0.0, 0.0]).unwrap();
    stepper.advance_to(1.0).unwrap();
    assert_eq!(
        bad(stepper.advance_to(0.5).map(|c| c.to_vec())),
        ReactorError::TimeNotAhead {
            requested_s: 0.5,
            current_s: 1.0
        }
    );
    assert!(stepper.set_state(&[1.0]).is_err());
    assert!(stepper.set_temperature(f64::INFINITY).is_err());
}

#[test]
fn auto_picks_dense_for_small_mechanisms() {
    let kin = robertson();
    let p = integrate(
        &kin,
        T,
        &[1.0, 0.0, 0.0],
        &[0.0, 1.0],
        &IntegrationOptions::new(3),
    )
    .unwrap();
    assert_eq!(p.linear_algebra_used, LinearAlgebra::Dense);
    assert_eq!(
        p.stats.most_negative_concentration_mol_per_m3,
        0.0_f64.min(
            p.concentrations_mol_per_m3
                .iter()
                .flatten()
                .cloned()
                .fold(0.0, f64::min)
        )
    );
}

#[test]
fn hydrogen_dissociation_conserves_atoms() {
    // H2 <=> 2 H in a closed vessel: the total of H atoms, 2 [H2] + [H], is invariant
    // (conservation of atoms; common practice).
    let mech = Mechanism {
        title: None,
        elements: vec![Element {
            symbol: "H".into(),
            atomic_weight_kg_per_mol: 1.008e-3,
        }],
        species: ["H2", "H"]
            .iter()
            .zip([2.0, 1.0])
            .map(|(name, atoms)| Species {
                collision_diameter_m: None,
                name: name.to_string(),
                composition: Some(vec![(0, atoms)]),
                note: None,
                location: None,
                thermo: None,
            })
            .collect(),
        steps: vec![reversible(&[(0, 1.0)], &[(1, 2.0)], 3.0, 50.0)],
    };
    let kin = Kinetics::compile(&mech).unwrap();
    let p = integrate(
        &kin,
        T,
        &[2.0, 0.1],
        &[0.0, 0.01, 0.1, 1.0, 10.0],
        &options(2, 1e-8, 1e-14, LinearAlgebra::Auto),
    )
    .unwrap();
    let balance = element_balance(&mech, &p);
    assert_close("H atoms at start", balance.start[0], 4.1, 1e-15, 0.0);
    assert_close("H atoms at end", balance.end[0], 4.1, 1e-8, 0.0);
    assert!(
        balance.max_relative_drift < 1e-8,
        "{}",
        balance.max_relative_drift
    );
    // and the end state is at equilibrium: kf [H2] = kr [H]^2 (law of mass action)
    let c = p.concentrations_mol_per_m3.last().unwrap();
    assert_close(
        "kf[H2] / (kr[H]^2)",
        3.0 * c[0] / (50.0 * c[1] * c[1]),
        1.0,
        1e-6,
        0.0,
    );
}
