//! Permanent-counter (continuous count station) statistics: AADT, MADT, seasonal and
//! day-of-week factors, hourly distributions, design hour, K and D factors, PHF and
//! vehicle-class figures.
//!
//! This module is pure maths: it takes accepted (complete, QC-passed) days and hours of one
//! station and returns numbers with a statement of how they were obtained. It reads no
//! files and prints nothing.
//!
//! # Method
//! - [`aadt`]: AADT by the AASHTO "84 cells" method (mean over 7 days of week of the mean
//!   over 12 months of the monthly average day of week, MADW), the simple average of all
//!   valid days, and the TMG-2016 calendar-weighted average, side by side, with a stated
//!   [`aadt::SufficiencyRule`] and imputation of empty MADW cells. Monthly, day-of-week and
//!   day-of-week-by-month factors follow the TMG convention: a factor **multiplies** a short
//!   count to give AADT (factor = AADT / short-period average).
//! - [`design_hour`](mod@design_hour): ranked two-way clock hours, the 30th-highest hour, K30, D, DHV, DDHV,
//!   the 100th-highest hour, the ranked-hour curve, hourly distributions by day type, and the
//!   HCM peak hour factor.
//! - [`classes`]: AADT per FHWA class, heavy / single-unit / combination shares, heavy-vehicle
//!   factors, axles per vehicle and the axle-correction factor.
//!
//! Day-of-week index convention throughout: 0 = Monday .. 6 = Sunday (ISO order, as
//! `chrono::Weekday::num_days_from_monday`). Month index: 0 = January .. 11 = December.
//!
//! # Units
//! Volumes are vehicles (per day for [`DayVolume`], per clock hour for [`HourVolume`]).
//! Factors, shares, K and D are dimensionless ratios (0.15, not 15 %).
//!
//! # References
//! - FHWA, *Traffic Monitoring Guide* (TMG), 2022, Appendix L "AASHTO AADT Calculation"
//!   (read, per `tests/fixtures/REFERENCES.md` §1.1); TMG 2016 ch. 3 for the calendar-weighted method and
//!   the factor definitions (from memory, per `tests/fixtures/REFERENCES.md` §1.3, §2.1).
//! - AASHTO, *Guidelines for Traffic Data Programs*, 2nd ed., 2009 (from memory).
//! - AASHTO *A Policy on Geometric Design* (Green Book), ch. 2, for K30/D/DHV (paraphrased,
//!   per `tests/fixtures/REFERENCES.md` §3.1); TRB *Highway Capacity Manual* for PHF (from memory).
//! - Imputation of empty cells, tie rules and day-type hourly shares are project decisions
//!   (stated in each module); they are common practice, not published rules.

pub mod aadt;
pub mod classes;
pub mod design_hour;
pub mod stage;

use chrono::NaiveDate;
use thiserror::Error;

pub use aadt::{
    calendar_weighted_hourly, compute_aadt, AadtResult, InsufficiencyReason, MadwCell,
    StationFactors, Sufficiency, SufficiencyRule,
};
pub use classes::{
    axle_correction_factor, class_aadt, mean_axles_per_vehicle, AxleSample, ClassAadt, ClassDay,
    FHWA_CLASSES,
};
pub use design_hour::{
    design_hour, hourly_distribution, peak_hour_factor, peak_hour_factor_rolling, DayType,
    DesignHour, HourlyDistribution,
};

/// One accepted (complete, QC-passed) local day of a station, for one direction or both
/// directions together (the caller decides which; the maths does not care).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct DayVolume {
    /// Local calendar date (the offset carried by the count records).
    pub date: NaiveDate,
    /// Vehicles counted in the 24 hours of that local day.
    pub vehicles: f64,
}

/// One clock hour of a station with both directions, for K30, D and hourly distributions.
///
/// Shape adjusted from the brief: `rev` is an `Option` so that a one-way road (no reverse
/// direction) is explicit, and a repeated clock hour (the autumn daylight-saving change) is
/// told apart by `repeat` rather than a running index.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HourVolume {
    /// Local calendar date of the hour's start.
    pub date: NaiveDate,
    /// Local clock hour of the start, 0..=23.
    pub clock_hour: u8,
    /// 0 for the first occurrence of this clock hour on this date, 1 for the repeated hour
    /// when clocks go back. Used only to order and identify hours.
    pub repeat: u8,
    /// Vehicles in the digitised (`fwd`) direction.
    pub fwd: f64,
    /// Vehicles in the reverse direction; `None` on a one-way road.
    pub rev: Option<f64>,
    /// Heavy vehicles (FHWA classes 4-13), both directions, when classified.
    pub heavy: Option<f64>,
}

impl HourVolume {
    /// Two-way volume of the hour (`fwd + rev`, or `fwd` on a one-way road).
    pub fn two_way(&self) -> f64 {
        self.fwd + self.rev.unwrap_or(0.0)
    }
}

/// Errors of the continuous-count maths: inputs the functions cannot work with at all.
/// Data that is merely thin is not an error; it is reported as a [`Sufficiency`] verdict.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum ContinuousError {
    /// No day (or hour) was given.
    #[error("no valid day was given")]
    NoData,
    /// The same date was given twice.
    #[error("date {date} was given more than once")]
    DuplicateDate {
        /// The repeated date.
        date: NaiveDate,
    },
    /// The same clock hour was given twice.
    #[error("hour {clock_hour} (repeat {repeat}) of {date} was given more than once")]
    DuplicateHour {
        /// Date of the repeated hour.
        date: NaiveDate,
        /// Clock hour.
        clock_hour: u8,
        /// Repeat index.
        repeat: u8,
    },
    /// A date outside the study year was given.
    #[error("date {date} is outside the study year {year}")]
    OutsideYear {
        /// The offending date.
        date: NaiveDate,
        /// The study year.
        year: i32,
    },
    /// A volume was negative, NaN or infinite.
    #[error("volume {value} on {date} is not a finite number >= 0")]
    BadVolume {
        /// Date of the bad value.
        date: NaiveDate,
        /// The value.
        value: f64,
    },
    /// A clock hour above 23.
    #[error("clock hour {clock_hour} on {date} is not in 0..=23")]
    BadHour {
        /// Date.
        date: NaiveDate,
        /// The value.
        clock_hour: u8,
    },
    /// Fewer ranked hours than the rank asked for.
    #[error("only {available} hours are available, rank {rank} was asked for")]
    TooFewHours {
        /// Hours given.
        available: usize,
        /// Rank needed.
        rank: usize,
    },
    /// AADT must be a positive finite number to form ratios.
    #[error("AADT {0} must be a finite number > 0")]
    BadAadt(f64),
}

pub(crate) fn check_volume(date: NaiveDate, value: f64) -> Result<(), ContinuousError> {
    if value.is_finite() && value >= 0.0 {
        Ok(())
    } else {
        Err(ContinuousError::BadVolume { date, value })
    }
}
