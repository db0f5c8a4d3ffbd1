//! Linear invariants of the state (element totals, conserved moieties) kept on their exact
//! values by projection.
//!
//! In exact arithmetic a BDF method preserves every linear invariant `l . y` of the equations
//! (each Newton correction solves a system whose matrix `I - c J` satisfies `l (I - c J) = l`).
//! In floating point each step changes `l . y` by a few roundings of the largest terms it
//! involves. When the species of a law later decay by many orders of magnitude, that
//! accumulated drift can exceed the species themselves: on the E5 problem (Enright, Hull &
//! Lindberg 1975) a drift of 1e-24 mol/m3, gathered while the species were near 1e-10, was 1 %
//! of their values at t = 1e13 s. The remedy is the projection onto the invariant manifold
//! (E. Hairer, C. Lubich and G. Wanner, Geometric Numerical Integration, 2nd ed., section
//! IV.4; L. F. Shampine, "Conservation laws and the numerical solution of ODEs", Comput. Math.
//! Appl. 12B (1986) 1287-1296): when the drift of a law reaches a hundredth of the error
//! weights of its species, the state is moved back onto `L y = L y0` by the correction that is
//! smallest in the error-weighted norm, and the solver restarts from the corrected state.
//! Drift stays at round-off level relative to the current concentrations; restarts are rare
//! (four on E5 over 13 decades of time).
//!
//! A drift within [`ROUNDOFF_FLOOR`] roundings of the law's current terms is never corrected:
//! at relative tolerances near 1e-13 a hundredth of the error weights is a few units of
//! round-off, and projecting on that noise restarted the solver hundreds of times. On POLLU at
//! rtol 2.5e-13 it took 455 projections, 22,242 steps and 5,239 error-test failures, and moved
//! PAN by 3e-11 relative (30 tolerance units); without them 4,232 steps and 1.1e-12
//! (docs/solver-fidelity.md).

use stoik_kinetics::compensated_sum;

/// Fraction of the error-weight norm of a law at which its drift triggers a projection.
const TRIGGER: f64 = 0.01;

/// Drifts up to this many machine epsilons of `sum_i |l_i y_i|` (the law's current terms) are
/// round-off that no projection should chase. Drift from round-off alone reached 130 epsilons
/// on POLLU over 4,232 steps; at 256 epsilons a species error it could cause is below 6e-14
/// relative to the law's largest term.
const ROUNDOFF_FLOOR: f64 = 256.0;

/// The invariants of one state vector, their reference values and preallocated scratch.
#[derive(Debug, Clone)]
pub(crate) struct Invariants {
    /// Each law as (state index, coefficient) pairs.
    rows: Vec<Vec<(usize, f64)>>,
    /// `l . y` at the reference state.
    reference: Vec<f64>,
    /// Scratch: drift and scale per law, the normal matrix, the error weights.
    drift: Vec<f64>,
    scale: Vec<f64>,
    gram: Vec<f64>,
    weights: Vec<f64>,
}

impl Invariants {
    /// Laws given as coefficient rows over a state of length `n` (entries beyond `n` or
    /// zero are ignored). `None` when there are none.
    pub(crate) fn new(laws: &[Vec<f64>], n: usize) -> Option<Invariants> {
        let rows: Vec<Vec<(usize, f64)>> = laws
            .iter()
            .map(|l| {
                l.iter()
                    .enumerate()
                    .take(n)
                    .filter(|(_, c)| **c != 0.0)
                    .map(|(i, &c)| (i, c))
                    .collect::<Vec<_>>()
            })
            .filter(|r: &Vec<(usize, f64)>| !r.is_empty())
            .collect();
        if rows.is_empty() {
            return None;
        }
        let k = rows.len();
        Some(Invariants {
            reference: vec![0.0; k],
            drift: vec![0.0; k],
            scale: vec![0.0; k],
            gram: vec![0.0; k * k],
            weights: vec![0.0; n],
            rows,
        })
    }

    fn value(row: &[(usize, f64)], y: &[f64]) -> f64 {
        compensated_sum(row.iter().map(|&(i, c)| c * y[i]))
    }

    /// Takes the values of the laws at `y` as the ones to keep.
    pub(crate) fn set_reference(&mut self, y: &[f64]) {
        for (r, row) in self.reference.iter_mut().zip(&self.rows) {
            *r = Self::value(row, y);
        }
    }

    /// Moves `y` back onto the invariants when some law drifted by more than a hundredth of
    /// its error-weight norm and by more than [`ROUNDOFF_FLOOR`] roundings of its terms (weights `atol_i + rtol |y_i|`); returns whether it did. The
    /// correction is the smallest in the weighted norm: `dy = -W L^T (L W L^T)^-1 d`,
    /// `W = diag(w_i^2)`. No allocation.
    pub(crate) fn project(&mut self, y: &mut [f64], atol: &[f64], rtol: f64) -> bool {
        for ((w, yi), a) in self.weights.iter_mut().zip(y.iter()).zip(atol) {
            *w = a + rtol * yi.abs();
        }
        let mut drifted = false;
        for (m, row) in self.rows.iter().enumerate() {
            let d = Self::value(row, y) - self.reference[m];
            let s = row
                .iter()
                .map(|&(i, c)| (c * self.weights[i]).powi(2))
                .sum::<f64>()
                .sqrt();
            let terms = row.iter().map(|&(i, c)| (c * y[i]).abs()).sum::<f64>();
            self.drift[m] = d;
            self.scale[m] = s;
            let threshold = (TRIGGER * s).max(ROUNDOFF_FLOOR * f64::EPSILON * terms);
            if s > 0.0 && d.abs() > threshold {
                drifted = true;
            }
        }
        if !drifted {
            return false;
        }
        // Scaled laws l_m / s_m: the normal matrix has a unit diagonal.
        let k = self.rows.len();
        for a in 0..k {
            for b in 0..=a {
                let g = sparse_weighted_dot(&self.rows[a], &self.rows[b], &self.weights)
                    / (self.scale[a] * self.scale[b]);
                self.gram[a * k + b] = g;
                self.gram[b * k + a] = g;
            }
            self.drift[a] /= self.scale[a];
        }
        if !cholesky_solve(&mut self.gram, &mut self.drift, k) {
            return false;
        }
        for (m, row) in self.rows.iter().enumerate() {
            let z = self.drift[m] / self.scale[m];
            for &(i, c) in row {
                y[i] -= self.weights[i] * self.weights[i] * c * z;
            }
        }
        true
    }
}

/// `sum_i a_i b_i w_i^2` over two sparse rows.
fn sparse_weighted_dot(a: &[(usize, f64)], b: &[(usize, f64)], w: &[f64]) -> f64 {
    a.iter()
        .filter_map(|&(i, ca)| {
            b.iter()
                .find(|(j, _)| *j == i)
                .map(|&(_, cb)| ca * cb * w[i] * w[i])
        })
        .sum()
}

/// Solves `G z = d` in place (`d` becomes `z`) for a symmetric positive definite `k x k`
/// matrix `G` (row-major, overwritten by its Cholesky factor); `false` if `G` is not
/// positive definite.
fn cholesky_solve(g: &mut [f64], d: &mut [f64], k: usize) -> bool {
    for j in 0..k {
        let mut diag = g[j * k + j];
        for p in 0..j {
            diag -= g[j * k + p] * g[j * k + p];
        }
        if diag.is_nan() || diag <= 1e-14 {
            return false;
        }
        let diag = diag.sqrt();
        g[j * k + j] = diag;
        for i in j + 1..k {
            let mut v = g[i * k + j];
            for p in 0..j {
                v -= g[i * k + p] * g[j * k + p];
            }
            g[i * k + j] = v / diag;
        }
    }
    for i in 0..k {
        let mut v = d[i];
        for p in 0..i {
            v -= g[i * k + p] * d[p];
        }
        d[i] = v / g[i * k + i];
    }
    for i in (0..k).rev() {
        let mut v = d[i];
        for p in i + 1..k {
            v -= g[p * k + i] * d[p];
        }
        d[i] = v / g[i * k + i];
    }
    true
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn projection_restores_two_laws_with_the_smallest_weighted_change() {
        // Laws y0 + y1 + y2 and y2 + y3 (a chain and a pair), reference at y = (1, 1, 1, 1):
        // values 3 and 2.
        let laws = vec![vec![1.0, 1.0, 1.0, 0.0], vec![0.0, 0.0, 1.0, 1.0]];
        let mut inv = Invariants::new(&laws, 4).unwrap();
        inv.set_reference(&[1.0, 1.0, 1.0, 1.0]);
        let mut y = [1.0 + 3e-6, 1.0, 1.0, 1.0 - 1e-6];
        let atol = [1e-12; 4];
        assert!(inv.project(&mut y, &atol, 1e-6));
        // Both laws hold again to round-off.
        assert!((y[0] + y[1] + y[2] - 3.0).abs() < 1e-15, "{y:?}");
        assert!((y[2] + y[3] - 2.0).abs() < 1e-15, "{y:?}");
        // Within tolerance nothing moves.
        let before = y;
        assert!(!inv.project(&mut y, &atol, 1e-6));
        assert_eq!(y, before);
    }

    #[test]
    fn round_off_drift_is_left_alone_at_tiny_tolerances() {
        // One law y0 + y1 = 0.4. At rtol 1e-14 a hundredth of the weights is 4e-17 (a fraction
        // of one rounding of 0.4); a drift of 100 epsilons of the terms is round-off and stays,
        // one of 1,000 epsilons is corrected.
        let mut inv = Invariants::new(&[vec![1.0, 1.0]], 2).unwrap();
        inv.set_reference(&[0.2, 0.2]);
        let atol = [1e-30; 2];
        let mut y = [0.2 + 100.0 * f64::EPSILON * 0.4, 0.2];
        let before = y;
        assert!(!inv.project(&mut y, &atol, 1e-14));
        assert_eq!(y, before);
        let mut y = [0.2 + 1000.0 * f64::EPSILON * 0.4, 0.2];
        assert!(inv.project(&mut y, &atol, 1e-14));
        assert!(
            (y[0] + y[1] - 0.4).abs() <= 4.0 * f64::EPSILON * 0.4,
            "{y:?}"
        );
    }

    #[test]
    fn cholesky_solves_a_known_system() {
        // [[4, 2], [2, 3]] z = [2, 1] has z = [0.5, 0] (by hand).
        let mut g = [4.0, 2.0, 2.0, 3.0];
        let mut d = [2.0, 1.0];
        assert!(cholesky_solve(&mut g, &mut d, 2));
        assert!((d[0] - 0.5).abs() < 1e-15 && d[1].abs() < 1e-15, "{d:?}");
    }
}
