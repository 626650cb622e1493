//! The report's page layout (maud template): sections, headings, tables and where each chart
//! goes. The charts themselves are drawn in [`super::svg`]; the styles are in
//! `report.css` next to this file.

use maud::{html, Markup, PreEscaped, DOCTYPE};

use super::charts::{metric_charts, qc_chart};
use super::data::{MapSegment, ReportData, TABLE_ROWS_MAX};
use super::{calendar, curves, interactive, map, svg};
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
                    (map::network_map(&d.map, &d.markers))
                }
                @if !d.map.is_empty() {
                    section id="segments" {
                        h2 { "Segments" }
                        (segment_table(&d.map))
                    }
                }
                @if d.stations.is_some() || !d.ranked_hours.is_empty() || !d.hourly_profiles.is_empty() {
                    section id="counters" {
                        h2 { "Permanent counters" }
                        @if let Some(t) = &d.stations {
                            (table(t))
                        }
                        h3 { "Ranked-hour curves" }
                        p.note {
                            "Each line is one counter: its busiest two-way hours of the year, highest first, "
                            "as a share of its AADT. The 30th-highest hour gives K30; the full curves are in ranked_hours.csv."
                        }
                        (curves::ranked_hour_panels(&d.ranked_hours))
                        h3 { "Hourly profiles" }
                        p.note {
                            "Each thin line is one counter's mean working-day (Monday–Friday) profile; the bold line is "
                            "the group's mean. Saturday and Sunday profiles are in hourly_distribution.csv."
                        }
                        (curves::hourly_profile_panels(&d.hourly_profiles))
                    }
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
                        (calendar::qc_calendar(&d.qc_calendar, d.study_year))
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
                (interactive::scripts(&d.map, &d.markers))
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
    if !d.map.is_empty() {
        s.push(("segments", "Segments"));
    }
    if d.stations.is_some() || !d.ranked_hours.is_empty() || !d.hourly_profiles.is_empty() {
        s.push(("counters", "Permanent counters"));
    }
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

/// The segment table's columns: embedded-data key (for sorting), heading, unit, numeric.
const SEGMENT_COLUMNS: [(&str, &str, &str, bool); 11] = [
    ("segment_id", "Segment", "", false),
    ("route", "Route", "", false),
    ("class", "Class", "class, area", false),
    ("group", "Factor group", "", false),
    ("basis", "Basis", "", false),
    ("aadt", "AADT", "veh/day", true),
    ("aadt_lo95", "95 % interval", "veh/day", true),
    ("heavy_pct", "Heavy vehicles", "% of AADT", true),
    ("k_factor", "K", "factor", true),
    ("d_factor", "D", "factor", true),
    ("length_km", "Length", "km", true),
];

/// One segment's cells as the table shows them (the script writes the same text).
fn segment_cells(s: &MapSegment) -> [String; 11] {
    let or_dash = |t: &str| {
        if t.is_empty() {
            "–".to_string()
        } else {
            t.to_string()
        }
    };
    let fixed = |v: f64, d: usize| {
        if v.is_finite() {
            format!("{v:.d$}")
        } else {
            "–".to_string()
        }
    };
    let interval = if s.lo95.is_finite() && s.hi95.is_finite() {
        format!("{} – {}", svg::thousands(s.lo95), svg::thousands(s.hi95))
    } else {
        "–".to_string()
    };
    [
        s.id.clone(),
        or_dash(&s.route),
        or_dash(&s.class),
        or_dash(&s.group),
        s.basis.clone(),
        svg::thousands(s.aadt),
        interval,
        fixed(100.0 * s.heavy_share, 1),
        fixed(s.k_factor, 4),
        fixed(s.d_factor, 3),
        fixed(s.length_km, 3),
    ]
}

/// The per-segment table: the first [`TABLE_ROWS_MAX`] rows without scripts; with them, the
/// script pages, filters and sorts every segment from the embedded data.
fn segment_table(segs: &[MapSegment]) -> Markup {
    html! {
        div.table-tools.interactive hidden {
            label for="seg-filter" { "Filter " }
            input #seg-filter type="search" placeholder="segment id, route, class, group or basis" autocomplete="off";
            button #seg-prev type="button" { "← previous" }
            button #seg-next type="button" { "next →" }
            span #seg-status aria-live="polite" {}
            span.note { " Click a heading to sort, a row to show it on the map. K: design-hour share of AADT; D: the heavier direction's share of the design hour." }
        }
        div.table-wrap {
            table #seg-table .segments {
                caption { "AADT with its 95 % interval and the main figures per segment" }
                thead {
                    tr {
                        @for (key, name, unit, numeric) in SEGMENT_COLUMNS {
                            th.num[numeric] data-key=(key) {
                                (name)
                                @if !unit.is_empty() { span.unit { (unit) } }
                            }
                        }
                    }
                }
                tbody {
                    @for s in &segs[..segs.len().min(TABLE_ROWS_MAX)] {
                        tr {
                            @for (text, (_, _, _, numeric)) in segment_cells(s).iter().zip(SEGMENT_COLUMNS) {
                                td.num[numeric] { (text) }
                            }
                        }
                    }
                }
            }
        }
        @if segs.len() > TABLE_ROWS_MAX {
            p.note #seg-static-note {
                "Showing the first " (TABLE_ROWS_MAX) " of " (segs.len())
                " segments; the full table is in segment_statistics.csv."
            }
        }
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
