//! Human-facing output written from finished results: the decision page (HTML and
//! Markdown), SVG plots, and the SPICE export.
//!
//! Every renderer here is a pure function from finished data to text; nothing here
//! solves circuits or decides anything, and nothing here touches the file system
//! (files go through `atomic_file`).

pub mod eng;
pub mod html;
pub mod markdown;
pub mod page;
pub mod plot;
pub mod spice;

#[cfg(test)]
pub(crate) mod fixtures;

use sha2::{Digest, Sha256};

/// Where the numbers came from: echoed in every exported file.
#[derive(Debug, Clone, PartialEq)]
pub struct Provenance {
    /// The catalog file as the user named it, or a note that the embedded default was used.
    pub catalog_source: String,
    /// SHA-256 of the catalog's bytes, lowercase hex.
    pub catalog_sha256: String,
    /// The tool's version (`CARGO_PKG_VERSION`).
    pub tool_version: String,
}

/// Lowercase hex SHA-256 of `bytes` (FIPS 180-4).
pub fn sha256_hex(bytes: &[u8]) -> String {
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

#[cfg(test)]
mod tests {
    #[test]
    fn sha256_of_the_fips_example() {
        // FIPS 180-4 / NIST example "abc".
        assert_eq!(
            super::sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }
}
