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
            title: {
                let t = format!(
                    "{} by {}",
                    plain_name(&col.name, if share { "%" } else { col.unit }),
                    category_names(table, &cats)
                );
                let mut c = t.chars();
                c.next()
                    .map_or(t.clone(), |f| f.to_uppercase().chain(c).collect())
            },
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
            .map(|&ci| {
                let c = &table.columns[ci];
                plain_name(&c.name, "")
                    .split(" (")
                    .next()
                    .unwrap_or_default()
                    .to_string()
            })
            .collect::<Vec<_>>()
            .join(" and ")
    }
}

/// The QC chart: a title and one stacked bar per table row, or, when the table has more rows
/// than a chart can show and a `rule` column, one bar per rule summed over stations (summing
/// over rules instead would count a station's accepted days once per rule).
pub(super) fn qc_chart(table: &Table) -> Option<(String, Vec<QcRow>)> {
    let rows = qc_rows(table)?;
    let title =
        "Direction-days accepted without a flag, accepted with a flag, and rejected".to_string();
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

/// The three stacked parts of one QC bar, `[accepted without a flag, flagged, rejected]`, from
/// a summary row's `accepted` (flagged days included: a flag keeps the day), `flagged` and
/// `rejected`. The parts sum to `accepted + rejected`, the station's direction-days; stacking
/// `accepted` and `flagged` as they stand would count every flagged day twice.
pub(super) fn qc_parts(accepted: f64, flagged: f64, rejected: f64) -> [f64; 3] {
    [(accepted - flagged).max(0.0), flagged, rejected]
}

/// Rows of a QC summary as (label, [accepted without a flag, flagged, rejected]) when the
/// table has the columns `accepted` (flags included), `flagged` and `rejected`; `None`
/// otherwise.
pub(super) fn qc_rows(table: &Table) -> Option<Vec<QcRow>> {
    let find = |word: &str| {
        table
            .columns
            .iter()
            .position(|c| c.format != Format::Text && c.name.to_ascii_lowercase() == word)
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
                let [a, f, r] = idx.map(|ci| num(&row[ci]));
                (label, qc_parts(a, f, r))
            })
            .collect(),
    )
}

/// A column name in plain words with its unit, for chart titles: `median_ape_pct` ->
/// "median absolute percentage error (%)". Names not in the list lose their underscores.
pub(super) fn plain_name(name: &str, unit: &str) -> String {
    const WORDS: &[(&str, &str, &str)] = &[
        ("median_ape_pct", "median absolute percentage error", "%"),
        (
            "p90_ape_pct",
            "90th-percentile absolute percentage error",
            "%",
        ),
        ("mean_ape_pct", "mean absolute percentage error", "%"),
        ("ape_pct", "absolute percentage error", "%"),
        (
            "coverage95",
            "share of true values inside the 95 % interval",
            "%",
        ),
        ("coverage", "share of true values inside the interval", "%"),
        ("bias_pct", "mean signed error", "%"),
        ("rmse_log", "root-mean-square error of ln AADT", ""),
        (
            "k_median_ape_pct",
            "median absolute percentage error of K from the count's own peak hours",
            "%",
        ),
        (
            "k_group_median_ape_pct",
            "median absolute percentage error of K from the group's mean K30",
            "%",
        ),
        ("hours", "count length", "h"),
        ("estimator", "estimator", ""),
        ("count_hours", "count length", "h"),
        ("class_group", "class group", ""),
        ("functional_class", "functional class", ""),
    ];
    if let Some((_, words, u)) = WORDS.iter().find(|(n, _, _)| *n == name) {
        return if u.is_empty() {
            (*words).to_string()
        } else {
            format!("{words} ({u})")
        };
    }
    let words = name.trim_end_matches("_pct").replace('_', " ");
    let u = if name.ends_with("_pct") { "%" } else { unit };
    if u.is_empty() {
        words
    } else {
        format!("{words} ({u})")
    }
}
