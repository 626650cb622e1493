//! Inline SVG charts for the HTML report: factor line charts and bar charts (the map is in
//! [`super::map`], the hour curves and the QC calendar in `curves.rs` and `calendar.rs`).
//!
//! Every chart is drawn here as SVG markup (through maud, so every label taken from the
//! inputs is escaped) and placed inside the report page; nothing is fetched from anywhere, so
//! the report works offline and prints as vectors. Charts state their units in their axes
//! or legends.

use maud::{html, Markup};

use super::data::{Bar, QcRow, Series};

/// Most bars drawn in one bar chart; longer tables are shown in full as tables only.
pub const BARS_MAX: usize = 40;

/// Month labels for 12-point series.
const MONTHS: [&str; 12] = [
    "Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec",
];

/// Weekday labels for 7-point series, Monday first (ISO 8601).
const WEEKDAYS: [&str; 7] = ["Mon", "Tue", "Wed", "Thu", "Fri", "Sat", "Sun"];

/// A number with thousands separators and no decimals: `12,345`.
///
/// ```
/// assert_eq!(roadtally::output::report::svg::thousands(1_234_567.4), "1,234,567");
/// ```
pub fn thousands(v: f64) -> String {
    if !v.is_finite() {
        return "n/a".to_string();
    }
    let r = v.round();
    let digits = format!("{:.0}", r.abs());
    let mut out = String::with_capacity(digits.len() + digits.len() / 3 + 1);
    if r < 0.0 {
        out.push('-');
    }
    for (i, ch) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            out.push(',');
        }
        out.push(ch);
    }
    out
}

/// A coordinate for an SVG attribute, two decimals.
pub(super) fn c(v: f64) -> String {
    format!("{v:.2}")
}

/// A short legend line sample.
pub(super) fn swatch(colour: &str, width: f64, opacity: f64, dashed: bool) -> Markup {
    html! {
        svg.swatch viewBox="0 0 28 10" width="28" height="10" aria-hidden="true" {
            line x1="2" y1="5" x2="26" y2="5" stroke=(colour) stroke-width=(c(width))
                stroke-opacity=(format!("{opacity:.2}")) stroke-linecap="round"
                stroke-dasharray=[dashed.then_some("6 3")] {}
        }
    }
}

/// Small multiples of factor series, one panel per group, on a shared vertical scale with a
/// reference line at 1. 12-point series are labelled by month, 7-point series by weekday.
pub fn factor_panels(series: &[Series], what: &str) -> Markup {
    let finite: Vec<f64> = series
        .iter()
        .flat_map(|s| s.values.iter().copied())
        .filter(|v| v.is_finite())
        .collect();
    if finite.is_empty() {
        return html! { p.note { "No " (what) " to show." } };
    }
    let lo = finite.iter().copied().fold(1.0, f64::min);
    let hi = finite.iter().copied().fold(1.0, f64::max);
    let span = (hi - lo).max(0.02);
    let mut ticks = vec![lo, 1.0, hi];
    ticks.dedup_by(|a, b| (*a - *b).abs() < 0.1 * span);
    let (lo, hi) = (lo - 0.08 * span, hi + 0.08 * span);
    let (w, h) = (260.0, 150.0);
    let (left, right, top, bottom) = (34.0, 8.0, 8.0, 22.0);
    let y = |v: f64| top + (hi - v) / (hi - lo) * (h - top - bottom);
    html! {
        div.panels {
            @for s in series {
                @let n = s.values.len().max(1);
                @let x = |i: usize| if n == 1 { (left + w - right) / 2.0 }
                    else { left + i as f64 * (w - left - right) / (n - 1) as f64 };
                @let labels = point_labels(n);
                figure.panel {
                    svg.chart viewBox=(format!("0 0 {w} {h}")) role="img"
                        aria-label=(format!("{what}: {}", s.name)) {
                        line.axis x1=(c(left)) y1=(c(h - bottom)) x2=(c(w - right)) y2=(c(h - bottom)) {}
                        line.axis x1=(c(left)) y1=(c(top)) x2=(c(left)) y2=(c(h - bottom)) {}
                        line.ref x1=(c(left)) y1=(c(y(1.0))) x2=(c(w - right)) y2=(c(y(1.0))) {}
                        text.tick x=(c(left + 3.0)) y=(c(top + 7.0)) { "factor" }
                        @for &v in &ticks {
                            text.tick x=(c(left - 3.0)) y=(c(y(v) + 3.0)) text-anchor="end" {
                                (format!("{v:.2}"))
                            }
                        }
                        @for (i, l) in labels.iter().enumerate() {
                            @if n <= 12 || i % 2 == 0 {
                                text.tick x=(c(x(i))) y=(c(h - bottom + 12.0)) text-anchor="middle" { (l) }
                            }
                        }
                        @for run in finite_runs(&s.values) {
                            polyline.series points=(run.iter().map(|&i| format!("{},{}", c(x(i)), c(y(s.values[i])))).collect::<Vec<_>>().join(" ")) {}
                        }
                        @for (i, v) in s.values.iter().enumerate() {
                            @if v.is_finite() {
                                circle.series cx=(c(x(i))) cy=(c(y(*v))) r="2.5" {
                                    title { (s.name) ", " (labels[i]) ": factor " (format!("{v:.3}")) }
                                }
                            }
                        }
                    }
                    figcaption { (s.name) }
                }
            }
        }
    }
}

/// Labels of the points of an `n`-point series.
pub(super) fn point_labels(n: usize) -> Vec<String> {
    match n {
        12 => MONTHS.iter().map(|s| s.to_string()).collect(),
        7 => WEEKDAYS.iter().map(|s| s.to_string()).collect(),
        _ => (1..=n).map(|i| i.to_string()).collect(),
    }
}

/// Index runs of consecutive finite values (a gap breaks the line).
pub(super) fn finite_runs(values: &[f64]) -> Vec<Vec<usize>> {
    let mut runs = Vec::new();
    let mut run = Vec::new();
    for (i, v) in values.iter().enumerate() {
        if v.is_finite() {
            run.push(i);
        } else if !run.is_empty() {
            runs.push(std::mem::take(&mut run));
        }
    }
    if !run.is_empty() {
        runs.push(run);
    }
    runs
}

/// A "nice" round number at or above `v` (1, 2, 2.5, 5 times a power of ten).
pub(super) fn nice_ceil(v: f64) -> f64 {
    if !(v.is_finite() && v > 0.0) {
        return 1.0;
    }
    let p = 10f64.powf(v.log10().floor());
    [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|m| m * p)
        .find(|&x| x >= v * (1.0 - 1e-12))
        .unwrap_or(10.0 * p)
}

/// A horizontal bar chart of `bars` in `unit`, with an optional dashed reference line (value,
/// label), e.g. the nominal 95 % coverage. Shows at most [`BARS_MAX`] bars.
pub fn bar_chart(title: &str, bars: &[Bar], unit: &str, reference: Option<(f64, &str)>) -> Markup {
    let all = bars.iter().filter(|b| b.value.is_finite()).count();
    let bars: Vec<&Bar> = bars
        .iter()
        .filter(|b| b.value.is_finite())
        .take(BARS_MAX)
        .collect();
    if bars.is_empty() {
        return html! {};
    }
    let vmax = bars
        .iter()
        .map(|b| b.value)
        .chain(reference.map(|r| r.0))
        .fold(0.0, f64::max);
    let vmin = bars.iter().map(|b| b.value).fold(0.0, f64::min);
    let top_v = nice_ceil(vmax.max(1e-9));
    let bot_v = if vmin < 0.0 { -nice_ceil(-vmin) } else { 0.0 };
    let (w, row, left, right, top) = (640.0, 18.0, 210.0, 70.0, 8.0);
    let h = top + row * bars.len() as f64 + 26.0;
    let x = |v: f64| left + (v - bot_v) / (top_v - bot_v) * (w - left - right);
    html! {
        figure.bars {
            figcaption { (title) (capped_note(all)) }
            svg.chart viewBox=(format!("0 0 {w} {}", c(h))) role="img" aria-label=(title) {
                @for (i, b) in bars.iter().enumerate() {
                    @let yt = top + row * i as f64;
                    @let (xa, xb) = (x(0.0_f64.min(b.value)), x(0.0_f64.max(b.value)));
                    text.label x=(c(left - 6.0)) y=(c(yt + 12.5)) text-anchor="end" {
                        (shorten(&b.label, 34))
                    }
                    rect.bar x=(c(xa)) y=(c(yt + 3.0)) width=(c((xb - xa).max(0.5))) height=(c(row - 6.0)) {
                        title { (b.label) ": " (with_unit(b.value, unit)) }
                    }
                    text.value x=(c(xb + 4.0)) y=(c(yt + 12.5)) { (with_unit(b.value, unit)) }
                }
                @let base = top + row * bars.len() as f64;
                line.axis x1=(c(x(0.0))) y1=(c(top)) x2=(c(x(0.0))) y2=(c(base)) {}
                line.axis x1=(c(left)) y1=(c(base)) x2=(c(w - right)) y2=(c(base)) {}
                @for v in [bot_v, (bot_v + top_v) / 2.0, top_v] {
                    text.tick x=(c(x(v))) y=(c(base + 12.0)) text-anchor="middle" { (fmt_tick(v, top_v - bot_v)) }
                }
                text.tick x=(c(w - right)) y=(c(base + 23.0)) text-anchor="end" { (unit) }
                @if let Some((rv, rl)) = reference {
                    line.ref x1=(c(x(rv))) y1=(c(top)) x2=(c(x(rv))) y2=(c(base)) {}
                    text.tick x=(c(x(rv) + 3.0)) y=(c(base - 3.0)) { (rl) }
                }
            }
        }
    }
}

/// Stacked horizontal bars of station-days accepted, flagged and rejected per row.
pub fn qc_bars(title: &str, rows: &[QcRow]) -> Markup {
    const COLOURS: [&str; 3] = ["#9ecae1", "#fdae6b", "#de2d26"];
    const NAMES: [&str; 3] = [
        "accepted without a flag",
        "accepted with a flag",
        "rejected",
    ];
    let all = rows.len();
    let rows: Vec<&QcRow> = rows.iter().take(BARS_MAX).collect();
    if rows.is_empty() {
        return html! {};
    }
    let total = |r: &[f64; 3]| r.iter().filter(|v| v.is_finite()).sum::<f64>();
    let vmax = nice_ceil(rows.iter().map(|r| total(&r.1)).fold(0.0, f64::max));
    let (w, row, left, right, top) = (640.0, 18.0, 210.0, 110.0, 8.0);
    let h = top + row * rows.len() as f64 + 26.0;
    let x = |v: f64| left + v / vmax * (w - left - right);
    html! {
        figure.bars {
            figcaption {
                (title) " "
                @for k in 0..3 {
                    span.key { (swatch(COLOURS[k], 8.0, 1.0, false)) (NAMES[k]) }
                }
                " (numbers: accepted without a flag / with a flag / rejected, direction-days)" (capped_note(all))
            }
            svg.chart viewBox=(format!("0 0 {w} {}", c(h))) role="img" aria-label=(title) {
                @for (i, (label, v)) in rows.iter().enumerate() {
                    @let yt = top + row * i as f64;
                    text.label x=(c(left - 6.0)) y=(c(yt + 12.5)) text-anchor="end" { (shorten(label, 34)) }
                    @for k in 0..3 {
                        @let start: f64 = v[..k].iter().filter(|v| v.is_finite()).sum();
                        @if v[k].is_finite() && v[k] > 0.0 {
                            rect x=(c(x(start))) y=(c(yt + 3.0)) width=(c(x(start + v[k]) - x(start)))
                                height=(c(row - 6.0)) fill=(COLOURS[k]) {
                                title { (label) ": " (thousands(v[k])) " direction-days " (NAMES[k]) }
                            }
                        }
                    }
                    text.value x=(c(x(total(v)) + 4.0)) y=(c(yt + 12.5)) {
                        (thousands(v[0])) " / " (thousands(v[1])) " / " (thousands(v[2]))
                    }
                }
                @let base = top + row * rows.len() as f64;
                line.axis x1=(c(left)) y1=(c(base)) x2=(c(w - right)) y2=(c(base)) {}
                @for t in [0.0, vmax / 2.0, vmax] {
                    text.tick x=(c(x(t))) y=(c(base + 12.0)) text-anchor="middle" { (thousands(t)) }
                }
                text.tick x=(c(w - right)) y=(c(base + 23.0)) text-anchor="end" { "direction-days" }
            }
        }
    }
}

/// A value for a chart label: whole numbers above 100, else up to two decimals.
fn fmt_value(v: f64) -> String {
    if v.abs() >= 100.0 {
        thousands(v)
    } else if v.abs() >= 10.0 {
        format!("{v:.1}")
    } else {
        format!("{v:.2}")
    }
}

/// An axis tick label, with the same decimals along one axis of range `range`.
fn fmt_tick(v: f64, range: f64) -> String {
    if range >= 100.0 {
        thousands(v)
    } else if range >= 10.0 {
        format!("{v:.0}")
    } else if range >= 1.0 {
        format!("{v:.1}")
    } else {
        format!("{v:.2}")
    }
}

/// The note under a chart that shows only the first [`BARS_MAX`] of `n` rows.
fn capped_note(n: usize) -> String {
    if n > BARS_MAX {
        format!(" (first {BARS_MAX} of {n} rows drawn; every row is in the table)")
    } else {
        String::new()
    }
}

/// A chart value followed by its unit.
fn with_unit(v: f64, unit: &str) -> String {
    if unit.is_empty() {
        fmt_value(v)
    } else {
        format!("{} {unit}", fmt_value(v))
    }
}

/// `s` cut to `n` characters with an ellipsis.
fn shorten(s: &str, n: usize) -> String {
    if s.chars().count() <= n {
        s.to_string()
    } else {
        let mut t: String = s.chars().take(n - 1).collect();
        t.push('…');
        t
    }
}

#[cfg(test)]
mod tests {
    use approx::assert_relative_eq;

    use super::*;

    #[test]
    fn thousands_separators() {
        assert_eq!(thousands(1234567.4), "1,234,567");
        assert_eq!(thousands(999.6), "1,000");
        assert_eq!(thousands(-12345.0), "-12,345");
        assert_eq!(thousands(0.0), "0");
    }

    #[test]
    fn gaps_break_lines() {
        let runs = finite_runs(&[1.0, f64::NAN, 2.0, 3.0]);
        assert_eq!(runs, vec![vec![0], vec![2, 3]]);
        assert_relative_eq!(nice_ceil(0.93), 1.0);
        assert_relative_eq!(nice_ceil(23.0), 25.0);
    }
}
