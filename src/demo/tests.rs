//! Tests of the generated study: contract columns, references, DST days, toll truth, factors.

use std::collections::{HashMap, HashSet};
use std::fs::File;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::sync::OnceLock;

use approx::assert_relative_eq;

use super::network::haversine_km;
use super::*;

/// One Small study shared by the tests that only read it.
fn small() -> &'static (tempfile::TempDir, DemoSummary) {
    static STUDY: OnceLock<(tempfile::TempDir, DemoSummary)> = OnceLock::new();
    STUDY.get_or_init(|| {
        let dir = tempfile::tempdir().unwrap();
        let summary = generate(&DemoParams::new(42, DemoSize::Small), dir.path()).unwrap();
        (dir, summary)
    })
}

fn study() -> &'static Path {
    small().0.path()
}

/// Opens a CSV reader (gunzipping when the name ends in `.gz`).
fn open_csv(path: &Path) -> csv::Reader<Box<dyn Read>> {
    let file = File::open(path).unwrap_or_else(|e| panic!("{}: {e}", path.display()));
    let reader: Box<dyn Read> = if path.extension().is_some_and(|e| e == "gz") {
        Box::new(flate2::read::GzDecoder::new(file))
    } else {
        Box::new(file)
    };
    csv::Reader::from_reader(reader)
}

/// Header of a CSV and whether it has a first data row.
fn read_head(path: &Path) -> (Vec<String>, bool) {
    let mut csv = open_csv(path);
    let header = csv.headers().unwrap().iter().map(String::from).collect();
    let has_rows = csv.records().next().is_some();
    (header, has_rows)
}

/// Reads a CSV into its header and rows.
fn read_csv(path: &Path) -> (Vec<String>, Vec<HashMap<String, String>>) {
    let mut csv = open_csv(path);
    let header: Vec<String> = csv.headers().unwrap().iter().map(String::from).collect();
    let rows = csv
        .records()
        .map(|r| {
            let r = r.unwrap();
            header
                .iter()
                .cloned()
                .zip(r.iter().map(String::from))
                .collect()
        })
        .collect();
    (header, rows)
}

fn all_files(dir: &Path) -> Vec<PathBuf> {
    let mut out = Vec::new();
    for entry in std::fs::read_dir(dir).unwrap() {
        let p = entry.unwrap().path();
        if p.is_dir() {
            out.extend(all_files(&p));
        } else {
            out.push(p);
        }
    }
    out.sort();
    out
}

fn continuous_file() -> PathBuf {
    study().join("counts/continuous_2025.csv.gz")
}

/// The Small study's continuous counts, parsed once.
fn continuous_rows() -> &'static [HashMap<String, String>] {
    static ROWS: OnceLock<Vec<HashMap<String, String>>> = OnceLock::new();
    ROWS.get_or_init(|| read_csv(&continuous_file()).1)
}

#[test]
fn same_seed_gives_identical_files_and_another_seed_differs() {
    let (a, b, c) = (
        tempfile::tempdir().unwrap(),
        tempfile::tempdir().unwrap(),
        tempfile::tempdir().unwrap(),
    );
    let p = DemoParams::new(7, DemoSize::Small);
    generate_scaled(&p, Scale::TINY, a.path()).unwrap();
    generate_scaled(&p, Scale::TINY, b.path()).unwrap();
    generate_scaled(&DemoParams { seed: 8, ..p }, Scale::TINY, c.path()).unwrap();
    let (fa, fb) = (all_files(a.path()), all_files(b.path()));
    assert_eq!(
        fa.iter()
            .map(|f| f.strip_prefix(a.path()).unwrap())
            .collect::<Vec<_>>(),
        fb.iter()
            .map(|f| f.strip_prefix(b.path()).unwrap())
            .collect::<Vec<_>>()
    );
    for (x, y) in fa.iter().zip(&fb) {
        assert_eq!(
            std::fs::read(x).unwrap(),
            std::fs::read(y).unwrap(),
            "{}",
            x.display()
        );
    }
    let seg = |d: &Path| std::fs::read(d.join("network/segments.csv")).unwrap();
    assert_ne!(seg(a.path()), seg(c.path()));
    let cont = |d: &Path| std::fs::read(d.join("counts/continuous_2025.csv.gz")).unwrap();
    assert_ne!(cont(a.path()), cont(c.path()));
}

#[test]
fn no_temporary_files_are_left_behind() {
    let (_, summary) = small();
    for f in all_files(study()) {
        assert!(!f.to_string_lossy().ends_with(".tmp"), "{}", f.display());
    }
    for f in &summary.files {
        assert!(f.exists(), "{}", f.display());
    }
}

#[test]
fn files_have_the_contract_columns() {
    let cols = |s: &str| s.split(' ').map(String::from).collect::<Vec<_>>();
    let mut counts = cols("station_id direction start minutes vehicles axles");
    counts.extend((1..=13).map(|c| format!("class_{c}")));
    let expected = [
        ("network/nodes.csv", cols("node_id lon lat")),
        (
            "network/segments.csv",
            cols("segment_id from_node to_node length_km functional_class area lanes oneway route speed_limit_kph"),
        ),
        ("stations.csv", cols("station_id segment_id kind")),
        ("counts/short_counts.csv", counts.clone()),
        ("counts/continuous_2025.csv.gz", counts),
        ("history.csv", cols("segment_id year aadt")),
        ("toll.csv", cols("segment_id from_date to_date vehicle_group billed_vehicles")),
        ("truth/faults.csv", cols("station_id direction date fault detail")),
        ("truth/bad_rows.csv", cols("file line problem")),
        ("truth/short_gaps.csv", cols("station_id first_missing hours kind")),
        (
            "truth/segment_truth.csv",
            cols("segment_id pattern true_aadt true_heavy_share true_single_unit_share true_combination_share growth_rate"),
        ),
        (
            "truth/toll_truth.csv",
            cols("segment_id from_date to_date vehicle_group true_vehicles billed_vehicles misbilled"),
        ),
        ("truth/weekday_month_factors.csv", cols("pattern month weekday factor")),
    ];
    for (file, want) in expected {
        let (header, has_rows) = read_head(&study().join(file));
        assert_eq!(header, want, "{file}");
        assert!(has_rows, "{file} has no rows");
    }
    let toml = std::fs::read_to_string(study().join("study.toml")).unwrap();
    assert!(toml.lines().any(|l| l.starts_with('#')));
    assert_eq!(
        toml.parse::<toml::Table>().unwrap()["year"].as_integer(),
        Some(2025)
    );
}

#[test]
fn references_resolve_and_lengths_match_coordinates() {
    let (_, nodes) = read_csv(&study().join("network/nodes.csv"));
    let coords: HashMap<&str, (f64, f64)> = nodes
        .iter()
        .map(|n| {
            (
                n["node_id"].as_str(),
                (n["lon"].parse().unwrap(), n["lat"].parse().unwrap()),
            )
        })
        .collect();
    let (_, segs) = read_csv(&study().join("network/segments.csv"));
    let mut classes = HashSet::new();
    let mut areas = HashSet::new();
    let mut oneway = 0;
    for s in &segs {
        let a = coords[s["from_node"].as_str()];
        let b = coords[s["to_node"].as_str()];
        let len: f64 = s["length_km"].parse().unwrap();
        assert!(len > 0.0);
        assert_relative_eq!(
            len,
            haversine_km(a.0, a.1, b.0, b.1),
            max_relative = 0.01,
            epsilon = 0.001
        );
        let lanes: u32 = s["lanes"].parse().unwrap();
        assert!(lanes >= 1);
        classes.insert(s["functional_class"].clone());
        areas.insert(s["area"].clone());
        oneway += usize::from(s["oneway"] == "true");
    }
    assert_eq!(classes.len(), 7);
    assert_eq!(areas.len(), 2);
    assert!(oneway > 0);
    assert!((250..=350).contains(&segs.len()), "{} segments", segs.len());
    let seg_ids: HashSet<&str> = segs.iter().map(|s| s["segment_id"].as_str()).collect();
    let (_, stations) = read_csv(&study().join("stations.csv"));
    for st in &stations {
        assert!(seg_ids.contains(st["segment_id"].as_str()));
    }
    for file in ["history.csv", "toll.csv", "truth/segment_truth.csv"] {
        for r in read_csv(&study().join(file)).1 {
            assert!(seg_ids.contains(r["segment_id"].as_str()), "{file}");
        }
    }
}

#[test]
fn dst_days_have_23_and_25_hourly_rows() {
    let (_, stations) = read_csv(&study().join("stations.csv"));
    let rows = continuous_rows();
    // Continuous stations with hourly records and no fault on the DST days (faults avoid them).
    let mut per_day: HashMap<(&str, &str, &str), usize> = HashMap::new();
    for r in rows.iter().filter(|r| r["minutes"] == "60") {
        *per_day
            .entry((
                r["station_id"].as_str(),
                r["direction"].as_str(),
                &r["start"][..10],
            ))
            .or_default() += 1;
    }
    let continuous: Vec<&str> = stations
        .iter()
        .filter(|s| s["kind"] == "continuous")
        .map(|s| s["station_id"].as_str())
        .collect();
    let mut checked = 0;
    for st in continuous {
        for dir in ["fwd", "rev"] {
            if let Some(&n) = per_day.get(&(st, dir, "2025-03-09")) {
                assert_eq!(n, 23, "{st} {dir}");
                assert_eq!(per_day[&(st, dir, "2025-11-02")], 25, "{st} {dir}");
                checked += 1;
            }
        }
    }
    assert!(checked >= 10);
    // The repeated 01:00 hour carries both offsets.
    assert!(rows
        .iter()
        .any(|r| r["start"] == "2025-11-02T01:00:00-04:00"));
    assert!(rows
        .iter()
        .any(|r| r["start"] == "2025-11-02T01:00:00-05:00"));
    assert!(rows.iter().any(|r| r["minutes"] == "15"));
}

#[test]
fn exactly_one_toll_row_is_misbilled() {
    let (_, truth) = read_csv(&study().join("truth/toll_truth.csv"));
    let (_, toll) = read_csv(&study().join("toll.csv"));
    assert_eq!(truth.len(), toll.len());
    let misbilled: Vec<_> = truth.iter().filter(|r| r["misbilled"] == "true").collect();
    assert_eq!(misbilled.len(), 1);
    for (t, b) in truth.iter().zip(&toll) {
        assert_eq!(t["billed_vehicles"], b["billed_vehicles"]);
        let tv: f64 = t["true_vehicles"].parse().unwrap();
        let bv: f64 = t["billed_vehicles"].parse().unwrap();
        if t["misbilled"] == "true" {
            assert_relative_eq!(bv / tv, 1.10, epsilon = 1e-3);
        } else {
            assert!((bv / tv - 1.0).abs() < 0.05);
        }
    }
    // A tolled segment carries a continuous counter.
    let tolled: HashSet<&str> = toll.iter().map(|r| r["segment_id"].as_str()).collect();
    let (_, stations) = read_csv(&study().join("stations.csv"));
    assert!(stations
        .iter()
        .any(|s| s["kind"] == "continuous" && tolled.contains(s["segment_id"].as_str())));
}

#[test]
fn pattern_factors_invert_to_mean_one() {
    let (_, pats) = read_csv(&study().join("truth/patterns.csv"));
    assert!(pats.len() >= 3);
    for p in &pats {
        let inv = |k: &str, n: usize| {
            (1..=n)
                .map(|i| 1.0 / p[&format!("{k}_{i}")].parse::<f64>().unwrap())
                .sum::<f64>()
                / n as f64
        };
        assert_relative_eq!(inv("month", 12), 1.0, epsilon = 0.01);
        assert_relative_eq!(inv("weekday", 7), 1.0, epsilon = 0.01);
    }
    let (_, table) = read_csv(&study().join("truth/weekday_month_factors.csv"));
    assert_eq!(table.len(), pats.len() * 84);
}

#[test]
fn true_aadt_is_realistic_by_class() {
    let (_, segs) = read_csv(&study().join("network/segments.csv"));
    let (_, truth) = read_csv(&study().join("truth/segment_truth.csv"));
    for (s, t) in segs.iter().zip(&truth) {
        assert_eq!(s["segment_id"], t["segment_id"]);
        let aadt: f64 = t["true_aadt"].parse().unwrap();
        match s["functional_class"].as_str() {
            // The interstate carries the region's through traffic and its gateways' trips.
            "1" => assert!((10_000.0..=150_000.0).contains(&aadt), "{aadt}"),
            // Locals carry their access traffic (a few hundred) and, in town, some through
            // traffic (up to a few thousand); the generator's floor is 50.
            "7" => assert!((45.0..=6_000.0).contains(&aadt), "{aadt}"),
            _ => assert!(aadt > 0.0),
        }
        let h: f64 = t["true_heavy_share"].parse().unwrap();
        let su: f64 = t["true_single_unit_share"].parse().unwrap();
        let cb: f64 = t["true_combination_share"].parse().unwrap();
        assert_relative_eq!(h, su + cb, epsilon = 2e-5);
    }
}

#[test]
fn stations_and_rows_match_the_summary_and_the_size() {
    let (_, summary) = small();
    assert_eq!(summary.stations_continuous, 10);
    assert_eq!(summary.stations_short, 100);
    let cont = continuous_rows();
    let (_, short) = read_csv(&study().join("counts/short_counts.csv"));
    assert_eq!(summary.count_rows, (cont.len() + short.len()) as u64);
    let classified: HashSet<&str> = cont
        .iter()
        .filter(|r| !r["class_1"].is_empty())
        .map(|r| r["station_id"].as_str())
        .collect();
    assert!((2..=4).contains(&classified.len()));
    let bytes: u64 = all_files(study())
        .iter()
        .map(|f| f.metadata().unwrap().len())
        .sum();
    assert!(bytes < 3_200_000, "{bytes} bytes");
}

#[test]
fn short_gaps_are_missing_from_the_counts_and_only_there() {
    let (_, gaps) = read_csv(&study().join("truth/short_gaps.csv"));
    let (_, short) = read_csv(&study().join("counts/short_counts.csv"));
    let kinds: HashSet<&str> = gaps.iter().map(|g| g["kind"].as_str()).collect();
    assert!(kinds.contains("missed_hour"), "{kinds:?}");
    // Between 5 and 35 of the 100 counts have a gap (18 % expected).
    assert!((5..=35).contains(&gaps.len()), "{} gaps", gaps.len());
    let rows: HashSet<(&str, &str)> = short
        .iter()
        .map(|r| (r["station_id"].as_str(), r["start"].as_str()))
        .collect();
    for g in &gaps {
        let first = chrono::DateTime::parse_from_rfc3339(&g["first_missing"]).unwrap();
        let hours: i64 = g["hours"].parse().unwrap();
        let stamp = |h: i64| {
            let t = first + chrono::Duration::hours(h);
            // The count's own offset at that instant (DST never falls inside a short count).
            t.to_rfc3339_opts(chrono::SecondsFormat::Secs, false)
        };
        let id = g["station_id"].as_str();
        for h in 0..hours {
            assert!(
                !rows.contains(&(id, stamp(h).as_str())),
                "{id} {}",
                stamp(h)
            );
        }
        // Counted hours on both sides.
        assert!(
            rows.contains(&(id, stamp(-1).as_str())),
            "{id} before {}",
            stamp(0)
        );
        assert!(rows.contains(&(id, stamp(hours).as_str())), "{id} after");
    }
}

#[test]
fn faults_and_bad_rows_are_where_the_truth_says() {
    let (_, summary) = small();
    let (_, faults) = read_csv(&study().join("truth/faults.csv"));
    assert_eq!(faults.len(), summary.faults);
    let kinds: HashSet<&str> = faults.iter().map(|f| f["fault"].as_str()).collect();
    for k in ["stuck", "dead", "spike", "level_shift", "partial_day"] {
        assert!(kinds.contains(k), "no {k} fault");
    }
    let station_days = 10 * 365 * 2;
    let continuous_faults = faults
        .iter()
        .filter(|f| f["station_id"].starts_with("CC"))
        .count();
    assert!((station_days / 100..=station_days * 5 / 100).contains(&continuous_faults));

    let (_, bad) = read_csv(&study().join("truth/bad_rows.csv"));
    assert_eq!(bad.len(), 6);
    let text = std::fs::read_to_string(study().join("counts/short_counts.csv")).unwrap();
    let lines: Vec<&str> = text.lines().collect();
    for b in &bad {
        let line: usize = b["line"].parse().unwrap();
        let row = lines[line - 1];
        let cells: Vec<&str> = row.split(',').collect();
        match b["problem"].as_str() {
            "unknown_station" => assert_eq!(cells[0], "SC9999"),
            "negative_count" => assert!(cells[4].starts_with('-')),
            "fractional_count" => assert!(cells[4].contains('.')),
            "duplicate_row" => assert_eq!(row, lines[line - 2]),
            "unparseable_timestamp" => assert!(cells[2].contains("-02-30T")),
            "vehicles_not_class_sum" => {
                let sum: u32 = cells[6..].iter().map(|c| c.parse::<u32>().unwrap()).sum();
                assert_ne!(cells[4].parse::<u32>().unwrap(), sum);
            }
            other => panic!("unexpected problem {other}"),
        }
    }
}

#[test]
fn classified_rows_sum_to_vehicles() {
    let cont = continuous_rows();
    for r in cont.iter().filter(|r| !r["class_1"].is_empty()) {
        let sum: u32 = (1..=13)
            .map(|c| r[&format!("class_{c}")].parse::<u32>().unwrap())
            .sum();
        assert_eq!(r["vehicles"].parse::<u32>().unwrap(), sum);
    }
}

#[test]
fn bench_params_default_to_no_bad_rows() {
    assert!(!DemoParams::new(1, DemoSize::Bench).bad_rows);
    assert!(DemoParams::new(1, DemoSize::Large).bad_rows);
    let dir = tempfile::tempdir().unwrap();
    let p = DemoParams {
        bad_rows: false,
        ..DemoParams::new(3, DemoSize::Small)
    };
    generate_scaled(&p, Scale::TINY, dir.path()).unwrap();
    let (_, bad) = read_csv(&dir.path().join("truth/bad_rows.csv"));
    assert!(bad.is_empty());
}

#[test]
fn continuous_counts_average_to_the_true_aadt() {
    let (_, stations) = read_csv(&study().join("stations.csv"));
    let (_, truth) = read_csv(&study().join("truth/segment_truth.csv"));
    let aadt: HashMap<&str, f64> = truth
        .iter()
        .map(|t| (t["segment_id"].as_str(), t["true_aadt"].parse().unwrap()))
        .collect();
    let mut totals: HashMap<&str, f64> = HashMap::new();
    for r in continuous_rows() {
        *totals.entry(r["station_id"].as_str()).or_default() +=
            r["vehicles"].parse::<f64>().unwrap();
    }
    for st in stations.iter().filter(|s| s["kind"] == "continuous") {
        let mean_daily = totals[st["station_id"].as_str()] / 365.0;
        // Faults remove or distort a few percent of days; day noise averages out over a year.
        assert_relative_eq!(
            mean_daily,
            aadt[st["segment_id"].as_str()],
            max_relative = 0.05
        );
    }
}

#[test]
fn unsupported_year_is_an_error() {
    let dir = tempfile::tempdir().unwrap();
    let p = DemoParams {
        year: 1900,
        ..DemoParams::default()
    };
    assert!(matches!(
        generate(&p, dir.path()),
        Err(DemoError::Year { year: 1900 })
    ));
}
