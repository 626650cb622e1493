//! Network checks: connectivity, dangling references, one-way dead ends, lengths.
//!
//! # Method
//! The network is read as the directed graph of segment directions
//! ([`Network::direction_graph`]): one edge per direction a segment carries.
//! * `disconnected_component`: weakly connected components over the nodes that some segment
//!   uses (unused nodes are allowed by the data contract); every component beyond the largest
//!   is reported with its size.
//! * `dangling_reference`: a segment whose node index, or an id lookup whose index, points
//!   outside the network (cannot come from the reader, which rejects such rows, but a network
//!   built in code can carry one).
//! * `oneway_dead_end`: a node that traffic can enter but not leave, or leave but not enter,
//!   where a one-way segment is involved (a two-way dead end is an ordinary cul-de-sac).
//! * `zero_length`, `too_long`, `shorter_than_chord`, `longer_than_chord`: `length_km` against
//!   fixed bounds and against the great-circle chord between the segment's nodes; a road can
//!   not be shorter than its chord.
//! * `coincident_nodes`: a segment whose two nodes lie (nearly) on the same point.
//!
//! # Units
//! Lengths and distances in km; coordinates WGS 84 degrees.
//!
//! # References
//! No published standard fixes these checks; they are common practice for network QA before
//! assigning counts to segments.

use petgraph::Direction as PgDirection;

use super::QcParams;
use crate::model::network::haversine_km;
use crate::model::{Network, NodeId, SegmentId};

/// One finding of the network checks.
#[derive(Debug, Clone, PartialEq)]
pub struct NetworkFinding {
    /// The segment at fault, where the finding is about a segment.
    pub segment_id: Option<SegmentId>,
    /// The node at fault, where the finding is about a node (or a component: its first node).
    pub node_id: Option<NodeId>,
    /// Name of the check, snake_case.
    pub check: &'static str,
    /// A short human-readable reason with numbers and units.
    pub detail: String,
}

/// Runs every network check. Findings come in a fixed order: references, components,
/// dead ends, then segment lengths in file order.
///
/// ```
/// use roadtally::model::{Network, Node, NodeId};
/// let net = Network { nodes: vec![Node { id: NodeId::from("a"), lon: 0.0, lat: 0.0 }], ..Default::default() };
/// assert!(roadtally::qc::network::check_network(&net, &Default::default()).is_empty());
/// ```
pub fn check_network(net: &Network, params: &QcParams) -> Vec<NetworkFinding> {
    let mut out = Vec::new();
    let n = net.nodes.len();
    let seg_id = |i: usize| Some(net.segments[i].id.clone());
    let node_id = |i: usize| Some(net.nodes[i].id.clone());

    // Dangling references first: the graph cannot be built over them.
    let mut dangling = vec![false; net.segments.len()];
    for (i, s) in net.segments.iter().enumerate() {
        for (end, idx) in [("from", s.from), ("to", s.to)] {
            if idx >= n {
                dangling[i] = true;
                out.push(NetworkFinding {
                    segment_id: seg_id(i),
                    node_id: None,
                    check: "dangling_reference",
                    detail: format!("{end} node index {idx} is outside the {n} nodes"),
                });
            }
        }
    }
    let mut ids: Vec<(&SegmentId, usize)> =
        net.segment_index.iter().map(|(k, v)| (k, *v)).collect();
    ids.sort();
    for (id, idx) in ids {
        if net.segments.get(idx).is_none_or(|s| &s.id != id) {
            out.push(NetworkFinding {
                segment_id: Some(id.clone()),
                node_id: None,
                check: "dangling_reference",
                detail: format!(
                    "segment id lookup points to index {idx}, which holds another segment or none"
                ),
            });
        }
    }
    let mut ids: Vec<(&NodeId, usize)> = net.node_index.iter().map(|(k, v)| (k, *v)).collect();
    ids.sort();
    for (id, idx) in ids {
        if net.nodes.get(idx).is_none_or(|s| &s.id != id) {
            out.push(NetworkFinding {
                segment_id: None,
                node_id: Some(id.clone()),
                check: "dangling_reference",
                detail: format!(
                    "node id lookup points to index {idx}, which holds another node or none"
                ),
            });
        }
    }
    if dangling.iter().any(|&d| d) {
        // The rest needs a sound graph; report what can be checked per segment only.
        length_checks(net, params, &dangling, &mut out);
        return out;
    }

    let g = net.direction_graph();
    // Weakly connected components over used nodes, by union-find.
    let mut uf = petgraph::unionfind::UnionFind::<usize>::new(n);
    let mut used = vec![false; n];
    for s in &net.segments {
        uf.union(s.from, s.to);
        used[s.from] = true;
        used[s.to] = true;
    }
    let mut comps: std::collections::BTreeMap<usize, (usize, usize)> = Default::default();
    for v in (0..n).filter(|&v| used[v]) {
        let e = comps.entry(uf.find(v)).or_insert((0, v));
        e.0 += 1;
        e.1 = e.1.min(v);
    }
    let mut comps: Vec<(usize, usize)> = comps.into_values().collect();
    // Largest first; ties by first node, so the order does not depend on the union-find.
    comps.sort_by(|a, b| b.0.cmp(&a.0).then(a.1.cmp(&b.1)));
    if comps.len() > 1 {
        let largest = comps[0].0;
        for &(size, first) in &comps[1..] {
            out.push(NetworkFinding {
                segment_id: None,
                node_id: node_id(first),
                check: "disconnected_component",
                detail: format!(
                    "component of {size} nodes (from node {}) is not connected to the largest component ({largest} nodes)",
                    net.nodes[first].id
                ),
            });
        }
    }

    // One-way dead ends.
    for v in g.node_indices() {
        let node = g[v];
        if !used[node] {
            continue;
        }
        let ins: Vec<usize> = g
            .edges_directed(v, PgDirection::Incoming)
            .map(|e| *e.weight())
            .collect();
        let outs: Vec<usize> = g
            .edges_directed(v, PgDirection::Outgoing)
            .map(|e| *e.weight())
            .collect();
        let oneway_near = ins.iter().chain(&outs).any(|&s| net.segments[s].oneway);
        if !oneway_near {
            continue;
        }
        let detail = if outs.is_empty() {
            Some(format!(
                "traffic enters on {} segment direction(s) (one-way {}) but no segment direction leaves",
                ins.len(),
                net.segments[ins[0]].id
            ))
        } else if ins.is_empty() {
            Some(format!(
                "traffic leaves on {} segment direction(s) (one-way {}) but no segment direction enters",
                outs.len(),
                net.segments[outs[0]].id
            ))
        } else {
            None
        };
        if let Some(detail) = detail {
            out.push(NetworkFinding {
                segment_id: None,
                node_id: node_id(node),
                check: "oneway_dead_end",
                detail,
            });
        }
    }

    length_checks(net, params, &dangling, &mut out);
    out
}

fn length_checks(net: &Network, p: &QcParams, skip: &[bool], out: &mut Vec<NetworkFinding>) {
    for (i, s) in net.segments.iter().enumerate() {
        if skip[i] {
            continue;
        }
        let mut push = |check: &'static str, detail: String| {
            out.push(NetworkFinding {
                segment_id: Some(s.id.clone()),
                node_id: None,
                check,
                detail,
            })
        };
        let len = s.length_km;
        let chord = haversine_km(&net.nodes[s.from], &net.nodes[s.to]);
        // A NaN length (only possible in a network built in code) is reported too.
        if len.is_nan() || len < p.min_segment_km {
            push(
                "zero_length",
                format!("length {len:.4} km is below {:.4} km", p.min_segment_km),
            );
        }
        if len > p.max_segment_km {
            push(
                "too_long",
                format!("length {len:.1} km is above {:.1} km", p.max_segment_km),
            );
        }
        if chord < p.coincident_node_km {
            push(
                "coincident_nodes",
                format!(
                    "nodes {} and {} are {:.1} m apart",
                    net.nodes[s.from].id,
                    net.nodes[s.to].id,
                    chord * 1000.0
                ),
            );
        }
        let slack = (chord * p.chord_tolerance_share).max(p.chord_tolerance_km);
        if len + slack < chord {
            push(
                "shorter_than_chord",
                format!("length {len:.3} km is shorter than the {chord:.3} km straight line between its nodes"),
            );
        } else if chord >= p.coincident_node_km
            && len > chord * p.max_length_to_chord
            && len - chord > p.chord_tolerance_km
        {
            push(
                "longer_than_chord",
                format!(
                    "length {len:.3} km is {:.1} times the {chord:.3} km straight line between its nodes",
                    len / chord
                ),
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::model::{Area, FunctionalClass, Node, Segment};

    fn node(id: &str, lon: f64, lat: f64) -> Node {
        Node {
            id: NodeId::from(id),
            lon,
            lat,
        }
    }

    fn seg(id: &str, from: usize, to: usize, length_km: f64, oneway: bool) -> Segment {
        Segment {
            id: SegmentId::from(id),
            from,
            to,
            length_km,
            functional_class: FunctionalClass::new(4).unwrap(),
            area: Area::Rural,
            lanes: 2,
            oneway,
            route: None,
            speed_limit_kph: None,
        }
    }

    /// a - b -> c (one-way into c, nothing leaves c), and a separate d - e whose length is
    /// shorter than its chord; f is used by no segment.
    fn tiny() -> Network {
        // 0.01 degrees of longitude at the equator is 1.112 km.
        let nodes = vec![
            node("a", 0.0, 0.0),
            node("b", 0.01, 0.0),
            node("c", 0.02, 0.0),
            node("d", 5.0, 5.0),
            node("e", 5.01, 5.0),
            node("f", 9.0, 9.0),
        ];
        let segments = vec![
            seg("ab", 0, 1, 1.2, false),
            seg("bc", 1, 2, 1.2, true),
            seg("de", 3, 4, 0.5, false),
        ];
        let node_index = nodes
            .iter()
            .enumerate()
            .map(|(i, n)| (n.id.clone(), i))
            .collect();
        let segment_index = segments
            .iter()
            .enumerate()
            .map(|(i, s)| (s.id.clone(), i))
            .collect();
        Network {
            nodes,
            segments,
            node_index,
            segment_index,
        }
    }

    fn checks(f: &[NetworkFinding]) -> Vec<&'static str> {
        f.iter().map(|x| x.check).collect()
    }

    #[test]
    fn tiny_network_findings() {
        let f = check_network(&tiny(), &QcParams::default());
        assert_eq!(
            checks(&f),
            [
                "disconnected_component",
                "oneway_dead_end",
                "shorter_than_chord"
            ],
            "{f:?}"
        );
        assert_eq!(f[0].node_id, Some(NodeId::from("d")));
        assert!(f[0].detail.contains("2 nodes"), "{}", f[0].detail);
        assert!(f[0].detail.contains("largest component (3 nodes)"));
        assert_eq!(f[1].node_id, Some(NodeId::from("c")));
        assert_eq!(f[2].segment_id, Some(SegmentId::from("de")));
    }

    #[test]
    fn two_way_cul_de_sac_and_sound_lengths_are_not_findings() {
        let mut net = tiny();
        net.segments[1].oneway = false;
        net.segments[2].length_km = 1.15;
        let f = check_network(&net, &QcParams::default());
        assert_eq!(checks(&f), ["disconnected_component"], "{f:?}");
    }

    #[test]
    fn length_and_reference_faults() {
        let mut net = tiny();
        net.nodes[4] = node("e", 5.0, 5.0); // coincides with d
        net.segments[2].length_km = 0.001;
        net.segments[0].length_km = 150.0;
        let f = check_network(&net, &QcParams::default());
        let c = checks(&f);
        assert!(c.contains(&"zero_length"), "{f:?}");
        assert!(c.contains(&"coincident_nodes"));
        assert!(c.contains(&"too_long"));
        assert!(c.contains(&"longer_than_chord"));
        net.segments[1].to = 99;
        let f = check_network(&net, &QcParams::default());
        assert_eq!(f[0].check, "dangling_reference");
        assert_eq!(f[0].segment_id, Some(SegmentId::from("bc")));
        assert!(!checks(&f).contains(&"disconnected_component"));
    }
}
