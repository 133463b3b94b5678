//! The `solve` command's library function: report keys, table output, input errors.

use crate::fixtures::*;
use mirrorpick::app::solve::{solve_command, write_solve_table, SolveArgs, SolveCommandError};
use mirrorpick::model::{BjtParams, Catalog, Polarity, Topology};

fn catalog() -> Catalog {
    Catalog {
        currency: "EUR".into(),
        reference_quantity: 100,
        transistors: vec![
            class(
                "npn-dual-test",
                Polarity::Npn,
                2,
                BjtParams::new(1e-14, 200.0, Some(80.0)),
            ),
            class(
                "npn-single-test",
                Polarity::Npn,
                1,
                BjtParams::new(2e-14, 150.0, Some(90.0)),
            ),
            // Base current and Early effect out of the way: what is left of the output's
            // drift is the programming network's.
            class(
                "npn-dual-ideal-test",
                Polarity::Npn,
                2,
                BjtParams::new(1e-14, 1e6, None),
            ),
            class(
                "pnp-dual-test",
                Polarity::Pnp,
                2,
                BjtParams::new(1e-14, 150.0, Some(40.0)),
            ),
        ],
        resistors: vec![],
    }
}

fn args(topology: Topology) -> SolveArgs {
    SolveArgs {
        shape: mirrorpick::model::Shape::SINGLE,
        topology,
        part: "npn-dual-test".into(),
        helper: None,
        re1_ohm: None,
        re2_ohm: None,
        ratio: None,
        i_in_a: Some(1e-3),
        rail_v: None,
        r_ref_ohm: None,
        r_ref_resistor: None,
        v_out_v: 5.0,
        supply_v: Some(12.0),
        ambient_k: 298.15,
        self_heating: true,
        dvbe_v: 0.0,
        dbeta: 0.0,
    }
}

#[test]
fn json_has_exactly_the_documented_keys() {
    let r = solve_command(&catalog(), &args(Topology::Wilson)).unwrap();
    let v = serde_json::to_value(&r).unwrap();
    let mut keys: Vec<_> = v.as_object().unwrap().keys().cloned().collect();
    keys.sort();
    assert_eq!(
        keys,
        [
            "balance_voltage_v",
            "cautions",
            "error",
            "i_in_a",
            "i_out_a",
            "iterations",
            "nodes_v",
            "noise_a_per_rthz",
            "noise_sources",
            "outputs",
            "r_out_ohm",
            "r_ref_ohm",
            "r_ref_power_w",
            "r_ref_resistor",
            "rail_v",
            "ratio",
            "tempco_ppm_per_k",
            "transistors",
            "v_in_v",
            "worst_output"
        ]
    );
    assert!(v["rail_v"].is_null() && v["r_ref_ohm"].is_null() && v["r_ref_power_w"].is_null());
    assert!(
        v["tempco_ppm_per_k"].is_number(),
        "every design has a tempco"
    );
    let q = &v["transistors"][0];
    let mut tk: Vec<_> = q.as_object().unwrap().keys().cloned().collect();
    tk.sort();
    assert_eq!(
        tk,
        [
            "designator",
            "i_b_a",
            "i_c_a",
            "name",
            "region",
            "role",
            "t_junction_c",
            "v_be_v",
            "v_ce_v"
        ]
    );
    // The Wilson needs a helper: the dual has no spare device, so the cheapest single is used.
    assert_eq!(v["transistors"].as_array().unwrap().len(), 3);
    assert_eq!(v["transistors"][2]["role"], "helper");
    // IEEE 315 designators: the pair shares the dual (Q1A, Q1B), the helper is a single.
    let refs: Vec<&str> = v["transistors"]
        .as_array()
        .unwrap()
        .iter()
        .map(|t| t["designator"].as_str().unwrap())
        .collect();
    assert_eq!(refs, ["Q1A", "Q1B", "Q2"]);
    assert!(v["nodes_v"]["in"].as_f64().unwrap() > 1.0);
    // Early effect (V_CE1 - V_CE2 ~ V_BE) and the dice's temperature difference dominate;
    // both are a few percent at most here.
    assert!(r.error.abs() < 0.05, "{}", r.error);
    assert!(r.transistors.iter().all(|t| t.t_junction_c > 25.0));
}

#[test]
fn simple_mirror_reports_a_balance_voltage() {
    let r = solve_command(&catalog(), &args(Topology::Simple)).unwrap();
    let b = r
        .balance_voltage
        .expect("VAF 80 V, BF 200: crosses zero below 12 V");
    assert!(b > 0.6 && b < 12.0);
    assert!(r.r_out.unwrap() > 10e3);
}

#[test]
fn table_lists_figures_and_transistors() {
    let mut a = args(Topology::Simple);
    a.re1_ohm = Some(100.0);
    a.re2_ohm = Some(100.0);
    let r = solve_command(&catalog(), &a).unwrap();
    let mut buf = Vec::new();
    write_solve_table(&r, &mut buf).unwrap();
    let text = String::from_utf8(buf).unwrap();
    for needle in [
        "output current",
        "1.00 mA",
        "Q1",
        "Q2",
        "forward-active",
        "V(e1)",
        "typical",
    ] {
        assert!(text.contains(needle), "missing {needle}:\n{text}");
    }
}

#[test]
fn bad_input_is_named() {
    let c = catalog();
    let mut a = args(Topology::Simple);
    a.part = "npn-dual-tset".into();
    match solve_command(&c, &a) {
        Err(e @ SolveCommandError::UnknownPart { .. }) => {
            assert!(e.is_input_error());
            assert!(
                e.to_string().contains("did you mean `npn-dual-test`"),
                "{e}"
            );
        }
        other => panic!("{other:?}"),
    }
    let mut a = args(Topology::Simple);
    a.i_in_a = Some(-1e-3);
    let e = solve_command(&c, &a).unwrap_err();
    assert!(
        e.is_input_error() && e.to_string().contains("input current"),
        "{e}"
    );
    let mut a = args(Topology::Simple);
    a.v_out_v = 20.0;
    let e = solve_command(&c, &a).unwrap_err();
    assert!(e.to_string().contains("supply"), "{e}");
    let mut a = args(Topology::Simple);
    a.part = "pnp-dual-test".into();
    a.helper = Some("npn-single-test".into());
    let e = solve_command(&c, &a).unwrap_err();
    assert!(matches!(e, SolveCommandError::HelperPolarity { .. }), "{e}");
}

#[test]
fn error_is_against_the_requested_ratio_and_one_sided_resistors_are_refused() {
    // Gray et al. ch. 4: n I_in RE2 = I_in RE1 - V_T ln(n). A x10 mirror sized that way
    // is within a few tenths of a percent of 10 (base current at BF 200, Early effect),
    // measured against --ratio, not RE1/RE2.
    let c = catalog();
    let mut a = args(Topology::BetaHelper);
    a.helper = Some("npn-single-test".into());
    a.i_in_a = Some(100e-6);
    a.self_heating = false;
    a.re1_ohm = Some(24.9e3);
    let e = solve_command(&c, &a).unwrap_err();
    assert!(e.is_input_error());
    let msg = e.to_string();
    assert!(msg.contains("--re1 without --re2"), "{msg}");
    a.ratio = Some(10.0);
    let msg = solve_command(&c, &a).unwrap_err().to_string();
    // (24.9k - 25.69 mV x ln 10 / 100 uA) / 10 = 2.43 kΩ.
    assert!(msg.contains("RE2 = 2.43 kΩ"), "{msg}");
    a.re2_ohm = Some(2.43e3);
    let r = solve_command(&c, &a).unwrap();
    assert_eq!(r.ratio, 10.0);
    assert!(r.error.abs() < 5e-3, "{}", r.error);
    assert!((r.i_out / (10.0 * 100e-6) - 1.0 - r.error).abs() < 1e-12);
    // RE1/n instead misses by about V_T ln(n) / (I_in RE1) = 2.4 % (MODEL.md).
    a.re2_ohm = Some(2.49e3);
    let r = solve_command(&c, &a).unwrap();
    assert!((-0.030..-0.018).contains(&r.error), "{}", r.error);
    let mut a = args(Topology::Simple);
    a.re2_ohm = Some(100.0);
    assert!(solve_command(&c, &a).unwrap_err().is_input_error());
}

#[test]
fn ratings_cautions_and_infinite_output_resistance() {
    // A lopsided mirror named on purpose (1 kΩ / 10 Ω at 1 mA) carries about 50 mA at
    // 4.5 V on Q2: dissipation near the package rating is a caution, as `check` shows.
    let mut c = catalog();
    c.transistors[0].ratings.power_per_package_w = 0.3;
    let mut a = args(Topology::Simple);
    a.self_heating = false;
    a.re1_ohm = Some(1e3);
    a.re2_ohm = Some(10.0);
    let r = solve_command(&c, &a).unwrap();
    assert!(r.i_out > 30e-3);
    assert!(
        r.cautions.iter().any(|c| c.contains("dissipat")),
        "{:?}",
        r.cautions
    );
    // No Early effect and no self-heating: nothing moves I_out with V_out (MODEL.md's
    // output resistance is then infinite): null in JSON, "infinite" in the table.
    let mut c = catalog();
    c.transistors[0].model.early_voltage_v = None;
    let mut a = args(Topology::Simple);
    a.self_heating = false;
    let r = solve_command(&c, &a).unwrap();
    assert!(r.r_out.is_none());
    let v = serde_json::to_value(&r).unwrap();
    assert!(v["r_out_ohm"].is_null());
    let mut buf = Vec::new();
    write_solve_table(&r, &mut buf).unwrap();
    assert!(String::from_utf8(buf).unwrap().contains("infinite"));
}

/// A simple mirror programmed from a rail, no self-heating, no Early effect worth the
/// name: the circuit of Sedra & Smith's and Horowitz & Hill's programming resistor.
fn programmed(rail_v: f64, r_ref_ohm: f64) -> SolveArgs {
    let mut a = args(Topology::Simple);
    a.i_in_a = None;
    a.rail_v = Some(rail_v);
    a.r_ref_ohm = Some(r_ref_ohm);
    a.self_heating = false;
    a
}

#[test]
fn a_rail_and_r_ref_solve_the_input_current() {
    // Sedra & Smith, Microelectronic Circuits (current mirror biasing); Horowitz & Hill,
    // The Art of Electronics (current mirrors): I_in = (V_prog - V_BE) / R_ref, with the
    // V_BE of the solved circuit.
    let r = solve_command(&catalog(), &programmed(5.0, 4.3e3)).unwrap();
    let expected = (5.0 - r.v_in) / 4.3e3;
    assert!(
        (r.i_in / expected - 1.0).abs() < 1e-6,
        "{} vs {expected}",
        r.i_in
    );
    assert!((0.5..0.8).contains(&r.v_in), "one V_BE: {}", r.v_in);
    // The power in R_ref is (V_prog - V_in) I_in.
    let p = r.r_ref_power_w.unwrap();
    assert!((p / ((5.0 - r.v_in) * r.i_in) - 1.0).abs() < 1e-6, "{p}");
    assert_eq!(r.rail_v, Some(5.0));
    assert_eq!(r.r_ref_ohm, Some(4.3e3));
    // The error is against the solved input current.
    assert!((r.error - (r.i_out / r.i_in - 1.0)).abs() < 1e-12);
    // A Wilson's input sits two V_BE up (Gray, Hurst, Lewis & Meyer, Analysis and Design
    // of Analog ICs, ch. 4).
    let mut w = programmed(5.0, 3.6e3);
    w.topology = Topology::Wilson;
    w.helper = Some("npn-single-test".into());
    let rw = solve_command(&catalog(), &w).unwrap();
    assert!((1.1..1.6).contains(&rw.v_in), "two V_BE: {}", rw.v_in);
    assert!((rw.i_in / ((5.0 - rw.v_in) / 3.6e3) - 1.0).abs() < 1e-6);
}

#[test]
fn a_programmed_simple_mirror_drifts_as_the_v_be_over_the_r_ref_drop() {
    // -(dV_BE/dT) / (V_prog - V_BE) with dV_BE/dT about -2 mV/K (common practice, no
    // source): about +460 ppm/K from 5 V, within 10 %; from 15 V proportionally less.
    // The transistors have no base current or Early effect to speak of (BF 10^6), so the
    // programming network's drift is all there is.
    let ideal = |rail: f64, r: f64| {
        let mut a = programmed(rail, r);
        a.part = "npn-dual-ideal-test".into();
        solve_command(&catalog(), &a).unwrap()
    };
    // About 100 uA, where this class's V_BE (0.59 V) moves by -2.0 mV/K.
    let r5 = ideal(5.0, 43e3);
    let t5 = r5.tempco_ppm_per_k.unwrap();
    assert!((t5 / 460.0 - 1.0).abs() < 0.10, "{t5} ppm/K");
    // The same formula with the solved input voltage's own slope, tighter.
    let v_in_at = |dt: f64| {
        let mut a = programmed(5.0, 43e3);
        a.part = "npn-dual-ideal-test".into();
        a.ambient_k += dt;
        solve_command(&catalog(), &a).unwrap().v_in
    };
    let dvin_dt = (v_in_at(5.0) - v_in_at(-5.0)) / 10.0;
    let exact = -dvin_dt / (5.0 - r5.v_in) * 1e6;
    assert!((t5 / exact - 1.0).abs() < 0.02, "{t5} vs {exact} ppm/K");
    let r15 = ideal(15.0, 143e3);
    let t15 = r15.tempco_ppm_per_k.unwrap();
    let expected = 2e-3 / (15.0 - r15.v_in) * 1e6;
    assert!(
        (t15 / expected - 1.0).abs() < 0.10,
        "{t15} vs {expected} ppm/K"
    );
    let proportion = (5.0 - r5.v_in) / (15.0 - r15.v_in);
    assert!((t15 / t5 / proportion - 1.0).abs() < 0.05, "{t15} / {t5}");
}

#[test]
fn the_input_is_forced_or_programmed_never_both_or_neither() {
    let c = catalog();
    // (--iin, --rail, --rref, what the message says)
    type Case = (Option<f64>, Option<f64>, Option<f64>, &'static str);
    let cases: [Case; 5] = [
        (Some(1e-3), Some(12.0), Some(11e3), "not both"),
        (None, None, None, "give the input"),
        (None, Some(12.0), None, "--rail needs --rref"),
        (Some(1e-3), None, Some(11e3), "--rref needs --rail"),
        (None, Some(-1.0), Some(11e3), "program rail"),
    ];
    for (iin, rail, rref, says) in cases {
        let mut a = args(Topology::Simple);
        a.i_in_a = iin;
        a.rail_v = rail;
        a.r_ref_ohm = rref;
        let e = solve_command(&c, &a).unwrap_err();
        assert!(e.is_input_error(), "{e}");
        assert!(e.to_string().contains(says), "{says}: {e}");
    }
    let mut a = programmed(12.0, 11e3);
    a.r_ref_resistor = Some("no-such-film".into());
    let e = solve_command(&c, &a).unwrap_err();
    assert!(
        e.is_input_error() && e.to_string().contains("no-such-film"),
        "{e}"
    );
}
