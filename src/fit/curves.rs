//! Per-curve Early voltage: the textbook construction on a family of I_out(V_out) lines.
//!
//! Each programming current gives one curve. In the active region the output current
//! rises along a straight line whose extension meets the voltage axis at `-VAF_eff`
//! (Sedra & Smith, *Microelectronic Circuits*, BJT chapter, "the Early effect": the
//! extrapolated i_C–v_CE lines meet at v_CE = -V_A). This module fits that line by
//! ordinary least squares and propagates the slope/intercept covariance to the axis
//! intercept (Draper & Smith, *Applied Regression Analysis*, ch. 1 for the straight-line
//! fit and its coefficient covariance; the delta method for the ratio). It must not call
//! the circuit solver: it reads the data only.
//!
//! Active-region rule (the points used): a point counts when the output transistor's
//! collector-base voltage is not negative by MODEL.md's compliance definition, estimated
//! from the data as `V_out >= k * 0.75 V + I_out * RE2`, with `k` the number of base-
//! emitter drops between the mirror rail and the output transistor's base (1 for simple,
//! beta-helper and widlar; 2 for wilson, wilson4 and cascode). 0.75 V is a deliberately
//! high V_BE for small-signal silicon (common practice, no source), so points near the
//! knee are left out rather than let them bend the line.

use super::measurements::Measurement;
use crate::model::Topology;

/// Points whose programming currents differ by less than this fraction form one curve
/// (a bench source set to 100 uA reads 99.98 uA one time and 100.01 uA the next).
pub const SAME_CURRENT_REL: f64 = 1e-3;

/// V_BE used in the active-region rule (deliberately high; see the module docs).
pub const ACTIVE_RULE_VBE_V: f64 = 0.75;

/// One straight-line fit `I_out = a + b * V_out` on one curve.
#[derive(Debug, Clone, PartialEq)]
pub struct CurveFit {
    /// The curve's programming current (mean over its points).
    pub i_in_a: f64,
    /// The curve's ambient (mean over its points), when the file gives one.
    pub t_amb_k: Option<f64>,
    /// Points in the curve, and how many passed the active-region rule.
    pub points: usize,
    pub active_points: usize,
    /// The lowest V_out the active-region rule accepted for this curve.
    pub active_from_v: f64,
    pub outcome: CurveOutcome,
}

#[derive(Debug, Clone, PartialEq)]
pub enum CurveOutcome {
    /// The line and its voltage-axis intercept.
    Line(LineFit),
    /// Too few active points for a line (at least 2) or for its error (at least 3).
    TooFewPoints,
    /// The active points all sit at one output voltage: no slope to fit.
    NoVoltageSpread,
    /// The slope is not clearly above zero (below 3 standard errors): the Early voltage
    /// is beyond what this curve resolves. `slope` and its error are kept for the report.
    SlopeNotResolved {
        slope_a_per_v: f64,
        slope_std_error: f64,
    },
}

#[derive(Debug, Clone, PartialEq)]
pub struct LineFit {
    /// `a`: the line's current at V_out = 0.
    pub intercept_a: f64,
    /// `b`: dI_out/dV_out; its inverse is the output resistance.
    pub slope_a_per_v: f64,
    /// Standard errors of `a` and `b` (None with exactly two points: no residual freedom).
    pub intercept_std_error_a: Option<f64>,
    pub slope_std_error: Option<f64>,
    /// `VAF_eff = a / b`: minus the voltage-axis intercept.
    pub early_voltage_v: f64,
    pub early_voltage_std_error_v: Option<f64>,
    /// Output resistance `1 / b`.
    pub output_resistance_ohm: f64,
    /// RMS of the residuals relative to the mean current.
    pub rms_relative_residual: f64,
}

/// Number of V_BE drops between the rail and the output transistor's base.
pub fn vbe_stack(topology: Topology) -> f64 {
    match topology {
        Topology::Simple | Topology::BetaHelper | Topology::Widlar => 1.0,
        Topology::Wilson | Topology::Wilson4 | Topology::Cascode => 2.0,
    }
}

/// The active-region rule of the module docs.
pub fn is_active(m: &Measurement, topology: Topology, re2_ohm: f64) -> bool {
    m.v_out_v >= vbe_stack(topology) * ACTIVE_RULE_VBE_V + m.i_out_a * re2_ohm
}

/// Groups points into curves: same programming current (within [`SAME_CURRENT_REL`]) and
/// same ambient (within 0.5 K). Curves come out by ascending current, then temperature;
/// points within a curve by ascending V_out.
pub fn group_curves(points: &[Measurement]) -> Vec<Vec<Measurement>> {
    let mut sorted: Vec<Measurement> = points.to_vec();
    sorted.sort_by(|a, b| a.i_in_a.total_cmp(&b.i_in_a));
    let mut by_current: Vec<Vec<Measurement>> = Vec::new();
    for p in sorted {
        match by_current.last_mut() {
            Some(g) if (p.i_in_a - g[0].i_in_a).abs() <= SAME_CURRENT_REL * g[0].i_in_a => {
                g.push(p)
            }
            _ => by_current.push(vec![p]),
        }
    }
    let mut curves = Vec::new();
    for mut g in by_current {
        g.sort_by(|a, b| {
            let ta = a.t_amb_k.unwrap_or(f64::NAN);
            let tb = b.t_amb_k.unwrap_or(f64::NAN);
            ta.total_cmp(&tb)
        });
        let mut cur: Vec<Measurement> = Vec::new();
        for p in g {
            let same_t = match (cur.first().and_then(|c| c.t_amb_k), p.t_amb_k) {
                (Some(a), Some(b)) => (a - b).abs() <= 0.5,
                (None, None) => true,
                _ => false,
            };
            if !cur.is_empty() && !same_t {
                curves.push(std::mem::take(&mut cur));
            }
            cur.push(p);
        }
        if !cur.is_empty() {
            curves.push(cur);
        }
    }
    for c in &mut curves {
        c.sort_by(|a, b| a.v_out_v.total_cmp(&b.v_out_v));
    }
    curves
}

/// Fits every curve's active points.
pub fn fit_curves(points: &[Measurement], topology: Topology, re2_ohm: f64) -> Vec<CurveFit> {
    group_curves(points)
        .into_iter()
        .map(|curve| {
            let n = curve.len() as f64;
            let i_in_a = curve.iter().map(|p| p.i_in_a).sum::<f64>() / n;
            let t_amb_k = curve
                .iter()
                .map(|p| p.t_amb_k)
                .sum::<Option<f64>>()
                .map(|s| s / n);
            let active: Vec<(f64, f64)> = curve
                .iter()
                .filter(|p| is_active(p, topology, re2_ohm))
                .map(|p| (p.v_out_v, p.i_out_a))
                .collect();
            let active_from_v = active.first().map(|p| p.0).unwrap_or(f64::NAN);
            CurveFit {
                i_in_a,
                t_amb_k,
                points: curve.len(),
                active_points: active.len(),
                active_from_v,
                outcome: fit_line(&active),
            }
        })
        .collect()
}

/// Ordinary least squares of y on x and the x-axis intercept with its standard error.
///
/// With `y = a + b x`, `Sxx = sum (x - mean x)^2` and residual variance
/// `s^2 = SSR / (n - 2)`: `Var b = s^2 / Sxx`, `Var a = s^2 (1/n + mean(x)^2 / Sxx)`,
/// `Cov(a, b) = -mean(x) s^2 / Sxx` (Draper & Smith, ch. 1). The Early voltage
/// `V = a / b` then has, to first order (delta method),
/// `Var V = Var a / b^2 + a^2 Var b / b^4 - 2 a Cov(a, b) / b^3`.
pub fn fit_line(xy: &[(f64, f64)]) -> CurveOutcome {
    if xy.len() < 2 {
        return CurveOutcome::TooFewPoints;
    }
    let n = xy.len() as f64;
    let mx = xy.iter().map(|p| p.0).sum::<f64>() / n;
    let my = xy.iter().map(|p| p.1).sum::<f64>() / n;
    let sxx: f64 = xy.iter().map(|p| (p.0 - mx).powi(2)).sum();
    let sxy: f64 = xy.iter().map(|p| (p.0 - mx) * (p.1 - my)).sum();
    // A spread below a part per million of the mean voltage is one voltage in disguise.
    if sxx <= (1e-6 * mx.abs().max(1e-3)).powi(2) * n {
        return CurveOutcome::NoVoltageSpread;
    }
    let b = sxy / sxx;
    let a = my - b * mx;
    let ssr: f64 = xy.iter().map(|p| (p.1 - a - b * p.0).powi(2)).sum();
    let rms_rel = (ssr / n).sqrt() / my.abs();
    let (var_a, var_b, cov_ab) = if xy.len() >= 3 {
        let s2 = ssr / (n - 2.0);
        (s2 * (1.0 / n + mx * mx / sxx), s2 / sxx, -mx * s2 / sxx)
    } else {
        (f64::NAN, f64::NAN, f64::NAN)
    };
    let se_b = var_b.sqrt();
    if b <= 0.0 || (se_b.is_finite() && b < 3.0 * se_b) {
        return CurveOutcome::SlopeNotResolved {
            slope_a_per_v: b,
            slope_std_error: se_b,
        };
    }
    let v = a / b;
    let var_v = var_a / (b * b) + a * a * var_b / b.powi(4) - 2.0 * a * cov_ab / b.powi(3);
    let finite = |x: f64| x.is_finite().then_some(x);
    CurveOutcome::Line(LineFit {
        intercept_a: a,
        slope_a_per_v: b,
        intercept_std_error_a: finite(var_a.sqrt()),
        slope_std_error: finite(se_b),
        early_voltage_v: v,
        early_voltage_std_error_v: finite(var_v.max(0.0).sqrt()),
        output_resistance_ohm: 1.0 / b,
        rms_relative_residual: rms_rel,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    fn m(i_in: f64, v: f64, i_out: f64) -> Measurement {
        Measurement {
            i_in_a: i_in,
            v_out_v: v,
            i_out_a: i_out,
            t_amb_k: None,
            line: 0,
        }
    }

    #[test]
    fn exact_line_gives_its_axis_intercept() {
        // I = 1 mA * (1 + V / 50 V): meets the axis at -50 V.
        let xy: Vec<(f64, f64)> = (1..=6)
            .map(|k| {
                let v = k as f64;
                (v, 1e-3 * (1.0 + v / 50.0))
            })
            .collect();
        let CurveOutcome::Line(l) = fit_line(&xy) else {
            panic!("expected a line")
        };
        assert!((l.early_voltage_v - 50.0).abs() < 1e-9);
        assert!((l.output_resistance_ohm - 50e3).abs() < 1e-6);
        assert!(l.early_voltage_std_error_v.unwrap() < 1e-6);
    }

    #[test]
    fn intercept_error_matches_the_spread_of_repeated_noisy_fits() {
        // The delta-method error against the scatter of many fits of the same line with
        // known noise: they must agree within the sampling error of the scatter itself.
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(7);
        let noise = Normal::new(0.0, 2e-7).unwrap();
        let mut estimates = Vec::new();
        let mut reported = Vec::new();
        for _ in 0..400 {
            let xy: Vec<(f64, f64)> = (0..8)
                .map(|k| {
                    let v = 1.0 + 2.0 * k as f64;
                    (v, 1e-3 * (1.0 + v / 80.0) + noise.sample(&mut rng))
                })
                .collect();
            let CurveOutcome::Line(l) = fit_line(&xy) else {
                panic!("expected a line")
            };
            estimates.push(l.early_voltage_v);
            reported.push(l.early_voltage_std_error_v.unwrap());
        }
        let n = estimates.len() as f64;
        let mean = estimates.iter().sum::<f64>() / n;
        let sd = (estimates.iter().map(|e| (e - mean).powi(2)).sum::<f64>() / (n - 1.0)).sqrt();
        let typical_se = reported.iter().sum::<f64>() / n;
        assert!((mean - 80.0).abs() < 4.0 * sd / n.sqrt() + 0.01 * sd);
        // 400 samples: the scatter's own relative error is about 1/sqrt(800) = 3.5 %.
        assert!(
            (typical_se / sd - 1.0).abs() < 0.12,
            "se {typical_se} sd {sd}"
        );
    }

    #[test]
    fn degenerate_curves_are_named_not_numbered() {
        assert_eq!(fit_line(&[(1.0, 1e-3)]), CurveOutcome::TooFewPoints);
        assert_eq!(
            fit_line(&[(2.0, 1e-3), (2.0, 1.01e-3), (2.0, 0.99e-3)]),
            CurveOutcome::NoVoltageSpread
        );
        assert!(matches!(
            fit_line(&[(1.0, 1e-3), (2.0, 0.999e-3), (3.0, 1.001e-3), (4.0, 1e-3)]),
            CurveOutcome::SlopeNotResolved { .. }
        ));
    }

    #[test]
    fn curves_group_by_current_and_skip_points_below_the_knee() {
        let pts = vec![
            m(100e-6, 0.2, 60e-6),
            m(100e-6, 1.0, 100e-6),
            m(100.02e-6, 2.0, 101e-6),
            m(100e-6, 3.0, 102e-6),
            m(1e-3, 5.0, 1.05e-3),
            m(1e-3, 1.0, 1.01e-3),
        ];
        let fits = fit_curves(&pts, Topology::Simple, 0.0);
        assert_eq!(fits.len(), 2);
        assert_eq!((fits[0].points, fits[0].active_points), (4, 3));
        assert_eq!(fits[0].active_from_v, 1.0);
        assert_eq!((fits[1].points, fits[1].active_points), (2, 2));
        // A Wilson needs two V_BE: the 1 V points fall out.
        let fits = fit_curves(&pts, Topology::Wilson, 0.0);
        assert_eq!(fits[0].active_points, 2);
    }
}
