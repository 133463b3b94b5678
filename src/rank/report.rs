//! The finished reports of `rank`, `check` and `cheaper`: plain serde data that every
//! output format is written from. JSON keys follow one convention, shared with the CSV
//! columns: a dimensioned number is SI and its key ends in the unit (`_a`, `_v`, `_ohm`,
//! `_w`, `_c` for °C); errors, yields, margins, ratios and costs are plain numbers
//! (fractions; costs in the catalog's currency) without a suffix.

use std::collections::BTreeMap;
use std::fmt;

use serde::{Serialize, Serializer};

use crate::check::{
    describe_noise_measure, Check, CheckName, CornerRow, CornerState, DesignSpec, ErrorBudget,
    Evaluation, NoiseFigure, RandomCause, SystematicCause, VCEO_DERATING,
};
use crate::model::{LoadKind, Requirement, ZERO_CELSIUS_K};

use super::order::Prefer;

/// Bumped whenever a key changes meaning or disappears. 2: the check name
/// `no-convergence` became `no-solution`, compliance follows `min_vce`, checks whose
/// corners did not solve are reported with a null value ("not available"); every key of a
/// dimensioned SI number ends in its unit (`_a`, `_v`, `_ohm`, `_w`, `_c` for °C), as in
/// the CSV (`v_in_max` became `v_in_max_v`; corner, budget and junction keys likewise);
/// `relax` added. 3: the noise report's `i_in` and `v_out` became `i_in_a` and `v_out_v`
/// (and `solve`'s and `curves`' JSON follow the same rule: `i_out_a`, `v_be_v`, `nodes_v`,
/// ambients as `t_amb_c`).
pub const SCHEMA_VERSION: u32 = 3;

/// One judged check as reported.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckRow {
    pub name: CheckName,
    pub value: f64,
    pub limit: f64,
    pub margin: f64,
    pub pass: bool,
    pub detail: String,
}

impl From<&Check> for CheckRow {
    fn from(c: &Check) -> Self {
        CheckRow {
            name: c.name,
            value: c.value,
            limit: c.limit,
            margin: c.margin,
            pass: c.pass,
            detail: c.detail.clone(),
        }
    }
}

/// One candidate design and its figures.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CandidateRow {
    /// Position in the ranking (1-based); `None` outside a ranking.
    pub rank: Option<usize>,
    pub topology: &'static str,
    /// Outputs fed by the one input side.
    pub outputs: u8,
    /// The area ratio of each output: `1`, `n` (n devices in parallel on each output) or
    /// `1/n` (n on the input side).
    pub area: String,
    /// The output (1-based) that governs the error figures: the worst one.
    pub worst_output: u8,
    #[serde(skip)]
    pub shape: crate::model::Shape,
    pub part: String,
    pub helper: Option<String>,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    pub resistor: Option<String>,
    pub cost: f64,
    pub ratio_achieved: f64,
    pub error_systematic: f64,
    pub error_random_sigma: f64,
    pub error_total: f64,
    #[serde(rename = "yield")]
    pub yield_fraction: f64,
    /// 95 % Wilson interval of `yield` from the number of builds; `null` without a yield.
    pub yield_ci_95: Option<[f64; 2]>,
    /// Monte Carlo builds behind `yield` and `yield_solved` (0 without a yield).
    pub yield_samples: u32,
    /// Yield with every sampled build re-solved (`check` and `--explain` only).
    pub yield_solved: f64,
    pub r_out_min_ohm: f64,
    pub compliance_v: f64,
    #[serde(rename = "v_in_max_v")]
    pub v_in_max: f64,
    /// White output current noise density at the worst corner, A/√Hz (`null` when not
    /// computed: shown rows, `check` and requirements with `max_noise` have it).
    pub noise_a_per_rthz: f64,
    /// The output noise at the worst corner by source.
    pub noise: Option<NoiseReport>,
    /// The programming resistor (null when the input current is forced).
    pub r_ref_ohm: Option<f64>,
    pub r_ref_resistor: Option<String>,
    /// R_ref's power at the worst corner, watts (null without R_ref).
    pub r_ref_power_w: Option<f64>,
    /// The output's temperature coefficient, ppm/K, averaged over the ambient range.
    pub tempco_ppm_per_k: f64,
    /// The steepest slope between neighbouring ambient points, ppm/K (signed).
    pub tempco_worst_ppm_per_k: f64,
    pub governing_check: Option<CheckName>,
    pub pareto: bool,
    pub checks: Vec<CheckRow>,
    /// Transistors with `V_CB < 0` (forward-biased collector junction, soft saturation)
    /// at `V_out` min at some corner; the compliance rule is `V_CE >= min_vce`, so this
    /// is a caution, not a failure.
    pub soft_saturation: Vec<&'static str>,
}

/// One element's share of the output noise.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseItem {
    /// Transistor or resistor (`Q2`, `RE1`).
    pub source: &'static str,
    /// Its output current density in the judged measure, A/√Hz.
    pub density_a_per_rthz: f64,
    /// Its fraction of the output noise power.
    pub fraction: f64,
}

/// The output current noise at the worst corner and its breakdown by source.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NoiseReport {
    #[serde(rename = "i_in_a")]
    pub i_in: f64,
    #[serde(rename = "v_out_v")]
    pub v_out: f64,
    pub t_amb_c: f64,
    /// What was judged: `white density`, `density at F Hz` or the band's average density.
    pub measure: String,
    /// The judged measure (the white density when the requirement names none), A/√Hz.
    pub density_a_per_rthz: f64,
    /// RMS noise over the requirement's band, A (band limits only).
    pub band_rms_a: Option<f64>,
    /// Largest share first.
    pub sources: Vec<NoiseItem>,
}

/// Where the small-signal noise figures hold (shown beside them).
pub const NOISE_VALIDITY: &str = "small-signal, valid well below the transistors' poles (no capacitance modelled) and above the thermal corner (junction temperatures held)";

impl From<&NoiseFigure> for NoiseReport {
    fn from(f: &NoiseFigure) -> Self {
        NoiseReport {
            i_in: f.corner.i_in_a,
            v_out: f.corner.v_out_v,
            t_amb_c: f.corner.t_amb_k - ZERO_CELSIUS_K,
            measure: describe_noise_measure(f.band),
            density_a_per_rthz: f.judged_a_per_rthz,
            band_rms_a: f.band_rms_a,
            sources: f
                .breakdown
                .iter()
                .map(|s| NoiseItem {
                    source: s.element,
                    density_a_per_rthz: s.density_a_per_rthz,
                    fraction: s.fraction,
                })
                .collect(),
        }
    }
}

impl CandidateRow {
    /// The yield as printed: `98.0 % (95 % CI 96.9–98.7 %)`, or `—` without one.
    pub fn yield_text(&self) -> String {
        yield_with_interval(self.yield_fraction, self.yield_ci_95)
    }

    /// The re-solved yield as printed, with its own 95 % interval.
    pub fn yield_solved_text(&self) -> String {
        yield_with_interval(
            self.yield_solved,
            crate::check::wilson_interval(self.yield_solved, self.yield_samples),
        )
    }

    pub fn new(rank: Option<usize>, spec: &DesignSpec, ev: &Evaluation, pareto: bool) -> Self {
        let f = &ev.figures;
        CandidateRow {
            rank,
            topology: spec.topology.name(),
            outputs: spec.shape.outputs,
            area: spec.shape.area_text(),
            worst_output: f.worst_output.max(1),
            shape: spec.shape,
            part: spec.pair.clone(),
            helper: spec.helper.clone(),
            re1_ohm: spec.re1_ohm,
            re2_ohm: spec.re2_ohm,
            resistor: spec.resistor.clone(),
            cost: ev.cost,
            ratio_achieved: f.ratio_achieved,
            error_systematic: f.error_systematic,
            error_random_sigma: f.error_random_sigma,
            error_total: f.error_total,
            yield_fraction: f.yield_fraction,
            yield_ci_95: crate::check::wilson_interval(f.yield_fraction, f.yield_samples),
            yield_samples: f.yield_samples,
            yield_solved: f.yield_solved,
            r_out_min_ohm: f.r_out_min_ohm,
            compliance_v: f.compliance_v,
            v_in_max: f.v_in_max_v,
            noise_a_per_rthz: f.noise_a_per_rthz,
            noise: ev.noise.as_ref().map(NoiseReport::from),
            r_ref_ohm: (spec.r_ref_ohm > 0.0).then_some(spec.r_ref_ohm),
            r_ref_resistor: spec.r_ref_resistor.clone(),
            r_ref_power_w: (spec.r_ref_ohm > 0.0).then_some(f.r_ref_power_w),
            tempco_ppm_per_k: f.tempco_per_k * 1e6,
            tempco_worst_ppm_per_k: f.tempco_worst_per_k * 1e6,
            governing_check: ev.governing().map(|c| c.name),
            pareto,
            checks: ev.checks.iter().map(CheckRow::from).collect(),
            soft_saturation: ev.soft_saturation.clone(),
        }
    }

    pub fn check(&self, name: CheckName) -> Option<&CheckRow> {
        self.checks.iter().find(|c| c.name == name)
    }

    pub fn governing_margin(&self) -> f64 {
        self.governing_check
            .and_then(|g| self.check(g))
            .map_or(f64::NAN, |c| c.margin)
    }

    /// A short human name: `wilson npn-dual-matched RE 1.00k/1.00k thick-1`.
    pub fn label(&self) -> String {
        let mut s = format!("{} {}", self.topology, self.part);
        if self.outputs > 1 {
            s.push_str(&format!(" ×{} outputs", self.outputs));
        }
        if self.area != "1" {
            s.push_str(&format!(" area {}", self.area));
        }
        if let Some(h) = &self.helper {
            s.push_str(&format!(" + {h}"));
        }
        s
    }
}

/// One corner of the corner table.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CornerLine {
    /// The input current: forced, or solved through R_ref.
    #[serde(rename = "i_in_a")]
    pub i_in: f64,
    /// The programming rail, volts (programmed designs only).
    #[serde(rename = "rail_v", skip_serializing_if = "Option::is_none")]
    pub rail: Option<f64>,
    #[serde(rename = "v_out_v")]
    pub v_out: f64,
    pub t_amb_c: f64,
    #[serde(rename = "i_out_a")]
    pub i_out: f64,
    pub error: f64,
    pub error_random_sigma: f64,
    #[serde(rename = "r_out_ohm")]
    pub r_out: f64,
    #[serde(rename = "v_in_v")]
    pub v_in: f64,
    pub t_junction_max_c: f64,
}

impl From<&CornerRow> for CornerLine {
    fn from(r: &CornerRow) -> Self {
        CornerLine {
            i_in: r.i_in_a,
            rail: r.corner.rail_v,
            v_out: r.corner.v_out_v,
            t_amb_c: r.corner.t_amb_k - ZERO_CELSIUS_K,
            i_out: r.i_out_a,
            error: r.error,
            error_random_sigma: r.error_random_sigma,
            r_out: r.r_out_ohm,
            v_in: r.v_in_v,
            t_junction_max_c: r.t_junction_max_k - ZERO_CELSIUS_K,
        }
    }
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetItem {
    pub cause: &'static str,
    pub error: f64,
}

/// The error budget at the worst corner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetReport {
    #[serde(rename = "i_in_a")]
    pub i_in: f64,
    /// The programming rail at the worst corner, volts (programmed designs only).
    #[serde(rename = "rail_v", skip_serializing_if = "Option::is_none")]
    pub rail: Option<f64>,
    #[serde(rename = "v_out_v")]
    pub v_out: f64,
    pub t_amb_c: f64,
    /// Signed systematic error by cause; the lines add up to `systematic_total`.
    pub systematic: Vec<BudgetItem>,
    pub systematic_total: f64,
    /// 1-sigma random error by cause; they add in quadrature to `random_sigma`.
    pub random: Vec<BudgetItem>,
    pub random_sigma: f64,
}

impl From<&ErrorBudget> for BudgetReport {
    fn from(b: &ErrorBudget) -> Self {
        BudgetReport {
            i_in: b.corner.i_in_a,
            rail: b.corner.rail_v,
            v_out: b.corner.v_out_v,
            t_amb_c: b.corner.t_amb_k - ZERO_CELSIUS_K,
            systematic: b
                .systematic
                .iter()
                .map(|l| BudgetItem {
                    cause: SystematicCause::as_str(l.cause),
                    error: l.error,
                })
                .collect(),
            systematic_total: b.systematic_total,
            random: b
                .random
                .iter()
                .map(|l| BudgetItem {
                    cause: RandomCause::as_str(l.cause),
                    error: l.error,
                })
                .collect(),
            random_sigma: b.random_sigma,
        }
    }
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Junction {
    pub name: String,
    pub t_junction_c: f64,
    #[serde(rename = "power_w")]
    pub power: f64,
    #[serde(rename = "v_ce_v")]
    pub v_ce: f64,
    #[serde(rename = "i_c_a")]
    pub i_c: f64,
}

/// Junction temperatures at the corner with the hottest junction.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct HottestCorner {
    #[serde(rename = "i_in_a")]
    pub i_in: f64,
    #[serde(rename = "v_out_v")]
    pub v_out: f64,
    pub t_amb_c: f64,
    pub junctions: Vec<Junction>,
}

impl From<&CornerState> for HottestCorner {
    fn from(s: &CornerState) -> Self {
        HottestCorner {
            i_in: s.corner.i_in_a,
            v_out: s.corner.v_out_v,
            t_amb_c: s.corner.t_amb_k - ZERO_CELSIUS_K,
            junctions: s
                .devices
                .iter()
                .map(|d| Junction {
                    name: d.name.to_string(),
                    t_junction_c: d.t_junction_k - ZERO_CELSIUS_K,
                    power: d.power_w(),
                    v_ce: d.v_ce_v,
                    i_c: d.i_c_a,
                })
                .collect(),
        }
    }
}

/// A caution shown with results (stderr in machine formats).
#[derive(Debug, Clone, PartialEq)]
pub enum Caution {
    /// A package runs above half its derated dissipation rating.
    Dissipation {
        who: String,
        fraction: f64,
    },
    /// A transistor runs within 20 % of its derated VCEO.
    NearVceo {
        who: String,
        fraction: f64,
    },
    /// The programming resistor runs above half its derated power rating.
    RefPower {
        who: String,
        fraction: f64,
    },
    /// Transistors with a forward-biased collector junction at the lowest output voltage.
    SoftSaturation {
        who: String,
        transistors: Vec<&'static str>,
    },
    LightSource(LoadKind),
    HighVoltage {
        supply_v: f64,
    },
    /// An emitter resistor of 10 MΩ or more: leakage and contamination.
    HighValueResistor {
        who: String,
        ohms: f64,
    },
    /// Always shown: catalog values are typical, not guaranteed.
    TypicalValues,
}

/// Supplies at or above this are called out (common practice, no source: the usual
/// extra-low-voltage boundary for DC is higher, but discrete mirrors above it need
/// creepage and rating care).
pub const HIGH_VOLTAGE_V: f64 = 50.0;

impl fmt::Display for Caution {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Caution::Dissipation { who, fraction } => write!(
                f,
                "{who}: a package dissipates {:.0} % of its derated rating at the worst corner; check the layout's copper and the datasheet's thermal data",
                fraction * 100.0
            ),
            Caution::NearVceo { who, fraction } => write!(
                f,
                "{who}: a transistor sees {:.0} % of its derated VCEO ({:.0} % of the rating); allow for supply transients",
                fraction * 100.0,
                fraction * VCEO_DERATING * 100.0
            ),
            Caution::RefPower { who, fraction } => write!(
                f,
                "{who}: R_ref dissipates {:.0} % of its class's derated power rating at the worst corner; choose a larger case or a higher-rated class, and check the datasheet's derating curve",
                fraction * 100.0
            ),
            Caution::SoftSaturation { who, transistors } => write!(
                f,
                "{who}: {} {} V_CB < 0 at the lowest output voltage (soft saturation; the solved currents include it, but the datasheet's saturation figures at your current govern)",
                transistors.join(", "),
                if transistors.len() == 1 { "has" } else { "have" }
            ),
            Caution::LightSource(load) if *load == LoadKind::Laser => f.write_str(
                "the load is a laser: a current step or overshoot can destroy it and its beam can harm eyes; add protection and follow the emitter's datasheet and the applicable laser safety standard",
            ),
            Caution::LightSource(_) => f.write_str(
                "the load is an LED string: an open or shorted string or a current step can destroy it; add protection and follow the emitter's datasheet and the applicable safety standard",
            ),
            Caution::HighVoltage { supply_v } => write!(
                f,
                "the supply is {supply_v:.0} V: mind clearances, ratings at temperature and safe handling"
            ),
            Caution::HighValueResistor { who, ohms } => write!(
                f,
                "{who}: an emitter resistor of {}: at this value surface leakage through flux residue, moisture and dust on the board can rival the resistor; clean the board, consider a guard ring or conformal coating, and check the resistor datasheet's voltage coefficient",
                crate::units::format_quantity(*ohms, crate::units::Dimension::Resistance)
            ),
            Caution::TypicalValues => f.write_str(
                "catalog values are typical of each class, not guaranteed: confirm with the datasheet of the part you buy, and follow local codes and licensed engineering practice",
            ),
        }
    }
}

impl Serialize for Caution {
    fn serialize<S: Serializer>(&self, s: S) -> Result<S::Ok, S::Error> {
        s.collect_str(self)
    }
}

/// The cautions that apply to shown rows and the requirement.
pub fn cautions(req: &Requirement, rows: &[CandidateRow]) -> Vec<Caution> {
    let mut out = Vec::new();
    for r in rows {
        let who = match r.rank {
            Some(k) => format!("#{k} {}", r.label()),
            None => r.label(),
        };
        if let Some(c) = r.check(CheckName::Dissipation) {
            let fraction = c.value / c.limit;
            if fraction > 0.5 {
                out.push(Caution::Dissipation {
                    who: who.clone(),
                    fraction,
                });
            }
        }
        let ohms = r.re1_ohm.max(r.re2_ohm);
        if ohms >= crate::model::LEAKAGE_CAUTION_OHM {
            out.push(Caution::HighValueResistor {
                who: who.clone(),
                ohms,
            });
        }
        if let Some(c) = r.check(CheckName::RefPower) {
            // Half the rating: the usual resistor derating (common practice, no source).
            let fraction = c.value / c.limit;
            if fraction > 0.5 {
                out.push(Caution::RefPower {
                    who: who.clone(),
                    fraction,
                });
            }
        }
        if let Some(c) = r.check(CheckName::Vceo) {
            let fraction = c.value / c.limit;
            if fraction > 0.8 {
                out.push(Caution::NearVceo {
                    who: who.clone(),
                    fraction,
                });
            }
        }
        if !r.soft_saturation.is_empty() {
            // Rows with the same transistors in soft saturation share one line ("#1, #2,
            // #3: Q2 has ..."): five copies of one sentence hide the other cautions.
            let same = out.iter_mut().find_map(|c| match c {
                Caution::SoftSaturation { who, transistors }
                    if *transistors == r.soft_saturation =>
                {
                    Some(who)
                }
                _ => None,
            });
            match (same, r.rank) {
                (Some(who), Some(k)) => {
                    if let Some((first, _)) = who.split_once(' ').filter(|_| !who.contains(',')) {
                        *who = first.to_string();
                    }
                    who.push_str(&format!(", #{k}"));
                }
                _ => out.push(Caution::SoftSaturation {
                    who,
                    transistors: r.soft_saturation.clone(),
                }),
            }
        }
    }
    if matches!(req.load, LoadKind::Led | LoadKind::Laser) {
        out.push(Caution::LightSource(req.load));
    }
    if req.supply_v >= HIGH_VOLTAGE_V {
        out.push(Caution::HighVoltage {
            supply_v: req.supply_v,
        });
    }
    out.push(Caution::TypicalValues);
    out
}

/// A yield with its 95 % interval, as every printed yield reads.
pub fn yield_with_interval(y: f64, ci: Option<[f64; 2]>) -> String {
    if !y.is_finite() {
        return "—".to_string();
    }
    match ci {
        Some([lo, hi]) => format!(
            "{:.1} % (95 % CI {:.1}–{:.1} %)",
            y * 100.0,
            lo * 100.0,
            hi * 100.0
        ),
        None => format!("{:.1} %", y * 100.0),
    }
}

/// Full reasoning for one row.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Explanation {
    pub candidate: CandidateRow,
    pub corners: Vec<CornerLine>,
    pub budget: Option<BudgetReport>,
    pub hottest: Option<HottestCorner>,
    pub cautions: Vec<Caution>,
}

impl Explanation {
    pub fn new(req: &Requirement, row: CandidateRow, ev: &Evaluation) -> Self {
        let cautions = cautions(req, std::slice::from_ref(&row));
        Explanation {
            candidate: row,
            corners: ev.corners.iter().map(CornerLine::from).collect(),
            budget: ev.budget.as_ref().map(BudgetReport::from),
            hottest: ev.hottest.as_ref().map(HottestCorner::from),
            cautions,
        }
    }
}

/// What `rank` prints.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct RankReport {
    pub schema_version: u32,
    pub requirement: String,
    pub prefer: Prefer,
    pub exhaustive: bool,
    /// `--every-value`: every resistor value is its own row; otherwise each family
    /// (topology, pair, helper, resistor class) shows its best row.
    pub every_value: bool,
    /// Every candidate of the requirement and catalog: the same number in every command
    /// and search mode (`evaluated + unverified`).
    pub candidate_space: usize,
    /// Candidates judged: verified, or rejected by a screen that proves the failure.
    pub evaluated: usize,
    /// Feasible designs verified. A lower bound when `feasible_at_least` is true.
    pub feasible: usize,
    /// True when some candidates passed every screen but were not verified
    /// (`unverified > 0`): `feasible` and `families` are then "at least" counts.
    pub feasible_at_least: bool,
    /// Families with a feasible design among those verified.
    pub families: usize,
    /// Candidates that passed every screen but cost more than the shown rows need, so
    /// were not verified (0 with `--exhaustive` or a non-cost preference).
    pub unverified: usize,
    /// Rejected candidates by the check each was counted under, in check order.
    pub rejected_by: BTreeMap<CheckName, usize>,
    pub seed: u64,
    pub samples: u32,
    /// Solver calls made by the search and the shown rows.
    pub solves: u64,
    pub candidates: Vec<CandidateRow>,
    pub explain: Option<Explanation>,
    pub cautions: Vec<Caution>,
    /// When nothing is feasible: the smallest change to one requirement field that makes
    /// one of the nearest candidates feasible, per field, smallest change first (and the
    /// catalog advice when no class is rated for the voltage). Empty otherwise.
    pub relax: Vec<super::Relax>,
}

/// What `check` prints: one candidate plus the overall verdict.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheckReport {
    pub schema_version: u32,
    pub requirement: String,
    pub seed: u64,
    pub samples: u32,
    #[serde(flatten)]
    pub candidate: CandidateRow,
    pub pass: bool,
    /// The corner table, when asked for.
    pub corners: Option<Vec<CornerLine>>,
    pub budget: Option<BudgetReport>,
    pub hottest: Option<HottestCorner>,
    pub cautions: Vec<Caution>,
}

/// A design offered by `cheaper`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Alternative {
    #[serde(flatten)]
    pub candidate: CandidateRow,
    /// Reference cost minus this design's cost (negative when dearer).
    pub saving: f64,
    /// The check that governs the reference design.
    pub reference_governing_check: Option<CheckName>,
    /// Margin on that check: reference minus this design (positive = margin given up).
    pub margin_given_up: f64,
}

/// The nearest cheaper design that fails, and why.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct NearMiss {
    pub topology: &'static str,
    pub part: String,
    pub helper: Option<String>,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    pub resistor: Option<String>,
    /// R_ref (null when forced, or not yet sized: screened out before any solve).
    pub r_ref_ohm: Option<f64>,
    pub r_ref_resistor: Option<String>,
    pub cost: f64,
    pub failed_check: CheckName,
}

/// What `cheaper` prints.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CheaperReport {
    pub schema_version: u32,
    pub requirement: String,
    /// `cheaper` or `second-source`.
    pub mode: &'static str,
    pub seed: u64,
    pub samples: u32,
    pub reference: CandidateRow,
    pub reference_pass: bool,
    pub alternatives: Vec<Alternative>,
    /// Set when there is no alternative: the nearest cheaper design and its failing check.
    pub nearest_failing: Option<NearMiss>,
    /// One plain sentence on the outcome.
    pub summary: String,
    pub cautions: Vec<Caution>,
}
