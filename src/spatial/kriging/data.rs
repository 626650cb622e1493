//! The inputs of the kriging: the counted points, the parameters and the targets.

use crate::spatial::variogram::CovarianceModel;
use crate::spatial::SpatialError;

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
