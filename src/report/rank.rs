//! Writers for the `rank`, `check` and `cheaper` reports (built by `crate::rank`): table, JSON and CSV. Each is a
//! pure function from a finished report into any `io::Write`.
//!
//! One column list drives the table, the CSV header and the CSV rows, so they cannot
//! drift apart. Tables use engineering notation (4.70 kΩ, 1.02 mA, 0.412 %); JSON and CSV
//! use plain SI numbers, with the unit in the CSV column name. A missing number is `—` in
//! tables, `null` in JSON and empty in CSV.

use std::io::{self, Write};

use comfy_table::{Cell, CellAlignment, ColumnConstraint, Table, Width};

use super::{new_table, wrap, wrap_indented, Format, Style};
use crate::check::CheckName;
use crate::rank::{
    CandidateRow, Caution, CheaperReport, CheckReport, CheckRow, CornerLine, Explanation,
    NoiseReport, RankReport, Relax, NOISE_VALIDITY,
};
use crate::units::format_prefixed;

struct Column {
    csv: &'static str,
    title: &'static str,
    /// Shown in tables only when a row has a programming resistor (always in CSV).
    programmed_only: bool,
    csv_value: fn(&CandidateRow) -> String,
    table_value: fn(&CandidateRow) -> String,
}

const COLUMNS: &[Column] = &[
    Column {
        csv: "rank",
        title: "#",
        programmed_only: false,
        csv_value: |r| r.rank.map_or(String::new(), |k| k.to_string()),
        table_value: |r| r.rank.map_or("—".into(), |k| k.to_string()),
    },
    Column {
        csv: "topology",
        title: "topology",
        programmed_only: false,
        csv_value: |r| r.topology.to_string(),
        table_value: |r| r.topology.to_string(),
    },
    Column {
        csv: "part",
        title: "part",
        programmed_only: false,
        csv_value: |r| r.part.clone(),
        table_value: |r| r.part.clone(),
    },
    Column {
        csv: "helper",
        title: "helper",
        programmed_only: false,
        csv_value: |r| r.helper.clone().unwrap_or_default(),
        table_value: |r| r.helper.clone().unwrap_or_else(|| "—".into()),
    },
    Column {
        csv: "re1_ohm",
        title: "RE1",
        programmed_only: false,
        csv_value: |r| num(r.re1_ohm),
        table_value: |r| ohms(r.re1_ohm),
    },
    Column {
        csv: "re2_ohm",
        title: "RE2",
        programmed_only: false,
        csv_value: |r| num(r.re2_ohm),
        table_value: |r| ohms(r.re2_ohm),
    },
    Column {
        csv: "resistor",
        title: "resistor",
        programmed_only: false,
        csv_value: |r| r.resistor.clone().unwrap_or_default(),
        table_value: |r| r.resistor.clone().unwrap_or_else(|| "—".into()),
    },
    Column {
        csv: "cost",
        title: "cost",
        programmed_only: false,
        csv_value: |r| num(r.cost),
        table_value: |r| format!("{:.3}", r.cost),
    },
    Column {
        csv: "ratio_achieved",
        title: "ratio",
        programmed_only: false,
        csv_value: |r| num(r.ratio_achieved),
        table_value: |r| fixed(r.ratio_achieved, 4),
    },
    Column {
        csv: "error_systematic",
        title: "sys. error",
        programmed_only: false,
        csv_value: |r| num(r.error_systematic),
        table_value: |r| pct(r.error_systematic),
    },
    Column {
        csv: "error_random_sigma",
        title: "random 1σ",
        programmed_only: false,
        csv_value: |r| num(r.error_random_sigma),
        table_value: |r| pct(r.error_random_sigma),
    },
    Column {
        csv: "error_total",
        title: "total error",
        programmed_only: false,
        csv_value: |r| num(r.error_total),
        table_value: total_error_cell,
    },
    Column {
        csv: "yield",
        title: "yield",
        programmed_only: false,
        csv_value: |r| num(r.yield_fraction),
        table_value: |r| r.yield_text(),
    },
    Column {
        csv: "r_out_min_ohm",
        title: "r_out min",
        programmed_only: false,
        csv_value: |r| num(r.r_out_min_ohm),
        table_value: |r| ohms(r.r_out_min_ohm),
    },
    Column {
        csv: "compliance_v",
        title: "compliance",
        programmed_only: false,
        csv_value: |r| num(r.compliance_v),
        table_value: |r| quantity(r.compliance_v, "V"),
    },
    Column {
        csv: "v_in_max_v",
        title: "V_in max",
        programmed_only: false,
        csv_value: |r| num(r.v_in_max),
        table_value: |r| quantity(r.v_in_max, "V"),
    },
    Column {
        csv: "r_ref_ohm",
        title: "R_ref",
        programmed_only: true,
        csv_value: |r| r.r_ref_ohm.map_or(String::new(), num),
        table_value: |r| r.r_ref_ohm.map_or("—".into(), ohms),
    },
    Column {
        csv: "r_ref_resistor",
        title: "R_ref class",
        programmed_only: true,
        csv_value: |r| r.r_ref_resistor.clone().unwrap_or_default(),
        table_value: |r| r.r_ref_resistor.clone().unwrap_or_else(|| "—".into()),
    },
    Column {
        csv: "r_ref_power_w",
        title: "P(R_ref)",
        programmed_only: true,
        csv_value: |r| r.r_ref_power_w.map_or(String::new(), num),
        table_value: |r| r.r_ref_power_w.map_or("—".into(), |p| quantity(p, "W")),
    },
    Column {
        csv: "tempco_ppm_per_k",
        title: "tempco",
        programmed_only: false,
        csv_value: |r| num(r.tempco_ppm_per_k),
        table_value: |r| {
            if r.tempco_ppm_per_k.is_finite() {
                format!("{:+.0} ppm/K", r.tempco_ppm_per_k)
            } else {
                "—".into()
            }
        },
    },
    Column {
        csv: "noise_a_per_rthz",
        title: "noise",
        programmed_only: false,
        csv_value: |r| num(r.noise_a_per_rthz),
        table_value: |r| quantity(r.noise_a_per_rthz, "A/√Hz"),
    },
    Column {
        csv: "noise_dominant",
        title: "noise from",
        programmed_only: false,
        csv_value: |r| dominant(r).unwrap_or_default(),
        table_value: |r| dominant(r).unwrap_or_else(|| "—".into()),
    },
    Column {
        csv: "governing_check",
        title: "governing",
        programmed_only: false,
        csv_value: |r| r.governing_check.map_or(String::new(), |c| c.to_string()),
        table_value: |r| r.governing_check.map_or("—".into(), |c| c.to_string()),
    },
    Column {
        csv: "governing_margin",
        title: "margin",
        programmed_only: false,
        csv_value: |r| num(r.governing_margin()),
        table_value: |r| pct(r.governing_margin()),
    },
    Column {
        csv: "pareto",
        title: "Pareto",
        programmed_only: false,
        csv_value: |r| r.pareto.to_string(),
        table_value: |r| if r.pareto { "*".into() } else { String::new() },
    },
];

/// The element giving the largest share of the output noise, with its share.
fn dominant(r: &CandidateRow) -> Option<String> {
    let n = r.noise.as_ref()?;
    let s = n.sources.first()?;
    Some(format!("{} {:.0} %", s.source, s.fraction * 100.0))
}

/// A number for CSV: six significant figures, then the shortest text that reads back to
/// that value (`0.086`, not `0.08600000000000001`). Six figures are more than any solved
/// figure supports (catalog values are typical to a few percent) and keep every E192
/// resistor value exact. JSON keeps full precision.
fn num(x: f64) -> String {
    if x.is_finite() {
        let rounded: f64 = format!("{x:.5e}").parse().unwrap_or(x);
        format!("{rounded}")
    } else {
        String::new()
    }
}

fn fixed(x: f64, decimals: usize) -> String {
    if x.is_finite() {
        format!("{x:.decimals$}")
    } else {
        "—".into()
    }
}

/// Why the budget's random total can differ from the accuracy check's: the check adds
/// the largest random sigma over all corners (a bound, MODEL.md), which may belong to
/// another corner than the worst systematic one the budget splits. `None` when the two
/// agree to the printed precision.
pub(crate) fn random_sigma_note(at_corner: f64, largest: f64, total: f64) -> Option<String> {
    if !(at_corner.is_finite() && largest.is_finite()) || pct(at_corner) == pct(largest) {
        return None;
    }
    Some(format!(
        "The accuracy check adds the largest random sigma over all corners, {}, to the largest systematic error (total {}); at this corner the random sigma is {}.",
        pct(largest),
        pct(total),
        pct(at_corner)
    ))
}

fn pct(x: f64) -> String {
    if !x.is_finite() {
        return "—".into();
    }
    let p = x * 100.0;
    let decimals = if p.abs() >= 100.0 {
        0
    } else if p.abs() >= 10.0 {
        1
    } else if p.abs() >= 1.0 {
        2
    } else {
        3
    };
    format!("{p:.decimals$} %")
}

fn quantity(x: f64, unit: &str) -> String {
    if x.is_finite() {
        format_prefixed(x, unit)
    } else {
        "—".into()
    }
}

fn ohms(x: f64) -> String {
    if x == 0.0 {
        "—".into()
    } else {
        quantity(x, "Ω")
    }
}

fn check_value(name: CheckName, x: f64) -> String {
    match name {
        CheckName::Accuracy | CheckName::Yield => pct(x),
        CheckName::Cost => fixed(x, 3),
        _ if !x.is_finite() => "—".into(),
        CheckName::Tempco => format!("{:.0} ppm/K", x * 1e6),
        n => format_prefixed(x, n.unit()),
    }
}

/// Titles of the columns that hold numbers (right-aligned).
const NUMERIC: &[&str] = &[
    "noise",
    "RE1",
    "RE2",
    "cost",
    "ratio",
    "sys. error",
    "random 1σ",
    "total error",
    "yield",
    "r_out min",
    "compliance",
    "V_in max",
    "margin",
    "R_ref",
    "P(R_ref)",
    "tempco",
    "saving",
    "cost saved",
    "margin given up",
];

/// The design in one readable cell: topology, pair class, helper, emitter resistors and
/// their class (`wilson npn-dual-general, helper npn-single-general, RE 1.91 kΩ
/// thick-film-1pct`).
fn design_cell(r: &CandidateRow) -> String {
    let mut s = format!("{} {}", r.topology, r.part);
    if let Some(h) = &r.helper {
        s.push_str(&format!(", helper {h}"));
    }
    let class = r.resistor.as_deref().unwrap_or("");
    match (r.re1_ohm > 0.0, r.re2_ohm > 0.0) {
        (false, false) => s.push_str(", no RE"),
        (true, true) if (r.re1_ohm - r.re2_ohm).abs() <= 1e-9 * r.re1_ohm => {
            s.push_str(&format!(", RE {} {class}", ohms(r.re1_ohm)));
        }
        (false, true) => s.push_str(&format!(", RE2 {} {class}", ohms(r.re2_ohm))),
        _ => s.push_str(&format!(
            ", RE1 {} RE2 {} {class}",
            ohms(r.re1_ohm),
            ohms(r.re2_ohm)
        )),
    }
    if let (Some(v), Some(class)) = (r.r_ref_ohm, &r.r_ref_resistor) {
        s = format!("{}, R_ref {} {class}", s.trim_end(), ohms(v));
    }
    if r.outputs > 1 {
        s = format!("{}, {} outputs", s.trim_end(), r.outputs);
    }
    if r.area != "1" {
        s = format!("{}, area {}", s.trim_end(), r.area);
    }
    s.trim_end().to_string()
}

/// The total error, naming the worst output of a multi-output design (`4.1 % (output 3)`).
fn total_error_cell(r: &CandidateRow) -> String {
    if r.outputs > 1 {
        format!("{} (output {})", pct(r.error_total), r.worst_output)
    } else {
        pct(r.error_total)
    }
}

/// Rank with the Pareto mark beside it (`3 *`), for the narrow table.
fn rank_cell(r: &CandidateRow) -> String {
    let k = r.rank.map_or("—".into(), |k| k.to_string());
    if r.pareto {
        format!("{k} *")
    } else {
        k
    }
}

/// The governing check and its margin in one cell (`compliance 0.195 %`).
fn governing_cell(r: &CandidateRow) -> String {
    match r.governing_check {
        Some(c) => format!("{c} {}", pct(r.governing_margin())),
        None => "—".into(),
    }
}

/// The default columns: what a designer decides on, narrow enough for 80 columns.
/// A table column: its title and how to show a row.
type TableColumn = (&'static str, fn(&CandidateRow) -> String);

const NARROW: &[TableColumn] = &[
    ("#", rank_cell),
    ("design", design_cell),
    ("cost", |r| format!("{:.3}", r.cost)),
    ("total error", total_error_cell),
    ("yield", |r| pct(r.yield_fraction)),
    ("governing", governing_cell),
];

/// The candidate table: with `style.wide` every column, otherwise rank (with the Pareto
/// mark), the design in one cell, cost, total error, yield and the governing check with
/// its margin. Cells wrap to keep the table within `style.width`.
fn candidates_table(style: Style, rows: &[CandidateRow], extra: &[(&str, Vec<String>)]) -> Table {
    let programmed = rows.iter().any(|r| r.r_ref_resistor.is_some());
    let cols: Vec<TableColumn> = if style.wide {
        COLUMNS
            .iter()
            .filter(|c| programmed || !c.programmed_only)
            .map(|c| (c.title, c.table_value))
            .collect()
    } else {
        NARROW.to_vec()
    };
    let mut header: Vec<&str> = cols.iter().map(|(t, _)| *t).collect();
    header.extend(extra.iter().map(|(t, _)| *t));
    let mut t = new_table(style, &header);
    for (i, r) in rows.iter().enumerate() {
        let mut cells: Vec<Cell> = cols.iter().map(|(_, f)| Cell::new(f(r))).collect();
        cells.extend(extra.iter().map(|(_, v)| Cell::new(&v[i])));
        t.add_row(cells);
    }
    if !style.wide {
        // Room for a whole class id (the longest, with its comma, is 23 characters), so wrapping
        // breaks the design between words; narrower columns wrap instead.
        if let Some(col) = t.column_mut(1) {
            col.set_constraint(ColumnConstraint::LowerBoundary(Width::Fixed(23)));
        }
    }
    for (i, title) in header.iter().enumerate() {
        if NUMERIC.contains(title) {
            if let Some(col) = t.column_mut(i) {
                col.set_cell_alignment(CellAlignment::Right);
            }
        }
    }
    t
}

fn checks_table(style: Style, checks: &[CheckRow]) -> Table {
    let mut t = new_table(
        style,
        &["check", "value", "limit", "margin", "pass", "where"],
    );
    for c in checks {
        // A figure that needed an unsolved corner is neither passed nor failed.
        let unavailable = c.value.is_nan()
            && !matches!(c.name, CheckName::ThermalRunaway | CheckName::NoSolution);
        t.add_row(vec![
            c.name.to_string(),
            if unavailable {
                "not available".to_string()
            } else {
                check_value(c.name, c.value)
            },
            check_value(c.name, c.limit),
            pct(c.margin),
            if unavailable {
                "n/a"
            } else if c.pass {
                "pass"
            } else {
                "FAIL"
            }
            .to_string(),
            c.detail.clone(),
        ]);
    }
    t
}

fn corners_table(style: Style, corners: &[CornerLine]) -> Table {
    let programmed = corners.iter().any(|c| c.rail.is_some());
    let mut header = vec!["I_in"];
    if programmed {
        header.push("rail");
    }
    header.extend([
        "V_out",
        "ambient",
        "I_out",
        "error",
        "random 1σ",
        "r_out",
        "V_in",
        "T_j max",
    ]);
    let mut t = new_table(style, &header);
    for c in corners {
        let mut row = vec![quantity(c.i_in, "A")];
        if programmed {
            row.push(c.rail.map_or("—".into(), |v| quantity(v, "V")));
        }
        row.extend([
            quantity(c.v_out, "V"),
            format!("{:.1} °C", c.t_amb_c),
            quantity(c.i_out, "A"),
            pct(c.error),
            pct(c.error_random_sigma),
            quantity(c.r_out, "Ω"),
            quantity(c.v_in, "V"),
            format!("{:.1} °C", c.t_junction_max_c),
        ]);
        t.add_row(row);
    }
    t
}

fn rejection_line(r: &RankReport) -> String {
    let at_least = if r.feasible_at_least { "at least " } else { "" };
    let mut s = format!(
        "{} candidate{}: {at_least}{} feasible in {at_least}{} famil{}",
        r.candidate_space,
        if r.candidate_space == 1 { "" } else { "s" },
        r.feasible,
        r.families,
        if r.families == 1 { "y" } else { "ies" }
    );
    if !r.rejected_by.is_empty() {
        let parts: Vec<String> = r
            .rejected_by
            .iter()
            .map(|(c, n)| format!("{c} {n}"))
            .collect();
        s.push_str(&format!("; rejected by: {}", parts.join(", ")));
    }
    if r.unverified > 0 {
        s.push_str(&format!(
            "; {} passed every screen but cost more than the rows shown, so were not verified (--exhaustive verifies all)",
            r.unverified
        ));
    }
    s
}

/// Write the rank report.
pub fn write_rank(
    w: &mut dyn Write,
    r: &RankReport,
    format: Format,
    style: Style,
) -> io::Result<()> {
    match format {
        Format::Json => json(w, r),
        Format::Csv => csv(w, &r.candidates, &[]),
        Format::Table => {
            writeln!(
                w,
                "{}: designs by {}{}",
                r.requirement,
                r.prefer.as_str(),
                if r.exhaustive {
                    " (exhaustive search)"
                } else {
                    ""
                }
            )?;
            if r.candidates.is_empty() {
                writeln!(w, "No design meets every requirement.")?;
                write_relax(w, &r.relax, style.width)?;
            } else {
                writeln!(w, "{}", candidates_table(style, &r.candidates, &[]))?;
            }
            writeln!(w, "{}", wrap(&rejection_line(r), style.width))?;
            let footer = format!(
                "Yield: {} Monte Carlo builds, seed {}; * = on the cost/error Pareto front; {} solves.",
                r.samples, r.seed, r.solves
            );
            writeln!(w, "{}", wrap(&footer, style.width))?;
            if let Some(e) = &r.explain {
                writeln!(w)?;
                write_explanation(w, e, style)?;
            }
            Ok(())
        }
    }
}

/// The advice on what to relax, one field per line.
pub fn write_relax(w: &mut dyn Write, relax: &[Relax], width: Option<u16>) -> io::Result<()> {
    if relax.is_empty() {
        return Ok(());
    }
    writeln!(
        w,
        "{}",
        wrap(
            "What to relax (one field at a time; each value found by the solver for the nearest candidates):",
            width
        )
    )?;
    for r in relax {
        writeln!(w, "  - {}", wrap_indented(&r.text, width, 4))?;
    }
    Ok(())
}

/// Write the full reasoning of one row (table format).
pub fn write_explanation(w: &mut dyn Write, e: &Explanation, style: Style) -> io::Result<()> {
    let c = &e.candidate;
    writeln!(
        w,
        "{}",
        wrap(
            &format!(
                "Design{}: {}, RE1 {}, RE2 {}, resistor {}, cost {:.3}",
                c.rank.map_or(String::new(), |k| format!(" #{k}")),
                c.label(),
                ohms(c.re1_ohm),
                ohms(c.re2_ohm),
                c.resistor.as_deref().unwrap_or("—"),
                c.cost
            ),
            style.width
        )
    )?;
    if let (Some(r), Some(class)) = (c.r_ref_ohm, &c.r_ref_resistor) {
        writeln!(
            w,
            "Programming resistor: R_ref {} ({class}), {} at the worst corner.",
            ohms(r),
            c.r_ref_power_w.map_or("—".into(), |p| quantity(p, "W")),
        )?;
    }
    writeln!(
        w,
        "Output tempco: {:+.0} ppm/K averaged over the ambient range, {:+.0} ppm/K steepest.",
        c.tempco_ppm_per_k, c.tempco_worst_ppm_per_k
    )?;
    if c.yield_solved.is_finite() {
        writeln!(
            w,
            "{}",
            wrap(
                &format!(
                    "Yield: {} on the first-order model, {} with every build re-solved.",
                    c.yield_text(),
                    c.yield_solved_text()
                ),
                style.width
            )
        )?;
    }
    writeln!(
        w,
        "{}",
        wrap(
            &format!(
                "Checks (governing: {}):",
                c.governing_check.map_or("—".into(), |g| g.to_string())
            ),
            style.width
        )
    )?;
    writeln!(w, "{}", checks_table(style, &c.checks))?;
    if !e.corners.is_empty() {
        writeln!(w, "Corners:")?;
        writeln!(w, "{}", corners_table(style, &e.corners))?;
    }
    if let Some(b) = &e.budget {
        let input = match b.rail {
            Some(v) => format!("rail {}", quantity(v, "V")),
            None => format!("I_in {}", quantity(b.i_in, "A")),
        };
        writeln!(
            w,
            "{}",
            wrap(
                &format!(
                    "Error budget at the worst corner ({input}, V_out {}, ambient {:.1} °C):",
                    quantity(b.v_out, "V"),
                    b.t_amb_c
                ),
                style.width
            )
        )?;
        let mut t = new_table(style, &["cause", "kind", "error"]);
        for l in &b.systematic {
            t.add_row(vec![l.cause.to_string(), "systematic".into(), pct(l.error)]);
        }
        t.add_row(vec![
            "total".into(),
            "systematic".into(),
            pct(b.systematic_total),
        ]);
        for l in &b.random {
            t.add_row(vec![l.cause.to_string(), "random, 1σ".into(), pct(l.error)]);
        }
        t.add_row(vec![
            "total (quadrature)".into(),
            "random, 1σ".into(),
            pct(b.random_sigma),
        ]);
        writeln!(w, "{t}")?;
        if let Some(note) = random_sigma_note(b.random_sigma, c.error_random_sigma, c.error_total) {
            writeln!(w, "{}", wrap(&note, style.width))?;
        }
    }
    if let Some(n) = &c.noise {
        write_noise(w, n, style)?;
    }
    if let Some(h) = &e.hottest {
        writeln!(w, "{}", wrap(&format!("Junction temperatures at the hottest corner (I_in {}, V_out {}, ambient {:.1} °C):",
            quantity(h.i_in, "A"),
            quantity(h.v_out, "V"),
            h.t_amb_c), style.width))?;
        let mut t = new_table(style, &["transistor", "T_j", "power", "V_CE", "I_C"]);
        for j in &h.junctions {
            t.add_row(vec![
                j.name.clone(),
                format!("{:.1} °C", j.t_junction_c),
                quantity(j.power, "W"),
                quantity(j.v_ce, "V"),
                quantity(j.i_c, "A"),
            ]);
        }
        writeln!(w, "{t}")?;
    }
    Ok(())
}

/// The output noise breakdown at the worst corner, with a bar per source.
fn write_noise(w: &mut dyn Write, n: &NoiseReport, style: Style) -> io::Result<()> {
    let head = format!(
        "Output current noise at the worst corner (I_in {}, V_out {}, ambient {:.1} °C): {} {}{}",
        quantity(n.i_in, "A"),
        quantity(n.v_out, "V"),
        n.t_amb_c,
        n.measure,
        quantity(n.density_a_per_rthz, "A/√Hz"),
        n.band_rms_a.map_or(String::new(), |r| format!(
            ", {} rms over the band",
            quantity(r, "A")
        ))
    );
    writeln!(w, "{}", wrap(&head, style.width))?;
    let mut t = new_table(style, &["source", "density", "share of power", ""]);
    for s in &n.sources {
        let bar = "#".repeat((s.fraction * 30.0).round().max(0.0) as usize);
        t.add_row(vec![
            s.source.to_string(),
            quantity(s.density_a_per_rthz, "A/√Hz"),
            pct(s.fraction),
            bar,
        ]);
    }
    writeln!(w, "{t}")?;
    writeln!(
        w,
        "{}",
        wrap(&format!("Noise figures are {NOISE_VALIDITY}."), style.width)
    )
}

/// Write the check report.
pub fn write_check(
    w: &mut dyn Write,
    r: &CheckReport,
    format: Format,
    style: Style,
) -> io::Result<()> {
    match format {
        Format::Json => json(w, r),
        Format::Csv => csv(
            w,
            std::slice::from_ref(&r.candidate),
            &[("pass", vec![r.pass.to_string()])],
        ),
        Format::Table => {
            writeln!(
                w,
                "{}",
                wrap(
                    &format!(
                        "{}: {} against the requirement: {}",
                        r.requirement,
                        r.candidate.label(),
                        if r.pass { "PASS" } else { "FAIL" }
                    ),
                    style.width
                )
            )?;
            let e = Explanation {
                candidate: r.candidate.clone(),
                corners: r.corners.clone().unwrap_or_default(),
                budget: r.budget.clone(),
                hottest: r.hottest.clone(),
                cautions: Vec::new(),
            };
            write_explanation(w, &e, style)?;
            writeln!(
                w,
                "{}",
                wrap(
                    &format!("Yield: {} Monte Carlo builds, seed {}.", r.samples, r.seed),
                    style.width
                )
            )
        }
    }
}

/// Write the cheaper / second-source report.
pub fn write_cheaper(
    w: &mut dyn Write,
    r: &CheaperReport,
    format: Format,
    style: Style,
) -> io::Result<()> {
    let rows: Vec<CandidateRow> = r.alternatives.iter().map(|a| a.candidate.clone()).collect();
    let saving: Vec<String> = r.alternatives.iter().map(|a| num(a.saving)).collect();
    let given: Vec<String> = r
        .alternatives
        .iter()
        .map(|a| num(a.margin_given_up))
        .collect();
    match format {
        Format::Json => json(w, r),
        Format::Csv => csv(w, &rows, &[("saving", saving), ("margin_given_up", given)]),
        Format::Table => {
            let c = &r.reference;
            // The same design text as the table's cells; a check that failed without a
            // figure (a runaway, an unsolvable corner) is named without a margin.
            let verdict = match (r.reference_pass, c.governing_check) {
                (true, Some(_)) => format!("passes; governing {}", governing_cell(c)),
                (false, Some(_)) if c.governing_margin().is_finite() => {
                    format!("fails on {}", governing_cell(c))
                }
                (false, Some(g)) => format!("fails on {g}"),
                (pass, None) => (if pass { "passes" } else { "fails" }).to_string(),
            };
            let head = format!(
                "{}: reference {}, cost {:.3}, {verdict}",
                r.requirement,
                design_cell(c),
                c.cost,
            );
            writeln!(w, "{}", wrap(&head, style.width))?;
            if !rows.is_empty() {
                let saving: Vec<String> = r
                    .alternatives
                    .iter()
                    .map(|a| format!("{:.3}", a.saving))
                    .collect();
                let given: Vec<String> = r
                    .alternatives
                    .iter()
                    .map(|a| pct(a.margin_given_up))
                    .collect();
                let label = if r.mode == "second-source" {
                    "cost saved"
                } else {
                    "saving"
                };
                writeln!(
                    w,
                    "{}",
                    candidates_table(style, &rows, &[(label, saving), ("margin given up", given)])
                )?;
                // The margin is on the reference's governing check, which need not be
                // the row's own governing check.
                if let Some(g) = r
                    .alternatives
                    .first()
                    .and_then(|a| a.reference_governing_check)
                {
                    writeln!(
                        w,
                        "{}",
                        wrap(
                            &format!("Margin given up: on {g}, the reference's governing check (negative: the design has more margin there than the reference)."),
                            style.width
                        )
                    )?;
                }
            }
            writeln!(
                w,
                "{}",
                wrap(&format!("{}.", capitalise(&r.summary)), style.width)
            )
        }
    }
}

/// Write cautions, one per line, under a heading.
pub fn write_cautions(
    w: &mut dyn Write,
    cautions: &[Caution],
    width: Option<u16>,
) -> io::Result<()> {
    if cautions.is_empty() {
        return Ok(());
    }
    writeln!(w, "Cautions:")?;
    for c in cautions {
        writeln!(w, "  - {}", wrap_indented(&c.to_string(), width, 4))?;
    }
    Ok(())
}

fn capitalise(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

fn json<T: serde::Serialize>(w: &mut dyn Write, v: &T) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *w, v).map_err(io::Error::other)?;
    writeln!(w)
}

fn csv(w: &mut dyn Write, rows: &[CandidateRow], extra: &[(&str, Vec<String>)]) -> io::Result<()> {
    let mut header: Vec<String> = COLUMNS.iter().map(|c| c.csv.to_string()).collect();
    header.extend(extra.iter().map(|(h, _)| h.to_string()));
    super::csv::write_records(
        w,
        header,
        rows.iter().enumerate().map(|(i, r)| {
            let mut cells: Vec<String> = COLUMNS.iter().map(|c| (c.csv_value)(r)).collect();
            cells.extend(extra.iter().map(|(_, v)| v[i].clone()));
            cells
        }),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::CheckName;

    #[test]
    fn the_budget_says_when_the_check_takes_another_corners_random_sigma() {
        // Equal to the printed precision: nothing to explain.
        assert_eq!(random_sigma_note(0.000777, 0.0007771, 0.0669), None);
        let note = random_sigma_note(0.000771, 0.000935, 0.0696).unwrap();
        assert!(note.contains("0.093 %"), "{note}");
        assert!(note.contains("0.077 %"), "{note}");
        assert!(note.contains("6.96 %"), "{note}");
    }

    fn row() -> CandidateRow {
        CandidateRow {
            outputs: 1,
            area: "1".into(),
            worst_output: 1,
            shape: crate::model::Shape::SINGLE,
            rank: Some(1),
            topology: "simple",
            part: "npn-dual-x".into(),
            helper: None,
            re1_ohm: 4700.0,
            re2_ohm: 4700.0,
            resistor: Some("thick, 1 %".into()),
            cost: 0.125,
            ratio_achieved: 0.999,
            error_systematic: 0.002,
            error_random_sigma: 0.001,
            error_total: 0.005,
            yield_fraction: 0.98,
            yield_ci_95: None,
            yield_samples: 0,
            yield_solved: f64::NAN,
            r_out_min_ohm: f64::NAN,
            compliance_v: 0.7,
            v_in_max: 1.2,
            noise_a_per_rthz: 2.5e-12,
            noise: None,
            r_ref_ohm: None,
            r_ref_resistor: None,
            r_ref_power_w: None,
            tempco_ppm_per_k: 12.0,
            tempco_worst_ppm_per_k: 15.0,
            governing_check: Some(CheckName::Accuracy),
            pareto: true,
            checks: vec![CheckRow {
                name: CheckName::Accuracy,
                value: 0.005,
                limit: 0.01,
                margin: 0.5,
                pass: true,
                detail: String::new(),
            }],
            soft_saturation: Vec::new(),
        }
    }

    #[test]
    fn csv_numbers_are_rounded_to_six_figures() {
        assert_eq!(num(0.08600000000000001), "0.086");
        assert_eq!(num(0.066 + 0.02), "0.086");
        assert_eq!(num(1910.0), "1910");
        assert_eq!(num(0.0017123456789), "0.00171235");
        assert_eq!(num(2.58e6), "2580000");
        assert_eq!(num(f64::NAN), "");
    }

    #[test]
    fn csv_header_and_row_come_from_one_column_list() {
        let mut out = Vec::new();
        csv(&mut out, &[row()], &[("pass", vec!["true".into()])]).unwrap();
        let text = String::from_utf8(out).unwrap();
        let lines: Vec<&str> = text.lines().collect();
        assert_eq!(lines.len(), 2);
        assert!(lines[0].starts_with("rank,topology,part,helper,re1_ohm,re2_ohm,resistor,cost,"));
        assert!(lines[0].ends_with(",governing_check,governing_margin,pareto,pass"));
        // Plain SI numbers; a missing number is empty; a comma is quoted (RFC 4180).
        assert!(lines[1].starts_with("1,simple,npn-dual-x,,4700,4700,\"thick, 1 %\",0.125,"));
        // No programming resistor: its columns are empty; the tempco is there for every row.
        assert!(
            lines[1].contains(",0.005,0.98,,0.7,1.2,,,,12,0.0000000000025,,accuracy,0.5,true,true")
        );
        assert!(lines[0].contains(
            ",v_in_max_v,r_ref_ohm,r_ref_resistor,r_ref_power_w,tempco_ppm_per_k,noise_a_per_rthz,"
        ));
        assert_eq!(
            lines[0].split(',').count(),
            lines[1].replace("\"thick, 1 %\"", "x").split(',').count()
        );
    }

    fn long_row(k: usize) -> CandidateRow {
        CandidateRow {
            outputs: 1,
            area: "1".into(),
            worst_output: 1,
            shape: crate::model::Shape::SINGLE,
            rank: Some(k),
            topology: "beta-helper",
            part: "npn-dual-highvoltage".into(),
            helper: Some("npn-single-general".into()),
            re1_ohm: 1910.0,
            re2_ohm: 1910.0,
            resistor: Some("thin-film-0p5pct".into()),
            pareto: k % 2 == 1,
            ..row()
        }
    }

    fn widest_line(text: &str) -> usize {
        text.lines().map(|l| l.chars().count()).max().unwrap_or(0)
    }

    #[test]
    fn table_fits_80_and_120_columns() {
        let rows: Vec<CandidateRow> = (1..=10).map(long_row).collect();
        for width in [80u16, 120] {
            // The full column set (--wide) needs more than 80 columns: it is checked at 120.
            for wide in [false, true].into_iter().filter(|&w| !w || width >= 120) {
                let style = Style {
                    width: Some(width),
                    wide,
                    ..Style::default()
                };
                let t = candidates_table(style, &rows, &[]).to_string();
                assert!(
                    widest_line(&t) <= usize::from(width),
                    "{width} columns, wide {wide}:\n{t}"
                );
            }
            // The narrow table keeps whole words of the design cell.
            let style = Style {
                width: Some(width),
                ..Style::default()
            };
            let t = candidates_table(style, &rows, &[]).to_string();
            for word in [
                "beta-helper",
                "npn-dual-highvoltage",
                "thin-film-0p5pct",
                "1.91",
            ] {
                assert!(t.contains(word), "{word} split at {width}:\n{t}");
            }
        }
        // Without a width (a file or pipe) the narrow table is not wrapped, and is far
        // narrower than every column.
        let narrow = candidates_table(Style::default(), &rows, &[]).to_string();
        let wide = candidates_table(
            Style {
                wide: true,
                ..Style::default()
            },
            &rows,
            &[],
        )
        .to_string();
        assert_eq!(narrow.lines().count(), rows.len() + 4);
        assert!(widest_line(&narrow) + 60 < widest_line(&wide));
        assert!(narrow.lines().nth(3).unwrap().contains("1 *"));
    }

    #[test]
    fn design_cell_reads_as_one_design() {
        assert_eq!(
            design_cell(&long_row(1)),
            "beta-helper npn-dual-highvoltage, helper npn-single-general, RE 1.91 kΩ thin-film-0p5pct"
        );
        let bare = CandidateRow {
            re1_ohm: 0.0,
            re2_ohm: 0.0,
            resistor: None,
            ..row()
        };
        assert_eq!(design_cell(&bare), "simple npn-dual-x, no RE");
        let ratio = CandidateRow {
            re1_ohm: 2000.0,
            re2_ohm: 1000.0,
            ..row()
        };
        assert_eq!(
            design_cell(&ratio),
            "simple npn-dual-x, RE1 2.00 kΩ RE2 1.00 kΩ thick, 1 %"
        );
    }

    #[test]
    fn table_uses_engineering_notation() {
        // Every column (the default narrow table has no compliance column).
        let wide = Style {
            wide: true,
            ..Style::default()
        };
        let mut t = candidates_table(wide, &[row()], &[]).to_string();
        t.retain(|c| c != '\n');
        assert!(t.contains("4.70 kΩ"));
        assert!(t.contains("0.500 %"));
        assert!(t.contains("700 mV"));
        assert!(t.contains("98.0 %"));
        assert!(t.contains("2.50 pA/√Hz"));
    }
}
