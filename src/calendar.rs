//! Calendar dates for provenance lines (reports, emitted catalog classes). Owns the one
//! Unix-time-to-date conversion; must not format anything else.
//!
//! Hand-written on purpose: one formatted UTC date is all the tool needs, and these dozen
//! lines (tested on leap days below) cost less than a date crate and its dependency tree,
//! which would also pull in time-zone data the tool must not use (records are UTC).

/// `YYYY-MM-DD` (UTC) of a Unix time in seconds, by the civil-from-days algorithm
/// (proleptic Gregorian calendar; Hinnant, "chrono-compatible low-level date algorithms").
pub fn utc_date(unix_seconds: i64) -> String {
    let z = unix_seconds.div_euclid(86_400) + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z - era * 146_097;
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = doy - (153 * mp + 2) / 5 + 1;
    let m = if mp < 10 { mp + 3 } else { mp - 9 };
    let y = yoe + era * 400 + i64::from(m <= 2);
    format!("{y:04}-{m:02}-{d:02}")
}

/// Today's date (UTC). `SOURCE_DATE_EPOCH` (the reproducible-builds convention) overrides
/// the clock so records made in tests and scripts are byte-for-byte repeatable.
pub fn today_utc() -> String {
    let now = std::env::var("SOURCE_DATE_EPOCH")
        .ok()
        .and_then(|s| s.trim().parse::<i64>().ok())
        .unwrap_or_else(|| {
            std::time::SystemTime::now()
                .duration_since(std::time::UNIX_EPOCH)
                .map_or(0, |d| d.as_secs() as i64)
        });
    utc_date(now)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dates_from_unix_time() {
        assert_eq!(utc_date(0), "1970-01-01");
        // 2000-02-29 (a leap day in a year divisible by 400) and the day after.
        assert_eq!(utc_date(951_782_400), "2000-02-29");
        assert_eq!(utc_date(951_868_800), "2000-03-01");
        assert_eq!(utc_date(1_798_761_599), "2026-12-31");
        assert_eq!(utc_date(-86_400), "1969-12-31");
    }
}
