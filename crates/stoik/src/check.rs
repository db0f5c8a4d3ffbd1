//! `stoik check`: validate a mechanism or scenario file.

use crate::{EXIT_BAD_INPUT, EXIT_OK, EXIT_WARNINGS};
use std::path::Path;
use stoik::kinetics::collision_limit_warnings;
use stoik::mechanism::{load_mechanism, load_scenario, Diagnostics, LoadError, MechanismFile};

/// Whether `path` holds a scenario (it carries the scenario format key) rather than a mechanism.
pub fn is_scenario(path: &Path) -> bool {
    std::fs::read_to_string(path)
        .map(|text| {
            text.lines()
                .any(|line| line.trim_start().starts_with("stoik_scenario"))
        })
        .unwrap_or(false)
}

/// Prints a load error's diagnostics to stderr.
pub fn report_load_error(error: &LoadError) {
    eprintln!("{error}");
}

fn finish(diagnostics: &Diagnostics, strict: bool, what: &str) -> u8 {
    for d in diagnostics.iter() {
        eprintln!("{d}");
    }
    println!(
        "{what}: {} error(s), {} warning(s)",
        diagnostics.error_count(),
        diagnostics.warning_count()
    );
    if diagnostics.has_errors() {
        EXIT_BAD_INPUT
    } else if strict && diagnostics.warning_count() > 0 {
        EXIT_WARNINGS
    } else {
        EXIT_OK
    }
}

/// The warnings of a loaded mechanism file (those of the loader, then the collision-limit
/// check), located in the file `path`, and the summary line's species and step counts.
fn mechanism_warnings(file: &MechanismFile, path: &Path) -> (Diagnostics, String) {
    let mut warnings = file.warnings.clone();
    let label = path.display().to_string();
    warnings
        .0
        .extend(collision_limit_warnings(&file.mechanism, &label));
    let counts = format!(
        "({} species, {} steps)",
        file.mechanism.species.len(),
        file.mechanism.steps.len()
    );
    (warnings, counts)
}

/// Validates `path`; returns the exit status (0 clean, 1 warnings with `strict`, 2 errors).
/// A scenario is checked with its mechanism, which gets the same checks as on its own.
pub fn check(path: &Path, strict: bool) -> u8 {
    if is_scenario(path) {
        let (scenario, mut diagnostics) = match load_scenario(path) {
            Ok(ok) => ok,
            Err(e) => {
                report_load_error(&e);
                return EXIT_BAD_INPUT;
            }
        };
        match load_mechanism(&scenario.mechanism_path) {
            Ok(file) => {
                let (warnings, counts) = mechanism_warnings(&file, &scenario.mechanism_path);
                diagnostics.0.extend(warnings.0);
                if let Err(LoadError::Invalid { diagnostics: d }) =
                    scenario.resolve(&file.mechanism)
                {
                    diagnostics.0.extend(d.0);
                }
                finish(
                    &diagnostics,
                    strict,
                    &format!("{} {counts}", path.display()),
                )
            }
            Err(e) => {
                report_load_error(&e);
                EXIT_BAD_INPUT
            }
        }
    } else {
        match load_mechanism(path) {
            Ok(file) => {
                let (warnings, counts) = mechanism_warnings(&file, path);
                finish(&warnings, strict, &format!("{} {counts}", path.display()))
            }
            Err(e) => {
                report_load_error(&e);
                EXIT_BAD_INPUT
            }
        }
    }
}
