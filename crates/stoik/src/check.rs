//! `stoik check`: validate a mechanism or scenario file.

use crate::error::CliError;
use std::path::Path;
use std::sync::Arc;
use stoik::kinetics::{
    collision_limit_warnings, rate_constant_range_errors, Kinetics, RATE_CHECK_RANGE_K,
};
use stoik::mechanism::{load_mechanism, parse_mechanism_in, Diagnostics, LoadError, MechanismFile};
use stoik::scenario::{
    is_network_scenario_text, is_scenario_text, parse_network_scenario, parse_scenario, RunPlan,
    ScenarioError,
};

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
    warnings.0.extend(rate_constant_range_errors(
        &file.mechanism,
        &label,
        RATE_CHECK_RANGE_K,
    ));
    warnings
        .0
        .extend(collision_limit_warnings(&file.mechanism, &label));
    warnings
}

/// Validates `path`: a mechanism, or a scenario with its mechanism (the scenario's names
/// resolved against it; the mechanism gets the same checks as on its own).
///
/// The file is read once (so a pipe such as `/dev/stdin` works) and its kind is decided from
/// the parsed document ([`is_scenario_text`]). The mechanism's rate constants must be finite from
/// 200 K to 3500 K ([`RATE_CHECK_RANGE_K`]) and, for a scenario, at its planned temperatures
/// (as `run` checks them): a step that overflows there is an error.
pub fn check(path: &Path, strict: bool) -> Result<(), CliError> {
    let label = path.display().to_string();
    // The input reader refuses FIFOs and devices without opening them (no hang here).
    let text = stoik::mechanism::read_input_text(path).map_err(|e| e.into_load_error(&label))?;
    let folder = path.parent().unwrap_or(Path::new(""));
    if !is_scenario_text(&text) {
        let file = parse_mechanism_in(&text, &label, Some(folder))?;
        return finish(
            mechanism_warnings(&file, path),
            strict,
            &summary(path, &file),
        );
    }
    if is_network_scenario_text(&text) {
        return check_network(&text, &label, folder, strict);
    }
    let (scenario, mut diagnostics) = parse_scenario(&text, &label, folder)?;
    let file = Arc::new(load_mechanism(&scenario.mechanism_path)?);
    diagnostics
        .0
        .extend(mechanism_warnings(&file, &scenario.mechanism_path).0);
    let what = summary(path, &file);
    match RunPlan::new(scenario, Diagnostics::default(), file) {
        Ok(plan) => {
            // The rate constants at the scenario's own temperatures, as `run` checks them;
            // a step already reported over the default range is not reported twice.
            if let Ok(kinetics) = Kinetics::compile(plan.mechanism()) {
                for d in plan.rate_constant_errors(&kinetics) {
                    let known = diagnostics.iter().any(|k| {
                        k.file == d.file && k.location == d.location && k.severity == d.severity
                    });
                    if !known {
                        diagnostics.0.push(d);
                    }
                }
            }
        }
        Err(ScenarioError::Load(LoadError::Invalid { diagnostics: d })) => {
            diagnostics.0.extend(d.0)
        }
        Err(e) => return Err(e.into()),
    }
    finish(diagnostics, strict, &what)
}

/// `stoik check` on a network scenario (`[[tank]]` and `[[stream]]`): the file read as a
/// network (every problem located), its mechanism checked as on its own, and the tanks and
/// streams resolved against it (species names, flows, the network's connections).
fn check_network(text: &str, label: &str, folder: &Path, strict: bool) -> Result<(), CliError> {
    let (scenario, mut diagnostics) = parse_network_scenario(text, label, folder)?;
    let file = load_mechanism(&scenario.mechanism_path)?;
    diagnostics
        .0
        .extend(mechanism_warnings(&file, &scenario.mechanism_path).0);
    let mut what = summary(Path::new(label), &file);
    match scenario.resolve(&file.mechanism) {
        Ok(plan) => {
            what.push_str(&format!(
                "; network of {} tanks, {} streams",
                plan.network.tanks().len(),
                plan.network.streams().len()
            ));
        }
        Err(LoadError::Invalid { diagnostics: d }) => diagnostics.0.extend(d.0),
        Err(e) => return Err(e.into()),
    }
    finish(diagnostics, strict, &what)
}
