//! The `bom` command: read a board design and its catalog, rank every channel, solve the
//! board's integer program and write the plan.
//!
//! stdout carries only the requested format; cautions (shared packages, light sources,
//! ratings, typical values) and the per-channel candidate counts of machine formats go to
//! stderr. An infeasible board is a result (exit 1): the table says which channel has no
//! design and why, or that `max_line_items` cannot be met and the smallest number that
//! can; JSON writes the same as an object; CSV writes nothing on stdout.

use std::io::{self, Write};
use std::path::{Path, PathBuf};

use serde::Serialize;

use super::rank::Bar;
use super::{load_catalog, read_file, AppError, Config, Outcome};
use crate::bom::candidates::{design_problem, DesignProblem};
use crate::bom::{self, render, BoardPlan, BomOutcome, Infeasibility};
use crate::check::MonteCarlo;
use crate::input;
use crate::model::BoardDesign;
use crate::rank::{self, Caution};
use crate::report::Format;

/// Arguments of `bom`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BomArgs {
    pub file: PathBuf,
    pub format: Format,
    pub mc: MonteCarlo,
}

pub fn run_bom(cfg: &Config, a: &BomArgs, out: &mut dyn Write) -> Result<Outcome, AppError> {
    let name = a.file.display().to_string();
    let text = read_file(&a.file)?;
    let base = a.file.parent().unwrap_or(Path::new(""));
    let draft = input::load_design(&name, &text, base)?;
    // The design's own catalog wins: the design was written against it.
    let catalog = match draft.catalog_text() {
        Some((name, text)) => input::load_catalog(name, text)?,
        None => load_catalog(&cfg.catalog)?.0,
    };
    let design = draft.finish(&catalog)?;

    let bar = Bar::for_format(a.format);
    let dp = design_problem(&design, &catalog, a.mc, &bar);
    bar.finish();
    let outcome = bom::optimise(&dp.problem)?;

    let mut notes = Vec::new();
    let result = match outcome {
        BomOutcome::Optimal(mut plan) => {
            notes.extend(render_cautions(&plan));
            notes.extend(verify_chosen(&mut plan, &dp, &design, a.mc));
            write_plan(&plan, &dp, a, cfg.style, out)?;
            Outcome::Success
        }
        BomOutcome::Infeasible(why) => {
            write_infeasible(&why, &dp, a, out)?;
            Outcome::NothingPasses
        }
    };
    notes.push(format!("Caution: {}", Caution::TypicalValues));
    // Best effort: a closed stderr must not fail the command.
    let mut err = io::stderr().lock();
    for n in notes {
        let _ = writeln!(err, "{n}");
    }
    Ok(result)
}

/// Channel counts: how many candidates were judged, found feasible and passed on.
fn candidate_lines(dp: &DesignProblem) -> Vec<String> {
    dp.channels
        .iter()
        .map(|c| {
            format!(
                "  {}: {} candidate{} judged, {} feasible, {} distinct part usage{} offered to the board",
                c.options.name,
                c.evaluated,
                if c.evaluated == 1 { "" } else { "s" },
                c.feasible,
                c.options.options.len(),
                if c.options.options.len() == 1 { "" } else { "s" }
            )
        })
        .collect()
}

fn write_plan(
    plan: &BoardPlan,
    dp: &DesignProblem,
    a: &BomArgs,
    style: crate::report::Style,
    out: &mut dyn Write,
) -> Result<(), AppError> {
    match a.format {
        Format::Table => {
            render::write_table_styled(plan, style, out)?;
            writeln!(out)?;
            writeln!(
                out,
                "Candidates per channel (Monte Carlo yield: {} builds, seed {}):",
                a.mc.samples, a.mc.seed
            )?;
            for l in candidate_lines(dp) {
                writeln!(out, "{l}")?;
            }
        }
        Format::Json => render::write_json(plan, out)?,
        Format::Csv => render::write_csv(plan, out)?,
    }
    Ok(())
}

fn render_cautions(plan: &BoardPlan) -> Vec<String> {
    let mut buf = Vec::new();
    match render::write_cautions(plan, &mut buf) {
        Ok(()) => String::from_utf8_lossy(&buf)
            .lines()
            .map(str::to_string)
            .collect(),
        Err(_) => Vec::new(),
    }
}

/// Verify each chosen design fully (every figure, as `check` does) and report its
/// governing check and margin from that, not from the search's screening depth, whose
/// margins only decide pass or fail. Returns the cautions of the chosen designs.
fn verify_chosen(
    plan: &mut BoardPlan,
    dp: &DesignProblem,
    design: &BoardDesign,
    mc: MonteCarlo,
) -> Vec<String> {
    let mut lines = Vec::new();
    for (i, a) in plan.channels.iter_mut().enumerate() {
        let (Some(c), Some(ch)) = (dp.channels.get(i), design.channels.get(i)) else {
            continue;
        };
        let Some((spec, _)) = c.designs.get(a.option) else {
            continue;
        };
        let Ok(report) = rank::check_design(&ch.requirement, &dp.catalog, spec, mc, false) else {
            continue;
        };
        let row = &report.candidate;
        if let Some(g) = row.governing_check {
            a.governing_check = g.to_string();
            a.governing_margin = row.governing_margin();
        }
        if !report.pass {
            let failed: Vec<String> = row
                .checks
                .iter()
                .filter(|c| !c.pass)
                .map(|c| c.name.to_string())
                .collect();
            lines.push(format!(
                "Caution: channel `{}`: the chosen design fails {} when verified in full; check it with `mirrorpick check`",
                a.channel,
                failed.join(", ")
            ));
        }
        for caution in report.cautions {
            if caution != Caution::TypicalValues {
                lines.push(format!("Caution: channel `{}`: {caution}", a.channel));
            }
        }
    }
    lines
}

/// JSON of an infeasible board (`schema_version` 1): `{ schema_version, board, feasible:
/// false, reason, channels_without_design: [{ channel, reason }], max_line_items,
/// smallest_feasible_line_items }`; fields that do not apply are `null`.
#[derive(Serialize)]
struct JsonInfeasible<'a> {
    schema_version: u32,
    board: &'a str,
    feasible: bool,
    reason: String,
    channels_without_design: Vec<JsonNoDesign<'a>>,
    max_line_items: Option<u32>,
    smallest_feasible_line_items: Option<u32>,
}

#[derive(Serialize)]
struct JsonNoDesign<'a> {
    channel: &'a str,
    reason: &'a str,
}

fn write_infeasible(
    why: &Infeasibility,
    dp: &DesignProblem,
    a: &BomArgs,
    out: &mut dyn Write,
) -> Result<(), AppError> {
    let board = &dp.problem.board;
    match a.format {
        Format::Table => {
            writeln!(out, "{board}: no board can be built")?;
            match why {
                Infeasibility::NoCandidates { channels } => {
                    for (c, reason) in channels {
                        writeln!(out, "  channel `{c}` has no feasible design: {reason}")?;
                    }
                    writeln!(
                        out,
                        "Relax that channel's requirement, or allow more classes or topologies."
                    )?;
                }
                Infeasibility::LineItemLimit { .. } => {
                    writeln!(out, "  {why}")?;
                    writeln!(out, "Raise max_line_items, or leave it out for no limit.")?;
                }
            }
            writeln!(out)?;
            writeln!(out, "Candidates per channel:")?;
            for l in candidate_lines(dp) {
                writeln!(out, "{l}")?;
            }
        }
        Format::Json => {
            let (channels, limit, smallest) = match why {
                Infeasibility::NoCandidates { channels } => (
                    channels
                        .iter()
                        .map(|(c, r)| JsonNoDesign {
                            channel: c,
                            reason: r,
                        })
                        .collect(),
                    None,
                    None,
                ),
                Infeasibility::LineItemLimit {
                    limit,
                    smallest_feasible,
                } => (Vec::new(), Some(*limit), Some(*smallest_feasible)),
            };
            let j = JsonInfeasible {
                schema_version: 1,
                board,
                feasible: false,
                reason: why.to_string(),
                channels_without_design: channels,
                max_line_items: limit,
                smallest_feasible_line_items: smallest,
            };
            serde_json::to_writer_pretty(&mut *out, &j).map_err(io::Error::from)?;
            writeln!(out)?;
        }
        Format::Csv => {
            let _ = writeln!(io::stderr().lock(), "{board}: no board can be built: {why}");
        }
    }
    Ok(())
}
