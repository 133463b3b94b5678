//! Library-level commands: each takes plain, already-resolved arguments (no clap types),
//! runs the engine and returns a finished report that printers turn into text or JSON.

pub mod solve;
