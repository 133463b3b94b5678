//! Channels programmed by a resistor from a rail: R_ref is a resistor line item shared
//! across channels like an emitter resistor value, and a copy's designators on the board
//! are those of its design's schematic, report and SPICE deck.

use std::path::Path;

use mirrorpick::bom::candidates::design_problem;
use mirrorpick::bom::render::resistor_designators;
use mirrorpick::bom::{optimise, BoardPlan, BomItem, BomOutcome};
use mirrorpick::check::{self, MonteCarlo};
use mirrorpick::input;
use mirrorpick::model::Catalog;
use mirrorpick::rank::Silent;

fn board() -> (
    BoardPlan,
    mirrorpick::bom::candidates::DesignProblem,
    Catalog,
) {
    let dir = Path::new(concat!(
        env!("CARGO_MANIFEST_DIR"),
        "/tests/fixtures/design"
    ));
    let text = std::fs::read_to_string(dir.join("programmed-pair.yaml")).unwrap();
    let draft = input::load_design("programmed-pair.yaml", &text, dir).expect("reads");
    let catalog = input::load_default_catalog().expect("catalog");
    let design = draft.finish(&catalog).expect("valid");
    let mc = MonteCarlo {
        samples: 200,
        ..MonteCarlo::default()
    };
    let dp = design_problem(&design, &catalog, mc, &Silent);
    match optimise(&dp.problem).expect("valid problem") {
        BomOutcome::Optimal(plan) => (*plan, dp, catalog),
        BomOutcome::Infeasible(_) => panic!("the test board has a plan"),
    }
}

#[test]
fn two_channels_with_the_same_r_ref_value_share_one_line_item() {
    let (plan, dp, _) = board();
    // The programming resistor each channel's chosen design carries.
    let r_refs: Vec<(String, f64)> = plan
        .channels
        .iter()
        .enumerate()
        .map(|(c, a)| {
            let spec = &dp.channels[c].designs[a.option].0;
            assert!(spec.r_ref_ohm > 0.0, "{} is programmed", a.channel);
            (spec.r_ref_resistor.clone().unwrap(), spec.r_ref_ohm)
        })
        .collect();
    assert_eq!(r_refs[0], r_refs[1], "same rail, same current: same R_ref");
    let (class, value) = &r_refs[0];
    let lines: Vec<_> = plan
        .bom
        .iter()
        .filter(|l| {
            matches!(&l.item, BomItem::Resistor { class: c, value_ohm, .. }
                if c == class && value_ohm == value)
        })
        .collect();
    assert_eq!(lines.len(), 1, "one line item for both channels' R_ref");
    // One R_ref per copy, plus any emitter resistor of the same value.
    let copies: u32 = plan.channels.iter().map(|a| a.count).sum();
    let same_valued_re: u32 = plan
        .channels
        .iter()
        .enumerate()
        .map(|(c, a)| {
            let s = &dp.channels[c].designs[a.option].0;
            let n = [s.re1_ohm, s.re2_ohm]
                .iter()
                .filter(|&&v| v == *value && s.resistor.as_ref() == Some(class))
                .count() as u32;
            n * a.count
        })
        .sum();
    assert_eq!(lines[0].qty_per_board, copies + same_valued_re);
    // And every resistor of every copy is counted once in the BOM.
    let per_board: u32 = plan
        .channels
        .iter()
        .map(|a| a.count * a.resistors.iter().map(|r| r.count).sum::<u32>())
        .sum();
    let bom_resistors: u32 = plan
        .bom
        .iter()
        .filter(|l| matches!(l.item, BomItem::Resistor { .. }))
        .map(|l| l.qty_per_board)
        .sum();
    assert_eq!(per_board, bom_resistors);
}

#[test]
fn a_one_copy_channel_carries_its_designs_own_designators() {
    let (plan, dp, catalog) = board();
    let refs = resistor_designators(&plan);
    // The first channel has one copy: resistor numbering starts there, and on this board
    // its package is numbered first too (the plan numbers packages, `bom::plan`).
    let a = &plan.channels[0];
    assert_eq!(a.count, 1);
    let spec = &dp.channels[0].designs[a.option].0;
    let d = check::resolve(&catalog, spec).unwrap();
    let mut own: Vec<String> = d.elements().iter().map(|e| e.designator.clone()).collect();
    let copy = &a.copies[0];
    let mut board: Vec<String> = copy
        .matched
        .iter()
        .chain(&copy.helpers)
        .map(|s| s.reference.clone())
        .chain(refs[0][0].iter().cloned())
        .collect();
    own.sort();
    board.sort();
    assert_eq!(board, own, "{}", a.label);
    assert!(
        own.iter().any(|r| r == "R3") || spec.re1_ohm == 0.0,
        "{own:?}"
    );
    // Later channels continue the numbering: no designator is used twice on the board.
    let all: Vec<&String> = refs.iter().flatten().flatten().collect();
    let mut unique = all.clone();
    unique.sort();
    unique.dedup();
    assert_eq!(all.len(), unique.len());
}
