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
    /// Output current against output voltage for several input currents, and the error
    /// against the input current, of one named design.
    #[command(
        after_help = "Sweeps V_out from 0 V to the supply at I_in min, max and geometric steps between, \
at 25 °C (and the ambient extremes with --extremes), nominal devices.\n\nExample:\n  \
mirrorpick curves requirements-examples/ltp-tail-sink.yaml --part npn-dual-prematched --topology simple --re 100 --svg tail.svg"
    )]
    Curves {
        /// Requirement file (YAML).
        requirement: PathBuf,
        #[command(flatten)]
        design: DesignOpts,
        /// Also sweep at the requirement's ambient extremes.
        #[arg(long)]
        extremes: bool,
        /// Solve with self-heating (junction temperatures from dissipation).
        #[arg(long)]
        self_heating: bool,
        #[command(flatten)]
        format: FormatArg,
        /// Also draw the curves as an SVG file.
        #[arg(long, value_name = "FILE")]
        svg: Option<PathBuf>,
    },
    /// Export one named design for a circuit simulator.
    #[command(
        after_help = "Writes a SPICE subcircuit with Gummel-Poon .model cards, the requirement and the \
catalog's provenance as comments, and a test bench sweeping V_out.\n\nExample:\n  \
mirrorpick export --spice requirements-examples/ltp-tail-sink.yaml --part npn-dual-prematched --topology wilson --out tail.cir"
    )]
    Export {
        /// Write a SPICE netlist (the only export format so far).
        #[arg(long, required = true)]
        spice: bool,
        /// Requirement file (YAML).
        requirement: PathBuf,
        #[command(flatten)]
        design: DesignOpts,
        /// Write to FILE (atomically) instead of standard output.
        #[arg(long, value_name = "FILE")]
        out: Option<PathBuf>,
    },
}

/// One named design.
#[derive(Debug, Args)]
pub struct DesignOpts {
    /// Transistor class of the matched pair(s), as `catalog list` shows it.
    #[arg(long, value_name = "CLASS")]
    pub part: String,
    /// simple, beta-helper, wilson, wilson4, cascode or widlar.
    #[arg(long, value_name = "T")]
    pub topology: String,
    /// Single-device class for helper transistors (default: the cheapest single).
    #[arg(long, value_name = "CLASS")]
    pub helper: Option<String>,
    /// Emitter resistor, RE1 = RE2 (RE2 for widlar), like `100` or `4k7`; none when absent.
    #[arg(long, value_name = "R")]
    pub re: Option<String>,
    /// Resistor class (tolerance, TCR); the cheapest when absent.
    #[arg(long, value_name = "CLASS")]
    pub resistor: Option<String>,
}

impl From<DesignOpts> for mirrorpick::app::DesignArgs {
    fn from(d: DesignOpts) -> Self {
        mirrorpick::app::DesignArgs {
            part: d.part,
            topology: d.topology,
            helper: d.helper,
            re: d.re,
            resistor: d.resistor,
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
            Command::Curves {
                requirement,
                design,
                extremes,
                self_heating,
                format,
                svg,
            } => AppCommand::Curves {
                requirement,
                design: design.into(),
                extremes,
                self_heating,
                format: format.format.into(),
                svg,
            },
            Command::Export {
                spice: _,
                requirement,
                design,
                out,
            } => AppCommand::ExportSpice {
                requirement,
                design: design.into(),
                out,
            },
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
