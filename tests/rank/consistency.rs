//! The ranking agrees with `check`, with itself across formats, and across runs.

use std::collections::BTreeSet;

use mirrorpick::check::MonteCarlo;
use mirrorpick::rank::{check_design, rank, RankOptions, Silent};
use mirrorpick::report::rank as render;
use mirrorpick::report::{Format, Style};

use mirrorpick::model::Series;

use super::*;

const MC: MonteCarlo = MonteCarlo {
    seed: 3,
    samples: 300,
};

fn ltp() -> (Catalog, Requirement) {
    let cat = default_catalog();
    let req = load_example(
        &root().join("requirements-examples/ltp-tail-sink.yaml"),
        &cat,
    );
    (cat, req)
}

#[test]
fn ranked_pass_check_and_rejected_fail_check_on_the_counted_check() {
    let (cat, req) = ltp();
    let opts = RankOptions {
        top: 5,
        mc: MC,
        ..Default::default()
    };
    let run = rank(&req, &cat, &opts, &Silent).unwrap();
    assert!(run.report.feasible >= 5);
    for (spec, _) in run.ranked.iter().take(5) {
        let r = check_design(&req, &cat, spec, MC, false).unwrap();
        assert!(r.pass, "ranked {spec:?} fails check");
    }
    // Every kind of rejection, and a spread of the rest.
    let mut seen = BTreeSet::new();
    let picked: Vec<_> = run
        .rejected
        .iter()
        .enumerate()
        .filter(|(i, (_, c))| seen.insert(*c) || i % 1500 == 0)
        .map(|(_, r)| r)
        .collect();
    assert!(seen.len() >= 3, "rejections by {seen:?}");
    for (spec, counted) in picked {
        let r = check_design(&req, &cat, spec, MC, false).unwrap();
        let c = r
            .candidate
            .check(*counted)
            .unwrap_or_else(|| panic!("{spec:?}: no {counted} check"));
        assert!(!c.pass, "{spec:?} counted under {counted} but passes it");
        assert!(!r.pass);
    }
}

#[test]
fn json_and_table_show_the_same_rows() {
    let (cat, req) = ltp();
    let opts = RankOptions {
        top: 6,
        mc: MC,
        ..Default::default()
    };
    let report = rank(&req, &cat, &opts, &Silent).unwrap().report;
    let mut json = Vec::new();
    render::write_rank(&mut json, &report, Format::Json, Style::default()).unwrap();
    let mut table = Vec::new();
    render::write_rank(&mut table, &report, Format::Table, Style::default()).unwrap();
    let table = String::from_utf8(table).unwrap();
    let v: serde_json::Value = serde_json::from_slice(&json).unwrap();
    for key in [
        "requirement",
        "candidate_space",
        "evaluated",
        "feasible",
        "feasible_at_least",
        "families",
        "every_value",
        "rejected_by",
        "seed",
        "samples",
        "candidates",
    ] {
        assert!(v.get(key).is_some(), "JSON lacks `{key}`");
    }
    let at_least = if v["feasible_at_least"].as_bool().unwrap() {
        "at least "
    } else {
        ""
    };
    assert!(table.contains(&format!(
        "{} candidates: {at_least}{} feasible in {at_least}{} families",
        v["candidate_space"], v["feasible"], v["families"]
    )));
    let rows = v["candidates"].as_array().unwrap();
    assert_eq!(rows.len(), 6);
    for row in rows {
        for key in [
            "rank",
            "topology",
            "part",
            "helper",
            "re1_ohm",
            "re2_ohm",
            "resistor",
            "cost",
            "error_systematic",
            "error_random_sigma",
            "error_total",
            "yield",
            "r_out_min_ohm",
            "compliance_v",
            "v_in_max_v",
            "governing_check",
            "pareto",
            "checks",
        ] {
            assert!(row.get(key).is_some(), "candidate lacks `{key}`");
        }
        let rank = row["rank"].as_u64().unwrap();
        let line = table
            .lines()
            .find(|l| {
                // The rank column is right-aligned (`│   2 ┆`, `│ 1 * ┆`).
                l.strip_prefix('│')
                    .is_some_and(|x| x.trim_start().starts_with(&format!("{rank} ")))
            })
            .unwrap_or_else(|| panic!("no table row {rank}"));
        assert!(line.contains(row["part"].as_str().unwrap()));
        assert!(line.contains(row["topology"].as_str().unwrap()));
        assert!(line.contains(&format!("{:.3}", row["cost"].as_f64().unwrap())));
        assert!(line.contains(row["governing_check"].as_str().unwrap()));
        let total = row["error_total"].as_f64().unwrap() * 100.0;
        let shown = if total >= 10.0 {
            format!("{total:.1} %")
        } else if total >= 1.0 {
            format!("{total:.2} %")
        } else {
            format!("{total:.3} %")
        };
        assert!(line.contains(&shown), "{line} lacks {shown}");
    }
}

#[test]
fn same_seed_same_numbers() {
    let cat = default_catalog();
    let req = load_example(
        &root().join("requirements-examples/sensor-excitation-source.yaml"),
        &cat,
    );
    let opts = RankOptions {
        top: 4,
        mc: MC,
        ..Default::default()
    };
    let a = rank(&req, &cat, &opts, &Silent).unwrap().report;
    let b = rank(&req, &cat, &opts, &Silent).unwrap().report;
    let json = |r| {
        let mut out = Vec::new();
        render::write_rank(&mut out, r, Format::Json, Style::default()).unwrap();
        out
    };
    assert_eq!(json(&a), json(&b));
    assert_eq!(a.seed, 3);
    assert_eq!(a.samples, 300);
}

#[test]
fn cheaper_alternatives_pass_check_and_cost_less() {
    let (cat, mut req) = ltp();
    req.topologies.allow = vec!["simple".into(), "wilson".into()];
    let reference = spec(
        mirrorpick::model::Topology::Wilson,
        "npn-dual-prematched",
        1000.0,
        Some("thick-film-1pct"),
    );
    let r = mirrorpick::rank::cheaper(&req, &cat, &reference, MC, false, &Silent).unwrap();
    assert!(r.reference_pass);
    assert!(!r.alternatives.is_empty());
    for a in &r.alternatives {
        assert!(a.saving > 0.0);
        assert!((a.saving - (r.reference.cost - a.candidate.cost)).abs() < 1e-12);
        let s = DesignSpec {
            shape: mirrorpick::model::Shape::SINGLE,
            topology: mirrorpick::model::Topology::from_name(a.candidate.topology).unwrap(),
            pair: a.candidate.part.clone(),
            helper: a.candidate.helper.clone(),
            re1_ohm: a.candidate.re1_ohm,
            re2_ohm: a.candidate.re2_ohm,
            resistor: a.candidate.resistor.clone(),
            r_ref_ohm: a.candidate.r_ref_ohm.unwrap_or(0.0),
            r_ref_resistor: a.candidate.r_ref_resistor.clone(),
            r_ref_pick: None,
        };
        assert!(
            check_design(&req, &cat, &s, MC, false).unwrap().pass,
            "{s:?}"
        );
    }
    // The cheapest feasible design has nothing cheaper that passes; the report names
    // the nearest cheaper design and a check it fails.
    let run = rank(
        &req,
        &cat,
        &RankOptions {
            top: 1,
            mc: MC,
            ..Default::default()
        },
        &Silent,
    )
    .unwrap();
    let (cheapest, _) = &run.ranked[0];
    let r = mirrorpick::rank::cheaper(&req, &cat, cheapest, MC, false, &Silent).unwrap();
    assert!(r.alternatives.is_empty());
    if let Some(m) = &r.nearest_failing {
        assert!(m.cost < r.reference.cost);
        let s = DesignSpec {
            shape: mirrorpick::model::Shape::SINGLE,
            topology: mirrorpick::model::Topology::from_name(m.topology).unwrap(),
            pair: m.part.clone(),
            helper: m.helper.clone(),
            re1_ohm: m.re1_ohm,
            re2_ohm: m.re2_ohm,
            resistor: m.resistor.clone(),
            r_ref_ohm: m.r_ref_ohm.unwrap_or(0.0),
            r_ref_resistor: m.r_ref_resistor.clone(),
            r_ref_pick: None,
        };
        let c = check_design(&req, &cat, &s, MC, false).unwrap();
        assert!(!c.candidate.check(m.failed_check).unwrap().pass);
        assert!(r.summary.contains(m.failed_check.as_str()));
    }
}

#[test]
fn first_order_and_re_solved_yield_agree_on_a_mid_yield_design() {
    // Same draws; the two differ only by the nonlinearity of the circuit in the
    // mismatch inputs, which is small at these sigmas.
    let cat = catalog(
        vec![npn("pair", 2, 200.0, None, 1e-3)],
        vec![resistor("r1", Series::E96, 0.01)],
    );
    let req = requirement(0.016);
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
    let r = check_design(&req, &cat, &s, mc, false).unwrap();
    let (lin, solved) = (r.candidate.yield_fraction, r.candidate.yield_solved);
    assert!((0.5..0.98).contains(&lin), "first-order yield {lin}");
    assert!((lin - solved).abs() < 0.04, "{lin} vs {solved}");
}
