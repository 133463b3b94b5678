//! From a board design to a [`BoardProblem`]: every channel's feasible designs, found by
//! the ranking engine and described by the parts one copy consumes.
//!
//! **Which candidates are passed, and why that is safe.** The ranking verifies every
//! candidate of the channel's requirement (search goal `All`: the pruning only skips
//! candidates whose failure a screen proves, so no feasible design is missed). Of the
//! feasible ones, one is kept per distinct *part usage*: pair class, matched pairs and
//! helpers per copy, helper class and the classes whose spare devices may take the
//! helper, and the resistor items (class, value, count). Two candidates with the same
//! usage put exactly the same parts on the board and cost the same (cost is parts only),
//! so whichever the program would pick, the other gives the same board and the same
//! total: keeping one per usage loses no optimum. A cheapest-N cut would not be safe: a
//! design that is dearer on its own can win by sharing a package or a resistor value
//! with another channel. Of equal usages the one with the larger governing margin is
//! kept (ties: the earlier in enumeration order), so the board gets the sturdier design
//! at the same price.
//!
//! A second reduction, also exact, runs across channels: a resistor value that no other
//! channel's options use cannot be shared, so it adds the same cost whatever the value
//! (its class's unit price times the count, plus one line item). Options that differ
//! only in such private values (same class and count per item) give the same board
//! cost; one per group is kept, again the one with the largest governing margin. This
//! is what keeps the program small: an E96 series offers dozens of feasible values per
//! channel, most of which no other channel can use.
//!
//! A third reduction, exact as well, removes resistor values that another value of the
//! same class dominates. An option whose resistors all take one value `w` of class `r`
//! (every degenerated 1:1 design and every Widlar) is described, apart from `w`, by its
//! channel, its transistors and its resistor count; the *signature* of `w` is the set of
//! those descriptions over all channels. When another value `v` of `r` has a signature
//! that contains `w`'s, and no option with two different values uses `w`, any board using
//! `w` can use `v` instead in the same places: the same parts at the same prices
//! (resistor prices depend on the class, not the value) and no more line items (the
//! item for `w` goes; the one for `v` may already be bought). So dropping `w` loses no
//! optimum and never breaks `max_line_items`. Overlapping E96 ranges collapse to a few
//! values this way, which is what keeps a six-channel board small.
//!
//! **Helpers.** A helper that sits in a spare device of the pair's own package was
//! verified there, so the copy is kept together and only the pair class's spares may
//! take it; a helper verified as a separate single may only be a single of that class
//! (its ratings were checked with that class and no other).
//!
//! **No feasible design.** The channel gets no option and a reason: the check that
//! rejected its cheapest candidate, with the count of rejections by check.
//!
//! Board-wide `allow`/`deny` act on top of each channel's own filters: every class and
//! topology the board excludes joins the channel's `deny` list, so both must permit a
//! part (a helper falls back to the next permitted single), and the channel's own
//! `allow` keeps its meaning.

use std::collections::BTreeMap;

use super::problem::{BoardProblem, ChannelOptions, DesignUsage, ResistorUse};
use crate::check::{helper_count, helpers_fit_in_spares, resolve, DesignSpec, Evaluation};
use crate::check::{CheckName, MonteCarlo};
use crate::model::{BoardDesign, Catalog, Filters, Requirement, ALL_TOPOLOGIES};
use crate::rank::{enumerate, search, Goal, Progress};
use crate::units::{format_quantity, Dimension};

/// One channel's candidates as passed to the program, with what is needed to report on
/// the chosen one.
#[derive(Debug, Clone)]
pub struct ChannelCandidates {
    pub options: ChannelOptions,
    /// The verified design behind each option, in option order.
    pub designs: Vec<(DesignSpec, Evaluation)>,
    /// Feasible designs the ranking found (before keeping one per usage).
    pub feasible: usize,
    /// Candidates the ranking judged.
    pub evaluated: usize,
}

/// The board problem of a design, and every channel's candidates.
pub struct DesignProblem {
    pub problem: BoardProblem,
    pub channels: Vec<ChannelCandidates>,
    /// The catalog the channels were ranked against.
    pub catalog: Catalog,
}

/// Rank every channel of `design` and build the integer program's input.
pub fn design_problem(
    design: &BoardDesign,
    catalog: &Catalog,
    mc: MonteCarlo,
    progress: &dyn Progress,
) -> DesignProblem {
    let excluded = excluded_classes(catalog, &design.classes);
    let channels: Vec<ChannelCandidates> = design
        .channels
        .iter()
        .map(|ch| {
            // Board-wide exclusions join the channel's own `deny`: the channel's `allow`
            // keeps its meaning, and both filters must permit a part.
            let mut req = ch.requirement.clone();
            req.classes.deny.extend(excluded.iter().cloned());
            req.topologies.deny.extend(
                ALL_TOPOLOGIES
                    .iter()
                    .filter(|t| !design.topologies.permits(t.name()))
                    .map(|t| t.name().to_string()),
            );
            channel_candidates(&ch.name, ch.count, &req, catalog, mc, progress)
        })
        .collect();
    let channels = drop_dominated_values(merge_private_values(channels));
    let (transistors, resistors) = BoardProblem::parts_from(catalog);
    let problem = BoardProblem {
        board: design.name.clone(),
        boards: design.boards,
        line_item_cost: design.line_item_cost,
        max_line_items: design.max_line_items,
        currency: catalog.currency.clone(),
        transistors,
        resistors,
        channels: channels.iter().map(|c| c.options.clone()).collect(),
    };
    DesignProblem {
        problem,
        channels,
        catalog: catalog.clone(),
    }
}

/// The class ids the board-wide filter excludes. As in a requirement, an `allow` list
/// restricts transistor classes only if it names one, and resistor classes only if it
/// names one.
pub fn excluded_classes(catalog: &Catalog, classes: &Filters) -> Vec<String> {
    let names_t = classes
        .allow
        .iter()
        .any(|a| catalog.transistor(a).is_some());
    let names_r = classes.allow.iter().any(|a| catalog.resistor(a).is_some());
    let keep = |id: &str, applies: bool| {
        (!applies || classes.allow.iter().any(|a| a == id)) && !classes.deny.iter().any(|d| d == id)
    };
    let t = catalog
        .transistors
        .iter()
        .filter(|t| !keep(&t.id, names_t))
        .map(|t| t.id.clone());
    let r = catalog
        .resistors
        .iter()
        .filter(|r| !keep(&r.id, names_r))
        .map(|r| r.id.clone());
    t.chain(r).collect()
}

/// Rank one channel and keep its feasible designs, one per part usage.
pub fn channel_candidates(
    name: &str,
    count: u32,
    req: &Requirement,
    catalog: &Catalog,
    mc: MonteCarlo,
    progress: &dyn Progress,
) -> ChannelCandidates {
    let groups = enumerate(req, catalog);
    let verdicts = search(req, catalog, &groups, false, Goal::All, mc, progress);
    let evaluated = verdicts.feasible.len() + verdicts.rejected.len();
    let feasible = verdicts.feasible.len();
    let mut kept: Vec<(DesignUsage, (DesignSpec, Evaluation))> = Vec::new();
    for (spec, ev) in verdicts.feasible {
        let Some(usage) = design_usage(&spec, &ev, catalog) else {
            continue;
        };
        match kept.iter_mut().find(|(u, _)| same_parts(u, &usage)) {
            Some(slot) => {
                if usage.governing_margin > slot.0.governing_margin {
                    *slot = (usage, (spec, ev));
                }
            }
            None => kept.push((usage, (spec, ev))),
        }
    }
    let no_candidate_reason = kept
        .is_empty()
        .then(|| rejection_reason(catalog, groups.is_empty(), &verdicts.rejected));
    let (options, designs): (Vec<_>, Vec<_>) = kept.into_iter().unzip();
    ChannelCandidates {
        options: ChannelOptions {
            name: name.to_string(),
            count,
            options,
            no_candidate_reason,
        },
        designs,
        feasible,
        evaluated,
    }
}

/// What one copy of a verified design consumes. `None` only when a helper that sits in a
/// spare device has no single class to name (a catalog without singles of its polarity),
/// which the program's input cannot express.
pub fn design_usage(spec: &DesignSpec, ev: &Evaluation, catalog: &Catalog) -> Option<DesignUsage> {
    let pair = catalog.transistor(&spec.pair)?;
    let helpers = helper_count(spec.topology) as u32;
    let in_spares = helpers > 0 && helpers_fit_in_spares(spec.topology, pair);
    let (helper_single_class, helper_spare_classes) = if helpers == 0 {
        (None, None)
    } else if in_spares {
        // Never bought as a single while the copy stays together; the program still
        // wants a class to fall back on.
        let single = catalog.cheapest_single(pair.polarity)?.id.clone();
        (Some(single), Some(vec![spec.pair.clone()]))
    } else {
        (spec.helper.clone(), Some(Vec::new()))
    };
    let mut resistors: Vec<ResistorUse> = Vec::new();
    if let Some(class) = &spec.resistor {
        for value in [spec.re1_ohm, spec.re2_ohm] {
            if value <= 0.0 {
                continue;
            }
            match resistors.iter_mut().find(|r| r.value_ohm == value) {
                Some(r) => r.count += 1,
                None => resistors.push(ResistorUse {
                    class: class.clone(),
                    value_ohm: value,
                    count: 1,
                }),
            }
        }
    }
    let (governing_check, governing_margin) = ev
        .governing()
        .map_or(("none".to_string(), f64::INFINITY), |c| {
            (c.name.to_string(), c.margin)
        });
    Some(DesignUsage {
        label: label(spec),
        topology: spec.topology.name().to_string(),
        pair_class: spec.pair.clone(),
        pairs: u32::from(spec.topology.desc().matched_pairs),
        helpers,
        helper_single_class,
        helper_spare_classes,
        keep_together: true,
        resistors,
        governing_check,
        governing_margin,
    })
}

/// `wilson npn-dual-general + npn-single-general, RE 1.00 kΩ/1.00 kΩ thick-film-1pct`.
pub fn label(spec: &DesignSpec) -> String {
    let mut s = format!("{} {}", spec.topology.name(), spec.pair);
    if let Some(h) = &spec.helper {
        s.push_str(&format!(" + {h}"));
    }
    if let Some(r) = &spec.resistor {
        let ohm = |v: f64| {
            if v > 0.0 {
                format_quantity(v, Dimension::Resistance)
            } else {
                "—".to_string()
            }
        };
        s.push_str(&format!(
            ", RE {}/{} {r}",
            ohm(spec.re1_ohm),
            ohm(spec.re2_ohm)
        ));
    }
    s
}

/// Keep one option per usage where resistor values no other channel can use count only
/// by class and count (see the module docs).
fn merge_private_values(channels: Vec<ChannelCandidates>) -> Vec<ChannelCandidates> {
    let mut users: BTreeMap<(String, u64), Vec<usize>> = BTreeMap::new();
    for (i, c) in channels.iter().enumerate() {
        for o in &c.options.options {
            for r in &o.resistors {
                let u = users
                    .entry((r.class.clone(), r.value_ohm.to_bits()))
                    .or_default();
                if !u.contains(&i) {
                    u.push(i);
                }
            }
        }
    }
    channels
        .into_iter()
        .enumerate()
        .map(|(i, mut c)| {
            let private = |r: &ResistorUse| {
                users
                    .get(&(r.class.clone(), r.value_ohm.to_bits()))
                    .is_none_or(|u| u.len() == 1 && u[0] == i)
            };
            let key = |o: &DesignUsage| {
                let mut rs: Vec<(String, Option<u64>, u32)> = o
                    .resistors
                    .iter()
                    .map(|r| {
                        let v = (!private(r)).then_some(r.value_ohm.to_bits());
                        (r.class.clone(), v, r.count)
                    })
                    .collect();
                rs.sort();
                rs
            };
            let mut kept: Vec<(DesignUsage, (DesignSpec, Evaluation))> = Vec::new();
            for (o, d) in c.options.options.drain(..).zip(c.designs.drain(..)) {
                let k = key(&o);
                match kept
                    .iter_mut()
                    .find(|(u, _)| key(u) == k && same_transistors(u, &o))
                {
                    Some(slot) => {
                        if o.governing_margin > slot.0.governing_margin {
                            *slot = (o, d);
                        }
                    }
                    None => kept.push((o, d)),
                }
            }
            let (options, designs) = kept.into_iter().unzip();
            c.options.options = options;
            c.designs = designs;
            c
        })
        .collect()
}

/// Drop options whose single resistor value another value of the same class dominates
/// (see the module docs), with the designs they came from.
fn drop_dominated_values(mut channels: Vec<ChannelCandidates>) -> Vec<ChannelCandidates> {
    let options: Vec<ChannelOptions> = channels.iter().map(|c| c.options.clone()).collect();
    let keep = undominated_options(&options);
    for (c, keep) in channels.iter_mut().zip(keep) {
        let options = std::mem::take(&mut c.options.options);
        let designs = std::mem::take(&mut c.designs);
        (c.options.options, c.designs) = options
            .into_iter()
            .zip(designs)
            .zip(keep)
            .filter_map(|(od, k)| k.then_some(od))
            .unzip();
    }
    channels
}

/// For every channel's options, whether it survives the dominated-value reduction of the
/// module docs: `false` for an option whose one resistor value another value of the same
/// class dominates.
pub fn undominated_options(channels: &[ChannelOptions]) -> Vec<Vec<bool>> {
    type Value = (String, u64);
    let single = |o: &DesignUsage| -> Option<(Value, u32)> {
        let first = o.resistors.first()?;
        let v = first.value_ohm.to_bits();
        o.resistors
            .iter()
            .all(|r| r.class == first.class && r.value_ohm.to_bits() == v)
            .then(|| {
                (
                    (first.class.clone(), v),
                    o.resistors.iter().map(|r| r.count).sum(),
                )
            })
    };
    let transistors = |o: &DesignUsage| {
        format!(
            "{}|{}|{}|{:?}|{:?}|{}",
            o.pair_class,
            o.pairs,
            o.helpers,
            o.helper_single_class,
            o.helper_spare_classes,
            o.keep_together
        )
    };
    let mut signature: BTreeMap<Value, std::collections::BTreeSet<(usize, String, u32)>> =
        BTreeMap::new();
    let mut margin_sum: BTreeMap<Value, f64> = BTreeMap::new();
    let mut in_multi: std::collections::BTreeSet<Value> = Default::default();
    for (i, c) in channels.iter().enumerate() {
        for o in &c.options {
            match single(o) {
                Some((value, count)) => {
                    *margin_sum.entry(value.clone()).or_default() += o.governing_margin;
                    signature
                        .entry(value)
                        .or_default()
                        .insert((i, transistors(o), count));
                }
                None => {
                    for r in &o.resistors {
                        in_multi.insert((r.class.clone(), r.value_ohm.to_bits()));
                    }
                }
            }
        }
    }
    // Largest signatures first, so a dominating value is kept before those it covers;
    // of equal signatures the one whose designs keep the most margin stays.
    let mut order: Vec<&Value> = signature.keys().collect();
    order.sort_by(|a, b| {
        signature[*b]
            .len()
            .cmp(&signature[*a].len())
            .then(margin_sum[*b].total_cmp(&margin_sum[*a]))
            .then(a.cmp(b))
    });
    let mut kept: Vec<&Value> = Vec::new();
    let mut dropped: std::collections::BTreeSet<Value> = Default::default();
    for w in order {
        let covered = !in_multi.contains(w)
            && kept
                .iter()
                .any(|v| v.0 == w.0 && signature[*v].is_superset(&signature[w]));
        if covered {
            dropped.insert(w.clone());
        } else {
            kept.push(w);
        }
    }
    channels
        .iter()
        .map(|c| {
            c.options
                .iter()
                .map(|o| single(o).is_none_or(|(value, _)| !dropped.contains(&value)))
                .collect()
        })
        .collect()
}

fn same_transistors(a: &DesignUsage, b: &DesignUsage) -> bool {
    a.pair_class == b.pair_class
        && a.pairs == b.pairs
        && a.helpers == b.helpers
        && a.helper_single_class == b.helper_single_class
        && a.helper_spare_classes == b.helper_spare_classes
        && a.keep_together == b.keep_together
}

fn same_parts(a: &DesignUsage, b: &DesignUsage) -> bool {
    let mut ra = a.resistors.clone();
    let mut rb = b.resistors.clone();
    let key = |r: &ResistorUse| (r.class.clone(), r.value_ohm.to_bits(), r.count);
    ra.sort_by_key(key);
    rb.sort_by_key(key);
    same_transistors(a, b) && ra == rb
}

/// Why a channel has no feasible design: the check that rejected its cheapest
/// candidate, and how many candidates each check rejected.
fn rejection_reason(
    catalog: &Catalog,
    nothing: bool,
    rejected: &[(DesignSpec, CheckName)],
) -> String {
    if nothing || rejected.is_empty() {
        return "no candidate to try: the catalog has no class, topology and resistor this \
                requirement and the board's allow/deny permit"
            .to_string();
    }
    let cheapest = rejected
        .iter()
        .filter_map(|(s, c)| resolve(catalog, s).ok().map(|d| (s, *c, d.cost)))
        .min_by(|a, b| a.2.total_cmp(&b.2));
    let mut by: BTreeMap<CheckName, usize> = BTreeMap::new();
    for (_, c) in rejected {
        *by.entry(*c).or_insert(0) += 1;
    }
    let counts: Vec<String> = by.iter().map(|(c, n)| format!("{c} {n}")).collect();
    let n = rejected.len();
    let tally = format!(
        "{n} candidate{} rejected: {}",
        if n == 1 { "" } else { "s" },
        counts.join(", ")
    );
    match cheapest {
        Some((s, c, _)) => format!("its cheapest candidate, {}, fails {c}; {tally}", label(s)),
        None => tally,
    }
}
