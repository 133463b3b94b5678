//! Output: finished results -> tables, JSON, CSV (written to any `io::Write`), and the
//! human-facing documents: the decision page (HTML and Markdown), SVG plots and the
//! SPICE export.
//!
//! Tables and pages use engineering notation (4.70 kΩ); JSON and CSV carry plain SI
//! numbers with the unit in the field or column name (`vaf_v`). A CSV header and its rows
//! come from one column list. Every renderer is a pure function from finished data to
//! text; this module must not read files, solve circuits or decide exit codes (files go
//! through `atomic_file`).

pub mod catalog;
pub mod csv;
pub mod curves;
pub mod decision;
pub mod eng;
pub mod html;
pub mod markdown;
pub mod page;
pub mod plot;
pub mod rank;
pub mod schematic;
pub mod spice;

#[cfg(test)]
pub(crate) mod fixtures;

use comfy_table::{presets, Attribute, Cell, ContentArrangement, Table};
use sha2::{Digest, Sha256};

/// How results are printed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Format {
    #[default]
    Table,
    Json,
    Csv,
}

/// Presentation choices made at the edge (terminal or not, NO_COLOR).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Style {
    /// Bold headers and other terminal styling; never on when writing to a file.
    pub color: bool,
}

/// A table with the house look: condensed UTF-8 borders, bold header when styled.
pub fn new_table(style: Style, header: &[&str]) -> Table {
    let mut t = Table::new();
    t.load_preset(presets::UTF8_FULL_CONDENSED)
        .set_content_arrangement(ContentArrangement::Disabled);
    if style.color {
        t.enforce_styling();
        t.set_header(
            header
                .iter()
                .map(|h| Cell::new(h).add_attribute(Attribute::Bold)),
        );
    } else {
        t.force_no_tty();
        t.set_header(header.iter().map(Cell::new));
    }
    t
}

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
