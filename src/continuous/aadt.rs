//! AADT of a permanent counter by three methods, the sufficiency verdict, MADT and the
//! station's monthly, day-of-week and day-of-week-by-month factors.
//!
//! # Method
//! Days are grouped into 84 cells by day of week `i` (0 = Monday .. 6 = Sunday) and month
//! `j` (0 = January .. 11 = December). `MADW_ij` is the mean of the valid days in cell
//! `(i, j)`.
//!
//! - **AASHTO** (TMG 2022 App. L): `AADT = (1/7) Σ_i (1/12) Σ_j MADW_ij`. Every day of week
//!   and every month weighs the same, however many days are present.
//! - **Simple average**: `Σ_days VOL / N_days` (TMG ch. 3). Biased toward over-represented
//!   days when data are missing; reported for comparison.
//! - **Calendar-weighted** (TMG 2016 §3.2, daily form): `MADT_m = Σ_i w_im MADW_im / Σ_i w_im`
//!   with `w_im` the number of times weekday `i` occurs in month `m` of the study year, and
//!   `AADT = Σ_m d_m MADT_m / Σ_m d_m` with `d_m` the days in the month. The published form
//!   averages each hour separately so that partial days can enter
//!   ([`calendar_weighted_hourly`], from [`super::HourVolume`]); with complete days only
//!   (which is what [`DayVolume`] holds) the two forms are identical. With a complete year it
//!   equals the simple average.
//!
//! MADT (AASHTO style) `MADT_j = (1/7) Σ_i MADW_ij`; annual average of a weekday
//! `ADT_i = (1/12) Σ_j MADW_ij`.
//!
//! Factors use the **TMG convention: they multiply a short count** to give AADT:
//! `MF_j = AADT / MADT_j`, `DF_i = AADT / ADT_i`, `F_ij = AADT / MADW_ij`. (Some agencies
//! publish the reciprocal "seasonal factor" MADT/AADT; this crate does not.)
//!
//! ## Sufficiency rule and imputation (project decision)
//! The published method is undefined when a cell is empty (refs §1.1). This module:
//! 1. counts a cell as *measured* when it holds at least `min_days_per_cell` valid days
//!    (days of thinner cells still enter the simple average);
//! 2. counts a month as *present* when at least one of its cells is measured;
//! 3. estimates each weekday's annual ratio `r_i = mean_j (MADW_ij / MADT_j)` over the
//!    *complete* months (all 7 cells measured);
//! 4. imputes an empty cell of a present month from that month's measured weekdays scaled by
//!    the weekday ratios: `MADW_ij = r_i · Σ_k MADW_kj / Σ_k r_k` (k over measured cells of
//!    month j). The imputation is exact when traffic follows a day-of-week × month pattern;
//! 5. gives the verdict, in this order:
//!    - fewer than `required_months` present months → `Insufficient(TooFewMonths)`;
//!    - empty cells in present months while `allow_imputed_cells` is false →
//!      `Insufficient(ImputationNotAllowed)`;
//!    - more than `max_imputed_cells` empty cells → `Insufficient(TooManyEmptyCells)`;
//!    - empty cells but no complete month to estimate ratios → `Insufficient(NoCompleteMonth)`;
//!    - all 84 cells measured → `Full`;
//!    - otherwise `Imputed { cells, dropped_months }` (`dropped_months` is non-empty only
//!      when `required_months < 12`).
//!
//! An AADT is still reported for an insufficient (partial-year) station: the AASHTO figure
//! is then the mean over weekdays of the mean over the months that hold a value for that
//! weekday (imputed where imputation is allowed and possible), which is biased toward the
//! months observed. Such a station is **not usable for factors**
//! ([`Sufficiency::usable_for_factors`]); neither is one with dropped months, because its
//! factor profile lacks months.
//!
//! # Units
//! Vehicles per day; factors are dimensionless.
//!
//! # References
//! - FHWA TMG 2022, App. L (AASHTO method; read per `references.md` §1.1).
//! - FHWA TMG 2016 ch. 3 §3.2 (calendar-weighted method; from memory, `references.md` §1.3).
//! - TMG 2013/2016 ch. 3 factor definitions (from memory, `references.md` §2.1).
//! - AASHTO *Guidelines for Traffic Data Programs*, 2009 (from memory).
//! - Imputation and verdict order: project decision (common practice in spirit).

// The 7 × 12 cell grids are indexed by (dow, month) across several arrays at once;
// index loops read more plainly here than zipped iterators.
#![allow(clippy::needless_range_loop)]

use chrono::{Datelike, NaiveDate};

use super::{check_volume, ContinuousError, DayVolume};

/// When a year of days is good enough for an AASHTO AADT and for factors.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
#[serde(default, deny_unknown_fields)]
pub struct SufficiencyRule {
    /// Valid days a MADW cell needs to count as measured (default 1, as TMG App. L allows
    /// "between one and five records"). A value of 0 is treated as 1.
    pub min_days_per_cell: u8,
    /// Months that must hold at least one measured cell (default 12).
    pub required_months: u8,
    /// Whether empty cells of present months may be imputed (default true).
    pub allow_imputed_cells: bool,
    /// Most empty cells that may be imputed before the station is insufficient
    /// (default 12, about one cell in seven; a project choice).
    pub max_imputed_cells: u8,
}

impl Default for SufficiencyRule {
    fn default() -> Self {
        SufficiencyRule {
            min_days_per_cell: 1,
            required_months: 12,
            allow_imputed_cells: true,
            max_imputed_cells: 12,
        }
    }
}

/// One of the 84 day-of-week × month cells (both 0-based: dow 0 = Monday, month 0 = January).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct MadwCell {
    /// Day of week, 0 = Monday .. 6 = Sunday.
    pub dow: u8,
    /// Month, 0 = January .. 11 = December.
    pub month: u8,
}

/// Why a station's year is not sufficient.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum InsufficiencyReason {
    /// Too few months hold a measured cell.
    TooFewMonths {
        /// Months present.
        present: u8,
        /// Months required.
        required: u8,
    },
    /// Cells are empty and the rule forbids imputation.
    ImputationNotAllowed {
        /// Empty cells in present months.
        empty_cells: usize,
    },
    /// More cells are empty than the rule allows to impute.
    TooManyEmptyCells {
        /// Empty cells in present months.
        empty_cells: usize,
        /// The rule's maximum.
        max: u8,
    },
    /// Cells are empty and no month has all 7 weekdays, so weekday ratios are unknown.
    NoCompleteMonth,
}

/// Verdict on a station's year of data.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Sufficiency {
    /// All 84 cells measured.
    Full,
    /// Some cells imputed (listed) and, when `required_months < 12`, some months dropped.
    Imputed {
        /// The imputed cells, in (dow, month) order.
        cells: Vec<MadwCell>,
        /// Months (0-based) with no measured cell, left out of the averages.
        dropped_months: Vec<u8>,
    },
    /// A partial year: AADT is reported but the station is unusable for factors.
    Insufficient {
        /// Why.
        reason: InsufficiencyReason,
    },
}

impl Sufficiency {
    /// Whether the station may contribute a factor profile to a factor group:
    /// `Full`, or `Imputed` with no dropped month.
    pub fn usable_for_factors(&self) -> bool {
        match self {
            Sufficiency::Full => true,
            Sufficiency::Imputed { dropped_months, .. } => dropped_months.is_empty(),
            Sufficiency::Insufficient { .. } => false,
        }
    }

    /// Short label for tables: `full`, `imputed` or `partial_year`.
    pub fn label(&self) -> &'static str {
        match self {
            Sufficiency::Full => "full",
            Sufficiency::Imputed { .. } => "imputed",
            Sufficiency::Insufficient { .. } => "partial_year",
        }
    }
}

/// AADT of one station (one direction or both) by three methods, with the cell grid.
#[derive(Debug, Clone, PartialEq)]
pub struct AadtResult {
    /// Study year.
    pub year: i32,
    /// AASHTO 84-cell AADT, vehicles/day; `None` when no cell has a value.
    pub aashto: Option<f64>,
    /// Simple average of all valid days, vehicles/day.
    pub simple: f64,
    /// TMG-2016 calendar-weighted AADT, vehicles/day; `None` when no cell has a value.
    pub calendar_weighted: Option<f64>,
    /// The sufficiency verdict.
    pub sufficiency: Sufficiency,
    /// Valid days used (all of them enter the simple average).
    pub days_used: usize,
    /// Valid days per cell, `[dow][month]`.
    pub days_per_cell: [[u8; 12]; 7],
    /// MADW per cell, `[dow][month]`: measured, imputed, or `None`.
    pub madw: [[Option<f64>; 12]; 7],
    /// Whether each cell's MADW is imputed, `[dow][month]`.
    pub imputed: [[bool; 12]; 7],
    /// AASHTO-style MADT per month (mean of its 7 MADW); `None` unless all 7 have a value.
    pub madt: [Option<f64>; 12],
    /// Annual average of each day of week, mean over the months with a value.
    pub adt_dow: [Option<f64>; 7],
}

/// A station's factors (TMG convention: multiply a short count to get AADT).
#[derive(Debug, Clone, PartialEq)]
pub struct StationFactors {
    /// The AASHTO AADT the factors refer to.
    pub aadt: f64,
    /// `MF_j = AADT / MADT_j`, month 0 = January.
    pub monthly: [f64; 12],
    /// `DF_i = AADT / ADT_i`, 0 = Monday.
    pub day_of_week: [f64; 7],
    /// `F_ij = AADT / MADW_ij`, `[dow][month]`.
    pub dow_by_month: [[f64; 12]; 7],
}

impl StationFactors {
    /// The day-of-week-by-month factor `F_ij` for the weekday and month of `date`.
    pub fn factor_for(&self, date: NaiveDate) -> f64 {
        let (i, j) = cell_of(date);
        self.dow_by_month[i][j]
    }

    /// Monthly factor times day-of-week factor for `date` (the `M × D` form of TMG
    /// short-count expansion).
    pub fn month_times_dow(&self, date: NaiveDate) -> f64 {
        let (i, j) = cell_of(date);
        self.monthly[j] * self.day_of_week[i]
    }
}

impl AadtResult {
    /// The station's factors, when the station is usable for factors and every MADW,
    /// MADT and ADT is positive; `None` otherwise.
    pub fn factors(&self) -> Option<StationFactors> {
        if !self.sufficiency.usable_for_factors() {
            return None;
        }
        let aadt = self.aashto.filter(|a| *a > 0.0)?;
        let mut monthly = [0.0; 12];
        for (j, m) in self.madt.iter().enumerate() {
            monthly[j] = aadt / m.filter(|v| *v > 0.0)?;
        }
        let mut day_of_week = [0.0; 7];
        for (i, a) in self.adt_dow.iter().enumerate() {
            day_of_week[i] = aadt / a.filter(|v| *v > 0.0)?;
        }
        let mut dow_by_month = [[0.0; 12]; 7];
        for i in 0..7 {
            for j in 0..12 {
                dow_by_month[i][j] = aadt / self.madw[i][j].filter(|v| *v > 0.0)?;
            }
        }
        Some(StationFactors {
            aadt,
            monthly,
            day_of_week,
            dow_by_month,
        })
    }
}

/// (dow, month) indices of a date, both 0-based.
pub(crate) fn cell_of(date: NaiveDate) -> (usize, usize) {
    (
        date.weekday().num_days_from_monday() as usize,
        date.month0() as usize,
    )
}

/// Number of times each weekday occurs in each month of `year`, `[dow][month]`, and the
/// days of each month.
fn calendar(year: i32) -> ([[u32; 12]; 7], [u32; 12]) {
    let mut w = [[0u32; 12]; 7];
    let mut d = [0u32; 12];
    let mut date = NaiveDate::from_ymd_opt(year, 1, 1).expect("valid year");
    while date.year() == year {
        let (i, j) = cell_of(date);
        w[i][j] += 1;
        d[j] += 1;
        date = date.succ_opt().expect("date in range");
    }
    (w, d)
}

/// AADT of one station for `year` from its accepted days, by the AASHTO, simple and
/// calendar-weighted methods, with the sufficiency verdict under `rule`.
///
/// Errors on no days, a duplicated date, a date outside `year`, or a volume that is not
/// a finite number ≥ 0. Day order does not matter.
///
/// ```
/// use chrono::NaiveDate;
/// use roadtally::continuous::{compute_aadt, DayVolume, Sufficiency, SufficiencyRule};
/// let mut days = Vec::new();
/// let mut d = NaiveDate::from_ymd_opt(2023, 1, 1).unwrap();
/// while d.year() == 2023 {
///     days.push(DayVolume { date: d, vehicles: 5000.0 });
///     d = d.succ_opt().unwrap();
/// }
/// # use chrono::Datelike;
/// let r = compute_aadt(2023, &days, &SufficiencyRule::default()).unwrap();
/// assert!((r.aashto.unwrap() - 5000.0).abs() < 1e-9);
/// assert_eq!(r.sufficiency, Sufficiency::Full);
/// ```
pub fn compute_aadt(
    year: i32,
    days: &[DayVolume],
    rule: &SufficiencyRule,
) -> Result<AadtResult, ContinuousError> {
    if days.is_empty() {
        return Err(ContinuousError::NoData);
    }
    let mut sorted: Vec<DayVolume> = days.to_vec();
    sorted.sort_by_key(|d| d.date);
    for pair in sorted.windows(2) {
        if pair[0].date == pair[1].date {
            return Err(ContinuousError::DuplicateDate { date: pair[0].date });
        }
    }
    let mut sums = [[0.0f64; 12]; 7];
    let mut counts = [[0u8; 12]; 7];
    let mut total = 0.0;
    for d in &sorted {
        if d.date.year() != year {
            return Err(ContinuousError::OutsideYear { date: d.date, year });
        }
        check_volume(d.date, d.vehicles)?;
        let (i, j) = cell_of(d.date);
        sums[i][j] += d.vehicles;
        counts[i][j] += 1;
        total += d.vehicles;
    }
    let simple = total / sorted.len() as f64;

    let min_days = rule.min_days_per_cell.max(1);
    let mut madw = [[None; 12]; 7];
    for i in 0..7 {
        for j in 0..12 {
            if counts[i][j] >= min_days {
                madw[i][j] = Some(sums[i][j] / f64::from(counts[i][j]));
            }
        }
    }
    let month_present: Vec<bool> = (0..12)
        .map(|j| (0..7).any(|i| madw[i][j].is_some()))
        .collect();
    let months_present = month_present.iter().filter(|p| **p).count() as u8;
    let empty_cells: Vec<MadwCell> = (0..7)
        .flat_map(|i| (0..12).map(move |j| (i, j)))
        .filter(|&(i, j)| month_present[j] && madw[i][j].is_none())
        .map(|(i, j)| MadwCell {
            dow: i as u8,
            month: j as u8,
        })
        .collect();

    // Weekday ratios r_i from complete months.
    let complete: Vec<usize> = (0..12)
        .filter(|&j| (0..7).all(|i| madw[i][j].is_some()))
        .collect();
    let ratios: Option<[f64; 7]> = if complete.is_empty() {
        None
    } else {
        let mut r = [0.0; 7];
        let mut ok = true;
        for &j in &complete {
            let madt: f64 = (0..7).map(|i| madw[i][j].unwrap_or(0.0)).sum::<f64>() / 7.0;
            if madt <= 0.0 {
                ok = false;
                break;
            }
            for (i, ri) in r.iter_mut().enumerate() {
                *ri += madw[i][j].unwrap_or(0.0) / madt;
            }
        }
        for ri in r.iter_mut() {
            *ri /= complete.len() as f64;
        }
        ok.then_some(r)
    };

    let mut imputed = [[false; 12]; 7];
    if rule.allow_imputed_cells {
        if let Some(r) = ratios {
            let snapshot = madw;
            for cell in &empty_cells {
                let (i, j) = (cell.dow as usize, cell.month as usize);
                let (mut num, mut den) = (0.0, 0.0);
                for k in 0..7 {
                    if let Some(v) = snapshot[k][j] {
                        num += v;
                        den += r[k];
                    }
                }
                if den > 0.0 {
                    madw[i][j] = Some(r[i] * num / den);
                    imputed[i][j] = true;
                }
            }
        }
    }

    let sufficiency = if months_present < rule.required_months.min(12) {
        Sufficiency::Insufficient {
            reason: InsufficiencyReason::TooFewMonths {
                present: months_present,
                required: rule.required_months,
            },
        }
    } else if !empty_cells.is_empty() && !rule.allow_imputed_cells {
        Sufficiency::Insufficient {
            reason: InsufficiencyReason::ImputationNotAllowed {
                empty_cells: empty_cells.len(),
            },
        }
    } else if empty_cells.len() > usize::from(rule.max_imputed_cells) {
        Sufficiency::Insufficient {
            reason: InsufficiencyReason::TooManyEmptyCells {
                empty_cells: empty_cells.len(),
                max: rule.max_imputed_cells,
            },
        }
    } else if !empty_cells.is_empty() && ratios.is_none() {
        Sufficiency::Insufficient {
            reason: InsufficiencyReason::NoCompleteMonth,
        }
    } else if empty_cells.is_empty() && months_present == 12 {
        Sufficiency::Full
    } else {
        Sufficiency::Imputed {
            cells: empty_cells.clone(),
            dropped_months: (0..12u8).filter(|&j| !month_present[j as usize]).collect(),
        }
    };

    // AASHTO: mean over weekdays of the mean over months holding a value.
    let mut adt_dow = [None; 7];
    for (i, a) in adt_dow.iter_mut().enumerate() {
        let vals: Vec<f64> = madw[i].iter().flatten().copied().collect();
        if !vals.is_empty() {
            *a = Some(vals.iter().sum::<f64>() / vals.len() as f64);
        }
    }
    let dow_vals: Vec<f64> = adt_dow.iter().flatten().copied().collect();
    let aashto =
        (!dow_vals.is_empty()).then(|| dow_vals.iter().sum::<f64>() / dow_vals.len() as f64);

    let mut madt = [None; 12];
    for (j, m) in madt.iter_mut().enumerate() {
        if (0..7).all(|i| madw[i][j].is_some()) {
            *m = Some((0..7).map(|i| madw[i][j].unwrap_or(0.0)).sum::<f64>() / 7.0);
        }
    }

    // Calendar-weighted (TMG 2016, daily form).
    let (w, dm) = calendar(year);
    let (mut num, mut den) = (0.0, 0.0);
    for j in 0..12 {
        let (mut mn, mut md) = (0.0, 0.0);
        for i in 0..7 {
            if let Some(v) = madw[i][j] {
                mn += f64::from(w[i][j]) * v;
                md += f64::from(w[i][j]);
            }
        }
        if md > 0.0 {
            num += f64::from(dm[j]) * mn / md;
            den += f64::from(dm[j]);
        }
    }
    let calendar_weighted = (den > 0.0).then(|| num / den);

    Ok(AadtResult {
        year,
        aashto,
        simple,
        calendar_weighted,
        sufficiency,
        days_used: sorted.len(),
        days_per_cell: counts,
        madw,
        imputed,
        madt,
        adt_dow,
    })
}

/// TMG-2016 calendar-weighted AADT in its published **hourly** form, which lets partial
/// days enter: for each month `m`, weekday `j` and clock hour `h`, the mean of that hour over
/// the days present; the day-of-week average is the sum of its 24 hourly means;
/// `MADT_m = Σ_j w_jm · DAY_jm / Σ_j w_jm`; `AADT = Σ_m d_m MADT_m / Σ_m d_m`.
///
/// A repeated clock hour (clocks going back) is added to its clock hour of that day first.
/// A (weekday, month) cell enters only when all 24 clock hours have data; a month enters when
/// at least one of its cells does. Returns `None` when no cell is complete. With complete
/// days it equals the daily form in [`compute_aadt`]. Two-way volumes are used
/// (`fwd + rev`).
pub fn calendar_weighted_hourly(
    year: i32,
    hours: &[super::HourVolume],
) -> Result<Option<f64>, ContinuousError> {
    use std::collections::{BTreeMap, HashSet};
    let mut seen = HashSet::with_capacity(hours.len());
    // Per (date, clock hour): volume, repeats summed.
    let mut per_hour: BTreeMap<(NaiveDate, u8), f64> = BTreeMap::new();
    for h in hours {
        if h.date.year() != year {
            return Err(ContinuousError::OutsideYear { date: h.date, year });
        }
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
        if !seen.insert((h.date, h.clock_hour, h.repeat)) {
            return Err(ContinuousError::DuplicateHour {
                date: h.date,
                clock_hour: h.clock_hour,
                repeat: h.repeat,
            });
        }
        *per_hour.entry((h.date, h.clock_hour)).or_insert(0.0) += h.two_way();
    }
    if per_hour.is_empty() {
        return Err(ContinuousError::NoData);
    }
    let mut sums = [[[0.0f64; 24]; 12]; 7];
    let mut counts = [[[0u32; 24]; 12]; 7];
    for (&(date, h), &v) in &per_hour {
        let (i, j) = cell_of(date);
        sums[i][j][usize::from(h)] += v;
        counts[i][j][usize::from(h)] += 1;
    }
    let (w, dm) = calendar(year);
    let (mut num, mut den) = (0.0, 0.0);
    for j in 0..12 {
        let (mut mn, mut md) = (0.0, 0.0);
        for i in 0..7 {
            if counts[i][j].iter().all(|&c| c > 0) {
                let day: f64 = (0..24)
                    .map(|h| sums[i][j][h] / f64::from(counts[i][j][h]))
                    .sum();
                mn += f64::from(w[i][j]) * day;
                md += f64::from(w[i][j]);
            }
        }
        if md > 0.0 {
            num += f64::from(dm[j]) * mn / md;
            den += f64::from(dm[j]);
        }
    }
    Ok((den > 0.0).then(|| num / den))
}

#[cfg(test)]
pub(crate) mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    /// refs §1.5 monthly multipliers.
    pub(crate) const M: [f64; 12] = [
        0.80, 0.85, 0.95, 1.00, 1.05, 1.10, 1.20, 1.15, 1.05, 1.00, 0.95, 0.90,
    ];

    /// refs §1.5 base by weekday: Mon–Fri 10,000, Sat 8,000, Sun 6,000.
    pub(crate) fn base(dow: usize) -> f64 {
        match dow {
            0..=4 => 10_000.0,
            5 => 8_000.0,
            _ => 6_000.0,
        }
    }

    /// refs §1.5 synthetic 2023 year, filtered by `keep`.
    pub(crate) fn synthetic_year(keep: impl Fn(NaiveDate) -> bool) -> Vec<DayVolume> {
        let mut out = Vec::new();
        let mut d = NaiveDate::from_ymd_opt(2023, 1, 1).unwrap();
        while d.year() == 2023 {
            if keep(d) {
                let (i, j) = cell_of(d);
                out.push(DayVolume {
                    date: d,
                    vehicles: base(i) * M[j],
                });
            }
            d = d.succ_opt().unwrap();
        }
        out
    }

    fn rule() -> SufficiencyRule {
        SufficiencyRule::default()
    }

    #[test]
    fn refs_1_5_complete_year() {
        // Source: references.md §1.5 / §11 #1 (computed; TMG 2022 App. L formula).
        // The printed figures carry 3 decimals, so they are compared at 1e-7 relative
        // (half a unit of the last digit is 5.5e-8 of 9144); the exact identities
        // (AASHTO = 64000/7, calendar-weighted = simple) are checked at 1e-9 / 1e-12.
        let r = compute_aadt(2023, &synthetic_year(|_| true), &rule()).unwrap();
        assert_relative_eq!(r.aashto.unwrap(), 64_000.0 / 7.0, max_relative = 1e-9);
        assert_relative_eq!(r.aashto.unwrap(), 9142.857, max_relative = 1e-7);
        assert_relative_eq!(r.simple, 9144.110, max_relative = 1e-7);
        assert_relative_eq!(r.calendar_weighted.unwrap(), 9144.110, max_relative = 1e-7);
        assert_relative_eq!(r.calendar_weighted.unwrap(), r.simple, max_relative = 1e-12);
        assert_eq!(r.sufficiency, Sufficiency::Full);
        assert_eq!(r.days_used, 365);
    }

    #[test]
    fn refs_1_5_july_first_week_only() {
        // Source: references.md §1.5 / §11 #2 (computed).
        let days = synthetic_year(|d| d.month() != 7 || d.day() <= 7);
        assert_eq!(days.len(), 341);
        let r = compute_aadt(2023, &days, &rule()).unwrap();
        assert_relative_eq!(r.aashto.unwrap(), 9142.857, max_relative = 1e-7);
        assert_relative_eq!(r.simple, 9027.566, max_relative = 1e-7);
        assert_relative_eq!(r.calendar_weighted.unwrap(), 9144.110, max_relative = 1e-7);
        assert_eq!(r.sufficiency, Sufficiency::Full);
    }

    #[test]
    fn refs_1_5_q1_weekends_thinned() {
        // Source: references.md §1.5 / §11 #2: Jan–Mar keep only the first Sat and Sun.
        let days = synthetic_year(|d| {
            let (i, j) = cell_of(d);
            !(j < 3 && i >= 5 && d.day() > 7)
        });
        assert_eq!(days.len(), 346);
        let r = compute_aadt(2023, &days, &rule()).unwrap();
        assert_relative_eq!(r.aashto.unwrap(), 9142.857, max_relative = 1e-7);
        assert_relative_eq!(r.simple, 9316.763, max_relative = 1e-7);
        assert_relative_eq!(r.calendar_weighted.unwrap(), 9144.110, max_relative = 1e-7);
    }

    #[test]
    fn refs_2_4_factors() {
        // Source: references.md §2.4 / §11 #3 (TMG factor definitions, from memory; computed).
        let r = compute_aadt(2023, &synthetic_year(|_| true), &rule()).unwrap();
        let f = r.factors().unwrap();
        assert_relative_eq!(f.monthly[0], 1.25, max_relative = 1e-4);
        assert_relative_eq!(f.monthly[6], 0.8333, max_relative = 1e-4);
        for i in 0..5 {
            assert_relative_eq!(f.day_of_week[i], 0.9143, max_relative = 1e-4);
        }
        assert_relative_eq!(f.day_of_week[5], 1.1429, max_relative = 1e-4);
        assert_relative_eq!(f.day_of_week[6], 1.5238, max_relative = 1e-4);
        assert_relative_eq!(f.dow_by_month[1][6], 0.7619, max_relative = 1e-4);
        assert_relative_eq!(r.madt[6].unwrap(), 9142.857 * 1.2, max_relative = 1e-7);
        // 48-h Tue–Wed July count of 12,000 per day: factor each day, average.
        let tue = NaiveDate::from_ymd_opt(2023, 7, 11).unwrap();
        let wed = NaiveDate::from_ymd_opt(2023, 7, 12).unwrap();
        let est = (12_000.0 * f.factor_for(tue) + 12_000.0 * f.factor_for(wed)) / 2.0;
        assert_relative_eq!(est, 9142.857, max_relative = 1e-6);
        assert_relative_eq!(
            12_000.0 * f.month_times_dow(tue),
            9142.857,
            max_relative = 1e-6
        );
    }

    #[test]
    fn empty_cell_is_imputed_exactly_for_a_multiplicative_pattern() {
        // Project rule (module docs): drop every Tuesday of March; the imputation from
        // March's other weekdays × weekday ratio recovers the cell exactly.
        let days = synthetic_year(|d| !(d.month() == 3 && cell_of(d).0 == 1));
        let r = compute_aadt(2023, &days, &rule()).unwrap();
        assert_eq!(
            r.sufficiency,
            Sufficiency::Imputed {
                cells: vec![MadwCell { dow: 1, month: 2 }],
                dropped_months: vec![]
            }
        );
        assert!(r.imputed[1][2]);
        assert_relative_eq!(r.madw[1][2].unwrap(), 10_000.0 * 0.95, max_relative = 1e-12);
        assert_relative_eq!(r.aashto.unwrap(), 64_000.0 / 7.0, max_relative = 1e-12);
        assert!(r.factors().is_some());
    }

    #[test]
    fn imputation_forbidden_gives_insufficient() {
        let days = synthetic_year(|d| !(d.month() == 3 && cell_of(d).0 == 1));
        let rule = SufficiencyRule {
            allow_imputed_cells: false,
            ..SufficiencyRule::default()
        };
        let r = compute_aadt(2023, &days, &rule).unwrap();
        assert_eq!(
            r.sufficiency,
            Sufficiency::Insufficient {
                reason: InsufficiencyReason::ImputationNotAllowed { empty_cells: 1 }
            }
        );
        assert!(r.factors().is_none());
        assert!(r.aashto.is_some());
    }

    #[test]
    fn partial_year_reports_aadt_but_no_factors() {
        // Station that ran only January–June.
        let days = synthetic_year(|d| d.month() <= 6);
        let r = compute_aadt(2023, &days, &rule()).unwrap();
        assert_eq!(
            r.sufficiency,
            Sufficiency::Insufficient {
                reason: InsufficiencyReason::TooFewMonths {
                    present: 6,
                    required: 12
                }
            }
        );
        assert!(!r.sufficiency.usable_for_factors());
        assert_eq!(r.sufficiency.label(), "partial_year");
        let m_mean: f64 = M[..6].iter().sum::<f64>() / 6.0;
        assert_relative_eq!(
            r.aashto.unwrap(),
            64_000.0 / 7.0 * m_mean,
            max_relative = 1e-12
        );
        assert!(r.factors().is_none());
        assert!(r.madt[7].is_none());
    }

    #[test]
    fn fewer_required_months_drops_months() {
        let days = synthetic_year(|d| d.month() != 2);
        let rule = SufficiencyRule {
            required_months: 11,
            ..SufficiencyRule::default()
        };
        let r = compute_aadt(2023, &days, &rule).unwrap();
        assert_eq!(
            r.sufficiency,
            Sufficiency::Imputed {
                cells: vec![],
                dropped_months: vec![1]
            }
        );
        assert!(!r.sufficiency.usable_for_factors());
    }

    #[test]
    fn min_days_per_cell_and_too_many_empty_cells() {
        // Only the first week of every month: each cell has 1 day.
        let days = synthetic_year(|d| d.day() <= 7);
        let rule2 = SufficiencyRule {
            min_days_per_cell: 2,
            ..SufficiencyRule::default()
        };
        let r = compute_aadt(2023, &days, &rule2).unwrap();
        assert_eq!(
            r.sufficiency,
            Sufficiency::Insufficient {
                reason: InsufficiencyReason::TooFewMonths {
                    present: 0,
                    required: 12
                }
            }
        );
        assert!(r.aashto.is_none());
        assert!(r.calendar_weighted.is_none());
        assert_relative_eq!(
            r.simple,
            days.iter().map(|d| d.vehicles).sum::<f64>() / 84.0
        );
        // Drop the Sundays of Jan–Mar (3 cells) and the Mondays of Mar–Dec (10 cells): 13 > 12.
        let days = synthetic_year(|d| {
            let (i, j) = cell_of(d);
            !((i == 6 && j < 3) || (i == 0 && j >= 2))
        });
        let r = compute_aadt(2023, &days, &rule()).unwrap();
        assert_eq!(
            r.sufficiency,
            Sufficiency::Insufficient {
                reason: InsufficiencyReason::TooManyEmptyCells {
                    empty_cells: 13,
                    max: 12
                }
            }
        );
    }

    #[test]
    fn no_complete_month_cannot_impute() {
        // Every month misses its Sunday cell.
        let days = synthetic_year(|d| cell_of(d).0 != 6);
        let rule = SufficiencyRule {
            max_imputed_cells: 84,
            ..SufficiencyRule::default()
        };
        let r = compute_aadt(2023, &days, &rule).unwrap();
        assert_eq!(
            r.sufficiency,
            Sufficiency::Insufficient {
                reason: InsufficiencyReason::NoCompleteMonth
            }
        );
        assert!(r.adt_dow[6].is_none());
    }

    #[test]
    fn input_errors() {
        let d = NaiveDate::from_ymd_opt(2023, 5, 1).unwrap();
        assert_eq!(
            compute_aadt(2023, &[], &rule()),
            Err(ContinuousError::NoData)
        );
        let dup = [
            DayVolume {
                date: d,
                vehicles: 1.0,
            },
            DayVolume {
                date: d,
                vehicles: 2.0,
            },
        ];
        assert_eq!(
            compute_aadt(2023, &dup, &rule()),
            Err(ContinuousError::DuplicateDate { date: d })
        );
        assert!(matches!(
            compute_aadt(2024, &dup[..1], &rule()),
            Err(ContinuousError::OutsideYear { .. })
        ));
        let bad = [DayVolume {
            date: d,
            vehicles: f64::NAN,
        }];
        assert!(matches!(
            compute_aadt(2023, &bad, &rule()),
            Err(ContinuousError::BadVolume { .. })
        ));
    }

    /// The §1.5 year spread over 24 hours with a fixed hourly profile, one-way.
    fn synthetic_hours(keep: impl Fn(NaiveDate, u8) -> bool) -> Vec<crate::continuous::HourVolume> {
        let profile: [f64; 24] = std::array::from_fn(|h| 1.0 + (h as f64 - 11.5).abs());
        let total: f64 = profile.iter().sum();
        let mut out = Vec::new();
        for d in synthetic_year(|_| true) {
            for h in 0..24u8 {
                if keep(d.date, h) {
                    out.push(crate::continuous::HourVolume {
                        date: d.date,
                        clock_hour: h,
                        repeat: 0,
                        fwd: d.vehicles * profile[usize::from(h)] / total,
                        rev: None,
                        heavy: None,
                    });
                }
            }
        }
        out
    }

    #[test]
    fn calendar_weighted_hourly_form_matches_daily_and_uses_partial_days() {
        // references.md §1.3: with complete days the hourly form equals the daily form
        // (9144.110, §1.5); partial days (here: every 4th day of July loses its evening
        // hours) still enter hour by hour and leave the result unchanged.
        let full = calendar_weighted_hourly(2023, &synthetic_hours(|_, _| true))
            .unwrap()
            .unwrap();
        assert_relative_eq!(full, 9144.110, max_relative = 1e-7);
        let daily = compute_aadt(2023, &synthetic_year(|_| true), &rule()).unwrap();
        assert_relative_eq!(full, daily.calendar_weighted.unwrap(), max_relative = 1e-12);
        let partial = calendar_weighted_hourly(
            2023,
            &synthetic_hours(|d, h| !(d.month() == 7 && d.day() % 4 == 0 && h >= 18)),
        )
        .unwrap()
        .unwrap();
        assert_relative_eq!(partial, 9144.110, max_relative = 1e-7);
        assert_eq!(
            calendar_weighted_hourly(2023, &[]),
            Err(ContinuousError::NoData)
        );
    }

    fn flat_year(year: i32, v: f64) -> Vec<DayVolume> {
        let mut out = Vec::new();
        let mut d = NaiveDate::from_ymd_opt(year, 1, 1).unwrap();
        while d.year() == year {
            out.push(DayVolume {
                date: d,
                vehicles: v,
            });
            d = d.succ_opt().unwrap();
        }
        out
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(24))]

        /// style.md habit 10: a flat year gives every factor 1 and AADT = the volume.
        #[test]
        fn flat_year_gives_unit_factors(v in 1.0f64..1.0e5, year in 2000i32..2040) {
            let r = compute_aadt(year, &flat_year(year, v), &rule()).unwrap();
            prop_assert!((r.aashto.unwrap() - v).abs() <= 1e-9 * v);
            prop_assert!((r.simple - v).abs() <= 1e-9 * v);
            prop_assert!((r.calendar_weighted.unwrap() - v).abs() <= 1e-9 * v);
            let f = r.factors().unwrap();
            for x in f.monthly.iter().chain(f.day_of_week.iter()).chain(f.dow_by_month.iter().flatten()) {
                prop_assert!((x - 1.0).abs() <= 1e-9);
            }
        }

        /// style.md habit 10: day order does not change results.
        #[test]
        fn day_order_does_not_matter(
            days in Just(synthetic_year(|d| d.day() % 3 != 0)).prop_shuffle()
        ) {
            let reference = compute_aadt(2023, &synthetic_year(|d| d.day() % 3 != 0), &rule()).unwrap();
            let r = compute_aadt(2023, &days, &rule()).unwrap();
            prop_assert_eq!(&r.sufficiency, &reference.sufficiency);
            prop_assert!((r.aashto.unwrap() - reference.aashto.unwrap()).abs() <= 1e-9 * reference.aashto.unwrap());
            prop_assert!((r.simple - reference.simple).abs() <= 1e-9 * reference.simple);
            prop_assert!((r.calendar_weighted.unwrap() - reference.calendar_weighted.unwrap()).abs() <= 1e-9 * reference.simple);
        }
    }
}
