//! Wall-clock timestamps for records, without a date library.

use std::time::{SystemTime, UNIX_EPOCH};

/// The current UTC time as RFC 3339 with milliseconds, e.g. `2026-12-02T00:31:13.042Z`.
pub fn utc_timestamp() -> String {
    let d = SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .unwrap_or_default();
    format_utc(d.as_secs() as i64, d.subsec_millis())
}

/// Formats seconds since the Unix epoch (UTC) with milliseconds.
pub(crate) fn format_utc(secs: i64, millis: u32) -> String {
    let (days, rem) = (secs.div_euclid(86_400), secs.rem_euclid(86_400));
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}.{millis:03}Z",
        rem / 3600,
        rem / 60 % 60,
        rem % 60
    )
}

/// Days since 1970-01-01 to a proleptic Gregorian (year, month, day); the `civil_from_days`
/// algorithm of H. Hinnant, "chrono-Compatible Low-Level Date Algorithms" (2013).
fn civil_from_days(z: i64) -> (i64, u32, u32) {
    let z = z + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let d = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let m = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let y = yoe + era * 400 + i64::from(m <= 2);
    (y, m, d)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn timestamps_match_known_dates() {
        // Reference values from `date -u -d @SECONDS` (GNU coreutils).
        assert_eq!(format_utc(0, 0), "1970-01-01T00:00:00.000Z");
        assert_eq!(format_utc(951_782_400, 5), "2000-02-29T00:00:00.005Z");
        assert_eq!(format_utc(1_796_171_473, 999), "2026-12-02T00:31:13.999Z");
    }
}
