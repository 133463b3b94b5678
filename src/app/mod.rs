//! Command logic: a resolved [`Config`] in, output written to any `io::Write`, an
//! [`Outcome`] or an [`AppError`] out.
//!
//! This is where files are read and the library's pieces are put together for each
//! command. It never sees clap types (those stay in `cli.rs`) and never exits the process
//! (`main` maps the outcome to an exit code). Adding a command: add a variant to
//! [`Command`], handle it in [`run`], and map the clap subcommand onto it in `cli.rs`.

pub mod outputs;
pub mod rank;
pub mod report_cmd;
pub mod solve;

use std::io::{self, Write};
use std::path::{Path, PathBuf};

pub use rank::DesignArgs;
pub use report_cmd::ReportArgs;

use crate::input::{self, InputError};
use crate::model::{Catalog, Polarity, Requirement};
use crate::report::{self, Format, Style};
use crate::units::{format_quantity, Dimension as D};

/// Where the catalog comes from.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub enum CatalogSource {
    /// The catalog embedded in the binary (`catalog/default.yaml`).
    #[default]
    Default,
    File(PathBuf),
}

/// One command, with everything it needs resolved.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Command {
    CatalogList {
        format: Format,
    },
    CatalogShow {
        id: String,
        format: Format,
    },
    /// Check a catalog file, or the active catalog when `file` is `None`.
    CatalogLint {
        file: Option<PathBuf>,
    },
    SpecLint {
        file: PathBuf,
    },
    /// Curve family of one design; a plot when `svg` is given.
    Curves {
        requirement: PathBuf,
        design: DesignArgs,
        extremes: bool,
        self_heating: bool,
        format: Format,
        svg: Option<PathBuf>,
    },
    /// Rank, then write the decision record.
    Report(ReportArgs),
    /// One design as a SPICE deck, on stdout or into `out`.
    ExportSpice {
        requirement: PathBuf,
        design: DesignArgs,
        out: Option<PathBuf>,
    },
    Rank(rank::RankArgs),
    Check(rank::CheckArgs),
    Cheaper(rank::CheaperArgs),
}

#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Config {
    pub catalog: CatalogSource,
    pub command: Command,
    pub style: Style,
}

/// How a command that did its job came out.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Outcome {
    /// Everything asked for was found or passed (exit code 0).
    Success,
    /// The command ran but nothing passes (exit code 1).
    NothingPasses,
}

impl Outcome {
    pub fn exit_code(self) -> i32 {
        match self {
            Outcome::Success => 0,
            Outcome::NothingPasses => 1,
        }
    }
}

/// The tool could not do its job: bad input or I/O. Exit code 2.
#[derive(Debug, thiserror::Error)]
pub enum AppError {
    #[error(transparent)]
    Input(#[from] InputError),
    #[error("cannot read `{path}`: {source}")]
    Read { path: String, source: io::Error },
    #[error("no class `{id}` in {catalog}{}; expected one of the ids `catalog list` shows", suggestion.as_ref().map(|s| format!(" (did you mean `{s}`?)")).unwrap_or_default())]
    UnknownClass {
        id: String,
        suggestion: Option<String>,
        catalog: String,
    },
    #[error(transparent)]
    Rank(#[from] crate::rank::RankError),
    /// A command-line value that makes no sense (unknown name, bad quantity).
    #[error("{0}")]
    Usage(String),
    #[error("cannot write the output: {0}")]
    Output(#[from] io::Error),
    #[error(transparent)]
    File(#[from] crate::atomic_file::OutputError),
    #[error(transparent)]
    Solve(#[from] crate::circuit::SolveFailure),
    #[error(transparent)]
    Plot(#[from] crate::report::plot::PlotError),
}

impl AppError {
    /// True when the output pipe was closed by the reader (`| head`): not worth a message.
    pub fn is_broken_pipe(&self) -> bool {
        matches!(self, AppError::Output(e) if e.kind() == io::ErrorKind::BrokenPipe)
    }
}

/// Read a whole text file, naming it in the error.
pub fn read_file(path: &Path) -> Result<String, AppError> {
    std::fs::read_to_string(path).map_err(|source| AppError::Read {
        path: path.display().to_string(),
        source,
    })
}

/// Load the catalog a command should use, and the name messages give it.
pub fn load_catalog(source: &CatalogSource) -> Result<(Catalog, String), AppError> {
    match source {
        CatalogSource::Default => Ok((
            input::load_default_catalog()?,
            input::DEFAULT_CATALOG_NAME.to_string(),
        )),
        CatalogSource::File(path) => {
            let name = path.display().to_string();
            let text = read_file(path)?;
            Ok((input::load_catalog(&name, &text)?, name))
        }
    }
}

/// Load a requirement file, checking its allow/deny names against `catalog`.
pub fn load_requirement(path: &Path, catalog: &Catalog) -> Result<Requirement, AppError> {
    let name = path.display().to_string();
    let text = read_file(path)?;
    Ok(input::load_requirement(&name, &text, Some(catalog))?)
}

/// Run one command.
pub fn run(cfg: &Config, out: &mut dyn Write) -> Result<Outcome, AppError> {
    match &cfg.command {
        Command::CatalogList { format } => {
            let (catalog, _) = load_catalog(&cfg.catalog)?;
            report::catalog::write_list(&catalog, *format, cfg.style, out)?;
        }
        Command::CatalogShow { id, format } => {
            let (catalog, name) = load_catalog(&cfg.catalog)?;
            if !report::catalog::write_class(&catalog, id, *format, cfg.style, out)? {
                let ids = catalog
                    .transistors
                    .iter()
                    .map(|t| t.id.as_str())
                    .chain(catalog.resistors.iter().map(|r| r.id.as_str()));
                return Err(AppError::UnknownClass {
                    id: id.clone(),
                    suggestion: input::did_you_mean(id, ids),
                    catalog: name,
                });
            }
        }
        Command::CatalogLint { file } => {
            let source = match file {
                Some(f) => CatalogSource::File(f.clone()),
                None => cfg.catalog.clone(),
            };
            let (catalog, name) = load_catalog(&source)?;
            writeln!(out, "{name}: ok; {}", catalog_summary(&catalog))?;
        }
        Command::SpecLint { file } => {
            let (catalog, _) = load_catalog(&cfg.catalog)?;
            let req = load_requirement(file, &catalog)?;
            writeln!(out, "{}: ok; {}", file.display(), requirement_summary(&req))?;
        }
        Command::Curves {
            requirement,
            design,
            extremes,
            self_heating,
            format,
            svg,
        } => {
            return outputs::run_curves(
                &cfg.catalog,
                requirement,
                design,
                *extremes,
                *self_heating,
                *format,
                svg,
                cfg.style,
                out,
            )
        }
        Command::Report(args) => return report_cmd::run_report(&cfg.catalog, args, out),
        Command::ExportSpice {
            requirement,
            design,
            out: path,
        } => return outputs::run_export_spice(&cfg.catalog, requirement, design, path, out),
        Command::Rank(a) => return rank::run_rank(cfg, a, out),
        Command::Check(a) => return rank::run_check(cfg, a, out),
        Command::Cheaper(a) => return rank::run_cheaper(cfg, a, out),
    }
    Ok(Outcome::Success)
}

fn count(n: usize, one: &str, many: &str) -> String {
    format!("{n} {}", if n == 1 { one } else { many })
}

/// "16 transistor classes (8 NPN, 8 PNP) and 4 resistor classes".
pub fn catalog_summary(c: &Catalog) -> String {
    let npn = c
        .transistors
        .iter()
        .filter(|t| t.polarity == Polarity::Npn)
        .count();
    format!(
        "{} ({npn} NPN, {} PNP) and {}",
        count(
            c.transistors.len(),
            "transistor class",
            "transistor classes"
        ),
        c.transistors.len() - npn,
        count(c.resistors.len(), "resistor class", "resistor classes"),
    )
}

/// One line a designer can check the file against.
pub fn requirement_summary(r: &Requirement) -> String {
    let range = |x: &crate::model::Range, d: D| {
        if x.min == x.max {
            format_quantity(x.min, d)
        } else {
            format!(
                "{} to {}",
                format_quantity(x.min, d),
                format_quantity(x.max, d)
            )
        }
    };
    let ratio = if r.ratio == 1.0 {
        String::new()
    } else {
        format!(", ratio {}", r.ratio)
    };
    format!(
        "`{}`: {} from {} supply, input {}{ratio}, output {}, ambient {}, accuracy {} at {} sigma",
        r.name,
        r.kind.as_str(),
        format_quantity(r.supply_v, D::Voltage),
        range(&r.input_current_a, D::Current),
        range(&r.output_voltage_v, D::Voltage),
        range(&r.ambient_k, D::Temperature),
        format_quantity(r.accuracy, D::Fraction),
        r.confidence_sigma,
    )
}
