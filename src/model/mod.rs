//! Plain, validated data the whole engine works on: part classes, resistor classes, the
//! catalog, a requirement and the topology descriptions.
//!
//! Everything here is in SI base units (V, A, ohm, W, K, K/W, fractions rather than
//! percent). Types here are produced by `input/` (which owns parsing, units and located
//! errors) or built directly by tests; this module must not parse files or print.

mod catalog;
mod design;
pub mod fanout;
mod requirement;
mod resistor;
mod topology;
mod transistor;

pub use catalog::Catalog;
pub use design::{BoardDesign, DesignChannel, MAX_COPIES};
pub use fanout::{Area, Form, FormError, Shape, MAX_OUTPUTS, MAX_PARALLEL};
pub use requirement::{
    AccuracyOf, Filters, LoadKind, MirrorKind, NoiseBand, NoiseLimit, Program, Range, Requirement,
    DEFAULT_MIN_VCE_V,
};
pub use resistor::{
    derated_power, ResistorClass, Series, DEFAULT_MAX_OHM, DEFAULT_MIN_OHM, DEFAULT_POWER_RATING_W,
    LEAKAGE_CAUTION_OHM,
};
pub use topology::{
    Branch, EstimateInputs, Estimates, Role, Topology, TopologyDesc, TransistorLine, ALL_TOPOLOGIES,
};
pub use transistor::{BjtParams, Matching, Polarity, Ratings, Thermal, TransistorClass};

/// 0 °C in kelvin (exact by the definition of the Celsius scale).
pub const ZERO_CELSIUS_K: f64 = 273.15;
