//! Many runs of one compiled mechanism at once: different temperatures, initial compositions
//! (and so pressures) and rate multipliers, integrated in parallel with rayon.
//!
//! Each case gets its own solver (solver state cannot be shared between threads), built from
//! the one compiled [`Kinetics`]; nothing is recompiled. Results come back in case order.

use crate::{simulate, IntegrationError, IntegrationOptions, Profiles, ReactorModel};
use rayon::prelude::*;
use std::borrow::Cow;
use stoik_kinetics::Kinetics;

/// One run of a batch.
#[derive(Debug, Clone, PartialEq)]
pub struct BatchCase {
    /// The reactor (constant volume or pressure; isothermal, adiabatic or prescribed).
    pub model: ReactorModel,
    /// Temperature in K: the held one (isothermal) or the initial one (adiabatic).
    pub temperature_k: f64,
    /// Initial concentrations in mol/m3, one per species.
    pub initial_mol_per_m3: Vec<f64>,
    /// Output times in s, increasing; the first is the start time.
    pub output_times_s: Vec<f64>,
    /// Rate multipliers as (step index, factor): both directions of the step are scaled by
    /// the dimensionless factor. Empty for the mechanism as compiled.
    pub rate_multipliers: Vec<(usize, f64)>,
    /// Tolerances, linear algebra and step limit of this run.
    pub options: IntegrationOptions,
}

/// Why a batch case could not run or did not finish.
#[derive(Debug, thiserror::Error)]
pub enum BatchError {
    /// A rate multiplier names a step that does not exist or a factor that is not finite
    /// and positive.
    #[error("rate multiplier ({step}, {factor}) is invalid: the step index must be below {n_steps} and the factor finite and positive")]
    BadMultiplier {
        /// Step index given.
        step: usize,
        /// Factor given.
        factor: f64,
        /// Number of steps of the mechanism.
        n_steps: usize,
    },
    /// The integration failed or its arguments were invalid.
    #[error(transparent)]
    Integration(#[from] IntegrationError),
}

/// Runs one case on the calling thread.
fn run_case(kinetics: &Kinetics, case: &BatchCase) -> Result<Profiles, BatchError> {
    let kinetics = if case.rate_multipliers.is_empty() {
        Cow::Borrowed(kinetics)
    } else {
        let mut scaled = kinetics.clone();
        for &(step, factor) in &case.rate_multipliers {
            if !scaled.scale_step(step, factor) {
                return Err(BatchError::BadMultiplier {
                    step,
                    factor,
                    n_steps: kinetics.n_steps(),
                });
            }
        }
        Cow::Owned(scaled)
    };
    Ok(simulate(
        &kinetics,
        &case.model,
        case.temperature_k,
        &case.initial_mol_per_m3,
        &case.output_times_s,
        &case.options,
    )?)
}

/// Integrates every case of `cases` over the one compiled `kinetics`, in parallel on rayon's
/// global thread pool (one thread per core unless `RAYON_NUM_THREADS` says otherwise), and
/// returns the results in case order. `on_case_done` is called once per finished case, from
/// the worker threads (for a progress bar).
pub fn integrate_batch(
    kinetics: &Kinetics,
    cases: &[BatchCase],
    on_case_done: &(dyn Fn() + Sync),
) -> Vec<Result<Profiles, BatchError>> {
    cases
        .par_iter()
        .map(|case| {
            let result = run_case(kinetics, case);
            on_case_done();
            result
        })
        .collect()
}

/// Like [`integrate_batch`] but on the calling thread only, in order: the serial baseline of
/// the batch speed-up and a choice for callers that manage their own threads.
pub fn integrate_batch_serial(
    kinetics: &Kinetics,
    cases: &[BatchCase],
    on_case_done: &(dyn Fn() + Sync),
) -> Vec<Result<Profiles, BatchError>> {
    cases
        .iter()
        .map(|case| {
            let result = run_case(kinetics, case);
            on_case_done();
            result
        })
        .collect()
}
