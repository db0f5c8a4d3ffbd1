//! Two-range 7-coefficient polynomials (McBride, Gordon & Reno 1993, NASA TM-4513).

use crate::{FitError, GAS_CONSTANT};

/// Thermochemical polynomials of one ideal-gas species in the 7-coefficient form of
/// McBride, Gordon & Reno (1993), NASA TM-4513:
///
/// * cp/R = a1 + a2 T + a3 T^2 + a4 T^3 + a5 T^4
/// * H/(R T) = a1 + a2 T/2 + a3 T^2/3 + a4 T^3/4 + a5 T^4/5 + a6/T
/// * S/R = a1 ln T + a2 T + a3 T^2/2 + a4 T^3/3 + a5 T^4/4 + a7
///
/// with T in K. `low` holds a1..a7 for `t_low_k <= T < t_mid_k`, `high` for
/// `t_mid_k <= T <= t_high_k`. Enthalpies are absolute on the usual scale on which
/// elements in their reference state have H(298.15 K) = 0, so H(298.15 K) of a species
/// is its formation enthalpy. Entropies refer to the standard pressure of 1e5 Pa.
///
/// Evaluation outside `[t_low_k, t_high_k]` extrapolates the nearer range's polynomial;
/// use [`Nasa7::covers`] to check.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Nasa7 {
    /// Lower validity limit of the low range, K.
    pub t_low_k: f64,
    /// Common temperature between the two ranges, K.
    pub t_mid_k: f64,
    /// Upper validity limit of the high range, K.
    pub t_high_k: f64,
    /// Coefficients a1..a7 of the low range (a_k in K^(1-k) for k <= 5, a6 in K, a7
    /// dimensionless).
    pub low: [f64; 7],
    /// Coefficients a1..a7 of the high range (same units as `low`).
    pub high: [f64; 7],
}

impl Nasa7 {
    /// Builds polynomials after checking that the temperatures are finite, positive
    /// and ordered (t_low < t_mid < t_high, all in K) and that every coefficient is
    /// finite.
    pub fn new(
        t_low_k: f64,
        t_mid_k: f64,
        t_high_k: f64,
        low: [f64; 7],
        high: [f64; 7],
    ) -> Result<Self, FitError> {
        for (name, t) in [("t_low", t_low_k), ("t_mid", t_mid_k), ("t_high", t_high_k)] {
            if !t.is_finite() {
                return Err(FitError::NonFiniteInput {
                    what: format!("{name} = {t}"),
                });
            }
        }
        if !(t_low_k > 0.0 && t_low_k < t_mid_k && t_mid_k < t_high_k) {
            return Err(FitError::InvalidTemperature {
                what: format!(
                    "need 0 < t_low < t_mid < t_high, got {t_low_k} K, {t_mid_k} K, {t_high_k} K"
                ),
            });
        }
        for (range, coeffs) in [("low", &low), ("high", &high)] {
            if let Some(i) = coeffs.iter().position(|a| !a.is_finite()) {
                return Err(FitError::NonFiniteInput {
                    what: format!("{range}-range coefficient a{}", i + 1),
                });
            }
        }
        Ok(Self {
            t_low_k,
            t_mid_k,
            t_high_k,
            low,
            high,
        })
    }

    /// True when `t_k` (K) lies within `[t_low_k, t_high_k]`.
    pub fn covers(&self, t_k: f64) -> bool {
        t_k >= self.t_low_k && t_k <= self.t_high_k
    }

    /// The coefficient set used at temperature `t_k` (K): `low` below `t_mid_k`,
    /// `high` from `t_mid_k` up.
    pub fn coefficients_at(&self, t_k: f64) -> &[f64; 7] {
        if t_k < self.t_mid_k {
            &self.low
        } else {
            &self.high
        }
    }

    /// Dimensionless heat capacity cp/R at `t_k` (K).
    pub fn cp_over_r(&self, t_k: f64) -> f64 {
        cp_over_r(self.coefficients_at(t_k), t_k)
    }

    /// Temperature derivative of the dimensionless heat capacity, d(cp/R)/dT, in 1/K at
    /// `t_k` (K).
    pub fn cp_slope_over_r(&self, t_k: f64) -> f64 {
        let a = self.coefficients_at(t_k);
        a[1] + t_k * (2.0 * a[2] + t_k * (3.0 * a[3] + t_k * 4.0 * a[4]))
    }

    /// Dimensionless enthalpy H/(R T) at `t_k` (K).
    pub fn h_over_rt(&self, t_k: f64) -> f64 {
        h_over_rt(self.coefficients_at(t_k), t_k)
    }

    /// Dimensionless standard entropy S/R (at 1e5 Pa) at `t_k` (K).
    pub fn s_over_r(&self, t_k: f64) -> f64 {
        s_over_r(self.coefficients_at(t_k), t_k)
    }

    /// Molar heat capacity at constant pressure in J/(mol K) at `t_k` (K).
    pub fn cp_j_per_mol_k(&self, t_k: f64) -> f64 {
        GAS_CONSTANT * self.cp_over_r(t_k)
    }

    /// Absolute molar enthalpy in J/mol at `t_k` (K), on the scale where elements in
    /// their reference state have H(298.15 K) = 0.
    pub fn enthalpy_j_per_mol(&self, t_k: f64) -> f64 {
        GAS_CONSTANT * t_k * self.h_over_rt(t_k)
    }

    /// Standard molar entropy (at 1e5 Pa) in J/(mol K) at `t_k` (K).
    pub fn entropy_j_per_mol_k(&self, t_k: f64) -> f64 {
        GAS_CONSTANT * self.s_over_r(t_k)
    }

    /// Standard molar Gibbs energy G = H - T S (at 1e5 Pa) in J/mol at `t_k` (K).
    pub fn gibbs_j_per_mol(&self, t_k: f64) -> f64 {
        GAS_CONSTANT * t_k * (self.h_over_rt(t_k) - self.s_over_r(t_k))
    }

    /// Jumps (low range minus high range) of cp/R, H/(R T) and S/R at `t_mid_k`, all
    /// dimensionless.
    pub fn continuity_jumps(&self) -> (f64, f64, f64) {
        let t = self.t_mid_k;
        (
            cp_over_r(&self.low, t) - cp_over_r(&self.high, t),
            h_over_rt(&self.low, t) - h_over_rt(&self.high, t),
            s_over_r(&self.low, t) - s_over_r(&self.high, t),
        )
    }

    /// Jump (low range minus high range) of d(cp/R)/dT at `t_mid_k`, in 1/K.
    pub fn cp_slope_jump_per_k(&self) -> f64 {
        let t = self.t_mid_k;
        let d = |a: &[f64; 7]| a[1] + t * (2.0 * a[2] + t * (3.0 * a[3] + t * 4.0 * a[4]));
        d(&self.low) - d(&self.high)
    }
}

/// cp/R of one coefficient set at `t` (K).
pub(crate) fn cp_over_r(a: &[f64; 7], t: f64) -> f64 {
    a[0] + t * (a[1] + t * (a[2] + t * (a[3] + t * a[4])))
}

/// H/(R T) of one coefficient set at `t` (K).
pub(crate) fn h_over_rt(a: &[f64; 7], t: f64) -> f64 {
    a[0] + t * (a[1] / 2.0 + t * (a[2] / 3.0 + t * (a[3] / 4.0 + t * a[4] / 5.0))) + a[5] / t
}

/// S/R of one coefficient set at `t` (K).
pub(crate) fn s_over_r(a: &[f64; 7], t: f64) -> f64 {
    a[0] * t.ln() + t * (a[1] + t * (a[2] / 2.0 + t * (a[3] / 3.0 + t * a[4] / 4.0))) + a[6]
}

/// Basis row of cp/R (coefficients multiplying a1..a7) at `t` (K).
pub(crate) fn cp_row(t: f64) -> [f64; 7] {
    [1.0, t, t * t, t * t * t, t * t * t * t, 0.0, 0.0]
}

/// Basis row of d(cp/R)/dT at `t` (K).
pub(crate) fn dcp_row(t: f64) -> [f64; 7] {
    [0.0, 1.0, 2.0 * t, 3.0 * t * t, 4.0 * t * t * t, 0.0, 0.0]
}

/// Basis row of H/(R T) at `t` (K).
pub(crate) fn h_row(t: f64) -> [f64; 7] {
    [
        1.0,
        t / 2.0,
        t * t / 3.0,
        t * t * t / 4.0,
        t * t * t * t / 5.0,
        1.0 / t,
        0.0,
    ]
}

/// Basis row of S/R at `t` (K).
pub(crate) fn s_row(t: f64) -> [f64; 7] {
    [
        t.ln(),
        t,
        t * t / 2.0,
        t * t * t / 3.0,
        t * t * t * t / 4.0,
        0.0,
        1.0,
    ]
}
