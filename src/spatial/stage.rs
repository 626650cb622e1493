//! The spatial stage: AADT for every segment without a count.
//!
//! # Method
//! Kriging with external drift on ln AADT (Wackernagel 2003, ch. 38; Hengl et al. 2007 show
//! it equals regression-kriging). The drift is a single composite term, the prediction of a
//! linear regression of ln AADT on segment attributes (functional class, area, ln lanes,
//! speed limit where given) and the network route level ([`super::network_drift`]). One
//! composite term, rather than every attribute as its own drift column, keeps local systems of
//! 16 neighbours well conditioned while the regression uses every count; the kriging then
//! re-scales the drift locally and interpolates what it misses.
//!
//! Each counted segment enters with its own measurement variance (the squared log sd of its
//! AADT) as an observation-specific nugget, so a permanent counter weighs more than a short
//! count. The covariance is an exponential model fitted by Cressie's weighted least squares to
//! the empirical variogram of the regression residuals; the fitted nugget less the mean
//! measurement variance is kept as micro-scale variation (segment-to-segment differences that
//! are real), and an uncounted segment's variance includes it.
//!
//! Back-transform: mean `exp(m + v/2)` (lognormal bias correction, Cressie 1993 §3.2.2);
//! interval `exp(m ± 1.96 √v)`, asymmetric and positive.
//!
//! # Validation
//! Leave-one-out over every counted segment: the left-out segment leaves the regression, the
//! kriging data and every route drift term. The variogram is kept from the full fit (its
//! influence is small and refitting per fold would cost O(n³)); this is stated in the table.
//! The same folds give two simpler estimators: the mean by functional class and area, and the
//! regression alone.
//!
//! # Units
//! AADT in vehicles/day; distances in km between segment midpoints (straight line).

use rayon::prelude::*;
use serde::{Deserialize, Serialize};

use super::betweenness::{betweenness, Betweenness};
use super::history::{HistoryPoint, HistoryVariance};
use super::network_drift::RouteNeighbours;
use super::{
    empirical_variogram, fit_variogram, CovarianceModel, Kriger, KrigingData, KrigingParams,
    LogNormalEstimate, ModelKind, SpatialError, Target, VariogramFit, Z_95,
};
use crate::model::{Area, Network, StageDiagnostics};

/// Settings of the spatial stage (`[spatial]` in study.toml).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(default, deny_unknown_fields)]
pub struct SpatialParams {
    /// Counted segments in each local kriging system. Default 16.
    pub neighbours: usize,
    /// Reach of the route drift term along a route, km. Default 30.
    pub route_reach_km: f64,
    /// Lags of the empirical variogram. Default 12.
    pub variogram_lags: usize,
    /// Ridge penalty on the regression coefficients (guards against classes absent from the
    /// counts). Default 1e-3.
    pub ridge: f64,
    /// Observations (counted segments and segments with history) from which the drift
    /// regression uses the full model (one term per functional class 2-7, urban by class
    /// group, the speed limit: [`FULL_MODEL_TERMS`] coefficients) instead of the reduced one
    /// (arterial / collector-local). Default 60: more than three observations per coefficient,
    /// so a class dummy rarely rests on one or two counts (a rule of thumb, common practice in
    /// regression; not a published threshold). The leave-one-out folds apply the same rule to
    /// their own count.
    pub full_model_min_counts: usize,
    /// Origins sampled for the betweenness terms ([`super::betweenness`]). Default 256.
    pub betweenness_origins: usize,
    /// Use published AADT of earlier years (`history.csv`) as observations of segments
    /// without a count ([`super::history`]). Default true.
    pub use_history: bool,
    /// Krige each class group's residuals from its own group only (freeways, arterials,
    /// collectors and locals). Default true.
    pub within_class_group: bool,
}

/// Coefficients of the full drift model (see [`SpatialParams::full_model_min_counts`]).
pub const FULL_MODEL_TERMS: usize = 17;

impl Default for SpatialParams {
    fn default() -> Self {
        SpatialParams {
            neighbours: 16,
            route_reach_km: 30.0,
            variogram_lags: 12,
            ridge: 1e-3,
            full_model_min_counts: 60,
            betweenness_origins: 256,
            within_class_group: true,
            use_history: true,
        }
    }
}

/// A counted segment as the spatial stage sees it.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Observation {
    /// Segment index.
    pub segment: usize,
    /// ln AADT.
    pub log_aadt: f64,
    /// Variance of ln AADT from its measurement.
    pub meas_var: f64,
    /// What measured it.
    pub kind: ObservationKind,
}

/// What an observation comes from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum ObservationKind {
    /// A permanent counter of the study year.
    Counter,
    /// Short counts expanded to the study year.
    ShortCount,
    /// A published AADT of this earlier year, brought forward ([`super::history`]).
    History(i32),
}

/// An estimate with a 95 % interval, vehicles/day.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Interval {
    /// Bias-corrected mean.
    pub value: f64,
    /// Lower 95 % bound.
    pub lo95: f64,
    /// Upper 95 % bound.
    pub hi95: f64,
}

impl Interval {
    /// From a log-space mean and variance.
    pub fn from_log(m: f64, v: f64) -> Interval {
        match LogNormalEstimate::from_log(m, v.max(0.0), Z_95) {
            Ok(e) => Interval {
                value: e.mean,
                lo95: e.lower,
                hi95: e.upper,
            },
            Err(_) => Interval {
                value: m.exp(),
                lo95: m.exp(),
                hi95: m.exp(),
            },
        }
    }

    /// Whether `x` lies inside.
    pub fn covers(&self, x: f64) -> bool {
        x >= self.lo95 && x <= self.hi95
    }
}

/// The estimate for one uncounted segment.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentEstimate {
    /// AADT and interval.
    pub aadt: Interval,
    /// Log-space mean and variance.
    pub log_mean: f64,
    /// Log-space variance.
    pub log_var: f64,
    /// Neighbours used.
    pub neighbours: usize,
    /// Fallbacks the kriging system needed, as text (empty when none).
    pub fallback: String,
    /// Year of the segment's own published AADT used as an observation, if any.
    pub history_year: Option<i32>,
}

/// One leave-one-out fold.
#[derive(Debug, Clone, PartialEq)]
pub struct CvPoint {
    /// Segment index.
    pub segment: usize,
    /// Observed AADT.
    pub observed: f64,
    /// Kriging with external drift.
    pub kriged: Interval,
    /// Regression alone.
    pub regression: Interval,
    /// Mean by functional class and area.
    pub class_mean: Interval,
    /// Whether the fold used the segment's own history in place of its count (as an
    /// uncounted segment with history would).
    pub with_history: bool,
    /// What measured the left-out segment.
    pub kind: ObservationKind,
    /// Log-space prediction of the kriged estimate, before interval calibration.
    pub log_mean: f64,
    /// Its variance (the left-out count's own error not included).
    pub pred_var: f64,
    /// The left-out count's measurement variance.
    pub meas_var: f64,
}

impl CvPoint {
    /// The uncounted segments this fold stands for: class group and whether they have
    /// history. A permanent counter's fold with history stands for none (its history is a
    /// counter's, far more precise than a coverage count's).
    pub fn cell(&self, net: &Network) -> Option<Cell> {
        if self.with_history && self.kind == ObservationKind::Counter {
            return None;
        }
        Some(Cell {
            group: net.segments[self.segment].functional_class.broad_group(),
            history: self.with_history,
        })
    }
}

/// A kind of uncounted segment: functional-class group x whether it has history.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash)]
pub struct Cell {
    /// `freeway`, `arterial` or `collector_local`.
    pub group: &'static str,
    /// Whether the segment has a published AADT of an earlier year.
    pub history: bool,
}

/// The factor on the prediction variance of one cell that makes 95 % of its folds covered.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct IntervalScale {
    /// The cell.
    pub cell: Cell,
    /// Folds of the cell.
    pub folds: usize,
    /// Uncounted segments of the cell.
    pub uncounted: usize,
    /// Factor on the log-space prediction variance (1 when too few folds).
    pub factor: f64,
}

/// Folds a cell needs for its own factor; below it the class group's, else the study's.
pub const MIN_CALIBRATION_FOLDS: usize = 30;

/// The factor `f` with `|y − m| ≤ 1.96 √(f·v + v_meas)` on 95 % of `folds` (bisection on
/// `ln f` in [1/4, 16]).
fn coverage_factor(folds: &[&CvPoint]) -> f64 {
    let share = |f: f64| {
        folds
            .iter()
            .filter(|p| {
                (p.observed.ln() - p.log_mean).abs() <= Z_95 * (f * p.pred_var + p.meas_var).sqrt()
            })
            .count() as f64
            / folds.len() as f64
    };
    let (mut lo, mut hi) = (0.25f64.ln(), 16f64.ln());
    if share(lo.exp()) >= 0.95 {
        return lo.exp();
    }
    if share(hi.exp()) < 0.95 {
        return hi.exp();
    }
    for _ in 0..40 {
        let mid = 0.5 * (lo + hi);
        if share(mid.exp()) >= 0.95 {
            hi = mid;
        } else {
            lo = mid;
        }
    }
    hi.exp()
}

/// Interval factors per cell from the folds, and how many uncounted segments each has.
fn interval_scales(
    net: &Network,
    cv: &[CvPoint],
    uncounted: &[(usize, bool)],
) -> Vec<IntervalScale> {
    let cells_of = |p: &CvPoint| p.cell(net);
    let all: Vec<&CvPoint> = cv.iter().filter(|p| cells_of(p).is_some()).collect();
    let study = if all.len() >= MIN_CALIBRATION_FOLDS {
        coverage_factor(&all)
    } else {
        1.0
    };
    let history: Vec<&CvPoint> = all
        .iter()
        .copied()
        .filter(|p| cells_of(p).is_some_and(|c| c.history))
        .collect();
    let mut cells: Vec<Cell> = uncounted
        .iter()
        .map(|&(s, h)| Cell {
            group: net.segments[s].functional_class.broad_group(),
            history: h,
        })
        .collect();
    cells.sort();
    cells.dedup();
    cells
        .into_iter()
        .map(|cell| {
            let own: Vec<&CvPoint> = all
                .iter()
                .copied()
                .filter(|p| cells_of(p) == Some(cell))
                .collect();
            let group: Vec<&CvPoint> = all
                .iter()
                .copied()
                .filter(|p| cells_of(p).is_some_and(|c| c.group == cell.group))
                .collect();
            let factor = if cell.history {
                // The history variance is a property of the history, not of the class group:
                // one factor from every history fold (a group's own few hundred folds gave
                // factors of 0.5-1.8 from seed to seed, and over-covered).
                if history.len() >= MIN_CALIBRATION_FOLDS {
                    coverage_factor(&history)
                } else {
                    1.0
                }
            } else if own.len() >= MIN_CALIBRATION_FOLDS {
                coverage_factor(&own)
            } else if group.len() >= MIN_CALIBRATION_FOLDS {
                coverage_factor(&group)
            } else {
                study
            };
            IntervalScale {
                cell,
                folds: own.len(),
                uncounted: uncounted
                    .iter()
                    .filter(|&&(s, h)| {
                        h == cell.history
                            && net.segments[s].functional_class.broad_group() == cell.group
                    })
                    .count(),
                factor,
            }
        })
        .collect()
}

/// What the stage produced.
#[derive(Debug, Clone, Default)]
pub struct SpatialOutput {
    /// Per segment: the estimate, for segments without a count.
    pub estimates: Vec<Option<SegmentEstimate>>,
    /// The variogram fit, when it succeeded.
    pub variogram: Option<VariogramFit>,
    /// The covariance model used.
    pub model: Option<CovarianceModel>,
    /// How the model was chosen.
    pub model_note: String,
    /// Regression coefficients, by term name.
    pub coefficients: Vec<(String, f64)>,
    /// Residual variance of the regression.
    pub residual_var: f64,
    /// Leave-one-out folds.
    pub cv: Vec<CvPoint>,
    /// Uncounted segments estimated, and those whose estimate fell back from kriging with
    /// external drift (by fallback step).
    pub diagnostics: StageDiagnostics,
    /// Variance model of history brought forward.
    pub history_variance: Option<HistoryVariance>,
    /// Uncounted segments that have history.
    pub history_used: usize,
    /// Interval calibration by cell (class group x history), from the folds.
    pub interval_scales: Vec<IntervalScale>,
}

/// Regression terms of a segment.
fn covariates(net: &Network, seg: usize, level: Option<f64>, aux: &Aux, full: bool) -> Vec<f64> {
    let speed_fill = &aux.speed_fill;
    let s = &net.segments[seg];
    let fc = s.functional_class.code() as usize;
    let mut x = vec![1.0];
    if full {
        for c in 2..=7 {
            x.push(f64::from(fc == c));
        }
    } else {
        x.push(f64::from(matches!(fc, 3 | 4)));
        x.push(f64::from(fc >= 5));
    }
    let urban = f64::from(s.area == Area::Urban);
    x.push(urban);
    if full {
        // Towns lift a collector far more than a freeway: the urban effect by class group.
        x.push(urban * f64::from(matches!(fc, 3 | 4)));
        x.push(urban * f64::from(fc >= 5));
    }
    x.push((s.lanes as f64).ln());
    if full {
        x.push(s.speed_limit_kph.unwrap_or(speed_fill[fc]) / 100.0);
    }
    let local = aux.betweenness.local.get(seg).map_or(0.0, |b| b.ln_1p());
    let regional = aux.betweenness.regional.get(seg).map_or(0.0, |b| b.ln_1p());
    x.push(local);
    x.push(regional);
    x.push(if fc >= 5 { local } else { 0.0 });
    x.push(level.unwrap_or(0.0));
    x.push(f64::from(level.is_some()));
    x
}

/// Names of the regression terms, in [`covariates`] order.
fn term_names(full: bool) -> Vec<String> {
    let mut n = vec!["intercept".to_string()];
    if full {
        for c in 2..=7 {
            n.push(format!("class_{c}"));
        }
    } else {
        n.push("arterial".into());
        n.push("collector_local".into());
    }
    n.push("urban".into());
    if full {
        n.push("urban_arterial".into());
        n.push("urban_collector_local".into());
    }
    n.push("ln_lanes".into());
    if full {
        n.push("speed_limit_per_100kph".into());
    }
    n.push("ln_betweenness_local".into());
    n.push("ln_betweenness_regional".into());
    n.push("ln_betweenness_local_collector_local".into());
    n.push("route_level".into());
    n.push("has_route_level".into());
    n
}

/// Ridge least squares `(XᵀX + λ diag(0,1,..,1)) β = Xᵀy`; the intercept is not penalised.
fn fit_ols(x: &[Vec<f64>], y: &[f64], ridge: f64) -> Option<Vec<f64>> {
    let p = x.first()?.len();
    let n = x.len();
    let xm = nalgebra::DMatrix::from_fn(n, p, |i, j| x[i][j]);
    let yv = nalgebra::DVector::from_column_slice(y);
    let mut a = xm.transpose() * &xm;
    for j in 1..p {
        a[(j, j)] += ridge * n as f64;
    }
    let b = xm.transpose() * yv;
    a.clone()
        .cholesky()
        .map(|c| c.solve(&b))
        .or_else(|| a.svd(true, true).solve(&b, 1e-12).ok())
        .map(|v| v.iter().copied().collect())
}

fn dot(a: &[f64], b: &[f64]) -> f64 {
    a.iter().zip(b).map(|(x, y)| x * y).sum()
}

/// Mean speed limit per functional class, for segments that give none.
fn speed_fill(net: &Network) -> [f64; 8] {
    let mut sum = [0.0; 8];
    let mut n = [0usize; 8];
    for s in &net.segments {
        if let Some(v) = s.speed_limit_kph {
            let c = s.functional_class.code() as usize;
            sum[c] += v;
            n[c] += 1;
        }
    }
    let all = sum.iter().sum::<f64>() / n.iter().sum::<usize>().max(1) as f64;
    let mut out = [all; 8];
    for c in 1..8 {
        if n[c] > 0 {
            out[c] = sum[c] / n[c] as f64;
        }
    }
    out
}

/// Network facts the regression terms use, computed once per run.
struct Aux {
    speed_fill: [f64; 8],
    betweenness: Betweenness,
}

/// Everything the regression and kriging need, for one set of observations.
struct Fit {
    beta: Vec<f64>,
    full: bool,
    residual_var: f64,
}

fn regression(
    net: &Network,
    obs: &[Observation],
    y_by_seg: &[f64],
    routes: &RouteNeighbours,
    aux: &Aux,
    exclude: Option<usize>,
    params: &SpatialParams,
) -> Option<Fit> {
    let kept: Vec<&Observation> = obs.iter().collect();
    let full = kept.len() >= params.full_model_min_counts;
    let x: Vec<Vec<f64>> = kept
        .iter()
        .map(|o| {
            covariates(
                net,
                o.segment,
                routes.level(o.segment, y_by_seg, exclude),
                aux,
                full,
            )
        })
        .collect();
    let y: Vec<f64> = kept.iter().map(|o| o.log_aadt).collect();
    let beta = fit_ols(&x, &y, params.ridge)?;
    let p = beta.len();
    let rss: f64 = x
        .iter()
        .zip(&y)
        .map(|(xi, yi)| (yi - dot(xi, &beta)).powi(2))
        .sum();
    let residual_var = rss / (kept.len().saturating_sub(p)).max(1) as f64;
    Some(Fit {
        beta,
        full,
        residual_var,
    })
}

fn drift_of(
    net: &Network,
    fit: &Fit,
    seg: usize,
    y_by_seg: &[f64],
    routes: &RouteNeighbours,
    aux: &Aux,
    exclude: Option<usize>,
) -> f64 {
    dot(
        &covariates(
            net,
            seg,
            routes.level(seg, y_by_seg, exclude),
            aux,
            fit.full,
        ),
        &fit.beta,
    )
}

/// Fits the covariance model to the regression residuals.
fn fit_model(
    xy: &[[f64; 2]],
    resid: &[f64],
    meas_var: &[f64],
    lags: usize,
) -> (Option<VariogramFit>, CovarianceModel, String) {
    let var = resid.iter().map(|r| r * r).sum::<f64>() / resid.len().max(1) as f64;
    let (mut xmin, mut xmax, mut ymin, mut ymax) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
    for p in xy {
        xmin = xmin.min(p[0]);
        xmax = xmax.max(p[0]);
        ymin = ymin.min(p[1]);
        ymax = ymax.max(p[1]);
    }
    let diag = ((xmax - xmin).powi(2) + (ymax - ymin).powi(2))
        .sqrt()
        .max(1e-3);
    let lag_km = diag / 2.0 / lags as f64;
    let mean_meas = meas_var.iter().sum::<f64>() / meas_var.len().max(1) as f64;
    let fallback = CovarianceModel::new(ModelKind::Exponential, var.max(1e-6), diag / 3.0, 0.0)
        .expect("positive parameters");
    let fit = empirical_variogram(xy, resid, lag_km, lags)
        .and_then(|ev| fit_variogram(&ev.lags, ModelKind::Exponential));
    match fit {
        Ok(f) => {
            let mut m = f.model;
            m.nugget = (m.nugget - mean_meas).max(0.0);
            let note = format!(
                "exponential model fitted by Cressie WLS to {} lags of {:.2} km; nugget less mean measurement variance {:.4}",
                f.lags_used, lag_km, mean_meas
            );
            (Some(f), m, note)
        }
        Err(e) => (
            None,
            fallback,
            format!("variogram fit failed ({e}); exponential model with sill = residual variance and range = diagonal/3"),
        ),
    }
}

/// Short name of a kriging fallback step, for the diagnostics.
fn fallback_kind(f: &super::Fallback) -> &'static str {
    match f {
        super::Fallback::DroppedDriftTerms(_) => {
            "kriging: drift term dropped from the local system"
        }
        super::Fallback::MergedCoincident { .. } => "kriging: coincident neighbours merged",
        super::Fallback::OrdinaryKriging { .. } => {
            "kriging: ordinary kriging (drift system failed)"
        }
        super::Fallback::InverseVarianceMean { .. } => {
            "kriging: inverse-variance mean (kriging systems failed)"
        }
    }
}

fn fallback_text(p: &super::Prediction) -> String {
    p.fallbacks
        .iter()
        .map(|f| format!("{f:?}"))
        .collect::<Vec<_>>()
        .join("; ")
}

/// What the stage reads.
#[derive(Debug, Clone, Copy)]
pub struct SpatialInput<'a> {
    /// The network: geometry, attributes of the drift, routes.
    pub network: &'a Network,
    /// The counted segments' ln AADT with their measurement variance.
    pub observations: &'a [Observation],
    /// Latest published AADT of earlier years, brought forward, one per segment at most.
    pub history: &'a [HistoryPoint],
}

/// Runs the stage: estimates for every segment that is not observed, and the validation.
/// Fails when the drift regression or the kriging system cannot be set up, so that no
/// segment is ever published without an estimate.
pub fn run(input: &SpatialInput, params: &SpatialParams) -> Result<SpatialOutput, SpatialError> {
    let (net, obs) = (input.network, input.observations);
    let n_seg = net.segments.len();
    let mut out = SpatialOutput {
        estimates: vec![None; n_seg],
        diagnostics: StageDiagnostics::new("spatial", "uncounted segments"),
        ..SpatialOutput::default()
    };
    if obs.len() < 3 {
        // Too few counts for a regression or a variogram: every uncounted segment gets the
        // mean ln AADT of the counts with a wide variance (0.5², a factor of about 2.7 either
        // way at 95 %), stated in the model note.
        if !obs.is_empty() {
            let m = obs.iter().map(|o| o.log_aadt).sum::<f64>() / obs.len() as f64;
            let v = 0.25;
            let counted: Vec<usize> = obs.iter().map(|o| o.segment).collect();
            for (s, e) in out.estimates.iter_mut().enumerate() {
                if !counted.contains(&s) {
                    out.diagnostics
                        .record([("mean of fewer than three counts", true)]);
                    *e = Some(SegmentEstimate {
                        aadt: Interval::from_log(m, v),
                        log_mean: m,
                        log_var: v,
                        neighbours: obs.len(),
                        fallback: "mean of fewer than three counts".into(),
                        history_year: None,
                    });
                }
            }
        }
        out.model_note = format!(
            "only {} counted segments: uncounted segments take their mean with a wide interval",
            obs.len()
        );
        return Ok(out);
    }
    let mids = net.midpoints_km();
    let mut counted = vec![false; n_seg];
    for o in obs {
        counted[o.segment] = true;
    }
    let history = if params.use_history {
        input.history
    } else {
        &[]
    };
    let (hist_var, hist_obs) = history_observations(obs, history, &counted);
    out.history_variance = Some(hist_var);
    out.history_used = hist_obs.iter().filter(|h| !counted[h.segment]).count();
    // Every observation: this year's counts, then the history of segments without one.
    let all: Vec<Observation> = obs
        .iter()
        .copied()
        .chain(hist_obs.iter().copied().filter(|h| !counted[h.segment]))
        .collect();
    let mut observed = vec![false; n_seg];
    let mut y_by_seg = vec![f64::NAN; n_seg];
    for o in &all {
        observed[o.segment] = true;
        y_by_seg[o.segment] = o.log_aadt;
    }
    let routes = RouteNeighbours::build(net, &observed, params.route_reach_km);
    let speed_fill = speed_fill(net);
    let aux = Aux {
        betweenness: betweenness(net, params.betweenness_origins, &speed_fill),
        speed_fill,
    };
    let fit = regression(net, &all, &y_by_seg, &routes, &aux, None, params)
        .ok_or(SpatialError::DriftUnsolvable { counted: all.len() })?;
    out.coefficients = term_names(fit.full)
        .into_iter()
        .zip(fit.beta.iter().copied())
        .collect();
    out.residual_var = fit.residual_var;
    let f_obs: Vec<f64> = all
        .iter()
        .map(|o| drift_of(net, &fit, o.segment, &y_by_seg, &routes, &aux, None))
        .collect();
    let xy: Vec<[f64; 2]> = all.iter().map(|o| mids[o.segment]).collect();
    let resid: Vec<f64> = all
        .iter()
        .zip(&f_obs)
        .map(|(o, f)| o.log_aadt - f)
        .collect();
    let meas: Vec<f64> = all.iter().map(|o| o.meas_var).collect();
    let (vfit, model, note) = fit_model(&xy, &resid, &meas, params.variogram_lags);
    out.variogram = vfit;
    out.model = Some(model);
    out.model_note = format!(
        "{note}; {} uncounted segments observed through history ({})",
        out.history_used,
        history_note(&hist_var)
    );
    let kparams = KrigingParams {
        neighbours: params.neighbours,
        ..KrigingParams::new(model)
    };
    let data = KrigingData {
        xy,
        value: all.iter().map(|o| o.log_aadt).collect(),
        drift: f_obs.iter().map(|f| vec![*f]).collect(),
        meas_var: meas,
    };
    let kriger = Kriger::new(data.clone(), kparams)?;
    // One kriging system per class group: a local street's residual is read from other
    // collectors and locals, not from the arterial beside it.
    let group_of = |seg: usize| net.segments[seg].functional_class.broad_group();
    let mut by_group: Vec<(&'static str, Kriger, Vec<Option<usize>>)> = Vec::new();
    if params.within_class_group {
        let mut groups: Vec<&'static str> = all.iter().map(|o| group_of(o.segment)).collect();
        groups.sort();
        groups.dedup();
        for g in groups {
            let members: Vec<usize> = (0..all.len())
                .filter(|&i| group_of(all[i].segment) == g)
                .collect();
            if members.len() < params.neighbours.min(8) {
                continue;
            }
            let sub = KrigingData {
                xy: members.iter().map(|&i| data.xy[i]).collect(),
                value: members.iter().map(|&i| data.value[i]).collect(),
                drift: members.iter().map(|&i| data.drift[i].clone()).collect(),
                meas_var: members.iter().map(|&i| data.meas_var[i]).collect(),
            };
            let mut local = vec![None; n_seg];
            for (k, &i) in members.iter().enumerate() {
                local[all[i].segment] = Some(k);
            }
            by_group.push((g, Kriger::new(sub, kparams)?, local));
        }
    }
    let history_year: Vec<Option<i32>> = {
        let mut v = vec![None; n_seg];
        for o in &all {
            if let ObservationKind::History(y) = o.kind {
                v[o.segment] = Some(y);
            }
        }
        v
    };
    let targets: Vec<usize> = (0..n_seg).filter(|&s| !counted[s]).collect();
    let tgt: Vec<Target> = targets
        .iter()
        .map(|&s| Target {
            xy: mids[s],
            drift: vec![drift_of(net, &fit, s, &y_by_seg, &routes, &aux, None)],
        })
        .collect();
    let index_of: Vec<Option<usize>> = {
        let mut v = vec![None; n_seg];
        for (i, o) in all.iter().enumerate() {
            v[o.segment] = Some(i);
        }
        v
    };
    let predictions: Vec<Result<super::Prediction, SpatialError>> = targets
        .par_iter()
        .zip(&tgt)
        .map(
            |(&s, t)| match by_group.iter().find(|b| b.0 == group_of(s)) {
                Some((_, k, local)) => k.predict_without(t.xy, &t.drift, local[s]),
                None => kriger.predict_without(t.xy, &t.drift, index_of[s]),
            },
        )
        .collect();
    for ((&s, t), p) in targets.iter().zip(&tgt).zip(predictions) {
        match &p {
            Ok(p) => out
                .diagnostics
                .record(p.fallbacks.iter().map(|f| (fallback_kind(f), true))),
            Err(_) => out
                .diagnostics
                .record([("regression only: kriging could not solve", true)]),
        }
        let (m, v, neighbours, fallback) = match p {
            Ok(p) => (
                p.value,
                p.variance_with_nugget,
                p.neighbours.len(),
                fallback_text(&p),
            ),
            // Regression alone, with its residual variance, when kriging cannot solve.
            Err(e) => (
                t.drift[0],
                fit.residual_var,
                0,
                format!("regression only: {e}"),
            ),
        };
        let (m, v) = match index_of[s] {
            Some(i) => combine((m, v), (all[i].log_aadt, all[i].meas_var)),
            None => (m, v),
        };
        out.estimates[s] = Some(SegmentEstimate {
            aadt: Interval::from_log(m, v),
            log_mean: m,
            log_var: v,
            neighbours,
            fallback,
            history_year: history_year[s],
        });
    }
    let own_history: Vec<Option<Observation>> = {
        let mut v = vec![None; n_seg];
        for h in &hist_obs {
            v[h.segment] = Some(*h);
        }
        v
    };
    let ctx = Folds {
        net,
        all: &all,
        own_history: &own_history,
        y_by_seg: &y_by_seg,
        routes: &routes,
        aux: &aux,
        mids: &mids,
        kparams: &kparams,
        params,
    };
    out.cv = obs.par_iter().filter_map(|o| ctx.fold(o)).collect();
    // Intervals calibrated by cell on the folds that stand for it.
    let uncounted: Vec<(usize, bool)> = targets
        .iter()
        .map(|&s| (s, history_year[s].is_some()))
        .collect();
    out.interval_scales = interval_scales(net, &out.cv, &uncounted);
    for &(s, h) in &uncounted {
        let group = net.segments[s].functional_class.broad_group();
        let f = out
            .interval_scales
            .iter()
            .find(|c| c.cell.group == group && c.cell.history == h)
            .map_or(1.0, |c| c.factor);
        if let Some(e) = out.estimates[s].as_mut() {
            e.log_var *= f;
            e.aadt = Interval::from_log(e.log_mean, e.log_var);
        }
    }
    Ok(out)
}

/// History of the segments in `history` as observations, with the variance model calibrated
/// on the short-count segments that also have history ([`super::history`]).
fn history_observations(
    obs: &[Observation],
    history: &[HistoryPoint],
    counted: &[bool],
) -> (HistoryVariance, Vec<Observation>) {
    let mut count_of = vec![None; counted.len()];
    for o in obs {
        if o.kind == ObservationKind::ShortCount {
            count_of[o.segment] = Some(*o);
        }
    }
    let pairs: Vec<(f64, f64, f64)> = history
        .iter()
        .filter_map(|h| count_of[h.segment].map(|c| (h.age, c.log_aadt - h.log_now, c.meas_var)))
        .collect();
    // A coverage count's published figure was itself an expanded short count: it is at
    // least as uncertain as this year's (their median measurement variance).
    let mut short: Vec<f64> = count_of.iter().flatten().map(|c| c.meas_var).collect();
    short.sort_by(f64::total_cmp);
    let floor = short.get(short.len() / 2).copied().unwrap_or(0.0);
    let mut var = HistoryVariance::calibrate(&pairs);
    var.a = var.a.max(floor);
    let points = history
        .iter()
        .filter(|h| h.log_now.is_finite())
        .map(|h| Observation {
            segment: h.segment,
            log_aadt: h.log_now,
            meas_var: var.at(h.age),
            kind: ObservationKind::History(h.year),
        })
        .collect();
    (var, points)
}

fn history_note(v: &HistoryVariance) -> String {
    let how = if v.pairs == 0 {
        "assumed: too few short-count segments with history to calibrate".to_string()
    } else {
        format!(
            "calibrated on {} short-count segments with history",
            v.pairs
        )
    };
    format!(
        "history variance {:.4} + {:.4} per year of age, {how}",
        v.a, v.b
    )
}

/// Inverse-variance combination of the spatial prediction of a segment (from its neighbours,
/// its micro-scale variation included) with the segment's own observation: the posterior of a
/// normal prior and a normal measurement.
fn combine(prior: (f64, f64), own: (f64, f64)) -> (f64, f64) {
    let (wp, wo) = (1.0 / prior.1.max(1e-12), 1.0 / own.1.max(1e-12));
    ((wp * prior.0 + wo * own.0) / (wp + wo), 1.0 / (wp + wo))
}

/// What every leave-one-out fold shares.
struct Folds<'a> {
    net: &'a Network,
    all: &'a [Observation],
    own_history: &'a [Option<Observation>],
    y_by_seg: &'a [f64],
    routes: &'a RouteNeighbours,
    aux: &'a Aux,
    mids: &'a [[f64; 2]],
    kparams: &'a KrigingParams,
    params: &'a SpatialParams,
}

impl Folds<'_> {
    /// Leaves out the count of `target`'s segment (its regression row, kriging datum and
    /// every route term); the segment's own history, if any, takes its place, as it would for
    /// an uncounted segment.
    fn fold(&self, target: &Observation) -> Option<CvPoint> {
        let (net, routes, aux, y) = (self.net, self.routes, self.aux, self.y_by_seg);
        let excl = Some(target.segment);
        let hist = self.own_history[target.segment];
        let kept: Vec<Observation> = self
            .all
            .iter()
            .filter(|o| o.segment != target.segment)
            .copied()
            .chain(hist)
            .collect();
        let fit = regression(net, &kept, y, routes, aux, excl, self.params)?;
        let group = net.segments[target.segment].functional_class.broad_group();
        let same: Vec<Observation> = kept
            .iter()
            .copied()
            .filter(|o| net.segments[o.segment].functional_class.broad_group() == group)
            .collect();
        let kept = if self.params.within_class_group && same.len() >= self.params.neighbours.min(8)
        {
            same
        } else {
            kept
        };
        let data = KrigingData {
            xy: kept.iter().map(|o| self.mids[o.segment]).collect(),
            value: kept.iter().map(|o| o.log_aadt).collect(),
            drift: kept
                .iter()
                .map(|o| vec![drift_of(net, &fit, o.segment, y, routes, aux, excl)])
                .collect(),
            meas_var: kept.iter().map(|o| o.meas_var).collect(),
        };
        let f_j = drift_of(net, &fit, target.segment, y, routes, aux, excl);
        // The observed value carries its own measurement error: judge coverage against the
        // prediction variance plus that error.
        let own = hist.map(|_| kept.len() - 1);
        let (m, v) = Kriger::new(data, *self.kparams)
            .ok()
            .and_then(|k| {
                k.predict_without(self.mids[target.segment], &[f_j], own)
                    .ok()
            })
            .map_or((f_j, fit.residual_var), |p| {
                (p.value, p.variance_with_nugget)
            });
        let (m, v) = match hist {
            Some(h) => combine((m, v), (h.log_aadt, h.meas_var)),
            None => (m, v),
        };
        let kriged = Interval::from_log(m, v + target.meas_var);
        let (log_mean, pred_var) = (m, v);
        let regression = Interval::from_log(f_j, fit.residual_var + target.meas_var);
        let seg = &net.segments[target.segment];
        // The simple alternative: this year's counts of the same class (and area).
        let others: Vec<&Observation> = self
            .all
            .iter()
            .filter(|o| {
                o.segment != target.segment && !matches!(o.kind, ObservationKind::History(_))
            })
            .collect();
        let same = |o: &&&Observation, strict: bool| {
            let s = &net.segments[o.segment];
            s.functional_class == seg.functional_class && (!strict || s.area == seg.area)
        };
        let mut pool: Vec<f64> = others
            .iter()
            .filter(|o| same(o, true))
            .map(|o| o.log_aadt)
            .collect();
        if pool.len() < 2 {
            pool = others
                .iter()
                .filter(|o| same(o, false))
                .map(|o| o.log_aadt)
                .collect();
        }
        if pool.len() < 2 {
            pool = others.iter().map(|o| o.log_aadt).collect();
        }
        let n = pool.len() as f64;
        let m = pool.iter().sum::<f64>() / n;
        let v = pool.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (n - 1.0).max(1.0);
        let class_mean = Interval::from_log(m, v * (1.0 + 1.0 / n) + target.meas_var);
        Some(CvPoint {
            segment: target.segment,
            observed: target.log_aadt.exp(),
            kriged,
            regression,
            class_mean,
            with_history: hist.is_some(),
            kind: target.kind,
            log_mean,
            pred_var,
            meas_var: target.meas_var,
        })
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The settings check bounds `full_model_min_counts` by the full model's size.
    #[test]
    fn the_full_model_has_the_documented_number_of_terms() {
        assert_eq!(term_names(true).len(), FULL_MODEL_TERMS);
        assert!(term_names(false).len() < FULL_MODEL_TERMS);
    }
}
