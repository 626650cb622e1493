//! The data-quality tables: input rows not used, the QC log and the network findings.

use super::col;
use crate::model::{RejectedRow, StudyData};
use crate::output::table::{Cell, Column, Format, Table};
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
