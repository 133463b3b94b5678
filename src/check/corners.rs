//! The operating corners of MODEL.md at which every candidate is solved.
//!
//! Owns the corner set and nothing else: which corner is "hottest", "cold" or the probe
//! for screening is decided here so the checks and the search agree on it.

use serde::Serialize;

use crate::model::{Requirement, ZERO_CELSIUS_K};

/// 25 °C, the middle temperature corner (MODEL.md).
pub const ROOM_K: f64 = ZERO_CELSIUS_K + 25.0;

/// One operating point of the requirement: programming current, output voltage and
/// ambient temperature.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct OperatingCorner {
    /// The forced input current; with a programming resistor the nominal one (a hint
    /// for the solver's start point; the solved current is a result).
    pub i_in_a: f64,
    /// The programming rail, volts from the mirror rail (programmed designs only).
    #[serde(skip_serializing_if = "Option::is_none")]
    pub rail_v: Option<f64>,
    pub v_out_v: f64,
    pub t_amb_k: f64,
}

/// Every corner of MODEL.md: `I_in` in {min, geometric mean when max/min > 10, max} x
/// `V_out` in {min, max} x `T_amb` in {min, 25 °C, max}. Coinciding values are listed
/// once, and 25 °C only when it lies inside the ambient range. With a programming
/// resistor the rail's {min, max} take the place of the input currents.
pub fn corners(req: &Requirement) -> Vec<OperatingCorner> {
    let currents = current_points(req);
    let rails: Vec<Option<f64>> = match &req.program {
        Some(p) => dedup(vec![p.rail_v.min, p.rail_v.max])
            .into_iter()
            .map(Some)
            .collect(),
        None => vec![None],
    };
    let voltages = dedup(vec![req.output_voltage_v.min, req.output_voltage_v.max]);
    let mut temps = vec![req.ambient_k.min];
    if ROOM_K > req.ambient_k.min && ROOM_K < req.ambient_k.max {
        temps.push(ROOM_K);
    }
    temps.push(req.ambient_k.max);
    let temps = dedup(temps);
    let mut out = Vec::with_capacity(currents.len() * voltages.len() * temps.len());
    for &rail_v in &rails {
        for &i_in_a in &currents {
            for &v_out_v in &voltages {
                for &t_amb_k in &temps {
                    out.push(OperatingCorner {
                        i_in_a,
                        rail_v,
                        v_out_v,
                        t_amb_k,
                    });
                }
            }
        }
    }
    out
}

/// The rail at which the input current is largest (its max) or smallest (its min).
fn rail(req: &Requirement, high: bool) -> Option<f64> {
    req.program
        .map(|p| if high { p.rail_v.max } else { p.rail_v.min })
}

fn current_points(req: &Requirement) -> Vec<f64> {
    let r = req.input_current_a;
    let mut v = vec![r.min];
    if r.max / r.min > 10.0 {
        v.push((r.min * r.max).sqrt());
    }
    v.push(r.max);
    dedup(v)
}

fn dedup(mut v: Vec<f64>) -> Vec<f64> {
    v.dedup_by(|a, b| (*a - *b).abs() <= 1e-12 * b.abs().max(1e-300));
    v
}

/// The corners at which compliance is judged: `I_in` max (with a programming resistor,
/// the highest rail), the lowest required output voltage, every ambient of the corner set
/// (MODEL.md "compliance voltage": the cold corner has the largest V_BE, so it usually
/// needs the most headroom).
pub fn compliance_corners(req: &Requirement) -> Vec<OperatingCorner> {
    let i_max = req.input_current_a.max;
    let v_min = req.output_voltage_v.min;
    let rail_max = rail(req, true);
    corners(req)
        .into_iter()
        .filter(|c| c.i_in_a == i_max && c.v_out_v == v_min && c.rail_v == rail_max)
        .collect()
}

/// The corner at which the input voltage is judged: `I_in` max, cold ambient, the highest
/// output voltage (MODEL.md "input voltage"; the highest `V_out` is the conservative one of
/// the two).
pub fn input_corner(req: &Requirement) -> OperatingCorner {
    OperatingCorner {
        i_in_a: req.input_current_a.max,
        rail_v: rail(req, true),
        v_out_v: req.output_voltage_v.max,
        t_amb_k: req.ambient_k.min,
    }
}

/// The temperatures of the corner set (min, 25 °C when inside, max), for the tempco.
pub fn temperatures(req: &Requirement) -> Vec<f64> {
    let mut temps = vec![req.ambient_k.min];
    if ROOM_K > req.ambient_k.min && ROOM_K < req.ambient_k.max {
        temps.push(ROOM_K);
    }
    temps.push(req.ambient_k.max);
    dedup(temps)
}

/// The corner used first when screening accuracy: lowest current and coldest ambient make
/// the V_BE-offset term largest (`dI/I = dV_BE / (V_T + I*R_E)`), the highest output voltage
/// the Early term. Any corner gives a valid lower bound; this one usually gives the best.
pub fn probe_corner(req: &Requirement) -> OperatingCorner {
    OperatingCorner {
        i_in_a: req.input_current_a.min,
        rail_v: rail(req, false),
        v_out_v: req.output_voltage_v.max,
        t_amb_k: req.ambient_k.min,
    }
}

/// The design current for closed-form sizing (Widlar RE2): the geometric mean of the
/// programming current range.
pub fn design_current(req: &Requirement) -> f64 {
    (req.input_current_a.min * req.input_current_a.max).sqrt()
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use crate::model::{Filters, LoadKind, MirrorKind, Range};

    /// A plain 1 mA sink requirement for hand-made tests.
    pub(crate) fn requirement() -> Requirement {
        Requirement {
            program: None,
            accuracy_of: crate::model::AccuracyOf::Ratio,
            max_tempco_per_k: None,
            name: "test".into(),
            kind: MirrorKind::Sink,
            supply_v: 12.0,
            input_current_a: Range {
                min: 1e-3,
                max: 1e-3,
            },
            ratio: 1.0,
            output_voltage_v: Range {
                min: 2.0,
                max: 10.0,
            },
            ambient_k: Range {
                min: ZERO_CELSIUS_K,
                max: ZERO_CELSIUS_K + 70.0,
            },
            accuracy: 0.01,
            confidence_sigma: 3.0,
            min_yield: None,
            min_output_resistance_ohm: None,
            input_voltage_max_v: None,
            min_vce_v: 0.3,
            max_cost: None,
            max_noise: None,
            quantity: 1,
            outputs: 1,
            load: LoadKind::General,
            topologies: Filters::default(),
            classes: Filters::default(),
        }
    }

    #[test]
    fn corner_count_follows_model_md() {
        let mut req = requirement();
        // One current, two voltages, three temperatures.
        assert_eq!(corners(&req).len(), 6);
        req.input_current_a = Range {
            min: 1e-6,
            max: 1e-3,
        };
        // Three decades: the geometric mean is added.
        let c = corners(&req);
        assert_eq!(c.len(), 18);
        assert!((c[6].i_in_a - (1e-9f64).sqrt()).abs() < 1e-12);
        req.input_current_a = Range {
            min: 1e-4,
            max: 1e-3,
        };
        // Exactly one decade: max/min = 10 is not > 10.
        assert_eq!(corners(&req).len(), 12);
        req.ambient_k = Range {
            min: ZERO_CELSIUS_K + 30.0,
            max: ZERO_CELSIUS_K + 50.0,
        };
        // 25 °C outside the range is not a corner.
        assert_eq!(corners(&req).len(), 8);
        // Compliance is judged at I_in max, V_out min and every ambient.
        let cc = compliance_corners(&req);
        assert_eq!(cc.len(), 2);
        assert!(cc.iter().all(|c| c.i_in_a == 1e-3 && c.v_out_v == 2.0));
    }
}
