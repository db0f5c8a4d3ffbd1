//! # stoik
//!
//! Simulates chemical reaction mechanisms: a mechanism (species, elementary steps with
//! Arrhenius parameters and third bodies) plus conditions becomes concentration-time profiles,
//! integrated with an implicit BDF method fed with analytic Jacobians.
//!
//! This facade re-exports the layers, each usable on its own:
//! - [`mechanism`]: the SI mechanism model, the TOML mechanism format, validation;
//! - [`kinetics`]: a mechanism compiled to flat arrays (rates, production rates, Jacobians),
//!   and its conservation laws ([`kinetics::conservation_laws`]);
//! - [`reactor`]: reactors and time integration (diffsol BDF), profiles and solver statistics,
//!   the drift of the conservation laws along a profile ([`reactor::ReactorConservation`]),
//!   the stepping session for process models ([`reactor::BatchIntegrator`]) with the user's
//!   own sources inside the integrator ([`reactor::UserTerms`]);
//! - [`scenario`]: the scenario file (what to run) resolved into reactor terms, and scenario
//!   runs as library calls ([`scenario::run_scenario`], [`scenario::run_batch`]) with every
//!   warning;
//! - [`suite`]: regression suites: named observables of scenario runs recorded in a baseline
//!   with provenance, verified after every mechanism edit ([`suite::record`],
//!   [`suite::verify`]);
//! - [`thermo`]: NASA 7-coefficient polynomials, their evaluation and fitting to tables;
//! - [`fit`]: Arrhenius parameters fitted to measured rate constants, with uncertainties;
//! - [`diff`]: the kinetic edits between two mechanisms (steps matched by canonical
//!   equation, k_new/k_old ratios), a mechanism with one edit reverted, git revisions;
//! - [`analysis`]: rates of production and element-flux graphs of a run;
//! - [`plot`]: profiles, signed bar charts and flux graphs as SVG (plotters, in-process), and
//!   the self-contained HTML report page.
//!
//! ## Depending on the library alone
//!
//! The default feature `cli` builds the `stoik` binary and its command-line crates (clap,
//! indicatif, ctrlc, csv). A program that only embeds the library turns it off:
//!
//! ```toml
//! [dependencies]
//! stoik = { version = "0.1", default-features = false }
//! ```
//!
//! A process model compiles a mechanism once and integrates it many times:
//!
//! ```
//! use stoik::{kinetics::Kinetics, mechanism::parse_mechanism, reactor};
//!
//! let text = r#"
//! stoik_mechanism = 1
//! [units]
//! amount = "mol"
//! length = "m"
//! [[species]]
//! name = "A"
//! [[species]]
//! name = "B"
//! [[step]]
//! equation = "A -> B"
//! forward = { prefactor = 2.0 }
//! "#;
//! let file = parse_mechanism(text, "<inline>").expect("valid mechanism");
//! let kinetics = Kinetics::compile(&file.mechanism).expect("compiles");
//! let options = reactor::IntegrationOptions::new(kinetics.n_species());
//! let profiles = reactor::integrate(&kinetics, 300.0, &[1.0, 0.0], &[0.0, 0.5], &options)
//!     .expect("integration succeeds");
//! // A -> B is first order: c_A = exp(-k t) = exp(-1) at t = 0.5 s.
//! let a_end = profiles.concentrations_mol_per_m3[1][0];
//! assert!((a_end - (-1.0f64).exp()).abs() < 1e-5);
//! ```

#![warn(missing_docs)]

#[doc(inline)]
pub use stoik_analysis as analysis;
#[doc(inline)]
pub use stoik_diff as diff;
#[doc(inline)]
pub use stoik_fit as fit;
#[doc(inline)]
pub use stoik_kinetics as kinetics;
#[doc(inline)]
pub use stoik_mechanism as mechanism;
#[doc(inline)]
pub use stoik_plot as plot;
#[doc(inline)]
pub use stoik_reactor as reactor;
#[doc(inline)]
pub use stoik_scenario as scenario;
#[doc(inline)]
pub use stoik_suite as suite;
#[doc(inline)]
pub use stoik_thermo as thermo;
