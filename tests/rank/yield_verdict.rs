//! `min_yield` is decided on the re-solved yield (every sampled build solved at every
//! corner, MODEL.md "accuracy verdict"); the first-order estimate only skips re-solving
//! far from the limit (`check::YIELD_SCREEN_BAND`), and that skip changes no verdict.

use std::sync::atomic::AtomicU64;

use mirrorpick::check::{
    first_failure, resolve, CheckName, Depth, Evaluator, MonteCarlo, YIELD_SCREEN_BAND,
};
use mirrorpick::model::{NoiseBand, NoiseLimit, Range, Series, Thermal, Topology};
use mirrorpick::rank::{check_design, enumerate};

use super::*;

/// A made-up demo class with a wide V_BE offset (3 mV sigma), a simple mirror of it
/// without emitter resistors, and a thousand builds.
fn wide_offset_pair() -> (Catalog, DesignSpec, MonteCarlo) {
    let cat = catalog(
        vec![npn("pair", 2, 200.0, None, 3e-3)],
        vec![resistor("r1", Series::E96, 0.01)],
    );
    let mc = MonteCarlo {
        seed: 11,
        samples: 1000,
    };
    (cat, spec(Topology::Simple, "pair", 0.0, None), mc)
}

#[test]
fn yield_check_uses_the_re_solved_yield_near_the_limit() {
    // A made-up demo class with a wide V_BE offset (3 mV sigma) and no emitter
    // resistors: the output current goes as exp(dvbe / V_T), so the first-order yield,
    // which propagates the +1 sigma secant linearly, and the re-solved one differ by a few
    // points at a limit a few sigma wide. A limit between them must follow the
    // re-solved one.
    let (cat, s, mc) = wide_offset_pair();
    let mut req = requirement(0.15);
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
fn a_screen_gives_no_re_solved_yield_to_a_design_that_already_failed() {
    // The design of the test above, within a wider accuracy limit, with `min_yield` at
    // its own first-order yield (so the yield would be re-solved) and a noise limit it
    // cannot meet: the screen rejects it under noise without re-solving a build; the verdict depth re-solves them all
    // and fails it too, so the screen's skip changes no verdict.
    let (cat, s, mc) = wide_offset_pair();
    let mut req = requirement(0.5);
    let lin = check_design(&req, &cat, &s, mc, false)
        .unwrap()
        .candidate
        .yield_fraction;
    req.min_yield = Some(lin);
    req.max_noise = Some(NoiseLimit {
        density_a_per_rthz: 1e-18,
        band: NoiseBand::White,
    });
    let d = resolve(&cat, &s).unwrap();
    let (screened, judged) = (AtomicU64::new(0), AtomicU64::new(0));
    let screen = Evaluator::new(&req, &d, &screened).evaluate(Depth::Screen, mc);
    let verdict = Evaluator::new(&req, &d, &judged).evaluate(Depth::Verdict, mc);
    assert_eq!(first_failure(&screen.checks), Some(CheckName::Noise));
    assert!(screen.checks.iter().all(|c| c.name != CheckName::Yield));
    assert!(first_failure(&verdict.checks).is_some());
    let (screened, judged) = (screened.into_inner(), judged.into_inner());
    assert!(
        judged >= screened + u64::from(mc.samples),
        "screen {screened} solves, verdict {judged}"
    );
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

/// A sampled build of the re-solved yield that runs away is named (issue: name the build
/// in which it ran away: nominal, budget build, yield sample): the design fails under
/// `thermal-runaway` "in the yield sample k of N", rather than the build being counted
/// out of spec without a word.
#[test]
fn a_yield_sample_that_runs_away_is_named() {
    // The output device of this dual heats alone (no mutual coupling): its power raises
    // its own current, and above some V_out the thermal loop has no fixed point. A
    // positive V_BE offset of Q2 (the only mismatch drawn) raises its current, so near
    // that voltage the builds with the larger offsets run away first.
    let mut hot = npn("hot", 2, 200.0, Some(100.0), 3e-3);
    hot.thermal = Thermal {
        theta_self_k_per_w: 150.0,
        theta_mutual_k_per_w: 0.0,
    };
    let cat = catalog(vec![hot], vec![resistor("r1", Series::E96, 0.01)]);
    let s = spec(Topology::Simple, "hot", 0.0, None);
    let d = resolve(&cat, &s).unwrap();
    let solves = AtomicU64::new(0);
    let req_at = |v_max: f64| {
        let mut r = requirement(0.5);
        r.input_current_a = Range {
            min: 5e-3,
            max: 5e-3,
        };
        r.output_voltage_v.max = v_max;
        r.supply_v = v_max;
        r
    };
    let mc = MonteCarlo {
        seed: 5,
        samples: 200,
    };
    // Nominal design and error-budget builds (no yield without `min_yield`).
    let runs_away = |v_max: f64| {
        let req = req_at(v_max);
        Evaluator::new(&req, &d, &solves)
            .evaluate(Depth::Verdict, mc)
            .checks
            .iter()
            .any(|c| c.name == CheckName::ThermalRunaway)
    };
    let (mut lo, mut hi) = (3.0, 200.0);
    assert!(!runs_away(lo) && runs_away(hi));
    while hi - lo > 1e-6 * hi {
        let mid = 0.5 * (lo + hi);
        if runs_away(mid) {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    // Just below the voltage where the +1 sigma budget build runs away: every build the
    // accuracy verdict needs solves, and the first-order yield exists.
    let mut req = req_at(lo);
    let first = Evaluator::new(&req, &d, &solves).evaluate(Depth::Full, mc);
    assert!(
        !first
            .checks
            .iter()
            .any(|c| c.name == CheckName::ThermalRunaway),
        "{:?}",
        first.checks
    );
    let y1 = first.figures.yield_fraction;
    assert!(y1.is_finite(), "{:?}", first.figures);
    // A limit at the first-order yield: the verdict re-solves every sampled build.
    req.min_yield = Some(y1);
    let ev = Evaluator::new(&req, &d, &solves).evaluate(Depth::Verdict, mc);
    let runaway = ev
        .checks
        .iter()
        .find(|c| c.name == CheckName::ThermalRunaway)
        .expect("a yield sample runs away");
    assert!(!runaway.pass);
    assert!(
        runaway.detail.contains("yield sample ") && runaway.detail.contains(" of 200 (seed 5"),
        "{}",
        runaway.detail
    );
    assert!(
        runaway.detail.contains("thermal runaway"),
        "{}",
        runaway.detail
    );
    // The runaway builds still count out of spec in the figure.
    assert!(ev.figures.yield_solved < 1.0, "{:?}", ev.figures);
}
