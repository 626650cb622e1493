//! Network drift: counted levels carried along a signed route.
//!
//! # Method
//! For every segment, the counted segments of the **same route** within `reach_km` along the
//! route (shortest path over that route's segments, petgraph Dijkstra, distance between
//! midpoints) are its route neighbours. The drift term is their inverse-square-distance
//! weighted mean log AADT, `Σ w_k y_k / Σ w_k` with `w_k = 1 / (d_k + d0)²`, `d0 = 0.5 km`.
//! A segment between two counts on one road so takes their level; a branch (another route)
//! does not. Segments with no route neighbour get the term's fallback (the regression then
//! leans on the segment attributes alone, through an indicator column).
//!
//! Leave-one-out validation removes the left-out segment from every route term through
//! [`RouteNeighbours::level`]'s `exclude` argument, so nothing leaks.

use std::collections::{BTreeMap, HashMap};

use petgraph::algo::dijkstra;
use petgraph::graph::{NodeIndex, UnGraph};

use crate::model::Network;

/// Offset in the inverse-square weights, km (keeps adjacent counts from dominating absolutely).
const D0_KM: f64 = 0.5;

/// For each segment, its counted route neighbours (segment index, distance km).
#[derive(Debug, Clone, Default)]
pub struct RouteNeighbours {
    /// Per segment.
    pub lists: Vec<Vec<(usize, f64)>>,
}

impl RouteNeighbours {
    /// Finds route neighbours among `counted` segments within `reach_km`.
    pub fn build(net: &Network, counted: &[bool], reach_km: f64) -> RouteNeighbours {
        let mut lists = vec![Vec::new(); net.segments.len()];
        let mut by_route: BTreeMap<&str, Vec<usize>> = BTreeMap::new();
        for (i, s) in net.segments.iter().enumerate() {
            if let Some(r) = &s.route {
                by_route.entry(r.as_str()).or_default().push(i);
            }
        }
        for segs in by_route.values() {
            if !segs.iter().any(|&s| counted[s]) {
                continue;
            }
            let mut g: UnGraph<(), f64> = UnGraph::new_undirected();
            let mut node: HashMap<usize, NodeIndex> = HashMap::new();
            let mut idx = |g: &mut UnGraph<(), f64>, n: usize| {
                *node.entry(n).or_insert_with(|| g.add_node(()))
            };
            let ends: Vec<(NodeIndex, NodeIndex)> = segs
                .iter()
                .map(|&s| {
                    let seg = &net.segments[s];
                    let (a, b) = (idx(&mut g, seg.from), idx(&mut g, seg.to));
                    g.add_edge(a, b, seg.length_km);
                    (a, b)
                })
                .collect();
            let counted_here: Vec<usize> = (0..segs.len()).filter(|&k| counted[segs[k]]).collect();
            for (i, &s) in segs.iter().enumerate() {
                let half = net.segments[s].length_km / 2.0;
                let da = dijkstra(&g, ends[i].0, None, |e| *e.weight());
                let db = dijkstra(&g, ends[i].1, None, |e| *e.weight());
                for &k in &counted_here {
                    if k == i {
                        continue;
                    }
                    let other = segs[k];
                    let khalf = net.segments[other].length_km / 2.0;
                    let near = [ends[k].0, ends[k].1]
                        .iter()
                        .flat_map(|n| [da.get(n), db.get(n)])
                        .flatten()
                        .fold(f64::INFINITY, |a, &b| a.min(b));
                    let d = near + half + khalf;
                    if d.is_finite() && d <= reach_km {
                        lists[s].push((other, d));
                    }
                }
            }
        }
        RouteNeighbours { lists }
    }

    /// The route level of segment `s` from the observed log values `y` (indexed by segment),
    /// leaving out segment `exclude`; `None` without a neighbour.
    pub fn level(&self, s: usize, y: &[f64], exclude: Option<usize>) -> Option<f64> {
        let (mut num, mut den) = (0.0, 0.0);
        for &(k, d) in &self.lists[s] {
            if Some(k) == exclude || !y[k].is_finite() {
                continue;
            }
            let w = 1.0 / (d + D0_KM).powi(2);
            num += w * y[k];
            den += w;
        }
        (den > 0.0).then(|| num / den)
    }
}
