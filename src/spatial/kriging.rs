//! Universal kriging / kriging with external drift (KED) on local neighbourhoods.
//!
//! # Method
//!
//! For a target `x₀` with drift terms `f₀`, the `k` nearest data points (straight-line distance
//! between segment midpoints, found with a k-d tree) enter the system
//!
//! ```text
//! [ C   F ] [ w ]   [ c₀ ]        C_ij = partial_sill·ρ(h_ij)                  (i ≠ j)
//! [ Fᵀ  0 ] [ μ ] = [ f₀ ]        C_ii = partial_sill + nugget + meas_var_i
//!                                 c₀_i = partial_sill·ρ(h_i0)
//!                                 F    = [1, f₁, …, f_p] at the neighbours
//! ```
//!
//! and the estimate is `ŷ₀ = wᵀy` with kriging variance `σ² = partial_sill − wᵀc₀ − μᵀf₀`
//! (Cressie 1993 §3.4.5, eq. 3.4.59 with the measurement-error model of §3.2.1). The nugget
//! and each observation's own measurement variance sit on the diagonal only: they are white
//! noise on the observations, and the prediction targets the **noise-free** value
//! `f₀ᵀβ + S(x₀)`. Consequences:
//!
//! * with zero nugget and zero measurement variance, a datum is reproduced exactly at its own
//!   location with variance 0; with a noisy datum the estimate is smoothed;
//! * the textbook / PyKrige variance, which includes the nugget because it predicts a new noisy
//!   observation, is `variance + nugget`, reported as [`Prediction::variance_with_nugget`].
//!   At a target that coincides with no datum the two conventions give identical weights and
//!   estimates and variances that differ by exactly the nugget.
//!
//! Before solving, drift terms are standardised among the neighbours (centred and scaled; the
//! constant column makes this an exact reparametrisation that leaves `w`, `ŷ₀` and `σ²`
//! unchanged) and the covariances are divided by the sill, so the condition number refers to a
//! well-scaled matrix. The system is symmetric indefinite; it is solved through its symmetric
//! eigendecomposition, which also gives the 2-norm condition number `max|λ|/min|λ|` exactly.
//!
//! **Fallback chain** (each step taken is reported in [`Prediction::fallbacks`]):
//!
//! 1. drift terms that are constant among the neighbours, or linearly dependent on the constant
//!    and the terms before them (Gram–Schmidt residual below 1e-6 of the column norm), are
//!    dropped: [`Fallback::DroppedDriftTerms`];
//! 2. if the system is singular or its condition number exceeds
//!    [`KrigingParams::condition_limit`] and some neighbours coincide (closer than
//!    [`KrigingParams::coincident_km`]), each coincident group is merged into one observation
//!    (inverse-variance weighted value and drift, combined noise variance):
//!    [`Fallback::MergedCoincident`];
//! 3. if it still fails, ordinary kriging (constant drift only): [`Fallback::OrdinaryKriging`];
//! 4. if that fails too, the inverse-variance-weighted mean of the neighbours (weights
//!    `1/(nugget + meas_var_i)`, equal weights among zero-variance points), whose variance is
//!    the model mean squared error of those weights, `partial_sill − 2wᵀc₀ + wᵀCw`, ignoring the
//!    drift: [`Fallback::InverseVarianceMean`].
//!
//! A result is never NaN: if nothing gives a finite answer the error
//! [`SpatialError::Unsolvable`] names the neighbour indices.
//!
//! # Units
//!
//! Coordinates in km (projected); values, variances and sills in the units of the variable
//! (log AADT in the pipeline). Drift terms are in their own units; only their span matters.
//!
//! # References
//!
//! Cressie (1993) §3.2 and §3.4; Wackernagel (2003) ch. 37; Isaaks & Srivastava (1989) ch. 12;
//! see the [module list](crate::spatial).
//!
//! # Speed
//!
//! Each target costs one eigendecomposition of a `(k + p + 1)`-square matrix. The ignored test
//! `timing_100k_targets` (run with `cargo test --release --lib timing -- --ignored
//! --nocapture`) reports the wall time of 100,000 targets with 20 neighbours.

use kiddo::immutable::float::kdtree::ImmutableKdTree;
use kiddo::SquaredEuclidean;
use nalgebra::{DMatrix, DVector, SymmetricEigen};
use rayon::prelude::*;

use super::variogram::CovarianceModel;
use super::SpatialError;

/// Counted points: one entry per point in every field.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct KrigingData {
    /// Projected coordinates (segment midpoints), km.
    pub xy: Vec<[f64; 2]>,
    /// Observed values (log AADT in the pipeline).
    pub value: Vec<f64>,
    /// Per point, the external drift terms, **not** including the constant 1, which is always
    /// added. Every point has the same number of terms (possibly 0).
    pub drift: Vec<Vec<f64>>,
    /// Per point, the variance of its measurement error (0 for an exact value).
    pub meas_var: Vec<f64>,
}

impl KrigingData {
    /// Number of points.
    pub fn len(&self) -> usize {
        self.xy.len()
    }

    /// True if there are no points.
    pub fn is_empty(&self) -> bool {
        self.xy.is_empty()
    }

    /// Checks lengths, finiteness and signs; returns the number of drift terms.
    pub fn validate(&self) -> Result<usize, SpatialError> {
        let n = self.xy.len();
        if n == 0 {
            return Err(SpatialError::NoData);
        }
        for (what, found) in [
            ("values", self.value.len()),
            ("drift rows", self.drift.len()),
            ("measurement variances", self.meas_var.len()),
        ] {
            if found != n {
                return Err(SpatialError::LengthMismatch {
                    what,
                    expected: n,
                    found,
                });
            }
        }
        let p = self.drift[0].len();
        for i in 0..n {
            if !(self.xy[i][0].is_finite() && self.xy[i][1].is_finite()) {
                return Err(SpatialError::NonFinite {
                    what: "coordinate",
                    index: i,
                });
            }
            if !self.value[i].is_finite() {
                return Err(SpatialError::NonFinite {
                    what: "value",
                    index: i,
                });
            }
            if self.drift[i].len() != p {
                return Err(SpatialError::LengthMismatch {
                    what: "drift terms of a point",
                    expected: p,
                    found: self.drift[i].len(),
                });
            }
            if self.drift[i].iter().any(|f| !f.is_finite()) {
                return Err(SpatialError::NonFinite {
                    what: "drift term",
                    index: i,
                });
            }
            let v = self.meas_var[i];
            if !v.is_finite() {
                return Err(SpatialError::NonFinite {
                    what: "measurement variance",
                    index: i,
                });
            }
            if v < 0.0 {
                return Err(SpatialError::NegativeVariance { index: i, value: v });
            }
        }
        Ok(p)
    }
}

/// Parameters of the kriging.
#[derive(Debug, Clone, Copy, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct KrigingParams {
    /// Number of nearest data points in each local system (`usize::MAX` or ≥ n: all points).
    pub neighbours: usize,
    /// Covariance model of the drift residuals.
    pub model: CovarianceModel,
    /// Largest accepted 2-norm condition number of the scaled system before falling back.
    pub condition_limit: f64,
    /// Neighbours closer than this (km) count as coincident for the merge fallback.
    pub coincident_km: f64,
}

impl KrigingParams {
    /// Defaults: 20 neighbours; condition limit 1e12 (about four significant digits left in
    /// double precision); coincidence 1e-6 km (1 mm).
    pub fn new(model: CovarianceModel) -> Self {
        KrigingParams {
            neighbours: 20,
            model,
            condition_limit: 1e12,
            coincident_km: 1e-6,
        }
    }
}

/// A point to estimate.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct Target {
    /// Projected coordinates, km.
    pub xy: [f64; 2],
    /// Drift terms in the same order as [`KrigingData::drift`].
    pub drift: Vec<f64>,
}

/// Why a drift term was left out of a local system.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub enum DriftDefect {
    /// The term takes (numerically) one value among the neighbours, so it duplicates the
    /// constant.
    ConstantAmongNeighbours,
    /// The term is a linear combination of the constant and the terms kept before it.
    Colinear,
}

/// A drift term left out, by its index in [`KrigingData::drift`] rows.
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
    /// 2-norm condition number of the scaled system that gave the result; for the
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

/// A kriging estimator over a fixed set of data points.
///
/// ```
/// use roadtally::spatial::{CovarianceModel, Kriger, KrigingData, KrigingParams, ModelKind};
/// let data = KrigingData {
///     xy: vec![[0.0, 0.0], [1.0, 0.0], [0.0, 1.0], [1.0, 1.0]],
///     value: vec![1.0, 2.0, 3.0, 4.0],
///     drift: vec![vec![]; 4],
///     meas_var: vec![0.0; 4],
/// };
/// let model = CovarianceModel::new(ModelKind::Exponential, 1.0, 3.0, 0.0).unwrap();
/// let k = Kriger::new(data, KrigingParams::new(model)).unwrap();
/// let p = k.predict([0.5, 0.5], &[]).unwrap();
/// assert!((p.value - 2.5).abs() < 1e-9); // symmetric: equal weights
/// let at_datum = k.predict([1.0, 0.0], &[]).unwrap();
/// assert!((at_datum.value - 2.0).abs() < 1e-9 && at_datum.variance < 1e-9);
/// ```
#[derive(Debug, Clone)]
pub struct Kriger {
    data: KrigingData,
    params: KrigingParams,
    n_drift: usize,
    tree: ImmutableKdTree<f64, u64, 2, 32>,
}

/// One observation of a local system; a merged group of coincident points is one observation.
#[derive(Debug, Clone)]
struct Obs {
    xy: [f64; 2],
    value: f64,
    drift: Vec<f64>,
    /// nugget + measurement variance.
    noise: f64,
    /// (data index, share of this observation's weight).
    members: Vec<(usize, f64)>,
}

/// A solved system: weights per observation and the variance.
struct Solved {
    weights: Vec<f64>,
    variance: f64,
    condition: f64,
}

impl Kriger {
    /// Validates the data and parameters and builds the k-d tree.
    pub fn new(data: KrigingData, params: KrigingParams) -> Result<Self, SpatialError> {
        let n_drift = data.validate()?;
        params.model.validate()?;
        if params.neighbours == 0 {
            return Err(SpatialError::InvalidParams {
                reason: "at least one neighbour is needed".into(),
            });
        }
        if !(params.condition_limit.is_finite() && params.condition_limit > 1.0) {
            return Err(SpatialError::InvalidParams {
                reason: "condition limit must be finite and > 1".into(),
            });
        }
        if !(params.coincident_km.is_finite() && params.coincident_km >= 0.0) {
            return Err(SpatialError::InvalidParams {
                reason: "coincidence distance must be finite and >= 0 km".into(),
            });
        }
        let tree = ImmutableKdTree::new_from_slice(&data.xy);
        Ok(Kriger {
            data,
            params,
            n_drift,
            tree,
        })
    }

    /// The data points.
    pub fn data(&self) -> &KrigingData {
        &self.data
    }

    /// The parameters.
    pub fn params(&self) -> &KrigingParams {
        &self.params
    }

    /// Estimate at `xy` (km) with drift terms `drift` (same order as the data's).
    pub fn predict(&self, xy: [f64; 2], drift: &[f64]) -> Result<Prediction, SpatialError> {
        self.predict_excluding(xy, drift, None)
    }

    /// Estimates at many targets, in parallel; one result per target, in order.
    pub fn predict_many(&self, targets: &[Target]) -> Vec<Result<Prediction, SpatialError>> {
        targets
            .par_iter()
            .map(|t| self.predict(t.xy, &t.drift))
            .collect()
    }

    /// Leave-one-out cross-validation: each point predicted from the others (its own row is
    /// excluded from its neighbourhood; the model is not refitted). In parallel.
    pub fn leave_one_out(&self) -> Vec<Result<CrossValidationPoint, SpatialError>> {
        (0..self.data.len())
            .into_par_iter()
            .map(|i| {
                let prediction =
                    self.predict_excluding(self.data.xy[i], &self.data.drift[i], Some(i))?;
                let observed = self.data.value[i];
                let error_variance =
                    prediction.variance + self.params.model.nugget + self.data.meas_var[i];
                let standardised_error = (error_variance > 0.0)
                    .then(|| (observed - prediction.value) / error_variance.sqrt());
                Ok(CrossValidationPoint {
                    index: i,
                    observed,
                    prediction,
                    error_variance,
                    standardised_error,
                })
            })
            .collect()
    }

    fn neighbours(&self, xy: [f64; 2], exclude: Option<usize>) -> Vec<usize> {
        let n = self.data.len();
        let available = n - usize::from(exclude.is_some());
        let k = self.params.neighbours.min(available);
        let ask = (k + usize::from(exclude.is_some())).min(n);
        let mut found: Vec<(f64, usize)> = self
            .tree
            .nearest_n::<SquaredEuclidean>(&xy, ask)
            .into_iter()
            .map(|nn| (nn.distance, nn.item as usize))
            .filter(|&(_, i)| Some(i) != exclude)
            .collect();
        // Sorting by (distance, index) makes the neighbourhood, and hence the estimate,
        // independent of the order of the input rows.
        found.sort_by(|a, b| a.0.total_cmp(&b.0).then(a.1.cmp(&b.1)));
        found.truncate(k);
        found.into_iter().map(|(_, i)| i).collect()
    }

    fn predict_excluding(
        &self,
        xy: [f64; 2],
        drift: &[f64],
        exclude: Option<usize>,
    ) -> Result<Prediction, SpatialError> {
        if !(xy[0].is_finite() && xy[1].is_finite()) {
            return Err(SpatialError::NonFinite {
                what: "target coordinate",
                index: 0,
            });
        }
        if drift.len() != self.n_drift {
            return Err(SpatialError::LengthMismatch {
                what: "target drift terms",
                expected: self.n_drift,
                found: drift.len(),
            });
        }
        if drift.iter().any(|f| !f.is_finite()) {
            return Err(SpatialError::NonFinite {
                what: "target drift term",
                index: 0,
            });
        }
        let model = &self.params.model;
        let idx = self.neighbours(xy, exclude);
        if idx.is_empty() {
            return Err(SpatialError::Unsolvable { points: idx });
        }
        let obs: Vec<Obs> = idx
            .iter()
            .map(|&i| Obs {
                xy: self.data.xy[i],
                value: self.data.value[i],
                drift: self.data.drift[i].clone(),
                noise: model.nugget + self.data.meas_var[i],
                members: vec![(i, 1.0)],
            })
            .collect();
        let mut fallbacks = Vec::new();

        // Step 1: drift terms that the neighbourhood cannot identify.
        let (kept, dropped) = usable_drift_terms(&obs, self.n_drift);
        if !dropped.is_empty() {
            fallbacks.push(Fallback::DroppedDriftTerms(dropped));
        }
        let mut failed_cond =
            match solve(&obs, xy, drift, &kept, model, self.params.condition_limit) {
                Ok(s) => return Ok(self.finish(&obs, &idx, s, fallbacks)),
                Err(c) => c,
            };

        // Step 2: merge coincident neighbours.
        let mut current = obs.clone();
        if let Some(merged) = merge_coincident(&obs, self.params.coincident_km) {
            let groups: Vec<Vec<usize>> = merged
                .iter()
                .filter(|o| o.members.len() > 1)
                .map(|o| o.members.iter().map(|m| m.0).collect())
                .collect();
            fallbacks.push(Fallback::MergedCoincident {
                groups,
                condition_estimate: failed_cond,
            });
            let (kept, dropped) = usable_drift_terms(&merged, self.n_drift);
            if !dropped.is_empty() {
                fallbacks.push(Fallback::DroppedDriftTerms(dropped));
            }
            match solve(
                &merged,
                xy,
                drift,
                &kept,
                model,
                self.params.condition_limit,
            ) {
                Ok(s) => return Ok(self.finish(&merged, &idx, s, fallbacks)),
                Err(c) => failed_cond = c,
            }
            current = merged;
        }

        // Step 3: ordinary kriging.
        fallbacks.push(Fallback::OrdinaryKriging {
            condition_estimate: failed_cond,
        });
        match solve(&current, xy, drift, &[], model, self.params.condition_limit) {
            Ok(s) => return Ok(self.finish(&current, &idx, s, fallbacks)),
            Err(c) => failed_cond = c,
        }

        // Step 4: inverse-variance-weighted mean of the original neighbours.
        fallbacks.push(Fallback::InverseVarianceMean {
            condition_estimate: failed_cond,
        });
        let w = inverse_variance_weights(&obs);
        let mut mse = model.partial_sill;
        for (i, oi) in obs.iter().enumerate() {
            mse -= 2.0 * w[i] * model.signal_covariance(dist(oi.xy, xy));
            for (j, oj) in obs.iter().enumerate() {
                let c = if i == j {
                    model.partial_sill + oi.noise
                } else {
                    model.signal_covariance(dist(oi.xy, oj.xy))
                };
                mse += w[i] * w[j] * c;
            }
        }
        let solved = Solved {
            weights: w,
            variance: mse.max(0.0),
            condition: failed_cond,
        };
        let p = self.finish(&obs, &idx, solved, fallbacks);
        if p.value.is_finite() && p.variance.is_finite() {
            Ok(p)
        } else {
            Err(SpatialError::Unsolvable { points: idx })
        }
    }

    /// Spreads observation weights back to data indices and assembles the prediction.
    fn finish(
        &self,
        obs: &[Obs],
        idx: &[usize],
        s: Solved,
        fallbacks: Vec<Fallback>,
    ) -> Prediction {
        let mut weights = vec![0.0; idx.len()];
        let mut value = 0.0;
        for (o, w) in obs.iter().zip(&s.weights) {
            value += w * o.value;
            for &(i, share) in &o.members {
                let pos = idx
                    .iter()
                    .position(|&j| j == i)
                    .expect("member is a neighbour");
                weights[pos] += w * share;
            }
        }
        Prediction {
            value,
            variance: s.variance,
            variance_with_nugget: s.variance + self.params.model.nugget,
            neighbours: idx.to_vec(),
            weights,
            condition_estimate: s.condition,
            fallbacks,
        }
    }
}

fn dist(a: [f64; 2], b: [f64; 2]) -> f64 {
    (a[0] - b[0]).hypot(a[1] - b[1])
}

/// Mean and population standard deviation of drift term `k` over `obs`.
fn mean_sd(obs: &[Obs], k: usize) -> (f64, f64) {
    let m = obs.len() as f64;
    let mean = obs.iter().map(|o| o.drift[k]).sum::<f64>() / m;
    let var = obs.iter().map(|o| (o.drift[k] - mean).powi(2)).sum::<f64>() / m;
    (mean, var.sqrt())
}

/// Splits the drift terms into those the neighbourhood identifies and those it cannot.
fn usable_drift_terms(obs: &[Obs], n_drift: usize) -> (Vec<usize>, Vec<DroppedDriftTerm>) {
    let m = obs.len();
    // Orthonormal basis of the kept columns, starting with the constant.
    let mut basis: Vec<Vec<f64>> = vec![vec![1.0 / (m as f64).sqrt(); m]];
    let mut kept = Vec::new();
    let mut dropped = Vec::new();
    for k in 0..n_drift {
        let (mean, sd) = mean_sd(obs, k);
        let magnitude = obs.iter().map(|o| o.drift[k].abs()).fold(0.0, f64::max);
        // Relative spread below 1e-9 is rounding noise around a single value.
        if sd <= 1e-9 * magnitude.max(f64::MIN_POSITIVE) || sd == 0.0 {
            dropped.push(DroppedDriftTerm {
                term: k,
                defect: DriftDefect::ConstantAmongNeighbours,
            });
            continue;
        }
        let z: Vec<f64> = obs.iter().map(|o| (o.drift[k] - mean) / sd).collect();
        let norm_z = (m as f64).sqrt();
        let mut r = z.clone();
        for e in &basis {
            let dot: f64 = e.iter().zip(&z).map(|(a, b)| a * b).sum();
            for (ri, ei) in r.iter_mut().zip(e) {
                *ri -= dot * ei;
            }
        }
        let norm_r = r.iter().map(|v| v * v).sum::<f64>().sqrt();
        if norm_r <= 1e-6 * norm_z {
            dropped.push(DroppedDriftTerm {
                term: k,
                defect: DriftDefect::Colinear,
            });
            continue;
        }
        basis.push(r.iter().map(|v| v / norm_r).collect());
        kept.push(k);
    }
    (kept, dropped)
}

/// Solves the scaled system with drift terms `terms`; `Err(condition)` when it is singular,
/// ill-conditioned or gives a non-finite or clearly negative variance.
fn solve(
    obs: &[Obs],
    xy0: [f64; 2],
    drift0: &[f64],
    terms: &[usize],
    model: &CovarianceModel,
    condition_limit: f64,
) -> Result<Solved, f64> {
    let m = obs.len();
    let q = 1 + terms.len();
    let s = model.sill();
    let size = m + q;
    let mut a = DMatrix::<f64>::zeros(size, size);
    let mut b = DVector::<f64>::zeros(size);
    for i in 0..m {
        a[(i, i)] = (model.partial_sill + obs[i].noise) / s;
        for j in i + 1..m {
            let c = model.signal_covariance(dist(obs[i].xy, obs[j].xy)) / s;
            a[(i, j)] = c;
            a[(j, i)] = c;
        }
        b[i] = model.signal_covariance(dist(obs[i].xy, xy0)) / s;
        a[(i, m)] = 1.0;
        a[(m, i)] = 1.0;
    }
    b[m] = 1.0;
    for (col, &k) in terms.iter().enumerate() {
        let (mean, sd) = mean_sd(obs, k);
        let c = m + 1 + col;
        for i in 0..m {
            let f = (obs[i].drift[k] - mean) / sd;
            a[(i, c)] = f;
            a[(c, i)] = f;
        }
        b[c] = (drift0[k] - mean) / sd;
    }
    let eig = SymmetricEigen::new(a);
    let max_abs = eig.eigenvalues.iter().map(|l| l.abs()).fold(0.0, f64::max);
    let min_abs = eig
        .eigenvalues
        .iter()
        .map(|l| l.abs())
        .fold(f64::INFINITY, f64::min);
    let condition = if min_abs > 0.0 {
        max_abs / min_abs
    } else {
        f64::INFINITY
    };
    if !(condition.is_finite() && condition <= condition_limit) {
        return Err(condition);
    }
    // x = V Λ⁻¹ Vᵀ b
    let mut y = eig.eigenvectors.tr_mul(&b);
    for (yi, l) in y.iter_mut().zip(eig.eigenvalues.iter()) {
        *yi /= l;
    }
    let x = &eig.eigenvectors * y;
    let weights: Vec<f64> = x.rows(0, m).iter().copied().collect();
    let scaled_var = model.partial_sill / s - x.dot(&b);
    let variance = scaled_var * s;
    if !(variance.is_finite() && weights.iter().all(|w| w.is_finite())) {
        return Err(condition);
    }
    // Rounding can leave a tiny negative variance at a datum; a clearly negative one means the
    // solution is not to be trusted.
    if variance < -1e-8 * model.partial_sill {
        return Err(condition);
    }
    Ok(Solved {
        weights,
        variance: variance.max(0.0),
        condition,
    })
}

/// Groups observations closer than `tol_km` (transitively) and merges each group; `None` if
/// no two observations coincide.
fn merge_coincident(obs: &[Obs], tol_km: f64) -> Option<Vec<Obs>> {
    let m = obs.len();
    let mut group: Vec<usize> = (0..m).collect();
    let mut any = false;
    for i in 0..m {
        for j in i + 1..m {
            if dist(obs[i].xy, obs[j].xy) <= tol_km {
                any = true;
                let (gi, gj) = (group[i], group[j]);
                if gi != gj {
                    let (keep, drop) = (gi.min(gj), gi.max(gj));
                    for g in group.iter_mut() {
                        if *g == drop {
                            *g = keep;
                        }
                    }
                }
            }
        }
    }
    if !any {
        return None;
    }
    let mut out = Vec::new();
    for root in 0..m {
        let members: Vec<&Obs> = (0..m)
            .filter(|&i| group[i] == root)
            .map(|i| &obs[i])
            .collect();
        if members.is_empty() {
            continue;
        }
        let owned: Vec<Obs> = members.iter().map(|o| (*o).clone()).collect();
        let w = inverse_variance_weights(&owned);
        let p = owned[0].drift.len();
        let mut merged = Obs {
            xy: owned[0].xy,
            value: 0.0,
            drift: vec![0.0; p],
            noise: 0.0,
            members: Vec::new(),
        };
        for (o, wi) in owned.iter().zip(&w) {
            merged.value += wi * o.value;
            for (d, f) in merged.drift.iter_mut().zip(&o.drift) {
                *d += wi * f;
            }
            // The merged error is Σ ωᵢ εᵢ, so its variance is Σ ωᵢ² σᵢ².
            merged.noise += wi * wi * o.noise;
            for &(i, share) in &o.members {
                merged.members.push((i, share * wi));
            }
        }
        out.push(merged);
    }
    Some(out)
}

/// Weights ∝ 1/noise; if some observations have zero noise they share the weight equally.
fn inverse_variance_weights(obs: &[Obs]) -> Vec<f64> {
    let exact: Vec<bool> = obs.iter().map(|o| o.noise <= 0.0).collect();
    let n_exact = exact.iter().filter(|&&e| e).count();
    if n_exact > 0 {
        return exact
            .iter()
            .map(|&e| if e { 1.0 / n_exact as f64 } else { 0.0 })
            .collect();
    }
    let total: f64 = obs.iter().map(|o| 1.0 / o.noise).sum();
    obs.iter().map(|o| (1.0 / o.noise) / total).collect()
}
