//! The schematic of one design, drawn from its netlist (the designated parts of
//! `check::refdes`), never from a per-topology drawing: a new topology, a multi-output
//! form or an added part (a programming resistor) is drawn by the same rules.
//!
//! Layout, in sink form (NPN: current flows down into the mirror rail at the bottom); a
//! source (PNP) is the same drawing turned upside down, the mirror rail at the top:
//! * a transistor's *level* is one above the node its emitter sits on (the mirror rail
//!   and the top of an emitter resistor are level 0, a collector node takes its
//!   transistor's level); an emitter on a node that only drives bases sits one above
//!   the highest transistor it drives (a beta helper above the pair);
//! * transistors stack in a *column* with the transistors above them (collector to
//!   emitter); columns are ordered input side first, then devices whose collector goes
//!   to the opposite rail, then the outputs; bases face the middle of the drawing;
//! * resistors to the mirror rail hang below their emitter; resistors to the opposite
//!   rail, or to the program rail `P` (the programming resistor), hang from it above
//!   their node; any other resistor gets a column of its own;
//! * the program rail is a short rail of its own at the opposite rail's height, above
//!   the programming resistor, labelled with its voltage range; the opposite rail
//!   stops short of it;
//! * every other net is a horizontal trunk (at the height of a base on it when it has
//!   one) with each pin brought to it through the lane beside its transistor; a
//!   collector directly below an emitter of the same net is joined straight; the input
//!   and output terminals sit above their column; junctions get dots.
//!
//! Written with maud, so every text (class ids come from user catalogs) is escaped.
//! Every part is one `<g class="part">` carrying `data-designator`, `data-value` and
//! `data-netlist`, which tests and scripts read back.

use std::collections::BTreeMap;

use maud::{html, Markup};

use super::eng::{eng, eng_range, Charset};
use crate::check::refdes::{Element, ElementKind, PROGRAM_RAIL};
use crate::model::{Polarity, Range};

const COL_W: f64 = 190.0;
/// Where the first column sits before the drawing is shifted to fit its labels.
const MARGIN_X: f64 = 150.0;
const LEVEL_H: f64 = 160.0;
/// Height of the band of emitter resistors above the mirror rail.
const RES_BAND: f64 = 130.0;
const FONT: &str = "system-ui, sans-serif";
const TEXT_PX: f64 = 14.0;
const STROKE: &str = "#1b1b1b";

/// The value printed beside a part: the class of a transistor, the resistance of a
/// resistor.
pub fn value_text(e: &Element) -> String {
    match &e.kind {
        ElementKind::Transistor { class, .. } => class.clone(),
        ElementKind::Resistor { ohm, .. } => eng(*ohm, "ohm", Charset::Unicode),
    }
}

fn is_port(node: &str) -> bool {
    node == "in" || node.starts_with("out")
}

#[derive(Debug, Clone, Copy, PartialEq)]
enum PinKind {
    Base,
    Collector,
    Emitter,
    /// The upper end of a resistor (sink coordinates).
    Top,
    /// The lower end of a resistor.
    Bottom,
    Port,
}

#[derive(Debug, Clone, Copy)]
struct Pin {
    x: f64,
    y: f64,
    kind: PinKind,
    /// The x of the free lane beside the pin's part (where a vertical wire may run).
    lane: f64,
}

/// A placed part: centre, which way its base faces (+1 right, -1 left).
#[derive(Debug, Clone, Copy)]
struct Placed {
    x: f64,
    y: f64,
    face: f64,
    /// Resistor span (top, bottom) in sink coordinates; transistors: unused.
    span: (f64, f64),
}

type Seg = ((f64, f64), (f64, f64));

/// Is `node` a rail drawn at the top (sink coordinates): the opposite or program rail.
fn top_rail(node: &str) -> bool {
    node == "S" || node == PROGRAM_RAIL
}

/// Draws the schematic of `parts` as one standalone SVG element. `title` heads it;
/// `program_rail` is the range of the program rail `P` when a part hangs from it.
pub fn schematic_svg(
    parts: &[Element],
    polarity: Polarity,
    title: Option<&str>,
    program_rail: Option<Range>,
) -> String {
    let tr: Vec<usize> = (0..parts.len())
        .filter(|&i| parts[i].is_transistor())
        .collect();
    let terms = |i: usize| match &parts[i].kind {
        ElementKind::Transistor {
            collector,
            base,
            emitter,
            ..
        } => (*collector, *base, *emitter),
        ElementKind::Resistor { a, b, .. } => (*a, *b, *b),
    };

    // Node levels (see the module doc).
    let mut node_level: BTreeMap<&str, i32> = BTreeMap::new();
    node_level.insert("R", 0);
    for e in parts {
        if let ElementKind::Resistor { a, b, .. } = &e.kind {
            if *b == "R" {
                node_level.insert(a, 0);
            } else if *a == "R" {
                node_level.insert(b, 0);
            }
        }
    }
    let mut level: BTreeMap<usize, i32> = BTreeMap::new();
    for _ in 0..=tr.len() {
        for &i in &tr {
            let (c, _, e) = terms(i);
            if let Some(&l) = node_level.get(e) {
                level.insert(i, l + 1);
                if c != "S" && !is_port(c) {
                    node_level.entry(c).or_insert(l + 1);
                }
            }
        }
    }
    for _ in 0..=tr.len() {
        for &i in &tr {
            if level.contains_key(&i) {
                continue;
            }
            let (_, _, e) = terms(i);
            let driven = tr
                .iter()
                .filter(|&&j| terms(j).1 == e)
                .filter_map(|j| level.get(j))
                .max()
                .copied();
            let known_driven = tr
                .iter()
                .filter(|&&j| terms(j).1 == e)
                .all(|j| level.contains_key(j));
            if known_driven {
                level.insert(i, driven.unwrap_or(0) + 1);
            }
        }
    }
    for &i in &tr {
        level.entry(i).or_insert(1);
    }
    let max_level = level.values().copied().max().unwrap_or(1).max(1);

    // Columns: group by the collector node at the top of each stack.
    let top_of = |i: usize| -> &str {
        let mut cur = i;
        for _ in 0..tr.len() {
            let c = terms(cur).0;
            match tr.iter().find(|&&j| j != cur && terms(j).2 == c) {
                Some(&j) => cur = j,
                None => break,
            }
        }
        terms(cur).0
    };
    let mut groups: Vec<&str> = Vec::new();
    for &i in &tr {
        let t = top_of(i);
        if !groups.contains(&t) {
            groups.push(t);
        }
    }
    let rank = |g: &str| match g {
        "in" => 0,
        "S" => 1,
        _ => 2,
    };
    groups.sort_by_key(|g| rank(g)); // stable: outputs keep their order
    let mut columns: Vec<Vec<usize>> = Vec::new();
    let mut col_of: BTreeMap<usize, usize> = BTreeMap::new();
    for g in &groups {
        let mut members: Vec<usize> = tr.iter().copied().filter(|&i| top_of(i) == *g).collect();
        members.sort_by_key(|i| level[i]);
        let mut cols_here: Vec<Vec<usize>> = Vec::new();
        for m in members {
            match cols_here
                .iter_mut()
                .find(|c| c.iter().all(|&o| level[&o] != level[&m]))
            {
                Some(c) => c.push(m),
                None => cols_here.push(vec![m]),
            }
        }
        for c in cols_here {
            for &m in &c {
                col_of.insert(m, columns.len());
            }
            columns.push(c);
        }
    }

    // Resistors: below their emitter, from the opposite rail, or a column of their own.
    let emitter_owner = |node: &str| tr.iter().copied().find(|&j| terms(j).2 == node);
    let toucher = |node: &str| {
        tr.iter()
            .copied()
            .find(|&j| terms(j).0 == node || terms(j).1 == node || terms(j).2 == node)
    };
    #[derive(Clone, Copy, PartialEq)]
    enum Band {
        Bottom,
        Top,
        Middle,
    }
    let mut res_place: BTreeMap<usize, (usize, Band)> = BTreeMap::new();
    let mut extra_cols = columns.len();
    let mut top_band = false;
    for (i, e) in parts.iter().enumerate() {
        let ElementKind::Resistor { a, b, .. } = &e.kind else {
            continue;
        };
        let (other, band) = if *b == "R" {
            (*a, Band::Bottom)
        } else if *a == "R" {
            (*b, Band::Bottom)
        } else if top_rail(b) {
            (*a, Band::Top)
        } else if top_rail(a) {
            (*b, Band::Top)
        } else {
            ("", Band::Middle)
        };
        let col = match band {
            Band::Bottom => emitter_owner(other).or(toucher(other)).map(|j| col_of[&j]),
            Band::Top => toucher(other).map(|j| col_of[&j]),
            Band::Middle => None,
        };
        let taken = |c: usize, bd: Band| res_place.values().any(|&(c2, b2)| c2 == c && b2 == bd);
        let col = match col {
            Some(c) if !taken(c, band) => c,
            _ => {
                extra_cols += 1;
                extra_cols - 1
            }
        };
        if band == Band::Top {
            top_band = true;
        }
        res_place.insert(i, (col, band));
    }
    let n_cols = extra_cols.max(1);

    // Geometry (sink coordinates: y grows downwards, the mirror rail at the bottom).
    // A long title (requirement: design) goes on two lines, split after the colon.
    let title_lines: Vec<&str> = match title {
        Some(t) => match t.split_once(": ") {
            Some((a, b)) => vec![a, b],
            None => vec![t],
        },
        None => vec![],
    };
    let title_h = 20.0 * title_lines.len() as f64 + if title.is_some() { 14.0 } else { 0.0 };
    let y_s = title_h + 40.0;
    let y_port = y_s + if top_band { 150.0 } else { 60.0 };
    let level_y = |l: i32| y_port + 90.0 + f64::from(max_level - l) * LEVEL_H;
    let y_r = level_y(1) + 40.0 + RES_BAND;
    let height = y_r + 50.0;
    // Columns wide enough that a transistor's label (designator over class, beside the
    // device) clears the neighbouring device: long class ids in a row of five outputs
    // otherwise run into each other.
    let label_w = tr
        .iter()
        .map(|&i| value_text(&parts[i]).chars().count() as f64 * TEXT_PX * 0.6)
        .fold(0.0, f64::max);
    let col_w = COL_W.max(label_w + 34.0 + 27.0 + 24.0);
    let col_x = |c: usize| MARGIN_X + c as f64 * col_w;
    let centre = (n_cols as f64 - 1.0) / 2.0;

    let mut placed: BTreeMap<usize, Placed> = BTreeMap::new();
    for &i in &tr {
        let c = col_of[&i];
        placed.insert(
            i,
            Placed {
                x: col_x(c),
                y: level_y(level[&i]),
                face: if (c as f64) < centre { 1.0 } else { -1.0 },
                span: (0.0, 0.0),
            },
        );
    }
    for (&i, &(c, band)) in &res_place {
        let (_, b, _) = terms(i);
        let node = if b == "R" || top_rail(b) {
            terms(i).0
        } else {
            b
        };
        // Under (or over) the collector/emitter lead of the part it belongs to.
        let lead_x = emitter_owner(node)
            .or(toucher(node))
            .and_then(|j| placed.get(&j))
            .filter(|p| col_x(c) == p.x)
            .map_or(col_x(c), |p| p.x - p.face * 10.0);
        let span = match band {
            Band::Bottom => (y_r - RES_BAND + 25.0, y_r - 25.0),
            Band::Top => (y_s + 25.0, y_port - 25.0),
            Band::Middle => {
                let m = level_y(max_level.div_euclid(2).max(1));
                (m - 40.0, m + 40.0)
            }
        };
        placed.insert(
            i,
            Placed {
                x: lead_x,
                y: (span.0 + span.1) / 2.0,
                face: 1.0,
                span,
            },
        );
    }

    // Pins by net.
    let mut nets: BTreeMap<&str, Vec<Pin>> = BTreeMap::new();
    for (i, e) in parts.iter().enumerate() {
        let Some(p) = placed.get(&i) else { continue };
        match &e.kind {
            ElementKind::Transistor {
                collector,
                base,
                emitter,
                ..
            } => {
                let lead = p.x - p.face * 10.0;
                let blane = p.x + p.face * 40.0;
                nets.entry(collector).or_default().push(Pin {
                    x: lead,
                    y: p.y - 40.0,
                    kind: PinKind::Collector,
                    lane: blane,
                });
                nets.entry(base).or_default().push(Pin {
                    x: blane,
                    y: p.y,
                    kind: PinKind::Base,
                    lane: blane,
                });
                nets.entry(emitter).or_default().push(Pin {
                    x: lead,
                    y: p.y + 40.0,
                    kind: PinKind::Emitter,
                    lane: blane,
                });
            }
            ElementKind::Resistor { a, b, .. } => {
                // The rail end is at the rail side; otherwise `a` on top.
                let (top, bottom) = if *a == "R" || top_rail(b) {
                    (*b, *a)
                } else {
                    (*a, *b)
                };
                nets.entry(top).or_default().push(Pin {
                    x: p.x,
                    y: p.span.0,
                    kind: PinKind::Top,
                    lane: p.x + 30.0,
                });
                nets.entry(bottom).or_default().push(Pin {
                    x: p.x,
                    y: p.span.1,
                    kind: PinKind::Bottom,
                    lane: p.x + 30.0,
                });
            }
        }
    }

    // Obstacles: the boxes of placed parts (a vertical wire must not run through one).
    let boxes: Vec<(f64, f64, f64, f64)> = placed
        .iter()
        .map(|(&i, p)| {
            if parts[i].is_transistor() {
                (p.x - 30.0, p.y - 39.0, p.x + 30.0, p.y + 39.0)
            } else {
                (p.x - 10.0, p.span.0 + 1.0, p.x + 10.0, p.span.1 - 1.0)
            }
        })
        .collect();
    let clear_v = |x: f64, y0: f64, y1: f64| {
        let (lo, hi) = (y0.min(y1), y0.max(y1));
        !boxes
            .iter()
            .any(|&(bx0, by0, bx1, by1)| x > bx0 && x < bx1 && hi > by0 && lo < by1)
    };

    let mut wires: Vec<Seg> = Vec::new();
    let mut ports: Vec<(&str, f64)> = Vec::new();
    let mut rail_taps: Vec<(f64, f64)> = Vec::new();
    for (&net, pins) in &nets {
        if net == "R" || top_rail(net) {
            let rail = if net == "R" { y_r } else { y_s };
            for p in pins {
                wires.push(((p.x, p.y), (p.x, rail)));
                rail_taps.push((p.x, rail));
            }
            continue;
        }
        let mut pins = pins.clone();
        if is_port(net) {
            // The terminal sits above the net's first collector (or first pin).
            let x = pins
                .iter()
                .find(|p| p.kind == PinKind::Collector || p.kind == PinKind::Top)
                .or(pins.first())
                .map_or(col_x(0), |p| p.x);
            ports.push((net, x));
            pins.push(Pin {
                x,
                y: y_port,
                kind: PinKind::Port,
                lane: x,
            });
        }
        // Pins joined straight down: a port or emitter above a collector (or resistor
        // top) in the same lead, with nothing in between; each joins the nearest pin
        // below it, so a resistor above a terminal joins the terminal, not past it.
        let mut served = vec![false; pins.len()];
        for a in 0..pins.len() {
            let pa = pins[a];
            if !matches!(pa.kind, PinKind::Port | PinKind::Emitter | PinKind::Bottom) {
                continue;
            }
            let below = (0..pins.len())
                .filter(|&b| {
                    let pb = pins[b];
                    let lower = matches!(pb.kind, PinKind::Collector | PinKind::Top)
                        || (pb.kind == PinKind::Port && pa.kind == PinKind::Bottom);
                    b != a
                        && lower
                        && (pa.x - pb.x).abs() < 0.5
                        && pa.y < pb.y
                        && clear_v(pa.x, pa.y, pb.y)
                })
                .min_by(|&b, &c| pins[b].y.total_cmp(&pins[c].y));
            if let Some(b) = below {
                wires.push(((pa.x, pa.y), (pins[b].x, pins[b].y)));
                served[a] = true;
            }
        }
        let live: Vec<usize> = (0..pins.len()).filter(|&k| !served[k]).collect();
        if live.len() < 2 {
            continue;
        }
        // The trunk: at a base when there is one, else at the highest live pin.
        let y_t = pins
            .iter()
            .filter(|p| p.kind == PinKind::Base)
            .map(|p| p.y)
            .fold(f64::INFINITY, f64::min);
        let y_t = if y_t.is_finite() {
            y_t
        } else {
            live.iter()
                .map(|&k| pins[k].y)
                .fold(f64::INFINITY, f64::min)
        };
        let mut xs: Vec<f64> = Vec::new();
        for &k in &live {
            let p = pins[k];
            if (p.y - y_t).abs() < 0.5 {
                xs.push(p.x);
                continue;
            }
            let up = y_t < p.y;
            let escape = match p.kind {
                PinKind::Collector | PinKind::Top | PinKind::Port => -18.0,
                _ => 18.0,
            };
            if clear_v(p.x, p.y, y_t) && (up == (escape < 0.0) || p.kind == PinKind::Base) {
                wires.push(((p.x, p.y), (p.x, y_t)));
                xs.push(p.x);
            } else {
                let ye = p.y + escape;
                wires.push(((p.x, p.y), (p.x, ye)));
                wires.push(((p.x, ye), (p.lane, ye)));
                wires.push(((p.lane, ye), (p.lane, y_t)));
                xs.push(p.lane);
            }
        }
        let (lo, hi) = xs
            .iter()
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(a, b), &x| {
                (a.min(x), b.max(x))
            });
        if hi > lo {
            wires.push(((lo, y_t), (hi, y_t)));
        }
    }

    // Junction dots: three or more wire ends meeting, or a wire ending inside another.
    let on = |p: (f64, f64), s: &Seg| {
        let ((x0, y0), (x1, y1)) = *s;
        let within = |v: f64, a: f64, b: f64| v > a.min(b) + 0.5 && v < a.max(b) - 0.5;
        ((x0 - x1).abs() < 0.5 && (p.0 - x0).abs() < 0.5 && within(p.1, y0, y1))
            || ((y0 - y1).abs() < 0.5 && (p.1 - y0).abs() < 0.5 && within(p.0, x0, x1))
    };
    let same = |a: (f64, f64), b: (f64, f64)| (a.0 - b.0).abs() < 0.5 && (a.1 - b.1).abs() < 0.5;
    let mut dots: Vec<(f64, f64)> = Vec::new();
    let ends: Vec<(f64, f64)> = wires.iter().flat_map(|s| [s.0, s.1]).collect();
    for &p in &ends {
        let degree = ends.iter().filter(|&&q| same(p, q)).count()
            + 2 * wires.iter().filter(|s| on(p, s)).count();
        if degree >= 3 && !dots.iter().any(|&d| same(d, p)) {
            dots.push(p);
        }
    }
    // The rails span the columns; the drawing's width follows from its labels.
    let (rail_lo, rail_hi) = (col_x(0) - 90.0, col_x(n_cols - 1) + 90.0);
    let text_w = |s: &str| s.chars().count() as f64 * TEXT_PX * 0.6;
    let mut x_lo = rail_lo;
    let mut x_hi = rail_hi;
    // The program rail: a short rail over the parts hanging from it, its label to the
    // left; the opposite rail keeps what is left of its span, wherever it has taps.
    let p_xs: Vec<f64> = nets
        .get(PROGRAM_RAIL)
        .map(|ps| ps.iter().map(|p| p.x).collect())
        .unwrap_or_default();
    let p_span = (!p_xs.is_empty()).then(|| {
        let lo = p_xs.iter().copied().fold(f64::INFINITY, f64::min) - 40.0;
        let hi = p_xs.iter().copied().fold(f64::NEG_INFINITY, f64::max) + 40.0;
        (lo, hi)
    });
    let p_label = [
        "P: program rail".to_string(),
        match program_rail {
            // Measured from the mirror rail R, as every voltage (below it for a source).
            Some(r) => format!("{} from R", eng_range(r.min, r.max, "V", Charset::Unicode)),
            None => "voltage not given".to_string(),
        },
    ];
    let s_taps: Vec<f64> = nets
        .get("S")
        .map(|ps| ps.iter().map(|p| p.x).collect())
        .unwrap_or_default();
    let s_segments: Vec<(f64, f64)> = match p_span {
        None => vec![(rail_lo, rail_hi)],
        Some((plo, phi)) => [(rail_lo, plo - 24.0), (phi + 24.0, rail_hi)]
            .into_iter()
            .filter(|&(a, b)| b - a >= 60.0 || s_taps.iter().any(|&x| x >= a && x <= b))
            .collect(),
    };
    if let Some((plo, _)) = p_span {
        let w = p_label.iter().map(|l| text_w(l)).fold(0.0, f64::max);
        x_lo = x_lo.min(plo - 10.0 - w);
    }
    for (&i, p) in &placed {
        let e = &parts[i];
        let w = text_w(&e.designator).max(text_w(&value_text(e)));
        if e.is_transistor() {
            let lx = p.x - p.face * 34.0;
            if p.face > 0.0 {
                x_lo = x_lo.min(lx - w);
            } else {
                x_hi = x_hi.max(lx + w);
            }
        } else {
            x_hi = x_hi.max(p.x + 16.0 + w);
        }
    }
    for (name, x) in &ports {
        x_hi = x_hi.max(x + 10.0 + text_w(&port_label(name)));
    }
    let dx = 16.0 - x_lo;
    let title_w = title_lines
        .iter()
        .map(|t| text_w(t) * 1.08 + 32.0)
        .fold(0.0, f64::max);
    let width = (x_hi + dx + 16.0).max(title_w);

    // Sink coordinates -> drawing: a source is turned upside down.
    let flip = polarity == Polarity::Pnp;
    let fy = |y: f64| if flip { height - y + title_h } else { y };
    let sink = polarity == Polarity::Npn;

    let line = |x1: f64, y1: f64, x2: f64, y2: f64, w: f64| -> Markup {
        html! { line x1=(r(x1)) y1=(r(fy(y1))) x2=(r(x2)) y2=(r(fy(y2))) stroke=(STROKE) stroke-width=(w) stroke-linecap="round" {} }
    };
    let text = |x: f64, y: f64, anchor: &str, weight: &str, s: &str| -> Markup {
        html! { text x=(r(x)) y=(r(y)) text-anchor=(anchor) font-family=(FONT) font-size=(TEXT_PX) font-weight=(weight) fill=(STROKE) { (s) } }
    };

    let part_svg = |i: usize, e: &Element| -> Markup {
        let Some(p) = placed.get(&i) else {
            return html! {};
        };
        let value = value_text(e);
        match &e.kind {
            ElementKind::Transistor { polarity: pol, .. } => {
                let f = p.face;
                let bar = p.x + f * 12.0;
                let lead = p.x - f * 10.0;
                let (x, y) = (p.x, p.y);
                // Emitter arrow: out of the device for NPN, into it for PNP.
                let (tip, tail) = if *pol == Polarity::Npn {
                    ((lead, y + 24.0), (bar, y + 8.0))
                } else {
                    ((bar, y + 8.0), (lead, y + 24.0))
                };
                let (dx, dy) = (tip.0 - tail.0, tip.1 - tail.1);
                let len = (dx * dx + dy * dy).sqrt();
                let (ux, uy) = (dx / len, dy / len);
                let base_pt = (tip.0 - 9.0 * ux, tip.1 - 9.0 * uy);
                let left = (base_pt.0 - 4.5 * uy, base_pt.1 + 4.5 * ux);
                let right = (base_pt.0 + 4.5 * uy, base_pt.1 - 4.5 * ux);
                let arrow = format!(
                    "{},{} {},{} {},{}",
                    r(tip.0),
                    r(fy(tip.1)),
                    r(left.0),
                    r(fy(left.1)),
                    r(right.0),
                    r(fy(right.1))
                );
                let label_x = x - f * 34.0;
                let anchor = if f > 0.0 { "end" } else { "start" };
                html! {
                    g class="part" data-designator=(e.designator) data-value=(value) data-netlist=(e.netlist_name) {
                        circle cx=(r(x - f * 1.0)) cy=(r(fy(y))) r="27" fill="none" stroke="#888" stroke-width="1" {}
                        (line(p.x + f * 40.0, y, bar, y, 1.6))
                        (line(bar, y - 17.0, bar, y + 17.0, 3.2))
                        (line(bar, y - 8.0, lead, y - 24.0, 1.6))
                        (line(lead, y - 24.0, lead, y - 40.0, 1.6))
                        (line(bar, y + 8.0, lead, y + 24.0, 1.6))
                        (line(lead, y + 24.0, lead, y + 40.0, 1.6))
                        polygon points=(arrow) fill=(STROKE) {}
                        (text(label_x, fy(y) - 4.0, anchor, "600", &e.designator))
                        (text(label_x, fy(y) + 14.0, anchor, "normal", &value))
                    }
                }
            }
            ElementKind::Resistor { .. } => {
                let (y0, y1) = p.span;
                let (z0, z1) = (y0 + 12.0, y1 - 12.0);
                let steps = 6;
                let mut pts = vec![(p.x, y0), (p.x, z0)];
                for k in 0..steps {
                    let yy = z0 + (z1 - z0) * (k as f64 + 0.5) / steps as f64;
                    let xx = p.x + if k % 2 == 0 { 7.0 } else { -7.0 };
                    pts.push((xx, yy));
                }
                pts.push((p.x, z1));
                pts.push((p.x, y1));
                let d = pts
                    .iter()
                    .map(|(x, y)| format!("{},{}", r(*x), r(fy(*y))))
                    .collect::<Vec<_>>()
                    .join(" ");
                let ym = fy(p.y);
                html! {
                    g class="part" data-designator=(e.designator) data-value=(value) data-netlist=(e.netlist_name) {
                        polyline points=(d) fill="none" stroke=(STROKE) stroke-width="1.6" stroke-linejoin="round" {}
                        (text(p.x + 16.0, ym - 4.0, "start", "600", &e.designator))
                        (text(p.x + 16.0, ym + 14.0, "start", "normal", &value))
                    }
                }
            }
        }
    };

    let (r_label, s_label) = if sink {
        ("R: mirror rail, 0 V", "S: opposite rail, +V_S")
    } else {
        ("R: mirror rail, +V_S", "S: opposite rail, 0 V")
    };
    let rail_label_dy = |y: f64| if fy(y) > height / 2.0 { 20.0 } else { -8.0 };
    let s_label_x = s_segments.first().map_or(rail_lo, |s| s.0);
    let on_rail_end = |x: f64, y: f64| {
        let ends = if (y - y_s).abs() < 0.5 {
            s_segments
                .iter()
                .flat_map(|s| [s.0, s.1])
                .chain(p_span.into_iter().flat_map(|s| [s.0, s.1]))
                .collect::<Vec<f64>>()
        } else {
            vec![rail_lo, rail_hi]
        };
        ends.iter().any(|&e| (x - e).abs() < 1.0)
    };

    let svg = html! {
        svg xmlns="http://www.w3.org/2000/svg" width=(r(width)) height=(r(height)) viewBox=(format!("0 0 {} {}", r(width), r(height))) class="schematic" role="img" aria-label="schematic of the chosen design" {
            rect x="0" y="0" width=(r(width)) height=(r(height)) fill="#fff" {}
            @for (k, t) in title_lines.iter().enumerate() {
                (text(width / 2.0, 24.0 + 20.0 * k as f64, "middle", "600", t))
            }
            g transform=(format!("translate({},0)", r(dx))) {
            g class="rails" {
                (line(rail_lo, y_r, rail_hi, y_r, 2.4))
                (text(rail_lo, fy(y_r) + rail_label_dy(y_r), "start", "normal", r_label))
                @for (a, b) in &s_segments {
                    (line(*a, y_s, *b, y_s, 2.4))
                }
                (text(s_label_x, fy(y_s) + rail_label_dy(y_s), "start", "normal", s_label))
                @if let Some((plo, phi)) = p_span {
                    g class="program-rail" data-rail=(p_label[1]) {
                        (line(plo, y_s, phi, y_s, 2.4))
                        (text(plo - 10.0, fy(y_s) - 4.0, "end", "600", &p_label[0]))
                        (text(plo - 10.0, fy(y_s) + 14.0, "end", "normal", &p_label[1]))
                    }
                }
            }
            g class="wires" {
                @for ((x1, y1), (x2, y2)) in &wires {
                    (line(*x1, *y1, *x2, *y2, 1.6))
                }
                @for (x, y) in dots.iter().chain(rail_taps.iter().filter(|(x, y)| !on_rail_end(*x, *y))) {
                    circle cx=(r(*x)) cy=(r(fy(*y))) r="3.2" fill=(STROKE) {}
                }
            }
            g class="ports" {
                @for (name, x) in &ports {
                    circle cx=(r(*x)) cy=(r(fy(y_port))) r="4.5" fill="#fff" stroke=(STROKE) stroke-width="1.6" {}
                    (text(*x + 10.0, fy(y_port) + if sink { -6.0 } else { 16.0 }, "start", "600", &port_label(name)))
                }
            }
            @for (i, e) in parts.iter().enumerate() {
                (part_svg(i, e))
            }
            }
        }
    };
    svg.into_string()
}

fn port_label(node: &str) -> String {
    match node {
        "in" => "in (I_in)".to_string(),
        "out" => "out (I_out)".to_string(),
        other => other.to_string(),
    }
}

/// Coordinates to one decimal: short files, no binary noise.
fn r(x: f64) -> String {
    let v = (x * 10.0).round() / 10.0;
    if v == v.trunc() {
        format!("{v:.0}")
    } else {
        format!("{v:.1}")
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::place;
    use crate::check::refdes;
    use crate::model::{Topology, ALL_TOPOLOGIES};
    use crate::report::fixtures;

    fn parts_of(t: Topology, dpp: u32, re: f64) -> Vec<Element> {
        parts_with(t, dpp, re, None)
    }

    fn parts_with(t: Topology, dpp: u32, re: f64, r_ref: Option<f64>) -> Vec<Element> {
        let mut pair = fixtures::npn_dual();
        pair.id = "npn-dual-<x>".into();
        pair.devices_per_package = dpp;
        let single = fixtures::npn_single();
        let helper = (!crate::check::helpers_fit_in_spares(t, &pair)).then_some(&single);
        let re2 = if t == Topology::Widlar { 4700.0 } else { re };
        refdes::elements(
            t,
            &place(t, &pair, helper),
            re,
            re2,
            Some("thin-film"),
            r_ref.map(|ohm| refdes::RefPart {
                ohm,
                class: Some("thin-film-0p1pct"),
            }),
        )
    }

    /// The drawn group of each element, in `parts` order; every element is drawn exactly
    /// once and nothing else is drawn as a part.
    fn part_groups<'d>(doc: &'d scraper::Html, parts: &[Element]) -> Vec<scraper::ElementRef<'d>> {
        let sel = scraper::Selector::parse("g.part").unwrap();
        let groups: Vec<_> = doc.select(&sel).collect();
        assert_eq!(groups.len(), parts.len());
        parts
            .iter()
            .map(|e| {
                let g: Vec<_> = groups
                    .iter()
                    .filter(|g| g.value().attr("data-designator") == Some(&e.designator))
                    .collect();
                assert_eq!(g.len(), 1, "{} once", e.designator);
                *g[0]
            })
            .collect()
    }

    #[test]
    fn every_part_appears_once_with_designator_and_value() {
        for t in ALL_TOPOLOGIES {
            for (dpp, re) in [(2, 0.0), (2, 100.0), (1, 47.0), (4, 0.0)] {
                let parts = parts_of(t, dpp, re);
                for pol in [Polarity::Npn, Polarity::Pnp] {
                    let svg = schematic_svg(&parts, pol, Some("t <&> t"), None);
                    let doc = scraper::Html::parse_fragment(&svg);
                    let groups = part_groups(&doc, &parts);
                    for (e, g) in parts.iter().zip(&groups) {
                        let text: Vec<String> = g
                            .text()
                            .map(|s| s.trim().to_string())
                            .filter(|s| !s.is_empty())
                            .collect();
                        assert_eq!(text, vec![e.designator.clone(), value_text(e)]);
                    }
                    assert!(svg.contains("t &lt;&amp;&gt; t"), "title escaped");
                    assert!(
                        svg.contains("npn-dual-&lt;x&gt;") || dpp == 1,
                        "class escaped"
                    );
                    assert!(!svg.contains("<x>"));
                    assert!(svg.contains("in (I_in)") && svg.contains("out (I_out)"));
                    assert!(svg.contains("R: mirror rail") && svg.contains("S: opposite rail"));
                }
            }
        }
    }

    #[test]
    fn sinks_have_the_mirror_rail_at_the_bottom_and_sources_at_the_top() {
        let parts = parts_of(Topology::Simple, 2, 0.0);
        let y_of = |svg: &str, label: &str| -> f64 {
            let k = svg.find(label).unwrap();
            let head = &svg[..k];
            let y = head.rfind(" y=\"").unwrap();
            head[y + 4..].split('"').next().unwrap().parse().unwrap()
        };
        let sink = schematic_svg(&parts, Polarity::Npn, None, None);
        assert!(y_of(&sink, "R: mirror rail") > y_of(&sink, "S: opposite rail"));
        let source = schematic_svg(&parts, Polarity::Pnp, None, None);
        assert!(y_of(&source, "R: mirror rail") < y_of(&source, "S: opposite rail"));
    }

    #[test]
    fn an_added_resistor_to_the_opposite_rail_is_drawn() {
        // A programming resistor from the opposite rail to the input: any netlist part.
        let mut parts = parts_of(Topology::Wilson, 2, 100.0);
        parts.push(Element {
            designator: "R3".into(),
            netlist_name: "RREF",
            kind: ElementKind::Resistor {
                a: "S",
                b: "in",
                ohm: 10e3,
                class: None,
            },
        });
        let svg = schematic_svg(&parts, Polarity::Npn, None, None);
        assert!(svg.contains("data-designator=\"R3\""));
        assert!(svg.contains("10.0 kΩ"));
    }

    #[test]
    fn the_programming_resistor_hangs_from_a_labelled_program_rail() {
        let rail = Range {
            min: 11.4,
            max: 12.6,
        };
        for t in ALL_TOPOLOGIES {
            for (dpp, re) in [(2, 0.0), (2, 100.0), (1, 47.0)] {
                let parts = parts_with(t, dpp, re, Some(511e3));
                for pol in [Polarity::Npn, Polarity::Pnp] {
                    let svg = schematic_svg(&parts, pol, None, Some(rail));
                    let doc = scraper::Html::parse_fragment(&svg);
                    // Every element exactly once, with its designator and value.
                    for (e, g) in parts.iter().zip(part_groups(&doc, &parts)) {
                        assert_eq!(g.value().attr("data-value"), Some(value_text(e).as_str()));
                        assert_eq!(g.value().attr("data-netlist"), Some(e.netlist_name));
                    }
                    let r_ref = parts.iter().find(|e| e.netlist_name == "Rref").unwrap();
                    assert!(svg.contains("511 kΩ") || svg.contains("511.0 kΩ"), "{svg}");
                    let sel = scraper::Selector::parse("g.program-rail").unwrap();
                    let p: Vec<_> = doc.select(&sel).collect();
                    assert_eq!(p.len(), 1, "one program rail");
                    let text: String = p[0].text().collect();
                    assert!(text.contains("P: program rail"), "{text}");
                    assert!(text.contains("11.4 V to 12.6 V from R"), "{text}");
                    // The rail sits above R_ref in a sink, below it in a source: the
                    // rail's y against the resistor's label.
                    let y_of = |needle: &str| -> f64 {
                        let k = svg.find(needle).unwrap();
                        let head = &svg[..k];
                        let y = head.rfind(" y=\"").unwrap();
                        head[y + 4..].split('"').next().unwrap().parse().unwrap()
                    };
                    let rail_y = y_of("P: program rail");
                    let ref_y = y_of(&format!(">{}<", r_ref.designator));
                    if pol == Polarity::Npn {
                        assert!(rail_y < ref_y, "{} sink", t.name());
                    } else {
                        assert!(rail_y > ref_y, "{} source", t.name());
                    }
                }
            }
        }
    }
}
