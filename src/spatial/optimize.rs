//! A compact Nelder–Mead simplex minimiser (Nelder & Mead 1965) for the three-parameter
//! variogram fit. The crate has no optimisation dependency and the problem is tiny and smooth,
//! so a derivative-free simplex on unconstrained transformed parameters is enough; bounds are
//! imposed by the caller's parameter transform.
//!
//! Coefficients are the standard ones: reflection 1, expansion 2, contraction 1/2, shrink 1/2
//! (Lagarias et al. 1998, "Convergence properties of the Nelder–Mead simplex method in low
//! dimensions", SIAM J. Optim. 9(1), eq. 2.1).

/// How a minimisation ended.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum SimplexEnd {
    /// The spread of function values over the simplex fell below the tolerance.
    Converged,
    /// The iteration limit was reached first.
    MaxIterations,
}

/// Result of a minimisation.
#[derive(Debug, Clone)]
pub(crate) struct SimplexResult {
    pub x: Vec<f64>,
    pub f: f64,
    pub iterations: usize,
    pub end: SimplexEnd,
}

/// Minimise `f` from `start`, with an initial simplex of `start` plus `step` along each axis.
/// Stops when `max f − min f ≤ f_tol · (|min f| + f_tol)` and the simplex diameter is below
/// `x_tol`, or after `max_iter` iterations. Non-finite function values are treated as +∞ so the
/// simplex walks away from them.
pub(crate) fn nelder_mead<F: Fn(&[f64]) -> f64>(
    f: F,
    start: &[f64],
    step: f64,
    f_tol: f64,
    x_tol: f64,
    max_iter: usize,
) -> SimplexResult {
    let n = start.len();
    let eval = |x: &[f64]| {
        let v = f(x);
        if v.is_finite() {
            v
        } else {
            f64::INFINITY
        }
    };
    let mut simplex: Vec<Vec<f64>> = Vec::with_capacity(n + 1);
    simplex.push(start.to_vec());
    for i in 0..n {
        let mut p = start.to_vec();
        p[i] += step;
        simplex.push(p);
    }
    let mut values: Vec<f64> = simplex.iter().map(|p| eval(p)).collect();
    let mut iterations = 0;
    let mut end = SimplexEnd::MaxIterations;
    while iterations < max_iter {
        // Order the vertices best to worst; ties broken by index so runs are reproducible.
        let mut order: Vec<usize> = (0..=n).collect();
        order.sort_by(|&a, &b| values[a].total_cmp(&values[b]).then(a.cmp(&b)));
        simplex = order.iter().map(|&i| simplex[i].clone()).collect();
        values = order.iter().map(|&i| values[i]).collect();

        let spread = values[n] - values[0];
        let diameter = simplex[1..]
            .iter()
            .map(|p| {
                p.iter()
                    .zip(&simplex[0])
                    .map(|(a, b)| (a - b).abs())
                    .fold(0.0, f64::max)
            })
            .fold(0.0, f64::max);
        if spread <= f_tol * (values[0].abs() + f_tol) && diameter <= x_tol {
            end = SimplexEnd::Converged;
            break;
        }
        iterations += 1;

        let centroid: Vec<f64> = (0..n)
            .map(|j| simplex[..n].iter().map(|p| p[j]).sum::<f64>() / n as f64)
            .collect();
        let along = |t: f64| -> Vec<f64> {
            centroid
                .iter()
                .zip(&simplex[n])
                .map(|(c, w)| c + t * (c - w))
                .collect()
        };
        let reflected = along(1.0);
        let f_r = eval(&reflected);
        if f_r < values[0] {
            let expanded = along(2.0);
            let f_e = eval(&expanded);
            if f_e < f_r {
                simplex[n] = expanded;
                values[n] = f_e;
            } else {
                simplex[n] = reflected;
                values[n] = f_r;
            }
            continue;
        }
        if f_r < values[n - 1] {
            simplex[n] = reflected;
            values[n] = f_r;
            continue;
        }
        // Contraction: outside if the reflected point beats the worst, inside otherwise.
        let (contracted, f_c) = if f_r < values[n] {
            let c = along(0.5);
            let fc = eval(&c);
            (c, fc)
        } else {
            let c = along(-0.5);
            let fc = eval(&c);
            (c, fc)
        };
        if f_c < values[n].min(f_r) {
            simplex[n] = contracted;
            values[n] = f_c;
            continue;
        }
        // Shrink towards the best vertex.
        for i in 1..=n {
            let shrunk: Vec<f64> = simplex[i]
                .iter()
                .zip(&simplex[0])
                .map(|(p, b)| b + 0.5 * (p - b))
                .collect();
            values[i] = eval(&shrunk);
            simplex[i] = shrunk;
        }
    }
    let best = (0..=n)
        .min_by(|&a, &b| values[a].total_cmp(&values[b]).then(a.cmp(&b)))
        .unwrap_or(0);
    SimplexResult {
        x: simplex[best].clone(),
        f: values[best],
        iterations,
        end,
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_abs_diff_eq;

    /// Rosenbrock's function, minimum 0 at (1, 1): the classic Nelder–Mead test problem
    /// (Nelder & Mead 1965 §4 start from (−1.2, 1)).
    #[test]
    fn finds_rosenbrock_minimum() {
        let rosen = |x: &[f64]| 100.0 * (x[1] - x[0] * x[0]).powi(2) + (1.0 - x[0]).powi(2);
        let r = nelder_mead(rosen, &[-1.2, 1.0], 0.5, 1e-14, 1e-8, 5000);
        assert_eq!(r.end, SimplexEnd::Converged);
        assert_abs_diff_eq!(r.x[0], 1.0, epsilon = 1e-5);
        assert_abs_diff_eq!(r.x[1], 1.0, epsilon = 1e-5);
    }

    #[test]
    fn reports_iteration_limit() {
        let rosen = |x: &[f64]| 100.0 * (x[1] - x[0] * x[0]).powi(2) + (1.0 - x[0]).powi(2);
        let r = nelder_mead(rosen, &[-1.2, 1.0], 0.5, 1e-14, 1e-8, 5);
        assert_eq!(r.end, SimplexEnd::MaxIterations);
        assert_eq!(r.iterations, 5);
    }

    #[test]
    fn walks_away_from_non_finite_values() {
        let f = |x: &[f64]| {
            if x[0] < 0.0 {
                f64::NAN
            } else {
                (x[0] - 2.0).powi(2)
            }
        };
        let r = nelder_mead(f, &[0.1], 0.5, 1e-14, 1e-9, 1000);
        assert_abs_diff_eq!(r.x[0], 2.0, epsilon = 1e-5);
    }
}
