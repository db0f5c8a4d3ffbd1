//! `stoik batch`: many scenarios (optionally each at several temperatures) over mechanisms
//! compiled once, integrated in parallel with a progress bar. A run whose conserved
//! quantities drift more than its tolerances allow gets a warning line.

use crate::check::report_load_error;
use crate::conservation_out::conservation_report;
use crate::csv_out::CsvError;
use crate::run::{integration_options, reactor_model, scenario_stem, write_csv, CAUTION};
use crate::{BatchArgs, EXIT_BAD_INPUT, EXIT_INTEGRATION_FAILED, EXIT_OK};
use indicatif::{ProgressBar, ProgressStyle};
use std::collections::BTreeMap;
use std::path::PathBuf;
use std::time::Instant;
use stoik::kinetics::Kinetics;
use stoik::mechanism::{load_mechanism, load_scenario, MechanismFile, Scenario};
use stoik::reactor::{integrate_batch, BatchCase};

/// One case to run and where its CSV goes.
struct Job {
    scenario: Scenario,
    case: BatchCase,
    output: PathBuf,
}

/// Runs the batch; returns the exit status (0 all ran, 2 bad input, 3 some failed).
pub fn batch(args: &BatchArgs) -> u8 {
    let started = Instant::now();
    if let Err(e) = std::fs::create_dir_all(&args.output_dir) {
        eprintln!("error: cannot create {}: {e}", args.output_dir.display());
        return EXIT_BAD_INPUT;
    }
    if let Some(t) = args
        .temperatures_k
        .iter()
        .find(|t| !(t.is_finite() && **t > 0.0))
    {
        eprintln!("error: --temperatures-k must be positive numbers of kelvin, got {t}");
        return EXIT_BAD_INPUT;
    }
    // Group the cases by mechanism file so each mechanism is loaded and compiled once.
    let mut groups: BTreeMap<PathBuf, (MechanismFile, Vec<Job>)> = BTreeMap::new();
    let mut bad_input = false;
    for path in &args.scenarios {
        let (scenario, _) = match load_scenario(path) {
            Ok(ok) => ok,
            Err(e) => {
                report_load_error(&e);
                bad_input = true;
                continue;
            }
        };
        if !groups.contains_key(&scenario.mechanism_path) {
            match load_mechanism(&scenario.mechanism_path) {
                Ok(file) => {
                    groups.insert(scenario.mechanism_path.clone(), (file, Vec::new()));
                }
                Err(e) => {
                    report_load_error(&e);
                    bad_input = true;
                    continue;
                }
            }
        }
        let Some((file, jobs)) = groups.get_mut(&scenario.mechanism_path) else {
            continue;
        };
        let temperatures: Vec<Option<f64>> = if args.temperatures_k.is_empty() {
            vec![None]
        } else {
            args.temperatures_k.iter().copied().map(Some).collect()
        };
        for t in temperatures {
            let mut scenario = scenario.clone();
            if let Some(t) = t {
                scenario.temperature_k = t;
            }
            let resolved = match scenario.resolve(&file.mechanism) {
                Ok(r) => r,
                Err(e) => {
                    report_load_error(&e);
                    bad_input = true;
                    break;
                }
            };
            let name = match t {
                Some(t) => format!("{}-{t}K.csv", scenario_stem(path)),
                None => format!("{}.csv", scenario_stem(path)),
            };
            let model = match reactor_model(&scenario, &resolved) {
                Ok(m) => m,
                Err(e) => {
                    eprintln!("{}: error: {e}", path.display());
                    bad_input = true;
                    break;
                }
            };
            let options = integration_options(
                &scenario,
                resolved.absolute_tolerances_mol_per_m3,
                !args.allow_negative,
            );
            jobs.push(Job {
                case: BatchCase {
                    model,
                    temperature_k: scenario.temperature_k,
                    initial_mol_per_m3: resolved.initial_concentrations_mol_per_m3,
                    output_times_s: resolved.output_times_s,
                    rate_multipliers: Vec::new(),
                    options,
                },
                scenario,
                output: args.output_dir.join(name),
            });
        }
    }
    if bad_input {
        return EXIT_BAD_INPUT;
    }

    let total: usize = groups.values().map(|(_, jobs)| jobs.len()).sum();
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
    let mut failures = 0;
    for (file, jobs) in groups.values() {
        let kinetics = match Kinetics::compile(&file.mechanism) {
            Ok(k) => k,
            Err(e) => {
                bar.suspend(|| eprintln!("error: {e}"));
                return EXIT_BAD_INPUT;
            }
        };
        let cases: Vec<BatchCase> = jobs.iter().map(|j| j.case.clone()).collect();
        let results = integrate_batch(&kinetics, &cases, &|| bar.inc(1));
        for (job, result) in jobs.iter().zip(results) {
            let (profiles, failed) = match result {
                Ok(p) => (p, false),
                Err(stoik::reactor::BatchError::Integration(
                    stoik::reactor::IntegrationError::Failed(f),
                )) => {
                    bar.suspend(|| {
                        eprintln!("{}: {f}; partial profile kept", job.output.display())
                    });
                    failures += 1;
                    (f.partial, true)
                }
                Err(e) => {
                    bar.suspend(|| eprintln!("{}: error: {e}", job.output.display()));
                    failures += 1;
                    continue;
                }
            };
            if !args.quiet {
                let report = conservation_report(
                    &file.mechanism,
                    &job.case.model,
                    &profiles,
                    &job.case.options,
                );
                for warning in &report.warnings {
                    bar.suspend(|| eprintln!("{}: {warning}", job.output.display()));
                }
            }
            match write_csv(&job.output, &file.mechanism, &profiles, &job.scenario) {
                Ok(notes) => {
                    if let Some(w) = notes.warning(&job.output.display().to_string()) {
                        bar.suspend(|| eprintln!("{w}"));
                    }
                }
                Err(e @ CsvError::NonFinite { .. }) => {
                    bar.suspend(|| eprintln!("error: {}: {e}", job.output.display()));
                    failures += usize::from(!failed);
                }
                Err(e) => {
                    bar.suspend(|| eprintln!("error: cannot write {}: {e}", job.output.display()));
                    return EXIT_BAD_INPUT;
                }
            }
        }
    }
    bar.finish_and_clear();
    if !args.quiet {
        println!(
            "{total} runs over {} mechanism(s) on {} threads: {} failed; CSV files in {}; wall time {:.3} s",
            groups.len(),
            rayon_threads(),
            failures,
            args.output_dir.display(),
            started.elapsed().as_secs_f64()
        );
        println!("{CAUTION}");
    }
    if failures > 0 {
        EXIT_INTEGRATION_FAILED
    } else {
        EXIT_OK
    }
}

fn rayon_threads() -> usize {
    std::thread::available_parallelism().map_or(1, |n| n.get())
}
