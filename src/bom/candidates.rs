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
//! **The fast feed** (what `bom` runs; [`design_problem_full`] is the reference above,
//! verifying every candidate). Verifying tens of thousands of candidates per channel
//! is what made a board slow, and nearly all of them cannot matter. Each channel is
//! screened as in the ranking (only proven failures are dropped); then:
//! 1. *Bounds from parts alone.* A copy's *share* is a lower bound of what it adds to the
//!    parts cost of any board: each transistor at its package's price divided by the
//!    devices per package (a package never holds more devices than that, so the board's
//!    package cost is at least the sum of these shares), plus its resistors (priced per
//!    piece). Its *items* are the line items it cannot do without (pair class, helper
//!    single, each resistor value). The survivors of each channel are verified in
//!    ascending share, whole levels at a time, until one is feasible: that gives `m_c`,
//!    the smallest share of any feasible design of channel `c`; and in ascending cost
//!    until a cost level has a feasible design, verified whole, so the baseline (every
//!    channel's cheapest design on its own) is the full feed's.
//! 2. *Upper bound.* The program solved on the designs verified so far gives a board
//!    that is feasible in the full problem: `U` = its cost (no board if the line-item
//!    limit cannot be met that way: then `U` is infinite and nothing is cut).
//! 3. *Cut.* A board in which channel `c` uses candidate `o` costs at least
//!    `B (sum over other channels of count x m) + B count_c share(o) + F lines(o)`, where
//!    `lines(o)` counts `o`'s items plus one when some channel can only be built in the
//!    other polarity (its transistor class cannot be one of `o`'s). A candidate whose
//!    bound exceeds `U` is in no optimal board and is never verified.
//! 4. *Lazy verification.* The program is solved with every remaining candidate not yet
//!    disproved *taken as feasible*, after the exact reductions of this module (private
//!    values, dominated values; verified designs are preferred within equal usages). That
//!    optimum is at most the true one (more options). If it chooses only verified
//!    designs, its board is feasible, so it *is* the true optimum; otherwise the chosen
//!    unverified designs are verified and the program solved again. Each round
//!    disproves or confirms at least one chosen design, so it ends. Which *other*
//!    designs are verified in a round changes nothing in this argument (verifying more
//!    only replaces optimistic options by true ones), only the number of rounds: with
//!    each chosen design go up to 64 unverified neighbours of its family (nearest in
//!    enumeration order: should it fail, the next choice is often one of them) and the
//!    16 unverified designs of its channel the program is offered with the smallest
//!    step-3 bound. A round rebuilds and solves the program (tens of milliseconds), a
//!    failing verification costs a few solves, so on the shipped board this takes 20
//!    rounds where one design at a time took 56.
//!
//! Verifications in steps 1 and 4 run at the ranking's screen depth: a design that has
//! already failed a check is not given the re-solved Monte Carlo yield (a thousand
//! builds), so a design that fails `max_noise` costs a few solves, not as much as a
//! feasible one.
//!
//! The board is then built from every verified feasible design only, so its optimum equals
//! the full feed's (`tests/bom/fast_feed.rs` checks it on the shipped board and on random
//! boards); among designs of equal board cost the chosen one may differ, and the
//! candidate counts printed per channel count what was verified.
//!
//! **Helpers.** A helper that sits in a spare device of the pair's own package was
//! verified there, so the copy is kept together and only the pair class's spares may
//! take it; a helper verified as a separate single may only be a single of that class
//! (its ratings were checked with that class and no other).
//!
//! **Programming resistors.** A channel programmed by a resistor from a rail has R_ref
//! sized per candidate from its solved input voltage (`check::choose_r_ref`) as soon as
//! it survives the screen, before any bound is taken: R_ref is one more resistor item
//! (its class and value), counted in the share, the line items and the usage exactly
//! like an emitter resistor, so channels whose R_ref values agree share one line item.
//!
//! **No feasible design.** The channel gets no option and a reason: the check that
//! rejected its cheapest candidate, with the count of rejections by check.
//!
//! Board-wide `allow`/`deny` act on top of each channel's own filters: every class and
//! topology the board excludes joins the channel's `deny` list, so both must permit a
//! part (a helper falls back to the next permitted single), and the channel's own
//! `allow` keeps its meaning.

use std::collections::BTreeMap;
use std::sync::atomic::AtomicU64;

use super::problem::{BoardProblem, ChannelOptions, DesignUsage, ResistorUse};
use crate::check::{
    choose_r_ref, helper_count, helpers_fit_in_spares_for, resolve, CheckName, DesignSpec,
    Evaluation, MonteCarlo,
};
use crate::model::{BoardDesign, Catalog, Filters, Polarity, Requirement, ALL_TOPOLOGIES};
use crate::rank::{enumerate, screen_only, search, verify_each, Goal, Progress};
use crate::units::{format_quantity, Dimension};
use rayon::prelude::*;

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

/// Every channel's requirement with the board-wide exclusions joined to its `deny` lists:
/// the channel's `allow` keeps its meaning, and both filters must permit a part.
fn channel_requirements(design: &BoardDesign, catalog: &Catalog) -> Vec<Requirement> {
    let excluded = excluded_classes(catalog, &design.classes);
    design
        .channels
        .iter()
        .map(|ch| {
            let mut req = ch.requirement.clone();
            req.classes.deny.extend(excluded.iter().cloned());
            req.topologies.deny.extend(
                ALL_TOPOLOGIES
                    .iter()
                    .filter(|t| !design.topologies.permits(t.name()))
                    .map(|t| t.name().to_string()),
            );
            req
        })
        .collect()
}

/// Rank every channel of `design` and build the integer program's input, verifying only
/// the candidates that can matter to the board (see the module docs, "The fast feed").
/// One channel's screen: the candidates proved infeasible (with the check that did it)
/// and the survivors.
type Screened = (Vec<(DesignSpec, CheckName)>, Vec<Cand>);
/// A design's resistor values by (class, value, count) entries and pair class.
type ValueKey = (Vec<(String, Option<u64>, u32)>, String);

pub fn design_problem(
    design: &BoardDesign,
    catalog: &Catalog,
    mc: MonteCarlo,
    progress: &dyn Progress,
) -> DesignProblem {
    let reqs = channel_requirements(design, catalog);
    let feeds = fast_feed(design, &reqs, catalog, mc, progress);
    let channels = design
        .channels
        .iter()
        .zip(feeds)
        .map(|(ch, f)| {
            candidates_from(
                &ch.name,
                ch.count,
                f.feasible,
                &f.rejected,
                f.nothing,
                catalog,
            )
        })
        .collect();
    assemble(design, catalog, channels)
}

/// The same problem built from every feasible design of every channel (search goal
/// `All`): the reference the fast feed is tested against, and what `bom` did before it.
pub fn design_problem_full(
    design: &BoardDesign,
    catalog: &Catalog,
    mc: MonteCarlo,
    progress: &dyn Progress,
) -> DesignProblem {
    let reqs = channel_requirements(design, catalog);
    let channels = design
        .channels
        .iter()
        .zip(&reqs)
        .map(|(ch, req)| channel_candidates(&ch.name, ch.count, req, catalog, mc, progress))
        .collect();
    assemble(design, catalog, channels)
}

/// Apply the cross-channel reductions and build the program's input.
fn assemble(
    design: &BoardDesign,
    catalog: &Catalog,
    channels: Vec<ChannelCandidates>,
) -> DesignProblem {
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

/// One line item of the board: a transistor class, or a resistor class and value.
#[derive(Debug, Clone, PartialEq, Eq, PartialOrd, Ord)]
enum Item {
    Transistor(String),
    Resistor(String, u64),
}

/// A screened candidate of one channel and what the board bound needs to know of it.
struct Cand {
    spec: DesignSpec,
    /// Lower bound of what one copy adds to the parts cost of any board: each device at
    /// its package's price divided by the devices per package, plus its resistors.
    share: f64,
    /// The distinct line items one copy cannot do without.
    items: Vec<Item>,
    polarity: Polarity,
    /// `None` until verified; then the evaluation, or the check it failed.
    verdict: Option<Result<Evaluation, CheckName>>,
}

/// One channel's screen and verifications.
struct Feed {
    nothing: bool,
    rejected: Vec<(DesignSpec, CheckName)>,
    feasible: Vec<(DesignSpec, Evaluation)>,
}

fn cand(spec: DesignSpec, catalog: &Catalog) -> Option<Cand> {
    let d = resolve(catalog, &spec).ok()?;
    let pair = d.pair;
    let per_device =
        |c: &crate::model::TransistorClass| c.unit_cost / f64::from(c.devices_per_package.max(1));
    let helpers = helper_count(spec.topology) as u32;
    let in_spares = helpers > 0 && helpers_fit_in_spares_for(spec.topology, spec.shape, pair);
    let mut share = f64::from(matched_devices(&spec)) * per_device(pair);
    let mut items = vec![Item::Transistor(pair.id.clone())];
    if helpers > 0 {
        if in_spares {
            share += f64::from(helpers) * per_device(pair);
        } else {
            let h = d.helper?;
            share += f64::from(helpers) * per_device(h);
            items.push(Item::Transistor(h.id.clone()));
        }
    }
    if let Some(r) = d.resistor {
        share += f64::from(spec.resistor_count()) * r.unit_cost;
        for v in [spec.re1_ohm, spec.re2_ohm] {
            let it = Item::Resistor(r.id.clone(), v.to_bits());
            if v > 0.0 && !items.contains(&it) {
                items.push(it);
            }
        }
    }
    if let (Some(r), true) = (d.r_ref, spec.r_ref_ohm > 0.0) {
        share += r.unit_cost;
        items.push(Item::Resistor(r.id.clone(), spec.r_ref_ohm.to_bits()));
    }
    items.sort();
    items.dedup();
    Some(Cand {
        polarity: pair.polarity,
        share,
        items,
        spec,
        verdict: None,
    })
}

/// Verify the candidates `idx` of one channel (those not yet verified), in parallel.
fn verify_some(
    req: &Requirement,
    catalog: &Catalog,
    cands: &mut [Cand],
    idx: &[usize],
    mc: MonteCarlo,
    solves: &AtomicU64,
    progress: &dyn Progress,
) {
    let todo: Vec<usize> = idx
        .iter()
        .copied()
        .filter(|&i| cands[i].verdict.is_none())
        .collect();
    if todo.is_empty() {
        return;
    }
    let specs: Vec<&DesignSpec> = todo.iter().map(|&i| &cands[i].spec).collect();
    let out = verify_each(req, catalog, &specs, mc, solves);
    progress.advance(todo.len() as u64);
    for (i, v) in todo.into_iter().zip(out) {
        cands[i].verdict = Some(v);
    }
}

fn is_feasible(c: &Cand) -> bool {
    matches!(c.verdict, Some(Ok(_)))
}

/// Screen every channel, then verify only what can matter to the board (module docs).
fn fast_feed(
    design: &BoardDesign,
    reqs: &[Requirement],
    catalog: &Catalog,
    mc: MonteCarlo,
    progress: &dyn Progress,
) -> Vec<Feed> {
    let solves = AtomicU64::new(0);
    let groups: Vec<_> = reqs.iter().map(|r| enumerate(r, catalog)).collect();
    progress.start(
        groups
            .iter()
            .flat_map(|g| g.iter().map(|g| g.specs.len() as u64))
            .sum(),
    );
    let mut screened: Vec<Screened> = reqs
        .iter()
        .zip(&groups)
        .map(|(req, g)| {
            let (rejected, survivors) = screen_only(req, catalog, g, &solves);
            progress.advance(rejected.len() as u64);
            // R_ref is sized here (three solves a candidate): its value is a line item.
            let cands = survivors
                .into_par_iter()
                .filter_map(|(spec, _)| cand(choose_r_ref(req, catalog, &spec, &solves), catalog))
                .collect();
            (rejected, cands)
        })
        .collect();

    // Stage 1: each channel's smallest share among feasible designs, verifying whole
    // levels of equal share in ascending order until one is feasible.
    let mut least: Vec<Option<f64>> = vec![None; reqs.len()];
    for (c, (req, (_, cands))) in reqs.iter().zip(screened.iter_mut()).enumerate() {
        let mut order: Vec<usize> = (0..cands.len()).collect();
        order.sort_by(|&a, &b| cands[a].share.total_cmp(&cands[b].share).then(a.cmp(&b)));
        let mut i = 0;
        while i < order.len() {
            let share = cands[order[i]].share;
            let end = order[i..]
                .iter()
                .position(|&j| cands[j].share != share)
                .map_or(order.len(), |p| i + p);
            verify_some(req, catalog, cands, &order[i..end], mc, &solves, progress);
            if order[i..end].iter().any(|&j| is_feasible(&cands[j])) {
                least[c] = Some(share);
                break;
            }
            i = end;
        }
        // And the cheapest cost level with a feasible design, whole, so the baseline
        // (every channel's cheapest design on its own) is the one the full feed gives.
        let cost = |c: &Cand| resolve(catalog, &c.spec).map_or(f64::INFINITY, |d| d.cost);
        let costs: Vec<f64> = cands.iter().map(cost).collect();
        order.sort_by(|&a, &b| costs[a].total_cmp(&costs[b]).then(a.cmp(&b)));
        let mut i = 0;
        while i < order.len() {
            let level = costs[order[i]];
            let end = order[i..]
                .iter()
                .position(|&j| costs[j] != level)
                .map_or(order.len(), |p| i + p);
            verify_some(req, catalog, cands, &order[i..end], mc, &solves, progress);
            if order[i..end].iter().any(|&j| is_feasible(&cands[j])) {
                break;
            }
            i = end;
        }
    }

    // A channel without a feasible design makes the board infeasible whatever the
    // others offer: nothing more to verify.
    if least.iter().all(Option::is_some) {
        let least: Vec<f64> = least.iter().map(|m| m.unwrap_or(0.0)).collect();
        // An upper bound of the optimum: the best board built from what is verified.
        let partial: Vec<ChannelCandidates> = design
            .channels
            .iter()
            .zip(&screened)
            .map(|(ch, (rej, cands))| {
                let feasible = cands
                    .iter()
                    .filter_map(|c| match &c.verdict {
                        Some(Ok(ev)) => Some((c.spec.clone(), ev.clone())),
                        _ => None,
                    })
                    .collect();
                candidates_from(&ch.name, ch.count, feasible, rej, false, catalog)
            })
            .collect();
        let upper = match crate::bom::optimise(&assemble(design, catalog, partial).problem) {
            Ok(crate::bom::BomOutcome::Optimal(plan)) => plan.total_cost,
            _ => f64::INFINITY,
        };
        let boards = f64::from(design.boards);
        let base: f64 = design
            .channels
            .iter()
            .zip(&least)
            .map(|(ch, m)| f64::from(ch.count) * m)
            .sum();
        // Polarities each channel can still be built in.
        let polarities: Vec<Vec<Polarity>> = screened
            .iter()
            .map(|(_, cands)| {
                let mut p: Vec<Polarity> = cands
                    .iter()
                    .filter(|c| !matches!(c.verdict, Some(Err(_))))
                    .map(|c| c.polarity)
                    .collect();
                p.dedup();
                p.sort_by_key(|p| *p as u8);
                p.dedup();
                p
            })
            .collect();
        // Stage 2: keep a candidate only if a board using it can cost no more than
        // `upper`; a tolerance covers the rounding of sums.
        let slack = 1e-9 * upper.abs().max(1.0);
        let mut kept: Vec<Vec<usize>> = Vec::new();
        let mut bounds: Vec<Vec<f64>> = Vec::new();
        for (c, (_, cands)) in screened.iter().enumerate() {
            let count = f64::from(design.channels[c].count);
            let within: Vec<(usize, f64)> = (0..cands.len())
                .filter_map(|i| {
                    let o = &cands[i];
                    if matches!(o.verdict, Some(Err(_))) {
                        return None;
                    }
                    let other_polarity = polarities
                        .iter()
                        .any(|p| !p.is_empty() && !p.contains(&o.polarity));
                    let lines = o.items.len() + usize::from(other_polarity);
                    let bound = boards * (base + count * (o.share - least[c]))
                        + design.line_item_cost * lines as f64;
                    (bound <= upper + slack).then_some((i, bound))
                })
                .collect();
            kept.push(within.iter().map(|&(i, _)| i).collect());
            let mut b = vec![f64::INFINITY; cands.len()];
            for (i, x) in within {
                b[i] = x;
            }
            bounds.push(b);
        }
        lazy_verify(
            design,
            reqs,
            catalog,
            &mut screened,
            &kept,
            &bounds,
            mc,
            &solves,
            progress,
        );
    }
    let total: u64 = groups
        .iter()
        .flat_map(|g| g.iter().map(|g| g.specs.len() as u64))
        .sum();
    progress.advance(total);
    screened
        .into_iter()
        .zip(&groups)
        .map(|((mut rejected, cands), g)| {
            let mut feasible = Vec::new();
            for c in cands {
                match c.verdict {
                    Some(Ok(ev)) => feasible.push((c.spec, ev)),
                    Some(Err(check)) => rejected.push((c.spec, check)),
                    None => {}
                }
            }
            Feed {
                nothing: g.is_empty(),
                rejected,
                feasible,
            }
        })
        .collect()
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

/// Rank one channel (every feasible design) and keep its feasible designs, one per part
/// usage.
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
    candidates_from(
        name,
        count,
        verdicts.feasible,
        &verdicts.rejected,
        groups.is_empty(),
        catalog,
    )
}

/// Keep one verified feasible design per part usage (the one with the largest governing
/// margin; ties: the earlier in enumeration order).
fn candidates_from(
    name: &str,
    count: u32,
    verified: Vec<(DesignSpec, Evaluation)>,
    rejected: &[(DesignSpec, CheckName)],
    nothing: bool,
    catalog: &Catalog,
) -> ChannelCandidates {
    let evaluated = verified.len() + rejected.len();
    let feasible = verified.len();
    let mut kept: Vec<(DesignUsage, (DesignSpec, Evaluation))> = Vec::new();
    let mut at: BTreeMap<String, usize> = BTreeMap::new();
    for (spec, ev) in verified {
        let Some(usage) = design_usage(&spec, &ev, catalog) else {
            continue;
        };
        match at.get(&parts_key(&usage)) {
            Some(&k) => {
                let slot = &mut kept[k];
                if usage.governing_margin > slot.0.governing_margin {
                    *slot = (usage, (spec, ev));
                }
            }
            None => {
                at.insert(parts_key(&usage), kept.len());
                kept.push((usage, (spec, ev)));
            }
        }
    }
    let no_candidate_reason = kept
        .is_empty()
        .then(|| rejection_reason(catalog, nothing, rejected));
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

/// Devices of the pair class in one copy: every matched device of the design's form.
fn matched_devices(spec: &DesignSpec) -> u32 {
    let pairs = u32::from(spec.topology.desc().matched_pairs);
    crate::model::fanout::form(spec.topology, spec.shape).map_or(2 * pairs, |f| {
        f.transistors
            .iter()
            .filter(|l| l.role != crate::model::Role::Helper)
            .count() as u32
    })
}

/// What one copy of a verified design consumes. `None` only when a helper that sits in a
/// spare device has no single class to name (a catalog without singles of its polarity),
/// which the program's input cannot express.
pub fn design_usage(spec: &DesignSpec, ev: &Evaluation, catalog: &Catalog) -> Option<DesignUsage> {
    let pair = catalog.transistor(&spec.pair)?;
    let helpers = helper_count(spec.topology) as u32;
    let in_spares = helpers > 0 && helpers_fit_in_spares_for(spec.topology, spec.shape, pair);
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
    // Emitter resistors (RE1 once, RE2 once per output), then R_ref (its own class): one
    // entry per (class, value).
    let outputs = u32::from(spec.shape.outputs);
    let re = spec
        .resistor
        .iter()
        .flat_map(|c| [(c, spec.re1_ohm, 1), (c, spec.re2_ohm, outputs)]);
    let r_ref = spec.r_ref_resistor.iter().map(|c| (c, spec.r_ref_ohm, 1));
    for (class, value, count) in re.chain(r_ref) {
        if value <= 0.0 {
            continue;
        }
        match resistors
            .iter_mut()
            .find(|r| r.value_ohm == value && r.class == *class)
        {
            Some(r) => r.count += count,
            None => resistors.push(ResistorUse {
                class: class.clone(),
                value_ohm: value,
                count,
            }),
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
        matched_devices: matched_devices(spec),
        helpers,
        helper_single_class,
        helper_spare_classes,
        keep_together: true,
        resistors,
        r_ref: spec
            .r_ref_resistor
            .as_ref()
            .filter(|_| spec.r_ref_ohm > 0.0)
            .map(|c| ResistorUse {
                class: c.clone(),
                value_ohm: spec.r_ref_ohm,
                count: 1,
            }),
        governing_check,
        governing_margin,
    })
}

/// `wilson npn-dual-general + npn-single-general, RE 1.00 kΩ/1.00 kΩ thick-film-1pct`.
pub fn label(spec: &DesignSpec) -> String {
    let mut s = format!("{} {}", spec.topology.name(), spec.pair);
    if spec.shape.outputs > 1 {
        s.push_str(&format!(" ×{} outputs", spec.shape.outputs));
    }
    if !matches!(spec.shape.area, crate::model::Area::Unit) {
        s.push_str(&format!(" area {}", spec.shape.area_text()));
    }
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
        // As the ranking's design cell writes it.
        if spec.re1_ohm == spec.re2_ohm {
            s.push_str(&format!(", RE {} {r}", ohm(spec.re1_ohm)));
        } else {
            s.push_str(&format!(
                ", RE1 {} RE2 {} {r}",
                ohm(spec.re1_ohm),
                ohm(spec.re2_ohm)
            ));
        }
    }
    if let (Some(r), true) = (&spec.r_ref_resistor, spec.r_ref_ohm > 0.0) {
        s.push_str(&format!(
            ", R_ref {} {r}",
            format_quantity(spec.r_ref_ohm, Dimension::Resistance)
        ));
    }
    s
}

/// Verify lazily against the board (module docs, "The fast feed"): solve the program with
/// every kept candidate not yet disproved taken as feasible; verify the unverified designs
/// it chooses (with neighbours of the same family and the channel's next offered designs),
/// for pass or fail only; repeat until it chooses only verified ones. `bounds[c][i]` is
/// candidate `i`'s board bound (step 3), infinite when cut.
#[allow(clippy::too_many_arguments)]
fn lazy_verify(
    design: &BoardDesign,
    reqs: &[Requirement],
    catalog: &Catalog,
    screened: &mut [Screened],
    kept: &[Vec<usize>],
    bounds: &[Vec<f64>],
    mc: MonteCarlo,
    solves: &AtomicU64,
    progress: &dyn Progress,
) {
    // Each kept candidate's usage, and the candidates grouped by the parts they put on
    // the board, with those parts as small integers (computed once: the loop only picks
    // a representative per group).
    let mut usages: Vec<Vec<Option<DesignUsage>>> = Vec::new();
    let mut groups: Vec<Vec<Vec<usize>>> = Vec::new();
    let mut shape: Vec<Vec<Shape>> = Vec::new();
    let mut tkeys: BTreeMap<String, u32> = BTreeMap::new();
    let mut rclass: BTreeMap<String, u32> = BTreeMap::new();
    let mut vids: BTreeMap<(u32, u64), u32> = BTreeMap::new();
    for (c, (_, cands)) in screened.iter().enumerate() {
        let mut u: Vec<Option<DesignUsage>> = (0..cands.len()).map(|_| None).collect();
        let mut at: BTreeMap<String, usize> = BTreeMap::new();
        let mut g: Vec<Vec<usize>> = Vec::new();
        let mut sh: Vec<Shape> = Vec::new();
        let described: Vec<(usize, DesignUsage, String)> = kept[c]
            .par_iter()
            .filter_map(|&i| {
                let usage = design_usage(&cands[i].spec, &placeholder(&cands[i]), catalog)?;
                let key = parts_key(&usage);
                Some((i, usage, key))
            })
            .collect();
        for (i, usage, key) in described {
            match at.get(&key) {
                Some(&k) => g[k].push(i),
                None => {
                    at.insert(key, g.len());
                    g.push(vec![i]);
                    let n = tkeys.len() as u32;
                    let t = *tkeys.entry(transistors_key(&usage)).or_insert(n);
                    let mut rs: Vec<(u32, u64, u32, u32)> = usage
                        .resistors
                        .iter()
                        .map(|r| {
                            let n = rclass.len() as u32;
                            let k = *rclass.entry(r.class.clone()).or_insert(n);
                            let bits = r.value_ohm.to_bits();
                            let n = vids.len() as u32;
                            let v = *vids.entry((k, bits)).or_insert(n);
                            (k, bits, r.count, v)
                        })
                        .collect();
                    rs.sort_unstable();
                    sh.push((t, rs));
                }
            }
            u[i] = Some(usage);
        }
        usages.push(u);
        groups.push(g);
        shape.push(sh);
    }
    loop {
        let state = |c: usize, i: usize| &screened[c].1[i].verdict;
        // Per group: the verified design with the largest governing margin, else the
        // first not yet verified; `None` once every member failed.
        let reps: Vec<Vec<Option<(usize, f64)>>> = groups
            .iter()
            .enumerate()
            .map(|(c, gs)| {
                gs.iter()
                    .map(|g| {
                        let mut best: Option<(usize, f64)> = None;
                        let mut open = None;
                        for &i in g {
                            match state(c, i) {
                                Some(Ok(ev)) => {
                                    let m = ev.governing().map_or(f64::INFINITY, |x| x.margin);
                                    if best.is_none_or(|(_, b)| m > b) {
                                        best = Some((i, m));
                                    }
                                }
                                Some(Err(_)) => {}
                                None => {
                                    if open.is_none() {
                                        open = Some(i);
                                    }
                                }
                            }
                        }
                        best.or(open.map(|i| (i, UNVERIFIED_MARGIN)))
                    })
                    .collect()
            })
            .collect();
        let live: Vec<Vec<(usize, (usize, f64))>> = reps
            .iter()
            .map(|r| {
                r.iter()
                    .enumerate()
                    .filter_map(|(k, x)| x.map(|x| (k, x)))
                    .collect()
            })
            .collect();
        let keep = reduce_optimistic(&shape, vids.len(), &live);
        let mut channels = Vec::new();
        for (c, (rej, cands)) in screened.iter().enumerate() {
            let mut options = Vec::new();
            let mut designs = Vec::new();
            for &(k, (i, margin)) in &live[c] {
                if !keep[c][k] {
                    continue;
                }
                let ev = match &cands[i].verdict {
                    Some(Ok(ev)) => ev.clone(),
                    _ => placeholder(&cands[i]),
                };
                let Some(mut u) = usages[c][i].clone() else {
                    continue;
                };
                u.label = label(&cands[i].spec);
                u.governing_margin = margin;
                if let Some(g) = ev.governing() {
                    u.governing_check = g.name.to_string();
                }
                options.push(u);
                designs.push((cands[i].spec.clone(), ev));
            }
            let ch = &design.channels[c];
            let no_candidate_reason = options
                .is_empty()
                .then(|| rejection_reason(catalog, false, rej));
            channels.push(ChannelCandidates {
                options: ChannelOptions {
                    name: ch.name.clone(),
                    count: ch.count,
                    options,
                    no_candidate_reason,
                },
                designs,
                feasible: 0,
                evaluated: 0,
            });
        }
        let dp = assemble(design, catalog, channels);
        let Ok(crate::bom::BomOutcome::Optimal(plan)) = crate::bom::optimise(&dp.problem) else {
            return;
        };
        let mut todo: Vec<(usize, usize)> = Vec::new();
        for (c, a) in plan.channels.iter().enumerate() {
            let Some((spec, ev)) = dp.channels[c].designs.get(a.option) else {
                continue;
            };
            if !ev.complete {
                let cands = &screened[c].1;
                if let Some(i) = kept[c].iter().copied().find(|&i| cands[i].spec == *spec) {
                    todo.push((c, i));
                }
            }
        }
        if todo.is_empty() {
            return;
        }
        for (c, i) in todo {
            let cands = &mut screened[c].1;
            // The chosen design and its nearest unverified neighbours in the same family:
            // should it fail, the next choice is likely one of them.
            let fam = family_key(&cands[i].spec);
            let mut near: Vec<usize> = kept[c]
                .iter()
                .copied()
                .filter(|&j| cands[j].verdict.is_none() && family_key(&cands[j].spec) == fam)
                .collect();
            near.sort_by_key(|&j| j.abs_diff(i));
            near.truncate(NEIGHBOURS);
            if !near.contains(&i) {
                near.push(i);
            }
            // And the channel's other offered designs not yet verified with the smallest
            // bound: what the program would likely try next.
            let mut next: Vec<usize> = live[c]
                .iter()
                .filter(|&&(k, (j, _))| {
                    keep[c][k] && cands[j].verdict.is_none() && !near.contains(&j)
                })
                .map(|&(_, (j, _))| j)
                .collect();
            next.sort_by(|&a, &b| bounds[c][a].total_cmp(&bounds[c][b]).then(a.cmp(&b)));
            next.truncate(NEXT_OFFERED);
            near.extend(next);
            verify_some(&reqs[c], catalog, cands, &near, mc, solves, progress);
        }
    }
}

/// A group's parts: its transistors (interned) and resistor items `(class, value bits,
/// count, value id)`, sorted; the value id interns `(class, value bits)` board-wide.
type Shape = (u32, Vec<(u32, u64, u32, u32)>);

/// A group's transistors and its resistor items `(class, value id or NO_USER when the
/// value is private, count)`: groups with equal keys cost a board the same.
type MergeKey = (u32, Vec<(u32, u32, u32)>);

/// A value no live group uses, and one that two channels or more use.
const NO_USER: u32 = u32::MAX;
const SHARED: u32 = u32::MAX - 1;

/// The two exact reductions of the module docs (private values, dominated values) on the
/// optimistic feed, on integers because that feed is large (tens of thousands of groups,
/// every round). `live[c]` lists channel `c`'s groups still standing, each with its
/// representative and margin; `values` is the number of value ids. Returns, per channel
/// and group, whether the group is offered.
fn reduce_optimistic(
    shape: &[Vec<Shape>],
    values: usize,
    live: &[Vec<(usize, (usize, f64))>],
) -> Vec<Vec<bool>> {
    // The one channel that still uses each value, or `SHARED`.
    let mut owner = vec![NO_USER; values];
    for (c, l) in live.iter().enumerate() {
        for &(k, _) in l {
            for &(_, _, _, v) in &shape[c][k].1 {
                let o = &mut owner[v as usize];
                *o = match *o {
                    NO_USER => c as u32,
                    x if x == c as u32 => x,
                    _ => SHARED,
                };
            }
        }
    }
    // Private values: one group per (transistors, resistor classes and counts), the one
    // with the largest margin (ties: the first).
    let mut merged: Vec<Vec<(usize, f64)>> = Vec::new();
    for (c, l) in live.iter().enumerate() {
        // Integer keys, not adversarial: the Fx hash (rustc-hash) costs a fraction of
        // the default one here, run every round over tens of thousands of groups.
        let mut at: rustc_hash::FxHashMap<MergeKey, usize> = Default::default();
        let mut out: Vec<(usize, f64)> = Vec::new();
        for &(k, (_, m)) in l {
            let (t, rs) = &shape[c][k];
            let key: Vec<(u32, u32, u32)> = rs
                .iter()
                .map(|&(cl, _, n, v)| {
                    let shared = owner[v as usize] == SHARED;
                    (cl, if shared { v } else { NO_USER }, n)
                })
                .collect();
            match at.entry((*t, key)) {
                std::collections::hash_map::Entry::Occupied(e) => {
                    let j = *e.get();
                    if m > out[j].1 {
                        out[j] = (k, m);
                    }
                }
                std::collections::hash_map::Entry::Vacant(e) => {
                    e.insert(out.len());
                    out.push((k, m));
                }
            }
        }
        merged.push(out);
    }
    // Dominated values: the signature of a value is every (channel, transistors, count)
    // of the options whose resistors all take that one value.
    let single = |rs: &[(u32, u64, u32, u32)]| -> Option<(u32, u32)> {
        let f = rs.first()?;
        rs.iter()
            .all(|r| r.3 == f.3)
            .then(|| (f.3, rs.iter().map(|r| r.2).sum()))
    };
    let mut sig: Vec<Vec<(usize, u32, u32)>> = vec![Vec::new(); values];
    let mut margin = vec![0.0f64; values];
    let mut in_multi = vec![false; values];
    // Each value's class and bits, for the class test and the order's last tie-break.
    let mut value_of = vec![(0u32, 0u64); values];
    for (c, out) in merged.iter().enumerate() {
        for &(k, m) in out {
            let (t, rs) = &shape[c][k];
            for r in rs {
                value_of[r.3 as usize] = (r.0, r.1);
            }
            match single(rs) {
                Some((v, n)) => {
                    sig[v as usize].push((c, *t, n));
                    margin[v as usize] += m;
                }
                None => rs.iter().for_each(|r| in_multi[r.3 as usize] = true),
            }
        }
    }
    for s in &mut sig {
        s.sort_unstable();
        s.dedup();
    }
    let mut order: Vec<usize> = (0..values).filter(|&v| !sig[v].is_empty()).collect();
    order.sort_by(|&a, &b| {
        sig[b]
            .len()
            .cmp(&sig[a].len())
            .then(margin[b].total_cmp(&margin[a]))
            .then(value_of[a].cmp(&value_of[b]))
    });
    let superset = |big: &[(usize, u32, u32)], small: &[(usize, u32, u32)]| {
        let mut j = 0;
        for x in small {
            while j < big.len() && big[j] < *x {
                j += 1;
            }
            if j == big.len() || big[j] != *x {
                return false;
            }
        }
        true
    };
    let mut kept: Vec<usize> = Vec::new();
    let mut dropped = vec![false; values];
    for w in order {
        let covered = !in_multi[w]
            && kept
                .iter()
                .any(|&v| value_of[v].0 == value_of[w].0 && superset(&sig[v], &sig[w]));
        if covered {
            dropped[w] = true;
        } else {
            kept.push(w);
        }
    }
    merged
        .iter()
        .enumerate()
        .map(|(c, out)| {
            let mut offer = vec![false; shape[c].len()];
            for &(k, _) in out {
                offer[k] = single(&shape[c][k].1).is_none_or(|(v, _)| !dropped[v as usize]);
            }
            offer
        })
        .collect()
}

/// Margin given to a design not yet verified, so equal usages keep a verified design.
const UNVERIFIED_MARGIN: f64 = -1e9;
/// Designs of the same family verified with one the program chooses unverified.
const NEIGHBOURS: usize = 64;
/// Further offered designs of the same channel verified with it, smallest bound first.
const NEXT_OFFERED: usize = 16;

fn family_key(
    s: &DesignSpec,
) -> (
    crate::model::Topology,
    String,
    Option<String>,
    Option<String>,
) {
    (
        s.topology,
        s.pair.clone(),
        s.helper.clone(),
        s.resistor.clone(),
    )
}

/// An evaluation that stands for a design not yet verified (never shown: the final feed
/// holds verified designs only).
fn placeholder(o: &Cand) -> Evaluation {
    Evaluation {
        cost: o.share,
        checks: Vec::new(),
        figures: crate::check::Figures::default(),
        corners: Vec::new(),
        budget: None,
        hottest: None,
        soft_saturation: Vec::new(),
        complete: false,
        noise: None,
    }
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
            let mut at: BTreeMap<ValueKey, usize> = BTreeMap::new();
            for (o, d) in c.options.options.drain(..).zip(c.designs.drain(..)) {
                let k = (key(&o), transistors_key(&o));
                match at.get(&k) {
                    Some(&j) => {
                        let slot = &mut kept[j];
                        if o.governing_margin > slot.0.governing_margin {
                            *slot = (o, d);
                        }
                    }
                    None => {
                        at.insert(k, kept.len());
                        kept.push((o, d));
                    }
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
            "{}|{}|{}|{}|{:?}|{:?}|{}",
            o.pair_class,
            o.pairs,
            o.matched_devices,
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

/// Equal exactly when two usages take the same transistors the same way.
fn transistors_key(o: &DesignUsage) -> String {
    format!(
        "{}|{}|{}|{:?}|{:?}|{}",
        o.pair_class,
        o.pairs,
        o.helpers,
        o.helper_single_class,
        o.helper_spare_classes,
        o.keep_together
    )
}

/// Equal exactly when two usages put the same parts on the board.
fn parts_key(o: &DesignUsage) -> String {
    let mut rs: Vec<(String, u64, u32)> = o
        .resistors
        .iter()
        .map(|r| (r.class.clone(), r.value_ohm.to_bits(), r.count))
        .collect();
    rs.sort();
    format!("{}#{rs:?}", transistors_key(o))
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
