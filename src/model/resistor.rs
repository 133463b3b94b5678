//! Emitter resistor classes and the IEC 60063 preferred-number series.

/// An IEC 60063 series of preferred values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Series {
    E24,
    E48,
    E96,
    E192,
}

impl Series {
    pub fn as_str(self) -> &'static str {
        match self {
            Series::E24 => "E24",
            Series::E48 => "E48",
            Series::E96 => "E96",
            Series::E192 => "E192",
        }
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct ResistorClass {
    pub id: String,
    pub summary: String,
    pub series: Series,
    /// Tolerance as a fraction (0.01 = 1 %), read as +-3 sigma (MODEL.md).
    pub tolerance: f64,
    /// Temperature coefficient, per kelvin (100 ppm/K = 1e-4).
    pub tcr_per_k: f64,
    pub unit_cost: f64,
    pub provenance: String,
}
