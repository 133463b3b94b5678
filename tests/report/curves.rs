//! Curve families from the solved circuit.

use mirrorpick::circuit::{
    balance_voltage, Design, Mismatch, Netlist, OperatingPoint, SolveOptions,
};
use mirrorpick::curves::{for_design, zero_crossings, CurveOptions, ROOM_K};
use mirrorpick::device::Region;
use mirrorpick::input;
use mirrorpick::model::{
    Catalog, Filters, LoadKind, MirrorKind, Range, Requirement, Topology, ALL_TOPOLOGIES,
};

fn catalog() -> Catalog {
    input::load_default_catalog().unwrap()
}

fn requirement() -> Requirement {
    Requirement {
        program: None,
        accuracy_of: mirrorpick::model::AccuracyOf::Ratio,
        max_tempco_per_k: None,
        name: "curve test sink".into(),
        kind: MirrorKind::Sink,
        supply_v: 15.0,
        input_current_a: Range {
            min: 1e-5,
            max: 1e-3,
        },
        ratio: 1.0,
        output_voltage_v: Range {
            min: 2.0,
            max: 12.0,
        },
        ambient_k: Range {
            min: 253.15,
            max: 343.15,
        },
        accuracy: 0.02,
        confidence_sigma: 3.0,
        min_yield: None,
        min_output_resistance_ohm: None,
        input_voltage_max_v: None,
        min_vce_v: 0.3,
        max_cost: None,
        max_noise: None,
        quantity: 1,
        outputs: 1,
        load: LoadKind::General,
        topologies: Filters::default(),
        classes: Filters::default(),
    }
}

fn design<'a>(c: &'a Catalog, t: Topology) -> Design<'a> {
    let pair = c.transistor("npn-dual-general").unwrap();
    let widlar = t == Topology::Widlar;
    Design {
        shape: mirrorpick::model::Shape::SINGLE,
        r_ref: None,
        topology: t,
        pair,
        helper: c.transistor("npn-single-general"),
        re1_ohm: 0.0,
        re2_ohm: if widlar { 1000.0 } else { 0.0 },
        re_tcr_per_k: 0.0,
    }
}

#[test]
fn output_current_rises_with_output_voltage_in_the_active_region() {
    // With a finite Early voltage every transistor in the output path gains current
    // with V_CE (Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog Integrated
    // Circuits, ch. 1 and 4: the output resistance of a mirror is finite and positive).
    let c = catalog();
    assert!(c
        .transistor("npn-dual-general")
        .unwrap()
        .model
        .early_voltage_v
        .is_some());
    let req = requirement();
    let opts = CurveOptions {
        voltage_points: 61,
        current_points: 3,
        ambient_extremes: true,
    };
    for t in ALL_TOPOLOGIES {
        let d = design(&c, t);
        let set = for_design(&d, &req, &opts, &SolveOptions::default()).unwrap();
        let net = Netlist::compile(&d, &Mismatch::default()).unwrap();
        let mut active_points = 0;
        for curve in &set.output {
            let active: Vec<Option<f64>> = curve
                .v_out_v
                .iter()
                .zip(&curve.i_out_a)
                .map(|(&v, &i)| {
                    let op = OperatingPoint {
                        rail_v: None,
                        i_in_a: curve.i_in_a,
                        v_out_v: v,
                        supply_v: req.supply_v,
                        t_amb_k: curve.t_amb_k,
                    };
                    let s = net.solve(&op, &SolveOptions::default()).ok()?;
                    // Forward active, counting a base-collector junction within 0.1 V
                    // of zero as active: the diode-like devices of a Wilson4 sit at
                    // V_CB = 0 by design, where it conducts a negligible current.
                    s.transistors()
                        .iter()
                        .all(|q| {
                            q.region == Region::ForwardActive
                                || (q.v_be > 0.0 && q.v_be - q.v_ce < 0.1)
                        })
                        .then_some(i?)
                })
                .collect();
            for w in active.windows(2) {
                if let [Some(a), Some(b)] = w {
                    active_points += 1;
                    assert!(
                        b > a,
                        "{}: I_out falls from {a} to {b} at I_in {} and {} K",
                        t.name(),
                        curve.i_in_a,
                        curve.t_amb_k
                    );
                }
            }
        }
        // The active region covers most of the sweep: the check above is not vacuous.
        assert!(
            active_points > set.output.len() * 40,
            "{}: only {active_points} active steps",
            t.name()
        );
    }
}

#[test]
fn simple_mirror_crosses_zero_error_at_the_solver_balance_voltage() {
    let c = catalog();
    let req = requirement();
    let d = design(&c, Topology::Simple);
    let opts = CurveOptions {
        voltage_points: 301,
        ..CurveOptions::default()
    };
    let set = for_design(&d, &req, &opts, &SolveOptions::default()).unwrap();
    let vb = set
        .balance_voltage_v
        .expect("a simple mirror with finite VAF balances");
    // The same figure `solve` reports, straight from the engine.
    let op = OperatingPoint {
        rail_v: None,
        i_in_a: req.input_current_a.max,
        v_out_v: 0.0,
        supply_v: req.supply_v,
        t_amb_k: ROOM_K,
    };
    let solver =
        balance_voltage(&d, 1.0, &op, &Mismatch::default(), &SolveOptions::default()).unwrap();
    assert_eq!(vb, solver);
    let curve = set
        .output
        .iter()
        .find(|c| c.i_in_a == req.input_current_a.max && c.t_amb_k == ROOM_K)
        .unwrap();
    let zeros = zero_crossings(curve, 1.0);
    // The curve also crosses near 0 V where the output transistor leaves saturation;
    // the balance point is the crossing in the active region.
    let active: Vec<f64> = zeros.into_iter().filter(|z| *z > 0.5).collect();
    assert_eq!(active.len(), 1, "{active:?}");
    // Linear interpolation over a 50 mV grid on a smooth curve: within 5 mV.
    assert!(
        (active[0] - vb).abs() < 5e-3,
        "curve {} vs solver {vb}",
        active[0]
    );
}
