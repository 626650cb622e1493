//! The spatial tables: leave-one-out cross-validation and the fitted spatial model.

use super::col;
use crate::model::StudyData;
use crate::output::table::{Cell, Format, Table};
use crate::spatial::stage::{Interval, SpatialOutput};

fn ape(est: f64, obs: f64) -> f64 {
    100.0 * (est - obs).abs() / obs
}

/// `cross_validation.csv`: leave-one-out errors and coverage per estimator and class group.
pub fn cross_validation(data: &StudyData, sp: &SpatialOutput) -> Table {
    let mut t = Table::new(
        "cross_validation",
        "Leave-one-out validation over counted segments",
        vec![
            col("estimator", "", Format::Text),
            col("class_group", "", Format::Text),
            col("segments", "", Format::Integer),
            col("median_ape_pct", "%", Format::Decimal(2)),
            col("p90_ape_pct", "%", Format::Decimal(2)),
            col("coverage95", "share", Format::Share),
        ],
    );
    type Pick = fn(&crate::spatial::stage::CvPoint) -> Interval;
    let estimators: [(&str, Pick); 3] = [
        ("kriging_external_drift", |p| p.kriged),
        ("drift_regression", |p| p.regression),
        ("class_area_mean", |p| p.class_mean),
    ];
    let mut groups: Vec<&str> = sp
        .cv
        .iter()
        .map(|p| {
            data.network.segments[p.segment]
                .functional_class
                .broad_group()
        })
        .collect();
    groups.sort();
    groups.dedup();
    groups.push("all");
    for (name, f) in estimators {
        for g in &groups {
            let pts: Vec<_> = sp
                .cv
                .iter()
                .filter(|p| {
                    *g == "all"
                        || data.network.segments[p.segment]
                            .functional_class
                            .broad_group()
                            == *g
                })
                .collect();
            if pts.is_empty() {
                continue;
            }
            let mut apes: Vec<f64> = pts.iter().map(|p| ape(f(p).value, p.observed)).collect();
            let cov =
                pts.iter().filter(|p| f(p).covers(p.observed)).count() as f64 / pts.len() as f64;
            t.push(vec![
                Cell::from(name),
                Cell::from(*g),
                Cell::from(pts.len()),
                Cell::from(crate::expansion::calibration::quantile(&mut apes, 0.5)),
                Cell::from(crate::expansion::calibration::quantile(&mut apes, 0.9)),
                Cell::from(cov),
            ]);
        }
    }
    // The same folds weighted to the uncounted segments' mix of class group x history: the
    // figure that predicts the accuracy of what is published for them.
    for (name, f) in estimators {
        let mut pts: Vec<(f64, f64, bool)> = Vec::new();
        for p in &sp.cv {
            let Some(cell) = p.cell(&data.network) else {
                continue;
            };
            let Some(c) = sp.interval_scales.iter().find(|c| c.cell == cell) else {
                continue;
            };
            if c.folds > 0 {
                let w = c.uncounted as f64 / c.folds as f64;
                pts.push((ape(f(p).value, p.observed), w, f(p).covers(p.observed)));
            }
        }
        let total: f64 = pts.iter().map(|p| p.1).sum();
        if total <= 0.0 {
            continue;
        }
        let cov = pts.iter().filter(|p| p.2).map(|p| p.1).sum::<f64>() / total;
        t.push(vec![
            Cell::from(name),
            Cell::from("reweighted_to_uncounted"),
            Cell::from(pts.len()),
            Cell::from(weighted_quantile(&mut pts, 0.5)),
            Cell::from(weighted_quantile(&mut pts, 0.9)),
            Cell::from(cov),
        ]);
    }
    t
}

/// Quantile `q` of `(value, weight, _)` by cumulative weight.
fn weighted_quantile(pts: &mut [(f64, f64, bool)], q: f64) -> f64 {
    pts.sort_by(|a, b| a.0.total_cmp(&b.0));
    let total: f64 = pts.iter().map(|p| p.1).sum();
    let mut acc = 0.0;
    for p in pts.iter() {
        acc += p.1;
        if acc >= q * total {
            return p.0;
        }
    }
    pts.last().map_or(f64::NAN, |p| p.0)
}

/// The spatial model: regression coefficients and covariance parameters.
pub fn spatial_model(sp: &SpatialOutput) -> Table {
    let mut t = Table::new(
        "spatial_model",
        "Drift regression on ln AADT and the fitted covariance model",
        vec![
            col("term", "", Format::Text),
            col("value", "", Format::Decimal(6)),
            col("note", "", Format::Text),
        ],
    );
    for (n, v) in &sp.coefficients {
        t.push(vec![
            Cell::from(format!("beta_{n}")),
            Cell::from(*v),
            Cell::Empty,
        ]);
    }
    t.push(vec![
        Cell::from("residual_variance"),
        Cell::from(sp.residual_var),
        Cell::from("ln AADT squared"),
    ]);
    if let Some(m) = &sp.model {
        t.push(vec![
            Cell::from("partial_sill"),
            Cell::from(m.partial_sill),
            Cell::from("ln AADT squared"),
        ]);
        t.push(vec![
            Cell::from("practical_range_km"),
            Cell::from(m.range_km),
            Cell::from("km"),
        ]);
        t.push(vec![
            Cell::from("nugget"),
            Cell::from(m.nugget),
            Cell::from("micro-scale variance"),
        ]);
    }
    if let Some(h) = &sp.history_variance {
        t.push(vec![
            Cell::from("history_variance_base"),
            Cell::from(h.a),
            Cell::from("ln AADT squared, published figure"),
        ]);
        t.push(vec![
            Cell::from("history_variance_per_year"),
            Cell::from(h.b),
            Cell::from("ln AADT squared per year of age"),
        ]);
    }
    for c in &sp.interval_scales {
        t.push(vec![
            Cell::from(format!(
                "interval_factor_{}_{}",
                c.cell.group,
                if c.cell.history { "history" } else { "no_history" }
            )),
            Cell::from(c.factor),
            Cell::from(format!(
                "factor on the prediction variance from {} leave-one-out folds{}, applied to {} uncounted segments",
                c.folds,
                if c.cell.history { " (factor shared by every history cell)" } else { "" },
                c.uncounted
            )),
        ]);
    }
    t.push(vec![
        Cell::from("model"),
        Cell::Empty,
        Cell::from(sp.model_note.as_str()),
    ]);
    t
}
