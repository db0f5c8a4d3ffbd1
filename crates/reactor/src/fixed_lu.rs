//! diffsol adapter for [`stoik_sparse::FixedPatternLu`]: the linear solver of
//! [`LinearAlgebra::Sparse`](crate::LinearAlgebra::Sparse).
//!
//! diffsol's BDF hands the solver its Newton matrix `I - h gamma J` as a [`FaerSparseMat`]
//! whose pattern is fixed when the solver is set up (`set_sparsity`: the union of the
//! Jacobian pattern and the diagonal) and only whose values change at each update
//! (`set_linearisation`). The symbolic phase therefore runs once per solver; each update
//! checks (O(nnz), no allocation) that the pattern is still the analysed one and redoes the
//! symbolic phase only if it is not.

use diffsol::{
    FaerContext, FaerSparseMat, FaerVec, LaError, LaLinearOp, Matrix, MatrixCommon, Vector,
};
use diffsol_la::error::LinearSolverError;
use diffsol_la::LinearSolver as LaLinearSolver;
use std::sync::Mutex;
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
}

/// The most recently analysed pattern, kept so that further solvers of the same mechanism
/// (the runs of a parallel batch, repeated `integrate` calls) share its symbolic analysis
/// instead of repeating it (at 5,000 species the analysis costs about as much as 20 numeric
/// refactorizations). Held while analysing, so concurrent solvers wait for one analysis.
static SHARED_ANALYSIS: Mutex<Option<FixedPatternLu>> = Mutex::new(None);

impl FixedPatternSolver {
    /// Symbolic phase for the pattern of `matrix` (batch 0), shared when the pattern is the
    /// one analysed last.
    fn analyse(matrix: &FaerSparseMat<f64>) -> Option<FixedPatternLu> {
        let block = matrix.inner().first()?;
        let symbolic = block.symbolic();
        let (columns, rows) = (symbolic.col_ptr(), symbolic.row_idx());
        // A poisoned lock only means another thread panicked mid-analysis: start afresh.
        let mut shared = SHARED_ANALYSIS.lock().unwrap_or_else(|p| p.into_inner());
        if let Some(template) = shared.as_ref().filter(|t| t.has_pattern(columns, rows)) {
            return template.share_symbolic().ok();
        }
        let lu = FixedPatternLu::new(block.ncols(), columns, rows).ok()?;
        *shared = lu.share_symbolic().ok();
        Some(lu)
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
        for column in 0..data.ncols() {
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
