//! The bipolar transistor model of MODEL.md (NPN form) and its analytic derivatives.
//!
//! Owns: physical constants, thermal voltage, the Gummel–Poon temperature rules, the
//! mismatch rules, and the Ebers–Moll transport equations with the forward Early factor and
//! the optional IKF knee. Every current comes with its derivatives with respect to V_BE,
//! V_BC and junction temperature, so the circuit can build an exact Jacobian.
//! Must not: know about netlists, nodes or solving. A PNP device uses the same equations on
//! voltage and current magnitudes (MODEL.md conventions).

use crate::model::BjtParams;

/// Boltzmann constant, J/K (exact, SI 2019 / CODATA 2018).
pub const BOLTZMANN_J_PER_K: f64 = 1.380649e-23;
/// Elementary charge, C (exact, SI 2019 / CODATA 2018).
pub const ELEMENTARY_CHARGE_C: f64 = 1.602176634e-19;
/// k/q in V/K.
pub const K_OVER_Q: f64 = BOLTZMANN_J_PER_K / ELEMENTARY_CHARGE_C;

/// Thermal voltage `k T / q`.
#[inline]
pub fn thermal_voltage(t_k: f64) -> f64 {
    K_OVER_Q * t_k
}

/// Where a transistor is operating, from the signs of its junction voltages.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Region {
    /// V_BE > 0, V_BC <= 0: the mirror's normal operation.
    ForwardActive,
    /// Both junctions forward biased.
    Saturation,
    /// Both junctions at or below zero.
    Cutoff,
    /// V_BC > 0 >= V_BE.
    Reverse,
}

impl Region {
    pub fn of(v_be: f64, v_bc: f64) -> Region {
        match (v_be > 0.0, v_bc > 0.0) {
            (true, false) => Region::ForwardActive,
            (true, true) => Region::Saturation,
            (false, false) => Region::Cutoff,
            (false, true) => Region::Reverse,
        }
    }

    pub fn as_str(self) -> &'static str {
        match self {
            Region::ForwardActive => "forward-active",
            Region::Saturation => "saturation",
            Region::Cutoff => "cutoff",
            Region::Reverse => "reverse",
        }
    }
}

/// One device's parameters with its mismatch applied, ready to be put at a temperature.
///
/// Built once per design; `at` is the only per-temperature work.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bjt {
    ln_is_nom: f64,
    bf_nom: f64,
    br: f64,
    vaf_inv: f64,
    ikf_inv: f64,
    xti: f64,
    /// EG * q / k, kelvin.
    eg_over_k: f64,
    xtb: f64,
    t_nom_k: f64,
}

impl Bjt {
    /// A device from its class parameters plus a V_BE offset `dvbe_v` (scales IS by
    /// `exp(dvbe / V_T(T_nom))`) and a relative beta deviation `dbeta` (MODEL.md, Mismatch).
    pub fn new(p: &BjtParams, dvbe_v: f64, dbeta: f64) -> Bjt {
        Bjt {
            ln_is_nom: p.saturation_current_a.ln() + dvbe_v / thermal_voltage(p.t_nom_k),
            bf_nom: p.beta_forward * (1.0 + dbeta),
            br: p.beta_reverse,
            vaf_inv: p.early_voltage_v.map_or(0.0, |v| 1.0 / v),
            ikf_inv: p.knee_current_a.map_or(0.0, |v| 1.0 / v),
            xti: p.xti,
            eg_over_k: p.eg_ev / K_OVER_Q,
            xtb: p.xtb,
            t_nom_k: p.t_nom_k,
        }
    }

    /// IS(T) = IS (T/Tnom)^XTI exp((EG/V_T(T)) (T/Tnom - 1)) and BF(T) = BF (T/Tnom)^XTB.
    #[inline]
    pub fn at(&self, t_k: f64) -> BjtAtT {
        let ln_ratio = (t_k / self.t_nom_k).ln();
        // (EG / V_T(T)) (T/Tnom - 1) = (EG q/k) (1/Tnom - 1/T)
        let ln_is = self.ln_is_nom
            + self.xti * ln_ratio
            + self.eg_over_k * (1.0 / self.t_nom_k - 1.0 / t_k);
        BjtAtT {
            is: ln_is.exp(),
            bf: self.bf_nom * (self.xtb * ln_ratio).exp(),
            br: self.br,
            vt: thermal_voltage(t_k),
            t_k,
            vaf_inv: self.vaf_inv,
            ikf_inv: self.ikf_inv,
            dln_is_dt: self.xti / t_k + self.eg_over_k / (t_k * t_k),
            dln_bf_dt: self.xtb / t_k,
        }
    }
}

/// A device at one junction temperature.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BjtAtT {
    /// IS(T), A.
    pub is: f64,
    /// BF(T).
    pub bf: f64,
    pub br: f64,
    /// V_T(T), V.
    pub vt: f64,
    pub t_k: f64,
    vaf_inv: f64,
    ikf_inv: f64,
    dln_is_dt: f64,
    dln_bf_dt: f64,
}

/// Terminal currents (into collector and base, out of the emitter, NPN form) and their
/// derivatives. `ic + ib == ie` up to one rounding.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub struct BjtEval {
    pub ic: f64,
    pub ib: f64,
    /// The emitter current, computed so it keeps its relative precision where `ic` and `ib`
    /// nearly cancel (see `eval`).
    pub ie: f64,
    pub dic_dvbe: f64,
    pub dic_dvbc: f64,
    pub dib_dvbe: f64,
    pub dib_dvbc: f64,
    pub dic_dt: f64,
    pub dib_dt: f64,
}

impl BjtAtT {
    /// The V_BE at which the forward junction carries `i_a`: `V_T ln(1 + I/IS(T))`, the
    /// exact inverse of the model's diode (MODEL.md's start point `V_T ln(I/IS)` wherever
    /// I >> IS). Where IS dwarfs the current (picoamps into a hot junction) the logarithm
    /// alone would start the junction hundreds of millivolts reverse biased, where its
    /// current no longer depends on the voltage and Newton runs away; the true bias is a
    /// few microvolts forward. Non-positive currents give 0 V.
    #[inline]
    pub fn vbe_for_current(&self, i_a: f64) -> f64 {
        if i_a > 0.0 {
            self.vt * (i_a / self.is).ln_1p()
        } else {
            0.0
        }
    }

    /// Like `vbe_for_current`, for a collector current `i_a` at `v_ce`: the transport
    /// current is `i_a` divided by the Early factor.
    #[inline]
    pub fn vbe_for_current_at(&self, i_a: f64, v_ce: f64) -> f64 {
        self.vbe_for_current(i_a / early_factor(v_ce, self.vaf_inv).0)
    }

    /// True when the device has a finite Early voltage.
    pub fn has_early_effect(&self) -> bool {
        self.vaf_inv != 0.0
    }

    /// The voltage above which junction limiting applies:
    /// `V_T ln(V_T / (sqrt(2) IS))`.
    #[inline]
    pub fn critical_voltage(&self) -> f64 {
        self.vt * (self.vt / (std::f64::consts::SQRT_2 * self.is)).ln()
    }

    /// Ebers–Moll transport form with the Early factor on the transport current and the
    /// IKF knee on the forward base current (MODEL.md, "Device model").
    #[inline]
    pub fn eval(&self, vbe: f64, vbc: f64) -> BjtEval {
        self.eval_with_vce(vbe, vbc, vbe - vbc)
    }

    /// `eval` with `V_CE` given as well: taken from the node voltages directly it keeps
    /// its precision in saturation, where it is a millivolt or less and `vbe - vbc` would
    /// carry the rounding of two junction voltages (and that error, divided by V_T, is
    /// the error of the transport current). `vce` must equal `vbe - vbc` to rounding.
    #[inline]
    pub fn eval_with_vce(&self, vbe: f64, vbc: f64, vce: f64) -> BjtEval {
        let vt = self.vt;
        // `e^x` and `e^x - 1` of each junction, and `a - c`, without cancellation: near zero
        // bias (a hot junction whose IS dwarfs a picoamp input) and in saturation (a ~ c)
        // the plain differences lose every digit that KCL at 1e-9 of the node's current
        // needs. One transcendental per junction on the usual path.
        let (a, fwd) = exp_and_expm1(vbe / vt);
        let (c, rev) = exp_and_expm1(vbc / vt);
        let d = vce / vt;
        // I_T / IS. Where a >= e c (or the reverse) the plain difference loses at most a
        // bit; closer, it is formed from V_CE itself.
        let it_n = if d.abs() >= 1.0 {
            a - c
        } else if d >= 0.0 {
            -a * (-d).exp_m1()
        } else {
            c * d.exp_m1()
        };
        let is = self.is;
        let (early, dearly) = early_factor(vce, self.vaf_inv);
        let br_inv = 1.0 / self.br;
        let ic_n = it_n * early - br_inv * rev;
        let ic = is * ic_n;
        let da = a / vt;
        let dc = c / vt;
        let dic_dvbe = is * (da * early + it_n * dearly);
        let dic_dvbc = is * (-dc * early - it_n * dearly - br_inv * dc);
        // d/dT at fixed junction voltages: exp(v/V_T) falls as V_T grows.
        let inv_vt_t = 1.0 / (vt * self.t_k);
        let da_dt = -a * vbe * inv_vt_t;
        let dc_dt = -c * vbc * inv_vt_t;
        let dic_dt = ic * self.dln_is_dt + is * ((da_dt - dc_dt) * early - br_inv * dc_dt);

        let bf_inv = 1.0 / self.bf;
        // The knee is high injection in forward operation: a collector current flowing
        // backwards (a saturated device) leaves the forward beta alone. Read literally,
        // `1 + I_C/IKF` would turn negative below -IKF and make the forward base current
        // change sign (docs/model.md, departures).
        let k_ikf = if ic > 0.0 { self.ikf_inv } else { 0.0 };
        let knee = 1.0 + ic * k_ikf;
        let ib = is * (knee * fwd * bf_inv + br_inv * rev);
        let dib_dvbe = is * bf_inv * (knee * da + fwd * dic_dvbe * k_ikf);
        let dib_dvbc = is * (bf_inv * fwd * dic_dvbc * k_ikf + br_inv * dc);
        let dib_dt = ib * self.dln_is_dt
            + is * (bf_inv * (dic_dt * k_ikf * fwd + knee * (da_dt - fwd * self.dln_bf_dt))
                + br_inv * dc_dt);
        // Where the collector and base currents have opposite signs (saturation, reverse
        // bias, leakage at a hot junction) the emitter current is a small difference of
        // large ones, and `ic + ib` would carry the rounding of the large ones: in a
        // saturated output device fed by a beta helper it is 10^3 to 10^6 times smaller
        // than either, and KCL at its emitter could not be met to 1e-9 of what flows there.
        // There the reverse-junction terms, which cancel exactly, are left out of the sum
        // and the base current is taken as `ie - ic`. Elsewhere the plain sum is exact to
        // one rounding.
        let (ib, ie) = if ic * ib < 0.0 {
            let ie = is * (it_n * early + knee * fwd * bf_inv);
            (ie - ic, ie)
        } else {
            (ib, ic + ib)
        };
        BjtEval {
            ic,
            ib,
            ie,
            dic_dvbe,
            dic_dvbc,
            dib_dvbe,
            dib_dvbc,
            dic_dt,
            dib_dt,
        }
    }
}

/// `(e^x, e^x - 1)`, each to a few roundings: from `expm1` where `e^x` is not small (so
/// `1 +` it loses nothing), from `exp` where it is (so `- 1` loses nothing).
#[inline]
fn exp_and_expm1(x: f64) -> (f64, f64) {
    if x > -1.0 {
        let m = x.exp_m1();
        (m + 1.0, m)
    } else {
        let e = x.exp();
        (e, e - 1.0)
    }
}

/// The Early factor and its derivative with respect to V_CE.
///
/// For `V_CE >= 0` it is MODEL.md's `1 + V_CE/VAF`. Below zero the straight line is
/// continued as `1 / (1 - V_CE/VAF)`: equal in value and slope at 0 V (so first-order
/// identical for small reverse V_CE), but it stays positive. The straight line turns
/// negative below `V_CE = -VAF`, flips the sign of the transport current and so gives the
/// circuit equations spurious roots (a saturated output device with its emitter tens of
/// volts above the supply) that Newton can converge to. No forward-active operating point
/// is affected.
#[inline]
fn early_factor(v_ce: f64, vaf_inv: f64) -> (f64, f64) {
    let x = v_ce * vaf_inv;
    if x >= 0.0 {
        (1.0 + x, vaf_inv)
    } else {
        let d = 1.0 / (1.0 - x);
        (d, vaf_inv * d * d)
    }
}

/// Junction-voltage limiting as circuit simulators commonly do it: above the critical voltage a
/// proposed forward step is replaced by the logarithm of its exponential, so `exp` never
/// overflows and Newton cannot overshoot a diode characteristic.
#[inline]
pub fn limit_junction(v_new: f64, v_old: f64, vt: f64, v_crit: f64) -> f64 {
    if v_new > v_crit && (v_new - v_old).abs() > 2.0 * vt {
        if v_old > 0.0 {
            let arg = 1.0 + (v_new - v_old) / vt;
            if arg > 0.0 {
                v_old + vt * arg.ln()
            } else {
                v_crit
            }
        } else {
            vt * (v_new / vt).ln()
        }
    } else {
        v_new
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn params() -> BjtParams {
        let mut p = BjtParams::new(1e-14, 100.0, Some(80.0));
        p.knee_current_a = Some(0.05);
        p.beta_reverse = 2.0;
        p
    }

    #[test]
    fn thermal_voltage_at_300_k() {
        // CODATA 2018 exact k and q: V_T(300 K) = 25.852 mV.
        assert!((thermal_voltage(300.0) - 25.852e-3).abs() < 0.0005e-3);
    }

    #[test]
    fn temperature_rules_hand_computed() {
        // MODEL.md temperature rules, evaluated by hand at 350 K with XTI 3, EG 1.11, XTB 1.5.
        let p = BjtParams::new(1e-14, 100.0, None);
        let d = Bjt::new(&p, 0.0, 0.0).at(350.0);
        let r: f64 = 350.0 / 300.15;
        let is = 1e-14 * r.powi(3) * ((1.11 / thermal_voltage(350.0)) * (r - 1.0)).exp();
        assert!((d.is / is - 1.0).abs() < 1e-12);
        assert!((d.bf / (100.0 * r.powf(1.5)) - 1.0).abs() < 1e-12);
        let nom = Bjt::new(&p, 0.0, 0.0).at(300.15);
        assert!((nom.is / 1e-14 - 1.0).abs() < 1e-12);
        assert!((nom.bf - 100.0).abs() < 1e-12);
    }

    #[test]
    fn mismatch_scales_is_and_bf() {
        let p = BjtParams::new(1e-14, 100.0, None);
        let d = Bjt::new(&p, 2e-3, 0.05).at(300.15);
        assert!((d.is / (1e-14 * (2e-3 / thermal_voltage(300.15)).exp()) - 1.0).abs() < 1e-12);
        assert!((d.bf - 105.0).abs() < 1e-9);
    }

    #[test]
    fn currents_hand_computed() {
        // VAF absent, BR 1, no knee: I_C = IS(e^a - e^c) - IS(e^c - 1), I_B = IS/BF (e^a - 1) + IS (e^c - 1).
        let p = BjtParams::new(1e-14, 100.0, None);
        let d = Bjt::new(&p, 0.0, 0.0).at(300.15);
        let (vbe, vbc) = (0.65, -2.0);
        let e = d.eval(vbe, vbc);
        let a = (vbe / d.vt).exp();
        let c = (vbc / d.vt).exp();
        let ic = 1e-14 * ((a - c) - (c - 1.0));
        let ib = 1e-14 * ((a - 1.0) / 100.0 + (c - 1.0));
        assert!((e.ic / ic - 1.0).abs() < 1e-12);
        assert!((e.ib / ib - 1.0).abs() < 1e-12);
    }

    /// At V_CE = 0 the transport current is zero, so by MODEL.md's equations
    /// I_E = I_C + I_B = (IS/BF)(e^(V_BE/V_T) - 1) exactly; the collector and base currents
    /// are each about BF/BR times larger. The emitter current must keep its own precision,
    /// and the knee must not act on the negative collector current of this saturated
    /// device (docs/model.md, departures).
    #[test]
    fn saturated_emitter_current_keeps_its_precision() {
        let d = Bjt::new(&params(), 0.0, 0.0).at(300.15);
        for vbe in [0.55, 0.7, 0.85] {
            let e = d.eval_with_vce(vbe, vbe, 0.0);
            let ie = d.is * (vbe / d.vt).exp_m1() / d.bf;
            assert!(e.ic < -10.0 * ie, "{e:?}");
            assert!(
                (e.ie / ie - 1.0).abs() <= 4.0 * f64::EPSILON,
                "{} vs {ie}",
                e.ie
            );
            assert!((e.ic + e.ib - e.ie).abs() <= 4.0 * f64::EPSILON * e.ic.abs());
        }
    }

    /// Near zero bias the `- 1` terms decide the current: a microvolt across a junction
    /// carries IS V / V_T (first order of MODEL.md's diode), which `e^x - 1` in floating
    /// point gets wrong from the 8th digit.
    #[test]
    fn zero_bias_currents_are_linear_in_the_voltage() {
        let d = Bjt::new(&BjtParams::new(1e-9, 100.0, None), 0.0, 0.0).at(300.15);
        let v = 1e-6;
        let e = d.eval(v, 0.0);
        let x = v / d.vt;
        let ib = d.is * (x + x * x / 2.0 + x * x * x / 6.0) / d.bf;
        assert!((e.ib / ib - 1.0).abs() < 1e-12, "{} vs {ib}", e.ib);
        // And the start point inverts it: that current needs that microvolt.
        let vb = d.vbe_for_current(ib * d.bf);
        assert!((vb / v - 1.0).abs() < 1e-9, "{vb}");
    }

    #[test]
    fn derivatives_match_finite_differences() {
        let b = Bjt::new(&params(), 1e-3, 0.02);
        for &(vbe, vbc, t) in &[(0.62, -3.0, 310.0), (0.7, 0.3, 250.0), (0.5, -20.0, 390.0)] {
            let d = b.at(t);
            let e = d.eval(vbe, vbc);
            let h = 1e-7;
            let p = d.eval(vbe + h, vbc);
            let m = d.eval(vbe - h, vbc);
            // Relative 1e-6, above the rounding noise of a central difference of I_C.
            let noise = 100.0 * f64::EPSILON * e.ic.abs() / h;
            let close = |x: f64, y: f64| (x - y).abs() <= 1e-6 * x.abs().max(y.abs()) + noise;
            assert!(close(e.dic_dvbe, (p.ic - m.ic) / (2.0 * h)));
            assert!(close(e.dib_dvbe, (p.ib - m.ib) / (2.0 * h)));
            let p = d.eval(vbe, vbc + h);
            let m = d.eval(vbe, vbc - h);
            assert!(close(e.dic_dvbc, (p.ic - m.ic) / (2.0 * h)));
            assert!(close(e.dib_dvbc, (p.ib - m.ib) / (2.0 * h)));
            let ht = 1e-4;
            let noise = 100.0 * f64::EPSILON * e.ic.abs() / ht;
            let close = |x: f64, y: f64| (x - y).abs() <= 1e-6 * x.abs().max(y.abs()) + noise;
            let p = b.at(t + ht).eval(vbe, vbc);
            let m = b.at(t - ht).eval(vbe, vbc);
            assert!(close(e.dic_dt, (p.ic - m.ic) / (2.0 * ht)), "{t}");
            assert!(close(e.dib_dt, (p.ib - m.ib) / (2.0 * ht)), "{t}");
        }
    }

    #[test]
    fn vbe_tempco_near_minus_2_mv_per_k() {
        // Common practice, no source: V_BE at fixed current falls about 2 mV/K near room
        // temperature. Accept -1.5 ... -2.5 mV/K.
        let p = BjtParams::new(1e-14, 100.0, None);
        let b = Bjt::new(&p, 0.0, 0.0);
        let v = |t: f64| b.at(t).vbe_for_current(1e-3);
        let slope = (v(310.0) - v(290.0)) / 20.0;
        assert!((-2.5e-3..-1.5e-3).contains(&slope), "{slope}");
    }

    #[test]
    fn junction_limiting_caps_forward_steps() {
        let d = Bjt::new(&params(), 0.0, 0.0).at(300.0);
        let vc = d.critical_voltage();
        let limited = limit_junction(5.0, 0.6, d.vt, vc);
        assert!(limited < 0.6 + 0.2 && limited > 0.6);
        assert_eq!(limit_junction(0.61, 0.6, d.vt, vc), 0.61);
        assert_eq!(limit_junction(-3.0, 0.6, d.vt, vc), -3.0);
    }

    #[test]
    fn region_from_junctions() {
        assert_eq!(Region::of(0.6, -1.0), Region::ForwardActive);
        assert_eq!(Region::of(0.6, 0.1), Region::Saturation);
        assert_eq!(Region::of(-0.1, -1.0), Region::Cutoff);
        assert_eq!(Region::of(-0.1, 0.4), Region::Reverse);
    }
}
