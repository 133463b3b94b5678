//! The default (pruning) search returns exactly the exhaustive search's top rows.

use mirrorpick::check::MonteCarlo;
use mirrorpick::rank::{rank, CandidateRow, Prefer, RankOptions, Silent};

use super::*;

fn top(
    req: &Requirement,
    cat: &Catalog,
    exhaustive: bool,
    n: usize,
    prefer: Prefer,
) -> (Vec<CandidateRow>, u64) {
    let opts = RankOptions {
        top: n,
        exhaustive,
        prefer,
        mc: MonteCarlo {
            seed: 1,
            samples: 100,
        },
        ..Default::default()
    };
    let r = rank(req, cat, &opts, &Silent).unwrap().report;
    (r.candidates, r.solves)
}

fn same_top(req: &Requirement, cat: &Catalog, n: usize, prefer: Prefer) {
    let (d, d_solves) = top(req, cat, false, n, prefer);
    let (e, e_solves) = top(req, cat, true, n, prefer);
    assert!(!d.is_empty(), "{}: no feasible design to compare", req.name);
    // Compared as JSON: missing figures are NaN in the rows (null in JSON).
    let json = |rows: &[CandidateRow]| serde_json::to_string(rows).unwrap();
    assert_eq!(
        json(&d),
        json(&e),
        "{}: default and exhaustive top {n} by {prefer:?} differ",
        req.name
    );
    assert!(
        d_solves < e_solves,
        "{}: {d_solves} vs {e_solves} solves",
        req.name
    );
}

#[test]
fn default_equals_exhaustive_on_a_narrowed_example() {
    // The long-tailed-pair tail with three classes and two topologies: small enough to
    // solve exhaustively on every test run, large enough to prune.
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
    for prefer in [Prefer::Cost, Prefer::Accuracy, Prefer::Balanced] {
        same_top(&req, &cat, 20, prefer);
    }
}

#[test]
#[ignore = "slow: solves every candidate of every shipped example (about three minutes in release)"]
fn default_equals_exhaustive_top_20_on_every_shipped_example() {
    let cat = default_catalog();
    for path in examples() {
        let req = load_example(&path, &cat);
        same_top(&req, &cat, 20, Prefer::Cost);
    }
}
