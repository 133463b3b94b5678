//! The three renderers on one small fixed plan.

use mirrorpick::bom::render::{write_cautions, write_csv, write_json, write_table};
use mirrorpick::bom::{optimise, BoardPlan, BomOutcome};

use crate::fixtures::*;

fn plan() -> BoardPlan {
    let mut p = problem(vec![
        channel(
            "led",
            1,
            vec![with_resistors(
                design("npn-quad", 1, 0),
                "res-1pc",
                4700.0,
                2,
            )],
        ),
        channel("bias", 1, vec![design("npn-dual", 1, 1)]),
    ]);
    p.boards = 4;
    p.line_item_cost = 1.0;
    match optimise(&p).unwrap() {
        BomOutcome::Optimal(plan) => *plan,
        BomOutcome::Infeasible(why) => panic!("{why}"),
    }
}

#[test]
fn csv_is_the_bom() {
    let mut out = Vec::new();
    write_csv(&plan(), &mut out).unwrap();
    // The bias Wilson's helper takes a spare device of the LED channel's quad.
    assert_eq!(
        String::from_utf8(out).unwrap(),
        "line,kind,class,package,devices_per_package,value_ohm,tolerance,qty_per_board,qty_per_build,unit_cost_eur,extended_cost_eur\n\
         1,transistor,npn-dual,pkg2,2,,,1,4,0.5,2\n\
         2,transistor,npn-quad,pkg4,4,,,1,4,0.75,3\n\
         3,resistor,res-1pc,,,4700,0.01,2,8,0.125,1\n"
    );
}

#[test]
fn json_carries_schema_and_totals() {
    let plan = plan();
    let mut out = Vec::new();
    write_json(&plan, &mut out).unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out).unwrap();
    assert_eq!(v["schema_version"], 1);
    assert_eq!(v["total_cost"], 6.0 + 3.0);
    assert_eq!(v["bom"].as_array().unwrap().len(), 3);
    assert_eq!(v["bom"][2]["value_ohm"], 4700.0);
    assert_eq!(v["channels"][1]["copies"][0]["helpers"][0], "Q2C");
    assert_eq!(v["shared_packages"][0]["occupants"][0], "led#1");
}

#[test]
fn table_shows_bom_assignment_totals_and_caution() {
    let mut out = Vec::new();
    write_table(&plan(), &mut out).unwrap();
    let text = String::from_utf8(out).unwrap();
    for needle in [
        "4.70 kΩ, 1 %",
        "npn-quad",
        "#1: Q2A Q2B",
        "helper Q2C",
        "Total per build: 9.00 EUR",
    ] {
        assert!(text.contains(needle), "missing {needle:?} in\n{text}");
    }
    assert!(!text.contains("Caution"));
    let mut out = Vec::new();
    write_cautions(&plan(), &mut out).unwrap();
    let text = String::from_utf8(out).unwrap();
    assert!(
        text.starts_with("Caution: Q2 is shared by led #1, bias #1;"),
        "{text}"
    );
    assert!(text.contains("datasheet"), "{text}");
}

#[test]
fn table_snapshot() {
    // Reviewed by hand: baseline = led quad 0.75 + 2 x 0.125 and bias dual 0.5 + single
    // 0.125, i.e. 1.625 per board x 4 + 4 line items = 10.50.
    let mut out = Vec::new();
    write_table(&plan(), &mut out).unwrap();
    assert_eq!(
        String::from_utf8(out).unwrap(),
        include_str!("snapshots/plan-table.txt")
    );
}
