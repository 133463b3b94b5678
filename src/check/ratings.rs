//! Ratings and headroom judged on solved operating points: VCEO with derating, IC max,
//! package dissipation derated with ambient temperature, the helper's headroom against
//! the supply, the `V_CE >= min_vce` rule behind the compliance voltage, and which
//! transistors sit at `V_CB < 0` (soft saturation, a caution).
//!
//! Pure functions over [`CornerState`]s; nothing here solves a circuit.

use serde::Serialize;

use super::corners::OperatingCorner;
use super::design::ResolvedDesign;
use super::verdict::{Check, CheckName};
use crate::model::ZERO_CELSIUS_K;

/// VCEO derating factor (common practice, no source).
pub const VCEO_DERATING: f64 = 0.8;
/// Package dissipation is derated linearly from full at 25 °C to zero at 150 °C ambient
/// (common practice, no source).
pub const POWER_FULL_K: f64 = ZERO_CELSIUS_K + 25.0;
pub const POWER_ZERO_K: f64 = ZERO_CELSIUS_K + 150.0;

/// One transistor's solved state, magnitudes in NPN form.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct DeviceState {
    pub name: &'static str,
    pub v_be_v: f64,
    pub v_ce_v: f64,
    pub i_c_a: f64,
    pub i_b_a: f64,
    pub t_junction_k: f64,
    /// The collector sits on the opposite rail (a beta helper).
    pub collector_at_supply: bool,
}

impl DeviceState {
    pub fn v_cb_v(&self) -> f64 {
        self.v_ce_v - self.v_be_v
    }

    /// Transistor power as MODEL.md defines it: `V_CE*I_C + V_BE*I_B`.
    pub fn power_w(&self) -> f64 {
        self.v_ce_v * self.i_c_a + self.v_be_v * self.i_b_a
    }
}

/// A solved corner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct CornerState {
    pub corner: OperatingCorner,
    pub i_out_a: f64,
    /// The input current: forced, or solved through R_ref.
    pub i_in_a: f64,
    /// Power in R_ref, watts (0 without one).
    pub r_ref_power_w: f64,
    pub v_in_v: f64,
    /// MODEL.md error `I_out / (n I_in) - 1`, or `I_out / I_wanted - 1` when the
    /// requirement's accuracy is of the output; with several outputs, the worst output's
    /// (and `i_out_a` is its current).
    pub error: f64,
    /// Every output's error, output 1 first (one entry on a single-output design).
    pub output_errors: Vec<f64>,
    /// The output (1-based) `error` is of.
    pub worst_output: u8,
    pub devices: Vec<DeviceState>,
}

/// Power a package may dissipate at ambient `t_amb_k`.
pub fn derated_power(rating_w: f64, t_amb_k: f64) -> f64 {
    let f = (POWER_ZERO_K - t_amb_k) / (POWER_ZERO_K - POWER_FULL_K);
    rating_w * f.clamp(0.0, 1.0)
}

/// The compliance rule of MODEL.md at one solved corner: every transistor keeps
/// `V_CE >= min_vce`. Helpers collecting from the supply rail are included (their V_CE is
/// the supply less their emitter voltage, so they pass wherever the helper-headroom check
/// does).
pub fn keeps_min_vce(state: &CornerState, min_vce_v: f64) -> bool {
    vce_slack(state, min_vce_v).is_some_and(|(slack, _)| slack >= 0.0)
}

/// The smallest `V_CE - min_vce` over the transistors of a corner, and whose it is.
pub fn vce_slack(state: &CornerState, min_vce_v: f64) -> Option<(f64, &'static str)> {
    state
        .devices
        .iter()
        .map(|d| (d.v_ce_v - min_vce_v, d.name))
        .min_by(|a, b| a.0.total_cmp(&b.0))
}

/// Transistors with a forward-biased collector junction (`V_CB < 0`) at a corner: they
/// work in soft saturation, which the solved currents include, and deserve a caution.
/// Helpers collecting from the supply rail are judged by the helper-headroom check.
pub fn forward_biased_collectors(state: &CornerState) -> Vec<&'static str> {
    state
        .devices
        .iter()
        .filter(|d| !d.collector_at_supply && d.v_cb_v() < 0.0)
        .map(|d| d.name)
        .collect()
}

/// Largest V_CE of any transistor against its class's derated VCEO. The value reported
/// is the V_CE of the transistor closest to its own limit.
pub fn vceo(design: &ResolvedDesign, states: &[CornerState]) -> Check {
    worst_ratio(design, states, CheckName::Vceo, |d, class| {
        (d.v_ce_v, class.ratings.vceo_v * VCEO_DERATING)
    })
}

/// Largest collector current against the class's IC max.
pub fn ic_max(design: &ResolvedDesign, states: &[CornerState]) -> Check {
    worst_ratio(design, states, CheckName::IcMax, |d, class| {
        (d.i_c_a, class.ratings.ic_max_a)
    })
}

fn worst_ratio(
    design: &ResolvedDesign,
    states: &[CornerState],
    name: CheckName,
    f: impl Fn(&DeviceState, &crate::model::TransistorClass) -> (f64, f64),
) -> Check {
    let mut worst: Option<(f64, f64, f64, String)> = None;
    for s in states {
        for d in &s.devices {
            let Some(class) = design.class_of(d.name) else {
                continue;
            };
            let (value, limit) = f(d, class);
            let ratio = value / limit;
            if worst.as_ref().is_none_or(|w| ratio > w.0) {
                worst = Some((ratio, value, limit, d.name.to_string()));
            }
        }
    }
    match worst {
        Some((_, value, limit, who)) => Check::at_most(name, value, limit, who),
        None => Check::failed(name, "no solved corner"),
    }
}

/// Each package's dissipation against its rating derated at that corner's ambient.
pub fn dissipation(design: &ResolvedDesign, states: &[CornerState]) -> Check {
    let mut worst: Option<(f64, f64, f64, String)> = None;
    for s in states {
        for (i, p) in design.packages.iter().enumerate() {
            let power: f64 = s
                .devices
                .iter()
                .filter(|d| p.members.contains(&d.name))
                .map(DeviceState::power_w)
                .sum();
            let limit = derated_power(p.class.ratings.power_per_package_w, s.corner.t_amb_k);
            let ratio = if limit > 0.0 {
                power / limit
            } else {
                f64::INFINITY
            };
            if worst.as_ref().is_none_or(|w| ratio > w.0) {
                worst = Some((
                    ratio,
                    power,
                    limit,
                    format!(
                        "package {} ({}: {})",
                        i + 1,
                        p.class.id,
                        p.members.join(", ")
                    ),
                ));
            }
        }
    }
    match worst {
        Some((_, value, limit, who)) => Check::at_most(CheckName::Dissipation, value, limit, who),
        None => Check::failed(CheckName::Dissipation, "no solved corner"),
    }
}

/// A helper whose collector is on the opposite rail needs its base below the supply
/// (V_CB >= 0): the highest such base voltage against the supply. `None` when the
/// topology has no such helper.
pub fn helper_headroom(states: &[CornerState], supply_v: f64) -> Option<Check> {
    let mut worst: Option<(f64, String)> = None;
    for s in states {
        for d in s.devices.iter().filter(|d| d.collector_at_supply) {
            // The collector sits at the supply, so V_B = V_S - V_CB.
            let v_base = supply_v - d.v_cb_v();
            if worst.as_ref().is_none_or(|w| v_base > w.0) {
                worst = Some((v_base, d.name.to_string()));
            }
        }
    }
    worst.map(|(v, who)| Check::at_most(CheckName::HelperHeadroom, v, supply_v, who))
}

/// The hottest junction at any corner, and that corner's junction temperatures.
pub fn hottest(states: &[CornerState]) -> Option<&CornerState> {
    states.iter().max_by(|a, b| {
        let ta = a
            .devices
            .iter()
            .map(|d| d.t_junction_k)
            .fold(f64::MIN, f64::max);
        let tb = b
            .devices
            .iter()
            .map(|d| d.t_junction_k)
            .fold(f64::MIN, f64::max);
        ta.total_cmp(&tb)
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::check::design::tests::catalog;
    use crate::check::design::{resolve, DesignSpec};
    use crate::model::Topology;

    fn dev(name: &'static str, v_be: f64, v_ce: f64, i_c: f64) -> DeviceState {
        DeviceState {
            name,
            v_be_v: v_be,
            v_ce_v: v_ce,
            i_c_a: i_c,
            i_b_a: i_c / 200.0,
            t_junction_k: 300.0,
            collector_at_supply: false,
        }
    }

    fn state(t_amb_k: f64, devices: Vec<DeviceState>) -> CornerState {
        CornerState {
            corner: OperatingCorner {
                i_in_a: 1e-3,
                rail_v: None,
                v_out_v: 10.0,
                t_amb_k,
            },
            i_out_a: 1e-3,
            i_in_a: 1e-3,
            r_ref_power_w: 0.0,
            v_in_v: 0.65,
            error: 0.0,
            output_errors: vec![0.0],
            worst_output: 1,
            devices,
        }
    }

    #[test]
    fn dissipation_derates_linearly_to_zero_at_150_c() {
        // Common practice, no source: full rating at 25 °C, zero at 150 °C.
        assert!((derated_power(0.3, POWER_FULL_K) - 0.3).abs() < 1e-15);
        assert!((derated_power(0.3, ZERO_CELSIUS_K + 87.5) - 0.15).abs() < 1e-12);
        assert_eq!(derated_power(0.3, ZERO_CELSIUS_K + 160.0), 0.0);
        assert!((derated_power(0.3, ZERO_CELSIUS_K - 40.0) - 0.3).abs() < 1e-15);
    }

    #[test]
    fn ratings_on_a_hand_made_point() {
        let cat = catalog();
        let spec = DesignSpec {
            shape: crate::model::Shape::SINGLE,
            topology: Topology::Simple,
            pair: "dual".into(),
            helper: None,
            re1_ohm: 0.0,
            re2_ohm: 0.0,
            resistor: None,
            r_ref_ohm: 0.0,
            r_ref_resistor: None,
            r_ref_pick: None,
        };
        let d = resolve(&cat, &spec).unwrap();
        // Q2 at 40 V and 5 mA: 200 mW in a 300 mW package at 87.5 °C (150 mW allowed).
        let s = state(
            ZERO_CELSIUS_K + 87.5,
            vec![dev("Q1", 0.65, 0.65, 5e-3), dev("Q2", 0.65, 40.0, 5e-3)],
        );
        let v = vceo(&d, std::slice::from_ref(&s));
        // 45 V x 0.8 = 36 V derated.
        assert!(!v.pass);
        assert_eq!(v.detail, "Q2");
        assert!((v.limit - 36.0).abs() < 1e-12);
        let p = dissipation(&d, std::slice::from_ref(&s));
        assert!(!p.pass);
        let expected = 0.65 * 5e-3 + 0.65 * 5e-3 / 200.0 + 40.0 * 5e-3 + 0.65 * 5e-3 / 200.0;
        assert!((p.value - expected).abs() < 1e-12);
        assert!((p.limit - 0.15).abs() < 1e-12);
        let i = ic_max(&d, std::slice::from_ref(&s));
        assert!(i.pass);
        assert!((i.margin - (0.1 - 5e-3) / 0.1).abs() < 1e-12);
        // V_CE >= 0.3 V (MODEL.md; common practice, no source): Q1 diode-connected at
        // 0.65 V and Q2 at 40 V both keep it.
        assert!(keeps_min_vce(&s, 0.3));
        assert!(forward_biased_collectors(&s).is_empty());
        // Q2 at 0.35 V: above min_vce, but its collector junction is forward biased.
        let soft = state(
            POWER_FULL_K,
            vec![dev("Q1", 0.65, 0.65, 1e-3), dev("Q2", 0.65, 0.35, 1e-3)],
        );
        assert!(keeps_min_vce(&soft, 0.3));
        assert_eq!(forward_biased_collectors(&soft), vec!["Q2"]);
        let (slack, who) = vce_slack(&soft, 0.3).unwrap();
        assert!((slack - 0.05).abs() < 1e-12);
        assert_eq!(who, "Q2");
        // Q2 at 0.25 V: below min_vce.
        let sat = state(
            POWER_FULL_K,
            vec![dev("Q1", 0.65, 0.65, 1e-3), dev("Q2", 0.65, 0.25, 1e-3)],
        );
        assert!(!keeps_min_vce(&sat, 0.3));
        assert!(keeps_min_vce(&sat, 0.2));
        assert!(helper_headroom(&[s], 12.0).is_none());
    }

    #[test]
    fn helper_headroom_is_base_voltage_against_supply() {
        let mut q3 = dev("Q3", 0.6, 4.0, 1e-5);
        q3.collector_at_supply = true;
        // Supply 5 V, V_CE 4 V, V_BE 0.6 V: emitter at 1 V, base at 1.6 V.
        let s = state(POWER_FULL_K, vec![q3]);
        let c = helper_headroom(&[s], 5.0).unwrap();
        assert!((c.value - 1.6).abs() < 1e-12);
        assert!(c.pass);
    }
}
