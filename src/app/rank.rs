//! The `rank`, `check` and `cheaper` commands: read the files, resolve the named design,
//! run the library, write the report, and say whether anything passes.
//!
//! Cautions go under the table in table format, and to stderr in JSON and CSV so stdout
//! stays machine-readable. The progress bar goes to stderr, only on a terminal and only
//! once a run has taken about a second.

use std::io::{self, IsTerminal, Write};
use std::path::PathBuf;
use std::sync::Mutex;
use std::time::{Duration, Instant};

use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

use super::{load_catalog, load_requirement, AppError, Config, Outcome};
use crate::check::{self, DesignSpec, MonteCarlo};
use crate::input::did_you_mean;
use crate::model::{Catalog, Requirement, Topology, ALL_TOPOLOGIES};
use crate::rank::{self, Caution, Prefer, Progress, RankOptions};
use crate::report::rank as render;
use crate::report::Format;
use crate::units::{self, Dimension};

/// A design as typed on the command line (names and text, not yet resolved).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct DesignArgs {
    pub part: String,
    pub topology: String,
    pub helper: Option<String>,
    /// RE1 as typed (`4k7`, `100`, `1.5 kΩ`); RE2 for a Widlar.
    pub re: Option<String>,
    /// RE2 as typed, when the designer names it (otherwise it follows the ratio).
    pub re2: Option<String>,
    pub resistor: Option<String>,
    /// R_ref as typed (`--rref`); absent on a programmed requirement: the standard value
    /// nearest the exact one for this design.
    pub rref: Option<String>,
    /// R_ref's resistor class (`--rref-resistor`); default the `--resistor` class.
    pub rref_resistor: Option<String>,
    /// Outputs on the one input side (`--outputs`); default the requirement's `outputs`.
    pub outputs: Option<u8>,
    /// The area ratio as typed (`--area 4`, `--area 1/4`); default 1.
    pub area: Option<String>,
}

/// Arguments of `rank`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RankArgs {
    pub file: PathBuf,
    pub top: usize,
    pub prefer: Prefer,
    pub format: Format,
    pub mc: MonteCarlo,
    pub exhaustive: bool,
    pub explain: Option<usize>,
    pub every_value: bool,
}

/// Arguments of `check`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CheckArgs {
    pub file: PathBuf,
    pub design: DesignArgs,
    pub corners: bool,
    pub format: Format,
    pub mc: MonteCarlo,
}

/// Arguments of `cheaper`.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CheaperArgs {
    pub file: PathBuf,
    pub design: DesignArgs,
    pub second_source: bool,
    /// List at most this many alternatives (the largest savings); `None`: all.
    pub top: Option<usize>,
    pub format: Format,
    pub mc: MonteCarlo,
}

fn inputs(cfg: &Config, file: &std::path::Path) -> Result<(Catalog, Requirement), AppError> {
    let (catalog, _) = load_catalog(&cfg.catalog)?;
    let req = load_requirement(file, &catalog)?;
    Ok((catalog, req))
}

pub fn run_rank(cfg: &Config, a: &RankArgs, out: &mut dyn Write) -> Result<Outcome, AppError> {
    if a.top == 0 {
        return Err(AppError::Usage(
            "--top 0 would show no design; give 1 or more (default 10)".into(),
        ));
    }
    let (catalog, req) = inputs(cfg, &a.file)?;
    let opts = RankOptions {
        top: a.top,
        prefer: a.prefer,
        mc: a.mc,
        exhaustive: a.exhaustive,
        explain: a.explain,
        every_value: a.every_value,
    };
    let bar = Bar::for_format(a.format);
    let run = rank::rank(&req, &catalog, &opts, &bar);
    bar.finish();
    let report = run?.report;
    render::write_rank(out, &report, a.format, cfg.style)?;
    let mut cautions = report.cautions.clone();
    if let Some(e) = &report.explain {
        cautions.extend(
            e.cautions
                .iter()
                .filter(|c| !report.cautions.contains(c))
                .cloned(),
        );
    }
    write_cautions(a.format, cfg.style.width, out, &cautions)?;
    Ok(if report.feasible > 0 {
        Outcome::Success
    } else {
        Outcome::NothingPasses
    })
}

pub fn run_check(cfg: &Config, a: &CheckArgs, out: &mut dyn Write) -> Result<Outcome, AppError> {
    let (catalog, req) = inputs(cfg, &a.file)?;
    let spec = design_spec(&req, &catalog, &a.design)?;
    let report = rank::check_design(&req, &catalog, &spec, a.mc, a.corners)?;
    render::write_check(out, &report, a.format, cfg.style)?;
    write_cautions(a.format, cfg.style.width, out, &report.cautions)?;
    Ok(if report.pass {
        Outcome::Success
    } else {
        Outcome::NothingPasses
    })
}

pub fn run_cheaper(
    cfg: &Config,
    a: &CheaperArgs,
    out: &mut dyn Write,
) -> Result<Outcome, AppError> {
    let (catalog, req) = inputs(cfg, &a.file)?;
    let spec = design_spec(&req, &catalog, &a.design)?;
    let bar = Bar::for_format(a.format);
    let report = rank::cheaper_top(&req, &catalog, &spec, a.mc, a.second_source, a.top, &bar);
    bar.finish();
    let report = report?;
    render::write_cheaper(out, &report, a.format, cfg.style)?;
    write_cautions(a.format, cfg.style.width, out, &report.cautions)?;
    Ok(if report.alternatives.is_empty() {
        Outcome::NothingPasses
    } else {
        Outcome::Success
    })
}

fn write_cautions(
    format: Format,
    width: Option<u16>,
    out: &mut dyn Write,
    cautions: &[Caution],
) -> Result<(), AppError> {
    if format == Format::Table {
        writeln!(out)?;
        render::write_cautions(out, cautions, width)?;
    } else {
        // Best effort: a closed stderr must not fail the command.
        let _ = render::write_cautions(&mut io::stderr().lock(), cautions, None);
    }
    Ok(())
}

/// Turn typed names and values into a design, with a did-you-mean for unknown names.
pub fn design_spec(
    req: &Requirement,
    catalog: &Catalog,
    a: &DesignArgs,
) -> Result<DesignSpec, AppError> {
    let topology = Topology::from_name(&a.topology).ok_or_else(|| {
        let names: Vec<&str> = ALL_TOPOLOGIES.iter().map(|t| t.name()).collect();
        AppError::Usage(format!(
            "--topology `{}` is not a topology{}; expected one of {}",
            a.topology,
            hint(did_you_mean(&a.topology, names.iter().copied())),
            names.join(", ")
        ))
    })?;
    let known = |id: &str, what: &str, flag: &str| -> Result<(), AppError> {
        if catalog.transistor(id).is_some() {
            return Ok(());
        }
        Err(AppError::Usage(format!(
            "{flag} `{id}` is not a {what} in the catalog{}; `mirrorpick catalog list` shows the ids",
            hint(did_you_mean(id, catalog.transistors.iter().map(|t| t.id.as_str())))
        )))
    };
    known(&a.part, "transistor class", "--part")?;
    if let Some(h) = &a.helper {
        known(h, "transistor class", "--helper")?;
    }
    let resistor =
        match &a.resistor {
            Some(id) => Some(catalog.resistor(id).ok_or_else(|| {
                AppError::Usage(format!(
                "--resistor `{id}` is not a resistor class in the catalog{}; expected one of {}",
                hint(did_you_mean(id, catalog.resistors.iter().map(|r| r.id.as_str()))),
                catalog.resistors.iter().map(|r| r.id.as_str()).collect::<Vec<_>>().join(", ")
            ))
            })?),
            None => None,
        };
    let parse_re = |flag: &str, text: &Option<String>| -> Result<Option<f64>, AppError> {
        let Some(text) = text else { return Ok(None) };
        let r = units::parse(text, Dimension::Resistance)
            .map_err(|e| AppError::Usage(format!("{flag} `{text}`: {e}")))?;
        if !(r >= 0.0 && r.is_finite()) {
            return Err(AppError::Usage(format!(
                "{flag} must be a resistance of 0 Ω or more; got `{text}`"
            )));
        }
        Ok(Some(r))
    };
    let re = parse_re("--re", &a.re)?;
    let re2_named = parse_re("--re2", &a.re2)?;
    if topology == Topology::Widlar && re.is_some() && re2_named.is_some() {
        return Err(AppError::Usage(
            "a Widlar has RE2 only: give it with --re2 (or --re), not both".into(),
        ));
    }
    if topology != Topology::Widlar && re2_named.is_some() && re.is_none() {
        return Err(AppError::Usage(
            "--re2 names the output-side resistor; give RE1 with --re as well".into(),
        ));
    }
    let re = if topology == Topology::Widlar {
        re.or(re2_named)
    } else {
        re
    };
    let needs_resistor = re.is_some_and(|r| r > 0.0) || topology == Topology::Widlar;
    let resistor = match (needs_resistor, resistor) {
        (true, None) => {
            return Err(AppError::Usage(format!(
                "emitter resistors need a resistor class: add --resistor with one of {}",
                catalog
                    .resistors
                    .iter()
                    .map(|r| r.id.as_str())
                    .collect::<Vec<_>>()
                    .join(", ")
            )))
        }
        (_, r) => r,
    };
    let (re1, re2) = if topology == Topology::Widlar {
        let r = resistor.expect("checked above");
        let re2 = match re {
            Some(v) => v,
            None => rank::widlar_re2(req, r).ok_or_else(|| {
                AppError::Usage("a Widlar needs a ratio below 1 or an explicit --re".into())
            })?,
        };
        (0.0, re2)
    } else {
        let re1 = re.unwrap_or(0.0);
        let n = req.ratio;
        let re2 = match re2_named {
            Some(v) => v,
            None if re1 == 0.0 || (n - 1.0).abs() < 1e-9 => re1,
            // RE2 for the ratio with the V_BE difference (MODEL.md), nearest standard value.
            None => {
                let i_d = check::design_current(req);
                let exact = rank::ratio_re2(re1, n, i_d, check::ROOM_K).ok_or_else(|| {
                    AppError::Usage(format!(
                        "--re {}: for a ratio of {n} RE1 must exceed V_T ln(n) / I_in = {} at the design current; choose a larger RE1 or name RE2 with --re2",
                        a.re.as_deref().unwrap_or_default(),
                        units::format_prefixed(
                            rank::thermal_voltage(check::ROOM_K) * n.ln().abs() / i_d,
                            "Ω"
                        )
                    ))
                })?;
                resistor
                    .and_then(|r| r.series.nearest(exact))
                    .unwrap_or(exact)
            }
        };
        (re1, re2)
    };
    let (r_ref_ohm, r_ref_resistor, r_ref_pick) = ref_resistor(req, catalog, a)?;
    let outputs = a.outputs.unwrap_or(req.outputs);
    if outputs > 1 && !topology.desc().fans_out {
        return Err(AppError::Usage(format!(
            "the {} topology has one output only (its output transistor sits in the feedback loop); with {outputs} outputs choose simple, beta-helper, cascode or widlar",
            topology.name()
        )));
    }
    let area = match a.area.as_deref().map(str::trim) {
        None | Some("1") => crate::model::Area::Unit,
        Some(text) => {
            let (inverse, digits) = match text.strip_prefix("1/") {
                Some(d) => (true, d.trim()),
                None => (false, text),
            };
            let n: u8 = digits
                .parse()
                .ok()
                .filter(|n| (2..=crate::model::MAX_PARALLEL).contains(n))
                .ok_or_else(|| {
                    AppError::Usage(format!(
                        "--area `{text}` is not an area ratio; expected n or 1/n with n from 2 to {}",
                        crate::model::MAX_PARALLEL
                    ))
                })?;
            if inverse {
                crate::model::Area::Input(n)
            } else {
                crate::model::Area::Output(n)
            }
        }
    };
    let shape = crate::model::Shape { outputs, area };
    crate::model::fanout::form(topology, shape)
        .map_err(|e| AppError::Usage(format!("--outputs/--area: {e}")))?;
    // With an area ratio the devices set the ratio; RE2 then takes the equal-drop value
    // (RE1/n for n output devices), unless named.
    let re2 = match (area, re2_named) {
        (crate::model::Area::Unit, _) | (_, Some(_)) => re2,
        _ if re1 > 0.0 => resistor
            .and_then(|r| r.series.nearest(re1 / shape.area_ratio()))
            .unwrap_or(re1 / shape.area_ratio()),
        _ => re2,
    };
    Ok(DesignSpec {
        shape,
        topology,
        pair: a.part.clone(),
        helper: a.helper.clone(),
        re1_ohm: re1,
        re2_ohm: re2,
        resistor: if re1 > 0.0 || re2 > 0.0 {
            resistor.map(|r| r.id.clone())
        } else {
            None
        },
        r_ref_ohm,
        r_ref_resistor,
        r_ref_pick,
    })
}

/// `--rref` and `--rref-resistor` against the requirement: a programmed requirement
/// takes R_ref (the given value, or the standard value nearest the exact one), a forced
/// input current refuses it.
fn ref_resistor(
    req: &Requirement,
    catalog: &Catalog,
    a: &DesignArgs,
) -> Result<(f64, Option<String>, Option<crate::check::RefPick>), AppError> {
    if req.program.is_none() {
        if a.rref.is_some() || a.rref_resistor.is_some() {
            return Err(AppError::Usage(
                "--rref and --rref-resistor need a requirement with a `program` section \
                 (a rail and an output current); this one forces `input_current`"
                    .into(),
            ));
        }
        return Ok((0.0, None, None));
    }
    let ids = || {
        catalog
            .resistors
            .iter()
            .map(|r| r.id.as_str())
            .collect::<Vec<_>>()
            .join(", ")
    };
    let class = match a.rref_resistor.as_ref().or(a.resistor.as_ref()) {
        Some(id) => catalog.resistor(id).ok_or_else(|| {
            AppError::Usage(format!(
                "--rref-resistor `{id}` is not a resistor class in the catalog{}; expected one of {}",
                hint(did_you_mean(id, catalog.resistors.iter().map(|r| r.id.as_str()))),
                ids()
            ))
        })?,
        None => {
            return Err(AppError::Usage(format!(
                "the requirement programs the mirror by a resistor: add --rref-resistor with one of {}",
                ids()
            )))
        }
    };
    match &a.rref {
        Some(text) => {
            let r = units::parse(text, Dimension::Resistance)
                .map_err(|e| AppError::Usage(format!("--rref `{text}`: {e}")))?;
            if !(r > 0.0 && r.is_finite()) {
                return Err(AppError::Usage(format!(
                    "--rref must be a resistance above 0 Ω; got `{text}`"
                )));
            }
            Ok((r, Some(class.id.clone()), None))
        }
        None => Ok((
            0.0,
            Some(class.id.clone()),
            Some(crate::check::RefPick::Nearest),
        )),
    }
}

fn hint(s: Option<String>) -> String {
    s.map(|s| format!(" (did you mean `{s}`?)"))
        .unwrap_or_default()
}

/// Progress on stderr: hidden unless stderr is a terminal, and drawn only once the run
/// has taken about a second.
pub(crate) struct Bar {
    bar: ProgressBar,
    started: Instant,
    shown: Mutex<bool>,
    terminal: bool,
}

impl Bar {
    /// A bar for a command writing `format` on stdout: shown only for the table, only
    /// when stderr is a terminal, and only once the work has taken a second.
    pub(crate) fn for_format(format: Format) -> Self {
        let mut b = Bar::new();
        b.terminal &= format == Format::Table;
        b
    }

    pub(crate) fn new() -> Self {
        let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::hidden());
        if let Ok(style) =
            ProgressStyle::with_template("{spinner} {pos}/{len} candidates {wide_bar} {eta}")
        {
            bar.set_style(style);
        }
        Bar {
            bar,
            started: Instant::now(),
            shown: Mutex::new(false),
            terminal: io::stderr().is_terminal(),
        }
    }

    pub(crate) fn finish(&self) {
        self.bar.finish_and_clear();
    }

    #[cfg(test)]
    fn position(&self) -> u64 {
        self.bar.position()
    }
}

impl Progress for Bar {
    fn start(&self, total: u64) {
        self.bar.set_length(total);
    }

    fn advance(&self, n: u64) {
        self.bar.inc(n);
        // Callers may count a candidate twice (the board re-judges some to name their
        // failure) and advance by the whole total to finish: the bar stops at its length.
        if let Some(len) = self.bar.length() {
            if self.bar.position() > len {
                self.bar.set_position(len);
            }
        }
        if self.terminal && self.started.elapsed() > Duration::from_secs(1) {
            if let Ok(mut shown) = self.shown.lock() {
                if !*shown {
                    *shown = true;
                    self.bar.set_draw_target(ProgressDrawTarget::stderr());
                }
            }
        }
    }
}

#[cfg(test)]
mod bar_tests {
    use super::*;

    #[test]
    fn the_bar_never_passes_its_total() {
        let b = Bar::new();
        b.start(100);
        b.advance(60);
        assert_eq!(b.position(), 60);
        b.advance(60);
        assert_eq!(b.position(), 100);
        b.advance(1000);
        assert_eq!(b.position(), 100);
    }
}
