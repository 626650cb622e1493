//! Covariance models, the empirical variogram and its weighted least-squares fit.
//!
//! # Method
//!
//! A model is `γ(h) = nugget + partial_sill · (1 − ρ(h))` for `h > 0` and `γ(0) = 0`, with the
//! correlation `ρ` of one of three families, all written with the **practical range** `a`
//! (`range_km`, the distance at which the correlation has fallen to about 5 %, or to exactly 0
//! for the spherical model):
//!
//! | kind | ρ(h) | convention vs PyKrige 1.7 |
//! |---|---|---|
//! | exponential | `exp(−3h/a)` | same `range` (PyKrige `exp(−d/(range/3))`) |
//! | spherical | `1 − 1.5 h/a + 0.5 (h/a)³` for `h ≤ a`, else 0 | same `range` |
//! | Gaussian | `exp(−3 h²/a²)` | PyKrige writes `exp(−d²/(4·range/7)²)`, so `a = range_pykrige · 4√3/7` |
//!
//! These are the forms of Isaaks & Srivastava (1989, ch. 16, eqs. 16.2–16.4), whose chapter 12
//! example uses `10·exp(−0.3h)` (exponential, `a = 10`) and `10·exp(−3(h/10)²)` (Gaussian,
//! `a = 10`). GSTools' `len_scale` for the exponential model is `a/3`.
//!
//! The empirical variogram is the classical (Matheron) estimator
//! `γ̂(h_k) = Σ (r_i − r_j)² / (2 N_k)` over the `N_k` pairs whose separation falls in lag bin
//! `k`, `[k·lag, (k+1)·lag)`; the bin is reported at the mean separation of its pairs (Cressie
//! 1993 §2.4.1).
//!
//! The fit minimises Cressie's (1985) weighted least-squares criterion
//! `Σ_k N_k · (γ̂(h_k)/γ(h_k; θ) − 1)²`, i.e. squared residuals weighted by `N_k / γ(h_k; θ)²`,
//! over `θ = (partial_sill > 0, nugget ≥ 0, 0 < range ≤ max lag centre)`, with a Nelder–Mead
//! simplex on transformed parameters that enforce the bounds, from several starts.
//!
//! # Units
//!
//! Distances and ranges in km; sills, nuggets and semivariances in squared units of the variable.
//!
//! # References
//!
//! Cressie (1985), Cressie (1993) §2.4, Isaaks & Srivastava (1989) ch. 7 and 16; see the
//! [module list](crate::spatial).

use super::optimize::{nelder_mead, SimplexEnd};
use super::SpatialError;

/// The family of a correlation function.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum ModelKind {
    /// `ρ(h) = exp(−3h/a)`.
    Exponential,
    /// `ρ(h) = 1 − 1.5 h/a + 0.5 (h/a)³` for `h ≤ a`, else 0.
    Spherical,
    /// `ρ(h) = exp(−3h²/a²)`.
    Gaussian,
}

/// A stationary isotropic covariance model with a nugget.
///
/// ```
/// use roadtally::spatial::{CovarianceModel, ModelKind};
/// // Isaaks & Srivastava (1989) fig. 12.10: nugget 5 plus 5·exp(−0.3h).
/// let m = CovarianceModel::new(ModelKind::Exponential, 5.0, 10.0, 5.0).unwrap();
/// assert!((m.covariance(0.0) - 10.0).abs() < 1e-12);
/// assert!((m.covariance(1.0) - 5.0 * (-0.3f64).exp()).abs() < 1e-12);
/// assert!((m.semivariance(1.0) - (10.0 - 5.0 * (-0.3f64).exp())).abs() < 1e-12);
/// ```
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct CovarianceModel {
    /// Correlation family.
    pub kind: ModelKind,
    /// Variance of the spatially correlated signal (sill minus nugget), > 0.
    pub partial_sill: f64,
    /// Practical range in km (see the module table for the convention), > 0.
    pub range_km: f64,
    /// Nugget (micro-scale variation plus measurement error common to all points), ≥ 0.
    pub nugget: f64,
}

impl CovarianceModel {
    /// A model after checking that `partial_sill > 0`, `range_km > 0`, `nugget ≥ 0`, all finite.
    pub fn new(
        kind: ModelKind,
        partial_sill: f64,
        range_km: f64,
        nugget: f64,
    ) -> Result<Self, SpatialError> {
        let m = CovarianceModel {
            kind,
            partial_sill,
            range_km,
            nugget,
        };
        m.validate()?;
        Ok(m)
    }

    /// Checks the parameter domains.
    pub fn validate(&self) -> Result<(), SpatialError> {
        let bad = |reason: &str| {
            Err(SpatialError::InvalidModel {
                reason: reason.to_string(),
            })
        };
        if !(self.partial_sill.is_finite() && self.partial_sill > 0.0) {
            return bad("partial sill must be finite and > 0");
        }
        if !(self.range_km.is_finite() && self.range_km > 0.0) {
            return bad("range must be finite and > 0 km");
        }
        if !(self.nugget.is_finite() && self.nugget >= 0.0) {
            return bad("nugget must be finite and >= 0");
        }
        Ok(())
    }

    /// Full sill, `nugget + partial_sill`.
    pub fn sill(&self) -> f64 {
        self.nugget + self.partial_sill
    }

    /// Correlation of the signal at separation `h_km` (1 at 0).
    pub fn correlation(&self, h_km: f64) -> f64 {
        let r = h_km.abs() / self.range_km;
        match self.kind {
            ModelKind::Exponential => (-3.0 * r).exp(),
            ModelKind::Spherical => {
                if r >= 1.0 {
                    0.0
                } else {
                    1.0 - 1.5 * r + 0.5 * r * r * r
                }
            }
            ModelKind::Gaussian => (-3.0 * r * r).exp(),
        }
    }

    /// Covariance of the signal alone, `partial_sill · ρ(h)`, continuous at 0. This is the
    /// covariance between two observations at distinct points, and between an observation and
    /// the noise-free target.
    pub fn signal_covariance(&self, h_km: f64) -> f64 {
        self.partial_sill * self.correlation(h_km)
    }

    /// Covariance of the observed process including the nugget: `sill` at `h = 0`,
    /// `partial_sill · ρ(h)` for `h > 0` (the textbook form with the nugget in `C(0)`).
    pub fn covariance(&self, h_km: f64) -> f64 {
        if h_km == 0.0 {
            self.sill()
        } else {
            self.signal_covariance(h_km)
        }
    }

    /// Semivariance `γ(h) = sill − C(h)`: 0 at `h = 0`, `nugget + partial_sill·(1 − ρ(h))`
    /// otherwise.
    pub fn semivariance(&self, h_km: f64) -> f64 {
        self.sill() - self.covariance(h_km)
    }

    /// Semivariance of the model for `h > 0` continued to `h = 0⁺` (the curve that is fitted to
    /// an empirical variogram, whose first bin never has `h = 0`).
    fn semivariance_curve(&self, h_km: f64) -> f64 {
        self.nugget + self.partial_sill * (1.0 - self.correlation(h_km))
    }
}

/// One bin of an empirical variogram.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Lag {
    /// Mean separation of the pairs in the bin, km.
    pub centre_km: f64,
    /// Classical (Matheron) semivariance estimate.
    pub gamma: f64,
    /// Number of pairs in the bin.
    pub pairs: usize,
}

/// An empirical variogram and how it was computed.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct EmpiricalVariogram {
    /// Bins in order of distance; bins without pairs are kept with `pairs = 0`, `gamma = 0`.
    pub lags: Vec<Lag>,
    /// Points whose pairs were used (all of them up to [`MAX_POINTS_ALL_PAIRS`]).
    pub points_used: usize,
    /// Points given.
    pub points_total: usize,
}

/// Above this many points the empirical variogram uses a deterministic subsample of this many
/// points (all their pairs), keeping the O(n²) pair loop to about 4.5 million pairs.
pub const MAX_POINTS_ALL_PAIRS: usize = 3000;

/// Empirical variogram of `residuals` at `points` (km) with `n_lags` bins of width `lag_km`.
///
/// Beyond [`MAX_POINTS_ALL_PAIRS`] points a subsample is drawn deterministically (the points
/// with the smallest SplitMix64 hash of their index), so the same input always gives the same
/// variogram.
///
/// ```
/// use roadtally::spatial::empirical_variogram;
/// let pts = [[0.0, 0.0], [1.0, 0.0], [2.0, 0.0]];
/// let r = [0.0, 1.0, 3.0];
/// let v = empirical_variogram(&pts, &r, 1.5, 2).unwrap();
/// // lag 0: pairs (0,1) and (1,2): (1 + 4) / (2·2) = 1.25; lag 1: pair (0,2): 9/2 = 4.5
/// assert_eq!(v.lags[0].pairs, 2);
/// assert!((v.lags[0].gamma - 1.25).abs() < 1e-12);
/// assert!((v.lags[1].gamma - 4.5).abs() < 1e-12);
/// ```
pub fn empirical_variogram(
    points: &[[f64; 2]],
    residuals: &[f64],
    lag_km: f64,
    n_lags: usize,
) -> Result<EmpiricalVariogram, SpatialError> {
    if points.len() != residuals.len() {
        return Err(SpatialError::LengthMismatch {
            what: "residuals",
            expected: points.len(),
            found: residuals.len(),
        });
    }
    if !(lag_km.is_finite() && lag_km > 0.0) || n_lags == 0 {
        return Err(SpatialError::InvalidParams {
            reason: "lag width must be finite and > 0 km, and there must be at least one lag"
                .into(),
        });
    }
    for (i, (p, r)) in points.iter().zip(residuals).enumerate() {
        if !(p[0].is_finite() && p[1].is_finite()) {
            return Err(SpatialError::NonFinite {
                what: "coordinate",
                index: i,
            });
        }
        if !r.is_finite() {
            return Err(SpatialError::NonFinite {
                what: "residual",
                index: i,
            });
        }
    }
    let n = points.len();
    let used: Vec<usize> = if n <= MAX_POINTS_ALL_PAIRS {
        (0..n).collect()
    } else {
        let mut idx: Vec<usize> = (0..n).collect();
        idx.sort_by_key(|&i| (splitmix64(i as u64), i));
        idx.truncate(MAX_POINTS_ALL_PAIRS);
        idx.sort_unstable();
        idx
    };
    let max_h = lag_km * n_lags as f64;
    let mut sum_sq = vec![0.0; n_lags];
    let mut sum_h = vec![0.0; n_lags];
    let mut count = vec![0usize; n_lags];
    for (a, &i) in used.iter().enumerate() {
        for &j in &used[a + 1..] {
            let dx = points[i][0] - points[j][0];
            let dy = points[i][1] - points[j][1];
            let h = dx.hypot(dy);
            if h >= max_h {
                continue;
            }
            let k = ((h / lag_km) as usize).min(n_lags - 1);
            let d = residuals[i] - residuals[j];
            sum_sq[k] += d * d;
            sum_h[k] += h;
            count[k] += 1;
        }
    }
    let lags = (0..n_lags)
        .map(|k| {
            if count[k] == 0 {
                Lag {
                    centre_km: (k as f64 + 0.5) * lag_km,
                    gamma: 0.0,
                    pairs: 0,
                }
            } else {
                Lag {
                    centre_km: sum_h[k] / count[k] as f64,
                    gamma: sum_sq[k] / (2.0 * count[k] as f64),
                    pairs: count[k],
                }
            }
        })
        .collect();
    Ok(EmpiricalVariogram {
        lags,
        points_used: used.len(),
        points_total: n,
    })
}

/// SplitMix64 (Steele, Lea & Flood 2014), used only as a fixed hash for subsampling.
pub(crate) fn splitmix64(x: u64) -> u64 {
    let mut z = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
    z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
    z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
    z ^ (z >> 31)
}

/// How a variogram fit ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum FitEnd {
    /// The simplex converged (function-value spread and size below tolerance).
    Converged,
    /// The iteration limit was reached; the best point found is returned.
    MaxIterations,
}

/// A fitted variogram model with the diagnostics of the fit.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct VariogramFit {
    /// The fitted model.
    pub model: CovarianceModel,
    /// Cressie's WLS criterion `Σ N_k (γ̂_k/γ_k − 1)²` at the fitted model.
    pub wls_objective: f64,
    /// Simplex iterations of the best start.
    pub iterations: usize,
    /// How the best start ended.
    pub ended: FitEnd,
    /// Lags that entered the fit (with at least one pair).
    pub lags_used: usize,
}

/// Fit a model of `kind` to `lags` by Cressie's (1985) weighted least squares.
///
/// Bounds: `partial_sill > 0`, `nugget ≥ 0` (reached in the limit; a fitted nugget below
/// 1e-9 of the sill is reported as 0), `0 < range_km ≤` the largest lag centre with pairs. The
/// search runs from three starts (nugget 10 %, 40 % and 70 % of the mean semivariance, range a
/// third of the largest lag) and keeps the best.
pub fn fit_variogram(lags: &[Lag], kind: ModelKind) -> Result<VariogramFit, SpatialError> {
    let usable: Vec<Lag> = lags
        .iter()
        .copied()
        .filter(|l| l.pairs > 0 && l.gamma.is_finite() && l.centre_km.is_finite())
        .collect();
    const NEEDED: usize = 3;
    if usable.len() < NEEDED {
        return Err(SpatialError::TooFewLags {
            usable: usable.len(),
            needed: NEEDED,
        });
    }
    let max_h = usable.iter().map(|l| l.centre_km).fold(0.0, f64::max);
    let total_pairs: usize = usable.iter().map(|l| l.pairs).sum();
    let mean_gamma =
        usable.iter().map(|l| l.gamma * l.pairs as f64).sum::<f64>() / total_pairs as f64;
    if !(max_h > 0.0 && mean_gamma > 0.0) {
        return Err(SpatialError::InvalidParams {
            reason: "empirical variogram is zero everywhere or all lags are at distance 0".into(),
        });
    }
    // Transformed parameters: u0 = ln(total sill / mean γ̂), u1 = logit(nugget share),
    // u2 = logit(range / max_h). Every real vector maps inside the bounds.
    let decode = |u: &[f64]| -> CovarianceModel {
        let sill = mean_gamma * u[0].exp();
        let share = logistic(u[1]);
        let range = max_h * logistic(u[2]);
        CovarianceModel {
            kind,
            partial_sill: sill * (1.0 - share),
            range_km: range,
            nugget: sill * share,
        }
    };
    let objective = |u: &[f64]| -> f64 {
        let m = decode(u);
        if m.partial_sill <= 0.0 || m.range_km <= 0.0 {
            return f64::INFINITY;
        }
        usable
            .iter()
            .map(|l| {
                let g = m.semivariance_curve(l.centre_km);
                l.pairs as f64 * (l.gamma / g - 1.0).powi(2)
            })
            .sum()
    };
    let mut best: Option<(Vec<f64>, f64, usize, SimplexEnd)> = None;
    for share in [0.1, 0.4, 0.7] {
        let start = [0.0, logit(share), logit(1.0 / 3.0)];
        let r = nelder_mead(objective, &start, 0.5, 1e-12, 1e-7, 4000);
        if best.as_ref().is_none_or(|b| r.f < b.1) {
            best = Some((r.x, r.f, r.iterations, r.end));
        }
    }
    let (u, f, iterations, end) = best.expect("three starts were run");
    let mut model = decode(&u);
    if model.nugget < 1e-9 * model.sill() {
        model.partial_sill += model.nugget;
        model.nugget = 0.0;
    }
    Ok(VariogramFit {
        model,
        wls_objective: f,
        iterations,
        ended: match end {
            SimplexEnd::Converged => FitEnd::Converged,
            SimplexEnd::MaxIterations => FitEnd::MaxIterations,
        },
        lags_used: usable.len(),
    })
}

fn logistic(t: f64) -> f64 {
    1.0 / (1.0 + (-t).exp())
}

fn logit(p: f64) -> f64 {
    (p / (1.0 - p)).ln()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use rand::SeedableRng;
    use rand_distr::{Distribution, StandardNormal};

    #[test]
    fn pykrige_forms_match_for_exponential_and_spherical() {
        // PyKrige 1.7.3 variogram_models.py: exponential psill·(1 − exp(−d/(range/3))) + nugget,
        // spherical psill·(1.5 d/range − 0.5 (d/range)³) + nugget.
        let e = CovarianceModel::new(ModelKind::Exponential, 2.0, 9.0, 0.5).unwrap();
        let d: f64 = 4.0;
        assert_relative_eq!(
            e.semivariance(d),
            2.0 * (1.0 - (-d / 3.0).exp()) + 0.5,
            max_relative = 1e-14
        );
        let s = CovarianceModel::new(ModelKind::Spherical, 2.0, 9.0, 0.5).unwrap();
        let r = d / 9.0;
        assert_relative_eq!(
            s.semivariance(d),
            2.0 * (1.5 * r - 0.5 * r.powi(3)) + 0.5,
            max_relative = 1e-14
        );
        assert_relative_eq!(s.semivariance(12.0), 2.5, max_relative = 1e-14);
        // Gaussian: PyKrige range 10.1036 = 7φ/4 with φ = 10/√3 ⇔ our practical range 10
        // (tests/fixtures/REFERENCES.md §7.1).
        let g = CovarianceModel::new(ModelKind::Gaussian, 1.0, 10.0, 0.0).unwrap();
        let py_range = 10.0 * 7.0 / (4.0 * 3f64.sqrt());
        assert_relative_eq!(
            g.semivariance(d),
            1.0 - (-(d * d) / (py_range * 4.0 / 7.0).powi(2)).exp(),
            max_relative = 1e-12
        );
    }

    #[test]
    fn rejects_bad_parameters() {
        assert!(CovarianceModel::new(ModelKind::Exponential, 0.0, 1.0, 0.0).is_err());
        assert!(CovarianceModel::new(ModelKind::Exponential, 1.0, -1.0, 0.0).is_err());
        assert!(CovarianceModel::new(ModelKind::Exponential, 1.0, 1.0, -0.1).is_err());
        assert!(CovarianceModel::new(ModelKind::Exponential, f64::NAN, 1.0, 0.0).is_err());
        assert!(empirical_variogram(&[[0.0, 0.0]], &[1.0, 2.0], 1.0, 3).is_err());
        assert!(empirical_variogram(&[[0.0, 0.0]], &[1.0], 0.0, 3).is_err());
    }

    #[test]
    fn fit_recovers_exact_model_curve() {
        // γ̂ taken straight from a known model: the WLS optimum is that model exactly.
        let truth = CovarianceModel::new(ModelKind::Spherical, 3.0, 12.0, 0.6).unwrap();
        let lags: Vec<Lag> = (1..=15)
            .map(|k| {
                let h = k as f64;
                Lag {
                    centre_km: h,
                    gamma: truth.semivariance(h),
                    pairs: 50 + 10 * k,
                }
            })
            .collect();
        let fit = fit_variogram(&lags, ModelKind::Spherical).unwrap();
        assert_eq!(fit.ended, FitEnd::Converged);
        assert_relative_eq!(fit.model.range_km, 12.0, max_relative = 1e-3);
        assert_relative_eq!(fit.model.partial_sill, 3.0, max_relative = 1e-3);
        assert_relative_eq!(fit.model.nugget, 0.6, max_relative = 1e-3);
        assert!(fit.wls_objective < 1e-8);
    }

    #[test]
    fn fit_needs_three_lags() {
        let lags = [Lag {
            centre_km: 1.0,
            gamma: 1.0,
            pairs: 10,
        }; 2];
        assert!(matches!(
            fit_variogram(&lags, ModelKind::Exponential),
            Err(SpatialError::TooFewLags { usable: 2, .. })
        ));
    }

    /// Simulate Gaussian fields with a known exponential covariance (Cholesky of the covariance
    /// matrix, fixed seed), compute the pooled empirical variogram of several independent
    /// realisations and check the WLS fit recovers the parameters. Pooling several
    /// realisations keeps the test about the fitting method rather than about the sampling
    /// variability of one field.
    #[test]
    fn fit_recovers_simulated_exponential_field() {
        let truth = CovarianceModel::new(ModelKind::Exponential, 1.0, 15.0, 0.2).unwrap();
        let n = 400;
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(20_261_202);
        let pts: Vec<[f64; 2]> = (0..n)
            .map(|_| {
                let u: f64 = rand::Rng::gen(&mut rng);
                let v: f64 = rand::Rng::gen(&mut rng);
                [100.0 * u, 100.0 * v]
            })
            .collect();
        let c = nalgebra::DMatrix::from_fn(n, n, |i, j| {
            let h = (pts[i][0] - pts[j][0]).hypot(pts[i][1] - pts[j][1]);
            if i == j {
                truth.sill()
            } else {
                truth.signal_covariance(h)
            }
        });
        let l = c.cholesky().expect("covariance is positive definite").l();
        let (lag, n_lags) = (2.5, 16);
        let mut pooled = vec![(0.0, 0.0, 0usize); n_lags];
        for _ in 0..6 {
            let z = nalgebra::DVector::from_fn(n, |_, _| StandardNormal.sample(&mut rng));
            let field = &l * z;
            let ev = empirical_variogram(&pts, field.as_slice(), lag, n_lags).unwrap();
            for (acc, lg) in pooled.iter_mut().zip(&ev.lags) {
                acc.0 += lg.gamma * lg.pairs as f64;
                acc.1 += lg.centre_km * lg.pairs as f64;
                acc.2 += lg.pairs;
            }
        }
        let lags: Vec<Lag> = pooled
            .iter()
            .map(|&(g, h, p)| Lag {
                centre_km: h / p as f64,
                gamma: g / p as f64,
                pairs: p,
            })
            .collect();
        let fit = fit_variogram(&lags, ModelKind::Exponential).unwrap();
        assert_relative_eq!(fit.model.range_km, 15.0, max_relative = 0.25);
        assert_relative_eq!(fit.model.sill(), 1.2, max_relative = 0.25);
        assert!(fit.model.nugget < 0.5, "nugget {}", fit.model.nugget);
    }

    #[test]
    fn subsampling_is_deterministic_and_bounded() {
        let n = MAX_POINTS_ALL_PAIRS + 500;
        let pts: Vec<[f64; 2]> = (0..n).map(|i| [(i % 97) as f64, (i / 97) as f64]).collect();
        let r: Vec<f64> = (0..n).map(|i| ((i * 7919) % 13) as f64).collect();
        let a = empirical_variogram(&pts, &r, 2.0, 5).unwrap();
        let b = empirical_variogram(&pts, &r, 2.0, 5).unwrap();
        assert_eq!(a.points_used, MAX_POINTS_ALL_PAIRS);
        assert_eq!(a.points_total, n);
        assert_eq!(a, b);
    }
}
