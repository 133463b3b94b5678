//! The programming resistor R_ref, absolute output accuracy and the output's temperature
//! coefficient, against published results.

use std::sync::atomic::AtomicU64;

use mirrorpick::check::{exact_r_ref, MonteCarlo, RefPick};
use mirrorpick::model::{AccuracyOf, Program, Series, Topology};
use mirrorpick::rank::{check_design, thermal_voltage, CheckReport};

use super::*;

const ROOM_K: f64 = ZERO_CELSIUS_K + 25.0;

/// An ideal-ish NPN pair (BF 1e5, no Early effect, no self-heating) with IS given at 25 °C,
/// so V_BE = V_T ln(I / IS) at room temperature.
fn ideal_pair() -> TransistorClass {
    let mut c = npn("pair", 2, 1e5, None, 1e-4);
    c.model.t_nom_k = ROOM_K;
    c
}

/// A resistor class with zero TCR and the given tolerance.
fn rref_class(tolerance: f64) -> ResistorClass {
    resistor("rref", Series::E192, tolerance)
}

/// `output_current` sink set by R_ref from a fixed `rail`, output at 3 V, one ambient
/// range; accuracy of the output.
fn programmed(rail: f64, output_current: f64, ambient: (f64, f64), accuracy: f64) -> Requirement {
    let mut r = requirement(accuracy);
    r.supply_v = rail.max(12.0);
    r.program = Some(Program {
        rail_v: Range {
            min: rail,
            max: rail,
        },
        output_current_a: output_current,
    });
    r.accuracy_of = AccuracyOf::Output;
    r.input_current_a = Range {
        min: output_current,
        max: output_current,
    };
    r.output_voltage_v = Range { min: 3.0, max: 3.0 };
    r.ambient_k = Range {
        min: ZERO_CELSIUS_K + ambient.0,
        max: ZERO_CELSIUS_K + ambient.1,
    };
    r
}

fn with_rref(t: Topology, ohm: Option<f64>) -> DesignSpec {
    let mut s = spec(t, "pair", 0.0, None);
    s.r_ref_resistor = Some("rref".into());
    match ohm {
        Some(r) => s.r_ref_ohm = r,
        None => s.r_ref_pick = Some(RefPick::Nearest),
    }
    s
}

fn check(req: &Requirement, cat: &Catalog, s: &DesignSpec) -> CheckReport {
    check_design(
        req,
        cat,
        s,
        MonteCarlo {
            seed: 3,
            samples: 400,
        },
        true,
    )
    .unwrap()
}

#[test]
fn r_ref_is_the_rail_less_the_solved_input_voltage_over_the_input_current() {
    // Sedra & Smith, current-mirror chapter; Horowitz & Hill, ch. 2 (current mirrors):
    // R_ref = (V_prog - V_BE) / I_in for the simple mirror; a Wilson or cascode input
    // sits at 2 V_BE (Gray, Hurst, Lewis & Meyer, ch. 4). With BF 1e5 the input current
    // equals the output current within 1e-4, and V_BE = V_T ln(I / IS) at 25 °C.
    let mut single = ideal_pair();
    single.id = "single".into();
    single.devices_per_package = 1;
    single.matching = None;
    let cat = catalog(vec![ideal_pair(), single], vec![rref_class(0.001)]);
    let req = programmed(5.0, 100e-6, (25.0, 25.0), 0.05);
    let vbe = thermal_voltage(ROOM_K) * (100e-6f64 / 1e-14).ln();
    let solves = AtomicU64::new(0);
    for (t, n_vbe) in [
        (Topology::Simple, 1.0),
        (Topology::Wilson, 2.0),
        (Topology::Cascode, 2.0),
    ] {
        let r = exact_r_ref(&req, &cat, &spec(t, "pair", 0.0, None), &solves).unwrap();
        let expected = (5.0 - n_vbe * vbe) / 100e-6;
        assert!(
            (r / expected - 1.0).abs() < 2e-3,
            "{t:?}: R_ref {r} vs {expected}"
        );
    }
}

#[test]
fn a_simple_mirror_programmed_from_5_v_drifts_about_460_ppm_per_kelvin() {
    // Common practice, no source: dV_BE/dT ~ -2 mV/K, so a resistor-programmed simple
    // mirror's output moves by -(dV_BE/dT) / (V_prog - V_BE) ~ 2 mV / 4.4 V ~ +460 ppm/K
    // from a 5 V rail, and proportionally less from 15 V. R_ref has zero TCR here.
    let cat = catalog(vec![ideal_pair()], vec![rref_class(0.001)]);
    let vbe = thermal_voltage(ROOM_K) * (100e-6f64 / 1e-14).ln();
    let tempco = |rail: f64| {
        let req = programmed(rail, 100e-6, (0.0, 70.0), 0.5);
        check(&req, &cat, &with_rref(Topology::Simple, None))
            .candidate
            .tempco_ppm_per_k
    };
    let t5 = tempco(5.0);
    let rule = 2e-3 / (5.0 - vbe) * 1e6;
    assert!((t5 / rule - 1.0).abs() < 0.10, "{t5} ppm/K vs {rule}");
    assert!((t5 / 460.0 - 1.0).abs() < 0.10, "{t5} ppm/K vs 460");
    let t15 = tempco(15.0);
    let scaled = t5 * (5.0 - vbe) / (15.0 - vbe);
    assert!((t15 / scaled - 1.0).abs() < 0.10, "{t15} vs {scaled}");
}

#[test]
fn a_widlar_tempco_follows_its_equation() {
    // Widlar's relation I_out RE2 = V_T ln(I_in / I_out) (Gray, Hurst, Lewis & Meyer,
    // ch. 4; Sedra & Smith), solved at 0 °C, 25 °C and 70 °C with I_in forced and RE2 of
    // zero TCR, against the solved circuit's tempco.
    let cat = catalog(vec![ideal_pair()], vec![rref_class(0.001)]);
    let mut req = requirement(0.5);
    req.ratio = 0.1;
    req.ambient_k = Range {
        min: ZERO_CELSIUS_K,
        max: ZERO_CELSIUS_K + 70.0,
    };
    let re2 = 5.9e3; // about V_T ln 10 / 10 uA
    let mut s = spec(Topology::Widlar, "pair", 0.0, Some("rref"));
    s.re1_ohm = 0.0;
    s.re2_ohm = re2;
    let got = check(&req, &cat, &s).candidate.tempco_ppm_per_k;
    let widlar = |t_k: f64| {
        let vt = thermal_voltage(t_k);
        let mut i = 1e-4;
        for _ in 0..200 {
            // Newton on g(i) = i RE2 - V_T ln(I_in / i).
            let g = i * re2 - vt * (1e-3 / i).ln();
            i -= g / (re2 + vt / i);
        }
        i
    };
    let (lo, hi) = (ZERO_CELSIUS_K, ZERO_CELSIUS_K + 70.0);
    let expected = (widlar(hi) - widlar(lo)) / (widlar(ROOM_K) * (hi - lo)) * 1e6;
    assert!(
        (got / expected - 1.0).abs() < 0.10,
        "{got} ppm/K vs {expected}"
    );
}

#[test]
fn the_r_ref_budget_line_is_its_tolerance_through_the_solved_circuit() {
    // The budget's R_ref line is the change of output error when R_ref moves by one
    // sigma (tolerance / 3): compare with two solved checks at R and R (1 + sigma).
    let tol = 0.03;
    let cat = catalog(vec![ideal_pair()], vec![rref_class(tol)]);
    let req = programmed(12.0, 1e-3, (25.0, 25.0), 0.2);
    let r = 11.3e3;
    let base = check(&req, &cat, &with_rref(Topology::Simple, Some(r)));
    let line = base
        .budget
        .as_ref()
        .unwrap()
        .random
        .iter()
        .find(|l| l.cause == "R_ref tolerance")
        .unwrap()
        .error;
    let moved = check(
        &req,
        &cat,
        &with_rref(Topology::Simple, Some(r * (1.0 + tol / 3.0))),
    );
    let e = |c: &CheckReport| c.corners.as_ref().unwrap()[0].error;
    let brute = (e(&moved) - e(&base)).abs();
    assert!(
        (line / brute - 1.0).abs() < 1e-3,
        "budget {line} vs re-solved {brute}"
    );
    // First order: dI/I = -dR/R (V_rail - V_in) / (V_rail - V_in + V_T), nearly 1 %.
    assert!((line - 0.01).abs() < 0.001, "{line}");
}

#[test]
fn yield_with_r_ref_sampled_agrees_with_a_brute_force_re_solve() {
    // A 5 % R_ref (1.67 % sigma) against a 2 % output accuracy: R_ref dominates and the
    // yield sits mid-range, where the first-order and the re-solved yields can differ.
    let cat = catalog(vec![ideal_pair()], vec![rref_class(0.05)]);
    let req = programmed(12.0, 1e-3, (25.0, 25.0), 0.02);
    let c = check(&req, &cat, &with_rref(Topology::Simple, None));
    let (y, ys) = (c.candidate.yield_fraction, c.candidate.yield_solved);
    assert!((0.5..0.97).contains(&y), "yield {y}");
    assert!((y - ys).abs() < 0.04, "first-order {y} vs re-solved {ys}");
}

#[test]
fn r_ref_tcr_is_judged_at_the_end_of_its_band_that_adds_to_the_drift() {
    // A class's TCR is a ±band. For I_in = (V_prog - V_in) / R_ref, a fractional change
    // of R_ref moves I_in by the same fraction with opposite sign, so the end of the band
    // that adds to the V_BE drift adds |TCR| to the output tempco (differentiate the
    // expression; Sedra & Smith, current-mirror chapter, for I_in). Judging the other end
    // would pass designs a part at the far end of the band fails.
    let mut drifting = rref_class(0.001);
    drifting.tcr_per_k = 100e-6;
    let cat = catalog(vec![ideal_pair()], vec![rref_class(0.001)]);
    let cat_tcr = catalog(vec![ideal_pair()], vec![drifting]);
    let req = programmed(5.0, 100e-6, (0.0, 70.0), 0.5);
    let s = with_rref(Topology::Simple, None);
    let flat = check(&req, &cat, &s).candidate.tempco_ppm_per_k;
    let with_tcr = check(&req, &cat_tcr, &s).candidate.tempco_ppm_per_k;
    assert!(flat > 0.0, "{flat}");
    let added = with_tcr - flat;
    assert!(
        (added / 100.0 - 1.0).abs() < 0.10,
        "{with_tcr} - {flat} = {added} ppm/K"
    );
}
