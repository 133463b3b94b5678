//! The board problem as plain data: the parts a board may use and, per channel, the
//! designs it may be built with, each described only by what it consumes.
//!
//! These types are deliberately independent of the ranking engine: whoever produces the
//! candidates (the ranking engine, a test, a script) fills them in. This file validates
//! them and owns the error type; it must not solve anything.

use thiserror::Error;

use crate::model::{Catalog, Polarity, ResistorClass, TransistorClass};

/// What the integer program needs to know about one transistor class.
#[derive(Debug, Clone, PartialEq)]
pub struct TransistorPart {
    pub id: String,
    pub polarity: Polarity,
    /// 1 for a single, 2 for a dual, 4 or 5 for an array.
    pub devices_per_package: u32,
    /// Package name, for the BOM (e.g. SOT-363).
    pub package: String,
    /// Cost of one package.
    pub unit_cost: f64,
}

impl From<&TransistorClass> for TransistorPart {
    fn from(c: &TransistorClass) -> Self {
        TransistorPart {
            id: c.id.clone(),
            polarity: c.polarity,
            devices_per_package: c.devices_per_package,
            package: c.package.clone(),
            unit_cost: c.unit_cost,
        }
    }
}

/// What the integer program needs to know about one resistor class (its grade).
#[derive(Debug, Clone, PartialEq)]
pub struct ResistorPart {
    pub id: String,
    /// Tolerance as a fraction (0.01 = 1 %), shown as the grade on the BOM.
    pub tolerance: f64,
    /// Cost of one resistor, whatever its value.
    pub unit_cost: f64,
}

impl From<&ResistorClass> for ResistorPart {
    fn from(c: &ResistorClass) -> Self {
        ResistorPart {
            id: c.id.clone(),
            tolerance: c.tolerance,
            unit_cost: c.unit_cost,
        }
    }
}

/// `count` resistors of one class and value in one copy of a design.
#[derive(Debug, Clone, PartialEq)]
pub struct ResistorUse {
    pub class: String,
    pub value_ohm: f64,
    pub count: u32,
}

/// One feasible design for a channel, described by what one copy of it consumes.
#[derive(Debug, Clone, PartialEq)]
pub struct DesignUsage {
    /// Short human description, e.g. `wilson, npn-quad-array, RE 100 Ω`.
    pub label: String,
    /// Topology name, for the assignment table.
    pub topology: String,
    /// Transistor class of the matched pairs.
    pub pair_class: String,
    /// Matched pairs per copy (1, or 2 for the four-transistor topologies). Both devices
    /// of a pair sit in one package of `pair_class` (a pair split across two packages is
    /// not matched); a single-device class makes a "pair" of two separate singles.
    pub pairs: u32,
    /// Devices of the pair class per copy: `2 * pairs` for one output; the input side
    /// and every output's devices for a multi-output or area-ratio form (`model::fanout`).
    pub matched_devices: u32,
    /// Unmatched extra transistors per copy (the beta helper's or the Wilson's Q3).
    pub helpers: u32,
    /// The single-device class a helper is bought as when no spare device of its
    /// polarity is free. Required when `helpers > 0`; it must have the pair class's
    /// polarity, as every topology's helper does (MODEL.md).
    pub helper_single_class: Option<String>,
    /// Classes whose spare devices may take a loose helper instead of a single: those
    /// the ranking checked the helper's ratings with. `None` means any class of the
    /// helper's polarity.
    pub helper_spare_classes: Option<Vec<String>>,
    /// The copy was verified with its whole topology in one package when the pair class
    /// has room (MODEL.md, "packages"); keep it that way. When false, the pairs of a
    /// copy may sit in different packages and its helpers anywhere.
    pub keep_together: bool,
    pub resistors: Vec<ResistorUse>,
    /// The programming resistor (class, value, count 1), which `resistors` also counts
    /// (merged with an emitter resistor of the same class and value): for display, so
    /// the assignment can name it apart from the emitter resistors.
    pub r_ref: Option<ResistorUse>,
    /// The check with the smallest margin, and that margin, from the ranking.
    pub governing_check: String,
    pub governing_margin: f64,
}

pub use crate::model::MAX_COPIES;

/// One channel of the board: `count` identical copies, all built with the same design.
#[derive(Debug, Clone, PartialEq)]
pub struct ChannelOptions {
    pub name: String,
    pub count: u32,
    /// Feasible designs (any order). Empty when the ranking found none.
    pub options: Vec<DesignUsage>,
    /// Why there is no option (e.g. the check that rejected the best candidate), shown
    /// when `options` is empty.
    pub no_candidate_reason: Option<String>,
}

/// The whole board.
#[derive(Debug, Clone, PartialEq)]
pub struct BoardProblem {
    pub board: String,
    /// Boards in one build (one production run).
    pub boards: u32,
    /// Fixed cost of each distinct line item, once per build.
    pub line_item_cost: f64,
    pub max_line_items: Option<u32>,
    pub currency: String,
    pub transistors: Vec<TransistorPart>,
    pub resistors: Vec<ResistorPart>,
    pub channels: Vec<ChannelOptions>,
}

/// The board problem could not be worked on: bad input or a solver failure. An
/// infeasible board is not an error but an outcome (`BomOutcome::Infeasible`).
#[derive(Debug, Error, Clone, PartialEq)]
pub enum BomError {
    #[error(
        "channel `{channel}`, option {option} (`{label}`): unknown transistor class `{class}`"
    )]
    UnknownTransistorClass {
        channel: String,
        option: usize,
        label: String,
        class: String,
    },
    #[error("channel `{channel}`, option {option} (`{label}`): unknown resistor class `{class}`")]
    UnknownResistorClass {
        channel: String,
        option: usize,
        label: String,
        class: String,
    },
    #[error("channel `{channel}`, option {option} (`{label}`): {reason}")]
    InvalidOption {
        channel: String,
        option: usize,
        label: String,
        reason: String,
    },
    #[error("{0}")]
    InvalidProblem(String),
    #[error("the integer program solver failed: {0}")]
    Solver(String),
}

fn finite_non_negative(x: f64) -> bool {
    x.is_finite() && x >= 0.0
}

impl BoardProblem {
    /// Every transistor and resistor class of a catalog, in the form the program needs.
    pub fn parts_from(catalog: &Catalog) -> (Vec<TransistorPart>, Vec<ResistorPart>) {
        (
            catalog
                .transistors
                .iter()
                .map(TransistorPart::from)
                .collect(),
            catalog.resistors.iter().map(ResistorPart::from).collect(),
        )
    }

    /// Reject what the integer program cannot represent, naming the culprit.
    pub(crate) fn validate(&self) -> Result<(), BomError> {
        let bad = |s: String| Err(BomError::InvalidProblem(s));
        if self.boards == 0 {
            return bad("`boards` must be at least 1".into());
        }
        if !finite_non_negative(self.line_item_cost) {
            return bad(format!(
                "`line_item_cost` must be a finite number >= 0, not {}",
                self.line_item_cost
            ));
        }
        let mut seen = std::collections::HashSet::new();
        for t in &self.transistors {
            if !seen.insert(t.id.as_str()) {
                return bad(format!("transistor class `{}` is listed twice", t.id));
            }
            if t.devices_per_package == 0 {
                return bad(format!(
                    "transistor class `{}`: devices per package must be at least 1",
                    t.id
                ));
            }
            if !finite_non_negative(t.unit_cost) {
                return bad(format!(
                    "transistor class `{}`: unit cost must be a finite number >= 0",
                    t.id
                ));
            }
        }
        let mut seen = std::collections::HashSet::new();
        for r in &self.resistors {
            if !seen.insert(r.id.as_str()) {
                return bad(format!("resistor class `{}` is listed twice", r.id));
            }
            if !finite_non_negative(r.unit_cost) {
                return bad(format!(
                    "resistor class `{}`: unit cost must be a finite number >= 0",
                    r.id
                ));
            }
        }
        let mut seen = std::collections::HashSet::new();
        for ch in &self.channels {
            if !seen.insert(ch.name.as_str()) {
                return bad(format!("channel `{}` is listed twice", ch.name));
            }
            if ch.count == 0 || ch.count > MAX_COPIES {
                return bad(format!(
                    "channel `{}`: count must be from 1 to {MAX_COPIES}, not {}",
                    ch.name, ch.count
                ));
            }
            for (k, o) in ch.options.iter().enumerate() {
                self.validate_option(ch, k, o)?;
            }
        }
        Ok(())
    }

    fn validate_option(
        &self,
        ch: &ChannelOptions,
        k: usize,
        o: &DesignUsage,
    ) -> Result<(), BomError> {
        let invalid = |reason: String| {
            Err(BomError::InvalidOption {
                channel: ch.name.clone(),
                option: k,
                label: o.label.clone(),
                reason,
            })
        };
        let unknown_t = |class: &str| BomError::UnknownTransistorClass {
            channel: ch.name.clone(),
            option: k,
            label: o.label.clone(),
            class: class.to_string(),
        };
        self.transistor(&o.pair_class)
            .ok_or_else(|| unknown_t(&o.pair_class))?;
        if o.pairs == 0 {
            return invalid("a mirror needs at least one matched pair".into());
        }
        if o.pairs > 4 || o.helpers > 4 {
            return invalid(format!(
                "{} pairs and {} helpers per copy is more than any mirror topology uses (at most 4 of each)",
                o.pairs, o.helpers
            ));
        }
        if o.matched_devices < 2 * o.pairs
            || o.matched_devices > crate::model::fanout::MAX_FORM_TRANSISTORS as u32
        {
            return invalid(format!(
                "{} matched devices for {} pairs per copy; expected 2 per pair up to {}",
                o.matched_devices,
                o.pairs,
                crate::model::fanout::MAX_FORM_TRANSISTORS
            ));
        }
        match (&o.helper_single_class, o.helpers) {
            (None, h) if h > 0 => {
                return invalid("helpers need a `helper_single_class`".into());
            }
            (Some(id), _) => {
                let h = self.transistor(id).ok_or_else(|| unknown_t(id))?;
                let pair_polarity = self
                    .transistor(&o.pair_class)
                    .map(|t| t.polarity)
                    .unwrap_or(h.polarity);
                if h.polarity != pair_polarity {
                    return invalid(format!(
                        "helper class `{id}` is {} but the pair class `{}` is {}; in every topology the helper has the pair's polarity",
                        h.polarity.as_str().to_uppercase(),
                        o.pair_class,
                        pair_polarity.as_str().to_uppercase()
                    ));
                }
                if h.devices_per_package != 1 {
                    return invalid(format!(
                        "helper class `{id}` has {} devices per package; a helper bought on its own must be a single",
                        h.devices_per_package
                    ));
                }
            }
            _ => {}
        }
        for id in o.helper_spare_classes.iter().flatten() {
            let c = self.transistor(id).ok_or_else(|| unknown_t(id))?;
            let pair_polarity = self.transistor(&o.pair_class).map(|t| t.polarity);
            if Some(c.polarity) != pair_polarity {
                return invalid(format!(
                    "helper spare class `{id}` has the wrong polarity for a helper of this design"
                ));
            }
        }
        for r in &o.resistors {
            if self.resistor(&r.class).is_none() {
                return Err(BomError::UnknownResistorClass {
                    channel: ch.name.clone(),
                    option: k,
                    label: o.label.clone(),
                    class: r.class.clone(),
                });
            }
            if !(r.value_ohm.is_finite() && r.value_ohm > 0.0) {
                return invalid(format!(
                    "resistor value {} ohm: expected a finite value above 0 (leave 0-ohm links out)",
                    r.value_ohm
                ));
            }
            if r.count == 0 {
                return invalid("a resistor use with count 0".into());
            }
        }
        Ok(())
    }

    pub(crate) fn transistor(&self, id: &str) -> Option<&TransistorPart> {
        self.transistors.iter().find(|t| t.id == id)
    }

    pub(crate) fn resistor(&self, id: &str) -> Option<&ResistorPart> {
        self.resistors.iter().find(|r| r.id == id)
    }
}
