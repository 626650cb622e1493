//! docs/input-format.md kept honest: a study is built with exactly the columns the page
//! lists for each file, and the binary must read it without a rejected row; each column
//! marked `yes` must be fatal to leave out (naming file and column), each `no` or `one of`
//! column must never be a missing column, leaving out all `one of` columns of a file must
//! be fatal, and an unknown column must be ignored.

use std::collections::BTreeMap;

use super::*;

/// (file, [(column, required)]) in the page's order, from its `### `file`` sections.
fn documented() -> Vec<(String, Vec<(String, String)>)> {
    let page =
        std::fs::read_to_string(concat!(env!("CARGO_MANIFEST_DIR"), "/docs/input-format.md"))
            .expect("docs/input-format.md");
    let mut out: Vec<(String, Vec<(String, String)>)> = Vec::new();
    let mut current: Option<usize> = None;
    for line in page.lines() {
        if let Some(h) = line.strip_prefix("### ") {
            current = None;
            let Some(name) = h.strip_prefix('`').and_then(|r| r.split('`').next()) else {
                continue;
            };
            if name.ends_with(".csv") {
                out.push((name.to_string(), Vec::new()));
                current = Some(out.len() - 1);
            }
        } else if let (Some(i), Some(row)) = (current, line.strip_prefix("| `")) {
            let cells: Vec<&str> = row.split('|').collect();
            let names: Vec<&str> = cells[0].split('`').step_by(2).map(str::trim).collect();
            let required = cells[1].trim().to_string();
            let mut cols = vec![names[0].to_string()];
            // `class_1` to `class_13`: the whole numbered run.
            if cells[0].contains(" to ") {
                let (stem, from) = names[0].rsplit_once('_').unwrap();
                let to = names.last().unwrap().rsplit_once('_').unwrap().1;
                let (from, to): (u32, u32) = (from.parse().unwrap(), to.parse().unwrap());
                cols = (from..=to).map(|k| format!("{stem}_{k}")).collect();
            }
            for c in cols {
                out[i].1.push((c, required.clone()));
            }
        }
    }
    out
}

/// Where a documented file goes in the test study.
fn path_of(doc_name: &str) -> &str {
    match doc_name {
        "counts/*.csv" => "counts/counts.csv",
        other => other,
    }
}

/// A valid value of every column the page may list, per row; a column the page lists and
/// this table does not know fails the test, so a new column needs a value here.
fn values(file: &str, col: &str) -> Vec<String> {
    let v = |xs: &[&str]| xs.iter().map(|s| s.to_string()).collect();
    match (file, col) {
        ("network/nodes.csv", "node_id") => v(&["A", "B", "C"]),
        ("network/nodes.csv", "lon") => v(&["10.000", "10.010", "10.020"]),
        ("network/nodes.csv", "lat") => v(&["45.000", "45.000", "45.000"]),
        ("network/segments.csv", "segment_id") => v(&["S1", "S2"]),
        ("network/segments.csv", "from_node") => v(&["A", "B"]),
        ("network/segments.csv", "to_node") => v(&["B", "C"]),
        ("network/segments.csv", "length_km") => v(&["0.80", "0.80"]),
        ("network/segments.csv", "functional_class") => v(&["3", "3"]),
        ("network/segments.csv", "area") => v(&["urban", "urban"]),
        ("network/segments.csv", "lanes") => v(&["2", "2"]),
        ("network/segments.csv", "oneway") => v(&["false", "true"]),
        ("network/segments.csv", "route") => v(&["R1", "R1"]),
        ("network/segments.csv", "speed_limit_kph") => v(&["50", "50"]),
        ("stations.csv", "station_id") => v(&["C1", "K1"]),
        ("stations.csv", "segment_id") => v(&["S1", "S2"]),
        ("stations.csv", "kind") => v(&["continuous", "short"]),
        ("history.csv", "segment_id") => v(&["S1"]),
        ("history.csv", "year") => v(&["2024"]),
        ("history.csv", "aadt") => v(&["1200"]),
        ("toll.csv", "segment_id") => v(&["S1"]),
        ("toll.csv", "from_date") => v(&["2025-06-03"]),
        ("toll.csv", "to_date") => v(&["2025-06-03"]),
        ("toll.csv", "vehicle_group") => v(&["all"]),
        ("toll.csv", "billed_vehicles") => v(&["1000"]),
        ("factors/group_assignment.csv", "factor_group") => v(&["arterial_urban"]),
        ("factors/group_assignment.csv", "route") => v(&["R1"]),
        ("factors/group_assignment.csv", "functional_class") => v(&["3"]),
        ("factors/group_assignment.csv", "area") => v(&["urban"]),
        // One day of hourly `fwd` rows of C1: vehicles = class_2 + class_9, axles beside.
        ("counts/counts.csv", c) => (0..24)
            .map(|h| match c {
                "station_id" => "C1".into(),
                "direction" => "fwd".into(),
                "start" => format!("2025-06-03T{h:02}:00:00-04:00"),
                "minutes" => "60".into(),
                "vehicles" => (40 + h + 2).to_string(),
                "axles" => (2 * (40 + h) + 10).to_string(),
                "class_2" => (40 + h).to_string(),
                "class_9" => "2".into(),
                c if c.starts_with("class_") => "0".into(),
                _ => panic!("docs/input-format.md lists `{c}` of counts; give it a value here"),
            })
            .collect(),
        _ => panic!("docs/input-format.md lists `{col}` of {file}; give it a value here"),
    }
}

/// Writes every documented file with its columns, leaving out `drop` of `drop_file` and
/// adding `extra` (an unknown column) to every file when set.
fn study(
    doc: &[(String, Vec<(String, String)>)],
    drop_file: &str,
    drop: &[&str],
    extra: bool,
) -> Study {
    let s = Study::new("");
    s.remove("counts/counts.csv");
    for (file, cols) in doc {
        let path = path_of(file);
        let mut table: BTreeMap<usize, (String, Vec<String>)> = BTreeMap::new();
        for (i, (c, _)) in cols.iter().enumerate() {
            if path == drop_file && drop.contains(&c.as_str()) {
                continue;
            }
            table.insert(i, (c.clone(), values(path, c)));
        }
        let n = table.values().map(|(_, v)| v.len()).max().unwrap_or(0);
        let mut text: Vec<String> = vec![table
            .values()
            .map(|(c, _)| c.as_str())
            .collect::<Vec<_>>()
            .join(",")];
        for r in 0..n {
            text.push(
                table
                    .values()
                    .map(|(_, v)| v[r].as_str())
                    .collect::<Vec<_>>()
                    .join(","),
            );
        }
        if extra {
            text[0].push_str(",remarks");
            for line in &mut text[1..] {
                line.push_str(",free text");
            }
        }
        s.write(path, &(text.join("\n") + "\n"));
    }
    s
}

#[test]
fn the_input_format_page_matches_the_readers() {
    let doc = documented();
    let files: Vec<&str> = doc.iter().map(|(f, _)| path_of(f)).collect();
    for f in [
        "network/nodes.csv",
        "network/segments.csv",
        "stations.csv",
        "counts/counts.csv",
        "history.csv",
        "toll.csv",
        "factors/group_assignment.csv",
    ] {
        assert!(files.contains(&f), "the page has no section for {f}");
    }
    // Every documented column read, none rejected; an unknown column changes nothing.
    for extra in [false, true] {
        let s = study(&doc, "", &[], extra);
        let o = s.run();
        assert!(
            o.status.code().is_some_and(|c| c <= 1),
            "{}",
            String::from_utf8_lossy(&o.stderr)
        );
        let rejected = s.output_csv("rejected_rows.csv");
        assert_eq!(rejected.len(), 1, "no row rejected: {rejected:?}");
    }
    for (file, cols) in &doc {
        let path = path_of(file);
        let mut one_of = Vec::new();
        for (c, required) in cols {
            let o = study(&doc, path, &[c], false).run();
            let err = String::from_utf8_lossy(&o.stderr).into_owned();
            match required.as_str() {
                "yes" => {
                    assert_eq!(o.status.code(), Some(2), "{path} without `{c}`: {err}");
                    assert!(
                        err.contains(path) && err.contains(&format!("`{c}`")),
                        "{path} without `{c}`: {err}"
                    );
                }
                "no" | "one of" => {
                    // Leaving it out may cost rows (a class column gone leaves the others
                    // partly filled), but it is never a missing column.
                    assert!(
                        !err.contains("required column"),
                        "{path} without optional `{c}`: {err}"
                    );
                    if required == "one of" {
                        one_of.push(c.as_str());
                    }
                }
                other => panic!("{path} `{c}`: required is `{other}`, not yes, no or one of"),
            }
        }
        if !one_of.is_empty() {
            let o = study(&doc, path, &one_of, false).run();
            let err = String::from_utf8_lossy(&o.stderr);
            assert_eq!(o.status.code(), Some(2), "{path} without {one_of:?}: {err}");
            assert!(err.contains(path), "{err}");
        }
    }
}
