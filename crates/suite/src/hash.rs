//! Content hashes (SHA-256, FIPS 180-4, by the `sha2` crate) of the files a case depends on.

use sha2::{Digest, Sha256};
use std::path::Path;

/// SHA-256 of `bytes` as 64 lowercase hexadecimal digits.
pub fn sha256_hex(bytes: &[u8]) -> String {
    let digest = Sha256::digest(bytes);
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

/// SHA-256 of the file at `path`, or the system's reason it could not be read.
pub fn file_sha256(path: &Path) -> Result<String, String> {
    std::fs::read(path)
        .map(|bytes| sha256_hex(&bytes))
        .map_err(|e| format!("{}: cannot read file: {e}", path.display()))
}

#[cfg(test)]
mod tests {
    use super::sha256_hex;

    #[test]
    fn sha256_of_the_published_test_vectors() {
        // FIPS 180-4 examples (NIST CSRC, "Example Algorithms", SHA-256): "abc" and "".
        assert_eq!(
            sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
        assert_eq!(
            sha256_hex(b""),
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855"
        );
    }
}
