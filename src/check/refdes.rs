//! Reference designators of one design's parts, as the trade writes them (IEEE 315 /
//! ASME Y14.44 class letters): `Q` for transistors, `R` for resistors, and a unit suffix
//! letter for devices that share one package (`Q1A`, `Q1B` are two devices of package
//! `Q1`; a single-device package is plain `Q2`).
//!
//! This is the one place designators are made for a design, so the report's parts table,
//! the schematic, `solve`'s tables and the SPICE deck's element names agree by
//! construction. The board-level `bom` numbers its packages with the same rule
//! (`bom::plan`). Packages are numbered in placement order (`check::design::place`: pair
//! packages first, then helper singles); letters follow the netlist names inside a
//! package, so a pair's reference device is `A`. Resistors are numbered in netlist order
//! (RE1 before RE2, then the programming resistor `Rref`, which runs from the program
//! rail `P` to the input); an emitter resistor of 0 ohm is a wire, not a part, and gets
//! none.

use crate::model::{fanout, Polarity, Role, Shape, Topology};

use super::design::Package;

/// What an element is, with its terminals (netlist node names).
#[derive(Debug, Clone, PartialEq)]
pub enum ElementKind {
    Transistor {
        collector: &'static str,
        base: &'static str,
        emitter: &'static str,
        polarity: Polarity,
        role: Role,
        /// The catalog class the device comes from.
        class: String,
        /// Devices in its package (1 = a single).
        devices_per_package: u32,
    },
    Resistor {
        /// The two terminals; the first is the end away from the rail when one is a rail.
        a: &'static str,
        b: &'static str,
        ohm: f64,
        /// Resistor class id, when the design names one.
        class: Option<String>,
    },
}

/// One part of a design: its designator, the name it has in the topology's netlist
/// (MODEL.md's `Q1`, `RE2`) and what it is.
#[derive(Debug, Clone, PartialEq)]
pub struct Element {
    pub designator: String,
    pub netlist_name: &'static str,
    pub kind: ElementKind,
}

impl Element {
    pub fn is_transistor(&self) -> bool {
        matches!(self.kind, ElementKind::Transistor { .. })
    }
}

/// The unit suffix of the `i`-th device (0-based) of a package: A, B, ..., Z, then AA.
pub fn unit_suffix(i: usize) -> String {
    let mut s = String::new();
    let mut n = i;
    loop {
        s.insert(0, (b'A' + (n % 26) as u8) as char);
        if n < 26 {
            break;
        }
        n = n / 26 - 1;
    }
    s
}

/// The designator of device `device` (0-based) of package number `package` (1-based)
/// holding `devices_per_package` devices.
pub fn device_designator(package: usize, device: usize, devices_per_package: u32) -> String {
    if devices_per_package > 1 {
        format!("Q{package}{}", unit_suffix(device))
    } else {
        format!("Q{package}")
    }
}

/// The programming resistor of a design: its value and class id.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RefPart<'a> {
    pub ohm: f64,
    pub class: Option<&'a str>,
}

/// The netlist name of the programming resistor (`Rref P in`).
pub const R_REF_NAME: &str = "Rref";
/// The node the programming resistor hangs from: the program rail.
pub const PROGRAM_RAIL: &str = "P";

/// Every part of a design in netlist order (transistors, then resistors), designated.
/// `packages` is the design's placement; `resistor` the resistor class id, if any;
/// `r_ref` the programming resistor, when the design has one.
pub fn elements(
    topology: Topology,
    packages: &[Package],
    re1_ohm: f64,
    re2_ohm: f64,
    resistor: Option<&str>,
    r_ref: Option<RefPart>,
) -> Vec<Element> {
    elements_of_shape(
        topology,
        Shape::SINGLE,
        packages,
        re1_ohm,
        re2_ohm,
        resistor,
        r_ref,
    )
}

/// `elements` of a multi-output or area-ratio form: every output's devices and its own
/// RE2 (`RE2_1`, `RE2_2`, ...), numbered in the form's netlist order. Empty when the
/// shape has no form.
pub fn elements_of_shape(
    topology: Topology,
    shape: Shape,
    packages: &[Package],
    re1_ohm: f64,
    re2_ohm: f64,
    resistor: Option<&str>,
    r_ref: Option<RefPart>,
) -> Vec<Element> {
    let Ok(form) = fanout::form(topology, shape) else {
        return Vec::new();
    };
    let mut out = Vec::new();
    for line in form.transistors {
        let Some((k, pkg)) = packages
            .iter()
            .enumerate()
            .find(|(_, p)| p.members.contains(&line.name))
        else {
            continue;
        };
        let mut members = pkg.members.clone();
        members.sort_unstable();
        let device = members.iter().position(|m| *m == line.name).unwrap_or(0);
        out.push(Element {
            designator: device_designator(k + 1, device, pkg.class.devices_per_package),
            netlist_name: line.name,
            kind: ElementKind::Transistor {
                collector: line.collector,
                base: line.base,
                emitter: line.emitter,
                polarity: pkg.class.polarity,
                role: line.role,
                class: pkg.class.id.clone(),
                devices_per_package: pkg.class.devices_per_package,
            },
        });
    }
    let mut n = 0;
    for r in form.resistors {
        let (name, node) = (r.name, r.node);
        let ohm = if r.output == 0 { re1_ohm } else { re2_ohm };
        if ohm > 0.0 {
            n += 1;
            out.push(Element {
                designator: format!("R{n}"),
                netlist_name: name,
                kind: ElementKind::Resistor {
                    a: node,
                    b: "R",
                    ohm,
                    class: resistor.map(str::to_string),
                },
            });
        }
    }
    if let Some(r) = r_ref.filter(|r| r.ohm > 0.0) {
        out.push(Element {
            designator: format!("R{}", n + 1),
            netlist_name: R_REF_NAME,
            kind: ElementKind::Resistor {
                a: "in",
                b: PROGRAM_RAIL,
                ohm: r.ohm,
                class: r.class.map(str::to_string),
            },
        });
    }
    out
}

/// The designator of the element with netlist name `name`.
pub fn designator_of<'e>(elements: &'e [Element], name: &str) -> Option<&'e str> {
    elements
        .iter()
        .find(|e| e.netlist_name == name)
        .map(|e| e.designator.as_str())
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::design::place;
    use crate::check::design::tests::class;

    fn names(t: Topology, dpp: u32, helper: bool, re: f64) -> String {
        let pair = class("pair", dpp, 1.0);
        let single = class("single", 1, 0.1);
        let h = (helper && !crate::check::helpers_fit_in_spares(t, &pair)).then_some(&single);
        let pk = place(t, &pair, h);
        let re1 = if t.desc().has_re1 { re } else { 0.0 };
        elements(
            t,
            &pk,
            re1,
            re.max(100.0 * f64::from(t == Topology::Widlar)),
            None,
            None,
        )
        .iter()
        .map(|e| format!("{}={}", e.netlist_name, e.designator))
        .collect::<Vec<_>>()
        .join(" ")
    }

    #[test]
    fn devices_sharing_a_package_get_unit_suffixes() {
        // IEEE 315 / ASME Y14.44: class letter Q, package number, unit letter.
        assert_eq!(names(Topology::Simple, 2, false, 0.0), "Q1=Q1A Q2=Q1B");
        assert_eq!(
            names(Topology::Wilson, 2, true, 100.0),
            "Q1=Q1A Q2=Q1B Q3=Q2 RE1=R1 RE2=R2"
        );
        // A quad array holds the helper in a spare device.
        assert_eq!(
            names(Topology::Wilson, 4, true, 0.0),
            "Q1=Q1A Q2=Q1B Q3=Q1C"
        );
        // Two duals: each pair in its own package, reference device A.
        assert_eq!(
            names(Topology::Cascode, 2, false, 0.0),
            "Q1=Q1A Q3=Q2A Q2=Q1B Q4=Q2B"
        );
        // Singles: no suffix, one package each.
        assert_eq!(
            names(Topology::Simple, 1, false, 47.0),
            "Q1=Q1 Q2=Q2 RE1=R1 RE2=R2"
        );
        // Widlar: RE2 only, so it is R1.
        assert_eq!(
            names(Topology::Widlar, 2, false, 0.0),
            "Q1=Q1A Q2=Q1B RE2=R1"
        );
    }

    #[test]
    fn the_programming_resistor_follows_the_emitter_resistors() {
        let pair = class("pair", 2, 1.0);
        let pk = place(Topology::Wilson, &pair, None);
        let r = RefPart {
            ohm: 511e3,
            class: Some("thin"),
        };
        let with = |re: f64| {
            elements(Topology::Wilson, &pk, re, re, None, Some(r))
                .iter()
                .filter(|e| !e.is_transistor())
                .map(|e| format!("{}={}", e.netlist_name, e.designator))
                .collect::<Vec<_>>()
                .join(" ")
        };
        assert_eq!(with(100.0), "RE1=R1 RE2=R2 Rref=R3");
        assert_eq!(with(0.0), "Rref=R1");
    }

    #[test]
    fn suffixes_run_past_z() {
        assert_eq!(unit_suffix(0), "A");
        assert_eq!(unit_suffix(25), "Z");
        assert_eq!(unit_suffix(26), "AA");
    }
}
