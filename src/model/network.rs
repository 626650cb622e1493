//! The road network: nodes with WGS 84 coordinates and directed segments between them.

use std::collections::HashMap;

use petgraph::graph::{DiGraph, NodeIndex};

use super::ids::{NodeId, SegmentId};

/// FHWA functional classification, 1 (interstate) to 7 (local).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct FunctionalClass(u8);

impl FunctionalClass {
    /// A class from its code, `None` outside 1..=7.
    pub fn new(code: u8) -> Option<FunctionalClass> {
        (1..=7).contains(&code).then_some(FunctionalClass(code))
    }

    /// The FHWA code 1..=7.
    pub fn code(self) -> u8 {
        self.0
    }

    /// The FHWA name of the class.
    pub fn name(self) -> &'static str {
        match self.0 {
            1 => "interstate",
            2 => "other freeway or expressway",
            3 => "other principal arterial",
            4 => "minor arterial",
            5 => "major collector",
            6 => "minor collector",
            _ => "local",
        }
    }

    /// Coarse grouping used for reporting errors: freeways (1-2), arterials (3-4), collectors and locals (5-7).
    pub fn broad_group(self) -> &'static str {
        match self.0 {
            1 | 2 => "freeway",
            3 | 4 => "arterial",
            _ => "collector_local",
        }
    }
}

/// Urban or rural area.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum Area {
    /// Urban area.
    Urban,
    /// Rural area.
    Rural,
}

impl Area {
    /// The contract's spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            Area::Urban => "urban",
            Area::Rural => "rural",
        }
    }
}

/// A node of `network/nodes.csv`.
#[derive(Debug, Clone)]
pub struct Node {
    /// Node id.
    pub id: NodeId,
    /// Longitude, decimal degrees WGS 84.
    pub lon: f64,
    /// Latitude, decimal degrees WGS 84.
    pub lat: f64,
}

/// A segment of `network/segments.csv`; `from`/`to` are indices into [`Network::nodes`].
#[derive(Debug, Clone)]
pub struct Segment {
    /// Segment id.
    pub id: SegmentId,
    /// Index of the from node (digitised direction start).
    pub from: usize,
    /// Index of the to node.
    pub to: usize,
    /// Length in km (> 0).
    pub length_km: f64,
    /// FHWA functional class.
    pub functional_class: FunctionalClass,
    /// Urban or rural.
    pub area: Area,
    /// Through lanes, both directions together.
    pub lanes: u32,
    /// A one-way segment carries `fwd` traffic only.
    pub oneway: bool,
    /// Signed route the segment belongs to, if given.
    pub route: Option<String>,
    /// Posted speed limit in km/h, if given.
    pub speed_limit_kph: Option<f64>,
}

/// Mean Earth radius used for local projections, km (IUGG mean radius).
pub const EARTH_RADIUS_KM: f64 = 6371.0088;

/// The whole network, with id lookups.
#[derive(Debug, Clone, Default)]
pub struct Network {
    /// Nodes in file order.
    pub nodes: Vec<Node>,
    /// Segments in file order.
    pub segments: Vec<Segment>,
    /// Node id -> index.
    pub node_index: HashMap<NodeId, usize>,
    /// Segment id -> index.
    pub segment_index: HashMap<SegmentId, usize>,
}

impl Network {
    /// Index of a segment by id.
    pub fn segment(&self, id: &SegmentId) -> Option<usize> {
        self.segment_index.get(id).copied()
    }

    /// Midpoint of a segment's straight chord, as (lon, lat) degrees.
    pub fn midpoint_lonlat(&self, segment: usize) -> (f64, f64) {
        let s = &self.segments[segment];
        let (a, b) = (&self.nodes[s.from], &self.nodes[s.to]);
        ((a.lon + b.lon) / 2.0, (a.lat + b.lat) / 2.0)
    }

    /// Segment midpoints projected to a plane in km (equirectangular about the network's
    /// mean latitude; distortion is negligible over a region a few hundred km across).
    pub fn midpoints_km(&self) -> Vec<[f64; 2]> {
        if self.segments.is_empty() {
            return Vec::new();
        }
        let mids: Vec<(f64, f64)> = (0..self.segments.len())
            .map(|i| self.midpoint_lonlat(i))
            .collect();
        let lat0 = mids.iter().map(|m| m.1).sum::<f64>() / mids.len() as f64;
        let kx = EARTH_RADIUS_KM * lat0.to_radians().cos() * std::f64::consts::PI / 180.0;
        let ky = EARTH_RADIUS_KM * std::f64::consts::PI / 180.0;
        mids.iter().map(|(lon, lat)| [lon * kx, lat * ky]).collect()
    }

    /// Straight-line (great-circle) distance between a segment's end nodes, km.
    pub fn chord_km(&self, segment: usize) -> f64 {
        let s = &self.segments[segment];
        haversine_km(&self.nodes[s.from], &self.nodes[s.to])
    }

    /// Directed graph of segment directions: one edge `from -> to` per segment and, unless the
    /// segment is one-way, one edge `to -> from`. Edge weights are segment indices.
    pub fn direction_graph(&self) -> DiGraph<usize, usize> {
        let mut g = DiGraph::with_capacity(self.nodes.len(), self.segments.len() * 2);
        let idx: Vec<NodeIndex> = (0..self.nodes.len()).map(|i| g.add_node(i)).collect();
        for (si, s) in self.segments.iter().enumerate() {
            g.add_edge(idx[s.from], idx[s.to], si);
            if !s.oneway {
                g.add_edge(idx[s.to], idx[s.from], si);
            }
        }
        g
    }
}

/// Great-circle distance between two nodes, km (haversine formula).
pub fn haversine_km(a: &Node, b: &Node) -> f64 {
    let (p1, p2) = (a.lat.to_radians(), b.lat.to_radians());
    let dp = p2 - p1;
    let dl = (b.lon - a.lon).to_radians();
    let h = (dp / 2.0).sin().powi(2) + p1.cos() * p2.cos() * (dl / 2.0).sin().powi(2);
    2.0 * EARTH_RADIUS_KM * h.sqrt().asin()
}
