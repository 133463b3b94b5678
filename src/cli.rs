//! What the user typed: clap derive types, and their conversion into the library's plain
//! [`Config`]. Only `main` uses this module; the library never sees clap types.
//!
//! Adding a subcommand: add a variant to [`Command`] (or to a group such as
//! [`CatalogCommand`]) with its arguments and an `after_help` worked example, add the
//! matching variant to `app::Command`, and map one onto the other in [`Cli::into_config`].

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

use mirrorpick::app::{CatalogSource, Command as AppCommand, Config};
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
    #[command(subcommand)]
    Catalog(CatalogCommand),
    /// Check requirement files.
    #[command(subcommand)]
    Spec(SpecCommand),
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
