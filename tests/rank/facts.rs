//! Decisions that follow from published facts, on requirements written for these tests.

use mirrorpick::check::{CheckName, MonteCarlo};
use mirrorpick::model::{Series, Topology};
use mirrorpick::rank::{check_design, CheckReport};

use super::*;

fn check(req: &Requirement, cat: &Catalog, s: &DesignSpec) -> CheckReport {
    check_design(
        req,
        cat,
        s,
        MonteCarlo {
            seed: 1,
            samples: 200,
        },
        true,
    )
    .unwrap()
}

fn budget(r: &CheckReport, cause: &str, random: bool) -> f64 {
    let b = r.budget.as_ref().expect("budget");
    let lines = if random { &b.random } else { &b.systematic };
    lines.iter().find(|l| l.cause == cause).unwrap().error
}

#[test]
fn one_millivolt_offset_without_degeneration_cannot_hold_one_percent() {
    // Sedra & Smith, Microelectronic Circuits, current-mirror chapter: a V_BE offset dV
    // scales the output current by exp(dV/V_T), dI/I = dV/V_T, about 4 % per mV at room
    // temperature. At 3 sigma that is about 12 %, far outside 1 %.
    let cat = catalog(vec![npn("pair", 2, 200.0, None, 1e-3)], vec![]);
    let req = requirement(0.01);
    let r = check(&req, &cat, &spec(Topology::Simple, "pair", 0.0, None));
    let sigma = r.candidate.error_random_sigma;
    assert!((0.037..0.042).contains(&sigma), "random sigma {sigma}");
    let acc = r.candidate.check(CheckName::Accuracy).unwrap();
    assert!(!acc.pass);
    assert!(!r.pass);
}

#[test]
fn degeneration_divides_the_offset_term_and_adds_resistor_tolerance() {
    // Small-signal result (Sedra & Smith, current-mirror chapter; Gray, Hurst, Lewis &
    // Meyer, ch. 4): with emitter degeneration the V_BE-offset term becomes
    // dV / (V_T + I*R_E), and each resistor adds (dR/R) * I*R_E / (V_T + I*R_E).
    let cat = catalog(
        vec![npn("pair", 2, 200.0, None, 1e-3)],
        vec![resistor("r1", Series::E96, 0.01)],
    );
    let req = requirement(0.01);
    let re = 249.0;
    let r = check(&req, &cat, &spec(Topology::Simple, "pair", re, Some("r1")));
    let vt = mirrorpick::rank::thermal_voltage(ZERO_CELSIUS_K + 25.0);
    let ir = 1e-3 * re;
    let offset = budget(&r, "V_BE offset", true);
    let expected = 1e-3 / (vt + ir);
    assert!(
        (offset / expected - 1.0).abs() < 0.15,
        "{offset} vs {expected}"
    );
    // Two independent 1 % resistors, each +-3 sigma, in quadrature.
    let res = budget(&r, "resistor tolerance", true);
    let expected_r = 2f64.sqrt() * (0.01 / 3.0) * ir / (vt + ir);
    assert!(
        (res / expected_r - 1.0).abs() < 0.15,
        "{res} vs {expected_r}"
    );
    // The undegenerated offset term is about ten times larger.
    let plain = check(&req, &cat, &spec(Topology::Simple, "pair", 0.0, None));
    assert!(budget(&plain, "V_BE offset", true) > 8.0 * offset);
}

#[test]
fn wilson_beats_simple_on_base_current_error_by_about_beta() {
    // Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4: simple mirror
    // I_out/I_in = BF/(BF+2); Wilson 1 - 2/(BF^2 + 2 BF + 2).
    let bf = 100.0;
    let cat = catalog(
        vec![
            npn("pair", 2, bf, None, 1e-4),
            npn("single", 1, bf, None, 0.0),
        ],
        vec![],
    );
    let req = requirement(0.05);
    let simple = check(&req, &cat, &spec(Topology::Simple, "pair", 0.0, None));
    let wilson = check(&req, &cat, &spec(Topology::Wilson, "pair", 0.0, None));
    let es = budget(&simple, "base current", false);
    let ew = budget(&wilson, "base current", false);
    let expected_simple = bf / (bf + 2.0) - 1.0;
    assert!(
        (es / expected_simple - 1.0).abs() < 0.02,
        "{es} vs {expected_simple}"
    );
    let ratio = es.abs() / ew.abs();
    assert!(
        ratio > 0.5 * bf,
        "simple/wilson base-current error ratio {ratio}"
    );
}

#[test]
fn stacked_mirrors_cannot_comply_below_about_two_vbe() {
    // MODEL.md: compliance is the lowest V_out with V_CB >= 0 for every transistor. The
    // Wilson's and the cascode's output transistor sits on one V_BE, its base on two, so
    // they need about 2 V_BE (~1.3 V); the simple mirror needs one V_BE.
    let cat = catalog(
        vec![
            npn("pair", 2, 200.0, Some(100.0), 1e-4),
            npn("single", 1, 200.0, Some(100.0), 0.0),
        ],
        vec![],
    );
    let mut req = requirement(0.05);
    req.output_voltage_v = Range { min: 0.9, max: 5.0 };
    let simple = check(&req, &cat, &spec(Topology::Simple, "pair", 0.0, None));
    assert!(simple.candidate.check(CheckName::Compliance).unwrap().pass);
    assert!((0.5..0.8).contains(&simple.candidate.compliance_v));
    for t in [Topology::Wilson, Topology::Cascode] {
        let r = check(&req, &cat, &spec(t, "pair", 0.0, None));
        let c = r.candidate.check(CheckName::Compliance).unwrap();
        assert!(!c.pass, "{t:?} passes compliance at 0.9 V");
        assert!(
            (1.1..1.6).contains(&r.candidate.compliance_v),
            "{t:?}: {}",
            r.candidate.compliance_v
        );
    }
    // And the ranking keeps none of them.
    let run = mirrorpick::rank::rank(
        &req,
        &cat,
        &mirrorpick::rank::RankOptions {
            top: 50,
            ..Default::default()
        },
        &mirrorpick::rank::Silent,
    )
    .unwrap();
    assert!(!run.ranked.is_empty());
    assert!(run.ranked.iter().all(|(s, _)| !matches!(
        s.topology,
        Topology::Wilson | Topology::Cascode | Topology::Wilson4
    )));
}
