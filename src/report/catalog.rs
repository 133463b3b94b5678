//! Catalog listings: every class at a glance (`catalog list`) and one class in full
//! (`catalog show`).
//!
//! JSON wire format (`schema_version` 1): an object with `schema_version`, `currency`,
//! `reference_quantity`, `transistor_classes` and `resistor_classes`; each class is a flat
//! object of SI numbers whose names carry the unit (`is_a`, `vaf_v`, `theta_self_k_per_w`,
//! `tolerance` and `beta_mismatch_sigma` as fractions, `tcr_per_k`). `null` means absent
//! (no Early effect, no matching data for a single). `catalog show` prints one class
//! object with an extra `kind` (`transistor` or `resistor`).

use std::io::{self, Write};

use serde::Serialize;

use super::csv::{self, Column};
use super::{new_table, Format, Style};
use crate::model::{Catalog, ResistorClass, TransistorClass};
use crate::units::{format_quantity, Dimension as D};

pub const SCHEMA_VERSION: u32 = 1;

#[derive(Serialize)]
struct TransistorWire<'a> {
    id: &'a str,
    summary: &'a str,
    polarity: &'a str,
    devices_per_package: u32,
    package: &'a str,
    is_a: f64,
    bf: f64,
    br: f64,
    vaf_v: Option<f64>,
    ikf_a: Option<f64>,
    xti: f64,
    eg_ev: f64,
    xtb: f64,
    tnom_k: f64,
    vbe_offset_sigma_v: Option<f64>,
    beta_mismatch_sigma: Option<f64>,
    vceo_v: f64,
    ic_max_a: f64,
    power_per_package_w: f64,
    theta_self_k_per_w: f64,
    theta_mutual_k_per_w: f64,
    unit_cost: f64,
    provenance: &'a str,
}

impl<'a> From<&'a TransistorClass> for TransistorWire<'a> {
    fn from(t: &'a TransistorClass) -> Self {
        TransistorWire {
            id: &t.id,
            summary: &t.summary,
            polarity: t.polarity.as_str(),
            devices_per_package: t.devices_per_package,
            package: &t.package,
            is_a: t.model.saturation_current_a,
            bf: t.model.beta_forward,
            br: t.model.beta_reverse,
            vaf_v: t.model.early_voltage_v,
            ikf_a: t.model.knee_current_a,
            xti: t.model.xti,
            eg_ev: t.model.eg_ev,
            xtb: t.model.xtb,
            tnom_k: t.model.t_nom_k,
            vbe_offset_sigma_v: t.matching.map(|m| m.vbe_offset_sigma_v),
            beta_mismatch_sigma: t.matching.map(|m| m.beta_mismatch_sigma),
            vceo_v: t.ratings.vceo_v,
            ic_max_a: t.ratings.ic_max_a,
            power_per_package_w: t.ratings.power_per_package_w,
            theta_self_k_per_w: t.thermal.theta_self_k_per_w,
            theta_mutual_k_per_w: t.thermal.theta_mutual_k_per_w,
            unit_cost: t.unit_cost,
            provenance: &t.provenance,
        }
    }
}

#[derive(Serialize)]
struct ResistorWire<'a> {
    id: &'a str,
    summary: &'a str,
    series: &'a str,
    tolerance: f64,
    tcr_per_k: f64,
    unit_cost: f64,
    provenance: &'a str,
}

impl<'a> From<&'a ResistorClass> for ResistorWire<'a> {
    fn from(r: &'a ResistorClass) -> Self {
        ResistorWire {
            id: &r.id,
            summary: &r.summary,
            series: r.series.as_str(),
            tolerance: r.tolerance,
            tcr_per_k: r.tcr_per_k,
            unit_cost: r.unit_cost,
            provenance: &r.provenance,
        }
    }
}

#[derive(Serialize)]
struct CatalogWire<'a> {
    schema_version: u32,
    currency: &'a str,
    reference_quantity: u32,
    transistor_classes: Vec<TransistorWire<'a>>,
    resistor_classes: Vec<ResistorWire<'a>>,
}

#[derive(Serialize)]
struct ShowWire<'a, T: Serialize> {
    schema_version: u32,
    kind: &'static str,
    currency: &'a str,
    #[serde(flatten)]
    class: T,
}

/// One row of the combined CSV listing.
enum Row<'a> {
    T(&'a TransistorClass),
    R(&'a ResistorClass),
}

fn t_or<'a>(r: &Row<'a>, f: fn(&TransistorClass) -> String) -> String {
    match r {
        Row::T(t) => f(t),
        Row::R(_) => String::new(),
    }
}

fn r_or<'a>(r: &Row<'a>, f: fn(&ResistorClass) -> String) -> String {
    match r {
        Row::R(x) => f(x),
        Row::T(_) => String::new(),
    }
}

fn list_columns<'a>() -> Vec<Column<Row<'a>>> {
    vec![
        Column {
            name: "kind",
            get: |r| match r {
                Row::T(_) => "transistor".into(),
                Row::R(_) => "resistor".into(),
            },
        },
        Column {
            name: "id",
            get: |r| match r {
                Row::T(t) => t.id.clone(),
                Row::R(x) => x.id.clone(),
            },
        },
        Column {
            name: "polarity",
            get: |r| t_or(r, |t| t.polarity.as_str().into()),
        },
        Column {
            name: "devices_per_package",
            get: |r| t_or(r, |t| t.devices_per_package.to_string()),
        },
        Column {
            name: "package",
            get: |r| t_or(r, |t| t.package.clone()),
        },
        Column {
            name: "is_a",
            get: |r| t_or(r, |t| csv::num(t.model.saturation_current_a)),
        },
        Column {
            name: "bf",
            get: |r| t_or(r, |t| csv::num(t.model.beta_forward)),
        },
        Column {
            name: "vaf_v",
            get: |r| t_or(r, |t| csv::opt(t.model.early_voltage_v)),
        },
        Column {
            name: "vbe_offset_sigma_v",
            get: |r| t_or(r, |t| csv::opt(t.matching.map(|m| m.vbe_offset_sigma_v))),
        },
        Column {
            name: "beta_mismatch_sigma",
            get: |r| t_or(r, |t| csv::opt(t.matching.map(|m| m.beta_mismatch_sigma))),
        },
        Column {
            name: "vceo_v",
            get: |r| t_or(r, |t| csv::num(t.ratings.vceo_v)),
        },
        Column {
            name: "ic_max_a",
            get: |r| t_or(r, |t| csv::num(t.ratings.ic_max_a)),
        },
        Column {
            name: "power_per_package_w",
            get: |r| t_or(r, |t| csv::num(t.ratings.power_per_package_w)),
        },
        Column {
            name: "theta_self_k_per_w",
            get: |r| t_or(r, |t| csv::num(t.thermal.theta_self_k_per_w)),
        },
        Column {
            name: "theta_mutual_k_per_w",
            get: |r| t_or(r, |t| csv::num(t.thermal.theta_mutual_k_per_w)),
        },
        Column {
            name: "series",
            get: |r| r_or(r, |x| x.series.as_str().into()),
        },
        Column {
            name: "tolerance",
            get: |r| r_or(r, |x| csv::num(x.tolerance)),
        },
        Column {
            name: "tcr_per_k",
            get: |r| r_or(r, |x| csv::num(x.tcr_per_k)),
        },
        Column {
            name: "unit_cost",
            get: |r| match r {
                Row::T(t) => csv::num(t.unit_cost),
                Row::R(x) => csv::num(x.unit_cost),
            },
        },
        Column {
            name: "summary",
            get: |r| match r {
                Row::T(t) => t.summary.clone(),
                Row::R(x) => x.summary.clone(),
            },
        },
    ]
}

fn eng_opt(v: Option<f64>, d: D) -> String {
    v.map(|x| format_quantity(x, d))
        .unwrap_or_else(|| "—".into())
}

/// Prices below one unit keep three decimals so cheap resistors do not read as free.
fn cost(v: f64, currency: &str) -> String {
    if v >= 1.0 || v == 0.0 {
        format!("{v:.2} {currency}")
    } else {
        format!("{v:.3} {currency}")
    }
}

/// `catalog list`: every class, transistors first, in file order.
pub fn write_list(
    c: &Catalog,
    format: Format,
    style: Style,
    out: &mut dyn Write,
) -> io::Result<()> {
    match format {
        Format::Json => {
            let wire = CatalogWire {
                schema_version: SCHEMA_VERSION,
                currency: &c.currency,
                reference_quantity: c.reference_quantity,
                transistor_classes: c.transistors.iter().map(Into::into).collect(),
                resistor_classes: c.resistors.iter().map(Into::into).collect(),
            };
            serde_json::to_writer_pretty(&mut *out, &wire)?;
            writeln!(out)
        }
        Format::Csv => {
            let rows: Vec<Row> = c
                .transistors
                .iter()
                .map(Row::T)
                .chain(c.resistors.iter().map(Row::R))
                .collect();
            csv::write(&list_columns(), &rows, out)
        }
        Format::Table => {
            let mut t = new_table(
                style,
                &[
                    "transistor class",
                    "type",
                    "dev",
                    "package",
                    "BF",
                    "VAF",
                    "V_BE σ",
                    "β σ",
                    "VCEO",
                    "IC max",
                    "θ self",
                    "θ mutual",
                    "cost",
                ],
            );
            for x in &c.transistors {
                t.add_row(vec![
                    x.id.clone(),
                    x.polarity.as_str().to_uppercase(),
                    x.devices_per_package.to_string(),
                    x.package.clone(),
                    format!("{}", x.model.beta_forward),
                    eng_opt(x.model.early_voltage_v, D::Voltage),
                    eng_opt(x.matching.map(|m| m.vbe_offset_sigma_v), D::Voltage),
                    eng_opt(x.matching.map(|m| m.beta_mismatch_sigma), D::Fraction),
                    format_quantity(x.ratings.vceo_v, D::Voltage),
                    format_quantity(x.ratings.ic_max_a, D::Current),
                    format_quantity(x.thermal.theta_self_k_per_w, D::ThermalResistance),
                    format_quantity(x.thermal.theta_mutual_k_per_w, D::ThermalResistance),
                    cost(x.unit_cost, &c.currency),
                ]);
            }
            writeln!(out, "{t}")?;
            let mut r = new_table(
                style,
                &[
                    "resistor class",
                    "series",
                    "tolerance",
                    "TCR",
                    "cost",
                    "summary",
                ],
            );
            for x in &c.resistors {
                r.add_row(vec![
                    x.id.clone(),
                    x.series.as_str().to_string(),
                    format_quantity(x.tolerance, D::Fraction),
                    format_quantity(x.tcr_per_k, D::TempCoefficient),
                    cost(x.unit_cost, &c.currency),
                    x.summary.clone(),
                ]);
            }
            writeln!(out, "{r}")?;
            writeln!(
                out,
                "Values are typical of each class, not guaranteed; check the datasheet of the part you buy. Prices are illustrative, per unit at {} pieces.",
                c.reference_quantity
            )
        }
    }
}

/// `catalog show ID`. Returns `false` (writing nothing) when no class has that id.
pub fn write_class(
    c: &Catalog,
    id: &str,
    format: Format,
    style: Style,
    out: &mut dyn Write,
) -> io::Result<bool> {
    if let Some(t) = c.transistor(id) {
        match format {
            Format::Json => {
                let wire = ShowWire {
                    schema_version: SCHEMA_VERSION,
                    kind: "transistor",
                    currency: &c.currency,
                    class: TransistorWire::from(t),
                };
                serde_json::to_writer_pretty(&mut *out, &wire)?;
                writeln!(out)?;
            }
            Format::Csv => csv::write(&list_columns(), &[Row::T(t)], out)?,
            Format::Table => {
                let m = &t.model;
                let mut rows: Vec<(&str, String)> = vec![
                    ("id", t.id.clone()),
                    ("summary", t.summary.clone()),
                    ("polarity", t.polarity.as_str().to_uppercase()),
                    ("devices per package", t.devices_per_package.to_string()),
                    ("package", t.package.clone()),
                    ("IS", format_quantity(m.saturation_current_a, D::Current)),
                    ("BF", format!("{}", m.beta_forward)),
                    ("BR", format!("{}", m.beta_reverse)),
                    ("VAF", eng_opt(m.early_voltage_v, D::Voltage)),
                    ("IKF", eng_opt(m.knee_current_a, D::Current)),
                    ("XTI", format!("{}", m.xti)),
                    ("EG", format_quantity(m.eg_ev, D::Energy)),
                    ("XTB", format!("{}", m.xtb)),
                    ("TNOM", format_quantity(m.t_nom_k, D::Temperature)),
                ];
                if let Some(mm) = t.matching {
                    rows.push((
                        "V_BE offset σ",
                        format_quantity(mm.vbe_offset_sigma_v, D::Voltage),
                    ));
                    rows.push((
                        "beta mismatch σ",
                        format_quantity(mm.beta_mismatch_sigma, D::Fraction),
                    ));
                }
                rows.extend([
                    ("VCEO", format_quantity(t.ratings.vceo_v, D::Voltage)),
                    ("IC max", format_quantity(t.ratings.ic_max_a, D::Current)),
                    (
                        "power per package (25 °C)",
                        format_quantity(t.ratings.power_per_package_w, D::Power),
                    ),
                    (
                        "θ self",
                        format_quantity(t.thermal.theta_self_k_per_w, D::ThermalResistance),
                    ),
                    (
                        "θ mutual",
                        format_quantity(t.thermal.theta_mutual_k_per_w, D::ThermalResistance),
                    ),
                    ("unit cost", cost(t.unit_cost, &c.currency)),
                    ("provenance", t.provenance.clone()),
                ]);
                write_fields(&rows, style, out)?;
            }
        }
        return Ok(true);
    }
    if let Some(r) = c.resistor(id) {
        match format {
            Format::Json => {
                let wire = ShowWire {
                    schema_version: SCHEMA_VERSION,
                    kind: "resistor",
                    currency: &c.currency,
                    class: ResistorWire::from(r),
                };
                serde_json::to_writer_pretty(&mut *out, &wire)?;
                writeln!(out)?;
            }
            Format::Csv => csv::write(&list_columns(), &[Row::R(r)], out)?,
            Format::Table => {
                let rows: Vec<(&str, String)> = vec![
                    ("id", r.id.clone()),
                    ("summary", r.summary.clone()),
                    ("series", r.series.as_str().to_string()),
                    ("tolerance", format_quantity(r.tolerance, D::Fraction)),
                    ("TCR", format_quantity(r.tcr_per_k, D::TempCoefficient)),
                    ("unit cost", cost(r.unit_cost, &c.currency)),
                    ("provenance", r.provenance.clone()),
                ];
                write_fields(&rows, style, out)?;
            }
        }
        return Ok(true);
    }
    Ok(false)
}

fn write_fields(rows: &[(&str, String)], style: Style, out: &mut dyn Write) -> io::Result<()> {
    let mut t = new_table(style, &["field", "value"]);
    for (k, v) in rows {
        t.add_row(vec![k.to_string(), v.clone()]);
    }
    writeln!(out, "{t}")?;
    writeln!(
        out,
        "Typical values of the class, not guaranteed; the datasheet of the part you buy governs."
    )
}
