//! AADT from a station's accepted days: the AASHTO 84-cell average with imputation and the
//! sufficiency verdict, the simple average and the calendar-weighted daily form.

use chrono::Datelike;

use super::cells::calendar;
use super::{cell_of, InsufficiencyReason, MadwCell, Sufficiency, SufficiencyRule};
use crate::continuous::{check_volume, ContinuousError, DayVolume};

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
