//! Curve families of one design: output current against output voltage for several
//! programming currents (what a designer would otherwise measure on a bench), and the
//! error against the programming current at the ends of the output window.
//!
//! Owns the grids (which currents, voltages and temperatures are swept) and the finished
//! data. The sweep itself takes any point solver ([`sweep`]); [`for_design`] runs it on
//! a design through the circuit layer, nominal devices. A point that does not converge
//! is kept as a gap (`None`), never as a guessed number. The white output noise against
//! the emitter-resistor value shows the trade degeneration makes (transistor shot noise
//! for resistor thermal noise). A design programmed by a resistor from a rail adds the
//! output current against the rail voltage (over the rail's range and half its width,
//! at least 10 % of the nominal rail, beyond each end), solved with R_ref in the circuit;
//! its other families are swept with the input current forced at the nominal
//! `output_current / ratio`, as a bench would set it.

use serde::Serialize;

use crate::circuit::{
    balance_voltage, Design, Mismatch, Netlist, OperatingPoint, SolveFailure, SolveOptions,
};
use crate::model::{Range, Requirement};

/// 25 °C in kelvin, the reference ambient of the curves.
pub const ROOM_K: f64 = 298.15;

/// What to sweep.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CurveOptions {
    /// Points from 0 V to the supply on each output curve.
    pub voltage_points: usize,
    /// Points from I_in min to max on each error curve (geometric).
    pub current_points: usize,
    /// Also sweep at the ambient extremes of the requirement.
    pub ambient_extremes: bool,
}

impl Default for CurveOptions {
    fn default() -> Self {
        CurveOptions {
            voltage_points: 121,
            current_points: 25,
            ambient_extremes: false,
        }
    }
}

/// JSON carries ambients in °C (`t_amb_c`), as the CSV and every other report do.
fn celsius<S: serde::Serializer>(t_k: &f64, s: S) -> Result<S::Ok, S::Error> {
    s.serialize_f64(t_k - crate::model::ZERO_CELSIUS_K)
}

/// I_out against V_out at one programming current and ambient.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OutputCurve {
    /// Which output (1-based) the curve is of; a design with several outputs has one
    /// family per output where the outputs differ (see `for_design`).
    pub output: u8,
    pub i_in_a: f64,
    #[serde(rename = "t_amb_c", serialize_with = "celsius")]
    pub t_amb_k: f64,
    pub v_out_v: Vec<f64>,
    /// `None` where the solver did not converge.
    pub i_out_a: Vec<Option<f64>>,
}

/// Error `I_out / (n I_in) - 1` against I_in at one output voltage and ambient.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ErrorCurve {
    pub v_out_v: f64,
    #[serde(rename = "t_amb_c", serialize_with = "celsius")]
    pub t_amb_k: f64,
    pub i_in_a: Vec<f64>,
    pub error: Vec<Option<f64>>,
}

/// I_out against the program rail at one output voltage and ambient (a design
/// programmed by R_ref).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RailCurve {
    pub v_out_v: f64,
    #[serde(rename = "t_amb_c", serialize_with = "celsius")]
    pub t_amb_k: f64,
    pub rail_v: Vec<f64>,
    /// `None` where the solver did not converge.
    pub i_out_a: Vec<Option<f64>>,
}

/// Points on each rail curve.
pub const RAIL_POINTS: usize = 41;

/// Everything the curve plots and tables show, with the requirement's windows.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CurveSet {
    /// The intended ratio n.
    pub ratio: f64,
    pub supply_v: f64,
    /// The requirement's output voltage window (compliance range).
    #[serde(serialize_with = "range_as_map")]
    pub v_out_window_v: Range,
    /// The requirement's accuracy (largest allowed |error|).
    pub accuracy: f64,
    pub output: Vec<OutputCurve>,
    pub error: Vec<ErrorCurve>,
    /// Where the error of the simple mirror crosses zero (from the solver), if anywhere.
    pub balance_voltage_v: Option<f64>,
    /// Points the solver could not converge on (gaps in the curves).
    pub failed_points: usize,
    /// White output noise density against the emitter-resistor value (empty for the
    /// Widlar, whose RE2 sets its ratio).
    pub noise_vs_re: Vec<NoisePoint>,
    /// The program rail's range (null when the input current is forced).
    #[serde(serialize_with = "opt_range_as_map")]
    pub rail_window_v: Option<Range>,
    /// The wanted output current of a programmed requirement.
    pub output_wanted_a: Option<f64>,
    /// I_out against the rail voltage at V_out min and max (empty when forced).
    pub rail: Vec<RailCurve>,
}

/// The design's white output current noise with its emitter resistors scaled to
/// `re1_ohm` (RE2 keeps its proportion to RE1), at I_in max, V_out min, 25 °C.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoisePoint {
    pub i_in_a: f64,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    /// A/√Hz; `None` where the solver did not converge.
    pub noise_a_per_rthz: Option<f64>,
    /// The element giving the largest share of the noise power there.
    pub dominant: Option<String>,
    /// Every transistor forward active (false: the resistor drop has pushed a device
    /// into saturation, where the figure says little about the design).
    pub forward_active: bool,
}

/// Points of the noise sweep: no degeneration, then 10 Ω to the largest value the
/// candidate space offers (`V_out,min / I_in,max`), geometric.
pub const NOISE_POINTS: usize = 25;

/// Sweeps the white output noise against the emitter-resistor value (see `NoisePoint`).
pub fn noise_against_re(
    design: &Design,
    req: &Requirement,
    solve_opts: &SolveOptions,
) -> Vec<NoisePoint> {
    let desc = design.topology.desc();
    if !desc.has_re1 || !desc.allows_degeneration {
        return Vec::new();
    }
    let proportion = if design.re1_ohm > 0.0 {
        design.re2_ohm / design.re1_ohm
    } else {
        1.0 / req.ratio
    };
    let top = (req.output_voltage_v.min / req.input_current_a.max).max(100.0);
    let mut values = vec![0.0];
    values.extend(geometric_grid(10.0, top, NOISE_POINTS - 1));
    let op = OperatingPoint {
        i_in_a: req.input_current_a.max,
        v_out_v: req.output_voltage_v.min,
        supply_v: req.supply_v,
        t_amb_k: ROOM_K,
        rail_v: None,
    };
    values
        .into_iter()
        .map(|re1| {
            let d = Design {
                re1_ohm: re1,
                re2_ohm: re1 * proportion,
                ..*design
            };
            let solved = Netlist::compile(&d, &Mismatch::default())
                .and_then(|net| net.solve_with_noise(&op, solve_opts))
                .ok();
            NoisePoint {
                i_in_a: op.i_in_a,
                re1_ohm: d.re1_ohm,
                re2_ohm: d.re2_ohm,
                forward_active: solved.as_ref().is_some_and(|(s, _)| {
                    s.transistors()
                        .iter()
                        .all(|t| t.region == crate::device::Region::ForwardActive)
                }),
                noise_a_per_rthz: solved.as_ref().map(|(_, n)| n.white_density()),
                dominant: solved.and_then(|(_, n)| {
                    n.by_element()
                        .into_iter()
                        .max_by(|a, b| a.white_a2_per_hz.total_cmp(&b.white_a2_per_hz))
                        .map(|e| e.element.to_string())
                }),
            }
        })
        .collect()
}

fn opt_range_as_map<S: serde::Serializer>(r: &Option<Range>, s: S) -> Result<S::Ok, S::Error> {
    match r {
        Some(r) => range_as_map(r, s),
        None => s.serialize_none(),
    }
}

/// The rail voltages of the rail family: the rail's range and beyond it on both sides
/// by half its width, or 10 % of the nominal rail when that is more; above 0 V.
pub fn rail_grid(rail: Range, count: usize) -> Vec<f64> {
    let nominal = 0.5 * (rail.min + rail.max);
    let beyond = (0.5 * (rail.max - rail.min)).max(0.1 * nominal);
    let lo = (rail.min - beyond).max(0.02 * nominal);
    linear_grid(lo, rail.max + beyond, count)
}

fn range_as_map<S: serde::Serializer>(r: &Range, s: S) -> Result<S::Ok, S::Error> {
    use serde::ser::SerializeStruct;
    let mut m = s.serialize_struct("Range", 2)?;
    m.serialize_field("min", &r.min)?;
    m.serialize_field("max", &r.max)?;
    m.end()
}

impl OutputCurve {
    /// The error at each point of the curve.
    pub fn errors(&self, ratio: f64) -> Vec<Option<f64>> {
        self.i_out_a
            .iter()
            .map(|i| i.map(|i| i / (ratio * self.i_in_a) - 1.0))
            .collect()
    }
}

/// `count` points from `lo` to `hi` inclusive, evenly spaced.
pub fn linear_grid(lo: f64, hi: f64, count: usize) -> Vec<f64> {
    match count {
        0 => vec![],
        1 => vec![lo],
        _ => (0..count)
            .map(|k| lo + (hi - lo) * k as f64 / (count - 1) as f64)
            .collect(),
    }
}

/// `count` points from `lo` to `hi` inclusive, geometrically spaced; the ends are exact.
pub fn geometric_grid(lo: f64, hi: f64, count: usize) -> Vec<f64> {
    match count {
        0 => vec![],
        1 => vec![lo],
        _ => (0..count)
            .map(|k| {
                if k == count - 1 {
                    hi
                } else {
                    lo * (hi / lo).powf(k as f64 / (count - 1) as f64)
                }
            })
            .collect(),
    }
}

/// The programming currents of the output-curve family: min, max and geometric steps
/// between, about one per decade, at least three and at most seven curves.
pub fn family_currents(range: Range) -> Vec<f64> {
    if range.max <= range.min {
        return vec![range.min];
    }
    let decades = (range.max / range.min).log10().ceil() as usize;
    geometric_grid(range.min, range.max, (decades + 1).clamp(3, 7))
}

/// The ambients swept: 25 °C, plus the requirement's extremes on request.
pub fn ambients(req: &Requirement, extremes: bool) -> Vec<f64> {
    let mut t = vec![ROOM_K];
    if extremes {
        t.insert(0, req.ambient_k.min);
        t.push(req.ambient_k.max);
        t.dedup_by(|a, b| (*a - *b).abs() < 1e-9);
    }
    t
}

/// Sweeps the curves with `solve(i_in_a, v_out_v, t_amb_k) -> Some(i_out_a)` (or `None`
/// when it cannot converge there). `balance_voltage_v` is passed through for the plots.
pub fn sweep<F>(
    req: &Requirement,
    opts: &CurveOptions,
    balance_voltage_v: Option<f64>,
    solve: F,
) -> CurveSet
where
    F: Fn(f64, f64, f64) -> Option<f64>,
{
    let temps = ambients(req, opts.ambient_extremes);
    let volts = linear_grid(0.0, req.supply_v, opts.voltage_points.max(2));
    let mut failed = 0;
    let mut output = Vec::new();
    for &t in &temps {
        for i_in in family_currents(req.input_current_a) {
            let i_out: Vec<Option<f64>> = volts.iter().map(|&v| solve(i_in, v, t)).collect();
            failed += i_out.iter().filter(|x| x.is_none()).count();
            output.push(OutputCurve {
                output: 1,
                i_in_a: i_in,
                t_amb_k: t,
                v_out_v: volts.clone(),
                i_out_a: i_out,
            });
        }
    }
    let currents = geometric_grid(
        req.input_current_a.min,
        req.input_current_a.max,
        if req.input_current_a.max > req.input_current_a.min {
            opts.current_points.max(2)
        } else {
            1
        },
    );
    let mut error = Vec::new();
    let mut window = vec![req.output_voltage_v.min, req.output_voltage_v.max];
    window.dedup();
    for &t in &temps {
        for &v in &window {
            let e: Vec<Option<f64>> = currents
                .iter()
                .map(|&i| solve(i, v, t).map(|o| o / (req.ratio * i) - 1.0))
                .collect();
            failed += e.iter().filter(|x| x.is_none()).count();
            error.push(ErrorCurve {
                v_out_v: v,
                t_amb_k: t,
                i_in_a: currents.clone(),
                error: e,
            });
        }
    }
    CurveSet {
        ratio: req.ratio,
        supply_v: req.supply_v,
        v_out_window_v: req.output_voltage_v,
        accuracy: req.accuracy,
        output,
        error,
        balance_voltage_v,
        failed_points: failed,
        noise_vs_re: Vec::new(),
        rail_window_v: None,
        output_wanted_a: None,
        rail: Vec::new(),
    }
}

/// The rail family: `solve(rail_v, v_out_v, t_amb_k) -> Some(i_out_a)` at V_out min and
/// max, at each ambient swept. Adds its failed points to `set.failed_points`.
pub fn sweep_rail<F>(set: &mut CurveSet, req: &Requirement, opts: &CurveOptions, solve: F)
where
    F: Fn(f64, f64, f64) -> Option<f64>,
{
    let Some(p) = req.program else {
        return;
    };
    let rails = rail_grid(p.rail_v, RAIL_POINTS);
    let mut window = vec![req.output_voltage_v.min, req.output_voltage_v.max];
    window.dedup();
    for &t in &ambients(req, opts.ambient_extremes) {
        for &v in &window {
            let i: Vec<Option<f64>> = rails.iter().map(|&r| solve(r, v, t)).collect();
            set.failed_points += i.iter().filter(|x| x.is_none()).count();
            set.rail.push(RailCurve {
                v_out_v: v,
                t_amb_k: t,
                rail_v: rails.clone(),
                i_out_a: i,
            });
        }
    }
    set.rail_window_v = Some(p.rail_v);
    set.output_wanted_a = Some(p.output_current_a);
}

/// Sweeps the curves of `design` against `req` with nominal (matched) devices, with or
/// without self-heating. The balance voltage is the solver's, at I_in max and 25 °C.
/// Fails only when the design cannot be compiled (for example a missing helper class).
/// A design with R_ref (and a requirement with `program`) adds the rail family.
pub fn for_design(
    design: &Design,
    req: &Requirement,
    opts: &CurveOptions,
    solve_opts: &SolveOptions,
) -> Result<CurveSet, SolveFailure> {
    let mm = Mismatch::default();
    let programmed = design.r_ref.is_some() && req.program.is_some();
    let design_r_ref = design.r_ref;
    let forced = Design {
        r_ref: None,
        ..*design
    };
    let design = &forced;
    let net = Netlist::compile(design, &mm)?;
    let point = |i_in_a, v_out_v, t_amb_k| OperatingPoint {
        rail_v: None,
        i_in_a,
        v_out_v,
        supply_v: req.supply_v,
        t_amb_k,
    };
    let balance = balance_voltage(
        design,
        req.ratio,
        &point(req.input_current_a.max, 0.0, ROOM_K),
        &mm,
        solve_opts,
    );
    let mut set = if design.shape.outputs == 1 {
        sweep(req, opts, balance, |i, v, t| {
            net.solve(&point(i, v, t), solve_opts)
                .ok()
                .map(|s| s.i_out_a)
        })
    } else {
        multi_output_set(&net, design, req, opts, balance, &point, solve_opts)
    };
    set.noise_vs_re = noise_against_re(design, req, solve_opts);
    if programmed {
        let with_ref = Netlist::compile(
            &Design {
                r_ref: design_r_ref,
                ..forced
            },
            &mm,
        )?;
        let hint = req.input_current_a.max;
        sweep_rail(&mut set, req, opts, |rail, v, t| {
            let op = OperatingPoint {
                rail_v: Some(rail),
                ..point(hint, v, t)
            };
            with_ref.solve(&op, solve_opts).ok().map(|s| s.i_out_a)
        });
    }
    Ok(set)
}

/// The curves of a design with several outputs: every point solved once for all of them.
/// The error curves are the worst output's; the output curves one family per output,
/// where outputs differ (with nominal devices only heating sets them apart, e.g. a second
/// array).
fn multi_output_set(
    net: &Netlist,
    design: &Design,
    req: &Requirement,
    opts: &CurveOptions,
    balance: Option<f64>,
    point: &dyn Fn(f64, f64, f64) -> OperatingPoint,
    solve_opts: &SolveOptions,
) -> CurveSet {
    let memo: std::cell::RefCell<std::collections::HashMap<[u64; 3], Option<Vec<f64>>>> =
        Default::default();
    let all = |i: f64, v: f64, t: f64| -> Option<Vec<f64>> {
        let key = [i.to_bits(), v.to_bits(), t.to_bits()];
        if let Some(x) = memo.borrow().get(&key) {
            return x.clone();
        }
        let x = net
            .solve(&point(i, v, t), solve_opts)
            .ok()
            .map(|s| s.outputs().to_vec());
        memo.borrow_mut().insert(key, x.clone());
        x
    };
    let n = req.ratio;
    let mut set = sweep(req, opts, balance, |i, v, t| {
        let outs = all(i, v, t)?;
        outs.iter().copied().max_by(|a, b| {
            (a / (n * i) - 1.0)
                .abs()
                .total_cmp(&(b / (n * i) - 1.0).abs())
        })
    });
    let mut families: Vec<OutputCurve> = Vec::new();
    for base in &set.output {
        let mut kept: Vec<OutputCurve> = Vec::new();
        for k in 0..design.shape.outputs {
            let i_out: Vec<Option<f64>> = base
                .v_out_v
                .iter()
                .map(|&v| all(base.i_in_a, v, base.t_amb_k).map(|o| o[usize::from(k)]))
                .collect();
            let same = |c: &OutputCurve| {
                c.i_out_a.iter().zip(&i_out).all(|(a, b)| match (a, b) {
                    (Some(a), Some(b)) => (a - b).abs() <= 1e-6 * a.abs().max(b.abs()),
                    (None, None) => true,
                    _ => false,
                })
            };
            if !kept.iter().any(same) {
                kept.push(OutputCurve {
                    output: k + 1,
                    i_out_a: i_out,
                    ..base.clone()
                });
            }
        }
        families.extend(kept);
    }
    set.output = families;
    set
}

/// Voltages where a curve's error changes sign, interpolated linearly between the two
/// grid points around each crossing.
pub fn zero_crossings(curve: &OutputCurve, ratio: f64) -> Vec<f64> {
    let e = curve.errors(ratio);
    let mut out = Vec::new();
    for k in 1..e.len() {
        if let (Some(a), Some(b)) = (e[k - 1], e[k]) {
            if a == 0.0 {
                out.push(curve.v_out_v[k - 1]);
            } else if a.signum() != b.signum() && b != 0.0 {
                let (va, vb) = (curve.v_out_v[k - 1], curve.v_out_v[k]);
                out.push(va + (vb - va) * a / (a - b));
            }
        }
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::report::fixtures;

    #[test]
    fn grids_hit_their_ends() {
        let g = geometric_grid(1e-6, 1e-3, 4);
        assert_eq!(g.len(), 4);
        assert_eq!(g[0], 1e-6);
        assert_eq!(g[3], 1e-3);
        assert!((g[1] / 1e-5 - 1.0).abs() < 1e-12);
        assert_eq!(linear_grid(0.0, 12.0, 5), vec![0.0, 3.0, 6.0, 9.0, 12.0]);
        let three_decades = family_currents(Range {
            min: 1e-6,
            max: 1e-3,
        });
        assert_eq!(three_decades.len(), 4);
        assert_eq!(
            family_currents(Range {
                min: 1e-4,
                max: 1e-3
            })
            .len(),
            3
        );
        assert_eq!(
            family_currents(Range {
                min: 1e-3,
                max: 1e-3
            }),
            vec![1e-3]
        );
    }

    #[test]
    fn sweep_records_gaps_and_crossings() {
        let req = fixtures::requirement();
        let opts = CurveOptions {
            voltage_points: 13,
            current_points: 5,
            ambient_extremes: true,
        };
        // A toy device: saturates below 0.2 V (no solution there), then rises with
        // slope 1/(50 V), crossing zero error at 2 V.
        let set = sweep(&req, &opts, Some(2.0), |i, v, _t| {
            (v >= 0.2).then_some(i * (0.96 + 0.02 * v))
        });
        assert_eq!(set.output.len(), 3 * 3, "three currents at three ambients");
        assert_eq!(set.error.len(), 3 * 2);
        // One gap (V_out = 0) per output curve; none on the error curves.
        assert_eq!(set.failed_points, 9);
        for c in &set.output {
            let z = zero_crossings(c, 1.0);
            assert_eq!(z.len(), 1);
            assert!((z[0] - 2.0).abs() < 1e-9, "{z:?}");
        }
        let e = &set.error[1];
        assert_eq!(e.v_out_v, 10.0);
        assert!((e.error[0].unwrap() - 0.16).abs() < 1e-12);
    }
}
