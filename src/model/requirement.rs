//! One current source or sink the user needs, validated and in SI units.

use super::Polarity;

/// Default `min_vce`: small-signal BJTs saturate at 0.1–0.3 V and the model has no
/// collector resistance (common practice, no source; MODEL.md).
pub const DEFAULT_MIN_VCE_V: f64 = 0.3;

/// A closed interval `[min, max]` with `min <= max`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Range {
    pub min: f64,
    pub max: f64,
}

/// Sink (NPN, mirror rail negative) or source (PNP, mirror rail positive).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum MirrorKind {
    Sink,
    Source,
}

impl MirrorKind {
    pub fn polarity(self) -> Polarity {
        match self {
            MirrorKind::Sink => Polarity::Npn,
            MirrorKind::Source => Polarity::Pnp,
        }
    }
    pub fn as_str(self) -> &'static str {
        match self {
            MirrorKind::Sink => "sink",
            MirrorKind::Source => "source",
        }
    }
}

/// What the mirror's output drives; it selects the cautions shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum LoadKind {
    #[default]
    General,
    Led,
    Laser,
    Sensor,
    Bias,
}

impl LoadKind {
    pub fn as_str(self) -> &'static str {
        match self {
            LoadKind::General => "general",
            LoadKind::Led => "led",
            LoadKind::Laser => "laser",
            LoadKind::Sensor => "sensor",
            LoadKind::Bias => "bias",
        }
    }
}

/// Allow/deny lists of topology names and class ids. Empty `allow` means "all".
#[derive(Debug, Clone, Default, PartialEq)]
pub struct Filters {
    pub allow: Vec<String>,
    pub deny: Vec<String>,
}

impl Filters {
    pub fn permits(&self, name: &str) -> bool {
        (self.allow.is_empty() || self.allow.iter().any(|a| a == name))
            && !self.deny.iter().any(|d| d == name)
    }
}

/// What `accuracy` limits: the ratio `I_out / (n I_in)` (a forced input current) or the
/// absolute output current against the wanted one (a programming resistor).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default)]
pub enum AccuracyOf {
    #[default]
    Ratio,
    Output,
}

impl AccuracyOf {
    pub fn as_str(self) -> &'static str {
        match self {
            AccuracyOf::Ratio => "ratio",
            AccuracyOf::Output => "output",
        }
    }
}

/// A programming resistor R_ref from a rail to the mirror's input node: the input current
/// is `(V_rail - V_in) / R_ref`, solved with the circuit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Program {
    /// The rail R_ref hangs from, volts from the mirror rail (a range: its tolerance).
    pub rail_v: Range,
    /// The wanted output current, amperes.
    pub output_current_a: f64,
}

impl Program {
    /// The nominal rail: the middle of its range.
    pub fn rail_nominal_v(&self) -> f64 {
        0.5 * (self.rail_v.min + self.rail_v.max)
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct Requirement {
    pub name: String,
    pub kind: MirrorKind,
    /// Magnitude of the voltage from the mirror rail to the opposite rail.
    pub supply_v: f64,
    /// The forced input current range; with `program` the nominal input current
    /// `output_current / ratio` (min = max), used for sizing only.
    pub input_current_a: Range,
    /// The programming resistor's rail and the wanted output current, when the mirror is
    /// set by a resistor instead of a forced current.
    pub program: Option<Program>,
    /// What `accuracy` limits (default: `output` with `program`, `ratio` without).
    pub accuracy_of: AccuracyOf,
    /// Largest allowed |output temperature coefficient|, per kelvin.
    pub max_tempco_per_k: Option<f64>,
    /// Intended I_out / I_in (1 unless stated).
    pub ratio: f64,
    /// Output voltage magnitude measured from the mirror rail.
    pub output_voltage_v: Range,
    pub ambient_k: Range,
    /// Largest allowed |error| as a fraction (0.01 = 1 %).
    pub accuracy: f64,
    /// k in `systematic + k * random <= accuracy` (default 3).
    pub confidence_sigma: f64,
    pub min_yield: Option<f64>,
    pub min_output_resistance_ohm: Option<f64>,
    pub input_voltage_max_v: Option<f64>,
    /// The smallest V_CE every transistor must keep at the compliance corners
    /// (MODEL.md "compliance voltage"; default [`DEFAULT_MIN_VCE_V`]).
    pub min_vce_v: f64,
    pub max_cost: Option<f64>,
    /// Largest output current noise (`max_noise`), when set.
    pub max_noise: Option<NoiseLimit>,
    /// How many identical mirrors are built (default 1).
    pub quantity: u32,
    /// Outputs fed by one input side of each mirror, each at `ratio` (default 1).
    pub outputs: u8,
    pub load: LoadKind,
    pub topologies: Filters,
    pub classes: Filters,
}

/// Where a noise limit applies.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum NoiseBand {
    /// The white density (shot and thermal noise; flicker excluded).
    White,
    /// The density at one frequency, hertz (white plus flicker).
    At(f64),
    /// The RMS noise over a band divided by the square root of its width, hertz: the
    /// band's average density.
    Band(Range),
}

/// The `max_noise` requirement: an output current noise density, A/√Hz.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NoiseLimit {
    pub density_a_per_rthz: f64,
    pub band: NoiseBand,
}
