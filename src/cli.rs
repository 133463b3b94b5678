//! What the user typed: clap derive types, and their conversion into the library's plain
//! [`Config`]. Only `main` uses this module; the library never sees clap types.
//!
//! Adding a subcommand: add a variant to [`Command`] (or to a group such as
//! [`CatalogCommand`]) with its arguments and an `after_help` worked example, add the
//! matching variant to `app::Command`, and map one onto the other in [`Cli::into_config`].

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

use mirrorpick::app::{CatalogSource, Command as AppCommand, Config, FitArgs};
use mirrorpick::model::Polarity;
use mirrorpick::report::{Format, Style};

#[derive(Debug, Parser)]
#[command(
    name = "mirrorpick",
    version,
    about = "Choose discrete bipolar current-mirror designs that meet a spec",
    long_about = "Choose discrete bipolar current-mirror designs (topology, transistor class, \
emitter resistors) that meet a requirement over input current, output voltage and \
temperature, verified on solved circuits.\n\nCatalog values are typical of each class of \
part, not guaranteed: the datasheet of the part you buy governs.",
    after_help = "Example:\n  mirrorpick catalog list\n  mirrorpick spec lint requirements-examples/led-string-sinks.yaml"
)]
pub struct Cli {
    /// Catalog of transistor and resistor classes (YAML); the built-in catalog when absent.
    #[arg(long, global = true, value_name = "FILE")]
    pub catalog: Option<PathBuf>,

    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// List, show or check the catalog of part classes.
    #[command(
        subcommand,
        after_help = "Example:\n  mirrorpick catalog list\n  mirrorpick catalog show npn-dual-prematched\n  mirrorpick catalog lint my-parts.yaml"
    )]
    Catalog(CatalogCommand),
    /// Check requirement files.
    #[command(
        subcommand,
        after_help = "Example:\n  mirrorpick spec lint requirements-examples/ltp-tail-sink.yaml"
    )]
    Spec(SpecCommand),
    /// Fit BF, VAF and the pair's V_BE offset to bench measurements of a mirror.
    #[command(after_help = FIT_HELP)]
    Fit(FitCommand),
}

const FIT_HELP: &str = "\
The CSV file has a header naming at least `i_in`, `v_out` and `i_out` (optionally
`t_ambient`), one measured point per row; values may carry units (`100uA`, `2.5 V`,
`25 °C`); a bare number is in amperes, volts or °C. Lines starting with `#` are notes.
Each programming current gives one curve: its straight line in the active region meets
the voltage axis at -VAF_eff. The model fit solves the stated circuit for every point
and reports standard errors, residuals and warnings for anything the data cannot pin
down (no V_out variation leaves VAF open; a simple mirror without emitter resistors
cannot tell a beta error from a V_BE offset).

Exit status: 0 fitted, 1 no fit could be made (the report says why), 2 bad input.

Example (synthetic demo data shipped with the project, a simple mirror with 1 kΩ emitter
resistors measured at 10 uA, 100 uA and 1 mA from 1.5 V to 10 V):
  mirrorpick fit requirements-examples/bench-simple-mirror.csv --topology simple \\
      --re1 1k --re2 1k --ambient 27C --supply 12V --self-heating --emit-class npn-dual-bench
  mirrorpick fit bench.csv --topology wilson --part npn-dual-general --format json";

#[derive(Debug, Args)]
pub struct FitCommand {
    /// Measurements (CSV): i_in, v_out, i_out and optionally t_ambient per row.
    pub file: PathBuf,
    /// Topology of the measured mirror: simple, beta-helper, wilson, wilson4, cascode, widlar.
    #[arg(long)]
    pub topology: String,
    /// Emitter resistor of the input side (RE1), as fitted on the bench, e.g. `1k`.
    #[arg(long, value_name = "R")]
    pub re1: Option<String>,
    /// Emitter resistor of the output side (RE2).
    #[arg(long, value_name = "R")]
    pub re2: Option<String>,
    /// Ambient of rows without a t_ambient value [default: 25 °C].
    #[arg(long, value_name = "T")]
    pub ambient: Option<String>,
    /// Bench supply (the helper's collector rail) [default: the largest V_out].
    #[arg(long, value_name = "V")]
    pub supply: Option<String>,
    /// Catalog class to start from (IS, temperature rules, ratings); a generic class when absent.
    #[arg(long, value_name = "CLASS")]
    pub part: Option<String>,
    /// Polarity of the generic starting class (ignored with --part).
    #[arg(long, value_enum, default_value_t = PolarityChoice::Npn)]
    pub polarity: PolarityChoice,
    /// Fit the high-current knee IKF too (needs data up to where beta falls).
    #[arg(long)]
    pub ikf: bool,
    /// Model self-heating with the class's thermal resistances.
    #[arg(long)]
    pub self_heating: bool,
    /// Print a ready-to-paste catalog class with this id.
    #[arg(long, value_name = "ID")]
    pub emit_class: Option<String>,
    /// Output format.
    #[arg(long, value_enum, default_value_t = FitFormat::Table)]
    pub format: FitFormat,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum PolarityChoice {
    Npn,
    Pnp,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FitFormat {
    Table,
    Json,
}

#[derive(Debug, Subcommand)]
pub enum CatalogCommand {
    /// List every transistor and resistor class in the catalog.
    #[command(
        after_help = "Example:\n  mirrorpick catalog list\n  mirrorpick catalog list --format csv > classes.csv\n  mirrorpick --catalog my-parts.yaml catalog list --format json"
    )]
    List(FormatArg),
    /// Show one class in full: model parameters, matching, ratings, thermal, cost.
    #[command(
        after_help = "Example:\n  mirrorpick catalog show npn-dual-prematched\n  mirrorpick catalog show thin-film-0p1pct --format json"
    )]
    Show {
        /// Class id, as `catalog list` shows it.
        id: String,
        #[command(flatten)]
        format: FormatArg,
    },
    /// Check a catalog file and report the first problem with its line and column.
    #[command(
        after_help = "Exit status: 0 when the file is valid, 2 with a `file:line:col:` message when not.\n\nExample:\n  mirrorpick catalog lint my-parts.yaml\n  mirrorpick catalog lint          # checks the built-in catalog"
    )]
    Lint {
        /// Catalog file; the active catalog (`--catalog` or built in) when absent.
        file: Option<PathBuf>,
    },
}

#[derive(Debug, Subcommand)]
pub enum SpecCommand {
    /// Check a requirement file against the schema and the active catalog.
    #[command(
        after_help = "Exit status: 0 when the file is valid, 2 with a `file:line:col:` message when not.\n\nExample:\n  mirrorpick spec lint requirements-examples/sensor-excitation-source.yaml\n  mirrorpick --catalog my-parts.yaml spec lint board.yaml"
    )]
    Lint {
        /// Requirement file (YAML).
        file: PathBuf,
    },
}

#[derive(Debug, Args)]
pub struct FormatArg {
    /// Output format: a table for people, JSON or CSV (plain SI numbers) for programs.
    #[arg(long, value_enum, default_value_t = FormatChoice::Table)]
    pub format: FormatChoice,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum FormatChoice {
    Table,
    Json,
    Csv,
}

impl From<FormatChoice> for Format {
    fn from(f: FormatChoice) -> Format {
        match f {
            FormatChoice::Table => Format::Table,
            FormatChoice::Json => Format::Json,
            FormatChoice::Csv => Format::Csv,
        }
    }
}

impl Cli {
    /// Resolve what was typed into the library's configuration. `color` is decided by
    /// `main` (terminal, NO_COLOR).
    pub fn into_config(self, color: bool) -> Config {
        let command = match self.command {
            Command::Catalog(CatalogCommand::List(f)) => AppCommand::CatalogList {
                format: f.format.into(),
            },
            Command::Catalog(CatalogCommand::Show { id, format }) => AppCommand::CatalogShow {
                id,
                format: format.format.into(),
            },
            Command::Catalog(CatalogCommand::Lint { file }) => AppCommand::CatalogLint { file },
            Command::Spec(SpecCommand::Lint { file }) => AppCommand::SpecLint { file },
            Command::Fit(f) => AppCommand::Fit(FitArgs {
                file: f.file,
                topology: f.topology,
                re1: f.re1,
                re2: f.re2,
                ambient: f.ambient,
                supply: f.supply,
                part: f.part,
                polarity: match f.polarity {
                    PolarityChoice::Npn => Polarity::Npn,
                    PolarityChoice::Pnp => Polarity::Pnp,
                },
                fit_ikf: f.ikf,
                self_heating: f.self_heating,
                emit_class: f.emit_class,
                json: f.format == FitFormat::Json,
                date: today_utc(),
            }),
        };
        Config {
            catalog: self
                .catalog
                .map(CatalogSource::File)
                .unwrap_or(CatalogSource::Default),
            command,
            style: Style { color },
        }
    }
}

/// Today's date (UTC) for provenance lines.
fn today_utc() -> String {
    let secs = std::time::SystemTime::now()
        .duration_since(std::time::UNIX_EPOCH)
        .map(|d| d.as_secs() as i64)
        .unwrap_or(0);
    mirrorpick::fit::emit::utc_date(secs)
}

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn clap_definition_is_consistent() {
        Cli::command().debug_assert();
    }
}
