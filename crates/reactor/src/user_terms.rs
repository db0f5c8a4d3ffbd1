//! Terms of the user's own inside the integrator: [`UserTerms`].
//!
//! A unit operation that adds a source to the species balances (a feed, an outflow, a
//! transfer to another phase) or heat to the energy balance (a jacket, a heater, a heat loss)
//! writes them as a [`UserTerms`] and attaches it to a [`BatchSystem`](crate::BatchSystem)
//! ([`set_user_terms`](crate::BatchSystem::set_user_terms)). The BDF solver then sees them in
//! every right-hand side and every Jacobian, as it sees the chemistry: no operator
//! splitting, no splitting error, and the step size follows the coupled problem.
//!
//! With the state `y = (c, T)` (concentrations in mol/m3, then the temperature in K when the
//! model solves the energy balance) and the model's own right-hand side `f(t, y)`:
//!
//! - species rows: `dc_i/dt = f_i + S_i(t, c, T)`, `S_i` in mol/(m3 s);
//! - temperature row (energy-solving models only): `dT/dt = f_T + Q(t, c, T) / C(c, T)`, `Q`
//!   in W/m3 (heat into the reactor per unit volume), `C` the mixture heat capacity per
//!   volume the model's energy balance uses (J/(m3 K)): `sum_i c_i cv_i(T)` in a closed
//!   constant-volume reactor, `sum_i c_i cp_i(T)` in the open ones, the given `rho cp` of a
//!   [`LiquidPhase`](crate::LiquidPhase).
//!
//! The Jacobian contributions are the partial derivatives of `S` and `Q` themselves; the
//! integrator adds them and divides the heat row by `C` (adding the `-Q/C^2 dC/dy` terms).
//! The rows and columns of the contributions are state indices: species `0..n`, and `n`
//! (the number of species) for the temperature column and the heat row. The entries are
//! declared once, when the terms are attached
//! ([`jacobian_entries`](UserTerms::jacobian_entries)): the sparse linear algebra's fixed
//! pattern includes them.
//!
//! Models at constant pressure are refused: their expansion term would couple every user
//! source into every species row, which a user term cannot see. A [`SemiBatch`](crate::SemiBatch)
//! volume state is not visible to user terms. Plug flows run whole and take no user terms.

use std::any::Any;

use stoik_kinetics::JacobianPattern;

/// Sources supplied by the user inside the integrator (see the module documentation for the
/// equations and units). Implementations must not allocate in
/// [`add_rates`](Self::add_rates) and [`add_jacobian`](Self::add_jacobian) if the session is
/// to stay allocation-free; both are called from the solver's right-hand side and Jacobian
/// evaluations, and must not panic.
///
/// `Send` so that an [`OwnedIntegrator`](crate::OwnedIntegrator) holding them can move to a
/// worker thread.
///
/// A closed batch with A -> B (k = 2 1/s) made a stirred tank by a user throughflow
/// `S_i = (c_in,i - c_i) / tau`; after many residence times the conversion is the
/// first-order design equation's `k tau / (1 + k tau)` (O. Levenspiel, *Chemical Reaction
/// Engineering*, 3rd ed., ch. 5):
///
/// ```
/// use stoik_kinetics::Kinetics;
/// use stoik_mechanism::parse_mechanism;
/// use stoik_reactor::{BatchSystem, IntegrationOptions, UserJacobian, UserTerms};
///
/// struct Throughflow {
///     rate_per_s: f64,
///     inlet_mol_per_m3: Vec<f64>,
/// }
///
/// impl UserTerms for Throughflow {
///     fn jacobian_entries(&self, n_species: usize) -> Vec<(usize, usize)> {
///         (0..n_species).map(|i| (i, i)).collect()
///     }
///     fn add_rates(&mut self, _t: f64, c: &[f64], _t_k: f64, rates: &mut [f64], _q: &mut f64) {
///         for ((r, c), c_in) in rates.iter_mut().zip(c).zip(&self.inlet_mol_per_m3) {
///             *r += self.rate_per_s * (c_in - c);
///         }
///     }
///     fn add_jacobian(&mut self, _t: f64, c: &[f64], _t_k: f64, jac: &mut UserJacobian<'_>) {
///         for i in 0..c.len() {
///             jac.add(i, i, -self.rate_per_s);
///         }
///     }
/// }
///
/// let text = "stoik_mechanism = 1\n[units]\nactivation_energy = \"K\"\n\
///     [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n\
///     [[step]]\nequation = \"A -> B\"\nforward = { prefactor = 2.0 }\n";
/// let kinetics = Kinetics::compile(&parse_mechanism(text, "a.toml").unwrap().mechanism).unwrap();
/// let mut system = BatchSystem::new(&kinetics, 300.0, &IntegrationOptions::new(2)).unwrap();
/// let tau = 0.5;
/// system
///     .set_user_terms(Throughflow { rate_per_s: 1.0 / tau, inlet_mol_per_m3: vec![1.0, 0.0] })
///     .unwrap();
/// let p = system.integrate(&[0.0, 0.0], &[0.0, 20.0]).unwrap();
/// let conversion = 1.0 - p.concentrations_mol_per_m3[1][0] / 1.0;
/// assert!((conversion - 2.0 * tau / (1.0 + 2.0 * tau)).abs() < 1e-5);
/// ```
pub trait UserTerms: Send + 'static {
    /// The Jacobian entries the terms may write, as `(row, column)` state indices (species
    /// `0..n_species`, `n_species` the heat row and the temperature column of an
    /// energy-solving model); duplicates are allowed. Called once when the terms are
    /// attached (may allocate). Entries outside it are dropped by
    /// [`UserJacobian::add`].
    fn jacobian_entries(&self, n_species: usize) -> Vec<(usize, usize)>;

    /// Adds the sources at time `t_s` (s), concentrations `c` (mol/m3) and temperature
    /// `temperature_k` (K): `S_i` to `species_rates[i]` (mol/(m3 s), one per species) and
    /// the heat into the reactor per unit volume `Q` to `heat_w_per_m3` (W/m3; it starts at
    /// 0 and is ignored unless the model solves the energy balance).
    fn add_rates(
        &mut self,
        t_s: f64,
        c: &[f64],
        temperature_k: f64,
        species_rates: &mut [f64],
        heat_w_per_m3: &mut f64,
    );

    /// Adds the partial derivatives of `S` and `Q` at `(t_s, c, temperature_k)` through
    /// `jacobian`: `dS_i/dc_k` (1/s) at `(i, k)`, `dS_i/dT` (mol/(m3 s K)) at `(i, n)`,
    /// `dQ/dc_k` (W/mol) at `(n, k)` and `dQ/dT` (W/(m3 K)) at `(n, n)`, with `n` the number
    /// of species.
    fn add_jacobian(
        &mut self,
        t_s: f64,
        c: &[f64],
        temperature_k: f64,
        jacobian: &mut UserJacobian<'_>,
    );
}

/// Where [`UserTerms::add_jacobian`] writes: the solver's Jacobian values, in the order of
/// its pattern (dense or sparse alike).
pub struct UserJacobian<'a> {
    pub(crate) values: &'a mut [f64],
    pub(crate) pattern: &'a JacobianPattern,
    pub(crate) n_species: usize,
    /// `1 / C` (m3 K/J) of an energy-solving model; `None` without the energy balance.
    pub(crate) heat_scale: Option<f64>,
}

impl UserJacobian<'_> {
    /// Number of species; also the index of the heat row and the temperature column.
    pub fn n_species(&self) -> usize {
        self.n_species
    }

    /// Adds `value` to the derivative of row `row`'s source with respect to state `column`
    /// (units as in [`UserTerms::add_jacobian`]). Returns `false` and drops the value when
    /// the entry is outside the declared pattern, or names the temperature in a model that
    /// does not solve the energy balance.
    pub fn add(&mut self, row: usize, column: usize, value: f64) -> bool {
        let n = self.n_species;
        let energy = self.heat_scale.is_some();
        if row > n || column > n || (!energy && (row == n || column == n)) {
            return false;
        }
        let scale = if row == n {
            self.heat_scale.unwrap_or(0.0)
        } else {
            1.0
        };
        match self.pattern.position(row, column) {
            Some(p) => {
                self.values[p] += scale * value;
                true
            }
            None => false,
        }
    }
}

/// The user's terms behind an object-safe face that can also give them back by type.
pub(crate) trait ErasedTerms: Send {
    fn terms(&mut self) -> &mut dyn UserTerms;
    fn any_mut(&mut self) -> &mut dyn Any;
    fn entries(&self, n_species: usize) -> Vec<(usize, usize)>;
}

pub(crate) struct Held<T>(pub(crate) T);

impl<T: UserTerms> ErasedTerms for Held<T> {
    fn terms(&mut self) -> &mut dyn UserTerms {
        &mut self.0
    }
    fn any_mut(&mut self) -> &mut dyn Any {
        &mut self.0
    }
    fn entries(&self, n_species: usize) -> Vec<(usize, usize)> {
        self.0.jacobian_entries(n_species)
    }
}

#[cfg(test)]
mod tests {
    use diffsol::{FaerSparseMat, NalgebraMat};
    use stoik_kinetics::Kinetics;

    use super::*;
    use crate::equations::{Backend, BatchEquations};
    use crate::model::{
        energy_thermo, Constraint, Energy, HeatExchange, ReactorModel, StirredFlow,
        TemperatureHistory,
    };

    fn hydrogen() -> Kinetics {
        let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
        let file = stoik_mechanism::load_mechanism(&path).unwrap_or_else(|e| panic!("{e}"));
        Kinetics::compile(&file.mechanism).unwrap_or_else(|e| panic!("{e}"))
    }

    /// Nonlinear user terms coupling species the mechanism does not couple, depending on the
    /// temperature, with a heat term depending on the concentrations and the temperature.
    struct Coupling {
        energy: bool,
    }

    const A: f64 = 3e3;
    const B: f64 = 2e3;
    const U: f64 = 4e5;
    const H: f64 = 2e6;

    impl UserTerms for Coupling {
        fn jacobian_entries(&self, n: usize) -> Vec<(usize, usize)> {
            let mut entries = vec![(0, 1), (2, 0), (2, 3)];
            if self.energy {
                entries.extend([(0, n), (n, n), (n, 4), (n, 0)]);
            }
            entries
        }
        fn add_rates(&mut self, _t: f64, c: &[f64], temp: f64, s: &mut [f64], q: &mut f64) {
            s[0] += A * c[1] * (-B / temp).exp();
            s[2] -= A * c[0] * c[3];
            *q += U * (900.0 - temp) + H * c[4] * c[0];
        }
        fn add_jacobian(&mut self, _t: f64, c: &[f64], temp: f64, jac: &mut UserJacobian<'_>) {
            let n = jac.n_species();
            let e = (-B / temp).exp();
            jac.add(0, 1, A * e);
            jac.add(0, n, A * c[1] * e * B / (temp * temp));
            jac.add(2, 0, -A * c[3]);
            jac.add(2, 3, -A * c[0]);
            jac.add(n, n, -U);
            jac.add(n, 4, H * c[0]);
            jac.add(n, 0, H * c[4]);
        }
    }

    fn models(n: usize) -> Vec<ReactorModel> {
        let coolant = TemperatureHistory::new(vec![0.0], vec![800.0]).unwrap();
        let exchange = HeatExchange::new(5e4, coolant).unwrap();
        let inlet: Vec<f64> = (0..n).map(|i| 0.02 + 0.3 * ((i * 3) % 5) as f64).collect();
        let flow = StirredFlow::new(2e-4, inlet, 700.0).unwrap();
        let mut out = Vec::new();
        for energy in [
            Energy::Isothermal,
            Energy::Adiabatic,
            Energy::HeatExchange(exchange),
        ] {
            for flow in [None, Some(flow.clone())] {
                out.push(ReactorModel {
                    constraint: Constraint::ConstantVolume,
                    energy: energy.clone(),
                    flow,
                    ..Default::default()
                });
            }
        }
        out
    }

    /// The worst relative difference between the combined analytic Jacobian (model plus
    /// user terms) and five-point central differences of the combined right-hand side.
    fn worst_error<M: Backend>(kinetics: &Kinetics, model: &ReactorModel) -> f64 {
        let n = kinetics.n_species();
        let m = model.n_states(n);
        let thermo = energy_thermo(kinetics, model).unwrap();
        let mut eq = BatchEquations::<M>::new(
            kinetics.clone(),
            model.clone(),
            thermo,
            1500.0,
            vec![0.0; m],
        )
        .unwrap();
        let energy = model.solves_energy();
        eq.set_user_terms(Some(Box::new(Held(Coupling { energy }))))
            .unwrap();
        let pattern = eq.state_pattern().clone();
        // The declared entries are in the pattern the solver sees.
        for (r, c) in (Coupling { energy }).jacobian_entries(n) {
            assert!(
                pattern.position(r, c).is_some(),
                "({r}, {c}) not in the pattern"
            );
        }
        let mut y: Vec<f64> = (0..n)
            .map(|i| 0.05 + 0.9 * ((i * 7 + 3) % 11) as f64 / 11.0)
            .collect();
        if model.solves_energy() {
            y.push(1500.0);
        }
        let t_s = 1e-3;
        let mut values = vec![0.0; pattern.nnz()];
        eq.jacobian_values(t_s, &y, &mut values);
        let f = |y: &[f64]| {
            let mut out = vec![0.0; m];
            eq.state_derivative(t_s, y, &mut out);
            out
        };
        let largest = values.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        let mut worst: f64 = 0.0;
        for col in 0..m {
            // Five-point central difference (Abramowitz & Stegun 25.3.6), as the model's own
            // Jacobian test in `model`.
            let h = 1e-4 * y[col].abs().max(1e-3);
            let at = |offset: f64| {
                let mut shifted = y.clone();
                shifted[col] += offset;
                f(&shifted)
            };
            let (f2p, f1p, f1m, f2m) = (at(2.0 * h), at(h), at(-h), at(-2.0 * h));
            for row in 0..m {
                let fd = (8.0 * (f1p[row] - f1m[row]) - (f2p[row] - f2m[row])) / (12.0 * h);
                let analytic = pattern.position(row, col).map_or(0.0, |p| values[p]);
                let scale = fd.abs().max(analytic.abs()).max(1e-9 * largest);
                worst = worst.max((fd - analytic).abs() / scale);
            }
        }
        worst
    }

    /// The combined Jacobian (the model's analytic one plus the user's contributions, the
    /// heat row divided by the mixture heat capacity with its state derivatives) against
    /// central differences of the combined right-hand side, to 1e-6 relative, on the dense
    /// and the sparse backend, for closed and stirred, isothermal, adiabatic and cooled
    /// models.
    #[test]
    fn combined_jacobian_matches_central_differences() {
        let kinetics = hydrogen();
        for model in models(kinetics.n_species()) {
            let dense = worst_error::<NalgebraMat<f64>>(&kinetics, &model);
            let sparse = worst_error::<FaerSparseMat<f64>>(&kinetics, &model);
            eprintln!(
                "flow {} {:?}: worst relative error dense {dense:.1e}, sparse {sparse:.1e}",
                model.flow.is_some(),
                model.energy
            );
            assert!(dense < 1e-6, "{model:?}: dense {dense:e}");
            assert!(sparse < 1e-6, "{model:?}: sparse {sparse:e}");
        }
    }

    /// `UserJacobian::add` writes declared entries (the heat row scaled by 1/C) and drops
    /// the others, returning whether it wrote.
    #[test]
    fn sink_writes_declared_entries_only() {
        // States 0, 1 and the temperature 2; pattern: the diagonal plus (0, 1) and (2, 0).
        let pattern = JacobianPattern::from_entries(3, vec![(0, 1), (2, 0)]).unwrap();
        let mut values = vec![0.0; pattern.nnz()];
        let mut sink = UserJacobian {
            values: &mut values,
            pattern: &pattern,
            n_species: 2,
            heat_scale: Some(0.5),
        };
        assert!(sink.add(0, 1, 3.0));
        assert!(sink.add(2, 0, 4.0));
        assert!(sink.add(2, 2, -6.0));
        assert!(!sink.add(1, 0, 1.0), "not declared");
        assert!(!sink.add(3, 0, 1.0), "outside the state");
        let at = |r: usize, c: usize| values[pattern.position(r, c).unwrap()];
        assert_eq!(at(0, 1), 3.0);
        assert_eq!(at(2, 0), 2.0);
        assert_eq!(at(2, 2), -3.0);
        assert_eq!(values.iter().filter(|v| **v != 0.0).count(), 3);
        // Without the energy balance the temperature index is refused.
        let mut values = vec![0.0; pattern.nnz()];
        let mut sink = UserJacobian {
            values: &mut values,
            pattern: &pattern,
            n_species: 2,
            heat_scale: None,
        };
        assert!(!sink.add(2, 2, 1.0));
        assert!(!sink.add(0, 2, 1.0));
        assert!(sink.add(0, 1, 1.0));
    }

    /// Entries outside the state are refused, all named at once; the heat row without an
    /// energy balance too.
    #[test]
    fn entries_outside_the_state_are_refused_together() {
        let kinetics = hydrogen();
        let n = kinetics.n_species();
        let model = ReactorModel::default();
        let mut eq = BatchEquations::<NalgebraMat<f64>>::new(
            kinetics,
            model,
            Vec::new(),
            1000.0,
            vec![0.0; n],
        )
        .unwrap();
        let err = eq
            .set_user_terms(Some(Box::new(Held(Coupling { energy: true }))))
            .unwrap_err()
            .to_string();
        assert!(err.contains(&format!("(0, {n})")), "{err}");
        assert!(err.contains(&format!("({n}, {n})")), "{err}");
        assert!(err.contains("does not solve the energy balance"), "{err}");
        assert!(!eq.has_user_terms());
    }
}
