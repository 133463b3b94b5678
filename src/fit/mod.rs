//! Bench-data fitting: from measured I_out(V_out) curves of a mirror to a part class.
//!
//! Owns reading the measurement file ([`measurements`]), the per-curve Early-voltage
//! construction ([`curves`]), the model fit through the circuit solver ([`model`], on the
//! least-squares seam [`lm`]), the emitted catalog class ([`emit`]) and the fit report's
//! renderers ([`render`]). It must not parse CLI arguments, read the clock or decide exit
//! codes: the caller passes the file's text, the date and the settings, and gets a
//! [`FitReport`] back.

pub mod curves;
pub mod emit;
pub mod figures;
pub mod lm;
pub mod measurements;
pub mod model;
pub mod render;

use std::fmt;

pub use curves::{CurveFit, CurveOutcome, LineFit};
pub use measurements::{parse_measurements, CsvError, Measurement, MeasurementSet};
pub use model::{
    generic_class, FitSetup, FittedParam, HeldParam, ModelFit, ModelFitFailure, ParamKind,
    ParamValues, Sensitivity, Unidentified,
};

use crate::model::{Topology, TransistorClass};
use crate::units::{format_quantity, Dimension};

/// The version of the report's JSON layout; bumped on any incompatible change.
pub const FIT_SCHEMA_VERSION: u32 = 2;

/// Residuals above this RMS (relative) mean the model does not describe the data well.
pub const RMS_RESIDUAL_WARN: f64 = 0.01;

/// A standard error above this fraction of its value is reported as poorly determined.
pub const RELATIVE_SE_WARN: f64 = 0.3;

/// Settings of one fit, resolved (SI units).
#[derive(Debug, Clone)]
pub struct FitConfig {
    pub topology: Topology,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    /// Ambient of points without a `t_ambient` value.
    pub ambient_k: f64,
    /// Bench supply; `None` takes the largest V_out in the file.
    pub supply_v: Option<f64>,
    pub self_heating: bool,
    pub fit_ikf: bool,
    /// The class the fit starts from (IS, temperature rules, ratings, thermal, cost).
    pub base: TransistorClass,
    /// Emit a catalog class with this id.
    pub emit_class_id: Option<String>,
    /// Date of the fit (`YYYY-MM-DD`), for provenance.
    pub date: String,
}

/// Something the reader of a fit must know before trusting a number.
#[derive(Debug, Clone, PartialEq)]
pub enum FitWarning {
    /// A parameter the data cannot identify, held at the base class's value.
    Unidentified(HeldParam),
    /// Parameters were held that the data depend on: the fitted values' standard errors
    /// assume the held values exact; the sensitivity says how much they leave out.
    ConditionalErrors {
        held: ParamKind,
        held_value: Option<f64>,
        fitted: Vec<ParamKind>,
        sensitivity: Option<Sensitivity>,
    },
    /// A fitted parameter whose standard error is a large fraction of its value.
    PoorlyDetermined {
        kind: ParamKind,
        relative_std_error: f64,
    },
    /// The model leaves residuals well above bench accuracy.
    LargeResiduals { rms_relative: f64 },
    /// The optimiser stopped without meeting its convergence tests.
    NotConverged { termination: String },
    /// Points below the active-region rule were left out of both fits.
    PointsExcluded { count: usize },
    /// Curves too short or too flat for an intercept.
    CurvesWithoutIntercept { count: usize },
    /// Self-heating is off while the output transistor dissipates enough (V_out I_out of
    /// 2 mW or more) to shift its V_BE by about a millivolt.
    SelfHeatingLikely { largest_power_w: f64 },
    /// The bench ran the output transistor near a rating of the base class (80 % of
    /// VCEO, half the package power): a caution, since the class's ratings are typical.
    NearRating {
        what: &'static str,
        measured: String,
        rating: String,
    },
}

impl fmt::Display for FitWarning {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            FitWarning::Unidentified(h) => match &h.why {
                Unidentified::NoVoltageSpread => write!(
                    f,
                    "VAF is not identified: every point is at one output voltage; it is held at the base class's value (measure each current at several output voltages)"
                ),
                Unidentified::Confounded { with, .. } if with.is_empty() => write!(
                    f,
                    "{} is not identified: these data hardly change with it; it is held at the base class's value{}",
                    h.kind.name(),
                    confound_advice(h.kind, with)
                ),
                Unidentified::Confounded { with, condition } => write!(
                    f,
                    "{} is not identified: its effect on these data is nearly matched by {}{}; it is held at the base class's value and the other values assume it{}",
                    h.kind.name(),
                    list(with),
                    if condition.is_finite() {
                        format!(" (condition number {})", figures::plain(*condition, 2))
                    } else {
                        String::new()
                    },
                    confound_advice(h.kind, with)
                ),
                Unidentified::KneeNotReached { largest_current_a } => write!(
                    f,
                    "IKF is not identified: the largest current measured ({}) is far below any knee the data could show; it is held at the base class's value (measure up to the currents where beta falls)",
                    crate::units::format_prefixed(*largest_current_a, "A")
                ),
                Unidentified::NoSlope => write!(
                    f,
                    "VAF is not identified: the curves show no upward slope; it is reported as infinite (no Early effect resolved)"
                ),
            },
            FitWarning::ConditionalErrors {
                held,
                held_value,
                fitted,
                sensitivity,
            } => {
                write!(
                    f,
                    "the standard errors of {} are conditional: they take the held {} = {} as exact and leave out its doubt",
                    list(fitted),
                    held.name(),
                    held_value.map_or("infinite".into(), |v| param_figure(*held, v)),
                )?;
                if let Some(s) = sensitivity {
                    let moves: Vec<String> = s
                        .shifts
                        .iter()
                        .map(|(k, d)| {
                            format!(
                                "{} by {}{}",
                                k.name(),
                                if *d > 0.0 { "+" } else { "" },
                                param_figure(*k, *d)
                            )
                        })
                        .collect();
                    write!(
                        f,
                        "; {} {}{} would move {}",
                        held.name(),
                        if s.step > 0.0 { "+" } else { "" },
                        param_figure(*held, s.step),
                        moves.join(", ")
                    )?;
                }
                Ok(())
            }
            FitWarning::PoorlyDetermined {
                kind,
                relative_std_error,
            } => write!(
                f,
                "{} is poorly determined: its standard error is {:.0} % of its value",
                kind.name(),
                relative_std_error * 100.0
            ),
            FitWarning::LargeResiduals { rms_relative } => write!(
                f,
                "the model misses the data by {} RMS: check the topology, the emitter resistors, the supply and self-heating (--self-heating)",
                figures::percent(*rms_relative)
            ),
            FitWarning::NotConverged { termination } => write!(
                f,
                "the fit stopped before converging ({termination}); treat the numbers as rough"
            ),
            FitWarning::PointsExcluded { count } => write!(
                f,
                "{count} point{} below the active-region knee {} left out of the fits",
                if *count == 1 { "" } else { "s" },
                if *count == 1 { "was" } else { "were" }
            ),
            FitWarning::CurvesWithoutIntercept { count } => write!(
                f,
                "{count} curve{} too short or too flat for an Early-voltage intercept",
                if *count == 1 { " is" } else { "s are" }
            ),
            FitWarning::NearRating {
                what,
                measured,
                rating,
            } => write!(
                f,
                "caution: the measurement reached {measured} against the base class's typical {what} of {rating}; ratings are typical, not guaranteed: check the part's datasheet and derating before measuring again"
            ),
            FitWarning::SelfHeatingLikely { largest_power_w } => write!(
                f,
                "the output transistor dissipates up to {} and self-heating is not modelled: the fitted VAF may be low (add --self-heating)",
                crate::units::format_prefixed(*largest_power_w, "W")
            ),
        }
    }
}

/// A parameter value or change with two significant digits and its unit.
pub(crate) fn param_figure(kind: ParamKind, v: f64) -> String {
    match kind {
        ParamKind::Bf => figures::plain(v, 2),
        ParamKind::Vaf | ParamKind::VbeOffset => figures::prefixed(v, "V", 2),
        ParamKind::Ikf => figures::prefixed(v, "A", 2),
    }
}

fn list(kinds: &[ParamKind]) -> String {
    let names: Vec<String> = kinds.iter().map(|k| k.name().to_string()).collect();
    match names.len() {
        0 => "the other parameters".to_string(),
        1 => names[0].clone(),
        n => format!("{} and {}", names[..n - 1].join(", "), names[n - 1]),
    }
}

fn confound_advice(kind: ParamKind, _with: &[ParamKind]) -> &'static str {
    if matches!(kind, ParamKind::Bf | ParamKind::VbeOffset) {
        " (a beta error and a V_BE offset both scale every curve by nearly one factor: measure with emitter resistors (--re1/--re2) at several currents, or at two or more temperatures, to tell them apart)"
    } else {
        ""
    }
}

/// The whole result of `fit`, ready for any renderer.
#[derive(Debug, Clone, PartialEq)]
pub struct FitReport {
    pub schema_version: u32,
    pub source: String,
    pub date: String,
    pub topology: Topology,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    pub supply_v: f64,
    pub ambient_k: f64,
    pub self_heating: bool,
    pub base_class_id: String,
    pub points_total: usize,
    pub curves: Vec<CurveFit>,
    /// `Err` when no model fit could be made; the curves still stand.
    pub model: Result<ModelFit, ModelFitFailure>,
    pub warnings: Vec<FitWarning>,
    /// The fitted class (ready to print as catalog YAML) when asked for and fitted.
    pub emitted_class: Option<TransistorClass>,
}

impl FitReport {
    /// True when the model fit produced numbers.
    pub fn fitted(&self) -> bool {
        self.model.is_ok()
    }
}

/// Runs the whole fit on a read measurement file.
pub fn fit(set: &MeasurementSet, cfg: &FitConfig) -> FitReport {
    let points = &set.points;
    let supply_v = cfg
        .supply_v
        .unwrap_or_else(|| points.iter().map(|p| p.v_out_v).fold(0.0, f64::max));
    let curves = curves::fit_curves(points, cfg.topology, cfg.re2_ohm);
    let mut warnings = Vec::new();
    let excluded = points
        .iter()
        .filter(|p| !curves::is_active(p, cfg.topology, cfg.re2_ohm))
        .count();
    if excluded > 0 {
        warnings.push(FitWarning::PointsExcluded { count: excluded });
    }
    let without = curves
        .iter()
        .filter(|c| !matches!(c.outcome, CurveOutcome::Line(_)))
        .count();
    if without > 0 {
        warnings.push(FitWarning::CurvesWithoutIntercept { count: without });
    }
    // Start VAF from the curves' median intercept where that intercept is the device's
    // (a simple mirror without emitter resistors, see `curves`); elsewhere it is the
    // whole circuit's and the base class's VAF is the better start.
    let mut intercepts: Vec<f64> = curves
        .iter()
        .filter_map(|c| match &c.outcome {
            CurveOutcome::Line(l) => Some(l.early_voltage_v),
            _ => None,
        })
        .collect();
    intercepts.sort_by(f64::total_cmp);
    let device_intercepts =
        cfg.topology == Topology::Simple && cfg.re1_ohm == 0.0 && cfg.re2_ohm == 0.0;
    let vaf_start = intercepts
        .get(intercepts.len() / 2)
        .copied()
        .filter(|_| device_intercepts);

    let setup = FitSetup {
        topology: cfg.topology,
        re1_ohm: cfg.re1_ohm,
        re2_ohm: cfg.re2_ohm,
        ambient_k: cfg.ambient_k,
        supply_v,
        self_heating: cfg.self_heating,
        base: cfg.base.clone(),
        fit_ikf: cfg.fit_ikf,
    };
    let model = model::fit_model(&setup, points, vaf_start.filter(|v| *v > 0.0));
    if let Ok(m) = &model {
        for h in &m.held {
            warnings.push(FitWarning::Unidentified(h.clone()));
        }
        let fitted: Vec<ParamKind> = m
            .params
            .iter()
            .filter(|p| p.fitted)
            .map(|p| p.kind)
            .collect();
        let conditional_on = m
            .params
            .iter()
            .find(|p| p.fitted)
            .map(|p| p.conditional_on.clone())
            .unwrap_or_default();
        for held in conditional_on {
            warnings.push(FitWarning::ConditionalErrors {
                held,
                held_value: m.values.get(held),
                fitted: fitted.clone(),
                sensitivity: m.sensitivities.iter().find(|s| s.held == held).cloned(),
            });
        }
        for p in &m.params {
            if let (Some(v), Some(se)) = (p.value, p.std_error) {
                // The offset's scale is its own error, not its value (0 is a fine offset).
                if p.kind != ParamKind::VbeOffset && se > RELATIVE_SE_WARN * v.abs() {
                    warnings.push(FitWarning::PoorlyDetermined {
                        kind: p.kind,
                        relative_std_error: se / v.abs(),
                    });
                }
            }
        }
        if m.rms_relative_residual > RMS_RESIDUAL_WARN {
            warnings.push(FitWarning::LargeResiduals {
                rms_relative: m.rms_relative_residual,
            });
        }
        if !m.converged {
            warnings.push(FitWarning::NotConverged {
                termination: m.termination.clone(),
            });
        }
    }
    if !cfg.self_heating {
        let p_max = points
            .iter()
            .map(|p| p.v_out_v * p.i_out_a)
            .fold(0.0, f64::max);
        // 2 mW in a small dual is 0.4-0.8 K of die-to-die difference (FIELD-NOTES worked
        // numbers: about 0.2-0.4 K/mW), about 1-3 % of current without degeneration, far
        // above bench noise.
        if p_max >= 2e-3 {
            warnings.push(FitWarning::SelfHeatingLikely {
                largest_power_w: p_max,
            });
        }
    }
    let v_max = points.iter().map(|p| p.v_out_v).fold(0.0, f64::max);
    let p_out_max = points
        .iter()
        .map(|p| p.v_out_v * p.i_out_a)
        .fold(0.0, f64::max);
    let ratings = &cfg.base.ratings;
    // 0.8 x VCEO is the project's derating (MODEL.md, ratings; common practice).
    if v_max > 0.8 * ratings.vceo_v {
        warnings.push(FitWarning::NearRating {
            what: "VCEO",
            measured: format_quantity(v_max, Dimension::Voltage),
            rating: format_quantity(ratings.vceo_v, Dimension::Voltage),
        });
    }
    if p_out_max > 0.5 * ratings.power_per_package_w {
        warnings.push(FitWarning::NearRating {
            what: "package power rating",
            measured: format_quantity(p_out_max, Dimension::Power),
            rating: format_quantity(ratings.power_per_package_w, Dimension::Power),
        });
    }
    let emitted_class = match (&cfg.emit_class_id, &model) {
        (Some(id), Ok(m)) => Some(emit::fitted_class(id, &set.source, &cfg.date, cfg, m)),
        _ => None,
    };
    FitReport {
        schema_version: FIT_SCHEMA_VERSION,
        source: set.source.clone(),
        date: cfg.date.clone(),
        topology: cfg.topology,
        re1_ohm: cfg.re1_ohm,
        re2_ohm: cfg.re2_ohm,
        supply_v,
        ambient_k: cfg.ambient_k,
        self_heating: cfg.self_heating,
        base_class_id: cfg.base.id.clone(),
        points_total: points.len(),
        curves,
        model,
        warnings,
        emitted_class,
    }
}
