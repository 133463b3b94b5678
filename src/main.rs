//! The `mirrorpick` binary: parse arguments, build the configuration, run the library,
//! map the outcome to an exit code (0 success, 1 nothing passes, 2 bad input or I/O).
//! Errors go to stderr as one line; a closed output pipe ends the program quietly.

mod cli;

use std::io::{self, BufWriter, IsTerminal, Write};
use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let args = cli::Cli::parse();
    let color =
        io::stdout().is_terminal() && std::env::var_os("NO_COLOR").is_none_or(|v| v.is_empty());
    let config = args.into_config(color, width());

    let stdout = io::stdout();
    let mut out = BufWriter::new(stdout.lock());
    let result = mirrorpick::app::run(&config, &mut out)
        .and_then(|o| out.flush().map(|_| o).map_err(Into::into));
    match result {
        Ok(outcome) => ExitCode::from(outcome.exit_code() as u8),
        Err(e) if e.is_broken_pipe() => ExitCode::SUCCESS,
        Err(e) => {
            // Drop buffered output so a failed command prints nothing half-done.
            let _ = out.into_parts();
            eprintln!("error: {}", chain(&e));
            ExitCode::from(e.exit_code())
        }
    }
}

/// Columns for tables: `COLUMNS` when set (the POSIX shell convention, and how scripts and
/// tests ask for a width), else the terminal's width when stdout is one, else no limit.
fn width() -> Option<u16> {
    if let Some(w) = std::env::var("COLUMNS")
        .ok()
        .and_then(|s| s.trim().parse::<u16>().ok())
        .filter(|&w| w >= 20)
    {
        return Some(w);
    }
    if io::stdout().is_terminal() {
        // comfy-table reads the terminal size through its own terminal backend.
        comfy_table::Table::new().width()
    } else {
        None
    }
}

/// The error and its sources on one line.
fn chain(e: &dyn std::error::Error) -> String {
    let mut s = e.to_string();
    let mut cur = e.source();
    while let Some(src) = cur {
        let text = src.to_string();
        if !s.contains(&text) {
            s.push_str(": ");
            s.push_str(&text);
        }
        cur = src.source();
    }
    s
}
