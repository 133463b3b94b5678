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
        topology,
        part: "npn-dual-test".into(),
        helper: None,
        re1_ohm: 0.0,
        re2_ohm: 0.0,
        i_in_a: 1e-3,
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
            "balance_voltage",
            "error",
            "i_in",
            "i_out",
            "iterations",
            "nodes",
            "r_out",
            "transistors",
            "v_in"
        ]
    );
    let q = &v["transistors"][0];
    let mut tk: Vec<_> = q.as_object().unwrap().keys().cloned().collect();
    tk.sort();
    assert_eq!(
        tk,
        [
            "designator",
            "i_b",
            "i_c",
            "name",
            "region",
            "role",
            "t_junction_c",
            "v_be",
            "v_ce"
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
    assert!(v["nodes"]["in"].as_f64().unwrap() > 1.0);
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
    a.re1_ohm = 100.0;
    a.re2_ohm = 100.0;
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
    a.i_in_a = -1e-3;
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
