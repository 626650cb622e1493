//! A station's monthly, day-of-week and day-of-week-by-month factors from its AADT result.

use chrono::NaiveDate;

use super::{cell_of, AadtResult};

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
