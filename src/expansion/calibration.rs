//! Empirical calibration of the short-count interval.
//!
//! # Method
//! Every permanent counter stands in for a segment with a short count: for each count length
//! (24, 48, 72 hours by default) and many start hours spread evenly over its year, the hours of
//! that window are expanded exactly as a real short count would be, with factors computed
//! **without that counter** (its group's other stations; the whole network's other stations
//! when it is alone in its group). Each trial gives an absolute percentage error against the
//! counter's own AADT, and a standardised error `z = |ln(est / AADT)| / (1.96 s)` where `s` is
//! the modelled log standard deviation.
//!
//! The interval scale for a count length is the 95th percentile of `z` over all trials of that
//! length, so that `exp(±1.96 c s)` covers 95 % of them. Coverage is reported honestly, out of
//! sample: each counter's trials are judged with the scale computed from the *other* counters'
//! trials.
//!
//! # References
//! The design follows the simulation studies of short-count accuracy that draw counts from
//! permanent counters with known AADT (e.g. Sharma, Gulati & Rizak, J. Transp. Eng. 122(6),
//! 1996, from memory); the scaling to a target coverage is common practice.

use std::collections::BTreeMap;

use rayon::prelude::*;

use super::{expand, CountHour, ExpansionParams, GroupFactors, Growth, Measure, ShortCount, Z95};

/// A permanent counter as the calibration sees it.
#[derive(Debug, Clone)]
pub struct CalibrationStation {
    /// Station id, for the report.
    pub station_id: String,
    /// Factor group key.
    pub group: String,
    /// Broad functional-class group, for the report (`freeway`, `arterial`, `collector_local`).
    pub class_group: String,
    /// Two-way hourly volumes of its accepted complete days, in time order.
    pub hours: Vec<CountHour>,
    /// Its AADT from all its days (the truth the trials are judged against).
    pub aadt: f64,
    /// Calendar year of its days.
    pub year: i32,
    /// Its K30 and mean working-day peak-hour share, for checking short-count K estimates.
    pub k30_and_peak_share: Option<(f64, f64)>,
}

/// One trial: a simulated short count.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Trial {
    /// Index of the station in the input.
    pub station: usize,
    /// Count length, hours.
    pub hours: u32,
    /// Expanded AADT.
    pub estimate: f64,
    /// Modelled log sd.
    pub log_sd: f64,
    /// The station's AADT.
    pub truth: f64,
    /// K estimated from the window's own working-day peak hours and the other stations'
    /// K30 / peak-share ratio, with the station's own K30: (estimate, truth).
    pub k: Option<(f64, f64)>,
    /// The other stations' mean K30 (the group value a segment without this method would get).
    pub k_group: Option<f64>,
}

impl Trial {
    /// Absolute percentage error, percent.
    pub fn ape(&self) -> f64 {
        100.0 * (self.estimate - self.truth).abs() / self.truth
    }

    /// Standardised error `|ln(est/AADT)| / (1.96 s)`.
    pub fn z(&self) -> f64 {
        (self.estimate / self.truth).ln().abs() / (Z95 * self.log_sd.max(1e-9))
    }
}

/// One row of the calibration table.
#[derive(Debug, Clone, PartialEq)]
pub struct CalibrationRow {
    /// Count length, hours.
    pub hours: u32,
    /// Broad functional-class group, or `all`.
    pub class_group: String,
    /// Trials.
    pub trials: usize,
    /// Median absolute percentage error, percent.
    pub median_ape: f64,
    /// 90th-percentile absolute percentage error, percent.
    pub p90_ape: f64,
    /// Share of trials whose 95 % interval (out-of-sample scale) covers the true AADT.
    pub coverage: f64,
    /// Median absolute percentage error of the K estimated from the window's own peak hours
    /// against the counter's K30, percent (trials with a complete working day).
    pub k_median_ape: Option<f64>,
    /// The same for the group's mean K30, over the same trials: the baseline.
    pub k_group_median_ape: Option<f64>,
}

/// The calibration's result.
#[derive(Debug, Clone, PartialEq)]
pub struct Calibration {
    /// Interval scale per count length, hours -> c.
    pub scales: BTreeMap<u32, f64>,
    /// The table (count length x class group, plus `all` rows).
    pub rows: Vec<CalibrationRow>,
    /// Every trial.
    pub trials: Vec<Trial>,
}

impl Calibration {
    /// Scale for a count of `hours` hours: that of the nearest calibrated length, else 1.
    pub fn scale_for(&self, hours: u32) -> f64 {
        self.scales
            .iter()
            .min_by_key(|(h, _)| (**h as i64 - hours as i64).abs())
            .map_or(1.0, |(_, c)| *c)
    }
}

/// Quantile `q` (0..1) of `v` by linear interpolation between order statistics
/// (Hyndman & Fan type 7, the default of R and NumPy).
pub fn quantile(v: &mut [f64], q: f64) -> f64 {
    if v.is_empty() {
        return f64::NAN;
    }
    v.sort_by(|a, b| a.total_cmp(b));
    let pos = q * (v.len() - 1) as f64;
    let (lo, hi) = (pos.floor() as usize, pos.ceil() as usize);
    v[lo] + (v[hi] - v[lo]) * (pos - lo as f64)
}

/// Runs the experiment. `make_factors(stations)` builds group factors from the given station
/// indices (never including the station under test).
pub fn calibrate(
    stations: &[CalibrationStation],
    make_factors: &(dyn Fn(&[usize]) -> GroupFactors + Sync),
    params: &ExpansionParams,
) -> Calibration {
    let trials: Vec<Trial> = (0..stations.len())
        .into_par_iter()
        .flat_map_iter(|s| trials_for(s, stations, make_factors, params))
        .collect();
    let mut scales = BTreeMap::new();
    for &h in &params.calibration_hours {
        let mut z: Vec<f64> = trials
            .iter()
            .filter(|t| t.hours == h)
            .map(Trial::z)
            .collect();
        if !z.is_empty() {
            scales.insert(h, quantile(&mut z, 0.95).max(0.25));
        }
    }
    let covered = out_of_sample_coverage(&trials, stations.len());
    let mut rows = Vec::new();
    for &h in &params.calibration_hours {
        let mut groups: Vec<String> = stations.iter().map(|s| s.class_group.clone()).collect();
        groups.sort();
        groups.dedup();
        groups.push("all".into());
        for g in groups {
            let idx: Vec<usize> = (0..trials.len())
                .filter(|&i| {
                    trials[i].hours == h
                        && (g == "all" || stations[trials[i].station].class_group == g)
                })
                .collect();
            if idx.is_empty() {
                continue;
            }
            let mut apes: Vec<f64> = idx.iter().map(|&i| trials[i].ape()).collect();
            let mut k_apes: Vec<f64> = idx
                .iter()
                .filter_map(|&i| trials[i].k)
                .map(|(e, t)| 100.0 * (e - t).abs() / t)
                .collect();
            rows.push(CalibrationRow {
                hours: h,
                class_group: g,
                trials: idx.len(),
                median_ape: quantile(&mut apes, 0.5),
                p90_ape: quantile(&mut apes, 0.9),
                coverage: idx.iter().filter(|&&i| covered[i]).count() as f64 / idx.len() as f64,
                k_median_ape: (!k_apes.is_empty()).then(|| quantile(&mut k_apes, 0.5)),
                k_group_median_ape: {
                    let mut g: Vec<f64> = idx
                        .iter()
                        .filter_map(|&i| Some((trials[i].k?.1, trials[i].k_group?)))
                        .map(|(t, g)| 100.0 * (g - t).abs() / t)
                        .collect();
                    (!g.is_empty()).then(|| quantile(&mut g, 0.5))
                },
            });
        }
    }
    Calibration {
        scales,
        rows,
        trials,
    }
}

/// Whether each trial is covered when its station's scale comes from the other stations.
fn out_of_sample_coverage(trials: &[Trial], n_stations: usize) -> Vec<bool> {
    let mut by_len: BTreeMap<u32, Vec<usize>> = BTreeMap::new();
    for (i, t) in trials.iter().enumerate() {
        by_len.entry(t.hours).or_default().push(i);
    }
    let mut covered = vec![false; trials.len()];
    for idx in by_len.values() {
        for s in 0..n_stations {
            let mut z: Vec<f64> = idx
                .iter()
                .filter(|&&i| trials[i].station != s)
                .map(|&i| trials[i].z())
                .collect();
            if z.is_empty() {
                continue;
            }
            let c = quantile(&mut z, 0.95).max(0.25);
            for &i in idx.iter().filter(|&&i| trials[i].station == s) {
                covered[i] = trials[i].z() <= c;
            }
        }
    }
    covered
}

fn trials_for(
    s: usize,
    stations: &[CalibrationStation],
    make_factors: &(dyn Fn(&[usize]) -> GroupFactors + Sync),
    params: &ExpansionParams,
) -> Vec<Trial> {
    let me = &stations[s];
    let mut others: Vec<usize> = (0..stations.len())
        .filter(|&o| o != s && stations[o].group == me.group)
        .collect();
    if others.is_empty() {
        others = (0..stations.len()).filter(|&o| o != s).collect();
    }
    if others.is_empty() {
        return Vec::new();
    }
    let factors = make_factors(&others);
    let ratios: Vec<f64> = others
        .iter()
        .filter_map(|&o| stations[o].k30_and_peak_share)
        .filter(|(_, p)| *p > 0.0)
        .map(|(k, p)| k / p)
        .collect();
    let ratio = (!ratios.is_empty()).then(|| ratios.iter().sum::<f64>() / ratios.len() as f64);
    let k_others: Vec<f64> = others
        .iter()
        .filter_map(|&o| stations[o].k30_and_peak_share.map(|x| x.0))
        .collect();
    let k_group =
        (!k_others.is_empty()).then(|| k_others.iter().sum::<f64>() / k_others.len() as f64);
    let cv_of = |v: &[f64]| {
        (v.len() >= 2).then(|| {
            let m = v.iter().sum::<f64>() / v.len() as f64;
            (v.iter().map(|x| (x - m).powi(2)).sum::<f64>() / (v.len() - 1) as f64).sqrt() / m
        })
    };
    let k_group_cv = cv_of(&k_others);
    let ratio_cv = cv_of(&ratios);
    let mut out = Vec::new();
    for &len in &params.calibration_hours {
        let len_us = len as usize;
        let starts = valid_starts(&me.hours, len_us);
        if starts.is_empty() {
            continue;
        }
        let n = params.calibration_starts.min(starts.len());
        for k in 0..n {
            let start = starts[k * starts.len() / n];
            let mut window: Vec<CountHour> = me.hours[start..start + len_us].to_vec();
            window[0].follows = false;
            let count = ShortCount {
                periods: super::periods(&window),
                measure: Measure::Vehicles,
                year: me.year,
            };
            if let Ok(e) = expand(&count, &factors, Growth::NONE, params) {
                let k = window_peak_share(&window)
                    .zip(ratio)
                    .zip(me.k30_and_peak_share)
                    .map(|((share, r), (k30, _))| {
                        let own = r * share;
                        let est = match (k_group, k_group_cv) {
                            (Some(g), Some(cv)) => shrink_k(own, ratio_cv.unwrap_or(0.15), g, cv).0,
                            _ => own,
                        };
                        (est, k30)
                    });
                out.push(Trial {
                    station: s,
                    hours: len,
                    estimate: e.aadt,
                    log_sd: e.log_sd,
                    truth: me.aadt,
                    k,
                    k_group,
                });
            }
        }
    }
    out
}

/// Combines a count's own K estimate (log sd `s_own`) with its group's mean K30 (between-
/// station CV `cv_group`) by inverse-variance weights in log space: an empirical-Bayes
/// shrinkage that leans on the count where sites of a group differ and on the group where
/// they do not. Returns (K, log sd).
pub fn shrink_k(own: f64, s_own: f64, group: f64, cv_group: f64) -> (f64, f64) {
    let (a, b) = (
        1.0 / s_own.max(1e-4).powi(2),
        1.0 / cv_group.max(1e-4).powi(2),
    );
    let w = a / (a + b);
    (
        (w * own.ln() + (1.0 - w) * group.ln()).exp(),
        (1.0 / (a + b)).sqrt(),
    )
}

/// Mean peak-hour share of the window's complete working days (24 hours of one date).
fn window_peak_share(window: &[CountHour]) -> Option<f64> {
    use chrono::Datelike;
    let mut shares = Vec::new();
    let mut i = 0;
    while i < window.len() {
        let d = window[i].date;
        let j = i + window[i..].iter().take_while(|h| h.date == d).count();
        let day = &window[i..j];
        let total: f64 = day.iter().map(|h| h.volume).sum();
        if day.len() == 24 && d.weekday().num_days_from_monday() < 5 && total > 0.0 {
            let peak = day.iter().map(|h| h.volume).fold(0.0, f64::max);
            shares.push(peak / total);
        }
        i = j;
    }
    (!shares.is_empty()).then(|| shares.iter().sum::<f64>() / shares.len() as f64)
}

/// Start indices whose next `len` hours are consecutive.
fn valid_starts(hours: &[CountHour], len: usize) -> Vec<usize> {
    if hours.len() < len {
        return Vec::new();
    }
    // run[i] = consecutive hours ending at i.
    let mut run = vec![0usize; hours.len()];
    for i in 0..hours.len() {
        run[i] = if i > 0 && hours[i].follows {
            run[i - 1] + 1
        } else {
            1
        };
    }
    (0..=hours.len() - len)
        .filter(|&i| run[i + len - 1] >= len)
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;
    use chrono::NaiveDate;

    /// NumPy's default (linear, Hyndman & Fan type 7) percentile: np.percentile([1,2,3,4], 90)
    /// = 3.7 (from memory; by hand: 1 + 0.9 × 3 = 3.7th order position, 3 + 0.7 × 1).
    #[test]
    fn quantile_matches_numpy_linear() {
        assert_relative_eq!(
            quantile(&mut [4.0, 1.0, 3.0, 2.0], 0.9),
            3.7,
            epsilon = 1e-12
        );
        assert_relative_eq!(quantile(&mut [5.0], 0.5), 5.0);
    }

    #[test]
    fn flat_stations_give_exact_estimates_and_full_coverage() {
        let start = NaiveDate::from_ymd_opt(2025, 1, 1).unwrap();
        let mk = |id: &str, v: f64| CalibrationStation {
            station_id: id.into(),
            group: "g".into(),
            class_group: "arterial".into(),
            hours: (0..24 * 30)
                .map(|h| CountHour {
                    date: start + chrono::Days::new(h / 24),
                    volume: v / 24.0,
                    follows: h != 0,
                })
                .collect(),
            aadt: v,
            year: 2025,
            k30_and_peak_share: None,
        };
        let stations = vec![mk("a", 1000.0), mk("b", 2000.0), mk("c", 3000.0)];
        let flat = |_: &[usize]| GroupFactors {
            dow_month: [[1.0; 12]; 7],
            dow_month_cv: [[Some(0.05); 12]; 7],
            day_cv: Some(0.05),
            stations: 2,
        };
        let cal = calibrate(&stations, &flat, &ExpansionParams::default());
        assert!(!cal.trials.is_empty());
        for t in &cal.trials {
            assert_relative_eq!(t.estimate, t.truth, max_relative = 1e-9);
        }
        for r in &cal.rows {
            assert_relative_eq!(r.coverage, 1.0);
            assert!(r.median_ape < 1e-6);
        }
    }
}
