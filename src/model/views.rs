//! Two-way views of a station-day, the shape every statistic starts from.
//!
//! A direction-day that quality control rejected is passed in as excluded, so it never
//! reaches a statistic.

use super::counts::{DayCounts, Direction, DirectionDay};
use super::CLASS_COUNT;

/// Which measure to read from a direction-day.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Measured {
    /// Vehicles (given, or class sums).
    Vehicles,
    /// Axle hits.
    Axles,
}

fn hour_value(d: &DirectionDay, h: usize, m: Measured) -> Option<u64> {
    match m {
        Measured::Vehicles => d.hour_has_vehicles(h).then(|| d.vehicles[h] as u64),
        Measured::Axles => d.hour_has_axles(h).then(|| d.axles[h] as u64),
    }
}

/// An hour's two-way volume with its `fwd` and `rev` parts where known.
pub type HourSplit = (u64, Option<u64>, Option<u64>);

/// Two-way volume of hour slot `h`, with the volume of each direction where known.
/// Returns (two-way, fwd, rev); `fwd`/`rev` are `None` when only a `both` record covers it.
pub fn two_way_hour(
    day: &DayCounts,
    h: usize,
    oneway: bool,
    m: Measured,
    excluded: &dyn Fn(Direction) -> bool,
) -> Option<HourSplit> {
    let get = |d: Direction| {
        if excluded(d) {
            return None;
        }
        day.dir(d).and_then(|dd| hour_value(dd, h, m))
    };
    if let Some(b) = get(Direction::Both) {
        return Some((b, None, None));
    }
    match (get(Direction::Fwd), get(Direction::Rev)) {
        (Some(f), Some(r)) => Some((f + r, Some(f), Some(r))),
        (Some(f), None) if oneway => Some((f, Some(f), Some(0))),
        // One direction asked for alone (the per-direction statistics pass the other as
        // excluded and `oneway` set): the rev volume is that direction's whole volume.
        (None, Some(r)) if oneway => Some((r, Some(0), Some(r))),
        _ => None,
    }
}

/// The one direction counted in hour slot `h` of a two-way road's day, when the other is
/// rejected or missing and there is no `both` record: (direction, volume).
pub fn direction_hour(
    day: &DayCounts,
    h: usize,
    m: Measured,
    excluded: &dyn Fn(Direction) -> bool,
) -> Option<(Direction, u64)> {
    let get = |d: Direction| {
        if excluded(d) {
            return None;
        }
        day.dir(d).and_then(|dd| hour_value(dd, h, m))
    };
    if get(Direction::Both).is_some() {
        return None;
    }
    match (get(Direction::Fwd), get(Direction::Rev)) {
        (Some(f), None) => Some((Direction::Fwd, f)),
        (None, Some(r)) => Some((Direction::Rev, r)),
        _ => None,
    }
}

/// The day's two-way hourly volumes over its local clock hours, when every hour is known.
pub fn complete_hours(
    day: &DayCounts,
    oneway: bool,
    m: Measured,
    excluded: &dyn Fn(Direction) -> bool,
) -> Option<Vec<HourSplit>> {
    day.day_hours()
        .map(|h| two_way_hour(day, h, oneway, m, excluded))
        .collect()
}

/// The day's two-way total when the whole local day is covered.
pub fn complete_total(
    day: &DayCounts,
    oneway: bool,
    m: Measured,
    excluded: &dyn Fn(Direction) -> bool,
) -> Option<u64> {
    complete_hours(day, oneway, m, excluded).map(|hs| hs.iter().map(|h| h.0).sum())
}

/// Class totals of the day over the directions not excluded, when every hour of the day is
/// classified in every counted direction (otherwise the day's class mix is incomplete).
pub fn complete_classes(
    day: &DayCounts,
    oneway: bool,
    excluded: &dyn Fn(Direction) -> bool,
) -> Option<[u64; CLASS_COUNT]> {
    let hours = day.day_hours();
    let classified = |d: Direction| {
        !excluded(d)
            && day
                .dir(d)
                .is_some_and(|dd| hours.clone().all(|h| dd.hour_is_classified(h)))
    };
    let dirs: &[Direction] = if classified(Direction::Both) {
        &[Direction::Both]
    } else if classified(Direction::Fwd) && (oneway || classified(Direction::Rev)) {
        if oneway {
            &[Direction::Fwd]
        } else {
            &[Direction::Fwd, Direction::Rev]
        }
    } else {
        return None;
    };
    let mut out = [0u64; CLASS_COUNT];
    for d in dirs {
        let dd = day.dir(*d).expect("classified implies present");
        for (o, c) in out.iter_mut().zip(dd.classes.iter()) {
            *o += c;
        }
    }
    Some(out)
}

/// The measure a station-day carries: vehicles where any direction has vehicle figures,
/// else axles.
pub fn measure_of(day: &DayCounts) -> Measured {
    let has_vehicles = day.dirs.iter().flatten().any(|d| d.vehicle_quarters != 0);
    if has_vehicles {
        Measured::Vehicles
    } else {
        Measured::Axles
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use chrono::NaiveDate;

    fn day_with(fwd: u32, rev: u32) -> DayCounts {
        let mut day = DayCounts::new(0, NaiveDate::from_ymd_opt(2025, 6, 3).unwrap(), -240);
        day.earliest = (8, -240);
        day.latest = (8 + 23 * 4, -240);
        for (dir, v) in [(Direction::Fwd, fwd), (Direction::Rev, rev)] {
            let mut dd = DirectionDay::default();
            for h in day.day_hours() {
                dd.vehicles[h] = v;
                dd.vehicle_quarters |= super::super::counts::hour_mask(h);
                dd.covered |= super::super::counts::hour_mask(h);
            }
            day.dirs[dir.index()] = Some(Box::new(dd));
        }
        day
    }

    #[test]
    fn two_way_total_needs_both_directions_unless_one_way() {
        let day = day_with(10, 5);
        let none = |_: Direction| false;
        assert_eq!(
            complete_total(&day, false, Measured::Vehicles, &none),
            Some(24 * 15)
        );
        let no_rev = |d: Direction| d == Direction::Rev;
        assert_eq!(
            complete_total(&day, false, Measured::Vehicles, &no_rev),
            None
        );
        assert_eq!(
            complete_total(&day, true, Measured::Vehicles, &no_rev),
            Some(24 * 10)
        );
        assert_eq!(complete_total(&day, false, Measured::Axles, &none), None);
    }
}

/// Which direction-days later stages must leave out (quality control's rejections).
pub trait DayFilter: Sync {
    /// Whether `station`'s direction `d` on `date` is left out.
    fn excluded(&self, station: usize, date: chrono::NaiveDate, d: Direction) -> bool;
}

/// Leaves nothing out.
#[derive(Debug, Clone, Copy, Default)]
pub struct KeepAll;

impl DayFilter for KeepAll {
    fn excluded(&self, _: usize, _: chrono::NaiveDate, _: Direction) -> bool {
        false
    }
}
