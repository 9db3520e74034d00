//! UTC times as people and file names read them, from the system clock,
//! without a time-zone database: run folders are named by UTC date-time so
//! that they sort by time.

use std::time::{SystemTime, UNIX_EPOCH};

/// A moment in UTC, to the second.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub struct UtcTime {
    pub year: i64,
    pub month: u32,
    pub day: u32,
    pub hour: u32,
    pub minute: u32,
    pub second: u32,
}

impl UtcTime {
    /// Now, from the system clock (the epoch if the clock is before it).
    pub fn now() -> UtcTime {
        let seconds = SystemTime::now()
            .duration_since(UNIX_EPOCH)
            .map_or(0, |elapsed| elapsed.as_secs());
        UtcTime::from_unix(seconds as i64)
    }

    /// The UTC time `seconds` after 1970-01-01T00:00:00Z.
    pub fn from_unix(seconds: i64) -> UtcTime {
        let days = seconds.div_euclid(86_400);
        let in_day = seconds.rem_euclid(86_400) as u32;
        // Days since 1970-01-01 to a civil date in the proleptic Gregorian
        // calendar (the algorithm of H. Hinnant's "chrono-compatible low-level
        // date algorithms", from memory): 400-year eras of 146,097 days.
        let shifted = days + 719_468;
        let era = shifted.div_euclid(146_097);
        let day_of_era = shifted.rem_euclid(146_097);
        let year_of_era = (day_of_era - day_of_era / 1460 + day_of_era / 36_524 - day_of_era / 146_096) / 365;
        let day_of_year = day_of_era - (365 * year_of_era + year_of_era / 4 - year_of_era / 100);
        let month_index = (5 * day_of_year + 2) / 153;
        let day = (day_of_year - (153 * month_index + 2) / 5 + 1) as u32;
        let month = if month_index < 10 {
            month_index + 3
        } else {
            month_index - 9
        } as u32;
        let year = year_of_era + era * 400 + i64::from(month <= 2);
        UtcTime {
            year,
            month,
            day,
            hour: in_day / 3600,
            minute: in_day % 3600 / 60,
            second: in_day % 60,
        }
    }

    /// RFC 3339 with a `Z`, e.g. `2026-12-02T21:05:09Z`.
    pub fn rfc3339(&self) -> String {
        format!(
            "{:04}-{:02}-{:02}T{:02}:{:02}:{:02}Z",
            self.year, self.month, self.day, self.hour, self.minute, self.second
        )
    }

    /// The compact form used in folder names, e.g. `20261202T210509Z`; it
    /// sorts as the times do.
    pub fn compact(&self) -> String {
        format!(
            "{:04}{:02}{:02}T{:02}{:02}{:02}Z",
            self.year, self.month, self.day, self.hour, self.minute, self.second
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn unix_times_become_civil_dates() {
        // Source: POSIX.1 "Seconds Since the Epoch" (0 is 1970-01-01T00:00:00Z);
        // 1,000,000,000 is 2001-09-09T01:46:40Z and 951,782,400 is
        // 2000-02-29T00:00:00Z (common practice: widely quoted values, checked
        // with `date -u -d @N`).
        assert_eq!(UtcTime::from_unix(0).rfc3339(), "1970-01-01T00:00:00Z");
        assert_eq!(
            UtcTime::from_unix(1_000_000_000).rfc3339(),
            "2001-09-09T01:46:40Z"
        );
        assert_eq!(UtcTime::from_unix(951_782_400).rfc3339(), "2000-02-29T00:00:00Z");
        assert_eq!(UtcTime::from_unix(-1).rfc3339(), "1969-12-31T23:59:59Z");
        assert_eq!(UtcTime::from_unix(1_000_000_000).compact(), "20010909T014640Z");
    }

    #[test]
    fn every_day_of_four_centuries_follows_the_one_before() {
        // Source: the Gregorian calendar's rules (common practice): month
        // lengths, leap years every 4 years except centuries not divisible
        // by 400; walking day by day from 1970 over 146,097 days.
        let leap = |year: i64| (year % 4 == 0 && year % 100 != 0) || year % 400 == 0;
        let days_in = |year: i64, month: u32| match month {
            2 if leap(year) => 29,
            2 => 28,
            4 | 6 | 9 | 11 => 30,
            _ => 31,
        };
        let mut expected = (1970i64, 1u32, 1u32);
        for day in 0..146_097i64 {
            let time = UtcTime::from_unix(day * 86_400 + 43_200);
            assert_eq!((time.year, time.month, time.day), expected, "day {day}");
            assert_eq!((time.hour, time.minute, time.second), (12, 0, 0));
            expected.2 += 1;
            if expected.2 > days_in(expected.0, expected.1) {
                expected.2 = 1;
                expected.1 += 1;
                if expected.1 > 12 {
                    expected.1 = 1;
                    expected.0 += 1;
                }
            }
        }
    }
}
