//! A board design: the channels (current sinks and sources) one board carries, how many
//! boards a build makes, and the board-wide rules for the bill of materials.
//!
//! Plain validated data, produced by `input/` from a design file; this module must not
//! parse files or print.

use super::{Filters, Requirement};

/// One channel: `count` identical copies of a mirror meeting `requirement`.
#[derive(Debug, Clone, PartialEq)]
pub struct DesignChannel {
    pub name: String,
    pub count: u32,
    pub requirement: Requirement,
    /// Where the requirement came from: the file name, or `inline` — for messages.
    pub source: String,
}

#[derive(Debug, Clone, PartialEq)]
pub struct BoardDesign {
    pub name: String,
    /// Boards in one build.
    pub boards: u32,
    /// Fixed cost of each distinct line item, once per build (catalog currency).
    pub line_item_cost: f64,
    pub max_line_items: Option<u32>,
    /// Board-wide topology filter, applied on top of each channel's own.
    pub topologies: Filters,
    /// Board-wide class filter (transistor and resistor class ids), applied on top of
    /// each channel's own.
    pub classes: Filters,
    pub channels: Vec<DesignChannel>,
}
