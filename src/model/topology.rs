//! The six mirror topologies of MODEL.md as data: netlists in NPN sink form with roles.
//!
//! Node names: `R` the mirror rail (0 V), `S` the opposite rail (V_S), `in` the input
//! node (I_in forced into it), `out` the output node (held at V_out), `e1`/`e2` the
//! emitters of Q1/Q2 (joined to `R` through RE1/RE2, or merged with `R` when the
//! resistor is 0 ohm), and internal nodes named per topology. Adding a topology means
//! adding one `TopologyDesc` here; the solver never matches on the topology.

/// Which topology. The order is the display order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Topology {
    Simple,
    BetaHelper,
    Wilson,
    Wilson4,
    Cascode,
    Widlar,
}

pub const ALL_TOPOLOGIES: [Topology; 6] = [
    Topology::Simple,
    Topology::BetaHelper,
    Topology::Wilson,
    Topology::Wilson4,
    Topology::Cascode,
    Topology::Widlar,
];

/// What a transistor does in the circuit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Role {
    /// Member `member` (0 = reference device, 1 = the device that carries the mismatch)
    /// of matched pair `pair` (0 = Q1,Q2; 1 = Q3,Q4).
    Matched { pair: u8, member: u8 },
    /// An unmatched extra transistor (the beta helper's Q3, the Wilson's Q3): a spare
    /// device of the pair's package when the class has one, otherwise a single.
    Helper,
}

/// One transistor line: `name collector base emitter`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct TransistorLine {
    pub name: &'static str,
    pub collector: &'static str,
    pub base: &'static str,
    pub emitter: &'static str,
    pub role: Role,
}

/// A topology description: its netlist and what it offers.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct TopologyDesc {
    pub topology: Topology,
    /// The name used in files and on the command line.
    pub name: &'static str,
    pub summary: &'static str,
    pub transistors: &'static [TransistorLine],
    /// RE1 exists (from `e1` to `R`). Widlar has only RE2.
    pub has_re1: bool,
    /// Emitter degeneration (RE1 = RE2 > 0) is an option.
    pub allows_degeneration: bool,
    /// Number of matched pairs (1 or 2).
    pub matched_pairs: u8,
    /// The output side (every matched pair's second member) can be copied to feed several
    /// outputs from one input side, and take an area ratio (see `fanout`). False for the
    /// Wilson forms, whose output transistor sits inside the feedback loop.
    pub fans_out: bool,
    /// Per transistor (same order as `transistors`): which current it nominally carries.
    /// The solver uses this only for its start point.
    pub branches: &'static [Branch],
    /// Closed-form textbook estimates for screening and explanations.
    pub estimates: Estimates,
}

/// The current a transistor nominally carries, for the solver's start point.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Branch {
    /// About `I_in`.
    Input,
    /// About the output current.
    Output,
    /// About the matched pair's base currents (a beta helper).
    BaseCurrents,
}

/// What the closed-form estimates need: one device's typical figures at the operating point.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct EstimateInputs {
    pub beta: f64,
    /// `None` = no Early effect (infinite output resistance from `r_o`).
    pub early_voltage_v: Option<f64>,
    pub i_in_a: f64,
    pub thermal_voltage_v: f64,
    /// A typical V_BE at the operating current.
    pub vbe_v: f64,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    /// Outputs fed by the input side (1 for the six descriptions as written).
    pub outputs: f64,
    /// The ratio set by devices in parallel (n, 1/n or 1; see `fanout::Shape`).
    pub area_ratio: f64,
}

impl EstimateInputs {
    /// The ratio of one output: RE1/RE2 when degenerated (the resistors then set it),
    /// otherwise the area ratio.
    pub fn resistor_ratio(&self) -> f64 {
        if self.re1_ohm > 0.0 && self.re2_ohm > 0.0 {
            self.re1_ohm / self.re2_ohm
        } else {
            self.area_ratio
        }
    }

    /// Every output's share of the input side's base-current load: N n.
    fn load(&self) -> f64 {
        self.outputs * self.resistor_ratio()
    }

    /// `r_o = VAF / I_C` of a device carrying `i_a`.
    fn r_o(&self, i_a: f64) -> f64 {
        self.early_voltage_v.map_or(f64::INFINITY, |v| v / i_a)
    }

    /// `r_o (1 + g_m R_E')`, `R_E' = R_E || r_pi`: an emitter-degenerated output
    /// (Gray, Hurst, Lewis & Meyer, ch. 4).
    fn degenerated_r_o(&self, i_a: f64, re_ohm: f64) -> f64 {
        let gm = i_a / self.thermal_voltage_v;
        let r_pi = self.beta / gm;
        let re = if re_ohm > 0.0 {
            re_ohm * r_pi / (re_ohm + r_pi)
        } else {
            0.0
        };
        self.r_o(i_a) * (1.0 + gm * re)
    }
}

/// Closed-form estimates of one topology (functions of `EstimateInputs`).
#[derive(Clone, Copy)]
pub struct Estimates {
    /// `I_out / I_in`.
    pub ratio: fn(&EstimateInputs) -> f64,
    /// Output resistance, ohm.
    pub output_resistance_ohm: fn(&EstimateInputs) -> f64,
    /// Lowest V_out with every V_CB >= 0, volts from the mirror rail.
    pub compliance_voltage_v: fn(&EstimateInputs) -> f64,
    /// V(in), volts from the mirror rail.
    pub input_voltage_v: fn(&EstimateInputs) -> f64,
}

impl std::fmt::Debug for Estimates {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str("Estimates")
    }
}

impl PartialEq for Estimates {
    fn eq(&self, other: &Self) -> bool {
        std::ptr::fn_addr_eq(self.ratio, other.ratio)
            && std::ptr::fn_addr_eq(self.output_resistance_ohm, other.output_resistance_ohm)
            && std::ptr::fn_addr_eq(self.compliance_voltage_v, other.compliance_voltage_v)
            && std::ptr::fn_addr_eq(self.input_voltage_v, other.input_voltage_v)
    }
}

// The estimates below are the textbook first-order results (Gray, Hurst, Lewis & Meyer,
// *Analysis and Design of Analog Integrated Circuits*, ch. 4; Sedra & Smith,
// *Microelectronic Circuits*, current-mirror chapter), generalised to a resistor ratio n
// where the book gives n = 1.

fn simple_ratio(e: &EstimateInputs) -> f64 {
    // n BF / (BF + 1 + N n): BF/(BF+2) at n = N = 1; every output's base current is
    // drawn from the input node.
    let n = e.resistor_ratio();
    n / (1.0 + (1.0 + e.load()) / e.beta)
}
fn simple_r_out(e: &EstimateInputs) -> f64 {
    e.degenerated_r_o(e.i_in_a * simple_ratio(e), e.re2_ohm)
}
fn simple_compliance(e: &EstimateInputs) -> f64 {
    e.vbe_v + e.i_in_a * e.re1_ohm
}
fn one_vbe_input(e: &EstimateInputs) -> f64 {
    e.vbe_v + e.i_in_a * e.re1_ohm
}
fn two_vbe(e: &EstimateInputs) -> f64 {
    2.0 * e.vbe_v + e.i_in_a * e.re1_ohm
}
fn helper_ratio(e: &EstimateInputs) -> f64 {
    // 1 / (1 + 2/(BF(BF+1))) at n = N = 1; the helper carries every output's base
    // current.
    let n = e.resistor_ratio();
    n / (1.0 + (1.0 + e.load()) / (e.beta * (e.beta + 1.0)))
}
fn wilson_ratio(e: &EstimateInputs) -> f64 {
    let b = e.beta;
    e.resistor_ratio() * (1.0 - 2.0 / (b * b + 2.0 * b + 2.0))
}
fn half_beta_r_o(e: &EstimateInputs) -> f64 {
    // R_o ~ BF r_o / 2 (Wilson and bipolar cascode mirrors).
    e.beta * e.r_o(e.i_in_a * e.resistor_ratio()) / 2.0
}
fn cascode_ratio(e: &EstimateInputs) -> f64 {
    // Q4 passes I_C2 BF/(BF+1); the input also feeds Q1's, every Q2's and every Q4's
    // bases.
    let b = e.beta;
    let n = e.resistor_ratio();
    n * (b / (b + 1.0)) / (1.0 + (1.0 + e.load()) / b + e.load() / (b + 1.0))
}
fn widlar_ratio(e: &EstimateInputs) -> f64 {
    // I_out RE2 = V_T ln(I_in / I_out), solved by Newton in u = I_out / I_in.
    let k = e.i_in_a * e.re2_ohm / e.thermal_voltage_v;
    if k <= 0.0 {
        return simple_ratio(e);
    }
    let mut u: f64 = (1.0 / (1.0 + k)).max(1e-12);
    for _ in 0..60 {
        let g = k * u + u.ln();
        let step = g / (k + 1.0 / u);
        let next = (u - step).max(u * 0.1);
        if (next - u).abs() <= 1e-15 * u {
            u = next;
            break;
        }
        u = next;
    }
    u
}
fn widlar_r_out(e: &EstimateInputs) -> f64 {
    e.degenerated_r_o(e.i_in_a * widlar_ratio(e), e.re2_ohm)
}
fn widlar_vbe(e: &EstimateInputs) -> f64 {
    e.vbe_v
}

const fn q(
    name: &'static str,
    c: &'static str,
    b: &'static str,
    e: &'static str,
    role: Role,
) -> TransistorLine {
    TransistorLine {
        name,
        collector: c,
        base: b,
        emitter: e,
        role,
    }
}

use Branch::{BaseCurrents as BC, Input as IN, Output as OUT};

const P1A: Role = Role::Matched { pair: 0, member: 0 };
const P1B: Role = Role::Matched { pair: 0, member: 1 };
const P2A: Role = Role::Matched { pair: 1, member: 0 };
const P2B: Role = Role::Matched { pair: 1, member: 1 };

static DESCS: [TopologyDesc; 6] = [
    TopologyDesc {
        topology: Topology::Simple,
        name: "simple",
        summary: "basic two-transistor mirror",
        transistors: &[
            q("Q1", "in", "in", "e1", P1A),
            q("Q2", "out", "in", "e2", P1B),
        ],
        has_re1: true,
        allows_degeneration: true,
        matched_pairs: 1,
        fans_out: true,
        branches: &[IN, OUT],
        estimates: Estimates {
            ratio: simple_ratio,
            output_resistance_ohm: simple_r_out,
            compliance_voltage_v: simple_compliance,
            input_voltage_v: one_vbe_input,
        },
    },
    TopologyDesc {
        topology: Topology::BetaHelper,
        name: "beta-helper",
        summary: "simple mirror with a helper transistor supplying the base currents",
        transistors: &[
            q("Q1", "in", "b", "e1", P1A),
            q("Q2", "out", "b", "e2", P1B),
            q("Q3", "S", "in", "b", Role::Helper),
        ],
        has_re1: true,
        allows_degeneration: true,
        matched_pairs: 1,
        fans_out: true,
        branches: &[IN, OUT, BC],
        estimates: Estimates {
            ratio: helper_ratio,
            output_resistance_ohm: simple_r_out,
            compliance_voltage_v: simple_compliance,
            input_voltage_v: two_vbe,
        },
    },
    TopologyDesc {
        topology: Topology::Wilson,
        name: "wilson",
        summary: "three-transistor Wilson mirror, output at Q3's collector",
        transistors: &[
            q("Q1", "in", "b", "e1", P1A),
            q("Q2", "b", "b", "e2", P1B),
            q("Q3", "out", "in", "b", Role::Helper),
        ],
        has_re1: true,
        allows_degeneration: true,
        matched_pairs: 1,
        fans_out: false,
        branches: &[IN, OUT, OUT],
        estimates: Estimates {
            ratio: wilson_ratio,
            output_resistance_ohm: half_beta_r_o,
            compliance_voltage_v: two_vbe,
            input_voltage_v: two_vbe,
        },
    },
    TopologyDesc {
        topology: Topology::Wilson4,
        name: "wilson4",
        summary: "four-transistor Wilson mirror; Q4 evens out Q1's and Q2's V_CE",
        transistors: &[
            q("Q1", "x", "b", "e1", P1A),
            q("Q4", "in", "in", "x", P2B),
            q("Q2", "b", "b", "e2", P1B),
            q("Q3", "out", "in", "b", P2A),
        ],
        has_re1: true,
        allows_degeneration: true,
        matched_pairs: 2,
        fans_out: false,
        branches: &[IN, IN, OUT, OUT],
        estimates: Estimates {
            ratio: wilson_ratio,
            output_resistance_ohm: half_beta_r_o,
            compliance_voltage_v: two_vbe,
            input_voltage_v: two_vbe,
        },
    },
    TopologyDesc {
        topology: Topology::Cascode,
        name: "cascode",
        summary: "stacked (cascoded) mirror",
        transistors: &[
            q("Q1", "n1", "n1", "e1", P1A),
            q("Q3", "in", "in", "n1", P2A),
            q("Q2", "n2", "n1", "e2", P1B),
            q("Q4", "out", "in", "n2", P2B),
        ],
        has_re1: true,
        allows_degeneration: true,
        matched_pairs: 2,
        fans_out: true,
        branches: &[IN, IN, OUT, OUT],
        estimates: Estimates {
            ratio: cascode_ratio,
            output_resistance_ohm: half_beta_r_o,
            compliance_voltage_v: two_vbe,
            input_voltage_v: two_vbe,
        },
    },
    TopologyDesc {
        topology: Topology::Widlar,
        name: "widlar",
        summary: "Widlar mirror for ratios below 1: RE2 only",
        transistors: &[
            q("Q1", "in", "in", "R", P1A),
            q("Q2", "out", "in", "e2", P1B),
        ],
        has_re1: false,
        allows_degeneration: false,
        matched_pairs: 1,
        fans_out: true,
        branches: &[IN, OUT],
        estimates: Estimates {
            ratio: widlar_ratio,
            output_resistance_ohm: widlar_r_out,
            compliance_voltage_v: widlar_vbe,
            input_voltage_v: widlar_vbe,
        },
    },
];

impl Topology {
    pub fn desc(self) -> &'static TopologyDesc {
        &DESCS[self as usize]
    }

    pub fn name(self) -> &'static str {
        self.desc().name
    }

    pub fn from_name(name: &str) -> Option<Topology> {
        ALL_TOPOLOGIES.iter().copied().find(|t| t.name() == name)
    }

    /// Number of transistors in the netlist.
    pub fn transistor_count(self) -> usize {
        self.desc().transistors.len()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn inputs(beta: f64) -> EstimateInputs {
        EstimateInputs {
            beta,
            early_voltage_v: Some(100.0),
            i_in_a: 1e-3,
            thermal_voltage_v: 0.025852,
            vbe_v: 0.65,
            re1_ohm: 0.0,
            re2_ohm: 0.0,
            outputs: 1.0,
            area_ratio: 1.0,
        }
    }

    #[test]
    fn closed_form_estimates() {
        // Gray, Hurst, Lewis & Meyer, ch. 4; Sedra & Smith, current-mirror chapter.
        let e = inputs(100.0);
        let r = |t: Topology| (t.desc().estimates.ratio)(&e);
        assert!((r(Topology::Simple) - 100.0 / 102.0).abs() < 1e-12);
        assert!((r(Topology::BetaHelper) - 1.0 / (1.0 + 2.0 / (100.0 * 101.0))).abs() < 1e-12);
        assert!((r(Topology::Wilson) - (1.0 - 2.0 / 10202.0)).abs() < 1e-12);
        // Wilson output resistance ~ BF r_o / 2 = 100 * 100 kOhm / 2.
        let ro = (Topology::Wilson.desc().estimates.output_resistance_ohm)(&e);
        assert!((ro - 5e6).abs() < 1.0);
        // Widlar: I_out RE2 = V_T ln(I_in/I_out).
        let w = EstimateInputs {
            re2_ohm: 1000.0,
            ..e
        };
        let u = (Topology::Widlar.desc().estimates.ratio)(&w);
        assert!((1e-3 * u * 1000.0 - 0.025852 * (1.0 / u).ln()).abs() < 1e-12);
    }

    #[test]
    fn every_description_has_one_branch_per_transistor() {
        for t in ALL_TOPOLOGIES {
            assert_eq!(t.desc().branches.len(), t.desc().transistors.len());
        }
    }

    #[test]
    fn descriptions_are_indexed_by_topology() {
        for t in ALL_TOPOLOGIES {
            assert_eq!(t.desc().topology, t);
            assert_eq!(Topology::from_name(t.name()), Some(t));
        }
    }

    #[test]
    fn netlists_match_model_md() {
        // MODEL.md, "Topologies (NPN sink form)": transistor lines read name c b e.
        let lines = |t: Topology| {
            t.desc()
                .transistors
                .iter()
                .map(|l| format!("{} {} {} {}", l.name, l.collector, l.base, l.emitter))
                .collect::<Vec<_>>()
                .join(" · ")
        };
        assert_eq!(lines(Topology::Simple), "Q1 in in e1 · Q2 out in e2");
        assert_eq!(
            lines(Topology::BetaHelper),
            "Q1 in b e1 · Q2 out b e2 · Q3 S in b"
        );
        assert_eq!(
            lines(Topology::Wilson),
            "Q1 in b e1 · Q2 b b e2 · Q3 out in b"
        );
        assert_eq!(
            lines(Topology::Wilson4),
            "Q1 x b e1 · Q4 in in x · Q2 b b e2 · Q3 out in b"
        );
        assert_eq!(
            lines(Topology::Cascode),
            "Q1 n1 n1 e1 · Q3 in in n1 · Q2 n2 n1 e2 · Q4 out in n2"
        );
        assert_eq!(lines(Topology::Widlar), "Q1 in in R · Q2 out in e2");
    }
}
