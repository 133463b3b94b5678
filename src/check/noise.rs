//! The output-noise figure and the `noise` check, from the noise analyses of the solved
//! corners (`circuit::NoiseAnalysis`, one per corner).
//!
//! Owns: which corner is the worst (the largest value of the measure the requirement
//! names: the white density, the density at a frequency, or the band's average density
//! `rms / sqrt(f_hi - f_lo)`), the breakdown by element there, and the check's value.
//! Must not: solve anything (the evaluator passes the analyses in).
//!
//! The analysis is a small-signal one, valid well below the transistors' poles (no
//! capacitance is modelled) and above the thermal corner (junction temperatures held).

use super::corners::OperatingCorner;
use super::verdict::{Check, CheckName};
use crate::circuit::{ElementNoise, NoiseAnalysis};
use crate::model::{NoiseBand, NoiseLimit};

/// One element's share of the output noise at the worst corner.
#[derive(Debug, Clone, PartialEq)]
pub struct NoiseShare {
    /// Transistor or resistor name (`Q2`, `RE1`).
    pub element: &'static str,
    /// Its output current density in the judged measure, A/√Hz.
    pub density_a_per_rthz: f64,
    /// Its fraction of the output noise power (the shares add up to 1).
    pub fraction: f64,
}

/// The output noise at the worst corner.
#[derive(Debug, Clone, PartialEq)]
pub struct NoiseFigure {
    pub corner: OperatingCorner,
    /// White density (shot and thermal), A/√Hz.
    pub white_a_per_rthz: f64,
    /// The measure the requirement names (the white density when it names none), A/√Hz.
    pub judged_a_per_rthz: f64,
    pub band: NoiseBand,
    /// RMS noise over the band, A (band limits only).
    pub band_rms_a: Option<f64>,
    /// By element, largest first.
    pub breakdown: Vec<NoiseShare>,
}

impl NoiseFigure {
    /// The element with the largest share.
    pub fn dominant(&self) -> Option<&NoiseShare> {
        self.breakdown.first()
    }
}

/// Output noise power density of the measure `band` names, A²/Hz.
fn measure(n: &NoiseAnalysis, band: NoiseBand) -> f64 {
    match band {
        NoiseBand::White => n.white_a2_per_hz(),
        NoiseBand::At(f) => n.density_at(f).powi(2),
        NoiseBand::Band(r) => n.band_rms(r.min, r.max).powi(2) / (r.max - r.min),
    }
}

fn element_measure(e: &ElementNoise, band: NoiseBand) -> f64 {
    match band {
        NoiseBand::White => e.white_a2_per_hz,
        NoiseBand::At(f) => e.at(f),
        NoiseBand::Band(r) => {
            e.white_a2_per_hz + e.flicker_a2 * (r.max / r.min).ln() / (r.max - r.min)
        }
    }
}

/// The figure at the worst corner of `analyses`; `None` when there is none.
pub fn figure(
    analyses: &[(OperatingCorner, &NoiseAnalysis)],
    limit: Option<&NoiseLimit>,
) -> Option<NoiseFigure> {
    let band = limit.map_or(NoiseBand::White, |l| l.band);
    let (corner, worst) = analyses
        .iter()
        .max_by(|a, b| measure(a.1, band).total_cmp(&measure(b.1, band)))?;
    let total = measure(worst, band);
    let mut breakdown: Vec<NoiseShare> = worst
        .by_element()
        .iter()
        .map(|e| {
            let p = element_measure(e, band);
            NoiseShare {
                element: e.element,
                density_a_per_rthz: p.sqrt(),
                fraction: if total > 0.0 { p / total } else { 0.0 },
            }
        })
        .collect();
    breakdown.sort_by(|a, b| b.fraction.total_cmp(&a.fraction));
    Some(NoiseFigure {
        corner: *corner,
        white_a_per_rthz: worst.white_density(),
        judged_a_per_rthz: total.sqrt(),
        band,
        band_rms_a: match band {
            NoiseBand::Band(r) => Some(worst.band_rms(r.min, r.max)),
            _ => None,
        },
        breakdown,
    })
}

/// Words for the measure, for details and tables.
pub fn describe(band: NoiseBand) -> String {
    match band {
        NoiseBand::White => "white density".to_string(),
        NoiseBand::At(f) => format!("density at {f} Hz"),
        NoiseBand::Band(r) => format!("average density over {} Hz to {} Hz", r.min, r.max),
    }
}

/// The `noise` check: the worst corner's measure against the limit.
pub fn check(fig: Option<&NoiseFigure>, limit: &NoiseLimit) -> Check {
    let Some(fig) = fig else {
        return Check::at_most(
            CheckName::Noise,
            f64::NAN,
            limit.density_a_per_rthz,
            "no corner could be analysed",
        );
    };
    let c = &fig.corner;
    let mut detail = format!(
        "{} at I_in {:.3e} A, V_out {:.3} V, ambient {:.2} K",
        describe(limit.band),
        c.i_in_a,
        c.v_out_v,
        c.t_amb_k
    );
    if let Some(d) = fig.dominant() {
        detail.push_str(&format!(
            "; {} gives {:.0} % of the noise power",
            d.element,
            d.fraction * 100.0
        ));
    }
    Check::at_most(
        CheckName::Noise,
        fig.judged_a_per_rthz,
        limit.density_a_per_rthz,
        detail,
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::circuit::{NoiseKind, NoiseSource};
    use crate::model::Range;

    fn analysis(white: f64, flicker: f64) -> NoiseAnalysis {
        let mut a = NoiseAnalysis::default();
        a.sources.push(source("Q1", white, 0.0));
        a.sources.push(source("Q2", 3.0 * white, flicker));
        a
    }

    fn source(element: &'static str, white: f64, flicker: f64) -> NoiseSource {
        NoiseSource::new(element, NoiseKind::BaseShot, white, flicker, 1.0)
    }

    fn corner(t: f64) -> OperatingCorner {
        OperatingCorner {
            i_in_a: 1e-4,
            v_out_v: 2.0,
            t_amb_k: t,
            rail_v: None,
        }
    }

    #[test]
    fn worst_corner_shares_and_margin() {
        let (a, b) = (analysis(1e-24, 0.0), analysis(4e-24, 0.0));
        let fig = figure(&[(corner(250.0), &a), (corner(350.0), &b)], None).unwrap();
        assert_eq!(fig.corner.t_amb_k, 350.0);
        assert!((fig.white_a_per_rthz - (16e-24f64).sqrt()).abs() < 1e-20);
        assert_eq!(fig.dominant().unwrap().element, "Q2");
        assert!((fig.breakdown[0].fraction - 0.75).abs() < 1e-12);
        let sum: f64 = fig.breakdown.iter().map(|s| s.fraction).sum();
        assert!((sum - 1.0).abs() < 1e-12);
        let limit = NoiseLimit {
            density_a_per_rthz: 5e-12,
            band: NoiseBand::White,
        };
        let c = check(Some(&fig), &limit);
        assert!(c.pass);
        assert!((c.margin - (5e-12 - 4e-12) / 5e-12).abs() < 1e-9);
    }

    #[test]
    fn frequency_and_band_measures_include_flicker() {
        let a = analysis(1e-24, 4e-23);
        let at = NoiseLimit {
            density_a_per_rthz: 1e-12,
            band: NoiseBand::At(10.0),
        };
        let fig = figure(&[(corner(300.0), &a)], Some(&at)).unwrap();
        // 4e-24 white + 4e-23 / 10 Hz flicker.
        assert!((fig.judged_a_per_rthz.powi(2) / 8e-24 - 1.0).abs() < 1e-12);
        let band = NoiseLimit {
            density_a_per_rthz: 1e-12,
            band: NoiseBand::Band(Range {
                min: 1.0,
                max: 101.0,
            }),
        };
        let fig = figure(&[(corner(300.0), &a)], Some(&band)).unwrap();
        let power = 4e-24 * 100.0 + 4e-23 * 101f64.ln();
        assert!((fig.band_rms_a.unwrap().powi(2) / power - 1.0).abs() < 1e-12);
        assert!((fig.judged_a_per_rthz.powi(2) / (power / 100.0) - 1.0).abs() < 1e-12);
        let sum: f64 = fig.breakdown.iter().map(|s| s.fraction).sum();
        assert!((sum - 1.0).abs() < 1e-12);
    }
}
