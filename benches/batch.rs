//! Speed-up of a parallel batch (rayon, one thread per core) over the same cases run serially
//! on one thread, measured in the same session: 8 runs of a 200-species synthetic hub
//! mechanism at different temperatures and rate multipliers. And the throughput of a sweep:
//! the bundled hydrogen-oxygen scenario at 1,000 temperatures (900 to 1899 K) through
//! `integrate_batch`, isothermal and adiabatic (constant volume, as the scenario), in runs per
//! second. Results: benches/README.md.

mod common;

use criterion::{criterion_group, criterion_main, Criterion};
use stoik::kinetics::Kinetics;
use stoik::reactor::{
    integrate_batch, integrate_batch_serial, BatchCase, Energy, IntegrationOptions, ReactorModel,
};
use stoik::scenario::RunPlan;

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

/// The hydrogen demo at 1,000 temperatures, with `energy` (the scenario's output grid and
/// tolerances).
fn hydrogen_sweep(energy: Option<Energy>) -> (Kinetics, Vec<BatchCase>) {
    let path = std::path::Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("mechanisms/hydrogen-oxygen.scenario.toml");
    let plan = RunPlan::load(&path).expect("the bundled scenario loads");
    let kinetics = Kinetics::compile(plan.mechanism()).expect("valid mechanism");
    let base = plan.batch_case();
    let cases = (0..1000)
        .map(|i| {
            let mut case = base.clone();
            case.temperature_k = 900.0 + i as f64;
            if let Some(energy) = &energy {
                case.model.energy = energy.clone();
            }
            // The ignition watch is the scenario's; the sweep measures the runs alone.
            case.options.watch.clear();
            case
        })
        .collect();
    (kinetics, cases)
}

fn sweep(c: &mut Criterion) {
    let mut group = c.benchmark_group("hydrogen_1000_temperatures");
    group.sample_size(10);
    for (name, energy) in [
        ("isothermal", Some(Energy::Isothermal)),
        ("adiabatic", None),
    ] {
        let (kinetics, cases) = hydrogen_sweep(energy);
        group.bench_function(name, |b| {
            b.iter(|| {
                let ok = integrate_batch(&kinetics, &cases, &|| {})
                    .iter()
                    .all(|r| r.is_ok());
                assert!(ok);
            })
        });
    }
    group.finish();
}

criterion_group!(benches, batch, sweep);
criterion_main!(benches);
