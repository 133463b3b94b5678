//! Ranking: enumerate the candidate space, verify it (with the pruning search or
//! exhaustively), order the feasible designs, mark the Pareto front, and build the
//! finished reports of `rank`, `check` and `cheaper`.
//!
//! Builds on `check` for every verdict; prints nothing (`report::rank` writes the formats).

mod order;
mod relax;
mod report;
mod search;
mod space;

use std::collections::BTreeMap;
use std::sync::atomic::{AtomicU64, Ordering};

use rayon::prelude::*;
use thiserror::Error;

pub use order::{
    bare_family, family, first_per, listed_families, pareto, sort, worth_listing, FamilyKey,
    Prefer, NOTICEABLE_ERROR,
};
pub use relax::{relax, Relax, NEAREST};
pub use report::{
    cautions, Alternative, BudgetItem, BudgetReport, CandidateRow, Caution, CheaperReport,
    CheckReport, CheckRow, CornerLine, Explanation, HottestCorner, Junction, NearMiss, NoiseItem,
    NoiseReport, RankReport, NOISE_VALIDITY, SCHEMA_VERSION,
};
pub use search::{screen_only, search, verify_each, Goal, Progress, Silent, Unit, Verdicts};
pub use space::{enumerate, ratio_re2, thermal_voltage, widlar_re2, Group, RE_MIN_OHM};

use crate::check::{
    self, resolve, CheckName, Depth, DesignError, DesignSpec, Evaluation, Evaluator, MonteCarlo,
};
use crate::model::{Catalog, Requirement};

/// How `rank` runs.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RankOptions {
    pub top: usize,
    pub prefer: Prefer,
    pub mc: MonteCarlo,
    pub exhaustive: bool,
    /// 1-based row to explain.
    pub explain: Option<usize>,
    /// List every resistor value as its own row instead of each family's best row.
    pub every_value: bool,
}

impl Default for RankOptions {
    fn default() -> Self {
        RankOptions {
            top: 10,
            prefer: Prefer::Cost,
            mc: MonteCarlo::default(),
            exhaustive: false,
            explain: None,
            every_value: false,
        }
    }
}

#[derive(Debug, Clone, PartialEq, Error)]
pub enum RankError {
    #[error("--explain {k}: rows are counted from 1 and there {} {rows} row{} to show; choose a row from 1 to {rows}", if *.rows == 1 { "is" } else { "are" }, if *.rows == 1 { "" } else { "s" })]
    ExplainOutOfRange { k: usize, rows: usize },
    #[error(transparent)]
    Design(#[from] DesignError),
}

/// A finished ranking and what it was built from (for tests and `cheaper`).
pub struct RankRun {
    pub report: RankReport,
    /// Every feasible candidate verified, in ranking order, with its verdict-depth
    /// evaluation (all of them with `--exhaustive`): what a board-level optimiser wants.
    pub ranked: Vec<(DesignSpec, Evaluation)>,
    /// Indices into `ranked` of the rows the ranking lists, in order, before `--top`:
    /// each family's best row, or every row with `every_value`.
    pub rows: Vec<usize>,
    /// Every rejected candidate and the check it was counted under.
    pub rejected: Vec<(DesignSpec, CheckName)>,
}

/// Rank every candidate of the requirement.
pub fn rank(
    req: &Requirement,
    catalog: &Catalog,
    opts: &RankOptions,
    progress: &dyn Progress,
) -> Result<RankRun, RankError> {
    let groups = enumerate(req, catalog);
    let wanted = opts.top.max(opts.explain.unwrap_or(0)).max(1);
    let unit = if opts.every_value {
        Unit::Rows
    } else {
        Unit::Families
    };
    let mut n = wanted;
    let mut run = loop {
        let goal = match opts.prefer {
            Prefer::Cost => Goal::Cheapest(n, unit),
            Prefer::Accuracy => Goal::MostAccurate(n, unit),
            Prefer::Balanced => Goal::Balanced(n, unit),
        };
        let run = rank_with_goal(req, catalog, opts, goal, &groups, progress)?;
        // Families the degenerated-row rule does not list leave rows to fill. The cost
        // order's search counts listed families itself; the others search again for as
        // many more families as were not listed.
        let hidden = run.report.families.saturating_sub(run.rows.len());
        let more = wanted + hidden;
        if opts.every_value
            || opts.prefer == Prefer::Cost
            || run.rows.len() >= wanted
            || run.report.unverified == 0
            || more <= n
        {
            break run;
        }
        n = more;
    };
    if run.ranked.is_empty() {
        run.report.relax = relax(req, catalog, &groups, opts.mc);
    }
    Ok(run)
}

fn rank_with_goal(
    req: &Requirement,
    catalog: &Catalog,
    opts: &RankOptions,
    goal: Goal,
    groups: &[Group],
    progress: &dyn Progress,
) -> Result<RankRun, RankError> {
    let verdicts = search(
        req,
        catalog,
        groups,
        opts.exhaustive,
        goal,
        opts.mc,
        progress,
    );
    rank_verdicts(req, catalog, opts, verdicts)
}

/// Order verdicts already reached and build the report the options ask for: what `rank`
/// does after its search. An exhaustive search's verdicts serve every view of the same
/// requirement (cost or accuracy order, families or every value), so a caller comparing
/// views verifies the candidates once.
pub fn rank_verdicts(
    req: &Requirement,
    catalog: &Catalog,
    opts: &RankOptions,
    verdicts: Verdicts,
) -> Result<RankRun, RankError> {
    let mut ranked = verdicts.feasible;
    sort(&mut ranked, opts.prefer, req.accuracy);
    let points: Vec<(f64, f64)> = ranked
        .iter()
        .map(|(_, e)| (e.cost, e.figures.error_total))
        .collect();
    // Pareto flags over every verified feasible design: a family's best row is on the
    // front exactly when it is among the family bests, as its family's other rows cost
    // the same and are no more accurate.
    let front = pareto(&points);
    let families = first_per(&ranked, |(s, _)| family(s));
    let listed: Vec<usize> = if opts.every_value {
        (0..ranked.len()).collect()
    } else {
        listed_families(&ranked, &families)
    };
    if let Some(k) = opts.explain {
        if !listed.is_empty() && (k == 0 || k > listed.len()) {
            return Err(RankError::ExplainOutOfRange {
                k,
                rows: listed.len(),
            });
        }
    }
    let extra = AtomicU64::new(0);
    let shown = opts.top.min(listed.len());
    // Positions in `listed` to evaluate fully: the shown rows and the explained one.
    let mut wanted: Vec<usize> = (0..shown).collect();
    if let Some(k) = opts.explain.filter(|&k| k >= 1 && k <= listed.len()) {
        if k > shown {
            wanted.push(k - 1);
        }
    }
    let full: Vec<(usize, Evaluation)> = wanted
        .par_iter()
        .map(|&p| {
            let (spec, verdict) = &ranked[listed[p]];
            (p, full_or(req, catalog, spec, verdict, opts.mc, &extra))
        })
        .collect();
    let mut rows = Vec::with_capacity(shown);
    let mut explain = None;
    for (p, ev) in &full {
        let i = listed[*p];
        let mut row = CandidateRow::new(Some(p + 1), &ranked[i].0, ev, front[i]);
        if opts.explain == Some(p + 1) {
            let mut e = Explanation::new(req, row.clone(), ev);
            e.candidate.yield_solved =
                check::solved_yield(req, catalog, &ranked[i].0, opts.mc, &extra)?;
            if *p < shown {
                row.yield_solved = e.candidate.yield_solved;
            }
            explain = Some(e);
        }
        if *p < shown {
            rows.push(row);
        }
    }
    let mut rejected_by = BTreeMap::new();
    for (_, c) in &verdicts.rejected {
        *rejected_by.entry(*c).or_insert(0) += 1;
    }
    let report = RankReport {
        schema_version: SCHEMA_VERSION,
        requirement: req.name.clone(),
        prefer: opts.prefer,
        exhaustive: opts.exhaustive,
        every_value: opts.every_value,
        candidate_space: ranked.len() + verdicts.rejected.len() + verdicts.unverified.len(),
        evaluated: ranked.len() + verdicts.rejected.len(),
        unverified: verdicts.unverified.len(),
        feasible: ranked.len(),
        feasible_at_least: !verdicts.unverified.is_empty(),
        families: families.len(),
        rejected_by,
        seed: opts.mc.seed,
        samples: opts.mc.samples,
        solves: verdicts.solves + extra.load(Ordering::Relaxed),
        cautions: cautions(req, &rows),
        candidates: rows,
        explain,
        relax: Vec::new(),
    };
    Ok(RankRun {
        report,
        ranked,
        rows: listed,
        rejected: verdicts.rejected,
    })
}

/// Full-depth evaluation of a feasible candidate for display. Extra figures never change
/// the verdict; should one of them fail to solve, the verdict-depth evaluation is kept.
fn full_or(
    req: &Requirement,
    catalog: &Catalog,
    spec: &DesignSpec,
    verdict: &Evaluation,
    mc: MonteCarlo,
    solves: &AtomicU64,
) -> Evaluation {
    match resolve(catalog, spec) {
        Ok(d) => {
            let ev = Evaluator::new(req, &d, solves).evaluate(Depth::Full, mc);
            if ev.complete {
                ev
            } else {
                verdict.clone()
            }
        }
        Err(_) => verdict.clone(),
    }
}

/// `check`: verify one named design fully.
pub fn check_design(
    req: &Requirement,
    catalog: &Catalog,
    spec: &DesignSpec,
    mc: MonteCarlo,
    with_corners: bool,
) -> Result<CheckReport, RankError> {
    let solves = AtomicU64::new(0);
    let (spec, mut ev) = check::verify(req, catalog, spec, Depth::Full, mc, &solves)?;
    if ev.figures.yield_solved.is_nan() {
        ev.figures.yield_solved = check::solved_yield(req, catalog, &spec, mc, &solves)?;
    }
    let pass = ev.feasible();
    let row = CandidateRow::new(None, &spec, &ev, false);
    let explanation = Explanation::new(req, row.clone(), &ev);
    Ok(CheckReport {
        schema_version: SCHEMA_VERSION,
        requirement: req.name.clone(),
        seed: mc.seed,
        samples: mc.samples,
        candidate: row,
        pass,
        corners: with_corners.then_some(explanation.corners),
        budget: explanation.budget,
        hottest: explanation.hottest,
        cautions: explanation.cautions,
    })
}

/// `cheaper`: feasible designs cheaper than the named one, or (`second_source`) the named
/// design built with every other pair class of its polarity (same topology, helper and
/// resistor values: a drop-in second source) that still passes, at any cost.
pub fn cheaper(
    req: &Requirement,
    catalog: &Catalog,
    spec: &DesignSpec,
    mc: MonteCarlo,
    second_source: bool,
    progress: &dyn Progress,
) -> Result<CheaperReport, RankError> {
    cheaper_top(req, catalog, spec, mc, second_source, None, progress)
}

/// `cheaper` listing at most `top` alternatives: the `top` cheapest families (the largest
/// savings), each with its most accurate value; only those are verified.
pub fn cheaper_top(
    req: &Requirement,
    catalog: &Catalog,
    spec: &DesignSpec,
    mc: MonteCarlo,
    second_source: bool,
    top: Option<usize>,
    progress: &dyn Progress,
) -> Result<CheaperReport, RankError> {
    let solves = AtomicU64::new(0);
    let (spec, ref_ev) = check::verify(req, catalog, spec, Depth::Full, mc, &solves)?;
    let reference = CandidateRow::new(None, &spec, &ref_ev, false);
    let opts = RankOptions {
        top: 0,
        mc,
        ..RankOptions::default()
    };
    let groups = enumerate(req, catalog);
    // `--second-source`: drop-in replacements only, i.e. the same topology, helper and
    // resistor values with another pair class of the requirement's polarity; every one is
    // verified directly. Otherwise: the cheaper families from the search.
    let (run, picked): (Option<RankRun>, Vec<(DesignSpec, Evaluation)>) = if second_source {
        let mut pairs: Vec<&str> = groups
            .iter()
            .map(|g| g.pair.as_str())
            .filter(|p| *p != spec.pair)
            .collect();
        pairs.sort_unstable();
        pairs.dedup();
        let mut found: Vec<(DesignSpec, Evaluation)> = pairs
            .par_iter()
            .filter_map(|p| {
                let candidate = DesignSpec {
                    pair: (*p).to_string(),
                    ..spec.clone()
                };
                check::verify(req, catalog, &candidate, Depth::Verdict, mc, &solves)
                    .ok()
                    .filter(|(_, e)| e.feasible())
            })
            .collect();
        sort(&mut found, Prefer::Cost, req.accuracy);
        found.truncate(top.unwrap_or(usize::MAX));
        (None, found)
    } else {
        let run = rank_with_goal(
            req,
            catalog,
            &opts,
            Goal::CheaperFamilies(ref_ev.cost, top.unwrap_or(usize::MAX)),
            &groups,
            progress,
        )?;
        // One design per family: the first in ranking order, i.e. the one with the
        // largest accuracy margin (a family's resistor values all cost the same, so
        // listing each would repeat one saving many times; the search verifies each
        // family best-first for that reason).
        let eligible: Vec<&(DesignSpec, Evaluation)> = run
            .ranked
            .iter()
            .filter(|(_, e)| e.cost < ref_ev.cost - 1e-12)
            .collect();
        let picked = first_per(&eligible, |(s, _)| family(s))
            .into_iter()
            .map(|i| eligible[i].clone())
            .take(top.unwrap_or(usize::MAX))
            .collect();
        (Some(run), picked)
    };
    let governing = reference.governing_check;
    let ref_margin = reference.governing_margin();
    let alternatives: Vec<Alternative> = picked
        .par_iter()
        .enumerate()
        .map(|(i, (s, verdict))| {
            let ev = full_or(req, catalog, s, verdict, mc, &solves);
            let row = CandidateRow::new(Some(i + 1), s, &ev, false);
            let margin = governing
                .and_then(|g| row.check(g).map(|c| c.margin))
                .unwrap_or_else(|| row.governing_margin());
            Alternative {
                saving: ref_ev.cost - ev.cost,
                reference_governing_check: governing,
                margin_given_up: ref_margin - margin,
                candidate: row,
            }
        })
        .collect();
    let nearest_failing = match (&run, alternatives.is_empty()) {
        (Some(run), true) => run
            .rejected
            .iter()
            .filter_map(|(s, c)| resolve(catalog, s).ok().map(|d| (s, c, d.cost)))
            .filter(|(_, _, cost)| *cost < ref_ev.cost - 1e-12)
            .max_by(|a, b| a.2.total_cmp(&b.2))
            .map(|(s, c, cost)| NearMiss {
                topology: s.topology.name(),
                part: s.pair.clone(),
                helper: s.helper.clone(),
                re1_ohm: s.re1_ohm,
                re2_ohm: s.re2_ohm,
                resistor: s.resistor.clone(),
                r_ref_ohm: (s.r_ref_ohm > 0.0).then_some(s.r_ref_ohm),
                r_ref_resistor: s.r_ref_resistor.clone(),
                cost,
                failed_check: *c,
            }),
        _ => None,
    };
    let summary = match (second_source, alternatives.len(), &nearest_failing) {
        (true, 0, _) => "no other transistor class is a drop-in second source (same topology and resistor values) that meets the requirement".to_string(),
        (true, n, _) => format!(
            "{n} other transistor class{} meet{} the requirement as a drop-in second source (same topology and resistor values)",
            if n == 1 { "" } else { "es" },
            if n == 1 { "s" } else { "" }
        ),
        (false, 0, Some(m)) => format!(
            "no cheaper design meets the requirement; the nearest cheaper one ({} {}) fails {}",
            m.topology, m.part, m.failed_check
        ),
        (false, 0, None) => "no cheaper design exists in the catalog".to_string(),
        (false, n, _) if top == Some(n) => format!(
            "the {n} cheapest famil{} of cheaper designs (topology and classes) that meet the requirement, largest saving first (--top {n}; others may exist); the most accurate resistor value of each is shown",
            if n == 1 { "y" } else { "ies" }
        ),
        (false, n, _) => format!(
            "{n} famil{} of cheaper designs (topology and classes) meet{} the requirement; the most accurate resistor value of each is shown",
            if n == 1 { "y" } else { "ies" },
            if n == 1 { "s" } else { "" }
        ),
    };
    let rows: Vec<CandidateRow> = alternatives.iter().map(|a| a.candidate.clone()).collect();
    Ok(CheaperReport {
        schema_version: SCHEMA_VERSION,
        requirement: req.name.clone(),
        mode: if second_source {
            "second-source"
        } else {
            "cheaper"
        },
        seed: mc.seed,
        samples: mc.samples,
        reference_pass: ref_ev.feasible(),
        reference,
        alternatives,
        nearest_failing,
        summary,
        cautions: cautions(req, &rows),
    })
}
