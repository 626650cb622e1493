//! Mutated studies: a small valid study's files are damaged at random (bytes flipped, quotes
//! inserted and removed, files truncated mid-line, invalid UTF-8 and UTF-16, huge fields,
//! lines duplicated, deleted and swapped, files emptied, removed or gzip-compressed and then
//! damaged), and every run must keep the data contract:
//!
//! - no panic;
//! - exit code `2` leaves no output folder and no temporary folder, and its message names
//!   what it could not read; `0` and `1` leave the whole output set, nothing more;
//! - rows are accounted for exactly, per file: the manifest's rows read equal the file's data
//!   lines (non-blank lines after the header, counted here independently of the reader), its
//!   rejected rows equal the file's entries in rejected_rows.csv, each at a distinct line of
//!   the file, and the count rows used plus rejected equal the count rows read;
//! - every input file of the study is in the manifest (none skipped).
//!
//! The run is the library call the binary makes ([`roadtally::output::run::run_study`]); a
//! sample of cases is also run through the binary, which must give the same exit code and
//! the same tables. Cases: `ROADTALLY_MUTATION_CASES` (default 2,000), seed:
//! `ROADTALLY_MUTATION_SEED` (default 13); proptest shrinks a failing case to a small one.

use std::collections::{BTreeMap, BTreeSet};
use std::io::{Read, Write};
use std::path::Path;

use proptest::prelude::*;
use proptest::test_runner::{Config, RngAlgorithm, TestCaseError, TestRng, TestRunner};
use roadtally::output::run::{exit_code, run_study, RunError};

/// The study files a mutation may pick, the count files twice (they hold most rows).
const TARGETS: &[&str] = &[
    "counts/permanent.csv",
    "counts/permanent.csv",
    "counts/short.csv",
    "counts/short.csv",
    "network/nodes.csv",
    "network/segments.csv",
    "stations.csv",
    "history.csv",
    "toll.csv",
    "factors/group_assignment.csv",
    "factors/lane_distribution.csv",
    "study.toml",
];

/// One damage to one file; `at` and `n` are scaled to the file's size or line count.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
enum Kind {
    FlipByte,
    InsertQuote,
    RemoveQuote,
    QuoteField,
    DeleteByte,
    Truncate,
    InvalidUtf8,
    Utf16,
    HugeField,
    DuplicateLine,
    DeleteLine,
    SwapLines,
    BlankLines,
    Crlf,
    Bom,
    NoFinalNewline,
    Empty,
    Remove,
    Gzip,
}

const KINDS: &[Kind] = &[
    Kind::FlipByte,
    Kind::FlipByte,
    Kind::InsertQuote,
    Kind::InsertQuote,
    Kind::RemoveQuote,
    Kind::QuoteField,
    Kind::DeleteByte,
    Kind::Truncate,
    Kind::Truncate,
    Kind::InvalidUtf8,
    Kind::Utf16,
    Kind::HugeField,
    Kind::DuplicateLine,
    Kind::DuplicateLine,
    Kind::DeleteLine,
    Kind::DeleteLine,
    Kind::SwapLines,
    Kind::BlankLines,
    Kind::Crlf,
    Kind::Bom,
    Kind::NoFinalNewline,
    Kind::Empty,
    Kind::Remove,
    Kind::Gzip,
];

#[derive(Debug, Clone)]
struct Mutation {
    target: usize,
    kind: Kind,
    at: u32,
    n: u32,
    byte: u8,
}

fn mutation() -> impl Strategy<Value = Mutation> {
    (
        0..TARGETS.len(),
        proptest::sample::select(KINDS),
        any::<u32>(),
        0u32..1000,
        any::<u8>(),
    )
        .prop_map(|(target, kind, at, n, byte)| Mutation {
            target,
            kind,
            at,
            n,
            byte,
        })
}

/// Hourly share of the day's traffic, a weekday shape (invented).
const SHAPE: [f64; 24] = [
    0.2, 0.1, 0.1, 0.1, 0.2, 0.5, 1.2, 2.0, 1.8, 1.3, 1.2, 1.3, 1.4, 1.3, 1.3, 1.5, 1.9, 2.0, 1.5,
    1.0, 0.8, 0.6, 0.4, 0.3,
];

/// The valid study: four nodes, three segments (one uncounted), a permanent counter with a
/// week of hourly counts in both directions (June 2025; study.toml asks for one month), a
/// 48-hour classified short count, history, one toll row, a factor-group assignment and the
/// shipped lane-distribution table. It runs with exit code 0.
fn base_study() -> BTreeMap<String, Vec<u8>> {
    let mut f = BTreeMap::new();
    let mut put = |rel: &str, text: String| {
        f.insert(rel.to_string(), text.into_bytes());
    };
    put(
        "study.toml",
        // Three segments: one fallback is a third of the network, so the fallback alarm is
        // off; the alarms tested here are data loss and the missing foundation.
        "year = 2025\nmax_fallback_share = 1.0\n\n[continuous.sufficiency]\nrequired_months = 1\n"
            .into(),
    );
    put(
        "network/nodes.csv",
        "node_id,lon,lat\nA,10.000,45.000\nB,10.010,45.000\nC,10.020,45.000\nD,10.030,45.001\n"
            .into(),
    );
    put(
        "network/segments.csv",
        "segment_id,from_node,to_node,length_km,functional_class,area,lanes,oneway,route\n\
         S1,A,B,0.80,3,urban,2,false,R1\nS2,B,C,0.80,3,urban,2,false,R1\n\
         S3,C,D,0.80,3,urban,2,false,R1\n"
            .into(),
    );
    put(
        "stations.csv",
        "station_id,segment_id,kind\nC1,S1,continuous\nK1,S2,short\n".into(),
    );
    let mut perm = String::from("station_id,direction,start,minutes,vehicles\n");
    for d in 2..=8 {
        for (h, s) in SHAPE.iter().enumerate() {
            for (dir, k) in [("fwd", 1.0), ("rev", 0.9)] {
                let v = (40.0 * s * k).round() as u32 + d;
                perm.push_str(&format!(
                    "C1,{dir},2025-06-{d:02}T{h:02}:00:00-04:00,60,{v}\n"
                ));
            }
        }
    }
    put("counts/permanent.csv", perm);
    let mut short = String::from("station_id,direction,start,minutes");
    for c in 1..=13 {
        short.push_str(&format!(",class_{c}"));
    }
    short.push('\n');
    for d in [10, 11] {
        for (h, s) in SHAPE.iter().enumerate() {
            for dir in ["fwd", "rev"] {
                let v = (30.0 * s).round() as u32;
                let mut classes = [0u32; 13];
                classes[1] = v.saturating_sub(4);
                classes[2] = v.min(2);
                classes[4] = u32::from(v >= 3);
                classes[8] = u32::from(v >= 4);
                let cells: Vec<String> = classes.iter().map(u32::to_string).collect();
                short.push_str(&format!(
                    "K1,{dir},2025-06-{d:02}T{h:02}:00:00-04:00,60,{}\n",
                    cells.join(",")
                ));
            }
        }
    }
    put("counts/short.csv", short);
    put(
        "history.csv",
        "segment_id,year,aadt\nS1,2023,1400\nS1,2024,1450\nS2,2024,1100\n".into(),
    );
    put(
        "toll.csv",
        "segment_id,from_date,to_date,vehicle_group,billed_vehicles\n\
         S1,2025-06-02,2025-06-08,all,9000\n"
            .into(),
    );
    put(
        "factors/group_assignment.csv",
        "route,functional_class,area,factor_group\n,3,urban,arterial_urban\n\
         ,3,rural,arterial_rural\nR1,,urban,arterial_urban\n"
            .into(),
    );
    put(
        "factors/lane_distribution.csv",
        include_str!("../factors/lane_distribution.csv").into(),
    );
    f
}

/// Start offsets of the lines of `b` (each line with its `\n`).
fn line_starts(b: &[u8]) -> Vec<usize> {
    let mut s = vec![0];
    s.extend(
        (0..b.len())
            .filter(|&i| b[i] == b'\n' && i + 1 < b.len())
            .map(|i| i + 1),
    );
    s
}

/// The line ranges of `b`.
fn lines(b: &[u8]) -> Vec<std::ops::Range<usize>> {
    let s = line_starts(b);
    (0..s.len())
        .map(|i| s[i]..s.get(i + 1).copied().unwrap_or(b.len()))
        .filter(|r| !r.is_empty())
        .collect()
}

fn gzip(b: &[u8]) -> Vec<u8> {
    let mut e = flate2::write::GzEncoder::new(Vec::new(), flate2::Compression::fast());
    e.write_all(b).unwrap();
    e.finish().unwrap()
}

/// Applies `m` to the study (`rel` -> bytes); a file may be renamed (gzip) or removed.
fn apply(files: &mut BTreeMap<String, Vec<u8>>, m: &Mutation) {
    let base = TARGETS[m.target];
    let rel = if files.contains_key(base) {
        base.to_string()
    } else if files.contains_key(&format!("{base}.gz")) {
        format!("{base}.gz")
    } else {
        return;
    };
    if m.kind == Kind::Remove {
        files.remove(&rel);
        return;
    }
    if m.kind == Kind::Gzip {
        if rel.starts_with("counts/") && !rel.ends_with(".gz") {
            let b = files.remove(&rel).unwrap();
            files.insert(format!("{rel}.gz"), gzip(&b));
        }
        return;
    }
    let b = files.get_mut(&rel).unwrap();
    let len = b.len();
    let pos = if len == 0 {
        0
    } else {
        m.at as usize % (len + 1)
    };
    let ls = lines(b);
    let line = |k: u32| ls.get(k as usize % ls.len().max(1)).cloned();
    match m.kind {
        Kind::FlipByte => {
            if len > 0 {
                let p = pos.min(len - 1);
                b[p] ^= m.byte.max(1);
            }
        }
        Kind::InsertQuote => b.insert(pos, b'"'),
        Kind::RemoveQuote => {
            if let Some(i) = b.iter().position(|&c| c == b'"') {
                b.remove(i);
            }
        }
        Kind::QuoteField => {
            // Quote the field that starts after the comma at or after `pos` (a valid change).
            if let Some(i) = b[pos..]
                .iter()
                .position(|&c| c == b',')
                .map(|i| pos + i + 1)
            {
                let end = b[i..]
                    .iter()
                    .position(|&c| c == b',' || c == b'\n' || c == b'\r')
                    .map_or(len, |j| i + j);
                b.insert(end, b'"');
                b.insert(i, b'"');
            }
        }
        Kind::DeleteByte => {
            if len > 0 {
                b.remove(pos.min(len - 1));
            }
        }
        Kind::Truncate => b.truncate(pos),
        Kind::InvalidUtf8 => {
            let seqs: [&[u8]; 5] = [b"\xFF", b"\xC3", b"\xE9", b"\xC3\x28", b"\xED\xA0\x80"];
            let s = seqs[m.byte as usize % seqs.len()];
            b.splice(pos..pos, s.iter().copied());
        }
        Kind::Utf16 => {
            let text = String::from_utf8_lossy(b).into_owned();
            let mut out = vec![0xFF, 0xFE];
            out.extend(text.encode_utf16().flat_map(u16::to_le_bytes));
            *b = out;
        }
        Kind::HugeField => {
            let c = if m.byte.is_multiple_of(2) { b'x' } else { b'9' };
            let size = 65_536 + m.n as usize * 1000;
            b.splice(pos..pos, std::iter::repeat_n(c, size));
        }
        Kind::DuplicateLine => {
            if let Some(r) = line(m.at) {
                let copy: Vec<u8> = b[r.clone()].to_vec();
                let copies = 1 + m.n as usize % 4;
                let mut add = Vec::new();
                for _ in 0..copies {
                    add.extend_from_slice(&copy);
                    if !copy.ends_with(b"\n") {
                        add.push(b'\n');
                    }
                }
                b.splice(r.end..r.end, add);
            }
        }
        Kind::DeleteLine => {
            if let Some(r) = line(m.at) {
                b.drain(r);
            }
        }
        Kind::SwapLines => {
            if let (Some(r1), Some(r2)) = (line(m.at), line(m.n)) {
                let (r1, r2) = if r1.start <= r2.start {
                    (r1, r2)
                } else {
                    (r2, r1)
                };
                if r1.end <= r2.start {
                    let mut a = b[r1.clone()].to_vec();
                    let mut c = b[r2.clone()].to_vec();
                    if !c.ends_with(b"\n") {
                        c.push(b'\n');
                        a.pop();
                    }
                    let mid = b[r1.end..r2.start].to_vec();
                    let tail = b[r2.end..].to_vec();
                    b.truncate(r1.start);
                    b.extend(c);
                    b.extend(mid);
                    b.extend(a);
                    b.extend(tail);
                }
            }
        }
        Kind::BlankLines => {
            let at = line(m.at).map_or(0, |r| r.start);
            b.splice(at..at, b"\n\r\n".iter().copied());
        }
        Kind::Crlf => {
            let mut out = Vec::with_capacity(len + len / 20);
            for &c in b.iter() {
                if c == b'\n' {
                    out.push(b'\r');
                }
                out.push(c);
            }
            *b = out;
        }
        Kind::Bom => {
            b.splice(0..0, *b"\xEF\xBB\xBF");
        }
        Kind::NoFinalNewline => {
            while b.last() == Some(&b'\n') {
                b.pop();
            }
        }
        Kind::Empty => b.clear(),
        Kind::Remove | Kind::Gzip => unreachable!(),
    }
}

/// Data lines of a CSV file's bytes as the contract defines them, counted here on their own:
/// non-blank lines (a line of only `\r` is blank) after the first non-blank line, the header.
/// `None` when a gzip file cannot be decompressed to its end.
fn data_lines(rel: &str, bytes: &[u8]) -> Option<u64> {
    let plain;
    let bytes = if rel.ends_with(".gz") {
        let mut out = Vec::new();
        flate2::read::MultiGzDecoder::new(bytes)
            .read_to_end(&mut out)
            .ok()?;
        plain = out;
        &plain[..]
    } else {
        bytes
    };
    let non_blank = bytes
        .split(|&c| c == b'\n')
        .map(|l| l.strip_suffix(b"\r").unwrap_or(l))
        .filter(|l| !l.is_empty())
        .count() as u64;
    Some(non_blank.saturating_sub(1))
}

/// Every file under `dir`, relative, `/`-separated.
fn tree(dir: &Path) -> BTreeSet<String> {
    let mut out = BTreeSet::new();
    let mut stack = vec![dir.to_path_buf()];
    while let Some(d) = stack.pop() {
        for e in std::fs::read_dir(&d).unwrap().flatten() {
            let p = e.path();
            if p.is_dir() {
                stack.push(p);
            } else {
                let rel = p
                    .strip_prefix(dir)
                    .unwrap()
                    .to_string_lossy()
                    .replace('\\', "/");
                out.insert(rel);
            }
        }
    }
    out
}

/// A fresh temporary folder, in memory (`/dev/shm`) where the system has one: a case writes
/// some thirty files and removes them again, and on a disk that is most of its cost.
fn scratch_dir() -> tempfile::TempDir {
    let shm = Path::new("/dev/shm");
    if shm.is_dir() {
        if let Ok(d) = tempfile::Builder::new()
            .prefix("roadtally-mutation")
            .tempdir_in(shm)
        {
            return d;
        }
    }
    tempfile::tempdir().expect("a temporary folder")
}

/// What one case ran into, for the closing tally.
#[derive(Debug, Default)]
struct Tally {
    by_code: [u64; 3],
    rows_rejected: u64,
    cli_checked: u64,
    fatal_reasons: BTreeMap<String, u64>,
}

fn check(cond: bool, what: impl FnOnce() -> String) -> Result<(), TestCaseError> {
    if cond {
        Ok(())
    } else {
        Err(TestCaseError::fail(what()))
    }
}

/// Runs one mutated study and checks the contract; `cli` also runs it through the binary.
fn run_case(plan: &[Mutation], cli: bool, tally: &mut Tally) -> Result<(), TestCaseError> {
    let mut files = base_study();
    for m in plan {
        apply(&mut files, m);
    }
    let dir = scratch_dir();
    let study = dir.path().join("study");
    for (rel, bytes) in &files {
        let p = study.join(rel);
        std::fs::create_dir_all(p.parent().unwrap()).unwrap();
        std::fs::write(p, bytes).unwrap();
    }
    std::fs::create_dir_all(study.join("counts")).unwrap();
    let out = dir.path().join("out");
    let result = run_study(&study, &out, None, true);
    let code = exit_code(&result);
    tally.by_code[code as usize] += 1;
    if cli {
        tally.cli_checked += 1;
        let out2 = dir.path().join("out-cli");
        let o = assert_cmd::Command::cargo_bin("roadtally")
            .unwrap()
            .args(["run", "--quiet", "--out"])
            .arg(&out2)
            .arg(&study)
            .output()
            .unwrap();
        check(o.status.code() == Some(i32::from(code)), || {
            format!(
                "the binary exits {:?}, the library call {code}: {}",
                o.status.code(),
                String::from_utf8_lossy(&o.stderr)
            )
        })?;
        if code < 2 {
            for t in [
                "segment_statistics.csv",
                "rejected_rows.csv",
                "run_manifest.json",
            ] {
                let (a, b) = (std::fs::read(out.join(t)), std::fs::read(out2.join(t)));
                check(a.unwrap() == b.unwrap(), || {
                    format!("{t} differs from the binary's")
                })?;
            }
        }
    }
    let outcome = match result {
        Err(e) => {
            check(!out.exists(), || format!("exit 2 ({e}) but {out:?} exists"))?;
            let left = tree(dir.path());
            check(left.iter().all(|p| p.starts_with("study/")), || {
                format!("exit 2 left files beside the study: {left:?}")
            })?;
            let msg = e.to_string();
            let named = match &e {
                RunError::Input(_) => {
                    msg.contains("study.toml")
                        || msg.contains("study folder")
                        || TARGETS.iter().any(|t| msg.contains(t))
                        || msg.contains("counts")
                }
                _ => true,
            };
            check(named, || format!("the message names no file: {msg}"))?;
            let root = dir.path().to_string_lossy().into_owned();
            check(
                !matches!(e, RunError::Input(_)) || !msg.contains(&root),
                || format!("the message names a file by its full path, not in the study: {msg}"),
            )?;
            let short: String = msg
                .split([':', ','])
                .next()
                .unwrap_or("")
                .chars()
                .take(40)
                .collect();
            *tally.fatal_reasons.entry(short).or_default() += 1;
            return Ok(());
        }
        Ok(o) => o,
    };
    // The whole output set and nothing else.
    let written = tree(&out);
    let manifest: serde_json::Value =
        serde_json::from_slice(&std::fs::read(out.join("run_manifest.json")).unwrap()).unwrap();
    let mut listed: BTreeSet<String> = manifest["outputs"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| v.as_str().unwrap().to_string())
        .collect();
    listed.insert("run_manifest.json".into());
    check(written == listed, || {
        format!("written {written:?} but the manifest lists {listed:?}")
    })?;
    let has_toll = files.contains_key("toll.csv");
    for own in roadtally::output::place::OWN_FILES {
        let toll = own.starts_with("toll_");
        let expected = !toll || has_toll;
        check(written.contains(*own) == expected, || {
            format!(
                "{own}: written {}, expected {expected}",
                written.contains(*own)
            )
        })?;
    }
    // Every input file is in the manifest, with its rows accounted for.
    let inputs: BTreeMap<String, (u64, u64)> = manifest["inputs"]
        .as_array()
        .unwrap()
        .iter()
        .map(|v| {
            (
                v["file"].as_str().unwrap().to_string(),
                (v["rows"].as_u64().unwrap(), v["rejected"].as_u64().unwrap()),
            )
        })
        .collect();
    let csv_inputs: BTreeSet<String> = files
        .keys()
        .filter(|k| k.as_str() != "study.toml")
        .cloned()
        .collect();
    let in_manifest: BTreeSet<String> = inputs.keys().cloned().collect();
    check(csv_inputs == in_manifest, || {
        format!("study files {csv_inputs:?}, manifest inputs {in_manifest:?}")
    })?;
    let mut rej = csv::Reader::from_path(out.join("rejected_rows.csv")).unwrap();
    let mut lines_rejected: BTreeMap<String, Vec<u64>> = BTreeMap::new();
    for r in rej.records() {
        let r = r.unwrap();
        lines_rejected
            .entry(r[0].to_string())
            .or_default()
            .push(r[1].parse().unwrap());
    }
    let mut count_used = 0;
    for (rel, (rows, rejected)) in &inputs {
        let lines = data_lines(rel, &files[rel]);
        check(lines == Some(*rows), || {
            format!("{rel}: {rows} rows read, {lines:?} data lines")
        })?;
        let logged = lines_rejected.remove(rel).unwrap_or_default();
        check(logged.len() as u64 == *rejected, || {
            format!(
                "{rel}: {rejected} rejected, {} in rejected_rows.csv",
                logged.len()
            )
        })?;
        let distinct: BTreeSet<u64> = logged.iter().copied().collect();
        check(distinct.len() == logged.len(), || {
            format!("{rel}: a line is rejected twice: {logged:?}")
        })?;
        if rel.starts_with("counts/") {
            count_used += rows - rejected;
        }
        tally.rows_rejected += rejected;
    }
    check(lines_rejected.is_empty(), || {
        format!("rejected rows of files not read: {lines_rejected:?}")
    })?;
    check(outcome.report.check.count_rows_used == count_used, || {
        format!(
            "count rows used {}, read less rejected {count_used}",
            outcome.report.check.count_rows_used
        )
    })?;
    check(code == 1 || outcome.alarms.is_empty(), || {
        "exit 0 with alarms".into()
    })?;
    // The data-loss alarm agrees with the manifest's tallies.
    let share = outcome.config.settings.max_rejected_share;
    for (rel, (rows, rejected)) in &inputs {
        let lost = *rejected > 0 && *rejected as f64 > share * (*rows).max(1) as f64;
        let named = outcome
            .alarms
            .iter()
            .any(|a| a.starts_with(&format!("{rel} lost ")));
        check(lost == named, || {
            format!(
                "{rel}: {rejected} of {rows} rejected, alarms {:?}",
                outcome.alarms
            )
        })?;
    }
    // Every accepted segment has a row with a finite AADT inside its 95 % interval, unless
    // no count reached any segment: then every figure is empty and an alarm says so.
    let seg = csv::Reader::from_path(out.join("segment_statistics.csv"))
        .unwrap()
        .records()
        .map(|r| r.unwrap())
        .collect::<Vec<_>>();
    check(seg.len() == outcome.report.check.segments, || {
        format!(
            "{} segment rows for {} segments",
            seg.len(),
            outcome.report.check.segments
        )
    })?;
    let nothing_counted = seg.iter().all(|r| &r[4] == "estimated");
    let said = outcome
        .alarms
        .iter()
        .any(|a| a.starts_with("no count gives an AADT for any segment"));
    check(nothing_counted == said, || {
        format!(
            "no segment counted: {nothing_counted}, alarms {:?}",
            outcome.alarms
        )
    })?;
    for r in seg.iter().filter(|_| !nothing_counted) {
        let num = |i: usize| r[i].parse::<f64>().ok().filter(|v| v.is_finite());
        let (a, lo, hi) = (num(1), num(2), num(3));
        check(
            matches!((a, lo, hi), (Some(a), Some(lo), Some(hi)) if 0.0 <= lo && lo <= a && a <= hi),
            || format!("segment row without a sound AADT and interval: {r:?}"),
        )?;
    }
    Ok(())
}

fn env_number(name: &str, default: u64) -> u64 {
    std::env::var(name)
        .ok()
        .map(|v| {
            v.parse()
                .unwrap_or_else(|_| panic!("{name}={v} is not a number"))
        })
        .unwrap_or(default)
}

/// The unmutated study is valid and complete: exit 0, every row used, the binary agrees.
#[test]
fn the_base_study_runs_clean() {
    let mut tally = Tally::default();
    run_case(&[], true, &mut tally).unwrap();
    assert_eq!(tally.by_code, [1, 0, 0]);
    assert_eq!(tally.rows_rejected, 0);
}

/// Runs `cases` mutated studies from `key`'s random stream; the tally and the result.
fn run_stream(cases: u32, key: [u8; 32]) -> (Tally, u64, Result<(), String>) {
    let config = Config {
        cases,
        failure_persistence: None,
        max_shrink_iters: 500,
        ..Config::default()
    };
    let mut runner =
        TestRunner::new_with_rng(config, TestRng::from_seed(RngAlgorithm::ChaCha, &key));
    let tally = std::cell::RefCell::new(Tally::default());
    let case = std::cell::Cell::new(0u64);
    let result = runner.run(&proptest::collection::vec(mutation(), 1..=3), |plan| {
        let k = case.get();
        case.set(k + 1);
        run_case(&plan, k.is_multiple_of(100), &mut tally.borrow_mut())
    });
    (
        tally.into_inner(),
        case.get(),
        result.map_err(|e| e.to_string()),
    )
}

/// The property: `ROADTALLY_MUTATION_CASES` mutated studies (default 2,000), each of one to
/// three mutations, on two threads with one seeded stream each (so the cases are the same on
/// every run and machine).
#[test]
fn mutated_studies_keep_the_contract() {
    let cases = env_number("ROADTALLY_MUTATION_CASES", 2000) as u32;
    let seed = env_number("ROADTALLY_MUTATION_SEED", 13);
    let started = std::time::Instant::now();
    let streams: Vec<_> = (0..2u8)
        .map(|t| {
            let mut key = [0u8; 32];
            key[..8].copy_from_slice(&seed.to_le_bytes());
            key[8] = t;
            let n = cases / 2 + u32::from(t == 0) * (cases % 2);
            // Each stream runs on its own one-thread rayon pool: the stages' parallel loops
            // then run inline instead of waking (and spinning) a pool per call, which on a
            // machine whose pool is wider than its CPU quota cost more system time than the
            // runs themselves. Files under 8 MiB are read sequentially either way.
            std::thread::spawn(move || {
                let pool = rayon::ThreadPoolBuilder::new()
                    .num_threads(1)
                    .build()
                    .expect("a one-thread pool");
                pool.install(|| run_stream(n, key))
            })
        })
        .collect();
    let mut total = Tally::default();
    let (mut runs, mut failures) = (0, Vec::new());
    for s in streams {
        let (t, n, r) = s.join().expect("stream thread");
        runs += n;
        for k in 0..3 {
            total.by_code[k] += t.by_code[k];
        }
        total.rows_rejected += t.rows_rejected;
        total.cli_checked += t.cli_checked;
        for (m, c) in t.fatal_reasons {
            *total.fatal_reasons.entry(m).or_default() += c;
        }
        if let Err(e) = r {
            failures.push(e);
        }
    }
    eprintln!(
        "mutated studies: {runs} runs of {cases} cases (seed {seed}) in {:.1} s; exit 0/1/2: {:?}; \
         rows rejected {}; {} also through the binary; exit 2 by file: {:?}",
        started.elapsed().as_secs_f64(),
        total.by_code,
        total.rows_rejected,
        total.cli_checked,
        total.fatal_reasons
    );
    assert!(failures.is_empty(), "{}", failures.join("\n"));
    assert_eq!(total.by_code.iter().sum::<u64>(), runs);
}

/// Cases the property found, kept: a study whose surviving count rows all fall to quality
/// control or to a rejected station published every segment with empty figures and only
/// the data-loss alarms; the alarm that no count reached any segment is now raised too.
#[test]
fn found_cases_stay_fixed() {
    let m = |target, kind, at, byte| Mutation {
        target,
        kind,
        at,
        n: 0,
        byte,
    };
    let plans = [
        // A node id swallowed by a huge field (two segments lost), the permanent counts
        // truncated to one row.
        vec![
            m(4, Kind::HugeField, 679_382_850, 0),
            m(0, Kind::Truncate, 1_123_775_063, 0),
        ],
        // A segment row's id damaged (its counter's rows rejected), the short count
        // truncated to one row.
        vec![
            m(5, Kind::FlipByte, 2_983_881_709, 32),
            m(2, Kind::Truncate, 489_569_740, 0),
        ],
    ];
    for plan in &plans {
        let mut tally = Tally::default();
        run_case(plan, true, &mut tally).unwrap_or_else(|e| panic!("{plan:?}: {e}"));
        assert_eq!(tally.by_code, [0, 1, 0], "{plan:?}");
    }
}
