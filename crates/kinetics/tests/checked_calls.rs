//! The allocation-free calls check their arguments in constant time and name what is wrong
//! (issue 15: a short buffer used to give a partial result or an index panic, and rate
//! constants of another mechanism were accepted).

use stoik_kinetics::Kinetics;
use stoik_mechanism::parse_mechanism;

fn compile(text: &str) -> Kinetics {
    let file = parse_mechanism(text, "<test>").expect("valid mechanism");
    Kinetics::compile(&file.mechanism).expect("compiles")
}

const HEADER: &str = "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\n";

fn two_species() -> Kinetics {
    compile(&format!(
        "{HEADER}[[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
         [[step]]\nequation = \"A -> B\"\nforward = {{ prefactor = 2.0 }}\n"
    ))
}

fn three_steps() -> Kinetics {
    compile(&format!(
        "{HEADER}[[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
         [[step]]\nequation = \"A -> B\"\nforward = {{ prefactor = 2.0 }}\n\
         [[step]]\nequation = \"B -> A\"\nforward = {{ prefactor = 1.0 }}\n\
         [[step]]\nequation = \"A + B -> B + B\"\nforward = {{ prefactor = 3.0 }}\n"
    ))
}

fn panic_message(f: impl FnOnce() + std::panic::UnwindSafe) -> String {
    let err = std::panic::catch_unwind(f).expect_err("the call must refuse its arguments");
    err.downcast_ref::<String>()
        .cloned()
        .or_else(|| err.downcast_ref::<&str>().map(|s| s.to_string()))
        .unwrap_or_default()
}

#[test]
fn correct_buffers_give_the_first_order_rates() {
    // A -> B with k = 2 1/s at c_A = 3 mol/m3: w = (-6, +6), dw_A/dc_A = -2 (first-order
    // mass action, common practice).
    let kin = two_species();
    let k = kin.rate_constants(300.0);
    let mut w = [0.0; 2];
    kin.production_rates(&k, &[3.0, 0.0], &mut w);
    assert_eq!(w, [-6.0, 6.0]);
    let mut jac = [0.0; 4];
    kin.jacobian_dense(&k, &[3.0, 0.0], &mut jac);
    assert_eq!(jac, [-2.0, 2.0, 0.0, 0.0]);
}

#[test]
fn a_short_jacobian_buffer_is_refused_by_name() {
    let kin = two_species();
    let k = kin.rate_constants(300.0);
    let msg = panic_message(|| {
        let mut jac = [0.0; 3];
        kin.jacobian_dense(&k, &[3.0, 0.0], &mut jac);
    });
    assert!(
        msg.contains("Kinetics::jacobian_dense: `jac` has 3 entries, at least 4 are needed"),
        "{msg}"
    );
}

#[test]
fn short_production_buffers_are_refused_by_name() {
    let kin = two_species();
    let k = kin.rate_constants(300.0);
    let msg = panic_message(|| {
        let mut w = [0.0; 1];
        kin.production_rates(&k, &[3.0, 0.0], &mut w);
    });
    assert!(
        msg.contains("Kinetics::production_rates: `w` has 1 entries, at least 2 are needed"),
        "{msg}"
    );
    let msg = panic_message(|| {
        let mut w = [0.0; 2];
        kin.production_rates(&k, &[3.0], &mut w);
    });
    assert!(
        msg.contains("`c` has 1 entries, at least 2 are needed"),
        "{msg}"
    );
}

#[test]
fn short_progress_buffer_of_the_gathered_rates_is_refused_by_name() {
    let kin = three_steps();
    let k = kin.rate_constants(300.0);
    let n = kin.n_species();
    let msg = panic_message(|| {
        let (mut w, mut q) = (vec![0.0; n], [0.0; 2]);
        kin.production_rates_and_progress(&k, &vec![1.0; n], &mut w, &mut q);
    });
    assert!(
        msg.contains(
            "Kinetics::production_rates_and_progress: `q` has 2 entries, at least 3 are needed"
        ),
        "{msg}"
    );
}

#[test]
fn rate_constants_of_another_mechanism_are_refused() {
    let kin = two_species();
    let other = three_steps();
    let k_other = other.rate_constants(300.0);
    let msg = panic_message(|| {
        let mut w = [0.0; 2];
        kin.production_rates(&k_other, &[3.0, 0.0], &mut w);
    });
    assert!(
        msg.contains("rate constants were made for another mechanism (3 steps; this one has 1)"),
        "{msg}"
    );
}

#[test]
fn a_temperature_that_is_not_positive_and_finite_is_refused_by_the_checked_calls() {
    // One Arrhenius step, A = 1e10 1/s, Ea = 80 kJ/mol: at 500 K, k = A exp(-Ea/(R T)) =
    // 1e10 exp(-80000/(8.314462618 * 500)) (Arrhenius law, common practice; R from CODATA
    // 2018).
    let kin = compile(&format!(
        "{HEADER}activation_energy = \"kJ/mol\"\n[[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
         [[step]]\nequation = \"A -> B\"\nforward = {{ prefactor = 1e10, activation_energy = 80.0 }}\n"
    ));
    let expected = 1e10 * (-80_000.0 / (8.314_462_618 * 500.0_f64)).exp();
    let k = kin
        .try_rate_constants(500.0)
        .expect("500 K is a valid temperature");
    assert!((k.forward[0] - expected).abs() <= 1e-13 * expected);
    assert_eq!(k.forward, kin.rate_constants(500.0).forward);
    for bad in [-5.0, 0.0, f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
        let err = kin.try_rate_constants(bad).expect_err("refused");
        if bad.is_nan() {
            assert!(err.temperature_k.is_nan());
        } else {
            assert_eq!(err.temperature_k, bad);
        }
        assert!(
            err.to_string().contains("positive, finite temperature"),
            "{err}"
        );
        // The in-place form leaves the rate constants as they were.
        let mut out = kin.rate_constants(500.0);
        assert!(kin.try_evaluate_rate_constants(bad, &mut out).is_err());
        assert_eq!(out.forward[0], k.forward[0]);
    }
    // The unchecked call gives a non-finite value at -5 K (documented): the reason for the
    // checked one.
    assert!(!kin.rate_constants(-5.0).forward[0].is_finite());
}
