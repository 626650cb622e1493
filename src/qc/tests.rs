//! Rule tests on hand-made station-days from a synthetic commuter road.
//!
//! Expected outcomes come from the construction of the fixtures (a fault injected on a known
//! day), not from earlier output of this code.

use std::collections::BTreeMap;

use chrono::{Datelike, NaiveDate};
use rand::{Rng, SeedableRng};
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal, Poisson};

use super::*;
use crate::model::counts::hour_mask;
use crate::model::CountStore;
use crate::model::Network;
use crate::model::StationList;
use crate::model::{DayCounts, DirectionDay, CLASS_COUNT};

const OFFSET: i32 = -300;
const FIRST_SLOT: usize = 2;

/// Relative hourly weights of a direction: fwd has the morning peak on working days, rev
/// the evening one; weekends have one midday hump.
fn shape(dir: usize, weekday: u32, h: usize) -> f64 {
    let h = h as f64;
    let g = |c: f64, w: f64| (-(h - c).powi(2) / (2.0 * w * w)).exp();
    let day = g(13.0, 4.0);
    if weekday >= 5 {
        return 0.05 + 1.5 * day;
    }
    let (am, pm) = if dir == 0 { (3.0, 1.0) } else { (1.0, 3.0) };
    0.05 + day + am * g(8.0, 1.2) + pm * g(17.0, 1.5)
}

/// Expected hourly volumes of a day (24 clock hours) for a station of `daily` veh/day/direction.
fn profile(dir: usize, weekday: u32, daily: f64) -> Vec<f64> {
    let w: Vec<f64> = (0..24).map(|h| shape(dir, weekday, h)).collect();
    let sum: f64 = w.iter().sum();
    let f = if weekday >= 5 { 0.75 } else { 1.0 };
    w.iter().map(|x| x / sum * daily * f).collect()
}

struct Synth {
    rng: ChaCha8Rng,
    daily: f64,
    day_noise: f64,
    /// Amplitude of a yearly sine of the level (0.2: +-20 % between seasons).
    seasonal: f64,
}

impl Synth {
    fn new(seed: u64, daily: f64) -> Synth {
        Synth {
            rng: ChaCha8Rng::seed_from_u64(seed),
            daily,
            day_noise: 0.08,
            seasonal: 0.0,
        }
    }

    /// One clean day: both directions, 24 hours, day factor x Poisson noise.
    fn day_values(&mut self, date: NaiveDate) -> [Vec<u32>; 2] {
        let wd = date.weekday().num_days_from_monday();
        let season =
            1.0 + self.seasonal * (date.ordinal() as f64 / 365.0 * std::f64::consts::TAU).sin();
        let factor = Normal::new(1.0, self.day_noise)
            .unwrap()
            .sample(&mut self.rng)
            .max(0.5)
            * season;
        [0, 1].map(|d| {
            profile(d, wd, self.daily)
                .iter()
                .map(|&m| {
                    let lam = m * factor;
                    if lam <= 0.0 {
                        0
                    } else {
                        Poisson::new(lam).unwrap().sample(&mut self.rng) as u32
                    }
                })
                .collect()
        })
    }
}

/// A DayCounts with the given hourly vehicles per direction (23, 24 or 25 values; `None`
/// hours are missing).
fn day_counts(date: NaiveDate, dirs: &[(Direction, Vec<Option<u32>>)]) -> DayCounts {
    let n = dirs[0].1.len();
    let mut day = DayCounts::new(0, date, OFFSET);
    let last_offset = OFFSET - (n as i32 - 24) * 60;
    day.earliest = (FIRST_SLOT * 4, OFFSET);
    day.latest = ((FIRST_SLOT + n) * 4 - 1, last_offset);
    for (d, vals) in dirs {
        let mut dd = DirectionDay::default();
        for (k, v) in vals.iter().enumerate() {
            if let Some(v) = v {
                let slot = FIRST_SLOT + k;
                dd.covered |= hour_mask(slot);
                dd.vehicle_quarters |= hour_mask(slot);
                dd.vehicles[slot] = *v;
                dd.records += 1;
            }
        }
        day.dirs[d.index()] = Some(Box::new(dd));
    }
    day
}

fn full(v: &[u32]) -> Vec<Option<u32>> {
    v.iter().map(|&x| Some(x)).collect()
}

fn date0() -> NaiveDate {
    NaiveDate::from_ymd_opt(2025, 1, 6).unwrap() // a Monday
}

/// A station of `n` clean days from `date0`, with `edit` applied to the values of each day.
fn station(
    n: usize,
    seed: u64,
    daily: f64,
    mut edit: impl FnMut(usize, NaiveDate, &mut [Vec<u32>; 2]) -> Option<Vec<Option<u32>>>,
) -> BTreeMap<NaiveDate, DayCounts> {
    let mut s = Synth::new(seed, daily);
    let mut days = BTreeMap::new();
    for i in 0..n {
        let date = date0() + chrono::Duration::days(i as i64);
        let mut v = s.day_values(date);
        let fwd_override = edit(i, date, &mut v);
        let fwd = fwd_override.unwrap_or_else(|| full(&v[0]));
        let day = day_counts(
            date,
            &[(Direction::Fwd, fwd), (Direction::Rev, full(&v[1]))],
        );
        days.insert(date, day);
    }
    days
}

fn findings_on(f: &[QcFinding], date: NaiveDate) -> Vec<&QcFinding> {
    f.iter().filter(|x| x.date == date).collect()
}

fn rejected_on(f: &[QcFinding], date: NaiveDate, rule: QcRule) -> bool {
    f.iter()
        .any(|x| x.date == date && x.rule == rule && x.action == QcAction::Rejected)
}

const FAULT_DAY: usize = 37; // a Wednesday

fn run_with(
    edit: impl FnMut(usize, NaiveDate, &mut [Vec<u32>; 2]) -> Option<Vec<Option<u32>>>,
) -> (Vec<QcFinding>, NaiveDate) {
    let days = station(70, 7, 8000.0, edit);
    let (f, _) = check_station(0, &days, false, false, &QcParams::default());
    (f, date0() + chrono::Duration::days(FAULT_DAY as i64))
}

#[test]
fn clean_reference_day_has_no_rejection() {
    let (f, d) = run_with(|_, _, _| None);
    assert!(
        findings_on(&f, d)
            .iter()
            .all(|x| x.action != QcAction::Rejected),
        "{:?}",
        findings_on(&f, d)
    );
}

#[test]
fn flat_run_fires_on_a_stuck_sensor() {
    let (f, d) = run_with(|i, _, v| {
        if i == FAULT_DAY {
            let x = v[0][10];
            v[0][10..17].iter_mut().for_each(|y| *y = x);
        }
        None
    });
    assert!(
        rejected_on(&f, d, QcRule::FlatRun),
        "{:?}",
        findings_on(&f, d)
    );
    assert!(!f.iter().any(|x| x.rule == QcRule::FlatRun && x.date != d));
}

#[test]
fn zero_run_fires_on_a_dead_sensor_in_busy_hours() {
    let (f, d) = run_with(|i, _, v| {
        if i == FAULT_DAY {
            v[0][9..13].iter_mut().for_each(|y| *y = 0);
        }
        None
    });
    assert!(
        rejected_on(&f, d, QcRule::ZeroRun),
        "{:?}",
        findings_on(&f, d)
    );
    assert!(!f.iter().any(|x| x.rule == QcRule::ZeroRun && x.date != d));
}

#[test]
fn spike_fires_on_one_hour_times_six() {
    let (f, d) = run_with(|i, _, v| {
        if i == FAULT_DAY {
            v[0][14] *= 6;
        }
        None
    });
    assert!(
        rejected_on(&f, d, QcRule::Spike),
        "{:?}",
        findings_on(&f, d)
    );
    assert!(!f.iter().any(|x| x.rule == QcRule::Spike && x.date != d));
}

#[test]
fn level_shift_fires_on_a_day_that_halves_from_noon() {
    let (f, d) = run_with(|i, _, v| {
        if i == FAULT_DAY {
            v[0][12..].iter_mut().for_each(|y| *y /= 2);
        }
        None
    });
    assert!(
        rejected_on(&f, d, QcRule::LevelShift),
        "{:?}",
        findings_on(&f, d)
    );
    assert!(!f
        .iter()
        .any(|x| x.rule == QcRule::LevelShift && x.date != d));
}

#[test]
fn incomplete_fires_on_six_missing_hours() {
    let (f, d) = run_with(|i, _, v| {
        (i == FAULT_DAY).then(|| {
            let mut o = full(&v[0]);
            o[3..9].iter_mut().for_each(|y| *y = None);
            o
        })
    });
    assert!(
        rejected_on(&f, d, QcRule::Incomplete),
        "{:?}",
        findings_on(&f, d)
    );
    assert!(!f
        .iter()
        .any(|x| x.rule == QcRule::Incomplete && x.date != d));
}

#[test]
fn swapped_directions_reject_both_directions() {
    let (f, d) = run_with(|i, _, v| {
        if i == FAULT_DAY {
            v.swap(0, 1);
        }
        None
    });
    let hits: Vec<_> = f
        .iter()
        .filter(|x| x.rule == QcRule::SwappedDirections)
        .collect();
    assert_eq!(hits.len(), 2, "{hits:?}");
    assert!(hits
        .iter()
        .all(|x| x.date == d && x.action == QcAction::Rejected));
    assert_eq!(hits[0].direction, Direction::Fwd);
    assert_eq!(hits[1].direction, Direction::Rev);
}

#[test]
fn daily_deviation_and_imbalance_flag_a_direction_at_double_volume() {
    let (f, d) = run_with(|i, _, v| {
        if i == FAULT_DAY {
            v[0].iter_mut().for_each(|y| *y *= 2);
        }
        None
    });
    let on = findings_on(&f, d);
    assert!(on.iter().all(|x| x.action == QcAction::Flagged), "{on:?}");
    assert!(on.iter().any(|x| x.rule == QcRule::DailyDeviation));
    assert!(on
        .iter()
        .any(|x| x.rule == QcRule::DirectionalImbalance && x.direction == Direction::Fwd));
}

#[test]
fn holiday_at_sixty_percent_with_normal_shape_is_at_most_flagged() {
    let (f, d) = run_with(|i, _, v| {
        if i == FAULT_DAY {
            for dir in v.iter_mut() {
                dir.iter_mut()
                    .for_each(|y| *y = (*y as f64 * 0.6).round() as u32);
            }
        }
        None
    });
    let on = findings_on(&f, d);
    assert!(on.iter().all(|x| x.action == QcAction::Flagged), "{on:?}");
    assert!(on.iter().any(|x| x.rule == QcRule::DailyDeviation));
}

#[test]
fn holiday_with_a_sunday_shape_on_a_working_day_is_not_rejected() {
    let (f, d) = run_with(|i, _, v| {
        if i == FAULT_DAY {
            let mut s = Synth::new(99, 8000.0 * 0.8);
            let sunday = date0() + chrono::Duration::days(6);
            *v = s.day_values(sunday);
        }
        None
    });
    let on = findings_on(&f, d);
    assert!(on.iter().all(|x| x.action == QcAction::Flagged), "{on:?}");
}

#[test]
fn clock_change_days_of_23_and_25_hours_are_complete() {
    let mut s = Synth::new(3, 8000.0);
    let mut days = BTreeMap::new();
    for i in 0..40 {
        let date = date0() + chrono::Duration::days(i);
        let v = s.day_values(date);
        let fwd: Vec<Option<u32>>;
        let rev: Vec<Option<u32>>;
        match i {
            // Spring forward: the 02:00 hour does not exist.
            20 => {
                fwd = v[0]
                    .iter()
                    .enumerate()
                    .filter(|(h, _)| *h != 2)
                    .map(|(_, &x)| Some(x))
                    .collect();
                rev = v[1]
                    .iter()
                    .enumerate()
                    .filter(|(h, _)| *h != 2)
                    .map(|(_, &x)| Some(x))
                    .collect();
            }
            // Fall back: the 01:00 hour comes twice.
            27 => {
                let rep = |x: &Vec<u32>| {
                    let mut o: Vec<Option<u32>> = x.iter().map(|&y| Some(y)).collect();
                    o.insert(2, Some(x[1]));
                    o
                };
                fwd = rep(&v[0]);
                rev = rep(&v[1]);
            }
            _ => {
                fwd = full(&v[0]);
                rev = full(&v[1]);
            }
        }
        let day = day_counts(date, &[(Direction::Fwd, fwd), (Direction::Rev, rev)]);
        days.insert(date, day);
    }
    let spring = date0() + chrono::Duration::days(20);
    let fall = date0() + chrono::Duration::days(27);
    assert_eq!(days[&spring].day_hours().len(), 23);
    assert_eq!(days[&fall].day_hours().len(), 25);
    let (f, n) = check_station(0, &days, false, false, &QcParams::default());
    assert_eq!(n, 80);
    for d in [spring, fall] {
        let on = findings_on(&f, d);
        assert!(on.iter().all(|x| x.action != QcAction::Rejected), "{on:?}");
    }
}

#[test]
fn low_volume_night_zeros_and_repeats_do_not_fire() {
    // 300 veh/day/direction: night hours carry 0-3 vehicles.
    let days = station(70, 11, 300.0, |_, _, _| None);
    let night_zeros = days
        .values()
        .filter(|d| {
            d.dir(Direction::Fwd).unwrap().vehicles[FIRST_SLOT..FIRST_SLOT + 5].contains(&0)
        })
        .count();
    assert!(night_zeros > 10, "fixture should have night zeros");
    let (f, _) = check_station(0, &days, false, false, &QcParams::default());
    assert!(
        !f.iter()
            .any(|x| matches!(x.rule, QcRule::ZeroRun | QcRule::FlatRun)),
        "{f:?}"
    );
}

#[test]
fn short_count_without_profile_uses_neighbouring_hours() {
    let mut s = Synth::new(5, 6000.0);
    let date = date0() + chrono::Duration::days(1);
    let v = s.day_values(date);
    let mut spiky = v[0].clone();
    spiky[14] *= 8;
    let mut dead = v[1].clone();
    dead[9..13].iter_mut().for_each(|y| *y = 0);
    let mut days = BTreeMap::new();
    days.insert(
        date,
        day_counts(
            date,
            &[
                (Direction::Fwd, full(&spiky)),
                (Direction::Rev, full(&dead)),
            ],
        ),
    );
    let (f, _) = check_station(0, &days, false, false, &QcParams::default());
    assert!(f
        .iter()
        .any(|x| x.rule == QcRule::Spike && x.direction == Direction::Fwd));
    assert!(f
        .iter()
        .any(|x| x.rule == QcRule::ZeroRun && x.direction == Direction::Rev));
    // The clean twin day fires nothing structural.
    let mut days = BTreeMap::new();
    days.insert(
        date,
        day_counts(
            date,
            &[(Direction::Fwd, full(&v[0])), (Direction::Rev, full(&v[1]))],
        ),
    );
    let (f, _) = check_station(0, &days, false, false, &QcParams::default());
    assert!(f.is_empty(), "{f:?}");
}

#[test]
fn class_mismatch_flags_an_implausible_mix_only() {
    let mut s = Synth::new(9, 4000.0);
    let mut days = BTreeMap::new();
    for i in 0..10 {
        let date = date0() + chrono::Duration::days(i);
        let v = s.day_values(date);
        let mut day = day_counts(date, &[(Direction::Fwd, full(&v[0]))]);
        let dd = day.dirs[0].as_mut().unwrap();
        dd.class_quarters = dd.vehicle_quarters;
        let total: u64 = v[0].iter().map(|&x| x as u64).sum();
        let heavy = if i == 4 { total * 9 / 10 } else { total / 10 };
        let mut c = [0u64; CLASS_COUNT];
        c[1] = total - heavy;
        c[8] = heavy;
        dd.classes = c;
        days.insert(date, day);
    }
    let (f, _) = check_station(0, &days, true, false, &QcParams::default());
    let hits: Vec<_> = f
        .iter()
        .filter(|x| x.rule == QcRule::ClassMismatch)
        .collect();
    assert_eq!(hits.len(), 1, "{f:?}");
    assert_eq!(hits[0].date, date0() + chrono::Duration::days(4));
    assert_eq!(hits[0].action, QcAction::Flagged);
}

// ---------------------------------------------------------------- statistical acceptance

#[derive(Clone, Copy, Debug)]
enum Fault {
    Stuck,
    Dead,
    Spike,
    Shift,
    Partial,
    Swap,
}

/// Shares of the faulty fwd direction-days that got any finding and that were rejected.
fn caught_share(fault: Fault, seed: u64) -> (f64, f64, usize) {
    caught_share_at(fault, seed, 8000.0, false)
}

/// As [`caught_share`] on a road of `daily` veh/day/direction; `hard` puts faults anywhere in
/// the day and makes stuck runs 4-6 hours and dead runs 2-6 hours.
fn caught_share_at(fault: Fault, seed: u64, daily: f64, hard: bool) -> (f64, f64, usize) {
    let n_days = 250;
    let mut rng = ChaCha8Rng::seed_from_u64(seed ^ 0xfa17);
    // Every 5th day is faulty: 50 days.
    let faulty: Vec<usize> = (0..n_days).filter(|i| i % 5 == 2).collect();
    // A level-shift fault (lanes lost, a loop miscalibrated) lasts until the repair: it
    // carries on into the first 6-10 hours of the next day.
    let mut carry: Option<(f64, usize)> = None;
    let days = station(n_days, seed, daily, |i, date, v| {
        if let Some((k, hours)) = carry.take() {
            v[0][..hours]
                .iter_mut()
                .for_each(|y| *y = (*y as f64 * k).round() as u32);
            return None;
        }
        if i % 5 != 2 {
            return None;
        }
        let wd = date.weekday().num_days_from_monday();
        match fault {
            Fault::Stuck => {
                let (start, len) = if hard {
                    (rng.gen_range(0..=18), rng.gen_range(4..=6))
                } else {
                    (rng.gen_range(6..=14), rng.gen_range(5..=10))
                };
                let x = v[0][start].max(1);
                v[0][start..start + len].iter_mut().for_each(|y| *y = x);
            }
            Fault::Dead => {
                let (start, len) = if hard {
                    (rng.gen_range(6..=18), rng.gen_range(2..=6))
                } else {
                    (rng.gen_range(7..=14), rng.gen_range(3..=8))
                };
                v[0][start..start + len].iter_mut().for_each(|y| *y = 0);
            }
            Fault::Spike => {
                let h = if hard {
                    rng.gen_range(0..=23)
                } else {
                    rng.gen_range(6..=20)
                };
                let k = rng.gen_range(5.0..10.0);
                v[0][h] = (v[0][h] as f64 * k).round() as u32;
            }
            Fault::Shift => {
                let h = if hard {
                    rng.gen_range(1..=23)
                } else {
                    rng.gen_range(4..=20)
                };
                let k = if rng.gen_bool(0.5) { 0.5 } else { 1.6 };
                v[0][h..]
                    .iter_mut()
                    .for_each(|y| *y = (*y as f64 * k).round() as u32);
                carry = Some((k, rng.gen_range(6..=10)));
            }
            Fault::Partial => {
                let start = rng.gen_range(0..=16);
                let len = rng.gen_range(6..=8);
                let mut o = full(&v[0]);
                o[start..start + len].iter_mut().for_each(|y| *y = None);
                return Some(o);
            }
            Fault::Swap => {
                // Only working days have distinct directional shapes.
                if wd < 5 {
                    v.swap(0, 1);
                }
            }
        }
        None
    });
    let (f, _) = check_station(0, &days, false, false, &QcParams::default());
    let mut caught = 0;
    let mut rejected = 0;
    let mut total = 0;
    for i in faulty {
        let date = date0() + chrono::Duration::days(i as i64);
        if matches!(fault, Fault::Swap) && date.weekday().num_days_from_monday() >= 5 {
            continue;
        }
        total += 1;
        let on: Vec<&QcFinding> = f
            .iter()
            .filter(|x| x.date == date && x.direction == Direction::Fwd)
            .collect();
        caught += usize::from(!on.is_empty());
        rejected += usize::from(on.iter().any(|x| x.action == QcAction::Rejected));
        if std::env::var("QC_DEBUG").is_ok() && !on.iter().any(|x| x.action == QcAction::Rejected) {
            eprintln!("MISSED {fault:?} {date} {on:?}");
        }
    }
    eprintln!("{fault:?} at {daily} veh/day: {caught} caught, {rejected} rejected of {total}");
    (
        caught as f64 / total as f64,
        rejected as f64 / total as f64,
        total,
    )
}

#[test]
fn clean_days_are_rarely_rejected() {
    let mut rejected = 0;
    let mut total = 0;
    for (seed, daily) in [(21, 8000.0), (22, 2000.0), (23, 400.0)] {
        let days = station(200, seed, daily, |_, _, _| None);
        let (f, n) = check_station(0, &days, false, false, &QcParams::default());
        let r: HashSet<(NaiveDate, Direction)> = f
            .iter()
            .filter(|x| x.action == QcAction::Rejected)
            .map(|x| (x.date, x.direction))
            .collect();
        rejected += r.len();
        eprintln!(
            "daily {daily}: {} rejected of {n}; findings {}",
            r.len(),
            f.len()
        );
        total += n;
        assert!(
            (r.len() as f64) < 0.01 * n as f64,
            "daily {daily}: {} of {n} rejected: {:?}",
            r.len(),
            f.iter()
                .filter(|x| x.action == QcAction::Rejected)
                .collect::<Vec<_>>()
        );
    }
    assert_eq!(total, 1200);
    assert!(rejected <= 6);
}

#[test]
fn injected_faults_are_caught() {
    for fault in [
        Fault::Stuck,
        Fault::Dead,
        Fault::Spike,
        Fault::Shift,
        Fault::Partial,
        Fault::Swap,
    ] {
        let (share, rejected, n) = caught_share(fault, 31);
        assert!(n >= 30);
        assert!(
            share >= 0.95,
            "{fault:?}: caught {:.0} % of {n}",
            share * 100.0
        );
        // Every injected fault is structural, so it must be rejected, not only flagged. A
        // level shift that begins before 05:00 leaves too few normal hours to show a step
        // and looks like a whole-day change (flagged by daily_deviation): 90 % for shifts.
        let needed = if matches!(fault, Fault::Shift) {
            0.90
        } else {
            0.95
        };
        assert!(
            rejected >= needed,
            "{fault:?}: rejected {:.0} % of {n}",
            rejected * 100.0
        );
    }
}

#[test]
fn injected_faults_are_caught_on_a_quieter_road() {
    // 2000 veh/day/direction, faults anywhere in the day and shorter stuck runs.
    for fault in [Fault::Stuck, Fault::Dead, Fault::Spike, Fault::Swap] {
        let (share, _, n) = caught_share_at(fault, 41, 2000.0, true);
        assert!(
            share >= 0.95,
            "{fault:?}: caught {:.0} % of {n}",
            share * 100.0
        );
    }
    let (share, _, n) = caught_share_at(Fault::Shift, 41, 2000.0, false);
    assert!(share >= 0.95, "shift: caught {:.0} % of {n}", share * 100.0);
}

// ---------------------------------------------------------------- the whole stage

fn tiny_study() -> (CountStore, StationList, Network) {
    use crate::model::{Area, FunctionalClass, Node, NodeId, Segment, SegmentId, Station};
    use crate::model::{StationId, StationKind};
    let nodes = vec![
        Node {
            id: NodeId::from("a"),
            lon: 0.0,
            lat: 0.0,
        },
        Node {
            id: NodeId::from("b"),
            lon: 0.01,
            lat: 0.0,
        },
    ];
    let segments = vec![Segment {
        id: SegmentId::from("ab"),
        from: 0,
        to: 1,
        length_km: 1.2,
        functional_class: FunctionalClass::new(3).unwrap(),
        area: Area::Urban,
        lanes: 2,
        oneway: false,
        route: None,
        speed_limit_kph: None,
    }];
    let net = Network {
        node_index: nodes
            .iter()
            .enumerate()
            .map(|(i, n)| (n.id.clone(), i))
            .collect(),
        segment_index: [(SegmentId::from("ab"), 0)].into_iter().collect(),
        nodes,
        segments,
    };
    let listed = |id: &str, kind| Station {
        id: StationId::from(id),
        segment_id: SegmentId::from("ab"),
        segment: 0,
        kind,
    };
    let list = vec![
        listed("perm", StationKind::Continuous),
        listed("both", StationKind::Continuous),
        listed("axle", StationKind::Short),
    ];
    let stations = StationList {
        index: list
            .iter()
            .enumerate()
            .map(|(i, s)| (s.id.clone(), i))
            .collect(),
        stations: list,
        rejected: Default::default(),
    };
    // Station 0: fwd and rev, a dead sensor on day 37 in fwd.
    let perm = station(70, 7, 8000.0, |i, _, v| {
        if i == FAULT_DAY {
            v[0][9..13].iter_mut().for_each(|y| *y = 0);
        }
        None
    });
    // Station 1: `both` only, a spike on day 37.
    let mut s = Synth::new(8, 8000.0);
    let mut both = BTreeMap::new();
    for i in 0..70 {
        let date = date0() + chrono::Duration::days(i);
        let v = s.day_values(date);
        let mut sum: Vec<u32> = v[0].iter().zip(&v[1]).map(|(a, b)| a + b).collect();
        if i == FAULT_DAY as i64 {
            sum[15] *= 7;
        }
        let mut day = day_counts(date, &[(Direction::Both, full(&sum))]);
        day.station = 1;
        both.insert(date, day);
    }
    // Station 2: a 2-day axle count, the first day starting at 10:00 (incomplete).
    let mut axle = BTreeMap::new();
    for i in 0..2 {
        let date = date0() + chrono::Duration::days(100 + i);
        let v = s.day_values(date);
        let vals: Vec<Option<u32>> = v[0]
            .iter()
            .enumerate()
            .map(|(h, &x)| (i == 1 || h >= 10).then_some(2 * x + 3))
            .collect();
        let mut day = day_counts(date, &[(Direction::Fwd, vals)]);
        day.station = 2;
        let dd = day.dirs[0].as_mut().unwrap();
        dd.axles = dd.vehicles;
        dd.axle_quarters = dd.vehicle_quarters;
        dd.vehicles = [0; crate::model::MAX_DAY_HOURS];
        dd.vehicle_quarters = 0;
        axle.insert(date, day);
    }
    let store = CountStore {
        days: vec![perm, both, axle],
        ..Default::default()
    };
    (store, stations, net)
}

#[test]
fn run_rejects_faulty_direction_days_and_counts_outcomes() {
    let (store, stations, net) = tiny_study();
    let input = QcInput {
        counts: &store,
        stations: &stations,
        network: &net,
        history: &[],
    };
    let out = run(&input, &QcParams::default());
    let fault = date0() + chrono::Duration::days(FAULT_DAY as i64);
    assert!(out.is_rejected(0, fault, Direction::Fwd));
    assert!(!out.is_rejected(0, fault, Direction::Rev));
    assert!(out.is_rejected(1, fault, Direction::Both));
    let first_axle_day = date0() + chrono::Duration::days(100);
    // The partial first day of a short count is flagged, not rejected: its hours still enter
    // the count's 24-hour periods.
    assert!(!out.is_rejected(2, first_axle_day, Direction::Fwd));
    assert!(!out.is_rejected(
        2,
        first_axle_day + chrono::Duration::days(1),
        Direction::Fwd
    ));
    let axle_finding = out
        .findings
        .iter()
        .find(|f| f.station == 2)
        .expect("the partial axle day");
    assert_eq!(axle_finding.rule, QcRule::Incomplete);
    assert_eq!(axle_finding.action, QcAction::Flagged);
    assert!(
        axle_finding.detail.contains("axle"),
        "{}",
        axle_finding.detail
    );
    assert!(out
        .findings
        .iter()
        .any(|f| f.station == 1 && f.rule == QcRule::Spike && f.date == fault));
    // Sorted by station, date, direction, rule.
    let keys: Vec<_> = out
        .findings
        .iter()
        .map(|f| (f.station, f.date, f.direction, f.rule))
        .collect();
    let mut sorted = keys.clone();
    sorted.sort();
    assert_eq!(keys, sorted);
    let s = &out.summary;
    assert_eq!(s.direction_days, 140 + 70 + 2);
    assert_eq!(s.rejected, out.rejected.len());
    assert_eq!(s.clean + s.flagged + s.rejected, s.direction_days);
    let zero = s
        .by_rule
        .iter()
        .find(|(r, _)| *r == QcRule::ZeroRun)
        .unwrap()
        .1;
    assert_eq!(zero.rejected, 1);
    assert!(out.network.is_empty(), "{:?}", out.network);
    assert!(s.rejected <= 4, "{:?}", out.findings);
}

#[test]
fn single_day_short_counts_are_rarely_rejected() {
    // No profile: only the self-contained rules run, against neighbouring hours.
    for daily in [150.0, 400.0, 2000.0, 8000.0] {
        let mut s = Synth::new(77, daily);
        let mut rejected = 0;
        for i in 0..300 {
            let date = date0() + chrono::Duration::days(i);
            let v = s.day_values(date);
            let mut days = BTreeMap::new();
            days.insert(
                date,
                day_counts(
                    date,
                    &[(Direction::Fwd, full(&v[0])), (Direction::Rev, full(&v[1]))],
                ),
            );
            let (f, _) = check_station(0, &days, false, false, &QcParams::default());
            let r: HashSet<Direction> = f
                .iter()
                .filter(|x| x.action == QcAction::Rejected)
                .map(|x| x.direction)
                .collect();
            rejected += r.len();
        }
        assert!(rejected < 6, "{daily} veh/day: {rejected} of 600 rejected");
    }
}

#[test]
fn three_day_short_counts_are_rarely_rejected() {
    // A pooled profile of three days, which may mix working days and weekend days.
    let mut rejected = 0;
    let mut total = 0;
    for daily in [400.0, 2000.0, 8000.0] {
        let mut s = Synth::new(78, daily);
        for i in 0..100 {
            let mut days = BTreeMap::new();
            for k in 0..3 {
                let date = date0() + chrono::Duration::days(i + k);
                let v = s.day_values(date);
                let d = day_counts(
                    date,
                    &[(Direction::Fwd, full(&v[0])), (Direction::Rev, full(&v[1]))],
                );
                days.insert(date, d);
            }
            let (f, n) = check_station(0, &days, false, false, &QcParams::default());
            let r: HashSet<(NaiveDate, Direction)> = f
                .iter()
                .filter(|x| x.action == QcAction::Rejected)
                .map(|x| (x.date, x.direction))
                .collect();
            rejected += r.len();
            total += n;
        }
    }
    eprintln!("three-day short counts: {rejected} of {total} rejected");
    assert!(
        (rejected as f64) < 0.01 * total as f64,
        "{rejected} of {total} rejected"
    );
}

#[test]
fn faults_on_three_day_short_counts_are_caught() {
    // Tuesday to Thursday counts (TMG's preferred short-count days), the fault on Wednesday.
    let mut rng = ChaCha8Rng::seed_from_u64(5);
    for fault in [
        Fault::Stuck,
        Fault::Dead,
        Fault::Spike,
        Fault::Shift,
        Fault::Swap,
    ] {
        let mut s = Synth::new(79, 4000.0);
        let mut caught = 0;
        for week in 0..40 {
            let mut days = BTreeMap::new();
            let wed = date0() + chrono::Duration::days(7 * week + 2);
            for k in -1..=1 {
                let date = wed + chrono::Duration::days(k);
                let mut v = s.day_values(date);
                if k == 0 {
                    match fault {
                        Fault::Stuck => {
                            let (a, n) = (rng.gen_range(6..=14), rng.gen_range(5..=10));
                            let x = v[0][a];
                            v[0][a..a + n].iter_mut().for_each(|y| *y = x);
                        }
                        Fault::Dead => {
                            let (a, n) = (rng.gen_range(7..=14), rng.gen_range(3..=8));
                            v[0][a..a + n].iter_mut().for_each(|y| *y = 0);
                        }
                        Fault::Spike => {
                            let h = rng.gen_range(6..=20);
                            v[0][h] = (v[0][h] as f64 * rng.gen_range(5.0..10.0)) as u32;
                        }
                        Fault::Shift => {
                            let h = rng.gen_range(4..=20);
                            let f = if rng.gen_bool(0.5) { 0.5 } else { 1.6 };
                            v[0][h..]
                                .iter_mut()
                                .for_each(|y| *y = (*y as f64 * f) as u32);
                        }
                        _ => v.swap(0, 1),
                    }
                }
                let d = day_counts(
                    date,
                    &[(Direction::Fwd, full(&v[0])), (Direction::Rev, full(&v[1]))],
                );
                days.insert(date, d);
            }
            let (f, _) = check_station(0, &days, false, true, &QcParams::default());
            if f.iter().any(|x| {
                x.date == wed && x.direction == Direction::Fwd && x.action == QcAction::Rejected
            }) {
                caught += 1;
            }
        }
        eprintln!("three-day {fault:?}: {caught} of 40 rejected");
        assert!(caught >= 36, "{fault:?}: {caught} of 40 rejected");
    }
}

#[test]
fn seasonal_level_changes_are_not_faults() {
    let mut s = Synth::new(80, 4000.0);
    s.seasonal = 0.25;
    let mut days = BTreeMap::new();
    for i in 0..365 {
        let date = date0() + chrono::Duration::days(i);
        let v = s.day_values(date);
        let d = day_counts(
            date,
            &[(Direction::Fwd, full(&v[0])), (Direction::Rev, full(&v[1]))],
        );
        days.insert(date, d);
    }
    let (f, n) = check_station(0, &days, false, false, &QcParams::default());
    let rejected = f.iter().filter(|x| x.action == QcAction::Rejected).count();
    let flagged = f
        .iter()
        .filter(|x| x.rule == QcRule::DailyDeviation)
        .count();
    assert!(rejected < n / 100, "{rejected} of {n} rejected");
    // 8 % day noise against a 20 % threshold: a few per cent, not the seasonal swing.
    assert!(flagged < n * 3 / 100, "{flagged} of {n} flagged");
}

/// An event evening (x2 from 19:00 to midnight, back to normal the next morning) is real
/// traffic: the level step is flagged, never rejected. The same step that carries on into the
/// next morning (a sensor fault until its repair) is rejected.
#[test]
fn an_event_evening_is_flagged_and_a_step_that_persists_is_rejected() {
    let event = date0() + chrono::Duration::days(100);
    let days = station(200, 41, 8000.0, |i, _, v| {
        if i == 100 {
            v[0][19..].iter_mut().for_each(|y| *y *= 2);
        }
        None
    });
    let (f, _) = check_station(0, &days, false, false, &QcParams::default());
    let on: Vec<&QcFinding> = findings_on(&f, event);
    assert!(on.iter().all(|x| x.action == QcAction::Flagged), "{on:?}");
    assert!(on.iter().any(|x| x.rule == QcRule::LevelShift), "{on:?}");
    let fault = date0() + chrono::Duration::days(120);
    let days = station(200, 41, 8000.0, |i, _, v| {
        if i == 120 {
            v[0][15..].iter_mut().for_each(|y| *y /= 2);
        }
        if i == 121 {
            v[0][..9].iter_mut().for_each(|y| *y /= 2);
        }
        None
    });
    let (f, _) = check_station(0, &days, false, false, &QcParams::default());
    assert!(
        rejected_on(&f, fault, QcRule::LevelShift),
        "{:?}",
        findings_on(&f, fault)
    );
}

/// Thanksgiving 2025 (27 November, the fourth Thursday; US federal holiday) with a holiday's
/// morning drop to 40 % until noon: flagged as the holiday it is, not rejected; the same day
/// without a holiday list is rejected.
#[test]
fn a_listed_holiday_is_flagged_not_rejected() {
    let holiday = NaiveDate::from_ymd_opt(2025, 11, 27).unwrap();
    let i_of = (holiday - date0()).num_days() as usize;
    let days = station(i_of + 30, 43, 8000.0, |i, _, v| {
        if i == i_of {
            v[0][..12].iter_mut().for_each(|y| *y = *y * 2 / 5);
        }
        None
    });
    let (f, _) = check_station(0, &days, false, false, &QcParams::default());
    let on = findings_on(&f, holiday);
    assert!(
        !on.is_empty() && on.iter().all(|x| x.action == QcAction::Flagged),
        "{on:?}"
    );
    assert!(
        on.iter().any(|x| x.detail.contains("thanksgiving")),
        "{on:?}"
    );
    let none = QcParams {
        holidays: Vec::new(),
        ..QcParams::default()
    };
    let (f, _) = check_station(0, &days, false, false, &none);
    assert!(
        rejected_on(&f, holiday, QcRule::LevelShift),
        "{:?}",
        findings_on(&f, holiday)
    );
}

// ---- Short counts against the permanent counters' reference (see `short`) ----

/// A short count of `n` days from `start` (fwd and rev, 24 hours each) drawn from `synth`,
/// with `edit` applied to the values of day `i`.
fn short_count(
    synth: &mut Synth,
    station: usize,
    start: NaiveDate,
    n: usize,
    mut edit: impl FnMut(usize, &mut [Vec<u32>; 2]),
) -> BTreeMap<NaiveDate, DayCounts> {
    let mut days = BTreeMap::new();
    for i in 0..n {
        let date = start + chrono::Duration::days(i as i64);
        let mut v = synth.day_values(date);
        edit(i, &mut v);
        let mut day = day_counts(
            date,
            &[(Direction::Fwd, full(&v[0])), (Direction::Rev, full(&v[1]))],
        );
        day.station = station;
        days.insert(date, day);
    }
    days
}

/// Runs the stage over one permanent counter (70 clean days, the reference) and `shorts`,
/// all on the segment of [`tiny_study`].
fn run_short(
    shorts: Vec<BTreeMap<NaiveDate, DayCounts>>,
    history: &[crate::model::HistoryRecord],
) -> QcOutput {
    use crate::model::{SegmentId, Station, StationId, StationKind};
    let (_, _, net) = tiny_study();
    let mut list = vec![Station {
        id: StationId::from("perm"),
        segment_id: SegmentId::from("ab"),
        segment: 0,
        kind: StationKind::Continuous,
    }];
    for i in 0..shorts.len() {
        list.push(Station {
            id: StationId::from(format!("s{i}").as_str()),
            segment_id: SegmentId::from("ab"),
            segment: 0,
            kind: StationKind::Short,
        });
    }
    let stations = StationList {
        index: list
            .iter()
            .enumerate()
            .map(|(i, s)| (s.id.clone(), i))
            .collect(),
        stations: list,
        rejected: Default::default(),
    };
    let mut days = vec![station(70, 7, 8000.0, |_, _, _| None)];
    days.extend(shorts);
    let store = CountStore {
        days,
        ..Default::default()
    };
    let input = QcInput {
        counts: &store,
        stations: &stations,
        network: &net,
        history,
    };
    run(&input, &QcParams::default())
}

/// A Tuesday three weeks after `date0`.
fn short_start() -> NaiveDate {
    date0() + chrono::Duration::days(22)
}

fn short_findings(out: &QcOutput, station: usize) -> Vec<&QcFinding> {
    out.findings
        .iter()
        .filter(|f| f.station == station)
        .collect()
}

#[test]
fn short_count_with_a_whole_day_of_zeros_is_rejected_and_a_clean_one_is_not() {
    // A 48-hour count whose second fwd day is all zeros (a cut tube): no profile of its
    // own, the zeros are implausible against the reference at the count's level.
    let mut s = Synth::new(90, 3000.0);
    let dead = short_count(&mut s, 1, short_start(), 2, |i, v| {
        if i == 1 {
            v[0].iter_mut().for_each(|x| *x = 0);
        }
    });
    let clean = short_count(&mut s, 2, short_start(), 2, |_, _| {});
    let out = run_short(vec![dead, clean], &[]);
    let day2 = short_start() + chrono::Duration::days(1);
    assert!(
        out.is_rejected(1, day2, Direction::Fwd),
        "{:?}",
        short_findings(&out, 1)
    );
    assert!(short_findings(&out, 1)
        .iter()
        .any(|f| f.rule == QcRule::ZeroRun && f.date == day2));
    assert!(!out.is_rejected(1, short_start(), Direction::Fwd));
    assert!(
        !out.rejected.iter().any(|k| k.0 == 2),
        "clean count rejected: {:?}",
        short_findings(&out, 2)
    );
}

#[test]
fn short_count_with_a_four_hour_spike_is_rejected() {
    // One day (24 h), fwd hours 10-13 x 6: each hour is a neighbour of another spike hour,
    // so only the reference shows them.
    let mut s = Synth::new(91, 3000.0);
    let spike = short_count(&mut s, 1, short_start(), 1, |_, v| {
        v[0][10..14].iter_mut().for_each(|x| *x *= 6);
    });
    let out = run_short(vec![spike], &[]);
    assert!(out.is_rejected(1, short_start(), Direction::Fwd));
    assert!(short_findings(&out, 1)
        .iter()
        .any(|f| f.rule == QcRule::Spike && f.action == QcAction::Rejected));
    assert!(!out.is_rejected(1, short_start(), Direction::Rev));
}

#[test]
fn short_count_with_a_nine_hour_flat_run_is_rejected() {
    let mut s = Synth::new(92, 600.0);
    let stuck = short_count(&mut s, 1, short_start(), 1, |_, v| {
        let x = v[0][8];
        v[0][8..17].iter_mut().for_each(|y| *y = x);
    });
    let out = run_short(vec![stuck], &[]);
    assert!(out.is_rejected(1, short_start(), Direction::Fwd));
    assert!(short_findings(&out, 1)
        .iter()
        .any(|f| f.rule == QcRule::FlatRun));
}

#[test]
fn short_count_level_step_is_caught() {
    // Two days; the second fwd day halves from 11:00 (a tube moved off a lane).
    let mut s = Synth::new(93, 3000.0);
    let step = short_count(&mut s, 1, short_start(), 2, |i, v| {
        if i == 1 {
            v[0][11..].iter_mut().for_each(|x| *x /= 2);
        }
    });
    let out = run_short(vec![step], &[]);
    let day2 = short_start() + chrono::Duration::days(1);
    let f = short_findings(&out, 1);
    assert!(
        f.iter().any(|x| x.rule == QcRule::LevelShift
            && x.date == day2
            && x.direction == Direction::Fwd),
        "{f:?}"
    );
    assert!(!out.is_rejected(1, short_start(), Direction::Fwd));
}

#[test]
fn short_count_with_a_swapped_day_rejects_that_day_only() {
    // Three working days; fwd and rev exchanged on the middle one.
    let mut s = Synth::new(94, 3000.0);
    let swap = short_count(&mut s, 1, short_start(), 3, |i, v| {
        if i == 1 {
            v.swap(0, 1);
        }
    });
    let out = run_short(vec![swap], &[]);
    let day2 = short_start() + chrono::Duration::days(1);
    for d in [Direction::Fwd, Direction::Rev] {
        assert!(out.findings.iter().any(|f| f.station == 1
            && f.date == day2
            && f.direction == d
            && f.rule == QcRule::SwappedDirections
            && f.action == QcAction::Rejected));
        assert!(!out.is_rejected(1, short_start(), d));
    }
}

#[test]
fn short_count_day_far_from_its_other_days_is_flagged_not_rejected() {
    // The third day at 60 % in both directions with a normal shape (a storm, an event
    // elsewhere): unusual but plausible.
    let mut s = Synth::new(95, 3000.0);
    let low = short_count(&mut s, 1, short_start(), 3, |i, v| {
        if i == 2 {
            for d in v.iter_mut() {
                d.iter_mut().for_each(|x| *x = (*x as f64 * 0.6) as u32);
            }
        }
    });
    let out = run_short(vec![low], &[]);
    let day3 = short_start() + chrono::Duration::days(2);
    assert!(out.findings.iter().any(|f| f.station == 1
        && f.date == day3
        && f.rule == QcRule::CountDays
        && f.action == QcAction::Flagged));
    assert!(
        !out.rejected.iter().any(|k| k.0 == 1),
        "{:?}",
        short_findings(&out, 1)
    );
}

#[test]
fn short_count_far_from_the_segment_history_is_flagged() {
    let mut s = Synth::new(96, 3000.0);
    let c = short_count(&mut s, 1, short_start(), 2, |_, _| {});
    let history = |aadt| {
        vec![crate::model::HistoryRecord {
            segment: 0,
            year: 2023,
            aadt,
        }]
    };
    // About 6000 veh/day two-way against 18 000 published: flagged; against 6000: silent.
    let far = run_short(vec![c.clone()], &history(18_000.0));
    assert!(far.findings.iter().any(|f| f.station == 1
        && f.rule == QcRule::HistoryLevel
        && f.action == QcAction::Flagged));
    assert!(!far.rejected.iter().any(|k| k.0 == 1));
    let near = run_short(vec![c], &history(6000.0));
    assert!(!near.findings.iter().any(|f| f.rule == QcRule::HistoryLevel));
}

#[test]
fn plausible_short_counts_are_rarely_rejected() {
    // 24-, 48- and 72-hour clean counts at four volumes against the reference counter.
    let mut shorts = Vec::new();
    for (k, daily) in [300.0, 1000.0, 3000.0, 9000.0].into_iter().enumerate() {
        let mut s = Synth::new(97 + k as u64, daily);
        for i in 0..30 {
            let start = short_start() + chrono::Duration::days(7 * (i % 6) as i64);
            shorts.push(short_count(
                &mut s,
                shorts.len() + 1,
                start,
                1 + i % 3,
                |_, _| {},
            ));
        }
    }
    let days: usize = shorts.iter().map(|c| 2 * c.len()).sum();
    let out = run_short(shorts, &[]);
    let rejected = out.rejected.iter().filter(|k| k.0 > 0).count();
    assert!(
        (rejected as f64) <= 0.01 * days as f64,
        "{rejected} of {days} clean short-count direction-days rejected: {:?}",
        out.findings
            .iter()
            .filter(|f| f.station > 0 && f.action == QcAction::Rejected)
            .collect::<Vec<_>>()
    );
}
