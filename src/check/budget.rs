//! The error budget: the worst corner's systematic error split by cause, and the random
//! (1 sigma) error split by mismatch source.
//!
//! Random error is propagated through the solved circuit by sensitivities: each mismatch
//! input is moved by one sigma, the circuit re-solved, and the change of error taken as
//! that input's 1-sigma contribution; the inputs are independent, so they add in
//! quadrature (MODEL.md "random error"). Resistor tolerance is read as +-3 sigma.
//!
//! Systematic error is split by switching causes off one after another on the worst
//! corner and taking the differences (a telescoping sum, so the parts add up exactly to
//! the error): self-heating off; then ambient back to 25 °C; then the Early effect off
//! (VAF infinite); then base current off (BF very large). What is left is the ratio set by
//! standard resistor values (and anything else the causes above do not explain).
//!
//! A programmed design (R_ref from a rail) has three more systematic lines, switched off
//! first after self-heating: the rail back to its nominal value, R_ref's TCR off, and,
//! out of the step back to 25 °C, the part the input current's change explains (the
//! input side's V_BE drift, `dI_in / I_in = -dV_in / (V_rail - V_in)`); and one more
//! random line, R_ref's tolerance (read as +-3 sigma like the emitter resistors).

use serde::Serialize;

use super::corners::OperatingCorner;

/// The mismatch inputs, in a fixed order: V_BE offset of pair 1 and 2, beta mismatch of
/// pair 1 and 2, RE1 and RE2 deviation, R_ref deviation.
pub const RANDOM_INPUTS: usize = 7;

/// Change of error for a +1 sigma move of each mismatch input, at one corner.
pub type Sensitivities = [f64; RANDOM_INPUTS];

/// Random causes, in report order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum RandomCause {
    VbeOffset,
    BetaMismatch,
    ResistorTolerance,
    RRefTolerance,
}

impl RandomCause {
    pub fn as_str(self) -> &'static str {
        match self {
            RandomCause::VbeOffset => "V_BE offset",
            RandomCause::BetaMismatch => "beta mismatch",
            RandomCause::ResistorTolerance => "resistor tolerance",
            RandomCause::RRefTolerance => "R_ref tolerance",
        }
    }

    fn inputs(self) -> &'static [usize] {
        match self {
            RandomCause::VbeOffset => &[0, 1],
            RandomCause::BetaMismatch => &[2, 3],
            RandomCause::ResistorTolerance => &[4, 5],
            RandomCause::RRefTolerance => &[6],
        }
    }
}

/// Systematic causes, in report order.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum SystematicCause {
    BaseCurrent,
    EarlyEffect,
    Temperature,
    VbeDrift,
    RRefTcr,
    RailRange,
    SelfHeating,
    RatioRounding,
}

impl SystematicCause {
    pub fn as_str(self) -> &'static str {
        match self {
            SystematicCause::BaseCurrent => "base current",
            SystematicCause::EarlyEffect => "Early effect",
            SystematicCause::Temperature => "temperature",
            SystematicCause::VbeDrift => "V_BE drift (input side)",
            SystematicCause::RRefTcr => "R_ref TCR",
            SystematicCause::RailRange => "rail range",
            SystematicCause::SelfHeating => "self-heating",
            SystematicCause::RatioRounding => "resistor ratio / other",
        }
    }
}

/// 1-sigma random error from per-input sensitivities (independent inputs).
pub fn random_sigma(s: &Sensitivities) -> f64 {
    s.iter().map(|x| x * x).sum::<f64>().sqrt()
}

/// 1-sigma random error of one cause.
pub fn cause_sigma(s: &Sensitivities, cause: RandomCause) -> f64 {
    cause
        .inputs()
        .iter()
        .map(|&i| s[i] * s[i])
        .sum::<f64>()
        .sqrt()
}

/// Errors of the worst corner with causes switched off one after another.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Toggled {
    /// Everything on.
    pub full: f64,
    /// Self-heating off.
    pub no_self_heating: f64,
    /// Also at 25 °C ambient.
    pub at_room: f64,
    /// Also VAF infinite.
    pub no_early: f64,
    /// Also BF very large.
    pub no_base_current: f64,
    /// Programmed designs only.
    pub program: Option<ProgramToggles>,
}

/// The extra steps of a programmed design, taken between self-heating off and 25 °C.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ProgramToggles {
    /// Self-heating off, rail at its nominal value.
    pub rail_nominal: f64,
    /// Also R_ref's TCR off (the step to 25 °C then starts here).
    pub no_ref_tcr: f64,
    /// The part of the step to 25 °C that the input current's change explains.
    pub vbe_drift: f64,
}

#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct BudgetLine<C> {
    pub cause: C,
    /// Signed error (systematic) or 1-sigma error (random), as a fraction.
    pub error: f64,
}

/// The finished budget at the worst corner.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ErrorBudget {
    pub corner: OperatingCorner,
    pub systematic: Vec<BudgetLine<SystematicCause>>,
    pub systematic_total: f64,
    pub random: Vec<BudgetLine<RandomCause>>,
    pub random_sigma: f64,
}

/// Split a worst-corner error into causes (telescoping; the lines sum to `t.full`).
pub fn attribute(corner: OperatingCorner, t: Toggled, s: &Sensitivities) -> ErrorBudget {
    use SystematicCause::*;
    let line = |cause, error| BudgetLine { cause, error };
    let mut systematic = vec![
        line(BaseCurrent, t.no_early - t.no_base_current),
        line(EarlyEffect, t.at_room - t.no_early),
    ];
    match t.program {
        None => systematic.push(line(Temperature, t.no_self_heating - t.at_room)),
        Some(p) => {
            let step = p.no_ref_tcr - t.at_room;
            systematic.push(line(Temperature, step - p.vbe_drift));
            systematic.push(line(VbeDrift, p.vbe_drift));
            systematic.push(line(RRefTcr, p.rail_nominal - p.no_ref_tcr));
            systematic.push(line(RailRange, t.no_self_heating - p.rail_nominal));
        }
    }
    systematic.push(line(SelfHeating, t.full - t.no_self_heating));
    systematic.push(line(RatioRounding, t.no_base_current));
    let mut causes = vec![
        RandomCause::VbeOffset,
        RandomCause::BetaMismatch,
        RandomCause::ResistorTolerance,
    ];
    if t.program.is_some() {
        causes.push(RandomCause::RRefTolerance);
    }
    let random = causes
        .into_iter()
        .map(|c| BudgetLine {
            cause: c,
            error: cause_sigma(s, c),
        })
        .collect();
    ErrorBudget {
        corner,
        systematic,
        systematic_total: t.full,
        random,
        random_sigma: random_sigma(s),
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn systematic_lines_add_up_to_the_error() {
        let t = Toggled {
            full: 0.031,
            no_self_heating: 0.012,
            at_room: 0.010,
            no_early: -0.009,
            no_base_current: 0.0005,
            program: None,
        };
        let c = OperatingCorner {
            i_in_a: 1e-3,
            rail_v: None,
            v_out_v: 10.0,
            t_amb_k: 300.0,
        };
        let b = attribute(c, t, &[0.0; RANDOM_INPUTS]);
        let sum: f64 = b.systematic.iter().map(|l| l.error).sum();
        assert!((sum - 0.031).abs() < 1e-15);
        assert!((b.systematic[3].error - 0.019).abs() < 1e-15);
    }

    #[test]
    fn random_terms_add_in_quadrature() {
        let s = [0.03, 0.04, 0.0, 0.0, 0.0, 0.0, 0.0];
        assert!((random_sigma(&s) - 0.05).abs() < 1e-15);
        assert!((cause_sigma(&s, RandomCause::VbeOffset) - 0.05).abs() < 1e-15);
        assert_eq!(cause_sigma(&s, RandomCause::ResistorTolerance), 0.0);
    }
}
