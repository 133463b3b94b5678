//! Property tests over the ranges of the engine issue: IS 1e-16...1e-12 A, BF 20...1000,
//! VAF 10...500 V, I_in 1 nA...50 mA, V_out 0.3...100 V, T -40...125 °C, RE 0...100 kOhm,
//! every topology, with and without self-heating.
//!
//! Cases also draw the package size (singles, duals, a 5-device array, so every layout
//! and helper path runs), V_BE offsets within +-5 mV, beta deviations within +-10 % and
//! resistor deviations within +-1 %.
//!
//! Two limits keep the cases physical: the drop across an emitter resistor is kept within
//! 2 V (I_in RE <= 2 V; beyond that the input node would sit kilovolts above the rail),
//! and with self-heating a case may end in `ThermalRunaway` (50 mA at 100 V is 5 W in a
//! small package), which is the correct answer there; any other failure fails the test.

use crate::fixtures::*;
use mirrorpick::circuit::{solve_point, Design, Mismatch, OperatingPoint, Solution, SolveFailure};
use mirrorpick::model::{BjtParams, Polarity, Topology, ALL_TOPOLOGIES};
use proptest::prelude::*;

#[derive(Debug, Clone)]
pub(crate) struct Case {
    pub topology: Topology,
    pub is: f64,
    pub bf: f64,
    pub vaf: f64,
    pub i_in: f64,
    pub v_out: f64,
    pub t_c: f64,
    pub re: f64,
    pub per_package: u32,
    pub mismatch: Mismatch,
}

fn log_range(lo: f64, hi: f64) -> impl Strategy<Value = f64> {
    (lo.ln()..hi.ln()).prop_map(f64::exp)
}

fn cases() -> impl Strategy<Value = Case> {
    (
        0..ALL_TOPOLOGIES.len(),
        log_range(1e-16, 1e-12),
        log_range(20.0, 1000.0),
        log_range(10.0, 500.0),
        log_range(1e-9, 50e-3),
        log_range(0.3, 100.0),
        -40.0..125.0f64,
        prop_oneof![Just(0.0), log_range(1.0, 100e3)],
        prop_oneof![Just(1u32), Just(2), Just(5)],
        (
            -5e-3..5e-3f64,
            -5e-3..5e-3f64,
            -0.1..0.1f64,
            -0.1..0.1f64,
            -0.01..0.01f64,
        ),
    )
        .prop_map(
            |(t, is, bf, vaf, i_in, v_out, t_c, re, per_package, (v1, v2, b1, b2, r))| Case {
                topology: ALL_TOPOLOGIES[t],
                is,
                bf,
                vaf,
                i_in,
                v_out,
                t_c,
                re: re.min(2.0 / i_in),
                per_package,
                mismatch: Mismatch {
                    more: Default::default(),
                    dref: 0.0,
                    dvbe_v: [v1, v2],
                    dbeta: [b1, b2],
                    dre1: r,
                    dre2: -r,
                },
            },
        )
}

fn run(c: &Case, heated_: bool) -> (Result<Solution, SolveFailure>, OperatingPoint, f64, f64) {
    let cls = class(
        "prop",
        Polarity::Npn,
        c.per_package,
        BjtParams::new(c.is, c.bf, Some(c.vaf)),
    );
    // The helper single: a different device, in its own package when it is used.
    let helper = class(
        "prop-single",
        Polarity::Npn,
        1,
        BjtParams::new(c.is * 1.5, c.bf * 0.8, Some(c.vaf * 1.2)),
    );
    let (re1, re2) = if c.topology == Topology::Widlar {
        (0.0, c.re.max(1.0))
    } else {
        (c.re, c.re)
    };
    let d = Design {
        helper: Some(&helper),
        ..design(c.topology, &cls, re1, re2)
    };
    let p = OperatingPoint {
        rail_v: None,
        i_in_a: c.i_in,
        v_out_v: c.v_out,
        supply_v: c.v_out + 1.0,
        t_amb_k: c.t_c + 273.15,
    };
    let opts = if heated_ { heated() } else { iso() };
    (
        solve_point(&d, &p, &c.mismatch, &opts),
        p,
        re1 * (1.0 + c.mismatch.dre1),
        re2 * (1.0 + c.mismatch.dre2),
    )
}

/// KCL at every node from the reported currents (independent of the solver's own check),
/// and the power balance of Tellegen's theorem.
pub(crate) fn check_kcl_and_power(
    c: &Case,
    s: &Solution,
    p: &OperatingPoint,
    re1: f64,
    re2: f64,
) -> Result<(), String> {
    let desc = c.topology.desc();
    // By Tellegen's theorem delivered - dissipated = sum over nodes of V_node times the
    // node's KCL residual: the residuals KCL is allowed below add this much to the power
    // balance, and at nodes far above the rail it can reach 1e-9 of the total power.
    let mut kcl_power = 0.0;
    for node in s.nodes() {
        if node.name == "out" || node.name == "S" {
            continue;
        }
        let mut sum = 0.0;
        let mut big = 0.0f64;
        // What this check's own sum can be off by: a few roundings of every number added,
        // the emitter current counting as its two parts (in a saturated device they are
        // 10^6 times the emitter current, and their rounding is all this check could see).
        let mut magnitude = 0.0f64;
        let mut add = |i: f64, parts: f64| {
            sum += i;
            big = big.max(i.abs());
            magnitude += parts;
        };
        if node.name == "in" {
            add(-p.i_in_a, p.i_in_a);
        }
        if node.name == "e1" {
            add(node.volts / re1, (node.volts / re1).abs());
        }
        if node.name == "e2" {
            add(node.volts / re2, (node.volts / re2).abs());
        }
        for (line, q) in desc.transistors.iter().zip(s.transistors()) {
            if line.collector == node.name {
                add(q.i_c, q.i_c.abs());
            }
            if line.base == node.name {
                add(q.i_b, q.i_b.abs());
            }
            if line.emitter == node.name {
                add(-(q.i_c + q.i_b), q.i_c.abs() + q.i_b.abs());
            }
        }
        // Relative to the currents at the node; the floor (1e-12 of I_in, the solver's)
        // only matters where every current at the node is tiny.
        if sum.abs() > 1e-12 * p.i_in_a + 1e-9 * big + 4.0 * f64::EPSILON * magnitude {
            return Err(format!(
                "KCL at {}: {sum:e} (largest branch {big:e})",
                node.name
            ));
        }
        kcl_power += (node.volts * sum).abs();
    }
    let delivered = p.i_in_a * s.v_in_v + p.v_out_v * s.i_out_a + p.supply_v * s.supply_current_a;
    let mut dissipated = 0.0;
    let mut scale = p.i_in_a * s.v_in_v.abs() + (p.v_out_v * s.i_out_a).abs();
    scale += (p.supply_v * s.supply_current_a).abs();
    for q in s.transistors() {
        dissipated += q.power_w;
        scale += (q.v_ce * q.i_c).abs() + (q.v_be * q.i_b).abs();
    }
    for (name, r) in [("e1", re1), ("e2", re2)] {
        if let Some(v) = s.node(name) {
            dissipated += v * v / r;
            scale += v * v / r;
        }
    }
    if (delivered - dissipated).abs() > 1e-9 * scale + 2.0 * kcl_power {
        return Err(format!(
            "power: delivered {delivered:e}, dissipated {dissipated:e}"
        ));
    }
    Ok(())
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 256, ..ProptestConfig::default() })]

    #[test]
    fn isothermal_solves_converge_and_balance(c in cases()) {
        let (r, p, re1, re2) = run(&c, false);
        let s = r.map_err(|e| TestCaseError::fail(e.to_string()))?;
        check_kcl_and_power(&c, &s, &p, re1, re2).map_err(TestCaseError::fail)?;
    }

    #[test]
    fn self_heated_solves_converge_and_balance(c in cases()) {
        let (r, p, re1, re2) = run(&c, true);
        match r {
            Ok(s) => check_kcl_and_power(&c, &s, &p, re1, re2).map_err(TestCaseError::fail)?,
            Err(SolveFailure::ThermalRunaway { .. }) => {}
            Err(e) => return Err(TestCaseError::fail(e.to_string())),
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig { cases: 64, ..ProptestConfig::default() })]

    /// MODEL.md conventions: a PNP design is the NPN design mirrored, so with equal
    /// parameters every reported magnitude agrees to 1e-9 relative.
    #[test]
    fn pnp_equals_mirrored_npn(c in cases(), heat in any::<bool>()) {
        let params = BjtParams::new(c.is, c.bf, Some(c.vaf));
        let npn_cls = class("n", Polarity::Npn, 5, params.clone());
        let pnp_cls = class("p", Polarity::Pnp, 5, params);
        let (re1, re2) = if c.topology == Topology::Widlar { (0.0, c.re.max(1.0)) } else { (c.re, c.re) };
        let p = OperatingPoint {
            rail_v: None,
            i_in_a: c.i_in,
            v_out_v: c.v_out,
            supply_v: c.v_out + 1.0,
            t_amb_k: c.t_c + 273.15,
        };
        let opts = if heat { heated() } else { iso() };
        let a = solve_point(&design(c.topology, &npn_cls, re1, re2), &p, &nominal(), &opts);
        let b = solve_point(&design(c.topology, &pnp_cls, re1, re2), &p, &nominal(), &opts);
        match (a, b) {
            (Ok(a), Ok(b)) => {
                prop_assert!((b.i_out_a / a.i_out_a - 1.0).abs() <= 1e-9);
                for (x, y) in a.transistors().iter().zip(b.transistors()) {
                    prop_assert!((x.v_be - y.v_be).abs() <= 1e-9 * x.v_be.abs().max(1e-3));
                    prop_assert!((x.t_junction_k - y.t_junction_k).abs() <= 1e-9 * x.t_junction_k);
                }
            }
            (Err(SolveFailure::ThermalRunaway { .. }), Err(SolveFailure::ThermalRunaway { .. })) => {}
            (a, b) => prop_assert!(false, "NPN {a:?} vs PNP {b:?}"),
        }
    }
}
