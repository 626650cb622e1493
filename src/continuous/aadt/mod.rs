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
//!   (which is what [`DayVolume`](super::DayVolume) holds) the two forms are identical. With
//!   a complete year it equals the simple average.
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
//! - FHWA TMG 2022, App. L (AASHTO method; read per `tests/fixtures/REFERENCES.md` §1.1).
//! - FHWA TMG 2016 ch. 3 §3.2 (calendar-weighted method; from memory, `tests/fixtures/REFERENCES.md` §1.3).
//! - TMG 2013/2016 ch. 3 factor definitions (from memory, `tests/fixtures/REFERENCES.md` §2.1).
//! - AASHTO *Guidelines for Traffic Data Programs*, 2009 (from memory).
//! - Imputation and verdict order: project decision (common practice in spirit).

// The 7 × 12 cell grids are indexed by (dow, month) across several arrays at once;
// index loops read more plainly here than zipped iterators.
#![allow(clippy::needless_range_loop)]

mod cells;
mod daily;
mod factors;
mod hourly;
mod sufficiency;
#[cfg(test)]
pub(crate) mod tests;

pub(crate) use cells::cell_of;
pub use cells::MadwCell;
pub use daily::{compute_aadt, AadtResult};
pub use factors::StationFactors;
pub use hourly::calendar_weighted_hourly;
pub use sufficiency::{InsufficiencyReason, Sufficiency, SufficiencyRule};
