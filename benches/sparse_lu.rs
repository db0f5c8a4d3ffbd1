//! Sparse LU for the Newton matrices of hub-structured synthetic mechanisms.
//!
//! - Per update: faer's sparse LU numeric factorization with partial pivoting (what diffsol's
//!   `FaerSparseLU` does at every Newton-matrix update; its symbolic analysis done once,
//!   outside the timing) against stoik's fixed-pattern numeric refactorization
//!   (`stoik_sparse::FixedPatternLu::factorize`, with its dense trailing block, and
//!   "sparse_only" with the block disabled: every column by the scalar sparse kernel), each
//!   followed by one solve, at 200, 1,000 and 5,000 species. The one-off symbolic phases are
//!   timed too.
//! - End to end: synthetic mechanisms of 1,000 and 5,000 species integrated to t = 10 s with
//!   `LinearAlgebra::Sparse` (fixed-pattern LU) and `LinearAlgebra::SparseFaer` (faer).
//!
//! The fill of the fixed-pattern factors and the order of the dense block are printed once per
//! size. Results: benches/README.md.

mod common;

use criterion::{criterion_group, criterion_main, BenchmarkId, Criterion};
use faer::dyn_stack::{MemBuffer, MemStack};
use faer::sparse::linalg::lu::{factorize_symbolic_lu, NumericLu};
use faer::sparse::{SparseColMatRef, SymbolicSparseColMat};
use faer::{Conj, Mat, Par};
use std::hint::black_box;
use stoik::kinetics::Kinetics;
use stoik::reactor::{integrate, IntegrationOptions, LinearAlgebra};
use stoik_sparse::FixedPatternLu;

/// `h gamma` of the Newton matrix `I - h gamma J` (s): a mid-integration step on these
/// mechanisms (rate constants 1e-4 to 1e6 /s), where the Jacobian dominates the identity.
const H_GAMMA: f64 = 0.1;

/// The Newton matrix of the synthetic mechanism of `n` species at its test concentrations:
/// (n, column starts, row indices, values).
fn newton_matrix(n: usize) -> (usize, Vec<usize>, Vec<usize>, Vec<f64>) {
    let kinetics = Kinetics::compile(&common::synthetic_mechanism(n, 11)).expect("valid mechanism");
    let pattern = kinetics.jacobian_pattern().clone();
    let k = kinetics.rate_constants(300.0);
    let c = common::test_concentrations(n, 11);
    let mut values = vec![0.0; pattern.nnz()];
    kinetics.jacobian_sparse(&k, &c, &mut values);
    for v in values.iter_mut() {
        *v *= -H_GAMMA;
    }
    for j in 0..n {
        let range = pattern.column_starts()[j]..pattern.column_starts()[j + 1];
        for (v, &row) in values[range.clone()]
            .iter_mut()
            .zip(&pattern.row_indices()[range])
        {
            if row == j {
                *v += 1.0;
            }
        }
    }
    (
        n,
        pattern.column_starts().to_vec(),
        pattern.row_indices().to_vec(),
        values,
    )
}

fn factorization_bench(c: &mut Criterion) {
    let mut group = c.benchmark_group("sparse_lu_refactorize_and_solve");
    for n in [200usize, 1000, 5000] {
        let (n, starts, rows, values) = newton_matrix(n);
        let rhs: Vec<f64> = (0..n).map(|i| 1.0 + (i % 7) as f64).collect();

        // stoik's fixed-pattern LU.
        let t0 = std::time::Instant::now();
        let mut ours = FixedPatternLu::new(n, &starts, &rows).expect("valid pattern");
        let symbolic_time = t0.elapsed();
        ours.factorize(&values).expect("factorizes");
        let mut sparse_only =
            FixedPatternLu::with_dense_block(n, &starts, &rows, false).expect("valid pattern");
        sparse_only.factorize(&values).expect("factorizes");
        println!(
            "n = {n}: nnz(A) = {}, nnz(L+U) = {} ({:.2} x; sparse only {}), dense block {}, \
             symbolic phase {:.3} ms, fallbacks {}",
            ours.nnz_a(),
            ours.nnz_lu(),
            ours.nnz_lu() as f64 / ours.nnz_a() as f64,
            sparse_only.nnz_lu(),
            ours.dense_block_size(),
            symbolic_time.as_secs_f64() * 1e3,
            ours.fallback_count()
        );
        let mut x = rhs.clone();
        group.bench_with_input(BenchmarkId::new("fixed_pattern", n), &n, |b, _| {
            b.iter(|| {
                ours.factorize(black_box(&values)).expect("factorizes");
                x.copy_from_slice(&rhs);
                ours.solve_in_place(&mut x).expect("solves");
                black_box(x[0])
            })
        });
        group.bench_with_input(BenchmarkId::new("sparse_only", n), &n, |b, _| {
            b.iter(|| {
                sparse_only
                    .factorize(black_box(&values))
                    .expect("factorizes");
                x.copy_from_slice(&rhs);
                sparse_only.solve_in_place(&mut x).expect("solves");
                black_box(x[0])
            })
        });

        // faer's sparse LU as diffsol's FaerSparseLU drives it.
        let pattern = SymbolicSparseColMat::new_checked(n, n, starts.clone(), None, rows.clone());
        let symbolic =
            factorize_symbolic_lu(pattern.as_ref(), Default::default()).expect("faer symbolic LU");
        let mut numeric = NumericLu::<usize, f64>::new();
        let mut factor_scratch = MemBuffer::new(
            symbolic.factorize_numeric_lu_scratch::<f64>(Par::Seq, Default::default()),
        );
        let mut solve_scratch = MemBuffer::new(symbolic.solve_in_place_scratch::<f64>(1, Par::Seq));
        let mut b_faer = Mat::<f64>::zeros(n, 1);
        group.bench_with_input(BenchmarkId::new("faer", n), &n, |b, _| {
            b.iter(|| {
                let a = SparseColMatRef::new(pattern.as_ref(), black_box(&values));
                let lu = symbolic
                    .factorize_numeric_lu(
                        &mut numeric,
                        a,
                        Par::Seq,
                        MemStack::new(&mut factor_scratch),
                        Default::default(),
                    )
                    .expect("faer factorizes");
                for (i, v) in rhs.iter().enumerate() {
                    b_faer[(i, 0)] = *v;
                }
                lu.solve_in_place_with_conj(
                    Conj::No,
                    b_faer.as_mut(),
                    Par::Seq,
                    MemStack::new(&mut solve_scratch),
                );
                black_box(b_faer[(0, 0)])
            })
        });
        // Both solve the same system (faer once more here, in case its benchmark was
        // filtered out).
        let lu = symbolic
            .factorize_numeric_lu(
                &mut numeric,
                SparseColMatRef::new(pattern.as_ref(), &values),
                Par::Seq,
                MemStack::new(&mut factor_scratch),
                Default::default(),
            )
            .expect("faer factorizes");
        for (i, v) in rhs.iter().enumerate() {
            b_faer[(i, 0)] = *v;
        }
        lu.solve_in_place_with_conj(
            Conj::No,
            b_faer.as_mut(),
            Par::Seq,
            MemStack::new(&mut solve_scratch),
        );
        let mut check = rhs.clone();
        ours.factorize(&values).expect("factorizes");
        ours.solve_in_place(&mut check).expect("solves");
        let diff = (0..n)
            .map(|i| (check[i] - b_faer[(i, 0)]).abs() / b_faer[(i, 0)].abs().max(1e-300))
            .fold(0.0f64, f64::max);
        println!("n = {n}: max relative difference fixed-pattern vs faer solution {diff:.1e}");
    }
    group.finish();

    let mut symbolic_group = c.benchmark_group("sparse_lu_symbolic_once");
    symbolic_group.sample_size(10);
    for n in [200usize, 1000, 5000] {
        let (n, starts, rows, _) = newton_matrix(n);
        symbolic_group.bench_with_input(BenchmarkId::new("fixed_pattern", n), &n, |b, _| {
            b.iter(|| black_box(FixedPatternLu::new(n, &starts, &rows).map(|lu| lu.nnz_lu())))
        });
        let pattern = SymbolicSparseColMat::new_checked(n, n, starts.clone(), None, rows.clone());
        symbolic_group.bench_with_input(BenchmarkId::new("faer", n), &n, |b, _| {
            b.iter(|| {
                black_box(factorize_symbolic_lu(pattern.as_ref(), Default::default()).is_ok())
            })
        });
    }
    symbolic_group.finish();
}

fn end_to_end_bench(c: &mut Criterion) {
    let mut group = c.benchmark_group("sparse_lu_integrate_t10");
    group.sample_size(10);
    // At 5,000 species a whole integration takes seconds (fixed pattern) to minutes (faer; see
    // benches/README.md), so those run only on request.
    let sizes: &[usize] = if std::env::var_os("STOIK_BENCH_E2E_5000").is_some() {
        &[1000, 5000]
    } else {
        &[1000]
    };
    let skip_faer_at_5000 = std::env::var_os("STOIK_BENCH_FAER_5000").is_none();
    for &n in sizes {
        let kinetics =
            Kinetics::compile(&common::synthetic_mechanism(n, 11)).expect("valid mechanism");
        let c0 = common::test_concentrations(n, 11);
        for (label, la) in [
            ("fixed_pattern", LinearAlgebra::Sparse),
            ("faer", LinearAlgebra::SparseFaer),
        ] {
            if n == 5000 && la == LinearAlgebra::SparseFaer && skip_faer_at_5000 {
                // Over 20 s per run: only on request.
                continue;
            }
            let mut options = IntegrationOptions::new(n);
            options.relative_tolerance = 1e-6;
            options.absolute_tolerances_mol_per_m3 = vec![1e-10; n];
            options.linear_algebra = la;
            let stats = integrate(&kinetics, 300.0, &c0, &[0.0, 10.0], &options)
                .map(|p| p.stats)
                .expect("integrates");
            println!("n = {n}, {label}: {stats:?}");
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
    targets = factorization_bench, end_to_end_bench
}
criterion_main!(benches);
