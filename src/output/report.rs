//! HTML report writer: one self-contained page that a road agency can publish, mail or print.
//!
//! The page holds, in order: the caution, the key facts, the network totals, a network map
//! coloured by AADT whose line opacity (and a second panel) shows the width of each 95 %
//! interval, monthly and weekday factor charts per factor group, the short-count calibration
//! and cross-validation results as bar charts and tables, the quality-control summary
//! (station-days accepted, flagged and rejected per station and rule), further tables, and the
//! method and caution text.
//!
//! # Self-contained and safe
//! The file needs nothing but a browser: CSS is inline, charts are inline SVG
//! ([`super::svg`]), and there are no scripts, external links, fonts or images, so it works
//! offline and archived copies never change. Every text taken from the inputs (station names,
//! labels, table cells) is HTML-escaped by the maud templates, so a name like
//! `<script>alert(1)</script>` is shown, never run.
//!
//! # Layout and print
//! The page layout lives in its own module (`report/layout.rs`) and the stylesheet in
//! `report/report.css`. The page reads at laptop width and has a print stylesheet for A4 and
//! Letter (15 mm margins, charts and table rows kept whole, table headers repeated).
//!
//! # Determinism
//! The page states the tool version, not the time it was made, and numbers are printed with
//! fixed decimals, so identical inputs give a byte-identical file.

mod layout;

use std::path::{Path, PathBuf};

use super::svg::QcRow;
use super::table::{Cell, Format, Table};
use super::{write_atomic, OutputError};

/// Most rows of one table shown in the report; longer tables end with a note that the full
/// table is in its CSV file.
pub const TABLE_ROWS_MAX: usize = 100;

/// One segment on the report's map.
#[derive(Debug, Clone, PartialEq)]
pub struct MapSegment {
    /// From node, (lon, lat) decimal degrees WGS 84.
    pub from: (f64, f64),
    /// To node, (lon, lat) decimal degrees WGS 84.
    pub to: (f64, f64),
    /// AADT, veh/day.
    pub aadt: f64,
    /// Lower end of the 95 % interval, veh/day.
    pub lo95: f64,
    /// Upper end of the 95 % interval, veh/day.
    pub hi95: f64,
    /// `continuous`, `short_count` or `estimated`; estimated segments are drawn dashed.
    pub basis: String,
    /// Tooltip label, e.g. the segment id and route.
    pub label: String,
}

/// A named series of values, e.g. the 12 monthly factors of one factor group.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Group name.
    pub name: String,
    /// Values (dimensionless factors); a non-finite value is a gap.
    pub values: Vec<f64>,
}

/// Everything the report shows; the pipeline fills it from stage outputs.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ReportData {
    /// Page title.
    pub title: String,
    /// The study year.
    pub study_year: i32,
    /// Tool and version, e.g. "roadtally 0.1.0" (no wall clock, so outputs are reproducible).
    pub generated_by: String,
    /// Key facts as label and text: counts used, segments, stations ...
    pub summary: Vec<(String, String)>,
    /// Segments to map.
    pub map: Vec<MapSegment>,
    /// Monthly factors per factor group (12 values, January first).
    pub monthly_factors: Vec<Series>,
    /// Weekday factors per factor group (7 values, Monday first).
    pub weekday_factors: Vec<Series>,
    /// Short-count calibration table (error and coverage by count length and class group).
    pub calibration: Option<Table>,
    /// Cross-validation table of the spatial estimates.
    pub cross_validation: Option<Table>,
    /// Quality-control summary: station-days accepted, flagged and rejected per station and
    /// rule.
    pub qc_summary: Option<Table>,
    /// Network totals (vehicle-km, segments by basis ...).
    pub network_totals: Option<Table>,
    /// Further tables shown as they are (design, toll reconciliation ...), at most
    /// [`TABLE_ROWS_MAX`] rows each.
    pub extra_tables: Vec<Table>,
    /// Method sections: heading and paragraph.
    pub methods: Vec<(String, String)>,
    /// The caution: figures are estimates with stated uncertainty; design follows local
    /// codes and a licensed engineer's judgement.
    pub caution: String,
}

/// Renders the complete HTML5 document.
///
/// ```
/// use roadtally::output::report::{render_report, ReportData};
/// let data = ReportData {
///     title: "Traffic statistics 2025".into(),
///     study_year: 2025,
///     caution: "Figures are estimates <with> stated uncertainty.".into(),
///     ..ReportData::default()
/// };
/// let html = render_report(&data);
/// assert!(html.starts_with("<!DOCTYPE html>"));
/// assert!(html.contains("estimates &lt;with&gt; stated"));
/// ```
pub fn render_report(data: &ReportData) -> String {
    layout::page(data).into_string()
}

/// Writes the report as `<dir>/<name>` (the name includes `.html`), atomically.
pub fn write_report(dir: &Path, name: &str, data: &ReportData) -> Result<PathBuf, OutputError> {
    write_atomic(dir, name, render_report(data).as_bytes())
}

/// Columns of result tables that are worth a bar chart, matched by name: error and coverage
/// measures.
fn is_metric(name: &str) -> bool {
    let n = name.to_ascii_lowercase();
    ["ape", "coverage", "bias", "rmse", "error"]
        .iter()
        .any(|k| n.split('_').any(|part| part.starts_with(k)))
}

/// Columns that name a category of a result table row (count length, class group ...).
fn is_category(table: &Table, ci: usize) -> bool {
    const NAMES: [&str; 10] = [
        "hours",
        "count_hours",
        "class_group",
        "estimator",
        "group",
        "method",
        "basis",
        "functional_class",
        "area",
        "model",
    ];
    let col = &table.columns[ci];
    !is_metric(&col.name) && (col.format == Format::Text || NAMES.contains(&col.name.as_str()))
}

/// A bar chart request: title, bars, unit and an optional reference line.
struct MetricChart {
    title: String,
    bars: Vec<super::svg::Bar>,
    unit: String,
    reference: Option<(f64, &'static str)>,
}

/// One bar chart per error or coverage column of a result table; none when the table has no
/// such column (the table is still shown).
fn metric_charts(table: &Table) -> Vec<MetricChart> {
    let cats: Vec<usize> = (0..table.columns.len())
        .filter(|&ci| is_category(table, ci))
        .collect();
    let label = |row: &[Cell]| -> String {
        let parts: Vec<String> = cats
            .iter()
            .filter_map(|&ci| {
                let col = &table.columns[ci];
                let text = match &row[ci] {
                    Cell::Empty => return None,
                    Cell::Text(s) => s.clone(),
                    Cell::Int(v) => v.to_string(),
                    Cell::Num(v) => format!("{v}"),
                };
                Some(if col.unit.is_empty() {
                    text
                } else {
                    format!("{text} {}", col.unit)
                })
            })
            .collect();
        parts.join(" · ")
    };
    let mut charts = Vec::new();
    for (ci, col) in table.columns.iter().enumerate() {
        if col.format == Format::Text || !is_metric(&col.name) {
            continue;
        }
        let share = col.format == Format::Share;
        let bars: Vec<super::svg::Bar> = table
            .rows
            .iter()
            .enumerate()
            .filter_map(|(ri, row)| {
                let v = match row[ci] {
                    Cell::Int(v) => v as f64,
                    Cell::Num(v) if v.is_finite() => v,
                    _ => return None,
                };
                let mut l = label(row);
                if l.is_empty() {
                    l = format!("row {}", ri + 1);
                }
                Some(super::svg::Bar {
                    label: l,
                    value: if share { 100.0 * v } else { v },
                })
            })
            .collect();
        if bars.is_empty() {
            continue;
        }
        let unit = if share || col.name.ends_with("_pct") {
            "%".to_string()
        } else {
            col.unit.to_string()
        };
        let reference = if col.name.to_ascii_lowercase().contains("coverage") {
            let max = bars.iter().map(|b| b.value).fold(0.0, f64::max);
            if unit == "%" || max > 1.5 {
                Some((95.0, "nominal 95 %"))
            } else {
                Some((0.95, "nominal 0.95"))
            }
        } else {
            None
        };
        charts.push(MetricChart {
            title: format!("{} by {}", col.name, category_names(table, &cats)),
            bars,
            unit,
            reference,
        });
    }
    charts
}

fn category_names(table: &Table, cats: &[usize]) -> String {
    if cats.is_empty() {
        "row".to_string()
    } else {
        cats.iter()
            .map(|&ci| table.columns[ci].name.as_str())
            .collect::<Vec<_>>()
            .join(" and ")
    }
}

/// The QC chart: a title and one stacked bar per table row, or, when the table has more rows
/// than a chart can show and a `rule` column, one bar per rule summed over stations (summing
/// over rules instead would count a station's accepted days once per rule).
fn qc_chart(table: &Table) -> Option<(String, Vec<QcRow>)> {
    let rows = qc_rows(table)?;
    let title = "Station-days accepted, flagged and rejected".to_string();
    match table.column("rule") {
        Some(rule) if rows.len() > super::svg::BARS_MAX => {
            let mut by_rule: std::collections::BTreeMap<String, [f64; 3]> = Default::default();
            for (row, (_, v)) in table.rows.iter().zip(&rows) {
                let name = match &row[rule] {
                    Cell::Text(s) => s.clone(),
                    Cell::Empty => String::new(),
                    other => super::table::cell_text(other, Format::Text),
                };
                let sum = by_rule.entry(name).or_insert([0.0; 3]);
                for k in 0..3 {
                    if v[k].is_finite() {
                        sum[k] += v[k];
                    }
                }
            }
            Some((
                format!("{title} per rule, all stations"),
                by_rule.into_iter().collect(),
            ))
        }
        _ => Some((title, rows)),
    }
}

/// Rows of a QC summary as (label, [accepted, flagged, rejected]) when the table has those
/// three columns (names starting with the words); `None` otherwise.
fn qc_rows(table: &Table) -> Option<Vec<QcRow>> {
    let find = |word: &str| {
        table
            .columns
            .iter()
            .position(|c| c.format != Format::Text && c.name.to_ascii_lowercase().starts_with(word))
    };
    let idx = [find("accepted")?, find("flagged")?, find("rejected")?];
    let labels: Vec<usize> = (0..table.columns.len())
        .filter(|&ci| table.columns[ci].format == Format::Text)
        .collect();
    let num = |c: &Cell| match c {
        Cell::Int(v) => *v as f64,
        Cell::Num(v) => *v,
        _ => f64::NAN,
    };
    Some(
        table
            .rows
            .iter()
            .map(|row| {
                let label = labels
                    .iter()
                    .filter_map(|&ci| match &row[ci] {
                        Cell::Text(s) if !s.is_empty() => Some(s.as_str()),
                        _ => None,
                    })
                    .collect::<Vec<_>>()
                    .join(" · ");
                (label, idx.map(|ci| num(&row[ci])))
            })
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::output::table::Column;

    const EVIL: &str = "<script>alert(1)</script>";

    fn data() -> ReportData {
        let mut calibration = Table::new(
            "calibration",
            "Short-count calibration",
            vec![
                Column::new("hours", "h", Format::Integer),
                Column::new("class_group", "", Format::Text),
                Column::new("trials", "", Format::Integer),
                Column::new("median_ape_pct", "%", Format::Decimal(1)),
                Column::new("coverage95", "", Format::Share),
            ],
        );
        calibration.push(vec![
            Cell::Int(24),
            "arterial".into(),
            Cell::Int(120),
            Cell::Num(8.2),
            Cell::Num(0.94),
        ]);
        calibration.push(vec![
            Cell::Int(48),
            EVIL.into(),
            Cell::Int(80),
            Cell::Num(6.1),
            Cell::Num(0.96),
        ]);
        let mut qc = Table::new(
            "qc_summary",
            "Station-days by rule",
            vec![
                Column::new("station_id", "", Format::Text),
                Column::new("rule", "", Format::Text),
                Column::new("accepted", "station-days", Format::Integer),
                Column::new("flagged", "station-days", Format::Integer),
                Column::new("rejected", "station-days", Format::Integer),
            ],
        );
        qc.push(vec![
            EVIL.into(),
            "zero_run".into(),
            Cell::Int(350),
            Cell::Int(5),
            Cell::Int(10),
        ]);
        let mut extra = Table::new(
            "design",
            "Design figures",
            vec![
                Column::new("segment_id", "", Format::Text),
                Column::new("k_factor", "", Format::Decimal(3)),
            ],
        );
        for i in 0..(TABLE_ROWS_MAX + 5) {
            extra.push(vec![format!("s{i}").into(), Cell::Num(0.1)]);
        }
        ReportData {
            title: "Traffic statistics 2025".into(),
            study_year: 2025,
            generated_by: "roadtally 0.1.0".into(),
            summary: vec![("Counts used".into(), "3 continuous, 12 short".into())],
            map: vec![
                MapSegment {
                    from: (-73.99, 40.75),
                    to: (-73.98, 40.76),
                    aadt: 12000.0,
                    lo95: 10000.0,
                    hi95: 14000.0,
                    basis: "continuous".into(),
                    label: EVIL.into(),
                },
                MapSegment {
                    from: (-73.98, 40.76),
                    to: (-73.95, 40.78),
                    aadt: 900.0,
                    lo95: 400.0,
                    hi95: 1800.0,
                    basis: "estimated".into(),
                    label: "s2".into(),
                },
            ],
            monthly_factors: vec![Series {
                name: "urban arterial".into(),
                values: (0..12).map(|m| 0.9 + 0.02 * m as f64).collect(),
            }],
            weekday_factors: vec![Series {
                name: EVIL.into(),
                values: vec![1.05, 1.0, 1.0, 0.98, 0.95, 1.1, 1.2],
            }],
            calibration: Some(calibration),
            cross_validation: None,
            qc_summary: Some(qc),
            network_totals: None,
            extra_tables: vec![extra],
            methods: vec![("Expansion".into(), "Short counts are expanded.".into())],
            caution: "Figures are estimates with stated uncertainty; design follows local codes and a licensed engineer's judgement.".into(),
        }
    }

    #[test]
    fn input_text_is_escaped_and_nothing_is_fetched() {
        let html = render_report(&data());
        assert!(html.starts_with("<!DOCTYPE html>"));
        assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
        assert!(!html.to_ascii_lowercase().contains("<script"));
        assert!(!html.contains("src="));
        assert!(!html.contains("href=\"http"));
        assert!(!html.contains("http://"));
        assert!(!html.contains("https://"));
        assert!(!html.contains("@import"));
        assert!(
            html.contains("licensed engineer&#39;s judgement")
                || html.contains("licensed engineer's judgement")
        );
    }

    /// Checks that every element opened is closed in order (void elements excepted) and that
    /// only expected elements occur: escaped input text can never open a tag.
    fn assert_well_formed(html: &str) {
        const VOID: [&str; 2] = ["meta", "!DOCTYPE"];
        const ALLOWED: &[&str] = &[
            "html",
            "head",
            "meta",
            "title",
            "style",
            "body",
            "header",
            "div",
            "strong",
            "nav",
            "ol",
            "li",
            "a",
            "section",
            "h1",
            "h2",
            "h3",
            "p",
            "dl",
            "dt",
            "dd",
            "figure",
            "figcaption",
            "ul",
            "svg",
            "line",
            "polyline",
            "circle",
            "rect",
            "text",
            "span",
            "table",
            "caption",
            "thead",
            "tbody",
            "tr",
            "th",
            "td",
            "footer",
        ];
        let mut stack: Vec<String> = Vec::new();
        let mut rest = html;
        while let Some(i) = rest.find('<') {
            rest = &rest[i + 1..];
            let end = rest.find('>').expect("tag closes");
            let tag = &rest[..end];
            rest = &rest[end + 1..];
            let closing = tag.starts_with('/');
            let name: String = tag
                .trim_start_matches('/')
                .chars()
                .take_while(|c| !c.is_whitespace())
                .collect();
            if VOID.contains(&name.as_str()) {
                continue;
            }
            assert!(
                ALLOWED.contains(&name.as_str()),
                "unexpected element <{name}>"
            );
            if closing {
                assert_eq!(
                    stack.pop().as_deref(),
                    Some(name.as_str()),
                    "closing </{name}>"
                );
            } else {
                stack.push(name.clone());
            }
            if name == "style" && !closing {
                // CSS is ours and holds no tags; skip to its end.
                let j = rest.find("</style>").expect("style closes");
                rest = &rest[j..];
            }
        }
        assert!(stack.is_empty(), "unclosed {stack:?}");
    }

    #[test]
    fn the_document_is_well_formed() {
        assert_well_formed(&render_report(&data()));
        assert_well_formed(&render_report(&ReportData::default()));
    }

    #[test]
    fn report_shows_charts_tables_and_notes() {
        let html = render_report(&data());
        assert!(html.contains("<svg"));
        assert!(html.contains("@media print"));
        // Map tooltips, legends and both panels.
        assert!(html.contains("AADT 12,000 veh/day, 95 % interval 10,000 to 14,000 veh/day"));
        assert!(html.contains("stroke-dasharray"));
        // Calibration charts by name, with the nominal coverage line.
        assert!(html.contains("median_ape_pct by hours and class_group"));
        assert!(html.contains("nominal 95 %"));
        // QC stacked bars.
        assert!(html.contains("station-days rejected"));
        // Truncated extra table with its note.
        assert!(html.contains(&format!(
            "first {TABLE_ROWS_MAX} of {} rows",
            TABLE_ROWS_MAX + 5
        )));
        assert!(html.contains("design.csv"));
        assert!(html.contains("Study year 2025"));
        assert!(html.contains("roadtally 0.1.0"));
    }

    #[test]
    fn two_renders_are_byte_identical() {
        assert_eq!(render_report(&data()), render_report(&data()));
    }

    #[test]
    fn an_empty_report_still_renders() {
        let html = render_report(&ReportData::default());
        assert!(html.contains("No segments to map."));
        assert!(html.ends_with("</html>"));
    }

    #[test]
    fn tables_without_metric_columns_get_no_chart() {
        let t = Table::new("x", "x", vec![Column::new("station_id", "", Format::Text)]);
        assert!(metric_charts(&t).is_empty());
        assert!(qc_rows(&t).is_none());
        assert!(qc_chart(&t).is_none());
        let d = data();
        let charts = metric_charts(d.calibration.as_ref().unwrap());
        assert_eq!(charts.len(), 2);
        assert_eq!(charts[1].unit, "%");
        approx::assert_relative_eq!(charts[1].bars[0].value, 94.0);
    }

    #[test]
    fn a_long_qc_table_is_charted_per_rule() {
        let mut qc = data().qc_summary.unwrap();
        qc.rows.clear();
        for i in 0..50 {
            for rule in ["zero_run", "spike"] {
                qc.push(vec![
                    format!("st{i}").into(),
                    rule.into(),
                    Cell::Int(300),
                    Cell::Int(1),
                    Cell::Int(2),
                ]);
            }
        }
        let (title, rows) = qc_chart(&qc).unwrap();
        assert!(title.ends_with("per rule, all stations"));
        assert_eq!(rows.len(), 2);
        assert_eq!(rows[0].0, "spike");
        approx::assert_relative_eq!(rows[1].1[0], 15_000.0);
        approx::assert_relative_eq!(rows[1].1[2], 100.0);
    }

    #[test]
    fn write_puts_the_file_in_place() {
        let dir = tempfile::tempdir().unwrap();
        let p = write_report(dir.path(), "report.html", &data()).unwrap();
        assert_eq!(std::fs::read_to_string(p).unwrap(), render_report(&data()));
    }
}
