//! Semi-batch reactors (feeds into a batch whose volume changes) and the liquid-phase energy
//! description (a constant mixture heat capacity and a reaction enthalpy per step).
//!
//! # Semi-batch
//!
//! A [`SemiBatch`] gives the batch its volume `V` (m3) as the last state and a list of
//! [`Feed`]s. Each feed delivers, at time `t`, the molar flows `F_i(t)` (mol/s) and the
//! volumetric flow `q(t)` (m3/s) of its stream at the feed temperature `T_f` (K). With `w`
//! the production rates of the kinetics and `phi_i = sum_feeds F_i / V` (mol/(m3 s)):
//!
//! - species: `dc_i/dt = w_i + phi_i - c_i D`, `D = d ln V/dt` the dilution rate;
//! - constant density ([`Constraint::ConstantVolume`](crate::Constraint::ConstantVolume)
//!   with a semi-batch: the liquid batch): `dV/dt = sum_feeds q`, `D = (dV/dt) / V`;
//! - ideal gas at constant pressure ([`Constraint::ConstantPressure`](crate::Constraint::ConstantPressure)):
//!   `V = n R T / P`, so `D = (sum_k w_k + sum_k phi_k) / C + (dT/dt) / T` (`C = sum_k c_k`)
//!   and `dV/dt = V D`; the molar volume of a species feed plays no part.
//!
//! A semi-batch without feeds is a closed batch whose volume is tracked: what a heat
//! exchange given as a total `U A` (W/K, [`HeatExchange::total`](crate::HeatExchange::total))
//! needs at constant pressure, where the volume of a closed batch changes with its moles
//! and temperature. (Design: the exchange `U A (T_c - T) / V` with `V` a state needs no
//! molar masses, unlike a per-mass form `(U A / m) rho` with `rho = sum_i c_i M_i`, and it is
//! the same term a semi-batch needs; the volume row adds one dense row and column to a
//! Jacobian that is dense at constant pressure anyway.)
//!
//! The energy balance of a semi-batch is written on enthalpy (constant pressure; pressure
//! work neglected at constant density, as for liquids). With ideal-gas thermochemistry,
//! `sum_i c_i cp_i dT/dt = sum_feeds sum_i (F_i / V) (h_i(T_f) - h_i(T)) - sum_i h_i w_i +
//! Q/V` (H. S. Fogler, *Elements of Chemical Reaction Engineering*, 4th ed., ch. 9,
//! semibatch energy balance).
//!
//! # Liquid phase
//!
//! A [`LiquidPhase`] replaces the species' thermochemistry by a constant mixture heat
//! capacity per volume `rho cp` (J/(m3 K)) and a constant reaction enthalpy `dH_j` (J/mol)
//! per step. The density is constant: the reactor must be at constant volume (constant
//! density with a semi-batch). With `r_j` the net rate of progress of step `j`:
//! `rho cp dT/dt = sum_j (-dH_j) r_j + sum_feeds (q / V) rho cp (T_f - T) + Q/V` (each fed
//! volume brings the mixture's heat capacity per volume). Reverse rate constants from
//! thermochemistry (`kf / Kc`) have no equilibrium constant in this description: such steps
//! are refused; give reversible steps explicit reverse parameters.
//!
//! `Q/V` is the heat exchanged per volume: `U A / V (T_coolant - T)` with the exchange given
//! per volume, `U A (T_coolant - T) / V` with `V` the volume state for a total `U A`.

use crate::ReactorError;

/// A feed's rate against time: linear between the given points, zero before the first
/// point and after the last (the feed is off outside its schedule). The rate is in m3/s
/// for a volumetric stream and in mol/s for a species stream (see [`FeedStream`]).
#[derive(Debug, Clone, PartialEq)]
pub struct FeedSchedule {
    times_s: Vec<f64>,
    rates: Vec<f64>,
}

impl FeedSchedule {
    /// A schedule through the points (`times_s[i]` in s, `rates[i]` in the stream's unit):
    /// at least one point, equal lengths, times finite and strictly increasing (two or more
    /// points; a single point is an instantaneous rate that delivers nothing), rates finite
    /// and not negative.
    pub fn points(times_s: Vec<f64>, rates: Vec<f64>) -> Result<FeedSchedule, ReactorError> {
        if times_s.len() < 2 || times_s.len() != rates.len() {
            return Err(ReactorError::BadFeed(format!(
                "a feed schedule needs the same number (at least two) of times and rates, got {} and {}",
                times_s.len(),
                rates.len()
            )));
        }
        if let Some(i) = (0..times_s.len())
            .find(|&i| !times_s[i].is_finite() || (i > 0 && times_s[i] <= times_s[i - 1]))
        {
            return Err(ReactorError::BadFeed(format!(
                "feed times must be finite and strictly increasing: time {} is {:e} s",
                i + 1,
                times_s[i]
            )));
        }
        if let Some(i) = rates.iter().position(|r| !(r.is_finite() && *r >= 0.0)) {
            return Err(ReactorError::BadFeed(format!(
                "feed rates must be finite and not negative: rate {} is {:e}",
                i + 1,
                rates[i]
            )));
        }
        Ok(FeedSchedule { times_s, rates })
    }

    /// A constant `rate` (finite, not negative; m3/s or mol/s) from `from_s` to `to_s` (s,
    /// finite, `from_s < to_s`), zero outside.
    pub fn window(from_s: f64, to_s: f64, rate: f64) -> Result<FeedSchedule, ReactorError> {
        FeedSchedule::points(vec![from_s, to_s], vec![rate, rate])
    }

    /// The points' times (s).
    pub fn times_s(&self) -> &[f64] {
        &self.times_s
    }

    /// The points' rates (m3/s or mol/s).
    pub fn rates(&self) -> &[f64] {
        &self.rates
    }

    /// The rate at `t_s` (s): linear in the segment `(t_i, t_{i+1}]` containing it (the
    /// first point's own time included), zero outside `[t_first, t_last]`.
    pub fn rate_at(&self, t_s: f64) -> f64 {
        let (t, r) = (&self.times_s, &self.rates);
        let last = t.len() - 1;
        if t_s < t[0] || t_s > t[last] {
            return 0.0;
        }
        if t_s == t[0] {
            return r[0];
        }
        let i = t.partition_point(|&x| x < t_s) - 1;
        r[i] + (r[i + 1] - r[i]) * (t_s - t[i]) / (t[i + 1] - t[i])
    }

    /// The amount delivered from `from_s` to `to_s` (s; m3 or mol): the integral of the rate
    /// (exact for the piecewise-linear schedule).
    pub fn delivered_between(&self, from_s: f64, to_s: f64) -> f64 {
        let (t, r) = (&self.times_s, &self.rates);
        let mut total = 0.0;
        for i in 0..t.len() - 1 {
            let (a, b) = (t[i].max(from_s), t[i + 1].min(to_s));
            if a < b {
                let at = |x: f64| r[i] + (r[i + 1] - r[i]) * (x - t[i]) / (t[i + 1] - t[i]);
                total += 0.5 * (at(a) + at(b)) * (b - a);
            }
        }
        total
    }
}

/// What a feed carries.
#[derive(Debug, Clone, PartialEq)]
pub enum FeedStream {
    /// A solution of the given concentrations (mol/m3, one per species) fed at the
    /// schedule's volumetric rate (m3/s): `F_i = q c_i`, and the batch grows by `q`.
    Volumetric {
        /// Concentrations of the fed solution (mol/m3), one per species.
        concentrations_mol_per_m3: Vec<f64>,
    },
    /// One species fed at the schedule's molar rate (mol/s); at constant density the batch
    /// grows by `molar_volume_m3_per_mol` (m3/mol, 0 for an addition of negligible volume)
    /// per mole fed.
    Species {
        /// The species (mechanism index).
        species: usize,
        /// Volume added per mole fed at constant density (m3/mol).
        molar_volume_m3_per_mol: f64,
    },
}

/// One feed stream into a semi-batch reactor: what it carries, its rate against time and
/// its temperature.
#[derive(Debug, Clone, PartialEq)]
pub struct Feed {
    stream: FeedStream,
    schedule: FeedSchedule,
    temperature_k: f64,
}

impl Feed {
    /// A solution of `concentrations_mol_per_m3` (mol/m3, finite, not negative; one per
    /// species) fed at the volumetric rate of `schedule` (m3/s) and at `temperature_k` (K,
    /// finite and positive).
    pub fn volumetric(
        concentrations_mol_per_m3: Vec<f64>,
        schedule: FeedSchedule,
        temperature_k: f64,
    ) -> Result<Feed, ReactorError> {
        if let Some((i, c)) = concentrations_mol_per_m3
            .iter()
            .enumerate()
            .find(|(_, c)| !(c.is_finite() && **c >= 0.0))
        {
            return Err(ReactorError::BadFeed(format!(
                "feed concentration {c:e} mol/m3 of species {i} must be finite and not negative"
            )));
        }
        Feed::checked(
            FeedStream::Volumetric {
                concentrations_mol_per_m3,
            },
            schedule,
            temperature_k,
        )
    }

    /// Species `species` (mechanism index) fed at the molar rate of `schedule` (mol/s) and
    /// at `temperature_k` (K, finite and positive), adding `molar_volume_m3_per_mol` (m3/mol,
    /// finite, not negative) per mole to a constant-density batch.
    pub fn species(
        species: usize,
        molar_volume_m3_per_mol: f64,
        schedule: FeedSchedule,
        temperature_k: f64,
    ) -> Result<Feed, ReactorError> {
        if !(molar_volume_m3_per_mol.is_finite() && molar_volume_m3_per_mol >= 0.0) {
            return Err(ReactorError::BadFeed(format!(
                "the molar volume of a species feed must be finite and not negative, got {molar_volume_m3_per_mol:e} m3/mol"
            )));
        }
        Feed::checked(
            FeedStream::Species {
                species,
                molar_volume_m3_per_mol,
            },
            schedule,
            temperature_k,
        )
    }

    fn checked(
        stream: FeedStream,
        schedule: FeedSchedule,
        temperature_k: f64,
    ) -> Result<Feed, ReactorError> {
        if !(temperature_k.is_finite() && temperature_k > 0.0) {
            return Err(ReactorError::BadFeed(format!(
                "the feed temperature must be finite and positive, got {temperature_k:e} K"
            )));
        }
        Ok(Feed {
            stream,
            schedule,
            temperature_k,
        })
    }

    /// What the feed carries.
    pub fn stream(&self) -> &FeedStream {
        &self.stream
    }

    /// Its rate against time (m3/s or mol/s).
    pub fn schedule(&self) -> &FeedSchedule {
        &self.schedule
    }

    /// The feed temperature (K).
    pub fn temperature_k(&self) -> f64 {
        self.temperature_k
    }

    /// The volume the feed adds to a constant-density batch per second at `t_s` (m3/s).
    pub fn volume_rate_m3_per_s(&self, t_s: f64) -> f64 {
        let rate = self.schedule.rate_at(t_s);
        match &self.stream {
            FeedStream::Volumetric { .. } => rate,
            FeedStream::Species {
                molar_volume_m3_per_mol,
                ..
            } => rate * molar_volume_m3_per_mol,
        }
    }

    /// Calls `sink(species, F)` with the molar flow `F` (mol/s) of every species the feed
    /// carries at `t_s` (s) (zero flows of a volumetric stream skipped). No allocation.
    pub(crate) fn for_each_molar_flow(&self, t_s: f64, mut sink: impl FnMut(usize, f64)) {
        let rate = self.schedule.rate_at(t_s);
        if rate == 0.0 {
            return;
        }
        match &self.stream {
            FeedStream::Volumetric {
                concentrations_mol_per_m3,
            } => {
                for (i, &c) in concentrations_mol_per_m3.iter().enumerate() {
                    if c != 0.0 {
                        sink(i, rate * c);
                    }
                }
            }
            FeedStream::Species { species, .. } => sink(*species, rate),
        }
    }
}

/// A batch whose volume is a state (the last one), with the feeds that change it. See the
/// module documentation of `semibatch` in the crate's docs for the equations.
#[derive(Debug, Clone, PartialEq)]
pub struct SemiBatch {
    initial_volume_m3: f64,
    feeds: Vec<Feed>,
}

impl SemiBatch {
    /// A batch of `initial_volume_m3` (m3, finite and positive) at the start, receiving
    /// `feeds` (none: a closed batch whose volume is tracked).
    pub fn new(initial_volume_m3: f64, feeds: Vec<Feed>) -> Result<SemiBatch, ReactorError> {
        if !(initial_volume_m3.is_finite() && initial_volume_m3 > 0.0) {
            return Err(ReactorError::BadFeed(format!(
                "the initial volume must be finite and positive, got {initial_volume_m3:e} m3"
            )));
        }
        Ok(SemiBatch {
            initial_volume_m3,
            feeds,
        })
    }

    /// The volume at the start (m3).
    pub fn initial_volume_m3(&self) -> f64 {
        self.initial_volume_m3
    }

    /// The feeds.
    pub fn feeds(&self) -> &[Feed] {
        &self.feeds
    }

    /// Checks the feeds against a mechanism of `n_species` species: a volumetric stream has
    /// one concentration per species, a species stream names a species in range.
    pub(crate) fn validate(&self, n_species: usize) -> Result<(), ReactorError> {
        for (f, feed) in self.feeds.iter().enumerate() {
            match &feed.stream {
                FeedStream::Volumetric {
                    concentrations_mol_per_m3,
                } if concentrations_mol_per_m3.len() != n_species => {
                    return Err(ReactorError::BadFeed(format!(
                        "feed {} has {} concentrations for {n_species} species",
                        f + 1,
                        concentrations_mol_per_m3.len()
                    )));
                }
                FeedStream::Species { species, .. } if *species >= n_species => {
                    return Err(ReactorError::BadFeed(format!(
                        "feed {} names species index {species}, but the mechanism has {n_species} species",
                        f + 1
                    )));
                }
                _ => {}
            }
        }
        Ok(())
    }

    /// The volume added per second at constant density at `t_s` (m3/s).
    pub(crate) fn volume_rate(&self, t_s: f64) -> f64 {
        self.feeds.iter().map(|f| f.volume_rate_m3_per_s(t_s)).sum()
    }

    /// Times strictly inside `(from_s, to_s)` (s) where a feed rate's slope jumps.
    pub(crate) fn breakpoints_between(
        &self,
        from_s: f64,
        to_s: f64,
    ) -> impl Iterator<Item = f64> + '_ {
        self.feeds
            .iter()
            .flat_map(|f| f.schedule.times_s.iter().copied())
            .filter(move |&t| t > from_s && t < to_s)
    }
}

/// The liquid-phase energy description: a constant mixture heat capacity per volume and a
/// constant reaction enthalpy per step, instead of the species' ideal-gas thermochemistry.
#[derive(Debug, Clone, PartialEq)]
pub struct LiquidPhase {
    heat_capacity_j_per_m3_k: f64,
    density_kg_per_m3: Option<f64>,
    step_enthalpies_j_per_mol: Vec<f64>,
}

impl LiquidPhase {
    /// A mixture heat capacity per volume `rho cp` of `heat_capacity_j_per_m3_k`
    /// (J/(m3 K), finite and positive) and one reaction enthalpy per step (J/mol, finite;
    /// negative for an exothermic step).
    pub fn per_volume(
        heat_capacity_j_per_m3_k: f64,
        step_enthalpies_j_per_mol: Vec<f64>,
    ) -> Result<LiquidPhase, ReactorError> {
        if !(heat_capacity_j_per_m3_k.is_finite() && heat_capacity_j_per_m3_k > 0.0) {
            return Err(ReactorError::BadLiquidPhase(format!(
                "the heat capacity per volume must be finite and positive, got {heat_capacity_j_per_m3_k:e} J/(m3 K)"
            )));
        }
        if let Some((j, h)) = step_enthalpies_j_per_mol
            .iter()
            .enumerate()
            .find(|(_, h)| !h.is_finite())
        {
            return Err(ReactorError::BadLiquidPhase(format!(
                "the reaction enthalpy of step {j} must be finite, got {h} J/mol"
            )));
        }
        Ok(LiquidPhase {
            heat_capacity_j_per_m3_k,
            density_kg_per_m3: None,
            step_enthalpies_j_per_mol,
        })
    }

    /// A mixture heat capacity per mass `cp` of `heat_capacity_j_per_kg_k` (J/(kg K)) at
    /// density `density_kg_per_m3` (kg/m3), both finite and positive, and one reaction
    /// enthalpy per step (J/mol, finite).
    pub fn per_mass(
        heat_capacity_j_per_kg_k: f64,
        density_kg_per_m3: f64,
        step_enthalpies_j_per_mol: Vec<f64>,
    ) -> Result<LiquidPhase, ReactorError> {
        if !(heat_capacity_j_per_kg_k.is_finite() && heat_capacity_j_per_kg_k > 0.0) {
            return Err(ReactorError::BadLiquidPhase(format!(
                "the heat capacity per mass must be finite and positive, got {heat_capacity_j_per_kg_k:e} J/(kg K)"
            )));
        }
        if !(density_kg_per_m3.is_finite() && density_kg_per_m3 > 0.0) {
            return Err(ReactorError::BadLiquidPhase(format!(
                "the density must be finite and positive, got {density_kg_per_m3:e} kg/m3"
            )));
        }
        let mut phase = LiquidPhase::per_volume(
            heat_capacity_j_per_kg_k * density_kg_per_m3,
            step_enthalpies_j_per_mol,
        )?;
        phase.density_kg_per_m3 = Some(density_kg_per_m3);
        Ok(phase)
    }

    /// The mixture heat capacity per volume `rho cp` (J/(m3 K)).
    pub fn heat_capacity_j_per_m3_k(&self) -> f64 {
        self.heat_capacity_j_per_m3_k
    }

    /// The density (kg/m3) when the heat capacity was given per mass.
    pub fn density_kg_per_m3(&self) -> Option<f64> {
        self.density_kg_per_m3
    }

    /// The reaction enthalpy of each step (J/mol).
    pub fn step_enthalpies_j_per_mol(&self) -> &[f64] {
        &self.step_enthalpies_j_per_mol
    }
}
