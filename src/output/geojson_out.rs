//! Map data writer: segments with their statistics as a GeoJSON file (RFC 7946).
//!
//! GIS users join published statistics to their own road layers, or simply open this file in
//! QGIS, ArcGIS or a web map. It holds one `LineString` feature per table row whose id names a
//! segment of the network, drawn from the segment's from node to its to node (the digitised
//! direction, so `fwd` reads along the line). Coordinates are `[lon, lat]` in WGS 84 decimal
//! degrees as RFC 7946 requires, rounded to 7 decimals (about 1 cm), and the file has no
//! `crs` member (RFC 7946 section 4 removed it).
//!
//! Every column of the table becomes a property: numbers as JSON numbers at the precision the
//! CSV table prints them (so the map and the table agree), text as strings, empty cells as
//! `null` (not given is never the same as 0). The feature `id` is the segment id. Properties
//! are written in the table's column order, the order of the CSV file (the JSON text is
//! written here, since the JSON library would sort the keys), which keeps bytes stable.

use std::path::{Path, PathBuf};

use serde_json::Value as JsonValue;

use super::table::{cell_text, Cell, Format, Table};
use super::{write_atomic, OutputError};
use crate::model::ids::SegmentId;
use crate::model::network::Network;

/// Decimal places kept in coordinates: 1e-7 degrees is about 1 cm on the ground.
const COORD_DECIMALS: i32 = 7;

/// Renders `table` as a GeoJSON FeatureCollection of segment lines.
///
/// `id_column` names the column that holds segment ids. Rows whose id is empty or names no
/// segment of `net` have no geometry and are left out of the map (they stay in the CSV).
/// An error when `id_column` is not a column of the table.
///
/// ```
/// use roadtally::model::Network;
/// use roadtally::output::geojson_out::render_segments_geojson;
/// use roadtally::output::{Column, Format, Table};
///
/// let table = Table::new("segment_statistics", "Segments", vec![
///     Column::new("segment_id", "", Format::Text),
/// ]);
/// let bytes = render_segments_geojson(&Network::default(), &table, "segment_id").unwrap();
/// assert_eq!(bytes, b"{\"type\":\"FeatureCollection\",\"features\":[]}\n");
/// ```
pub fn render_segments_geojson(
    net: &Network,
    table: &Table,
    id_column: &str,
) -> Result<Vec<u8>, OutputError> {
    let path = || PathBuf::from(format!("{}.geojson", table.name));
    let id_col = table.column(id_column).ok_or_else(|| OutputError::Format {
        path: path(),
        reason: format!(
            "table {} has no column {id_column} to join segments on",
            table.name
        ),
    })?;

    let json = |v: &JsonValue| serde_json::to_string(v).expect("a JSON value serialises");
    let mut out = String::from("{\"type\":\"FeatureCollection\",\"features\":[");
    let mut first = true;
    for row in &table.rows {
        let id = match &row[id_col] {
            Cell::Text(s) => s.clone(),
            Cell::Int(v) => v.to_string(),
            _ => continue,
        };
        let Some(si) = net.segment(&SegmentId(id.clone())) else {
            continue;
        };
        let seg = &net.segments[si];
        let (a, b) = (&net.nodes[seg.from], &net.nodes[seg.to]);
        let coords: Vec<JsonValue> = [a.lon, a.lat, b.lon, b.lat]
            .iter()
            .map(|&v| {
                serde_json::Number::from_f64(round_coord(v))
                    .map_or(JsonValue::Null, JsonValue::Number)
            })
            .collect();
        if !first {
            out.push(',');
        }
        first = false;
        out.push_str(&format!(
            "{{\"type\":\"Feature\",\"id\":{},\"geometry\":{{\"type\":\"LineString\",\"coordinates\":[[{},{}],[{},{}]]}},\"properties\":{{",
            json(&JsonValue::String(id)),
            json(&coords[0]),
            json(&coords[1]),
            json(&coords[2]),
            json(&coords[3]),
        ));
        for (i, (cell, col)) in row.iter().zip(&table.columns).enumerate() {
            if i > 0 {
                out.push(',');
            }
            out.push_str(&json(&JsonValue::String(col.name.clone())));
            out.push(':');
            out.push_str(&json(&property_value(cell, col.format)));
        }
        out.push_str("}}");
    }
    out.push_str("]}\n");
    Ok(out.into_bytes())
}

/// Writes the segment map as `<dir>/<name>` (the name includes `.geojson`), atomically.
pub fn write_segments_geojson(
    dir: &Path,
    name: &str,
    net: &Network,
    table: &Table,
    id_column: &str,
) -> Result<PathBuf, OutputError> {
    let bytes = render_segments_geojson(net, table, id_column).map_err(|e| match e {
        OutputError::Format { reason, .. } => OutputError::Format {
            path: dir.join(name),
            reason,
        },
        other => other,
    })?;
    write_atomic(dir, name, &bytes)
}

/// A coordinate rounded to [`COORD_DECIMALS`] places.
fn round_coord(v: f64) -> f64 {
    let k = 10f64.powi(COORD_DECIMALS);
    (v * k).round() / k
}

/// A cell as a JSON value, at the precision its CSV text has.
fn property_value(cell: &Cell, format: Format) -> JsonValue {
    match cell {
        Cell::Empty => JsonValue::Null,
        // An empty text is an empty CSV cell too: null, like every other empty cell.
        Cell::Text(s) if s.is_empty() => JsonValue::Null,
        Cell::Text(s) => JsonValue::String(s.clone()),
        Cell::Int(v) => JsonValue::from(*v),
        Cell::Num(v) if !v.is_finite() => JsonValue::Null,
        Cell::Num(v) => match format {
            Format::Integer => JsonValue::from(v.round() as i64),
            Format::Text => JsonValue::from(*v),
            _ => {
                let text = cell_text(cell, format);
                text.parse::<f64>()
                    .ok()
                    .and_then(serde_json::Number::from_f64)
                    .map_or(JsonValue::Null, JsonValue::Number)
            }
        },
    }
}

#[cfg(test)]
mod tests {
    use std::str::FromStr;

    use approx::assert_abs_diff_eq;
    use geojson::{GeoJson, Value};

    use super::*;
    use crate::model::ids::NodeId;
    use crate::model::network::{Area, FunctionalClass, Node, Segment};
    use crate::output::table::Column;

    fn network() -> Network {
        let mut net = Network::default();
        for (id, lon, lat) in [
            ("n1", -73.985_700_04, 40.748_400_1),
            ("n2", -73.9772, 40.7527),
            ("n3", -73.9700, 40.7600),
        ] {
            net.node_index.insert(NodeId::from(id), net.nodes.len());
            net.nodes.push(Node {
                id: NodeId::from(id),
                lon,
                lat,
            });
        }
        for (id, from, to) in [("s1", 0, 1), ("s2", 1, 2)] {
            net.segment_index
                .insert(SegmentId::from(id), net.segments.len());
            net.segments.push(Segment {
                id: SegmentId::from(id),
                from,
                to,
                length_km: 1.0,
                functional_class: FunctionalClass::new(3).unwrap(),
                area: Area::Urban,
                lanes: 2,
                oneway: false,
                route: None,
                speed_limit_kph: None,
            });
        }
        net
    }

    fn table() -> Table {
        let mut t = Table::new(
            "segment_statistics",
            "Segments",
            vec![
                Column::new("segment_id", "", Format::Text),
                Column::new("aadt", "veh/day", Format::Integer),
                Column::new("heavy_share", "", Format::Share),
                Column::new("basis", "", Format::Text),
            ],
        );
        t.push(vec![
            "s2".into(),
            Cell::Num(10234.6),
            Cell::Num(0.123456),
            "short_count".into(),
        ]);
        t.push(vec![
            "s1".into(),
            Cell::Int(800),
            Cell::Empty,
            "estimated".into(),
        ]);
        t.push(vec![
            "not_in_network".into(),
            Cell::Int(1),
            Cell::Empty,
            "".into(),
        ]);
        t
    }

    #[test]
    fn features_carry_geometry_and_properties() {
        let net = network();
        let bytes = render_segments_geojson(&net, &table(), "segment_id").unwrap();
        let text = String::from_utf8(bytes).unwrap();
        assert!(!text.contains("\"crs\""));
        let GeoJson::FeatureCollection(fc) = GeoJson::from_str(&text).unwrap() else {
            panic!("not a FeatureCollection");
        };
        assert_eq!(fc.features.len(), 2);

        let f = &fc.features[0];
        assert_eq!(f.id, Some(geojson::feature::Id::String("s2".into())));
        let Some(Value::LineString(line)) = f.geometry.as_ref().map(|g| &g.value) else {
            panic!("not a LineString");
        };
        assert_eq!(line.len(), 2);
        for (pos, node) in line.iter().zip([&net.nodes[1], &net.nodes[2]]) {
            assert_abs_diff_eq!(pos[0], node.lon, epsilon = 1e-7);
            assert_abs_diff_eq!(pos[1], node.lat, epsilon = 1e-7);
        }
        assert_eq!(f.property("aadt"), Some(&JsonValue::from(10235)));
        assert_abs_diff_eq!(
            f.property("heavy_share").unwrap().as_f64().unwrap(),
            0.1235,
            epsilon = 1e-12
        );
        assert_eq!(f.property("basis"), Some(&JsonValue::from("short_count")));

        let g = &fc.features[1];
        let Some(Value::LineString(line)) = g.geometry.as_ref().map(|g| &g.value) else {
            panic!("not a LineString");
        };
        assert_abs_diff_eq!(line[0][0], -73.9857, epsilon = 1e-9);
        assert_eq!(g.property("heavy_share"), Some(&JsonValue::Null));
        assert_eq!(g.property("aadt"), Some(&JsonValue::from(800)));
    }

    /// Properties follow the table's column order (here not alphabetical), as the CSV does.
    #[test]
    fn properties_keep_the_column_order() {
        let bytes = render_segments_geojson(&network(), &table(), "segment_id").unwrap();
        let text = String::from_utf8(bytes).unwrap();
        let props = &text[text.find("\"properties\"").unwrap()..];
        let at = |k: &str| props.find(&format!("\"{k}\":")).unwrap();
        assert!(at("segment_id") < at("aadt"));
        assert!(at("aadt") < at("heavy_share"));
        assert!(at("heavy_share") < at("basis"));
    }

    #[test]
    fn output_is_stable_and_a_missing_id_column_is_an_error() {
        let net = network();
        let one = render_segments_geojson(&net, &table(), "segment_id").unwrap();
        let two = render_segments_geojson(&net, &table(), "segment_id").unwrap();
        assert_eq!(one, two);
        assert!(render_segments_geojson(&net, &table(), "nope").is_err());

        let dir = tempfile::tempdir().unwrap();
        let path =
            write_segments_geojson(dir.path(), "segments.geojson", &net, &table(), "segment_id")
                .unwrap();
        assert_eq!(std::fs::read(path).unwrap(), one);
    }
}
