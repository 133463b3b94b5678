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
//! Identifiability. The data say little about a parameter when (a) it has no effect on
//! them (VAF when V_out never changes), or (b) its effect is nearly matched by another's:
//! in a simple mirror without emitter resistors, a beta error and a V_BE offset both
//! scale every curve by almost the same constant factor (only the small change of Q1's
//! Early factor with V_BE across currents tells them apart), so only their combination is
//! seen through bench noise. After each fit the parameters whose standard error exceeds
//! a limit (`se_limit_u`: BF to a factor 1.6, 1/VAF to half its value, the offset to
//! 2 mV, IKF to a factor e), and all of them when the column-scaled Jacobian's condition
//! number exceeds [`CONDITION_LIMIT`], are candidates; the candidate with the largest
//! share in the weakest direction is held at its base value, named in a warning with the
//! parameters it is confounded with, and the fit repeated. IKF is also held when the data
//! stay well below it (its fitted value beyond [`IKF_REACH`] times the largest current).
//! Last, a profile check ([`PROFILE_MIN`]) holds a parameter whose misfit valley is too
//! curved for its linear standard error to mean anything (the Wilson mirrors, where only
//! BF x VAF is seen through noise). Held parameters take the base class's value.
//! Noiseless data therefore identify what is mathematically identifiable; noisy data
//! only what the noise leaves identifiable.

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

    fn step(self) -> f64 {
        1e-4
    }

    /// Largest standard error (in the fitted coordinate u) at which the data still say
    /// something about the parameter: a factor of about 1.6 on BF, half of 1/VAF, 2 mV of
    /// offset (as large as the whole offset sigma of an unmatched dual), a factor e on IKF.
    fn se_limit_u(self, u: f64) -> f64 {
        match self {
            ParamKind::Bf => 0.5,
            ParamKind::Vaf => 0.5 * u.abs(),
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

    fn get(&self, k: ParamKind) -> Option<f64> {
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
    /// The misfit hardly grows along a curved valley shared with `with`: pinned 2
    /// standard errors away (the others refitted) the SSR rose by only `ratio` s^2,
    /// where a well-determined parameter gives 4.
    CurvedValley { with: Vec<ParamKind>, ratio: f64 },
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
        r_ref: None,
        topology: setup.topology,
        pair: &class,
        helper: Some(&class),
        re1_ohm: setup.re1_ohm,
        re2_ohm: setup.re2_ohm,
        re_tcr_per_k: 0.0,
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
                rail_v: None,
                i_in_a: p.i_in_a,
                v_out_v: p.v_out_v,
                supply_v: setup.supply_v,
                t_amb_k: p.t_amb_k.unwrap_or(setup.ambient_k),
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
    let mut values = start;
    for h in &held {
        // A held parameter takes the base class's value, whatever the start was.
        values.reset(h.kind, base);
    }
    let outcome = loop {
        let out = run(setup, &points, &values, &free);
        let out = match out {
            Ok(o) => o,
            Err(LsError::StartFails) | Err(LsError::TooFewResiduals { .. }) => {
                return Err(ModelFitFailure::StartFails {
                    line: points[0].line,
                    reason: "the model could not be evaluated".into(),
                })
            }
        };
        let mut trial = values;
        for (k, u) in free.iter().zip(&out.params) {
            trial.set_u(*k, *u);
        }
        // Unidentified directions first: hold the parameter most involved and refit.
        // Numerically singular: the weakest direction's largest member. Statistically
        // unidentified: among parameters whose error exceeds their limit, the one with the
        // largest share in the weakest direction.
        let se_u: Vec<f64> = (0..free.len())
            .map(|i| {
                out.covariance
                    .as_ref()
                    .map_or(f64::INFINITY, |c| c[(i, i)].max(0.0).sqrt())
            })
            .collect();
        let singular = out.condition > CONDITION_LIMIT;
        let loose: Vec<bool> = free
            .iter()
            .zip(&se_u)
            .map(|(k, se)| singular || se.is_nan() || *se > k.se_limit_u(trial.to_u(*k)))
            .collect();
        if free.len() > 1 && loose.iter().any(|l| *l) && *free != [ParamKind::Ikf] {
            let weakest = &out.weakest_direction;
            let idx = (0..free.len())
                .filter(|i| loose[*i] && (free[*i] != ParamKind::Ikf || singular))
                .max_by(|a, b| {
                    weakest[*a]
                        .abs()
                        .total_cmp(&weakest[*b].abs())
                        .then(free[*b].hold_priority().cmp(&free[*a].hold_priority()))
                });
            if let Some(idx) = idx {
                let kind = free[idx];
                let with: Vec<ParamKind> = free
                    .iter()
                    .enumerate()
                    .filter(|(j, _)| *j != idx && weakest[*j].abs() > 0.1)
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
                continue;
            }
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
        // Profile check (Bates & Watts, Nonlinear Regression Analysis and Its
        // Applications, ch. 6, profile t): pin each parameter 2 standard errors away and
        // refit the others; a quadratic misfit surface raises the SSR by 4 s^2. Much less
        // means a curved valley the linear errors do not see (the Wilson mirrors, where
        // beta shows only through 2/BF^2 and the product BF VAF), so a parameter is held.
        // Skipped on noise-free data (nothing to compare with).
        if let Some((i, ratio)) = weakest_profile(setup, &points, &trial, &free, &out) {
            let kind = free[i];
            let with: Vec<ParamKind> = free.iter().copied().filter(|k| *k != kind).collect();
            free.remove(i);
            values.reset(kind, base);
            held.push(HeldParam {
                kind,
                why: Unidentified::CurvedValley { with, ratio },
            });
            continue;
        }
        values = trial;
        break out;
    };

    let mut params = Vec::new();
    for kind in [
        ParamKind::Bf,
        ParamKind::Vaf,
        ParamKind::VbeOffset,
        ParamKind::Ikf,
    ] {
        let idx = free.iter().position(|k| *k == kind);
        let std_error = idx.and_then(|i| {
            outcome
                .covariance
                .as_ref()
                .map(|c| c[(i, i)].max(0.0).sqrt() * values.dvalue_du(kind).abs())
                .filter(|s| s.is_finite())
        });
        params.push(FittedParam {
            kind,
            value: values.get(kind),
            std_error,
            fitted: idx.is_some(),
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

/// A profile ratio below this (a 2-SE step costing 2.5 s^2 or less instead of the
/// quadratic model's 4) means the real 2-sigma reach is at least 26 % beyond the reported
/// error on one side. Nearly linear fits give 3.9 to 4.1 (measured on the synthetic
/// tests); the Wilson mirrors at 100 ppm noise give about 2.
pub const PROFILE_MIN: f64 = 2.5;

/// Among the free parameters whose profile is flatter than [`PROFILE_MIN`] on either
/// side, the one to hold (the lowest hold priority: the parameter the measurement is
/// least designed to see), with its smaller ratio `(SSR(pinned at 2 SE) - SSR) / s^2`.
fn weakest_profile(
    setup: &FitSetup,
    points: &[Measurement],
    at: &ParamValues,
    free: &[ParamKind],
    out: &LsOutcome,
) -> Option<(usize, f64)> {
    let cov = out.covariance.as_ref()?;
    let s2 = out.ssr / out.dof.max(1) as f64;
    if free.len() < 2 || (out.ssr / points.len() as f64).sqrt() < 1e-9 {
        return None;
    }
    let mut flat: Vec<(usize, f64)> = Vec::new();
    for (i, kind) in free.iter().enumerate() {
        let se = cov[(i, i)].max(0.0).sqrt();
        let others: Vec<ParamKind> = free.iter().copied().filter(|k| k != kind).collect();
        let mut lowest = f64::INFINITY;
        for sign in [-1.0, 1.0] {
            let mut pinned = *at;
            pinned.set_u(*kind, out.params[i] + sign * 2.0 * se);
            if let Ok(o) = run(setup, points, &pinned, &others) {
                lowest = lowest.min((o.ssr - out.ssr) / s2);
            }
        }
        if lowest < PROFILE_MIN {
            flat.push((i, lowest));
        }
    }
    flat.into_iter()
        .min_by_key(|(i, _)| free[*i].hold_priority())
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
