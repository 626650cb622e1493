//! RFC 3339 timestamps with a UTC offset, parsed on the hot path without allocation; and,
//! where the study names a time zone, clock times without an offset placed in that zone.

use chrono::{NaiveDate, NaiveDateTime, NaiveTime, Offset, TimeZone};

/// A record start: the local clock time and the UTC offset the record carries.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct LocalStamp {
    /// Local clock date and time.
    pub local: NaiveDateTime,
    /// UTC offset in minutes (local = UTC + offset).
    pub offset_min: i32,
}

impl LocalStamp {
    /// Minutes since the Unix epoch, UTC.
    pub fn utc_minutes(&self) -> i64 {
        self.local.and_utc().timestamp().div_euclid(60) - self.offset_min as i64
    }

    /// Seconds past the minute (non-zero seconds are not aligned to any interval).
    pub fn seconds(&self) -> u32 {
        use chrono::Timelike;
        self.local.second()
    }
}

/// Why a start time was not taken.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum StampError {
    /// Not in the form `YYYY-MM-DDTHH:MM:SS±HH:MM` at all.
    NotRfc3339,
    /// The date part names no calendar day (2025-02-30).
    NotCalendarDate,
    /// The time part is no clock time (25:00, 08:61).
    NotClockTime,
    /// The offset is malformed or out of range (+25:00).
    BadOffset,
    /// A valid date and time without a UTC offset, and the study names no time zone.
    NoOffset,
    /// A clock time without offset that the study's time zone skips (spring forward).
    SkippedByZone,
}

impl StampError {
    /// A reason for the log.
    pub fn reason(self) -> &'static str {
        match self {
            StampError::NotRfc3339 => {
                "start is not an RFC 3339 timestamp (YYYY-MM-DDTHH:MM:SS with a UTC offset such as -05:00 or Z)"
            }
            StampError::NotCalendarDate => "start is not a calendar date",
            StampError::NotClockTime => "start is not a clock time (hours 0-23, minutes and seconds 0-59)",
            StampError::BadOffset => "start has a malformed UTC offset (±HH:MM, at most 23:59, or Z)",
            StampError::NoOffset => {
                "start has no UTC offset (add one, or name the study's `time_zone` in study.toml)"
            }
            StampError::SkippedByZone => {
                "start is a clock time that does not exist in the study's time zone (skipped at a clock change)"
            }
        }
    }
}

/// A parsed start: the stamp, and for a clock time the zone repeats (fall back), the
/// second reading of it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Start {
    /// The stamp (the earlier reading where the zone repeats the clock time).
    pub stamp: LocalStamp,
    /// The later reading of a repeated clock time.
    pub later: Option<LocalStamp>,
}

fn digits(b: &[u8]) -> Option<u32> {
    b.iter().try_fold(0u32, |a, &c| {
        c.is_ascii_digit().then(|| a * 10 + (c - b'0') as u32)
    })
}

/// Parses `YYYY-MM-DDTHH:MM:SS[.fff]±HH:MM` (or `Z`; `t`, `z` and a space separator are
/// accepted as RFC 3339 allows). Without an offset, the clock time is placed in `zone`
/// when one is given.
pub fn parse_start(raw: &[u8], zone: Option<&chrono_tz::Tz>) -> Result<Start, StampError> {
    let b = raw;
    if b.len() < 19
        || b[4] != b'-'
        || b[7] != b'-'
        || !matches!(b[10], b'T' | b't' | b' ')
        || b[13] != b':'
        || b[16] != b':'
    {
        return Err(StampError::NotRfc3339);
    }
    let field = |r: std::ops::Range<usize>| digits(&b[r]).ok_or(StampError::NotRfc3339);
    let (y, mo, d) = (field(0..4)?, field(5..7)?, field(8..10)?);
    let (h, mi, s) = (field(11..13)?, field(14..16)?, field(17..19)?);
    // Fractional seconds: a dot and at least one digit.
    let mut i = 19;
    let mut nanos = 0u32;
    if b.get(i) == Some(&b'.') {
        let start = i + 1;
        let mut j = start;
        while j < b.len() && b[j].is_ascii_digit() {
            j += 1;
        }
        if j == start {
            return Err(StampError::NotRfc3339);
        }
        let frac = &b[start..j.min(start + 9)];
        nanos = digits(frac).expect("digits") * 10u32.pow(9 - frac.len() as u32);
        i = j;
    }
    let date = NaiveDate::from_ymd_opt(y as i32, mo, d).ok_or(StampError::NotCalendarDate)?;
    let time = NaiveTime::from_hms_nano_opt(h, mi, s, nanos).ok_or(StampError::NotClockTime)?;
    let local = NaiveDateTime::new(date, time);
    let offset_min = match &b[i..] {
        [] => return in_zone(local, zone),
        [b'Z' | b'z'] => 0,
        [sign @ (b'+' | b'-'), h1, h2, b':', m1, m2] => {
            let (h, m) = (
                digits(&[*h1, *h2]).ok_or(StampError::BadOffset)?,
                digits(&[*m1, *m2]).ok_or(StampError::BadOffset)?,
            );
            if h > 23 || m > 59 {
                return Err(StampError::BadOffset);
            }
            let v = (h * 60 + m) as i32;
            if *sign == b'-' {
                -v
            } else {
                v
            }
        }
        [b'+' | b'-', ..] => return Err(StampError::BadOffset),
        _ => return Err(StampError::NotRfc3339),
    };
    Ok(Start {
        stamp: LocalStamp { local, offset_min },
        later: None,
    })
}

/// A clock time without offset, placed in the study's zone.
fn in_zone(local: NaiveDateTime, zone: Option<&chrono_tz::Tz>) -> Result<Start, StampError> {
    let zone = zone.ok_or(StampError::NoOffset)?;
    let at = |dt: chrono::DateTime<chrono_tz::Tz>| LocalStamp {
        local,
        offset_min: dt.offset().fix().local_minus_utc() / 60,
    };
    match zone.from_local_datetime(&local) {
        chrono::LocalResult::Single(dt) => Ok(Start {
            stamp: at(dt),
            later: None,
        }),
        chrono::LocalResult::Ambiguous(a, b) => Ok(Start {
            stamp: at(a.min(b)),
            later: Some(at(a.max(b))),
        }),
        chrono::LocalResult::None => Err(StampError::SkippedByZone),
    }
}

/// Parses an RFC 3339 timestamp that carries its offset; `None` otherwise.
pub fn parse_rfc3339(raw: &[u8]) -> Option<LocalStamp> {
    parse_start(raw, None).ok().map(|s| s.stamp)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn offsets_and_utc_minutes() {
        let a = parse_rfc3339(b"2025-03-09T01:00:00-05:00").unwrap();
        assert_eq!(a.offset_min, -300);
        let b = parse_rfc3339(b"2025-03-09T03:00:00-04:00").unwrap();
        // 01:00 EST and 03:00 EDT are one hour apart on the clock-change day.
        assert_eq!(b.utc_minutes() - a.utc_minutes(), 60);
        let z = parse_rfc3339(b"2025-01-01T00:00:00Z").unwrap();
        assert_eq!(z.offset_min, 0);
        assert_eq!(z.utc_minutes(), 1_735_689_600 / 60);
    }

    #[test]
    fn bad_stamps_fail_for_the_right_reason() {
        let f = parse_rfc3339(b"2025-07-01T08:15:00.000+02:00").unwrap();
        assert_eq!(f.offset_min, 120);
        assert!(parse_rfc3339(b"2025-07-01 08:15:00z").is_some());
        let why = |t: &[u8]| parse_start(t, None).unwrap_err();
        assert_eq!(why(b"2025-07-01T08:15:00"), StampError::NoOffset);
        assert_eq!(
            why(b"2025-02-30T08:00:00-05:00"),
            StampError::NotCalendarDate
        );
        assert_eq!(why(b"01/07/2025 08:00"), StampError::NotRfc3339);
        assert_eq!(why(b"2025-07-01T25:00:00+01:00"), StampError::NotClockTime);
        assert_eq!(why(b"2025-07-01T08:00:00+25:00"), StampError::BadOffset);
        assert_eq!(why(b"2025-07-01T08:00:00+0100"), StampError::BadOffset);
        assert_eq!(why(b"2025-07-01T08:00:00 EST"), StampError::NotRfc3339);
    }

    /// US Eastern rules (from memory: the second Sunday of March at 02:00 clocks go forward
    /// to EDT, -04:00; the first Sunday of November at 02:00 back to EST, -05:00).
    #[test]
    fn clock_times_are_placed_in_the_zone() {
        let tz: chrono_tz::Tz = "America/New_York".parse().unwrap();
        let p = |t: &[u8]| parse_start(t, Some(&tz));
        assert_eq!(p(b"2025-01-15T08:00:00").unwrap().stamp.offset_min, -300);
        assert_eq!(p(b"2025-07-15T08:00:00").unwrap().stamp.offset_min, -240);
        assert_eq!(
            p(b"2025-03-09T02:30:00").unwrap_err(),
            StampError::SkippedByZone
        );
        let twice = p(b"2025-11-02T01:00:00").unwrap();
        assert_eq!(twice.stamp.offset_min, -240);
        assert_eq!(twice.later.unwrap().offset_min, -300);
        // An explicit offset wins over the zone.
        assert_eq!(
            p(b"2025-07-15T08:00:00+01:00").unwrap().stamp.offset_min,
            60
        );
    }
}
