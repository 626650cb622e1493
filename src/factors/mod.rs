//! Factor groups, group factors and their precision, sample sizes, axle-correction factors
//! per group, and growth factors.
//!
//! Pure maths on the outputs of [`crate::continuous`]: no file I/O, no printing.
//!
//! # Method
//! - [`groups`]: station factor profiles (12 monthly + 7 day-of-week factors, TMG
//!   convention: factors multiply a short count); groups by rule (functional class × area,
//!   plus recreational by seasonal amplitude) or by Ward clustering of standardised
//!   profiles with a stated criterion for the number of groups; group summaries with
//!   precision flags; group ACF.
//! - [`precision`]: t and z quantiles (statrs), precision of a group mean
//!   `t_{0.975,n−1}·CV/√n`, required number of stations by iteration, with an optional
//!   finite-population correction.
//! - [`growth`]: pooled log-linear growth with station fixed effects, growth rate and
//!   growth factor with 95 % intervals, fallback chain, compound-rate helper.
//!
//! # Units
//! Factors, CVs, precisions and rates are fractions; years are calendar years.
//!
//! # References
//! - FHWA *Traffic Monitoring Guide* 2001 §3 App. 3-A, 2013 §3.2.3, 2016 ch. 3 (factor
//!   groups, precision target, sample size; from memory, `tests/fixtures/REFERENCES.md` §2.5-2.6).
//! - AASHTO *Guidelines for Traffic Data Programs*, 2009 (from memory).
//! - NCHRP Research Report 1124 (2024), summary (read, `tests/fixtures/REFERENCES.md` §2.5).
//! - Growth model, clustering criterion and fallbacks: common practice / project decisions,
//!   stated in each module.

pub mod groups;
pub mod growth;
pub mod precision;
pub mod stage;

use chrono::{Datelike, NaiveDate};
use thiserror::Error;

pub use groups::{
    cluster_profiles, group_axle_correction, rule_group, AcfPooling, Area, ClusterParams,
    Clustering, FactorProfile, GroupSummary, RuleGroup, RuleGroupParams,
};
pub use growth::{
    compound_rate, fit_growth, growth_with_fallback, GrowthFactor, GrowthFit, GrowthObservation,
    GrowthSource, NO_HISTORY_SLOPE_SE,
};
pub use precision::{
    precision_achieved, required_sample_size, t_quantile, z_quantile, FactorStats,
    DEFAULT_CONFIDENCE, DEFAULT_TARGET_PRECISION,
};

/// Errors of the factor-group and growth maths.
#[derive(Debug, Error, Clone, PartialEq)]
pub enum FactorError {
    /// No station (profile) was given.
    #[error("no station was given")]
    NoStations,
    /// A profile holds a factor that is not a positive finite number.
    #[error("station {station_id} has a factor that is not a positive finite number")]
    BadProfile {
        /// The station.
        station_id: String,
    },
    /// Functional class outside 1..=7.
    #[error("functional class {0} is not in 1..=7")]
    BadFunctionalClass(u8),
    /// An AADT in a growth series is not a positive finite number.
    #[error("AADT of {unit} in {year} is not a positive finite number")]
    BadAadt {
        /// Station or segment.
        unit: String,
        /// Year.
        year: i32,
    },
    /// A unit was given twice for one year.
    #[error("{unit} has more than one AADT for {year}")]
    DuplicateObservation {
        /// Station or segment.
        unit: String,
        /// Year.
        year: i32,
    },
    /// Not enough years to fit a growth slope with a residual degree of freedom.
    #[error("too little history to fit growth: {observations} observations of {units} units")]
    TooLittleHistory {
        /// Observations.
        observations: usize,
        /// Units.
        units: usize,
    },
}

/// Factors of one factor group as the expansion needs them.
#[derive(Debug, Clone, PartialEq)]
pub struct GroupFactors {
    /// Day-of-week (Monday = 0) by month (January = 0) factor: AADT / MADW.
    pub dow_month: [[f64; 12]; 7],
    /// Between-station CV of each cell's factor (None where fewer than two stations).
    pub dow_month_cv: [[Option<f64>; 12]; 7],
    /// Day-to-day CV of a single day about its month-weekday mean, pooled over the group.
    pub day_cv: Option<f64>,
    /// Stations behind the factors.
    pub stations: usize,
}

impl GroupFactors {
    /// A flat pattern: every cell 1, with the given CV per cell, behind `stations` counters.
    pub fn flat(cv: Option<f64>, stations: usize) -> GroupFactors {
        GroupFactors {
            dow_month: [[1.0; 12]; 7],
            dow_month_cv: [[cv; 12]; 7],
            day_cv: None,
            stations,
        }
    }

    /// The factor for a date.
    pub fn factor(&self, date: NaiveDate) -> f64 {
        self.dow_month[date.weekday().num_days_from_monday() as usize][date.month0() as usize]
    }

    /// The between-station CV for a date's cell.
    pub fn cv(&self, date: NaiveDate) -> Option<f64> {
        self.dow_month_cv[date.weekday().num_days_from_monday() as usize][date.month0() as usize]
    }
}
