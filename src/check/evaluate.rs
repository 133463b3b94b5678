//! Verify one candidate: solve it at every corner with self-heating, derive the figures
//! and judge every check. The only file of `check` that calls the circuit solver.
//!
//! Three depths share one code path so a screened verdict and a full one can never
//! disagree: `Screen` stops at the first corner whose error already breaks the accuracy
//! requirement (a valid lower bound: the total error is at least any one corner's
//! `|e| + k*sigma`), `Verdict` judges every check, `Full` adds the compliance voltage by
//! bisection, output resistance at every corner, the error budget and the hottest corner.
//! A screen needs pass or fail and the first check that fails, so a design that has
//! already failed a check (compliance, input voltage, accuracy, noise) is not given the
//! re-solved Monte Carlo yield, which costs a thousand builds: it is rejected under the
//! check it failed (a design failing both `max_noise` and `min_yield` is counted under
//! noise). `Verdict` and `Full` judge every check.

use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Mutex, OnceLock};

use rayon::prelude::*;
use serde::Serialize;

use super::budget::{self, ErrorBudget, ProgramToggles, Sensitivities, Toggled};
use super::corners::{self, OperatingCorner, ROOM_K};
use super::design::ResolvedDesign;
use super::montecarlo::linear_yield;
use super::noise::{self, NoiseFigure};
use super::outputs;
use super::ratings::{self, CornerState, DeviceState};
use super::verdict::{first_failure, governing, Check, CheckName};
use crate::circuit::{
    Design, Mismatch, Netlist, NoiseAnalysis, OperatingPoint, OutputDeviation, RefResistor,
    SolveFailure, SolveOptions, Start,
};
use crate::model::{AccuracyOf, Requirement, TransistorClass};

/// Beta used to switch base current off in the error budget.
const NO_BASE_CURRENT_BETA: f64 = 1e9;
/// Where `min_yield` is set, a first-order yield farther than this from the limit decides
/// the yield check on its own; nearer, every sampled build is re-solved at every corner
/// and that yield decides (MODEL.md). The first-order model moves each build's error by
/// solved sensitivities, so it differs from the re-solved one only through the curvature
/// of the circuit over one build's deviations (a few points of yield at the offsets of
/// discrete parts: 46.5 % against 51.3 % on the design that prompted this rule). Fifteen
/// points is three times that; `tests/rank/yield_verdict.rs` checks on the shipped
/// example with `min_yield` that re-solving the designs just outside the band changes no
/// verdict.
pub const YIELD_SCREEN_BAND: f64 = 0.15;
/// Compliance bisection stops at this width (volts).
const COMPLIANCE_RESOLUTION_V: f64 = 1e-3;

/// Monte Carlo settings, echoed in every report.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct MonteCarlo {
    pub seed: u64,
    pub samples: u32,
}

impl Default for MonteCarlo {
    fn default() -> Self {
        MonteCarlo {
            seed: 1,
            samples: 1000,
        }
    }
}

#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord)]
pub enum Depth {
    Screen,
    Verdict,
    Full,
}

/// The figures a report shows for a candidate (SI units, errors as fractions).
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Figures {
    /// `I_out / I_in` solved at 25 °C (or the nearest ambient corner), `I_in` max,
    /// `V_out` min.
    pub ratio_achieved: f64,
    pub error_systematic: f64,
    pub error_random_sigma: f64,
    /// `systematic + k * random`.
    pub error_total: f64,
    /// Monte Carlo yield on the first-order model (NaN when not computed).
    pub yield_fraction: f64,
    /// Monte Carlo builds behind `yield_fraction` (0 when no yield was sampled).
    pub yield_samples: u32,
    /// Monte Carlo yield with every build re-solved (NaN unless asked for).
    pub yield_solved: f64,
    /// Smallest solved output resistance (NaN when not computed).
    pub r_out_min_ohm: f64,
    pub compliance_v: f64,
    pub v_in_max_v: f64,
    /// White output current noise density at the worst corner, A/√Hz (NaN when not
    /// computed: it is computed at `Full` depth and wherever `max_noise` is set).
    pub noise_a_per_rthz: f64,
    /// Largest power in R_ref over the corners, watts (0 without R_ref, NaN when not
    /// computed).
    pub r_ref_power_w: f64,
    /// `(1/I_out) dI_out/dT` averaged over the ambient range (`I_out` at the hottest
    /// minus at the coldest ambient, over the span and the current at 25 °C), per kelvin,
    /// at the nominal input (current or rail), lowest output voltage.
    pub tempco_per_k: f64,
    /// The steepest slope between neighbouring ambient points (min, 25 °C, max), signed.
    pub tempco_worst_per_k: f64,
    /// The output (1-based) with the largest total error, which the error figures are
    /// of (1 on a single-output design; 0 when not known).
    pub worst_output: u8,
}

impl Default for Figures {
    fn default() -> Self {
        Figures {
            ratio_achieved: f64::NAN,
            error_systematic: f64::NAN,
            error_random_sigma: f64::NAN,
            error_total: f64::NAN,
            yield_fraction: f64::NAN,
            yield_samples: 0,
            yield_solved: f64::NAN,
            r_out_min_ohm: f64::NAN,
            compliance_v: f64::NAN,
            v_in_max_v: f64::NAN,
            noise_a_per_rthz: f64::NAN,
            r_ref_power_w: f64::NAN,
            tempco_per_k: f64::NAN,
            tempco_worst_per_k: f64::NAN,
            worst_output: 0,
        }
    }
}

/// One corner of the corner table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CornerRow {
    pub corner: OperatingCorner,
    pub i_out_a: f64,
    /// The input current (solved through R_ref on a programmed design).
    pub i_in_a: f64,
    pub error: f64,
    pub error_random_sigma: f64,
    pub r_out_ohm: f64,
    pub v_in_v: f64,
    pub t_junction_max_k: f64,
}

/// The outcome of verifying one candidate.
#[derive(Debug, Clone, PartialEq)]
pub struct Evaluation {
    pub cost: f64,
    pub checks: Vec<Check>,
    pub figures: Figures,
    /// Filled at `Full` depth.
    pub corners: Vec<CornerRow>,
    pub budget: Option<ErrorBudget>,
    /// Junction temperatures at the corner with the hottest junction.
    pub hottest: Option<CornerState>,
    /// Output noise at the worst corner, with its breakdown (see `Figures`).
    pub noise: Option<NoiseFigure>,
    /// Transistors whose collector junction is forward biased (`V_CB < 0`) at `V_out` min
    /// at some corner: soft saturation, shown as a caution (MODEL.md).
    pub soft_saturation: Vec<&'static str>,
    /// False when a screen stopped early (only the failing check is then certain), or
    /// when a corner or build could not be solved (figures needing it are not available).
    pub complete: bool,
}

impl Evaluation {
    pub fn feasible(&self) -> bool {
        self.complete && self.checks.iter().all(|c| c.pass)
    }
    pub fn first_failure(&self) -> Option<CheckName> {
        first_failure(&self.checks)
    }
    pub fn governing(&self) -> Option<&Check> {
        governing(&self.checks)
    }
    pub fn check(&self, name: CheckName) -> Option<&Check> {
        self.checks.iter().find(|c| c.name == name)
    }
    pub fn accuracy_margin(&self) -> f64 {
        self.check(CheckName::Accuracy)
            .map_or(f64::NEG_INFINITY, |c| c.margin)
    }
}

/// Device variants for the error budget.
#[derive(Clone, Copy, PartialEq)]
struct Variant {
    self_heating: bool,
    no_early: bool,
    no_base_current: bool,
    no_ref_tcr: bool,
}

const NOMINAL: Variant = Variant {
    self_heating: true,
    no_early: false,
    no_base_current: false,
    no_ref_tcr: false,
};

/// Verifies one resolved design against one requirement.
pub struct Evaluator<'a> {
    req: &'a Requirement,
    design: &'a ResolvedDesign<'a>,
    corners: Vec<OperatingCorner>,
    solves: &'a AtomicU64,
    memo: Mutex<CornerMemo>,
    /// The nominal netlist and the error-budget builds' netlists, compiled once per
    /// evaluator (a bound walk and the evaluation after it solve the same ones). Not
    /// handed on with the memo: a family's members all wait in the search with their
    /// memos, and seven netlists each would take megabytes where the solves take
    /// kilobytes.
    nominal_net: OnceLock<Result<Netlist, SolveFailure>>,
    sens_nets: OnceLock<Result<Vec<(usize, Netlist)>, SolveFailure>>,
}

/// The nominal solve and the error-budget sensitivities a design already has at each of
/// its corners, so a bound walk's corners are not solved again by a later walk or by the
/// evaluation of the same design (`Evaluator::with_memo`, `Evaluator::into_memo`). Every
/// entry is the result of the very solve the evaluation would make (same netlist, same
/// operating point, same start), so reusing it changes no value. A failed solve is not
/// kept: it is made again and fails again.
#[derive(Default)]
pub struct CornerMemo(Vec<Option<Solved>>);

#[derive(Clone)]
struct Solved {
    state: CornerState,
    start: Start,
    /// Only when every budget build of the corner was solved.
    sens: Option<Sensitivities>,
}

impl<'a> Evaluator<'a> {
    pub fn new(
        req: &'a Requirement,
        design: &'a ResolvedDesign<'a>,
        solves: &'a AtomicU64,
    ) -> Self {
        Self::with_memo(req, design, solves, CornerMemo::default())
    }

    /// An evaluator that starts from the solves of `memo`, made by an earlier evaluator
    /// of the same design and requirement (`into_memo`).
    pub fn with_memo(
        req: &'a Requirement,
        design: &'a ResolvedDesign<'a>,
        solves: &'a AtomicU64,
        memo: CornerMemo,
    ) -> Self {
        let corners = corners::corners(req);
        let mut memo = memo;
        memo.0.resize(corners.len(), None);
        Evaluator {
            req,
            design,
            corners,
            solves,
            memo: Mutex::new(memo),
            nominal_net: OnceLock::new(),
            sens_nets: OnceLock::new(),
        }
    }

    /// The corner solves made so far, for a later evaluator of the same design.
    pub fn into_memo(self) -> CornerMemo {
        self.memo.into_inner().unwrap_or_else(|e| e.into_inner())
    }

    /// The nominal design's netlist (`compile(&Mismatch::default(), NOMINAL)`), compiled
    /// on first use.
    fn nominal_net(&self) -> Result<&Netlist, SolveFailure> {
        self.nominal_net
            .get_or_init(|| self.compile(&Mismatch::default(), NOMINAL))
            .as_ref()
            .map_err(Clone::clone)
    }

    fn memo(&self) -> std::sync::MutexGuard<'_, CornerMemo> {
        self.memo.lock().unwrap_or_else(|e| e.into_inner())
    }

    /// The nominal solve at `c` from the memo, or solved (and kept).
    fn nominal_at(
        &self,
        net: &Netlist,
        c: &OperatingCorner,
    ) -> Result<(CornerState, Start), SolveFailure> {
        let at = self.corners.iter().position(|x| x == c);
        if let Some(s) = at.and_then(|i| self.memo().0[i].clone()) {
            return Ok((s.state, s.start));
        }
        let (state, start) = self.solve_net_start(net, c, true)?;
        if let Some(i) = at {
            self.memo().0[i] = Some(Solved {
                state: state.clone(),
                start,
                sens: None,
            });
        }
        Ok((state, start))
    }

    /// The sensitivities at `c` kept in the memo, if every build there was solved.
    fn memo_sens(&self, c: &OperatingCorner) -> Option<Sensitivities> {
        let i = self.corners.iter().position(|x| x == c)?;
        self.memo().0[i].as_ref().and_then(|s| s.sens)
    }

    fn keep_sens(&self, c: &OperatingCorner, d: Sensitivities) {
        if let Some(i) = self.corners.iter().position(|x| x == c) {
            if let Some(s) = self.memo().0[i].as_mut() {
                s.sens = Some(d);
            }
        }
    }

    pub fn design(&self) -> &ResolvedDesign<'a> {
        self.design
    }

    fn circuit_design<'d>(
        &self,
        pair: &'d TransistorClass,
        helper: Option<&'d TransistorClass>,
        variant: Variant,
    ) -> Design<'d> {
        let d = self.design;
        Design {
            shape: d.spec.shape,
            topology: d.spec.topology,
            pair,
            helper,
            re1_ohm: d.spec.re1_ohm,
            re2_ohm: d.spec.re2_ohm,
            re_tcr_per_k: d.resistor.map_or(0.0, |r| r.tcr_per_k),
            r_ref: (d.spec.r_ref_ohm > 0.0).then(|| RefResistor {
                ohm: d.spec.r_ref_ohm,
                // A class's TCR is a band (±TCR) with either sign possible. The end
                // judged is the one that adds to the input side's V_BE drift at both
                // ends of the ambient range: V_in falls as it warms, so I_in rises, and
                // an R_ref that falls with temperature makes it rise further (and fall
                // further when cold). Taking +TCR would let the resistor cancel part of
                // the drift and pass designs that a part at the other end of the band fails.
                tcr_per_k: if variant.no_ref_tcr {
                    0.0
                } else {
                    -d.r_ref.map_or(0.0, |r| r.tcr_per_k.abs())
                },
            }),
        }
    }

    /// The design has a programming resistor (and the requirement a rail for it).
    pub fn programmed(&self) -> bool {
        self.design.spec.r_ref_ohm > 0.0 && self.req.program.is_some()
    }

    /// The error of a solved point: of the ratio `I_out / (n I_in) - 1`, or of the output
    /// against the wanted current.
    fn error_of(&self, i_out_a: f64, i_in_a: f64) -> f64 {
        match (self.req.accuracy_of, &self.req.program) {
            (AccuracyOf::Output, Some(p)) => i_out_a / p.output_current_a - 1.0,
            _ => i_out_a / (self.req.ratio * i_in_a) - 1.0,
        }
    }

    fn op(&self, corner: &OperatingCorner) -> OperatingPoint {
        OperatingPoint {
            i_in_a: corner.i_in_a,
            rail_v: corner.rail_v,
            v_out_v: corner.v_out_v,
            supply_v: self.req.supply_v,
            t_amb_k: corner.t_amb_k,
        }
    }

    /// Compile the design with deviations `mm` for a device variant.
    fn compile(&self, mm: &Mismatch, variant: Variant) -> Result<Netlist, SolveFailure> {
        if variant.no_early || variant.no_base_current {
            let pair = modified(self.design.pair, variant);
            let helper = self.design.helper.map(|h| modified(h, variant));
            Netlist::compile(&self.circuit_design(&pair, helper.as_ref(), variant), mm)
        } else {
            Netlist::compile(
                &self.circuit_design(self.design.pair, self.design.helper, variant),
                mm,
            )
        }
    }

    fn solve_net(
        &self,
        net: &Netlist,
        corner: &OperatingCorner,
        self_heating: bool,
    ) -> Result<CornerState, SolveFailure> {
        self.solve_net_start(net, corner, self_heating)
            .map(|(s, _)| s)
    }

    /// `solve_net` started from `start` (a nearby solution) when given.
    fn solve_net_from(
        &self,
        net: &Netlist,
        corner: &OperatingCorner,
        start: Option<&Start>,
    ) -> Result<CornerState, SolveFailure> {
        let Some(start) = start else {
            return self.solve_net(net, corner, true);
        };
        let op = self.op(corner);
        self.solves.fetch_add(1, Ordering::Relaxed);
        let sol = net.solve_near(&op, &SolveOptions { self_heating: true }, start)?;
        Ok(self.state(&sol, corner))
    }

    /// `solve_net`, with where the solve converged (to start the error-budget builds of
    /// the corner from).
    fn solve_net_start(
        &self,
        net: &Netlist,
        corner: &OperatingCorner,
        self_heating: bool,
    ) -> Result<(CornerState, Start), SolveFailure> {
        let op = self.op(corner);
        self.solves.fetch_add(1, Ordering::Relaxed);
        let sol = net.solve(&op, &SolveOptions { self_heating })?;
        Ok((self.state(&sol, corner), *sol.start()))
    }

    fn state(&self, sol: &crate::circuit::Solution, corner: &OperatingCorner) -> CornerState {
        let desc = self.design.spec.topology.desc();
        let devices = sol
            .transistors()
            .iter()
            .map(|t| DeviceState {
                name: t.name,
                v_be_v: t.v_be,
                v_ce_v: t.v_ce,
                i_c_a: t.i_c,
                i_b_a: t.i_b,
                t_junction_k: t.t_junction_k,
                collector_at_supply: desc
                    .transistors
                    .iter()
                    .any(|l| l.name == t.name && l.collector == "S"),
            })
            .collect();
        let (worst, error) = sol.worst_output(|i| self.error_of(i, sol.i_in_a));
        CornerState {
            corner: *corner,
            i_out_a: sol.outputs()[worst],
            i_in_a: sol.i_in_a,
            r_ref_power_w: sol.r_ref_power_w,
            v_in_v: sol.v_in_v,
            error,
            output_errors: sol
                .outputs()
                .iter()
                .map(|&i| self.error_of(i, sol.i_in_a))
                .collect(),
            worst_output: worst as u8 + 1,
            devices,
        }
    }

    /// The nominal solve at one corner together with its noise analysis (one solve).
    fn solve_net_noise(
        &self,
        net: &Netlist,
        corner: &OperatingCorner,
    ) -> Result<(CornerState, NoiseAnalysis, Start), SolveFailure> {
        let op = OperatingPoint {
            i_in_a: corner.i_in_a,
            v_out_v: corner.v_out_v,
            supply_v: self.req.supply_v,
            t_amb_k: corner.t_amb_k,
            rail_v: corner.rail_v,
        };
        self.solves.fetch_add(1, Ordering::Relaxed);
        // The same solve as `solve_net` (bit for bit), plus the small-signal analysis.
        let (sol, noise) = net.solve_with_noise(&op, &SolveOptions { self_heating: true })?;
        Ok((self.state(&sol, corner), noise, *sol.start()))
    }

    fn solve_with(
        &self,
        corner: &OperatingCorner,
        mm: &Mismatch,
        variant: Variant,
    ) -> Result<CornerState, SolveFailure> {
        let net = self.compile(mm, variant)?;
        self.solve_net(&net, corner, variant.self_heating)
    }

    fn solve(&self, corner: &OperatingCorner, mm: &Mismatch) -> Result<CornerState, SolveFailure> {
        self.solve_with(corner, mm, NOMINAL)
    }

    /// The compliance screen: solves at `I_in` max, `V_out` min and every ambient. `Some`
    /// verdict (does every transistor keep `V_CE >= min_vce`?), or `None` when a corner
    /// could not be solved: that is no proof either way, and the verification names the
    /// failure under its own check.
    pub fn compliance_ok(&self) -> Option<bool> {
        let mut ok = true;
        for c in corners::compliance_corners(self.req) {
            let s = self.solve(&c, &Mismatch::default()).ok()?;
            ok &= ratings::keeps_min_vce(&s, self.req.min_vce_v);
        }
        Some(ok)
    }

    /// The input-voltage screen: one solve at the input corner. `None` when it could not
    /// be solved (no proof either way).
    pub fn input_voltage_ok(&self) -> Option<bool> {
        let limit = self.input_limit();
        self.solve(&corners::input_corner(self.req), &Mismatch::default())
            .ok()
            .map(|s| s.v_in_v <= limit)
    }

    /// `k` times the 1-sigma V_BE-offset term of pair 1 at the probe corner: a lower bound
    /// of the total error (two solves). `None` when a solve fails.
    pub fn vbe_offset_bound(&self) -> Option<f64> {
        let c = corners::probe_corner(self.req);
        let s0 = self.solve(&c, &Mismatch::default()).ok()?;
        let sigma = self.sigmas()[0];
        let mut mm = Mismatch::default();
        mm.dvbe_v[0] = sigma;
        let s1 = self.solve(&c, &mm).ok()?;
        // Output 1's devices moved: output 1's error.
        Some(self.req.confidence_sigma * (s1.output_errors[0] - s0.output_errors[0]).abs())
    }

    /// `|e| + k*sigma` at the probe corner: a lower bound of the total error (one solve
    /// per mismatch input plus one). `None` when a solve fails.
    pub fn probe_bound(&self) -> Option<f64> {
        let c = corners::probe_corner(self.req);
        let net = self.nominal_net().ok()?;
        let nets = self.sensitivity_nets().ok()?;
        let (s0, start) = self.solve_net_start(net, &c, true).ok()?;
        let d = self.sensitivities(nets, &c, &s0, &start).ok()?;
        Some(s0.error.abs() + self.req.confidence_sigma * budget::random_sigma(&d))
    }

    /// The nominal error and the random 1-sigma error at each of `corners` (one solve
    /// plus one per mismatch input each, the same solves as `evaluate`'s, so the values
    /// are bit for bit the ones the accuracy check takes its maxima over). `None` when a
    /// solve fails.
    pub fn corner_errors(&self, corners: &[OperatingCorner]) -> Option<Vec<(f64, f64)>> {
        let net = self.nominal_net().ok()?;
        let nets = self.sensitivity_nets().ok()?;
        corners
            .iter()
            .map(|c| {
                let (s0, start) = self.solve_net_start(net, c, true).ok()?;
                let d = self.sensitivities(nets, c, &s0, &start).ok()?;
                Some((s0.error, budget::random_sigma(&d)))
            })
            .collect()
    }

    /// The corners of the largest nominal error and of the largest random sigma (one
    /// corner when they coincide): where a similar design's total error is decided.
    /// `None` when a corner does not solve.
    pub fn worst_corners(&self) -> Option<Vec<OperatingCorner>> {
        let e = self.corner_errors(&self.corners)?;
        let arg = |f: fn(&(f64, f64)) -> f64| {
            (0..e.len()).fold(0, |w, i| if f(&e[i]) > f(&e[w]) { i } else { w })
        };
        let (a, b) = (arg(|x| x.0.abs()), arg(|x| x.1));
        let mut out = vec![self.corners[a]];
        if b != a {
            out.push(self.corners[b]);
        }
        Some(out)
    }

    /// `max |e| + k * max sigma` over `corners` taken in order, stopping as soon as it
    /// exceeds `limit`: a lower bound of the total error (the accuracy check takes both
    /// maxima over every corner, from the same solves). Within a corner it stops once
    /// the builds solved so far take it over both `limit` and the accuracy requirement
    /// (with `limit` infinite: over the accuracy requirement), where its exact value no
    /// longer matters: the design fails accuracy, and a finite walk would stop there
    /// anyway. `from` carries on from the
    /// `(max |e|, max sigma)` of corners already taken. Returns the bound reached and
    /// both maxima, or the check a failed solve fails (`thermal-runaway`, `no-solution`:
    /// the design fails it, as its verification would). A rating (VCEO, Ic max, dissipation)
    /// already broken at a corner stops the walk with a bound of minus infinity: the
    /// design fails, and its screen stops at that corner as cheaply.
    pub fn error_bound_until(
        &self,
        corners: &[OperatingCorner],
        limit: f64,
        from: (f64, f64),
    ) -> Result<(f64, (f64, f64)), CheckName> {
        let failed = |f: SolveFailure| failure_check(&f, "nominal design").name;
        let net = self.nominal_net().map_err(failed)?;
        let nets = self.sensitivity_nets().map_err(failed)?;
        let k = self.req.confidence_sigma;
        let (mut sys, mut rnd) = from;
        // Past `settled` the bound has done its work: over the accuracy requirement the
        // design fails whatever the rest, and over a finite `limit` the walk stops after
        // this corner anyway. So the walk stops there, between the error-budget builds of
        // a corner too, once the nominal errors and the sensitivities solved so far
        // already take the bound over it.
        let settled = if limit.is_finite() {
            limit.max(self.req.accuracy)
        } else {
            self.req.accuracy
        };
        let mut i = 0;
        while i < corners.len() && sys + k * rnd <= limit {
            // The nominal solves of a run of corners first, so a rating broken at any of
            // them is found before the bound settles the design (MODEL.md: each rating on
            // its worst corner).
            let end = if limit.is_finite() {
                i + 1
            } else {
                corners.len()
            };
            let mut nominal = Vec::with_capacity(end - i);
            for c in &corners[i..end] {
                let (s0, start) = self.nominal_at(net, c).map_err(failed)?;
                let one = std::slice::from_ref(&s0);
                let broken = !ratings::vceo(self.design, one).pass
                    || !ratings::ic_max(self.design, one).pass
                    || !ratings::dissipation(self.design, one).pass;
                if broken {
                    return Ok((f64::NEG_INFINITY, (sys, rnd)));
                }
                nominal.push((c, s0, start));
            }
            for (c, s0, start) in &nominal {
                sys = sys.max(s0.error.abs());
                if sys + k * rnd > settled {
                    return Ok((sys + k * rnd, (sys, rnd)));
                }
                let stop = |partial: f64| sys + k * rnd.max(partial) > settled;
                let (d, complete) = match self.memo_sens(c) {
                    Some(d) => (d, true),
                    None => self
                        .sensitivities_until(nets, c, s0, start, stop)
                        .map_err(|(_, f)| failed(f))?,
                };
                if complete {
                    self.keep_sens(c, d);
                }
                rnd = rnd.max(budget::random_sigma(&d));
                if !complete {
                    return Ok((sys + k * rnd, (sys, rnd)));
                }
            }
            i = end;
        }
        Ok((sys + k * rnd, (sys, rnd)))
    }

    /// The nominal solve at `corner` judged on the ratings alone (VCEO, IC max,
    /// dissipation, in the evaluation's order): `Ok(Some(check))` for the first one
    /// broken there, which fails the design (each rating is judged on its worst corner),
    /// or the check a failed solve fails. The same solve as `evaluate`'s and
    /// `error_bound_until`'s at that corner, so the finding is the verification's.
    pub fn rating_broken_at(
        &self,
        corner: &OperatingCorner,
    ) -> Result<Option<CheckName>, CheckName> {
        let failed = |f: SolveFailure| failure_check(&f, "nominal design").name;
        let net = self
            .compile(&Mismatch::default(), NOMINAL)
            .map_err(failed)?;
        let (s0, _) = self.solve_net_start(&net, corner, true).map_err(failed)?;
        let one = std::slice::from_ref(&s0);
        Ok([
            ratings::vceo(self.design, one),
            ratings::ic_max(self.design, one),
            ratings::dissipation(self.design, one),
        ]
        .into_iter()
        .find(|r| !r.pass)
        .map(|r| r.name))
    }

    /// Every corner of the requirement, in the evaluation's order.
    pub fn corners(&self) -> &[OperatingCorner] {
        &self.corners
    }

    /// Monte Carlo yield with every sampled build re-solved at every corner (the same
    /// draws as the first-order yield): a confirmation for one design, too costly for a
    /// search. A build whose circuit fails to solve counts as out of spec
    /// (`solved_yield_and_failure` says which one).
    pub fn solved_yield(&self, mc: MonteCarlo) -> f64 {
        self.solved_yield_and_failure(mc).0
    }

    /// The re-solved yield and the first sampled build that could not be solved at a
    /// corner (thermal runaway, no solution), which the verdict names rather than counting
    /// it silently as one more build out of spec. A build's corners are solved in order
    /// until one is out of spec or fails to solve.
    pub fn solved_yield_and_failure(&self, mc: MonteCarlo) -> (f64, Option<SampleFailure>) {
        if mc.samples == 0 {
            return (f64::NAN, None);
        }
        let sigmas = self.sigmas();
        let scales = self.output_scales();
        // Each build's solve at a corner starts where the nominal design's converged
        // there (a build is the nominal circuit moved by a few sigma); a corner whose
        // nominal solve fails starts every build from scratch, as before.
        let starts: Vec<Option<Start>> = match self.nominal_net() {
            Ok(net) => self
                .corners
                .iter()
                .map(|c| self.solve_net_start(net, c, true).ok().map(|(_, st)| st))
                .collect(),
            Err(_) => vec![None; self.corners.len()],
        };
        let builds: Vec<Mismatch> =
            outputs::builds(mc.seed, mc.samples, self.design.spec.shape.outputs)
                .map(|zs| {
                    let z = zs[0];
                    let mut mm = Mismatch {
                        dvbe_v: [z[0] * sigmas[0], z[1] * sigmas[1]],
                        dbeta: [z[2] * sigmas[2], z[3] * sigmas[3]],
                        dre1: z[4] * sigmas[4],
                        dre2: z[5] * sigmas[5],
                        dref: z[6] * sigmas[6],
                        more: Default::default(),
                    };
                    // Every further output draws its own devices' and RE2's deviations.
                    for (o, (zk, sk)) in zs.iter().zip(&scales).enumerate().skip(1) {
                        let s = |i: usize| zk[i] * sigmas[i] * sk[i];
                        mm.set_output(
                            o as u8 + 1,
                            OutputDeviation {
                                dvbe_v: [s(0), s(1)],
                                dbeta: [s(2), s(3)],
                                dre2: s(5),
                            },
                        );
                    }
                    mm
                })
                .collect();
        // The builds are independent: solved in parallel, counted in draw order.
        type Build = (bool, Option<(Option<OperatingCorner>, SolveFailure)>);
        let outcomes: Vec<Build> = builds
            .par_iter()
            .map(|mm| {
                let net = match self.compile(mm, NOMINAL) {
                    Ok(net) => net,
                    Err(f) => return (false, Some((None, f))),
                };
                for (c, start) in self.corners.iter().zip(&starts) {
                    match self.solve_net_from(&net, c, start.as_ref()) {
                        Ok(s) if s.error.abs() <= self.req.accuracy => {}
                        Ok(_) => return (false, None),
                        Err(f) => return (false, Some((Some(*c), f))),
                    }
                }
                (true, None)
            })
            .collect();
        let good = outcomes.iter().filter(|(within, _)| *within).count() as u32;
        let first_failure = outcomes
            .into_iter()
            .enumerate()
            .find_map(|(k, (_, f))| f.map(|f| (k, f)))
            .map(|(k, (corner, failure))| SampleFailure {
                sample: k as u32 + 1,
                samples: mc.samples,
                seed: mc.seed,
                corner,
                failure,
            });
        (f64::from(good) / f64::from(mc.samples), first_failure)
    }

    fn input_limit(&self) -> f64 {
        self.req.input_voltage_max_v.unwrap_or(self.req.supply_v)
    }

    /// 1-sigma size of each mismatch input (zero where the input does not exist).
    fn sigmas(&self) -> [f64; budget::RANDOM_INPUTS] {
        let m = self.design.pair.matching_or_default();
        // Devices in parallel on one side average their deviations.
        let pf = outputs::parallel_factor(self.design.spec.shape);
        let m = crate::model::Matching {
            vbe_offset_sigma_v: m.vbe_offset_sigma_v * pf,
            beta_mismatch_sigma: m.beta_mismatch_sigma * pf,
        };
        let two_pairs = self.design.spec.topology.desc().matched_pairs > 1;
        let r_sigma = self.design.resistor.map_or(0.0, |r| r.tolerance / 3.0);
        let ref_sigma = if self.programmed() {
            self.design.r_ref.map_or(0.0, |r| r.tolerance / 3.0)
        } else {
            0.0
        };
        [
            m.vbe_offset_sigma_v,
            if two_pairs { m.vbe_offset_sigma_v } else { 0.0 },
            m.beta_mismatch_sigma,
            if two_pairs {
                m.beta_mismatch_sigma
            } else {
                0.0
            },
            if self.design.spec.re1_ohm > 0.0 {
                r_sigma
            } else {
                0.0
            },
            if self.design.spec.re2_ohm > 0.0 {
                r_sigma
            } else {
                0.0
            },
            ref_sigma,
        ]
    }

    /// Per output, the factor of each budget input's sigma against output 1's.
    fn output_scales(&self) -> Vec<[f64; budget::RANDOM_INPUTS]> {
        let d = self.design;
        outputs::output_scales(d.spec.topology, d.spec.shape, d.pair)
    }

    /// One compiled netlist per mismatch input that exists, moved by +1 sigma (compiled
    /// on first use).
    fn sensitivity_nets(&self) -> Result<&[(usize, Netlist)], SolveFailure> {
        self.sens_nets
            .get_or_init(|| self.compile_sensitivity_nets())
            .as_deref()
            .map_err(Clone::clone)
    }

    fn compile_sensitivity_nets(&self) -> Result<Vec<(usize, Netlist)>, SolveFailure> {
        let mut nets = Vec::with_capacity(budget::RANDOM_INPUTS);
        for (i, &sigma) in self.sigmas().iter().enumerate() {
            if sigma == 0.0 {
                continue;
            }
            let mut mm = Mismatch::default();
            match i {
                0 | 1 => mm.dvbe_v[i] = sigma,
                2 | 3 => mm.dbeta[i - 2] = sigma,
                4 => mm.dre1 = sigma,
                5 => mm.dre2 = sigma,
                _ => mm.dref = sigma,
            }
            nets.push((i, self.compile(&mm, NOMINAL)?));
        }
        Ok(nets)
    }

    fn sensitivities(
        &self,
        nets: &[(usize, Netlist)],
        corner: &OperatingCorner,
        nominal: &CornerState,
        start: &Start,
    ) -> Result<Sensitivities, (usize, SolveFailure)> {
        self.sensitivities_until(nets, corner, nominal, start, |_| false)
            .map(|(s, _)| s)
    }

    /// `sensitivities`, stopping once `stop` holds for the random sigma of the inputs
    /// solved so far (which only grows with more of them); says whether every input was
    /// solved.
    fn sensitivities_until(
        &self,
        nets: &[(usize, Netlist)],
        corner: &OperatingCorner,
        nominal: &CornerState,
        start: &Start,
        stop: impl Fn(f64) -> bool,
    ) -> Result<(Sensitivities, bool), (usize, SolveFailure)> {
        let op = self.op(corner);
        let opts = SolveOptions { self_heating: true };
        let mut s = [0.0; budget::RANDOM_INPUTS];
        for (i, net) in nets {
            self.solves.fetch_add(1, Ordering::Relaxed);
            // A +1 sigma build is the nominal circuit but for one small deviation: its
            // solve starts where the nominal one converged.
            let (i_out, i_in) = net
                .solve_near_output(&op, &opts, start)
                .map_err(|f| (*i, f))?;
            // Output 1's devices (or a common part) moved: output 1's error.
            s[*i] = self.error_of(i_out, i_in) - nominal.output_errors[0];
            if stop(budget::random_sigma(&s)) {
                return Ok((s, false));
            }
        }
        Ok((s, true))
    }

    /// Judge the candidate. `mc` drives the yield figure.
    ///
    /// No corner is ever dropped (MODEL.md): a corner that cannot be solved, in the nominal
    /// design or in an error-budget build at it, is a failed check of its own
    /// (`thermal-runaway`, `no-solution`) naming the build and the corner, and every
    /// figure that needed that corner is not available.
    pub fn evaluate(&self, depth: Depth, mc: MonteCarlo) -> Evaluation {
        let req = self.req;
        let mut checks = Vec::new();
        let mut figures = Figures::default();
        let cost = self.design.cost;
        if let Some(max) = req.max_cost {
            checks.push(Check::at_most(
                CheckName::Cost,
                cost,
                max,
                "parts per mirror",
            ));
        }
        let k = req.confidence_sigma;
        if req.program.is_some() && !self.programmed() {
            checks.push(Check::failed(
                CheckName::NoSolution,
                "the requirement programs the mirror by a resistor from a rail, and no \
                 R_ref could be sized for this design (its input voltage reaches the rail, or \
                 it does not solve)",
            ));
            return incomplete(cost, checks);
        }

        // Probe corner first so a screen stops as early as it can.
        let probe = corners::probe_corner(req);
        let mut order: Vec<usize> = (0..self.corners.len()).collect();
        if let Some(p) = self.corners.iter().position(|c| *c == probe) {
            order.swap(0, p);
        }
        // Then the input corner (V_out max): the largest V_CE, so a screen meets a VCEO
        // failure after two corners instead of all of them.
        let ic = corners::input_corner(req);
        if let Some(p) = self.corners.iter().position(|c| *c == ic) {
            if p != order[0] && order.len() > 1 {
                let q = order.iter().position(|&x| x == p).unwrap_or(1);
                order.swap(1, q);
            }
        }
        let nets = self
            .nominal_net()
            .and_then(|n| self.sensitivity_nets().map(|s| (n, s)));
        let (net, sens_nets) = match nets {
            Ok(x) => x,
            Err(f) => {
                checks.push(failure_check(&f, "nominal design"));
                return incomplete(cost, checks);
            }
        };
        let n = self.corners.len();
        let mut states: Vec<Option<CornerState>> = vec![None; n];
        let mut sens: Vec<Option<Sensitivities>> = vec![None; n];
        // Noise rides on the nominal solves: wherever the requirement limits it (a screen
        // that runs to the end is a verdict), and for the figures of a full evaluation
        // (the shown rows). Otherwise it is not computed.
        let want_noise = req.max_noise.is_some() || depth == Depth::Full;
        let mut noises: Vec<Option<NoiseAnalysis>> = vec![None; n];
        for &i in &order {
            let c = self.corners[i];
            let nominal = if want_noise {
                self.solve_net_noise(net, &c)
                    .map(|(s, nz, st)| (s, Some(nz), st))
            } else {
                self.nominal_at(net, &c).map(|(s, st)| (s, None, st))
            };
            let (state, start) = match nominal {
                Ok((s, nz, st)) => {
                    noises[i] = nz;
                    (s, st)
                }
                Err(f) => {
                    // A screen stops here; a verification goes on so every check that
                    // did not need this corner is still judged.
                    push_failure(&mut checks, failure_check(&f, "nominal design"));
                    if depth == Depth::Screen {
                        return incomplete(cost, checks);
                    }
                    continue;
                }
            };
            let d = match self
                .memo_sens(&c)
                .map_or_else(|| self.sensitivities(sens_nets, &c, &state, &start), Ok)
            {
                Ok(d) => d,
                Err((input, f)) => {
                    push_failure(&mut checks, failure_check(&f, budget_build(input)));
                    states[i] = Some(state);
                    if depth == Depth::Screen {
                        return incomplete(cost, checks);
                    }
                    continue;
                }
            };
            let bound = state.error.abs() + k * budget::random_sigma(&d);
            if depth == Depth::Screen {
                // Each rating is judged on its worst corner, so one corner over a rating
                // already fails it (and stops a screen before the costly corners).
                let one = std::slice::from_ref(&state);
                let rating = [
                    ratings::vceo(self.design, one),
                    ratings::ic_max(self.design, one),
                    ratings::dissipation(self.design, one),
                ]
                .into_iter()
                .find(|r| !r.pass);
                if let Some(r) = rating {
                    checks.push(r);
                    return incomplete(cost, checks);
                }
            }
            states[i] = Some(state);
            sens[i] = Some(d);
            if depth == Depth::Screen && bound > req.accuracy {
                checks.push(Check::at_most(
                    CheckName::Accuracy,
                    bound,
                    req.accuracy,
                    "screened at one corner",
                ));
                return incomplete(cost, checks);
            }
        }
        // Even with no corner solved every check is listed, as not available.
        let solved: Vec<CornerState> = states.iter().flatten().cloned().collect();
        let all_nominal = states.iter().all(Option::is_some);
        let all_builds = all_nominal && sens.iter().all(Option::is_some);
        const NEEDS_ALL: &str =
            "needs every corner, and one could not be solved (see the failed solve)";
        let at = |c: &OperatingCorner| -> Option<&CornerState> {
            let i = self.corners.iter().position(|x| x == c)?;
            states[i].as_ref()
        };

        // Accuracy: every corner, nominal and error-budget builds. With several outputs
        // each output has its own systematic and random error; the worst output's total
        // governs and is named.
        let mut worst = None;
        let scales = self.output_scales();
        if all_builds {
            let outs = scales.len();
            let (mut sys, mut rnd) = (vec![0.0f64; outs], vec![0.0f64; outs]);
            let mut corner_of = vec![0usize; outs];
            for (i, (s, d)) in states.iter().zip(&sens).enumerate() {
                let (Some(s), Some(d)) = (s, d) else { continue };
                for kk in 0..outs {
                    let e = s.output_errors.get(kk).copied().unwrap_or(s.error).abs();
                    if e > sys[kk] {
                        sys[kk] = e;
                        corner_of[kk] = i;
                    }
                    let r = budget::random_sigma(&outputs::scaled(d, &scales[kk]));
                    rnd[kk] = rnd[kk].max(r);
                }
            }
            // The largest total; outputs equal but for rounding keep the lower number.
            let total = |o: usize| sys[o] + k * rnd[o];
            let mut w_out = 0;
            for o in 1..outs {
                if total(o) > total(w_out) * (1.0 + 1e-9) {
                    w_out = o;
                }
            }
            worst = Some(corner_of[w_out]);
            figures.worst_output = w_out as u8 + 1;
            figures.error_systematic = sys[w_out];
            figures.error_random_sigma = rnd[w_out];
            figures.error_total = sys[w_out] + k * rnd[w_out];
        }

        // Compliance: every transistor keeps V_CE >= min_vce at I_in max, V_out min,
        // every ambient (MODEL.md).
        let v_min = req.output_voltage_v.min;
        let comp_states: Option<Vec<&CornerState>> =
            corners::compliance_corners(req).iter().map(&at).collect();
        match comp_states {
            Some(cs) if !cs.is_empty() => {
                let pass = cs.iter().all(|s| ratings::keeps_min_vce(s, req.min_vce_v));
                figures.compliance_v = if depth == Depth::Full {
                    self.compliance_voltage(pass)
                } else {
                    // The output transistor's V_CE moves one for one with V_out.
                    let slack = cs
                        .iter()
                        .filter_map(|s| ratings::vce_slack(s, req.min_vce_v))
                        .map(|(x, _)| x)
                        .fold(f64::INFINITY, f64::min);
                    (v_min - slack).max(0.0)
                };
                let mut comp = Check::at_most(
                    CheckName::Compliance,
                    figures.compliance_v,
                    v_min,
                    compliance_rule(req.min_vce_v),
                );
                // The verdict is the direct solve at the required voltage; the value is a
                // figure.
                comp.pass = pass;
                checks.push(comp);
            }
            _ => checks.push(Check::not_available(
                CheckName::Compliance,
                v_min,
                "a compliance corner (I_in max, V_out min) could not be solved",
            )),
        }
        let mut soft: Vec<&'static str> = solved
            .iter()
            .filter(|s| s.corner.v_out_v == v_min)
            .flat_map(ratings::forward_biased_collectors)
            .collect();
        soft.sort_unstable();
        soft.dedup();

        // Input voltage.
        let ic = corners::input_corner(req);
        let in_states: Vec<&Option<CornerState>> = self
            .corners
            .iter()
            .zip(&states)
            .filter(|(c, _)| {
                c.i_in_a == ic.i_in_a && c.rail_v == ic.rail_v && c.t_amb_k == ic.t_amb_k
            })
            .map(|(_, s)| s)
            .collect();
        let input_detail = if req.input_voltage_max_v.is_some() {
            "I_in max, cold ambient"
        } else {
            "I_in max, cold ambient; no input_voltage_max given, limit is the supply"
        };
        if in_states.iter().all(|s| s.is_some()) {
            let v_in = in_states
                .iter()
                .flat_map(|s| s.as_ref())
                .map(|s| s.v_in_v)
                .fold(f64::NAN, f64::max);
            figures.v_in_max_v = v_in;
            checks.push(Check::at_most(
                CheckName::InputVoltage,
                v_in,
                self.input_limit(),
                input_detail,
            ));
        } else {
            checks.push(Check::not_available(
                CheckName::InputVoltage,
                self.input_limit(),
                "an input-voltage corner (I_in max, cold ambient) could not be solved",
            ));
        }

        if all_builds {
            let of_output = if scales.len() > 1 {
                format!(
                    "; output {} (the worst of {})",
                    figures.worst_output,
                    scales.len()
                )
            } else {
                String::new()
            };
            checks.push(Check::at_most(
                CheckName::Accuracy,
                figures.error_total,
                req.accuracy,
                format!("systematic + {k} x random sigma{of_output}"),
            ));
        } else {
            checks.push(Check::not_available(
                CheckName::Accuracy,
                req.accuracy,
                NEEDS_ALL,
            ));
        }

        // Noise rides on the nominal solves already made: judged here, listed below.
        let noise_fig = if want_noise {
            let analysed: Vec<(OperatingCorner, &NoiseAnalysis)> = self
                .corners
                .iter()
                .zip(&noises)
                .filter_map(|(c, n)| n.as_ref().map(|n| (*c, n)))
                .collect();
            noise::figure(&analysed, req.max_noise.as_ref())
        } else {
            None
        };
        // Like every figure, the worst noise needs every corner.
        let noise_fig = noise_fig.filter(|_| all_nominal);
        let noise_check = req.max_noise.as_ref().map(|limit| {
            if all_nominal {
                noise::check(noise_fig.as_ref(), limit)
            } else {
                Check::not_available(CheckName::Noise, limit.density_a_per_rthz, NEEDS_ALL)
            }
        });
        if depth == Depth::Screen
            && (checks.iter().any(|c| !c.pass) || noise_check.as_ref().is_some_and(|c| !c.pass))
        {
            checks.extend(noise_check);
            return incomplete(cost, checks);
        }

        if req.min_yield.is_some() || depth == Depth::Full {
            if all_builds {
                let sens: Vec<Sensitivities> = sens.iter().flatten().copied().collect();
                figures.yield_fraction = if scales.len() > 1 {
                    let nominal: Vec<Vec<f64>> =
                        solved.iter().map(|s| s.output_errors.clone()).collect();
                    outputs::linear_yield(
                        &nominal,
                        &sens,
                        &scales,
                        req.accuracy,
                        mc.seed,
                        mc.samples,
                    )
                } else {
                    let nominal: Vec<f64> = solved.iter().map(|s| s.error).collect();
                    linear_yield(&nominal, &sens, req.accuracy, mc.seed, mc.samples)
                };
                figures.yield_samples = mc.samples;
            }
            if let Some(min) = req.min_yield {
                // MODEL.md: the verdict rests on the re-solved yield. The first-order
                // estimate only decides where it is far from the limit
                // (`YIELD_SCREEN_BAND`).
                if all_builds {
                    let near = !(figures.yield_fraction - min).abs().gt(&YIELD_SCREEN_BAND);
                    let interval = |y: f64| match super::wilson_interval(y, mc.samples) {
                        Some([lo, hi]) => {
                            format!("95 % CI {:.1}–{:.1} %", lo * 100.0, hi * 100.0)
                        }
                        None => String::new(),
                    };
                    let (value, detail) = if near {
                        let (y, failure) = self.solved_yield_and_failure(mc);
                        figures.yield_solved = y;
                        if let Some(f) = failure {
                            push_failure(&mut checks, failure_check(&f.failure, &f.build()));
                        }
                        (
                            figures.yield_solved,
                            format!(
                                "{} builds re-solved at every corner, seed {}; {}",
                                mc.samples,
                                mc.seed,
                                interval(figures.yield_solved)
                            ),
                        )
                    } else {
                        (
                            figures.yield_fraction,
                            format!(
                                "{} builds, seed {}; {}; first-order estimate, more than {:.0} points from the limit",
                                mc.samples,
                                mc.seed,
                                interval(figures.yield_fraction),
                                100.0 * YIELD_SCREEN_BAND
                            ),
                        )
                    };
                    checks.push(Check::at_least(CheckName::Yield, value, min, detail));
                } else {
                    checks.push(Check::not_available(CheckName::Yield, min, NEEDS_ALL));
                }
            }
        }

        let mut r_outs = vec![f64::NAN; n];
        if req.min_output_resistance_ohm.is_some() || depth == Depth::Full {
            for (i, s) in states.iter().enumerate() {
                let Some(s) = s else { continue };
                match self.output_resistance(net, &s.corner) {
                    Ok(r) => r_outs[i] = r,
                    Err(f) => push_failure(
                        &mut checks,
                        failure_check(&f, "nominal design (output resistance)"),
                    ),
                }
            }
            let available = r_outs.iter().all(|r| !r.is_nan());
            if available {
                figures.r_out_min_ohm = r_outs.iter().copied().fold(f64::INFINITY, f64::min);
            }
            if let Some(min) = req.min_output_resistance_ohm {
                checks.push(if available {
                    Check::at_least(
                        CheckName::OutputResistance,
                        figures.r_out_min_ohm,
                        min,
                        "smallest over the corners",
                    )
                } else {
                    Check::not_available(CheckName::OutputResistance, min, NEEDS_ALL)
                });
            }
        }

        figures.noise_a_per_rthz = noise_fig.as_ref().map_or(f64::NAN, |f| f.white_a_per_rthz);
        checks.extend(noise_check);

        // Ratings: the stress at every corner, so none is available without all of them.
        if all_nominal {
            if let Some(h) = ratings::helper_headroom(&solved, req.supply_v) {
                checks.push(h);
            }
            checks.push(ratings::vceo(self.design, &solved));
            checks.push(ratings::ic_max(self.design, &solved));
            checks.push(ratings::dissipation(self.design, &solved));
        } else {
            if ratings::helper_headroom(&solved, req.supply_v).is_some() {
                checks.push(Check::not_available(
                    CheckName::HelperHeadroom,
                    req.supply_v,
                    NEEDS_ALL,
                ));
            }
            for name in [CheckName::Vceo, CheckName::IcMax, CheckName::Dissipation] {
                checks.push(Check::not_available(name, f64::NAN, NEEDS_ALL));
            }
        }

        figures.ratio_achieved =
            ratio_corner(&solved, req).map_or(f64::NAN, |s| s.i_out_a / s.i_in_a);

        // The programming resistor's power at the worst corner against its rating,
        // derated at the hottest ambient.
        figures.r_ref_power_w = solved.iter().map(|s| s.r_ref_power_w).fold(0.0, f64::max);
        if let (true, Some(class)) = (self.programmed(), self.design.r_ref) {
            checks.push(Check::at_most(
                CheckName::RefPower,
                figures.r_ref_power_w,
                class.power_rating_at(req.ambient_k.max),
                format!(
                    "worst corner; {} rating derated above 70 °C ambient",
                    class.id
                ),
            ));
        }

        // The output's temperature coefficient, for every design.
        match self.tempco(net, &solved) {
            Ok((avg, worst)) => {
                figures.tempco_per_k = avg;
                figures.tempco_worst_per_k = worst;
            }
            Err(f) => {
                let fc = failure_check(&f, "nominal design at the tempco points");
                if !checks.iter().any(|x| x.name == fc.name) {
                    checks.push(fc);
                }
            }
        }
        if let Some(max) = req.max_tempco_per_k {
            checks.push(Check::at_most(
                CheckName::Tempco,
                figures.tempco_worst_per_k.abs(),
                max,
                "steepest slope over the ambient range, per kelvin",
            ));
        }

        let mut ev = Evaluation {
            cost,
            checks,
            figures,
            corners: Vec::new(),
            budget: None,
            hottest: None,
            noise: noise_fig,
            soft_saturation: soft,
            complete: all_builds,
        };
        if depth == Depth::Full {
            ev.corners = self
                .corners
                .iter()
                .zip(&states)
                .zip(&sens)
                .zip(&r_outs)
                .map(|(((c, s), d), r)| match s {
                    Some(s) => CornerRow {
                        corner: *c,
                        i_out_a: s.i_out_a,
                        i_in_a: s.i_in_a,
                        error: s.error,
                        error_random_sigma: d.as_ref().map_or(f64::NAN, budget::random_sigma),
                        r_out_ohm: *r,
                        v_in_v: s.v_in_v,
                        t_junction_max_k: s
                            .devices
                            .iter()
                            .map(|d| d.t_junction_k)
                            .fold(f64::MIN, f64::max),
                    },
                    // Not solved: every figure of the corner is not available.
                    None => CornerRow {
                        corner: *c,
                        i_out_a: f64::NAN,
                        i_in_a: f64::NAN,
                        error: f64::NAN,
                        error_random_sigma: f64::NAN,
                        r_out_ohm: f64::NAN,
                        v_in_v: f64::NAN,
                        t_junction_max_k: f64::NAN,
                    },
                })
                .collect();
            if let (Some(w), true) = (worst, all_builds) {
                if let (Some(s), Some(d)) = (&states[w], &sens[w]) {
                    let wk = usize::from(ev.figures.worst_output.max(1)) - 1;
                    let d = scales.get(wk).map_or(*d, |sc| outputs::scaled(d, sc));
                    ev.budget = self.budget(s, &d);
                }
            }
            if all_nominal {
                ev.hottest = ratings::hottest(&solved).cloned();
            }
        }
        ev
    }

    fn output_resistance(&self, net: &Netlist, c: &OperatingCorner) -> Result<f64, SolveFailure> {
        let op = self.op(c);
        // One solve plus the implicit derivative of the converged solution.
        self.solves.fetch_add(1, Ordering::Relaxed);
        net.output_resistance(&op, &SolveOptions { self_heating: true })
    }

    /// The lowest output voltage at which every transistor keeps `V_CE >= min_vce` at
    /// `I_in` max and every ambient (MODEL.md), by bisection on the side the direct check
    /// found. NaN when the supply end cannot be solved (the figure is then not available).
    fn compliance_voltage(&self, pass_at_min: bool) -> f64 {
        let ccs = corners::compliance_corners(self.req);
        let v_min = self.req.output_voltage_v.min;
        // Some(verdict), or None when a corner did not solve.
        let ok = |v: f64| -> Option<bool> {
            let mut all = true;
            for cc in &ccs {
                let c = OperatingCorner { v_out_v: v, ..*cc };
                let s = self.solve(&c, &Mismatch::default()).ok()?;
                all &= ratings::keeps_min_vce(&s, self.req.min_vce_v);
            }
            Some(all)
        };
        let (mut lo, mut hi) = if pass_at_min {
            (0.0, v_min)
        } else {
            match ok(self.req.supply_v) {
                Some(true) => (v_min, self.req.supply_v),
                Some(false) => return f64::INFINITY,
                None => return f64::NAN,
            }
        };
        while hi - lo > COMPLIANCE_RESOLUTION_V {
            let mid = 0.5 * (lo + hi);
            match ok(mid) {
                Some(true) => hi = mid,
                // Below compliance a corner may not solve (a saturated output device):
                // counted as failing, which keeps the figure on the safe side.
                Some(false) | None => lo = mid,
            }
        }
        hi
    }

    fn budget(&self, worst: &CornerState, sens: &Sensitivities) -> Option<ErrorBudget> {
        let c = worst.corner;
        let room = OperatingCorner {
            t_amb_k: ROOM_K,
            ..c
        };
        let mm = Mismatch::default();
        let e = |corner: &OperatingCorner, v: Variant| {
            self.solve_with(corner, &mm, v).ok().map(|s| s.error)
        };
        let off = Variant {
            self_heating: false,
            ..NOMINAL
        };
        let no_early = Variant {
            no_early: true,
            ..off
        };
        let no_base = Variant {
            no_base_current: true,
            ..no_early
        };
        let program = match (self.programmed(), &self.req.program) {
            (true, Some(p)) => {
                // Rail to nominal, then R_ref's TCR off; what is left of the step to
                // 25 °C splits into the part the input current explains (V_BE drift of
                // the input side) and the mirror's own temperature dependence.
                let nominal = OperatingCorner {
                    rail_v: Some(p.rail_nominal_v()),
                    ..c
                };
                let no_tcr = Variant {
                    no_ref_tcr: true,
                    ..off
                };
                let hot = self.solve_with(&nominal, &mm, no_tcr).ok()?;
                let room_nominal = OperatingCorner {
                    t_amb_k: ROOM_K,
                    ..nominal
                };
                let cold = self.solve_with(&room_nominal, &mm, no_tcr).ok()?;
                let vbe_drift = match self.req.accuracy_of {
                    AccuracyOf::Output => {
                        (hot.i_in_a - cold.i_in_a) * (cold.i_out_a / cold.i_in_a)
                            / p.output_current_a
                    }
                    AccuracyOf::Ratio => 0.0,
                };
                Some(ProgramToggles {
                    rail_nominal: e(&nominal, off)?,
                    no_ref_tcr: hot.error,
                    vbe_drift,
                })
            }
            _ => None,
        };
        // With a programming resistor the steps to 25 °C start from the nominal rail.
        let room = match &program {
            Some(_) => OperatingCorner {
                rail_v: self.req.program.map(|p| p.rail_nominal_v()),
                ..room
            },
            None => room,
        };
        let base = Variant {
            no_ref_tcr: program.is_some(),
            ..off
        };
        let no_early = Variant {
            no_ref_tcr: base.no_ref_tcr,
            ..no_early
        };
        let no_base = Variant {
            no_ref_tcr: base.no_ref_tcr,
            ..no_base
        };
        let t = Toggled {
            full: worst.error,
            no_self_heating: e(&c, off)?,
            at_room: e(&room, base)?,
            no_early: e(&room, no_early)?,
            no_base_current: e(&room, no_base)?,
            program,
        };
        Some(budget::attribute(c, t, sens))
    }

    /// The output's temperature coefficient at the nominal input (forced current at its
    /// maximum, or the nominal rail), lowest output voltage: the average over the
    /// ambient range and the steepest slope between neighbouring ambient points. Reuses
    /// the corner solves when the nominal point is a corner.
    fn tempco(&self, net: &Netlist, states: &[CornerState]) -> Result<(f64, f64), SolveFailure> {
        Ok(tempco_of(&self.tempco_points(net, states)?))
    }

    /// The output's slopes between neighbouring ambient points at the tempco's nominal
    /// input (`tempco_slopes_of`; the steepest is the figure the tempco check judges),
    /// from the same solves as `evaluate`'s, bit for bit. `None` when one fails.
    pub fn tempco_slopes(&self) -> Option<Vec<f64>> {
        let net = self.nominal_net().ok()?;
        let points = self.tempco_points(net, &[]).ok()?;
        Some(tempco_slopes_of(&points))
    }

    /// `(T, I_out)` at each ambient point of the tempco.
    fn tempco_points(
        &self,
        net: &Netlist,
        states: &[CornerState],
    ) -> Result<Vec<(f64, f64)>, SolveFailure> {
        let req = self.req;
        let temps = corners::temperatures(req);
        let nominal = OperatingCorner {
            i_in_a: req.input_current_a.max,
            rail_v: req.program.map(|p| p.rail_nominal_v()),
            v_out_v: req.output_voltage_v.min,
            t_amb_k: req.ambient_k.min,
        };
        let mut points = Vec::with_capacity(temps.len());
        for &t in &temps {
            let c = OperatingCorner {
                t_amb_k: t,
                ..nominal
            };
            let i = match states.iter().find(|s| s.corner == c) {
                Some(s) => s.i_out_a,
                None => self.solve_net(net, &c, true)?.i_out_a,
            };
            points.push((t, i));
        }
        Ok(points)
    }
}

/// An evaluation that stopped before judging every check.
fn incomplete(cost: f64, checks: Vec<Check>) -> Evaluation {
    Evaluation {
        cost,
        checks,
        figures: Figures::default(),
        corners: Vec::new(),
        budget: None,
        hottest: None,
        noise: None,
        soft_saturation: Vec::new(),
        complete: false,
    }
}

/// Average and steepest relative slope of `(T, I)` points in ascending T: the average is
/// `(I_last - I_first) / (I_ref (T_last - T_first))`, `I_ref` the current nearest 25 °C.
pub fn tempco_of(points: &[(f64, f64)]) -> (f64, f64) {
    if points.len() < 2 {
        return (0.0, 0.0);
    }
    let i_ref = points
        .iter()
        .min_by(|a, b| (a.0 - ROOM_K).abs().total_cmp(&(b.0 - ROOM_K).abs()))
        .map_or(f64::NAN, |p| p.1);
    let (first, last) = (points[0], points[points.len() - 1]);
    let avg = (last.1 - first.1) / (i_ref * (last.0 - first.0));
    let worst =
        tempco_slopes_of(points)
            .into_iter()
            .fold(0.0f64, |a, b| if b.abs() > a.abs() { b } else { a });
    (avg, worst)
}

/// The relative slope between each two neighbouring `(T, I)` points, per kelvin, against
/// the current nearest 25 °C (empty for fewer than two points).
pub fn tempco_slopes_of(points: &[(f64, f64)]) -> Vec<f64> {
    let i_ref = points
        .iter()
        .min_by(|a, b| (a.0 - ROOM_K).abs().total_cmp(&(b.0 - ROOM_K).abs()))
        .map_or(f64::NAN, |p| p.1);
    points
        .windows(2)
        .map(|w| (w[1].1 - w[0].1) / (i_ref * (w[1].0 - w[0].0)))
        .collect()
}

fn modified(class: &TransistorClass, v: Variant) -> TransistorClass {
    let mut c = class.clone();
    if v.no_early {
        c.model.early_voltage_v = None;
    }
    if v.no_base_current {
        c.model.beta_forward = NO_BASE_CURRENT_BETA;
        c.model.knee_current_a = None;
    }
    c
}

/// A sampled build of the re-solved yield that could not be solved.
#[derive(Debug, Clone, PartialEq)]
pub struct SampleFailure {
    /// 1-based, in the order of the seeded draws.
    pub sample: u32,
    pub samples: u32,
    pub seed: u64,
    /// The corner that failed; `None` when the build's netlist could not be compiled.
    pub corner: Option<OperatingCorner>,
    pub failure: SolveFailure,
}

impl SampleFailure {
    /// The build in the words of `failure_check`.
    pub fn build(&self) -> String {
        format!(
            "yield sample {} of {} (seed {}; counted out of spec)",
            self.sample, self.samples, self.seed
        )
    }
}

/// A failed solve as a check of its own name, saying in which build it happened (the
/// nominal design, an error-budget build or a yield sample; MODEL.md).
fn failure_check(f: &SolveFailure, build: &str) -> Check {
    // The failure names the topology, part and operating point; add which build.
    let at = format!("in the {build}: {f}");
    match f {
        SolveFailure::ThermalRunaway { .. } => Check::failed(CheckName::ThermalRunaway, at),
        _ => Check::failed(CheckName::NoSolution, at),
    }
}

/// The error-budget build that moves mismatch input `i` by +1 sigma.
fn budget_build(i: usize) -> &'static str {
    match i {
        0 => "error-budget build (+1 sigma V_BE offset, pair 1)",
        1 => "error-budget build (+1 sigma V_BE offset, pair 2)",
        2 => "error-budget build (+1 sigma beta mismatch, pair 1)",
        3 => "error-budget build (+1 sigma beta mismatch, pair 2)",
        4 => "error-budget build (+1 sigma RE1 tolerance)",
        _ => "error-budget build (+1 sigma RE2 tolerance)",
    }
}

/// Record a failed solve once per check name (the first one found is reported).
fn push_failure(checks: &mut Vec<Check>, fc: Check) {
    if !checks.iter().any(|x| x.name == fc.name) {
        checks.push(fc);
    }
}

/// The compliance rule in the words the reports use.
pub fn compliance_rule(min_vce_v: f64) -> String {
    format!("every transistor keeps V_CE >= {min_vce_v} V at I_in max, every ambient")
}

/// The corner the achieved ratio is read at: I_in max, V_out min, ambient nearest 25 °C.
fn ratio_corner<'s>(states: &'s [CornerState], req: &Requirement) -> Option<&'s CornerState> {
    let rail = req.program.map(|p| p.rail_v.max);
    states
        .iter()
        .filter(|s| {
            s.corner.i_in_a == req.input_current_a.max
                && s.corner.rail_v == rail
                && s.corner.v_out_v == req.output_voltage_v.min
        })
        .min_by(|a, b| {
            (a.corner.t_amb_k - ROOM_K)
                .abs()
                .total_cmp(&(b.corner.t_amb_k - ROOM_K).abs())
        })
}
