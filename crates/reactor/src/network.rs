//! Networks of constant-density stirred tanks connected by streams.
//!
//! A [`TankNetwork`] is a set of named stirred tanks of fixed volume, each holding a liquid
//! (or any fluid) of constant density, and the streams between them: external feeds into a
//! tank (volumetric flow, composition, temperature), transfers from one tank to another (a
//! volumetric flow; a transfer back to an earlier tank, or to the tank itself, is a
//! recycle) and outlets leaving the network. The inflows of a tank mix at its inlet (an
//! implicit mixer); several streams leaving one tank split its outflow, each carrying the
//! tank's contents (well mixed). At constant density the volumetric flows into each tank
//! must add up to the flows out of it; [`TankNetwork::new`] refuses a network that breaks
//! this, naming the tank.
//!
//! # Equations
//!
//! The state is one vector: for each tank `j` (in the order given) its concentrations `c_j`
//! (mol/m3, mechanism order), then its temperature `T_j` (K) when its energy balance is
//! solved (adiabatic, or heat exchange with a jacket). With `V_j` the volume (m3), `Q_j`
//! the total volumetric flow through the tank (m3/s, in = out), `w(c_j, T_j)` the net
//! production rates and the sum over the streams `s` entering `j` (flow `q_s`,
//! concentrations `c_s` and temperature `T_s`: a feed's own, or those of the tank it comes
//! from):
//!
//! - species: `dc_j,i/dt = w_i + sum_s (q_s / V_j) c_s,i - (Q_j / V_j) c_j,i`;
//! - energy (enthalpy basis, pressure work neglected as for liquids; the equation of the
//!   single stirred tank of [`crate::model`] with one term per entering stream):
//!   `sum_i c_j,i cp_i(T_j) dT_j/dt = sum_s (q_s / V_j) sum_i c_s,i (h_i(T_s) - h_i(T_j))`
//!   `- sum_i h_i(T_j) w_i + U A / V_j (T_coolant - T_j)`
//!   (O. Levenspiel, *Chemical Reaction Engineering*, 3rd ed., ch. 6 and 9; H. S. Fogler,
//!   *Elements of Chemical Reaction Engineering*, 4th ed., ch. 8).
//!
//! Summing the energy equations at a steady state, the internal streams cancel: the enthalpy
//! the feeds bring plus the heat the jackets exchange equals the enthalpy the outlets carry
//! away; likewise every element's molar flow in equals its flow out.
//!
//! Gas tanks at constant pressure (whose outflow follows from the moles made) are refused:
//! their volumetric flows are not fixed numbers, which the stream description needs.
//!
//! # Jacobian
//!
//! The Jacobian is written analytically on a block pattern: each tank's diagonal block is
//! the kinetics pattern (plus, with the energy balance, a full temperature row and column,
//! the arrow pattern of the single tank), and each stream from tank `a` to tank `b` adds the
//! diagonal block `q / V_b` between `b`'s and `a`'s concentrations, plus, when `b` solves
//! its energy balance, a row from `b`'s temperature to `a`'s concentrations (and to `a`'s
//! temperature when `a` solves its own). The flow terms are linear; the energy row is the
//! quotient rule applied to the equation above. It is checked against central differences in
//! the tests, and used by the dense or the fixed-pattern sparse LU of the BDF method.

use std::cell::{Cell, RefCell};

use stoik_kinetics::{JacobianPattern, Kinetics, RateConstants};
use stoik_mechanism::GAS_CONSTANT as R;
use stoik_thermo::Nasa7;

use crate::model::{Constraint, Energy};
use crate::LiquidPhase;
use crate::{LinearAlgebra, ReactorError, SolverStats, DENSE_MAX_SPECIES, DENSE_MIN_FILL};

/// Relative tolerance of the volumetric flow balance of a tank: `|in - out|` may be at most
/// this times the larger of the two (round-off of a sum of a few decimal flows).
pub const FLOW_BALANCE_TOLERANCE: f64 = 1e-9;

/// One stirred tank of a [`TankNetwork`].
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkTank {
    /// The tank's name, unique in the network; streams refer to it.
    pub name: String,
    /// Volume (m3), finite and positive.
    pub volume_m3: f64,
    /// [`Constraint::ConstantVolume`] (constant density, the only kind a network takes).
    pub constraint: Constraint,
    /// [`Energy::Isothermal`] (held at `temperature_k`), [`Energy::Adiabatic`] or
    /// [`Energy::HeatExchange`] (a jacket; a total U A or one per volume). A prescribed
    /// temperature is refused.
    pub energy: Energy,
    /// Concentrations at the start (mol/m3, one per species, finite, not negative).
    pub initial_mol_per_m3: Vec<f64>,
    /// The held temperature (isothermal) or the initial one (K, finite and positive).
    pub temperature_k: f64,
}

impl NetworkTank {
    /// An isothermal tank named `name` of volume `volume_m3` (m3) at `temperature_k` (K),
    /// holding `initial_mol_per_m3` (mol/m3) at the start. Checked by [`TankNetwork::new`].
    pub fn new(
        name: &str,
        volume_m3: f64,
        initial_mol_per_m3: Vec<f64>,
        temperature_k: f64,
    ) -> NetworkTank {
        NetworkTank {
            name: name.to_string(),
            volume_m3,
            constraint: Constraint::ConstantVolume,
            energy: Energy::Isothermal,
            initial_mol_per_m3,
            temperature_k,
        }
    }

    /// The tank with its energy described by `energy`.
    pub fn with_energy(mut self, energy: Energy) -> NetworkTank {
        self.energy = energy;
        self
    }

    /// Whether the tank's temperature is a state (adiabatic or jacketed).
    pub fn solves_energy(&self) -> bool {
        matches!(self.energy, Energy::Adiabatic | Energy::HeatExchange(_))
    }
}

/// A stream of a [`TankNetwork`]; flows are volumetric (m3/s, finite and positive).
#[derive(Debug, Clone, PartialEq)]
pub enum Stream {
    /// An external feed into tank `to`.
    Feed {
        /// The receiving tank's name.
        to: String,
        /// Volumetric flow (m3/s).
        volumetric_flow_m3_per_s: f64,
        /// Concentrations of the feed (mol/m3, one per species, finite, not negative).
        inlet_mol_per_m3: Vec<f64>,
        /// Temperature of the feed (K, finite and positive).
        inlet_temperature_k: f64,
    },
    /// The contents of tank `from` flowing into tank `to` (a recycle when `to` comes first
    /// or is `from` itself).
    Transfer {
        /// The sending tank's name.
        from: String,
        /// The receiving tank's name.
        to: String,
        /// Volumetric flow (m3/s).
        volumetric_flow_m3_per_s: f64,
    },
    /// The contents of tank `from` leaving the network.
    Outlet {
        /// The sending tank's name.
        from: String,
        /// Volumetric flow (m3/s).
        volumetric_flow_m3_per_s: f64,
    },
}

impl Stream {
    /// The stream's volumetric flow (m3/s).
    pub fn volumetric_flow_m3_per_s(&self) -> f64 {
        match self {
            Stream::Feed {
                volumetric_flow_m3_per_s,
                ..
            }
            | Stream::Transfer {
                volumetric_flow_m3_per_s,
                ..
            }
            | Stream::Outlet {
                volumetric_flow_m3_per_s,
                ..
            } => *volumetric_flow_m3_per_s,
        }
    }

    /// The sending tank's name (`None` for a feed).
    pub fn from(&self) -> Option<&str> {
        match self {
            Stream::Feed { .. } => None,
            Stream::Transfer { from, .. } | Stream::Outlet { from, .. } => Some(from),
        }
    }

    /// The receiving tank's name (`None` for an outlet).
    pub fn to(&self) -> Option<&str> {
        match self {
            Stream::Outlet { .. } => None,
            Stream::Feed { to, .. } | Stream::Transfer { to, .. } => Some(to),
        }
    }
}

/// One thing wrong with a network's description; `tank` and `stream` are 0-based positions
/// in the lists given to [`TankNetwork::new`].
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum NetworkProblem {
    /// No tank at all.
    #[error("the network has no tanks")]
    NoTanks,
    /// Two tanks of the same name.
    #[error("tank {} is named '{name}' like tank {}: names must be unique", .tank + 1, .first + 1)]
    DuplicateName {
        /// The later tank.
        tank: usize,
        /// The first tank of that name.
        first: usize,
        /// The name.
        name: String,
    },
    /// A tank's own data is wrong (volume, initial state, temperature, energy model).
    #[error("tank '{name}': {reason}")]
    BadTank {
        /// The tank.
        tank: usize,
        /// Its name.
        name: String,
        /// What is wrong and what was expected.
        reason: String,
    },
    /// A stream names a tank that the network does not have.
    #[error("stream {}: no tank is named '{name}'", .stream + 1)]
    UnknownTank {
        /// The stream.
        stream: usize,
        /// The name it gives.
        name: String,
    },
    /// A flow that is zero, negative or not finite.
    #[error("stream {}: the volumetric flow must be finite and positive, got {value:e} m3/s", .stream + 1)]
    BadFlow {
        /// The stream.
        stream: usize,
        /// The flow given (m3/s).
        value: f64,
    },
    /// A feed whose composition or temperature is wrong.
    #[error("stream {}: {reason}", .stream + 1)]
    BadFeed {
        /// The stream.
        stream: usize,
        /// What is wrong and what was expected.
        reason: String,
    },
    /// A tank that no stream enters or leaves.
    #[error("tank '{name}' is not connected: no stream enters or leaves it")]
    Unconnected {
        /// The tank.
        tank: usize,
        /// Its name.
        name: String,
    },
    /// A tank whose volumetric inflow differs from its outflow.
    #[error("tank '{name}': the volumetric flow in ({inflow_m3_per_s:e} m3/s) differs from the flow out ({outflow_m3_per_s:e} m3/s); at constant density they must be equal")]
    FlowImbalance {
        /// The tank.
        tank: usize,
        /// Its name.
        name: String,
        /// Sum of the entering flows (m3/s).
        inflow_m3_per_s: f64,
        /// Sum of the leaving flows (m3/s).
        outflow_m3_per_s: f64,
    },
    /// A species without thermochemistry while some tank solves its energy balance.
    #[error(
        "species {species} has no thermochemistry, which the energy balance of tank '{name}' needs"
    )]
    MissingThermo {
        /// Species index (mechanism order).
        species: usize,
        /// The first tank that solves its energy balance.
        name: String,
    },
    /// The liquid description's reaction enthalpies do not match the mechanism's steps.
    #[error(
        "the liquid phase gives {found} reaction enthalpies; the mechanism has {expected} steps"
    )]
    LiquidEnthalpies {
        /// Steps of the mechanism.
        expected: usize,
        /// Enthalpies given.
        found: usize,
    },
    /// A reversible step whose reverse rate comes from species thermochemistry, which the
    /// liquid-phase description does not use.
    #[error("step {} is reversible without explicit reverse parameters: with the liquid-phase description give it explicit reverse parameters or make it irreversible", .step + 1)]
    LiquidReverseFromThermo {
        /// Step index (mechanism order).
        step: usize,
    },
}

/// Why a network was refused or its run failed.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum NetworkError {
    /// The description has problems, all of them listed.
    #[error("the tank network has {} problem(s): {}", .0.len(), list(.0))]
    Invalid(Vec<NetworkProblem>),
    /// A bad argument of the run (tolerances, output times).
    #[error(transparent)]
    Reactor(#[from] ReactorError),
    /// No steady state was found (see [`crate::network_steady_state`]).
    #[error("network steady state: {0}")]
    Steady(Box<crate::SteadyError>),
    /// The solver stopped before the end; `partial` holds the rows reached.
    #[error("the network integration failed at t = {time_s:e} s: {reason}")]
    Failed {
        /// Time reached (s).
        time_s: f64,
        /// What happened.
        reason: String,
        /// The output rows before the failure.
        partial: Box<NetworkProfiles>,
    },
}

fn list(problems: &[NetworkProblem]) -> String {
    problems
        .iter()
        .map(ToString::to_string)
        .collect::<Vec<_>>()
        .join("; ")
}

/// An external feed, resolved to its tank.
#[derive(Debug, Clone, PartialEq)]
pub(crate) struct FeedLink {
    pub(crate) to: usize,
    pub(crate) q: f64,
    pub(crate) c: Vec<f64>,
    pub(crate) t: f64,
}

/// The tank-to-tank flow between one pair of tanks (parallel transfers summed).
#[derive(Debug, Clone, Copy, PartialEq)]
pub(crate) struct Link {
    pub(crate) from: usize,
    pub(crate) to: usize,
    pub(crate) q: f64,
}

/// A checked network of constant-density stirred tanks (see the module documentation).
#[derive(Debug, Clone, PartialEq)]
pub struct TankNetwork {
    tanks: Vec<NetworkTank>,
    streams: Vec<Stream>,
    n_species: usize,
    offsets: Vec<usize>,
    n_states: usize,
    /// Total volumetric flow through each tank (m3/s).
    throughput: Vec<f64>,
    pub(crate) feeds: Vec<FeedLink>,
    pub(crate) links: Vec<Link>,
    /// (tank, flow m3/s) of each outlet stream.
    outlets: Vec<(usize, f64)>,
    /// The liquid-phase energy description of every tank (`None`: species thermochemistry).
    liquid: Option<LiquidPhase>,
}

impl TankNetwork {
    /// Checks and assembles a network of `tanks` and `streams` for a mechanism of
    /// `n_species` species. Every problem found is returned at once in
    /// [`NetworkError::Invalid`]: no tanks, duplicate names, bad volumes, initial states or
    /// temperatures, a constant-pressure tank or a prescribed temperature, a stream naming an
    /// unknown tank, a flow that is not finite and positive, a feed without a full, finite,
    /// non-negative composition or without a finite positive temperature, a tank no stream
    /// enters or leaves, and a tank whose volumetric inflow differs from its outflow by more
    /// than [`FLOW_BALANCE_TOLERANCE`] relative.
    pub fn new(
        n_species: usize,
        tanks: Vec<NetworkTank>,
        streams: Vec<Stream>,
    ) -> Result<TankNetwork, NetworkError> {
        let mut problems = Vec::new();
        if tanks.is_empty() {
            problems.push(NetworkProblem::NoTanks);
        }
        for (i, tank) in tanks.iter().enumerate() {
            if let Some(first) = tanks[..i].iter().position(|t| t.name == tank.name) {
                problems.push(NetworkProblem::DuplicateName {
                    tank: i,
                    first,
                    name: tank.name.clone(),
                });
            }
            let mut bad = |reason: String| {
                problems.push(NetworkProblem::BadTank {
                    tank: i,
                    name: tank.name.clone(),
                    reason,
                })
            };
            if !(tank.volume_m3.is_finite() && tank.volume_m3 > 0.0) {
                bad(format!(
                    "the volume must be finite and positive, got {:e} m3",
                    tank.volume_m3
                ));
            }
            if !(tank.temperature_k.is_finite() && tank.temperature_k > 0.0) {
                bad(format!(
                    "the temperature must be finite and positive, got {:e} K",
                    tank.temperature_k
                ));
            }
            if tank.constraint != Constraint::ConstantVolume {
                bad("a tank of a network holds a fluid of constant density (constant volume); a gas tank at constant pressure has no fixed volumetric outflow and is not supported".into());
            }
            if matches!(tank.energy, Energy::Prescribed(_)) {
                bad("a prescribed temperature history is not supported in a network; use isothermal, adiabatic or a jacket".into());
            }
            if let Some(reason) = composition_problem(&tank.initial_mol_per_m3, n_species) {
                bad(format!("initial state: {reason}"));
            }
        }
        let index = |name: &str| tanks.iter().position(|t| t.name == name);
        let mut inflow = vec![0.0; tanks.len()];
        let mut outflow = vec![0.0; tanks.len()];
        let mut touched = vec![false; tanks.len()];
        let mut feeds = Vec::new();
        let mut links: Vec<Link> = Vec::new();
        let mut outlets = Vec::new();
        for (s, stream) in streams.iter().enumerate() {
            let q = stream.volumetric_flow_m3_per_s();
            let flow_ok = q.is_finite() && q > 0.0;
            if !flow_ok {
                problems.push(NetworkProblem::BadFlow {
                    stream: s,
                    value: q,
                });
            }
            let mut resolve = |name: Option<&str>| -> Option<Option<usize>> {
                let name = name?;
                let found = index(name);
                if found.is_none() {
                    problems.push(NetworkProblem::UnknownTank {
                        stream: s,
                        name: name.to_string(),
                    });
                }
                Some(found)
            };
            let from = resolve(stream.from());
            let to = resolve(stream.to());
            if let Stream::Feed {
                inlet_mol_per_m3,
                inlet_temperature_k,
                ..
            } = stream
            {
                if let Some(reason) = composition_problem(inlet_mol_per_m3, n_species) {
                    problems.push(NetworkProblem::BadFeed {
                        stream: s,
                        reason: format!("feed composition: {reason}"),
                    });
                }
                if !(inlet_temperature_k.is_finite() && *inlet_temperature_k > 0.0) {
                    problems.push(NetworkProblem::BadFeed {
                        stream: s,
                        reason: format!(
                            "the feed temperature must be finite and positive, got {inlet_temperature_k:e} K"
                        ),
                    });
                }
            }
            for end in [from, to].into_iter().flatten().flatten() {
                touched[end] = true;
            }
            if !flow_ok {
                continue;
            }
            if let Some(Some(a)) = from {
                outflow[a] += q;
            }
            if let Some(Some(b)) = to {
                inflow[b] += q;
            }
            match (stream, from, to) {
                (
                    Stream::Feed {
                        inlet_mol_per_m3,
                        inlet_temperature_k,
                        ..
                    },
                    _,
                    Some(Some(b)),
                ) => feeds.push(FeedLink {
                    to: b,
                    q,
                    c: inlet_mol_per_m3.clone(),
                    t: *inlet_temperature_k,
                }),
                (Stream::Transfer { .. }, Some(Some(a)), Some(Some(b))) => {
                    match links.iter_mut().find(|l| l.from == a && l.to == b) {
                        Some(l) => l.q += q,
                        None => links.push(Link { from: a, to: b, q }),
                    }
                }
                (Stream::Outlet { .. }, Some(Some(a)), _) => outlets.push((a, q)),
                _ => {}
            }
        }
        for (j, tank) in tanks.iter().enumerate() {
            if !touched[j] {
                problems.push(NetworkProblem::Unconnected {
                    tank: j,
                    name: tank.name.clone(),
                });
            } else if (inflow[j] - outflow[j]).abs()
                > FLOW_BALANCE_TOLERANCE * inflow[j].max(outflow[j])
            {
                problems.push(NetworkProblem::FlowImbalance {
                    tank: j,
                    name: tank.name.clone(),
                    inflow_m3_per_s: inflow[j],
                    outflow_m3_per_s: outflow[j],
                });
            }
        }
        if !problems.is_empty() {
            return Err(NetworkError::Invalid(problems));
        }
        let mut offsets = Vec::with_capacity(tanks.len());
        let mut n_states = 0;
        for tank in &tanks {
            offsets.push(n_states);
            n_states += n_species + usize::from(tank.solves_energy());
        }
        Ok(TankNetwork {
            throughput: inflow,
            tanks,
            streams,
            n_species,
            offsets,
            n_states,
            feeds,
            links,
            outlets,
            liquid: None,
        })
    }

    /// Describes the energy of every tank that solves it as a constant-density liquid: a
    /// mixture heat capacity per volume `rho cp` and one reaction enthalpy per step (see
    /// [`LiquidPhase`]) instead of the species' ideal-gas thermochemistry. A tank's energy
    /// balance is then `rho cp dT/dt = sum_in (q/V) rho cp (T_in - T) - sum_k dH_k q_k +
    /// U A/V (T_c - T)` (W/m3). The number of enthalpies is checked against the mechanism
    /// when the network is run.
    pub fn with_liquid(mut self, liquid: LiquidPhase) -> TankNetwork {
        self.liquid = Some(liquid);
        self
    }

    /// The liquid-phase description, if any (see [`with_liquid`](Self::with_liquid)).
    pub fn liquid(&self) -> Option<&LiquidPhase> {
        self.liquid.as_ref()
    }

    /// The tanks, in the order given.
    pub fn tanks(&self) -> &[NetworkTank] {
        &self.tanks
    }

    /// The streams, in the order given.
    pub fn streams(&self) -> &[Stream] {
        &self.streams
    }

    /// Number of species of the mechanism.
    pub fn n_species(&self) -> usize {
        self.n_species
    }

    /// Number of states of the whole network.
    pub fn n_states(&self) -> usize {
        self.n_states
    }

    /// Position of tank `tank`'s first state in the network's state vector.
    pub fn offset(&self, tank: usize) -> usize {
        self.offsets[tank]
    }

    /// The position of the tank named `name`.
    pub fn tank_index(&self, name: &str) -> Option<usize> {
        self.tanks.iter().position(|t| t.name == name)
    }

    /// Total volumetric flow through tank `tank` (m3/s): what enters, equal to what leaves.
    pub fn throughput_m3_per_s(&self, tank: usize) -> f64 {
        self.throughput[tank]
    }

    /// Residence time `V / Q` of tank `tank` (s).
    pub fn residence_time_s(&self, tank: usize) -> f64 {
        self.tanks[tank].volume_m3 / self.throughput[tank]
    }

    /// The outlets: (tank, volumetric flow in m3/s).
    pub fn outlets(&self) -> &[(usize, f64)] {
        &self.outlets
    }

    /// The time scale of the network (s): the longest of the tanks' residence times and of
    /// the total volume over the total feed.
    pub fn time_scale_s(&self) -> f64 {
        let volume: f64 = self.tanks.iter().map(|t| t.volume_m3).sum();
        let feed: f64 = self.feeds.iter().map(|f| f.q).sum();
        let overall = if feed > 0.0 { volume / feed } else { 0.0 };
        (0..self.tanks.len())
            .map(|j| self.residence_time_s(j))
            .fold(overall, f64::max)
    }

    /// The initial state of the network (every tank's initial concentrations, then its
    /// temperature when solved).
    pub fn initial_state(&self) -> Vec<f64> {
        let mut y = Vec::with_capacity(self.n_states);
        for tank in &self.tanks {
            y.extend_from_slice(&tank.initial_mol_per_m3);
            if tank.solves_energy() {
                y.push(tank.temperature_k);
            }
        }
        y
    }

    /// The temperature (K) of tank `tank` in network state `y`.
    pub fn temperature_in(&self, tank: usize, y: &[f64]) -> f64 {
        let t = &self.tanks[tank];
        if t.solves_energy() {
            y[self.offsets[tank] + self.n_species]
        } else {
            t.temperature_k
        }
    }

    /// The concentrations (mol/m3) of tank `tank` in network state `y`.
    pub fn concentrations_in<'y>(&self, tank: usize, y: &'y [f64]) -> &'y [f64] {
        let o = self.offsets[tank];
        &y[o..o + self.n_species]
    }

    /// Whether any tank solves its energy balance.
    pub fn solves_energy(&self) -> bool {
        self.tanks.iter().any(NetworkTank::solves_energy)
    }

    /// The linear algebra [`LinearAlgebra::Auto`] picks for a state pattern of `n` states
    /// and fill fraction `fill`.
    pub(crate) fn resolve(choice: LinearAlgebra, n: usize, fill: f64) -> LinearAlgebra {
        match choice {
            LinearAlgebra::Auto if n <= DENSE_MAX_SPECIES || fill > DENSE_MIN_FILL => {
                LinearAlgebra::Dense
            }
            LinearAlgebra::Auto => LinearAlgebra::Sparse,
            other => other,
        }
    }
}

/// Why a composition is unusable, if it is.
fn composition_problem(c: &[f64], n_species: usize) -> Option<String> {
    if c.len() != n_species {
        return Some(format!(
            "{} concentrations for {n_species} species",
            c.len()
        ));
    }
    c.iter()
        .enumerate()
        .find(|(_, v)| !(v.is_finite() && **v >= 0.0))
        .map(|(i, v)| {
            format!("the concentration of species {i} must be finite and not negative, got {v:e} mol/m3")
        })
}

/// The profiles of a network run.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct NetworkProfiles {
    /// Output times (s).
    pub times_s: Vec<f64>,
    /// One profile per tank, in the network's order.
    pub tanks: Vec<TankProfile>,
    /// Solver statistics of the run.
    pub stats: SolverStats,
    /// The linear algebra used ([`LinearAlgebra::Dense`] or [`LinearAlgebra::Sparse`]).
    pub linear_algebra_used: LinearAlgebra,
}

/// The profile of one tank of a network run.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct TankProfile {
    /// The tank's name.
    pub name: String,
    /// Concentrations (mol/m3): one row per output time, one value per species.
    pub concentrations_mol_per_m3: Vec<Vec<f64>>,
    /// Temperature (K) at each output time.
    pub temperatures_k: Vec<f64>,
}

/// Positions of the Jacobian's entries in the network's state pattern.
#[derive(Debug, Clone)]
struct Positions {
    /// Per tank: the position of each kinetics-pattern entry.
    kinetics: Vec<Vec<usize>>,
    /// Per tank: the position of each species' diagonal entry.
    diagonal: Vec<Vec<usize>>,
    /// Per tank solving its energy: (c_i, T) for each species; empty otherwise.
    temperature_column: Vec<Vec<usize>>,
    /// Per tank solving its energy: (T, c_k) for each species, then (T, T).
    energy_row: Vec<Vec<usize>>,
    /// Per link: (to c_i, from c_i) for each species.
    link_species: Vec<Vec<usize>>,
    /// Per link into a tank solving its energy: (T_to, from c_k) for each species, then
    /// (T_to, T_from) when the source solves its energy.
    link_energy: Vec<Vec<usize>>,
}

/// The network's state pattern and the positions of its entries.
fn network_pattern(
    kinetics: &Kinetics,
    net: &TankNetwork,
) -> Result<(JacobianPattern, Positions), ReactorError> {
    let n = net.n_species;
    let kin = kinetics.jacobian_pattern();
    let (starts, rows) = (kin.column_starts(), kin.row_indices());
    let energy: Vec<bool> = net.tanks.iter().map(NetworkTank::solves_energy).collect();
    let mut entries = Vec::new();
    for (j, &o) in net.offsets.iter().enumerate() {
        for col in 0..n {
            for &row in &rows[starts[col]..starts[col + 1]] {
                entries.push((o + row, o + col));
            }
        }
        if energy[j] {
            for i in 0..=n {
                entries.push((o + i, o + n));
                entries.push((o + n, o + i));
            }
        }
    }
    for l in &net.links {
        let (a, b) = (net.offsets[l.from], net.offsets[l.to]);
        for i in 0..n {
            entries.push((b + i, a + i));
        }
        if energy[l.to] {
            for k in 0..n {
                entries.push((b + n, a + k));
            }
            if energy[l.from] {
                entries.push((b + n, a + n));
            }
        }
    }
    let pattern = JacobianPattern::from_entries(net.n_states, entries)
        .map_err(|_| ReactorError::BadPattern)?;
    let at = |row: usize, col: usize| pattern.position(row, col).ok_or(ReactorError::BadPattern);
    let mut pos = Positions {
        kinetics: Vec::new(),
        diagonal: Vec::new(),
        temperature_column: Vec::new(),
        energy_row: Vec::new(),
        link_species: Vec::new(),
        link_energy: Vec::new(),
    };
    for (j, &o) in net.offsets.iter().enumerate() {
        let mut k = Vec::with_capacity(kin.nnz());
        for col in 0..n {
            for &row in &rows[starts[col]..starts[col + 1]] {
                k.push(at(o + row, o + col)?);
            }
        }
        pos.kinetics.push(k);
        pos.diagonal
            .push((0..n).map(|i| at(o + i, o + i)).collect::<Result<_, _>>()?);
        if energy[j] {
            pos.temperature_column
                .push((0..n).map(|i| at(o + i, o + n)).collect::<Result<_, _>>()?);
            pos.energy_row.push(
                (0..=n)
                    .map(|k| at(o + n, o + k))
                    .collect::<Result<_, _>>()?,
            );
        } else {
            pos.temperature_column.push(Vec::new());
            pos.energy_row.push(Vec::new());
        }
    }
    for l in &net.links {
        let (a, b) = (net.offsets[l.from], net.offsets[l.to]);
        pos.link_species
            .push((0..n).map(|i| at(b + i, a + i)).collect::<Result<_, _>>()?);
        let mut e = Vec::new();
        if energy[l.to] {
            for k in 0..n {
                e.push(at(b + n, a + k)?);
            }
            if energy[l.from] {
                e.push(at(b + n, a + n)?);
            }
        }
        pos.link_energy.push(e);
    }
    Ok((pattern, pos))
}

/// Scratch of the network's right-hand side and Jacobian, allocated once.
#[derive(Debug, Clone)]
struct Scratch {
    /// Temperature of each tank (K).
    temperatures: Vec<f64>,
    /// Per tank and species: molar enthalpy h_i(T_j) (J/mol) and cp_i(T_j) (J/(mol K)).
    enthalpy: Vec<f64>,
    capacity: Vec<f64>,
    /// Per tank: heat capacity per volume (J/(m3 K)), energy numerator N (W/m3).
    heat_capacity: Vec<f64>,
    numerator: Vec<f64>,
    w: Vec<f64>,
    /// The steps' rates of progress in one tank (mol/(m3 s)), scratch of the right-hand side.
    progress: Vec<f64>,
    kin_values: Vec<f64>,
    slopes: RateConstants,
    dw_dt: Vec<f64>,
    /// Per step: dq/dT (liquid description).
    step_slopes: Vec<f64>,
}

/// The network's equations on flat slices: right-hand side and analytic Jacobian.
pub(crate) struct NetworkSystem {
    pub(crate) kinetics: Kinetics,
    pub(crate) net: TankNetwork,
    /// Species polynomials (empty when no tank solves its energy balance).
    thermo: Vec<Nasa7>,
    /// Per feed: h_i(T_feed) (J/mol), per species (empty without energy).
    feed_enthalpy: Vec<Vec<f64>>,
    /// The liquid description when some tank solves its energy balance with it: `rho cp`
    /// (J/(m3 K)) and the reaction enthalpy of each step (J/mol).
    liquid: Option<(f64, Vec<f64>)>,
    rates: RefCell<Vec<RateConstants>>,
    rates_at: RefCell<Vec<f64>>,
    scratch: RefCell<Scratch>,
    pub(crate) pattern: JacobianPattern,
    positions: Positions,
    pub(crate) rhs_evaluations: Cell<usize>,
    pub(crate) jacobian_evaluations: Cell<usize>,
}

impl NetworkSystem {
    /// The equations of `net` for `kinetics` (every species needs thermochemistry when some
    /// tank solves its energy balance).
    pub(crate) fn new(kinetics: &Kinetics, net: &TankNetwork) -> Result<Self, NetworkError> {
        let n = kinetics.n_species();
        if net.n_species != n {
            return Err(ReactorError::WrongLength {
                what: "network species",
                expected: n,
                found: net.n_species,
            }
            .into());
        }
        let liquid = match (&net.liquid, net.solves_energy()) {
            (Some(l), true) => {
                let dh = l.step_enthalpies_j_per_mol();
                let mut problems = Vec::new();
                if dh.len() != kinetics.n_steps() {
                    problems.push(NetworkProblem::LiquidEnthalpies {
                        expected: kinetics.n_steps(),
                        found: dh.len(),
                    });
                }
                problems.extend(
                    (0..kinetics.n_steps())
                        .filter(|&j| kinetics.reverse_from_thermochemistry(j) == Some(true))
                        .map(|step| NetworkProblem::LiquidReverseFromThermo { step }),
                );
                if !problems.is_empty() {
                    return Err(NetworkError::Invalid(problems));
                }
                Some((l.heat_capacity_j_per_m3_k(), dh.to_vec()))
            }
            _ => None,
        };
        let thermo: Vec<Nasa7> = match net.tanks.iter().find(|t| t.solves_energy()) {
            None => Vec::new(),
            Some(_) if liquid.is_some() => Vec::new(),
            Some(tank) => {
                let missing: Vec<NetworkProblem> = kinetics
                    .species_thermo()
                    .iter()
                    .enumerate()
                    .filter(|(_, t)| t.is_none())
                    .map(|(species, _)| NetworkProblem::MissingThermo {
                        species,
                        name: tank.name.clone(),
                    })
                    .collect();
                if !missing.is_empty() {
                    return Err(NetworkError::Invalid(missing));
                }
                kinetics
                    .species_thermo()
                    .iter()
                    .flatten()
                    .copied()
                    .collect()
            }
        };
        let feed_enthalpy = if thermo.is_empty() {
            Vec::new()
        } else {
            net.feeds
                .iter()
                .map(|f| {
                    thermo
                        .iter()
                        .map(|th| R * f.t * th.h_over_rt(f.t))
                        .collect()
                })
                .collect()
        };
        let (pattern, positions) = network_pattern(kinetics, net)?;
        let n_tanks = net.tanks.len();
        let temperatures: Vec<f64> = net.tanks.iter().map(|t| t.temperature_k).collect();
        let rates = temperatures
            .iter()
            .map(|&t| kinetics.rate_constants(t))
            .collect();
        Ok(NetworkSystem {
            scratch: RefCell::new(Scratch {
                temperatures: temperatures.clone(),
                enthalpy: vec![0.0; n_tanks * n],
                capacity: vec![0.0; n_tanks * n],
                heat_capacity: vec![0.0; n_tanks],
                numerator: vec![0.0; n_tanks],
                w: vec![0.0; n],
                progress: vec![0.0; kinetics.n_steps()],
                kin_values: vec![0.0; kinetics.jacobian_pattern().nnz()],
                slopes: kinetics.rate_constants(300.0),
                dw_dt: vec![0.0; n],
                step_slopes: vec![0.0; kinetics.n_steps()],
            }),
            rates: RefCell::new(rates),
            rates_at: RefCell::new(temperatures),
            kinetics: kinetics.clone(),
            net: net.clone(),
            thermo,
            feed_enthalpy,
            liquid,
            pattern,
            positions,
            rhs_evaluations: Cell::new(0),
            jacobian_evaluations: Cell::new(0),
        })
    }

    /// Number of states.
    pub(crate) fn n_states(&self) -> usize {
        self.net.n_states
    }

    /// Temperatures, rate constants and (with the energy balance) enthalpies and heat
    /// capacities of every tank at state `y`. No allocation.
    fn prepare(&self, y: &[f64], s: &mut Scratch) {
        let n = self.net.n_species;
        let mut rates = self.rates.borrow_mut();
        let mut at = self.rates_at.borrow_mut();
        for j in 0..self.net.tanks.len() {
            let t = self.net.temperature_in(j, y);
            s.temperatures[j] = t;
            if at[j] != t {
                self.kinetics.evaluate_rate_constants(t, &mut rates[j]);
                at[j] = t;
            }
            if !self.thermo.is_empty() {
                for (i, th) in self.thermo.iter().enumerate() {
                    s.enthalpy[j * n + i] = R * t * th.h_over_rt(t);
                    s.capacity[j * n + i] = R * th.cp_over_r(t);
                }
            }
        }
    }

    /// The heat exchanged per volume (W/m3) by tank `j` at time `t_s` and temperature `t`,
    /// and its slope in `t` (W/(m3 K)).
    fn exchange(&self, j: usize, t_s: f64, t: f64) -> (f64, f64) {
        let tank = &self.net.tanks[j];
        match &tank.energy {
            Energy::HeatExchange(x) => {
                let ua = x.ua_over_volume(t_s, tank.volume_m3);
                (ua * (x.coolant().temperature_at(t_s) - t), -ua)
            }
            _ => (0.0, 0.0),
        }
    }

    /// The energy numerators `N_j` (W/m3) and heat capacities (J/(m3 K)) of the tanks solving
    /// their energy at state `y`; `release[j]` holds `sum_i h_i w_i` of each such tank.
    fn energy_terms(&self, t_s: f64, y: &[f64], s: &mut Scratch) {
        let n = self.net.n_species;
        for (j, tank) in self.net.tanks.iter().enumerate() {
            if !tank.solves_energy() {
                continue;
            }
            let c = self.net.concentrations_in(j, y);
            let cap: f64 = c
                .iter()
                .zip(&s.capacity[j * n..(j + 1) * n])
                .map(|(c, k)| c * k)
                .sum();
            s.heat_capacity[j] = cap;
            s.numerator[j] += self.exchange(j, t_s, s.temperatures[j]).0;
        }
        for (f, feed) in self.net.feeds.iter().enumerate() {
            let j = feed.to;
            if !self.net.tanks[j].solves_energy() {
                continue;
            }
            let a = feed.q / self.net.tanks[j].volume_m3;
            let own = &s.enthalpy[j * n..(j + 1) * n];
            let sum: f64 = feed
                .c
                .iter()
                .zip(&self.feed_enthalpy[f])
                .zip(own)
                .map(|((c, hf), h)| c * (hf - h))
                .sum();
            s.numerator[j] += a * sum;
        }
        for l in &self.net.links {
            let j = l.to;
            if !self.net.tanks[j].solves_energy() {
                continue;
            }
            let a = l.q / self.net.tanks[j].volume_m3;
            let src = self.net.concentrations_in(l.from, y);
            let theirs = &s.enthalpy[l.from * n..(l.from + 1) * n];
            let own = &s.enthalpy[j * n..(j + 1) * n];
            let sum: f64 = (src.iter().zip(theirs).zip(own))
                .map(|((c, ht), ho)| c * (ht - ho))
                .sum();
            s.numerator[j] += a * sum;
        }
    }

    /// `f = dy/dt` at time `t_s` (s) and network state `y`. No allocation.
    pub(crate) fn state_derivative(&self, t_s: f64, y: &[f64], f: &mut [f64]) {
        self.rhs_evaluations.set(self.rhs_evaluations.get() + 1);
        let n = self.net.n_species;
        let s = &mut *self.scratch.borrow_mut();
        self.prepare(y, s);
        let rates = self.rates.borrow();
        s.numerator.iter_mut().for_each(|x| *x = 0.0);
        for (j, tank) in self.net.tanks.iter().enumerate() {
            let o = self.net.offsets[j];
            let c = &y[o..o + n];
            let fj = &mut f[o..o + n];
            self.kinetics
                .production_rates_and_progress(&rates[j], c, fj, &mut s.progress);
            if tank.solves_energy() {
                let release: f64 = fj
                    .iter()
                    .zip(&s.enthalpy[j * n..(j + 1) * n])
                    .map(|(w, h)| w * h)
                    .sum();
                s.numerator[j] = -release;
            }
            let a = self.net.throughput[j] / tank.volume_m3;
            for (fi, ci) in fj.iter_mut().zip(c) {
                *fi -= a * ci;
            }
        }
        for feed in &self.net.feeds {
            let o = self.net.offsets[feed.to];
            let a = feed.q / self.net.tanks[feed.to].volume_m3;
            for (fi, ci) in f[o..o + n].iter_mut().zip(&feed.c) {
                *fi += a * ci;
            }
        }
        for l in &self.net.links {
            let (a_off, b_off) = (self.net.offsets[l.from], self.net.offsets[l.to]);
            let a = l.q / self.net.tanks[l.to].volume_m3;
            for i in 0..n {
                f[b_off + i] += a * y[a_off + i];
            }
        }
        if !self.thermo.is_empty() {
            self.energy_terms(t_s, y, s);
            for (j, tank) in self.net.tanks.iter().enumerate() {
                if tank.solves_energy() {
                    f[self.net.offsets[j] + n] = s.numerator[j] / s.heat_capacity[j];
                }
            }
        } else if let Some((capacity, dh)) = &self.liquid {
            self.liquid_numerators(t_s, y, s, &rates, *capacity, dh);
            for (j, tank) in self.net.tanks.iter().enumerate() {
                if tank.solves_energy() {
                    f[self.net.offsets[j] + n] = s.numerator[j] / capacity;
                }
            }
        }
    }

    /// The liquid energy numerators `N_j` (W/m3) of the tanks solving their energy: `-sum_k
    /// dH_k q_k + U A/V (T_c - T) + sum_in (q/V) rho cp (T_in - T)`, into `s.numerator`.
    fn liquid_numerators(
        &self,
        t_s: f64,
        y: &[f64],
        s: &mut Scratch,
        rates: &[RateConstants],
        capacity: f64,
        dh: &[f64],
    ) {
        for (j, tank) in self.net.tanks.iter().enumerate() {
            if !tank.solves_energy() {
                continue;
            }
            let c = self.net.concentrations_in(j, y);
            let mut release = 0.0;
            for (k, h) in dh.iter().enumerate() {
                if *h != 0.0 {
                    release += h * self.kinetics.rate_of_progress(&rates[j], c, k);
                }
            }
            s.numerator[j] = -release + self.exchange(j, t_s, s.temperatures[j]).0;
        }
        for feed in &self.net.feeds {
            let j = feed.to;
            if self.net.tanks[j].solves_energy() {
                let a = feed.q / self.net.tanks[j].volume_m3;
                s.numerator[j] += a * capacity * (feed.t - s.temperatures[j]);
            }
        }
        for l in &self.net.links {
            let j = l.to;
            if self.net.tanks[j].solves_energy() {
                let a = l.q / self.net.tanks[j].volume_m3;
                s.numerator[j] += a * capacity * (s.temperatures[l.from] - s.temperatures[j]);
            }
        }
    }

    /// Overwrites `values` (state-pattern order) with the analytic Jacobian at `(t_s, y)`.
    /// No allocation.
    pub(crate) fn jacobian_values(&self, t_s: f64, y: &[f64], values: &mut [f64]) {
        self.jacobian_evaluations
            .set(self.jacobian_evaluations.get() + 1);
        let n = self.net.n_species;
        let s = &mut *self.scratch.borrow_mut();
        self.prepare(y, s);
        let rates = self.rates.borrow();
        let pos = &self.positions;
        values.iter_mut().for_each(|v| *v = 0.0);
        // The energy numerators need the production rates: evaluate them per tank.
        s.numerator.iter_mut().for_each(|x| *x = 0.0);
        if !self.thermo.is_empty() {
            for (j, tank) in self.net.tanks.iter().enumerate() {
                if tank.solves_energy() {
                    let c = self.net.concentrations_in(j, y);
                    self.kinetics.production_rates(&rates[j], c, &mut s.w);
                    s.numerator[j] =
                        -s.w.iter()
                            .zip(&s.enthalpy[j * n..(j + 1) * n])
                            .map(|(w, h)| w * h)
                            .sum::<f64>();
                }
            }
            self.energy_terms(t_s, y, s);
        }
        let liquid = self.liquid.as_ref();
        let kin = self.kinetics.jacobian_pattern();
        let (starts, rows) = (kin.column_starts(), kin.row_indices());
        for (j, tank) in self.net.tanks.iter().enumerate() {
            let c = self.net.concentrations_in(j, y);
            let k = &rates[j];
            self.kinetics.jacobian_sparse(k, c, &mut s.kin_values);
            for (&p, &v) in pos.kinetics[j].iter().zip(&s.kin_values) {
                values[p] += v;
            }
            let a = self.net.throughput[j] / tank.volume_m3;
            for &p in &pos.diagonal[j] {
                values[p] -= a;
            }
            if !tank.solves_energy() {
                continue;
            }
            let t = s.temperatures[j];
            let h = &s.enthalpy[j * n..(j + 1) * n];
            let cp = &s.capacity[j * n..(j + 1) * n];
            let cap = s.heat_capacity[j];
            let rate = s.numerator[j] / cap;
            // dw/dT into the temperature column.
            self.kinetics
                .evaluate_rate_constant_slopes(t, k, &mut s.slopes);
            self.kinetics
                .production_rate_slopes(k, &s.slopes, c, &mut s.dw_dt);
            for (&p, &d) in pos.temperature_column[j].iter().zip(&s.dw_dt) {
                values[p] += d;
            }
            if let Some((capacity, dh)) = liquid {
                // Energy row over the tank's own concentrations: -sum_k dH_k dq_k/dc_i / C;
                // corner: (-sum_k dH_k dq_k/dT + d(exchange)/dT) / C (the entering streams'
                // -q/V are added below).
                let row = &mut s.w;
                row.iter_mut().for_each(|x| *x = 0.0);
                self.kinetics
                    .for_each_rate_derivative(k, c, |step, i, d| row[i] -= dh[step] * d);
                for (i, r) in row.iter().enumerate() {
                    values[pos.energy_row[j][i]] += r / capacity;
                }
                self.kinetics
                    .rates_of_progress_slopes(k, &s.slopes, c, &mut s.step_slopes);
                let release_slope: f64 = dh.iter().zip(&s.step_slopes).map(|(h, d)| -h * d).sum();
                values[pos.energy_row[j][n]] +=
                    (release_slope + self.exchange(j, t_s, t).1) / capacity;
                continue;
            }
            // Energy row over the tank's own concentrations: (dN/dc_k - F cp_k) / C, with
            // dN/dc_k = -sum_i h_i dw_i/dc_k.
            for col in 0..n {
                let mut weighted = 0.0;
                for p in starts[col]..starts[col + 1] {
                    weighted += h[rows[p]] * s.kin_values[p];
                }
                values[pos.energy_row[j][col]] += (-weighted - rate * cp[col]) / cap;
            }
            // Corner: dN/dT = -sum_i cp_i w_i - sum_i h_i dw_i/dT + d(exchange)/dT (the
            // entering streams' part is added below), dC/dT = sum_i c_i dcp_i/dT.
            self.kinetics.production_rates(k, c, &mut s.w);
            let mut dn_dt = self.exchange(j, t_s, t).1;
            let mut dc_dt = 0.0;
            for i in 0..n {
                dn_dt -= cp[i] * s.w[i] + h[i] * s.dw_dt[i];
                dc_dt += c[i] * R * self.thermo[i].cp_slope_over_r(t);
            }
            values[pos.energy_row[j][n]] += (dn_dt - rate * dc_dt) / cap;
        }
        for feed in &self.net.feeds {
            let j = feed.to;
            if !self.net.tanks[j].solves_energy() {
                continue;
            }
            let a = feed.q / self.net.tanks[j].volume_m3;
            if liquid.is_some() {
                values[pos.energy_row[j][n]] -= a;
                continue;
            }
            let cp = &s.capacity[j * n..(j + 1) * n];
            let sum: f64 = feed.c.iter().zip(cp).map(|(c, k)| c * k).sum();
            values[pos.energy_row[j][n]] -= a * sum / s.heat_capacity[j];
        }
        for (l, link) in self.net.links.iter().enumerate() {
            let (from, to) = (link.from, link.to);
            let a = link.q / self.net.tanks[to].volume_m3;
            for &p in &pos.link_species[l] {
                values[p] += a;
            }
            if !self.net.tanks[to].solves_energy() {
                continue;
            }
            if liquid.is_some() {
                values[pos.energy_row[to][n]] -= a;
                if self.net.tanks[from].solves_energy() {
                    values[pos.link_energy[l][n]] += a;
                }
                continue;
            }
            let cap = s.heat_capacity[to];
            let src = self.net.concentrations_in(from, y);
            for k in 0..n {
                values[pos.link_energy[l][k]] +=
                    a * (s.enthalpy[from * n + k] - s.enthalpy[to * n + k]) / cap;
            }
            let own: f64 = (0..n).map(|i| src[i] * s.capacity[to * n + i]).sum();
            values[pos.energy_row[to][n]] -= a * own / cap;
            if self.net.tanks[from].solves_energy() {
                let theirs: f64 = (0..n).map(|i| src[i] * s.capacity[from * n + i]).sum();
                values[pos.link_energy[l][n]] += a * theirs / cap;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::{HeatExchange, TemperatureHistory};

    fn hydrogen() -> Kinetics {
        let path = stoik_testsupport::mechanism_path("hydrogen-oxygen.toml");
        let file = stoik_mechanism::load_mechanism(&path).unwrap_or_else(|e| panic!("{e}"));
        Kinetics::compile(&file.mechanism).unwrap_or_else(|e| panic!("{e}"))
    }

    /// A state in the middle of an ignition for every tank (every species present, each
    /// tank at its own temperature).
    fn state(net: &TankNetwork) -> Vec<f64> {
        let n = net.n_species();
        let mut y = Vec::new();
        for (j, tank) in net.tanks().iter().enumerate() {
            y.extend((0..n).map(|i| 0.05 + 0.9 * ((i * 7 + 3 + 2 * j) % 11) as f64 / 11.0));
            if tank.solves_energy() {
                y.push(1000.0 + 150.0 * j as f64);
            }
        }
        y
    }

    /// Three tanks (isothermal, adiabatic, jacketed) with a feed, a split, a transfer back to
    /// the first tank, a recycle of the last tank onto itself and two outlets.
    fn network(kinetics: &Kinetics) -> TankNetwork {
        let n = kinetics.n_species();
        let coolant = TemperatureHistory::new(vec![0.0, 1e-3], vec![800.0, 900.0])
            .unwrap_or_else(|e| panic!("{e}"));
        let jacket = HeatExchange::total(40.0, coolant).unwrap_or_else(|e| panic!("{e}"));
        let c0 = vec![0.1; n];
        let tanks = vec![
            NetworkTank::new("one", 2e-3, c0.clone(), 1400.0),
            NetworkTank::new("two", 1e-3, c0.clone(), 1400.0).with_energy(Energy::Adiabatic),
            NetworkTank::new("three", 3e-3, c0.clone(), 1400.0)
                .with_energy(Energy::HeatExchange(jacket)),
        ];
        let feed: Vec<f64> = (0..n).map(|i| 0.02 + 0.3 * ((i * 3) % 5) as f64).collect();
        let t = |from: &str, to: &str, q: f64| Stream::Transfer {
            from: from.into(),
            to: to.into(),
            volumetric_flow_m3_per_s: q,
        };
        let streams = vec![
            Stream::Feed {
                to: "one".into(),
                volumetric_flow_m3_per_s: 5.0,
                inlet_mol_per_m3: feed.clone(),
                inlet_temperature_k: 700.0,
            },
            t("one", "two", 4.0),
            t("one", "three", 2.0),
            t("two", "one", 1.0),
            t("two", "three", 3.0),
            t("three", "three", 0.5),
            Stream::Outlet {
                from: "three".into(),
                volumetric_flow_m3_per_s: 5.0,
            },
            Stream::Feed {
                to: "two".into(),
                volumetric_flow_m3_per_s: 0.5,
                inlet_mol_per_m3: feed,
                inlet_temperature_k: 650.0,
            },
            Stream::Outlet {
                from: "two".into(),
                volumetric_flow_m3_per_s: 0.5,
            },
        ];
        TankNetwork::new(n, tanks, streams).unwrap_or_else(|e| panic!("{e}"))
    }

    /// The analytic network Jacobian against five-point central differences of the
    /// right-hand side (error O(h^4), Abramowitz & Stegun 25.3.6; step 1e-4 relative, common
    /// practice), with the tolerance of the single-model check in `model`.
    #[test]
    fn network_jacobian_matches_central_differences() {
        let kinetics = hydrogen();
        check_jacobian(&kinetics, &network(&kinetics));
    }

    /// An invented liquid-phase scheme (Arrhenius steps without thermochemistry, one of
    /// them second order): A -> B, A + B -> C, C -> A.
    fn liquid_kinetics() -> Kinetics {
        let text = "stoik_mechanism = 1\n[units]\namount = \"mol\"\nlength = \"m\"\nactivation_energy = \"kJ/mol\"\n\
            [[species]]\nname = \"A\"\n[[species]]\nname = \"B\"\n[[species]]\nname = \"C\"\n\
            [[step]]\nequation = \"A -> B\"\nforward = { prefactor = 1e6, activation_energy = 50.0 }\n\
            [[step]]\nequation = \"A + B -> C\"\nforward = { prefactor = 1e4, activation_energy = 30.0 }\n\
            [[step]]\nequation = \"C -> A\"\nforward = { prefactor = 1e7, activation_energy = 70.0 }\n";
        let file =
            stoik_mechanism::parse_mechanism(text, "<liquid>").unwrap_or_else(|e| panic!("{e}"));
        Kinetics::compile(&file.mechanism).unwrap_or_else(|e| panic!("{e}"))
    }

    /// The same three-tank network described as a liquid (rho cp and one enthalpy per step):
    /// its Jacobian against central differences too.
    #[test]
    fn liquid_network_jacobian_matches_central_differences() {
        let kinetics = liquid_kinetics();
        let liquid =
            LiquidPhase::per_volume(4e6, vec![-8e4, -5e4, 2e4]).unwrap_or_else(|e| panic!("{e}"));
        check_jacobian(&kinetics, &network(&kinetics).with_liquid(liquid));
    }

    /// A liquid description whose enthalpies do not match the steps, and a step whose
    /// reverse rate needs thermochemistry, are refused together.
    #[test]
    fn a_liquid_network_checks_its_enthalpies_and_reverse_steps() {
        let kinetics = hydrogen();
        let liquid = LiquidPhase::per_volume(4e6, vec![-1e4; 2]).unwrap_or_else(|e| panic!("{e}"));
        let net = network(&kinetics).with_liquid(liquid);
        match NetworkSystem::new(&kinetics, &net) {
            Err(NetworkError::Invalid(problems)) => {
                assert!(problems.contains(&NetworkProblem::LiquidEnthalpies {
                    expected: kinetics.n_steps(),
                    found: 2
                }));
                assert!(problems
                    .iter()
                    .any(|p| matches!(p, NetworkProblem::LiquidReverseFromThermo { .. })));
            }
            other => panic!(
                "expected the liquid description refused, got {:?}",
                other.err()
            ),
        }
    }

    fn check_jacobian(kinetics: &Kinetics, net: &TankNetwork) {
        let sys = NetworkSystem::new(kinetics, net).unwrap_or_else(|e| panic!("{e}"));
        let m = net.n_states();
        let y = state(net);
        let t_s = 0.6e-3;
        let mut values = vec![0.0; sys.pattern.nnz()];
        sys.jacobian_values(t_s, &y, &mut values);
        let f = |y: &[f64]| {
            let mut out = vec![0.0; m];
            sys.state_derivative(t_s, y, &mut out);
            out
        };
        let largest = values.iter().fold(0.0f64, |a, v| a.max(v.abs()));
        let mut worst: f64 = 0.0;
        let mut outside = 0usize;
        for col in 0..m {
            let h = 1e-4 * y[col].abs().max(1e-3);
            let at = |offset: f64| {
                let mut shifted = y.clone();
                shifted[col] += offset;
                f(&shifted)
            };
            let (f2p, f1p, f1m, f2m) = (at(2.0 * h), at(h), at(-h), at(-2.0 * h));
            for row in 0..m {
                let fd = (8.0 * (f1p[row] - f1m[row]) - (f2p[row] - f2m[row])) / (12.0 * h);
                let analytic = match sys.pattern.position(row, col) {
                    Some(p) => values[p],
                    None => {
                        if fd != 0.0 {
                            outside += 1;
                        }
                        0.0
                    }
                };
                // Rounding of the difference quotient: a few units of round-off of the
                // largest right-hand side value in the row over the step (common practice).
                let size = [f2p[row], f1p[row], f1m[row], f2m[row]]
                    .iter()
                    .fold(0.0f64, |a, v| a.max(v.abs()));
                let rounding = 10.0 * f64::EPSILON * size / h;
                let scale = fd.abs().max(analytic.abs()).max(1e-9 * largest);
                let e = ((fd - analytic).abs() - rounding).max(0.0) / scale;
                worst = worst.max(e);
            }
        }
        eprintln!("network Jacobian: worst relative error {worst:.1e}");
        assert_eq!(outside, 0, "nonzero derivatives outside the pattern");
        assert!(worst < 1e-6, "worst relative Jacobian error {worst:e}");
    }

    /// Every kind of bad description is reported, all at once.
    #[test]
    fn every_problem_is_reported_at_once() {
        let tanks = vec![
            NetworkTank::new("a", 1.0, vec![0.0], 300.0),
            NetworkTank::new("b", -1.0, vec![0.0], 300.0),
            NetworkTank::new("lonely", 1.0, vec![0.0], 300.0),
        ];
        let streams = vec![
            Stream::Feed {
                to: "a".into(),
                volumetric_flow_m3_per_s: 1.0,
                inlet_mol_per_m3: vec![],
                inlet_temperature_k: 300.0,
            },
            Stream::Transfer {
                from: "a".into(),
                to: "nowhere".into(),
                volumetric_flow_m3_per_s: 1.0,
            },
            Stream::Outlet {
                from: "b".into(),
                volumetric_flow_m3_per_s: -2.0,
            },
        ];
        let Err(NetworkError::Invalid(problems)) = TankNetwork::new(1, tanks, streams) else {
            panic!("accepted")
        };
        let has = |f: &dyn Fn(&NetworkProblem) -> bool| problems.iter().any(f);
        assert!(has(&|p| matches!(
            p,
            NetworkProblem::BadTank { tank: 1, .. }
        )));
        assert!(has(
            &|p| matches!(p, NetworkProblem::UnknownTank { stream: 1, name } if name == "nowhere")
        ));
        assert!(has(&|p| matches!(
            p,
            NetworkProblem::BadFlow { stream: 2, .. }
        )));
        assert!(has(&|p| matches!(
            p,
            NetworkProblem::BadFeed { stream: 0, .. }
        )));
        assert!(has(&|p| matches!(
            p,
            NetworkProblem::Unconnected { tank: 2, .. }
        )));
        // Tank "a": 1 in, 1 out (to the unknown tank) balances; nothing else is wrong with it.
        assert!(!has(&|p| matches!(
            p,
            NetworkProblem::FlowImbalance { tank: 0, .. }
        )));
        assert_eq!(problems.len(), 5, "{problems:?}");
    }
}
