//! Inline SVG charts for the HTML report: the network map, factor line charts and bar charts.
//!
//! Every chart is drawn here as SVG markup (through maud, so every label taken from the
//! inputs is escaped) and placed inside the report page; nothing is fetched from anywhere, so
//! the report works offline and prints as vectors. Charts state their units in their axes
//! or legends.
//!
//! # Map encoding
//! The map projects lon/lat with an equirectangular projection about the network's mean
//! latitude (x = lon * cos(mean lat), y = lat), which is faithful enough over a region a few
//! hundred km across. Colour and line width give AADT in bins on a logarithmic 1-2-5 scale.
//! One interval measure throughout: the relative width of the 95 % interval, (hi - lo) / AADT,
//! in five classes (under 10 %, 10-25 %, 25-50 %, 50-100 %, 100 % or more). On the main map it
//! sets the line opacity (1 down to 0.25, so a faint line is an uncertain estimate); a second,
//! smaller panel colours the same lines by it. Segments estimated without a count on them are
//! dashed.

use maud::{html, Markup};

use super::data::{Bar, MapSegment, QcRow, Series};

/// Sequential colours for AADT bins, light (low volume) to dark (high volume); ColorBrewer
/// YlGnBu without its two lightest steps, so thin low-volume lines stay visible on paper.
const AADT_COLOURS: [&str; 7] = [
    "#a1dab4", "#7fcdbb", "#41b6c4", "#1d91c0", "#225ea8", "#253494", "#081d58",
];

/// Sequential colours for relative interval width bins (ColorBrewer Oranges).
const WIDTH_COLOURS: [&str; 5] = ["#fdd0a2", "#fdae6b", "#fd8d3c", "#e6550d", "#a63603"];

/// Upper edges of the relative interval width bins, (hi - lo) / AADT.
const WIDTH_EDGES: [f64; 4] = [0.1, 0.25, 0.5, 1.0];

/// Colour for a segment without a usable figure.
const NO_DATA: &str = "#bdbdbd";

/// Lowest line opacity: the most uncertain segments stay visible.
pub const OPACITY_MIN: f64 = 0.25;

/// Most AADT colour bins on the map.
pub const BINS_MAX: usize = 7;

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
fn c(v: f64) -> String {
    format!("{v:.2}")
}

/// Relative width of a segment's 95 % interval, (hi - lo) / AADT, `None` when it cannot be
/// computed. Both map panels use this one measure (the full width, not the half-width).
fn relative_width(s: &MapSegment) -> Option<f64> {
    let w = (s.hi95 - s.lo95) / s.aadt;
    (s.aadt > 0.0 && w.is_finite() && w >= 0.0).then_some(w)
}

/// Line opacity per relative-width bin ([`WIDTH_EDGES`]): narrow intervals are solid, the
/// widest class is drawn at [`OPACITY_MIN`].
const WIDTH_OPACITY: [f64; 5] = [1.0, 0.8, 0.6, 0.42, OPACITY_MIN];

/// Index of the relative-width bin of `w` ([`WIDTH_EDGES`] are upper edges, exclusive).
fn width_bin(w: f64) -> usize {
    WIDTH_EDGES.iter().take_while(|&&e| w >= e).count()
}

/// Line opacity from the relative width of the 95 % interval, (hi - lo) / AADT, in the same
/// bins as the interval-width panel; [`OPACITY_MIN`] when the width cannot be computed.
///
/// ```
/// use roadtally::output::report::svg::interval_opacity;
/// // 1,000 veh/day with a 95 % interval of 950 to 1,050: width 10 %, second bin.
/// assert!((interval_opacity(1000.0, 950.0, 1050.0) - 0.8).abs() < 1e-12);
/// // 800 to 1,200: width 40 %, third bin (25 to 50 %).
/// assert!((interval_opacity(1000.0, 800.0, 1200.0) - 0.6).abs() < 1e-12);
/// ```
pub fn interval_opacity(aadt: f64, lo95: f64, hi95: f64) -> f64 {
    let w = (hi95 - lo95) / aadt;
    if aadt > 0.0 && w.is_finite() && w >= 0.0 {
        WIDTH_OPACITY[width_bin(w)]
    } else {
        OPACITY_MIN
    }
}

/// Bin edges on a logarithmic 1-2-5 scale covering every positive value; `k + 1` edges for
/// `k` bins, at most [`BINS_MAX`] bins. Empty when no value is positive.
pub fn log_bin_edges(values: &[f64]) -> Vec<f64> {
    let pos: Vec<f64> = values
        .iter()
        .copied()
        .filter(|v| v.is_finite() && *v > 0.0)
        .collect();
    if pos.is_empty() {
        return Vec::new();
    }
    let lo = pos.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = pos.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    for mantissas in [&[1.0, 2.0, 5.0][..], &[1.0][..]] {
        let e0 = lo.log10().floor() as i32;
        let e1 = hi.log10().ceil() as i32 + 1;
        let ladder: Vec<f64> = (e0..=e1)
            .flat_map(|e| mantissas.iter().map(move |m| m * 10f64.powi(e)))
            .collect();
        let first = ladder.iter().rposition(|&x| x <= lo).unwrap_or(0);
        let last = ladder
            .iter()
            .position(|&x| x > hi)
            .unwrap_or(ladder.len() - 1);
        let edges = ladder[first..=last].to_vec();
        if edges.len() - 1 <= BINS_MAX {
            return edges;
        }
    }
    // Very wide ranges: decades, thinned to fit.
    let e0 = lo.log10().floor() as i32;
    let e1 = hi.log10().floor() as i32 + 1;
    let step = ((e1 - e0) as usize).div_ceil(BINS_MAX).max(1) as i32;
    let mut edges = Vec::new();
    let mut e = e0;
    loop {
        edges.push(10f64.powi(e));
        if e >= e1 {
            break;
        }
        e += step;
    }
    edges
}

/// The bin of `v` among `edges` (clamped to the first and last bin).
fn bin_of(v: f64, edges: &[f64]) -> usize {
    let k = edges.len().saturating_sub(1).max(1);
    let i = edges.iter().rposition(|&e| e <= v).unwrap_or(0);
    i.min(k - 1)
}

/// The colour of bin `i` of `k`, spread evenly over the palette.
fn bin_colour(i: usize, k: usize) -> &'static str {
    if k <= 1 {
        return AADT_COLOURS[AADT_COLOURS.len() / 2];
    }
    let j = (i as f64 * (AADT_COLOURS.len() - 1) as f64 / (k - 1) as f64).round() as usize;
    AADT_COLOURS[j.min(AADT_COLOURS.len() - 1)]
}

/// Line width of AADT bin `i`, viewBox units (about pixels at laptop width).
fn bin_width(i: usize) -> f64 {
    1.5 + 0.75 * i as f64
}

/// Colour of a relative interval width.
fn width_colour(w: Option<f64>) -> &'static str {
    match w {
        None => NO_DATA,
        Some(w) => WIDTH_COLOURS[width_bin(w)],
    }
}

/// Projected segment ends in viewBox units and the viewBox size.
struct Projection {
    lines: Vec<((f64, f64), (f64, f64))>,
    width: f64,
    height: f64,
}

fn project(segs: &[MapSegment], width: f64, height_max: f64) -> Projection {
    let pad = 12.0;
    let pts: Vec<(f64, f64)> = segs
        .iter()
        .flat_map(|s| [s.from, s.to])
        .filter(|p| p.0.is_finite() && p.1.is_finite())
        .collect();
    if pts.is_empty() {
        return Projection {
            lines: Vec::new(),
            width,
            height: 100.0,
        };
    }
    let lat0 = pts.iter().map(|p| p.1).sum::<f64>() / pts.len() as f64;
    let kx = lat0.to_radians().cos().max(0.01);
    let xy = |p: (f64, f64)| (p.0 * kx, -p.1);
    let (mut x0, mut x1, mut y0, mut y1) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
    for p in &pts {
        let (x, y) = xy(*p);
        x0 = x0.min(x);
        x1 = x1.max(x);
        y0 = y0.min(y);
        y1 = y1.max(y);
    }
    let (sx, sy) = (x1 - x0, y1 - y0);
    let tiny = 1e-12;
    let scale = match (sx > tiny, sy > tiny) {
        (true, true) => ((width - 2.0 * pad) / sx).min((height_max - 2.0 * pad) / sy),
        (true, false) => (width - 2.0 * pad) / sx,
        (false, true) => (height_max - 2.0 * pad) / sy,
        (false, false) => 1.0,
    };
    let w = width;
    let h = (sy * scale + 2.0 * pad).max(100.0);
    // Centre the drawing in the box.
    let ox = (w - sx * scale) / 2.0;
    let oy = (h - sy * scale) / 2.0;
    let to_box = |p: (f64, f64)| {
        let (x, y) = xy(p);
        (ox + (x - x0) * scale, oy + (y - y0) * scale)
    };
    Projection {
        lines: segs
            .iter()
            .map(|s| (to_box(s.from), to_box(s.to)))
            .collect(),
        width: w,
        height: h,
    }
}

/// The tooltip text of one segment.
fn segment_tooltip(s: &MapSegment) -> String {
    let mut t = format!("{}: AADT {} veh/day", s.label, thousands(s.aadt));
    if s.lo95.is_finite() && s.hi95.is_finite() {
        t.push_str(&format!(
            ", 95 % interval {} to {} veh/day",
            thousands(s.lo95),
            thousands(s.hi95)
        ));
    }
    if !s.basis.is_empty() {
        t.push_str(&format!(", basis {}", s.basis));
    }
    t
}

/// The network map: AADT colours and widths with interval opacity, a second panel of
/// relative interval width, and both legends.
pub fn network_map(segs: &[MapSegment]) -> Markup {
    if segs.is_empty() {
        return html! { p.note { "No segments to map." } };
    }
    let values: Vec<f64> = segs.iter().map(|s| s.aadt).collect();
    let edges = log_bin_edges(&values);
    let k = edges.len().saturating_sub(1);
    // Draw low volumes first so major roads sit on top; ties keep input order.
    let drawable = |s: &MapSegment| {
        [s.from.0, s.from.1, s.to.0, s.to.1]
            .iter()
            .all(|v| v.is_finite())
    };
    let mut order: Vec<usize> = (0..segs.len()).filter(|&i| drawable(&segs[i])).collect();
    order.sort_by(|&a, &b| {
        let va = if segs[a].aadt.is_finite() {
            segs[a].aadt
        } else {
            -1.0
        };
        let vb = if segs[b].aadt.is_finite() {
            segs[b].aadt
        } else {
            -1.0
        };
        va.total_cmp(&vb).then(a.cmp(&b))
    });
    let main = project(segs, 800.0, 900.0);
    let side = project(segs, 400.0, 450.0);

    let main_svg = html! {
        svg.map viewBox=(format!("0 0 {} {}", c(main.width), c(main.height)))
            role="img" aria-label="Network map coloured by AADT" {
            @for &i in &order {
                @let s = &segs[i];
                @let ((xa, ya), (xb, yb)) = main.lines[i];
                @let usable = s.aadt.is_finite() && s.aadt > 0.0 && k > 0;
                @let bin = if usable { bin_of(s.aadt, &edges) } else { 0 };
                @let colour = if usable { bin_colour(bin, k) } else { NO_DATA };
                @let width = if usable { bin_width(bin) } else { 1.0 };
                @let opacity = interval_opacity(s.aadt, s.lo95, s.hi95);
                line x1=(c(xa)) y1=(c(ya)) x2=(c(xb)) y2=(c(yb)) stroke=(colour)
                    stroke-width=(c(width)) stroke-opacity=(format!("{opacity:.2}"))
                    stroke-linecap="round"
                    stroke-dasharray=[(s.basis == "estimated").then_some("6 3")] {
                    title { (segment_tooltip(s)) }
                }
            }
        }
    };
    let side_svg = html! {
        svg.map viewBox=(format!("0 0 {} {}", c(side.width), c(side.height)))
            role="img" aria-label="Network map coloured by relative 95 % interval width" {
            @for &i in &order {
                @let s = &segs[i];
                @let ((xa, ya), (xb, yb)) = side.lines[i];
                @let w = relative_width(s);
                line x1=(c(xa)) y1=(c(ya)) x2=(c(xb)) y2=(c(yb)) stroke=(width_colour(w))
                    stroke-width="2" stroke-linecap="round" {
                    title {
                        (s.label) ": 95 % interval width "
                        (w.map_or("n/a".to_string(), |w| format!("{:.0} %", 100.0 * w)))
                        " of AADT"
                    }
                }
            }
        }
    };
    let darkest = bin_colour(k.saturating_sub(1), k.max(1));
    html! {
        div.maps {
            figure.map-main {
                (main_svg)
                figcaption {
                    "AADT (veh/day, both directions) by colour and line width. "
                    "Opacity shows the width of the 95 % interval, (hi − lo) ÷ AADT, in the classes "
                    "of the panel beside: a faint line is an uncertain estimate. "
                    "Dashed: estimated without a count on the segment."
                }
                ul.legend {
                    @for i in 0..k {
                        li { (swatch(bin_colour(i, k), bin_width(i), 1.0, false))
                            (thousands(edges[i])) " – " (thousands(edges[i + 1])) " veh/day" }
                    }
                    li { (swatch(NO_DATA, 1.0, 1.0, false)) "no figure" }
                }
                ul.legend {
                    @for (i, op) in WIDTH_OPACITY.iter().enumerate() {
                        li { (swatch(darkest, 4.0, *op, false)) "interval width " (width_bin_label(i)) }
                    }
                    li { (swatch(darkest, 3.0, 1.0, true)) "estimated (no count)" }
                }
            }
            figure.map-side {
                (side_svg)
                figcaption { "Width of the 95 % interval, (hi − lo) ÷ AADT, in % of AADT." }
                ul.legend {
                    @for (i, colour) in WIDTH_COLOURS.iter().enumerate() {
                        li { (swatch(colour, 3.0, 1.0, false)) (width_bin_label(i)) }
                    }
                    li { (swatch(NO_DATA, 3.0, 1.0, false)) "n/a" }
                }
            }
        }
    }
}

fn width_bin_label(i: usize) -> String {
    let pct = |v: f64| format!("{:.0}", v * 100.0);
    if i == 0 {
        format!("under {} %", pct(WIDTH_EDGES[0]))
    } else if i == WIDTH_EDGES.len() {
        format!("{} % or more", pct(WIDTH_EDGES[i - 1]))
    } else {
        format!("{} – {} %", pct(WIDTH_EDGES[i - 1]), pct(WIDTH_EDGES[i]))
    }
}

/// A short legend line sample.
fn swatch(colour: &str, width: f64, opacity: f64, dashed: bool) -> Markup {
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
fn point_labels(n: usize) -> Vec<String> {
    match n {
        12 => MONTHS.iter().map(|s| s.to_string()).collect(),
        7 => WEEKDAYS.iter().map(|s| s.to_string()).collect(),
        _ => (1..=n).map(|i| i.to_string()).collect(),
    }
}

/// Index runs of consecutive finite values (a gap breaks the line).
fn finite_runs(values: &[f64]) -> Vec<Vec<usize>> {
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
fn nice_ceil(v: f64) -> f64 {
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
    fn log_bins_cover_the_values() {
        let e = log_bin_edges(&[150.0, 900.0, 4_500.0]);
        assert_eq!(e, vec![100.0, 200.0, 500.0, 1000.0, 2000.0, 5000.0]);
        assert_eq!(bin_of(4_500.0, &e), e.len() - 2);
        assert_eq!(bin_of(150.0, &e), 0);
        // Too many 1-2-5 bins: decades instead.
        let e = log_bin_edges(&[150.0, 900.0, 45_000.0]);
        assert_eq!(e, vec![100.0, 1000.0, 10_000.0, 100_000.0]);
        assert!(e.len() - 1 <= BINS_MAX);
        assert!(e.windows(2).all(|w| w[0] < w[1]));
        let wide = log_bin_edges(&[1.0, 1e9]);
        assert!(wide.len() - 1 <= BINS_MAX);
        assert!(wide[0] <= 1.0 && *wide.last().unwrap() > 1e9);
        let one = log_bin_edges(&[500.0]);
        assert_eq!(one.len(), 2);
        assert!(log_bin_edges(&[f64::NAN, 0.0]).is_empty());
    }

    #[test]
    fn opacity_follows_the_interval() {
        assert_relative_eq!(interval_opacity(1000.0, 1000.0, 1000.0), 1.0);
        // Width 40 % lies in the 25-50 % class, the same class the width panel colours.
        assert_relative_eq!(interval_opacity(1000.0, 800.0, 1200.0), 0.6);
        assert_eq!(width_bin(0.4), 2);
        assert_eq!(width_colour(Some(0.4)), WIDTH_COLOURS[2]);
        assert_relative_eq!(interval_opacity(1000.0, 0.0, 5000.0), OPACITY_MIN);
        assert_relative_eq!(interval_opacity(0.0, 0.0, 1.0), OPACITY_MIN);
    }

    #[test]
    fn the_legends_name_one_interval_measure() {
        let seg = MapSegment {
            from: (10.0, 50.0),
            to: (10.01, 50.01),
            aadt: 1000.0,
            lo95: 900.0,
            hi95: 1100.0,
            basis: "continuous".into(),
            label: "s".into(),
        };
        let html = network_map(&[seg]).into_string();
        assert!(!html.contains("±"), "no half-width legend");
        assert!(html.contains("interval width under 10 %"));
        assert!(html.contains("interval width 100 % or more"));
    }

    #[test]
    fn the_map_skips_segments_it_cannot_place() {
        let seg = |from: (f64, f64), aadt: f64| MapSegment {
            from,
            to: (10.01, 50.01),
            aadt,
            lo95: aadt * 0.9,
            hi95: aadt * 1.1,
            basis: "continuous".into(),
            label: "s".into(),
        };
        let html =
            network_map(&[seg((10.0, 50.0), 5000.0), seg((f64::NAN, 50.0), 300.0)]).into_string();
        assert!(!html.contains("NaN"));
        assert_eq!(html.matches("AADT 5,000 veh/day").count(), 1);
        assert!(!html.contains("AADT 300 veh/day"));
    }

    #[test]
    fn gaps_break_lines() {
        let runs = finite_runs(&[1.0, f64::NAN, 2.0, 3.0]);
        assert_eq!(runs, vec![vec![0], vec![2, 3]]);
        assert_relative_eq!(nice_ceil(0.93), 1.0);
        assert_relative_eq!(nice_ceil(23.0), 25.0);
    }
}
