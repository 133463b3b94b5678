//! The search: verify every candidate (exhaustive) or skip the hopeless ones first
//! (default), in parallel.
//!
//! The default search never skips a candidate that could be feasible, under two
//! monotone facts about emitter degeneration within a group (same topology, pair class
//! and resistor class, ascending resistor value):
//! * the drop across RE only grows with RE, so if a value breaks compliance (or the input
//!   voltage limit) every larger one does too: binary search for the largest value that
//!   passes, one solve per step;
//! * the V_BE-offset term `dvbe / (V_T + I*R_E)` only shrinks with RE, and `k` times it at
//!   one corner is a lower bound of the total error: binary search for the smallest value
//!   whose bound is within the accuracy requirement, two solves per step.
//! * with a programming resistor and a `max_tempco`, each slope of the output's tempco
//!   (between neighbouring ambient points) is monotone in RE: R_ref is sized so that
//!   `I_in (R_ref + RE1) = V_rail - n V_BE` at every RE (n = 1 for a simple mirror, 2 for
//!   a Wilson or cascode), so the V_BE drift's share, `-n dV_BE/dT / (V_rail - n V_BE)`,
//!   does not depend on RE, and the resistors' TCRs enter weighted by R_ref's and RE1's
//!   shares of that sum, which move one way as RE grows. A slope over the limit on the
//!   same side at the smallest and the largest surviving value is over it for every
//!   value between: the whole range fails `tempco` (two probes, four solves each with
//!   R_ref's sizing). A Wilson from a 5 V rail (about 1000 ppm/K) is rejected so, family
//!   by family, instead of candidate by candidate.
//!
//! R_ref is sized per design from its solved input voltage (`check::choose_r_ref`) only
//! when the design is first solved, and once: both standard values around the exact one
//! and every R_ref class share the design's exact value (`check::RefSizes`).
//!
//! A family member's corner solves are made once: its starting bound, its bound walk
//! and its verification share one memo of nominal solves and error-budget sensitivities
//! per corner (`check::CornerMemo`). Each kept entry is the result of the very solve the
//! verification makes there (same netlist, operating point and start), so every value,
//! and hence every verdict, is the one a fresh verification gives; only the solve count
//! falls.
//!
//! Ratings, where a class is likely to break them (a derated VCEO below half the supply
//! or the highest output voltage, on a requirement with a forced input; see
//! `rating_screen_worthwhile`): every survivor of the
//! bounds above is solved once at the input corner (`I_in` max, cold ambient, `V_out`
//! max: the largest V_CE of the output device, and of a helper collecting from the supply
//! once the input voltage is at its highest), and one whose VCEO, IC max or dissipation is
//! broken there fails that rating (each rating is judged on its worst corner, so one
//! corner over it is proof), as does one whose solve there fails (under the solve's
//! check: `thermal-runaway`, `no-solution`). It is the nominal solve of that corner the
//! verification makes, so it finds what the verification would. On a 100 V, 2 mA sink
//! the general-purpose classes (derated VCEO 36 V) are thus rejected at one solve each,
//! where the family search spent about four on each (a bound at its hint corners, then
//! the screened evaluation that reached the input corner): 139 k solves became 76 k.
//!
//! Candidates over `max_cost` are rejected before any solve (cost needs none). The rest
//! are verified with an early stop at the first corner that already breaks accuracy,
//! which only ever stops candidates that fail. Survivors get the same verdict as in the
//! exhaustive search (same code path), so the feasible set, and hence any ranking of it,
//! is the same. The test suite checks that on every shipped example.
//!
//! Skipped candidates are counted under the check that bounded them (cost, compliance,
//! input voltage, accuracy, or the rating or failed solve of the rating screen), which
//! they fail; the exhaustive search counts each under
//! the first check it fails, so the two can differ in the rejection counts only.

use std::sync::atomic::{AtomicU64, Ordering};

use rayon::prelude::*;

use super::order::{bare_family, family, worth_listing, FamilyKey, NOTICEABLE_ERROR};
use super::space::Group;
use std::sync::Mutex;

use crate::check::{
    input_corner, probe_corner, resolve, resolved_sibling, CheckName, CornerMemo, Depth,
    DesignError, DesignSpec, Evaluation, Evaluator, MonteCarlo, OperatingCorner, RefSizes,
    ResolvedDesign, VCEO_DERATING,
};
use crate::model::{Catalog, Requirement};

/// Reports search progress (a progress bar in the CLI). Called from worker threads.
pub trait Progress: Sync {
    fn start(&self, total_candidates: u64);
    fn advance(&self, candidates: u64);
}

/// No progress display.
pub struct Silent;

impl Progress for Silent {
    fn start(&self, _: u64) {}
    fn advance(&self, _: u64) {}
}

/// What a goal of `n` counts: rows (every resistor value its own) or families (see
/// `order::family`), whose best rows the ranking shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Unit {
    Rows,
    Families,
}

/// What the ranking needs verified; the default search verifies only that much.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Goal {
    /// The `n` cheapest feasible designs or families (and every feasible design as cheap
    /// as the `n`-th, so ties, each family's best row and Pareto flags are exact).
    Cheapest(usize, Unit),
    /// Every feasible design cheaper than this cost.
    CheaperThan(f64),
    /// The cheapest feasible design(s) of every transistor class.
    CheapestPerClass,
    /// The most accurate feasible design of every family (topology, pair, helper,
    /// resistor class) cheaper than this cost; of the cheapest `n` such families (and
    /// every family as cheap as the `n`-th) when `n` is given (`usize::MAX`: all).
    CheaperFamilies(f64, usize),
    /// The `n` designs or families with the smallest total error (largest accuracy
    /// margin).
    MostAccurate(usize, Unit),
    /// The `n` designs or families with the smallest balanced score (see `order`).
    Balanced(usize, Unit),
    /// Every feasible design.
    All,
}

/// The verdict on every candidate.
#[derive(Clone)]
pub struct Verdicts {
    /// Feasible candidates with their verdict-depth evaluation, in enumeration order.
    pub feasible: Vec<(DesignSpec, Evaluation)>,
    /// Rejected candidates and the check each was counted under, in enumeration order.
    pub rejected: Vec<(DesignSpec, CheckName)>,
    /// Candidates passing every screen that the goal did not need verified (they cost
    /// more than what the goal asks for). Always empty in an exhaustive search.
    pub unverified: Vec<DesignSpec>,
    /// Solver calls made.
    pub solves: u64,
}

pub(super) enum Outcome {
    Feasible(Box<Evaluation>),
    Rejected(CheckName),
    /// Passed every screen; not yet verified.
    Survivor(f64),
}

/// Judge the candidates of `groups`: every one when `exhaustive`, otherwise enough to
/// meet `goal` exactly.
pub fn search(
    req: &Requirement,
    catalog: &Catalog,
    groups: &[Group],
    exhaustive: bool,
    goal: Goal,
    mc: MonteCarlo,
    progress: &dyn Progress,
) -> Verdicts {
    let solves = Tally::new();
    progress.start(groups.iter().map(|g| g.specs.len() as u64).sum());
    let per_group: Vec<Vec<(DesignSpec, Outcome)>> = groups
        .par_iter()
        .map(|g| {
            let out = if exhaustive {
                judge_all(req, catalog, &g.specs, Depth::Verdict, mc, &solves)
            } else {
                screen_group(req, catalog, g, true, &solves)
            };
            let done = out
                .iter()
                .filter(|(_, o)| !matches!(o, Outcome::Survivor(_)))
                .count();
            progress.advance(done as u64);
            out
        })
        .collect();
    let mut v = Verdicts {
        feasible: Vec::new(),
        rejected: Vec::new(),
        unverified: Vec::new(),
        solves: 0,
    };
    let mut survivors: Vec<(usize, DesignSpec, f64)> = Vec::new();
    for (k, (spec, outcome)) in per_group.into_iter().flatten().enumerate() {
        match outcome {
            Outcome::Feasible(ev) => v.feasible.push((spec, *ev)),
            Outcome::Rejected(c) => v.rejected.push((spec, c)),
            Outcome::Survivor(cost) => survivors.push((k, spec, cost)),
        }
    }
    verify_survivors(req, catalog, survivors, goal, mc, &solves, progress, &mut v);

    v.solves = solves.load(Ordering::Relaxed);
    v
}

/// What `screen_only` returns: the candidates a screen proves infeasible (with the check
/// they were counted under) and the survivors with their cost.
pub type ScreenOutcome = (Vec<(DesignSpec, CheckName)>, Vec<(DesignSpec, f64)>);

/// The screen alone, for callers that choose what to verify themselves (the board
/// optimiser): every candidate a screen proves infeasible, with the check it was counted
/// under, and every survivor with its cost, both in enumeration order.
pub fn screen_only(
    req: &Requirement,
    catalog: &Catalog,
    groups: &[Group],
    solves: &AtomicU64,
) -> ScreenOutcome {
    let tally = Tally::new();
    let per_group: Vec<Vec<(DesignSpec, Outcome)>> = groups
        .par_iter()
        .map(|g| screen_group(req, catalog, g, true, &tally))
        .collect();
    solves.fetch_add(tally.load(Ordering::Relaxed), Ordering::Relaxed);
    let mut rejected = Vec::new();
    let mut survivors = Vec::new();
    for (spec, o) in per_group.into_iter().flatten() {
        match o {
            Outcome::Rejected(c) => rejected.push((spec, c)),
            Outcome::Survivor(cost) => survivors.push((spec, cost)),
            // A screen verifies nothing; should it ever, the design is still a survivor.
            Outcome::Feasible(ev) => survivors.push((spec, ev.cost)),
        }
    }
    (rejected, survivors)
}

/// Verify each design as the search does (`Depth::Screen`: early stop at the first
/// check that fails), in parallel: the evaluation when feasible, else the check it
/// fails. A design the catalog cannot resolve fails `no-solution`, as in the search.
pub fn verify_each(
    req: &Requirement,
    catalog: &Catalog,
    specs: &[&DesignSpec],
    mc: MonteCarlo,
    solves: &AtomicU64,
) -> Vec<Result<Evaluation, CheckName>> {
    specs
        .par_iter()
        .map(|spec| {
            let o = resolve(catalog, spec)
                .ok()
                .map(|d| outcome(Evaluator::new(req, &d, solves).evaluate(Depth::Screen, mc)));
            match o {
                Some(Outcome::Feasible(ev)) => Ok(*ev),
                Some(Outcome::Rejected(c)) => Err(c),
                _ => Err(CheckName::NoSolution),
            }
        })
        .collect()
}

/// Verify survivors cost level by cost level (per class for `CheapestPerClass`) until
/// the goal is met; a level is always verified whole, so ties are exact.
#[allow(clippy::too_many_arguments)]
fn verify_survivors(
    req: &Requirement,
    catalog: &Catalog,
    mut survivors: Vec<Survivor>,
    goal: Goal,
    mc: MonteCarlo,
    solves: &Tally,
    progress: &dyn Progress,
    v: &mut Verdicts,
) {
    survivors.sort_by(|a, b| a.2.total_cmp(&b.2).then(a.0.cmp(&b.0)));
    if let Goal::MostAccurate(n, unit) | Goal::Balanced(n, unit) = goal {
        return verify_by_bound(
            req, catalog, survivors, goal, n, unit, mc, solves, progress, v,
        );
    }
    if let Goal::CheaperFamilies(limit, n) = goal {
        let mut families: Vec<(FamilyKey, Vec<Survivor>)> = Vec::new();
        for s in survivors {
            if s.2 >= limit - 1e-12 {
                v.unverified.push(s.1);
                continue;
            }
            let key = family(&s.1);
            match families.iter_mut().find(|(k, _)| *k == key) {
                Some((_, f)) => f.push(s),
                None => families.push((key, vec![s])),
            }
        }
        // Families in ascending cost (a family's members share one cost); with a count,
        // stop once that many have a feasible design and their cost level is complete.
        let mut found = 0usize;
        let mut last_cost = f64::NEG_INFINITY;
        for (_, f) in families {
            let cost = f.first().map_or(0.0, |s| s.2);
            if found >= n && cost > last_cost {
                v.unverified.extend(f.into_iter().map(|s| s.1));
                continue;
            }
            let before = v.feasible.len();
            let g = Goal::MostAccurate(1, Unit::Rows);
            verify_by_bound(req, catalog, f, g, 1, Unit::Rows, mc, solves, progress, v);
            if v.feasible.len() > before {
                found += 1;
                last_cost = cost;
            }
        }
        return;
    }
    if let Goal::Cheapest(n, Unit::Families) = goal {
        return cheapest_families(req, catalog, survivors, n, mc, solves, progress, v);
    }
    // Buckets: one, or one per pair class.
    let mut buckets: Vec<(Option<String>, Vec<Survivor>)> = Vec::new();
    for s in survivors {
        let key = (goal == Goal::CheapestPerClass).then(|| s.1.pair.clone());
        match buckets.iter_mut().find(|(k, _)| *k == key) {
            Some((_, b)) => b.push(s),
            None => buckets.push((key, vec![s])),
        }
    }
    let mut results: Vec<(usize, DesignSpec, Option<Outcome>)> = Vec::new();
    for (_, bucket) in buckets {
        // Feasible rows found, and the distinct families they belong to. A family's
        // members all cost the same (resistor price does not depend on value), so a
        // verified cost level holds whole families: once `n` families have a feasible
        // row, every member of each is verified and its best row is exact.
        let mut found = 0usize;
        let mut families: Vec<FamilyKey> = Vec::new();
        let mut i = 0;
        while i < bucket.len() {
            let cost = bucket[i].2;
            let done = match goal {
                Goal::Cheapest(n, Unit::Rows) => found >= n,
                Goal::Cheapest(n, Unit::Families) => families.len() >= n,
                Goal::CheaperThan(c) => cost >= c - 1e-12,
                Goal::CheapestPerClass => found >= 1,
                Goal::All
                | Goal::MostAccurate(..)
                | Goal::Balanced(..)
                | Goal::CheaperFamilies(..) => false,
            };
            let mut end = i;
            while end < bucket.len() && bucket[end].2 == cost {
                end += 1;
            }
            if done {
                results.extend(bucket[i..].iter().map(|(k, s, _)| (*k, s.clone(), None)));
                break;
            }
            let level: Vec<(usize, DesignSpec, Option<Outcome>)> = bucket[i..end]
                .par_iter()
                .map(
                    |(k, spec, _)| match resolve_sized(req, catalog, spec, solves) {
                        Ok(d) => {
                            let ev = Evaluator::new(req, &d, solves).evaluate(Depth::Screen, mc);
                            (*k, d.spec.clone(), Some(outcome(ev)))
                        }
                        Err(_) => (*k, spec.clone(), None),
                    },
                )
                .collect();
            progress.advance((end - i) as u64);
            for (_, spec, o) in &level {
                if matches!(o, Some(Outcome::Feasible(_))) {
                    found += 1;
                    let f = family(spec);
                    if !families.contains(&f) {
                        families.push(f);
                    }
                }
            }
            results.extend(level);
            i = end;
        }
    }
    merge(results, v);
}

/// The `n` cheapest listed families (`order::listed_families`) with a feasible design,
/// each with its best row exact.
/// Cost levels are taken in ascending order and each is finished whole (every family
/// in it), so ties and the Pareto flags of the listed rows are exact, as when every
/// member of a level was verified. Within a family every member costs the same, so the
/// family's best row (the cost order's first) is its most accurate one: each family is
/// searched best-first on the probe-corner bound of its total error (`best_first` with
/// one row), which verifies a few members instead of all of them; the families of a
/// level are searched in parallel. A family with no feasible member has every member
/// verified. Members not needed for the best row stay unverified.
#[allow(clippy::too_many_arguments)]
fn cheapest_families(
    req: &Requirement,
    catalog: &Catalog,
    survivors: Vec<Survivor>,
    n: usize,
    mc: MonteCarlo,
    solves: &Tally,
    progress: &dyn Progress,
    v: &mut Verdicts,
) {
    let mut found = 0usize;
    // Feasible family bests so far: family, cost, total error, worst corners (bare only).
    let mut bests: Vec<(FamilyKey, f64, f64, Vec<OperatingCorner>)> = Vec::new();
    let mut results: Vec<(usize, DesignSpec, Option<Outcome>)> = Vec::new();
    let mut i = 0;
    while i < survivors.len() {
        if found >= n {
            results.extend(survivors[i..].iter().map(|(k, s, _)| (*k, s.clone(), None)));
            break;
        }
        let cost = survivors[i].2;
        let mut end = i;
        while end < survivors.len() && survivors[end].2 == cost {
            end += 1;
        }
        let mut families: Vec<(FamilyKey, Vec<Survivor>)> = Vec::new();
        for s in &survivors[i..end] {
            let key = family(&s.1);
            match families.iter_mut().find(|(k, _)| *k == key) {
                Some((_, f)) => f.push(s.clone()),
                None => families.push((key, vec![s.clone()])),
            }
        }
        // Each family's hint corners and target from its bare design (a cheaper level,
        // so already known): its worst corners, and the error a degenerated row must
        // beat to be listed. Without one, the probe corner and no target.
        let per_family: Vec<Vec<(usize, DesignSpec, Option<Outcome>)>> = families
            .into_par_iter()
            .map(|(_, f)| {
                let bare = f
                    .first()
                    .and_then(|s| bare_family(&s.1))
                    .and_then(|k| bests.iter().find(|b| b.0 == k));
                let (hint, target) = match bare {
                    // Cheaper than its bare design: listed whatever its error.
                    Some(b) if cost < b.1 - 1e-12 => (b.3.clone(), f64::INFINITY),
                    Some(b) => (b.3.clone(), (1.0 - NOTICEABLE_ERROR) * b.2),
                    None => (vec![probe_corner(req)], f64::INFINITY),
                };
                family_best(req, catalog, f, &hint, target, mc, solves, progress)
            })
            .collect();
        // Each family's best row; it counts toward `n` when it will be listed (a
        // degenerated row against its bare design, which is cheaper or as cheap, so
        // already known: `order::listed_families`).
        let mut level_bests: Vec<(DesignSpec, f64, f64)> = Vec::new();
        for r in per_family {
            let best = r
                .iter()
                .filter_map(|(_, spec, o)| match o {
                    Some(Outcome::Feasible(e)) => Some((spec, e.cost, e.figures.error_total)),
                    _ => None,
                })
                .min_by(|a, b| a.2.total_cmp(&b.2));
            if let Some((spec, cost, err)) = best {
                level_bests.push((spec.clone(), cost, err));
                // The worst corners of a bare design hint its degenerated families.
                let worst = if spec.resistor.is_none() {
                    resolve(catalog, spec)
                        .ok()
                        .and_then(|d| Evaluator::new(req, &d, solves).worst_corners())
                        .unwrap_or_else(|| vec![probe_corner(req)])
                } else {
                    Vec::new()
                };
                bests.push((family(spec), cost, err, worst));
            }
            results.extend(r);
        }
        for (spec, cost, err) in &level_bests {
            let hidden = bare_family(spec)
                .and_then(|k| bests.iter().find(|b| b.0 == k))
                .is_some_and(|b| !worth_listing((*cost, *err), (b.1, b.2)));
            found += usize::from(!hidden);
        }
        i = end;
    }
    merge(results, v);
}

/// A family's most accurate feasible member (every member costs the same), exactly when
/// it is within `target` (a total error; `INFINITY`: always); `None` outcomes are left
/// unverified.
///
/// Every member first gets a lower bound of its total error from a few corners, `hint`
/// (the worst corners of a related verified design: members differ only in resistor
/// value, so theirs are nearly the same): `Evaluator::error_bound_until`, the maxima the
/// accuracy check takes over every corner, from the same solves, taken over fewer. In
/// ascending order of that bound, each member is then taken corner by corner (hint
/// first) until its bound passes the best total error found so far (or `target`): such
/// a member cannot be the family's best and stays unverified. A member that keeps under
/// it at every corner is verified in full. Once the next bound is above the best total
/// error, no unverified member can be more accurate. A bound over the accuracy
/// requirement proves the member fails accuracy (counted there, as the screens do). A bound that fails to solve is 0
/// (the member is verified). `FAMILY_BATCH` members are taken at a time, in parallel,
/// against the best known before the batch, so the outcome does not depend on threads.
#[allow(clippy::too_many_arguments)]
fn family_best(
    req: &Requirement,
    catalog: &Catalog,
    members: Vec<Survivor>,
    hint: &[OperatingCorner],
    target: f64,
    mc: MonteCarlo,
    solves: &Tally,
    progress: &dyn Progress,
) -> Vec<(usize, DesignSpec, Option<Outcome>)> {
    // Each member's bound from the hint corners and the maxima behind it; a member whose
    // bound does not solve fails under that solve's check (a corner is never dropped, so
    // its verification fails there too), and one that cannot be resolved is left
    // unverified.
    type Start = Result<(f64, (f64, f64), CornerMemo), Option<Box<(DesignSpec, Outcome)>>>;
    let starts: Vec<Start> = members
        .par_iter()
        .map(|(_, spec, _)| {
            let d = resolve_sized(req, catalog, spec, solves).map_err(|_| None)?;
            let e = Evaluator::new(req, &d, solves);
            // A failed solve fails the design under that solve's check.
            let r = e
                .error_bound_until(hint, f64::INFINITY, (0.0, 0.0))
                .map_err(|c| Some(Box::new((d.spec.clone(), Outcome::Rejected(c)))));
            r.map(|(b, m)| (b, m, e.into_memo()))
        })
        .collect();
    let mut results = Vec::new();
    let mut bounds = vec![f64::INFINITY; members.len()];
    let mut maxima = vec![(0.0, 0.0); members.len()];
    let mut memos: Vec<Mutex<CornerMemo>> = Vec::with_capacity(members.len());
    let mut live = Vec::new();
    for (x, st) in starts.into_iter().enumerate() {
        memos.push(Mutex::default());
        match st {
            Ok((b, m, memo)) => {
                bounds[x] = b;
                maxima[x] = m;
                memos[x] = Mutex::new(memo);
                live.push(x);
            }
            Err(Some(b)) => {
                let (spec, o) = *b;
                results.push((members[x].0, spec, Some(o)));
            }
            Err(None) => results.push((members[x].0, members[x].1.clone(), None)),
        }
    }
    progress.advance((members.len() - live.len()) as u64);
    let mut order = live;
    order.sort_by(|&a, &b| bounds[a].total_cmp(&bounds[b]).then(a.cmp(&b)));
    // Over the accuracy requirement a member fails (and is no candidate for the best).
    let target = target.min(req.accuracy);
    let mut best = f64::INFINITY;
    let mut j = 0;
    while j < order.len() && bounds[order[j]] <= best.min(target) {
        let limit = best.min(target);
        let mut end = j;
        while end < order.len() && end < j + FAMILY_BATCH && bounds[order[end]] <= limit {
            end += 1;
        }
        let level: Vec<(usize, DesignSpec, Option<Outcome>)> = order[j..end]
            .par_iter()
            .map(|&x| {
                let (k, spec, _) = &members[x];
                let Ok(d) = resolve_sized(req, catalog, spec, solves) else {
                    return (*k, spec.clone(), None);
                };
                let memo = std::mem::take(&mut *memos[x].lock().unwrap_or_else(|e| e.into_inner()));
                let e = Evaluator::with_memo(req, &d, solves, memo);
                let rest = if req.program.is_some() {
                    far_first(e.corners(), hint)
                } else {
                    e.corners()
                        .iter()
                        .filter(|c| !hint.contains(c))
                        .copied()
                        .collect()
                };
                // Over the limit at some corner: not the best (and infeasible when over
                // the accuracy requirement); else verified. A rating broken at a hint
                // corner goes straight to its (short) verification.
                let walked = if bounds[x] > f64::NEG_INFINITY {
                    e.error_bound_until(&rest, limit, maxima[x])
                } else {
                    Ok((f64::NEG_INFINITY, maxima[x]))
                };
                if let Err(c) = walked {
                    return (*k, d.spec.clone(), Some(Outcome::Rejected(c)));
                }
                if let Some((b, _)) = walked.ok().filter(|b| b.0 > limit) {
                    let o = (b > req.accuracy).then_some(Outcome::Rejected(CheckName::Accuracy));
                    return (*k, d.spec.clone(), o);
                }
                let ev = e.evaluate(Depth::Screen, mc);
                (*k, d.spec.clone(), Some(outcome(ev)))
            })
            .collect();
        progress.advance((end - j) as u64);
        for (_, _, o) in &level {
            if let Some(Outcome::Feasible(e)) = o {
                best = best.min(e.figures.error_total);
            }
        }
        results.extend(level);
        j = end;
    }
    // The rest cannot be the best; a bound over the accuracy requirement proves a
    // failure, counted under accuracy as the screens count theirs.
    results.extend(order[j..].iter().map(|&x| {
        let o = (bounds[x] > req.accuracy).then_some(Outcome::Rejected(CheckName::Accuracy));
        (members[x].0, members[x].1.clone(), o)
    }));
    results
}

/// Best-first verification for the accuracy and balanced orders. Each survivor gets a
/// lower bound of its sort key from the probe corner (`|e| + k sigma` there is at most
/// the total error); survivors are verified in order of that bound until the `n`-th best
/// verified key is below the next bound, so no unverified design could enter the rows
/// (nor dominate one of them on the cost/error front). Counting families, the `n`-th
/// best family key (a family's key is its best verified row's) is compared instead: an
/// unverified design above it can neither improve a shown family's best row nor bring
/// a new family into the first `n`. The balanced key needs the cheapest feasible cost,
/// found first by verifying cost levels.
#[allow(clippy::too_many_arguments)]
fn verify_by_bound(
    req: &Requirement,
    catalog: &Catalog,
    survivors: Vec<Survivor>,
    goal: Goal,
    n: usize,
    unit: Unit,
    mc: MonteCarlo,
    solves: &Tally,
    progress: &dyn Progress,
    v: &mut Verdicts,
) {
    let results = best_first(
        req, catalog, survivors, goal, n, unit, mc, solves, progress, BATCH,
    );
    merge(results, v);
}

/// The corners not in `hint`, those differing from every hint corner in the most
/// coordinates (input current or rail, output voltage, ambient) first, otherwise in
/// their order. With a programming resistor the rail and the V_BE drift move the output
/// current one way at one end of the operating range and the other way at the other end,
/// and which end is worse depends on which way R_ref was rounded: a bound walk that
/// starts at the probe corner (one end) meets the other end next instead of last. Any
/// order gives the same maxima once every corner is taken, so the order only decides how
/// soon a walk stops. (A forced input has no such two-sided error; its walks keep the
/// corners' order, which measured no slower.)
fn far_first(corners: &[OperatingCorner], hint: &[OperatingCorner]) -> Vec<OperatingCorner> {
    let apart = |c: &OperatingCorner| {
        hint.iter()
            .map(|h| {
                usize::from(c.i_in_a != h.i_in_a || c.rail_v != h.rail_v)
                    + usize::from(c.v_out_v != h.v_out_v)
                    + usize::from(c.t_amb_k != h.t_amb_k)
            })
            .min()
            .unwrap_or(0)
    };
    let mut rest: Vec<OperatingCorner> = corners
        .iter()
        .filter(|c| !hint.contains(c))
        .copied()
        .collect();
    rest.sort_by_key(|c| std::cmp::Reverse(apart(c)));
    rest
}

/// Survivors verified at once by the best-first search: enough to keep two threads busy
/// over a long list, few enough that a short one stops soon after its best design.
const BATCH: usize = 64;
/// The batch within one family (families are verified in parallel with each other).
const FAMILY_BATCH: usize = 4;

/// `verify_by_bound`'s search, returning every outcome (`None`: left unverified) for the
/// caller to merge; `batch` designs are verified between two looks at the stop rule.
#[allow(clippy::too_many_arguments)]
fn best_first(
    req: &Requirement,
    catalog: &Catalog,
    survivors: Vec<Survivor>,
    goal: Goal,
    n: usize,
    unit: Unit,
    mc: MonteCarlo,
    solves: &Tally,
    progress: &dyn Progress,
    batch_size: usize,
) -> Vec<(usize, DesignSpec, Option<Outcome>)> {
    let verify = |batch: &[Survivor]| -> Vec<(usize, DesignSpec, Option<Outcome>)> {
        batch
            .par_iter()
            .map(
                |(k, spec, _)| match resolve_sized(req, catalog, spec, solves) {
                    Ok(d) => {
                        let ev = Evaluator::new(req, &d, solves).evaluate(Depth::Screen, mc);
                        (*k, d.spec.clone(), Some(outcome(ev)))
                    }
                    Err(_) => (*k, spec.clone(), None),
                },
            )
            .collect()
    };
    let mut results: Vec<(usize, DesignSpec, Option<Outcome>)> = Vec::new();
    let mut rest = survivors;
    // The cheapest feasible cost (balanced only): verify whole cost levels until found.
    let mut cheapest = f64::NAN;
    if matches!(goal, Goal::Balanced(..)) {
        while !rest.is_empty() {
            let cost = rest[0].2;
            let end = rest.iter().position(|s| s.2 != cost).unwrap_or(rest.len());
            let level = verify(&rest[..end]);
            progress.advance(end as u64);
            rest.drain(..end);
            let found = level
                .iter()
                .any(|(_, _, o)| matches!(o, Some(Outcome::Feasible(_))));
            results.extend(level);
            if found {
                cheapest = cost;
                break;
            }
        }
    }
    let key = |cost: f64, error: f64| match goal {
        Goal::Balanced(..) => cost / cheapest + error / req.accuracy,
        _ => error / req.accuracy,
    };
    let bounds: Vec<f64> = rest
        .par_iter()
        .map(|(_, spec, cost)| {
            let b = resolve_sized(req, catalog, spec, solves)
                .ok()
                .and_then(|d| Evaluator::new(req, &d, solves).probe_bound())
                .unwrap_or(0.0);
            key(*cost, b)
        })
        .collect();
    let mut order: Vec<usize> = (0..rest.len()).collect();
    order.sort_by(|&a, &b| bounds[a].total_cmp(&bounds[b]).then(a.cmp(&b)));
    let feasible_keys = |level: &[(usize, DesignSpec, Option<Outcome>)]| -> Vec<(FamilyKey, f64)> {
        level
            .iter()
            .filter_map(|(_, spec, o)| match o {
                Some(Outcome::Feasible(e)) => {
                    Some((family(spec), key(e.cost, e.figures.error_total)))
                }
                _ => None,
            })
            .collect()
    };
    let mut keys = feasible_keys(&results);
    let mut i = 0;
    while i < order.len() {
        if nth_key(&keys, n, unit).is_some_and(|k| k < bounds[order[i]]) {
            break;
        }
        let end = (i + batch_size).min(order.len());
        let batch: Vec<Survivor> = order[i..end].iter().map(|&j| rest[j].clone()).collect();
        let level = verify(&batch);
        progress.advance((end - i) as u64);
        keys.extend(feasible_keys(&level));
        results.extend(level);
        i = end;
    }
    results.extend(
        order[i..]
            .iter()
            .map(|&j| (rest[j].0, rest[j].1.clone(), None)),
    );
    results
}

/// The `n`-th smallest key (1-based) over rows, or over families (each keyed by its
/// smallest); `None` while fewer than `n` are known.
fn nth_key(keys: &[(FamilyKey, f64)], n: usize, unit: Unit) -> Option<f64> {
    let mut best: Vec<f64> = match unit {
        Unit::Rows => keys.iter().map(|(_, k)| *k).collect(),
        Unit::Families => {
            let mut per: Vec<(&FamilyKey, f64)> = Vec::new();
            for (f, k) in keys {
                match per.iter_mut().find(|(g, _)| *g == f) {
                    Some((_, b)) => *b = b.min(*k),
                    None => per.push((f, *k)),
                }
            }
            per.into_iter().map(|(_, k)| k).collect()
        }
    };
    best.sort_by(f64::total_cmp);
    n.checked_sub(1).and_then(|i| best.get(i).copied())
}

fn merge(mut results: Vec<(usize, DesignSpec, Option<Outcome>)>, v: &mut Verdicts) {
    results.sort_by_key(|r| r.0);
    // Merge back in enumeration order.
    let mut feasible: Vec<(usize, DesignSpec, Evaluation)> = Vec::new();
    let mut rejected: Vec<(usize, DesignSpec, CheckName)> = Vec::new();
    for (k, spec, o) in results {
        match o {
            Some(Outcome::Feasible(ev)) => feasible.push((k, spec, *ev)),
            Some(Outcome::Rejected(c)) => rejected.push((k, spec, c)),
            Some(Outcome::Survivor(_)) | None => v.unverified.push(spec),
        }
    }
    v.feasible
        .extend(feasible.into_iter().map(|(_, s, e)| (s, e)));
    v.rejected
        .extend(rejected.into_iter().map(|(_, s, c)| (s, c)));
}

/// A screened candidate: enumeration index, spec, cost.
type Survivor = (usize, DesignSpec, f64);

fn outcome(ev: Evaluation) -> Outcome {
    match ev.first_failure() {
        None if ev.feasible() => Outcome::Feasible(Box::new(ev)),
        Some(c) => Outcome::Rejected(c),
        None => Outcome::Rejected(CheckName::NoSolution),
    }
}

fn judge_all(
    req: &Requirement,
    catalog: &Catalog,
    specs: &[DesignSpec],
    depth: Depth,
    mc: MonteCarlo,
    solves: &Tally,
) -> Vec<(DesignSpec, Outcome)> {
    specs
        .par_iter()
        .filter_map(|spec| {
            let d = resolve_sized(req, catalog, spec, solves).ok()?;
            let ev = Evaluator::new(req, &d, solves).evaluate(depth, mc);
            Some((d.spec.clone(), outcome(ev)))
        })
        .collect()
}

/// Screens one group: proven rejections, and survivors (with their cost) to verify. The
/// rating screen (module docs) runs when `rating_screen` is set and the group's classes
/// could break a rating.
pub(super) fn screen_group(
    req: &Requirement,
    catalog: &Catalog,
    g: &Group,
    rating_screen: bool,
    solves: &Tally,
) -> Vec<(DesignSpec, Outcome)> {
    let n = g.specs.len();
    let Some(first) = g.specs.first().and_then(|s| resolve(catalog, s).ok()) else {
        return Vec::new();
    };
    // Every member of a group costs the same (resistor price does not depend on value).
    let cost = first.cost;
    let named = |s: &DesignSpec| resolved_sibling(catalog, &g.specs[0], &first, s);
    let survivors = |range: std::ops::Range<usize>| -> Vec<(DesignSpec, Outcome)> {
        g.specs[range]
            .iter()
            .map(|s| (named(s), Outcome::Survivor(cost)))
            .collect()
    };
    let reject = |range: std::ops::Range<usize>, check: CheckName| -> Vec<(DesignSpec, Outcome)> {
        g.specs[range]
            .iter()
            .map(|s| (named(s), Outcome::Rejected(check)))
            .collect()
    };
    if req.max_cost.is_some_and(|max| cost > max) {
        return reject(0..n, CheckName::Cost);
    }
    if n == 1 {
        return survivors(0..1);
    }
    let probe = |i: usize, f: &dyn Fn(&Evaluator) -> bool| -> bool {
        match resolve_sized(req, catalog, &g.specs[i], solves) {
            Ok(d) => f(&Evaluator::new(req, &d, solves)),
            Err(_) => false,
        }
    };
    // Compliance and input voltage: a passing prefix. A corner that cannot be solved is
    // no proof of either failure: it counts as passing here, so the candidate is verified
    // and fails under the check that failed (thermal-runaway or no-solution).
    let comp_end = prefix_len(n, |i| probe(i, &|e| e.compliance_ok() != Some(false)));
    let input_end = prefix_len(comp_end, |i| {
        probe(i, &|e| e.input_voltage_ok() != Some(false))
    });
    // V_BE-offset bound: a failing prefix. A failed solve is not a proof of failure.
    let acc_start = prefix_len(input_end, |i| {
        probe(i, &|e| {
            e.vbe_offset_bound().is_some_and(|b| b > req.accuracy)
        })
    });
    let mut out = reject(0..acc_start, CheckName::Accuracy);
    if tempco_fails_throughout(req, catalog, g, acc_start..input_end, solves) {
        out.extend(reject(acc_start..input_end, CheckName::Tempco));
    } else if rating_screen && rating_screen_worthwhile(req, &first) {
        let at = input_corner(req);
        out.extend(g.specs[acc_start..input_end].iter().map(|s| {
            match resolve_sized(req, catalog, s, solves) {
                Ok(d) => match Evaluator::new(req, &d, solves).rating_broken_at(&at) {
                    Ok(None) => (d.spec, Outcome::Survivor(cost)),
                    Ok(Some(c)) | Err(c) => (d.spec, Outcome::Rejected(c)),
                },
                Err(_) => (s.clone(), Outcome::Survivor(cost)),
            }
        }));
    } else {
        out.extend(survivors(acc_start..input_end));
    }
    out.extend(reject(input_end..comp_end, CheckName::InputVoltage));
    out.extend(reject(comp_end..n, CheckName::Compliance));
    out
}

/// Whether a group's survivors get the rating screen (module docs): on a requirement with
/// a forced input, some transistor class of the design has a derated VCEO below half the
/// largest voltage in the circuit's reach (the supply or the highest output voltage).
/// Skipping the screen never changes a verdict, only what it costs: so far under the
/// voltage most designs of the class break the rating, and the solve each saves the family
/// search about four; nearer it most pass, and the screen would spend a solve on every
/// survivor, most of which the goal never verifies (on the shipped LED-string and LTP-tail
/// examples, whose 20 V array class sits just under their supply or output voltage, a
/// threshold at the full voltage cost 18 % more solves).
fn rating_screen_worthwhile(req: &Requirement, d: &ResolvedDesign) -> bool {
    let reach = req.supply_v.max(req.output_voltage_v.max);
    req.program.is_none()
        && d.packages
            .iter()
            .any(|p| p.class.ratings.vceo_v * VCEO_DERATING < 0.5 * reach)
}

/// Whether every member of `range` of a programmed group fails `max_tempco`: some slope
/// of the tempco (between two neighbouring ambient points) is over the limit on the same
/// side at both ends of the range (four sizing-and-tempco solves in all). The slopes are
/// monotone in RE within the group (module docs), so every member between the ends has
/// that slope over the limit too.
fn tempco_fails_throughout(
    req: &Requirement,
    catalog: &Catalog,
    g: &Group,
    range: std::ops::Range<usize>,
    solves: &Tally,
) -> bool {
    let (Some(max), Some(_)) = (req.max_tempco_per_k, req.program) else {
        return false;
    };
    if range.is_empty() {
        return false;
    }
    let slopes = |i: usize| {
        resolve_sized(req, catalog, &g.specs[i], solves)
            .ok()
            .and_then(|d| Evaluator::new(req, &d, solves).tempco_slopes())
    };
    let Some(first) = slopes(range.start) else {
        return false;
    };
    let last = if range.len() == 1 {
        Some(first.clone())
    } else {
        slopes(range.end - 1)
    };
    last.is_some_and(|last| {
        first
            .iter()
            .zip(&last)
            .any(|(a, b)| (*a > max && *b > max) || (*a < -max && *b < -max))
    })
}

/// Resolve a candidate, first sizing its programming resistor from the solved circuit
/// when it still has to be chosen (a programmed requirement; `check::choose_r_ref`).
/// Candidates rejected by a screen without being solved keep R_ref unsized.
fn resolve_sized<'c>(
    req: &Requirement,
    catalog: &'c Catalog,
    spec: &DesignSpec,
    solves: &Tally,
) -> Result<ResolvedDesign<'c>, DesignError> {
    if spec.r_ref_pick.is_some() {
        resolve(catalog, &solves.sizes.choose(req, catalog, spec, solves))
    } else {
        resolve(catalog, spec)
    }
}

/// The solver-call count of a search, and the exact R_ref of each design it met (sized
/// once however many times the design is met; `check::RefSizes`).
#[derive(Default)]
pub(super) struct Tally {
    count: AtomicU64,
    sizes: RefSizes,
}

impl Tally {
    pub(super) fn new() -> Self {
        Self::default()
    }
}

impl std::ops::Deref for Tally {
    type Target = AtomicU64;
    fn deref(&self) -> &AtomicU64 {
        &self.count
    }
}

/// Length of the prefix of `0..n` on which `pred` holds, `pred` being true on a prefix
/// and false after it (binary search, `log2(n) + 1` calls at most).
fn prefix_len(n: usize, pred: impl Fn(usize) -> bool) -> usize {
    let (mut lo, mut hi) = (0, n);
    while lo < hi {
        let mid = lo + (hi - lo) / 2;
        if pred(mid) {
            lo = mid + 1;
        } else {
            hi = mid;
        }
    }
    lo
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn prefix_len_finds_the_boundary() {
        for n in 0..40 {
            for k in 0..=n {
                assert_eq!(prefix_len(n, |i| i < k), k);
            }
        }
    }
}
