//! Which columns of a result table become bar charts, and the quality-control chart rows:
//! from tables to chart data.

use super::data::{Bar, QcRow};
use super::svg;
use crate::output::table::{Cell, Format, Table};

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
pub(super) struct MetricChart {
    pub(super) title: String,
    pub(super) bars: Vec<Bar>,
    pub(super) unit: String,
    pub(super) reference: Option<(f64, &'static str)>,
}

/// One bar chart per error or coverage column of a result table; none when the table has no
/// such column (the table is still shown).
pub(super) fn metric_charts(table: &Table) -> Vec<MetricChart> {
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
        let bars: Vec<Bar> = table
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
                Some(Bar {
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
pub(super) fn qc_chart(table: &Table) -> Option<(String, Vec<QcRow>)> {
    let rows = qc_rows(table)?;
    let title = "Station-days accepted, flagged and rejected".to_string();
    match table.column("rule") {
        Some(rule) if rows.len() > svg::BARS_MAX => {
            let mut by_rule: std::collections::BTreeMap<String, [f64; 3]> = Default::default();
            for (row, (_, v)) in table.rows.iter().zip(&rows) {
                let name = match &row[rule] {
                    Cell::Text(s) => s.clone(),
                    Cell::Empty => String::new(),
                    other => crate::output::table::cell_text(other, Format::Text),
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
pub(super) fn qc_rows(table: &Table) -> Option<Vec<QcRow>> {
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
