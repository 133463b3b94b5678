//! What to relax when nothing passes: for the few candidates that came nearest, the
//! smallest change to one requirement field at a time that makes one of them feasible,
//! found by bisection with the solver (each probe is a full verdict-depth evaluation of
//! the candidate against the requirement with that one field changed), and the catalog
//! advice when no class is rated for the voltage.
//!
//! Assumes feasibility is monotone in each field along the relaxing direction (a looser
//! accuracy, a narrower temperature range, a higher minimum output voltage can only help),
//! which holds for every check of the model. The reported value is rounded outward (in the
//! relaxing direction) to two significant figures, so it stays on the feasible side.

use std::sync::atomic::AtomicU64;

use rayon::prelude::*;
use serde::Serialize;

use crate::check::{self, CheckName, Depth, DesignSpec, MonteCarlo, VCEO_DERATING};
use crate::model::{Catalog, Requirement};
use crate::units::{format_prefixed, format_quantity, Dimension};

use super::search::{screen_group, Outcome, Tally};
use super::space::Group;

/// How many candidates are bisected per field: the nearest to feasible (by their worst
/// check margin) that the field can make feasible at all.
pub const NEAREST: usize = 3;

/// Added to the failing-check count of a design with an unsolved corner, so that it
/// sorts after every design that solved everywhere.
const UNSOLVED_PENALTY: usize = 1000;
/// How many candidates (one per family, nearest first) are tried per field.
const POOL: usize = 12;
/// Bisection steps per field: the bracket shrinks by 2^-14, well below the two
/// significant figures reported.
const STEPS: usize = 14;

/// One piece of advice: set `field` (as written in the requirement file) to `value` (SI:
/// volts, kelvin, a fraction for accuracy and yield, ohms) and `design` becomes feasible.
/// For `field: "catalog"`, `value` is the VCEO rating (V) a class would need and `design`
/// is empty.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Relax {
    pub field: &'static str,
    pub value: f64,
    pub design: String,
    /// The advice as a sentence, for humans.
    pub text: String,
}

/// One relaxing move: the field, the value it has, the most relaxed value tried, and how
/// to apply a value to a requirement.
struct Move {
    field: &'static str,
    dimension: Dimension,
    from: f64,
    to: f64,
    /// Bisect on a log scale (quantities that span decades).
    log: bool,
    apply: fn(&mut Requirement, f64),
}

fn moves(req: &Requirement) -> Vec<Move> {
    let v = req.output_voltage_v;
    let t = req.ambient_k;
    let mut m = vec![
        Move {
            field: "accuracy",
            dimension: Dimension::Fraction,
            from: req.accuracy,
            to: 1.0,
            log: true,
            apply: |r, x| r.accuracy = x,
        },
        Move {
            field: "output_voltage.min",
            dimension: Dimension::Voltage,
            from: v.min,
            to: v.max,
            log: false,
            apply: |r, x| r.output_voltage_v.min = x,
        },
        Move {
            field: "output_voltage.max",
            dimension: Dimension::Voltage,
            from: v.max,
            to: v.min,
            log: false,
            apply: |r, x| r.output_voltage_v.max = x,
        },
        Move {
            field: "ambient.max",
            dimension: Dimension::Temperature,
            from: t.max,
            to: t.min,
            log: false,
            apply: |r, x| r.ambient_k.max = x,
        },
        Move {
            field: "ambient.min",
            dimension: Dimension::Temperature,
            from: t.min,
            to: t.max,
            log: false,
            apply: |r, x| r.ambient_k.min = x,
        },
        Move {
            field: "supply",
            dimension: Dimension::Voltage,
            from: req.supply_v,
            to: 2.0 * req.supply_v,
            log: false,
            apply: |r, x| r.supply_v = x,
        },
        Move {
            field: "supply",
            dimension: Dimension::Voltage,
            from: req.supply_v,
            // The file format requires `output_voltage.max < supply`.
            to: v.max + 0.01 * (req.supply_v - v.max),
            log: false,
            apply: |r, x| r.supply_v = x,
        },
    ];
    if let Some(p) = req.program {
        // A tighter rail: the rail's tolerance moves the programmed current one for one.
        m.push(Move {
            field: "program.rail.min",
            dimension: Dimension::Voltage,
            from: p.rail_v.min,
            to: p.rail_v.max,
            log: false,
            apply: |r, x| {
                if let Some(p) = r.program.as_mut() {
                    p.rail_v.min = x;
                }
            },
        });
        m.push(Move {
            field: "program.rail.max",
            dimension: Dimension::Voltage,
            from: p.rail_v.max,
            to: p.rail_v.min,
            log: false,
            apply: |r, x| {
                if let Some(p) = r.program.as_mut() {
                    p.rail_v.max = x;
                }
            },
        });
    }
    if let Some(r) = req.min_output_resistance_ohm {
        m.push(Move {
            field: "min_output_resistance",
            dimension: Dimension::Resistance,
            from: r,
            to: 1.0,
            log: true,
            apply: |r, x| r.min_output_resistance_ohm = Some(x),
        });
    }
    if let Some(y) = req.min_yield {
        m.push(Move {
            field: "min_yield",
            dimension: Dimension::Fraction,
            from: y,
            to: 0.0,
            log: false,
            apply: |r, x| r.min_yield = Some(x),
        });
    }
    if let Some(vi) = req.input_voltage_max_v {
        m.push(Move {
            field: "input_voltage_max",
            dimension: Dimension::Voltage,
            from: vi,
            to: req.supply_v,
            log: false,
            apply: |r, x| r.input_voltage_max_v = Some(x),
        });
    }
    if let Some(c) = req.max_cost {
        m.push(Move {
            field: "max_cost",
            dimension: Dimension::Number,
            from: c,
            to: 1e6,
            log: c > 0.0,
            apply: |r, x| r.max_cost = Some(x),
        });
    }
    m.retain(|m| m.from.is_finite() && m.to.is_finite() && m.from != m.to);
    m
}

/// Whether `spec` meets `req`. A programmed design gets its R_ref sized for `req` (the
/// changed requirement), as the search would size it.
fn feasible(req: &Requirement, catalog: &Catalog, spec: &DesignSpec, mc: MonteCarlo) -> bool {
    let solves = AtomicU64::new(0);
    check::verify(req, catalog, spec, Depth::Verdict, mc, &solves).is_ok_and(|(_, e)| e.feasible())
}

/// The value nearest `m.from` (within the bisection's resolution, rounded outward) that
/// makes `spec` feasible, or `None` when even `m.to` does not.
fn bisect(
    req: &Requirement,
    catalog: &Catalog,
    spec: &DesignSpec,
    mc: MonteCarlo,
    m: &Move,
) -> Option<f64> {
    let probe = |x: f64| {
        let mut r = req.clone();
        (m.apply)(&mut r, x);
        feasible(&r, catalog, spec, mc)
    };
    if !probe(m.to) {
        return None;
    }
    let (mut bad, mut good) = (m.from, m.to);
    for _ in 0..STEPS {
        let mid = if m.log && bad > 0.0 && good > 0.0 {
            (bad * good).sqrt()
        } else {
            0.5 * (bad + good)
        };
        if probe(mid) {
            good = mid;
        } else {
            bad = mid;
        }
    }
    let rounded = round_outward(good, m, bad);
    Some(if probe(rounded) { rounded } else { good })
}

/// Round `x` to two significant figures (of its change for temperatures, to whole
/// degrees) in the relaxing direction, staying within the move's range.
fn round_outward(x: f64, m: &Move, bad: f64) -> f64 {
    let up = m.to > m.from;
    let r = if m.dimension == Dimension::Temperature {
        if up {
            x.ceil()
        } else {
            x.floor()
        }
    } else if x == 0.0 || !x.is_finite() {
        x
    } else {
        let e = x.abs().log10().floor() - 1.0;
        let q = 10f64.powf(e);
        let r = if up {
            (x / q).ceil() * q
        } else {
            (x / q).floor() * q
        };
        // Through text, so the value is the two-figure decimal (0.0024, not 0.0024000000000000002).
        format!("{r:.1e}").parse().unwrap_or(r)
    };
    let within = if up { r <= m.to } else { r >= m.to };
    let beyond_bad = if up { r > bad } else { r < bad };
    if within && beyond_bad {
        r
    } else {
        x
    }
}

fn describe(spec: &DesignSpec) -> String {
    let mut s = format!("{} {}", spec.topology.name(), spec.pair);
    if let Some(h) = &spec.helper {
        s.push_str(&format!(", helper {h}"));
    }
    if let Some(class) = &spec.resistor {
        if spec.re1_ohm > 0.0 && (spec.re1_ohm - spec.re2_ohm).abs() > 1e-9 * spec.re1_ohm {
            s.push_str(&format!(
                ", RE1 {} RE2 {}",
                format_prefixed(spec.re1_ohm, "Ω"),
                format_prefixed(spec.re2_ohm, "Ω")
            ));
        } else {
            let re = spec.re2_ohm.max(spec.re1_ohm);
            let name = if spec.re1_ohm > 0.0 { "RE" } else { "RE2" };
            s.push_str(&format!(", {name} {}", format_prefixed(re, "Ω")));
        }
        s.push_str(&format!(" {class}"));
    }
    if let Some(class) = &spec.r_ref_resistor {
        // Its value is sized from the solved circuit for the changed requirement.
        s.push_str(&format!(", R_ref {class}"));
    }
    s
}

fn show(x: f64, d: Dimension) -> String {
    match d {
        Dimension::Fraction => format!("{} %", crate::units::sig3(x * 100.0)),
        Dimension::Number => crate::units::sig3(x),
        Dimension::Temperature => format!("{:.0} °C", x - crate::model::ZERO_CELSIUS_K),
        _ => format_quantity(x, d),
    }
}

/// A few candidates per family to judge nearness from: the smallest, middle and largest
/// resistor value of each group, and the same three among the values that pass the
/// search's bounds (without its rating screen: the bounds bound accuracy from below and
/// compliance from above, so
/// a design that can be made feasible by one field usually sits in that window: at 250 V
/// the window is where a simple mirror's 32 V version passes, which the even picks miss).
fn pool(req: &Requirement, catalog: &Catalog, groups: &[Group]) -> Vec<DesignSpec> {
    let solves = Tally::new();
    groups
        .par_iter()
        .flat_map_iter(|g| {
            let n = g.specs.len();
            let mut picks: Vec<usize> = Vec::new();
            if n > 0 {
                picks.extend([0, n / 2, n - 1]);
                let passed: Vec<usize> = screen_group(req, catalog, g, false, &solves)
                    .iter()
                    .enumerate()
                    .filter(|(_, (_, o))| matches!(o, Outcome::Survivor(_)))
                    .map(|(i, _)| i)
                    .collect();
                if let (Some(&a), Some(&b)) = (passed.first(), passed.last()) {
                    picks.extend([a, passed[passed.len() / 2], b]);
                }
            }
            picks.sort_unstable();
            picks.dedup();
            picks
                .into_iter()
                .map(|i| g.specs[i].clone())
                .collect::<Vec<_>>()
        })
        .collect()
}

/// A candidate judged for nearness: its design, (failing checks, worst margin), and the
/// VCEO it would need (`None` when a corner did not solve; `Some(None)` when VCEO passes).
type Judged = (DesignSpec, (usize, f64), Option<Option<f64>>);

/// Advice for a requirement nothing meets; empty when some candidate is feasible.
pub fn relax(req: &Requirement, catalog: &Catalog, groups: &[Group], mc: MonteCarlo) -> Vec<Relax> {
    let solves = AtomicU64::new(0);
    // Judge every pooled candidate fully at verdict depth: its nearness is how many
    // checks fail, then its worst margin over every check.
    let mut judged: Vec<Judged> = pool(req, catalog, groups)
        .par_iter()
        .filter_map(|s| {
            // R_ref sized for the requirement as written (a programmed design fails
            // every check without one).
            let (_, ev) = check::verify(req, catalog, s, Depth::Verdict, mc, &solves).ok()?;
            if ev.feasible() {
                return None;
            }
            let worst = ev
                .checks
                .iter()
                .map(|c| c.margin)
                .filter(|m| !m.is_nan())
                .fold(f64::INFINITY, f64::min);
            // The VCEO rating this design would need at its worst corner (judged only
            // when every corner solved: an unsolved corner hides the highest V_CE).
            let vceo = ev.complete.then(|| {
                ev.check(CheckName::Vceo)
                    .filter(|c| !c.pass)
                    .map(|c| c.value / VCEO_DERATING)
            });
            // A design with an unsolved corner (thermal runaway, no solution) fails one
            // named check and has no margins for the figures that needed the corner:
            // it is far from feasible, not near, so it sorts after every solved design.
            let failing = ev.checks.iter().filter(|c| !c.pass).count()
                + if ev.complete { 0 } else { UNSOLVED_PENALTY };
            // The unsized spec: each probe sizes R_ref for its own requirement.
            Some((s.clone(), (failing, worst), vceo))
        })
        .collect();
    if judged.is_empty() {
        return Vec::new();
    }
    let mut out = Vec::new();
    // No class rated for the voltage: every candidate that solved at every corner fails
    // VCEO (and at least one did).
    let solved: Vec<Option<f64>> = judged.iter().filter_map(|(_, _, v)| *v).collect();
    if !solved.is_empty() && solved.iter().all(Option::is_some) {
        let need = solved
            .iter()
            .flatten()
            .fold(f64::INFINITY, |a, &b| a.min(b));
        let best = catalog
            .transistors
            .iter()
            .filter(|t| t.polarity == req.kind.polarity())
            .map(|t| t.ratings.vceo_v)
            .fold(0.0, f64::max);
        out.push(Relax {
            field: "catalog",
            value: need,
            design: String::new(),
            text: format!(
                "catalog: no {} class is rated for the voltage (the highest VCEO is {}); a class rated for VCEO {} or more is needed, with 20 % derating",
                req.kind.polarity().as_str(),
                format_prefixed(best, "V"),
                format_prefixed(need, "V")
            ),
        });
    }
    // Nearest first: fewest failing checks, then the least negative worst margin.
    judged.sort_by(|a, b| a.1 .0.cmp(&b.1 .0).then(b.1 .1.total_cmp(&a.1 .1)));
    // The nearest candidates, one per family.
    let mut nearest: Vec<DesignSpec> = Vec::new();
    for (s, _, _) in judged {
        if nearest.len() == POOL {
            break;
        }
        if !nearest.iter().any(|n| {
            n.topology == s.topology
                && n.pair == s.pair
                && n.helper == s.helper
                && n.resistor == s.resistor
        }) {
            nearest.push(s);
        }
    }
    let ms = moves(req);
    // Per move: the first NEAREST candidates (nearest first) that the move can make
    // feasible at all, each bisected.
    let found: Vec<(usize, usize, f64)> = (0..ms.len())
        .into_par_iter()
        .flat_map_iter(|m| {
            let mut hits = Vec::new();
            for (d, spec) in nearest.iter().enumerate() {
                if hits.len() == NEAREST {
                    break;
                }
                if let Some(v) = bisect(req, catalog, spec, mc, &ms[m]) {
                    hits.push((m, d, v));
                }
            }
            hits
        })
        .collect();
    // Per move, the design that needs the smallest change; then the smallest changes first.
    let mut best: Vec<(f64, usize, usize, f64)> = Vec::new();
    for (m, d, v) in found {
        let change = (v - ms[m].from).abs() / (ms[m].to - ms[m].from).abs();
        match best.iter_mut().find(|b| b.1 == m) {
            Some(b) if change < b.0 => *b = (change, m, d, v),
            Some(_) => {}
            None => best.push((change, m, d, v)),
        }
    }
    best.sort_by(|a, b| a.0.total_cmp(&b.0));
    for (_, m, d, v) in best {
        let mv = &ms[m];
        let design = describe(&nearest[d]);
        out.push(Relax {
            field: mv.field,
            value: v,
            text: format!(
                "{}: {} instead of {} makes {design} feasible",
                mv.field,
                show(v, mv.dimension),
                show(mv.from, mv.dimension)
            ),
            design,
        });
    }
    out
}
