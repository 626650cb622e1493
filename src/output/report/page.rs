//! The report's page layout (maud template): sections, headings, tables and where each chart
//! goes. The charts themselves are drawn in [`super::svg`]; the styles are in
//! `report.css` next to this file.

use maud::{html, Markup, PreEscaped, DOCTYPE};

use super::charts::{metric_charts, qc_chart};
use super::data::{ReportData, TABLE_ROWS_MAX};
use super::svg;
use crate::output::table::{cell_text, Cell, Format, Table};

/// The stylesheet, inlined so the page needs no other file.
const STYLE: &str = include_str!("report.css");

/// The whole page.
pub(super) fn page(d: &ReportData) -> Markup {
    let sections = contents(d);
    html! {
        (DOCTYPE)
        html lang="en" {
            head {
                meta charset="utf-8";
                meta name="viewport" content="width=device-width, initial-scale=1";
                meta name="generator" content=(d.generated_by);
                title { (d.title) }
                style { (PreEscaped(STYLE)) }
            }
            body {
                header {
                    h1 { (d.title) }
                    p.meta { "Study year " (d.study_year) " · produced by " (d.generated_by) }
                }
                (caution(&d.caution))
                nav {
                    strong { "Contents" }
                    ol {
                        @for (id, heading) in &sections {
                            li { a href=(format!("#{id}")) { (heading) } }
                        }
                    }
                }
                @if !d.summary.is_empty() {
                    section id="facts" {
                        h2 { "Key facts" }
                        dl.facts {
                            @for (label, text) in &d.summary {
                                dt { (label) }
                                dd { (text) }
                            }
                        }
                    }
                }
                @if let Some(t) = &d.network_totals {
                    section id="totals" {
                        h2 { "Network totals" }
                        (table(t))
                    }
                }
                section id="map" {
                    h2 { "Network map" }
                    (svg::network_map(&d.map))
                }
                section id="factors" {
                    h2 { "Monthly and weekday factors" }
                    p.note {
                        "One panel per factor group, on a shared scale; the dashed line marks a "
                        "factor of 1. Factors are dimensionless."
                    }
                    h3 { "Monthly factors" }
                    (svg::factor_panels(&d.monthly_factors, "monthly factors"))
                    h3 { "Weekday factors" }
                    (svg::factor_panels(&d.weekday_factors, "weekday factors"))
                }
                @if let Some(t) = &d.calibration {
                    section id="calibration" {
                        h2 { "Short-count calibration" }
                        (results(t))
                    }
                }
                @if let Some(t) = &d.cross_validation {
                    section id="cross-validation" {
                        h2 { "Cross-validation" }
                        (results(t))
                    }
                }
                @if let Some(t) = &d.qc_summary {
                    section id="qc" {
                        h2 { "Quality control" }
                        @if let Some((title, rows)) = qc_chart(t) {
                            (svg::qc_bars(&title, &rows))
                        }
                        (table(t))
                    }
                }
                @if !d.extra_tables.is_empty() {
                    section id="tables" {
                        h2 { "Further tables" }
                        @for t in &d.extra_tables {
                            (table(t))
                        }
                    }
                }
                section.method id="methods" {
                    h2 { "Methods" }
                    @for (heading, text) in &d.methods {
                        h3 { (heading) }
                        (paragraphs(text))
                    }
                    h3 { "Caution" }
                    (paragraphs(&d.caution))
                }
                footer {
                    "Produced by " (d.generated_by) " for study year " (d.study_year)
                    ". Every figure is an estimate; see the 95 % intervals and the caution above."
                }
            }
        }
    }
}

/// The sections present, as (anchor, heading), for the contents list.
fn contents(d: &ReportData) -> Vec<(&'static str, &'static str)> {
    let mut s = Vec::new();
    if !d.summary.is_empty() {
        s.push(("facts", "Key facts"));
    }
    if d.network_totals.is_some() {
        s.push(("totals", "Network totals"));
    }
    s.push(("map", "Network map"));
    s.push(("factors", "Monthly and weekday factors"));
    if d.calibration.is_some() {
        s.push(("calibration", "Short-count calibration"));
    }
    if d.cross_validation.is_some() {
        s.push(("cross-validation", "Cross-validation"));
    }
    if d.qc_summary.is_some() {
        s.push(("qc", "Quality control"));
    }
    if !d.extra_tables.is_empty() {
        s.push(("tables", "Further tables"));
    }
    s.push(("methods", "Methods"));
    s
}

/// Text as paragraphs, split at blank lines.
fn paragraphs(text: &str) -> Markup {
    html! {
        @for para in text.split("\n\n").map(str::trim).filter(|p| !p.is_empty()) {
            p { (para) }
        }
    }
}

/// The caution box near the top of the page.
fn caution(text: &str) -> Markup {
    html! {
        @if !text.is_empty() {
            div.caution role="note" {
                strong { "Caution. " }
                (text)
            }
        }
    }
}

/// A result table (calibration, cross-validation): its bar charts, then the table.
fn results(t: &Table) -> Markup {
    html! {
        @for chart in metric_charts(t) {
            (svg::bar_chart(&chart.title, &chart.bars, &chart.unit, chart.reference))
        }
        (table(t))
    }
}

/// The unit shown under a column heading: shares are shown in percent.
fn shown_unit(format: Format, unit: &str) -> &str {
    if format == Format::Share {
        "%"
    } else {
        unit
    }
}

/// A cell as the report shows it: volumes with thousands separators, shares in percent.
fn shown_cell(cell: &Cell, format: Format) -> String {
    match (cell, format) {
        (Cell::Num(v), Format::Share) if v.is_finite() => format!("{:.1}", 100.0 * v),
        (Cell::Int(v), Format::Share) => format!("{:.1}", 100.0 * *v as f64),
        (Cell::Num(v), Format::Integer) if v.is_finite() => svg::thousands(*v),
        (Cell::Int(v), Format::Integer) => svg::thousands(*v as f64),
        (Cell::Num(v), _) if !v.is_finite() => String::new(),
        _ => cell_text(cell, format),
    }
}

/// A table with its title as caption, at most [`TABLE_ROWS_MAX`] rows.
fn table(t: &Table) -> Markup {
    let shown = &t.rows[..t.rows.len().min(TABLE_ROWS_MAX)];
    html! {
        div.table-wrap {
            table {
                caption { (t.title) }
                thead {
                    tr {
                        @for col in &t.columns {
                            @let unit = shown_unit(col.format, col.unit);
                            th.num[col.format != Format::Text] {
                                (col.name)
                                @if !unit.is_empty() { span.unit { (unit) } }
                            }
                        }
                    }
                }
                tbody {
                    @for row in shown {
                        tr {
                            @for (cell, col) in row.iter().zip(&t.columns) {
                                @let text = shown_cell(cell, col.format);
                                @let numeric = matches!(cell, Cell::Int(_) | Cell::Num(_));
                                @if text.is_empty() {
                                    td.empty { "–" }
                                } @else {
                                    td.num[numeric] { (text) }
                                }
                            }
                        }
                    }
                }
            }
        }
        @if t.rows.is_empty() {
            p.note { "No rows." }
        } @else if shown.len() < t.rows.len() {
            p.note {
                "Showing the first " (shown.len()) " of " (t.rows.len())
                " rows; the full table is in " (t.name) ".csv."
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn cells_are_shown_with_units_in_mind() {
        assert_eq!(shown_cell(&Cell::Num(0.0834), Format::Share), "8.3");
        assert_eq!(shown_cell(&Cell::Num(12345.6), Format::Integer), "12,346");
        assert_eq!(shown_cell(&Cell::Num(0.0987), Format::Decimal(3)), "0.099");
        assert_eq!(shown_cell(&Cell::Empty, Format::Integer), "");
        assert_eq!(shown_unit(Format::Share, ""), "%");
        assert_eq!(shown_unit(Format::Integer, "veh/day"), "veh/day");
    }

    #[test]
    fn blank_lines_split_paragraphs() {
        let html = paragraphs("One.\n\nTwo <b>.\n\n\n").into_string();
        assert_eq!(html, "<p>One.</p><p>Two &lt;b&gt;.</p>");
    }
}
