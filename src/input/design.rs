//! The board design file: the channels of one board and the rules of its bill of
//! materials.
//!
//! ```yaml
//! name: synth voice board
//! boards: 500                 # boards per build
//! catalog: parts.yaml         # optional, relative to this file
//! line_item_cost: 25          # optional, per distinct part per build (default 0)
//! max_line_items: 6           # optional
//! allow: [npn-dual-general]   # optional: topologies or class ids, board-wide
//! deny: [thin-film-0p1pct]    # optional
//! channels:
//!   - name: expo core
//!     count: 1                # optional: default the requirement's `quantity`
//!     requirement: expo-converter-sink.yaml   # relative to this file
//!   - name: tail
//!     requirement: { name: tail, kind: sink, ... }   # or inline
//! ```
//!
//! Reading happens in two steps because the catalog is named by the design: [`load_design`]
//! checks the design's own fields and reads the included requirement files (a file that
//! cannot be read is an error at its `requirement:` line); [`DesignDraft::finish`] then
//! validates every requirement and the `allow`/`deny` names against the catalog. Errors
//! inside an included requirement name that file; errors inside an inline requirement
//! point into the design file.

use std::path::{Path, PathBuf};

use super::raw::{RawDesign, RawRequirementSource};
use super::requirement::{load_requirement, validate_requirement};
use super::{deserialize, unknown_value, Ctx, InputError};
use crate::model::{BoardDesign, Catalog, DesignChannel, Filters, Topology, ALL_TOPOLOGIES};
use crate::units::{Dimension as D, Field};

/// Plausible range of `line_item_cost` (catalog currency per line item per build).
const LINE_ITEM_COST: Field = Field::new("a line-item cost", D::Number, 0.0, 1e6);
/// Most boards per build accepted (a typo guard, not a physical limit).
const MAX_BOARDS: u32 = 10_000_000;
use crate::model::MAX_COPIES;

/// A design file read and checked on its own, waiting for its catalog.
#[derive(Debug)]
pub struct DesignDraft {
    file: String,
    text: String,
    raw: RawDesign,
    catalog: Option<PathBuf>,
    /// The catalog file the design names, read: (name for messages, text).
    catalog_text: Option<(String, String)>,
    /// Per channel: the included requirement file (name for messages, text), or `None`
    /// for an inline requirement.
    included: Vec<Option<(String, String)>>,
}

/// Read a design file. `file` is its name as the user gave it; relative paths inside it
/// (requirements, catalog) are taken from `base_dir`, the directory holding it.
pub fn load_design(file: &str, text: &str, base_dir: &Path) -> Result<DesignDraft, InputError> {
    let raw: RawDesign = deserialize(
        file,
        text,
        "a board design with `name`, `boards` and `channels`",
    )?;
    let cx = Ctx::new(file, text);
    cx.name("name", &raw.name, "board name")?;
    if raw.boards == 0 || raw.boards > MAX_BOARDS {
        return Err(cx.invalid(
            "boards",
            format!("{} boards per build", raw.boards),
            format!("a whole number from 1 to {MAX_BOARDS}"),
        ));
    }
    if let Some(c) = &raw.line_item_cost {
        cx.qty("line_item_cost", c, &LINE_ITEM_COST)?;
    }
    if raw.max_line_items == Some(0) {
        return Err(cx.invalid(
            "max_line_items",
            "a limit of 0 line items",
            "1 or more (or leave the field out for no limit)",
        ));
    }
    if raw.channels.is_empty() {
        return Err(cx.invalid(
            "channels",
            "the board has no channel",
            "at least one channel with `name` and `requirement`",
        ));
    }
    let catalog = match &raw.catalog {
        Some(c) if c.trim().is_empty() => {
            return Err(cx.invalid(
                "catalog",
                "the catalog path is empty",
                "a catalog file path relative to the design file, or no `catalog` field",
            ))
        }
        Some(c) => Some(base_dir.join(c.trim())),
        None => None,
    };
    // Read the catalog now, so a missing one is reported at the design's `catalog:` line.
    let catalog_text = match &catalog {
        Some(path) => Some(read_named(
            &cx,
            "catalog",
            path,
            "a path to a catalog file, relative to the design file",
        )?),
        None => None,
    };
    let mut included = Vec::with_capacity(raw.channels.len());
    let mut first_named = std::collections::HashMap::new();
    for (i, ch) in raw.channels.iter().enumerate() {
        let at = |f: &str| format!("channels[{i}].{f}");
        cx.name(&at("name"), &ch.name, "channel name")?;
        if let Some(&first) = first_named.get(ch.name.trim()) {
            return Err(cx.invalid(
                &at("name"),
                format!(
                    "channel `{}` is named twice (first as channel {})",
                    crate::text::shown(ch.name.trim()),
                    first + 1
                ),
                "a distinct name for every channel",
            ));
        }
        first_named.insert(ch.name.trim(), i);
        match ch.count {
            Some(0) => {
                return Err(cx.invalid(
                    &at("count"),
                    "a count of 0 copies",
                    "1 or more identical copies (or no `count`: the requirement's `quantity`)",
                ))
            }
            Some(n) if n > MAX_COPIES => {
                return Err(cx.invalid(
                    &at("count"),
                    format!("a count of {n} copies"),
                    format!("1 to {MAX_COPIES} identical copies of one channel per board"),
                ))
            }
            _ => {}
        }
        included.push(match &ch.requirement {
            RawRequirementSource::Inline(_) => None,
            RawRequirementSource::Path(p) => {
                let path = base_dir.join(p.trim());
                Some(read_named(
                    &cx,
                    &at("requirement"),
                    &path,
                    "a path to a requirement file, relative to the design file",
                )?)
            }
        });
    }
    Ok(DesignDraft {
        file: file.to_string(),
        text: text.to_string(),
        raw,
        catalog,
        catalog_text,
        included,
    })
}

/// Read a file the design names at `path_in_design`: (its name, its text). A file that
/// cannot be opened is an error at that line of the design; a file that is too large or
/// not UTF-8 is an error in the file itself.
fn read_named(
    cx: &Ctx,
    path_in_design: &str,
    path: &Path,
    expected: &str,
) -> Result<(String, String), InputError> {
    let name = path.display().to_string();
    match super::read_text(path, &name) {
        Ok(text) => Ok((name, text)),
        Err(super::ReadError::Input(e)) => Err(e),
        Err(super::ReadError::Io(e)) => Err(cx.invalid(
            path_in_design,
            format!(
                "cannot read the {} file `{}`: {e}",
                path_in_design.rsplit('.').next().unwrap_or(path_in_design),
                crate::text::shown(&name)
            ),
            expected,
        )),
    }
}

impl DesignDraft {
    /// The catalog the design names (already joined to the design file's directory).
    pub fn catalog_path(&self) -> Option<&Path> {
        self.catalog.as_deref()
    }

    /// The catalog the design names, as read by [`load_design`]: (name, text).
    pub fn catalog_text(&self) -> Option<(&str, &str)> {
        self.catalog_text
            .as_ref()
            .map(|(n, t)| (n.as_str(), t.as_str()))
    }

    /// Validate every requirement and the `allow`/`deny` names against `catalog`.
    pub fn finish(&self, catalog: &Catalog) -> Result<BoardDesign, InputError> {
        let cx = Ctx::new(&self.file, &self.text);
        let raw = &self.raw;
        let mut channels = Vec::with_capacity(raw.channels.len());
        for (i, (ch, inc)) in raw.channels.iter().zip(&self.included).enumerate() {
            let (requirement, source) = match (&ch.requirement, inc) {
                (_, Some((name, text))) => {
                    (load_requirement(name, text, Some(catalog))?, name.clone())
                }
                (RawRequirementSource::Inline(r), None) => {
                    let nested = cx.nested(format!("channels[{i}].requirement."));
                    (
                        validate_requirement(r, &nested, Some(catalog))?,
                        "inline".to_string(),
                    )
                }
                (RawRequirementSource::Path(_), None) => {
                    unreachable!("load_design reads every included requirement")
                }
            };
            if ch.count.is_none() && requirement.quantity > MAX_COPIES {
                return Err(cx.invalid(
                    &format!("channels[{i}].requirement"),
                    format!(
                        "the channel has no `count`, so it takes the requirement's `quantity`, {} copies",
                        requirement.quantity
                    ),
                    format!("1 to {MAX_COPIES} copies per board: give the channel a `count`"),
                ));
            }
            channels.push(DesignChannel {
                name: ch.name.trim().to_string(),
                count: ch.count.unwrap_or(requirement.quantity),
                requirement,
                source,
            });
        }
        let mut topologies = Filters::default();
        let mut classes = Filters::default();
        for (key, names, is_allow) in [("allow", &raw.allow, true), ("deny", &raw.deny, false)] {
            for (i, n) in names.iter().enumerate() {
                let path = format!("{key}[{i}]");
                let filters = if Topology::from_name(n).is_some() {
                    &mut topologies
                } else if catalog.transistor(n).is_some() || catalog.resistor(n).is_some() {
                    &mut classes
                } else {
                    let mut expected: Vec<String> = ALL_TOPOLOGIES
                        .iter()
                        .map(|t| t.name().to_string())
                        .collect();
                    expected.extend(catalog.transistors.iter().map(|t| t.id.clone()));
                    expected.extend(catalog.resistors.iter().map(|r| r.id.clone()));
                    return Err(cx.error(&path, unknown_value(&path, n, &expected)));
                };
                if is_allow {
                    filters.allow.push(n.clone());
                } else {
                    filters.deny.push(n.clone());
                }
            }
        }
        let line_item_cost = match &raw.line_item_cost {
            Some(c) => cx.qty("line_item_cost", c, &LINE_ITEM_COST)?,
            None => 0.0,
        };
        Ok(BoardDesign {
            name: raw.name.trim().to_string(),
            boards: raw.boards,
            line_item_cost,
            max_line_items: raw.max_line_items,
            topologies,
            classes,
            channels,
        })
    }
}
