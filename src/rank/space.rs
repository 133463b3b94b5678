//! The candidate space: topology x transistor class x degeneration x resistor class.
//!
//! Candidates come in groups that share everything but the emitter resistor value
//! (topology, pair class, helper, resistor class), sorted by ascending RE1 (RE2 for a
//! Widlar), so the search can exploit what degeneration does monotonically: more of it
//! means less V_BE-offset error and less headroom.
//!
//! What is generated, and why:
//! * Pair classes are the requirement's polarity (`kind`). Classes with two or more
//!   devices per package are matched pairs in one package. Single-device classes also
//!   form a pair of two separate packages with the catalog's "unrelated singles"
//!   statistics and no thermal coupling: designers do build mirrors that way with enough
//!   degeneration, so it is a real option, not a filler.
//! * Helpers are spare devices of the pair's package when it has them, otherwise the
//!   cheapest permitted single of the same polarity.
//! * Degeneration: none, or every standard value of each resistor class's series from
//!   1 ohm up to `V_out,min / I_in,max` (and `input_voltage_max / I_in,max`): above that the
//!   drop across RE alone breaks compliance (or the input limit), whatever V_BE is.
//! * A ratio n != 1: RE2 from `n I_in RE2 = I_in RE1 - V_T ln(n)` (the V_BE difference of
//!   two equal devices at unequal currents; Gray et al. ch. 4, MODEL.md) at the geometric
//!   mean of the input-current range and 25 °C, and both standard values around it are
//!   candidates (a 1:1 pair cannot give n, so there is no undegenerated candidate). The
//!   lower and the upper rounding form two groups, each ascending in RE1 *and* RE2, so the
//!   search's monotone screens hold in each. A Widlar when n < 1 has RE2 solved from
//!   `I_out*RE2 = V_T ln(I_in/I_out)` at the design current and 25 °C.
//! * `allow`/`deny`: topology names filter topologies; class ids filter transistor and
//!   resistor classes. An `allow` list applies to transistor classes only if it names
//!   one, and to resistor classes only if it names one, so "allow: [npn-dual-matched]"
//!   does not forbid every resistor.

use crate::check::{
    design_current, helper_count, helpers_fit_in_spares_for, DesignSpec, RefPick, ROOM_K,
};
use crate::model::{
    fanout, Area, Catalog, Filters, Requirement, ResistorClass, Shape, Topology, TransistorClass,
    ALL_TOPOLOGIES, MAX_PARALLEL,
};

/// Smallest emitter resistor considered (ohms).
pub const RE_MIN_OHM: f64 = 1.0;

/// Candidates sharing everything but the resistor value, ascending in it.
#[derive(Debug, Clone)]
pub struct Group {
    pub topology: Topology,
    pub pair: String,
    pub resistor: Option<String>,
    pub specs: Vec<DesignSpec>,
}

/// Every candidate of the requirement, in deterministic order.
pub fn enumerate(req: &Requirement, catalog: &Catalog) -> Vec<Group> {
    let polarity = req.kind.polarity();
    let names_transistor = req
        .classes
        .allow
        .iter()
        .any(|a| catalog.transistor(a).is_some());
    let names_resistor = req
        .classes
        .allow
        .iter()
        .any(|a| catalog.resistor(a).is_some());
    let t_allowed = class_filter(&req.classes, names_transistor);
    let r_allowed = class_filter(&req.classes, names_resistor);
    let pairs: Vec<&TransistorClass> = catalog
        .transistors
        .iter()
        .filter(|t| t.polarity == polarity && t_allowed(&t.id))
        .collect();
    let resistors: Vec<&ResistorClass> = catalog
        .resistors
        .iter()
        .filter(|r| r_allowed(&r.id))
        .collect();
    let helper = catalog
        .transistors
        .iter()
        .filter(|t| t.polarity == polarity && t.devices_per_package == 1 && t_allowed(&t.id))
        .min_by(|a, b| {
            a.unit_cost
                .total_cmp(&b.unit_cost)
                .then_with(|| a.id.cmp(&b.id))
        });
    let n = req.ratio;
    let unity = (n - 1.0).abs() < 1e-9;
    let mut re_max = req.output_voltage_v.min / req.input_current_a.max;
    if let Some(v) = req.input_voltage_max_v {
        re_max = re_max.min(v / req.input_current_a.max);
    }

    let mut groups = Vec::new();
    for topology in ALL_TOPOLOGIES {
        if !req.topologies.permits(topology.name()) {
            continue;
        }
        if topology == Topology::Widlar && n >= 1.0 {
            continue;
        }
        if req.outputs > 1 && !fanout::fans_out(topology) {
            continue;
        }
        let shape = Shape::outputs(req.outputs);
        for pair in &pairs {
            let helper_id = if helper_count(topology) > 0
                && !helpers_fit_in_spares_for(topology, shape, pair)
            {
                match helper {
                    Some(h) => Some(h.id.clone()),
                    None => continue,
                }
            } else {
                None
            };
            if fanout::form(topology, shape).is_err() {
                continue;
            }
            let spec = |re1: f64, re2: f64, r: Option<&ResistorClass>| DesignSpec {
                shape,
                topology,
                pair: pair.id.clone(),
                helper: helper_id.clone(),
                re1_ohm: re1,
                re2_ohm: re2,
                resistor: r.map(|r| r.id.clone()),
                r_ref_ohm: 0.0,
                r_ref_resistor: None,
                r_ref_pick: None,
            };
            if topology == Topology::Widlar {
                for r in &resistors {
                    if let Some(re2) = widlar_re2(req, r) {
                        groups.push(Group {
                            topology,
                            pair: pair.id.clone(),
                            resistor: Some(r.id.clone()),
                            specs: vec![spec(0.0, re2, Some(r))],
                        });
                    }
                }
                continue;
            }
            if let Some(area) = area_for(req, topology, pair) {
                groups.extend(area_groups(
                    area,
                    &spec,
                    &resistors,
                    re_max,
                    topology,
                    pair,
                    helper.map(|h| h.id.clone()),
                ));
            }
            if unity {
                groups.push(Group {
                    topology,
                    pair: pair.id.clone(),
                    resistor: None,
                    specs: vec![spec(0.0, 0.0, None)],
                });
            }
            for r in &resistors {
                // Only values the class is made in.
                let made = |v: &f64| (r.min_ohm..=r.max_ohm).contains(v);
                let values = r
                    .series
                    .values_between(RE_MIN_OHM.max(r.min_ohm), re_max.min(r.max_ohm));
                if unity {
                    let specs: Vec<DesignSpec> =
                        values.iter().map(|&re1| spec(re1, re1, Some(r))).collect();
                    if !specs.is_empty() {
                        groups.push(Group {
                            topology,
                            pair: pair.id.clone(),
                            resistor: Some(r.id.clone()),
                            specs,
                        });
                    }
                    continue;
                }
                // Lower rounding of RE2, then the upper one where it differs.
                let brackets: Vec<(f64, (f64, f64))> = values
                    .iter()
                    .filter_map(|&re1| {
                        let exact = ratio_re2(re1, n, design_current(req), ROOM_K)?;
                        let (lo, hi) = r.series.bracket(exact)?;
                        // Keep a rounding only where the class makes it.
                        match (made(&lo), made(&hi)) {
                            (true, true) => Some((re1, (lo, hi))),
                            (true, false) => Some((re1, (lo, lo))),
                            (false, true) => Some((re1, (hi, hi))),
                            (false, false) => None,
                        }
                    })
                    .collect();
                for upper in [false, true] {
                    let specs: Vec<DesignSpec> = brackets
                        .iter()
                        .filter(|(_, (lo, hi))| !upper || hi > lo)
                        .map(|&(re1, (lo, hi))| spec(re1, if upper { hi } else { lo }, Some(r)))
                        .collect();
                    if !specs.is_empty() {
                        groups.push(Group {
                            topology,
                            pair: pair.id.clone(),
                            resistor: Some(r.id.clone()),
                            specs,
                        });
                    }
                }
            }
        }
    }
    if req.program.is_some() {
        groups = with_programming_resistor(groups, &resistors);
    }
    groups
}

/// The area ratio a requirement's ratio asks for, when it is an integer n or 1/n of
/// 2..=`MAX_PARALLEL` and the pair class's package holds the input side and every output's
/// parallel devices together (an area ratio across packages would match like unrelated
/// parts, which is no reason to build it that way).
fn area_for(req: &Requirement, topology: Topology, pair: &TransistorClass) -> Option<Shape> {
    let n = req.ratio;
    let whole = |x: f64| {
        let r = x.round();
        ((r - x).abs() < 1e-9 && (2.0..=f64::from(MAX_PARALLEL)).contains(&r)).then_some(r as u8)
    };
    let area = match (whole(n), whole(1.0 / n)) {
        (Some(m), _) => Area::Output(m),
        (_, Some(m)) => Area::Input(m),
        _ => return None,
    };
    let shape = Shape {
        outputs: req.outputs,
        area,
    };
    let form = fanout::form(topology, shape).ok()?;
    let seats = fanout::place(form, pair.devices_per_package);
    let one_package = form
        .transistors
        .iter()
        .zip(&seats)
        .filter(|(l, _)| l.role != crate::model::Role::Helper)
        .all(|(_, s)| s.package == 0);
    (pair.devices_per_package > 1 && one_package).then_some(shape)
}

/// The area-ratio candidates of one pair class: undegenerated, and degenerated with RE2
/// at the standard value nearest to the equal-drop value (RE1/n for n output devices,
/// n RE1 for n input devices: equal current densities, so no V_T ln(n) term).
fn area_groups(
    shape: Shape,
    spec: &dyn Fn(f64, f64, Option<&ResistorClass>) -> DesignSpec,
    resistors: &[&ResistorClass],
    re_max: f64,
    topology: Topology,
    pair: &TransistorClass,
    helper: Option<String>,
) -> Vec<Group> {
    let with_shape = |mut s: DesignSpec| {
        s.shape = shape;
        // The area form may place helpers differently from the resistor-ratio form.
        if helper_count(topology) > 0 {
            s.helper = if helpers_fit_in_spares_for(topology, shape, pair) {
                None
            } else {
                helper.clone()
            };
        }
        s
    };
    if helper_count(topology) > 0
        && helper.is_none()
        && !helpers_fit_in_spares_for(topology, shape, pair)
    {
        return Vec::new();
    }
    let mut groups = vec![Group {
        topology,
        pair: pair.id.clone(),
        resistor: None,
        specs: vec![with_shape(spec(0.0, 0.0, None))],
    }];
    let k = shape.area_ratio();
    for r in resistors {
        let made = |v: &f64| (r.min_ohm..=r.max_ohm).contains(v);
        let specs: Vec<DesignSpec> = r
            .series
            .values_between(RE_MIN_OHM.max(r.min_ohm), re_max.min(r.max_ohm))
            .into_iter()
            .filter_map(|re1| {
                let re2 = r.series.nearest(re1 / k).filter(made)?;
                Some(with_shape(spec(re1, re2, Some(r))))
            })
            .collect();
        if !specs.is_empty() {
            groups.push(Group {
                topology,
                pair: pair.id.clone(),
                resistor: Some(r.id.clone()),
                specs,
            });
        }
    }
    groups
}

/// A programmed requirement: every group is offered with R_ref from each allowed
/// resistor class, at the standard value below and the one above the exact value (chosen
/// per design from its solved input voltage when it is first solved, `check::choose_r_ref`).
/// The class of R_ref may differ from the emitter resistors'. Each (class, side) is a
/// group of its own, so a group still shares its cost and its monotone structure in RE.
fn with_programming_resistor(groups: Vec<Group>, resistors: &[&ResistorClass]) -> Vec<Group> {
    let mut out = Vec::with_capacity(groups.len() * resistors.len() * 2);
    for g in groups {
        for r in resistors {
            for pick in [RefPick::Below, RefPick::Above] {
                let specs = g
                    .specs
                    .iter()
                    .map(|s| DesignSpec {
                        r_ref_resistor: Some(r.id.clone()),
                        r_ref_pick: Some(pick),
                        ..s.clone()
                    })
                    .collect();
                out.push(Group { specs, ..g.clone() });
            }
        }
    }
    out
}

/// RE2 of a Widlar for ratio n < 1: `I_out*RE2 = V_T ln(I_in/I_out)` at the design current
/// and 25 °C (Widlar's relation; Gray, Hurst, Lewis & Meyer, ch. 4), to the nearest
/// standard value.
pub fn widlar_re2(req: &Requirement, r: &ResistorClass) -> Option<f64> {
    let n = req.ratio;
    if !(n > 0.0 && n < 1.0) {
        return None;
    }
    let i_in = design_current(req);
    let re2 = thermal_voltage(ROOM_K) * (1.0 / n).ln() / (n * i_in);
    r.series
        .nearest(re2)
        .filter(|v| (r.min_ohm..=r.max_ohm).contains(v))
}

/// RE2 of a degenerated ratio mirror (n = I_out/I_in) with RE1 on the input side:
/// `n I_in RE2 = I_in RE1 - V_T ln(n)`, the emitter-resistor drops differing by the V_BE
/// difference of two equal devices at currents n apart (Gray, Hurst, Lewis & Meyer,
/// ch. 4; MODEL.md), at input current `i_in_a` and temperature `t_k`. `None` when RE1 is
/// too small to carry that V_BE difference (no positive RE2 exists).
pub fn ratio_re2(re1_ohm: f64, n: f64, i_in_a: f64, t_k: f64) -> Option<f64> {
    let re2 = (re1_ohm - thermal_voltage(t_k) * n.ln() / i_in_a) / n;
    (re2 > 0.0 && re2.is_finite()).then_some(re2)
}

/// V_T = kT/q with the exact SI values of k and q (SI Brochure, 9th edition, 2019).
pub fn thermal_voltage(t_k: f64) -> f64 {
    1.380649e-23 * t_k / 1.602176634e-19
}

/// `allow` applies only when it names a class of this kind; `deny` always applies.
fn class_filter(filters: &Filters, allow_applies: bool) -> impl Fn(&str) -> bool + '_ {
    move |id: &str| {
        (!allow_applies || filters.allow.iter().any(|a| a == id))
            && !filters.deny.iter().any(|d| d == id)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn thermal_voltage_at_300_k() {
        // CODATA 2018 / SI 2019 exact constants: V_T(300 K) = 25.852 mV.
        assert!((thermal_voltage(300.0) - 25.852e-3).abs() < 1e-6);
    }
}
