//! Short counts with gaps and partial days: filling isolated missing hours and cutting the
//! count into 24-hour periods.
//!
//! # Method
//! A count's hours run from its first to its last counted clock hour over consecutive local
//! dates ([`Slot`]s); hours before the first and after the last are outside the count, so a
//! count started at noon simply begins at 12:00. Inside, a run of at most `max_gap_hours`
//! missing hours with counted hours on both sides is filled ([`fill`]):
//! - from the count's own other days at the same clock hour *k*, each scaled to the level of
//!   the missing hour's day: `v̂ = mean_D' v_D'(k) · r_D'`, `r_D' = Σ_N v / Σ_N v_D'` over the
//!   counted neighbouring hours N (within ±3 h) that day D' has too (`r = 1` when none);
//! - else from the factor group's weekday hourly profile *p* (shares of the day) scaled to the
//!   counted neighbouring hours: `v̂ = p_k · Σ_N v / Σ_N p`;
//! - else (no profile) by linear interpolation between the counted hours either side.
//!
//! Longer runs (a sensor down for a morning, a day quality control rejected) stay open.
//! Periods ([`cut`]) are taken greedily from the first hour: 24 consecutive slots form a
//! period when every slot is counted or filled and at most `max_filled_per_period` are
//! filled; otherwise the window moves on by one hour. A period that spans midnight is factored
//! with each day's hours under that day's factor (see [`super::CountPeriod`]); hours left
//! after the last full period are not used.
//!
//! An hour with one direction counted and the other rejected or missing (a per-direction
//! count on a two-way road) is no gap: its two-way volume is that direction's volume over
//! its share of the two-way volume (see [`super::stage`]), marked
//! [`Slot::one_direction`], and it counts towards no filled-hours limit.
//!
//! # Interval
//! The filled volume `F_p` of period *p* (of volume `V_p`) is taken to have relative error
//! `cv_fill` (the filled hours of one period as fully correlated, which is conservative), so
//! the period's log error gains `(F_p / V_p) · cv_fill`; periods are independent, so the mean
//! of *n* periods gains the variance `Σ_p (F_p / V_p)² · cv_fill² / n²`
//! ([`part_variance`]). The volume `O_p` estimated from one direction adds
//! `Σ_p (O_p / V_p)² · cv_dir² / n²` in the same way.
//!
//! # Units
//! Volumes are two-way vehicles (or axle hits) per clock hour.

use chrono::NaiveDate;

use super::CountPeriod;

/// Counted neighbours looked at on each side of a missing hour.
const NEIGHBOUR_HOURS: usize = 3;

/// One clock hour of a count on its local date.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Slot {
    /// Local date.
    pub date: NaiveDate,
    /// Clock hour from local midnight (0..23; 24 on the repeated hour of a 25-hour day).
    pub hour: usize,
    /// Two-way volume, `None` where not counted (or left out by quality control).
    pub volume: Option<f64>,
    /// Whether `volume` was estimated from one direction (the other rejected or missing).
    pub one_direction: bool,
}

/// How a missing hour was filled.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum FillSource {
    /// Counted, not filled.
    Counted,
    /// From the count's own other days at that hour.
    OwnDays,
    /// From the group's hourly profile scaled to the neighbouring hours.
    GroupProfile,
    /// Linear between the neighbouring hours (no profile).
    Interpolated,
    /// Not filled (a longer gap).
    Open,
}

/// The rule for filling gaps and cutting periods.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GapRule {
    /// Longest run of consecutive missing hours that is filled.
    pub max_gap_hours: usize,
    /// Most filled hours in one 24-hour period.
    pub max_filled_per_period: usize,
}

/// Hourly volumes with gaps filled, and where each came from.
#[derive(Debug, Clone, PartialEq)]
pub struct FilledHours {
    /// Volume per slot (`None` where the gap stays open).
    pub volume: Vec<Option<f64>>,
    /// Source per slot.
    pub source: Vec<FillSource>,
}

/// Fills the short gaps of `slots` (one run of consecutive dates, trimmed to its counted
/// hours); see the module docs.
pub fn fill(slots: &[Slot], profile: Option<&[f64; 24]>, max_gap_hours: usize) -> FilledHours {
    let n = slots.len();
    let mut volume: Vec<Option<f64>> = slots.iter().map(|s| s.volume).collect();
    let mut source: Vec<FillSource> = slots
        .iter()
        .map(|s| match s.volume {
            Some(_) => FillSource::Counted,
            None => FillSource::Open,
        })
        .collect();
    let mut i = 0;
    while i < n {
        if slots[i].volume.is_some() {
            i += 1;
            continue;
        }
        let start = i;
        while i < n && slots[i].volume.is_none() {
            i += 1;
        }
        let (end, len) = (i, i - start);
        if start == 0 || end == n || len > max_gap_hours {
            continue;
        }
        for j in start..end {
            let (v, how) = own_days(slots, j)
                .map(|v| (v, FillSource::OwnDays))
                .or_else(|| profile_fill(slots, j, profile?).map(|v| (v, FillSource::GroupProfile)))
                .unwrap_or_else(|| {
                    let (a, b) = (
                        slots[start - 1].volume.unwrap_or(0.0),
                        slots[end].volume.unwrap_or(0.0),
                    );
                    let t = (j + 1 - start) as f64 / (len + 1) as f64;
                    (a + (b - a) * t, FillSource::Interpolated)
                });
            volume[j] = Some(v.max(0.0));
            source[j] = how;
        }
    }
    FilledHours { volume, source }
}

/// Counted neighbours of slot `i`: (slot index, volume), within [`NEIGHBOUR_HOURS`].
fn neighbours(slots: &[Slot], i: usize) -> impl Iterator<Item = (usize, f64)> + '_ {
    let lo = i.saturating_sub(NEIGHBOUR_HOURS);
    let hi = (i + NEIGHBOUR_HOURS + 1).min(slots.len());
    (lo..hi)
        .filter(move |&j| j != i)
        .filter_map(move |j| slots[j].volume.map(|v| (j, v)))
}

/// The count's own other days at the clock hour of slot `i`, scaled to its day's level.
fn own_days(slots: &[Slot], i: usize) -> Option<f64> {
    let me = slots[i];
    let estimates: Vec<f64> = slots
        .iter()
        .enumerate()
        .filter(|(_, s)| s.hour == me.hour && s.date != me.date)
        .filter_map(|(j, s)| {
            let v = s.volume?;
            let (mut num, mut den) = (0.0, 0.0);
            for (k, vk) in neighbours(slots, i) {
                let other = (j + k).checked_sub(i).and_then(|x| slots.get(x));
                if let Some(o) = other.and_then(|o| o.volume) {
                    num += vk;
                    den += o;
                }
            }
            let r = if num > 0.0 && den > 0.0 {
                num / den
            } else {
                1.0
            };
            Some(v * r)
        })
        .collect();
    (!estimates.is_empty()).then(|| estimates.iter().sum::<f64>() / estimates.len() as f64)
}

/// The group's weekday profile at the hour of slot `i`, scaled to the counted neighbours.
fn profile_fill(slots: &[Slot], i: usize, p: &[f64; 24]) -> Option<f64> {
    let share = |s: &Slot| p[s.hour.min(23)];
    let (mut num, mut den) = (0.0, 0.0);
    for (k, v) in neighbours(slots, i) {
        num += v;
        den += share(&slots[k]);
    }
    (den > 0.0).then(|| share(&slots[i]) * num / den)
}

/// First slot of each 24-hour period, by the greedy rule of the module docs.
fn period_starts(hours: &FilledHours, max_filled_per_period: usize) -> Vec<usize> {
    let mut out = Vec::new();
    let mut i = 0;
    while i + 24 <= hours.volume.len() {
        let window = i..i + 24;
        if let Some(open) = window.clone().find(|&j| hours.volume[j].is_none()) {
            i = open + 1;
            continue;
        }
        let filled = window
            .filter(|&j| hours.source[j] != FillSource::Counted)
            .count();
        if filled > max_filled_per_period {
            i += 1;
            continue;
        }
        out.push(i);
        i += 24;
    }
    out
}

/// The period of the 24 slots from `start`; its `filled` is the volume of its filled hours.
fn period_at(slots: &[Slot], hours: &FilledHours, start: usize) -> CountPeriod {
    let mut volume = 0.0;
    let mut filled = 0.0;
    let mut one_direction = 0.0;
    let mut parts: Vec<(NaiveDate, f64)> = Vec::new();
    let window = start..start + 24;
    for ((slot, v), src) in slots[window.clone()]
        .iter()
        .zip(&hours.volume[window.clone()])
        .zip(&hours.source[window])
    {
        let v = v.expect("a period has no open slot");
        volume += v;
        if *src != FillSource::Counted {
            filled += v;
        } else if slot.one_direction {
            one_direction += v;
        }
        match parts.last_mut() {
            Some((d, w)) if *d == slot.date => *w += v,
            _ => parts.push((slot.date, v)),
        }
    }
    // Volume shares, so that V × Σ w_k F_k = Σ V_k F_k (each day's hours factored by their
    // own day's factor); hour shares stand in for an empty period.
    for (d, w) in parts.iter_mut() {
        *w = if volume > 0.0 {
            *w / volume
        } else {
            slots[start..start + 24]
                .iter()
                .filter(|s| s.date == *d)
                .count() as f64
                / 24.0
        };
    }
    CountPeriod {
        volume,
        parts,
        filled,
        one_direction,
    }
}

/// Cuts filled hours into 24-hour periods (see the module docs).
pub fn cut(slots: &[Slot], hours: &FilledHours, max_filled_per_period: usize) -> Vec<CountPeriod> {
    period_starts(hours, max_filled_per_period)
        .into_iter()
        .map(|i| period_at(slots, hours, i))
        .collect()
}

/// What [`periods_of`] found in one count.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct GapOutcome {
    /// The 24-hour periods.
    pub periods: Vec<CountPeriod>,
    /// Filled hours inside the periods.
    pub filled_hours: usize,
    /// Of those, filled from the count's own days (the rest from the group profile or by
    /// interpolation).
    pub filled_from_own_days: usize,
    /// Counted hours over all runs.
    pub counted_hours: usize,
    /// Hours inside the periods estimated from one direction.
    pub one_direction_hours: usize,
    /// Longest run of counted or filled hours.
    pub longest_run: usize,
}

/// Fills and cuts every run of a count (runs are separate stretches of consecutive dates);
/// each run is trimmed to its first and last counted hour first.
pub fn periods_of(runs: &[Vec<Slot>], profile: Option<&[f64; 24]>, rule: GapRule) -> GapOutcome {
    let mut out = GapOutcome::default();
    for run in runs {
        let Some(first) = run.iter().position(|s| s.volume.is_some()) else {
            continue;
        };
        let last = run
            .iter()
            .rposition(|s| s.volume.is_some())
            .expect("has one");
        let slots = &run[first..=last];
        let hours = fill(slots, profile, rule.max_gap_hours);
        out.counted_hours += slots.iter().filter(|s| s.volume.is_some()).count();
        let mut len = 0;
        for v in &hours.volume {
            len = if v.is_some() { len + 1 } else { 0 };
            out.longest_run = out.longest_run.max(len);
        }
        for i in period_starts(&hours, rule.max_filled_per_period) {
            out.one_direction_hours += slots[i..i + 24].iter().filter(|s| s.one_direction).count();
            for src in &hours.source[i..i + 24] {
                match src {
                    FillSource::Counted | FillSource::Open => {}
                    FillSource::OwnDays => {
                        out.filled_hours += 1;
                        out.filled_from_own_days += 1;
                    }
                    FillSource::GroupProfile | FillSource::Interpolated => out.filled_hours += 1,
                }
            }
            out.periods.push(period_at(slots, &hours, i));
        }
    }
    out
}

/// Variance added to ln AADT by an estimated part of the periods' volume, `part(p)` of
/// relative error `cv` (the filled hours, or the hours estimated from one direction; module
/// docs).
pub fn part_variance(periods: &[CountPeriod], part: impl Fn(&CountPeriod) -> f64, cv: f64) -> f64 {
    let n = periods.len() as f64;
    if n == 0.0 {
        return 0.0;
    }
    periods
        .iter()
        .filter(|p| p.volume > 0.0)
        .map(|p| (part(p) / p.volume * cv).powi(2))
        .sum::<f64>()
        / (n * n)
}

#[cfg(test)]
mod tests {
    use super::*;

    const RULE: GapRule = GapRule {
        max_gap_hours: 2,
        max_filled_per_period: 3,
    };

    /// `n` hourly slots from `start_hour` of 13 May 2025, volume 100 + hour of day.
    fn slots(start_hour: usize, n: usize) -> Vec<Slot> {
        let d0 = NaiveDate::from_ymd_opt(2025, 5, 13).unwrap();
        (0..n)
            .map(|i| {
                let t = start_hour + i;
                Slot {
                    date: d0 + chrono::Duration::days((t / 24) as i64),
                    hour: t % 24,
                    volume: Some(100.0 + (t % 24) as f64),
                    one_direction: false,
                }
            })
            .collect()
    }

    /// Behaviour: a 48-hour count with one missing hour still gives two periods, the hour
    /// filled from the other day at the same clock hour (exactly, on a repeating day).
    #[test]
    fn one_missing_hour_is_filled_from_the_other_day() {
        let mut s = slots(0, 48);
        s[30].volume = None;
        let g = periods_of(&[s], None, RULE);
        assert_eq!(g.periods.len(), 2);
        assert_eq!((g.filled_hours, g.filled_from_own_days), (1, 1));
        assert!((g.periods[1].filled - 106.0).abs() < 1e-9);
        assert!(part_variance(&g.periods, |p| p.filled, 0.25) > 0.0);
    }

    /// Behaviour: a count from 12:00 on day 1 to 12:00 on day 3 gives two straddling
    /// periods, so all 48 hours are used.
    #[test]
    fn noon_start_uses_all_48_hours() {
        let mut run = slots(0, 72);
        for x in run.iter_mut().take(12) {
            x.volume = None;
        }
        for x in run.iter_mut().skip(60) {
            x.volume = None;
        }
        let g = periods_of(&[run], None, RULE);
        assert_eq!(g.periods.len(), 2);
        assert_eq!(g.counted_hours, 48);
        assert_eq!(g.filled_hours, 0);
        assert_eq!(g.periods[0].parts.len(), 2);
    }

    /// Behaviour: a gap longer than `max_gap_hours` is not filled and splits the count.
    #[test]
    fn a_long_gap_stays_open() {
        let mut s = slots(0, 48);
        for x in &mut s[20..23] {
            x.volume = None;
        }
        let g = periods_of(&[s], None, RULE);
        assert_eq!(g.filled_hours, 0);
        assert_eq!(g.periods.len(), 1, "hours 23..47 give one period");
    }
}
