//! Output files written atomically: the text goes to a temporary file beside the target,
//! which is renamed over the target only when everything was written. A failed or refused
//! write leaves any earlier file of that name untouched and no partial file behind.

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

/// Writes `text` to `path` atomically.
pub fn write_text(path: &Path, text: &str) -> io::Result<()> {
    write_atomically(path, |w| w.write_all(text.as_bytes()))
}
