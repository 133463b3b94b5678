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
use crate::rank::{self, CandidateRow, RankOptions};
use crate::report::decision::{build_page, DecisionInputs};
use crate::report::{html, markdown};

/// Rejected designs examined for the nearest miss (evenly spread over the rejected list:
/// a full verdict on every rejected design would cost as much as the ranking itself).
const NEAR_MISS_SAMPLE: usize = 48;

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct ReportArgs {
    pub requirement: PathBuf,
    /// The HTML page (`-`: standard output). `None` with no Markdown either: standard
    /// output when it is not a terminal, else `<requirement stem>.report.html` beside the
    /// requirement.
    pub html: Option<PathBuf>,
    /// Whether standard output is a terminal (decided by `main`).
    pub stdout_is_terminal: bool,
    /// The chosen design's schematic as its own SVG file.
    pub schematic: Option<PathBuf>,
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
        shape: row.shape,
        // A programmed row's R_ref, so the curves add the output against the rail.
        r_ref: row.r_ref_ohm.map(|ohm| crate::circuit::RefResistor {
            ohm,
            tcr_per_k: row
                .r_ref_resistor
                .as_ref()
                .and_then(|r| catalog.resistor(r))
                .map_or(0.0, |r| r.tcr_per_k),
        }),
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
/// and that check's margin. With a chosen design costing `chosen_cost`, only cheaper
/// designs are considered: a costlier design that fails teaches nothing.
fn nearest_miss(
    req: &Requirement,
    catalog: &Catalog,
    rejected: &[(DesignSpec, CheckName)],
    mc: MonteCarlo,
    chosen_cost: Option<f64>,
) -> Option<(CandidateRow, CheckName, f64)> {
    let eligible: Vec<&DesignSpec> = rejected
        .iter()
        // Over budget needs no solve to explain; the interesting misses are electrical.
        .filter(|(_, c)| *c != CheckName::Cost)
        .map(|(s, _)| s)
        .filter(|s| {
            chosen_cost.is_none_or(|limit| check::resolve(catalog, s).is_ok_and(|d| d.cost < limit))
        })
        .collect();
    let step = eligible.len().div_ceil(NEAR_MISS_SAMPLE).max(1);
    let picked: Vec<&DesignSpec> = eligible.into_iter().step_by(step).collect();
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

/// Where the HTML page goes.
#[derive(Debug, Clone, PartialEq, Eq)]
enum HtmlDest {
    /// A file; `true` when it is the default name beside the requirement.
    File(PathBuf, bool),
    Stdout,
    /// Markdown only.
    None,
}

/// The page's destination: `--out FILE`, `--out -`, nothing when only Markdown was asked
/// for, standard output when it is a pipe, else `<stem>.report.html` beside the
/// requirement (67 kB of HTML is of no use on a terminal).
fn html_destination(args: &ReportArgs) -> HtmlDest {
    match (&args.html, &args.markdown) {
        (Some(p), _) if p.as_os_str() == "-" => HtmlDest::Stdout,
        (Some(p), _) => HtmlDest::File(p.clone(), false),
        (None, Some(_)) => HtmlDest::None,
        (None, None) if !args.stdout_is_terminal => HtmlDest::Stdout,
        (None, None) => HtmlDest::File(default_html_path(&args.requirement), true),
    }
}

/// `dir/name.yaml` -> `dir/name.report.html`.
pub fn default_html_path(requirement: &Path) -> PathBuf {
    let stem = requirement
        .file_stem()
        .map(|s| s.to_string_lossy().into_owned())
        .unwrap_or_else(|| "requirement".into());
    requirement.with_file_name(format!("{stem}.report.html"))
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
    let dest = html_destination(args);
    let html_file = match &dest {
        HtmlDest::File(p, _) => Some(PendingFile::create(p)?),
        _ => None,
    };
    let schematic_file = args
        .schematic
        .as_deref()
        .map(PendingFile::create)
        .transpose()?;
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
    // The report goes to a file: the bar (stderr, terminals only) never mixes with it.
    let bar = super::rank::Bar::new();
    let run = rank::rank(&req, &catalog, &opts, &bar);
    bar.finish();
    let run = run?;
    let chosen_cost = run.report.candidates.first().map(|c| c.cost);
    let best_rejected = nearest_miss(&req, &catalog, &run.rejected, mc, chosen_cost);
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

    let mut written: Vec<String> = Vec::new();
    if let (Some(f), Some(path)) = (schematic_file, &args.schematic) {
        match &page.schematic_file {
            Some(svg) => {
                f.commit(svg.as_bytes())?;
                written.push(format!("the schematic to {}", path.display()));
            }
            // Nothing was chosen: no schematic, and the pending file is dropped unwritten.
            None => written.push(format!(
                "no schematic ({} not written: no design was chosen)",
                path.display()
            )),
        }
    }
    match (html_file, &dest) {
        (Some(f), HtmlDest::File(path, defaulted)) => {
            f.commit(html::render(&page).as_bytes())?;
            written.insert(
                0,
                if *defaulted {
                    format!(
                        "the report to {} (the default beside the requirement; --out FILE to choose, --out - for standard output)",
                        path.display()
                    )
                } else {
                    format!("the report to {}", path.display())
                },
            );
        }
        (_, HtmlDest::Stdout) => out.write_all(html::render(&page).as_bytes())?,
        _ => {}
    }
    if let (Some(f), Some(path)) = (md_file, &args.markdown) {
        let stem = path
            .file_stem()
            .map(|s| s.to_string_lossy().into_owned())
            .unwrap_or_else(|| "report".into());
        let dir = path.parent().unwrap_or(Path::new(""));
        let (text, sides) = markdown::render(&page, &stem);
        // All or nothing: every file is written and synced before any is renamed; the
        // Markdown last, so it never points at a missing plot.
        let mut files: Vec<(PendingFile, Vec<u8>)> = sides
            .into_iter()
            .map(|(name, svg)| Ok((PendingFile::create(&dir.join(name))?, svg.into_bytes())))
            .collect::<Result<_, AppError>>()?;
        files.push((f, text.into_bytes()));
        crate::atomic_file::commit_all(files)?;
        written.push(format!("the Markdown record to {}", path.display()));
    }
    if !written.is_empty() {
        let verdict = if run.report.candidates.is_empty() {
            "no design meets every requirement"
        } else {
            "a design meets every requirement"
        };
        let line = format!("Wrote {}; {verdict}.", written.join(", "));
        // Standard output carries the page itself when asked to: the line goes aside.
        if matches!(dest, HtmlDest::Stdout) {
            eprintln!("{line}");
        } else {
            writeln!(out, "{line}")?;
        }
    }
    Ok(if run.report.candidates.is_empty() {
        Outcome::NothingPasses
    } else {
        Outcome::Success
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn args(html: Option<&str>, md: bool, terminal: bool) -> ReportArgs {
        ReportArgs {
            requirement: PathBuf::from("specs/tail.yaml"),
            html: html.map(PathBuf::from),
            stdout_is_terminal: terminal,
            schematic: None,
            markdown: md.then(|| PathBuf::from("x.md")),
            top: 5,
            mc: MonteCarlo::default(),
            extremes: false,
        }
    }

    #[test]
    fn the_page_goes_to_a_file_beside_the_requirement_on_a_terminal() {
        let default = HtmlDest::File(PathBuf::from("specs/tail.report.html"), true);
        assert_eq!(html_destination(&args(None, false, true)), default);
        assert_eq!(
            html_destination(&args(None, false, false)),
            HtmlDest::Stdout
        );
        assert_eq!(
            html_destination(&args(Some("-"), false, true)),
            HtmlDest::Stdout
        );
        assert_eq!(
            html_destination(&args(Some("a.html"), true, true)),
            HtmlDest::File(PathBuf::from("a.html"), false)
        );
        assert_eq!(html_destination(&args(None, true, true)), HtmlDest::None);
    }
}
