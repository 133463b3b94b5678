//! Random small boards: the integer program's total equals the brute force's exactly.

use proptest::prelude::*;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;

use mirrorpick::bom::{optimise, BoardProblem, BomOutcome, DesignUsage};

use crate::brute_force;
use crate::fixtures::*;

const CLASSES: [&str; 6] = [
    "npn-single",
    "npn-dual",
    "npn-quad",
    "npn-array5",
    "pnp-single",
    "pnp-dual",
];

fn random_design(rng: &mut ChaCha8Rng) -> DesignUsage {
    let class = CLASSES[rng.gen_range(0..CLASSES.len())];
    let mut d = design(class, rng.gen_range(1..=2), rng.gen_range(0..=1));
    d.keep_together = rng.gen_bool(0.7);
    // Sometimes only some classes' spare devices may take the helper.
    if d.helpers > 0 && rng.gen_bool(0.3) {
        let same: Vec<&str> = CLASSES
            .iter()
            .copied()
            .filter(|c| c.starts_with(&class[..3]) && rng.gen_bool(0.5))
            .collect();
        d.helper_spare_classes = Some(same.into_iter().map(String::from).collect());
    }
    for _ in 0..rng.gen_range(0..=2) {
        let class = ["res-1pc", "res-0p1pc"][rng.gen_range(0..2)];
        let value = [100.0, 220.0, 470.0][rng.gen_range(0..3)];
        d = with_resistors(d, class, value, rng.gen_range(1..=2));
    }
    d.governing_margin = rng.gen_range(0..8) as f64 / 8.0;
    d
}

fn random_problem(seed: u64) -> BoardProblem {
    let mut rng = ChaCha8Rng::seed_from_u64(seed);
    let n = rng.gen_range(1..=4);
    let channels = (0..n)
        .map(|i| {
            let k = rng.gen_range(1..=if n == 4 { 2 } else { 3 });
            let count = rng.gen_range(1..=if n == 4 { 1 } else { 2 });
            channel(
                &format!("ch{i}"),
                count,
                (0..k).map(|_| random_design(&mut rng)).collect(),
            )
        })
        .collect();
    let mut p = problem(channels);
    // Random prices, multiples of 1/8 so sums are exact.
    for t in &mut p.transistors {
        t.unit_cost = rng.gen_range(1..=12) as f64 / 8.0;
    }
    for r in &mut p.resistors {
        r.unit_cost = rng.gen_range(0..=4) as f64 / 8.0;
    }
    p.boards = rng.gen_range(1..=3);
    p.line_item_cost = [0.0, 0.5, 2.0][rng.gen_range(0..3)];
    p.max_line_items = rng.gen_bool(0.4).then(|| rng.gen_range(2..=6));
    p
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(96))]

    #[test]
    fn integer_program_equals_brute_force(seed in any::<u64>()) {
        let p = random_problem(seed);
        let brute = brute_force::optimum(&p);
        match optimise(&p).unwrap() {
            BomOutcome::Optimal(plan) => {
                assert_consistent(&p, &plan);
                prop_assert_eq!(Some(plan.total_cost), brute);
            }
            BomOutcome::Infeasible(_) => prop_assert_eq!(brute, None),
        }
    }
}
