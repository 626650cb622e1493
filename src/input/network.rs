//! Reading `network/nodes.csv` and `network/segments.csv`.

use std::collections::HashMap;
use std::path::Path;

use super::csvfile::{cell, show, CsvFile, Record};
use super::error::InputError;
use crate::model::FileSummary;
use crate::model::RejectedRow;
use crate::model::{Area, FunctionalClass, Network, Node, NodeId, Segment, SegmentId};

/// Relative name of the nodes file.
pub const NODES_FILE: &str = "network/nodes.csv";
/// Relative name of the segments file.
pub const SEGMENTS_FILE: &str = "network/segments.csv";

/// Reads both network files; bad rows go to `rejects`.
pub fn read_network(
    root: &Path,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
) -> Result<Network, InputError> {
    let mut net = Network::default();
    read_nodes(root, &mut net, rejects, files)?;
    read_segments(root, &mut net, rejects, files)?;
    if net.segments.is_empty() {
        return Err(InputError::NoSegments {
            path: SEGMENTS_FILE.into(),
        });
    }
    Ok(net)
}

/// Parses a finite decimal number.
pub fn parse_number(raw: &[u8]) -> Option<f64> {
    std::str::from_utf8(raw)
        .ok()?
        .parse::<f64>()
        .ok()
        .filter(|v| v.is_finite())
}

fn read_nodes(
    root: &Path,
    net: &mut Network,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
) -> Result<(), InputError> {
    let mut f = CsvFile::open(&root.join(NODES_FILE), NODES_FILE)?;
    let (c_id, c_lon, c_lat) = (f.require("node_id")?, f.require("lon")?, f.require("lat")?);
    let mut summary = FileSummary::new(NODES_FILE);
    let mut rec = Record::new();
    let name = f.name.clone();
    while let Some(line) = f.next_row(&mut rec, rejects, &mut summary)? {
        summary.rows += 1;
        let mut reject = |col: &str, val: &[u8], why: &str| {
            rejects.push(RejectedRow::new(&name, line, col, &show(val), why));
            summary.rejected += 1;
        };
        let Some(id) = cell(&rec, c_id) else {
            reject("node_id", b"", "node_id is empty");
            continue;
        };
        let id = NodeId(show(id));
        if net.node_index.contains_key(&id) {
            reject(
                "node_id",
                id.0.as_bytes(),
                "duplicate node_id (the first row is kept)",
            );
            continue;
        }
        let lon = cell(&rec, c_lon).and_then(parse_number);
        let Some(lon) = lon.filter(|v| (-180.0..=180.0).contains(v)) else {
            reject(
                "lon",
                rec.get(c_lon).unwrap_or(b""),
                "lon is not a longitude in -180..180 degrees",
            );
            continue;
        };
        let lat = cell(&rec, c_lat).and_then(parse_number);
        let Some(lat) = lat.filter(|v| (-90.0..=90.0).contains(v)) else {
            reject(
                "lat",
                rec.get(c_lat).unwrap_or(b""),
                "lat is not a latitude in -90..90 degrees",
            );
            continue;
        };
        net.node_index.insert(id.clone(), net.nodes.len());
        net.nodes.push(Node { id, lon, lat });
    }
    f.finish(&summary)?;
    files.push(summary);
    Ok(())
}

fn parse_bool(raw: &[u8]) -> Option<bool> {
    match raw.to_ascii_lowercase().as_slice() {
        b"true" => Some(true),
        b"false" => Some(false),
        _ => None,
    }
}

fn read_segments(
    root: &Path,
    net: &mut Network,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
) -> Result<(), InputError> {
    let mut f = CsvFile::open(&root.join(SEGMENTS_FILE), SEGMENTS_FILE)?;
    let cols: HashMap<&str, usize> = [
        "segment_id",
        "from_node",
        "to_node",
        "length_km",
        "functional_class",
        "area",
        "lanes",
    ]
    .into_iter()
    .map(|c| f.require(c).map(|i| (c, i)))
    .collect::<Result<_, _>>()?;
    let c_oneway = f.optional("oneway");
    let c_route = f.optional("route");
    let c_speed = f.optional("speed_limit_kph");
    let mut summary = FileSummary::new(SEGMENTS_FILE);
    let mut rec = Record::new();
    let name = f.name.clone();
    while let Some(line) = f.next_row(&mut rec, rejects, &mut summary)? {
        summary.rows += 1;
        match parse_segment(&rec, &cols, c_oneway, c_route, c_speed, net) {
            Ok(seg) => {
                net.segment_index.insert(seg.id.clone(), net.segments.len());
                net.segments.push(seg);
            }
            Err((col, val, why)) => {
                rejects.push(RejectedRow::new(&name, line, col, &val, why));
                summary.rejected += 1;
            }
        }
    }
    f.finish(&summary)?;
    files.push(summary);
    Ok(())
}

type Fault = (&'static str, String, &'static str);

fn parse_segment(
    rec: &Record,
    cols: &HashMap<&str, usize>,
    c_oneway: Option<usize>,
    c_route: Option<usize>,
    c_speed: Option<usize>,
    net: &Network,
) -> Result<Segment, Fault> {
    let raw = |c: &str| rec.get(cols[c]).map(show).unwrap_or_default();
    let get = |c: &str| cell(rec, cols[c]);
    let id = get("segment_id").ok_or(("segment_id", String::new(), "segment_id is empty"))?;
    let id = SegmentId(show(id));
    if net.segment_index.contains_key(&id) {
        return Err((
            "segment_id",
            id.0,
            "duplicate segment_id (the first row is kept)",
        ));
    }
    let node = |c: &'static str| -> Result<usize, Fault> {
        let v = get(c).ok_or((c, String::new(), "node reference is empty"))?;
        net.node_index.get(&NodeId(show(v))).copied().ok_or((
            c,
            show(v),
            "unknown node (not in network/nodes.csv or rejected there)",
        ))
    };
    let from = node("from_node")?;
    let to = node("to_node")?;
    let length_km = get("length_km")
        .and_then(parse_number)
        .filter(|v| *v > 0.0)
        .ok_or((
            "length_km",
            raw("length_km"),
            "length_km is not a number > 0",
        ))?;
    let functional_class = get("functional_class")
        .and_then(|v| std::str::from_utf8(v).ok()?.parse::<u8>().ok())
        .and_then(FunctionalClass::new)
        .ok_or((
            "functional_class",
            raw("functional_class"),
            "functional_class is not an FHWA class 1..7",
        ))?;
    let area = match get("area") {
        Some(b"urban") => Area::Urban,
        Some(b"rural") => Area::Rural,
        _ => return Err(("area", raw("area"), "area is not `urban` or `rural`")),
    };
    let lanes = get("lanes")
        .and_then(|v| std::str::from_utf8(v).ok()?.parse::<u32>().ok())
        .filter(|v| *v >= 1)
        .ok_or(("lanes", raw("lanes"), "lanes is not a whole number >= 1"))?;
    let oneway = match c_oneway.and_then(|c| cell(rec, c)) {
        None => false,
        Some(v) => parse_bool(v).ok_or(("oneway", show(v), "oneway is not `true` or `false`"))?,
    };
    let route = c_route.and_then(|c| cell(rec, c)).map(show);
    let speed_limit_kph = match c_speed.and_then(|c| cell(rec, c)) {
        None => None,
        Some(v) => Some(parse_number(v).filter(|s| *s > 0.0).ok_or((
            "speed_limit_kph",
            show(v),
            "speed_limit_kph is not a number > 0",
        ))?),
    };
    if from == to {
        return Err((
            "to_node",
            raw("to_node"),
            "from_node and to_node are the same node",
        ));
    }
    Ok(Segment {
        id,
        from,
        to,
        length_km,
        functional_class,
        area,
        lanes,
        oneway,
        route,
        speed_limit_kph,
    })
}
