//! Short-count expansion checked end to end against the worked year of tests/fixtures/REFERENCES.md §1.5 and
//! the factor values of §2.4 (TMG factor definitions and Eq. 3-1 style expansion, FHWA
//! Traffic Monitoring Guide 2016 §3, from memory; the numbers are computed and exact).
//!
//! The factors are not written into the test: they are computed by the tool from a year of
//! daily volumes (`compute_aadt` then `factors`), then a short count is expanded with them.
//! A group of one station has the station's own factors (the group factor is the mean of
//! its members' factors, common practice).

use approx::assert_relative_eq;
use chrono::{Datelike, NaiveDate};
use roadtally::continuous::{compute_aadt, DayVolume, StationFactors, SufficiencyRule};
use roadtally::expansion::{
    expand, periods, CountHour, ExpansionParams, GroupFactors, Growth, Measure, ShortCount,
};

/// tests/fixtures/REFERENCES.md §1.5: monthly multipliers (mean 1.00).
const M: [f64; 12] = [
    0.80, 0.85, 0.95, 1.00, 1.05, 1.10, 1.20, 1.15, 1.05, 1.00, 0.95, 0.90,
];

/// tests/fixtures/REFERENCES.md §1.5: daily volume Mon–Fri 10,000, Sat 8,000, Sun 6,000, times M[month].
fn volume(d: NaiveDate) -> f64 {
    let base = match d.weekday().num_days_from_monday() {
        0..=4 => 10_000.0,
        5 => 8_000.0,
        _ => 6_000.0,
    };
    base * M[d.month0() as usize]
}

fn date(y: i32, m: u32, d: u32) -> NaiveDate {
    NaiveDate::from_ymd_opt(y, m, d).unwrap()
}

/// The tool's factors of the §1.5 year.
fn station_factors() -> StationFactors {
    let days: Vec<DayVolume> = date(2023, 1, 1)
        .iter_days()
        .take_while(|d| d.year() == 2023)
        .map(|d| DayVolume {
            date: d,
            vehicles: volume(d),
        })
        .collect();
    let r = compute_aadt(2023, &days, &SufficiencyRule::default()).unwrap();
    // tests/fixtures/REFERENCES.md §1.5: AASHTO AADT of the complete year = 64000/7 = 9142.857.
    assert_relative_eq!(r.aashto.unwrap(), 64_000.0 / 7.0, max_relative = 1e-9);
    r.factors().expect("a complete year gives factors")
}

fn group_of_one(f: &StationFactors) -> GroupFactors {
    GroupFactors {
        dow_month: f.dow_by_month,
        dow_month_cv: [[None; 12]; 7],
        day_cv: None,
        stations: 1,
    }
}

/// Cuts `hours` into periods, expects two, and expands them to the §1.5 AADT (exact recovery).
fn assert_recovers_the_aadt(hours: &[CountHour], g: &GroupFactors) {
    let count = ShortCount {
        periods: periods(hours),
        measure: Measure::Vehicles,
        year: 2023,
    };
    assert_eq!(count.periods.len(), 2);
    let e = expand(&count, g, Growth::NONE, &ExpansionParams::default()).unwrap();
    assert_relative_eq!(e.aadt, 64_000.0 / 7.0, max_relative = 1e-9);
    assert_eq!(e.days, 2);
}

/// tests/fixtures/REFERENCES.md §2.4: F(Tue, Jul) = 0.7619 and a 48-hour Tue–Wed July count of 12,000 per day
/// expands to 9142.857 (exact recovery), the same as MF × DF = 0.8333 × 0.9143.
#[test]
fn a_48_hour_july_count_expands_to_the_published_aadt() {
    let f = station_factors();
    assert_relative_eq!(f.monthly[6], 0.8333, max_relative = 1e-4);
    assert_relative_eq!(f.day_of_week[1], 0.9143, max_relative = 1e-4);
    let g = group_of_one(&f);
    let (tue, wed) = (date(2023, 7, 11), date(2023, 7, 12));
    assert_relative_eq!(g.factor(tue), 0.7619, max_relative = 1e-4);
    let hours: Vec<CountHour> = [tue, wed]
        .iter()
        .flat_map(|&d| {
            (0..24).map(move |k| CountHour {
                date: d,
                volume: volume(d) / 24.0,
                follows: !(d == tue && k == 0),
            })
        })
        .collect();
    assert_recovers_the_aadt(&hours, &g);
}

/// A count from Friday noon to Sunday noon: each 24-hour period straddles two days, and each
/// day's hours are factored by that day's factor (module docs of `expansion`). Each day's
/// part then recovers its share of the AADT exactly (F = AADT / V per day, tests/fixtures/REFERENCES.md §2.1),
/// so the count expands to the §1.5 AADT to 1e-9 although its days differ by 40 % in volume
/// (a mean of the two days' factors weighted by hours would be 1.7 % high here).
#[test]
fn a_count_started_at_noon_straddles_days_and_recovers_the_aadt() {
    let g = group_of_one(&station_factors());
    let (fri, sat, sun) = (date(2023, 3, 10), date(2023, 3, 11), date(2023, 3, 12));
    let mut hours = Vec::new();
    for (d, from, to) in [(fri, 12, 24), (sat, 0, 24), (sun, 0, 12)] {
        for _ in from..to {
            hours.push(CountHour {
                date: d,
                volume: volume(d) / 24.0,
                follows: !hours.is_empty(),
            });
        }
    }
    assert_recovers_the_aadt(&hours, &g);
}
