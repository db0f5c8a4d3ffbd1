//! The one error type of the binary: every subcommand returns it, `main` prints it once and
//! exits with its status (DEVELOPERS.md: 1 warnings only under `--strict` or kinetic changes
//! found by `diff`, 2 bad input, 3 integration failure, 4 an observable of `suite verify` moved
//! beyond tolerance).

use crate::csv_out::CsvError;
use std::path::PathBuf;
use stoik::analysis::AnalysisError;
use stoik::diff::DiffError;
use stoik::mechanism::{Diagnostics, LoadError};
use stoik::plot::PlotError;
use stoik::reactor::IntegrationFailure;
use stoik::scenario::ScenarioError;

/// Exit status when only warnings were found and `--strict` was given.
pub const EXIT_WARNINGS: u8 = 1;
/// Exit status of `stoik diff` when the mechanisms differ kinetically (as `diff` does for
/// files that differ).
pub const EXIT_DIFFERENCES: u8 = 1;
/// Exit status for bad input (unreadable or invalid files, bad flags).
pub const EXIT_BAD_INPUT: u8 = 2;
/// Exit status for a failed integration (the partial profile is still written).
pub const EXIT_INTEGRATION_FAILED: u8 = 3;
/// Exit status of `suite verify` when an observable moved beyond its tolerance.
pub const EXIT_MOVED: u8 = 4;
/// Exit status of a run ended by Ctrl-C (the profile so far is written): 128 + SIGINT (2),
/// the shell convention for a process ended by that signal (common practice).
pub const EXIT_INTERRUPTED: u8 = 130;

/// Why a subcommand ended with a nonzero exit status.
#[derive(Debug, thiserror::Error)]
pub enum CliError {
    /// `check --strict` found warnings (and no errors); they are the message.
    #[error("{0}")]
    StrictWarnings(Diagnostics),
    /// A file could not be read or is invalid: every problem, located.
    #[error(transparent)]
    Load(#[from] LoadError),
    /// A scenario could not be planned or run.
    #[error("{}", scenario_message(.0))]
    Scenario(#[from] ScenarioError),
    /// A command-line value was refused by the scenario's plan.
    #[error("error: {flag}: {source}")]
    Flag {
        /// The flag, e.g. `--rtol`.
        flag: &'static str,
        /// Why the plan refused it.
        #[source]
        source: ScenarioError,
    },
    /// A command-line value is out of range.
    #[error("error: {0}")]
    BadFlag(String),
    /// A value of an analysis flag was refused (an unknown species or element, a time or
    /// window outside the run).
    #[error("error: {flag}: {source}")]
    Analysis {
        /// The flag, e.g. `--species`.
        flag: &'static str,
        /// Why it was refused.
        #[source]
        source: AnalysisError,
    },
    /// The run of an analysis failed before the times asked for (exit 3), or the analysis
    /// could not be made from it.
    #[error("error: {0}")]
    AnalysisRun(AnalysisError),
    /// A profile holds values that are not finite; nothing was written.
    #[error("error: {}: {source}{}", path.display(), failure.as_deref().map(|f| format!("\nerror: {f}")).unwrap_or_default())]
    NonFinite {
        /// The CSV path.
        path: PathBuf,
        /// The refusal of the CSV writer.
        #[source]
        source: CsvError,
        /// The integration failure that produced the values, in words, if any.
        failure: Option<String>,
    },
    /// An output path was refused before anything ran (its folder is missing, it is a folder,
    /// it is an input of the command, or another output of the command has the same path).
    #[error("error: {what}: {}: {reason}; nothing was written", path.display())]
    Output {
        /// The flag or the source of the output, e.g. `-o`.
        what: String,
        /// The path as given.
        path: PathBuf,
        /// Why it is refused.
        reason: String,
    },
    /// A plot (of an HTML report, or `flux --svg`) could not be drawn: a value that is not
    /// finite is refused, never drawn; the file was not written.
    #[error("error: {}: {source}; it was not written", path.display())]
    Plot {
        /// The file the plot was for (`--report`, `--svg`).
        path: PathBuf,
        /// Why the plot was refused.
        #[source]
        source: PlotError,
    },
    /// A file could not be written or a folder created.
    #[error("error: cannot {what} {}: {source}", path.display())]
    Write {
        /// `"write"` or `"create"`.
        what: &'static str,
        /// The path.
        path: PathBuf,
        /// The system's or the writer's reason.
        #[source]
        source: Box<dyn std::error::Error + Send + Sync>,
    },
    /// The integration of a run failed part way; its partial profile was written.
    #[error("error: {failure}\n{advice}\nthe profile up to the failure ({rows} rows) was written to {} ({} is left as it was)", output.display(), target.display())]
    IntegrationFailed {
        /// The failure.
        #[source]
        failure: Box<IntegrationFailure>,
        /// What to try, with species names.
        advice: String,
        /// Rows written.
        rows: usize,
        /// The CSV written: the partial-profile file beside the requested output.
        output: PathBuf,
        /// The requested output, not written by a failed run.
        target: PathBuf,
    },
    /// The run was interrupted (Ctrl-C); its profile so far was written.
    #[error("interrupted at t = {time_s:e} s; the profile so far ({rows} rows) was written to {} ({} is left as it was)", output.display(), target.display())]
    Interrupted {
        /// Simulated time reached (s).
        time_s: f64,
        /// Rows written.
        rows: usize,
        /// The CSV written: the partial-profile file beside the requested output.
        output: PathBuf,
        /// The requested output, not written by an interrupted run.
        target: PathBuf,
    },
    /// A batch was interrupted (Ctrl-C); every run's profile so far was written.
    #[error("interrupted: {complete} of {total} runs complete; the others wrote their profiles so far (.partial.csv)")]
    BatchInterrupted {
        /// Runs that reached their end time.
        complete: usize,
        /// All runs.
        total: usize,
    },
    /// Some runs of a batch failed (each was reported as it happened).
    #[error("error: {failed} of {total} runs failed{}", if *.refused > 0 { format!(" ({refused} refused as bad input)") } else { String::new() })]
    RunsFailed {
        /// Failed runs (refused ones included).
        failed: usize,
        /// Runs refused as bad input when they were set up (exit 2, as `stoik run`).
        refused: usize,
        /// All runs.
        total: usize,
    },
    /// An input file of `fit-rate` or `fit-thermo` could not be used.
    #[error("{prefix}{source}")]
    Fit {
        /// What precedes the message: the file or flag concerned.
        prefix: String,
        /// The reason.
        #[source]
        source: Box<dyn std::error::Error + Send + Sync>,
    },
    /// `suite verify`: observables moved beyond their tolerances (the report lists them).
    #[error("error: {moved} observable(s) moved beyond tolerance")]
    Moved {
        /// How many.
        moved: usize,
    },
    /// `stoik diff` found this many kinetic edits (the report is already printed; `main`
    /// prints nothing more).
    #[error("")]
    KineticChanges(usize),
    /// `stoik diff` could not read or compare its mechanisms.
    #[error("{}", diff_message(.0))]
    Diff(#[from] DiffError),
    /// No steady state, or a bad continuation parameter.
    #[error("error: {0}")]
    Steady(#[from] stoik::reactor::SteadyError),
    /// A continuation stopped before leaving its range (the points so far were written).
    #[error("error: the branch is incomplete: {0}")]
    BranchIncomplete(String),
    /// Several inputs failed (a batch reports every bad scenario).
    #[error("{}", .0.iter().map(|e| e.to_string()).collect::<Vec<_>>().join("\n"))]
    Several(Vec<CliError>),
}

/// A scenario error as the binary prints it: located diagnostics as they are, anything else
/// after `error: `.
fn scenario_message(error: &ScenarioError) -> String {
    match error {
        ScenarioError::Load(e) => e.to_string(),
        other => format!("error: {other}"),
    }
}

/// A diff error as the binary prints it: located diagnostics as they are, anything else after
/// `error: `.
fn diff_message(error: &DiffError) -> String {
    match error {
        DiffError::Load(e) => e.to_string(),
        other => format!("error: {other}"),
    }
}

impl CliError {
    /// The exit status.
    pub fn exit_code(&self) -> u8 {
        match self {
            CliError::StrictWarnings(_) => EXIT_WARNINGS,
            CliError::Moved { .. } => EXIT_MOVED,
            CliError::Interrupted { .. } | CliError::BatchInterrupted { .. } => EXIT_INTERRUPTED,
            CliError::KineticChanges(_) => EXIT_DIFFERENCES,
            CliError::RunsFailed { refused, .. } if *refused > 0 => EXIT_BAD_INPUT,
            CliError::AnalysisRun(AnalysisError::RunFailed { .. })
            | CliError::AnalysisRun(AnalysisError::SensitivityFailed(_)) => EXIT_INTEGRATION_FAILED,
            CliError::Plot {
                source: PlotError::NonFinite { .. },
                ..
            }
            | CliError::NonFinite { .. }
            | CliError::IntegrationFailed { .. }
            | CliError::RunsFailed { .. }
            | CliError::BranchIncomplete(_) => EXIT_INTEGRATION_FAILED,
            CliError::Steady(
                stoik::reactor::SteadyError::NotConverged { .. }
                | stoik::reactor::SteadyError::Integration(_),
            ) => EXIT_INTEGRATION_FAILED,
            CliError::Several(errors) => errors
                .iter()
                .map(CliError::exit_code)
                .max()
                .unwrap_or(EXIT_BAD_INPUT),
            _ => EXIT_BAD_INPUT,
        }
    }

    /// A write failure of `path`.
    pub fn write(
        path: &std::path::Path,
        source: impl Into<Box<dyn std::error::Error + Send + Sync>>,
    ) -> Self {
        CliError::Write {
            what: "write",
            path: path.to_path_buf(),
            source: source.into(),
        }
    }

    /// A fit input problem, printed after `prefix`.
    pub fn fit(
        prefix: impl Into<String>,
        source: impl Into<Box<dyn std::error::Error + Send + Sync>>,
    ) -> Self {
        CliError::Fit {
            prefix: prefix.into(),
            source: source.into(),
        }
    }
}
