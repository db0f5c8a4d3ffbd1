//! Per-step quantities on a live integrator for process models: rates of progress, their
//! concentration and temperature derivatives, reaction enthalpies, heat release and the
//! extents of each step over an advance.

mod common;

use common::*;
use stoik_kinetics::Kinetics;
use stoik_mechanism::{Arrhenius, GAS_CONSTANT as R};
use stoik_reactor::{BatchSystem, LinearAlgebra, ReactorError};
use stoik_thermo::Nasa7;

const K1: f64 = 1.0;
const K2: f64 = 0.3;

/// A and B of A -> B -> C at time t from A0 = 1 (Bateman closed form of consecutive
/// first-order reactions, Atkins' Physical Chemistry).
fn bateman(t: f64) -> (f64, f64) {
    let a = (-K1 * t).exp();
    let b = K1 / (K2 - K1) * ((-K1 * t).exp() - (-K2 * t).exp());
    (a, b)
}

fn consecutive() -> Kinetics {
    kinetics(
        &["A", "B", "C"],
        vec![
            step(&[(0, 1.0)], &[(1, 1.0)], K1),
            step(&[(1, 1.0)], &[(2, 1.0)], K2),
        ],
    )
}

#[test]
fn extents_and_rates_of_consecutive_steps_follow_the_closed_form() {
    // Over [t1, t2]: xi_1 = A(t1) - A(t2), xi_2 = C(t2) - C(t1); at t: q_1 = k1 A, q_2 = k2 B.
    let kin = consecutive();
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system = BatchSystem::new(&kin, T, &options(3, 1e-10, 1e-15, la)).unwrap();
        let mut it = system.integrator(&[1.0, 0.0, 0.0]).unwrap();
        it.track_extents();
        let mut xi = [0.0; 2];
        let mut last = 0.0;
        for t in [0.7, 1.0, 3.0, 10.0] {
            it.advance_to(t).unwrap();
            it.take_extents(&mut xi).unwrap();
            let ((a0, b0), (a1, b1)) = (bateman(last), bateman(t));
            let (c0, c1) = (1.0 - a0 - b0, 1.0 - a1 - b1);
            assert_close(
                &format!("{la:?} xi_1 [{last}, {t}]"),
                xi[0],
                a0 - a1,
                1e-8,
                1e-14,
            );
            assert_close(
                &format!("{la:?} xi_2 [{last}, {t}]"),
                xi[1],
                c1 - c0,
                1e-8,
                1e-14,
            );
            let mut q = [0.0; 2];
            it.step_rates(&mut q).unwrap();
            assert_close(&format!("{la:?} q_1({t})"), q[0], K1 * a1, 1e-8, 1e-14);
            assert_close(&format!("{la:?} q_2({t})"), q[1], K2 * b1, 1e-8, 1e-14);
            last = t;
        }
        // Wrong lengths and untracked extents are errors, not panics.
        assert!(matches!(
            it.step_rates(&mut [0.0; 3]),
            Err(ReactorError::WrongStepCount {
                expected: 2,
                found: 3,
                ..
            })
        ));
        let mut fresh = BatchSystem::new(&kin, T, &options(3, 1e-10, 1e-15, la)).unwrap();
        let mut untracked = fresh.integrator(&[1.0, 0.0, 0.0]).unwrap();
        assert!(matches!(
            untracked.take_extents(&mut xi),
            Err(ReactorError::ExtentsNotTracked)
        ));
        assert!(matches!(
            untracked.step_enthalpies(&mut xi),
            Err(ReactorError::MissingThermo { species: 0 })
        ));
    }
}

#[test]
fn rate_derivatives_match_the_rate_laws() {
    // 2 A -> B (k = 0.8 m3/(mol s)): q = k cA^2, dq/dcA = 2 k cA.
    // B <=> C (kf = 2, kr = 0.5 1/s, explicit reverse): q = kf cB - kr cC.
    // A -> C Arrhenius (A = 1e7 1/s, Ea = 50 kJ/mol): q = k cA, dq/dcA = k,
    // dq/dT = q Ea / (R T^2) (the Arrhenius temperature derivative).
    let arrhenius = Arrhenius {
        pre_exponential_si: 1e7,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: 50_000.0,
    };
    let mut reversible = step(&[(1, 1.0)], &[(2, 1.0)], 2.0);
    reversible.reversible = true;
    reversible.reverse = Some(Arrhenius {
        pre_exponential_si: 0.5,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: 0.0,
    });
    let kin = kinetics(
        &["A", "B", "C"],
        vec![
            step(&[(0, 2.0)], &[(1, 1.0)], 0.8),
            reversible,
            arrhenius_step(&[(0, 1.0)], &[(2, 1.0)], arrhenius),
        ],
    );
    let t = 320.0;
    let k3 = 1e7 * (-50_000.0 / (R * t)).exp();
    let mut system =
        BatchSystem::new(&kin, t, &options(3, 1e-10, 1e-15, LinearAlgebra::Dense)).unwrap();
    let mut it = system.integrator(&[1.5, 0.2, 0.1]).unwrap();
    it.advance_to(0.3).unwrap();
    let c = it.state().to_vec();
    let mut q = [0.0; 3];
    it.step_rates(&mut q).unwrap();
    assert_close("q 2A->B", q[0], 0.8 * c[0] * c[0], 1e-14, 0.0);
    assert_close("q B<=>C", q[1], 2.0 * c[1] - 0.5 * c[2], 1e-14, 0.0);
    assert_close("q A->C", q[2], k3 * c[0], 1e-14, 0.0);
    let mut d = Vec::new();
    it.for_each_rate_derivative(|j, i, v| d.push((j, i, v)));
    let expected = [(0, 0, 1.6 * c[0]), (1, 1, 2.0), (1, 2, -0.5), (2, 0, k3)];
    assert_eq!(d.len(), expected.len(), "{d:?}");
    for (j, i, v) in expected {
        let got = d.iter().find(|e| e.0 == j && e.1 == i).map(|e| e.2);
        assert_close(
            &format!("dq_{j}/dc_{i}"),
            got.unwrap_or(f64::NAN),
            v,
            1e-14,
            0.0,
        );
    }
    let mut slopes = [0.0; 3];
    it.step_rate_temperature_slopes(&mut slopes).unwrap();
    assert_eq!(&slopes[..2], &[0.0, 0.0]);
    assert_close(
        "dq/dT A->C",
        slopes[2],
        q[2] * 50_000.0 / (R * t * t),
        1e-12,
        0.0,
    );
}

#[test]
fn heat_release_is_the_enthalpy_weighted_sum_of_rates() {
    // A -> B releasing Q = 80 kJ/mol (B lies Q below A; monatomic species, H = R (5/2 T +
    // h0)), first order k = 0.5 1/s, isothermal: dH = -Q, heat release Q k cA (W/m3).
    let q_j = 80_000.0;
    let mut m = mechanism(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], 0.5)]);
    for (s, h0) in m.species.iter_mut().zip([q_j / R, 0.0]) {
        let a = [2.5, 0.0, 0.0, 0.0, 0.0, h0, 4.0];
        s.thermo = Some(Nasa7::new(200.0, 1000.0, 6000.0, a, a).unwrap());
    }
    let kin = Kinetics::compile(&m).unwrap();
    let mut system =
        BatchSystem::new(&kin, 350.0, &options(2, 1e-10, 1e-15, LinearAlgebra::Dense)).unwrap();
    let mut it = system.integrator(&[2.0, 0.0]).unwrap();
    let a = it.advance_to(1.0).unwrap()[0];
    let mut dh = [0.0];
    it.step_enthalpies(&mut dh).unwrap();
    assert_close("dH", dh[0], -q_j, 1e-12, 0.0);
    let release = it.heat_release_rate_w_per_m3().unwrap();
    assert_close("heat release", release, q_j * 0.5 * a, 1e-12, 0.0);
    assert_close("A(1 s)", a, 2.0 * (-0.5f64).exp(), 1e-8, 0.0);
}

#[test]
fn extents_close_the_species_balance_of_hydrogen_ignition() {
    // Over any advance of a closed constant-volume reactor, c_i(t2) - c_i(t1) =
    // sum_j nu_ij xi_j (the definition of the extent of reaction, IUPAC Gold Book). Checked
    // on the bundled hydrogen mechanism at 1500 K through the ignition, to 1e-6 of the
    // largest concentration change.
    let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
    let kin =
        Kinetics::compile(&stoik_mechanism::load_mechanism(&path).unwrap().mechanism).unwrap();
    let n = kin.n_species();
    let names = kin.species_names().to_vec();
    let idx = |s: &str| names.iter().position(|x| x == s).unwrap();
    let mut c0 = vec![0.0; n];
    c0[idx("H2")] = 0.8;
    c0[idx("O2")] = 0.4;
    c0[idx("AR")] = 6.8;
    let nu = kin.stoichiometric_matrix();
    for la in [LinearAlgebra::Dense, LinearAlgebra::Sparse] {
        let mut system = BatchSystem::new(&kin, 1500.0, &options(n, 1e-9, 1e-14, la)).unwrap();
        let mut it = system.integrator(&c0).unwrap();
        it.track_extents();
        let mut before = c0.clone();
        let mut xi = vec![0.0; kin.n_steps()];
        for t in [1e-5, 5e-5, 2e-4, 1e-3] {
            let after = it.advance_to(t).unwrap().to_vec();
            it.take_extents(&mut xi).unwrap();
            let largest = before
                .iter()
                .zip(&after)
                .fold(0.0f64, |m, (b, a)| m.max((a - b).abs()));
            for i in 0..n {
                let from_extents: f64 = nu[i].iter().zip(&xi).map(|(v, x)| v * x).sum();
                let change = after[i] - before[i];
                assert!(
                    (from_extents - change).abs() <= 1e-6 * largest,
                    "{la:?} {} over ..{t}: extents give {from_extents:e}, change {change:e}",
                    names[i]
                );
            }
            before = after;
        }
    }
}
