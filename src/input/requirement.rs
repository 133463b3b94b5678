//! The requirement file: one current sink or source the user needs.
//!
//! Plausible ranges (outside is a located error with the bounds):
//!
//! | field | range |
//! |---|---|
//! | `supply` | 0.5 V to 1000 V |
//! | `input_current.min/max` | 1 pA to 1 A, both > 0, min <= max |
//! | `ratio` | 0.001 to 1000 (default 1) |
//! | `output_voltage.min/max` | 0 V to 1000 V, min <= max, max < `supply` |
//! | `ambient.min/max` | -60 °C to 200 °C, min <= max |
//! | `accuracy` | 0.001 % to 50 % |
//! | `confidence_sigma` | 0.5 to 10 (default 3) |
//! | `min_yield` | 0 % to 100 % |
//! | `min_output_resistance` | 1 Ω to 1 TΩ |
//! | `input_voltage_max` | 0.1 V to 1000 V |
//! | `min_vce` | 0 V to 10 V (default 0.3 V) |
//! | `max_cost` | 0 to 1e6 |
//! | `quantity` | 1 to 1000000 (default 1) |
//!
//! `allow`/`deny` name topologies (`simple`, `wilson`, ...) or catalog class ids; each
//! name is sorted into `Requirement::topologies` or `Requirement::classes`. With a
//! catalog at hand an unknown name is an error with a suggestion.

use serde_yaml::{Mapping, Value};

use super::raw::{RawKind, RawLoad, RawRange, RawRequirement};
use super::{deserialize, unknown_value, Ctx, InputError};
use crate::model::{
    Catalog, Filters, LoadKind, MirrorKind, Polarity, Range, Requirement, Topology, ALL_TOPOLOGIES,
    DEFAULT_MIN_VCE_V,
};
use crate::units::{Dimension as D, Field};

/// Every quantity field of a requirement with its plausible range.
pub const REQUIREMENT_FIELDS: [(&str, Field); 13] = [
    (
        "supply",
        Field::new("a supply voltage", D::Voltage, 0.5, 1000.0),
    ),
    (
        "input_current",
        Field::new("a programming current", D::Current, 1e-12, 1.0),
    ),
    ("ratio", Field::new("a mirror ratio", D::Number, 1e-3, 1e3)),
    (
        "output_voltage",
        Field::new("an output voltage", D::Voltage, 0.0, 1000.0),
    ),
    (
        "ambient",
        Field::new("an ambient temperature", D::Temperature, 213.15, 473.15),
    ),
    (
        "accuracy",
        Field::new("an accuracy", D::Fraction, 1e-5, 0.5),
    ),
    (
        "confidence_sigma",
        Field::new("a confidence factor", D::Number, 0.5, 10.0),
    ),
    ("min_yield", Field::new("a yield", D::Fraction, 0.0, 1.0)),
    (
        "min_output_resistance",
        Field::new("an output resistance", D::Resistance, 1.0, 1e12),
    ),
    (
        "input_voltage_max",
        Field::new("an input voltage", D::Voltage, 0.1, 1000.0),
    ),
    (
        "min_vce",
        Field::new("a minimum collector-emitter voltage", D::Voltage, 0.0, 10.0),
    ),
    ("max_cost", Field::new("a cost", D::Number, 0.0, 1e6)),
    ("quantity", Field::new("a quantity", D::Number, 1.0, 1e6)),
];

fn rf(name: &str) -> &'static Field {
    &REQUIREMENT_FIELDS
        .iter()
        .find(|(n, _)| *n == name)
        .expect("field table covers every requirement field")
        .1
}

/// Parse and validate a requirement. With `catalog`, names in `allow`/`deny` that are
/// neither a topology nor a class id are errors; without it they are taken as class ids.
pub fn load_requirement(
    file: &str,
    text: &str,
    catalog: Option<&Catalog>,
) -> Result<Requirement, InputError> {
    let raw: RawRequirement = deserialize(
        file,
        text,
        "a requirement with `name`, `kind`, `supply`, `input_current`, `output_voltage`, `ambient` and `accuracy`",
    )?;
    validate_requirement(&raw, &Ctx::new(file, text), catalog)
}

/// Validate a deserialised requirement; `cx` locates its values (in its own file, or
/// inside a design file for an inline requirement).
pub(super) fn validate_requirement(
    raw: &RawRequirement,
    cx: &Ctx,
    catalog: Option<&Catalog>,
) -> Result<Requirement, InputError> {
    let q = |f: &str, r| cx.qty(f, r, rf(f));
    let range = |f: &str, r: &RawRange| -> Result<Range, InputError> {
        let min = cx.qty(&format!("{f}.min"), &r.min, rf(f))?;
        let max = cx.qty(&format!("{f}.max"), &r.max, rf(f))?;
        if min > max {
            return Err(cx.invalid(
                &format!("{f}.min"),
                format!("min `{}` is above max `{}`", r.min.text(), r.max.text()),
                "min <= max",
            ));
        }
        Ok(Range { min, max })
    };

    let name = cx.non_empty("name", &raw.name)?;
    let supply_v = q("supply", &raw.supply)?;
    let input_current_a = range("input_current", &raw.input_current)?;
    if input_current_a.min <= 0.0 {
        return Err(cx.invalid(
            "input_current.min",
            "the input current is zero",
            "a current above zero, such as `1 uA`",
        ));
    }
    let output_voltage_v = range("output_voltage", &raw.output_voltage)?;
    if output_voltage_v.max >= supply_v {
        return Err(cx.invalid(
            "output_voltage.max",
            format!(
                "the output voltage `{}` reaches the supply `{}`",
                raw.output_voltage.max.text(),
                raw.supply.text()
            ),
            "output_voltage.max below the supply (both measured from the mirror rail)",
        ));
    }
    let ambient_k = range("ambient", &raw.ambient)?;
    let accuracy = q("accuracy", &raw.accuracy)?;
    let opt = |f: &str, r: &Option<_>| cx.opt_qty(f, r, rf(f));
    let ratio = opt("ratio", &raw.ratio)?.unwrap_or(1.0);
    let confidence_sigma = opt("confidence_sigma", &raw.confidence_sigma)?.unwrap_or(3.0);
    let min_yield = opt("min_yield", &raw.min_yield)?;
    let min_output_resistance_ohm = opt("min_output_resistance", &raw.min_output_resistance)?;
    let input_voltage_max_v = opt("input_voltage_max", &raw.input_voltage_max)?;
    if let Some(v) = input_voltage_max_v {
        if v > supply_v {
            return Err(cx.invalid(
                "input_voltage_max",
                "the input voltage limit is above the supply",
                "a limit at or below the supply",
            ));
        }
    }
    let min_vce_v = opt("min_vce", &raw.min_vce)?.unwrap_or(DEFAULT_MIN_VCE_V);
    let max_cost = opt("max_cost", &raw.max_cost)?;
    let quantity = raw.quantity.unwrap_or(1);
    if quantity == 0 {
        return Err(cx.invalid("quantity", "the quantity is 0", "1 or more mirrors"));
    }

    let mut topologies = Filters::default();
    let mut classes = Filters::default();
    let kind = match raw.kind {
        RawKind::Sink => MirrorKind::Sink,
        RawKind::Source => MirrorKind::Source,
    };
    for (key, names, is_allow) in [("allow", &raw.allow, true), ("deny", &raw.deny, false)] {
        for (i, n) in names.iter().enumerate() {
            let path = format!("{key}[{i}]");
            // Allowing only classes of the wrong polarity would leave nothing to try.
            if let Some(t) = catalog.and_then(|c| c.transistor(n)).filter(|_| is_allow) {
                if t.polarity != kind.polarity() {
                    return Err(cx.invalid(
                        &path,
                        format!(
                            "`{n}` is {} class, but a {} is built from {} transistors",
                            match t.polarity {
                                Polarity::Npn => "an NPN",
                                Polarity::Pnp => "a PNP",
                            },
                            kind.as_str(),
                            kind.polarity().as_str().to_uppercase()
                        ),
                        format!(
                            "{} classes in `allow` (or change `kind`)",
                            kind.polarity().as_str().to_uppercase()
                        ),
                    ));
                }
            }
            let (filters, name) = if Topology::from_name(n).is_some() {
                (&mut topologies, n.clone())
            } else if catalog.is_none_or(|c| c.transistor(n).is_some() || c.resistor(n).is_some()) {
                (&mut classes, n.clone())
            } else {
                let mut expected: Vec<String> = ALL_TOPOLOGIES
                    .iter()
                    .map(|t| t.name().to_string())
                    .collect();
                if let Some(c) = catalog {
                    expected.extend(c.transistors.iter().map(|t| t.id.clone()));
                    expected.extend(c.resistors.iter().map(|r| r.id.clone()));
                }
                return Err(cx.error(&path, unknown_value(&cx.full(&path), n, &expected)));
            };
            if is_allow {
                filters.allow.push(name);
            } else {
                filters.deny.push(name);
            }
        }
    }

    Ok(Requirement {
        name,
        kind,
        supply_v,
        input_current_a,
        ratio,
        output_voltage_v,
        ambient_k,
        accuracy,
        confidence_sigma,
        min_yield,
        min_output_resistance_ohm,
        input_voltage_max_v,
        min_vce_v,
        max_cost,
        quantity,
        load: match raw.load.unwrap_or(RawLoad::General) {
            RawLoad::General => LoadKind::General,
            RawLoad::Led => LoadKind::Led,
            RawLoad::Laser => LoadKind::Laser,
            RawLoad::Sensor => LoadKind::Sensor,
            RawLoad::Bias => LoadKind::Bias,
        },
        topologies,
        classes,
    })
}

/// Write a requirement back as YAML that [`load_requirement`] reads to an equal value.
pub fn requirement_to_yaml(r: &Requirement) -> String {
    let s = |v: &str| Value::String(v.to_string());
    let num = |v: f64| Value::Number(v.into());
    let mut m = Mapping::new();
    let mut put = |k: &str, v: Value| {
        m.insert(s(k), v);
    };
    let range = |r: &Range, kelvin: bool| {
        let mut mm = Mapping::new();
        let v = |x: f64| {
            if kelvin {
                s(&format!("{x:?} K"))
            } else {
                num(x)
            }
        };
        mm.insert(s("min"), v(r.min));
        mm.insert(s("max"), v(r.max));
        Value::Mapping(mm)
    };
    put("name", s(&r.name));
    put("kind", s(r.kind.as_str()));
    put("supply", num(r.supply_v));
    put("input_current", range(&r.input_current_a, false));
    put("ratio", num(r.ratio));
    put("output_voltage", range(&r.output_voltage_v, false));
    put("ambient", range(&r.ambient_k, true));
    put("accuracy", num(r.accuracy));
    put("confidence_sigma", num(r.confidence_sigma));
    put("min_vce", num(r.min_vce_v));
    for (k, v) in [
        ("min_yield", r.min_yield),
        ("min_output_resistance", r.min_output_resistance_ohm),
        ("input_voltage_max", r.input_voltage_max_v),
        ("max_cost", r.max_cost),
    ] {
        if let Some(v) = v {
            put(k, num(v));
        }
    }
    put("quantity", Value::Number(r.quantity.into()));
    put("load", s(r.load.as_str()));
    let names =
        |a: &[String], b: &[String]| Value::Sequence(a.iter().chain(b).map(|n| s(n)).collect());
    put("allow", names(&r.topologies.allow, &r.classes.allow));
    put("deny", names(&r.topologies.deny, &r.classes.deny));
    serde_yaml::to_string(&Value::Mapping(m)).unwrap_or_default()
}
