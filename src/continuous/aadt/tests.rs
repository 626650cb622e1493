//! Unit and property tests of the station AADT, the verdict and the factors; the
//! synthetic year here is shared with the class and factor-group tests.

use chrono::{Datelike, NaiveDate};

use super::*;
use crate::continuous::{ContinuousError, DayVolume};
use approx::assert_relative_eq;
use proptest::prelude::*;

/// refs §1.5 monthly multipliers.
pub(crate) const M: [f64; 12] = [
    0.80, 0.85, 0.95, 1.00, 1.05, 1.10, 1.20, 1.15, 1.05, 1.00, 0.95, 0.90,
];

/// refs §1.5 base by weekday: Mon–Fri 10,000, Sat 8,000, Sun 6,000.
pub(crate) fn base(dow: usize) -> f64 {
    match dow {
        0..=4 => 10_000.0,
        5 => 8_000.0,
        _ => 6_000.0,
    }
}

/// refs §1.5 synthetic 2023 year, filtered by `keep`.
pub(crate) fn synthetic_year(keep: impl Fn(NaiveDate) -> bool) -> Vec<DayVolume> {
    let mut out = Vec::new();
    let mut d = NaiveDate::from_ymd_opt(2023, 1, 1).unwrap();
    while d.year() == 2023 {
        if keep(d) {
            let (i, j) = cell_of(d);
            out.push(DayVolume {
                date: d,
                vehicles: base(i) * M[j],
            });
        }
        d = d.succ_opt().unwrap();
    }
    out
}

fn rule() -> SufficiencyRule {
    SufficiencyRule::default()
}

#[test]
fn refs_1_5_complete_year() {
    // Source: tests/fixtures/REFERENCES.md §1.5 / §11 #1 (computed; TMG 2022 App. L formula).
    // The printed figures carry 3 decimals, so they are compared at 1e-7 relative
    // (half a unit of the last digit is 5.5e-8 of 9144); the exact identities
    // (AASHTO = 64000/7, calendar-weighted = simple) are checked at 1e-9 / 1e-12.
    let r = compute_aadt(2023, &synthetic_year(|_| true), &rule()).unwrap();
    assert_relative_eq!(r.aashto.unwrap(), 64_000.0 / 7.0, max_relative = 1e-9);
    assert_relative_eq!(r.aashto.unwrap(), 9142.857, max_relative = 1e-7);
    assert_relative_eq!(r.simple, 9144.110, max_relative = 1e-7);
    assert_relative_eq!(r.calendar_weighted.unwrap(), 9144.110, max_relative = 1e-7);
    assert_relative_eq!(r.calendar_weighted.unwrap(), r.simple, max_relative = 1e-12);
    assert_eq!(r.sufficiency, Sufficiency::Full);
    assert_eq!(r.days_used, 365);
}

#[test]
fn refs_1_5_july_first_week_only() {
    // Source: tests/fixtures/REFERENCES.md §1.5 / §11 #2 (computed).
    let days = synthetic_year(|d| d.month() != 7 || d.day() <= 7);
    assert_eq!(days.len(), 341);
    let r = compute_aadt(2023, &days, &rule()).unwrap();
    assert_relative_eq!(r.aashto.unwrap(), 9142.857, max_relative = 1e-7);
    assert_relative_eq!(r.simple, 9027.566, max_relative = 1e-7);
    assert_relative_eq!(r.calendar_weighted.unwrap(), 9144.110, max_relative = 1e-7);
    assert_eq!(r.sufficiency, Sufficiency::Full);
}

#[test]
fn refs_1_5_q1_weekends_thinned() {
    // Source: tests/fixtures/REFERENCES.md §1.5 / §11 #2: Jan–Mar keep only the first Sat and Sun.
    let days = synthetic_year(|d| {
        let (i, j) = cell_of(d);
        !(j < 3 && i >= 5 && d.day() > 7)
    });
    assert_eq!(days.len(), 346);
    let r = compute_aadt(2023, &days, &rule()).unwrap();
    assert_relative_eq!(r.aashto.unwrap(), 9142.857, max_relative = 1e-7);
    assert_relative_eq!(r.simple, 9316.763, max_relative = 1e-7);
    assert_relative_eq!(r.calendar_weighted.unwrap(), 9144.110, max_relative = 1e-7);
}

#[test]
fn refs_2_4_factors() {
    // Source: tests/fixtures/REFERENCES.md §2.4 / §11 #3 (TMG factor definitions, from memory; computed).
    let r = compute_aadt(2023, &synthetic_year(|_| true), &rule()).unwrap();
    let f = r.factors().unwrap();
    assert_relative_eq!(f.monthly[0], 1.25, max_relative = 1e-4);
    assert_relative_eq!(f.monthly[6], 0.8333, max_relative = 1e-4);
    for i in 0..5 {
        assert_relative_eq!(f.day_of_week[i], 0.9143, max_relative = 1e-4);
    }
    assert_relative_eq!(f.day_of_week[5], 1.1429, max_relative = 1e-4);
    assert_relative_eq!(f.day_of_week[6], 1.5238, max_relative = 1e-4);
    assert_relative_eq!(f.dow_by_month[1][6], 0.7619, max_relative = 1e-4);
    assert_relative_eq!(r.madt[6].unwrap(), 9142.857 * 1.2, max_relative = 1e-7);
    // 48-h Tue–Wed July count of 12,000 per day: factor each day, average.
    let tue = NaiveDate::from_ymd_opt(2023, 7, 11).unwrap();
    let wed = NaiveDate::from_ymd_opt(2023, 7, 12).unwrap();
    let est = (12_000.0 * f.factor_for(tue) + 12_000.0 * f.factor_for(wed)) / 2.0;
    assert_relative_eq!(est, 9142.857, max_relative = 1e-6);
    assert_relative_eq!(
        12_000.0 * f.month_times_dow(tue),
        9142.857,
        max_relative = 1e-6
    );
}

#[test]
fn empty_cell_is_imputed_exactly_for_a_multiplicative_pattern() {
    // Project rule (module docs): drop every Tuesday of March; the imputation from
    // March's other weekdays × weekday ratio recovers the cell exactly.
    let days = synthetic_year(|d| !(d.month() == 3 && cell_of(d).0 == 1));
    let r = compute_aadt(2023, &days, &rule()).unwrap();
    assert_eq!(
        r.sufficiency,
        Sufficiency::Imputed {
            cells: vec![MadwCell { dow: 1, month: 2 }],
            dropped_months: vec![]
        }
    );
    assert!(r.imputed[1][2]);
    assert_relative_eq!(r.madw[1][2].unwrap(), 10_000.0 * 0.95, max_relative = 1e-12);
    assert_relative_eq!(r.aashto.unwrap(), 64_000.0 / 7.0, max_relative = 1e-12);
    assert!(r.factors().is_some());
}

#[test]
fn imputation_forbidden_gives_insufficient() {
    let days = synthetic_year(|d| !(d.month() == 3 && cell_of(d).0 == 1));
    let rule = SufficiencyRule {
        allow_imputed_cells: false,
        ..SufficiencyRule::default()
    };
    let r = compute_aadt(2023, &days, &rule).unwrap();
    assert_eq!(
        r.sufficiency,
        Sufficiency::Insufficient {
            reason: InsufficiencyReason::ImputationNotAllowed { empty_cells: 1 }
        }
    );
    assert!(r.factors().is_none());
    assert!(r.aashto.is_some());
}

#[test]
fn partial_year_reports_aadt_but_no_factors() {
    // Station that ran only January–June.
    let days = synthetic_year(|d| d.month() <= 6);
    let r = compute_aadt(2023, &days, &rule()).unwrap();
    assert_eq!(
        r.sufficiency,
        Sufficiency::Insufficient {
            reason: InsufficiencyReason::TooFewMonths {
                present: 6,
                required: 12
            }
        }
    );
    assert!(!r.sufficiency.usable_for_factors());
    assert_eq!(r.sufficiency.label(), "partial_year");
    let m_mean: f64 = M[..6].iter().sum::<f64>() / 6.0;
    assert_relative_eq!(
        r.aashto.unwrap(),
        64_000.0 / 7.0 * m_mean,
        max_relative = 1e-12
    );
    assert!(r.factors().is_none());
    assert!(r.madt[7].is_none());
}

#[test]
fn fewer_required_months_drops_months() {
    let days = synthetic_year(|d| d.month() != 2);
    let rule = SufficiencyRule {
        required_months: 11,
        ..SufficiencyRule::default()
    };
    let r = compute_aadt(2023, &days, &rule).unwrap();
    assert_eq!(
        r.sufficiency,
        Sufficiency::Imputed {
            cells: vec![],
            dropped_months: vec![1]
        }
    );
    assert!(!r.sufficiency.usable_for_factors());
}

#[test]
fn min_days_per_cell_and_too_many_empty_cells() {
    // Only the first week of every month: each cell has 1 day.
    let days = synthetic_year(|d| d.day() <= 7);
    let rule2 = SufficiencyRule {
        min_days_per_cell: 2,
        ..SufficiencyRule::default()
    };
    let r = compute_aadt(2023, &days, &rule2).unwrap();
    assert_eq!(
        r.sufficiency,
        Sufficiency::Insufficient {
            reason: InsufficiencyReason::TooFewMonths {
                present: 0,
                required: 12
            }
        }
    );
    assert!(r.aashto.is_none());
    assert!(r.calendar_weighted.is_none());
    assert_relative_eq!(
        r.simple,
        days.iter().map(|d| d.vehicles).sum::<f64>() / 84.0
    );
    // Drop the Sundays of Jan–Mar (3 cells) and the Mondays of Mar–Dec (10 cells): 13 > 12.
    let days = synthetic_year(|d| {
        let (i, j) = cell_of(d);
        !((i == 6 && j < 3) || (i == 0 && j >= 2))
    });
    let r = compute_aadt(2023, &days, &rule()).unwrap();
    assert_eq!(
        r.sufficiency,
        Sufficiency::Insufficient {
            reason: InsufficiencyReason::TooManyEmptyCells {
                empty_cells: 13,
                max: 12
            }
        }
    );
}

#[test]
fn no_complete_month_cannot_impute() {
    // Every month misses its Sunday cell.
    let days = synthetic_year(|d| cell_of(d).0 != 6);
    let rule = SufficiencyRule {
        max_imputed_cells: 84,
        ..SufficiencyRule::default()
    };
    let r = compute_aadt(2023, &days, &rule).unwrap();
    assert_eq!(
        r.sufficiency,
        Sufficiency::Insufficient {
            reason: InsufficiencyReason::NoCompleteMonth
        }
    );
    assert!(r.adt_dow[6].is_none());
}

#[test]
fn input_errors() {
    let d = NaiveDate::from_ymd_opt(2023, 5, 1).unwrap();
    assert_eq!(
        compute_aadt(2023, &[], &rule()),
        Err(ContinuousError::NoData)
    );
    let dup = [
        DayVolume {
            date: d,
            vehicles: 1.0,
        },
        DayVolume {
            date: d,
            vehicles: 2.0,
        },
    ];
    assert_eq!(
        compute_aadt(2023, &dup, &rule()),
        Err(ContinuousError::DuplicateDate { date: d })
    );
    assert!(matches!(
        compute_aadt(2024, &dup[..1], &rule()),
        Err(ContinuousError::OutsideYear { .. })
    ));
    let bad = [DayVolume {
        date: d,
        vehicles: f64::NAN,
    }];
    assert!(matches!(
        compute_aadt(2023, &bad, &rule()),
        Err(ContinuousError::BadVolume { .. })
    ));
}

/// The §1.5 year spread over 24 hours with a fixed hourly profile, one-way.
fn synthetic_hours(keep: impl Fn(NaiveDate, u8) -> bool) -> Vec<crate::continuous::HourVolume> {
    let profile: [f64; 24] = std::array::from_fn(|h| 1.0 + (h as f64 - 11.5).abs());
    let total: f64 = profile.iter().sum();
    let mut out = Vec::new();
    for d in synthetic_year(|_| true) {
        for h in 0..24u8 {
            if keep(d.date, h) {
                out.push(crate::continuous::HourVolume {
                    date: d.date,
                    clock_hour: h,
                    repeat: 0,
                    fwd: d.vehicles * profile[usize::from(h)] / total,
                    rev: None,
                    heavy: None,
                });
            }
        }
    }
    out
}

#[test]
fn calendar_weighted_hourly_form_matches_daily_and_uses_partial_days() {
    // tests/fixtures/REFERENCES.md §1.3: with complete days the hourly form equals the daily form
    // (9144.110, §1.5); partial days (here: every 4th day of July loses its evening
    // hours) still enter hour by hour and leave the result unchanged.
    let full = calendar_weighted_hourly(2023, &synthetic_hours(|_, _| true))
        .unwrap()
        .unwrap();
    assert_relative_eq!(full, 9144.110, max_relative = 1e-7);
    let daily = compute_aadt(2023, &synthetic_year(|_| true), &rule()).unwrap();
    assert_relative_eq!(full, daily.calendar_weighted.unwrap(), max_relative = 1e-12);
    let partial = calendar_weighted_hourly(
        2023,
        &synthetic_hours(|d, h| !(d.month() == 7 && d.day() % 4 == 0 && h >= 18)),
    )
    .unwrap()
    .unwrap();
    assert_relative_eq!(partial, 9144.110, max_relative = 1e-7);
    assert_eq!(
        calendar_weighted_hourly(2023, &[]),
        Err(ContinuousError::NoData)
    );
}

fn flat_year(year: i32, v: f64) -> Vec<DayVolume> {
    let mut out = Vec::new();
    let mut d = NaiveDate::from_ymd_opt(year, 1, 1).unwrap();
    while d.year() == year {
        out.push(DayVolume {
            date: d,
            vehicles: v,
        });
        d = d.succ_opt().unwrap();
    }
    out
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(24))]

    /// style.md habit 10: a flat year gives every factor 1 and AADT = the volume.
    #[test]
    fn flat_year_gives_unit_factors(v in 1.0f64..1.0e5, year in 2000i32..2040) {
        let r = compute_aadt(year, &flat_year(year, v), &rule()).unwrap();
        prop_assert!((r.aashto.unwrap() - v).abs() <= 1e-9 * v);
        prop_assert!((r.simple - v).abs() <= 1e-9 * v);
        prop_assert!((r.calendar_weighted.unwrap() - v).abs() <= 1e-9 * v);
        let f = r.factors().unwrap();
        for x in f.monthly.iter().chain(f.day_of_week.iter()).chain(f.dow_by_month.iter().flatten()) {
            prop_assert!((x - 1.0).abs() <= 1e-9);
        }
    }

    /// style.md habit 10: day order does not change results.
    #[test]
    fn day_order_does_not_matter(
        days in Just(synthetic_year(|d| d.day() % 3 != 0)).prop_shuffle()
    ) {
        let reference = compute_aadt(2023, &synthetic_year(|d| d.day() % 3 != 0), &rule()).unwrap();
        let r = compute_aadt(2023, &days, &rule()).unwrap();
        prop_assert_eq!(&r.sufficiency, &reference.sufficiency);
        prop_assert!((r.aashto.unwrap() - reference.aashto.unwrap()).abs() <= 1e-9 * reference.aashto.unwrap());
        prop_assert!((r.simple - reference.simple).abs() <= 1e-9 * reference.simple);
        prop_assert!((r.calendar_weighted.unwrap() - reference.calendar_weighted.unwrap()).abs() <= 1e-9 * reference.simple);
    }
}
