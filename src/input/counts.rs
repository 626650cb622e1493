//! Streaming the count files into per station-day summaries.
//!
//! Rows are never kept: each accepted row is folded into the [`DayCounts`] of its station and
//! local date, so memory grows with station-days, not with rows. The first row read for a
//! station, direction and span of time is kept; any later row covering part of that span is
//! rejected (a `both` row overlaps `fwd` and `rev` rows), as the data contract settles.
//!
//! A large plain (not gzipped) file is read in byte ranges on the rayon pool: ranges start
//! right after a newline that ends a non-empty record line, each is parsed on its own into a
//! per-range store, and the ranges are merged in file order. A station-day held by two ranges
//! is merged only where that gives exactly what folding the later rows one by one would give
//! (no overlap, slot axes a whole number of hours apart, no row of the day rejected for a
//! reason that depends on earlier rows); otherwise, and whenever the file holds a quote (a
//! quoted field could hold a newline) or line ends other than `\n`, the file is read again
//! sequentially. Line numbers are the range's own plus the newlines before it, so rejected
//! rows carry the same lines and reasons either way.

use std::collections::{BTreeMap, HashMap, HashSet};

use rayon::prelude::*;
use std::path::{Path, PathBuf};

use chrono::{Datelike, NaiveDate, Timelike};

use super::csvfile::{cell, parse_count, read_error, show, CsvFile};
use super::error::InputError;
use super::time::{parse_rfc3339, LocalStamp};
use crate::model::counts::{DirectionDay, MAX_DAY_HOURS, MAX_DAY_QUARTERS};
use crate::model::FileSummary;
use crate::model::RejectedRow;
use crate::model::StationList;
use crate::model::{CountStore, DayCounts, Direction, Network, StationId, CLASS_COUNT};
use crate::progress::Progress;

/// The counts folder.
pub const COUNTS_DIR: &str = "counts";

/// The count files of a study, sorted by name so reading order (and so which of two
/// overlapping rows is kept) does not depend on the file system.
pub fn count_files(root: &Path) -> Result<Vec<(PathBuf, String)>, InputError> {
    let dir = root.join(COUNTS_DIR);
    let entries = std::fs::read_dir(&dir).map_err(|_| InputError::MissingFile {
        path: PathBuf::from(COUNTS_DIR),
    })?;
    let mut files: Vec<(PathBuf, String)> = entries
        .filter_map(|e| e.ok())
        .map(|e| e.path())
        .filter(|p| {
            let n = p.file_name().and_then(|n| n.to_str()).unwrap_or("");
            p.is_file() && (n.ends_with(".csv") || n.ends_with(".csv.gz"))
        })
        .map(|p| {
            let name = format!("{COUNTS_DIR}/{}", p.file_name().unwrap().to_string_lossy());
            (p, name)
        })
        .collect();
    files.sort_by(|a, b| a.1.cmp(&b.1));
    if files.is_empty() {
        return Err(InputError::NoCountFiles {
            path: PathBuf::from(COUNTS_DIR),
        });
    }
    Ok(files)
}

/// Column positions of a count file.
struct Columns {
    station: usize,
    direction: usize,
    start: usize,
    minutes: usize,
    vehicles: Option<usize>,
    axles: Option<usize>,
    classes: [Option<usize>; CLASS_COUNT],
}

const CLASS_NAMES: [&str; CLASS_COUNT] = [
    "class_1", "class_2", "class_3", "class_4", "class_5", "class_6", "class_7", "class_8",
    "class_9", "class_10", "class_11", "class_12", "class_13",
];

impl Columns {
    fn find(f: &CsvFile) -> Result<Columns, InputError> {
        let cols = Columns {
            station: f.require("station_id")?,
            direction: f.require("direction")?,
            start: f.require("start")?,
            minutes: f.require("minutes")?,
            vehicles: f.optional("vehicles"),
            axles: f.optional("axles"),
            classes: CLASS_NAMES.map(|c| f.optional(c)),
        };
        if cols.vehicles.is_none()
            && cols.axles.is_none()
            && cols.classes.iter().all(Option::is_none)
        {
            return Err(InputError::MissingColumn {
                path: PathBuf::from(&f.name),
                column: "vehicles (or axles, or class_1..class_13)".into(),
            });
        }
        Ok(cols)
    }
}

/// One count row after validation.
struct CountRow {
    station: usize,
    direction: Direction,
    stamp: LocalStamp,
    minutes: u32,
    vehicles: Option<u32>,
    axles: Option<u32>,
    classes: Option<[u32; CLASS_COUNT]>,
}

/// Why a row was rejected: column, value, reason.
type Fault = (&'static str, String, String);

fn fault(col: &'static str, val: &[u8], why: impl Into<String>) -> Fault {
    (col, show(val), why.into())
}

/// Plain count files at least this large are read in byte ranges on several threads.
pub const PARALLEL_MIN_BYTES: u64 = 8 << 20;
/// Target size of one byte range of a parallel read.
pub const RANGE_BYTES: u64 = 32 << 20;

/// Reads every count file into a [`CountStore`].
pub fn read_counts(
    root: &Path,
    net: &Network,
    stations: &StationList,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
    progress: &Progress,
) -> Result<CountStore, InputError> {
    let split = Split {
        min_bytes: PARALLEL_MIN_BYTES,
        range_bytes: RANGE_BYTES,
        workers: rayon::current_num_threads(),
    };
    read_counts_split(root, net, stations, rejects, files, progress, split)
}

/// When and how a plain count file is split into byte ranges read in parallel.
#[derive(Debug, Clone, Copy)]
pub(crate) struct Split {
    /// Files smaller than this are read sequentially.
    pub min_bytes: u64,
    /// Target size of one range.
    pub range_bytes: u64,
    /// Ranges parsed at once (one per worker thread); 1 or 0 means sequential.
    pub workers: usize,
}

pub(crate) fn read_counts_split(
    root: &Path,
    net: &Network,
    stations: &StationList,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
    progress: &Progress,
    split: Split,
) -> Result<CountStore, InputError> {
    let list = count_files(root)?;
    let mut store = CountStore {
        days: vec![BTreeMap::new(); stations.stations.len()],
        ..CountStore::default()
    };
    let total_bytes: u64 = list
        .iter()
        .map(|(p, _)| std::fs::metadata(p).map_or(0, |m| m.len()))
        .sum();
    let bar = progress.bytes("reading counts", total_bytes);
    for (path, name) in &list {
        let len = std::fs::metadata(path).map_or(0, |m| m.len());
        let parallel = split.workers > 1 && len >= split.min_bytes && !name.ends_with(".gz");
        let done = if parallel {
            read_parallel(path, name, len, net, stations, split)?
        } else {
            None
        };
        let summary = match done {
            Some(file) if absorb_check(&store, &file.store, &file.fold_keys) => {
                bar.inc(len);
                absorb(&mut store, file.store);
                rejects.extend(file.rejects);
                file.summary
            }
            _ => read_one(path, name, net, stations, &mut store, rejects, &bar)?,
        };
        files.push(summary);
    }
    bar.finish();
    if store.rows_used == 0 {
        return Err(InputError::NoCountRows {
            path: PathBuf::from(COUNTS_DIR),
        });
    }
    Ok(store)
}

/// Why a row was rejected, and the station-day whose state decided it (for fold faults).
type Outcome = Result<(), (Fault, Option<(usize, NaiveDate)>)>;

/// Checks one record and folds it into `store`.
fn process(
    rec: &csv::ByteRecord,
    width: usize,
    cols: &Columns,
    net: &Network,
    stations: &StationList,
    store: &mut CountStore,
    cache: &mut Option<(Vec<u8>, Result<usize, String>)>,
) -> Outcome {
    if rec.len() != width {
        return Err((
            (
                "",
                String::new(),
                format!("row has {} fields, the header has {width}", rec.len()),
            ),
            None,
        ));
    }
    let row = parse_row(rec, cols, net, stations, cache).map_err(|f| (f, None))?;
    let key = (row.station, row.stamp.local.date());
    fold(store, stations, row).map_err(|f| (f, Some(key)))
}

fn read_one(
    path: &Path,
    name: &str,
    net: &Network,
    stations: &StationList,
    store: &mut CountStore,
    rejects: &mut Vec<RejectedRow>,
    bar: &crate::progress::Bar,
) -> Result<FileSummary, InputError> {
    let mut f = CsvFile::open(path, name)?;
    let cols = Columns::find(&f)?;
    let width = f.width();
    let mut summary = FileSummary::new(name);
    let mut rec = csv::ByteRecord::new();
    let mut cache: Option<(Vec<u8>, Result<usize, String>)> = None;
    let mut last_bytes = 0u64;
    loop {
        let more = f
            .reader
            .read_byte_record(&mut rec)
            .map_err(|e| read_error(Path::new(name), e))?;
        if !more {
            break;
        }
        summary.rows += 1;
        let pos = rec.position().expect("records carry a position");
        if summary.rows.is_multiple_of(65_536) {
            bar.inc(pos.byte().saturating_sub(last_bytes));
            last_bytes = pos.byte();
        }
        match process(&rec, width, &cols, net, stations, store, &mut cache) {
            Ok(()) => store.rows_used += 1,
            Err(((col, val, why), _)) => {
                rejects.push(RejectedRow::new(name, pos.line(), col, &val, why));
                summary.rejected += 1;
            }
        }
    }
    bar.inc(
        std::fs::metadata(path)
            .map_or(0, |m| m.len())
            .saturating_sub(last_bytes),
    );
    Ok(summary)
}

/// A station-day: station index and local date.
type DayKey = (usize, NaiveDate);

/// The rows of a plain count file read in byte ranges and merged in file order.
struct FileRead {
    /// The file's station-days (indexed like [`CountStore::days`]).
    store: CountStore,
    /// Its rejected rows, in line order, with their lines in the whole file.
    rejects: Vec<RejectedRow>,
    /// Station-days on which a row was rejected for a reason that depends on the rows read
    /// before it (overlap, UTC offset); merging such a day with earlier rows is not exact.
    fold_keys: HashSet<DayKey>,
    /// Rows read and rejected.
    summary: FileSummary,
}

/// One byte range of a file, parsed on its own as if it were a whole file.
struct Part {
    store: CountStore,
    /// (line within the range, fault, station-day for faults that depend on earlier rows).
    rejects: Vec<(u64, Fault, Option<DayKey>)>,
    rows: u64,
    /// Newlines in the range (to turn its line numbers into the file's).
    newlines: u64,
}

/// Reads a plain count file in byte ranges on the rayon pool, merging the ranges in file
/// order. Ranges start after a newline that ends a non-empty record line, so each range
/// parser starts exactly where the sequential reader would start a record, and line numbers
/// are the range's own plus the newlines before it. `None` means "read it sequentially":
/// the file holds a quote (a quoted field may span a range boundary), its line ends are not
/// plain `\n`, it is too small to split, a range failed to parse, or two ranges share a
/// station-day in a way that cannot be merged exactly as the sequential reader would fold it.
/// Fatal errors of the header are returned as the sequential reader would return them.
fn read_parallel(
    path: &Path,
    name: &str,
    len: u64,
    net: &Network,
    stations: &StationList,
    split: Split,
) -> Result<Option<FileRead>, InputError> {
    let f = CsvFile::open(path, name)?;
    let cols = Columns::find(&f)?;
    let width = f.width();
    drop(f);
    let Some(bounds) = range_bounds(path, len, split.range_bytes) else {
        return Ok(None);
    };
    let ranges: Vec<(u64, u64)> = bounds.windows(2).map(|w| (w[0], w[1])).collect();
    let empty = || CountStore {
        days: vec![BTreeMap::new(); stations.stations.len()],
        ..CountStore::default()
    };
    let mut acc = FileRead {
        store: empty(),
        rejects: Vec::new(),
        fold_keys: HashSet::new(),
        summary: FileSummary::new(name),
    };
    // Lines before the first range: the header line.
    let mut line_offset = 1u64;
    for batch in ranges.chunks(split.workers.max(1)) {
        let parts: Vec<Option<Part>> = batch
            .par_iter()
            .map(|&(a, b)| parse_range(path, a, b, width, &cols, net, stations, empty()))
            .collect();
        for part in parts {
            let Some(part) = part else {
                return Ok(None);
            };
            let keys: HashSet<DayKey> = part.rejects.iter().filter_map(|r| r.2).collect();
            if !absorb_check(&acc.store, &part.store, &keys) {
                return Ok(None);
            }
            absorb(&mut acc.store, part.store);
            acc.fold_keys.extend(keys);
            acc.summary.rows += part.rows;
            acc.summary.rejected += part.rejects.len() as u64;
            for (line, (col, val, why), _) in part.rejects {
                acc.rejects
                    .push(RejectedRow::new(name, line + line_offset, col, &val, why));
            }
            line_offset += part.newlines;
        }
    }
    Ok(Some(acc))
}

/// Range boundaries `[header end, ..., len]` of a plain file, or `None` when it cannot (or
/// need not) be split: the header line is not a plain record line, or only one range results.
fn range_bounds(path: &Path, len: u64, range_bytes: u64) -> Option<Vec<u64>> {
    use std::io::{Read, Seek, SeekFrom};
    const PROBE: usize = 1 << 16;
    let mut file = std::fs::File::open(path).ok()?;
    let mut read_at = |at: u64| -> Option<Vec<u8>> {
        file.seek(SeekFrom::Start(at)).ok()?;
        let mut buf = Vec::with_capacity(PROBE);
        (&mut file).take(PROBE as u64).read_to_end(&mut buf).ok()?;
        Some(buf)
    };
    let head = read_at(0)?;
    let nl = head.iter().position(|&b| b == b'\n')?;
    if nl == 0 || head[..nl].iter().any(|&b| b == b'"' || b == b'\r') {
        return None;
    }
    let header_end = nl as u64 + 1;
    let body = len.saturating_sub(header_end);
    let n = body.div_ceil(range_bytes.max(1));
    let mut bounds = vec![header_end];
    for i in 1..n {
        let target = header_end + body * i / n;
        // A boundary b: byte b-1 is `\n` and byte b-2 is neither `\n` nor `\r`, so the line
        // before b is a non-empty record ending in a plain newline.
        let from = target.max(*bounds.last()? + 2) - 2;
        let chunk = read_at(from)?;
        let hit = (2..chunk.len())
            .find(|&k| chunk[k - 1] == b'\n' && chunk[k - 2] != b'\n' && chunk[k - 2] != b'\r');
        if let Some(k) = hit {
            let b = from + k as u64;
            if b < len && b > *bounds.last()? {
                bounds.push(b);
            }
        }
    }
    bounds.push(len);
    (bounds.len() > 2).then_some(bounds)
}

/// Passes bytes through, noting any quote.
struct Scan<R> {
    inner: R,
    quote: bool,
}

impl<R: std::io::Read> std::io::Read for Scan<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.quote |= buf[..n].contains(&b'"');
        Ok(n)
    }
}

/// Parses bytes `a..b` of a file into `store`; `None` when the range holds a quote or fails.
#[allow(clippy::too_many_arguments)]
fn parse_range(
    path: &Path,
    a: u64,
    b: u64,
    width: usize,
    cols: &Columns,
    net: &Network,
    stations: &StationList,
    mut store: CountStore,
) -> Option<Part> {
    use std::io::{Read, Seek, SeekFrom};
    let mut file = std::fs::File::open(path).ok()?;
    file.seek(SeekFrom::Start(a)).ok()?;
    let scan = Scan {
        inner: file.take(b - a),
        quote: false,
    };
    let mut reader = csv::ReaderBuilder::new()
        .has_headers(false)
        .flexible(true)
        .buffer_capacity(1 << 20)
        .from_reader(scan);
    let mut rec = csv::ByteRecord::new();
    let mut cache: Option<(Vec<u8>, Result<usize, String>)> = None;
    let mut rejects = Vec::new();
    let mut rows = 0u64;
    while reader.read_byte_record(&mut rec).ok()? {
        rows += 1;
        let line = rec.position().expect("records carry a position").line();
        match process(&rec, width, cols, net, stations, &mut store, &mut cache) {
            Ok(()) => store.rows_used += 1,
            Err((fault, key)) => rejects.push((line, fault, key)),
        }
    }
    // The parser counts every `\n` it consumes, starting from line 1, and it has consumed
    // the whole range.
    let newlines = reader.position().line() - 1;
    if reader.into_inner().quote {
        return None;
    }
    Some(Part {
        store,
        rejects,
        rows,
        newlines,
    })
}

/// Whether `later` (read after `earlier`) can be merged into it exactly as folding its rows
/// one by one would: every shared station-day must be mergeable by [`merge_day_check`] and
/// carry no row rejected for a reason that depends on earlier rows.
fn absorb_check(earlier: &CountStore, later: &CountStore, fold_keys: &HashSet<DayKey>) -> bool {
    earlier
        .days
        .iter()
        .zip(&later.days)
        .enumerate()
        .all(|(si, (e, l))| {
            e.is_empty()
                || l.iter().all(|(date, b)| match e.get(date) {
                    None => true,
                    Some(a) => !fold_keys.contains(&(si, *date)) && merge_day_check(a, b),
                })
        })
}

/// Merges `later` into `earlier` (after [`absorb_check`]).
fn absorb(earlier: &mut CountStore, later: CountStore) {
    for (e, l) in earlier.days.iter_mut().zip(later.days) {
        if e.is_empty() {
            *e = l;
            continue;
        }
        for (date, b) in l {
            match e.entry(date) {
                std::collections::btree_map::Entry::Vacant(v) => {
                    v.insert(b);
                }
                std::collections::btree_map::Entry::Occupied(mut o) => merge_day(o.get_mut(), b),
            }
        }
    }
    for (k, n) in later.records_by_year {
        *earlier.records_by_year.entry(k).or_insert(0) += n;
    }
    earlier.rows_used += later.rows_used;
}

/// Quarter and hour shift from `b`'s slot axis to `a`'s, when it is a whole number of hours.
fn day_shift(a: &DayCounts, b: &DayCounts) -> Option<(i64, i64)> {
    let diff = b.anchor_utc_min - a.anchor_utc_min;
    (diff % 60 == 0).then_some((diff / 15, diff / 60))
}

/// A quarter mask moved by `q` slots; `None` when a slot would leave the day's axis.
fn shift_mask(m: u128, q: i64) -> Option<u128> {
    if m == 0 {
        return Some(0);
    }
    let top = 127 - m.leading_zeros() as i64;
    let bottom = m.trailing_zeros() as i64;
    if bottom + q < 0 || top + q >= MAX_DAY_QUARTERS as i64 {
        return None;
    }
    Some(if q >= 0 { m << q } else { m >> -q })
}

/// Whether day `b`, whose rows come after those of `a`, merges exactly: its slot axis is a
/// whole number of hours from `a`'s, all its quarters fit `a`'s axis, and none of its records
/// overlaps one of `a` (which the sequential reader would have rejected).
fn merge_day_check(a: &DayCounts, b: &DayCounts) -> bool {
    let Some((q, _)) = day_shift(a, b) else {
        return false;
    };
    Direction::ALL.iter().all(|&d| match b.dir(d) {
        None => true,
        Some(bd) => match shift_mask(bd.covered, q) {
            None => false,
            Some(m) => conflicting(d)
                .iter()
                .all(|c| a.dir(*c).is_none_or(|ad| ad.covered & m == 0)),
        },
    })
}

/// Merges day `b` into `a` (after [`merge_day_check`]): the same result as folding `b`'s rows
/// into `a` in order.
fn merge_day(a: &mut DayCounts, b: DayCounts) {
    let (q, h) = day_shift(a, &b).expect("checked");
    let mv = |m: u128| shift_mask(m, q).expect("checked");
    let (eq, lq) = (
        (b.earliest.0 as i64 + q) as usize,
        (b.latest.0 as i64 + q) as usize,
    );
    if eq < a.earliest.0 {
        a.earliest = (eq, b.earliest.1);
    }
    if lq >= a.latest.0 {
        a.latest = (lq, b.latest.1);
    }
    for (k, bd) in b.dirs.into_iter().enumerate() {
        let Some(bd) = bd else { continue };
        let ad: &mut DirectionDay = a.dirs[k].get_or_insert_with(Default::default);
        ad.covered |= mv(bd.covered);
        ad.vehicle_quarters |= mv(bd.vehicle_quarters);
        ad.axle_quarters |= mv(bd.axle_quarters);
        ad.class_quarters |= mv(bd.class_quarters);
        ad.fine_quarters |= mv(bd.fine_quarters);
        for hb in 0..MAX_DAY_HOURS {
            let ha = hb as i64 + h;
            if !(0..MAX_DAY_HOURS as i64).contains(&ha) {
                continue;
            }
            let ha = ha as usize;
            ad.vehicles[ha] = ad.vehicles[ha].saturating_add(bd.vehicles[hb]);
            ad.axles[ha] = ad.axles[ha].saturating_add(bd.axles[hb]);
            ad.heavy[ha] = ad.heavy[ha].saturating_add(bd.heavy[hb]);
            ad.peak_quarter[ha] = ad.peak_quarter[ha].max(bd.peak_quarter[hb]);
        }
        for (x, y) in ad.classes.iter_mut().zip(bd.classes) {
            *x += y;
        }
        ad.vehicles_with_axles += bd.vehicles_with_axles;
        ad.axles_with_vehicles += bd.axles_with_vehicles;
        ad.records += bd.records;
    }
}

fn lookup_station(raw: &[u8], stations: &StationList) -> Result<usize, String> {
    let id = StationId(show(raw));
    if let Some(&i) = stations.index.get(&id) {
        return Ok(i);
    }
    Err(match stations.rejected.get(&id) {
        Some(why) => format!("station was rejected: {why}"),
        None => "unknown station (not in stations.csv)".to_string(),
    })
}

fn parse_row(
    rec: &csv::ByteRecord,
    cols: &Columns,
    net: &Network,
    stations: &StationList,
    cache: &mut Option<(Vec<u8>, Result<usize, String>)>,
) -> Result<CountRow, Fault> {
    let sid =
        cell(rec, cols.station).ok_or_else(|| fault("station_id", b"", "station_id is empty"))?;
    let station = match cache {
        Some((k, v)) if k.as_slice() == sid => v.clone(),
        _ => {
            let v = lookup_station(sid, stations);
            *cache = Some((sid.to_vec(), v.clone()));
            v
        }
    }
    .map_err(|why| fault("station_id", sid, why))?;
    let dir_raw = rec.get(cols.direction).unwrap_or(b"").trim_ascii();
    let direction = std::str::from_utf8(dir_raw)
        .ok()
        .and_then(Direction::parse)
        .ok_or_else(|| {
            fault(
                "direction",
                dir_raw,
                "direction is not `fwd`, `rev` or `both`",
            )
        })?;
    let seg = &net.segments[stations.stations[station].segment];
    if seg.oneway && direction == Direction::Rev {
        return Err(fault(
            "direction",
            dir_raw,
            "`rev` record on a one-way segment",
        ));
    }
    let start_raw = rec.get(cols.start).unwrap_or(b"").trim_ascii();
    let stamp = parse_rfc3339(start_raw).ok_or_else(|| {
        fault(
            "start",
            start_raw,
            "start is not an RFC 3339 timestamp with a UTC offset",
        )
    })?;
    let min_raw = rec.get(cols.minutes).unwrap_or(b"").trim_ascii();
    let minutes = match min_raw {
        b"15" => 15,
        b"60" => 60,
        _ => return Err(fault("minutes", min_raw, "minutes is not 15 or 60")),
    };
    if stamp.seconds() != 0 || stamp.local.minute() % minutes != 0 {
        return Err(fault(
            "start",
            start_raw,
            format!("start is not aligned to its {minutes}-minute interval on the local clock"),
        ));
    }
    let count = |c: Option<usize>, name: &'static str| -> Result<Option<u32>, Fault> {
        match c.and_then(|i| cell(rec, i)) {
            None => Ok(None),
            Some(v) => parse_count(v)
                .map(Some)
                .map_err(|e| fault(name, v, e.reason())),
        }
    };
    let vehicles = count(cols.vehicles, "vehicles")?;
    let axles = count(cols.axles, "axles")?;
    let mut classes = [0u32; CLASS_COUNT];
    let mut given = 0;
    let mut first_empty = None;
    for (k, c) in cols.classes.iter().enumerate() {
        match count(*c, CLASS_NAMES[k])? {
            Some(v) => {
                classes[k] = v;
                given += 1;
            }
            None => {
                first_empty.get_or_insert(k);
            }
        }
    }
    let classes = match given {
        0 => None,
        CLASS_COUNT => Some(classes),
        _ => {
            let k = first_empty.expect("some class is empty");
            return Err(fault(
                CLASS_NAMES[k],
                b"",
                format!("class columns partly filled ({given} of 13 given; all or none)"),
            ));
        }
    };
    let vehicles = match (vehicles, classes) {
        (Some(v), Some(c)) => {
            let sum: u64 = c.iter().map(|&x| x as u64).sum();
            if sum != v as u64 {
                return Err(fault(
                    "vehicles",
                    v.to_string().as_bytes(),
                    format!("vehicles differ from the sum of the class columns ({v} vs {sum})"),
                ));
            }
            Some(v)
        }
        (None, Some(c)) => {
            let sum: u64 = c.iter().map(|&x| x as u64).sum();
            Some(
                u32::try_from(sum)
                    .map_err(|_| fault("vehicles", b"", "class sum does not fit in 32 bits"))?,
            )
        }
        (v, None) => v,
    };
    if vehicles.is_none() && axles.is_none() {
        return Err(fault(
            "",
            b"",
            "row gives none of vehicles, axles or class counts",
        ));
    }
    Ok(CountRow {
        station,
        direction,
        stamp,
        minutes,
        vehicles,
        axles,
        classes,
    })
}

/// Directions whose records a record of direction `d` must not overlap.
fn conflicting(d: Direction) -> &'static [Direction] {
    match d {
        Direction::Fwd => &[Direction::Fwd, Direction::Both],
        Direction::Rev => &[Direction::Rev, Direction::Both],
        Direction::Both => &Direction::ALL,
    }
}

fn fold(store: &mut CountStore, stations: &StationList, row: CountRow) -> Result<(), Fault> {
    let date = row.stamp.local.date();
    let days = &mut store.days[row.station];
    match days.entry(date) {
        std::collections::btree_map::Entry::Occupied(mut e) => fold_into(e.get_mut(), &row)?,
        std::collections::btree_map::Entry::Vacant(e) => {
            // A day is only created by a row that lands in it, so no day is ever empty.
            let mut fresh = DayCounts::new(row.station, date, row.stamp.offset_min);
            fold_into(&mut fresh, &row)?;
            e.insert(fresh);
        }
    }
    count_year(store, stations, &row);
    Ok(())
}

fn count_year(store: &mut CountStore, stations: &StationList, row: &CountRow) {
    let kind = stations.stations[row.station].kind;
    *store
        .records_by_year
        .entry((row.stamp.local.date().year(), kind))
        .or_insert(0) += 1;
}

fn fold_into(day: &mut DayCounts, row: &CountRow) -> Result<(), Fault> {
    let rel = row.stamp.utc_minutes() - day.anchor_utc_min;
    let n = (row.minutes / 15) as usize;
    if rel < 0 || rel % 15 != 0 || rel as usize / 15 + n > MAX_DAY_QUARTERS {
        return Err((
            "start",
            row.stamp.local.to_string(),
            "UTC offset does not fit the other records of this local day".into(),
        ));
    }
    let q = rel as usize / 15;
    let mask = ((1u128 << n) - 1) << q;
    for d in conflicting(row.direction) {
        if day.dir(*d).is_some_and(|dd| dd.covered & mask != 0) {
            return Err((
                "start",
                row.stamp.local.to_string(),
                format!(
                    "overlaps a record read earlier for this station ({} {})",
                    d.as_str(),
                    if *d == row.direction {
                        "same direction"
                    } else {
                        "direction"
                    }
                ),
            ));
        }
    }
    if q < day.earliest.0 {
        day.earliest = (q, row.stamp.offset_min);
    }
    if q >= day.latest.0 {
        day.latest = (q, row.stamp.offset_min);
    }
    let dd: &mut DirectionDay =
        day.dirs[row.direction.index()].get_or_insert_with(Default::default);
    let h = q / 4;
    dd.covered |= mask;
    dd.records += 1;
    if n == 1 {
        dd.fine_quarters |= mask;
    }
    if let Some(v) = row.vehicles {
        dd.vehicle_quarters |= mask;
        dd.vehicles[h] = dd.vehicles[h].saturating_add(v);
        if n == 1 {
            dd.peak_quarter[h] = dd.peak_quarter[h].max(v);
        }
    }
    if let Some(a) = row.axles {
        dd.axle_quarters |= mask;
        dd.axles[h] = dd.axles[h].saturating_add(a);
        if let Some(v) = row.vehicles {
            dd.vehicles_with_axles += v as u64;
            dd.axles_with_vehicles += a as u64;
        }
    }
    if let Some(c) = row.classes {
        dd.class_quarters |= mask;
        for (k, v) in c.iter().enumerate() {
            dd.classes[k] += *v as u64;
        }
        let heavy: u32 = c[3..].iter().fold(0u32, |a, &b| a.saturating_add(b));
        dd.heavy[h] = dd.heavy[h].saturating_add(heavy);
    }
    Ok(())
}

/// Station index lookups by id, for callers outside the reader.
pub fn station_lookup(stations: &StationList) -> HashMap<&str, usize> {
    stations
        .stations
        .iter()
        .enumerate()
        .map(|(i, s)| (s.id.as_str(), i))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::demo::{generate_scaled, DemoParams, DemoSize, Scale};
    use crate::input::{network, stations};

    /// A tiny generated study with plain (not gzipped) count files, edited by `edit`
    /// (which gets the continuous counts file's text and returns the new text).
    fn study(edit: impl FnOnce(String) -> String) -> tempfile::TempDir {
        let dir = tempfile::tempdir().unwrap();
        let scale = Scale {
            gzip_continuous: false,
            ..Scale::TINY
        };
        generate_scaled(&DemoParams::new(3, DemoSize::Small), scale, dir.path()).unwrap();
        let path = continuous_file(dir.path());
        let text = std::fs::read_to_string(&path).unwrap();
        std::fs::write(&path, edit(text)).unwrap();
        dir
    }

    fn continuous_file(root: &Path) -> PathBuf {
        count_files(root)
            .unwrap()
            .into_iter()
            .find(|(_, n)| n.contains("continuous"))
            .expect("a continuous counts file")
            .0
    }

    /// The store (as text), rejected rows and file summaries of reading `root` with `split`.
    fn read(root: &Path, split: Split) -> (String, Vec<RejectedRow>, Vec<FileSummary>) {
        let (mut rejects, mut files) = (Vec::new(), Vec::new());
        let net = network::read_network(root, &mut rejects, &mut files).unwrap();
        let st = stations::read_stations(root, &net, &mut rejects, &mut files).unwrap();
        let store = read_counts_split(
            root,
            &net,
            &st,
            &mut rejects,
            &mut files,
            &Progress::hidden(),
            split,
        )
        .unwrap();
        (format!("{store:?}"), rejects, files)
    }

    const SEQUENTIAL: Split = Split {
        min_bytes: u64::MAX,
        range_bytes: RANGE_BYTES,
        workers: 1,
    };

    fn parallel(range_bytes: u64) -> Split {
        Split {
            min_bytes: 0,
            range_bytes,
            workers: 2,
        }
    }

    /// Whether the continuous file is read in ranges (rather than falling back).
    fn splits(root: &Path, range_bytes: u64) -> bool {
        let (mut rejects, mut files) = (Vec::new(), Vec::new());
        let net = network::read_network(root, &mut rejects, &mut files).unwrap();
        let st = stations::read_stations(root, &net, &mut rejects, &mut files).unwrap();
        let path = continuous_file(root);
        let len = std::fs::metadata(&path).unwrap().len();
        read_parallel(&path, "x", len, &net, &st, parallel(range_bytes))
            .unwrap()
            .is_some()
    }

    fn assert_same(root: &Path, ranges: &[u64]) {
        let seq = read(root, SEQUENTIAL);
        for &r in ranges {
            let par = read(root, parallel(r));
            assert_eq!(seq.1, par.1, "rejected rows, ranges of {r} bytes");
            assert_eq!(seq.2, par.2, "file summaries, ranges of {r} bytes");
            assert!(seq.0 == par.0, "store differs, ranges of {r} bytes");
        }
    }

    #[test]
    fn ranges_give_the_sequential_result_on_a_generated_study() {
        let dir = study(|t| t);
        assert!(splits(dir.path(), 997));
        assert_same(dir.path(), &[997, 4099, 65_536, 1 << 20]);
    }

    #[test]
    fn rows_of_a_day_read_later_merge_exactly() {
        // Move a block of rows (the middle of some station-days) to the end of the file, and
        // scatter blank lines: later, non-overlapping rows of days other ranges already hold.
        let dir = study(|t| {
            let mut lines: Vec<&str> = t.lines().collect();
            let moved: Vec<&str> = lines.drain(500..700).collect();
            lines.extend(moved);
            let mut out = String::new();
            for (i, l) in lines.iter().enumerate() {
                out.push_str(l);
                out.push('\n');
                if i % 97 == 5 {
                    out.push('\n');
                }
            }
            out
        });
        assert!(splits(dir.path(), 2003));
        assert_same(dir.path(), &[997, 2003, 8191]);
    }

    #[test]
    fn overlaps_and_offset_clashes_across_ranges_keep_the_first_row() {
        let dir = study(|t| {
            let lines: Vec<&str> = t.lines().collect();
            let mut out = t.clone();
            // Exact duplicates of early rows, a `both` row over them, another UTC offset.
            for l in &lines[1..40] {
                out.push_str(l);
                out.push('\n');
            }
            for l in &lines[300..310] {
                out.push_str(
                    &l.replacen(",fwd,", ",both,", 1)
                        .replacen(",rev,", ",both,", 1),
                );
                out.push('\n');
                out.push_str(
                    &l.replacen("-05:00", "+01:00", 1)
                        .replacen("-04:00", "+01:00", 1),
                );
                out.push('\n');
            }
            out
        });
        let seq = read(dir.path(), SEQUENTIAL);
        assert!(seq.1.iter().any(|r| r.reason.starts_with("overlaps")));
        assert_same(dir.path(), &[997, 4099, 65_536]);
    }

    #[test]
    fn quotes_and_crlf_fall_back_to_the_sequential_reader() {
        let quoted = study(|mut t| {
            t.push_str("\"C\nX\",fwd,2025-01-01T00:00:00-05:00,60,3\n");
            t
        });
        assert!(!splits(quoted.path(), 997));
        assert_same(quoted.path(), &[997, 4099]);
        let crlf = study(|t| t.replace('\n', "\r\n"));
        assert!(!splits(crlf.path(), 997));
        assert_same(crlf.path(), &[997]);
    }
}
