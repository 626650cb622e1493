//! Vehicle-class statistics of a permanent counter: AADT per FHWA class, heavy /
//! single-unit / combination shares, heavy-vehicle factors, axles per vehicle and the
//! axle-correction factor.
//!
//! # Method
//! - AADT per class: the AASHTO 84-cell method ([`super::aadt::compute_aadt`]) applied to
//!   each class's daily totals, with the same [`SufficiencyRule`]; all classes share the
//!   same days, hence the same verdict.
//! - Shares **of AADT**: `share_S = Σ_{c∈S} AADT_c / Σ_{c=1..13} AADT_c` with
//!   heavy S = classes 4-13, single-unit S = 4-7, combination S = 8-13 (HPMS grouping).
//! - Heavy-vehicle factors: the monthly, day-of-week and 84 factors of the AASHTO AADT of
//!   the daily heavy totals (classes 4-13), TMG convention (multiply a heavy short count).
//! - Axles: mean axles per vehicle `= axles / vehicles`; axle-correction factor
//!   `ACF = vehicles / (axles / 2) = 2 / (mean axles per vehicle)`; a tube's axle hits / 2
//!   multiplied by the ACF gives vehicles.
//!
//! # Units
//! Vehicles/day; axles; shares and factors dimensionless.
//!
//! # References
//! - FHWA TMG 2013 App. C vehicle types (read, `tests/fixtures/REFERENCES.md` §4); HPMS SU = 4-7, CU = 8-13
//!   (read, agency glossary citing the HPMS Field Manual, `tests/fixtures/REFERENCES.md` §4).
//! - ACF: TMG 2013 ch. 3, FHWA *Traffic Data Computation Method Pocket Guide* (2018) p. 12
//!   (from memory, `tests/fixtures/REFERENCES.md` §2.2).
//! - AASHTO method: TMG 2022 App. L (read).

use std::ops::RangeInclusive;

use chrono::NaiveDate;

use super::aadt::{compute_aadt, AadtResult, StationFactors, SufficiencyRule};
use super::{check_volume, ContinuousError, DayVolume};

/// Number of FHWA vehicle classes.
pub const FHWA_CLASSES: usize = 13;
/// Heavy vehicles (trucks and buses): FHWA classes 4-13.
pub const HEAVY: RangeInclusive<usize> = 4..=13;
/// Single-unit trucks and buses: FHWA classes 4-7.
pub const SINGLE_UNIT: RangeInclusive<usize> = 4..=7;
/// Combination trucks: FHWA classes 8-13.
pub const COMBINATION: RangeInclusive<usize> = 8..=13;

/// One accepted local day of a classifying station: vehicles per FHWA class.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ClassDay {
    /// Local date.
    pub date: NaiveDate,
    /// `by_class[c - 1]` = vehicles of FHWA class `c` that day.
    pub by_class: [f64; FHWA_CLASSES],
}

/// Class statistics of one station for one year.
#[derive(Debug, Clone, PartialEq)]
pub struct ClassAadt {
    /// AASHTO AADT per class, `per_class[c - 1]`; `None` where no cell has a value.
    pub per_class: [Option<f64>; FHWA_CLASSES],
    /// AADT result of the daily totals of all classes.
    pub total: AadtResult,
    /// AADT result of the daily heavy (4-13) totals.
    pub heavy: AadtResult,
    /// Share of AADT in classes 4-13.
    pub heavy_share: Option<f64>,
    /// Share of AADT in classes 4-7.
    pub single_unit_share: Option<f64>,
    /// Share of AADT in classes 8-13.
    pub combination_share: Option<f64>,
}

impl ClassAadt {
    /// Heavy-vehicle monthly, day-of-week and 84 factors (TMG convention), when the station
    /// is usable for factors and heavy volumes are positive in every cell.
    pub fn heavy_factors(&self) -> Option<StationFactors> {
        self.heavy.factors()
    }
}

/// AADT per FHWA class and class shares for `year` from daily class totals.
pub fn class_aadt(
    year: i32,
    days: &[ClassDay],
    rule: &SufficiencyRule,
) -> Result<ClassAadt, ContinuousError> {
    for d in days {
        for v in d.by_class {
            check_volume(d.date, v)?;
        }
    }
    let series = |f: &dyn Fn(&ClassDay) -> f64| -> Vec<DayVolume> {
        days.iter()
            .map(|d| DayVolume {
                date: d.date,
                vehicles: f(d),
            })
            .collect()
    };
    let total = compute_aadt(year, &series(&|d| d.by_class.iter().sum()), rule)?;
    let heavy = compute_aadt(year, &series(&|d| d.by_class[3..].iter().sum()), rule)?;
    let mut per_class = [None; FHWA_CLASSES];
    for (c, slot) in per_class.iter_mut().enumerate() {
        *slot = compute_aadt(year, &series(&|d| d.by_class[c]), rule)?.aashto;
    }
    let sum_over = |r: RangeInclusive<usize>| -> Option<f64> {
        r.map(|c| per_class[c - 1]).sum::<Option<f64>>()
    };
    let all = sum_over(1..=13).filter(|a| *a > 0.0);
    let share = |r| Some(sum_over(r)? / all?);
    Ok(ClassAadt {
        per_class,
        heavy_share: share(HEAVY),
        single_unit_share: share(SINGLE_UNIT),
        combination_share: share(COMBINATION),
        total,
        heavy,
    })
}

/// A classification or axle count used for axle correction: vehicles and axles counted.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct AxleSample {
    /// Vehicles counted.
    pub vehicles: f64,
    /// Axles counted on the same vehicles.
    pub axles: f64,
}

impl AxleSample {
    /// The sample's axle-correction factor (see [`axle_correction_factor`]).
    pub fn acf(&self) -> Option<f64> {
        axle_correction_factor(self.vehicles, self.axles)
    }
}

/// Mean axles per vehicle `= axles / vehicles`; `None` when vehicles ≤ 0.
pub fn mean_axles_per_vehicle(vehicles: f64, axles: f64) -> Option<f64> {
    (vehicles > 0.0 && axles.is_finite() && axles >= 0.0).then(|| axles / vehicles)
}

/// Axle-correction factor `ACF = vehicles / (axles / 2)`; `None` unless both are positive
/// finite numbers.
///
/// ```
/// let acf = roadtally::continuous::axle_correction_factor(1000.0, 2300.0).unwrap();
/// assert!((acf - 0.8696).abs() < 1e-4);
/// ```
pub fn axle_correction_factor(vehicles: f64, axles: f64) -> Option<f64> {
    (vehicles.is_finite() && vehicles > 0.0 && axles.is_finite() && axles > 0.0)
        .then(|| vehicles / (axles / 2.0))
}

#[cfg(test)]
mod tests {
    use super::super::aadt::tests::{base, synthetic_year, M};
    use super::super::aadt::{cell_of, Sufficiency};
    use super::*;
    use approx::assert_relative_eq;

    fn class_year() -> Vec<ClassDay> {
        // Split each §1.5 day into classes: 90 % class 2, 4 % class 5, 6 % class 9 on
        // weekdays; heavy traffic is flat all week (so heavy DF differ from total DF).
        synthetic_year(|_| true)
            .into_iter()
            .map(|d| {
                let (i, j) = cell_of(d.date);
                let mut c = [0.0; 13];
                let heavy = 1_000.0 * M[j];
                c[4] = 0.4 * heavy;
                c[8] = 0.6 * heavy;
                c[1] = base(i) * M[j] - heavy;
                ClassDay {
                    date: d.date,
                    by_class: c,
                }
            })
            .collect()
    }

    #[test]
    fn class_aadt_and_shares() {
        // Construction above: heavy AADT = 1000, total AADT = 64000/7 (refs §1.5).
        let r = class_aadt(2023, &class_year(), &SufficiencyRule::default()).unwrap();
        assert_eq!(r.total.sufficiency, Sufficiency::Full);
        assert_relative_eq!(
            r.total.aashto.unwrap(),
            64_000.0 / 7.0,
            max_relative = 1e-12
        );
        assert_relative_eq!(r.per_class[4].unwrap(), 400.0, max_relative = 1e-12);
        assert_relative_eq!(r.per_class[8].unwrap(), 600.0, max_relative = 1e-12);
        let heavy = 1000.0 / (64_000.0 / 7.0);
        assert_relative_eq!(r.heavy_share.unwrap(), heavy, max_relative = 1e-12);
        assert_relative_eq!(
            r.single_unit_share.unwrap(),
            0.4 * heavy,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            r.combination_share.unwrap(),
            0.6 * heavy,
            max_relative = 1e-12
        );
        let hf = r.heavy_factors().unwrap();
        assert_relative_eq!(hf.monthly[0], 1.25, max_relative = 1e-12);
        for df in hf.day_of_week {
            assert_relative_eq!(df, 1.0, max_relative = 1e-12);
        }
    }

    #[test]
    fn acf_refs_2_2() {
        // Source: tests/fixtures/REFERENCES.md §2.2 (computed): 1000 vehicles, 2300 axles → 0.8696.
        assert_relative_eq!(
            axle_correction_factor(1000.0, 2300.0).unwrap(),
            0.8696,
            max_relative = 1e-4
        );
        assert_relative_eq!(mean_axles_per_vehicle(1000.0, 2300.0).unwrap(), 2.3);
        assert_relative_eq!(
            AxleSample {
                vehicles: 1000.0,
                axles: 2300.0
            }
            .acf()
            .unwrap(),
            2.0 / 2.3,
            max_relative = 1e-12
        );
        assert!(axle_correction_factor(10.0, 0.0).is_none());
    }
}
