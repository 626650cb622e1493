//! Traffic growth: a log-linear fit of AADT over years pooled across the stations or
//! segments of a group, growth rate and growth factor with 95 % intervals, and the
//! compound-rate helper.
//!
//! # Method
//! - **Model** (common practice): `ln AADT_{u,y} = a_u + b·y + e`, one intercept `a_u` per
//!   unit (station or segment; fixed effects) and a common slope `b`, by ordinary least
//!   squares. Solved by the within transformation: `b = Σ x̃ ỹ / Σ x̃²` with `x̃, ỹ` the year
//!   and log-AADT minus their unit means. Residual degrees of freedom
//!   `df = n_obs − n_units − 1`; `s² = SSR / df`; `se(b) = √(s² / Σ x̃²)`.
//!   A unit with a single year fixes its own intercept and adds nothing to the slope.
//! - **Rate**: `g = e^b − 1`; `se(g) ≈ e^b · se(b)` (delta method); 95 % interval
//!   `e^{b ± t·se(b)} − 1` with `t = t_{0.975, df}`.
//! - **Growth factor** to bring a count from year `y0` to the study year `Y`:
//!   `G = e^{b (Y − y0)}`, interval `e^{(b ± t·se(b))(Y − y0)}`.
//! - **Fallback** ([`growth_with_fallback`], project decision): a group whose own fit is not
//!   possible (no unit with two years, or `df < 1`) takes the **network-wide pooled fit**
//!   (all units of all groups, same model); when that is not possible either,
//!   `b = 0` (no growth) with a stated wide uncertainty `se(b) = 0.02` per year (about
//!   ±4 %/yr at 95 %, normal quantile). Every fit says which source it came from.
//! - **Compound rate** (refs §2.3): `g = (A_t / A_0)^{1/t} − 1`.
//!
//! # Units
//! Years are calendar years; rates are fractions per year (0.02 = 2 %/yr); factors are
//! dimensionless.
//!
//! # References
//! - `tests/fixtures/REFERENCES.md` §2.3 (compound rate, common practice; TMG yearly factor from memory).
//! - Fixed-effects (within) OLS: standard econometrics (common practice).

use std::collections::{BTreeMap, HashSet};

use super::precision::{t_quantile, z_quantile};
use super::FactorError;

/// One published or measured AADT of a unit (station or segment) in a year.
#[derive(Debug, Clone, PartialEq)]
pub struct GrowthObservation {
    /// Station or segment identifier.
    pub unit: String,
    /// Calendar year.
    pub year: i32,
    /// AADT, vehicles/day, > 0.
    pub aadt: f64,
}

/// Where a growth estimate came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum GrowthSource {
    /// The group's own pooled fit.
    Group,
    /// The network-wide pooled fit (the group had too little history).
    NetworkPooled,
    /// No usable history anywhere: no growth, with the stated wide uncertainty.
    NoHistory,
}

/// A fitted (or assumed) growth model.
#[derive(Debug, Clone, PartialEq)]
pub struct GrowthFit {
    /// Slope `b` of ln AADT per year.
    pub slope: f64,
    /// Standard error of `b`.
    pub slope_se: f64,
    /// Residual degrees of freedom (`None` for the no-history assumption, which uses z).
    pub df: Option<usize>,
    /// Critical value used for 95 % intervals (`t_{0.975,df}` or `z_{0.975}`).
    pub crit95: f64,
    /// Observations used.
    pub n_obs: usize,
    /// Units with at least two years (those that inform the slope).
    pub n_units_informative: usize,
    /// Growth rate `g = e^b − 1` per year.
    pub rate: f64,
    /// Standard error of `g` (delta method).
    pub rate_se: f64,
    /// Lower end of the 95 % interval of `g`.
    pub rate_lo95: f64,
    /// Upper end of the 95 % interval of `g`.
    pub rate_hi95: f64,
    /// Where the estimate came from.
    pub source: GrowthSource,
}

/// A growth factor with its 95 % interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct GrowthFactor {
    /// `G = e^{b (Y − y0)}`.
    pub factor: f64,
    /// Lower 95 % bound.
    pub lo95: f64,
    /// Upper 95 % bound.
    pub hi95: f64,
}

impl GrowthFit {
    fn from_slope(
        slope: f64,
        slope_se: f64,
        df: Option<usize>,
        n_obs: usize,
        n_units_informative: usize,
        source: GrowthSource,
    ) -> GrowthFit {
        let crit95 = match df {
            Some(df) => t_quantile(0.975, df as f64),
            None => z_quantile(0.975),
        };
        GrowthFit {
            slope,
            slope_se,
            df,
            crit95,
            n_obs,
            n_units_informative,
            rate: slope.exp_m1(),
            rate_se: slope.exp() * slope_se,
            rate_lo95: (slope - crit95 * slope_se).exp_m1(),
            rate_hi95: (slope + crit95 * slope_se).exp_m1(),
            source,
        }
    }

    /// The no-history assumption: `b = 0` with `se(b) = slope_se`, normal quantile.
    pub fn no_history(slope_se: f64) -> GrowthFit {
        GrowthFit::from_slope(0.0, slope_se, None, 0, 0, GrowthSource::NoHistory)
    }

    /// Growth factor bringing a count from `from_year` to `to_year`.
    pub fn factor(&self, from_year: i32, to_year: i32) -> GrowthFactor {
        let dt = f64::from(to_year - from_year);
        let a = ((self.slope - self.crit95 * self.slope_se) * dt).exp();
        let b = ((self.slope + self.crit95 * self.slope_se) * dt).exp();
        GrowthFactor {
            factor: (self.slope * dt).exp(),
            lo95: a.min(b),
            hi95: a.max(b),
        }
    }
}

/// Pooled log-linear growth fit with unit fixed effects (module docs).
///
/// Errors on a non-positive or non-finite AADT, a unit given twice for the same year, or
/// too little history (`Σ x̃² = 0` or `df < 1`).
pub fn fit_growth(obs: &[GrowthObservation]) -> Result<GrowthFit, FactorError> {
    let mut seen = HashSet::new();
    let mut by_unit: BTreeMap<&str, Vec<(f64, f64)>> = BTreeMap::new();
    for o in obs {
        if !(o.aadt.is_finite() && o.aadt > 0.0) {
            return Err(FactorError::BadAadt {
                unit: o.unit.clone(),
                year: o.year,
            });
        }
        if !seen.insert((o.unit.as_str(), o.year)) {
            return Err(FactorError::DuplicateObservation {
                unit: o.unit.clone(),
                year: o.year,
            });
        }
        by_unit
            .entry(o.unit.as_str())
            .or_default()
            .push((f64::from(o.year), o.aadt.ln()));
    }
    let (mut sxx, mut sxy) = (0.0, 0.0);
    let mut informative = 0;
    for pts in by_unit.values() {
        let m = pts.len() as f64;
        let mx = pts.iter().map(|p| p.0).sum::<f64>() / m;
        let my = pts.iter().map(|p| p.1).sum::<f64>() / m;
        for &(x, y) in pts {
            sxx += (x - mx).powi(2);
            sxy += (x - mx) * (y - my);
        }
        if pts.len() >= 2 {
            informative += 1;
        }
    }
    let n_obs = obs.len();
    let n_units = by_unit.len();
    if sxx <= 0.0 || n_obs < n_units + 2 {
        return Err(FactorError::TooLittleHistory {
            observations: n_obs,
            units: n_units,
        });
    }
    let b = sxy / sxx;
    let mut ssr = 0.0;
    for pts in by_unit.values() {
        let m = pts.len() as f64;
        let mx = pts.iter().map(|p| p.0).sum::<f64>() / m;
        let my = pts.iter().map(|p| p.1).sum::<f64>() / m;
        for &(x, y) in pts {
            ssr += ((y - my) - b * (x - mx)).powi(2);
        }
    }
    let df = n_obs - n_units - 1;
    let se = (ssr / df as f64 / sxx).sqrt();
    Ok(GrowthFit::from_slope(
        b,
        se,
        Some(df),
        n_obs,
        informative,
        GrowthSource::Group,
    ))
}

/// Default `se(b)` of the no-history assumption: 0.02 per year (project choice).
pub const NO_HISTORY_SLOPE_SE: f64 = 0.02;

/// The group's own fit; else the network-wide pooled fit (source `NetworkPooled`); else
/// `b = 0` with `se(b) = no_history_slope_se` (source `NoHistory`). Input errors (bad
/// AADT, duplicates) are returned, not masked by the fallback.
pub fn growth_with_fallback(
    group: &[GrowthObservation],
    network: &[GrowthObservation],
    no_history_slope_se: f64,
) -> Result<GrowthFit, FactorError> {
    match fit_growth(group) {
        Ok(fit) => return Ok(fit),
        Err(FactorError::TooLittleHistory { .. }) => {}
        Err(e) => return Err(e),
    }
    match fit_growth(network) {
        Ok(mut fit) => {
            fit.source = GrowthSource::NetworkPooled;
            Ok(fit)
        }
        Err(FactorError::TooLittleHistory { .. }) => Ok(GrowthFit::no_history(no_history_slope_se)),
        Err(e) => Err(e),
    }
}

/// Compound annual rate `g = (A_t / A_0)^{1/t} − 1` over `years`; `None` unless both
/// volumes and `years` are positive.
///
/// ```
/// let g = roadtally::factors::compound_rate(10_000.0, 12_189.94, 10.0).unwrap();
/// assert!((g - 0.02).abs() < 1e-6);
/// ```
pub fn compound_rate(aadt_0: f64, aadt_t: f64, years: f64) -> Option<f64> {
    (aadt_0 > 0.0 && aadt_t > 0.0 && years > 0.0).then(|| (aadt_t / aadt_0).powf(1.0 / years) - 1.0)
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn series(
        unit: &str,
        a0: f64,
        g: f64,
        years: std::ops::RangeInclusive<i32>,
    ) -> Vec<GrowthObservation> {
        years
            .map(|y| GrowthObservation {
                unit: unit.to_string(),
                year: y,
                aadt: a0 * (1.0 + g).powi(y - 2015),
            })
            .collect()
    }

    #[test]
    fn recovers_exact_two_percent() {
        // Exact exponential series at 2 %/yr on three stations with different levels.
        let mut obs = series("A", 10_000.0, 0.02, 2015..=2024);
        obs.extend(series("B", 3_000.0, 0.02, 2018..=2024));
        obs.extend(series("C", 50_000.0, 0.02, 2020..=2021));
        obs.push(GrowthObservation {
            unit: "D".into(),
            year: 2019,
            aadt: 777.0,
        });
        let fit = fit_growth(&obs).unwrap();
        assert_relative_eq!(fit.rate, 0.02, max_relative = 1e-10);
        assert_relative_eq!(fit.slope, 1.02f64.ln(), max_relative = 1e-10);
        assert!(fit.slope_se < 1e-10);
        assert_eq!(fit.df, Some(20 - 4 - 1));
        assert_eq!(fit.n_units_informative, 3);
        assert_eq!(fit.source, GrowthSource::Group);
        let gf = fit.factor(2020, 2025);
        assert_relative_eq!(gf.factor, 1.02f64.powi(5), max_relative = 1e-9);
        assert_relative_eq!(gf.lo95, gf.factor, max_relative = 1e-8);
        let back = fit.factor(2025, 2020);
        assert_relative_eq!(back.factor, 1.02f64.powi(-5), max_relative = 1e-9);
        assert!(back.lo95 <= back.hi95);
    }

    #[test]
    fn noisy_fit_interval_uses_t_with_residual_df() {
        // Hand-checkable: one unit, years 0..4, ln AADT residuals ±0.01 pattern.
        let e = [0.01, -0.01, 0.0, -0.01, 0.01];
        let obs: Vec<GrowthObservation> = (0..5)
            .map(|k| GrowthObservation {
                unit: "A".into(),
                year: 2000 + k,
                aadt: (9.0 + 0.03 * f64::from(k) + e[k as usize]).exp(),
            })
            .collect();
        let fit = fit_growth(&obs).unwrap();
        // Residual pattern is orthogonal to the year, so b = 0.03 exactly.
        assert_relative_eq!(fit.slope, 0.03, max_relative = 1e-9);
        // SSR = 4e-4, df = 3, Σx̃² = 10 → se = sqrt(4e-4/3/10).
        let se = (4e-4f64 / 3.0 / 10.0).sqrt();
        assert_relative_eq!(fit.slope_se, se, max_relative = 1e-9);
        assert_eq!(fit.df, Some(3));
        assert_relative_eq!(fit.crit95, 3.1824, max_relative = 1e-4);
        assert_relative_eq!(
            fit.rate_hi95,
            (0.03 + fit.crit95 * se).exp_m1(),
            max_relative = 1e-12
        );
        assert_relative_eq!(fit.rate_se, 0.03f64.exp() * se, max_relative = 1e-12);
    }

    #[test]
    fn fallback_chain() {
        let thin = vec![GrowthObservation {
            unit: "X".into(),
            year: 2020,
            aadt: 1000.0,
        }];
        let net = series("A", 10_000.0, 0.03, 2015..=2020);
        let f = growth_with_fallback(&thin, &net, NO_HISTORY_SLOPE_SE).unwrap();
        assert_eq!(f.source, GrowthSource::NetworkPooled);
        assert_relative_eq!(f.rate, 0.03, max_relative = 1e-9);
        let f = growth_with_fallback(&thin, &thin, NO_HISTORY_SLOPE_SE).unwrap();
        assert_eq!(f.source, GrowthSource::NoHistory);
        assert_relative_eq!(f.rate, 0.0);
        assert_relative_eq!(
            f.rate_hi95,
            (1.959964 * 0.02f64).exp_m1(),
            max_relative = 1e-5
        );
        let gf = f.factor(2020, 2025);
        assert_relative_eq!(gf.factor, 1.0);
        assert!(gf.lo95 < 1.0 && gf.hi95 > 1.0);
        let mut dup = net.clone();
        dup.push(net[0].clone());
        assert!(matches!(
            growth_with_fallback(&dup, &net, NO_HISTORY_SLOPE_SE),
            Err(FactorError::DuplicateObservation { .. })
        ));
        assert!(matches!(
            fit_growth(&thin),
            Err(FactorError::TooLittleHistory { .. })
        ));
    }

    #[test]
    fn compound_rate_refs_2_3() {
        // Source: tests/fixtures/REFERENCES.md §2.3 formula (common practice); 10,000 × 1.02^10 = 12,189.94.
        let at = 10_000.0 * 1.02f64.powi(10);
        assert_relative_eq!(
            compound_rate(10_000.0, at, 10.0).unwrap(),
            0.02,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            compound_rate(10_000.0, 12_189.944, 10.0).unwrap(),
            0.02,
            max_relative = 1e-6
        );
        assert!(compound_rate(0.0, 1.0, 1.0).is_none());
    }
}
