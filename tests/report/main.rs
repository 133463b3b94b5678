//! Curves, SPICE export and the decision report, end to end: through the library on the
//! embedded catalog and through the command line. One integration binary (fast links).

mod browser;
mod cli;
mod curves;
mod report;
mod snapshots;
