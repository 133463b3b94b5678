//! The SPICE export: one chosen design as a subcircuit with Gummel–Poon `.model` cards,
//! a comment header with the requirement and the catalog's provenance, and a short test
//! bench that sweeps the output voltage.
//!
//! A pure function from a design to text; writing the file is the caller's job (through
//! `atomic_file`). Numbers are written in plain exponent form (`1e-14`, not `10f`) so no
//! simulator can misread a prefix (SPICE reads `M` as milli). Only ASCII is written:
//! some simulators choke on other bytes even in comments.

use std::collections::BTreeSet;
use std::fmt::Write as _;

use super::eng::{celsius, eng, percent, Charset};
use super::Provenance;
use crate::check::refdes::{Element, ElementKind};
use crate::model::{
    fanout, BjtParams, Polarity, Requirement, ResistorClass, Role, Shape, Topology,
    TransistorClass, ZERO_CELSIUS_K,
};

/// The design to export, in the terms of MODEL.md.
#[derive(Debug, Clone, Copy)]
pub struct SpiceDesign<'a> {
    pub topology: Topology,
    /// The class of the matched pair(s).
    pub pair: &'a TransistorClass,
    /// The class of helper transistors when they are not spare devices of the pair's
    /// package; `None` means they use the pair's class.
    pub helper: Option<&'a TransistorClass>,
    pub re1_ohm: f64,
    pub re2_ohm: f64,
    pub resistor: Option<&'a ResistorClass>,
    /// Outputs on the input side and the area ratio (`Shape::SINGLE` for one output).
    pub shape: Shape,
    /// The programming resistor, when the requirement programs the mirror by one; the
    /// deck's bench then drives the input through it from the program rail source.
    pub r_ref: Option<SpiceRef<'a>>,
}

/// A programming resistor: value and class.
#[derive(Debug, Clone, Copy)]
pub struct SpiceRef<'a> {
    pub ohm: f64,
    pub class: &'a ResistorClass,
}

/// Pins of the subcircuit, in order: input, output, mirror rail, opposite rail.
pub const SUBCKT_PINS: [&str; 4] = ["in", "out", "R", "S"];

/// A SPICE-safe model name for a class id (letters, digits and `_`).
pub fn model_name(class_id: &str) -> String {
    let mut s: String = class_id
        .chars()
        .map(|c| if c.is_ascii_alphanumeric() { c } else { '_' })
        .collect();
    if !s.starts_with(|c: char| c.is_ascii_alphabetic()) {
        s.insert_str(0, "m_");
    }
    s
}

/// Plain exponent form that reads back to the same `f64` (Rust's shortest round trip).
fn num(x: f64) -> String {
    format!("{x:e}")
}

/// A bench value: six significant digits are plenty and read better than binary noise.
fn bench(x: f64) -> String {
    let short: f64 = format!("{x:.5e}").parse().unwrap_or(x);
    num(short)
}

/// Parts per million per kelvin, for comments.
fn ppm(tcr_per_k: f64) -> String {
    format!("{}", (tcr_per_k * 1e6 * 1e3).round() / 1e3)
}

/// User text on a comment line: ASCII only, no line breaks.
fn comment_text(s: &str) -> String {
    s.chars()
        .map(|c| match c {
            c if c.is_ascii_graphic() || c == ' ' => c,
            c if c.is_whitespace() => ' ',
            _ => '?',
        })
        .collect()
}

/// Writes `* text` lines, wrapping long user text so every line stays a comment.
fn comment(out: &mut String, text: &str) {
    let text = comment_text(text);
    let mut line = String::new();
    for word in text.split(' ').filter(|w| !w.is_empty()) {
        if !line.is_empty() && line.len() + word.len() > 90 {
            let _ = writeln!(out, "* {line}");
            line = "  ".to_string();
        }
        if !line.trim().is_empty() {
            line.push(' ');
        }
        line.push_str(word);
    }
    let _ = writeln!(out, "* {}", line.trim_end());
}

fn model_card(class: &TransistorClass, name: &str) -> String {
    let m: &BjtParams = &class.model;
    let kind = match class.polarity {
        Polarity::Npn => "NPN",
        Polarity::Pnp => "PNP",
    };
    let mut params = vec![
        format!("IS={}", num(m.saturation_current_a)),
        format!("BF={}", num(m.beta_forward)),
        format!("BR={}", num(m.beta_reverse)),
    ];
    if let Some(vaf) = m.early_voltage_v {
        params.push(format!("VAF={}", num(vaf)));
    }
    if let Some(ikf) = m.knee_current_a {
        params.push(format!("IKF={}", num(ikf)));
    }
    params.push(format!("XTI={}", num(m.xti)));
    params.push(format!("EG={}", num(m.eg_ev)));
    params.push(format!("XTB={}", num(m.xtb)));
    // TNOM is in degrees Celsius in SPICE; round away the binary noise of 300.15 - 273.15.
    let tnom_c = ((m.t_nom_k - ZERO_CELSIUS_K) * 1e6).round() / 1e6;
    params.push(format!("TNOM={}", num(tnom_c)));
    format!(".model {name} {kind}({})", params.join(" "))
}

/// The design's parts with their reference designators (the same list the report's
/// schematic and parts table draw).
pub fn elements(design: &SpiceDesign) -> Vec<Element> {
    let packages = match fanout::form(design.topology, design.shape) {
        Ok(form) if !design.shape.is_single() => {
            crate::check::place_form(form, design.pair, design.helper)
        }
        _ => crate::check::place(design.topology, design.pair, design.helper),
    };
    crate::check::refdes::elements_of_shape(
        design.topology,
        design.shape,
        &packages,
        if design.topology.desc().has_re1 {
            design.re1_ohm
        } else {
            0.0
        },
        design.re2_ohm,
        design.resistor.map(|r| r.id.as_str()),
        design.r_ref.map(|r| crate::check::refdes::RefPart {
            ohm: r.ohm,
            class: Some(r.class.id.as_str()),
        }),
    )
}

/// The nodes of a topology's netlist for this design, in order of first appearance,
/// including `e1`/`e2` (kept as separate nodes even for 0 ohm, joined by a 0 V source).
pub fn netlist_nodes(topology: Topology) -> Vec<&'static str> {
    netlist_nodes_of(topology, Shape::SINGLE)
}

/// `netlist_nodes` of a multi-output or area-ratio form (every output's nodes).
pub fn netlist_nodes_of(topology: Topology, shape: Shape) -> Vec<&'static str> {
    let Ok(form) = fanout::form(topology, shape) else {
        return Vec::new();
    };
    let mut seen = Vec::new();
    for line in form.transistors {
        for n in [line.collector, line.base, line.emitter] {
            if !seen.contains(&n) {
                seen.push(n);
            }
        }
    }
    for n in ["in", "R", "S"] {
        if !seen.contains(&n) {
            seen.push(n);
        }
    }
    seen
}

/// Renders the SPICE deck for `design` against `req`.
pub fn render(design: &SpiceDesign, req: &Requirement, prov: &Provenance) -> String {
    let a = Charset::Ascii;
    let desc = design.topology.desc();
    let pair_model = model_name(&design.pair.id);
    let helper_class = design.helper.unwrap_or(design.pair);
    let mut helper_model = model_name(&helper_class.id);
    if helper_class.id != design.pair.id && helper_model == pair_model {
        helper_model.push_str("_h");
    }
    let uses_helper = desc.transistors.iter().any(|t| t.role == Role::Helper);
    let subckt = format!("mirror_{}", model_name(desc.name));

    let mut o = String::new();
    let _ = writeln!(
        o,
        "* mirrorpick {} -- {} current {} ({} form)",
        prov.tool_version,
        desc.name,
        req.kind.as_str(),
        design.pair.polarity.as_str().to_uppercase()
    );
    comment(&mut o, &format!("requirement: {}", req.name));
    let parts = elements(design);
    let programming = match (req.program, design.r_ref) {
        (Some(p), Some(_)) => format!(
            "programmed by {} from the program rail P, {} to {} (nominal {}) from the mirror \
             rail, for I_out {}",
            crate::check::refdes::designator_of(&parts, crate::check::refdes::R_REF_NAME)
                .unwrap_or("R_ref"),
            eng(p.rail_v.min, "V", a),
            eng(p.rail_v.max, "V", a),
            eng(p.rail_nominal_v(), "V", a),
            eng(p.output_current_a, "A", a)
        ),
        _ => format!(
            "I_in {} to {}",
            eng(req.input_current_a.min, "A", a),
            eng(req.input_current_a.max, "A", a)
        ),
    };
    comment(
        &mut o,
        &format!(
            "  supply {}; {programming}, ratio {}; V_out {} to {} from the mirror rail; \
             ambient {} to {}; accuracy {} of the {} at {} sigma",
            eng(req.supply_v, "V", a),
            req.ratio,
            eng(req.output_voltage_v.min, "V", a),
            eng(req.output_voltage_v.max, "V", a),
            celsius(req.ambient_k.min, a),
            celsius(req.ambient_k.max, a),
            percent(req.accuracy),
            req.accuracy_of.as_str(),
            req.confidence_sigma
        ),
    );
    comment(
        &mut o,
        &format!(
            "catalog: {} (SHA-256 {})",
            prov.catalog_source, prov.catalog_sha256
        ),
    );
    let mut classes: Vec<&TransistorClass> = vec![design.pair];
    if uses_helper && helper_class.id != design.pair.id {
        classes.push(helper_class);
    }
    for c in &classes {
        comment(
            &mut o,
            &format!(
                "class {} ({}, {} per {} package): {}",
                c.id,
                c.polarity.as_str(),
                c.devices_per_package,
                c.package,
                c.summary
            ),
        );
        comment(&mut o, &format!("  provenance: {}", c.provenance));
    }
    if let Some(r) = design.resistor {
        comment(
            &mut o,
            &format!(
                "resistors {} ({} series, {} tolerance, {} ppm/K): {}",
                r.id,
                r.series.as_str(),
                percent(r.tolerance),
                ppm(r.tcr_per_k),
                r.summary
            ),
        );
    }
    if let Some(r) = design.r_ref {
        comment(
            &mut o,
            &format!(
                "programming resistor {} ({} series, {} tolerance, {} ppm/K, rated {}): {}",
                r.class.id,
                r.class.series.as_str(),
                percent(r.class.tolerance),
                ppm(r.class.tcr_per_k),
                eng(r.class.power_rating(), "W", a),
                r.class.summary
            ),
        );
    }
    o.push_str(
        "* Catalog values are typical of the class, not guaranteed: check them against the\n\
         * datasheet of the part you fit. Ratings, dissipation, high voltage and LED or laser\n\
         * drive are for the datasheet, local codes and licensed practice to settle.\n\
         * Model notes: the advisor applies IKF to the base current only; a Gummel-Poon\n\
         * simulator also bends the collector current with it, so results differ near IKF.\n\
         * Nominal (matched) devices. To try a V_BE offset dV on the second device of a pair,\n\
         * give its Q line an area factor exp(dV/V_T), e.g. 1.08 for 2 mV at 300 K.\n\
         * Not modelled in this deck: self-heating. The advisor's figures include each\n\
         * junction's rise above ambient (dissipation times the class's thermal resistance,\n\
         * plus the mutual heating of devices in one package); this deck runs every device\n\
         * at the .temp ambient. To add it, give each Q line its rise as an instance\n\
         * temperature offset (dtemp=<kelvin> in ngspice-compatible simulators), taken from\n\
         * the junction temperatures `mirrorpick solve` reports, or model the thermal\n\
         * network with behavioural sources if your simulator supports them.\n\
         * Element names are the design's reference designators (Q1A, R1), as on the\n\
         * report's schematic and parts list.\n",
    );
    o.push('\n');

    // The subcircuit.
    let _ = writeln!(
        o,
        "* Pins: in = input (I_in flows into it, sink form), out = output, R = mirror rail,"
    );
    let _ = writeln!(
        o,
        "* S = opposite rail. Netlist per topology '{}'.",
        desc.name
    );
    // One output pin per output: `out`, or `out1`..`outN` (each output held by the bench).
    let form = fanout::form(design.topology, design.shape)
        .unwrap_or_else(|_| fanout::form(design.topology, Shape::SINGLE).expect("single form"));
    let outs: Vec<&str> = form.output_nodes.to_vec();
    let pins: Vec<&str> = std::iter::once("in")
        .chain(outs.iter().copied())
        .chain(["R", "S"])
        .collect();
    let _ = writeln!(o, ".subckt {subckt} {}", pins.join(" "));
    // The programming resistor joins the program rail, which is the bench's: it is
    // placed there, under the same designator.
    let is_ref = |e: &Element| e.netlist_name == crate::check::refdes::R_REF_NAME;
    for el in parts.iter().filter(|e| !is_ref(e)) {
        match &el.kind {
            ElementKind::Transistor {
                collector,
                base,
                emitter,
                role,
                ..
            } => {
                let model = match role {
                    Role::Helper => &helper_model,
                    Role::Matched { .. } => &pair_model,
                };
                let role = match role {
                    Role::Matched { pair, member } => {
                        format!("matched pair {}, device {}", pair + 1, member + 1)
                    }
                    Role::Helper => "helper".to_string(),
                };
                let _ = writeln!(
                    o,
                    "{} {collector} {base} {emitter} {model}  ; netlist {}, {role}",
                    el.designator, el.netlist_name
                );
            }
            ElementKind::Resistor {
                a: n1, b: n2, ohm, ..
            } => {
                let tcr = design
                    .resistor
                    .map(|r| format!(", TCR {} ppm/K", ppm(r.tcr_per_k)))
                    .unwrap_or_default();
                let _ = writeln!(
                    o,
                    "{} {n1} {n2} {}  ; netlist {}, {}{tcr}",
                    el.designator,
                    num(*ohm),
                    el.netlist_name,
                    eng(*ohm, "ohm", a)
                );
            }
        }
    }
    // An emitter resistor of 0 ohm is a wire, not a part: a 0 V source keeps the node
    // and reads the emitter current.
    for r in form.resistors {
        let (name, node) = (r.name, r.node);
        let ohm = if r.output == 0 {
            design.re1_ohm
        } else {
            design.re2_ohm
        };
        if ohm <= 0.0 {
            let _ = writeln!(
                o,
                "V{} {node} R DC 0  ; {name} = 0 ohm: a short (no part) that also reads the emitter current",
                &name[1..]
            );
        }
    }
    let _ = writeln!(o, ".ends {subckt}");
    o.push('\n');

    let _ = writeln!(o, "{}", model_card(design.pair, &pair_model));
    if uses_helper && helper_class.id != design.pair.id {
        let _ = writeln!(o, "{}", model_card(helper_class, &helper_model));
    }
    o.push('\n');

    // The test bench: the output voltage swept from 0 to the supply at I_in min and max,
    // or, for a programmed design, at the program rail's ends.
    let vs = req.supply_v;
    let step = vs / 200.0;
    let r_ref = match (req.program, parts.iter().find(|e| is_ref(e))) {
        (Some(p), Some(e)) => Some((p, e)),
        _ => None,
    };
    let (i_min, i_max) = (req.input_current_a.min, req.input_current_a.max);
    match r_ref {
        None => {
            o.push_str(
                "* Test bench: V_out swept from 0 to the supply (measured from the mirror rail)\n",
            );
            o.push_str("* at I_in min and max. I_out = -I(VOUT) in both polarities.\n");
        }
        Some((p, e)) => {
            let _ = writeln!(
                o,
                "* Test bench: V_out swept from 0 to the supply (measured from the mirror rail)"
            );
            let _ = writeln!(
                o,
                "* at the program rail's ends, {} and {} (nominal {}). VP is the program rail P,",
                eng(p.rail_v.min, "V", a),
                eng(p.rail_v.max, "V", a),
                eng(p.rail_nominal_v(), "V", a)
            );
            let _ = writeln!(
                o,
                "* from the mirror rail, set to both ends by the .dc line; {} (R_ref) sets the",
                e.designator
            );
            o.push_str("* input current from it. I_out = -I(VOUT).\n");
        }
    }
    let ref_line = |o: &mut String, vp: &str| {
        if let Some((_, e)) = r_ref {
            if let ElementKind::Resistor { ohm, class, .. } = &e.kind {
                let tcr = design
                    .r_ref
                    .map(|r| format!(", TCR {} ppm/K", ppm(r.class.tcr_per_k)))
                    .unwrap_or_default();
                let _ = writeln!(
                    o,
                    "{} {vp} in {}  ; netlist Rref (R_ref), {}{tcr}{}",
                    e.designator,
                    num(*ohm),
                    eng(*ohm, "ohm", a),
                    class
                        .as_deref()
                        .map(|c| format!(", class {}", comment_text(c)))
                        .unwrap_or_default()
                );
            }
        }
    };
    let several = outs.len() > 1;
    if several {
        o.push_str("* Every output is held at V_out; a 0 V source per output reads its current,\n");
        o.push_str("* I_out of output k = I(VOk).\n");
    }
    let out_pins = |_: ()| -> String {
        if several {
            outs.join(" ")
        } else {
            "out".to_string()
        }
    };
    match design.pair.polarity {
        Polarity::Npn => {
            o.push_str("* Sink: mirror rail at ground, opposite rail at +V_S.\n");
            let _ = writeln!(o, "VS vs 0 DC {}", bench(vs));
            match r_ref {
                None => {
                    let _ = writeln!(o, "IIN vs in DC {}", bench(i_min));
                }
                Some((p, _)) => {
                    let _ = writeln!(o, "VP vp 0 DC {}", bench(p.rail_v.min));
                    ref_line(&mut o, "vp");
                }
            }
            let _ = writeln!(o, "VOUT out 0 DC {}", bench(req.output_voltage_v.max));
            if several {
                for (k, n) in outs.iter().enumerate() {
                    let _ = writeln!(o, "VO{} out {n} DC 0", k + 1);
                }
            }
            let _ = writeln!(o, "X1 in {} 0 vs {subckt}", out_pins(()));
        }
        Polarity::Pnp => {
            o.push_str("* Source: mirror rail at +V_S, opposite rail at ground; the input\n");
            match r_ref {
                None => {
                    o.push_str(
                        "* current is drawn out of 'in' and V_out is measured down from the rail.\n",
                    );
                }
                Some(_) => {
                    o.push_str(
                        "* current flows out of 'in' into the program rail, which sits VP below the\n\
                         * mirror rail; V_out is measured down from the rail.\n",
                    );
                }
            }
            let _ = writeln!(o, "VS rail 0 DC {}", bench(vs));
            match r_ref {
                None => {
                    let _ = writeln!(o, "IIN in 0 DC {}", bench(i_min));
                }
                Some((p, _)) => {
                    let _ = writeln!(o, "VP rail vp DC {}", bench(p.rail_v.min));
                    ref_line(&mut o, "vp");
                }
            }
            let _ = writeln!(o, "VOUT rail out DC {}", bench(req.output_voltage_v.max));
            if several {
                for (k, n) in outs.iter().enumerate() {
                    let _ = writeln!(o, "VO{} {n} out DC 0", k + 1);
                }
            }
            let _ = writeln!(o, "X1 in {} rail 0 {subckt}", out_pins(()));
        }
    }
    let _ = writeln!(o, ".temp 25");
    let (second, lo, hi) = match r_ref {
        Some((p, _)) => ("VP", p.rail_v.min, p.rail_v.max),
        None => ("IIN", i_min, i_max),
    };
    if hi > lo {
        let _ = writeln!(
            o,
            ".dc VOUT 0 {} {} {second} {} {} {}",
            bench(vs),
            bench(step),
            bench(lo),
            bench(hi),
            bench(hi - lo)
        );
    } else {
        let _ = writeln!(o, ".dc VOUT 0 {} {}", bench(vs), bench(step));
    }
    let _ = writeln!(
        o,
        "* Ambient extremes: repeat with .temp {} and .temp {}.",
        comment_text(&celsius(req.ambient_k.min, a).replace(" degC", "")),
        comment_text(&celsius(req.ambient_k.max, a).replace(" degC", ""))
    );
    if several {
        let reads: Vec<String> = (1..=outs.len()).map(|k| format!("I(VO{k})")).collect();
        let _ = writeln!(o, ".print dc I(VOUT) {}", reads.join(" "));
    } else {
        let _ = writeln!(o, ".print dc I(VOUT)");
    }
    let _ = writeln!(o, ".end");
    // Keep the node list honest: every netlist node is in the deck.
    debug_assert!(netlist_nodes_of(design.topology, design.shape)
        .iter()
        .all(|n| o.contains(&format!(" {n} "))));
    o
}

/// The distinct `.model` names a deck defines.
pub fn defined_models(deck: &str) -> BTreeSet<String> {
    deck.lines()
        .filter_map(|l| l.strip_prefix(".model "))
        .filter_map(|l| l.split_whitespace().next())
        .map(str::to_string)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::ALL_TOPOLOGIES;
    use crate::report::fixtures;

    /// The value of `KEY=` on a `.model` line, read back as a number.
    fn param(card: &str, key: &str) -> Option<f64> {
        let body = card.split_once('(')?.1.trim_end_matches(')');
        body.split_whitespace()
            .find_map(|kv| kv.strip_prefix(&format!("{key}=")))
            .map(|v| v.parse().unwrap())
    }

    fn card<'d>(deck: &'d str, name: &str) -> &'d str {
        deck.lines()
            .find(|l| l.starts_with(&format!(".model {name} ")))
            .unwrap_or_else(|| panic!("no .model {name} in\n{deck}"))
    }

    #[test]
    fn one_model_per_class_with_the_catalog_values() {
        let (pair, helper) = (fixtures::npn_dual(), fixtures::npn_single());
        let req = fixtures::requirement();
        for t in ALL_TOPOLOGIES {
            let d = SpiceDesign {
                shape: Shape::SINGLE,
                topology: t,
                pair: &pair,
                helper: Some(&helper),
                re1_ohm: 100.0,
                re2_ohm: 100.0,
                resistor: None,
                r_ref: None,
            };
            let deck = render(&d, &req, &fixtures::provenance());
            let uses_helper = t.desc().transistors.iter().any(|l| l.role == Role::Helper);
            let mut expected = BTreeSet::from([model_name(&pair.id)]);
            if uses_helper {
                expected.insert(model_name(&helper.id));
            }
            assert_eq!(defined_models(&deck), expected, "{}", t.name());
            let n = deck.lines().filter(|l| l.starts_with(".model")).count();
            assert_eq!(n, expected.len(), "one card per class:\n{deck}");
            let c = card(&deck, &model_name(&pair.id));
            assert!(c.contains(" NPN("), "{c}");
            let m = &pair.model;
            assert_eq!(param(c, "IS"), Some(m.saturation_current_a));
            assert_eq!(param(c, "BF"), Some(m.beta_forward));
            assert_eq!(param(c, "BR"), Some(m.beta_reverse));
            assert_eq!(param(c, "VAF"), m.early_voltage_v);
            assert_eq!(param(c, "IKF"), m.knee_current_a);
            assert_eq!(param(c, "XTI"), Some(m.xti));
            assert_eq!(param(c, "EG"), Some(m.eg_ev));
            assert_eq!(param(c, "XTB"), Some(m.xtb));
            assert_eq!(param(c, "TNOM"), Some(27.0), "300.15 K is 27 degrees C");
            if uses_helper {
                let h = card(&deck, &model_name(&helper.id));
                assert_eq!(param(h, "BF"), Some(helper.model.beta_forward));
                assert_eq!(param(h, "VAF"), None, "infinite VAF is left out");
            }
        }
    }

    #[test]
    fn several_outputs_get_a_pin_a_resistor_and_an_ammeter_each() {
        let pair = fixtures::npn_dual();
        let req = fixtures::requirement();
        let d = SpiceDesign {
            shape: Shape::outputs(3),
            topology: Topology::Simple,
            pair: &pair,
            helper: None,
            re1_ohm: 100.0,
            re2_ohm: 100.0,
            resistor: None,
            r_ref: None,
        };
        let deck = render(&d, &req, &fixtures::provenance());
        assert!(
            deck.contains(".subckt mirror_simple in out1 out2 out3 R S"),
            "{deck}"
        );
        for k in 1..=3 {
            assert!(deck.contains(&format!("VO{k} out out{k} DC 0")), "{deck}");
            assert!(deck.contains(&format!("; netlist RE2_{k}")), "{deck}");
            assert!(deck.contains(&format!("; netlist Q2_{k},")), "{deck}");
        }
        assert!(deck.contains("X1 in out1 out2 out3 0 vs mirror_simple"));
        assert!(deck.contains(".print dc I(VOUT) I(VO1) I(VO2) I(VO3)"));
        // Every node of every output is wired.
        for node in netlist_nodes_of(Topology::Simple, Shape::outputs(3)) {
            assert!(deck.contains(&format!(" {node} ")), "{node}");
        }
    }

    #[test]
    fn every_netlist_node_appears_in_the_subcircuit() {
        let pair = fixtures::npn_dual();
        let req = fixtures::requirement();
        for t in ALL_TOPOLOGIES {
            for re in [0.0, 220.0] {
                let d = SpiceDesign {
                    shape: Shape::SINGLE,
                    topology: t,
                    pair: &pair,
                    helper: None,
                    re1_ohm: re,
                    re2_ohm: if t == Topology::Widlar { 1000.0 } else { re },
                    resistor: None,
                    r_ref: None,
                };
                let deck = render(&d, &req, &fixtures::provenance());
                let sub: Vec<&str> = deck
                    .lines()
                    .skip_while(|l| !l.starts_with(".subckt"))
                    .take_while(|l| !l.starts_with(".ends"))
                    .collect();
                // Element terminals plus the subcircuit's pins.
                let used: BTreeSet<&str> = sub[1..]
                    .iter()
                    .flat_map(|l| {
                        l.split(';')
                            .next()
                            .unwrap()
                            .split_whitespace()
                            .skip(1)
                            .take(3)
                    })
                    .chain(sub[0].split_whitespace().skip(2))
                    .collect();
                let parts = elements(&d);
                for line in t.desc().transistors {
                    let q = format!(
                        "{} {} {} {} ",
                        crate::check::refdes::designator_of(&parts, line.name).unwrap(),
                        line.collector,
                        line.base,
                        line.emitter
                    );
                    assert!(
                        sub.iter().any(|l| l.starts_with(&q)),
                        "{q} missing in\n{deck}"
                    );
                }
                for node in netlist_nodes(t) {
                    assert!(
                        used.contains(node),
                        "{} re {re}: node {node} unused",
                        t.name()
                    );
                }
            }
        }
    }

    #[test]
    fn zero_ohm_emitter_resistors_become_shorts_and_widlar_has_no_re1() {
        let pair = fixtures::npn_dual();
        let req = fixtures::requirement();
        let mk = |topology, re1_ohm, re2_ohm| SpiceDesign {
            shape: Shape::SINGLE,
            topology,
            pair: &pair,
            helper: None,
            re1_ohm,
            re2_ohm,
            resistor: None,
            r_ref: None,
        };
        let deck = render(
            &mk(Topology::Simple, 0.0, 0.0),
            &req,
            &fixtures::provenance(),
        );
        assert!(deck.contains("\nVE1 e1 R DC 0 "), "{deck}");
        assert!(deck.contains("\nVE2 e2 R DC 0 "), "{deck}");
        let deck = render(
            &mk(Topology::Widlar, 0.0, 4700.0),
            &req,
            &fixtures::provenance(),
        );
        assert!(!deck.contains("E1 e1"), "{deck}");
        assert!(deck.contains("\nR1 e2 R 4.7e3 "), "{deck}");
    }

    #[test]
    fn pnp_sources_flip_the_bench_not_the_netlist() {
        let pair = fixtures::pnp_dual();
        let mut req = fixtures::requirement();
        req.kind = crate::model::MirrorKind::Source;
        let d = SpiceDesign {
            shape: Shape::SINGLE,
            topology: Topology::Simple,
            pair: &pair,
            helper: None,
            re1_ohm: 0.0,
            re2_ohm: 0.0,
            resistor: None,
            r_ref: None,
        };
        let deck = render(&d, &req, &fixtures::provenance());
        assert!(card(&deck, &model_name(&pair.id)).contains(" PNP("));
        assert!(deck.contains("\nQ1A in in e1 "), "{deck}");
        assert!(deck.contains("\nVS rail 0 DC 1.2e1\n"), "{deck}");
        assert!(deck.contains("\nIIN in 0 DC "), "{deck}");
        assert!(deck.contains("\nVOUT rail out DC "), "{deck}");
        assert!(
            deck.contains("\nX1 in out rail 0 mirror_simple\n"),
            "{deck}"
        );
    }

    #[test]
    fn header_carries_requirement_and_provenance_as_comments_only() {
        let pair = fixtures::npn_dual();
        let mut req = fixtures::requirement();
        req.name = "tail sink\n.model evil NPN(IS=1)".to_string();
        let d = SpiceDesign {
            shape: Shape::SINGLE,
            topology: Topology::Wilson,
            pair: &pair,
            helper: None,
            re1_ohm: 0.0,
            re2_ohm: 0.0,
            resistor: None,
            r_ref: None,
        };
        let deck = render(&d, &req, &fixtures::provenance());
        assert!(deck.is_ascii());
        assert!(deck.contains(&fixtures::provenance().catalog_sha256));
        assert!(deck.contains(&pair.provenance));
        assert!(
            deck.contains("* requirement: tail sink .model evil"),
            "{deck}"
        );
        assert_eq!(
            defined_models(&deck).len(),
            1,
            "user text cannot add a card"
        );
        assert!(
            deck.contains("\n.dc VOUT 0 1.2e1 6e-2 IIN 1e-4 1e-3 9e-4\n"),
            "{deck}"
        );
        assert!(deck.trim_end().ends_with(".end"));
    }

    #[test]
    fn element_names_are_the_schematics_designators_r_ref_included() {
        let pair = fixtures::npn_dual();
        let single = fixtures::npn_single();
        let class = fixtures::resistor_class();
        let mut req = fixtures::requirement();
        req.program = Some(crate::model::Program {
            rail_v: crate::model::Range {
                min: 11.4,
                max: 12.6,
            },
            output_current_a: 1e-3,
        });
        for t in ALL_TOPOLOGIES {
            let helper = (!crate::check::helpers_fit_in_spares(t, &pair)).then_some(&single);
            let d = SpiceDesign {
                shape: Shape::SINGLE,
                topology: t,
                pair: &pair,
                helper,
                re1_ohm: 100.0,
                re2_ohm: if t == Topology::Widlar { 4700.0 } else { 100.0 },
                resistor: Some(&class),
                r_ref: Some(SpiceRef {
                    ohm: 11e3,
                    class: &class,
                }),
            };
            let deck = render(&d, &req, &fixtures::provenance());
            let parts = elements(&d);
            let svg = crate::report::schematic::schematic_svg(
                &parts,
                pair.polarity,
                None,
                req.program.map(|p| p.rail_v),
            );
            let doc = scraper::Html::parse_fragment(&svg);
            let sel = scraper::Selector::parse("g.part").unwrap();
            let drawn: BTreeSet<String> = doc
                .select(&sel)
                .map(|g| g.value().attr("data-designator").unwrap().to_string())
                .collect();
            // Element lines: a Q or R designator first (sources and the subcircuit call
            // start with V and X).
            let named: BTreeSet<String> = deck
                .lines()
                .filter(|l| l.starts_with('Q') || l.starts_with('R'))
                .map(|l| l.split_whitespace().next().unwrap().to_string())
                .collect();
            assert_eq!(named, drawn, "{}:\n{deck}", t.name());
            let r_ref = crate::check::refdes::designator_of(&parts, "Rref").unwrap();
            assert!(
                deck.contains(&format!("\n{r_ref} vp in 1.1e4 ")),
                "R_ref in the bench:\n{deck}"
            );
            assert!(deck.contains("\nVP vp 0 DC 1.14e1\n"), "{deck}");
        }
    }
}
