//! The single-direction rules, each on one complete direction-day.

use statrs::function::gamma::ln_gamma;

use super::profile::{median, DaySeries, Profile};
use super::QcParams;

/// Robust level of the day against its profile: the volume-weighted median of
/// observed / typical over the hours whose typical volume is at least 1.
pub(crate) fn day_scale(s: &DaySeries, expected: &[f64]) -> f64 {
    let mut pairs: Vec<(f64, f64)> = s
        .values
        .iter()
        .zip(expected)
        .filter(|(_, &e)| e >= 1.0)
        .map(|(&v, &e)| (v / e, e))
        .collect();
    let total_e: f64 = pairs.iter().map(|p| p.1).sum();
    if pairs.is_empty() || total_e <= 0.0 {
        let e: f64 = expected.iter().sum();
        return if e > 0.0 { s.total() / e } else { 1.0 };
    }
    pairs.sort_by(|a, b| a.0.total_cmp(&b.0));
    let mut acc = 0.0;
    for (r, w) in &pairs {
        acc += w;
        if acc >= total_e / 2.0 {
            return *r;
        }
    }
    pairs.last().map_or(1.0, |p| p.0)
}

/// Chance that two independent Poisson counts of mean `lambda` are equal:
/// sum_k P(k)^2 = e^(-2 lambda) I0(2 lambda).
pub(crate) fn poisson_equal_chance(lambda: f64) -> f64 {
    if lambda <= 0.0 {
        return 1.0;
    }
    if lambda > 60.0 {
        // Asymptotic form of e^(-2x) I0(2x) for large x.
        return 1.0 / (4.0 * std::f64::consts::PI * lambda).sqrt();
    }
    let top = (lambda + 12.0 * lambda.sqrt() + 20.0) as usize;
    (0..=top)
        .map(|k| {
            let lp = k as f64 * lambda.ln() - lambda - ln_gamma(k as f64 + 1.0);
            (2.0 * lp).exp()
        })
        .sum()
}

/// Poisson chance of exactly `value` when about `expected` is expected, taking the most
/// likely mean within +-15 % of `expected` (allowance for the day's shape noise and the
/// profile's own error).
pub(crate) fn value_chance(value: f64, expected: f64) -> f64 {
    let lo = expected * 0.85;
    let hi = expected * 1.15;
    let lambda = value.clamp(lo, hi).max(1e-9);
    (value * lambda.ln() - lambda - ln_gamma(value + 1.0)).exp()
}

/// Flat run: the same non-zero value in consecutive hours, improbable under counting noise.
pub(crate) fn flat_run(
    s: &DaySeries,
    expected: Option<(&[f64], f64)>,
    p: &QcParams,
) -> Option<String> {
    let v = &s.values;
    let mut best: Option<(f64, usize, usize)> = None; // (probability, start, length)
    let mut k = 0;
    while k < v.len() {
        let mut j = k + 1;
        while j < v.len() && v[j] == v[k] {
            j += 1;
        }
        let len = j - k;
        if len >= p.flat_run_min_hours.max(2) && v[k] >= p.flat_run_min_value.max(1) as f64 {
            let prob: f64 = (k + 1..j)
                .map(|i| {
                    let typ = expected.map_or(0.0, |(e, sc)| e[i] * sc);
                    let equal = poisson_equal_chance(v[k].max(typ));
                    if typ > 0.0 {
                        equal.min(value_chance(v[k], typ))
                    } else {
                        equal
                    }
                })
                .product();
            if prob < p.flat_run_max_probability && best.is_none_or(|b| prob < b.0) {
                best = Some((prob, k, len));
            }
        }
        k = j;
    }
    best.map(|(prob, k, len)| {
        format!(
            "value {} {}/h repeated for {len} consecutive hours from {} (chance under counting noise {prob:.1e})",
            v[k],
            s.measure.unit(),
            s.label(k)
        )
    })
}

/// Zero run: consecutive zero hours where the typical (or neighbouring) volume makes a zero
/// implausible.
pub(crate) fn zero_run(s: &DaySeries, profile: Option<&Profile>, p: &QcParams) -> Option<String> {
    let v = &s.values;
    let expected = profile.map(|pr| pr.expected(s));
    let mut best: Option<(f64, usize, usize)> = None;
    let mut k = 0;
    while k < v.len() {
        if v[k] != 0.0 {
            k += 1;
            continue;
        }
        let mut j = k;
        while j < v.len() && v[j] == 0.0 {
            j += 1;
        }
        let len = j - k;
        let typical = match &expected {
            Some(e) => Some(e[k..j].iter().sum::<f64>()),
            // No profile: both neighbours must be there; the lower one stands for every hour.
            None if k > 0 && j < v.len() => Some(v[k - 1].min(v[j]) * len as f64),
            None => None,
        };
        if let Some(t) = typical {
            let exp = t * p.zero_run_level_floor;
            if exp >= p.zero_run_min_expected && best.is_none_or(|b| t > b.0) {
                best = Some((t, k, len));
            }
        }
        k = j;
    }
    best.map(|(t, k, len)| {
        format!(
            "0 {}/h for {len} consecutive hour(s) from {} where {:.0} {} are typical ({})",
            s.measure.unit(),
            s.label(k),
            t,
            s.measure.unit(),
            if expected.is_some() {
                "station profile"
            } else {
                "neighbouring hours"
            }
        )
    })
}

/// Variance of an hour's count around `e` (its expected value on this day).
fn hour_variance(e: f64, spread: f64, days: usize, p: &QcParams) -> f64 {
    let profile_err = 1.57 * spread * spread / days.max(1) as f64;
    (spread * spread).max(e) + (p.shape_noise_share * e).powi(2) + profile_err + 1.0
}

/// Spike: one hour far above what the day's level and the profile (or its neighbours) imply.
/// `across` holds the hours next to the day across midnight (the previous day's last hour,
/// the next day's first), where known: an edge hour is a neighbour of them too, and a spike
/// at 00:00 or 23:00 must stand `spike_min_neighbour_ratio` above that hour, so that a smooth
/// decline through midnight is never taken for a spike.
pub(crate) fn spike(
    s: &DaySeries,
    profile: Option<&Profile>,
    across: (Option<f64>, Option<f64>),
    p: &QcParams,
) -> Option<String> {
    let v = &s.values;
    let n = v.len();
    let mut best: Option<(f64, usize, f64)> = None; // (z, slot, expected)
    let scale_and_exp = profile.map(|pr| {
        let e = pr.expected(s);
        (day_scale(s, &e), e)
    });
    for k in 0..n {
        let (exp, var) = match (&scale_and_exp, profile) {
            (Some((sc, e)), Some(pr)) => {
                let exp = sc * e[k];
                let spread = sc * pr.spread[s.hours[k]];
                (exp, hour_variance(exp, spread, pr.days, p))
            }
            _ => {
                let prev = if k > 0 { Some(v[k - 1]) } else { across.0 };
                let next = if k + 1 < n { Some(v[k + 1]) } else { across.1 };
                let Some(r) = prev.into_iter().chain(next).reduce(f64::max) else {
                    continue;
                };
                // Neighbours are noisy too: their Poisson variance counts twice.
                (r, hour_variance(r, 0.0, 1, p) + r)
            }
        };
        let excess = v[k] - exp;
        let z = excess / var.sqrt();
        let edge_neighbour = match k {
            0 => across.0,
            _ if k + 1 == n => across.1,
            _ => None,
        };
        let stands_out = edge_neighbour.is_none_or(|x| v[k] >= p.spike_min_neighbour_ratio * x);
        if stands_out
            && v[k] >= p.spike_min_ratio * exp
            && excess >= p.spike_min_excess
            && z >= p.spike_min_z
            && best.is_none_or(|b| z > b.0)
        {
            best = Some((z, k, exp));
        }
    }
    best.map(|(z, k, exp)| {
        format!(
            "{} {} {}/h against {:.0} expected (x{:.1}, z {:.0}, {})",
            s.label(k),
            v[k],
            s.measure.unit(),
            exp,
            v[k] / exp.max(1.0),
            z,
            if profile.is_some() {
                "station profile"
            } else {
                "neighbouring hours"
            }
        )
    })
}

/// A step of level within one day, found by [`level_step`].
#[derive(Debug, Clone, Copy)]
pub(crate) struct LevelStep {
    /// First slot after the break.
    pub slot: usize,
    /// Observed-to-typical ratio before the break.
    pub before: f64,
    /// Observed-to-typical ratio from the break on.
    pub after: f64,
    /// Standardised size of the step.
    pub z: f64,
    /// Share of the day's typical volume from the break on.
    pub after_share: f64,
}

impl LevelStep {
    /// Whether the side after the break is the one that departs from the typical level.
    pub(crate) fn after_is_off(&self) -> bool {
        self.after.ln().abs() >= self.before.ln().abs()
    }

    /// Share of the day's typical volume on the side that departs from the typical level.
    pub(crate) fn off_share(&self) -> f64 {
        if self.after_is_off() {
            self.after_share
        } else {
            1.0 - self.after_share
        }
    }

    /// Whether `neighbour`, the observed-to-typical ratio of the neighbouring day's hours next
    /// to the off side, carries the off level on: itself a step of `min_log_ratio` away from
    /// the day's normal level, and closer to the off level than to the normal one.
    pub(crate) fn persists(&self, neighbour: f64, min_log_ratio: f64) -> bool {
        let (off, normal) = if self.after_is_off() {
            (self.after, self.before)
        } else {
            (self.before, self.after)
        };
        let nb = neighbour.max(1e-9);
        let from_normal = (nb / normal).ln().abs();
        from_normal >= min_log_ratio && (nb / off).ln().abs() < from_normal
    }

    pub(crate) fn detail(&self, s: &DaySeries) -> String {
        format!(
            "level {:.0} % of typical before {} and {:.0} % from then on (x{:.2}, z {:.0})",
            self.before * 100.0,
            s.label(self.slot),
            self.after * 100.0,
            self.after / self.before,
            self.z
        )
    }
}

/// Level step: the observed-to-typical ratio changes by a step at some hour of the day, with
/// `level_shift_min_side_volume` typical vehicles on each side and at least `min_off_hours`
/// hours on the side that departs from the typical level (one to four off hours at either
/// end of the day is how real evening and early-morning traffic departs from a median
/// profile, not a fault). Whether
/// the step rejects the day is decided by the caller: a sensor fault (lanes lost, a
/// miscalibrated loop) covers most of the day or carries on into the next day, while events,
/// incidents and weather come and go within the day.
pub(crate) fn level_step(
    s: &DaySeries,
    profile: &Profile,
    min_off_hours: usize,
    p: &QcParams,
) -> Option<LevelStep> {
    let e = profile.expected(s);
    let v = &s.values;
    let n = v.len();
    let sc = day_scale(s, &e);
    let total_o: f64 = v.iter().sum();
    let total_e: f64 = e.iter().sum();
    let spread2: Vec<f64> = s.hours.iter().map(|&h| profile.spread[h].powi(2)).collect();
    let total_s2: f64 = spread2.iter().sum();
    let (mut ao, mut ae, mut as2) = (0.0, 0.0, 0.0);
    let mut best: Option<LevelStep> = None;
    for k in 1..n {
        ao += v[k - 1];
        ae += e[k - 1];
        as2 += spread2[k - 1];
        let (bo, be, bs2) = (total_o - ao, total_e - ae, total_s2 - as2);

        if sc * ae < p.level_shift_min_side_volume || sc * be < p.level_shift_min_side_volume {
            continue;
        }
        let ra = (ao + 0.5) / ae;
        let rb = (bo + 0.5) / be;
        let r = (rb / ra).ln();
        let days = profile.days.max(1) as f64;
        let var = 1.0 / (ao + 1.0)
            + 1.0 / (bo + 1.0)
            + 2.0 * p.shape_noise_share.powi(2)
            + 1.57 * (as2 / (ae * ae) + bs2 / (be * be)) / days;
        let z = r.abs() / var.sqrt();
        // The side that departs from the typical level must be long enough.
        let off_hours = if rb.ln().abs() >= ra.ln().abs() {
            n - k
        } else {
            k
        };
        if r.abs() >= p.level_shift_min_log_ratio
            && z >= p.level_shift_min_z
            && off_hours >= min_off_hours.max(1)
            && best.is_none_or(|b| z > b.z)
        {
            best = Some(LevelStep {
                slot: k,
                before: ra,
                after: rb,
                z,
                after_share: be / total_e.max(1e-9),
            });
        }
    }
    best
}

/// Observed-to-typical ratio of the first (`from_start`) or last `hours` hours of a day.
pub(crate) fn edge_ratio(s: &DaySeries, profile: &Profile, hours: usize, from_start: bool) -> f64 {
    let e = profile.expected(s);
    let n = s.values.len();
    let h = hours.clamp(1, n.max(1));
    let range = if from_start { 0..h } else { n - h..n };
    let o: f64 = s.values[range.clone()].iter().sum();
    let t: f64 = e[range].iter().sum();
    (o + 0.5) / t.max(0.5)
}

/// Daily deviation: the day total against the typical total of its day type, scaled by the
/// seasonal level `season` (the median observed-to-typical ratio of the neighbouring days).
/// The deviation must also exceed three Poisson standard deviations, so that small totals
/// do not fire on counting noise alone.
pub(crate) fn daily_deviation(
    s: &DaySeries,
    profile: &Profile,
    season: f64,
    p: &QcParams,
) -> Option<String> {
    let e: f64 = profile.expected(s).iter().sum::<f64>() * season;
    if e <= 0.0 {
        return None;
    }
    let t = s.total();
    let ratio = t / e;
    ((ratio - 1.0).abs() > p.daily_deviation_max_share && (t - e).abs() >= 3.0 * e.sqrt()).then(
        || {
            format!(
                "daily total {t:.0} {} is {:.0} % of the typical {e:.0} {} ({}, {} days{})",
                s.measure.unit(),
                ratio * 100.0,
                s.measure.unit(),
                profile.label,
                profile.days,
                if (season - 1.0).abs() > 0.005 {
                    format!(", seasonal level {:.0} %", season * 100.0)
                } else {
                    String::new()
                }
            )
        },
    )
}

/// Chi-square misfit of a day's hours against a profile scaled to the day's total.
pub(crate) fn misfit(s: &DaySeries, profile: &Profile, p: &QcParams) -> f64 {
    let e = profile.expected(s);
    let te: f64 = e.iter().sum();
    if te <= 0.0 {
        return 0.0;
    }
    let f = s.total() / te;
    s.values
        .iter()
        .zip(&e)
        .zip(&s.hours)
        .map(|((&o, &e), &h)| {
            let exp = e * f;
            let var = hour_variance(exp, f * profile.spread[h], profile.days, p);
            (o - exp).powi(2) / var
        })
        .sum()
}

/// Median of a list, for typical shares.
pub(crate) fn median_of(mut v: Vec<f64>) -> f64 {
    median(&mut v)
}
