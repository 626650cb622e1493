//! Day series and typical profiles per station x direction x day type x hour.

use chrono::{Datelike, NaiveDate};

use crate::model::counts::hour_mask;
use crate::model::{DayCounts, DirectionDay};

/// Which figure a day's rules run on.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub(crate) enum Measure {
    Vehicles,
    Axles,
}

impl Measure {
    pub(crate) fn unit(self) -> &'static str {
        match self {
            Measure::Vehicles => "veh",
            Measure::Axles => "axles",
        }
    }
}

/// One direction-day as hourly values over the slots of its local day.
#[derive(Debug, Clone)]
pub(crate) struct DaySeries {
    pub date: NaiveDate,
    pub measure: Measure,
    /// Hourly values, one per slot of `DayCounts::day_hours`.
    pub values: Vec<f64>,
    /// Local clock hour (0..24) of each slot.
    pub hours: Vec<usize>,
    /// Share of the day's quarter-hours covered by the measure.
    pub coverage: f64,
}

impl DaySeries {
    pub(crate) fn total(&self) -> f64 {
        self.values.iter().sum()
    }

    /// Clock label of slot `k`, e.g. "14:00".
    pub(crate) fn label(&self, k: usize) -> String {
        let repeated = k > 0 && self.hours[k] == self.hours[k - 1];
        format!(
            "{:02}:00{}",
            self.hours[k],
            if repeated { " (repeated hour)" } else { "" }
        )
    }
}

/// Local clock hour of each slot of a day of `n` hours. The clock change is taken at 02:00
/// local time (North American and most European practice); elsewhere the profile match is off
/// by one night hour at most.
pub(crate) fn local_hours(n: usize) -> Vec<usize> {
    (0..n)
        .map(|k| match n {
            23 if k >= 2 => k + 1,
            25 if k >= 2 => k - 1,
            _ => k.min(23),
        })
        .collect()
}

/// The measure of a direction-day (vehicles where any are given, else axles) and its series.
pub(crate) fn series(day: &DayCounts, dd: &DirectionDay) -> DaySeries {
    let range = day.day_hours();
    let n = range.len();
    let mut day_mask = 0u128;
    for h in range.clone() {
        day_mask |= hour_mask(h);
    }
    let (measure, quarters, arr) = if dd.vehicle_quarters != 0 {
        (Measure::Vehicles, dd.vehicle_quarters, &dd.vehicles)
    } else {
        (Measure::Axles, dd.axle_quarters, &dd.axles)
    };
    let covered = (quarters & day_mask).count_ones() as f64;
    DaySeries {
        date: day.date,
        measure,
        values: arr[range].iter().map(|&v| v as f64).collect(),
        hours: local_hours(n),
        coverage: if n == 0 {
            0.0
        } else {
            covered / (4 * n) as f64
        },
    }
}

/// Typical day of one station, direction and day type.
#[derive(Debug, Clone)]
pub(crate) struct Profile {
    /// Median hourly value after scaling each day to the median daily total.
    pub median: [f64; 24],
    /// Robust spread (1.4826 x MAD) of those scaled hourly values.
    pub spread: [f64; 24],
    /// Days the profile was built from.
    pub days: usize,
    /// What the profile stands for, for details ("Tuesday", "weekday", "all days").
    pub label: &'static str,
}

impl Profile {
    pub(crate) fn expected(&self, s: &DaySeries) -> Vec<f64> {
        s.hours.iter().map(|&h| self.median[h]).collect()
    }
}

pub(crate) fn median(v: &mut [f64]) -> f64 {
    if v.is_empty() {
        return 0.0;
    }
    // Selection, not a full sort: the same order statistics (by `total_cmp`) in linear time.
    // `v` is left partly ordered.
    let n = v.len();
    let (below, mid, _) = v.select_nth_unstable_by(n / 2, |a, b| a.total_cmp(b));
    let mid = *mid;
    if n % 2 == 1 {
        mid
    } else {
        let lower = below
            .iter()
            .copied()
            .max_by(|a, b| a.total_cmp(b))
            .expect("n >= 2");
        (lower + mid) / 2.0
    }
}

/// Builds a profile from complete 24-hour days (clock-change days are left out of profiles,
/// they are tested against them).
fn build(days: &[&DaySeries], label: &'static str) -> Profile {
    let mut totals: Vec<f64> = days.iter().map(|d| d.total()).collect();
    let m_total = median(&mut totals);
    let scaled: Vec<Vec<f64>> = days
        .iter()
        .map(|d| {
            let t = d.total();
            let f = if t > 0.0 && m_total > 0.0 {
                m_total / t
            } else {
                1.0
            };
            d.values.iter().map(|v| v * f).collect()
        })
        .collect();
    let mut median_h = [0.0; 24];
    let mut spread = [0.0; 24];
    let mut col = Vec::with_capacity(days.len());
    for h in 0..24 {
        col.clear();
        col.extend(scaled.iter().map(|d| d[h]));
        let m = median(&mut col);
        let mut dev: Vec<f64> = col.iter().map(|v| (v - m).abs()).collect();
        median_h[h] = m;
        spread[h] = 1.4826 * median(&mut dev);
    }
    Profile {
        median: median_h,
        spread,
        days: days.len(),
        label,
    }
}

const WEEKDAY_NAMES: [&str; 7] = [
    "Monday",
    "Tuesday",
    "Wednesday",
    "Thursday",
    "Friday",
    "Saturday",
    "Sunday",
];

fn group_of(wd: usize) -> usize {
    match wd {
        0..=4 => 0,
        5 => 1,
        _ => 2,
    }
}

const CLASS_NAMES: [&str; 2] = ["working day", "weekend day"];

const GROUP_NAMES: [&str; 3] = ["weekday (Mon-Fri)", "Saturday", "Sunday"];

/// Profiles of one station, direction and measure, with the fallback order
/// weekday -> weekday group -> working days / weekend days (the last with fewer days).
#[derive(Debug, Clone, Default)]
pub(crate) struct ProfileSet {
    weekday: [Option<Profile>; 7],
    group: [Option<Profile>; 3],
    class: [Option<Profile>; 2],
}

impl ProfileSet {
    pub(crate) fn new(days: &[&DaySeries], min_days: usize, min_pooled: usize) -> ProfileSet {
        let full: Vec<&DaySeries> = days
            .iter()
            .copied()
            .filter(|d| d.values.len() == 24)
            .collect();
        let wd = |d: &DaySeries| d.date.weekday().num_days_from_monday() as usize;
        let mut set = ProfileSet::default();
        for (w, name) in WEEKDAY_NAMES.iter().enumerate() {
            let sel: Vec<&DaySeries> = full.iter().copied().filter(|d| wd(d) == w).collect();
            if sel.len() >= min_days.max(1) {
                set.weekday[w] = Some(build(&sel, name));
            }
        }
        for (g, name) in GROUP_NAMES.iter().enumerate() {
            let sel: Vec<&DaySeries> = full
                .iter()
                .copied()
                .filter(|d| group_of(wd(d)) == g)
                .collect();
            if sel.len() >= min_days.max(1) {
                set.group[g] = Some(build(&sel, name));
            }
        }
        // Working days and weekend days are never pooled together: their shapes differ.
        for (c, name) in CLASS_NAMES.iter().enumerate() {
            let sel: Vec<&DaySeries> = full
                .iter()
                .copied()
                .filter(|d| usize::from(wd(d) >= 5) == c)
                .collect();
            if sel.len() >= min_pooled.max(1) {
                set.class[c] = Some(build(&sel, name));
            }
        }
        set
    }

    /// Profiles of the other day types (Mon-Fri, Saturday, Sunday groups) than `date`'s own,
    /// for telling a holiday (a working day with a weekend shape) from a fault.
    pub(crate) fn other_day_types(&self, date: NaiveDate) -> Vec<&Profile> {
        let own = group_of(date.weekday().num_days_from_monday() as usize);
        (0..3)
            .filter(|&g| g != own)
            .filter_map(|g| self.group[g].as_ref())
            .collect()
    }

    pub(crate) fn for_date(&self, date: NaiveDate) -> Option<&Profile> {
        let w = date.weekday().num_days_from_monday() as usize;
        self.weekday[w]
            .as_ref()
            .or(self.group[group_of(w)].as_ref())
            .or(self.class[usize::from(w >= 5)].as_ref())
    }
}
