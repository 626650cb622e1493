//! Published AADT of earlier years as observations of this year's AADT.
//!
//! # Method
//! A segment with no count this year but a published AADT of year `y` (a rotating coverage
//! count, TMG practice: a segment is counted every few years and its figure brought forward in
//! between) gives the observation `ln A_y + ln G(y → Y)`, with `G` the segment's group growth
//! factor. Its measurement variance grows with the age `Y − y`:
//!
//! `v(age) = a + b · age`
//!
//! where `a` is the error of the published figure and `b` the yearly departure of a road's
//! level from its group's trend (new building, a changed route) plus the growth factor's own
//! uncertainty. Both are calibrated on the study itself: segments counted this year by a short
//! count (the segments that resemble the uncounted ones, whose history also comes from
//! coverage counts) that also have history give `d = y_count − y_history`, and
//! `E d² − v_count` by age is fitted by weighted least squares through `a` and `b` (pairs
//! beyond 5 robust sd, `1.4826 · MAD`, left out as gross errors). With fewer than [`MIN_PAIRS`] pairs the defaults of
//! [`HistoryVariance::assumed`] hold (assumptions, stated in the model note).

use crate::expansion::calibration::quantile;

/// A segment's latest published AADT brought to the study year.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HistoryPoint {
    /// Segment index.
    pub segment: usize,
    /// Year of the published figure.
    pub year: i32,
    /// `ln A_y + ln G(y → Y)`.
    pub log_now: f64,
    /// Years from the published figure to the study year.
    pub age: f64,
}

/// Pairs needed to calibrate the variance model.
pub const MIN_PAIRS: usize = 12;

/// `v(age) = a + b · age`, ln AADT².
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct HistoryVariance {
    /// Variance of the published figure.
    pub a: f64,
    /// Variance added per year of age.
    pub b: f64,
    /// Pairs the calibration used (0: assumed).
    pub pairs: usize,
}

impl HistoryVariance {
    /// Assumed when too few pairs exist: a published coverage-count AADT within about 20 % at
    /// 95 % (log sd 0.10) and a level that wanders by about 5 % a year (log sd 0.05). Common
    /// practice figures, not from a single source.
    pub fn assumed() -> HistoryVariance {
        HistoryVariance {
            a: 0.10f64.powi(2),
            b: 0.05f64.powi(2),
            pairs: 0,
        }
    }

    /// Variance of a point of this age.
    pub fn at(&self, age: f64) -> f64 {
        self.a + self.b * age.max(0.0)
    }

    /// Calibrates on `(age, d, v_count)` triples: `d` the log difference between this year's
    /// count and the history brought forward, `v_count` the count's own measurement variance.
    pub fn calibrate(pairs: &[(f64, f64, f64)]) -> HistoryVariance {
        if pairs.len() < MIN_PAIRS {
            return HistoryVariance::assumed();
        }
        // Robust variance per age (ages rounded to whole years), weighted by pairs.
        let mut by_age: std::collections::BTreeMap<i64, (Vec<f64>, f64)> = Default::default();
        for &(age, d, v) in pairs {
            let e = by_age.entry(age.round() as i64).or_default();
            e.0.push(d);
            e.1 += v;
        }
        let mut pts = Vec::new();
        for (age, (mut d, v)) in by_age {
            if d.len() < 4 {
                continue;
            }
            let n = d.len() as f64;
            let med = quantile(&mut d, 0.5);
            let mut dev: Vec<f64> = d.iter().map(|x| (x - med).abs()).collect();
            let mad = 1.4826 * quantile(&mut dev, 0.5);
            // Mean square about zero (a bias of the history is part of its error), without
            // gross outliers (beyond 5 robust sd: a wrong segment id, a road rebuilt).
            let kept: Vec<f64> = d
                .iter()
                .copied()
                .filter(|x| (x - med).abs() <= 5.0 * mad)
                .collect();
            let var = kept.iter().map(|x| x * x).sum::<f64>() / kept.len().max(1) as f64;
            pts.push((age as f64, (var - v / n).max(0.0), n));
        }
        let fallback = HistoryVariance::assumed();
        let (a, b) = match pts.len() {
            0 => return fallback,
            1 => (pts[0].1, 0.0),
            _ => {
                let w: f64 = pts.iter().map(|p| p.2).sum();
                let mx = pts.iter().map(|p| p.0 * p.2).sum::<f64>() / w;
                let my = pts.iter().map(|p| p.1 * p.2).sum::<f64>() / w;
                let sxx: f64 = pts.iter().map(|p| p.2 * (p.0 - mx).powi(2)).sum();
                let sxy: f64 = pts.iter().map(|p| p.2 * (p.0 - mx) * (p.1 - my)).sum();
                let b = if sxx > 0.0 { (sxy / sxx).max(0.0) } else { 0.0 };
                ((my - b * mx).max(0.0), b)
            }
        };
        // Never below a published figure's plausible precision: log sd 0.03.
        HistoryVariance {
            a: a.max(0.03f64.powi(2)),
            b,
            pairs: pairs.len(),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Pairs drawn with a known `a` and `b` give them back (a 5-sd trim of a normal sample
    /// keeps all but about 6e-7 of it, so the mean square stays consistent).
    #[test]
    fn calibration_recovers_known_variances() {
        use rand::SeedableRng;
        use rand_distr::{Distribution, Normal};
        let mut rng = rand_chacha::ChaCha8Rng::seed_from_u64(5);
        let (a, b, v_count) = (0.01, 0.004, 0.002);
        let mut pairs = Vec::new();
        for age in 1..=5 {
            let sd = (a + b * age as f64 + v_count).sqrt();
            let n = Normal::new(0.0, sd).unwrap();
            for _ in 0..400 {
                pairs.push((age as f64, n.sample(&mut rng), v_count));
            }
        }
        let fit = HistoryVariance::calibrate(&pairs);
        assert!((fit.a - a).abs() < 0.004, "{fit:?}");
        assert!((fit.b - b).abs() < 0.0015, "{fit:?}");
        assert_eq!(
            HistoryVariance::calibrate(&pairs[..5]),
            HistoryVariance::assumed()
        );
    }
}
