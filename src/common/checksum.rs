//! SHA-256 in hex, the one checksum candor records: for dataset files
//! (checked against the catalog), manifests and cell fingerprints.

use sha2::{Digest, Sha256};
use std::io::Read;

/// Hex SHA-256 of some bytes.
pub fn hex_sha256(bytes: &[u8]) -> String {
    hex(&Sha256::digest(bytes))
}

/// Hex SHA-256 of everything a reader yields, without holding it in memory,
/// so large dataset files can be checked before they are parsed.
pub fn hex_sha256_of(mut reader: impl Read) -> std::io::Result<String> {
    let mut hasher = Sha256::new();
    std::io::copy(&mut reader, &mut hasher)?;
    Ok(hex(&hasher.finalize()))
}

fn hex(digest: &[u8]) -> String {
    digest.iter().map(|b| format!("{b:02x}")).collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn matches_the_published_test_vector() {
        // FIPS 180-2, appendix B.1: SHA-256("abc").
        let abc = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad";
        assert_eq!(hex_sha256(b"abc"), abc);
        assert_eq!(hex_sha256_of(&b"abc"[..]).unwrap(), abc);
    }
}
