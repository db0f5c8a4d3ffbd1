//! Reading the two sides of a diff: a mechanism file, or a file of a git revision
//! (`REV:path`) read through the `git` program.

use crate::DiffError;
use std::path::{Component, Path, PathBuf};
use std::process::Command;
use std::sync::atomic::{AtomicUsize, Ordering};
use stoik_mechanism::{load_mechanism, parse_mechanism_in, text_from_bytes, MechanismFile};

/// Where a mechanism of a diff comes from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum MechanismSource {
    /// A file on disk (relative paths start from the working folder given to
    /// [`load_mechanism_source`]).
    File(PathBuf),
    /// A file of a git revision, as `git show REVISION:PATH` gives it: `path` is relative to
    /// the repository's top folder, or to the working folder when it starts with `./` or
    /// `../` (git's rule).
    Git {
        /// The revision: a commit, branch, tag, `HEAD~2`...
        revision: String,
        /// The file's path in the revision.
        path: String,
    },
}

impl MechanismSource {
    /// Reads a command-line argument: a file when `argument` names an existing file (even
    /// with a `:` in its name) or holds no `:` (or starts with one); otherwise `REV:path`,
    /// split at the first `:`. `working_dir` is where relative paths start.
    pub fn from_argument(argument: &str, working_dir: &Path) -> MechanismSource {
        let as_file = working_dir.join(argument);
        match argument.split_once(':') {
            Some((revision, path)) if !revision.is_empty() && !as_file.is_file() => {
                MechanismSource::Git {
                    revision: revision.to_string(),
                    path: path.to_string(),
                }
            }
            _ => MechanismSource::File(PathBuf::from(argument)),
        }
    }

    /// The source as written on a command line: the path, or `REV:path`.
    pub fn label(&self) -> String {
        match self {
            MechanismSource::File(path) => path.display().to_string(),
            MechanismSource::Git { revision, path } => format!("{revision}:{path}"),
        }
    }
}

/// `git show SPEC` in `working_dir`: the file's bytes, or why not.
fn git_show(spec: &str, working_dir: &Path) -> Result<Vec<u8>, String> {
    let dir = if working_dir.as_os_str().is_empty() {
        Path::new(".")
    } else {
        working_dir
    };
    let output = Command::new("git")
        .arg("show")
        .arg(spec)
        .current_dir(dir)
        .output()
        .map_err(|e| {
            if e.kind() == std::io::ErrorKind::NotFound {
                "cannot run `git` (not installed or not on PATH); it is needed to read a file of a revision (REV:path)".to_string()
            } else {
                format!("cannot run `git show {spec}`: {e}")
            }
        })?;
    if !output.status.success() {
        let stderr = String::from_utf8_lossy(&output.stderr);
        let reason = stderr
            .lines()
            .map(str::trim)
            .find(|l| !l.is_empty())
            .unwrap_or("no message");
        return Err(format!("`git show {spec}` failed: {reason}"));
    }
    if output.stdout.len() as u64 > stoik_mechanism::MAX_INPUT_BYTES {
        return Err(format!(
            "the file is larger than {} bytes",
            stoik_mechanism::MAX_INPUT_BYTES
        ));
    }
    Ok(output.stdout)
}

/// `path` with `.` and `..` removed lexically; `None` when `..` climbs above its start.
fn normalize(path: &Path) -> Option<PathBuf> {
    let mut out: Vec<Component> = Vec::new();
    for c in path.components() {
        match c {
            Component::CurDir => {}
            Component::ParentDir => match out.last() {
                Some(Component::Normal(_)) => {
                    out.pop();
                }
                _ => return None,
            },
            other => out.push(other),
        }
    }
    Some(out.iter().collect())
}

/// A temporary folder removed when dropped.
struct TempDir(PathBuf);

impl TempDir {
    fn new() -> std::io::Result<TempDir> {
        static COUNTER: AtomicUsize = AtomicUsize::new(0);
        let n = COUNTER.fetch_add(1, Ordering::Relaxed);
        let dir = std::env::temp_dir().join(format!("stoik-diff-{}-{n}", std::process::id()));
        std::fs::create_dir_all(&dir)?;
        Ok(TempDir(dir))
    }
}

impl Drop for TempDir {
    fn drop(&mut self) {
        let _ = std::fs::remove_dir_all(&self.0);
    }
}

/// The relative `thermo_files` entries of mechanism text (empty when the text is not TOML
/// or has none; the loader then reports the problem at its place).
fn relative_thermo_files(text: &str) -> Vec<String> {
    let Ok(table) = text.parse::<toml::Table>() else {
        return Vec::new();
    };
    let Some(toml::Value::Array(items)) = table.get("thermo_files") else {
        return Vec::new();
    };
    items
        .iter()
        .filter_map(|v| v.as_str())
        .filter(|s| !Path::new(s).is_absolute())
        .map(str::to_string)
        .collect()
}

/// Loads the mechanism of `source`; relative paths and `git` start from `working_dir` (an
/// empty path: the current folder).
///
/// A file of a revision is read with `git show REV:path`; its relative `thermo_files` are read
/// from the same revision (resolved against the mechanism's folder in the revision) into a
/// temporary folder, removed afterwards; absolute ones from disk. Diagnostics name the
/// mechanism `REV:path`.
///
/// Errors: [`DiffError::Load`] for a file that cannot be read or is invalid (located),
/// [`DiffError::Git`] when `git` is missing or the revision or path does not exist.
pub fn load_mechanism_source(
    source: &MechanismSource,
    working_dir: &Path,
) -> Result<MechanismFile, DiffError> {
    let (revision, path) = match source {
        MechanismSource::File(path) => return Ok(load_mechanism(&working_dir.join(path))?),
        MechanismSource::Git { revision, path } => (revision, path),
    };
    let label = source.label();
    let git_error = |reason: String| DiffError::Git {
        spec: label.clone(),
        reason,
    };
    if path.is_empty() {
        return Err(git_error(
            "no path after the `:` (write REV:path, e.g. HEAD~1:mechanisms/h2.toml)".to_string(),
        ));
    }
    let bytes = git_show(&label, working_dir).map_err(git_error)?;
    let text = text_from_bytes(bytes).map_err(|e| e.into_load_error(&label))?;
    let thermo = relative_thermo_files(&text);
    if thermo.is_empty() {
        return Ok(parse_mechanism_in(&text, &label, Some(Path::new("")))?);
    }
    // The thermo files of the same revision, laid out in a temporary folder as in the
    // repository, so that the loader resolves the entries as written.
    let relative_to_cwd = path.starts_with("./") || path.starts_with("../");
    let folder = Path::new(path).parent().unwrap_or(Path::new(""));
    let temp =
        TempDir::new().map_err(|e| git_error(format!("cannot create a temporary folder: {e}")))?;
    // Leading `..` of a path relative to the working folder become `up` folders.
    let mapped: PathBuf = folder
        .components()
        .filter_map(|c| match c {
            Component::ParentDir => Some(PathBuf::from("up")),
            Component::Normal(name) => Some(PathBuf::from(name)),
            _ => None,
        })
        .collect();
    let base = temp.0.join("tree").join(mapped);
    let outside =
        |entry: &str| git_error(format!("thermo file `{entry}` lies outside the repository"));
    for entry in thermo {
        // Relative to the working folder, git resolves `..` itself; relative to the
        // repository's top, the path is normalised here (git takes no `..` there).
        let in_revision = if relative_to_cwd {
            folder.join(&entry)
        } else {
            normalize(&folder.join(&entry)).ok_or_else(|| outside(&entry))?
        };
        let spec = format!("{revision}:{}", in_revision.display());
        let bytes = git_show(&spec, working_dir)
            .map_err(|reason| git_error(format!("thermo file `{entry}`: {reason}")))?;
        let target = normalize(&base.join(&entry))
            .filter(|t| t.starts_with(&temp.0))
            .ok_or_else(|| outside(&entry))?;
        let written = match target.parent() {
            Some(parent) => std::fs::create_dir_all(parent),
            None => Ok(()),
        }
        .and_then(|()| std::fs::create_dir_all(&base))
        .and_then(|()| std::fs::write(&target, bytes));
        written.map_err(|e| git_error(format!("cannot write a temporary copy: {e}")))?;
    }
    Ok(parse_mechanism_in(&text, &label, Some(&base))?)
}
