//! The content of the decision page, independent of its format.
//!
//! The HTML and Markdown renderers both print one `Page`, so the two forms carry the
//! same content by construction. A `Page` is assembled from finished results (the
//! ranking report, the curves, the provenance); it holds display text plus the raw SI
//! numbers behind each figure, so a reader program can check the page against the JSON.

use super::eng::percent;
use super::plot::BudgetBar;

/// One figure of a design: a JSON key, a label, the raw value and its display text.
#[derive(Debug, Clone, PartialEq)]
pub struct Figure {
    /// The key of the same figure in `rank --format json`.
    pub key: String,
    pub label: String,
    /// The raw value as the JSON writes it (SI units), or `None` for text figures.
    pub raw: Option<f64>,
    pub text: String,
}

/// One check of a design, formatted.
#[derive(Debug, Clone, PartialEq)]
pub struct CheckRow {
    pub name: String,
    pub value: String,
    pub limit: String,
    /// Relative margin (positive = inside the limit).
    pub margin: f64,
    pub pass: bool,
}

/// A design as the page shows it.
#[derive(Debug, Clone, PartialEq)]
pub struct DesignView {
    pub rank: Option<usize>,
    /// A one-line description: topology, part, resistors.
    pub title: String,
    pub figures: Vec<Figure>,
    pub checks: Vec<CheckRow>,
    pub governing_check: String,
    pub governing_margin: f64,
    pub cost: String,
    /// Total error (systematic + k sigma), formatted.
    pub total_error: String,
}

/// The nearest miss: a cheaper design than the chosen one that fails (any design when
/// nothing passes), and the check it fails by most.
#[derive(Debug, Clone, PartialEq)]
pub struct Rejected {
    pub design: DesignView,
    pub check: String,
    /// The (negative) margin it missed by.
    pub margin: f64,
    /// One sentence in engineering terms: what it saves and what it needs against what
    /// the requirement allows.
    pub headline: String,
}

/// A plot, as standalone SVG text.
#[derive(Debug, Clone, PartialEq)]
pub struct Plot {
    /// A short file-name-safe id (`curves`, `budget`), used for Markdown's side files.
    pub id: String,
    pub title: String,
    pub svg: String,
    /// One sentence on how to read it.
    pub caption: String,
}

/// A plain table: header and rows of display text.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Table {
    pub header: Vec<String>,
    pub rows: Vec<Vec<String>>,
}

/// Everything on the page, in display order.
#[derive(Debug, Clone, PartialEq)]
pub struct Page {
    /// The requirement's name (user text).
    pub title: String,
    /// One sentence stating the outcome.
    pub verdict: String,
    pub feasible: bool,
    pub requirement: Vec<(String, String)>,
    /// The chosen design's parts with their designators (empty when none was chosen).
    pub parts: Table,
    /// The chosen design's schematic as a standalone, titled SVG file.
    pub schematic_file: Option<String>,
    pub chosen: Option<DesignView>,
    pub runners_up: Vec<DesignView>,
    /// The candidate space and feasible count in words ("at least" where the search did
    /// not verify every candidate), the same numbers `rank` gives.
    pub counts: String,
    pub rejected_by: Vec<(String, usize)>,
    pub best_rejected: Option<Rejected>,
    /// What to relax when nothing passes (`rank`'s `relax`, as sentences); empty when a
    /// design was chosen.
    pub relax: Vec<String>,
    pub budget: Vec<BudgetBar>,
    pub budget_table: Table,
    pub plots: Vec<Plot>,
    pub corners: Table,
    pub assumptions: Vec<(String, String)>,
    pub cautions: Vec<String>,
}

impl Page {
    /// The runners-up as a table (the same rows in every format).
    pub fn runners_up_table(&self) -> Table {
        Table {
            header: [
                "rank",
                "design",
                "cost",
                "total error",
                "governing check",
                "margin",
            ]
            .map(String::from)
            .to_vec(),
            rows: self
                .runners_up
                .iter()
                .map(|d| {
                    vec![
                        d.rank.map(|r| r.to_string()).unwrap_or_default(),
                        d.title.clone(),
                        d.cost.clone(),
                        d.total_error.clone(),
                        d.governing_check.clone(),
                        percent(d.governing_margin),
                    ]
                })
                .collect(),
        }
    }

    /// Rejection counts by the first check each rejected design failed.
    pub fn rejected_by_table(&self) -> Table {
        Table {
            header: vec!["check".into(), "designs rejected".into()],
            rows: self
                .rejected_by
                .iter()
                .map(|(c, n)| vec![c.clone(), n.to_string()])
                .collect(),
        }
    }
}
