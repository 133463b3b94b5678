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
