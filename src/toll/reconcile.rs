//! Reconciliation of billed passages against the tool's estimate: verdicts, summaries and
//! payments.
//!
//! # Method
//! - Per `toll.csv` row: the [`period_estimate`] of its segment, period and group;
//!   `difference = billed − estimated`, `difference_pct = 100 · difference / estimated`;
//!   verdict [`Verdict::OverBilled`] when `billed > hi95`, [`Verdict::UnderBilled`] when
//!   `billed < lo95` (the bounds themselves are inside); inside the interval,
//!   [`Verdict::Inconclusive`] when the smallest detectable discrepancy
//!   `detectable_pct = 100 · (exp(1.96 · s) − 1)` (the billing error that just reaches the
//!   upper bound when the estimate is right) is above [`TollParams::detectable_pct`],
//!   otherwise [`Verdict::Consistent`].
//! - Summaries add billed and estimated passages and count verdicts, per calendar month
//!   (the month of a row's `from_date`; billing periods are normally calendar months) and
//!   per segment, each per vehicle group (so `all` is never added to `light` or `heavy`).
//!   They carry no interval: the rows' errors are partly shared (one AADT, one counter)
//!   and partly not, so the row verdicts are the test; the totals are for reading.
//! - Payment `= passages · length_km · rate` with the rate per vehicle-km of the row's
//!   group from `study.toml` ([`TollRates`]); the estimate's payment interval is its
//!   passage interval times the same `length_km · rate`.
//!
//! # Units
//! Passages (vehicles, both directions, per period); kilometres; currency per vehicle-km;
//! currency; percent for `difference_pct`.
//!
//! # References
//! - `data-contract.md`: `toll.csv` and `toll_reconciliation.csv` columns, groups light 1–3,
//!   heavy 4–13.

use std::collections::BTreeMap;

use chrono::{Datelike, NaiveDate};
use serde::Deserialize;

use super::profile::{period_estimate, DailyProfile, Z95};
use super::{TollError, VehicleGroup};
use crate::model::SegmentId;

/// One billed period of `toll.csv`.
#[derive(Debug, Clone, PartialEq)]
pub struct TollRow {
    /// Tolled segment.
    pub segment: SegmentId,
    /// First billed day.
    pub from_date: NaiveDate,
    /// Last billed day (inclusive).
    pub to_date: NaiveDate,
    /// Vehicle group billed.
    pub group: VehicleGroup,
    /// Passages billed, both directions.
    pub billed_vehicles: u64,
}

/// Whether a billed figure agrees with the estimate.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Verdict {
    /// Inside the 95 % interval (bounds included), which is narrow enough to detect the
    /// discrepancy the audit asks for.
    Consistent,
    /// Inside an interval too wide to detect that discrepancy: the data neither confirm nor
    /// dispute the billing.
    Inconclusive,
    /// Above the upper bound.
    OverBilled,
    /// Below the lower bound.
    UnderBilled,
}

impl Verdict {
    /// The verdict of `billed` against the interval `[lo95, hi95]`.
    ///
    /// ```
    /// use roadtally::toll::Verdict;
    /// assert_eq!(Verdict::of(110.0, 95.0, 105.0), Verdict::OverBilled);
    /// assert_eq!(Verdict::of(105.0, 95.0, 105.0).as_str(), "consistent");
    /// ```
    pub fn of(billed: f64, lo95: f64, hi95: f64) -> Verdict {
        if billed > hi95 {
            Verdict::OverBilled
        } else if billed < lo95 {
            Verdict::UnderBilled
        } else {
            Verdict::Consistent
        }
    }

    /// The verdict of `billed` against `[lo95, hi95]` when the row can detect a discrepancy
    /// of `detectable_pct` and the audit asks for `threshold_pct`: inside the interval,
    /// [`Verdict::Inconclusive`] when `detectable_pct > threshold_pct`.
    ///
    /// ```
    /// use roadtally::toll::Verdict;
    /// assert_eq!(Verdict::judge(100.0, 70.0, 140.0, 40.0, 5.0), Verdict::Inconclusive);
    /// assert_eq!(Verdict::judge(150.0, 70.0, 140.0, 40.0, 5.0), Verdict::OverBilled);
    /// ```
    pub fn judge(
        billed: f64,
        lo95: f64,
        hi95: f64,
        detectable_pct: f64,
        threshold_pct: f64,
    ) -> Verdict {
        match Verdict::of(billed, lo95, hi95) {
            Verdict::Consistent if detectable_pct > threshold_pct => Verdict::Inconclusive,
            v => v,
        }
    }

    /// The contract's spelling: `consistent`, `inconclusive`, `over_billed`, `under_billed`.
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::Consistent => "consistent",
            Verdict::Inconclusive => "inconclusive",
            Verdict::OverBilled => "over_billed",
            Verdict::UnderBilled => "under_billed",
        }
    }
}

/// One row of `toll_reconciliation.csv`, with the working figures.
#[derive(Debug, Clone, PartialEq)]
pub struct ReconciliationRow {
    /// Tolled segment.
    pub segment: SegmentId,
    /// First billed day.
    pub from_date: NaiveDate,
    /// Last billed day (inclusive).
    pub to_date: NaiveDate,
    /// Vehicle group.
    pub group: VehicleGroup,
    /// Passages billed.
    pub billed_vehicles: u64,
    /// Passages the statistics imply.
    pub estimated_vehicles: f64,
    /// Lower end of the 95 % interval.
    pub estimated_lo95: f64,
    /// Upper end of the 95 % interval.
    pub estimated_hi95: f64,
    /// Log-sd of the estimate.
    pub log_sd: f64,
    /// Days taken from counter measurements.
    pub measured_days: u32,
    /// Days taken from factors.
    pub factored_days: u32,
    /// `billed − estimated`, passages.
    pub difference: f64,
    /// `100 · difference / estimated`; `None` when the estimate is 0.
    pub difference_pct: Option<f64>,
    /// Smallest billing discrepancy the row can detect, `100 · (exp(1.96 · s) − 1)`, %.
    pub detectable_pct: f64,
    /// The verdict.
    pub verdict: Verdict,
}

/// Smallest detectable discrepancy of an estimate with log-sd `s`, percent:
/// `100 · (exp(1.96 · s) − 1)`, the over-billing that just reaches the upper bound.
pub fn detectable_pct(log_sd: f64) -> f64 {
    100.0 * ((Z95 * log_sd).exp() - 1.0)
}

/// Reconciles one billed row against `profile` (the row's segment's profile).
pub fn reconcile_row(
    row: &TollRow,
    profile: &dyn DailyProfile,
    params: &TollParams,
) -> Result<ReconciliationRow, TollError> {
    let e = period_estimate(profile, row.from_date, row.to_date, row.group)?;
    let billed = row.billed_vehicles as f64;
    let difference = billed - e.estimated;
    Ok(ReconciliationRow {
        segment: row.segment.clone(),
        from_date: row.from_date,
        to_date: row.to_date,
        group: row.group,
        billed_vehicles: row.billed_vehicles,
        estimated_vehicles: e.estimated,
        estimated_lo95: e.lo95,
        estimated_hi95: e.hi95,
        log_sd: e.log_sd,
        measured_days: e.measured_days,
        factored_days: e.factored_days,
        difference,
        difference_pct: (e.estimated > 0.0).then(|| 100.0 * difference / e.estimated),
        detectable_pct: detectable_pct(e.log_sd),
        verdict: Verdict::judge(
            billed,
            e.lo95,
            e.hi95,
            detectable_pct(e.log_sd),
            params.detectable_pct,
        ),
    })
}

/// Reconciles every row, in input order; `profile_of` gives a segment's profile.
pub fn reconcile<'a, F>(
    rows: &[TollRow],
    profile_of: F,
    params: &TollParams,
) -> Result<Vec<ReconciliationRow>, TollError>
where
    F: Fn(&SegmentId) -> Option<&'a dyn DailyProfile>,
{
    rows.iter()
        .map(|r| {
            let p =
                profile_of(&r.segment).ok_or_else(|| TollError::NoProfile(r.segment.clone()))?;
            reconcile_row(r, p, params)
        })
        .collect()
}

/// Totals and verdict counts of a set of reconciliation rows.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct TollTotals {
    /// Rows added.
    pub rows: u32,
    /// Passages billed.
    pub billed_vehicles: u64,
    /// Passages estimated.
    pub estimated_vehicles: f64,
    /// `billed − estimated`.
    pub difference: f64,
    /// `100 · difference / estimated`; `None` when the estimate is 0.
    pub difference_pct: Option<f64>,
    /// Rows judged consistent.
    pub consistent: u32,
    /// Rows judged inconclusive.
    pub inconclusive: u32,
    /// Rows judged over-billed.
    pub over_billed: u32,
    /// Rows judged under-billed.
    pub under_billed: u32,
    /// The rows' smallest detectable discrepancies, %, in row order.
    pub detectable_pcts: Vec<f64>,
}

impl TollTotals {
    /// Median of the rows' smallest detectable discrepancies, %; `None` without rows.
    pub fn median_detectable_pct(&self) -> Option<f64> {
        let mut v = self.detectable_pcts.clone();
        v.sort_by(f64::total_cmp);
        let n = v.len();
        (n > 0).then(|| (v[(n - 1) / 2] + v[n / 2]) / 2.0)
    }

    fn add(&mut self, r: &ReconciliationRow) {
        self.rows += 1;
        self.detectable_pcts.push(r.detectable_pct);
        self.billed_vehicles += r.billed_vehicles;
        self.estimated_vehicles += r.estimated_vehicles;
        self.difference = self.billed_vehicles as f64 - self.estimated_vehicles;
        self.difference_pct = (self.estimated_vehicles > 0.0)
            .then(|| 100.0 * self.difference / self.estimated_vehicles);
        match r.verdict {
            Verdict::Consistent => self.consistent += 1,
            Verdict::Inconclusive => self.inconclusive += 1,
            Verdict::OverBilled => self.over_billed += 1,
            Verdict::UnderBilled => self.under_billed += 1,
        }
    }
}

/// Totals of one calendar month and vehicle group, over all tolled segments.
#[derive(Debug, Clone, PartialEq)]
pub struct MonthSummary {
    /// Year of the rows' `from_date`.
    pub year: i32,
    /// Month (1..=12) of the rows' `from_date`.
    pub month: u32,
    /// Vehicle group.
    pub group: VehicleGroup,
    /// Totals.
    pub totals: TollTotals,
}

/// Totals of one segment and vehicle group, over all its billed periods.
#[derive(Debug, Clone, PartialEq)]
pub struct SegmentSummary {
    /// Segment.
    pub segment: SegmentId,
    /// Vehicle group.
    pub group: VehicleGroup,
    /// Totals.
    pub totals: TollTotals,
}

/// Per-month (of `from_date`) and per-group totals, in calendar order.
pub fn summarise_by_month(rows: &[ReconciliationRow]) -> Vec<MonthSummary> {
    let mut map: BTreeMap<(i32, u32, VehicleGroup), TollTotals> = BTreeMap::new();
    for r in rows {
        let key = (r.from_date.year(), r.from_date.month(), r.group);
        map.entry(key).or_default().add(r);
    }
    map.into_iter()
        .map(|((year, month, group), totals)| MonthSummary {
            year,
            month,
            group,
            totals,
        })
        .collect()
}

/// Per-segment and per-group totals, in segment-id order.
pub fn summarise_by_segment(rows: &[ReconciliationRow]) -> Vec<SegmentSummary> {
    let mut map: BTreeMap<(SegmentId, VehicleGroup), TollTotals> = BTreeMap::new();
    for r in rows {
        map.entry((r.segment.clone(), r.group)).or_default().add(r);
    }
    map.into_iter()
        .map(|((segment, group), totals)| SegmentSummary {
            segment,
            group,
            totals,
        })
        .collect()
}

/// The `[toll]` settings: the discrepancy an audit must be able to detect, and the toll
/// rates per vehicle-km by vehicle group (a missing rate is `None`).
#[derive(Debug, Clone, PartialEq, Deserialize, serde::Serialize)]
#[serde(default, deny_unknown_fields)]
pub struct TollParams {
    /// A row whose 95 % interval cannot detect a billing discrepancy of this size, percent,
    /// is `inconclusive` rather than `consistent`. Default 5 (common practice: a toll audit
    /// disputes errors of a few percent).
    pub detectable_pct: f64,
    /// Rate for light vehicles, currency per vehicle-km.
    pub light_per_vkm: Option<f64>,
    /// Rate for heavy vehicles, currency per vehicle-km.
    pub heavy_per_vkm: Option<f64>,
    /// Rate for rows billed as `all`, currency per vehicle-km.
    pub all_per_vkm: Option<f64>,
}

impl Default for TollParams {
    fn default() -> Self {
        TollParams {
            detectable_pct: 5.0,
            light_per_vkm: None,
            heavy_per_vkm: None,
            all_per_vkm: None,
        }
    }
}

/// The `[toll]` settings under their earlier name (the rates are part of them).
pub type TollRates = TollParams;

impl TollParams {
    /// The rate of `group`, if set.
    pub fn rate(&self, group: VehicleGroup) -> Option<f64> {
        match group {
            VehicleGroup::Light => self.light_per_vkm,
            VehicleGroup::Heavy => self.heavy_per_vkm,
            VehicleGroup::All => self.all_per_vkm,
        }
    }
}

/// The payment billed against the payment the estimate implies.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Payment {
    /// `billed · length_km · rate`.
    pub billed_payment: f64,
    /// `estimated · length_km · rate`.
    pub estimated_payment: f64,
    /// `billed_payment − estimated_payment`.
    pub difference: f64,
}

/// Payment arithmetic: passages × length × rate per vehicle-km.
///
/// ```
/// use roadtally::toll::payment;
/// let p = payment(1000.0, 950.0, 2.5, 0.10);
/// assert!((p.difference - 12.5).abs() < 1e-9);
/// ```
pub fn payment(billed: f64, estimated: f64, length_km: f64, rate_per_vkm: f64) -> Payment {
    let k = length_km * rate_per_vkm;
    Payment {
        billed_payment: billed * k,
        estimated_payment: estimated * k,
        difference: (billed - estimated) * k,
    }
}

/// A reconciliation row's payments, with the estimate's 95 % payment interval.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct RowPayment {
    /// Billed and estimated payment.
    pub payment: Payment,
    /// Lower end of the estimated payment's 95 % interval.
    pub estimated_lo95: f64,
    /// Upper end of the estimated payment's 95 % interval.
    pub estimated_hi95: f64,
}

/// The payments of `row` on a segment of `length_km`, when `rates` has its group's rate.
pub fn row_payment(
    row: &ReconciliationRow,
    length_km: f64,
    rates: &TollRates,
) -> Option<RowPayment> {
    let rate = rates.rate(row.group)?;
    let k = length_km * rate;
    Some(RowPayment {
        payment: payment(
            row.billed_vehicles as f64,
            row.estimated_vehicles,
            length_km,
            rate,
        ),
        estimated_lo95: row.estimated_lo95 * k,
        estimated_hi95: row.estimated_hi95 * k,
    })
}

#[cfg(test)]
mod tests {
    use super::super::profile::{CounterDay, CounterDays, DayEstimate, DaySource, FactorProfile};
    use super::*;
    use approx::assert_relative_eq;
    use proptest::prelude::*;

    fn d(s: &str) -> NaiveDate {
        NaiveDate::parse_from_str(s, "%Y-%m-%d").unwrap()
    }

    /// A flat profile: every day 1000 vehicles, log-sd 0.05 shared, 0 own.
    struct Flat;
    impl DailyProfile for Flat {
        fn expected(&self, _: NaiveDate, _: VehicleGroup) -> DayEstimate {
            DayEstimate {
                mean: 1000.0,
                source: DaySource::Factored,
                shared_log_sd: 0.05,
                own_log_sd: 0.0,
            }
        }
    }

    /// Settings that can detect 20 %: the flat profile's ±10 % interval is conclusive.
    fn wide() -> TollParams {
        TollParams {
            detectable_pct: 20.0,
            ..TollParams::default()
        }
    }

    fn row(seg: &str, from: &str, to: &str, group: VehicleGroup, billed: u64) -> TollRow {
        TollRow {
            segment: SegmentId::from(seg),
            from_date: d(from),
            to_date: d(to),
            group,
            billed_vehicles: billed,
        }
    }

    /// Ten days of 1000 at log-sd 0.05: interval 10,000 · exp(±0.098) = 9,066.5 .. 11,029.6.
    #[test]
    fn verdict_thresholds() {
        let lo = 10_000.0 * (-1.959_963_984_540_054f64 * 0.05).exp();
        let hi = 10_000.0 * (1.959_963_984_540_054f64 * 0.05).exp();
        assert_relative_eq!(lo, 9066.5, max_relative = 1e-4);
        assert_relative_eq!(hi, 11_029.6, max_relative = 1e-4);
        let cases = [
            (10_000, Verdict::Consistent),
            (hi.floor() as u64, Verdict::Consistent),
            (hi.ceil() as u64, Verdict::OverBilled),
            (lo.ceil() as u64, Verdict::Consistent),
            (lo.floor() as u64, Verdict::UnderBilled),
        ];
        for (billed, v) in cases {
            let r = reconcile_row(
                &row("S1", "2025-03-01", "2025-03-10", VehicleGroup::All, billed),
                &Flat,
                &wide(),
            )
            .unwrap();
            assert_eq!(r.verdict, v, "billed {billed}");
            assert_relative_eq!(r.difference, billed as f64 - 10_000.0, epsilon = 1e-9);
        }
        let r = reconcile_row(
            &row("S1", "2025-03-01", "2025-03-10", VehicleGroup::All, 12_000),
            &Flat,
            &wide(),
        )
        .unwrap();
        assert_relative_eq!(r.difference_pct.unwrap(), 20.0, max_relative = 1e-12);
        assert_eq!(r.verdict.as_str(), "over_billed");
        assert_eq!(Verdict::UnderBilled.as_str(), "under_billed");
        // The same ±10 % interval cannot detect the default 5 %: inside it, inconclusive;
        // outside it, still flagged.
        let at = |billed: u64| {
            reconcile_row(
                &row("S1", "2025-03-01", "2025-03-10", VehicleGroup::All, billed),
                &Flat,
                &TollParams::default(),
            )
            .unwrap()
        };
        let r = at(10_000);
        assert_eq!(r.verdict, Verdict::Inconclusive);
        assert_relative_eq!(
            r.detectable_pct,
            100.0 * ((Z95 * 0.05).exp() - 1.0),
            max_relative = 1e-12
        );
        assert_eq!(at(12_000).verdict, Verdict::OverBilled);
        assert_eq!(at(8_000).verdict, Verdict::UnderBilled);
    }

    /// Demo-like month: a counter that measured every day of February; honest billing with
    /// ±1 % noise is consistent, a 10 % over-billing is flagged, for light and all (at a 6 %
    /// detectable discrepancy: the light split of an unclassified counter rests on the heavy
    /// share, so its interval is a little wider than ±5 %).
    #[test]
    fn counted_month_separates_ten_percent_misbilling() {
        let mut days = BTreeMap::new();
        for (k, date) in d("2025-02-01").iter_days().take(28).enumerate() {
            let wobble = 1.0 + 0.08 * ((k as f64) * 2.3).sin();
            days.insert(
                date,
                CounterDay {
                    total: 26_000.0 * wobble,
                    heavy: None,
                },
            );
        }
        let mut fallback = FactorProfile::new(26_000.0, 25_000.0, 27_000.0, 0.19, [[1.0; 12]; 7]);
        fallback.heavy_share_lo95 = 0.17;
        fallback.heavy_share_hi95 = 0.21;
        let c = CounterDays::new(days, fallback);
        for group in [VehicleGroup::Light, VehicleGroup::All] {
            let e = period_estimate(&c, d("2025-02-01"), d("2025-02-28"), group).unwrap();
            for (factor, verdict) in [
                (1.0, Verdict::Consistent),
                (1.015, Verdict::Consistent),
                (0.985, Verdict::Consistent),
                (1.10, Verdict::OverBilled),
                (0.90, Verdict::UnderBilled),
            ] {
                let billed = (e.estimated * factor).round() as u64;
                let r = reconcile_row(
                    &row("S1", "2025-02-01", "2025-02-28", group, billed),
                    &c,
                    &wide(),
                )
                .unwrap();
                assert_eq!(r.verdict, verdict, "{group:?} x{factor}");
                assert_eq!(r.measured_days, 28);
            }
        }
    }

    #[test]
    fn reconcile_uses_each_segments_profile_and_reports_missing_ones() {
        let rows = vec![
            row("S1", "2025-01-01", "2025-01-31", VehicleGroup::All, 31_000),
            row("S2", "2025-01-01", "2025-01-31", VehicleGroup::All, 1),
        ];
        let flat = Flat;
        let out = reconcile(
            &rows[..1],
            |s| (s.as_str() == "S1").then_some(&flat as &dyn DailyProfile),
            &TollParams::default(),
        )
        .unwrap();
        assert_eq!(out.len(), 1);
        assert_relative_eq!(out[0].estimated_vehicles, 31_000.0, max_relative = 1e-12);
        let err = reconcile(
            &rows,
            |s| (s.as_str() == "S1").then_some(&flat as &dyn DailyProfile),
            &TollParams::default(),
        );
        assert_eq!(err, Err(TollError::NoProfile(SegmentId::from("S2"))));
    }

    #[test]
    fn summaries_by_month_and_segment() {
        let rows = vec![
            row(
                "S1",
                "2025-01-01",
                "2025-01-31",
                VehicleGroup::Light,
                31_000,
            ),
            row(
                "S2",
                "2025-01-01",
                "2025-01-31",
                VehicleGroup::Light,
                40_000,
            ),
            row(
                "S1",
                "2025-02-01",
                "2025-02-28",
                VehicleGroup::Light,
                28_000,
            ),
            row(
                "S1",
                "2025-01-01",
                "2025-01-31",
                VehicleGroup::Heavy,
                31_000,
            ),
        ];
        let flat = Flat;
        let rec = reconcile(&rows, |_| Some(&flat as &dyn DailyProfile), &wide()).unwrap();
        let m = summarise_by_month(&rec);
        assert_eq!(m.len(), 3);
        assert_eq!(
            (m[0].year, m[0].month, m[0].group),
            (2025, 1, VehicleGroup::Light)
        );
        assert_eq!(m[0].totals.rows, 2);
        assert_eq!(m[0].totals.billed_vehicles, 71_000);
        assert_relative_eq!(
            m[0].totals.estimated_vehicles,
            62_000.0,
            max_relative = 1e-12
        );
        assert_eq!((m[0].totals.consistent, m[0].totals.over_billed), (1, 1));
        assert_relative_eq!(
            m[0].totals.difference_pct.unwrap(),
            100.0 * 9_000.0 / 62_000.0,
            max_relative = 1e-12
        );
        assert_eq!((m[1].month, m[1].group), (1, VehicleGroup::Heavy));
        assert_eq!(m[2].month, 2);
        let s = summarise_by_segment(&rec);
        assert_eq!(s.len(), 3);
        assert_eq!(
            (s[0].segment.as_str(), s[0].group),
            ("S1", VehicleGroup::Light)
        );
        assert_eq!(s[0].totals.rows, 2);
        assert_eq!(s[0].totals.billed_vehicles, 59_000);
        assert_eq!(s[2].segment.as_str(), "S2");
        assert_eq!(s[2].totals.over_billed, 1);
    }

    /// 1,000 billed, 950 estimated, 2.5 km at 0.10 per vehicle-km: 250.00 against 237.50.
    #[test]
    fn payment_arithmetic() {
        let p = payment(1000.0, 950.0, 2.5, 0.10);
        assert_relative_eq!(p.billed_payment, 250.0, max_relative = 1e-12);
        assert_relative_eq!(p.estimated_payment, 237.5, max_relative = 1e-12);
        assert_relative_eq!(p.difference, 12.5, max_relative = 1e-12);
        let rates: TollRates =
            toml::from_str("light_per_vkm = 0.05\nheavy_per_vkm = 0.20").unwrap();
        assert_eq!(rates.all_per_vkm, None);
        assert_eq!(rates.rate(VehicleGroup::Heavy), Some(0.20));
        assert_eq!(TollRates::default(), toml::from_str("").unwrap());
        let r = reconcile_row(
            &row(
                "S1",
                "2025-03-01",
                "2025-03-10",
                VehicleGroup::Heavy,
                10_500,
            ),
            &Flat,
            &TollParams::default(),
        )
        .unwrap();
        let rp = row_payment(&r, 4.0, &rates).unwrap();
        assert_relative_eq!(
            rp.payment.billed_payment,
            10_500.0 * 4.0 * 0.20,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            rp.payment.estimated_payment,
            10_000.0 * 0.8,
            max_relative = 1e-12
        );
        assert_relative_eq!(
            rp.estimated_hi95,
            r.estimated_hi95 * 0.8,
            max_relative = 1e-12
        );
        assert!(row_payment(&r, 4.0, &TollRates::default()).is_none());
    }

    proptest! {
        /// A billed figure equal to the estimate is always consistent, for either source.
        #[test]
        fn billed_equal_to_estimate_is_consistent(
            aadt in 100.0f64..200_000.0,
            rel in 0.0f64..0.5,
            share in 0.0f64..0.6,
            start in 0i64..700,
            len in 0i64..92,
            counted in proptest::collection::vec(0.5f64..1.5, 0..40),
            group in 0usize..3,
        ) {
            let group = [VehicleGroup::Light, VehicleGroup::Heavy, VehicleGroup::All][group];
            let from = d("2024-01-01") + chrono::Duration::days(start);
            let to = from + chrono::Duration::days(len);
            let mut p = FactorProfile::new(aadt, aadt / (1.0 + rel), aadt * (1.0 + rel), share, [[1.1; 12]; 7]);
            p.heavy_share_lo95 = share * 0.9;
            p.heavy_share_hi95 = (share * 1.1).min(1.0);
            let days: BTreeMap<_, _> = counted.iter().enumerate()
                .map(|(k, w)| (from + chrono::Duration::days(2 * k as i64), CounterDay { total: aadt * w, heavy: None }))
                .collect();
            let c = CounterDays::new(days, p.clone());
            for prof in [&p as &dyn DailyProfile, &c as &dyn DailyProfile] {
                let e = period_estimate(prof, from, to, group).unwrap();
                prop_assert_eq!(Verdict::of(e.estimated, e.lo95, e.hi95), Verdict::Consistent);
                prop_assert!(detectable_pct(e.log_sd) >= 0.0);
                prop_assert!(e.lo95 <= e.estimated && e.estimated <= e.hi95);
                if e.estimated > 1000.0 {
                    let r = reconcile_row(&TollRow { segment: SegmentId::from("S"), from_date: from, to_date: to, group, billed_vehicles: e.estimated.round() as u64 }, prof, &TollParams::default()).unwrap();
                    prop_assert!(matches!(r.verdict, Verdict::Consistent | Verdict::Inconclusive));
                    prop_assert_eq!(r.verdict == Verdict::Inconclusive, r.detectable_pct > 5.0);
                }
            }
        }
    }
}
