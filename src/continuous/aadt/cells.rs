//! The 84 day-of-week × month cells: a cell, the cell of a date, and how often each weekday
//! occurs in each month of a year.

use chrono::{Datelike, NaiveDate};

/// One of the 84 day-of-week × month cells (both 0-based: dow 0 = Monday, month 0 = January).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct MadwCell {
    /// Day of week, 0 = Monday .. 6 = Sunday.
    pub dow: u8,
    /// Month, 0 = January .. 11 = December.
    pub month: u8,
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
pub(super) fn calendar(year: i32) -> ([[u32; 12]; 7], [u32; 12]) {
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
