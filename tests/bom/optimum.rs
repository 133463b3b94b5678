//! Hand-made boards whose optimum is known by reasoning, each also checked against the
//! brute force.

use mirrorpick::bom::{optimise, BoardPlan, BoardProblem, BomItem, BomOutcome, Infeasibility};

use crate::brute_force;
use crate::fixtures::*;

fn solve(p: &BoardProblem) -> BoardPlan {
    match optimise(p).expect("valid problem") {
        BomOutcome::Optimal(plan) => {
            assert_consistent(p, &plan);
            assert_eq!(Some(plan.total_cost), brute_force::optimum(p));
            *plan
        }
        BomOutcome::Infeasible(why) => panic!("unexpectedly infeasible: {why}"),
    }
}

fn transistor_lines(plan: &BoardPlan) -> Vec<(String, u32)> {
    plan.bom
        .iter()
        .filter_map(|l| match &l.item {
            BomItem::Transistor { class, .. } => Some((class.clone(), l.qty_per_board)),
            BomItem::Resistor { .. } => None,
        })
        .collect()
}

fn two_simple_mirrors() -> BoardProblem {
    let both = || vec![design("npn-dual", 1, 0), design("npn-quad", 1, 0)];
    problem(vec![channel("a", 1, both()), channel("b", 1, both())])
}

#[test]
fn two_channels_share_one_quad_when_cheaper() {
    // One quad (0.75) holds both pairs; two duals cost 1.0.
    let plan = solve(&two_simple_mirrors());
    assert_eq!(transistor_lines(&plan), vec![("npn-quad".to_string(), 1)]);
    assert_eq!(plan.total_cost, 0.75);
    assert_eq!(plan.shared_packages.len(), 1);
    assert_eq!(plan.shared_packages[0].occupants, vec![(0, 1), (1, 1)]);
    // On its own each channel's cheapest design is a dual: 1.0 in all.
    assert_eq!(plan.baseline.total_cost, 1.0);
    assert_eq!(plan.saving(), 0.25);
}

#[test]
fn two_duals_when_the_quad_costs_more() {
    let mut p = two_simple_mirrors();
    p.transistors[2].unit_cost = 1.125;
    let plan = solve(&p);
    assert_eq!(transistor_lines(&plan), vec![("npn-dual".to_string(), 2)]);
    assert_eq!(plan.total_cost, 1.0);
    assert!(plan.shared_packages.is_empty());
}

#[test]
fn a_pair_never_splits_across_duals() {
    // A cascode in duals needs two duals (one per pair), never a pair made of the two
    // halves of different packages; together with a simple mirror that is three duals.
    let p = problem(vec![
        channel("cascode", 1, vec![design("npn-dual", 2, 0)]),
        channel("simple", 1, vec![design("npn-dual", 1, 0)]),
    ]);
    let plan = solve(&p);
    assert_eq!(transistor_lines(&plan), vec![("npn-dual".to_string(), 3)]);
}

#[test]
fn helper_takes_a_spare_device_before_a_single() {
    // The cascode in a 5-device array leaves one spare NPN: the Wilson's helper (its pair
    // in a dual) goes there and no single is bought.
    let p = problem(vec![
        channel("wilson", 1, vec![design("npn-dual", 1, 1)]),
        channel("cascode", 1, vec![design("npn-array5", 2, 0)]),
    ]);
    let plan = solve(&p);
    assert_eq!(
        transistor_lines(&plan),
        vec![("npn-dual".to_string(), 1), ("npn-array5".to_string(), 1)]
    );
    let helper = &plan.channels[0].copies[0].helpers[0];
    let cascode_pkg = &plan.channels[1].copies[0].matched[0].designator;
    assert_eq!(&helper.designator, cascode_pkg);
}

#[test]
fn helper_of_the_other_polarity_is_a_single() {
    // A PNP Wilson cannot use the NPN array's spare device.
    let p = problem(vec![
        channel("source", 1, vec![design("pnp-dual", 1, 1)]),
        channel("sink", 1, vec![design("npn-array5", 2, 0)]),
    ]);
    let plan = solve(&p);
    assert!(transistor_lines(&plan).contains(&("pnp-single".to_string(), 1)));
}

#[test]
fn wilson_kept_whole_in_a_quad() {
    // Two Wilsons in quads: each copy's three devices share one package, so two quads,
    // even though the two pairs alone would fit in one.
    let p = problem(vec![channel("w", 2, vec![design("npn-quad", 1, 1)])]);
    let plan = solve(&p);
    assert_eq!(transistor_lines(&plan), vec![("npn-quad".to_string(), 2)]);
}

#[test]
fn boards_multiply_parts_but_not_line_items() {
    let mut p = two_simple_mirrors();
    p.boards = 10;
    p.line_item_cost = 2.0;
    let plan = solve(&p);
    assert_eq!(plan.total_cost, 10.0 * 0.75 + 2.0);
    assert_eq!(plan.bom[0].qty_per_build, 10);
}

#[test]
fn line_item_cost_favours_fewer_distinct_parts() {
    // Channel a: a simple mirror with 1 % resistors of 100 ohm, or with 0.1 % ones of
    // 220 ohm. Channel b only has the 220 ohm 0.1 % option. Without a line-item cost a
    // takes the cheap resistors; with a large one both use the same resistor item.
    let a = vec![
        with_resistors(design("npn-dual", 1, 0), "res-1pc", 100.0, 2),
        with_resistors(design("npn-dual", 1, 0), "res-0p1pc", 220.0, 2),
    ];
    let b = vec![with_resistors(
        design("npn-dual", 1, 0),
        "res-0p1pc",
        220.0,
        2,
    )];
    let mut p = problem(vec![channel("a", 1, a), channel("b", 1, b)]);
    let plan = solve(&p);
    assert_eq!(plan.channels[0].option, 0);
    assert_eq!(plan.bom.len(), 3);
    p.line_item_cost = 4.0;
    let plan = solve(&p);
    assert_eq!(plan.channels[0].option, 1);
    assert_eq!(plan.bom.len(), 2);
}

#[test]
fn max_line_items_is_respected() {
    let a = vec![
        with_resistors(design("npn-dual", 1, 0), "res-1pc", 100.0, 2),
        with_resistors(design("npn-quad", 1, 0), "res-0p1pc", 220.0, 2),
    ];
    let b = vec![with_resistors(
        design("npn-quad", 1, 0),
        "res-0p1pc",
        220.0,
        2,
    )];
    let mut p = problem(vec![channel("a", 1, a), channel("b", 1, b)]);
    let free = solve(&p);
    p.max_line_items = Some(2);
    let limited = solve(&p);
    assert!(limited.bom.len() <= 2);
    assert!(limited.total_cost >= free.total_cost);
}

#[test]
fn unmeetable_limit_reports_the_smallest_feasible() {
    // Every board needs a transistor class and two distinct resistor items.
    let a = vec![with_resistors(
        design("npn-dual", 1, 0),
        "res-1pc",
        100.0,
        2,
    )];
    let b = vec![
        with_resistors(design("npn-dual", 1, 0), "res-1pc", 220.0, 2),
        with_resistors(design("npn-quad", 1, 0), "res-1pc", 470.0, 2),
    ];
    let mut p = problem(vec![channel("a", 1, a), channel("b", 1, b)]);
    p.max_line_items = Some(2);
    assert_eq!(brute_force::optimum(&p), None);
    match optimise(&p).unwrap() {
        BomOutcome::Infeasible(Infeasibility::LineItemLimit {
            limit,
            smallest_feasible,
        }) => {
            assert_eq!((limit, smallest_feasible), (2, 3));
        }
        other => panic!("expected a line-item infeasibility, got {other:?}"),
    }
}

#[test]
fn channel_without_candidates_is_named_with_its_reason() {
    let mut empty = channel("laser", 1, vec![]);
    empty.no_candidate_reason = Some("compliance voltage: best candidate needs 1.4 V".into());
    let p = problem(vec![
        channel("ok", 1, vec![design("npn-dual", 1, 0)]),
        empty,
    ]);
    match optimise(&p).unwrap() {
        BomOutcome::Infeasible(why @ Infeasibility::NoCandidates { .. }) => {
            let text = why.to_string();
            assert!(text.contains("`laser`"), "{text}");
            assert!(text.contains("compliance voltage"), "{text}");
            assert!(!text.contains("`ok`"), "{text}");
        }
        other => panic!("expected no-candidate infeasibility, got {other:?}"),
    }
}

#[test]
fn bad_input_is_an_error_naming_the_option() {
    let mut d = design("npn-dual", 1, 0);
    d.pair_class = "npn-dual-typo".into();
    let p = problem(vec![channel("a", 1, vec![d])]);
    let err = optimise(&p).unwrap_err().to_string();
    assert!(
        err.contains("npn-dual-typo") && err.contains("`a`"),
        "{err}"
    );

    let mut d = design("npn-dual", 1, 1);
    d.helper_single_class = Some("npn-dual".into());
    let p = problem(vec![channel("a", 1, vec![d])]);
    let err = optimise(&p).unwrap_err().to_string();
    assert!(err.contains("must be a single"), "{err}");
}

#[test]
fn identical_channels_are_solved_together_and_may_differ() {
    // Three identical channels: two share a quad, the third is cheaper in a dual.
    let opts = || vec![design("npn-dual", 1, 0), design("npn-quad", 1, 0)];
    let p = problem(vec![
        channel("a", 1, opts()),
        channel("b", 1, opts()),
        channel("c", 1, opts()),
    ]);
    let plan = solve(&p);
    assert_eq!(plan.model.channel_groups, 1);
    assert_eq!(plan.total_cost, 0.75 + 0.5);
}

#[test]
fn helper_of_the_wrong_polarity_is_rejected() {
    let mut d = design("npn-dual", 1, 1);
    d.helper_single_class = Some("pnp-single".into());
    let p = problem(vec![channel("a", 1, vec![d])]);
    let err = optimise(&p).unwrap_err().to_string();
    assert!(err.contains("pair's polarity"), "{err}");
}

#[test]
fn a_board_without_channels_costs_nothing() {
    let plan = solve(&problem(vec![]));
    assert!(plan.bom.is_empty());
    assert_eq!(plan.total_cost, 0.0);
}

#[test]
fn helper_only_takes_spares_of_the_classes_allowed() {
    // Same board as `helper_takes_a_spare_device_before_a_single`, but the Wilson's helper
    // was only checked as a spare of the matched dual's class: it becomes a single.
    let mut wilson = design("npn-dual", 1, 1);
    wilson.helper_spare_classes = Some(vec!["npn-dual".into()]);
    let p = problem(vec![
        channel("wilson", 1, vec![wilson]),
        channel("cascode", 1, vec![design("npn-array5", 2, 0)]),
    ]);
    let plan = solve(&p);
    assert!(transistor_lines(&plan).contains(&("npn-single".to_string(), 1)));
}

/// The dominated-value reduction of `bom::candidates` keeps the optimum: channels whose
/// feasible resistor ranges overlap collapse to the shared values, and the board costs
/// the same with and without the reduction (and the same as the brute force).
#[test]
fn dominated_resistor_values_are_dropped_without_losing_the_optimum() {
    use mirrorpick::bom::candidates::undominated_options;
    let range = |lo: usize, hi: usize, pair: &str| -> Vec<_> {
        [100.0, 110.0, 120.0, 130.0, 150.0, 160.0][lo..hi]
            .iter()
            .map(|&v| with_resistors(design(pair, 1, 0), "res-1pc", v, 2))
            .collect()
    };
    for line_item_cost in [0.0, 1.0, 10.0] {
        let mut a = range(0, 4, "npn-dual");
        // A ratio design with two values keeps 130 Ω in play for every channel.
        a.push(with_resistors(
            with_resistors(design("npn-dual", 1, 0), "res-1pc", 130.0, 1),
            "res-1pc",
            65.0,
            1,
        ));
        let channels = vec![
            channel("a", 1, a),
            channel("b", 2, range(2, 6, "npn-dual")),
            channel("c", 1, range(3, 5, "npn-dual")),
        ];
        let keep = undominated_options(&channels);
        let reduced: Vec<_> = channels
            .iter()
            .zip(&keep)
            .map(|(c, k)| {
                let mut c = c.clone();
                c.options = c
                    .options
                    .iter()
                    .zip(k)
                    .filter(|(_, &k)| k)
                    .map(|(o, _)| o.clone())
                    .collect();
                c
            })
            .collect();
        let kept: usize = keep.iter().flatten().filter(|&&k| k).count();
        assert!(kept < 15, "nothing was dropped: {kept} of 15 options kept");
        let mut full = problem(channels);
        full.line_item_cost = line_item_cost;
        let mut small = full.clone();
        small.channels = reduced;
        assert_eq!(solve(&small).total_cost, solve(&full).total_cost);
    }
}
