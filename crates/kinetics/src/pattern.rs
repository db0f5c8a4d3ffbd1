//! The sparsity pattern of the Jacobian `dw/dc`.

/// Compressed-sparse-column pattern of an `n x n` matrix: the rows of column `j` are
/// `row_indices()[column_starts()[j]..column_starts()[j + 1]]`, sorted ascending and unique.
/// The diagonal is always present (the Newton matrix `I - h gamma J` needs it).
///
/// The fields are private and both constructors check these rules, so a pattern is always
/// well formed (consumers such as sparse LU codes need not check it again).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct JacobianPattern {
    n: usize,
    column_starts: Vec<usize>,
    row_indices: Vec<usize>,
}

/// Why a [`JacobianPattern`] cannot be built.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum PatternError {
    /// An entry lies outside the `n x n` matrix.
    #[error("entry ({row}, {col}) lies outside the {n} x {n} matrix")]
    OutOfRange {
        /// Row index of the entry.
        row: usize,
        /// Column index of the entry.
        col: usize,
        /// Matrix dimension.
        n: usize,
    },
    /// The compressed arrays break a rule of the format.
    #[error("malformed compressed-sparse-column pattern: {0}")]
    Malformed(&'static str),
}

impl JacobianPattern {
    /// The pattern of (row, col) pairs `entries` (duplicates allowed) plus the diagonal of an
    /// `n x n` matrix; an error when an entry is out of range.
    pub fn from_entries(
        n: usize,
        entries: Vec<(usize, usize)>,
    ) -> Result<JacobianPattern, PatternError> {
        if let Some(&(row, col)) = entries.iter().find(|&&(r, c)| r >= n || c >= n) {
            return Err(PatternError::OutOfRange { row, col, n });
        }
        Ok(Self::from_entries_in_range(n, entries))
    }

    /// The pattern from its compressed arrays: `column_starts` of length `n + 1`, starting at
    /// 0, non-decreasing, ending at `row_indices.len()`; each column's rows strictly
    /// increasing, below `n`, and including the diagonal.
    pub fn from_compressed(
        n: usize,
        column_starts: Vec<usize>,
        row_indices: Vec<usize>,
    ) -> Result<JacobianPattern, PatternError> {
        use PatternError::Malformed;
        if column_starts.len() != n + 1 {
            return Err(Malformed("column starts must have n + 1 entries"));
        }
        if column_starts.first() != Some(&0) || column_starts.last() != Some(&row_indices.len()) {
            return Err(Malformed(
                "column starts must begin at 0 and end at the number of entries",
            ));
        }
        for (col, w) in column_starts.windows(2).enumerate() {
            if w[0] > w[1] {
                return Err(Malformed("column starts decrease"));
            }
            let rows = &row_indices[w[0]..w[1]];
            if rows.windows(2).any(|r| r[0] >= r[1]) {
                return Err(Malformed("rows of a column are not strictly increasing"));
            }
            if let Some(&row) = rows.iter().find(|&&r| r >= n) {
                return Err(PatternError::OutOfRange { row, col, n });
            }
            if rows.binary_search(&col).is_err() {
                return Err(Malformed("a diagonal entry is missing"));
            }
        }
        Ok(JacobianPattern {
            n,
            column_starts,
            row_indices,
        })
    }

    /// The diagonal pattern of an `n x n` matrix.
    pub(crate) fn diagonal(n: usize) -> JacobianPattern {
        Self::from_entries_in_range(n, Vec::new())
    }

    /// [`JacobianPattern::from_entries`] for entries known to be in range.
    pub(crate) fn from_entries_in_range(
        n: usize,
        mut entries: Vec<(usize, usize)>,
    ) -> JacobianPattern {
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

    /// Matrix dimension (number of species, or of states for a reactor's pattern).
    pub fn n(&self) -> usize {
        self.n
    }

    /// Start of each column in [`JacobianPattern::row_indices`]; `n + 1` entries.
    pub fn column_starts(&self) -> &[usize] {
        &self.column_starts
    }

    /// Row index of each stored entry, column after column.
    pub fn row_indices(&self) -> &[usize] {
        &self.row_indices
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

    /// Fraction of the `n * n` entries that are stored (0 to 1, dimensionless).
    pub fn fill_fraction(&self) -> f64 {
        if self.n == 0 {
            0.0
        } else {
            self.nnz() as f64 / (self.n as f64 * self.n as f64)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::{JacobianPattern, PatternError};

    #[test]
    fn entries_become_sorted_columns_with_the_diagonal() {
        // 3 x 3 with entries (2, 0) and (0, 2) twice: compressed sparse column form (Saad,
        // Iterative Methods for Sparse Linear Systems, 2nd ed., section 3.4) has columns
        // {0, 2}, {1}, {0, 2}.
        let p = JacobianPattern::from_entries(3, vec![(2, 0), (0, 2), (0, 2)]).unwrap();
        assert_eq!(p.column_starts(), &[0, 2, 3, 5]);
        assert_eq!(p.row_indices(), &[0, 2, 1, 0, 2]);
        assert_eq!(p.position(2, 0), Some(1));
        assert_eq!(p.position(1, 0), None);
        assert_eq!(p.position(0, 3), None);
        assert!((p.fill_fraction() - 5.0 / 9.0).abs() < 1e-15);
        let same = JacobianPattern::from_compressed(3, vec![0, 2, 3, 5], vec![0, 2, 1, 0, 2]);
        assert_eq!(same, Ok(p));
    }

    #[test]
    fn malformed_patterns_are_refused() {
        assert_eq!(
            JacobianPattern::from_entries(2, vec![(0, 2)]),
            Err(PatternError::OutOfRange {
                row: 0,
                col: 2,
                n: 2
            })
        );
        let bad = |starts: Vec<usize>, rows: Vec<usize>| {
            JacobianPattern::from_compressed(2, starts, rows).is_err()
        };
        assert!(bad(vec![0, 1], vec![0]), "too few column starts");
        assert!(bad(vec![1, 2, 2], vec![0, 1]), "not starting at 0");
        assert!(bad(vec![0, 1, 3], vec![0, 1]), "not ending at nnz");
        assert!(bad(vec![0, 2, 1], vec![0, 1]), "decreasing starts");
        assert!(bad(vec![0, 2, 3], vec![1, 0, 1]), "unsorted rows");
        assert!(bad(vec![0, 2, 3], vec![0, 0, 1]), "duplicate rows");
        assert!(bad(vec![0, 1, 2], vec![0, 2]), "row out of range");
        assert!(bad(vec![0, 1, 2], vec![1, 1]), "missing diagonal");
        assert!(!bad(vec![0, 1, 2], vec![0, 1]));
    }
}
