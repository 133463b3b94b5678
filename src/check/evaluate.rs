//! Verify one candidate: solve it at every corner with self-heating, derive the figures
//! and judge every check. The only file of `check` that calls the circuit solver.
//!
//! Three depths share one code path so a screened verdict and a full one can never
//! disagree: `Screen` stops at the first corner whose error already breaks the accuracy
//! requirement (a valid lower bound: the total error is at least any one corner's
//! `|e| + k*sigma`), `Verdict` judges every check, `Full` adds the compliance voltage by
//! bisection, output resistance at every corner, the error budget and the hottest corner.

use std::sync::atomic::{AtomicU64, Ordering};

use serde::Serialize;

use super::budget::{self, ErrorBudget, ProgramToggles, Sensitivities, Toggled};
use super::corners::{self, OperatingCorner, ROOM_K};
use super::design::ResolvedDesign;
use super::montecarlo::{self, linear_yield};
use super::ratings::{self, CornerState, DeviceState};
use super::verdict::{first_failure, governing, Check, CheckName};
use crate::circuit::{
    Design, Mismatch, Netlist, OperatingPoint, RefResistor, SolveFailure, SolveOptions,
};
use crate::model::{AccuracyOf, Requirement, TransistorClass};

/// Beta used to switch base current off in the error budget.
const NO_BASE_CURRENT_BETA: f64 = 1e9;
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
    /// Monte Carlo yield with every build re-solved (NaN unless asked for).
    pub yield_solved: f64,
    /// Smallest solved output resistance (NaN when not computed).
    pub r_out_min_ohm: f64,
    pub compliance_v: f64,
    pub v_in_max_v: f64,
    /// Largest power in R_ref over the corners, watts (0 without R_ref, NaN when not
    /// computed).
    pub r_ref_power_w: f64,
    /// `(1/I_out) dI_out/dT` averaged over the ambient range (`I_out` at the hottest
    /// minus at the coldest ambient, over the span and the current at 25 °C), per kelvin,
    /// at the nominal input (current or rail), lowest output voltage.
    pub tempco_per_k: f64,
    /// The steepest slope between neighbouring ambient points (min, 25 °C, max), signed.
    pub tempco_worst_per_k: f64,
}

impl Default for Figures {
    fn default() -> Self {
        Figures {
            ratio_achieved: f64::NAN,
            error_systematic: f64::NAN,
            error_random_sigma: f64::NAN,
            error_total: f64::NAN,
            yield_fraction: f64::NAN,
            yield_solved: f64::NAN,
            r_out_min_ohm: f64::NAN,
            compliance_v: f64::NAN,
            v_in_max_v: f64::NAN,
            r_ref_power_w: f64::NAN,
            tempco_per_k: f64::NAN,
            tempco_worst_per_k: f64::NAN,
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
    /// False when a screen stopped early (only the failing check is then certain).
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
}

impl<'a> Evaluator<'a> {
    pub fn new(
        req: &'a Requirement,
        design: &'a ResolvedDesign<'a>,
        solves: &'a AtomicU64,
    ) -> Self {
        Evaluator {
            req,
            design,
            corners: corners::corners(req),
            solves,
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
            topology: d.spec.topology,
            pair,
            helper,
            re1_ohm: d.spec.re1_ohm,
            re2_ohm: d.spec.re2_ohm,
            re_tcr_per_k: d.resistor.map_or(0.0, |r| r.tcr_per_k),
            r_ref: (d.spec.r_ref_ohm > 0.0).then(|| RefResistor {
                ohm: d.spec.r_ref_ohm,
                tcr_per_k: if variant.no_ref_tcr {
                    0.0
                } else {
                    d.r_ref.map_or(0.0, |r| r.tcr_per_k)
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
        let op = self.op(corner);
        self.solves.fetch_add(1, Ordering::Relaxed);
        let sol = net.solve(&op, &SolveOptions { self_heating })?;
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
        Ok(CornerState {
            corner: *corner,
            i_out_a: sol.i_out_a,
            i_in_a: sol.i_in_a,
            r_ref_power_w: sol.r_ref_power_w,
            v_in_v: sol.v_in_v,
            error: self.error_of(sol.i_out_a, sol.i_in_a),
            devices,
        })
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

    /// One solve at the compliance corner: does every transistor keep V_CB >= 0?
    /// A failed solve counts as "no" (the full verification would fail there too).
    pub fn compliance_ok(&self) -> bool {
        self.solve(&corners::compliance_corner(self.req), &Mismatch::default())
            .is_ok_and(|s| ratings::all_forward_active(&s))
    }

    /// One solve at the input corner: is the input voltage within its limit?
    pub fn input_voltage_ok(&self) -> bool {
        let limit = self.input_limit();
        self.solve(&corners::input_corner(self.req), &Mismatch::default())
            .is_ok_and(|s| s.v_in_v <= limit)
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
        Some(self.req.confidence_sigma * (s1.error - s0.error).abs())
    }

    /// `|e| + k*sigma` at the probe corner: a lower bound of the total error (one solve
    /// per mismatch input plus one). `None` when a solve fails.
    pub fn probe_bound(&self) -> Option<f64> {
        let c = corners::probe_corner(self.req);
        let net = self.compile(&Mismatch::default(), NOMINAL).ok()?;
        let nets = self.sensitivity_nets().ok()?;
        let s0 = self.solve_net(&net, &c, true).ok()?;
        let d = self.sensitivities(&nets, &c, &s0).ok()?;
        Some(s0.error.abs() + self.req.confidence_sigma * budget::random_sigma(&d))
    }

    /// Monte Carlo yield with every sampled build re-solved at every corner (the same
    /// draws as the first-order yield): a confirmation for one design, too costly for a
    /// search. A build whose circuit fails to solve counts as out of spec.
    pub fn solved_yield(&self, mc: MonteCarlo) -> f64 {
        if mc.samples == 0 {
            return f64::NAN;
        }
        let sigmas = self.sigmas();
        let mut good = 0u32;
        for z in montecarlo::builds(mc.seed, mc.samples) {
            let mm = Mismatch {
                dvbe_v: [z[0] * sigmas[0], z[1] * sigmas[1]],
                dbeta: [z[2] * sigmas[2], z[3] * sigmas[3]],
                dre1: z[4] * sigmas[4],
                dre2: z[5] * sigmas[5],
                dref: z[6] * sigmas[6],
            };
            let Ok(net) = self.compile(&mm, NOMINAL) else {
                continue;
            };
            let within = self.corners.iter().all(|c| {
                self.solve_net(&net, c, true)
                    .is_ok_and(|s| s.error.abs() <= self.req.accuracy)
            });
            good += u32::from(within);
        }
        f64::from(good) / f64::from(mc.samples)
    }

    fn input_limit(&self) -> f64 {
        self.req.input_voltage_max_v.unwrap_or(self.req.supply_v)
    }

    /// 1-sigma size of each mismatch input (zero where the input does not exist).
    fn sigmas(&self) -> [f64; budget::RANDOM_INPUTS] {
        let m = self.design.pair.matching_or_default();
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

    /// One compiled netlist per mismatch input that exists, moved by +1 sigma.
    fn sensitivity_nets(&self) -> Result<Vec<(usize, Netlist)>, SolveFailure> {
        let mut nets = Vec::new();
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
    ) -> Result<Sensitivities, SolveFailure> {
        let op = self.op(corner);
        let opts = SolveOptions { self_heating: true };
        let mut s = [0.0; budget::RANDOM_INPUTS];
        for (i, net) in nets {
            self.solves.fetch_add(1, Ordering::Relaxed);
            let sol = net.solve(&op, &opts)?;
            s[*i] = self.error_of(sol.i_out_a, sol.i_in_a) - nominal.error;
        }
        Ok(s)
    }

    /// Judge the candidate. `mc` drives the yield figure.
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
                CheckName::NoConvergence,
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
        let nets = self
            .compile(&Mismatch::default(), NOMINAL)
            .and_then(|n| self.sensitivity_nets().map(|s| (n, s)));
        let (net, sens_nets) = match nets {
            Ok(x) => x,
            Err(f) => {
                checks.push(failure_check(&f, &probe));
                return incomplete(cost, checks);
            }
        };
        let mut states: Vec<Option<CornerState>> = vec![None; self.corners.len()];
        let mut sens: Vec<Sensitivities> = vec![[0.0; budget::RANDOM_INPUTS]; self.corners.len()];
        for &i in &order {
            let c = self.corners[i];
            let solved = self
                .solve_net(&net, &c, true)
                .and_then(|s| self.sensitivities(&sens_nets, &c, &s).map(|d| (s, d)));
            let (state, d) = match solved {
                Ok(x) => x,
                Err(f) => {
                    // A screen stops here; a verification goes on to judge what did solve.
                    let fc = failure_check(&f, &c);
                    if !checks.iter().any(|x: &Check| x.name == fc.name) {
                        checks.push(fc);
                    }
                    if depth == Depth::Screen {
                        return incomplete(cost, checks);
                    }
                    continue;
                }
            };
            let bound = state.error.abs() + k * budget::random_sigma(&d);
            states[i] = Some(state);
            sens[i] = d;
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
        let unsolved = states.iter().any(Option::is_none);
        let (states, sens): (Vec<CornerState>, Vec<Sensitivities>) = states
            .into_iter()
            .zip(sens)
            .filter_map(|(s, d)| s.map(|s| (s, d)))
            .unzip();
        if states.is_empty() {
            return incomplete(cost, checks);
        }
        let corner_list: Vec<OperatingCorner> = states.iter().map(|s| s.corner).collect();

        // Accuracy.
        let (mut sys, mut rnd, mut worst) = (0.0f64, 0.0f64, 0usize);
        for (i, (s, d)) in states.iter().zip(&sens).enumerate() {
            if s.error.abs() > sys {
                sys = s.error.abs();
                worst = i;
            }
            rnd = rnd.max(budget::random_sigma(d));
        }
        figures.error_systematic = sys;
        figures.error_random_sigma = rnd;
        figures.error_total = sys + k * rnd;

        // Compliance: judged at its corner (always one of the corners).
        let cc = corners::compliance_corner(req);
        let comp_state = states.iter().find(|s| s.corner == cc);
        let comp_pass = comp_state.is_some_and(ratings::all_forward_active);
        figures.compliance_v = if depth == Depth::Full {
            self.compliance_voltage(comp_pass)
        } else {
            // The output transistor's V_CB moves one for one with V_out.
            comp_state.map_or(f64::NAN, |s| {
                let min_vcb = s
                    .devices
                    .iter()
                    .filter(|d| !d.collector_at_supply)
                    .map(DeviceState::v_cb_v)
                    .fold(f64::INFINITY, f64::min);
                (cc.v_out_v - min_vcb).max(0.0)
            })
        };
        let mut comp = Check::at_most(
            CheckName::Compliance,
            figures.compliance_v,
            req.output_voltage_v.min,
            "V_CB >= 0 for every transistor at I_in max, hottest ambient",
        );
        // The verdict is the direct solve at the required voltage; the value is a figure.
        comp.pass = comp_pass;
        checks.push(comp);

        // Input voltage.
        let ic = corners::input_corner(req);
        let v_in = states
            .iter()
            .filter(|s| {
                s.corner.i_in_a == ic.i_in_a
                    && s.corner.rail_v == ic.rail_v
                    && s.corner.t_amb_k == ic.t_amb_k
            })
            .map(|s| s.v_in_v)
            .fold(f64::NAN, f64::max);
        figures.v_in_max_v = v_in;
        checks.push(Check::at_most(
            CheckName::InputVoltage,
            v_in,
            self.input_limit(),
            if req.input_voltage_max_v.is_some() {
                "I_in max, cold ambient"
            } else {
                "I_in max, cold ambient; no input_voltage_max given, limit is the supply"
            },
        ));

        checks.push(Check::at_most(
            CheckName::Accuracy,
            figures.error_total,
            req.accuracy,
            format!("systematic + {k} x random sigma"),
        ));

        if req.min_yield.is_some() || depth == Depth::Full {
            let nominal: Vec<f64> = states.iter().map(|s| s.error).collect();
            figures.yield_fraction =
                linear_yield(&nominal, &sens, req.accuracy, mc.seed, mc.samples);
            if let Some(min) = req.min_yield {
                checks.push(Check::at_least(
                    CheckName::Yield,
                    figures.yield_fraction,
                    min,
                    format!("{} builds, seed {}", mc.samples, mc.seed),
                ));
            }
        }

        let mut r_outs = vec![f64::NAN; states.len()];
        if req.min_output_resistance_ohm.is_some() || depth == Depth::Full {
            for (i, c) in corner_list.iter().enumerate() {
                match self.output_resistance(&net, c) {
                    Ok(r) => r_outs[i] = r,
                    Err(f) => {
                        let fc = failure_check(&f, c);
                        if !checks.iter().any(|x| x.name == fc.name) {
                            checks.push(fc);
                        }
                    }
                }
            }
            figures.r_out_min_ohm = r_outs.iter().copied().fold(f64::INFINITY, f64::min);
            if let Some(min) = req.min_output_resistance_ohm {
                checks.push(Check::at_least(
                    CheckName::OutputResistance,
                    figures.r_out_min_ohm,
                    min,
                    "smallest over the corners",
                ));
            }
        }

        if let Some(h) = ratings::helper_headroom(&states, req.supply_v) {
            checks.push(h);
        }
        checks.push(ratings::vceo(self.design, &states));
        checks.push(ratings::ic_max(self.design, &states));
        checks.push(ratings::dissipation(self.design, &states));

        figures.ratio_achieved =
            ratio_corner(&states, req).map_or(f64::NAN, |s| s.i_out_a / s.i_in_a);

        // The programming resistor's power at the worst corner against its rating,
        // derated at the hottest ambient.
        figures.r_ref_power_w = states.iter().map(|s| s.r_ref_power_w).fold(0.0, f64::max);
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
        match self.tempco(&net, &states) {
            Ok((avg, worst)) => {
                figures.tempco_per_k = avg;
                figures.tempco_worst_per_k = worst;
            }
            Err(f) => {
                let fc = failure_check(&f, &probe);
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
            complete: !unsolved,
        };
        if depth == Depth::Full {
            ev.corners = states
                .iter()
                .zip(&sens)
                .zip(&r_outs)
                .map(|((s, d), r)| CornerRow {
                    corner: s.corner,
                    i_out_a: s.i_out_a,
                    i_in_a: s.i_in_a,
                    error: s.error,
                    error_random_sigma: budget::random_sigma(d),
                    r_out_ohm: *r,
                    v_in_v: s.v_in_v,
                    t_junction_max_k: s
                        .devices
                        .iter()
                        .map(|d| d.t_junction_k)
                        .fold(f64::MIN, f64::max),
                })
                .collect();
            ev.budget = self.budget(&states[worst], &sens[worst]);
            ev.hottest = ratings::hottest(&states).cloned();
        }
        ev
    }

    fn output_resistance(&self, net: &Netlist, c: &OperatingCorner) -> Result<f64, SolveFailure> {
        let op = self.op(c);
        // One solve plus the implicit derivative of the converged solution.
        self.solves.fetch_add(1, Ordering::Relaxed);
        net.output_resistance(&op, &SolveOptions { self_heating: true })
    }

    /// The lowest output voltage at which every transistor keeps V_CB >= 0 (I_in max,
    /// hottest ambient), by bisection on the side the direct check found.
    fn compliance_voltage(&self, pass_at_min: bool) -> f64 {
        let cc = corners::compliance_corner(self.req);
        let ok = |v: f64| {
            let c = OperatingCorner { v_out_v: v, ..cc };
            self.solve(&c, &Mismatch::default())
                .is_ok_and(|s| ratings::all_forward_active(&s))
        };
        let (mut lo, mut hi) = if pass_at_min {
            (0.0, cc.v_out_v)
        } else {
            if !ok(self.req.supply_v) {
                return f64::INFINITY;
            }
            (cc.v_out_v, self.req.supply_v)
        };
        while hi - lo > COMPLIANCE_RESOLUTION_V {
            let mid = 0.5 * (lo + hi);
            if ok(mid) {
                hi = mid;
            } else {
                lo = mid;
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
        Ok(tempco_of(&points))
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
    let worst = points
        .windows(2)
        .map(|w| (w[1].1 - w[0].1) / (i_ref * (w[1].0 - w[0].0)))
        .fold(0.0f64, |a, b| if b.abs() > a.abs() { b } else { a });
    (avg, worst)
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

fn failure_check(f: &SolveFailure, c: &OperatingCorner) -> Check {
    let at = format!(
        "at I_in {:.3e} A, V_out {:.3} V, ambient {:.2} K: {f}",
        c.i_in_a, c.v_out_v, c.t_amb_k
    );
    match f {
        SolveFailure::ThermalRunaway { .. } => Check::failed(CheckName::ThermalRunaway, at),
        _ => Check::failed(CheckName::NoConvergence, at),
    }
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
