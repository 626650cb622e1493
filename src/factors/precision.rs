//! Precision of group-mean factors and the number of permanent counters a factor group
//! needs.
//!
//! # Method
//! - Quantiles: `t_{p, df}` from `statrs::distribution::StudentsT::inverse_cdf`; `z_p` from
//!   `statrs::distribution::Normal`.
//! - Per group and factor: mean, sample SD (n − 1), `CV = SD / mean`, n, and the precision of
//!   the group mean at 95 % `D = t_{0.975, n−1} · CV / √n` (TMG practice), a fraction of the
//!   mean (0.10 = ±10 %). Undefined for n < 2.
//! - Required sample size for target precision `D` at confidence `1 − α`:
//!   `n = (t²·C²/D²) / (1 + (1/N)(t²·C²/D² − 1))` (the FPC term only when a population `N`
//!   is given), with `t = t_{1−α/2, n−1}` found by iteration: the smallest n ≥ 2 whose
//!   right-hand side is ≤ n (capped at N when N is given).
//! - Default target: ±10 % at 95 % (TMG, for non-recreational groups).
//!
//! # Units
//! CV, precision and targets are fractions (0.10 = 10 %).
//!
//! # References
//! - FHWA TMG 2001 §3 App. 3-A and TMG 2013 §3.2.3, precision target and sample-size formula
//!   (from memory, `tests/fixtures/REFERENCES.md` §2.6); check values computed there (§11 #10).
//! - Student t table: `tests/fixtures/REFERENCES.md` §10 (computed; matches printed tables).

use statrs::distribution::{ContinuousCDF, Normal, StudentsT};

/// Default precision target of a group-mean factor: ±10 % (TMG).
pub const DEFAULT_TARGET_PRECISION: f64 = 0.10;
/// Default confidence level: 95 %.
pub const DEFAULT_CONFIDENCE: f64 = 0.95;

/// Student t quantile `t_{p, df}` (lower-tail probability `p`). `df` = ∞ gives the normal
/// quantile. Returns NaN for `p` outside (0, 1) or `df` ≤ 0.
///
/// ```
/// let t = roadtally::factors::t_quantile(0.975, 10.0);
/// assert!((t - 2.2281).abs() < 1e-4);
/// ```
pub fn t_quantile(p: f64, df: f64) -> f64 {
    if !(p > 0.0 && p < 1.0) || df.is_nan() || df <= 0.0 {
        return f64::NAN;
    }
    if df.is_infinite() {
        return z_quantile(p);
    }
    match StudentsT::new(0.0, 1.0, df) {
        Ok(t) => t.inverse_cdf(p),
        Err(_) => f64::NAN,
    }
}

/// Standard normal quantile `z_p`. Returns NaN for `p` outside (0, 1).
pub fn z_quantile(p: f64) -> f64 {
    if !(p > 0.0 && p < 1.0) {
        return f64::NAN;
    }
    Normal::new(0.0, 1.0)
        .map(|n| n.inverse_cdf(p))
        .unwrap_or(f64::NAN)
}

/// Two-sided critical value `t_{1 − α/2, n − 1}` for `confidence` = 1 − α.
fn t_crit(confidence: f64, n: usize) -> f64 {
    t_quantile(0.5 + confidence / 2.0, n as f64 - 1.0)
}

/// Summary of one factor (e.g. the January factor) across the stations of a group.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FactorStats {
    /// Stations.
    pub n: usize,
    /// Arithmetic mean of the station factors (the group factor).
    pub mean: f64,
    /// Sample standard deviation (n − 1); 0 for n = 1.
    pub sd: f64,
    /// Coefficient of variation `sd / mean`.
    pub cv: f64,
    /// Precision of the mean at 95 %, `t_{0.975,n−1}·CV/√n`, as a fraction; `None` for n < 2.
    pub precision95: Option<f64>,
}

impl FactorStats {
    /// Summary of `values` (station factors). `None` for an empty slice or a mean ≤ 0.
    pub fn from_values(values: &[f64]) -> Option<FactorStats> {
        let n = values.len();
        if n == 0 {
            return None;
        }
        let mean = values.iter().sum::<f64>() / n as f64;
        if !(mean > 0.0 && mean.is_finite()) {
            return None;
        }
        let sd = if n > 1 {
            (values.iter().map(|v| (v - mean).powi(2)).sum::<f64>() / (n as f64 - 1.0)).sqrt()
        } else {
            0.0
        };
        let cv = sd / mean;
        Some(FactorStats {
            n,
            mean,
            sd,
            cv,
            precision95: precision_achieved(cv, n, DEFAULT_CONFIDENCE),
        })
    }

    /// Whether the precision meets `target` (false when it is undefined, n < 2).
    pub fn meets(&self, target: f64) -> bool {
        self.precision95.is_some_and(|p| p <= target)
    }
}

/// Precision achieved by `n` stations with coefficient of variation `cv`:
/// `t_{1−α/2, n−1} · cv / √n` (no FPC). `None` for n < 2.
///
/// ```
/// let p = roadtally::factors::precision_achieved(0.12, 6, 0.95).unwrap();
/// assert!((p - 0.1259).abs() < 1e-4);
/// ```
pub fn precision_achieved(cv: f64, n: usize, confidence: f64) -> Option<f64> {
    (n >= 2).then(|| t_crit(confidence, n) * cv / (n as f64).sqrt())
}

/// Stations needed for precision `target` (fraction) at `confidence` given the factor's
/// `cv`, iterating the t quantile; with `population = Some(N)` the finite-population
/// correction is applied and the result is at most N. Always at least 2 (the smallest n with
/// a defined precision). Returns `None` for a non-positive target or a negative/NaN CV.
///
/// ```
/// use roadtally::factors::required_sample_size;
/// assert_eq!(required_sample_size(0.10, 0.10, 0.95, None), Some(7));
/// assert_eq!(required_sample_size(0.15, 0.10, 0.95, Some(20)), Some(8));
/// ```
pub fn required_sample_size(
    cv: f64,
    target: f64,
    confidence: f64,
    population: Option<usize>,
) -> Option<usize> {
    if !(target > 0.0 && cv >= 0.0 && cv.is_finite()) {
        return None;
    }
    let cap = population.unwrap_or(100_000).max(2);
    for n in 2..=cap {
        let t = t_crit(confidence, n);
        let n0 = (t * cv / target).powi(2);
        let need = match population {
            Some(big_n) => n0 / (1.0 + (n0 - 1.0) / big_n as f64),
            None => n0,
        };
        if need <= n as f64 {
            return Some(n);
        }
    }
    Some(cap)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    #[test]
    fn t_table_refs_10() {
        // Source: tests/fixtures/REFERENCES.md §10 / §11 #9 (standard t tables; computed), tol 1e-4.
        assert_abs_diff_eq!(t_quantile(0.975, 1.0), 12.7062, epsilon = 1e-4);
        assert_abs_diff_eq!(t_quantile(0.975, 5.0), 2.5706, epsilon = 1e-4);
        assert_abs_diff_eq!(t_quantile(0.975, 6.0), 2.4469, epsilon = 1e-4);
        assert_abs_diff_eq!(t_quantile(0.975, 10.0), 2.2281, epsilon = 1e-4);
        assert_abs_diff_eq!(t_quantile(0.975, 30.0), 2.0423, epsilon = 1e-4);
        assert_abs_diff_eq!(t_quantile(0.95, 10.0), 1.8125, epsilon = 1e-4);
        assert_abs_diff_eq!(t_quantile(0.995, 20.0), 2.8453, epsilon = 1e-4);
        assert_abs_diff_eq!(t_quantile(0.975, f64::INFINITY), 1.95996, epsilon = 1e-4);
        assert_abs_diff_eq!(z_quantile(0.975), 1.95996, epsilon = 1e-4);
        assert!(t_quantile(1.5, 3.0).is_nan());
        assert!(t_quantile(0.9, 0.0).is_nan());
    }

    #[test]
    fn sample_size_refs_2_6() {
        // Source: tests/fixtures/REFERENCES.md §2.6 / §11 #10 (TMG formula from memory; computed).
        assert_eq!(required_sample_size(0.10, 0.10, 0.95, None), Some(7));
        assert_eq!(required_sample_size(0.15, 0.10, 0.95, None), Some(12));
        assert_eq!(required_sample_size(0.20, 0.10, 0.95, None), Some(18));
        assert_eq!(required_sample_size(0.15, 0.10, 0.95, Some(20)), Some(8));
        assert_eq!(required_sample_size(0.0, 0.10, 0.95, None), Some(2));
        assert_eq!(required_sample_size(0.5, 0.01, 0.95, Some(10)), Some(10));
        assert_eq!(required_sample_size(0.1, 0.0, 0.95, None), None);
    }

    #[test]
    fn precision_refs_2_6() {
        // Source: tests/fixtures/REFERENCES.md §2.6: n = 6, C = 0.12 → ±12.59 %, fails ±10 %.
        let p = precision_achieved(0.12, 6, 0.95).unwrap();
        assert_abs_diff_eq!(p, 0.1259, epsilon = 1e-4);
        assert!(precision_achieved(0.12, 1, 0.95).is_none());
        let s = FactorStats::from_values(&[1.0, 1.1, 0.9, 1.0]).unwrap();
        assert_abs_diff_eq!(s.mean, 1.0, epsilon = 1e-12);
        assert_abs_diff_eq!(s.sd, (0.02f64 / 3.0).sqrt(), epsilon = 1e-12);
        assert_abs_diff_eq!(s.cv, s.sd, epsilon = 1e-12);
        let expect = t_quantile(0.975, 3.0) * s.cv / 2.0;
        assert_abs_diff_eq!(s.precision95.unwrap(), expect, epsilon = 1e-12);
        // t_{0.975,3} · 0.0816 / 2 = 0.1299: misses ±10 %, meets ±15 %.
        assert!(!s.meets(0.10));
        assert!(s.meets(0.15));
        assert!(!FactorStats::from_values(&[1.0]).unwrap().meets(0.10));
    }
}
