//! The requirement file: one current sink or source the user needs.
//!
//! Plausible ranges (outside is a located error with the bounds):
//!
//! | field | range |
//! |---|---|
//! | `supply` | 0.5 V to 1000 V |
//! | `input_current.min/max` | 1 pA to 1 A, both > 0, min <= max (absent with `program`) |
//! | `program.rail` (or `.min/.max`) | 0.1 V to 1000 V, at most `supply` |
//! | `program.output_current` | 1 pA to 1 A |
//! | `accuracy_of` | `ratio` or `output` (default `output` with `program`, else `ratio`) |
//! | `max_tempco` | 0.01 ppm/K to 100000 ppm/K |
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
//! | `max_noise` (or `max_noise.density`) | 1e-18 A/√Hz to 1e-6 A/√Hz |
//! | `max_noise.frequency`, `max_noise.band.min/max` | 1 mHz to 1 MHz, min < max |
//! | `quantity` | 1 to 1000000 (default 1) |
//! | `outputs` | 1 to 8 (default 1; `MAX_OUTPUTS`) |
//!
//! `allow`/`deny` name topologies (`simple`, `wilson`, ...) or catalog class ids; each
//! name is sorted into `Requirement::topologies` or `Requirement::classes`. With a
//! catalog at hand an unknown name is an error with a suggestion.

use serde_yaml::{Mapping, Value};

use super::raw::{
    RawAccuracyOf, RawKind, RawLoad, RawNoiseLimit, RawQtyOrRange, RawRange, RawRequirement,
};
use super::{deserialize, unknown_value, Ctx, InputError};
use crate::model::{
    AccuracyOf, Catalog, Filters, LoadKind, MirrorKind, NoiseBand, NoiseLimit, Polarity, Program,
    Range, Requirement, Topology, ALL_TOPOLOGIES, DEFAULT_MIN_VCE_V, MAX_OUTPUTS,
};
use crate::units::{Dimension as D, Field};

/// Largest `quantity` (the table above).
pub const MAX_QUANTITY: u32 = 1_000_000;

/// Every quantity field of a requirement with its plausible range.
pub const REQUIREMENT_FIELDS: [(&str, Field); 18] = [
    (
        "program.rail",
        Field::new("a rail voltage", D::Voltage, 0.1, 1000.0),
    ),
    (
        "program.output_current",
        Field::new("an output current", D::Current, 1e-12, 1.0),
    ),
    (
        "max_tempco",
        Field::new("a temperature coefficient", D::TempCoefficient, 1e-8, 0.1),
    ),
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
    (
        "max_noise",
        Field::new("a noise density", D::NoiseDensity, 1e-18, 1e-6),
    ),
    (
        "max_noise.frequency",
        Field::new("a noise frequency", D::Frequency, 1e-3, 1e6),
    ),
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
    let ratio = cx.opt_qty("ratio", &raw.ratio, rf("ratio"))?.unwrap_or(1.0);
    let (input_current_a, program) = match (&raw.input_current, &raw.program) {
        (Some(_), Some(_)) => {
            return Err(cx.invalid(
                "input_current",
                "both `input_current` and `program` are given",
                "one of them: a forced input current, or a programming resistor's rail and output current",
            ))
        }
        (None, None) => {
            return Err(cx.invalid(
                "name",
                "neither `input_current` nor `program` is given",
                "`input_current: {min, max}` or `program: {rail, output_current}`",
            ))
        }
        (Some(r), None) => (range("input_current", r)?, None),
        (None, Some(p)) => {
            let rail_v = match &p.rail {
                RawQtyOrRange::Qty(v) => {
                    let v = cx.qty("program.rail", v, rf("program.rail"))?;
                    Range { min: v, max: v }
                }
                RawQtyOrRange::Range(r) => range("program.rail", r)?,
            };
            if rail_v.max > supply_v {
                return Err(cx.invalid(
                    "program.rail",
                    "the programming rail is above the supply",
                    "a rail at or below the supply (both measured from the mirror rail)",
                ));
            }
            let out = q("program.output_current", &p.output_current)?;
            let i_in = out / ratio;
            (
                Range {
                    min: i_in,
                    max: i_in,
                },
                Some(Program {
                    rail_v,
                    output_current_a: out,
                }),
            )
        }
    };
    let accuracy_of = match raw.accuracy_of {
        Some(RawAccuracyOf::Ratio) => AccuracyOf::Ratio,
        Some(RawAccuracyOf::Output) => AccuracyOf::Output,
        None if program.is_some() => AccuracyOf::Output,
        None => AccuracyOf::Ratio,
    };
    if accuracy_of == AccuracyOf::Output && program.is_none() {
        return Err(cx.invalid(
            "accuracy_of",
            "`accuracy_of: output` needs a programming resistor",
            "`ratio` with a forced `input_current`, or a `program` section",
        ));
    }
    let max_tempco_per_k = cx.opt_qty("max_tempco", &raw.max_tempco, rf("max_tempco"))?;
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
    let max_noise = match &raw.max_noise {
        None => None,
        Some(RawNoiseLimit::Density(d)) => Some(NoiseLimit {
            density_a_per_rthz: cx.qty("max_noise", d, rf("max_noise"))?,
            band: NoiseBand::White,
        }),
        Some(RawNoiseLimit::Spec(spec)) => {
            let density_a_per_rthz = cx.qty("max_noise.density", &spec.density, rf("max_noise"))?;
            let f = rf("max_noise.frequency");
            let band = match (&spec.frequency, &spec.band) {
                (Some(_), Some(_)) => {
                    return Err(cx.invalid(
                        "max_noise.band",
                        "both a frequency and a band are given",
                        "either `frequency` or `band`",
                    ))
                }
                (Some(fr), None) => NoiseBand::At(cx.qty("max_noise.frequency", fr, f)?),
                (None, Some(b)) => {
                    let min = cx.qty("max_noise.band.min", &b.min, f)?;
                    let max = cx.qty("max_noise.band.max", &b.max, f)?;
                    if min >= max {
                        return Err(cx.invalid(
                            "max_noise.band.min",
                            format!("min `{}` is not below max `{}`", b.min.text(), b.max.text()),
                            "min < max",
                        ));
                    }
                    NoiseBand::Band(Range { min, max })
                }
                (None, None) => NoiseBand::White,
            };
            Some(NoiseLimit {
                density_a_per_rthz,
                band,
            })
        }
    };
    let quantity = raw.quantity.unwrap_or(1);
    if quantity == 0 || quantity > MAX_QUANTITY {
        return Err(cx.invalid(
            "quantity",
            format!("a quantity of {quantity}"),
            format!("1 to {MAX_QUANTITY} mirrors"),
        ));
    }

    let outputs = match raw.outputs {
        None => 1,
        Some(n) if (1..=i64::from(MAX_OUTPUTS)).contains(&n) => n as u8,
        Some(n) => {
            return Err(cx.invalid(
                "outputs",
                format!("{n} outputs"),
                format!("1 to {MAX_OUTPUTS} outputs on one input side"),
            ))
        }
    };

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
        program,
        accuracy_of,
        max_tempco_per_k,
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
        max_noise,
        quantity,
        outputs,
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
    match &r.program {
        Some(p) => {
            let mut pm = Mapping::new();
            pm.insert(s("rail"), range(&p.rail_v, false));
            pm.insert(s("output_current"), num(p.output_current_a));
            put("program", Value::Mapping(pm));
        }
        None => put("input_current", range(&r.input_current_a, false)),
    }
    put("accuracy_of", s(r.accuracy_of.as_str()));
    if let Some(t) = r.max_tempco_per_k {
        put("max_tempco", num(t));
    }
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
    if let Some(n) = &r.max_noise {
        let mut mm = Mapping::new();
        mm.insert(
            s("density"),
            s(&format!("{:?} A/rtHz", n.density_a_per_rthz)),
        );
        match n.band {
            NoiseBand::White => {}
            NoiseBand::At(f) => {
                mm.insert(s("frequency"), s(&format!("{f:?} Hz")));
            }
            NoiseBand::Band(b) => {
                let mut bm = Mapping::new();
                bm.insert(s("min"), s(&format!("{:?} Hz", b.min)));
                bm.insert(s("max"), s(&format!("{:?} Hz", b.max)));
                mm.insert(s("band"), Value::Mapping(bm));
            }
        }
        put("max_noise", Value::Mapping(mm));
    }
    put("quantity", Value::Number(r.quantity.into()));
    if r.outputs != 1 {
        put("outputs", Value::Number(r.outputs.into()));
    }
    put("load", s(r.load.as_str()));
    let names =
        |a: &[String], b: &[String]| Value::Sequence(a.iter().chain(b).map(|n| s(n)).collect());
    put("allow", names(&r.topologies.allow, &r.classes.allow));
    put("deny", names(&r.topologies.deny, &r.classes.deny));
    serde_yaml::to_string(&Value::Mapping(m)).unwrap_or_default()
}
