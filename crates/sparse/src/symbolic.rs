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
    /// For entry `p` of `A` (in its own storage order), its position in the `L + U` storage.
    pub(crate) a_to_lu: Vec<usize>,
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
    /// Analyses the pattern (checked with [`check_pattern`] first).
    pub(crate) fn new(
        n: usize,
        column_starts: &[usize],
        row_indices: &[usize],
    ) -> Result<Symbolic, SparseLuError> {
        check_pattern(n, column_starts, row_indices)?;
        let (perm, perm_inv) = amd_ordering(n, column_starts, row_indices)?;
        let (lu_column_starts, lu_row_indices, diagonal_positions) =
            static_lu_pattern(n, column_starts, row_indices, &perm, &perm_inv);
        // Scatter map: entry (i, j) of A sits at (perm_inv[i], perm_inv[j]) of B.
        let mut a_to_lu = vec![0; row_indices.len()];
        for j in 0..n {
            let column = perm_inv[j];
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
        })
    }

    /// Whether `(column_starts, row_indices)` is the pattern this analysis was made for.
    pub(crate) fn matches(&self, column_starts: &[usize], row_indices: &[usize]) -> bool {
        self.a_column_starts == column_starts && self.a_row_indices == row_indices
    }

    /// Stored entries of `L + U` (the diagonal counted once).
    pub(crate) fn lu_nnz(&self) -> usize {
        self.lu_row_indices.len()
    }
}

/// "Dense" threshold of the ordering: rows and columns of `A + A^T` with more than
/// `AMD_DENSE * sqrt(n)` entries are ordered last without taking part in the minimum-degree
/// elimination. faer's default is 10; on hub-structured kinetics patterns (n/25 hub species
/// that meet most others) 1 postpones the hubs and gives factors with about half the fill of
/// the default (measured: 1,000 species 78k -> 48k entries of `L + U`; 5,000 species
/// 1.76M -> 0.96M). Values 0.5 to 2 gave the same fill at 5,000 species.
const AMD_DENSE: f64 = 1.0;

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
