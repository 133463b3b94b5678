//! A transistor part class: the typical device model of a class of parts, its matching
//! statistics, ratings, thermal resistances and cost.

/// NPN or PNP. The engine solves the NPN form; PNP is the mirror image (MODEL.md).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Polarity {
    Npn,
    Pnp,
}

impl Polarity {
    pub fn as_str(self) -> &'static str {
        match self {
            Polarity::Npn => "npn",
            Polarity::Pnp => "pnp",
        }
    }
}

/// Gummel–Poon-style DC parameters of one device, at `t_nom_k`.
#[derive(Debug, Clone, PartialEq)]
pub struct BjtParams {
    /// IS
    pub saturation_current_a: f64,
    /// BF
    pub beta_forward: f64,
    /// BR (default 1)
    pub beta_reverse: f64,
    /// VAF; `None` means infinite (no Early effect).
    pub early_voltage_v: Option<f64>,
    /// IKF; `None` means no high-current roll-off.
    pub knee_current_a: Option<f64>,
    /// XTI (default 3)
    pub xti: f64,
    /// EG in eV (default 1.11)
    pub eg_ev: f64,
    /// XTB (default 1.5)
    pub xtb: f64,
    /// TNOM in kelvin (default 300.15 K)
    pub t_nom_k: f64,
    /// KF, the flicker-noise coefficient (SPICE meaning: base-current noise
    /// `KF I_B^AF / f`, A²/Hz); 0 = no flicker noise (the default).
    pub flicker_kf: f64,
    /// AF, the flicker-noise current exponent (default 1).
    pub flicker_af: f64,
    /// RB, the base spreading resistance in ohms (default 0). Used by the noise analysis
    /// only: its DC drop `I_B RB` is not part of the operating point (docs/model.md).
    pub base_resistance_ohm: f64,
}

impl BjtParams {
    /// Parameters with the MODEL.md defaults for everything but IS, BF and VAF.
    pub fn new(saturation_current_a: f64, beta_forward: f64, early_voltage_v: Option<f64>) -> Self {
        BjtParams {
            saturation_current_a,
            beta_forward,
            beta_reverse: 1.0,
            early_voltage_v,
            knee_current_a: None,
            xti: 3.0,
            eg_ev: 1.11,
            xtb: 1.5,
            t_nom_k: 300.15,
            flicker_kf: 0.0,
            flicker_af: 1.0,
            base_resistance_ohm: 0.0,
        }
    }
}

/// Part-to-part matching within one package (1 sigma).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Matching {
    /// Sigma of the V_BE offset between two devices of a pair, volts.
    pub vbe_offset_sigma_v: f64,
    /// Sigma of the relative beta mismatch (0.02 = 2 %).
    pub beta_mismatch_sigma: f64,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ratings {
    pub vceo_v: f64,
    pub ic_max_a: f64,
    /// Dissipation rating of one package at 25 °C ambient.
    pub power_per_package_w: f64,
}

#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Thermal {
    /// Junction temperature rise of a die per watt in that same die.
    pub theta_self_k_per_w: f64,
    /// Junction temperature rise of a die per watt in another die of the same package.
    pub theta_mutual_k_per_w: f64,
}

#[derive(Debug, Clone, PartialEq)]
pub struct TransistorClass {
    pub id: String,
    pub summary: String,
    pub polarity: Polarity,
    pub devices_per_package: u32,
    pub package: String,
    pub model: BjtParams,
    /// Required when `devices_per_package > 1`; `None` for singles.
    pub matching: Option<Matching>,
    pub ratings: Ratings,
    pub thermal: Thermal,
    /// Cost of one package, in the catalog's currency.
    pub unit_cost: f64,
    pub provenance: String,
}

impl TransistorClass {
    /// Matching statistics, or those of two unrelated singles when the class gives none.
    pub fn matching_or_default(&self) -> Matching {
        self.matching.unwrap_or(Self::unrelated_matching())
    }

    /// The matching of devices in two separate packages.
    pub fn unrelated_matching() -> Matching {
        Matching {
            // Two separate packages: common practice, no source (several mV apart).
            vbe_offset_sigma_v: 5e-3,
            beta_mismatch_sigma: 0.1,
        }
    }
}
