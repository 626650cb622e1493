//! Short counts to AADT, with a 95 % interval.
//!
//! # Method
//! Each complete local day *d* of a short count gives one estimate (TMG factor application,
//! FHWA Traffic Monitoring Guide 2016 §3, from memory; the same form as its Eq. 3-1):
//!
//! ```text
//! AADT_d = V_d × F(dow_d, month_d) × A × G
//!   V_d  two-way volume of the day (vehicles; or axle hits / 2 for an axle counter)
//!   F    day-of-week-by-month factor of the segment's factor group (AADT / MADW, TMG convention:
//!        factors multiply a count)
//!   A    axle-correction factor of the group (vehicles per axle pair), axle counts only
//!   G    growth factor from the count year to the study year
//! ```
//! and the count's AADT is the mean of its periods' estimates. **Partial days**: a count is cut
//! into consecutive 24-hour periods from its first counted hour (a count started at 12:00 on
//! day 1 and ended at 12:00 on day 3 gives the periods 12:00-12:00 and 12:00-12:00, all 48 of
//! its hours); a period that straddles two local days factors each day's part with that
//! day's factor, `V × F = Σ_k V_k F_k` (so `F` is the volume-weighted mean of the two
//! factors); hours left over after the last full period are not used. **Gaps**: isolated
//! missing hours (runs of at most `max_gap_hours`, at most `max_filled_hours_per_period` in
//! one period) are filled from the count's own other days or the group's hourly profile; a
//! longer gap starts a new run of periods ([`gaps`]).
//!
//! # Interval
//! The error of an expanded count is modelled in log space as the sum of independent parts:
//!
//! ```text
//! s² = s_f²·(1 + 1/n_g) + s_d²/n_days + (age · s_g)² + s_a²
//!   s_f   between-station coefficient of variation of the group's factor for that cell
//!   n_g   stations behind the group factor
//!   s_d   day-to-day coefficient of variation of a single day about its month-weekday mean
//!   s_g   year-to-year coefficient of variation of growth (per year of age)
//!   s_a   coefficient of variation of the axle-correction factor (axle counts only)
//! ```
//! plus, for a count with filled hours, `Σ_p (F_p / V_p)² · cv_fill² / n²` (the filled share
//! F_p / V_p of each period p times the error of a filled hour, [`gaps::part_variance`]),
//! and likewise `Σ_p (O_p / V_p)² · cv_dir² / n²` for the volume O_p estimated from one
//! direction where the other was rejected or missing,
//! and the 95 % interval is `AADT · exp(±1.96 · c · s)`, where the scale *c* is calibrated by
//! `roadtally calibrate`, which draws simulated short counts from every permanent counter and
//! expands them with factors computed without that counter (see [`calibration`]).
//!
//! # Units
//! Volumes in vehicles per day; coefficients of variation as fractions (0.10 = 10 %).
//!
//! # References
//! FHWA *Traffic Monitoring Guide* (2016 and 2022), Chapter 3 (factoring of short counts; from
//! memory). AASHTO *Guidelines for Traffic Data Programs* (2009; from memory).

pub mod calibration;
pub mod gaps;
pub mod stage;

// Defined below this stage (factors, model); re-exported where the expansion maths uses them.
pub use crate::factors::GroupFactors;
pub use crate::model::CountHour;

use chrono::NaiveDate;
use serde::{Deserialize, Serialize};

/// Settings of the expansion stage (`[expansion]` in study.toml).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(default, deny_unknown_fields)]
pub struct ExpansionParams {
    /// Scale applied to the modelled log-space standard deviation so that the 95 % intervals
    /// cover 95 % of simulated counts. Default 1.0 until `roadtally calibrate` measures it;
    /// `run` uses the calibration it computes on the study itself when this is not set.
    pub interval_scale: Option<f64>,
    /// Between-station factor CV used when a group has fewer than two stations.
    /// Default 0.10 (common practice: TMG groups target ±10 % precision).
    pub default_factor_cv: f64,
    /// Day-to-day CV used when the group gives none. Default 0.10 (common practice).
    pub default_day_cv: f64,
    /// Year-to-year CV of growth per year of a count's age. Default 0.03 (common practice).
    pub growth_cv_per_year: f64,
    /// Count lengths, hours, simulated by the calibration. Default 24, 48 and 72.
    pub calibration_hours: Vec<u32>,
    /// Start days tried per permanent counter and count length. Default 40.
    pub calibration_starts: usize,
    /// A short count moves from its table group to the group whose weekday hourly profile it
    /// fits best when that fit's chi-square distance is below this share of its own group's.
    /// 0 turns profile assignment off. Default 0.5 (project choice).
    pub profile_switch_ratio: f64,
    /// Longest run of consecutive missing hours inside a short count that is filled; longer
    /// gaps are left open and split the count. Default 2 (project choice: a counter reset or
    /// a short outage, not a sensor down for a morning).
    pub max_gap_hours: usize,
    /// Most filled hours in one 24-hour period; a period with more is not used. Default 3
    /// (project choice: at most an eighth of a day is estimated rather than counted).
    pub max_filled_hours_per_period: usize,
    /// Relative error (coefficient of variation) of the volume of a filled hour, carried into
    /// the interval. Default 0.25 (project choice, conservative: an hour's volume varies by
    /// 10-20 % from day to day at one site (common practice), an estimate from the count's
    /// other day or the group's profile adds to that).
    pub filled_hour_cv: f64,
    /// Relative error (coefficient of variation) of a two-way volume estimated from one
    /// direction over its share, carried into the interval. Default 0.10 (project choice:
    /// over a whole day the two directions of a two-way road carry close to half each, and
    /// the share comes from the count's own hours where both directions were counted; peak
    /// hours alone can split 60/40 or more, common practice).
    pub one_direction_cv: f64,
}

impl Default for ExpansionParams {
    fn default() -> Self {
        ExpansionParams {
            interval_scale: None,
            default_factor_cv: 0.10,
            default_day_cv: 0.10,
            growth_cv_per_year: 0.03,
            calibration_hours: vec![24, 48, 72],
            calibration_starts: 40,
            profile_switch_ratio: 0.5,
            max_gap_hours: 2,
            max_filled_hours_per_period: 3,
            filled_hour_cv: 0.25,
            one_direction_cv: 0.10,
        }
    }
}

/// Normal quantile for a two-sided 95 % interval.
pub const Z95: f64 = 1.959_963_984_540_054;

/// How the count measured traffic.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Measure {
    /// Vehicles counted directly.
    Vehicles,
    /// Axle hits; turned into vehicles by `hits / 2 × acf`.
    Axles {
        /// Axle-correction factor, vehicles per axle pair.
        acf: f64,
        /// Its coefficient of variation.
        cv: f64,
    },
}

/// One 24-hour period of a short count: its two-way volume and the local days it spans,
/// each with the share of the period's hours that fell on it.
#[derive(Debug, Clone, PartialEq)]
pub struct CountPeriod {
    /// Two-way volume of the 24 hours (vehicles, or axle hits).
    pub volume: f64,
    /// (local date, share of the period's volume counted on that date); shares sum to 1.
    pub parts: Vec<(NaiveDate, f64)>,
    /// Part of `volume` in filled (estimated, not counted) hours.
    pub filled: f64,
    /// Part of `volume` in hours estimated from one direction (the other rejected or
    /// missing): that direction's volume over its share of the two-way volume.
    pub one_direction: f64,
}

impl CountPeriod {
    /// A period that is exactly one local day.
    pub fn day(date: NaiveDate, volume: f64) -> CountPeriod {
        CountPeriod {
            volume,
            parts: vec![(date, 1.0)],
            filled: 0.0,
            one_direction: 0.0,
        }
    }
}

/// Cuts consecutive hours into 24-hour periods (see the module docs).
pub fn periods(hours: &[CountHour]) -> Vec<CountPeriod> {
    let mut out = Vec::new();
    let mut run: Vec<CountHour> = Vec::with_capacity(24);
    for h in hours {
        if !h.follows {
            run.clear();
        }
        run.push(*h);
        if run.len() == 24 {
            let volume: f64 = run.iter().map(|h| h.volume).sum();
            // Volume shares, so that V × Σ w_k F_k = Σ V_k F_k: each day's hours are factored
            // by their own day's factor. Hour shares stand in for an empty period.
            let share = |h: &CountHour| {
                if volume > 0.0 {
                    h.volume / volume
                } else {
                    1.0 / 24.0
                }
            };
            let mut parts: Vec<(NaiveDate, f64)> = Vec::new();
            for h in &run {
                match parts.last_mut() {
                    Some((d, w)) if *d == h.date => *w += share(h),
                    _ => parts.push((h.date, share(h))),
                }
            }
            out.push(CountPeriod {
                volume,
                parts,
                filled: 0.0,
                one_direction: 0.0,
            });
            run.clear();
        }
    }
    out
}

/// A short count ready to expand.
#[derive(Debug, Clone, PartialEq)]
pub struct ShortCount {
    /// Full 24-hour periods of the count.
    pub periods: Vec<CountPeriod>,
    /// How it was measured.
    pub measure: Measure,
    /// Calendar year of the count.
    pub year: i32,
}

/// Growth from a count's year to the study year.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Growth {
    /// Multiplier G.
    pub factor: f64,
    /// Standard deviation of ln G from the growth fit.
    pub log_sd: f64,
}

impl Growth {
    /// No growth (count from the study year).
    pub const NONE: Growth = Growth {
        factor: 1.0,
        log_sd: 0.0,
    };
}

/// An expanded count.
#[derive(Debug, Clone, PartialEq)]
pub struct Expanded {
    /// AADT for the study year, vehicles/day.
    pub aadt: f64,
    /// Modelled standard deviation of ln AADT before calibration scaling.
    pub log_sd: f64,
    /// 24-hour periods used.
    pub days: usize,
}

impl Expanded {
    /// The 95 % interval for a calibration scale `c`.
    pub fn interval95(&self, c: f64) -> (f64, f64) {
        let h = Z95 * c * self.log_sd;
        (self.aadt * (-h).exp(), self.aadt * h.exp())
    }
}

/// Why a count could not be expanded.
#[derive(Debug, Clone, PartialEq, Eq, thiserror::Error)]
pub enum ExpansionError {
    /// Fewer than 24 consecutive hours.
    #[error("no 24 consecutive usable hours in the count")]
    NoCompleteDay,
}

/// Expands one short count (see the module docs for the formula and the error model),
/// treating it as current; [`expand_for_year`] adds the per-year growth term for old counts.
pub fn expand(
    count: &ShortCount,
    factors: &GroupFactors,
    growth: Growth,
    params: &ExpansionParams,
) -> Result<Expanded, ExpansionError> {
    if count.periods.is_empty() {
        return Err(ExpansionError::NoCompleteDay);
    }
    let (acf, acf_cv) = match count.measure {
        Measure::Vehicles => (1.0, 0.0),
        Measure::Axles { acf, cv } => (acf / 2.0, cv),
    };
    let n = count.periods.len() as f64;
    let weighted = |p: &CountPeriod, f: &dyn Fn(NaiveDate) -> f64| -> f64 {
        p.parts.iter().map(|(d, w)| w * f(*d)).sum()
    };
    let aadt = count
        .periods
        .iter()
        .map(|p| p.volume * weighted(p, &|d| factors.factor(d)) * acf * growth.factor)
        .sum::<f64>()
        / n;
    let s_f = count
        .periods
        .iter()
        .map(|p| weighted(p, &|d| factors.cv(d).unwrap_or(params.default_factor_cv)))
        .sum::<f64>()
        / n;
    let s_d = factors.day_cv.unwrap_or(params.default_day_cv);
    let n_g = factors.stations.max(1) as f64;
    let var = s_f * s_f * (1.0 + 1.0 / n_g)
        + s_d * s_d / n
        + growth.log_sd * growth.log_sd
        + acf_cv * acf_cv
        + gaps::part_variance(&count.periods, |p| p.filled, params.filled_hour_cv)
        + gaps::part_variance(&count.periods, |p| p.one_direction, params.one_direction_cv);
    Ok(Expanded {
        aadt,
        log_sd: var.sqrt(),
        days: count.periods.len(),
    })
}

/// Expands a count taken in `count.year` for `study_year`, adding the per-year growth term.
pub fn expand_for_year(
    count: &ShortCount,
    factors: &GroupFactors,
    growth: Growth,
    study_year: i32,
    params: &ExpansionParams,
) -> Result<Expanded, ExpansionError> {
    let mut e = expand(count, factors, growth, params)?;
    let age = (study_year - count.year).abs() as f64;
    let extra = (age * params.growth_cv_per_year).powi(2);
    e.log_sd = (e.log_sd * e.log_sd + extra).sqrt();
    Ok(e)
}

/// Several expanded counts of one segment combined by inverse-variance weights in log space.
///
/// Returns (AADT, log sd). The combined sd is floored at the smallest single sd divided by
/// the square root of the number of counts, and counts are treated as independent.
pub fn combine(counts: &[Expanded]) -> Option<(f64, f64)> {
    if counts.is_empty() {
        return None;
    }
    let w: Vec<f64> = counts
        .iter()
        .map(|c| 1.0 / c.log_sd.max(1e-6).powi(2))
        .collect();
    let wsum: f64 = w.iter().sum();
    let mean_log = counts
        .iter()
        .zip(&w)
        .map(|(c, w)| w * c.aadt.ln())
        .sum::<f64>()
        / wsum;
    Some((mean_log.exp(), (1.0 / wsum).sqrt()))
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    /// Group factors where every cell is `f` (a flat pattern has factors of 1).
    fn flat(f: f64) -> GroupFactors {
        GroupFactors {
            dow_month: [[f; 12]; 7],
            dow_month_cv: [[Some(0.05); 12]; 7],
            day_cv: Some(0.08),
            stations: 5,
        }
    }

    fn date(y: i32, m: u32, d: u32) -> NaiveDate {
        NaiveDate::from_ymd_opt(y, m, d).unwrap()
    }

    // The worked TMG example (tests/fixtures/REFERENCES.md §1.5 / §2.4) runs end to end, factors computed by
    // the tool from the worked year, in tests/tmg_reference.rs.

    /// Axle correction (tests/fixtures/REFERENCES.md §2.2, computed; TMG §3 / FHWA Pocket Guide p. 12 from memory):
    /// 1,000 vehicles carrying 2,300 axles give ACF = 1000 / (2300 / 2) = 0.8696; a tube count of
    /// 2,300 hits on a flat pattern therefore expands back to 1,000 vehicles.
    #[test]
    fn axle_correction_hand_example() {
        let acf = 1000.0 / (2300.0 / 2.0);
        assert_relative_eq!(acf, 0.8696, epsilon = 1e-4);
        let count = ShortCount {
            periods: vec![CountPeriod::day(date(2024, 5, 14), 2300.0)],
            measure: Measure::Axles { acf, cv: 0.03 },
            year: 2024,
        };
        let e = expand(
            &count,
            &flat(1.0),
            Growth::NONE,
            &ExpansionParams::default(),
        )
        .unwrap();
        assert_relative_eq!(e.aadt, 1000.0, max_relative = 1e-12);
    }

    /// Growth (tests/fixtures/REFERENCES.md §2.3, common practice): a 2022 count of 10,000 brought to 2025 at
    /// 2 %/yr compound is 10,000 × 1.02³ = 10,612.08.
    #[test]
    fn growth_hand_example() {
        let count = ShortCount {
            periods: vec![CountPeriod::day(date(2022, 4, 12), 10_000.0)],
            measure: Measure::Vehicles,
            year: 2022,
        };
        let growth = Growth {
            factor: 1.02f64.powi(3),
            log_sd: 0.01,
        };
        let p = ExpansionParams::default();
        let e = expand_for_year(&count, &flat(1.0), growth, 2025, &p).unwrap();
        assert_relative_eq!(e.aadt, 10_612.08, max_relative = 1e-6);
        let current = expand(&count, &flat(1.0), Growth::NONE, &p).unwrap();
        assert!(
            e.log_sd > current.log_sd,
            "older counts carry wider intervals"
        );
    }

    #[test]
    fn longer_counts_have_narrower_intervals_and_intervals_are_asymmetric() {
        let p = ExpansionParams::default();
        let mk = |n: u32| ShortCount {
            periods: (0..n)
                .map(|k| CountPeriod::day(date(2025, 5, 13 + k), 5000.0))
                .collect(),
            measure: Measure::Vehicles,
            year: 2025,
        };
        let one = expand(&mk(1), &flat(1.0), Growth::NONE, &p).unwrap();
        let three = expand(&mk(3), &flat(1.0), Growth::NONE, &p).unwrap();
        assert!(three.log_sd < one.log_sd);
        let (lo, hi) = one.interval95(1.0);
        assert!(lo > 0.0 && hi - 5000.0 > 5000.0 - lo);
    }

    #[test]
    fn a_count_started_mid_morning_is_cut_into_straddling_periods() {
        let mut hours = Vec::new();
        for k in 0..50u32 {
            let h = 10 + k;
            hours.push(CountHour {
                date: date(2025, 5, 13 + h / 24),
                volume: 100.0,
                follows: k != 0,
            });
        }
        let ps = periods(&hours);
        assert_eq!(ps.len(), 2, "50 hours give two full periods");
        assert_relative_eq!(ps[0].volume, 2400.0);
        assert_eq!(ps[0].parts.len(), 2);
        assert_relative_eq!(ps[0].parts[0].1, 14.0 / 24.0, epsilon = 1e-12);
        let mut g = flat(1.0);
        g.dow_month[1][4] = 1.2; // Tuesday in May
        g.dow_month[2][4] = 0.9; // Wednesday in May
        let c = ShortCount {
            periods: ps,
            measure: Measure::Vehicles,
            year: 2025,
        };
        let e = expand(&c, &g, Growth::NONE, &ExpansionParams::default()).unwrap();
        let f1 = 14.0 / 24.0 * 1.2 + 10.0 / 24.0 * 0.9;
        let f2 = 14.0 / 24.0 * 0.9 + 10.0 / 24.0 * 1.0;
        assert_relative_eq!(e.aadt, 2400.0 * (f1 + f2) / 2.0, max_relative = 1e-12);
        let gap: Vec<CountHour> = hours
            .iter()
            .enumerate()
            .map(|(i, h)| CountHour {
                follows: i != 0 && i != 20,
                ..*h
            })
            .collect();
        assert_eq!(periods(&gap).len(), 1, "a gap restarts the 24-hour run");
    }

    #[test]
    fn combining_weights_by_precision() {
        let a = Expanded {
            aadt: 1000.0,
            log_sd: 0.05,
            days: 3,
        };
        let b = Expanded {
            aadt: 2000.0,
            log_sd: 0.50,
            days: 1,
        };
        let (v, sd) = combine(&[a.clone(), b]).unwrap();
        assert!(
            v > 1000.0 && v < 1100.0,
            "dominated by the precise count: {v}"
        );
        assert!(sd < a.log_sd);
        assert!(combine(&[]).is_none());
    }
}
