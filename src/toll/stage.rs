//! The toll stage: each toll.csv row against the passages the tool's own statistics imply.
//!
//! A segment with a permanent counter uses the counter's own accepted days ([`CounterDays`]),
//! with its factor profile for the days it lacks; any other segment uses its published AADT
//! distributed over the period with its group's day-of-week-by-month factors
//! ([`FactorProfile`]). Heavy passages use the segment's heavy share.

use std::collections::BTreeMap;

use super::profile::{CounterDay, CounterDays, DailyProfile, FactorProfile};
use super::reconcile::{reconcile_row, ReconciliationRow, TollRow};
use crate::continuous::stage::ContinuousOutput;
use crate::factors::stage::FactorOutput;
use crate::model::{Network, StationList, TollRecord};
use crate::segments::SegmentRow;

/// A row that could be reconciled, or why not.
#[derive(Debug, Clone)]
pub struct TollResult {
    /// The toll.csv record.
    pub record: TollRecord,
    /// The reconciliation, or the reason there is none.
    pub result: Result<ReconciliationRow, String>,
}

fn factor_profile(row: &SegmentRow, factors: &FactorOutput, seg: usize) -> FactorProfile {
    let group = &factors.groups[factors.segment_group[seg]];
    let dow_month = group
        .factors
        .as_ref()
        .map_or([[1.0; 12]; 7], |g| g.dow_month);
    let heavy = row.heavy.as_ref();
    let mut p = FactorProfile::new(
        row.aadt.value,
        row.aadt.lo95,
        row.aadt.hi95,
        heavy.map_or(0.0, |h| h.value),
        dow_month,
    );
    if let Some(h) = heavy {
        p.heavy_share_lo95 = h.lo95;
        p.heavy_share_hi95 = h.hi95;
    }
    p.heavy_dow_month = group.heavy_factors.as_ref().map(|g| g.dow_month);
    p
}

/// What the stage reads.
#[derive(Debug, Clone, Copy)]
pub struct TollInput<'a> {
    /// The network (segment ids).
    pub network: &'a Network,
    /// Every station (to find a toll segment's own permanent counter).
    pub stations: &'a StationList,
    /// The billed rows.
    pub toll: &'a [TollRecord],
    /// The published segment rows (AADT, heavy share).
    pub segments: &'a [SegmentRow],
    /// The permanent counters' statistics (their accepted days).
    pub continuous: &'a ContinuousOutput,
    /// The factor groups (a segment's day-of-week and month factors).
    pub factors: &'a FactorOutput,
}

/// Reconciles every toll row. The reconciliation has no settings of its own, and a row
/// always gets a verdict, so the stage as a whole cannot fail.
pub fn run(input: &TollInput) -> Vec<TollResult> {
    let (data, toll, rows, cont, factors) = (
        input,
        input.toll,
        input.segments,
        input.continuous,
        input.factors,
    );
    let mut profiles: BTreeMap<usize, Box<dyn DailyProfile>> = BTreeMap::new();
    for t in toll {
        profiles.entry(t.segment).or_insert_with(|| {
            let fp = factor_profile(&rows[t.segment], factors, t.segment);
            let counter = cont
                .stations
                .iter()
                .find(|s| data.stations.stations[s.station].segment == t.segment);
            match counter {
                Some(s) => {
                    let mut days: BTreeMap<chrono::NaiveDate, CounterDay> = BTreeMap::new();
                    for h in &s.hours {
                        days.entry(h.date)
                            .or_insert(CounterDay {
                                total: 0.0,
                                heavy: None,
                            })
                            .total += h.volume;
                    }
                    Box::new(CounterDays::new(days, fp))
                }
                None => Box::new(fp),
            }
        });
    }
    toll.iter()
        .map(|t| {
            let row = TollRow {
                segment: data.network.segments[t.segment].id.clone(),
                from_date: t.from_date,
                to_date: t.to_date,
                group: t.group,
                billed_vehicles: t.billed_vehicles,
            };
            let p = profiles
                .get(&t.segment)
                .expect("a profile per toll segment");
            TollResult {
                record: t.clone(),
                result: reconcile_row(&row, p.as_ref()).map_err(|e| e.to_string()),
            }
        })
        .collect()
}
