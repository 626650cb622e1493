//! The data-quality tables: input rows not used, the QC log and the network findings.

use super::col;
use crate::model::{RejectedRow, StudyData};
use crate::output::table::{Cell, Column, Format, Table, TableSpec};
use crate::qc::QcOutput;

/// `rejected_rows.csv`, as the data contract lists its columns.
pub fn rejected_rows(rows: &[RejectedRow]) -> Table {
    let mut t = Table::new(
        "rejected_rows",
        "Input rows that were not used, with the reason",
        vec![
            Column::new("file", "", Format::Text),
            Column::new("line", "", Format::Integer),
            Column::new("column", "", Format::Text),
            Column::new("value", "", Format::Text),
            Column::new("reason", "", Format::Text),
        ],
    );
    for r in rows {
        t.push(vec![
            Cell::from(r.file.as_str()),
            Cell::Int(r.line as i64),
            Cell::from(r.column.as_str()),
            Cell::from(r.value.as_str()),
            Cell::from(r.reason.as_str()),
        ]);
    }
    t
}

/// `qc_log.csv`, as the data contract lists its columns.
pub fn qc_log(data: &StudyData, qc: &QcOutput) -> Table {
    let mut t = Table::new(
        "qc_log",
        "Station-days that a quality rule rejected or flagged",
        vec![
            col("station_id", "", Format::Text),
            col("direction", "", Format::Text),
            col("date", "", Format::Text),
            col("rule", "", Format::Text),
            col("action", "", Format::Text),
            col("detail", "", Format::Text),
        ],
    );
    for f in &qc.findings {
        t.push(vec![
            Cell::from(data.stations.stations[f.station].id.as_str()),
            Cell::from(f.direction.as_str()),
            Cell::from(f.date.to_string()),
            Cell::from(f.rule.as_str()),
            Cell::from(f.action.as_str()),
            Cell::from(f.detail.as_str()),
        ]);
    }
    t
}

/// `network_findings.csv`: what the network checks found.
pub fn network_findings(qc: &QcOutput) -> Table {
    let mut t = Table::new(
        "network_findings",
        "Network checks: components, dead ends, lengths",
        vec![
            col("check", "", Format::Text),
            col("segment_id", "", Format::Text),
            col("node_id", "", Format::Text),
            col("detail", "", Format::Text),
        ],
    );
    for f in &qc.network {
        t.push(vec![
            Cell::from(f.check),
            f.segment_id
                .as_ref()
                .map_or(Cell::Empty, |s| Cell::from(s.as_str())),
            f.node_id
                .as_ref()
                .map_or(Cell::Empty, |s| Cell::from(s.as_str())),
            Cell::from(f.detail.as_str()),
        ]);
    }
    t
}

/// `diagnostics.csv`: per stage, the units it handled, how many fell back from its method, and
/// each kind of fallback or reported default with its count (one row per kind; a stage
/// without any has one row with kind `none`).
pub fn diagnostics(stages: &[&crate::model::StageDiagnostics]) -> Table {
    type Row<'r> = (
        &'r crate::model::StageDiagnostics,
        Option<&'r crate::model::DiagnosticCount>,
    );
    let records: Vec<Row> = stages
        .iter()
        .flat_map(|d| {
            let items: Vec<Row> = d.items.iter().map(|i| (*d, Some(i))).collect();
            if items.is_empty() {
                vec![(*d, None)]
            } else {
                items
            }
        })
        .collect();
    TableSpec::<Row>::new(
        "diagnostics",
        "Fallbacks and defaults per stage (the fallback alarm compares fallback_share with max_fallback_share)",
    )
    .col("stage", "", Format::Text, |r| Cell::from(r.0.stage))
    .col("unit", "", Format::Text, |r| Cell::from(r.0.unit))
    .col("units", "", Format::Integer, |r| Cell::from(r.0.total))
    .col("fallback_units", "", Format::Integer, |r| {
        Cell::from(r.0.fallback_units)
    })
    .col("fallback_share", "share", Format::Share, |r| {
        Cell::from(r.0.fallback_share())
    })
    .col("kind", "", Format::Text, |r| {
        Cell::from(r.1.map_or("none", |i| i.kind.as_str()))
    })
    .col("count", "", Format::Integer, |r| {
        Cell::from(r.1.map_or(0, |i| i.count))
    })
    .col("is_fallback", "", Format::Text, |r| {
        Cell::from(match r.1 {
            Some(i) if i.fallback => "yes",
            Some(_) => "no",
            None => "",
        })
    })
    .build(&records)
}

/// `qc_summary.csv`: per station, its direction-days and how quality control treated them.
/// `accepted` includes the `flagged` days (a flag keeps the day); `accepted + rejected =
/// direction_days`, so a chart stacks `accepted - flagged`, `flagged` and `rejected`.
pub fn qc_summary(data: &StudyData, qc: &QcOutput) -> Table {
    use std::collections::{BTreeMap, BTreeSet};
    let mut t = Table::new(
        "qc_summary",
        "Direction-days per station: accepted (flags included), of which flagged, and rejected",
        vec![
            col("station_id", "", Format::Text),
            col("direction_days", "direction-days", Format::Integer),
            col("accepted", "direction-days", Format::Integer),
            col("flagged", "direction-days", Format::Integer),
            col("rejected", "direction-days", Format::Integer),
        ],
    );
    let mut flagged: BTreeMap<usize, BTreeSet<_>> = BTreeMap::new();
    for f in &qc.findings {
        if !qc.is_rejected(f.station, f.date, f.direction) {
            flagged
                .entry(f.station)
                .or_default()
                .insert((f.date, f.direction));
        }
    }
    for (si, days) in data.counts.days.iter().enumerate() {
        let (mut all, mut rej) = (0usize, 0usize);
        for (date, day) in days {
            for d in crate::model::Direction::ALL {
                if day.dir(d).is_some() {
                    all += 1;
                    rej += usize::from(qc.is_rejected(si, *date, d));
                }
            }
        }
        if all == 0 {
            continue;
        }
        let fl = flagged.get(&si).map_or(0, BTreeSet::len);
        t.push(vec![
            Cell::from(data.stations.stations[si].id.as_str()),
            Cell::from(all),
            Cell::from(all - rej),
            Cell::from(fl),
            Cell::from(rej),
        ]);
    }
    t
}
