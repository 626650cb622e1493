//! Per station-day summaries of the count records.
//!
//! The reader never keeps rows: each accepted row is folded into the [`DayCounts`] of its
//! station and local date. A day is a row of clock-hour slots on a time axis that is anchored
//! in UTC, so the repeated hour of a fall-back day and the missing hour of a spring-forward
//! day need no special case: a 25-hour day simply fills 25 slots.
//!
//! # Units
//! Volumes are vehicles (or axle hits) per clock hour; slot indices count hours from the
//! day's anchor, which lies [`SLOT_MARGIN_HOURS`] before local midnight in the offset of the
//! first record seen for that day.

use chrono::NaiveDate;

use super::CLASS_COUNT;

/// Hour slots held per day: a 25-hour day plus margins on both sides for offset changes.
pub const MAX_DAY_HOURS: usize = 28;
/// Hours of margin kept before local midnight on the slot axis.
pub const SLOT_MARGIN_HOURS: i64 = 2;
/// Quarter-hour slots held per day.
pub const MAX_DAY_QUARTERS: usize = MAX_DAY_HOURS * 4;

/// Traffic direction of a record.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Direction {
    /// Digitised direction, from_node -> to_node.
    Fwd,
    /// Against the digitised direction.
    Rev,
    /// Both directions counted together.
    Both,
}

impl Direction {
    /// All directions, in storage order.
    pub const ALL: [Direction; 3] = [Direction::Fwd, Direction::Rev, Direction::Both];

    /// Storage index 0..3.
    pub fn index(self) -> usize {
        match self {
            Direction::Fwd => 0,
            Direction::Rev => 1,
            Direction::Both => 2,
        }
    }

    /// The contract's spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            Direction::Fwd => "fwd",
            Direction::Rev => "rev",
            Direction::Both => "both",
        }
    }

    /// Parses the contract's spelling.
    pub fn parse(s: &str) -> Option<Direction> {
        match s {
            "fwd" => Some(Direction::Fwd),
            "rev" => Some(Direction::Rev),
            "both" => Some(Direction::Both),
            _ => None,
        }
    }
}

/// Key of a station-day: station index and local date.
pub type StationDayKey = (usize, NaiveDate);

/// The records of one station, one direction, one local day, summed into clock-hour slots.
#[derive(Debug, Clone)]
pub struct DirectionDay {
    /// Quarter slots covered by any kept record (bit q = quarter q of the slot axis).
    pub covered: u128,
    /// Quarter slots that carry a vehicle figure (given, or the class sum).
    pub vehicle_quarters: u128,
    /// Quarter slots that carry an axle figure.
    pub axle_quarters: u128,
    /// Quarter slots that carry class figures.
    pub class_quarters: u128,
    /// Quarter slots that came from 15-minute records.
    pub fine_quarters: u128,
    /// Vehicles per hour slot.
    pub vehicles: [u32; MAX_DAY_HOURS],
    /// Axle hits per hour slot.
    pub axles: [u32; MAX_DAY_HOURS],
    /// Heavy vehicles (classes 4-13) per hour slot, where classified.
    pub heavy: [u32; MAX_DAY_HOURS],
    /// Highest 15-minute vehicle volume inside each hour slot (0 where no 15-minute record).
    pub peak_quarter: [u32; MAX_DAY_HOURS],
    /// Vehicles per FHWA class over the classified quarters of the day.
    pub classes: [u64; CLASS_COUNT],
    /// Vehicles over the quarters that also carry an axle figure (for axle-correction factors).
    pub vehicles_with_axles: u64,
    /// Axle hits over the quarters that also carry a vehicle figure.
    pub axles_with_vehicles: u64,
    /// Records folded into this day.
    pub records: u32,
}

impl Default for DirectionDay {
    fn default() -> Self {
        DirectionDay {
            covered: 0,
            vehicle_quarters: 0,
            axle_quarters: 0,
            class_quarters: 0,
            fine_quarters: 0,
            vehicles: [0; MAX_DAY_HOURS],
            axles: [0; MAX_DAY_HOURS],
            heavy: [0; MAX_DAY_HOURS],
            peak_quarter: [0; MAX_DAY_HOURS],
            classes: [0; CLASS_COUNT],
            vehicles_with_axles: 0,
            axles_with_vehicles: 0,
            records: 0,
        }
    }
}

/// Mask of the four quarters of hour slot `h`.
pub fn hour_mask(h: usize) -> u128 {
    0xF_u128 << (4 * h)
}

impl DirectionDay {
    /// Whether every quarter of hour slot `h` has a vehicle figure.
    pub fn hour_has_vehicles(&self, h: usize) -> bool {
        self.vehicle_quarters & hour_mask(h) == hour_mask(h)
    }

    /// Whether every quarter of hour slot `h` has an axle figure.
    pub fn hour_has_axles(&self, h: usize) -> bool {
        self.axle_quarters & hour_mask(h) == hour_mask(h)
    }

    /// Whether every quarter of hour slot `h` is classified.
    pub fn hour_is_classified(&self, h: usize) -> bool {
        self.class_quarters & hour_mask(h) == hour_mask(h)
    }

    /// Sum of vehicles over the hour slots in `hours`.
    pub fn vehicles_in(&self, hours: std::ops::Range<usize>) -> u64 {
        self.vehicles[hours].iter().map(|&v| v as u64).sum()
    }

    /// Sum of axle hits over the hour slots in `hours`.
    pub fn axles_in(&self, hours: std::ops::Range<usize>) -> u64 {
        self.axles[hours].iter().map(|&v| v as u64).sum()
    }
}

/// Everything counted at one station on one local date, per direction.
#[derive(Debug, Clone)]
pub struct DayCounts {
    /// Station index in the study's station list.
    pub station: usize,
    /// Local date.
    pub date: NaiveDate,
    /// UTC minute (since the Unix epoch) where hour slot 0 begins.
    pub anchor_utc_min: i64,
    /// Quarter slot of the earliest record and its UTC offset in minutes.
    pub earliest: (usize, i32),
    /// Quarter slot of the latest record and its UTC offset in minutes.
    pub latest: (usize, i32),
    /// Per direction ([`Direction::index`]); `None` where nothing was counted.
    pub dirs: [Option<Box<DirectionDay>>; 3],
}

impl DayCounts {
    /// A new, empty day whose slot axis is anchored by a record with UTC offset `offset_min`.
    pub fn new(station: usize, date: NaiveDate, offset_min: i32) -> DayCounts {
        let midnight_local_min = date
            .and_hms_opt(0, 0, 0)
            .expect("midnight exists")
            .and_utc()
            .timestamp()
            / 60;
        DayCounts {
            station,
            date,
            anchor_utc_min: midnight_local_min - offset_min as i64 - SLOT_MARGIN_HOURS * 60,
            earliest: (usize::MAX, 0),
            latest: (0, 0),
            dirs: [None, None, None],
        }
    }

    /// The direction's counts, if any.
    pub fn dir(&self, d: Direction) -> Option<&DirectionDay> {
        self.dirs[d.index()].as_deref()
    }

    /// Number of clock hours in this local day: 24, or 23 / 25 on a clock-change day,
    /// read from the UTC offsets of the day's first and last records.
    pub fn hours_in_day(&self) -> usize {
        let change_min = self.earliest.1 - self.latest.1;
        (24 * 60 + change_min).max(60) as usize / 60
    }

    /// Hour slots of the local day, from local midnight for [`Self::hours_in_day`] hours.
    pub fn day_hours(&self) -> std::ops::Range<usize> {
        let midnight_local_min = self
            .date
            .and_hms_opt(0, 0, 0)
            .expect("midnight exists")
            .and_utc()
            .timestamp()
            / 60;
        let midnight_utc = midnight_local_min - self.earliest.1 as i64;
        let first = ((midnight_utc - self.anchor_utc_min).max(0) / 60) as usize;
        let last = (first + self.hours_in_day()).min(MAX_DAY_HOURS);
        first..last
    }

    /// Two-way volume of hour slot `h` when it is known: fwd + rev where both are
    /// complete, `both` where that is given, fwd alone on a one-way segment (`oneway`).
    pub fn two_way_hour(&self, h: usize, oneway: bool) -> Option<u64> {
        if let Some(b) = self.dir(Direction::Both) {
            if b.hour_has_vehicles(h) {
                return Some(b.vehicles[h] as u64);
            }
        }
        let f = self.dir(Direction::Fwd).filter(|d| d.hour_has_vehicles(h));
        let r = self.dir(Direction::Rev).filter(|d| d.hour_has_vehicles(h));
        match (f, r) {
            (Some(f), Some(r)) => Some(f.vehicles[h] as u64 + r.vehicles[h] as u64),
            (Some(f), None) if oneway => Some(f.vehicles[h] as u64),
            _ => None,
        }
    }
}

/// One clock hour of a count, in time order.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CountHour {
    /// Local date of the hour.
    pub date: NaiveDate,
    /// Two-way volume of the hour.
    pub volume: f64,
    /// Whether this hour directly follows the previous one (false after a gap).
    pub follows: bool,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn ordinary_day_has_24_hours_starting_after_the_margin() {
        let d = NaiveDate::from_ymd_opt(2025, 6, 3).unwrap();
        let mut day = DayCounts::new(0, d, -300);
        day.earliest = (8, -300);
        day.latest = (8 + 23 * 4, -300);
        assert_eq!(day.hours_in_day(), 24);
        assert_eq!(day.day_hours(), 2..26);
    }

    #[test]
    fn clock_change_days_have_23_and_25_hours() {
        let d = NaiveDate::from_ymd_opt(2025, 3, 9).unwrap();
        let mut spring = DayCounts::new(0, d, -300);
        spring.earliest = (8, -300);
        spring.latest = (8 + 22 * 4, -240);
        assert_eq!(spring.hours_in_day(), 23);
        let mut fall = DayCounts::new(0, d, -240);
        fall.earliest = (8, -240);
        fall.latest = (8 + 24 * 4, -300);
        assert_eq!(fall.hours_in_day(), 25);
        assert_eq!(fall.day_hours(), 2..27);
    }
}
