//! Ordering the feasible candidates and marking the cost/error Pareto front.
//!
//! * `cost` (default): cheapest first; equal cost goes to the larger accuracy margin.
//! * `accuracy`: largest accuracy margin first (every candidate already meets `max_cost`
//!   when one is given); equal margin goes to the cheaper one.
//! * `balanced`: smallest `cost / cheapest_cost + error_total / accuracy`. Both terms are
//!   1 for "as cheap as the cheapest feasible design" and "uses the whole error budget",
//!   so a design is worth 10 % more money exactly when it frees 10 points of the error
//!   budget. On the Pareto front this picks the knee rather than either end.
//!
//! Remaining ties are broken by topology, class ids and resistor values, so the order is
//! deterministic.
//!
//! A *family* is every design that differs only in resistor value (topology, pair,
//! helper, resistor class; no degeneration has no resistor class, so it is a family of
//! its own). `rank` shows each family's first row in the order, and so does `cheaper`.
//!
//! A degenerated family (emitter resistors) is listed only when its best row is worth
//! the resistors against the same design without them (topology, pair, helper, R_ref
//! class; its *bare* family): the bare design is not feasible, or the degenerated row
//! costs less, or its total error is at least `NOTICEABLE_ERROR` (a tenth) below the bare
//! design's. A token 2.7 ohm that moves 1.47 % to 1.46 % is not listed; 21 kohm that brings
//! it to 1.28 % is. The first row of the order is always listed, so the rule never
//! changes which design is first (in the cost order it cannot apply to it anyway: the
//! bare design is cheaper, so it would come first).

use std::cmp::Ordering;

use serde::Serialize;

use crate::check::{DesignSpec, Evaluation};
use crate::model::Topology;

#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Prefer {
    #[default]
    Cost,
    Accuracy,
    Balanced,
}

impl Prefer {
    pub fn as_str(self) -> &'static str {
        match self {
            Prefer::Cost => "cost",
            Prefer::Accuracy => "accuracy",
            Prefer::Balanced => "balanced",
        }
    }
}

/// Sort feasible candidates in place by the preference.
pub fn sort(items: &mut [(DesignSpec, Evaluation)], prefer: Prefer, accuracy: f64) {
    let cheapest = items
        .iter()
        .map(|(_, e)| e.cost)
        .fold(f64::INFINITY, f64::min);
    let score = |e: &Evaluation| {
        let c = if cheapest > 0.0 {
            e.cost / cheapest
        } else {
            1.0
        };
        c + e.figures.error_total / accuracy
    };
    items.sort_by(|(sa, a), (sb, b)| {
        let primary = match prefer {
            Prefer::Cost => a
                .cost
                .total_cmp(&b.cost)
                .then_with(|| b.accuracy_margin().total_cmp(&a.accuracy_margin())),
            Prefer::Accuracy => b
                .accuracy_margin()
                .total_cmp(&a.accuracy_margin())
                .then_with(|| a.cost.total_cmp(&b.cost)),
            Prefer::Balanced => score(a).total_cmp(&score(b)),
        };
        primary.then_with(|| tie_break(sa, sb))
    });
}

fn tie_break(a: &DesignSpec, b: &DesignSpec) -> Ordering {
    a.topology
        .cmp(&b.topology)
        .then_with(|| a.pair.cmp(&b.pair))
        .then_with(|| a.helper.cmp(&b.helper))
        .then_with(|| a.resistor.cmp(&b.resistor))
        .then_with(|| a.re1_ohm.total_cmp(&b.re1_ohm))
        .then_with(|| a.re2_ohm.total_cmp(&b.re2_ohm))
        .then_with(|| a.r_ref_resistor.cmp(&b.r_ref_resistor))
        .then_with(|| a.r_ref_ohm.total_cmp(&b.r_ref_ohm))
}

/// Designs that differ only in resistor values: topology, pair, helper, resistor class
/// and R_ref's resistor class.
pub type FamilyKey = (
    Topology,
    String,
    Option<String>,
    Option<String>,
    Option<String>,
);

pub fn family(s: &DesignSpec) -> FamilyKey {
    (
        s.topology,
        s.pair.clone(),
        s.helper.clone(),
        s.resistor.clone(),
        s.r_ref_resistor.clone(),
    )
}

/// How much smaller a degenerated design's total error must be than its bare design's
/// to be listed: a tenth (common practice, no source: a change a designer reads off the
/// three printed figures without comparing digits).
pub const NOTICEABLE_ERROR: f64 = 0.10;

/// The family of the same design without emitter resistors, or `None` for a design
/// without them.
pub fn bare_family(s: &DesignSpec) -> Option<FamilyKey> {
    s.resistor.as_ref().map(|_| {
        (
            s.topology,
            s.pair.clone(),
            s.helper.clone(),
            None,
            s.r_ref_resistor.clone(),
        )
    })
}

/// Whether a degenerated design of `(cost, total error)` is worth listing beside its
/// feasible bare design's `(cost, total error)`.
pub fn worth_listing(degenerated: (f64, f64), bare: (f64, f64)) -> bool {
    degenerated.0 < bare.0 - 1e-12 || degenerated.1 <= (1.0 - NOTICEABLE_ERROR) * bare.1
}

/// The family bests (indices into `items`, in order, as from `first_per` by family) that
/// are listed: every one but a degenerated row not worth listing beside its bare design
/// (see the module docs); the first is always kept.
pub fn listed_families(items: &[(DesignSpec, Evaluation)], bests: &[usize]) -> Vec<usize> {
    let best_of = |key: &FamilyKey| {
        bests
            .iter()
            .map(|&i| &items[i])
            .find(|(s, _)| family(s) == *key)
            .map(|(_, e)| (e.cost, e.figures.error_total))
    };
    bests
        .iter()
        .enumerate()
        .filter(|(pos, &i)| {
            let (s, e) = &items[i];
            *pos == 0
                || bare_family(s)
                    .and_then(|k| best_of(&k))
                    .is_none_or(|bare| worth_listing((e.cost, e.figures.error_total), bare))
        })
        .map(|(_, &i)| i)
        .collect()
}

/// Indices of the first item of each key in `items` (already in ranking order): the best
/// row of each family, or of whatever `key` groups by.
pub fn first_per<T, K: PartialEq>(items: &[T], key: impl Fn(&T) -> K) -> Vec<usize> {
    let mut seen: Vec<K> = Vec::new();
    let mut out = Vec::new();
    for (i, item) in items.iter().enumerate() {
        let k = key(item);
        if !seen.contains(&k) {
            seen.push(k);
            out.push(i);
        }
    }
    out
}

/// Pareto flags for (cost, error) pairs: a point is on the front when no other point is
/// at most as costly and at most as wrong, and strictly better in one of the two.
pub fn pareto(points: &[(f64, f64)]) -> Vec<bool> {
    let mut idx: Vec<usize> = (0..points.len()).collect();
    idx.sort_by(|&i, &j| {
        points[i]
            .0
            .total_cmp(&points[j].0)
            .then_with(|| points[i].1.total_cmp(&points[j].1))
    });
    let mut flags = vec![false; points.len()];
    // Smallest error among strictly cheaper points.
    let mut best_cheaper = f64::INFINITY;
    let mut k = 0;
    while k < idx.len() {
        let cost = points[idx[k]].0;
        let mut end = k;
        while end < idx.len() && points[idx[end]].0 == cost {
            end += 1;
        }
        // Within one cost level the first has the least error.
        let level_min = points[idx[k]].1;
        for &i in &idx[k..end] {
            flags[i] = points[i].1 == level_min && level_min < best_cheaper;
        }
        best_cheaper = best_cheaper.min(level_min);
        k = end;
    }
    flags
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn pareto_front_by_hand() {
        let pts = [
            (1.0, 0.05), // cheapest: on the front
            (1.0, 0.06), // same cost, worse: off
            (2.0, 0.02), // on
            (2.0, 0.02), // duplicate of a front point: on
            (3.0, 0.03), // dearer and worse than (2, 0.02): off
            (4.0, 0.01), // on
        ];
        assert_eq!(pareto(&pts), vec![true, false, true, true, false, true]);
        assert!(pareto(&[]).is_empty());
    }

    #[test]
    fn a_degenerated_row_needs_a_tenth_less_error_or_a_lower_cost() {
        // The expo example's Wilson: bare 1.47 %, 2.70 ohm 1.46 %, 21 kohm 1.28 %.
        assert!(!worth_listing((4.524, 0.0146), (4.520, 0.0147)));
        assert!(worth_listing((4.640, 0.0128), (4.520, 0.0147)));
        assert!(worth_listing((4.640, 0.0132), (4.520, 0.0147)));
        assert!(!worth_listing((4.640, 0.0133), (4.520, 0.0147)));
        assert!(worth_listing((4.5, 0.0147), (4.520, 0.0147)));
    }

    #[test]
    fn first_per_keeps_the_first_of_each_key_in_order() {
        let items = [("a", 1), ("a", 2), ("b", 3), ("a", 4), ("c", 5), ("b", 6)];
        assert_eq!(first_per(&items, |i| i.0), vec![0, 2, 4]);
        assert!(first_per(&[] as &[(&str, i32)], |i| i.0).is_empty());
    }
}
