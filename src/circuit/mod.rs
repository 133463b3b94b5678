//! Solved circuits: a topology description + part classes + emitter resistors, compiled
//! into an index-based netlist and solved at one operating point, optionally with
//! self-heating (the electrothermal fixed point of MODEL.md).
//!
//! Owns: package layout (which die sits in which package), netlist compilation, the
//! circuit's `NonlinearSystem` (KCL per unknown node, one thermal equation per junction),
//! the start point, failure classification (no convergence vs thermal runaway), and the
//! solved small-signal figures (output resistance, balance voltage, output current noise
//! in `noise`).
//! Must not: match on the topology (descriptions are data), parse input or print.
//!
//! Package layout: when one package of the pair class holds every transistor of the
//! topology (a 4- or 5-device array), all of them sit in it, coupled by `theta_mutual`.
//! Otherwise each matched pair takes one package (a dual holds one pair; a single-device
//! class puts each member in its own package), helpers use spare devices of a package
//! already placed, and failing that each helper is a single of the helper class in its
//! own package (no coupling). There is no coupling across packages.

// Numeric kernels index several parallel fixed-size arrays with one loop variable.
#![allow(clippy::needless_range_loop)]

mod netlist;
mod noise;
mod system;

use crate::device::Region;
pub use crate::model::fanout::MAX_FORM_UNKNOWNS;
use crate::model::{Role, Shape, Topology, TransistorClass, MAX_OUTPUTS};
pub use netlist::{Netlist, MAX_JUNCTION_K, MAX_NODES, MAX_TRANSISTORS};
pub use noise::{ElementNoise, NoiseAnalysis, NoiseKind, NoiseSource};

/// A candidate design: topology, part classes and emitter resistors (nominal values).
#[derive(Debug, Clone, Copy)]
pub struct Design<'a> {
    pub topology: Topology,
    /// The class of the matched pairs (and of helpers when it has spare devices).
    pub pair: &'a TransistorClass,
    /// The single-device class used for helpers without a spare device.
    pub helper: Option<&'a TransistorClass>,
    /// RE1 (ignored by topologies without RE1); 0 = short.
    pub re1_ohm: f64,
    /// RE2; 0 = short.
    pub re2_ohm: f64,
    /// Resistor temperature coefficient, per kelvin, about 25 °C.
    pub re_tcr_per_k: f64,
    /// The programming resistor from the rail (`OperatingPoint::rail_v`) to the input
    /// node; `None` = the input current is forced (`OperatingPoint::i_in_a`).
    pub r_ref: Option<RefResistor>,
    /// Outputs on the input side and the area ratio (`Shape::SINGLE`: the description as
    /// written). RE2 is each output's own resistor, all of one nominal value.
    pub shape: Shape,
}

/// A programming resistor: nominal value at 25 °C and its temperature coefficient.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RefResistor {
    pub ohm: f64,
    pub tcr_per_k: f64,
}

impl Design<'_> {
    /// The intended ratio n of each output: RE1/RE2 on degenerated designs, the closed-form
    /// Widlar ratio at `i_in_a` for a design without RE1, otherwise the area ratio.
    pub fn intended_ratio(&self, i_in_a: f64) -> f64 {
        let desc = self.topology.desc();
        if !desc.has_re1 && self.re2_ohm > 0.0 {
            let p = &self.pair.model;
            let vt = crate::device::thermal_voltage(p.t_nom_k);
            let inputs = crate::model::EstimateInputs {
                beta: f64::INFINITY,
                early_voltage_v: None,
                i_in_a,
                thermal_voltage_v: vt,
                vbe_v: vt * (i_in_a / p.saturation_current_a).ln(),
                re1_ohm: 0.0,
                re2_ohm: self.re2_ohm,
                outputs: 1.0,
                area_ratio: 1.0,
            };
            (desc.estimates.ratio)(&inputs)
        } else if desc.has_re1 && self.re1_ohm > 0.0 && self.re2_ohm > 0.0 {
            self.re1_ohm / self.re2_ohm
        } else {
            self.shape.area_ratio()
        }
    }
}

/// One operating point, magnitudes from the mirror rail.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct OperatingPoint {
    /// The forced input current; with a programming resistor only a hint for the start
    /// point (the solved input current is `Solution::i_in_a`).
    pub i_in_a: f64,
    /// The programming rail, volts from the mirror rail (used when the design has R_ref).
    pub rail_v: Option<f64>,
    pub v_out_v: f64,
    pub supply_v: f64,
    pub t_amb_k: f64,
}

/// Deviations from nominal. Index 0 is the pair Q1,Q2 and index 1 the pair Q3,Q4; the
/// offset applies to the pair's second device (MODEL.md). `dre*` are relative resistor
/// deviations (0.01 = +1 %). With several outputs the fields above are output 1's (its
/// devices against the input device, and its RE2) and `more[k - 2]` output k's: each
/// output is matched against the input side on its own. Devices in parallel on one side
/// share their side's deviation.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct Mismatch {
    pub dvbe_v: [f64; 2],
    pub dbeta: [f64; 2],
    pub dre1: f64,
    pub dre2: f64,
    /// Relative deviation of the programming resistor.
    pub dref: f64,
    /// Outputs 2 and up.
    pub more: [OutputDeviation; MAX_OUTPUTS as usize - 1],
}

/// One output's own deviations (see `Mismatch`).
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct OutputDeviation {
    pub dvbe_v: [f64; 2],
    pub dbeta: [f64; 2],
    pub dre2: f64,
}

impl Mismatch {
    /// Output `k`'s deviations (1-based).
    pub fn output(&self, k: u8) -> OutputDeviation {
        if k <= 1 {
            OutputDeviation {
                dvbe_v: self.dvbe_v,
                dbeta: self.dbeta,
                dre2: self.dre2,
            }
        } else {
            self.more[usize::from(k) - 2]
        }
    }

    /// Sets output `k`'s deviations (1-based).
    pub fn set_output(&mut self, k: u8, d: OutputDeviation) {
        if k <= 1 {
            self.dvbe_v = d.dvbe_v;
            self.dbeta = d.dbeta;
            self.dre2 = d.dre2;
        } else {
            self.more[usize::from(k) - 2] = d;
        }
    }
}

#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct SolveOptions {
    pub self_heating: bool,
}

/// One transistor of a solved circuit (magnitudes, NPN form).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TransistorState {
    pub name: &'static str,
    pub role: Role,
    pub v_be: f64,
    pub v_ce: f64,
    pub i_c: f64,
    pub i_b: f64,
    pub t_junction_k: f64,
    pub region: Region,
    /// `V_CE I_C + V_BE I_B`, watts.
    pub power_w: f64,
    /// Package index (see the module docs for the layout).
    pub package: u8,
    /// The device is a single of the helper class (its ratings apply), not the pair class.
    pub helper_class: bool,
    /// 0 for the input side and shared helpers, k for output k.
    pub output: u8,
}

/// A node voltage of a solved circuit.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NodeVoltage {
    pub name: &'static str,
    pub volts: f64,
}

/// A converged, residual-checked operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Solution {
    /// Output 1's current (the only output's, on a single-output design).
    pub i_out_a: f64,
    /// Every output's current, output 1 first. See `outputs()`.
    pub output_currents: [f64; MAX_OUTPUTS as usize],
    pub output_count: usize,
    /// The input current: forced, or through R_ref `(V_rail - V_in) / R_ref(T)`.
    pub i_in_a: f64,
    /// Power in R_ref, watts (0 without one).
    pub r_ref_power_w: f64,
    pub v_in_v: f64,
    /// Current drawn from the opposite rail (helper collectors), amperes.
    pub supply_current_a: f64,
    /// Unknown nodes, then the output nodes (`out`, or `out1`...), then `S` when the
    /// netlist uses it. See `nodes()`.
    pub nodes: [NodeVoltage; MAX_NODES + MAX_OUTPUTS as usize + 1],
    pub node_count: usize,
    /// In the topology description's order. See `transistors()`.
    pub transistors: [TransistorState; MAX_TRANSISTORS],
    pub transistor_count: usize,
    /// Newton iterations, continuation and electrothermal solve included.
    pub iterations: u32,
    /// The converged unknowns, to start a nearby solve from (`Netlist::solve_near`).
    start: Start,
}

/// A converged unknown vector (node voltages, and junction temperatures when solved with
/// self-heating): the start point of a solve of a nearby circuit or operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Start {
    x: crate::solve::Vector,
    self_heating: bool,
}

impl Solution {
    /// Where this solve converged, to start a nearby one from.
    pub fn start(&self) -> &Start {
        &self.start
    }

    pub fn nodes(&self) -> &[NodeVoltage] {
        &self.nodes[..self.node_count]
    }

    pub fn transistors(&self) -> &[TransistorState] {
        &self.transistors[..self.transistor_count]
    }

    /// Every output's current, output 1 first.
    pub fn outputs(&self) -> &[f64] {
        &self.output_currents[..self.output_count]
    }

    /// The output (0-based) whose error `error(I_out)` is largest in magnitude, and that
    /// error: the output that governs a figure.
    pub fn worst_output(&self, error: impl Fn(f64) -> f64) -> (usize, f64) {
        let mut worst = (0, error(self.outputs()[0]));
        for (k, &i) in self.outputs().iter().enumerate().skip(1) {
            let e = error(i);
            // Outputs equal but for rounding keep the lower number.
            if e.abs() > worst.1.abs() * (1.0 + 1e-9) + 1e-15 {
                worst = (k, e);
            }
        }
        worst
    }

    /// MODEL.md error `e = I_out / (n I_in) - 1` (`i_in_a`: the input current to compare
    /// with; `self.i_in_a` for a programmed design).
    /// With several outputs, the worst output's error.
    pub fn error(&self, ratio: f64, i_in_a: f64) -> f64 {
        self.worst_output(|i| i / (ratio * i_in_a) - 1.0).1
    }

    pub fn node(&self, name: &str) -> Option<f64> {
        self.nodes()
            .iter()
            .find(|n| n.name == name)
            .map(|n| n.volts)
    }
}

/// Why a design could not be solved at a point. A failure is a result to explain, never a
/// number.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SolveFailure {
    #[error(
        "{} with {part} did not converge at I_in = {} A (or R_ref from the rail), V_out = {} V, supply = {} V, {} K \
         after {iterations} iterations (largest KCL residual {residual:e})",
        topology.name(), point.i_in_a, point.v_out_v, point.supply_v, point.t_amb_k
    )]
    NoConvergence {
        topology: Topology,
        part: String,
        point: OperatingPoint,
        iterations: u32,
        residual: f64,
    },
    #[error(
        "{} with {part} has no stable electrothermal operating point (thermal runaway) at \
         I_in = {} A, V_out = {} V, {} K ambient",
        topology.name(), point.i_in_a, point.v_out_v, point.t_amb_k
    )]
    ThermalRunaway {
        topology: Topology,
        part: String,
        point: OperatingPoint,
        /// The hottest junction temperature reached while searching, kelvin.
        t_max_k: f64,
    },
    /// No solution was found and the input side alone would need more than the supply:
    /// the programming current cannot flow (the input would have to rise above the rail
    /// that feeds it).
    #[error(
        "{} with {part} cannot carry I_in = {} A from a {} V supply: the input side needs about {:.3} V ({:.3} V more than the supply); lower the emitter resistors or the input current, or raise the supply",
        topology.name(), point.i_in_a, point.supply_v, needed_v, needed_v - point.supply_v
    )]
    InputAboveSupply {
        topology: Topology,
        part: String,
        point: OperatingPoint,
        /// The input voltage the closed-form estimate needs, volts from the mirror rail.
        needed_v: f64,
    },
    #[error(
        "{} needs a helper transistor and {part} has no spare device; name a single-device class",
        topology.name()
    )]
    HelperMissing { topology: Topology, part: String },
    #[error("invalid design or operating point: {reason}")]
    Invalid { reason: String },
}

/// Solves one design at one operating point. Compiles the netlist first; callers that
/// solve one design at many points should compile once with `Netlist::compile`.
pub fn solve_point(
    design: &Design,
    op: &OperatingPoint,
    mm: &Mismatch,
    opts: &SolveOptions,
) -> Result<Solution, SolveFailure> {
    Netlist::compile(design, mm)?.solve(op, opts)
}

/// `dV_out / dI_out` of the solved circuit: the derivative of the converged solution with
/// respect to the output voltage (implicit differentiation of the circuit equations,
/// self-heating included when enabled). Infinite when the output current does not depend
/// on V_out.
pub fn output_resistance(
    design: &Design,
    op: &OperatingPoint,
    mm: &Mismatch,
    opts: &SolveOptions,
) -> Result<f64, SolveFailure> {
    Netlist::compile(design, mm)?.output_resistance(op, opts)
}

/// The output voltage within `V(in) ... supply` at which the solved error crosses zero (the
/// Early effect cancelling the base-current error, as found by sweeping the output on the
/// bench), or `None` when it does not cross there or a point fails to solve. `op.v_out_v`
/// is ignored.
pub fn balance_voltage(
    design: &Design,
    ratio: f64,
    op: &OperatingPoint,
    mm: &Mismatch,
    opts: &SolveOptions,
) -> Option<f64> {
    let net = Netlist::compile(design, mm).ok()?;
    let n = ratio;
    let err = |v: f64| -> Option<f64> {
        let p = OperatingPoint { v_out_v: v, ..*op };
        net.solve(&p, opts).ok().map(|s| s.error(n, s.i_in_a))
    };
    let base = net.solve(op, opts).ok()?;
    let (mut a, mut b) = (base.v_in_v.max(0.0), op.supply_v);
    if b <= a {
        return None;
    }
    let (mut fa, mut fb) = (err(a)?, err(b)?);
    if fa == 0.0 {
        return Some(a);
    }
    if fa.signum() == fb.signum() {
        return None;
    }
    // Illinois regula falsi: the error is close to linear in V_out in forward-active
    // operation, so this converges in a handful of solves.
    let mut side = 0i8;
    for _ in 0..100 {
        let c = (a * fb - b * fa) / (fb - fa);
        let fc = err(c)?;
        if fc == 0.0 || (b - a).abs() < 1e-9 * op.supply_v.max(1.0) {
            return Some(c);
        }
        if fc.signum() == fb.signum() {
            b = c;
            fb = fc;
            if side == -1 {
                fa *= 0.5;
            }
            side = -1;
        } else {
            a = c;
            fa = fc;
            if side == 1 {
                fb *= 0.5;
            }
            side = 1;
        }
        if (b - a).abs() < 1e-7 {
            return Some(0.5 * (a + b));
        }
    }
    Some(0.5 * (a + b))
}

/// A dual of the given model with round class figures (1 mV V_BE sigma, 2 % beta sigma,
/// 45 V, 100 mA, 300 mW, 600/250 K/W): the one fixture the engine's unit tests share.
#[cfg(test)]
pub(crate) fn test_pair(id: &str, model: crate::model::BjtParams) -> crate::model::TransistorClass {
    use crate::model::{Matching, Polarity, Ratings, Thermal, TransistorClass};
    TransistorClass {
        id: id.into(),
        summary: String::new(),
        polarity: Polarity::Npn,
        devices_per_package: 2,
        package: String::new(),
        model,
        matching: Some(Matching {
            vbe_offset_sigma_v: 1e-3,
            beta_mismatch_sigma: 0.02,
        }),
        ratings: Ratings {
            vceo_v: 45.0,
            ic_max_a: 0.1,
            power_per_package_w: 0.3,
        },
        thermal: Thermal {
            theta_self_k_per_w: 600.0,
            theta_mutual_k_per_w: 250.0,
        },
        unit_cost: 0.0,
        provenance: String::new(),
    }
}

#[cfg(test)]
mod solve_near_tests {
    use super::*;
    use crate::model::{BjtParams, ALL_TOPOLOGIES};

    fn op(i_in_a: f64, t_amb_k: f64) -> OperatingPoint {
        OperatingPoint {
            i_in_a,
            rail_v: None,
            v_out_v: 3.0,
            supply_v: 15.0,
            t_amb_k,
        }
    }

    fn design<'a>(t: Topology, pair: &'a TransistorClass, re: f64) -> Design<'a> {
        Design {
            shape: Shape::SINGLE,
            topology: t,
            pair,
            helper: Some(pair),
            re1_ohm: if t.desc().has_re1 { re } else { 0.0 },
            re2_ohm: re,
            re_tcr_per_k: 0.0,
            r_ref: None,
        }
    }

    /// A +1 sigma build solved from the nominal solution lands on the solution the
    /// closed-form start reaches, to the KCL tolerance (1e-9 of the branch currents), in
    /// fewer Newton iterations: the error-budget builds of `check` rest on this.
    #[test]
    fn a_build_started_from_the_nominal_solution_agrees_with_a_cold_solve() {
        let pair = test_pair("near", BjtParams::new(1e-14, 150.0, Some(80.0)));
        let opts = SolveOptions { self_heating: true };
        let builds = [
            Mismatch {
                dvbe_v: [1e-3, 0.0],
                ..Mismatch::default()
            },
            Mismatch {
                dbeta: [0.02, 0.02],
                ..Mismatch::default()
            },
            Mismatch {
                dre2: 0.003,
                ..Mismatch::default()
            },
        ];
        let mut checked = 0;
        for &t in ALL_TOPOLOGIES.iter() {
            for re in [0.0, 1e3] {
                for p in [op(1e-6, 293.15), op(1e-3, 313.15)] {
                    let d = design(t, &pair, re);
                    let nominal = Netlist::compile(&d, &Mismatch::default())
                        .unwrap()
                        .solve(&p, &opts)
                        .unwrap();
                    for mm in &builds {
                        let net = Netlist::compile(&d, mm).unwrap();
                        let cold = net.solve(&p, &opts).unwrap();
                        let warm = net.solve_near(&p, &opts, nominal.start()).unwrap();
                        for (a, b) in cold.outputs().iter().zip(warm.outputs()) {
                            assert!((a / b - 1.0).abs() < 1e-8, "{t:?} {re} {p:?}: {a} {b}");
                        }
                        assert!((cold.i_in_a / warm.i_in_a - 1.0).abs() < 1e-12);
                        assert!(
                            warm.iterations < cold.iterations,
                            "{t:?}: {} >= {}",
                            warm.iterations,
                            cold.iterations
                        );
                        checked += 1;
                    }
                }
            }
        }
        assert!(checked >= 3 * ALL_TOPOLOGIES.len());
    }

    /// A start that does not fit (solved without self-heating) is no start: the solve is
    /// the cold one, bit for bit.
    #[test]
    fn a_start_of_another_kind_falls_back_to_the_cold_solve() {
        let pair = test_pair("near", BjtParams::new(1e-14, 150.0, Some(80.0)));
        let d = design(Topology::Wilson, &pair, 0.0);
        let p = op(1e-4, 300.0);
        let net = Netlist::compile(&d, &Mismatch::default()).unwrap();
        let iso = net.solve(&p, &SolveOptions::default()).unwrap();
        let opts = SolveOptions { self_heating: true };
        assert_eq!(
            net.solve_near(&p, &opts, iso.start()).unwrap(),
            net.solve(&p, &opts).unwrap()
        );
    }
}
