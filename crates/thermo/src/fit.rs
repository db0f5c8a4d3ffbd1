//! Constrained least-squares fitting of [`Nasa7`] polynomials to tabulated data.

use nalgebra::{DMatrix, DVector};

use crate::nasa7::{cp_row, dcp_row, h_row, s_row};
use crate::{FitError, Nasa7, GAS_CONSTANT, T_REFERENCE_K};

/// Minimum number of table points required on each side of (or at) the common
/// temperature.
pub const MIN_POINTS_PER_RANGE: usize = 4;

/// Relative singular-value threshold below which a direction counts as rank deficient.
const RANK_TOLERANCE: f64 = 1.0e-12;

/// One row of a thermochemical table at the standard pressure of 1e5 Pa (the JANAF
/// columns used for fitting).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ThermoPoint {
    /// Temperature, K (must be > 0).
    pub t_k: f64,
    /// Molar heat capacity at constant pressure, J/(mol K).
    pub cp_j_per_mol_k: f64,
    /// Enthalpy relative to its value at 298.15 K, H(T) - H(298.15 K), J/mol.
    pub h_minus_h298_j_per_mol: f64,
    /// Standard molar entropy at 1e5 Pa, J/(mol K).
    pub s_j_per_mol_k: f64,
}

/// Result of [`fit_nasa7`]: the polynomials and how well they reproduce the table.
#[derive(Debug, Clone, PartialEq)]
pub struct Nasa7Fit {
    /// The fitted polynomials; `t_low_k`/`t_high_k` are the lowest/highest table
    /// temperatures used.
    pub polynomial: Nasa7,
    /// Number of table points used.
    pub n_points: usize,
    /// Largest |cp_fit - cp_table| / max(|cp_table|, 1 J/(mol K)) over the points
    /// (dimensionless).
    pub max_relative_error_cp: f64,
    /// Root mean square of the relative cp errors (dimensionless).
    pub rms_relative_error_cp: f64,
    /// Largest |S_fit - S_table| / max(|S_table|, 1 J/(mol K)) over the points
    /// (dimensionless).
    pub max_relative_error_s: f64,
    /// Root mean square of the relative S errors (dimensionless).
    pub rms_relative_error_s: f64,
    /// Largest |H_fit - H_table| over the points, J/mol, where H_table =
    /// formation enthalpy at 298.15 K + [H - H(298.15 K)].
    pub max_abs_error_h_j_per_mol: f64,
    /// Root mean square of the absolute H errors, J/mol.
    pub rms_abs_error_h_j_per_mol: f64,
    /// Continuity jumps (low minus high) of cp/R, H/(R T), S/R at the common
    /// temperature (dimensionless), see [`Nasa7::continuity_jumps`].
    pub continuity: (f64, f64, f64),
}

/// Fits two-range 7-coefficient polynomials ([`Nasa7`]) to a table of cp,
/// H - H(298.15 K) and S at the standard pressure.
///
/// All three properties are fitted jointly: cp/R, H/(R T) and S/R are linear in the 14
/// coefficients (McBride, Gordon & Reno 1993, NASA TM-4513), so each table point gives
/// three rows of a linear least-squares problem. Rows are weighted so that residuals
/// are relative: cp and S by their table values, H by cp T (so that an enthalpy error
/// counts like a cp error of the same relative size integrated over T). The fit is
/// subject to the equality constraints
///
/// * continuity at `t_mid_k` of cp, d cp/dT, H and S;
/// * H(298.15 K) = `h298_formation_j_per_mol` exactly (the absolute enthalpy scale on
///   which elements in their reference state have H(298.15 K) = 0);
/// * optionally S(298.15 K) = `s298_j_per_mol_k` exactly.
///
/// The constraints are eliminated by a null-space method (minimum-norm particular
/// solution plus a basis of the constraints' null space, both from an SVD), and the
/// reduced problem is solved by SVD, after scaling the columns to unit norm.
///
/// The points' temperatures (K, all > 0) set the validity range: `t_low_k` is the
/// smallest, `t_high_k` the largest. Points exactly at `t_mid_k` enter both ranges.
///
/// # Errors
/// [`FitError::NonFiniteInput`] for NaN or infinite values,
/// [`FitError::InvalidTemperature`] for T <= 0 or a `t_mid_k` outside the table,
/// [`FitError::TooFewPoints`], [`FitError::RangesNotCovered`] when either range has
/// fewer than [`MIN_POINTS_PER_RANGE`] points, [`FitError::Singular`] when the
/// constraints or the reduced least-squares problem are rank deficient.
pub fn fit_nasa7(
    table: &[ThermoPoint],
    t_mid_k: f64,
    h298_formation_j_per_mol: f64,
    s298_j_per_mol_k: Option<f64>,
) -> Result<Nasa7Fit, FitError> {
    validate(table, t_mid_k, h298_formation_j_per_mol, s298_j_per_mol_k)?;
    let t_low_k = table.iter().map(|p| p.t_k).fold(f64::INFINITY, f64::min);
    let t_high_k = table
        .iter()
        .map(|p| p.t_k)
        .fold(f64::NEG_INFINITY, f64::max);
    if !(t_low_k < t_mid_k && t_mid_k < t_high_k) {
        return Err(FitError::InvalidTemperature {
            what: format!(
                "t_mid = {t_mid_k} K must lie strictly inside the table range {t_low_k} K to {t_high_k} K"
            ),
        });
    }

    // Weighted design matrix: three rows per point and range membership.
    let in_low = |t: f64| t <= t_mid_k;
    let in_high = |t: f64| t >= t_mid_k;
    let n_rows: usize = table
        .iter()
        .map(|p| 3 * (usize::from(in_low(p.t_k)) + usize::from(in_high(p.t_k))))
        .sum();
    let mut a = DMatrix::<f64>::zeros(n_rows, 14);
    let mut b = DVector::<f64>::zeros(n_rows);
    let mut row = 0;
    for p in table {
        let t = p.t_k;
        let cp_r = p.cp_j_per_mol_k / GAS_CONSTANT;
        let s_r = p.s_j_per_mol_k / GAS_CONSTANT;
        let h_rt = (h298_formation_j_per_mol + p.h_minus_h298_j_per_mol) / (GAS_CONSTANT * t);
        // cp/R >= 2.5 for every ideal gas; the floor keeps weights finite for odd input.
        let w_cp = 1.0 / cp_r.abs().max(1.0);
        let w_s = 1.0 / s_r.abs().max(1.0);
        let w_h = w_cp;
        for (offset, member) in [(0usize, in_low(t)), (7usize, in_high(t))] {
            if !member {
                continue;
            }
            for (basis, target, w) in [
                (cp_row(t), cp_r, w_cp),
                (h_row(t), h_rt, w_h),
                (s_row(t), s_r, w_s),
            ] {
                for (k, v) in basis.iter().enumerate() {
                    a[(row, offset + k)] = w * v;
                }
                b[row] = w * target;
                row += 1;
            }
        }
    }

    // Equality constraints C x = d.
    let mut c_rows: Vec<([f64; 14], f64)> = Vec::with_capacity(6);
    for basis in [cp_row, dcp_row, h_row, s_row] {
        let r = basis(t_mid_k);
        let mut c = [0.0; 14];
        for k in 0..7 {
            c[k] = r[k];
            c[7 + k] = -r[k];
        }
        c_rows.push((c, 0.0));
    }
    let ref_offset = if T_REFERENCE_K < t_mid_k { 0 } else { 7 };
    let pin = |basis: fn(f64) -> [f64; 7], value: f64| {
        let r = basis(T_REFERENCE_K);
        let mut c = [0.0; 14];
        c[ref_offset..ref_offset + 7].copy_from_slice(&r);
        (c, value)
    };
    c_rows.push(pin(
        h_row,
        h298_formation_j_per_mol / (GAS_CONSTANT * T_REFERENCE_K),
    ));
    if let Some(s298) = s298_j_per_mol_k {
        c_rows.push(pin(s_row, s298 / GAS_CONSTANT));
    }

    // Column scaling x = D y with D = diag(1 / ||column of A||).
    let mut scale = [1.0f64; 14];
    for (k, s) in scale.iter_mut().enumerate() {
        let norm = a.column(k).norm();
        if norm > 0.0 && norm.is_finite() {
            *s = 1.0 / norm;
        }
    }
    for (k, &s) in scale.iter().enumerate() {
        a.column_mut(k).scale_mut(s);
    }

    // Scaled constraints, rows normalised, padded to 14 x 14 so that the SVD yields a
    // full set of right singular vectors (the null space included).
    let m = c_rows.len();
    let mut c = DMatrix::<f64>::zeros(14, 14);
    let mut d = DVector::<f64>::zeros(14);
    for (i, (cr, di)) in c_rows.iter().enumerate() {
        let scaled: Vec<f64> = (0..14).map(|k| cr[k] * scale[k]).collect();
        let norm = scaled.iter().map(|v| v * v).sum::<f64>().sqrt();
        if !(norm > 0.0 && norm.is_finite()) {
            return Err(FitError::Singular {
                what: format!("constraint {i} is zero or not finite"),
            });
        }
        for k in 0..14 {
            c[(i, k)] = scaled[k] / norm;
        }
        d[i] = di / norm;
    }
    let svd_c = c.svd(true, true);
    let sv_max = svd_c.singular_values.max();
    let tol_c = RANK_TOLERANCE.sqrt() * sv_max;
    let rank_c = svd_c.singular_values.iter().filter(|&&s| s > tol_c).count();
    if rank_c < m {
        return Err(FitError::Singular {
            what: format!("the {m} equality constraints have rank {rank_c}"),
        });
    }
    let v_t = svd_c.v_t.as_ref().ok_or_else(|| FitError::Singular {
        what: "constraint SVD returned no right singular vectors".into(),
    })?;
    let u = svd_c.u.as_ref().ok_or_else(|| FitError::Singular {
        what: "constraint SVD returned no left singular vectors".into(),
    })?;
    // Minimum-norm particular solution y0 and null-space basis N (14 x (14 - m)).
    let mut y0 = DVector::<f64>::zeros(14);
    let mut null_cols: Vec<DVector<f64>> = Vec::with_capacity(14 - m);
    for (i, &s) in svd_c.singular_values.iter().enumerate() {
        let v_i = v_t.row(i).transpose();
        if s > tol_c {
            let coef = u.column(i).dot(&d) / s;
            y0 += v_i * coef;
        } else {
            null_cols.push(v_i);
        }
    }
    let null = DMatrix::from_columns(&null_cols);

    // Reduced problem: min || A (y0 + N z) - b ||.
    let reduced = &a * &null;
    let rhs = &b - &a * &y0;
    let n_free = reduced.ncols();
    let svd_r = reduced.svd(true, true);
    let sv_max_r = svd_r.singular_values.max();
    let tol_r = RANK_TOLERANCE * sv_max_r;
    let rank_r = svd_r.singular_values.iter().filter(|&&s| s > tol_r).count();
    if sv_max_r.is_nan() || sv_max_r <= 0.0 || rank_r < n_free {
        return Err(FitError::Singular {
            what: format!(
                "the reduced least-squares problem has rank {rank_r} of {n_free} free coefficients"
            ),
        });
    }
    let z = svd_r.solve(&rhs, tol_r).map_err(|e| FitError::Singular {
        what: format!("least-squares solve failed: {e}"),
    })?;
    let y = &y0 + &null * &z;

    let mut low = [0.0; 7];
    let mut high = [0.0; 7];
    for k in 0..7 {
        low[k] = y[k] * scale[k];
        high[k] = y[7 + k] * scale[7 + k];
    }
    let polynomial =
        Nasa7::new(t_low_k, t_mid_k, t_high_k, low, high).map_err(|_| FitError::Singular {
            what: "the solve produced non-finite coefficients".into(),
        })?;
    Ok(residuals(polynomial, table, h298_formation_j_per_mol))
}

fn validate(
    table: &[ThermoPoint],
    t_mid_k: f64,
    h298: f64,
    s298: Option<f64>,
) -> Result<(), FitError> {
    for (name, v) in [
        ("t_mid_k", t_mid_k),
        ("h298_formation_j_per_mol", h298),
        ("s298_j_per_mol_k", s298.unwrap_or(0.0)),
    ] {
        if !v.is_finite() {
            return Err(FitError::NonFiniteInput {
                what: format!("{name} = {v}"),
            });
        }
    }
    for (i, p) in table.iter().enumerate() {
        for (name, v) in [
            ("t_k", p.t_k),
            ("cp_j_per_mol_k", p.cp_j_per_mol_k),
            ("h_minus_h298_j_per_mol", p.h_minus_h298_j_per_mol),
            ("s_j_per_mol_k", p.s_j_per_mol_k),
        ] {
            if !v.is_finite() {
                return Err(FitError::NonFiniteInput {
                    what: format!("point {i} (T = {} K): {name} = {v}", p.t_k),
                });
            }
        }
        if p.t_k <= 0.0 {
            return Err(FitError::InvalidTemperature {
                what: format!("point {i} has T = {} K (must be > 0)", p.t_k),
            });
        }
    }
    if t_mid_k <= 0.0 {
        return Err(FitError::InvalidTemperature {
            what: format!("t_mid = {t_mid_k} K (must be > 0)"),
        });
    }
    let needed = 2 * MIN_POINTS_PER_RANGE;
    if table.len() < needed {
        return Err(FitError::TooFewPoints {
            found: table.len(),
            needed,
        });
    }
    let below = table.iter().filter(|p| p.t_k <= t_mid_k).count();
    let above = table.iter().filter(|p| p.t_k >= t_mid_k).count();
    if below < MIN_POINTS_PER_RANGE || above < MIN_POINTS_PER_RANGE {
        return Err(FitError::RangesNotCovered {
            t_mid_k,
            below,
            above,
            needed: MIN_POINTS_PER_RANGE,
        });
    }
    Ok(())
}

/// The smallest denominator of the relative cp and S errors of a fit, J/(mol K): gas-phase
/// heat capacities and entropies lie far above it (cp >= 5R/2 = 20.8 J/(mol K) for any gas).
const RELATIVE_ERROR_FLOOR_J_PER_MOL_K: f64 = 1.0;

fn residuals(polynomial: Nasa7, table: &[ThermoPoint], h298: f64) -> Nasa7Fit {
    let n = table.len();
    let (mut max_cp, mut sum_cp, mut max_s, mut sum_s, mut max_h, mut sum_h) =
        (0.0f64, 0.0f64, 0.0f64, 0.0f64, 0.0f64, 0.0f64);
    for p in table {
        // Relative to the table value, or to 1 J/(mol K) where the table value is smaller
        // (a row with S or cp at or near 0 would otherwise give an infinite "relative" error).
        let e_cp = (polynomial.cp_j_per_mol_k(p.t_k) - p.cp_j_per_mol_k).abs()
            / p.cp_j_per_mol_k.abs().max(RELATIVE_ERROR_FLOOR_J_PER_MOL_K);
        let e_s = (polynomial.entropy_j_per_mol_k(p.t_k) - p.s_j_per_mol_k).abs()
            / p.s_j_per_mol_k.abs().max(RELATIVE_ERROR_FLOOR_J_PER_MOL_K);
        let e_h = (polynomial.enthalpy_j_per_mol(p.t_k) - (h298 + p.h_minus_h298_j_per_mol)).abs();
        max_cp = max_cp.max(e_cp);
        max_s = max_s.max(e_s);
        max_h = max_h.max(e_h);
        sum_cp += e_cp * e_cp;
        sum_s += e_s * e_s;
        sum_h += e_h * e_h;
    }
    let nf = n.max(1) as f64;
    Nasa7Fit {
        polynomial,
        n_points: n,
        max_relative_error_cp: max_cp,
        rms_relative_error_cp: (sum_cp / nf).sqrt(),
        max_relative_error_s: max_s,
        rms_relative_error_s: (sum_s / nf).sqrt(),
        max_abs_error_h_j_per_mol: max_h,
        rms_abs_error_h_j_per_mol: (sum_h / nf).sqrt(),
        continuity: polynomial.continuity_jumps(),
    }
}
