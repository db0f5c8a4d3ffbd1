//! Integrated rate laws against their textbook closed forms.
//!
//! Source for every closed form here: P. Atkins and J. de Paula, *Atkins' Physical
//! Chemistry*, chapter on the rates of chemical reactions, "integrated rate laws",
//! "reactions approaching equilibrium" and "consecutive elementary reactions"
//! (the Bateman form); the same results are derived in J. I. Steinfeld, J. S. Francisco and
//! W. L. Hase, *Chemical Kinetics and Dynamics*, 2nd ed., chapter 2 (from memory).
//! Convention (mass action, common practice): a step fires at k * prod c^nu and applies its net change,
//! so 2A -> B has dA/dt = -2 k A^2.
//!
//! Tolerances: integrations run at rtol 1e-8 with a tiny absolute tolerance, and results are
//! checked to 1e-6 relative (the global error of a BDF run is typically a few times the local
//! tolerance; two orders of magnitude leave room for that).

mod common;

use common::*;
use stoik_reactor::{integrate, LinearAlgebra};

const TIMES: [f64; 7] = [0.0, 0.1, 0.5, 1.0, 2.0, 5.0, 10.0];
const CHECK_REL: f64 = 1e-6;

/// Every linear algebra: dense, the fixed-pattern sparse LU, and (with the
/// `bench-internals` feature, as in `cargo test --workspace`) faer's sparse LU.
fn both() -> Vec<LinearAlgebra> {
    vec![
        LinearAlgebra::Dense,
        LinearAlgebra::Sparse,
        #[cfg(feature = "bench-internals")]
        LinearAlgebra::SparseFaer,
    ]
}

#[test]
fn first_order_decay_is_exponential() {
    // A -> B, k = 0.5 1/s: A = A0 exp(-k t), B = A0 - A (Atkins, first-order integrated law).
    let (k, a0) = (0.5, 2.0);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 1.0)], &[(1, 1.0)], k)]);
    for la in both() {
        let p = integrate(&kin, T, &[a0, 0.0], &TIMES, &options(2, 1e-8, 1e-14, la)).unwrap();
        assert_eq!(p.linear_algebra_used, la);
        assert_eq!(p.times_s, TIMES.to_vec());
        for (t, c) in p.times_s.iter().zip(&p.concentrations_mol_per_m3) {
            let a = a0 * (-k * t).exp();
            assert_close(&format!("A({t})"), c[0], a, CHECK_REL, 1e-14);
            assert_close(&format!("B({t})"), c[1], a0 - a, CHECK_REL, 1e-14);
        }
    }
}

#[test]
fn second_order_dimerization_follows_reciprocal_law() {
    // 2A -> B, rate k A^2, dA/dt = -2 k A^2: 1/A = 1/A0 + 2 k t; B = (A0 - A)/2
    // (Atkins, second-order integrated law, with the factor 2 of our convention).
    let (k, a0) = (0.3, 1.5);
    let kin = kinetics(&["A", "B"], vec![step(&[(0, 2.0)], &[(1, 1.0)], k)]);
    for la in both() {
        let p = integrate(&kin, T, &[a0, 0.0], &TIMES, &options(2, 1e-8, 1e-14, la)).unwrap();
        for (t, c) in p.times_s.iter().zip(&p.concentrations_mol_per_m3) {
            let a = 1.0 / (1.0 / a0 + 2.0 * k * t);
            assert_close(&format!("A({t})"), c[0], a, CHECK_REL, 1e-14);
            assert_close(&format!("B({t})"), c[1], (a0 - a) / 2.0, CHECK_REL, 1e-14);
        }
    }
}

#[test]
fn mixed_second_order_with_unequal_initial_concentrations() {
    // A + B -> C, rate k A B, A0 != B0:
    // ln[(B/B0)/(A/A0)] = (B0 - A0) k t, i.e. A = A0 (B0 - A0) / (B0 e^{(B0-A0) k t} - A0)
    // (Atkins, integrated second-order law for A + B -> P).
    let (k, a0, b0) = (0.2, 1.0, 2.5);
    let kin = kinetics(
        &["A", "B", "C"],
        vec![step(&[(0, 1.0), (1, 1.0)], &[(2, 1.0)], k)],
    );
    for la in both() {
        let p = integrate(
            &kin,
            T,
            &[a0, b0, 0.0],
            &TIMES,
            &options(3, 1e-8, 1e-14, la),
        )
        .unwrap();
        for (t, c) in p.times_s.iter().zip(&p.concentrations_mol_per_m3) {
            let a = a0 * (b0 - a0) / (b0 * ((b0 - a0) * k * t).exp() - a0);
            let x = a0 - a;
            assert_close(&format!("A({t})"), c[0], a, CHECK_REL, 1e-14);
            assert_close(&format!("B({t})"), c[1], b0 - x, CHECK_REL, 1e-14);
            assert_close(&format!("C({t})"), c[2], x, CHECK_REL, 1e-14);
        }
    }
}

#[test]
fn reversible_first_order_relaxes_to_equilibrium_ratio() {
    // A <=> B, kf, kr: A = A0 (kr + kf e^{-(kf+kr) t}) / (kf + kr); at equilibrium
    // B/A = K = kf/kr (Atkins, reactions approaching equilibrium).
    let (kf, kr, a0) = (2.0, 0.5, 1.0);
    let kin = kinetics(
        &["A", "B"],
        vec![reversible(&[(0, 1.0)], &[(1, 1.0)], kf, kr)],
    );
    let mut times = TIMES.to_vec();
    times.push(40.0);
    for la in both() {
        let p = integrate(&kin, T, &[a0, 0.0], &times, &options(2, 1e-8, 1e-14, la)).unwrap();
        for (t, c) in p.times_s.iter().zip(&p.concentrations_mol_per_m3) {
            let a = a0 * (kr + kf * (-(kf + kr) * t).exp()) / (kf + kr);
            assert_close(&format!("A({t})"), c[0], a, CHECK_REL, 1e-14);
            assert_close(&format!("B({t})"), c[1], a0 - a, CHECK_REL, 1e-14);
        }
        let last = p.concentrations_mol_per_m3.last().unwrap();
        assert_close(
            "B/A at t = 40 s",
            last[1] / last[0],
            kf / kr,
            CHECK_REL,
            0.0,
        );
    }
}

#[test]
fn consecutive_first_order_follows_bateman() {
    // A -> B -> C, k1, k2: A = A0 e^{-k1 t}; B = A0 k1/(k2 - k1) (e^{-k1 t} - e^{-k2 t});
    // C = A0 - A - B (Atkins, consecutive elementary reactions; Bateman 1910).
    let (k1, k2, a0) = (1.0, 0.3, 1.0);
    let kin = kinetics(
        &["A", "B", "C"],
        vec![
            step(&[(0, 1.0)], &[(1, 1.0)], k1),
            step(&[(1, 1.0)], &[(2, 1.0)], k2),
        ],
    );
    for la in both() {
        let p = integrate(
            &kin,
            T,
            &[a0, 0.0, 0.0],
            &TIMES,
            &options(3, 1e-8, 1e-14, la),
        )
        .unwrap();
        for (t, c) in p.times_s.iter().zip(&p.concentrations_mol_per_m3) {
            let a = a0 * (-k1 * t).exp();
            let b = a0 * k1 / (k2 - k1) * ((-k1 * t).exp() - (-k2 * t).exp());
            assert_close(&format!("A({t})"), c[0], a, CHECK_REL, 1e-14);
            assert_close(&format!("B({t})"), c[1], b, CHECK_REL, 1e-14);
            assert_close(&format!("C({t})"), c[2], a0 - a - b, CHECK_REL, 1e-14);
        }
    }
}

#[test]
fn long_equal_rate_chain_follows_poisson_form_on_the_sparse_path() {
    // A_0 -> A_1 -> ... -> A_{n-1} with one rate constant k: the Bateman solution with equal
    // constants is c_i(t) = A0 (k t)^i e^{-k t} / i! for i < n - 1 (Steinfeld, Francisco &
    // Hase, ch. 2, consecutive first-order reactions; from memory). 200 species with a
    // bidiagonal Jacobian: Auto must choose the sparse path.
    let n = 200;
    let (k, a0) = (2.0, 1.0);
    let names: Vec<String> = (0..n).map(|i| format!("A{i}")).collect();
    let names: Vec<&str> = names.iter().map(String::as_str).collect();
    let steps = (0..n - 1)
        .map(|i| step(&[(i, 1.0)], &[(i + 1, 1.0)], k))
        .collect();
    let kin = kinetics(&names, steps);
    let mut c0 = vec![0.0; n];
    c0[0] = a0;
    let times = [0.0, 1.0, 5.0, 20.0];
    let p = integrate(
        &kin,
        T,
        &c0,
        &times,
        &options(n, 1e-9, 1e-16, LinearAlgebra::Auto),
    )
    .unwrap();
    assert_eq!(p.linear_algebra_used, LinearAlgebra::Sparse);
    for (t, c) in p.times_s.iter().zip(&p.concentrations_mol_per_m3).skip(1) {
        let kt: f64 = k * t;
        let mut expected = a0 * (-kt).exp(); // i = 0
        for (i, &ci) in c.iter().enumerate().take(n - 1) {
            if i > 0 {
                expected *= kt / i as f64;
            }
            // Components above 1e-6 mol/m3 are checked relatively; the tail (down to 1e-200)
            // only absolutely, on the scale of the absolute tolerance.
            if expected > 1e-6 {
                assert_close(&format!("A{i}({t})"), ci, expected, 1e-6, 0.0);
            } else {
                assert_close(&format!("A{i}({t})"), ci, expected, 0.0, 1e-12);
            }
        }
        let total: f64 = c.iter().sum();
        assert_close(&format!("total({t})"), total, a0, 1e-10, 0.0);
    }
}
