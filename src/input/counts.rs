//! Streaming the count files into per station-day summaries.
//!
//! Rows are never kept: each accepted row is folded into the [`DayCounts`] of its station and
//! local date, so memory grows with station-days, not with rows. The first row read for a
//! station, direction and span of time is kept; any later row covering part of that span is
//! rejected (a `both` row overlaps `fwd` and `rev` rows), as the data contract settles.

use std::collections::{BTreeMap, HashMap};
use std::path::{Path, PathBuf};

use chrono::{Datelike, NaiveDate, Timelike};

use super::csvfile::{cell, parse_count, read_error, show, CsvFile};
use super::error::InputError;
use super::rejects::RejectedRow;
use super::stations::StationList;
use super::time::{parse_rfc3339, LocalStamp};
use super::FileSummary;
use crate::model::counts::{DirectionDay, MAX_DAY_QUARTERS};
use crate::model::{DayCounts, Direction, Network, StationId, StationKind, CLASS_COUNT};
use crate::progress::Progress;

/// The counts folder.
pub const COUNTS_DIR: &str = "counts";

/// All station-days read, per station (index as in [`StationList::stations`]).
#[derive(Debug, Default)]
pub struct CountStore {
    /// Per station, its days by local date.
    pub days: Vec<BTreeMap<NaiveDate, DayCounts>>,
    /// Accepted records per (calendar year, station kind), for choosing the study year.
    pub records_by_year: BTreeMap<(i32, StationKind), u64>,
    /// Count rows folded into the store.
    pub rows_used: u64,
}

impl CountStore {
    /// The year holding most permanent-counter records (the contract's default study year).
    pub fn busiest_continuous_year(&self) -> Option<i32> {
        self.records_by_year
            .iter()
            .filter(|((_, k), _)| *k == StationKind::Continuous)
            .max_by_key(|((y, _), n)| (**n, std::cmp::Reverse(*y)))
            .map(|((y, _), _)| *y)
    }

    /// Every station-day, in station then date order.
    pub fn iter(&self) -> impl Iterator<Item = &DayCounts> {
        self.days.iter().flat_map(|m| m.values())
    }
}

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

/// Reads every count file into a [`CountStore`].
pub fn read_counts(
    root: &Path,
    net: &Network,
    stations: &StationList,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
    progress: &Progress,
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
        let summary = read_one(path, name, net, stations, &mut store, rejects, &bar)?;
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
        let line = pos.line();
        let outcome = if rec.len() != width {
            Err((
                "",
                String::new(),
                format!("row has {} fields, the header has {width}", rec.len()),
            ))
        } else {
            parse_row(&rec, &cols, net, stations, &mut cache)
                .and_then(|row| fold(store, stations, row))
        };
        match outcome {
            Ok(()) => store.rows_used += 1,
            Err((col, val, why)) => {
                rejects.push(RejectedRow::new(name, line, col, &val, why));
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
