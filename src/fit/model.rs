//! The model fit: BF, VAF, the pair's V_BE offset and optionally IKF, found by nonlinear
//! least squares through the circuit solver for the measured topology.
//!
//! Owns the parametrisation, the residual (relative current error per point), the rules
//! that decide when the data cannot identify a parameter, and the fitted class. It must
//! not read files or print.
//!
//! Parametrisation (for conditioning: each parameter is of order one and a step of 1e-4
//! in it moves the currents by a similar small fraction):
//! * `ln BF` (BF is positive and its effect scales as 1/BF),
//! * `100 V / VAF` (the Early effect is linear in 1/VAF; 0 is "no Early effect"),
//! * the V_BE offset in millivolts (applied to Q2 of the pair Q1,Q2, MODEL.md),
//! * `ln(IKF / 1 A)`.
//!
//! Everything else (IS, BR, the temperature rules, ratings, thermal resistances) comes
//! from the base class. The residual of point i is `I_model,i / I_meas,i - 1`: the fit
//! weights every point by its relative current error, as a meter whose error is a fixed
//! fraction of the reading would.
//!
//! Identifiability is decided from the data at the fitted point with every parameter
//! free. Each fit runs from several starts (the base values, BF a factor 3 either way,
//! VAF a factor 2 either way) and keeps the lowest misfit. A parameter is held at the
//! base class's value only where the data cannot tell it apart:
//! * structurally: VAF when every point is at one output voltage; IKF when the fitted
//!   knee lies beyond [`IKF_REACH`] times the largest current; VAF reported infinite when
//!   the curves show no Early slope;
//! * numerically: the column-scaled Jacobian's condition number above
//!   [`CONDITION_LIMIT`] (some combination does not change the data at all);
//! * statistically: its one-sigma reach beyond a limit that means "nothing useful"
//!   (`se_limit_u`: BF a factor 2, 1/VAF its whole value, the offset 2 mV) on both
//!   sides (a parameter the data bound on one side is fitted, with its error). The reach
//!   is taken along the profile of the misfit (the parameter pinned, the others refitted,
//!   until the sum of squares rises by 9 s^2, divided by 3; Bates & Watts, *Nonlinear
//!   Regression Analysis and Its Applications*, ch. 6), never below the linear error, and widened
//!   to cover any other start's optimum within one s^2. In a simple mirror without
//!   emitter resistors a beta error and a V_BE offset scale every curve by almost the
//!   same factor, so one of them is held there.
//!
//! The candidate with the largest share in the weakest direction is held, named in a
//! warning with the parameters it is confounded with, and the fit repeated. Reported
//! standard errors are the larger profile reach, so a curved valley (the Wilson mirrors,
//! where beta shows only through 2/BF^2 and the output resistance about BF r_o / 2)
//! widens them instead of hiding a parameter. When a parameter the data depend on is held,
//! the other errors are conditional on its value: they are marked so, and the fit
//! reports how far each value moves when the held one moves by 10 %. A fit the data
//! cannot support at all (fewer distinct points than parameters plus one, nothing left
//! to fit, a parameter without a finite error or run outside physical values) is a
//! [`ModelFitFailure::Unsupported`]. Noiseless data identify what is mathematically
//! identifiable; noisy data only what the noise leaves identifiable.

use super::curves::is_active;
use super::lm::{least_squares, LsError, LsOutcome};
use super::measurements::Measurement;
use crate::circuit::{Design, Mismatch, Netlist, OperatingPoint, SolveOptions};
use crate::model::{
    BjtParams, Matching, Polarity, Ratings, Thermal, Topology, TransistorClass, ZERO_CELSIUS_K,
};

/// Condition number of the column-scaled Jacobian above which the problem is taken as
/// numerically singular (that of `J^T J` is the square, 1e12): the finite-difference
/// Jacobian, good to about 1e-6 relative, cannot resolve a weaker direction.
pub const CONDITION_LIMIT: f64 = 1e6;

/// IKF counts as reached when the fitted knee is below this many times the largest
/// measured current (beta falls by 1/(1 + I/IKF): 10 % at IKF/9).
pub const IKF_REACH: f64 = 20.0;

/// A parameter of the fit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub enum ParamKind {
    Bf,
    Vaf,
    VbeOffset,
    Ikf,
}

impl ParamKind {
    pub fn name(self) -> &'static str {
        match self {
            ParamKind::Bf => "BF",
            ParamKind::Vaf => "VAF",
            ParamKind::VbeOffset => "V_BE offset",
            ParamKind::Ikf => "IKF",
        }
    }

    /// Field name in JSON, with the unit.
    pub fn key(self) -> &'static str {
        match self {
            ParamKind::Bf => "bf",
            ParamKind::Vaf => "vaf_v",
            ParamKind::VbeOffset => "vbe_offset_v",
            ParamKind::Ikf => "ikf_a",
        }
    }

    /// Which parameter to hold first when two share the weakest direction equally:
    /// the one the measurement is least designed to see.
    fn hold_priority(self) -> u8 {
        match self {
            ParamKind::Ikf => 0,
            ParamKind::Bf => 1,
            ParamKind::Vaf => 2,
            ParamKind::VbeOffset => 3,
        }
    }

    /// False for a value no bipolar transistor has: the fit ran off because the data do
    /// not bound the parameter (BF 1 to 100,000, VAF at least 0.5 V, IKF at least 1 pA;
    /// wide on purpose, common practice, no source). The offset is bounded by its error.
    fn plausible(self, value: Option<f64>) -> bool {
        match (self, value) {
            (ParamKind::Bf, Some(v)) => (1.0..=1e5).contains(&v),
            (ParamKind::Vaf, Some(v)) => v >= 0.5,
            (ParamKind::Ikf, Some(v)) => v >= 1e-12,
            (ParamKind::VbeOffset, Some(v)) => v.abs() < 0.5,
            (_, None) => true,
        }
    }

    fn plausible_range(self) -> &'static str {
        match self {
            ParamKind::Bf => "1 to 100,000",
            ParamKind::Vaf => "0.5 V or more",
            ParamKind::Ikf => "1 pA or more",
            ParamKind::VbeOffset => "within ±0.5 V",
        }
    }

    fn step(self) -> f64 {
        1e-4
    }

    /// Largest standard error (in the fitted coordinate u) at which the data still say
    /// something about the parameter: a factor 2 on BF, all of 1/VAF (one error away
    /// the data cannot tell the Early effect from none), 2 mV of offset (as large as the
    /// whole offset sigma of an unmatched dual), a factor e on IKF.
    fn se_limit_u(self, u: f64) -> f64 {
        match self {
            ParamKind::Bf => std::f64::consts::LN_2,
            ParamKind::Vaf => u.abs(),
            ParamKind::VbeOffset => 2.0,
            ParamKind::Ikf => 1.0,
        }
    }
}

/// Parameter values in SI. `None` for VAF or IKF means infinite (no Early effect, no
/// high-current roll-off).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ParamValues {
    pub bf: f64,
    pub vaf_v: Option<f64>,
    pub vbe_offset_v: f64,
    pub ikf_a: Option<f64>,
}

impl ParamValues {
    fn to_u(self, k: ParamKind) -> f64 {
        match k {
            ParamKind::Bf => self.bf.ln(),
            ParamKind::Vaf => self.vaf_v.map_or(0.0, |v| 100.0 / v),
            ParamKind::VbeOffset => self.vbe_offset_v * 1e3,
            ParamKind::Ikf => self.ikf_a.map_or(10f64.ln(), f64::ln),
        }
    }

    fn set_u(&mut self, k: ParamKind, u: f64) {
        match k {
            ParamKind::Bf => self.bf = u.exp(),
            // Below 1e-6 (VAF above 100 MV) the effect is below any bench resolution.
            ParamKind::Vaf => self.vaf_v = (u > 1e-6).then(|| 100.0 / u),
            ParamKind::VbeOffset => self.vbe_offset_v = u * 1e-3,
            ParamKind::Ikf => self.ikf_a = Some(u.exp()),
        }
    }

    /// d(value)/du, for carrying standard errors from u to SI (delta method).
    fn dvalue_du(&self, k: ParamKind) -> f64 {
        match k {
            ParamKind::Bf => self.bf,
            ParamKind::Vaf => self.vaf_v.map_or(f64::INFINITY, |v| v * v / 100.0),
            ParamKind::VbeOffset => 1e-3,
            ParamKind::Ikf => self.ikf_a.unwrap_or(f64::INFINITY),
        }
    }

    /// Puts parameter `k` back to the base class's value (the offset to zero).
    fn reset(&mut self, k: ParamKind, base: &BjtParams) {
        match k {
            ParamKind::Bf => self.bf = base.beta_forward,
            ParamKind::Vaf => self.vaf_v = base.early_voltage_v,
            ParamKind::VbeOffset => self.vbe_offset_v = 0.0,
            ParamKind::Ikf => self.ikf_a = base.knee_current_a,
        }
    }

    pub fn get(&self, k: ParamKind) -> Option<f64> {
        match k {
            ParamKind::Bf => Some(self.bf),
            ParamKind::Vaf => self.vaf_v,
            ParamKind::VbeOffset => Some(self.vbe_offset_v),
            ParamKind::Ikf => self.ikf_a,
        }
    }
}

/// What the fit needs besides the points.
#[derive(Debug, Clone)]
pub struct FitSetup {
    pub topology: Topology,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    /// Ambient for points without their own.
    pub ambient_k: f64,
    /// The supply the bench used (helpers' collectors); at least the largest V_out.
    pub supply_v: f64,
    pub self_heating: bool,
    /// IS, BR, temperature rules, ratings, thermal data and cost come from here; its BF,
    /// VAF and IKF are the starting point.
    pub base: TransistorClass,
    /// Fit IKF too (otherwise it stays at the base class's value).
    pub fit_ikf: bool,
}

/// One parameter of the result.
#[derive(Debug, Clone, PartialEq)]
pub struct FittedParam {
    pub kind: ParamKind,
    /// SI value; `None` is infinite (VAF, IKF).
    pub value: Option<f64>,
    /// Standard error in SI, when the parameter was fitted and the covariance exists.
    pub std_error: Option<f64>,
    /// False when held at the base class value (see the warnings for why).
    pub fitted: bool,
    /// True when the error comes from the misfit's profile (or a rival optimum) and is
    /// more than 10 % above the linear one: the valley is curved along this parameter.
    pub profile_widened: bool,
    /// Held parameters this error assumes exact (empty when nothing relevant is held):
    /// the error leaves out their doubt, see [`ModelFit::sensitivities`].
    pub conditional_on: Vec<ParamKind>,
}

/// How the fitted values move when a held parameter moves by `step` (SI): what the
/// conditional standard errors leave out.
#[derive(Debug, Clone, PartialEq)]
pub struct Sensitivity {
    pub held: ParamKind,
    pub step: f64,
    /// Change of each fitted parameter's value (SI).
    pub shifts: Vec<(ParamKind, f64)>,
}

/// Why a parameter was not given a confident number.
#[derive(Debug, Clone, PartialEq)]
pub enum Unidentified {
    /// Every point at one output voltage: VAF has nothing to act on.
    NoVoltageSpread,
    /// Confounded with other parameters (condition number of the scaled Jacobian).
    Confounded {
        with: Vec<ParamKind>,
        condition: f64,
    },
    /// The currents stay far below the knee.
    KneeNotReached { largest_current_a: f64 },
    /// The fitted Early effect is zero or negative: the curves show no slope.
    NoSlope,
}

#[derive(Debug, Clone, PartialEq)]
pub struct HeldParam {
    pub kind: ParamKind,
    pub why: Unidentified,
}

/// The model fit's result.
#[derive(Debug, Clone, PartialEq)]
pub struct ModelFit {
    pub params: Vec<FittedParam>,
    pub held: Vec<HeldParam>,
    /// For each held parameter the others depend on, how they move with it.
    pub sensitivities: Vec<Sensitivity>,
    /// Points used (active region) and their residuals `I_model / I_meas - 1`.
    pub points_used: usize,
    pub largest_relative_residual: f64,
    /// File line of the point with the largest residual.
    pub largest_residual_line: usize,
    pub rms_relative_residual: f64,
    /// Condition number of the scaled Jacobian of the final fit.
    pub condition: f64,
    pub converged: bool,
    pub termination: String,
    pub evaluations: usize,
    /// The base class with the fitted values in place (matching not yet touched).
    pub values: ParamValues,
}

/// Why no model fit could be made at all.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum ModelFitFailure {
    #[error("only {active} of {total} points are in the active region (the fit needs at least {needed}); measure at higher output voltages")]
    TooFewPoints {
        active: usize,
        total: usize,
        needed: usize,
    },
    #[error("the circuit cannot be solved with the starting parameters at line {line}: {reason}")]
    StartFails { line: usize, reason: String },
    /// The data cannot support a fit: too few distinct points, nothing determinable, a
    /// parameter without a finite error or run outside physical values.
    #[error("the data cannot support a model fit: {reason}")]
    Unsupported { reason: String },
    #[error("the output voltage {v_out_v} V at line {line} is above the supply {supply_v} V; give the bench supply with --supply")]
    AboveSupply {
        line: usize,
        v_out_v: f64,
        supply_v: f64,
    },
}

/// The class with `values` in place of the base's BF, VAF and IKF.
pub fn class_with(base: &TransistorClass, values: &ParamValues) -> TransistorClass {
    let mut c = base.clone();
    c.model.beta_forward = values.bf;
    c.model.early_voltage_v = values.vaf_v;
    c.model.knee_current_a = values.ikf_a;
    c
}

/// Model output currents at `points` for `values`, through the solver.
pub fn model_currents(
    setup: &FitSetup,
    values: &ParamValues,
    points: &[Measurement],
) -> Result<Vec<f64>, (usize, String)> {
    let class = class_with(&setup.base, values);
    let design = Design {
        shape: crate::model::Shape::SINGLE,
        topology: setup.topology,
        pair: &class,
        helper: Some(&class),
        re1_ohm: setup.re1_ohm,
        re2_ohm: setup.re2_ohm,
        re_tcr_per_k: 0.0,
        r_ref: None,
    };
    let mm = Mismatch {
        dvbe_v: [values.vbe_offset_v, 0.0],
        ..Mismatch::default()
    };
    let net = Netlist::compile(&design, &mm).map_err(|e| (0, e.to_string()))?;
    let opts = SolveOptions {
        self_heating: setup.self_heating,
    };
    points
        .iter()
        .map(|p| {
            let op = OperatingPoint {
                i_in_a: p.i_in_a,
                v_out_v: p.v_out_v,
                supply_v: setup.supply_v,
                t_amb_k: p.t_amb_k.unwrap_or(setup.ambient_k),
                rail_v: None,
            };
            net.solve(&op, &opts)
                .map(|s| s.i_out_a)
                .map_err(|e| (p.line, e.to_string()))
        })
        .collect()
}

/// Fits the model to the active-region points.
pub fn fit_model(
    setup: &FitSetup,
    all_points: &[Measurement],
    vaf_start_v: Option<f64>,
) -> Result<ModelFit, ModelFitFailure> {
    let points: Vec<Measurement> = all_points
        .iter()
        .filter(|p| is_active(p, setup.topology, setup.re2_ohm))
        .copied()
        .collect();
    if let Some(p) = points.iter().find(|p| p.v_out_v > setup.supply_v) {
        return Err(ModelFitFailure::AboveSupply {
            line: p.line,
            v_out_v: p.v_out_v,
            supply_v: setup.supply_v,
        });
    }
    let mut free = vec![ParamKind::Bf, ParamKind::Vaf, ParamKind::VbeOffset];
    if setup.fit_ikf {
        free.push(ParamKind::Ikf);
    }
    let base = &setup.base.model;
    let largest_current = points
        .iter()
        .map(|p| p.i_out_a.max(p.i_in_a))
        .fold(0.0, f64::max);
    let start = ParamValues {
        bf: base.beta_forward,
        vaf_v: vaf_start_v.or(base.early_voltage_v).or(Some(100.0)),
        vbe_offset_v: 0.0,
        ikf_a: if setup.fit_ikf {
            base.knee_current_a.or(Some(10.0 * largest_current))
        } else {
            base.knee_current_a
        },
    };
    // The starting point must solve everywhere, or nothing can be said.
    if let Err((line, reason)) = model_currents(setup, &start, &points) {
        return Err(ModelFitFailure::StartFails { line, reason });
    }

    let mut held: Vec<HeldParam> = Vec::new();
    let v_lo = points
        .iter()
        .map(|p| p.v_out_v)
        .fold(f64::INFINITY, f64::min);
    let v_hi = points.iter().map(|p| p.v_out_v).fold(0.0, f64::max);
    if v_hi - v_lo < 1e-3 * v_hi.max(1.0) {
        free.retain(|k| *k != ParamKind::Vaf);
        held.push(HeldParam {
            kind: ParamKind::Vaf,
            why: Unidentified::NoVoltageSpread,
        });
    }

    let needed = free.len() + 1;
    if points.len() < needed {
        return Err(ModelFitFailure::TooFewPoints {
            active: points.len(),
            total: all_points.len(),
            needed,
        });
    }
    if distinct_points(&points) < needed {
        return Err(ModelFitFailure::Unsupported {
            reason: format!(
                "the {} active rows hold only {} distinct operating points (repeated rows count once) and {} parameters need at least {}; measure at more currents and output voltages",
                points.len(),
                distinct_points(&points),
                free.len(),
                needed
            ),
        });
    }
    let mut values = start;
    for h in &held {
        // A held parameter takes the base class's value, whatever the start was.
        values.reset(h.kind, base);
    }
    let (outcome, reach) = loop {
        if free.is_empty() {
            return Err(ModelFitFailure::Unsupported {
                reason: format!(
                    "no parameter can be determined from these data ({})",
                    held.iter()
                        .map(|h| h.kind.name())
                        .collect::<Vec<_>>()
                        .join(", ")
                ),
            });
        }
        let Some((out, rivals)) = best_of_starts(setup, &points, &values, &free) else {
            return Err(ModelFitFailure::StartFails {
                line: points[0].line,
                reason: "the model could not be evaluated".into(),
            });
        };
        let mut trial = values;
        for (k, u) in free.iter().zip(&out.params) {
            trial.set_u(*k, *u);
        }
        // A parameter run outside what a transistor has (BF to 1e15). If the data fit
        // nearly as well (within 2 errors, 4 s^2) with it at the base value, they cannot
        // tell the two apart and it is held; if they need the impossible value, the data
        // (or the stated circuit) cannot support a fit.
        if let Some(i) = free.iter().position(|k| !k.plausible(trial.get(*k))) {
            let kind = free[i];
            let mut pinned = trial;
            pinned.reset(kind, base);
            let others: Vec<ParamKind> = free.iter().copied().filter(|k| *k != kind).collect();
            let s2 = out.ssr / out.dof.max(1) as f64;
            let tie =
                run(setup, &points, &pinned, &others).is_ok_and(|o| o.ssr - out.ssr <= 4.0 * s2);
            if tie {
                hold(&mut free, &mut values, &mut held, base, i, &out);
                continue;
            }
            return Err(ModelFitFailure::Unsupported {
                reason: format!(
                    "the fit ran {} to {}, outside what a bipolar transistor has ({}){}, and the data fit clearly worse at the base class's value: check the topology, the emitter resistors and the supply, or measure at more currents",
                    kind.name(),
                    trial.get(kind).map_or("infinity".into(), |v| super::param_figure(kind, v)),
                    kind.plausible_range(),
                    if held.is_empty() {
                        String::new()
                    } else {
                        format!(
                            " with {} held",
                            held.iter().map(|h| h.kind.name()).collect::<Vec<_>>().join(", ")
                        )
                    }
                ),
            });
        }
        // Numerically singular: some combination of the parameters does not change the
        // data at all. The weakest direction's largest member is held and the rest refitted.
        if out.condition > CONDITION_LIMIT || out.covariance.is_none() {
            let idx = hold_choice(&out.weakest_direction, &free, |_| true);
            hold(&mut free, &mut values, &mut held, base, idx, &out);
            continue;
        }
        if let Some(i) = free.iter().position(|k| *k == ParamKind::Ikf) {
            let se_u = out.covariance.as_ref().map(|c| c[(i, i)].sqrt());
            let far = trial
                .ikf_a
                .is_none_or(|ikf| ikf > IKF_REACH * largest_current);
            if far || se_u.is_none_or(|s| s.is_nan() || s >= 1.0) {
                free.remove(i);
                values.ikf_a = base.knee_current_a;
                held.push(HeldParam {
                    kind: ParamKind::Ikf,
                    why: Unidentified::KneeNotReached {
                        largest_current_a: largest_current,
                    },
                });
                continue;
            }
        }
        if free.contains(&ParamKind::Vaf) && trial.vaf_v.is_none() {
            free.retain(|k| *k != ParamKind::Vaf);
            values.vaf_v = None;
            held.push(HeldParam {
                kind: ParamKind::Vaf,
                why: Unidentified::NoSlope,
            });
            continue;
        }
        // Every parameter free: how far each can move per standard error along the
        // misfit's profile, widened by any other start that ended inside one s^2. Held
        // only when the data bound it on neither side within its limit: a parameter
        // bounded on one side is reported with its (large) error, not replaced by the
        // base value (which would make every other error conditional and wrong).
        let reach = reaches(setup, &points, &trial, &free, &out, &rivals);
        let loose: Vec<bool> = free
            .iter()
            .zip(&reach)
            .map(|(k, r)| *k != ParamKind::Ikf && r.0.min(r.1) > k.se_limit_u(trial.to_u(*k)))
            .collect();
        if free.len() > 1 && loose.iter().any(|l| *l) {
            let idx = hold_choice(&out.weakest_direction, &free, |i| loose[i]);
            hold(&mut free, &mut values, &mut held, base, idx, &out);
            continue;
        }
        values = trial;
        break (out, reach);
    };

    // Held values the data depend on make the other errors conditional on them.
    let conditional_on: Vec<ParamKind> = held
        .iter()
        .filter(|h| {
            matches!(
                h.why,
                Unidentified::Confounded { .. } | Unidentified::NoVoltageSpread
            )
        })
        .map(|h| h.kind)
        .collect();
    let sensitivities = conditional_on
        .iter()
        .filter_map(|h| sensitivity(setup, &points, &values, &free, &outcome, *h))
        .collect();

    let mut params = Vec::new();
    for kind in [
        ParamKind::Bf,
        ParamKind::Vaf,
        ParamKind::VbeOffset,
        ParamKind::Ikf,
    ] {
        let idx = free.iter().position(|k| *k == kind);
        let (std_error, widened) = match idx {
            Some(i) => {
                let linear = outcome
                    .covariance
                    .as_ref()
                    .map_or(f64::NAN, |c| c[(i, i)].max(0.0).sqrt());
                let (lo, hi) = reach[i];
                let se_u = lo.max(hi);
                // Each side carried to SI through the parametrisation itself (ln BF makes
                // the upper side longer than the lower), the larger one reported.
                let u = values.to_u(kind);
                let at = |du: f64| {
                    let mut v = values;
                    v.set_u(kind, u + du);
                    v.get(kind).unwrap_or(f64::INFINITY)
                };
                let here = values.get(kind).unwrap_or(f64::INFINITY);
                let mut se = (here - at(-lo)).abs().max((at(hi) - here).abs());
                if !se.is_finite() {
                    // One side reaches VAF = infinity (no Early effect): the delta method
                    // on 1/VAF, whose error is what the data bound.
                    se = se_u * values.dvalue_du(kind).abs();
                }
                if !se.is_finite() {
                    return Err(ModelFitFailure::Unsupported {
                        reason: format!(
                            "{} has no finite standard error at the fitted point ({})",
                            kind.name(),
                            values
                                .get(kind)
                                .map_or("infinite".into(), |v| format!("{v:e}"))
                        ),
                    });
                }
                (Some(se), se_u > 1.1 * linear)
            }
            None => (None, false),
        };
        params.push(FittedParam {
            kind,
            value: values.get(kind),
            std_error,
            fitted: idx.is_some(),
            profile_widened: widened,
            conditional_on: if idx.is_some() {
                conditional_on.clone()
            } else {
                Vec::new()
            },
        });
    }
    let (largest_idx, largest) = outcome
        .residuals
        .iter()
        .enumerate()
        .map(|(i, r)| (i, r.abs()))
        .fold((0, 0.0), |acc, x| if x.1 > acc.1 { x } else { acc });
    Ok(ModelFit {
        params,
        held,
        sensitivities,
        points_used: points.len(),
        largest_relative_residual: largest,
        largest_residual_line: points[largest_idx].line,
        rms_relative_residual: (outcome.ssr / points.len() as f64).sqrt(),
        condition: outcome.condition,
        converged: outcome.converged,
        termination: outcome.termination,
        evaluations: outcome.evaluations,
        values,
    })
}

/// Operating points that differ in current, voltage or ambient (a repeated row adds a
/// reading, not a point).
fn distinct_points(points: &[Measurement]) -> usize {
    let mut keys: Vec<(u64, u64, u64)> = points
        .iter()
        .map(|p| {
            (
                p.i_in_a.to_bits(),
                p.v_out_v.to_bits(),
                p.t_amb_k.map_or(0, f64::to_bits),
            )
        })
        .collect();
    keys.sort_unstable();
    keys.dedup();
    keys.len()
}

/// Among the free parameters allowed by `candidate`, the one with the largest share in
/// the weakest direction (ties: the lowest hold priority).
fn hold_choice(weakest: &[f64], free: &[ParamKind], candidate: impl Fn(usize) -> bool) -> usize {
    (0..free.len())
        .filter(|i| candidate(*i))
        .max_by(|a, b| {
            weakest[*a]
                .abs()
                .total_cmp(&weakest[*b].abs())
                .then(free[*b].hold_priority().cmp(&free[*a].hold_priority()))
        })
        .unwrap_or(0)
}

/// Holds `free[idx]` at the base value, naming the parameters it shares the weakest
/// direction with.
fn hold(
    free: &mut Vec<ParamKind>,
    values: &mut ParamValues,
    held: &mut Vec<HeldParam>,
    base: &BjtParams,
    idx: usize,
    out: &LsOutcome,
) {
    let kind = free[idx];
    let with: Vec<ParamKind> = free
        .iter()
        .enumerate()
        .filter(|(j, _)| *j != idx && out.weakest_direction.get(*j).is_some_and(|w| w.abs() > 0.1))
        .map(|(_, k)| *k)
        .collect();
    free.remove(idx);
    values.reset(kind, base);
    held.push(HeldParam {
        kind,
        why: Unidentified::Confounded {
            with,
            condition: out.condition,
        },
    });
}

/// The fit from several starting points (the given one, BF a factor 3 either way, VAF a
/// factor 2 either way): the lowest misfit, and the other optima whose misfit is within
/// one s^2 of it (a second valley the data cannot rule out).
fn best_of_starts(
    setup: &FitSetup,
    points: &[Measurement],
    values: &ParamValues,
    free: &[ParamKind],
) -> Option<(LsOutcome, Vec<LsOutcome>)> {
    let mut starts = vec![*values];
    if free.contains(&ParamKind::Bf) {
        for f in [3.0, 1.0 / 3.0] {
            let mut s = *values;
            s.bf = (s.bf * f).clamp(5.0, 5e3);
            starts.push(s);
        }
    }
    if free.contains(&ParamKind::Vaf) {
        for f in [2.0, 0.5] {
            let mut s = *values;
            s.vaf_v = s.vaf_v.map(|v| v * f);
            starts.push(s);
        }
    }
    let mut outs: Vec<LsOutcome> = starts
        .iter()
        .filter_map(|s| run(setup, points, s, free).ok())
        .filter(|o| o.ssr.is_finite())
        .collect();
    let lowest = |outs: &[LsOutcome], only_plausible: bool| {
        (0..outs.len())
            .filter(|i| {
                !only_plausible
                    || free.iter().zip(&outs[*i].params).all(|(k, u)| {
                        let mut v = *values;
                        v.set_u(*k, *u);
                        k.plausible(v.get(*k))
                    })
            })
            .min_by(|a, b| outs[*a].ssr.total_cmp(&outs[*b].ssr))
    };
    let mut best = lowest(&outs, false)?;
    // Along a flat valley one start may drift to BF = 1e15 while another stops at a
    // physical point the data fit as well (within one s^2): keep the physical one.
    if let Some(p) = lowest(&outs, true) {
        let s2 = outs[best].ssr / outs[best].dof.max(1) as f64;
        if outs[p].ssr - outs[best].ssr <= s2 {
            best = p;
        }
    }
    let best = outs.swap_remove(best);
    let s2 = best.ssr / best.dof.max(1) as f64;
    outs.retain(|o| o.ssr - best.ssr < s2);
    Some((best, outs))
}

/// One-sigma reach of each free parameter below and above its value, in u: the profile
/// reach ([`profile_reach`]) or the linear error, whichever is larger, widened to cover
/// any rival optimum. Noise-free data (nothing to scale by) keep the linear error.
fn reaches(
    setup: &FitSetup,
    points: &[Measurement],
    at: &ParamValues,
    free: &[ParamKind],
    out: &LsOutcome,
    rivals: &[LsOutcome],
) -> Vec<(f64, f64)> {
    let cov = out.covariance.as_ref().expect("checked by the caller");
    let noiseless = (out.ssr / points.len() as f64).sqrt() < 1e-9 || out.dof == 0;
    (0..free.len())
        .map(|i| {
            let linear = cov[(i, i)].max(0.0).sqrt();
            let limit = free[i].se_limit_u(out.params[i]);
            let (mut lo, mut hi) = if noiseless {
                (linear, linear)
            } else {
                (
                    profile_reach(setup, points, at, free, out, i, -1.0, linear, limit).max(linear),
                    profile_reach(setup, points, at, free, out, i, 1.0, linear, limit).max(linear),
                )
            };
            for r in rivals {
                let d = r.params[i] - out.params[i];
                if d < 0.0 {
                    lo = lo.max(-d);
                } else {
                    hi = hi.max(d);
                }
            }
            (lo, hi)
        })
        .collect()
}

/// How far parameter `free[i]` can move (in u, to the side `sign`) per standard error,
/// read from the profile of the misfit (Bates & Watts, *Nonlinear Regression Analysis
/// and Its Applications*, ch. 6, profile t): the parameter is pinned, the others
/// refitted, and the step found at which the sum of squares rises by [`PROFILE_SIGMAS`]
/// squared times s^2, divided by [`PROFILE_SIGMAS`]. Several errors out rather than one
/// so that a valley that flattens beyond one error (the Wilson mirrors' BF and offset)
/// widens the error instead of leaving the truth five errors away. Starts at that many
/// linear errors and rescales the step by `k / sqrt(rise / s^2)`, exact for a quadratic
/// profile; stops within 25 % of the target rise, after six steps, or once well beyond
/// `limit` (the data then say nothing useful).
#[allow(clippy::too_many_arguments)]
fn profile_reach(
    setup: &FitSetup,
    points: &[Measurement],
    at: &ParamValues,
    free: &[ParamKind],
    out: &LsOutcome,
    i: usize,
    sign: f64,
    linear: f64,
    limit: f64,
) -> f64 {
    let k = PROFILE_SIGMAS;
    let s2 = out.ssr / out.dof.max(1) as f64;
    let kind = free[i];
    let others: Vec<ParamKind> = free.iter().copied().filter(|x| *x != kind).collect();
    let mut delta = k * linear;
    for _ in 0..6 {
        let mut pinned = *at;
        pinned.set_u(kind, out.params[i] + sign * delta);
        let Ok(o) = run(setup, points, &pinned, &others) else {
            // The circuit cannot be solved out there: the model itself ends; keep the
            // reach found so far.
            return delta / k;
        };
        let rise = ((o.ssr - out.ssr) / s2).max(0.0);
        if (0.8 * k * k..=1.25 * k * k).contains(&rise) || (rise < k * k && delta > k * limit) {
            return delta / k;
        }
        delta *= if rise < 1e-6 {
            4.0
        } else {
            (k / rise.sqrt()).clamp(0.25, 4.0)
        };
    }
    delta / k
}

/// How many standard errors out the profile is read ([`profile_reach`]): 3, so that a
/// flattening within three errors (measured on the Wilson mirrors at 100 ppm noise)
/// shows in the reported error.
pub const PROFILE_SIGMAS: f64 = 3.0;

/// How the fitted values move when held parameter `held` is changed by a tenth of its
/// value (the offset by 1 mV), the others refitted: what their conditional errors leave
/// out.
fn sensitivity(
    setup: &FitSetup,
    points: &[Measurement],
    values: &ParamValues,
    free: &[ParamKind],
    out: &LsOutcome,
    held: ParamKind,
) -> Option<Sensitivity> {
    let mut moved = *values;
    let step = match held {
        ParamKind::Bf => {
            moved.bf *= 1.1;
            0.1 * values.bf
        }
        ParamKind::Vaf => {
            let v = values.vaf_v?;
            moved.vaf_v = Some(1.1 * v);
            0.1 * v
        }
        ParamKind::VbeOffset => {
            moved.vbe_offset_v += 1e-3;
            1e-3
        }
        ParamKind::Ikf => {
            let v = values.ikf_a?;
            moved.ikf_a = Some(1.1 * v);
            0.1 * v
        }
    };
    let o = run(setup, points, &moved, free).ok()?;
    let shifts = free
        .iter()
        .zip(o.params.iter().zip(&out.params))
        .map(|(k, (a, b))| {
            let mut x = *values;
            x.set_u(*k, *a);
            let mut y = *values;
            y.set_u(*k, *b);
            (
                *k,
                match (x.get(*k), y.get(*k)) {
                    (Some(a), Some(b)) => a - b,
                    _ => f64::INFINITY,
                },
            )
        })
        .collect();
    Some(Sensitivity { held, step, shifts })
}

/// One least-squares run over the `free` parameters, the others at `values`.
fn run(
    setup: &FitSetup,
    points: &[Measurement],
    values: &ParamValues,
    free: &[ParamKind],
) -> Result<LsOutcome, LsError> {
    let start: Vec<f64> = free.iter().map(|k| values.to_u(*k)).collect();
    let steps: Vec<f64> = free.iter().map(|k| k.step()).collect();
    let model = |u: &[f64]| -> Option<Vec<f64>> {
        let mut v = *values;
        for (k, x) in free.iter().zip(u) {
            v.set_u(*k, *x);
        }
        let currents = model_currents(setup, &v, points).ok()?;
        Some(
            currents
                .iter()
                .zip(points)
                .map(|(i, p)| i / p.i_out_a - 1.0)
                .collect(),
        )
    };
    if free.is_empty() {
        // Nothing left to fit: report the residuals of the held values.
        let r = model(&[]).ok_or(LsError::StartFails)?;
        let ssr = r.iter().map(|x| x * x).sum();
        return Ok(LsOutcome {
            params: vec![],
            dof: r.len(),
            residuals: r,
            ssr,
            covariance: None,
            condition: 1.0,
            weakest_direction: vec![],
            termination: "nothing to fit".into(),
            converged: true,
            evaluations: 1,
            failed_evaluations: 0,
        });
    }
    least_squares(&model, &start, &steps, points.len())
}

/// The class the fit starts from when no catalog class is named: generic small-signal
/// silicon, typical values from general engineering knowledge (not a check value).
pub fn generic_class(polarity: Polarity) -> TransistorClass {
    let (id, vaf) = match polarity {
        Polarity::Npn => ("generic-npn-small-signal", 100.0),
        Polarity::Pnp => ("generic-pnp-small-signal", 50.0),
    };
    let mut model = BjtParams::new(10e-15, 150.0, Some(vaf));
    model.t_nom_k = ZERO_CELSIUS_K + 27.0;
    TransistorClass {
        id: id.to_string(),
        summary: format!(
            "generic small-signal {} transistor, typical values",
            polarity.as_str().to_uppercase()
        ),
        polarity,
        devices_per_package: 2,
        package: "SOT-363".to_string(),
        model,
        matching: Some(Matching {
            vbe_offset_sigma_v: 2.5e-3,
            beta_mismatch_sigma: 0.05,
        }),
        ratings: Ratings {
            vceo_v: 40.0,
            ic_max_a: 0.1,
            power_per_package_w: 0.3,
        },
        thermal: Thermal {
            theta_self_k_per_w: 625.0,
            theta_mutual_k_per_w: 300.0,
        },
        unit_cost: 0.06,
        provenance: "generic small-signal silicon, typical of the class from general \
                     engineering knowledge; price illustrative"
            .to_string(),
    }
}
