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

mod condition;
mod data;
mod drift;
mod fallback;
mod neighbours;
mod prediction;
mod system;
#[cfg(test)]
mod tests;

use kiddo::immutable::float::kdtree::ImmutableKdTree;
use rayon::prelude::*;

use super::SpatialError;
use fallback::{inverse_variance_weights, merge_coincident, usable_drift_terms};
use neighbours::{dist, tree_coordinates};
use system::{solve, Obs, Solved};

pub use data::{KrigingData, KrigingParams, Target};
pub use drift::{drift_residuals, DriftFit};
pub use prediction::{CrossValidationPoint, DriftDefect, DroppedDriftTerm, Fallback, Prediction};

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

    /// Estimate at `xy` without datum `exclude` (a target's own observation, to be combined
    /// with the prediction afterwards).
    pub fn predict_without(
        &self,
        xy: [f64; 2],
        drift: &[f64],
        exclude: Option<usize>,
    ) -> Result<Prediction, SpatialError> {
        self.predict_excluding(xy, drift, exclude)
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
