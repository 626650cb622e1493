//! Workbook writer: one `.xlsx` file holding a cover sheet and one sheet per [`Table`].
//!
//! The workbook is the copy of the results that most readers open first, so it carries the
//! context a CSV file cannot: the cover sheet states the study year, the inputs, the methods,
//! the counts used and the caution that every figure is an estimate with a stated
//! uncertainty. Each table sheet has a frozen header row that names the unit of every column,
//! an autofilter, fitted column widths and number formats taken from each column's
//! [`Format`] as follows. Numbers are stored at the precision the CSV file prints them
//! (`Decimal(d)`: d decimals; `Share`: 4 decimals; `Integer`: whole), so sums over the
//! workbook and over the CSV agree. Every sheet prints landscape, one page wide, and a table
//! sheet repeats its header row on every printed page; the cover stores its counts as
//! numbers.
//!
//! | column format | Excel number format |
//! |---|---|
//! | `Integer` (volumes, counts) | `#,##0` |
//! | `Decimal(d)` (factors: 3) | `0.000` with `d` decimals |
//! | `Share` | `0.0%` |
//! | `Text` | none; text is written as text |
//!
//! # Safety of cell contents
//! Every cell is written as a value. Text goes through `write_string`, so a station name
//! such as `=HYPERLINK(..)` or `=1+1` stays inert text in the sheet: no formula is ever
//! built from input text.
//!
//! # Determinism
//! Identical inputs give byte-identical files: the document's creation date is fixed
//! ([`CREATION_DATE`]) instead of the wall clock, and the zip entries carry no timestamps.

use std::path::{Path, PathBuf};

use rust_xlsxwriter::{
    DocProperties, ExcelDateTime, Format as XlFormat, FormatAlign, FormatBorder, Workbook,
    Worksheet, XlsxError,
};

use super::table::{cell_text, Cell, Format, Table};
use super::{write_atomic, OutputError};

/// The creation date written into the document properties (year, month, day, UTC midnight).
///
/// A fixed date rather than the wall clock keeps the file byte-identical across runs; the
/// study year and the tool version are stated on the cover sheet instead.
pub const CREATION_DATE: (u16, u8, u8) = (2000, 1, 1);

/// Name of the first sheet.
pub const COVER_SHEET_NAME: &str = "about";

/// Longest sheet name Excel accepts.
const SHEET_NAME_MAX: usize = 31;

/// Data rows a sheet can hold below its header row (Excel's limit is 1,048,576 rows).
const SHEET_DATA_ROWS_MAX: usize = 1_048_575;

/// Longest text Excel stores in one cell.
const CELL_TEXT_MAX: usize = 32_767;

/// Column width bounds, in Excel character units.
const WIDTH_MIN: f64 = 6.0;
const WIDTH_MAX: f64 = 60.0;

/// The first sheet of the workbook: what the figures are and how far to trust them.
#[derive(Debug, Clone, PartialEq)]
pub struct CoverSheet {
    /// Heading, e.g. "Traffic statistics 2025, County road network".
    pub title: String,
    /// Label and value pairs: study year, inputs, methods, counts used, tool version ...
    /// Numbers ([`Cell::Int`], [`Cell::Num`]) are stored as numbers, text as text.
    pub lines: Vec<(String, Cell)>,
    /// The caution shown last and in bold: figures are estimates with stated uncertainty;
    /// design follows local codes and a licensed engineer's judgement.
    pub caution: String,
}

/// Renders the workbook: the cover sheet, then one sheet per table in the order given.
///
/// Sheet names come from [`Table::name`], made valid for Excel (at most 31 characters, no
/// `[]:*?/\`) and unique. The header row reads `name (unit)` where the column has a unit.
/// A table longer than a sheet holds is cut at the sheet's limit and the cover sheet says so.
///
/// ```
/// use roadtally::output::xlsx::{render_workbook, CoverSheet};
/// use roadtally::output::{Cell, Column, Format, Table};
///
/// let mut t = Table::new("segment_statistics", "Segments", vec![
///     Column::new("segment_id", "", Format::Text),
///     Column::new("aadt", "veh/day", Format::Integer),
/// ]);
/// t.push(vec!["S1".into(), Cell::Int(12_000)]);
/// let cover = CoverSheet {
///     title: "Traffic statistics 2025".into(),
///     lines: vec![("Study year".into(), "2025".into())],
///     caution: "Figures are estimates.".into(),
/// };
/// let bytes = render_workbook(&cover, &[&t]).unwrap();
/// assert_eq!(&bytes[..2], b"PK"); // a zip archive
/// ```
pub fn render_workbook(cover: &CoverSheet, tables: &[&Table]) -> Result<Vec<u8>, OutputError> {
    render_inner(cover, tables).map_err(|e| OutputError::Format {
        path: PathBuf::from("workbook.xlsx"),
        reason: e.to_string(),
    })
}

/// Writes the workbook as `<dir>/<name>` (the name includes `.xlsx`), atomically.
pub fn write_workbook(
    dir: &Path,
    name: &str,
    cover: &CoverSheet,
    tables: &[&Table],
) -> Result<PathBuf, OutputError> {
    let bytes = render_workbook(cover, tables).map_err(|e| match e {
        OutputError::Format { reason, .. } => OutputError::Format {
            path: dir.join(name),
            reason,
        },
        other => other,
    })?;
    write_atomic(dir, name, &bytes)
}

fn render_inner(cover: &CoverSheet, tables: &[&Table]) -> Result<Vec<u8>, XlsxError> {
    let mut workbook = Workbook::new();
    let created = ExcelDateTime::from_ymd(CREATION_DATE.0, CREATION_DATE.1, CREATION_DATE.2)?;
    let properties = DocProperties::new()
        .set_title(&cover.title)
        .set_creation_datetime(&created);
    workbook.set_properties(&properties);

    let mut used: Vec<String> = vec![COVER_SHEET_NAME.to_string()];
    let names: Vec<String> = tables
        .iter()
        .map(|t| {
            let name = unique_sheet_name(&t.name, &used);
            used.push(name.clone());
            name
        })
        .collect();

    write_cover(workbook.add_worksheet(), cover, tables, &names)?;
    for (table, name) in tables.iter().zip(&names) {
        write_table(workbook.add_worksheet(), table, name)?;
    }
    workbook.save_to_buffer()
}

fn write_cover(
    sheet: &mut Worksheet,
    cover: &CoverSheet,
    tables: &[&Table],
    names: &[String],
) -> Result<(), XlsxError> {
    sheet.set_name(COVER_SHEET_NAME)?;
    let title = XlFormat::new().set_bold().set_font_size(14);
    let label = XlFormat::new().set_bold().set_align(FormatAlign::Top);
    let text = XlFormat::new().set_text_wrap().set_align(FormatAlign::Top);
    let caution = XlFormat::new()
        .set_bold()
        .set_text_wrap()
        .set_align(FormatAlign::Top);
    sheet.set_column_width(0, 26)?;
    sheet.set_column_width(1, 100)?;

    sheet.write_string_with_format(0, 0, clip(&cover.title), &title)?;
    let mut row: u32 = 2;
    let number = XlFormat::new()
        .set_align(FormatAlign::Left)
        .set_align(FormatAlign::Top);
    for (l, value) in &cover.lines {
        sheet.write_string_with_format(row, 0, clip(l), &label)?;
        match value {
            Cell::Int(v) => {
                sheet.write_number_with_format(row, 1, *v as f64, &number)?;
            }
            Cell::Num(v) if v.is_finite() => {
                sheet.write_number_with_format(row, 1, *v, &number)?;
            }
            Cell::Text(t) => {
                sheet.write_string_with_format(row, 1, clip(t), &text)?;
            }
            _ => {}
        }
        row += 1;
    }
    row += 1;
    sheet.write_string_with_format(row, 0, "Sheets", &label)?;
    for (table, name) in tables.iter().zip(names) {
        let mut note = table.title.clone();
        if table.rows.len() > SHEET_DATA_ROWS_MAX {
            note.push_str(&format!(
                " (first {} of {} rows; the full table is in {}.csv)",
                SHEET_DATA_ROWS_MAX,
                table.rows.len(),
                table.name
            ));
        }
        sheet.write_string_with_format(row, 1, clip(&format!("{name}: {note}")), &text)?;
        row += 1;
    }
    row += 1;
    sheet.write_string_with_format(row, 0, "Caution", &label)?;
    sheet.write_string_with_format(row, 1, clip(&cover.caution), &caution)?;
    page_setup(sheet, false)?;
    Ok(())
}

/// Print setup of a sheet: landscape, one page wide (as many pages tall as needed), and on
/// a table sheet its header row repeated at the top of every printed page.
fn page_setup(sheet: &mut Worksheet, header_row: bool) -> Result<(), XlsxError> {
    sheet.set_landscape();
    sheet.set_print_fit_to_pages(1, 0);
    sheet.set_print_center_horizontally(true);
    if header_row {
        sheet.set_repeat_rows(0, 0)?;
    }
    Ok(())
}

fn write_table(sheet: &mut Worksheet, table: &Table, name: &str) -> Result<(), XlsxError> {
    sheet.set_name(name)?;
    let header = XlFormat::new()
        .set_bold()
        .set_border_bottom(FormatBorder::Thin);
    let formats: Vec<Option<XlFormat>> = table
        .columns
        .iter()
        .map(|c| number_format(c.format).map(|f| XlFormat::new().set_num_format(f)))
        .collect();

    let mut widths: Vec<usize> = Vec::with_capacity(table.columns.len());
    for (ci, col) in table.columns.iter().enumerate() {
        let text = header_text(&col.name, col.unit);
        widths.push(text.chars().count() + 3); // room for the autofilter button
        sheet.write_string_with_format(0, ci as u16, clip(&text), &header)?;
    }

    let rows = &table.rows[..table.rows.len().min(SHEET_DATA_ROWS_MAX)];
    for (ri, row) in rows.iter().enumerate() {
        let r = ri as u32 + 1;
        for (ci, (cell, col)) in row.iter().zip(&table.columns).enumerate() {
            let c = ci as u16;
            let shown = shown_width(cell, col.format);
            if shown > widths[ci] {
                widths[ci] = shown;
            }
            let number = match cell {
                Cell::Empty => None,
                Cell::Text(s) => {
                    // write_string, never write_formula: input text stays text.
                    sheet.write_string(r, c, clip(s))?;
                    None
                }
                Cell::Int(v) => Some(*v as f64),
                // The CSV's precision: the number its text shows, so sums agree.
                Cell::Num(v) if v.is_finite() => cell_text(cell, col.format).parse().ok(),
                Cell::Num(_) => None,
            };
            if let Some(v) = number {
                match &formats[ci] {
                    Some(f) => sheet.write_number_with_format(r, c, v, f)?,
                    None => sheet.write_number(r, c, v)?,
                };
            }
        }
    }

    for (ci, w) in widths.iter().enumerate() {
        sheet.set_column_width(ci as u16, (*w as f64 + 1.0).clamp(WIDTH_MIN, WIDTH_MAX))?;
    }
    if !table.columns.is_empty() {
        let last_col = table.columns.len() as u16 - 1;
        sheet.set_freeze_panes(1, 0)?;
        sheet.autofilter(0, 0, rows.len() as u32, last_col)?;
        page_setup(sheet, true)?;
    }
    Ok(())
}

/// The header text of a column: `name (unit)`, or `name` where there is no unit.
///
/// ```
/// use roadtally::output::xlsx::header_text;
/// assert_eq!(header_text("aadt", "veh/day"), "aadt (veh/day)");
/// assert_eq!(header_text("segment_id", ""), "segment_id");
/// ```
pub fn header_text(name: &str, unit: &str) -> String {
    if unit.is_empty() {
        name.to_string()
    } else {
        format!("{name} ({unit})")
    }
}

/// The Excel number format of a column format; `None` for text.
///
/// ```
/// use roadtally::output::{xlsx::number_format, Format};
/// assert_eq!(number_format(Format::Decimal(3)).as_deref(), Some("0.000"));
/// assert_eq!(number_format(Format::Share).as_deref(), Some("0.0%"));
/// ```
pub fn number_format(format: Format) -> Option<String> {
    match format {
        Format::Text => None,
        Format::Integer => Some("#,##0".to_string()),
        Format::Decimal(0) => Some("0".to_string()),
        Format::Decimal(d) => Some(format!("0.{}", "0".repeat(d as usize))),
        Format::Share => Some("0.0%".to_string()),
    }
}

/// Characters a cell needs when shown with its format (thousands separators, percent sign).
fn shown_width(cell: &Cell, format: Format) -> usize {
    let text = cell_text(cell, format);
    let n = text.chars().count();
    match (cell, format) {
        (Cell::Text(_), _) | (Cell::Empty, _) => n,
        (_, Format::Integer) => n + n / 3,
        (_, Format::Share) => 7,
        _ => n,
    }
}

/// Text shortened to what one Excel cell holds.
fn clip(s: &str) -> &str {
    match s.char_indices().nth(CELL_TEXT_MAX) {
        Some((i, _)) => &s[..i],
        None => s,
    }
}

/// A valid Excel sheet name from a table name, unique (ignoring case) among `used`.
fn unique_sheet_name(table_name: &str, used: &[String]) -> String {
    let mut base: String = table_name
        .chars()
        .map(|c| match c {
            '[' | ']' | ':' | '*' | '?' | '/' | '\\' => '_',
            c if c.is_control() => '_',
            c => c,
        })
        .collect();
    base = base.trim_matches('\'').to_string();
    if base.is_empty() || base.eq_ignore_ascii_case("history") {
        base = format!("table_{base}");
    }
    let taken = |n: &str| used.iter().any(|u| u.to_lowercase() == n.to_lowercase());
    let mut k = 1usize;
    loop {
        let suffix = if k == 1 {
            String::new()
        } else {
            format!("~{k}")
        };
        let keep = SHEET_NAME_MAX - suffix.chars().count();
        let stem: String = base.chars().take(keep).collect();
        let candidate = format!("{}{suffix}", stem.trim_end_matches('\''));
        if !taken(&candidate) {
            return candidate;
        }
        k += 1;
    }
}

#[cfg(test)]
mod tests {
    use std::io::Cursor;

    use calamine::{open_workbook_from_rs, Data, Reader, Xlsx};

    use super::*;
    use crate::output::table::Column;

    fn cover() -> CoverSheet {
        CoverSheet {
            title: "Traffic statistics 2025".into(),
            lines: vec![
                ("Study year".into(), Cell::Int(2025)),
                ("Counts used".into(), "12 continuous, 40 short".into()),
            ],
            caution: "Figures are estimates with stated uncertainty.".into(),
        }
    }

    fn segments() -> Table {
        let mut t = Table::new(
            "segment_statistics",
            "One row per segment",
            vec![
                Column::new("segment_id", "", Format::Text),
                Column::new("aadt", "veh/day", Format::Integer),
                Column::new("heavy_share", "", Format::Share),
                Column::new("k_factor", "", Format::Decimal(3)),
            ],
        );
        t.push(vec![
            "S1".into(),
            Cell::Num(12345.4),
            Cell::Num(0.0834),
            Cell::Num(0.0987654),
        ]);
        t.push(vec![
            "S2".into(),
            Cell::Int(800),
            Cell::Empty,
            Cell::Num(0.11),
        ]);
        t
    }

    fn stations() -> Table {
        let mut t = Table::new(
            "stations_with_a_very_long_table_name_indeed",
            "Stations",
            vec![
                Column::new("station_id", "", Format::Text),
                Column::new("name", "", Format::Text),
                Column::new("days", "d", Format::Integer),
            ],
        );
        t.push(vec!["A".into(), "=1+1".into(), Cell::Int(365)]);
        t.push(vec![
            "B".into(),
            "<script>alert(1)</script>".into(),
            Cell::Int(12),
        ]);
        t
    }

    /// The text of zip entry `name` of an `.xlsx` archive, found through the central directory
    /// and inflated (entries are stored or deflated).
    pub(crate) fn zip_entry(zip: &[u8], name: &str) -> Option<String> {
        use std::io::Read;
        let u16at = |i: usize| u16::from_le_bytes([zip[i], zip[i + 1]]) as usize;
        let u32at = |i: usize| u32::from_le_bytes(zip[i..i + 4].try_into().unwrap()) as usize;
        let eocd = (0..zip.len() - 21)
            .rev()
            .find(|&i| zip[i..i + 4] == [0x50, 0x4b, 0x05, 0x06])?;
        let (entries, mut at) = (u16at(eocd + 10), u32at(eocd + 16));
        for _ in 0..entries {
            let (method, csize) = (u16at(at + 10), u32at(at + 20));
            let (nlen, xlen, clen) = (u16at(at + 28), u16at(at + 30), u16at(at + 32));
            let local = u32at(at + 42);
            let entry = std::str::from_utf8(&zip[at + 46..at + 46 + nlen]).ok()?;
            if entry == name {
                let start = local + 30 + u16at(local + 26) + u16at(local + 28);
                let data = &zip[start..start + csize];
                let mut out = String::new();
                match method {
                    0 => out.push_str(std::str::from_utf8(data).ok()?),
                    8 => {
                        flate2::read::DeflateDecoder::new(data)
                            .read_to_string(&mut out)
                            .ok()?;
                    }
                    _ => return None,
                }
                return Some(out);
            }
            at += 46 + nlen + xlen + clen;
        }
        None
    }

    /// Page setup as Excel and LibreOffice read it (ECMA-376 Part 1, 18.3.1.63 pageSetup,
    /// 18.3.1.65 sheetPr/pageSetUpPr fitToPage, 18.2.5 definedName _xlnm.Print_Titles):
    /// landscape, fit to one page wide, header row repeated on every table sheet.
    #[test]
    fn sheets_print_landscape_one_page_wide_with_the_header_repeated() {
        let (a, b) = (segments(), stations());
        let bytes = render_workbook(&cover(), &[&a, &b]).unwrap();
        for n in 1..=3 {
            let xml = zip_entry(&bytes, &format!("xl/worksheets/sheet{n}.xml")).unwrap();
            assert!(xml.contains("<pageSetUpPr fitToPage=\"1\"/>"), "sheet{n}");
            assert!(xml.contains("orientation=\"landscape\""), "sheet{n}");
            assert!(
                xml.contains("fitToHeight=\"0\""),
                "sheet{n}: as many pages tall as needed"
            );
        }
        let wb = zip_entry(&bytes, "xl/workbook.xml").unwrap();
        for sheet in ["segment_statistics", "stations_with_a_very_long_table"] {
            assert!(
                wb.contains(&format!(
                    "_xlnm.Print_Titles\" localSheetId=\"{}\"",
                    if sheet == "segment_statistics" { 1 } else { 2 }
                )),
                "{wb}"
            );
            assert!(
                wb.contains(&format!("{sheet}!$1:$1")),
                "{sheet} repeats row 1: {wb}"
            );
        }
    }

    /// The cover stores numbers as numbers; the table sheets store a number at the CSV's
    /// precision (the text the CSV prints, parsed), so workbook and CSV sums agree.
    #[test]
    fn cover_numbers_are_numbers_and_values_have_the_csv_precision() {
        let a = segments();
        let mut wb = read(render_workbook(&cover(), &[&a]).unwrap());
        let about = wb.worksheet_range("about").unwrap();
        assert_eq!(about.get_value((2, 1)), Some(&Data::Float(2025.0)));
        let seg = wb.worksheet_range("segment_statistics").unwrap();
        assert_eq!(seg.get_value((1, 1)), Some(&Data::Float(12345.0)));
        assert_eq!(seg.get_value((1, 2)), Some(&Data::Float(0.0834)));
        assert_eq!(seg.get_value((1, 3)), Some(&Data::Float(0.099)));
    }

    fn read(bytes: Vec<u8>) -> Xlsx<Cursor<Vec<u8>>> {
        open_workbook_from_rs(Cursor::new(bytes)).expect("workbook reads back")
    }

    #[test]
    fn sheets_headers_and_values_read_back() {
        let (a, b) = (segments(), stations());
        let bytes = render_workbook(&cover(), &[&a, &b]).unwrap();
        let mut wb = read(bytes);
        assert_eq!(
            wb.sheet_names(),
            vec![
                "about".to_string(),
                "segment_statistics".to_string(),
                "stations_with_a_very_long_table".to_string()
            ]
        );

        let about = wb.worksheet_range("about").unwrap();
        assert_eq!(
            about.get_value((0, 0)),
            Some(&Data::String("Traffic statistics 2025".into()))
        );
        let all: Vec<String> = about.cells().map(|(_, _, d)| d.to_string()).collect();
        assert!(all.iter().any(|s| s.contains("stated uncertainty")));

        let seg = wb.worksheet_range("segment_statistics").unwrap();
        let headers: Vec<String> = (0..4)
            .map(|c| seg.get_value((0, c)).unwrap().to_string())
            .collect();
        assert_eq!(
            headers,
            ["segment_id", "aadt (veh/day)", "heavy_share", "k_factor"]
        );
        // Every value equals the CSV text of the same cell, to the CSV's precision.
        for (ri, row) in a.rows.iter().enumerate() {
            for (ci, (cell, col)) in row.iter().zip(&a.columns).enumerate() {
                let got = seg.get_value((ri as u32 + 1, ci as u32)).unwrap();
                let csv = cell_text(cell, col.format);
                match got {
                    Data::Empty => assert!(csv.is_empty()),
                    Data::String(s) => assert_eq!(s, &csv),
                    Data::Float(v) => {
                        let want: f64 = csv.parse().unwrap();
                        let tol = match col.format {
                            Format::Integer => 0.5,
                            Format::Share => 5e-5,
                            Format::Decimal(d) => 0.5 * 10f64.powi(-(d as i32)),
                            Format::Text => 1e-9,
                        };
                        approx::assert_abs_diff_eq!(*v, want, epsilon = tol);
                    }
                    other => panic!("unexpected cell {other:?}"),
                }
            }
        }

        let st = wb
            .worksheet_range("stations_with_a_very_long_table")
            .unwrap();
        assert_eq!(st.get_value((0, 2)), Some(&Data::String("days (d)".into())));
        assert_eq!(st.get_value((1, 1)), Some(&Data::String("=1+1".into())));
        assert_eq!(
            st.get_value((2, 1)),
            Some(&Data::String("<script>alert(1)</script>".into()))
        );
        let formulas = wb
            .worksheet_formula("stations_with_a_very_long_table")
            .unwrap();
        assert!(formulas.cells().all(|(_, _, f)| f.is_empty()));
    }

    #[test]
    fn two_renders_are_byte_identical() {
        let (a, b) = (segments(), stations());
        let one = render_workbook(&cover(), &[&a, &b]).unwrap();
        let two = render_workbook(&cover(), &[&a, &b]).unwrap();
        assert_eq!(one, two);
    }

    #[test]
    fn write_puts_the_file_in_place() {
        let dir = tempfile::tempdir().unwrap();
        let a = segments();
        let path = write_workbook(dir.path(), "roadtally.xlsx", &cover(), &[&a]).unwrap();
        assert!(path.ends_with("roadtally.xlsx"));
        let wb = read(std::fs::read(&path).unwrap());
        assert_eq!(wb.sheet_names().len(), 2);
    }

    #[test]
    fn sheet_names_are_valid_and_unique() {
        let used = vec!["about".to_string(), "Data".to_string()];
        assert_eq!(unique_sheet_name("data", &used), "data~2");
        assert_eq!(unique_sheet_name("a/b:c", &used), "a_b_c");
        assert_eq!(unique_sheet_name("History", &used), "table_History");
        let long = "x".repeat(40);
        let first = unique_sheet_name(&long, &used);
        assert_eq!(first.chars().count(), 31);
        let second = unique_sheet_name(&long, std::slice::from_ref(&first));
        assert_eq!(second.chars().count(), 31);
        assert_ne!(first, second);
    }

    #[test]
    fn number_formats_follow_the_column_format() {
        assert_eq!(number_format(Format::Integer).unwrap(), "#,##0");
        assert_eq!(number_format(Format::Decimal(3)).unwrap(), "0.000");
        assert_eq!(number_format(Format::Share).unwrap(), "0.0%");
        assert_eq!(number_format(Format::Text), None);
    }
}
