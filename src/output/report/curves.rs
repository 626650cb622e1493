//! Line charts of the permanent counters' hours: the ranked-hour curve (the year's highest
//! two-way hours as a share of AADT) and the weekday hourly profile, one panel per factor
//! group with one line per counter (and the group's mean profile drawn bold).

use maud::{html, Markup};

use super::data::{GroupCurves, Series};
use super::svg::{c, finite_runs, nice_ceil, swatch};

/// Ranks drawn on the ranked-hour curve: the design hours of common practice (30th, 100th)
/// and the knee of the curve lie well inside.
pub const RANKS_SHOWN: usize = 200;

/// Thin-line colours for the counters of one panel (ColorBrewer Dark2).
const LINE_COLOURS: [&str; 8] = [
    "#1b9e77", "#d95f02", "#7570b3", "#e7298a", "#66a61e", "#e6ab02", "#a6761d", "#666666",
];

/// One panel: title, lines (name, values in the y unit, bold), x tick labels, y unit and an
/// optional vertical reference line (x index, label).
struct Panel<'a> {
    title: String,
    lines: Vec<(&'a str, Vec<f64>, bool)>,
    x_ticks: Vec<(usize, String)>,
    x_name: &'a str,
    y_name: &'a str,
    reference: Option<(usize, &'a str)>,
}

fn panel(p: &Panel) -> Markup {
    let n = p.lines.iter().map(|l| l.1.len()).max().unwrap_or(0);
    let ymax = nice_ceil(
        p.lines
            .iter()
            .flat_map(|l| l.1.iter().copied())
            .filter(|v| v.is_finite())
            .fold(0.0, f64::max),
    );
    let (w, h) = (360.0, 210.0);
    let (left, right, top, bottom) = (40.0, 10.0, 16.0, 34.0);
    let x = |i: usize| left + i as f64 * (w - left - right) / (n.max(2) - 1) as f64;
    let y = |v: f64| top + (ymax - v) / ymax * (h - top - bottom);
    html! {
        figure.panel.curve {
            figcaption.title { (p.title) }
            svg.chart viewBox=(format!("0 0 {w} {h}")) role="img" aria-label=(p.title) {
                line.axis x1=(c(left)) y1=(c(h - bottom)) x2=(c(w - right)) y2=(c(h - bottom)) {}
                line.axis x1=(c(left)) y1=(c(top)) x2=(c(left)) y2=(c(h - bottom)) {}
                @for t in [0.0, ymax / 2.0, ymax] {
                    text.tick x=(c(left - 3.0)) y=(c(y(t) + 3.0)) text-anchor="end" { (format!("{t:.1}")) }
                }
                text.tick x=(c(left + 3.0)) y=(c(top - 5.0)) { (p.y_name) }
                @for (i, l) in &p.x_ticks {
                    text.tick x=(c(x(*i))) y=(c(h - bottom + 11.0)) text-anchor="middle" { (l) }
                }
                text.tick x=(c((left + w - right) / 2.0)) y=(c(h - 6.0)) text-anchor="middle" { (p.x_name) }
                @if let Some((rx, rl)) = p.reference {
                    line.ref x1=(c(x(rx))) y1=(c(top)) x2=(c(x(rx))) y2=(c(h - bottom)) {}
                    text.tick x=(c(x(rx) + 3.0)) y=(c(top + 8.0)) { (rl) }
                }
                @for (k, (name, values, bold)) in p.lines.iter().enumerate() {
                    @for run in finite_runs(values) {
                        polyline fill="none"
                            stroke=(if *bold { "#111" } else { LINE_COLOURS[k % LINE_COLOURS.len()] })
                            stroke-width=(if *bold { "2.4" } else { "1.1" })
                            stroke-opacity=(if *bold { "1" } else { "0.75" })
                            points=(run.iter().map(|&i| format!("{},{}", c(x(i)), c(y(values[i])))).collect::<Vec<_>>().join(" ")) {
                            title { (name) }
                        }
                    }
                }
            }
            p.key {
                @for (k, (name, _, bold)) in p.lines.iter().enumerate() {
                    span.key {
                        (swatch(if *bold { "#111" } else { LINE_COLOURS[k % LINE_COLOURS.len()] }, if *bold { 2.4 } else { 1.6 }, 1.0, false))
                        (name)
                    }
                }
            }
        }
    }
}

/// The mean of the counters' values at each index (finite values only).
fn mean_curve(series: &[Series]) -> Vec<f64> {
    let n = series.iter().map(|s| s.values.len()).max().unwrap_or(0);
    (0..n)
        .map(|i| {
            let v: Vec<f64> = series
                .iter()
                .filter_map(|s| s.values.get(i).copied())
                .filter(|v| v.is_finite())
                .collect();
            if v.is_empty() {
                f64::NAN
            } else {
                v.iter().sum::<f64>() / v.len() as f64
            }
        })
        .collect()
}

/// Ranked-hour curves, one panel per factor group: K-values in % of AADT against rank, with
/// the 30th hour marked.
pub fn ranked_hour_panels(groups: &[GroupCurves]) -> Markup {
    if groups.iter().all(|g| g.counters.is_empty()) {
        return html! { p.note { "No counter had a full year of hours for a ranked-hour curve." } };
    }
    html! {
        div.panels.curves {
            @for g in groups.iter().filter(|g| !g.counters.is_empty()) {
                (panel(&Panel {
                    title: format!("{}: busiest hours of the year, two-way volume in % of AADT by rank", g.group),
                    lines: g.counters.iter().map(|s| (
                        s.name.as_str(),
                        s.values.iter().take(RANKS_SHOWN).map(|k| 100.0 * k).collect(),
                        false,
                    )).collect(),
                    x_ticks: [1usize, 30, 50, 100, 150, 200]
                        .iter()
                        .filter(|&&r| r <= RANKS_SHOWN)
                        .map(|&r| (r - 1, r.to_string()))
                        .collect(),
                    x_name: "rank of the hour (1 = busiest)",
                    y_name: "% of AADT",
                    reference: Some((29, "30th hour")),
                }))
            }
        }
    }
}

/// Weekday hourly profiles, one panel per factor group: each counter's share of the daily
/// volume per clock hour in %, and the group's mean in bold.
pub fn hourly_profile_panels(groups: &[GroupCurves]) -> Markup {
    if groups.iter().all(|g| g.counters.is_empty()) {
        return html! { p.note { "No counter had weekday hourly profiles." } };
    }
    html! {
        div.panels.curves {
            @for g in groups.iter().filter(|g| !g.counters.is_empty()) {
                // A group mean of one counter is that counter's line: drawn only from two on.
                @let mean: Vec<f64> = mean_curve(&g.counters).iter().map(|v| 100.0 * v).collect();
                @let lines: Vec<(&str, Vec<f64>, bool)> = g.counters.iter()
                    .map(|s| (s.name.as_str(), s.values.iter().map(|v| 100.0 * v).collect(), false))
                    .chain((g.counters.len() > 1).then_some(("group mean", mean, true)))
                    .collect();
                (panel(&Panel {
                    title: format!("{}: working-day share of the daily volume per clock hour (%)", g.group),
                    lines,
                    x_ticks: (0..24).step_by(3).map(|h| (h, format!("{h:02}h"))).collect(),
                    x_name: "clock hour (local time, start of the hour)",
                    y_name: "% of day",
                    reference: None,
                }))
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use approx::assert_relative_eq;

    use super::*;

    #[test]
    fn the_group_mean_skips_gaps() {
        let s = |v: Vec<f64>| Series {
            name: "x".into(),
            values: v,
        };
        let m = mean_curve(&[s(vec![0.04, f64::NAN]), s(vec![0.06, 0.05])]);
        assert_relative_eq!(m[0], 0.05);
        assert_relative_eq!(m[1], 0.05);
    }

    #[test]
    fn panels_carry_titles_in_words_with_units() {
        let g = GroupCurves {
            group: "rural arterial".into(),
            counters: vec![Series {
                name: "CC001".into(),
                values: (0..300).map(|i| 0.15 - 0.0002 * i as f64).collect(),
            }],
        };
        let html = ranked_hour_panels(std::slice::from_ref(&g)).into_string();
        assert!(html.contains(
            "rural arterial: busiest hours of the year, two-way volume in % of AADT by rank"
        ));
        assert!(html.contains("30th hour"));
        let html = hourly_profile_panels(&[g]).into_string();
        assert!(html.contains("share of the daily volume per clock hour (%)"));
        // One counter: no separate group mean.
        assert!(!html.contains("group mean"));
    }
}
