//! The short-count tables: the calibration experiment and the expanded counts.

use super::{col, opt};
use crate::expansion::calibration::Calibration;
use crate::expansion::stage::ExpansionOutput;
use crate::model::StudyData;
use crate::output::table::{Cell, Format, Table};

/// `short_count_calibration.csv`: the calibration experiment's table.
pub fn calibration_table(cal: &Calibration) -> Table {
    let mut t = Table::new(
        "short_count_calibration",
        "Simulated short counts drawn from permanent counters: errors and interval coverage",
        vec![
            col("hours", "h", Format::Integer),
            col("class_group", "", Format::Text),
            col("trials", "", Format::Integer),
            col("median_ape_pct", "%", Format::Decimal(2)),
            col("p90_ape_pct", "%", Format::Decimal(2)),
            col("coverage95", "share", Format::Share),
            col("interval_scale", "factor", Format::Decimal(3)),
            col("k_median_ape_pct", "%", Format::Decimal(2)),
            col("k_group_median_ape_pct", "%", Format::Decimal(2)),
        ],
    );
    for r in &cal.rows {
        t.push(vec![
            Cell::from(r.hours),
            Cell::from(r.class_group.as_str()),
            Cell::from(r.trials),
            Cell::from(r.median_ape),
            Cell::from(r.p90_ape),
            Cell::from(r.coverage),
            opt(cal.scales.get(&r.hours).copied()),
            opt(r.k_median_ape),
            opt(r.k_group_median_ape),
        ]);
    }
    t
}

/// `short_counts.csv`: every short count, expanded (`status` = `expanded`) or not
/// (`not_expanded`, with empty AADT cells and the `reason`); a short station without any
/// count has one `not_expanded` row with an empty year.
pub fn short_counts(data: &StudyData, exp: &ExpansionOutput) -> Table {
    let mut t = Table::new(
        "short_counts",
        "Short counts expanded to AADT of the study year, or the reason they were not",
        vec![
            col("station_id", "", Format::Text),
            col("segment_id", "", Format::Text),
            col("count_year", "", Format::Integer),
            col("first_date", "", Format::Text),
            col("last_date", "", Format::Text),
            col("hours", "h", Format::Integer),
            col("counted_hours", "h", Format::Integer),
            col("filled_hours", "h", Format::Integer),
            col("one_direction_hours", "h", Format::Integer),
            col("periods_24h", "", Format::Integer),
            col("measure", "", Format::Text),
            col("classified", "", Format::Text),
            col("aadt", "veh/day", Format::Integer),
            col("aadt_lo95", "veh/day", Format::Integer),
            col("aadt_hi95", "veh/day", Format::Integer),
            col("heavy_share", "share", Format::Share),
            col("status", "", Format::Text),
            col("reason", "", Format::Text),
        ],
    );
    for c in &exp.counts {
        let (lo, hi) = c.expanded.interval95(1.0);
        t.push(vec![
            Cell::from(data.stations.stations[c.station].id.as_str()),
            Cell::from(data.network.segments[c.segment].id.as_str()),
            Cell::from(c.year),
            Cell::from(c.first.to_string()),
            Cell::from(c.last.to_string()),
            Cell::from(c.hours),
            Cell::from(c.counted_hours),
            Cell::from(c.filled_hours),
            Cell::from(c.one_direction_hours),
            Cell::from(c.expanded.days),
            Cell::from(c.measure),
            Cell::from(if c.classified { "yes" } else { "no" }),
            Cell::from(c.expanded.aadt),
            Cell::from(lo),
            Cell::from(hi),
            opt(c.heavy_share),
            Cell::from("expanded"),
            Cell::Empty,
        ]);
    }
    for u in &exp.unexpanded {
        let st = &data.stations.stations[u.station];
        let mut row = vec![
            Cell::from(st.id.as_str()),
            Cell::from(st.segment_id.as_str()),
            u.year.map_or(Cell::Empty, Cell::from),
            u.dates.map_or(Cell::Empty, |d| Cell::from(d.0.to_string())),
            u.dates.map_or(Cell::Empty, |d| Cell::from(d.1.to_string())),
            Cell::Empty,
            Cell::from(u.counted_hours),
        ];
        row.extend(std::iter::repeat_n(Cell::Empty, 9));
        row.push(Cell::from("not_expanded"));
        row.push(Cell::from(u.reason.as_str()));
        t.push(row);
    }
    t
}
