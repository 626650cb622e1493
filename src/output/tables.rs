//! The tables `run` writes, built from stage outputs.

use super::table::{Cell, Column, Format, Table};
use crate::input::RejectedRow;

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
