//! Document dates as the report reads them, and the periods it groups them
//! into.
//!
//! Documents keep their date as written in the input (`DocumentInfo::date`);
//! it is read here, at report time. Accepted are the ISO 8601 calendar and
//! ordinal dates, alone or in front of a time of day: `2024`, `2024-03`,
//! `2024-03-01`, `20240301`, `2024-061`, `2024061`, and any of the full
//! dates followed by `T` (or, as RFC 3339 allows, a space) and a time such
//! as `09:30`, `09:30:15.25Z` or `0930+01:00`. Only the calendar date is
//! kept, as written (a time zone never moves it to another day). Anything
//! else, including impossible dates such as `2023-02-29`, is unreadable;
//! the report counts such documents and never drops them from anything but
//! the charts over time.

/// How much of a date is known.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub enum Precision {
    Year,
    Month,
    Day,
}

/// A calendar date, possibly reduced to its month or year.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub struct CalendarDate {
    pub year: i32,
    /// 1 to 12, or `None` for a year alone.
    pub month: Option<u8>,
    /// 1 to the month's length, or `None` for a year or a month alone.
    pub day: Option<u8>,
}

impl CalendarDate {
    /// How much of the date is known.
    pub fn precision(&self) -> Precision {
        match (self.month, self.day) {
            (Some(_), Some(_)) => Precision::Day,
            (Some(_), None) => Precision::Month,
            _ => Precision::Year,
        }
    }

    /// The date written back in the ISO 8601 extended form of its precision.
    pub fn iso(&self) -> String {
        match (self.month, self.day) {
            (Some(month), Some(day)) => format!("{:04}-{month:02}-{day:02}", self.year),
            (Some(month), None) => format!("{:04}-{month:02}", self.year),
            _ => format!("{:04}", self.year),
        }
    }
}

fn is_leap_year(year: i32) -> bool {
    (year % 4 == 0 && year % 100 != 0) || year % 400 == 0
}

fn days_in_month(year: i32, month: u8) -> u8 {
    match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        _ if is_leap_year(year) => 29,
        _ => 28,
    }
}

fn digits(text: &str) -> Option<u32> {
    if text.is_empty() || !text.bytes().all(|byte| byte.is_ascii_digit()) {
        return None;
    }
    text.parse().ok()
}

/// A full calendar date from a year, month and day, if it exists.
fn full_date(year: u32, month: u32, day: u32) -> Option<CalendarDate> {
    let year = year as i32;
    let month = u8::try_from(month).ok().filter(|m| (1..=12).contains(m))?;
    let day = u8::try_from(day)
        .ok()
        .filter(|&d| d >= 1 && d <= days_in_month(year, month))?;
    Some(CalendarDate {
        year,
        month: Some(month),
        day: Some(day),
    })
}

/// The calendar date of day `ordinal` (1-based) of `year`, if it exists.
fn ordinal_date(year: u32, ordinal: u32) -> Option<CalendarDate> {
    let year = year as i32;
    let days_in_year = if is_leap_year(year) { 366 } else { 365 };
    if ordinal == 0 || ordinal > days_in_year {
        return None;
    }
    let mut left = ordinal;
    for month in 1..=12u8 {
        let length = u32::from(days_in_month(year, month));
        if left <= length {
            return Some(CalendarDate {
                year,
                month: Some(month),
                day: Some(left as u8),
            });
        }
        left -= length;
    }
    None
}

/// Whether `text` is a time of day with an optional zone designator, in the
/// extended (`09:30:15.5+01:00`) or basic (`093015Z`) form.
fn is_time_of_day(text: &str) -> bool {
    let (clock, zone) = match text.find(['Z', 'z', '+', '-']) {
        Some(at) => text.split_at(at),
        None => (text, ""),
    };
    let zone_ok = match zone {
        "" | "Z" | "z" => true,
        _ => {
            let offset = &zone[1..];
            let parts: Vec<&str> = if offset.contains(':') {
                offset.split(':').collect()
            } else if offset.len() == 4 {
                vec![&offset[..2], &offset[2..]]
            } else {
                vec![offset]
            };
            matches!(parts.as_slice(), [h] if h.len() == 2 && digits(h).is_some_and(|h| h <= 23))
                || matches!(parts.as_slice(), [h, m] if h.len() == 2 && m.len() == 2
                    && digits(h).is_some_and(|h| h <= 23) && digits(m).is_some_and(|m| m <= 59))
        }
    };
    let (whole, fraction) = match clock.split_once(['.', ',']) {
        Some((whole, fraction)) => (whole, Some(fraction)),
        None => (clock, None),
    };
    if fraction.is_some_and(|fraction| fraction.is_empty() || !fraction.bytes().all(|b| b.is_ascii_digit())) {
        return false;
    }
    let fields: Vec<&str> = if whole.contains(':') {
        whole.split(':').collect()
    } else {
        whole
            .as_bytes()
            .chunks(2)
            .map(|chunk| std::str::from_utf8(chunk).unwrap_or(""))
            .collect()
    };
    let limits = [24, 59, 60];
    let fields_ok = (1..=3).contains(&fields.len())
        && fields
            .iter()
            .zip(limits)
            .all(|(field, limit)| field.len() == 2 && digits(field).is_some_and(|value| value <= limit));
    zone_ok && fields_ok
}

/// Reads an ISO 8601 date (see the module text for the accepted forms);
/// `None` when the text is not one.
pub fn parse_date(text: &str) -> Option<CalendarDate> {
    let text = text.trim();
    let (date, time) = match text.find(['T', 't', ' ']) {
        Some(at) => (&text[..at], Some(&text[at + 1..])),
        None => (text, None),
    };
    if time.is_some_and(|time| !is_time_of_day(time)) {
        return None;
    }
    let parsed = if let Some((year, rest)) = date.split_once('-') {
        if year.len() != 4 {
            return None;
        }
        let year = digits(year)?;
        match rest.split_once('-') {
            Some((month, day)) if month.len() == 2 && day.len() == 2 => {
                full_date(year, digits(month)?, digits(day)?)
            }
            None if rest.len() == 3 => ordinal_date(year, digits(rest)?),
            None if rest.len() == 2 => {
                let month = digits(rest)?;
                (1..=12).contains(&month).then_some(CalendarDate {
                    year: year as i32,
                    month: Some(month as u8),
                    day: None,
                })
            }
            _ => None,
        }
    } else {
        let value = digits(date)?;
        match date.len() {
            4 => Some(CalendarDate {
                year: value as i32,
                month: None,
                day: None,
            }),
            7 => ordinal_date(value / 1000, value % 1000),
            8 => full_date(value / 10_000, value / 100 % 100, value % 100),
            _ => None,
        }
    }?;
    // A time of day belongs to a full date only.
    if time.is_some() && parsed.precision() != Precision::Day {
        return None;
    }
    Some(parsed)
}

/// Days from 1970-01-01 to a full date (negative before it), by the
/// proleptic Gregorian calendar.
fn days_from_epoch(year: i32, month: u8, day: u8) -> i64 {
    // Shift the year to start in March, so the leap day is the last day.
    let (year, month) = if month <= 2 {
        (i64::from(year) - 1, i64::from(month) + 9)
    } else {
        (i64::from(year), i64::from(month) - 3)
    };
    let era = year.div_euclid(400);
    let year_of_era = year - era * 400;
    let day_of_year = (153 * month + 2) / 5 + i64::from(day) - 1;
    let day_of_era = year_of_era * 365 + year_of_era / 4 - year_of_era / 100 + day_of_year;
    era * 146_097 + day_of_era - 719_468
}

/// The full date `days` after 1970-01-01.
fn date_from_days(days: i64) -> (i32, u8, u8) {
    let shifted = days + 719_468;
    let era = shifted.div_euclid(146_097);
    let day_of_era = shifted - era * 146_097;
    let year_of_era = (day_of_era - day_of_era / 1460 + day_of_era / 36_524 - day_of_era / 146_096) / 365;
    let day_of_year = day_of_era - (365 * year_of_era + year_of_era / 4 - year_of_era / 100);
    let month_index = (5 * day_of_year + 2) / 153;
    let day = day_of_year - (153 * month_index + 2) / 5 + 1;
    let month = if month_index < 10 {
        month_index + 3
    } else {
        month_index - 9
    };
    let year = year_of_era + era * 400 + i64::from(month <= 2);
    (year as i32, month as u8, day as u8)
}

/// The step of the time axis.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum Step {
    Day,
    Month,
    Quarter,
    /// Groups of this many calendar years (1 for plain years).
    Years(u32),
}

/// At most this many periods on a time axis.
pub const MAX_PERIODS: usize = 48;

impl Step {
    /// The precision a date needs to be placed at this step.
    fn needs(self) -> Precision {
        match self {
            Step::Day => Precision::Day,
            Step::Month | Step::Quarter => Precision::Month,
            Step::Years(_) => Precision::Year,
        }
    }

    /// The period number of a date precise enough for this step.
    fn period(self, date: &CalendarDate) -> i64 {
        let year = i64::from(date.year);
        let month = i64::from(date.month.unwrap_or(1));
        match self {
            Step::Day => days_from_epoch(date.year, date.month.unwrap_or(1), date.day.unwrap_or(1)),
            Step::Month => year * 12 + month - 1,
            Step::Quarter => year * 4 + (month - 1) / 3,
            Step::Years(n) => year.div_euclid(i64::from(n)),
        }
    }

    /// The label of period number `period`.
    fn label(self, period: i64) -> String {
        match self {
            Step::Day => {
                let (year, month, day) = date_from_days(period);
                format!("{year:04}-{month:02}-{day:02}")
            }
            Step::Month => format!("{:04}-{:02}", period.div_euclid(12), period.rem_euclid(12) + 1),
            Step::Quarter => format!("{:04} Q{}", period.div_euclid(4), period.rem_euclid(4) + 1),
            Step::Years(1) => format!("{period:04}"),
            Step::Years(n) => {
                let first = period * i64::from(n);
                format!("{first:04}–{:04}", first + i64::from(n) - 1)
            }
        }
    }

    /// A word for the step, for captions.
    pub fn name(self) -> String {
        match self {
            Step::Day => "day".into(),
            Step::Month => "month".into(),
            Step::Quarter => "quarter".into(),
            Step::Years(1) => "year".into(),
            Step::Years(n) => format!("{n} years"),
        }
    }
}

/// A time axis over a set of dates: the step and the periods from the
/// earliest date to the latest (empty periods included, so the axis is
/// linear in time).
#[derive(Clone, Debug, PartialEq)]
pub struct Timeline {
    pub step: Step,
    first: i64,
    /// One label per period.
    pub labels: Vec<String>,
}

impl Timeline {
    /// The finest step that every date is precise enough for and that keeps
    /// the axis at most [`MAX_PERIODS`] long; `None` without dates.
    pub fn covering(dates: &[CalendarDate]) -> Option<Timeline> {
        let coarsest = dates.iter().map(CalendarDate::precision).min()?;
        let span = |step: Step| {
            let periods = dates.iter().map(|date| step.period(date));
            let (low, high) = periods.fold((i64::MAX, i64::MIN), |(low, high), p| (low.min(p), high.max(p)));
            (low, high)
        };
        let fits = |step: Step| {
            let (low, high) = span(step);
            step.needs() <= coarsest && high - low < MAX_PERIODS as i64
        };
        let step = [Step::Day, Step::Month, Step::Quarter, Step::Years(1)]
            .into_iter()
            .find(|&step| fits(step))
            .unwrap_or_else(|| {
                let (low, high) = span(Step::Years(1));
                let years = (high - low + 1) as u64;
                let mut n = years.div_ceil(MAX_PERIODS as u64) as u32;
                while !fits(Step::Years(n)) {
                    n += 1;
                }
                Step::Years(n)
            });
        let (low, high) = span(step);
        Some(Timeline {
            step,
            first: low,
            labels: (low..=high).map(|period| step.label(period)).collect(),
        })
    }

    /// The period index of a date, if it is precise enough for the step and
    /// on the axis.
    pub fn index(&self, date: &CalendarDate) -> Option<usize> {
        if date.precision() < self.step.needs() {
            return None;
        }
        let offset = self.step.period(date) - self.first;
        usize::try_from(offset)
            .ok()
            .filter(|&index| index < self.labels.len())
    }

    /// Number of periods.
    pub fn len(&self) -> usize {
        self.labels.len()
    }

    /// Whether the axis has no period (never, for a built timeline).
    pub fn is_empty(&self) -> bool {
        self.labels.is_empty()
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn day(year: i32, month: u8, day: u8) -> Option<CalendarDate> {
        Some(CalendarDate {
            year,
            month: Some(month),
            day: Some(day),
        })
    }

    #[test]
    fn calendar_and_ordinal_dates_in_both_forms_are_read() {
        // Source: ISO 8601-1:2019 section 5.2.2 (calendar dates: complete
        // extended YYYY-MM-DD and basic YYYYMMDD; reduced precision YYYY-MM
        // and YYYY) and 5.2.3 (ordinal dates YYYY-DDD and YYYYDDD).
        assert_eq!(parse_date("1985-04-12"), day(1985, 4, 12));
        assert_eq!(parse_date("19850412"), day(1985, 4, 12));
        assert_eq!(
            parse_date("1985-04"),
            Some(CalendarDate {
                year: 1985,
                month: Some(4),
                day: None
            })
        );
        assert_eq!(parse_date("1985").map(|d| d.precision()), Some(Precision::Year));
        // Day 102 of 1985 is 12 April (31 + 28 + 31 + 12).
        assert_eq!(parse_date("1985-102"), day(1985, 4, 12));
        assert_eq!(parse_date("1985102"), day(1985, 4, 12));
        // In a leap year day 60 is 29 February, and day 366 exists.
        assert_eq!(parse_date("2024-060"), day(2024, 2, 29));
        assert_eq!(parse_date("2024-366"), day(2024, 12, 31));
        assert_eq!(parse_date("2023-366"), None);
    }

    #[test]
    fn a_time_of_day_after_a_full_date_is_accepted_and_dropped() {
        // Source: RFC 3339 section 5.6 (full-date "T" full-time, time-offset
        // "Z" or +hh:mm, secfrac; section 5.6 note: a space may replace "T")
        // and ISO 8601-1:2019 section 5.4 (basic form hhmmss).
        for text in [
            "1985-04-12T23:20:50.52Z",
            "1996-12-19T16:39:57-08:00",
            "1990-12-31T23:59:60Z",
            "1985-04-12 10:15",
            "19850412T101530+0100",
            "1985-04-12T10",
        ] {
            assert!(parse_date(text).is_some(), "{text}");
        }
        assert_eq!(parse_date("1996-12-19T16:39:57-08:00"), day(1996, 12, 19));
        for text in [
            "1985-04-12T25:00",
            "1985-04-12T10:61",
            "1985-04T10:00",
            "1985-04-12Tnoon",
        ] {
            assert_eq!(parse_date(text), None, "{text}");
        }
    }

    #[test]
    fn impossible_and_foreign_dates_are_unreadable() {
        // Source: the Gregorian calendar (ISO 8601-1:2019 section 4.3.2):
        // 1900 is not a leap year, 2000 is; months have 28 to 31 days.
        assert_eq!(parse_date("2000-02-29"), day(2000, 2, 29));
        for text in [
            "1900-02-29",
            "2023-02-29",
            "2024-04-31",
            "2024-13-01",
            "2024-00-10",
            "12/03/2024",
            "3 March 2024",
            "202403",
            "24-03-01",
            "",
            "yesterday",
            "2024-3-1",
        ] {
            assert_eq!(parse_date(text), None, "{text}");
        }
    }

    #[test]
    fn day_numbers_match_the_unix_epoch_and_invert() {
        // Source: POSIX.1-2017 section 4.16 (seconds since the Epoch): 2000-03-01
        // is 11017 days after 1970-01-01, and 1969-12-31 is day -1.
        assert_eq!(days_from_epoch(1970, 1, 1), 0);
        assert_eq!(days_from_epoch(2000, 3, 1), 11_017);
        assert_eq!(days_from_epoch(1969, 12, 31), -1);
        for days in [-800_000, -1, 0, 59, 60, 11_016, 11_017, 19_782, 2_000_000] {
            let (year, month, day) = date_from_days(days);
            assert_eq!(days_from_epoch(year, month, day), days);
        }
    }

    #[test]
    fn the_axis_takes_the_finest_step_that_every_date_supports() {
        // Source: common practice — a time axis of at most a few dozen
        // evenly spaced periods, empty periods kept.
        let dates: Vec<CalendarDate> = ["2020-01-15", "2020-03-02", "2021-12-31"]
            .iter()
            .filter_map(|text| parse_date(text))
            .collect();
        let axis = Timeline::covering(&dates).unwrap();
        assert_eq!(axis.step, Step::Month);
        assert_eq!(axis.len(), 24);
        assert_eq!(axis.labels[0], "2020-01");
        assert_eq!(axis.index(&dates[1]), Some(2));
        // A year alone forces whole years.
        let mut coarse = dates.clone();
        coarse.push(parse_date("2019").unwrap());
        let axis = Timeline::covering(&coarse).unwrap();
        assert_eq!(axis.step, Step::Years(1));
        assert_eq!(axis.labels, vec!["2019", "2020", "2021"]);
        // A few days apart: days.
        let days: Vec<CalendarDate> = ["2024-02-27", "2024-03-02"]
            .iter()
            .filter_map(|text| parse_date(text))
            .collect();
        let axis = Timeline::covering(&days).unwrap();
        assert_eq!(axis.step, Step::Day);
        assert_eq!(
            axis.labels,
            vec![
                "2024-02-27",
                "2024-02-28",
                "2024-02-29",
                "2024-03-01",
                "2024-03-02"
            ]
        );
        // Ten years of months: quarters (40 of them).
        let decade: Vec<CalendarDate> = ["2010-01", "2019-12"]
            .iter()
            .filter_map(|t| parse_date(t))
            .collect();
        let axis = Timeline::covering(&decade).unwrap();
        assert_eq!((axis.step, axis.len()), (Step::Quarter, 40));
        assert_eq!(axis.labels[39], "2019 Q4");
        // Two centuries: groups of five years, at most 48 periods.
        let long: Vec<CalendarDate> = ["1801", "2000"].iter().filter_map(|t| parse_date(t)).collect();
        let axis = Timeline::covering(&long).unwrap();
        assert_eq!(axis.step, Step::Years(5));
        assert!(axis.len() <= MAX_PERIODS);
        assert_eq!(axis.labels[0], "1800–1804");
        assert_eq!(Timeline::covering(&[]), None);
    }
}
