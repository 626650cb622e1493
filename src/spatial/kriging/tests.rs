//! Unit and property tests of the kriging.

use super::condition::{inverse_one_norm_estimate, one_norm};
use super::*;
use crate::spatial::variogram::{CovarianceModel, ModelKind};
use approx::{assert_abs_diff_eq, assert_relative_eq};
use nalgebra::DMatrix;
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
