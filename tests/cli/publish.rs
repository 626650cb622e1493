//! The published forms: workbook, GeoJSON, report, manifest, and byte-identical reruns.

use std::collections::HashMap;
use std::path::Path;

use calamine::{open_workbook, Data, Reader, Xlsx};

use super::*;

fn run_demo(out: &Path) {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/small");
    let o = roadtally()
        .args(["run", "--quiet", "--out"])
        .arg(out)
        .arg(&demo)
        .output()
        .unwrap();
    // The demo's six planted bad rows stay within max_rejected_share: exit 0, no alarm.
    assert_eq!(
        o.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(!String::from_utf8_lossy(&o.stderr).contains("alarm"));
}

fn csv_rows(path: &Path) -> Vec<Vec<String>> {
    let mut r = csv::Reader::from_path(path).unwrap();
    let mut rows = vec![r.headers().unwrap().iter().map(String::from).collect()];
    rows.extend(
        r.records()
            .map(|x| x.unwrap().iter().map(String::from).collect()),
    );
    rows
}

#[test]
fn two_runs_give_byte_identical_outputs() {
    let (a, b) = (tempfile::tempdir().unwrap(), tempfile::tempdir().unwrap());
    run_demo(a.path());
    run_demo(b.path());
    let mut n = 0;
    for e in std::fs::read_dir(a.path()).unwrap() {
        let p = e.unwrap().path();
        if p.is_file() {
            let name = p.file_name().unwrap();
            assert_eq!(
                std::fs::read(&p).unwrap(),
                std::fs::read(b.path().join(name)).unwrap(),
                "{name:?}"
            );
            n += 1;
        }
    }
    assert!(n >= 15, "{n} files compared");
}

/// The workbook read back with calamine agrees with the CSV tables: sheets, headers (with
/// units) and values.
#[test]
fn workbook_sheets_match_the_csv_tables() {
    let out = tempfile::tempdir().unwrap();
    run_demo(out.path());
    let mut wb: Xlsx<_> = open_workbook(out.path().join("roadtally.xlsx")).unwrap();
    let sheets = wb.sheet_names().to_vec();
    assert_eq!(sheets[0], "about");
    for name in [
        "segment_statistics",
        "station_statistics",
        "toll_reconciliation",
        "design_inputs",
    ] {
        assert!(
            sheets.iter().any(|s| s == name),
            "sheet {name} in {sheets:?}"
        );
        let range = wb.worksheet_range(name).unwrap();
        let csv = csv_rows(&out.path().join(format!("{name}.csv")));
        assert_eq!(range.height(), csv.len(), "{name} rows");
        for (j, h) in csv[0].iter().enumerate() {
            let cell = range.get((0, j)).unwrap().to_string();
            assert!(
                cell == *h || cell.starts_with(&format!("{h} (")),
                "{name} header {cell} vs {h}"
            );
        }
        // A sample of values: every 7th row, every column, equal to the CSV's number.
        for i in (1..csv.len()).step_by(7) {
            for (j, text) in csv[i].iter().enumerate() {
                let cell = range.get((i, j)).unwrap();
                match cell {
                    Data::Empty => assert!(text.is_empty(), "{name} ({i},{j}) empty vs {text}"),
                    Data::Float(v) => {
                        // The same rounding in both: the workbook stores the CSV's number.
                        let want: f64 = text.parse().unwrap();
                        assert_eq!(*v, want, "{name} ({i},{j}) {v} vs {text}");
                    }
                    Data::Int(v) => assert_eq!(v.to_string(), *text),
                    other => assert_eq!(other.to_string(), *text, "{name} ({i},{j})"),
                }
            }
        }
    }
    let about = wb.worksheet_range("about").unwrap();
    let text: String = about
        .cells()
        .map(|(_, _, c)| c.to_string())
        .collect::<Vec<_>>()
        .join(" ");
    assert!(
        text.contains("licensed engineer"),
        "the caution is on the first sheet"
    );
    // The shipped design defaults are stated from memory: flagged on the cover, on the
    // design sheet's title (cover list) and in the report beside the design table.
    assert!(text.contains("Design defaults from memory"), "{text}");
    assert!(text.contains("factors/truck_factors.csv"));
    assert!(text.contains("design_inputs: Pavement (AASHTO 1993) and capacity (HCM) inputs per segment; uses default tables stated from memory"));
    let html = std::fs::read_to_string(out.path().join("report.html")).unwrap();
    assert!(html.contains("uses default tables stated from memory"));
    assert!(html.contains("Design defaults from memory"));
}

#[test]
fn geojson_has_one_line_per_segment_with_its_statistics() {
    let out = tempfile::tempdir().unwrap();
    run_demo(out.path());
    let text = std::fs::read_to_string(out.path().join("segments.geojson")).unwrap();
    let gj: geojson::GeoJson = text.parse().unwrap();
    let geojson::GeoJson::FeatureCollection(fc) = gj else {
        panic!("not a FeatureCollection")
    };
    let seg = csv_rows(&out.path().join("segment_statistics.csv"));
    assert_eq!(fc.features.len(), seg.len() - 1);
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/small/network");
    let nodes: HashMap<String, (f64, f64)> = csv_rows(&demo.join("nodes.csv"))[1..]
        .iter()
        .map(|r| (r[0].clone(), (r[1].parse().unwrap(), r[2].parse().unwrap())))
        .collect();
    let segs: HashMap<String, (String, String)> = csv_rows(&demo.join("segments.csv"))[1..]
        .iter()
        .map(|r| (r[0].clone(), (r[1].clone(), r[2].clone())))
        .collect();
    let f = &fc.features[0];
    let props = f.properties.as_ref().unwrap();
    let id = props["segment_id"].as_str().unwrap();
    let Some(geojson::Value::LineString(line)) = f.geometry.as_ref().map(|g| &g.value) else {
        panic!("LineString")
    };
    let (from, to) = &segs[id];
    assert!((line[0][0] - nodes[from].0).abs() < 1e-6 && (line[0][1] - nodes[from].1).abs() < 1e-6);
    assert!((line[1][0] - nodes[to].0).abs() < 1e-6 && (line[1][1] - nodes[to].1).abs() < 1e-6);
    let row = seg.iter().find(|r| r[0] == id).unwrap();
    let aadt: f64 = row[1].parse().unwrap();
    assert!((props["aadt"].as_f64().unwrap() - aadt).abs() < 0.5);
    assert_eq!(props["basis"].as_str().unwrap(), row[4]);
    // Properties in the CSV's column order, route included; every column the CSV prints as
    // a number (directional AADT included) is a JSON number, never a string.
    let first_props = &text[text.find("\"properties\":{").unwrap() + 14..];
    let first_props = &first_props[..first_props.find('}').unwrap()];
    let keys: Vec<String> = first_props
        .split(',')
        .filter_map(|kv| {
            kv.strip_prefix('"')
                .map(|k| k[..k.find('"').unwrap()].to_string())
        })
        .collect();
    assert_eq!(keys, seg[0], "property order");
    assert!(seg[0].iter().any(|c| c == "route"));
    for f in &fc.features {
        let props = f.properties.as_ref().unwrap();
        let id = props["segment_id"].as_str().unwrap();
        let row = seg.iter().find(|r| r[0] == id).unwrap();
        for (name, text) in seg[0].iter().zip(row) {
            let v = &props[name.as_str()];
            if text.is_empty() {
                assert!(v.is_null(), "{id} {name}");
            } else if text.parse::<f64>().is_ok() && name != "count_years" {
                assert!(v.is_number(), "{id} {name} = {v}");
            }
        }
        for name in ["aadt_fwd", "aadt_rev"] {
            assert!(props[name].is_number(), "{id} {name}");
        }
    }
}

/// A station and a route whose names hold markup come out escaped in the report.
#[test]
fn report_escapes_text_from_the_inputs() {
    let evil = "<script>alert(1)</script>";
    let rows: String = (0..24)
        .map(|h| format!("\"{evil}\",fwd,2025-06-03T{h:02}:00:00-04:00,60,100\n\"{evil}\",rev,2025-06-03T{h:02}:00:00-04:00,60,90\n"))
        .collect();
    let s = Study::new(&format!(
        "station_id,direction,start,minutes,vehicles\n{rows}"
    ));
    s.write(
        "stations.csv",
        &format!("station_id,segment_id,kind\n\"{evil}\",S1,continuous\n"),
    );
    s.write(
        "network/segments.csv",
        &format!("segment_id,from_node,to_node,length_km,functional_class,area,lanes,oneway,route\nS1,A,B,0.80,3,urban,2,false,\"{evil}\"\nS2,B,C,0.80,3,urban,1,true,R1\n"),
    );
    let out = s.run();
    assert!(
        out.status.code().is_some_and(|c| c <= 1),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let html = std::fs::read_to_string(s.out().join("report.html")).unwrap();
    // Only the report's own two script elements (its JSON data block and its script); the
    // input text inside the data block has every `<` written `\u003c`.
    assert_eq!(
        html.matches("<script").count(),
        2,
        "no script from the inputs"
    );
    let data = &html[html.find("application/json\">").unwrap()..];
    let data = &data[..data.find("</script>").unwrap()];
    assert!(
        data.contains("\\u003cscript>alert(1)\\u003c/script>"),
        "{data}"
    );
    assert!(html.contains("&lt;script&gt;"), "escaped text present");
    assert!(
        !html.contains("src=\"http") && !html.contains("href=\"http"),
        "no network fetches"
    );
    assert!(html.contains("licensed engineer"));
}

/// Settings out of range and a study year without data never publish blank AADTs: the first
/// two stop with a message naming the setting (exit 2, nothing written), the third publishes
/// with the foundation alarm (exit 1) and a finite AADT on every segment.
#[test]
fn degenerate_settings_and_years_are_named_never_blank() {
    let demo = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/small");
    let dir = tempfile::tempdir().unwrap();
    let study = dir.path().join("study");
    copy_dir(&demo, &study);
    std::fs::write(
        study.join("study.toml"),
        "year = 2025\n[spatial]\nneighbours = 0\n",
    )
    .unwrap();
    let out = dir.path().join("out0");
    // Runs the study with `extra` options: (exit code, standard error).
    let run = |extra: &[&str]| {
        let o = roadtally()
            .args(["run", "--quiet"])
            .args(extra)
            .arg("--out")
            .arg(&out)
            .arg(&study)
            .output()
            .unwrap();
        (
            o.status.code(),
            String::from_utf8_lossy(&o.stderr).into_owned(),
        )
    };
    let (code, err) = run(&[]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("neighbours"), "{err}");
    assert!(!out.exists());
    std::fs::write(study.join("study.toml"), "year = 2025\n").unwrap();
    let (code, err) = run(&["--year", "999999"]);
    assert_eq!(code, Some(2), "{err}");
    assert!(err.contains("999999"), "{err}");
    assert!(!out.exists());
    let (code, err) = run(&["--year", "2030"]);
    assert_eq!(code, Some(1), "{err}");
    assert!(
        err.contains("alarm: no permanent counter gave statistics for 2030"),
        "{err}"
    );
    let rows = csv_rows(&out.join("segment_statistics.csv"));
    let col = rows[0].iter().position(|c| c == "aadt").unwrap();
    for r in &rows[1..] {
        let v: f64 = r[col].parse().unwrap_or(f64::NAN);
        assert!(v.is_finite() && v > 0.0, "blank or bad AADT in {r:?}");
    }
}

/// Every two-way permanent counter of the demo has a `rev` row, and fwd + rev matches the
/// two-way AADT: within 1 %, not exactly, because each direction averages its own accepted
/// days (a day quality control rejects in one direction still counts in the other).
/// Common practice: the directional AADTs of a counter sum to its two-way AADT.
#[test]
fn both_directions_are_published_and_add_up() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("out");
    run_demo(&out);
    let rows = csv_rows(&out.join("station_statistics.csv"));
    let col = |name: &str| rows[0].iter().position(|c| c == name).unwrap();
    let (id, dir_col, simple) = (col("station_id"), col("direction"), col("aadt_simple"));
    let mut by: std::collections::BTreeMap<&str, [Option<f64>; 3]> = Default::default();
    for r in &rows[1..] {
        let k = match r[dir_col].as_str() {
            "both" => 0,
            "fwd" => 1,
            "rev" => 2,
            other => panic!("direction {other}"),
        };
        by.entry(r[id].as_str()).or_default()[k] = r[simple].parse().ok();
    }
    assert_eq!(by.len(), 10, "every demo counter is two-way");
    for (station, [both, fwd, rev]) in by {
        let (b, f, r) = (
            both.unwrap(),
            fwd.unwrap(),
            rev.unwrap_or_else(|| panic!("{station} has no rev row")),
        );
        assert!(
            ((f + r) / b - 1.0).abs() < 0.01,
            "{station}: {f} + {r} against {b}"
        );
    }
    // Every segment has both directions, numeric, adding up to its AADT within rounding
    // (each of the three is rounded to whole vehicles); two-way ones carry traffic both ways.
    // Short-count and estimated segments are split by `direction_basis`.
    let seg = csv_rows(&out.join("segment_statistics.csv"));
    let at = |name: &str| seg[0].iter().position(|c| c == name).unwrap();
    let (aadt, fwd, rev, basis) = (
        at("aadt"),
        at("aadt_fwd"),
        at("aadt_rev"),
        at("direction_basis"),
    );
    let segments = csv_rows(
        &Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-data/small/network/segments.csv"),
    );
    let oneway: std::collections::HashMap<&str, bool> = segments[1..]
        .iter()
        .map(|r| (r[0].as_str(), r[7] == "true"))
        .collect();
    let mut bases = std::collections::BTreeSet::new();
    for r in &seg[1..] {
        let num = |i: usize| r[i].parse::<f64>().unwrap_or_else(|_| panic!("{r:?}"));
        let (a, f, v) = (num(aadt), num(fwd), num(rev));
        // A counter's directions are AADTs of their own complete days (1 %, as above).
        let tol = if r[basis] == "continuous" {
            0.01 * a
        } else {
            1.5
        };
        assert!((f + v - a).abs() <= tol, "{}: {f} + {v} against {a}", r[0]);
        let two_way = !oneway[r[0].as_str()];
        assert!(!two_way || v > 0.0, "{}: two-way without rev traffic", r[0]);
        bases.insert(r[basis].clone());
    }
    for b in &bases {
        assert!(
            ["continuous", "short_count", "even_split", "one_way"].contains(&b.as_str()),
            "{b}"
        );
    }
    assert!(
        bases.contains("continuous") && bases.contains("short_count"),
        "{bases:?}"
    );
    // GIS tools read the directional AADT as numbers.
    let geo: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(out.join("segments.geojson")).unwrap())
            .unwrap();
    for f in geo["features"].as_array().unwrap() {
        for key in ["aadt_fwd", "aadt_rev"] {
            assert!(
                f["properties"][key].is_number(),
                "{key}: {}",
                f["properties"]
            );
        }
    }
}

/// Every `<name>.csv` the report points to is written, and `qc_summary.csv` adds up: accepted
/// (flags included) plus rejected is the station's direction-days, flagged within accepted.
#[test]
fn the_report_points_only_to_files_written_and_qc_adds_up() {
    let out = tempfile::tempdir().unwrap();
    run_demo(out.path());
    let html = std::fs::read_to_string(out.path().join("report.html")).unwrap();
    let mut named = 0;
    for (i, _) in html.match_indices(".csv") {
        let start = html[..i]
            .rfind(|c: char| !(c.is_ascii_alphanumeric() || c == '_' || c == '/'))
            .map_or(0, |j| j + 1);
        let name = &html[start..i + 4];
        if name.len() > 4 {
            // Outputs are in the output folder; `factors/<table>.csv` may also name a shipped
            // default design table (the note on defaults stated from memory).
            let shipped = Path::new(env!("CARGO_MANIFEST_DIR")).join(name);
            assert!(
                out.path().join(name).is_file()
                    || (name.starts_with("factors/") && shipped.is_file()),
                "report names {name}"
            );
            named += 1;
        }
    }
    assert!(named > 0, "the report names its CSV files");
    let qc = csv_rows(&out.path().join("qc_summary.csv"));
    assert_eq!(
        qc[0],
        [
            "station_id",
            "direction_days",
            "accepted",
            "flagged",
            "rejected"
        ]
    );
    let mut flagged = 0;
    for r in &qc[1..] {
        let n: Vec<u64> = r[1..].iter().map(|v| v.parse().unwrap()).collect();
        assert_eq!(n[1] + n[3], n[0], "{r:?}");
        assert!(n[2] <= n[1], "{r:?}");
        flagged += n[2];
    }
    assert!(flagged > 0, "the demo has flagged days");
}

/// The demo workbook converted by LibreOffice headless (`scripts/workbook-pdf.sh`): every page
/// landscape. Skipped with a message when soffice is absent; the page setup itself is checked
/// in the workbook's XML by the xlsx unit tests, which need no LibreOffice.
#[test]
fn the_workbook_prints_landscape_in_libreoffice_when_installed() {
    let found = std::process::Command::new("sh")
        .args(["-c", "command -v soffice"])
        .output()
        .is_ok_and(|o| o.status.success());
    if !found {
        eprintln!("skipped: soffice (LibreOffice) is not installed");
        return;
    }
    let out = tempfile::tempdir().unwrap();
    run_demo(out.path());
    let script = Path::new(env!("CARGO_MANIFEST_DIR")).join("scripts/workbook-pdf.sh");
    let o = std::process::Command::new("sh")
        .arg(script)
        .arg(out.path().join("roadtally.xlsx"))
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&o.stdout);
    assert!(
        o.status.success(),
        "{text}{}",
        String::from_utf8_lossy(&o.stderr)
    );
    assert!(text.contains("0 in portrait"), "{text}");
}

/// The JSON data block of a report page (`<script id="report-data" type="application/json">`).
fn report_json(html: &str) -> serde_json::Value {
    let tag = "<script id=\"report-data\" type=\"application/json\">";
    let i = html.find(tag).expect("data block") + tag.len();
    let j = i + html[i..].find("</script>").expect("data block closes");
    serde_json::from_str(&html[i..j]).expect("the data block is JSON")
}

/// `12,345` as the report writes volumes.
fn with_commas(v: i64) -> String {
    let d = v.abs().to_string();
    let mut out = String::new();
    for (i, ch) in d.chars().enumerate() {
        if i > 0 && (d.len() - i).is_multiple_of(3) {
            out.push(',');
        }
        out.push(ch);
    }
    if v < 0 {
        format!("-{out}")
    } else {
        out
    }
}

/// The report's embedded segment data parses as JSON and carries, for every segment of
/// `segment_statistics.csv`, the same AADT, 95 % interval, basis and route as the CSV (the
/// page is a view of the published table, not a second computation).
#[test]
fn the_report_embeds_the_segment_figures_of_the_csv() {
    let out = tempfile::tempdir().unwrap();
    run_demo(out.path());
    let html = std::fs::read_to_string(out.path().join("report.html")).unwrap();
    let doc = report_json(&html);
    let cols: Vec<&str> = doc["columns"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c.as_str().unwrap())
        .collect();
    let at = |name: &str| cols.iter().position(|c| *c == name).unwrap();
    let by_id: HashMap<String, &serde_json::Value> = doc["segments"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| (r[at("segment_id")].as_str().unwrap().to_string(), r))
        .collect();
    let csv = csv_rows(&out.path().join("segment_statistics.csv"));
    let ci = |name: &str| csv[0].iter().position(|c| c == name).unwrap();
    assert_eq!(by_id.len(), csv.len() - 1, "one JSON row per CSV row");
    for r in &csv[1..] {
        let j = by_id[&r[ci("segment_id")]];
        for name in ["aadt", "aadt_lo95", "aadt_hi95"] {
            assert_eq!(
                j[at(name)]
                    .as_i64()
                    .map(|v| v.to_string())
                    .unwrap_or_default(),
                r[ci(name)],
                "{name} of {}",
                r[0]
            );
        }
        assert_eq!(j[at("basis")], r[ci("basis")].as_str());
        assert_eq!(j[at("route")], r[ci("route")].as_str());
    }
    assert!(
        doc["markers"].as_array().unwrap().len() > 10,
        "count locations"
    );
}

/// A headless browser to render the report with: `ROADTALLY_BROWSER`, else the first of
/// `chromium`, `chromium-browser`, `google-chrome` on PATH.
fn headless_browser() -> Option<String> {
    if let Ok(b) = std::env::var("ROADTALLY_BROWSER") {
        if !b.is_empty() {
            return Some(b);
        }
    }
    ["chromium", "chromium-browser", "google-chrome"]
        .into_iter()
        .find(|b| {
            std::process::Command::new("sh")
                .args(["-c", &format!("command -v {b}")])
                .output()
                .is_ok_and(|o| o.status.success())
        })
        .map(String::from)
}

/// The report rendered in a real headless browser: the URL fragment `#find=S00012` runs the
/// map's search, and the info panel then shows that segment's AADT and 95 % interval exactly
/// as `segment_statistics.csv` gives them. Skipped with a message when no browser is found.
#[test]
fn the_map_finds_a_segment_in_a_headless_browser_when_installed() {
    let Some(browser) = headless_browser() else {
        eprintln!("skipped: no headless browser (set ROADTALLY_BROWSER or put chromium on PATH)");
        return;
    };
    let out = tempfile::tempdir().unwrap();
    run_demo(out.path());
    let csv = csv_rows(&out.path().join("segment_statistics.csv"));
    let ci = |name: &str| csv[0].iter().position(|c| c == name).unwrap();
    let row = csv[1..].iter().find(|r| r[0] == "S00012").expect("S00012");
    let v = |name: &str| with_commas(row[ci(name)].parse().unwrap());
    let profile = tempfile::tempdir().unwrap();
    let url = format!(
        "file://{}#find=S00012",
        out.path().join("report.html").display()
    );
    let o = std::process::Command::new(&browser)
        .args([
            "--headless",
            "--disable-gpu",
            "--no-sandbox",
            "--virtual-time-budget=5000",
        ])
        .arg(format!("--user-data-dir={}", profile.path().display()))
        .args(["--dump-dom", &url])
        .output()
        .expect("browser runs");
    let dom = String::from_utf8_lossy(&o.stdout);
    let i = dom.find("id=\"map-info\"").unwrap_or_else(|| {
        panic!(
            "{browser} gave no page: {}",
            String::from_utf8_lossy(&o.stderr)
        )
    });
    let panel = &dom[i..i + dom[i..].find("</dl>").expect("the panel shows figures")];
    assert!(panel.contains("Segment S00012"), "{panel}");
    assert!(
        panel.contains(&format!("data-f=\"aadt\">{} veh/day<", v("aadt"))),
        "{panel}"
    );
    assert!(
        panel.contains(&format!(
            "data-f=\"interval\">{} – {} veh/day<",
            v("aadt_lo95"),
            v("aadt_hi95")
        )),
        "{panel}"
    );
}
