//! The toll tables: the row-by-row reconciliation and its summaries.

use super::{col, opt};
use crate::model::StudyData;
use crate::output::table::{Cell, Format, Table};

/// `toll_reconciliation.csv`: one row per toll.csv row (the contract's columns first).
pub fn toll_reconciliation(
    data: &StudyData,
    results: &[crate::toll::stage::TollResult],
    rates: &crate::toll::reconcile::TollRates,
) -> Table {
    let mut t = Table::new(
        "toll_reconciliation",
        "Billed passages against the passages the statistics imply",
        vec![
            col("segment_id", "", Format::Text),
            col("from_date", "", Format::Text),
            col("to_date", "", Format::Text),
            col("vehicle_group", "", Format::Text),
            col("billed_vehicles", "veh", Format::Integer),
            col("estimated_vehicles", "veh", Format::Integer),
            col("estimated_lo95", "veh", Format::Integer),
            col("estimated_hi95", "veh", Format::Integer),
            col("verdict", "", Format::Text),
            col("difference", "veh", Format::Integer),
            col("difference_pct", "%", Format::Decimal(2)),
            col("detectable_pct", "%", Format::Decimal(1)),
            col("basis", "", Format::Text),
            col("measured_days", "days", Format::Integer),
            col("factored_days", "days", Format::Integer),
            col("billed_payment", "currency", Format::Decimal(2)),
            col("estimated_payment", "currency", Format::Decimal(2)),
            col("payment_difference", "currency", Format::Decimal(2)),
            col("note", "", Format::Text),
        ],
    );
    for r in results {
        let rec = &r.record;
        let seg = &data.network.segments[rec.segment];
        let mut row = vec![
            Cell::from(seg.id.as_str()),
            Cell::from(rec.from_date.to_string()),
            Cell::from(rec.to_date.to_string()),
            Cell::from(rec.group.as_str()),
            Cell::from(rec.billed_vehicles),
        ];
        match &r.result {
            Ok(x) => {
                let pay = crate::toll::reconcile::row_payment(x, seg.length_km, rates);
                row.extend([
                    Cell::from(x.estimated_vehicles),
                    Cell::from(x.estimated_lo95),
                    Cell::from(x.estimated_hi95),
                    Cell::from(x.verdict.as_str()),
                    Cell::from(x.difference),
                    opt(x.difference_pct),
                    Cell::from(x.detectable_pct),
                    Cell::from(r.basis.as_str()),
                    Cell::from(x.measured_days),
                    Cell::from(x.factored_days),
                    opt(pay.as_ref().map(|p| p.payment.billed_payment)),
                    opt(pay.as_ref().map(|p| p.payment.estimated_payment)),
                    opt(pay.as_ref().map(|p| p.payment.difference)),
                    r.advice
                        .map_or(Cell::Empty, |a| Cell::from(format!("to conclude: {a}"))),
                ]);
            }
            Err(why) => {
                row.extend(std::iter::repeat_n(Cell::Empty, 13));
                row.push(Cell::from(format!("not estimated: {why}")));
            }
        }
        t.push(row);
    }
    t
}

/// Per-month or per-segment toll summaries; `advice` (empty, or one per key) says what
/// would make the key's inconclusive rows conclusive.
pub fn toll_summary(
    name: &str,
    title: &str,
    keys: &[(String, String)],
    totals: &[crate::toll::reconcile::TollTotals],
    advice: &[Option<&str>],
) -> Table {
    let mut t = Table::new(
        name,
        title,
        vec![
            col("key", "", Format::Text),
            col("vehicle_group", "", Format::Text),
            col("rows", "", Format::Integer),
            col("billed_vehicles", "veh", Format::Integer),
            col("estimated_vehicles", "veh", Format::Integer),
            col("difference_pct", "%", Format::Decimal(2)),
            col("consistent", "", Format::Integer),
            col("inconclusive", "", Format::Integer),
            col("over_billed", "", Format::Integer),
            col("under_billed", "", Format::Integer),
            col("median_detectable_pct", "%", Format::Decimal(1)),
            col("to_conclude", "", Format::Text),
        ],
    );
    for (n, ((k, g), x)) in keys.iter().zip(totals).enumerate() {
        t.push(vec![
            Cell::from(k.as_str()),
            Cell::from(g.as_str()),
            Cell::from(x.rows),
            Cell::from(x.billed_vehicles),
            Cell::from(x.estimated_vehicles),
            opt(x.difference_pct),
            Cell::from(x.consistent),
            Cell::from(x.inconclusive),
            Cell::from(x.over_billed),
            Cell::from(x.under_billed),
            opt(x.median_detectable_pct()),
            advice
                .get(n)
                .copied()
                .flatten()
                .map_or(Cell::Empty, Cell::from),
        ]);
    }
    t
}
