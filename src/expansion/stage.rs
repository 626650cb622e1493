//! The short-count stage: every short count on the network to an AADT of the study year.
//!
//! A station's records are split into counts by calendar year; each count's hours (two-way,
//! quality-control rejections left out) run from its first to its last counted hour, isolated
//! missing hours are filled and the hours are cut into 24-hour periods ([`super::gaps`]), which
//! are expanded with the factors of its segment's group ([`super::expand_for_year`]). A count
//! with no usable 24 hours, or a short station with no count at all, is listed in
//! [`ExpansionOutput::unexpanded`] with the reason. Axle counts use the group's
//! axle-correction factor. Counts on one segment are combined by inverse-variance weights.
//! Heavy shares come from the count itself where it is classified (heavy volumes expanded with
//! the group's heavy-vehicle factors), else from the nearest source the spatial stage finds.

use std::collections::BTreeMap;

use chrono::{Datelike, NaiveDate};

use super::calibration::Calibration;
use super::gaps::{self, GapRule, Slot};
use super::{
    combine, expand_for_year, Expanded, ExpansionParams, GroupFactors, Growth, Measure, ShortCount,
};
use crate::factors::stage::FactorOutput;
use crate::model::views::{complete_classes, direction_hour, two_way_hour, DayFilter, Measured};
use crate::model::{CountStore, Direction, Network, StationKind, StationList};

/// Coefficient of variation given to the factor of an unfactored count (a study without any
/// usable permanent counter): seasonal and weekday swings of ±25 % are common (common practice).
pub const UNFACTORED_CV: f64 = 0.25;

/// One expanded short count.
#[derive(Debug, Clone)]
pub struct ExpandedCount {
    /// Station index.
    pub station: usize,
    /// Segment index.
    pub segment: usize,
    /// Calendar year of the count.
    pub year: i32,
    /// First and last local date.
    pub first: NaiveDate,
    /// Last local date.
    pub last: NaiveDate,
    /// Hours behind the 24-hour periods used (24 per period, filled hours included).
    pub hours: usize,
    /// Of those, hours filled rather than counted.
    pub filled_hours: usize,
    /// Of the filled hours, those filled from the count's own other days.
    pub filled_from_own_days: usize,
    /// Two-way hours counted (used in a period or not).
    pub counted_hours: usize,
    /// Of the hours used, those whose two-way volume was estimated from one direction.
    pub one_direction_hours: usize,
    /// The count's daily share of `fwd` in the two-way volume, where both directions were
    /// counted over every clock hour.
    pub fwd_share: Option<f64>,
    /// `vehicles` or `axles`.
    pub measure: &'static str,
    /// Classified.
    pub classified: bool,
    /// Factor group used.
    pub group: usize,
    /// How the group was chosen: `table` or `hourly_profile`.
    pub assigned_by: &'static str,
    /// The expansion (log sd already scaled by the calibration).
    pub expanded: Expanded,
    /// The 24-hour periods that were expanded.
    pub periods: Vec<super::CountPeriod>,
    /// Heavy share from the count's own classes (expanded), when classified.
    pub heavy_share: Option<f64>,
    /// Single-unit share, when classified.
    pub single_unit_share: Option<f64>,
    /// Combination share, when classified.
    pub combination_share: Option<f64>,
    /// Mean share of a complete working day's volume in its busiest hour, over the count's
    /// complete Monday-Friday days.
    pub daily_peak_share: Option<f64>,
    /// Share of that peak hour in the heavier direction (directional counts only).
    pub peak_d: Option<f64>,
    /// Complete working days behind `daily_peak_share`.
    pub peak_days: usize,
}

/// A segment's short-count AADT.
#[derive(Debug, Clone)]
pub struct SegmentCount {
    /// AADT, vehicles/day.
    pub aadt: f64,
    /// Standard deviation of ln AADT (calibrated).
    pub log_sd: f64,
    /// Indices into [`ExpansionOutput::counts`].
    pub counts: Vec<usize>,
}

/// What the stage produced.
#[derive(Debug, Clone, Default)]
pub struct ExpansionOutput {
    /// Every expanded count.
    pub counts: Vec<ExpandedCount>,
    /// Counts that could not be expanded, and short stations without any count.
    pub unexpanded: Vec<Unexpanded>,
    /// Per segment with at least one expanded count.
    pub segments: BTreeMap<usize, SegmentCount>,
    /// Short counts handled, and those expanded with a substitute for the group's own
    /// factors or not expanded at all (their segment then takes the spatial estimate).
    pub diagnostics: crate::model::StageDiagnostics,
}

/// A short count (or a short station) that was not expanded.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Unexpanded {
    /// Station index.
    pub station: usize,
    /// Calendar year of the count; `None` for a station without any count.
    pub year: Option<i32>,
    /// First and last local date of the count.
    pub dates: Option<(NaiveDate, NaiveDate)>,
    /// Two-way hours counted.
    pub counted_hours: usize,
    /// Why it was not expanded.
    pub reason: String,
}

/// What the stage reads.
#[derive(Clone, Copy)]
pub struct ExpansionInput<'a> {
    /// The network (one-way segments, segment of each count).
    pub network: &'a Network,
    /// Every station; the stage takes the `short` ones.
    pub stations: &'a StationList,
    /// The folded counts.
    pub counts: &'a CountStore,
    /// The study year every count is expanded to.
    pub year: i32,
    /// Direction-days quality control rejected.
    pub filter: &'a dyn DayFilter,
    /// The factor groups and their factors.
    pub factors: &'a FactorOutput,
    /// The calibration experiment (the interval of a count of each length).
    pub calibration: &'a Calibration,
}

/// Runs the stage. A count that cannot be expanded is listed in `unexpanded` with its
/// reason; the stage as a whole cannot fail.
pub fn run(input: &ExpansionInput, params: &ExpansionParams) -> ExpansionOutput {
    let (data, year, filter, factors, calibration) = (
        input,
        input.year,
        input.filter,
        input.factors,
        input.calibration,
    );
    let mut out = ExpansionOutput::default();
    let rule = GapRule {
        max_gap_hours: params.max_gap_hours,
        max_filled_per_period: params.max_filled_hours_per_period,
    };
    for (s, station) in data.stations.stations.iter().enumerate() {
        if station.kind != StationKind::Short {
            continue;
        }
        let seg = station.segment;
        let oneway = data.network.segments[seg].oneway;
        let mut by_year: BTreeMap<i32, Vec<&crate::model::DayCounts>> = BTreeMap::new();
        for d in data.counts.days[s].values() {
            by_year.entry(d.date.year()).or_default().push(d);
        }
        if by_year.is_empty() {
            out.unexpanded.push(Unexpanded {
                station: s,
                year: None,
                dates: None,
                counted_hours: 0,
                reason: "no count row of the station was read (see rejected_rows.csv)".into(),
            });
            continue;
        }
        for (cy, days) in by_year {
            let first = days.first().map(|d| d.date).expect("a year has days");
            let last = days.last().map(|d| d.date).expect("a year has days");
            // Runs of consecutive local dates, each a row of clock-hour slots.
            let mut runs: Vec<Vec<Slot>> = Vec::new();
            let mut diagnosis = Diagnosis::default();
            let mut measure = Measured::Vehicles;
            if days
                .iter()
                .all(|d| crate::model::views::measure_of(d) == Measured::Axles)
            {
                measure = Measured::Axles;
            }
            let mut prev: Option<NaiveDate> = None;
            let mut profile = [0.0f64; 24];
            let mut profile_hours = [0usize; 24];
            let mut class_days: Vec<(NaiveDate, [u64; 13])> = Vec::new();
            let mut peak_shares: Vec<f64> = Vec::new();
            let mut peak_ds: Vec<f64> = Vec::new();
            let mut classified = false;
            let shares =
                DirectionShares::of(&days, oneway, measure, |d, x| filter.excluded(s, d, x));
            for d in &days {
                let excl = |x: Direction| filter.excluded(s, d.date, x);
                if prev.and_then(|p| p.succ_opt()) != Some(d.date) {
                    runs.push(Vec::new());
                }
                prev = Some(d.date);
                let run = runs.last_mut().expect("a run was started");
                diagnosis.look_at(d, oneway, &excl);
                let mut complete = true;
                let weekday = d.date.weekday().num_days_from_monday() < 5;
                let mut day_hours: Vec<(u64, Option<u64>, Option<u64>)> = Vec::new();
                for (k, h) in d.day_hours().enumerate() {
                    let hour = two_way_hour(d, h, oneway, measure, &excl);
                    match hour {
                        Some((v, f, r)) => {
                            day_hours.push((v, f, r));
                            if weekday && k < 24 && d.hours_in_day() == 24 {
                                profile[k] += v as f64;
                                profile_hours[k] += 1;
                            }
                        }
                        None => complete = false,
                    }
                    let single = if hour.is_none() && !oneway {
                        shares.two_way(d, h, k, measure, &excl)
                    } else {
                        None
                    };
                    run.push(Slot {
                        date: d.date,
                        hour: k,
                        volume: hour.map(|x| x.0 as f64).or(single),
                        one_direction: single.is_some(),
                    });
                }
                let total: u64 = day_hours.iter().map(|x| x.0).sum();
                if complete && weekday && total > 0 {
                    let peak = day_hours
                        .iter()
                        .max_by_key(|x| x.0)
                        .expect("a complete day has hours");
                    peak_shares.push(peak.0 as f64 / total as f64);
                    if let (Some(f), Some(r)) = (peak.1, peak.2) {
                        if peak.0 > 0 && !oneway {
                            peak_ds.push(f.max(r) as f64 / peak.0 as f64);
                        }
                    }
                }
                if let Some(c) = complete_classes(d, oneway, &excl) {
                    classified = true;
                    class_days.push((d.date, c));
                }
            }
            // Assignment by the count's own weekday hourly profile (NCHRP Research Report
            // 1124 assigns short counts to groups by their temporal characteristics): the
            // table's group is kept unless another group's profile fits clearly better.
            let mut group_index = factors.segment_group[seg];
            let mut assigned_by = "table";
            if params.profile_switch_ratio > 0.0 && profile_hours.iter().all(|&n| n > 0) {
                let per_hour: Vec<f64> = (0..24)
                    .map(|k| profile[k] / profile_hours[k] as f64)
                    .collect();
                let total: f64 = per_hour.iter().sum();
                if total > 0.0 {
                    let shares: Vec<f64> = per_hour.iter().map(|v| v / total).collect();
                    let dist = |g: &[f64; 24]| -> f64 {
                        shares
                            .iter()
                            .zip(g)
                            .map(|(p, q)| (p - q).powi(2) / q.max(1e-4))
                            .sum()
                    };
                    let own = factors.groups[group_index]
                        .weekday_profile
                        .as_ref()
                        .map(dist);
                    let best = factors
                        .groups
                        .iter()
                        .enumerate()
                        .filter(|(_, g)| {
                            g.factors.is_some() && g.source != "borrowed from all counters"
                        })
                        .filter_map(|(i, g)| g.weekday_profile.as_ref().map(|p| (i, dist(p))))
                        .min_by(|a, b| a.1.total_cmp(&b.1));
                    if let (Some(own), Some((bi, bd))) = (own, best) {
                        if bi != group_index && bd < params.profile_switch_ratio * own {
                            group_index = bi;
                            assigned_by = "hourly_profile";
                        }
                    }
                }
            }
            let group = &factors.groups[group_index];
            let gapped = gaps::periods_of(&runs, group.weekday_profile.as_ref(), rule);
            let not_expanded = |reason: String| Unexpanded {
                station: s,
                year: Some(cy),
                dates: Some((first, last)),
                counted_hours: gapped.counted_hours,
                reason,
            };
            if gapped.periods.is_empty() {
                out.unexpanded
                    .push(not_expanded(diagnosis.reason(&gapped, rule, oneway)));
                continue;
            }
            // With no usable permanent counter anywhere, counts are published unfactored
            // (factor 1) with a wide factor CV, and the table says so.
            let unfactored;
            let gf = match group.factors.as_ref() {
                Some(gf) => gf,
                None if factors.groups.iter().all(|g| g.factors.is_none()) => {
                    unfactored = GroupFactors::flat(Some(UNFACTORED_CV), 1);
                    &unfactored
                }
                None => {
                    out.unexpanded.push(not_expanded(
                        "no permanent counter gives factors for its group".into(),
                    ));
                    continue;
                }
            };
            // Heavy volumes expanded with the heavy-vehicle factors, totals with the group's.
            let hf = group.heavy_factors.as_ref().unwrap_or(gf);
            let mut heavy_days = (0.0f64, 0.0f64, 0.0f64, 0.0f64); // heavy, total, su, cu
            for (date, c) in &class_days {
                let total: f64 = c.iter().map(|&x| x as f64).sum();
                let heavy: f64 = c[3..].iter().map(|&x| x as f64).sum();
                let su: f64 = c[3..7].iter().map(|&x| x as f64).sum();
                heavy_days.0 += heavy * hf.factor(*date);
                heavy_days.1 += total * gf.factor(*date);
                heavy_days.2 += su;
                heavy_days.3 += heavy - su;
            }
            let measure_kind = match measure {
                Measured::Vehicles => Measure::Vehicles,
                Measured::Axles => match group.acf.or_else(|| network_acf(factors)) {
                    Some((acf, cv)) => Measure::Axles { acf, cv },
                    None => {
                        out.unexpanded.push(not_expanded("axle count, but no classifying counter gives an axle-correction factor".into()));
                        continue;
                    }
                },
            };
            let gfac = group.growth.factor(cy, year);
            let growth = Growth {
                factor: gfac.factor,
                log_sd: (gfac.hi95 / gfac.lo95).ln() / (2.0 * super::Z95),
            };
            let hours = 24 * gapped.periods.len();
            let count = ShortCount {
                periods: gapped.periods.clone(),
                measure: measure_kind,
                year: cy,
            };
            let periods = count.periods.clone();
            match expand_for_year(&count, gf, growth, year, params) {
                Ok(mut e) => {
                    let c = params
                        .interval_scale
                        .unwrap_or_else(|| calibration.scale_for(hours as u32));
                    e.log_sd *= c;
                    let (hs, sus, cus) = if classified && heavy_days.1 > 0.0 {
                        let h = (heavy_days.0 / heavy_days.1).clamp(0.0, 1.0);
                        let su_frac = heavy_days.2 / (heavy_days.2 + heavy_days.3).max(1e-9);
                        (Some(h), Some(h * su_frac), Some(h * (1.0 - su_frac)))
                    } else {
                        (None, None, None)
                    };
                    out.counts.push(ExpandedCount {
                        station: s,
                        segment: seg,
                        year: cy,
                        first,
                        last,
                        hours,
                        filled_hours: gapped.filled_hours,
                        filled_from_own_days: gapped.filled_from_own_days,
                        counted_hours: gapped.counted_hours,
                        one_direction_hours: gapped.one_direction_hours,
                        fwd_share: shares.daily_fwd_share(),
                        measure: if matches!(measure, Measured::Axles) {
                            "axles"
                        } else {
                            "vehicles"
                        },
                        classified,
                        group: group_index,
                        assigned_by,
                        expanded: e,
                        periods,
                        heavy_share: hs,
                        single_unit_share: sus,
                        combination_share: cus,
                        daily_peak_share: mean(&peak_shares),
                        peak_d: mean(&peak_ds),
                        peak_days: peak_shares.len(),
                    });
                }
                Err(e) => out.unexpanded.push(not_expanded(e.to_string())),
            }
        }
    }
    let mut per_seg: BTreeMap<usize, Vec<usize>> = BTreeMap::new();
    for (i, c) in out.counts.iter().enumerate() {
        per_seg.entry(c.segment).or_default().push(i);
    }
    for (seg, idx) in per_seg {
        let ex: Vec<Expanded> = idx
            .iter()
            .map(|&i| out.counts[i].expanded.clone())
            .collect();
        if let Some((aadt, log_sd)) = combine(&ex) {
            out.segments.insert(
                seg,
                SegmentCount {
                    aadt,
                    log_sd,
                    counts: idx,
                },
            );
        }
    }
    out.diagnostics = diagnostics(&out, factors);
    out
}

/// The stage's diagnostics: one unit per short count (and per short station without any).
fn diagnostics(out: &ExpansionOutput, factors: &FactorOutput) -> crate::model::StageDiagnostics {
    let mut d = crate::model::StageDiagnostics::new("expansion", "short counts");
    let unfactored = factors.groups.iter().all(|g| g.factors.is_none());
    for c in &out.counts {
        let g = &factors.groups[c.group];
        d.record(
            [
                (unfactored).then_some(("unfactored: no permanent counter gives factors", true)),
                (c.measure == "axles" && g.acf.is_none()).then_some((
                    "axle correction from the network mean (none in the group)",
                    true,
                )),
                // TMG pooling of a group without counters of its own is the method, not a
                // fallback; it is reported.
                g.source
                    .starts_with("borrowed")
                    .then_some(("factors borrowed from other groups", false)),
            ]
            .into_iter()
            .flatten(),
        );
    }
    for _ in &out.unexpanded {
        d.record([("not expanded: the segment takes the spatial estimate", true)]);
    }
    d
}

/// The share of each direction in the two-way volume of a per-direction count, by clock hour,
/// from the count's own hours where both directions were counted and accepted.
///
/// An hour with only one direction gets the two-way volume `v_d / share_d(k)`. The share of
/// clock hour *k* is taken when the count has at least [`MIN_SHARE_VOLUME`] vehicles at that
/// hour in both directions together, else the share over all its two-direction hours, else
/// one half (a two-way road carries close to half its daily traffic each way; common
/// practice). Shares are bounded to 0.1..0.9 so that a near-empty direction never multiplies
/// the volume more than tenfold.
struct DirectionShares {
    /// (fwd, rev) volume per clock hour (0..=24) over the two-direction hours.
    by_hour: [(f64, f64); 25],
    /// Two-direction hours behind each clock hour.
    hours: [usize; 25],
    /// `fwd` share over all two-direction hours (the fallback of an hour without enough).
    overall: f64,
}

/// Vehicles behind an hourly direction share (both directions together).
const MIN_SHARE_VOLUME: f64 = 50.0;

impl DirectionShares {
    fn of(
        days: &[&crate::model::DayCounts],
        oneway: bool,
        m: Measured,
        excluded: impl Fn(NaiveDate, Direction) -> bool,
    ) -> DirectionShares {
        let mut by_hour = [(0.0, 0.0); 25];
        let mut hours = [0; 25];
        if !oneway {
            for d in days {
                let excl = |x: Direction| excluded(d.date, x);
                for (k, h) in d.day_hours().enumerate() {
                    if let Some((_, Some(f), Some(r))) = two_way_hour(d, h, false, m, &excl) {
                        by_hour[k.min(24)].0 += f as f64;
                        by_hour[k.min(24)].1 += r as f64;
                        hours[k.min(24)] += 1;
                    }
                }
            }
        }
        let (f, r) = by_hour
            .iter()
            .fold((0.0, 0.0), |a, b| (a.0 + b.0, a.1 + b.1));
        let overall = if f + r >= MIN_SHARE_VOLUME {
            f / (f + r)
        } else {
            0.5
        };
        DirectionShares {
            by_hour,
            hours,
            overall,
        }
    }

    /// The count's daily share of `fwd`: the mean fwd volume of each clock hour 0..23 over the
    /// mean two-way volume of each, so that a count with more morning than evening hours does
    /// not lean towards the morning peak's direction. `None` without every clock hour in both
    /// directions or with fewer than [`MIN_SHARE_VOLUME`] vehicles.
    fn daily_fwd_share(&self) -> Option<f64> {
        let (mut f, mut t, mut n) = (0.0, 0.0, 0.0);
        for k in 0..24 {
            let c = self.hours[k];
            if c == 0 {
                return None;
            }
            let (a, b) = self.by_hour[k];
            f += a / c as f64;
            t += (a + b) / c as f64;
            n += a + b;
        }
        (n >= MIN_SHARE_VOLUME && t > 0.0).then(|| f / t)
    }

    /// Share of `fwd` at clock hour `k` (see the type's docs).
    fn fwd_share(&self, k: usize) -> f64 {
        let (f, r) = self.by_hour[k.min(24)];
        let share = if f + r >= MIN_SHARE_VOLUME {
            f / (f + r)
        } else {
            self.overall
        };
        share.clamp(0.1, 0.9)
    }

    /// Two-way volume of hour slot `h` (clock hour `k`) from the one direction counted.
    fn two_way(
        &self,
        day: &crate::model::DayCounts,
        h: usize,
        k: usize,
        m: Measured,
        excluded: &dyn Fn(Direction) -> bool,
    ) -> Option<f64> {
        let (d, v) = direction_hour(day, h, m, excluded)?;
        let fwd = self.fwd_share(k);
        let share = if d == Direction::Fwd { fwd } else { 1.0 - fwd };
        Some(v as f64 / share)
    }
}

/// What went on in a count, to say why it gave no 24-hour period.
#[derive(Debug, Default)]
struct Diagnosis {
    /// Direction-days with data that quality control rejected.
    rejected: usize,
    /// Days with one direction only (no `both`) on a two-way segment.
    one_direction_days: usize,
}

impl Diagnosis {
    fn look_at(
        &mut self,
        d: &crate::model::DayCounts,
        oneway: bool,
        excl: &dyn Fn(Direction) -> bool,
    ) {
        self.rejected += Direction::ALL
            .iter()
            .filter(|&&x| d.dir(x).is_some() && excl(x))
            .count();
        let has = |x: Direction| d.dir(x).is_some();
        if !oneway && !has(Direction::Both) && has(Direction::Fwd) != has(Direction::Rev) {
            self.one_direction_days += 1;
        }
    }

    fn reason(&self, g: &gaps::GapOutcome, rule: GapRule, oneway: bool) -> String {
        let qc = if self.rejected > 0 {
            format!(
                "; quality control rejected {} direction-day(s), see qc_log.csv",
                self.rejected
            )
        } else {
            String::new()
        };
        if g.counted_hours == 0 {
            if self.one_direction_days > 0 && !oneway {
                return format!("only one direction counted on a two-way segment{qc}");
            }
            if self.rejected > 0 {
                return format!(
                    "quality control rejected {} direction-day(s), see qc_log.csv; no two-way hour left",
                    self.rejected
                );
            }
            return "no usable hour in the count".into();
        }
        if g.longest_run >= 24 {
            return format!(
                "no 24-hour period with at most {} filled hours ({} hours counted){qc}",
                rule.max_filled_per_period, g.counted_hours
            );
        }
        format!(
            "no 24 consecutive usable hours: {} hours counted, longest run {} h after filling gaps of at most {} h{qc}",
            g.counted_hours, g.longest_run, rule.max_gap_hours
        )
    }
}

fn mean(v: &[f64]) -> Option<f64> {
    (!v.is_empty()).then(|| v.iter().sum::<f64>() / v.len() as f64)
}

/// The mean axle-correction factor over every group that has one.
fn network_acf(factors: &FactorOutput) -> Option<(f64, f64)> {
    let v: Vec<(f64, f64)> = factors.groups.iter().filter_map(|g| g.acf).collect();
    (!v.is_empty()).then(|| {
        let n = v.len() as f64;
        (
            v.iter().map(|x| x.0).sum::<f64>() / n,
            v.iter().map(|x| x.1).fold(0.0, f64::max).max(0.05),
        )
    })
}
