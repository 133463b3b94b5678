//! Assembles the decision page from finished results: the ranking (with the chosen
//! design's explanation), the nearest miss, the chosen design's curves and the
//! provenance. Formatting only; every number comes from the ranking's report, so the
//! page's figures are the JSON's figures.

use super::eng::{celsius, eng, eng_range, eng_sig, percent, Charset};
use super::page::{CheckRow, DesignView, Figure, Page, Plot, Rejected, Table};
use super::plot::{self, BudgetBar, NoiseBar, PlotError};
use super::schematic;
use super::Provenance;
use crate::check::refdes::{Element, ElementKind};
use crate::check::{CheckName, DesignSpec};
use crate::curves::CurveSet;
use crate::model::{Catalog, Polarity, Requirement, Role, ZERO_CELSIUS_K};
use crate::rank::{CandidateRow, RankReport};

const U: Charset = Charset::Unicode;

/// What the page is built from.
pub struct DecisionInputs<'a> {
    pub req: &'a Requirement,
    pub catalog: &'a Catalog,
    /// The ranking, with `explain` set for row 1 when anything is feasible.
    pub report: &'a RankReport,
    /// The rejected design that came closest, the check it failed by most, and that
    /// check's (negative) margin.
    pub best_rejected: Option<(CandidateRow, CheckName, f64)>,
    /// The chosen design's curves.
    pub curves: Option<&'a CurveSet>,
    pub provenance: &'a Provenance,
    /// UTC date of the run, `YYYY-MM-DD`.
    pub date: String,
}

fn money(catalog: &Catalog, x: f64) -> String {
    format!("{x:.3} {}", catalog.currency)
}

/// A check's value or limit in the check's own unit, `sig` significant digits.
fn check_value(catalog: &Catalog, name: CheckName, x: f64, sig: usize) -> String {
    if !x.is_finite() {
        return if x.is_nan() {
            match name {
                CheckName::ThermalRunaway | CheckName::NoSolution => "no solution".into(),
                // A figure that needed a corner which could not be solved.
                _ => "not available".into(),
            }
        } else {
            eng(x, name.unit(), U)
        };
    }
    match name {
        CheckName::Cost => money(catalog, x),
        CheckName::Accuracy | CheckName::Yield => percent(x),
        CheckName::ThermalRunaway | CheckName::NoSolution => format!("{x}"),
        // A temperature coefficient reads in ppm/K, as the requirement writes it.
        CheckName::Tempco => format!("{:.0} ppm/K", x * 1e6),
        _ => eng_sig(
            x,
            if name.unit() == "Ω" {
                "ohm"
            } else {
                name.unit()
            },
            U,
            sig,
        ),
    }
}

fn capitalised(s: &str) -> String {
    let mut c = s.chars();
    match c.next() {
        Some(f) => f.to_uppercase().collect::<String>() + c.as_str(),
        None => String::new(),
    }
}

fn resistors(c: &CandidateRow) -> String {
    let r = |x: f64| eng(x, "ohm", U);
    match (c.re1_ohm > 0.0, c.re2_ohm > 0.0) {
        (false, false) => "no emitter resistors".into(),
        (false, true) => format!("RE2 {}", r(c.re2_ohm)),
        _ if c.re1_ohm == c.re2_ohm => format!("RE1 = RE2 = {}", r(c.re1_ohm)),
        _ => format!("RE1 {}, RE2 {}", r(c.re1_ohm), r(c.re2_ohm)),
    }
}

/// `wilson · npn-dual-prematched (+ npn-single-general) · RE1 = RE2 = 100 Ω thick-film-1pct`
pub fn design_title(c: &CandidateRow) -> String {
    let mut s = format!("{} · {}", c.topology, c.part);
    if let Some(h) = &c.helper {
        s.push_str(&format!(" + helper {h}"));
    }
    s.push_str(&format!(" · {}", resistors(c)));
    if let Some(r) = &c.resistor {
        s.push_str(&format!(" ({r})"));
    }
    // Rows that differ only in the programming resistor must not read alike.
    if let Some(ohm) = c.r_ref_ohm {
        s.push_str(&format!(" · R_ref {}", eng(ohm, "ohm", U)));
        if let Some(r) = &c.r_ref_resistor {
            s.push_str(&format!(" ({r})"));
        }
    }
    s
}

fn view(catalog: &Catalog, c: &CandidateRow) -> DesignView {
    let text = |key: &str, label: &str, t: String| Figure {
        key: key.into(),
        label: label.into(),
        raw: None,
        text: t,
    };
    let num = |key: &str, label: &str, raw: f64, t: String| Figure {
        key: key.into(),
        label: label.into(),
        raw: Some(raw),
        text: t,
    };
    let figures = vec![
        text("topology", "topology", c.topology.to_string()),
        text(
            "part",
            if separate_singles(catalog, c) {
                "transistor class (two separate singles, not a matched pair)"
            } else {
                "matched pair class"
            },
            c.part.clone(),
        ),
        text(
            "helper",
            "helper class",
            c.helper.clone().unwrap_or_else(|| "none".into()),
        ),
        num("re1_ohm", "RE1", c.re1_ohm, eng(c.re1_ohm, "ohm", U)),
        num("re2_ohm", "RE2", c.re2_ohm, eng(c.re2_ohm, "ohm", U)),
        text(
            "resistor",
            "resistor class",
            c.resistor.clone().unwrap_or_else(|| "none".into()),
        ),
    ];
    let mut figures = figures;
    if let Some(ohm) = c.r_ref_ohm {
        figures.push(num(
            "r_ref_ohm",
            "programming resistor R_ref",
            ohm,
            eng(ohm, "ohm", U),
        ));
        figures.push(text(
            "r_ref_resistor",
            "R_ref class",
            c.r_ref_resistor.clone().unwrap_or_else(|| "none".into()),
        ));
        if let Some(w) = c.r_ref_power_w {
            figures.push(num(
                "r_ref_power_w",
                "R_ref power (worst corner)",
                w,
                eng(w, "W", U),
            ));
        }
    }
    figures.extend([
        num("cost", "cost per mirror", c.cost, money(catalog, c.cost)),
        num(
            "ratio_achieved",
            "ratio achieved",
            c.ratio_achieved,
            format!("{:.5}", c.ratio_achieved),
        ),
        num(
            "error_systematic",
            "systematic error",
            c.error_systematic,
            percent(c.error_systematic),
        ),
        num(
            "error_random_sigma",
            "random error (1 sigma)",
            c.error_random_sigma,
            percent(c.error_random_sigma),
        ),
        num(
            "error_total",
            "total error (systematic + k sigma)",
            c.error_total,
            percent(c.error_total),
        ),
        num(
            "yield",
            "Monte Carlo yield",
            c.yield_fraction,
            c.yield_text(),
        ),
        num(
            "r_out_min_ohm",
            "output resistance, DC with self-heating (smallest over the corners)",
            c.r_out_min_ohm,
            eng(c.r_out_min_ohm, "ohm", U),
        ),
        num(
            "compliance_v",
            "compliance voltage",
            c.compliance_v,
            eng(c.compliance_v, "V", U),
        ),
        num(
            "v_in_max_v",
            "input voltage (max)",
            c.v_in_max,
            eng(c.v_in_max, "V", U),
        ),
    ]);
    if c.tempco_ppm_per_k.is_finite() {
        figures.push(num(
            "tempco_ppm_per_k",
            "output tempco (average over the ambient range; steepest slope)",
            c.tempco_ppm_per_k,
            format!(
                "{:+.0} ppm/K; {:+.0} ppm/K",
                c.tempco_ppm_per_k, c.tempco_worst_ppm_per_k
            ),
        ));
    }
    if c.noise_a_per_rthz.is_finite() {
        figures.push(num(
            "noise_a_per_rthz",
            "output noise, white (worst corner)",
            c.noise_a_per_rthz,
            eng(c.noise_a_per_rthz, "A/√Hz", U),
        ));
    }
    // What each class is, in the catalog's own words (user text: escaped by the renderers).
    let classes = [
        (
            "pair class",
            catalog
                .transistor(&c.part)
                .map(|t| (&t.summary, &t.provenance)),
        ),
        (
            "helper class",
            c.helper
                .as_deref()
                .and_then(|h| catalog.transistor(h))
                .map(|t| (&t.summary, &t.provenance)),
        ),
        (
            "resistor class",
            c.resistor
                .as_deref()
                .and_then(|r| catalog.resistor(r))
                .map(|r| (&r.summary, &r.provenance)),
        ),
    ];
    for (what, found) in classes {
        if let Some((summary, provenance)) = found {
            figures.push(text(
                "",
                &format!("{what}: catalog summary"),
                format!("{summary} (provenance: {provenance})"),
            ));
        }
    }
    let checks = c
        .checks
        .iter()
        .map(|k| {
            let (mut value, mut limit) = (
                check_value(catalog, k.name, k.value, 3),
                check_value(catalog, k.name, k.limit, 3),
            );
            // A value that rounds to its limit gets the digits that tell them apart.
            if value == limit && k.value != k.limit {
                value = check_value(catalog, k.name, k.value, 6);
                limit = check_value(catalog, k.name, k.limit, 6);
            }
            CheckRow {
                name: k.name.to_string(),
                value,
                limit,
                margin: k.margin,
                pass: k.pass,
            }
        })
        .collect();
    DesignView {
        rank: c.rank,
        title: design_title(c),
        figures,
        checks,
        governing_check: c
            .governing_check
            .map(|g| g.to_string())
            .unwrap_or_else(|| "none".into()),
        governing_margin: c.governing_margin(),
        cost: money(catalog, c.cost),
        total_error: percent(c.error_total),
    }
}

/// The matched devices are two single-transistor packages (no shared die).
fn separate_singles(catalog: &Catalog, c: &CandidateRow) -> bool {
    catalog
        .transistor(&c.part)
        .is_some_and(|t| t.devices_per_package < 2)
}

/// A failed check in a designer's terms: what the design needs against what the
/// requirement (or the part's rating) allows.
pub fn shortfall(catalog: &Catalog, name: CheckName, value: f64, limit: f64) -> String {
    let (mut v, mut l) = (
        check_value(catalog, name, value, 3),
        check_value(catalog, name, limit, 3),
    );
    if v == l && value != limit {
        v = check_value(catalog, name, value, 6);
        l = check_value(catalog, name, limit, 6);
    }
    match name {
        CheckName::Compliance => {
            format!("needs {v} of headroom, the requirement allows {l}")
        }
        CheckName::InputVoltage => format!("needs {v} at its input, the requirement allows {l}"),
        CheckName::Accuracy => format!("reaches {v} total error, the requirement allows {l}"),
        CheckName::Yield => format!("yields {v}, the requirement asks for {l}"),
        CheckName::OutputResistance => {
            format!("has {v} of output resistance, the requirement asks for at least {l}")
        }
        CheckName::HelperHeadroom => {
            format!("needs {v} of headroom for its helper transistor, {l} is available")
        }
        CheckName::Vceo => format!("puts {v} across a transistor rated (derated) for {l}"),
        CheckName::IcMax => format!("carries {v} in a transistor rated for {l}"),
        CheckName::Dissipation => format!("dissipates {v} in a package rated (derated) for {l}"),
        CheckName::Cost => format!("costs {v}, the requirement allows {l}"),
        CheckName::ThermalRunaway => "runs away thermally at an operating corner".into(),
        CheckName::NoSolution => "has an operating corner with no solution".into(),
        CheckName::Noise => {
            format!("has {v} of output current noise, the requirement allows {l}")
        }
        CheckName::RefPower => {
            format!("puts {v} into its programming resistor, rated (derated) for {l}")
        }
        CheckName::Tempco => {
            format!("drifts {v} with temperature, the requirement allows {l}")
        }
    }
}

/// The design's parts with their designators, from the catalog (`None` when a class
/// is missing, which a ranked row never has).
pub fn elements_of(catalog: &Catalog, c: &CandidateRow) -> Option<Vec<Element>> {
    let spec = DesignSpec {
        shape: c.shape,
        topology: crate::model::Topology::from_name(c.topology)?,
        pair: c.part.clone(),
        helper: c.helper.clone(),
        re1_ohm: c.re1_ohm,
        re2_ohm: c.re2_ohm,
        resistor: c.resistor.clone(),
        r_ref_ohm: c.r_ref_ohm.unwrap_or(0.0),
        r_ref_resistor: c.r_ref_resistor.clone(),
        r_ref_pick: None,
    };
    crate::check::resolve(catalog, &spec)
        .ok()
        .map(|d| d.elements())
}

/// The parts list of a design (the report's BOM table).
pub fn parts_table(catalog: &Catalog, parts: &[Element]) -> Table {
    let rows = parts
        .iter()
        .map(|e| match &e.kind {
            ElementKind::Transistor {
                polarity,
                role,
                class,
                devices_per_package,
                ..
            } => {
                let package = catalog.transistor(class).map_or(String::new(), |t| {
                    if *devices_per_package > 1 {
                        format!("{} ({} devices)", t.package, devices_per_package)
                    } else {
                        t.package.clone()
                    }
                });
                let role = match role {
                    Role::Matched { pair, member } => format!(
                        "{}: matched pair {}, {}",
                        e.netlist_name,
                        pair + 1,
                        if *member == 0 { "reference" } else { "mirror" }
                    ),
                    Role::Helper => format!("{}: helper", e.netlist_name),
                };
                vec![
                    e.designator.clone(),
                    format!("{} transistor", polarity.as_str().to_uppercase()),
                    class.clone(),
                    package,
                    role,
                ]
            }
            ElementKind::Resistor { ohm, class, .. } => {
                let value = match class.as_deref().and_then(|r| catalog.resistor(r)) {
                    Some(r) => format!(
                        "{} {} ({} tolerance)",
                        eng(*ohm, "ohm", U),
                        r.id,
                        percent(r.tolerance)
                    ),
                    None => eng(*ohm, "ohm", U),
                };
                vec![
                    e.designator.clone(),
                    "resistor".into(),
                    value,
                    String::new(),
                    e.netlist_name.to_string(),
                ]
            }
        })
        .collect();
    Table {
        header: ["designator", "part", "value", "package", "netlist role"]
            .map(String::from)
            .to_vec(),
        rows,
    }
}

/// The caution for a mirror built from separate single transistors: their dies do not
/// share a temperature, and each kelvin between them shifts V_BE and so the output.
fn separate_singles_caution(
    catalog: &Catalog,
    req: &Requirement,
    c: &CandidateRow,
    parts: &[Element],
) -> Option<String> {
    let class = catalog.transistor(&c.part)?;
    if class.devices_per_package >= 2 {
        return None;
    }
    let m = &class.model;
    let t = crate::check::ROOM_K;
    let vt = crate::device::thermal_voltage(t);
    let i = req.input_current_a.max;
    // V_BE at the current, and its slope at constant collector current from the
    // Gummel-Poon temperature law of IS (XTI, EG): dV_BE/dT = (V_BE - EG - XTI V_T) / T
    // (Gray, Hurst, Lewis & Meyer, ch. 4, band-gap reference section).
    let vbe = vt * (i / m.saturation_current_a).ln();
    let slope = (vbe - m.eg_ev - m.xti * vt) / t;
    let plain = slope.abs() / vt;
    let re = c.re1_ohm.max(c.re2_ohm);
    let names: Vec<&str> = parts
        .iter()
        .filter(|e| {
            matches!(
                e.kind,
                ElementKind::Transistor {
                    role: Role::Matched { pair: 0, .. },
                    ..
                }
            )
        })
        .map(|e| e.designator.as_str())
        .collect();
    let who = if names.len() == 2 {
        format!("{} and {}", names[0], names[1])
    } else {
        "The matched devices".into()
    };
    let degenerated = if re > 0.0 {
        format!(
            "; with {} of emitter resistance the shift is divided by 1 + I·R_E/V_T, to about {} per kelvin",
            eng(re, "ohm", U),
            percent(slope.abs() / (vt + i * re))
        )
    } else {
        String::new()
    };
    Some(format!(
        "{who} are two separate packages, not a matched pair: their dies do not share a temperature, and separate packages track poorly. At {} V_BE changes by {:.2} mV per kelvin (from the class's EG and XTI), so each kelvin of difference between the two dies shifts the output current by about {}{degenerated}. Mount them touching under one heat spreader, or choose a monolithic pair",
        eng(i, "A", U),
        slope * 1e3,
        percent(plain)
    ))
}

fn requirement_rows(req: &Requirement, catalog: &Catalog) -> Vec<(String, String)> {
    let range = |lo: f64, hi: f64, f: &dyn Fn(f64) -> String| {
        if lo == hi {
            f(lo)
        } else {
            format!("{} to {}", f(lo), f(hi))
        }
    };
    let mut rows = vec![
        ("name".to_string(), req.name.clone()),
        (
            "kind".into(),
            format!(
                "current {} ({} mirror)",
                req.kind.as_str(),
                req.kind.polarity().as_str().to_uppercase()
            ),
        ),
        ("supply".into(), eng(req.supply_v, "V", U)),
        match &req.program {
            // Programmed by a resistor from a rail: the rail and the wanted output are what
            // the designer wrote; the input current follows from the solved circuit.
            Some(p) => (
                "programming".into(),
                format!(
                    "resistor R_ref from a rail at {} (from the mirror rail), for {} out",
                    eng_range(p.rail_v.min, p.rail_v.max, "V", U),
                    eng(p.output_current_a, "A", U)
                ),
            ),
            None => (
                "input current".into(),
                range(req.input_current_a.min, req.input_current_a.max, &|x| {
                    eng(x, "A", U)
                }),
            ),
        },
        (
            "ratio n".into(),
            if (req.ratio - 1.0).abs() < 1e-12 {
                format!("{}", req.ratio)
            } else {
                format!(
                    "{}; RE2 from n·I_in·RE2 = I_in·RE1 − V_T·ln(n) at the geometric-mean input current and 25 °C, both standard values around it tried",
                    req.ratio
                )
            },
        ),
        (
            "output voltage (from the mirror rail)".into(),
            range(req.output_voltage_v.min, req.output_voltage_v.max, &|x| {
                eng(x, "V", U)
            }),
        ),
        (
            "ambient".into(),
            range(req.ambient_k.min, req.ambient_k.max, &|x| celsius(x, U)),
        ),
        (
            "accuracy".into(),
            format!(
                "|error| ≤ {} at {} sigma",
                percent(req.accuracy),
                req.confidence_sigma
            ),
        ),
    ];
    if req.accuracy_of == crate::model::AccuracyOf::Output {
        rows.push((
            "accuracy of".into(),
            "the output current against its wanted value".into(),
        ));
    }
    if let Some(t) = req.max_tempco_per_k {
        rows.push((
            "largest output tempco".into(),
            format!("{:.0} ppm/K", t * 1e6),
        ));
    }
    if let Some(y) = req.min_yield {
        rows.push(("minimum yield".into(), percent(y)));
    }
    if let Some(r) = req.min_output_resistance_ohm {
        rows.push(("minimum output resistance".into(), eng(r, "ohm", U)));
    }
    if let Some(v) = req.input_voltage_max_v {
        rows.push(("largest input voltage".into(), eng(v, "V", U)));
    }
    if let Some(c) = req.max_cost {
        rows.push(("largest cost".into(), money(catalog, c)));
    }
    rows.push(("quantity".into(), req.quantity.to_string()));
    rows.push(("load".into(), req.load.as_str().into()));
    for (what, f) in [("topologies", &req.topologies), ("classes", &req.classes)] {
        if !f.allow.is_empty() {
            rows.push((format!("allowed {what}"), f.allow.join(", ")));
        }
        if !f.deny.is_empty() {
            rows.push((format!("denied {what}"), f.deny.join(", ")));
        }
    }
    rows
}

/// Builds the page. Fails only when a plot cannot be drawn.
pub fn build_page(inp: &DecisionInputs) -> Result<Page, PlotError> {
    let (req, catalog, report) = (inp.req, inp.catalog, inp.report);
    let chosen_row = report.candidates.first();
    let chosen = chosen_row.map(|c| view(catalog, c));
    let runners_up = report
        .candidates
        .iter()
        .skip(1)
        .map(|c| view(catalog, c))
        .collect();
    let short = |row: &CandidateRow, check: CheckName| {
        row.checks
            .iter()
            .find(|k| k.name == check)
            .map(|k| shortfall(catalog, check, k.value, k.limit))
            .unwrap_or_else(|| format!("fails {check}"))
    };
    let best_rejected = inp
        .best_rejected
        .as_ref()
        .map(|(row, check, margin)| Rejected {
            design: view(catalog, row),
            check: check.to_string(),
            margin: *margin,
            headline: match chosen_row {
                Some(c) => format!(
                    "{} costs {}, {} less per mirror than the chosen design, but {}",
                    design_title(row),
                    money(catalog, row.cost),
                    money(catalog, c.cost - row.cost),
                    short(row, *check)
                ),
                None => format!("{} {}", design_title(row), short(row, *check)),
            },
        });
    let verdict = match (chosen_row, &inp.best_rejected) {
        (Some(c), _) => format!(
            "{}{} of {} candidate designs meet every requirement. Chosen ({} first): {}, {} per mirror, total error {} against {}; governing check {} with {} margin.",
            if report.feasible_at_least { "At least " } else { "" },
            report.feasible,
            report.candidate_space,
            report.prefer.as_str(),
            design_title(c),
            money(catalog, c.cost),
            percent(c.error_total),
            percent(req.accuracy),
            c.governing_check.map(|g| g.to_string()).unwrap_or_else(|| "none".into()),
            percent(c.governing_margin())
        ),
        (None, Some((row, check, _))) => format!(
            "No design among {} candidates meets every requirement. The nearest, {}, {}.",
            report.candidate_space,
            design_title(row),
            short(row, *check)
        ),
        (None, None) => format!(
            "No design among {} candidates meets every requirement.",
            report.candidate_space
        ),
    };

    let parts = chosen_row
        .and_then(|c| elements_of(catalog, c))
        .unwrap_or_default();
    let polarity = req.kind.polarity();
    let schematic_plot = (!parts.is_empty()).then(|| Plot {
        id: "schematic".into(),
        title: "Schematic of the chosen design".into(),
        svg: schematic::schematic_svg(&parts, polarity, None, req.program.map(|p| p.rail_v)),
        caption: format!(
            "Drawn from the {} netlist; designators as in the parts list and the SPICE export. {}",
            chosen_row.map_or("", |c| c.topology),
            if polarity == Polarity::Npn {
                "Current sink: the mirror rail (R) at the bottom, current flowing down into it"
            } else {
                "Current source: the mirror rail (R) at the top, current flowing up out of it"
            }
        ),
    });
    let schematic_file = chosen_row.filter(|_| !parts.is_empty()).map(|c| {
        schematic::schematic_svg(
            &parts,
            polarity,
            Some(&format!("{}: {}", req.name, design_title(c))),
            req.program.map(|p| p.rail_v),
        )
    });

    let explain = report.explain.as_ref();
    let mut budget = Vec::new();
    let mut budget_table = Table {
        header: ["cause", "kind", "error"].map(String::from).to_vec(),
        rows: vec![],
    };
    let mut plots: Vec<Plot> = schematic_plot.into_iter().collect();
    if let Some(b) = explain.and_then(|e| e.budget.as_ref()) {
        for item in &b.systematic {
            budget.push(BudgetBar {
                cause: item.cause.to_string(),
                value: item.error,
                random: false,
            });
            budget_table.rows.push(vec![
                item.cause.into(),
                "systematic".into(),
                percent(item.error),
            ]);
        }
        budget_table.rows.push(vec![
            "systematic total".into(),
            "signed sum".into(),
            percent(b.systematic_total),
        ]);
        for item in &b.random {
            budget.push(BudgetBar {
                cause: item.cause.to_string(),
                value: item.error,
                random: true,
            });
            budget_table.rows.push(vec![
                item.cause.into(),
                "random, 1 sigma".into(),
                percent(item.error),
            ]);
        }
        budget_table.rows.push(vec![
            "random total".into(),
            "root sum of squares, 1 sigma".into(),
            percent(b.random_sigma),
        ]);
        plots.push(Plot {
            id: "budget".into(),
            title: "Error budget of the chosen design".into(),
            svg: plot::error_budget_svg(&budget, req.accuracy)?,
            caption: format!(
                "At the worst corner: {}, V_out {}, ambient {}. Systematic causes are signed and add up; random causes are 1 sigma and add in quadrature; the accuracy check uses systematic + {} sigma{}",
                match b.rail {
                    Some(v) => format!("rail {}", eng(v, "V", U)),
                    None => format!("I_in {}", eng(b.i_in, "A", U)),
                },
                eng(b.v_out, "V", U),
                celsius(b.t_amb_c + ZERO_CELSIUS_K, U),
                req.confidence_sigma,
                chosen_row
                    .and_then(|c| super::rank::random_sigma_note(
                        b.random_sigma,
                        c.error_random_sigma,
                        c.error_total
                    ))
                    .map_or(String::new(), |n| format!(". {}", n.trim_end_matches('.')))
            ),
        });
    }
    if let Some(n) = report.candidates.first().and_then(|c| c.noise.as_ref()) {
        let mut bars: Vec<NoiseBar> = n
            .sources
            .iter()
            .map(|s| NoiseBar {
                source: s.source.to_string(),
                density_a_per_rthz: s.density_a_per_rthz,
            })
            .collect();
        bars.push(NoiseBar {
            source: "total".into(),
            density_a_per_rthz: n.density_a_per_rthz,
        });
        let dominant = n.sources.first().map_or(String::new(), |s| {
            format!(
                "; {} gives {} of the noise power",
                s.source,
                percent(s.fraction)
            )
        });
        plots.push(Plot {
            id: "noise".into(),
            title: "Output current noise of the chosen design".into(),
            svg: plot::noise_breakdown_svg(&bars, req.max_noise.map(|l| l.density_a_per_rthz))?,
            caption: format!(
                "At the worst corner: I_in {}, V_out {}, ambient {}; {} {}{}. Sources add in power. {}",
                eng(n.i_in, "A", U),
                eng(n.v_out, "V", U),
                celsius(n.t_amb_c + ZERO_CELSIUS_K, U),
                n.measure,
                eng(n.density_a_per_rthz, "A/√Hz", U),
                dominant,
                capitalised(crate::rank::NOISE_VALIDITY)
            ),
        });
    }
    if let Some(set) = inp.curves {
        plots.push(Plot {
            id: "curves".into(),
            title: "Output curves of the chosen design".into(),
            svg: plot::output_curves_svg(set, None)?,
            caption: "Nominal devices with self-heating, swept from 0 V to the supply; gaps are points without a solution (saturation or thermal runaway). Green bands: the required accuracy around n·I_in; blue: the required output-voltage window".into(),
        });
        if req.input_current_a.max > req.input_current_a.min {
            plots.push(Plot {
                id: "error-vs-input".into(),
                title: "Error against programming current".into(),
                svg: plot::error_vs_input_svg(set)?,
                caption:
                    "At the ends of the output-voltage window, nominal devices with self-heating"
                        .into(),
            });
        }
        if let Some(svg) = plot::output_vs_rail_svg(set)? {
            plots.push(Plot {
                id: "output-vs-rail".into(),
                title: "Output current against the program rail".into(),
                svg,
                caption: "R_ref in the circuit, nominal devices with self-heating, at the ends of the output-voltage window; blue: the rail's range; green: the wanted output current with the required accuracy".into(),
            });
        }
    }

    let corners = match explain {
        Some(e) => Table {
            header: [
                "I_in",
                "V_out",
                "ambient",
                "I_out",
                "error",
                "random (1σ)",
                "r_out",
                "V(in)",
                "hottest junction",
            ]
            .map(String::from)
            .to_vec(),
            rows: e
                .corners
                .iter()
                .map(|c| {
                    vec![
                        eng(c.i_in, "A", U),
                        eng(c.v_out, "V", U),
                        celsius(c.t_amb_c + ZERO_CELSIUS_K, U),
                        eng(c.i_out, "A", U),
                        percent(c.error),
                        percent(c.error_random_sigma),
                        eng(c.r_out, "ohm", U),
                        eng(c.v_in, "V", U),
                        celsius(c.t_junction_max_c + ZERO_CELSIUS_K, U),
                    ]
                })
                .collect(),
        },
        None => Table::default(),
    };

    let geo = req.input_current_a.max / req.input_current_a.min > 10.0;
    let assumptions = vec![
        (
            "device model".to_string(),
            "Ebers–Moll transport form with the forward Early effect on the transport current, optional IKF roll-off of the base current, Gummel–Poon temperature rules (XTI, EG, XTB); solved circuits (Newton–Raphson on the topology netlist), not closed forms".to_string(),
        ),
        (
            "self-heating".into(),
            "junction temperatures from each device's dissipation through the class's self and mutual thermal resistances, within a package only".into(),
        ),
        (
            "corners".into(),
            format!(
                "I_in at min and max{}; V_out at min and max; ambient at min, 25 °C and max",
                if geo { " and their geometric mean" } else { "" }
            ),
        ),
        (
            "random error".into(),
            "from the class's V_BE offset and beta mismatch sigmas and the resistor tolerance read as ±3 sigma".into(),
        ),
        (
            "compliance".into(),
            format!(
                "the lowest V_out at which every transistor keeps V_CE ≥ min_vce = {} at every corner with I_in max, at every ambient (the cold corner has the largest V_BE); a transistor with V_CB < 0 at V_out min is a caution, not a failure",
                eng(req.min_vce_v, "V", U)
            ),
        ),
        (
            "failed solves".into(),
            "a corner that cannot be solved fails thermal-runaway or no-solution, naming the build (nominal design or error-budget build); figures that needed it are not available, never computed from the other corners".into(),
        ),
        ("Monte Carlo seed".into(), report.seed.to_string()),
        ("Monte Carlo samples".into(), report.samples.to_string()),
        (
            "search".into(),
            if report.exhaustive {
                "exhaustive".into()
            } else {
                "screened with closed-form bounds, every shown design fully solved".to_string()
            },
        ),
        ("catalog".into(), inp.provenance.catalog_source.clone()),
        ("catalog SHA-256".into(), inp.provenance.catalog_sha256.clone()),
        (
            "catalog values".into(),
            "typical of each class, not guaranteed; prices illustrative".into(),
        ),
        ("tool".into(), format!("mirrorpick {}", inp.provenance.tool_version)),
        ("date".into(), inp.date.clone()),
    ];

    let mut cautions: Vec<String> = report.cautions.iter().map(|c| c.to_string()).collect();
    if let Some(e) = explain {
        for c in &e.cautions {
            let s = c.to_string();
            if !cautions.contains(&s) {
                cautions.push(s);
            }
        }
    }
    if let Some(c) = chosen_row.and_then(|c| separate_singles_caution(catalog, req, c, &parts)) {
        cautions.push(c);
    }
    cautions.push(
        "This record documents a computed choice. Dissipation near a rating, high voltage and LED or laser drive are for the part's datasheet, local codes and licensed engineering practice to settle; confirm the design on the bench before release".into(),
    );

    Ok(Page {
        title: req.name.clone(),
        verdict,
        feasible: chosen_row.is_some(),
        requirement: requirement_rows(req, catalog),
        parts: if parts.is_empty() {
            Table::default()
        } else {
            parts_table(catalog, &parts)
        },
        schematic_file,
        chosen,
        runners_up,
        counts: counts_sentence(report),
        rejected_by: report
            .rejected_by
            .iter()
            .map(|(k, v)| (k.to_string(), *v))
            .collect(),
        best_rejected,
        relax: report.relax.iter().map(|r| r.text.clone()).collect(),
        budget,
        budget_table,
        plots,
        corners,
        assumptions,
        cautions,
    })
}

/// The candidate space and the feasible count, with "at least" where the search left
/// candidates unverified: the same numbers as `rank` on the same files.
fn counts_sentence(report: &RankReport) -> String {
    let mut s = format!(
        "{} candidate designs: {}{} feasible",
        report.candidate_space,
        if report.feasible_at_least {
            "at least "
        } else {
            ""
        },
        report.feasible
    );
    if report.unverified > 0 {
        s.push_str(&format!(
            " ({} more passed every screen but cost more than the designs shown, so were not verified)",
            report.unverified
        ));
    }
    s.push_str(". A rejected design is counted under the check that rejected it: the screen that proved it fails, or the first failing check.");
    s
}
