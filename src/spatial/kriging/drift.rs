//! The ordinary least-squares drift fit whose residuals feed the variogram.

use nalgebra::{DMatrix, DVector};

use super::KrigingData;
use crate::spatial::SpatialError;

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
