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
//! # Units
//!
//! Hours are local clock hours; multipliers are dimensionless.

use std::path::{Path, PathBuf};

use chrono::NaiveDate;
use rand::Rng;
use rand_chacha::ChaCha8Rng;

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
