//! Cost of pressure-dependent steps: one right-hand side and one sparse Jacobian on the
//! synthetic hub mechanisms of 50 and 1000 species where every third step is a Troe falloff
//! step, relative to the same mechanism with plain Arrhenius steps (measured in the same
//! run). Variants:
//! - `plain`: every step plain Arrhenius (the baseline);
//! - `falloff_species`: every third step Troe falloff with one named bath-gas species (the
//!   Jacobian gains one column per falloff step);
//! - `falloff_mixture`: every third step Troe falloff with every species as bath gas
//!   (efficiency 1, two overrides): exact Jacobian columns for every species;
//! - `third_body_mixture`: the same steps as plain third-body steps with the same bath gas
//!   (the pre-existing cost of mixture collision partners, for comparison).
//!
//! Results and ratios: benches/README.md.

mod common;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use std::hint::black_box;
use stoik::kinetics::Kinetics;
use stoik::mechanism::{Arrhenius, Broadening, Mechanism, PressureDependence, ThirdBody};

const SEED: u64 = 20_261_201;

#[derive(Clone, Copy)]
enum Variant {
    Plain,
    FalloffSpecies,
    FalloffMixture,
    ThirdBodyMixture,
}

impl Variant {
    fn name(self) -> &'static str {
        match self {
            Variant::Plain => "plain",
            Variant::FalloffSpecies => "falloff_species",
            Variant::FalloffMixture => "falloff_mixture",
            Variant::ThirdBodyMixture => "third_body_mixture",
        }
    }
}

/// The synthetic mechanism with every third step turned into `variant`. Falloff steps keep
/// their rate constant as kinf and get k0 = kinf / (5 mol/m3), so that Pr is of order 1 to 100
/// at the benchmark concentrations (0.1 to 1.1 mol/m3 per species).
fn mechanism(n: usize, variant: Variant) -> Mechanism {
    let mut m = common::synthetic_mechanism(n, SEED);
    let mixture = ThirdBody::Mixture {
        default_efficiency: 1.0,
        efficiencies: vec![(0, 2.0), (n - 1, 0.5)],
    };
    for (j, step) in m.steps.iter_mut().enumerate() {
        if j % 3 != 0 {
            continue;
        }
        let kinf = step.forward;
        let falloff = PressureDependence::Falloff {
            low_pressure: Arrhenius {
                pre_exponential_si: kinf.pre_exponential_si / 5.0,
                ..kinf
            },
            high_pressure: kinf,
            broadening: Broadening::Troe {
                a: 0.6,
                t3_k: 200.0,
                t1_k: 2000.0,
                t2_k: Some(5000.0),
            },
            chemically_activated: false,
        };
        match variant {
            Variant::Plain => {}
            Variant::FalloffSpecies => {
                step.third_body = Some(ThirdBody::Species(n - 1));
                step.pressure_dependence = Some(falloff);
            }
            Variant::FalloffMixture => {
                step.third_body = Some(mixture.clone());
                step.pressure_dependence = Some(falloff);
            }
            Variant::ThirdBodyMixture => {
                step.third_body = Some(mixture.clone());
            }
        }
    }
    m
}

fn falloff_vs_plain(c: &mut Criterion) {
    let mut group = c.benchmark_group("falloff");
    for n in [50usize, 1000] {
        let conc = common::test_concentrations(n, SEED);
        for variant in [
            Variant::Plain,
            Variant::FalloffSpecies,
            Variant::FalloffMixture,
            Variant::ThirdBodyMixture,
        ] {
            let kinetics = Kinetics::compile(&mechanism(n, variant)).expect("valid mechanism");
            let k = kinetics.rate_constants(1000.0);
            let mut w = vec![0.0; n];
            group.bench_with_input(
                BenchmarkId::new(format!("rhs_{}", variant.name()), n),
                &n,
                |b, _| b.iter(|| kinetics.production_rates(&k, black_box(&conc), &mut w)),
            );
            let mut values = vec![0.0; kinetics.jacobian_pattern().nnz()];
            group.bench_with_input(
                BenchmarkId::new(format!("jacobian_{}", variant.name()), n),
                &n,
                |b, _| b.iter(|| kinetics.jacobian_sparse(&k, black_box(&conc), &mut values)),
            );
            eprintln!(
                "{n} species, {}: Jacobian pattern {} entries",
                variant.name(),
                kinetics.jacobian_pattern().nnz()
            );
        }
    }
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = falloff_vs_plain
}
criterion_main!(benches);
