//! Small mechanisms built in code for the reactor tests (abstract species, constant rate
//! constants: A > 0, n = 0, Ea = 0, so k does not depend on temperature).
#![allow(dead_code)]

use stoik_kinetics::Kinetics;
use stoik_mechanism::{Arrhenius, Mechanism, Species, Step, StoichTerm};
use stoik_reactor::{IntegrationOptions, LinearAlgebra};

/// Any temperature: the rate constants below do not depend on it.
pub const T: f64 = 298.15;

pub fn constant(k: f64) -> Arrhenius {
    Arrhenius {
        pre_exponential_si: k,
        temperature_exponent: 0.0,
        activation_energy_j_per_mol: 0.0,
    }
}

fn terms(side: &[(usize, f64)]) -> Vec<StoichTerm> {
    side.iter()
        .map(|&(species, coefficient)| StoichTerm {
            species,
            coefficient,
        })
        .collect()
}

/// An irreversible mass-action step `reactants -> products` with rate constant `k` (SI).
pub fn step(reactants: &[(usize, f64)], products: &[(usize, f64)], k: f64) -> Step {
    arrhenius_step(reactants, products, constant(k))
}

/// An irreversible step with a general Arrhenius rate constant.
pub fn arrhenius_step(reactants: &[(usize, f64)], products: &[(usize, f64)], k: Arrhenius) -> Step {
    Step {
        equation: format!("{reactants:?} -> {products:?}"),
        reactants: terms(reactants),
        products: terms(products),
        reversible: false,
        forward: k,
        reverse: None,
        third_body: None,
        pressure_dependence: None,
        forward_orders: None,
        allow_duplicate: false,
        note: None,
        location: None,
    }
}

/// A reversible step with forward and reverse rate constants `kf`, `kr` (SI).
pub fn reversible(reactants: &[(usize, f64)], products: &[(usize, f64)], kf: f64, kr: f64) -> Step {
    Step {
        reversible: true,
        reverse: Some(constant(kr)),
        ..step(reactants, products, kf)
    }
}

/// A mechanism of abstract species (no composition) named `names`.
pub fn mechanism(names: &[&str], steps: Vec<Step>) -> Mechanism {
    Mechanism {
        title: None,
        elements: Vec::new(),
        species: names
            .iter()
            .map(|name| Species {
                collision_diameter_m: None,
                name: name.to_string(),
                composition: None,
                note: None,
                location: None,
                thermo: None,
            })
            .collect(),
        steps,
    }
}

pub fn kinetics(names: &[&str], steps: Vec<Step>) -> Kinetics {
    Kinetics::compile(&mechanism(names, steps)).unwrap()
}

/// Options with relative tolerance `rtol`, absolute tolerance `atol` for every species.
pub fn options(
    n: usize,
    rtol: f64,
    atol: f64,
    linear_algebra: LinearAlgebra,
) -> IntegrationOptions {
    IntegrationOptions {
        relative_tolerance: rtol,
        absolute_tolerances_mol_per_m3: vec![atol; n],
        linear_algebra,
        max_steps: 100_000,
        non_negative: true,
        watch: Vec::new(),
        keep_invariants: true,
        newton_tolerance: None,
        wall_time_limit_s: None,
        monitor: None,
    }
}

/// Asserts `|actual - expected| <= rel * |expected| + abs`, naming the quantity.
#[track_caller]
pub fn assert_close(what: &str, actual: f64, expected: f64, rel: f64, abs: f64) {
    let err = (actual - expected).abs();
    if std::env::var_os("STOIK_SHOW_ERRORS").is_some() {
        println!("{what}: relative error {:.2e}", err / expected.abs());
    }
    assert!(
        err <= rel * expected.abs() + abs,
        "{what}: got {actual:e}, expected {expected:e} (error {err:e}, relative {:e})",
        err / expected.abs()
    );
}

/// Robertson's problem in mass-action form (Hairer & Wanner, *Solving ODEs II*, section IV.10):
/// A -> B (0.04); B + B -> C + B (3e7); B + C -> A + C (1e4).
pub fn robertson() -> Kinetics {
    kinetics(
        &["A", "B", "C"],
        vec![
            step(&[(0, 1.0)], &[(1, 1.0)], 0.04),
            step(&[(1, 2.0)], &[(2, 1.0), (1, 1.0)], 3e7),
            step(&[(1, 1.0), (2, 1.0)], &[(0, 1.0), (2, 1.0)], 1e4),
        ],
    )
}

/// HIRES in mass-action form (Mazzia & Magherini, *Test Set for IVP Solvers* 2.4, problem
/// HIRES; species P1..P8 = 0..7).
pub fn hires() -> Kinetics {
    kinetics(
        &["P1", "P2", "P3", "P4", "P5", "P6", "P7", "P8"],
        vec![
            step(&[], &[(0, 1.0)], 0.0007),
            step(&[(0, 1.0)], &[(1, 1.0)], 1.71),
            step(&[(1, 1.0)], &[(0, 1.0)], 0.43),
            step(&[(1, 1.0)], &[(3, 1.0)], 8.32),
            step(&[(2, 1.0)], &[(0, 1.0)], 8.32),
            step(&[(2, 1.0)], &[(3, 1.0)], 1.71),
            step(&[(3, 1.0)], &[(2, 1.0)], 0.43),
            step(&[(3, 1.0)], &[(5, 1.0)], 0.69),
            step(&[(4, 1.0)], &[(2, 1.0)], 0.035),
            step(&[(4, 1.0)], &[(5, 1.0)], 1.71),
            step(&[(5, 1.0)], &[(4, 1.0)], 0.43),
            step(&[(6, 1.0)], &[(4, 1.0), (7, 1.0)], 0.43),
            step(&[(6, 1.0)], &[(5, 1.0), (7, 1.0)], 0.69),
            step(&[(6, 1.0)], &[(7, 1.0)], 0.69),
            step(&[(5, 1.0), (7, 1.0)], &[(6, 1.0)], 280.0),
        ],
    )
}

/// The Oregonator in mass-action form (Hairer & Wanner, *Solving ODEs II*, section IV.10;
/// X, Y, Z = 0, 1, 2).
pub fn oregonator() -> Kinetics {
    let (s, q, w) = (77.27, 8.375e-6, 0.161);
    kinetics(
        &["X", "Y", "Z"],
        vec![
            step(&[(1, 1.0)], &[(0, 1.0), (1, 1.0)], s),
            step(&[(0, 1.0)], &[(0, 2.0)], s),
            step(&[(0, 1.0), (1, 1.0)], &[(1, 1.0)], s),
            step(&[(0, 2.0)], &[(0, 1.0)], s * q),
            step(&[(2, 1.0)], &[(2, 1.0), (1, 1.0)], 1.0 / s),
            step(&[(1, 1.0)], &[], 1.0 / s),
            step(&[(0, 1.0), (1, 1.0)], &[(0, 1.0)], 1.0 / s),
            step(&[(0, 1.0)], &[(0, 1.0), (2, 1.0)], w),
            step(&[(2, 1.0)], &[], w),
        ],
    )
}
