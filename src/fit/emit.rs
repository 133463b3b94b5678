//! The fitted part class: built from the base class and the model fit, and written as a
//! ready-to-paste entry of the catalog's `transistor_classes` list (the schema of
//! `catalog/default.yaml`, quantities with their units).
//!
//! Must not read files or the clock: the date comes from the caller.

use super::model::{class_with, ModelFit, ParamKind};
use super::FitConfig;
use crate::model::{Matching, TransistorClass};
use crate::units::{format_quantity, Dimension as D};

/// The base class with the fitted BF, VAF and IKF, the fitted V_BE offset as the
/// matching sigma, and provenance naming the measurement file and the date.
pub fn fitted_class(
    id: &str,
    source: &str,
    date: &str,
    cfg: &FitConfig,
    fit: &ModelFit,
) -> TransistorClass {
    let mut c = class_with(&cfg.base, &fit.values);
    c.id = id.to_string();
    c.summary = format!(
        "{} fitted to bench measurements of one {} mirror",
        cfg.base.polarity.as_str().to_uppercase(),
        cfg.topology.name()
    );
    let offset = fit
        .params
        .iter()
        .find(|p| p.kind == ParamKind::VbeOffset && p.fitted)
        .and_then(|p| p.value);
    let base_matching = cfg.base.matching_or_default();
    if let Some(dvbe) = offset {
        c.matching = Some(Matching {
            vbe_offset_sigma_v: dvbe.abs(),
            beta_mismatch_sigma: base_matching.beta_mismatch_sigma,
        });
    }
    let fitted: Vec<&str> = fit
        .params
        .iter()
        .filter(|p| p.fitted)
        .map(|p| p.kind.name())
        .collect();
    c.provenance = format!(
        "{} fitted by mirrorpick fit from {source} on {date} ({} points, {} topology); \
         IS, BR, temperature rules, ratings, thermal data and cost from class {}; \
         matching sigma is the offset of the one measured pair, not a population statistic",
        if fitted.is_empty() {
            "nothing".to_string()
        } else {
            fitted.join(", ")
        },
        fit.points_used,
        cfg.topology.name(),
        cfg.base.id,
    );
    c
}

/// The class as a catalog list entry, indented for `transistor_classes:`, with comments
/// that say what was fitted and what was not.
pub fn class_yaml(c: &TransistorClass, notes: &[String]) -> String {
    let q = format_quantity;
    let m = &c.model;
    let mut model = vec![
        format!("is: {}", q(m.saturation_current_a, D::Current)),
        format!("bf: {}", q(m.beta_forward, D::Number)),
        format!("br: {}", q(m.beta_reverse, D::Number)),
    ];
    let mut comments: Vec<String> = notes.to_vec();
    match m.early_voltage_v {
        Some(v) if v <= 1000.0 => model.push(format!("vaf: {}", q(v, D::Voltage))),
        Some(v) => comments.push(format!(
            "VAF {} is beyond the catalog's 1000 V limit: left out (no Early effect)",
            q(v, D::Voltage)
        )),
        None => comments.push("no Early effect resolved: vaf left out".to_string()),
    }
    if let Some(v) = m.knee_current_a {
        model.push(format!("ikf: {}", q(v, D::Current)));
    }
    model.extend([
        format!("xti: {}", q(m.xti, D::Number)),
        format!("eg: {}", q(m.eg_ev, D::Energy)),
        format!("xtb: {}", q(m.xtb, D::Number)),
        format!("tnom: {}", q(m.t_nom_k, D::Temperature)),
    ]);
    let mut out = String::new();
    for line in &comments {
        out.push_str(&format!("  # {line}\n"));
    }
    out.push_str(&format!("  - id: {}\n", yaml_string(&c.id)));
    out.push_str(&format!("    summary: {}\n", yaml_string(&c.summary)));
    out.push_str(&format!("    polarity: {}\n", c.polarity.as_str()));
    out.push_str(&format!(
        "    devices_per_package: {}\n",
        c.devices_per_package
    ));
    out.push_str(&format!("    package: {}\n", yaml_string(&c.package)));
    out.push_str(&format!("    model: {{{}}}\n", model.join(", ")));
    if let Some(mm) = c.matching {
        out.push_str(&format!(
            "    matching: {{vbe_offset_sigma: {}, beta_mismatch_sigma: {}}}\n",
            q(mm.vbe_offset_sigma_v, D::Voltage),
            q(mm.beta_mismatch_sigma, D::Fraction)
        ));
    }
    out.push_str(&format!(
        "    ratings: {{vceo: {}, ic_max: {}, power_per_package: {}}}\n",
        q(c.ratings.vceo_v, D::Voltage),
        q(c.ratings.ic_max_a, D::Current),
        q(c.ratings.power_per_package_w, D::Power)
    ));
    out.push_str(&format!(
        "    thermal: {{theta_self: {}, theta_mutual: {}}}\n",
        q(c.thermal.theta_self_k_per_w, D::ThermalResistance),
        q(c.thermal.theta_mutual_k_per_w, D::ThermalResistance)
    ));
    out.push_str(&format!("    unit_cost: {}\n", c.unit_cost));
    out.push_str(&format!("    provenance: {}\n", yaml_string(&c.provenance)));
    out
}

/// A double-quoted YAML scalar (a JSON string is one), so any file name is safe.
fn yaml_string(s: &str) -> String {
    serde_json::to_string(s).expect("a string always serialises")
}
