//! Net rates of progress of every step at instants and integrated over windows of one run.

use crate::AnalysisError;
use stoik_kinetics::Kinetics;
use stoik_mechanism::Mechanism;
use stoik_reactor::{Quantity, ReactorModel, Watch};
use stoik_scenario::{OutputTimes, RunPlan};

/// When to look at a run.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Span {
    /// One instant, s.
    Instant(f64),
    /// A time window `[from_s, to_s]`, s (start before end).
    Window {
        /// Start, s.
        from_s: f64,
        /// End, s.
        to_s: f64,
    },
}

impl Span {
    /// The unit of a rate at this span: `mol/(m3 s)` at an instant, `mol/m3` (its time
    /// integral) over a window.
    pub fn rate_unit(&self) -> &'static str {
        match self {
            Span::Instant(_) => "mol/(m3 s)",
            Span::Window { .. } => "mol/m3",
        }
    }

    /// `t = ... s` or `[t1, t2] s`, numbers in shortest round-trip form.
    pub fn describe(&self) -> String {
        match *self {
            Span::Instant(t) => format!("t = {t:e} s"),
            Span::Window { from_s, to_s } => format!("window [{from_s:e}, {to_s:e}] s"),
        }
    }

    /// Checks the span against a run ending at `end_s` (s).
    ///
    /// Errors: [`AnalysisError::TimeOutsideRun`] for an instant outside `[0, end_s]`,
    /// [`AnalysisError::BadWindow`] for a window that is not `0 <= from < to <= end_s`.
    pub fn check(&self, end_s: f64) -> Result<(), AnalysisError> {
        match *self {
            Span::Instant(time_s) if !(time_s >= 0.0 && time_s <= end_s) => {
                Err(AnalysisError::TimeOutsideRun { time_s, end_s })
            }
            Span::Window { from_s, to_s } if !(from_s >= 0.0 && from_s < to_s && to_s <= end_s) => {
                Err(AnalysisError::BadWindow {
                    from_s,
                    to_s,
                    end_s,
                })
            }
            _ => Ok(()),
        }
    }
}

/// The net rate of progress (forward minus reverse) of every step at one span of a run.
#[derive(Debug, Clone, PartialEq)]
pub struct StepRates {
    /// The span.
    pub span: Span,
    /// Per step (mechanism order): `q_j` in mol/(m3 s) at an instant, its time integral in
    /// mol/m3 over a window ([`Span::rate_unit`]).
    pub rates: Vec<f64>,
    /// Temperature at an instant (K); for a window, at its end (K).
    pub temperature_k: f64,
}

/// The index of species `name` in `mechanism`.
///
/// Errors: [`AnalysisError::UnknownSpecies`], with a species differing only in letter case
/// as a suggestion.
pub fn species_index(mechanism: &Mechanism, name: &str) -> Result<usize, AnalysisError> {
    mechanism
        .species_index(name)
        .ok_or_else(|| AnalysisError::UnknownSpecies {
            name: name.to_string(),
            suggestion: mechanism
                .species
                .iter()
                .find(|s| s.name.eq_ignore_ascii_case(name))
                .map(|s| s.name.clone()),
        })
}

/// The net rate of progress of every step (mol/(m3 s)) at time `t_s` (s), temperature
/// `temperature_k` (K) and concentrations `c` (mol/m3, one per species) of a reactor
/// `model`: rate constants at the temperature, photolysis J(t) of box conditions applied,
/// as the reactor's equations evaluate them.
pub fn step_rates_at_state(
    kinetics: &Kinetics,
    model: &ReactorModel,
    t_s: f64,
    temperature_k: f64,
    c: &[f64],
) -> Vec<f64> {
    let mut k = kinetics.rate_constants(temperature_k);
    if !model.conditions.photolysis.is_empty() {
        model.conditions.apply_photolysis(t_s, &mut k.forward);
    }
    let mut q = vec![0.0; kinetics.n_steps()];
    kinetics.rates_of_progress(&k, c, &mut q);
    q
}

/// Runs `plan` once and returns the step rates at every span of `spans`, in their order.
///
/// The plan's output times are replaced by the instants and window ends asked for (the run's end is kept),
/// and one [`Watch::WindowIntegral`] of [`Quantity::StepRate`] per step and window is
/// added; everything else (reactor, tolerances, conditions) is the plan's.
///
/// Errors: [`AnalysisError::NothingAsked`] for no span; [`AnalysisError::TimeOutsideRun`]
/// and [`AnalysisError::BadWindow`] for a span outside `[0, end time]`;
/// [`AnalysisError::Scenario`] when the plan cannot run; [`AnalysisError::RunFailed`] when
/// the integration stops before the last time asked for.
pub fn step_rates(plan: &RunPlan, spans: &[Span]) -> Result<Vec<StepRates>, AnalysisError> {
    if spans.is_empty() {
        return Err(AnalysisError::NothingAsked);
    }
    let end_s = plan.scenario().end_time_s;
    for span in spans {
        span.check(end_s)?;
    }
    let kinetics =
        Kinetics::compile(plan.mechanism()).map_err(stoik_scenario::ScenarioError::from)?;
    let n_steps = kinetics.n_steps();
    let mut plan = plan.clone();
    let mut instants: Vec<f64> = spans
        .iter()
        .map(|s| match *s {
            Span::Instant(t) => t,
            Span::Window { to_s, .. } => to_s,
        })
        .collect();
    instants.sort_by(f64::total_cmp);
    instants.dedup();
    plan.set_output_times(OutputTimes::List(instants))?;
    let watches: Vec<Watch> = spans
        .iter()
        .filter_map(|s| match *s {
            Span::Window { from_s, to_s } => Some((from_s, to_s)),
            Span::Instant(_) => None,
        })
        .flat_map(|(from_s, to_s)| {
            (0..n_steps).map(move |j| Watch::WindowIntegral {
                quantity: Quantity::StepRate(j),
                from_s,
                to_s,
            })
        })
        .collect();
    plan.add_watches(&watches);
    let outcome = plan.run_compiled(&kinetics)?;
    let profiles = outcome.profiles();
    let reached_s = profiles.times_s.last().copied().unwrap_or(0.0);
    let failed = |reached_s: f64| AnalysisError::RunFailed {
        reached_s,
        reason: outcome
            .failure()
            .map_or_else(|| "no value found".to_string(), |f| f.to_string()),
    };
    spans
        .iter()
        .map(|&span| match span {
            Span::Instant(t) => {
                let row = profiles
                    .times_s
                    .iter()
                    .position(|&x| x == t)
                    .ok_or_else(|| failed(reached_s))?;
                let temperature_k = profiles.temperatures_k[row];
                Ok(StepRates {
                    span,
                    rates: step_rates_at_state(
                        &kinetics,
                        plan.model(),
                        t,
                        temperature_k,
                        &profiles.concentrations_mol_per_m3[row],
                    ),
                    temperature_k,
                })
            }
            Span::Window { from_s, to_s } => {
                if outcome.failure().is_some() && reached_s < to_s {
                    return Err(failed(reached_s));
                }
                let rates = (0..n_steps)
                    .map(|j| {
                        profiles
                            .located(Watch::WindowIntegral {
                                quantity: Quantity::StepRate(j),
                                from_s,
                                to_s,
                            })
                            .map(|l| l.value)
                            .ok_or_else(|| failed(reached_s))
                    })
                    .collect::<Result<Vec<f64>, _>>()?;
                let row = profiles
                    .times_s
                    .iter()
                    .position(|&x| x == to_s)
                    .ok_or_else(|| failed(reached_s))?;
                Ok(StepRates {
                    span,
                    rates,
                    temperature_k: profiles.temperatures_k[row],
                })
            }
        })
        .collect()
}
