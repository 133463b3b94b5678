//! Writers for a finished [`BoardPlan`]: a human table, JSON and the BOM as CSV. Each is
//! a pure function from the plan into any `io::Write`; none of them computes anything
//! the plan does not already hold.
//!
//! JSON wire format (`schema_version` 1), plain SI numbers, costs in `currency`:
//! `{ schema_version, board, boards, currency, line_item_cost, max_line_items,
//!    bom: [{ line, kind: "transistor"|"resistor", class, package, devices_per_package,
//!            polarity, value_ohm, tolerance, qty_per_board, qty_per_build, unit_cost,
//!            extended_cost }],
//!    channels: [{ channel, count, option, label, topology, pair_class, helper_class,
//!                 resistors: [{ class, value_ohm, count }], governing_check,
//!                 governing_margin, copies: [{ copy, matched: ["Q1A", ...],
//!                 helpers: [...], resistors: ["R1", ...] }] }],
//!    parts_cost_per_board, parts_cost_per_build, line_items_cost, total_cost,
//!    baseline: { options, parts_cost_per_board, line_items, total_cost,
//!                within_line_item_limit }, saving,
//!    shared_packages: [{ designator, occupants: ["channel#copy", ...] }] }`.
//! Fields that do not apply to a line kind are `null`.
//!
//! Resistor designators are numbered across the board as the packages are (IEEE 315
//! class letter R): channel by channel, copy by copy, each copy's resistors in the order
//! of its `resistors` entries (emitter resistors RE1, RE2, then the programming
//! resistor: the netlist order of `check::refdes`), so a board's first channel, with one
//! copy, carries the resistor designators of the design's own schematic, report and SPICE
//! deck (its transistors do too when its packages are numbered first).

use std::io::{self, Write};

use comfy_table::{presets::UTF8_FULL_CONDENSED, Cell, CellAlignment, Table};
use serde::Serialize;

use super::plan::{BoardPlan, BomItem, BomLine, ChannelAssignment, DeviceSlot};
use super::problem::ResistorUse;
use crate::report::{fit_width, Style};

/// Resistance in engineering notation (`4.70 kΩ`); three significant figures show every
/// E96 value and below exactly.
fn ohms(v: f64) -> String {
    crate::units::format_quantity(v, crate::units::Dimension::Resistance)
}

fn slot(s: &DeviceSlot) -> String {
    s.reference.clone()
}

fn slots(v: &[DeviceSlot]) -> String {
    v.iter().map(slot).collect::<Vec<_>>().join(" ")
}

/// Board-wide resistor designators: per channel, per copy, `R1`, `R2`, ... (module docs).
pub fn resistor_designators(plan: &BoardPlan) -> Vec<Vec<Vec<String>>> {
    let mut n = 0;
    plan.channels
        .iter()
        .map(|a| {
            a.copies
                .iter()
                .map(|_| {
                    a.resistors
                        .iter()
                        .flat_map(|r| 0..r.count)
                        .map(|_| {
                            n += 1;
                            format!("R{n}")
                        })
                        .collect()
                })
                .collect()
        })
        .collect()
}

fn item_name(l: &BomLine) -> (String, String) {
    match &l.item {
        BomItem::Transistor {
            class,
            package,
            devices_per_package,
            polarity,
        } => (
            class.clone(),
            format!(
                "{} {}, {} device{} per package",
                polarity.as_str().to_uppercase(),
                package,
                devices_per_package,
                if *devices_per_package == 1 { "" } else { "s" }
            ),
        ),
        BomItem::Resistor {
            class,
            value_ohm,
            tolerance,
        } => (
            class.clone(),
            format!("{}, {}", ohms(*value_ohm), percent(*tolerance)),
        ),
    }
}

fn percent(tol: f64) -> String {
    let p = tol * 100.0;
    if (p - p.round()).abs() < 1e-9 {
        format!("{p:.0} %")
    } else {
        format!("{p} %")
    }
}

/// The plan as tables for a person: BOM, assignment, totals. Cautions are written apart
/// by [`write_cautions`].
pub fn write_table(plan: &BoardPlan, out: &mut dyn Write) -> io::Result<()> {
    write_table_styled(plan, Style::default(), out)
}

/// The table within `style.width` (cells wrap); the assignment shows the design in one
/// cell unless `style.wide`.
pub fn write_table_styled(plan: &BoardPlan, style: Style, out: &mut dyn Write) -> io::Result<()> {
    let cur = &plan.currency;
    writeln!(
        out,
        "Board `{}`: {} board{} per build",
        plan.board,
        plan.boards,
        if plan.boards == 1 { "" } else { "s" }
    )?;
    let mut bom = Table::new();
    fit_width(&mut bom, style);
    bom.load_preset(UTF8_FULL_CONDENSED).set_header(vec![
        "line",
        "class",
        "value / description",
        "qty per board",
        "qty per build",
        &format!("unit cost ({cur})"),
        &format!("extended ({cur})"),
    ]);
    for l in &plan.bom {
        let (class, what) = item_name(l);
        bom.add_row(vec![
            Cell::new(l.line).set_alignment(CellAlignment::Right),
            Cell::new(class),
            Cell::new(what),
            Cell::new(l.qty_per_board).set_alignment(CellAlignment::Right),
            Cell::new(l.qty_per_build).set_alignment(CellAlignment::Right),
            Cell::new(format!("{:.4}", l.unit_cost)).set_alignment(CellAlignment::Right),
            Cell::new(format!("{:.2}", l.extended_cost)).set_alignment(CellAlignment::Right),
        ]);
    }
    writeln!(out, "{bom}")?;

    let mut asg = Table::new();
    fit_width(&mut asg, style);
    let header = if style.wide {
        vec![
            "channel",
            "copies",
            "topology",
            "pair class",
            "helper single",
            "R_E",
            "R_ref",
            "devices (designators)",
            "governing check",
            "margin",
        ]
    } else {
        vec![
            "channel",
            "copies",
            "design",
            "devices (designators)",
            "governing check",
            "margin",
        ]
    };
    asg.load_preset(UTF8_FULL_CONDENSED).set_header(header);
    let res_refs = resistor_designators(plan);
    for (k, a) in plan.channels.iter().enumerate() {
        let (emitter, r_ref) = emitter_and_ref(a);
        let re = emitter
            .iter()
            .map(|r| {
                let n = if r.count > 1 {
                    format!("{} x ", r.count)
                } else {
                    String::new()
                };
                format!("{n}{} {}", ohms(r.value_ohm), r.class)
            })
            .collect::<Vec<_>>()
            .join(", ");
        let places = a
            .copies
            .iter()
            .enumerate()
            .map(|(j, c)| {
                let mut s = format!("#{}: {}", c.copy, slots(&c.matched));
                if !c.helpers.is_empty() {
                    s.push_str(&format!(" + helper {}", slots(&c.helpers)));
                }
                let r = &res_refs[k][j];
                if !r.is_empty() {
                    s.push_str(&format!(", {}", r.join(" ")));
                }
                s
            })
            .collect::<Vec<_>>()
            .join("\n");
        let mut design = vec![
            Cell::new(&a.topology),
            Cell::new(&a.pair_class),
            Cell::new(a.helper_class.as_deref().unwrap_or("-")),
            Cell::new(if re.is_empty() {
                "-".to_string()
            } else {
                re.clone()
            }),
            Cell::new(r_ref.as_deref().unwrap_or("-")),
        ];
        if !style.wide {
            let mut d = format!("{} {}", a.topology, a.pair_class);
            if let Some(h) = &a.helper_class {
                d.push_str(&format!(" + {h} helper"));
            }
            d.push_str(&if re.is_empty() {
                ", no RE".to_string()
            } else {
                format!(", RE {re}")
            });
            if let Some(r) = &r_ref {
                d.push_str(&format!(", R_ref {r}"));
            }
            design = vec![Cell::new(d)];
        }
        let mut row = vec![
            Cell::new(&a.channel),
            Cell::new(a.count).set_alignment(CellAlignment::Right),
        ];
        row.extend(design);
        row.extend([
            Cell::new(places),
            Cell::new(&a.governing_check),
            Cell::new(format!("{:.1} %", a.governing_margin * 100.0))
                .set_alignment(CellAlignment::Right),
        ]);
        asg.add_row(row);
    }
    writeln!(out, "{asg}")?;

    writeln!(
        out,
        "Parts: {:.2} {cur} per board, {:.2} {cur} per build",
        plan.parts_cost_per_board, plan.parts_cost_per_build
    )?;
    writeln!(
        out,
        "Line items: {} x {:.2} {cur} = {:.2} {cur}{}",
        plan.bom.len(),
        plan.line_item_cost,
        plan.line_items_cost,
        match plan.max_line_items {
            Some(l) => format!(" (limit {l})"),
            None => String::new(),
        }
    )?;
    writeln!(out, "Total per build: {:.2} {cur}", plan.total_cost)?;
    let b = &plan.baseline;
    writeln!(
        out,
        "Each channel's cheapest design on its own, no shared packages: {:.2} {cur} ({} line items{}); saving {:.2} {cur}",
        b.total_cost,
        b.line_items,
        if b.within_line_item_limit {
            ""
        } else {
            ", over the limit"
        },
        plan.saving()
    )?;
    Ok(())
}

/// A channel's emitter resistors (its `resistors` without the programming resistor, which
/// may share an entry with an emitter resistor of the same class and value) and the
/// programming resistor as a cell text (`2.74 kΩ thin-film-0p1pct`).
fn emitter_and_ref(a: &ChannelAssignment) -> (Vec<ResistorUse>, Option<String>) {
    let mut emitter = a.resistors.clone();
    if let Some(r) = &a.r_ref {
        if let Some(i) = emitter
            .iter()
            .position(|e| e.class == r.class && e.value_ohm == r.value_ohm)
        {
            emitter[i].count = emitter[i].count.saturating_sub(r.count);
            if emitter[i].count == 0 {
                emitter.remove(i);
            }
        }
    }
    let r_ref = a
        .r_ref
        .as_ref()
        .map(|r| format!("{} {}", ohms(r.value_ohm), r.class));
    (emitter, r_ref)
}

/// Cautions about a plan, one per line (for stderr, beside whichever format goes to
/// stdout): packages shared between copies, whose mutual heating no check covered.
pub fn write_cautions(plan: &BoardPlan, out: &mut dyn Write) -> io::Result<()> {
    for s in &plan.shared_packages {
        let who = s
            .occupants
            .iter()
            .map(|&(c, copy)| format!("{} #{copy}", plan.channels[c].channel))
            .collect::<Vec<_>>()
            .join(", ");
        writeln!(
            out,
            "Caution: {} is shared by {who}; their mutual heating was not part of any single channel's check. Catalog values are typical, not guaranteed: confirm with the datasheet.",
            s.designator
        )?;
    }
    Ok(())
}

#[derive(Serialize)]
struct JsonBomLine<'a> {
    line: u32,
    kind: &'static str,
    class: &'a str,
    package: Option<&'a str>,
    devices_per_package: Option<u32>,
    polarity: Option<&'static str>,
    value_ohm: Option<f64>,
    tolerance: Option<f64>,
    qty_per_board: u32,
    qty_per_build: u64,
    unit_cost: f64,
    extended_cost: f64,
}

#[derive(Serialize)]
struct JsonResistor<'a> {
    class: &'a str,
    value_ohm: f64,
    count: u32,
}

#[derive(Serialize)]
struct JsonCopy {
    copy: u32,
    matched: Vec<String>,
    helpers: Vec<String>,
    resistors: Vec<String>,
}

#[derive(Serialize)]
struct JsonChannel<'a> {
    channel: &'a str,
    count: u32,
    option: usize,
    label: &'a str,
    topology: &'a str,
    pair_class: &'a str,
    helper_class: Option<&'a str>,
    resistors: Vec<JsonResistor<'a>>,
    governing_check: &'a str,
    governing_margin: f64,
    copies: Vec<JsonCopy>,
}

#[derive(Serialize)]
struct JsonBaseline<'a> {
    options: &'a [usize],
    parts_cost_per_board: f64,
    line_items: u32,
    total_cost: f64,
    within_line_item_limit: bool,
}

#[derive(Serialize)]
struct JsonShared<'a> {
    designator: &'a str,
    occupants: Vec<String>,
}

#[derive(Serialize)]
struct JsonPlan<'a> {
    schema_version: u32,
    board: &'a str,
    boards: u32,
    currency: &'a str,
    line_item_cost: f64,
    max_line_items: Option<u32>,
    bom: Vec<JsonBomLine<'a>>,
    channels: Vec<JsonChannel<'a>>,
    parts_cost_per_board: f64,
    parts_cost_per_build: f64,
    line_items_cost: f64,
    total_cost: f64,
    baseline: JsonBaseline<'a>,
    saving: f64,
    shared_packages: Vec<JsonShared<'a>>,
}

/// The plan as JSON (wire format in the module docs), followed by a newline.
pub fn write_json(plan: &BoardPlan, out: &mut dyn Write) -> io::Result<()> {
    let bom = plan
        .bom
        .iter()
        .map(|l| match &l.item {
            BomItem::Transistor {
                class,
                package,
                devices_per_package,
                polarity,
            } => JsonBomLine {
                line: l.line,
                kind: "transistor",
                class,
                package: Some(package),
                devices_per_package: Some(*devices_per_package),
                polarity: Some(polarity.as_str()),
                value_ohm: None,
                tolerance: None,
                qty_per_board: l.qty_per_board,
                qty_per_build: l.qty_per_build,
                unit_cost: l.unit_cost,
                extended_cost: l.extended_cost,
            },
            BomItem::Resistor {
                class,
                value_ohm,
                tolerance,
            } => JsonBomLine {
                line: l.line,
                kind: "resistor",
                class,
                package: None,
                devices_per_package: None,
                polarity: None,
                value_ohm: Some(*value_ohm),
                tolerance: Some(*tolerance),
                qty_per_board: l.qty_per_board,
                qty_per_build: l.qty_per_build,
                unit_cost: l.unit_cost,
                extended_cost: l.extended_cost,
            },
        })
        .collect();
    let res_refs = resistor_designators(plan);
    let channels = plan
        .channels
        .iter()
        .zip(&res_refs)
        .map(|(a, refs)| JsonChannel {
            channel: &a.channel,
            count: a.count,
            option: a.option,
            label: &a.label,
            topology: &a.topology,
            pair_class: &a.pair_class,
            helper_class: a.helper_class.as_deref(),
            resistors: a
                .resistors
                .iter()
                .map(|r| JsonResistor {
                    class: &r.class,
                    value_ohm: r.value_ohm,
                    count: r.count,
                })
                .collect(),
            governing_check: &a.governing_check,
            governing_margin: a.governing_margin,
            copies: a
                .copies
                .iter()
                .zip(refs)
                .map(|(c, r)| JsonCopy {
                    copy: c.copy,
                    matched: c.matched.iter().map(slot).collect(),
                    helpers: c.helpers.iter().map(slot).collect(),
                    resistors: r.clone(),
                })
                .collect(),
        })
        .collect();
    let wire = JsonPlan {
        schema_version: 1,
        board: &plan.board,
        boards: plan.boards,
        currency: &plan.currency,
        line_item_cost: plan.line_item_cost,
        max_line_items: plan.max_line_items,
        bom,
        channels,
        parts_cost_per_board: plan.parts_cost_per_board,
        parts_cost_per_build: plan.parts_cost_per_build,
        line_items_cost: plan.line_items_cost,
        total_cost: plan.total_cost,
        baseline: JsonBaseline {
            options: &plan.baseline.options,
            parts_cost_per_board: plan.baseline.parts_cost_per_board,
            line_items: plan.baseline.line_items,
            total_cost: plan.baseline.total_cost,
            within_line_item_limit: plan.baseline.within_line_item_limit,
        },
        saving: plan.saving(),
        shared_packages: plan
            .shared_packages
            .iter()
            .map(|s| JsonShared {
                designator: &s.designator,
                occupants: s
                    .occupants
                    .iter()
                    .map(|&(c, copy)| format!("{}#{copy}", plan.channels[c].channel))
                    .collect(),
            })
            .collect(),
    };
    serde_json::to_writer_pretty(&mut *out, &wire).map_err(io::Error::other)?;
    writeln!(out)
}

/// One CSV column: its header and how to read it from a line. One definition drives
/// both header and rows.
struct Column {
    name: fn(&str) -> String,
    value: fn(&BomLine) -> String,
}

fn currency_suffix(cur: &str) -> String {
    let s: String = cur
        .chars()
        .filter(|c| c.is_ascii_alphanumeric())
        .map(|c| c.to_ascii_lowercase())
        .collect();
    if s.is_empty() {
        String::new()
    } else {
        format!("_{s}")
    }
}

const COLUMNS: &[Column] = &[
    Column {
        name: |_| "line".into(),
        value: |l| l.line.to_string(),
    },
    Column {
        name: |_| "kind".into(),
        value: |l| match l.item {
            BomItem::Transistor { .. } => "transistor".into(),
            BomItem::Resistor { .. } => "resistor".into(),
        },
    },
    Column {
        name: |_| "class".into(),
        value: |l| match &l.item {
            BomItem::Transistor { class, .. } | BomItem::Resistor { class, .. } => class.clone(),
        },
    },
    Column {
        name: |_| "package".into(),
        value: |l| match &l.item {
            BomItem::Transistor { package, .. } => package.clone(),
            BomItem::Resistor { .. } => String::new(),
        },
    },
    Column {
        name: |_| "devices_per_package".into(),
        value: |l| match &l.item {
            BomItem::Transistor {
                devices_per_package,
                ..
            } => devices_per_package.to_string(),
            BomItem::Resistor { .. } => String::new(),
        },
    },
    Column {
        name: |_| "value_ohm".into(),
        value: |l| match &l.item {
            BomItem::Resistor { value_ohm, .. } => value_ohm.to_string(),
            BomItem::Transistor { .. } => String::new(),
        },
    },
    Column {
        name: |_| "tolerance".into(),
        value: |l| match &l.item {
            BomItem::Resistor { tolerance, .. } => tolerance.to_string(),
            BomItem::Transistor { .. } => String::new(),
        },
    },
    Column {
        name: |_| "qty_per_board".into(),
        value: |l| l.qty_per_board.to_string(),
    },
    Column {
        name: |_| "qty_per_build".into(),
        value: |l| l.qty_per_build.to_string(),
    },
    Column {
        name: |cur| format!("unit_cost{cur}"),
        value: |l| l.unit_cost.to_string(),
    },
    Column {
        name: |cur| format!("extended_cost{cur}"),
        value: |l| l.extended_cost.to_string(),
    },
];

/// The BOM as CSV, one line item per row, ready for a spreadsheet. Costs carry the
/// currency in their column name (`unit_cost_eur`).
pub fn write_csv(plan: &BoardPlan, out: &mut dyn Write) -> io::Result<()> {
    let cur = currency_suffix(&plan.currency);
    crate::report::csv::write_records(
        out,
        COLUMNS.iter().map(|c| (c.name)(&cur)).collect(),
        plan.bom
            .iter()
            .map(|l| COLUMNS.iter().map(|c| (c.value)(l)).collect()),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn engineering_ohms() {
        assert_eq!(ohms(4700.0), "4.70 kΩ");
        assert_eq!(ohms(100.0), "100 Ω");
        assert_eq!(ohms(12.1), "12.1 Ω");
        assert_eq!(ohms(1.5e6), "1.50 MΩ");
    }

    #[test]
    fn csv_quoting_and_currency() {
        assert_eq!(currency_suffix("EUR"), "_eur");
        assert_eq!(currency_suffix(""), "");
    }
}
