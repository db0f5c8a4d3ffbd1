//! `stoik check`: validate a mechanism or scenario file.

use crate::error::CliError;
use std::path::Path;
use std::sync::Arc;
use stoik::kinetics::collision_limit_warnings;
use stoik::mechanism::{load_mechanism, Diagnostics, LoadError, MechanismFile};
use stoik::scenario::{load_scenario, RunPlan, ScenarioError};

/// Whether `path` holds a scenario (it carries the scenario format key) rather than a mechanism.
pub fn is_scenario(path: &Path) -> bool {
    // The input reader refuses FIFOs and devices without opening them (no hang here).
    stoik::mechanism::read_input_text(path)
        .map(|text| {
            text.lines()
                .any(|line| line.trim_start().starts_with("stoik_scenario"))
        })
        .unwrap_or(false)
}

/// Prints the summary line; errors and, with `strict`, warnings end the command (printed by
/// `main`), other warnings are printed here.
fn finish(diagnostics: Diagnostics, strict: bool, what: &str) -> Result<(), CliError> {
    println!(
        "{what}: {} error(s), {} warning(s)",
        diagnostics.error_count(),
        diagnostics.warning_count()
    );
    if diagnostics.has_errors() {
        Err(LoadError::Invalid { diagnostics }.into())
    } else if strict && diagnostics.warning_count() > 0 {
        Err(CliError::StrictWarnings(diagnostics))
    } else {
        for d in diagnostics.iter() {
            eprintln!("{d}");
        }
        Ok(())
    }
}

/// The summary of a checked file.
fn summary(path: &Path, file: &MechanismFile) -> String {
    format!(
        "{} ({} species, {} steps)",
        path.display(),
        file.mechanism.species.len(),
        file.mechanism.steps.len()
    )
}

/// The warnings of a loaded mechanism file (those of the loader, then the collision-limit
/// check), located in the file `path`.
fn mechanism_warnings(file: &MechanismFile, path: &Path) -> Diagnostics {
    let mut warnings = file.warnings.clone();
    let label = path.display().to_string();
    warnings
        .0
        .extend(collision_limit_warnings(&file.mechanism, &label));
    warnings
}

/// Validates `path`: a mechanism, or a scenario with its mechanism (the scenario's names
/// resolved against it; the mechanism gets the same checks as on its own).
pub fn check(path: &Path, strict: bool) -> Result<(), CliError> {
    if !is_scenario(path) {
        let file = load_mechanism(path)?;
        return finish(
            mechanism_warnings(&file, path),
            strict,
            &summary(path, &file),
        );
    }
    let (scenario, mut diagnostics) = load_scenario(path)?;
    let file = Arc::new(load_mechanism(&scenario.mechanism_path)?);
    diagnostics
        .0
        .extend(mechanism_warnings(&file, &scenario.mechanism_path).0);
    let what = summary(path, &file);
    match RunPlan::new(scenario, Diagnostics::default(), file) {
        Ok(_) => {}
        Err(ScenarioError::Load(LoadError::Invalid { diagnostics: d })) => {
            diagnostics.0.extend(d.0)
        }
        Err(e) => return Err(e.into()),
    }
    finish(diagnostics, strict, &what)
}
