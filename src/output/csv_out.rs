//! CSV writer for [`Table`]s.

use std::path::{Path, PathBuf};

use super::table::{cell_text, Table};
use super::{write_atomic, OutputError};

/// Renders a table as RFC 4180 CSV with a header row of column names.
pub fn render(table: &Table) -> Vec<u8> {
    let mut w = csv::WriterBuilder::new()
        .terminator(csv::Terminator::Any(b'\n'))
        .from_writer(Vec::new());
    w.write_record(table.columns.iter().map(|c| c.name.as_str()))
        .expect("writing to memory");
    for row in &table.rows {
        w.write_record(
            row.iter()
                .zip(&table.columns)
                .map(|(cell, col)| cell_text(cell, col.format)),
        )
        .expect("writing to memory");
    }
    w.into_inner().expect("writing to memory")
}

/// Writes `table` as `<dir>/<name>.csv`.
pub fn write(dir: &Path, table: &Table) -> Result<PathBuf, OutputError> {
    write_atomic(dir, &format!("{}.csv", table.name), &render(table))
}
