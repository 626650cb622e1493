//! Toll and shadow-toll reconciliation: for each billed period of `toll.csv`, the passages
//! the tool's own statistics imply for that segment, period and vehicle group, with a 95 %
//! interval; the difference and a verdict; per-month and per-segment summaries; and the
//! payment implied by the estimate against the payment billed.
//!
//! # Method
//! - [`profile`]: the expected two-way volume of one day and vehicle group, as a
//!   [`DayEstimate`] with two log-space error parts, one shared by every day of the same
//!   source in a period and one of the day itself. Two sources: [`FactorProfile`]
//!   (AADT distributed with the 7 × 12 day-of-week-by-month factors, `day = AADT / F`, TMG
//!   convention `F = AADT / MADW`) and [`CounterDays`] (the permanent counter's own
//!   measured days, falling back to a factor profile for the days it lacks).
//! - [`period_estimate`]: the period estimate is the sum over its days; its log-sd combines
//!   the shared parts (fully correlated within a source, independent between sources) and
//!   the day parts (independent), see [`profile`]; the 95 % interval is
//!   `estimate · exp(±1.96 · s)`.
//! - [`reconcile`](mod@reconcile): verdict `over_billed` when the billed figure is above the upper
//!   bound, `under_billed` below the lower bound; inside, `inconclusive` when the interval
//!   cannot detect a discrepancy of `[toll] detectable_pct` (default 5 %), `consistent`
//!   otherwise; summaries; payment
//!   `= vehicles · length_km · rate per vehicle-km`.
//!
//! # Units
//! Vehicles/day (AADT, days), vehicles per billing period (estimates, billed), kilometres
//! (segment length), currency per vehicle-km (rates) and currency (payments). Log-sds are
//! natural-log standard deviations (≈ coefficients of variation when small).
//!
//! # References
//! - FHWA *Traffic Monitoring Guide* (TMG) 2013/2016/2022, ch. 3: factor definitions
//!   (`F_ij = AADT / MADW_ij`, from memory; tests/fixtures/REFERENCES.md §2.1).
//! - `data-contract.md`: `toll.csv`, `toll_reconciliation.csv`; vehicle groups light 1–3,
//!   heavy 4–13.

pub mod profile;
pub mod reconcile;
pub mod stage;

pub use crate::model::VehicleGroup;
pub use profile::{
    log_sd_from_interval, period_estimate, CounterDay, CounterDays, DailyProfile, DayEstimate,
    DaySource, FactorProfile, PeriodEstimate, DEFAULT_CALIBRATION_LOG_SD,
    DEFAULT_COUNTER_DAY_LOG_SD, DEFAULT_DAY_LOG_SD, DEFAULT_FACTOR_LOG_SD, Z95,
};
pub use reconcile::{
    detectable_pct, payment, reconcile, reconcile_row, row_payment, summarise_by_month,
    summarise_by_segment, MonthSummary, Payment, ReconciliationRow, RowPayment, SegmentSummary,
    TollParams, TollRates, TollRow, TollTotals, Verdict,
};

use chrono::NaiveDate;
use thiserror::Error;

use crate::model::SegmentId;

/// Errors of the toll reconciliation.
#[derive(Debug, Error, PartialEq)]
pub enum TollError {
    /// A billing period ends before it starts.
    #[error("billing period {from} to {to} ends before it starts")]
    BadPeriod {
        /// First day.
        from: NaiveDate,
        /// Last day.
        to: NaiveDate,
    },
    /// A profile value is out of its domain.
    #[error("{name} = {value} is not valid: {expected}")]
    BadInput {
        /// The value's name.
        name: &'static str,
        /// Its value.
        value: f64,
        /// The valid domain.
        expected: &'static str,
    },
    /// No daily profile was given for a billed segment.
    #[error("no traffic estimate for tolled segment {0}")]
    NoProfile(SegmentId),
}
