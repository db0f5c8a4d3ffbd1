//! The sparsity pattern of the Jacobian `dw/dc`.

/// Compressed-sparse-column pattern of an `n x n` matrix: the rows of column `j` are
/// `row_indices[column_starts[j]..column_starts[j + 1]]`, sorted ascending. The diagonal is
/// always present (the Newton matrix `I - h gamma J` needs it).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct JacobianPattern {
    /// Matrix dimension (number of species).
    pub n: usize,
    /// Start of each column in `row_indices`; length `n + 1`.
    pub column_starts: Vec<usize>,
    /// Row index of each stored entry.
    pub row_indices: Vec<usize>,
}

impl JacobianPattern {
    /// Builds the pattern from (row, col) pairs (duplicates allowed); adds the diagonal.
    pub fn from_entries(n: usize, mut entries: Vec<(usize, usize)>) -> JacobianPattern {
        entries.extend((0..n).map(|i| (i, i)));
        entries.sort_unstable_by_key(|&(row, col)| (col, row));
        entries.dedup();
        let mut column_starts = vec![0; n + 1];
        for &(_, col) in &entries {
            column_starts[col + 1] += 1;
        }
        for j in 0..n {
            column_starts[j + 1] += column_starts[j];
        }
        JacobianPattern {
            n,
            column_starts,
            row_indices: entries.into_iter().map(|(row, _)| row).collect(),
        }
    }

    /// Number of stored entries.
    pub fn nnz(&self) -> usize {
        self.row_indices.len()
    }

    /// Index into the values array of entry (`row`, `col`), if stored.
    pub fn position(&self, row: usize, col: usize) -> Option<usize> {
        if col >= self.n {
            return None;
        }
        let start = self.column_starts[col];
        let rows = &self.row_indices[start..self.column_starts[col + 1]];
        rows.binary_search(&row).ok().map(|p| start + p)
    }

    /// Fraction of the `n * n` entries that are stored (0 to 1).
    pub fn fill_fraction(&self) -> f64 {
        if self.n == 0 {
            0.0
        } else {
            self.nnz() as f64 / (self.n as f64 * self.n as f64)
        }
    }
}
