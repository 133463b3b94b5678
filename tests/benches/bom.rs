//! Board integer program at the size the bom command must handle: 100 channels with 30
//! candidate designs each (goal: under 2 s). The board is synthetic: an illustrative
//! catalog, and per channel a random mix of topologies, pair classes and emitter
//! resistors around one value, as a ranking of one requirement would give.

use criterion::{criterion_group, criterion_main, Criterion};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use mirrorpick::bom::{
    optimise, BoardProblem, BomOutcome, ChannelOptions, DesignUsage, ResistorPart, ResistorUse,
    TransistorPart,
};
use mirrorpick::model::Polarity;

const E24: [f64; 24] = [
    1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6,
    6.2, 6.8, 7.5, 8.2, 9.1,
];

fn part(id: &str, polarity: Polarity, d: u32, cost: f64) -> TransistorPart {
    TransistorPart {
        id: id.into(),
        polarity,
        devices_per_package: d,
        package: format!("pkg{d}"),
        unit_cost: cost,
    }
}

pub fn board(channels: usize, options: usize, seed: u64) -> BoardProblem {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let transistors = vec![
        part("npn-single", Polarity::Npn, 1, 0.02),
        part("npn-dual-general", Polarity::Npn, 2, 0.06),
        part("npn-dual-matched", Polarity::Npn, 2, 0.45),
        part("npn-quad-array", Polarity::Npn, 4, 0.55),
        part("npn-array5", Polarity::Npn, 5, 0.65),
        part("pnp-single", Polarity::Pnp, 1, 0.02),
        part("pnp-dual-general", Polarity::Pnp, 2, 0.07),
        part("pnp-dual-matched", Polarity::Pnp, 2, 0.50),
        part("pnp-quad-array", Polarity::Pnp, 4, 0.60),
    ];
    let resistors = vec![
        ResistorPart {
            id: "res-1pc".into(),
            tolerance: 0.01,
            unit_cost: 0.004,
        },
        ResistorPart {
            id: "res-0p1pc".into(),
            tolerance: 0.001,
            unit_cost: 0.09,
        },
    ];
    let topologies = [
        ("simple", 1, 0),
        ("beta-helper", 1, 1),
        ("wilson", 1, 1),
        ("wilson4", 2, 0),
        ("cascode", 2, 0),
    ];
    let channels = (0..channels)
        .map(|c| {
            let npn = rng.gen_bool(0.6);
            let classes: Vec<&TransistorPart> = transistors
                .iter()
                .filter(|t| (t.polarity == Polarity::Npn) == npn && t.devices_per_package > 1)
                .collect();
            let single = if npn { "npn-single" } else { "pnp-single" };
            let decade = 10f64.powi(rng.gen_range(1..4));
            let centre = rng.gen_range(0..E24.len() - 4);
            let opts = (0..options)
                .map(|k| {
                    let (topology, pairs, helpers) = topologies[rng.gen_range(0..topologies.len())];
                    let class = classes[rng.gen_range(0..classes.len())];
                    let resistors = if rng.gen_bool(0.8) {
                        let v = E24[centre + rng.gen_range(0..4)] * decade;
                        let grade = if rng.gen_bool(0.7) {
                            "res-1pc"
                        } else {
                            "res-0p1pc"
                        };
                        vec![ResistorUse {
                            class: grade.into(),
                            value_ohm: v,
                            count: 2,
                        }]
                    } else {
                        vec![]
                    };
                    DesignUsage {
                        label: format!("option {k}"),
                        topology: topology.into(),
                        pair_class: class.id.clone(),
                        pairs,
                        matched_devices: 2 * pairs,
                        helpers,
                        helper_single_class: (helpers > 0).then(|| single.to_string()),
                        helper_spare_classes: None,
                        keep_together: true,
                        resistors,
                        r_ref: None,
                        governing_check: "accuracy".into(),
                        governing_margin: rng.gen_range(0.0..0.5),
                    }
                })
                .collect();
            ChannelOptions {
                name: format!("ch{c}"),
                count: rng.gen_range(1..=4),
                options: opts,
                no_candidate_reason: None,
            }
        })
        .collect();
    BoardProblem {
        board: "synthetic".into(),
        boards: 500,
        line_item_cost: 25.0,
        max_line_items: None,
        currency: "EUR".into(),
        transistors,
        resistors,
        channels,
    }
}

fn bench(c: &mut Criterion) {
    let p = board(100, 30, 7);
    match optimise(&p).expect("valid board") {
        BomOutcome::Optimal(plan) => eprintln!(
            "100 x 30 board: total {:.2}, baseline {:.2}, {} line items, options kept {} of {}, {} variables, {} constraints",
            plan.total_cost,
            plan.baseline.total_cost,
            plan.bom.len(),
            plan.model.options_kept,
            plan.model.options_given,
            plan.model.variables,
            plan.model.constraints
        ),
        BomOutcome::Infeasible(why) => panic!("{why}"),
    }
    c.bench_function("bom 100 channels x 30 candidates", |b| {
        b.iter(|| optimise(std::hint::black_box(&p)).unwrap())
    });
}

/// A limit that binds hard: the free optimum uses 26 line items.
const LIMIT: u32 = 14;

fn bench_limited(c: &mut Criterion) {
    let mut p = board(100, 30, 7);
    p.max_line_items = Some(LIMIT);
    match optimise(&p).expect("valid board") {
        BomOutcome::Optimal(plan) => eprintln!(
            "100 x 30 board, at most {LIMIT} line items: total {:.2}, {} line items",
            plan.total_cost,
            plan.bom.len()
        ),
        BomOutcome::Infeasible(why) => eprintln!("{why}"),
    }
    c.bench_function("bom 100 channels x 30 candidates, line-item limit", |b| {
        b.iter(|| optimise(std::hint::black_box(&p)).unwrap())
    });
}

criterion_group!(benches, bench, bench_limited);
criterion_main!(benches);
