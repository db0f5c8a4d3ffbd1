//! # stoik-testsupport
//!
//! What the tests and benchmarks of every stoik crate share (a dev-dependency only, never
//! published):
//! - the repository's data folders ([`mechanisms_dir`], [`tests_dir`]), found from this crate's
//!   own location, so that no test climbs out of its crate's folder by hand;
//! - the published reference solutions of the stiff test problems ([`published`]), quoted
//!   once;
//! - [`Rng`], a seeded pseudo-random generator for reproducible synthetic inputs.

#![warn(missing_docs)]

use std::path::{Path, PathBuf};

pub mod published;

/// The repository's root folder (this crate lives in `crates/testsupport`).
pub fn repo_dir() -> PathBuf {
    let here = Path::new(env!("CARGO_MANIFEST_DIR"));
    here.ancestors()
        .nth(2)
        .expect("crates/testsupport lies two folders below the repository root")
        .to_path_buf()
}

/// The bundled mechanisms and scenarios (`mechanisms/`), with `thermo/` and `data/`.
pub fn mechanisms_dir() -> PathBuf {
    repo_dir().join("mechanisms")
}

/// The repository's integration-test folder (`tests/`), with the malformed-input corpus
/// `tests/bad-input/`.
pub fn tests_dir() -> PathBuf {
    repo_dir().join("tests")
}

/// The bundled file `name` in [`mechanisms_dir`] (`name` may hold a subfolder, e.g.
/// `"thermo/janaf-nasa7.toml"`).
pub fn mechanism_path(name: &str) -> PathBuf {
    mechanisms_dir().join(name)
}

/// The text of the file at `path`; panics with the path when it cannot be read (tests only).
pub fn read_text(path: &Path) -> String {
    std::fs::read_to_string(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()))
}

/// xorshift64* pseudo-random numbers (S. Vigna, "An experimental exploration of Marsaglia's
/// xorshift generators, scrambled", ACM Trans. Math. Softw. 42, 30, 2016), reproducible from
/// a seed.
#[derive(Debug, Clone)]
pub struct Rng(u64);

impl Rng {
    /// A generator started from `seed` (0 is taken as 1: the state must not be zero).
    pub fn new(seed: u64) -> Self {
        Rng(seed.max(1))
    }

    /// Next raw 64-bit value.
    pub fn next_u64(&mut self) -> u64 {
        let mut x = self.0;
        x ^= x >> 12;
        x ^= x << 25;
        x ^= x >> 27;
        self.0 = x;
        x.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }

    /// Uniform in [0, 1) (53 random bits).
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }

    /// Uniform integer in [0, n) (0 when `n` is 0).
    pub fn below(&mut self, n: usize) -> usize {
        (self.uniform() * n as f64) as usize % n.max(1)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn data_folders_exist() {
        assert!(mechanism_path("robertson.toml").is_file());
        assert!(tests_dir().join("bad-input").is_dir());
    }

    #[test]
    fn xorshift64_star_first_outputs() {
        // xorshift64* from state 1, computed by hand from the recurrence above
        // (x ^= x >> 12; x ^= x << 25; x ^= x >> 27; output x * 0x2545F4914F6CDD1D mod 2^64):
        // state 1 -> 1 ^ (1 << 25) = 0x2000001, then ^ (0x2000001 >> 27) = 0x2000001.
        let mut rng = Rng::new(1);
        assert_eq!(
            rng.next_u64(),
            0x2000001u64.wrapping_mul(0x2545_F491_4F6C_DD1D)
        );
    }
}
