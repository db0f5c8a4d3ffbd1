//! Weighted linear least squares by singular value decomposition of the column-scaled design.

use crate::RateFitError;
use nalgebra::{DMatrix, DVector};

/// The solution of min |W^(1/2) (y - X beta)|.
pub(crate) struct Solution {
    /// The parameters.
    pub beta: DVector<f64>,
    /// (X^T W X)^-1: the covariance of `beta` for unit-variance weighted residuals.
    pub unscaled_covariance: DMatrix<f64>,
    /// X beta.
    pub fitted: DVector<f64>,
    /// y - X beta.
    pub residuals: DVector<f64>,
    /// Weighted residuals, W^(1/2) (y - X beta).
    pub weighted_residuals: DVector<f64>,
    /// Diagonal of the hat matrix of the weighted problem.
    pub leverage: Vec<f64>,
}

/// Solves the weighted problem with design `x` (N x p), observations `y` and square roots of
/// the weights `sqrt_w`. The columns of W^(1/2) X are scaled to unit length before the SVD,
/// which copes with the near-collinearity of 1, ln T and 1/T over narrow ranges.
///
/// Errors: [`RateFitError::Degenerate`] when the scaled design or the observations are not
/// finite, the SVD does not converge, or the smallest singular value is below 1e-13 times the
/// largest (or NaN).
pub(crate) fn solve(
    x: &DMatrix<f64>,
    y: &DVector<f64>,
    sqrt_w: &DVector<f64>,
) -> Result<Solution, RateFitError> {
    let (n, p) = x.shape();
    let mut z = x.clone();
    for i in 0..n {
        for j in 0..p {
            z[(i, j)] *= sqrt_w[i];
        }
    }
    let y_w = y.component_mul(sqrt_w);
    let scale: Vec<f64> = (0..p).map(|j| z.column(j).norm()).collect();
    for (j, s) in scale.iter().enumerate() {
        z.column_mut(j).scale_mut(1.0 / s);
    }
    // Extreme hand-built values (T near the smallest f64, weights that overflow) can leave
    // non-finite entries, on which the SVD would not converge.
    if z.iter().chain(y_w.iter()).any(|v| !v.is_finite()) {
        return Err(RateFitError::Degenerate);
    }
    // The tolerance of nalgebra's `svd`, with an iteration limit instead of none.
    let Some(svd) = z.try_svd(true, true, f64::EPSILON * 5.0, 10_000) else {
        return Err(RateFitError::Degenerate);
    };
    let (Some(u), Some(v_t)) = (svd.u.as_ref(), svd.v_t.as_ref()) else {
        return Err(RateFitError::Degenerate);
    };
    let s = &svd.singular_values;
    let s_max = s.max();
    if s.min().is_nan() || s.min() <= s_max * 1e-13 {
        return Err(RateFitError::Degenerate);
    }
    let s_inv = s.map(|v| 1.0 / v);
    let v = v_t.transpose();
    let beta_scaled = &v * DMatrix::from_diagonal(&s_inv) * u.transpose() * &y_w;
    let cov_scaled = &v * DMatrix::from_diagonal(&s_inv.component_mul(&s_inv)) * v.transpose();
    let d_inv = DMatrix::from_diagonal(&DVector::from_iterator(p, scale.iter().map(|s| 1.0 / s)));
    let beta = &d_inv * beta_scaled;
    let unscaled_covariance = &d_inv * cov_scaled * &d_inv;
    let fitted = x * &beta;
    let residuals = y - &fitted;
    let weighted_residuals = residuals.component_mul(sqrt_w);
    let leverage = (0..n).map(|i| u.row(i).norm_squared()).collect();
    Ok(Solution {
        beta,
        unscaled_covariance,
        fitted,
        residuals,
        weighted_residuals,
        leverage,
    })
}
