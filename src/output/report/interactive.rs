//! The data the page's script reads: the map's segments and count locations as JSON in a
//! `<script type="application/json">` block, and the script itself (`report.js`, ours, no
//! library). The static page shows everything without the script; the script adds zoom,
//! pan, search, the info panel and the sortable, searchable, paged segment table.
//!
//! # Safety
//! The JSON is written by serde_json and then every `<` is written as `\u003c` (a JSON string
//! escape with the same meaning), so no input text can close the block (`</script>`) or open
//! a comment (`<!--`). The script builds its output with `textContent`, never as markup.

use maud::{html, Markup, PreEscaped};
use serde_json::{json, Value};

use super::data::{MapMarker, MapSegment};

/// The script, ours and inlined.
const SCRIPT: &str = include_str!("report.js");

/// Column names of the embedded segment rows, in row order.
pub const COLUMNS: [&str; 12] = [
    "segment_id",
    "route",
    "class",
    "group",
    "basis",
    "aadt",
    "aadt_lo95",
    "aadt_hi95",
    "heavy_pct",
    "k_factor",
    "d_factor",
    "length_km",
];

/// A number at `decimals` decimals as JSON, `null` when not finite; whole volumes as integers
/// (the CSV's rounding, so the page and `segment_statistics.csv` agree).
fn num(v: f64, decimals: i32) -> Value {
    if !v.is_finite() {
        return Value::Null;
    }
    if decimals == 0 {
        return json!(v.round() as i64);
    }
    let p = 10f64.powi(decimals);
    json!((v * p).round() / p)
}

/// The embedded data as JSON text, `<` escaped (see the module doc).
pub fn payload(segs: &[MapSegment], markers: &[MapMarker]) -> String {
    let rows: Vec<Value> = segs
        .iter()
        .map(|s| {
            json!([
                s.id,
                s.route,
                s.class,
                s.group,
                s.basis,
                num(s.aadt, 0),
                num(s.lo95, 0),
                num(s.hi95, 0),
                num(100.0 * s.heavy_share, 1),
                num(s.k_factor, 4),
                num(s.d_factor, 3),
                num(s.length_km, 3),
            ])
        })
        .collect();
    let marks: Vec<Value> = markers
        .iter()
        .map(|m| json!([m.id, m.segment_id, u8::from(m.continuous)]))
        .collect();
    let doc = json!({ "columns": COLUMNS, "segments": rows, "markers": marks });
    escape_for_script(&serde_json::to_string(&doc).expect("json"))
}

/// JSON text made safe inside a `<script>` element: `<` becomes `\u003c`. Valid because `<`
/// can only occur inside JSON strings, where the escape means the same character.
///
/// ```
/// use roadtally::output::report::interactive::escape_for_script;
/// assert_eq!(escape_for_script(r#"["</script><!--"]"#), r#"["\u003c/script>\u003c!--"]"#);
/// ```
pub fn escape_for_script(json: &str) -> String {
    json.replace('<', "\\u003c")
}

/// The data block and the script, placed at the end of the body.
pub(super) fn scripts(segs: &[MapSegment], markers: &[MapMarker]) -> Markup {
    html! {
        script #report-data type="application/json" { (PreEscaped(payload(segs, markers))) }
        script { (PreEscaped(SCRIPT)) }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn input_text_cannot_leave_the_data_block() {
        let evil = "</script><script>alert(1)</script><!--";
        let s = MapSegment {
            id: evil.into(),
            route: evil.into(),
            aadt: 1234.4,
            lo95: f64::NAN,
            heavy_share: 0.0834,
            ..MapSegment::default()
        };
        let p = payload(&[s], &[]);
        assert!(!p.contains('<'));
        let v: Value = serde_json::from_str(&p).unwrap();
        assert_eq!(v["segments"][0][0], evil);
        assert_eq!(v["segments"][0][5], 1234);
        assert!(v["segments"][0][6].is_null());
        assert_eq!(v["segments"][0][8], 8.3);
        assert!(!SCRIPT.contains("</script"));
        assert!(!SCRIPT.contains("<!--"));
    }
}
