//! Local sensitivities against a plain run of the same case, measured in the same run
//! (results and ratios in benches/README.md):
//!
//! - forward: sensitivities of all 200 species to 50 rate constants (every twelfth step) of
//!   the 200-species synthetic mechanism (`common::synthetic_mechanism`, 600 steps), from
//!   t = 0 to 10 s; target under 5 times the plain run;
//! - adjoint: the gradient of one final concentration with respect to all 3,000 rate
//!   constants of the 1,000-species synthetic mechanism, to 10 s; target under 10 times the
//!   plain run.
//!
//! - scaling: the 200-species case with 10, 50 and 200 rate constants, forward and adjoint
//!   (one final concentration), against the plain run.
//!
//! All at rtol 1e-6, atol 1e-10 mol/m3, 300 K, isothermal constant volume. The plain runs
//! use the sparse linear algebra the sensitivity solvers use.

mod common;

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use stoik::kinetics::Kinetics;
use stoik::reactor::{
    adjoint_sensitivity, forward_sensitivities, integrate, IntegrationOptions, LinearAlgebra,
    ReactorModel, Target,
};

const END_S: f64 = 10.0;

fn options(n: usize) -> IntegrationOptions {
    let mut options = IntegrationOptions::new(n);
    options.relative_tolerance = 1e-6;
    options.absolute_tolerances_mol_per_m3 = vec![1e-10; n];
    options.linear_algebra = LinearAlgebra::Sparse;
    options
}

fn forward_bench(c: &mut Criterion) {
    let n = 200;
    let kinetics = Kinetics::compile(&common::synthetic_mechanism(n, 11)).expect("valid");
    let c0 = common::test_concentrations(n, 11);
    let options = options(n);
    let steps: Vec<usize> = (0..kinetics.n_steps()).step_by(12).take(50).collect();
    assert_eq!(steps.len(), 50);
    let model = ReactorModel::default();
    let mut group = c.benchmark_group("forward_200_species_50_parameters");
    group.sample_size(10);
    group.bench_function("plain", |b| {
        b.iter(|| black_box(integrate(&kinetics, 300.0, &c0, &[0.0, END_S], &options).is_ok()))
    });
    group.bench_function("forward", |b| {
        b.iter(|| {
            let r = forward_sensitivities(
                &kinetics,
                &model,
                300.0,
                &c0,
                &[0.0, END_S],
                &options,
                &steps,
                &[],
            );
            assert!(r.is_ok(), "{:?}", r.err());
            black_box(r)
        })
    });
    group.finish();
}

fn adjoint_bench(c: &mut Criterion) {
    let n = 1000;
    let kinetics = Kinetics::compile(&common::synthetic_mechanism(n, 11)).expect("valid");
    let c0 = common::test_concentrations(n, 11);
    let options = options(n);
    let steps: Vec<usize> = (0..kinetics.n_steps()).collect();
    assert_eq!(steps.len(), 3000);
    let model = ReactorModel::default();
    // The last species: a stable one (the hubs come first).
    let target = Target::Value {
        state: n - 1,
        time_s: END_S,
    };
    let mut group = c.benchmark_group("adjoint_1000_species_3000_parameters");
    group.sample_size(10);
    group.bench_function("plain", |b| {
        b.iter(|| black_box(integrate(&kinetics, 300.0, &c0, &[0.0, END_S], &options).is_ok()))
    });
    group.bench_function("adjoint", |b| {
        b.iter(|| {
            let r = adjoint_sensitivity(&kinetics, &model, 300.0, &c0, &options, &steps, target);
            assert!(r.is_ok(), "{:?}", r.err());
            black_box(r)
        })
    });
    group.finish();
}

/// How forward and adjoint costs grow with the number of parameters: the 200-species case
/// above with 10, 50 and 200 rate constants (every step_by-th step), one final concentration
/// as the adjoint's target.
fn scaling_bench(c: &mut Criterion) {
    let n = 200;
    let kinetics = Kinetics::compile(&common::synthetic_mechanism(n, 11)).expect("valid");
    let c0 = common::test_concentrations(n, 11);
    let options = options(n);
    let model = ReactorModel::default();
    let target = Target::Value {
        state: n - 1,
        time_s: END_S,
    };
    let mut group = c.benchmark_group("scaling_200_species");
    group.sample_size(10);
    group.bench_function("plain", |b| {
        b.iter(|| black_box(integrate(&kinetics, 300.0, &c0, &[0.0, END_S], &options).is_ok()))
    });
    for p in [10usize, 50, 200] {
        let steps: Vec<usize> = (0..kinetics.n_steps())
            .step_by(kinetics.n_steps() / p)
            .take(p)
            .collect();
        assert_eq!(steps.len(), p);
        group.bench_function(format!("forward_{p}"), |b| {
            b.iter(|| {
                let r = forward_sensitivities(
                    &kinetics,
                    &model,
                    300.0,
                    &c0,
                    &[0.0, END_S],
                    &options,
                    &steps,
                    &[],
                );
                assert!(r.is_ok(), "{:?}", r.err());
                black_box(r)
            })
        });
        group.bench_function(format!("adjoint_{p}"), |b| {
            b.iter(|| {
                let r =
                    adjoint_sensitivity(&kinetics, &model, 300.0, &c0, &options, &steps, target);
                assert!(r.is_ok(), "{:?}", r.err());
                black_box(r)
            })
        });
    }
    group.finish();
}

criterion_group!(benches, forward_bench, adjoint_bench, scaling_bench);
criterion_main!(benches);
