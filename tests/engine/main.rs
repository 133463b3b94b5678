//! Engine checks against published results: device model, solved topologies, self-heating,
//! properties. One integration binary (fast links); modules by subject.

mod app;
mod fanout;
mod fixtures;
mod properties;
mod reference;
mod sweep;
