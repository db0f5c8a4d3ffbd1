//! diffsol adapter for [`stoik_sparse::FixedPatternLu`]: the linear solver of
//! [`LinearAlgebra::Sparse`](crate::LinearAlgebra::Sparse).
//!
//! diffsol's BDF hands the solver its Newton matrix `I - h gamma J` as a [`FaerSparseMat`]
//! whose pattern is fixed when the solver is set up (`set_sparsity`: the union of the
//! Jacobian pattern and the diagonal) and only whose values change at each update
//! (`set_linearisation`). The symbolic phase therefore runs once per pattern and process
//! (kept per pattern for the solvers that follow); each update checks (O(nnz), no
//! allocation) that the pattern is still the analysed one and redoes the symbolic phase only
//! if it is not.

use diffsol::{
    FaerContext, FaerSparseMat, FaerVec, LaError, LaLinearOp, Matrix, MatrixCommon, Vector,
};
use diffsol_la::error::LinearSolverError;
use diffsol_la::LinearSolver as LaLinearSolver;
use std::collections::hash_map::DefaultHasher;
use std::hash::{Hash, Hasher};
use std::sync::atomic::{AtomicUsize, Ordering};
use std::sync::{Arc, Mutex};
use stoik_sparse::FixedPatternLu;

/// diffsol linear solver on a fixed sparsity pattern (see the module docs).
#[derive(Default)]
pub(crate) struct FixedPatternSolver {
    /// The Newton matrix, built from the operator's sparsity in `set_sparsity`.
    matrix: Option<FaerSparseMat<f64>>,
    /// The factorization of the current pattern.
    lu: Option<FixedPatternLu>,
    /// Whether the last `set_linearisation` produced usable factors.
    factorized: bool,
    /// Row-major scratch of the multi-column solves (forward sensitivities: one column per
    /// parameter).
    block: std::cell::RefCell<Vec<f64>>,
}

/// How many patterns keep their symbolic analysis in [`ANALYSES`]; the least recently used
/// one is dropped beyond that (at 5,000 species one analysis with its factor storage takes a
/// few MB).
const CACHED_PATTERNS: usize = 4;

/// The symbolic analysis of one sparsity pattern, shared by every solver of that pattern.
struct CachedAnalysis {
    /// Hash of the pattern (dimension, column starts, row indices).
    hash: u64,
    /// The analysis (`Some(None)` if it failed), made once by the first solver that needs
    /// it; the others of the same pattern wait for it, solvers of other patterns do not.
    analysis: Mutex<Option<Option<FixedPatternLu>>>,
    /// Times the analysis was made (0 or 1) and times it was handed out.
    analyses: AtomicUsize,
    shared: AtomicUsize,
}

/// The symbolic analyses of recent patterns, most recently used last, so that further
/// solvers of the same mechanism (the runs of a parallel batch, repeated `integrate` calls)
/// share one analysis instead of repeating it (at 5,000 species the analysis costs about as
/// much as 20 numeric refactorizations), while runs of different mechanisms keep theirs.
/// Keyed by a hash of the pattern; the pattern itself is compared before an analysis is used.
static ANALYSES: Mutex<Vec<Arc<CachedAnalysis>>> = Mutex::new(Vec::new());

fn pattern_hash(n: usize, columns: &[usize], rows: &[usize]) -> u64 {
    let mut h = DefaultHasher::new();
    (n, columns, rows).hash(&mut h);
    h.finish()
}

/// The cache entry of the pattern with hash `hash`, created (and the least recently used
/// entry dropped) if there is none.
fn cache_entry(hash: u64) -> Arc<CachedAnalysis> {
    // A poisoned lock only means another thread panicked while holding it: the list is
    // still consistent.
    let mut cache = ANALYSES.lock().unwrap_or_else(|p| p.into_inner());
    let entry = match cache.iter().position(|e| e.hash == hash) {
        Some(i) => cache.remove(i),
        None => Arc::new(CachedAnalysis {
            hash,
            analysis: Mutex::new(None),
            analyses: AtomicUsize::new(0),
            shared: AtomicUsize::new(0),
        }),
    };
    if cache.len() >= CACHED_PATTERNS {
        cache.remove(0);
    }
    cache.push(Arc::clone(&entry));
    entry
}

/// (Times analysed, times handed out) of the cached analysis of a pattern, if cached.
#[cfg(test)]
pub(crate) fn analysis_counts(
    n: usize,
    columns: &[usize],
    rows: &[usize],
) -> Option<(usize, usize)> {
    let hash = pattern_hash(n, columns, rows);
    let cache = ANALYSES.lock().unwrap_or_else(|p| p.into_inner());
    cache.iter().find(|e| e.hash == hash).map(|e| {
        (
            e.analyses.load(Ordering::Relaxed),
            e.shared.load(Ordering::Relaxed),
        )
    })
}

impl FixedPatternSolver {
    /// Symbolic phase for the pattern of `matrix` (batch 0), shared with every solver of
    /// the same pattern through [`ANALYSES`].
    fn analyse(matrix: &FaerSparseMat<f64>) -> Option<FixedPatternLu> {
        let block = matrix.inner().first()?;
        let symbolic = block.symbolic();
        shared_analysis(block.ncols(), symbolic.col_ptr(), symbolic.row_idx())
    }
}

/// A factorization of the `n x n` compressed-sparse-column pattern `(columns, rows)` that
/// shares the cached symbolic analysis of that pattern ([`ANALYSES`]), made now if there is
/// none; `None` if the analysis fails.
pub(crate) fn shared_analysis(
    n: usize,
    columns: &[usize],
    rows: &[usize],
) -> Option<FixedPatternLu> {
    let entry = cache_entry(pattern_hash(n, columns, rows));
    let mut slot = entry.analysis.lock().unwrap_or_else(|p| p.into_inner());
    let template = slot.get_or_insert_with(|| {
        entry.analyses.fetch_add(1, Ordering::Relaxed);
        FixedPatternLu::new(n, columns, rows).ok()
    });
    match template {
        Some(t) if t.has_pattern(columns, rows) => {
            entry.shared.fetch_add(1, Ordering::Relaxed);
            t.share_symbolic().ok()
        }
        // Another pattern with the same hash (or a failed analysis): analyse our own.
        _ => FixedPatternLu::new(n, columns, rows).ok(),
    }
}

impl LaLinearSolver<FaerSparseMat<f64>> for FixedPatternSolver {
    fn set_sparsity<
        C: LaLinearOp<T = f64, V = FaerVec<f64>, M = FaerSparseMat<f64>, C = FaerContext>,
    >(
        &mut self,
        op: &C,
    ) {
        self.factorized = false;
        self.lu = None;
        // Without a pattern (not the case for our equations) there is nothing to analyse; the
        // solves then report an uninitialised LU rather than panicking.
        self.matrix = op.sparsity().map(|s| {
            FaerSparseMat::new_from_sparsity(op.nrows(), op.ncols(), Some(s), *op.context())
        });
        self.lu = self.matrix.as_ref().and_then(Self::analyse);
    }

    fn set_linearisation<
        C: LaLinearOp<T = f64, V = FaerVec<f64>, M = FaerSparseMat<f64>, C = FaerContext>,
    >(
        &mut self,
        op: &C,
    ) {
        self.factorized = false;
        let Some(matrix) = self.matrix.as_mut() else {
            return;
        };
        op.matrix_inplace(matrix);
        // One matrix batch: the reactor's context has one.
        let Some(block) = matrix.inner().first().filter(|_| matrix.inner().len() == 1) else {
            return;
        };
        let symbolic = block.symbolic();
        let same = self
            .lu
            .as_ref()
            .is_some_and(|lu| lu.has_pattern(symbolic.col_ptr(), symbolic.row_idx()));
        if !same {
            self.lu = Self::analyse(matrix);
        }
        if let (Some(lu), Some(block)) = (self.lu.as_mut(), matrix.inner().first()) {
            self.factorized = lu.factorize(block.val()).is_ok();
        }
    }

    fn solve_in_place(&self, x: &mut FaerVec<f64>) -> Result<(), LaError> {
        self.solve_columns(x, false)
    }

    fn solve_transpose_in_place(&self, x: &mut FaerVec<f64>) -> Result<(), LaError> {
        self.solve_columns(x, true)
    }
}

impl FixedPatternSolver {
    /// Solves for every column (batch) of `x` with the one factorization.
    fn solve_columns(&self, x: &mut FaerVec<f64>, transpose: bool) -> Result<(), LaError> {
        let lu = match (&self.lu, self.factorized) {
            (Some(lu), true) => lu,
            _ => return Err(LaError::from(LinearSolverError::LuNotInitialized)),
        };
        let data = x.inner_mut();
        let ncols = data.ncols();
        if ncols > 1 && !transpose {
            // All columns at once: one pass over the factors (see
            // `FixedPatternLu::solve_rows_in_place`).
            let n = data.nrows();
            let mut block = self.block.borrow_mut();
            block.resize(n * ncols, 0.0);
            for c in 0..ncols {
                for (i, &v) in data.col_as_slice(c).iter().enumerate() {
                    block[i * ncols + c] = v;
                }
            }
            lu.solve_rows_in_place(&mut block, ncols)
                .map_err(|_| LaError::from(LinearSolverError::LuSolveFailed))?;
            for c in 0..ncols {
                for (i, v) in data.col_as_slice_mut(c).iter_mut().enumerate() {
                    *v = block[i * ncols + c];
                }
            }
            return Ok(());
        }
        for column in 0..ncols {
            let rhs = data.col_as_slice_mut(column);
            let result = if transpose {
                lu.solve_transpose_in_place(rhs)
            } else {
                lu.solve_in_place(rhs)
            };
            result.map_err(|_| LaError::from(LinearSolverError::LuSolveFailed))?;
        }
        Ok(())
    }
}

#[cfg(test)]
mod tests {
    use super::analysis_counts;
    use crate::{integrate, IntegrationOptions, LinearAlgebra};
    use stoik_kinetics::Kinetics;
    use stoik_mechanism::{Arrhenius, Mechanism, Species, Step, StoichTerm};

    /// The chain A0 -> A1 -> ... -> A(n-1), every step first order with rate constant `k`
    /// (1/s).
    fn chain(n: usize, k: f64) -> Kinetics {
        let species = (0..n)
            .map(|i| Species {
                name: format!("A{i}"),
                composition: None,
                note: None,
                location: None,
                thermo: None,
                collision_diameter_m: None,
            })
            .collect();
        let term = |species| {
            vec![StoichTerm {
                species,
                coefficient: 1.0,
            }]
        };
        let steps = (0..n - 1)
            .map(|i| Step {
                equation: format!("A{i} -> A{}", i + 1),
                reactants: term(i),
                products: term(i + 1),
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
            })
            .collect();
        let mechanism = Mechanism {
            title: None,
            elements: Vec::new(),
            species,
            steps,
        };
        Kinetics::compile(&mechanism).expect("a valid chain")
    }

    /// Integrates the chain from A0 = 1 mol/m3 on the sparse path and checks every species
    /// at t = 2 s against the closed form of consecutive first-order steps with equal rate
    /// constants (Bateman 1910): A_i(t) = (k t)^i / i! exp(-k t) for i < n - 1, the last
    /// species taking the rest.
    fn run_and_check(kinetics: &Kinetics, k: f64) {
        let n = kinetics.n_species();
        let mut options = IntegrationOptions::new(n);
        options.relative_tolerance = 1e-10;
        options.absolute_tolerances_mol_per_m3 = vec![1e-14; n];
        options.linear_algebra = LinearAlgebra::Sparse;
        let mut c0 = vec![0.0; n];
        c0[0] = 1.0;
        let t = 2.0;
        let p = integrate(kinetics, 300.0, &c0, &[0.0, t], &options).expect("integrates");
        assert_eq!(p.linear_algebra_used, LinearAlgebra::Sparse);
        let last = &p.concentrations_mol_per_m3[1];
        let mut expected_sum = 0.0;
        let mut term = (-k * t).exp();
        for (i, &c) in last.iter().enumerate().take(n - 1) {
            assert!((c - term).abs() < 1e-7, "A{i}: {c} vs {term}");
            expected_sum += term;
            term *= k * t / (i + 1) as f64;
        }
        assert!((last[n - 1] - (1.0 - expected_sum)).abs() < 1e-7);
    }

    #[test]
    fn two_mechanisms_in_parallel_keep_their_own_analysis() {
        // Two chains of different lengths (different sparsity patterns), run alternately
        // on two threads: each keeps its own cached analysis, made once and shared by
        // every later run of the same pattern.
        let (a, b) = (chain(7, 1.0), chain(11, 0.5));
        let runs = 4;
        std::thread::scope(|scope| {
            scope.spawn(|| {
                for _ in 0..runs {
                    run_and_check(&a, 1.0);
                    run_and_check(&b, 0.5);
                }
            });
            scope.spawn(|| {
                for _ in 0..runs {
                    run_and_check(&b, 0.5);
                    run_and_check(&a, 1.0);
                }
            });
        });
        for kinetics in [&a, &b] {
            let p = kinetics.jacobian_pattern();
            let (analyses, shared) =
                analysis_counts(p.n(), p.column_starts(), p.row_indices()).expect("cached");
            assert_eq!(analyses, 1, "one symbolic analysis per pattern");
            assert!(shared >= 2 * runs, "every run shares it: {shared}");
        }
    }
}
