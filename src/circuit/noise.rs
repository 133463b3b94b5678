//! Output current noise of a solved circuit: the usual low-frequency noise sources of the
//! device model at the operating point, each carried to the output current through the
//! linearised circuit, summed in power (docs/model.md, "Output current noise").
//!
//! Owns: the noise sources (collector and base shot noise `2qI`, flicker noise
//! `KF I_B^AF / f` at the base, thermal noise `4kT/R` of every resistor of the netlist and
//! of the base spreading resistance RB), the small-signal circuit (the solver's Jacobian at
//! the converged point, junction temperatures held, with an internal base node added for
//! each device that has RB) and the transfer of each source to the output current, one
//! solve per source on one factorisation.
//! Must not: judge a limit, pick a corner or format anything.
//!
//! Valid well below the transistors' poles: the linearised circuit has no capacitance, so
//! every transfer is its DC value. Junction temperatures are held at their solved values
//! (thermal time constants are milliseconds or longer), so below a few hertz the
//! electrothermal loop, which is not modelled here, can change the transfers.

use super::netlist::Netlist;
use super::system::{CircuitSystem, NONE, R_SLOT};
use super::{OperatingPoint, Solution, SolveFailure, SolveOptions, MAX_TRANSISTORS};
use crate::device::{BOLTZMANN_J_PER_K, ELEMENTARY_CHARGE_C};
use crate::solve::{lu_factor, lu_solve, Matrix, NonlinearSystem, Vector, MAX_DIM};

/// Row marker of the output node in the small-signal system (its "row" is the output
/// current, not an equation).
const OUT: usize = usize::MAX - 1;

/// What physical mechanism a source is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum NoiseKind {
    /// `2 q I_C` between collector and emitter (Schottky).
    CollectorShot,
    /// `2 q I_B` between the (internal) base and the emitter (Schottky).
    BaseShot,
    /// `KF I_B^AF / f` beside the base shot noise (SPICE flicker model).
    Flicker,
    /// `4 k T_j / RB` across the base spreading resistance (Johnson–Nyquist).
    BaseResistance,
    /// `4 k T / R` across a resistor of the netlist, at ambient (Johnson–Nyquist).
    Thermal,
}

impl NoiseKind {
    pub fn as_str(self) -> &'static str {
        match self {
            NoiseKind::CollectorShot => "collector shot",
            NoiseKind::BaseShot => "base shot",
            NoiseKind::Flicker => "flicker",
            NoiseKind::BaseResistance => "base resistance",
            NoiseKind::Thermal => "thermal",
        }
    }
}

/// One noise source and its transfer to the output current.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct NoiseSource {
    /// The transistor or resistor it belongs to (`Q2`, `RE1`).
    pub element: &'static str,
    pub kind: NoiseKind,
    /// White one-sided density of the source current, A²/Hz.
    pub white_a2_per_hz: f64,
    /// Flicker part: the source's density is `flicker_a2 / f`, A² (A²/Hz at 1 Hz).
    pub flicker_a2: f64,
    /// `dI_out / di` for a current `i` through the source (small-signal, signed).
    pub transfer: f64,
    /// The netlist slots the source joins, when both are netlist nodes (not an internal
    /// base node), for finite-difference checks.
    pub(super) slots: Option<[usize; 2]>,
}

impl NoiseSource {
    /// A source not tied to netlist nodes (for callers that combine analyses).
    pub fn new(
        element: &'static str,
        kind: NoiseKind,
        white_a2_per_hz: f64,
        flicker_a2: f64,
        transfer: f64,
    ) -> NoiseSource {
        NoiseSource {
            element,
            kind,
            white_a2_per_hz,
            flicker_a2,
            transfer,
            slots: None,
        }
    }

    /// White density this source puts on the output current, A²/Hz.
    pub fn output_white_a2_per_hz(&self) -> f64 {
        self.transfer * self.transfer * self.white_a2_per_hz
    }

    /// Flicker coefficient at the output: density `output_flicker_a2 / f`, A².
    pub fn output_flicker_a2(&self) -> f64 {
        self.transfer * self.transfer * self.flicker_a2
    }
}

/// Output noise of one element (all its sources), in power.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ElementNoise {
    pub element: &'static str,
    /// White output density, A²/Hz.
    pub white_a2_per_hz: f64,
    /// Flicker output coefficient, A² (density `/ f`).
    pub flicker_a2: f64,
}

impl ElementNoise {
    /// Output density of this element at `f_hz`, A²/Hz.
    pub fn at(&self, f_hz: f64) -> f64 {
        self.white_a2_per_hz + self.flicker_a2 / f_hz
    }
}

/// Every noise source of a solved circuit at one operating point.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct NoiseAnalysis {
    pub sources: Vec<NoiseSource>,
}

impl NoiseAnalysis {
    /// Total white output density, A²/Hz.
    pub fn white_a2_per_hz(&self) -> f64 {
        self.sources
            .iter()
            .map(NoiseSource::output_white_a2_per_hz)
            .sum()
    }

    /// Total flicker output coefficient, A² (density `/ f`).
    pub fn flicker_a2(&self) -> f64 {
        self.sources
            .iter()
            .map(NoiseSource::output_flicker_a2)
            .sum()
    }

    /// White output current density, A/√Hz.
    pub fn white_density(&self) -> f64 {
        self.white_a2_per_hz().sqrt()
    }

    /// Output current density at `f_hz` (white plus flicker), A/√Hz.
    pub fn density_at(&self, f_hz: f64) -> f64 {
        (self.white_a2_per_hz() + self.flicker_a2() / f_hz).sqrt()
    }

    /// RMS output noise current over `f_lo ... f_hi`, A: the density integrated in power,
    /// `S_w (f_hi - f_lo) + S_f ln(f_hi / f_lo)`.
    pub fn band_rms(&self, f_lo_hz: f64, f_hi_hz: f64) -> f64 {
        (self.white_a2_per_hz() * (f_hi_hz - f_lo_hz)
            + self.flicker_a2() * (f_hi_hz / f_lo_hz).ln())
        .sqrt()
    }

    /// The output noise by element (transistor or resistor), in netlist order.
    pub fn by_element(&self) -> Vec<ElementNoise> {
        let mut out: Vec<ElementNoise> = Vec::new();
        for s in &self.sources {
            let e = match out.iter_mut().find(|e| e.element == s.element) {
                Some(e) => e,
                None => {
                    out.push(ElementNoise {
                        element: s.element,
                        white_a2_per_hz: 0.0,
                        flicker_a2: 0.0,
                    });
                    out.last_mut().expect("just pushed")
                }
            };
            e.white_a2_per_hz += s.output_white_a2_per_hz();
            e.flicker_a2 += s.output_flicker_a2();
        }
        out
    }
}

impl Netlist {
    /// Solves at one operating point and analyses the output current noise there. Fails
    /// like `solve`, or with `Invalid` when the linearised circuit is singular.
    pub fn solve_with_noise(
        &self,
        op: &OperatingPoint,
        opts: &SolveOptions,
    ) -> Result<(Solution, NoiseAnalysis), SolveFailure> {
        let (sol, mut sys, x) = self.solve_full(op, opts)?;
        let singular = || SolveFailure::Invalid {
            reason: format!("singular small-signal circuit at the solution, {op:?}"),
        };
        let outputs = self.form.shape.outputs;
        if outputs == 1 {
            let noise = sys.noise(&x).ok_or_else(singular)?;
            return Ok((sol, noise));
        }
        // Several outputs: each output's own current noise; the noisiest governs.
        let mut worst: Option<NoiseAnalysis> = None;
        for k in 1..=outputs {
            sys.out_only = k;
            let nz = sys.noise(&x).ok_or_else(singular)?;
            if worst
                .as_ref()
                .is_none_or(|w| nz.white_a2_per_hz() > w.white_a2_per_hz())
            {
                worst = Some(nz);
            }
        }
        Ok((sol, worst.ok_or_else(singular)?))
    }
}

/// The small-signal circuit: node admittances with the output row kept apart.
struct SmallSignal {
    a: Matrix,
    /// `dI_out / dV` of each small-signal unknown.
    g: Vector,
    m: usize,
}

impl SmallSignal {
    /// Adds `value` at (row, col); the output row goes to `g`, rails and the output
    /// column (V_out is held by the load) are dropped.
    fn add(&mut self, row: usize, col: usize, value: f64) {
        if col == NONE || col == OUT || row == NONE {
            return;
        }
        if row == OUT {
            self.g[col] += value;
        } else {
            self.a[row][col] += value;
        }
    }
}

impl CircuitSystem<'_> {
    /// The small-signal row of a netlist slot (`OUT` for the output, `NONE` for a rail).
    fn row_of(&self, slot: usize) -> usize {
        self.row_of_for(slot, 0)
    }

    /// `row_of` for a terminal of a transistor of output `output` (see `index_of`).
    fn row_of_for(&self, slot: usize, output: u8) -> usize {
        let r = self.index_of(slot, output);
        if r == self.dim() {
            OUT
        } else {
            r
        }
    }

    /// The noise sources at the converged point `x` with their transfers; `None` when the
    /// small-signal circuit is singular.
    pub(super) fn noise(&self, x: &Vector) -> Option<NoiseAnalysis> {
        let net = self.net;
        let nn = net.n_nodes;
        let n = self.dim();
        let mut f = [0.0; MAX_DIM];
        let mut s = [0.0; MAX_DIM];
        let mut j = [[0.0; MAX_DIM]; MAX_DIM];
        self.jacobian(x, &mut f, &mut s, &mut j);
        // The electrical block with the junction temperatures held, and the output row.
        let mut ss = SmallSignal {
            a: [[0.0; MAX_DIM]; MAX_DIM],
            g: [0.0; MAX_DIM],
            m: nn,
        };
        for r in 0..nn {
            ss.a[r][..nn].copy_from_slice(&j[r][..nn]);
        }
        ss.g[..nn].copy_from_slice(&j[n][..nn]);

        let v = self.slot_voltages(x);
        let mut base = [NONE; MAX_TRANSISTORS];
        let mut currents = [(0.0, 0.0); MAX_TRANSISTORS];
        for i in 0..net.n_tr {
            let t = &net.tr[i];
            let ev =
                self.device(i, x)
                    .eval_with_vce(v[t.b] - v[t.e], v[t.b] - v[t.c], v[t.c] - v[t.e]);
            currents[i] = (ev.ic, ev.ib);
            base[i] = self.row_of_for(t.b, t.output);
            let rb = t.noise.rb_ohm;
            if rb <= 0.0 {
                continue;
            }
            // RB: the device's base terminal moves to a new internal node joined to the
            // netlist base by 1/RB. Its stamp (rows and columns c, b, e) is moved there.
            let bi = ss.m;
            if bi >= MAX_DIM {
                return None;
            }
            ss.m += 1;
            base[i] = bi;
            let dic = [-ev.dic_dvbc, ev.dic_dvbe + ev.dic_dvbc, -ev.dic_dvbe];
            let dib = [-ev.dib_dvbc, ev.dib_dvbe + ev.dib_dvbc, -ev.dib_dvbe];
            let die = [-(dic[0] + dib[0]), -(dic[1] + dib[1]), -(dic[2] + dib[2])];
            let stamp = [dic, dib, die];
            let old = [
                self.row_of_for(t.c, t.output),
                self.row_of_for(t.b, t.output),
                self.row_of_for(t.e, t.output),
            ];
            let new = [old[0], bi, old[2]];
            for k in 0..3 {
                for c in 0..3 {
                    ss.add(old[k], old[c], -stamp[k][c]);
                    ss.add(new[k], new[c], stamp[k][c]);
                }
            }
            let gb = 1.0 / rb;
            let b = old[1];
            ss.add(b, b, gb);
            ss.add(b, bi, -gb);
            ss.add(bi, bi, gb);
            ss.add(bi, b, -gb);
        }
        let lu = lu_factor(&ss.a, ss.m)?;
        // dI_out per unit current through a source from row `p` to row `q` (leaving `p`):
        // A dx = -(e_p - e_q), dI_out = g . dx + [p = out] - [q = out].
        let transfer = |p: usize, q: usize| -> f64 {
            let mut rhs = [0.0; MAX_DIM];
            for (r, sign) in [(p, -1.0), (q, 1.0)] {
                if r != NONE && r != OUT {
                    rhs[r] += sign;
                }
            }
            let dx = lu_solve(&lu, &rhs);
            let mut h: f64 = (0..ss.m).map(|c| ss.g[c] * dx[c]).sum();
            if p == OUT {
                h += 1.0;
            }
            if q == OUT {
                h -= 1.0;
            }
            h
        };
        let two_q = 2.0 * ELEMENTARY_CHARGE_C;
        let mut sources = Vec::with_capacity(4 * net.n_tr + net.n_res);
        for i in 0..net.n_tr {
            let t = &net.tr[i];
            let (ic, ib) = currents[i];
            let (c, b, e) = (
                self.row_of_for(t.c, t.output),
                self.row_of_for(t.b, t.output),
                self.row_of_for(t.e, t.output),
            );
            let internal = base[i] != b;
            let h_c = transfer(c, e);
            sources.push(NoiseSource {
                element: t.name,
                kind: NoiseKind::CollectorShot,
                white_a2_per_hz: two_q * ic.abs(),
                flicker_a2: 0.0,
                transfer: h_c,
                slots: Some([t.c, t.e]),
            });
            let h_b = transfer(base[i], e);
            let base_slots = (!internal).then_some([t.b, t.e]);
            sources.push(NoiseSource {
                element: t.name,
                kind: NoiseKind::BaseShot,
                white_a2_per_hz: two_q * ib.abs(),
                flicker_a2: 0.0,
                transfer: h_b,
                slots: base_slots,
            });
            if t.noise.kf > 0.0 {
                sources.push(NoiseSource {
                    element: t.name,
                    kind: NoiseKind::Flicker,
                    white_a2_per_hz: 0.0,
                    flicker_a2: t.noise.kf * ib.abs().powf(t.noise.af),
                    transfer: h_b,
                    slots: base_slots,
                });
            }
            if internal {
                let t_j = self.device(i, x).t_k;
                sources.push(NoiseSource {
                    element: t.name,
                    kind: NoiseKind::BaseResistance,
                    white_a2_per_hz: 4.0 * BOLTZMANN_J_PER_K * t_j / t.noise.rb_ohm,
                    flicker_a2: 0.0,
                    transfer: transfer(b, base[i]),
                    slots: None,
                });
            }
        }
        // Every resistor of the netlist, at ambient (resistor heat is not modelled).
        for k in 0..net.n_res {
            let r = &net.res[k];
            sources.push(NoiseSource {
                element: r.name,
                kind: NoiseKind::Thermal,
                white_a2_per_hz: 4.0 * BOLTZMANN_J_PER_K * self.op.t_amb_k / self.res_ohm[k],
                flicker_a2: 0.0,
                transfer: transfer(self.row_of(r.slot), self.row_of(R_SLOT)),
                slots: Some([r.slot, R_SLOT]),
            });
        }
        // The programming resistor, from its rail to the input node.
        if let Some(l) = net.r_ref {
            if self.ref_g > 0.0 {
                sources.push(NoiseSource {
                    element: "Rref",
                    kind: NoiseKind::Thermal,
                    white_a2_per_hz: 4.0 * BOLTZMANN_J_PER_K * self.op.t_amb_k * self.ref_g,
                    flicker_a2: 0.0,
                    transfer: transfer(self.row_of(l.b), self.row_of(l.a)),
                    slots: Some([l.b, l.a]),
                });
            }
        }
        Some(NoiseAnalysis { sources })
    }
}

/// The circuit with a DC current `amps` forced from one slot to another (leaving the
/// first): the full nonlinear circuit that a finite-difference check of a transfer solves.
struct Injected<'s, 'n> {
    sys: &'s CircuitSystem<'n>,
    rows: [usize; 2],
    amps: f64,
}

impl Injected<'_, '_> {
    fn inject(&self, f: &mut Vector) {
        for (r, sign) in [(self.rows[0], 1.0), (self.rows[1], -1.0)] {
            if r != NONE {
                f[r] += sign * self.amps;
            }
        }
    }
}

impl NonlinearSystem for Injected<'_, '_> {
    fn dim(&self) -> usize {
        self.sys.dim()
    }
    fn residual(&self, x: &Vector, f: &mut Vector, scale: &mut Vector) {
        self.sys.residual(x, f, scale);
        self.inject(f);
    }
    fn jacobian(&self, x: &Vector, f: &mut Vector, scale: &mut Vector, jac: &mut Matrix) {
        self.sys.jacobian(x, f, scale, jac);
        self.inject(f);
    }
    fn limit_step(&self, x: &Vector, dx: &mut Vector) {
        self.sys.limit_step(x, dx)
    }
}

impl Netlist {
    /// `dI_out / di` of a DC current `i` forced through `source` (which must join two
    /// netlist nodes), by a central finite difference of two full nonlinear solves with
    /// `+-step` amperes: the check of the small-signal transfers. `None` when a solve
    /// fails or the source sits on an internal base node.
    pub fn finite_difference_transfer(
        &self,
        op: &OperatingPoint,
        opts: &SolveOptions,
        source: &NoiseSource,
        step_a: f64,
    ) -> Option<f64> {
        let slots = source.slots?;
        let (_, sys, x0) = self.solve_full(op, opts).ok()?;
        let rows = [sys.index(slots[0]), sys.index(slots[1])];
        let newton = crate::solve::NewtonOptions::default();
        let i_out = |amps: f64| -> Option<f64> {
            let inj = Injected {
                sys: &sys,
                rows,
                amps,
            };
            let mut x = x0;
            if !crate::solve::solve(&inj, &mut x, &newton).is_converged() {
                return None;
            }
            let mut f = [0.0; MAX_DIM];
            let mut s = [0.0; MAX_DIM];
            inj.residual(&x, &mut f, &mut s);
            Some(f[sys.dim()])
        };
        Some((i_out(step_a)? - i_out(-step_a)?) / (2.0 * step_a))
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::circuit::{Design, Mismatch};
    use crate::model::{BjtParams, Topology, TransistorClass, ALL_TOPOLOGIES};

    /// k and q exactly as defined by the SI (CODATA 2018), written out here so the test
    /// does not lean on the constants it checks.
    const K: f64 = 1.380649e-23;
    const Q: f64 = 1.602176634e-19;

    fn class(bf: f64, vaf: Option<f64>) -> TransistorClass {
        crate::circuit::test_pair("noise-test", BjtParams::new(1e-14, bf, vaf))
    }

    fn design(topology: Topology, pair: &TransistorClass, re: f64) -> Design<'_> {
        Design {
            shape: crate::model::Shape::SINGLE,
            topology,
            pair,
            helper: Some(pair),
            re1_ohm: if topology.desc().has_re1 { re } else { 0.0 },
            re2_ohm: re,
            re_tcr_per_k: 0.0,
            r_ref: None,
        }
    }

    fn op(i_in: f64) -> OperatingPoint {
        OperatingPoint {
            i_in_a: i_in,
            v_out_v: 5.0,
            supply_v: 10.0,
            t_amb_k: 300.0,
            rail_v: None,
        }
    }

    fn analyse(d: &Design, op: &OperatingPoint) -> (Solution, NoiseAnalysis) {
        Netlist::compile(d, &Mismatch::default())
            .unwrap()
            .solve_with_noise(op, &SolveOptions::default())
            .unwrap()
    }

    fn sum(n: &NoiseAnalysis, pick: impl Fn(&NoiseSource) -> bool) -> f64 {
        n.sources
            .iter()
            .filter(|s| pick(s))
            .map(NoiseSource::output_white_a2_per_hz)
            .sum()
    }

    /// Gray, Hurst, Lewis & Meyer, *Analysis and Design of Analog Integrated Circuits*,
    /// ch. 11: the simple mirror's output noise current is about twice one transistor's
    /// collector shot noise, `4 q I_out`. Both base shot sources and Q1's collector shot
    /// source feed the input node, whose small-signal conductance is `I_in / V_T`, so they
    /// reach the output scaled by `I_out / I_in`; in all `2 q I_out (1 + I_out / I_in)`,
    /// `4 q I_out (1 - 1/(BF + 2))`: the base-current terms account for the rest.
    #[test]
    fn simple_mirror_output_noise_is_twice_one_collector_shot_noise() {
        for bf in [50.0, 100.0, 300.0] {
            let pair = class(bf, None);
            let d = design(Topology::Simple, &pair, 0.0);
            let p = op(100e-6);
            let (sol, n) = analyse(&d, &p);
            let total = n.white_a2_per_hz();
            let four_qi = 4.0 * Q * sol.i_out_a;
            assert!(
                (total / four_qi - 1.0).abs() < 0.05,
                "BF {bf}: {total:e} vs 4qI {four_qi:e}"
            );
            let gain = sol.i_out_a / p.i_in_a;
            let exact = 2.0 * Q * sol.i_out_a * (1.0 + gain);
            assert!(
                (total / exact - 1.0).abs() < 1e-6,
                "BF {bf}: {total:e} vs {exact:e}"
            );
            // The base-current terms are what separates the total from 4 q I_out.
            let base = sum(&n, |s| s.kind == NoiseKind::BaseShot);
            let ib: f64 = sol.transistors().iter().map(|t| t.i_b).sum();
            assert!((base / (2.0 * Q * ib * gain * gain) - 1.0).abs() < 1e-6);
            let collector = sum(&n, |s| s.kind == NoiseKind::CollectorShot);
            assert!(((collector + base) / total - 1.0).abs() < 1e-12);
        }
    }

    /// Same source: with `g_m R_E >> 1` the transistors' shot noise is degenerated away and
    /// the output noise tends to the two emitter resistors' thermal noise, `2 * 4kT/R_E`.
    /// The textbook result neglects base current; the base shot noise, which degeneration
    /// does not remove, is about `I R_E / (4 BF V_T)` of it per device, so the check uses a
    /// high-beta class (BF 500).
    #[test]
    fn degenerated_mirror_output_noise_tends_to_the_resistors_thermal_noise() {
        let pair = class(500.0, Some(100.0));
        // 100 uA through 5 kOhm: 0.5 V across R_E, g_m R_E about 19.
        let d = design(Topology::Simple, &pair, 5e3);
        let p = op(100e-6);
        let (_, n) = analyse(&d, &p);
        let expected = 2.0 * 4.0 * K * p.t_amb_k / 5e3;
        let total = n.white_a2_per_hz();
        assert!(
            (total / expected - 1.0).abs() < 0.10,
            "{total:e} vs {expected:e}"
        );
        // And the resistors dominate the breakdown.
        let thermal = sum(&n, |s| s.kind == NoiseKind::Thermal);
        assert!(thermal > 0.9 * total);
    }

    /// Johnson–Nyquist `4kT/R` and Schottky `2qI`, k and q exact (CODATA 2018).
    #[test]
    fn resistor_and_junction_sources_follow_johnson_nyquist_and_schottky() {
        let pair = class(150.0, Some(80.0));
        let d = design(Topology::Simple, &pair, 2.2e3);
        let p = OperatingPoint {
            t_amb_k: 330.0,
            ..op(250e-6)
        };
        let (sol, n) = analyse(&d, &p);
        for s in n.sources.iter().filter(|s| s.kind == NoiseKind::Thermal) {
            let expected = 4.0 * K * 330.0 / 2.2e3;
            assert!((s.white_a2_per_hz / expected - 1.0).abs() < 1e-6, "{s:?}");
        }
        for t in sol.transistors() {
            let shot = |kind| {
                n.sources
                    .iter()
                    .find(|s| s.element == t.name && s.kind == kind)
                    .unwrap()
                    .white_a2_per_hz
            };
            assert!((shot(NoiseKind::CollectorShot) / (2.0 * Q * t.i_c) - 1.0).abs() < 1e-6);
            assert!((shot(NoiseKind::BaseShot) / (2.0 * Q * t.i_b) - 1.0).abs() < 1e-6);
        }
        // Without emitter resistors the output transistor's collector shot noise reaches the
        // held output whole.
        let (sol, n) = analyse(&design(Topology::Simple, &pair, 0.0), &p);
        let q2 = n
            .sources
            .iter()
            .find(|s| s.element == "Q2" && s.kind == NoiseKind::CollectorShot)
            .unwrap();
        assert!((q2.output_white_a2_per_hz() / (2.0 * Q * sol.i_out_a) - 1.0).abs() < 1e-6);
    }

    /// Every source's small-signal transfer against central differences of two full
    /// nonlinear solves with a DC current forced through the source's place, on every
    /// topology with and without emitter resistors.
    #[test]
    fn transfers_equal_finite_differences_of_the_full_circuit() {
        let pair = class(120.0, Some(60.0));
        for &t in ALL_TOPOLOGIES.iter() {
            for re in [0.0f64, 1e3] {
                let re = if t == Topology::Widlar {
                    re.max(500.0)
                } else {
                    re
                };
                let d = design(t, &pair, re);
                let net = Netlist::compile(&d, &Mismatch::default()).unwrap();
                let p = op(200e-6);
                let opts = SolveOptions::default();
                let (_, n) = net.solve_with_noise(&p, &opts).unwrap();
                for s in &n.sources {
                    let fd = net.finite_difference_transfer(&p, &opts, s, 1e-8).unwrap();
                    assert!(
                        (s.transfer - fd).abs() <= 1e-4 * s.transfer.abs() + 1e-6,
                        "{t:?} RE {re}: {} {}: small-signal {} vs finite difference {fd}",
                        s.element,
                        s.kind.as_str(),
                        s.transfer
                    );
                }
            }
        }
    }

    /// A programming resistor from a rail joins the sources with its Johnson–Nyquist
    /// density `4kT/R` (to 1e-6), and its transfer equals a finite-difference solve of
    /// the full circuit to 1e-4, as every other source's does.
    #[test]
    fn programming_resistor_thermal_noise_reaches_the_output() {
        let pair = class(150.0, Some(80.0));
        let r_ohm = 47e3;
        let d = Design {
            r_ref: Some(crate::circuit::RefResistor {
                ohm: r_ohm,
                tcr_per_k: 0.0,
            }),
            ..design(Topology::Simple, &pair, 1e3)
        };
        let net = Netlist::compile(&d, &Mismatch::default()).unwrap();
        let p = OperatingPoint {
            rail_v: Some(10.0),
            ..op(200e-6)
        };
        let opts = SolveOptions::default();
        let (_, n) = net.solve_with_noise(&p, &opts).unwrap();
        let s = n
            .sources
            .iter()
            .find(|s| s.element == "Rref")
            .expect("R_ref is a noise source");
        let expected = 4.0 * K * p.t_amb_k / r_ohm;
        assert!((s.white_a2_per_hz / expected - 1.0).abs() < 1e-6, "{s:?}");
        let fd = net.finite_difference_transfer(&p, &opts, s, 1e-8).unwrap();
        assert!(
            (s.transfer - fd).abs() <= 1e-4 * s.transfer.abs() + 1e-6,
            "small-signal {} vs finite difference {fd}",
            s.transfer
        );
        // A current into the input node reaches the output at about the mirror's ratio.
        assert!(
            s.transfer.abs() > 0.5 && s.transfer.abs() < 1.5,
            "{}",
            s.transfer
        );
    }

    /// With no base current (BF -> infinity) the base spreading resistance is a noise
    /// voltage `4kT RB` in series with each base; in the simple mirror both reach Q2's
    /// V_BE one for one (Q1's through the input node), so the output carries
    /// `2 g_m^2 4kT RB` (Gray et al., ch. 11, the BJT's equivalent input noise voltage).
    #[test]
    fn base_resistance_noise_reaches_the_output_through_g_m() {
        let mut pair = class(1e9, None);
        pair.model.base_resistance_ohm = 200.0;
        let d = design(Topology::Simple, &pair, 0.0);
        let p = op(100e-6);
        let (sol, n) = analyse(&d, &p);
        let gm = sol.i_out_a / (K * p.t_amb_k / Q);
        let expected = 2.0 * gm * gm * 4.0 * K * p.t_amb_k * 200.0;
        let rb = sum(&n, |s| s.kind == NoiseKind::BaseResistance);
        assert!((rb / expected - 1.0).abs() < 1e-6, "{rb:e} vs {expected:e}");
    }

    /// SPICE flicker model `KF I_B^AF / f` at both bases of a simple mirror, carried by
    /// `I_out / I_in` like the base shot noise; the band integral
    /// `S_w (f2 - f1) + S_f ln(f2/f1)` against a numerical integration.
    #[test]
    fn flicker_density_and_band_integral() {
        let mut pair = class(100.0, None);
        pair.model.flicker_kf = 1e-14;
        pair.model.flicker_af = 1.2;
        let d = design(Topology::Simple, &pair, 0.0);
        let p = op(100e-6);
        let (sol, n) = analyse(&d, &p);
        let gain = sol.i_out_a / p.i_in_a;
        let expected: f64 = sol
            .transistors()
            .iter()
            .map(|t| 1e-14 * t.i_b.powf(1.2) * gain * gain)
            .sum();
        assert!((n.flicker_a2() / expected - 1.0).abs() < 1e-6);
        let f = 10.0;
        let at = n.density_at(f);
        assert!((at * at / (n.white_a2_per_hz() + expected / f) - 1.0).abs() < 1e-6);
        // Trapezoids on a fine logarithmic grid from 0.1 Hz to 1 kHz.
        let (f1, f2, steps) = (0.1f64, 1e3f64, 200_000);
        let mut integral = 0.0;
        for k in 0..steps {
            let a = f1 * (f2 / f1).powf(k as f64 / steps as f64);
            let b = f1 * (f2 / f1).powf((k + 1) as f64 / steps as f64);
            integral += 0.5 * (n.density_at(a).powi(2) + n.density_at(b).powi(2)) * (b - a);
        }
        assert!((n.band_rms(f1, f2) / integral.sqrt() - 1.0).abs() < 1e-6);
    }
}
