//! Multi-output and area-ratio forms: solved circuits against the textbook closed forms,
//! each with its source, and self-heating in one array against a hand calculation.

use crate::fixtures::*;
use mirrorpick::circuit::{solve_point, Design, Mismatch, OutputDeviation, Solution};
use mirrorpick::device::thermal_voltage;
use mirrorpick::model::{Area, BjtParams, Polarity, Shape, Topology, TransistorClass};

/// An array wide enough that every form of these checks sits in one package.
fn wide(bf: f64) -> TransistorClass {
    class(
        "npn-array-wide",
        Polarity::Npn,
        20,
        BjtParams::new(1e-14, bf, None),
    )
}

fn solved(t: Topology, c: &TransistorClass, shape: Shape) -> Solution {
    let d = Design {
        shape,
        ..design(t, c, 0.0, 0.0)
    };
    solve_point(&d, &op(1e-3, 5.0), &nominal(), &iso()).unwrap()
}

fn rel(a: f64, b: f64) -> f64 {
    (a / b - 1.0).abs()
}

#[test]
fn simple_mirror_with_n_outputs_gives_bf_over_bf_plus_n_plus_1() {
    // Gray, Hurst, Lewis & Meyer, Analysis and Design of Analog ICs, ch. 4; Sedra & Smith,
    // Microelectronic Circuits, current-mirror chapter: every output's base current comes
    // from the input node, I_out/I_in = BF/(BF + N + 1). No Early effect.
    for bf in [20.0, 100.0, 500.0] {
        let c = wide(bf);
        for n in 1..=8u8 {
            let s = solved(Topology::Simple, &c, Shape::outputs(n));
            assert_eq!(s.outputs().len(), usize::from(n));
            let want = bf / (bf + f64::from(n) + 1.0);
            for (k, i) in s.outputs().iter().enumerate() {
                assert!(
                    rel(i / 1e-3, want) < 1e-6,
                    "bf {bf}, N {n}, output {}: {i}",
                    k + 1
                );
            }
        }
    }
}

#[test]
fn beta_helper_with_n_outputs() {
    // Gray et al., ch. 4; Sedra & Smith: the helper supplies every base current,
    // I_out/I_in = 1 / (1 + (N+1)/(BF(BF+1))). No Early effect.
    for bf in [20.0, 100.0, 500.0] {
        let c = wide(bf);
        for n in 1..=8u8 {
            let s = solved(Topology::BetaHelper, &c, Shape::outputs(n));
            let want = 1.0 / (1.0 + (f64::from(n) + 1.0) / (bf * (bf + 1.0)));
            for (k, i) in s.outputs().iter().enumerate() {
                assert!(
                    rel(i / 1e-3, want) < 1e-6,
                    "bf {bf}, N {n}, output {}: {i}",
                    k + 1
                );
            }
        }
    }
}

#[test]
fn area_ratio_of_parallel_devices() {
    // Gray et al., ch. 4; Sedra & Smith: n output devices in parallel against one input
    // device give I_out/I_in = n BF/(BF + n + 1); n input devices against one output
    // device give 1/n of that with n and 1/n exchanged, BF/(n BF + n + 1).
    for bf in [20.0, 100.0, 500.0] {
        let c = wide(bf);
        for n in 2..=4u8 {
            let nf = f64::from(n);
            let up = solved(
                Topology::Simple,
                &c,
                Shape {
                    outputs: 1,
                    area: Area::Output(n),
                },
            );
            assert!(rel(up.i_out_a / 1e-3, nf * bf / (bf + nf + 1.0)) < 1e-6);
            let down = solved(
                Topology::Simple,
                &c,
                Shape {
                    outputs: 1,
                    area: Area::Input(n),
                },
            );
            assert!(rel(down.i_out_a / 1e-3, bf / (nf * bf + nf + 1.0)) < 1e-6);
        }
    }
}

#[test]
fn each_output_is_matched_on_its_own() {
    // Output 2's V_BE offset moves output 2 by exp(dV/V_T) and leaves output 1 (but for
    // the shared base node, a 1/BF effect) where it was: Gray et al., ch. 4.
    let c = wide(500.0);
    let d = Design {
        shape: Shape::outputs(2),
        ..design(Topology::Simple, &c, 0.0, 0.0)
    };
    let base = solve_point(&d, &op(1e-3, 5.0), &nominal(), &iso()).unwrap();
    let mut mm = Mismatch::default();
    mm.set_output(
        2,
        OutputDeviation {
            dvbe_v: [1e-3, 0.0],
            ..OutputDeviation::default()
        },
    );
    let moved = solve_point(&d, &op(1e-3, 5.0), &mm, &iso()).unwrap();
    let vt = thermal_voltage(300.15);
    let r2 = moved.outputs()[1] / base.outputs()[1];
    assert!(rel(r2, (1e-3f64 / vt).exp()) < 3e-3, "{r2}");
    assert!(rel(moved.outputs()[0], base.outputs()[0]) < 1e-4);
}

#[test]
fn heating_in_one_array_moves_each_output_by_the_hand_calculation() {
    // Common practice, no source: devices of one package sit at
    // T_i = T_amb + theta_self P_i + theta_mutual * (sum of the others' P); a simple
    // mirror's output then carries exp(kappa (T_out - T_in)) times the isothermal
    // current, kappa = d ln I_C / dT at fixed V_BE = XTI/T + (EG - V_BE)/(V_T T) (from the
    // IS(T) law of the device model). Powers from the isothermal solve. Eight outputs on
    // five-device arrays: outputs 1-4 share the input device's package, 5-8 sit in a
    // second one, heated by each other but not coupled to the input device.
    let mut c = class(
        "npn-array-5",
        Polarity::Npn,
        5,
        BjtParams::new(1e-14, 500.0, None),
    );
    c.thermal.theta_self_k_per_w = 625.0;
    c.thermal.theta_mutual_k_per_w = 300.0;
    let d = Design {
        shape: Shape::outputs(8),
        ..design(Topology::Simple, &c, 0.0, 0.0)
    };
    let p = op(0.5e-3, 5.0);
    let cold = solve_point(&d, &p, &nominal(), &iso()).unwrap();
    let hot = solve_point(&d, &p, &nominal(), &heated()).unwrap();
    let q = cold.transistors();
    let theta = |i: usize, j: usize| {
        if i == j {
            c.thermal.theta_self_k_per_w
        } else if q[i].package == q[j].package {
            c.thermal.theta_mutual_k_per_w
        } else {
            0.0
        }
    };
    let rise = |i: usize| {
        (0..q.len())
            .map(|j| theta(i, j) * q[j].power_w)
            .sum::<f64>()
    };
    let input = q.iter().position(|t| t.name == "Q1").unwrap();
    let t = p.t_amb_k;
    let vt = thermal_voltage(t);
    let m = &c.model;
    let kappa = m.xti / t + (m.eg_ev - q[input].v_be) / (vt * t);
    let mut packages = std::collections::BTreeSet::new();
    for (k, (h, i0)) in hot.outputs().iter().zip(cold.outputs()).enumerate() {
        let dev = q.iter().position(|x| x.output == k as u8 + 1).unwrap();
        packages.insert(q[dev].package);
        let hand = kappa * (rise(dev) - rise(input));
        let solved = (h / i0).ln();
        assert!(hand > 0.0, "output {} runs hotter than the input", k + 1);
        assert!(
            (solved / hand - 1.0).abs() < 0.10,
            "output {}: solved {solved:e}, hand {hand:e}",
            k + 1
        );
    }
    assert_eq!(packages.len(), 2, "outputs fill two arrays");
}

#[test]
fn each_output_has_the_output_resistance_of_one_transistor() {
    // Gray et al., ch. 4: a simple mirror's output resistance is r_o = (VAF + V_CE)/I_C of
    // its output transistor. With several outputs, each output's own (the others held at
    // V_out) is still one transistor's r_o, not r_o / N.
    let c = class(
        "npn-array-wide",
        Polarity::Npn,
        20,
        BjtParams::new(1e-14, 200.0, Some(80.0)),
    );
    let p = op(1e-3, 5.0);
    for n in [1u8, 2, 4] {
        let d = Design {
            shape: Shape::outputs(n),
            ..design(Topology::Simple, &c, 0.0, 0.0)
        };
        let s = solve_point(&d, &p, &nominal(), &iso()).unwrap();
        let r = mirrorpick::circuit::output_resistance(&d, &p, &nominal(), &iso()).unwrap();
        let r_o = (80.0 + 5.0) / s.outputs()[0];
        assert!(rel(r, r_o) < 0.02, "N {n}: {r} against {r_o}");
    }
}
