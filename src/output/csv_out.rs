//! CSV writer for [`Table`]s.
//!
//! Text cells that a spreadsheet would take as a formula are neutralised: a text cell that
//! starts with `=`, `+`, `-`, `@`, a tab or a carriage return gets a leading `'`, the usual
//! rule against CSV injection (OWASP, "CSV Injection"). A spreadsheet then shows the text and
//! runs nothing. Numeric cells are never touched, nor a text cell that is a plain decimal
//! number such as `-378` (a rejected count as the file had it), which no spreadsheet runs.
//! The workbook needs no such rule: its cells are typed.

use std::borrow::Cow;
use std::path::{Path, PathBuf};

use super::table::{cell_text, Cell, Table};
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
                .map(|(cell, col)| match cell {
                    Cell::Text(t) => neutralise(t).into_owned(),
                    _ => cell_text(cell, col.format),
                }),
        )
        .expect("writing to memory");
    }
    w.into_inner().expect("writing to memory")
}

/// Writes `table` as `<dir>/<name>.csv`.
pub fn write(dir: &Path, table: &Table) -> Result<PathBuf, OutputError> {
    write_atomic(dir, &format!("{}.csv", table.name), &render(table))
}

/// `text` with a leading `'` when a spreadsheet would read it as a formula (see the module
/// docs); unchanged otherwise.
pub fn neutralise(text: &str) -> Cow<'_, str> {
    let risky = matches!(
        text.as_bytes().first(),
        Some(b'=' | b'+' | b'-' | b'@' | b'\t' | b'\r')
    );
    if risky && !is_plain_number(text) {
        Cow::Owned(format!("'{text}"))
    } else {
        Cow::Borrowed(text)
    }
}

/// `-?digits(.digits)?`: a number a spreadsheet reads as a number, never as a formula.
fn is_plain_number(text: &str) -> bool {
    let t = text.strip_prefix('-').unwrap_or(text);
    let (int, frac) = t.split_once('.').unwrap_or((t, "0"));
    let digits = |s: &str| !s.is_empty() && s.bytes().all(|b| b.is_ascii_digit());
    digits(int) && digits(frac)
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::output::table::{Column, Format};

    #[test]
    fn formula_cells_are_neutralised_and_numbers_kept() {
        for (raw, want) in [
            ("=2+3", "'=2+3"),
            ("+1+1", "'+1+1"),
            ("-1+2", "'-1+2"),
            ("@SUM(A1)", "'@SUM(A1)"),
            ("\t=1", "'\t=1"),
            ("\r=1", "'\r=1"),
            ("-inf", "'-inf"),
            ("-378", "-378"),
            ("-0.25", "-0.25"),
            ("S1", "S1"),
            ("a=b", "a=b"),
            ("", ""),
        ] {
            assert_eq!(neutralise(raw), want, "{raw:?}");
        }
        let mut t = Table::new(
            "t",
            "t",
            vec![
                Column::new("id", "", Format::Text),
                Column::new("v", "", Format::Decimal(2)),
            ],
        );
        t.push(vec![Cell::from("=2+3"), Cell::Num(-1.5)]);
        assert_eq!(
            String::from_utf8(render(&t)).unwrap(),
            "id,v\n'=2+3,-1.50\n"
        );
    }
}
