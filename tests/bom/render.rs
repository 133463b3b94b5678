//! The three renderers on one small fixed plan.

use mirrorpick::bom::render::{
    write_cautions, write_csv, write_json, write_table, write_table_styled,
};
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

/// A channel whose programming resistor has the class and value of its emitter
/// resistors: the BOM buys them on one line, and the assignment still names R_ref apart
/// (narrow design cell and the wide table's own column), not as a third emitter resistor.
#[test]
fn r_ref_sharing_the_emitter_resistors_class_is_named_apart() {
    let mut d = with_resistors(design("npn-quad", 1, 0), "res-1pc", 4700.0, 3);
    d.r_ref = Some(mirrorpick::bom::ResistorUse {
        class: "res-1pc".into(),
        value_ohm: 4700.0,
        count: 1,
    });
    let mut p = problem(vec![channel("programmed", 1, vec![d])]);
    p.line_item_cost = 1.0;
    let plan = match optimise(&p).unwrap() {
        BomOutcome::Optimal(plan) => *plan,
        BomOutcome::Infeasible(why) => panic!("{why}"),
    };
    let table = |wide: bool| {
        let mut out = Vec::new();
        let style = mirrorpick::report::Style {
            wide,
            ..Default::default()
        };
        write_table_styled(&plan, style, &mut out).unwrap();
        String::from_utf8(out).unwrap()
    };
    let narrow = table(false);
    assert!(
        narrow.contains("simple npn-quad, RE 2 x 4.70 kΩ res-1pc, R_ref 4.70 kΩ res-1pc"),
        "{narrow}"
    );
    assert!(!narrow.contains("3 x 4.70 kΩ"), "{narrow}");
    // One line item of three resistors per board.
    assert!(narrow.contains("4.70 kΩ, 1 %"), "{narrow}");
    assert_eq!(plan.bom.len(), 2);
    let wide = table(true);
    let row = wide.lines().find(|l| l.contains("programmed")).unwrap();
    let cells: Vec<&str> = row.split('┆').map(str::trim).collect();
    assert!(wide.contains("R_ref"), "{wide}");
    assert_eq!(cells[5], "2 x 4.70 kΩ res-1pc", "{wide}");
    assert_eq!(cells[6], "4.70 kΩ res-1pc", "{wide}");
}
