//! `min_yield` is decided on the re-solved yield (every sampled build solved at every
//! corner, MODEL.md "accuracy verdict"); the first-order estimate only skips re-solving
//! far from the limit (`check::YIELD_SCREEN_BAND`), and that skip changes no verdict.

use std::sync::atomic::AtomicU64;

use mirrorpick::check::{resolve, CheckName, Depth, Evaluator, MonteCarlo, YIELD_SCREEN_BAND};
use mirrorpick::model::Series;
use mirrorpick::rank::{check_design, enumerate};

use super::*;

#[test]
#[ignore = "known gap: after the programming-resistor merge the first-order and re-solved yields of this design coincide (0.855), so the test's premise fails; it needs a design whose estimates differ"]
fn yield_check_uses_the_re_solved_yield_near_the_limit() {
    // The mid-yield design of `consistency.rs`: first-order and re-solved yields differ
    // by a few points; a limit between them must follow the re-solved one.
    let cat = catalog(
        vec![npn("pair", 2, 200.0, None, 1e-3)],
        vec![resistor("r1", Series::E96, 0.01)],
    );
    let mut req = requirement(0.016);
    let s = spec(
        mirrorpick::model::Topology::Simple,
        "pair",
        249.0,
        Some("r1"),
    );
    let mc = MonteCarlo {
        seed: 11,
        samples: 1000,
    };
    let free = check_design(&req, &cat, &s, mc, false).unwrap();
    let (lin, solved) = (free.candidate.yield_fraction, free.candidate.yield_solved);
    assert_ne!(
        lin, solved,
        "the two estimates should differ on this design"
    );
    req.min_yield = Some(0.5 * (lin + solved));
    let r = check_design(&req, &cat, &s, mc, false).unwrap();
    let y = r.candidate.check(CheckName::Yield).expect("yield check");
    assert_eq!(y.value, solved);
    assert_eq!(y.pass, solved >= 0.5 * (lin + solved));
    assert!(y.detail.contains("re-solved"), "{}", y.detail);
}

#[test]
#[ignore = "evaluates thousands of candidates and re-solves yields; run optimised (.ci/run)"]
fn skipping_far_designs_changes_no_verdict_on_the_shipped_example() {
    // The shipped example with `min_yield` (99 %): every candidate whose first-order
    // yield lies within 10 points outside the band is re-solved; its verdict must be the
    // one the first-order estimate gave (fail: below the limit by more than the band).
    let cat = default_catalog();
    let req = load_example(
        &root().join("requirements-examples/photodiode-bias-source.yaml"),
        &cat,
    );
    let min = req.min_yield.expect("the example sets min_yield");
    let mc = MonteCarlo::default();
    let solves = AtomicU64::new(0);
    let mut tried = 0;
    for g in enumerate(&req, &cat) {
        for s in g.specs.iter().step_by(7) {
            let Ok(d) = resolve(&cat, s) else { continue };
            let e = Evaluator::new(&req, &d, &solves);
            let ev = e.evaluate(Depth::Verdict, mc);
            let y1 = ev.figures.yield_fraction;
            let gap = (y1 - min).abs();
            if !(gap > YIELD_SCREEN_BAND && gap <= YIELD_SCREEN_BAND + 0.10) {
                continue;
            }
            let solved = e.solved_yield(mc);
            assert_eq!(
                solved >= min,
                y1 >= min,
                "{s:?}: first-order {y1}, re-solved {solved}, limit {min}"
            );
            tried += 1;
        }
    }
    assert!(tried >= 5, "only {tried} designs near the band");
}
