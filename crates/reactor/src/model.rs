//! Reactor models: what is held constant (volume or pressure) and how the temperature evolves
//! (held, solved from the energy balance, or prescribed), and their equations.
//!
//! All models are closed ideal-gas batch reactors with the molar concentrations `c` (mol/m3)
//! as state; when the energy balance is solved the temperature `T` (K) is appended as the
//! last state. With `w(c, T)` the net production rates of the kinetics:
//!
//! - constant volume: `dc_i/dt = w_i`;
//! - constant pressure: `dc_i/dt = w_i - c_i g`, with the relative expansion rate
//!   `g = d ln V/dt = sum_k w_k / C + (dT/dt) / T`, `C = sum_k c_k` (ideal gas,
//!   `V = n R T / P` at fixed `P`);
//! - adiabatic: `dT/dt = -sum_i e_i w_i / sum_i c_i k_i`, with `e_i` the molar internal
//!   energy `u_i = h_i - R T` and `k_i = cv_i = cp_i - R` at constant volume, or the molar
//!   enthalpy `h_i` and `k_i = cp_i` at constant pressure (first law for a closed system:
//!   `U` resp. `H` is conserved);
//! - prescribed: `T(t)` piecewise linear through given points, `dT/dt` its slope;
//! - isothermal: `dT/dt = 0`.
//!
//! A [`StirredFlow`] opens the reactor into a continuous stirred tank of fixed volume `V`: a
//! feed of concentrations `c_in` (mol/m3) and temperature `T_in` (K) enters at the volumetric
//! rate `q = V / tau` (`tau` the residence time), and the well-mixed contents leave.
//!
//! - constant volume (constant density, the usual liquid-phase tank: outflow = inflow):
//!   `dc_i/dt = w_i + (c_in,i - c_i) / tau`;
//! - constant pressure (ideal gas, the outflow adjusts to hold `P`):
//!   `dc_i/dt = w_i + c_in,i / tau - c_i g`, `g = (sum_k w_k + C_in / tau) / C + (dT/dt) / T`;
//! - the energy balance of the open tank is written on enthalpy for both (steady-flow first
//!   law; pressure work neglected at constant volume, as for liquids):
//!   `sum_i c_i cp_i dT/dt = sum_i c_in,i (h_i(T_in) - h_i(T)) / tau - sum_i h_i w_i + Q/V`,
//!   `Q/V = U A / V (T_coolant - T)` with heat exchange (O. Levenspiel, *Chemical Reaction
//!   Engineering*, 3rd ed., ch. 5 and 9; H. S. Fogler, *Elements of Chemical Reaction
//!   Engineering*, 4th ed., ch. 8).
//!
//! A [`PlugFlow`] makes the reactor a parcel of a steady plug flow: the constant-pressure
//! equations above plus the pressure term `c_i u (dP/dz) / P` in the species rows, the wall's
//! heat `U p / A (T_wall - T)` in the energy balance and the distance `z` as the last state,
//! `dz/dt = u = mdot / (rho A(z))`; the derivation is in the `plug` module.
//!
//! The Jacobian with respect to `(c, T)` is written analytically (see [`ModelJacobian`]):
//! the kinetics' `dw/dc`, its temperature column `dw/dT` from the Arrhenius and van 't Hoff
//! slopes of the rate constants, the energy row from differentiating the quotient above, and
//! at constant pressure the dense rank-one term `-c_i dg/dc_k`.

use std::cell::{Ref, RefCell};

use stoik_kinetics::{JacobianPattern, Kinetics, PatternError, RateConstants};
use stoik_thermo::Nasa7;

use crate::atmosphere::BoxConditions;
use crate::plug::{PlugFlow, PlugTerms};
use crate::semibatch::{LiquidPhase, SemiBatch};
use crate::ReactorError;

// The molar gas constant R in J/(mol K), under its short name in the formulas below.
use stoik_mechanism::GAS_CONSTANT as R;

/// What a closed reactor holds constant besides its contents.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Constraint {
    /// Rigid vessel: the volume is fixed; the pressure follows from the ideal-gas law.
    #[default]
    ConstantVolume,
    /// Free piston: the pressure is fixed; the volume follows from the ideal-gas law.
    ConstantPressure,
}

/// How the temperature of a closed reactor evolves.
#[derive(Debug, Clone, PartialEq, Default)]
pub enum Energy {
    /// Held at the initial temperature (an ideal thermostat).
    #[default]
    Isothermal,
    /// No heat exchange: the temperature is solved from the energy balance (species
    /// thermochemistry needed for every species).
    Adiabatic,
    /// Follows a prescribed history.
    Prescribed(TemperatureHistory),
    /// Exchanges heat with a coolant (a jacketed vessel): the temperature is solved from the
    /// energy balance with the heat flow `U A (T_coolant - T)` into the reactor (species
    /// thermochemistry needed for every species, or a [`LiquidPhase`]; a closed reactor at
    /// constant pressure needs its volume as a state, a [`SemiBatch`]; either constraint for
    /// a stirred tank).
    HeatExchange(HeatExchange),
}

/// The flow through a continuous stirred tank of fixed volume: the feed's concentrations
/// (mol/m3) and temperature (K), and the residence time `tau = V / q` (s) of the volumetric
/// feed rate `q` (m3/s) in the tank volume `V` (m3). See the module documentation for the
/// equations.
#[derive(Debug, Clone, PartialEq)]
pub struct StirredFlow {
    residence_time_s: f64,
    inlet_mol_per_m3: Vec<f64>,
    inlet_temperature_k: f64,
}

impl StirredFlow {
    /// A feed of `inlet_mol_per_m3` (one finite, non-negative concentration per species, in
    /// mol/m3) at `inlet_temperature_k` (K, finite and positive; used when the energy balance
    /// is solved) with residence time `residence_time_s` (s, finite and positive).
    pub fn new(
        residence_time_s: f64,
        inlet_mol_per_m3: Vec<f64>,
        inlet_temperature_k: f64,
    ) -> Result<StirredFlow, ReactorError> {
        let mut flow = StirredFlow {
            residence_time_s: 1.0,
            inlet_mol_per_m3,
            inlet_temperature_k: 300.0,
        };
        flow.set_residence_time_s(residence_time_s)?;
        flow.set_inlet_temperature_k(inlet_temperature_k)?;
        if let Some((i, c)) = flow
            .inlet_mol_per_m3
            .iter()
            .enumerate()
            .find(|(_, c)| !(c.is_finite() && **c >= 0.0))
        {
            return Err(ReactorError::BadFlow(format!(
                "inlet concentration {c:e} mol/m3 of species {i} must be finite and not negative"
            )));
        }
        Ok(flow)
    }

    /// Residence time `V / q` (s).
    pub fn residence_time_s(&self) -> f64 {
        self.residence_time_s
    }

    /// Changes the residence time (s, finite and positive).
    pub fn set_residence_time_s(&mut self, residence_time_s: f64) -> Result<(), ReactorError> {
        if !(residence_time_s.is_finite() && residence_time_s > 0.0) {
            return Err(ReactorError::BadFlow(format!(
                "the residence time must be finite and positive, got {residence_time_s:e} s"
            )));
        }
        self.residence_time_s = residence_time_s;
        Ok(())
    }

    /// Inlet concentrations (mol/m3), one per species.
    pub fn inlet_mol_per_m3(&self) -> &[f64] {
        &self.inlet_mol_per_m3
    }

    /// Changes the inlet concentrations (mol/m3; as many as now, each finite and not
    /// negative), in place (no allocation).
    pub fn set_inlet_mol_per_m3(&mut self, inlet_mol_per_m3: &[f64]) -> Result<(), ReactorError> {
        if inlet_mol_per_m3.len() != self.inlet_mol_per_m3.len() {
            return Err(ReactorError::BadFlow(format!(
                "the inlet has {} concentrations, {} given",
                self.inlet_mol_per_m3.len(),
                inlet_mol_per_m3.len()
            )));
        }
        if let Some((i, c)) = inlet_mol_per_m3
            .iter()
            .enumerate()
            .find(|(_, c)| !(c.is_finite() && **c >= 0.0))
        {
            return Err(ReactorError::BadFlow(format!(
                "inlet concentration {c:e} mol/m3 of species {i} must be finite and not negative"
            )));
        }
        self.inlet_mol_per_m3.copy_from_slice(inlet_mol_per_m3);
        Ok(())
    }

    /// Inlet temperature (K).
    pub fn inlet_temperature_k(&self) -> f64 {
        self.inlet_temperature_k
    }

    /// Changes the inlet temperature (K, finite and positive).
    pub fn set_inlet_temperature_k(
        &mut self,
        inlet_temperature_k: f64,
    ) -> Result<(), ReactorError> {
        if !(inlet_temperature_k.is_finite() && inlet_temperature_k > 0.0) {
            return Err(ReactorError::BadFlow(format!(
                "the inlet temperature must be finite and positive, got {inlet_temperature_k:e} K"
            )));
        }
        self.inlet_temperature_k = inlet_temperature_k;
        Ok(())
    }

    /// Total inlet concentration (mol/m3).
    fn inlet_total(&self) -> f64 {
        self.inlet_mol_per_m3.iter().sum()
    }
}

/// The heat exchange of a jacketed vessel: heat flows into the reactor at
/// `ua_per_volume (T_coolant(t) - T)` per unit volume (W/m3), with `ua_per_volume` the
/// product of the overall heat-transfer coefficient U (W/(m2 K)) and the exchange area A
/// (m2) over the reactor volume V (m3); or, given as a total U A (W/K,
/// [`HeatExchange::total`]), at `U A (T_coolant(t) - T)` in all (W), divided by the
/// volume state of a [`SemiBatch`](crate::SemiBatch).
#[derive(Debug, Clone, PartialEq)]
pub struct HeatExchange {
    ua_per_volume_w_per_m3_k: f64,
    coolant: TemperatureHistory,
    /// U A in W/K when the exchange is given as a total (then `ua_per_volume` is 0).
    ua_total_w_per_k: Option<f64>,
    /// U A changing in time (a jacket losing or regaining its cooling): the points' times
    /// (s) and values, in the units of the exchange (W/(m3 K) per volume, W/K as a total);
    /// linear between the points, held before the first and after the last.
    ua_history: Option<(Vec<f64>, Vec<f64>)>,
}

impl HeatExchange {
    /// Heat exchange with `ua_per_volume_w_per_m3_k` = U A / V in W/(m3 K) (finite, not
    /// negative; 0 is adiabatic) and a coolant following `coolant` (a fixed coolant
    /// temperature is a history of one point).
    pub fn new(
        ua_per_volume_w_per_m3_k: f64,
        coolant: TemperatureHistory,
    ) -> Result<HeatExchange, ReactorError> {
        if !(ua_per_volume_w_per_m3_k.is_finite() && ua_per_volume_w_per_m3_k >= 0.0) {
            return Err(ReactorError::BadHeatExchange(format!(
                "U A / V must be finite and not negative, got {ua_per_volume_w_per_m3_k:e} W/(m3 K)"
            )));
        }
        Ok(HeatExchange {
            ua_per_volume_w_per_m3_k,
            coolant,
            ua_total_w_per_k: None,
            ua_history: None,
        })
    }

    /// Heat exchange with a total `ua_w_per_k` = U A in W/K (finite, not negative) and a
    /// coolant following `coolant`: the heat flow `U A (T_coolant - T)` (W) is divided by
    /// the volume state, so the model needs a [`SemiBatch`](crate::SemiBatch) (with or
    /// without feeds). The form for a closed batch at constant pressure, whose volume
    /// changes.
    pub fn total(
        ua_w_per_k: f64,
        coolant: TemperatureHistory,
    ) -> Result<HeatExchange, ReactorError> {
        if !(ua_w_per_k.is_finite() && ua_w_per_k >= 0.0) {
            return Err(ReactorError::BadHeatExchange(format!(
                "U A must be finite and not negative, got {ua_w_per_k:e} W/K"
            )));
        }
        Ok(HeatExchange {
            ua_per_volume_w_per_m3_k: 0.0,
            coolant,
            ua_total_w_per_k: Some(ua_w_per_k),
            ua_history: None,
        })
    }

    /// The exchange with U A following a history instead of the constant: U A is
    /// `ua_values[i]` at `times_s[i]` (s), linear between the points, held at the first
    /// value before the first time and at the last after the last time (e.g. a jacket's
    /// cooling failing: U A falls to 0 at the failure). The values are in the exchange's
    /// units: U A / V in W/(m3 K) for one made by [`HeatExchange::new`], U A in W/K for one
    /// made by [`HeatExchange::total`]. At least one point, equal lengths, the first time 0,
    /// times finite and strictly increasing, values finite and not negative. The constant
    /// given at construction is replaced by the history's first value.
    pub fn with_ua_history(
        mut self,
        times_s: Vec<f64>,
        ua_values: Vec<f64>,
    ) -> Result<HeatExchange, ReactorError> {
        if times_s.is_empty() || times_s.len() != ua_values.len() {
            return Err(ReactorError::BadHeatExchange(format!(
                "a U A history needs the same number (at least one) of times and values, got {} and {}",
                times_s.len(),
                ua_values.len()
            )));
        }
        if times_s[0] != 0.0 {
            return Err(ReactorError::BadHeatExchange(format!(
                "a U A history starts at 0 s, got {:e} s",
                times_s[0]
            )));
        }
        if let Some(i) =
            (1..times_s.len()).find(|&i| !(times_s[i].is_finite() && times_s[i] > times_s[i - 1]))
        {
            return Err(ReactorError::BadHeatExchange(format!(
                "U A history times must be finite and strictly increasing: time {} is {:e} s",
                i + 1,
                times_s[i]
            )));
        }
        if let Some(i) = ua_values.iter().position(|x| !(x.is_finite() && *x >= 0.0)) {
            return Err(ReactorError::BadHeatExchange(format!(
                "U A history values must be finite and not negative: value {} is {:e}",
                i + 1,
                ua_values[i]
            )));
        }
        match &mut self.ua_total_w_per_k {
            Some(total) => *total = ua_values[0],
            None => self.ua_per_volume_w_per_m3_k = ua_values[0],
        }
        self.ua_history = Some((times_s, ua_values));
        Ok(self)
    }

    /// The U A history's points (times in s, values in the exchange's units), if U A
    /// changes in time.
    pub fn ua_history(&self) -> Option<(&[f64], &[f64])> {
        self.ua_history
            .as_ref()
            .map(|(t, v)| (t.as_slice(), v.as_slice()))
    }

    /// The time (s) after which neither the coolant temperature nor U A changes: the last
    /// point of either history (0 when both are constant). Steady states are taken there.
    pub fn settled_time_s(&self) -> f64 {
        let coolant = self.coolant.times_s().last().copied().unwrap_or(0.0);
        let ua = self
            .ua_history
            .as_ref()
            .and_then(|(t, _)| t.last().copied())
            .unwrap_or(0.0);
        coolant.max(ua)
    }

    /// The exchange's U A value at `t_s` (s), in its units, with `constant` the value
    /// without a history.
    fn ua_value_at(&self, constant: f64, t_s: f64) -> f64 {
        let Some((t, v)) = &self.ua_history else {
            return constant;
        };
        let last = t.len() - 1;
        if t_s <= t[0] {
            return v[0];
        }
        if t_s >= t[last] {
            return v[last];
        }
        let i = t.partition_point(|&x| x < t_s) - 1;
        v[i] + (v[i + 1] - v[i]) * (t_s - t[i]) / (t[i + 1] - t[i])
    }

    /// U A / V in W/(m3 K) of an exchange given per volume (at t = 0 with a U A history,
    /// see [`ua_per_volume_at`](Self::ua_per_volume_at)); 0 for one given as a total (see
    /// [`ua_total_w_per_k`](Self::ua_total_w_per_k)).
    pub fn ua_per_volume_w_per_m3_k(&self) -> f64 {
        self.ua_per_volume_w_per_m3_k
    }

    /// U A / V in W/(m3 K) at time `t_s` (s) of an exchange given per volume (following its
    /// U A history, if any); 0 for one given as a total.
    pub fn ua_per_volume_at(&self, t_s: f64) -> f64 {
        if self.ua_total_w_per_k.is_some() {
            return 0.0;
        }
        self.ua_value_at(self.ua_per_volume_w_per_m3_k, t_s)
    }

    /// U A in W/K of an exchange given as a total (at t = 0 with a U A history); `None` for
    /// one given per volume.
    pub fn ua_total_w_per_k(&self) -> Option<f64> {
        self.ua_total_w_per_k
    }

    /// The coolant temperature history.
    pub fn coolant(&self) -> &TemperatureHistory {
        &self.coolant
    }

    /// Holds the coolant at `temperature_k` (K, finite and positive) at all times, replacing
    /// its history (the parameter of a steady-state continuation).
    pub fn set_coolant_temperature_k(&mut self, temperature_k: f64) -> Result<(), ReactorError> {
        if self.coolant.times_s.len() == 1 {
            // A held coolant already: overwrite in place (no allocation).
            if !(temperature_k.is_finite() && temperature_k > 0.0) {
                return Err(ReactorError::BadTemperatureHistory(format!(
                    "temperatures must be finite and positive: temperature 1 is {temperature_k} K"
                )));
            }
            self.coolant.temperatures_k[0] = temperature_k;
            return Ok(());
        }
        self.coolant = TemperatureHistory::new(vec![0.0], vec![temperature_k])?;
        Ok(())
    }

    /// Changes U A / V (W/(m3 K), finite, not negative) of an exchange given per volume,
    /// held from now on (a U A history is replaced); an error for one given as a total (its U A is changed with
    /// [`set_ua_total_w_per_k`](Self::set_ua_total_w_per_k)).
    pub fn set_ua_per_volume_w_per_m3_k(&mut self, ua_per_volume: f64) -> Result<(), ReactorError> {
        if self.ua_total_w_per_k.is_some() {
            return Err(ReactorError::BadHeatExchange(
                "this exchange is given as a total U A (W/K): set the total, not U A / V".into(),
            ));
        }
        if !(ua_per_volume.is_finite() && ua_per_volume >= 0.0) {
            return Err(ReactorError::BadHeatExchange(format!(
                "U A / V must be finite and not negative, got {ua_per_volume:e} W/(m3 K)"
            )));
        }
        self.ua_per_volume_w_per_m3_k = ua_per_volume;
        // A U A history, if any, is replaced by the held value (as the coolant's is).
        self.ua_history = None;
        Ok(())
    }

    /// Changes U A (W/K, finite, not negative) of an exchange given as a total, held from now
    /// on (a U A history is replaced); an error for one given per volume (see
    /// [`set_ua_per_volume_w_per_m3_k`](Self::set_ua_per_volume_w_per_m3_k)).
    pub fn set_ua_total_w_per_k(&mut self, ua_w_per_k: f64) -> Result<(), ReactorError> {
        if self.ua_total_w_per_k.is_none() {
            return Err(ReactorError::BadHeatExchange(
                "this exchange is given per volume (W/(m3 K)): set U A / V, not a total".into(),
            ));
        }
        if !(ua_w_per_k.is_finite() && ua_w_per_k >= 0.0) {
            return Err(ReactorError::BadHeatExchange(format!(
                "U A must be finite and not negative, got {ua_w_per_k:e} W/K"
            )));
        }
        self.ua_total_w_per_k = Some(ua_w_per_k);
        // A U A history, if any, is replaced by the held value (as the coolant's is).
        self.ua_history = None;
        Ok(())
    }

    /// Heat flow into the reactor per unit volume (W/m3) at time `t_s` (s) and reactor
    /// temperature `temperature_k` (K), for an exchange given per volume (0 for a total).
    pub fn heat_flow_w_per_m3(&self, t_s: f64, temperature_k: f64) -> f64 {
        self.ua_per_volume_at(t_s) * (self.coolant.temperature_at(t_s) - temperature_k)
    }

    /// `U A / V` (W/(m3 K)) at time `t_s` (s) and volume `volume_m3` (m3): the per-volume
    /// value, or the total over the volume.
    pub(crate) fn ua_over_volume(&self, t_s: f64, volume_m3: f64) -> f64 {
        match self.ua_total_w_per_k {
            Some(ua) => self.ua_value_at(ua, t_s) / volume_m3,
            None => self.ua_value_at(self.ua_per_volume_w_per_m3_k, t_s),
        }
    }
}

/// A piecewise-linear temperature history `T(t)`: linear between the given points, held at
/// the first value before the first time and at the last value after the last time.
#[derive(Debug, Clone, PartialEq)]
pub struct TemperatureHistory {
    times_s: Vec<f64>,
    temperatures_k: Vec<f64>,
}

impl TemperatureHistory {
    /// A history through the points (`times_s[i]` in s, `temperatures_k[i]` in K): at least
    /// one point, equal lengths, times finite and strictly increasing, temperatures finite
    /// and positive.
    pub fn new(times_s: Vec<f64>, temperatures_k: Vec<f64>) -> Result<Self, ReactorError> {
        if times_s.is_empty() || times_s.len() != temperatures_k.len() {
            return Err(ReactorError::BadTemperatureHistory(format!(
                "need the same number (at least one) of times and temperatures, got {} and {}",
                times_s.len(),
                temperatures_k.len()
            )));
        }
        if let Some(i) = (0..times_s.len())
            .find(|&i| !times_s[i].is_finite() || (i > 0 && times_s[i] <= times_s[i - 1]))
        {
            return Err(ReactorError::BadTemperatureHistory(format!(
                "times must be finite and strictly increasing: time {} is {} s",
                i + 1,
                times_s[i]
            )));
        }
        if let Some(i) = temperatures_k
            .iter()
            .position(|t| !(t.is_finite() && *t > 0.0))
        {
            return Err(ReactorError::BadTemperatureHistory(format!(
                "temperatures must be finite and positive: temperature {} is {} K",
                i + 1,
                temperatures_k[i]
            )));
        }
        Ok(TemperatureHistory {
            times_s,
            temperatures_k,
        })
    }

    /// The points' times (s).
    pub fn times_s(&self) -> &[f64] {
        &self.times_s
    }

    /// The points' temperatures (K).
    pub fn temperatures_k(&self) -> &[f64] {
        &self.temperatures_k
    }

    /// Index `i` of the segment `(t_i, t_{i+1}]` containing `t_s`, or `None` outside.
    fn segment(&self, t_s: f64) -> Option<usize> {
        let t = &self.times_s;
        if t.len() < 2 || t_s <= t[0] || t_s > t[t.len() - 1] {
            return None;
        }
        // First point at or after t_s, minus one.
        Some(t.partition_point(|&x| x < t_s) - 1)
    }

    /// Temperature (K) at `t_s` (s).
    pub fn temperature_at(&self, t_s: f64) -> f64 {
        let (t, v) = (&self.times_s, &self.temperatures_k);
        match self.segment(t_s) {
            Some(i) => v[i] + (v[i + 1] - v[i]) * (t_s - t[i]) / (t[i + 1] - t[i]),
            None if t_s <= t[0] => v[0],
            None => v[v.len() - 1],
        }
    }

    /// dT/dt (K/s) at `t_s` (s): the slope of the segment `(t_i, t_{i+1}]` containing it
    /// (so at a breakpoint, the slope of the segment that ends there), 0 outside.
    pub fn slope_at(&self, t_s: f64) -> f64 {
        let (t, v) = (&self.times_s, &self.temperatures_k);
        match self.segment(t_s) {
            Some(i) => (v[i + 1] - v[i]) / (t[i + 1] - t[i]),
            None => 0.0,
        }
    }

    /// Breakpoints strictly inside `(from_s, to_s)` (s), where the slope jumps.
    pub(crate) fn breakpoints_between(
        &self,
        from_s: f64,
        to_s: f64,
    ) -> impl Iterator<Item = f64> + '_ {
        self.times_s
            .iter()
            .copied()
            .filter(move |&t| t > from_s && t < to_s)
    }
}

/// A batch reactor: the constraint, the temperature model and (optionally) box-model
/// conditions.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ReactorModel {
    /// Constant volume or constant pressure.
    pub constraint: Constraint,
    /// Isothermal, adiabatic or prescribed temperature.
    pub energy: Energy,
    /// Fixed species, emissions, deposition and photolysis (empty for a closed reactor).
    /// Fixed species, emissions and deposition need constant volume without the energy
    /// balance; photolysis goes with any model.
    pub conditions: BoxConditions,
    /// The feed and outflow of a continuous stirred tank; `None` for a closed (batch)
    /// reactor.
    pub flow: Option<StirredFlow>,
    /// The steady plug flow the reactor follows as a Lagrangian parcel (see
    /// [`crate::PlugFlow`]): the distance is appended to the state; constant pressure only,
    /// no stirred flow. `None` for a batch or stirred reactor.
    pub plug: Option<PlugFlow>,
    /// The volume state and feeds of a semi-batch reactor (`None`: the volume is not a
    /// state). With it, [`Constraint::ConstantVolume`] means constant density (the volume
    /// grows with the feeds). See the `semibatch` module's equations.
    pub semi_batch: Option<SemiBatch>,
    /// The liquid-phase energy description (a mixture heat capacity and a reaction
    /// enthalpy per step) instead of the species' ideal-gas thermochemistry; `None` for the
    /// ideal-gas description.
    pub liquid: Option<LiquidPhase>,
}

impl ReactorModel {
    /// The isothermal constant-volume reactor (the default).
    pub fn isothermal_constant_volume() -> Self {
        ReactorModel::default()
    }

    /// The thermochemistry the energy balance is written on: internal energy and cv for a
    /// closed constant-volume reactor, enthalpy and cp otherwise (constant pressure, every
    /// stirred tank, every plug flow and every semi-batch).
    pub(crate) fn energy_basis(&self) -> Constraint {
        if self.flow.is_some() || self.plug.is_some() || self.semi_batch.is_some() {
            Constraint::ConstantPressure
        } else {
            self.constraint
        }
    }

    /// Whether the temperature is a state of the integration (adiabatic models).
    pub fn solves_energy(&self) -> bool {
        matches!(self.energy, Energy::Adiabatic | Energy::HeatExchange(_))
    }

    /// Whether the volume (m3) is a state of the integration (the last one): with a
    /// [`SemiBatch`].
    pub fn tracks_volume(&self) -> bool {
        self.semi_batch.is_some()
    }

    /// Whether the model's equations are those of the `semibatch` module (a semi-batch or
    /// the liquid-phase description), with a dense Jacobian.
    pub(crate) fn is_extended(&self) -> bool {
        self.semi_batch.is_some() || self.liquid.is_some()
    }

    /// Number of integrated states for `n_species` species: `n_species`, plus one for the
    /// temperature when the energy balance is solved, plus one for the distance (m) of a plug
    /// flow or the volume (m3) of a semi-batch when it is tracked (the last state; a model
    /// has at most one of the two).
    pub fn n_states(&self, n_species: usize) -> usize {
        n_species
            + usize::from(self.solves_energy())
            + usize::from(self.plug.is_some())
            + usize::from(self.tracks_volume())
    }

    /// The temperature (K) at time `t_s` (s) for a state `y` (concentrations, then the
    /// temperature if solved); `held_k` is the isothermal temperature.
    pub(crate) fn temperature(&self, t_s: f64, y: &[f64], n_species: usize, held_k: f64) -> f64 {
        match &self.energy {
            Energy::Isothermal => held_k,
            Energy::Adiabatic | Energy::HeatExchange(_) => {
                y.get(n_species).copied().unwrap_or(held_k)
            }
            Energy::Prescribed(history) => history.temperature_at(t_s),
        }
    }

    /// The volume (m3) of a state `y` of a model that tracks it (the last state), `None`
    /// otherwise.
    pub(crate) fn volume(&self, y: &[f64], n_species: usize) -> Option<f64> {
        if self.tracks_volume() {
            y.get(self.n_states(n_species) - 1).copied()
        } else {
            None
        }
    }

    /// Times strictly inside `(from_s, to_s)` (s) where the right-hand side jumps or bends
    /// (a prescribed history's points, a feed schedule's points, a U A history's points),
    /// sorted, without repeats.
    pub(crate) fn breakpoints_between(&self, from_s: f64, to_s: f64) -> Vec<f64> {
        let mut out: Vec<f64> = Vec::new();
        if let Energy::Prescribed(history) = &self.energy {
            out.extend(history.breakpoints_between(from_s, to_s));
        }
        if let Some(semi) = &self.semi_batch {
            out.extend(semi.breakpoints_between(from_s, to_s));
        }
        if let Energy::HeatExchange(x) = &self.energy {
            if let Some((times, _)) = x.ua_history() {
                out.extend(times.iter().copied().filter(|&t| t > from_s && t < to_s));
            }
        }
        out.sort_by(f64::total_cmp);
        out.dedup();
        out
    }
}

/// Per-species thermochemistry of the energy balance, one entry per species, checked
/// (empty when the energy balance is not solved or the liquid description replaces it).
/// Also refuses the combinations of a semi-batch, the liquid description and the heat
/// exchange that have no equations.
pub(crate) fn energy_thermo(
    kinetics: &Kinetics,
    model: &ReactorModel,
) -> Result<Vec<Nasa7>, ReactorError> {
    crate::extended::check_model(kinetics, model)?;
    if !model.solves_energy() || model.liquid.is_some() {
        return Ok(Vec::new());
    }
    if matches!(model.energy, Energy::HeatExchange(_))
        && model.constraint != Constraint::ConstantVolume
        && model.flow.is_none()
        && model.semi_batch.is_none()
    {
        return Err(ReactorError::BadHeatExchange(
            "heat exchange at constant pressure needs the volume: give the batch a volume state (a semi-batch without feeds); U A / V is per fixed volume"
                .to_string(),
        ));
    }
    kinetics
        .species_thermo()
        .iter()
        .enumerate()
        .map(|(i, t)| t.ok_or(ReactorError::MissingThermo { species: i }))
        .collect()
}

/// The Jacobian pattern of the model's state (compressed sparse column) and, for each entry
/// of the kinetics pattern, its position in the state pattern.
///
/// - isothermal or prescribed at constant volume: the kinetics pattern itself;
/// - adiabatic at constant volume: each column gains the temperature row, and a full
///   temperature column is appended (an arrow pattern);
/// - constant pressure: full (the expansion term couples every pair of species).
pub(crate) fn state_pattern(
    kinetics: &Kinetics,
    model: &ReactorModel,
) -> Result<(JacobianPattern, Vec<usize>), PatternError> {
    let kin = kinetics.jacobian_pattern();
    let (starts, rows) = (kin.column_starts(), kin.row_indices());
    let n = kin.n();
    let m = model.n_states(n);
    if model.is_extended() {
        // Semi-batch and liquid-phase models: dense (the dilution couples every pair).
        let pattern = JacobianPattern::from_compressed(
            m,
            (0..=m).map(|j| j * m).collect(),
            (0..m * m).map(|p| p % m).collect(),
        )?;
        let mut map = Vec::with_capacity(kin.nnz());
        for col in 0..n {
            for &row in &rows[starts[col]..starts[col + 1]] {
                map.push(col * m + row);
            }
        }
        return Ok((pattern, map));
    }
    Ok(match (model.constraint, model.solves_energy()) {
        (Constraint::ConstantVolume, false) => (kin.clone(), (0..kin.nnz()).collect()),
        (Constraint::ConstantVolume, true) => {
            let mut column_starts = Vec::with_capacity(m + 1);
            let mut row_indices = Vec::with_capacity(kin.nnz() + n + m);
            let mut map = Vec::with_capacity(kin.nnz());
            column_starts.push(0);
            for col in 0..n {
                for &row in &rows[starts[col]..starts[col + 1]] {
                    map.push(row_indices.len());
                    row_indices.push(row);
                }
                row_indices.push(n);
                column_starts.push(row_indices.len());
            }
            row_indices.extend(0..m);
            column_starts.push(row_indices.len());
            (
                JacobianPattern::from_compressed(m, column_starts, row_indices)?,
                map,
            )
        }
        (Constraint::ConstantPressure, _) => {
            let pattern = JacobianPattern::from_compressed(
                m,
                (0..=m).map(|j| j * m).collect(),
                (0..m * m).map(|p| p % m).collect(),
            )?;
            let mut map = Vec::with_capacity(kin.nnz());
            for col in 0..n {
                for &row in &rows[starts[col]..starts[col + 1]] {
                    map.push(col * m + row);
                }
            }
            (pattern, map)
        }
    })
}

/// Scratch of the model's right-hand side and Jacobian, allocated once per solver.
#[derive(Debug, Clone)]
pub(crate) struct ModelScratch {
    /// Kinetics Jacobian values (kinetics pattern order).
    pub(crate) kin_values: Vec<f64>,
    /// Rate-constant slopes dk/dT.
    pub(crate) slopes: RateConstants,
    /// dw/dT per species.
    pub(crate) dw_dt: Vec<f64>,
    /// Energy weight e_i (J/mol) and heat capacity k_i (J/(mol K)) per species.
    pub(crate) energy: Vec<f64>,
    pub(crate) capacity: Vec<f64>,
    /// Per column k: sum_i dw_i/dc_k and sum_i e_i dw_i/dc_k.
    pub(crate) column_sum: Vec<f64>,
    pub(crate) column_energy: Vec<f64>,
    /// Per species: the feeds' molar flows over the volume (mol/(m3 s)), and the energy
    /// row's derivatives (semi-batch and liquid-phase models).
    pub(crate) feed: Vec<f64>,
    pub(crate) energy_row: Vec<f64>,
    /// Per step: dq_j/dT (liquid-phase models).
    pub(crate) step_slopes: Vec<f64>,
    /// Per species: the production rates w (mol/(m3 s)) (semi-batch and liquid-phase
    /// models).
    pub(crate) production: Vec<f64>,
}

impl ModelScratch {
    /// The rate-constant slopes buffer, for callers outside the Jacobian.
    pub(crate) fn slopes_mut(&mut self) -> &mut RateConstants {
        &mut self.slopes
    }

    pub(crate) fn new(kinetics: &Kinetics) -> Self {
        let n = kinetics.n_species();
        ModelScratch {
            kin_values: vec![0.0; kinetics.jacobian_pattern().nnz()],
            slopes: kinetics.rate_constants(300.0),
            dw_dt: vec![0.0; n],
            energy: vec![0.0; n],
            capacity: vec![0.0; n],
            column_sum: vec![0.0; n],
            column_energy: vec![0.0; n],
            feed: vec![0.0; n],
            energy_row: vec![0.0; n],
            step_slopes: vec![0.0; kinetics.n_steps()],
            production: vec![0.0; n],
        }
    }
}

/// Energy weight `e_i` (J/mol) and heat capacity `k_i` (J/(mol K)) of species with polynomials
/// `thermo` at `t` (K): internal energy and cv at constant volume, enthalpy and cp at constant
/// pressure.
#[inline]
pub(crate) fn energy_terms(thermo: &Nasa7, t: f64, constraint: Constraint) -> (f64, f64) {
    let h = R * t * thermo.h_over_rt(t);
    let cp = R * thermo.cp_over_r(t);
    match constraint {
        Constraint::ConstantVolume => (h - R * t, cp - R),
        Constraint::ConstantPressure => (h, cp),
    }
}

/// The stirred-tank flow and the heat exchange of a live solver's equations, changeable
/// through a shared reference while the solver holds the equations (the setters of
/// [`BatchIntegrator`](crate::BatchIntegrator)); `None` where the model has none.
#[derive(Debug, Default)]
pub(crate) struct LiveConditions {
    pub(crate) flow: Option<RefCell<StirredFlow>>,
    pub(crate) exchange: Option<RefCell<HeatExchange>>,
}

impl LiveConditions {
    /// The model's flow and heat exchange, as given. Allocates.
    pub(crate) fn of(model: &ReactorModel) -> LiveConditions {
        LiveConditions {
            flow: model.flow.clone().map(RefCell::new),
            exchange: match &model.energy {
                Energy::HeatExchange(x) => Some(RefCell::new(x.clone())),
                _ => None,
            },
        }
    }

    /// Puts the model's values back (a new session starts from the model as given).
    pub(crate) fn reset(&self, model: &ReactorModel) {
        if let (Some(live), Some(flow)) = (&self.flow, &model.flow) {
            live.borrow_mut().clone_from(flow);
        }
        if let (Some(live), Energy::HeatExchange(x)) = (&self.exchange, &model.energy) {
            live.borrow_mut().clone_from(x);
        }
    }
}

/// A model parameter read from the model itself or from the live copy.
pub(crate) enum Held<'a, T> {
    Model(&'a T),
    Live(Ref<'a, T>),
}

impl<T> std::ops::Deref for Held<'_, T> {
    type Target = T;
    fn deref(&self) -> &T {
        match self {
            Held::Model(x) => x,
            Held::Live(x) => x,
        }
    }
}

/// The model's equations on flat slices.
pub(crate) struct ModelEquations<'a> {
    pub kinetics: &'a Kinetics,
    pub model: &'a ReactorModel,
    pub thermo: &'a [Nasa7],
    /// The live flow and heat exchange (`None`: the model's own).
    pub live: Option<&'a LiveConditions>,
}

impl<'a> ModelEquations<'a> {
    /// The stirred-tank flow in force, if any.
    pub(crate) fn flow(&self) -> Option<Held<'a, StirredFlow>> {
        match self.live.and_then(|l| l.flow.as_ref()) {
            Some(live) => Some(Held::Live(live.borrow())),
            None => self.model.flow.as_ref().map(Held::Model),
        }
    }

    /// The heat exchange in force, if the model exchanges heat.
    pub(crate) fn exchange(&self) -> Option<Held<'a, HeatExchange>> {
        let Energy::HeatExchange(x) = &self.model.energy else {
            return None;
        };
        match self.live.and_then(|l| l.exchange.as_ref()) {
            Some(live) => Some(Held::Live(live.borrow())),
            None => Some(Held::Model(x)),
        }
    }
}

impl ModelEquations<'_> {
    /// `dT/dt` (K/s) of an energy-solving model at time `t_s` (s), concentrations `c` and
    /// temperature `temperature_k` with production rates `w`, and the mixture heat capacity
    /// (J/(m3 K)): the heat released by the steps plus the heat exchanged, over the heat
    /// capacity.
    fn energy_rate(&self, t_s: f64, c: &[f64], w: &[f64], temperature_k: f64) -> (f64, f64) {
        let mut release = 0.0;
        let mut capacity = 0.0;
        for ((thermo, &ci), &wi) in self.thermo.iter().zip(c).zip(w) {
            let (e, k) = energy_terms(thermo, temperature_k, self.model.energy_basis());
            release += e * wi;
            capacity += ci * k;
        }
        let exchanged = self
            .exchange()
            .map_or(0.0, |x| x.heat_flow_w_per_m3(t_s, temperature_k));
        let fed = self.feed_enthalpy(temperature_k);
        ((exchanged + fed - release) / capacity, capacity)
    }

    /// The enthalpy the feed brings per unit volume and time, relative to the tank's
    /// temperature: `sum_i c_in,i (h_i(T_in) - h_i(T)) / tau` (W/m3); 0 without flow.
    fn feed_enthalpy(&self, temperature_k: f64) -> f64 {
        let Some(flow) = self.flow() else {
            return 0.0;
        };
        let (t_in, t) = (flow.inlet_temperature_k, temperature_k);
        let sum: f64 = self
            .thermo
            .iter()
            .zip(&flow.inlet_mol_per_m3)
            .filter(|(_, &c)| c != 0.0)
            .map(|(thermo, &c)| c * R * (t_in * thermo.h_over_rt(t_in) - t * thermo.h_over_rt(t)))
            .sum();
        sum / flow.residence_time_s
    }

    /// d(feed enthalpy)/dT (W/(m3 K)): `-sum_i c_in,i cp_i(T) / tau`; 0 without flow.
    fn feed_enthalpy_slope(&self, temperature_k: f64) -> f64 {
        let Some(flow) = self.flow() else {
            return 0.0;
        };
        let sum: f64 = self
            .thermo
            .iter()
            .zip(&flow.inlet_mol_per_m3)
            .map(|(thermo, &c)| c * R * thermo.cp_over_r(temperature_k))
            .sum();
        -sum / flow.residence_time_s
    }

    /// The feed's share of the relative expansion rate at constant pressure, `C_in / (tau C)`
    /// (1/s), for total concentration `total` (mol/m3); 0 without flow.
    fn feed_expansion(&self, total: f64) -> f64 {
        self.flow()
            .map_or(0.0, |f| f.inlet_total() / (f.residence_time_s * total))
    }

    /// Adds the feed and, at constant volume, the outflow to the species rows `f`.
    pub(crate) fn add_flow(&self, c: &[f64], f: &mut [f64]) {
        let Some(flow) = self.flow() else {
            return;
        };
        let rate = 1.0 / flow.residence_time_s;
        let outflow = self.model.constraint == Constraint::ConstantVolume;
        for ((fi, &ci), &cin) in f.iter_mut().zip(c).zip(&flow.inlet_mol_per_m3) {
            *fi += cin * rate;
            if outflow {
                *fi -= ci * rate;
            }
        }
    }

    /// d(heat flow per volume)/dT in W/(m3 K) at `t_s` (s): `-U A / V` with heat exchange,
    /// else 0.
    fn exchange_slope(&self, t_s: f64) -> f64 {
        self.exchange().map_or(0.0, |x| -x.ua_per_volume_at(t_s))
    }

    /// Energy weights e_i (J/mol) over the total heat capacity (J/(m3 K)) at `(c, t)`:
    /// `dT/dt = -sum_i (e_i / C) w_i` of an adiabatic model. Empty otherwise. Allocates.
    fn energy_weights(&self, c: &[f64], temperature_k: f64) -> Vec<f64> {
        if !self.model.solves_energy() {
            return Vec::new();
        }
        let mut capacity = 0.0;
        let mut e = Vec::with_capacity(c.len());
        for (thermo, &ci) in self.thermo.iter().zip(c) {
            let (ei, ki) = energy_terms(thermo, temperature_k, self.model.energy_basis());
            capacity += ci * ki;
            e.push(ei);
        }
        e.iter_mut().for_each(|x| *x /= capacity);
        e
    }

    /// The linear part of the state derivative in the chemical production rates: `out = A w`
    /// at state `y` and model temperature `temperature_k` (K), where the state derivative is
    /// `f = A(y) w(y) + b(t, y)` with `w` the production rates (mol/(m3 s), one per species)
    /// and `b` the terms that do not come from steps (emissions, deposition, a prescribed
    /// temperature's slope). `out` has the state's length: mol/(m3 s) per species, then K/s.
    /// Rows of fixed species are zero. Allocates (sensitivity analysis, not the solver's hot
    /// path).
    pub fn chemistry_map(&self, temperature_k: f64, y: &[f64], w: &[f64], out: &mut [f64]) {
        let n = self.kinetics.n_species();
        let c = &y[..n];
        let e = self.energy_weights(c, temperature_k);
        out[..n].copy_from_slice(&w[..n]);
        let temperature_rate = if e.is_empty() {
            0.0
        } else {
            -e.iter().zip(w).map(|(e, w)| e * w).sum::<f64>()
        };
        if self.model.constraint == Constraint::ConstantPressure {
            let total: f64 = c.iter().sum();
            let w_total: f64 = w[..n].iter().sum();
            let g = w_total / total + temperature_rate / temperature_k;
            for (o, ci) in out[..n].iter_mut().zip(c) {
                *o -= ci * g;
            }
        }
        if self.model.solves_energy() {
            out[n] = temperature_rate;
        }
        if self.model.plug.is_some() {
            // The velocity does not depend on the production rates.
            out[out.len() - 1] = 0.0;
        }
        for &i in &self.model.conditions.fixed_species {
            if let Some(o) = out.get_mut(i) {
                *o = 0.0;
            }
        }
    }

    /// The derivative of the state derivative with respect to the heat release
    /// `sum_i e_i w_i` (J/(m3 s); `e_i` the enthalpy or internal energy per mole) at fixed
    /// production rates, into `out` (the state's length): `-1/C` in the temperature row
    /// (K/s per J/(m3 s), `C` the heat capacity per volume), at constant pressure the
    /// expansion `c_k/(C T)` in the species rows (1/s per J/(m3 s) per mol/m3), zero for fixed
    /// species; all zero when the model does not solve the energy balance. A shift of species
    /// `i`'s enthalpy by `dH` (J/mol) shifts `e_i` by `dH` (u = h - R T as well), so at fixed
    /// rates `df/d(dH_i) = w_i out`. No allocation.
    pub fn heat_release_direction(&self, temperature_k: f64, y: &[f64], out: &mut [f64]) {
        out.iter_mut().for_each(|x| *x = 0.0);
        if !self.model.solves_energy() {
            return;
        }
        let n = self.kinetics.n_species();
        let c = &y[..n];
        let capacity: f64 = self
            .thermo
            .iter()
            .zip(c)
            .map(|(thermo, &ci)| {
                ci * energy_terms(thermo, temperature_k, self.model.energy_basis()).1
            })
            .sum();
        let temperature_rate = -1.0 / capacity;
        if self.model.constraint == Constraint::ConstantPressure {
            for (o, ci) in out[..n].iter_mut().zip(c) {
                *o -= ci * temperature_rate / temperature_k;
            }
        }
        out[n] = temperature_rate;
        for &i in &self.model.conditions.fixed_species {
            if let Some(o) = out.get_mut(i) {
                *o = 0.0;
            }
        }
    }

    /// The transpose of [`chemistry_map`](Self::chemistry_map): `v = A^T lambda` (one entry
    /// per species) for `lambda` of the state's length.
    pub fn chemistry_map_transpose(
        &self,
        temperature_k: f64,
        y: &[f64],
        lambda: &[f64],
        v: &mut [f64],
    ) {
        let n = self.kinetics.n_species();
        let c = &y[..n];
        let e = self.energy_weights(c, temperature_k);
        v[..n].copy_from_slice(&lambda[..n]);
        for &i in &self.model.conditions.fixed_species {
            if let Some(x) = v.get_mut(i) {
                *x = 0.0;
            }
        }
        let lambda_t = if e.is_empty() { 0.0 } else { lambda[n] };
        let mut shift = vec![0.0; n];
        if self.model.constraint == Constraint::ConstantPressure {
            let total: f64 = c.iter().sum();
            let s: f64 = v[..n].iter().zip(c).map(|(l, c)| l * c).sum();
            for (k, sh) in shift.iter_mut().enumerate() {
                *sh -= s / total;
                if !e.is_empty() {
                    *sh += s * e[k] / temperature_k;
                }
            }
        }
        for (k, x) in v[..n].iter_mut().enumerate() {
            *x += shift[k];
            if !e.is_empty() {
                *x -= lambda_t * e[k];
            }
        }
    }

    /// The state derivative `f = dy/dt` at time `t_s` for state `y`, given the rate
    /// constants `k` at the model temperature `temperature_k`. `progress` is scratch of length
    /// `n_steps` (the steps' rates of progress, mol/(m3 s)). No allocation.
    pub fn rhs(
        &self,
        k: &RateConstants,
        t_s: f64,
        temperature_k: f64,
        y: &[f64],
        f: &mut [f64],
        progress: &mut [f64],
    ) {
        if self.model.is_extended() {
            self.extended_rhs(k, t_s, temperature_k, y, f, progress);
            return;
        }
        let n = self.kinetics.n_species();
        let plug = self.plug_terms(y);
        let (c, w) = (&y[..n], &mut f[..n]);
        self.kinetics
            .production_rates_and_progress(k, c, w, progress);
        let temperature_rate = match &self.model.energy {
            Energy::Isothermal => 0.0,
            Energy::Prescribed(history) => history.slope_at(t_s),
            Energy::Adiabatic | Energy::HeatExchange(_) => {
                let (rate, capacity) = self.energy_rate(t_s, c, w, temperature_k);
                rate + plug.map_or(0.0, |p| p.wall_heat(temperature_k) / capacity)
            }
        };
        if self.model.constraint == Constraint::ConstantPressure {
            let total: f64 = c.iter().sum();
            let w_total: f64 = w.iter().sum();
            let g = w_total / total + self.feed_expansion(total) + temperature_rate / temperature_k
                - plug.map_or(0.0, |p| p.pressure_rate());
            for (wi, ci) in w.iter_mut().zip(c) {
                *wi -= ci * g;
            }
        }
        self.add_flow(c, w);
        if self.model.solves_energy() {
            f[n] = temperature_rate;
        }
        if let Some(p) = plug {
            f[y.len() - 1] = p.u;
        }
    }

    /// The plug-flow terms at state `y` (the distance is its last entry); `None` without
    /// plug flow. No allocation.
    fn plug_terms(&self, y: &[f64]) -> Option<PlugTerms> {
        let plug = self.model.plug.as_ref()?;
        let n = self.kinetics.n_species();
        Some(plug.terms(&y[..n], y[y.len() - 1]))
    }

    /// Overwrites `values` (state-pattern order, see [`state_pattern`] with `map`) with the
    /// analytic Jacobian `df/dy` at `(t_s, y)`. `k` are the rate constants at
    /// `temperature_k`. No allocation.
    #[allow(clippy::too_many_arguments)]
    pub fn jacobian(
        &self,
        k: &RateConstants,
        t_s: f64,
        temperature_k: f64,
        y: &[f64],
        map: &[usize],
        scratch: &mut ModelScratch,
        values: &mut [f64],
    ) {
        if self.model.is_extended() {
            self.extended_jacobian(k, t_s, temperature_k, y, map, scratch, values);
            return;
        }
        let kinetics = self.kinetics;
        let n = kinetics.n_species();
        let m = self.model.n_states(n);
        let c = &y[..n];
        let t = temperature_k;
        let constraint = self.model.constraint;
        let basis = self.model.energy_basis();
        let energy_solved = self.model.solves_energy();
        kinetics.jacobian_sparse(k, c, &mut scratch.kin_values);
        values.iter_mut().for_each(|v| *v = 0.0);
        for (&pos, &v) in map.iter().zip(&scratch.kin_values) {
            values[pos] = v;
        }
        // The outflow of a constant-volume stirred tank, -1/tau on the species diagonal; the
        // kinetics pattern always holds the diagonal.
        if let (Some(flow), Constraint::ConstantVolume) = (self.flow(), constraint) {
            let kin = kinetics.jacobian_pattern();
            for i in 0..n {
                if let Some(p) = kin.position(i, i) {
                    values[map[p]] -= 1.0 / flow.residence_time_s;
                }
            }
        }
        if constraint == Constraint::ConstantVolume && !energy_solved {
            return;
        }
        // Per-column sums of the kinetics Jacobian (plain and energy-weighted).
        let kin = kinetics.jacobian_pattern();
        if energy_solved {
            for (i, thermo) in self.thermo.iter().enumerate() {
                let (e, cap) = energy_terms(thermo, t, basis);
                scratch.energy[i] = e;
                scratch.capacity[i] = cap;
            }
        }
        let (starts, rows) = (kin.column_starts(), kin.row_indices());
        for col in 0..n {
            let (mut sum, mut weighted) = (0.0, 0.0);
            let entries = starts[col]..starts[col + 1];
            for (&v, &row) in scratch.kin_values[entries.clone()]
                .iter()
                .zip(&rows[entries])
            {
                sum += v;
                if energy_solved {
                    weighted += scratch.energy[row] * v;
                }
            }
            scratch.column_sum[col] = sum;
            scratch.column_energy[col] = weighted;
        }
        // Production rates (needed for dT/dt and the expansion rate); reuse dw_dt as w.
        let w = &mut scratch.dw_dt;
        kinetics.production_rates(k, c, w);
        let w_total: f64 = w.iter().sum();
        let plug = self.plug_terms(y);
        let (temperature_rate, capacity_total) = match &self.model.energy {
            Energy::Isothermal => (0.0, 0.0),
            Energy::Prescribed(history) => (history.slope_at(t_s), 0.0),
            Energy::Adiabatic | Energy::HeatExchange(_) => {
                let (rate, capacity) = self.energy_rate(t_s, c, w, t);
                (
                    rate + plug.map_or(0.0, |p| p.wall_heat(t) / capacity),
                    capacity,
                )
            }
        };
        // Temperature derivatives: the energy row a_k = d(dT/dt)/dc_k and corner a_T.
        let (mut a_t, mut release_slope, mut dw_total_dt) = (0.0, 0.0, 0.0);
        if energy_solved {
            // sum_i k_i w_i (de_i/dT = k_i) and sum_i c_i dk_i/dT
            let mut capacity_release = 0.0;
            let mut capacity_slope = 0.0;
            for (i, thermo) in self.thermo.iter().enumerate() {
                capacity_release += scratch.capacity[i] * w[i];
                // dk_i/dT = dcp_i/dT for cv = cp - R and for cp alike.
                capacity_slope += c[i] * R * thermo.cp_slope_over_r(t);
            }
            kinetics.evaluate_rate_constant_slopes(t, k, &mut scratch.slopes);
            kinetics.production_rate_slopes(k, &scratch.slopes, c, &mut scratch.dw_dt);
            let dw_dt = &scratch.dw_dt;
            for (i, &d) in dw_dt.iter().enumerate() {
                release_slope += scratch.energy[i] * d;
                dw_total_dt += d;
            }
            a_t = -(capacity_release + release_slope
                - self.exchange_slope(t_s)
                - self.feed_enthalpy_slope(t)
                + plug.map_or(0.0, |p| p.k)
                + temperature_rate * capacity_slope)
                / capacity_total;
        }
        let energy_row = |col: usize| -> f64 {
            -(scratch.column_energy[col] + temperature_rate * scratch.capacity[col])
                / capacity_total
        };
        match constraint {
            Constraint::ConstantVolume => {
                // Arrow pattern: the temperature row closes each species column; the
                // temperature column is stored last.
                let mut pos = 0;
                for col in 0..n {
                    pos += starts[col + 1] - starts[col];
                    values[pos] = energy_row(col);
                    pos += 1;
                }
                values[pos..pos + n].copy_from_slice(&scratch.dw_dt);
                values[pos + n] = a_t;
            }
            Constraint::ConstantPressure => {
                let total: f64 = c.iter().sum();
                let feed = self.feed_expansion(total);
                let g = w_total / total + feed + temperature_rate / t
                    - plug.map_or(0.0, |p| p.pressure_rate());
                for col in 0..n {
                    let mut dg =
                        scratch.column_sum[col] / total - w_total / (total * total) - feed / total;
                    if energy_solved {
                        let a_k = energy_row(col);
                        dg += a_k / t;
                        values[col * m + n] = a_k;
                    }
                    if let (Some(p), Some(flow)) = (plug, &self.model.plug) {
                        // The velocity's dependence on the density: the distance row and the
                        // pressure term.
                        let du = p.du_dc(flow.molar_masses_kg_per_mol()[col]);
                        values[col * m + m - 1] = du;
                        dg -= p.s * du;
                    }
                    let column = &mut values[col * m..col * m + n];
                    for (v, ci) in column.iter_mut().zip(c) {
                        *v -= ci * dg;
                    }
                    column[col] -= g;
                }
                if energy_solved {
                    let dg_dt = dw_total_dt / total + a_t / t - temperature_rate / (t * t);
                    let column = &mut values[n * m..n * m + m];
                    for i in 0..n {
                        column[i] = scratch.dw_dt[i] - c[i] * dg_dt;
                    }
                    column[n] = a_t;
                }
                if let Some(p) = plug {
                    // The distance column: area, pressure and wall coefficient vary along z.
                    let z = m - 1;
                    let mut dg_dz = -p.pressure_rate_dz();
                    if energy_solved {
                        let da_dz = p.wall_heat_dz(t) / capacity_total;
                        values[z * m + n] = da_dz;
                        dg_dz += da_dz / t;
                    }
                    for i in 0..n {
                        values[z * m + i] = -c[i] * dg_dz;
                    }
                    values[z * m + z] = p.du_dz;
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::plug::{AxialProfile, WallExchange};

    fn hydrogen() -> Kinetics {
        let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
        let file = stoik_mechanism::load_mechanism(&path).unwrap_or_else(|e| panic!("{e}"));
        Kinetics::compile(&file.mechanism).unwrap_or_else(|e| panic!("{e}"))
    }

    /// A state in the middle of an ignition: every species present, T = 1500 K.
    fn state(n: usize, with_temperature: bool) -> Vec<f64> {
        let mut y: Vec<f64> = (0..n)
            .map(|i| 0.05 + 0.9 * ((i * 7 + 3) % 11) as f64 / 11.0)
            .collect();
        if with_temperature {
            y.push(1500.0);
        }
        y
    }

    fn models() -> Vec<ReactorModel> {
        let history = TemperatureHistory::new(vec![0.0, 1e-3, 2e-3], vec![1000.0, 1600.0, 1400.0])
            .unwrap_or_else(|e| panic!("{e}"));
        let mut out = Vec::new();
        for constraint in [Constraint::ConstantVolume, Constraint::ConstantPressure] {
            for energy in [
                Energy::Isothermal,
                Energy::Adiabatic,
                Energy::Prescribed(history.clone()),
            ] {
                out.push(ReactorModel {
                    constraint,
                    energy,
                    ..Default::default()
                });
            }
        }
        let coolant = TemperatureHistory::new(vec![0.0, 1e-3], vec![800.0, 900.0])
            .unwrap_or_else(|e| panic!("{e}"));
        out.push(ReactorModel {
            energy: Energy::HeatExchange(
                HeatExchange::new(5e4, coolant.clone()).unwrap_or_else(|e| panic!("{e}")),
            ),
            ..Default::default()
        });
        // A jacket losing its cooling: U A / V falling around the test time 0.6e-3 s.
        out.push(ReactorModel {
            energy: Energy::HeatExchange(
                HeatExchange::new(5e4, coolant.clone())
                    .and_then(|x| x.with_ua_history(vec![0.0, 0.4e-3, 0.8e-3], vec![5e4, 5e4, 0.0]))
                    .unwrap_or_else(|e| panic!("{e}")),
            ),
            ..Default::default()
        });
        // Stirred tanks: both constraints, isothermal, adiabatic and with heat exchange.
        let n = hydrogen().n_species();
        let inlet: Vec<f64> = (0..n).map(|i| 0.02 + 0.3 * ((i * 3) % 5) as f64).collect();
        let flow = StirredFlow::new(2e-4, inlet, 700.0).unwrap_or_else(|e| panic!("{e}"));
        for constraint in [Constraint::ConstantVolume, Constraint::ConstantPressure] {
            for energy in [
                Energy::Isothermal,
                Energy::Adiabatic,
                Energy::HeatExchange(
                    HeatExchange::new(5e4, coolant.clone()).unwrap_or_else(|e| panic!("{e}")),
                ),
            ] {
                out.push(ReactorModel {
                    constraint,
                    energy,
                    flow: Some(flow.clone()),
                    ..Default::default()
                });
            }
        }
        // Plug flows: isothermal, adiabatic, prescribed; with an area profile, a pressure
        // profile and a wall (circular or of given perimeter) whose slopes are all nonzero at
        // the test distance.
        let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
        let mechanism = stoik_mechanism::load_mechanism(&path)
            .unwrap_or_else(|e| panic!("{e}"))
            .mechanism;
        let masses: Vec<f64> = (0..n)
            .map(|i| mechanism.molar_mass_kg_per_mol(i).unwrap_or(0.03))
            .collect();
        let area = AxialProfile::new("area", vec![0.0, 0.2, 1.0], vec![1e-4, 3e-4, 2e-4])
            .unwrap_or_else(|e| panic!("{e}"));
        let pressure = AxialProfile::new("pressure", vec![0.0, 0.5, 1.0], vec![2e5, 1.6e5, 1.5e5])
            .unwrap_or_else(|e| panic!("{e}"));
        let plug =
            PlugFlow::new(0.02, area.clone(), masses.clone()).unwrap_or_else(|e| panic!("{e}"));
        let full = plug.clone().with_pressure_profile(pressure);
        for (energy, flow) in [
            (Energy::Isothermal, plug.clone()),
            (Energy::Isothermal, full.clone()),
            (Energy::Adiabatic, full.clone()),
            (Energy::Prescribed(history.clone()), full.clone()),
            (
                Energy::Adiabatic,
                full.clone().with_wall(
                    WallExchange::new(300.0, 900.0, None).unwrap_or_else(|e| panic!("{e}")),
                ),
            ),
            (
                Energy::Adiabatic,
                full.clone().with_wall(
                    WallExchange::new(300.0, 900.0, Some(0.05)).unwrap_or_else(|e| panic!("{e}")),
                ),
            ),
        ] {
            out.push(ReactorModel {
                constraint: Constraint::ConstantPressure,
                energy,
                plug: Some(flow),
                ..Default::default()
            });
        }
        out
    }

    /// The test state of `model`: [`state`], then the distance 0.37 m for a plug flow.
    fn model_state(model: &ReactorModel, n: usize) -> Vec<f64> {
        let mut y = state(n, model.solves_energy());
        if model.plug.is_some() {
            y.push(0.37);
        }
        y
    }

    /// The analytic Jacobian of every model against five-point central differences of the
    /// right-hand side (step 1e-4 relative; common practice).
    #[test]
    fn analytic_jacobian_matches_central_differences_for_every_model() {
        let kinetics = hydrogen();
        let n = kinetics.n_species();
        for model in models() {
            let thermo = energy_thermo(&kinetics, &model).unwrap_or_else(|e| panic!("{e}"));
            let eq = ModelEquations {
                kinetics: &kinetics,
                model: &model,
                thermo: &thermo,
                live: None,
            };
            let m = model.n_states(n);
            let t_s = 0.6e-3;
            let y = model_state(&model, n);
            let temp = model.temperature(t_s, &y, n, 1500.0);
            let (pattern, map) = state_pattern(&kinetics, &model).unwrap();
            let mut scratch = ModelScratch::new(&kinetics);
            let mut values = vec![0.0; pattern.nnz()];
            let k = kinetics.rate_constants(temp);
            eq.jacobian(&k, t_s, temp, &y, &map, &mut scratch, &mut values);
            let f = |y: &[f64]| {
                let temp = model.temperature(t_s, y, n, 1500.0);
                let k = kinetics.rate_constants(temp);
                let mut out = vec![0.0; m];
                let mut progress = vec![0.0; kinetics.n_steps()];
                eq.rhs(&k, t_s, temp, y, &mut out, &mut progress);
                out
            };
            let mut worst: f64 = 0.0;
            let largest = values.iter().fold(0.0f64, |a, v| a.max(v.abs()));
            for col in 0..m {
                // Five-point central difference, error O(h^4) (standard numerical
                // differentiation, e.g. Abramowitz & Stegun 25.3.6): with h = 1e-4 relative both
                // truncation (~h^4) and rounding (~eps/h) stay near 1e-12.
                let h = 1e-4 * y[col].abs().max(1e-3);
                let at = |offset: f64| {
                    let mut shifted = y.clone();
                    shifted[col] += offset;
                    f(&shifted)
                };
                let (f2p, f1p, f1m, f2m) = (at(2.0 * h), at(h), at(-h), at(-2.0 * h));
                for row in 0..m {
                    // Differences first: a right-hand side that does not depend on the column
                    // gives exactly 0 (summing the four values first leaves rounding).
                    let fd = (8.0 * (f1p[row] - f1m[row]) - (f2p[row] - f2m[row])) / (12.0 * h);
                    let analytic = pattern.position(row, col).map_or(0.0, |p| values[p]);
                    // Floor: rounding in the differences is about eps |f| / h, above the
                    // tolerance for the small entries of a column whose rates are large.
                    let scale = fd.abs().max(analytic.abs()).max(1e-9 * largest);
                    worst = worst.max((fd - analytic).abs() / scale);
                }
            }
            let energy = match &model.energy {
                Energy::Prescribed(_) => "prescribed",
                Energy::Adiabatic => "adiabatic",
                Energy::HeatExchange(_) => "heat exchange",
                Energy::Isothermal => "isothermal",
            };
            eprintln!(
                "{:?} {energy}: worst relative Jacobian error {worst:.1e}",
                model.constraint
            );
            assert!(
                worst < 1e-6,
                "{model:?}: worst relative Jacobian error {worst:e}"
            );
        }
    }

    /// The parameter derivative `A nu_j r_j` of every step, for every model, against central
    /// differences of the right-hand side with the step's forward rate constant scaled by
    /// 1 +- d (`Kinetics::scale_forward`; the definition of the derivative, `d f/d ln k =
    /// d f/d lambda` at lambda = 1; the right-hand side is linear in the scale lambda, so the
    /// quotient with d = 0.1 is exact up to rounding), and the transpose against the identity
    /// `lambda . (A w) = (A^T lambda) . w`.
    #[test]
    fn chemistry_map_gives_the_rate_constant_derivative_for_every_model() {
        let kinetics = hydrogen();
        let n = kinetics.n_species();
        for model in models() {
            let thermo = energy_thermo(&kinetics, &model).unwrap_or_else(|e| panic!("{e}"));
            let m = model.n_states(n);
            let t_s = 0.6e-3;
            let y = model_state(&model, n);
            let temp = model.temperature(t_s, &y, n, 1500.0);
            let eq = ModelEquations {
                kinetics: &kinetics,
                model: &model,
                thermo: &thermo,
                live: None,
            };
            let k = kinetics.rate_constants(temp);
            let mut r = vec![0.0; kinetics.n_steps()];
            kinetics.scaling_rates(&k, &y[..n], &mut r);
            let rhs = |kin: &Kinetics| {
                let eq = ModelEquations {
                    kinetics: kin,
                    model: &model,
                    thermo: &thermo,
                    live: None,
                };
                let k = kin.rate_constants(temp);
                let mut out = vec![0.0; m];
                let mut progress = vec![0.0; kin.n_steps()];
                eq.rhs(&k, t_s, temp, &y, &mut out, &mut progress);
                out
            };
            let d = 0.1;
            for (j, &rj) in r.iter().enumerate() {
                let mut w = vec![0.0; n];
                for &(i, nu) in kinetics.net_changes(j) {
                    w[i] = nu * rj;
                }
                let mut analytic = vec![0.0; m];
                eq.chemistry_map(temp, &y, &w, &mut analytic);
                let (mut up, mut down) = (kinetics.clone(), kinetics.clone());
                assert!(up.scale_forward(j, 1.0 + d) && down.scale_forward(j, 1.0 - d));
                let (fu, fdn) = (rhs(&up), rhs(&down));
                // Rounding of the right-hand side's sums (a few eps of its largest term, taken
                // as 1e-13 of its largest entry) divided by 2d.
                let floor = 1e-13 * fu.iter().fold(0.0f64, |a, v| a.max(v.abs())) / (2.0 * d);
                for row in 0..m {
                    let fd = (fu[row] - fdn[row]) / (2.0 * d);
                    let err = (fd - analytic[row]).abs();
                    assert!(
                        err <= 1e-9 * fd.abs() + floor,
                        "{model:?} step {j} row {row}: analytic {:e}, differences {fd:e}",
                        analytic[row]
                    );
                }
                let lambda: Vec<f64> = (0..m).map(|i| 0.3 + ((i * 5) % 7) as f64).collect();
                let mut v = vec![0.0; n];
                eq.chemistry_map_transpose(temp, &y, &lambda, &mut v);
                let left: f64 = lambda.iter().zip(&analytic).map(|(l, a)| l * a).sum();
                let right: f64 = v.iter().zip(&w).map(|(v, w)| v * w).sum();
                let magnitude: f64 = v.iter().zip(&w).map(|(v, w)| (v * w).abs()).sum::<f64>()
                    + lambda
                        .iter()
                        .zip(&analytic)
                        .map(|(l, a)| (l * a).abs())
                        .sum::<f64>();
                assert!(
                    (left - right).abs() <= 1e-12 * magnitude,
                    "{model:?} step {j}: transpose {right:e} against {left:e}"
                );
            }
        }
    }

    /// The piecewise-linear history: linear between points, held outside, slope of the
    /// segment ending at a breakpoint.
    #[test]
    fn temperature_history_interpolates_linearly() {
        let h = TemperatureHistory::new(vec![0.0, 2.0, 4.0], vec![300.0, 700.0, 500.0])
            .unwrap_or_else(|e| panic!("{e}"));
        assert_eq!(h.temperature_at(-1.0), 300.0);
        assert_eq!(h.temperature_at(1.0), 500.0);
        assert_eq!(h.temperature_at(3.0), 600.0);
        assert_eq!(h.temperature_at(9.0), 500.0);
        assert_eq!(h.slope_at(2.0), 200.0);
        assert_eq!(h.slope_at(2.5), -100.0);
        assert_eq!(h.slope_at(5.0), 0.0);
        assert!(TemperatureHistory::new(vec![0.0, 0.0], vec![300.0, 400.0]).is_err());
        assert!(TemperatureHistory::new(vec![0.0], vec![-3.0]).is_err());
    }
}
