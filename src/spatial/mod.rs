//! Spatial estimation: variogram fitting and kriging with external drift for segments without
//! a count of their own.
//!
//! This module is pure maths: it takes projected coordinates, values (typically log AADT),
//! per-point drift terms and per-point measurement variances, and returns estimates with their
//! kriging variances and a report of how each system was solved. It does no file I/O.
//!
//! * [`variogram`]: covariance models, the empirical variogram of drift residuals and a weighted
//!   least-squares variogram fit.
//! * [`kriging`]: universal kriging / kriging with external drift (KED) on local
//!   neighbourhoods found with a k-d tree, in parallel over targets, with a stated fallback for
//!   singular or ill-conditioned systems and leave-one-out cross-validation.
//! * [`lognormal`]: back-transform of a log-space estimate with its bias correction and a 95 %
//!   interval.
//!
//! # Method
//!
//! The value at a point is modelled as `Y(x) = f(x)ᵀβ + S(x) + ε(x)`: a drift that is linear in
//! known terms `f` (a constant, always included, plus the caller's external drift terms such as
//! functional class or lanes), a zero-mean second-order stationary signal `S` with covariance
//! `partial_sill · ρ(h)`, and a white-noise term `ε` whose variance is the model nugget plus the
//! observation's own measurement variance (the observation-specific nugget of a short count).
//! Kriging predicts the noise-free `f(x₀)ᵀβ + S(x₀)` with the best linear unbiased predictor
//! (Cressie 1993 §3.4; Wackernagel 2003 ch. 37 for the external-drift form).
//!
//! # Units
//!
//! Coordinates and distances are kilometres in a projected (planar) coordinate system; the
//! variogram range is a kilometre distance. Values, sills, nuggets and variances are in the units
//! of the kriged variable and its square (log AADT and log AADT² in the pipeline).
//!
//! # References
//!
//! * Isaaks, E. H. & Srivastava, R. M. (1989). *An Introduction to Applied Geostatistics*.
//!   Oxford University Press. Ch. 12 (ordinary kriging worked example).
//! * Cressie, N. (1985). Fitting variogram models by weighted least squares. *Mathematical
//!   Geology* 17(5), 563–586.
//! * Cressie, N. (1993). *Statistics for Spatial Data*, revised ed. Wiley. §2.4 (variogram
//!   estimation and fitting), §3.2.2 (lognormal kriging), §3.4 (universal kriging).
//! * Wackernagel, H. (2003). *Multivariate Geostatistics*, 3rd ed. Springer. Ch. 37 (external
//!   drift).
//! * Nelder, J. A. & Mead, R. (1965). A simplex method for function minimization. *The Computer
//!   Journal* 7(4), 308–313.
//! * PyKrige (Murphy et al.), <https://github.com/GeoStat-Framework/PyKrige>, used to generate
//!   the reference fixture in `tests/fixtures/kriging/`.

pub mod betweenness;
pub mod history;
pub mod kriging;
pub mod lognormal;
pub mod network_drift;
mod optimize;
pub mod stage;
pub mod variogram;

pub use kriging::{
    drift_residuals, CrossValidationPoint, DriftDefect, DriftFit, DroppedDriftTerm, Fallback,
    Kriger, KrigingData, KrigingParams, Prediction, Target,
};
pub use lognormal::{LogNormalEstimate, Z_95};
pub use variogram::{
    empirical_variogram, fit_variogram, CovarianceModel, EmpiricalVariogram, FitEnd, Lag,
    ModelKind, VariogramFit,
};

/// Errors of the spatial stage. Each names what was wrong and, where it applies, the index of
/// the offending point (its position in the input slices).
#[derive(Debug, Clone, PartialEq, thiserror::Error)]
pub enum SpatialError {
    /// Two inputs that must have one entry per point have different lengths.
    #[error("{what}: expected {expected} entries, found {found}")]
    LengthMismatch {
        /// Which input.
        what: &'static str,
        /// Entries expected.
        expected: usize,
        /// Entries found.
        found: usize,
    },
    /// A coordinate, value, drift term or variance is NaN or infinite.
    #[error("{what} of point {index} is not a finite number")]
    NonFinite {
        /// Which input.
        what: &'static str,
        /// Index of the point.
        index: usize,
    },
    /// A measurement variance is negative.
    #[error("measurement variance of point {index} is negative ({value})")]
    NegativeVariance {
        /// Index of the point.
        index: usize,
        /// The value given.
        value: f64,
    },
    /// No data points were given.
    #[error("no data points")]
    NoData,
    /// A covariance model parameter is out of its domain.
    #[error("invalid covariance model: {reason}")]
    InvalidModel {
        /// What is wrong.
        reason: String,
    },
    /// A parameter of the estimation is out of its domain.
    #[error("invalid parameter: {reason}")]
    InvalidParams {
        /// What is wrong.
        reason: String,
    },
    /// Too few lags with pairs to fit a three-parameter variogram.
    #[error("only {usable} lags have pairs; at least {needed} are needed to fit a variogram")]
    TooFewLags {
        /// Lags with at least one pair.
        usable: usize,
        /// Lags needed.
        needed: usize,
    },
    /// The drift regression of ln AADT on the segment attributes has no solution (for
    /// example every count on segments that share one attribute value and the ridge is 0).
    #[error("the drift regression of ln AADT on {counted} counted segments could not be solved")]
    DriftUnsolvable {
        /// Counted segments in the regression.
        counted: usize,
    },
    /// No system in the fallback chain gave a finite answer for these neighbours.
    #[error("kriging system could not be solved; neighbour points {points:?}")]
    Unsolvable {
        /// Indices of the data points in the neighbourhood.
        points: Vec<usize>,
    },
}
