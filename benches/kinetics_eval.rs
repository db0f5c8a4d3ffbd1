//! Cost of one right-hand side (net production rates) and one Jacobian on synthetic
//! mechanisms of 50, 1000 and 5000 species (about 3 steps per species), to show the cost grows
//! linearly with the number of steps. Results and ratios: benches/README.md.

mod common;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use std::hint::black_box;
use stoik::kinetics::Kinetics;

const SEED: u64 = 20_261_201;

fn rhs_and_jacobian(c: &mut Criterion) {
    let mut group = c.benchmark_group("kinetics");
    for n in [50usize, 1000, 5000] {
        let mechanism = common::synthetic_mechanism(n, SEED);
        let kinetics = Kinetics::compile(&mechanism).expect("valid mechanism");
        let k = kinetics.rate_constants(1000.0);
        let conc = common::test_concentrations(n, SEED);
        let mut w = vec![0.0; n];
        group.bench_with_input(BenchmarkId::new("rhs", n), &n, |b, _| {
            b.iter(|| kinetics.production_rates(&k, black_box(&conc), &mut w))
        });
        let mut values = vec![0.0; kinetics.jacobian_pattern().nnz()];
        group.bench_with_input(BenchmarkId::new("jacobian_sparse", n), &n, |b, _| {
            b.iter(|| kinetics.jacobian_sparse(&k, black_box(&conc), &mut values))
        });
        if n <= 1000 {
            let mut dense = vec![0.0; n * n];
            group.bench_with_input(BenchmarkId::new("jacobian_dense", n), &n, |b, _| {
                b.iter(|| kinetics.jacobian_dense(&k, black_box(&conc), &mut dense))
            });
        }
    }
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(30).measurement_time(std::time::Duration::from_secs(3));
    targets = rhs_and_jacobian
}
criterion_main!(benches);
