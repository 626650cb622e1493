//! The fallback chain's building blocks: drift terms the neighbourhood cannot identify,
//! merged coincident neighbours and inverse-variance weights.

use super::neighbours::dist;
use super::system::{mean_sd, Obs};
use super::{DriftDefect, DroppedDriftTerm};

/// Splits the drift terms into those the neighbourhood identifies and those it cannot.
pub(super) fn usable_drift_terms(
    obs: &[Obs],
    n_drift: usize,
) -> (Vec<usize>, Vec<DroppedDriftTerm>) {
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

/// Groups observations closer than `tol_km` (transitively) and merges each group; `None` if
/// no two observations coincide.
pub(super) fn merge_coincident(obs: &[Obs], tol_km: f64) -> Option<Vec<Obs>> {
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
pub(super) fn inverse_variance_weights(obs: &[Obs]) -> Vec<f64> {
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
