//! Pressure-dependent rate constants: falloff (Lindemann, Troe, SRI, fixed centre),
//! chemically activated steps and pressure tables, with the derivatives the analytic
//! Jacobian and the temperature column need.
//!
//! A pressure-dependent step's forward rate constant is written `kf = kbase(T) g(T, c)`:
//! `kbase` is the Arrhenius part kept in [`crate::RateConstants::forward`] (kinf for a falloff
//! step, k0 for a chemically activated one, 1 for a pressure table) and `g` is the factor
//! evaluated from the current concentrations:
//! - falloff: `g = Pr / (1 + Pr) F`, `Pr = (k0/kinf) [M]`;
//! - chemically activated: `g = F / (1 + Pr)`;
//! - pressure table: `g = exp(ln k(ln P))`, `P = (sum_i c_i) R T`, interpolated linearly in
//!   `ln P` between tabulated points and held at the ends.
//!
//! Every broadening form is written `log10 F = offset(T) + shape(x, center(T))`,
//! `x = log10 Pr`; the per-temperature `center` and `offset` are stored with the rate
//! constants and their temperature slopes with the rate-constant slopes.

use crate::rows::RowLists;
use crate::CompiledArrhenius;
use stoik_mechanism::Broadening;

/// Below this reduced pressure the broadening factor is held at its value here (its
/// logarithm diverges at Pr = 0); the Lindemann part is exact for any Pr.
pub(crate) const REDUCED_PRESSURE_FLOOR: f64 = 1e-200;

const LN_10: f64 = std::f64::consts::LN_10;

/// Troe's constant d (Gilbert, Luther & Troe 1983).
const TROE_D: f64 = 0.14;

/// How a step's third-body concentration `[M]` is formed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum Collider {
    /// `[M] = default * sum(c) + sum corrections`; corrections in
    /// `Kinetics::mixtures.row(mixture)`.
    Mixture {
        default_efficiency: f64,
        mixture: usize,
    },
    /// `[M] = c_species`.
    Species(usize),
}

impl Collider {
    #[inline]
    pub(crate) fn concentration(
        &self,
        mixtures: &RowLists<(usize, f64)>,
        c: &[f64],
        total: f64,
    ) -> f64 {
        match *self {
            Collider::Species(s) => c[s],
            Collider::Mixture {
                default_efficiency,
                mixture,
            } => {
                let mut m = default_efficiency * total;
                for &(s, delta) in mixtures.row(mixture) {
                    m += delta * c[s];
                }
                m
            }
        }
    }
}

/// A compiled falloff or chemically activated step.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct CompiledFalloff {
    /// The step's index.
    pub step: usize,
    /// The limit not held in `Kinetics::forward`: k0 for falloff, kinf for chemically
    /// activated steps.
    pub other_limit: CompiledArrhenius,
    pub chemically_activated: bool,
    pub broadening: Broadening,
    pub collider: Collider,
}

/// Per-temperature values of one falloff step (or their temperature slopes).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub(crate) struct FalloffState {
    /// k0 / kinf in m3/mol (so that Pr = ratio [M]).
    pub(crate) ratio: f64,
    /// Troe: log10 Fcent; SRI: log10(a exp(-b/T) + exp(-T/c)); fixed centre: log10 Fc.
    pub(crate) center: f64,
    /// SRI: log10(d T^e); otherwise 0.
    pub(crate) offset: f64,
}

impl CompiledFalloff {
    /// The per-temperature state and its temperature slope, given the rate constant `kbase`
    /// of the limit kept in `Kinetics::forward` and its log slope (1/K).
    pub(crate) fn state(
        &self,
        t: f64,
        kbase: f64,
        kbase_log_slope: f64,
    ) -> (FalloffState, FalloffState) {
        let other = self.other_limit.evaluate(t);
        let other_log_slope = self.other_limit.log_slope(t);
        // ratio = k0/kinf; d ln ratio/dT = +-(d ln other - d ln base).
        let (ratio, dln_ratio) = if self.chemically_activated {
            (kbase / other, kbase_log_slope - other_log_slope)
        } else {
            (other / kbase, other_log_slope - kbase_log_slope)
        };
        let (center, dcenter, offset, doffset) = match self.broadening {
            Broadening::Lindemann => (0.0, 0.0, 0.0, 0.0),
            Broadening::Troe {
                a,
                t3_k,
                t1_k,
                t2_k,
            } => {
                let e3 = (-t / t3_k).exp();
                let e1 = (-t / t1_k).exp();
                let mut fcent = (1.0 - a) * e3 + a * e1;
                let mut dfcent = -(1.0 - a) * e3 / t3_k - a * e1 / t1_k;
                if let Some(t2) = t2_k {
                    let e2 = (-t2 / t).exp();
                    fcent += e2;
                    dfcent += e2 * t2 / (t * t);
                }
                if fcent > f64::MIN_POSITIVE {
                    (fcent.log10(), dfcent / (fcent * LN_10), 0.0, 0.0)
                } else {
                    (f64::MIN_POSITIVE.log10(), 0.0, 0.0, 0.0)
                }
            }
            Broadening::Sri { a, b_k, c_k, d, e } => {
                let eb = (-b_k / t).exp();
                let ec = (-t / c_k).exp();
                let base = a * eb + ec;
                let dbase = a * eb * b_k / (t * t) - ec / c_k;
                let (center, dcenter) = if base > f64::MIN_POSITIVE {
                    (base.log10(), dbase / (base * LN_10))
                } else {
                    (f64::MIN_POSITIVE.log10(), 0.0)
                };
                let offset = d.log10() + e * t.log10();
                (center, dcenter, offset, e / (t * LN_10))
            }
            Broadening::FixedCenter { center } => (center.log10(), 0.0, 0.0, 0.0),
        };
        (
            FalloffState {
                ratio,
                center,
                offset,
            },
            FalloffState {
                ratio: ratio * dln_ratio,
                center: dcenter,
                offset: doffset,
            },
        )
    }

    /// `(log10 F, d log10 F / d x, d log10 F / d center)` at `x = log10 Pr` (the offset
    /// adds with slope 1).
    #[inline]
    fn log10_broadening(&self, state: &FalloffState, x: f64) -> (f64, f64, f64) {
        match self.broadening {
            Broadening::Lindemann => (0.0, 0.0, 0.0),
            Broadening::Troe { .. } => {
                let l = state.center;
                let c = -0.4 - 0.67 * l;
                let n = 0.75 - 1.27 * l;
                let u = x + c;
                let den = n - TROE_D * u;
                let f = u / den;
                if !f.is_finite() {
                    // At the pole of the formula log10 F -> 0 from both sides.
                    return (0.0, 0.0, 0.0);
                }
                let q = 1.0 + f * f;
                let value = l / q;
                // d(l/q)/df = -2 l f / q^2; df/du = n/den^2; df/dn = -u/den^2.
                let dvalue_df = -2.0 * l * f / (q * q);
                let df_du = n / (den * den);
                let df_dn = -u / (den * den);
                let d_dx = dvalue_df * df_du;
                let d_dl = 1.0 / q + dvalue_df * (df_du * -0.67 + df_dn * -1.27);
                (value + state.offset, d_dx, d_dl)
            }
            Broadening::Sri { .. } | Broadening::FixedCenter { .. } => {
                let q = 1.0 + x * x;
                let exponent = 1.0 / q;
                (
                    state.offset + exponent * state.center,
                    state.center * (-2.0 * x) / (q * q),
                    exponent,
                )
            }
        }
    }

    /// The factor `g([M])`, its derivative `dg/d[M]`, and the partial temperature slope
    /// `dg/dT` at fixed `[M]` (given the state's slopes `dstate`).
    #[inline]
    pub(crate) fn factor(
        &self,
        state: &FalloffState,
        dstate: Option<&FalloffState>,
        m: f64,
    ) -> (f64, f64, f64) {
        let pr = state.ratio * m;
        let (x, clamped) = if pr > REDUCED_PRESSURE_FLOOR {
            (pr.log10(), false)
        } else {
            (REDUCED_PRESSURE_FLOOR.log10(), true)
        };
        let (log10_f, mut phi, d_center) = self.log10_broadening(state, x);
        if clamped {
            phi = 0.0;
        }
        let f = (LN_10 * log10_f).exp();
        let one_plus = 1.0 + pr;
        // Derivatives with respect to Pr (phi = d log10 F / d log10 Pr = Pr d ln F / d Pr).
        let (g, dg_dpr) = if self.chemically_activated {
            let g = f / one_plus;
            let dg = if clamped {
                -g / one_plus
            } else {
                g * (phi / pr - 1.0 / one_plus)
            };
            (g, dg)
        } else {
            let lindemann = pr / one_plus;
            (lindemann * f, f / one_plus * (1.0 / one_plus + phi))
        };
        let dg_dm = dg_dpr * state.ratio;
        let dg_dt = match dstate {
            None => 0.0,
            Some(ds) => {
                // Through Pr (ratio depends on T) and through F's parameters at fixed Pr.
                let through_pr = dg_dpr * ds.ratio * m;
                let dln_f = LN_10 * (d_center * ds.center + ds.offset);
                through_pr + g * dln_f
            }
        };
        (g, dg_dm, dg_dt)
    }
}

/// `(ln k, d ln k/d ln P, d ln k/dT at fixed ln P)` at `ln_p` (P in Pa) from one pressure
/// table: the ln P of its points `ln_pressures` (increasing), their tabulated `ln k` values
/// `ln_k` and, if given, the temperature slopes `dln_k` (1/K) of those values.
#[inline]
pub(crate) fn interpolate_table(
    ln_pressures: &[f64],
    ks: &[f64],
    dln_k: Option<&[f64]>,
    ln_p: f64,
) -> (f64, f64, f64) {
    let slope_at = |i: usize| dln_k.map_or(0.0, |d| d[i]);
    let Some(last) = ln_pressures.len().checked_sub(1) else {
        // An empty table (refused by `Kinetics::compile`) has no rate.
        return (f64::NEG_INFINITY, 0.0, 0.0);
    };
    // NaN (no pressure) takes the first point.
    if ln_p.is_nan() || ln_p <= ln_pressures[0] {
        return (ks[0], 0.0, slope_at(0));
    }
    if ln_p >= ln_pressures[last] {
        return (ks[last], 0.0, slope_at(last));
    }
    let mut i = 0;
    while ln_pressures[i + 1] <= ln_p {
        i += 1;
    }
    let width = ln_pressures[i + 1] - ln_pressures[i];
    let theta = (ln_p - ln_pressures[i]) / width;
    let s = (ks[i + 1] - ks[i]) / width;
    let value = ks[i] + theta * (ks[i + 1] - ks[i]);
    let dt = (1.0 - theta) * slope_at(i) + theta * slope_at(i + 1);
    (value, s, dt)
}

/// `(ln sum_s k_s(T), d ln(sum k_s)/dT)` of the rate sets `sets`.
pub(crate) fn summed_sets(sets: &[CompiledArrhenius], t: f64) -> (f64, f64) {
    let mut sum = 0.0;
    let mut dsum = 0.0;
    for p in sets {
        let k = p.evaluate(t);
        sum += k;
        dsum += k * p.log_slope(t);
    }
    (sum.ln(), dsum / sum)
}
