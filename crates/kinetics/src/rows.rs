//! [`RowLists`]: lists of varying length stored back to back (compressed rows), the layout
//! of every per-step list of the compiled kinetics.

use std::ops::Range;

/// Rows of items stored back to back: row `j` is `items[starts[j]..starts[j + 1]]`.
///
/// The fields are private and rows are only appended whole ([`RowLists::push_row`],
/// [`RowLists::from_rows`]), so `starts` always begins at 0, never decreases and ends at `items.len()`:
/// [`RowLists::row`] is a plain slice of a valid range.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct RowLists<T> {
    starts: Vec<usize>,
    items: Vec<T>,
}

impl<T> Default for RowLists<T> {
    fn default() -> Self {
        RowLists {
            starts: vec![0],
            items: Vec::new(),
        }
    }
}

impl<T> RowLists<T> {
    /// No rows.
    pub(crate) fn new() -> Self {
        Self::default()
    }

    /// The rows of `rows`, in order.
    pub(crate) fn from_rows<R: IntoIterator<Item = T>>(rows: impl IntoIterator<Item = R>) -> Self {
        let mut out = Self::new();
        for row in rows {
            out.push_row(row);
        }
        out
    }

    /// Appends one row.
    pub(crate) fn push_row(&mut self, row: impl IntoIterator<Item = T>) {
        self.items.extend(row);
        self.starts.push(self.items.len());
    }

    /// Number of rows.
    #[inline]
    pub(crate) fn len(&self) -> usize {
        self.starts.len() - 1
    }

    /// Row `j` (panics when `j >= len()`, like slice indexing; callers index with step
    /// numbers of the same compiled kinetics).
    #[inline]
    pub(crate) fn row(&self, j: usize) -> &[T] {
        &self.items[self.starts[j]..self.starts[j + 1]]
    }

    /// Where row `j` lies in the flat item order (for arrays kept parallel to the items).
    #[inline]
    pub(crate) fn range(&self, j: usize) -> Range<usize> {
        self.starts[j]..self.starts[j + 1]
    }

    /// The rows in order.
    pub(crate) fn rows(&self) -> impl ExactSizeIterator<Item = &[T]> + '_ {
        self.starts.windows(2).map(|w| &self.items[w[0]..w[1]])
    }
}

#[cfg(test)]
mod tests {
    use super::RowLists;

    #[test]
    fn rows_come_back_as_pushed() {
        // Compressed sparse row layout (Saad, Iterative Methods for Sparse Linear Systems,
        // 2nd ed., section 3.4): rows [1, 2], [], [3] have row starts 0, 2, 2, 3.
        let mut r = RowLists::new();
        r.push_row([1, 2]);
        r.push_row([]);
        r.push_row([3]);
        assert_eq!(r.len(), 3);
        assert_eq!(r.row(0), &[1, 2]);
        assert!(r.row(1).is_empty());
        assert_eq!(r.row(2), &[3]);
        assert_eq!(r.range(1), 2..2);
        assert_eq!(r.range(2), 2..3);
        assert_eq!(r.rows().collect::<Vec<_>>(), vec![&[1, 2][..], &[], &[3]]);
        let same = RowLists::from_rows(vec![vec![1, 2], vec![], vec![3]]);
        assert_eq!(same, r);
        assert_eq!(RowLists::<u8>::new().len(), 0);
    }
}
