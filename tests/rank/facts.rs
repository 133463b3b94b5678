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
fn compliance_is_min_vce_above_what_the_output_transistor_stands_on() {
    // MODEL.md: compliance is the lowest V_out at which every transistor keeps
    // V_CE >= min_vce (default 0.3 V: common practice, no source) at I_in max, every
    // ambient. The simple mirror's output transistor stands on the rail (plus I RE2 with
    // degeneration); the Wilson's and the cascode's stand on one V_BE (about 0.65 V at
    // 1 mA with IS 1e-14 A, Sedra & Smith), so they need about V_BE + min_vce.
    let cat = catalog(
        vec![
            npn("pair", 2, 200.0, Some(100.0), 1e-4),
            npn("single", 1, 200.0, Some(100.0), 0.0),
        ],
        vec![resistor("r1", Series::E96, 0.01)],
    );
    let mut req = requirement(0.05);
    req.output_voltage_v = Range { min: 0.9, max: 5.0 };
    let simple = check(&req, &cat, &spec(Topology::Simple, "pair", 0.0, None));
    assert!(simple.candidate.check(CheckName::Compliance).unwrap().pass);
    let c = simple.candidate.compliance_v;
    assert!((c - 0.3).abs() < 2e-3, "simple: {c}");
    // With RE = 1 kΩ the output transistor stands on I_out RE2 (about 0.99 V).
    req.output_voltage_v.min = 1.5;
    let deg = check(
        &req,
        &cat,
        &spec(Topology::Simple, "pair", 1000.0, Some("r1")),
    );
    let expected = 0.3 + deg.candidate.ratio_achieved * 1e-3 * 1000.0;
    let c = deg.candidate.compliance_v;
    assert!(
        (c - expected).abs() < 5e-3,
        "degenerated simple: {c} vs {expected}"
    );
    req.output_voltage_v.min = 0.9;
    // A larger min_vce moves it one for one.
    let mut strict = req.clone();
    strict.min_vce_v = 0.5;
    let c = check(&strict, &cat, &spec(Topology::Simple, "pair", 0.0, None))
        .candidate
        .compliance_v;
    assert!((c - 0.5).abs() < 2e-3, "simple at min_vce 0.5 V: {c}");
    for t in [Topology::Wilson, Topology::Cascode, Topology::Wilson4] {
        let r = check(&req, &cat, &spec(t, "pair", 0.0, None));
        let c = r.candidate.check(CheckName::Compliance).unwrap();
        assert!(!c.pass, "{t:?} passes compliance at 0.9 V");
        assert!(
            (0.92..1.05).contains(&r.candidate.compliance_v),
            "{t:?}: {}",
            r.candidate.compliance_v
        );
        assert!(c.detail.contains("V_CE >= 0.3 V"), "{}", c.detail);
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

#[test]
fn the_cold_corner_needs_the_most_headroom() {
    // V_BE at constant current falls by about 2 mV/K (Sedra & Smith; Gray et al. ch. 1),
    // so a Wilson's compliance, about V_BE + min_vce, is about 0.1 V higher at 0 °C than
    // at 50 °C. MODEL.md judges compliance at every ambient, so the cold corner governs.
    let cat = catalog(
        vec![
            npn("pair", 2, 200.0, Some(100.0), 1e-4),
            npn("single", 1, 200.0, Some(100.0), 0.0),
        ],
        vec![],
    );
    let mut req = requirement(0.05);
    req.output_voltage_v = Range { min: 2.0, max: 5.0 };
    req.ambient_k = Range {
        min: ZERO_CELSIUS_K,
        max: ZERO_CELSIUS_K + 50.0,
    };
    let wide = check(&req, &cat, &spec(Topology::Wilson, "pair", 0.0, None));
    req.ambient_k.min = ZERO_CELSIUS_K + 50.0;
    let hot = check(&req, &cat, &spec(Topology::Wilson, "pair", 0.0, None));
    let d = wide.candidate.compliance_v - hot.candidate.compliance_v;
    assert!((0.07..0.14).contains(&d), "cold minus hot compliance {d}");
}

#[test]
fn a_low_headroom_sink_passes_with_a_caution_for_soft_saturation() {
    // A 10 mA sink with 0.5 V minimum output (an LED string's last volts): with
    // min_vce = 0.3 V (common practice, no source) a 10 Ω emitter resistor leaves V_CE
    // about 0.4 V, which passes; the output transistor's collector junction is then
    // forward biased (V_CB about -0.3 V), which MODEL.md shows as a caution naming it.
    let cat = catalog(
        vec![npn("pair", 2, 200.0, Some(100.0), 5e-4)],
        vec![resistor("r1", Series::E96, 0.01)],
    );
    let mut req = requirement(0.05);
    req.input_current_a = Range {
        min: 10e-3,
        max: 10e-3,
    };
    req.output_voltage_v = Range { min: 0.5, max: 2.0 };
    let r = check(
        &req,
        &cat,
        &spec(Topology::Simple, "pair", 10.0, Some("r1")),
    );
    assert!(r.candidate.check(CheckName::Compliance).unwrap().pass);
    assert!(r.pass, "{:?}", r.candidate.checks);
    assert_eq!(r.candidate.soft_saturation, vec!["Q2"]);
    assert!(r
        .cautions
        .iter()
        .any(|c| c.to_string().contains("Q2 has V_CB < 0")));
    let run = mirrorpick::rank::rank(
        &req,
        &cat,
        &mirrorpick::rank::RankOptions::default(),
        &mirrorpick::rank::Silent,
    )
    .unwrap();
    assert!(run.report.feasible > 0);
}

#[test]
fn a_x10_ratio_that_a_hand_design_meets_is_feasible() {
    // Gray et al. ch. 4: n I_in RE2 = I_in RE1 - V_T ln(n). For n = 10 at 100 uA with
    // RE1 = 24.9 kΩ that gives RE2 = 2.431 kΩ (E96 2.43 kΩ, ratio 10.004), where RE1/n =
    // 2.49 kΩ leaves about -2.3 %. A beta-helper keeps the base-current error near
    // (1 + n) / BF^2. The hand design must pass, be in the candidate space, and the
    // ranking must find feasible designs.
    let cat = catalog(
        vec![
            npn("pair", 2, 200.0, Some(100.0), 7e-4),
            npn("single", 1, 200.0, Some(100.0), 0.0),
        ],
        vec![resistor("r1", Series::E96, 0.001)],
    );
    let mut req = requirement(0.01);
    req.input_current_a = Range {
        min: 100e-6,
        max: 100e-6,
    };
    req.ratio = 10.0;
    req.output_voltage_v = Range { min: 3.5, max: 8.0 };
    let room = ZERO_CELSIUS_K + 25.0;
    let vt = mirrorpick::rank::thermal_voltage(room);
    let exact = mirrorpick::rank::ratio_re2(24.9e3, 10.0, 100e-6, room).unwrap();
    assert!((exact - (24.9e3 - vt * 10f64.ln() / 100e-6) / 10.0).abs() < 1e-9);
    assert!((2425.0..2436.0).contains(&exact), "{exact}");
    let mut hand = spec(Topology::BetaHelper, "pair", 24.9e3, Some("r1"));
    hand.re2_ohm = 2.43e3;
    let r = check(&req, &cat, &hand);
    assert!(r.pass, "{:?}", r.candidate.checks);
    assert!((r.candidate.ratio_achieved / 10.0 - 1.0).abs() < 3e-3);
    let mut old = hand.clone();
    old.re2_ohm = 2.49e3;
    let r = check(&req, &cat, &old);
    assert!(
        !r.pass,
        "RE1/n should miss 1 %: {}",
        r.candidate.error_total
    );
    let space: Vec<DesignSpec> = mirrorpick::rank::enumerate(&req, &cat)
        .into_iter()
        .flat_map(|g| g.specs)
        .collect();
    assert!(space.iter().any(|s| s.topology == Topology::BetaHelper
        && s.pair == "pair"
        && s.re1_ohm == 24.9e3
        && s.re2_ohm == 2.43e3));
    // Both standard values around the exact RE2 are candidates.
    assert!(space
        .iter()
        .any(|s| s.re1_ohm == 24.9e3 && s.re2_ohm == 2.49e3));
    let run = mirrorpick::rank::rank(
        &req,
        &cat,
        &mirrorpick::rank::RankOptions::default(),
        &mirrorpick::rank::Silent,
    )
    .unwrap();
    assert!(run.report.feasible > 0);
}

#[test]
fn thermal_runaway_is_named_and_leaves_its_figures_not_available() {
    // MODEL.md: a corner without a stable electrothermal fixed point fails
    // `thermal-runaway`, naming the build; no corner is dropped, so every figure that
    // needed it (accuracy, ratings) is not available, and the search never counts such a
    // design under another check (here the input voltage, about 0.7 V on a 61 V supply).
    let mut hot = npn("hot", 2, 1e6, None, 1e-4);
    hot.thermal.theta_self_k_per_w = 5000.0;
    hot.thermal.theta_mutual_k_per_w = 4000.0;
    hot.ratings.vceo_v = 100.0;
    hot.ratings.power_per_package_w = 10.0;
    let cat = catalog(vec![hot], vec![resistor("r1", Series::E24, 0.01)]);
    let mut req = requirement(0.05);
    req.supply_v = 61.0;
    req.input_current_a = Range {
        min: 5e-3,
        max: 5e-3,
    };
    req.output_voltage_v = Range {
        min: 2.0,
        max: 60.0,
    };
    let r = check(&req, &cat, &spec(Topology::Simple, "hot", 0.0, None));
    assert!(!r.pass);
    assert_eq!(r.candidate.governing_check, Some(CheckName::ThermalRunaway));
    let t = r.candidate.check(CheckName::ThermalRunaway).unwrap();
    assert!(t.detail.contains("nominal design"), "{}", t.detail);
    for name in [CheckName::Accuracy, CheckName::Vceo, CheckName::Dissipation] {
        let c = r.candidate.check(name).unwrap();
        assert!(c.value.is_nan() && !c.pass, "{name}: {c:?}");
        assert!(
            c.detail.starts_with("not available"),
            "{name}: {}",
            c.detail
        );
    }
    assert!(r.candidate.error_total.is_nan());
    let run = mirrorpick::rank::rank(
        &req,
        &cat,
        &mirrorpick::rank::RankOptions::default(),
        &mirrorpick::rank::Silent,
    )
    .unwrap();
    assert!(run
        .report
        .rejected_by
        .contains_key(&CheckName::ThermalRunaway));
    assert!(
        !run.report
            .rejected_by
            .contains_key(&CheckName::InputVoltage),
        "{:?}",
        run.report.rejected_by
    );
}

#[test]
fn every_command_reports_the_same_candidate_space() {
    // Common practice, no source: a count means the same thing wherever it is printed.
    // The candidate space does not depend on --top; where candidates were left
    // unverified the feasible count is flagged as a lower bound.
    let cat = catalog(
        vec![
            npn("pair", 2, 200.0, Some(100.0), 1e-4),
            npn("single", 1, 200.0, Some(100.0), 0.0),
        ],
        vec![resistor("r1", Series::E24, 0.01)],
    );
    let req = requirement(0.05);
    let run = |top: usize, exhaustive: bool| {
        mirrorpick::rank::rank(
            &req,
            &cat,
            &mirrorpick::rank::RankOptions {
                top,
                exhaustive,
                ..Default::default()
            },
            &mirrorpick::rank::Silent,
        )
        .unwrap()
        .report
    };
    let one = run(1, false);
    let ten = run(10, false);
    let all = run(10, true);
    assert_eq!(one.candidate_space, ten.candidate_space);
    assert_eq!(one.candidate_space, all.candidate_space);
    assert!(!all.feasible_at_least);
    for r in [&one, &ten] {
        assert_eq!(r.feasible_at_least, r.unverified > 0);
        assert!(r.feasible <= all.feasible);
        assert_eq!(r.evaluated + r.unverified, r.candidate_space);
    }
    assert!(
        one.feasible_at_least,
        "top 1 should leave candidates unverified"
    );
}
