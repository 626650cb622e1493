//! Temporal patterns (factor groups) of the invented region.
//!
//! # Method
//!
//! A pattern holds relative monthly levels, relative weekday levels, a holiday level and
//! three 24-hour profiles (weekday, Saturday, Sunday or holiday). The expected daily volume
//! of a segment on date `d` of year `y` is
//! `AADT_y x norm_y x month[m] x weekday[w] x holiday(d)`, where `norm_y` makes the mean over
//! the days of `y` equal to `AADT_y` exactly. Factors are written in the TMG convention: a
//! factor multiplies a count to give AADT, so a monthly factor is `AADT / MADT`.
//!
//! # Units
//!
//! Levels and factors are dimensionless; hourly profiles are shares of the day that sum to 1;
//! growth rates are fractions per year.

use chrono::{Datelike, NaiveDate};

/// Invented fixed-date holidays (month, day): New Year, Founders' Day, Lantern Day, Harvest
/// Day, Midwinter Day.
pub(crate) const HOLIDAYS: [(u32, u32); 5] = [(1, 1), (4, 23), (8, 11), (10, 2), (12, 25)];

/// Index of the 24-hour profile used on a day.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub(crate) enum DayType {
    Weekday = 0,
    Saturday = 1,
    SundayOrHoliday = 2,
}

/// Whether a date is one of the invented holidays.
pub(crate) fn is_holiday(date: NaiveDate) -> bool {
    HOLIDAYS.contains(&(date.month(), date.day()))
}

pub(crate) fn day_type(date: NaiveDate) -> DayType {
    if is_holiday(date) {
        return DayType::SundayOrHoliday;
    }
    match date.weekday().number_from_monday() {
        6 => DayType::Saturday,
        7 => DayType::SundayOrHoliday,
        _ => DayType::Weekday,
    }
}

/// One temporal pattern.
#[derive(Clone, Debug)]
pub(crate) struct Pattern {
    pub name: &'static str,
    /// Relative monthly level, January first.
    pub month: [f64; 12],
    /// Relative weekday level, Monday first.
    pub weekday: [f64; 7],
    /// Multiplier of a holiday's volume relative to the same weekday.
    pub holiday: f64,
    /// Hourly shares by [`DayType`], each summing to 1.
    pub hourly: [[f64; 24]; 3],
    /// Whether the directional split flips between the morning and evening peaks.
    pub commuter: bool,
    /// Annual growth of AADT.
    pub growth: f64,
}

/// Normalised hourly profile: a night floor plus Gaussian bumps `(centre_hour, width, height)`.
fn profile(floor: f64, bumps: &[(f64, f64, f64)]) -> [f64; 24] {
    let mut p = [0.0; 24];
    for (h, v) in p.iter_mut().enumerate() {
        let t = h as f64 + 0.5;
        // A smooth day/night cycle: lowest around 03:30.
        let night = floor * (1.2 + (std::f64::consts::TAU * (t - 15.5) / 24.0).cos());
        *v = night
            + bumps
                .iter()
                .map(|&(c, w, a)| a * (-0.5 * ((t - c) / w).powi(2)).exp())
                .sum::<f64>();
    }
    let total: f64 = p.iter().sum();
    p.map(|v| v / total)
}

impl Pattern {
    /// The three patterns, in the order of their index.
    pub(crate) fn all() -> Vec<Pattern> {
        vec![
            Pattern {
                name: "urban_commuter",
                month: [
                    0.91, 0.94, 0.98, 1.00, 1.03, 1.04, 1.00, 0.98, 1.03, 1.03, 1.01, 0.97,
                ],
                weekday: [1.04, 1.07, 1.08, 1.08, 1.10, 0.86, 0.74],
                holiday: 0.6,
                hourly: [
                    profile(0.15, &[(8.0, 1.2, 2.2), (13.0, 4.0, 1.0), (17.2, 1.5, 2.4)]),
                    profile(0.2, &[(13.0, 3.5, 1.6), (19.0, 2.0, 0.5)]),
                    profile(0.2, &[(14.0, 3.5, 1.4)]),
                ],
                commuter: true,
                growth: 0.012,
            },
            Pattern {
                name: "rural_intercity",
                month: [
                    0.82, 0.86, 0.94, 1.00, 1.05, 1.12, 1.18, 1.16, 1.04, 0.98, 0.92, 0.90,
                ],
                weekday: [0.97, 0.94, 0.96, 1.01, 1.16, 1.00, 0.96],
                holiday: 0.8,
                hourly: [
                    profile(0.25, &[(8.0, 1.5, 1.0), (13.0, 4.0, 1.2), (16.8, 2.0, 1.3)]),
                    profile(0.25, &[(12.5, 4.0, 1.5)]),
                    profile(0.25, &[(15.5, 3.5, 1.6)]),
                ],
                commuter: false,
                growth: 0.018,
            },
            Pattern {
                name: "recreational",
                month: [
                    0.55, 0.60, 0.75, 0.90, 1.10, 1.40, 1.75, 1.70, 1.15, 0.90, 0.65, 0.60,
                ],
                weekday: [0.88, 0.85, 0.86, 0.94, 1.16, 1.26, 1.20],
                holiday: 1.15,
                hourly: [
                    profile(0.2, &[(10.0, 2.5, 1.0), (15.5, 3.0, 1.3)]),
                    profile(0.15, &[(11.0, 2.5, 1.8), (16.0, 3.0, 1.0)]),
                    profile(0.15, &[(11.0, 2.5, 0.9), (17.0, 2.5, 1.8)]),
                ],
                commuter: false,
                growth: 0.026,
            },
        ]
    }

    /// Relative level of a date before normalisation.
    fn raw_level(&self, date: NaiveDate) -> f64 {
        let m = self.month[date.month0() as usize];
        let w = self.weekday[date.weekday().num_days_from_monday() as usize];
        let h = if is_holiday(date) { self.holiday } else { 1.0 };
        m * w * h
    }

    /// `norm_y`: the inverse of the mean raw level over the days of `year`.
    pub(crate) fn norm(&self, year: i32) -> f64 {
        let days = days_of_year(year);
        let mean = days.iter().map(|&d| self.raw_level(d)).sum::<f64>() / days.len() as f64;
        1.0 / mean
    }

    /// Expected daily volume on `date` as a multiple of that year's AADT; `norm` from
    /// [`Pattern::norm`] for the date's year.
    pub(crate) fn day_level(&self, date: NaiveDate, norm: f64) -> f64 {
        norm * self.raw_level(date)
    }

    /// Share of the two-way hourly volume going `fwd`. `inbound_fwd` says whether `fwd`
    /// points towards the town the commuters drive to.
    pub(crate) fn fwd_share(&self, day: DayType, hour: u32, inbound_fwd: bool) -> f64 {
        let t = hour as f64 + 0.5;
        let bump = |c: f64, w: f64| (-0.5 * ((t - c) / w).powi(2)).exp();
        let sign = if inbound_fwd { 1.0 } else { -1.0 };
        let swing = match (self.commuter, day) {
            // Morning peak inbound, evening peak outbound (TMG: directional flip on commuter
            // routes).
            (true, DayType::Weekday) => 0.16 * (bump(7.8, 1.4) - bump(17.2, 1.6)),
            (true, _) => 0.03 * (bump(11.0, 2.0) - bump(18.0, 2.0)),
            // Outbound on Saturday mornings, back on Sunday evenings.
            (false, DayType::Saturday) => 0.06 * bump(11.0, 2.5),
            (false, DayType::SundayOrHoliday) => -0.08 * bump(17.0, 2.5),
            (false, DayType::Weekday) => 0.02 * (bump(8.0, 2.0) - bump(17.0, 2.0)),
        };
        0.5 + sign * swing
    }

    /// Monthly factors `AADT / MADT`, January first, from expected volumes without noise.
    pub(crate) fn monthly_factors(&self, year: i32) -> [f64; 12] {
        let mut f = [0.0; 12];
        for (m, slot) in f.iter_mut().enumerate() {
            let mean = self.mean_level(year, |d| d.month0() as usize == m);
            *slot = 1.0 / mean;
        }
        f
    }

    /// Weekday factors `AADT / ADT_weekday`, Monday first.
    pub(crate) fn weekday_factors(&self, year: i32) -> [f64; 7] {
        let mut f = [0.0; 7];
        for (w, slot) in f.iter_mut().enumerate() {
            let mean = self.mean_level(year, |d| d.weekday().num_days_from_monday() as usize == w);
            *slot = 1.0 / mean;
        }
        f
    }

    /// Factor `AADT / mean daily volume of that weekday in that month`; `month` 1..=12,
    /// `weekday` 1 = Monday ..= 7 = Sunday.
    pub(crate) fn weekday_month_factor(&self, year: i32, month: u32, weekday: u32) -> f64 {
        let mean = self.mean_level(year, |d| {
            d.month() == month && d.weekday().number_from_monday() == weekday
        });
        1.0 / mean
    }

    /// Mean expected daily volume (as a multiple of AADT) over the days that `keep` selects.
    fn mean_level(&self, year: i32, keep: impl Fn(NaiveDate) -> bool) -> f64 {
        let norm = self.norm(year);
        let days: Vec<NaiveDate> = days_of_year(year)
            .into_iter()
            .filter(|&d| keep(d))
            .collect();
        days.iter().map(|&d| self.day_level(d, norm)).sum::<f64>() / days.len() as f64
    }
}

/// Every date of a calendar year.
pub(crate) fn days_of_year(year: i32) -> Vec<NaiveDate> {
    let first = NaiveDate::from_ymd_opt(year, 1, 1).expect("valid year");
    first.iter_days().take_while(|d| d.year() == year).collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    #[test]
    fn hourly_profiles_sum_to_one() {
        for p in Pattern::all() {
            for prof in &p.hourly {
                assert_relative_eq!(prof.iter().sum::<f64>(), 1.0, epsilon = 1e-12);
                assert!(prof.iter().all(|&v| v > 0.0));
            }
        }
    }

    #[test]
    fn expected_daily_levels_average_to_one() {
        for p in Pattern::all() {
            let norm = p.norm(2025);
            let days = days_of_year(2025);
            let mean = days.iter().map(|&d| p.day_level(d, norm)).sum::<f64>() / 365.0;
            assert_relative_eq!(mean, 1.0, epsilon = 1e-12);
        }
    }

    #[test]
    fn monthly_and_weekday_factors_invert_to_mean_one() {
        for p in Pattern::all() {
            let mf = p.monthly_factors(2025);
            let inv: f64 = mf.iter().map(|f| 1.0 / f).sum::<f64>() / 12.0;
            // Months have unequal lengths, so the plain mean of 1/MF is only close to 1.
            assert_relative_eq!(inv, 1.0, epsilon = 0.01);
            let wf = p.weekday_factors(2025);
            let inv: f64 = wf.iter().map(|f| 1.0 / f).sum::<f64>() / 7.0;
            assert_relative_eq!(inv, 1.0, epsilon = 0.01);
        }
    }

    #[test]
    fn commuter_split_flips_between_peaks() {
        let p = &Pattern::all()[0];
        assert!(p.fwd_share(DayType::Weekday, 7, true) > 0.6);
        assert!(p.fwd_share(DayType::Weekday, 17, true) < 0.4);
        assert!(p.fwd_share(DayType::Weekday, 7, false) < 0.4);
    }
}
