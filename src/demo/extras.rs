//! `study.toml`, `history.csv`, `toll.csv` and the truth tables.
//!
//! # Method
//!
//! History: published AADT of year `y` = true AADT / (1 + growth)^(year - y) x exp(walk) x
//! error. The walk departs from the growth trend by N(0, 0.03) a year (the level of a road
//! changes beyond its trend); the error is lognormal, log sd 0.02 for a continuous counter's
//! segment (all five earlier years) and 0.09 for a coverage count (an expanded short count).
//! Coverage counts rotate on a three-year cycle over 85 % of the principal arterials and
//! above, 60 % of minor arterials, 35 % of major collectors and 12 % of the rest.
//!
//! Toll: monthly billing for each tolled segment and vehicle group; the true passages are the
//! vehicles that passed, summed over the month, both directions (the counter's drawn vehicles
//! before faults where there is a counter, else expected volume x a day factor, CV 8 %);
//! billed = true x (1 + N(0, 1 %)), except exactly one row billed at true x 1.10.
//!
//! # Units
//!
//! Vehicles per day (AADT), vehicles per billing period (toll), fractions (shares, growth).

use super::disturbances::Plan;
use std::path::{Path, PathBuf};

use chrono::{Datelike, NaiveDate};
use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, LogNormal, Normal};

use super::counts::{mean_one_lognormal, Passages, StationPlan, DAY_CV};
use super::network::Network;
use super::patterns::{days_of_year, Pattern};
use super::sink::{self, CsvSink};
use super::{DemoError, DemoParams};

/// Seed offset of the day factors of tolled segments without a counter.
pub(crate) const TOLL_STREAM: u64 = 0x746f_6c6c_0000_0001;

/// Years of history before the study year.
const HISTORY_YEARS: i32 = 5;

pub(crate) fn write_study_toml(out: &Path, params: &DemoParams) -> Result<PathBuf, DemoError> {
    let holidays: Vec<String> = super::patterns::HOLIDAYS
        .iter()
        .map(|(m, d)| format!("\"{m:02}-{d:02}\""))
        .collect();
    let text = format!(
        "# Invented demo study from roadtally's demo generator (seed {}, size {:?}); \
         every place, road and figure is made up.\nyear = {}\n\n[qc]\n\
         # The invented region's public holidays (month-day): New Year, Founders' Day, \
         Lantern Day, Harvest Day, Midwinter Day.\nholidays = [{}]\n",
        params.seed,
        params.size,
        params.year,
        holidays.join(", ")
    );
    sink::write_text(out.join("study.toml"), &text)
}

pub(crate) fn write_history(
    rng: &mut ChaCha8Rng,
    out: &Path,
    net: &Network,
    plan: &StationPlan,
    year: i32,
) -> Result<PathBuf, DemoError> {
    let mut sink = CsvSink::create(out.join("history.csv"), &["segment_id", "year", "aadt"])?;
    let counter_error = LogNormal::new(0.0, 0.02).expect("finite sd");
    let coverage_error = LogNormal::new(0.0, 0.09).expect("finite sd");
    let drift = Normal::new(0.0, 0.03).expect("finite sd");
    let mut counted = vec![false; net.segments.len()];
    for c in &plan.continuous {
        counted[c.segment] = true;
    }
    let growth: Vec<f64> = Pattern::all().iter().map(|p| p.growth).collect();
    for (s, seg) in net.segments.iter().enumerate() {
        let every_year = counted[s];
        let covered = match seg.class {
            1..=3 => 0.85,
            4 => 0.6,
            5 => 0.35,
            _ => 0.12,
        };
        if !every_year && !rng.gen_bool(covered) {
            continue;
        }
        let phase = rng.gen_range(0..3);
        // The level departs from the trend year by year (new building, a changed route).
        let mut walk = 0.0;
        for y in ((year - HISTORY_YEARS)..year).rev() {
            walk += drift.sample(rng);
            if !every_year && (year - y + phase) % 3 != 0 {
                continue;
            }
            let error = if every_year {
                counter_error.sample(rng)
            } else {
                coverage_error.sample(rng)
            };
            let g = growth[seg.pattern];
            let aadt = seg.aadt / (1.0 + g).powi(year - y) * f64::exp(walk) * error;
            sink.row([
                seg.id.clone(),
                y.to_string(),
                format!("{}", aadt.round().max(1.0)),
            ])?;
        }
    }
    sink.finish()
}

/// One billing row with its truth.
struct TollRow {
    segment: String,
    from: NaiveDate,
    to: NaiveDate,
    group: &'static str,
    true_vehicles: u64,
    billed: u64,
    misbilled: bool,
}

/// Writes `toll.csv` and `truth/toll_truth.csv`. Exactly one segment-month is billed 10 %
/// high, on a tolled segment with a permanent counter (`counted`) where there is one: the
/// case an audit with measured days must detect.
///
/// The true passages are the vehicles that really passed, as a toll system counts them: on a
/// segment with a counter the day's drawn vehicles before any fault (`passages`), elsewhere
/// the expected volume times a day factor of the same spread as the counts' (drawn from
/// `day_rng`, a stream of its own).
#[allow(clippy::too_many_arguments)]
pub(crate) fn write_toll(
    rng: &mut ChaCha8Rng,
    day_rng: &mut ChaCha8Rng,
    out: &Path,
    net: &Network,
    pats: &[Pattern],
    disturb: &Plan,
    passages: &Passages,
    counted: &[usize],
    year: i32,
) -> Result<Vec<PathBuf>, DemoError> {
    let days = days_of_year(year);
    let noise = Normal::new(0.0, 0.01).expect("finite sd");
    let day_factor = mean_one_lognormal(DAY_CV);
    let mut rows = Vec::new();
    for &s in &net.tolled {
        let seg = &net.segments[s];
        let pattern = &pats[seg.pattern];
        let norm = pattern.norm(year);
        let heavy = seg.heavy_share();
        let mut passed = |d: NaiveDate| -> (f64, f64) {
            if let Some(&p) = passages.get(&(s, d)) {
                return p;
            }
            let v = seg.aadt
                * pattern.day_level(d, norm)
                * disturb.day_share(s, pattern, d)
                * day_factor.sample(day_rng);
            (v * (1.0 - heavy), v * heavy)
        };
        for month in 1..=12 {
            let in_month: Vec<NaiveDate> = days
                .iter()
                .copied()
                .filter(|d| d.month() == month)
                .collect();
            let (light, heavy) = in_month
                .iter()
                .map(|&d| passed(d))
                .fold((0.0, 0.0), |(l, h), (dl, dh)| (l + dl, h + dh));
            for (group, vehicles) in [("light", light), ("heavy", heavy)] {
                let true_vehicles = vehicles.round();
                let billed = (true_vehicles * (1.0 + noise.sample(rng))).round();
                rows.push(TollRow {
                    segment: seg.id.clone(),
                    from: in_month[0],
                    to: *in_month.last().expect("months have days"),
                    group,
                    true_vehicles: true_vehicles as u64,
                    billed: billed.max(0.0) as u64,
                    misbilled: false,
                });
            }
        }
    }
    let on_counter: Vec<usize> = (0..rows.len())
        .filter(|&k| {
            counted
                .iter()
                .any(|&c| net.segments[c].id == rows[k].segment)
        })
        .collect();
    if !rows.is_empty() {
        let k = if on_counter.is_empty() {
            rng.gen_range(0..rows.len())
        } else {
            on_counter[rng.gen_range(0..on_counter.len())]
        };
        rows[k].billed = (rows[k].true_vehicles as f64 * 1.10).round() as u64;
        rows[k].misbilled = true;
    }
    let mut toll = CsvSink::create(
        out.join("toll.csv"),
        &[
            "segment_id",
            "from_date",
            "to_date",
            "vehicle_group",
            "billed_vehicles",
        ],
    )?;
    let mut truth = CsvSink::create(
        out.join("truth/toll_truth.csv"),
        &[
            "segment_id",
            "from_date",
            "to_date",
            "vehicle_group",
            "true_vehicles",
            "billed_vehicles",
            "misbilled",
        ],
    )?;
    for r in &rows {
        let (from, to) = (r.from.to_string(), r.to.to_string());
        let billed = r.billed.to_string();
        toll.row([r.segment.as_str(), &from, &to, r.group, &billed])?;
        truth.row([
            r.segment.as_str(),
            &from,
            &to,
            r.group,
            &r.true_vehicles.to_string(),
            &billed,
            if r.misbilled { "true" } else { "false" },
        ])?;
    }
    Ok(vec![toll.finish()?, truth.finish()?])
}

/// Writes `truth/segment_truth.csv`.
pub(crate) fn write_segment_truth(
    out: &Path,
    net: &Network,
    pats: &[Pattern],
    disturb: &Plan,
    year: i32,
) -> Result<PathBuf, DemoError> {
    let mut sink = CsvSink::create(
        out.join("truth/segment_truth.csv"),
        &[
            "segment_id",
            "pattern",
            "true_aadt",
            "true_heavy_share",
            "true_single_unit_share",
            "true_combination_share",
            "growth_rate",
        ],
    )?;
    for (i, s) in net.segments.iter().enumerate() {
        let p = &pats[s.pattern];
        // The traffic that happened: disturbances included.
        let aadt = s.aadt * disturb.annual_effect(i, p, year);
        sink.row([
            s.id.clone(),
            p.name.to_string(),
            format!("{aadt}"),
            format!("{:.5}", s.heavy_share()),
            format!("{:.5}", s.single_unit_share()),
            format!("{:.5}", s.combination_share()),
            format!("{}", p.growth),
        ])?;
    }
    sink.finish()
}

/// Writes `truth/patterns.csv` (monthly and weekday factors per pattern) and
/// `truth/weekday_month_factors.csv` (the 7 x 12 table per pattern).
pub(crate) fn write_pattern_truth(
    out: &Path,
    pats: &[Pattern],
    year: i32,
) -> Result<Vec<PathBuf>, DemoError> {
    let mut header = vec!["pattern".to_string(), "growth_rate".to_string()];
    header.extend((1..=12).map(|m| format!("month_{m}")));
    header.extend((1..=7).map(|w| format!("weekday_{w}")));
    let refs: Vec<&str> = header.iter().map(String::as_str).collect();
    let mut summary = CsvSink::create(out.join("truth/patterns.csv"), &refs)?;
    let mut table = CsvSink::create(
        out.join("truth/weekday_month_factors.csv"),
        &["pattern", "month", "weekday", "factor"],
    )?;
    for p in pats {
        let mut row = vec![p.name.to_string(), p.growth.to_string()];
        row.extend(p.monthly_factors(year).iter().map(|f| format!("{f:.6}")));
        row.extend(p.weekday_factors(year).iter().map(|f| format!("{f:.6}")));
        summary.row(&row)?;
        for month in 1..=12 {
            for weekday in 1..=7 {
                let f = p.weekday_month_factor(year, month, weekday);
                table.row([
                    p.name.to_string(),
                    month.to_string(),
                    weekday.to_string(),
                    format!("{f:.6}"),
                ])?;
            }
        }
    }
    Ok(vec![summary.finish()?, table.finish()?])
}
