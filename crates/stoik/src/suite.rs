//! `stoik suite record` and `stoik suite verify`: thin glue over `stoik-suite` (files,
//! progress bar, reports, exit codes).

use crate::error::CliError;
use crate::out_file::{write_text, OutputPaths};
use crate::{SuiteRecordArgs, SuiteVerifyArgs};
use indicatif::{ProgressBar, ProgressStyle};
use std::path::{Path, PathBuf};
use std::time::Instant;
use stoik::diff::MechanismSource;
use stoik::suite::{
    explain, explanation_report, junit_xml, markdown_summary, now_rfc3339_utc, prepare_cases,
    record_prepared, terminal_report, verify_prepared, Baseline, OldMechanism, PreparedCase,
    RecordOptions, Status, Suite, SuiteError, Verdict, VerifyOptions, NOISE_MARGIN,
    NOISE_TOLERANCE_DIVISOR,
};

/// The default baseline of `suite`: `<name>.baseline.toml` beside it, where `<name>` is the
/// suite file's name without `.suite.toml` (or `.toml`).
pub fn default_baseline(suite: &Path) -> PathBuf {
    let name = suite
        .file_name()
        .map_or_else(|| "suite".into(), |n| n.to_string_lossy().into_owned());
    let stem = name
        .strip_suffix(".suite.toml")
        .or_else(|| name.strip_suffix(".toml"))
        .unwrap_or(&name);
    suite.with_file_name(format!("{stem}.baseline.toml"))
}

fn suite_error(e: SuiteError) -> CliError {
    match e {
        SuiteError::Load(l) => CliError::Load(l),
        SuiteError::Write { path, reason } => CliError::Write {
            what: "write",
            path: PathBuf::from(path),
            source: reason.into(),
        },
    }
}

/// The inputs of every case (scenario, mechanism, thermo files) and the suite itself.
fn record_inputs(outputs: &mut OutputPaths, suite: &Path, loaded: &Suite, cases: &[PreparedCase]) {
    outputs.input(suite);
    for c in &loaded.cases {
        outputs.input(&c.scenario_path);
    }
    for c in cases {
        outputs.input(&c.plan().scenario().mechanism_path);
        for t in &c.plan().mechanism_file().thermo_files {
            outputs.input(t);
        }
    }
}

fn progress_bar(quiet: bool, total: usize) -> ProgressBar {
    let bar = if quiet {
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
    bar
}

/// `stoik suite record`.
pub fn record(args: &SuiteRecordArgs) -> Result<(), CliError> {
    let suite = Suite::load(&args.suite)?;
    let cases = prepare_cases(&suite)?;
    let output = args
        .output
        .clone()
        .unwrap_or_else(|| default_baseline(&args.suite));
    let mut outputs = OutputPaths::new();
    record_inputs(&mut outputs, &args.suite, &suite, &cases);
    outputs.output("-o", &output)?;
    let options = RecordOptions {
        estimate_noise: !args.no_noise,
    };
    let runs = cases.len() * if options.estimate_noise { 2 } else { 1 };
    let bar = progress_bar(args.quiet, runs);
    let start = Instant::now();
    let recording = record_prepared(&suite, &cases, &options, now_rfc3339_utc(), &|| bar.inc(1))
        .map_err(suite_error)?;
    bar.finish_and_clear();
    let text = recording.baseline.to_toml().map_err(suite_error)?;
    write_text(&output, &text).map_err(|e| CliError::write(&output, e))?;
    let mut failed = 0;
    for case in &recording.cases {
        if let Some(e) = &case.error {
            failed += 1;
            eprintln!("error: case `{}`: {e}; not recorded", case.name);
        }
        for o in &case.observables {
            match &o.value {
                Err(e) => eprintln!(
                    "error: case `{}`, observable `{}`: {e}; not recorded",
                    case.name, o.name
                ),
                Ok(v) if o.tolerance_near_noise => eprintln!(
                    "warning: case `{}`, observable `{}`: its tolerance ({}) allows less than {NOISE_MARGIN} times the solver noise ({} at value {}; estimated at a {NOISE_TOLERANCE_DIVISOR} times tighter relative tolerance); verify may fail on noise alone",
                    case.name,
                    o.name,
                    o.tolerance,
                    o.noise.map_or_else(|| "-".into(), |n| format!("{n:.3e}")),
                    format_args!("{v:.6e}")
                ),
                Ok(_) => {}
            }
        }
    }
    if !args.quiet {
        let observables: usize = recording
            .baseline
            .cases
            .iter()
            .map(|c| c.observables.len())
            .sum();
        println!(
            "recorded {observables} observable(s) of {} case(s) to {} in {:.2} s ({runs} runs)",
            recording.baseline.cases.len(),
            output.display(),
            start.elapsed().as_secs_f64()
        );
    }
    if recording.has_errors() {
        return Err(CliError::RunsFailed {
            failed: failed.max(1),
            refused: 0,
            total: cases.len(),
        });
    }
    Ok(())
}

/// `stoik suite verify`.
pub fn verify(args: &SuiteVerifyArgs) -> Result<(), CliError> {
    let suite = Suite::load(&args.suite)?;
    let baseline_path = args
        .baseline
        .clone()
        .unwrap_or_else(|| default_baseline(&args.suite));
    let baseline = Baseline::load(&baseline_path)?;
    let cases = prepare_cases(&suite)?;
    let mut outputs = OutputPaths::new();
    record_inputs(&mut outputs, &args.suite, &suite, &cases);
    outputs.input(&baseline_path);
    if let Some(p) = &args.junit {
        outputs.output("--junit", p)?;
    }
    if let Some(p) = &args.markdown {
        outputs.output("--markdown", p)?;
    }
    let options = VerifyOptions {
        changed_only: args.changed_only,
    };
    let bar = progress_bar(args.quiet, cases.len());
    let start = Instant::now();
    let now = now_rfc3339_utc();
    let result = verify_prepared(&suite, &cases, &baseline, &options, &|| bar.inc(1))
        .map_err(suite_error)?;
    bar.finish_and_clear();
    if let Some(p) = &args.junit {
        write_text(p, &junit_xml(&result, &now)).map_err(|e| CliError::write(p, e))?;
    }
    if let Some(p) = &args.markdown {
        write_text(p, &markdown_summary(&result)).map_err(|e| CliError::write(p, e))?;
    }
    print!("{}", terminal_report(&result));
    if args.explain && result.verdict() == Verdict::Moved {
        let old = match &args.explain_against {
            Some(a) => OldMechanism::Given(MechanismSource::from_argument(a, Path::new(""))),
            None => OldMechanism::FromHistory,
        };
        // A given file is relative to the working folder; explain reads sources relative to
        // the suite's folder, so make it absolute first.
        let old = match old {
            OldMechanism::Given(MechanismSource::File(p)) => {
                OldMechanism::Given(MechanismSource::File(std::path::absolute(&p).unwrap_or(p)))
            }
            other => other,
        };
        let explanation =
            explain(&suite.folder, &cases, &baseline, &result, &old).map_err(suite_error)?;
        print!("{}", explanation_report(&explanation));
    }
    if !args.quiet {
        let ran = result.cases.iter().filter(|c| !c.skipped).count();
        println!(
            "verified {ran} of {} case(s) against {} (recorded {}) in {:.2} s",
            result.cases.len(),
            baseline_path.display(),
            baseline.recorded_utc,
            start.elapsed().as_secs_f64()
        );
    }
    match result.verdict() {
        Verdict::AllWithin => Ok(()),
        Verdict::Moved => Err(CliError::Moved {
            moved: result.moved().len(),
        }),
        Verdict::Errors => Err(CliError::RunsFailed {
            failed: result
                .cases
                .iter()
                .filter(|c| {
                    c.error.is_some()
                        || c.observables
                            .iter()
                            .any(|o| matches!(o.status, Status::Error(_) | Status::NotRecorded))
                })
                .count(),
            refused: 0,
            total: result.cases.len(),
        }),
    }
}
