//! A finished [`FitReport`] as a table for people or JSON for programs, written to any
//! `io::Write`. Pure functions: no file access, no exit codes. The table rounds every
//! fitted figure by its standard error ([`figures`]); JSON keeps full precision.
//!
//! JSON layout (schema_version 2), plain SI numbers, temperatures in °C with `_c` as in
//! every other report: `source`, `date`, `topology`, `re1_ohm`, `re2_ohm`, `supply_v`,
//! `ambient_c`,
//! `self_heating`, `base_class`, `points_total`; `curves`: one object per programming
//! current with `i_in_a`, `t_ambient_c` (null when not logged), `points`, `active_points`,
//! `outcome` (`line`, `too_few_points`, `no_voltage_spread`, `slope_not_resolved`) and,
//! for a line, `slope_a_per_v`, `output_resistance_ohm`, `early_voltage_v` and
//! `early_voltage_std_error_v` (null with two points); `model`: null when no fit could be
//! made (then `model_failure` says why), else `parameters` (each `name`, `value` in SI or
//! null for infinite, `std_error`, `fitted`, `profile_widened` (the error is the misfit
//! profile's reach, more than 10 % above the linear one), `conditional_on` (keys of the
//! held parameters this error takes as exact)), `points_used`, `largest_relative_residual`,
//! `largest_residual_line`, `rms_relative_residual`, `condition_number`, `converged`;
//! `warnings`: list of sentences; `emitted_class`: the YAML text or null.

use std::io::{self, Write};

use serde::Serialize;

use super::emit::class_yaml;
use super::figures;
use super::{CurveOutcome, FitReport, ParamKind};
use crate::model::ZERO_CELSIUS_K;
use crate::report::{new_table, Style};
use crate::units::{format_prefixed, format_quantity, Dimension as D};

/// The emitted class's YAML with its explanatory comments.
pub fn emitted_yaml(report: &FitReport) -> Option<String> {
    let class = report.emitted_class.as_ref()?;
    let notes = vec![
        format!(
            "Fitted by `mirrorpick fit` from {} on {}.",
            report.source, report.date
        ),
        "One measured pair is not a population: vbe_offset_sigma is this pair's offset,"
            .to_string(),
        "not a statistic of the class. Measure several pairs before relying on it.".to_string(),
        "Catalog values are typical, not guaranteed: check ratings against the datasheet."
            .to_string(),
    ];
    Some(class_yaml(class, &notes))
}

/// The report as tables and sentences.
pub fn write_table(report: &FitReport, style: Style, out: &mut dyn Write) -> io::Result<()> {
    writeln!(
        out,
        "Fit of {} ({} points), {} topology, RE1 {}, RE2 {}, supply {}, base class {}{}",
        report.source,
        report.points_total,
        report.topology.name(),
        format_quantity(report.re1_ohm, D::Resistance),
        format_quantity(report.re2_ohm, D::Resistance),
        format_quantity(report.supply_v, D::Voltage),
        report.base_class_id,
        if report.self_heating {
            ", self-heating modelled"
        } else {
            ""
        }
    )?;
    writeln!(out)?;
    writeln!(
        out,
        "Per-curve Early voltage (straight line in the active region):"
    )?;
    let mut t = new_table(
        style,
        &[
            "I_in", "ambient", "points", "active", "slope", "r_out", "VAF_eff", "± (1σ)",
        ],
    );
    for c in &report.curves {
        let mut row = vec![
            format_prefixed(c.i_in_a, "A"),
            c.t_amb_k
                .map(|t| format_quantity(t, D::Temperature))
                .unwrap_or_else(|| format_quantity(report.ambient_k, D::Temperature)),
            c.points.to_string(),
            c.active_points.to_string(),
        ];
        match &c.outcome {
            CurveOutcome::Line(l) => {
                // Each figure rounded by its own error (two points: no error, 3 digits).
                let by_error = |v: f64, se: Option<f64>, unit: &str| match se {
                    Some(se) => figures::with_error(v, se, unit),
                    None => (figures::prefixed(v, unit, 3), "n/a".to_string()),
                };
                let slope = by_error(l.slope_a_per_v, l.slope_std_error, "A/V").0;
                let r_out_se = l
                    .slope_std_error
                    .map(|s| s * l.output_resistance_ohm / l.slope_a_per_v);
                let r_out = by_error(l.output_resistance_ohm, r_out_se, "Ω").0;
                let (vaf, vaf_se) = by_error(l.early_voltage_v, l.early_voltage_std_error_v, "V");
                row.extend([slope, r_out, vaf, vaf_se]);
            }
            other => row.extend([
                outcome_words(other).to_string(),
                String::new(),
                String::new(),
                String::new(),
            ]),
        }
        t.add_row(row);
    }
    writeln!(out, "{t}")?;
    writeln!(out)?;
    match &report.model {
        Err(e) => writeln!(out, "Model fit: not made: {e}")?,
        Ok(m) => {
            writeln!(
                out,
                "Model fit through the solved {} circuit ({} points, residuals relative):",
                report.topology.name(),
                m.points_used
            )?;
            let mut t = new_table(style, &["parameter", "value", "± (1σ)", "status"]);
            for p in &m.params {
                let unit = match p.kind {
                    ParamKind::Bf => "",
                    ParamKind::Vaf | ParamKind::VbeOffset => "V",
                    ParamKind::Ikf => "A",
                };
                let (value, error) = match (p.value, p.std_error) {
                    (Some(v), Some(se)) => figures::with_error(v, se, unit),
                    (Some(v), None) => (figures::prefixed(v, unit, 3), String::new()),
                    (None, _) => ("infinite".to_string(), String::new()),
                };
                let mut status = if p.fitted {
                    "fitted".to_string()
                } else {
                    "held at base class".to_string()
                };
                if p.profile_widened {
                    status.push_str(", error from the misfit profile");
                }
                if !p.conditional_on.is_empty() {
                    let names: Vec<&str> = p.conditional_on.iter().map(|k| k.name()).collect();
                    status.push_str(&format!(", error conditional on {}", names.join(", ")));
                }
                t.add_row(vec![p.kind.name().to_string(), value, error, status]);
            }
            writeln!(out, "{t}")?;
            writeln!(
                out,
                "Residuals: RMS {}, largest {} (line {}); condition number {}; {}.",
                figures::percent(m.rms_relative_residual),
                figures::percent(m.largest_relative_residual),
                m.largest_residual_line,
                figures::plain(m.condition, 2),
                if m.converged {
                    "converged"
                } else {
                    "did not converge"
                }
            )?;
        }
    }
    if !report.warnings.is_empty() {
        writeln!(out)?;
        writeln!(out, "Warnings:")?;
        for w in &report.warnings {
            writeln!(out, "  - {w}")?;
        }
    }
    if let Some(yaml) = emitted_yaml(report) {
        writeln!(out)?;
        writeln!(out, "Catalog class (paste under `transistor_classes:`):")?;
        write!(out, "{yaml}")?;
    }
    Ok(())
}

fn outcome_words(o: &CurveOutcome) -> &'static str {
    match o {
        CurveOutcome::Line(_) => "line",
        CurveOutcome::TooFewPoints => "too few points",
        CurveOutcome::NoVoltageSpread => "no V_out spread",
        CurveOutcome::SlopeNotResolved { .. } => "slope not resolved",
    }
}

fn outcome_key(o: &CurveOutcome) -> &'static str {
    match o {
        CurveOutcome::Line(_) => "line",
        CurveOutcome::TooFewPoints => "too_few_points",
        CurveOutcome::NoVoltageSpread => "no_voltage_spread",
        CurveOutcome::SlopeNotResolved { .. } => "slope_not_resolved",
    }
}

#[derive(Serialize)]
struct JsonReport<'a> {
    schema_version: u32,
    source: &'a str,
    date: &'a str,
    topology: &'a str,
    re1_ohm: f64,
    re2_ohm: f64,
    supply_v: f64,
    ambient_c: f64,
    self_heating: bool,
    base_class: &'a str,
    points_total: usize,
    curves: Vec<JsonCurve>,
    model: Option<JsonModel>,
    model_failure: Option<String>,
    warnings: Vec<String>,
    emitted_class: Option<String>,
}

#[derive(Serialize)]
struct JsonCurve {
    i_in_a: f64,
    t_ambient_c: Option<f64>,
    points: usize,
    active_points: usize,
    outcome: &'static str,
    slope_a_per_v: Option<f64>,
    output_resistance_ohm: Option<f64>,
    early_voltage_v: Option<f64>,
    early_voltage_std_error_v: Option<f64>,
}

#[derive(Serialize)]
struct JsonModel {
    parameters: Vec<JsonParam>,
    points_used: usize,
    largest_relative_residual: f64,
    largest_residual_line: usize,
    rms_relative_residual: f64,
    condition_number: Option<f64>,
    converged: bool,
}

#[derive(Serialize)]
struct JsonParam {
    name: &'static str,
    value: Option<f64>,
    std_error: Option<f64>,
    fitted: bool,
    profile_widened: bool,
    conditional_on: Vec<&'static str>,
}

/// The report as one JSON object (see the module docs for the layout).
pub fn write_json(report: &FitReport, out: &mut dyn Write) -> io::Result<()> {
    let curves = report
        .curves
        .iter()
        .map(|c| {
            let line = match &c.outcome {
                CurveOutcome::Line(l) => Some(l),
                _ => None,
            };
            JsonCurve {
                i_in_a: c.i_in_a,
                t_ambient_c: c.t_amb_k.map(|t| t - ZERO_CELSIUS_K),
                points: c.points,
                active_points: c.active_points,
                outcome: outcome_key(&c.outcome),
                slope_a_per_v: line.map(|l| l.slope_a_per_v),
                output_resistance_ohm: line.map(|l| l.output_resistance_ohm),
                early_voltage_v: line.map(|l| l.early_voltage_v),
                early_voltage_std_error_v: line.and_then(|l| l.early_voltage_std_error_v),
            }
        })
        .collect();
    let model = report.model.as_ref().ok().map(|m| JsonModel {
        parameters: m
            .params
            .iter()
            .map(|p| JsonParam {
                name: p.kind.key(),
                value: p.value,
                std_error: p.std_error,
                fitted: p.fitted,
                profile_widened: p.profile_widened,
                conditional_on: p.conditional_on.iter().map(|k| k.key()).collect(),
            })
            .collect(),
        points_used: m.points_used,
        largest_relative_residual: m.largest_relative_residual,
        largest_residual_line: m.largest_residual_line,
        rms_relative_residual: m.rms_relative_residual,
        condition_number: m.condition.is_finite().then_some(m.condition),
        converged: m.converged,
    });
    let json = JsonReport {
        schema_version: report.schema_version,
        source: &report.source,
        date: &report.date,
        topology: report.topology.name(),
        re1_ohm: report.re1_ohm,
        re2_ohm: report.re2_ohm,
        supply_v: report.supply_v,
        ambient_c: report.ambient_k - ZERO_CELSIUS_K,
        self_heating: report.self_heating,
        base_class: &report.base_class_id,
        points_total: report.points_total,
        curves,
        model,
        model_failure: report.model.as_ref().err().map(|e| e.to_string()),
        warnings: report.warnings.iter().map(|w| w.to_string()).collect(),
        emitted_class: emitted_yaml(report),
    };
    serde_json::to_writer_pretty(&mut *out, &json).map_err(io::Error::other)?;
    writeln!(out)
}
