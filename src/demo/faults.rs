//! Injected faults: deliberate sensor failures in station-days, and deliberately unreadable
//! rows, each recorded in the truth folder.
//!
//! # Method
//!
//! A fault rewrites the records of one station x direction x local date (swapped directions
//! rewrite both directions of the day). The kinds mimic what count quality rules look for:
//! a stuck sensor repeating one non-zero value, a dead sensor reporting zeros in busy hours,
//! a single-hour spike, a level shift for the rest of the day, missing hours and swapped
//! directions.
//!
//! Short counts get their own faults ([`inject_short`]): on 6.5 % of them one local day of
//! one direction (or of the `both` total) is corrupted, as a tube or portable counter fails in
//! the field: a whole day of zeros (tube cut or detached), a spike of x4-x8 over 1-4 hours
//! (tube slapping, a parked vehicle on the sensor), a flat run of 6-10 hours (a logger
//! repeating its last value), a level shift to the end of the day (a tube moved off one lane),
//! or fwd and rev exchanged for the day (the two tubes' channels crossed after a service
//! visit). A swap is only injected on a working day of a commuter road whose count has
//! another working day with at least 12 of the same clock hours: without such a day, a
//! swapped day is the same as a correctly wired one (the fwd/rev roles of a count are
//! defined by that count alone) and it changes no two-way figure.
//!
//! # Units
//!
//! Hours are local clock hours; multipliers are dimensionless.

use std::path::{Path, PathBuf};

use chrono::NaiveDate;
use rand::seq::SliceRandom;
use rand::Rng;
use rand_chacha::ChaCha8Rng;

use super::clock::Interval;
use super::sink::CsvSink;
use super::DemoError;

/// One count record of a station and direction before writing.
#[derive(Clone, Debug)]
pub(crate) struct Rec {
    /// Index of the interval in the caller's interval list.
    pub interval: usize,
    /// Local clock hour of the interval start.
    pub hour: u32,
    pub vehicles: u32,
    /// Counts by FHWA class 1..=13 where the station classifies.
    pub classes: Option<[u32; 13]>,
}

impl Rec {
    fn set(&mut self, vehicles: u32, classes: Option<[u32; 13]>) {
        self.vehicles = vehicles;
        self.classes = classes;
    }

    /// Multiplies the record, class by class, keeping vehicles = class sum.
    fn scale(&mut self, k: f64) {
        match &mut self.classes {
            Some(c) => {
                for v in c.iter_mut() {
                    *v = (*v as f64 * k).round() as u32;
                }
                self.vehicles = c.iter().sum();
            }
            None => self.vehicles = (self.vehicles as f64 * k).round() as u32,
        }
    }
}

/// Kinds of injected sensor fault.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum FaultKind {
    Stuck,
    Dead,
    Spike,
    LevelShift,
    PartialDay,
    SwappedDirections,
}

impl FaultKind {
    pub(crate) fn name(self) -> &'static str {
        match self {
            FaultKind::Stuck => "stuck",
            FaultKind::Dead => "dead",
            FaultKind::Spike => "spike",
            FaultKind::LevelShift => "level_shift",
            FaultKind::PartialDay => "partial_day",
            FaultKind::SwappedDirections => "swapped_directions",
        }
    }

    /// A random single-direction kind (everything but swapped directions).
    pub(crate) fn random_single(rng: &mut ChaCha8Rng) -> FaultKind {
        const KINDS: [FaultKind; 5] = [
            FaultKind::Stuck,
            FaultKind::Dead,
            FaultKind::Spike,
            FaultKind::LevelShift,
            FaultKind::PartialDay,
        ];
        KINDS[rng.gen_range(0..KINDS.len())]
    }
}

/// One row of `truth/faults.csv`.
#[derive(Clone, Debug)]
pub(crate) struct FaultRow {
    pub station_id: String,
    pub direction: &'static str,
    pub date: NaiveDate,
    pub kind: FaultKind,
    pub detail: String,
}

/// One row of `truth/bad_rows.csv`.
#[derive(Clone, Debug)]
pub(crate) struct BadRow {
    pub file: String,
    pub line: u64,
    pub problem: &'static str,
}

/// Applies a single-direction fault to one day's records; returns a short description.
pub(crate) fn apply(kind: FaultKind, rng: &mut ChaCha8Rng, day: &mut Vec<Rec>) -> String {
    match kind {
        FaultKind::Stuck => {
            let from = rng.gen_range(7..=10);
            let to = from + rng.gen_range(6..=12);
            let Some(first) = day.iter().find(|r| r.hour >= from).cloned() else {
                return "no records to corrupt".into();
            };
            // A stuck sensor repeats a non-zero value.
            let (value, classes) = if first.vehicles == 0 {
                let mut c = first.classes.map(|_| [0; 13]);
                if let Some(c) = c.as_mut() {
                    c[1] = 7;
                }
                (7, c)
            } else {
                (first.vehicles, first.classes)
            };
            for r in day.iter_mut().filter(|r| r.hour >= from && r.hour < to) {
                r.set(value, classes);
            }
            format!("hours {from:02}-{:02} stuck at {value}", to.min(24) - 1)
        }
        FaultKind::Dead => {
            let from = rng.gen_range(6..=9);
            let to = from + rng.gen_range(5..=10);
            for r in day.iter_mut().filter(|r| r.hour >= from && r.hour < to) {
                let zero = r.classes.map(|_| [0; 13]);
                r.set(0, zero);
            }
            format!("hours {from:02}-{:02} zero", to - 1)
        }
        FaultKind::Spike => {
            let hour = rng.gen_range(8..=18);
            let k = rng.gen_range(5.0..10.0);
            for r in day.iter_mut().filter(|r| r.hour == hour) {
                if r.vehicles == 0 {
                    r.set(1, r.classes.map(|_| one_car()));
                }
                r.scale(k);
            }
            format!("hour {hour:02} x {k:.1}")
        }
        FaultKind::LevelShift => {
            let from = rng.gen_range(6..=14);
            let k = if rng.gen_bool(0.5) { 0.5 } else { 1.6 };
            for r in day.iter_mut().filter(|r| r.hour >= from) {
                r.scale(k);
            }
            format!("from hour {from:02} x {k}")
        }
        FaultKind::PartialDay => {
            let from = rng.gen_range(0..=14);
            let to = from + rng.gen_range(6..=10);
            day.retain(|r| r.hour < from || r.hour >= to);
            format!("hours {from:02}-{:02} missing", to - 1)
        }
        FaultKind::SwappedDirections => "fwd and rev exchanged".into(),
    }
}

/// Share of short counts with one faulty day (common practice puts field failures of
/// portable counters at a few per cent of deployments; invented for the demo).
const SHORT_FAULT_SHARE: f64 = 0.065;
/// Fewest hourly records a short-count day needs to carry a fault.
const SHORT_FAULT_MIN_HOURS: usize = 10;

/// What [`inject_short`] needs to know about a short count.
pub(crate) struct ShortTarget<'a> {
    pub station: &'a str,
    /// Direction names of `recs[0]` and `recs[1]` (`both` counts use `recs[0]` only).
    pub names: [&'static str; 2],
    /// Whether fwd and rev are counted separately.
    pub per_direction: bool,
    /// Whether a swap can be told from the count itself (a two-way commuter road).
    pub can_swap: bool,
}

/// Injects at most one faulty day into a short count's records (`recs[r].interval` indexes
/// `intervals`) and records it in `rows`.
pub(crate) fn inject_short(
    rng: &mut ChaCha8Rng,
    target: &ShortTarget,
    intervals: &[Interval],
    recs: &mut [Vec<Rec>; 2],
    rows: &mut Vec<FaultRow>,
) {
    if !rng.gen_bool(SHORT_FAULT_SHARE) {
        return;
    }
    let date_of = |r: &Rec| intervals[r.interval].date;
    let mut dates: Vec<NaiveDate> = recs[0].iter().map(date_of).collect();
    dates.dedup();
    let hours_on = |d: NaiveDate| -> Vec<u32> {
        recs[0]
            .iter()
            .filter(|r| date_of(r) == d)
            .map(|r| r.hour)
            .collect()
    };
    let eligible: Vec<NaiveDate> = dates
        .iter()
        .copied()
        .filter(|&d| hours_on(d).len() >= SHORT_FAULT_MIN_HOURS)
        .collect();
    let Some(&date) = eligible.choose(rng) else {
        return;
    };
    let working = |d: NaiveDate| super::patterns::day_type(d) == super::patterns::DayType::Weekday;
    let swap_ok = target.per_direction
        && target.can_swap
        && working(date)
        && dates.iter().any(|&o| {
            let (own, other) = (hours_on(date), hours_on(o));
            o != date && working(o) && own.iter().filter(|h| other.contains(h)).count() >= 12
        });
    const SINGLE: [FaultKind; 4] = [
        FaultKind::Dead,
        FaultKind::Spike,
        FaultKind::Stuck,
        FaultKind::LevelShift,
    ];
    let kind = if swap_ok && rng.gen_bool(0.2) {
        FaultKind::SwappedDirections
    } else {
        SINGLE[rng.gen_range(0..SINGLE.len())]
    };
    if kind == FaultKind::SwappedDirections {
        let [fwd, rev] = recs;
        for (f, r) in fwd.iter_mut().zip(rev.iter_mut()) {
            if date_of(f) == date {
                std::mem::swap(&mut f.vehicles, &mut r.vehicles);
                std::mem::swap(&mut f.classes, &mut r.classes);
            }
        }
        for direction in target.names {
            rows.push(FaultRow {
                station_id: target.station.to_string(),
                direction,
                date,
                kind,
                detail: "fwd and rev exchanged for the day".into(),
            });
        }
        return;
    }
    let which = if target.per_direction && !recs[1].is_empty() && rng.gen_bool(0.5) {
        1
    } else {
        0
    };
    let mut day: Vec<&mut Rec> = recs[which]
        .iter_mut()
        .filter(|r| intervals[r.interval].date == date)
        .collect();
    let detail = apply_short(kind, rng, &mut day);
    rows.push(FaultRow {
        station_id: target.station.to_string(),
        direction: target.names[which],
        date,
        kind,
        detail,
    });
}

/// Applies a short-count fault to one day's records (in hour order, at least
/// `SHORT_FAULT_MIN_HOURS` of them); returns a short description.
fn apply_short(kind: FaultKind, rng: &mut ChaCha8Rng, day: &mut [&mut Rec]) -> String {
    let n = day.len();
    let span = |day: &[&mut Rec], a: usize, b: usize| {
        format!("hours {:02}-{:02}", day[a].hour, day[b - 1].hour)
    };
    match kind {
        FaultKind::Dead => {
            for r in day.iter_mut() {
                let zero = r.classes.map(|_| [0; 13]);
                r.set(0, zero);
            }
            format!("whole day zero ({n} hours)")
        }
        FaultKind::Spike => {
            let len = rng.gen_range(1..=4usize);
            // Daytime hours, where a field glitch is noticed and does harm.
            let starts: Vec<usize> = (0..=n - len)
                .filter(|&k| (6..=19).contains(&day[k].hour))
                .collect();
            let a = starts.choose(rng).copied().unwrap_or(0);
            let k = rng.gen_range(4.0..8.0);
            for r in day[a..a + len].iter_mut() {
                if r.vehicles == 0 {
                    r.set(1, r.classes.map(|_| one_car()));
                }
                r.scale(k);
            }
            format!("{} x {k:.1}", span(day, a, a + len))
        }
        FaultKind::Stuck => {
            let len = rng.gen_range(6..=10usize).min(n);
            let starts: Vec<usize> = (0..=n - len).filter(|&k| day[k].hour >= 5).collect();
            let a = starts.choose(rng).copied().unwrap_or(0);
            let (value, classes) = if day[a].vehicles == 0 {
                let mut c = day[a].classes.map(|_| [0; 13]);
                if let Some(c) = c.as_mut() {
                    c[1] = 7;
                }
                (7, c)
            } else {
                (day[a].vehicles, day[a].classes)
            };
            for r in day[a..a + len].iter_mut() {
                r.set(value, classes);
            }
            format!("{} stuck at {value}", span(day, a, a + len))
        }
        FaultKind::LevelShift => {
            // A tube moved or a lane lost during working hours (06:00-16:00), with at least
            // 3 hours before and 6 after the break, so both levels are there. A change from
            // the first hour on is a whole-day level, which real days also show: no fault.
            let breaks: Vec<usize> = (3..=n - 6)
                .filter(|&k| (6..=16).contains(&day[k].hour))
                .collect();
            let a = breaks.choose(rng).copied().unwrap_or(3);
            let k = if rng.gen_bool(0.5) { 0.5 } else { 1.6 };
            for r in day[a..].iter_mut() {
                r.scale(k);
            }
            format!("from hour {:02} x {k}", day[a].hour)
        }
        other => unreachable!("{other:?} is not a single-direction short-count fault"),
    }
}

fn one_car() -> [u32; 13] {
    let mut c = [0; 13];
    c[1] = 1;
    c
}

/// Writes `truth/faults.csv`.
pub(crate) fn write_faults(out: &Path, rows: &[FaultRow]) -> Result<PathBuf, DemoError> {
    let mut sink = CsvSink::create(
        out.join("truth/faults.csv"),
        &["station_id", "direction", "date", "fault", "detail"],
    )?;
    for r in rows {
        sink.row([
            r.station_id.as_str(),
            r.direction,
            &r.date.to_string(),
            r.kind.name(),
            &r.detail,
        ])?;
    }
    sink.finish()
}

/// Writes `truth/bad_rows.csv`.
pub(crate) fn write_bad_rows(out: &Path, rows: &[BadRow]) -> Result<PathBuf, DemoError> {
    let mut sink = CsvSink::create(out.join("truth/bad_rows.csv"), &["file", "line", "problem"])?;
    for r in rows {
        sink.row([r.file.as_str(), &r.line.to_string(), r.problem])?;
    }
    sink.finish()
}
