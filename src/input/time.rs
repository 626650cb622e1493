//! RFC 3339 timestamps with a UTC offset, parsed on the hot path without allocation.

use chrono::{DateTime, NaiveDate, NaiveDateTime, NaiveTime};

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

fn digits(b: &[u8]) -> Option<u32> {
    b.iter().try_fold(0u32, |a, &c| {
        c.is_ascii_digit().then(|| a * 10 + (c - b'0') as u32)
    })
}

/// Parses `YYYY-MM-DDTHH:MM:SS±HH:MM` (or `Z`), falling back to chrono for the rest of
/// RFC 3339 (fractional seconds, lower-case `t`/`z`, a space separator).
/// `None` when the text is not RFC 3339 or carries no offset.
pub fn parse_rfc3339(raw: &[u8]) -> Option<LocalStamp> {
    fast_path(raw).or_else(|| {
        let text = std::str::from_utf8(raw).ok()?;
        let dt = DateTime::parse_from_rfc3339(text).ok()?;
        Some(LocalStamp {
            local: dt.naive_local(),
            offset_min: dt.offset().local_minus_utc() / 60,
        })
    })
}

fn fast_path(b: &[u8]) -> Option<LocalStamp> {
    if b.len() < 20
        || b[4] != b'-'
        || b[7] != b'-'
        || b[10] != b'T'
        || b[13] != b':'
        || b[16] != b':'
    {
        return None;
    }
    let date = NaiveDate::from_ymd_opt(
        digits(&b[0..4])? as i32,
        digits(&b[5..7])?,
        digits(&b[8..10])?,
    )?;
    let time = NaiveTime::from_hms_opt(
        digits(&b[11..13])?,
        digits(&b[14..16])?,
        digits(&b[17..19])?,
    )?;
    let offset_min = match (b.len(), b[19]) {
        (20, b'Z') => 0,
        (25, sign @ (b'+' | b'-')) if b[22] == b':' => {
            let (h, m) = (digits(&b[20..22])?, digits(&b[23..25])?);
            if h > 23 || m > 59 {
                return None;
            }
            let v = (h * 60 + m) as i32;
            if sign == b'-' {
                -v
            } else {
                v
            }
        }
        _ => return None,
    };
    Some(LocalStamp {
        local: NaiveDateTime::new(date, time),
        offset_min,
    })
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
    fn slow_path_agrees_and_bad_stamps_fail() {
        let f = parse_rfc3339(b"2025-07-01T08:15:00.000+02:00").unwrap();
        assert_eq!(f.offset_min, 120);
        assert!(parse_rfc3339(b"2025-07-01T08:15:00").is_none(), "no offset");
        assert!(
            parse_rfc3339(b"2025-02-30T08:00:00+01:00").is_none(),
            "no such date"
        );
        assert!(parse_rfc3339(b"01/07/2025 08:00").is_none());
        assert!(parse_rfc3339(b"2025-07-01T25:00:00+01:00").is_none());
    }
}
