//! Rates and Jacobians of compiled kinetics against independent expectations: the published
//! Robertson right-hand side and Jacobian, and central finite differences on random mechanisms.

use proptest::prelude::*;
use stoik_kinetics::{Kinetics, RateConstants};
use stoik_mechanism::{Arrhenius, Mechanism, Species, Step, StoichTerm, ThirdBody};

fn species(name: &str) -> Species {
    Species {
        collision_diameter_m: None,
        name: name.to_string(),
        composition: None,
        note: None,
        location: None,
        thermo: None,
    }
}

fn arrhenius(a: f64) -> Arrhenius {
    Arrhenius {
        pre_exponential_si: a,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: 0.0,
    }
}

fn term(species: usize, coefficient: f64) -> StoichTerm {
    StoichTerm {
        species,
        coefficient,
    }
}

fn step(reactants: Vec<StoichTerm>, products: Vec<StoichTerm>, k: f64) -> Step {
    Step {
        equation: String::new(),
        reactants,
        products,
        reversible: false,
        forward: arrhenius(k),
        reverse: None,
        third_body: None,
        pressure_dependence: None,
        forward_orders: None,
        allow_duplicate: false,
        note: None,
        location: None,
    }
}

/// Robertson's problem (Hairer & Wanner, Solving ODEs II, section IV.10; mass-action form
/// that reproduces the published right-hand side): A -> B (0.04); 2B -> C + B (3e7); B + C -> A + C (1e4).
fn robertson() -> Mechanism {
    Mechanism {
        title: None,
        elements: vec![],
        species: vec![species("A"), species("B"), species("C")],
        steps: vec![
            step(vec![term(0, 1.0)], vec![term(1, 1.0)], 0.04),
            step(
                vec![term(1, 1.0), term(1, 1.0)],
                vec![term(2, 1.0), term(1, 1.0)],
                3e7,
            ),
            step(
                vec![term(1, 1.0), term(2, 1.0)],
                vec![term(0, 1.0), term(2, 1.0)],
                1e4,
            ),
        ],
    }
}

#[test]
fn robertson_right_hand_side_and_jacobian_match_the_published_equations() {
    let kinetics = Kinetics::compile(&robertson()).unwrap();
    let k = kinetics.rate_constants(300.0);
    let y = [0.7, 2e-5, 0.3];
    let mut w = [0.0; 3];
    kinetics.production_rates(&k, &y, &mut w);
    // The published ODE (Hairer & Wanner IV.10).
    let expected = [
        -0.04 * y[0] + 1e4 * y[1] * y[2],
        0.04 * y[0] - 1e4 * y[1] * y[2] - 3e7 * y[1] * y[1],
        3e7 * y[1] * y[1],
    ];
    for i in 0..3 {
        approx::assert_relative_eq!(w[i], expected[i], max_relative = 1e-14);
    }
    let mut jac = [0.0; 9];
    kinetics.jacobian_dense(&k, &y, &mut jac);
    // Hand-differentiated published ODE, column-major.
    let expected_jac = [
        -0.04,
        0.04,
        0.0,
        1e4 * y[2],
        -1e4 * y[2] - 6e7 * y[1],
        6e7 * y[1],
        1e4 * y[1],
        -1e4 * y[1],
        0.0,
    ];
    for i in 0..9 {
        approx::assert_relative_eq!(jac[i], expected_jac[i], max_relative = 1e-14);
    }
    // Pattern: column 0 has rows 0, 1 and the diagonal; C's column has rows 0, 1, 2.
    let pattern = kinetics.jacobian_pattern();
    assert_eq!(pattern.column_starts(), &[0, 2, 5, 8]);
    assert_eq!(pattern.row_indices(), &[0, 1, 0, 1, 2, 0, 1, 2]);
}

#[test]
fn third_body_rate_uses_weighted_total_concentration() {
    // A + A -> B with [M] = 1.0 * c_total + (5 - 1) c_C (common practice for collision
    // efficiencies); hand computation.
    let mut mechanism = Mechanism {
        species: vec![species("A"), species("B"), species("C")],
        ..Mechanism::default()
    };
    let mut s = step(vec![term(0, 2.0)], vec![term(1, 1.0)], 2.0);
    s.third_body = Some(ThirdBody::Mixture {
        default_efficiency: 1.0,
        efficiencies: vec![(2, 5.0)],
    });
    mechanism.steps.push(s);
    let kinetics = Kinetics::compile(&mechanism).unwrap();
    let k = kinetics.rate_constants(300.0);
    let c = [3.0, 1.0, 0.5];
    let mut q = [0.0];
    kinetics.rates_of_progress(&k, &c, &mut q);
    let m = 3.0 + 1.0 + 5.0 * 0.5;
    approx::assert_relative_eq!(q[0], 2.0 * 9.0 * m, max_relative = 1e-15);
}

#[test]
fn arrhenius_rate_constant_matches_hand_calculation() {
    // k = A T^n exp(-Ea/(R T)); A = 1e6, n = 1.5, Ea = 50 kJ/mol at 800 K; R exact (SI 2019).
    let mut mechanism = Mechanism {
        species: vec![species("A"), species("B")],
        ..Mechanism::default()
    };
    let mut s = step(vec![term(0, 1.0)], vec![term(1, 1.0)], 1e6);
    s.forward.temperature_exponent = 1.5;
    s.forward.activation_energy_j_per_mol = 50e3;
    mechanism.steps.push(s);
    let k = Kinetics::compile(&mechanism).unwrap().rate_constants(800.0);
    let expected = 1e6 * 800f64.powf(1.5) * (-50e3f64 / (8.314462618 * 800.0)).exp();
    approx::assert_relative_eq!(k.forward[0], expected, max_relative = 1e-14);
}

/// A random mechanism: `n` species, steps with 0-3 reactant and product terms, some reversible,
/// some third-body (mixture or named), some with non-integer explicit orders.
fn random_mechanism() -> impl Strategy<Value = (Mechanism, Vec<f64>)> {
    (2usize..7).prop_flat_map(|n| {
        let term_s = (0..n, prop_oneof![Just(1.0), Just(2.0), Just(0.5)]);
        let step_s = (
            prop::collection::vec(term_s.clone(), 0..3),
            prop::collection::vec(term_s, 0..3),
            -2.0f64..3.0,
            prop::option::of(-2.0f64..2.0),
            0u8..4,
            prop::option::of((0..n, 0.2f64..2.5)),
            prop::collection::vec((0..n, 0.0f64..10.0), 0..3),
        );
        (
            prop::collection::vec(step_s, 1..8),
            prop::collection::vec(0.05f64..3.0, n),
        )
            .prop_map(move |(steps, c)| {
                let mut mechanism = Mechanism {
                    species: (0..n).map(|i| species(&format!("S{i}"))).collect(),
                    ..Mechanism::default()
                };
                for (reac, prod, log_kf, log_kr, tb, order, effs) in steps {
                    let reac: Vec<_> = reac.into_iter().map(|(s, x)| term(s, x)).collect();
                    let prod: Vec<_> = prod.into_iter().map(|(s, x)| term(s, x)).collect();
                    let mut st = step(reac, prod, 10f64.powf(log_kf));
                    if let Some(lk) = log_kr {
                        st.reversible = true;
                        st.reverse = Some(arrhenius(10f64.powf(lk)));
                    }
                    st.third_body = match tb {
                        1 => Some(ThirdBody::Mixture {
                            default_efficiency: 1.0,
                            efficiencies: effs.clone(),
                        }),
                        2 => Some(ThirdBody::Species(effs.first().map_or(0, |e| e.0))),
                        _ => None,
                    };
                    if let Some((s, o)) = order {
                        if !st.reversible {
                            st.forward_orders = Some(vec![(s, o)]);
                        }
                    }
                    mechanism.steps.push(st);
                }
                (mechanism, c)
            })
    })
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    /// The analytic Jacobian equals central finite differences of the production rates
    /// (second-order accurate, step 1e-6 relative), and the sparse fill equals the dense one.
    #[test]
    fn jacobian_matches_finite_differences((mechanism, c) in random_mechanism()) {
        let kinetics = Kinetics::compile(&mechanism).unwrap();
        let n = kinetics.n_species();
        let k = kinetics.rate_constants(1000.0);
        let mut jac = vec![0.0; n * n];
        kinetics.jacobian_dense(&k, &c, &mut jac);
        let (mut wp, mut wm) = (vec![0.0; n], vec![0.0; n]);
        let mut scale = 0.0f64;
        let mut fd = vec![0.0; n * n];
        // Round-off bound of a central difference: a few ulps of the largest rate over 2h.
        let mut roundoff = vec![0.0; n];
        for col in 0..n {
            let h = 1e-6 * c[col];
            let mut cp = c.clone();
            cp[col] += h;
            let mut cm = c.clone();
            cm[col] -= h;
            kinetics.production_rates(&k, &cp, &mut wp);
            kinetics.production_rates(&k, &cm, &mut wm);
            let largest = wp.iter().chain(&wm).fold(0.0f64, |m, x| m.max(x.abs()));
            roundoff[col] = 8.0 * f64::EPSILON * largest / (2.0 * h);
            for row in 0..n {
                fd[col * n + row] = (wp[row] - wm[row]) / (2.0 * h);
                scale = scale.max(fd[col * n + row].abs()).max(jac[col * n + row].abs());
            }
        }
        for i in 0..n * n {
            prop_assert!((jac[i] - fd[i]).abs() <= 1e-6 * scale + roundoff[i / n],
                "entry {}: analytic {} vs finite difference {}", i, jac[i], fd[i]);
        }
        let pattern = kinetics.jacobian_pattern();
        let mut values = vec![0.0; pattern.nnz()];
        kinetics.jacobian_sparse(&k, &c, &mut values);
        let mut from_sparse = vec![0.0; n * n];
        for col in 0..n {
            for p in pattern.column_starts()[col]..pattern.column_starts()[col + 1] {
                from_sparse[col * n + pattern.row_indices()[p]] = values[p];
            }
        }
        for i in 0..n * n {
            prop_assert!((from_sparse[i] - jac[i]).abs() <= 1e-12 * scale,
                "sparse entry {} = {} but dense = {}", i, from_sparse[i], jac[i]);
        }
    }
}

/// The production rates and rates of progress computed both ways: gathered
/// (`production_rates_and_progress`) as `(w, q)`, and scattered with compensation plus
/// `rates_of_progress` as `(scattered, progress)`.
fn gathered_and_scattered(kinetics: &Kinetics, k: &RateConstants, c: &[f64]) -> [Vec<f64>; 4] {
    let (n, m) = (kinetics.n_species(), kinetics.n_steps());
    let (mut w, mut q) = (vec![0.0; n], vec![f64::NAN; m]);
    kinetics.production_rates_and_progress(k, c, &mut w, &mut q);
    let (mut scattered, mut carry) = (vec![0.0; n], vec![0.0; n]);
    kinetics.production_rates_compensated(k, c, &mut scattered, &mut carry);
    let mut progress = vec![0.0; m];
    kinetics.rates_of_progress(k, c, &mut progress);
    [w, q, scattered, progress]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(300))]

    /// The gathered production rates are the scattered compensated ones, bit for bit (the same
    /// terms added in the same order, with the exact rounding error of each addition), the
    /// rates of progress are `rates_of_progress`' bit for bit, and the sums agree with plain
    /// summation of the terms to rounding (within 8 machine epsilons of the largest term).
    #[test]
    fn gathered_production_rates_are_the_scattered_ones((mechanism, c) in random_mechanism()) {
        let kinetics = Kinetics::compile(&mechanism).unwrap();
        let (n, m) = (kinetics.n_species(), kinetics.n_steps());
        let k = kinetics.rate_constants(1000.0);
        let [w, q, scattered, progress] = gathered_and_scattered(&kinetics, &k, &c);
        for j in 0..m {
            prop_assert_eq!(q[j].to_bits(), progress[j].to_bits(), "step {}", j);
        }
        for i in 0..n {
            prop_assert_eq!(w[i].to_bits(), scattered[i].to_bits(), "species {}", i);
            let terms = kinetics.production_terms(&k, &c, i);
            let plain: f64 = terms.iter().map(|t| t.1).sum();
            let largest = terms.iter().fold(0.0f64, |a, t| a.max(t.1.abs()));
            prop_assert!((w[i] - plain).abs() <= 8.0 * f64::EPSILON * largest,
                "species {}: {} against the plain sum {}", i, w[i], plain);
        }
    }
}

/// The same on the bundled hydrogen-oxygen mechanism, whose falloff and third-body steps take
/// the second (pressure-dependent) pass: bit for bit the scattered compensated sums.
#[test]
fn gathered_production_rates_of_the_hydrogen_mechanism_are_the_scattered_ones() {
    let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
    let mechanism = stoik_mechanism::load_mechanism(&path)
        .unwrap_or_else(|e| panic!("{e}"))
        .mechanism;
    let kinetics = Kinetics::compile(&mechanism).unwrap();
    let (n, m) = (kinetics.n_species(), kinetics.n_steps());
    let pressure_steps = (0..m).filter(|&j| kinetics.is_falloff(j)).count();
    assert!(pressure_steps > 0, "the test needs falloff steps");
    let c: Vec<f64> = (0..n).map(|i| 0.5 + 0.37 * i as f64).collect();
    for temperature_k in [800.0, 1200.0, 2400.0] {
        let k = kinetics.rate_constants(temperature_k);
        let [w, q, scattered, progress] = gathered_and_scattered(&kinetics, &k, &c);
        for j in 0..m {
            assert_eq!(
                q[j].to_bits(),
                progress[j].to_bits(),
                "step {j} at {temperature_k} K"
            );
        }
        for i in 0..n {
            assert_eq!(
                w[i].to_bits(),
                scattered[i].to_bits(),
                "species {i} at {temperature_k} K"
            );
        }
    }
}

#[test]
fn scaling_a_step_scales_both_directions_and_keeps_their_ratio() {
    // A <=> B with kf = 3, kr = 2, scaled by 10: kf = 30, kr = 20 (hand calculation).
    let mut mechanism = Mechanism {
        species: vec![species("A"), species("B")],
        ..Mechanism::default()
    };
    let mut s = step(vec![term(0, 1.0)], vec![term(1, 1.0)], 3.0);
    s.reversible = true;
    s.reverse = Some(arrhenius(2.0));
    mechanism.steps.push(s);
    let mut kinetics = Kinetics::compile(&mechanism).unwrap();
    assert!(kinetics.scale_step(0, 10.0));
    assert!(!kinetics.scale_step(1, 10.0));
    assert!(!kinetics.scale_step(0, -1.0));
    let k = kinetics.rate_constants(500.0);
    approx::assert_relative_eq!(k.forward[0], 30.0, max_relative = 1e-15);
    approx::assert_relative_eq!(k.reverse[0], 20.0, max_relative = 1e-15);
}
