//! Whole-board BOM optimisation: choose one design per channel and the packages to
//! build them from so that a build of the board costs least. The only module that uses
//! the integer-program solver (good_lp with its pure-Rust solver).
//!
//! The input ([`BoardProblem`]) is plain data: each channel lists its feasible designs by
//! what one copy consumes ([`DesignUsage`]). It does not depend on how the designs were
//! found; the ranking engine, a test or a script can fill it in. Output is a
//! [`BoardPlan`] or an explained infeasibility ([`Infeasibility`]); renderers in
//! [`render`] write a plan as a table, JSON or CSV. This module must not print, read
//! files, or know about circuits. [`candidates`] fills a [`BoardProblem`] from a board
//! design through the ranking engine (which candidates it passes, and why that is
//! exact, is stated there).
//!
//! # Formulation
//!
//! A *build* is one production run of `B = boards` identical boards. Everything below
//! is counted per board; the objective multiplies part costs by `B` and adds each
//! distinct line item's fixed cost `F = line_item_cost` once per build.
//!
//! **Blocks.** A matched pair must sit in one package: two devices of different packages
//! are not matched, so a pair is never split across two duals. One copy of a design with
//! `p` pairs and `h` helpers in pair class `c` (`d` devices per package) needs, in
//! packages of `c`, these *blocks* (device groups that must each sit in one package):
//! * `d >= 2p + h` and the design is kept together: one block of `2p + h` (a Wilson or
//!   beta helper in a 4- or 5-device array, a cascode or four-transistor Wilson in an
//!   array: the placement it was verified with);
//! * else `d >= 2p` and kept together: one block of `2p`, the `h` helpers loose;
//! * else `p` blocks of 2 (one pair per dual), the helpers loose;
//! * a single-device class (`d = 1`) has no blocks: the "pair" is `2p` singles.
//!
//! **Variables.**
//! * `w[g][j]` integer in `[0, |g|]`: how many channels of group `g` use option `j`. A
//!   group is a set of channels with the same copy count and the same (reduced) options;
//!   for a group of one channel this is the plain binary choice. `sum_j w[g][j] = |g|`
//!   (exactly one design per channel).
//! * `y[c][P]` integer >= 0: packages of array class `c` filled with pattern `P`, where
//!   a pattern is a non-empty multiset of block sizes with total `<= d_c`. Patterns make
//!   the packing exact: for each class `c` and block size `s`,
//!   `sum_P mult_s(P) * y[c][P] = sum_{g,j} count_g * blocks_s(g,j) * w[g][j]`.
//!   The spare devices of class `c` are `spare_c = sum_P (d_c - |P|) * y[c][P]`.
//! * `z[k][c]` integer >= 0: loose helpers of kind `k` that take a spare device of array
//!   class `c` instead of being bought as singles. A kind is (single class `s`, the
//!   classes whose spares it may take: `helper_spare_classes`, by default every array
//!   class of the helper's polarity — a helper placed in another class's package should
//!   be one the ranking checked the ratings of). `sum_c z[k][c] <= H[k]` (the loose
//!   helpers of kind `k`) and, per class, `sum_k z[k][c] <= spare_c`: helpers first use
//!   spare devices of packages already bought (never a package bought for helpers
//!   alone), then singles.
//! * `n[s]` integer >= 0: singles of class `s`,
//!   `n[s] >= 2p (pairs built from singles of s) + sum_{k of s} (H[k] - sum_c z[k][c])`.
//! * Resistors need no variable: the count of item `(class, value)` per board is
//!   `q[r] = sum_{g,j} count_g * uses_r(g,j) * w[g][j]`.
//! * `u[i]` binary per line item `i` (a transistor class or a resistor `(class, value)`),
//!   linked by `qty_i <= M_i * u[i]`, where `qty_i` is the packages of the class
//!   (`sum_P y + n`) or `q[r]`, and `M_i` is the most that item can ever need: every copy
//!   taking the option that needs most of it (a package holds at least one block, so
//!   packages never exceed blocks). The valid inequalities
//!   `sum_{j needs i} w[g][j] <= |g| * u[i]`, over the options of group `g` that cannot
//!   do without item `i` (their pair class and resistors; not helper singles, which
//!   spare devices may replace), tighten the relaxation a great deal.
//! * `sum_i u[i] <= max_line_items` when a limit is given.
//!
//! **Objective** (cost per build):
//! `B * (sum_c unit_c * (sum_P y[c][P] + n[c]) + sum_r unit_r * q[r]) + F * sum_i u[i]`.
//!
//! **Reductions, and why they are safe.**
//! * Dominated options: option `a` is dropped in favour of `b` only when both put the
//!   same blocks in the same class and `a` needs no fewer of every other part (singles,
//!   helpers of the same kind, each resistor item). Swapping `a` for `b` in any board
//!   leaves every package as it was and frees parts, so no optimum is lost. Options that
//!   merely need fewer blocks are *not* dropped: emptying a package can strand helpers
//!   that used its spare devices. Of options with equal needs, the one with the largest
//!   governing margin is kept.
//! * Identical channels (same count, same reduced options) share integer `w` variables
//!   instead of one binary per channel: any assignment of options to those channels is
//!   a relabelling of one with the same counts, so nothing is lost and the solver does
//!   not explore symmetric copies.
//!
//! **Results.** Quantities and costs in the plan are recounted from the concrete
//! placement (which package and device each transistor takes), not read from the
//! solver. The baseline — every channel's cheapest design on its own, every copy in its
//! own packages — is reported beside the optimum so the saving is visible; it is a
//! feasible point of the program, so the optimum never costs more whenever the baseline
//! meets the line-item limit.
//!
//! **Thermal note.** Copies sharing a package heat each other; each channel was verified
//! alone. Shared packages are listed in the plan so reports can say so.

pub mod candidates;
mod milp;
mod needs;
mod plan;
mod problem;
pub mod render;

pub use plan::{
    Baseline, BoardPlan, BomItem, BomLine, ChannelAssignment, CopyPlacement, DeviceRole,
    DeviceSlot, ModelSize, Occupant, PackagePlacement, SharedPackage,
};
pub use problem::{
    BoardProblem, BomError, ChannelOptions, DesignUsage, ResistorPart, ResistorUse, TransistorPart,
    MAX_COPIES,
};

use milp::Goal;
use needs::Prepared;

/// Why no board can be built.
#[derive(Debug, Clone, PartialEq)]
pub enum Infeasibility {
    /// These channels have no feasible design: (channel name, the reason the caller gave).
    NoCandidates { channels: Vec<(String, String)> },
    /// No choice of designs meets `max_line_items`; `smallest_feasible` is the fewest
    /// line items any board needs.
    LineItemLimit { limit: u32, smallest_feasible: u32 },
}

impl std::fmt::Display for Infeasibility {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            Infeasibility::NoCandidates { channels } => {
                let list: Vec<String> = channels
                    .iter()
                    .map(|(c, why)| format!("`{c}` ({why})"))
                    .collect();
                let (noun, verb) = if channels.len() == 1 {
                    ("channel", "has")
                } else {
                    ("channels", "have")
                };
                write!(f, "{noun} {} {verb} no feasible design", list.join(", "))
            }
            Infeasibility::LineItemLimit {
                limit,
                smallest_feasible,
            } => write!(
                f,
                "no board meets max_line_items = {limit}; the fewest line items any board needs is {smallest_feasible}"
            ),
        }
    }
}

/// The outcome of [`optimise`].
#[derive(Debug, Clone, PartialEq)]
pub enum BomOutcome {
    Optimal(Box<BoardPlan>),
    Infeasible(Infeasibility),
}

/// Find the cheapest board (see the module docs for the exact program).
pub fn optimise(problem: &BoardProblem) -> Result<BomOutcome, BomError> {
    problem.validate()?;
    let empty: Vec<(String, String)> = problem
        .channels
        .iter()
        .filter(|c| c.options.is_empty())
        .map(|c| {
            let why = c
                .no_candidate_reason
                .clone()
                .unwrap_or_else(|| "no reason given".to_string());
            (c.name.clone(), why)
        })
        .collect();
    if !empty.is_empty() {
        return Ok(BomOutcome::Infeasible(Infeasibility::NoCandidates {
            channels: empty,
        }));
    }
    let prep = Prepared::new(problem);
    match milp::solve(problem, &prep, Goal::Cost)? {
        Some(solved) => Ok(BomOutcome::Optimal(Box::new(plan::build(
            problem, &prep, &solved,
        )))),
        None => {
            let limit = problem.max_line_items.ok_or_else(|| {
                BomError::Solver("infeasible program without a line-item limit".into())
            })?;
            let fewest = milp::solve(problem, &prep, Goal::LineItems)?
                .ok_or_else(|| BomError::Solver("line-item minimisation infeasible".into()))?;
            let smallest_feasible = plan::build(problem, &prep, &fewest).bom.len() as u32;
            Ok(BomOutcome::Infeasible(Infeasibility::LineItemLimit {
                limit,
                smallest_feasible,
            }))
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn infeasibility_reads_as_a_sentence() {
        let one = Infeasibility::NoCandidates {
            channels: vec![("tail".into(), "accuracy fails by 2 %".into())],
        };
        assert_eq!(
            one.to_string(),
            "channel `tail` (accuracy fails by 2 %) has no feasible design"
        );
        let two = Infeasibility::NoCandidates {
            channels: vec![("a".into(), "x".into()), ("b".into(), "y".into())],
        };
        assert_eq!(
            two.to_string(),
            "channels `a` (x), `b` (y) have no feasible design"
        );
        let limit = Infeasibility::LineItemLimit {
            limit: 3,
            smallest_feasible: 5,
        };
        assert!(limit.to_string().contains("max_line_items = 3"));
        assert!(limit.to_string().contains("is 5"));
    }
}
