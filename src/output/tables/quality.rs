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
