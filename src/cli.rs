//! What the user typed: clap derive types, and their conversion into the library's plain
//! [`Config`]. Only `main` uses this module; the library never sees clap types.
//!
//! Adding a subcommand: add a variant to [`Command`] (or to a group such as
//! [`CatalogCommand`]) with its arguments and an `after_help` worked example, add the
//! matching variant to `app::Command`, and map one onto the other in [`Cli::into_config`].

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

use mirrorpick::app::rank::{CheaperArgs, CheckArgs, DesignArgs, RankArgs};
use mirrorpick::app::{CatalogSource, Command as AppCommand, Config};
use mirrorpick::check::MonteCarlo;
use mirrorpick::rank::Prefer;
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
    /// Rank every design that meets a requirement, cheapest first.
    #[command(
        after_help = "Exit status: 0 when at least one design is feasible, 1 when none is (the table and the rejection counts are still printed), 2 on bad input.\n\nExample:\n  mirrorpick rank requirements-examples/ltp-tail-sink.yaml\n  mirrorpick rank board.yaml --prefer balanced --top 5 --explain 1\n  mirrorpick rank board.yaml --format json --seed 7 --samples 5000 > ranked.json"
    )]
    Rank(RankCli),
    /// Verify one named design against a requirement: every check with its margin.
    #[command(
        after_help = "Exit status: 0 when every check passes, 1 when any fails, 2 on bad input.\n\nExample:\n  mirrorpick check requirements-examples/ltp-tail-sink.yaml --part npn-dual-prematched --topology simple --re 100 --resistor thick-film-1pct\n  mirrorpick check board.yaml --part npn-dual-general --topology wilson --corners --format json"
    )]
    Check(CheckCli),
    /// Designs cheaper than a named one, or (--second-source) other classes that still pass.
    #[command(
        after_help = "Exit status: 0 when at least one alternative passes, 1 when none does, 2 on bad input.\n\nExample:\n  mirrorpick cheaper requirements-examples/ltp-tail-sink.yaml --part npn-matched-monolithic --topology simple\n  mirrorpick cheaper board.yaml --part npn-matched-monolithic --topology wilson --second-source"
    )]
    Cheaper(CheaperCli),
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum PreferChoice {
    /// Cheapest first; equal cost goes to the larger accuracy margin.
    Cost,
    /// Largest accuracy margin first.
    Accuracy,
    /// Smallest cost/cheapest + error/accuracy: the knee of the cost/error front.
    Balanced,
}

#[derive(Debug, Args)]
pub struct MonteCarloArgs {
    /// Seed of the Monte Carlo yield (same seed, same numbers).
    #[arg(long, default_value_t = 1)]
    pub seed: u64,
    /// Monte Carlo builds per design.
    #[arg(long, default_value_t = 1000)]
    pub samples: u32,
}

#[derive(Debug, Args)]
pub struct RankCli {
    /// Requirement file (YAML).
    pub file: PathBuf,
    /// Rows to show.
    #[arg(long, default_value_t = 10)]
    pub top: usize,
    /// How to order the feasible designs.
    #[arg(long, value_enum, default_value_t = PreferChoice::Cost)]
    pub prefer: PreferChoice,
    #[command(flatten)]
    pub format: FormatArg,
    #[command(flatten)]
    pub mc: MonteCarloArgs,
    /// Verify every candidate fully instead of skipping hopeless ones (slower, same result).
    #[arg(long)]
    pub exhaustive: bool,
    /// Print the full reasoning for row K (1 = the first).
    #[arg(long, value_name = "K")]
    pub explain: Option<usize>,
}

#[derive(Debug, Args)]
pub struct DesignCli {
    /// Transistor class of the matched pair(s).
    #[arg(long, value_name = "CLASS")]
    pub part: String,
    /// Topology: simple, beta-helper, wilson, wilson4, cascode or widlar.
    #[arg(long, value_name = "T")]
    pub topology: String,
    /// Emitter resistor RE1 (`100`, `4k7`, `1.5 kΩ`); RE2 follows the ratio. For a
    /// Widlar it is RE2, and without it RE2 is sized for the ratio.
    #[arg(long, value_name = "R")]
    pub re: Option<String>,
    /// Resistor class of the emitter resistors.
    #[arg(long, value_name = "CLASS")]
    pub resistor: Option<String>,
}

#[derive(Debug, Args)]
pub struct CheckCli {
    /// Requirement file (YAML).
    pub file: PathBuf,
    #[command(flatten)]
    pub design: DesignCli,
    /// Single-device class for helper transistors (default: spare devices, else the cheapest single).
    #[arg(long, value_name = "CLASS")]
    pub helper: Option<String>,
    /// Also print the table of every corner.
    #[arg(long)]
    pub corners: bool,
    #[command(flatten)]
    pub format: FormatArg,
    #[command(flatten)]
    pub mc: MonteCarloArgs,
}

#[derive(Debug, Args)]
pub struct CheaperCli {
    /// Requirement file (YAML).
    pub file: PathBuf,
    #[command(flatten)]
    pub design: DesignCli,
    /// List every other transistor class that still passes, at any cost.
    #[arg(long)]
    pub second_source: bool,
    #[command(flatten)]
    pub format: FormatArg,
    #[command(flatten)]
    pub mc: MonteCarloArgs,
}

impl From<PreferChoice> for Prefer {
    fn from(p: PreferChoice) -> Prefer {
        match p {
            PreferChoice::Cost => Prefer::Cost,
            PreferChoice::Accuracy => Prefer::Accuracy,
            PreferChoice::Balanced => Prefer::Balanced,
        }
    }
}

impl From<MonteCarloArgs> for MonteCarlo {
    fn from(m: MonteCarloArgs) -> MonteCarlo {
        MonteCarlo {
            seed: m.seed,
            samples: m.samples,
        }
    }
}

impl DesignCli {
    fn into_args(self, helper: Option<String>) -> DesignArgs {
        DesignArgs {
            part: self.part,
            topology: self.topology,
            helper,
            re: self.re,
            resistor: self.resistor,
        }
    }
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
            Command::Rank(a) => AppCommand::Rank(RankArgs {
                file: a.file,
                top: a.top,
                prefer: a.prefer.into(),
                format: a.format.format.into(),
                mc: a.mc.into(),
                exhaustive: a.exhaustive,
                explain: a.explain,
            }),
            Command::Check(a) => AppCommand::Check(CheckArgs {
                file: a.file,
                design: a.design.into_args(a.helper),
                corners: a.corners,
                format: a.format.format.into(),
                mc: a.mc.into(),
            }),
            Command::Cheaper(a) => AppCommand::Cheaper(CheaperArgs {
                file: a.file,
                design: a.design.into_args(None),
                second_source: a.second_source,
                format: a.format.format.into(),
                mc: a.mc.into(),
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

#[cfg(test)]
mod tests {
    use super::*;
    use clap::CommandFactory;

    #[test]
    fn clap_definition_is_consistent() {
        Cli::command().debug_assert();
    }
}
