//! A board design: the channels (current sinks and sources) one board carries, how many
//! boards a build makes, and the board-wide rules for the bill of materials.
//!
//! Plain validated data, produced by `input/` from a design file; this module must not
//! parse files or print.

/// Most identical copies of one channel on a board (`count`, or the requirement's
/// `quantity` when a channel gives none). Counts are numbers in the board's integer
/// program, but the plan names the package and device of every copy, so its size grows
/// with the count; ten thousand copies of one mirror on one board is beyond any real
/// board (a typo guard, not a physical limit).
pub const MAX_COPIES: u32 = 10_000;

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
