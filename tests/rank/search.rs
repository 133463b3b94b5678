//! The default (pruning) search returns exactly the exhaustive search's top rows, one
//! per design family by default and every resistor value with `every_value`.

use mirrorpick::check::MonteCarlo;
use mirrorpick::rank::{
    bare_family, enumerate, family, first_per, listed_families, rank, rank_verdicts, search,
    worth_listing, CandidateRow, Goal, Prefer, RankOptions, RankRun, Silent,
};

use super::*;

fn options(exhaustive: bool, n: usize, prefer: Prefer, every_value: bool) -> RankOptions {
    RankOptions {
        top: n,
        exhaustive,
        prefer,
        every_value,
        mc: MC,
        ..Default::default()
    }
}

const MC: MonteCarlo = MonteCarlo {
    seed: 1,
    samples: 100,
};

fn rows(run: RankRun) -> (Vec<CandidateRow>, u64) {
    (run.report.candidates, run.report.solves)
}

fn top(
    req: &Requirement,
    cat: &Catalog,
    exhaustive: bool,
    n: usize,
    prefer: Prefer,
    every_value: bool,
) -> (Vec<CandidateRow>, u64) {
    let opts = options(exhaustive, n, prefer, every_value);
    rows(rank(req, cat, &opts, &Silent).unwrap())
}

fn row_family(r: &CandidateRow) -> (&str, &str, Option<&str>, Option<&str>) {
    (
        r.topology,
        &r.part,
        r.helper.as_deref(),
        r.resistor.as_deref(),
    )
}

fn same_top(req: &Requirement, cat: &Catalog, n: usize, prefer: Prefer, every_value: bool) {
    let exhaustive = top(req, cat, true, n, prefer, every_value);
    same_as(req, cat, n, prefer, every_value, exhaustive);
}

/// The default search's top `n` rows against the exhaustive search's (`exhaustive`: its
/// rows and solver calls).
fn same_as(
    req: &Requirement,
    cat: &Catalog,
    n: usize,
    prefer: Prefer,
    every_value: bool,
    exhaustive: (Vec<CandidateRow>, u64),
) {
    let (d, d_solves) = top(req, cat, false, n, prefer, every_value);
    let (e, e_solves) = exhaustive;
    assert!(!d.is_empty(), "{}: no feasible design to compare", req.name);
    if !every_value {
        for (i, a) in d.iter().enumerate() {
            for b in &d[..i] {
                assert_ne!(
                    row_family(a),
                    row_family(b),
                    "{}: two rows of one family by {prefer:?}",
                    req.name
                );
            }
        }
    }
    // Compared as JSON: missing figures are NaN in the rows (null in JSON).
    let json = |rows: &[CandidateRow]| serde_json::to_string(rows).unwrap();
    assert_eq!(
        json(&d),
        json(&e),
        "{}: default and exhaustive top {n} by {prefer:?} (every value: {every_value}) differ",
        req.name
    );
    assert!(
        d_solves < e_solves,
        "{}: {d_solves} vs {e_solves} solves",
        req.name
    );
}

/// The long-tailed-pair tail with three classes and two topologies: small enough to
/// solve exhaustively on every test run, large enough to prune.
fn narrowed() -> (Catalog, Requirement) {
    let cat = default_catalog();
    let mut req = load_example(
        &root().join("requirements-examples/ltp-tail-sink.yaml"),
        &cat,
    );
    req.classes.allow = vec![
        "npn-dual-general".into(),
        "npn-single-general".into(),
        "thick-film-1pct".into(),
    ];
    req.topologies.allow = vec!["simple".into(), "wilson".into()];
    (cat, req)
}

/// A 100 V, 2 mA sink on a general-purpose class (VCEO 45 V, 36 V derated), the
/// high-voltage one (160 V) and a general-purpose helper: the rating screen's ground.
fn high_voltage() -> (Catalog, Requirement) {
    let cat = default_catalog();
    let text = "name: 100 V sink, narrowed
kind: sink
supply: 110 V
input_current: {min: 2 mA, max: 2 mA}
output_voltage: {min: 5 V, max: 100 V}
ambient: {min: 0 °C, max: 50 °C}
accuracy: 5 %
load: general
allow: [simple, beta-helper, npn-dual-general, npn-dual-highvoltage, npn-single-general,
  thick-film-1pct]
";
    let req = mirrorpick::input::load_requirement("hv.yaml", text, Some(&cat)).unwrap();
    (cat, req)
}

/// The rating screen rejects only designs the exhaustive search finds infeasible, rejects
/// some (the general-purpose class cannot stand 100 V), and leaves the rows exact.
#[test]
fn the_rating_screen_rejects_only_infeasible_designs_and_the_rows_stay_exact() {
    use mirrorpick::check::CheckName;
    let (cat, req) = high_voltage();
    let groups = enumerate(&req, &cat);
    let all = search(&req, &cat, &groups, true, Goal::All, MC, &Silent);
    let solves = std::sync::atomic::AtomicU64::new(0);
    let (rejected, _) = mirrorpick::rank::screen_only(&req, &cat, &groups, &solves);
    let mut by_rating = 0;
    for (spec, check) in &rejected {
        assert!(
            !all.feasible.iter().any(|(f, _)| f == spec),
            "{spec:?} screened out under {check:?} but feasible"
        );
        by_rating += usize::from(matches!(
            check,
            CheckName::Vceo | CheckName::IcMax | CheckName::Dissipation | CheckName::ThermalRunaway
        ));
    }
    assert!(by_rating > 0, "no design rejected by the rating screen");
    same_top(&req, &cat, 20, Prefer::Cost, false);
}

#[test]
fn default_equals_exhaustive_on_a_narrowed_example() {
    let (cat, req) = narrowed();
    for prefer in [Prefer::Cost, Prefer::Accuracy, Prefer::Balanced] {
        same_top(&req, &cat, 20, prefer, false);
        same_top(&req, &cat, 20, prefer, true);
    }
}

#[test]
fn family_rows_are_each_familys_best_and_every_value_lists_every_row() {
    let (cat, req) = narrowed();
    for prefer in [Prefer::Cost, Prefer::Accuracy] {
        let opts = RankOptions {
            top: 20,
            exhaustive: true,
            prefer,
            mc: MC,
            explain: Some(2),
            ..Default::default()
        };
        let run = rank(&req, &cat, &opts, &Silent).unwrap();
        let key = |s: &mirrorpick::check::DesignSpec| {
            (
                s.topology.name(),
                s.pair.clone(),
                s.helper.clone(),
                s.resistor.clone(),
                s.re1_ohm,
                s.re2_ohm,
            )
        };
        let row_key = |r: &CandidateRow| {
            (
                r.topology,
                r.part.clone(),
                r.helper.clone(),
                r.resistor.clone(),
                r.re1_ohm,
                r.re2_ohm,
            )
        };
        // Default: the first row of each listed family in the full ranking, in its order.
        let firsts = first_per(&run.ranked, |(s, _)| family(s));
        assert_eq!(run.report.families, firsts.len());
        let bests: Vec<_> = listed_families(&run.ranked, &firsts)
            .into_iter()
            .map(|i| key(&run.ranked[i].0))
            .collect();
        assert!(bests.len() >= 2, "{prefer:?}: {} families", bests.len());
        let shown: Vec<_> = run.report.candidates.iter().map(row_key).collect();
        assert_eq!(shown, bests[..shown.len().min(20)].to_vec(), "{prefer:?}");
        assert_eq!(shown.len(), bests.len().min(20));
        // --explain counts displayed rows.
        let explained = &run.report.explain.as_ref().unwrap().candidate;
        assert_eq!(row_key(explained), shown[1]);
        assert_eq!(explained.rank, Some(2));
        // Every value: the full ranking's first rows, several of one family.
        let every = RankOptions {
            every_value: true,
            ..opts
        };
        let run_every = rank(&req, &cat, &every, &Silent).unwrap();
        let all: Vec<_> = run_every.report.candidates.iter().map(row_key).collect();
        let expected: Vec<_> = run.ranked.iter().take(20).map(|(s, _)| key(s)).collect();
        assert_eq!(all, expected, "{prefer:?}");
        assert!(
            first_per(&run_every.report.candidates, |r| {
                (
                    r.topology,
                    r.part.clone(),
                    r.helper.clone(),
                    r.resistor.clone(),
                )
            })
            .len()
                < all.len(),
            "{prefer:?}: every value shows no family twice"
        );
        assert!(run_every.report.every_value && !run.report.every_value);
    }
}

#[test]
#[ignore = "slow: solves every candidate of every shipped example (verified once per example for both views; minutes in release)"]
fn default_equals_exhaustive_top_20_on_every_shipped_example() {
    let cat = default_catalog();
    for path in examples() {
        let req = load_example(&path, &cat);
        // One exhaustive verification serves both views: the search is the same, only
        // the rows listed differ.
        let all = search(
            &req,
            &cat,
            &enumerate(&req, &cat),
            true,
            Goal::All,
            MC,
            &Silent,
        );
        for every_value in [false, true] {
            let opts = options(true, 20, Prefer::Cost, every_value);
            let exhaustive = rows(rank_verdicts(&req, &cat, &opts, all.clone()).unwrap());
            same_as(&req, &cat, 20, Prefer::Cost, every_value, exhaustive);
        }
    }
}

/// Issue 17: a degenerated row is listed only when it beats its bare design on cost or by
/// a tenth of the error, and the rule never changes which design is first.
#[test]
fn degenerated_rows_are_listed_only_when_worth_it_and_the_first_row_stays() {
    let (cat, tail) = narrowed();
    // The expo converter's Wilson and cascode with a sloppy and a precise resistor class:
    // token resistors that change the error by less than a tenth.
    let mut expo = load_example(
        &root().join("requirements-examples/expo-converter-sink.yaml"),
        &cat,
    );
    expo.classes.allow = vec![
        "npn-pair-monolithic".into(),
        "thick-film-5pct".into(),
        "thin-film-0p1pct".into(),
    ];
    expo.topologies.allow = vec!["wilson4".into(), "cascode".into()];
    let mut hidden = 0;
    for (req, prefer) in [
        (&tail, Prefer::Cost),
        (&tail, Prefer::Accuracy),
        (&expo, Prefer::Cost),
        (&expo, Prefer::Accuracy),
        (&expo, Prefer::Balanced),
    ] {
        let opts = RankOptions {
            top: 50,
            exhaustive: true,
            prefer,
            mc: MC,
            ..Default::default()
        };
        let run = rank(req, &cat, &opts, &Silent).unwrap();
        let firsts = first_per(&run.ranked, |(s, _)| family(s));
        // The first row is the ranking's first design, with or without the rule.
        let first = &run.report.candidates[0];
        let (s0, _) = &run.ranked[0];
        assert_eq!(
            (first.topology, &first.part, first.re1_ohm, first.re2_ohm),
            (s0.topology.name(), &s0.pair, s0.re1_ohm, s0.re2_ohm),
            "{prefer:?}"
        );
        for &i in &firsts[1..] {
            let (s, e) = &run.ranked[i];
            let bare = bare_family(s).and_then(|k| {
                firsts
                    .iter()
                    .map(|&j| &run.ranked[j])
                    .find(|(b, _)| family(b) == k)
            });
            let shown = run.report.candidates.iter().any(|r| {
                r.topology == s.topology.name()
                    && r.part == s.pair
                    && r.resistor == s.resistor
                    && r.re1_ohm == s.re1_ohm
            });
            match bare {
                Some((_, b)) => {
                    let worth = worth_listing(
                        (e.cost, e.figures.error_total),
                        (b.cost, b.figures.error_total),
                    );
                    assert_eq!(shown, worth, "{prefer:?}: {s:?}");
                    hidden += usize::from(!worth);
                    if worth {
                        assert!(
                            e.cost < b.cost || e.figures.error_total <= 0.9 * b.figures.error_total
                        );
                    }
                }
                None => assert!(shown, "{prefer:?}: {s:?} has no feasible bare design"),
            }
        }
    }
    assert!(hidden > 0, "the examples hide no row, so test nothing");
}

/// The 5 V logic-rail sink (programmed by R_ref) narrowed to two pair classes: the simple
/// mirror is feasible; a Wilson's two V_BE drift, about -2 x dV_BE/dT / (5 V - 2 V_BE)
/// (near 1000 ppm/K), breaks `max_tempco` at every resistor value. The default search
/// rejects those groups whole from their two ends (`search`'s tempco screen): every
/// candidate it counts under tempco does fail tempco when verified, and the rows equal
/// the exhaustive search's.
#[test]
fn a_programmed_wilson_fails_tempco_whole_and_the_rows_stay_exact() {
    let cat = default_catalog();
    let mut req = load_example(
        &root().join("requirements-examples/logic-rail-programmed-sink.yaml"),
        &cat,
    );
    // The single class is the Wilson's helper.
    req.classes.allow = vec![
        "npn-dual-general".into(),
        "npn-single-general".into(),
        "thin-film-0p1pct".into(),
    ];
    same_top(&req, &cat, 20, Prefer::Cost, false);
    let v = search(
        &req,
        &cat,
        &enumerate(&req, &cat),
        false,
        Goal::Cheapest(20, mirrorpick::rank::Unit::Families),
        MC,
        &Silent,
    );
    let by_tempco: Vec<_> = v
        .rejected
        .iter()
        .filter(|(_, c)| *c == mirrorpick::check::CheckName::Tempco)
        .map(|(s, _)| s)
        .collect();
    assert!(
        by_tempco
            .iter()
            .filter(|s| s.topology.name() == "wilson" && s.resistor.is_some())
            .count()
            > 100,
        "{} rejected under tempco",
        by_tempco.len()
    );
    let solves = std::sync::atomic::AtomicU64::new(0);
    for s in by_tempco.iter().step_by(7) {
        let (_, ev) = mirrorpick::check::verify(
            &req,
            &cat,
            s,
            mirrorpick::check::Depth::Verdict,
            MC,
            &solves,
        )
        .unwrap();
        let t = ev.check(mirrorpick::check::CheckName::Tempco).unwrap();
        assert!(!t.pass, "{s:?}: tempco {}", t.value);
    }
    // The Wilson groups cost a few probes each, not a verification per candidate.
    assert!(
        !v.feasible
            .iter()
            .any(|(s, _)| s.topology.name() == "wilson"),
        "a Wilson from 5 V meets 600 ppm/K"
    );
}
