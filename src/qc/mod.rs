//! Count quality control per station x direction x local date, and network checks.
//!
//! # Method
//! Two passes per station, in parallel over stations:
//!
//! 1. Every direction-day is turned into an hourly series over the slots of its local day
//!    (23, 24 or 25 hours; see [`DayCounts::day_hours`]). The rules run on vehicles, or on
//!    axle hits for axle-only days. A day whose quarter-hour coverage is below
//!    [`QcParams::min_coverage`] is `incomplete` and rejected (flagged on a short count, see
//!    below); it takes no further part in the station rules.
//! 2. From the complete 24-hour days a typical profile is built per station x direction x
//!    measure x day type x clock hour: each day is scaled to the median daily total and the
//!    median and MAD (x 1.4826) of every clock hour are taken. The day type is the weekday when
//!    it has [`QcParams::profile_min_days`] days, else the weekday group (Mon-Fri, Sat, Sun),
//!    else all working days or all weekend days when there are
//!    [`QcParams::profile_min_days_pooled`] (working and weekend days are never pooled: their
//!    shapes differ). Short counts with fewer days of the day's kind only get the
//!    self-contained rules (flat run, zero run and spike against neighbouring hours). Medians
//!    make the profile robust to the faulty days it contains.
//!
//! Then each complete direction-day is tested against the profile of its day type:
//!
//! | rule | tests | action |
//! |---|---|---|
//! | `incomplete` | quarter-hour coverage below `min_coverage` | rejected (short counts: flagged) |
//! | `flat_run` | the same non-zero value in consecutive hours, less likely than `flat_run_max_probability` under Poisson noise | rejected |
//! | `zero_run` | consecutive zero hours where >= `zero_run_min_expected` vehicles are expected (half the typical volume) | rejected |
//! | `spike` | one hour >= `spike_min_ratio` x expected and `spike_min_z` deviations above it (at 00:00 and 23:00 also `spike_min_neighbour_ratio` x the hour across midnight) | rejected |
//! | `level_shift` | the day's level against the profile steps by >= `level_shift_min_log_ratio` at some hour, with >= `level_shift_min_side_hours` hours each side | rejected when the off side holds >= `level_shift_min_off_share` of the day's volume or carries on into the neighbouring day, else flagged |
//! | `daily_deviation` | the day total deviates from the typical total, at the seasonal level of the days within `daily_deviation_window_days`, by > `daily_deviation_max_share` and 3 Poisson deviations | flagged |
//! | `swapped_directions` | fwd fits the rev profile and rev the fwd one much better than as recorded | rejected (fwd and rev) |
//! | `directional_imbalance` | the fwd share of the two-way total moved from the typical share (or the split is beyond `directional_max_share`) | flagged |
//! | `class_mismatch` | classified quarters differ from vehicle quarters, class sums differ from vehicles, too few light vehicles, or a heavy share far from the station's typical one | flagged |
//!
//! On the holidays of `[qc] holidays` and the travel days around them (see [`calendar`]),
//! level steps that stay within the day are flagged, never rejected: an unusual level is what
//! a holiday is (zero runs, flat runs and single-hour spikes stay faults).
//! Events, incidents, storms and roadworks come and go within a day or last for whole days;
//! neither is a fault, so a level step must cover most of the day or persist to reject.
//!
//! Zero runs, spikes and level shifts found against the day's own profile are only flagged
//! when the day passes all three against the profile of another day type and fits that
//! profile's shape at least twice as well (chi-square) as its own: a working-day holiday with
//! a Sunday shape, or the reverse.
//!
//! The expected hourly volume on a day is the profile times the day's own robust level (the
//! volume-weighted median of observed / typical), so that the normal day-to-day variation and
//! holidays (a whole-day drop with a normal shape) do not make hours look faulty; such days at
//! most get the flagged `daily_deviation`. Thresholds are volume-aware: Poisson counting noise
//! sets how long a flat run must be, and zero runs only count where zero traffic is
//! implausible, so low-volume night hours do not fire.
//!
//! Which direction-days are rejected: a finding on `both` rejects that `both` day; a
//! swapped-directions finding rejects fwd and rev of the day (each carries the other's
//! traffic; the two-way total would be right, but the split is not, and a day with one
//! direction only cannot give a two-way figure anyway). Daily deviation, directional and
//! class findings are only looked for on days no structural rule rejected.
//!
//! Days are local calendar days, as the data contract defines them: a short count that starts
//! at 10:00 on Tuesday and ends at 10:00 on Thursday gives one complete day (Wednesday). On a
//! short count, `incomplete` is flagged, not rejected: its partial first and last days and a
//! day with missing hours inside the count keep their counted hours, which the short-count
//! rules (`src/qc/short.rs`) check and expansion joins into 24-hour periods, filling short gaps.
//!
//! A whole-day drop or rise of one direction only (a fault from the first hour on) has no
//! step within the day; it is flagged by `daily_deviation` and `directional_imbalance`, not
//! rejected, since the same signs also mark real one-sided events.
//!
//! # Units
//! Volumes are vehicles (or axle hits) per clock hour; daily totals vehicles per day; shares
//! are fractions 0..1; z-scores are in standard deviations.
//!
//! # References
//! * FHWA, Traffic Monitoring Guide (2016, 2022 update), ch. 3 (continuous count programme,
//!   complete days for AADT) and its data-quality check lists (flat runs, zero runs, spikes,
//!   directional splits, class consistency), from memory.
//! * AASHTO, Guidelines for Traffic Data Programs (2009), data validation chapter, from memory.
//! * Robust statistics (median, MAD x 1.4826 for normal consistency): standard.
//! * Numeric thresholds are from no single source ("common practice"), see [`QcParams`].

pub mod calendar;
pub mod network;
mod params;
mod profile;
mod rules;
mod short;

#[cfg(test)]
mod tests;

use std::collections::{BTreeMap, BTreeSet, HashSet};

use chrono::{Datelike, NaiveDate};
use rayon::prelude::*;

use crate::model::CountStore;
use crate::model::StationList;
use crate::model::{DayCounts, Direction, Network};

pub use network::{check_network, NetworkFinding};
pub use params::QcParams;
use profile::{series, DaySeries, Measure, ProfileSet};

/// A count quality rule.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum QcRule {
    /// Quarter-hour coverage of the local day below the threshold.
    Incomplete,
    /// The same non-zero value for many consecutive hours (stuck sensor).
    FlatRun,
    /// Zero counts in hours that normally carry traffic (dead sensor).
    ZeroRun,
    /// One hour far above the expected volume.
    Spike,
    /// A step change of level within the day.
    LevelShift,
    /// The daily total far from the typical day.
    DailyDeviation,
    /// The directional split far from the usual one.
    DirectionalImbalance,
    /// fwd and rev exchanged for the day.
    SwappedDirections,
    /// Class figures inconsistent with vehicles or an implausible class mix.
    ClassMismatch,
    /// A short count's day total far from its other days (a loose tube, a lane not
    /// counted for a whole day; also a real event or bad weather, so flagged).
    CountDays,
    /// A short count's level far from the segment's published AADT (a count on the wrong
    /// segment or a miscalibrated counter; also real change, so flagged).
    HistoryLevel,
}

impl QcRule {
    /// Every rule, in report order.
    pub const ALL: [QcRule; 11] = [
        QcRule::Incomplete,
        QcRule::FlatRun,
        QcRule::ZeroRun,
        QcRule::Spike,
        QcRule::LevelShift,
        QcRule::DailyDeviation,
        QcRule::DirectionalImbalance,
        QcRule::SwappedDirections,
        QcRule::ClassMismatch,
        QcRule::CountDays,
        QcRule::HistoryLevel,
    ];

    /// The snake_case name written to qc_log.csv.
    ///
    /// ```
    /// assert_eq!(roadtally::qc::QcRule::FlatRun.as_str(), "flat_run");
    /// ```
    pub fn as_str(self) -> &'static str {
        match self {
            QcRule::Incomplete => "incomplete",
            QcRule::FlatRun => "flat_run",
            QcRule::ZeroRun => "zero_run",
            QcRule::Spike => "spike",
            QcRule::LevelShift => "level_shift",
            QcRule::DailyDeviation => "daily_deviation",
            QcRule::DirectionalImbalance => "directional_imbalance",
            QcRule::SwappedDirections => "swapped_directions",
            QcRule::ClassMismatch => "class_mismatch",
            QcRule::CountDays => "count_days",
            QcRule::HistoryLevel => "history_level",
        }
    }
}

/// What a finding does to its direction-day.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum QcAction {
    /// Left out of every later computation.
    Rejected,
    /// Kept and reported.
    Flagged,
}

impl QcAction {
    /// `rejected` or `flagged`, as in qc_log.csv.
    pub fn as_str(self) -> &'static str {
        match self {
            QcAction::Rejected => "rejected",
            QcAction::Flagged => "flagged",
        }
    }
}

/// One rule firing on one direction-day: a row of qc_log.csv.
#[derive(Debug, Clone, PartialEq)]
pub struct QcFinding {
    /// Station index in [`StationList::stations`].
    pub station: usize,
    /// Direction of the direction-day.
    pub direction: Direction,
    /// Local date.
    pub date: NaiveDate,
    /// The rule that fired.
    pub rule: QcRule,
    /// Rejected or flagged.
    pub action: QcAction,
    /// A short human-readable reason with numbers and units.
    pub detail: String,
}

/// Direction-days a rule fired on, by action.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct RuleCount {
    /// Direction-days the rule flagged.
    pub flagged: usize,
    /// Direction-days the rule rejected.
    pub rejected: usize,
}

/// Counts of direction-days by outcome.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct QcSummary {
    /// Direction-days checked (every direction with records on a station-day).
    pub direction_days: usize,
    /// Direction-days with no finding.
    pub clean: usize,
    /// Direction-days kept with at least one flag.
    pub flagged: usize,
    /// Direction-days rejected.
    pub rejected: usize,
    /// Per rule, in [`QcRule::ALL`] order.
    pub by_rule: Vec<(QcRule, RuleCount)>,
}

impl QcSummary {
    /// Direction-days kept for computation (clean or flagged).
    pub fn accepted(&self) -> usize {
        self.clean + self.flagged
    }
}

/// Result of the quality-control stage.
#[derive(Debug, Clone, Default)]
pub struct QcOutput {
    /// Every finding, sorted by station, date, direction, rule.
    pub findings: Vec<QcFinding>,
    /// Rejected direction-days: (station index, local date, direction).
    pub rejected: HashSet<(usize, NaiveDate, Direction)>,
    /// Outcome counts.
    pub summary: QcSummary,
    /// Findings of the network checks.
    pub network: Vec<NetworkFinding>,
}

impl QcOutput {
    /// Whether a direction-day was rejected (and must be left out of later computation).
    pub fn is_rejected(&self, station: usize, date: NaiveDate, d: Direction) -> bool {
        self.rejected.contains(&(station, date, d))
    }

    /// Direction-days with a finding that were kept (flagged, not rejected).
    pub fn flagged_days(&self) -> HashSet<(usize, NaiveDate, Direction)> {
        flagged_days(&self.findings, &self.rejected)
    }
}

/// The direction-days of `findings` not in `rejected`.
fn flagged_days(
    findings: &[QcFinding],
    rejected: &HashSet<(usize, NaiveDate, Direction)>,
) -> HashSet<(usize, NaiveDate, Direction)> {
    findings
        .iter()
        .map(|f| (f.station, f.date, f.direction))
        .filter(|k| !rejected.contains(k))
        .collect()
}

/// What quality control reads.
#[derive(Debug, Clone, Copy)]
pub struct QcInput<'a> {
    /// The folded counts.
    pub counts: &'a CountStore,
    /// Every station (kind, and segment for one-way roads).
    pub stations: &'a StationList,
    /// The network, for its own checks.
    pub network: &'a Network,
    /// Published AADT of earlier years: the short-count level check.
    pub history: &'a [crate::model::HistoryRecord],
}

/// Runs every count rule over the store and the network checks over the network. A finding
/// is data, not a failure: the stage as a whole cannot fail.
///
/// ```
/// use roadtally::qc::{run, QcInput, QcParams};
/// let (counts, stations, network) = (Default::default(), Default::default(), Default::default());
/// let input = QcInput { counts: &counts, stations: &stations, network: &network, history: &[] };
/// let out = run(&input, &QcParams::default());
/// assert!(out.findings.is_empty() && out.summary.direction_days == 0);
/// ```
pub fn run(input: &QcInput, params: &QcParams) -> QcOutput {
    let (store, stations, network) = (input.counts, input.stations, input.network);
    let oneway = |si: usize| {
        stations
            .stations
            .get(si)
            .and_then(|s| network.segments.get(s.segment))
            .is_some_and(|s| s.oneway)
    };
    // One calendar for the whole store: the holiday list is read once, not per station.
    let years = store
        .days
        .iter()
        .filter_map(|d| Some((d.keys().next()?.year(), d.keys().next_back()?.year())))
        .reduce(|a, b| (a.0.min(b.0), a.1.max(b.1)));
    let calendar = holiday_calendar(years, params);
    let is_short = |si: usize| {
        stations
            .stations
            .get(si)
            .is_some_and(|s| s.kind == crate::model::StationKind::Short)
    };
    let checked: Vec<Checked> = store
        .days
        .par_iter()
        .enumerate()
        .map(|(si, days)| check_station_in(si, days, oneway(si), is_short(si), &calendar, params))
        .collect();
    let mut per_station: Vec<(Vec<QcFinding>, usize)> = Vec::with_capacity(checked.len());
    let mut marks: Vec<BTreeMap<(Direction, NaiveDate), StepMark>> = Vec::new();
    for c in checked {
        per_station.push((c.findings, c.direction_days));
        marks.push(c.steps);
    }
    // Counter positions on the plane the spatial stage uses (segment midpoints, km).
    let mids = network.midpoints_km();
    let position = |si: usize| Some(*mids.get(stations.stations.get(si)?.segment)?);
    area_steps(&mut per_station, &marks, &position, &is_short, params);
    // Short counts against the permanent counters' accepted days (see `short`).
    let rejected_of = |f: &[QcFinding]| -> HashSet<(Direction, NaiveDate)> {
        f.iter()
            .filter(|x| x.action == QcAction::Rejected)
            .map(|x| (x.direction, x.date))
            .collect()
    };
    let permanent_rejected: HashSet<(usize, NaiveDate, Direction)> = per_station
        .iter()
        .enumerate()
        .filter(|(si, _)| !is_short(*si))
        .flat_map(|(si, (f, _))| rejected_of(f).into_iter().map(move |(d, t)| (si, t, d)))
        .collect();
    let reference = short::Reference::build(
        store,
        stations,
        network,
        input.history,
        &permanent_rejected,
        params,
    );
    let reference_params = QcParams {
        shape_noise_share: params.short_shape_noise_share,
        level_shift_min_z: params.short_level_shift_min_z,
        level_shift_min_log_ratio: params.short_level_shift_min_log_ratio,
        ..params.clone()
    };
    let short_findings: Vec<Vec<QcFinding>> = store
        .days
        .par_iter()
        .enumerate()
        .filter(|(si, _)| is_short(*si))
        .filter_map(|(si, days)| {
            let st = &stations.stations[si];
            let seg = network.segments.get(st.segment)?;
            let input = short::ShortStation {
                station: si,
                days,
                segment: st.segment,
                band: seg.functional_class.broad_group(),
                area: seg.area,
                oneway: seg.oneway,
                rejected: rejected_of(&per_station[si].0),
                calendar: &calendar,
            };
            Some(short::check(&input, &reference, params, &reference_params))
        })
        .collect();
    let mut findings = Vec::new();
    let mut direction_days = 0;
    for (f, n) in per_station {
        findings.extend(f);
        direction_days += n;
    }
    findings.extend(short_findings.into_iter().flatten());
    findings.sort_by(|a, b| {
        (a.station, a.date, a.direction, a.rule).cmp(&(b.station, b.date, b.direction, b.rule))
    });
    let rejected: HashSet<(usize, NaiveDate, Direction)> = findings
        .iter()
        .filter(|f| f.action == QcAction::Rejected)
        .map(|f| (f.station, f.date, f.direction))
        .collect();
    let flagged = flagged_days(&findings, &rejected);
    let mut by_rule: BTreeMap<QcRule, RuleCount> = QcRule::ALL
        .iter()
        .map(|r| (*r, RuleCount::default()))
        .collect();
    for f in &findings {
        let c = by_rule.get_mut(&f.rule).expect("every rule is listed");
        match f.action {
            QcAction::Rejected => c.rejected += 1,
            QcAction::Flagged => c.flagged += 1,
        }
    }
    let summary = QcSummary {
        direction_days,
        clean: direction_days - rejected.len() - flagged.len(),
        flagged: flagged.len(),
        rejected: rejected.len(),
        by_rule: by_rule.into_iter().collect(),
    };
    QcOutput {
        findings,
        rejected,
        summary,
        network: check_network(network, params),
    }
}

/// A short count starts and ends part-way through a day: its first and last days are
/// incomplete by design, not by fault, so their `incomplete` finding is flagged, not rejected,
/// and their hours still enter the count's consecutive 24-hour periods (see `expansion`).
/// Returns "first" or "last" for such a day; a gap inside a count is no edge.
fn count_edge(
    days: &BTreeMap<NaiveDate, DayCounts>,
    date: NaiveDate,
    d: Direction,
) -> Option<&'static str> {
    let has = |x: Option<NaiveDate>| {
        x.and_then(|x| days.get(&x))
            .is_some_and(|day| day.dir(d).is_some())
    };
    if !has(date.pred_opt()) {
        Some("first")
    } else if !has(date.succ_opt()) {
        Some("last")
    } else {
        None
    }
}

/// The clock slot and sense of a day's level step, for the area check.
#[derive(Debug, Clone, Copy)]
pub(crate) struct StepMark {
    slot: usize,
    up: bool,
}

/// What checking one station gave.
pub(crate) struct Checked {
    pub findings: Vec<QcFinding>,
    /// Direction-days looked at.
    pub direction_days: usize,
    /// The level step of each direction-day with a level-shift finding.
    steps: BTreeMap<(Direction, NaiveDate), StepMark>,
}

/// Hours within which level steps of different counters count as the same step.
const AREA_STEP_HOURS: usize = 3;

/// Level steps rejected at a permanent counter become flags when at least
/// `area_step_min_stations` other permanent counters within `area_step_km` step the same way
/// (up or down) on the same date within [`AREA_STEP_HOURS`]: weather or an area-wide event,
/// not a sensor, whose faults do not coincide across counters.
fn area_steps(
    per_station: &mut [(Vec<QcFinding>, usize)],
    marks: &[BTreeMap<(Direction, NaiveDate), StepMark>],
    position: &dyn Fn(usize) -> Option<[f64; 2]>,
    is_short: &dyn Fn(usize) -> bool,
    p: &QcParams,
) {
    let mut by_date: BTreeMap<NaiveDate, Vec<(usize, StepMark)>> = BTreeMap::new();
    for (si, m) in marks.iter().enumerate() {
        if is_short(si) {
            continue;
        }
        for ((_, date), mark) in m {
            by_date.entry(*date).or_default().push((si, *mark));
        }
    }
    let km = |a: [f64; 2], b: [f64; 2]| (a[0] - b[0]).hypot(a[1] - b[1]);
    for (si, (findings, _)) in per_station.iter_mut().enumerate() {
        let Some(here) = position(si).filter(|_| !is_short(si)) else {
            continue;
        };
        for f in findings.iter_mut() {
            if f.rule != QcRule::LevelShift || f.action != QcAction::Rejected {
                continue;
            }
            let Some(mark) = marks[si].get(&(f.direction, f.date)) else {
                continue;
            };
            let others: BTreeSet<usize> = by_date
                .get(&f.date)
                .into_iter()
                .flatten()
                .filter(|(o, m)| {
                    *o != si
                        && m.up == mark.up
                        && m.slot.abs_diff(mark.slot) <= AREA_STEP_HOURS
                        && position(*o).is_some_and(|there| km(here, there) <= p.area_step_km)
                })
                .map(|(o, _)| *o)
                .collect();
            if others.len() >= p.area_step_min_stations {
                f.action = QcAction::Flagged;
                f.detail.push_str(&format!(
                    "; {} other permanent counters within {:.0} km step the same way within {AREA_STEP_HOURS} h (weather or an area-wide event?)",
                    others.len(),
                    p.area_step_km
                ));
            }
        }
    }
}

/// Hours within which a level step of the other direction counts as the same step.
const BOTH_DIRECTIONS_STEP_HOURS: usize = 2;

/// Marks a level step that carries on into a neighbouring day: a fault, holiday or not.
const CARRIES_ON: &str = "the off level carries on into";

/// The holiday calendar of `[qc] holidays` over the (first, last) years of the counts. The
/// list was checked when the settings were read; an unreadable one means no holidays.
fn holiday_calendar(years: Option<(i32, i32)>, p: &QcParams) -> calendar::HolidayCalendar {
    years
        .and_then(|(a, b)| {
            calendar::HolidayCalendar::new(&p.holidays, a..=b, p.holiday_margin_days).ok()
        })
        .unwrap_or_default()
}

/// Checks one station with the calendar of its own years: returns its findings and the
/// number of direction-days looked at.
#[cfg(test)]
pub(crate) fn check_station(
    station: usize,
    days: &BTreeMap<NaiveDate, DayCounts>,
    oneway: bool,
    short: bool,
    p: &QcParams,
) -> (Vec<QcFinding>, usize) {
    let years = days
        .keys()
        .next()
        .zip(days.keys().next_back())
        .map(|(a, b)| (a.year(), b.year()));
    let c = check_station_in(station, days, oneway, short, &holiday_calendar(years, p), p);
    (c.findings, c.direction_days)
}

/// Checks one station against `calendar`: returns its findings and the number of
/// direction-days looked at.
fn check_station_in(
    station: usize,
    days: &BTreeMap<NaiveDate, DayCounts>,
    oneway: bool,
    short: bool,
    calendar: &calendar::HolidayCalendar,
    p: &QcParams,
) -> Checked {
    let mut out = Vec::new();
    let mut steps = BTreeMap::new();
    let mut count = 0;
    // Pass 1: series and coverage.
    let mut complete: BTreeMap<(Direction, NaiveDate), DaySeries> = BTreeMap::new();
    let mut classified: BTreeMap<(Direction, NaiveDate), &crate::model::DirectionDay> =
        BTreeMap::new();
    for (date, day) in days {
        for d in Direction::ALL {
            let Some(dd) = day.dir(d) else { continue };
            count += 1;
            let s = series(day, dd);
            if s.coverage + 1e-9 < p.min_coverage {
                let n = s.values.len();
                // On a short count every counted hour is kept: the partial first and last
                // days by design, and a day with missing hours inside the count, whose short
                // gaps expansion fills (a longer gap leaves that stretch out of its periods).
                let edge = short.then(|| count_edge(days, *date, d).unwrap_or("gapped"));
                let detail = format!(
                        "{:.1} % of the {n} hours of the local day covered by {} figures (needs {:.1} %)",
                        s.coverage * 100.0,
                        if s.measure == Measure::Vehicles { "vehicle" } else { "axle" },
                        p.min_coverage * 100.0
                    );
                out.push(QcFinding {
                    station,
                    direction: d,
                    date: *date,
                    rule: QcRule::Incomplete,
                    action: if edge.is_some() { QcAction::Flagged } else { QcAction::Rejected },
                    detail: match edge {
                        Some("gapped") => format!(
                            "short count with missing hours (short gaps filled, counted hours used in 24-hour periods): {detail}"
                        ),
                        Some(which) => format!(
                            "partial {which} day of a short count (hours used in 24-hour periods): {detail}"
                        ),
                        None => detail,
                    },
                });
                continue;
            }
            if dd.class_quarters != 0 {
                classified.insert((d, *date), dd);
            }
            complete.insert((d, *date), s);
        }
    }
    // Profiles per direction and measure.
    let mut profiles: BTreeMap<(Direction, Measure), ProfileSet> = BTreeMap::new();
    for d in Direction::ALL {
        for m in [Measure::Vehicles, Measure::Axles] {
            let sel: Vec<&DaySeries> = complete
                .iter()
                .filter(|((dd, _), s)| *dd == d && s.measure == m)
                .map(|(_, s)| s)
                .collect();
            if !sel.is_empty() {
                profiles.insert(
                    (d, m),
                    ProfileSet::new(&sel, p.profile_min_days, p.profile_min_days_pooled),
                );
            }
        }
    }
    let profile_of = |d: Direction, s: &DaySeries| {
        profiles
            .get(&(d, s.measure))
            .and_then(|ps| ps.for_date(s.date))
    };
    // Swapped directions first: on such a day every single-direction rule would fire on
    // symptoms of the swap.
    let mut rejected: HashSet<(Direction, NaiveDate)> = HashSet::new();
    if !oneway {
        swapped_rules(station, &complete, &profile_of, p, &mut rejected, &mut out);
    }
    // Pass 2: single-direction rules.
    let mut levels: Vec<(Direction, NaiveDate, f64)> = Vec::new();
    for ((d, date), s) in &complete {
        if rejected.contains(&(*d, *date)) {
            continue;
        }
        let prof = profile_of(*d, s);
        let expected = prof.map(|pr| pr.expected(s));
        let scaled = expected
            .as_ref()
            .map(|e| (e.as_slice(), rules::day_scale(s, e)));
        let mut push = |rule, action, detail: String| {
            out.push(QcFinding {
                station,
                direction: *d,
                date: *date,
                rule,
                action,
                detail,
            })
        };
        let mut structural = Vec::new();
        // On a holiday the day type's profile misjudges the level (a quiet night repeats
        // small counts): a flat run is judged on counting noise at its own value alone.
        let flat_scale = if calendar.holiday(*date).is_some() {
            None
        } else {
            scaled
        };
        if let Some(t) = rules::flat_run(s, flat_scale, p) {
            structural.push((QcRule::FlatRun, t));
        }
        let prev_day = date.pred_opt().and_then(|x| complete.get(&(*d, x)));
        let next_day = date.succ_opt().and_then(|x| complete.get(&(*d, x)));
        let across = (
            prev_day.and_then(|x| x.values.last().copied()),
            next_day.and_then(|x| x.values.first().copied()),
        );
        // The rules that test the day against a profile (or, without one, its neighbours):
        // what would reject the day, and level steps that only flag it.
        let against = |pr: Option<&profile::Profile>| {
            let mut v = Vec::new();
            let mut soft = Vec::new();
            if let Some(t) = rules::zero_run(s, pr, p) {
                v.push((QcRule::ZeroRun, t));
            }
            if let Some(t) = rules::spike(s, pr, across, p) {
                v.push((QcRule::Spike, t));
            }
            let carries_on = |step: &rules::LevelStep| {
                let neighbour = if step.after_is_off() {
                    next_day
                } else {
                    prev_day
                };
                neighbour.and_then(|nd| {
                    // A holiday's (or its eve's) level is its own: running into one is no
                    // sign that a sensor stayed off.
                    if calendar.holiday(nd.date).is_some() {
                        return None;
                    }
                    let np = profile_of(*d, nd)?;
                    let hours = p.level_shift_min_side_hours;
                    let r = rules::edge_ratio(nd, np, hours, step.after_is_off());
                    Some(step.persists(r, p.level_shift_min_log_ratio))
                }) == Some(true)
            };
            // A long off side is looked at first; a short one only counts when it carries on
            // into the neighbouring day (a fault that began late, or ended early).
            let step = pr.and_then(|pr| {
                rules::level_step(s, pr, p.level_shift_min_side_hours, p)
                    .or_else(|| rules::level_step(s, pr, 1, p).filter(|st| carries_on(st)))
            });
            // Both directions stepping together at about the same hour is traffic, not a
            // sensor: a storm, roadworks, an event or an incident moves both carriageways,
            // while a lost lane or a miscalibrated loop is one direction's.
            let together = |step: &rules::LevelStep| {
                let other = match d {
                    Direction::Fwd => Direction::Rev,
                    Direction::Rev => Direction::Fwd,
                    Direction::Both => return false,
                };
                let Some(os) = complete.get(&(other, *date)) else {
                    return false;
                };
                let Some(op) = profile_of(other, os) else {
                    return false;
                };
                rules::level_step(os, op, 1, p).is_some_and(|o| {
                    (o.after > o.before) == (step.after > step.before)
                        && o.slot.abs_diff(step.slot) <= BOTH_DIRECTIONS_STEP_HOURS
                })
            };
            if let Some(step) = step {
                let persists = carries_on(&step);
                let t = step.detail(s);
                if !short && !oneway && together(&step) {
                    soft.push((
                        QcRule::LevelShift,
                        format!(
                            "{t}; the other direction steps the same way within {BOTH_DIRECTIONS_STEP_HOURS} h (traffic: weather, roadworks, an event?)"
                        ),
                    ));
                } else if persists {
                    let side = if step.after_is_off() {
                        "next"
                    } else {
                        "previous"
                    };
                    v.push((
                        QcRule::LevelShift,
                        format!("{t}; {CARRIES_ON} the {side} day"),
                    ));
                } else if short || step.off_share() >= p.level_shift_min_off_share {
                    // A short count has too few days of its own to show whether a step
                    // persists: any step of a long enough off side rejects its day.
                    v.push((QcRule::LevelShift, t));
                } else {
                    soft.push((
                        QcRule::LevelShift,
                        format!(
                            "{t}; the step holds {:.0} % of the day's typical volume and does not carry on into the {} day (an event, incident or weather?)",
                            step.off_share() * 100.0,
                            if step.after_is_off() { "next" } else { "previous" }
                        ),
                    ));
                }
            }
            (v, soft)
        };
        let (mut own, soft) = against(prof);
        if own
            .iter()
            .chain(&soft)
            .any(|(r, _)| *r == QcRule::LevelShift)
        {
            if let Some(st) = prof.and_then(|pr| rules::level_step(s, pr, 1, p)) {
                let up = st.after > st.before;
                steps.insert((*d, *date), StepMark { slot: st.slot, up });
            }
        }
        let holiday = calendar.holiday(*date);
        let mut holiday_list = Vec::new();
        if let Some(name) = holiday {
            // A level unusual for the day type is the holiday's: flagged. Zero runs and
            // single-hour spikes stay structural (a dead or glitching sensor is one on a
            // holiday too), and so does a step that carries on into the next day.
            let (unusual, structural_kinds): (Vec<_>, Vec<_>) = own
                .into_iter()
                .partition(|(r, t)| *r == QcRule::LevelShift && !t.contains(CARRIES_ON));
            own = structural_kinds;
            holiday_list = unusual
                .into_iter()
                .map(|(r, t)| (r, format!("{t}; {name} (holiday list)")))
                .collect();
        }
        let mut holiday_shape = Vec::new();
        if !own.is_empty() && prof.is_some() {
            // A holiday has the shape of another day type (a Sunday-like Thursday): when the
            // day passes against such a profile, its findings are flagged, not rejected.
            let other = profiles
                .get(&(*d, s.measure))
                .map(|ps| ps.other_day_types(*date))
                .unwrap_or_default()
                .into_iter()
                .find(|o| {
                    // It must fit that profile clearly better in shape, too.
                    let own_misfit = prof.map_or(0.0, |pr| rules::misfit(s, pr, p));
                    against(Some(o)).0.is_empty() && 2.0 * rules::misfit(s, o, p) < own_misfit
                });
            if let Some(o) = other {
                holiday_shape = own
                    .iter()
                    .map(|(r, t)| (*r, format!("{t}; fits the {} profile (holiday?)", o.label)))
                    .collect();
            } else {
                structural.extend(own);
            }
        } else {
            structural.extend(own);
        }
        if !structural.is_empty() {
            rejected.insert((*d, *date));
        }
        for (rule, t) in structural {
            push(rule, QcAction::Rejected, t);
        }
        for (rule, t) in holiday_shape.into_iter().chain(holiday_list).chain(soft) {
            push(rule, QcAction::Flagged, t);
        }
        if !rejected.contains(&(*d, *date)) {
            if let Some(pr) = prof {
                let e: f64 = pr.expected(s).iter().sum();
                if e > 0.0 {
                    levels.push((*d, *date, s.total() / e));
                }
            }
        }
    }
    // Daily totals against the typical day, at the seasonal level of the neighbouring days.
    // `levels` is in (direction, date) order, so a day's neighbours within the window are
    // one run of it: found by binary search, in the same order as a scan would find them.
    let window = p.daily_deviation_window_days as i64;
    let keys: Vec<(Direction, i64)> = levels
        .iter()
        .map(|(d, date, _)| (*d, i64::from(date.num_days_from_ce())))
        .collect();
    debug_assert!(keys.is_sorted());
    for (i, &(d, date, _)) in levels.iter().enumerate() {
        let day = keys[i].1;
        let lo = keys.partition_point(|k| *k < (d, day - window));
        let hi = keys.partition_point(|k| *k <= (d, day + window));
        let near: Vec<f64> = (lo..hi).filter(|&j| j != i).map(|j| levels[j].2).collect();
        let season = if window > 0 && near.len() >= p.profile_min_days {
            rules::median_of(near)
        } else {
            1.0
        };
        let s = &complete[&(d, date)];
        if let Some(t) = profile_of(d, s).and_then(|pr| rules::daily_deviation(s, pr, season, p)) {
            out.push(QcFinding {
                station,
                direction: d,
                date,
                rule: QcRule::DailyDeviation,
                action: QcAction::Flagged,
                detail: t,
            });
        }
    }
    // Both directions of a day.
    if !oneway {
        two_direction_rules(station, &complete, &rejected, &profile_of, p, &mut out);
    }
    // Classes.
    class_rules(station, &classified, &complete, &rejected, p, &mut out);
    Checked {
        findings: out,
        direction_days: count,
        steps,
    }
}

/// fwd/rev pairs of complete days with the same measure and length.
fn direction_pairs(
    complete: &BTreeMap<(Direction, NaiveDate), DaySeries>,
) -> Vec<(&DaySeries, &DaySeries)> {
    complete
        .iter()
        .filter(|((d, _), _)| *d == Direction::Fwd)
        .filter_map(|((_, date), f)| {
            let r = complete.get(&(Direction::Rev, *date))?;
            (r.measure == f.measure && r.values.len() == f.values.len()).then_some((f, r))
        })
        .collect()
}

fn swapped_rules<'a>(
    station: usize,
    complete: &BTreeMap<(Direction, NaiveDate), DaySeries>,
    profile_of: &ProfileLookup<'a>,
    p: &QcParams,
    rejected: &mut HashSet<(Direction, NaiveDate)>,
    out: &mut Vec<QcFinding>,
) {
    for (f, r) in direction_pairs(complete) {
        let (Some(pf), Some(pr)) = (profile_of(Direction::Fwd, f), profile_of(Direction::Rev, r))
        else {
            continue;
        };
        let same = rules::misfit(f, pf, p) + rules::misfit(r, pr, p);
        let swap = rules::misfit(f, pr, p) + rules::misfit(r, pf, p);
        if same > swap * p.swap_min_misfit_ratio && same - swap > p.swap_min_misfit_gain {
            let detail = format!(
                "hourly shapes fit the other direction's profile: misfit {same:.0} as recorded, {swap:.0} with fwd and rev exchanged (chi-square over {} hours)",
                2 * f.values.len()
            );
            for d in [Direction::Fwd, Direction::Rev] {
                rejected.insert((d, f.date));
                out.push(QcFinding {
                    station,
                    direction: d,
                    date: f.date,
                    rule: QcRule::SwappedDirections,
                    action: QcAction::Rejected,
                    detail: detail.clone(),
                });
            }
        }
    }
}

type ProfileLookup<'a> = dyn Fn(Direction, &DaySeries) -> Option<&'a profile::Profile> + 'a;

fn two_direction_rules<'a>(
    station: usize,
    complete: &BTreeMap<(Direction, NaiveDate), DaySeries>,
    rejected: &HashSet<(Direction, NaiveDate)>,
    profile_of: &ProfileLookup<'a>,
    p: &QcParams,
    out: &mut Vec<QcFinding>,
) {
    let pairs: Vec<(&DaySeries, &DaySeries)> = direction_pairs(complete)
        .into_iter()
        .filter(|(f, _)| {
            !rejected.contains(&(Direction::Fwd, f.date))
                && !rejected.contains(&(Direction::Rev, f.date))
        })
        .collect();
    let share = |f: &DaySeries, r: &DaySeries| {
        let t = f.total() + r.total();
        (t > 0.0).then(|| f.total() / t)
    };
    let shares: Vec<f64> = pairs.iter().filter_map(|(f, r)| share(f, r)).collect();
    let typical_share =
        (shares.len() >= p.profile_min_days_pooled).then(|| rules::median_of(shares));
    for (f, r) in pairs {
        let date = f.date;
        let mut finding = |d, rule, action, detail: String| {
            out.push(QcFinding {
                station,
                direction: d,
                date,
                rule,
                action,
                detail,
            })
        };
        let Some(sh) = share(f, r) else { continue };
        let (fires, why) = match typical_share {
            Some(t) => (
                (sh - t).abs() > p.directional_max_share_change,
                format!("the typical {:.0} %", t * 100.0),
            ),
            None => (
                sh.max(1.0 - sh) > p.directional_max_share,
                format!(
                    "at most {:.0} % either way",
                    p.directional_max_share * 100.0
                ),
            ),
        };
        if fires {
            // Report on the direction that moved most from its own typical total, or else
            // the lighter one (a failing detector usually undercounts).
            let dev = |s: &DaySeries, d| {
                profile_of(d, s).map(|pr| {
                    let e: f64 = pr.expected(s).iter().sum();
                    ((s.total() + 1.0) / (e + 1.0)).ln().abs()
                })
            };
            let d = match (dev(f, Direction::Fwd), dev(r, Direction::Rev)) {
                (Some(a), Some(b)) if a >= b => Direction::Fwd,
                (Some(_), Some(_)) => Direction::Rev,
                _ if f.total() <= r.total() => Direction::Fwd,
                _ => Direction::Rev,
            };
            finding(
                d,
                QcRule::DirectionalImbalance,
                QcAction::Flagged,
                format!(
                    "fwd carries {:.0} % of the two-way total {:.0} {} (against {why})",
                    sh * 100.0,
                    f.total() + r.total(),
                    f.measure.unit()
                ),
            );
        }
    }
}

fn class_rules(
    station: usize,
    classified: &BTreeMap<(Direction, NaiveDate), &crate::model::DirectionDay>,
    complete: &BTreeMap<(Direction, NaiveDate), DaySeries>,
    rejected: &HashSet<(Direction, NaiveDate)>,
    p: &QcParams,
    out: &mut Vec<QcFinding>,
) {
    let heavy_share = |dd: &crate::model::DirectionDay| {
        let t: u64 = dd.classes.iter().sum();
        (t > 0).then(|| dd.classes[3..].iter().sum::<u64>() as f64 / t as f64)
    };
    for d in Direction::ALL {
        let days: Vec<(NaiveDate, &crate::model::DirectionDay)> = classified
            .iter()
            .filter(|((dd, date), _)| *dd == d && !rejected.contains(&(d, *date)))
            .map(|((_, date), dd)| (*date, *dd))
            .collect();
        let shares: Vec<f64> = days
            .iter()
            .filter(|(_, dd)| dd.class_quarters == dd.vehicle_quarters)
            .filter_map(|(_, dd)| heavy_share(dd))
            .collect();
        let typical = (shares.len() >= p.profile_min_days_pooled).then(|| rules::median_of(shares));
        for (date, dd) in days {
            if !complete.contains_key(&(d, date)) {
                continue;
            }
            let total: u64 = dd.classes.iter().sum();
            let light: u64 = dd.classes[..3].iter().sum();
            let veh: u64 = dd.vehicles.iter().map(|&v| v as u64).sum();
            let mut why = Vec::new();
            if dd.class_quarters != dd.vehicle_quarters {
                why.push(format!(
                    "{} of {} quarter-hours with vehicles are classified",
                    (dd.class_quarters & dd.vehicle_quarters).count_ones(),
                    dd.vehicle_quarters.count_ones()
                ));
            } else if total != veh {
                why.push(format!(
                    "classes sum to {total} veh but vehicles are {veh} veh"
                ));
            }
            if total > 0 {
                let ls = light as f64 / total as f64;
                if ls < p.class_min_light_share {
                    why.push(format!(
                        "classes 1-3 are {:.0} % of {total} classified veh (at least {:.0} % expected)",
                        ls * 100.0,
                        p.class_min_light_share * 100.0
                    ));
                }
                if let (Some(t), Some(h)) = (typical, heavy_share(dd)) {
                    if (h - t).abs() > p.class_max_heavy_share_change {
                        why.push(format!(
                            "heavy share (classes 4-13) {:.0} % against the typical {:.0} %",
                            h * 100.0,
                            t * 100.0
                        ));
                    }
                }
            }
            if !why.is_empty() {
                out.push(QcFinding {
                    station,
                    direction: d,
                    date,
                    rule: QcRule::ClassMismatch,
                    action: QcAction::Flagged,
                    detail: why.join("; "),
                });
            }
        }
    }
}

impl crate::model::views::DayFilter for QcOutput {
    fn excluded(&self, station: usize, date: NaiveDate, d: Direction) -> bool {
        self.is_rejected(station, date, d)
    }
}
