//! The steady ideal plug-flow reactor, integrated as a Lagrangian parcel.
//!
//! A steady one-dimensional ideal-gas flow through a tube of cross-section `A(z)` (m2) with
//! the mass flow rate `mdot` (kg/s) conserved: no axial mixing, uniform over each
//! cross-section. A parcel of gas entering at `z = 0` at time `t = 0` is at distance `z(t)`
//! after the residence time `t`, and `dz/dt = u`, the local velocity. Following the parcel
//! turns the steady balances in `z` into ordinary differential equations in `t`: the parcel
//! is a closed batch (it exchanges no mass with its neighbours) whose pressure follows the
//! tube's pressure profile `P(z)` and which exchanges heat with the wall.
//!
//! # Equations
//!
//! State `y = (c, T, z)`: the concentrations `c_i` (mol/m3), the temperature `T` (K) when
//! the energy balance is solved, and the distance `z` (m). With `w` the net production rates
//! (mol/(m3 s)), `M_i` the molar masses (kg/mol), `rho = sum_i c_i M_i` the density (kg/m3)
//! and `C = sum_i c_i` the total concentration:
//!
//! - velocity: `dz/dt = u = mdot / (rho A(z))` (mass conservation, `rho u A = mdot`);
//! - species: `dc_i/dt = w_i - c_i g`,
//!   `g = sum_k w_k / C + (dT/dt) / T - u (dP/dz) / P`;
//! - energy (enthalpy basis): `sum_i c_i cp_i dT/dt = -sum_i h_i w_i + q`,
//!   `q = U (p(z) / A(z)) (T_wall - T)` (W/m3), with `p(z)` the wetted perimeter (given, or
//!   `2 sqrt(pi A)` of a circular tube).
//!
//! Derivation of the species equation. The steady species balance over a slice `dz` is
//! `d(c_i u A)/dz = w_i A`. Dividing by the mass balance `rho u A = mdot` gives, for the
//! specific amounts `n_i = c_i / rho` (mol/kg), `u dn_i/dz = w_i / rho`, i.e. along the parcel
//! (`d/dt = u d/dz`) `dn_i/dt = w_i / rho`: per unit mass the parcel changes only by
//! reaction, as a closed batch does. Then `dc_i/dt = d(rho n_i)/dt = w_i + c_i d(ln rho)/dt`.
//! For an ideal gas `rho = P Mbar / (R T)` with `Mbar = 1 / sum_k n_k`, so
//! `d(ln rho)/dt = d(ln P)/dt - d(ln T)/dt - d(ln sum_k n_k)/dt`, and
//! `d(ln sum_k n_k)/dt = (sum_k w_k / rho) / (C / rho) = sum_k w_k / C`. The parcel's pressure
//! changes only through its motion along the profile, `d(ln P)/dt = u (dP/dz) / P`. Together,
//! `dc_i/dt = w_i - c_i (sum_k w_k / C + (dT/dt) / T - u (dP/dz) / P)`: the constant-pressure
//! batch of [`crate::Constraint::ConstantPressure`] plus the term `c_i u (dP/dz) / P`. At a
//! fixed composition and temperature this gives `d(ln c_i)/dt = d(ln P)/dt`: concentrations
//! scale with the pressure.
//!
//! Energy: the steady-flow first law per unit mass, `mdot dh/dz = U p(z) (T_wall - T)` (kinetic
//! and potential energy and viscous work neglected; the usual plug-flow assumption), with
//! `h = sum_i n_i h_i(T)` (ideal gas: no pressure dependence). Along the parcel,
//! `dh/dt = q / rho`, and `dh/dt = sum_i n_i cp_i dT/dt + sum_i h_i w_i / rho`; multiplying by
//! `rho` gives the equation above (O. Levenspiel, *Chemical Reaction Engineering*, 3rd ed.,
//! ch. 9; H. S. Fogler, *Elements of Chemical Reaction Engineering*, 4th ed., ch. 8).
//!
//! The residence time `t` of the parcel is the integral of `dz / u` along the tube.
//!
//! # Jacobian
//!
//! The terms beyond the constant-pressure batch are written analytically (checked against
//! finite differences in the `model` tests). With `s = (dP/dz) / P` (1/m; piecewise linear
//! `P` has `d^2P/dz^2 = 0` inside a segment, so `ds/dz = -s^2`) and `a = (dA/dz) / A`:
//!
//! - `du/dc_k = -u M_k / rho`, `du/dz = -u a`, `du/dT = 0` (the density is `sum c M`);
//! - pressure term `u s`: `d(u s)/dc_k = s du/dc_k`, `d(u s)/dz = s du/dz - u s^2`;
//! - wall coefficient per volume `k(z) = U p / A`: `dk/dz = -k a` for a given perimeter,
//!   `-k a / 2` for a circular tube; `dq/dT = -k`, `dq/dz = (dk/dz) (T_wall - T)`.
//!
//! Piecewise-linear profiles have slopes that jump at their points: the right-hand side
//! (through `dP/dz`) and the Jacobian (through `dA/dz`) jump there; the solver's error
//! control handles these jumps.

use crate::ReactorError;

/// A quantity given along the reactor axis: linear in the distance between the given points,
/// held at the first value before the first point and at the last value after the last one.
#[derive(Debug, Clone, PartialEq)]
pub struct AxialProfile {
    distances_m: Vec<f64>,
    values: Vec<f64>,
}

impl AxialProfile {
    /// A profile through the points (`distances_m[i]` in m, `values[i]` in the quantity's SI
    /// unit: m2 for an area, Pa for a pressure): at least one point, equal lengths, distances
    /// finite, not negative and strictly increasing, values finite and positive.
    /// `what` names the quantity in error messages.
    pub fn new(
        what: &str,
        distances_m: Vec<f64>,
        values: Vec<f64>,
    ) -> Result<AxialProfile, ReactorError> {
        if distances_m.is_empty() || distances_m.len() != values.len() {
            return Err(ReactorError::BadPlugFlow(format!(
                "the {what} profile needs the same number (at least one) of distances and values, got {} and {}",
                distances_m.len(),
                values.len()
            )));
        }
        if let Some(i) = (0..distances_m.len()).find(|&i| {
            !(distances_m[i].is_finite() && distances_m[i] >= 0.0)
                || (i > 0 && distances_m[i] <= distances_m[i - 1])
        }) {
            return Err(ReactorError::BadPlugFlow(format!(
                "the {what} profile's distances must be finite, not negative and strictly increasing: distance {} is {:e} m",
                i + 1,
                distances_m[i]
            )));
        }
        if let Some(i) = values.iter().position(|v| !(v.is_finite() && *v > 0.0)) {
            return Err(ReactorError::BadPlugFlow(format!(
                "the {what} profile's values must be finite and positive: value {} is {:e}",
                i + 1,
                values[i]
            )));
        }
        Ok(AxialProfile {
            distances_m,
            values,
        })
    }

    /// A profile of one constant value (finite and positive).
    pub fn constant(what: &str, value: f64) -> Result<AxialProfile, ReactorError> {
        AxialProfile::new(what, vec![0.0], vec![value])
    }

    /// The points' distances (m).
    pub fn distances_m(&self) -> &[f64] {
        &self.distances_m
    }

    /// The points' values (SI unit of the quantity).
    pub fn values(&self) -> &[f64] {
        &self.values
    }

    /// Index `i` of the segment `[z_i, z_{i+1})` containing `z_m`, or `None` outside.
    fn segment(&self, z_m: f64) -> Option<usize> {
        let z = &self.distances_m;
        if z.len() < 2 || z_m.is_nan() || z_m < z[0] || z_m >= z[z.len() - 1] {
            return None;
        }
        Some(z.partition_point(|&x| x <= z_m) - 1)
    }

    /// The value at `z_m` (m).
    pub fn value_at(&self, z_m: f64) -> f64 {
        let (z, v) = (&self.distances_m, &self.values);
        match self.segment(z_m) {
            Some(i) => v[i] + (v[i + 1] - v[i]) * (z_m - z[i]) / (z[i + 1] - z[i]),
            None if z_m < z[0] => v[0],
            None => v[v.len() - 1],
        }
    }

    /// The slope (unit per m) at `z_m` (m): that of the segment `[z_i, z_{i+1})` containing
    /// it (at a point, the segment that starts there), 0 outside.
    pub fn slope_at(&self, z_m: f64) -> f64 {
        let (z, v) = (&self.distances_m, &self.values);
        match self.segment(z_m) {
            Some(i) => (v[i + 1] - v[i]) / (z[i + 1] - z[i]),
            None => 0.0,
        }
    }
}

/// Heat exchange through the tube wall: the flux `U (T_wall - T)` (W/m2) over the wetted
/// perimeter.
#[derive(Debug, Clone, PartialEq)]
pub struct WallExchange {
    coefficient_w_per_m2_k: f64,
    wall_temperature_k: f64,
    perimeter_m: Option<f64>,
}

impl WallExchange {
    /// A wall of overall heat-transfer coefficient `coefficient_w_per_m2_k` (W/(m2 K),
    /// finite, not negative) at `wall_temperature_k` (K, finite and positive). `perimeter_m`
    /// (m, finite and positive) is the wetted perimeter; `None` takes that of a circular
    /// tube of the local area, `2 sqrt(pi A)`.
    pub fn new(
        coefficient_w_per_m2_k: f64,
        wall_temperature_k: f64,
        perimeter_m: Option<f64>,
    ) -> Result<WallExchange, ReactorError> {
        if !(coefficient_w_per_m2_k.is_finite() && coefficient_w_per_m2_k >= 0.0) {
            return Err(ReactorError::BadPlugFlow(format!(
                "the wall heat-transfer coefficient must be finite and not negative, got {coefficient_w_per_m2_k:e} W/(m2 K)"
            )));
        }
        if !(wall_temperature_k.is_finite() && wall_temperature_k > 0.0) {
            return Err(ReactorError::BadPlugFlow(format!(
                "the wall temperature must be finite and positive, got {wall_temperature_k:e} K"
            )));
        }
        if let Some(p) = perimeter_m {
            if !(p.is_finite() && p > 0.0) {
                return Err(ReactorError::BadPlugFlow(format!(
                    "the wall perimeter must be finite and positive, got {p:e} m"
                )));
            }
        }
        Ok(WallExchange {
            coefficient_w_per_m2_k,
            wall_temperature_k,
            perimeter_m,
        })
    }

    /// Overall heat-transfer coefficient U (W/(m2 K)).
    pub fn coefficient_w_per_m2_k(&self) -> f64 {
        self.coefficient_w_per_m2_k
    }

    /// Wall temperature (K).
    pub fn wall_temperature_k(&self) -> f64 {
        self.wall_temperature_k
    }

    /// The given wetted perimeter (m); `None` for a circular tube.
    pub fn perimeter_m(&self) -> Option<f64> {
        self.perimeter_m
    }

    /// `U p / A` (W/(m3 K)) and its derivative along the axis (W/(m4 K)) for the local area
    /// `area_m2` and its relative slope `a = (dA/dz) / A` (1/m).
    fn per_volume(&self, area_m2: f64, a: f64) -> (f64, f64) {
        match self.perimeter_m {
            Some(p) => {
                let k = self.coefficient_w_per_m2_k * p / area_m2;
                (k, -k * a)
            }
            None => {
                let k = self.coefficient_w_per_m2_k * 2.0 * (std::f64::consts::PI / area_m2).sqrt();
                (k, -0.5 * k * a)
            }
        }
    }
}

/// The steady plug flow of an ideal gas through a tube (see the module documentation for the
/// equations): the mass flow rate, the cross-section along the axis, optionally a pressure
/// profile and heat exchange through the wall, and the species' molar masses.
#[derive(Debug, Clone, PartialEq)]
pub struct PlugFlow {
    mass_flow_kg_per_s: f64,
    area: AxialProfile,
    pressure: Option<AxialProfile>,
    wall: Option<WallExchange>,
    molar_masses_kg_per_mol: Vec<f64>,
}

impl PlugFlow {
    /// A flow of `mass_flow_kg_per_s` (kg/s, finite and positive) through the cross-section
    /// `area` (m2 against m) at constant pressure without wall exchange, for species of molar
    /// masses `molar_masses_kg_per_mol` (kg/mol, one per species, finite and positive).
    pub fn new(
        mass_flow_kg_per_s: f64,
        area: AxialProfile,
        molar_masses_kg_per_mol: Vec<f64>,
    ) -> Result<PlugFlow, ReactorError> {
        if !(mass_flow_kg_per_s.is_finite() && mass_flow_kg_per_s > 0.0) {
            return Err(ReactorError::BadPlugFlow(format!(
                "the mass flow rate must be finite and positive, got {mass_flow_kg_per_s:e} kg/s"
            )));
        }
        if let Some((i, m)) = molar_masses_kg_per_mol
            .iter()
            .enumerate()
            .find(|(_, m)| !(m.is_finite() && **m > 0.0))
        {
            return Err(ReactorError::BadPlugFlow(format!(
                "the molar mass of species {i} must be finite and positive, got {m:e} kg/mol"
            )));
        }
        Ok(PlugFlow {
            mass_flow_kg_per_s,
            area,
            pressure: None,
            wall: None,
            molar_masses_kg_per_mol,
        })
    }

    /// The flow with the pressure following `pressure` (Pa against m) along the axis: the
    /// parcel's pressure changes in the ratio `P(z) / P(0)` (so the inlet pressure is that of
    /// the initial state; give the profile's first point at the inlet).
    pub fn with_pressure_profile(mut self, pressure: AxialProfile) -> PlugFlow {
        self.pressure = Some(pressure);
        self
    }

    /// The flow with heat exchange through the wall (needs the energy balance,
    /// [`crate::Energy::Adiabatic`], to which the wall's heat is added).
    pub fn with_wall(mut self, wall: WallExchange) -> PlugFlow {
        self.wall = Some(wall);
        self
    }

    /// Mass flow rate (kg/s).
    pub fn mass_flow_kg_per_s(&self) -> f64 {
        self.mass_flow_kg_per_s
    }

    /// The cross-section (m2 against m).
    pub fn area(&self) -> &AxialProfile {
        &self.area
    }

    /// The pressure profile (Pa against m), if any.
    pub fn pressure_profile(&self) -> Option<&AxialProfile> {
        self.pressure.as_ref()
    }

    /// The wall heat exchange, if any.
    pub fn wall(&self) -> Option<&WallExchange> {
        self.wall.as_ref()
    }

    /// Molar masses (kg/mol), one per species.
    pub fn molar_masses_kg_per_mol(&self) -> &[f64] {
        &self.molar_masses_kg_per_mol
    }

    /// Density (kg/m3) of concentrations `c` (mol/m3).
    pub fn density_kg_per_m3(&self, c: &[f64]) -> f64 {
        c.iter()
            .zip(&self.molar_masses_kg_per_mol)
            .map(|(c, m)| c * m)
            .sum()
    }

    /// Velocity (m/s) of a gas of concentrations `c` (mol/m3) at distance `z_m` (m).
    pub fn velocity_m_per_s(&self, c: &[f64], z_m: f64) -> f64 {
        self.mass_flow_kg_per_s / (self.density_kg_per_m3(c) * self.area.value_at(z_m))
    }

    /// The plug-flow terms at concentrations `c` and distance `z_m`. No allocation.
    pub(crate) fn terms(&self, c: &[f64], z_m: f64) -> PlugTerms {
        let rho = self.density_kg_per_m3(c);
        let area = self.area.value_at(z_m);
        let a = self.area.slope_at(z_m) / area;
        let u = self.mass_flow_kg_per_s / (rho * area);
        let s = self
            .pressure
            .as_ref()
            .map_or(0.0, |p| p.slope_at(z_m) / p.value_at(z_m));
        let (k, dk_dz, wall_k) = match &self.wall {
            Some(w) => {
                let (k, dk) = w.per_volume(area, a);
                (k, dk, w.wall_temperature_k)
            }
            None => (0.0, 0.0, 0.0),
        };
        PlugTerms {
            u,
            du_dz: -u * a,
            rho,
            s,
            k,
            dk_dz,
            wall_k,
        }
    }
}

/// The plug-flow terms of the equations at one state (see the module documentation).
#[derive(Debug, Clone, Copy)]
pub(crate) struct PlugTerms {
    /// Velocity u (m/s) and du/dz (1/s).
    pub u: f64,
    pub du_dz: f64,
    /// Density (kg/m3).
    pub rho: f64,
    /// (dP/dz) / P (1/m).
    pub s: f64,
    /// U p / A (W/(m3 K)) and its derivative along the axis (W/(m4 K)).
    pub k: f64,
    pub dk_dz: f64,
    /// Wall temperature (K); 0 without wall.
    pub wall_k: f64,
}

impl PlugTerms {
    /// The pressure term `u (dP/dz) / P` of `g` (1/s).
    pub fn pressure_rate(&self) -> f64 {
        self.u * self.s
    }

    /// d(pressure term)/dz (1/(m s)).
    pub fn pressure_rate_dz(&self) -> f64 {
        self.s * self.du_dz - self.u * self.s * self.s
    }

    /// du/dc_k (m4/(mol s)) for a species of molar mass `molar_mass` (kg/mol).
    pub fn du_dc(&self, molar_mass: f64) -> f64 {
        -self.u * molar_mass / self.rho
    }

    /// Heat through the wall per volume (W/m3) at `temperature_k` (K).
    pub fn wall_heat(&self, temperature_k: f64) -> f64 {
        self.k * (self.wall_k - temperature_k)
    }

    /// d(wall heat)/dz (W/m4) at `temperature_k` (K).
    pub fn wall_heat_dz(&self, temperature_k: f64) -> f64 {
        self.dk_dz * (self.wall_k - temperature_k)
    }
}

/// Where a plug-flow run reports its state.
#[derive(Debug, Clone, PartialEq)]
pub enum PlugOutputs {
    /// At these distances from the inlet (m): finite, strictly increasing, the first 0.
    Distances(Vec<f64>),
    /// At these residence times (s): finite, strictly increasing, the first 0.
    ResidenceTimes(Vec<f64>),
}

impl PlugOutputs {
    /// The output coordinates (m or s).
    pub fn values(&self) -> &[f64] {
        match self {
            PlugOutputs::Distances(v) | PlugOutputs::ResidenceTimes(v) => v,
        }
    }

    /// Checks that the coordinates start at 0 and increase strictly.
    pub(crate) fn check(&self) -> Result<(), ReactorError> {
        let (v, unit) = match self {
            PlugOutputs::Distances(v) => (v, "m"),
            PlugOutputs::ResidenceTimes(v) => (v, "s"),
        };
        match v.first() {
            None => return Err(ReactorError::NoOutputTimes),
            Some(&first) if first != 0.0 => {
                return Err(ReactorError::BadPlugFlow(format!(
                    "the first output must be the inlet (0 {unit}), got {first:e} {unit}"
                )))
            }
            _ => {}
        }
        if let Some(i) = (1..v.len()).find(|&i| !(v[i].is_finite() && v[i] > v[i - 1])) {
            return Err(ReactorError::BadPlugFlow(format!(
                "outputs must be finite and strictly increasing: output {} is {:e} {unit}",
                i + 1,
                v[i]
            )));
        }
        Ok(())
    }
}

/// The profiles of a plug-flow run: the state at every output against both the distance
/// from the inlet and the residence time.
#[derive(Debug, Clone, PartialEq)]
pub struct PlugFlowProfiles {
    /// Distance from the inlet (m) at each output row. For distance outputs these are the
    /// requested distances: each row is the solver's interpolant at the residence time where
    /// its distance equals the request (found by bracketed root finding on the interpolant to
    /// a few units of round-off of the time); for time outputs, the distance state there.
    pub distances_m: Vec<f64>,
    /// Velocity `mdot / (rho A)` (m/s) at each output row.
    pub velocities_m_per_s: Vec<f64>,
    /// The rows themselves: `times_s` holds the residence times (s), then concentrations,
    /// temperatures, dT/dt along the parcel (K/s) and the solver statistics.
    pub profiles: crate::Profiles,
}

/// Runs the plug flow of `model` (which must have [`ReactorModel::plug`](crate::ReactorModel::plug)) for `kinetics`
/// from the inlet concentrations `initial_mol_per_m3` (mol/m3) at `temperature_k` (K, the
/// held or inlet temperature) and reports the state at `outputs` (distances or residence
/// times). The inlet pressure is that of the initial state.
///
/// Errors: [`ReactorError`] for bad arguments (among them [`ReactorError::BadPlugFlow`]: no
/// plug flow in `model`, a model it does not go with, outputs not starting at 0 or not
/// increasing); a solver failure part way gives the failure whose partial profile holds the
/// rows reached, which are those of the first outputs, in order (their residence times in
/// `times_s`).
pub fn simulate_plug_flow(
    kinetics: &stoik_kinetics::Kinetics,
    model: &crate::ReactorModel,
    temperature_k: f64,
    initial_mol_per_m3: &[f64],
    outputs: &PlugOutputs,
    options: &crate::IntegrationOptions,
) -> Result<PlugFlowProfiles, crate::IntegrationError> {
    let mut system = crate::BatchSystem::with_model(kinetics, model, temperature_k, options)?;
    system.integrate_plug_flow(initial_mol_per_m3, outputs)
}

/// Checks that `model`'s plug flow (if any) goes with the rest of the model for `n_species`
/// species.
pub(crate) fn validate(model: &crate::ReactorModel, n_species: usize) -> Result<(), ReactorError> {
    let Some(plug) = &model.plug else {
        return Ok(());
    };
    let refuse = |why: &str| Err(ReactorError::BadPlugFlow(why.to_string()));
    if plug.molar_masses_kg_per_mol.len() != n_species {
        return Err(ReactorError::BadPlugFlow(format!(
            "{} molar masses for {n_species} species",
            plug.molar_masses_kg_per_mol.len()
        )));
    }
    if model.constraint != crate::Constraint::ConstantPressure {
        return refuse("a plug flow of gas is at constant pressure (or follows its pressure profile): use Constraint::ConstantPressure");
    }
    if model.flow.is_some() {
        return refuse("a reactor is a stirred tank or a plug flow, not both");
    }
    if model.semi_batch.is_some() || model.liquid.is_some() {
        return refuse(
            "a plug flow of ideal gas is not a semi-batch and has no liquid-phase description",
        );
    }
    if !model.conditions.fixed_species.is_empty()
        || !model.conditions.emissions.is_empty()
        || !model.conditions.deposition.is_empty()
    {
        return refuse("fixed species, emissions and deposition do not go with a plug flow");
    }
    match (&model.energy, &plug.wall) {
        (crate::Energy::HeatExchange(_), _) => {
            refuse("a plug flow exchanges heat through its wall (PlugFlow::with_wall with Energy::Adiabatic), not through HeatExchange")
        }
        (crate::Energy::Isothermal | crate::Energy::Prescribed(_), Some(_)) => {
            refuse("wall heat exchange needs the energy balance (Energy::Adiabatic)")
        }
        _ => Ok(()),
    }
}
