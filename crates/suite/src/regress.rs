//! Recording a baseline and verifying against one: every case runs in parallel (rayon), each
//! on its own, so the values do not depend on the number of threads.

use crate::baseline::{Baseline, BaselineCase, InputFile, InputRole, RecordedValue};
use crate::case::{prepare_cases, CaseValues, PreparedCase};
use crate::error::SuiteError;
use crate::file::{Measured, Suite, Tolerance};
use rayon::prelude::*;
use std::time::Instant;
use stoik_mechanism::{Diagnostic, Diagnostics, LoadError};

/// How much tighter the relative tolerance of the noise estimate is than the case's.
pub const NOISE_TOLERANCE_DIVISOR: f64 = 100.0;
/// A tolerance whose allowance is below this many times the estimated noise is flagged.
pub const NOISE_MARGIN: f64 = 10.0;

/// Options of [`record`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RecordOptions {
    /// Estimate each observable's solver noise by running every case again at the relative
    /// tolerance divided by [`NOISE_TOLERANCE_DIVISOR`] (doubles the cost or more).
    pub estimate_noise: bool,
}

impl Default for RecordOptions {
    fn default() -> Self {
        RecordOptions {
            estimate_noise: true,
        }
    }
}

/// One observable as recorded.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordedObservable {
    /// Its name.
    pub name: String,
    /// Its value (SI) or why it could not be read.
    pub value: Result<f64, String>,
    /// The estimated solver noise (SI), when estimated and both runs gave a value.
    pub noise: Option<f64>,
    /// Its tolerance.
    pub tolerance: Tolerance,
    /// Whether the tolerance allows less than [`NOISE_MARGIN`] times the noise: a suite
    /// with such a tolerance may fail on solver noise alone.
    pub tolerance_near_noise: bool,
}

/// One case as recorded.
#[derive(Debug, Clone, PartialEq)]
pub struct RecordedCase {
    /// The case name.
    pub name: String,
    /// The run's failure, if it failed (the case is then left out of the baseline).
    pub error: Option<String>,
    /// The observables (empty when the run failed).
    pub observables: Vec<RecordedObservable>,
}

/// What [`record`] produced: the baseline and, per case, what was recorded.
#[derive(Debug, Clone, PartialEq)]
pub struct Recording {
    /// The baseline (cases whose run failed and observables that gave no value left out).
    pub baseline: Baseline,
    /// Every case, in suite order.
    pub cases: Vec<RecordedCase>,
}

impl Recording {
    /// Whether some case or observable gave no value.
    pub fn has_errors(&self) -> bool {
        self.cases
            .iter()
            .any(|c| c.error.is_some() || c.observables.iter().any(|o| o.value.is_err()))
    }
}

/// Runs `cases` in parallel on rayon's current pool; results in case order.
fn run_all(
    cases: &[PreparedCase],
    relative_tolerance: impl Fn(&PreparedCase) -> Option<f64> + Sync,
    progress: &(dyn Fn() + Sync),
) -> Vec<(Result<CaseValues, String>, f64)> {
    cases
        .par_iter()
        .map(|c| {
            let start = Instant::now();
            let r = c.run(relative_tolerance(c));
            progress();
            (r, start.elapsed().as_secs_f64())
        })
        .collect()
}

/// Runs every case of `suite` and records a baseline (date: now, UTC). With
/// `options.estimate_noise` every case also runs at a 100 times tighter relative tolerance;
/// `progress` is called after each run. Bad input (unreadable or invalid files, unknown
/// species, refused overrides) is an error; a case whose run fails is reported in its
/// [`RecordedCase`] and the others are recorded.
pub fn record(
    suite: &Suite,
    options: &RecordOptions,
    progress: &(dyn Fn() + Sync),
) -> Result<Recording, SuiteError> {
    let prepared = prepare_cases(suite)?;
    record_prepared(
        suite,
        &prepared,
        options,
        crate::date::now_rfc3339_utc(),
        progress,
    )
}

/// [`record`] on prepared cases with a given date (RFC 3339).
pub fn record_prepared(
    suite: &Suite,
    prepared: &[PreparedCase],
    options: &RecordOptions,
    recorded_utc: String,
    progress: &(dyn Fn() + Sync),
) -> Result<Recording, SuiteError> {
    let runs = run_all(prepared, |_| None, progress);
    let tight = if options.estimate_noise {
        run_all(
            prepared,
            |c| Some(c.plan().options().relative_tolerance / NOISE_TOLERANCE_DIVISOR),
            progress,
        )
    } else {
        Vec::new()
    };
    let mut cases = Vec::new();
    let mut baseline_cases = Vec::new();
    for (k, (p, (run, _))) in prepared.iter().zip(runs).enumerate() {
        let case = p.case();
        let values = match run {
            Ok(v) => v,
            Err(e) => {
                cases.push(RecordedCase {
                    name: case.name.clone(),
                    error: Some(e),
                    observables: Vec::new(),
                });
                continue;
            }
        };
        let tight_values = tight.get(k).and_then(|(r, _)| r.as_ref().ok());
        let mut observables = Vec::new();
        let mut recorded = Vec::new();
        for (j, (o, value)) in case.observables.iter().zip(values.values).enumerate() {
            let noise = match (&value, tight_values.and_then(|t| t.values.get(j))) {
                (Ok(v), Some(Ok(t))) => Some((v - t).abs()),
                _ => None,
            };
            let tolerance_near_noise = match (&value, noise) {
                (Ok(v), Some(n)) => n > 0.0 && o.tolerance.allowance(*v) < NOISE_MARGIN * n,
                _ => false,
            };
            if let Ok(v) = value {
                recorded.push((o.name.clone(), RecordedValue { value: v, noise }));
            }
            observables.push(RecordedObservable {
                name: o.name.clone(),
                value,
                noise,
                tolerance: o.tolerance,
                tolerance_near_noise,
            });
        }
        baseline_cases.push(BaselineCase {
            name: case.name.clone(),
            inputs: p.inputs().to_vec(),
            relative_tolerance: p.plan().options().relative_tolerance,
            absolute_tolerance_mol_per_m3: p.plan().scenario().absolute_tolerance_mol_per_m3,
            observables: recorded,
            location: None,
        });
        cases.push(RecordedCase {
            name: case.name.clone(),
            error: None,
            observables,
        });
    }
    Ok(Recording {
        baseline: Baseline::new(
            suite.file.clone(),
            suite.sha256.clone(),
            env!("CARGO_PKG_VERSION").to_string(),
            recorded_utc,
            baseline_cases,
        ),
        cases,
    })
}

/// Options of [`verify`].
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct VerifyOptions {
    /// Skip the cases whose input files (scenario, mechanism, thermo files) have the content
    /// hashes recorded in the baseline.
    pub changed_only: bool,
}

/// The verdict on one observable.
#[derive(Debug, Clone, PartialEq)]
pub enum Status {
    /// Within tolerance of the baseline.
    Pass,
    /// Moved beyond its tolerance.
    Moved,
    /// No value: the run failed or the observable could not be read (the reason).
    Error(String),
    /// The baseline holds no value for it (a case or observable added since recording).
    NotRecorded,
    /// Not run (`changed_only` and the case's inputs are unchanged).
    Skipped,
}

impl Status {
    /// A short word for reports.
    pub fn label(&self) -> &'static str {
        match self {
            Status::Pass => "pass",
            Status::Moved => "MOVED",
            Status::Error(_) => "ERROR",
            Status::NotRecorded => "NEW",
            Status::Skipped => "skipped",
        }
    }

    /// Sort key: failures first.
    pub(crate) fn rank(&self) -> u8 {
        match self {
            Status::Moved => 0,
            Status::Error(_) => 1,
            Status::NotRecorded => 2,
            Status::Pass => 3,
            Status::Skipped => 4,
        }
    }
}

/// One observable compared with its baseline (and with its measured value, if any).
#[derive(Debug, Clone, PartialEq)]
pub struct ObservableResult {
    /// The case.
    pub case: String,
    /// The observable.
    pub name: String,
    /// The SI unit of the values.
    pub unit: &'static str,
    /// The recorded value.
    pub baseline: Option<f64>,
    /// The value of this run.
    pub new: Option<f64>,
    /// The tolerance.
    pub tolerance: Tolerance,
    /// The solver noise recorded with the baseline.
    pub noise: Option<f64>,
    /// The verdict.
    pub status: Status,
    /// The measured value, when the suite gives one.
    pub measured: Option<Measured>,
}

impl ObservableResult {
    /// (new - baseline) / |baseline|, when both exist and the baseline is not zero.
    pub fn relative_change(&self) -> Option<f64> {
        let (b, n) = (self.baseline?, self.new?);
        (b != 0.0).then(|| (n - b) / b.abs())
    }

    /// new / baseline, when both exist, are of one sign and not zero.
    pub fn factor(&self) -> Option<f64> {
        let (b, n) = (self.baseline?, self.new?);
        (b != 0.0 && n != 0.0 && (b < 0.0) == (n < 0.0)).then(|| n / b)
    }

    /// Whether the new value agrees with the measured one within its uncertainty
    /// (validation against experiment, apart from the regression verdict).
    pub fn agrees_with_measurement(&self) -> Option<bool> {
        let m = self.measured?;
        Some((self.new? - m.value).abs() <= m.uncertainty)
    }
}

/// One case verified.
#[derive(Debug, Clone, PartialEq)]
pub struct CaseResult {
    /// The case name.
    pub name: String,
    /// The inputs whose content changed since the baseline (as recorded now).
    pub changed_inputs: Vec<InputFile>,
    /// Whether the case was skipped (`changed_only`, nothing changed).
    pub skipped: bool,
    /// The run's failure, if it failed.
    pub error: Option<String>,
    /// Wall-clock time of the run, s (0 when skipped).
    pub seconds: f64,
    /// The observables.
    pub observables: Vec<ObservableResult>,
}

/// The overall verdict of a verification.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Verdict {
    /// Every observable run is within tolerance.
    AllWithin,
    /// At least one observable moved beyond its tolerance.
    Moved,
    /// Nothing moved, but some case or observable gave no value or has no baseline.
    Errors,
}

/// What [`verify`] found.
#[derive(Debug, Clone, PartialEq)]
pub struct Verification {
    /// The suite file.
    pub suite: String,
    /// The suite's title.
    pub title: Option<String>,
    /// The baseline's recording date.
    pub baseline_recorded_utc: String,
    /// Every case, in suite order.
    pub cases: Vec<CaseResult>,
}

impl Verification {
    /// Every observable, in suite order.
    pub fn observables(&self) -> impl Iterator<Item = &ObservableResult> {
        self.cases.iter().flat_map(|c| c.observables.iter())
    }

    /// The observables that moved beyond tolerance (with case, baseline and new values).
    pub fn moved(&self) -> Vec<&ObservableResult> {
        self.observables()
            .filter(|o| o.status == Status::Moved)
            .collect()
    }

    /// The verdict: [`Verdict::Moved`] when anything moved, else [`Verdict::Errors`] when
    /// anything gave no value, else [`Verdict::AllWithin`].
    pub fn verdict(&self) -> Verdict {
        if self.observables().any(|o| o.status == Status::Moved) {
            Verdict::Moved
        } else if self.cases.iter().any(|c| c.error.is_some())
            || self
                .observables()
                .any(|o| matches!(o.status, Status::Error(_) | Status::NotRecorded))
        {
            Verdict::Errors
        } else {
            Verdict::AllWithin
        }
    }
}

/// Checks that `baseline` belongs to `suite`: at least one case in common, and each common
/// case recorded on a mechanism file of the same name. Problems are located in the baseline.
fn check_baseline(
    suite: &Suite,
    prepared: &[PreparedCase],
    baseline: &Baseline,
) -> Result<(), LoadError> {
    let mut diagnostics = Vec::new();
    let file = if baseline.file().is_empty() {
        "<baseline>"
    } else {
        baseline.file()
    };
    if !suite.cases.iter().any(|c| baseline.case(&c.name).is_some()) {
        diagnostics.push(
            Diagnostic::error(
                file,
                None,
                format!(
                    "this baseline records none of the cases of the suite `{}` (it was recorded from `{}`)",
                    suite.file, baseline.suite
                ),
            )
            .with_help("record a baseline of this suite with `stoik suite record`"),
        );
    }
    let name_of = |path: &str| path.rsplit('/').next().unwrap_or(path).to_string();
    for p in prepared {
        let Some(b) = baseline.case(&p.case().name) else {
            continue;
        };
        let now = p.inputs().iter().find(|i| i.role == InputRole::Mechanism);
        let then = b.input(InputRole::Mechanism);
        if let (Some(now), Some(then)) = (now, then) {
            if name_of(&now.path) != name_of(&then.path) {
                diagnostics.push(
                    Diagnostic::error(
                        file,
                        b.location(),
                        format!(
                            "case `{}` was recorded on the mechanism `{}`, but the suite runs it on `{}`: this baseline is of another mechanism",
                            b.name, then.path, now.path
                        ),
                    )
                    .with_help("verify against a baseline recorded from this suite, or record one"),
                );
            }
        }
    }
    if diagnostics.is_empty() {
        Ok(())
    } else {
        Err(LoadError::Invalid {
            diagnostics: Diagnostics(diagnostics),
        })
    }
}

/// Runs every case of `suite` (those with changed inputs only, with
/// `options.changed_only`) and compares each observable with `baseline`. Bad input (files,
/// a baseline of another suite or mechanism) is an error; a case whose run fails is reported
/// in its [`CaseResult`] and the others still run. `progress` is called after each run.
pub fn verify(
    suite: &Suite,
    baseline: &Baseline,
    options: &VerifyOptions,
    progress: &(dyn Fn() + Sync),
) -> Result<Verification, SuiteError> {
    let prepared = prepare_cases(suite)?;
    verify_prepared(suite, &prepared, baseline, options, progress)
}

/// [`verify`] on prepared cases (for instance cases prepared again on another mechanism
/// with [`PreparedCase::with_mechanism`]).
pub fn verify_prepared(
    suite: &Suite,
    prepared: &[PreparedCase],
    baseline: &Baseline,
    options: &VerifyOptions,
    progress: &(dyn Fn() + Sync),
) -> Result<Verification, SuiteError> {
    check_baseline(suite, prepared, baseline)?;
    let changed: Vec<Vec<InputFile>> = prepared
        .iter()
        .map(|p| match baseline.case(&p.case().name) {
            Some(b) => p
                .inputs()
                .iter()
                .filter(|i| !b.inputs.contains(i))
                .cloned()
                .collect(),
            None => p.inputs().to_vec(),
        })
        .collect();
    let to_run: Vec<bool> = changed
        .iter()
        .map(|c| !options.changed_only || !c.is_empty())
        .collect();
    let running: Vec<PreparedCase> = prepared
        .iter()
        .zip(&to_run)
        .filter(|(_, &run)| run)
        .map(|(p, _)| p.clone())
        .collect();
    let mut runs = run_all(&running, |_| None, progress).into_iter();
    let mut cases = Vec::new();
    for ((p, changed_inputs), run) in prepared.iter().zip(changed).zip(to_run) {
        let case = p.case();
        let recorded = baseline.case(&case.name);
        let (result, seconds) = if run {
            match runs.next() {
                Some(r) => (Some(r.0), r.1),
                None => (None, 0.0),
            }
        } else {
            (None, 0.0)
        };
        let error = match &result {
            Some(Err(e)) => Some(e.clone()),
            _ => None,
        };
        let observables = case
            .observables
            .iter()
            .enumerate()
            .map(|(j, o)| {
                let b = recorded.and_then(|b| b.value(&o.name));
                let new = match &result {
                    Some(Ok(v)) => v.values.get(j).cloned(),
                    _ => None,
                };
                let status = match (&result, &new, b) {
                    (None, _, _) => Status::Skipped,
                    (Some(Err(e)), _, _) => Status::Error(e.clone()),
                    (_, Some(Err(e)), _) => Status::Error(e.clone()),
                    (_, _, None) => Status::NotRecorded,
                    (_, Some(Ok(n)), Some(b)) => {
                        if o.tolerance.holds(b.value, *n) {
                            Status::Pass
                        } else {
                            Status::Moved
                        }
                    }
                    (_, None, Some(_)) => Status::Error("no value".into()),
                };
                ObservableResult {
                    case: case.name.clone(),
                    name: o.name.clone(),
                    unit: o.kind.unit(),
                    baseline: b.map(|b| b.value),
                    new: new.and_then(Result::ok),
                    tolerance: o.tolerance,
                    noise: b.and_then(|b| b.noise),
                    status,
                    measured: o.measured,
                }
            })
            .collect();
        cases.push(CaseResult {
            name: case.name.clone(),
            changed_inputs,
            skipped: !run,
            error,
            seconds,
            observables,
        });
    }
    Ok(Verification {
        suite: suite.file.clone(),
        title: suite.title.clone(),
        baseline_recorded_utc: baseline.recorded_utc.clone(),
        cases,
    })
}
