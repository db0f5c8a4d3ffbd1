//! The recording date of a baseline: UTC, RFC 3339 (`YYYY-MM-DDTHH:MM:SSZ`), formatted from
//! the system clock with the days-to-civil-date conversion of the proleptic Gregorian
//! calendar (H. Hinnant, "chrono-Compatible Low-Level Date Algorithms", `civil_from_days`).

use std::time::{SystemTime, UNIX_EPOCH};

/// Year, month (1-12) and day (1-31) of the day `days` after 1970-01-01.
fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let doe = z.rem_euclid(146_097);
    let yoe = (doe - doe / 1460 + doe / 36_524 - doe / 146_096) / 365;
    let doy = doe - (365 * yoe + yoe / 4 - yoe / 100);
    let mp = (5 * doy + 2) / 153;
    let day = (doy - (153 * mp + 2) / 5 + 1) as u32;
    let month = if mp < 10 { mp + 3 } else { mp - 9 } as u32;
    let year = yoe + era * 400 + i64::from(month <= 2);
    (year, month, day)
}

/// `seconds` after the Unix epoch (1970-01-01T00:00:00Z, leap seconds not counted, as
/// POSIX time) in RFC 3339 form, UTC.
pub fn rfc3339_utc(seconds: i64) -> String {
    let days = seconds.div_euclid(86_400);
    let rest = seconds.rem_euclid(86_400);
    let (y, m, d) = civil_from_days(days);
    format!(
        "{y:04}-{m:02}-{d:02}T{:02}:{:02}:{:02}Z",
        rest / 3600,
        rest % 3600 / 60,
        rest % 60
    )
}

/// The current time in RFC 3339 form, UTC (the epoch if the clock is before it).
pub fn now_rfc3339_utc() -> String {
    let seconds = SystemTime::now()
        .duration_since(UNIX_EPOCH)
        .map_or(0, |d| d.as_secs() as i64);
    rfc3339_utc(seconds)
}

#[cfg(test)]
mod tests {
    use super::rfc3339_utc;

    #[test]
    fn known_posix_times() {
        // POSIX time values (IEEE Std 1003.1, "Seconds Since the Epoch", whose formula gives
        // these): the epoch, 2000-01-01 (946684800), the leap day 2000-02-29 (951782400),
        // the 32-bit rollover 2038-01-19T03:14:07Z (2147483647) and a day before the epoch.
        assert_eq!(rfc3339_utc(0), "1970-01-01T00:00:00Z");
        assert_eq!(rfc3339_utc(946_684_800), "2000-01-01T00:00:00Z");
        assert_eq!(rfc3339_utc(951_782_400), "2000-02-29T00:00:00Z");
        assert_eq!(rfc3339_utc(2_147_483_647), "2038-01-19T03:14:07Z");
        assert_eq!(rfc3339_utc(-86_400), "1969-12-31T00:00:00Z");
    }
}
