//! [`FixedPatternLu`]: numeric factorization on the static pattern, the pivoting fallback,
//! and the triangular solves.

use std::cell::RefCell;

use faer::dyn_stack::{MemBuffer, MemStack};
use faer::prelude::Reborrow;
use faer::sparse::linalg::lu::{factorize_symbolic_lu, LuRef, NumericLu, SymbolicLu};
use faer::sparse::{SparseColMatRef, SymbolicSparseColMat};
use faer::{Conj, MatMut, Par};

use crate::symbolic::Symbolic;
use crate::SparseLuError;

/// Relative pivot threshold: a diagonal pivot is rejected when
/// `|pivot| <= PIVOT_TOLERANCE * max |entry|` of its (updated) column of `L + U`.
pub const PIVOT_TOLERANCE: f64 = 1e-12;

/// Which factorization the solves use.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Active {
    /// Nothing factorized yet, or the last factorization failed.
    None,
    /// The static-pattern factors with diagonal pivots.
    Static,
    /// faer's sparse LU with partial pivoting (after a rejected diagonal pivot).
    Fallback,
}

/// faer's pivoting sparse LU, built the first time a diagonal pivot is rejected.
struct Fallback {
    pattern: SymbolicSparseColMat<usize>,
    symbolic: SymbolicLu<usize>,
    numeric: NumericLu<usize, f64>,
    factor_scratch: MemBuffer,
    solve_scratch: RefCell<MemBuffer>,
}

impl Fallback {
    fn new(symbolic: &Symbolic) -> Result<Fallback, SparseLuError> {
        let n = symbolic.n;
        let pattern = SymbolicSparseColMat::new_checked(
            n,
            n,
            symbolic.a_column_starts.clone(),
            None,
            symbolic.a_row_indices.clone(),
        );
        let lu_symbolic = factorize_symbolic_lu(pattern.rb(), Default::default())
            .map_err(|e| SparseLuError::Ordering(format!("{e:?}")))?;
        let factor_scratch = MemBuffer::try_new(
            lu_symbolic.factorize_numeric_lu_scratch::<f64>(Par::Seq, Default::default()),
        )
        .map_err(|_| SparseLuError::Ordering("out of memory".into()))?;
        let solve_scratch = MemBuffer::try_new(
            lu_symbolic
                .solve_in_place_scratch::<f64>(1, Par::Seq)
                .or(lu_symbolic.solve_transpose_in_place_scratch::<f64>(1, Par::Seq)),
        )
        .map_err(|_| SparseLuError::Ordering("out of memory".into()))?;
        Ok(Fallback {
            pattern,
            symbolic: lu_symbolic,
            numeric: NumericLu::new(),
            factor_scratch,
            solve_scratch: RefCell::new(solve_scratch),
        })
    }

    fn factorize(&mut self, values: &[f64]) -> Result<(), SparseLuError> {
        let a = SparseColMatRef::new(self.pattern.rb(), values);
        self.symbolic
            .factorize_numeric_lu(
                &mut self.numeric,
                a,
                Par::Seq,
                MemStack::new(&mut self.factor_scratch),
                Default::default(),
            )
            .map(|_| ())
            .map_err(|_| SparseLuError::Singular)
    }

    /// Solves in place; `false` if the result is not finite (the matrix is numerically
    /// singular: faer's partial pivoting does not report zero pivots itself).
    fn solve(&self, rhs: &mut [f64], transpose: bool) -> bool {
        let lu = LuRef::new_unchecked(&self.symbolic, &self.numeric);
        let n = rhs.len();
        let mat = MatMut::from_column_major_slice_mut(rhs, n, 1);
        let mut scratch = self.solve_scratch.borrow_mut();
        let stack = MemStack::new(&mut scratch);
        if transpose {
            lu.solve_transpose_in_place_with_conj(Conj::No, mat, Par::Seq, stack);
        } else {
            lu.solve_in_place_with_conj(Conj::No, mat, Par::Seq, stack);
        }
        rhs.iter().all(|v| v.is_finite())
    }
}

/// LU factorization of square matrices whose sparsity pattern is fixed.
///
/// Set up once per pattern ([`FixedPatternLu::new`], the symbolic phase: ordering, fill
/// pattern, scatter map, all work arrays), then [`factorize`](Self::factorize) any number of
/// matrices with that pattern and [`solve_in_place`](Self::solve_in_place) with the latest
/// factors. Neither allocates, except the first time a diagonal pivot is rejected (the
/// pivoting fallback is built then, and faer sizes its numeric storage on its first use).
///
/// Solves take `&self` and use an internal work vector behind a [`RefCell`], so the type is
/// `Send` but not `Sync`.
pub struct FixedPatternLu {
    symbolic: Symbolic,
    /// Values of `L + U` in the pattern of `symbolic` (unit diagonal of `L` not stored).
    lu_values: Vec<f64>,
    /// Dense work vector of length `n`, kept all zero between uses.
    work: Vec<f64>,
    /// Work vector of the solves (length `n`).
    solve_work: RefCell<Vec<f64>>,
    fallback: Option<Box<Fallback>>,
    active: Active,
    factorizations: usize,
    fallbacks: usize,
}

impl std::fmt::Debug for FixedPatternLu {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("FixedPatternLu")
            .field("n", &self.symbolic.n)
            .field("nnz_a", &self.nnz_a())
            .field("nnz_lu", &self.nnz_lu())
            .field("factorizations", &self.factorizations)
            .field("fallbacks", &self.fallbacks)
            .finish()
    }
}

impl FixedPatternLu {
    /// The symbolic phase for the `n x n` compressed-sparse-column pattern
    /// `(column_starts, row_indices)` (rows strictly increasing within each column; the
    /// diagonal need not be stored, but a matrix without a stored diagonal entry in some
    /// column always takes the pivoting fallback).
    ///
    /// Orders the rows and columns symmetrically by approximate minimum degree on the pattern
    /// of `A + A^T`, computes the exact fill pattern of `L + U` for diagonal pivots, the map
    /// from `A`'s entries into it, and allocates every work array.
    pub fn new(
        n: usize,
        column_starts: &[usize],
        row_indices: &[usize],
    ) -> Result<FixedPatternLu, SparseLuError> {
        let symbolic = Symbolic::new(n, column_starts, row_indices)?;
        let lu_nnz = symbolic.lu_nnz();
        Ok(FixedPatternLu {
            symbolic,
            lu_values: vec![0.0; lu_nnz],
            work: vec![0.0; n],
            solve_work: RefCell::new(vec![0.0; n]),
            fallback: None,
            active: Active::None,
            factorizations: 0,
            fallbacks: 0,
        })
    }

    /// Dimension `n`.
    pub fn dimension(&self) -> usize {
        self.symbolic.n
    }

    /// Stored entries of `A`'s pattern.
    pub fn nnz_a(&self) -> usize {
        self.symbolic.a_row_indices.len()
    }

    /// Stored entries of `L + U` (strict lower `L`, upper `U` with its diagonal; the unit
    /// diagonal of `L` is not stored). `nnz_lu() - nnz_a()` is the fill-in (plus any
    /// diagonal entries missing from `A`).
    pub fn nnz_lu(&self) -> usize {
        self.symbolic.lu_nnz()
    }

    /// The fill-reducing permutation, `perm[new] = old`: row and column `perm[k]` of `A` are
    /// row and column `k` of the factorized matrix.
    pub fn permutation(&self) -> &[usize] {
        &self.symbolic.perm
    }

    /// Whether `(column_starts, row_indices)` is the pattern this factorization was set up
    /// for (O(nnz) comparison, no allocation).
    pub fn has_pattern(&self, column_starts: &[usize], row_indices: &[usize]) -> bool {
        self.symbolic.matches(column_starts, row_indices)
    }

    /// Numeric factorizations attempted so far (successful or not).
    pub fn factorization_count(&self) -> usize {
        self.factorizations
    }

    /// Factorizations that rejected a diagonal pivot and used the pivoting fallback.
    pub fn fallback_count(&self) -> usize {
        self.fallbacks
    }

    /// Whether the current factors come from the pivoting fallback.
    pub fn is_fallback_active(&self) -> bool {
        self.active == Active::Fallback
    }

    /// Factorizes the matrix with entries `values` (one per stored entry of the pattern, in
    /// its order). Uses diagonal pivots on the static pattern; if a pivot is not finite or
    /// `|pivot| <= PIVOT_TOLERANCE * max |entry of its updated column|`, this factorization
    /// is redone by faer's sparse LU with partial pivoting (counted by
    /// [`fallback_count`](Self::fallback_count)). The next call tries diagonal pivots again.
    ///
    /// Does not allocate, except to build the fallback the first time it is needed.
    ///
    /// Errors: [`SparseLuError::Singular`] when the fallback finds the matrix structurally
    /// singular; a numerically singular matrix is reported by the solve that follows.
    pub fn factorize(&mut self, values: &[f64]) -> Result<(), SparseLuError> {
        if values.len() != self.nnz_a() {
            return Err(SparseLuError::WrongLength {
                what: "matrix values",
                expected: self.nnz_a(),
                found: values.len(),
            });
        }
        self.factorizations += 1;
        self.active = Active::None;
        if self.factorize_static(values) {
            self.active = Active::Static;
            return Ok(());
        }
        self.fallbacks += 1;
        if self.fallback.is_none() {
            self.fallback = Some(Box::new(Fallback::new(&self.symbolic)?));
        }
        if let Some(fallback) = self.fallback.as_mut() {
            fallback.factorize(values)?;
            self.active = Active::Fallback;
        }
        Ok(())
    }

    /// Left-looking LU of `B = P A P^T` on the static pattern with diagonal pivots. Returns
    /// `false` (with `work` cleared) when a pivot is rejected.
    fn factorize_static(&mut self, values: &[f64]) -> bool {
        let s = &self.symbolic;
        let lu = &mut self.lu_values;
        let x = &mut self.work;
        lu.iter_mut().for_each(|v| *v = 0.0);
        for (&position, &value) in s.a_to_lu.iter().zip(values) {
            lu[position] = value;
        }
        for j in 0..s.n {
            let (start, end) = (s.lu_column_starts[j], s.lu_column_starts[j + 1]);
            let diag = s.diagonal_positions[j];
            let rows = &s.lu_row_indices[start..end];
            for (&r, &v) in rows.iter().zip(&lu[start..end]) {
                x[r] = v;
            }
            // Rows above the diagonal, ascending: a topological order of the dependencies,
            // since column k of L only updates rows i > k.
            for &k in &s.lu_row_indices[start..diag] {
                let xk = x[k];
                if xk == 0.0 {
                    continue;
                }
                let (l_start, l_end) = (s.diagonal_positions[k] + 1, s.lu_column_starts[k + 1]);
                for (&i, &lik) in s.lu_row_indices[l_start..l_end]
                    .iter()
                    .zip(&lu[l_start..l_end])
                {
                    x[i] -= lik * xk;
                }
            }
            let pivot = x[j];
            let column_max = rows.iter().fold(0.0f64, |m, &r| m.max(x[r].abs()));
            // `column_max` is at least `|pivot|`, so a zero column is rejected too.
            if !pivot.is_finite()
                || !column_max.is_finite()
                || pivot.abs() <= PIVOT_TOLERANCE * column_max
            {
                for &r in rows {
                    x[r] = 0.0;
                }
                return false;
            }
            let inverse = 1.0 / pivot;
            let split = diag - start;
            for (p, &r) in rows.iter().enumerate() {
                let v = x[r];
                x[r] = 0.0;
                lu[start + p] = if p > split { v * inverse } else { v };
            }
        }
        true
    }

    /// Solves `A x = b` in place (`rhs` holds `b` on entry and `x` on return) with the latest
    /// factors. No allocation. [`SparseLuError::Singular`] if the pivoting fallback's factors
    /// turn a finite `b` into a non-finite `x`.
    pub fn solve_in_place(&self, rhs: &mut [f64]) -> Result<(), SparseLuError> {
        self.solve_impl(rhs, false)
    }

    /// Solves `A^T x = b` in place with the latest factors of `A`. No allocation.
    pub fn solve_transpose_in_place(&self, rhs: &mut [f64]) -> Result<(), SparseLuError> {
        self.solve_impl(rhs, true)
    }

    fn solve_impl(&self, rhs: &mut [f64], transpose: bool) -> Result<(), SparseLuError> {
        let n = self.symbolic.n;
        if rhs.len() != n {
            return Err(SparseLuError::WrongLength {
                what: "right-hand side",
                expected: n,
                found: rhs.len(),
            });
        }
        match self.active {
            Active::None => Err(SparseLuError::NotFactorized),
            Active::Fallback => {
                if let Some(fallback) = self.fallback.as_ref() {
                    let input_finite = rhs.iter().all(|v| v.is_finite());
                    if fallback.solve(rhs, transpose) || !input_finite {
                        Ok(())
                    } else {
                        Err(SparseLuError::Singular)
                    }
                } else {
                    Err(SparseLuError::NotFactorized)
                }
            }
            Active::Static => {
                let mut w = self.solve_work.borrow_mut();
                let perm = &self.symbolic.perm;
                for (wk, &old) in w.iter_mut().zip(perm) {
                    *wk = rhs[old];
                }
                if transpose {
                    self.solve_upper_transpose(&mut w);
                    self.solve_lower_transpose(&mut w);
                } else {
                    self.solve_lower(&mut w);
                    self.solve_upper(&mut w);
                }
                for (&wk, &old) in w.iter().zip(perm) {
                    rhs[old] = wk;
                }
                Ok(())
            }
        }
    }

    /// `w <- L^-1 w` (unit lower triangular, by columns).
    fn solve_lower(&self, w: &mut [f64]) {
        let s = &self.symbolic;
        for j in 0..s.n {
            let wj = w[j];
            if wj == 0.0 {
                continue;
            }
            let (start, end) = (s.diagonal_positions[j] + 1, s.lu_column_starts[j + 1]);
            for (&i, &l) in s.lu_row_indices[start..end]
                .iter()
                .zip(&self.lu_values[start..end])
            {
                w[i] -= l * wj;
            }
        }
    }

    /// `w <- U^-1 w` (upper triangular, by columns, last to first).
    fn solve_upper(&self, w: &mut [f64]) {
        let s = &self.symbolic;
        for j in (0..s.n).rev() {
            let diag = s.diagonal_positions[j];
            let wj = w[j] / self.lu_values[diag];
            w[j] = wj;
            if wj == 0.0 {
                continue;
            }
            let start = s.lu_column_starts[j];
            for (&k, &u) in s.lu_row_indices[start..diag]
                .iter()
                .zip(&self.lu_values[start..diag])
            {
                w[k] -= u * wj;
            }
        }
    }

    /// `w <- U^-T w` (`U^T` is lower triangular; column `j` of `U` is row `j` of `U^T`).
    fn solve_upper_transpose(&self, w: &mut [f64]) {
        let s = &self.symbolic;
        for j in 0..s.n {
            let (start, diag) = (s.lu_column_starts[j], s.diagonal_positions[j]);
            let dot: f64 = s.lu_row_indices[start..diag]
                .iter()
                .zip(&self.lu_values[start..diag])
                .map(|(&k, &u)| u * w[k])
                .sum();
            w[j] = (w[j] - dot) / self.lu_values[diag];
        }
    }

    /// `w <- L^-T w` (`L^T` is unit upper triangular; by columns of `L`, last to first).
    fn solve_lower_transpose(&self, w: &mut [f64]) {
        let s = &self.symbolic;
        for j in (0..s.n).rev() {
            let (start, end) = (s.diagonal_positions[j] + 1, s.lu_column_starts[j + 1]);
            let dot: f64 = s.lu_row_indices[start..end]
                .iter()
                .zip(&self.lu_values[start..end])
                .map(|(&i, &l)| l * w[i])
                .sum();
            w[j] -= dot;
        }
    }
}
