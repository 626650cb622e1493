//! The results of the kriging: a prediction, the fallback steps it took and the
//! leave-one-out cross-validation point.

/// Why a drift term was left out of a local system.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum DriftDefect {
    /// The term takes (numerically) one value among the neighbours, so it duplicates the
    /// constant.
    ConstantAmongNeighbours,
    /// The term is a linear combination of the constant and the terms kept before it.
    Colinear,
}

/// A drift term left out, by its index in [`KrigingData::drift`](super::KrigingData::drift) rows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct DroppedDriftTerm {
    /// Index of the term.
    pub term: usize,
    /// Why it was left out.
    pub defect: DriftDefect,
}

/// A step of the fallback chain taken for one target (see the module docs).
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub enum Fallback {
    /// Drift terms left out of this system.
    DroppedDriftTerms(Vec<DroppedDriftTerm>),
    /// Coincident neighbours merged (groups of data indices) after the system failed with this
    /// condition number (infinite if singular).
    MergedCoincident {
        /// Groups of data indices merged into one observation each.
        groups: Vec<Vec<usize>>,
        /// Condition number of the system that failed.
        condition_estimate: f64,
    },
    /// Ordinary kriging used after the drift system failed with this condition number.
    OrdinaryKriging {
        /// Condition number of the system that failed.
        condition_estimate: f64,
    },
    /// Inverse-variance-weighted mean used after ordinary kriging failed with this condition
    /// number.
    InverseVarianceMean {
        /// Condition number of the system that failed.
        condition_estimate: f64,
    },
}

/// An estimate at one target and how it was obtained.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Prediction {
    /// Estimate `wᵀy`.
    pub value: f64,
    /// Kriging variance of the noise-free value (≥ 0).
    pub variance: f64,
    /// `variance + nugget`: the variance of a new observation at the target without
    /// measurement error but with the nugget, the convention of Isaaks & Srivastava and PyKrige.
    pub variance_with_nugget: f64,
    /// Data indices of the neighbours, nearest first (ties by index).
    pub neighbours: Vec<usize>,
    /// Weight of each neighbour, aligned with `neighbours`.
    pub weights: Vec<f64>,
    /// Estimated 1-norm condition number of the scaled system that gave the result; for the
    /// inverse-variance fallback, that of the last system that failed (may be infinite).
    pub condition_estimate: f64,
    /// Fallback steps taken, in order; empty when the full system was solved as posed.
    pub fallbacks: Vec<Fallback>,
}

/// Leave-one-out cross-validation result for one data point.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct CrossValidationPoint {
    /// Index of the left-out point.
    pub index: usize,
    /// Its observed value.
    pub observed: f64,
    /// The prediction from the other points.
    pub prediction: Prediction,
    /// Variance of `observed − prediction.value` under the model:
    /// `variance + nugget + meas_var_i`.
    pub error_variance: f64,
    /// `(observed − value) / √error_variance`, `None` when the error variance is 0.
    pub standardised_error: Option<f64>,
}
