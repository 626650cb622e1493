//! Back-transform of a log-space kriging estimate.
//!
//! # Method
//!
//! If the log value is Gaussian with mean `m` and variance `v` (the kriging estimate and kriging
//! variance of log AADT), the value itself is lognormal, with
//!
//! * median `exp(m)`;
//! * mean `exp(m + v/2)`, the bias-corrected estimate reported as AADT. This is the lognormal
//!   mean (Aitchison & Brown 1957; the lognormal-kriging back-transform of Cressie 1993 §3.2.2,
//!   eq. 3.2.40, in its simple-kriging form). Cressie also gives an ordinary-kriging form that
//!   subtracts the Lagrange multiplier; we use the plain lognormal mean because with external
//!   drift the multiplier is a vector with no single natural counterpart, and say so here;
//! * interval `[exp(m − z√v), exp(m + z√v)]`, computed in log space and transformed, so it is
//!   asymmetric about the mean and never negative (z = 1.96 for 95 %).
//!
//! # Units
//!
//! `mean_log` in natural-log units of the variable; `var_log` its square; outputs in the units of
//! the variable (vehicles/day for AADT).
//!
//! # References
//!
//! Cressie (1993) §3.2.2; Aitchison, J. & Brown, J. A. C. (1957), *The Lognormal Distribution*,
//! Cambridge University Press, ch. 2.

use super::SpatialError;

/// Standard normal 0.975 quantile, the multiplier of a two-sided 95 % interval.
pub const Z_95: f64 = 1.959_963_984_540_054;

/// A value estimated in natural-log space, back-transformed.
///
/// ```
/// use roadtally::spatial::{LogNormalEstimate, Z_95};
/// let e = LogNormalEstimate::from_log(1000f64.ln(), 0.04, Z_95).unwrap();
/// assert!((e.mean - 1000.0 * 0.02f64.exp()).abs() < 1e-9);
/// assert!(e.lower < e.median && e.median < e.mean && e.mean < e.upper);
/// assert!(e.lower > 0.0);
/// ```
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct LogNormalEstimate {
    /// Log-space estimate `m`.
    pub log_mean: f64,
    /// Log-space variance `v`.
    pub log_variance: f64,
    /// Bias-corrected estimate `exp(m + v/2)`.
    pub mean: f64,
    /// Median `exp(m)`.
    pub median: f64,
    /// Lower interval bound `exp(m − z√v)`.
    pub lower: f64,
    /// Upper interval bound `exp(m + z√v)`.
    pub upper: f64,
}

impl LogNormalEstimate {
    /// Back-transform `mean_log` with variance `var_log` and interval multiplier `z`.
    ///
    /// Errors if an input is not finite, `var_log < 0` or `z < 0`, or a result overflows.
    pub fn from_log(mean_log: f64, var_log: f64, z: f64) -> Result<Self, SpatialError> {
        if !mean_log.is_finite() {
            return Err(SpatialError::NonFinite {
                what: "log-space estimate",
                index: 0,
            });
        }
        if !(var_log.is_finite() && var_log >= 0.0 && z.is_finite() && z >= 0.0) {
            return Err(SpatialError::InvalidParams {
                reason: format!("log variance {var_log} and z {z} must be finite and >= 0"),
            });
        }
        let sd = var_log.sqrt();
        let e = LogNormalEstimate {
            log_mean: mean_log,
            log_variance: var_log,
            mean: (mean_log + 0.5 * var_log).exp(),
            median: mean_log.exp(),
            lower: (mean_log - z * sd).exp(),
            upper: (mean_log + z * sd).exp(),
        };
        if !(e.mean.is_finite() && e.upper.is_finite()) {
            return Err(SpatialError::InvalidParams {
                reason: format!("exp({mean_log} + ...) overflows"),
            });
        }
        Ok(e)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use statrs::distribution::{ContinuousCDF, LogNormal, Normal};
    use statrs::statistics::{Distribution, Median};

    /// Outside reference: statrs' lognormal distribution (mean exp(μ+σ²/2), quantiles).
    #[test]
    fn matches_statrs_lognormal() {
        let (m, v) = (9.2, 0.09);
        let e = LogNormalEstimate::from_log(m, v, Z_95).unwrap();
        let d = LogNormal::new(m, v.sqrt()).unwrap();
        assert_relative_eq!(e.mean, d.mean().unwrap(), max_relative = 1e-12);
        assert_relative_eq!(e.median, d.median(), max_relative = 1e-12);
        assert_relative_eq!(e.lower, d.inverse_cdf(0.025), max_relative = 1e-8);
        assert_relative_eq!(e.upper, d.inverse_cdf(0.975), max_relative = 1e-8);
    }

    #[test]
    fn z_95_is_the_normal_quantile() {
        let n = Normal::new(0.0, 1.0).unwrap();
        assert_relative_eq!(Z_95, n.inverse_cdf(0.975), max_relative = 1e-9);
    }

    #[test]
    fn zero_variance_collapses_interval_and_bad_inputs_error() {
        let e = LogNormalEstimate::from_log(2.0, 0.0, Z_95).unwrap();
        assert_relative_eq!(e.lower, e.upper, max_relative = 1e-15);
        assert_relative_eq!(e.mean, 2f64.exp(), max_relative = 1e-15);
        assert!(LogNormalEstimate::from_log(f64::NAN, 0.1, Z_95).is_err());
        assert!(LogNormalEstimate::from_log(1.0, -0.1, Z_95).is_err());
        assert!(LogNormalEstimate::from_log(800.0, 0.1, Z_95).is_err());
    }
}
