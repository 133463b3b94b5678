//! Compilation of a topology description into an index-based netlist, and the solve
//! driver (isothermal first, then the coupled electrothermal system).

use super::system::{CircuitSystem, FIRST_NODE, MAX_DT_STEP_K, OUT_SLOT, P_SLOT, R_SLOT, S_SLOT};
use super::{
    Design, Mismatch, NodeVoltage, OperatingPoint, Solution, SolveFailure, SolveOptions,
    TransistorState,
};
use crate::device::{Bjt, BjtAtT, Region};
use crate::model::fanout::{self, Form, MAX_FORM_NODES, MAX_FORM_TRANSISTORS};
use crate::model::{Branch, EstimateInputs, Role, Topology, TransistorClass, MAX_OUTPUTS};
use crate::solve::{self, lu_factor, lu_solve, Matrix, NewtonOptions, Vector, MAX_DIM};

/// Absolute KCL floor as a fraction of the input current (see `solve_full`).
/// 1e-12 of I_in: a thousandth of the relative tolerance applied to the input current.
/// It covers nodes whose own currents are tiny, where the last bit of a node voltage
/// times a device's conductance is all that is left (about 1e-19 A at 50 µA and 40 V).
pub(crate) const KCL_FLOOR_OF_INPUT: f64 = 1e-12;
/// Newton iterations a solve started from a nearby solution gets before it falls back to
/// the solve from scratch (it converges in three to five where it converges at all).
const NEAR_MAX_ITERATIONS: u32 = 10;

/// Most unknown node voltages of any form (multi-output forms included).
pub const MAX_NODES: usize = MAX_FORM_NODES;
/// Most transistors of any form (multi-output forms included).
pub const MAX_TRANSISTORS: usize = MAX_FORM_TRANSISTORS;
/// Most emitter resistors: RE1 and one RE2 per output.
pub(super) const MAX_RESISTORS: usize = 1 + MAX_OUTPUTS as usize;

/// A fixed point hotter than this is reported as thermal runaway: it lies beyond every
/// silicon junction rating and outside the device model's range (the die would fail long
/// before; common practice, no source).
pub const MAX_JUNCTION_K: f64 = 573.15;

/// Most steps of the bounding iteration (`Netlist::thermal_bound`): enough to climb from
/// any ambient to `MAX_JUNCTION_K` in `MAX_DT_STEP_K` steps and settle.
const THERMAL_BOUND_STEPS: usize = 60;
/// The bounding iteration has settled when no junction moves by more than this, kelvin;
/// the coupled Newton finishes from there.
const THERMAL_BOUND_SETTLED_K: f64 = 0.5;

/// What the bounding iteration proved.
enum ThermalBound {
    /// Every fixed point has a junction at least this hot, over `MAX_JUNCTION_K`.
    Runaway(f64),
    /// Settled: node voltages and temperatures next to the fixed point.
    Near(Vector),
    /// Neither (an electrical solve failed, or no settling within the budget).
    Unknown,
}

/// Where one transistor sits.
#[derive(Debug, Clone, Copy, PartialEq)]
struct Placement {
    /// The device comes from the helper class (a single) rather than the pair class.
    from_helper_class: bool,
    package: u8,
}

#[derive(Debug, Clone, Copy)]
pub(super) struct Tr {
    pub name: &'static str,
    pub role: Role,
    pub branch: Branch,
    /// Slots: 0 = R, 1 = S, 2 = out, 3.. = unknown nodes.
    pub c: usize,
    pub b: usize,
    pub e: usize,
    pub bjt: Bjt,
    pub package: u8,
    pub helper_class: bool,
    /// Flicker and base-resistance data of the device's class (noise analysis only).
    pub noise: DeviceNoise,
    /// 0 for the input side and shared helpers, k for output k.
    pub output: u8,
    /// The device's share of its side's current (1/n with n devices in parallel).
    pub share: f64,
}

/// SPICE KF, AF and RB of one device (see `BjtParams`); zero KF and RB mean none.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(super) struct DeviceNoise {
    pub kf: f64,
    pub af: f64,
    pub rb_ohm: f64,
}

#[derive(Debug, Clone, Copy)]
pub(super) struct Res {
    /// The resistor's name in reports (`RE1`, `RE2`, `RE2_1`, ...).
    pub name: &'static str,
    /// The slot the resistor joins to R.
    pub slot: usize,
    /// Resistance at 25 °C with its deviation applied.
    pub ohm_25c: f64,
}

/// A two-terminal resistor between two slots (the programming resistor `Rref P in`).
#[derive(Debug, Clone, Copy)]
pub(super) struct Link {
    pub a: usize,
    pub b: usize,
    /// Resistance at 25 °C with its deviation applied.
    pub ohm_25c: f64,
    pub tcr_per_k: f64,
}

/// A design compiled for solving: unknown nodes by index, devices with their mismatch,
/// the thermal coupling matrix. Cheap to solve at many operating points.
#[derive(Debug, Clone)]
pub struct Netlist {
    pub(super) topology: Topology,
    pub(super) part: String,
    pub(super) node_names: [&'static str; MAX_NODES],
    pub(super) n_nodes: usize,
    pub(super) in_slot: usize,
    pub(super) uses_supply: bool,
    pub(super) tr: [Tr; MAX_TRANSISTORS],
    pub(super) n_tr: usize,
    pub(super) res: [Res; MAX_RESISTORS],
    pub(super) n_res: usize,
    pub(super) tcr_per_k: f64,
    /// The programming resistor, from the rail slot `P` to the input node.
    pub(super) r_ref: Option<Link>,
    pub(super) theta: [[f64; MAX_TRANSISTORS]; MAX_TRANSISTORS],
    /// A typical beta of the pair class at its nominal temperature, for the start point.
    beta_nom: f64,
    /// The netlist lines this was compiled from.
    pub(super) form: &'static Form,
    /// Output 1's emitter node (`e2` or `e2_1`), for the closed-form estimates.
    re2_node: &'static str,
}

fn layout(design: &Design, form: &Form) -> Result<[Placement; MAX_TRANSISTORS], SolveFailure> {
    let desc = design.topology.desc();
    let n = desc.transistors.len();
    let dpp = design.pair.devices_per_package.max(1) as usize;
    let mut out = [Placement {
        from_helper_class: false,
        package: 0,
    }; MAX_TRANSISTORS];
    if !form.shape.is_single() {
        // Several outputs or an area ratio: arrays filled as a designer fills them.
        for (i, seat) in fanout::place(form, design.pair.devices_per_package)
            .into_iter()
            .enumerate()
        {
            if seat.helper_class && design.helper.is_none() {
                return Err(SolveFailure::HelperMissing {
                    topology: design.topology,
                    part: design.pair.id.clone(),
                });
            }
            out[i] = Placement {
                from_helper_class: seat.helper_class,
                package: seat.package,
            };
        }
        return Ok(out);
    }
    if dpp >= n {
        return Ok(out);
    }
    // Fill packages of the pair class pair by pair, then helpers into spare slots.
    let mut used: Vec<usize> = Vec::new(); // devices used per package
    let mut pkg_of_pair = [usize::MAX; 2];
    for (i, line) in desc.transistors.iter().enumerate() {
        if let Role::Matched { pair, .. } = line.role {
            let p = pair as usize;
            let pkg = if dpp == 1 {
                used.push(1);
                used.len() - 1
            } else if pkg_of_pair[p] != usize::MAX {
                pkg_of_pair[p]
            } else {
                let k = match used.iter().position(|&u| u + 2 <= dpp) {
                    Some(k) => k,
                    None => {
                        used.push(0);
                        used.len() - 1
                    }
                };
                used[k] += 2;
                pkg_of_pair[p] = k;
                k
            };
            out[i].package = pkg as u8;
        }
    }
    for (i, line) in desc.transistors.iter().enumerate() {
        if line.role == Role::Helper {
            if let Some(k) = used.iter().position(|&u| u < dpp) {
                used[k] += 1;
                out[i].package = k as u8;
            } else {
                if design.helper.is_none() {
                    return Err(SolveFailure::HelperMissing {
                        topology: design.topology,
                        part: design.pair.id.clone(),
                    });
                }
                used.push(dpp); // a single: nothing spare
                out[i] = Placement {
                    from_helper_class: true,
                    package: (used.len() - 1) as u8,
                };
            }
        }
    }
    Ok(out)
}

fn positive_finite(x: f64) -> bool {
    x.is_finite() && x > 0.0
}

impl Netlist {
    /// Compiles a design with its deviations. Fails when a helper is needed and none is
    /// given, or when a value is out of its domain.
    pub fn compile(design: &Design, mm: &Mismatch) -> Result<Netlist, SolveFailure> {
        let desc = design.topology.desc();
        let invalid = |reason: String| Err(SolveFailure::Invalid { reason });
        for (what, v) in [("RE1", design.re1_ohm), ("RE2", design.re2_ohm)] {
            if !(v.is_finite() && v >= 0.0) {
                return invalid(format!("{what} must be a finite resistance >= 0, got {v}"));
            }
        }
        let form = match fanout::form(design.topology, design.shape) {
            Ok(f) => f,
            Err(e) => return invalid(e.to_string()),
        };
        let placement = layout(design, form)?;
        let mut node_names = [""; MAX_NODES];
        let mut n_nodes = 0usize;
        // A resistor's node of a 0-ohm resistor is the mirror rail itself.
        let shorted = |name: &str| {
            form.resistors.iter().any(|r| {
                r.node == name
                    && if r.output == 0 {
                        !(desc.has_re1 && design.re1_ohm > 0.0)
                    } else {
                        design.re2_ohm <= 0.0
                    }
            })
        };
        let mut slot_of = |name: &'static str| -> usize {
            match name {
                "R" => R_SLOT,
                "S" => S_SLOT,
                // Every output is held at V_out.
                _ if form.output_index(name).is_some() => OUT_SLOT,
                _ if shorted(name) => R_SLOT,
                _ => {
                    if let Some(k) = node_names[..n_nodes].iter().position(|&n| n == name) {
                        FIRST_NODE + k
                    } else {
                        node_names[n_nodes] = name;
                        n_nodes += 1;
                        FIRST_NODE + n_nodes - 1
                    }
                }
            }
        };
        let dummy = Tr {
            name: "",
            role: Role::Helper,
            branch: Branch::Input,
            c: R_SLOT,
            b: R_SLOT,
            e: R_SLOT,
            bjt: Bjt::new(&design.pair.model, 0.0, 0.0),
            package: 0,
            helper_class: false,
            noise: DeviceNoise::default(),
            output: 0,
            share: 1.0,
        };
        let mut tr = [dummy; MAX_TRANSISTORS];
        let mut theta = [[0.0; MAX_TRANSISTORS]; MAX_TRANSISTORS];
        let mut classes: [&TransistorClass; MAX_TRANSISTORS] = [design.pair; MAX_TRANSISTORS];
        for (i, line) in form.transistors.iter().enumerate() {
            let class = if placement[i].from_helper_class {
                design.helper.unwrap_or(design.pair)
            } else {
                design.pair
            };
            classes[i] = class;
            let (dvbe, dbeta) = match line.role {
                Role::Matched { pair, member: 1 } => {
                    let d = mm.output(form.output_of[i]);
                    (d.dvbe_v[pair as usize], d.dbeta[pair as usize])
                }
                _ => (0.0, 0.0),
            };
            let p = &class.model;
            if !(positive_finite(p.saturation_current_a) && positive_finite(p.beta_forward)) {
                return invalid(format!("class {} needs IS > 0 and BF > 0", class.id));
            }
            if !(dbeta > -1.0 && dvbe.is_finite()) {
                return invalid(format!("mismatch out of range: dvbe {dvbe}, dbeta {dbeta}"));
            }
            tr[i] = Tr {
                name: line.name,
                role: line.role,
                branch: form.branches[i],
                c: slot_of(line.collector),
                b: slot_of(line.base),
                e: slot_of(line.emitter),
                bjt: Bjt::new(p, dvbe, dbeta),
                package: placement[i].package,
                helper_class: placement[i].from_helper_class,
                noise: DeviceNoise {
                    kf: p.flicker_kf,
                    af: p.flicker_af,
                    rb_ohm: p.base_resistance_ohm,
                },
                output: form.output_of[i],
                share: 1.0 / f64::from(form.parallel[i]),
            };
        }
        let n_tr = form.transistors.len();
        for i in 0..n_tr {
            for j in 0..n_tr {
                if placement[i].package == placement[j].package {
                    theta[i][j] = if i == j {
                        classes[i].thermal.theta_self_k_per_w
                    } else {
                        classes[i].thermal.theta_mutual_k_per_w
                    };
                }
            }
        }
        let mut res = [Res {
            name: "",
            slot: R_SLOT,
            ohm_25c: 0.0,
        }; MAX_RESISTORS];
        let mut n_res = 0;
        for r in form.resistors {
            let (name, label) = (r.node, r.name);
            let (ohm, dev) = if r.output == 0 {
                (design.re1_ohm, mm.dre1)
            } else {
                (design.re2_ohm, mm.output(r.output).dre2)
            };
            if let Some(k) = node_names[..n_nodes].iter().position(|&n| n == name) {
                res[n_res] = Res {
                    name: label,
                    slot: FIRST_NODE + k,
                    ohm_25c: ohm * (1.0 + dev),
                };
                if res[n_res].ohm_25c <= 0.0 {
                    return invalid(format!(
                        "{name} resistor deviation {dev} leaves no resistance"
                    ));
                }
                n_res += 1;
            }
        }
        let in_slot = FIRST_NODE
            + node_names[..n_nodes]
                .iter()
                .position(|&n| n == "in")
                .expect("every topology has an input node");
        let uses_supply = tr[..n_tr].iter().any(|t| t.c == S_SLOT);
        // The programming network is one more netlist line, `Rref P in`.
        let r_ref = match design.r_ref {
            None => None,
            Some(r) => {
                let ohm_25c = r.ohm * (1.0 + mm.dref);
                if !(positive_finite(ohm_25c) && r.tcr_per_k.is_finite()) {
                    return invalid(format!(
                        "R_ref must be a finite resistance > 0, got {} ohm (deviation {})",
                        r.ohm, mm.dref
                    ));
                }
                Some(Link {
                    a: P_SLOT,
                    b: in_slot,
                    ohm_25c,
                    tcr_per_k: r.tcr_per_k,
                })
            }
        };
        Ok(Netlist {
            topology: design.topology,
            part: design.pair.id.clone(),
            node_names,
            n_nodes,
            in_slot,
            uses_supply,
            tr,
            n_tr,
            res,
            n_res,
            tcr_per_k: design.re_tcr_per_k,
            r_ref,
            theta,
            beta_nom: design.pair.model.beta_forward,
            form,
            re2_node: form
                .resistors
                .iter()
                .find(|r| r.output == 1)
                .map_or("e2", |r| r.node),
        })
    }

    fn check_point(&self, op: &OperatingPoint) -> Result<(), SolveFailure> {
        let ok = positive_finite(op.i_in_a)
            && op.v_out_v.is_finite()
            && op.v_out_v >= 0.0
            && op.supply_v.is_finite()
            && op.supply_v >= op.v_out_v
            && positive_finite(op.t_amb_k)
            && (self.r_ref.is_none() || op.rail_v.is_some_and(positive_finite));
        if ok {
            Ok(())
        } else {
            Err(SolveFailure::Invalid {
                reason: format!(
                    "operating point needs I_in > 0, 0 <= V_out <= supply, T > 0 K and, with \
                     R_ref, a rail above 0 V; got {op:?}"
                ),
            })
        }
    }

    /// Why a point could not be solved: the input side needing more than the supply when
    /// the closed-form estimate says so, otherwise a plain failure to converge.
    fn unsolved(&self, sys: &CircuitSystem, c: solve::Convergence) -> SolveFailure {
        let op = &sys.op;
        let inputs = EstimateInputs {
            beta: self.beta_nom,
            early_voltage_v: None,
            i_in_a: op.i_in_a,
            thermal_voltage_v: sys.at[0].vt,
            // The smallest plausible silicon V_BE: the estimate errs low.
            vbe_v: 0.4,
            re1_ohm: sys.res_ohm_for("e1", self),
            re2_ohm: sys.res_ohm_for(self.re2_node, self),
            outputs: f64::from(self.form.shape.outputs),
            area_ratio: self.form.shape.area_ratio(),
        };
        let needed_v = (self.topology.desc().estimates.input_voltage_v)(&inputs);
        if needed_v.is_finite() && needed_v > op.supply_v {
            return SolveFailure::InputAboveSupply {
                topology: self.topology,
                part: self.part.clone(),
                point: *op,
                needed_v,
            };
        }
        self.no_convergence(op, c)
    }

    fn no_convergence(&self, op: &OperatingPoint, c: solve::Convergence) -> SolveFailure {
        let residual = match c {
            solve::Convergence::MaxIterations { residual, .. } => residual,
            _ => f64::NAN,
        };
        SolveFailure::NoConvergence {
            topology: self.topology,
            part: self.part.clone(),
            point: *op,
            iterations: c.iterations(),
            residual,
        }
    }

    /// The start point of MODEL.md: each junction at `V_T ln(I/IS(T))` for the current it
    /// nominally carries, node voltages built up from the rail through the netlist.
    fn start_point(&self, sys: &CircuitSystem) -> Vector {
        let op = &sys.op;
        let desc = self.topology.desc();
        let inputs = EstimateInputs {
            beta: self.beta_nom,
            early_voltage_v: None,
            i_in_a: op.i_in_a,
            thermal_voltage_v: sys.at[0].vt,
            vbe_v: 0.0,
            re1_ohm: sys.res_ohm_for("e1", self),
            re2_ohm: sys.res_ohm_for(self.re2_node, self),
            outputs: f64::from(self.form.shape.outputs),
            area_ratio: self.form.shape.area_ratio(),
        };
        let ratio = (desc.estimates.ratio)(&inputs);
        let mut v = [0.0; MAX_DIM + FIRST_NODE];
        let mut known = [false; MAX_DIM + FIRST_NODE];
        v[S_SLOT] = op.supply_v;
        v[OUT_SLOT] = op.v_out_v;
        known[R_SLOT] = true;
        known[S_SLOT] = true;
        known[OUT_SLOT] = true;
        // The first pair's V_BE offset moves each output by about IS2/IS1, shrunk by
        // degeneration to the power V_T / (V_T + I RE) (first-order small-signal result).
        let input_device =
            (0..self.n_tr).find(|&i| self.tr[i].role == Role::Matched { pair: 0, member: 0 });
        let offset_of = |k: u8| -> f64 {
            let out_device = (0..self.n_tr).find(|&i| {
                self.tr[i].output == k && self.tr[i].role == Role::Matched { pair: 0, member: 1 }
            });
            match (input_device, out_device) {
                (Some(a), Some(b)) => {
                    let vt = sys.at[a].vt;
                    let drop = op.i_in_a * inputs.re1_ohm.max(inputs.re2_ohm);
                    (sys.at[b].is / sys.at[a].is).powf(vt / (vt + drop))
                }
                _ => 1.0,
            }
        };
        let outputs = f64::from(self.form.shape.outputs);
        let mut cur = [0.0; MAX_TRANSISTORS];
        for i in 0..self.n_tr {
            let t = &self.tr[i];
            cur[i] = t.share
                * match t.branch {
                    Branch::Input => op.i_in_a,
                    Branch::Output => op.i_in_a * ratio * offset_of(t.output.max(1)),
                    Branch::BaseCurrents => op.i_in_a * (1.0 + outputs * ratio) / self.beta_nom,
                };
        }
        // Refine the nominal currents by KCL with base currents at BF: a transistor that is
        // the only collector at an unknown node carries what the node receives less the base
        // currents drawn there; one whose collector is a rail and is the only emitter at a
        // resistor-free node carries what that node's bases and collectors draw.
        let nt = self.n_tr;
        let beta = self.beta_nom;
        let has_res = |slot: usize| self.res[..self.n_res].iter().any(|r| r.slot == slot);
        for _ in 0..3 {
            for i in 0..nt {
                let t = &self.tr[i];
                let collectors_at = |n: usize| (0..nt).filter(|&j| self.tr[j].c == n).count();
                if t.c >= FIRST_NODE && collectors_at(t.c) == 1 && !has_res(t.c) {
                    let mut feed = if t.c == self.in_slot { op.i_in_a } else { 0.0 };
                    for j in 0..nt {
                        if self.tr[j].e == t.c {
                            feed += cur[j] * (1.0 + 1.0 / beta);
                        }
                        if self.tr[j].b == t.c && j != i {
                            feed -= cur[j] / beta;
                        }
                    }
                    let own = if t.b == t.c { 1.0 / beta } else { 0.0 };
                    if feed > 0.0 {
                        cur[i] = feed / (1.0 + own);
                    }
                } else if t.c < FIRST_NODE
                    && t.e >= FIRST_NODE
                    && t.e != self.in_slot
                    && !has_res(t.e)
                    && (0..nt).filter(|&j| self.tr[j].e == t.e).count() == 1
                {
                    let mut draw = 0.0;
                    for j in 0..nt {
                        if self.tr[j].c == t.e {
                            draw += cur[j];
                        }
                        if self.tr[j].b == t.e {
                            draw += cur[j] / beta;
                        }
                    }
                    if draw > 0.0 {
                        cur[i] = draw / (1.0 + 1.0 / beta);
                    }
                }
            }
        }
        let mut vbe_at = [0.0; MAX_TRANSISTORS];
        for i in 0..self.n_tr {
            let d: &BjtAtT = &sys.at[i];
            vbe_at[i] = d.vbe_for_current(cur[i]);
        }
        // Two passes: the second puts each junction at the V_BE that gives its current with
        // the Early factor of the first pass's V_CE, which saves a Newton iteration.
        for pass in 0..2 {
            if pass == 1 {
                if !sys.at[..self.n_tr].iter().any(|d| d.has_early_effect()) {
                    break;
                }
                for i in 0..self.n_tr {
                    let t = &self.tr[i];
                    let v_ce = (v[t.c] - v[t.e]).max(0.0);
                    vbe_at[i] = sys.at[i].vbe_for_current_at(cur[i], v_ce);
                }
                known = [false; MAX_DIM + FIRST_NODE];
                known[R_SLOT] = true;
                known[S_SLOT] = true;
                known[OUT_SLOT] = true;
            }
            for k in 0..self.n_res {
                let r = &self.res[k];
                let i_e: f64 = (0..self.n_tr)
                    .filter(|&i| self.tr[i].e == r.slot)
                    .map(|i| cur[i] * (1.0 + 1.0 / self.beta_nom))
                    .sum();
                v[r.slot] = i_e * sys.res_ohm[k];
                known[r.slot] = true;
            }
            for _ in 0..MAX_TRANSISTORS {
                // A sweep that learns nothing leaves the next one nothing to learn.
                let mut learned = false;
                for i in 0..self.n_tr {
                    let t = &self.tr[i];
                    if known[t.e] && !known[t.b] {
                        v[t.b] = v[t.e] + vbe_at[i];
                        known[t.b] = true;
                        learned = true;
                    } else if known[t.b] && !known[t.e] {
                        v[t.e] = v[t.b] - vbe_at[i];
                        known[t.e] = true;
                        learned = true;
                    }
                }
                if !learned {
                    break;
                }
            }
            for i in 0..self.n_tr {
                let t = &self.tr[i];
                if !known[t.c] {
                    v[t.c] = v[t.b];
                    known[t.c] = true;
                }
            }
        }
        let vbe = |i: usize| vbe_at[i];
        // Below compliance a fixed collector pins its base: no junction may start forward
        // biased beyond the V_BE of its nominal current (e^(V/V_T) would overflow).
        let free = |slot: usize| slot >= FIRST_NODE;
        for _ in 0..2 * MAX_TRANSISTORS {
            let mut changed = false;
            for i in 0..self.n_tr {
                let t = &self.tr[i];
                // A few V_T of slack: small differences between devices are Newton's job.
                let lim = vbe(i).max(0.0) + 4.0 * sys.at[i].vt;
                if v[t.b] - v[t.c] > lim {
                    if free(t.b) {
                        v[t.b] = v[t.c] + lim;
                    } else if free(t.c) {
                        v[t.c] = v[t.b] - lim;
                    }
                    changed = true;
                }
                // Both junctions move their anode (the base) down where it is free:
                // raising an emitter here could undo a base another device's collector
                // pinned, and the two clamps would chase each other.
                if v[t.b] - v[t.e] > lim {
                    if free(t.b) {
                        v[t.b] = v[t.e] + lim;
                    } else if free(t.e) {
                        v[t.e] = v[t.b] - lim;
                    }
                    changed = true;
                }
            }
            if !changed {
                break;
            }
        }
        let mut x = [0.0; MAX_DIM];
        x[..self.n_nodes].copy_from_slice(&v[FIRST_NODE..FIRST_NODE + self.n_nodes]);
        x
    }

    /// The last resort for points the direct solve cannot reach (far below compliance,
    /// an output device deep in saturation): walk the operating point to the target from
    /// one that solves directly, each step started from the last solution. First V_out
    /// down from the supply (the output device forward-active), then I_in up from a
    /// thousandth of its value. Returns the solution of the target point itself.
    fn solve_by_stepping(
        &self,
        sys: &mut CircuitSystem,
        newton: &NewtonOptions,
    ) -> Option<(Vector, u32)> {
        let target = sys.op;
        let mut total = 0;
        type Path = fn(&OperatingPoint, f64) -> OperatingPoint;
        let by_vout: Path = |t, lam| OperatingPoint {
            v_out_v: t.supply_v + lam * (t.v_out_v - t.supply_v),
            ..*t
        };
        let by_iin: Path = |t, lam| OperatingPoint {
            i_in_a: t.i_in_a * 1e-3f64.powf(1.0 - lam),
            ..*t
        };
        let paths: [(bool, Path); 2] =
            [(target.v_out_v < target.supply_v, by_vout), (true, by_iin)];
        for (useful, path) in paths {
            if !useful {
                continue;
            }
            sys.op = path(&target, 0.0);
            let mut x = self.start_point(sys);
            let g = 100.0 * sys.op.i_in_a / sys.at[0].vt;
            let o = solve::solve_with_continuation(&*sys, &mut x, newton, g);
            total += o.iterations;
            if !o.convergence.is_converged() {
                continue;
            }
            let (mut lam, mut step) = (0.0f64, 0.125f64);
            while lam < 1.0 && step > 1e-5 {
                let next = (lam + step).min(1.0);
                // The last step solves the target itself, not the path's rounded image of
                // it (`supply + 1 (V_out - supply)` may miss V_out by an ulp, which a
                // saturated junction turns into a KCL error far above the tolerance).
                sys.op = if next >= 1.0 {
                    target
                } else {
                    path(&target, next)
                };
                let mut xt = x;
                let mut c = solve::solve(&*sys, &mut xt, newton);
                total += c.iterations();
                if !c.is_converged() {
                    xt = x;
                    c = solve::solve_damped(&*sys, &mut xt, newton);
                    total += c.iterations();
                }
                if c.is_converged() {
                    x = xt;
                    lam = next;
                    step = (step * 2.0).min(0.5);
                } else {
                    step *= 0.25;
                }
            }
            if lam >= 1.0 {
                sys.op = target;
                return Some((x, total));
            }
        }
        sys.op = target;
        None
    }

    /// A closed-form guess of the programmed input current for the start point.
    fn programmed_current_estimate(&self, sys: &CircuitSystem) -> f64 {
        let rail = sys.op.rail_v.unwrap_or(0.0);
        let r = 1.0 / sys.ref_g;
        let vt = sys.at[0].vt;
        let mut i = rail / r;
        for _ in 0..4 {
            let inputs = EstimateInputs {
                beta: self.beta_nom,
                early_voltage_v: None,
                i_in_a: i,
                thermal_voltage_v: vt,
                vbe_v: sys.at[0].vbe_for_current(i),
                re1_ohm: sys.res_ohm_for("e1", self),
                re2_ohm: sys.res_ohm_for(self.re2_node, self),
                outputs: f64::from(self.form.shape.outputs),
                area_ratio: self.form.shape.area_ratio(),
            };
            let v_in = (self.topology.desc().estimates.input_voltage_v)(&inputs);
            i = ((rail - v_in) / r).max(1e-3 * rail / r);
        }
        i
    }

    #[cfg(test)]
    pub(super) fn start_point_for_tests(&self, sys: &CircuitSystem) -> Vector {
        self.start_point(sys)
    }

    /// Solves at one operating point.
    pub fn solve(
        &self,
        op: &OperatingPoint,
        opts: &SolveOptions,
    ) -> Result<Solution, SolveFailure> {
        self.check_point(op)?;
        let mut sys = CircuitSystem::new(self, *op);
        let mut jac = [[0.0; MAX_DIM]; MAX_DIM];
        let (x, iterations) = self.solve_system(op, opts, &mut sys, &mut jac)?;
        Ok(sys.solution(&x, iterations))
    }

    /// Solves at `op` starting from `start`, the solution of a nearby circuit (the same
    /// netlist but for a small deviation of a part) or operating point: plain Newton on
    /// the full system from there, which takes a few iterations where `solve` walks from
    /// the closed-form start through the isothermal circuit first. Both stop on the same
    /// residual test, so they agree to the KCL tolerance. Should that Newton not converge,
    /// or land past the electrothermal fold, this is `solve` (which then also decides
    /// how the point fails), so the outcome never depends on the start but within the
    /// tolerance.
    pub fn solve_near(
        &self,
        op: &OperatingPoint,
        opts: &SolveOptions,
        start: &super::Start,
    ) -> Result<Solution, SolveFailure> {
        match self.near(op, opts, start, |sys, x, its| sys.solution(x, its)) {
            Some(sol) => Ok(sol),
            None => self.solve(op, opts),
        }
    }

    /// `solve_near` for a caller that needs output 1's current and the input current
    /// alone (an error-budget build): the same solve, the same two numbers, without the
    /// report of every node and transistor.
    pub fn solve_near_output(
        &self,
        op: &OperatingPoint,
        opts: &SolveOptions,
        start: &super::Start,
    ) -> Result<(f64, f64), SolveFailure> {
        match self.near(op, opts, start, |sys, x, _| sys.first_output_and_input(x)) {
            Some(r) => Ok(r),
            None => self.solve(op, opts).map(|s| (s.outputs()[0], s.i_in_a)),
        }
    }

    /// The Newton run of `solve_near` from `start`: `done` applied to the converged,
    /// accepted point, or `None` where `solve_near` falls back to `solve`.
    fn near<R>(
        &self,
        op: &OperatingPoint,
        opts: &SolveOptions,
        start: &super::Start,
        done: impl FnOnce(&CircuitSystem, &Vector, u32) -> R,
    ) -> Option<R> {
        if start.self_heating != opts.self_heating || self.check_point(op).is_err() {
            return None;
        }
        let mut newton = NewtonOptions::default();
        newton.tolerance.abs = newton.tolerance.abs.min(KCL_FLOOR_OF_INPUT * op.i_in_a);
        // From a nearby solution Newton converges in a few steps or not at all (a
        // build past the electrothermal fold): give up early and solve from scratch.
        newton.max_iterations = NEAR_MAX_ITERATIONS;
        let mut sys = CircuitSystem::new(self, *op);
        sys.thermal = opts.self_heating;
        let mut x = start.x;
        let mut jac = [[0.0; MAX_DIM]; MAX_DIM];
        let (c, fresh) = solve::solve_in(&sys, &mut x, &newton, &mut jac);
        if !c.is_converged() {
            return None;
        }
        let nn = self.n_nodes;
        let t_max = (0..self.n_tr).map(|i| x[nn + i]).fold(op.t_amb_k, f64::max);
        let cool = !opts.self_heating
            || (t_max <= MAX_JUNCTION_K
                && sys.thermally_stable_with(&x, fresh.then_some(&mut jac)));
        cool.then(|| done(&sys, &x, c.iterations()))
    }

    /// The solution, the system it was solved with and the unknown vector.
    pub(super) fn solve_full<'n>(
        &'n self,
        op: &OperatingPoint,
        opts: &SolveOptions,
    ) -> Result<(Solution, CircuitSystem<'n>, Vector), SolveFailure> {
        self.check_point(op)?;
        let mut sys = CircuitSystem::new(self, *op);
        let mut jac = [[0.0; MAX_DIM]; MAX_DIM];
        let (x, iterations) = self.solve_system(op, opts, &mut sys, &mut jac)?;
        Ok((sys.solution(&x, iterations), sys, x))
    }

    /// The solve of a checked point in `sys` (`CircuitSystem::new(self, *op)`; left as
    /// solved, thermal or not), with `jac` as the Newton runs' Jacobian storage: the
    /// unknown vector and the iterations spent.
    fn solve_system(
        &self,
        op: &OperatingPoint,
        opts: &SolveOptions,
        sys: &mut CircuitSystem,
        jac: &mut Matrix,
    ) -> Result<(Vector, u32), SolveFailure> {
        let mut newton = NewtonOptions::default();
        // KCL is judged relative to the currents at each node; the absolute floor only
        // covers nodes where every current is tiny, so it scales with the input current
        // (1 pA on its own would be the whole current of a picoamp mirror).
        newton.tolerance.abs = newton.tolerance.abs.min(KCL_FLOOR_OF_INPUT * op.i_in_a);
        if self.r_ref.is_some() {
            // The start point needs a current: (V_rail - V_in) / R_ref with V_in from the
            // closed-form input voltage, iterated a few times.
            sys.op.i_in_a = self.programmed_current_estimate(sys);
        }
        let mut x = self.start_point(sys);
        let g_start = 100.0 * op.i_in_a / sys.at[0].vt;
        let out = solve::solve_with_continuation_in(&*sys, &mut x, &newton, g_start, jac);
        let mut iterations = out.iterations;
        if !out.convergence.is_converged() {
            match self.solve_by_stepping(sys, &newton) {
                Some((xs, its)) => {
                    x = xs;
                    iterations += its;
                }
                None => return Err(self.unsolved(sys, out.convergence)),
            }
        }
        if opts.self_heating {
            iterations += self.solve_thermal(sys, &mut x, op, &newton, jac)?;
        }
        Ok((x, iterations))
    }

    /// Extends a converged isothermal solution to the electrothermal fixed point.
    fn solve_thermal(
        &self,
        sys: &mut CircuitSystem,
        x: &mut Vector,
        op: &OperatingPoint,
        newton: &NewtonOptions,
        jac: &mut Matrix,
    ) -> Result<u32, SolveFailure> {
        let nn = self.n_nodes;
        let iso = *x;
        // Start the temperatures where the isothermal powers put them, and the node
        // voltages where the circuit settles with the devices frozen at those temperatures
        // (a cheap electrical solve that leaves the coupled Newton little to do).
        let t_start = self.heated(op.t_amb_k, &sys.powers(x));
        let runaway = |t_max_k: f64| SolveFailure::ThermalRunaway {
            topology: self.topology,
            part: self.part.clone(),
            point: *op,
            t_max_k,
        };
        // The start temperatures are the first step of the bounding iteration
        // (`thermal_bound`), and the powers at the predictor give the second: either
        // over the limit proves every fixed point is, for no more than the predictor.
        let hottest = |t: &[f64]| t[..self.n_tr].iter().copied().fold(op.t_amb_k, f64::max);
        if hottest(&t_start) > MAX_JUNCTION_K {
            return Err(runaway(hottest(&t_start)));
        }
        let ambient_devices = sys.at;
        let mut predictor_iterations = 0;
        if t_start[..self.n_tr].iter().all(|&t| t < MAX_JUNCTION_K) {
            for i in 0..self.n_tr {
                sys.at[i] = self.tr[i].bjt.at(t_start[i]);
            }
            let c = solve::solve_in(&*sys, x, newton, jac).0;
            predictor_iterations = c.iterations();
            if c.is_converged() {
                let t_second = self.heated(op.t_amb_k, &sys.powers(x));
                if hottest(&t_second) > MAX_JUNCTION_K {
                    return Err(runaway(hottest(&t_second)));
                }
            } else {
                *x = iso;
            }
            sys.at = ambient_devices;
        }
        sys.thermal = true;
        x[nn..nn + self.n_tr].copy_from_slice(&t_start[..self.n_tr]);
        let coupled_start = *x;
        let (first, mut fresh) = solve::solve_in(&*sys, x, newton, jac);
        let mut iterations = predictor_iterations + first.iterations();
        let mut converged = first.is_converged();
        if !converged {
            fresh = false;
            // Before the costly fallbacks: the bounding iteration proves most runaways
            // and brings the rest next to their fixed point (the least one, which the
            // circuit reaches warming up from the ambient; damped Newton and gmin
            // stepping from here can land on a hotter or an unstable one).
            sys.thermal = false;
            let (bound, its) = self.thermal_bound(sys, &iso, op, newton);
            sys.at = ambient_devices;
            sys.thermal = true;
            iterations += its;
            match bound {
                ThermalBound::Runaway(t) => return Err(runaway(t)),
                ThermalBound::Near(xb) => {
                    *x = xb;
                    let (c, at_x) = solve::solve_in(&*sys, x, newton, jac);
                    iterations += c.iterations();
                    let t_max = (0..self.n_tr).map(|i| x[nn + i]).fold(op.t_amb_k, f64::max);
                    if c.is_converged()
                        && t_max <= MAX_JUNCTION_K
                        && sys.thermally_stable_with(x, at_x.then_some(&mut *jac))
                    {
                        return Ok(iterations);
                    }
                }
                ThermalBound::Unknown => {}
            }
            *x = coupled_start;
            let out = solve::solve_fallbacks(&*sys, x, newton, 1e-3);
            iterations += out.iterations;
            converged = out.convergence.is_converged();
        }
        if !converged {
            // Walk the thermal coupling up from zero: if the isothermal circuit solves but
            // the coupled one cannot be reached, the thermal loop has no fixed point.
            *x = iso;
            for i in 0..self.n_tr {
                x[nn + i] = op.t_amb_k;
            }
            let mut lambda = 0.0f64;
            let mut step = 0.25f64;
            let mut accepted = *x;
            let mut t_max = op.t_amb_k;
            while lambda < 1.0 {
                let next = (lambda + step).min(1.0);
                sys.theta_scale = next;
                *x = accepted;
                let c = solve::solve(&*sys, x, newton);
                iterations += c.iterations();
                if c.is_converged() && sys.thermally_stable(x) {
                    accepted = *x;
                    lambda = next;
                    t_max = (0..self.n_tr).map(|i| x[nn + i]).fold(t_max, f64::max);
                    step *= 1.5;
                } else {
                    step *= 0.5;
                    if step < 1e-4 {
                        return Err(runaway(t_max));
                    }
                }
            }
            *x = accepted;
            sys.theta_scale = 1.0;
        }
        let t_max = (0..self.n_tr).map(|i| x[nn + i]).fold(op.t_amb_k, f64::max);
        if t_max > MAX_JUNCTION_K || !sys.thermally_stable_with(x, fresh.then_some(jac)) {
            return Err(runaway(t_max));
        }
        Ok(iterations)
    }

    /// `T_amb + theta P`: the junction temperatures the powers `p` give (MODEL.md).
    fn heated(&self, t_amb_k: f64, p: &[f64; MAX_TRANSISTORS]) -> [f64; MAX_TRANSISTORS] {
        let mut t = [0.0; MAX_TRANSISTORS];
        for i in 0..self.n_tr {
            t[i] = t_amb_k + (0..self.n_tr).map(|j| self.theta[i][j] * p[j]).sum::<f64>();
        }
        t
    }

    /// The bounding iteration of the electrothermal loop, for points the coupled Newton
    /// cannot reach: `T_{k+1} = min(F(T_k), T_k + MAX_DT_STEP_K)` from the ambient, where
    /// `F(T) = T_amb + theta P(T)` and `P(T)` are the device powers of the electrical
    /// solution with the junctions frozen at `T` (each solve started from the last).
    ///
    /// `F` is order-preserving: a warmer junction passes more current at a given drive
    /// (I_S rises far faster than V_T), which can only raise the powers of the devices
    /// that dissipate. So every iterate is below every fixed point `T*`: `T_0 = T_amb <=
    /// T*`, and `T_k <= T*` gives `T_{k+1} <= F(T_k) <= F(T*) = T*` (the cap only lowers
    /// it). An `F(T_k)` over `MAX_JUNCTION_K` therefore proves that every fixed point is
    /// hotter than that: thermal runaway, decided in a dozen cheap electrical solves
    /// instead of a continuation walk up to a fold. (The one power that falls as its
    /// junction warms, V_BE I of a device at a forced current, moves by about 0.3 %/K of
    /// a milliwatt-scale power, millikelvins here.) Iterates that settle give the
    /// coupled Newton a start next to the fixed point. The cap keeps each electrical
    /// solve a small step from the last one.
    fn thermal_bound(
        &self,
        sys: &mut CircuitSystem,
        iso: &Vector,
        op: &OperatingPoint,
        newton: &NewtonOptions,
    ) -> (ThermalBound, u32) {
        let nn = self.n_nodes;
        let mut t = [op.t_amb_k; MAX_TRANSISTORS];
        let mut x = *iso;
        let mut iterations = 0;
        for k in 0..THERMAL_BOUND_STEPS {
            if k > 0 {
                for i in 0..self.n_tr {
                    sys.at[i] = self.tr[i].bjt.at(t[i]);
                }
                let c = solve::solve(&*sys, &mut x, newton);
                iterations += c.iterations();
                if !c.is_converged() {
                    return (ThermalBound::Unknown, iterations);
                }
            }
            let f_t = self.heated(op.t_amb_k, &sys.powers(&x));
            let mut change = 0.0f64;
            let mut hottest = op.t_amb_k;
            let mut next = t;
            for i in 0..self.n_tr {
                let f = f_t[i];
                hottest = hottest.max(f);
                change = change.max((f - t[i]).abs());
                next[i] = f.min(t[i] + MAX_DT_STEP_K);
            }
            if hottest > MAX_JUNCTION_K {
                return (ThermalBound::Runaway(hottest), iterations);
            }
            if change < THERMAL_BOUND_SETTLED_K {
                x[nn..nn + self.n_tr].copy_from_slice(&next[..self.n_tr]);
                return (ThermalBound::Near(x), iterations);
            }
            t = next;
        }
        (ThermalBound::Unknown, iterations)
    }

    /// `dV_out / dI_out` of the solved circuit at `op` (see `super::output_resistance`).
    pub fn output_resistance(
        &self,
        op: &OperatingPoint,
        opts: &SolveOptions,
    ) -> Result<f64, SolveFailure> {
        let (_, mut sys, x) = self.solve_full(op, opts)?;
        // With several outputs, each output's own (the others held at V_out); the lowest.
        let outputs = self.form.shape.outputs;
        let r = if outputs == 1 {
            sys.output_resistance(&x)
        } else {
            let mut lowest = f64::INFINITY;
            for k in 1..=outputs {
                sys.out_only = k;
                let r = sys.output_resistance(&x);
                if r.is_nan() {
                    lowest = f64::NAN;
                    break;
                }
                lowest = lowest.min(r);
            }
            lowest
        };
        // Infinite is a true answer (no Early effect); NaN would be an untrusted number.
        if r.is_nan() {
            return Err(SolveFailure::Invalid {
                reason: format!("singular circuit Jacobian at the solution, {op:?}"),
            });
        }
        Ok(r)
    }
}

impl CircuitSystem<'_> {
    /// Builds the reported solution from a converged unknown vector.
    pub(super) fn solution(&self, x: &Vector, iterations: u32) -> Solution {
        let net = self.net;
        let v = self.slot_voltages(x);
        let blank_node = NodeVoltage {
            name: "",
            volts: 0.0,
        };
        let mut nodes = [blank_node; MAX_NODES + MAX_OUTPUTS as usize + 1];
        let mut node_count = 0;
        for k in 0..net.n_nodes {
            nodes[node_count] = NodeVoltage {
                name: net.node_names[k],
                volts: v[FIRST_NODE + k],
            };
            node_count += 1;
        }
        for name in net.form.output_nodes {
            nodes[node_count] = NodeVoltage {
                name,
                volts: self.op.v_out_v,
            };
            node_count += 1;
        }
        if net.uses_supply {
            nodes[node_count] = NodeVoltage {
                name: "S",
                volts: self.op.supply_v,
            };
            node_count += 1;
        }
        let blank = TransistorState {
            name: "",
            role: Role::Helper,
            v_be: 0.0,
            v_ce: 0.0,
            i_c: 0.0,
            i_b: 0.0,
            t_junction_k: 0.0,
            region: Region::Cutoff,
            power_w: 0.0,
            package: 0,
            helper_class: false,
            output: 0,
        };
        let mut transistors = [blank; MAX_TRANSISTORS];
        let mut outputs = [0.0; MAX_OUTPUTS as usize];
        let mut i_s = 0.0;
        for i in 0..net.n_tr {
            let t = &net.tr[i];
            let d = self.device(i, x);
            let (vbe, vbc, vce) = (v[t.b] - v[t.e], v[t.b] - v[t.c], v[t.c] - v[t.e]);
            let ev = d.eval_with_vce(vbe, vbc, vce);
            if t.c == OUT_SLOT {
                outputs[usize::from(t.output.max(1)) - 1] += ev.ic;
            }
            if t.c == S_SLOT {
                i_s += ev.ic;
            }
            transistors[i] = TransistorState {
                name: t.name,
                role: t.role,
                v_be: vbe,
                v_ce: vce,
                i_c: ev.ic,
                i_b: ev.ib,
                t_junction_k: d.t_k,
                region: Region::of(vbe, vbc),
                power_w: vce * ev.ic + vbe * ev.ib,
                package: t.package,
                helper_class: t.helper_class,
                output: t.output,
            };
        }
        let i_in = self.input_current(&v);
        let r_ref_power = if net.r_ref.is_some() {
            i_in * i_in / self.ref_g
        } else {
            0.0
        };
        Solution {
            i_out_a: outputs[0],
            output_currents: outputs,
            output_count: net.form.output_nodes.len(),
            i_in_a: i_in,
            r_ref_power_w: r_ref_power,
            v_in_v: v[net.in_slot],
            supply_current_a: i_s,
            nodes,
            node_count,
            transistors,
            transistor_count: net.n_tr,
            iterations,
            start: super::Start {
                x: *x,
                self_heating: self.thermal,
            },
        }
    }

    /// Output 1's current and the input current at a converged `x`, exactly as
    /// `solution` gives them (`Solution::outputs()[0]`, `Solution::i_in_a`).
    pub(super) fn first_output_and_input(&self, x: &Vector) -> (f64, f64) {
        let net = self.net;
        let v = self.slot_voltages(x);
        let mut out = 0.0;
        for i in 0..net.n_tr {
            let t = &net.tr[i];
            if t.c == OUT_SLOT && t.output.max(1) == 1 {
                let (vbe, vbc, vce) = (v[t.b] - v[t.e], v[t.b] - v[t.c], v[t.c] - v[t.e]);
                out += self.device(i, x).eval_with_vce(vbe, vbc, vce).ic;
            }
        }
        (out, self.input_current(&v))
    }

    /// The input current from the slot voltages `v`: through R_ref where the mirror is
    /// programmed, else the forced one.
    fn input_current(&self, v: &[f64]) -> f64 {
        match &self.net.r_ref {
            Some(l) => (v[l.a] - v[l.b]) * self.ref_g,
            None => self.op.i_in_a,
        }
    }

    /// `1 / (dI_out/dV_out)` by implicit differentiation: the residual's entry past the last
    /// unknown is I_out, and the Jacobian's extra row and column hold its derivatives.
    pub(super) fn output_resistance(&self, x: &Vector) -> f64 {
        use crate::solve::NonlinearSystem;
        let n = self.dim();
        let mut f = [0.0; MAX_DIM];
        let mut s = [0.0; MAX_DIM];
        let mut j = [[0.0; MAX_DIM]; MAX_DIM];
        self.jacobian(x, &mut f, &mut s, &mut j);
        let g_oo = j[n][n];
        let mut col = [0.0; MAX_DIM];
        for i in 0..n {
            col[i] = j[i][n];
        }
        let Some(lu) = lu_factor(&j, n) else {
            return f64::NAN;
        };
        let dx = lu_solve(&lu, &col);
        let mut g = g_oo;
        for i in 0..n {
            g -= j[n][i] * dx[i];
        }
        1.0 / g
    }
}
