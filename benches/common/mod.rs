//! Reproducible synthetic mechanisms for benchmarks (shared by the bench targets).
//!
//! Shape (common practice for stress-testing stiff kinetics solvers, modelled on real
//! mechanisms): N species of which N/25 are "hub" radicals that meet most other species;
//! about 3 steps per species, mixing unimolecular decompositions, bimolecular hub attacks and
//! radical recombinations; rate constants log-uniform over ten decades. Species are abstract
//! (no composition). A 64-bit xorshift generator with a fixed seed makes every run identical.

#![allow(dead_code)]

use stoik::mechanism::{Arrhenius, Mechanism, Species, Step, StoichTerm};

/// xorshift64* pseudo-random numbers (Vigna 2016), reproducible from a seed; shared with the
/// tests.
pub use stoik_testsupport::Rng;

fn species(name: String) -> Species {
    Species {
        collision_diameter_m: None,
        name,
        composition: None,
        note: None,
        location: None,
        thermo: None,
    }
}

fn term(species: usize) -> StoichTerm {
    StoichTerm {
        species,
        coefficient: 1.0,
    }
}

/// One synthetic step (reactants, products, k) per the shape described in the module docs.
pub fn synthetic_steps(n: usize, seed: u64) -> Vec<(Vec<usize>, Vec<usize>, f64)> {
    let mut rng = Rng::new(seed);
    let hubs = (n / 25).max(1);
    let mut steps = Vec::with_capacity(3 * n);
    for _ in 0..3 * n {
        let k = 10f64.powf(-4.0 + 10.0 * rng.uniform());
        let other = |rng: &mut Rng| hubs + rng.below(n - hubs);
        let kind = rng.below(3);
        let (reactants, products) = match kind {
            // Unimolecular decomposition of a stable species into a hub and another species.
            0 => {
                let a = other(&mut rng);
                (vec![a], vec![rng.below(hubs), other(&mut rng)])
            }
            // A hub radical attacks a stable species.
            1 => {
                let h = rng.below(hubs);
                let a = other(&mut rng);
                (vec![h, a], vec![rng.below(hubs), other(&mut rng)])
            }
            // Two radicals recombine.
            _ => {
                let h1 = rng.below(hubs);
                let h2 = rng.below(hubs);
                (vec![h1, h2], vec![other(&mut rng)])
            }
        };
        // Bimolecular constants are scaled to concentrations of order 1 mol/m3.
        steps.push((reactants, products, k));
    }
    steps
}

/// The synthetic mechanism of `n` species as model types.
pub fn synthetic_mechanism(n: usize, seed: u64) -> Mechanism {
    let steps = synthetic_steps(n, seed)
        .into_iter()
        .map(|(reactants, products, k)| Step {
            equation: String::new(),
            reactants: reactants.into_iter().map(term).collect(),
            products: products.into_iter().map(term).collect(),
            reversible: false,
            forward: Arrhenius {
                pre_exponential_si: k,
                temperature_exponent: 0.0,
                activation_energy_j_per_mol: 0.0,
            },
            reverse: None,
            third_body: None,
            pressure_dependence: None,
            forward_orders: None,
            allow_duplicate: true,
            note: None,
            location: None,
        })
        .collect();
    Mechanism {
        title: Some(format!("synthetic hub mechanism, {n} species")),
        elements: vec![],
        species: (0..n).map(|i| species(format!("S{i}"))).collect(),
        steps,
    }
}

/// The synthetic mechanism of `n` species as mechanism-file text (format version 1).
pub fn synthetic_mechanism_text(n: usize, seed: u64) -> String {
    let mut text = String::with_capacity(n * 200);
    text.push_str(
        "stoik_mechanism = 1\ntitle = \"synthetic\"\n[units]\namount = \"mol\"\nlength = \"m\"\n",
    );
    for i in 0..n {
        text.push_str(&format!("[[species]]\nname = \"S{i}\"\n"));
    }
    for (reactants, products, k) in synthetic_steps(n, seed) {
        let side = |s: &[usize]| {
            s.iter()
                .map(|i| format!("S{i}"))
                .collect::<Vec<_>>()
                .join(" + ")
        };
        text.push_str(&format!(
            "[[step]]\nequation = \"{} -> {}\"\nforward = {{ prefactor = {k:e} }}\nallow_duplicate = true\n",
            side(&reactants),
            side(&products)
        ));
    }
    text
}

/// A positive, reproducible concentration vector (mol/m3) for evaluating rates.
pub fn test_concentrations(n: usize, seed: u64) -> Vec<f64> {
    let mut rng = Rng::new(seed ^ 0x9E37_79B9_7F4A_7C15);
    (0..n).map(|_| 0.1 + rng.uniform()).collect()
}
