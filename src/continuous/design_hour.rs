//! Design hour (30th-highest hour, K30, D, DHV, DDHV), the ranked-hour curve, hourly
//! distributions by day type, and the HCM peak hour factor.
//!
//! # Method
//! - **Ranking**: every two-way clock hour of the year (`fwd + rev`, or `fwd` on a one-way
//!   road) is sorted by volume, highest first. **Tie rule** (project decision): hours of
//!   equal volume are ordered chronologically (date, clock hour, repeat), earliest first;
//!   ranks count ties, so the 30th-highest hour is the 30th element of that order. The rule
//!   only decides *which* of several equal hours supplies D and the heavy share; V30 itself
//!   does not depend on it.
//! - `K30 = V30 / AADT`; `D` = heavier direction's share of that same hour (1.0 on a one-way
//!   road; 0.5 if the hour is empty in both directions); `DHV = K30 · AADT` (= V30);
//!   `DDHV = DHV · D`. Heavy share in the design hour = heavy / V30 when the hour's heavy
//!   count is known. The 100th-highest hour and `K100` are given when the year has 100
//!   hours; the ranked-hour curve is the top N hours as K values.
//! - **Hourly distribution by day type** (weekday Mon–Fri, Saturday, Sunday): the share of
//!   daily volume in each clock hour, as a ratio of sums over the days of that type
//!   (`Σ_days V_h / Σ_days V_day`), so heavier days weigh more (a project choice; the mean of
//!   daily shares is the alternative). A repeated clock hour adds to its clock hour. Pass
//!   complete, accepted days only.
//! - **PHF** (HCM): `PHF = V_hour / (4 · V_15max)` from the four 15-minute volumes of the
//!   hour; [`peak_hour_factor_rolling`] finds the busiest four consecutive quarters first.
//!
//! # Units
//! Vehicles per hour (V30, DHV, DDHV), vehicles per 15 minutes (PHF input); K, D, shares
//! and PHF are dimensionless.
//!
//! # References
//! - AASHTO *A Policy on Geometric Design of Highways and Streets* (2011/2018) ch. 2, design
//!   hourly volume (paraphrased via a secondary source, `tests/fixtures/REFERENCES.md` §3.1).
//! - HPMS Field Manual K_Factor / Dir_Factor items (from memory, `tests/fixtures/REFERENCES.md` §3.1).
//! - TRB *Highway Capacity Manual* 6th/7th ed., peak hour factor (from memory,
//!   `tests/fixtures/REFERENCES.md` §3.2).
//! - `docs data-contract.md`: the design hour is the 30th-highest two-way clock hour of the
//!   study year.

use std::cmp::Ordering;
use std::collections::HashSet;

use chrono::{Datelike, NaiveDate, Weekday};

use super::{check_volume, ContinuousError, HourVolume};

/// Day types for hourly distributions.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum DayType {
    /// Monday to Friday.
    Weekday,
    /// Saturday.
    Saturday,
    /// Sunday.
    Sunday,
}

impl DayType {
    /// The day type of a date.
    pub fn of(date: NaiveDate) -> DayType {
        match date.weekday() {
            Weekday::Sat => DayType::Saturday,
            Weekday::Sun => DayType::Sunday,
            _ => DayType::Weekday,
        }
    }

    fn index(self) -> usize {
        match self {
            DayType::Weekday => 0,
            DayType::Saturday => 1,
            DayType::Sunday => 2,
        }
    }
}

/// Design-hour figures of one station for one year.
#[derive(Debug, Clone, PartialEq)]
pub struct DesignHour {
    /// The AADT used for the ratios, vehicles/day.
    pub aadt: f64,
    /// Hours ranked (all hours given).
    pub hours_ranked: usize,
    /// The design hour itself (the 30th element of the ranking).
    pub hour: HourVolume,
    /// 30th-highest two-way hourly volume, vehicles/hour.
    pub v30: f64,
    /// `K30 = V30 / AADT`.
    pub k30: f64,
    /// Heavier direction's share of the design hour (1.0 one-way).
    pub d: f64,
    /// `DHV = K30 · AADT`, vehicles/hour.
    pub dhv: f64,
    /// `DDHV = DHV · D`, vehicles/hour.
    pub ddhv: f64,
    /// Heavy (classes 4-13) share of the design hour, when its heavy count is known.
    pub heavy_share: Option<f64>,
    /// 100th-highest hourly volume, when at least 100 hours are given.
    pub v100: Option<f64>,
    /// `K100 = V100 / AADT`.
    pub k100: Option<f64>,
    /// Top `top_n` hours (or fewer, if fewer are given) as K values, highest first.
    pub ranked_k: Vec<f64>,
}

/// Rank the two-way hours and compute K30, D, DHV, DDHV, V100 and the top-`top_n` curve.
///
/// Errors on fewer than 30 hours, a duplicated hour, a clock hour above 23, a bad volume,
/// or an AADT that is not a positive finite number.
///
/// ```
/// use chrono::NaiveDate;
/// use roadtally::continuous::{design_hour, HourVolume};
/// let date = NaiveDate::from_ymd_opt(2023, 6, 1).unwrap();
/// let hours: Vec<HourVolume> = (0..40)
///     .map(|k| HourVolume {
///         date: date + chrono::Days::new(k / 24),
///         clock_hour: (k % 24) as u8,
///         repeat: 0,
///         fwd: 900.0 + k as f64,
///         rev: Some(600.0),
///         heavy: None,
///     })
///     .collect();
/// let dh = design_hour(&hours, 10_000.0, 10).unwrap();
/// assert_eq!(dh.ranked_k.len(), 10);
/// assert!((dh.v30 - 1510.0).abs() < 1e-9);
/// ```
pub fn design_hour(
    hours: &[HourVolume],
    aadt: f64,
    top_n: usize,
) -> Result<DesignHour, ContinuousError> {
    if !(aadt.is_finite() && aadt > 0.0) {
        return Err(ContinuousError::BadAadt(aadt));
    }
    validate_hours(hours)?;
    if hours.len() < 30 {
        return Err(ContinuousError::TooFewHours {
            available: hours.len(),
            rank: 30,
        });
    }
    let mut ranked: Vec<&HourVolume> = hours.iter().collect();
    ranked.sort_by(|a, b| {
        b.two_way()
            .partial_cmp(&a.two_way())
            .unwrap_or(Ordering::Equal)
            .then_with(|| (a.date, a.clock_hour, a.repeat).cmp(&(b.date, b.clock_hour, b.repeat)))
    });
    let h30 = *ranked[29];
    let v30 = h30.two_way();
    let d = match h30.rev {
        None => 1.0,
        Some(rev) if v30 > 0.0 => h30.fwd.max(rev) / v30,
        Some(_) => 0.5,
    };
    let k30 = v30 / aadt;
    let dhv = k30 * aadt;
    let heavy_share = h30.heavy.filter(|_| v30 > 0.0).map(|h| h / v30);
    let v100 = ranked.get(99).map(|h| h.two_way());
    Ok(DesignHour {
        aadt,
        hours_ranked: ranked.len(),
        hour: h30,
        v30,
        k30,
        d,
        dhv,
        ddhv: dhv * d,
        heavy_share,
        v100,
        k100: v100.map(|v| v / aadt),
        ranked_k: ranked
            .iter()
            .take(top_n)
            .map(|h| h.two_way() / aadt)
            .collect(),
    })
}

fn validate_hours(hours: &[HourVolume]) -> Result<(), ContinuousError> {
    if hours.is_empty() {
        return Err(ContinuousError::NoData);
    }
    let mut seen = HashSet::with_capacity(hours.len());
    for h in hours {
        if h.clock_hour > 23 {
            return Err(ContinuousError::BadHour {
                date: h.date,
                clock_hour: h.clock_hour,
            });
        }
        check_volume(h.date, h.fwd)?;
        if let Some(r) = h.rev {
            check_volume(h.date, r)?;
        }
        if let Some(x) = h.heavy {
            check_volume(h.date, x)?;
        }
        if !seen.insert((h.date, h.clock_hour, h.repeat)) {
            return Err(ContinuousError::DuplicateHour {
                date: h.date,
                clock_hour: h.clock_hour,
                repeat: h.repeat,
            });
        }
    }
    Ok(())
}

/// Share of daily volume per clock hour, by day type.
#[derive(Debug, Clone, PartialEq)]
pub struct HourlyDistribution {
    /// `shares[t][h]`: day type `t` (0 weekday, 1 Saturday, 2 Sunday), clock hour `h`.
    /// `None` for a day type with no volume.
    pub shares: [Option<[f64; 24]>; 3],
    /// Distinct dates of each day type that contributed.
    pub days: [usize; 3],
}

impl HourlyDistribution {
    /// The 24 shares of a day type, if any day of that type was given.
    pub fn for_day_type(&self, t: DayType) -> Option<&[f64; 24]> {
        self.shares[t.index()].as_ref()
    }
}

/// Hourly distribution of two-way volume by day type (ratio of sums; see module docs).
pub fn hourly_distribution(hours: &[HourVolume]) -> Result<HourlyDistribution, ContinuousError> {
    validate_hours(hours)?;
    let mut sums = [[0.0f64; 24]; 3];
    let mut dates: [HashSet<NaiveDate>; 3] = Default::default();
    for h in hours {
        let t = DayType::of(h.date).index();
        sums[t][usize::from(h.clock_hour)] += h.two_way();
        dates[t].insert(h.date);
    }
    let mut shares = [None; 3];
    for t in 0..3 {
        let total: f64 = sums[t].iter().sum();
        if total > 0.0 {
            let mut s = [0.0; 24];
            for (x, v) in s.iter_mut().zip(sums[t].iter()) {
                *x = v / total;
            }
            shares[t] = Some(s);
        }
    }
    Ok(HourlyDistribution {
        shares,
        days: [dates[0].len(), dates[1].len(), dates[2].len()],
    })
}

/// HCM peak hour factor of one hour from its four 15-minute volumes:
/// `PHF = V_hour / (4 · V_15max)`. `None` when the busiest quarter is 0 or a value is not
/// a finite number ≥ 0.
///
/// ```
/// let phf = roadtally::continuous::peak_hour_factor([220.0, 240.0, 300.0, 240.0]).unwrap();
/// assert!((phf - 0.8333).abs() < 1e-4);
/// ```
pub fn peak_hour_factor(quarters: [f64; 4]) -> Option<f64> {
    if quarters.iter().any(|q| !(q.is_finite() && *q >= 0.0)) {
        return None;
    }
    let max = quarters.iter().copied().fold(0.0, f64::max);
    (max > 0.0).then(|| quarters.iter().sum::<f64>() / (4.0 * max))
}

/// PHF of the busiest hour in a run of consecutive 15-minute volumes: the four consecutive
/// quarters with the highest sum (earliest on ties), then [`peak_hour_factor`]. Returns the
/// index of the first quarter and the PHF; `None` with fewer than 4 quarters.
pub fn peak_hour_factor_rolling(quarters: &[f64]) -> Option<(usize, f64)> {
    let mut best: Option<(usize, f64)> = None;
    for (k, w) in quarters.windows(4).enumerate() {
        let s: f64 = w.iter().sum();
        if best.is_none_or(|(_, b)| s > b) {
            best = Some((k, s));
        }
    }
    let (k, _) = best?;
    let w = [
        quarters[k],
        quarters[k + 1],
        quarters[k + 2],
        quarters[k + 3],
    ];
    peak_hour_factor(w).map(|p| (k, p))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn hour(k: u64, fwd: f64, rev: Option<f64>, heavy: Option<f64>) -> HourVolume {
        let base = NaiveDate::from_ymd_opt(2023, 6, 1).unwrap();
        HourVolume {
            date: base + chrono::Days::new(k / 24),
            clock_hour: (k % 24) as u8,
            repeat: 0,
            fwd,
            rev,
            heavy,
        }
    }

    /// Hand-ranked 40 hours: the 29 hours above the design hour carry 2000 - 10·r
    /// (r = 0..28, so 2000 .. 1720), the design hour has 900 + 600 = 1500 with 150 heavy,
    /// and 10 hours below carry 1000 .. 1090. Listed out of order.
    fn hand_example() -> Vec<HourVolume> {
        let mut hs = Vec::new();
        let mut k = 0;
        for r in 0..10 {
            hs.push(hour(
                k,
                500.0 + 5.0 * r as f64,
                Some(500.0 + 5.0 * r as f64),
                None,
            ));
            k += 1;
        }
        hs.push(hour(k, 900.0, Some(600.0), Some(150.0)));
        k += 1;
        for r in 0..29 {
            let v = 2000.0 - 10.0 * r as f64;
            hs.push(hour(k, 0.4 * v, Some(0.6 * v), None));
            k += 1;
        }
        hs
    }

    #[test]
    fn k30_d_dhv_ddhv_hand_ranked() {
        // Source: tests/fixtures/REFERENCES.md §3.1 definitions and §3.3 worked numbers
        // (AADT 10,000, V30 1,500, peak direction 900 → K 0.15, D 0.60, DHV 1500, DDHV 900).
        let dh = design_hour(&hand_example(), 10_000.0, 5).unwrap();
        assert_relative_eq!(dh.v30, 1500.0, max_relative = 1e-12);
        assert_relative_eq!(dh.k30, 0.15, max_relative = 1e-12);
        assert_relative_eq!(dh.d, 0.60, max_relative = 1e-12);
        assert_relative_eq!(dh.dhv, 1500.0, max_relative = 1e-12);
        assert_relative_eq!(dh.ddhv, 900.0, max_relative = 1e-12);
        assert_relative_eq!(dh.heavy_share.unwrap(), 0.10, max_relative = 1e-12);
        assert_eq!(dh.hours_ranked, 40);
        assert!(dh.v100.is_none());
        assert_eq!(dh.ranked_k.len(), 5);
        assert_relative_eq!(dh.ranked_k[0], 0.2, max_relative = 1e-12);
        assert_relative_eq!(dh.ranked_k[4], 0.196, max_relative = 1e-12);
    }

    #[test]
    fn one_way_d_is_one_and_ties_are_chronological() {
        // 35 identical one-way hours: V30 = that volume, D = 1, and the 30th hour is the
        // 30th in time order (tie rule, module docs).
        let hs: Vec<HourVolume> = (0..35).map(|k| hour(k, 800.0, None, None)).collect();
        let dh = design_hour(&hs, 8_000.0, 3).unwrap();
        assert_relative_eq!(dh.v30, 800.0);
        assert_relative_eq!(dh.d, 1.0);
        assert_relative_eq!(dh.k30, 0.1);
        assert_eq!(dh.hour, hs[29]);
    }

    #[test]
    fn v100_with_enough_hours() {
        let hs: Vec<HourVolume> = (0..150)
            .map(|k| hour(k, 1000.0 - k as f64, Some(0.0), None))
            .collect();
        let dh = design_hour(&hs, 10_000.0, 200).unwrap();
        assert_relative_eq!(dh.v100.unwrap(), 901.0);
        assert_relative_eq!(dh.k100.unwrap(), 0.0901);
        assert_relative_eq!(dh.v30, 971.0);
        assert_eq!(dh.ranked_k.len(), 150);
    }

    #[test]
    fn design_hour_errors() {
        let hs: Vec<HourVolume> = (0..20).map(|k| hour(k, 1.0, None, None)).collect();
        assert_eq!(
            design_hour(&hs, 100.0, 1),
            Err(ContinuousError::TooFewHours {
                available: 20,
                rank: 30
            })
        );
        assert_eq!(design_hour(&hs, 0.0, 1), Err(ContinuousError::BadAadt(0.0)));
        let mut dup = hand_example();
        dup.push(dup[0]);
        assert!(matches!(
            design_hour(&dup, 1.0, 1),
            Err(ContinuousError::DuplicateHour { .. })
        ));
    }

    #[test]
    fn phf_hcm_example() {
        // Source: tests/fixtures/REFERENCES.md §3.3 (HCM PHF formula, from memory; computed 0.8333).
        assert_relative_eq!(
            peak_hour_factor([220.0, 240.0, 300.0, 240.0]).unwrap(),
            1000.0 / 1200.0,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            peak_hour_factor([220.0, 240.0, 300.0, 240.0]).unwrap(),
            0.8333,
            max_relative = 1e-4
        );
        assert!(peak_hour_factor([0.0; 4]).is_none());
        let (k, p) =
            peak_hour_factor_rolling(&[10.0, 20.0, 220.0, 240.0, 300.0, 240.0, 30.0]).unwrap();
        assert_eq!(k, 2);
        assert_relative_eq!(p, 0.8333, max_relative = 1e-4);
        assert!(peak_hour_factor_rolling(&[1.0, 2.0]).is_none());
    }

    #[test]
    fn hourly_shares_sum_to_one_by_day_type() {
        // 2023-06-03 is a Saturday, 06-04 a Sunday, 06-05 a Monday.
        let mut hs = Vec::new();
        for (day, k) in [(3u32, 1.0), (4, 2.0), (5, 3.0)] {
            for h in 0..24u8 {
                hs.push(HourVolume {
                    date: NaiveDate::from_ymd_opt(2023, 6, day).unwrap(),
                    clock_hour: h,
                    repeat: 0,
                    fwd: k * f64::from(h + 1),
                    rev: Some(k * f64::from(h + 1)),
                    heavy: None,
                });
            }
        }
        let dist = hourly_distribution(&hs).unwrap();
        assert_eq!(dist.days, [1, 1, 1]);
        for t in [DayType::Weekday, DayType::Saturday, DayType::Sunday] {
            let s = dist.for_day_type(t).unwrap();
            assert_relative_eq!(s.iter().sum::<f64>(), 1.0, max_relative = 1e-12);
            // share of hour h = (h+1)/300
            assert_relative_eq!(s[23], 24.0 / 300.0, max_relative = 1e-12);
        }
    }
}
