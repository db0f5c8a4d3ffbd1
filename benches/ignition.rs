//! Hydrogen-oxygen ignition (mechanisms/hydrogen-oxygen.toml, the demo mixture: H2 0.10,
//! O2 0.05, Ar 0.85 at 1100 K and 1 atm) to 2 ms at rtol 1e-8, atol 1e-14 mol/m3:
//! - adiabatic at constant volume (temperature as a state, analytic T row and column);
//! - adiabatic at constant pressure (dense, with the expansion term);
//! - the baseline: the same mixture held isothermal at 1100 K at constant volume, measured in
//!   the same run.
//!
//! The solver counts of each run are printed once before timing. Results: benches/README.md.

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use std::path::Path;
use stoik::kinetics::Kinetics;
use stoik::mechanism::{load_mechanism, GAS_CONSTANT};
use stoik::reactor::{simulate, Constraint, Energy, IntegrationOptions, ReactorModel};

fn bench_ignition(c: &mut Criterion) {
    let path = Path::new(env!("CARGO_MANIFEST_DIR")).join("mechanisms/hydrogen-oxygen.toml");
    let file = match load_mechanism(&path) {
        Ok(f) => f,
        Err(e) => panic!("{e}"),
    };
    let mech = &file.mechanism;
    let kinetics = Kinetics::compile(mech).expect("valid mechanism");
    let total = 101325.0 / (GAS_CONSTANT * 1100.0);
    let initial: Vec<f64> = mech
        .species
        .iter()
        .map(|s| match s.name.as_str() {
            "H2" => 0.10 * total,
            "O2" => 0.05 * total,
            "AR" => 0.85 * total,
            _ => 0.0,
        })
        .collect();
    let times = [0.0, 2e-3];
    let mut options = IntegrationOptions::new(initial.len());
    options.relative_tolerance = 1e-8;
    options.absolute_tolerances_mol_per_m3 = vec![1e-14; initial.len()];
    let cases = [
        ("isothermal_cv_1100K", ReactorModel::default()),
        (
            "adiabatic_cv",
            ReactorModel {
                constraint: Constraint::ConstantVolume,
                energy: Energy::Adiabatic,
                ..Default::default()
            },
        ),
        (
            "adiabatic_cp",
            ReactorModel {
                constraint: Constraint::ConstantPressure,
                energy: Energy::Adiabatic,
                ..Default::default()
            },
        ),
    ];
    let mut group = c.benchmark_group("hydrogen_ignition");
    for (name, model) in &cases {
        let run = || simulate(&kinetics, model, 1100.0, &initial, &times, &options);
        match run() {
            Ok(p) => {
                eprintln!(
                    "{name}: T_end {:.1} K, {}",
                    p.temperatures_k.last().copied().unwrap_or(f64::NAN),
                    p.stats
                );
            }
            Err(e) => panic!("{name}: {e}"),
        }
        group.bench_function(*name, |b| b.iter(|| black_box(run())));
    }
    group.finish();
}

criterion_group!(benches, bench_ignition);
criterion_main!(benches);
