//! # stoik-kinetics
//!
//! A [`Mechanism`](stoik_mechanism::Mechanism) compiled into flat per-step lists
//! ([`Kinetics::compile`], which checks the mechanism first and returns a [`CompileError`]
//! for one that breaks the loader's rules): rate constants per step, rates of progress, net
//! production rates and the analytic Jacobian `dw/dc`, dense or on a sparse pattern
//! ([`JacobianPattern`]) fixed at compile time. Nothing here reads text or knows units other
//! than SI, and the right-hand side and Jacobian routines do not allocate.
//!
//! Conventions (mass action, common practice):
//! - rate of progress `q_j = M_j (kf_j prod_i c_i^a_ij - kr_j prod_i c_i^b_ij)` in mol/(m3 s),
//!   with `a_ij` the forward orders (the reactant coefficients unless given explicitly),
//!   `b_ij` the product coefficients, and `M_j` the third-body concentration (1 when the step
//!   has no third body);
//! - net production `w_i = sum_j (nu''_ij - nu'_ij) q_j` in mol/(m3 s).
//!
//! Reverse rate constants: a reversible step with explicit reverse parameters uses them; one
//! without takes `kr = kf / Kc` from the species' thermochemistry (see
//! [`Kinetics::equilibrium_constants`]). [`step_energetics`] reports each step's reaction
//! enthalpy, entropy, Gibbs energy and equilibrium constants, and
//! [`collision_limit_warnings`] flags bimolecular rate constants above the gas-kinetic
//! collision limit.
//!
//! Pressure-dependent steps (falloff with Lindemann, Troe, SRI or fixed-centre broadening,
//! chemically activated steps, pressure tables) replace `M_j` by a factor formed from the
//! current concentrations (see [`RateConstants`]); their Jacobian columns carry d k/d\[M\]
//! (tables: d k/dP with P = (sum c) R T) and their temperature slopes the temperature
//! dependence of k0/kinf, the broadening and, for tables, of P.
//!
//! [`conservation_laws`] computes the conservation laws of a mechanism exactly: a readable
//! basis (element totals, then moieties such as `A + B + C`) of the left null space of the
//! net stoichiometric matrix.
//!
//! Non-integer orders are evaluated on `max(c, 0)` (a negative concentration has no real
//! non-integer power); integer orders use exact integer powers, so the right-hand side stays
//! smooth through small negative excursions of the integrator.

#![warn(missing_docs)]

mod compile;
mod conservation;
mod energetics;
mod falloff;
mod introspect;
mod kinetics;
mod pattern;
mod rows;
mod validate;

// Compiling and evaluating a mechanism.
pub use kinetics::{FalloffLimit, Kinetics, RateConstants, TemperatureError};
pub use pattern::{JacobianPattern, PatternError};
pub use validate::CompileError;

// Introspection for embedding code.
pub use introspect::{element_matrix, ElementMatrix, RateUnits};

// Step energetics and the collision-limit check.
pub use energetics::{
    collision_limit_warnings, compiled_rate_constant_range_errors, hard_sphere_rate_constant,
    rate_constant_range_errors, step_energetics, StepEnergetics, COLLISION_LIMIT_M3_PER_MOL_S,
    COLLISION_LIMIT_TEMPERATURES_K, RATE_CHECK_POINTS, RATE_CHECK_RANGE_K,
};

// Conservation laws.
pub use conservation::{
    compensated_sum, conservation_laws, ConservationError, ConservationLaw, LawKind,
};

use kinetics::{CompiledArrhenius, OrderTerm, ThirdBodyKind};

/// Molar gas constant R in J/(mol K) (SI 2019 exact value, CODATA).
pub const GAS_CONSTANT: f64 = stoik_mechanism::GAS_CONSTANT;

/// Standard-state pressure P0 in Pa (1 bar) of the equilibrium constants.
pub const STANDARD_PRESSURE_PA: f64 = stoik_thermo::P_STANDARD_PA;
