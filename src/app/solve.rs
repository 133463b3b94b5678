//! The `solve` command: one design at one operating point, fully reported.
//!
//! Owns: resolving part ids against the catalog, checking the operating point, running the
//! solver and the solved figures, the JSON wire type (`SolveReport`) and its table printer.
//! Must not: parse command lines or files, or decide exit codes (see
//! `SolveCommandError::is_input_error`).
//!
//! JSON wire format (SI units, temperatures in °C): `i_in`, `i_out`, `ratio` (the
//! requested n, `--ratio`, default 1), `error` (`I_out/(n I_in) - 1`, always against the
//! requested ratio, never RE1/RE2), `r_out` (ohm; null when infinite: no Early effect in
//! any transistor and no self-heating), `v_in`,
//! `balance_voltage` (V, null when the error does not cross zero between V(in) and the
//! supply), `nodes` (name -> volts from the mirror rail), `transistors` (list of `designator`
//! (`Q1A`: IEEE 315 reference designator, as in the report and the SPICE export), `name`,
//! `role`, `v_be`, `v_ce`, `i_c`, `i_b`, `t_junction_c`, `region`), `iterations`,
//! `cautions` (ratings against the class: V_CE against the derated VCEO, I_C against IC
//! max, each package's dissipation against its rating derated at the ambient; the same
//! rules `check` applies), `noise_a_per_rthz` (white output current noise density, A/√Hz)
//! and `noise_sources` (list of `source`, `kind`, `transfer` = dI_out/di,
//! `density_a_per_rthz` = that source's white output density, and `flicker_a2` = its
//! output flicker coefficient, density `/ f`).
//!
//! A programmed design (`--rail V --rref R`, with `--rref-resistor CLASS` for its TCR and
//! power rating) is solved with the programming resistor from the rail to the input: the
//! input current is the circuit's, not forced. Its JSON adds `rail_v`, `r_ref_ohm`,
//! `r_ref_resistor` and `r_ref_power_w` (null when the input is forced);
//! `tempco_ppm_per_k` (every design) is the output current's slope with the ambient at
//! this point, `(I_out(T + 5 K) - I_out(T - 5 K)) / (10 K I_out(T))`.
//!
//! Emitter resistors: `--re` sets RE1 = RE2; `--re1` and `--re2` go together (one
//! without the other would solve a lopsided mirror, so it is refused with the RE2 the
//! ratio needs); a Widlar takes `--re2` only and needs `--ratio`.

use std::collections::BTreeMap;
use std::io;

use comfy_table::{presets::UTF8_FULL, ContentArrangement, Table};
use serde::Serialize;

use crate::check;
use crate::circuit::{
    balance_voltage, Design, Mismatch, Netlist, OperatingPoint, SolveFailure, SolveOptions,
};
use crate::model::{Catalog, Role, Shape, Topology, ZERO_CELSIUS_K};
use crate::units::format_prefixed as eng;

/// Everything the command needs, resolved to SI numbers.
#[derive(Debug, Clone, PartialEq)]
pub struct SolveArgs {
    pub topology: Topology,
    pub part: String,
    /// A single-device class for helper transistors; default: the catalog's cheapest
    /// single of the part's polarity (used only when the part has no spare device).
    pub helper: Option<String>,
    /// RE1 and RE2 as given (`--re` fills both); `None` when not given.
    pub re1_ohm: Option<f64>,
    pub re2_ohm: Option<f64>,
    /// The requested ratio n = I_out / I_in (`--ratio`); 1 when absent.
    pub ratio: Option<f64>,
    /// The forced input current (`--iin`); exclusive with `rail_v`.
    pub i_in_a: Option<f64>,
    /// The program rail (`--rail`), volts from the mirror rail; needs `r_ref_ohm`.
    pub rail_v: Option<f64>,
    /// The programming resistor from the rail to the input (`--rref`).
    pub r_ref_ohm: Option<f64>,
    /// R_ref's resistor class (`--rref-resistor`): its TCR and power rating.
    pub r_ref_resistor: Option<String>,
    pub v_out_v: f64,
    /// Defaults to `v_out_v`.
    pub supply_v: Option<f64>,
    pub ambient_k: f64,
    pub self_heating: bool,
    /// V_BE offset of Q2 against Q1, volts.
    pub dvbe_v: f64,
    /// Relative beta deviation of Q2 against Q1.
    pub dbeta: f64,
    /// Outputs on the input side (`--outputs`), each with its own RE2.
    pub shape: Shape,
}

#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SolveCommandError {
    #[error("unknown transistor class `{}`{}", crate::text::shown(id), did_you_mean(.suggestions))]
    UnknownPart {
        id: String,
        suggestions: Vec<String>,
    },
    #[error("unknown helper class `{}`{}", crate::text::shown(id), did_you_mean(.suggestions))]
    UnknownHelper {
        id: String,
        suggestions: Vec<String>,
    },
    #[error("helper class `{helper}` is {helper_polarity} but `{part}` is {part_polarity}; use a helper of the same polarity")]
    HelperPolarity {
        helper: String,
        helper_polarity: &'static str,
        part: String,
        part_polarity: &'static str,
    },
    #[error("{what} is {}; expected {expected}", crate::units::format_quantity(*value, *dimension))]
    BadValue {
        what: &'static str,
        value: f64,
        /// The value's dimension, so the message gives its unit.
        dimension: crate::units::Dimension,
        expected: &'static str,
    },
    /// The emitter resistors given do not describe the mirror asked for.
    #[error("{0}")]
    Resistors(String),
    /// The input is neither forced nor programmed, or both, or half programmed.
    #[error("{0}")]
    Input(String),
    #[error("unknown resistor class `{}`{}; expected one of {}", crate::text::shown(id), did_you_mean(.suggestions), .known.join(", "))]
    UnknownResistor {
        id: String,
        suggestions: Vec<String>,
        known: Vec<String>,
    },
    /// The design needs a helper and the catalog has no single of that polarity.
    #[error("{0}")]
    NoHelper(SolveFailure),
    /// The engine ran but could not give a trusted answer (no convergence, thermal runaway).
    #[error("{0}")]
    Failed(SolveFailure),
}

impl SolveCommandError {
    /// Bad or impossible input (exit 2) as opposed to a failed solve (exit 1).
    pub fn is_input_error(&self) -> bool {
        !matches!(self, SolveCommandError::Failed(_))
    }
}

fn did_you_mean(s: &[String]) -> String {
    match s {
        [] => String::new(),
        [one] => format!("; did you mean `{one}`?"),
        many => format!(
            "; did you mean one of {}?",
            many.iter()
                .map(|m| format!("`{m}`"))
                .collect::<Vec<_>>()
                .join(", ")
        ),
    }
}

/// The nearest catalog id to a mistyped one, if any is close.
fn suggestions(catalog: &Catalog, id: &str) -> Vec<String> {
    crate::input::did_you_mean(id, catalog.transistors.iter().map(|t| t.id.as_str()))
        .into_iter()
        .collect()
}

/// One transistor in the report.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct TransistorReport {
    /// The reference designator (`Q1A`), as in the report, the schematic and SPICE.
    pub designator: String,
    /// The name in the topology's netlist (MODEL.md: `Q1`..`Q4`).
    pub name: String,
    /// `pair1-ref`, `pair1-mirror`, `pair2-ref`, `pair2-mirror` or `helper`.
    pub role: String,
    #[serde(rename = "v_be_v")]
    pub v_be: f64,
    #[serde(rename = "v_ce_v")]
    pub v_ce: f64,
    #[serde(rename = "i_c_a")]
    pub i_c: f64,
    #[serde(rename = "i_b_a")]
    pub i_b: f64,
    pub t_junction_c: f64,
    pub region: String,
}

/// The `solve` command's finished result (the JSON wire type).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SolveReport {
    /// The input current: forced, or solved through R_ref.
    #[serde(rename = "i_in_a")]
    pub i_in: f64,
    /// The worst output's current (the only output's on a single-output design).
    #[serde(rename = "i_out_a")]
    pub i_out: f64,
    pub error: f64,
    /// Which output (1-based) `i_out` and `error` are of: the one with the largest error.
    pub worst_output: usize,
    /// Every output's current and error, output 1 first.
    pub outputs: Vec<OutputReport>,
    #[serde(rename = "r_out_ohm")]
    pub r_out: Option<f64>,
    #[serde(rename = "v_in_v")]
    pub v_in: f64,
    #[serde(rename = "balance_voltage_v")]
    pub balance_voltage: Option<f64>,
    #[serde(rename = "nodes_v")]
    pub nodes: BTreeMap<String, f64>,
    pub transistors: Vec<TransistorReport>,
    pub iterations: u32,
    /// The requested ratio the error is measured against.
    pub ratio: f64,
    /// Ratings cautions (empty when every rating has room).
    pub cautions: Vec<String>,
    /// White output current noise density, A/√Hz (small-signal; docs/model.md).
    pub noise_a_per_rthz: f64,
    pub noise_sources: Vec<NoiseSourceReport>,
    /// The program rail, volts from the mirror rail (null: the input current is forced).
    pub rail_v: Option<f64>,
    pub r_ref_ohm: Option<f64>,
    pub r_ref_resistor: Option<String>,
    /// Power in R_ref at this point, watts.
    pub r_ref_power_w: Option<f64>,
    /// The output current's temperature coefficient at this point, ppm/K (null when a
    /// neighbouring ambient does not solve).
    pub tempco_ppm_per_k: Option<f64>,
}

/// One output of the solved point.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct OutputReport {
    pub output: usize,
    #[serde(rename = "i_out_a")]
    pub i_out: f64,
    pub error: f64,
}

/// One noise source of the solved point and what it puts on the output current.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseSourceReport {
    pub source: String,
    pub kind: String,
    pub transfer: f64,
    pub density_a_per_rthz: f64,
    pub flicker_a2: f64,
}

fn role_name(role: Role) -> String {
    match role {
        Role::Matched { pair, member } => format!(
            "pair{}-{}",
            pair + 1,
            if member == 0 { "ref" } else { "mirror" }
        ),
        Role::Helper => "helper".to_string(),
    }
}

fn check(
    what: &'static str,
    value: f64,
    ok: bool,
    expected: &'static str,
) -> Result<(), SolveCommandError> {
    use crate::units::Dimension as D;
    if ok && value.is_finite() {
        Ok(())
    } else {
        let dimension = match what {
            "the input current" => D::Current,
            "the program rail" => D::Voltage,
            "R_ref" => D::Resistance,
            "the output voltage" | "the supply" | "the V_BE offset" => D::Voltage,
            "the ambient temperature" => D::Temperature,
            "RE1" | "RE2" => D::Resistance,
            "the beta deviation" => D::Fraction,
            _ => D::Number,
        };
        Err(SolveCommandError::BadValue {
            what,
            value,
            dimension,
            expected,
        })
    }
}

/// Runs the `solve` command.
pub fn solve_command(
    catalog: &Catalog,
    args: &SolveArgs,
) -> Result<SolveReport, SolveCommandError> {
    let pair = catalog
        .transistor(&args.part)
        .ok_or_else(|| SolveCommandError::UnknownPart {
            id: args.part.clone(),
            suggestions: suggestions(catalog, &args.part),
        })?;
    let helper = match &args.helper {
        Some(id) => {
            let h = catalog
                .transistor(id)
                .ok_or_else(|| SolveCommandError::UnknownHelper {
                    id: id.clone(),
                    suggestions: suggestions(catalog, id),
                })?;
            if h.polarity != pair.polarity {
                return Err(SolveCommandError::HelperPolarity {
                    helper: h.id.clone(),
                    helper_polarity: h.polarity.as_str(),
                    part: pair.id.clone(),
                    part_polarity: pair.polarity.as_str(),
                });
            }
            Some(h)
        }
        None => catalog.cheapest_single(pair.polarity),
    };
    let supply = args.supply_v.unwrap_or(args.v_out_v);
    let program = programming(args)?;
    let r_ref_class = match &args.r_ref_resistor {
        None => None,
        Some(id) => Some(catalog.resistor(id).ok_or_else(|| {
            SolveCommandError::UnknownResistor {
                id: id.clone(),
                suggestions: crate::input::did_you_mean(
                    id,
                    catalog.resistors.iter().map(|r| r.id.as_str()),
                )
                .into_iter()
                .collect(),
                known: catalog.resistors.iter().map(|r| r.id.clone()).collect(),
            }
        })?),
    };
    let i_in_hint = match program {
        Program::Forced(i) => i,
        // Only a start-point hint: the netlist solves the input current itself.
        Program::Resistor { rail_v, r_ref_ohm } => rail_v / r_ref_ohm,
    };
    check(
        "the output voltage",
        args.v_out_v,
        args.v_out_v >= 0.0,
        "a voltage >= 0 V from the mirror rail",
    )?;
    check(
        "the supply",
        supply,
        supply >= args.v_out_v,
        "a supply at or above the output voltage",
    )?;
    check(
        "the ambient temperature",
        args.ambient_k,
        args.ambient_k > 0.0,
        "a temperature above absolute zero",
    )?;
    let widlar = !args.topology.desc().has_re1;
    let ratio = args.ratio.unwrap_or(1.0);
    check(
        "the ratio",
        ratio,
        ratio > 0.0,
        "a ratio I_out/I_in above 0",
    )?;
    let (re1_ohm, re2_ohm) = resistors(args, widlar, ratio, i_in_hint)?;
    check("RE1", re1_ohm, re1_ohm >= 0.0, "a resistance >= 0 ohm")?;
    check("RE2", re2_ohm, re2_ohm >= 0.0, "a resistance >= 0 ohm")?;
    check(
        "the V_BE offset",
        args.dvbe_v,
        args.dvbe_v.abs() < 0.1,
        "an offset within +-100 mV",
    )?;
    check(
        "the beta deviation",
        args.dbeta,
        args.dbeta > -1.0,
        "a relative deviation above -1",
    )?;

    let design = Design {
        shape: args.shape,
        r_ref: match program {
            Program::Forced(_) => None,
            Program::Resistor { r_ref_ohm, .. } => Some(crate::circuit::RefResistor {
                ohm: r_ref_ohm,
                tcr_per_k: r_ref_class.map_or(0.0, |r| r.tcr_per_k),
            }),
        },
        topology: args.topology,
        pair,
        helper,
        re1_ohm,
        re2_ohm,
        re_tcr_per_k: 0.0,
    };
    let mm = Mismatch {
        dvbe_v: [args.dvbe_v, 0.0],
        dbeta: [args.dbeta, 0.0],
        ..Mismatch::default()
    };
    let op = OperatingPoint {
        rail_v: match program {
            Program::Forced(_) => None,
            Program::Resistor { rail_v, .. } => Some(rail_v),
        },
        i_in_a: i_in_hint,
        v_out_v: args.v_out_v,
        supply_v: supply,
        t_amb_k: args.ambient_k,
    };
    let opts = SolveOptions {
        self_heating: args.self_heating,
    };
    let fail = |f: SolveFailure| match f {
        SolveFailure::HelperMissing { .. } | SolveFailure::Invalid { .. } => {
            SolveCommandError::NoHelper(f)
        }
        other => SolveCommandError::Failed(other),
    };
    let net = Netlist::compile(&design, &mm).map_err(fail)?;
    let (sol, noise) = net.solve_with_noise(&op, &opts).map_err(fail)?;
    let r_out = net.output_resistance(&op, &opts).map_err(fail)?;
    let n = ratio;
    // Without an Early effect and without self-heating nothing but junction leakage
    // moves I_out with V_out: the output resistance is infinite (the solved derivative
    // is then rounding noise, e.g. 8e84 ohm).
    let helper_used = if helper_needed(&design) { helper } else { None };
    let early = pair.model.early_voltage_v.is_some()
        || helper_used.is_some_and(|h| h.model.early_voltage_v.is_some());
    let r_out = Some(r_out.abs()).filter(|r| r.is_finite() && (early || args.self_heating));
    let mut nodes: BTreeMap<String, f64> = sol
        .nodes()
        .iter()
        .map(|nv| (nv.name.to_string(), nv.volts))
        .collect();
    nodes.insert("R".to_string(), 0.0);
    let placed_helper = if crate::check::helpers_fit_in_spares_for(args.topology, args.shape, pair)
    {
        None
    } else {
        helper
    };
    let r_ref_ohm = design.r_ref.map(|r| r.ohm);
    let packages = match crate::model::fanout::form(args.topology, args.shape) {
        Ok(form) if !args.shape.is_single() => check::place_form(form, pair, placed_helper),
        _ => check::place(args.topology, pair, placed_helper),
    };
    let parts = crate::check::refdes::elements_of_shape(
        args.topology,
        args.shape,
        &packages,
        re1_ohm,
        re2_ohm,
        None,
        r_ref_ohm.map(|ohm| crate::check::refdes::RefPart {
            ohm,
            class: args.r_ref_resistor.as_deref(),
        }),
    );
    let mut cautions = rating_cautions(&design, helper_used, &sol, &op);
    if let Some(c) = r_ref_caution(&parts, r_ref_class, &sol, args.ambient_k) {
        cautions.push(c);
    }
    let err = |i: f64| i / (n * sol.i_in_a) - 1.0;
    let (worst, worst_error) = sol.worst_output(err);
    Ok(SolveReport {
        i_in: sol.i_in_a,
        i_out: sol.outputs()[worst],
        error: worst_error,
        worst_output: worst + 1,
        outputs: sol
            .outputs()
            .iter()
            .enumerate()
            .map(|(k, &i)| OutputReport {
                output: k + 1,
                i_out: i,
                error: err(i),
            })
            .collect(),
        r_out,
        v_in: sol.v_in_v,
        balance_voltage: balance_voltage(&design, n, &op, &mm, &opts),
        nodes,
        transistors: sol
            .transistors()
            .iter()
            .map(|q| TransistorReport {
                designator: crate::check::refdes::designator_of(&parts, q.name)
                    .unwrap_or(q.name)
                    .to_string(),
                name: q.name.to_string(),
                role: role_name(q.role),
                v_be: q.v_be,
                v_ce: q.v_ce,
                i_c: q.i_c,
                i_b: q.i_b,
                t_junction_c: q.t_junction_k - ZERO_CELSIUS_K,
                region: q.region.as_str().to_string(),
            })
            .collect(),
        iterations: sol.iterations,
        ratio: n,
        cautions,
        rail_v: program.rail(),
        r_ref_ohm,
        r_ref_resistor: r_ref_ohm.and(r_ref_class.map(|r| r.id.clone())),
        r_ref_power_w: r_ref_ohm.map(|_| sol.r_ref_power_w),
        tempco_ppm_per_k: tempco(&net, &op, &opts, sol.i_out_a).map(|t| t * 1e6),
        noise_a_per_rthz: noise.white_density(),
        noise_sources: noise
            .sources
            .iter()
            .map(|s| NoiseSourceReport {
                source: s.element.to_string(),
                kind: s.kind.as_str().to_string(),
                transfer: s.transfer,
                density_a_per_rthz: s.output_white_a2_per_hz().sqrt(),
                flicker_a2: s.output_flicker_a2(),
            })
            .collect(),
    })
}

/// How the input is set.
#[derive(Debug, Clone, Copy, PartialEq)]
enum Program {
    Forced(f64),
    Resistor { rail_v: f64, r_ref_ohm: f64 },
}

impl Program {
    fn rail(self) -> Option<f64> {
        match self {
            Program::Forced(_) => None,
            Program::Resistor { rail_v, .. } => Some(rail_v),
        }
    }
}

/// `--iin`, or `--rail` with `--rref`: exactly one way of setting the input.
fn programming(args: &SolveArgs) -> Result<Program, SolveCommandError> {
    let bad = |m: &str| Err(SolveCommandError::Input(m.to_string()));
    match (args.i_in_a, args.rail_v, args.r_ref_ohm) {
        (Some(_), Some(_), _) => bad(
            "--iin and --rail both set the input: give --iin for a forced input current, or --rail with --rref for a programming resistor, not both",
        ),
        (Some(_), None, Some(_)) => bad(
            "--rref needs --rail (the rail it hangs from) instead of --iin: a programmed input current is solved, not forced",
        ),
        (Some(i), None, None) => {
            if args.r_ref_resistor.is_some() {
                return bad("--rref-resistor needs --rail and --rref (a programming resistor)");
            }
            check("the input current", i, i > 0.0, "a current above 0 A")?;
            Ok(Program::Forced(i))
        }
        (None, Some(_), None) => bad(
            "--rail needs --rref, the programming resistor from the rail to the input (for example --rail 12V --rref 11k)",
        ),
        (None, Some(rail_v), Some(r_ref_ohm)) => {
            check(
                "the program rail",
                rail_v,
                rail_v > 0.0,
                "a voltage above 0 V from the mirror rail",
            )?;
            check("R_ref", r_ref_ohm, r_ref_ohm > 0.0, "a resistance above 0 ohm")?;
            Ok(Program::Resistor { rail_v, r_ref_ohm })
        }
        (None, None, _) => bad(
            "give the input: --iin for a forced input current (for example --iin 100uA), or --rail with --rref for a programming resistor (for example --rail 12V --rref 11k)",
        ),
    }
}

/// The output's relative slope with the ambient at `op`: a central difference over
/// +-5 K (`None` when either neighbour does not solve).
fn tempco(net: &Netlist, op: &OperatingPoint, opts: &SolveOptions, i_out: f64) -> Option<f64> {
    const DT: f64 = 5.0;
    let at = |t: f64| {
        net.solve(&OperatingPoint { t_amb_k: t, ..*op }, opts)
            .ok()
            .map(|s| s.i_out_a)
    };
    let (lo, hi) = (at(op.t_amb_k - DT)?, at(op.t_amb_k + DT)?);
    let t = (hi - lo) / (2.0 * DT * i_out);
    t.is_finite().then_some(t)
}

/// R_ref's power against its class's rating derated at the ambient (the default chip
/// rating when no class is named), as `check` judges it.
fn r_ref_caution(
    parts: &[crate::check::refdes::Element],
    class: Option<&crate::model::ResistorClass>,
    sol: &crate::circuit::Solution,
    ambient_k: f64,
) -> Option<String> {
    let name = crate::check::refdes::designator_of(parts, crate::check::refdes::R_REF_NAME)?;
    let rating = match class {
        Some(c) => c.power_rating_at(ambient_k),
        None => crate::model::derated_power(crate::model::DEFAULT_POWER_RATING_W, ambient_k),
    };
    let p = sol.r_ref_power_w;
    let of = if class.is_some() {
        "its class's rating"
    } else {
        "a chip resistor's default rating (no --rref-resistor)"
    };
    if p > rating {
        Some(format!(
            "{name} (R_ref) dissipates {} against {} allowed at this ambient ({of}, derated above 70 °C)",
            eng(p, "W"),
            eng(rating, "W")
        ))
    } else if p > 0.5 * rating {
        Some(format!(
            "{name} (R_ref) dissipates {:.0} % of {of} at this ambient; choose a larger size or a higher-rated class",
            100.0 * p / rating
        ))
    } else {
        None
    }
}

fn helper_needed(design: &Design) -> bool {
    check::helper_count(design.topology) > 0
        && !check::helpers_fit_in_spares_for(design.topology, design.shape, design.pair)
}

/// RE1 and RE2 from what was given; a lopsided pair is refused rather than assumed.
fn resistors(
    args: &SolveArgs,
    widlar: bool,
    ratio: f64,
    i_in_a: f64,
) -> Result<(f64, f64), SolveCommandError> {
    let bad = |m: String| Err(SolveCommandError::Resistors(m));
    if widlar {
        if args.re1_ohm.is_some_and(|r| r > 0.0) {
            return bad("a Widlar has no RE1: give its emitter resistor with --re2".into());
        }
        let re2 = args.re2_ohm.unwrap_or(0.0);
        if re2 > 0.0 && args.ratio.is_none() {
            return bad(
                "a Widlar sets a ratio below 1: give the ratio its error is measured against with --ratio (for example --ratio 0.1)".into(),
            );
        }
        return Ok((0.0, re2));
    }
    let suggestion = |re1: f64| -> String {
        match crate::rank::ratio_re2(re1, ratio, i_in_a, args.ambient_k) {
            Some(re2) => format!(
                "for a ratio of {ratio} at {} and this ambient, n I_in RE2 = I_in RE1 - V_T ln(n) gives RE2 = {}",
                eng(i_in_a, "A"),
                eng(re2, "Ω")
            ),
            None => format!("RE1 is too small to set a ratio of {ratio} at this current"),
        }
    };
    match (args.re1_ohm, args.re2_ohm) {
        (Some(re1), None) if re1 > 0.0 => bad(format!(
            "--re1 without --re2 would solve a lopsided mirror; give --re2 as well (or --re for equal resistors): {}",
            suggestion(re1)
        )),
        (None, Some(re2)) if re2 > 0.0 => bad(
            "--re2 without --re1 would solve a lopsided mirror; give --re1 as well (or --re for equal resistors)".into(),
        ),
        (re1, re2) => Ok((re1.unwrap_or(0.0), re2.unwrap_or(0.0))),
    }
}

/// The ratings `check` judges, at this one operating point: V_CE against the derated
/// VCEO, I_C against IC max, each package's dissipation against its derated rating.
fn rating_cautions(
    design: &Design,
    helper: Option<&crate::model::TransistorClass>,
    sol: &crate::circuit::Solution,
    op: &OperatingPoint,
) -> Vec<String> {
    let packages = match crate::model::fanout::form(design.topology, design.shape) {
        Ok(form) if !design.shape.is_single() => check::place_form(form, design.pair, helper),
        _ => check::place(design.topology, design.pair, helper),
    };
    let resolved = check::ResolvedDesign {
        spec: check::DesignSpec {
            shape: design.shape,
            topology: design.topology,
            pair: design.pair.id.clone(),
            helper: helper.map(|h| h.id.clone()),
            re1_ohm: design.re1_ohm,
            re2_ohm: design.re2_ohm,
            resistor: None,
            r_ref_ohm: 0.0,
            r_ref_resistor: None,
            r_ref_pick: None,
        },
        pair: design.pair,
        helper,
        resistor: None,
        r_ref: None,
        packages,
        cost: 0.0,
    };
    let desc = design.topology.desc();
    let state = check::CornerState {
        corner: check::OperatingCorner {
            i_in_a: op.i_in_a,
            rail_v: op.rail_v,
            v_out_v: op.v_out_v,
            t_amb_k: op.t_amb_k,
        },
        i_out_a: sol.i_out_a,
        i_in_a: sol.i_in_a,
        r_ref_power_w: sol.r_ref_power_w,
        v_in_v: sol.v_in_v,
        error: f64::NAN,
        output_errors: vec![f64::NAN],
        worst_output: 1,
        devices: sol
            .transistors()
            .iter()
            .map(|t| check::DeviceState {
                name: t.name,
                v_be_v: t.v_be,
                v_ce_v: t.v_ce,
                i_c_a: t.i_c,
                i_b_a: t.i_b,
                t_junction_k: t.t_junction_k,
                collector_at_supply: desc
                    .transistors
                    .iter()
                    .any(|l| l.name == t.name && l.collector == "S"),
            })
            .collect(),
    };
    let states = std::slice::from_ref(&state);
    let mut out = Vec::new();
    let v = check::vceo(&resolved, states);
    if !v.pass {
        out.push(format!(
            "{}: V_CE {} exceeds the derated VCEO {} (80 % of the class's rating)",
            v.detail,
            eng(v.value, "V"),
            eng(v.limit, "V")
        ));
    } else if v.value > 0.8 * v.limit {
        out.push(format!(
            "{}: V_CE {} is {:.0} % of the derated VCEO; allow for supply transients",
            v.detail,
            eng(v.value, "V"),
            100.0 * v.value / v.limit
        ));
    }
    let i = check::ic_max(&resolved, states);
    if !i.pass {
        out.push(format!(
            "{}: I_C {} exceeds the class's IC max {}",
            i.detail,
            eng(i.value, "A"),
            eng(i.limit, "A")
        ));
    }
    let p = check::dissipation(&resolved, states);
    if !p.pass {
        out.push(format!(
            "{}: dissipates {} against {} allowed at this ambient (rating derated linearly to zero at 150 °C)",
            p.detail,
            eng(p.value, "W"),
            eng(p.limit, "W")
        ));
    } else if p.value > 0.5 * p.limit {
        out.push(format!(
            "{}: dissipates {:.0} % of its derated rating; check the layout's copper and the datasheet's thermal data",
            p.detail,
            100.0 * p.value / p.limit
        ));
    }
    out
}

/// Writes the report as two tables: the figures, then one row per transistor.
pub fn write_solve_table(report: &SolveReport, out: &mut dyn io::Write) -> io::Result<()> {
    let mut figures = Table::new();
    figures
        .load_preset(UTF8_FULL)
        .set_content_arrangement(ContentArrangement::Disabled)
        .set_header(vec!["figure", "value"]);
    if let (Some(rail), Some(r)) = (report.rail_v, report.r_ref_ohm) {
        figures.add_row(vec!["program rail".to_string(), eng(rail, "V")]);
        figures.add_row(vec![
            "R_ref".to_string(),
            match &report.r_ref_resistor {
                Some(c) => format!("{} ({c})", eng(r, "Ω")),
                None => format!("{} (TCR 0: no --rref-resistor)", eng(r, "Ω")),
            },
        ]);
    }
    figures.add_row(vec![
        if report.rail_v.is_some() {
            "input current (solved)"
        } else {
            "input current"
        }
        .to_string(),
        eng(report.i_in, "A"),
    ]);
    if report.outputs.len() > 1 {
        for o in &report.outputs {
            let worst = if o.output == report.worst_output {
                " (worst)"
            } else {
                ""
            };
            figures.add_row(vec![
                format!("output {} current", o.output),
                format!(
                    "{}, error {:+.4} %{worst}",
                    eng(o.i_out, "A"),
                    o.error * 100.0
                ),
            ]);
        }
        figures.add_row(vec![
            format!("error (output {}, the worst)", report.worst_output),
            format!("{:+.4} %", report.error * 100.0),
        ]);
    } else {
        figures.add_row(vec!["output current".to_string(), eng(report.i_out, "A")]);
        figures.add_row(vec![
            "error".to_string(),
            format!("{:+.4} %", report.error * 100.0),
        ]);
    }
    figures.add_row(vec![
        "output resistance".to_string(),
        report
            .r_out
            .map_or("infinite (no Early effect)".to_string(), |r| eng(r, "Ω")),
    ]);
    figures.add_row(vec!["input voltage".to_string(), eng(report.v_in, "V")]);
    if let Some(p) = report.r_ref_power_w {
        figures.add_row(vec!["R_ref power".to_string(), eng(p, "W")]);
    }
    figures.add_row(vec![
        "output tempco (±5 K)".to_string(),
        report
            .tempco_ppm_per_k
            .map_or("no solution at ±5 K".to_string(), |t| {
                format!("{t:+.0} ppm/K")
            }),
    ]);
    figures.add_row(vec![
        "balance voltage".to_string(),
        report
            .balance_voltage
            .map_or("none within V(in)..supply".to_string(), |v| eng(v, "V")),
    ]);
    for (name, v) in &report.nodes {
        figures.add_row(vec![format!("V({name})"), eng(*v, "V")]);
    }
    figures.add_row(vec![
        "output noise (white)".to_string(),
        eng(report.noise_a_per_rthz, "A/√Hz"),
    ]);
    figures.add_row(vec![
        "Newton iterations".to_string(),
        report.iterations.to_string(),
    ]);
    writeln!(out, "{figures}")?;
    let mut devices = Table::new();
    devices
        .load_preset(UTF8_FULL)
        .set_content_arrangement(ContentArrangement::Disabled)
        .set_header(vec![
            "transistor",
            "netlist",
            "role",
            "V_BE",
            "V_CE",
            "I_C",
            "I_B",
            "T_j",
            "region",
        ]);
    for q in &report.transistors {
        devices.add_row(vec![
            q.designator.clone(),
            q.name.clone(),
            q.role.clone(),
            eng(q.v_be, "V"),
            eng(q.v_ce, "V"),
            eng(q.i_c, "A"),
            eng(q.i_b, "A"),
            format!("{:.2} °C", q.t_junction_c),
            q.region.clone(),
        ]);
    }
    writeln!(out, "{devices}")?;
    if (report.ratio - 1.0).abs() > 1e-12 {
        writeln!(
            out,
            "Error measured against the requested ratio {}.",
            report.ratio
        )?;
    }
    for c in &report.cautions {
        writeln!(out, "Caution: {c}")?;
    }
    writeln!(
        out,
        "Device values are typical of the class, not guaranteed; check ratings against the datasheet."
    )
}
