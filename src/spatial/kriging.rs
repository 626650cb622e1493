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
//! well-scaled matrix. The system is symmetric indefinite; it is solved by LU with partial
//! pivoting, and its 1-norm condition number `‖A‖₁‖A⁻¹‖₁` is estimated from the LU factors by
//! the Hager–Higham method (LAPACK `xGECON`), a few extra solves rather than an inverse or an
//! eigendecomposition (which cost about 15 times more per target at k = 20).
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
//! **Which variance to publish.** `variance` treats the whole nugget as noise, so it is the
//! error variance of the smooth drift-plus-signal surface. If the nugget is read as real
//! segment-to-segment (micro-scale) variation that belongs to a segment's true AADT (Cressie
//! 1993 §3.2.1 splits the nugget into micro-scale and measurement-error parts), the error
//! variance for an *uncounted* segment is `variance_with_nugget`. The weights and the estimate
//! are the same either way at a segment with no count.
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
//! Each target costs one LU factorisation of a `(k + p + 1)`-square matrix and about a dozen
//! triangular solves. The ignored test
//! `timing_100k_targets` (run with `cargo test --release --lib timing -- --ignored
//! --nocapture`) reports the wall time of 100,000 targets with 20 neighbours and two drift
//! terms from 5,000 data points: 1.3 s on 2 shared cores in the test profile (opt-level 1),
//! December 2026; a release build is faster still.

use kiddo::immutable::float::kdtree::ImmutableKdTree;
use kiddo::SquaredEuclidean;
use nalgebra::{DMatrix, DVector, Dyn, LU};
use rayon::prelude::*;

use super::variogram::{splitmix64, CovarianceModel};
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
    /// Largest accepted (estimated 1-norm) condition number of the scaled system before falling
    /// back.
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
        let tree = ImmutableKdTree::new_from_slice(&tree_coordinates(&data.xy));
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
        // The tree holds slightly jittered coordinates (see `tree_coordinates`), so ask for a
        // few spare candidates and rank them by their exact distances.
        let ask = (k + usize::from(exclude.is_some()) + TREE_SPARE).min(n);
        let mut found: Vec<(f64, usize)> = self
            .tree
            .nearest_n::<SquaredEuclidean>(&xy, ask)
            .into_iter()
            .map(|nn| nn.item as usize)
            .filter(|&i| Some(i) != exclude)
            .map(|i| (dist(self.data.xy[i], xy), i))
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

/// Ordinary least-squares fit of the drift (a constant plus the external terms) to the data,
/// ignoring spatial correlation: the first step of regression-kriging and the source of the
/// residuals whose empirical variogram is fitted.
#[derive(Debug, Clone, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct DriftFit {
    /// Intercept followed by one coefficient per drift term.
    pub coefficients: Vec<f64>,
    /// `value − fitted` per data point.
    pub residuals: Vec<f64>,
}

/// Fits the drift by ordinary least squares (SVD, so a rank-deficient design still gives the
/// minimum-norm solution rather than a failure).
///
/// ```
/// use roadtally::spatial::{drift_residuals, KrigingData};
/// // A textbook regression: x = 1..5, y = 2, 4, 5, 4, 5 → y = 2.2 + 0.6 x.
/// let data = KrigingData {
///     xy: vec![[0.0, 0.0]; 5],
///     value: vec![2.0, 4.0, 5.0, 4.0, 5.0],
///     drift: (1..=5).map(|x| vec![x as f64]).collect(),
///     meas_var: vec![0.0; 5],
/// };
/// let fit = drift_residuals(&data).unwrap();
/// assert!((fit.coefficients[0] - 2.2).abs() < 1e-12);
/// assert!((fit.coefficients[1] - 0.6).abs() < 1e-12);
/// ```
pub fn drift_residuals(data: &KrigingData) -> Result<DriftFit, SpatialError> {
    let p = data.validate()?;
    let n = data.len();
    let x = DMatrix::<f64>::from_fn(
        n,
        p + 1,
        |i, j| {
            if j == 0 {
                1.0
            } else {
                data.drift[i][j - 1]
            }
        },
    );
    let y = DVector::from_column_slice(&data.value);
    let svd = x.clone().svd(true, true);
    let beta = svd
        .solve(&y, 1e-12 * svd.singular_values.max())
        .map_err(|reason| SpatialError::InvalidParams {
            reason: reason.to_string(),
        })?;
    let residuals = (&y - &x * &beta).iter().copied().collect();
    Ok(DriftFit {
        coefficients: beta.iter().copied().collect(),
        residuals,
    })
}

/// Spare candidates asked of the k-d tree beyond the `k` neighbours.
const TREE_SPARE: usize = 8;

/// Largest jitter added to a coordinate for the k-d tree only, km (0.1 mm).
const TREE_JITTER_KM: f64 = 1e-7;

/// Coordinates for the k-d tree. kiddo's immutable tree (4.2) panics when more points than a
/// bucket share one value on a split axis, which happens on gridded street networks and with
/// repeated midpoints. A fixed per-point offset below 0.1 mm (SplitMix64 hash of the index, so
/// it is deterministic) separates such values. The tree only proposes candidates: neighbours
/// are ranked by exact distance, so the jitter can only reorder points whose distances to the
/// target differ by less than about 0.3 mm.
fn tree_coordinates(xy: &[[f64; 2]]) -> Vec<[f64; 2]> {
    let unit = |h: u64| (h >> 11) as f64 / (1u64 << 53) as f64;
    xy.iter()
        .enumerate()
        .map(|(i, p)| {
            let h = splitmix64(i as u64);
            [
                p[0] + TREE_JITTER_KM * unit(h),
                p[1] + TREE_JITTER_KM * unit(splitmix64(h)),
            ]
        })
        .collect()
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
    let norm_a = one_norm(&a);
    let lu = a.lu();
    let Some(x) = lu.solve(&b) else {
        return Err(f64::INFINITY);
    };
    let condition = match inverse_one_norm_estimate(&lu, size) {
        Some(inv) => norm_a * inv,
        None => f64::INFINITY,
    };
    if !(condition.is_finite() && condition <= condition_limit) {
        return Err(condition);
    }
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

/// Largest absolute column sum.
fn one_norm(a: &DMatrix<f64>) -> f64 {
    a.column_iter()
        .map(|c| c.iter().map(|v| v.abs()).sum::<f64>())
        .fold(0.0, f64::max)
}

/// Estimate of `‖A⁻¹‖₁` for a symmetric `A` from its LU factors, by Hager's (1984) method as
/// refined by Higham (1988) and used in LAPACK's `xGECON`: a few solves instead of an
/// inverse. The estimate is a lower bound, in practice within a small factor of the truth.
/// `None` if a solve fails (a zero pivot: singular).
fn inverse_one_norm_estimate(lu: &LU<f64, Dyn, Dyn>, n: usize) -> Option<f64> {
    let mut x = DVector::<f64>::from_element(n, 1.0 / n as f64);
    let mut estimate = 0.0;
    for _ in 0..5 {
        let y = lu.solve(&x)?;
        estimate = y.iter().map(|v| v.abs()).sum::<f64>();
        let xi = y.map(|v| if v >= 0.0 { 1.0 } else { -1.0 });
        // A is symmetric, so A⁻ᵀξ = A⁻¹ξ.
        let z = lu.solve(&xi)?;
        let (j, zmax) = z.iter().enumerate().map(|(j, v)| (j, v.abs())).fold(
            (0, f64::NEG_INFINITY),
            |acc, c| if c.1 > acc.1 { c } else { acc },
        );
        if zmax <= z.dot(&x) {
            break;
        }
        x = DVector::zeros(n);
        x[j] = 1.0;
    }
    // Higham's (1988) alternative vector guards against the rare underestimates.
    let alt = DVector::<f64>::from_fn(n, |i, _| {
        let sign = if i % 2 == 0 { 1.0 } else { -1.0 };
        sign * (1.0 + i as f64 / (n as f64 - 1.0).max(1.0))
    });
    let y = lu.solve(&alt)?;
    let alt_est = 2.0 * y.iter().map(|v| v.abs()).sum::<f64>() / (3.0 * n as f64);
    let est = estimate.max(alt_est);
    est.is_finite().then_some(est)
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::spatial::variogram::ModelKind;
    use approx::{assert_abs_diff_eq, assert_relative_eq};
    use proptest::prelude::*;

    fn model(nugget: f64) -> CovarianceModel {
        CovarianceModel::new(ModelKind::Exponential, 1.0, 10.0, nugget).unwrap()
    }

    /// A small irregular layout with one drift term that varies smoothly.
    fn layout(n: usize) -> KrigingData {
        let xy: Vec<[f64; 2]> = (0..n)
            .map(|i| {
                let t = i as f64;
                [(t * 7.31) % 20.0, (t * 3.17 + t * t * 0.11) % 20.0]
            })
            .collect();
        let drift: Vec<Vec<f64>> = xy.iter().map(|p| vec![0.2 * p[0] + 1.0]).collect();
        let value: Vec<f64> = xy
            .iter()
            .zip(&drift)
            .map(|(p, f)| 7.0 + 0.5 * f[0] + (p[1] * 0.3).sin())
            .collect();
        KrigingData {
            xy,
            value,
            drift,
            meas_var: vec![0.0; n],
        }
    }

    fn kriger(data: KrigingData, nugget: f64, k: usize) -> Kriger {
        let mut p = KrigingParams::new(model(nugget));
        p.neighbours = k;
        Kriger::new(data, p).unwrap()
    }

    #[test]
    fn reproduces_datum_with_zero_noise() {
        let data = layout(25);
        let k = kriger(data.clone(), 0.0, 10);
        for i in 0..data.len() {
            let p = k.predict(data.xy[i], &data.drift[i]).unwrap();
            assert!(p.fallbacks.is_empty());
            assert_abs_diff_eq!(p.value, data.value[i], epsilon = 1e-9);
            assert_abs_diff_eq!(p.variance, 0.0, epsilon = 1e-9);
        }
    }

    #[test]
    fn measurement_variance_smooths_and_widens() {
        let mut data = layout(25);
        let exact = kriger(data.clone(), 0.0, 10)
            .predict(data.xy[3], &data.drift[3])
            .unwrap();
        data.meas_var[3] = 0.5;
        let noisy = kriger(data.clone(), 0.0, 10)
            .predict(data.xy[3], &data.drift[3])
            .unwrap();
        assert!(noisy.variance > exact.variance + 1e-3);
        let own = noisy.neighbours.iter().position(|&i| i == 3).unwrap();
        assert!(noisy.weights[own] < 1.0 - 1e-3);
    }

    /// The interval widens with distance from the counts: along a ray leaving a datum, the
    /// kriging variance rises monotonically from 0 (neighbourhood = all points, so the
    /// neighbour set does not change along the ray).
    #[test]
    fn variance_grows_along_a_ray_away_from_the_data() {
        let data = layout(30);
        let start = data.xy[0];
        for drift in [false, true] {
            let mut d = data.clone();
            if !drift {
                d.drift = vec![vec![]; d.len()];
            }
            let k = kriger(d, 0.0, 30);
            let mut last = -1.0;
            for step in 0..60 {
                let t = step as f64 * 0.5;
                let f0: Vec<f64> = if drift { vec![2.0] } else { vec![] };
                let p = k.predict([start[0] - t, start[1] - 0.5 * t], &f0).unwrap();
                assert!(p.fallbacks.is_empty());
                assert!(p.variance > last, "step {step}: {} <= {last}", p.variance);
                last = p.variance;
            }
        }
    }

    #[test]
    fn variance_does_not_depend_on_values() {
        let data = layout(20);
        let mut other = data.clone();
        for (i, v) in other.value.iter_mut().enumerate() {
            *v = (i as f64 * 1.7).cos() * 100.0;
        }
        let a = kriger(data, 0.2, 8).predict([5.5, 6.5], &[2.0]).unwrap();
        let b = kriger(other, 0.2, 8).predict([5.5, 6.5], &[2.0]).unwrap();
        assert_relative_eq!(a.variance, b.variance, max_relative = 1e-12);
        assert_ne!(a.value, b.value);
    }

    #[test]
    fn constant_drift_among_neighbours_is_dropped_and_reported() {
        let mut data = layout(20);
        for d in data.drift.iter_mut() {
            d.push(3.0); // e.g. every neighbour has 2 lanes
        }
        let k = kriger(data, 0.1, 10);
        let p = k.predict([5.0, 5.0], &[2.0, 4.0]).unwrap();
        assert_eq!(
            p.fallbacks,
            vec![Fallback::DroppedDriftTerms(vec![DroppedDriftTerm {
                term: 1,
                defect: DriftDefect::ConstantAmongNeighbours
            }])]
        );
        assert!(p.value.is_finite() && p.variance.is_finite());
    }

    #[test]
    fn colinear_drift_is_dropped_and_reported() {
        let mut data = layout(20);
        for d in data.drift.iter_mut() {
            let f = d[0];
            d.push(2.0 * f - 1.0);
        }
        let k = kriger(data, 0.1, 10);
        let p = k.predict([5.0, 5.0], &[2.0, 3.0]).unwrap();
        assert_eq!(
            p.fallbacks,
            vec![Fallback::DroppedDriftTerms(vec![DroppedDriftTerm {
                term: 1,
                defect: DriftDefect::Colinear
            }])]
        );
        assert!(p.value.is_finite() && p.variance.is_finite());
    }

    #[test]
    fn duplicate_locations_without_noise_are_merged() {
        let mut data = layout(15);
        data.xy.push(data.xy[4]);
        data.value.push(data.value[4] + 1.0);
        data.drift.push(data.drift[4].clone());
        data.meas_var.push(0.0);
        let k = kriger(data.clone(), 0.0, 15);
        let p = k
            .predict([data.xy[4][0] + 0.5, data.xy[4][1]], &[2.0])
            .unwrap();
        assert!(
            p.fallbacks
                .iter()
                .any(|f| matches!(f, Fallback::MergedCoincident { groups, .. } if groups == &vec![vec![4, 15]])),
            "{:?}",
            p.fallbacks
        );
        assert!(p.value.is_finite() && p.variance.is_finite() && p.variance >= 0.0);
        // At the shared location the merged datum is the mean of the two.
        let q = k.predict(data.xy[4], &data.drift[4]).unwrap();
        assert_abs_diff_eq!(q.value, data.value[4] + 0.5, epsilon = 1e-9);
    }

    #[test]
    fn duplicate_locations_with_noise_need_no_fallback() {
        let mut data = layout(15);
        data.meas_var = vec![0.05; 15];
        data.xy.push(data.xy[4]);
        data.value.push(data.value[4] + 1.0);
        data.drift.push(data.drift[4].clone());
        data.meas_var.push(0.05);
        let p = kriger(data, 0.0, 16).predict([3.0, 3.0], &[2.0]).unwrap();
        assert!(p.fallbacks.is_empty());
        assert!(p.value.is_finite() && p.variance.is_finite());
    }

    #[test]
    fn everything_at_one_place_still_gives_a_finite_answer() {
        let n = 40; // more than a k-d tree bucket on one axis value
        let data = KrigingData {
            xy: vec![[1.0, 1.0]; n],
            value: (0..n).map(|i| i as f64).collect(),
            drift: (0..n).map(|i| vec![i as f64]).collect(),
            meas_var: vec![0.0; n],
        };
        let p = kriger(data, 0.0, 10).predict([2.0, 2.0], &[3.0]).unwrap();
        assert!(p.value.is_finite() && p.variance.is_finite());
        assert!(!p.fallbacks.is_empty());
    }

    #[test]
    fn many_points_on_one_axis_value_build_a_tree() {
        // A grid street network: 200 midpoints share x = 0.
        let n = 200;
        let data = KrigingData {
            xy: (0..n).map(|i| [0.0, i as f64 * 0.1]).collect(),
            value: (0..n).map(|i| (i as f64 * 0.05).sin()).collect(),
            drift: vec![vec![]; n],
            meas_var: vec![0.01; n],
        };
        let p = kriger(data, 0.0, 8).predict([0.3, 5.0], &[]).unwrap();
        assert_eq!(p.neighbours.len(), 8);
        assert!(p.value.is_finite());
    }

    #[test]
    fn ill_conditioned_gaussian_falls_back_with_a_finite_answer() {
        // Gaussian model, no nugget, points 1 m apart: the classic near-singular system.
        let n = 12;
        let data = KrigingData {
            xy: (0..n).map(|i| [i as f64 * 0.001, 0.0]).collect(),
            value: (0..n).map(|i| i as f64).collect(),
            drift: vec![vec![]; n],
            meas_var: vec![0.0; n],
        };
        let m = CovarianceModel::new(ModelKind::Gaussian, 1.0, 50.0, 0.0).unwrap();
        let mut params = KrigingParams::new(m);
        params.neighbours = n;
        let p = Kriger::new(data, params)
            .unwrap()
            .predict([0.5, 0.5], &[])
            .unwrap();
        assert!(p
            .fallbacks
            .iter()
            .any(|f| matches!(f, Fallback::InverseVarianceMean { .. })));
        assert!(p.value.is_finite() && p.variance.is_finite());
        assert_abs_diff_eq!(p.weights.iter().sum::<f64>(), 1.0, epsilon = 1e-12);
    }

    #[test]
    fn invalid_inputs_are_errors() {
        let mut d = layout(5);
        d.value.pop();
        assert!(matches!(
            Kriger::new(d, KrigingParams::new(model(0.0))),
            Err(SpatialError::LengthMismatch { .. })
        ));
        let mut d = layout(5);
        d.meas_var[2] = -1.0;
        assert!(matches!(
            Kriger::new(d, KrigingParams::new(model(0.0))),
            Err(SpatialError::NegativeVariance { index: 2, .. })
        ));
        let mut d = layout(5);
        d.xy[1][0] = f64::NAN;
        assert!(matches!(
            Kriger::new(d, KrigingParams::new(model(0.0))),
            Err(SpatialError::NonFinite { index: 1, .. })
        ));
        let k = kriger(layout(5), 0.0, 5);
        assert!(k.predict([0.0, 0.0], &[]).is_err());
        assert!(k.predict([f64::INFINITY, 0.0], &[1.0]).is_err());
    }

    #[test]
    fn predict_many_matches_predict() {
        let data = layout(30);
        let k = kriger(data, 0.1, 10);
        let targets: Vec<Target> = (0..50)
            .map(|i| Target {
                xy: [i as f64 * 0.4, 20.0 - i as f64 * 0.3],
                drift: vec![1.0 + 0.1 * i as f64],
            })
            .collect();
        let many = k.predict_many(&targets);
        for (t, r) in targets.iter().zip(many) {
            assert_eq!(r.unwrap(), k.predict(t.xy, &t.drift).unwrap());
        }
    }

    #[test]
    fn leave_one_out_excludes_the_point_itself() {
        let data = layout(20);
        let k = kriger(data.clone(), 0.1, 30);
        let cv = k.leave_one_out();
        assert_eq!(cv.len(), 20);
        for (i, r) in cv.into_iter().enumerate() {
            let c = r.unwrap();
            assert_eq!(c.index, i);
            assert!(!c.prediction.neighbours.contains(&i));
            assert_eq!(c.prediction.neighbours.len(), 19);
            assert_relative_eq!(c.observed, data.value[i]);
            assert_relative_eq!(
                c.error_variance,
                c.prediction.variance + 0.1,
                max_relative = 1e-12
            );
            assert!(c.standardised_error.unwrap().is_finite());
        }
    }

    /// OLS normal equations: residuals are orthogonal to every design column; a colinear
    /// design still gives a finite minimum-norm fit.
    #[test]
    fn drift_residuals_are_orthogonal_to_the_design() {
        let mut data = layout(20);
        for d in data.drift.iter_mut() {
            let f = d[0];
            d.push(3.0 * f); // colinear on purpose
        }
        let fit = drift_residuals(&data).unwrap();
        assert_eq!(fit.coefficients.len(), 3);
        assert!(fit.coefficients.iter().all(|c| c.is_finite()));
        let sum: f64 = fit.residuals.iter().sum();
        assert_abs_diff_eq!(sum, 0.0, epsilon = 1e-9);
        let dot: f64 = fit
            .residuals
            .iter()
            .zip(&data.drift)
            .map(|(r, d)| r * d[0])
            .sum();
        assert_abs_diff_eq!(dot, 0.0, epsilon = 1e-9);
    }

    /// The Hager–Higham estimate against the exact 1-norm condition number (explicit inverse)
    /// of kriging-like systems: a lower bound within a factor of 3 (Higham 1988 reports it is
    /// usually exact or within a factor of a few).
    #[test]
    fn condition_estimate_is_close_to_exact() {
        for (n, phi) in [(5usize, 0.3), (12, 1.0), (20, 3.0), (20, 20.0)] {
            let mut a = DMatrix::<f64>::from_fn(n + 1, n + 1, |i, j| {
                if i == n || j == n {
                    1.0
                } else {
                    (-((i as f64 - j as f64).abs() * 0.7 + (i * j) as f64 * 0.01) / phi).exp()
                }
            });
            a[(n, n)] = 0.0;
            for i in 0..n {
                a[(i, i)] = 1.0;
            }
            let exact = one_norm(&a) * one_norm(&a.clone().try_inverse().unwrap());
            let lu = a.clone().lu();
            let est = one_norm(&a) * inverse_one_norm_estimate(&lu, n + 1).unwrap();
            assert!(est <= exact * (1.0 + 1e-9), "n {n}: {est} > {exact}");
            assert!(est >= exact / 3.0, "n {n}: {est} << {exact}");
        }
    }

    /// Wall time of 100,000 targets with 20 neighbours and two drift terms. Not an assertion:
    /// run `cargo test --release --lib timing_100k_targets -- --ignored --nocapture`.
    #[test]
    #[ignore]
    fn timing_100k_targets() {
        let n = 5000;
        let mut data = layout(n);
        for (i, p) in data.xy.iter_mut().enumerate() {
            let t = i as f64;
            *p = [(t * 7.31) % 200.0, (t * 3.17 + t * t * 0.011) % 200.0];
        }
        for (i, d) in data.drift.iter_mut().enumerate() {
            d.push((i % 4) as f64 + 1.0);
        }
        data.meas_var = (0..n).map(|i| 0.01 * (i % 3) as f64).collect();
        let k = kriger(data, 0.05, 20);
        let targets: Vec<Target> = (0..100_000)
            .map(|i| {
                let t = i as f64;
                Target {
                    xy: [(t * 0.731) % 200.0, (t * 0.317) % 200.0],
                    drift: vec![2.0, (i % 4) as f64 + 1.0],
                }
            })
            .collect();
        let start = std::time::Instant::now();
        let out = k.predict_many(&targets);
        let elapsed = start.elapsed();
        let ok = out.iter().filter(|r| r.is_ok()).count();
        println!(
            "100000 targets, 20 neighbours, {} threads: {:.2} s ({ok} ok)",
            rayon::current_num_threads(),
            elapsed.as_secs_f64()
        );
    }

    fn arb_points() -> impl Strategy<Value = Vec<([f64; 2], f64, f64)>> {
        prop::collection::vec(
            ((0.0..30.0f64, 0.0..30.0f64), -5.0..5.0f64, 0.0..4.0f64),
            5..25,
        )
        .prop_map(|v| v.into_iter().map(|((x, y), z, f)| ([x, y], z, f)).collect())
    }

    fn build(points: &[([f64; 2], f64, f64)]) -> KrigingData {
        KrigingData {
            xy: points.iter().map(|p| p.0).collect(),
            value: points.iter().map(|p| p.1).collect(),
            drift: points.iter().map(|p| vec![p.2]).collect(),
            meas_var: vec![0.0; points.len()],
        }
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(64))]

        /// Kriging honours a measured value at its own location (zero nugget, zero
        /// measurement variance), whatever fallback the neighbourhood needs.
        #[test]
        fn honours_data_at_data_locations(points in arb_points(), pick in 0usize..25) {
            let data = build(&points);
            let i = pick % data.len();
            // Skip layouts with another point on top of point i (then the datum is not unique).
            let unique = (0..data.len()).all(|j| j == i || dist(data.xy[i], data.xy[j]) > 1e-6);
            prop_assume!(unique);
            let k = kriger(data.clone(), 0.0, 10);
            let p = k.predict(data.xy[i], &data.drift[i]).unwrap();
            prop_assert!((p.value - data.value[i]).abs() <= 1e-7 * (1.0 + data.value[i].abs()),
                "value {} vs {} ({:?})", p.value, data.value[i], p.fallbacks);
            prop_assert!(p.variance.abs() <= 1e-7);
        }

        /// Row order does not change the estimate (neighbourhood = all points, so no ties at the
        /// neighbourhood edge).
        #[test]
        fn row_order_does_not_change_the_estimate(points in arb_points(), seed in 0u64..1000,
                                                  tx in 0.0..30.0f64, ty in 0.0..30.0f64) {
            let data = build(&points);
            let mut order: Vec<usize> = (0..points.len()).collect();
            // Deterministic shuffle from the seed.
            let mut s = seed.wrapping_mul(6364136223846793005).wrapping_add(1);
            for i in (1..order.len()).rev() {
                s = s.wrapping_mul(6364136223846793005).wrapping_add(1442695040888963407);
                order.swap(i, (s >> 33) as usize % (i + 1));
            }
            let shuffled: Vec<_> = order.iter().map(|&i| points[i]).collect();
            let a = kriger(data, 0.05, 100).predict([tx, ty], &[1.5]).unwrap();
            let b = kriger(build(&shuffled), 0.05, 100).predict([tx, ty], &[1.5]).unwrap();
            prop_assert!((a.value - b.value).abs() <= 1e-8 * (1.0 + a.value.abs()));
            prop_assert!((a.variance - b.variance).abs() <= 1e-8);
        }
    }
}
