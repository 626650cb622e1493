//! The invented region's clock: UTC-05:00 standard time, UTC-04:00 daylight saving time from
//! the second Sunday of March 02:00 (standard) to the first Sunday of November 02:00
//! (daylight). Spring-forward day has 23 local hours; fall-back day has 25, with 01:00 twice.

use chrono::{DateTime, Datelike, Duration, FixedOffset, NaiveDate, SecondsFormat, Utc, Weekday};

const STANDARD_SECS: i32 = -5 * 3600;
const DAYLIGHT_SECS: i32 = -4 * 3600;

/// `n`-th `weekday` (1-based) of a month.
fn nth_weekday(year: i32, month: u32, weekday: Weekday, n: u32) -> NaiveDate {
    NaiveDate::from_weekday_of_month_opt(year, month, weekday, n as u8)
        .expect("every month has a first and second Sunday")
}

/// UTC instants when daylight saving time starts and ends in `year`.
fn dst_bounds(year: i32) -> (DateTime<Utc>, DateTime<Utc>) {
    // 02:00 standard = 07:00 UTC; 02:00 daylight = 06:00 UTC.
    let start = nth_weekday(year, 3, Weekday::Sun, 2)
        .and_hms_opt(7, 0, 0)
        .expect("valid time")
        .and_utc();
    let end = nth_weekday(year, 11, Weekday::Sun, 1)
        .and_hms_opt(6, 0, 0)
        .expect("valid time")
        .and_utc();
    (start, end)
}

/// Local UTC offset at a UTC instant.
pub(crate) fn offset_at(utc: DateTime<Utc>) -> FixedOffset {
    let (start, end) = dst_bounds(utc.year());
    let secs = if utc >= start && utc < end {
        DAYLIGHT_SECS
    } else {
        STANDARD_SECS
    };
    FixedOffset::east_opt(secs).expect("offset within a day")
}

/// The UTC instant of local midnight starting `date` (midnight is never skipped or repeated
/// here: the switches happen at 02:00).
pub(crate) fn local_midnight_utc(date: NaiveDate) -> DateTime<Utc> {
    let naive = date.and_hms_opt(0, 0, 0).expect("midnight exists");
    // Try standard time first; if that instant is in daylight time, use the daylight offset.
    let as_std = naive.and_utc() - Duration::seconds(STANDARD_SECS as i64);
    if offset_at(as_std).local_minus_utc() == STANDARD_SECS {
        as_std
    } else {
        naive.and_utc() - Duration::seconds(DAYLIGHT_SECS as i64)
    }
}

/// One count interval on the local clock.
#[derive(Clone, Debug)]
pub(crate) struct Interval {
    /// RFC 3339 start with its local offset, e.g. `2025-03-09T01:00:00-05:00`.
    pub start: String,
    /// Local date the interval starts on.
    pub date: NaiveDate,
    /// Local clock hour 0..=23.
    pub hour: u32,
}

/// Intervals of `minutes` length covering `hours` hours of elapsed time from a UTC instant.
pub(crate) fn intervals_from(start: DateTime<Utc>, hours: u32, minutes: u32) -> Vec<Interval> {
    let n = hours * 60 / minutes;
    (0..n)
        .map(|i| {
            let utc = start + Duration::minutes((i * minutes) as i64);
            let local = utc.with_timezone(&offset_at(utc));
            Interval {
                start: local.to_rfc3339_opts(SecondsFormat::Secs, false),
                date: local.date_naive(),
                hour: chrono::Timelike::hour(&local),
            }
        })
        .collect()
}

/// All intervals of a calendar year on the local clock, grouped by local date: the outer
/// vector has one entry per day of the year.
pub(crate) fn year_by_day(year: i32, minutes: u32) -> Vec<Vec<Interval>> {
    let first = NaiveDate::from_ymd_opt(year, 1, 1).expect("valid year");
    let next = NaiveDate::from_ymd_opt(year + 1, 1, 1).expect("valid year");
    let start = local_midnight_utc(first);
    let hours = (local_midnight_utc(next) - start).num_hours() as u32;
    let mut days: Vec<Vec<Interval>> = Vec::new();
    for iv in intervals_from(start, hours, minutes) {
        match days.last_mut() {
            Some(day) if day[0].date == iv.date => day.push(iv),
            _ => days.push(vec![iv]),
        }
    }
    days
}

/// Local dates of the spring-forward and fall-back days.
pub(crate) fn dst_days(year: i32) -> (NaiveDate, NaiveDate) {
    (
        nth_weekday(year, 3, Weekday::Sun, 2),
        nth_weekday(year, 11, Weekday::Sun, 1),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn dst_days_have_23_and_25_hours() {
        let days = year_by_day(2025, 60);
        assert_eq!(days.len(), 365);
        let (spring, fall) = dst_days(2025);
        assert_eq!(spring, NaiveDate::from_ymd_opt(2025, 3, 9).unwrap());
        assert_eq!(fall, NaiveDate::from_ymd_opt(2025, 11, 2).unwrap());
        let len = |d: NaiveDate| days.iter().find(|v| v[0].date == d).unwrap().len();
        assert_eq!(len(spring), 23);
        assert_eq!(len(fall), 25);
        let fall_day = days.iter().find(|v| v[0].date == fall).unwrap();
        assert_eq!(fall_day[1].start, "2025-11-02T01:00:00-04:00");
        assert_eq!(fall_day[2].start, "2025-11-02T01:00:00-05:00");
        assert_eq!(days[0][0].start, "2025-01-01T00:00:00-05:00");
        let total: usize = days.iter().map(Vec::len).sum();
        assert_eq!(total, 8760);
    }
}
