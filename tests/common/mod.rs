//! Helpers shared by the tests that run the real `stoik` binary.

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// Runs the binary with `args` in `dir`.
pub fn stoik(args: &[&str], dir: &Path) -> Output {
    Command::new(env!("CARGO_BIN_EXE_stoik"))
        .args(args)
        .current_dir(dir)
        .output()
        .expect("the stoik binary starts")
}

/// The repository root.
pub fn repo() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// A fresh scratch folder for one test (`prefix` keeps test files apart).
pub fn scratch(prefix: &str, name: &str) -> PathBuf {
    let dir = std::env::temp_dir().join(format!("stoik-{prefix}-{}-{name}", std::process::id()));
    std::fs::create_dir_all(&dir).expect("scratch folder");
    dir
}

/// Output bytes as text.
pub fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).into_owned()
}
