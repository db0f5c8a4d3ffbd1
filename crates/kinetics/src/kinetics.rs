//! [`Kinetics`]: a mechanism compiled into per-step lists, and its evaluation routines
//! (rate constants and their temperature slopes, rates of progress, production rates,
//! analytic Jacobian dense and sparse, equilibrium constants). No routine here allocates
//! except [`Kinetics::rate_constants`].

use crate::falloff::{self, CompiledFalloff, FalloffState};
use crate::rows::RowLists;
use crate::{conservation, CompileError, JacobianPattern, GAS_CONSTANT, STANDARD_PRESSURE_PA};
use stoik_mechanism::Mechanism;
use stoik_thermo::Nasa7;

/// Rate constants of every step at one temperature, in SI units
/// ((mol/m3)^(1-m)/s for a direction of overall order m).
///
/// Pressure-dependent steps keep here the part that depends on temperature only; the
/// factor that depends on the concentrations is formed at each evaluation (see
/// [`Kinetics::effective_forward_rate_constants`]):
/// - falloff step: `forward` is the high-pressure limit kinf, and kf = kinf Pr/(1+Pr) F;
/// - chemically activated step: `forward` is the low-pressure limit k0, and
///   kf = k0 F/(1+Pr);
/// - pressure table: `forward` is 1 (in the step's units) and kf is the interpolated table
///   value at the mixture's pressure.
///
/// Their reverse rate constants follow the same pattern (`reverse = forward / Kc`).
#[derive(Debug, Clone, PartialEq)]
pub struct RateConstants {
    /// Forward rate constant of each step (for pressure-dependent steps, see above).
    pub forward: Vec<f64>,
    /// Reverse rate constant of each step; 0 for irreversible steps; `kf / Kc` for reversible
    /// steps without explicit reverse parameters (NaN if a species of such a step lacks
    /// thermochemistry, which the mechanism loader rules out).
    pub reverse: Vec<f64>,
    /// Temperature (K) of the evaluation (pressure tables form P = (sum c) R T with it).
    pub(crate) temperature_k: f64,
    /// Per falloff step: k0/kinf and the broadening parameters at this temperature (in a
    /// slopes object: their temperature derivatives).
    pub(crate) falloff: Vec<FalloffState>,
    /// Per pressure-table point: ln of the summed rate constant (in a slopes object: its
    /// temperature derivative d ln k/dT, 1/K).
    pub(crate) table_ln_k: Vec<f64>,
    /// Per species: G0/(R T) at this temperature (empty when no step takes its reverse rate
    /// constant from thermochemistry; NaN for a species without thermochemistry).
    pub(crate) species_g_over_rt: Vec<f64>,
}

impl RateConstants {
    /// The temperature (K) these rate constants were evaluated at.
    pub fn temperature_k(&self) -> f64 {
        self.temperature_k
    }
}

/// One power-law factor `c_species^order` of a rate expression.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct OrderTerm {
    pub species: usize,
    pub order: f64,
    /// `Some(n)` when `order` is the integer `n` (exact `powi`).
    pub integer_order: Option<i32>,
}

impl OrderTerm {
    #[inline(always)]
    fn power(&self, c: f64) -> f64 {
        match self.integer_order {
            Some(1) => c,
            Some(2) => c * c,
            Some(n) => c.powi(n),
            None => c.max(0.0).powf(self.order),
        }
    }

    /// d(c^order)/dc.
    #[inline]
    fn derivative(&self, c: f64) -> f64 {
        match self.integer_order {
            Some(1) => 1.0,
            Some(2) => 2.0 * c,
            Some(n) => n as f64 * c.powi(n - 1),
            None => {
                if c > 0.0 {
                    self.order * c.powf(self.order - 1.0)
                } else {
                    0.0
                }
            }
        }
    }
}

/// Rate-constant parameters of one direction, flattened.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct CompiledArrhenius {
    pub pre_exponential_si: f64,
    pub temperature_exponent: f64,
    pub activation_temperature_k: f64,
}

impl CompiledArrhenius {
    #[inline]
    pub(crate) fn evaluate(&self, temperature_k: f64) -> f64 {
        let mut k = self.pre_exponential_si;
        if self.temperature_exponent != 0.0 {
            k *= temperature_k.powf(self.temperature_exponent);
        }
        if self.activation_temperature_k != 0.0 {
            k *= (-self.activation_temperature_k / temperature_k).exp();
        }
        if k.is_finite() && k != 0.0 {
            k
        } else {
            // A factor over- or underflowed on its own (1e-50 x 3500^100): the product in
            // logarithms, which is finite whenever k is.
            self.evaluate_log(temperature_k.ln(), 1.0 / temperature_k)
        }
    }

    /// k from ln T and 1/T computed once per temperature: A exp(n ln T - (Ea/R)/T).
    ///
    /// When exp(n ln T - (Ea/R)/T) alone over- or underflows (a tiny prefactor times a huge
    /// temperature factor, or the reverse), k is formed as exp(ln A + n ln T - (Ea/R)/T),
    /// finite whenever k itself is.
    #[inline]
    pub(crate) fn evaluate_log(&self, ln_t: f64, inv_t: f64) -> f64 {
        let exponent = self.temperature_exponent * ln_t - self.activation_temperature_k * inv_t;
        if exponent == 0.0 {
            return self.pre_exponential_si;
        }
        let factor = exponent.exp();
        if (factor.is_finite() && factor >= f64::MIN_POSITIVE) || self.pre_exponential_si <= 0.0 {
            self.pre_exponential_si * factor
        } else {
            (self.pre_exponential_si.ln() + exponent).exp()
        }
    }

    /// d ln k / dT = (n + Ea/(R T)) / T in 1/K.
    #[inline]
    pub(crate) fn log_slope(&self, temperature_k: f64) -> f64 {
        (self.temperature_exponent + self.activation_temperature_k / temperature_k) / temperature_k
    }
}

/// The concentration-dependent factor g of a step's rate of progress,
/// `q = g (kf prod c^a - kr prod c^b)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) enum ThirdBodyKind {
    /// g = 1.
    None,
    /// g = [M] = default * sum(c) + sum corrections; corrections in
    /// `Kinetics::mixtures.row(mixture)` (flat, like `Species`, so that the loops over plain
    /// steps match on one level).
    Mixture {
        default_efficiency: f64,
        mixture: usize,
    },
    /// g = [M] = c_species.
    Species(usize),
    /// Falloff or chemically activated: index into `Kinetics::falloff`.
    Falloff(usize),
    /// Pressure table: index into `Kinetics::tables`.
    Table(usize),
}

/// One limit of a falloff or chemically activated step's rate constant.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum FalloffLimit {
    /// The low-pressure limit k0.
    Low,
    /// The high-pressure limit kinf.
    High,
}

/// A mechanism compiled for fast evaluation. Build once with [`Kinetics::compile`], then
/// evaluate as often as needed; every evaluation routine is allocation-free.
#[derive(Debug, Clone)]
pub struct Kinetics {
    /// Coefficient vectors (one per species) of the linear combinations of concentrations
    /// that every step leaves unchanged: a basis of the left null space of the net
    /// stoichiometric matrix. Computed on first use (exact elimination; about 0.1 s at 1,000
    /// species), so that compiling stays cheap for callers that never integrate.
    pub(crate) conserved: std::sync::OnceLock<Vec<Vec<f64>>>,
    pub(crate) n_species: usize,
    pub(crate) n_steps: usize,
    /// Species names, in state order.
    pub(crate) species_names: Vec<String>,
    /// Per step: forward rate-constant parameters (pressure-dependent steps: see
    /// [`RateConstants`]).
    pub(crate) forward: Vec<CompiledArrhenius>,
    /// Per step: reverse parameters; `None` for irreversible steps and for reverse rate
    /// constants from thermochemistry.
    pub(crate) reverse: Vec<Option<CompiledArrhenius>>,
    /// Per step: the forward order terms.
    pub(crate) forward_orders: RowLists<OrderTerm>,
    /// Per step: the reverse order terms (product coefficients; empty when irreversible).
    pub(crate) reverse_orders: RowLists<OrderTerm>,
    /// Per step: the nonzero net stoichiometric changes (species, nu).
    pub(crate) net: RowLists<(usize, f64)>,
    /// Per species: the (step, nu) of every step that changes it, in the order in which
    /// [`Kinetics::production_rates_compensated`] adds the terms (steps without pressure
    /// dependence by index, then `pressure_steps` in their order), so that the gathered sums
    /// of [`Kinetics::production_rates_and_progress`] are the same numbers.
    pub(crate) species_terms: RowLists<(usize, f64)>,
    /// Per step: how the factor g of its rate of progress is formed.
    pub(crate) third_body: Vec<ThirdBodyKind>,
    /// Per mixture collider: (species, efficiency - default) where they differ.
    pub(crate) mixtures: RowLists<(usize, f64)>,
    /// Some step needs the total concentration (mixture third body or pressure table).
    pub(crate) needs_total: bool,
    /// Indices of the pressure-dependent steps (falloff, chemically activated, tables).
    pub(crate) pressure_steps: Vec<usize>,
    /// Falloff and chemically activated steps (each knows its step index).
    pub(crate) falloff: Vec<CompiledFalloff>,
    /// Per pressure table: ln P (P in Pa) of its points, increasing. The points of all
    /// tables, in this order, index `table_sets` and `RateConstants::table_ln_k`.
    pub(crate) tables: RowLists<f64>,
    /// Per pressure-table point: its rate-constant sets (summed).
    pub(crate) table_sets: RowLists<CompiledArrhenius>,
    /// Per step: the species its rate depends on (Jacobian columns), unique, with their
    /// third-body efficiency (0 when only kinetic).
    pub(crate) columns: RowLists<(usize, f64)>,
    /// Per step: for column slot `s` and net row `r`, `entries.row(j)[s * rows_j + r]` is the
    /// index into the sparse values of J[row, col].
    pub(crate) entries: RowLists<usize>,
    pub(crate) pattern: JacobianPattern,
    /// Thermochemistry of each species (`None` when not given).
    pub(crate) species_thermo: Vec<Option<Nasa7>>,
    /// Per step: the reverse rate constant is kf / Kc (reversible, no explicit reverse).
    pub(crate) reverse_from_thermo: Vec<bool>,
    /// Per step: sum of the net stoichiometric changes (products minus reactants; a third
    /// body does not count), the exponent of P0/(R T) in Kc = Kp (P0/(R T))^dn.
    pub(crate) delta_moles: Vec<f64>,
}

/// A temperature at which rate constants cannot be evaluated: not positive, or not finite
/// (returned by [`Kinetics::try_rate_constants`] and
/// [`Kinetics::try_evaluate_rate_constants`]).
#[derive(Debug, Clone, Copy, PartialEq, thiserror::Error)]
#[error("rate constants need a positive, finite temperature; got {temperature_k} K")]
pub struct TemperatureError {
    /// The temperature refused (K).
    pub temperature_k: f64,
}

fn check_temperature(temperature_k: f64) -> Result<(), TemperatureError> {
    if temperature_k.is_finite() && temperature_k > 0.0 {
        Ok(())
    } else {
        Err(TemperatureError { temperature_k })
    }
}

impl Kinetics {
    /// Compiles `mechanism` after checking it (see [`CompileError`]): a mechanism built by
    /// hand gets the checks the loader makes (indices in range, finite positive prefactors
    /// and coefficients, finite non-negative efficiencies and orders, well-formed falloff
    /// parameters and pressure tables).
    pub fn compile(mechanism: &Mechanism) -> Result<Kinetics, CompileError> {
        crate::compile::compile(mechanism)
    }

    /// The conserved linear combinations of concentrations: coefficient vectors `l` (one
    /// entry per species, dimensionless) with `l . w(c) = 0` for every state, a basis of the
    /// left null space of the net stoichiometric matrix (element totals, moieties). Integrators
    /// use them to keep the invariants from drifting.
    ///
    /// The basis is exact (integer coefficients, verified against every step) but not chosen
    /// for readability; [`conservation_laws`](crate::conservation_laws) gives named, readable
    /// laws of a mechanism. It is computed on the first call and kept. Empty when the
    /// mechanism conserves nothing or its coefficients are not simple fractions.
    pub fn conserved_combinations(&self) -> &[Vec<f64>] {
        self.conserved
            .get_or_init(|| conservation::conserved_basis(self.n_species, self.net.rows()))
    }

    /// Multiplies the forward and reverse pre-exponential factors of step `step` by `factor`
    /// (dimensionless): a rate multiplier for sensitivity or uncertainty studies that leaves
    /// the equilibrium constant kf/kr unchanged. Returns `false` (and changes nothing) when
    /// `step` is out of range or `factor` is not finite and positive.
    pub fn scale_step(&mut self, step: usize, factor: f64) -> bool {
        if !(factor.is_finite() && factor > 0.0) || step >= self.n_steps {
            return false;
        }
        self.forward[step].pre_exponential_si *= factor;
        if let Some(reverse) = &mut self.reverse[step] {
            reverse.pre_exponential_si *= factor;
        }
        // Both falloff limits scale, so that Pr (and F) stay the same.
        if let ThirdBodyKind::Falloff(i) = self.third_body[step] {
            self.falloff[i].other_limit.pre_exponential_si *= factor;
        }
        true
    }

    /// The nonzero net stoichiometric changes of step `step`: `(species, nu)` with `nu` the
    /// product coefficient minus the reactant coefficient (dimensionless; a third body does
    /// not count). Empty for an index out of range.
    pub fn net_changes(&self, step: usize) -> &[(usize, f64)] {
        if step >= self.n_steps {
            return &[];
        }
        self.net.row(step)
    }

    /// Multiplies the forward rate constant of step `step` by `factor` (dimensionless): its
    /// pre-exponential factor, and both limits of a falloff or chemically activated step
    /// (so that Pr and the broadening stay the same). A reverse rate constant taken from
    /// `kf/Kc` follows; explicit reverse parameters do not, so the step's equilibrium
    /// constant `kf/kr` changes with them. This is the parameter of local sensitivities
    /// (`d/d ln kf`, see [`scaling_rates`](Self::scaling_rates)). Returns `false` (and
    /// changes nothing) when `step` is out of range or `factor` is not finite and positive.
    pub fn scale_forward(&mut self, step: usize, factor: f64) -> bool {
        if !(factor.is_finite() && factor > 0.0) || step >= self.n_steps {
            return false;
        }
        self.forward[step].pre_exponential_si *= factor;
        if let ThirdBodyKind::Falloff(i) = self.third_body[step] {
            self.falloff[i].other_limit.pre_exponential_si *= factor;
        }
        true
    }

    /// Writes `dq_j / d ln kf_j` of every step into `out` (length `n_steps`, mol/(m3 s)) at
    /// rate constants `k` and concentrations `c` (mol/m3): the derivative of the step's net
    /// rate of progress with respect to the log of its forward rate constant as
    /// [`scale_forward`](Self::scale_forward) scales it. That is the net rate of progress
    /// when the reverse rate constant follows (`kf/Kc`, or irreversible), and the forward
    /// rate alone (third body and pressure factor included) when the reverse parameters are
    /// explicit. No allocation.
    pub fn scaling_rates(&self, k: &RateConstants, c: &[f64], out: &mut [f64]) {
        let total = self.total_concentration(c);
        for (j, o) in out.iter_mut().enumerate().take(self.n_steps) {
            let (fwd, rev) = self.directional_rates(k, j, c);
            let g = self.third_body_concentration(k, j, c, total);
            *o = if self.reverse[j].is_some() {
                g * fwd
            } else {
                g * (fwd - rev)
            };
        }
    }

    /// Whether step `step` is a falloff or chemically activated step (a rate constant with a
    /// low-pressure limit k0 and a high-pressure limit kinf); `false` out of range.
    pub fn is_falloff(&self, step: usize) -> bool {
        matches!(self.third_body.get(step), Some(ThirdBodyKind::Falloff(_)))
    }

    /// Multiplies one limit of falloff or chemically activated step `step` by `factor`
    /// (dimensionless): its pre-exponential factor alone, so that Pr = k0 \[M\]/kinf (and the
    /// broadening F(Pr)) changes. A reverse rate constant from `kf/Kc` follows the step's
    /// forward rate constant; explicit reverse parameters share the step's pressure factor.
    /// The parameter of [`falloff_limit_rates`](Self::falloff_limit_rates). Returns `false`
    /// (and changes nothing) when `step` is not such a step or `factor` is not finite and
    /// positive.
    pub fn scale_falloff_limit(&mut self, step: usize, limit: FalloffLimit, factor: f64) -> bool {
        if !(factor.is_finite() && factor > 0.0) {
            return false;
        }
        let Some(ThirdBodyKind::Falloff(i)) = self.third_body.get(step).copied() else {
            return false;
        };
        let f = &mut self.falloff[i];
        // `forward` holds kinf for falloff, k0 for chemically activated steps.
        let in_forward = match limit {
            FalloffLimit::Low => f.chemically_activated,
            FalloffLimit::High => !f.chemically_activated,
        };
        if in_forward {
            self.forward[step].pre_exponential_si *= factor;
        } else {
            f.other_limit.pre_exponential_si *= factor;
        }
        true
    }

    /// `(dq/d ln k0, dq/d ln kinf)` of falloff or chemically activated step `step` (mol/(m3
    /// s)) at rate constants `k` and concentrations `c` (mol/m3): the derivatives of its net
    /// rate of progress with respect to the log of each limit as
    /// [`scale_falloff_limit`](Self::scale_falloff_limit) scales it. With `L = d ln g/d ln Pr`
    /// of the pressure factor `g` and `q` the net rate of progress, a falloff step (kf = kinf
    /// g, g = Pr/(1+Pr) F) has `dq/d ln k0 = L q` and `dq/d ln kinf = r - L q`; a chemically
    /// activated one (kf = k0 g, g = F/(1+Pr)) has `dq/d ln k0 = r + L q` and
    /// `dq/d ln kinf = -L q`, `r` the step's [`scaling_rates`](Self::scaling_rates) entry. The
    /// two sum to `r` (both limits together). For a falloff step `L = 1/(1+Pr) + d ln F/d ln
    /// Pr`. `None` when `step` is not such a step. No allocation.
    pub fn falloff_limit_rates(
        &self,
        k: &RateConstants,
        c: &[f64],
        step: usize,
    ) -> Option<(f64, f64)> {
        let Some(ThirdBodyKind::Falloff(i)) = self.third_body.get(step).copied() else {
            return None;
        };
        let total = self.total_concentration(c);
        let f = &self.falloff[i];
        let m = f.collider.concentration(&self.mixtures, c, total);
        let (g, dg_dm, _) = f.factor(&k.falloff[i], None, m);
        let (fwd, rev) = self.directional_rates(k, step, c);
        let q = g * (fwd - rev);
        let r = if self.reverse[step].is_some() {
            g * fwd
        } else {
            q
        };
        // L q = (d ln g/d ln [M]) q = [M] dg/d[M] (fwd - rev).
        let lq = m * dg_dm * (fwd - rev);
        Some(if f.chemically_activated {
            (r + lq, -lq)
        } else {
            (lq, r - lq)
        })
    }

    /// Shifts the standard enthalpy of species `species` by `shift_j_per_mol` (J/mol) at every
    /// temperature (the constant `a6` of both ranges of its NASA polynomials): a change of its
    /// formation enthalpy. Equilibrium constants, hence reverse rate constants from `kf/Kc`,
    /// follow, and so does the heat release of a reactor that takes its thermochemistry from
    /// these kinetics. The parameter of [`reverse_rates_from_thermo`](Self::reverse_rates_from_thermo).
    /// Returns `false` (and changes nothing) when the species is out of range, has no
    /// thermochemistry, or the shift is not finite.
    pub fn shift_formation_enthalpy(&mut self, species: usize, shift_j_per_mol: f64) -> bool {
        if !shift_j_per_mol.is_finite() {
            return false;
        }
        let Some(Some(thermo)) = self.species_thermo.get_mut(species) else {
            return false;
        };
        let da6 = shift_j_per_mol / GAS_CONSTANT;
        thermo.low[5] += da6;
        thermo.high[5] += da6;
        true
    }

    /// Writes into `out` (length `n_steps`, mol/(m3 s)) the reverse rate (pressure factor
    /// included) of every step whose reverse rate constant is `kf/Kc`, 0 for the others, at
    /// rate constants `k` and concentrations `c` (mol/m3). A shift `dH_i` (J/mol) of species
    /// `i`'s enthalpy changes `ln Kc_j` by `-nu_ij dH_i/(R T)`, so such a step's net rate of
    /// progress changes by `dq_j/d(dH_i) = -nu_ij out[j] / (R T)`. No allocation.
    pub fn reverse_rates_from_thermo(&self, k: &RateConstants, c: &[f64], out: &mut [f64]) {
        let total = self.total_concentration(c);
        for (j, o) in out.iter_mut().enumerate().take(self.n_steps) {
            *o = if self.reverse_from_thermo[j] && k.reverse[j] != 0.0 {
                let (_, rev) = self.directional_rates(k, j, c);
                self.third_body_concentration(k, j, c, total) * rev
            } else {
                0.0
            };
        }
    }

    /// Number of species (length of concentration vectors).
    pub fn n_species(&self) -> usize {
        self.n_species
    }

    /// Number of steps (length of rate-of-progress vectors).
    pub fn n_steps(&self) -> usize {
        self.n_steps
    }

    /// Rate constants at `temperature_k` (K), freshly allocated.
    ///
    /// The temperature is not checked (this sits on the integrator's hot path, where a Newton
    /// iterate may pass through any value): a temperature that is not positive and finite
    /// gives NaN or infinite rate constants. For a temperature from data you do not control,
    /// use [`Kinetics::try_rate_constants`].
    pub fn rate_constants(&self, temperature_k: f64) -> RateConstants {
        let mut out = RateConstants {
            forward: vec![0.0; self.n_steps],
            reverse: vec![0.0; self.n_steps],
            temperature_k,
            falloff: vec![FalloffState::default(); self.falloff.len()],
            table_ln_k: vec![0.0; self.table_sets.len()],
            species_g_over_rt: if self.reverse_from_thermo.iter().any(|&r| r) {
                vec![0.0; self.n_species]
            } else {
                Vec::new()
            },
        };
        self.evaluate_rate_constants(temperature_k, &mut out);
        out
    }

    /// Rate constants at `temperature_k` (K), or an error if the temperature is not positive
    /// and finite (the checked form of [`Kinetics::rate_constants`]; same values otherwise).
    pub fn try_rate_constants(
        &self,
        temperature_k: f64,
    ) -> Result<RateConstants, TemperatureError> {
        check_temperature(temperature_k)?;
        Ok(self.rate_constants(temperature_k))
    }

    /// [`Kinetics::evaluate_rate_constants`] that first refuses a temperature that is not
    /// positive and finite (`out` is left unchanged then). No allocation.
    pub fn try_evaluate_rate_constants(
        &self,
        temperature_k: f64,
        out: &mut RateConstants,
    ) -> Result<(), TemperatureError> {
        check_temperature(temperature_k)?;
        self.evaluate_rate_constants(temperature_k, out);
        Ok(())
    }

    /// Overwrites `out` with the rate constants at `temperature_k` (K); `out` must come from
    /// [`Kinetics::rate_constants`] of this mechanism (its vectors have `n_steps` entries).
    ///
    /// Reversible steps without explicit reverse parameters get `kr = kf / Kc(T)` (see
    /// [`Kinetics::equilibrium_constants`]), evaluated without allocating.
    pub fn evaluate_rate_constants(&self, temperature_k: f64, out: &mut RateConstants) {
        out.temperature_k = temperature_k;
        let ln_t = temperature_k.ln();
        let inv_t = 1.0 / temperature_k;
        for (k, p) in out.forward.iter_mut().zip(&self.forward) {
            *k = p.evaluate_log(ln_t, inv_t);
        }
        for (state, f) in out.falloff.iter_mut().zip(&self.falloff) {
            let log_slope = self.forward[f.step].log_slope(temperature_k);
            *state = f.state(temperature_k, out.forward[f.step], log_slope).0;
        }
        for (ln_k, sets) in out.table_ln_k.iter_mut().zip(self.table_sets.rows()) {
            *ln_k = falloff::summed_sets(sets, temperature_k).0;
        }
        // G0/(R T) of every species once, for the steps whose kr = kf / Kc.
        for (g, thermo) in out.species_g_over_rt.iter_mut().zip(&self.species_thermo) {
            *g = thermo.as_ref().map_or(f64::NAN, |th| {
                th.h_over_rt(temperature_k) - th.s_over_r(temperature_k)
            });
        }
        let ln_p0_over_rt = (STANDARD_PRESSURE_PA / GAS_CONSTANT).ln() - ln_t;
        for (j, (k, p)) in out.reverse.iter_mut().zip(&self.reverse).enumerate() {
            *k = match p {
                Some(p) => p.evaluate_log(ln_t, inv_t),
                None if self.reverse_from_thermo[j] => {
                    // ln Kc = -dG0/(R T) + dn ln(P0/(R T)) (see `ln_equilibrium_constants`);
                    // kr = kf / Kc in logarithms so that huge Kc do not overflow first.
                    let mut ln_kc = self.delta_moles[j] * ln_p0_over_rt;
                    for &(s, nu) in self.net.row(j) {
                        ln_kc -= nu * out.species_g_over_rt[s];
                    }
                    out.forward[j] * (-ln_kc).exp()
                }
                None => 0.0,
            };
        }
    }

    /// Overwrites `slopes` with the temperature derivatives of the rate constants `k`
    /// evaluated at `temperature_k` (K): `slopes.forward[j] = d kf_j / dT` and
    /// `slopes.reverse[j] = d kr_j / dT`, in the units of the rate constant per K. `k` must
    /// hold the rate constants at the same temperature (from
    /// [`Kinetics::evaluate_rate_constants`]); both must come from this mechanism.
    ///
    /// Arrhenius: d ln k / dT = (n + Ea/(R T)) / T. A reverse rate constant from
    /// thermochemistry, kr = kf / Kc, has d ln kr / dT = d ln kf / dT - d ln Kc / dT with
    /// d ln Kc / dT = (dH0/(R T) - dn) / T (van 't Hoff, Kc in concentration units).
    /// No allocation.
    pub fn evaluate_rate_constant_slopes(
        &self,
        temperature_k: f64,
        k: &RateConstants,
        slopes: &mut RateConstants,
    ) {
        let t = temperature_k;
        slopes.temperature_k = t;
        for (j, p) in self.forward.iter().enumerate() {
            slopes.forward[j] = k.forward[j] * p.log_slope(t);
        }
        for (state, f) in slopes.falloff.iter_mut().zip(&self.falloff) {
            let log_slope = self.forward[f.step].log_slope(t);
            *state = f.state(t, k.forward[f.step], log_slope).1;
        }
        for (dln_k, sets) in slopes.table_ln_k.iter_mut().zip(self.table_sets.rows()) {
            *dln_k = falloff::summed_sets(sets, t).1;
        }
        for (j, p) in self.reverse.iter().enumerate() {
            slopes.reverse[j] = match p {
                Some(p) => k.reverse[j] * p.log_slope(t),
                None if self.reverse_from_thermo[j] && k.reverse[j] != 0.0 => {
                    let mut dh_over_rt = 0.0;
                    for &(s, nu) in self.net.row(j) {
                        if let Some(Some(thermo)) = self.species_thermo.get(s) {
                            dh_over_rt += nu * thermo.h_over_rt(t);
                        }
                    }
                    let dln_kc = (dh_over_rt - self.delta_moles[j]) / t;
                    k.reverse[j] * (self.forward[j].log_slope(t) - dln_kc)
                }
                None => 0.0,
            };
        }
    }

    /// Writes `dw/dT` (mol/(m3 s K)) into `dw_dt` (length `n_species`): the temperature
    /// derivative of the net production rates at fixed concentrations `c` (mol/m3), given the
    /// rate constants `k` and their slopes from [`Kinetics::evaluate_rate_constant_slopes`].
    /// Third-body concentrations do not depend on temperature at fixed `c`; falloff factors
    /// do through k0/kinf and the broadening parameters, and pressure tables through both
    /// the tabulated rate constants and the pressure P = (sum c) R T. No allocation.
    pub fn production_rate_slopes(
        &self,
        k: &RateConstants,
        slopes: &RateConstants,
        c: &[f64],
        dw_dt: &mut [f64],
    ) {
        dw_dt.iter_mut().for_each(|x| *x = 0.0);
        let total = self.total_concentration(c);
        for j in 0..self.n_steps {
            let dq = self.rate_slope(k, slopes, j, c, total);
            if dq == 0.0 {
                continue;
            }
            for &(s, nu) in self.net.row(j) {
                dw_dt[s] += nu * dq;
            }
        }
    }

    /// `dq_j/dT` of step `j` at fixed concentrations (see [`Self::production_rate_slopes`]).
    #[inline]
    fn rate_slope(
        &self,
        k: &RateConstants,
        slopes: &RateConstants,
        j: usize,
        c: &[f64],
        total: f64,
    ) -> f64 {
        let (fwd, rev) = self.directional_rates(k, j, c);
        let mut dq = 0.0;
        if k.forward[j] != 0.0 {
            dq += fwd / k.forward[j] * slopes.forward[j];
        }
        if k.reverse[j] != 0.0 {
            dq -= rev / k.reverse[j] * slopes.reverse[j];
        }
        let (g, _, dg_dt) = self.factor_derivatives(k, Some(slopes), j, c, total);
        dq * g + dg_dt * (fwd - rev)
    }

    /// Writes `dq_j/dT` (mol/(m3 s K)) of every step into `out` (length `n_steps`): the
    /// temperature derivative of each step's net rate of progress at fixed concentrations
    /// `c` (mol/m3), given the rate constants `k` and their slopes from
    /// [`Kinetics::evaluate_rate_constant_slopes`] (the per-step terms of
    /// [`Kinetics::production_rate_slopes`]). No allocation.
    pub fn rates_of_progress_slopes(
        &self,
        k: &RateConstants,
        slopes: &RateConstants,
        c: &[f64],
        out: &mut [f64],
    ) {
        if c.len() < self.n_species {
            return;
        }
        let total = self.total_concentration(c);
        for (j, o) in out.iter_mut().enumerate().take(self.n_steps) {
            *o = self.rate_slope(k, slopes, j, c, total);
        }
    }

    /// The thermochemistry of each species in mechanism order (`None` where not given).
    pub fn species_thermo(&self) -> &[Option<Nasa7>] {
        &self.species_thermo
    }

    /// Natural logarithms of (Kp, Kc) of step `step` at `temperature_k` (K), or `None` when
    /// a species of the step lacks thermochemistry.
    ///
    /// ln Kp = -dG0/(R T) with dG0 = sum_i nu_i G0_i(T) at P0 = 1e5 Pa, and
    /// ln Kc = ln Kp + dn ln(P0/(R T)), dn = sum_i nu_i (Kc in (mol/m3)^dn).
    fn ln_equilibrium_constants(&self, step: usize, temperature_k: f64) -> Option<(f64, f64)> {
        let mut g_over_rt = 0.0;
        for &(s, nu) in self.net.row(step) {
            let thermo = self.species_thermo.get(s)?.as_ref()?;
            g_over_rt += nu * (thermo.h_over_rt(temperature_k) - thermo.s_over_r(temperature_k));
        }
        let ln_kp = -g_over_rt;
        let dn = self.delta_moles[step];
        let ln_kc = if dn != 0.0 {
            ln_kp + dn * (STANDARD_PRESSURE_PA / (GAS_CONSTANT * temperature_k)).ln()
        } else {
            ln_kp
        };
        Some((ln_kp, ln_kc))
    }

    /// Writes the equilibrium constants of every step at `temperature_k` (K) into `kp` and
    /// `kc` (each of length `n_steps`), without allocating:
    ///
    /// - `kp[j] = exp(-dG0_j / (R T))`, dimensionless: pressures in units of the standard
    ///   pressure P0 = 1e5 Pa, with dG0_j = sum_i nu_ij G0_i(T) (J/mol) from the species'
    ///   NASA 7-coefficient polynomials;
    /// - `kc[j] = kp[j] (P0 / (R T))^dn_j` in (mol/m3)^dn_j, dn_j = sum_i nu_ij.
    ///
    /// nu_ij are the net stoichiometric changes (products minus reactants); a third-body
    /// collider does not enter. Computed for every step whose species all have
    /// thermochemistry, irreversible ones included; NaN for the others.
    pub fn equilibrium_constants(&self, temperature_k: f64, kp: &mut [f64], kc: &mut [f64]) {
        for (j, (p, c)) in kp.iter_mut().zip(kc.iter_mut()).enumerate() {
            (*p, *c) = match self.ln_equilibrium_constants(j, temperature_k) {
                Some((ln_kp, ln_kc)) => (ln_kp.exp(), ln_kc.exp()),
                None => (f64::NAN, f64::NAN),
            };
        }
    }

    #[inline]
    fn total_concentration(&self, c: &[f64]) -> f64 {
        if self.needs_total {
            c.iter().sum()
        } else {
            0.0
        }
    }

    /// `[M] = default * total + sum corrections` of mixture collider `mixture`.
    #[inline(always)]
    fn mixture_concentration(
        &self,
        default_efficiency: f64,
        mixture: usize,
        c: &[f64],
        total: f64,
    ) -> f64 {
        let mut m = default_efficiency * total;
        for &(s, delta) in self.mixtures.row(mixture) {
            m += delta * c[s];
        }
        m
    }

    /// The factor g of step `step` (1, [M], or the pressure-dependent factor).
    #[inline]
    fn third_body_concentration(
        &self,
        k: &RateConstants,
        step: usize,
        c: &[f64],
        total: f64,
    ) -> f64 {
        match self.third_body[step] {
            ThirdBodyKind::None => 1.0,
            ThirdBodyKind::Species(s) => c[s],
            ThirdBodyKind::Mixture {
                default_efficiency,
                mixture,
            } => self.mixture_concentration(default_efficiency, mixture, c, total),
            _ => self.pressure_factor(k, step, c, total),
        }
    }

    /// The factor g of a pressure-dependent step, kept out of line so that the loops over
    /// plain steps stay small.
    #[inline(never)]
    fn pressure_factor(&self, k: &RateConstants, step: usize, c: &[f64], total: f64) -> f64 {
        self.factor_derivatives(k, None, step, c, total).0
    }

    /// The factor g of a pressure-dependent step and dg/d[M] (tables: dg/d(sum c)), out of
    /// line like [`Kinetics::pressure_factor`].
    #[inline(never)]
    fn pressure_factor_and_slope(
        &self,
        k: &RateConstants,
        step: usize,
        c: &[f64],
        total: f64,
    ) -> (f64, f64) {
        let (g, dg, _) = self.factor_derivatives(k, None, step, c, total);
        (g, dg)
    }

    /// The factor g of step `step`, `dg/d[M]` (for a pressure table: `dg/d(sum c)`), and
    /// `dg/dT` at fixed concentrations (0 unless `slopes` is given).
    fn factor_derivatives(
        &self,
        k: &RateConstants,
        slopes: Option<&RateConstants>,
        step: usize,
        c: &[f64],
        total: f64,
    ) -> (f64, f64, f64) {
        match self.third_body[step] {
            ThirdBodyKind::None => (1.0, 0.0, 0.0),
            ThirdBodyKind::Species(s) => (c[s], 1.0, 0.0),
            ThirdBodyKind::Mixture {
                default_efficiency,
                mixture,
            } => (
                self.mixture_concentration(default_efficiency, mixture, c, total),
                1.0,
                0.0,
            ),
            ThirdBodyKind::Falloff(i) => {
                let f = &self.falloff[i];
                let m = f.collider.concentration(&self.mixtures, c, total);
                f.factor(&k.falloff[i], slopes.map(|s| &s.falloff[i]), m)
            }
            ThirdBodyKind::Table(i) => {
                let t = k.temperature_k;
                let ln_p = (total * GAS_CONSTANT * t).ln();
                let points = self.tables.range(i);
                let (ln_k, s, dln_k_dt) = falloff::interpolate_table(
                    self.tables.row(i),
                    &k.table_ln_k[points.clone()],
                    slopes.map(|s| &s.table_ln_k[points]),
                    ln_p,
                );
                let g = ln_k.exp();
                // P = total R T: d ln P/d total = 1/total, d ln P/dT = 1/T.
                let dg_dtotal = if s == 0.0 { 0.0 } else { g * s / total };
                let dg_dt = match slopes {
                    Some(_) => g * (dln_k_dt + s / t),
                    None => 0.0,
                };
                (g, dg_dtotal, dg_dt)
            }
        }
    }

    /// Writes the effective forward rate constant of every step into `out` (length
    /// `n_steps`) at concentrations `c` (mol/m3): the coefficient of the forward power
    /// product, `q_forward = out[j] prod_i c_i^a_ij`. For a third-body step it includes
    /// `[M]`; for a falloff step it is kinf Pr/(1+Pr) F, for a chemically activated step
    /// k0 F/(1+Pr), for a pressure table the interpolated value at P = (sum c) R T. Units
    /// (mol/m3)^(1-m)/s with m the sum of the forward orders. No allocation.
    pub fn effective_forward_rate_constants(&self, k: &RateConstants, c: &[f64], out: &mut [f64]) {
        let total = self.total_concentration(c);
        for (j, o) in out.iter_mut().enumerate().take(self.n_steps) {
            *o = k.forward[j] * self.third_body_concentration(k, j, c, total);
        }
    }

    /// Forward and reverse rates without the third-body factor, mol/(m3 s) per M.
    #[inline(always)]
    fn directional_rates(&self, k: &RateConstants, step: usize, c: &[f64]) -> (f64, f64) {
        let mut fwd = k.forward[step];
        for t in self.forward_orders.row(step) {
            fwd *= t.power(c[t.species]);
        }
        let mut rev = k.reverse[step];
        if rev != 0.0 {
            for t in self.reverse_orders.row(step) {
                rev *= t.power(c[t.species]);
            }
        }
        (fwd, rev)
    }

    /// Checks the arguments of an allocation-free call (constant time): `k` must have this
    /// mechanism's shape (as made by [`Kinetics::rate_constants`] of this mechanism or a copy
    /// of it) and no buffer may be shorter than the call needs (longer inputs are allowed,
    /// their first entries are used).
    ///
    /// # Panics
    /// With a message naming the call, the argument and the length expected: a
    /// programming error, not a data error, like a slice copy of the wrong length.
    #[inline]
    fn check_call(&self, call: &str, k: &RateConstants, buffers: &[(&str, usize, usize)]) {
        if k.forward.len() != self.n_steps
            || k.reverse.len() != self.n_steps
            || k.falloff.len() != self.falloff.len()
            || k.table_ln_k.len() != self.table_sets.len()
        {
            panic!(
                "Kinetics::{call}: the rate constants were made for another mechanism ({} steps; this one has {})",
                k.forward.len(),
                self.n_steps
            );
        }
        for &(name, len, needed) in buffers {
            if len < needed {
                panic!(
                    "Kinetics::{call}: `{name}` has {len} entries, at least {needed} are needed"
                );
            }
        }
    }

    /// Writes the rate of progress of every step (mol/(m3 s)) into `q` (length `n_steps`)
    /// for concentrations `c` (mol/m3, length `n_species`).
    ///
    /// # Panics
    /// When a buffer is shorter than stated or `k` was made for a mechanism of another shape
    /// (a constant-time check; the message names the argument and the length needed).
    pub fn rates_of_progress(&self, k: &RateConstants, c: &[f64], q: &mut [f64]) {
        self.check_call(
            "rates_of_progress",
            k,
            &[("c", c.len(), self.n_species), ("q", q.len(), self.n_steps)],
        );
        let total = self.total_concentration(c);
        for (j, qj) in q.iter_mut().enumerate().take(self.n_steps) {
            let (fwd, rev) = self.directional_rates(k, j, c);
            *qj = self.third_body_concentration(k, j, c, total) * (fwd - rev);
        }
    }

    /// The net rate of progress (forward minus reverse, third body and pressure factor
    /// included) of step `step` alone, mol/(m3 s), at rate constants `k` and concentrations
    /// `c` (mol/m3): the entry `step` of [`rates_of_progress`](Self::rates_of_progress),
    /// without allocating. NaN when `step` is out of range or `c` is shorter than
    /// `n_species`.
    pub fn rate_of_progress(&self, k: &RateConstants, c: &[f64], step: usize) -> f64 {
        if step >= self.n_steps || c.len() < self.n_species {
            return f64::NAN;
        }
        let total = self.total_concentration(c);
        let (fwd, rev) = self.directional_rates(k, step, c);
        self.third_body_concentration(k, step, c, total) * (fwd - rev)
    }

    /// The terms of species `species`' net production rate at rate constants `k` and
    /// concentrations `c` (mol/m3): `(step, nu q)` for every step whose net coefficient `nu`
    /// for the species is not zero, in step order, with `q` the step's rate of progress;
    /// mol/(m3 s). They add up to [`production_rates`](Self::production_rates)`[species]`.
    /// Allocates (meant for diagnosis, e.g. naming the step that drives a failed
    /// integration); empty for an index out of range.
    pub fn production_terms(
        &self,
        k: &RateConstants,
        c: &[f64],
        species: usize,
    ) -> Vec<(usize, f64)> {
        if species >= self.n_species || c.len() < self.n_species {
            return Vec::new();
        }
        let mut q = vec![0.0; self.n_steps];
        self.rates_of_progress(k, c, &mut q);
        (0..self.n_steps)
            .filter_map(|j| {
                self.net
                    .row(j)
                    .iter()
                    .find(|&&(s, _)| s == species)
                    .map(|&(_, nu)| (j, nu * q[j]))
            })
            .collect()
    }

    /// Writes the net production rate of every species (mol/(m3 s)) into `w` (length
    /// `n_species`) for concentrations `c` (mol/m3).
    ///
    /// Each `w_i` is summed over its steps in plain floating point: its rounding error is
    /// about machine epsilon times the largest term, not times `|w_i|`. Integrators should
    /// prefer [`production_rates_compensated`](Self::production_rates_compensated), whose
    /// near-exact sums keep linear invariants (element totals, moieties) from drifting when
    /// fast opposing steps nearly cancel.
    ///
    /// # Panics
    /// When a buffer is shorter than stated or `k` was made for a mechanism of another shape
    /// (a constant-time check; the message names the argument and the length needed).
    pub fn production_rates(&self, k: &RateConstants, c: &[f64], w: &mut [f64]) {
        self.check_call(
            "production_rates",
            k,
            &[
                ("c", c.len(), self.n_species),
                ("w", w.len(), self.n_species),
            ],
        );
        w.iter_mut().for_each(|x| *x = 0.0);
        self.accumulate_production(k, c, |s, x| w[s] += x);
    }

    /// [`production_rates`](Self::production_rates) with compensated (Neumaier) summation:
    /// each `w_i` (mol/(m3 s)) is accurate to about machine epsilon times `|w_i|` plus a
    /// second-order term, instead of epsilon times the largest step contribution. `carry` is
    /// scratch of length `n_species` (overwritten). No allocation.
    ///
    /// Why it matters: a linear invariant `l . c` (an element total, a moiety) has
    /// `l . w = 0` exactly, because every step contributes `q_j` times its stoichiometric
    /// column and `l` annihilates every column. In floating point the residual of `l . w` is
    /// the rounding of the sums; a BDF step multiplies it by the step size `h`. With fast
    /// opposing steps (a fast equilibrium whose terms are 10^5 times the net rate) plain sums
    /// made the invariant of the E5 test problem (Enright, Hull & Lindberg 1975) drift by
    /// 3e-21 mol/m3 over 10^5 s, which swamped the solution's late decay. Neumaier's
    /// summation (A. Neumaier, Z. Angew. Math. Mech. 54, 39-51, 1974) removes that drift.
    ///
    /// # Panics
    /// When a buffer is shorter than stated or `k` was made for a mechanism of another shape
    /// (a constant-time check; the message names the argument and the length needed).
    pub fn production_rates_compensated(
        &self,
        k: &RateConstants,
        c: &[f64],
        w: &mut [f64],
        carry: &mut [f64],
    ) {
        self.check_call(
            "production_rates_compensated",
            k,
            &[
                ("c", c.len(), self.n_species),
                ("w", w.len(), self.n_species),
                ("carry", carry.len(), self.n_species),
            ],
        );
        w.iter_mut().for_each(|x| *x = 0.0);
        carry.iter_mut().for_each(|x| *x = 0.0);
        self.accumulate_production(k, c, |s, x| {
            // The rounding error of `sum + x`, exactly, by Knuth's branch-free TwoSum (The Art
            // of Computer Programming, vol. 2, section 4.2.2): the same value as Neumaier's
            // branch on |sum| >= |x| gives, without a branch the processor mispredicts.
            let sum = w[s];
            let t = sum + x;
            let z = t - sum;
            carry[s] += (sum - (t - z)) + (x - z);
            w[s] = t;
        });
        for (w, carry) in w.iter_mut().zip(carry.iter()) {
            *w += carry;
        }
    }

    /// The net production rates `w` (mol/(m3 s), length `n_species`) with compensated sums,
    /// the same numbers as [`production_rates_compensated`](Self::production_rates_compensated)
    /// gives, and the rate of progress of every step `q` (mol/(m3 s), length `n_steps`), at
    /// rate constants `k` and concentrations `c` (mol/m3). No allocation.
    ///
    /// The faster form for integrators: the rates of progress are computed in one pass over
    /// the steps, then each species' sum is gathered from its own steps with the running sum
    /// and its rounding error (Neumaier's compensation) held in registers, instead of being
    /// scattered into two arrays term by term.
    ///
    /// # Panics
    /// When a buffer is shorter than stated or `k` was made for a mechanism of another shape
    /// (a constant-time check; the message names the argument and the length needed).
    pub fn production_rates_and_progress(
        &self,
        k: &RateConstants,
        c: &[f64],
        w: &mut [f64],
        q: &mut [f64],
    ) {
        self.check_call(
            "production_rates_and_progress",
            k,
            &[
                ("c", c.len(), self.n_species),
                ("w", w.len(), self.n_species),
                ("q", q.len(), self.n_steps),
            ],
        );
        self.for_each_progress(k, c, |j, qj| q[j] = qj);
        for (wi, terms) in w.iter_mut().zip(self.species_terms.rows()) {
            let mut sum = 0.0;
            let mut carry = 0.0;
            for &(j, nu) in terms {
                let qj = q[j];
                if qj != 0.0 {
                    let x = nu * qj;
                    // Knuth's branch-free TwoSum: the exact rounding error of `sum + x`.
                    let t = sum + x;
                    let z = t - sum;
                    carry += (sum - (t - z)) + (x - z);
                    sum = t;
                }
            }
            *wi = sum + carry;
        }
    }

    /// Calls `add(species, nu * q)` for every species term of every step with a nonzero rate
    /// of progress `q`.
    #[inline(always)]
    fn accumulate_production(&self, k: &RateConstants, c: &[f64], mut add: impl FnMut(usize, f64)) {
        self.for_each_progress(k, c, |j, q| {
            if q != 0.0 {
                for &(s, nu) in self.net.row(j) {
                    add(s, nu * q);
                }
            }
        });
    }

    /// Calls `visit(step, q)` with every step's rate of progress `q` (mol/(m3 s)): the plain
    /// and third-body steps first, by index, in a loop without calls; then the
    /// pressure-dependent steps in the order of `pressure_steps` (the order the species' term
    /// lists `species_terms` follow).
    #[inline(always)]
    fn for_each_progress(&self, k: &RateConstants, c: &[f64], mut visit: impl FnMut(usize, f64)) {
        let total = self.total_concentration(c);
        for j in 0..self.n_steps {
            let m = match self.third_body[j] {
                ThirdBodyKind::None => 1.0,
                ThirdBodyKind::Species(s) => c[s],
                ThirdBodyKind::Mixture {
                    default_efficiency,
                    mixture,
                } => self.mixture_concentration(default_efficiency, mixture, c, total),
                ThirdBodyKind::Falloff(_) | ThirdBodyKind::Table(_) => continue,
            };
            let (fwd, rev) = self.directional_rates(k, j, c);
            visit(j, m * (fwd - rev));
        }
        for &j in &self.pressure_steps {
            let (fwd, rev) = self.directional_rates(k, j, c);
            visit(j, self.pressure_factor(k, j, c, total) * (fwd - rev));
        }
    }

    /// Calls `sink(step, slot, col, dq)` for every nonzero partial derivative
    /// `dq_step/dc_col` of a step's net rate of progress (`slot`: the column's position in
    /// the step's column list), third-body and pressure factors included.
    #[inline]
    fn for_each_rate_term(
        &self,
        k: &RateConstants,
        c: &[f64],
        mut sink: impl FnMut(usize, usize, usize, f64),
    ) {
        let total = self.total_concentration(c);
        for j in 0..self.n_steps {
            let (m, dm) = match self.third_body[j] {
                ThirdBodyKind::None => (1.0, 0.0),
                ThirdBodyKind::Species(s) => (c[s], 1.0),
                ThirdBodyKind::Mixture {
                    default_efficiency,
                    mixture,
                } => (
                    self.mixture_concentration(default_efficiency, mixture, c, total),
                    1.0,
                ),
                _ => self.pressure_factor_and_slope(k, j, c, total),
            };
            // dg/d[M] times the rate without the factor: the per-unit-efficiency term.
            let dg_term = if dm != 0.0 {
                let (fwd_all, rev_all) = self.directional_rates(k, j, c);
                dm * (fwd_all - rev_all)
            } else {
                0.0
            };
            let fwd_terms = self.forward_orders.row(j);
            let rev_terms = self.reverse_orders.row(j);
            for (slot, &(col, efficiency)) in self.columns.row(j).iter().enumerate() {
                // d(kf prod c^a)/dc_col by the product rule (species appear once per side).
                let mut dq = 0.0;
                if let Some(pos) = fwd_terms.iter().position(|t| t.species == col) {
                    let mut d = k.forward[j] * fwd_terms[pos].derivative(c[col]);
                    for (i, t) in fwd_terms.iter().enumerate() {
                        if i != pos {
                            d *= t.power(c[t.species]);
                        }
                    }
                    dq += d;
                }
                if k.reverse[j] != 0.0 {
                    if let Some(pos) = rev_terms.iter().position(|t| t.species == col) {
                        let mut d = k.reverse[j] * rev_terms[pos].derivative(c[col]);
                        for (i, t) in rev_terms.iter().enumerate() {
                            if i != pos {
                                d *= t.power(c[t.species]);
                            }
                        }
                        dq -= d;
                    }
                }
                dq *= m;
                // d g/d c_col = dg/d[M] * d[M]/dc_col (efficiency).
                dq += efficiency * dg_term;
                if dq != 0.0 {
                    sink(j, slot, col, dq);
                }
            }
        }
    }

    /// Calls `sink(position, row, col, value)` for every contribution to `dw/dc`.
    #[inline]
    fn for_each_jacobian_term(
        &self,
        k: &RateConstants,
        c: &[f64],
        mut sink: impl FnMut(usize, usize, usize, f64),
    ) {
        self.for_each_rate_term(k, c, |j, slot, col, dq| {
            let rows = self.net.row(j);
            let entries = self.entries.row(j);
            for (r, &(row, nu)) in rows.iter().enumerate() {
                sink(entries[slot * rows.len() + r], row, col, nu * dq);
            }
        });
    }

    /// Calls `sink(step, species, dq_dc)` for every nonzero partial derivative of a step's
    /// net rate of progress `q_step` (mol/(m3 s)) with respect to a concentration `c_species`
    /// (mol/m3), at rate constants `k` and concentrations `c`: kinetic orders, third-body
    /// efficiencies and falloff factors included (units (mol/(m3 s))/(mol/m3)). Steps in
    /// order; a species at most once per step. No allocation.
    pub fn for_each_rate_derivative(
        &self,
        k: &RateConstants,
        c: &[f64],
        mut sink: impl FnMut(usize, usize, f64),
    ) {
        if c.len() < self.n_species {
            return;
        }
        self.for_each_rate_term(k, c, |j, _, col, dq| sink(j, col, dq));
    }

    /// Overwrites `jac` (column-major, `n_species * n_species`) with the analytic Jacobian:
    /// `jac[col * n + row] = d w_row / d c_col` in 1/s (for first-order terms; in general
    /// (mol/(m3 s)) / (mol/m3)). Third-body terms are included.
    ///
    /// # Panics
    /// When a buffer is shorter than stated or `k` was made for a mechanism of another shape
    /// (a constant-time check; the message names the argument and the length needed).
    pub fn jacobian_dense(&self, k: &RateConstants, c: &[f64], jac: &mut [f64]) {
        self.check_call(
            "jacobian_dense",
            k,
            &[
                ("c", c.len(), self.n_species),
                ("jac", jac.len(), self.n_species * self.n_species),
            ],
        );
        let n = self.n_species;
        jac.iter_mut().for_each(|x| *x = 0.0);
        self.for_each_jacobian_term(k, c, |_, row, col, v| jac[col * n + row] += v);
    }

    /// The fixed sparsity pattern of the Jacobian (compressed sparse column, diagonal
    /// included), computed once at compile time from the stoichiometry and third bodies.
    pub fn jacobian_pattern(&self) -> &JacobianPattern {
        &self.pattern
    }

    /// Overwrites `values` (length `jacobian_pattern().nnz()`) with the Jacobian entries in the
    /// order of [`Kinetics::jacobian_pattern`]. Same units and terms as
    /// [`Kinetics::jacobian_dense`].
    ///
    /// # Panics
    /// When a buffer is shorter than stated or `k` was made for a mechanism of another shape
    /// (a constant-time check; the message names the argument and the length needed).
    pub fn jacobian_sparse(&self, k: &RateConstants, c: &[f64], values: &mut [f64]) {
        self.check_call(
            "jacobian_sparse",
            k,
            &[
                ("c", c.len(), self.n_species),
                ("values", values.len(), self.pattern.nnz()),
            ],
        );
        values.iter_mut().for_each(|x| *x = 0.0);
        self.for_each_jacobian_term(k, c, |pos, _, _, v| values[pos] += v);
    }
}
