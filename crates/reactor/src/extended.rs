//! The equations of semi-batch and liquid-phase models (see the `semibatch` module for the
//! equations) on flat slices, and their analytic Jacobian (dense, column-major in the
//! state order: concentrations, then the temperature when solved, then the volume when
//! tracked).
//!
//! With `S` the heat source per volume (W/m3), `K` the heat capacity per volume
//! (J/(m3 K)) and `D` the dilution rate (1/s): `dT/dt = S / K`, `dc_i/dt = w_i + phi_i -
//! c_i D`, `dV/dt = q` (constant density) or `V D` (constant pressure). The Jacobian is
//! written from the partial derivatives of `S`, `K` and `D` with respect to `c`, `T` and
//! `V`: `d(dT/dt)/dy = (dS/dy - (dT/dt) dK/dy) / K`, and at constant pressure
//! `dD/dy = (sum_i dw_i/dy + dPhi/dy) / C - (W + Phi) dC/dy / C^2 + d(dT/dt)/dy / T -
//! (dT/dt) dT/dy / T^2`.
//!
//! A liquid-phase stirred tank (a [`crate::StirredFlow`] with the liquid description, at
//! constant volume) adds its feed and outflow, `(c_in,i - c_i) / tau` to each species and
//! `rho cp (T_in - T) / tau` to `S`: the Jacobian gains `-1/tau` on the species diagonal and
//! in `d(dT/dt)/dT`. A jacket's U A may follow a history in time (the heat flow is
//! `U A(t) / V (T_coolant(t) - T)`, its slope in `T` `-U A(t) / V`).

use stoik_kinetics::{Kinetics, RateConstants};

use crate::model::{energy_terms, Constraint, Energy, ModelEquations, ModelScratch, ReactorModel};
use crate::ReactorError;

use stoik_mechanism::GAS_CONSTANT as R;

/// Refuses the combinations of a semi-batch, the liquid-phase description and the heat
/// exchange that have no equations, and feeds or enthalpies that do not fit `kinetics`.
pub(crate) fn check_model(kinetics: &Kinetics, model: &ReactorModel) -> Result<(), ReactorError> {
    let conditions = &model.conditions;
    let box_model = !conditions.fixed_species.is_empty()
        || !conditions.emissions.is_empty()
        || !conditions.deposition.is_empty();
    if let Some(semi) = &model.semi_batch {
        semi.validate(kinetics.n_species())?;
        if model.flow.is_some() {
            return Err(ReactorError::BadFeed(
                "a semi-batch reactor has no outflow: give either feeds or a stirred-tank flow, not both"
                    .into(),
            ));
        }
        if box_model {
            return Err(ReactorError::BadFeed(
                "fixed species, emissions and deposition do not go with a semi-batch reactor"
                    .into(),
            ));
        }
    }
    if let Some(liquid) = &model.liquid {
        if liquid.step_enthalpies_j_per_mol().len() != kinetics.n_steps() {
            return Err(ReactorError::BadLiquidPhase(format!(
                "{} reaction enthalpies given for {} steps",
                liquid.step_enthalpies_j_per_mol().len(),
                kinetics.n_steps()
            )));
        }
        if model.constraint != Constraint::ConstantVolume {
            return Err(ReactorError::BadLiquidPhase(
                "a liquid phase has constant density: the reactor must be at constant volume (constant density with a semi-batch), not constant pressure"
                    .into(),
            ));
        }
        if box_model {
            return Err(ReactorError::BadLiquidPhase(
                "fixed species, emissions and deposition do not go with the liquid-phase description"
                    .into(),
            ));
        }
        if let Some(j) = (0..kinetics.n_steps())
            .find(|&j| kinetics.reverse_from_thermochemistry(j) == Some(true))
        {
            return Err(ReactorError::BadLiquidPhase(format!(
                "step {j} is reversible without explicit reverse parameters: its reverse rate constant needs an equilibrium constant from species thermochemistry, which the liquid-phase description does not use (give the step explicit reverse parameters or make it irreversible)"
            )));
        }
    }
    if let Energy::HeatExchange(x) = &model.energy {
        if x.ua_total_w_per_k().is_some() && model.semi_batch.is_none() {
            return Err(ReactorError::BadHeatExchange(
                "a total U A (W/K) needs the volume as a state: give the batch a volume (a semi-batch, with or without feeds)"
                    .into(),
            ));
        }
    }
    Ok(())
}

/// The heat terms of one evaluation.
struct Heat {
    /// Heat source per volume `S` (W/m3).
    source: f64,
    /// Heat capacity per volume `K` (J/(m3 K)).
    capacity: f64,
    /// The feeds' share of `S` (W/m3), which scales as `1/V`.
    fed: f64,
    /// The exchanged heat per volume `Q/V` (W/m3).
    exchanged: f64,
    /// `d(Q/V)/dT` (W/(m3 K)).
    exchanged_slope: f64,
}

impl ModelEquations<'_> {
    /// The heat source per volume and heat capacity at time `t_s` (s), temperature
    /// `temperature_k` (K), concentrations `c`, production rates `w` and volume `volume`
    /// (m3, `None` when not tracked). Energy-solving models only. No allocation.
    fn heat(
        &self,
        k: &RateConstants,
        t_s: f64,
        temperature_k: f64,
        c: &[f64],
        w: &[f64],
        volume: Option<f64>,
    ) -> Heat {
        let t = temperature_k;
        let (exchanged, exchanged_slope) = match self.exchange() {
            Some(x) => {
                let ua = match volume {
                    Some(v) => x.ua_over_volume(t_s, v),
                    None => x.ua_per_volume_at(t_s),
                };
                (ua * (x.coolant().temperature_at(t_s) - t), -ua)
            }
            None => (0.0, 0.0),
        };
        let feeds = self
            .model
            .semi_batch
            .as_ref()
            .map_or(&[][..], |s| s.feeds());
        let v = volume.unwrap_or(1.0);
        match &self.model.liquid {
            Some(liquid) => {
                let capacity = liquid.heat_capacity_j_per_m3_k();
                let mut release = 0.0;
                for (j, dh) in liquid.step_enthalpies_j_per_mol().iter().enumerate() {
                    if *dh != 0.0 {
                        release -= dh * self.kinetics.rate_of_progress(k, c, j);
                    }
                }
                let fed: f64 = feeds
                    .iter()
                    .map(|f| f.volume_rate_m3_per_s(t_s) * capacity * (f.temperature_k() - t))
                    .sum::<f64>()
                    / v;
                // A stirred tank's feed brings rho cp (T_in - T) / tau (constant density).
                let flowed = self.model.flow.as_ref().map_or(0.0, |f| {
                    capacity * (f.inlet_temperature_k() - t) / f.residence_time_s()
                });
                Heat {
                    source: release + fed + flowed + exchanged,
                    capacity,
                    fed,
                    exchanged,
                    exchanged_slope,
                }
            }
            None => {
                let basis = self.model.energy_basis();
                let (mut release, mut capacity) = (0.0, 0.0);
                for ((thermo, &ci), &wi) in self.thermo.iter().zip(c).zip(w) {
                    let (e, cap) = energy_terms(thermo, t, basis);
                    release -= e * wi;
                    capacity += ci * cap;
                }
                let mut fed = 0.0;
                for f in feeds {
                    let tf = f.temperature_k();
                    f.for_each_molar_flow(t_s, |i, flow| {
                        if let Some(th) = self.thermo.get(i) {
                            fed += flow * R * (tf * th.h_over_rt(tf) - t * th.h_over_rt(t));
                        }
                    });
                }
                fed /= v;
                Heat {
                    source: release + fed + exchanged,
                    capacity,
                    fed,
                    exchanged,
                    exchanged_slope,
                }
            }
        }
    }

    /// The state derivative of a semi-batch or liquid-phase model (see
    /// [`ModelEquations::rhs`]). No allocation.
    pub(crate) fn extended_rhs(
        &self,
        k: &RateConstants,
        t_s: f64,
        temperature_k: f64,
        y: &[f64],
        f: &mut [f64],
        progress: &mut [f64],
    ) {
        let n = self.kinetics.n_species();
        let m = self.model.n_states(n);
        let c = &y[..n];
        self.kinetics
            .production_rates_and_progress(k, c, &mut f[..n], progress);
        let volume = self.model.volume(y, n);
        let temperature_rate = match &self.model.energy {
            Energy::Isothermal => 0.0,
            Energy::Prescribed(history) => history.slope_at(t_s),
            Energy::Adiabatic | Energy::HeatExchange(_) => {
                let heat = self.heat(k, t_s, temperature_k, c, &f[..n], volume);
                heat.source / heat.capacity
            }
        };
        let w_total: f64 = f[..n].iter().sum();
        let mut fed_total = 0.0;
        let mut volume_rate = 0.0;
        let dilution = match (&self.model.semi_batch, volume) {
            (Some(semi), Some(v)) => {
                for feed in semi.feeds() {
                    feed.for_each_molar_flow(t_s, |_, flow| fed_total += flow / v);
                }
                volume_rate = semi.volume_rate(t_s);
                match self.model.constraint {
                    Constraint::ConstantVolume => volume_rate / v,
                    Constraint::ConstantPressure => {
                        let total: f64 = c.iter().sum();
                        (w_total + fed_total) / total + temperature_rate / temperature_k
                    }
                }
            }
            _ => 0.0,
        };
        for (fi, ci) in f[..n].iter_mut().zip(c) {
            *fi -= ci * dilution;
        }
        self.add_flow(c, &mut f[..n]);
        if let (Some(semi), Some(v)) = (&self.model.semi_batch, volume) {
            for feed in semi.feeds() {
                feed.for_each_molar_flow(t_s, |i, flow| f[i] += flow / v);
            }
            f[m - 1] = match self.model.constraint {
                Constraint::ConstantVolume => volume_rate,
                Constraint::ConstantPressure => v * dilution,
            };
        }
        if self.model.solves_energy() {
            f[n] = temperature_rate;
        }
    }

    /// The analytic Jacobian of a semi-batch or liquid-phase model into `values` (dense
    /// column-major `m x m`, the state pattern of [`crate::model::state_pattern`]; `map`
    /// places the kinetics entries). No allocation.
    #[allow(clippy::too_many_arguments)]
    pub(crate) fn extended_jacobian(
        &self,
        k: &RateConstants,
        t_s: f64,
        temperature_k: f64,
        y: &[f64],
        map: &[usize],
        scratch: &mut ModelScratch,
        values: &mut [f64],
    ) {
        let kinetics = self.kinetics;
        let n = kinetics.n_species();
        let m = self.model.n_states(n);
        let c = &y[..n];
        let t = temperature_k;
        let energy_solved = self.model.solves_energy();
        let volume = self.model.volume(y, n);
        let iv = m - 1;
        let ideal_gas_energy = energy_solved && self.model.liquid.is_none();
        kinetics.jacobian_sparse(k, c, &mut scratch.kin_values);
        values.iter_mut().for_each(|v| *v = 0.0);
        for (&pos, &v) in map.iter().zip(&scratch.kin_values) {
            values[pos] = v;
        }
        if ideal_gas_energy {
            let basis = self.model.energy_basis();
            for (i, thermo) in self.thermo.iter().enumerate() {
                let (e, cap) = energy_terms(thermo, t, basis);
                scratch.energy[i] = e;
                scratch.capacity[i] = cap;
            }
        }
        let kin = kinetics.jacobian_pattern();
        let (starts, rows) = (kin.column_starts(), kin.row_indices());
        for col in 0..n {
            let (mut sum, mut weighted) = (0.0, 0.0);
            let entries = starts[col]..starts[col + 1];
            for (&v, &row) in scratch.kin_values[entries.clone()]
                .iter()
                .zip(&rows[entries])
            {
                sum += v;
                if ideal_gas_energy {
                    weighted += scratch.energy[row] * v;
                }
            }
            scratch.column_sum[col] = sum;
            scratch.column_energy[col] = weighted;
        }
        kinetics.production_rates(k, c, &mut scratch.production);
        let w_total: f64 = scratch.production.iter().sum();
        // The feeds per volume phi_i and the volume rate.
        scratch.feed.iter_mut().for_each(|x| *x = 0.0);
        let mut volume_rate = 0.0;
        if let (Some(semi), Some(v)) = (&self.model.semi_batch, volume) {
            for feed in semi.feeds() {
                feed.for_each_molar_flow(t_s, |i, flow| scratch.feed[i] += flow / v);
            }
            volume_rate = semi.volume_rate(t_s);
        }
        let fed_total: f64 = scratch.feed.iter().sum();
        let v = volume.unwrap_or(1.0);
        // The energy row: a_k = d(dT/dt)/dc_k (in scratch.energy_row), a_T, a_V.
        let (mut temperature_rate, mut a_t, mut a_v) = (0.0, 0.0, 0.0);
        scratch.energy_row.iter_mut().for_each(|x| *x = 0.0);
        if energy_solved {
            let heat = self.heat(k, t_s, t, c, &scratch.production, volume);
            temperature_rate = heat.source / heat.capacity;
            kinetics.evaluate_rate_constant_slopes(t, k, &mut scratch.slopes);
            kinetics.production_rate_slopes(k, &scratch.slopes, c, &mut scratch.dw_dt);
            // d(Q/V)/dV: a total U A over the volume state scales as 1/V.
            let exchanged_volume_slope = match &self.model.energy {
                Energy::HeatExchange(x) if x.ua_total_w_per_k().is_some() => -heat.exchanged / v,
                _ => 0.0,
            };
            let source_volume_slope = if volume.is_some() {
                -heat.fed / v + exchanged_volume_slope
            } else {
                0.0
            };
            match &self.model.liquid {
                Some(liquid) => {
                    let dh = liquid.step_enthalpies_j_per_mol();
                    let row = &mut scratch.energy_row;
                    kinetics.for_each_rate_derivative(k, c, |j, i, d| row[i] -= dh[j] * d);
                    kinetics.rates_of_progress_slopes(
                        k,
                        &scratch.slopes,
                        c,
                        &mut scratch.step_slopes,
                    );
                    let release_slope: f64 = dh
                        .iter()
                        .zip(&scratch.step_slopes)
                        .map(|(h, s)| -h * s)
                        .sum();
                    let feed_slope = if volume.is_some() {
                        -volume_rate / v * heat.capacity
                    } else {
                        0.0
                    };
                    let flow_slope = self
                        .model
                        .flow
                        .as_ref()
                        .map_or(0.0, |f| -heat.capacity / f.residence_time_s());
                    let source_slope =
                        release_slope + feed_slope + flow_slope + heat.exchanged_slope;
                    row.iter_mut().for_each(|x| *x /= heat.capacity);
                    a_t = source_slope / heat.capacity;
                    a_v = source_volume_slope / heat.capacity;
                }
                None => {
                    let mut source_slope = heat.exchanged_slope;
                    let mut capacity_slope = 0.0;
                    for (i, thermo) in self.thermo.iter().enumerate() {
                        let cp = scratch.capacity[i];
                        source_slope -= cp * scratch.production[i]
                            + scratch.energy[i] * scratch.dw_dt[i]
                            + scratch.feed[i] * cp;
                        capacity_slope += c[i] * R * thermo.cp_slope_over_r(t);
                    }
                    for col in 0..n {
                        scratch.energy_row[col] = (-scratch.column_energy[col]
                            - temperature_rate * scratch.capacity[col])
                            / heat.capacity;
                    }
                    a_t = (source_slope - temperature_rate * capacity_slope) / heat.capacity;
                    a_v = source_volume_slope / heat.capacity;
                }
            }
        } else if let Energy::Prescribed(history) = &self.model.energy {
            temperature_rate = history.slope_at(t_s);
        }
        // The dilution rate D and its derivatives.
        let constant_pressure = self.model.constraint == Constraint::ConstantPressure;
        let total: f64 = c.iter().sum();
        let (dilution, dilution_t, dilution_v) = match (volume, constant_pressure) {
            (None, _) => (0.0, 0.0, 0.0),
            (Some(_), false) => {
                let d = volume_rate / v;
                (d, 0.0, -d / v)
            }
            (Some(_), true) => {
                let dw_total_dt: f64 = if energy_solved {
                    scratch.dw_dt.iter().sum()
                } else {
                    0.0
                };
                (
                    (w_total + fed_total) / total + temperature_rate / t,
                    dw_total_dt / total + a_t / t - temperature_rate / (t * t),
                    -fed_total / (v * total) + a_v / t,
                )
            }
        };
        let tracks = volume.is_some();
        // A stirred tank at constant volume (the only kind with a liquid phase) loses each
        // species at c_i / tau.
        let outflow = self
            .model
            .flow
            .as_ref()
            .map_or(0.0, |f| 1.0 / f.residence_time_s());
        for col in 0..n {
            let dilution_c = if tracks && constant_pressure {
                scratch.column_sum[col] / total - (w_total + fed_total) / (total * total)
                    + scratch.energy_row[col] / t
            } else {
                0.0
            };
            let column = &mut values[col * m..col * m + m];
            for (x, ci) in column[..n].iter_mut().zip(c) {
                *x -= ci * dilution_c;
            }
            column[col] -= dilution + outflow;
            if energy_solved {
                column[n] = scratch.energy_row[col];
            }
            if tracks && constant_pressure {
                column[iv] = v * dilution_c;
            }
        }
        if energy_solved {
            let column = &mut values[n * m..n * m + m];
            for i in 0..n {
                column[i] = scratch.dw_dt[i] - c[i] * dilution_t;
            }
            column[n] = a_t;
            if tracks && constant_pressure {
                column[iv] = v * dilution_t;
            }
        }
        if tracks {
            let column = &mut values[iv * m..iv * m + m];
            for i in 0..n {
                column[i] = -scratch.feed[i] / v - c[i] * dilution_v;
            }
            if energy_solved {
                column[n] = a_v;
            }
            column[iv] = if constant_pressure {
                dilution + v * dilution_v
            } else {
                0.0
            };
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{energy_thermo, state_pattern, HeatExchange, TemperatureHistory};
    use crate::semibatch::{Feed, FeedSchedule, LiquidPhase, SemiBatch};
    use stoik_mechanism::{Arrhenius, Mechanism, Species, Step, StoichTerm};

    fn hydrogen() -> Kinetics {
        let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
        let file = stoik_mechanism::load_mechanism(&path).unwrap_or_else(|e| panic!("{e}"));
        Kinetics::compile(&file.mechanism).unwrap_or_else(|e| panic!("{e}"))
    }

    fn terms(side: &[(usize, f64)]) -> Vec<StoichTerm> {
        side.iter()
            .map(|&(species, coefficient)| StoichTerm {
                species,
                coefficient,
            })
            .collect()
    }

    fn arrhenius(pre: f64, ea: f64) -> Arrhenius {
        Arrhenius {
            pre_exponential_si: pre,
            temperature_exponent: 0.0,
            activation_energy_j_per_mol: ea,
        }
    }

    /// A + B -> C, C <=> D (explicit reverse), 2 A -> E: orders one and two, a reversible
    /// step and Arrhenius temperature dependence, no thermochemistry (an invented liquid
    /// mechanism for the Jacobian check).
    fn liquid_kinetics() -> Kinetics {
        let step = |r: &[(usize, f64)], p: &[(usize, f64)], k: Arrhenius| Step {
            equation: format!("{r:?} -> {p:?}"),
            reactants: terms(r),
            products: terms(p),
            reversible: false,
            forward: k,
            reverse: None,
            third_body: None,
            pressure_dependence: None,
            forward_orders: None,
            allow_duplicate: false,
            note: None,
            location: None,
        };
        let mut reversible = step(&[(2, 1.0)], &[(3, 1.0)], arrhenius(1e5, 4e4));
        reversible.reversible = true;
        reversible.reverse = Some(arrhenius(3e6, 6e4));
        let mechanism = Mechanism {
            title: None,
            elements: Vec::new(),
            species: ["A", "B", "C", "D", "E"]
                .iter()
                .map(|name| Species {
                    collision_diameter_m: None,
                    name: name.to_string(),
                    composition: None,
                    note: None,
                    location: None,
                    thermo: None,
                })
                .collect(),
            steps: vec![
                step(&[(0, 1.0), (1, 1.0)], &[(2, 1.0)], arrhenius(2e3, 5e4)),
                reversible,
                step(&[(0, 2.0)], &[(4, 1.0)], arrhenius(5e2, 7e4)),
            ],
        };
        Kinetics::compile(&mechanism).unwrap_or_else(|e| panic!("{e}"))
    }

    /// Worst relative error of the analytic Jacobian of `model` at `(t_s, y)` against
    /// five-point central differences of the right-hand side (error O(h^4), Abramowitz &
    /// Stegun 25.3.6; step 1e-4 relative).
    fn worst_jacobian_error(kinetics: &Kinetics, model: &ReactorModel, t_s: f64, y: &[f64]) -> f64 {
        let thermo = energy_thermo(kinetics, model).unwrap_or_else(|e| panic!("{e}"));
        let eq = ModelEquations {
            kinetics,
            model,
            thermo: &thermo,
            live: None,
        };
        let n = kinetics.n_species();
        let m = model.n_states(n);
        assert_eq!(y.len(), m);
        let held = 400.0;
        let temp = model.temperature(t_s, y, n, held);
        let (pattern, map) = state_pattern(kinetics, model).unwrap_or_else(|e| panic!("{e}"));
        let mut scratch = ModelScratch::new(kinetics);
        let mut values = vec![0.0; pattern.nnz()];
        let k = kinetics.rate_constants(temp);
        eq.jacobian(&k, t_s, temp, y, &map, &mut scratch, &mut values);
        let f = |y: &[f64]| {
            let temp = model.temperature(t_s, y, n, held);
            let k = kinetics.rate_constants(temp);
            let mut out = vec![0.0; m];
            let mut progress = vec![0.0; kinetics.n_steps()];
            eq.rhs(&k, t_s, temp, y, &mut out, &mut progress);
            out
        };
        let largest = values.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        let mut worst: f64 = 0.0;
        for col in 0..m {
            let h = 1e-4 * y[col].abs().max(1e-3);
            let at = |offset: f64| {
                let mut shifted = y.to_vec();
                shifted[col] += offset;
                f(&shifted)
            };
            let (f2p, f1p, f1m, f2m) = (at(2.0 * h), at(h), at(-h), at(-2.0 * h));
            let magnitude = [&f2p, &f1p, &f1m, &f2m]
                .iter()
                .flat_map(|f| f.iter())
                .fold(0.0f64, |a, v| a.max(v.abs()));
            for row in 0..m {
                let fd = (-f2p[row] + 8.0 * f1p[row] - 8.0 * f1m[row] + f2m[row]) / (12.0 * h);
                let analytic = pattern.position(row, col).map_or(0.0, |p| values[p]);
                // Rounding of the differences: a few eps of the largest value of the
                // right-hand side (the size of the terms its sums cancel) over h.
                let rounding = 16.0 * f64::EPSILON * magnitude / h;
                let scale = fd.abs().max(analytic.abs()).max(1e-9 * largest);
                let err = ((fd - analytic).abs() - rounding).max(0.0) / scale;
                if err > 1e-6 {
                    eprintln!("row {row} col {col}: analytic {analytic:e}, differences {fd:e}");
                }
                worst = worst.max(err);
            }
        }
        worst
    }

    fn energies(coolant: &TemperatureHistory, prescribed: &TemperatureHistory) -> Vec<Energy> {
        vec![
            Energy::Isothermal,
            Energy::Adiabatic,
            Energy::Prescribed(prescribed.clone()),
            Energy::HeatExchange(
                HeatExchange::new(5e4, coolant.clone()).unwrap_or_else(|e| panic!("{e}")),
            ),
            Energy::HeatExchange(
                HeatExchange::total(3e3, coolant.clone()).unwrap_or_else(|e| panic!("{e}")),
            ),
        ]
    }

    /// Every new term (feeds, dilution, volume state, feed enthalpy, total U A, liquid
    /// heat release) in the analytic Jacobian against central differences.
    #[test]
    fn semi_batch_and_liquid_jacobians_match_central_differences() {
        let coolant = TemperatureHistory::new(vec![0.0, 1e-3], vec![800.0, 900.0])
            .unwrap_or_else(|e| panic!("{e}"));
        let prescribed =
            TemperatureHistory::new(vec![0.0, 1e-3, 2e-3], vec![1000.0, 1600.0, 1400.0])
                .unwrap_or_else(|e| panic!("{e}"));
        let gas = hydrogen();
        let n = gas.n_species();
        let inlet: Vec<f64> = (0..n).map(|i| 0.02 + 0.3 * ((i * 3) % 5) as f64).collect();
        // Feeds fast enough (q / V ~ 1e3 1/s) for the dilution terms to stand out of the
        // chemistry's rounding at 1500 K.
        let schedule = FeedSchedule::points(vec![0.0, 1e-3, 2e-3], vec![4e2, 9e2, 0.0])
            .unwrap_or_else(|e| panic!("{e}"));
        let feeds = vec![
            Feed::volumetric(inlet, schedule.clone(), 700.0).unwrap_or_else(|e| panic!("{e}")),
            Feed::species(
                1,
                2e-1,
                FeedSchedule::window(0.0, 1e-3, 5e2).unwrap(),
                350.0,
            )
            .unwrap_or_else(|e| panic!("{e}")),
        ];
        let semi = SemiBatch::new(0.5, feeds).unwrap_or_else(|e| panic!("{e}"));
        let closed = SemiBatch::new(0.5, Vec::new()).unwrap_or_else(|e| panic!("{e}"));
        for constraint in [Constraint::ConstantVolume, Constraint::ConstantPressure] {
            for batch in [&semi, &closed] {
                for energy in energies(&coolant, &prescribed) {
                    let model = ReactorModel {
                        constraint,
                        energy,
                        semi_batch: Some(batch.clone()),
                        ..Default::default()
                    };
                    let mut y: Vec<f64> = (0..n)
                        .map(|i| 0.05 + 0.9 * ((i * 7 + 3) % 11) as f64 / 11.0)
                        .collect();
                    if model.solves_energy() {
                        y.push(1500.0);
                    }
                    y.push(0.7);
                    let worst = worst_jacobian_error(&gas, &model, 0.6e-3, &y);
                    eprintln!("gas {constraint:?} {:?}: worst {worst:.1e}", model.energy);
                    assert!(worst < 1e-6, "{model:?}: worst relative error {worst:e}");
                }
            }
        }
        // Liquid phase: closed at constant volume, and semi-batch at constant density.
        let liquid = liquid_kinetics();
        let phase = LiquidPhase::per_mass(2.1e3, 950.0, vec![-9e4, 2.5e4, -4e4])
            .unwrap_or_else(|e| panic!("{e}"));
        let liquid_feeds = vec![
            Feed::volumetric(vec![800.0, 0.0, 0.0, 0.0, 10.0], schedule, 300.0)
                .unwrap_or_else(|e| panic!("{e}")),
            Feed::species(
                1,
                1e-4,
                FeedSchedule::window(0.0, 1e-3, 0.4).unwrap(),
                290.0,
            )
            .unwrap_or_else(|e| panic!("{e}")),
        ];
        let liquid_semi = SemiBatch::new(0.5, liquid_feeds).unwrap_or_else(|e| panic!("{e}"));
        let coolant = TemperatureHistory::new(vec![0.0], vec![300.0]).unwrap();
        let prescribed = TemperatureHistory::new(vec![0.0, 1.0], vec![330.0, 360.0]).unwrap();
        for batch in [None, Some(liquid_semi.clone()), Some(closed.clone())] {
            for energy in energies(&coolant, &prescribed) {
                if batch.is_none()
                    && matches!(&energy, Energy::HeatExchange(x) if x.ua_total_w_per_k().is_some())
                {
                    continue;
                }
                let model = ReactorModel {
                    energy,
                    semi_batch: batch.clone(),
                    liquid: Some(phase.clone()),
                    ..Default::default()
                };
                let mut y = vec![900.0, 700.0, 300.0, 150.0, 40.0];
                if model.solves_energy() {
                    y.push(350.0);
                }
                if model.tracks_volume() {
                    y.push(0.7);
                }
                let worst = worst_jacobian_error(&liquid, &model, 0.6e-3, &y);
                eprintln!("liquid {:?}: worst {worst:.1e}", model.energy);
                assert!(worst < 1e-6, "{model:?}: worst relative error {worst:e}");
            }
        }
    }

    /// The liquid-phase stirred tank (constant density: inflow and outflow at 1/tau, the
    /// feed's rho cp (T_in - T) / tau) in the analytic Jacobian against central
    /// differences, for every energy law.
    #[test]
    fn liquid_stirred_tank_jacobian_matches_central_differences() {
        let liquid = liquid_kinetics();
        let phase = LiquidPhase::per_volume(1.9e6, vec![-9e4, 2.5e4, -4e4])
            .unwrap_or_else(|e| panic!("{e}"));
        let flow = crate::StirredFlow::new(2.0e-3, vec![800.0, 600.0, 0.0, 5.0, 0.0], 310.0)
            .unwrap_or_else(|e| panic!("{e}"));
        let coolant = TemperatureHistory::new(vec![0.0], vec![300.0]).unwrap();
        let prescribed = TemperatureHistory::new(vec![0.0, 1.0], vec![330.0, 360.0]).unwrap();
        // A jacket losing its cooling: U A / V falls linearly from 5e4 to 1e3 W/(m3 K)
        // around the evaluation time 0.6e-3 s.
        let failing = HeatExchange::new(5e4, coolant.clone())
            .and_then(|x| x.with_ua_history(vec![0.0, 0.4e-3, 0.8e-3], vec![5e4, 5e4, 1e3]))
            .unwrap_or_else(|e| panic!("{e}"));
        let mut laws = energies(&coolant, &prescribed);
        laws.push(Energy::HeatExchange(failing));
        for energy in laws {
            if matches!(&energy, Energy::HeatExchange(x) if x.ua_total_w_per_k().is_some()) {
                continue;
            }
            let model = ReactorModel {
                energy,
                flow: Some(flow.clone()),
                liquid: Some(phase.clone()),
                ..Default::default()
            };
            let mut y = vec![900.0, 700.0, 300.0, 150.0, 40.0];
            if model.solves_energy() {
                y.push(350.0);
            }
            let worst = worst_jacobian_error(&liquid, &model, 0.6e-3, &y);
            eprintln!("liquid tank {:?}: worst {worst:.1e}", model.energy);
            assert!(worst < 1e-6, "{model:?}: worst relative error {worst:e}");
        }
    }
}
