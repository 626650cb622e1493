//! The invented road network and each segment's true traffic.
//!
//! # Method
//!
//! The region is laid out on a local plane in km and converted to lon/lat from 71.0 W,
//! 29.5 N, extending east and north (at most ~90 km, the large size): open Atlantic, more
//! than 500 km from Bermuda and 600 km from the mainland coast or the Bahamas, so no real
//! settlement lies beneath it on a basemap, and inside the nominal UTC-05:00 band (67.5 W to
//! 82.5 W) that the demo clock's standard offset assumes. Roads are drawn as routes, polylines through nodes:
//!
//! * a rural grid of jittered nodes whose rows and columns are minor arterials (class 4),
//!   major collectors (5) and minor collectors (6);
//! * towns with dense street grids: one principal arterial main street each way (3), minor
//!   arterials (4), collectors (5) and locals (7), some locals one-way;
//! * an interstate `A1` (1) through the towns, a freeway `A7` (2) and a rural principal
//!   arterial `R3` (3);
//! * local dead-end roads (7) branching off the rural grid.
//!
//! The highways snap to the grid where they pass close to a node (interchanges) and their
//! ends are gateways for traffic from outside the region.
//!
//! True AADT is network-driven ([`super::traffic`]): trips between places are assigned to
//! their fastest paths, so a segment's volume follows its role in the network (through
//! traffic on the roads that carry it, almost none on a slower parallel street), plus its own
//! access traffic and a little independent noise (log sd 0.08). The heavy share comes from a
//! separate freight layer with longer trips.
//!
//! # Units
//!
//! Coordinates in degrees, plane coordinates and lengths in km, AADT in vehicles/day for both
//! directions, speeds in km/h, shares as fractions of AADT.

use std::path::{Path, PathBuf};

use rand::Rng;
use rand_chacha::ChaCha8Rng;
use rand_distr::{Distribution, Normal};

use super::sink::CsvSink;
use super::{DemoError, Scale};

/// South-west origin of the region, degrees (west and south negative); see the module docs.
const LON0: f64 = -71.0;
const LAT0: f64 = 29.5;
const KM_PER_DEG_LAT: f64 = 110.574;
const KM_PER_DEG_LON_EQUATOR: f64 = 111.320;
const EARTH_RADIUS_KM: f64 = 6371.0088;
/// Street spacing in towns, km.
const BLOCK_KM: f64 = 0.35;

/// Invented words for route names.
const NAME_FIRST: [&str; 16] = [
    "Elm", "Birch", "Cedar", "Willow", "Hollow", "Maple", "Fox", "Heron", "Stone", "Mill",
    "Quarry", "Lark", "Amber", "Copper", "Juniper", "Fern",
];
const NAME_SECOND: [&str; 10] = [
    "Ridge", "Brook", "Glen", "Field", "Hill", "Creek", "Meadow", "Grove", "Vale", "Moor",
];
const NAME_KIND: [&str; 5] = ["Road", "Lane", "Way", "Street", "Avenue"];

#[derive(Clone, Debug)]
pub(crate) struct Node {
    pub id: String,
    pub x_km: f64,
    pub y_km: f64,
    pub lon: f64,
    pub lat: f64,
}

#[derive(Clone, Debug)]
pub(crate) struct Segment {
    pub id: String,
    pub from: usize,
    pub to: usize,
    pub length_km: f64,
    /// FHWA functional class 1..=7.
    pub class: u8,
    pub urban: bool,
    pub lanes: u32,
    pub oneway: bool,
    pub route: Option<String>,
    pub speed_kph: u32,
    /// Index into [`Pattern::all`].
    pub pattern: usize,
    /// True AADT of the study year, both directions.
    pub aadt: f64,
    /// Share of AADT in FHWA classes 1..=13 (sums to 1).
    pub class_mix: [f64; 13],
    /// Whether `fwd` points towards the nearest town centre (commuters' morning direction).
    pub inbound_fwd: bool,
}

impl Segment {
    pub(crate) fn heavy_share(&self) -> f64 {
        self.class_mix[3..].iter().sum()
    }
    pub(crate) fn single_unit_share(&self) -> f64 {
        self.class_mix[3..7].iter().sum()
    }
    pub(crate) fn combination_share(&self) -> f64 {
        self.class_mix[7..].iter().sum()
    }
}

/// A signed route: its segments in driving order.
#[derive(Clone, Debug)]
struct Route {
    segments: Vec<usize>,
}

#[derive(Clone, Debug)]
pub(crate) struct Network {
    pub nodes: Vec<Node>,
    pub segments: Vec<Segment>,
    /// Tolled segments (consecutive segments of the interstate), in route order.
    pub tolled: Vec<usize>,
    /// Highway ends where traffic enters and leaves the region.
    gateways: Vec<usize>,
    /// Side of the rural grid, km.
    extent_km: f64,
    /// Town centres and radii in plane km.
    towns: Vec<(f64, f64, f64)>,
    routes: Vec<Route>,
}

/// Builds the network and draws every segment's true traffic.
pub(crate) fn build(rng: &mut ChaCha8Rng, scale: &Scale) -> Network {
    let mut net = Network {
        nodes: Vec::new(),
        segments: Vec::new(),
        tolled: Vec::new(),
        gateways: Vec::new(),
        extent_km: (scale.rural_grid - 1) as f64 * scale.rural_spacing_km,
        towns: Vec::new(),
        routes: Vec::new(),
    };
    let extent = net.extent_km;
    let centres = [(0.30, 0.35), (0.72, 0.70), (0.70, 0.22)];
    for (&m, &(fx, fy)) in scale.towns.iter().zip(centres.iter()) {
        let half = (m - 1) as f64 * BLOCK_KM / 2.0;
        net.towns.push((
            fx * extent,
            fy * extent,
            half * std::f64::consts::SQRT_2 + 0.5,
        ));
    }
    let mut names = 0usize;
    add_rural_grid(&mut net, rng, scale, &mut names);
    let towns = net.towns.clone();
    for (&m, &(cx, cy, _)) in scale.towns.iter().zip(towns.iter()) {
        add_town(&mut net, m, cx, cy, &mut names);
    }
    add_highways(&mut net, extent);
    add_stubs(&mut net, rng, scale, &mut names);
    assign_traffic(&mut net, rng);
    net
}

impl Network {
    fn add_node(&mut self, x_km: f64, y_km: f64) -> usize {
        let lat = LAT0 + y_km / KM_PER_DEG_LAT;
        let lon = LON0 + x_km / (KM_PER_DEG_LON_EQUATOR * LAT0.to_radians().cos());
        self.nodes.push(Node {
            id: format!("N{:05}", self.nodes.len() + 1),
            x_km,
            y_km,
            lon,
            lat,
        });
        self.nodes.len() - 1
    }

    /// Town centres and radii, plane km.
    pub(crate) fn town_centres(&self) -> &[(f64, f64, f64)] {
        &self.towns
    }

    fn is_urban(&self, x: f64, y: f64) -> bool {
        self.towns
            .iter()
            .any(|&(cx, cy, r)| (x - cx).hypot(y - cy) <= r)
    }

    /// Adds a route through `path` (node indices); `class_of` gives each segment's class
    /// from its position along the path; `oneway` segments carry traffic path-forward only.
    fn add_route(&mut self, name: Option<String>, path: &[usize], class: u8, oneway: bool) {
        let mut segs = Vec::new();
        for w in path.windows(2) {
            let (a, b) = (&self.nodes[w[0]], &self.nodes[w[1]]);
            let length_km = haversine_km(a.lon, a.lat, b.lon, b.lat);
            if length_km < 0.05 {
                continue;
            }
            let urban = self.is_urban((a.x_km + b.x_km) / 2.0, (a.y_km + b.y_km) / 2.0);
            let lanes = usual_lanes(class, urban, oneway);
            self.segments.push(Segment {
                id: format!("S{:05}", self.segments.len() + 1),
                from: w[0],
                to: w[1],
                length_km,
                class,
                urban,
                lanes,
                oneway,
                route: name.clone(),
                speed_kph: speed_limit(class, urban),
                pattern: 0,
                aadt: 0.0,
                class_mix: [0.0; 13],
                inbound_fwd: true,
            });
            segs.push(self.segments.len() - 1);
        }
        self.routes.push(Route { segments: segs });
    }
}

/// A unique invented road name, `Elm Ridge Road` style.
fn road_name(names: &mut usize) -> String {
    let i = *names;
    *names += 1;
    let a = NAME_FIRST[i % NAME_FIRST.len()];
    let b = NAME_SECOND[(i / NAME_FIRST.len()) % NAME_SECOND.len()];
    let c = NAME_KIND[(i / (NAME_FIRST.len() * NAME_SECOND.len())) % NAME_KIND.len()];
    format!("{a} {b} {c}")
}

fn add_rural_grid(net: &mut Network, rng: &mut ChaCha8Rng, scale: &Scale, names: &mut usize) {
    let g = scale.rural_grid;
    let s = scale.rural_spacing_km;
    let mut id = vec![vec![0usize; g]; g];
    for (j, row) in id.iter_mut().enumerate() {
        for (i, slot) in row.iter_mut().enumerate() {
            let x = i as f64 * s + rng.gen_range(-0.25..0.25) * s;
            let y = j as f64 * s + rng.gen_range(-0.25..0.25) * s;
            *slot = net.add_node(x, y);
        }
    }
    // Rows run west-east, columns south-north; every fourth line is a minor arterial with a
    // numbered route, the others collectors with names.
    // `k` picks a row or a column, so it indexes both axes of the grid.
    #[allow(clippy::needless_range_loop)]
    for k in 0..g {
        for horizontal in [true, false] {
            let path: Vec<usize> = (0..g)
                .map(|t| if horizontal { id[k][t] } else { id[t][k] })
                .collect();
            let class = match k % 4 {
                1 => 4,
                3 => 6,
                _ => 5,
            };
            let name = if class == 4 {
                format!("R{}", 10 + 2 * k + usize::from(!horizontal))
            } else {
                road_name(names)
            };
            net.add_route(Some(name), &path, class, false);
        }
    }
}

fn add_town(net: &mut Network, m: usize, cx: f64, cy: f64, names: &mut usize) {
    let half = (m - 1) as f64 * BLOCK_KM / 2.0;
    let mut id = vec![vec![0usize; m]; m];
    for (j, row) in id.iter_mut().enumerate() {
        for (i, slot) in row.iter_mut().enumerate() {
            *slot = net.add_node(
                cx - half + i as f64 * BLOCK_KM,
                cy - half + j as f64 * BLOCK_KM,
            );
        }
    }
    #[allow(clippy::needless_range_loop)]
    for k in 0..m {
        for horizontal in [true, false] {
            let mut path: Vec<usize> = (0..m)
                .map(|t| if horizontal { id[k][t] } else { id[t][k] })
                .collect();
            let class = if k == m / 2 {
                3
            } else {
                match k % 4 {
                    0 => 4,
                    2 => 5,
                    _ => 7,
                }
            };
            // Some east-west local streets are one-way, alternating direction.
            let oneway = horizontal && class == 7 && k % 4 == 1;
            if oneway && (k / 4) % 2 == 1 {
                path.reverse();
            }
            net.add_route(Some(road_name(names)), &path, class, oneway);
        }
    }
}

/// Nodes every `step_km` on the straight line from `a` to `b`. A point within `snap_km` of an
/// existing node joins it (an interchange or crossing); the two ends become gateways, where
/// traffic enters and leaves the region.
fn line(net: &mut Network, a: (f64, f64), b: (f64, f64), step_km: f64) -> Vec<usize> {
    let snap_km = 0.3 * step_km;
    let len = (b.0 - a.0).hypot(b.1 - a.1);
    let n = (len / step_km).ceil().max(1.0) as usize;
    let existing = net.nodes.len();
    let mut path: Vec<usize> = Vec::with_capacity(n + 1);
    for i in 0..=n {
        let t = i as f64 / n as f64;
        let (x, y) = (a.0 + t * (b.0 - a.0), a.1 + t * (b.1 - a.1));
        let near = (0..existing)
            .map(|k| (k, (net.nodes[k].x_km - x).hypot(net.nodes[k].y_km - y)))
            .filter(|&(_, d)| d <= snap_km)
            .min_by(|p, q| p.1.total_cmp(&q.1))
            .map(|(k, _)| k);
        let node = match near {
            Some(k) if !path.contains(&k) => k,
            _ => net.add_node(x, y),
        };
        path.push(node);
    }
    net.gateways.push(path[0]);
    net.gateways.push(path[n]);
    path
}

fn add_highways(net: &mut Network, extent: f64) {
    let (c1x, c1y, _) = net.towns[0];
    let (c2x, c2y) = net
        .towns
        .get(1)
        .map(|t| (t.0, t.1))
        .unwrap_or((0.8 * extent, 0.8 * extent));
    let (dx, dy) = (c2x - c1x, c2y - c1y);
    let a1 = line(
        net,
        (c1x - 0.6 * dx, c1y - 0.6 * dy),
        (c2x + 0.6 * dx, c2y + 0.6 * dy),
        3.5,
    );
    net.add_route(Some("A1".into()), &a1, 1, false);
    // Toll the first three segments of A1 (rural, before the first town).
    let first = net
        .routes
        .last()
        .expect("A1 was just added")
        .segments
        .clone();
    net.tolled = first.into_iter().take(3).collect();

    let a7 = line(
        net,
        (c1x + 0.02 * extent, -0.05 * extent),
        (c1x + 0.12 * extent, 1.05 * extent),
        3.0,
    );
    net.add_route(Some("A7".into()), &a7, 2, false);
    let r3 = line(net, (0.0, 0.55 * extent), (extent, 0.45 * extent), 3.0);
    net.add_route(Some("R3".into()), &r3, 3, false);
}

fn add_stubs(net: &mut Network, rng: &mut ChaCha8Rng, scale: &Scale, names: &mut usize) {
    let grid_nodes = scale.rural_grid * scale.rural_grid;
    for n in 0..grid_nodes {
        if !rng.gen_bool(0.35) {
            continue;
        }
        let angle = rng.gen_range(0.0..std::f64::consts::TAU);
        let parts = rng.gen_range(1..=2);
        let mut path = vec![n];
        for _ in 0..parts {
            let last = &net.nodes[*path.last().expect("path starts with a node")];
            let step = rng.gen_range(0.8..2.2);
            let (x, y) = (
                last.x_km + step * angle.cos(),
                last.y_km + step * angle.sin(),
            );
            path.push(net.add_node(x, y));
        }
        let name = rng.gen_bool(0.5).then(|| road_name(names));
        net.add_route(name, &path, 7, false);
    }
}

/// Through lanes (both directions) usual for a class and area.
fn usual_lanes(class: u8, urban: bool, oneway: bool) -> u32 {
    if oneway {
        return 1;
    }
    match (class, urban) {
        (1, true) => 6,
        (1, false) | (2, _) | (3, true) => 4,
        _ => 2,
    }
}

fn speed_limit(class: u8, urban: bool) -> u32 {
    let (rural, town) = match class {
        1 => (110, 90),
        2 => (100, 80),
        3 => (90, 60),
        4 => (80, 50),
        5 => (70, 50),
        6 => (60, 40),
        _ => (50, 30),
    };
    if urban {
        town
    } else {
        rural
    }
}

/// Share of heavies that are single-unit (classes 4-7), by functional class.
const SINGLE_UNIT_OF_HEAVY: [f64; 7] = [0.30, 0.35, 0.45, 0.55, 0.60, 0.65, 0.75];
/// Relative weights of classes 4..=7 within single-unit and 8..=13 within combination
/// trucks (class 5 and class 9 dominate, as on most FHWA classified counts).
const SINGLE_UNIT_MIX: [f64; 4] = [0.12, 0.62, 0.20, 0.06];
const COMBINATION_MIX: [f64; 6] = [0.10, 0.76, 0.03, 0.07, 0.02, 0.02];

/// Access traffic (trips to and from the frontage, both directions) by class, rural and urban,
/// vehicles/day: the floor under the assigned through traffic.
const ACCESS_RURAL: [f64; 7] = [600.0, 500.0, 450.0, 400.0, 350.0, 260.0, 200.0];
const ACCESS_URBAN: [f64; 7] = [1500.0, 1200.0, 1000.0, 800.0, 600.0, 450.0, 300.0];
/// Median assigned light and heavy traffic on the interstate, vehicles/day: sets the scale
/// of the relative flows.
const INTERSTATE_LIGHT: f64 = 30000.0;
const INTERSTATE_HEAVY: f64 = 4500.0;

fn assign_traffic(net: &mut Network, rng: &mut ChaCha8Rng) {
    let gateways = net.gateways.clone();
    let flows = super::traffic::assign(net, rng, &gateways);
    let interstate = |s: usize| net.segments[s].class == 1;
    let k_light = INTERSTATE_LIGHT / super::traffic::median_where(&flows.light, interstate);
    let k_heavy = INTERSTATE_HEAVY / super::traffic::median_where(&flows.heavy, interstate);
    let std_normal: Normal<f64> = Normal::new(0.0, 1.0).expect("unit sd");
    let routes = net.routes.clone();
    for route in &routes {
        let pattern_draw: f64 = rng.gen();
        for &s in &route.segments {
            let access_noise = (0.5 * std_normal.sample(rng)).exp();
            let local_noise = (0.08 * std_normal.sample(rng)).exp();
            let su_noise = rng.gen_range(-0.05..0.05);
            let car_vs_light_truck = rng.gen_range(0.62..0.74);
            let (mx, my) = midpoint(net, s);
            let inbound_fwd = towards_town(net, s);
            let lake_district = mx < 0.45 * net.extent_km && my > 0.55 * net.extent_km;
            let seg = &mut net.segments[s];
            let c = (seg.class - 1) as usize;
            let access = access_noise
                * if seg.urban {
                    ACCESS_URBAN[c]
                } else {
                    ACCESS_RURAL[c]
                };
            let light = k_light * flows.light[s] + 0.97 * access;
            let heavy = k_heavy * flows.heavy[s] + 0.03 * access;
            seg.aadt = ((light + heavy) * local_noise)
                .clamp(50.0, 150_000.0)
                .round();
            seg.pattern = pick_pattern(seg.class, seg.urban, lake_district, pattern_draw);
            seg.inbound_fwd = inbound_fwd;
            let heavy_share = (heavy / (light + heavy)).clamp(0.005, 0.45);
            let su = (SINGLE_UNIT_OF_HEAVY[c] + su_noise).clamp(0.05, 0.95);
            seg.class_mix = class_mix(heavy_share, su, car_vs_light_truck);
        }
    }
}

fn class_mix(heavy: f64, single_unit: f64, cars: f64) -> [f64; 13] {
    let light = 1.0 - heavy;
    let mut mix = [0.0; 13];
    mix[0] = 0.006 * light;
    mix[1] = cars * 0.994 * light;
    mix[2] = (1.0 - cars) * 0.994 * light;
    for (i, w) in SINGLE_UNIT_MIX.iter().enumerate() {
        mix[3 + i] = heavy * single_unit * w;
    }
    for (i, w) in COMBINATION_MIX.iter().enumerate() {
        mix[7 + i] = heavy * (1.0 - single_unit) * w;
    }
    mix
}

/// Pattern by class, area and place; `u` is drawn once per route so a route mostly keeps
/// one pattern. The north-west quarter of the region is an invented lake district whose
/// rural roads carry recreational (seasonal, weekend) traffic.
fn pick_pattern(class: u8, urban: bool, lake_district: bool, u: f64) -> usize {
    // Upper bounds of u for (commuter, intercity); recreational takes the rest.
    let (p_commuter, p_intercity) = match (urban, lake_district, class) {
        (true, _, _) => (0.8, 1.0),
        (false, true, _) => (0.0, 0.15),
        (false, false, 1..=3) => (0.0, 0.85),
        (false, false, _) => (0.2, 0.85),
    };
    if u < p_commuter {
        0
    } else if u < p_intercity {
        1
    } else {
        2
    }
}

fn midpoint(net: &Network, s: usize) -> (f64, f64) {
    let seg = &net.segments[s];
    let (a, b) = (&net.nodes[seg.from], &net.nodes[seg.to]);
    ((a.x_km + b.x_km) / 2.0, (a.y_km + b.y_km) / 2.0)
}

fn towards_town(net: &Network, s: usize) -> bool {
    let seg = &net.segments[s];
    let dist = |n: usize| {
        let p = &net.nodes[n];
        net.towns
            .iter()
            .map(|&(cx, cy, _)| (p.x_km - cx).hypot(p.y_km - cy))
            .fold(f64::INFINITY, f64::min)
    };
    dist(seg.to) <= dist(seg.from)
}

/// Great-circle distance, km.
pub(crate) fn haversine_km(lon1: f64, lat1: f64, lon2: f64, lat2: f64) -> f64 {
    let (p1, p2) = (lat1.to_radians(), lat2.to_radians());
    let dp = p2 - p1;
    let dl = (lon2 - lon1).to_radians();
    let a = (dp / 2.0).sin().powi(2) + p1.cos() * p2.cos() * (dl / 2.0).sin().powi(2);
    2.0 * EARTH_RADIUS_KM * a.sqrt().asin()
}

/// Writes `network/nodes.csv` and `network/segments.csv`.
pub(crate) fn write(out: &Path, net: &Network) -> Result<Vec<PathBuf>, DemoError> {
    let mut nodes = CsvSink::create(out.join("network/nodes.csv"), &["node_id", "lon", "lat"])?;
    for n in &net.nodes {
        nodes.row([
            n.id.clone(),
            format!("{:.6}", n.lon),
            format!("{:.6}", n.lat),
        ])?;
    }
    let mut segs = CsvSink::create(
        out.join("network/segments.csv"),
        &[
            "segment_id",
            "from_node",
            "to_node",
            "length_km",
            "functional_class",
            "area",
            "lanes",
            "oneway",
            "route",
            "speed_limit_kph",
        ],
    )?;
    for s in &net.segments {
        segs.row([
            s.id.clone(),
            net.nodes[s.from].id.clone(),
            net.nodes[s.to].id.clone(),
            format!("{:.3}", s.length_km),
            s.class.to_string(),
            if s.urban { "urban" } else { "rural" }.to_string(),
            s.lanes.to_string(),
            s.oneway.to_string(),
            s.route.clone().unwrap_or_default(),
            s.speed_kph.to_string(),
        ])?;
    }
    Ok(vec![nodes.finish()?, segs.finish()?])
}
