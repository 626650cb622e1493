//! Issue 17: `check` and `run` read the same files (`factors/` included), the manifest lists
//! and hashes every file used, and failures leave a trace (diagnostics, alarms), never a
//! blank cell.

use super::*;

fn text(b: &[u8]) -> String {
    String::from_utf8_lossy(b).into_owned()
}

/// Runs `roadtally <args> <study>` and returns (exit code, stdout, stderr).
fn roadtally_on(args: &[&str], study: &Path) -> (Option<i32>, String, String) {
    let o = roadtally().args(args).arg(study).output().expect("runs");
    (o.status.code(), text(&o.stdout), text(&o.stderr))
}

fn sha256_hex(path: &Path) -> String {
    use sha2::{Digest, Sha256};
    let bytes = std::fs::read(path).unwrap();
    Sha256::digest(bytes)
        .iter()
        .map(|b| format!("{b:02x}"))
        .collect()
}

const ASSIGNMENT_HEADER: &str = "factor_group,route,functional_class,area\n";

/// A bad row in `factors/group_assignment.csv` is named by `check` with file, line, column and
/// reason, and raises the data-loss alarm (1 of 2 rows lost); `run` rejects the same row with the
/// same reason. A missing required column stops both with exit 2 naming file and column.
#[test]
fn check_catches_a_broken_group_assignment() {
    let (dir, study) = demo_copy();
    let file = study.join("factors/group_assignment.csv");
    std::fs::create_dir_all(file.parent().unwrap()).unwrap();
    std::fs::write(
        &file,
        format!("{ASSIGNMENT_HEADER}arterial_urban,,3,urban\narterial_urban,,9,urban\n"),
    )
    .unwrap();
    let (code, out, err) = roadtally_on(&["check"], &study);
    assert_eq!(code, Some(1), "{out}{err}");
    assert!(
        out.contains(
            "factors/group_assignment.csv:3, column functional_class, \"9\": functional_class is not 1..7"
        ),
        "{out}"
    );
    assert!(
        err.contains("alarm: factors/group_assignment.csv lost 1 of its 2 rows"),
        "{err}"
    );
    let out_dir = dir.path().join("out");
    let (code, _, err) = roadtally_on(
        &["run", "--quiet", "--out", out_dir.to_str().unwrap()],
        &study,
    );
    assert_eq!(code, Some(1), "{err}");
    let rejected = std::fs::read_to_string(out_dir.join("rejected_rows.csv")).unwrap();
    assert!(
        rejected.contains(
            "factors/group_assignment.csv,3,functional_class,9,functional_class is not 1..7"
        ),
        "{rejected}"
    );
    // Without its required column the table cannot be read at all: both commands stop.
    std::fs::write(&file, "route,functional_class\nR1,3\n").unwrap();
    let unused = dir.path().join("out2");
    let run = ["run", "--quiet", "--out", unused.to_str().unwrap()];
    for cmd in [&["check"][..], &run[..]] {
        let (code, _, err) = roadtally_on(cmd, &study);
        assert_eq!(code, Some(2), "{cmd:?}: {err}");
        assert!(
            err.contains("factors/group_assignment.csv") && err.contains("factor_group"),
            "{cmd:?}: {err}"
        );
    }
    assert!(!unused.exists());
}

/// A `factors/*.csv` the tool does not read (here a misspelt truck-factor table) is refused by
/// both commands, so a study's table is never silently left unused.
#[test]
fn an_unknown_factors_file_is_refused() {
    let (_dir, study) = demo_copy();
    std::fs::create_dir_all(study.join("factors")).unwrap();
    std::fs::copy(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("factors/truck_factors.csv"),
        study.join("factors/truck_factor.csv"),
    )
    .unwrap();
    let (code, _, err) = roadtally_on(&["check"], &study);
    assert_eq!(code, Some(2), "{err}");
    assert!(
        err.contains("factors/truck_factor.csv") && err.contains("truck_factors.csv"),
        "{err}"
    );
}

/// The demo has no `factors/` folder, so the test gives its copy a truck-factor table and the
/// group assignment a first run wrote (the documented way to edit it): `check` lists both, and
/// the run manifest lists every file read, both tables and study.toml included, each with the
/// SHA-256 of its bytes (computed here with the sha2 crate, independently of the tool's own
/// reading).
#[test]
fn the_manifest_lists_the_factors_files_with_their_hashes() {
    let (dir, study) = demo_copy();
    let first = dir.path().join("first");
    let (code, _, err) = roadtally_on(
        &["run", "--quiet", "--out", first.to_str().unwrap()],
        &study,
    );
    assert_eq!(code, Some(0), "{err}");
    std::fs::create_dir_all(study.join("factors")).unwrap();
    std::fs::copy(
        Path::new(env!("CARGO_MANIFEST_DIR")).join("factors/truck_factors.csv"),
        study.join("factors/truck_factors.csv"),
    )
    .unwrap();
    std::fs::copy(
        first.join("factors/group_assignment.csv"),
        study.join("factors/group_assignment.csv"),
    )
    .unwrap();
    let (code, out, err) = roadtally_on(&["check"], &study);
    assert_eq!(code, Some(0), "{err}");
    for f in ["factors/truck_factors.csv", "factors/group_assignment.csv"] {
        assert!(out.contains(f), "check does not list {f}:\n{out}");
    }
    let out_dir = dir.path().join("out");
    let (code, _, err) = roadtally_on(
        &["run", "--quiet", "--out", out_dir.to_str().unwrap()],
        &study,
    );
    assert_eq!(code, Some(0), "{err}");
    let manifest: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out_dir.join("run_manifest.json")).unwrap()).unwrap();
    let inputs = manifest["inputs"].as_array().unwrap();
    let listed: Vec<&str> = inputs.iter().map(|i| i["file"].as_str().unwrap()).collect();
    let mut expected = vec![
        "network/nodes.csv",
        "network/segments.csv",
        "stations.csv",
        "history.csv",
        "toll.csv",
        "factors/group_assignment.csv",
        "factors/truck_factors.csv",
    ];
    for e in std::fs::read_dir(study.join("counts")).unwrap() {
        let name = e.unwrap().file_name().to_string_lossy().into_owned();
        expected.push(Box::leak(format!("counts/{name}").into_boxed_str()));
    }
    let mut sorted = listed.clone();
    sorted.sort();
    expected.sort();
    assert_eq!(sorted, expected, "manifest inputs");
    for i in inputs {
        let f = i["file"].as_str().unwrap();
        assert_eq!(
            i["sha256"].as_str().unwrap(),
            sha256_hex(&study.join(f)),
            "checksum of {f}"
        );
    }
    assert_eq!(manifest["settings_file"]["file"], "study.toml");
    assert_eq!(
        manifest["settings_file"]["sha256"].as_str().unwrap(),
        sha256_hex(&study.join("study.toml"))
    );
}

/// The settings reach their stages: with `full_model_min_counts` above the demo's counted
/// segments the drift regression is the reduced model (terms `arterial`, `collector_local`
/// instead of `class_2`..`class_7`), and `short_count_share_cv = 0` gives every share measured
/// by a short classified count a zero-width interval.
#[test]
fn model_switch_and_share_cv_are_settings() {
    let (dir, study) = demo_copy();
    let toml = std::fs::read_to_string(study.join("study.toml")).unwrap();
    std::fs::write(
        study.join("study.toml"),
        format!("{toml}\n[spatial]\nfull_model_min_counts = 100000\n[segments]\nshort_count_share_cv = 0.0\n"),
    )
    .unwrap();
    let out = dir.path().join("out");
    let (code, _, err) = roadtally_on(&["run", "--quiet", "--out", out.to_str().unwrap()], &study);
    assert!(code.is_some_and(|c| c <= 1), "{err}");
    let model = std::fs::read_to_string(out.join("spatial_model.csv")).unwrap();
    assert!(
        model.contains("collector_local") && !model.contains("class_2"),
        "{model}"
    );
    let mut r = csv::Reader::from_path(out.join("segment_statistics.csv")).unwrap();
    let h = r.headers().unwrap().clone();
    let at = |n: &str| h.iter().position(|c| c == n).unwrap();
    let (hs, lo, src) = (
        at("heavy_share"),
        at("heavy_share_lo95"),
        at("heavy_source"),
    );
    let mut seen = 0;
    for rec in r.records() {
        let rec = rec.unwrap();
        if &rec[src] == "short_count" {
            seen += 1;
            assert_eq!(&rec[hs], &rec[lo], "{rec:?}");
        }
    }
    assert!(
        seen > 0,
        "no segment with a classified short count in the demo"
    );
}

fn csv_table(path: &Path) -> Vec<std::collections::HashMap<String, String>> {
    let mut r = csv::Reader::from_path(path).expect("csv");
    let h = r.headers().unwrap().clone();
    r.records()
        .map(|rec| {
            let rec = rec.unwrap();
            h.iter()
                .zip(rec.iter())
                .map(|(k, v)| (k.to_string(), v.to_string()))
                .collect()
        })
        .collect()
}

/// Fallback alarm. The demo at its defaults stays below `max_fallback_share` in every stage
/// (exit 0). With the share lowered to 0.005, the expansion stage's fallbacks (short counts not
/// expanded) raise an exit-1 alarm naming the stage; `diagnostics.csv` counts exactly the
/// `not_expanded` rows of `short_counts.csv` (an independent table), and the manifest carries
/// the alarm as the terminal printed it.
#[test]
fn a_stage_that_falls_back_too_often_raises_an_alarm_naming_it() {
    let (dir, study) = demo_copy();
    let out = dir.path().join("out");
    let run =
        |out: &Path| roadtally_on(&["run", "--quiet", "--out", out.to_str().unwrap()], &study);
    let (code, _, err) = run(&out);
    assert_eq!(code, Some(0), "{err}");
    for row in csv_table(&out.join("diagnostics.csv")) {
        let share: f64 = row["fallback_share"].parse().unwrap();
        assert!(share <= 0.10, "{row:?}");
    }
    let toml = std::fs::read_to_string(study.join("study.toml")).unwrap();
    std::fs::write(
        study.join("study.toml"),
        format!("max_fallback_share = 0.005\n{toml}"),
    )
    .unwrap();
    let out = dir.path().join("out2");
    let (code, _, err) = run(&out);
    assert_eq!(code, Some(1), "{err}");
    let alarm = err
        .lines()
        .find(|l| l.starts_with("alarm: stage expansion:"))
        .unwrap_or_else(|| panic!("no expansion alarm in {err}"));
    let not_expanded = csv_table(&out.join("short_counts.csv"))
        .iter()
        .filter(|r| r["status"] == "not_expanded")
        .count();
    assert!(not_expanded > 0, "the demo has no unexpanded short count");
    let diag = csv_table(&out.join("diagnostics.csv"));
    let row = diag
        .iter()
        .find(|r| r["stage"] == "expansion" && r["kind"].starts_with("not expanded"))
        .expect("expansion row");
    assert_eq!(row["count"], not_expanded.to_string());
    let manifest: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.join("run_manifest.json")).unwrap()).unwrap();
    let alarms: Vec<&str> = manifest["alarms"]
        .as_array()
        .unwrap()
        .iter()
        .map(|a| a.as_str().unwrap())
        .collect();
    assert!(
        alarms.contains(&alarm.trim_start_matches("alarm: ")),
        "{alarms:?}"
    );
}

/// A study year without counts leaves segments without K, D or heavy share: the design stage
/// says why on every such row of `design_inputs.csv` (never a silently blank cell), counts
/// them in `diagnostics.csv` and in the run summary, and the expansion stage's fallback alarm
/// (every count unfactored) names the stage.
#[test]
fn design_gaps_carry_their_reason_and_are_counted() {
    let (dir, study) = demo_copy();
    let out = dir.path().join("out");
    let (code, summary, err) = roadtally_on(
        &["run", "--year", "2030", "--out", out.to_str().unwrap()],
        &study,
    );
    assert_eq!(code, Some(1), "{err}");
    assert!(
        err.contains("alarm: stage expansion:") && err.contains("unfactored"),
        "{err}"
    );
    let rows = csv_table(&out.join("design_inputs.csv"));
    let mut blank = 0;
    for r in &rows {
        if r["heavy_aadt"].is_empty() {
            blank += 1;
            assert!(r["pavement_note"].contains("heavy share"), "{r:?}");
        } else {
            assert!(r["pavement_note"].is_empty(), "{r:?}");
        }
        if r["ddhv"].is_empty() {
            assert!(!r["capacity_note"].is_empty(), "{r:?}");
        }
    }
    assert!(blank > 0);
    assert!(
        summary.contains(&format!(
            "design inputs: {blank} segments without pavement inputs"
        )),
        "{summary}"
    );
    let diag = csv_table(&out.join("diagnostics.csv"));
    let row = diag
        .iter()
        .find(|r| r["stage"] == "design" && r["kind"] == "pavement: no heavy share")
        .expect("design row");
    assert_eq!(row["count"], blank.to_string());
}
