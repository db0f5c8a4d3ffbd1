//! `stoik diff OLD NEW`: the kinetic edits between two mechanisms (files or `REV:path`).

use crate::error::CliError;
use crate::{DiffArgs, DiffFormat};
use std::path::Path;
use stoik::diff::{
    diff_mechanisms, diff_report, diff_toml, load_mechanism_source, DiffError, DiffOptions,
    MechanismSource,
};

/// Compares the two mechanisms of `args` and prints the report (text or TOML) on standard
/// output. `Ok` when there is no kinetic change; [`CliError::KineticChanges`] (exit 1) when
/// there are some; bad input (exit 2) otherwise.
pub fn diff(args: &DiffArgs) -> Result<(), CliError> {
    let options = DiffOptions {
        temperatures_k: args.temperatures_k.clone(),
        pressures_pa: args.pressures_pa.clone(),
        relative_tolerance: args.relative_tolerance,
    };
    let here = Path::new("");
    let old_source = MechanismSource::from_argument(&args.old, here);
    let new_source = MechanismSource::from_argument(&args.new, here);
    // Both files are read before either error is reported, so that one run shows both.
    let old = load_mechanism_source(&old_source, here);
    let new = load_mechanism_source(&new_source, here);
    let (old, new) = match (old, new) {
        (Ok(old), Ok(new)) => (old, new),
        (Err(e), Ok(_)) | (Ok(_), Err(e)) => return Err(e.into()),
        (Err(a), Err(b)) => return Err(CliError::Several(vec![a.into(), b.into()])),
    };
    let diff = diff_mechanisms(&old.mechanism, &new.mechanism, &options).map_err(|e| match e {
        DiffError::BadOption { what, value, rule } => CliError::BadFlag(format!(
            "--{}: {value} is out of range ({rule})",
            what.replace('_', "-")
        )),
        other => other.into(),
    })?;
    let (old_label, new_label) = (old_source.label(), new_source.label());
    match args.format {
        DiffFormat::Text => print!("{}", diff_report(&diff, &old_label, &new_label)),
        DiffFormat::Toml => {
            let (text, warnings) = diff_toml(&diff, &old_label, &new_label);
            for w in warnings {
                eprintln!("warning: {w}");
            }
            print!("{text}");
        }
    }
    if diff.has_kinetic_change() {
        Err(CliError::KineticChanges(diff.edits.len()))
    } else {
        Ok(())
    }
}
