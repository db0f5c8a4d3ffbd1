//! Speed-up of a parallel batch (rayon, one thread per core) over the same cases run serially
//! on one thread, measured in the same session: 8 runs of a 200-species synthetic hub
//! mechanism at different temperatures and rate multipliers. Results: benches/README.md.

mod common;

use criterion::{criterion_group, criterion_main, Criterion};
use stoik::kinetics::Kinetics;
use stoik::reactor::{
    integrate_batch, integrate_batch_serial, BatchCase, IntegrationOptions, ReactorModel,
};

fn cases(n: usize) -> Vec<BatchCase> {
    (0..8)
        .map(|i| {
            let mut options = IntegrationOptions::new(n);
            options.relative_tolerance = 1e-6;
            options.absolute_tolerances_mol_per_m3 = vec![1e-10; n];
            BatchCase {
                model: ReactorModel::default(),
                temperature_k: 300.0 + 10.0 * i as f64,
                initial_mol_per_m3: common::test_concentrations(n, 11 + i as u64),
                output_times_s: vec![0.0, 10.0],
                rate_multipliers: vec![(i, 1.0 + i as f64)],
                options,
            }
        })
        .collect()
}

fn batch(c: &mut Criterion) {
    let n = 200;
    let kinetics = Kinetics::compile(&common::synthetic_mechanism(n, 11)).expect("valid mechanism");
    let cases = cases(n);
    let mut group = c.benchmark_group("batch_8_runs_200_species");
    group.sample_size(10);
    group.bench_function("serial_baseline", |b| {
        b.iter(|| {
            let ok = integrate_batch_serial(&kinetics, &cases, &|| {})
                .iter()
                .all(|r| r.is_ok());
            assert!(ok);
        })
    });
    group.bench_function("parallel", |b| {
        b.iter(|| {
            let ok = integrate_batch(&kinetics, &cases, &|| {})
                .iter()
                .all(|r| r.is_ok());
            assert!(ok);
        })
    });
    group.finish();
}

criterion_group!(benches, batch);
criterion_main!(benches);
