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
    /// Columns available (the terminal's width, or `COLUMNS`); tables wrap their cells to
    /// fit. `None` (output to a file or pipe without `COLUMNS`): no limit.
    pub width: Option<u16>,
    /// Every column of the candidate tables (`--wide`) instead of the ones a designer
    /// decides on.
    pub wide: bool,
}

/// A table with the house look: condensed UTF-8 borders, bold header when styled, cells
/// wrapped to keep the table within `style.width`.
pub fn new_table(style: Style, header: &[&str]) -> Table {
    let mut t = Table::new();
    t.load_preset(presets::UTF8_FULL_CONDENSED);
    fit_width(&mut t, style);
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

/// Keep `t` within the style's width by wrapping cells (never by cutting the table).
pub fn fit_width(t: &mut Table, style: Style) {
    match style.width {
        Some(w) => {
            t.set_content_arrangement(ContentArrangement::Dynamic)
                .set_width(w);
        }
        None => {
            t.set_content_arrangement(ContentArrangement::Disabled);
        }
    }
}

/// Word-wrap prose to `width` columns (no limit when `None`); words longer than a line
/// stay whole.
pub fn wrap(text: &str, width: Option<u16>) -> String {
    wrap_indented(text, width, 0)
}

/// As [`wrap`], with continuation lines indented by `indent` spaces (the first line is
/// assumed to start `indent` columns in, after a bullet).
pub fn wrap_indented(text: &str, width: Option<u16>, indent: usize) -> String {
    let Some(width) = width.map(usize::from) else {
        return text.to_string();
    };
    let room = width.saturating_sub(indent).max(20);
    let mut out = String::new();
    let mut line = 0usize;
    for word in text.split(' ').filter(|w| !w.is_empty()) {
        let n = word.chars().count();
        if line > 0 && line + 1 + n > room {
            out.push('\n');
            out.push_str(&" ".repeat(indent));
            line = 0;
        } else if line > 0 {
            out.push(' ');
            line += 1;
        }
        out.push_str(word);
        line += n;
    }
    out
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
    fn wrap_keeps_lines_within_the_width() {
        let text = "one two three four five six seven eight nine ten eleven twelve thirteen";
        let w = super::wrap(text, Some(20));
        assert!(w.lines().all(|l| l.chars().count() <= 20), "{w}");
        assert_eq!(w.split_whitespace().collect::<Vec<_>>().join(" "), text);
        assert_eq!(super::wrap(text, None), text);
        let w = super::wrap_indented(text, Some(24), 4);
        assert!(w.lines().skip(1).all(|l| l.starts_with("    ")), "{w}");
    }

    #[test]
    fn sha256_of_the_fips_example() {
        // FIPS 180-4 / NIST example "abc".
        assert_eq!(
            super::sha256_hex(b"abc"),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad"
        );
    }
}
