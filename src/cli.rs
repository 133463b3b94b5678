//! What the user typed: clap derive types, and their conversion into the library's plain
//! [`Config`]. Only `main` uses this module; the library never sees clap types.
//!
//! Adding a subcommand: add a variant to [`Command`] (or to a group such as
//! [`CatalogCommand`]) with its arguments and an `after_help` worked example, add the
//! matching variant to `app::Command`, and map one onto the other in [`Cli::into_config`].

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

use mirrorpick::app::bom::BomArgs;
use mirrorpick::app::rank::{CheaperArgs, CheckArgs, DesignArgs, RankArgs};
use mirrorpick::app::solve::SolveArgs;
use mirrorpick::app::{CatalogSource, Command as AppCommand, Config, FitArgs, ReportArgs};
use mirrorpick::check::MonteCarlo;
use mirrorpick::input::REQUIREMENT_FIELDS;
use mirrorpick::model::{Polarity, Topology};
use mirrorpick::rank::Prefer;
use mirrorpick::report::{Format, Style};
use mirrorpick::units::{self, Dimension, Field};

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

    /// Show every column of the candidate tables (rank, check, cheaper, bom) instead of
    /// the ones a designer decides on. Tables fit the terminal (or `COLUMNS`) by wrapping
    /// cells either way; JSON and CSV always carry every field.
    #[arg(long, global = true)]
    pub wide: bool,

    #[command(subcommand)]
    pub command: Command,
}

#[derive(Debug, Subcommand)]
pub enum Command {
    /// List, show or check the catalog of part classes.
    #[command(
        subcommand,
        after_help = "Example:\n  mirrorpick catalog list\n  mirrorpick catalog show npn-dual-prematched\n  mirrorpick catalog lint catalog/default.yaml"
    )]
    Catalog(CatalogCommand),
    /// Check requirement files.
    #[command(
        subcommand,
        after_help = "Example:\n  mirrorpick spec lint requirements-examples/ltp-tail-sink.yaml"
    )]
    Spec(SpecCommand),
    /// Solve one design at one operating point and report every node and transistor.
    #[command(
        after_help = "Values take engineering units (100uA, 4k7, 12 V, 85 °C). Voltages are magnitudes \
from the mirror rail; a PNP class is solved as a source.\n\nExit status: 0 solved, 1 the engine \
could not give a trusted answer (no convergence, thermal runaway), 2 bad input.\n\nExample:\n  \
mirrorpick solve --topology simple --part npn-dual-prematched --iin 1mA --vout 10V --self-heating\n  \
mirrorpick solve --topology wilson --part npn-dual-general --re 220 --iin 100uA --vout 5V --supply 12V --format json\n  \
mirrorpick solve --topology beta-helper --part npn-dual-prematched --re1 24.9k --re2 2.43k --ratio 10 --iin 100uA --vout 5V --supply 12V\n  \
mirrorpick solve --topology simple --part npn-dual-general --rail 12V --rref 11.3k --rref-resistor thin-film-0p1pct --vout 5V --supply 12V\n\n\
Input: --iin forces the input current; --rail with --rref programs it by a resistor from the rail \
(the input current is then solved with the circuit, and R_ref's power and the output's tempco are \
printed). Give one or the other.\n\n\
Emitter resistors: --re for equal ones, or --re1 and --re2 together (one alone would be a lopsided \
mirror; the message gives the RE2 a ratio needs: n I_in RE2 = I_in RE1 - V_T ln n). The error is \
I_out/(n I_in) - 1 against --ratio (default 1). Cautions compare V_CE, I_C and package dissipation \
with the class's ratings as `check` does."
    )]
    Solve(SolveCli),
    /// Fit BF, VAF and the pair's V_BE offset to bench measurements of a mirror.
    #[command(after_help = FIT_HELP)]
    Fit(FitCommand),
    /// Rank every design that meets a requirement, cheapest first.
    #[command(
        after_help = "Compliance: every transistor keeps V_CE >= min_vce (requirement field, default 0.3 V) at I_in max, V_out min, every ambient; V_CB < 0 there is a caution. A corner that cannot be solved fails thermal-runaway or no-solution, naming the build, and the figures that needed it are not available. The count line gives the candidate space and says \"at least\" where the search left candidates unverified.\n\nExit status: 0 when at least one design is feasible, 1 when none is (the table and the rejection counts are still printed), 2 on bad input (including --top 0).\n\nExample:\n  mirrorpick rank requirements-examples/ltp-tail-sink.yaml\n  mirrorpick rank requirements-examples/led-string-sinks.yaml --prefer balanced --top 5 --explain 1\n  mirrorpick rank requirements-examples/ltp-tail-sink.yaml --every-value --top 20 --wide\n  mirrorpick rank requirements-examples/widlar-bias-source.yaml --format json --seed 7 --samples 500 > ranked.json"
    )]
    Rank(RankCli),
    /// Verify one named design against a requirement: every check with its margin.
    #[command(
        after_help = "Exit status: 0 when every check passes, 1 when any fails, 2 on bad input.\n\nExample:\n  mirrorpick check requirements-examples/ltp-tail-sink.yaml --part npn-dual-prematched --topology simple --re 100 --resistor thick-film-1pct\n  mirrorpick check requirements-examples/ltp-tail-sink.yaml --part npn-dual-general --topology wilson --corners --format json"
    )]
    Check(CheckCli),
    /// Designs cheaper than a named one, or (--second-source) other classes that still pass.
    #[command(
        after_help = "Exit status: 0 when at least one alternative passes, 1 when none does, 2 on bad input.\n\nExample:\n  mirrorpick cheaper requirements-examples/ltp-tail-sink.yaml --part npn-pair-monolithic --topology wilson\n  mirrorpick cheaper requirements-examples/ltp-tail-sink.yaml --part npn-dual-general --topology wilson --re 1.91k --resistor thick-film-1pct --second-source\n  mirrorpick cheaper requirements-examples/ltp-tail-sink.yaml --part npn-pair-monolithic --topology wilson --top 5"
    )]
    Cheaper(CheaperCli),
    /// Output current against output voltage for several input currents, and the error
    /// against the input current, of one named design.
    #[command(
        after_help = "Sweeps V_out from 0 V to the supply at I_in min, max and geometric steps between, \
at 25 °C (and the ambient extremes with --extremes), nominal devices.\n\nExample:\n  \
mirrorpick curves requirements-examples/ltp-tail-sink.yaml --part npn-dual-prematched --topology simple --re 100 --resistor thick-film-1pct --svg tail.svg"
    )]
    Curves {
        /// Requirement file (YAML).
        requirement: PathBuf,
        #[command(flatten)]
        design: DesignCli,
        /// Single-device class for helper transistors (default: spare devices, else the cheapest single).
        #[arg(long, value_name = "CLASS")]
        helper: Option<String>,
        /// Also sweep at the requirement's ambient extremes.
        #[arg(long)]
        extremes: bool,
        /// Solve with self-heating (junction temperatures from dissipation).
        #[arg(long)]
        self_heating: bool,
        #[command(flatten)]
        format: FormatArg,
        /// Also draw the curves as an SVG file (written whole or not at all).
        #[arg(long, value_name = "FILE")]
        svg: Option<PathBuf>,
    },
    /// Rank the requirement and write the decision record: one self-contained HTML page
    /// and/or a Markdown file with its plots beside it.
    #[command(
        after_help = "Exit status: 0 when a design passes, 1 when none does (the record is still written), \
2 on bad input or an unwritable path. Files are written whole or not at all, and one line names \
each file written. Without --out or --markdown the page goes to <requirement>.report.html beside \
the requirement, or to standard output when that is not a terminal; --out - always writes it to \
standard output.\n\nExample:\n  \
mirrorpick report requirements-examples/ltp-tail-sink.yaml --out tail.html\n  \
mirrorpick report requirements-examples/ltp-tail-sink.yaml --schematic tail-schematic.svg\n  \
mirrorpick report requirements-examples/led-string-sinks.yaml --markdown docs/led-sinks.md"
    )]
    Report {
        /// Requirement file (YAML).
        requirement: PathBuf,
        /// Write the HTML page to FILE (`-`: standard output). Default: <requirement>.report.html
        /// beside the requirement (standard output when that is not a terminal).
        #[arg(long, value_name = "FILE.html")]
        out: Option<PathBuf>,
        /// Also write the chosen design's schematic to FILE as its own SVG.
        #[arg(long, value_name = "FILE.svg")]
        schematic: Option<PathBuf>,
        /// Write the Markdown form to FILE, plots as <stem>-*.svg beside it.
        #[arg(long, value_name = "FILE.md")]
        markdown: Option<PathBuf>,
        /// Designs shown, 1 or more: the chosen one and the runners-up.
        #[arg(long, default_value_t = 5)]
        top: usize,
        #[command(flatten)]
        mc: MonteCarloArgs,
        /// Also draw the curves at the ambient extremes.
        #[arg(long)]
        extremes: bool,
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
        design: DesignCli,
        /// Single-device class for helper transistors (default: spare devices, else the cheapest single).
        #[arg(long, value_name = "CLASS")]
        helper: Option<String>,
        /// Write to FILE (written whole or not at all) instead of standard output.
        #[arg(long, value_name = "FILE")]
        out: Option<PathBuf>,
    },
    /// Cheapest bill of materials for a whole board: one design per channel, shared packages.
    #[command(after_help = BOM_HELP)]
    Bom(BomCli),
}

const BOM_HELP: &str = "\
The design file names the board, the boards per build and the channels; each channel is a
requirement file (path relative to the design file) or an inline requirement, with a
`count` of identical copies. Optional: `catalog` (relative path), `line_item_cost` (fixed
cost per distinct part per build), `max_line_items`, and board-wide `allow`/`deny` lists
of topologies and class ids. README.md describes the format.

Every channel is ranked against its requirement; every feasible design (one per distinct
set of parts) goes into an integer program that picks one design per channel and the
packages to build them from, sharing packages and resistor values across channels where
that is cheaper. The table shows the BOM, the assignment (channel -> design, package and
slot), the total per build and what each channel's cheapest design on its own would
cost. CSV is the BOM alone. Cautions go to stderr.

Exit status: 0 a board was found, 1 no board meets the design (the output says which
channel has no feasible design and why, or the fewest line items any board needs),
2 bad input.

Example:
  mirrorpick bom requirements-examples/board-synth-voice.yaml
  mirrorpick bom requirements-examples/board-synth-voice.yaml --format csv > bom.csv
  mirrorpick bom requirements-examples/board-synth-voice.yaml --format json --seed 7 --samples 200";

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
    /// Monte Carlo builds per design (at least 100; yields are printed with their 95 %
    /// confidence interval).
    #[arg(long, default_value_t = 1000, value_parser = samples)]
    pub samples: u32,
}

#[derive(Debug, Args)]
pub struct RankCli {
    /// Requirement file (YAML).
    pub file: PathBuf,
    /// Rows to show, 1 or more (families, or designs with --every-value).
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
    /// List every resistor value as its own row; by default each design family
    /// (topology, pair, helper, resistor class, or no degeneration) shows its best row.
    #[arg(long)]
    pub every_value: bool,
}

#[derive(Debug, Args)]
pub struct DesignCli {
    /// Transistor class of the matched pair(s).
    #[arg(long, value_name = "CLASS")]
    pub part: String,
    /// Topology: simple, beta-helper, wilson, wilson4, cascode or widlar.
    #[arg(long, value_name = "T")]
    pub topology: String,
    /// Emitter resistors (`100`, `4k7`, `1.5 kΩ`): RE1, and RE2 equal to it at ratio 1.
    /// At a ratio n != 1 RE2 is sized from n I_in RE2 = I_in RE1 - V_T ln(n) (design
    /// current, 25 °C) to the nearest standard value, unless --re2 names it. For a Widlar
    /// it is RE2, and without it RE2 is sized for the ratio.
    #[arg(long, value_name = "R")]
    pub re: Option<String>,
    /// Output-side emitter resistor RE2, named directly (with --re for RE1).
    #[arg(long, value_name = "R")]
    pub re2: Option<String>,
    /// Resistor class of the emitter resistors.
    #[arg(long, value_name = "CLASS")]
    pub resistor: Option<String>,
    /// Programming resistor R_ref (`510k`), for a requirement with a `program` section;
    /// without it the standard value nearest the exact one for this design is taken.
    #[arg(long, value_name = "R")]
    pub rref: Option<String>,
    /// Resistor class of R_ref (default: the --resistor class).
    #[arg(long, value_name = "CLASS")]
    pub rref_resistor: Option<String>,
    /// Outputs fed by the one input side, each with its own output transistor and RE2
    /// (1 to 8; default: the requirement's `outputs`). Not for wilson or wilson4.
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u8).range(1..=8))]
    pub outputs: Option<u8>,
    /// Area ratio from devices in parallel in one array: `n` devices on each output
    /// (ratio n) or `1/n` on the input side (ratio 1/n), n from 2 to 4; default 1.
    #[arg(long, value_name = "n|1/n")]
    pub area: Option<String>,
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
pub struct BomCli {
    /// Board design file (YAML).
    pub file: PathBuf,
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
    /// Drop-in second sources: the same topology and resistor values with another
    /// transistor class that still passes, at any cost.
    #[arg(long)]
    pub second_source: bool,
    /// Show at most N alternatives, largest saving first (default: all); only those are
    /// verified, so a small N answers sooner.
    #[arg(long, value_name = "N", value_parser = clap::value_parser!(u64).range(1..))]
    pub top: Option<u64>,
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
            outputs: self.outputs,
            area: self.area,
            part: self.part,
            topology: self.topology,
            helper,
            re: self.re,
            re2: self.re2,
            resistor: self.resistor,
            rref: self.rref,
            rref_resistor: self.rref_resistor,
        }
    }
}

#[derive(Debug, Args)]
pub struct SolveCli {
    /// simple, beta-helper, wilson, wilson4, cascode or widlar.
    #[arg(long, value_parser = topology)]
    pub topology: Topology,
    /// Transistor class of the matched pair(s), as `catalog list` shows it.
    #[arg(long)]
    pub part: String,
    /// Single-device class for helper transistors (default: the cheapest single).
    #[arg(long)]
    pub helper: Option<String>,
    /// Equal emitter resistors RE1 = RE2 (e.g. 220, 4k7).
    #[arg(long, value_parser = resistance, conflicts_with_all = ["re1", "re2"], allow_hyphen_values = true)]
    pub re: Option<f64>,
    /// RE1, the input side (e.g. 220, 4k7); give --re2 with it.
    #[arg(long, value_parser = resistance, allow_hyphen_values = true)]
    pub re1: Option<f64>,
    /// RE2, the output side; give --re1 with it (a Widlar takes --re2 only).
    #[arg(long, value_parser = resistance, allow_hyphen_values = true)]
    pub re2: Option<f64>,
    /// The intended ratio n = I_out / I_in the error is measured against [default: 1].
    #[arg(long, value_parser = ratio_value)]
    pub ratio: Option<f64>,
    /// Forced programming current I_in (e.g. 100uA); or give --rail with --rref.
    #[arg(long, value_parser = current, allow_hyphen_values = true)]
    pub iin: Option<f64>,
    /// Program rail (e.g. 12V) from the mirror rail, instead of --iin: R_ref (--rref)
    /// from it to the input sets the input current, solved with the circuit.
    #[arg(long, value_parser = voltage, allow_hyphen_values = true)]
    pub rail: Option<f64>,
    /// Programming resistor R_ref from --rail to the input (e.g. 11k).
    #[arg(long, value_parser = resistance, allow_hyphen_values = true)]
    pub rref: Option<f64>,
    /// Resistor class of R_ref (its TCR and power rating; default: TCR 0 and a chip
    /// resistor's rating).
    #[arg(long, value_name = "CLASS")]
    pub rref_resistor: Option<String>,
    /// Output voltage from the mirror rail (e.g. 5V), a magnitude for NPN and PNP alike.
    #[arg(long, value_parser = voltage, allow_hyphen_values = true)]
    pub vout: f64,
    /// Supply from the mirror rail to the opposite rail; defaults to --vout.
    #[arg(long, value_parser = supply, allow_hyphen_values = true)]
    pub supply: Option<f64>,
    /// Ambient temperature (e.g. 25C, -40 °C).
    #[arg(long, value_parser = temperature, default_value = "25 °C", allow_hyphen_values = true)]
    pub ambient: f64,
    /// Include self-heating (electrothermal fixed point).
    #[arg(long)]
    pub self_heating: bool,
    /// V_BE offset of Q2 against Q1 (e.g. 1mV).
    #[arg(long, value_parser = offset, default_value = "0", allow_hyphen_values = true)]
    pub dvbe: f64,
    /// Relative beta deviation of Q2 against Q1 (e.g. 0.02 or 2 %).
    #[arg(long, value_parser = fraction, default_value = "0", allow_hyphen_values = true)]
    pub dbeta: f64,
    /// Outputs fed by the one input side, each with its own output transistor and RE2
    /// (1 to 8). Not for wilson or wilson4.
    #[arg(long, value_name = "N", default_value_t = 1, value_parser = clap::value_parser!(u8).range(1..=8))]
    pub outputs: u8,
    /// Output format.
    #[arg(long, value_enum, default_value_t = TableOrJson::Table)]
    pub format: TableOrJson,
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, ValueEnum)]
pub enum TableOrJson {
    Table,
    Json,
}

/// A command-line value read like the same field of a requirement file: unit checked,
/// implausible magnitudes (`1 MA` as a programming current) rejected with a hint.
fn requirement_field(text: &str, name: &str) -> Result<f64, String> {
    let (_, field) = REQUIREMENT_FIELDS
        .iter()
        .find(|(n, _)| *n == name)
        .expect("field names below are requirement fields");
    units::parse_field(text, field).map_err(|e| e.to_string())
}
fn current(t: &str) -> Result<f64, String> {
    requirement_field(t, "input_current")
}
fn voltage(t: &str) -> Result<f64, String> {
    requirement_field(t, "output_voltage")
}
fn samples(t: &str) -> Result<u32, String> {
    use mirrorpick::check::MIN_SAMPLES;
    let n: u32 = t.trim().parse().map_err(|_| {
        format!(
            "`{}` is not a whole number of builds; expected {MIN_SAMPLES} or more, like `1000`",
            mirrorpick::text::shown(t)
        )
    })?;
    if n < MIN_SAMPLES {
        return Err(format!(
            "{n} builds are too few to estimate a yield (one build that passes says nothing about 99.9 %); expected {MIN_SAMPLES} or more, like `1000`"
        ));
    }
    Ok(n)
}
fn supply(t: &str) -> Result<f64, String> {
    requirement_field(t, "supply")
}
fn temperature(t: &str) -> Result<f64, String> {
    requirement_field(t, "ambient")
}
fn resistance(t: &str) -> Result<f64, String> {
    units::parse_field(
        t,
        &Field::new("an emitter resistor", Dimension::Resistance, 0.0, 10e6),
    )
    .map_err(|e| e.to_string())
}
fn ratio_value(t: &str) -> Result<f64, String> {
    requirement_field(t, "ratio")
}
fn offset(t: &str) -> Result<f64, String> {
    units::parse_field(
        t,
        &Field::new("a V_BE offset", Dimension::Voltage, -0.1, 0.1),
    )
    .map_err(|e| e.to_string())
}
fn fraction(t: &str) -> Result<f64, String> {
    units::parse_field(
        t,
        &Field::new("a beta deviation", Dimension::Fraction, -0.9, 10.0),
    )
    .map_err(|e| e.to_string())
}
fn topology(t: &str) -> Result<Topology, String> {
    Topology::from_name(t).ok_or_else(|| {
        let names: Vec<&str> = mirrorpick::model::ALL_TOPOLOGIES
            .iter()
            .map(|t| t.name())
            .collect();
        format!("unknown topology; expected one of {}", names.join(", "))
    })
}

const FIT_HELP: &str = "\
The CSV file has a header naming at least `i_in`, `v_out` and `i_out` (optionally
`t_ambient`), one measured point per row; values may carry units (`100uA`, `2.5 V`,
`25 °C`); a bare number is in amperes, volts or °C. Lines starting with `#` are notes,
and so are columns named `note` or `comment`; any other column name is an error.
Each programming current gives one curve: its straight line in the active region meets
the voltage axis at -VAF_eff. The model fit solves the stated circuit for every point
and reports standard errors, residuals and warnings for anything the data cannot pin
down (no V_out variation leaves VAF open; a simple mirror without emitter resistors
cannot tell a beta error from a V_BE offset).

Errors are rounded to what the data support; a value held because the data cannot
tell it apart makes the other errors conditional, and the report says by how much.

Exit status: 0 fitted, 1 no fit the data can support (too few distinct points, nothing
determinable, a value outside physics; the report says why), 2 bad input.

Example (synthetic demo data shipped with the project, a simple mirror with 1 kΩ emitter
resistors measured at 10 uA, 100 uA and 1 mA from 1.5 V to 10 V):
  mirrorpick fit requirements-examples/bench-simple-mirror.csv --topology simple \\
      --re1 1k --re2 1k --ambient 27C --supply 12V --self-heating --emit-class npn-dual-bench
  mirrorpick fit requirements-examples/bench-simple-mirror.csv --topology simple --re1 1k --re2 1k --format json";

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
        after_help = "Example:\n  mirrorpick catalog list\n  mirrorpick catalog list --format csv > classes.csv\n  mirrorpick --catalog catalog/default.yaml catalog list --format json"
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
        after_help = "Exit status: 0 when the file is valid, 2 with a `file:line:col:` message when not.\n\nExample:\n  mirrorpick catalog lint catalog/default.yaml\n  mirrorpick catalog lint          # checks the built-in catalog"
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
        after_help = "Exit status: 0 when the file is valid, 2 with a `file:line:col:` message when not.\n\nExample:\n  mirrorpick spec lint requirements-examples/sensor-excitation-source.yaml\n  mirrorpick --catalog catalog/default.yaml spec lint requirements-examples/ltp-tail-sink.yaml"
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
    /// Resolve what was typed into the library's configuration. `color` and `width` are
    /// decided by `main` (terminal, NO_COLOR, COLUMNS); `stdout_is_terminal` decides where
    /// `report` writes by default.
    pub fn into_config(self, color: bool, width: Option<u16>, stdout_is_terminal: bool) -> Config {
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
            Command::Solve(a) => AppCommand::Solve {
                format: match a.format {
                    TableOrJson::Table => Format::Table,
                    TableOrJson::Json => Format::Json,
                },
                args: SolveArgs {
                    shape: mirrorpick::model::Shape::outputs(a.outputs),
                    topology: a.topology,
                    part: a.part,
                    helper: a.helper,
                    re1_ohm: a.re.or(a.re1),
                    re2_ohm: a.re.or(a.re2),
                    ratio: a.ratio,
                    i_in_a: a.iin,
                    rail_v: a.rail,
                    r_ref_ohm: a.rref,
                    r_ref_resistor: a.rref_resistor,
                    v_out_v: a.vout,
                    supply_v: a.supply,
                    ambient_k: a.ambient,
                    self_heating: a.self_heating,
                    dvbe_v: a.dvbe,
                    dbeta: a.dbeta,
                },
            },
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
                date: mirrorpick::calendar::today_utc(),
            }),
            Command::Rank(a) => AppCommand::Rank(RankArgs {
                file: a.file,
                top: a.top,
                prefer: a.prefer.into(),
                format: a.format.format.into(),
                mc: a.mc.into(),
                exhaustive: a.exhaustive,
                explain: a.explain,
                every_value: a.every_value,
            }),
            Command::Check(a) => AppCommand::Check(CheckArgs {
                file: a.file,
                design: a.design.into_args(a.helper),
                corners: a.corners,
                format: a.format.format.into(),
                mc: a.mc.into(),
            }),
            Command::Curves {
                requirement,
                design,
                helper,
                extremes,
                self_heating,
                format,
                svg,
            } => AppCommand::Curves {
                requirement,
                design: design.into_args(helper),
                extremes,
                self_heating,
                format: format.format.into(),
                svg,
            },
            Command::Report {
                requirement,
                out,
                schematic,
                markdown,
                top,
                mc,
                extremes,
            } => AppCommand::Report(ReportArgs {
                requirement,
                html: out,
                stdout_is_terminal,
                schematic,
                markdown,
                top,
                mc: mc.into(),
                extremes,
            }),
            Command::Export {
                spice: _,
                requirement,
                design,
                helper,
                out,
            } => AppCommand::ExportSpice {
                requirement,
                design: design.into_args(helper),
                out,
            },
            Command::Bom(a) => AppCommand::Bom(BomArgs {
                file: a.file,
                format: a.format.format.into(),
                mc: a.mc.into(),
            }),
            Command::Cheaper(a) => AppCommand::Cheaper(CheaperArgs {
                file: a.file,
                design: a.design.into_args(None),
                second_source: a.second_source,
                top: a.top.map(|n| n as usize),
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
            style: Style {
                color,
                width,
                wide: self.wide,
            },
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
