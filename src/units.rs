//! Engineering quantities at the edges: parse what engineers write (`4k7`, `100 uA`,
//! `-40 °C`, `1 %`) into SI numbers, and format SI numbers back in engineering notation
//! (`4.70 kΩ`, `1.02 mA`).
//!
//! This module owns the text form of every quantity in the files and the tables. It must
//! not know about YAML or files: callers give it a string and a [`Field`] (what the value
//! means, its dimension and its plausible range) and get an SI `f64` or a typed
//! [`QuantityError`] that keeps the user's text.
//!
//! Rules, stated once:
//! * SI prefixes (SI Brochure, BIPM, 9th edition, table 7): `f p n u µ m k M G`, plus
//!   `Meg` (also `MEG`, `meg`) as a second spelling of mega for readers used to SPICE.
//!   `m` is always milli and `M` always mega.
//! * Units: `A`, `V`, `ohm`/`Ω`, `W`, `K/W` (also `°C/W`), `ppm/K` (also `ppm/°C`), `%`,
//!   `eV`, and `°C`/`C`/`K` for temperatures. Prefixes apply to A, V, Ω and W only.
//! * Resistances may use the IEC 60062 letter-and-digit code: `4k7` = 4.7 kΩ, `2R2` =
//!   2.2 Ω, `1M5` = 1.5 MΩ, `R47` = 0.47 Ω, `100R` = 100 Ω.
//! * **A bare number is read in the field's base unit**: amperes, volts, ohms, watts,
//!   kelvin per watt, per kelvin for temperature coefficients, a plain fraction for
//!   percentages (`0.01` = 1 %), electronvolts for band gaps, and **degrees Celsius for
//!   temperatures** (ambient ranges are written in °C; write `K` to give kelvin).
//! * Every field has a plausible range; a value outside it is rejected with a hint
//!   (for example `1 MA` as a programming current suggests `1 mA`).

use std::fmt;

use crate::model::ZERO_CELSIUS_K;

/// What kind of physical quantity a field holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Dimension {
    Current,
    Voltage,
    Resistance,
    Power,
    /// K/W
    ThermalResistance,
    /// Per kelvin (ppm/K in files).
    TempCoefficient,
    /// A fraction (percent in files).
    Fraction,
    /// Electronvolts (band gaps).
    Energy,
    /// Kelvin inside, °C in files and tables.
    Temperature,
    /// A plain number (beta, exponents, ratios, prices).
    Number,
}

impl Dimension {
    /// The noun used in messages ("is not a current").
    pub fn noun(self) -> &'static str {
        match self {
            Dimension::Current => "a current",
            Dimension::Voltage => "a voltage",
            Dimension::Resistance => "a resistance",
            Dimension::Power => "a power",
            Dimension::ThermalResistance => "a thermal resistance",
            Dimension::TempCoefficient => "a temperature coefficient",
            Dimension::Fraction => "a percentage",
            Dimension::Energy => "an energy",
            Dimension::Temperature => "a temperature",
            Dimension::Number => "a plain number",
        }
    }

    /// How a value of this dimension is usually written, for messages.
    pub fn example(self) -> &'static str {
        match self {
            Dimension::Current => "`100 uA` or `1.5 mA`",
            Dimension::Voltage => "`12 V` or `650 mV`",
            Dimension::Resistance => "`4k7` or `4.7 kΩ`",
            Dimension::Power => "`250 mW`",
            Dimension::ThermalResistance => "`625 K/W`",
            Dimension::TempCoefficient => "`100 ppm/K`",
            Dimension::Fraction => "`1 %` or `0.01`",
            Dimension::Energy => "`1.11 eV`",
            Dimension::Temperature => "`25 °C` or `298.15 K`",
            Dimension::Number => "`150`",
        }
    }

    /// The unit symbol used when formatting.
    fn symbol(self) -> &'static str {
        match self {
            Dimension::Current => "A",
            Dimension::Voltage => "V",
            Dimension::Resistance => "Ω",
            Dimension::Power => "W",
            Dimension::ThermalResistance => "K/W",
            Dimension::TempCoefficient => "ppm/K",
            Dimension::Fraction => "%",
            Dimension::Energy => "eV",
            Dimension::Temperature => "°C",
            Dimension::Number => "",
        }
    }

    fn takes_prefix(self) -> bool {
        matches!(
            self,
            Dimension::Current | Dimension::Voltage | Dimension::Resistance | Dimension::Power
        )
    }
}

impl fmt::Display for Dimension {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.noun())
    }
}

/// One field a quantity can be written into: its dimension and plausible SI range.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Field {
    /// What the field is, in words ("programming current").
    pub what: &'static str,
    pub dimension: Dimension,
    /// Smallest plausible value, SI (inclusive).
    pub min: f64,
    /// Largest plausible value, SI (inclusive).
    pub max: f64,
}

impl Field {
    pub const fn new(what: &'static str, dimension: Dimension, min: f64, max: f64) -> Field {
        Field {
            what,
            dimension,
            min,
            max,
        }
    }
}

/// A quantity that could not be read. Every variant keeps the user's text.
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum QuantityError {
    #[error("`{}` is not {expected}; write it like {}", shown(text), expected.example())]
    NotAQuantity { text: String, expected: Dimension },
    #[error("`{}` is {found}, but {expected} was expected here; write it like {}", shown(text), expected.example())]
    WrongUnit {
        text: String,
        found: Dimension,
        expected: Dimension,
    },
    #[error("`{}` has no unit and {expected} here needs one; write it like {}", shown(text), expected.example())]
    MissingUnit { text: String, expected: Dimension },
    #[error("`{}` uses the prefix `{prefix}` ({meaning}), which {expected} here does not accept; write it with {accepted}, like {}", shown(text), expected.example())]
    UnsupportedPrefix {
        text: String,
        prefix: String,
        meaning: &'static str,
        expected: Dimension,
        accepted: &'static str,
    },
    #[error("`{}` is out of range for {what}: expected {} to {}{hint}", shown(text), format_quantity(*min, *dimension), format_quantity(*max, *dimension))]
    OutOfRange {
        text: String,
        what: &'static str,
        dimension: Dimension,
        value: f64,
        min: f64,
        max: f64,
        /// Extra advice, starting with "; " or empty.
        hint: String,
    },
}

/// SI prefixes, SI Brochure (BIPM, 9th ed.) table 7, the ones a circuit file needs.
const PREFIXES: [(&str, f64); 12] = [
    ("f", 1e-15),
    ("p", 1e-12),
    ("n", 1e-9),
    ("u", 1e-6),
    ("µ", 1e-6), // U+00B5 MICRO SIGN
    ("μ", 1e-6), // U+03BC GREEK SMALL LETTER MU
    ("m", 1e-3),
    ("k", 1e3),
    ("Meg", 1e6),
    ("MEG", 1e6),
    ("meg", 1e6),
    ("M", 1e6),
];
const GIGA: (&str, f64) = ("G", 1e9);

/// Unit spellings and their dimension. Longest first so `K/W` wins over `K`.
const UNITS: [(&str, Dimension); 21] = [
    ("ppm/°C", Dimension::TempCoefficient),
    ("ppm/K", Dimension::TempCoefficient),
    ("ppm/C", Dimension::TempCoefficient),
    ("°C/W", Dimension::ThermalResistance),
    ("K/W", Dimension::ThermalResistance),
    ("C/W", Dimension::ThermalResistance),
    ("ohms", Dimension::Resistance),
    ("ohm", Dimension::Resistance),
    ("Ohm", Dimension::Resistance),
    ("Ω", Dimension::Resistance),
    ("Ω", Dimension::Resistance), // U+2126 OHM SIGN
    ("degC", Dimension::Temperature),
    ("°C", Dimension::Temperature),
    ("eV", Dimension::Energy),
    ("%", Dimension::Fraction),
    ("A", Dimension::Current),
    ("V", Dimension::Voltage),
    ("W", Dimension::Power),
    ("C", Dimension::Temperature),
    ("K", Dimension::Temperature),
    ("R", Dimension::Resistance),
];

/// Split a leading decimal number (sign, digits, point, exponent) from the rest.
fn split_number(s: &str) -> Option<(f64, &str)> {
    let b = s.as_bytes();
    let mut i = 0;
    if i < b.len() && (b[i] == b'+' || b[i] == b'-') {
        i += 1;
    }
    let digits_start = i;
    while i < b.len() && b[i].is_ascii_digit() {
        i += 1;
    }
    if i < b.len() && b[i] == b'.' {
        i += 1;
        while i < b.len() && b[i].is_ascii_digit() {
            i += 1;
        }
    }
    if i == digits_start || (i == digits_start + 1 && b[digits_start] == b'.') {
        return None;
    }
    // Exponent only when followed by digits, so `1e` stays an error and `2E24` is not
    // mistaken for anything else.
    if i < b.len() && (b[i] == b'e' || b[i] == b'E') {
        let mut j = i + 1;
        if j < b.len() && (b[j] == b'+' || b[j] == b'-') {
            j += 1;
        }
        let exp_digits = j;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        // `1eV` has no exponent digits: the `e` belongs to the unit.
        if j > exp_digits {
            i = j;
        }
    }
    let value: f64 = s[..i].parse().ok()?;
    Some((value, &s[i..]))
}

/// The IEC 60062 code: digits, one multiplier letter in place of the decimal point,
/// digits (`4k7`, `2R2`, `1M5`, `R47`, `100R`). Returns ohms and what follows the code.
fn parse_resistor_code(s: &str) -> Option<(f64, &str)> {
    let letter_at = s.find(|c: char| !c.is_ascii_digit())?;
    let letter = s[letter_at..].chars().next()?;
    let mult = match letter {
        'R' | 'r' => 1.0,
        'm' => 1e-3,
        'k' | 'K' => 1e3,
        'M' => 1e6,
        'G' => 1e9,
        _ => return None,
    };
    let after = &s[letter_at + letter.len_utf8()..];
    let frac_len = after
        .find(|c: char| !c.is_ascii_digit())
        .unwrap_or(after.len());
    let int_part = &s[..letter_at];
    let frac_part = &after[..frac_len];
    // `100R` and `R47` are codes; `4k` alone is a prefix and handled elsewhere.
    if frac_part.is_empty() && !(letter == 'R' || letter == 'r') {
        return None;
    }
    if int_part.is_empty() && frac_part.is_empty() {
        return None;
    }
    let text = format!(
        "{}.{}",
        if int_part.is_empty() { "0" } else { int_part },
        if frac_part.is_empty() { "0" } else { frac_part }
    );
    Some((scale(&text, exponent_of(mult)), &after[frac_len..]))
}

/// Read a unit suffix (after the number and optional spaces): prefix and unit.
/// Returns the multiplier and the dimension, or `None` if it is not a unit we know.
fn parse_suffix(suffix: &str) -> Option<(f64, Dimension)> {
    for (unit, dim) in UNITS {
        if let Some(prefix) = suffix.strip_suffix(unit) {
            if prefix.is_empty() {
                return Some((1.0, dim));
            }
            // Prefixed units: only A, V, ohm, W; the code letter R takes none.
            if !dim.takes_prefix() || unit == "R" {
                continue;
            }
            if let Some((_, m)) = PREFIXES
                .iter()
                .chain(std::iter::once(&GIGA))
                .find(|(p, _)| *p == prefix)
            {
                return Some((*m, dim));
            }
        }
    }
    None
}

/// The power of ten of a prefix multiplier (all of them are exact powers of ten).
fn exponent_of(mult: f64) -> i32 {
    mult.log10().round() as i32
}

/// `number_text * 10^exp10`, rounded once: the decimal is shifted in text and parsed, so
/// `12 fA` is the double nearest 12e-15, as if the user had typed `12e-15`.
fn scale(number_text: &str, exp10: i32) -> f64 {
    let (mantissa, own_exp) = match number_text.find(['e', 'E']) {
        Some(i) => (
            &number_text[..i],
            number_text[i + 1..].parse::<i32>().unwrap_or(0),
        ),
        None => (number_text, 0),
    };
    format!("{mantissa}e{}", own_exp.saturating_add(exp10))
        .parse()
        .unwrap_or(f64::NAN)
}

/// Parse `text` as a quantity of `dimension`, SI result. No plausibility check.
pub fn parse(text: &str, dimension: Dimension) -> Result<f64, QuantityError> {
    // Text pasted from documents often carries U+2212 MINUS SIGN instead of `-`.
    let normalised = text.trim().replace('\u{2212}', "-");
    let t = normalised.as_str();
    let not_a = || QuantityError::NotAQuantity {
        text: text.to_string(),
        expected: dimension,
    };
    if dimension == Dimension::Resistance {
        if let Some((ohms, rest)) = parse_resistor_code(t) {
            let rest = rest.trim_start();
            let unit_ok = rest.is_empty()
                || matches!(parse_suffix(rest), Some((m, Dimension::Resistance)) if m == 1.0);
            if unit_ok {
                return Ok(ohms);
            }
            return Err(not_a());
        }
    }
    let (number, rest) = split_number(t).ok_or_else(not_a)?;
    let number_text = &t[..t.len() - rest.len()];
    if !number.is_finite() {
        return Err(not_a());
    }
    let suffix = rest.trim_start();
    if suffix.is_empty() {
        return Ok(match dimension {
            Dimension::Temperature => number + ZERO_CELSIUS_K,
            _ => number,
        });
    }
    // Resistor values are often written with a prefix alone (`10k`, `2 Meg`).
    let prefix_only = || {
        PREFIXES
            .iter()
            .chain(std::iter::once(&GIGA))
            .find(|(p, _)| *p == suffix)
            .map(|(_, m)| (*m, Dimension::Resistance))
    };
    let (mult, found) = parse_suffix(suffix)
        .or_else(|| {
            (dimension == Dimension::Resistance)
                .then(prefix_only)
                .flatten()
        })
        .ok_or_else(|| unsupported_prefix(text, suffix, dimension))?;
    if found != dimension {
        return Err(QuantityError::WrongUnit {
            text: text.to_string(),
            found,
            expected: dimension,
        });
    }
    let si = match dimension {
        Dimension::Temperature => {
            if suffix == "K" {
                number
            } else {
                number + ZERO_CELSIUS_K
            }
        }
        Dimension::TempCoefficient => scale(number_text, -6),
        Dimension::Fraction => scale(number_text, -2),
        _ => scale(number_text, exponent_of(mult)),
    };
    Ok(si)
}

/// Parse `text` for `field` and check the value is plausible for it.
pub fn parse_field(text: &str, field: &Field) -> Result<f64, QuantityError> {
    let v = parse(text, field.dimension)?;
    check_range(text, v, field)
}

/// Check an already-numeric value (a YAML number) against a field's range.
pub fn check_range(text: &str, value: f64, field: &Field) -> Result<f64, QuantityError> {
    // A limit written in another unit than the SI one (`-60 °C` is 213.15 K) can land an
    // ulp outside after conversion; a relative tolerance far below any printed digit keeps
    // the documented limits themselves valid. The value is then clamped to the range.
    let tol = RANGE_TOLERANCE * field.min.abs().max(field.max.abs());
    if value >= field.min - tol && value <= field.max + tol {
        return Ok(value.clamp(field.min, field.max));
    }
    Err(QuantityError::OutOfRange {
        text: text.to_string(),
        what: field.what,
        dimension: field.dimension,
        value,
        min: field.min,
        max: field.max,
        hint: range_hint(text, value, field),
    })
}

/// Relative slack on range limits (see [`check_range`]).
const RANGE_TOLERANCE: f64 = 1e-12;

/// A value as messages show it: control characters escaped and long text cut with an
/// ellipsis (see [`crate::text::shown`]).
fn shown(text: &str) -> String {
    crate::text::shown(text)
}

/// SI prefixes this tool does not accept, with their meaning: a message can name them
/// instead of calling `1 TΩ` "not a resistance".
const UNSUPPORTED_PREFIXES: [(&str, &str); 6] = [
    ("T", "tera, 10^12"),
    ("P", "peta, 10^15"),
    ("E", "exa, 10^18"),
    ("a", "atto, 10^-18"),
    ("z", "zepto, 10^-21"),
    ("y", "yocto, 10^-24"),
];

/// `NotAQuantity` for `text`, or a named unsupported prefix when the suffix is a known
/// unit behind an SI prefix the tool does not take (`1 TΩ`, `5 aA`, `1 GA`).
fn unsupported_prefix(text: &str, suffix: &str, dimension: Dimension) -> QuantityError {
    let accepted = "f p n u m k M G (or Meg)";
    for (unit, dim) in UNITS {
        let Some(prefix) = suffix.strip_suffix(unit) else {
            continue;
        };
        if prefix.is_empty() || dim != dimension || !dim.takes_prefix() || unit == "R" {
            continue;
        }
        let meaning = UNSUPPORTED_PREFIXES
            .iter()
            .find(|(p, _)| *p == prefix)
            .map(|(_, m)| *m);
        if let Some(meaning) = meaning {
            return QuantityError::UnsupportedPrefix {
                text: text.to_string(),
                prefix: prefix.to_string(),
                meaning,
                expected: dimension,
                accepted,
            };
        }
    }
    if dimension == Dimension::Resistance {
        if let Some((_, meaning)) = UNSUPPORTED_PREFIXES.iter().find(|(p, _)| *p == suffix) {
            return QuantityError::UnsupportedPrefix {
                text: text.to_string(),
                prefix: suffix.to_string(),
                meaning,
                expected: dimension,
                accepted,
            };
        }
    }
    QuantityError::NotAQuantity {
        text: text.to_string(),
        expected: dimension,
    }
}

/// Advice for an out-of-range value: a mixed-up `m`/`M`, a missing unit.
fn range_hint(text: &str, value: f64, field: &Field) -> String {
    let fits = |v: f64| v >= field.min && v <= field.max;
    let t = text.trim();
    // A negative value where only magnitudes make sense (voltages from the mirror rail,
    // currents, resistances): say so instead of only giving the range.
    if value < 0.0 && field.min >= 0.0 && fits(-value) && field.dimension == Dimension::Voltage {
        let unsigned = t.trim_start_matches(['-', '\u{2212}']);
        return format!(
            "; {} is a magnitude here (measured from the mirror rail for NPN and PNP mirrors alike): write it without the sign, as in `{unsigned}`",
            field.what
        );
    }
    if field.dimension.takes_prefix() {
        if let Some((_, rest)) = split_number(t) {
            let rest = rest.trim_start();
            if rest.starts_with('M') && fits(value * 1e-9) {
                return format!(
                    "; `M` means mega (10^6); for milli write `m`, as in `{}`",
                    t.replacen('M', "m", 1)
                );
            }
            if rest.starts_with('m') && !rest.starts_with("meg") && fits(value * 1e9) {
                return format!(
                    "; `m` means milli (10^-3); for mega write `M` or `Meg`, as in `{}`",
                    t.replacen('m', "M", 1)
                );
            }
            if rest.is_empty() && value != 0.0 {
                return format!(
                    "; a bare number is read in {}; add a unit, as in {}",
                    match field.dimension {
                        Dimension::Current => "amperes",
                        Dimension::Voltage => "volts",
                        Dimension::Resistance => "ohms",
                        _ => "watts",
                    },
                    field.dimension.example()
                );
            }
        }
    }
    if field.dimension == Dimension::Fraction && split_number(t).is_some_and(|(_, r)| r.is_empty())
    {
        return "; a bare number is a fraction (0.01 = 1 %); write `%` for percent".to_string();
    }
    if field.dimension == Dimension::TempCoefficient
        && split_number(t).is_some_and(|(_, r)| r.trim().is_empty())
    {
        return "; a bare number is per kelvin; write `ppm/K` for parts per million".to_string();
    }
    if field.dimension == Dimension::Temperature
        && split_number(t).is_some_and(|(_, r)| r.trim().is_empty())
    {
        return "; a bare number is read in °C; write `K` for kelvin".to_string();
    }
    String::new()
}

/// Format an SI value in engineering notation with 3 significant digits and the
/// dimension's unit (`4.70 kΩ`, `1.02 mA`, `25.0 °C`, `1.00 %`, `100 ppm/K`).
pub fn format_quantity(si: f64, dimension: Dimension) -> String {
    match dimension {
        Dimension::Temperature => format!("{} °C", sig3(si - ZERO_CELSIUS_K)),
        Dimension::TempCoefficient => format!("{} ppm/K", sig3(si * 1e6)),
        Dimension::Fraction => format!("{} %", sig3(si * 100.0)),
        Dimension::Number => plain3(si),
        d if d.takes_prefix() => format_prefixed(si, d.symbol()),
        d => format!("{} {}", sig3(si), d.symbol()),
    }
}

/// Engineering notation with an SI prefix: exponent a multiple of 3, mantissa in
/// [1, 1000) after rounding to 3 significant digits.
pub fn format_prefixed(si: f64, unit: &str) -> String {
    if si == 0.0 || !si.is_finite() {
        return format!("{} {unit}", sig3(si));
    }
    let mut exp3 = (si.abs().log10() / 3.0).floor() as i32;
    let mut mantissa = si / 10f64.powi(exp3 * 3);
    if round_sig3(mantissa).abs() >= 1000.0 {
        exp3 += 1;
        mantissa = si / 10f64.powi(exp3 * 3);
    }
    let prefix = match exp3 {
        -5 => "f",
        -4 => "p",
        -3 => "n",
        -2 => "µ",
        -1 => "m",
        0 => "",
        1 => "k",
        2 => "M",
        3 => "G",
        _ => return format!("{si:.3e} {unit}"),
    };
    format!("{} {prefix}{unit}", sig3(mantissa))
}

/// A plain number rounded to 3 significant digits, without trailing zeros (`5`, `5000`,
/// `0.125`), falling back to `sig3` for very large or small magnitudes.
fn plain3(x: f64) -> String {
    let r = round_sig3(x);
    if r == 0.0 || (1e-3..1e6).contains(&r.abs()) {
        let s = format!("{r}");
        // `{}` of a rounded value can still print binary noise (0.30000000000000004).
        if s.len() <= 8 {
            return s;
        }
    }
    sig3(x)
}

fn round_sig3(x: f64) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let digits = 2 - x.abs().log10().floor() as i32;
    let scale = 10f64.powi(digits);
    (x * scale).round() / scale
}

/// A number with 3 significant digits, without an exponent for |x| in [1e-3, 1e6).
pub fn sig3(x: f64) -> String {
    if x == 0.0 {
        return "0".to_string();
    }
    if !x.is_finite() {
        return format!("{x}");
    }
    let r = round_sig3(x);
    let mag = r.abs().log10().floor() as i32;
    if !(-3..6).contains(&mag) {
        return format!("{r:.2e}");
    }
    let decimals = (2 - mag).max(0) as usize;
    format!("{r:.decimals$}")
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * a.abs().max(b.abs())
    }

    #[test]
    fn si_prefixes_follow_the_si_brochure() {
        // SI Brochure (BIPM, 9th edition 2019), table 7: the decimal prefixes.
        let cases = [
            ("1 fA", 1e-15),
            ("1 pA", 1e-12),
            ("1 nA", 1e-9),
            ("1 uA", 1e-6),
            ("1 µA", 1e-6),
            ("1 μA", 1e-6),
            ("1 mA", 1e-3),
            ("1 A", 1.0),
            ("1 kA", 1e3),
            ("1 MA", 1e6),
            ("1 GA", 1e9),
        ];
        for (text, want) in cases {
            let got = parse(text, Dimension::Current).unwrap();
            assert!(close(got, want), "{text}: {got} != {want}");
        }
        // `Meg` is the SPICE spelling of mega; `m` is always milli, `M` mega.
        assert!(close(parse("2 Meg", Dimension::Resistance).unwrap(), 2e6));
        assert!(close(parse("2MEGohm", Dimension::Resistance).unwrap(), 2e6));
        assert!(close(parse("2 MΩ", Dimension::Resistance).unwrap(), 2e6));
        assert!(close(parse("2 mV", Dimension::Voltage).unwrap(), 2e-3));
        assert!(close(parse("20 fA", Dimension::Current).unwrap(), 20e-15));
        assert!(close(
            parse("1.5e-3 A", Dimension::Current).unwrap(),
            1.5e-3
        ));
        // Prefixes shift the decimal point exactly: the same double as the literal.
        assert_eq!(parse("12 fA", Dimension::Current).unwrap(), 12e-15);
        assert_eq!(parse("4k7", Dimension::Resistance).unwrap(), 4.7e3);
        assert_eq!(
            parse("100 ppm/K", Dimension::TempCoefficient).unwrap(),
            1e-4
        );
        assert_eq!(parse("0.1 %", Dimension::Fraction).unwrap(), 1e-3);
        assert_eq!(parse("1.5e2 mV", Dimension::Voltage).unwrap(), 0.15);
    }

    #[test]
    fn resistor_code_follows_iec_60062() {
        // IEC 60062, letter and digit code: the letter stands for the decimal point and
        // the multiplier (R = 1, K = 10^3, M = 10^6, G = 10^9).
        let cases = [
            ("4k7", 4.7e3),
            ("4K7", 4.7e3),
            ("2R2", 2.2),
            ("R47", 0.47),
            ("100R", 100.0),
            ("1M5", 1.5e6),
            ("1G0", 1e9),
            ("4k7 Ω", 4.7e3),
            ("4k7ohm", 4.7e3),
        ];
        for (text, want) in cases {
            let got = parse(text, Dimension::Resistance).unwrap();
            assert!(close(got, want), "{text}: {got} != {want}");
        }
    }

    #[test]
    fn other_units() {
        assert!(close(
            parse("625 K/W", Dimension::ThermalResistance).unwrap(),
            625.0
        ));
        assert!(close(
            parse("625 °C/W", Dimension::ThermalResistance).unwrap(),
            625.0
        ));
        assert!(close(
            parse("100 ppm/K", Dimension::TempCoefficient).unwrap(),
            1e-4
        ));
        assert!(close(parse("1 %", Dimension::Fraction).unwrap(), 0.01));
        assert!(close(parse("0.01", Dimension::Fraction).unwrap(), 0.01));
        assert!(close(parse("1.11 eV", Dimension::Energy).unwrap(), 1.11));
        assert!(close(parse("250 mW", Dimension::Power).unwrap(), 0.25));
        // Temperatures: °C, C and K; a bare number is °C (documented above).
        assert!(close(
            parse("-40 °C", Dimension::Temperature).unwrap(),
            233.15
        ));
        assert!(close(
            parse("85 C", Dimension::Temperature).unwrap(),
            358.15
        ));
        assert!(close(
            parse("300.15 K", Dimension::Temperature).unwrap(),
            300.15
        ));
        assert!(close(parse("25", Dimension::Temperature).unwrap(), 298.15));
        assert!(close(
            parse("\u{2212}40 °C", Dimension::Temperature).unwrap(),
            233.15
        ));
        assert!(close(parse("150", Dimension::Number).unwrap(), 150.0));
    }

    #[test]
    fn wrong_unit_names_the_expected_dimension() {
        let e = parse("5 V", Dimension::Current).unwrap_err();
        assert_eq!(
            e.to_string(),
            "`5 V` is a voltage, but a current was expected here; write it like `100 uA` or `1.5 mA`"
        );
        let e = parse("4k7x", Dimension::Resistance).unwrap_err();
        assert_eq!(
            e.to_string(),
            "`4k7x` is not a resistance; write it like `4k7` or `4.7 kΩ`"
        );
        assert!(matches!(
            parse("abc", Dimension::Voltage),
            Err(QuantityError::NotAQuantity { .. })
        ));
        assert!(matches!(
            parse("3 xV", Dimension::Voltage),
            Err(QuantityError::NotAQuantity { .. })
        ));
        // Temperature units take no prefix.
        assert!(parse("3 mK", Dimension::Temperature).is_err());
    }

    #[test]
    fn implausible_magnitude_gets_a_hint() {
        let f = Field::new("programming current", Dimension::Current, 1e-12, 1.0);
        let e = parse_field("1 MA", &f).unwrap_err();
        let msg = e.to_string();
        assert!(
            msg.contains("`1 MA` is out of range for programming current"),
            "{msg}"
        );
        assert!(msg.contains("`M` means mega"), "{msg}");
        assert!(msg.contains("`1 mA`"), "{msg}");
        let r = Field::new("resistance", Dimension::Resistance, 0.1, 1e8);
        let e = parse_field("2 mohm", &r).unwrap_err().to_string();
        assert!(e.contains("`m` means milli"), "{e}");
        let v = Field::new("supply", Dimension::Voltage, 0.5, 1000.0);
        let e = parse_field("5000", &v).unwrap_err().to_string();
        assert!(e.contains("bare number is read in volts"), "{e}");
        assert!(close(parse_field("15 V", &v).unwrap(), 15.0));
    }

    #[test]
    fn formats_in_engineering_notation() {
        assert_eq!(format_quantity(4700.0, Dimension::Resistance), "4.70 kΩ");
        assert_eq!(format_quantity(1.0234e-3, Dimension::Current), "1.02 mA");
        assert_eq!(format_quantity(100e-6, Dimension::Current), "100 µA");
        assert_eq!(format_quantity(999.6, Dimension::Resistance), "1.00 kΩ");
        assert_eq!(format_quantity(20e-15, Dimension::Current), "20.0 fA");
        assert_eq!(format_quantity(298.15, Dimension::Temperature), "25.0 °C");
        assert_eq!(format_quantity(0.01, Dimension::Fraction), "1.00 %");
        assert_eq!(
            format_quantity(1e-4, Dimension::TempCoefficient),
            "100 ppm/K"
        );
        assert_eq!(
            format_quantity(625.0, Dimension::ThermalResistance),
            "625 K/W"
        );
        assert_eq!(format_quantity(0.0, Dimension::Voltage), "0 V");
        assert_eq!(format_quantity(-0.65, Dimension::Voltage), "-650 mV");
    }

    fn any_dimension() -> impl Strategy<Value = Dimension> {
        prop_oneof![
            Just(Dimension::Current),
            Just(Dimension::Voltage),
            Just(Dimension::Resistance),
            Just(Dimension::Power),
            Just(Dimension::ThermalResistance),
            Just(Dimension::TempCoefficient),
            Just(Dimension::Fraction),
            Just(Dimension::Energy),
            Just(Dimension::Number),
        ]
    }

    proptest! {
        #[test]
        fn format_then_parse_round_trips(
            dim in any_dimension(),
            mantissa in 1.0f64..10.0,
            exp in -14i32..9,
            negative in any::<bool>(),
        ) {
            let v = mantissa * 10f64.powi(exp) * if negative { -1.0 } else { 1.0 };
            let text = format_quantity(v, dim);
            let back = parse(&text, dim).unwrap();
            // 3 significant digits: within half a unit in the third digit.
            prop_assert!((back - v).abs() <= 5.01e-3 * v.abs(), "{v} -> {text} -> {back}");
        }

        #[test]
        fn temperatures_round_trip(t in 0.0f64..600.0) {
            let text = format_quantity(t, Dimension::Temperature);
            let back = parse(&text, Dimension::Temperature).unwrap();
            prop_assert!((back - t).abs() <= 0.5, "{t} -> {text} -> {back}");
        }

        #[test]
        fn parser_never_panics(s in "\\PC{0,12}") {
            let _ = parse(&s, Dimension::Resistance);
            let _ = parse(&s, Dimension::Temperature);
        }
    }
}
