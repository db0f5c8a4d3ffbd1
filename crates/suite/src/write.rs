//! Files written atomically: the text goes to a temporary file in the target's folder,
//! renamed over the target only when everything was written and synced.

use std::io::Write;
use std::path::Path;

/// Writes `text` to `path` atomically; on failure the temporary file is removed and `path`
/// is left as it was.
pub(crate) fn write_text_atomically(path: &Path, text: &str) -> std::io::Result<()> {
    let name = path
        .file_name()
        .map_or_else(|| "baseline".into(), |n| n.to_string_lossy().into_owned());
    let temporary = path.with_file_name(format!(".{name}.{}.tmp", std::process::id()));
    let result = (|| {
        let mut file = std::fs::File::create(&temporary)?;
        file.write_all(text.as_bytes())?;
        file.sync_all()?;
        std::fs::rename(&temporary, path)
    })();
    if result.is_err() {
        // Best effort: the temporary file may not exist.
        let _ = std::fs::remove_file(&temporary);
    }
    result
}
