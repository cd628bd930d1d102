//! UTC wall-clock time as RFC 3339 text, from `std` alone.

use std::time::{SystemTime, UNIX_EPOCH};

/// `time` as RFC 3339 text in UTC with whole seconds, e.g. `2026-05-01T09:30:00Z`.
pub fn rfc3339_utc(time: SystemTime) -> String {
    let seconds = match time.duration_since(UNIX_EPOCH) {
        Ok(after) => i64::try_from(after.as_secs()).unwrap_or(i64::MAX),
        // Before 1970: round down to the whole second.
        Err(before) => {
            let gap = before.duration();
            let whole = i64::try_from(gap.as_secs()).unwrap_or(i64::MAX);
            -whole - i64::from(gap.subsec_nanos() > 0)
        }
    };
    unix_seconds_rfc3339(seconds)
}

/// Seconds since 1970-01-01T00:00:00Z as RFC 3339 text in UTC.
pub fn unix_seconds_rfc3339(seconds: i64) -> String {
    let days = seconds.div_euclid(86_400);
    let of_day = seconds.rem_euclid(86_400);
    let (year, month, day) = civil_from_days(days);
    format!(
        "{year:04}-{month:02}-{day:02}T{:02}:{:02}:{:02}Z",
        of_day / 3600,
        of_day / 60 % 60,
        of_day % 60
    )
}

/// (year, month 1–12, day 1–31) of the proleptic Gregorian calendar for a
/// count of days since 1970-01-01.
///
/// Howard Hinnant, "chrono-Compatible Low-Level Date Algorithms",
/// `civil_from_days` (<https://howardhinnant.github.io/date_algorithms.html#civil_from_days>):
/// shift the epoch to 0000-03-01 so that leap days end each 400-year era,
/// then find the era, the year of the era and the day of the year.
pub fn civil_from_days(days: i64) -> (i64, u32, u32) {
    let z = days + 719_468;
    let era = z.div_euclid(146_097);
    let day_of_era = z.rem_euclid(146_097); // [0, 146096]
    let year_of_era =
        (day_of_era - day_of_era / 1460 + day_of_era / 36_524 - day_of_era / 146_096) / 365; // [0, 399]
    let day_of_year = day_of_era - (365 * year_of_era + year_of_era / 4 - year_of_era / 100); // [0, 365]
    let shifted_month = (5 * day_of_year + 2) / 153; // [0, 11], March = 0
    let day = day_of_year - (153 * shifted_month + 2) / 5 + 1; // [1, 31]
    let month = if shifted_month < 10 {
        shifted_month + 3
    } else {
        shifted_month - 9
    };
    let year = year_of_era + era * 400 + i64::from(month <= 2);
    (year, month as u32, day as u32)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The inverse, `days_from_civil` from the same paper, to check every day.
    fn days_from_civil(year: i64, month: u32, day: u32) -> i64 {
        let (month, day) = (i64::from(month), i64::from(day));
        let year = if month <= 2 { year - 1 } else { year };
        let era = year.div_euclid(400);
        let year_of_era = year.rem_euclid(400);
        let shifted_month = if month > 2 { month - 3 } else { month + 9 };
        let day_of_year = (153 * shifted_month + 2) / 5 + day - 1;
        let day_of_era = year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;
        era * 146_097 + day_of_era - 719_468
    }

    #[test]
    fn known_instants() {
        // Reference values: `date -u -d @SECONDS +%FT%TZ` (GNU coreutils).
        for (seconds, text) in [
            (0, "1970-01-01T00:00:00Z"),
            (-1, "1969-12-31T23:59:59Z"),
            (951_782_400, "2000-02-29T00:00:00Z"),
            (1_709_251_199, "2024-02-29T23:59:59Z"),
            (4_107_542_400, "2100-03-01T00:00:00Z"),
        ] {
            assert_eq!(unix_seconds_rfc3339(seconds), text, "{seconds}");
        }
        let before = UNIX_EPOCH - std::time::Duration::from_millis(1500);
        assert_eq!(rfc3339_utc(before), "1969-12-31T23:59:58Z");
    }

    #[test]
    fn every_day_of_four_centuries_round_trips() {
        let mut previous = civil_from_days(-146_098);
        for days in -146_097..=146_097 {
            let (year, month, day) = civil_from_days(days);
            assert_eq!(days_from_civil(year, month, day), days);
            assert!((1..=12).contains(&month) && (1..=31).contains(&day));
            assert!((year, month, day) > previous, "dates increase");
            previous = (year, month, day);
        }
    }
}
