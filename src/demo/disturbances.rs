//! Real traffic that is not a fault: event evenings, storm days, a roadworks month, holiday
//! eves and bridge days. Quality control must flag these, not reject them; each is recorded
//! in `truth/disturbances.csv`, and every station-day it touches in
//! `truth/disturbed_days.csv`.
//!
//! # Method
//!
//! A disturbance multiplies the expected volume of the hours it covers on the segments it
//! covers (`m` below; the day and interval noise and the Poisson draw come after):
//!
//! | kind | where | when | multiplier |
//! |---|---|---|---|
//! | `event_evening` | within 2.5 km of a venue near a town centre | 8 Fridays or Saturdays, April-October, 17:00 to 01:59 | `1 + a·w(h)·(1 - d/2.5 km)`, `a` 0.6-1.5, `w` arrivals 17-19, departures 22-01 |
//! | `storm` | within 15-30 km of a point | 3 winter days, from 10:00-14:00 to 09:59 next day | 0.45-0.70, then halfway back after midnight |
//! | `roadworks` | a permanent counter's segment and the segments within 1 km of it | 21-35 days from a Monday 09:00 | 0.60-0.75 (a lane closed, traffic diverted) |
//! | `holiday_eve` | every segment | the working day before a holiday, 12:00-19:59 | 1.25 (getaway traffic) |
//! | `bridge_day` | every segment | a working day between a holiday and a weekend | 0.80 (a day off for many) |
//!
//! Events, storms and roadworks happen in the study year only; holiday eves and bridge days in
//! every year (short counts of earlier years meet them too). The true AADT of each segment
//! (`truth/segment_truth.csv`) and the true toll volumes include the multipliers: they are the
//! traffic that happened. The magnitudes are invented, in the range agencies report for such
//! days (common practice, no single source).
//!
//! # Units
//!
//! Multipliers are dimensionless; distances are plane km; hours are local clock hours.

use std::path::{Path, PathBuf};

use chrono::{Datelike, Duration, NaiveDate, Weekday};
use rand::seq::SliceRandom;
use rand::Rng;
use rand_chacha::ChaCha8Rng;

use super::network::Network;
use super::patterns::{self, Pattern};
use super::sink::CsvSink;
use super::DemoError;

/// Seed offset of the disturbances' own random stream.
pub(crate) const STREAM: u64 = 0x6469_7374_7572_6201;

/// What kind of real traffic a disturbance is.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord)]
pub(crate) enum Kind {
    EventEvening,
    Storm,
    Roadworks,
    HolidayEve,
    BridgeDay,
}

impl Kind {
    pub(crate) fn name(self) -> &'static str {
        match self {
            Kind::EventEvening => "event_evening",
            Kind::Storm => "storm",
            Kind::Roadworks => "roadworks",
            Kind::HolidayEve => "holiday_eve",
            Kind::BridgeDay => "bridge_day",
        }
    }
}

/// Where a disturbance acts.
#[derive(Clone, Debug)]
enum Reach {
    /// Within `radius` km of (x, y); the effect fades linearly to the edge when `fade`.
    Near {
        x: f64,
        y: f64,
        radius: f64,
        fade: bool,
    },
    /// These segments.
    Segments(Vec<usize>),
    /// Every segment.
    All,
}

/// One disturbance.
#[derive(Clone, Debug)]
pub(crate) struct Disturbance {
    pub kind: Kind,
    /// Local start: date and clock hour.
    start: (NaiveDate, u32),
    /// Local end (exclusive): date and clock hour.
    end: (NaiveDate, u32),
    reach: Reach,
    /// Strength: the multiplier at full effect (see the module table).
    strength: f64,
}

/// Reach of a roadworks site: the segments whose midpoints lie within this distance, km.
const ROADWORKS_KM: f64 = 1.0;

/// Event evening weights of the hours 17..=23 and, on the next date, 0..=1.
const EVENT_WEIGHTS: [(u32, f64); 9] = [
    (17, 0.3),
    (18, 0.8),
    (19, 1.0),
    (20, 0.2),
    (21, 0.3),
    (22, 1.0),
    (23, 0.8),
    (24, 0.5),
    (25, 0.25),
];

impl Disturbance {
    /// Hours since the start, when (date, hour) falls inside.
    fn offset(&self, date: NaiveDate, hour: u32) -> Option<i64> {
        let at = |(d, h): (NaiveDate, u32)| (d - self.start.0).num_days() * 24 + h as i64;
        let t = at((date, hour));
        (t >= at(self.start) && t < at(self.end)).then_some(t - self.start.1 as i64)
    }

    /// Share of full effect on a segment at (x, y).
    fn reach_share(&self, seg: usize, xy: (f64, f64)) -> f64 {
        match &self.reach {
            Reach::All => 1.0,
            Reach::Segments(s) => f64::from(u8::from(s.contains(&seg))),
            Reach::Near { x, y, radius, fade } => {
                let d = ((xy.0 - x).powi(2) + (xy.1 - y).powi(2)).sqrt();
                match (d < *radius, fade) {
                    (false, _) => 0.0,
                    (true, true) => 1.0 - d / radius,
                    (true, false) => 1.0,
                }
            }
        }
    }

    /// Multiplier of the hour (date, hour) on segment `seg` at `xy`.
    fn at(&self, seg: usize, xy: (f64, f64), date: NaiveDate, hour: u32) -> f64 {
        let Some(t) = self.offset(date, hour) else {
            return 1.0;
        };
        let share = self.reach_share(seg, xy);
        if share == 0.0 {
            return 1.0;
        }
        match self.kind {
            Kind::EventEvening => {
                let clock = self.start.1 as i64 + t;
                let w = EVENT_WEIGHTS
                    .iter()
                    .find(|(h, _)| *h as i64 == clock)
                    .map_or(0.0, |x| x.1);
                1.0 + (self.strength - 1.0) * w * share
            }
            Kind::Storm => {
                // Full strength until midnight, halfway back until the end.
                let m = if date == self.start.0 {
                    self.strength
                } else {
                    (1.0 + self.strength) / 2.0
                };
                1.0 + (m - 1.0) * share
            }
            _ => 1.0 + (self.strength - 1.0) * share,
        }
    }
}

/// Every disturbance of a study.
#[derive(Clone, Debug, Default)]
pub(crate) struct Plan {
    pub list: Vec<Disturbance>,
    /// Segment midpoints, plane km.
    mid: Vec<(f64, f64)>,
    /// Holiday eves and bridge days of the study year and the years of the short counts.
    calendar: Vec<Disturbance>,
}

/// Years before the study year whose holiday eves and bridge days are laid out (short counts
/// are at most a few years old).
const CALENDAR_YEARS_BACK: i32 = 6;

impl Plan {
    /// Draws the disturbances of the study year; `counters` are the segments of the
    /// permanent counters (one roadworks site is placed at one of them).
    pub(crate) fn draw(rng: &mut ChaCha8Rng, net: &Network, year: i32, counters: &[usize]) -> Plan {
        let mid: Vec<(f64, f64)> = net
            .segments
            .iter()
            .map(|s| {
                let (a, b) = (&net.nodes[s.from], &net.nodes[s.to]);
                ((a.x_km + b.x_km) / 2.0, (a.y_km + b.y_km) / 2.0)
            })
            .collect();
        let mut list = Vec::new();
        let day = |m: u32, d: u32| NaiveDate::from_ymd_opt(year, m, d).expect("valid date");
        let towns = net.town_centres();
        // Event evenings at one venue per town (the first two towns).
        for &(cx, cy, r) in towns.iter().take(2) {
            let (x, y) = (
                cx + rng.gen_range(-0.3..0.3) * r,
                cy + rng.gen_range(-0.3..0.3) * r,
            );
            let mut dates: Vec<NaiveDate> = patterns::days_of_year(year)
                .into_iter()
                .filter(|d| {
                    (4..=10).contains(&d.month())
                        && matches!(d.weekday(), Weekday::Fri | Weekday::Sat)
                        && !patterns::is_holiday(*d)
                })
                .collect();
            dates.shuffle(rng);
            for &d in dates.iter().take(4) {
                list.push(Disturbance {
                    kind: Kind::EventEvening,
                    start: (d, 17),
                    end: (d + Duration::days(1), 2),
                    reach: Reach::Near {
                        x,
                        y,
                        radius: 2.5,
                        fade: true,
                    },
                    strength: 1.0 + rng.gen_range(0.6..1.5),
                });
            }
        }
        // Storms: winter working days or weekends alike.
        let winter: Vec<NaiveDate> = patterns::days_of_year(year)
            .into_iter()
            .filter(|d| matches!(d.month(), 1 | 2 | 12) && !patterns::is_holiday(*d))
            .collect();
        for &d in winter.choose_multiple(rng, 3) {
            let centre = mid[rng.gen_range(0..mid.len())];
            list.push(Disturbance {
                kind: Kind::Storm,
                start: (d, rng.gen_range(10..=14)),
                end: (d + Duration::days(1), 10),
                reach: Reach::Near {
                    x: centre.0,
                    y: centre.1,
                    radius: rng.gen_range(15.0..30.0),
                    fade: false,
                },
                strength: rng.gen_range(0.45..0.70),
            });
        }
        // Roadworks: one at a permanent counter, one anywhere.
        let sites = [
            counters.choose(rng).copied(),
            Some(rng.gen_range(0..mid.len())),
        ];
        for site in sites.into_iter().flatten() {
            let mut first = day(rng.gen_range(3..=9), rng.gen_range(1..=20));
            while first.weekday() != Weekday::Mon {
                first += Duration::days(1);
            }
            let days = rng.gen_range(21..=35);
            let (sx, sy) = mid[site];
            let segments: Vec<usize> = (0..mid.len())
                .filter(|&s| {
                    ((mid[s].0 - sx).powi(2) + (mid[s].1 - sy).powi(2)).sqrt() < ROADWORKS_KM
                })
                .collect();
            list.push(Disturbance {
                kind: Kind::Roadworks,
                start: (first, 9),
                end: (first + Duration::days(days), 9),
                reach: Reach::Segments(segments),
                strength: rng.gen_range(0.60..0.75),
            });
        }
        let calendar = (year - CALENDAR_YEARS_BACK..=year)
            .flat_map(Plan::calendar_days)
            .collect();
        Plan {
            list,
            mid,
            calendar,
        }
    }

    /// Holiday eves and bridge days of `year` (see the module table).
    fn calendar_days(year: i32) -> Vec<Disturbance> {
        let mut out = Vec::new();
        let working =
            |d: NaiveDate| d.weekday().num_days_from_monday() < 5 && !patterns::is_holiday(d);
        for d in patterns::days_of_year(year) {
            if !patterns::is_holiday(d) {
                continue;
            }
            let eve = d - Duration::days(1);
            // The eve of a Monday holiday is the Friday before it.
            let eve = if d.weekday() == Weekday::Mon {
                d - Duration::days(3)
            } else {
                eve
            };
            if working(eve) && eve.year() == year {
                out.push(Disturbance {
                    kind: Kind::HolidayEve,
                    start: (eve, 12),
                    end: (eve, 20),
                    reach: Reach::All,
                    strength: 1.25,
                });
            }
            let bridge = match d.weekday() {
                Weekday::Tue => Some(d - Duration::days(1)),
                Weekday::Thu => Some(d + Duration::days(1)),
                _ => None,
            };
            if let Some(b) = bridge.filter(|&b| working(b) && b.year() == year) {
                out.push(Disturbance {
                    kind: Kind::BridgeDay,
                    start: (b, 0),
                    end: (b + Duration::days(1), 0),
                    reach: Reach::All,
                    strength: 0.80,
                });
            }
        }
        out
    }

    /// The disturbances that may touch `date`: the drawn ones and the calendar's.
    fn on(&self, date: NaiveDate) -> impl Iterator<Item = &Disturbance> + '_ {
        self.list
            .iter()
            .chain(&self.calendar)
            .filter(move |x| x.start.0 <= date && date <= x.end.0)
    }

    /// The multipliers of the clock hours 0..=23 of `date` on segment `seg` (the repeated
    /// hour of a 25-hour day takes its clock hour's), with the kinds that moved any of them
    /// by more than 5 %.
    pub(crate) fn day(&self, seg: usize, date: NaiveDate) -> DayEffect {
        let xy = self.mid.get(seg).copied().unwrap_or_default();
        let mut m = [1.0; 24];
        let mut kinds = Vec::new();
        for x in self.on(date) {
            let mut moved = false;
            for (h, mi) in (0u32..).zip(m.iter_mut()) {
                let f = x.at(seg, xy, date, h);
                moved |= (f - 1.0).abs() > 0.05;
                *mi *= f;
            }
            if moved && !kinds.contains(&x.kind) {
                kinds.push(x.kind);
            }
        }
        DayEffect { hourly: m, kinds }
    }

    /// The mean multiplier of segment `seg`'s volume over `year` (the disturbed AADT over
    /// the undisturbed one), for the truth files.
    pub(crate) fn annual_effect(&self, seg: usize, pattern: &Pattern, year: i32) -> f64 {
        let norm = pattern.norm(year);
        let n = patterns::days_of_year(year).len() as f64;
        // Only the dates a disturbance spans differ from 1.
        let mut dates: Vec<NaiveDate> = self
            .list
            .iter()
            .chain(&self.calendar)
            .flat_map(|x| x.start.0.iter_days().take_while(move |d| *d <= x.end.0))
            .filter(|d| d.year() == year)
            .collect();
        dates.sort_unstable();
        dates.dedup();
        let change: f64 = dates
            .iter()
            .map(|&d| pattern.day_level(d, norm) * (self.day_share(seg, pattern, d) - 1.0))
            .sum();
        1.0 + change / n
    }

    /// The day's volume with its disturbances over the day's volume without them.
    pub(crate) fn day_share(&self, seg: usize, pattern: &Pattern, date: NaiveDate) -> f64 {
        let e = self.day(seg, date);
        let profile = &pattern.hourly[patterns::day_type(date) as usize];
        profile.iter().zip(&e.hourly).map(|(p, m)| p * m).sum()
    }
}

/// The multipliers of one segment-day.
pub(crate) struct DayEffect {
    /// Per clock hour 0..=23.
    pub hourly: [f64; 24],
    /// Kinds that moved an hour by more than 5 %.
    pub kinds: Vec<Kind>,
}

/// One station-day touched by a disturbance, for `truth/disturbed_days.csv`.
pub(crate) struct DisturbedDay {
    pub station_id: String,
    pub date: NaiveDate,
    pub kind: Kind,
}

/// Writes `truth/disturbances.csv` and `truth/disturbed_days.csv`.
pub(crate) fn write(
    out: &Path,
    plan: &Plan,
    year: i32,
    days: &[DisturbedDay],
) -> Result<Vec<PathBuf>, DemoError> {
    let mut sink = CsvSink::create(
        out.join("truth/disturbances.csv"),
        &["kind", "start", "end", "reach", "multiplier"],
    )?;
    let all = plan
        .list
        .iter()
        .chain(plan.calendar.iter().filter(|x| x.start.0.year() == year));
    for x in all {
        let reach = match &x.reach {
            Reach::All => "every segment".to_string(),
            Reach::Segments(s) => format!("{} segments", s.len()),
            Reach::Near { x, y, radius, .. } => {
                format!("within {radius:.1} km of ({x:.1} km, {y:.1} km)")
            }
        };
        sink.row([
            x.kind.name(),
            &format!("{} {:02}:00", x.start.0, x.start.1),
            &format!("{} {:02}:00", x.end.0, x.end.1),
            &reach,
            &format!("{:.2}", x.strength),
        ])?;
    }
    let mut per_day = CsvSink::create(
        out.join("truth/disturbed_days.csv"),
        &["station_id", "date", "kind"],
    )?;
    for d in days {
        per_day.row([d.station_id.as_str(), &d.date.to_string(), d.kind.name()])?;
    }
    Ok(vec![sink.finish()?, per_day.finish()?])
}
