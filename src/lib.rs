//! mirrorpick: choose discrete bipolar current-mirror designs that meet a spec.
//!
//! Data flows one way: files -> validated requirement and catalog (`input`) -> candidate
//! designs -> solved circuits (`circuit`, on `device` and `solve`) -> checks and verdicts
//! (`check`) -> ranking (`rank`) -> board BOM (`bom`) -> output (`report`). `curves`
//! sweeps one solved design for plots; every file is written through `atomic_file`.
//! The core works in SI numbers; units and °C live at the edges (`units`).
//! `app` runs commands from a plain configuration; the binary's `cli.rs` builds that
//! configuration from the command line.

pub mod app;
pub mod atomic_file;
pub mod bom;
pub mod calendar;
pub mod check;
pub mod circuit;
pub mod curves;
pub mod device;
pub mod fit;
pub mod input;
pub mod model;
pub mod rank;
pub mod report;
pub mod solve;
pub mod text;
pub mod units;
