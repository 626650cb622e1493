//! The toll stage: each toll.csv row against the passages the tool's own statistics imply.
//!
//! A segment with a permanent counter uses the counter's own complete days that passed
//! quality control ([`CounterDays`]): all vehicles from its vehicle figures, heavy (classes
//! 4–13) and light (1–3) from its own class counts where the whole day is classified; the
//! days it lacks come from its factor profile. Any other segment uses its published AADT
//! distributed over the period with its group's day-of-week-by-month factors
//! ([`FactorProfile`]); heavy vehicles use the heavy share of AADT and the group's own heavy
//! factors. A factored day carries the group's between-counter factor spread for that cell,
//! as the error of predicting one more counter from the group (`cv · √(1 + 1/n)`, `n`
//! counters behind the cell), times the out-of-sample scale of [`factor_spread_scale`].

use std::collections::BTreeMap;

use super::profile::{CounterDay, CounterDays, DailyProfile, FactorProfile, Z95};
use super::reconcile::{reconcile_row, ReconciliationRow, TollParams, TollRow};
use crate::continuous::stage::ContinuousOutput;
use crate::factors::stage::FactorOutput;
use crate::model::views::{complete_classes, complete_total, DayFilter, Measured};
use crate::model::{CountStore, Network, StationList, TollRecord};
use crate::segments::{Basis, SegmentRow};

/// A row that could be reconciled, or why not.
#[derive(Debug, Clone)]
pub struct TollResult {
    /// The toll.csv record.
    pub record: TollRecord,
    /// The reconciliation, or the reason there is none.
    pub result: Result<ReconciliationRow, String>,
    /// What the segment's figure rests on (own counter, short count, nothing).
    pub basis: Basis,
    /// What would make an inconclusive row conclusive; `None` for a conclusive row.
    pub advice: Option<&'static str>,
}

/// What would narrow the interval of an inconclusive row, from what the segment has.
fn advice(
    basis: Basis,
    classifies: bool,
    group: super::VehicleGroup,
    row: &ReconciliationRow,
) -> Option<&'static str> {
    if row.verdict != super::Verdict::Inconclusive {
        return None;
    }
    Some(match basis {
        Basis::Continuous if !classifies && group != super::VehicleGroup::All => {
            "a classifying counter on the segment (the group split rests on the heavy share)"
        }
        Basis::Continuous if row.factored_days > 0 => {
            "fewer missing counter days in the period (the missing days are factored)"
        }
        Basis::Continuous => "a counter calibration check (the counter's own error dominates)",
        Basis::ShortCount => {
            "a classifying permanent counter on the segment, or a count over the whole billed period"
        }
        Basis::Estimated => {
            "a count on the segment: a classifying permanent counter for monthly audits"
        }
    })
}

/// Log-sd of one cell's factor for a segment outside the counters behind it:
/// `cv · √(1 + 1/n) · scale`, the between-counter spread as a prediction error; the default
/// factor log-sd where the group has fewer than two counters behind the cell.
fn cell_log_sd(g: &crate::factors::GroupFactors, i: usize, j: usize, scale: f64) -> f64 {
    match g.dow_month_cv[i][j] {
        Some(cv) if g.stations >= 2 => cv * (1.0 + 1.0 / g.stations as f64).sqrt() * scale.max(1.0),
        _ => super::DEFAULT_FACTOR_LOG_SD,
    }
}

/// Out-of-sample scale of the factor spread, as the short-count intervals are calibrated
/// (see `expansion::calibration`): every counter of a group with at least three is left out
/// in turn, its own monthly factor is predicted by the mean of the others', and
/// `z = |ln(own / mean)| / (1.96 · s)` with `s` the modelled prediction log-sd of that month
/// (the root mean square over weekdays of `cell_log_sd` at scale 1); the scale is the 95th
/// percentile of `z` over all trials, never below 1, so that `exp(±1.96 · scale · s)` covers
/// 95 % of held-out counters' months. 1 when there are no trials.
pub fn factor_spread_scale(factors: &FactorOutput) -> f64 {
    let mut z = Vec::new();
    for (g, group) in factors.groups.iter().enumerate() {
        let Some(gf) = group.factors.as_ref() else {
            continue;
        };
        let members: Vec<&[f64; 12]> = factors
            .station_groups
            .iter()
            .filter(|s| s.group == g)
            .map(|s| &s.profile.monthly)
            .collect();
        let n = members.len();
        if n < 3 {
            continue;
        }
        for (k, own) in members.iter().enumerate() {
            for m in 0..12 {
                let others: Vec<f64> = (0..n)
                    .filter(|&o| o != k && members[o][m] > 0.0)
                    .map(|o| members[o][m].ln())
                    .collect();
                let mean = others.iter().sum::<f64>() / others.len().max(1) as f64;
                let s = ((0..7)
                    .map(|i| cell_log_sd(gf, i, m, 1.0).powi(2))
                    .sum::<f64>()
                    / 7.0)
                    .sqrt();
                if s > 0.0 && own[m] > 0.0 && !others.is_empty() {
                    z.push((own[m].ln() - mean).abs() / (Z95 * s));
                }
            }
        }
    }
    if z.is_empty() {
        return 1.0;
    }
    z.sort_by(f64::total_cmp);
    z[((z.len() as f64 * 0.95).ceil() as usize).clamp(1, z.len()) - 1].max(1.0)
}

fn factor_profile(
    row: &SegmentRow,
    factors: &FactorOutput,
    seg: usize,
    scale: f64,
) -> FactorProfile {
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
    if let Some(g) = group.factors.as_ref() {
        let mut cells = [[0.0; 12]; 7];
        for (i, r) in cells.iter_mut().enumerate() {
            for (j, c) in r.iter_mut().enumerate() {
                *c = cell_log_sd(g, i, j, scale);
            }
        }
        p.cell_log_sd = Some(cells);
    }
    if let Some(g) = group.heavy_factors.as_ref() {
        let mut cells = [[0.0; 12]; 7];
        for (i, r) in cells.iter_mut().enumerate() {
            for (j, c) in r.iter_mut().enumerate() {
                *c = cell_log_sd(g, i, j, scale);
            }
        }
        p.heavy_cell_log_sd = Some(cells);
    }
    p
}

/// The counter's complete, accepted days of `station` on a segment (`oneway`): all vehicles
/// from its vehicle figures; heavy from its class counts (classes 4–13, the contract's
/// grouping) where every hour of the day is classified.
pub fn counter_days(
    counts: &CountStore,
    filter: &dyn DayFilter,
    station: usize,
    oneway: bool,
) -> BTreeMap<chrono::NaiveDate, CounterDay> {
    let mut out = BTreeMap::new();
    for day in counts.days[station].values() {
        let excl = |d| filter.excluded(station, day.date, d);
        let Some(total) = complete_total(day, oneway, Measured::Vehicles, &excl) else {
            continue;
        };
        let heavy = complete_classes(day, oneway, &excl).map(|c| c[3..].iter().sum::<u64>() as f64);
        out.insert(
            day.date,
            CounterDay {
                total: total as f64,
                heavy,
            },
        );
    }
    out
}

/// What the stage reads.
#[derive(Clone, Copy)]
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
    /// The folded counts (a counter's own days and classes).
    pub counts: &'a CountStore,
    /// Quality control's rejected direction-days.
    pub filter: &'a dyn DayFilter,
}

/// Reconciles every toll row. A row always gets a verdict, so the stage as a whole cannot
/// fail.
pub fn run(input: &TollInput, params: &TollParams) -> Vec<TollResult> {
    let (data, toll, rows, cont, factors) = (
        input,
        input.toll,
        input.segments,
        input.continuous,
        input.factors,
    );
    let scale = factor_spread_scale(factors);
    let mut profiles: BTreeMap<usize, Box<dyn DailyProfile>> = BTreeMap::new();
    let mut classifies: BTreeMap<usize, bool> = BTreeMap::new();
    for t in toll {
        profiles.entry(t.segment).or_insert_with(|| {
            let fp = factor_profile(&rows[t.segment], factors, t.segment, scale);
            let counter = cont
                .stations
                .iter()
                .find(|s| data.stations.stations[s.station].segment == t.segment);
            match counter {
                Some(s) => {
                    let oneway = data.network.segments[t.segment].oneway;
                    let days = counter_days(data.counts, data.filter, s.station, oneway);
                    classifies.insert(t.segment, days.values().any(|d| d.heavy.is_some()));
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
            let basis = rows[t.segment].basis;
            let result = reconcile_row(&row, p.as_ref(), params).map_err(|e| e.to_string());
            let cl = classifies.get(&t.segment).copied().unwrap_or(false);
            TollResult {
                record: t.clone(),
                advice: result
                    .as_ref()
                    .ok()
                    .and_then(|r| advice(basis, cl, t.group, r)),
                result,
                basis,
            }
        })
        .collect()
}
