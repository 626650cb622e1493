//! Holidays and the days around them, from the calendar: days whose traffic is unusual by
//! nature, which quality control flags and never rejects for being unusual.
//!
//! A study names its holidays in `[qc] holidays`: rule names for the moving and fixed
//! holidays of a North American calendar, `MM-DD` for any other fixed-date holiday and
//! `YYYY-MM-DD` for a single date. The default is the US federal set, with the days
//! around New Year, Independence Day, Thanksgiving and Christmas taken in by
//! `holiday_margin_days` (the travel days either side are as unusual as the holiday
//! itself: common practice in count programmes, which screen them before factoring). Every
//! holiday also takes in its eve (the last working day before it) and a bridge day (a
//! working day between it and a weekend).

use chrono::{Datelike, NaiveDate, Weekday};

/// One entry of the holiday list, parsed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Holiday {
    /// A named rule such as `thanksgiving` (fourth Thursday of November).
    Rule(HolidayRule),
    /// Every year on this month and day.
    Yearly {
        /// Month 1..=12.
        month: u32,
        /// Day of the month.
        day: u32,
    },
    /// One date.
    Date(NaiveDate),
}

/// The named holiday rules.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HolidayRule {
    /// 1 January.
    NewYear,
    /// Third Monday of January.
    MartinLutherKingDay,
    /// Third Monday of February.
    PresidentsDay,
    /// Friday before Easter Sunday.
    GoodFriday,
    /// Monday after Easter Sunday.
    EasterMonday,
    /// Last Monday of May.
    MemorialDay,
    /// Monday on or before 24 May.
    VictoriaDay,
    /// 1 July.
    CanadaDay,
    /// 4 July.
    IndependenceDay,
    /// First Monday of September.
    LaborDay,
    /// Second Monday of October.
    ColumbusDay,
    /// Second Monday of October (Canadian Thanksgiving).
    ThanksgivingCanada,
    /// 11 November.
    VeteransDay,
    /// Fourth Thursday of November.
    Thanksgiving,
    /// 25 December.
    Christmas,
    /// 26 December.
    BoxingDay,
}

impl HolidayRule {
    const NAMES: [(&'static str, HolidayRule); 16] = [
        ("new_year", HolidayRule::NewYear),
        ("martin_luther_king_day", HolidayRule::MartinLutherKingDay),
        ("presidents_day", HolidayRule::PresidentsDay),
        ("good_friday", HolidayRule::GoodFriday),
        ("easter_monday", HolidayRule::EasterMonday),
        ("memorial_day", HolidayRule::MemorialDay),
        ("victoria_day", HolidayRule::VictoriaDay),
        ("canada_day", HolidayRule::CanadaDay),
        ("independence_day", HolidayRule::IndependenceDay),
        ("labor_day", HolidayRule::LaborDay),
        ("columbus_day", HolidayRule::ColumbusDay),
        ("thanksgiving_canada", HolidayRule::ThanksgivingCanada),
        ("veterans_day", HolidayRule::VeteransDay),
        ("thanksgiving", HolidayRule::Thanksgiving),
        ("christmas", HolidayRule::Christmas),
        ("boxing_day", HolidayRule::BoxingDay),
    ];

    /// The rule's date in `year`.
    pub fn date(self, year: i32) -> Option<NaiveDate> {
        use HolidayRule::*;
        let fixed = |m, d| NaiveDate::from_ymd_opt(year, m, d);
        let nth = |m, wd, n| NaiveDate::from_weekday_of_month_opt(year, m, wd, n);
        match self {
            NewYear => fixed(1, 1),
            MartinLutherKingDay => nth(1, Weekday::Mon, 3),
            PresidentsDay => nth(2, Weekday::Mon, 3),
            GoodFriday => easter_sunday(year).map(|d| d - chrono::Duration::days(2)),
            EasterMonday => easter_sunday(year).map(|d| d + chrono::Duration::days(1)),
            MemorialDay => nth(5, Weekday::Mon, 5).or_else(|| nth(5, Weekday::Mon, 4)),
            VictoriaDay => fixed(5, 24).map(|d| {
                let back = d.weekday().num_days_from_monday() as i64;
                d - chrono::Duration::days(back)
            }),
            CanadaDay => fixed(7, 1),
            IndependenceDay => fixed(7, 4),
            LaborDay => nth(9, Weekday::Mon, 1),
            ColumbusDay | ThanksgivingCanada => nth(10, Weekday::Mon, 2),
            VeteransDay => fixed(11, 11),
            Thanksgiving => nth(11, Weekday::Thu, 4),
            Christmas => fixed(12, 25),
            BoxingDay => fixed(12, 26),
        }
    }

    /// Whether the days around the holiday are travel days too.
    fn has_margin(self) -> bool {
        matches!(
            self,
            HolidayRule::NewYear
                | HolidayRule::IndependenceDay
                | HolidayRule::Thanksgiving
                | HolidayRule::Christmas
        )
    }
}

/// Easter Sunday of the Gregorian calendar (the anonymous Gregorian algorithm, Meeus,
/// Astronomical Algorithms, ch. 8).
pub fn easter_sunday(year: i32) -> Option<NaiveDate> {
    let a = year % 19;
    let b = year / 100;
    let c = year % 100;
    let d = b / 4;
    let e = b % 4;
    let f = (b + 8) / 25;
    let g = (b - f + 1) / 3;
    let h = (19 * a + b - d - g + 15) % 30;
    let i = c / 4;
    let k = c % 4;
    let l = (32 + 2 * e + 2 * i - h - k) % 7;
    let m = (a + 11 * h + 22 * l) / 451;
    let month = (h + l - 7 * m + 114) / 31;
    let day = (h + l - 7 * m + 114) % 31 + 1;
    NaiveDate::from_ymd_opt(year, month as u32, day as u32)
}

impl std::str::FromStr for Holiday {
    type Err = String;

    fn from_str(text: &str) -> Result<Holiday, String> {
        let t = text.trim();
        if let Some((_, r)) = HolidayRule::NAMES.iter().find(|(n, _)| *n == t) {
            return Ok(Holiday::Rule(*r));
        }
        if let Ok(d) = NaiveDate::parse_from_str(t, "%Y-%m-%d") {
            return Ok(Holiday::Date(d));
        }
        let md: Vec<&str> = t.split('-').collect();
        if let [m, d] = md.as_slice() {
            if let (Ok(month), Ok(day)) = (m.parse::<u32>(), d.parse::<u32>()) {
                if NaiveDate::from_ymd_opt(2024, month, day).is_some() {
                    return Ok(Holiday::Yearly { month, day });
                }
            }
        }
        let names: Vec<&str> = HolidayRule::NAMES.iter().map(|(n, _)| *n).collect();
        Err(format!(
            "holiday `{t}` is neither a date (YYYY-MM-DD), a yearly date (MM-DD) nor one of {}",
            names.join(", ")
        ))
    }
}

/// The default holiday list: the US federal holidays.
pub fn default_holidays() -> Vec<String> {
    [
        "new_year",
        "martin_luther_king_day",
        "presidents_day",
        "memorial_day",
        "independence_day",
        "labor_day",
        "columbus_day",
        "veterans_day",
        "thanksgiving",
        "christmas",
    ]
    .map(String::from)
    .to_vec()
}

/// The working days next to a holiday whose traffic is unusual too: its eve, the last
/// working day before it (getaway traffic in the afternoon; the Friday before a Monday
/// holiday), and a bridge day, a working day between it and the weekend (Monday before a
/// Tuesday holiday, Friday after a Thursday one), which many take off. Common practice in
/// count programmes, no single source.
fn eve_and_bridge(date: NaiveDate) -> Vec<(NaiveDate, &'static str)> {
    let working = |d: NaiveDate| d.weekday().num_days_from_monday() < 5;
    let mut out = Vec::new();
    let mut eve = date - chrono::Duration::days(1);
    while !working(eve) {
        eve -= chrono::Duration::days(1);
    }
    out.push((eve, "eve of"));
    match date.weekday() {
        Weekday::Tue => out.push((date - chrono::Duration::days(1), "bridge day before")),
        Weekday::Thu => out.push((date + chrono::Duration::days(1), "bridge day after")),
        _ => {}
    }
    out
}

/// Holidays of the years a study spans, with the days around them.
#[derive(Debug, Clone, Default)]
pub struct HolidayCalendar {
    days: std::collections::BTreeMap<NaiveDate, String>,
}

impl HolidayCalendar {
    /// The calendar of `entries` for `years`, the travel days within `margin` days of the
    /// holidays that have them included. Fails on an entry it cannot read.
    pub fn new(
        entries: &[String],
        years: std::ops::RangeInclusive<i32>,
        margin: u32,
    ) -> Result<HolidayCalendar, String> {
        let mut days = std::collections::BTreeMap::new();
        for text in entries {
            let h: Holiday = text.parse()?;
            for y in years.clone() {
                let (date, with_margin) = match h {
                    Holiday::Rule(r) => (r.date(y), r.has_margin()),
                    Holiday::Yearly { month, day } => {
                        (NaiveDate::from_ymd_opt(y, month, day), false)
                    }
                    Holiday::Date(d) => ((d.year() == y).then_some(d), false),
                };
                let Some(date) = date else { continue };
                days.insert(date, text.trim().to_string());
                if with_margin {
                    for k in 1..=i64::from(margin) {
                        for near in [
                            date - chrono::Duration::days(k),
                            date + chrono::Duration::days(k),
                        ] {
                            days.entry(near)
                                .or_insert_with(|| format!("around {}", text.trim()));
                        }
                    }
                }
                for (near, what) in eve_and_bridge(date) {
                    days.entry(near)
                        .or_insert_with(|| format!("{what} {}", text.trim()));
                }
            }
        }
        Ok(HolidayCalendar { days })
    }

    /// The holiday a date is, or is next to.
    pub fn holiday(&self, date: NaiveDate) -> Option<&str> {
        self.days.get(&date).map(String::as_str)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn d(y: i32, m: u32, day: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, day).unwrap()
    }

    /// US federal holiday dates of 2025 as published by the US Office of Personnel
    /// Management holiday schedule (from memory; each is also the rule's definition).
    #[test]
    fn rules_give_the_2025_federal_holiday_dates() {
        let cases = [
            (HolidayRule::MartinLutherKingDay, d(2025, 1, 20)),
            (HolidayRule::PresidentsDay, d(2025, 2, 17)),
            (HolidayRule::MemorialDay, d(2025, 5, 26)),
            (HolidayRule::LaborDay, d(2025, 9, 1)),
            (HolidayRule::ColumbusDay, d(2025, 10, 13)),
            (HolidayRule::Thanksgiving, d(2025, 11, 27)),
            (HolidayRule::VictoriaDay, d(2025, 5, 19)),
        ];
        for (rule, date) in cases {
            assert_eq!(rule.date(2025), Some(date), "{rule:?}");
        }
    }

    /// Easter Sundays as printed in almanacs (2024-03-31, 2025-04-20, 2026-04-05); the dates
    /// are from memory.
    #[test]
    fn easter_matches_the_almanac() {
        assert_eq!(easter_sunday(2024), Some(d(2024, 3, 31)));
        assert_eq!(easter_sunday(2025), Some(d(2025, 4, 20)));
        assert_eq!(easter_sunday(2026), Some(d(2026, 4, 5)));
    }

    #[test]
    fn calendar_takes_in_travel_days_and_reads_every_entry_form() {
        let entries: Vec<String> = ["thanksgiving", "04-23", "2025-08-11"]
            .map(String::from)
            .to_vec();
        let c = HolidayCalendar::new(&entries, 2024..=2025, 1).unwrap();
        assert_eq!(c.holiday(d(2025, 11, 27)), Some("thanksgiving"));
        assert_eq!(c.holiday(d(2025, 11, 28)), Some("around thanksgiving"));
        assert_eq!(c.holiday(d(2024, 4, 23)), Some("04-23"));
        assert_eq!(c.holiday(d(2025, 8, 11)), Some("2025-08-11"));
        assert_eq!(c.holiday(d(2024, 8, 11)), None);
        assert_eq!(c.holiday(d(2025, 8, 12)), None);
        // 2025-08-11 is a Monday: its eve is Friday 8 August; 23 April 2024 a Tuesday, with
        // Monday 22 April as its bridge day.
        assert_eq!(c.holiday(d(2025, 8, 8)), Some("eve of 2025-08-11"));
        assert_eq!(c.holiday(d(2024, 4, 22)), Some("eve of 04-23"));
        assert_eq!(c.holiday(d(2025, 4, 22)), Some("eve of 04-23"));
        assert_eq!(c.holiday(d(2025, 4, 24)), None);
        let bad = HolidayCalendar::new(&["easter_tuesday".to_string()], 2025..=2025, 1);
        assert!(bad.unwrap_err().contains("easter_tuesday"));
    }
}
