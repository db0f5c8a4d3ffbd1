//! Whole integrations.
//! - Robertson to t = 1e11 at rtol 1e-8 through stoik (mechanism compiled from the model types),
//!   against the baseline of the same equations hand-written as diffsol closures with the same
//!   BDF solver, tolerances and dense LU, measured in the same run.
//! - The dense-versus-sparse crossover: synthetic hub mechanisms of 25 to 400 species integrated
//!   with each linear algebra.
//!
//! Results and ratios: benches/README.md.

mod common;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use diffsol::{NalgebraLU, NalgebraMat, OdeBuilder, OdeSolverMethod};
use std::hint::black_box;
use stoik::kinetics::Kinetics;
use stoik::mechanism::{Arrhenius, Mechanism, Species, Step, StoichTerm};
use stoik::reactor::{integrate, IntegrationOptions, LinearAlgebra};

fn robertson() -> Mechanism {
    let sp = |name: &str| Species {
        collision_diameter_m: None,
        name: name.into(),
        composition: None,
        note: None,
        location: None,
        thermo: None,
    };
    let t = |species| StoichTerm {
        species,
        coefficient: 1.0,
    };
    let step = |r: Vec<StoichTerm>, p: Vec<StoichTerm>, k| Step {
        equation: String::new(),
        reactants: r,
        products: p,
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
        allow_duplicate: false,
        note: None,
        location: None,
    };
    Mechanism {
        title: None,
        elements: vec![],
        species: vec![sp("A"), sp("B"), sp("C")],
        steps: vec![
            step(vec![t(0)], vec![t(1)], 0.04),
            step(vec![t(1), t(1)], vec![t(2), t(1)], 3e7),
            step(vec![t(1), t(2)], vec![t(0), t(2)], 1e4),
        ],
    }
}

const RTOL: f64 = 1e-8;
const ATOL: f64 = 1e-14;
const T_END: f64 = 1e11;

fn robertson_bench(c: &mut Criterion) {
    let kinetics = Kinetics::compile(&robertson()).expect("valid mechanism");
    let mut options = IntegrationOptions::new(3);
    options.relative_tolerance = RTOL;
    options.absolute_tolerances_mol_per_m3 = vec![ATOL; 3];
    options.linear_algebra = LinearAlgebra::Dense;
    let mut group = c.benchmark_group("robertson_1e11");
    group.bench_function("stoik", |b| {
        b.iter(|| {
            let p = integrate(&kinetics, 300.0, &[1.0, 0.0, 0.0], &[0.0, T_END], &options)
                .map(|p| p.concentrations_mol_per_m3[1][2])
                .unwrap_or(f64::NAN);
            black_box(p)
        })
    });
    // The settings before the fidelity work (docs/solver-fidelity.md): diffsol's Newton
    // tolerance 0.2 and no projection onto conserved totals. Measured in the same run as the
    // default, to price the tighter Newton iterations.
    let mut previous = options.clone();
    previous.newton_tolerance = Some(0.2);
    previous.keep_invariants = false;
    group.bench_function("stoik_newton_0.2_no_projection", |b| {
        b.iter(|| {
            let p = integrate(&kinetics, 300.0, &[1.0, 0.0, 0.0], &[0.0, T_END], &previous)
                .map(|p| p.concentrations_mol_per_m3[1][2])
                .unwrap_or(f64::NAN);
            black_box(p)
        })
    });
    group.bench_function("diffsol_closures_baseline", |b| {
        b.iter(|| {
            let problem = OdeBuilder::<NalgebraMat<f64>>::new()
                .rtol(RTOL)
                .atol([ATOL; 3])
                .rhs_implicit(
                    |x, _p, _t, y| {
                        y[0] = -0.04 * x[0] + 1e4 * x[1] * x[2];
                        y[1] = 0.04 * x[0] - 1e4 * x[1] * x[2] - 3e7 * x[1] * x[1];
                        y[2] = 3e7 * x[1] * x[1];
                    },
                    |x, _p, _t, v, y| {
                        y[0] = -0.04 * v[0] + 1e4 * (v[1] * x[2] + x[1] * v[2]);
                        y[1] = 0.04 * v[0] - 1e4 * (v[1] * x[2] + x[1] * v[2]) - 6e7 * x[1] * v[1];
                        y[2] = 6e7 * x[1] * v[1];
                    },
                )
                .init(
                    |_p, _t, y| {
                        y[0] = 1.0;
                        y[1] = 0.0;
                        y[2] = 0.0;
                    },
                    3,
                )
                .build();
            let solved = problem.ok().and_then(|problem| {
                let mut solver = problem.bdf::<NalgebraLU<f64>>().ok()?;
                solver.solve(T_END).ok().map(|_| solver.state().y[2])
            });
            assert!(solved.is_some(), "the baseline solve failed");
            black_box(solved)
        })
    });
    group.finish();
}

fn crossover_bench(c: &mut Criterion) {
    let mut group = c.benchmark_group("dense_vs_sparse");
    group.sample_size(10);
    for n in [25usize, 50, 100, 200, 400] {
        let mechanism = common::synthetic_mechanism(n, 11);
        let kinetics = Kinetics::compile(&mechanism).expect("valid mechanism");
        let c0 = common::test_concentrations(n, 11);
        for (label, la) in [
            ("dense", LinearAlgebra::Dense),
            ("sparse", LinearAlgebra::Sparse),
        ] {
            let mut options = IntegrationOptions::new(n);
            options.relative_tolerance = 1e-6;
            options.absolute_tolerances_mol_per_m3 = vec![1e-10; n];
            options.linear_algebra = la;
            group.bench_with_input(BenchmarkId::new(label, n), &n, |b, _| {
                b.iter(|| {
                    let ok = integrate(&kinetics, 300.0, &c0, &[0.0, 10.0], &options).is_ok();
                    assert!(ok, "synthetic mechanism of {n} species failed to integrate");
                })
            });
        }
    }
    group.finish();
}

criterion_group! {
    name = benches;
    config = Criterion::default().sample_size(20);
    targets = robertson_bench, crossover_bench
}
criterion_main!(benches);
