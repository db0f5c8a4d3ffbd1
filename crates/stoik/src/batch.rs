//! `stoik batch`: many scenarios (optionally each at several temperatures) run by the
//! scenario crate over mechanisms compiled once, in parallel, with a progress bar. Every run
//! prints the warnings `stoik run` prints (each distinct one once) and a warning line when
//! its conserved quantities drift more than its tolerances allow.

use crate::conservation_out::report_from_check;
use crate::csv_out::CsvError;
use crate::error::CliError;
use crate::out_file::{partial_path, OutputPaths};
use crate::run::{record_inputs, scenario_stem, write_csv, CAUTION};
use crate::BatchArgs;
use indicatif::{ProgressBar, ProgressStyle};
use std::collections::{BTreeSet, HashSet};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::Instant;
use stoik::scenario::{load_plans, run_batch, RunPlan};

/// One run of a batch: its plan, where it came from and its CSV path.
struct Job {
    plan: RunPlan,
    scenario: PathBuf,
    temperature_k: Option<f64>,
    output: PathBuf,
}

impl Job {
    /// The run in words, for messages: `a.scenario.toml at 600 K (--temperatures-k)`.
    fn source(&self) -> String {
        match self.temperature_k {
            Some(t) => format!(
                "{} at {} K (--temperatures-k)",
                self.scenario.display(),
                temperature_name(t)
            ),
            None => self.scenario.display().to_string(),
        }
    }
}

/// One network scenario of a batch (`[[tank]]`): run on its own (after the single-reactor
/// runs), written with one column per tank and quantity as `stoik run` writes it.
struct NetworkJob {
    scenario: PathBuf,
    mechanism_path: PathBuf,
    mechanism: stoik::mechanism::Mechanism,
    plan: stoik::scenario::NetworkPlan,
    unit: stoik::mechanism::ConcentrationUnit,
    output: PathBuf,
}

/// The network scenarios among `paths`, loaded and resolved (every problem reported); an
/// error for `--temperatures-k`, which does not apply to them.
fn network_jobs(args: &BatchArgs, paths: &[&PathBuf]) -> Result<Vec<NetworkJob>, CliError> {
    if paths.is_empty() {
        return Ok(Vec::new());
    }
    if !args.temperatures_k.is_empty() {
        return Err(CliError::BadFlag(format!(
            "--temperatures-k does not apply to the network scenario {} (each [[tank]] has its own temperature); run it in a batch without --temperatures-k",
            paths[0].display()
        )));
    }
    let mut jobs = Vec::new();
    let mut errors = Vec::new();
    for &path in paths {
        let loaded = stoik::scenario::load_network_scenario(path).and_then(|(scenario, _)| {
            let file = stoik::mechanism::load_mechanism(&scenario.mechanism_path)?;
            let plan = scenario.resolve(&file.mechanism)?;
            Ok((scenario, file, plan))
        });
        match loaded {
            Ok((scenario, file, mut plan)) => {
                plan.options.non_negative = !args.allow_negative;
                jobs.push(NetworkJob {
                    scenario: path.clone(),
                    mechanism_path: scenario.mechanism_path.clone(),
                    mechanism: file.mechanism,
                    unit: scenario.output_concentration_unit,
                    output: args.output_dir.join(format!("{}.csv", scenario_stem(path))),
                    plan,
                });
            }
            Err(e) => errors.push(CliError::from(e)),
        }
    }
    match errors.len() {
        0 => Ok(jobs),
        1 => Err(errors.remove(0)),
        _ => Err(CliError::Several(errors)),
    }
}

/// Runs one network job and writes its CSV (a failed run its partial profile beside it);
/// `Ok(true)` when the run completed.
fn run_network_job(
    job: &NetworkJob,
    monitor: &stoik::reactor::RunMonitor,
) -> Result<bool, CliError> {
    let mut options = job.plan.options.clone();
    options.monitor = Some(monitor.clone());
    let written = crate::network_run::simulate_and_write(
        &job.mechanism,
        &job.plan,
        &options,
        job.unit,
        &job.output,
    )
    .map_err(|e| match e {
        CliError::BadFlag(m) => CliError::BadFlag(format!("{}: {m}", job.scenario.display())),
        other => other,
    })?;
    if let Some((time_s, reason)) = written.failure {
        eprintln!(
            "{}: integration failed at t = {time_s:e} s: {reason}; partial profile written to {} ({} is left as it was)",
            job.scenario.display(),
            written.target.display(),
            job.output.display()
        );
        return Ok(false);
    }
    Ok(true)
}

/// A temperature as it appears in a CSV name: plain digits between 1e-3 and 1e6 K
/// (`600`, `612.5`), scientific notation outside (`1e300`), so a name stays short. Both are
/// the shortest digits that read back as the same `f64`, so two temperatures get the same
/// name exactly when they are the same number (`600`, `600.0` and `6e2` are one run twice).
fn temperature_name(t: f64) -> String {
    if (1e-3..1e6).contains(&t.abs()) {
        format!("{t}")
    } else {
        format!("{t:e}")
    }
}

/// Checks every CSV path of the batch (and the partial-profile path of a failed run) before
/// anything runs: none is an input of a run, none repeats another.
fn check_outputs(jobs: &[Job], networks: &[NetworkJob]) -> Result<(), CliError> {
    let mut outputs = OutputPaths::new();
    for job in jobs {
        record_inputs(&mut outputs, &job.scenario, &job.plan);
    }
    for job in networks {
        outputs.input(&job.scenario);
        outputs.input(&job.mechanism_path);
    }
    for job in networks {
        let what = format!("--output-dir: the run of {}", job.scenario.display());
        outputs.output(what.clone(), &job.output)?;
        outputs.output(
            format!("{what}, partial profile of a failed run"),
            &partial_path(&job.output),
        )?;
    }
    for job in jobs {
        let what = format!("--output-dir: the run of {}", job.source());
        outputs.output(what.clone(), &job.output)?;
        outputs.output(
            format!("{what}, partial profile of a failed run"),
            &partial_path(&job.output),
        )?;
    }
    Ok(())
}

/// Creates the output folder; `Ok(true)` when it did not exist before.
fn create_output_dir(dir: &Path) -> Result<bool, CliError> {
    let existed = dir.exists();
    std::fs::create_dir_all(dir).map_err(|e| CliError::Write {
        what: "create",
        path: dir.to_path_buf(),
        source: e.into(),
    })?;
    Ok(!existed)
}

/// The plans of every scenario at every temperature, with their CSV paths; every bad input
/// is reported.
fn plans(args: &BatchArgs) -> Result<Vec<Job>, CliError> {
    if let Some(t) = args
        .temperatures_k
        .iter()
        .find(|t| !(t.is_finite() && **t > 0.0))
    {
        return Err(CliError::BadFlag(format!(
            "--temperatures-k must be positive numbers of kelvin, got {t}"
        )));
    }
    // 600, 600.0 and 6e2 are one number: the same run twice, one CSV name.
    for (i, t) in args.temperatures_k.iter().enumerate() {
        if let Some(j) = args.temperatures_k[..i].iter().position(|u| u == t) {
            return Err(CliError::BadFlag(format!(
                "--temperatures-k: values {} and {} are the same temperature, {t} K (one run, one CSV name); give each temperature once",
                j + 1,
                i + 1
            )));
        }
    }
    let temperatures: Vec<Option<f64>> = if args.temperatures_k.is_empty() {
        vec![None]
    } else {
        args.temperatures_k.iter().copied().map(Some).collect()
    };
    let mut jobs = Vec::new();
    let mut errors = Vec::new();
    // A network scenario is a valid file (`stoik check` passes it) that batch cannot run:
    // refuse it by name rather than with the single-reactor reader's complaints.
    let singles: Vec<PathBuf> = args
        .scenarios
        .iter()
        .filter(|p| !crate::is_network_scenario(p))
        .cloned()
        .collect();
    for (path, plan) in singles.iter().zip(load_plans(&singles)) {
        let plan = match plan {
            Ok(p) => p,
            Err(e) => {
                errors.push(e.into());
                continue;
            }
        };
        for &t in &temperatures {
            let mut plan = plan.clone();
            plan.set_non_negative(!args.allow_negative);
            let name = match t {
                Some(t) => {
                    if let Err(source) = plan.set_temperature_k(t) {
                        errors.push(CliError::Flag {
                            flag: "--temperatures-k",
                            source,
                        });
                        break;
                    }
                    format!("{}-{}K.csv", scenario_stem(path), temperature_name(t))
                }
                None => format!("{}.csv", scenario_stem(path)),
            };
            jobs.push(Job {
                plan,
                scenario: path.clone(),
                temperature_k: t,
                output: args.output_dir.join(name),
            });
        }
    }
    match errors.len() {
        0 => Ok(jobs),
        1 => Err(errors.remove(0)),
        _ => Err(CliError::Several(errors)),
    }
}

/// Runs the batch: every run's CSV is written; failed runs are reported as they happen.
pub fn batch(args: &BatchArgs) -> Result<(), CliError> {
    let started = Instant::now();
    let network_paths: Vec<&PathBuf> = args
        .scenarios
        .iter()
        .filter(|p| crate::is_network_scenario(p))
        .collect();
    // Every problem of the batch at once: those of the single-reactor scenarios and those of
    // the networks.
    let (jobs, networks) = match (plans(args), network_jobs(args, &network_paths)) {
        (Ok(jobs), Ok(networks)) => (jobs, networks),
        (Err(a), Err(b)) => return Err(CliError::Several(vec![a, b])),
        (Err(e), _) | (_, Err(e)) => return Err(e),
    };
    let created = create_output_dir(&args.output_dir)?;
    if let Err(e) = check_outputs(&jobs, &networks) {
        if created {
            // Best effort: leave no empty folder behind a refused batch.
            let _ = std::fs::remove_dir(&args.output_dir);
        }
        return Err(e);
    }
    let total = jobs.len() + networks.len();
    let bar = if args.quiet {
        ProgressBar::hidden()
    } else {
        ProgressBar::new(total as u64)
    };
    bar.set_style(
        ProgressStyle::with_template(
            "{bar:40} {pos}/{len} runs, {elapsed} elapsed, about {eta} left",
        )
        .unwrap_or_else(|_| ProgressStyle::default_bar()),
    );
    // Ctrl-C stops every run at its next step; each writes its profile so far.
    let monitor = crate::progress::interrupt_monitor();
    let plans: Vec<RunPlan> = jobs
        .iter()
        .map(|j| {
            let mut plan = j.plan.clone();
            plan.set_monitor(Some(monitor.clone()));
            plan
        })
        .collect();
    let outcomes = run_batch(&plans, &|| bar.inc(1));
    let mut complete = 0;
    let mut failures = 0;
    let mut refused = 0;
    let mut printed = HashSet::new();
    for (job, outcome) in jobs.iter().zip(outcomes) {
        let plan = &job.plan;
        let outcome = match outcome {
            Ok(o) => o,
            Err(e) => {
                // Bad input found when the run was set up: exit 2, as `stoik run`.
                bar.suspend(|| eprintln!("{}: {}", job.source(), CliError::from(e)));
                failures += 1;
                refused += 1;
                continue;
            }
        };
        // A failed run writes its partial profile beside its CSV, never over it.
        let partial = partial_path(&job.output);
        complete += usize::from(outcome.failure().is_none());
        let output = if let Some(f) = outcome.failure() {
            bar.suspend(|| {
                eprintln!(
                    "{}: {f}; partial profile written to {} ({} is left as it was)",
                    job.source(),
                    partial.display(),
                    job.output.display()
                )
            });
            failures += 1;
            &partial
        } else {
            &job.output
        };
        if !args.quiet {
            // The warnings of `stoik run`, each distinct one once (a scenario's file
            // warnings are shared by its temperatures).
            for warning in &outcome.warnings {
                let line = warning.to_string();
                if printed.insert(line.clone()) {
                    bar.suspend(|| eprintln!("{line}"));
                }
            }
            let report = report_from_check(
                plan.mechanism(),
                &outcome.conservation,
                outcome.profiles(),
                plan.options(),
            );
            for warning in &report.warnings {
                bar.suspend(|| eprintln!("{}: {warning}", output.display()));
            }
        }
        match write_csv(
            output,
            plan,
            outcome.profiles(),
            outcome.distances_m.as_deref(),
        ) {
            Ok(notes) => {
                if let Some(w) = notes.warning(&output.display().to_string()) {
                    bar.suspend(|| eprintln!("{w}"));
                }
            }
            Err(e @ CsvError::NonFinite { .. }) => {
                bar.suspend(|| eprintln!("error: {}: {e}", output.display()));
                failures += usize::from(outcome.failure().is_none());
            }
            Err(e) => return Err(CliError::write(output, e)),
        }
    }
    // The networks, one after the other (each is one stiff system of all its tanks).
    for job in &networks {
        if monitor.is_interrupted() {
            break;
        }
        match bar.suspend(|| run_network_job(job, &monitor)) {
            Ok(true) => complete += 1,
            Ok(false) => failures += 1,
            Err(e @ CliError::Write { .. }) => return Err(e),
            Err(e) => {
                bar.suspend(|| eprintln!("{}: {e}", job.scenario.display()));
                failures += 1;
                refused += 1;
            }
        }
        bar.inc(1);
    }
    bar.finish_and_clear();
    if !args.quiet {
        let mechanisms: BTreeSet<*const _> = plans
            .iter()
            .map(|p| Arc::as_ptr(p.mechanism_file()))
            .collect();
        println!(
            "{total} runs over {} mechanism(s) on {} threads: {} failed; CSV files in {}; wall time {:.3} s",
            mechanisms.len() + networks.len(),
            rayon_threads(),
            failures,
            args.output_dir.display(),
            started.elapsed().as_secs_f64()
        );
        if !networks.is_empty() {
            println!("{}", crate::network_run::NETWORK_CAUTION);
        }
        println!("{CAUTION}");
    }
    if monitor.is_interrupted() {
        Err(CliError::BatchInterrupted { complete, total })
    } else if failures > 0 {
        Err(CliError::RunsFailed {
            failed: failures,
            refused,
            total,
        })
    } else {
        Ok(())
    }
}

fn rayon_threads() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get())
}
