//! Figures for people: every number the fit prints rounded to what its precision
//! supports. JSON keeps full precision; only the table and the sentences use this.
//!
//! A value with a standard error is rounded by the error, after the Particle Data
//! Group's rule (*Review of Particle Physics*, Introduction, "Rounding"): take the error's
//! three leading digits; 100 to 354 keep two significant digits of the error, 355 to 949
//! one, 950 to 999 round up to 1000 and keep two; the value is rounded to the same
//! decimal place. Value and error share one SI prefix, chosen by the value. A figure
//! without an error (a condition number, a residual) gets two significant digits: it is
//! read as a size, not as a measurement.

/// Decimal exponent of the last digit to keep for a standard error `se` (the PDG rule),
/// or `None` when `se` is not a positive finite number.
pub fn last_digit(se: f64) -> Option<i32> {
    if !(se.is_finite() && se > 0.0) {
        return None;
    }
    let e = se.log10().floor() as i32;
    let lead3 = (se / 10f64.powi(e - 2)).round();
    // `round` can carry 999.6 to 1000 (one more leading digit).
    let (e, lead3) = if lead3 >= 1000.0 {
        (e + 1, 100.0)
    } else {
        (e, lead3)
    };
    // 355 to 949 keep one digit; 950 to 999 keep the same place, where rounding makes
    // them "10" of the next decade: two digits, as the rule asks.
    Some(if lead3 <= 354.0 { e - 1 } else { e })
}

/// `value` and `se` as two strings with the unit, rounded by the error and sharing one
/// SI prefix (none when `unit` is empty: a plain number like BF).
pub fn with_error(value: f64, se: f64, unit: &str) -> (String, String) {
    let Some(last) = last_digit(se) else {
        return (prefixed(value, unit, 3), String::new());
    };
    let exp3 = if unit.is_empty() || value == 0.0 || !value.is_finite() {
        0
    } else {
        prefix_exponent(value.abs().max(se))
    };
    let Some(prefix) = prefix(exp3) else {
        return (format!("{value:.3e} {unit}"), format!("{se:.2e} {unit}"));
    };
    let scale = 10f64.powi(3 * exp3);
    let decimals = (3 * exp3 - last).max(0) as usize;
    let round = |x: f64| {
        let step = 10f64.powi(last);
        let r = (x / step).round() * step / scale;
        // Avoid "-0".
        let s = format!("{r:.decimals$}");
        if s.trim_start_matches('-')
            .chars()
            .all(|c| c == '0' || c == '.')
        {
            s.trim_start_matches('-').to_string()
        } else {
            s
        }
    };
    let unit = if unit.is_empty() {
        String::new()
    } else {
        format!(" {prefix}{unit}")
    };
    (
        format!("{}{unit}", round(value)),
        format!("{}{unit}", round(se)),
    )
}

/// `x` with two (or `digits`) significant digits and an SI prefix for `unit`; a plain
/// number when `unit` is empty (`4.9`, `12`, `1.2e7`).
pub fn prefixed(x: f64, unit: &str, digits: usize) -> String {
    if !x.is_finite() {
        return if x.is_nan() {
            "n/a".into()
        } else {
            "infinite".into()
        };
    }
    if unit.is_empty() {
        return plain(x, digits);
    }
    if x == 0.0 {
        return format!("0 {unit}");
    }
    let mut exp3 = prefix_exponent(x.abs());
    let mut m = round_sig(x / 10f64.powi(3 * exp3), digits);
    if m.abs() >= 1000.0 {
        exp3 += 1;
        m = round_sig(x / 10f64.powi(3 * exp3), digits);
    }
    match prefix(exp3) {
        Some(p) => format!("{} {p}{unit}", plain(m, digits)),
        None => format!("{x:.*e} {unit}", digits.saturating_sub(1)),
    }
}

/// A plain number with `digits` significant digits, scientific outside 1e-3..1e6.
pub fn plain(x: f64, digits: usize) -> String {
    if x == 0.0 {
        return "0".into();
    }
    let r = round_sig(x, digits);
    if !(1e-3..1e6).contains(&r.abs()) {
        let s = format!("{r:.*e}", digits.saturating_sub(1));
        return s;
    }
    let e = r.abs().log10().floor() as i32;
    let decimals = (digits as i32 - 1 - e).max(0) as usize;
    format!("{r:.decimals$}")
}

/// A percentage of a fraction, two significant digits (`0.010 %`).
pub fn percent(fraction: f64) -> String {
    format!("{} %", plain(fraction * 100.0, 2))
}

fn round_sig(x: f64, digits: usize) -> f64 {
    if x == 0.0 || !x.is_finite() {
        return x;
    }
    let e = x.abs().log10().floor() as i32;
    let step = 10f64.powi(e + 1 - digits as i32);
    (x / step).round() * step
}

fn prefix_exponent(x: f64) -> i32 {
    (x.log10() / 3.0).floor() as i32
}

fn prefix(exp3: i32) -> Option<&'static str> {
    Some(match exp3 {
        -5 => "f",
        -4 => "p",
        -3 => "n",
        -2 => "µ",
        -1 => "m",
        0 => "",
        1 => "k",
        2 => "M",
        3 => "G",
        _ => return None,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The PDG rule's own examples (Review of Particle Physics, Introduction): 0.827 ->
    /// 0.8, 0.0376... with 1.1 kept as "1.1", and 0.0999 rounding up to "0.10".
    #[test]
    fn errors_keep_one_or_two_digits_by_the_pdg_rule() {
        assert_eq!(with_error(14.21, 0.827, ""), ("14.2".into(), "0.8".into()));
        assert_eq!(
            with_error(14.21, 0.354, ""),
            ("14.21".into(), "0.35".into())
        );
        assert_eq!(with_error(14.21, 0.355, ""), ("14.2".into(), "0.4".into()));
        assert_eq!(
            with_error(14.21, 0.0999, ""),
            ("14.21".into(), "0.10".into())
        );
        assert_eq!(with_error(14.21, 1.1, ""), ("14.2".into(), "1.1".into()));
        // The figures of the issue: BF 180.9496 ± 0.5420 and the demo's VAF and offset.
        assert_eq!(
            with_error(180.9496, 0.5420, ""),
            ("180.9".into(), "0.5".into())
        );
        assert_eq!(with_error(190.4, 48.0, ""), ("190".into(), "50".into()));
        assert_eq!(
            with_error(75.0123, 0.108, "V"),
            ("75.01 V".into(), "0.11 V".into())
        );
        assert_eq!(
            with_error(1.50042e-3, 2.95e-6, "V"),
            ("1.5004 mV".into(), "0.0030 mV".into())
        );
        assert_eq!(
            with_error(946.2, 15.2, "V"),
            ("946 V".into(), "15 V".into())
        );
        assert_eq!(
            with_error(-0.0004, 0.3, "V"),
            ("0 mV".into(), "300 mV".into())
        );
    }

    #[test]
    fn figures_without_an_error_keep_two_digits() {
        assert_eq!(plain(4.890, 2), "4.9");
        assert_eq!(plain(12.3, 2), "12");
        assert_eq!(plain(1.234e7, 2), "1.2e7");
        assert_eq!(percent(0.000_101), "0.010 %");
        assert_eq!(prefixed(97.2e-9, "A/V", 3), "97.2 nA/V");
        assert_eq!(prefixed(999.7e-6, "V", 2), "1.0 mV");
        assert_eq!(prefixed(f64::INFINITY, "V", 2), "infinite");
    }
}
