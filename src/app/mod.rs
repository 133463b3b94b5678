//! Command logic: a resolved [`Config`] in, output written to any `io::Write`, an
//! [`Outcome`] or an [`AppError`] out.
//!
//! This is where files are read and the library's pieces are put together for each
//! command. It never sees clap types (those stay in `cli.rs`) and never exits the process
//! (`main` maps the outcome to an exit code). Adding a command: add a variant to
//! [`Command`], handle it in [`run`], and map the clap subcommand onto it in `cli.rs`.

pub mod bom;
pub mod outputs;
pub mod rank;
pub mod report_cmd;
pub mod solve;

use std::io::{self, Write};
use std::path::{Path, PathBuf};

use crate::fit;
pub use rank::DesignArgs;
pub use report_cmd::ReportArgs;

use crate::input::{self, InputError};
use crate::model::{Catalog, Polarity, Requirement, Topology, ZERO_CELSIUS_K};
use crate::report::{self, Format, Style};
use crate::units::{format_quantity, parse_field, Dimension as D, Field};

/// Where the catalog comes from.
#[derive(Debug, Clone, PartialEq, Eq, Default)]
pub enum CatalogSource {
    /// The catalog embedded in the binary (`catalog/default.yaml`).
    #[default]
    Default,
    File(PathBuf),
}

/// One command, with everything it needs resolved.
#[derive(Debug, Clone, PartialEq)]
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
    /// One design at one operating point (`solve`).
    Solve {
        args: solve::SolveArgs,
        format: Format,
    },
    Fit(FitArgs),
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
    Bom(bom::BomArgs),
}

/// `fit` settings as typed (quantities still text: they are parsed here with located
/// messages, so the CLI layer stays free of units).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FitArgs {
    pub file: PathBuf,
    pub topology: String,
    pub re1: Option<String>,
    pub re2: Option<String>,
    pub ambient: Option<String>,
    pub supply: Option<String>,
    /// Catalog class to start from; the generic class of `polarity` when absent.
    pub part: Option<String>,
    pub polarity: Polarity,
    pub fit_ikf: bool,
    pub self_heating: bool,
    pub emit_class: Option<String>,
    pub json: bool,
    /// `YYYY-MM-DD` of the run, for provenance.
    pub date: String,
}

#[derive(Debug, Clone, PartialEq)]
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
    Solve(#[from] solve::SolveCommandError),
    #[error(transparent)]
    Measurements(#[from] crate::fit::CsvError),
    #[error("unknown topology `{name}`{}; expected one of {}", suggestion.as_ref().map(|s| format!(" (did you mean `{s}`?)")).unwrap_or_default(), crate::input::list(&crate::model::ALL_TOPOLOGIES.iter().map(|t| t.name().to_string()).collect::<Vec<_>>()))]
    UnknownTopology {
        name: String,
        suggestion: Option<String>,
    },
    #[error("{option}: {error}")]
    BadOption {
        option: &'static str,
        error: crate::units::QuantityError,
    },
    #[error("{option}: {problem}; expected {expected}")]
    OptionValue {
        option: &'static str,
        problem: String,
        expected: &'static str,
    },
    #[error(transparent)]
    Bom(#[from] crate::bom::BomError),
    #[error(transparent)]
    Rank(#[from] crate::rank::RankError),
    /// A command-line value that makes no sense (unknown name, bad quantity).
    #[error("{0}")]
    Usage(String),
    #[error("cannot write the output: {0}")]
    Output(#[from] io::Error),
    #[error(transparent)]
    File(#[from] crate::atomic_file::OutputError),
    /// The engine could not give a trusted answer for a named design.
    #[error(transparent)]
    Engine(#[from] crate::circuit::SolveFailure),
    #[error(transparent)]
    Plot(#[from] crate::report::plot::PlotError),
}

impl AppError {
    /// 1 when the tool ran but the engine could not give a trusted answer (no convergence,
    /// thermal runaway); 2 for bad input and I/O.
    pub fn exit_code(&self) -> u8 {
        match self {
            AppError::Solve(e) if !e.is_input_error() => 1,
            AppError::Engine(_) => 1,
            _ => 2,
        }
    }

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
        Command::Solve { args, format } => {
            let (catalog, _) = load_catalog(&cfg.catalog)?;
            let report = solve::solve_command(&catalog, args)?;
            match format {
                Format::Json => {
                    serde_json::to_writer_pretty(&mut *out, &report).map_err(io::Error::from)?;
                    writeln!(out)?;
                    // Cautions also go to stderr, so they are seen when JSON is piped.
                    for c in &report.cautions {
                        let _ = writeln!(io::stderr().lock(), "Caution: {c}");
                    }
                }
                Format::Table | Format::Csv => solve::write_solve_table(&report, out)?,
            }
        }
        Command::Fit(args) => return run_fit(cfg, args, out),
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
        Command::Bom(a) => return bom::run_bom(cfg, a, out),
    }
    Ok(Outcome::Success)
}

/// Plausible ranges of the `fit` options.
const FIT_RE: Field = Field::new("an emitter resistor", D::Resistance, 0.0, 1e7);
const FIT_AMBIENT: Field = Field::new("a bench ambient", D::Temperature, 173.15, 473.15);
const FIT_SUPPLY: Field = Field::new("a bench supply", D::Voltage, 0.1, 1000.0);

fn run_fit(cfg: &Config, args: &FitArgs, out: &mut dyn Write) -> Result<Outcome, AppError> {
    let topology =
        Topology::from_name(&args.topology).ok_or_else(|| AppError::UnknownTopology {
            name: args.topology.clone(),
            suggestion: input::did_you_mean(
                &args.topology,
                crate::model::ALL_TOPOLOGIES.iter().map(|t| t.name()),
            ),
        })?;
    let quantity = |option: &'static str, text: &Option<String>, field: &Field, default: f64| {
        text.as_deref().map_or(Ok(default), |t| {
            parse_field(t, field).map_err(|error| AppError::BadOption { option, error })
        })
    };
    let re1_ohm = quantity("--re1", &args.re1, &FIT_RE, 0.0)?;
    let re2_ohm = quantity("--re2", &args.re2, &FIT_RE, 0.0)?;
    if !topology.desc().has_re1 && re1_ohm > 0.0 {
        return Err(AppError::OptionValue {
            option: "--re1",
            problem: format!("the {} topology has no RE1", topology.name()),
            expected: "only --re2 for this topology",
        });
    }
    let ambient_k = quantity(
        "--ambient",
        &args.ambient,
        &FIT_AMBIENT,
        ZERO_CELSIUS_K + 25.0,
    )?;
    let supply_v = match &args.supply {
        Some(_) => Some(quantity("--supply", &args.supply, &FIT_SUPPLY, 0.0)?),
        None => None,
    };
    if let Some(id) = &args.emit_class {
        if id.is_empty()
            || id
                .chars()
                .any(|c| c.is_whitespace() || c == ':' || c == '#')
        {
            return Err(AppError::OptionValue {
                option: "--emit-class",
                problem: format!("`{id}` is not usable as a class id"),
                expected: "an id without blanks, `:` or `#`, like `npn-dual-bench-lot7`",
            });
        }
    }
    let base = match &args.part {
        Some(id) => {
            let (catalog, name) = load_catalog(&cfg.catalog)?;
            catalog
                .transistor(id)
                .cloned()
                .ok_or_else(|| AppError::UnknownClass {
                    id: id.clone(),
                    suggestion: input::did_you_mean(
                        id,
                        catalog.transistors.iter().map(|t| t.id.as_str()),
                    ),
                    catalog: name,
                })?
        }
        None => fit::generic_class(args.polarity),
    };
    let source = args.file.display().to_string();
    let text = read_file(&args.file)?;
    let set = fit::parse_measurements(&source, &text)?;
    if let Some(supply) = supply_v {
        if let Some(p) = set.points.iter().find(|p| p.v_out_v > supply) {
            return Err(AppError::OptionValue {
                option: "--supply",
                problem: format!(
                    "{} is below the output voltage {} on line {} of {source}",
                    format_quantity(supply, D::Voltage),
                    format_quantity(p.v_out_v, D::Voltage),
                    p.line
                ),
                expected: "the bench supply, at least the largest V_out measured",
            });
        }
    }
    let config = fit::FitConfig {
        topology,
        re1_ohm,
        re2_ohm,
        ambient_k,
        supply_v,
        self_heating: args.self_heating,
        fit_ikf: args.fit_ikf,
        base,
        emit_class_id: args.emit_class.clone(),
        date: args.date.clone(),
    };
    let report = fit::fit(&set, &config);
    if args.json {
        fit::render::write_json(&report, out)?;
    } else {
        fit::render::write_table(&report, cfg.style, out)?;
    }
    Ok(if report.fitted() {
        Outcome::Success
    } else {
        Outcome::NothingPasses
    })
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
