//! The calendar-weighted AADT in its published hourly form, which lets partial days enter.

use chrono::{Datelike, NaiveDate};

use super::cell_of;
use super::cells::calendar;
use crate::continuous::{check_volume, ContinuousError};

/// TMG-2016 calendar-weighted AADT in its published **hourly** form, which lets partial
/// days enter: for each month `m`, weekday `j` and clock hour `h`, the mean of that hour over
/// the days present; the day-of-week average is the sum of its 24 hourly means;
/// `MADT_m = Σ_j w_jm · DAY_jm / Σ_j w_jm`; `AADT = Σ_m d_m MADT_m / Σ_m d_m`.
///
/// A repeated clock hour (clocks going back) is added to its clock hour of that day first.
/// A (weekday, month) cell enters only when all 24 clock hours have data; a month enters when
/// at least one of its cells does. Returns `None` when no cell is complete. With complete
/// days it equals the daily form in [`compute_aadt`](super::compute_aadt). Two-way volumes are used
/// (`fwd + rev`).
pub fn calendar_weighted_hourly(
    year: i32,
    hours: &[crate::continuous::HourVolume],
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
