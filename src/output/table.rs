//! One table model for every writer (CSV, workbook, GeoJSON, HTML).

/// How a numeric column is shown.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Format {
    /// Text as given.
    Text,
    /// Whole number (volumes, counts).
    Integer,
    /// Fixed decimals (factors: 3, distances: 3 ...).
    Decimal(u8),
    /// A share 0..1, written with 4 decimals in CSV and as a percentage in the workbook.
    Share,
}

/// A column: its name (with the unit where there is one) and how values are shown.
#[derive(Debug, Clone, PartialEq)]
pub struct Column {
    /// Header text; the contract's names are kept exactly.
    pub name: String,
    /// Unit, shown in the workbook's header row and in the report ("veh/day", "km", "").
    pub unit: &'static str,
    /// Number format.
    pub format: Format,
}

impl Column {
    /// A column.
    pub fn new(name: &str, unit: &'static str, format: Format) -> Column {
        Column {
            name: name.to_string(),
            unit,
            format,
        }
    }
}

/// One cell.
#[derive(Debug, Clone, PartialEq)]
pub enum Cell {
    /// Nothing supports a figure.
    Empty,
    /// Text.
    Text(String),
    /// A whole number.
    Int(i64),
    /// A real number, shown with its column's format.
    Num(f64),
}

impl From<&str> for Cell {
    fn from(s: &str) -> Cell {
        Cell::Text(s.to_string())
    }
}

impl From<String> for Cell {
    fn from(s: String) -> Cell {
        Cell::Text(s)
    }
}

impl From<f64> for Cell {
    fn from(v: f64) -> Cell {
        if v.is_finite() {
            Cell::Num(v)
        } else {
            Cell::Empty
        }
    }
}

impl From<Option<f64>> for Cell {
    fn from(v: Option<f64>) -> Cell {
        v.map_or(Cell::Empty, Cell::from)
    }
}

impl From<u64> for Cell {
    fn from(v: u64) -> Cell {
        Cell::Int(v as i64)
    }
}

impl From<i64> for Cell {
    fn from(v: i64) -> Cell {
        Cell::Int(v)
    }
}

impl From<usize> for Cell {
    fn from(v: usize) -> Cell {
        Cell::Int(v as i64)
    }
}

impl From<u32> for Cell {
    fn from(v: u32) -> Cell {
        Cell::Int(v as i64)
    }
}

impl From<i32> for Cell {
    fn from(v: i32) -> Cell {
        Cell::Int(v as i64)
    }
}

/// A named table: a file stem (`segment_statistics`), a title for the workbook and report,
/// columns and rows.
#[derive(Debug, Clone, PartialEq)]
pub struct Table {
    /// File stem and sheet name.
    pub name: String,
    /// One-line description.
    pub title: String,
    /// Columns.
    pub columns: Vec<Column>,
    /// Rows, each as long as `columns`.
    pub rows: Vec<Vec<Cell>>,
}

impl Table {
    /// An empty table.
    pub fn new(name: &str, title: &str, columns: Vec<Column>) -> Table {
        Table {
            name: name.to_string(),
            title: title.to_string(),
            columns,
            rows: Vec::new(),
        }
    }

    /// Appends a row; panics, in release builds too, when its length is wrong: a programming
    /// error that would otherwise shift columns in the CSV and truncate rows in the workbook.
    pub fn push(&mut self, row: Vec<Cell>) {
        assert_eq!(
            row.len(),
            self.columns.len(),
            "row length in table {}",
            self.name
        );
        self.rows.push(row);
    }

    /// Index of a column by name.
    pub fn column(&self, name: &str) -> Option<usize> {
        self.columns.iter().position(|c| c.name == name)
    }
}

/// A column declared together with the function that gives its cell for one record, so a
/// table's header and its rows cannot drift apart.
pub struct ColumnDef<'a, R> {
    /// The column.
    pub column: Column,
    value: Box<dyn Fn(&R) -> Cell + 'a>,
}

/// A table declared column by column (see [`ColumnDef`]); [`TableSpec::build`] gives every
/// row exactly one cell per column by construction.
///
/// ```
/// use roadtally::output::table::{Cell, Format, TableSpec};
/// let t = TableSpec::<(&str, f64)>::new("t", "Example")
///     .col("id", "", Format::Text, |r| Cell::from(r.0))
///     .col("aadt", "veh/day", Format::Integer, |r| Cell::from(r.1))
///     .build(&[("S1", 1200.0), ("S2", 800.0)]);
/// assert_eq!(t.columns.len(), 2);
/// assert_eq!(t.rows[1], vec![Cell::from("S2"), Cell::Num(800.0)]);
/// ```
pub struct TableSpec<'a, R> {
    name: String,
    title: String,
    defs: Vec<ColumnDef<'a, R>>,
}

impl<'a, R> TableSpec<'a, R> {
    /// A table with no columns yet.
    pub fn new(name: &str, title: &str) -> TableSpec<'a, R> {
        TableSpec {
            name: name.to_string(),
            title: title.to_string(),
            defs: Vec::new(),
        }
    }

    /// Adds a column and the cell it takes from each record.
    pub fn col(
        mut self,
        name: &str,
        unit: &'static str,
        format: Format,
        value: impl Fn(&R) -> Cell + 'a,
    ) -> TableSpec<'a, R> {
        self.defs.push(ColumnDef {
            column: Column::new(name, unit, format),
            value: Box::new(value),
        });
        self
    }

    /// The table of `records`, one row each.
    pub fn build<'r>(&self, records: impl IntoIterator<Item = &'r R>) -> Table
    where
        R: 'r,
    {
        Table {
            name: self.name.clone(),
            title: self.title.clone(),
            columns: self.defs.iter().map(|d| d.column.clone()).collect(),
            rows: records
                .into_iter()
                .map(|r| self.defs.iter().map(|d| (d.value)(r)).collect())
                .collect(),
        }
    }
}

/// The text of a cell as CSV writes it: fixed decimals, no exponent, so outputs are
/// byte-identical across runs and platforms.
pub fn cell_text(cell: &Cell, format: Format) -> String {
    match cell {
        Cell::Empty => String::new(),
        Cell::Text(s) => s.clone(),
        Cell::Int(v) => v.to_string(),
        Cell::Num(v) => match format {
            Format::Integer => format!("{:.0}", v.round()),
            Format::Decimal(d) => format!("{:.*}", d as usize, v),
            Format::Share => format!("{v:.4}"),
            Format::Text => format!("{v}"),
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn numbers_print_with_their_column_format() {
        assert_eq!(cell_text(&Cell::Num(1234.5), Format::Integer), "1235");
        assert_eq!(cell_text(&Cell::Num(0.123456), Format::Decimal(3)), "0.123");
        assert_eq!(cell_text(&Cell::Num(0.1), Format::Share), "0.1000");
        assert_eq!(cell_text(&Cell::from(f64::NAN), Format::Share), "");
        assert_eq!(cell_text(&Cell::Int(-3), Format::Integer), "-3");
    }

    /// CI runs release tests: the row-length check must hold there too.
    #[test]
    #[should_panic(expected = "row length in table t")]
    fn a_row_of_the_wrong_length_is_refused_in_release_builds() {
        let mut t = Table::new("t", "T", vec![Column::new("a", "", Format::Text)]);
        t.push(vec![Cell::Int(1)]);
        t.push(vec![Cell::Int(1), Cell::Int(2)]);
    }
}
