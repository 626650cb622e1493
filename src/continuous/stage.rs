//! The permanent-counter stage: from accepted station-days to each counter's statistics.
//!
//! # Method
//! For every `continuous` station, the days of the study year that quality control kept are
//! turned into two-way day volumes (complete local days only: TMG practice, partial days are
//! discarded), per-direction day volumes, two-way clock hours and, at classifying stations,
//! daily class totals; then [`compute_aadt`], [`design_hour()`], [`hourly_distribution`] and
//! [`class_aadt`] do the maths.
//!
//! The uncertainty of a counter's AADT combines the sampling error of the 84 cell means
//! (`SE = sqrt(Σ s²_ij / n_ij) / 84`, from the day-to-day spread within each cell) with the
//! counting equipment's accuracy (`counter_cv`, default 2 %, common practice for a calibrated
//! inductive-loop site), in log space.
//!
//! # Units
//! vehicles/day for AADT, vehicles/hour for design hours.

use chrono::{Datelike, NaiveDate};
use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::{
    class_aadt, compute_aadt, design_hour, hourly_distribution, AadtResult, AxleSample, ClassAadt,
    ClassDay, DayVolume, DesignHour, HourVolume, HourlyDistribution, SufficiencyRule,
};
use crate::model::views::{complete_classes, complete_hours, DayFilter, Measured};
use crate::model::{CountHour, CountStore, Network, StationList};
use crate::model::{DayCounts, Direction, StationKind};

/// What the stage reads: the counters, their segments (for one-way roads), their counts,
/// the study year and quality control's verdicts.
#[derive(Clone, Copy)]
pub struct ContinuousInput<'a> {
    /// The network (a counter on a one-way segment counts one direction).
    pub network: &'a Network,
    /// Every station; the stage takes the `continuous` ones.
    pub stations: &'a StationList,
    /// The folded counts.
    pub counts: &'a CountStore,
    /// The study year.
    pub year: i32,
    /// Direction-days quality control rejected.
    pub filter: &'a dyn DayFilter,
}

/// Settings of the permanent-counter stage (`[continuous]` in study.toml).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(default, deny_unknown_fields)]
pub struct ContinuousParams {
    /// Which days a year needs for an AASHTO AADT and for factors.
    pub sufficiency: SufficiencyRule,
    /// Ranked hours kept for the ranked-hour curve. Default 200.
    pub ranked_hours: usize,
    /// Accuracy of a permanent counter's volumes, as a coefficient of variation.
    /// Default 0.02 (common practice).
    pub counter_cv: f64,
}

impl Default for ContinuousParams {
    fn default() -> Self {
        ContinuousParams {
            sufficiency: SufficiencyRule::default(),
            ranked_hours: 200,
            counter_cv: 0.02,
        }
    }
}

/// Statistics of one permanent counter for the study year.
#[derive(Debug, Clone)]
pub struct StationStats {
    /// Station index.
    pub station: usize,
    /// Two-way AADT result.
    pub aadt: AadtResult,
    /// The AADT figure used downstream: AASHTO where defined, else the simple average.
    pub aadt_value: f64,
    /// Standard deviation of ln AADT.
    pub aadt_log_sd: f64,
    /// Per-direction results (fwd, rev), where directions were counted separately.
    pub by_direction: [Option<AadtResult>; 2],
    /// Design-hour figures.
    pub design: Option<DesignHour>,
    /// Whether the design hour's direction split was measured (false when only `both`
    /// records cover it).
    pub d_measured: bool,
    /// Hourly distributions by day type.
    pub distribution: Option<HourlyDistribution>,
    /// Mean peak-hour factor of the 30 highest hours with 15-minute data in the heavier direction.
    pub phf: Option<f64>,
    /// Class statistics at classifying stations.
    pub classes: Option<ClassAadt>,
    /// Vehicles and axles counted together (for axle-correction factors).
    pub axles: Option<AxleSample>,
    /// Two-way hours of complete accepted days, in time order (for the calibration experiment).
    pub hours: Vec<CountHour>,
    /// Complete two-way days used.
    pub days_used: usize,
    /// Day-to-day coefficient of variation of a single day about its weekday-month mean.
    pub day_cv: Option<f64>,
    /// Mean share of a working day's volume in its busiest clock hour (Monday-Friday).
    pub daily_peak_share: Option<f64>,
}

/// What the stage produced.
#[derive(Debug, Clone, Default)]
pub struct ContinuousOutput {
    /// One entry per permanent counter with usable days.
    pub stations: Vec<StationStats>,
    /// Permanent counters that gave no statistics, with the reason.
    pub skipped: Vec<(usize, String)>,
}

impl ContinuousOutput {
    /// Statistics of a station, by station index.
    pub fn get(&self, station: usize) -> Option<&StationStats> {
        self.stations.iter().find(|s| s.station == station)
    }
}

/// Runs the stage for the input's year. A counter without usable days is listed in
/// `skipped` with its reason; the stage as a whole cannot fail.
pub fn run(input: &ContinuousInput, params: &ContinuousParams) -> ContinuousOutput {
    let ids: Vec<usize> = (0..input.stations.stations.len())
        .filter(|&s| input.stations.stations[s].kind == StationKind::Continuous)
        .collect();
    let results: Vec<Result<StationStats, (usize, String)>> = ids
        .par_iter()
        .map(|&s| station_stats(input, s, params).map_err(|e| (s, e)))
        .collect();
    let mut out = ContinuousOutput::default();
    for r in results {
        match r {
            Ok(st) => out.stations.push(st),
            Err(e) => out.skipped.push(e),
        }
    }
    out
}

/// Maps a day's hour slots to local clock hours: slot k of the day is clock hour k, except
/// that on a 25-hour day the last slot is the repeat of hour 23's label, which keeps every
/// (date, hour, repeat) unique. Labels only order and identify hours.
fn clock_label(k: usize) -> (u8, u8) {
    if k < 24 {
        (k as u8, 0)
    } else {
        (23, 1)
    }
}

fn station_stats(
    input: &ContinuousInput,
    s: usize,
    params: &ContinuousParams,
) -> Result<StationStats, String> {
    let (year, filter) = (input.year, input.filter);
    let station = &input.stations.stations[s];
    let oneway = input.network.segments[station.segment].oneway;
    let days: Vec<&DayCounts> = input.counts.days[s]
        .values()
        .filter(|d| d.date.year() == year)
        .collect();
    if days.is_empty() {
        return Err(format!("no records in the study year {year}"));
    }
    let mut two_way = Vec::new();
    let mut dirs: [Vec<DayVolume>; 2] = [Vec::new(), Vec::new()];
    let mut hours = Vec::new();
    let mut count_hours: Vec<CountHour> = Vec::new();
    let mut class_days = Vec::new();
    let mut axles = AxleSample {
        vehicles: 0.0,
        axles: 0.0,
    };
    let mut both_only_hours = 0usize;
    let mut phf_candidates: Vec<(f64, f64)> = Vec::new();
    let mut last_date: Option<NaiveDate> = None;
    let mut peak_shares: Vec<f64> = Vec::new();
    for day in &days {
        let excl = |d: Direction| filter.excluded(s, day.date, d);
        for d in Direction::ALL {
            if let Some(dd) = day.dir(d).filter(|_| !excl(d)) {
                axles.vehicles += dd.vehicles_with_axles as f64;
                axles.axles += dd.axles_with_vehicles as f64;
            }
        }
        for (i, d) in [Direction::Fwd, Direction::Rev].into_iter().enumerate() {
            let only = |x: Direction| x != d || excl(d);
            if let Some(v) = complete_hours(day, true, Measured::Vehicles, &only) {
                dirs[i].push(DayVolume {
                    date: day.date,
                    vehicles: v.iter().map(|h| h.0 as f64).sum(),
                });
            }
        }
        let Some(hs) = complete_hours(day, oneway, Measured::Vehicles, &excl) else {
            continue;
        };
        let total: f64 = hs.iter().map(|h| h.0 as f64).sum();
        two_way.push(DayVolume {
            date: day.date,
            vehicles: total,
        });
        if day.date.weekday().num_days_from_monday() < 5 && total > 0.0 {
            let peak = hs.iter().map(|h| h.0).max().unwrap_or(0) as f64;
            peak_shares.push(peak / total);
        }
        let follows_day = last_date.is_some_and(|p| p.succ_opt() == Some(day.date));
        last_date = Some(day.date);
        let day_classes = complete_classes(day, oneway, &excl);
        let classified = day_classes.is_some();
        for (k, h) in day.day_hours().enumerate() {
            let (total, f, r) = hs[k];
            let (fwd, rev) = match (f, r) {
                (Some(f), Some(r)) => (f as f64, if oneway { None } else { Some(r as f64) }),
                _ => {
                    both_only_hours += 1;
                    (total as f64 / 2.0, Some(total as f64 / 2.0))
                }
            };
            let heavy = classified.then(|| {
                Direction::ALL
                    .iter()
                    .filter(|d| !excl(**d))
                    .filter_map(|d| day.dir(*d))
                    .map(|dd| dd.heavy[h] as f64)
                    .sum::<f64>()
            });
            let (clock_hour, repeat) = clock_label(k);
            hours.push(HourVolume {
                date: day.date,
                clock_hour,
                repeat,
                fwd,
                rev,
                heavy,
            });
            count_hours.push(CountHour {
                date: day.date,
                volume: total as f64,
                follows: k > 0 || follows_day,
            });
            // Peak-hour factor of the heavier direction where its hour came from 15-minute rows.
            let peak_dir = if rev.unwrap_or(0.0) > fwd {
                Direction::Rev
            } else {
                Direction::Fwd
            };
            if let Some(dd) = day.dir(peak_dir) {
                let m = crate::model::counts::hour_mask(h);
                if dd.fine_quarters & m == m && dd.peak_quarter[h] > 0 {
                    phf_candidates.push((
                        total as f64,
                        dd.vehicles[h] as f64 / (4.0 * dd.peak_quarter[h] as f64),
                    ));
                }
            }
        }
        if let Some(c) = day_classes {
            let mut by_class = [0.0; 13];
            for (o, v) in by_class.iter_mut().zip(c) {
                *o = v as f64;
            }
            class_days.push(ClassDay {
                date: day.date,
                by_class,
            });
        }
    }
    if two_way.is_empty() {
        return Err("no complete accepted day in the study year".into());
    }
    let aadt = compute_aadt(year, &two_way, &params.sufficiency).map_err(|e| e.to_string())?;
    let aadt_value = aadt.aashto.unwrap_or(aadt.simple);
    let by_direction = [0, 1].map(|i| {
        (!dirs[i].is_empty())
            .then(|| compute_aadt(year, &dirs[i], &params.sufficiency).ok())
            .flatten()
    });
    let design = design_hour(&hours, aadt_value, params.ranked_hours).ok();
    let distribution = hourly_distribution(&hours).ok();
    let classes = (!class_days.is_empty())
        .then(|| class_aadt(year, &class_days, &params.sufficiency).ok())
        .flatten();
    phf_candidates.sort_by(|a, b| b.0.total_cmp(&a.0));
    let top: Vec<f64> = phf_candidates.iter().take(30).map(|p| p.1).collect();
    let phf = (!top.is_empty()).then(|| top.iter().sum::<f64>() / top.len() as f64);
    let (sampling_cv, day_cv) = cell_sampling_cv(&two_way, aadt_value);
    let aadt_log_sd = (params.counter_cv.powi(2) + sampling_cv.powi(2)).sqrt();
    Ok(StationStats {
        station: s,
        aadt_value,
        aadt_log_sd,
        by_direction,
        design,
        d_measured: both_only_hours * 2 < hours.len(),
        distribution,
        phf,
        classes,
        axles: (axles.axles > 0.0).then_some(axles),
        days_used: two_way.len(),
        day_cv,
        daily_peak_share: (!peak_shares.is_empty())
            .then(|| peak_shares.iter().sum::<f64>() / peak_shares.len() as f64),
        hours: count_hours,
        aadt,
    })
}

/// Relative standard error of an AASHTO AADT from the spread of days within each of the 84
/// day-of-week x month cells, `sqrt(Σ s²_ij / n_ij) / 84 / AADT`, and the day-to-day CV
/// `sqrt(pooled s²) / AADT`. Each cell's variance is the pooled within-cell variance (cells
/// hold at most five days); empty cells count as one-day cells.
fn cell_sampling_cv(days: &[DayVolume], aadt: f64) -> (f64, Option<f64>) {
    let mut cells: [[Vec<f64>; 12]; 7] = Default::default();
    for d in days {
        cells[d.date.weekday().num_days_from_monday() as usize][d.date.month0() as usize]
            .push(d.vehicles);
    }
    let mut vars = Vec::new();
    for row in &cells {
        for c in row {
            if c.len() >= 2 {
                let m = c.iter().sum::<f64>() / c.len() as f64;
                vars.push(c.iter().map(|v| (v - m).powi(2)).sum::<f64>() / (c.len() - 1) as f64);
            }
        }
    }
    if vars.is_empty() || aadt <= 0.0 {
        return (0.05, None);
    }
    let pooled = vars.iter().sum::<f64>() / vars.len() as f64;
    let sum: f64 = cells
        .iter()
        .flatten()
        .map(|c| pooled / c.len().max(1) as f64)
        .sum();
    (sum.sqrt() / 84.0 / aadt, Some(pooled.sqrt() / aadt))
}
