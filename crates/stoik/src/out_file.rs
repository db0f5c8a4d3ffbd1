//! Output files written atomically: the text goes to a temporary file beside the target,
//! which is renamed over the target only when everything was written. A failed or refused
//! write leaves any earlier file of that name untouched and no partial file behind.

use crate::error::CliError;
use std::fs::File;
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

/// The temporary name used while `path` is written: `.<name>.<process id>.tmp` in the same
/// folder (a rename within one folder is atomic on the platforms stoik supports).
fn temporary_path(path: &Path) -> PathBuf {
    let name = path
        .file_name()
        .map_or_else(|| "output".into(), |n| n.to_string_lossy().into_owned());
    path.with_file_name(format!(".{name}.{}.tmp", std::process::id()))
}

/// Writes `path` atomically with `fill`, which writes the content to a buffered writer.
///
/// Errors: whatever `fill` returns (converted from the I/O errors of creating, flushing and
/// renaming); on any error the temporary file is removed and `path` is not touched.
pub fn write_atomically<T, E: From<io::Error>>(
    path: &Path,
    fill: impl FnOnce(&mut BufWriter<File>) -> Result<T, E>,
) -> Result<T, E> {
    // A symlink is kept: its target is replaced (`OutputPaths` has checked it is no input).
    let target;
    let path = match std::fs::symlink_metadata(path) {
        Ok(m) if m.file_type().is_symlink() => match std::fs::canonicalize(path) {
            Ok(t) => {
                target = t;
                target.as_path()
            }
            Err(_) => path,
        },
        _ => path,
    };
    let temporary = temporary_path(path);
    let result = (|| {
        let mut w = BufWriter::new(File::create(&temporary)?);
        let value = fill(&mut w)?;
        w.into_inner().map_err(|e| e.into_error())?.sync_all()?;
        std::fs::rename(&temporary, path)?;
        Ok(value)
    })();
    if result.is_err() {
        // Best effort: the temporary file may not exist.
        let _ = std::fs::remove_file(&temporary);
    }
    result
}

/// Where a failed run's partial profile goes instead of `output`: `<stem>.partial.<ext>`
/// beside it (`out.csv` -> `out.partial.csv`), so the output name only ever holds a complete
/// profile and an earlier complete file of that name survives the failure.
pub fn partial_path(output: &Path) -> PathBuf {
    let stem = output
        .file_stem()
        .map_or_else(|| "profiles".into(), |s| s.to_string_lossy().into_owned());
    let ext = output
        .extension()
        .map_or_else(|| "csv".into(), |s| s.to_string_lossy().into_owned());
    output.with_file_name(format!("{stem}.partial.{ext}"))
}

/// Writes `text` to `path` atomically.
pub fn write_text(path: &Path, text: &str) -> io::Result<()> {
    write_atomically(path, |w| w.write_all(text.as_bytes()))
}

/// An input of a command: the path as given and where it resolves.
struct Input {
    given: PathBuf,
    resolved: PathBuf,
}

/// An output of a command, accepted by [`OutputPaths::output`].
struct Output {
    what: String,
    given: PathBuf,
    resolved: PathBuf,
}

/// The outputs of one command, checked before anything runs: each output's folder exists and
/// is a folder, an existing output is a regular file, no output resolves to an input of the
/// command (paths compared after resolving `./`, `..`, absolute spellings and symlinks), and
/// no two outputs resolve to the same file.
#[derive(Default)]
pub struct OutputPaths {
    inputs: Vec<Input>,
    outputs: Vec<Output>,
}

/// Where `path` resolves: the file itself when it exists (symlinks followed), otherwise its
/// resolved folder joined with its file name. `None` when the folder does not resolve.
fn resolve(path: &Path) -> Option<PathBuf> {
    if let Ok(p) = std::fs::canonicalize(path) {
        return Some(p);
    }
    let name = path.file_name()?;
    let parent = match path.parent() {
        Some(p) if !p.as_os_str().is_empty() => p,
        _ => Path::new("."),
    };
    Some(std::fs::canonicalize(parent).ok()?.join(name))
}

impl OutputPaths {
    /// No inputs, no outputs.
    pub fn new() -> Self {
        OutputPaths::default()
    }

    /// Records an input of the command (a path that does not resolve cannot be overwritten
    /// through another spelling and is skipped).
    pub fn input(&mut self, path: &Path) {
        if let Some(resolved) = resolve(path) {
            self.inputs.push(Input {
                given: path.to_path_buf(),
                resolved,
            });
        }
    }

    /// Checks one output; `what` names its source in messages (the flag, e.g. `-o`, or
    /// `the run of a.scenario.toml at 600 K`).
    ///
    /// Errors: [`CliError::Output`] (exit 2) naming `what`, the path and the reason.
    pub fn output(&mut self, what: impl Into<String>, path: &Path) -> Result<(), CliError> {
        let what = what.into();
        let refuse = |reason: String| CliError::Output {
            what: what.clone(),
            path: path.to_path_buf(),
            reason,
        };
        if path.as_os_str().is_empty() || path.file_name().is_none() {
            return Err(refuse("this is not a file name".into()));
        }
        let folder = match path.parent() {
            Some(p) if !p.as_os_str().is_empty() => p,
            _ => Path::new("."),
        };
        match std::fs::metadata(folder) {
            Ok(m) if m.is_dir() => {}
            Ok(_) => return Err(refuse(format!("{} is not a folder", folder.display()))),
            Err(e) => {
                return Err(refuse(format!(
                    "its folder {} cannot be used: {e}",
                    folder.display()
                )))
            }
        }
        match std::fs::metadata(path) {
            Ok(m) if !m.is_file() => {
                return Err(refuse(format!(
                    "it exists and is {}, not a regular file",
                    if m.is_dir() {
                        "a folder"
                    } else {
                        "a special file"
                    }
                )))
            }
            _ => {}
        }
        let resolved = resolve(path).ok_or_else(|| refuse("its folder does not resolve".into()))?;
        if let Some(input) = self.inputs.iter().find(|i| i.resolved == resolved) {
            return Err(refuse(format!(
                "it is the input file {}; refusing to overwrite an input",
                input.given.display()
            )));
        }
        if let Some(other) = self.outputs.iter().find(|o| o.resolved == resolved) {
            return Err(refuse(format!(
                "{} ({}) writes the same file; outputs must be distinct",
                other.what,
                other.given.display()
            )));
        }
        self.outputs.push(Output {
            what,
            given: path.to_path_buf(),
            resolved,
        });
        Ok(())
    }
}
