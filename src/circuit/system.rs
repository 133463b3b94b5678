//! The circuit as a `NonlinearSystem`: KCL at every unknown node and, with self-heating,
//! one thermal equation per junction `T_i - T_amb - sum_j theta_ij P_j = 0`.
//!
//! Unknown layout: node voltages `0..n_nodes`, then junction temperatures. The residual
//! entry and the Jacobian row/column just past the last unknown describe the output node
//! (its "residual" is I_out), which the solver ignores and the output resistance uses.

use super::netlist::Netlist;
use super::OperatingPoint;
use crate::device::{limit_junction, BjtAtT};
use crate::solve::{schur_determinant_in_place, Matrix, NonlinearSystem, Vector, MAX_DIM};

pub(super) const R_SLOT: usize = 0;
pub(super) const S_SLOT: usize = 1;
pub(super) const OUT_SLOT: usize = 2;
/// The programming rail (the far end of R_ref), a known voltage.
pub(super) const P_SLOT: usize = 3;
/// Unknown node voltages start here.
pub(super) const FIRST_NODE: usize = 4;
pub(super) const NONE: usize = usize::MAX;

/// Reference temperature of resistor TCRs (25 °C).
const TCR_REFERENCE_K: f64 = 298.15;
/// Largest junction-temperature change in one Newton step, kelvin.
pub(super) const MAX_DT_STEP_K: f64 = 25.0;

pub(super) struct CircuitSystem<'n> {
    pub net: &'n Netlist,
    pub op: OperatingPoint,
    /// Devices at the ambient temperature (the isothermal solve).
    pub at: [BjtAtT; super::MAX_TRANSISTORS],
    pub res_ohm: [f64; super::netlist::MAX_RESISTORS],
    res_g: [f64; super::netlist::MAX_RESISTORS],
    /// Conductance of R_ref at the ambient temperature (0 without one).
    pub ref_g: f64,
    /// Junction temperatures are unknowns.
    pub thermal: bool,
    /// Scales every theta (continuation in the thermal coupling).
    pub theta_scale: f64,
    /// Which output the row past the last unknown describes: 0 for every output together
    /// (the solve), k for output k alone (its output resistance and noise; the other
    /// outputs' collectors are then held like a rail).
    pub out_only: u8,
}

impl<'n> CircuitSystem<'n> {
    pub fn new(net: &'n Netlist, op: OperatingPoint) -> Self {
        let at0 = net.tr[0].bjt.at(op.t_amb_k);
        let mut at = [at0; super::MAX_TRANSISTORS];
        for i in 0..net.n_tr {
            // Devices built from equal parameters share one temperature evaluation.
            at[i] = match (0..i).find(|&j| net.tr[j].bjt == net.tr[i].bjt) {
                Some(j) => at[j],
                None => net.tr[i].bjt.at(op.t_amb_k),
            };
        }
        let mut res_ohm = [0.0; super::netlist::MAX_RESISTORS];
        let mut res_g = [0.0; super::netlist::MAX_RESISTORS];
        for k in 0..net.n_res {
            res_ohm[k] =
                net.res[k].ohm_25c * (1.0 + net.tcr_per_k * (op.t_amb_k - TCR_REFERENCE_K));
            res_g[k] = 1.0 / res_ohm[k];
        }
        let ref_g = net.r_ref.map_or(0.0, |l| {
            1.0 / (l.ohm_25c * (1.0 + l.tcr_per_k * (op.t_amb_k - TCR_REFERENCE_K)))
        });
        CircuitSystem {
            net,
            op,
            at,
            res_ohm,
            res_g,
            ref_g,
            thermal: false,
            theta_scale: 1.0,
            out_only: 0,
        }
    }

    pub fn res_ohm_for(&self, name: &str, net: &Netlist) -> f64 {
        (0..net.n_res)
            .find(|&k| net.node_names[net.res[k].slot - FIRST_NODE] == name)
            .map_or(0.0, |k| self.res_ohm[k])
    }

    #[inline]
    pub fn device(&self, i: usize, x: &Vector) -> BjtAtT {
        if self.thermal {
            self.net.tr[i].bjt.at(x[self.net.n_nodes + i])
        } else {
            self.at[i]
        }
    }

    /// V_T of device `i` at its current temperature.
    fn device_vt(&self, i: usize, x: &Vector) -> f64 {
        if self.thermal {
            crate::device::thermal_voltage(x[self.net.n_nodes + i])
        } else {
            self.at[i].vt
        }
    }

    /// Voltages by slot. The whole of `x` is copied, temperatures and unused entries
    /// included: no slot reaches past the unknown nodes, and a fixed-size copy is a few
    /// vector moves where a copy of `n_nodes` entries is a call to `memcpy`.
    #[inline]
    pub fn slot_voltages(&self, x: &Vector) -> [f64; MAX_DIM + FIRST_NODE] {
        let mut v = [0.0; MAX_DIM + FIRST_NODE];
        v[S_SLOT] = self.op.supply_v;
        v[OUT_SLOT] = self.op.v_out_v;
        v[P_SLOT] = self.op.rail_v.unwrap_or(0.0);
        v[FIRST_NODE..].copy_from_slice(x);
        v
    }

    /// The residual row of a slot: unknown nodes by index, `out` just past the last
    /// unknown, the rails `NONE`.
    #[inline]
    pub(super) fn index(&self, slot: usize) -> usize {
        if slot >= FIRST_NODE {
            slot - FIRST_NODE
        } else if slot == OUT_SLOT {
            self.dim()
        } else {
            NONE
        }
    }

    /// The row of a terminal of a transistor of output `output` (0: input side): as
    /// `index`, except that with `out_only` set another output's collector is held.
    #[inline]
    pub(super) fn index_of(&self, slot: usize, output: u8) -> usize {
        if slot == OUT_SLOT && self.out_only != 0 && output != self.out_only {
            NONE
        } else {
            self.index(slot)
        }
    }

    /// Transistor powers `V_CE I_C + V_BE I_B` at `x`.
    pub fn powers(&self, x: &Vector) -> [f64; super::MAX_TRANSISTORS] {
        let v = self.slot_voltages(x);
        let mut p = [0.0; super::MAX_TRANSISTORS];
        for (i, t) in self.net.tr[..self.net.n_tr].iter().enumerate() {
            let (vbe, vbc, vce) = (v[t.b] - v[t.e], v[t.b] - v[t.c], v[t.c] - v[t.e]);
            let ev = self.device(i, x).eval_with_vce(vbe, vbc, vce);
            p[i] = vce * ev.ic + vbe * ev.ib;
        }
        p
    }

    /// The electrothermal loop is stable at `x` when `det(I - L) > 0`, L being the loop gain
    /// from junction temperatures back to themselves; by the Schur complement that is
    /// `det(J) / det(J_electrical)`, the determinant of the thermal rows' Schur complement,
    /// found in one elimination of the Jacobian in place. A fixed point past the fold (or
    /// none at all) is thermal runaway.
    pub fn thermally_stable(&self, x: &Vector) -> bool {
        self.thermally_stable_with(x, None)
    }

    /// `thermally_stable`, given the Jacobian at `x` where the caller has it (the one
    /// Newton stopped on, `solve::solve_in`), which the test then overwrites.
    pub fn thermally_stable_with(&self, x: &Vector, jac_at_x: Option<&mut Matrix>) -> bool {
        if !self.thermal {
            return true;
        }
        let n = self.dim();
        let mut own;
        let j = match jac_at_x {
            Some(j) => j,
            None => {
                let mut f = [0.0; MAX_DIM];
                let mut s = [0.0; MAX_DIM];
                own = [[0.0; MAX_DIM]; MAX_DIM];
                self.jacobian(x, &mut f, &mut s, &mut own);
                &mut own
            }
        };
        schur_determinant_in_place(j, self.net.n_nodes, n).is_some_and(|d| d.is_finite() && d > 0.0)
    }

    fn eval(&self, x: &Vector, f: &mut Vector, scale: &mut Vector, mut jac: Option<&mut Matrix>) {
        let net = self.net;
        let nn = net.n_nodes;
        let n = self.dim();
        let v = self.slot_voltages(x);
        // Whole rows: a fixed-length fill is a few vector stores, one of `n + 1` entries
        // a call to `memset` (entries past `n` are never read).
        f.fill(0.0);
        scale.fill(0.0);
        if let Some(j) = jac.as_deref_mut() {
            for row in j.iter_mut().take(n + 1) {
                row.fill(0.0);
            }
        }
        if let Some(l) = &net.r_ref {
            // A two-terminal resistor from slot a to slot b: current (V_a - V_b) g leaves a.
            let i = (v[l.a] - v[l.b]) * self.ref_g;
            for (slot, sign) in [(l.a, 1.0), (l.b, -1.0)] {
                if slot < FIRST_NODE {
                    continue;
                }
                let r = slot - FIRST_NODE;
                f[r] += sign * i;
                scale[r] = scale[r].max(i.abs());
                if let Some(j) = jac.as_deref_mut() {
                    for (other, s2) in [(l.a, 1.0), (l.b, -1.0)] {
                        if other >= FIRST_NODE {
                            j[r][other - FIRST_NODE] += sign * s2 * self.ref_g;
                        }
                    }
                }
            }
        } else {
            let ii = net.in_slot - FIRST_NODE;
            f[ii] -= self.op.i_in_a;
            scale[ii] = self.op.i_in_a;
        }
        for k in 0..net.n_res {
            let slot = net.res[k].slot;
            let r = slot - FIRST_NODE;
            let i = v[slot] * self.res_g[k];
            f[r] += i;
            scale[r] = scale[r].max(i.abs());
            if let Some(j) = jac.as_deref_mut() {
                j[r][r] += self.res_g[k];
            }
        }
        let mut p = [0.0; super::MAX_TRANSISTORS];
        let mut dp = [[0.0; 3]; super::MAX_TRANSISTORS];
        let mut dpdt = [0.0; super::MAX_TRANSISTORS];
        for i in 0..net.n_tr {
            let t = &net.tr[i];
            let d = self.device(i, x);
            let (vbe, vbc) = (v[t.b] - v[t.e], v[t.b] - v[t.c]);
            let ev = d.eval_with_vce(vbe, vbc, v[t.c] - v[t.e]);
            let ie = ev.ie;
            let rows = [
                self.index_of(t.c, t.output),
                self.index_of(t.b, t.output),
                self.index_of(t.e, t.output),
            ];
            let cur = [ev.ic, ev.ib, -ie];
            for k in 0..3 {
                let r = rows[k];
                if r != NONE {
                    f[r] += cur[k];
                    scale[r] = scale[r].max(cur[k].abs());
                }
            }
            // Derivatives with respect to (V_c, V_b, V_e).
            let dic = [-ev.dic_dvbc, ev.dic_dvbe + ev.dic_dvbc, -ev.dic_dvbe];
            let dib = [-ev.dib_dvbc, ev.dib_dvbe + ev.dib_dvbc, -ev.dib_dvbe];
            if let Some(j) = jac.as_deref_mut() {
                for m in 0..3 {
                    let col = rows[m];
                    if col == NONE {
                        continue;
                    }
                    let (a, b) = (dic[m], dib[m]);
                    if rows[0] != NONE {
                        j[rows[0]][col] += a;
                    }
                    if rows[1] != NONE {
                        j[rows[1]][col] += b;
                    }
                    if rows[2] != NONE {
                        j[rows[2]][col] -= a + b;
                    }
                }
                if self.thermal {
                    let col = nn + i;
                    if rows[0] != NONE {
                        j[rows[0]][col] += ev.dic_dt;
                    }
                    if rows[1] != NONE {
                        j[rows[1]][col] += ev.dib_dt;
                    }
                    if rows[2] != NONE {
                        j[rows[2]][col] -= ev.dic_dt + ev.dib_dt;
                    }
                }
            }
            if self.thermal {
                let vce = v[t.c] - v[t.e];
                p[i] = vce * ev.ic + vbe * ev.ib;
                let own = [ev.ic, ev.ib, -ie];
                for m in 0..3 {
                    dp[i][m] = vce * dic[m] + vbe * dib[m] + own[m];
                }
                dpdt[i] = vce * ev.dic_dt + vbe * ev.dib_dt;
            }
        }
        if self.thermal {
            for i in 0..net.n_tr {
                let row = nn + i;
                let mut heat = 0.0;
                for jj in 0..net.n_tr {
                    heat += self.theta_scale * net.theta[i][jj] * p[jj];
                }
                f[row] = x[row] - self.op.t_amb_k - heat;
                scale[row] = x[row].abs();
                if let Some(j) = jac.as_deref_mut() {
                    j[row][row] += 1.0;
                    for jj in 0..net.n_tr {
                        let coef = self.theta_scale * net.theta[i][jj];
                        if coef == 0.0 {
                            continue;
                        }
                        let t = &net.tr[jj];
                        for (m, slot) in [t.c, t.b, t.e].into_iter().enumerate() {
                            let col = self.index_of(slot, t.output);
                            if col != NONE {
                                j[row][col] -= coef * dp[jj][m];
                            }
                        }
                        j[row][nn + jj] -= coef * dpdt[jj];
                    }
                }
            }
        }
    }
}

impl NonlinearSystem for CircuitSystem<'_> {
    fn dim(&self) -> usize {
        self.net.n_nodes + if self.thermal { self.net.n_tr } else { 0 }
    }

    fn residual(&self, x: &Vector, f: &mut Vector, scale: &mut Vector) {
        self.eval(x, f, scale, None);
    }

    fn jacobian(&self, x: &Vector, f: &mut Vector, scale: &mut Vector, jac: &mut Matrix) {
        self.eval(x, f, scale, Some(jac));
    }

    /// Junction limiting on every V_BE and V_BC (scaling the whole step so its direction
    /// is kept) and a cap on junction-temperature steps.
    fn limit_step(&self, x: &Vector, dx: &mut Vector) {
        let net = self.net;
        let nn = net.n_nodes;
        let v_old = self.slot_voltages(x);
        let mut x_new = *x;
        for i in 0..nn {
            x_new[i] += dx[i];
        }
        let v_new = self.slot_voltages(&x_new);
        let mut alpha = 1.0f64;
        for i in 0..net.n_tr {
            let t = &net.tr[i];
            let vt = self.at[i].vt;
            for (a, b) in [(t.b, t.e), (t.b, t.c)] {
                let old = v_old[a] - v_old[b];
                let new = v_new[a] - v_new[b];
                // Steps within 2 V_T are never limited; skip the logarithm for them.
                if (new - old).abs() <= 2.0 * vt {
                    continue;
                }
                let v_crit = if self.thermal {
                    self.device(i, x).critical_voltage()
                } else {
                    self.at[i].critical_voltage()
                };
                let vt = self.device_vt(i, x);
                let lim = limit_junction(new, old, vt, v_crit);
                if lim != new {
                    alpha = alpha.min((lim - old) / (new - old));
                }
            }
        }
        if self.thermal {
            for i in nn..self.dim() {
                let d = dx[i].abs();
                if d > MAX_DT_STEP_K {
                    alpha = alpha.min(MAX_DT_STEP_K / d);
                }
                if x[i] + dx[i] < 0.5 * x[i] {
                    alpha = alpha.min(0.5 * x[i] / -dx[i]);
                }
            }
        }
        if alpha < 1.0 {
            let alpha = alpha.max(1e-3);
            for d in dx.iter_mut().take(self.dim()) {
                *d *= alpha;
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::circuit::{Design, Mismatch};
    use crate::model::{BjtParams, TransistorClass, ALL_TOPOLOGIES};
    use proptest::prelude::*;

    fn class(is: f64, bf: f64, vaf: f64, ikf: Option<f64>) -> TransistorClass {
        let mut model = BjtParams::new(is, bf, Some(vaf));
        model.knee_current_a = ikf;
        crate::circuit::test_pair("jacobian-test", model)
    }

    proptest! {
        #![proptest_config(ProptestConfig { cases: 128, ..ProptestConfig::default() })]

        /// The analytic Jacobian (node voltages and junction temperatures, plus the output
        /// row and column) against central finite differences of the residual.
        #[test]
        fn jacobian_matches_finite_differences(
            t in 0..ALL_TOPOLOGIES.len(),
            is in -16.0..-12.0f64,
            bf in 20.0..1000.0f64,
            vaf in 10.0..500.0f64,
            knee in prop::option::of(1e-3..1.0f64),
            re in prop_oneof![Just(0.0), 10.0..10e3f64],
            i_in in -6.0..-2.0f64,
            v_out in 0.3..30.0f64,
            jitter in prop::collection::vec(-0.02..0.02f64, MAX_DIM),
            thermal in any::<bool>(),
            outputs in 1u8..=3,
            area in 0u8..3,
        ) {
            let topology = ALL_TOPOLOGIES[t];
            // Multi-output and area-ratio forms where the topology has them.
            let shape = if topology.desc().fans_out {
                crate::model::Shape {
                    outputs,
                    area: match (area, topology.desc().has_re1) {
                        (1, true) => crate::model::Area::Output(2),
                        (2, true) => crate::model::Area::Input(3),
                        _ => crate::model::Area::Unit,
                    },
                }
            } else {
                crate::model::Shape::SINGLE
            };
            let pair = class(10f64.powf(is), bf, vaf, knee);
            let helper = class(2.0 * 10f64.powf(is), bf * 0.7, vaf, None);
            let (re1, re2) = if topology.desc().has_re1 { (re, re) } else { (0.0, re.max(100.0)) };
            let design = Design {
                shape,
                r_ref: None,
                topology,
                pair: &pair,
                helper: Some(&helper),
                re1_ohm: re1,
                re2_ohm: re2,
                re_tcr_per_k: 1e-4,
            };
            let mut mm = Mismatch { dref: 0.0, dvbe_v: [1e-3, -2e-3], dbeta: [0.03, -0.02], dre1: 0.01, dre2: -0.01, more: Default::default() };
            mm.set_output(2, crate::circuit::OutputDeviation { dvbe_v: [-1.5e-3, 1e-3], dbeta: [-0.01, 0.02], dre2: 0.005 });
            let net = Netlist::compile(&design, &mm).unwrap();
            let op = OperatingPoint { rail_v: None, i_in_a: 10f64.powf(i_in), v_out_v: v_out, supply_v: v_out + 2.0, t_amb_k: 320.0 };
            let mut sys = CircuitSystem::new(&net, op);
            let mut x = net.start_point_for_tests(&sys);
            for k in 0..net.n_nodes {
                x[k] += jitter[k];
            }
            if thermal {
                sys.thermal = true;
                for i in 0..net.n_tr {
                    x[net.n_nodes + i] = 320.0 + 30.0 * jitter[net.n_nodes.min(MAX_DIM - 1)].abs() + i as f64;
                }
            }
            let n = sys.dim();
            let mut f = [0.0; MAX_DIM];
            let mut s = [0.0; MAX_DIM];
            let mut j = [[0.0; MAX_DIM]; MAX_DIM];
            sys.jacobian(&x, &mut f, &mut s, &mut j);
            // Columns 0..n are unknowns; column n is V_out (rows 0..=n; row n is I_out).
            for col in 0..=n {
                let h = if thermal && col >= net.n_nodes && col < n { 1e-3 } else { 1e-7 };
                let mut fp = [0.0; MAX_DIM];
                let mut fm = [0.0; MAX_DIM];
                if col < n {
                    let mut xp = x;
                    xp[col] += h;
                    let mut xm = x;
                    xm[col] -= h;
                    sys.residual(&xp, &mut fp, &mut s);
                    sys.residual(&xm, &mut fm, &mut s);
                } else {
                    let mut sp = CircuitSystem::new(&net, OperatingPoint { v_out_v: v_out + h, ..op });
                    let mut sm = CircuitSystem::new(&net, OperatingPoint { v_out_v: v_out - h, ..op });
                    sp.thermal = thermal;
                    sm.thermal = thermal;
                    sp.residual(&x, &mut fp, &mut s);
                    sm.residual(&x, &mut fm, &mut s);
                }
                sys.residual(&x, &mut f, &mut s);
                for row in 0..=n {
                    let fd = (fp[row] - fm[row]) / (2.0 * h);
                    let a = j[row][col];
                    let noise = 1e3 * f64::EPSILON * s[row.min(n.saturating_sub(1))].abs().max(f[row].abs()) / h;
                    prop_assert!(
                        (a - fd).abs() <= 1e-5 * a.abs().max(fd.abs()) + noise + 1e-15,
                        "{topology:?} row {row} col {col}: analytic {a:e}, fd {fd:e}"
                    );
                }
            }
        }
    }
}
