//! Reading rules of the data contract: every bad row is logged with file, line, column and
//! reason; fatal problems exit with code 2 and write nothing. Expected values here follow
//! directly from the contract's rules (no outside numbers are involved).

use super::*;

const HEADER: &str = "station_id,direction,start,minutes,vehicles,axles\n";
const HOURLY: &str = "station_id,direction,start,minutes,vehicles\n";

/// The only alarm of a run whose one permanent counter has no usable day is the foundation
/// alarm: exit 1, and no data-loss alarm.
fn only_the_foundation_alarm(out: &Output) {
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(1), "{err}");
    assert!(
        err.contains("alarm: no permanent counter gave statistics"),
        "{err}"
    );
    assert!(!err.contains(" lost "), "{err}");
}

#[test]
fn clean_rows_are_all_used_and_only_the_missing_foundation_is_an_alarm() {
    // One day of a constant 100 veh/h: every row is read, and quality control rejects the
    // day as a flat run, so no permanent counter gives statistics.
    let s = Study::new(&format!("{HOURLY}{}", hourly_rows("C1", "fwd", 0..24, 100)));
    let out = s.run();
    only_the_foundation_alarm(&out);
    let rej = s.output_csv("rejected_rows.csv");
    assert_eq!(rej.len(), 1, "header only");
    assert_eq!(rej[0], ["file", "line", "column", "value", "reason"]);
}

/// One bad row of each kind; each must be logged at its line with the right column.
#[test]
fn each_kind_of_bad_row_is_logged_and_the_run_goes_on() {
    let rows = [
        "C1,fwd,2025-06-03T00:00:00-04:00,60,100,",     // 2 ok
        "C1,fwd,2025-06-03T00:00:00-04:00,60,100,",     // 3 duplicate
        "C1,fwd,2025-06-03T01:00:00-04:00,60,-5,",      // 4 negative
        "C1,fwd,2025-06-03T02:00:00-04:00,60,2.5,",     // 5 fractional
        "C1,fwd,2025-06-03T03:00:00-04:00,60,many,",    // 6 non-numeric
        "C1,fwd,2025-06-03T04:00:00,60,10,",            // 7 no offset
        "C1,fwd,2025-06-03T05:00:00-04:00,30,10,",      // 8 minutes
        "C1,fwd,2025-06-03T06:30:00-04:00,60,10,",      // 9 not aligned
        "ZZ,fwd,2025-06-03T07:00:00-04:00,60,10,",      // 10 unknown station
        "C1,sideways,2025-06-03T08:00:00-04:00,60,10,", // 11 direction
        "K1,rev,2025-06-03T09:00:00-04:00,60,10,",      // 12 rev on one-way
        "C1,fwd,2025-06-03T10:00:00-04:00,60,,",        // 13 nothing given
        "C1,fwd,2025-06-03T00:15:00-04:00,15,10,",      // 14 15-min inside a 60-min row
        "C1,both,2025-06-03T00:00:00-04:00,60,10,",     // 15 both overlaps fwd
        "C1,fwd,2025-06-03T11:00:00-04:00,60,10,40",    // 16 ok (vehicles and axles)
        "C1,fwd,2025-06-03T12:00:00-04:00,60,10",       // 17 too few fields
    ];
    let s = Study::new(&format!("{HEADER}{}\n", rows.join("\n")));
    let out = s.run();
    assert_eq!(out.status.code(), Some(1));
    let rej = s.output_csv("rejected_rows.csv");
    let got: Vec<(u64, &str)> = rej[1..]
        .iter()
        .map(|r| (r[1].parse().unwrap(), r[2].as_str()))
        .collect();
    let want = [
        (3, "start"),
        (4, "vehicles"),
        (5, "vehicles"),
        (6, "vehicles"),
        (7, "start"),
        (8, "minutes"),
        (9, "start"),
        (10, "station_id"),
        (11, "direction"),
        (12, "direction"),
        (13, ""),
        (14, "start"),
        (15, "start"),
        (17, ""),
    ];
    assert_eq!(got, want);
    for r in &rej[1..] {
        assert_eq!(r[0], "counts/counts.csv");
        assert!(!r[4].is_empty(), "every rejection has a reason");
    }
    assert!(rej[2][4].contains("negative"));
    assert!(rej[3][4].contains("fractional"));
    assert!(rej[4][4].contains("not a number"));
}

#[test]
fn class_rows_must_be_complete_and_agree_with_vehicles() {
    let classes = |v: [u32; 13]| {
        v.iter()
            .map(|x| x.to_string())
            .collect::<Vec<_>>()
            .join(",")
    };
    let head = (1..=13)
        .map(|c| format!("class_{c}"))
        .collect::<Vec<_>>()
        .join(",");
    let full = [1, 50, 10, 1, 2, 1, 0, 1, 3, 0, 0, 0, 0];
    let sum: u32 = full.iter().sum();
    let partial = format!("{},{}", classes(full).rsplit_once(',').unwrap().0, "");
    let text = format!(
        "station_id,direction,start,minutes,vehicles,{head}\n\
C1,fwd,2025-06-03T00:00:00-04:00,60,{sum},{c}\n\
C1,fwd,2025-06-03T01:00:00-04:00,60,,{c}\n\
C1,fwd,2025-06-03T02:00:00-04:00,60,{bad},{c}\n\
C1,fwd,2025-06-03T03:00:00-04:00,60,,{partial}\n",
        c = classes(full),
        bad = sum + 1,
    );
    let s = Study::new(&text);
    assert_eq!(s.run().status.code(), Some(1));
    let rej = s.output_csv("rejected_rows.csv");
    assert_eq!(rej.len(), 3);
    assert_eq!((rej[1][1].as_str(), rej[1][2].as_str()), ("4", "vehicles"));
    assert!(rej[1][4].contains("sum of the class columns"));
    assert_eq!((rej[2][1].as_str(), rej[2][2].as_str()), ("5", "class_13"));
    assert!(rej[2][4].contains("partly filled"));
}

#[test]
fn rows_of_a_rejected_station_carry_its_reason() {
    let s = Study::new(&format!(
        "{HOURLY}{}{}",
        hourly_rows("C1", "fwd", 0..1, 10),
        hourly_rows("C9", "fwd", 0..2, 10)
    ));
    s.write("stations.csv", &format!("{STATIONS}C9,NOPE,continuous\n"));
    s.run();
    let rej = s.output_csv("rejected_rows.csv");
    assert_eq!(rej[1][0], "stations.csv");
    assert_eq!(rej[1][2], "segment_id");
    assert_eq!(rej.len(), 4);
    assert_eq!((rej[2][1].as_str(), rej[3][1].as_str()), ("3", "4"));
    for r in &rej[2..] {
        assert!(
            r[4].starts_with("station was rejected: unknown segment"),
            "{}",
            r[4]
        );
    }
}

#[test]
fn network_and_station_rows_are_checked() {
    let s = Study::new(&format!("{HOURLY}{}", hourly_rows("C1", "fwd", 0..2, 10)));
    s.write(
        "network/nodes.csv",
        &format!("{NODES}A,11,46\nD,200,45\nE,10.03,45.0\n"),
    );
    s.write(
        "network/segments.csv",
        &format!(
            "{SEGMENTS}S1,A,B,1,3,urban,2,false,R1\nS3,C,Q,1,3,urban,2,false,\nS4,C,E,0,3,urban,2,false,\n\
S5,C,E,1,9,urban,2,false,\nS6,C,E,1,3,town,2,false,\nS7,C,E,1,3,urban,0,false,\nS8,C,E,1,3,urban,2,maybe,\n"
        ),
    );
    s.write(
        "stations.csv",
        &format!("{STATIONS}C1,S1,short\nC5,S1,weekly\n"),
    );
    s.run();
    let rej = s.output_csv("rejected_rows.csv");
    let got: Vec<(&str, &str, &str)> = rej[1..]
        .iter()
        .map(|r| (r[0].as_str(), r[1].as_str(), r[2].as_str()))
        .collect();
    assert_eq!(
        got,
        [
            ("network/nodes.csv", "5", "node_id"),
            ("network/nodes.csv", "6", "lon"),
            ("network/segments.csv", "4", "segment_id"),
            ("network/segments.csv", "5", "to_node"),
            ("network/segments.csv", "6", "length_km"),
            ("network/segments.csv", "7", "functional_class"),
            ("network/segments.csv", "8", "area"),
            ("network/segments.csv", "9", "lanes"),
            ("network/segments.csv", "10", "oneway"),
            ("stations.csv", "4", "station_id"),
            ("stations.csv", "5", "kind"),
        ]
    );
}

#[test]
fn bom_crlf_quotes_and_column_order_are_read() {
    let text = "\u{feff}minutes,\"start\",vehicles,station_id,direction,note\r\n\
60,2025-06-03T00:00:00-04:00,\"100\",C1,fwd,\"a, quoted\"\r\n\
60,2025-06-03T01:00:00-04:00,90,C1,fwd,\r\n";
    let s = Study::new(text);
    let out = s.run();
    // Both rows read (two hours only, so no counter statistics: the foundation alarm).
    only_the_foundation_alarm(&out);
    assert_eq!(s.output_csv("rejected_rows.csv").len(), 1, "header only");
}

#[test]
fn gzip_counts_read_like_their_uncompressed_twin() {
    use std::io::Write;
    let text = format!("{HOURLY}{}", hourly_rows("C1", "fwd", 0..24, 100));
    let mut gz = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::default());
    gz.write_all(text.as_bytes()).unwrap();
    let s = Study::new("");
    s.remove("counts/counts.csv");
    s.write_bytes("counts/counts.csv.gz", &gz.finish().unwrap());
    let out = s.check();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let stdout = String::from_utf8_lossy(&out.stdout);
    assert!(stdout.contains("counts/counts.csv.gz"), "{stdout}");
    assert!(stdout.contains("count rows used 24"), "{stdout}");
}

fn assert_fatal(s: &Study, needle: &str) {
    let out = s.run();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(
        err.contains(needle),
        "stderr {err:?} should name {needle:?}"
    );
    // One message (a TOML error keeps its own lines: position and caret).
    assert_eq!(
        err.matches("roadtally: error:").count(),
        1,
        "one message: {err}"
    );
    assert!(err.starts_with("roadtally: error:"), "{err}");
    assert!(!s.out().exists(), "no output on a fatal problem");
}

#[test]
fn fatal_problems_exit_2_with_one_message_and_no_output() {
    let ok = format!("{HOURLY}{}", hourly_rows("C1", "fwd", 0..2, 10));
    let s = Study::new(&ok);
    s.remove("stations.csv");
    assert_fatal(&s, "stations.csv");

    let s = Study::new(&ok);
    s.write(
        "network/segments.csv",
        "segment_id,from_node,to_node,length_km,area,lanes\nS1,A,B,1,urban,2\n",
    );
    assert_fatal(&s, "functional_class");

    let s = Study::new(&ok);
    s.write_bytes("network/nodes.csv", b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR");
    assert_fatal(&s, "network/nodes.csv");

    let s = Study::new("station_id,direction,start,minutes,vehicles\nX,fwd,bad,60,1\n");
    assert_fatal(&s, "counts");

    let s = Study::new(&ok);
    s.write(
        "network/segments.csv",
        "segment_id,from_node,to_node,length_km,functional_class,area,lanes\n",
    );
    assert_fatal(&s, "network/segments.csv");

    let s = Study::new(&ok);
    s.write("study.toml", "yeer = 2025\n");
    assert_fatal(&s, "study.toml");
}

#[test]
fn truncated_gzip_is_fatal() {
    use std::io::Write;
    let text = format!(
        "{HOURLY}{}",
        hourly_rows("C1", "fwd", 0..24, 100).repeat(50)
    );
    let mut gz = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::default());
    gz.write_all(text.as_bytes()).unwrap();
    let bytes = gz.finish().unwrap();
    let s = Study::new("");
    s.remove("counts/counts.csv");
    s.write_bytes("counts/counts.csv.gz", &bytes[..bytes.len() / 2]);
    assert_fatal(&s, "counts/counts.csv.gz");
}

/// Rows read = rows used + rows rejected, on a study with broken rows.
#[test]
fn every_row_read_is_used_or_rejected() {
    let mut text = String::from(HOURLY);
    for h in 0..24 {
        text.push_str(&format!(
            "C1,fwd,2025-06-03T{h:02}:00:00-04:00,60,{}\n",
            50 + h
        ));
        text.push_str(&format!(
            "C1,fwd,2025-06-03T{h:02}:00:00-04:00,60,{}\n",
            50 + h
        )); // duplicate
    }
    text.push_str("C1,fwd,garbage,60,1\n");
    let s = Study::new(&text);
    let out = s.check();
    let stdout = String::from_utf8_lossy(&out.stdout);
    let total = stdout.lines().find(|l| l.starts_with("total")).unwrap();
    let nums: Vec<u64> = total
        .split_whitespace()
        .skip(1)
        .map(|n| n.parse().unwrap())
        .collect();
    assert!(stdout.contains("count rows used 24"), "{stdout}");
    // network 3 + 2 rows, stations 2 rows, counts 49 rows; 25 rejected.
    assert_eq!(nums, [3 + 2 + 2 + 49, 25]);
    assert_eq!(nums[0] - nums[1], 3 + 2 + 2 + 24);
}

/// Clock changes: the spring-forward day has 23 clock hours and the fall-back day 25 (the
/// repeated 01:00 hour carries both offsets). Both are complete days, not faults.
#[test]
fn clock_change_days_are_complete_days() {
    let mut text = String::from(HOURLY);
    // 2025-03-09: 00:00 and 01:00 at -05:00, then 03:00..23:00 at -04:00 (23 rows).
    for h in (0..2).chain(3..24) {
        let off = if h < 2 { "-05:00" } else { "-04:00" };
        for dir in ["fwd", "rev"] {
            text.push_str(&format!(
                "C1,{dir},2025-03-09T{h:02}:00:00{off},60,{}\n",
                40 + h
            ));
        }
    }
    // 2025-11-02: 00:00 and 01:00 at -04:00, 01:00 again and 02:00..23:00 at -05:00 (25 rows).
    for (h, off) in [(0, "-04:00"), (1, "-04:00"), (1, "-05:00")]
        .into_iter()
        .chain((2..24).map(|h| (h, "-05:00")))
    {
        for dir in ["fwd", "rev"] {
            text.push_str(&format!(
                "C1,{dir},2025-11-02T{h:02}:00:00{off},60,{}\n",
                40 + h
            ));
        }
    }
    let s = Study::new(&text);
    // Two segments, one of them uncounted: every stage's fallback share is 1 of 1 or 2, so the
    // fallback alarm is lifted to judge the clock-change days alone.
    s.write("study.toml", "max_fallback_share = 1.0\n");
    let out = s.run();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let qc = s.output_csv("qc_log.csv");
    assert!(
        !qc.iter().any(|r| r[3] == "incomplete"),
        "no clock-change day is incomplete: {qc:?}"
    );
}

/// A study with one short count and no permanent counter still gives every segment an AADT,
/// with honestly wide intervals: the count unfactored, its neighbour from the count's level.
#[test]
fn a_study_without_permanent_counters_still_publishes_every_segment() {
    let rows: String = (0..24)
        .map(|h| {
            format!(
                "K1,both,2025-06-03T{h:02}:00:00-04:00,60,{}\n",
                50 + (h * 37) % 90
            )
        })
        .collect();
    let s = Study::new(&format!("{HOURLY}{rows}"));
    s.write("stations.csv", "station_id,segment_id,kind\nK1,S1,short\n");
    s.write("study.toml", "year = 2025\n");
    let out = s.run();
    // Published, and loudly: without a permanent counter every factor is a default.
    only_the_foundation_alarm(&out);
    let seg = s.output_csv("segment_statistics.csv");
    assert_eq!(seg.len(), 3);
    for r in &seg[1..] {
        let (a, lo, hi): (f64, f64, f64) = (
            r[1].parse().unwrap(),
            r[2].parse().unwrap(),
            r[3].parse().unwrap(),
        );
        assert!(lo < a && a < hi && hi / lo > 2.0, "wide interval {r:?}");
    }
    assert_eq!(seg[1][4], "short_count");
    assert_eq!(seg[2][4], "estimated");
    // Without a study year and without counters the run cannot choose a year: exit 2.
    s.remove("study.toml");
    std::fs::remove_dir_all(s.out()).unwrap();
    assert_fatal(&s, "year");
}

/// `bench` never deletes a folder it did not make: a folder with an unrelated file and no
/// count files is refused with a message, and the file is still there.
#[test]
fn bench_refuses_a_foreign_folder() {
    let dir = tempfile::tempdir().unwrap();
    let keep = dir.path().join("notes.txt");
    std::fs::write(&keep, "mine").unwrap();
    let out = roadtally()
        .args(["bench", "--dir"])
        .arg(dir.path())
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&out.stderr);
    assert_eq!(out.status.code(), Some(2), "{err}");
    assert!(err.contains("refusing"), "{err}");
    assert_eq!(std::fs::read_to_string(&keep).unwrap(), "mine");
}
