//! The catalog file: transistor and resistor classes with prices. Also the embedded
//! default catalog and a writer back to YAML (used for round trips).
//!
//! Plausible ranges (a value outside is an error naming the field and the bounds); they
//! are wide enough for any real small-signal or power bipolar part and narrow enough to
//! catch a wrong prefix:
//!
//! | field | range |
//! |---|---|
//! | `model.is` | 1e-18 A to 1e-9 A |
//! | `model.bf` | 5 to 5000 |
//! | `model.br` | 0.01 to 500 (default 1) |
//! | `model.vaf` | 1 V to 1000 V (absent: no Early effect) |
//! | `model.ikf` | 100 µA to 100 A |
//! | `model.xti` | 0 to 10 (default 3) |
//! | `model.eg` | 0.5 eV to 2.5 eV (default 1.11 eV) |
//! | `model.xtb` | -2 to 5 (default 1.5) |
//! | `model.tnom` | -60 °C to 200 °C (default 27 °C) |
//! | `matching.vbe_offset_sigma` | 0 to 50 mV |
//! | `matching.beta_mismatch_sigma` | 0 to 50 % |
//! | `ratings.vceo` | 1 V to 2000 V |
//! | `ratings.ic_max` | 100 µA to 50 A |
//! | `ratings.power_per_package` | 1 mW to 200 W |
//! | `thermal.theta_self` | 1 K/W to 2000 K/W |
//! | `thermal.theta_mutual` | 0 to 2000 K/W, and at most `theta_self` |
//! | `devices_per_package` | 1 to 16 |
//! | `unit_cost` | 0 to 10000 |
//! | resistor `tolerance` | 0.001 % to 20 % |
//! | resistor `tcr` | 0 to 5000 ppm/K |
//! | resistor `min_value`, `max_value` | 1 mΩ to 1 TΩ (defaults 1 Ω and 10 MΩ: the range general-purpose film chips are made in, common practice, no source); `max_value` above `min_value` |

use std::collections::HashMap;

use serde_yaml::{Mapping, Value};

use super::raw::{RawCatalog, RawPolarity, RawQty};
use super::{deserialize, unknown_value, Ctx, InputError, Problem};
use crate::model::{
    BjtParams, Catalog, Matching, Polarity, Ratings, ResistorClass, Series, Thermal,
    TransistorClass, DEFAULT_MAX_OHM, DEFAULT_MIN_OHM,
};
use crate::units::{format_quantity, Dimension as D, Field};

/// The catalog shipped inside the binary, used when `--catalog` is not given.
pub const DEFAULT_CATALOG_YAML: &str = include_str!("../../catalog/default.yaml");
/// The name messages use for the embedded catalog.
pub const DEFAULT_CATALOG_NAME: &str = "catalog/default.yaml (built in)";

/// Every field of a transistor class with its plausible range, in file order.
pub const TRANSISTOR_FIELDS: [(&str, Field); 16] = [
    ("model.is", Field::new("IS", D::Current, 1e-18, 1e-9)),
    ("model.bf", Field::new("BF", D::Number, 5.0, 5000.0)),
    ("model.br", Field::new("BR", D::Number, 0.01, 500.0)),
    ("model.vaf", Field::new("VAF", D::Voltage, 1.0, 1000.0)),
    ("model.ikf", Field::new("IKF", D::Current, 1e-4, 100.0)),
    ("model.xti", Field::new("XTI", D::Number, 0.0, 10.0)),
    ("model.eg", Field::new("EG", D::Energy, 0.5, 2.5)),
    ("model.xtb", Field::new("XTB", D::Number, -2.0, 5.0)),
    (
        "model.tnom",
        Field::new("TNOM", D::Temperature, 213.15, 473.15),
    ),
    (
        "matching.vbe_offset_sigma",
        Field::new("a V_BE offset sigma", D::Voltage, 0.0, 0.05),
    ),
    (
        "matching.beta_mismatch_sigma",
        Field::new("a beta mismatch sigma", D::Fraction, 0.0, 0.5),
    ),
    ("ratings.vceo", Field::new("VCEO", D::Voltage, 1.0, 2000.0)),
    (
        "ratings.ic_max",
        Field::new("IC max", D::Current, 1e-4, 50.0),
    ),
    (
        "ratings.power_per_package",
        Field::new("a package power rating", D::Power, 1e-3, 200.0),
    ),
    (
        "thermal.theta_self",
        Field::new("a thermal resistance", D::ThermalResistance, 1.0, 2000.0),
    ),
    (
        "thermal.theta_mutual",
        Field::new("a thermal resistance", D::ThermalResistance, 0.0, 2000.0),
    ),
];

fn tf(name: &str) -> &'static Field {
    &TRANSISTOR_FIELDS
        .iter()
        .find(|(n, _)| *n == name)
        .expect("field table covers every transistor field")
        .1
}

const COST: Field = Field::new("a unit cost", D::Number, 0.0, 1e4);
const TOLERANCE: Field = Field::new("a resistor tolerance", D::Fraction, 1e-5, 0.2);
const RESISTOR_VALUE: Field = Field::new("a resistor value", D::Resistance, 1e-3, 1e12);
const TCR: Field = Field::new("a resistor TCR", D::TempCoefficient, 0.0, 5e-3);

/// Load the embedded default catalog.
pub fn load_default_catalog() -> Result<Catalog, InputError> {
    load_catalog(DEFAULT_CATALOG_NAME, DEFAULT_CATALOG_YAML)
}

/// Parse and validate a catalog. `file` is the name used in messages.
pub fn load_catalog(file: &str, text: &str) -> Result<Catalog, InputError> {
    let raw: RawCatalog = deserialize(
        file,
        text,
        "a catalog with `transistor_classes` and `resistor_classes`",
    )?;
    let cx = Ctx::new(file, text);
    let currency = cx.non_empty("currency", &raw.currency)?;
    if raw.reference_quantity == 0 {
        return Err(cx.invalid(
            "reference_quantity",
            "the reference quantity is 0",
            "the order quantity the prices are quoted at, 1 or more",
        ));
    }
    // Ids share one namespace: requirement allow/deny lists name either kind.
    let mut seen: HashMap<String, String> = HashMap::new();
    let mut check_id = |cx: &Ctx, path: String, id: &str| -> Result<String, InputError> {
        let ok = !id.is_empty()
            && id
                .chars()
                .all(|c| c.is_ascii_lowercase() || c.is_ascii_digit() || c == '-');
        if !ok {
            return Err(cx.invalid(
                &path,
                format!("`{}` is not a valid class id", crate::text::shown(id)),
                "lowercase letters, digits and dashes, such as `npn-dual-general`",
            ));
        }
        let chars = id.chars().count();
        if chars > super::MAX_NAME_CHARS {
            return Err(cx.invalid(
                &path,
                format!(
                    "a class id of {chars} characters (`{}`)",
                    crate::text::shown(id)
                ),
                format!("an id of at most {} characters", super::MAX_NAME_CHARS),
            ));
        }
        if let Some(first) = seen.get(id) {
            return Err(cx.error(
                &path,
                Problem::DuplicateId {
                    id: id.to_string(),
                    first_line: cx.positions.get(first).line,
                },
            ));
        }
        seen.insert(id.to_string(), path);
        Ok(id.to_string())
    };

    let mut transistors = Vec::with_capacity(raw.transistor_classes.len());
    for (i, t) in raw.transistor_classes.iter().enumerate() {
        let p = |f: &str| format!("transistor_classes[{i}].{f}");
        let q = |f: &str, r: &RawQty| cx.qty(&p(f), r, tf(f));
        let oq = |f: &str, r: &Option<RawQty>| cx.opt_qty(&p(f), r, tf(f));
        let id = check_id(&cx, p("id"), &t.id)?;
        if !(1..=16).contains(&t.devices_per_package) {
            return Err(cx.invalid(
                &p("devices_per_package"),
                format!("{} devices in one package", t.devices_per_package),
                "1 to 16",
            ));
        }
        let m = &t.model;
        let model = BjtParams {
            saturation_current_a: q("model.is", &m.is)?,
            beta_forward: q("model.bf", &m.bf)?,
            beta_reverse: oq("model.br", &m.br)?.unwrap_or(1.0),
            early_voltage_v: oq("model.vaf", &m.vaf)?,
            knee_current_a: oq("model.ikf", &m.ikf)?,
            xti: oq("model.xti", &m.xti)?.unwrap_or(3.0),
            eg_ev: oq("model.eg", &m.eg)?.unwrap_or(1.11),
            xtb: oq("model.xtb", &m.xtb)?.unwrap_or(1.5),
            t_nom_k: oq("model.tnom", &m.tnom)?.unwrap_or(300.15),
        };
        let matching = match (&t.matching, t.devices_per_package) {
            (Some(mm), n) if n > 1 => Some(Matching {
                vbe_offset_sigma_v: q("matching.vbe_offset_sigma", &mm.vbe_offset_sigma)?,
                beta_mismatch_sigma: q("matching.beta_mismatch_sigma", &mm.beta_mismatch_sigma)?,
            }),
            (None, n) if n > 1 => {
                return Err(cx.invalid(
                    &p("devices_per_package"),
                    format!("a {n}-device package has no `matching` section"),
                    "`matching: {vbe_offset_sigma: ..., beta_mismatch_sigma: ...}` for every class with 2 or more devices",
                ))
            }
            (Some(_), _) => {
                return Err(cx.invalid(
                    &p("matching"),
                    "a single-device class has a `matching` section",
                    "`matching` only when `devices_per_package` is 2 or more",
                ))
            }
            (None, _) => None,
        };
        let ratings = Ratings {
            vceo_v: q("ratings.vceo", &t.ratings.vceo)?,
            ic_max_a: q("ratings.ic_max", &t.ratings.ic_max)?,
            power_per_package_w: q("ratings.power_per_package", &t.ratings.power_per_package)?,
        };
        let thermal = Thermal {
            theta_self_k_per_w: q("thermal.theta_self", &t.thermal.theta_self)?,
            theta_mutual_k_per_w: q("thermal.theta_mutual", &t.thermal.theta_mutual)?,
        };
        if thermal.theta_mutual_k_per_w > thermal.theta_self_k_per_w {
            return Err(cx.invalid(
                &p("thermal.theta_mutual"),
                "the mutual thermal resistance exceeds the self-heating one",
                "`theta_mutual` <= `theta_self` (a die heats itself most)",
            ));
        }
        transistors.push(TransistorClass {
            id,
            summary: cx.non_empty(&p("summary"), &t.summary)?,
            polarity: match t.polarity {
                RawPolarity::Npn => Polarity::Npn,
                RawPolarity::Pnp => Polarity::Pnp,
            },
            devices_per_package: t.devices_per_package,
            package: cx.non_empty(&p("package"), &t.package)?,
            model,
            matching,
            ratings,
            thermal,
            unit_cost: cx.qty(&p("unit_cost"), &t.unit_cost, &COST)?,
            provenance: cx.non_empty(&p("provenance"), &t.provenance)?,
        });
    }

    let mut resistors = Vec::with_capacity(raw.resistor_classes.len());
    for (i, r) in raw.resistor_classes.iter().enumerate() {
        let p = |f: &str| format!("resistor_classes[{i}].{f}");
        let id = check_id(&cx, p("id"), &r.id)?;
        let series = Series::from_name(&r.series).ok_or_else(|| {
            let names: Vec<String> = Series::ALL.iter().map(|s| s.as_str().to_string()).collect();
            cx.error(&p("series"), unknown_value(&p("series"), &r.series, &names))
        })?;
        let min_ohm = cx
            .opt_qty(&p("min_value"), &r.min_value, &RESISTOR_VALUE)?
            .unwrap_or(DEFAULT_MIN_OHM);
        let max_ohm = cx
            .opt_qty(&p("max_value"), &r.max_value, &RESISTOR_VALUE)?
            .unwrap_or(DEFAULT_MAX_OHM);
        if min_ohm >= max_ohm {
            return Err(cx.invalid(
                &p("max_value"),
                format!(
                    "the value range {} to {} is empty",
                    format_quantity(min_ohm, crate::units::Dimension::Resistance),
                    format_quantity(max_ohm, crate::units::Dimension::Resistance)
                ),
                "`max_value` above `min_value` (defaults 1 Ω and 10 MΩ)",
            ));
        }
        resistors.push(ResistorClass {
            min_ohm,
            max_ohm,
            id,
            summary: cx.non_empty(&p("summary"), &r.summary)?,
            series,
            tolerance: cx.qty(&p("tolerance"), &r.tolerance, &TOLERANCE)?,
            tcr_per_k: cx.qty(&p("tcr"), &r.tcr, &TCR)?,
            unit_cost: cx.qty(&p("unit_cost"), &r.unit_cost, &COST)?,
            provenance: cx.non_empty(&p("provenance"), &r.provenance)?,
        });
    }
    if transistors.is_empty() {
        return Err(cx.invalid(
            "transistor_classes",
            "the list is empty",
            "at least one transistor class",
        ));
    }
    Ok(Catalog {
        currency,
        reference_quantity: raw.reference_quantity,
        transistors,
        resistors,
    })
}

fn s(v: &str) -> Value {
    Value::String(v.to_string())
}

fn num(v: f64) -> Value {
    Value::Number(v.into())
}

/// A temperature written so it reads back exactly (kelvin, shortest exact form).
fn kelvin(v: f64) -> Value {
    Value::String(format!("{v:?} K"))
}

fn map(entries: Vec<(&str, Value)>) -> Value {
    let mut m = Mapping::new();
    for (k, v) in entries {
        m.insert(s(k), v);
    }
    Value::Mapping(m)
}

/// Write a catalog back as YAML that [`load_catalog`] reads to an equal value. Numbers
/// are bare SI (exact), temperatures in kelvin.
pub fn catalog_to_yaml(c: &Catalog) -> String {
    let transistors = c
        .transistors
        .iter()
        .map(|t| {
            let m = &t.model;
            let mut model = vec![
                ("is", num(m.saturation_current_a)),
                ("bf", num(m.beta_forward)),
                ("br", num(m.beta_reverse)),
            ];
            if let Some(v) = m.early_voltage_v {
                model.push(("vaf", num(v)));
            }
            if let Some(v) = m.knee_current_a {
                model.push(("ikf", num(v)));
            }
            model.extend([
                ("xti", num(m.xti)),
                ("eg", num(m.eg_ev)),
                ("xtb", num(m.xtb)),
                ("tnom", kelvin(m.t_nom_k)),
            ]);
            let mut e = vec![
                ("id", s(&t.id)),
                ("summary", s(&t.summary)),
                ("polarity", s(t.polarity.as_str())),
                (
                    "devices_per_package",
                    Value::Number(t.devices_per_package.into()),
                ),
                ("package", s(&t.package)),
                ("model", map(model)),
            ];
            if let Some(mm) = t.matching {
                e.push((
                    "matching",
                    map(vec![
                        ("vbe_offset_sigma", num(mm.vbe_offset_sigma_v)),
                        ("beta_mismatch_sigma", num(mm.beta_mismatch_sigma)),
                    ]),
                ));
            }
            e.extend([
                (
                    "ratings",
                    map(vec![
                        ("vceo", num(t.ratings.vceo_v)),
                        ("ic_max", num(t.ratings.ic_max_a)),
                        ("power_per_package", num(t.ratings.power_per_package_w)),
                    ]),
                ),
                (
                    "thermal",
                    map(vec![
                        ("theta_self", num(t.thermal.theta_self_k_per_w)),
                        ("theta_mutual", num(t.thermal.theta_mutual_k_per_w)),
                    ]),
                ),
                ("unit_cost", num(t.unit_cost)),
                ("provenance", s(&t.provenance)),
            ]);
            map(e)
        })
        .collect();
    let resistors = c
        .resistors
        .iter()
        .map(|r| {
            map(vec![
                ("id", s(&r.id)),
                ("summary", s(&r.summary)),
                ("series", s(r.series.as_str())),
                ("tolerance", num(r.tolerance)),
                ("tcr", num(r.tcr_per_k)),
                ("unit_cost", num(r.unit_cost)),
                ("provenance", s(&r.provenance)),
                ("min_value", num(r.min_ohm)),
                ("max_value", num(r.max_ohm)),
            ])
        })
        .collect();
    let doc = map(vec![
        ("currency", s(&c.currency)),
        (
            "reference_quantity",
            Value::Number(c.reference_quantity.into()),
        ),
        ("transistor_classes", Value::Sequence(transistors)),
        ("resistor_classes", Value::Sequence(resistors)),
    ]);
    serde_yaml::to_string(&doc).unwrap_or_default()
}
