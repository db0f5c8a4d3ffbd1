//! Seeded random sparse matrices for the tests.

#![allow(dead_code)]

/// xorshift64* (Vigna 2016), reproducible from a seed; shared with the benchmarks.
pub use stoik_testsupport::Rng;

/// A compressed-sparse-column matrix.
#[derive(Debug, Clone)]
pub struct Csc {
    pub n: usize,
    pub column_starts: Vec<usize>,
    pub row_indices: Vec<usize>,
    pub values: Vec<f64>,
}

impl Csc {
    /// From (row, col, value) triplets; duplicates are summed.
    pub fn from_triplets(n: usize, mut triplets: Vec<(usize, usize, f64)>) -> Csc {
        triplets.sort_by_key(|&(r, c, _)| (c, r));
        let mut column_starts = vec![0; n + 1];
        let mut row_indices: Vec<usize> = Vec::new();
        let mut values: Vec<f64> = Vec::new();
        let mut last: Option<(usize, usize)> = None;
        for (r, c, v) in triplets {
            if last == Some((r, c)) {
                *values.last_mut().unwrap() += v;
                continue;
            }
            last = Some((r, c));
            row_indices.push(r);
            values.push(v);
            column_starts[c + 1] += 1;
        }
        for j in 0..n {
            column_starts[j + 1] += column_starts[j];
        }
        Csc {
            n,
            column_starts,
            row_indices,
            values,
        }
    }

    /// The dense matrix (nalgebra).
    pub fn dense(&self) -> nalgebra::DMatrix<f64> {
        let mut m = nalgebra::DMatrix::zeros(self.n, self.n);
        for j in 0..self.n {
            for p in self.column_starts[j]..self.column_starts[j + 1] {
                m[(self.row_indices[p], j)] += self.values[p];
            }
        }
        m
    }
}

/// A random `n x n` matrix with about `per_column` off-diagonal entries per column, uniform in
/// [-1, 1], and a stored diagonal. With `dominant`, each diagonal entry is 1 plus the sum of
/// the magnitudes in its row and column (strictly diagonally dominant both ways); otherwise it
/// is uniform in [-1, 1] like the rest.
pub fn random_matrix(n: usize, per_column: usize, dominant: bool, seed: u64) -> Csc {
    let mut rng = Rng::new(seed);
    let mut triplets = Vec::new();
    let mut row_sum = vec![0.0; n];
    let mut col_sum = vec![0.0; n];
    for (j, col) in col_sum.iter_mut().enumerate() {
        for _ in 0..per_column {
            let i = rng.below(n);
            if i == j {
                continue;
            }
            let v = 2.0 * rng.uniform() - 1.0;
            row_sum[i] += v.abs();
            *col += v.abs();
            triplets.push((i, j, v));
        }
    }
    for (j, (row, col)) in row_sum.iter().zip(&col_sum).enumerate() {
        let d = if dominant {
            1.0 + row + col
        } else {
            2.0 * rng.uniform() - 1.0
        };
        triplets.push((j, j, d));
    }
    Csc::from_triplets(n, triplets)
}

/// The Newton-matrix pattern of a hub-structured synthetic mechanism (the shape of the
/// project's benchmark mechanisms: n/25 hub radicals, 3n steps of three kinds), with values
/// `I - h J` for a Jacobian-like matrix whose diagonal holds the loss terms.
pub fn hub_newton_matrix(n: usize, h: f64, seed: u64) -> Csc {
    let mut rng = Rng::new(seed);
    let hubs = (n / 25).max(1);
    let mut triplets: Vec<(usize, usize, f64)> = (0..n).map(|i| (i, i, 1.0)).collect();
    for _ in 0..3 * n {
        let k = 10f64.powf(-4.0 + 10.0 * rng.uniform());
        let other = |rng: &mut Rng| hubs + rng.below(n - hubs);
        let (reactants, products) = match rng.below(3) {
            0 => {
                let a = other(&mut rng);
                (vec![a], vec![rng.below(hubs), other(&mut rng)])
            }
            1 => {
                let hub = rng.below(hubs);
                let a = other(&mut rng);
                (vec![hub, a], vec![rng.below(hubs), other(&mut rng)])
            }
            _ => (
                vec![rng.below(hubs), rng.below(hubs)],
                vec![other(&mut rng)],
            ),
        };
        // d(rate)/d(reactant) with unit concentrations: k; each reactant loses, each product
        // gains: J[s, r] += nu_s k. Newton matrix entry: -h J[s, r].
        for &r in &reactants {
            for &s in &reactants {
                triplets.push((s, r, h * k));
            }
            for &s in &products {
                triplets.push((s, r, -h * k));
            }
        }
    }
    Csc::from_triplets(n, triplets)
}

/// `max_i |x_i - y_i| / max_i |y_i|`.
pub fn relative_difference(x: &[f64], y: &[f64]) -> f64 {
    let scale = y.iter().fold(0.0f64, |m, v| m.max(v.abs()));
    let diff = x
        .iter()
        .zip(y)
        .fold(0.0f64, |m, (a, b)| m.max((a - b).abs()));
    diff / scale
}
