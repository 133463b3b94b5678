//! Engineering notation for printed figures (4.70 kΩ, 1.02 mA, 25 °C).
//!
//! Only for human-facing output; JSON and CSV keep plain SI numbers. The ASCII form is
//! for files that some tools read byte-wise (SPICE decks), the Unicode form for pages.

/// Which characters a formatted value may use.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Charset {
    /// `u` for micro, `ohm`, `degC`.
    Ascii,
    /// `µ`, `Ω`, `°C`.
    Unicode,
}

/// `value` with an SI prefix chosen so the mantissa lies in [1, 1000), three
/// significant digits. `unit` is the plain unit symbol ("A", "V", "ohm", "W").
pub fn eng(value: f64, unit: &str, charset: Charset) -> String {
    eng_sig(value, unit, charset, 3)
}

/// `lo to hi` with enough digits (3 to 6) that both ends read as written: a 10 V ±0.1 %
/// rail is "9.990 V to 10.01 V", not "9.99 V to 10.0 V". One value when they are equal.
pub fn eng_range(lo: f64, hi: f64, unit: &str, charset: Charset) -> String {
    if lo == hi {
        return eng(lo, unit, charset);
    }
    let rounded = |x: f64, d: usize| format!("{x:.*e}", d - 1).parse().unwrap_or(x);
    let exact = |x: f64, d: usize| (rounded(x, d) - x).abs() <= 1e-3 * (hi - lo).abs();
    let sig = (3..=6).find(|&d| exact(lo, d) && exact(hi, d)).unwrap_or(6);
    format!(
        "{} to {}",
        eng_sig(lo, unit, charset, sig),
        eng_sig(hi, unit, charset, sig)
    )
}

/// As [`eng`], with `sig` significant digits (3 to 9).
pub fn eng_sig(value: f64, unit: &str, charset: Charset, sig: usize) -> String {
    let sig = sig.clamp(3, 9);
    let unit = match (unit, charset) {
        ("ohm", Charset::Unicode) => "Ω",
        (u, _) => u,
    };
    if value.is_nan() {
        return "n/a".to_string();
    }
    if value.is_infinite() {
        let inf = if charset == Charset::Ascii {
            "inf"
        } else {
            "∞"
        };
        let sign = if value < 0.0 { "-" } else { "" };
        return format!("{sign}{inf} {unit}");
    }
    if value == 0.0 {
        return format!("0 {unit}");
    }
    const PREFIXES: [(&str, &str); 9] = [
        ("f", "f"),
        ("p", "p"),
        ("n", "n"),
        ("u", "µ"),
        ("m", "m"),
        ("", ""),
        ("k", "k"),
        ("M", "M"),
        ("G", "G"),
    ];
    // Round to three significant digits in decimal first, so 99.996 µ becomes 100 µ and
    // 999.96 becomes 1.00 k (not "100.0" or "1000"), and take the power of ten from the
    // decimal exponent (1e-7 / 1e-9 is 99.999... in binary).
    let sci = format!("{value:.*e}", sig - 1);
    let (digits, exp) = sci.split_once('e').unwrap_or((&sci, "0"));
    let digits: f64 = digits.parse().unwrap_or(value);
    let exp: i32 = exp.parse().unwrap_or(0);
    let exp3 = exp.div_euclid(3).clamp(-5, 3);
    let mantissa = digits * 10f64.powi(exp - exp3 * 3);
    let idx = (exp3 + 5) as usize;
    let prefix = match charset {
        Charset::Ascii => PREFIXES[idx].0,
        Charset::Unicode => PREFIXES[idx].1,
    };
    format!("{} {prefix}{unit}", fmt_sig(mantissa, sig))
}

/// `sig` significant digits for a mantissa in [1, 1000), trailing zeros kept (4.70).
fn fmt_sig(m: f64, sig: usize) -> String {
    let int_digits = match m.abs() {
        a if a >= 100.0 => 3,
        a if a >= 10.0 => 2,
        _ => 1,
    };
    let decimals = sig.saturating_sub(int_digits);
    format!("{m:.decimals$}")
}

/// A temperature given in kelvin, printed in degrees Celsius (nearest 0.1 degree).
pub fn celsius(t_k: f64, charset: Charset) -> String {
    let c = t_k - crate::model::ZERO_CELSIUS_K;
    let c = if c.abs() < 0.05 { 0.0 } else { c };
    let text = if (c - c.round()).abs() < 0.05 {
        format!("{c:.0}")
    } else {
        format!("{c:.1}")
    };
    match charset {
        Charset::Ascii => format!("{text} degC"),
        Charset::Unicode => format!("{text} °C"),
    }
}

/// A fraction as a percentage with three significant digits (0.0123 -> "1.23 %"), to a
/// resolution of 0.0001 % (1 ppm): finer digits are below what the solved figures
/// support (solver tolerance, catalog values typical to a few percent), so a residue such
/// as -2e-9 reads "0 %", not "-0.00000020 %".
pub fn percent(fraction: f64) -> String {
    let p = fraction * 100.0;
    if !p.is_finite() {
        return "n/a".to_string();
    }
    let a = p.abs();
    if a < 0.00005 {
        "0 %".to_string()
    } else if a >= 100.0 {
        format!("{p:.0} %")
    } else if a >= 10.0 {
        format!("{p:.1} %")
    } else if a >= 1.0 {
        format!("{p:.2} %")
    } else if a >= 0.1 {
        format!("{p:.3} %")
    } else {
        // Three significant digits in plain decimals (0.0158 %), down to 0.0001 %.
        let decimals = (2 - a.log10().floor() as i32).clamp(3, 4) as usize;
        format!("{p:.decimals$} %")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ranges_keep_the_digits_that_tell_their_ends_apart() {
        let u = Charset::Unicode;
        assert_eq!(eng_range(9.99, 10.01, "V", u), "9.990 V to 10.01 V");
        assert_eq!(eng_range(28.5, 31.5, "V", u), "28.5 V to 31.5 V");
        assert_eq!(eng_range(4.9, 5.1, "V", u), "4.90 V to 5.10 V");
        assert_eq!(eng_range(12.0, 12.0, "V", u), "12.0 V");
    }

    #[test]
    fn engineering_notation() {
        assert_eq!(eng(4700.0, "ohm", Charset::Unicode), "4.70 kΩ");
        assert_eq!(eng(1.0234e-3, "A", Charset::Unicode), "1.02 mA");
        assert_eq!(eng(100e-6, "A", Charset::Ascii), "100 uA");
        assert_eq!(eng(100e-6, "A", Charset::Unicode), "100 µA");
        assert_eq!(eng(999.96, "V", Charset::Ascii), "1.00 kV");
        assert_eq!(eng(12.0, "V", Charset::Ascii), "12.0 V");
        assert_eq!(eng(99.99999e-9, "A", Charset::Unicode), "100 nA");
        assert_eq!(eng(9.9996, "V", Charset::Ascii), "10.0 V");
        assert_eq!(eng_sig(1.49987, "V", Charset::Ascii, 5), "1.4999 V");
        assert_eq!(eng(0.0, "V", Charset::Ascii), "0 V");
        assert_eq!(eng(-2.5e-3, "V", Charset::Ascii), "-2.50 mV");
    }

    #[test]
    fn temperatures_and_percentages() {
        assert_eq!(celsius(298.15, Charset::Unicode), "25 °C");
        assert_eq!(celsius(233.15, Charset::Ascii), "-40 degC");
        assert_eq!(celsius(300.0, Charset::Ascii), "26.9 degC");
        assert_eq!(percent(0.0123), "1.23 %");
        assert_eq!(percent(0.5), "50.0 %");
        assert_eq!(percent(0.00123), "0.123 %");
        assert_eq!(percent(-0.000158), "-0.0158 %");
        assert_eq!(percent(2.5e-6), "0.0003 %");
        assert_eq!(percent(-2.0e-9), "0 %");
        assert_eq!(percent(2.5e-7), "0 %");
    }
}
