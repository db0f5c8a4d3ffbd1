//! The symbolic phase: fill-reducing ordering, static fill pattern of `L + U`, and the map
//! from the entries of `A` to their positions in the factor storage.
//!
//! All of it depends on the pattern of `A` only, so it runs once per pattern.

use faer::dyn_stack::{MemBuffer, MemStack};
use faer::sparse::linalg::amd;
use faer::sparse::SymbolicSparseColMatRef;

use crate::SparseLuError;

/// The symbolic analysis of one compressed-sparse-column pattern.
///
/// With `perm[new] = old`, the factorization is of the symmetrically
/// permuted matrix `B = P A P^T` (`B[i, j] = A[perm[i], perm[j]]`), as `B = L U` with `L` unit
/// lower triangular and `U` upper triangular, pivots taken on the diagonal.
#[derive(Debug, Clone)]
pub(crate) struct Symbolic {
    /// Dimension.
    pub(crate) n: usize,
    /// The pattern of `A` as given (column starts, row indices), kept to recognise it again.
    pub(crate) a_column_starts: Vec<usize>,
    pub(crate) a_row_indices: Vec<usize>,
    /// `perm[new] = old`.
    pub(crate) perm: Vec<usize>,
    /// Compressed-sparse-column pattern of `L + U` (strict `L` below the diagonal, `U` on
    /// and above it) in the permuted numbering; rows ascending within each column.
    pub(crate) lu_column_starts: Vec<usize>,
    pub(crate) lu_row_indices: Vec<usize>,
    /// Position of the diagonal entry of each column in `lu_row_indices`.
    pub(crate) diagonal_positions: Vec<usize>,
    /// For entry `p` of `A` (in its own storage order), its position in the `L + U` storage
    /// if below `lu_row_indices.len()`; otherwise `lu_nnz + (column - dense_start) * n_d +
    /// (row - dense_start)`, its position in the column-major dense trailing block.
    pub(crate) a_to_lu: Vec<usize>,
    /// First column (and row) of the dense trailing block; `n` when there is none. Columns
    /// `j >= dense_start` store only their rows `< dense_start` (the block `U12`) in the
    /// sparse pattern, and their diagonal position is the end of that column.
    pub(crate) dense_start: usize,
}

/// Checks the compressed-sparse-column invariants of an `n x n` pattern: `n + 1` column starts
/// from 0 to `row_indices.len()`, non-decreasing; rows in range, strictly increasing per column.
pub(crate) fn check_pattern(
    n: usize,
    column_starts: &[usize],
    row_indices: &[usize],
) -> Result<(), SparseLuError> {
    if column_starts.len() != n + 1 {
        return Err(SparseLuError::BadPattern(format!(
            "{} column starts for {n} columns (expected {})",
            column_starts.len(),
            n + 1
        )));
    }
    if column_starts[0] != 0 || column_starts[n] != row_indices.len() {
        return Err(SparseLuError::BadPattern(format!(
            "column starts run from {} to {} but there are {} row indices",
            column_starts[0],
            column_starts[n],
            row_indices.len()
        )));
    }
    for j in 0..n {
        let (start, end) = (column_starts[j], column_starts[j + 1]);
        if start > end {
            return Err(SparseLuError::BadPattern(format!(
                "column starts decrease at column {j}"
            )));
        }
        let rows = &row_indices[start..end];
        if let Some(&r) = rows.iter().find(|&&r| r >= n) {
            return Err(SparseLuError::BadPattern(format!(
                "row index {r} out of range in column {j} (dimension {n})"
            )));
        }
        if rows.windows(2).any(|w| w[0] >= w[1]) {
            return Err(SparseLuError::BadPattern(format!(
                "row indices of column {j} are not strictly increasing"
            )));
        }
    }
    Ok(())
}

impl Symbolic {
    /// Analyses the pattern (checked with [`check_pattern`] first); with `allow_dense_block`
    /// false the factors stay entirely sparse.
    pub(crate) fn new(
        n: usize,
        column_starts: &[usize],
        row_indices: &[usize],
        allow_dense_block: bool,
    ) -> Result<Symbolic, SparseLuError> {
        check_pattern(n, column_starts, row_indices)?;
        let (perm, perm_inv) = amd_ordering(n, column_starts, row_indices)?;
        let (full_starts, full_rows, full_diagonal) =
            static_lu_pattern(n, column_starts, row_indices, &perm, &perm_inv);
        let dense_start = if allow_dense_block {
            choose_dense_start(n, &full_starts, &full_rows, &full_diagonal)
        } else {
            n
        };
        let (lu_column_starts, lu_row_indices, diagonal_positions) =
            trim_dense_block(n, dense_start, full_starts, full_rows, full_diagonal);
        let lu_nnz = lu_row_indices.len();
        let n_d = n - dense_start;
        // Scatter map: entry (i, j) of A sits at (perm_inv[i], perm_inv[j]) of B.
        let mut a_to_lu = vec![0; row_indices.len()];
        for j in 0..n {
            let column = perm_inv[j];
            if column >= dense_start {
                let (start, end) = (lu_column_starts[column], lu_column_starts[column + 1]);
                let rows = &lu_row_indices[start..end];
                for p in column_starts[j]..column_starts[j + 1] {
                    let row = perm_inv[row_indices[p]];
                    a_to_lu[p] = if row >= dense_start {
                        lu_nnz + (column - dense_start) * n_d + (row - dense_start)
                    } else {
                        let offset = rows.binary_search(&row).map_err(|_| {
                            SparseLuError::BadPattern(
                                "internal: fill pattern misses an entry".into(),
                            )
                        })?;
                        start + offset
                    };
                }
                continue;
            }
            let (start, end) = (lu_column_starts[column], lu_column_starts[column + 1]);
            let rows = &lu_row_indices[start..end];
            for p in column_starts[j]..column_starts[j + 1] {
                let row = perm_inv[row_indices[p]];
                // Every entry of A is in the pattern of L + U by construction.
                let offset = rows.binary_search(&row).map_err(|_| {
                    SparseLuError::BadPattern("internal: fill pattern misses an entry".into())
                })?;
                a_to_lu[p] = start + offset;
            }
        }
        Ok(Symbolic {
            n,
            a_column_starts: column_starts.to_vec(),
            a_row_indices: row_indices.to_vec(),
            perm,
            lu_column_starts,
            lu_row_indices,
            diagonal_positions,
            a_to_lu,
            dense_start,
        })
    }

    /// Whether `(column_starts, row_indices)` is the pattern this analysis was made for.
    pub(crate) fn matches(&self, column_starts: &[usize], row_indices: &[usize]) -> bool {
        self.a_column_starts == column_starts && self.a_row_indices == row_indices
    }

    /// Entries of `L + U` held in the sparse storage (the diagonal counted once; the dense
    /// trailing block excluded).
    pub(crate) fn lu_nnz(&self) -> usize {
        self.lu_row_indices.len()
    }

    /// Order of the dense trailing block (0 when there is none).
    pub(crate) fn dense_size(&self) -> usize {
        self.n - self.dense_start
    }
}

/// "Dense" threshold of the ordering: rows and columns of `A + A^T` with more than
/// `AMD_DENSE * sqrt(n)` entries are ordered last without taking part in the minimum-degree
/// elimination. faer's default is 10; on hub-structured kinetics patterns (n/25 hub species
/// that meet most others) 1 postpones the hubs and gives factors with about half the fill of
/// the default (measured: 1,000 species 78k -> 48k entries of `L + U`; 5,000 species
/// 1.76M -> 0.96M). Values 0.5 to 2 gave the same fill at 5,000 species.
const AMD_DENSE: f64 = 1.0;

/// Smallest dense trailing block considered (below it faer's dense LU does not pay off).
pub(crate) const MIN_DENSE_BLOCK: usize = 64;

/// Cost of one multiply-add of the dense blocked LU relative to one of the scalar sparse
/// left-looking kernel (indirect addressing, no vectorization). Measured on the benchmark
/// machine (5,000-species hub pattern): the sparse kernel runs about 0.9e9 multiply-adds/s
/// (2.1e8 in 0.24 s), faer's dense LU about 13e9/s at order 1,100, ratio 0.07; values from
/// 0.05 to 0.1 gave the same refactorization times within noise (benches/README.md).
const DENSE_FLOP_COST: f64 = 0.08;

/// Cost per entry of the dense block (scatter, copy and zeroing in the numeric phase)
/// relative to one sparse multiply-add.
const DENSE_ENTRY_COST: f64 = 2.0;

/// Chooses the first column of the dense trailing block by a cost model of the numeric
/// factorization with the block starting at `k` (multiply-adds of the sparse left-looking
/// kernel for the columns of `L` before `k`, which also form the Schur complement, plus the
/// dense LU of the `n - k` trailing block, `(n - k)^3 / 3` multiply-adds at the relative cost
/// [`DENSE_FLOP_COST`], plus [`DENSE_ENTRY_COST`] per entry of the block), against the purely
/// sparse factorization. Returns `n` (no dense block) unless a block of at least
/// [`MIN_DENSE_BLOCK`] is cheaper.
///
/// The sparse kernel's work for a split at `k` is `sum_{c < k} nnz(L[:, c]) nnz(U[c, :])`
/// (strict parts), the classic operation count of sparse LU: every update from column `c` of
/// `L` to a later column is one multiply-add per entry of `L[:, c]`, whether the target entry
/// lies in the sparse part or in the Schur complement.
fn choose_dense_start(
    n: usize,
    lu_starts: &[usize],
    lu_rows: &[usize],
    diagonal: &[usize],
) -> usize {
    if n < MIN_DENSE_BLOCK {
        return n;
    }
    let mut upper_row_counts = vec![0usize; n];
    for j in 0..n {
        for &i in &lu_rows[lu_starts[j]..diagonal[j]] {
            upper_row_counts[i] += 1;
        }
    }
    // prefix[k] = sparse multiply-adds of the columns of L before k.
    let mut prefix = vec![0f64; n + 1];
    for c in 0..n {
        let lower = (lu_starts[c + 1] - diagonal[c] - 1) as f64;
        prefix[c + 1] = prefix[c] + lower * upper_row_counts[c] as f64;
    }
    let mut best = (prefix[n], n);
    for (k, &sparse) in prefix.iter().enumerate().take(n - MIN_DENSE_BLOCK + 1) {
        let d = (n - k) as f64;
        let cost = sparse + DENSE_FLOP_COST * d * d * d / 3.0 + DENSE_ENTRY_COST * d * d;
        if cost < best.0 {
            best = (cost, k);
        }
    }
    best.1
}

/// Drops from the pattern of `L + U` the entries of the dense trailing block (rows and columns
/// `>= dense_start`); the diagonal position of each column of the block becomes the end of its
/// remaining (upper, rows `< dense_start`) part.
fn trim_dense_block(
    n: usize,
    dense_start: usize,
    starts: Vec<usize>,
    rows: Vec<usize>,
    diagonal: Vec<usize>,
) -> (Vec<usize>, Vec<usize>, Vec<usize>) {
    if dense_start >= n {
        return (starts, rows, diagonal);
    }
    let kept = starts[dense_start]
        + (dense_start..n)
            .map(|j| {
                rows[starts[j]..starts[j + 1]]
                    .iter()
                    .filter(|&&r| r < dense_start)
                    .count()
            })
            .sum::<usize>();
    let mut new_starts = starts[..=dense_start].to_vec();
    let mut new_rows = Vec::with_capacity(kept);
    new_rows.extend_from_slice(&rows[..starts[dense_start]]);
    let mut new_diagonal = diagonal[..dense_start].to_vec();
    for j in dense_start..n {
        new_rows.extend(
            rows[starts[j]..starts[j + 1]]
                .iter()
                .copied()
                .filter(|&r| r < dense_start),
        );
        new_diagonal.push(new_rows.len());
        new_starts.push(new_rows.len());
    }
    (new_starts, new_rows, new_diagonal)
}

/// Approximate minimum degree ordering (Amestoy, Davis and Duff 1996, as implemented in
/// faer) of the pattern of `A + A^T`, with [`AMD_DENSE`]. Returns `(perm, perm_inv)`.
fn amd_ordering(
    n: usize,
    column_starts: &[usize],
    row_indices: &[usize],
) -> Result<(Vec<usize>, Vec<usize>), SparseLuError> {
    let mut perm = vec![0usize; n];
    let mut perm_inv = vec![0usize; n];
    if n == 0 {
        return Ok((perm, perm_inv));
    }
    let pattern = SymbolicSparseColMatRef::new_checked(n, n, column_starts, None, row_indices);
    // The scratch for A + A^T is sized from the number of stored entries; passing all of A's
    // entries (not only its upper triangle) over-allocates at most twofold.
    let mut buffer = MemBuffer::try_new(amd::order_scratch::<usize>(n, row_indices.len()))
        .map_err(|_| SparseLuError::Ordering("out of memory".into()))?;
    amd::order(
        &mut perm,
        &mut perm_inv,
        pattern,
        amd::Control {
            dense: AMD_DENSE,
            ..amd::Control::default()
        },
        MemStack::new(&mut buffer),
    )
    .map_err(|e| SparseLuError::Ordering(format!("{e:?}")))?;
    Ok((perm, perm_inv))
}

/// The exact structural pattern of `L + U` for elimination of `B = P A P^T` with diagonal
/// pivots (the diagonal is always included, stored or not in `A`).
///
/// Column `j` of `L + U` is the set reachable from the pattern of `B[:, j]` in the directed
/// graph with an edge `k -> i` for every entry `L[i, k]`, `k < j` (Gilbert and Peierls 1988,
/// "Sparse partial pivoting in time proportional to arithmetic operations"); without
/// pivoting the graph is fixed, so the patterns are computed once here. Returns the column
/// starts, the row indices (ascending per column) and the position of each diagonal.
fn static_lu_pattern(
    n: usize,
    column_starts: &[usize],
    row_indices: &[usize],
    perm: &[usize],
    perm_inv: &[usize],
) -> (Vec<usize>, Vec<usize>, Vec<usize>) {
    let mut lu_starts = Vec::with_capacity(n + 1);
    let mut lu_rows: Vec<usize> = Vec::with_capacity(2 * row_indices.len() + n);
    let mut diagonal = Vec::with_capacity(n);
    // Strict-lower part of each finished column (the graph's edges), as ranges of lu_rows.
    let mut lower_start = vec![0usize; n];
    let mut marked = vec![usize::MAX; n];
    let mut stack: Vec<(usize, usize)> = Vec::with_capacity(n);
    let mut column: Vec<usize> = Vec::with_capacity(n);
    lu_starts.push(0);
    for j in 0..n {
        column.clear();
        let old = perm[j];
        let seeds = row_indices[column_starts[old]..column_starts[old + 1]]
            .iter()
            .map(|&r| perm_inv[r])
            .chain(std::iter::once(j));
        for seed in seeds {
            if marked[seed] == j {
                continue;
            }
            marked[seed] = j;
            column.push(seed);
            if seed >= j {
                continue;
            }
            // Depth-first search along the strict-lower columns of finished columns.
            stack.push((seed, lower_start[seed]));
            while let Some(top) = stack.last_mut() {
                let (node, cursor) = *top;
                let end = lu_starts[node + 1];
                if cursor >= end {
                    stack.pop();
                    continue;
                }
                top.1 += 1;
                let next = lu_rows[cursor];
                if marked[next] != j {
                    marked[next] = j;
                    column.push(next);
                    if next < j {
                        stack.push((next, lower_start[next]));
                    }
                }
            }
        }
        column.sort_unstable();
        let base = lu_rows.len();
        let diag_offset = column.partition_point(|&r| r < j);
        diagonal.push(base + diag_offset);
        lower_start[j] = base + diag_offset + 1;
        lu_rows.extend_from_slice(&column);
        lu_starts.push(lu_rows.len());
    }
    (lu_starts, lu_rows, diagonal)
}
