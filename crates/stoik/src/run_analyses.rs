//! The analyses on the page of `stoik run --report`: rates of production of a few species
//! and the element flux, both integrated over the whole run, and the ranked sensitivities of
//! one observable, so that one file answers "what happened and which steps made it happen".
//!
//! What is analysed comes from flags, or else from the run:
//! - rates of production: `--report-rates-of`, else the [`DEFAULT_RATE_SPECIES`] species of
//!   largest turnover over the run (production plus consumption; an inert bath gas has none);
//! - flux: `--report-flux-element`, else the element in the most species (none for a
//!   mechanism of abstract species);
//! - sensitivity: `--report-sensitivity-of`, else the ignition delay when the run found one,
//!   else the final concentration of the product (a species absent at the start) of largest
//!   peak, else of the species of largest peak; forward method up to [`FORWARD_MAX_STEPS`]
//!   steps, adjoint beyond (one backward pass whatever the number of steps).
//!
//! Flags are checked before the run (bad input, exit 2). An analysis that cannot be done on
//! the run (no ignition found, a failed sensitivity pass) is left out of the page with a
//! note saying why; the run itself stands.

use crate::error::CliError;
use crate::RunArgs;
use stoik::analysis::{
    element_index, flux_graph, observable_sensitivity, species_budget, species_index, step_rates,
    AnalysisError, FluxGraph, Method, Observable, ObservableSensitivity, Span, StateQuantity,
    StepRates,
};
use stoik::mechanism::Mechanism;
use stoik::reactor::Profiles;
use stoik::scenario::{RunOutcome, RunPlan};

/// Species whose rates of production the page shows by default.
pub const DEFAULT_RATE_SPECIES: usize = 3;

/// Smallest relative flux drawn on the page (edges below 1 % of the largest are left out).
pub const FLUX_THRESHOLD: f64 = 0.01;

/// Mechanisms with at most this many steps get forward sensitivities (the cost grows with
/// the number of steps; the forward method is also the more robust of the two); larger
/// ones the adjoint (one backward pass).
pub const FORWARD_MAX_STEPS: usize = 100;

/// Bars per chart.
pub const TOP: usize = 10;

/// The analyses asked for by the flags, checked against the mechanism.
#[derive(Debug, Clone, Default)]
pub struct Asked {
    rate_species: Option<Vec<usize>>,
    flux_element: Option<usize>,
    observable: Option<Observable>,
}

fn at_flag(flag: &'static str) -> impl Fn(AnalysisError) -> CliError {
    move |source| CliError::Analysis { flag, source }
}

/// Reads the analysis flags of `args` against `mechanism`.
pub fn asked(args: &RunArgs, mechanism: &Mechanism) -> Result<Asked, CliError> {
    let rate_species = if args.report_rates_of.is_empty() {
        None
    } else {
        Some(
            args.report_rates_of
                .iter()
                .map(|n| species_index(mechanism, n.trim()))
                .collect::<Result<Vec<_>, _>>()
                .map_err(at_flag("--report-rates-of"))?,
        )
    };
    let flux_element = args
        .report_flux_element
        .as_deref()
        .map(|e| element_index(mechanism, e.trim()))
        .transpose()
        .map_err(at_flag("--report-flux-element"))?;
    let observable = args
        .report_sensitivity_of
        .as_deref()
        .map(|o| Observable::parse(mechanism, o))
        .transpose()
        .map_err(at_flag("--report-sensitivity-of"))?;
    Ok(Asked {
        rate_species,
        flux_element,
        observable,
    })
}

/// What the page shows besides the run, with a note for each analysis left out.
#[derive(Debug, Default)]
pub struct RunAnalyses {
    /// The rates over the whole run and the species shown.
    pub rates: Option<(Vec<StepRates>, Vec<usize>)>,
    /// The element flux over the whole run.
    pub flux: Option<FluxGraph>,
    /// The ranked sensitivities.
    pub sensitivity: Option<ObservableSensitivity>,
    /// Why an analysis is missing, one line each.
    pub notes: Vec<String>,
}

/// Species indices by decreasing peak concentration over `profiles` (ties in mechanism order).
fn by_peak(profiles: &Profiles, n_species: usize) -> Vec<usize> {
    let peak = |i: usize| {
        profiles
            .concentrations_mol_per_m3
            .iter()
            .filter_map(|row| row.get(i).copied())
            .filter(|c| c.is_finite())
            .fold(0.0f64, f64::max)
    };
    let peaks: Vec<f64> = (0..n_species).map(peak).collect();
    let mut order: Vec<usize> = (0..n_species).collect();
    order.sort_by(|&a, &b| peaks[b].total_cmp(&peaks[a]).then(a.cmp(&b)));
    order
}

/// The [`DEFAULT_RATE_SPECIES`] species of largest turnover (production plus consumption)
/// in `rates`, largest first; species without turnover are left out.
fn busiest_species(mechanism: &Mechanism, rates: &StepRates) -> Vec<usize> {
    let mut turnover: Vec<(usize, f64)> = (0..mechanism.species.len())
        .map(|i| {
            let b = species_budget(mechanism, rates, i);
            (i, b.production_total.abs() + b.consumption_total.abs())
        })
        .filter(|(_, t)| t.is_finite() && *t > 0.0)
        .collect();
    turnover.sort_by(|a, b| b.1.total_cmp(&a.1).then(a.0.cmp(&b.0)));
    turnover
        .into_iter()
        .take(DEFAULT_RATE_SPECIES)
        .map(|(i, _)| i)
        .collect()
}

/// The element carried by the most species (first declared among equals); `None` without
/// elements.
fn busiest_element(mechanism: &Mechanism) -> Option<usize> {
    (0..mechanism.elements.len()).max_by(|&a, &b| {
        let count = |e: usize| {
            mechanism
                .species
                .iter()
                .filter(|s| {
                    s.composition
                        .as_ref()
                        .is_some_and(|c| c.iter().any(|&(el, n)| el == e && n > 0.0))
                })
                .count()
        };
        count(a).cmp(&count(b)).then(b.cmp(&a))
    })
}

/// The default observable of a run (see the module documentation).
fn default_observable(plan: &RunPlan, outcome: &RunOutcome, order: &[usize]) -> Observable {
    if outcome.ignition_delay.is_some() {
        return Observable::IgnitionDelay;
    }
    let initial = plan.initial_mol_per_m3();
    let product = order
        .iter()
        .copied()
        .find(|&i| initial.get(i).is_some_and(|&c| c == 0.0));
    let species = product.or_else(|| order.first().copied()).unwrap_or(0);
    Observable::Final(StateQuantity::Species(species))
}

/// Runs the analyses of the page for a completed run.
pub fn analyse(plan: &RunPlan, outcome: &RunOutcome, asked: &Asked) -> RunAnalyses {
    let mechanism = plan.mechanism();
    let profiles = outcome.profiles();
    let order = by_peak(profiles, mechanism.species.len());
    let mut out = RunAnalyses::default();
    let end_s = profiles.times_s.last().copied().unwrap_or(0.0);
    let whole = Span::Window {
        from_s: profiles.times_s.first().copied().unwrap_or(0.0),
        to_s: end_s,
    };
    match step_rates(plan, &[whole]) {
        Ok(rates) => {
            let species = asked.rate_species.clone().unwrap_or_else(|| {
                rates
                    .first()
                    .map(|r| busiest_species(mechanism, r))
                    .unwrap_or_default()
            });
            let element = asked.flux_element.or_else(|| busiest_element(mechanism));
            match element {
                Some(e) => match rates
                    .first()
                    .map(|r| flux_graph(mechanism, e, r, FLUX_THRESHOLD))
                {
                    Some(Ok(graph)) => out.flux = Some(graph),
                    Some(Err(err)) => out.notes.push(format!("element flux left out: {err}")),
                    None => {}
                },
                None => out.notes.push(
                    "element flux left out: no species of the mechanism declares atoms".into(),
                ),
            }
            out.rates = Some((rates, species));
        }
        Err(err) => out.notes.push(format!(
            "rates of production and element flux left out: {err}"
        )),
    }
    let observable = asked
        .observable
        .unwrap_or_else(|| default_observable(plan, outcome, &order));
    // Forward while its cost (one sensitivity per step) is small; adjoint beyond.
    let method = if mechanism.steps.len() <= FORWARD_MAX_STEPS {
        Method::Forward
    } else {
        Method::Adjoint
    };
    match observable_sensitivity(plan, observable, method, None) {
        Ok(result) => out.sensitivity = Some(result),
        Err(err) => out.notes.push(format!(
            "sensitivity of the {} left out: {err}",
            observable.describe(mechanism)
        )),
    }
    out
}
