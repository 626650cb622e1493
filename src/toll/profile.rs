//! Expected daily volumes of a segment by vehicle group, and period estimates with 95 %
//! intervals.
//!
//! # Method
//! **Day estimates.** A [`DailyProfile`] gives, for a date and vehicle group, a
//! [`DayEstimate`]: the expected two-way volume `m` and two natural-log standard deviations,
//! `shared` (an error common to every day of the same [`DaySource`] in a period) and `own`
//! (an error of that day alone).
//!
//! - [`FactorProfile`] (no counter on the segment, or a counter's missing days):
//!   `m = AADT_g / F(dow, month)`, `F = AADT / MADW` (TMG convention, so a factor above 1
//!   marks a quieter-than-average cell), `AADT_all = AADT`, `AADT_heavy = AADT · h`,
//!   `AADT_light = AADT · (1 − h)`; with separate heavy factors, heavy days use them and
//!   light = all − heavy. `shared = √(s_AADT² + s_share² + s_F²)`, `s_F` the cell's own
//!   factor log-sd where given (the stage passes the group's between-counter spread of that
//!   cell, calibrated out of sample; heavy vehicles the heavy factors' spread): the AADT error is
//!   systematic (the same AADT feeds every day) and dominates, and the factor error is
//!   treated as shared too (the days of one month reuse the same few cells), which is
//!   conservative. `own = s_day`, the day-to-day variation of real traffic around its
//!   expectation (billing counts real passages, not expectations). `s_AADT`, `s_share` come
//!   from the 95 % bounds by [`log_sd_from_interval`].
//! - [`CounterDays`] (a permanent counter on the segment): a measured day is the count
//!   itself, so there is no day-to-day traffic variation to allow for, only counter error:
//!   `shared = √(s_cal² + s_share²)` with `s_cal` the counter's calibration error (a
//!   systematic under- or over-count; default [`DEFAULT_CALIBRATION_LOG_SD`]) and `s_share`
//!   the error of the heavy share when the counter does not classify (light or heavy = total
//!   × share); `own = s_cday`, random day error of the count (default
//!   [`DEFAULT_COUNTER_DAY_LOG_SD`]). Days it lacks (gaps, days rejected by quality control)
//!   come from its fallback [`FactorProfile`].
//!
//! **Period estimate** ([`period_estimate`]): `E = Σ_d m_d`. Per source `k`, the shared parts
//! are fully correlated: `S_k = Σ_{d∈k} m_d · shared_d`; sources are independent of each
//! other; own parts are independent: `O² = Σ_d (m_d · own_d)²`. Relative sd of the sum
//! `s = √(Σ_k S_k² + O²) / E` (first-order, small errors), 95 % interval
//! `E · exp(±1.96 s)`.
//!
//! Defaults and their marks: counter calibration log-sd 0.025 (common practice: permanent
//! counters are accepted within about ±5 % of a manual count at 95 %); counter day log-sd
//! 0.02 (common practice); day-to-day variation 0.10 (common practice: daily volumes vary
//! by about 10 % around their day-of-week-by-month mean); factor log-sd 0.05 (common
//! practice: group factors carry a few % to 10 % error, TMG precision target ±10 % at 95 %,
//! tests/fixtures/REFERENCES.md §2.6, from memory). Pass the stage's own figures where it has them (the
//! factor stage's per-cell CVs and pooled day CV).
//!
//! With these defaults a calendar month on a segment with a permanent counter that measured
//! every day has `s ≈ 0.025` for the group `all` (95 % interval ≈ ±5 %), so honest billing
//! with about 1 % noise lies inside and a 10 % misbilling lies outside.
//!
//! # Units
//! Vehicles/day (days, AADT), vehicles per period (estimates); log-sds are natural-log
//! standard deviations (dimensionless).
//!
//! # References
//! - FHWA *Traffic Monitoring Guide* ch. 3 (factor definitions, from memory; tests/fixtures/REFERENCES.md §2.1).
//! - First-order (delta-method) propagation of relative errors: common practice.

use std::collections::BTreeMap;

use chrono::{Datelike, NaiveDate};

use super::{TollError, VehicleGroup};

/// Two-sided 95 % standard-normal quantile.
pub const Z95: f64 = 1.959_963_984_540_054;
/// Default counter calibration log-sd (common practice; see the module docs).
pub const DEFAULT_CALIBRATION_LOG_SD: f64 = 0.025;
/// Default random day error of a counted day (common practice).
pub const DEFAULT_COUNTER_DAY_LOG_SD: f64 = 0.02;
/// Default day-to-day variation of real traffic around its expectation (common practice).
pub const DEFAULT_DAY_LOG_SD: f64 = 0.10;
/// Default error of a day-of-week-by-month factor (common practice).
pub const DEFAULT_FACTOR_LOG_SD: f64 = 0.05;

/// Where a day's estimate came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum DaySource {
    /// AADT distributed with day-of-week-by-month factors.
    Factored,
    /// The permanent counter's own count of that day.
    Measured,
}

/// Expected two-way volume of one day and vehicle group, with its log-space errors.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DayEstimate {
    /// Expected volume, vehicles (both directions).
    pub mean: f64,
    /// Where it came from.
    pub source: DaySource,
    /// Log-sd of the error shared by every day of this source in a period.
    pub shared_log_sd: f64,
    /// Log-sd of this day's own, independent error.
    pub own_log_sd: f64,
}

impl DayEstimate {
    /// Total log-sd of the day alone, `√(shared² + own²)`.
    pub fn log_sd(&self) -> f64 {
        self.shared_log_sd.hypot(self.own_log_sd)
    }
}

/// A segment's expected two-way volume by date and vehicle group.
pub trait DailyProfile {
    /// The expected volume of `date` for `group`.
    fn expected(&self, date: NaiveDate, group: VehicleGroup) -> DayEstimate;
}

/// Log-sd of a quantity from its 95 % interval, `ln(hi/lo) / (2 · 1.96)` (the log-normal
/// reading of the interval); 0 for a degenerate interval, infinite for a lower bound of 0.
///
/// ```
/// use roadtally::toll::log_sd_from_interval;
/// let s = log_sd_from_interval(100.0 * (-1.96f64 * 0.05).exp(), 100.0 * (1.96f64 * 0.05).exp());
/// assert!((s - 0.05).abs() < 1e-3);
/// ```
pub fn log_sd_from_interval(lo: f64, hi: f64) -> f64 {
    if hi <= lo {
        0.0
    } else if lo <= 0.0 {
        f64::INFINITY
    } else {
        (hi / lo).ln() / (2.0 * Z95)
    }
}

/// `[dow][month]` cell of a date: 0 = Monday, 0 = January.
fn cell(date: NaiveDate) -> (usize, usize) {
    (
        date.weekday().num_days_from_monday() as usize,
        date.month0() as usize,
    )
}

/// Expected days from an AADT and day-of-week-by-month factors.
#[derive(Debug, Clone, PartialEq)]
pub struct FactorProfile {
    /// AADT, vehicles/day, both directions.
    pub aadt: f64,
    /// Lower end of its 95 % interval.
    pub aadt_lo95: f64,
    /// Upper end of its 95 % interval.
    pub aadt_hi95: f64,
    /// Heavy (classes 4–13) share of AADT.
    pub heavy_share: f64,
    /// Lower end of its 95 % interval.
    pub heavy_share_lo95: f64,
    /// Upper end of its 95 % interval.
    pub heavy_share_hi95: f64,
    /// `F = AADT / MADW`, `[dow][month]`, 0 = Monday, 0 = January (all vehicles).
    pub dow_month: [[f64; 12]; 7],
    /// Heavy-vehicle factors `AADT_heavy / MADW_heavy`, same layout; `None` uses
    /// `dow_month` for heavy vehicles too.
    pub heavy_dow_month: Option<[[f64; 12]; 7]>,
    /// Log-sd of a factor (shared within a period), where no cell log-sds are given.
    pub factor_log_sd: f64,
    /// Log-sd of each cell's factor for this segment (`[dow][month]`, all vehicles): the
    /// group's between-counter spread as a prediction error; `None` uses `factor_log_sd`.
    pub cell_log_sd: Option<[[f64; 12]; 7]>,
    /// The same for the heavy factors; `None` uses `cell_log_sd`.
    pub heavy_cell_log_sd: Option<[[f64; 12]; 7]>,
    /// Day-to-day variation of traffic around its expectation (own).
    pub day_log_sd: f64,
}

impl FactorProfile {
    /// A profile with the given AADT and factors, the heavy share without uncertainty, and
    /// the default factor and day log-sds.
    pub fn new(
        aadt: f64,
        aadt_lo95: f64,
        aadt_hi95: f64,
        heavy_share: f64,
        dow_month: [[f64; 12]; 7],
    ) -> FactorProfile {
        FactorProfile {
            aadt,
            aadt_lo95,
            aadt_hi95,
            heavy_share,
            heavy_share_lo95: heavy_share,
            heavy_share_hi95: heavy_share,
            dow_month,
            heavy_dow_month: None,
            factor_log_sd: DEFAULT_FACTOR_LOG_SD,
            cell_log_sd: None,
            heavy_cell_log_sd: None,
            day_log_sd: DEFAULT_DAY_LOG_SD,
        }
    }

    /// Checks every value: AADT > 0 within its bounds, shares in [0, 1] within theirs,
    /// factors positive and finite, log-sds finite and >= 0.
    pub fn validate(&self) -> Result<(), TollError> {
        let bad = |name, value, expected| {
            Err(TollError::BadInput {
                name,
                value,
                expected,
            })
        };
        if !(self.aadt > 0.0 && self.aadt.is_finite()) {
            return bad("aadt", self.aadt, "a finite volume > 0");
        }
        let a = (self.aadt_lo95, self.aadt, self.aadt_hi95);
        if !(a.0 > 0.0 && a.0 <= a.1 && a.1 <= a.2 && a.2.is_finite()) {
            return bad("aadt_lo95", self.aadt_lo95, "0 < lo <= aadt <= hi, finite");
        }
        let h = (
            self.heavy_share_lo95,
            self.heavy_share,
            self.heavy_share_hi95,
        );
        if !(0.0 <= h.0 && h.0 <= h.1 && h.1 <= h.2 && h.2 <= 1.0) {
            return bad("heavy_share", h.1, "0 <= lo <= share <= hi <= 1");
        }
        let tables = std::iter::once(&self.dow_month).chain(self.heavy_dow_month.as_ref());
        for f in tables.flatten().flatten() {
            if !(*f > 0.0 && f.is_finite()) {
                return bad("factor", *f, "a finite factor > 0");
            }
        }
        let sds = self.cell_log_sd.iter().chain(self.heavy_cell_log_sd.iter());
        for s in sds.flatten().flatten() {
            if !(*s >= 0.0 && s.is_finite()) {
                return bad("cell_log_sd", *s, "a finite log-sd >= 0");
            }
        }
        for (name, s) in [
            ("factor_log_sd", self.factor_log_sd),
            ("day_log_sd", self.day_log_sd),
        ] {
            if !(s >= 0.0 && s.is_finite()) {
                return bad(name, s, "a finite log-sd >= 0");
            }
        }
        Ok(())
    }

    fn aadt_log_sd(&self) -> f64 {
        log_sd_from_interval(self.aadt_lo95, self.aadt_hi95)
    }

    /// Log-sd of the share of `group` in AADT.
    fn share_log_sd(&self, group: VehicleGroup) -> f64 {
        let (lo, h, hi) = (
            self.heavy_share_lo95,
            self.heavy_share,
            self.heavy_share_hi95,
        );
        match group {
            VehicleGroup::All => 0.0,
            VehicleGroup::Heavy => log_sd_from_interval(lo, hi),
            // A heavy interval reaching 1 leaves no lower end for light in log terms: take
            // the upper side's width for both.
            VehicleGroup::Light if h < 1.0 && hi >= 1.0 => ((1.0 - lo) / (1.0 - h)).ln() / Z95,
            VehicleGroup::Light if h < 1.0 => log_sd_from_interval(1.0 - hi, 1.0 - lo),
            VehicleGroup::Light => 0.0,
        }
    }

    /// Expected heavy and all-vehicle volume of `date`.
    fn heavy_and_all(&self, date: NaiveDate) -> (f64, f64) {
        let (i, j) = cell(date);
        let all = self.aadt / self.dow_month[i][j];
        let f_heavy = self
            .heavy_dow_month
            .as_ref()
            .map_or(self.dow_month[i][j], |t| t[i][j]);
        let heavy = (self.aadt * self.heavy_share / f_heavy).min(all);
        (heavy, all)
    }
}

impl DailyProfile for FactorProfile {
    fn expected(&self, date: NaiveDate, group: VehicleGroup) -> DayEstimate {
        let (heavy, all) = self.heavy_and_all(date);
        let mean = match group {
            VehicleGroup::All => all,
            VehicleGroup::Heavy => heavy,
            VehicleGroup::Light => all - heavy,
        };
        let (i, j) = cell(date);
        let all_sd = self.cell_log_sd.map_or(self.factor_log_sd, |t| t[i][j]);
        let factor_sd = match group {
            VehicleGroup::Heavy => self.heavy_cell_log_sd.map_or(all_sd, |t| t[i][j]),
            _ => all_sd,
        };
        let shared =
            (self.aadt_log_sd().powi(2) + self.share_log_sd(group).powi(2) + factor_sd.powi(2))
                .sqrt();
        DayEstimate {
            mean,
            source: DaySource::Factored,
            shared_log_sd: shared,
            own_log_sd: self.day_log_sd,
        }
    }
}

/// One day counted by a permanent counter, both directions.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct CounterDay {
    /// All vehicles, both directions.
    pub total: f64,
    /// Heavy vehicles (classes 4–13), when the counter classifies.
    pub heavy: Option<f64>,
}

/// A permanent counter's own days, with a factor profile for the days it lacks.
///
/// Only complete two-way days that passed quality control belong in `days`; a day with one
/// direction rejected is a missing day.
#[derive(Debug, Clone, PartialEq)]
pub struct CounterDays {
    /// Measured days.
    pub days: BTreeMap<NaiveDate, CounterDay>,
    /// Counter calibration log-sd (shared by all measured days).
    pub calibration_log_sd: f64,
    /// Random error of one counted day (own).
    pub day_log_sd: f64,
    /// Profile for missing days; its heavy share (and interval) also splits unclassified
    /// counted days into light and heavy.
    pub fallback: FactorProfile,
}

impl CounterDays {
    /// Counter days with the default calibration and day log-sds.
    pub fn new(days: BTreeMap<NaiveDate, CounterDay>, fallback: FactorProfile) -> CounterDays {
        CounterDays {
            days,
            calibration_log_sd: DEFAULT_CALIBRATION_LOG_SD,
            day_log_sd: DEFAULT_COUNTER_DAY_LOG_SD,
            fallback,
        }
    }
}

impl DailyProfile for CounterDays {
    fn expected(&self, date: NaiveDate, group: VehicleGroup) -> DayEstimate {
        let Some(day) = self.days.get(&date) else {
            return self.fallback.expected(date, group);
        };
        let (heavy, share_sd) = match day.heavy {
            Some(h) => (h.min(day.total), 0.0),
            None => (
                day.total * self.fallback.heavy_share,
                self.fallback.share_log_sd(group),
            ),
        };
        let mean = match group {
            VehicleGroup::All => day.total,
            VehicleGroup::Heavy => heavy,
            VehicleGroup::Light => day.total - heavy,
        };
        DayEstimate {
            mean,
            source: DaySource::Measured,
            shared_log_sd: self.calibration_log_sd.hypot(share_sd),
            own_log_sd: self.day_log_sd,
        }
    }
}

/// Estimated passages of one period and group.
#[derive(Debug, Clone, PartialEq)]
pub struct PeriodEstimate {
    /// Estimated passages, both directions.
    pub estimated: f64,
    /// Lower end of the 95 % interval.
    pub lo95: f64,
    /// Upper end of the 95 % interval.
    pub hi95: f64,
    /// Log-sd of the estimate.
    pub log_sd: f64,
    /// Days taken from counter measurements.
    pub measured_days: u32,
    /// Days taken from factors.
    pub factored_days: u32,
}

/// The passages `profile` implies from `from` to `to` (inclusive) for `group`.
///
/// ```
/// use chrono::NaiveDate;
/// use roadtally::toll::{period_estimate, FactorProfile, VehicleGroup};
/// let p = FactorProfile::new(10_000.0, 9_000.0, 11_000.0, 0.2, [[1.0; 12]; 7]);
/// let d = |s: &str| NaiveDate::parse_from_str(s, "%Y-%m-%d").unwrap();
/// let e = period_estimate(&p, d("2025-07-01"), d("2025-07-31"), VehicleGroup::All).unwrap();
/// assert!((e.estimated - 310_000.0).abs() < 1e-6);
/// assert!(e.lo95 < e.estimated && e.estimated < e.hi95);
/// ```
pub fn period_estimate(
    profile: &dyn DailyProfile,
    from: NaiveDate,
    to: NaiveDate,
    group: VehicleGroup,
) -> Result<PeriodEstimate, TollError> {
    if to < from {
        return Err(TollError::BadPeriod { from, to });
    }
    let mut total = 0.0;
    let mut shared: BTreeMap<DaySource, f64> = BTreeMap::new();
    let mut own2 = 0.0;
    let (mut measured_days, mut factored_days) = (0, 0);
    for date in from.iter_days().take_while(|d| *d <= to) {
        let e = profile.expected(date, group);
        total += e.mean;
        *shared.entry(e.source).or_insert(0.0) += e.mean * e.shared_log_sd;
        own2 += (e.mean * e.own_log_sd).powi(2);
        match e.source {
            DaySource::Measured => measured_days += 1,
            DaySource::Factored => factored_days += 1,
        }
    }
    let log_sd = if total > 0.0 {
        (shared.values().map(|s| s * s).sum::<f64>() + own2).sqrt() / total
    } else {
        0.0
    };
    Ok(PeriodEstimate {
        estimated: total,
        lo95: total * (-Z95 * log_sd).exp(),
        hi95: total * (Z95 * log_sd).exp(),
        log_sd,
        measured_days,
        factored_days,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn d(s: &str) -> NaiveDate {
        NaiveDate::parse_from_str(s, "%Y-%m-%d").unwrap()
    }

    /// Weekdays 0.9, Saturday 1.2, Sunday 1.5 in every month.
    fn factors() -> [[f64; 12]; 7] {
        let mut f = [[0.9; 12]; 7];
        f[5] = [1.2; 12];
        f[6] = [1.5; 12];
        f
    }

    fn profile() -> FactorProfile {
        let mut p = FactorProfile::new(10_000.0, 9_000.0, 10_000.0 / 0.9, 0.2, factors());
        p.heavy_share_lo95 = 0.18;
        p.heavy_share_hi95 = 0.22;
        p
    }

    /// July 2025 has 31 days, 1 July a Tuesday: Tue/Wed/Thu five times, the others four.
    /// Sum = 10,000 · (23/0.9 + 4/1.2 + 4/1.5) = 315,555.56.
    #[test]
    fn thirty_one_day_month_with_known_factors() {
        let p = profile();
        p.validate().unwrap();
        let e = period_estimate(&p, d("2025-07-01"), d("2025-07-31"), VehicleGroup::All).unwrap();
        let sum = 10_000.0 * (23.0 / 0.9 + 4.0 / 1.2 + 4.0 / 1.5);
        assert_relative_eq!(e.estimated, sum, max_relative = 1e-12);
        assert_eq!((e.measured_days, e.factored_days), (0, 31));
        // Shared: AADT log-sd ln(1/0.81)/3.92 and factor 0.05, fully correlated; own 0.10
        // per day, independent.
        let s_aadt = (1.0f64 / 0.81).ln() / (2.0 * Z95);
        let shared = (s_aadt * s_aadt + 0.05 * 0.05).sqrt();
        let days: Vec<f64> = d("2025-07-01")
            .iter_days()
            .take(31)
            .map(|x| p.expected(x, VehicleGroup::All).mean)
            .collect();
        let own = 0.10 * days.iter().map(|m| m * m).sum::<f64>().sqrt() / sum;
        assert_relative_eq!(e.log_sd, shared.hypot(own), max_relative = 1e-12);
        assert_relative_eq!(e.lo95, sum * (-Z95 * e.log_sd).exp(), max_relative = 1e-12);
        let heavy =
            period_estimate(&p, d("2025-07-01"), d("2025-07-31"), VehicleGroup::Heavy).unwrap();
        let light =
            period_estimate(&p, d("2025-07-01"), d("2025-07-31"), VehicleGroup::Light).unwrap();
        assert_relative_eq!(heavy.estimated, 0.2 * sum, max_relative = 1e-12);
        assert_relative_eq!(light.estimated, 0.8 * sum, max_relative = 1e-12);
        // Light share 0.78..0.82 is tighter in log terms than heavy 0.18..0.22.
        assert!(light.log_sd < heavy.log_sd);
    }

    /// A borrowed heavy share whose interval reaches 1 (light share down to 0) still gives
    /// light a finite interval, as wide on the low side as the high side: ln(0.99/0.8)/1.96.
    #[test]
    fn a_heavy_share_interval_reaching_one_leaves_light_finite() {
        let mut p = profile();
        p.heavy_share_lo95 = 0.01;
        p.heavy_share_hi95 = 1.0;
        p.validate().unwrap();
        assert_relative_eq!(
            p.share_log_sd(VehicleGroup::Light),
            (0.99f64 / 0.8).ln() / Z95,
            max_relative = 1e-12
        );
        let light =
            period_estimate(&p, d("2025-07-01"), d("2025-07-31"), VehicleGroup::Light).unwrap();
        assert!(light.hi95.is_finite() && light.lo95 > 0.0);
    }

    #[test]
    fn heavy_factors_are_used_when_given() {
        let mut p = profile();
        let mut hf = [[1.0; 12]; 7];
        hf[6] = [4.0; 12]; // few heavy vehicles on Sundays
        p.heavy_dow_month = Some(hf);
        let sun = d("2025-07-06");
        assert_relative_eq!(
            p.expected(sun, VehicleGroup::Heavy).mean,
            2000.0 / 4.0,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            p.expected(sun, VehicleGroup::Light).mean,
            10_000.0 / 1.5 - 500.0,
            max_relative = 1e-12
        );
    }

    /// Counter days are summed exactly; missing days come from the fallback.
    #[test]
    fn counter_days_exact_sum_and_fallback() {
        let mut days = BTreeMap::new();
        days.insert(
            d("2025-07-01"),
            CounterDay {
                total: 11_000.0,
                heavy: Some(2_000.0),
            },
        );
        days.insert(
            d("2025-07-02"),
            CounterDay {
                total: 12_000.0,
                heavy: None,
            },
        );
        days.insert(
            d("2025-07-03"),
            CounterDay {
                total: 10_500.0,
                heavy: Some(1_500.0),
            },
        );
        let c = CounterDays::new(days, profile());
        let all = period_estimate(&c, d("2025-07-01"), d("2025-07-03"), VehicleGroup::All).unwrap();
        assert_relative_eq!(all.estimated, 33_500.0, max_relative = 1e-12);
        assert_eq!((all.measured_days, all.factored_days), (3, 0));
        // All vehicles: shared calibration 0.025, own 0.02 per day.
        let own = 0.02 * (11_000.0f64.powi(2) + 12_000.0f64.powi(2) + 10_500.0f64.powi(2)).sqrt();
        assert_relative_eq!(
            all.log_sd,
            (0.025f64 * 33_500.0).hypot(own) / 33_500.0,
            max_relative = 1e-12
        );
        let heavy =
            period_estimate(&c, d("2025-07-01"), d("2025-07-03"), VehicleGroup::Heavy).unwrap();
        assert_relative_eq!(
            heavy.estimated,
            2_000.0 + 12_000.0 * 0.2 + 1_500.0,
            max_relative = 1e-12
        );
        let light =
            period_estimate(&c, d("2025-07-01"), d("2025-07-03"), VehicleGroup::Light).unwrap();
        assert_relative_eq!(
            light.estimated + heavy.estimated,
            33_500.0,
            max_relative = 1e-12
        );
        // 4 July (Friday) is missing: 10,000 / 0.9 from the fallback.
        let four =
            period_estimate(&c, d("2025-07-01"), d("2025-07-04"), VehicleGroup::All).unwrap();
        assert_relative_eq!(
            four.estimated,
            33_500.0 + 10_000.0 / 0.9,
            max_relative = 1e-12
        );
        assert_eq!((four.measured_days, four.factored_days), (3, 1));
        assert!(four.log_sd > all.log_sd);
    }

    /// A classifying counter that measured every day of March: the heavy estimate is the sum
    /// of its heavy counts exactly (an arithmetic identity), whatever the fallback's heavy
    /// share or factors say; light is the total less heavy, day by day.
    #[test]
    fn fully_counted_month_heavy_is_the_sum_of_measured_heavy() {
        let mut days = BTreeMap::new();
        let mut heavy_sum = 0.0;
        let mut light_sum = 0.0;
        for (k, date) in d("2025-03-01").iter_days().take(31).enumerate() {
            // Heavy traffic with its own weekly rhythm, unlike the fallback's 20 % share.
            let heavy = (3_000 + 1_700 * (k % 7) as u64) as f64;
            let total = (20_000 + 311 * k as u64) as f64;
            heavy_sum += heavy;
            light_sum += total - heavy;
            days.insert(
                date,
                CounterDay {
                    total,
                    heavy: Some(heavy),
                },
            );
        }
        let c = CounterDays::new(days, profile());
        let (from, to) = (d("2025-03-01"), d("2025-03-31"));
        let heavy = period_estimate(&c, from, to, VehicleGroup::Heavy).unwrap();
        assert_eq!(heavy.estimated, heavy_sum);
        assert_eq!((heavy.measured_days, heavy.factored_days), (31, 0));
        let light = period_estimate(&c, from, to, VehicleGroup::Light).unwrap();
        assert_eq!(light.estimated, light_sum);
    }

    /// A fully counted month is tight: all ≈ ±5 %, light a little wider with the share.
    #[test]
    fn counted_month_interval_is_a_few_percent() {
        let mut days = BTreeMap::new();
        for (k, date) in d("2025-02-01").iter_days().take(28).enumerate() {
            let wobble = 1.0 + 0.08 * ((k as f64) * 1.7).sin();
            days.insert(
                date,
                CounterDay {
                    total: 25_000.0 * wobble,
                    heavy: None,
                },
            );
        }
        let c = CounterDays::new(days, profile());
        for (g, max) in [(VehicleGroup::All, 0.052), (VehicleGroup::Light, 0.060)] {
            let e = period_estimate(&c, d("2025-02-01"), d("2025-02-28"), g).unwrap();
            let half = e.hi95 / e.estimated - 1.0;
            assert!(half > 0.045 && half < max, "{g:?} {half}");
        }
    }

    #[test]
    fn bad_periods_and_profiles() {
        let p = profile();
        assert_eq!(
            period_estimate(&p, d("2025-07-02"), d("2025-07-01"), VehicleGroup::All),
            Err(TollError::BadPeriod {
                from: d("2025-07-02"),
                to: d("2025-07-01")
            })
        );
        let one = period_estimate(&p, d("2025-07-01"), d("2025-07-01"), VehicleGroup::All).unwrap();
        assert_relative_eq!(one.estimated, 10_000.0 / 0.9, max_relative = 1e-12);
        let mut q = profile();
        q.dow_month[3][4] = 0.0;
        assert!(q.validate().is_err());
        let mut q = profile();
        q.aadt_lo95 = 12_000.0;
        assert!(q.validate().is_err());
        assert_eq!(log_sd_from_interval(5.0, 5.0), 0.0);
        assert!(log_sd_from_interval(0.0, 5.0).is_infinite());
    }
}
