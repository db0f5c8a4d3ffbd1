//! Temperature changes on a live integrator, as an operator-splitting process model makes
//! them: a held temperature costs nothing; a changed one restarts the solver, or keeps its
//! step size when asked.

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::{Arrhenius, GAS_CONSTANT};
use stoik_reactor::{BatchSystem, LinearAlgebra, SolverStats};

const K1_PRE: f64 = 2e6;
const K2_PRE: f64 = 1e5;
const EA1: f64 = 40_000.0;
const EA2: f64 = 35_000.0;

/// A -> B -> C with Arrhenius rate constants (k1 about 0.6 1/s, k2 about 0.2 1/s near
/// 310 K).
fn consecutive() -> Kinetics {
    let arr = |pre: f64, ea: f64| Arrhenius {
        pre_exponential_si: pre,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: ea,
    };
    kinetics(
        &["A", "B", "C"],
        vec![
            arrhenius_step(&[(0, 1.0)], &[(1, 1.0)], arr(K1_PRE, EA1)),
            arrhenius_step(&[(1, 1.0)], &[(2, 1.0)], arr(K2_PRE, EA2)),
        ],
    )
}

/// k(T) = A exp(-Ea / (R T)) (Arrhenius; R = 8.314462618 J/(mol K), CODATA).
fn k(pre: f64, ea: f64, temperature_k: f64) -> f64 {
    pre * (-ea / (GAS_CONSTANT * temperature_k)).exp()
}

/// A and B after `tau` s of A -> B -> C at fixed rate constants from (a0, b0): the Bateman
/// closed form of consecutive first-order reactions (Atkins' Physical Chemistry,
/// consecutive reactions), with B's initial amount decaying on its own.
fn bateman(a0: f64, b0: f64, k1: f64, k2: f64, tau: f64) -> (f64, f64) {
    let a = a0 * (-k1 * tau).exp();
    let b = b0 * (-k2 * tau).exp() + a0 * k1 / (k2 - k1) * ((-k1 * tau).exp() - (-k2 * tau).exp());
    (a, b)
}

/// The temperature (K) of splitting interval `i`: a slow swing of +-15 K around 310 K, as a
/// jacket balance solved between the chemistry advances would give.
fn swing(i: usize) -> f64 {
    310.0 + 15.0 * (i as f64 * 0.01).sin()
}

const STOPS: usize = 1800;
const DT: f64 = 0.005;

/// Runs STOPS splitting intervals of DT s: before each interval the temperature is set to
/// `temperature(i)` (when `set` is true), by `set_temperature_keep_step` when `keep_step`.
/// Returns the final concentrations and the session statistics.
fn split_run(
    la: LinearAlgebra,
    temperature: impl Fn(usize) -> f64,
    set: bool,
    keep_step: bool,
) -> (Vec<f64>, SolverStats) {
    let kin = consecutive();
    let mut system = BatchSystem::new(&kin, temperature(0), &options(3, 1e-8, 1e-14, la)).unwrap();
    let mut stepper = system.integrator(&[1.0, 0.0, 0.0]).unwrap();
    for i in 0..STOPS {
        if set {
            if keep_step {
                stepper.set_temperature_keep_step(temperature(i)).unwrap();
            } else {
                stepper.set_temperature(temperature(i)).unwrap();
            }
        }
        stepper.advance_to((i + 1) as f64 * DT).unwrap();
    }
    (stepper.state().to_vec(), *stepper.stats())
}

/// The piecewise closed form of `split_run`: Bateman over each interval at its temperature.
fn split_closed_form(temperature: impl Fn(usize) -> f64) -> (f64, f64) {
    let (mut a, mut b) = (1.0, 0.0);
    for i in 0..STOPS {
        let t = temperature(i);
        (a, b) = bateman(a, b, k(K1_PRE, EA1, t), k(K2_PRE, EA2, t), DT);
    }
    (a, b)
}

#[test]
fn setting_the_held_temperature_costs_nothing() {
    // 1,800 splitting stops at a held 320 K with a set_temperature(320) call at each must
    // take exactly the steps, factorizations and values of the same stops without the call,
    // and both must match the Bateman closed form.
    let held = |_| 320.0;
    let (a_exp, b_exp) = split_closed_form(held);
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let (with_calls, s_with) = split_run(la, held, true, false);
        let (without, s_without) = split_run(la, held, false, false);
        println!("{la:?}: with calls {s_with}; without {s_without}");
        assert_eq!(s_with.steps, s_without.steps, "{la:?}: steps");
        assert_eq!(s_with.factorizations, s_without.factorizations, "{la:?}");
        assert_eq!(with_calls, without, "{la:?}: values differ");
        assert_close(&format!("{la:?} A"), with_calls[0], a_exp, 1e-6, 1e-14);
        assert_close(&format!("{la:?} B"), with_calls[1], b_exp, 1e-6, 1e-14);
    }
}

/// The coupled solution the splitting approximates: the temperature follows the swing
/// smoothly, `310 + 15 sin(0.01 t / DT)`. Bateman over sub-intervals of DT/400 at their
/// midpoint temperature (midpoint rule on the rate constants: error O(DT^2/400^2)).
fn coupled_closed_form() -> (f64, f64) {
    let sub = 400;
    let h = DT / sub as f64;
    let (mut a, mut b) = (1.0, 0.0);
    for i in 0..STOPS * sub {
        let t = 310.0 + 15.0 * ((i as f64 + 0.5) / sub as f64 * 0.01).sin();
        (a, b) = bateman(a, b, k(K1_PRE, EA1, t), k(K2_PRE, EA2, t), h);
    }
    (a, b)
}

#[test]
fn a_changed_temperature_restarts_and_keeping_the_step_is_cheaper() {
    // The temperature changes at every one of 1,800 stops (a +-15 K swing). A restart at
    // every change (the default) must match the piecewise Bateman closed form far more
    // closely than the splitting itself matches the coupled solution. Keeping the step size
    // must take fewer than half the steps, at an error no larger than the splitting error.
    let (a_exp, b_exp) = split_closed_form(swing);
    let (_, b_coupled) = coupled_closed_form();
    let splitting = (b_exp - b_coupled).abs() / b_coupled;
    println!("splitting error of B against the coupled solution: {splitting:.2e}");
    assert!(splitting > 1e-5, "the swing must make splitting matter");
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let (restarted, s_restarted) = split_run(la, swing, true, false);
        let (kept, s_kept) = split_run(la, swing, true, true);
        println!("{la:?}: restart at each change {s_restarted}; step kept {s_kept}");
        let err = |c: &[f64]| ((c[0] - a_exp).abs() / a_exp).max((c[1] - b_exp).abs() / b_exp);
        println!(
            "{la:?}: largest relative error of A, B against the piecewise closed form: \
             restart {:.2e}, step kept {:.2e}",
            err(&restarted),
            err(&kept)
        );
        assert!(
            err(&restarted) < 1e-2 * splitting,
            "{la:?}: {:.2e}",
            err(&restarted)
        );
        assert!(err(&kept) < splitting, "{la:?}: {:.2e}", err(&kept));
        assert_close(
            &format!("{la:?} C"),
            kept[2],
            1.0 - kept[0] - kept[1],
            1e-12,
            1e-14,
        );
        assert!(
            2 * s_kept.steps < s_restarted.steps,
            "{la:?}: {} steps with the step kept, {} with restarts",
            s_kept.steps,
            s_restarted.steps
        );
    }
}

#[test]
fn a_large_temperature_jump_keeps_the_history_safely() {
    // From 300 K to 400 K (k1 up by a factor of about 55) with the step size kept: the error
    // test must shrink the step, and the result must still match the closed form.
    let kin = consecutive();
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system = BatchSystem::new(&kin, 300.0, &options(3, 1e-8, 1e-14, la)).unwrap();
        let mut stepper = system.integrator(&[1.0, 0.0, 0.0]).unwrap();
        stepper.advance_to(2.0).unwrap();
        stepper.set_temperature_keep_step(400.0).unwrap();
        let c = stepper.advance_to(3.0).unwrap().to_vec();
        let (a1, b1) = bateman(1.0, 0.0, k(K1_PRE, EA1, 300.0), k(K2_PRE, EA2, 300.0), 2.0);
        let (a, b) = bateman(a1, b1, k(K1_PRE, EA1, 400.0), k(K2_PRE, EA2, 400.0), 1.0);
        assert_close(&format!("{la:?} A(3 s)"), c[0], a, 1e-6, 1e-14);
        assert_close(&format!("{la:?} B(3 s)"), c[1], b, 1e-6, 1e-14);
    }
}
