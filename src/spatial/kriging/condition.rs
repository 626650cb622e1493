//! The 1-norm condition number of a solved system, estimated from its LU factors
//! (Hager–Higham).

use nalgebra::{DMatrix, DVector, Dyn, LU};

/// Largest absolute column sum.
pub(super) fn one_norm(a: &DMatrix<f64>) -> f64 {
    a.column_iter()
        .map(|c| c.iter().map(|v| v.abs()).sum::<f64>())
        .fold(0.0, f64::max)
}

/// Estimate of `‖A⁻¹‖₁` for a symmetric `A` from its LU factors, by Hager's (1984) method as
/// refined by Higham (1988) and used in LAPACK's `xGECON`: a few solves instead of an
/// inverse. The estimate is a lower bound, in practice within a small factor of the truth.
/// `None` if a solve fails (a zero pivot: singular).
pub(super) fn inverse_one_norm_estimate(lu: &LU<f64, Dyn, Dyn>, n: usize) -> Option<f64> {
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
