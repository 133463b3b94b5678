//! A small illustrative catalog and builders for designs, plus a consistency check
//! every plan in these tests must pass.

use std::collections::{BTreeMap, BTreeSet};

use mirrorpick::bom::{
    BoardPlan, BoardProblem, BomItem, ChannelOptions, DesignUsage, ResistorPart, ResistorUse,
    TransistorPart,
};
use mirrorpick::model::Polarity;

pub fn transistor(id: &str, polarity: Polarity, d: u32, cost: f64) -> TransistorPart {
    TransistorPart {
        id: id.into(),
        polarity,
        devices_per_package: d,
        package: format!("pkg{d}"),
        unit_cost: cost,
    }
}

/// Illustrative classes: NPN single, dual, quad, five-device array; PNP single, dual.
pub fn catalog() -> (Vec<TransistorPart>, Vec<ResistorPart>) {
    (
        vec![
            transistor("npn-single", Polarity::Npn, 1, 0.125),
            transistor("npn-dual", Polarity::Npn, 2, 0.5),
            transistor("npn-quad", Polarity::Npn, 4, 0.75),
            transistor("npn-array5", Polarity::Npn, 5, 1.0),
            transistor("pnp-single", Polarity::Pnp, 1, 0.25),
            transistor("pnp-dual", Polarity::Pnp, 2, 0.625),
        ],
        vec![
            ResistorPart {
                id: "res-1pc".into(),
                tolerance: 0.01,
                unit_cost: 0.125,
            },
            ResistorPart {
                id: "res-0p1pc".into(),
                tolerance: 0.001,
                unit_cost: 0.5,
            },
        ],
    )
}

pub fn design(pair_class: &str, pairs: u32, helpers: u32) -> DesignUsage {
    let helper_single_class = (helpers > 0).then(|| {
        if pair_class.starts_with("pnp") {
            "pnp-single".to_string()
        } else {
            "npn-single".to_string()
        }
    });
    let topology = match (pairs, helpers) {
        (1, 0) => "simple",
        (1, _) => "wilson",
        _ => "cascode",
    };
    DesignUsage {
        label: format!("{topology}, {pair_class}"),
        topology: topology.into(),
        pair_class: pair_class.into(),
        pairs,
        matched_devices: 2 * pairs,
        helpers,
        helper_single_class,
        helper_spare_classes: None,
        keep_together: true,
        resistors: vec![],
        r_ref: None,
        governing_check: "accuracy".into(),
        governing_margin: 0.25,
    }
}

pub fn with_resistors(mut d: DesignUsage, class: &str, value_ohm: f64, count: u32) -> DesignUsage {
    d.resistors.push(ResistorUse {
        class: class.into(),
        value_ohm,
        count,
    });
    d
}

pub fn channel(name: &str, count: u32, options: Vec<DesignUsage>) -> ChannelOptions {
    ChannelOptions {
        name: name.into(),
        count,
        options,
        no_candidate_reason: None,
    }
}

pub fn problem(channels: Vec<ChannelOptions>) -> BoardProblem {
    let (transistors, resistors) = catalog();
    BoardProblem {
        board: "test-board".into(),
        boards: 1,
        line_item_cost: 0.0,
        max_line_items: None,
        currency: "EUR".into(),
        transistors,
        resistors,
        channels,
    }
}

/// Everything a plan must satisfy whatever the optimum is: one design per channel, pairs
/// inside one package, no device used twice, the BOM counting exactly the packages
/// placed, costs adding up, the limit met.
pub fn assert_consistent(problem: &BoardProblem, plan: &BoardPlan) {
    assert_eq!(plan.channels.len(), problem.channels.len());
    let mut used: BTreeSet<(String, u32)> = BTreeSet::new();
    let class_of: BTreeMap<&str, &str> = plan
        .packages
        .iter()
        .map(|p| (p.designator.as_str(), p.class.as_str()))
        .collect();
    for (a, ch) in plan.channels.iter().zip(&problem.channels) {
        let o = &ch.options[a.option];
        assert_eq!(a.pair_class, o.pair_class);
        assert_eq!(a.copies.len() as u32, ch.count);
        let d = problem
            .transistors
            .iter()
            .find(|t| t.id == o.pair_class)
            .unwrap()
            .devices_per_package;
        for c in &a.copies {
            assert_eq!(c.matched.len() as u32, 2 * o.pairs, "{}", a.channel);
            assert_eq!(c.helpers.len() as u32, o.helpers, "{}", a.channel);
            for pair in c.matched.chunks(2) {
                assert_eq!(class_of[pair[0].designator.as_str()], o.pair_class);
                if d > 1 {
                    assert_eq!(pair[0].designator, pair[1].designator, "pair split");
                }
            }
            if o.keep_together && d >= 2 * o.pairs + o.helpers {
                let first = &c.matched[0].designator;
                assert!(c
                    .matched
                    .iter()
                    .chain(&c.helpers)
                    .all(|s| &s.designator == first));
            }
            for s in c.matched.iter().chain(&c.helpers) {
                assert!(
                    used.insert((s.designator.clone(), s.device)),
                    "device used twice"
                );
            }
            for h in &c.helpers {
                let class = class_of[h.designator.as_str()];
                let pol = |id: &str| {
                    problem
                        .transistors
                        .iter()
                        .find(|t| t.id == id)
                        .unwrap()
                        .polarity
                };
                assert_eq!(pol(class), pol(o.helper_single_class.as_deref().unwrap()));
                let in_own_block = o.keep_together && d >= 2 * o.pairs + o.helpers;
                if let (Some(allowed), false) = (&o.helper_spare_classes, in_own_block) {
                    let single = o.helper_single_class.as_deref().unwrap();
                    assert!(class == single || allowed.iter().any(|a| a == class));
                }
            }
        }
    }
    for p in &plan.packages {
        assert!(
            p.devices.iter().any(|d| d.is_some()),
            "empty package {}",
            p.designator
        );
    }
    let mut per_board = 0.0;
    for l in &plan.bom {
        if let BomItem::Transistor { class, .. } = &l.item {
            let placed = plan.packages.iter().filter(|p| &p.class == class).count();
            assert_eq!(placed as u32, l.qty_per_board);
        }
        assert_eq!(
            l.qty_per_build,
            l.qty_per_board as u64 * problem.boards as u64
        );
        per_board += l.qty_per_board as f64 * l.unit_cost;
    }
    assert_eq!(per_board, plan.parts_cost_per_board);
    assert_eq!(
        plan.total_cost,
        per_board * problem.boards as f64 + plan.bom.len() as f64 * problem.line_item_cost
    );
    if let Some(l) = problem.max_line_items {
        assert!(plan.bom.len() as u32 <= l);
    }
    if plan.baseline.within_line_item_limit {
        assert!(plan.total_cost <= plan.baseline.total_cost);
    }
}
