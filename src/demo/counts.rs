//! Stations and their count records.
//!
//! # Method
//!
//! Expected volume of an interval = AADT of the count's year x day level (see
//! [`super::patterns`]) x hourly share x directional share (x 1/4 for 15-minute records).
//! Each station-day draws one lognormal day factor (mean 1, CV 8 %) shared by both directions,
//! each record a lognormal interval factor (mean 1, CV 5 %); the count is a Poisson draw with
//! that mean. Classified records split the count over the 13 FHWA classes by a multinomial
//! draw over the segment's class mix; axle counts are `sum(class count x axles per vehicle)`.
//! Counts of earlier years use `AADT_y = AADT / (1 + growth)^(year - y)`.
//!
//! Continuous counts are written station by station and day by day, so memory does not grow
//! with the number of rows.
//!
//! # Units
//!
//! Vehicles (or axles) per interval; intervals of 60 or 15 minutes on the local clock.

use std::fmt::Write as _;
use std::path::{Path, PathBuf};

use chrono::{Datelike, Duration, NaiveDate, Weekday};
use rand::seq::SliceRandom;
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Binomial, Distribution, LogNormal, Poisson, StandardNormal};

use super::clock::{self, Interval};
use super::disturbances::{DisturbedDay, Plan};
use super::faults::{self, BadRow, FaultKind, FaultRow, Rec};
use super::gaps::{self, GapRow};
use super::network::{Network, Segment};
use super::patterns::{self, Pattern};
use super::sink::CsvSink;
use super::{DemoError, DemoParams, Scale};

/// Day-to-day variation of volumes, as a coefficient of variation.
pub(crate) const DAY_CV: f64 = 0.08;
/// Record-to-record variation on top of Poisson noise.
const INTERVAL_CV: f64 = 0.05;
/// Axles per vehicle by FHWA class (class 1 first); fractional where a class mixes axle
/// counts (for example class 8: three- and four-axle single trailers).
const AXLES_PER_VEHICLE: [f64; 13] = [
    2.0, 2.0, 2.0, 2.3, 2.0, 3.0, 4.2, 3.7, 5.0, 6.1, 5.0, 6.0, 7.4,
];

/// The counts file header (the contract's column names).
pub(crate) fn counts_header() -> Vec<String> {
    let mut h: Vec<String> = [
        "station_id",
        "direction",
        "start",
        "minutes",
        "vehicles",
        "axles",
    ]
    .iter()
    .map(|s| s.to_string())
    .collect();
    h.extend((1..=13).map(|c| format!("class_{c}")));
    h
}

#[derive(Clone, Debug)]
pub(crate) struct ContinuousStation {
    pub id: String,
    pub segment: usize,
    pub classified: bool,
    pub minutes: u32,
}

/// What a short count measured.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum ShortKind {
    /// Vehicles per direction.
    PerDirection,
    /// Vehicles, both directions together.
    Both,
    /// Axle hits from a road tube, both directions together.
    Axles,
    /// Vehicles by class per direction.
    Classified,
}

#[derive(Clone, Debug)]
pub(crate) struct ShortStation {
    pub id: String,
    pub segment: usize,
    pub year: i32,
    pub start_date: NaiveDate,
    pub start_hour: u32,
    pub hours: u32,
    pub kind: ShortKind,
}

#[derive(Clone, Debug)]
pub(crate) struct StationPlan {
    pub continuous: Vec<ContinuousStation>,
    pub short: Vec<ShortStation>,
}

/// Functional classes visited in turn when placing continuous counters, so that every class
/// gets one early.
const CONTINUOUS_CLASS_CYCLE: [u8; 12] = [1, 3, 2, 4, 3, 5, 1, 6, 4, 7, 3, 2];

/// Places the stations: continuous counters spread over classes and patterns (the first on a
/// tolled segment), short counts on other segments.
pub(crate) fn plan_stations(
    rng: &mut ChaCha8Rng,
    net: &Network,
    scale: &Scale,
    year: i32,
) -> StationPlan {
    let mut used = vec![false; net.segments.len()];
    let mut continuous = Vec::new();
    for i in 0..scale.continuous {
        let seg = if i == 0 && net.tolled.len() > 1 {
            Some(net.tolled[1])
        } else {
            let class = CONTINUOUS_CLASS_CYCLE[i % CONTINUOUS_CLASS_CYCLE.len()];
            // Shift the pattern each round of the class cycle so classes meet every pattern.
            let pattern = (i + i / CONTINUOUS_CLASS_CYCLE.len()) % 3;
            pick_continuous_segment(rng, net, &used, class, pattern)
        };
        let Some(seg) = seg else { break };
        used[seg] = true;
        continuous.push(ContinuousStation {
            id: format!("CC{:03}", i + 1),
            segment: seg,
            // The counter on the tolled segment classifies, as a toll-audit site would.
            classified: i == 0 || i % scale.classified_every == 1,
            minutes: if i == 3 { 15 } else { 60 },
        });
    }
    let mut free: Vec<usize> = (0..net.segments.len()).filter(|&s| !used[s]).collect();
    free.shuffle(rng);
    let short = free
        .into_iter()
        .take(scale.short)
        .enumerate()
        .map(|(i, segment)| plan_short(rng, format!("SC{:04}", i + 1), segment, year))
        .collect();
    StationPlan { continuous, short }
}

/// A two-way segment of `class` and `pattern`, falling back to the pattern, the class, any.
fn pick_continuous_segment(
    rng: &mut ChaCha8Rng,
    net: &Network,
    used: &[bool],
    class: u8,
    pattern: usize,
) -> Option<usize> {
    let free = |s: &&Segment| !s.oneway && !used[segment_index(s)];
    let tiers: [&dyn Fn(&Segment) -> bool; 4] = [
        &|s| s.class == class && s.pattern == pattern,
        &|s| s.pattern == pattern,
        &|s| s.class == class,
        &|_| true,
    ];
    for tier in tiers {
        let candidates: Vec<usize> = net
            .segments
            .iter()
            .filter(free)
            .filter(|s| tier(s))
            .map(segment_index)
            .collect();
        if let Some(&s) = candidates.choose(rng) {
            return Some(s);
        }
    }
    None
}

/// Index of a segment from its id `S00001` (ids are assigned in order).
fn segment_index(s: &Segment) -> usize {
    s.id[1..]
        .parse::<usize>()
        .expect("segment ids are S + number")
        - 1
}

fn plan_short(rng: &mut ChaCha8Rng, id: String, segment: usize, study_year: i32) -> ShortStation {
    let year = if rng.gen_bool(0.75) {
        study_year
    } else {
        rng.gen_range(study_year - 4..study_year)
    };
    let month = rng.gen_range(3..=11);
    let day = rng.gen_range(1..=21);
    let wanted = if rng.gen_bool(0.85) {
        [Weekday::Tue, Weekday::Wed, Weekday::Thu][rng.gen_range(0..3)]
    } else {
        [Weekday::Mon, Weekday::Fri][rng.gen_range(0..2)]
    };
    let mut start_date = NaiveDate::from_ymd_opt(year, month, day).expect("valid date");
    while start_date.weekday() != wanted {
        start_date += Duration::days(1);
    }
    let start_hour = if rng.gen_bool(0.6) {
        0
    } else {
        rng.gen_range(9..=13)
    };
    let hours = [24, 48, 48, 72][rng.gen_range(0..4)];
    let kind = match rng.gen_range(0..20) {
        0..=10 => ShortKind::PerDirection,
        11..=13 => ShortKind::Both,
        14..=16 => ShortKind::Axles,
        _ => ShortKind::Classified,
    };
    ShortStation {
        id,
        segment,
        year,
        start_date,
        start_hour,
        hours,
        kind,
    }
}

/// Writes `stations.csv`.
pub(crate) fn write_stations(out: &Path, plan: &StationPlan) -> Result<PathBuf, DemoError> {
    let mut sink = CsvSink::create(
        out.join("stations.csv"),
        &["station_id", "segment_id", "kind"],
    )?;
    let seg_id = |s: usize| format!("S{:05}", s + 1);
    for c in &plan.continuous {
        sink.row([c.id.as_str(), &seg_id(c.segment), "continuous"])?;
    }
    for s in &plan.short {
        sink.row([s.id.as_str(), &seg_id(s.segment), "short"])?;
    }
    sink.finish()
}

/// Random draws shared by all count generation.
struct Noise {
    day: LogNormal<f64>,
    interval: LogNormal<f64>,
}

impl Noise {
    fn new() -> Self {
        Noise {
            day: mean_one_lognormal(DAY_CV),
            interval: mean_one_lognormal(INTERVAL_CV),
        }
    }
}

/// Lognormal with mean 1 and coefficient of variation `cv`.
pub(crate) fn mean_one_lognormal(cv: f64) -> LogNormal<f64> {
    let sigma = (1.0 + cv * cv).ln().sqrt();
    LogNormal::new(-0.5 * sigma * sigma, sigma).expect("finite parameters")
}

/// A Poisson draw; above a mean of 50 the normal approximation N(mean, mean), rounded,
/// which is accurate there and needs one random number instead of a rejection loop.
fn poisson(rng: &mut ChaCha8Rng, mean: f64) -> u32 {
    if mean <= 0.0 {
        return 0;
    }
    if mean > 50.0 {
        let z: f64 = StandardNormal.sample(rng);
        return (mean + z * mean.sqrt()).round().max(0.0) as u32;
    }
    Poisson::new(mean).expect("positive mean").sample(rng) as u32
}

/// Splits `n` vehicles over the 13 classes by a multinomial draw.
fn split_classes(rng: &mut ChaCha8Rng, n: u32, mix: &[f64; 13]) -> [u32; 13] {
    let mut out = [0u32; 13];
    let mut left = n as u64;
    let mut p_left = 1.0;
    for (c, &p) in mix.iter().enumerate() {
        if left == 0 {
            break;
        }
        let k = if c == 12 || p >= p_left {
            left
        } else {
            let q = (p / p_left).clamp(0.0, 1.0);
            Binomial::new(left, q)
                .expect("probability in 0..=1")
                .sample(rng)
        };
        out[c] = k as u32;
        left -= k;
        p_left -= p;
    }
    out
}

/// Draws the records of one local day (or part of a day) for both directions; `hourly`
/// holds the disturbances' multiplier of each clock hour 0..=23.
#[allow(clippy::too_many_arguments)]
fn draw_day(
    rng: &mut ChaCha8Rng,
    noise: &Noise,
    seg: &Segment,
    pattern: &Pattern,
    day_mean: f64,
    hourly: &[f64],
    intervals: &[(usize, &Interval)],
    minutes: u32,
    classified: bool,
) -> [Vec<Rec>; 2] {
    let day_factor = noise.day.sample(rng);
    let mut fwd = Vec::with_capacity(intervals.len());
    let mut rev = Vec::with_capacity(intervals.len());
    for &(index, iv) in intervals {
        let dt = patterns::day_type(iv.date);
        let share = pattern.hourly[dt as usize][iv.hour as usize] * minutes as f64 / 60.0;
        let mean = day_mean * day_factor * share * hourly[iv.hour as usize];
        let s_fwd = if seg.oneway {
            1.0
        } else {
            pattern.fwd_share(dt, iv.hour, seg.inbound_fwd)
        };
        for (dir, s) in [(&mut fwd, s_fwd), (&mut rev, 1.0 - s_fwd)] {
            if seg.oneway && s <= 0.0 {
                continue;
            }
            let wobble = noise.interval.sample(rng);
            let vehicles = poisson(rng, mean * s * wobble);
            let classes = classified.then(|| split_classes(rng, vehicles, &seg.class_mix));
            dir.push(Rec {
                interval: index,
                hour: iv.hour,
                vehicles,
                classes,
            });
        }
    }
    [fwd, rev]
}

/// Vehicles, axles and class counts of one row; `None` leaves the cells empty.
type Cells<'a> = (Option<u32>, Option<u32>, Option<&'a [u32; 13]>);

/// Reusable text fields of one counts row (avoids allocating per row on big files).
struct RowBuf {
    fields: Vec<String>,
}

impl RowBuf {
    fn new() -> Self {
        RowBuf {
            fields: vec![String::new(); 19],
        }
    }

    /// Fills the row; `None` cells stay empty.
    fn fill(
        &mut self,
        station: &str,
        direction: &str,
        start: &str,
        minutes: u32,
        (vehicles, axles, classes): Cells,
    ) {
        for f in &mut self.fields {
            f.clear();
        }
        self.fields[0].push_str(station);
        self.fields[1].push_str(direction);
        self.fields[2].push_str(start);
        let _ = write!(self.fields[3], "{minutes}");
        if let Some(v) = vehicles {
            let _ = write!(self.fields[4], "{v}");
        }
        if let Some(a) = axles {
            let _ = write!(self.fields[5], "{a}");
        }
        if let Some(c) = classes {
            for (slot, v) in self.fields[6..].iter_mut().zip(c) {
                let _ = write!(slot, "{v}");
            }
        }
    }
}

/// What writing a counts file produced.
pub(crate) struct CountsOutcome {
    pub path: PathBuf,
    pub rows: u64,
    pub faults: Vec<FaultRow>,
    pub bad_rows: Vec<BadRow>,
    /// Missing hours of short counts.
    pub gaps: Vec<GapRow>,
    /// Station-days touched by a disturbance.
    pub disturbed: Vec<DisturbedDay>,
    /// Vehicles that really passed each day on the tolled segments with a counter, before any
    /// fault is injected: what a toll system bills (empty for short counts).
    pub passages: Passages,
}

/// Vehicles that passed one tolled segment on one day, both directions: (light classes 1-3,
/// heavy classes 4-13); an unclassified counter splits by the segment's heavy share.
pub(crate) type Passages = std::collections::HashMap<(usize, NaiveDate), (f64, f64)>;

/// The vehicles of one day's records as (light, heavy).
fn day_passages(recs: &[Vec<Rec>; 2], heavy_share: f64) -> (f64, f64) {
    let (mut light, mut heavy) = (0.0, 0.0);
    for r in recs.iter().flatten() {
        match &r.classes {
            Some(c) => {
                light += c[..3].iter().sum::<u32>() as f64;
                heavy += c[3..].iter().sum::<u32>() as f64;
            }
            None => {
                light += r.vehicles as f64 * (1.0 - heavy_share);
                heavy += r.vehicles as f64 * heavy_share;
            }
        }
    }
    (light, heavy)
}

/// Records the disturbance kinds of one station-day.
fn note_disturbed(
    out: &mut Vec<DisturbedDay>,
    station: &str,
    date: NaiveDate,
    kinds: &[super::disturbances::Kind],
) {
    for &kind in kinds {
        out.push(DisturbedDay {
            station_id: station.to_string(),
            date,
            kind,
        });
    }
}

/// Writes `counts/continuous_<year>.csv[.gz]`: every continuous station, all year.
#[allow(clippy::too_many_arguments)]
pub(crate) fn write_continuous(
    rng: &mut ChaCha8Rng,
    out: &Path,
    net: &Network,
    pats: &[Pattern],
    plan: &StationPlan,
    disturb: &Plan,
    params: &DemoParams,
    scale: &Scale,
) -> Result<CountsOutcome, DemoError> {
    let year = params.year;
    let ext = if scale.gzip_continuous {
        "csv.gz"
    } else {
        "csv"
    };
    let header = counts_header();
    let mut sink = CsvSink::create(
        out.join(format!("counts/continuous_{year}.{ext}")),
        &header_refs(&header),
    )?;
    let hourly = clock::year_by_day(year, 60);
    let quarter = clock::year_by_day(year, 15);
    let dst = clock::dst_days(year);
    let noise = Noise::new();
    let mut buf = RowBuf::new();
    let mut fault_rows = Vec::new();
    let mut disturbed = Vec::new();
    let mut passages = Passages::new();
    for st in &plan.continuous {
        let seg = &net.segments[st.segment];
        let tolled = net.tolled.contains(&st.segment);
        let pattern = &pats[seg.pattern];
        let norm = pattern.norm(year);
        let days = if st.minutes == 15 { &quarter } else { &hourly };
        let fault_days = plan_faults(rng, days, dst, pattern.commuter && !seg.oneway);
        for (d, day) in days.iter().enumerate() {
            let date = day[0].date;
            let indexed: Vec<(usize, &Interval)> = day.iter().enumerate().collect();
            let day_mean = seg.aadt * pattern.day_level(date, norm);
            let effect = disturb.day(st.segment, date);
            note_disturbed(&mut disturbed, &st.id, date, &effect.kinds);
            let mut recs = draw_day(
                rng,
                &noise,
                seg,
                pattern,
                day_mean,
                &effect.hourly,
                &indexed,
                st.minutes,
                st.classified,
            );
            if tolled {
                passages.insert((st.segment, date), day_passages(&recs, seg.heavy_share()));
            }
            if let Some(&(_, kind)) = fault_days.iter().find(|(fd, _)| *fd == d) {
                inject(rng, kind, &mut recs, &st.id, date, &mut fault_rows);
            }
            for (dir, name) in recs.iter().zip(["fwd", "rev"]) {
                for r in dir {
                    buf.fill(
                        &st.id,
                        name,
                        &day[r.interval].start,
                        st.minutes,
                        (Some(r.vehicles), None, r.classes.as_ref()),
                    );
                    sink.row(&buf.fields)?;
                }
            }
        }
    }
    let rows = sink.rows;
    Ok(CountsOutcome {
        path: sink.finish()?,
        rows,
        faults: fault_rows,
        bad_rows: Vec::new(),
        gaps: Vec::new(),
        disturbed,
        passages,
    })
}

fn header_refs(header: &[String]) -> Vec<&str> {
    header.iter().map(String::as_str).collect()
}

/// Picks the faulty days of one continuous station: 2-4 % of its days, never a DST
/// changeover day (tests check those days' record counts); swapped directions on working
/// days only.
fn plan_faults(
    rng: &mut ChaCha8Rng,
    days: &[Vec<Interval>],
    dst: (NaiveDate, NaiveDate),
    can_swap: bool,
) -> Vec<(usize, FaultKind)> {
    let rate = rng.gen_range(0.02..0.04);
    let n = (days.len() as f64 * rate).round() as usize;
    let eligible: Vec<usize> = (0..days.len())
        .filter(|&d| days[d][0].date != dst.0 && days[d][0].date != dst.1)
        .collect();
    let mut picked: Vec<usize> = eligible.choose_multiple(rng, n).copied().collect();
    picked.sort_unstable();
    picked
        .into_iter()
        .map(|d| {
            // A swap is only a fault that shows on a working day: a commuter road's weekend
            // is symmetric, so exchanged directions change nothing there (as for short counts).
            let working = patterns::day_type(days[d][0].date) == patterns::DayType::Weekday;
            let kind = if can_swap && working && rng.gen_bool(0.15) {
                FaultKind::SwappedDirections
            } else {
                FaultKind::random_single(rng)
            };
            (d, kind)
        })
        .collect()
}

/// Applies a fault to one day of both directions and records it.
fn inject(
    rng: &mut ChaCha8Rng,
    kind: FaultKind,
    recs: &mut [Vec<Rec>; 2],
    station: &str,
    date: NaiveDate,
    rows: &mut Vec<FaultRow>,
) {
    if kind == FaultKind::SwappedDirections {
        let [fwd, rev] = recs;
        std::mem::swap(fwd, rev);
        let detail = faults::apply(kind, rng, fwd);
        for direction in ["fwd", "rev"] {
            rows.push(FaultRow {
                station_id: station.to_string(),
                direction,
                date,
                kind,
                detail: detail.clone(),
            });
        }
        return;
    }
    let which = if recs[1].is_empty() || rng.gen_bool(0.5) {
        0
    } else {
        1
    };
    let detail = faults::apply(kind, rng, &mut recs[which]);
    rows.push(FaultRow {
        station_id: station.to_string(),
        direction: ["fwd", "rev"][which],
        date,
        kind,
        detail,
    });
}

/// Deliberately unreadable rows, in the order they are placed.
const BAD_PROBLEMS: [&str; 6] = [
    "unparseable_timestamp",
    "negative_count",
    "fractional_count",
    "duplicate_row",
    "vehicles_not_class_sum",
    "unknown_station",
];

/// Writes `counts/short_counts.csv`.
pub(crate) fn write_short(
    rng: &mut ChaCha8Rng,
    out: &Path,
    net: &Network,
    pats: &[Pattern],
    plan: &StationPlan,
    disturb: &Plan,
    params: &DemoParams,
) -> Result<CountsOutcome, DemoError> {
    const FILE: &str = "counts/short_counts.csv";
    let header = counts_header();
    let mut sink = CsvSink::create(out.join(FILE), &header_refs(&header))?;
    let noise = Noise::new();
    let mut buf = RowBuf::new();
    let mut fault_rows = Vec::new();
    let mut bad_rows = Vec::new();
    let mut gap_rows = Vec::new();
    let mut disturbed = Vec::new();
    let mut gap_rng = ChaCha8Rng::seed_from_u64(params.seed ^ gaps::STREAM);
    let bad_targets = if params.bad_rows {
        pick_bad_targets(rng, &plan.short)
    } else {
        Vec::new()
    };
    for (i, st) in plan.short.iter().enumerate() {
        let seg = &net.segments[st.segment];
        let pattern = &pats[seg.pattern];
        let start =
            clock::local_midnight_utc(st.start_date) + Duration::hours(st.start_hour as i64);
        let intervals = clock::intervals_from(start, st.hours, 60);
        let mut recs = draw_short(
            rng,
            &noise,
            (seg, pattern),
            st,
            &intervals,
            disturb,
            params.year,
            &mut disturbed,
        );
        if let Some((first, hours, kind)) = gaps::plan(&mut gap_rng, intervals.len()) {
            gaps::remove(&mut recs, first, hours);
            gap_rows.push(GapRow {
                station_id: st.id.clone(),
                first: intervals[first].start.clone(),
                hours,
                kind,
            });
        }
        let per_direction = matches!(st.kind, ShortKind::PerDirection | ShortKind::Classified);
        let target = faults::ShortTarget {
            station: &st.id,
            names: direction_names(st.kind),
            per_direction,
            can_swap: pattern.commuter && !seg.oneway,
        };
        faults::inject_short(rng, &target, &intervals, &mut recs, &mut fault_rows);
        let bad = bad_targets.iter().find(|(s, _)| *s == i).map(|&(_, p)| p);
        let mut row_no = 0usize;
        for (dir, name) in recs.iter().zip(direction_names(st.kind)) {
            for r in dir {
                let start = &intervals[r.interval].start;
                buf.fill(&st.id, name, start, 60, row_values(st.kind, r));
                // The sixth row of a target station carries its problem.
                if let (Some(problem), 5) = (bad, row_no) {
                    write_bad(&mut sink, &mut buf, problem, &mut bad_rows, FILE)?;
                } else {
                    sink.row(&buf.fields)?;
                }
                row_no += 1;
            }
        }
    }
    let rows = sink.rows;
    Ok(CountsOutcome {
        path: sink.finish()?,
        rows,
        faults: fault_rows,
        bad_rows,
        gaps: gap_rows,
        disturbed,
        passages: Passages::new(),
    })
}

/// Vehicles, axles and class cells of a short-count row.
fn row_values(kind: ShortKind, r: &Rec) -> Cells<'_> {
    match kind {
        ShortKind::PerDirection | ShortKind::Both => (Some(r.vehicles), None, None),
        ShortKind::Classified => (Some(r.vehicles), None, r.classes.as_ref()),
        ShortKind::Axles => {
            let c = r.classes.as_ref().expect("axle counts are drawn by class");
            let axles: f64 = c
                .iter()
                .zip(AXLES_PER_VEHICLE)
                .map(|(&n, a)| n as f64 * a)
                .sum();
            (None, Some(axles.round() as u32), None)
        }
    }
}

fn direction_names(kind: ShortKind) -> [&'static str; 2] {
    match kind {
        ShortKind::PerDirection | ShortKind::Classified => ["fwd", "rev"],
        ShortKind::Both | ShortKind::Axles => ["both", "both"],
    }
}

/// Stations (by index) that get one bad row each, with the problem.
fn pick_bad_targets(rng: &mut ChaCha8Rng, short: &[ShortStation]) -> Vec<(usize, &'static str)> {
    let with_kind =
        |k: ShortKind| -> Vec<usize> { (0..short.len()).filter(|&i| short[i].kind == k).collect() };
    let mut plain = with_kind(ShortKind::PerDirection);
    plain.shuffle(rng);
    let classified = with_kind(ShortKind::Classified);
    let mut targets = Vec::new();
    for (problem, &station) in BAD_PROBLEMS
        .iter()
        .filter(|p| **p != "vehicles_not_class_sum")
        .zip(&plain)
    {
        targets.push((station, *problem));
    }
    if let Some(&station) = classified.choose(rng) {
        targets.push((station, "vehicles_not_class_sum"));
    }
    targets
}

/// Writes the current row corrupted by `problem` and records where it went.
fn write_bad(
    sink: &mut CsvSink,
    buf: &mut RowBuf,
    problem: &'static str,
    bad_rows: &mut Vec<BadRow>,
    file: &str,
) -> Result<(), DemoError> {
    match problem {
        "duplicate_row" | "unknown_station" => {
            // The good row first, then its bad twin.
            sink.row(&buf.fields)?;
            if problem == "unknown_station" {
                buf.fields[0] = "SC9999".into();
            }
        }
        // 30 February does not exist.
        "unparseable_timestamp" => {
            let year = buf.fields[2][..4].to_string();
            buf.fields[2] = format!("{year}-02-30T08:00:00-05:00");
        }
        "negative_count" => {
            buf.fields[4] = format!("-{}", buf.fields[4].parse::<u32>().unwrap_or(0) + 3)
        }
        "fractional_count" => buf.fields[4] = format!("{}.5", buf.fields[4]),
        "vehicles_not_class_sum" => {
            let v: u32 = buf.fields[4].parse().unwrap_or(0);
            buf.fields[4] = (v + 3).to_string();
        }
        other => unreachable!("unknown bad-row problem {other}"),
    }
    bad_rows.push(BadRow {
        file: file.to_string(),
        line: sink.next_line(),
        problem,
    });
    sink.row(&buf.fields)
}

/// Draws a short count's records (both directions, or the `both` total in `[0]`); faults
/// are injected afterwards by [`faults::inject_short`].
#[allow(clippy::too_many_arguments)]
fn draw_short(
    rng: &mut ChaCha8Rng,
    noise: &Noise,
    (seg, pattern): (&Segment, &Pattern),
    st: &ShortStation,
    intervals: &[Interval],
    disturb: &Plan,
    study_year: i32,
    disturbed: &mut Vec<DisturbedDay>,
) -> [Vec<Rec>; 2] {
    let aadt = seg.aadt / (1.0 + pattern.growth).powi(study_year - st.year);
    let norm = pattern.norm(st.year);
    let classified = matches!(st.kind, ShortKind::Classified | ShortKind::Axles);
    let mut out: [Vec<Rec>; 2] = [Vec::new(), Vec::new()];
    let mut dates: Vec<NaiveDate> = intervals.iter().map(|iv| iv.date).collect();
    dates.dedup();
    for date in dates {
        let indexed: Vec<(usize, &Interval)> = intervals
            .iter()
            .enumerate()
            .filter(|(_, iv)| iv.date == date)
            .collect();
        let day_mean = aadt * pattern.day_level(date, norm);
        let effect = disturb.day(st.segment, date);
        note_disturbed(disturbed, &st.id, date, &effect.kinds);
        let mut recs = draw_day(
            rng,
            noise,
            seg,
            pattern,
            day_mean,
            &effect.hourly,
            &indexed,
            60,
            classified,
        );
        if matches!(st.kind, ShortKind::Both | ShortKind::Axles) {
            recs = [merge_directions(&recs), Vec::new()];
        }
        for (all, day) in out.iter_mut().zip(recs) {
            all.extend(day);
        }
    }
    out
}

/// Sums `fwd` and `rev` records of the same interval into one `both` record.
fn merge_directions(recs: &[Vec<Rec>; 2]) -> Vec<Rec> {
    let mut both = recs[0].clone();
    for (b, r) in both.iter_mut().zip(&recs[1]) {
        b.vehicles += r.vehicles;
        if let (Some(bc), Some(rc)) = (b.classes.as_mut(), r.classes.as_ref()) {
            for (x, y) in bc.iter_mut().zip(rc) {
                *x += y;
            }
        }
    }
    both
}
