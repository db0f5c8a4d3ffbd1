//! [`FixedPatternLu`]: numeric factorization on the static pattern, the pivoting fallback,
//! and the triangular solves.

use std::cell::RefCell;
use std::sync::Arc;

use faer::dyn_stack::{MemBuffer, MemStack};
use faer::linalg::lu::partial_pivoting::factor::lu_in_place;
use faer::linalg::lu::partial_pivoting::factor::lu_in_place_scratch;
use faer::linalg::triangular_solve;
use faer::prelude::Reborrow;
use faer::sparse::linalg::lu::{factorize_symbolic_lu, LuRef, NumericLu, SymbolicLu};
use faer::sparse::{SparseColMatRef, SymbolicSparseColMat};
use faer::{Conj, MatMut, MatRef, Par};

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

/// The dense trailing block `S` (rows and columns `>= dense_start` of the permuted matrix,
/// holding the Schur complement `B22 - L21 U12` after the sparse columns), factorized in place
/// by faer's dense LU with partial pivoting as `P_S S = L_S U_S`.
struct DenseBlock {
    /// Order `n_d`.
    size: usize,
    /// Column-major `n_d x n_d`: `S`, then its `L_S` (strict lower, unit diagonal implied)
    /// and `U_S`.
    values: Vec<f64>,
    /// Row permutation of the block: row `i` of `P_S S` is row `row_perm[i]` of `S`.
    row_perm: Vec<usize>,
    row_perm_inverse: Vec<usize>,
    /// faer's workspace for the factorization (sized once).
    scratch: MemBuffer,
    /// Work vector of the solves (length `n_d`).
    solve_work: RefCell<Vec<f64>>,
}

impl DenseBlock {
    fn new(size: usize) -> Result<DenseBlock, SparseLuError> {
        let scratch = MemBuffer::try_new(lu_in_place_scratch::<usize, f64>(
            size,
            size,
            Par::Seq,
            Default::default(),
        ))
        .map_err(|_| SparseLuError::Ordering("out of memory".into()))?;
        let mut block = DenseBlock {
            size,
            values: vec![0.0; size * size],
            row_perm: vec![0; size],
            row_perm_inverse: vec![0; size],
            scratch,
            solve_work: RefCell::new(vec![0.0; size]),
        };
        // faer's dense kernels set up per-thread caches (cache sizes, packing buffers) on
        // their first call in a thread; one factorization and solve of the identity here
        // takes that allocation out of the numeric phase (for use in this thread).
        for i in 0..size {
            block.values[i * size + i] = 1.0;
        }
        block.factorize();
        let mut w = vec![1.0; size];
        block.solve(&mut w, false);
        block.solve(&mut w, true);
        Ok(block)
    }

    /// Factorizes the block in place. `false` if a pivot is zero or not finite (the block,
    /// hence the matrix, is numerically singular with these pivots).
    fn factorize(&mut self) -> bool {
        let n = self.size;
        if n == 0 {
            return true;
        }
        let mat = MatMut::from_column_major_slice_mut(&mut self.values, n, n);
        lu_in_place(
            mat,
            &mut self.row_perm,
            &mut self.row_perm_inverse,
            Par::Seq,
            MemStack::new(&mut self.scratch),
            Default::default(),
        );
        (0..n).all(|i| {
            let d = self.values[i * n + i];
            d.is_finite() && d != 0.0
        })
    }

    /// `w <- S^-1 w` (or `S^-T w`) with the factors.
    fn solve(&self, w: &mut [f64], transpose: bool) {
        let n = self.size;
        if n == 0 {
            return;
        }
        let mut t = self.solve_work.borrow_mut();
        let lu = MatRef::from_column_major_slice(&self.values, n, n);
        if transpose {
            // S^T = U_S^T L_S^T P_S: solve with U_S^T, then L_S^T, then undo P_S.
            let mut rhs = MatMut::from_column_major_slice_mut(w, n, 1);
            triangular_solve::solve_lower_triangular_in_place(
                lu.transpose(),
                rhs.as_mut(),
                Par::Seq,
            );
            triangular_solve::solve_unit_upper_triangular_in_place(
                lu.transpose(),
                rhs.as_mut(),
                Par::Seq,
            );
            t.copy_from_slice(w);
            for (i, &source) in self.row_perm.iter().enumerate() {
                w[source] = t[i];
            }
        } else {
            for (ti, &source) in t.iter_mut().zip(&self.row_perm) {
                *ti = w[source];
            }
            let mut rhs = MatMut::from_column_major_slice_mut(&mut t, n, 1);
            triangular_solve::solve_unit_lower_triangular_in_place(lu, rhs.as_mut(), Par::Seq);
            triangular_solve::solve_upper_triangular_in_place(lu, rhs.as_mut(), Par::Seq);
            w.copy_from_slice(&t);
        }
    }
}

impl DenseBlock {
    /// `W <- S^-1 W` for a row-major `n_d x ncols` block `w` (row `i` at
    /// `w[i * ncols..(i + 1) * ncols]`); `t` is scratch of the same length.
    fn solve_rows(&self, w: &mut [f64], ncols: usize, t: &mut Vec<f64>) {
        let n = self.size;
        if n == 0 || ncols == 0 {
            return;
        }
        t.clear();
        for &source in &self.row_perm {
            t.extend_from_slice(&w[source * ncols..(source + 1) * ncols]);
        }
        let lu = MatRef::from_column_major_slice(&self.values, n, n);
        let mut rhs = MatMut::from_row_major_slice_mut(t, n, ncols);
        triangular_solve::solve_unit_lower_triangular_in_place(lu, rhs.as_mut(), Par::Seq);
        triangular_solve::solve_upper_triangular_in_place(lu, rhs.as_mut(), Par::Seq);
        w[..n * ncols].copy_from_slice(t);
    }
}

/// LU factorization of square matrices whose sparsity pattern is fixed.
///
/// Set up once per pattern ([`FixedPatternLu::new`], the symbolic phase: ordering, fill
/// pattern, scatter map, all work arrays), then [`factorize`](Self::factorize) any number of
/// matrices with that pattern and [`solve_in_place`](Self::solve_in_place) with the latest
/// factors. Neither allocates, except the first time a diagonal pivot is rejected (the
/// pivoting fallback is built then, and faer sizes its numeric storage on its first use), and
/// the first dense-block factorization in a thread other than the one that called
/// [`new`](Self::new) (faer's dense kernels set up per-thread caches on their first use; `new`
/// does that for its own thread).
///
/// Solves take `&self` and use an internal work vector behind a [`RefCell`], so the type is
/// `Send` but not `Sync`.
pub struct FixedPatternLu {
    /// The symbolic analysis, shared by every factorization made with
    /// [`FixedPatternLu::share_symbolic`].
    symbolic: Arc<Symbolic>,
    /// Values of `L + U` in the pattern of `symbolic` (unit diagonal of `L` not stored).
    lu_values: Vec<f64>,
    /// Dense work vector of length `n`, kept all zero between uses.
    work: Vec<f64>,
    /// Work vector of the solves (length `n`).
    solve_work: RefCell<Vec<f64>>,
    /// Work blocks of the multi-column solves (row-major `n x ncols`, sized on first use).
    block_work: RefCell<(Vec<f64>, Vec<f64>)>,
    /// The dense trailing block (order 0 when the pattern has none).
    dense: DenseBlock,
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
            .field("dense_block_size", &self.dense_block_size())
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
    /// from `A`'s entries into it, chooses the dense trailing block (see
    /// [`dense_block_size`](Self::dense_block_size)), and allocates every work array.
    pub fn new(
        n: usize,
        column_starts: &[usize],
        row_indices: &[usize],
    ) -> Result<FixedPatternLu, SparseLuError> {
        Self::with_dense_block(n, column_starts, row_indices, true)
    }

    /// As [`new`](Self::new), with the dense trailing block allowed or not: with
    /// `allow_dense_block` false every column is eliminated by the sparse kernel with diagonal
    /// pivots (for comparisons; [`new`](Self::new) allows it).
    pub fn with_dense_block(
        n: usize,
        column_starts: &[usize],
        row_indices: &[usize],
        allow_dense_block: bool,
    ) -> Result<FixedPatternLu, SparseLuError> {
        let symbolic = Arc::new(Symbolic::new(
            n,
            column_starts,
            row_indices,
            allow_dense_block,
        )?);
        Self::from_symbolic(symbolic)
    }

    /// A new factorization of the same pattern that shares this one's symbolic analysis
    /// (ordering, fill pattern, dense-block choice) instead of recomputing it: only the
    /// numeric storage is allocated. For many solvers of one mechanism (parallel batches).
    pub fn share_symbolic(&self) -> Result<FixedPatternLu, SparseLuError> {
        Self::from_symbolic(Arc::clone(&self.symbolic))
    }

    fn from_symbolic(symbolic: Arc<Symbolic>) -> Result<FixedPatternLu, SparseLuError> {
        let n = symbolic.n;
        let lu_nnz = symbolic.lu_nnz();
        let dense = DenseBlock::new(symbolic.dense_size())?;
        Ok(FixedPatternLu {
            symbolic,
            lu_values: vec![0.0; lu_nnz],
            work: vec![0.0; n],
            solve_work: RefCell::new(vec![0.0; n]),
            block_work: RefCell::new((Vec::new(), Vec::new())),
            dense,
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
    /// diagonal of `L` is not stored), counting the dense trailing block as `n_d^2` entries.
    /// `nnz_lu() - nnz_a()` is the fill-in (plus any diagonal entries missing from `A`).
    pub fn nnz_lu(&self) -> usize {
        let n_d = self.symbolic.dense_size();
        self.symbolic.lu_nnz() + n_d * n_d
    }

    /// Order `n_d` of the dense trailing block: the last `n_d` rows and columns of the
    /// permuted matrix are factorized as one dense block with partial pivoting inside it
    /// (chosen in the symbolic phase when a cost model finds it cheaper than sparse
    /// elimination; 0 when there is none).
    pub fn dense_block_size(&self) -> usize {
        self.symbolic.dense_size()
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

    /// Left-looking LU of `B = P A P^T` on the static pattern with diagonal pivots for the
    /// columns before the dense block, then the Schur complement into the dense block and its
    /// dense LU with partial pivoting. Returns `false` (with `work` cleared) when a diagonal
    /// pivot is rejected or the dense block has a zero pivot.
    fn factorize_static(&mut self, values: &[f64]) -> bool {
        let s = &self.symbolic;
        let lu = &mut self.lu_values;
        let x = &mut self.work;
        let dense = &mut self.dense.values;
        let (k0, n_d) = (s.dense_start, s.n - s.dense_start);
        let lu_nnz = lu.len();
        lu.iter_mut().for_each(|v| *v = 0.0);
        dense.iter_mut().for_each(|v| *v = 0.0);
        for (&position, &value) in s.a_to_lu.iter().zip(values) {
            if position < lu_nnz {
                lu[position] = value;
            } else {
                dense[position - lu_nnz] = value;
            }
        }
        for j in 0..k0 {
            let (start, end) = (s.lu_column_starts[j], s.lu_column_starts[j + 1]);
            let diag = s.diagonal_positions[j];
            let rows = &s.lu_row_indices[start..end];
            for (&r, &v) in rows.iter().zip(&lu[start..end]) {
                x[r] = v;
            }
            // Rows above the diagonal, ascending: a topological order of the dependencies,
            // since column k of L only updates rows i > k.
            eliminate(s, lu, x, start, diag);
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
        // Columns of the dense block: the sparse part (rows < k0) is U12 by the same
        // triangular solve; rows >= k0 become the Schur complement column.
        for j in k0..s.n {
            let (start, end) = (s.lu_column_starts[j], s.lu_column_starts[j + 1]);
            let rows = &s.lu_row_indices[start..end];
            for (&r, &v) in rows.iter().zip(&lu[start..end]) {
                x[r] = v;
            }
            let column = &mut dense[(j - k0) * n_d..(j - k0 + 1) * n_d];
            x[k0..].copy_from_slice(column);
            eliminate(s, lu, x, start, end);
            for (p, &r) in rows.iter().enumerate() {
                lu[start + p] = x[r];
                x[r] = 0.0;
            }
            column.copy_from_slice(&x[k0..]);
            x[k0..].iter_mut().for_each(|v| *v = 0.0);
        }
        self.dense.factorize()
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

    /// Solves `A X = B` in place for a block of `ncols` right-hand sides stored row-major:
    /// row `i` of `B` (its entries in every column) at `rows[i * ncols..(i + 1) * ncols]`.
    /// Each entry of the factors is read once for all columns, and the updates run over
    /// contiguous rows (vectorized): much faster than `ncols` single solves. Allocates only the
    /// first time a block this wide is solved.
    pub fn solve_rows_in_place(&self, rows: &mut [f64], ncols: usize) -> Result<(), SparseLuError> {
        let n = self.symbolic.n;
        if rows.len() != n * ncols {
            return Err(SparseLuError::WrongLength {
                what: "right-hand sides",
                expected: n * ncols,
                found: rows.len(),
            });
        }
        match self.active {
            Active::None => Err(SparseLuError::NotFactorized),
            Active::Fallback => {
                let mut column = vec![0.0; n];
                for c in 0..ncols {
                    for (x, row) in column.iter_mut().zip(rows.chunks(ncols)) {
                        *x = row[c];
                    }
                    self.solve_impl(&mut column, false)?;
                    for (x, row) in column.iter().zip(rows.chunks_mut(ncols)) {
                        row[c] = *x;
                    }
                }
                Ok(())
            }
            Active::Static => {
                #[cfg(target_arch = "x86_64")]
                if std::arch::is_x86_feature_detected!("avx2") {
                    // SAFETY: the processor has AVX2 (checked on the line above).
                    unsafe { self.solve_rows_static_avx2(rows, ncols) };
                    return Ok(());
                }
                self.solve_rows_static(rows, ncols);
                Ok(())
            }
        }
    }

    /// [`Self::solve_rows_static`] compiled for AVX2 (4 lanes per instruction instead of
    /// SSE2's 2). The same operations in the same order on every lane: results are bitwise
    /// identical to the portable build (no fused multiply-add is enabled).
    ///
    /// # Safety
    /// The processor must support AVX2.
    #[cfg(target_arch = "x86_64")]
    #[target_feature(enable = "avx2")]
    unsafe fn solve_rows_static_avx2(&self, rows: &mut [f64], ncols: usize) {
        self.solve_rows_static(rows, ncols)
    }

    /// The block solve with the static-pivot factors; `rows` has `n * ncols` entries.
    #[inline(always)]
    fn solve_rows_static(&self, rows: &mut [f64], ncols: usize) {
        let mut work = self.block_work.borrow_mut();
        let (w, t) = &mut *work;
        w.clear();
        let s = &self.symbolic;
        for &old in &s.perm {
            w.extend_from_slice(&rows[old * ncols..(old + 1) * ncols]);
        }
        let k0 = s.dense_start;
        // L: unit lower, by columns; rows of the dense block receive - L21 w1.
        for j in 0..k0 {
            let (head, tail) = w.split_at_mut((j + 1) * ncols);
            let wj = &head[j * ncols..];
            let (start, end) = (s.diagonal_positions[j] + 1, s.lu_column_starts[j + 1]);
            for (&i, &l) in s.lu_row_indices[start..end]
                .iter()
                .zip(&self.lu_values[start..end])
            {
                let wi = &mut tail[(i - j - 1) * ncols..(i - j) * ncols];
                for (x, y) in wi.iter_mut().zip(wj) {
                    *x -= l * y;
                }
            }
        }
        self.dense.solve_rows(&mut w[k0 * ncols..], ncols, t);
        // U: the dense block's columns subtract U12 w2, then the sparse columns.
        for j in (k0..s.n).rev() {
            let (head, tail) = w.split_at_mut(j * ncols);
            let wj = &tail[..ncols];
            let (start, end) = (s.lu_column_starts[j], s.lu_column_starts[j + 1]);
            for (&k, &u) in s.lu_row_indices[start..end]
                .iter()
                .zip(&self.lu_values[start..end])
            {
                if k < j {
                    let wk = &mut head[k * ncols..(k + 1) * ncols];
                    for (x, y) in wk.iter_mut().zip(wj) {
                        *x -= u * y;
                    }
                }
            }
        }
        for j in (0..k0).rev() {
            let diag = s.diagonal_positions[j];
            let inv = 1.0 / self.lu_values[diag];
            let (head, tail) = w.split_at_mut(j * ncols);
            let wj = &mut tail[..ncols];
            wj.iter_mut().for_each(|x| *x *= inv);
            let start = s.lu_column_starts[j];
            for (&k, &u) in s.lu_row_indices[start..diag]
                .iter()
                .zip(&self.lu_values[start..diag])
            {
                let wk = &mut head[k * ncols..(k + 1) * ncols];
                for (x, y) in wk.iter_mut().zip(wj.iter()) {
                    *x -= u * y;
                }
            }
        }
        for (k, &old) in s.perm.iter().enumerate() {
            rows[old * ncols..(old + 1) * ncols].copy_from_slice(&w[k * ncols..(k + 1) * ncols]);
        }
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
                let k0 = self.symbolic.dense_start;
                if transpose {
                    self.solve_upper_transpose(&mut w);
                    self.dense.solve(&mut w[k0..], true);
                    self.solve_lower_transpose(&mut w);
                } else {
                    self.solve_lower(&mut w);
                    self.dense.solve(&mut w[k0..], false);
                    self.solve_upper(&mut w);
                }
                for (&wk, &old) in w.iter().zip(perm) {
                    rhs[old] = wk;
                }
                Ok(())
            }
        }
    }

    /// `w <- L^-1 w` for the sparse columns of `L` (unit lower triangular, by columns); the
    /// rows of the dense block receive `- L21 w1`.
    fn solve_lower(&self, w: &mut [f64]) {
        let s = &self.symbolic;
        for j in 0..s.dense_start {
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

    /// `w <- U^-1 w` (upper triangular, by columns, last to first), the rows of the dense
    /// block already solved: their columns only subtract `U12 w2`.
    fn solve_upper(&self, w: &mut [f64]) {
        let s = &self.symbolic;
        for j in (s.dense_start..s.n).rev() {
            let wj = w[j];
            if wj == 0.0 {
                continue;
            }
            let (start, end) = (s.lu_column_starts[j], s.lu_column_starts[j + 1]);
            for (&k, &u) in s.lu_row_indices[start..end]
                .iter()
                .zip(&self.lu_values[start..end])
            {
                w[k] -= u * wj;
            }
        }
        for j in (0..s.dense_start).rev() {
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

    /// `w <- U^-T w` (`U^T` is lower triangular; column `j` of `U` is row `j` of `U^T`) for
    /// the sparse columns; the rows of the dense block receive `- U12^T w1`.
    fn solve_upper_transpose(&self, w: &mut [f64]) {
        let s = &self.symbolic;
        for j in 0..s.n {
            let (start, diag) = (s.lu_column_starts[j], s.diagonal_positions[j]);
            let dot: f64 = s.lu_row_indices[start..diag]
                .iter()
                .zip(&self.lu_values[start..diag])
                .map(|(&k, &u)| u * w[k])
                .sum();
            w[j] = if j < s.dense_start {
                (w[j] - dot) / self.lu_values[diag]
            } else {
                w[j] - dot
            };
        }
    }

    /// `w <- L^-T w` (`L^T` is unit upper triangular; by columns of `L`, last to first) for
    /// the sparse columns, the rows of the dense block already solved.
    fn solve_lower_transpose(&self, w: &mut [f64]) {
        let s = &self.symbolic;
        for j in (0..s.dense_start).rev() {
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

/// Subtracts from the dense work vector `x` (holding one column of `B`) the updates of the
/// columns of `L` listed at `lu_row_indices[from..to]` (ascending, all before the column):
/// the left-looking triangular solve of one column.
#[inline]
fn eliminate(s: &Symbolic, lu: &[f64], x: &mut [f64], from: usize, to: usize) {
    for &k in &s.lu_row_indices[from..to] {
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
}
