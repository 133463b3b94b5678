//! Several outputs on one reference: the shipped LED example as one input side with four
//! outputs against four separate mirrors, and the multi-output candidates end to end.

use mirrorpick::check::MonteCarlo;
use mirrorpick::rank::{check_design, rank, RankOptions, Silent};

use super::*;

const MC: MonteCarlo = MonteCarlo {
    seed: 5,
    samples: 300,
};

fn cheapest(path: &str, cat: &Catalog) -> (Requirement, mirrorpick::check::DesignSpec, f64, f64) {
    let req = load_example(&root().join(path), cat);
    let opts = RankOptions {
        top: 3,
        mc: MC,
        ..Default::default()
    };
    let run = rank(&req, cat, &opts, &Silent).unwrap();
    let (spec, ev) = run.ranked.first().expect("a feasible design").clone();
    assert!(ev.feasible());
    (req, spec, ev.cost, ev.figures.error_total)
}

#[test]
fn one_reference_with_four_outputs_costs_less_than_four_mirrors_at_the_same_accuracy() {
    let cat = default_catalog();
    let (four_req, four, four_cost, four_error) =
        cheapest("requirements-examples/led-string-sinks.yaml", &cat);
    let (one_req, one, one_cost, one_error) = cheapest(
        "requirements-examples/led-string-sinks-one-reference.yaml",
        &cat,
    );
    assert_eq!(four_req.quantity, 4);
    assert_eq!(one_req.outputs, 4);
    assert_eq!(one.shape.outputs, 4);
    // Both meet the same accuracy requirement (10 %) on their worst output.
    assert_eq!(four_req.accuracy, one_req.accuracy);
    assert!(four_error <= four_req.accuracy && one_error <= one_req.accuracy);
    let separate = four_cost * f64::from(four_req.quantity);
    println!(
        "four separate mirrors: {} at {separate:.3} (error {:.2} %); one reference with four outputs: {} at {one_cost:.3} (error {:.2} %)",
        four.topology.name(),
        100.0 * four_error,
        one.topology.name(),
        100.0 * one_error
    );
    assert!(
        one_cost < separate,
        "one reference {one_cost} against four mirrors {separate}"
    );
    // `check` agrees with the ranking on the chosen multi-output design.
    let r = check_design(&one_req, &cat, &one, MC, false).unwrap();
    assert!(r.pass);
}

#[test]
fn wilson_forms_are_left_out_of_multi_output_candidates() {
    let cat = default_catalog();
    let req = load_example(
        &root().join("requirements-examples/led-string-sinks-one-reference.yaml"),
        &cat,
    );
    let groups = mirrorpick::rank::enumerate(&req, &cat);
    assert!(!groups.is_empty());
    for g in &groups {
        assert!(g.topology.desc().fans_out, "{:?}", g.topology);
        assert!(g.specs.iter().all(|s| s.shape.outputs == 4));
    }
}

#[test]
fn integer_ratios_are_offered_as_area_ratios_where_an_array_holds_them() {
    use mirrorpick::model::{Area, Shape};
    let cat = default_catalog();
    let mut req = load_example(
        &root().join("requirements-examples/ltp-tail-sink.yaml"),
        &cat,
    );
    req.ratio = 4.0;
    let groups = mirrorpick::rank::enumerate(&req, &cat);
    let area: Vec<_> = groups
        .iter()
        .flat_map(|g| &g.specs)
        .filter(|s| s.shape.area != Area::Unit)
        .collect();
    assert!(
        !area.is_empty(),
        "a ratio of 4 is offered as four parallel devices"
    );
    for s in &area {
        assert_eq!(
            s.shape,
            Shape {
                outputs: 1,
                area: Area::Output(4)
            }
        );
        let class = cat.transistor(&s.pair).unwrap();
        assert!(class.devices_per_package >= 5, "{} holds 1 + 4", s.pair);
    }
    req.ratio = 0.25;
    let groups = mirrorpick::rank::enumerate(&req, &cat);
    assert!(groups
        .iter()
        .flat_map(|g| &g.specs)
        .any(|s| s.shape.area == Area::Input(4)));
}
