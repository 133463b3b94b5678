//! Emitter resistor classes and the IEC 60063 preferred-number series.

use std::sync::OnceLock;

/// An IEC 60063 series of preferred values.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Series {
    E12,
    E24,
    E48,
    E96,
    E192,
}

impl Series {
    pub fn as_str(self) -> &'static str {
        match self {
            Series::E12 => "E12",
            Series::E24 => "E24",
            Series::E48 => "E48",
            Series::E96 => "E96",
            Series::E192 => "E192",
        }
    }

    /// All series, coarsest first.
    pub const ALL: [Series; 5] = [
        Series::E12,
        Series::E24,
        Series::E48,
        Series::E96,
        Series::E192,
    ];

    pub fn from_name(name: &str) -> Option<Series> {
        Series::ALL
            .into_iter()
            .find(|s| s.as_str().eq_ignore_ascii_case(name))
    }

    /// Number of values per decade.
    pub fn per_decade(self) -> usize {
        match self {
            Series::E12 => 12,
            Series::E24 => 24,
            Series::E48 => 48,
            Series::E96 => 96,
            Series::E192 => 192,
        }
    }

    /// The values of one decade as integers with the series' significant digits:
    /// `10..=82` for E12 and `10..=91` for E24 (two digits), `100..=988` for
    /// E48/E96/E192 (three digits).
    ///
    /// IEC 60063: E12 is every other E24 value; E24 is a fixed table (eight entries differ from the rounded geometric
    /// value: 27 30 33 36 39 43 47 82); E48, E96 and E192 are `round(10^(i/N))` to three
    /// digits, with one exception in E192 (920 where the formula gives 919).
    pub fn decade_digits(self) -> &'static [u16] {
        static TABLES: OnceLock<[Vec<u16>; 5]> = OnceLock::new();
        let tables = TABLES.get_or_init(|| Series::ALL.map(Series::compute_digits));
        &tables[self as usize]
    }

    fn compute_digits(self) -> Vec<u16> {
        const E24: [u16; 24] = [
            10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68, 75,
            82, 91,
        ];
        if self == Series::E24 {
            return E24.to_vec();
        }
        if self == Series::E12 {
            return E24.iter().step_by(2).copied().collect();
        }
        let n = self.per_decade();
        (0..n)
            .map(|i| {
                let v = (100.0 * 10f64.powf(i as f64 / n as f64)).round() as u16;
                if self == Series::E192 && v == 919 {
                    920
                } else {
                    v
                }
            })
            .collect()
    }

    /// Significant digits of the series (2 for E12 and E24, 3 otherwise).
    fn digit_count(self) -> i32 {
        if matches!(self, Series::E12 | Series::E24) {
            2
        } else {
            3
        }
    }

    /// The values of one decade as mantissas in `[1, 10)` (1.0, 1.1, ... for E24).
    pub fn decade_values(self) -> Vec<f64> {
        self.decade_digits()
            .iter()
            .map(|&d| scaled(d, 1 - self.digit_count()))
            .collect()
    }

    /// Every preferred value in `[lo, hi]` (ohms), ascending. Empty when `lo > hi` or
    /// either bound is not a positive finite number. Each value is the double nearest
    /// its decimal form (`4.7e3` is exactly `4700.0`).
    pub fn values_between(self, lo: f64, hi: f64) -> Vec<f64> {
        if !(lo > 0.0 && hi.is_finite() && lo <= hi) {
            return Vec::new();
        }
        let first_decade = lo.log10().floor() as i32 - 1;
        let last_decade = hi.log10().floor() as i32 + 1;
        let mut out = Vec::new();
        for d in first_decade..=last_decade {
            for &digits in self.decade_digits() {
                let v = scaled(digits, d + 1 - self.digit_count());
                if v >= lo && v <= hi {
                    out.push(v);
                }
            }
        }
        out
    }

    /// The preferred values either side of `x`: the largest at or below it and the
    /// smallest at or above it (the same value twice when `x` is one, to 1e-9).
    pub fn bracket(self, x: f64) -> Option<(f64, f64)> {
        if !(x > 0.0 && x.is_finite()) {
            return None;
        }
        let near = self.values_between(x / 1.3, x * 1.3);
        if let Some(&v) = near.iter().find(|v| ((*v / x) - 1.0).abs() <= 1e-9) {
            return Some((v, v));
        }
        let below = near
            .iter()
            .copied()
            .filter(|v| *v < x)
            .fold(None, |a: Option<f64>, v| Some(a.map_or(v, |a| a.max(v))))?;
        let above = near.iter().copied().find(|v| *v > x)?;
        Some((below, above))
    }

    /// The preferred value nearest to `x` on a logarithmic scale (ties go up).
    pub fn nearest(self, x: f64) -> Option<f64> {
        if !(x > 0.0 && x.is_finite()) {
            return None;
        }
        // Neighbouring E12 values are at most ~22 % apart (8.2 -> 10), so 25 % either side
        // always holds a value below and above.
        self.values_between(x / 1.25, x * 1.25)
            .into_iter()
            .min_by(|a, b| {
                let da = (a / x).ln().abs();
                let db = (b / x).ln().abs();
                da.total_cmp(&db).then(b.total_cmp(a))
            })
    }
}

/// `digits * 10^exp`, correctly rounded: multiplying or dividing an integer by an exact
/// power of ten rounds once, so the result equals the decimal literal.
fn scaled(digits: u16, exp: i32) -> f64 {
    let d = f64::from(digits);
    if exp >= 0 {
        d * 10f64.powi(exp)
    } else {
        d / 10f64.powi(-exp)
    }
}

#[derive(Debug, Clone, PartialEq)]
pub struct ResistorClass {
    pub id: String,
    pub summary: String,
    pub series: Series,
    /// Tolerance as a fraction (0.01 = 1 %), read as +-3 sigma (MODEL.md).
    pub tolerance: f64,
    /// Temperature coefficient, per kelvin (100 ppm/K = 1e-4).
    pub tcr_per_k: f64,
    pub unit_cost: f64,
    /// Power rating at 70 °C, watts; `None` in the catalog means
    /// `DEFAULT_POWER_RATING_W`.
    pub power_rating_w: Option<f64>,
    pub provenance: String,
    /// Smallest value the class is made in, ohms (catalog `min_value`, default
    /// [`DEFAULT_MIN_OHM`]).
    pub min_ohm: f64,
    /// Largest value the class is made in, ohms (catalog `max_value`, default
    /// [`DEFAULT_MAX_OHM`]).
    pub max_ohm: f64,
}

/// Default lower end of a resistor class's value range: 1 Ω, where general-purpose
/// film chip ranges usually start (common practice, no source).
pub const DEFAULT_MIN_OHM: f64 = 1.0;

/// Default upper end of a resistor class's value range: 10 MΩ, where general-purpose
/// film chip ranges usually stop (common practice, no source). A catalog may give a
/// class a wider range with `max_value`.
pub const DEFAULT_MAX_OHM: f64 = 10e6;

/// Emitter resistors at or above this get a caution: surface leakage through flux
/// residue and moisture on the board becomes comparable to the resistor (common
/// practice, no source).
pub const LEAKAGE_CAUTION_OHM: f64 = 10e6;

/// The rating assumed when a resistor class gives none: a 0603 chip resistor's 0.1 W
/// (common practice, no source).
pub const DEFAULT_POWER_RATING_W: f64 = 0.1;

impl ResistorClass {
    /// The class's power rating, or the chip-resistor default.
    pub fn power_rating(&self) -> f64 {
        self.power_rating_w.unwrap_or(DEFAULT_POWER_RATING_W)
    }

    /// The rating at ambient `t_amb_k`: full to 70 °C, derated linearly to zero at
    /// 155 °C, the usual chip-resistor curve (common practice, no source).
    pub fn power_rating_at(&self, t_amb_k: f64) -> f64 {
        derated_power(self.power_rating(), t_amb_k)
    }
}

/// A chip resistor's rating `rating_w` (at 70 °C) at ambient `t_amb_k`: full to 70 °C,
/// linearly to zero at 155 °C (common practice, no source).
pub fn derated_power(rating_w: f64, t_amb_k: f64) -> f64 {
    let t_c = t_amb_k - 273.15;
    rating_w * ((155.0 - t_c) / 85.0).clamp(0.0, 1.0)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn e24_is_the_iec_60063_table() {
        // IEC 60063, E12 series.
        assert_eq!(
            Series::E12.decade_digits(),
            &[10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82]
        );
        assert_eq!(Series::from_name("e12"), Some(Series::E12));
        assert_eq!(Series::E12.nearest(4.6e3), Some(4700.0));
        // IEC 60063, E24 series (a fixed table, not the rounded geometric values).
        assert_eq!(
            Series::E24.decade_digits().to_vec(),
            vec![
                10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30, 33, 36, 39, 43, 47, 51, 56, 62, 68,
                75, 82, 91
            ]
        );
        // The eight entries that differ from round(10 * 10^(i/24)).
        let differ: Vec<u16> = Series::E24
            .decade_digits()
            .iter()
            .enumerate()
            .filter(|(i, v)| (10.0 * 10f64.powf(*i as f64 / 24.0)).round() as u16 != **v)
            .map(|(_, v)| *v)
            .collect();
        assert_eq!(differ, vec![27, 30, 33, 36, 39, 43, 47, 82]);
    }

    #[test]
    fn e48_matches_the_iec_60063_list() {
        // IEC 60063, E48 series as published.
        assert_eq!(
            Series::E48.decade_digits().to_vec(),
            vec![
                100, 105, 110, 115, 121, 127, 133, 140, 147, 154, 162, 169, 178, 187, 196, 205,
                215, 226, 237, 249, 261, 274, 287, 301, 316, 332, 348, 365, 383, 402, 422, 442,
                464, 487, 511, 536, 562, 590, 619, 649, 681, 715, 750, 787, 825, 866, 909, 953
            ]
        );
    }

    #[test]
    fn e96_and_e192_follow_iec_60063() {
        // IEC 60063: E96 has no exception; every second E96 value is an E48 value and
        // every second E192 value an E96 value.
        let e96 = Series::E96.decade_digits().to_vec();
        let e192 = Series::E192.decade_digits().to_vec();
        assert_eq!(e96.len(), 96);
        assert_eq!(e192.len(), 192);
        assert_eq!(&e96[..4], &[100, 102, 105, 107]);
        assert_eq!(e96[95], 976);
        let every_other = |v: &[u16]| v.iter().step_by(2).copied().collect::<Vec<_>>();
        assert_eq!(every_other(&e96), Series::E48.decade_digits());
        assert_eq!(every_other(&e192), e96);
        // The one E192 exception: 920 where the formula gives 919.
        assert!(e192.contains(&920) && !e192.contains(&919));
        assert_eq!(e192[185], 920);
        assert_eq!(e192[191], 988);
        assert!(e192.windows(2).all(|w| w[0] < w[1]));
    }

    #[test]
    fn values_between_spans_decades() {
        let v = Series::E24.values_between(3.9e3, 5.6e3);
        assert_eq!(v, vec![3900.0, 4300.0, 4700.0, 5100.0, 5600.0]);
        let v = Series::E96.values_between(1.0, 1000.0);
        assert_eq!(v.len(), 3 * 96 + 1);
        assert_eq!(v[0], 1.0);
        assert_eq!(*v.last().unwrap(), 1000.0);
        assert!(Series::E24.values_between(10.0, 1.0).is_empty());
        assert_eq!(Series::E24.nearest(4.6e3), Some(4700.0));
        assert_eq!(Series::E96.nearest(4.7e3), Some(4750.0));
        // Values equal their decimal literals, also below 1 ohm.
        assert_eq!(Series::E192.values_between(0.4, 0.41), vec![0.402, 0.407]);
        assert_eq!(Series::E24.values_between(0.47, 0.47), vec![0.47]);
        assert_eq!(
            Series::E96.values_between(1.0e5, 1.03e5),
            vec![1.0e5, 1.02e5]
        );
        assert_eq!(Series::from_name("e96"), Some(Series::E96));
    }
}
