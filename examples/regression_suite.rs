//! How a process model's own crate keeps its chemistry honest: a regression suite verified
//! inside an ordinary `#[test]`. The suite (`mechanisms/hydrogen-oxygen.suite.toml`, four
//! ignition cases of the bundled hydrogen demo) is recorded once into a temporary baseline,
//! then verified; the test fails, printing the report, when an observable moves beyond its
//! tolerance. In a real crate the baseline is recorded once with `stoik suite record` and
//! committed beside the suite.
//!
//! Run the test with `cargo test --example regression_suite`, or the walkthrough as a program
//! with `cargo run --example regression_suite`.

use std::path::{Path, PathBuf};
use stoik::suite::{record, terminal_report, verify, RecordOptions, Suite, VerifyOptions};

/// The bundled suite, found from this crate's folder.
fn suite_path() -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR")).join("mechanisms/hydrogen-oxygen.suite.toml")
}

/// Records a baseline of the suite and verifies the suite against it; `Err` holds the report
/// when something moved or gave no value.
fn record_and_verify(suite: &Path) -> Result<String, String> {
    let suite = Suite::load(suite).map_err(|e| e.to_string())?;
    // No noise estimate: this is a demonstration, not a baseline to keep.
    let options = RecordOptions {
        estimate_noise: false,
    };
    let recording = record(&suite, &options, &|| {}).map_err(|e| e.to_string())?;
    let result = verify(
        &suite,
        &recording.baseline,
        &VerifyOptions::default(),
        &|| {},
    )
    .map_err(|e| e.to_string())?;
    let report = terminal_report(&result);
    if result.moved().is_empty() && !recording.has_errors() {
        Ok(report)
    } else {
        Err(report)
    }
}

fn main() {
    match record_and_verify(&suite_path()) {
        Ok(report) => print!("{report}"),
        Err(report) => {
            eprint!("{report}");
            std::process::exit(4);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use stoik::suite::Baseline;

    #[test]
    fn the_hydrogen_suite_holds_against_its_own_baseline() {
        // A run is deterministic: verifying right after recording moves nothing.
        let report = record_and_verify(&suite_path()).unwrap_or_else(|r| panic!("{r}"));
        assert!(report.contains("20 within tolerance, 0 moved"), "{report}");
    }

    #[test]
    fn a_moved_ignition_delay_fails_the_test() {
        // The pattern for a user's crate: load the committed suite and baseline, verify,
        // assert nothing moved. Here the "committed" baseline is doctored to hold an ignition
        // delay 10 % longer than the mechanism gives; the 1 % factor tolerance must catch it.
        let suite = Suite::load(&suite_path()).expect("suite");
        let recording = record(
            &suite,
            &RecordOptions {
                estimate_noise: false,
            },
            &|| {},
        )
        .expect("records");
        let text = recording.baseline.to_toml().expect("writes");
        let mut baseline: Baseline =
            stoik::suite::parse_baseline(&text, "baseline.toml").expect("reads back");
        for case in &mut baseline.cases {
            for (name, value) in &mut case.observables {
                if name == "ignition delay" {
                    value.value *= 1.1;
                }
            }
        }
        let result = verify(&suite, &baseline, &VerifyOptions::default(), &|| {}).expect("runs");
        let moved: Vec<&str> = result.moved().iter().map(|o| o.name.as_str()).collect();
        assert_eq!(
            moved,
            vec!["ignition delay"; 4],
            "{}",
            terminal_report(&result)
        );
    }
}
