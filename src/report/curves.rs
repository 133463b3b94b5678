//! `curves` output: the curve family as a table (a summary a person can read), CSV (one
//! row per solved point, long format) or JSON (the whole `CurveSet`, SI numbers, gaps as
//! null).
//!
//! JSON wire format: `ratio`, `supply_v`, `v_out_window_v` {`min`, `max`}, `accuracy`,
//! `output` (list of {`output` (1-based; one family per output where a multi-output
//! design's outputs differ), `i_in_a`, `t_amb_k`, `v_out_v`: [..], `i_out_a`: [.. or null]}),
//! `error` (list of {`v_out_v`, `t_amb_k`, `i_in_a`: [..], `error`: [.. or null]}),
//! `balance_voltage_v` (null when none), `failed_points`, `noise_vs_re` (list of
//! {`i_in_a`, `re1_ohm`, `re2_ohm`, `noise_a_per_rthz` (null when unsolved), `dominant`,
//! `forward_active`}), `rail_window_v` ({`min`, `max`} or null), `output_wanted_a` (null
//! when forced), `rail` (a programmed design's I_out against the rail: list of
//! {`v_out_v`, `t_amb_k`, `rail_v`: [..], `i_out_a`: [.. or null]}). CSV
//! columns: `curve` (`output`, `error`, `noise` or `rail`), `i_in_a`, `t_amb_c`, `v_out_v`,
//! `i_out_a`, `error`, `re1_ohm`, `noise_a_per_rthz` (the last two on `noise` rows only),
//! `rail_v` (on `rail` rows only; their `error` is against the wanted output current).

use std::io::{self, Write};

use comfy_table::Cell;

use super::csv::{self, Column};
use super::eng::{celsius, eng, percent, Charset};
use super::{new_table, Format, Style};
use crate::curves::{zero_crossings, CurveSet};
use crate::model::ZERO_CELSIUS_K;

/// One point of the long CSV form.
struct Point {
    curve: &'static str,
    i_in_a: f64,
    t_amb_k: f64,
    v_out_v: f64,
    i_out_a: Option<f64>,
    error: Option<f64>,
    re1_ohm: Option<f64>,
    noise_a_per_rthz: Option<f64>,
    rail_v: Option<f64>,
}

const COLUMNS: [Column<Point>; 9] = [
    Column {
        name: "curve",
        get: |p| p.curve.to_string(),
    },
    Column {
        name: "i_in_a",
        // Empty on rail rows: the input current is the circuit's there.
        get: |p| {
            if p.i_in_a.is_finite() {
                format!("{}", p.i_in_a)
            } else {
                String::new()
            }
        },
    },
    Column {
        name: "t_amb_c",
        get: |p| format!("{}", p.t_amb_k - ZERO_CELSIUS_K),
    },
    Column {
        name: "v_out_v",
        get: |p| format!("{}", p.v_out_v),
    },
    Column {
        name: "i_out_a",
        get: |p| csv::opt(p.i_out_a),
    },
    Column {
        name: "error",
        get: |p| csv::opt(p.error),
    },
    Column {
        name: "re1_ohm",
        get: |p| csv::opt(p.re1_ohm),
    },
    Column {
        name: "noise_a_per_rthz",
        get: |p| csv::opt(p.noise_a_per_rthz),
    },
    Column {
        name: "rail_v",
        get: |p| csv::opt(p.rail_v),
    },
];

fn points(set: &CurveSet) -> Vec<Point> {
    let mut v = Vec::new();
    for c in &set.output {
        for (k, &vo) in c.v_out_v.iter().enumerate() {
            v.push(Point {
                curve: "output",
                i_in_a: c.i_in_a,
                t_amb_k: c.t_amb_k,
                v_out_v: vo,
                i_out_a: c.i_out_a[k],
                error: c.i_out_a[k].map(|i| i / (set.ratio * c.i_in_a) - 1.0),
                re1_ohm: None,
                noise_a_per_rthz: None,
                rail_v: None,
            });
        }
    }
    for c in &set.error {
        for (k, &i) in c.i_in_a.iter().enumerate() {
            v.push(Point {
                curve: "error",
                i_in_a: i,
                t_amb_k: c.t_amb_k,
                v_out_v: c.v_out_v,
                i_out_a: c.error[k].map(|e| (1.0 + e) * set.ratio * i),
                error: c.error[k],
                re1_ohm: None,
                noise_a_per_rthz: None,
                rail_v: None,
            });
        }
    }
    for n in &set.noise_vs_re {
        v.push(Point {
            curve: "noise",
            i_in_a: n.i_in_a,
            t_amb_k: crate::curves::ROOM_K,
            v_out_v: set.v_out_window_v.min,
            i_out_a: None,
            error: None,
            re1_ohm: Some(n.re1_ohm),
            noise_a_per_rthz: n.noise_a_per_rthz,
            rail_v: None,
        });
    }
    let wanted = set.output_wanted_a.unwrap_or(f64::NAN);
    for c in &set.rail {
        for (k, &r) in c.rail_v.iter().enumerate() {
            v.push(Point {
                curve: "rail",
                i_in_a: f64::NAN,
                t_amb_k: c.t_amb_k,
                v_out_v: c.v_out_v,
                i_out_a: c.i_out_a[k],
                error: c.i_out_a[k].map(|i| i / wanted - 1.0),
                re1_ohm: None,
                noise_a_per_rthz: None,
                rail_v: Some(r),
            });
        }
    }
    v
}

/// The value of a curve at the grid point nearest `v`.
fn at(xs: &[f64], ys: &[Option<f64>], v: f64) -> Option<f64> {
    let k = xs
        .iter()
        .enumerate()
        .min_by(|a, b| (a.1 - v).abs().total_cmp(&(b.1 - v).abs()))?
        .0;
    ys[k]
}

pub fn write(set: &CurveSet, format: Format, style: Style, out: &mut dyn Write) -> io::Result<()> {
    match format {
        Format::Json => {
            serde_json::to_writer_pretty(&mut *out, set).map_err(io::Error::other)?;
            writeln!(out)
        }
        Format::Csv => csv::write(&COLUMNS, &points(set), out),
        Format::Table => {
            let u = Charset::Unicode;
            let w = set.v_out_window_v;
            let mut t = new_table(
                style,
                &[
                    "I_in",
                    "ambient",
                    &format!("I_out at {}", eng(w.min, "V", u)),
                    &format!("error at {}", eng(w.min, "V", u)),
                    &format!("I_out at {}", eng(w.max, "V", u)),
                    &format!("error at {}", eng(w.max, "V", u)),
                    "zero error at",
                ],
            );
            for c in &set.output {
                let e = c.errors(set.ratio);
                let cell = |v: Option<f64>, f: &dyn Fn(f64) -> String| {
                    Cell::new(v.map(f).unwrap_or_else(|| "no solution".into()))
                };
                let zeros = zero_crossings(c, set.ratio)
                    .iter()
                    .map(|z| eng(*z, "V", u))
                    .collect::<Vec<_>>()
                    .join(", ");
                t.add_row(vec![
                    Cell::new(eng(c.i_in_a, "A", u)),
                    Cell::new(celsius(c.t_amb_k, u)),
                    cell(at(&c.v_out_v, &c.i_out_a, w.min), &|x| eng(x, "A", u)),
                    cell(at(&c.v_out_v, &e, w.min), &percent),
                    cell(at(&c.v_out_v, &c.i_out_a, w.max), &|x| eng(x, "A", u)),
                    cell(at(&c.v_out_v, &e, w.max), &percent),
                    Cell::new(if zeros.is_empty() {
                        "none".into()
                    } else {
                        zeros
                    }),
                ]);
            }
            writeln!(out, "{t}")?;
            writeln!(
                out,
                "Output curves sampled at {} points from 0 V to the {} supply; values above are at the grid point nearest each end of the output window.",
                set.output.first().map_or(0, |c| c.v_out_v.len()),
                eng(set.supply_v, "V", u)
            )?;
            match set.balance_voltage_v {
                Some(v) => writeln!(
                    out,
                    "Balance voltage (solver, I_in max, 25 °C): {}",
                    eng(v, "V", u)
                )?,
                None => writeln!(out, "Balance voltage: none between V(in) and the supply")?,
            }
            if !set.noise_vs_re.is_empty() {
                let mut t = new_table(
                    style,
                    &["RE1", "RE2", "output noise (white)", "largest share"],
                );
                for n in &set.noise_vs_re {
                    let ohm = |r: f64| {
                        if r > 0.0 {
                            eng(r, "Ω", u)
                        } else {
                            "none".into()
                        }
                    };
                    t.add_row(vec![
                        ohm(n.re1_ohm),
                        ohm(n.re2_ohm),
                        match n.noise_a_per_rthz {
                            None => "no solution".into(),
                            Some(x) if n.forward_active => eng(x, "A/√Hz", u),
                            Some(x) => format!("{} (saturated)", eng(x, "A/√Hz", u)),
                        },
                        n.dominant.clone().unwrap_or_else(|| "—".into()),
                    ]);
                }
                writeln!(
                    out,
                    "Output current noise against the emitter resistors (I_in {}, V_out {}, 25 °C; small-signal, valid well below the transistors' poles):",
                    eng(set.noise_vs_re[0].i_in_a, "A", u),
                    eng(set.v_out_window_v.min, "V", u)
                )?;
                writeln!(out, "{t}")?;
            }
            if let (Some(rw), Some(wanted)) = (set.rail_window_v, set.output_wanted_a) {
                let mut t = new_table(
                    style,
                    &[
                        "V_out",
                        "ambient",
                        &format!("I_out at {}", eng(rw.min, "V", u)),
                        &format!("I_out at {}", eng(0.5 * (rw.min + rw.max), "V", u)),
                        &format!("I_out at {}", eng(rw.max, "V", u)),
                        "change over the rail's range",
                    ],
                );
                for c in &set.rail {
                    let i = |r: f64| at(&c.rail_v, &c.i_out_a, r);
                    let show = |x: Option<f64>| {
                        x.map_or("no solution".to_string(), |x| {
                            format!("{} ({})", eng(x, "A", u), percent(x / wanted - 1.0))
                        })
                    };
                    let (a, m, b) = (i(rw.min), i(0.5 * (rw.min + rw.max)), i(rw.max));
                    t.add_row(vec![
                        eng(c.v_out_v, "V", u),
                        celsius(c.t_amb_k, u),
                        show(a),
                        show(m),
                        show(b),
                        match (a, b, m) {
                            (Some(a), Some(b), Some(m)) => percent((b - a) / m),
                            _ => "—".into(),
                        },
                    ]);
                }
                writeln!(
                    out,
                    "Output current against the program rail (R_ref in the circuit; in brackets against the wanted {}), swept from {} to {}:",
                    eng(wanted, "A", u),
                    eng(set.rail.first().and_then(|c| c.rail_v.first().copied()).unwrap_or(rw.min), "V", u),
                    eng(set.rail.first().and_then(|c| c.rail_v.last().copied()).unwrap_or(rw.max), "V", u)
                )?;
                writeln!(out, "{t}")?;
            }
            if set.failed_points > 0 {
                writeln!(
                    out,
                    "{} points did not converge and are left out (gaps in the curves).",
                    set.failed_points
                )?;
            }
            Ok(())
        }
    }
}
