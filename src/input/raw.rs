//! Raw serde mirrors of the file formats: exactly what the user wrote, before units and
//! ranges are checked. Private to `input`; nothing outside sees these types.

use std::fmt;

use serde::de::{self, Deserializer, Visitor};
use serde::Deserialize;

/// A quantity as written: a YAML number or a string with a unit (`20 fA`, `4k7`).
#[derive(Debug, Clone, PartialEq)]
pub enum RawQty {
    Number(f64),
    Text(String),
}

impl RawQty {
    /// The text the user wrote, for messages.
    pub fn text(&self) -> String {
        match self {
            RawQty::Number(v) => format!("{v}"),
            RawQty::Text(t) => t.clone(),
        }
    }
}

impl<'de> Deserialize<'de> for RawQty {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl Visitor<'_> for V {
            type Value = RawQty;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str("a number or a quantity with its unit, such as `150` or `100 V`")
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<RawQty, E> {
                Ok(RawQty::Number(v))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<RawQty, E> {
                Ok(RawQty::Number(v as f64))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<RawQty, E> {
                Ok(RawQty::Number(v as f64))
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<RawQty, E> {
                Ok(RawQty::Text(v.to_string()))
            }
        }
        d.deserialize_any(V)
    }
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a catalog: a mapping with `currency`, `reference_quantity`, `transistor_classes` and `resistor_classes`"
)]
pub struct RawCatalog {
    pub currency: String,
    pub reference_quantity: u32,
    pub transistor_classes: Vec<RawTransistor>,
    pub resistor_classes: Vec<RawResistor>,
}

/// An enumeration read whatever its case (`npn`, `NPN`, `Npn`): listings print some
/// names in capitals, and a user copying them must not be refused. An unknown name gives
/// serde's own "unknown variant ..., expected one of ..." error, which the input module
/// turns into a located message with a did-you-mean.
macro_rules! any_case_enum {
    ($name:ident { $($variant:ident => $lower:literal | $cap:literal | $upper:literal),+ $(,)? }) => {
        // Derived, so serde keeps the value's position and YAML path in its errors; the
        // capitalised and upper-case spellings are aliases.
        #[derive(Debug, Clone, Copy, Deserialize)]
        pub enum $name {
            $(#[serde(rename = $lower, alias = $cap, alias = $upper)] $variant),+
        }
    };
}

any_case_enum!(RawPolarity { Npn => "npn" | "Npn" | "NPN", Pnp => "pnp" | "Pnp" | "PNP" });

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a transistor class: a mapping with `id`, `summary`, `polarity`, `model`, ..."
)]
pub struct RawTransistor {
    pub id: String,
    pub summary: String,
    pub polarity: RawPolarity,
    pub devices_per_package: u32,
    pub package: String,
    pub model: RawModel,
    #[serde(default)]
    pub matching: Option<RawMatching>,
    pub ratings: RawRatings,
    pub thermal: RawThermal,
    pub unit_cost: RawQty,
    pub provenance: String,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "model parameters: a mapping such as `{is: 12 fA, bf: 200, vaf: 90 V}`"
)]
pub struct RawModel {
    pub is: RawQty,
    pub bf: RawQty,
    #[serde(default)]
    pub br: Option<RawQty>,
    #[serde(default)]
    pub vaf: Option<RawQty>,
    #[serde(default)]
    pub ikf: Option<RawQty>,
    #[serde(default)]
    pub xti: Option<RawQty>,
    #[serde(default)]
    pub eg: Option<RawQty>,
    #[serde(default)]
    pub xtb: Option<RawQty>,
    #[serde(default)]
    pub tnom: Option<RawQty>,
    #[serde(default)]
    pub kf: Option<RawQty>,
    #[serde(default)]
    pub af: Option<RawQty>,
    #[serde(default)]
    pub rb: Option<RawQty>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping `{vbe_offset_sigma: ..., beta_mismatch_sigma: ...}`"
)]
pub struct RawMatching {
    pub vbe_offset_sigma: RawQty,
    pub beta_mismatch_sigma: RawQty,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping `{vceo: ..., ic_max: ..., power_per_package: ...}`"
)]
pub struct RawRatings {
    pub vceo: RawQty,
    pub ic_max: RawQty,
    pub power_per_package: RawQty,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a mapping `{theta_self: ..., theta_mutual: ...}`"
)]
pub struct RawThermal {
    pub theta_self: RawQty,
    pub theta_mutual: RawQty,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a resistor class: a mapping with `id`, `summary`, `series`, `tolerance`, ..."
)]
pub struct RawResistor {
    pub id: String,
    pub summary: String,
    pub series: String,
    pub tolerance: RawQty,
    pub tcr: RawQty,
    pub unit_cost: RawQty,
    #[serde(default)]
    pub power_rating: Option<RawQty>,
    pub provenance: String,
    /// Smallest value made in this class (default 1 Ω).
    pub min_value: Option<RawQty>,
    /// Largest value made in this class (default 10 MΩ).
    pub max_value: Option<RawQty>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a range: a mapping `{min: ..., max: ...}`"
)]
pub struct RawRange {
    pub min: RawQty,
    pub max: RawQty,
}

/// A quantity or a `{min, max}` range (a rail voltage with its tolerance).
#[derive(Debug, Deserialize)]
#[serde(
    untagged,
    expecting = "a voltage such as `12 V`, or a range `{min: 11.4 V, max: 12.6 V}`"
)]
pub enum RawQtyOrRange {
    Range(RawRange),
    Qty(RawQty),
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a programming section: a mapping `{rail: ..., output_current: ...}`"
)]
pub struct RawProgram {
    pub rail: RawQtyOrRange,
    pub output_current: RawQty,
}

any_case_enum!(RawAccuracyOf { Ratio => "ratio" | "Ratio" | "RATIO", Output => "output" | "Output" | "OUTPUT" });

any_case_enum!(RawKind { Sink => "sink" | "Sink" | "SINK", Source => "source" | "Source" | "SOURCE" });

any_case_enum!(RawLoad {
    General => "general" | "General" | "GENERAL",
    Led => "led" | "Led" | "LED",
    Laser => "laser" | "Laser" | "LASER",
    Sensor => "sensor" | "Sensor" | "SENSOR",
    Bias => "bias" | "Bias" | "BIAS",
});

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a requirement: a mapping with `name`, `kind`, `supply`, `input_current`, `output_voltage`, `ambient` and `accuracy`"
)]
pub struct RawRequirement {
    pub name: String,
    pub kind: RawKind,
    pub supply: RawQty,
    #[serde(default)]
    pub input_current: Option<RawRange>,
    #[serde(default)]
    pub program: Option<RawProgram>,
    #[serde(default)]
    pub accuracy_of: Option<RawAccuracyOf>,
    #[serde(default)]
    pub max_tempco: Option<RawQty>,
    #[serde(default)]
    pub ratio: Option<RawQty>,
    pub output_voltage: RawRange,
    pub ambient: RawRange,
    pub accuracy: RawQty,
    #[serde(default)]
    pub confidence_sigma: Option<RawQty>,
    #[serde(default)]
    pub min_yield: Option<RawQty>,
    #[serde(default)]
    pub min_output_resistance: Option<RawQty>,
    #[serde(default)]
    pub input_voltage_max: Option<RawQty>,
    #[serde(default)]
    pub min_vce: Option<RawQty>,
    #[serde(default)]
    pub max_cost: Option<RawQty>,
    #[serde(default)]
    pub max_noise: Option<RawNoiseLimit>,
    #[serde(default)]
    pub quantity: Option<u32>,
    #[serde(default)]
    pub outputs: Option<i64>,
    #[serde(default)]
    pub load: Option<RawLoad>,
    #[serde(default)]
    pub allow: Vec<String>,
    #[serde(default)]
    pub deny: Vec<String>,
}

/// `max_noise`: a density alone (the white density), or a mapping with the density and
/// a `frequency` or a `band`.
#[derive(Debug)]
pub enum RawNoiseLimit {
    Density(RawQty),
    Spec(RawNoiseSpec),
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a noise limit: `{density: 10 pA/rtHz}`, with `frequency: 10 Hz` or `band: {min: 0.1 Hz, max: 10 Hz}`"
)]
pub struct RawNoiseSpec {
    pub density: RawQty,
    #[serde(default)]
    pub frequency: Option<RawQty>,
    #[serde(default)]
    pub band: Option<RawRange>,
}

impl<'de> Deserialize<'de> for RawNoiseLimit {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = RawNoiseLimit;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str(
                    "a noise density such as `10 pA/rtHz`, or a mapping `{density: 10 pA/rtHz, frequency: 10 Hz}`",
                )
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<Self::Value, E> {
                Ok(RawNoiseLimit::Density(RawQty::Text(v.to_string())))
            }
            fn visit_f64<E: de::Error>(self, v: f64) -> Result<Self::Value, E> {
                Ok(RawNoiseLimit::Density(RawQty::Number(v)))
            }
            fn visit_i64<E: de::Error>(self, v: i64) -> Result<Self::Value, E> {
                Ok(RawNoiseLimit::Density(RawQty::Number(v as f64)))
            }
            fn visit_u64<E: de::Error>(self, v: u64) -> Result<Self::Value, E> {
                Ok(RawNoiseLimit::Density(RawQty::Number(v as f64)))
            }
            // In place (not through a `Value`) so errors keep serde_yaml's positions.
            fn visit_map<A: de::MapAccess<'de>>(self, map: A) -> Result<Self::Value, A::Error> {
                RawNoiseSpec::deserialize(de::value::MapAccessDeserializer::new(map))
                    .map(RawNoiseLimit::Spec)
            }
        }
        d.deserialize_any(V)
    }
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a board design: a mapping with `name`, `boards` and `channels`"
)]
pub struct RawDesign {
    pub name: String,
    pub boards: u32,
    pub channels: Vec<RawChannel>,
    #[serde(default)]
    pub max_line_items: Option<u32>,
    #[serde(default)]
    pub line_item_cost: Option<RawQty>,
    #[serde(default)]
    pub allow: Vec<String>,
    #[serde(default)]
    pub deny: Vec<String>,
    #[serde(default)]
    pub catalog: Option<String>,
}

#[derive(Debug, Deserialize)]
#[serde(
    deny_unknown_fields,
    expecting = "a channel: a mapping with `name`, `count` and `requirement`"
)]
pub struct RawChannel {
    pub name: String,
    #[serde(default)]
    pub count: Option<u32>,
    pub requirement: RawRequirementSource,
}

/// A channel's requirement: a path to a requirement file, or the requirement inline.
#[derive(Debug)]
pub enum RawRequirementSource {
    Path(String),
    Inline(Box<RawRequirement>),
}

impl<'de> Deserialize<'de> for RawRequirementSource {
    fn deserialize<D: Deserializer<'de>>(d: D) -> Result<Self, D::Error> {
        struct V;
        impl<'de> Visitor<'de> for V {
            type Value = RawRequirementSource;
            fn expecting(&self, f: &mut fmt::Formatter) -> fmt::Result {
                f.write_str(
                    "a path to a requirement file (relative to the design file) or a requirement mapping",
                )
            }
            fn visit_str<E: de::Error>(self, v: &str) -> Result<Self::Value, E> {
                Ok(RawRequirementSource::Path(v.to_string()))
            }
            // Deserialising the mapping in place (not through a `Value`) keeps serde_yaml's
            // positions, so errors inside an inline requirement point into the design file.
            fn visit_map<A: de::MapAccess<'de>>(self, map: A) -> Result<Self::Value, A::Error> {
                RawRequirement::deserialize(de::value::MapAccessDeserializer::new(map))
                    .map(|r| RawRequirementSource::Inline(Box::new(r)))
            }
        }
        d.deserialize_any(V)
    }
}
