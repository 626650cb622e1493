//! HTML report writer: one self-contained page that a road agency can publish, mail or print.
//!
//! The page holds, in order: the caution, the key facts, the network totals, a network map
//! coloured by AADT (seven round-number classes) whose line opacity (and a second panel)
//! shows the width of each 95 % interval, with permanent counters, short-count stations and
//! a scale bar; the per-segment table; the permanent counters (station table, ranked-hour
//! curves, hourly profiles); monthly and weekday factor charts per factor group; the
//! short-count calibration and cross-validation results as bar charts and tables; quality
//! control (a station-by-day calendar, direction-days accepted without a flag, flagged and
//! rejected per station, as in `qc_summary.csv`); further tables; and the method and caution
//! text. Chart titles stand above their charts, in plain words with units.
//!
//! # Self-contained and safe
//! The file needs nothing but a browser: CSS is inline, charts are inline SVG ([`svg`],
//! [`map`]), and the only script is our own (`report.js`, no library) with its data in a
//! `<script type="application/json">` block ([`interactive`]); there are no external links,
//! fonts, images or network requests, so it works offline and archived copies never change.
//! Without the script every chart and the first rows of each table still show (print,
//! archives); the script adds zoom, pan, search and an info panel to the map and paging,
//! filtering and sorting to the segment table. Every text taken from the inputs (station
//! names, labels, table cells) is HTML-escaped by the maud templates, so a name like
//! `<script>alert(1)</script>` is shown, never run; inside the data block every `<` is
//! written `\u003c`, so input text can neither close the block nor open a comment, and the
//! script writes text only through `textContent`.
//!
//! # Layout and print
//! One direction inside: [`data`] (what the report shows) -> [`svg`], [`map`], `curves.rs`
//! and `calendar.rs` (charts drawn from it) and `charts.rs` (which result columns become bar
//! charts) -> `page.rs` (the layout) -> this module (render and write). The stylesheet is
//! `report/report.css`. The page reads at laptop width and has a print stylesheet for A4 and
//! Letter (15 mm margins, charts and table rows kept whole, table headers repeated and never
//! broken letter by letter, the interactive controls hidden).
//!
//! # Determinism
//! The page states the tool version, not the time it was made, and numbers are printed with
//! fixed decimals, so identical inputs give a byte-identical file.

mod calendar;
mod charts;
mod curves;
pub mod data;
pub mod interactive;
pub mod map;
mod page;
pub mod svg;

use std::path::{Path, PathBuf};

pub use data::{
    Bar, CalendarRow, DayStatus, GroupCurves, MapMarker, MapSegment, QcRow, ReportData, Series,
    TABLE_ROWS_MAX,
};

pub use curves::RANKS_SHOWN;

use super::{write_atomic, OutputError};

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
    page::page(data).into_string()
}

/// Writes the report as `<dir>/<name>` (the name includes `.html`), atomically.
pub fn write_report(dir: &Path, name: &str, data: &ReportData) -> Result<PathBuf, OutputError> {
    write_atomic(dir, name, render_report(data).as_bytes())
}

#[cfg(test)]
mod tests {
    use super::charts::{metric_charts, qc_chart, qc_rows};
    use super::*;
    use crate::output::table::{Cell, Column, Format, Table};

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
                    id: EVIL.into(),
                    route: "</script><!--".into(),
                    ..MapSegment::default()
                },
                MapSegment {
                    from: (-73.98, 40.76),
                    to: (-73.95, 40.78),
                    aadt: 900.0,
                    lo95: 400.0,
                    hi95: 1800.0,
                    basis: "estimated".into(),
                    label: "s2".into(),
                    id: "s2".into(),
                    ..MapSegment::default()
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
            markers: vec![MapMarker {
                id: EVIL.into(),
                segment_id: "s2".into(),
                at: (-73.97, 40.77),
                continuous: true,
            }],
            ..ReportData::default()
        }
    }

    #[test]
    fn input_text_is_escaped_and_nothing_is_fetched() {
        let html = render_report(&data());
        assert!(html.starts_with("<!DOCTYPE html>"));
        assert!(html.contains("&lt;script&gt;alert(1)&lt;/script&gt;"));
        // Exactly our two script elements: the JSON data block and our script; input text
        // (a segment id and route holding `</script><!--`) stays inside the data block.
        let lower = html.to_ascii_lowercase();
        assert_eq!(lower.matches("<script").count(), 2);
        assert_eq!(lower.matches("</script").count(), 2);
        assert!(!html.contains("<!--"));
        assert!(html.contains("<script id=\"report-data\" type=\"application/json\">"));
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
        const VOID: [&str; 3] = ["meta", "!DOCTYPE", "input"];
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
            "g",
            "form",
            "label",
            "button",
            "script",
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
            if (name == "style" || name == "script") && !closing {
                // CSS and script are ours, the data block is escaped JSON: none holds a
                // closing tag before its own; skip to its end.
                let close = format!("</{name}>");
                let j = rest.find(&close).expect("style or script closes");
                assert!(!rest[..j].contains("</"), "nothing inside closes a tag");
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
        assert!(
            html.contains("Median absolute percentage error (%) by count length and class group")
        );
        assert!(!html.contains("median_ape_pct by"));
        assert!(html.contains("nominal 95 %"));
        // QC stacked bars.
        assert!(html.contains("direction-days rejected"));
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
        // 50 stations x (300 accepted, 1 of them flagged): 14,950 without a flag.
        approx::assert_relative_eq!(rows[1].1[0], 14_950.0);
        approx::assert_relative_eq!(rows[1].1[2], 100.0);
    }

    /// A station with 730 direction-days (two directions, 365 days), 26 of them flagged and
    /// 4 rejected: the bar's parts must add up to 730, not 756 (flagged counted twice).
    #[test]
    fn qc_bars_add_up_to_the_direction_days() {
        let mut qc = data().qc_summary.unwrap();
        qc.rows.clear();
        qc.push(vec![
            "st1".into(),
            "all".into(),
            Cell::Int(726),
            Cell::Int(26),
            Cell::Int(4),
        ]);
        let rows = qc_rows(&qc).unwrap();
        let parts = rows[0].1;
        approx::assert_relative_eq!(parts.iter().sum::<f64>(), 730.0);
        approx::assert_relative_eq!(parts[0], 700.0);
        approx::assert_relative_eq!(parts[1], 26.0);
        let html = svg::qc_bars("t", &rows).into_string();
        assert!(html.contains("700 / 26 / 4"));
    }

    #[test]
    fn write_puts_the_file_in_place() {
        let dir = tempfile::tempdir().unwrap();
        let p = write_report(dir.path(), "report.html", &data()).unwrap();
        assert_eq!(std::fs::read_to_string(p).unwrap(), render_report(&data()));
    }
}
