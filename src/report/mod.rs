//! Output: finished results -> table, JSON or CSV, written to any `io::Write`.
//!
//! Tables use engineering notation (4.70 kΩ); JSON and CSV carry plain SI numbers with the
//! unit in the field or column name (`vaf_v`). A CSV header and its rows come from one
//! column list. This module must not read files or decide exit codes.

pub mod catalog;
pub mod csv;

use comfy_table::{presets, Attribute, Cell, ContentArrangement, Table};

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
