//! # stoik-suite
//!
//! Regression suites for mechanism edits: record trusted predictions of scenario runs once,
//! then verify every edit against them.
//!
//! - [`Suite::load`] / [`parse_suite`] read a suite file (TOML, `stoik_suite = 1`): cases,
//!   each a scenario file with optional overrides and temperature or pressure sweeps, and
//!   per case the named observables (a species' concentration or mole fraction at a time,
//!   its peak value and peak time, the time it first reaches a level, the final
//!   temperature, the ignition delay by any criterion, a species' time integral), each with
//!   a [`Tolerance`] and optionally a [`Measured`] value.
//! - [`record`] runs every case (in parallel, rayon) and returns a [`Baseline`]: every
//!   value at full round-trip precision with provenance (SHA-256 of the scenario, mechanism
//!   and thermo files, stoik's version, the solver tolerances, the date) and each value's
//!   solver noise (a run at a 100 times tighter relative tolerance).
//! - [`verify`] runs the cases again and compares: a [`Verification`] lists, per case and
//!   observable, baseline and new values and a [`Status`]; [`Verification::moved`] gives
//!   the observables beyond tolerance with case and values.
//! - [`terminal_report`], [`junit_xml`] and [`markdown_summary`] print it.
//! - [`explain`] attributes the observables that moved to the edits of the mechanism since
//!   the baseline (its recorded version found in git history, or given): each edit taken
//!   back alone ([`stoik_diff::revert`]), the edits ranked by their share of the move, and
//!   interaction flagged when the shares do not add up; [`explanation_report`] prints it.
//! - [`prepare_cases`] and [`PreparedCase::with_mechanism`] run one case on another
//!   mechanism.
//!
//! Values do not depend on the number of threads: each case runs on its own.
//!
//! Used from a `#[test]` of a process model's own crate:
//!
//! ```no_run
//! use std::path::Path;
//! let suite = stoik_suite::Suite::load(Path::new("my.suite.toml")).expect("suite");
//! let baseline = stoik_suite::Baseline::load(Path::new("my.baseline.toml")).expect("baseline");
//! let result = stoik_suite::verify(&suite, &baseline, &Default::default(), &|| {}).expect("runs");
//! assert!(result.moved().is_empty(), "{}", stoik_suite::terminal_report(&result));
//! ```

#![warn(missing_docs)]

mod baseline;
mod case;
mod date;
mod error;
mod explain;
mod file;
mod hash;
mod read;
mod regress;
mod report;
mod write;

pub use baseline::{
    parse_baseline, Baseline, BaselineCase, InputFile, InputRole, RecordedValue,
    BASELINE_FORMAT_VERSION,
};
pub use case::{prepare_cases, CaseValues, PreparedCase};
pub use date::{now_rfc3339_utc, rfc3339_utc};
pub use error::SuiteError;
pub use explain::{
    explain, explanation_report, EditShare, Explanation, MoveScale, ObservableExplanation,
    OldMechanism, Unexplained, GIT_SEARCH_LIMIT, INTERACTION_THRESHOLD,
};
pub use file::{
    parse_suite, DelayCriterion, Measured, Observable, ObservableKind, Suite, SuiteCase, Tolerance,
    OBSERVABLE_KINDS, SUITE_FORMAT_VERSION,
};
pub use hash::{file_sha256, sha256_hex};
pub use regress::{
    record, record_prepared, verify, verify_prepared, CaseResult, ObservableResult, RecordOptions,
    RecordedCase, RecordedObservable, Recording, Status, Verdict, Verification, VerifyOptions,
    NOISE_MARGIN, NOISE_TOLERANCE_DIVISOR,
};
pub use report::{junit_xml, markdown_summary, sorted_observables, summary_line, terminal_report};
/// An initial composition override of a case ([`SuiteCase::initial`]).
pub use stoik_scenario::Composition;
