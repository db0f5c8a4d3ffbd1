//! A small square matrix over the fitted parameters (covariance or correlation).

use nalgebra::DMatrix;

/// A square matrix indexed by the fit's parameters, in the order of
/// [`crate::Model::parameter_names`]: ln A, (n,) Ea.
///
/// As a covariance, entry (i, j) is in the product of the units of parameters i and j:
/// ln A and n are dimensionless, Ea is in J/mol (so the (Ea, Ea) entry is in (J/mol)^2).
/// As a correlation, entries are dimensionless, in [-1, 1]. A covariance is symmetric up to
/// rounding; the entries are kept exactly as computed.
#[derive(Debug, Clone, PartialEq)]
pub struct ParameterMatrix {
    size: usize,
    /// Row-major entries, `size * size` of them.
    entries: Vec<f64>,
}

impl ParameterMatrix {
    /// Number of rows (= columns = parameters).
    pub fn size(&self) -> usize {
        self.size
    }

    /// Entry (`row`, `column`), `None` outside the matrix.
    pub fn get(&self, row: usize, column: usize) -> Option<f64> {
        if row < self.size && column < self.size {
            self.entries.get(row * self.size + column).copied()
        } else {
            None
        }
    }

    /// The diagonal (variances of a covariance matrix).
    pub fn diagonal(&self) -> Vec<f64> {
        (0..self.size)
            .map(|i| self.entries[i * self.size + i])
            .collect()
    }

    /// The rows, each `size` entries long.
    pub fn rows(&self) -> Vec<Vec<f64>> {
        self.entries
            .chunks(self.size.max(1))
            .map(<[f64]>::to_vec)
            .collect()
    }

    /// The correlation matrix of this covariance matrix: entry (i, j) divided by the square
    /// roots of the diagonal entries i and j (negative variances count as 0).
    pub fn correlation(&self) -> ParameterMatrix {
        let c = self.to_nalgebra();
        let sd = c.diagonal().map(|v| v.max(0.0).sqrt());
        let r = DMatrix::from_fn(c.nrows(), c.ncols(), |i, j| c[(i, j)] / (sd[i] * sd[j]));
        ParameterMatrix::from_nalgebra(&r)
    }

    pub(crate) fn from_nalgebra(m: &DMatrix<f64>) -> Self {
        let size = m.nrows().min(m.ncols());
        let entries = (0..size)
            .flat_map(|i| (0..size).map(move |j| m[(i, j)]))
            .collect();
        ParameterMatrix { size, entries }
    }

    pub(crate) fn to_nalgebra(&self) -> DMatrix<f64> {
        DMatrix::from_row_slice(self.size, self.size, &self.entries)
    }
}
