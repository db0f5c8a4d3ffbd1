//! `stoik batch`: many scenarios (optionally each at several temperatures) run by the
//! scenario crate over mechanisms compiled once, in parallel, with a progress bar. Every run
//! prints the warnings `stoik run` prints (each distinct one once) and a warning line when
//! its conserved quantities drift more than its tolerances allow.

use crate::conservation_out::report_from_check;
use crate::csv_out::CsvError;
use crate::error::CliError;
use crate::run::{scenario_stem, write_csv, CAUTION};
use crate::BatchArgs;
use indicatif::{ProgressBar, ProgressStyle};
use std::collections::{BTreeSet, HashSet};
use std::path::PathBuf;
use std::sync::Arc;
use std::time::Instant;
use stoik::scenario::{load_plans, run_batch, RunPlan};

/// The plans of every scenario at every temperature, with their CSV paths; every bad input
/// is reported.
fn plans(args: &BatchArgs) -> Result<Vec<(RunPlan, PathBuf)>, CliError> {
    if let Some(t) = args
        .temperatures_k
        .iter()
        .find(|t| !(t.is_finite() && **t > 0.0))
    {
        return Err(CliError::BadFlag(format!(
            "--temperatures-k must be positive numbers of kelvin, got {t}"
        )));
    }
    let temperatures: Vec<Option<f64>> = if args.temperatures_k.is_empty() {
        vec![None]
    } else {
        args.temperatures_k.iter().copied().map(Some).collect()
    };
    let mut jobs = Vec::new();
    let mut errors = Vec::new();
    for (path, plan) in args.scenarios.iter().zip(load_plans(&args.scenarios)) {
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
                    format!("{}-{t}K.csv", scenario_stem(path))
                }
                None => format!("{}.csv", scenario_stem(path)),
            };
            jobs.push((plan, args.output_dir.join(name)));
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
    std::fs::create_dir_all(&args.output_dir).map_err(|e| CliError::Write {
        what: "create",
        path: args.output_dir.clone(),
        source: e.into(),
    })?;
    let jobs = plans(args)?;
    let total = jobs.len();
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
    let plans: Vec<RunPlan> = jobs.iter().map(|(p, _)| p.clone()).collect();
    let outcomes = run_batch(&plans, &|| bar.inc(1));
    let mut failures = 0;
    let mut printed = HashSet::new();
    for ((plan, output), outcome) in jobs.iter().zip(outcomes) {
        let outcome = match outcome {
            Ok(o) => o,
            Err(e) => {
                bar.suspend(|| eprintln!("{}: {}", output.display(), CliError::from(e)));
                failures += 1;
                continue;
            }
        };
        if let Some(f) = outcome.failure() {
            bar.suspend(|| eprintln!("{}: {f}; partial profile kept", output.display()));
            failures += 1;
        }
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
        match write_csv(output, plan, outcome.profiles()) {
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
    bar.finish_and_clear();
    if !args.quiet {
        let mechanisms: BTreeSet<*const _> = plans
            .iter()
            .map(|p| Arc::as_ptr(p.mechanism_file()))
            .collect();
        println!(
            "{total} runs over {} mechanism(s) on {} threads: {} failed; CSV files in {}; wall time {:.3} s",
            mechanisms.len(),
            rayon_threads(),
            failures,
            args.output_dir.display(),
            started.elapsed().as_secs_f64()
        );
        println!("{CAUTION}");
    }
    if failures > 0 {
        Err(CliError::RunsFailed {
            failed: failures,
            total,
        })
    } else {
        Ok(())
    }
}

fn rayon_threads() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get())
}
