//! Quality control of short counts against references from outside the count.
//!
//! # Method
//! A count of one to three days has no typical profile of its own (see the station rules in
//! [`super`]), so a whole day of zeros, a spike over several hours or a flat run has nothing
//! to stand out against. Four references stand in:
//!
//! 1. **The permanent counters of the run** (reference a). From the accepted complete
//!    vehicle days of every permanent counter (after its own quality control) typical
//!    profiles are built per direction and two-way, as for the counter itself
//!    ([`ProfileSet`]: weekday, weekday group, working or weekend days). The candidates of a
//!    short count are the counters on segments of the same broad functional group (1-2, 3-4,
//!    5-7) and area; with fewer than [`QcParams::short_reference_min_stations`], the same broad
//!    group; then every permanent counter. For each day of the count the candidate whose
//!    hourly shape fits best (chi-square) is taken, fwd and rev jointly (the counter and its
//!    orientation), so the morning and evening peaks of a commuter road are matched to a real
//!    commuter counter's two directions. The reference is scaled to the count's level (the
//!    median of the robust levels of its other days, its other direction and, from history,
//!    the segment's AADT; the day itself counts only when it carries traffic), so that a dead
//!    day cannot set its own expectation.
//! 2. Against that reference, on every run of fully covered hours of each day of at least
//!    [`QcParams::short_min_hours`] (a missed hour splits a day in two, and a fault may sit
//!    in either part; partial first and last days too, since expansion uses their hours):
//!    `zero_run`, `spike`, `flat_run` on every run, `level_shift` on the longest, the
//!    permanent counters' rules, with [`QcParams::short_shape_noise_share`] for the extra
//!    misfit of another road's shape and [`QcParams::short_level_shift_min_z`] /
//!    [`QcParams::short_level_shift_min_log_ratio`] for level steps. Zero runs, spikes and
//!    flat runs reject; a level step rejects when its off side holds
//!    [`QcParams::level_shift_min_off_share`] of the day, else it is flagged (an event, as on
//!    permanent counters). On a day of the `[qc] holidays` calendar (a holiday or a travel
//!    day around one) every day type's profile may be the reference, and a level step or a
//!    spike is flagged, never rejected (holiday eves have their own peaks).
//! 3. **The count's other direction and other days** (references b and c):
//!    `swapped_directions` compares a working day's fwd share, clock hour by clock hour, with
//!    the fwd share of the count's other working days at the same hours, and rejects the day
//!    only when those days hold at least twice its hours (else either may be the swapped
//!    one: flagged); `count_days` flags a day (complete or partial) whose total over its
//!    hours differs from the mean of the count's other days of its kind (working or weekend)
//!    at the same clock hours by more than [`QcParams::short_day_max_change`] (a level step
//!    whose off side is most of a partial day has no step inside the day to find).
//! 4. **The segment's history** (reference d): `history_level` flags the count's complete
//!    days when their mean two-way total is beyond [`QcParams::short_history_max_ratio`] of
//!    the latest published AADT of the segment either way (a loose check: season, weekday
//!    and growth are not taken out).
//!
//! Axle-only counts are tested on axle hits / 2 (most vehicles have two axles), so that
//! counting noise is close to Poisson for the rules; the reference shapes are vehicle shapes.
//! A direction-day that the station rules already rejected is not tested again.
//!
//! # Units
//! Vehicles (or axle hits / 2) per clock hour; shares 0..1; misfits in chi-square units.
//!
//! # References
//! * FHWA, Traffic Monitoring Guide (2016, 2022), ch. 3: short-count validation against the
//!   patterns of the factor group and the site's history (from memory).
//! * Thresholds: common practice, see [`QcParams`].

use std::collections::{BTreeMap, HashMap, HashSet};

use chrono::{Datelike, NaiveDate};

use super::profile::{median, series, DaySeries, Measure, Profile, ProfileSet};
use super::{rules, QcAction, QcFinding, QcParams, QcRule};
use crate::model::counts::hour_mask;
use crate::model::{
    Area, CountStore, DayCounts, Direction, HistoryRecord, Network, StationKind, StationList,
};

/// Typical profiles of one permanent counter from its accepted days.
struct RefStation {
    id: String,
    band: &'static str,
    area: Area,
    fwd: Option<ProfileSet>,
    rev: Option<ProfileSet>,
    two_way: Option<ProfileSet>,
}

/// The permanent counters' profiles, the reference of every short count of the run.
#[derive(Default)]
pub(crate) struct Reference {
    stations: Vec<RefStation>,
    /// Latest (year, AADT) of history.csv per segment.
    history: HashMap<usize, (i32, f64)>,
}

impl Reference {
    /// Builds the profiles from the complete vehicle days of the permanent counters that
    /// quality control did not reject (`rejected`: station, date, direction).
    pub(crate) fn build(
        store: &CountStore,
        stations: &StationList,
        network: &Network,
        history: &[HistoryRecord],
        rejected: &HashSet<(usize, NaiveDate, Direction)>,
        p: &QcParams,
    ) -> Reference {
        let mut out = Reference::default();
        for h in history {
            let e = out.history.entry(h.segment).or_insert((h.year, h.aadt));
            if h.year > e.0 {
                *e = (h.year, h.aadt);
            }
        }
        for (si, days) in store.days.iter().enumerate() {
            let Some(st) = stations.stations.get(si) else {
                continue;
            };
            let Some(seg) = network.segments.get(st.segment) else {
                continue;
            };
            if st.kind != StationKind::Continuous {
                continue;
            }
            let mut by_dir: [Vec<DaySeries>; 3] = Default::default();
            for (date, day) in days {
                let mut got: [Option<DaySeries>; 3] = Default::default();
                for d in Direction::ALL {
                    let Some(dd) = day.dir(d) else { continue };
                    let s = series(day, dd);
                    if s.measure == Measure::Vehicles
                        && s.values.len() == 24
                        && s.coverage + 1e-9 >= p.min_coverage
                        && !rejected.contains(&(si, *date, d))
                    {
                        got[d.index()] = Some(s);
                    }
                }
                let [f, r, b] = got;
                let two_way = match (&f, &r, b) {
                    (_, _, Some(b)) => Some(b),
                    (Some(f), Some(r), None) => {
                        let mut s = f.clone();
                        s.values
                            .iter_mut()
                            .zip(&r.values)
                            .for_each(|(a, b)| *a += b);
                        Some(s)
                    }
                    (Some(f), None, None) if seg.oneway => Some(f.clone()),
                    _ => None,
                };
                for (slot, s) in [f, r, two_way].into_iter().enumerate() {
                    if let Some(s) = s {
                        by_dir[slot].push(s);
                    }
                }
            }
            let set = |v: &Vec<DaySeries>| {
                let refs: Vec<&DaySeries> = v.iter().collect();
                (!refs.is_empty())
                    .then(|| ProfileSet::new(&refs, p.profile_min_days, p.profile_min_days_pooled))
            };
            out.stations.push(RefStation {
                id: st.id.as_str().to_string(),
                band: seg.functional_class.broad_group(),
                area: seg.area,
                fwd: set(&by_dir[0]),
                rev: set(&by_dir[1]),
                two_way: set(&by_dir[2]),
            });
        }
        out
    }

    /// The candidate counters of a segment: same broad group and area, else same broad
    /// group, else all, each with at least `min_stations`.
    fn candidates(&self, band: &str, area: Area, min_stations: usize) -> Vec<&RefStation> {
        let tiers: [&dyn Fn(&RefStation) -> bool; 2] =
            [&|r| r.band == band && r.area == area, &|r| r.band == band];
        for tier in tiers {
            let v: Vec<&RefStation> = self.stations.iter().filter(|r| tier(r)).collect();
            if v.len() >= min_stations.max(1) {
                return v;
            }
        }
        self.stations.iter().collect()
    }
}

/// One short station to check.
pub(crate) struct ShortStation<'a> {
    pub station: usize,
    pub days: &'a BTreeMap<NaiveDate, DayCounts>,
    pub segment: usize,
    pub band: &'static str,
    pub area: Area,
    pub oneway: bool,
    /// Direction-days the station rules already rejected.
    pub rejected: HashSet<(Direction, NaiveDate)>,
    /// The `[qc] holidays` calendar (holidays and the travel days around them).
    pub calendar: &'a super::calendar::HolidayCalendar,
}

/// A direction-day of a short count on one run of covered hours.
struct Run {
    s: DaySeries,
    /// Whether the run covers the whole local day.
    complete: bool,
}

/// Every run of at least `min_hours` fully covered hours of a direction-day, each as a
/// series of its own, longest first (the first of equal ones first). A missed hour splits a
/// day in two, and a fault may sit in either part. Axle hits are halved (see the module docs).
fn covered_runs(day: &DayCounts, d: Direction, min_hours: usize) -> Vec<Run> {
    let Some(dd) = day.dir(d) else {
        return Vec::new();
    };
    let s = series(day, dd);
    let quarters = match s.measure {
        Measure::Vehicles => dd.vehicle_quarters,
        Measure::Axles => dd.axle_quarters,
    };
    let start = day.day_hours().start;
    let full = |k: usize| {
        let m = hour_mask(start + k);
        quarters & m == m
    };
    let mut spans = Vec::new();
    let mut k = 0;
    while k < s.values.len() {
        if !full(k) {
            k += 1;
            continue;
        }
        let a = k;
        while k < s.values.len() && full(k) {
            k += 1;
        }
        if k - a >= min_hours.max(1) {
            spans.push((a, k));
        }
    }
    spans.sort_by_key(|&(a, b)| std::cmp::Reverse(b - a));
    let halve = if s.measure == Measure::Axles {
        0.5
    } else {
        1.0
    };
    spans
        .into_iter()
        .map(|(a, b)| Run {
            complete: a == 0 && b == s.values.len(),
            s: DaySeries {
                date: s.date,
                measure: s.measure,
                values: s.values[a..b].iter().map(|v| v * halve).collect(),
                hours: s.hours[a..b].to_vec(),
                coverage: 1.0,
            },
        })
        .collect()
}

fn is_working(date: NaiveDate) -> bool {
    date.weekday().num_days_from_monday() < 5
}

/// A reference profile chosen for a direction-day, with the counter it comes from.
#[derive(Clone, Copy)]
struct Chosen<'a> {
    profile: &'a Profile,
    label: &'a str,
    dir: &'static str,
}

/// The best-fitting reference for a day: fwd and rev jointly where both are there.
fn choose<'a>(
    cands: &[&'a RefStation],
    runs: &BTreeMap<(Direction, NaiveDate), Run>,
    date: NaiveDate,
    holiday: bool,
    p: &QcParams,
) -> HashMap<Direction, Chosen<'a>> {
    let mut out = HashMap::new();
    let f = runs.get(&(Direction::Fwd, date));
    let r = runs.get(&(Direction::Rev, date));
    let fit = |s: &DaySeries, pr: &Profile| rules::misfit(s, pr, p);
    if let (Some(f), Some(r)) = (f, r) {
        let mut best: Option<(f64, Chosen<'a>, Chosen<'a>)> = None;
        for c in cands {
            let (Some(fs), Some(rs)) = (c.fwd.as_ref(), c.rev.as_ref()) else {
                continue;
            };
            let typed = day_types(fs, date, holiday)
                .into_iter()
                .zip(day_types(rs, date, holiday));
            for ((a, wa), (b, _)) in typed {
                for (pf, pr, nf, nr) in [(a, b, "fwd", "rev"), (b, a, "rev", "fwd")] {
                    let m = (fit(&f.s, pf) + fit(&r.s, pr)) * wa;
                    if best.as_ref().is_none_or(|x| m < x.0) {
                        let ch = |profile, dir| Chosen {
                            profile,
                            label: c.id.as_str(),
                            dir,
                        };
                        best = Some((m, ch(pf, nf), ch(pr, nr)));
                    }
                }
            }
        }
        if let Some((_, a, b)) = best {
            out.insert(Direction::Fwd, a);
            out.insert(Direction::Rev, b);
        }
        return out;
    }
    for d in Direction::ALL {
        let Some(run) = runs.get(&(d, date)) else {
            continue;
        };
        let mut best: Option<(f64, Chosen<'a>)> = None;
        for c in cands {
            let sets: &[(&Option<ProfileSet>, &'static str)] = if d == Direction::Both {
                &[(&c.two_way, "two-way")]
            } else {
                &[(&c.fwd, "fwd"), (&c.rev, "rev")]
            };
            for (set, dir) in sets {
                let Some(set) = set.as_ref() else { continue };
                for (pr, w) in day_types(set, date, holiday) {
                    let m = fit(&run.s, pr) * w;
                    if best.as_ref().is_none_or(|x| m < x.0) {
                        best = Some((
                            m,
                            Chosen {
                                profile: pr,
                                label: c.id.as_str(),
                                dir,
                            },
                        ));
                    }
                }
            }
        }
        if let Some((_, ch)) = best {
            out.insert(d, ch);
        }
    }
    out
}

/// The profiles a day may be matched to, with a weight on the misfit: its own day type
/// (weight 1) and the other day types (weight 2: taken only when they fit at least twice
/// as well, as an unlisted holiday with a Sunday shape does). On a day of the holiday
/// calendar every day type has weight 1: a holiday or a travel day may take any shape.
fn day_types(set: &ProfileSet, date: NaiveDate, holiday: bool) -> Vec<(&Profile, f64)> {
    let mut v: Vec<(&Profile, f64)> = set.for_date(date).map(|p| (p, 1.0)).into_iter().collect();
    if !v.is_empty() {
        let w = if holiday { 1.0 } else { 2.0 };
        v.extend(set.other_day_types(date).into_iter().map(|p| (p, w)));
    }
    v
}

/// Spike (fault: tube slapping, a vehicle parked on the sensor) against a level set from
/// outside the day: on a partial day the spike hours can hold most of the day's expected
/// volume, and the day's own level then rises with them. Same thresholds as the station
/// rule; the variance is Poisson or the profile's spread, plus the shape noise.
fn spike_at_level(s: &DaySeries, prof: &Profile, p: &QcParams) -> Option<String> {
    let e = prof.expected(s);
    let mut best: Option<(f64, usize)> = None;
    for (k, (&v, &x)) in s.values.iter().zip(&e).enumerate() {
        let sd = prof.spread[s.hours[k]];
        let var = (sd * sd).max(x) + (p.shape_noise_share * x).powi(2) + 1.0;
        let z = (v - x) / var.sqrt();
        if v >= p.spike_min_ratio * x
            && v - x >= p.spike_min_excess
            && z >= p.spike_min_z
            && best.is_none_or(|b| z > b.0)
        {
            best = Some((z, k));
        }
    }
    best.map(|(z, k)| {
        format!(
            "{} {} {}/h against {:.0} expected at the level of the count's other days or direction (x{:.1}, z {z:.0}, station profile)",
            s.label(k),
            s.values[k],
            s.measure.unit(),
            e[k],
            s.values[k] / e[k].max(1.0)
        )
    })
}

/// Level step between the directions (fault: one direction's tube moved or a lane lost
/// during the day, the other direction counting on): fwd tested against rev times the
/// reference pair's hourly fwd/rev ratio. Either direction may be the one that changed, so
/// the caller flags both.
fn direction_step(
    f: &DaySeries,
    r: &DaySeries,
    pf: &Profile,
    pr: &Profile,
    p: &QcParams,
) -> Option<String> {
    let mut median = [0.0; 24];
    let mut seen = [false; 24];
    for (k, &h) in f.hours.iter().enumerate() {
        if pr.median[h] > 0.0 && !seen[h] {
            median[h] = r.values[k] * pf.median[h] / pr.median[h];
            seen[h] = true;
        }
    }
    let other = Profile {
        median,
        // The other direction's counting noise.
        spread: median.map(|m| m.max(0.0).sqrt()),
        days: 1,
        label: "other direction",
    };
    // A flag only: the permanent counters' step size, the own-days z.
    let relaxed = QcParams {
        level_shift_min_z: p.short_own_days_min_z,
        level_shift_min_log_ratio: p.short_level_shift_min_log_ratio.min(0.25),
        ..p.clone()
    };
    let step = rules::level_step(f, &other, 3, &relaxed)?;
    Some(format!(
        "fwd against rev steps x{:.2} at {} (z {:.0}): one direction changed level",
        step.after / step.before,
        f.label(step.slot),
        step.z
    ))
}

/// A profile scaled by `level` (the count's volume against the reference counter's).
fn scaled(pr: &Profile, level: f64) -> Profile {
    Profile {
        median: pr.median.map(|v| v * level),
        spread: pr.spread.map(|v| v * level),
        days: pr.days,
        label: pr.label,
    }
}

/// The robust level of a run against a profile; `None` for a run without traffic.
fn level_of(s: &DaySeries, pr: &Profile) -> Option<f64> {
    let e = pr.expected(s);
    (s.total() > 0.0 && e.iter().sum::<f64>() > 0.0).then(|| rules::day_scale(s, &e))
}

/// A level step found against the count's own other days of the same direction and kind.
#[derive(Clone, Copy)]
struct OwnStep {
    /// Clock hour of the first hour after the break.
    hour: usize,
    before: f64,
    after: f64,
    z: f64,
}

/// The level step of a direction-day against the mean of the count's other accepted days of
/// its kind (working or weekend) at the same clock hours: `None` when no other day covers at
/// least `short_min_hours` of its hours, `Some(None)` when there is no step.
fn own_days_step(
    runs: &BTreeMap<(Direction, NaiveDate), Run>,
    rejected: &HashSet<(Direction, NaiveDate)>,
    d: Direction,
    date: NaiveDate,
    p: &QcParams,
) -> Option<Option<OwnStep>> {
    let s = &runs.get(&(d, date))?.s;
    let mut sum = [0.0f64; 24];
    let mut n = [0usize; 24];
    for ((dd, dt), o) in runs {
        if *dd != d || *dt == date || is_working(*dt) != is_working(date) {
            continue;
        }
        if rejected.contains(&(*dd, *dt)) {
            continue;
        }
        for (v, &h) in o.s.values.iter().zip(&o.s.hours) {
            sum[h] += v;
            n[h] += 1;
        }
    }
    // The longest run of the day's hours that other days cover.
    let (mut best, mut k) = ((0, 0), 0);
    while k < s.hours.len() {
        if n[s.hours[k]] == 0 {
            k += 1;
            continue;
        }
        let a = k;
        while k < s.hours.len() && n[s.hours[k]] > 0 {
            k += 1;
        }
        if k - a > best.1 - best.0 {
            best = (a, k);
        }
    }
    let (a, b) = best;
    if b - a < p.short_min_hours.max(1) {
        return None;
    }
    let sub = DaySeries {
        date,
        measure: s.measure,
        values: s.values[a..b].to_vec(),
        hours: s.hours[a..b].to_vec(),
        coverage: 1.0,
    };
    let days = n.iter().copied().max().unwrap_or(1);
    let mut median = [0.0; 24];
    for h in 0..24 {
        if n[h] > 0 {
            median[h] = sum[h] / n[h] as f64;
        }
    }
    let own = Profile {
        median,
        // The other days' counting noise: Poisson sd of their mean hour.
        spread: median.map(|m| (m / days as f64).sqrt()),
        days,
        label: "other days",
    };
    // A relaxed bar: this only confirms a step the reference found.
    let relaxed = QcParams {
        level_shift_min_z: p.level_shift_min_z.min(2.0),
        level_shift_min_log_ratio: p.level_shift_min_log_ratio * 0.6,
        ..p.clone()
    };
    Some(
        rules::level_step(&sub, &own, 3, &relaxed).map(|st| OwnStep {
            hour: sub.hours[st.slot],
            before: st.before,
            after: st.after,
            z: st.z,
        }),
    )
}

/// A direction-day's total against the mean of the count's other accepted days of its kind
/// (working or weekend) over the clock hours both have. A complete day is held to the other
/// complete days only (a partial day's few hours are a noisy reference for a whole day).
struct SameHours {
    total: f64,
    typical: f64,
    hours: usize,
    days: usize,
}

fn same_hours(
    runs: &BTreeMap<(Direction, NaiveDate), Run>,
    rejected: &HashSet<(Direction, NaiveDate)>,
    d: Direction,
    date: NaiveDate,
) -> Option<SameHours> {
    let run = runs.get(&(d, date))?;
    let s = &run.s;
    let mut sum = [0.0f64; 24];
    let mut n = [0usize; 24];
    let mut days = 0;
    for ((dd, dt), o) in runs {
        if *dd != d
            || *dt == date
            || (run.complete && !o.complete)
            || is_working(*dt) != is_working(date)
            || rejected.contains(&(*dd, *dt))
        {
            continue;
        }
        days += 1;
        for (v, &h) in o.s.values.iter().zip(&o.s.hours) {
            sum[h] += v;
            n[h] += 1;
        }
    }
    let (mut total, mut typical, mut hours) = (0.0, 0.0, 0);
    for (v, &h) in s.values.iter().zip(&s.hours) {
        if n[h] > 0 {
            total += v;
            typical += sum[h] / n[h] as f64;
            hours += 1;
        }
    }
    (days > 0).then_some(SameHours {
        total,
        typical,
        hours,
        days,
    })
}

/// Swapped directions (fault: the two tubes' or loops' channels crossed for a day): a
/// working day's fwd share, clock hour by clock hour, fits the count's other working days
/// with fwd and rev exchanged much better than as recorded. Returns the detail per date.
fn swapped(
    runs: &BTreeMap<(Direction, NaiveDate), Run>,
    p: &QcParams,
) -> Vec<(NaiveDate, QcAction, String)> {
    let pairs: Vec<(NaiveDate, &DaySeries, &DaySeries)> = runs
        .iter()
        .filter(|((d, date), _)| *d == Direction::Fwd && is_working(*date))
        .filter_map(|((_, date), f)| {
            let r = runs.get(&(Direction::Rev, *date))?;
            (f.s.hours == r.s.hours).then_some((*date, &f.s, &r.s))
        })
        .collect();
    let mut out = Vec::new();
    for &(date, f, r) in &pairs {
        let (mut same, mut swap, mut n) = (0.0, 0.0, 0);
        for (k, &h) in f.hours.iter().enumerate() {
            // The other working days' fwd and rev at this clock hour.
            let (mut fo, mut ro) = (0.0, 0.0);
            for &(o, of, or) in &pairs {
                if o == date {
                    continue;
                }
                if let Some(j) = of.hours.iter().position(|&x| x == h) {
                    fo += of.values[j];
                    ro += or.values[j];
                }
            }
            let t = f.values[k] + r.values[k];
            if fo + ro < 1.0 || t <= 0.0 {
                continue;
            }
            let share = (fo + 0.5) / (fo + ro + 1.0);
            let binom = t * share * (1.0 - share);
            let var = binom * (1.0 + t / (fo + ro)) + (p.shape_noise_share * t).powi(2) + 1.0;
            same += (f.values[k] - share * t).powi(2) / var;
            swap += (r.values[k] - share * t).powi(2) / var;
            n += 1;
        }
        if n > 0 && same > swap * p.swap_min_misfit_ratio && same - swap > p.swap_min_misfit_gain {
            // The count's own orientation is that of a clear majority of its hours: the day
            // is rejected when the other days hold at least twice its hours (a 72-hour count
            // with one odd day, a 12-hour partial day against a full one), else flagged (two
            // days of about equal length, or the day is the longer one: either may be the
            // swapped one, and the data do not say which).
            let own = f.hours.len();
            let others: usize = pairs
                .iter()
                .filter(|x| x.0 != date)
                .map(|x| x.1.hours.len())
                .sum();
            let action = if others >= 2 * own {
                QcAction::Rejected
            } else {
                QcAction::Flagged
            };
            out.push((
                date,
                action,
                format!(
                    "fwd share by hour fits the count's other working days ({others} h) with fwd and rev exchanged: misfit {same:.0} as recorded, {swap:.0} exchanged (chi-square over {n} hours){}",
                    if action == QcAction::Flagged { "; the other days do not hold twice its hours, so either may be the swapped one" } else { "" }
                ),
            ));
        }
    }
    out
}

/// Runs the short-count rules on one station (see the module docs). `pr` holds the
/// reference-rule thresholds (`short_*` copied into the rule fields).
pub(crate) fn check(
    st: &ShortStation,
    reference: &Reference,
    p: &QcParams,
    pr: &QcParams,
) -> Vec<QcFinding> {
    let mut out = Vec::new();
    let push = |out: &mut Vec<QcFinding>, d, date, rule, action, detail| {
        out.push(QcFinding {
            station: st.station,
            direction: d,
            date,
            rule,
            action,
            detail,
        })
    };
    // The longest run of each direction-day carries the day in the rules that compare days
    // and directions; the shorter runs (a day split by missed hours) are tested for zero
    // runs, spikes and flat runs against the same reference.
    let mut runs: BTreeMap<(Direction, NaiveDate), Run> = BTreeMap::new();
    let mut shorter: BTreeMap<(Direction, NaiveDate), Vec<Run>> = BTreeMap::new();
    for (date, day) in st.days {
        for d in Direction::ALL {
            let mut all = covered_runs(day, d, p.short_min_hours).into_iter();
            if let Some(run) = all.next() {
                runs.insert((d, *date), run);
                shorter.insert((d, *date), all.collect());
            }
        }
    }
    let mut rejected = st.rejected.clone();
    // Swaps first: on a swapped day every single-direction rule would fire on its symptoms.
    if !st.oneway {
        for (date, action, detail) in swapped(&runs, p) {
            if rejected.contains(&(Direction::Fwd, date))
                || rejected.contains(&(Direction::Rev, date))
            {
                continue;
            }
            for d in [Direction::Fwd, Direction::Rev] {
                if action == QcAction::Rejected {
                    rejected.insert((d, date));
                }
                push(
                    &mut out,
                    d,
                    date,
                    QcRule::SwappedDirections,
                    action,
                    detail.clone(),
                );
            }
        }
    }
    let cands = reference.candidates(st.band, st.area, p.short_reference_min_stations);
    let dates: Vec<NaiveDate> = runs
        .keys()
        .map(|k| k.1)
        .collect::<HashSet<_>>()
        .into_iter()
        .collect();
    let mut chosen: BTreeMap<(Direction, NaiveDate), Chosen> = BTreeMap::new();
    for &date in &dates {
        let holiday = st.calendar.holiday(date).is_some();
        for (d, c) in choose(&cands, &runs, date, holiday, p) {
            chosen.insert((d, date), c);
        }
    }
    // The typical day total implied by every direction-day with traffic: its robust level
    // against its reference times that reference's typical total (days may be matched to
    // different counters, so levels are compared as volumes).
    let total_of = |pr: &Profile| pr.median.iter().sum::<f64>();
    let levels: BTreeMap<(Direction, NaiveDate), f64> = chosen
        .iter()
        .filter_map(|(k, c)| Some((*k, level_of(&runs[k].s, c.profile)? * total_of(c.profile))))
        .collect();
    let history = reference.history.get(&st.segment);
    for ((d, date), c) in &chosen {
        if rejected.contains(&(*d, *date)) {
            continue;
        }
        let s = &runs[&(*d, *date)].s;
        let parts = shorter.get(&(*d, *date)).map_or(&[][..], |v| &v[..]);
        // Other days of the same direction and the other direction of the same day; the
        // day itself only when there is nothing else (it is the suspect).
        let mut est: Vec<f64> = levels
            .iter()
            .filter(|((dd, dt), _)| {
                (*dd == *d && *dt != *date)
                    || (*dt == *date
                        && *dd != *d
                        && *dd != Direction::Both
                        && *d != Direction::Both)
            })
            .map(|(_, l)| *l)
            .collect();
        if let Some(&(_, aadt)) = history {
            // Half the two-way AADT per direction; halved axle hits stand for vehicles.
            let share = if *d == Direction::Both { 1.0 } else { 0.5 };
            est.push(aadt * share);
        }
        let typical = total_of(c.profile);
        if typical <= 0.0 {
            continue;
        }
        let mut est: Vec<f64> = est.into_iter().map(|t| t / typical).collect();
        let outside = !est.is_empty();
        if est.is_empty() {
            est.extend(levels.get(&(*d, *date)).map(|t| t / typical));
        }
        let level = if est.is_empty() {
            // Nothing but the day itself, and it has no traffic: the reference counter's own
            // level stands in (no road of the class among the counters carries less).
            cands
                .iter()
                .filter_map(|r| {
                    let set = match d {
                        Direction::Both => r.two_way.as_ref(),
                        Direction::Fwd => r.fwd.as_ref(),
                        Direction::Rev => r.rev.as_ref(),
                    }?;
                    let t: f64 = set.for_date(*date)?.median.iter().sum();
                    let own: f64 = c.profile.median.iter().sum();
                    (own > 0.0).then_some(t / own)
                })
                .reduce(f64::min)
                .unwrap_or(1.0)
        } else {
            median(&mut est)
        };
        let prof = scaled(c.profile, level);
        let source = format!("reference {} {} {}", c.label, c.dir, c.profile.label);
        let mut v: Vec<(QcRule, QcAction, String)> = Vec::new();
        for s in std::iter::once(s).chain(parts.iter().map(|r| &r.s)) {
            if let Some(t) = rules::zero_run(s, Some(&prof), pr) {
                v.push((QcRule::ZeroRun, QcAction::Rejected, t));
            }
            if let Some(t) = rules::spike(s, Some(&prof), (None, None), pr)
                .or_else(|| outside.then(|| spike_at_level(s, &prof, pr)).flatten())
            {
                v.push((QcRule::Spike, QcAction::Rejected, t));
            }
            let e = prof.expected(s);
            let sc = rules::day_scale(s, &e);
            if let Some(t) = rules::flat_run(s, Some((&e, sc)), pr) {
                v.push((QcRule::FlatRun, QcAction::Rejected, t));
            }
            if !v.is_empty() {
                break;
            }
        }
        // A holiday or a travel day around one has its own peaks (an early exodus, a late
        // return) that no reference day type holds: a spike there is flagged, as any other
        // unusual level on such a day (zero and flat runs are no traffic pattern and reject).
        let holiday = st.calendar.holiday(*date);
        if let Some(h) = holiday {
            for x in v.iter_mut().filter(|x| x.0 == QcRule::Spike) {
                x.1 = QcAction::Flagged;
                x.2 = format!("{}; {h} (holiday list)", x.2);
            }
        }
        if v.is_empty() {
            if let Some(step) = rules::level_step(s, &prof, pr.level_shift_min_side_hours, pr) {
                // Another road's shape can step where this road's does not: the step must
                // show against the count's own other days too, or (a count with no other
                // day at these hours) be a clear one.
                let own = own_days_step(&runs, &rejected, *d, *date, pr);
                let confirmed = match own {
                    Some(o) => o.is_some_and(|o| {
                        (o.after > o.before) == (step.after > step.before)
                            && s.hours[step.slot].abs_diff(o.hour) <= 3
                    }),
                    None => step.z >= p.level_shift_min_z,
                };
                // A holiday's level is its own (as on permanent counters): flagged.
                let structural = confirmed
                    && step.off_share() >= p.level_shift_min_off_share
                    && holiday.is_none();
                let action = if structural {
                    QcAction::Rejected
                } else {
                    QcAction::Flagged
                };
                let why = match (own, confirmed) {
                    (Some(_), true) => "; also against the count's other days",
                    (Some(_), false) => "; not against the count's other days",
                    (None, true) => "",
                    (None, false) => "; a small step against another road's profile",
                };
                let listed = holiday.map_or(String::new(), |h| format!("; {h} (holiday list)"));
                v.push((
                    QcRule::LevelShift,
                    action,
                    format!("{} against the {source}{why}{listed}", step.detail(s)),
                ));
            } else if let Some(Some(o)) = own_days_step(&runs, &rejected, *d, *date, pr)
                .map(|o| o.filter(|o| o.z >= p.short_own_days_min_z))
            {
                // A step against the count's other days alone: either day may be the odd one
                // (with two days) and the reference does not see it, so it is only flagged.
                v.push((
                    QcRule::LevelShift,
                    QcAction::Flagged,
                    format!(
                        "level x{:.2} from {:02}:00 against the count's other days (z {:.0}; not against the {source})",
                        o.after / o.before,
                        o.hour,
                        o.z
                    ),
                ));
            }
        }
        for (rule, action, t) in v {
            if action == QcAction::Rejected {
                rejected.insert((*d, *date));
            }
            let t = t.replace("station profile", &source);
            push(
                &mut out,
                *d,
                *date,
                rule,
                action,
                format!("{t} (short count)"),
            );
        }
    }
    // fwd against rev: the hourly ratio of the two directions against the reference pair's.
    if !st.oneway {
        for &date in &dates {
            let key = |d| (d, date);
            let (Some(f), Some(r)) = (
                runs.get(&key(Direction::Fwd)),
                runs.get(&key(Direction::Rev)),
            ) else {
                continue;
            };
            let (Some(cf), Some(cr)) = (
                chosen.get(&key(Direction::Fwd)),
                chosen.get(&key(Direction::Rev)),
            ) else {
                continue;
            };
            if f.s.hours != r.s.hours
                || rejected.contains(&key(Direction::Fwd))
                || rejected.contains(&key(Direction::Rev))
            {
                continue;
            }
            if let Some(t) = direction_step(&f.s, &r.s, cf.profile, cr.profile, pr) {
                for d in [Direction::Fwd, Direction::Rev] {
                    push(
                        &mut out,
                        d,
                        date,
                        QcRule::LevelShift,
                        QcAction::Flagged,
                        format!(
                            "{t} (reference {} {}/{}; short count)",
                            cf.label, cf.dir, cr.dir
                        ),
                    );
                }
            }
        }
    }
    // Day totals against the count's other days of the same kind at the same clock hours.
    // Fault: a level step (tube moved, lane lost) whose off side is most of a partial first
    // or last day, or the whole of a day, has no step inside the day to find; the count's
    // other days at the hours the day has show it.
    for ((d, date), run) in &runs {
        if rejected.contains(&(*d, *date)) {
            continue;
        }
        let Some(c) = same_hours(&runs, &rejected, *d, *date) else {
            continue;
        };
        if c.hours < p.short_min_hours {
            continue;
        }
        if c.typical > 0.0
            && ((c.total / c.typical) - 1.0).abs() > p.short_day_max_change
            && (c.total - c.typical).abs() >= 3.0 * c.typical.sqrt()
        {
            let what = if run.complete {
                "daily total".to_string()
            } else {
                format!("total of the {} counted hours", c.hours)
            };
            push(
                &mut out,
                *d,
                *date,
                QcRule::CountDays,
                QcAction::Flagged,
                format!(
                    "{what} {:.0} {} is {:.0} % of the count's other {} day(s) at the same hours ({:.0})",
                    c.total,
                    run.s.measure.unit(),
                    c.total / c.typical * 100.0,
                    c.days,
                    c.typical
                ),
            );
        }
    }
    // The count's level against the segment's history.
    if let Some(&(year, aadt)) = history {
        let mut totals: Vec<(NaiveDate, Vec<Direction>, f64)> = Vec::new();
        for &date in &dates {
            let ok = |d| {
                runs.get(&(d, date))
                    .filter(|r| r.complete && !rejected.contains(&(d, date)))
            };
            if let Some(b) = ok(Direction::Both) {
                let k = if b.s.measure == Measure::Axles {
                    2.0
                } else {
                    1.0
                };
                totals.push((date, vec![Direction::Both], b.s.total() / k));
            } else if let (Some(f), Some(r)) = (ok(Direction::Fwd), ok(Direction::Rev)) {
                totals.push((
                    date,
                    vec![Direction::Fwd, Direction::Rev],
                    f.s.total() + r.s.total(),
                ));
            } else if let (Some(f), true) = (ok(Direction::Fwd), st.oneway) {
                totals.push((date, vec![Direction::Fwd], f.s.total()));
            }
        }
        if !totals.is_empty() && aadt > 0.0 {
            let mean = totals.iter().map(|t| t.2).sum::<f64>() / totals.len() as f64;
            let ratio = mean / aadt;
            let m = p.short_history_max_ratio;
            if ratio > m || ratio < 1.0 / m {
                for (date, dirs, _) in &totals {
                    for d in dirs {
                        push(
                            &mut out,
                            *d,
                            *date,
                            QcRule::HistoryLevel,
                            QcAction::Flagged,
                            format!(
                                "the count's mean two-way day {mean:.0} veh is {:.0} % of the segment's published AADT {aadt:.0} ({year})",
                                ratio * 100.0
                            ),
                        );
                    }
                }
            }
        }
    }
    out
}
