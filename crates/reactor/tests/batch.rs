//! Many runs of one compiled mechanism: every case of a parallel batch equals the closed form
//! of first-order decay, c_A = c_A0 exp(-m k(T) t) with k(T) = A exp(-Ea/(R T)) (Arrhenius;
//! integrated first-order rate law, e.g. Atkins' Physical Chemistry), and the parallel and
//! serial batches agree exactly.

mod common;

use common::*;
use stoik_mechanism::Arrhenius;
use stoik_reactor::{
    integrate_batch, integrate_batch_serial, BatchCase, BatchError, LinearAlgebra, ReactorModel,
};

const R: f64 = 8.314462618;

#[test]
fn parallel_batch_matches_closed_forms_and_the_serial_batch() {
    let (a, ea) = (1e7, 50e3);
    let arrhenius = Arrhenius {
        pre_exponential_si: a,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: ea,
    };
    let kinetics = kinetics(
        &["A", "B", "C"],
        vec![
            arrhenius_step(&[(0, 1.0)], &[(1, 1.0)], arrhenius),
            step(&[(2, 1.0)], &[(1, 1.0)], 0.3),
        ],
    );
    let times = vec![0.0, 0.5, 1.0, 2.0];
    let mut cases = Vec::new();
    for (i, t_k) in [300.0, 320.0, 340.0, 360.0].into_iter().enumerate() {
        for (j, m) in [1.0, 2.0, 0.5].into_iter().enumerate() {
            let c0 = 1.0 + i as f64 + 0.1 * j as f64;
            cases.push(BatchCase {
                model: ReactorModel::default(),
                temperature_k: t_k,
                initial_mol_per_m3: vec![c0, 0.0, 2.0],
                output_times_s: times.clone(),
                rate_multipliers: vec![(0, m)],
                options: options(3, 1e-9, 1e-14, LinearAlgebra::Auto),
            });
        }
    }
    let done = std::sync::atomic::AtomicUsize::new(0);
    let tick = || {
        done.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
    };
    let parallel = integrate_batch(&kinetics, &cases, &tick);
    assert_eq!(done.load(std::sync::atomic::Ordering::Relaxed), cases.len());
    let serial = integrate_batch_serial(&kinetics, &cases, &|| {});
    for ((case, p), s) in cases.iter().zip(&parallel).zip(&serial) {
        let p = p.as_ref().unwrap();
        let s = s.as_ref().unwrap();
        assert_eq!(p.concentrations_mol_per_m3, s.concentrations_mol_per_m3);
        let m = case.rate_multipliers[0].1;
        let k = m * a * (-ea / (R * case.temperature_k)).exp();
        for (row, &t) in p.concentrations_mol_per_m3.iter().zip(&times) {
            let expected_a = case.initial_mol_per_m3[0] * (-k * t).exp();
            let expected_c = 2.0 * (-0.3 * t).exp();
            assert!(
                (row[0] - expected_a).abs() <= 1e-6 * case.initial_mol_per_m3[0],
                "A at {t}: {} vs {expected_a}",
                row[0]
            );
            assert!((row[2] - expected_c).abs() <= 1e-6 * 2.0);
        }
    }
}

#[test]
fn bad_multiplier_is_a_typed_error_not_a_panic() {
    let kinetics = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 1.0)]);
    let case = BatchCase {
        model: ReactorModel::default(),
        temperature_k: 300.0,
        initial_mol_per_m3: vec![1.0, 0.0],
        output_times_s: vec![0.0, 1.0],
        rate_multipliers: vec![(5, 2.0)],
        options: options(2, 1e-6, 1e-12, LinearAlgebra::Dense),
    };
    let results = integrate_batch(&kinetics, &[case], &|| {});
    assert!(matches!(
        results[0],
        Err(BatchError::BadMultiplier {
            step: 5,
            n_steps: 1,
            ..
        })
    ));
}
