//! Helpers shared by the tests that run the real `stoik` binary (each test crate uses a
//! subset).
#![allow(dead_code)]

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

/// A numeric CSV written by `stoik run`: its header fields and its rows.
pub struct Table {
    /// Header fields (name and unit, e.g. `temperature [K]`).
    pub header: Vec<String>,
    /// One row of numbers per output time.
    pub rows: Vec<Vec<f64>>,
}

impl Table {
    /// Reads the CSV at `path` (every field after the header a number).
    pub fn read(path: &Path) -> Table {
        let csv = std::fs::read_to_string(path).expect("the CSV was written");
        let mut lines = csv.lines();
        let header = lines
            .next()
            .expect("a header line")
            .split(',')
            .map(str::to_string)
            .collect();
        let rows = lines
            .map(|l| l.split(',').map(|x| x.parse().expect("a number")).collect())
            .collect();
        Table { header, rows }
    }

    /// Index of the column named `name`.
    pub fn col(&self, name: &str) -> usize {
        self.header
            .iter()
            .position(|h| h == name)
            .unwrap_or_else(|| panic!("no column `{name}`"))
    }
}
