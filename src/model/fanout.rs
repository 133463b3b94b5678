//! Multi-output and area-ratio forms of the mirror netlists, generated from the six
//! descriptions in `topology` (never written out by hand, never a solver of their own).
//!
//! A *shape* says how many outputs hang on one input side and how many devices sit in
//! parallel on one side (an area ratio). The expansion reads only the roles of the
//! description's lines:
//! * the *output side* is every line of a matched pair's second member (Q2, and Q4 of a
//!   cascode); a node touched only by output-side lines (`out`, `e2`, `n2`) belongs to
//!   one output and is copied per output (`out1`, `e2_1`, `n2_1`, ...), the lines with it
//!   (`Q2_1`, `Q4_1`, ...), each output with its own emitter resistor (`RE2_1`, ...);
//! * the *input side* is every line of a pair's first member; helpers are shared;
//! * an area ratio n puts n devices in parallel on the output side of each output (ratio
//!   n) or on the input side (ratio 1/n); parallel copies share their nodes and are named
//!   with a letter (`Q2a`, `Q2b`, ...).
//!
//! A shape of one output and unit area is the description itself, names unchanged.
//! Topologies whose output device is not a matched pair's second member (the Wilson
//! forms: their output transistor sits inside the feedback loop and does not fan out
//! cleanly) have `fans_out == false` and no multi-output form.

use std::collections::HashMap;
use std::sync::{Mutex, OnceLock};

use super::topology::{Branch, Role, Topology, TransistorLine, ALL_TOPOLOGIES};

/// Most outputs on one input side. Beyond eight the input side carries the base current
/// of every output and boards use a second reference.
pub const MAX_OUTPUTS: u8 = 8;
/// Most devices in parallel for an area ratio (a five-device array: 1 + 4).
pub const MAX_PARALLEL: u8 = 4;
/// Most transistors in any form.
pub const MAX_FORM_TRANSISTORS: usize = 16;
/// Most unknown nodes in any form.
pub const MAX_FORM_NODES: usize = 20;
/// Most unknowns (nodes plus junction temperatures) of any form: one less than the
/// solver's capacity, whose last row holds the output current. The capacity is a stack
/// matrix on every solve, so it is kept as small as the forms allow: eight outputs of a
/// simple, beta-helper or Widlar mirror (at most 21 unknowns) and four of a cascode (21;
/// eight would need 37).
pub const MAX_FORM_UNKNOWNS: usize = 23;

/// Devices in parallel on one side of the mirror.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Area {
    /// One device per side.
    Unit,
    /// n devices in parallel on each output: ratio n.
    Output(u8),
    /// n devices in parallel on the input side: ratio 1/n.
    Input(u8),
}

/// Outputs fed by one input side, and the area ratio of each output.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct Shape {
    pub outputs: u8,
    pub area: Area,
}

impl Default for Shape {
    fn default() -> Self {
        Shape::SINGLE
    }
}

impl Shape {
    /// One output, one device per side: the six descriptions as written.
    pub const SINGLE: Shape = Shape {
        outputs: 1,
        area: Area::Unit,
    };

    pub fn outputs(outputs: u8) -> Shape {
        Shape {
            outputs,
            area: Area::Unit,
        }
    }

    pub fn is_single(self) -> bool {
        self == Shape::SINGLE
    }

    /// Devices in parallel on each output.
    pub fn output_parallel(self) -> u8 {
        match self.area {
            Area::Output(n) => n.max(1),
            _ => 1,
        }
    }

    /// Devices in parallel on the input side.
    pub fn input_parallel(self) -> u8 {
        match self.area {
            Area::Input(n) => n.max(1),
            _ => 1,
        }
    }

    /// The ratio the device areas set (n, 1/n or 1).
    pub fn area_ratio(self) -> f64 {
        f64::from(self.output_parallel()) / f64::from(self.input_parallel())
    }

    /// The area as a designer writes it: `1`, `4` (four devices on each output) or `1/4`.
    pub fn area_text(self) -> String {
        match self.area {
            Area::Unit => "1".into(),
            Area::Output(n) => format!("{n}"),
            Area::Input(n) => format!("1/{n}"),
        }
    }
}

/// An emitter resistor from `node` to the mirror rail.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct EmitterResistor {
    /// `RE1`, `RE2` or, with several outputs, `RE2_1`, `RE2_2`, ...
    pub name: &'static str,
    pub node: &'static str,
    /// 0 for the input side, k for output k.
    pub output: u8,
}

/// A topology's netlist for one shape: the lines the solver, the placement, the
/// designators, the schematic and the SPICE export all read.
#[derive(Debug, PartialEq)]
pub struct Form {
    pub topology: Topology,
    pub shape: Shape,
    pub transistors: &'static [TransistorLine],
    /// Per transistor: the current it nominally carries (start point only).
    pub branches: &'static [Branch],
    /// Per transistor: 0 for the input side and shared helpers, k for output k.
    pub output_of: &'static [u8],
    /// Per transistor: how many devices sit in parallel with it, itself included.
    pub parallel: &'static [u8],
    /// Emitter resistors the form can have (each exists when its value is above 0).
    pub resistors: &'static [EmitterResistor],
    /// The output node of each output (`out`, or `out1`..`outN`).
    pub output_nodes: &'static [&'static str],
}

impl Form {
    /// Distinct unknown nodes when every emitter resistor exists.
    pub fn node_count(&self) -> usize {
        let mut seen: Vec<&str> = Vec::new();
        for l in self.transistors {
            for n in [l.collector, l.base, l.emitter] {
                if !matches!(n, "R" | "S") && !self.output_nodes.contains(&n) && !seen.contains(&n)
                {
                    seen.push(n);
                }
            }
        }
        seen.len()
    }

    /// The index into `output_nodes` (0-based) of an output node, if `node` is one.
    pub fn output_index(&self, node: &str) -> Option<usize> {
        self.output_nodes.iter().position(|&n| n == node)
    }
}

/// Why a shape has no form.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum FormError {
    #[error(
        "the {0} topology has one output only (its output transistor sits in the feedback loop)"
    )]
    DoesNotFanOut(&'static str),
    #[error("the {0} topology takes no area ratio")]
    NoArea(&'static str),
    #[error("outputs must be 1 to {MAX_OUTPUTS}, got {0}")]
    Outputs(u8),
    #[error("an area ratio takes 2 to {MAX_PARALLEL} devices in parallel, got {0}")]
    Parallel(u8),
    #[error("{topology} with {outputs} outputs and area {area} needs {transistors} transistors and {unknowns} unknowns; at most {MAX_FORM_TRANSISTORS} and {MAX_FORM_UNKNOWNS}")]
    TooLarge {
        topology: &'static str,
        outputs: u8,
        area: String,
        transistors: usize,
        unknowns: usize,
    },
}

fn leak(s: String) -> &'static str {
    Box::leak(s.into_boxed_str())
}

/// Letter suffix of parallel copy `j` of `m` (none for a single device).
fn copy_suffix(j: u8, m: u8) -> String {
    if m > 1 {
        char::from(b'a' + j).to_string()
    } else {
        String::new()
    }
}

fn expand(topology: Topology, shape: Shape) -> Result<Form, FormError> {
    let desc = topology.desc();
    let n_out = shape.outputs;
    if n_out == 0 || n_out > MAX_OUTPUTS {
        return Err(FormError::Outputs(n_out));
    }
    if n_out > 1 && !desc.fans_out {
        return Err(FormError::DoesNotFanOut(desc.name));
    }
    match shape.area {
        Area::Unit => {}
        Area::Output(m) | Area::Input(m) => {
            if !(2..=MAX_PARALLEL).contains(&m) {
                return Err(FormError::Parallel(m));
            }
            if !(desc.fans_out && desc.has_re1) {
                return Err(FormError::NoArea(desc.name));
            }
        }
    }
    let is_output_side = |l: &TransistorLine| matches!(l.role, Role::Matched { member: 1, .. });
    let is_input_side = |l: &TransistorLine| matches!(l.role, Role::Matched { member: 0, .. });
    // Nodes that belong to one output: touched by output-side lines only.
    let own: Vec<&str> = desc
        .transistors
        .iter()
        .filter(|l| is_output_side(l))
        .flat_map(|l| [l.collector, l.base, l.emitter])
        .filter(|n| {
            !matches!(*n, "R" | "S")
                && desc
                    .transistors
                    .iter()
                    .filter(|l| !is_output_side(l))
                    .all(|l| ![l.collector, l.base, l.emitter].contains(n))
        })
        .collect();
    let single_out = n_out == 1;
    let rename = |node: &'static str, k: u8| -> &'static str {
        if single_out || !own.contains(&node) {
            node
        } else if node == "out" {
            leak(format!("out{k}"))
        } else {
            leak(format!("{node}_{k}"))
        }
    };
    let mut lines = Vec::new();
    let mut branches = Vec::new();
    let mut output_of = Vec::new();
    let mut parallel = Vec::new();
    if shape.is_single() {
        // The description as written, in its order.
        for (i, l) in desc.transistors.iter().enumerate() {
            lines.push(*l);
            branches.push(desc.branches[i]);
            output_of.push(u8::from(is_output_side(l)));
            parallel.push(1);
        }
    } else {
        // Input side and helpers first, in description order, then output 1, output 2...
        for (i, l) in desc.transistors.iter().enumerate() {
            if is_output_side(l) {
                continue;
            }
            let m = if is_input_side(l) {
                shape.input_parallel()
            } else {
                1
            };
            for j in 0..m {
                let name = if m > 1 {
                    leak(format!("{}{}", l.name, copy_suffix(j, m)))
                } else {
                    l.name
                };
                lines.push(TransistorLine { name, ..*l });
                branches.push(desc.branches[i]);
                output_of.push(0);
                parallel.push(m);
            }
        }
        let m = shape.output_parallel();
        for k in 1..=n_out {
            for (i, l) in desc.transistors.iter().enumerate() {
                if !is_output_side(l) {
                    continue;
                }
                for j in 0..m {
                    let name = if single_out {
                        leak(format!("{}{}", l.name, copy_suffix(j, m)))
                    } else {
                        leak(format!("{}_{k}{}", l.name, copy_suffix(j, m)))
                    };
                    lines.push(TransistorLine {
                        name,
                        collector: rename(l.collector, k),
                        base: rename(l.base, k),
                        emitter: rename(l.emitter, k),
                        role: l.role,
                    });
                    branches.push(desc.branches[i]);
                    output_of.push(k);
                    parallel.push(m);
                }
            }
        }
    }
    let mut resistors = Vec::new();
    if desc.has_re1 {
        resistors.push(EmitterResistor {
            name: "RE1",
            node: "e1",
            output: 0,
        });
    }
    for k in 1..=n_out {
        resistors.push(EmitterResistor {
            name: if single_out {
                "RE2"
            } else {
                leak(format!("RE2_{k}"))
            },
            node: rename("e2", k),
            output: k,
        });
    }
    let output_nodes: Vec<&'static str> = (1..=n_out).map(|k| rename("out", k)).collect();
    let form = Form {
        topology,
        shape,
        transistors: lines.leak(),
        branches: branches.leak(),
        output_of: output_of.leak(),
        parallel: parallel.leak(),
        resistors: resistors.leak(),
        output_nodes: output_nodes.leak(),
    };
    let transistors = form.transistors.len();
    let unknowns = form.node_count() + transistors;
    if transistors > MAX_FORM_TRANSISTORS
        || form.node_count() > MAX_FORM_NODES
        || unknowns > MAX_FORM_UNKNOWNS
    {
        return Err(FormError::TooLarge {
            topology: desc.name,
            outputs: n_out,
            area: shape.area_text(),
            transistors,
            unknowns,
        });
    }
    Ok(form)
}

type Cache = Mutex<HashMap<(Topology, Shape), Result<&'static Form, FormError>>>;

/// The netlist of `topology` in `shape`. Forms are built once per process and kept (a
/// few dozen at most: outputs x areas x four topologies).
pub fn form(topology: Topology, shape: Shape) -> Result<&'static Form, FormError> {
    static SINGLE: OnceLock<Vec<&'static Form>> = OnceLock::new();
    if shape.is_single() {
        let forms = SINGLE.get_or_init(|| {
            ALL_TOPOLOGIES
                .iter()
                .map(|&t| &*Box::leak(Box::new(expand(t, Shape::SINGLE).expect("single form"))))
                .collect()
        });
        return Ok(forms[topology as usize]);
    }
    static CACHE: OnceLock<Cache> = OnceLock::new();
    let cache = CACHE.get_or_init(Default::default);
    let mut map = cache.lock().unwrap_or_else(|e| e.into_inner());
    map.entry((topology, shape))
        .or_insert_with(|| expand(topology, shape).map(|f| &*Box::leak(Box::new(f))))
        .clone()
}

/// Where one transistor of a form sits.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Seat {
    /// Package index, from 0.
    pub package: u8,
    /// The device is a single of the helper class, not a device of the pair class.
    pub helper_class: bool,
}

/// Places a form's transistors in packages of the pair class (`devices_per_package`
/// each) the way a designer fills arrays: each matched pair's input device first, then
/// the same pair's device of output 1, output 2, ... in one package while it has room (a
/// five-device array holds 1 input + 4 outputs), a fresh package when the whole group does
/// not fit in a spare place, the group split over packages only when it is larger than
/// one. Helpers take spare devices, else singles of the helper class. Devices that share
/// a package are coupled thermally and matched by the class's statistics.
pub fn place(form: &Form, devices_per_package: u32) -> Vec<Seat> {
    let dpp = devices_per_package.max(1) as usize;
    let n = form.transistors.len();
    let mut seat = vec![
        Seat {
            package: 0,
            helper_class: false,
        };
        n
    ];
    let mut used: Vec<usize> = Vec::new();
    let pairs = form
        .transistors
        .iter()
        .filter_map(|l| match l.role {
            Role::Matched { pair, .. } => Some(pair),
            Role::Helper => None,
        })
        .max()
        .map_or(0, |p| p + 1);
    for pair in 0..pairs {
        // The group: the input side's devices of this pair, then each output's.
        let mut group: Vec<usize> = Vec::new();
        for k in 0..=form.shape.outputs {
            group.extend((0..n).filter(|&i| {
                form.output_of[i] == k
                    && matches!(form.transistors[i].role, Role::Matched { pair: p, .. } if p == pair)
            }));
        }
        if dpp == 1 {
            for &i in &group {
                used.push(1);
                seat[i].package = (used.len() - 1) as u8;
            }
            continue;
        }
        let fits = used.iter().position(|&u| u + group.len() <= dpp);
        let mut k = match fits {
            Some(k) => k,
            None => {
                used.push(0);
                used.len() - 1
            }
        };
        for &i in &group {
            if used[k] >= dpp {
                used.push(0);
                k = used.len() - 1;
            }
            used[k] += 1;
            seat[i].package = k as u8;
        }
    }
    for (line, s) in form.transistors.iter().zip(seat.iter_mut()) {
        if line.role != Role::Helper {
            continue;
        }
        match used.iter().position(|&u| u < dpp) {
            Some(k) => {
                used[k] += 1;
                s.package = k as u8;
            }
            None => {
                used.push(dpp);
                *s = Seat {
                    package: (used.len() - 1) as u8,
                    helper_class: true,
                };
            }
        }
    }
    seat
}

/// Whether output `k` (1-based) sits with the input side: every matched device of the
/// output shares a package with its pair's input device, so the class's matching applies
/// (otherwise the output is matched like two separate packages).
pub fn output_matched(form: &Form, seats: &[Seat], k: u8) -> bool {
    let n = form.transistors.len();
    (0..n).filter(|&i| form.output_of[i] == k).all(|i| {
        let Role::Matched { pair, .. } = form.transistors[i].role else {
            return true;
        };
        (0..n).any(|j| {
            form.output_of[j] == 0
                && form.transistors[j].role == (Role::Matched { pair, member: 0 })
                && seats[j].package == seats[i].package
        })
    })
}

/// The topologies that have multi-output forms.
pub fn fans_out(topology: Topology) -> bool {
    topology.desc().fans_out
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lines(f: &Form) -> String {
        f.transistors
            .iter()
            .map(|l| format!("{} {} {} {}", l.name, l.collector, l.base, l.emitter))
            .collect::<Vec<_>>()
            .join(" · ")
    }

    #[test]
    fn single_shape_is_the_description() {
        for t in ALL_TOPOLOGIES {
            let f = form(t, Shape::SINGLE).unwrap();
            assert_eq!(f.transistors, t.desc().transistors, "{t:?}");
            assert_eq!(f.output_nodes, &["out"]);
        }
    }

    #[test]
    fn outputs_copy_the_output_side_with_their_own_nodes_and_resistors() {
        let f = form(Topology::Simple, Shape::outputs(3)).unwrap();
        assert_eq!(
            lines(f),
            "Q1 in in e1 · Q2_1 out1 in e2_1 · Q2_2 out2 in e2_2 · Q2_3 out3 in e2_3"
        );
        let names: Vec<_> = f.resistors.iter().map(|r| r.name).collect();
        assert_eq!(names, ["RE1", "RE2_1", "RE2_2", "RE2_3"]);
        let f = form(Topology::Cascode, Shape::outputs(2)).unwrap();
        assert_eq!(
            lines(f),
            "Q1 n1 n1 e1 · Q3 in in n1 · Q2_1 n2_1 n1 e2_1 · Q4_1 out1 in n2_1 · \
             Q2_2 n2_2 n1 e2_2 · Q4_2 out2 in n2_2"
        );
        let f = form(Topology::BetaHelper, Shape::outputs(2)).unwrap();
        assert_eq!(
            lines(f),
            "Q1 in b e1 · Q3 S in b · Q2_1 out1 b e2_1 · Q2_2 out2 b e2_2"
        );
        assert_eq!(f.output_of, &[0, 0, 1, 2]);
    }

    #[test]
    fn area_ratios_are_parallel_devices() {
        let f = form(
            Topology::Simple,
            Shape {
                outputs: 1,
                area: Area::Output(3),
            },
        )
        .unwrap();
        assert_eq!(
            lines(f),
            "Q1 in in e1 · Q2a out in e2 · Q2b out in e2 · Q2c out in e2"
        );
        assert_eq!(f.parallel, &[1, 3, 3, 3]);
        let f = form(
            Topology::Simple,
            Shape {
                outputs: 1,
                area: Area::Input(2),
            },
        )
        .unwrap();
        assert_eq!(lines(f), "Q1a in in e1 · Q1b in in e1 · Q2 out in e2");
        assert!((f.shape.area_ratio() - 0.5).abs() < 1e-15);
    }

    #[test]
    fn arrays_fill_with_one_input_and_four_outputs_and_a_helper_in_a_spare() {
        let f = form(Topology::Simple, Shape::outputs(4)).unwrap();
        let seats = place(f, 5);
        assert!(seats.iter().all(|s| s.package == 0 && !s.helper_class));
        assert!((1..=4).all(|k| output_matched(f, &seats, k)));
        // Three outputs and the helper fill a five-device array; a fourth output leaves
        // the helper no spare device.
        let f = form(Topology::BetaHelper, Shape::outputs(3)).unwrap();
        assert!(place(f, 5)
            .iter()
            .all(|s| s.package == 0 && !s.helper_class));
        let f = form(Topology::BetaHelper, Shape::outputs(4)).unwrap();
        let seats = place(f, 5);
        assert_eq!(seats.iter().filter(|s| s.helper_class).count(), 1);
        // Eight outputs on five-device arrays: outputs 5..8 in a second package, not
        // matched to the input device.
        let f = form(Topology::Simple, Shape::outputs(8)).unwrap();
        let seats = place(f, 5);
        assert_eq!(seats.iter().map(|s| s.package).max(), Some(1));
        assert!(output_matched(f, &seats, 4));
        assert!(!output_matched(f, &seats, 5));
        // On duals each output of a simple mirror but the first is in its own package.
        let f = form(Topology::Simple, Shape::outputs(2)).unwrap();
        let seats = place(f, 2);
        assert!(output_matched(f, &seats, 1) && !output_matched(f, &seats, 2));
    }

    #[test]
    fn wilson_forms_do_not_fan_out_and_sizes_are_bounded() {
        for t in [Topology::Wilson, Topology::Wilson4] {
            assert!(matches!(
                form(t, Shape::outputs(2)),
                Err(FormError::DoesNotFanOut(_))
            ));
        }
        for t in [Topology::Simple, Topology::BetaHelper, Topology::Widlar] {
            assert!(form(t, Shape::outputs(MAX_OUTPUTS)).is_ok(), "{t:?}");
        }
        assert!(form(Topology::Cascode, Shape::outputs(4)).is_ok());
        assert!(matches!(
            form(Topology::Cascode, Shape::outputs(5)),
            Err(FormError::TooLarge { .. })
        ));
        assert!(matches!(
            form(Topology::Simple, Shape::outputs(MAX_OUTPUTS + 1)),
            Err(FormError::Outputs(_))
        ));
        assert!(matches!(
            form(
                Topology::Cascode,
                Shape {
                    outputs: MAX_OUTPUTS,
                    area: Area::Output(4)
                }
            ),
            Err(FormError::TooLarge { .. })
        ));
    }
}
