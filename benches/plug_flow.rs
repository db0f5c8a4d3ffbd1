//! The plug-flow reactor against the closed batch it follows: the hydrogen-oxygen demo
//! mixture (mechanisms/hydrogen-oxygen.toml; H2 0.10, O2 0.05, Ar 0.85 at 1100 K and 1 atm),
//! adiabatic, rtol 1e-8, atol 1e-14 mol/m3:
//! - `plug_flow_101_distances`: a 1 cm tube (constant area) at 10 m/s inlet velocity, 2 cm
//!   long, reported at 101 evenly spaced distances (the distance state, the velocity terms of
//!   the Jacobian and the root finding of every output);
//! - the baseline `batch_cp_101_times`: the same parcel as an adiabatic constant-pressure batch
//!   to the plug flow's exit residence time, reported at 101 evenly spaced times, measured in
//!   the same run.
//!
//! The solver counts of each run are printed once before timing. Results: benches/README.md.

use criterion::{criterion_group, criterion_main, Criterion};
use std::hint::black_box;
use std::path::Path;
use stoik::kinetics::Kinetics;
use stoik::mechanism::{load_mechanism, GAS_CONSTANT};
use stoik::reactor::{
    simulate, simulate_plug_flow, AxialProfile, Constraint, Energy, IntegrationOptions, PlugFlow,
    PlugOutputs, ReactorModel,
};

fn bench_plug_flow(c: &mut Criterion) {
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
    let masses: Vec<f64> = (0..mech.species.len())
        .map(|i| {
            mech.molar_mass_kg_per_mol(i)
                .expect("species with elements")
        })
        .collect();
    let density: f64 = initial.iter().zip(&masses).map(|(c, m)| c * m).sum();
    let area = std::f64::consts::PI * 0.01 * 0.01 / 4.0;
    let area_profile = AxialProfile::constant("area", area).expect("positive area");
    let plug = PlugFlow::new(density * 10.0 * area, area_profile, masses).expect("valid flow");
    let plug_model = ReactorModel {
        constraint: Constraint::ConstantPressure,
        energy: Energy::Adiabatic,
        plug: Some(plug),
        ..Default::default()
    };
    let batch_model = ReactorModel {
        constraint: Constraint::ConstantPressure,
        energy: Energy::Adiabatic,
        ..Default::default()
    };
    let mut options = IntegrationOptions::new(initial.len());
    options.relative_tolerance = 1e-8;
    options.absolute_tolerances_mol_per_m3 = vec![1e-14; initial.len()];
    let distances = PlugOutputs::Distances((0..=100).map(|i| 0.02 * (i as f64 / 100.0)).collect());
    let run_plug = || {
        simulate_plug_flow(
            &kinetics,
            &plug_model,
            1100.0,
            &initial,
            &distances,
            &options,
        )
    };
    let exit_s = match run_plug() {
        Ok(p) => {
            eprintln!(
                "plug flow: exit at {:.6e} s, T_exit {:.1} K, {}",
                p.profiles.times_s.last().copied().unwrap_or(f64::NAN),
                p.profiles
                    .temperatures_k
                    .last()
                    .copied()
                    .unwrap_or(f64::NAN),
                p.profiles.stats
            );
            p.profiles.times_s.last().copied().unwrap_or(f64::NAN)
        }
        Err(e) => panic!("plug flow: {e}"),
    };
    let times: Vec<f64> = (0..=100).map(|i| exit_s * (i as f64 / 100.0)).collect();
    let run_batch = || simulate(&kinetics, &batch_model, 1100.0, &initial, &times, &options);
    match run_batch() {
        Ok(p) => eprintln!(
            "batch: T_end {:.1} K, {}",
            p.temperatures_k.last().copied().unwrap_or(f64::NAN),
            p.stats
        ),
        Err(e) => panic!("batch: {e}"),
    }
    let mut group = c.benchmark_group("hydrogen_plug_flow");
    group.bench_function("batch_cp_101_times", |b| b.iter(|| black_box(run_batch())));
    group.bench_function("plug_flow_101_distances", |b| {
        b.iter(|| black_box(run_plug()))
    });
    group.finish();
}

criterion_group!(benches, bench_plug_flow);
criterion_main!(benches);
