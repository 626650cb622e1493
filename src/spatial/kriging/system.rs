//! The local kriging system: building it from the neighbours (standardised drift, covariances
//! divided by the sill) and solving it for the weights and the kriging variance.

use nalgebra::{DMatrix, DVector};

use super::condition::{inverse_one_norm_estimate, one_norm};
use super::neighbours::dist;
use crate::spatial::variogram::CovarianceModel;

/// One observation of a local system; a merged group of coincident points is one observation.
#[derive(Debug, Clone)]
pub(super) struct Obs {
    pub(super) xy: [f64; 2],
    pub(super) value: f64,
    pub(super) drift: Vec<f64>,
    /// nugget + measurement variance.
    pub(super) noise: f64,
    /// (data index, share of this observation's weight).
    pub(super) members: Vec<(usize, f64)>,
}

/// A solved system: weights per observation and the variance.
pub(super) struct Solved {
    pub(super) weights: Vec<f64>,
    pub(super) variance: f64,
    pub(super) condition: f64,
}

/// Mean and population standard deviation of drift term `k` over `obs`.
pub(super) fn mean_sd(obs: &[Obs], k: usize) -> (f64, f64) {
    let m = obs.len() as f64;
    let mean = obs.iter().map(|o| o.drift[k]).sum::<f64>() / m;
    let var = obs.iter().map(|o| (o.drift[k] - mean).powi(2)).sum::<f64>() / m;
    (mean, var.sqrt())
}

/// Solves the scaled system with drift terms `terms`; `Err(condition)` when it is singular,
/// ill-conditioned or gives a non-finite or clearly negative variance.
pub(super) fn solve(
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
