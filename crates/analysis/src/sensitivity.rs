//! Which rate constants matter: local sensitivities of a scenario's observables and profiles
//! to the rate constant of every step, ranked.

use crate::rates::species_index;
use crate::AnalysisError;
use stoik_kinetics::FalloffLimit;
use stoik_kinetics::Kinetics;
use stoik_mechanism::Mechanism;
use stoik_reactor::{
    adjoint_parameter_sensitivity, forward_parameter_sensitivities, IgnitionCriterion, Parameter,
    Quantity, SensitivityError, SensitivityStats, Target, Watch,
};
use stoik_scenario::RunPlan;

/// A quantity of the state: a species' concentration or the temperature.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StateQuantity {
    /// Species (mechanism index); concentration in mol/m3.
    Species(usize),
    /// The temperature (K); a state only when the reactor solves the energy balance.
    Temperature,
}

/// A scalar of a run to differentiate.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Observable {
    /// The value at the end of the run (mol/m3 or K).
    Final(StateQuantity),
    /// The largest value over the run (mol/m3 or K), located on the solver's steps.
    Peak(StateQuantity),
    /// The time of the largest value (s).
    PeakTime(StateQuantity),
    /// The ignition delay (s) by the scenario's `[ignition]` criterion.
    IgnitionDelay,
}

impl Observable {
    /// Reads an observable: `ignition-delay`, `final:NAME`, `peak:NAME` or `peak-time:NAME`,
    /// NAME a species of `mechanism` or `T` (the temperature).
    ///
    /// Errors: [`AnalysisError::UnknownObservable`]; [`AnalysisError::UnknownSpecies`].
    pub fn parse(mechanism: &Mechanism, text: &str) -> Result<Observable, AnalysisError> {
        let text = text.trim();
        if text == "ignition-delay" {
            return Ok(Observable::IgnitionDelay);
        }
        let unknown = || AnalysisError::UnknownObservable {
            text: text.to_string(),
        };
        let (kind, name) = text.split_once(':').ok_or_else(unknown)?;
        let name = name.trim();
        let quantity = if name == "T" && mechanism.species_index("T").is_none() {
            StateQuantity::Temperature
        } else {
            StateQuantity::Species(species_index(mechanism, name)?)
        };
        match kind.trim() {
            "final" => Ok(Observable::Final(quantity)),
            "peak" => Ok(Observable::Peak(quantity)),
            "peak-time" => Ok(Observable::PeakTime(quantity)),
            _ => Err(unknown()),
        }
    }

    /// Words for the observable (`ignition delay`, `final OH`, `peak T`, `peak time of OH`).
    pub fn describe(&self, mechanism: &Mechanism) -> String {
        let name = |q: &StateQuantity| match q {
            StateQuantity::Species(i) => mechanism
                .species
                .get(*i)
                .map_or_else(|| "?".to_string(), |s| s.name.clone()),
            StateQuantity::Temperature => "T".to_string(),
        };
        match self {
            Observable::Final(q) => format!("final {}", name(q)),
            Observable::Peak(q) => format!("peak {}", name(q)),
            Observable::PeakTime(q) => format!("peak time of {}", name(q)),
            Observable::IgnitionDelay => "ignition delay".to_string(),
        }
    }

    /// The unit of the observable's value: `s`, `K` or `mol/m3`.
    pub fn unit(&self) -> &'static str {
        match self {
            Observable::PeakTime(_) | Observable::IgnitionDelay => "s",
            Observable::Final(StateQuantity::Temperature)
            | Observable::Peak(StateQuantity::Temperature) => "K",
            _ => "mol/m3",
        }
    }
}

/// How sensitivities are computed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Method {
    /// The sensitivity equations integrated with the state: every quantity at once; cost
    /// grows with the number of rate constants.
    #[default]
    Forward,
    /// One backward pass: the gradient of one observable, cost nearly independent of the
    /// number of rate constants.
    Adjoint,
}

/// One step's sensitivity.
#[derive(Debug, Clone, PartialEq)]
pub struct StepSensitivity {
    /// Step (mechanism index; `R<step + 1>` to people).
    pub step: usize,
    /// `dG/d ln k`: the change of the observable per unit change of ln k (the observable's
    /// unit).
    pub derivative: f64,
    /// `d ln G/d ln k` (dimensionless): the normalized coefficient; NaN when the value of the
    /// observable is zero.
    pub normalized: f64,
}

/// The sensitivity to one limit of a falloff step's rate constant alone.
#[derive(Debug, Clone, PartialEq)]
pub struct LimitSensitivity {
    /// Step (mechanism index).
    pub step: usize,
    /// Which limit: k0 (low pressure) or kinf (high pressure).
    pub limit: FalloffLimit,
    /// `dG/d ln k_limit` (the observable's unit).
    pub derivative: f64,
    /// `d ln G/d ln k_limit` (dimensionless); NaN when the value is zero.
    pub normalized: f64,
}

/// The sensitivity to one species' standard formation enthalpy.
#[derive(Debug, Clone, PartialEq)]
pub struct EnthalpySensitivity {
    /// Species (mechanism index).
    pub species: usize,
    /// `dG/dH_f` (the observable's unit per J/mol).
    pub derivative: f64,
    /// `d ln G/dH_f` per kJ/mol (mol/kJ): the relative change of the observable for a
    /// formation enthalpy 1 kJ/mol higher; NaN when the value is zero.
    pub normalized_per_kj_per_mol: f64,
}

/// Parameters besides the chosen steps' rate constants.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct ExtraParameters {
    /// Each limit (k0, kinf) of every chosen falloff or chemically activated step alone.
    pub falloff_limits: bool,
    /// The formation enthalpy of every species with thermochemistry.
    pub enthalpies: bool,
}

/// The sensitivities of one observable to the chosen steps' rate constants, ranked.
#[derive(Debug, Clone, PartialEq)]
pub struct ObservableSensitivity {
    /// The observable.
    pub observable: Observable,
    /// Its value in the run ([`Observable::unit`]).
    pub value: f64,
    /// How it was computed.
    pub method: Method,
    /// Every chosen step, largest `|normalized|` first (NaN last, ties in step order).
    pub ranked: Vec<StepSensitivity>,
    /// With [`ExtraParameters::falloff_limits`]: each limit of every chosen falloff step,
    /// largest `|normalized|` first; empty otherwise. For each step the two sum to its
    /// entry in `ranked` (both limits together).
    pub falloff_limits: Vec<LimitSensitivity>,
    /// With [`ExtraParameters::enthalpies`]: every species with thermochemistry, largest
    /// `|normalized_per_kj_per_mol|` first; empty otherwise.
    pub enthalpies: Vec<EnthalpySensitivity>,
    /// Counters of the integrations.
    pub stats: SensitivityStats,
}

impl ObservableSensitivity {
    /// The `top` largest entries as labelled values for a bar chart or a table: label
    /// `R<n> <equation>` (n the 1-based step number), value the normalized coefficient
    /// `d ln G/d ln k` (dimensionless), largest magnitude first.
    pub fn labelled(&self, mechanism: &Mechanism, top: usize) -> Vec<(String, f64)> {
        self.ranked
            .iter()
            .take(top)
            .map(|s| {
                let equation = mechanism
                    .steps
                    .get(s.step)
                    .map_or("?", |step| step.equation.as_str());
                (format!("R{} {equation}", s.step + 1), s.normalized)
            })
            .collect()
    }
}

/// Sensitivities of every state quantity along the profile (forward method).
#[derive(Debug, Clone, PartialEq)]
pub struct ProfileSensitivities {
    /// The steps (mechanism indices), in the order of the sensitivities.
    pub steps: Vec<usize>,
    /// The quantities of the state, in the order of the values.
    pub quantities: Vec<StateQuantity>,
    /// Output times (s): the plan's.
    pub times_s: Vec<f64>,
    /// Per time: each quantity's value (mol/m3, K).
    pub values: Vec<Vec<f64>>,
    /// Per time, per step, per quantity: `dy/d ln k` (mol/m3, K).
    pub derivatives: Vec<Vec<Vec<f64>>>,
}

impl ProfileSensitivities {
    /// `d ln y/d ln k` of quantity `q` (index into `quantities`) at row `row` for the step at
    /// position `p` of `steps`; `None` out of range or when the value is zero.
    pub fn normalized(&self, row: usize, p: usize, q: usize) -> Option<f64> {
        let y = *self.values.get(row)?.get(q)?;
        let d = *self.derivatives.get(row)?.get(p)?.get(q)?;
        (y != 0.0).then_some(d / y)
    }
}

fn sensitivity_error(e: SensitivityError) -> AnalysisError {
    match e {
        SensitivityError::StepOutOfRange { step, n_steps } => {
            AnalysisError::StepOutOfRange { step, n_steps }
        }
        SensitivityError::Reactor(r @ stoik_reactor::ReactorError::NotSupported(_)) => {
            AnalysisError::NotAvailable(r.to_string())
        }
        other => AnalysisError::SensitivityFailed(other.to_string()),
    }
}

/// The steps asked for (all of them when `None`), checked.
fn chosen_steps(
    mechanism: &Mechanism,
    steps: Option<&[usize]>,
) -> Result<Vec<usize>, AnalysisError> {
    let n_steps = mechanism.steps.len();
    match steps {
        None => Ok((0..n_steps).collect()),
        Some(list) => {
            if let Some(&step) = list.iter().find(|&&j| j >= n_steps) {
                return Err(AnalysisError::StepOutOfRange { step, n_steps });
            }
            Ok(list.to_vec())
        }
    }
}

/// Largest augmented state (state times one plus the parameters) of a forward run: diffsol
/// keeps about fifteen vectors of it (5e6 numbers: about 600 MB in all).
pub const MAX_FORWARD_STATE: usize = 5_000_000;

/// Largest profile of forward sensitivities (output times x state x parameters; 5e7
/// numbers: 400 MB).
pub const MAX_PROFILE_VALUES: usize = 50_000_000;

/// Refuses a forward run whose augmented state exceeds [`MAX_FORWARD_STATE`].
fn check_forward_size(plan: &RunPlan, n_parameters: usize) -> Result<usize, AnalysisError> {
    let m = plan.mechanism().species.len() + usize::from(plan.model().solves_energy());
    let values = m.saturating_mul(n_parameters.saturating_add(1));
    if values > MAX_FORWARD_STATE {
        return Err(AnalysisError::TooLarge {
            what: "the forward sensitivity state",
            values,
            limit: MAX_FORWARD_STATE,
        });
    }
    Ok(m)
}

/// The state index of `q` in `plan`'s reactor.
fn state_index(plan: &RunPlan, q: StateQuantity) -> Result<usize, AnalysisError> {
    match q {
        StateQuantity::Species(i) => Ok(i),
        StateQuantity::Temperature if plan.model().solves_energy() => {
            Ok(plan.mechanism().species.len())
        }
        StateQuantity::Temperature => Err(AnalysisError::TemperatureNotSolved),
    }
}

fn quantity_of(q: StateQuantity, n_species: usize) -> Quantity {
    match q {
        StateQuantity::Species(i) if i < n_species => Quantity::Concentration(i),
        _ => Quantity::Temperature,
    }
}

/// Ranks by `|normalized|`, largest first; NaN last; ties in step order.
fn rank(mut entries: Vec<StepSensitivity>) -> Vec<StepSensitivity> {
    entries.sort_by(|a, b| {
        let key = |x: f64| if x.is_nan() { -1.0 } else { x.abs() };
        key(b.normalized)
            .total_cmp(&key(a.normalized))
            .then(a.step.cmp(&b.step))
    });
    entries
}

/// The sensitivities of `observable` in the run of `plan` to the rate constants of `steps`
/// (mechanism indices; every step when `None`), by `method`, ranked.
///
/// The parameter of a step is the log of its forward rate constant (both limits of a
/// falloff step together); a reverse rate constant from thermochemistry follows it, explicit
/// reverse parameters stay (see `stoik_reactor::forward_sensitivities`). The plan is run once
/// as it is to find the observable's time (end of the run, peak or ignition, located on the
/// solver's steps), then the sensitivities are integrated at the plan's tolerances.
///
/// Errors: [`AnalysisError::StepOutOfRange`], [`AnalysisError::TooLarge`] (a forward run
/// beyond [`MAX_FORWARD_STATE`]), [`AnalysisError::TemperatureNotSolved`],
/// [`AnalysisError::NoIgnition`] (no criterion, or no ignition found),
/// [`AnalysisError::NoPeak`], [`AnalysisError::RunFailed`], [`AnalysisError::Scenario`],
/// [`AnalysisError::SensitivityFailed`].
pub fn observable_sensitivity(
    plan: &RunPlan,
    observable: Observable,
    method: Method,
    steps: Option<&[usize]>,
) -> Result<ObservableSensitivity, AnalysisError> {
    observable_sensitivity_with(plan, observable, method, steps, ExtraParameters::default())
}

/// As [`observable_sensitivity`], with the `extra` parameters too: each limit of the chosen
/// falloff steps alone (`d ln G/d ln k0`, `d ln G/d ln kinf`), and the formation enthalpy of
/// every species with thermochemistry (`d ln G/dH_f` per kJ/mol; a shift of the species'
/// enthalpy at every temperature, which moves equilibrium constants, hence reverse rate
/// constants from thermochemistry, and the heat release of an energy-solving reactor).
///
/// Errors: as for [`observable_sensitivity`].
pub fn observable_sensitivity_with(
    plan: &RunPlan,
    observable: Observable,
    method: Method,
    steps: Option<&[usize]>,
    extra: ExtraParameters,
) -> Result<ObservableSensitivity, AnalysisError> {
    let mechanism = plan.mechanism();
    let steps = chosen_steps(mechanism, steps)?;
    let n_species = mechanism.species.len();
    let kinetics = Kinetics::compile(mechanism).map_err(stoik_scenario::ScenarioError::from)?;
    let mut plan = plan.clone();
    let peak_watch = match observable {
        Observable::Peak(q) | Observable::PeakTime(q) => {
            state_index(&plan, q)?;
            let w = Watch::Maximum(quantity_of(q, n_species));
            plan.add_watches(&[w]);
            Some(w)
        }
        Observable::Final(q) => {
            state_index(&plan, q)?;
            None
        }
        Observable::IgnitionDelay => None,
    };
    let outcome = plan.run_compiled(&kinetics)?;
    if let Some(f) = outcome.failure() {
        return Err(AnalysisError::RunFailed {
            reached_s: f.time_s,
            reason: f.to_string(),
        });
    }
    let profiles = outcome.profiles();
    let end_s = profiles.times_s.last().copied().unwrap_or(0.0);
    let target = match observable {
        Observable::Final(q) => Target::Value {
            state: state_index(&plan, q)?,
            time_s: end_s,
        },
        Observable::Peak(q) | Observable::PeakTime(q) => {
            let located = peak_watch
                .and_then(|w| profiles.located(w))
                .filter(|l| l.interior)
                .ok_or(AnalysisError::NoPeak)?;
            let state = state_index(&plan, q)?;
            if matches!(observable, Observable::Peak(_)) {
                Target::Value {
                    state,
                    time_s: located.time_s,
                }
            } else {
                Target::Peak {
                    state,
                    time_s: located.time_s,
                }
            }
        }
        Observable::IgnitionDelay => {
            let criterion = outcome.ignition.ok_or(AnalysisError::NoIgnition)?;
            let delay = outcome.ignition_delay.ok_or(AnalysisError::NoIgnition)?;
            let time_s = delay.delay_s;
            match criterion {
                IgnitionCriterion::MaxTemperatureRate => Target::RateMaximum {
                    state: state_index(&plan, StateQuantity::Temperature)?,
                    time_s,
                },
                IgnitionCriterion::SpeciesMaximum(i) => Target::Peak { state: i, time_s },
                IgnitionCriterion::TemperatureRise(_) => Target::Crossing {
                    state: state_index(&plan, StateQuantity::Temperature)?,
                    time_s,
                },
            }
        }
    };
    let mut parameters: Vec<Parameter> =
        steps.iter().map(|&j| Parameter::RateConstant(j)).collect();
    if extra.falloff_limits {
        for &j in &steps {
            if kinetics.is_falloff(j) {
                parameters.push(Parameter::LowPressureLimit(j));
                parameters.push(Parameter::HighPressureLimit(j));
            }
        }
    }
    if extra.enthalpies {
        for (i, thermo) in kinetics.species_thermo().iter().enumerate() {
            if thermo.is_some() {
                parameters.push(Parameter::FormationEnthalpy(i));
            }
        }
    }
    let (value, gradient, stats) = match method {
        Method::Forward => {
            check_forward_size(&plan, parameters.len())?;
            let r = forward_parameter_sensitivities(
                &kinetics,
                plan.model(),
                plan.temperature_k(),
                plan.initial_mol_per_m3(),
                &[0.0, target.time_s()],
                plan.options(),
                &parameters,
                &[target],
            )
            .map_err(sensitivity_error)?;
            let t = r.targets.into_iter().next().ok_or_else(|| {
                AnalysisError::SensitivityFailed("no target computed".to_string())
            })?;
            (t.value, t.gradient, r.stats)
        }
        Method::Adjoint => {
            let r = adjoint_parameter_sensitivity(
                &kinetics,
                plan.model(),
                plan.temperature_k(),
                plan.initial_mol_per_m3(),
                plan.options(),
                &parameters,
                target,
            )
            .map_err(sensitivity_error)?;
            (r.target.value, r.target.gradient, r.stats)
        }
    };
    let normalize = |d: f64| if value != 0.0 { d / value } else { f64::NAN };
    let mut entries = Vec::with_capacity(steps.len());
    let mut falloff_limits = Vec::new();
    let mut enthalpies = Vec::new();
    for (&parameter, &derivative) in parameters.iter().zip(&gradient) {
        match parameter {
            Parameter::RateConstant(step) => entries.push(StepSensitivity {
                step,
                derivative,
                normalized: normalize(derivative),
            }),
            Parameter::LowPressureLimit(step) | Parameter::HighPressureLimit(step) => {
                falloff_limits.push(LimitSensitivity {
                    step,
                    limit: if matches!(parameter, Parameter::LowPressureLimit(_)) {
                        FalloffLimit::Low
                    } else {
                        FalloffLimit::High
                    },
                    derivative,
                    normalized: normalize(derivative),
                })
            }
            Parameter::FormationEnthalpy(species) => enthalpies.push(EnthalpySensitivity {
                species,
                derivative,
                normalized_per_kj_per_mol: normalize(derivative) * 1e3,
            }),
        }
    }
    let key = |x: f64| if x.is_nan() { -1.0 } else { x.abs() };
    falloff_limits.sort_by(|a, b| key(b.normalized).total_cmp(&key(a.normalized)));
    enthalpies.sort_by(|a, b| {
        key(b.normalized_per_kj_per_mol).total_cmp(&key(a.normalized_per_kj_per_mol))
    });
    Ok(ObservableSensitivity {
        observable,
        value,
        method,
        ranked: rank(entries),
        falloff_limits,
        enthalpies,
        stats,
    })
}

/// Forward sensitivities of every species' concentration (and the temperature, when solved)
/// at the plan's output times to the rate constants of `steps` (every step when `None`).
///
/// Errors: [`AnalysisError::StepOutOfRange`], [`AnalysisError::TooLarge`] (beyond
/// [`MAX_FORWARD_STATE`] or [`MAX_PROFILE_VALUES`]), [`AnalysisError::Scenario`],
/// [`AnalysisError::SensitivityFailed`].
pub fn profile_sensitivities(
    plan: &RunPlan,
    steps: Option<&[usize]>,
) -> Result<ProfileSensitivities, AnalysisError> {
    let mechanism = plan.mechanism();
    let steps = chosen_steps(mechanism, steps)?;
    let kinetics = Kinetics::compile(mechanism).map_err(stoik_scenario::ScenarioError::from)?;
    let parameters: Vec<Parameter> = steps.iter().map(|&j| Parameter::RateConstant(j)).collect();
    let r = forward_parameter_sensitivities(
        &kinetics,
        plan.model(),
        plan.temperature_k(),
        plan.initial_mol_per_m3(),
        plan.output_times_s(),
        plan.options(),
        &parameters,
        &[],
    )
    .map_err(sensitivity_error)?;
    let mut quantities: Vec<StateQuantity> = (0..mechanism.species.len())
        .map(StateQuantity::Species)
        .collect();
    if plan.model().solves_energy() {
        quantities.push(StateQuantity::Temperature);
    }
    Ok(ProfileSensitivities {
        steps,
        quantities,
        times_s: r.times_s,
        values: r.states,
        derivatives: r.sensitivities,
    })
}
