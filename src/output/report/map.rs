//! The report's network map: a static SVG that prints and archives as it is, and the hooks
//! (element ids, `data-i` indices into the embedded JSON) that `report.js` uses to add zoom,
//! pan, search and the info panel.
//!
//! # Map encoding
//! The map projects lon/lat with an equirectangular projection about the network's mean
//! latitude (x = lon * cos(mean lat), y = lat), which is faithful enough over a region a few
//! hundred km across; one degree of latitude is taken as 111.195 km (a sphere of radius
//! 6,371 km), which sets the scale bar. Colour and line width give AADT in up to seven classes
//! whose limits are the AADT's quantiles rounded to two significant figures (round numbers a
//! reader can quote, each class holding about as many segments). One interval measure
//! throughout: the relative width of the 95 % interval, (hi - lo) / AADT, in five classes
//! (under 10 %, 10-25 %, 25-50 %, 50-100 %, 100 % or more). On the main map it sets the line
//! opacity (1 down to 0.4, so a faint line is an uncertain estimate); a second, smaller
//! panel colours the same lines by it. Segments estimated without a count on them are
//! dashed. Permanent counters are filled circles, short-count stations open circles, both at
//! the middle of their segment.

use maud::{html, Markup};

use super::data::{MapMarker, MapSegment};
use super::svg::{c, swatch, thousands};

/// Sequential colours for AADT classes, light (low volume) to dark (high volume): samples of
/// the viridis colour map (matplotlib's perceptually uniform map, readable in greyscale and
/// by colour-blind readers; hex values from memory), its lightest yellows left out so thin
/// low-volume lines stay visible on white paper.
const AADT_COLOURS: [&str; 7] = [
    "#7ad151", "#3fbc73", "#1f9e89", "#26828e", "#31688e", "#3e4989", "#440154",
];

/// Sequential colours for relative interval width bins (ColorBrewer Oranges).
const WIDTH_COLOURS: [&str; 5] = ["#fdd0a2", "#fdae6b", "#fd8d3c", "#e6550d", "#a63603"];

/// Upper edges of the relative interval width bins, (hi - lo) / AADT.
const WIDTH_EDGES: [f64; 4] = [0.1, 0.25, 0.5, 1.0];

/// Colour for a segment without a usable figure.
const NO_DATA: &str = "#bdbdbd";

/// Lowest line opacity: the most uncertain segments stay visible.
pub const OPACITY_MIN: f64 = 0.4;

/// Most AADT colour classes on the map.
pub const CLASSES_MAX: usize = 7;

/// Kilometres per degree of latitude on a sphere of radius 6,371 km (2π·6371/360).
const KM_PER_DEGREE: f64 = 111.195;

/// Line opacity per relative-width bin ([`WIDTH_EDGES`]): narrow intervals are solid, the
/// widest class is drawn at [`OPACITY_MIN`].
const WIDTH_OPACITY: [f64; 5] = [1.0, 0.85, 0.7, 0.55, OPACITY_MIN];

/// Relative width of a segment's 95 % interval, (hi - lo) / AADT, `None` when it cannot be
/// computed. Both map panels use this one measure (the full width, not the half-width).
fn relative_width(s: &MapSegment) -> Option<f64> {
    let w = (s.hi95 - s.lo95) / s.aadt;
    (s.aadt > 0.0 && w.is_finite() && w >= 0.0).then_some(w)
}

/// Index of the relative-width bin of `w` ([`WIDTH_EDGES`] are upper edges, exclusive).
fn width_bin(w: f64) -> usize {
    WIDTH_EDGES.iter().take_while(|&&e| w >= e).count()
}

/// Line opacity from the relative width of the 95 % interval, (hi - lo) / AADT, in the same
/// bins as the interval-width panel; [`OPACITY_MIN`] when the width cannot be computed.
///
/// ```
/// use roadtally::output::report::map::interval_opacity;
/// // 1,000 veh/day with a 95 % interval of 950 to 1,050: width 10 %, second bin.
/// assert!((interval_opacity(1000.0, 950.0, 1050.0) - 0.85).abs() < 1e-12);
/// // 800 to 1,200: width 40 %, third bin (25 to 50 %).
/// assert!((interval_opacity(1000.0, 800.0, 1200.0) - 0.7).abs() < 1e-12);
/// ```
pub fn interval_opacity(aadt: f64, lo95: f64, hi95: f64) -> f64 {
    let w = (hi95 - lo95) / aadt;
    if aadt > 0.0 && w.is_finite() && w >= 0.0 {
        WIDTH_OPACITY[width_bin(w)]
    } else {
        OPACITY_MIN
    }
}

/// `v` rounded to two significant figures: 12,345 -> 12,000; 987 -> 990.
fn round2(v: f64) -> f64 {
    if !(v.is_finite() && v > 0.0) {
        return v;
    }
    let p = 10f64.powi(v.log10().floor() as i32 - 1);
    (v / p).round() * p
}

/// Class limits for AADT: the quantiles at 1/7, 2/7 ... 6/7 of the positive values, rounded to
/// two significant figures, duplicates dropped. `k` limits make `k + 1` classes: under the
/// first, between neighbours, and the last or more. Empty when fewer than two distinct
/// positive values exist (one class).
///
/// ```
/// use roadtally::output::report::map::class_breaks;
/// let v: Vec<f64> = (1..=700).map(|i| i as f64 * 10.0).collect();
/// assert_eq!(class_breaks(&v), vec![1000.0, 2000.0, 3000.0, 4000.0, 5000.0, 6000.0]);
/// ```
pub fn class_breaks(values: &[f64]) -> Vec<f64> {
    let mut pos: Vec<f64> = values
        .iter()
        .copied()
        .filter(|v| v.is_finite() && *v > 0.0)
        .collect();
    pos.sort_by(f64::total_cmp);
    let (Some(&lo), Some(&hi)) = (pos.first(), pos.last()) else {
        return Vec::new();
    };
    let mut breaks: Vec<f64> = Vec::new();
    for q in 1..CLASSES_MAX {
        // Nearest-rank quantile: the value a share q/7 of segments lie below.
        let i = (q * pos.len()).div_ceil(CLASSES_MAX).min(pos.len() - 1);
        let b = round2(pos[i]);
        if b > lo && b <= hi && breaks.last().is_none_or(|&l| b > l) {
            breaks.push(b);
        }
    }
    breaks
}

/// The class of `v` among `breaks` (0 below the first limit).
fn class_of(v: f64, breaks: &[f64]) -> usize {
    breaks.iter().take_while(|&&b| v >= b).count()
}

/// The colour of class `i` of `k`, spread evenly over the palette.
fn class_colour(i: usize, k: usize) -> &'static str {
    if k <= 1 {
        return AADT_COLOURS[AADT_COLOURS.len() / 2];
    }
    let j = (i as f64 * (AADT_COLOURS.len() - 1) as f64 / (k - 1) as f64).round() as usize;
    AADT_COLOURS[j.min(AADT_COLOURS.len() - 1)]
}

/// Line width of AADT class `i`, screen pixels (lines keep their width when zoomed).
fn class_width(i: usize) -> f64 {
    1.5 + 0.6 * i as f64
}

/// The legend text of class `i` of `breaks.len() + 1`.
fn class_label(i: usize, breaks: &[f64]) -> String {
    let k = breaks.len();
    if k == 0 {
        "all segments".to_string()
    } else if i == 0 {
        format!("under {} veh/day", thousands(breaks[0]))
    } else if i == k {
        format!("{} veh/day or more", thousands(breaks[k - 1]))
    } else {
        format!(
            "{} – {} veh/day",
            thousands(breaks[i - 1]),
            thousands(breaks[i])
        )
    }
}

/// Colour of a relative interval width.
fn width_colour(w: Option<f64>) -> &'static str {
    match w {
        None => NO_DATA,
        Some(w) => WIDTH_COLOURS[width_bin(w)],
    }
}

/// Lon/lat to viewBox units, fitted to the network's extent.
pub(super) struct Projection {
    kx: f64,
    x0: f64,
    y0: f64,
    scale: f64,
    ox: f64,
    oy: f64,
    /// ViewBox width.
    pub(super) width: f64,
    /// ViewBox height.
    pub(super) height: f64,
}

impl Projection {
    pub(super) fn fit(segs: &[MapSegment], width: f64, height_max: f64) -> Projection {
        let pad = 12.0;
        let pts: Vec<(f64, f64)> = segs
            .iter()
            .flat_map(|s| [s.from, s.to])
            .filter(|p| p.0.is_finite() && p.1.is_finite())
            .collect();
        if pts.is_empty() {
            return Projection {
                kx: 1.0,
                x0: 0.0,
                y0: 0.0,
                scale: 1.0,
                ox: 0.0,
                oy: 0.0,
                width,
                height: 100.0,
            };
        }
        let lat0 = pts.iter().map(|p| p.1).sum::<f64>() / pts.len() as f64;
        let kx = lat0.to_radians().cos().max(0.01);
        let (mut x0, mut x1, mut y0, mut y1) = (f64::MAX, f64::MIN, f64::MAX, f64::MIN);
        for p in &pts {
            let (x, y) = (p.0 * kx, -p.1);
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
        let height = (sy * scale + 2.0 * pad).max(100.0);
        Projection {
            kx,
            x0,
            y0,
            scale,
            // Centre the drawing in the box.
            ox: (width - sx * scale) / 2.0,
            oy: (height - sy * scale) / 2.0,
            width,
            height,
        }
    }

    /// A lon/lat point in viewBox units.
    pub(super) fn place(&self, p: (f64, f64)) -> (f64, f64) {
        (
            self.ox + (p.0 * self.kx - self.x0) * self.scale,
            self.oy + (-p.1 - self.y0) * self.scale,
        )
    }

    /// ViewBox units per kilometre on the ground.
    pub(super) fn units_per_km(&self) -> f64 {
        self.scale / KM_PER_DEGREE
    }
}

/// A round length in km (1, 2 or 5 times a power of ten) at most `km`.
fn nice_km(km: f64) -> f64 {
    if !(km.is_finite() && km > 0.0) {
        return 1.0;
    }
    let p = 10f64.powf(km.log10().floor());
    [5.0, 2.0, 1.0]
        .iter()
        .map(|m| m * p)
        .find(|&x| x <= km)
        .unwrap_or(p)
}

/// The tooltip text of one segment (the map's figures without scripts).
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

/// Whether a segment's ends can be drawn.
fn drawable(s: &MapSegment) -> bool {
    [s.from.0, s.from.1, s.to.0, s.to.1]
        .iter()
        .all(|v| v.is_finite())
}

/// The network map: controls for the script (hidden until it runs), the main panel with AADT
/// colours and widths, interval opacity, count locations and a scale bar, the info panel,
/// the legends, and a second panel of relative interval width. Line `data-i` is the
/// segment's index in `segs` (and in the embedded JSON's rows).
pub fn network_map(segs: &[MapSegment], markers: &[MapMarker]) -> Markup {
    if segs.is_empty() {
        return html! { p.note { "No segments to map." } };
    }
    let values: Vec<f64> = segs.iter().map(|s| s.aadt).collect();
    let breaks = class_breaks(&values);
    let k = breaks.len() + 1;
    let mut in_class = vec![0usize; k];
    // Draw low volumes first so major roads sit on top; ties keep input order.
    let mut order: Vec<usize> = (0..segs.len()).filter(|&i| drawable(&segs[i])).collect();
    let key = |i: usize| {
        let v = segs[i].aadt;
        if v.is_finite() {
            v
        } else {
            -1.0
        }
    };
    order.sort_by(|&a, &b| key(a).total_cmp(&key(b)).then(a.cmp(&b)));
    let main = Projection::fit(segs, 800.0, 900.0);
    let side = Projection::fit(segs, 400.0, 450.0);
    let upk = main.units_per_km();
    let bar_km = nice_km(0.2 * main.width / upk);
    let bar = bar_km * upk;
    let (bx, by) = (14.0, main.height - 14.0);

    let mut lines = Vec::with_capacity(order.len());
    for &i in &order {
        let s = &segs[i];
        let (xa, ya) = main.place(s.from);
        let (xb, yb) = main.place(s.to);
        let usable = s.aadt.is_finite() && s.aadt > 0.0;
        let class = class_of(s.aadt, &breaks);
        if usable {
            in_class[class] += 1;
        }
        let colour = if usable {
            class_colour(class, k)
        } else {
            NO_DATA
        };
        let width = if usable { class_width(class) } else { 1.0 };
        let opacity = interval_opacity(s.aadt, s.lo95, s.hi95);
        lines.push(html! {
            line data-i=(i) x1=(c(xa)) y1=(c(ya)) x2=(c(xb)) y2=(c(yb)) stroke=(colour)
                stroke-width=(c(width)) stroke-opacity=(format!("{opacity:.2}"))
                stroke-dasharray=[(s.basis == "estimated").then_some("6 3")] {
                title { (segment_tooltip(s)) }
            }
        });
    }
    let n_cont = markers.iter().filter(|m| m.continuous).count();
    let n_short = markers.len() - n_cont;
    let main_svg = html! {
        svg #map-main .map viewBox=(format!("0 0 {} {}", c(main.width), c(main.height)))
            data-km=(format!("{upk:.4}")) role="img" aria-label="Network map coloured by AADT" {
            g #map-lines { @for l in &lines { (l) } }
            g #map-markers {
                // Short counts under counters: a counter's segment often has a short count too.
                @for m in markers.iter().filter(|m| !m.continuous).chain(markers.iter().filter(|m| m.continuous)) {
                    @if m.at.0.is_finite() && m.at.1.is_finite() {
                        @let (x, y) = main.place(m.at);
                        circle class=(if m.continuous { "m-cont" } else { "m-short" })
                            cx=(c(x)) cy=(c(y)) r=(if m.continuous { "4.5" } else { "3" }) {
                            title {
                                (if m.continuous { "Permanent counter " } else { "Short-count station " })
                                (m.id) " on segment " (m.segment_id)
                            }
                        }
                    }
                }
            }
            g #map-sel {}
            g #map-scale {
                rect x=(c(bx - 6.0)) y=(c(by - 16.0)) width=(c(bar + 12.0)) height="22" fill="#fff" fill-opacity="0.8" {}
                line x1=(c(bx)) y1=(c(by)) x2=(c(bx + bar)) y2=(c(by)) stroke="#222" stroke-width="2" {}
                line x1=(c(bx)) y1=(c(by - 4.0)) x2=(c(bx)) y2=(c(by)) stroke="#222" stroke-width="1" {}
                line x1=(c(bx + bar)) y1=(c(by - 4.0)) x2=(c(bx + bar)) y2=(c(by)) stroke="#222" stroke-width="1" {}
                text x=(c(bx)) font-size="12" y=(c(by - 5.0)) { (format_km(bar_km)) }
            }
        }
    };
    let side_svg = html! {
        svg.map viewBox=(format!("0 0 {} {}", c(side.width), c(side.height)))
            role="img" aria-label="Network map coloured by relative 95 % interval width" {
            @for &i in &order {
                @let s = &segs[i];
                @let (xa, ya) = side.place(s.from);
                @let (xb, yb) = side.place(s.to);
                @let w = relative_width(s);
                // No tooltips here: the main map's tooltip already gives the interval, and
                // 3,000 more titles would add a quarter of the page's size.
                line x1=(c(xa)) y1=(c(ya)) x2=(c(xb)) y2=(c(yb)) stroke=(width_colour(w))
                    stroke-width="2" {}
            }
        }
    };
    let darkest = class_colour(k - 1, k);
    html! {
        div.map-tools.interactive hidden {
            form #map-search role="search" {
                label for="map-find" { "Find a segment id or route " }
                input #map-find type="search" placeholder="e.g. S00012 or a route name" autocomplete="off";
                button type="submit" { "Find" }
            }
            span.zoom {
                button #map-zoom-in type="button" title="Zoom in" { "+" }
                button #map-zoom-out type="button" title="Zoom out" { "−" }
                button #map-reset type="button" title="Show the whole network" { "Whole network" }
            }
            label { input #map-show-cont type="checkbox" checked; " permanent counters (" (n_cont) ")" }
            label { input #map-show-short type="checkbox" checked; " short-count stations (" (n_short) ")" }
        }
        div.maps {
            figure.map-main {
                div.map-stage {
                    (main_svg)
                    div #map-info .map-info aria-live="polite" {
                        p.note { "Point at a line for its figures. With scripts on: scroll or use + and − to zoom, drag to pan, click a line to keep its figures here." }
                    }
                }
                figcaption {
                    "AADT (veh/day, both directions) by colour and line width, in classes holding "
                    "about equal numbers of segments. Opacity shows the width of the 95 % interval, "
                    "(hi − lo) ÷ AADT: a faint line is an uncertain estimate. Dashed: estimated "
                    "without a count on the segment. Count locations sit at the middle of their segment."
                }
                ul.legend.aadt-legend {
                    @for (i, n) in in_class.iter().enumerate() {
                        li { (swatch(class_colour(i, k), class_width(i), 1.0, false))
                            (class_label(i, &breaks)) span.count { " (" (n) ")" } }
                    }
                    @if in_class.iter().sum::<usize>() < order.len() {
                        li { (swatch(NO_DATA, 1.0, 1.0, false)) "no figure" }
                    }
                }
                ul.legend {
                    @for (i, op) in WIDTH_OPACITY.iter().enumerate() {
                        li { (swatch(darkest, 4.0, *op, false)) "interval width " (width_bin_label(i)) }
                    }
                    li { (swatch(darkest, 3.0, 1.0, true)) "estimated (no count)" }
                    li { (marker_swatch(true)) "permanent counter" }
                    li { (marker_swatch(false)) "short-count station" }
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

/// `2 km`, `500 m`.
fn format_km(km: f64) -> String {
    if km >= 1.0 {
        format!("{km:.0} km")
    } else {
        format!("{:.0} m", km * 1000.0)
    }
}

/// A legend sample of a count-location marker.
fn marker_swatch(continuous: bool) -> Markup {
    html! {
        svg.swatch viewBox="0 0 14 10" width="14" height="10" aria-hidden="true" {
            circle class=(if continuous { "m-cont" } else { "m-short" }) cx="7" cy="5"
                r=(if continuous { "4" } else { "3" }) {}
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

#[cfg(test)]
mod tests {
    use approx::assert_relative_eq;

    use super::*;

    #[test]
    fn classes_are_round_quantiles() {
        // 700 values 10 ... 7,000: sevenths at 1,000, 2,000, ...
        let v: Vec<f64> = (1..=700).map(|i| i as f64 * 10.0).collect();
        let b = class_breaks(&v);
        assert_eq!(b.len(), CLASSES_MAX - 1);
        assert_eq!(class_of(999.0, &b), 0);
        assert_eq!(class_of(1000.0, &b), 1);
        assert_eq!(class_of(7000.0, &b), 6);
        assert_eq!(round2(12_345.0), 12_000.0);
        assert_eq!(round2(987.0), 990.0);
        // One value: one class; ties collapse.
        assert!(class_breaks(&[500.0]).is_empty());
        assert!(class_breaks(&[f64::NAN, 0.0]).is_empty());
        assert_eq!(class_breaks(&[100.0, 100.0, 100.0, 5000.0]).len(), 1);
        assert_eq!(class_label(0, &b), "under 1,000 veh/day");
        assert_eq!(class_label(6, &b), "6,000 veh/day or more");
    }

    #[test]
    fn opacity_follows_the_interval() {
        assert_relative_eq!(interval_opacity(1000.0, 1000.0, 1000.0), 1.0);
        // Width 40 % lies in the 25-50 % class, the same class the width panel colours.
        assert_relative_eq!(interval_opacity(1000.0, 800.0, 1200.0), 0.7);
        assert_eq!(width_bin(0.4), 2);
        assert_eq!(width_colour(Some(0.4)), WIDTH_COLOURS[2]);
        assert_relative_eq!(interval_opacity(1000.0, 0.0, 5000.0), OPACITY_MIN);
        assert_relative_eq!(interval_opacity(0.0, 0.0, 1.0), OPACITY_MIN);
    }

    fn seg(from: (f64, f64), aadt: f64) -> MapSegment {
        MapSegment {
            from,
            to: (10.01, 50.01),
            aadt,
            lo95: aadt * 0.9,
            hi95: aadt * 1.1,
            basis: "continuous".into(),
            label: "s".into(),
            ..MapSegment::default()
        }
    }

    #[test]
    fn the_legends_name_one_interval_measure() {
        let html = network_map(&[seg((10.0, 50.0), 1000.0)], &[]).into_string();
        assert!(!html.contains("±"), "no half-width legend");
        assert!(html.contains("interval width under 10 %"));
        assert!(html.contains("interval width 100 % or more"));
    }

    #[test]
    fn the_map_skips_segments_it_cannot_place() {
        let html = network_map(
            &[seg((10.0, 50.0), 5000.0), seg((f64::NAN, 50.0), 300.0)],
            &[],
        )
        .into_string();
        assert!(!html.contains("NaN"));
        assert_eq!(html.matches("AADT 5,000 veh/day").count(), 1);
        assert!(!html.contains("AADT 300 veh/day"));
    }

    /// A degree of latitude is 111.195 km: a north-south segment of 0.01° is 1.11 km, and the
    /// scale bar's length in viewBox units over its km is the projection's units per km.
    /// Source: the mean Earth radius 6,371 km (IUGG), 2π·6371/360 = 111.195 km per degree.
    #[test]
    fn the_scale_bar_measures_kilometres() {
        let s = MapSegment {
            from: (10.0, 50.0),
            to: (10.0, 50.01),
            ..seg((10.0, 50.0), 100.0)
        };
        let p = Projection::fit(std::slice::from_ref(&s), 800.0, 900.0);
        let (_, ya) = p.place(s.from);
        let (_, yb) = p.place(s.to);
        assert_relative_eq!(
            (ya - yb).abs() / p.units_per_km(),
            1.11195,
            max_relative = 1e-6
        );
        assert_relative_eq!(nice_km(3.7), 2.0);
        assert_relative_eq!(nice_km(0.6), 0.5);
        assert_eq!(format_km(0.5), "500 m");
    }
}
