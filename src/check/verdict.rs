//! One verdict per requirement: the value found, the limit, the relative margin and
//! pass/fail; the governing check; the first failing check.
//!
//! Margins are relative to the limit and positive when the check passes: for an upper
//! limit `(limit - value) / limit`, for a lower limit `(value - limit) / limit`. A solve
//! that could not produce a number (thermal runaway, no solution) is a check of its own
//! with no value and a margin of minus infinity, and names the build it happened in. A
//! check whose figure needed a corner that could not be solved is *not available*: no
//! value, no margin, not passed, and never counted as the design's failure (the solve
//! failure, earlier in check order, is).

use std::fmt;

use serde::Serialize;

/// Every check a candidate can be put to. The declaration order is the order in which
/// checks are judged and reported; "the first failing check" means first in this order.
/// Cost comes first because it needs no solve, so a search can count it without solving.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum CheckName {
    Cost,
    ThermalRunaway,
    NoSolution,
    Compliance,
    InputVoltage,
    Accuracy,
    Yield,
    OutputResistance,
    HelperHeadroom,
    Vceo,
    IcMax,
    Dissipation,
}

impl CheckName {
    pub const ALL: [CheckName; 12] = [
        CheckName::Cost,
        CheckName::ThermalRunaway,
        CheckName::NoSolution,
        CheckName::Compliance,
        CheckName::InputVoltage,
        CheckName::Accuracy,
        CheckName::Yield,
        CheckName::OutputResistance,
        CheckName::HelperHeadroom,
        CheckName::Vceo,
        CheckName::IcMax,
        CheckName::Dissipation,
    ];

    pub fn as_str(self) -> &'static str {
        match self {
            CheckName::Cost => "cost",
            CheckName::ThermalRunaway => "thermal-runaway",
            CheckName::NoSolution => "no-solution",
            CheckName::Compliance => "compliance",
            CheckName::InputVoltage => "input-voltage",
            CheckName::Accuracy => "accuracy",
            CheckName::Yield => "yield",
            CheckName::OutputResistance => "output-resistance",
            CheckName::HelperHeadroom => "helper-headroom",
            CheckName::Vceo => "vceo",
            CheckName::IcMax => "ic-max",
            CheckName::Dissipation => "dissipation",
        }
    }

    /// The unit of the check's value and limit, SI (empty for fractions and counts).
    pub fn unit(self) -> &'static str {
        match self {
            CheckName::Cost | CheckName::Accuracy | CheckName::Yield => "",
            CheckName::ThermalRunaway | CheckName::NoSolution => "",
            CheckName::Compliance
            | CheckName::InputVoltage
            | CheckName::HelperHeadroom
            | CheckName::Vceo => "V",
            CheckName::OutputResistance => "Ω",
            CheckName::IcMax => "A",
            CheckName::Dissipation => "W",
        }
    }
}

impl fmt::Display for CheckName {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.as_str())
    }
}

/// One judged requirement.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Check {
    pub name: CheckName,
    /// What the candidate achieves (NaN when no number exists).
    pub value: f64,
    pub limit: f64,
    /// Relative margin, positive when passing; minus infinity for a failed solve.
    pub margin: f64,
    pub pass: bool,
    /// Where the value was found (transistor, package, corner), for explanations.
    pub detail: String,
}

impl Check {
    /// A check whose value must not exceed `limit`.
    pub fn at_most(name: CheckName, value: f64, limit: f64, detail: impl Into<String>) -> Check {
        let margin = relative(limit - value, limit);
        Check {
            name,
            value,
            limit,
            margin,
            pass: value <= limit,
            detail: detail.into(),
        }
    }

    /// A check whose value must reach at least `limit`.
    pub fn at_least(name: CheckName, value: f64, limit: f64, detail: impl Into<String>) -> Check {
        let margin = relative(value - limit, limit);
        Check {
            name,
            value,
            limit,
            margin,
            pass: value >= limit,
            detail: detail.into(),
        }
    }

    /// Whether this check names a failed solve (thermal runaway, no solution).
    pub fn is_solve_failure(&self) -> bool {
        matches!(self.name, CheckName::ThermalRunaway | CheckName::NoSolution)
    }

    /// Whether the check has a figure: false for a failed solve and for a check whose
    /// figure needed an unsolved corner.
    pub fn available(&self) -> bool {
        !self.value.is_nan()
    }

    /// A check whose figure needed a corner (or build) that could not be solved: not
    /// available, so not passed; the failed solve is reported as its own check.
    pub fn not_available(name: CheckName, limit: f64, why: impl Into<String>) -> Check {
        Check {
            name,
            value: f64::NAN,
            limit,
            margin: f64::NAN,
            pass: false,
            detail: format!("not available: {}", why.into()),
        }
    }

    /// A check that failed without a number (the circuit could not be solved).
    pub fn failed(name: CheckName, detail: impl Into<String>) -> Check {
        Check {
            name,
            value: f64::NAN,
            limit: f64::NAN,
            margin: f64::NEG_INFINITY,
            pass: false,
            detail: detail.into(),
        }
    }
}

fn relative(diff: f64, limit: f64) -> f64 {
    if limit.abs() > 0.0 {
        diff / limit.abs()
    } else if diff >= 0.0 {
        // A zero limit met exactly (for example zero cost allowed): no relative scale.
        0.0
    } else {
        f64::NEG_INFINITY
    }
}

/// The check with the smallest margin (the first in check order on a tie).
pub fn governing(checks: &[Check]) -> Option<&Check> {
    checks
        .iter()
        .fold(None, |best: Option<&Check>, c| match best {
            Some(b) if c.margin >= b.margin || c.margin.is_nan() => Some(b),
            _ => Some(c),
        })
}

/// The first failing check in check order, if any.
pub fn first_failure(checks: &[Check]) -> Option<CheckName> {
    checks.iter().filter(|c| !c.pass).map(|c| c.name).min()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn margins_are_relative_and_signed() {
        let c = Check::at_most(CheckName::Accuracy, 0.008, 0.01, "");
        assert!(c.pass);
        assert!((c.margin - 0.2).abs() < 1e-12);
        let c = Check::at_most(CheckName::Accuracy, 0.012, 0.01, "");
        assert!(!c.pass);
        assert!((c.margin + 0.2).abs() < 1e-12);
        let c = Check::at_least(CheckName::OutputResistance, 2e6, 1e6, "");
        assert!(c.pass);
        assert!((c.margin - 1.0).abs() < 1e-12);
    }

    #[test]
    fn governing_is_smallest_margin_and_first_failure_follows_check_order() {
        let checks = vec![
            Check::at_most(CheckName::Vceo, 40.0, 36.0, ""),
            Check::at_most(CheckName::Accuracy, 0.02, 0.01, ""),
            Check::at_most(CheckName::Cost, 1.0, 2.0, ""),
        ];
        assert_eq!(governing(&checks).unwrap().name, CheckName::Accuracy);
        assert_eq!(first_failure(&checks), Some(CheckName::Accuracy));
        let runaway = Check::failed(CheckName::ThermalRunaway, "Q2");
        let mut all = checks.clone();
        all.push(runaway);
        assert_eq!(governing(&all).unwrap().name, CheckName::ThermalRunaway);
        assert_eq!(first_failure(&all), Some(CheckName::ThermalRunaway));
        assert_eq!(first_failure(&checks[2..]), None);
    }
}
