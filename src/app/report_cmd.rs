//! The `report` command: rank the requirement, then document the decision as one
//! self-contained HTML page and/or a Markdown file with its plots beside it.
//!
//! Every output file is opened (as a pending temporary file) before the ranking starts,
//! and renamed into place only when complete: an interrupted run leaves no half report.

use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::atomic::AtomicU64;

use rayon::prelude::*;

use super::outputs::load_catalog_with_provenance;
use super::{load_requirement, AppError, CatalogSource, Outcome};
use crate::atomic_file::PendingFile;
use crate::check::{self, CheckName, Depth, DesignSpec, MonteCarlo};
use crate::circuit::{Design, SolveOptions};
use crate::curves::{self, CurveOptions};
use crate::model::{Catalog, Requirement, Topology};
use crate::rank::{self, CandidateRow, RankOptions, Silent};
use crate::report::decision::{build_page, DecisionInputs};
use crate::report::{html, markdown};

/// Rejected designs examined for the nearest miss (evenly spread over the rejected list:
/// a full verdict on every rejected design would cost as much as the ranking itself).
const NEAR_MISS_SAMPLE: usize = 48;

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ReportArgs {
    pub requirement: PathBuf,
    /// The HTML page; `None` with no Markdown either means HTML on stdout.
    pub html: Option<PathBuf>,
    pub markdown: Option<PathBuf>,
    /// Designs shown (the chosen one and the runners-up).
    pub top: usize,
    pub mc: MonteCarlo,
    /// Curves at the ambient extremes as well as 25 °C.
    pub extremes: bool,
}

/// The nominal design of a ranked row, for the curves.
fn design_of<'a>(catalog: &'a Catalog, row: &CandidateRow) -> Option<Design<'a>> {
    Some(Design {
        topology: Topology::from_name(row.topology)?,
        pair: catalog.transistor(&row.part)?,
        helper: match &row.helper {
            Some(h) => Some(catalog.transistor(h)?),
            None => None,
        },
        re1_ohm: row.re1_ohm,
        re2_ohm: row.re2_ohm,
        re_tcr_per_k: row
            .resistor
            .as_ref()
            .and_then(|r| catalog.resistor(r))
            .map_or(0.0, |r| r.tcr_per_k),
    })
}

/// The rejected design that misses by the least: its row, the check it fails by most,
/// and that check's margin.
fn nearest_miss(
    req: &Requirement,
    catalog: &Catalog,
    rejected: &[(DesignSpec, CheckName)],
    mc: MonteCarlo,
) -> Option<(CandidateRow, CheckName, f64)> {
    let step = rejected.len().div_ceil(NEAR_MISS_SAMPLE).max(1);
    let picked: Vec<&DesignSpec> = rejected
        .iter()
        // Over budget needs no solve to explain; the interesting misses are electrical.
        .filter(|(_, c)| *c != CheckName::Cost)
        .map(|(s, _)| s)
        .step_by(step)
        .collect();
    let solves = AtomicU64::new(0);
    let misses: Vec<(CandidateRow, CheckName, f64)> = picked
        .par_iter()
        .filter_map(|spec| {
            let (spec, ev) = check::verify(req, catalog, spec, Depth::Verdict, mc, &solves).ok()?;
            let worst = ev
                .checks
                .iter()
                .filter(|c| !c.pass)
                .min_by(|a, b| a.margin.total_cmp(&b.margin))?;
            let (name, margin) = (worst.name, worst.margin);
            margin
                .is_finite()
                .then(|| (CandidateRow::new(None, &spec, &ev, false), name, margin))
        })
        .collect();
    misses
        .into_iter()
        .max_by(|a, b| a.2.total_cmp(&b.2).then(b.0.cost.total_cmp(&a.0.cost)))
}

pub fn run_report(
    source: &CatalogSource,
    args: &ReportArgs,
    out: &mut dyn Write,
) -> Result<Outcome, AppError> {
    if args.top == 0 {
        return Err(AppError::Usage(
            "--top 0 would show no design; give 1 or more (default 5)".into(),
        ));
    }
    let (catalog, _, prov) = load_catalog_with_provenance(source)?;
    let req = load_requirement(&args.requirement, &catalog)?;
    let html_file = args.html.as_deref().map(PendingFile::create).transpose()?;
    let md_file = args
        .markdown
        .as_deref()
        .map(PendingFile::create)
        .transpose()?;

    let mc = args.mc;
    let opts = RankOptions {
        top: args.top,
        mc,
        explain: Some(1),
        ..RankOptions::default()
    };
    let run = rank::rank(&req, &catalog, &opts, &Silent)?;
    let best_rejected = nearest_miss(&req, &catalog, &run.rejected, mc);
    let curve_set = match run.report.candidates.first() {
        Some(row) => match design_of(&catalog, row) {
            Some(d) => Some(curves::for_design(
                &d,
                &req,
                &CurveOptions {
                    ambient_extremes: args.extremes,
                    ..CurveOptions::default()
                },
                // As the design runs on a bench: junctions heated by their own dissipation.
                &SolveOptions { self_heating: true },
            )?),
            None => None,
        },
        None => None,
    };
    let page = build_page(&DecisionInputs {
        req: &req,
        catalog: &catalog,
        report: &run.report,
        best_rejected,
        curves: curve_set.as_ref(),
        provenance: &prov,
        date: crate::calendar::today_utc(),
    })?;

    match (html_file, &md_file) {
        (Some(f), _) => f.commit(html::render(&page).as_bytes())?,
        (None, None) => out.write_all(html::render(&page).as_bytes())?,
        (None, Some(_)) => {}
    }
    if let (Some(f), Some(path)) = (md_file, &args.markdown) {
        let stem = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "report".into());
        let dir = path.parent().unwrap_or(Path::new(""));
        let (text, sides) = markdown::render(&page, &stem);
        // Side files first, so the Markdown never points at a missing plot.
        let pending: Vec<(PendingFile, String)> = sides
            .into_iter()
            .map(|(name, svg)| Ok((PendingFile::create(&dir.join(name))?, svg)))
            .collect::<Result<_, AppError>>()?;
        for (p, svg) in pending {
            p.commit(svg.as_bytes())?;
        }
        f.commit(text.as_bytes())?;
    }
    Ok(if run.report.candidates.is_empty() {
        Outcome::NothingPasses
    } else {
        Outcome::Success
    })
}
