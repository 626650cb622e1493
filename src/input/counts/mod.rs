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
//!
//! Files: `parse.rs` checks one row, `fold.rs` holds the overlap rule and folds a row into its
//! station-day, `parallel.rs` reads and merges byte ranges; this file drives them per file.

use std::collections::{BTreeMap, HashMap, HashSet};

use rayon::prelude::*;
use std::path::{Path, PathBuf};

use chrono::{Datelike, NaiveDate, Timelike};

mod fold;
mod parallel;
mod parse;
#[cfg(test)]
mod tests;

use super::csvfile::{
    cell, check_accounting, parse_count, quote_fault_parts, show, CsvFile, LineReader, Record,
};
use super::error::InputError;
use super::time::{parse_start, LocalStamp, Start};
use super::ReadOptions;
use crate::model::counts::{DirectionDay, MAX_DAY_HOURS, MAX_DAY_QUARTERS};
use crate::model::FileSummary;
use crate::model::RejectedRow;
use crate::model::StationList;
use crate::model::{CountStore, DayCounts, Direction, Network, StationId, CLASS_COUNT};
use crate::progress::Progress;
use fold::*;
use parallel::*;
use parse::*;

/// The counts folder.
pub const COUNTS_DIR: &str = "counts";

/// The count files of a study, sorted by name so reading order (and so which of two
/// overlapping rows is kept) does not depend on the file system.
pub fn count_files(root: &Path) -> Result<Vec<(PathBuf, String)>, InputError> {
    let dir = root.join(COUNTS_DIR);
    let entries = std::fs::read_dir(&dir).map_err(|_| InputError::MissingFile {
        path: PathBuf::from(COUNTS_DIR),
    })?;
    let mut files: Vec<(PathBuf, String)> = Vec::new();
    for e in entries {
        let e = e.map_err(|e| InputError::Unreadable {
            path: PathBuf::from(COUNTS_DIR),
            reason: e.to_string(),
        })?;
        let p = e.path();
        let n = e.file_name().to_string_lossy().into_owned();
        if !(n.ends_with(".csv") || n.ends_with(".csv.gz")) {
            continue;
        }
        let name = format!("{COUNTS_DIR}/{n}");
        // An entry named like a count file is a count file: one that cannot be opened as a
        // regular file (a folder, a broken or looping link, a device) is fatal, never skipped.
        let unreadable = |reason: String| InputError::Unreadable {
            path: PathBuf::from(&name),
            reason,
        };
        match std::fs::metadata(&p) {
            Err(e) => return Err(unreadable(e.to_string())),
            Ok(m) if m.is_dir() => return Err(unreadable("it is a folder, not a file".into())),
            Ok(m) if !m.is_file() => return Err(unreadable("it is not a regular file".into())),
            Ok(_) => {}
        }
        files.push((p, name));
    }
    files.sort_by(|a, b| a.1.cmp(&b.1));
    if files.is_empty() {
        return Err(InputError::NoCountFiles {
            path: PathBuf::from(COUNTS_DIR),
        });
    }
    Ok(files)
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
    options: &ReadOptions,
) -> Result<CountStore, InputError> {
    let split = Split {
        min_bytes: PARALLEL_MIN_BYTES,
        range_bytes: RANGE_BYTES,
        workers: rayon::current_num_threads(),
    };
    let ctx = Ctx {
        net,
        stations,
        zone: options.time_zone.as_ref(),
    };
    read_counts_split(root, &ctx, rejects, files, progress, split)
}

/// What every row check needs: the network, the stations and the study's time zone.
#[derive(Clone, Copy)]
pub(crate) struct Ctx<'a> {
    pub(crate) net: &'a Network,
    pub(crate) stations: &'a StationList,
    pub(crate) zone: Option<&'a chrono_tz::Tz>,
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
    ctx: &Ctx,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
    progress: &Progress,
    split: Split,
) -> Result<CountStore, InputError> {
    let list = count_files(root)?;
    let stations = ctx.stations;
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
        let start = bar.position();
        let done = if parallel {
            read_parallel(path, name, len, ctx, split, &bar)?
        } else {
            None
        };
        let summary = match done {
            Some(file) if absorb_check(&store, &file.store, &file.fold_keys) => {
                bar.set_position(start + len);
                absorb(&mut store, file.store);
                rejects.extend(file.rejects);
                file.summary
            }
            _ => {
                // Read again from the start: the bar goes back to where this file began.
                bar.set_position(start);
                read_one(path, name, ctx, &mut store, rejects, &bar)?
            }
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

/// Checks one record and folds it into `store`. A fold fault (overlap, offset) names the
/// start cell's text as the file has it.
fn process(
    rec: &Record,
    width: usize,
    cols: &Columns,
    ctx: &Ctx,
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
    let mut row =
        parse_row(rec, cols, ctx.net, ctx.stations, cache, ctx.zone).map_err(|f| (f, None))?;
    let key = (row.station, row.stamp.local.date());
    let later = row.later.take();
    let first = match fold(store, ctx.stations, &row) {
        Ok(()) => return Ok(()),
        Err(f) => f,
    };
    // A clock time the zone repeats: the first row read for it is the earlier reading, a
    // second one (that the earlier reading would overlap) the later reading.
    if let Some(l) = later {
        row.stamp = l;
        if fold(store, ctx.stations, &row).is_ok() {
            return Ok(());
        }
    }
    let raw = rec.get(cols.start).unwrap_or(b"").trim_ascii();
    Err(((first.0, show(raw), first.2), Some(key)))
}

fn read_one(
    path: &Path,
    name: &str,
    ctx: &Ctx,
    store: &mut CountStore,
    rejects: &mut Vec<RejectedRow>,
    bar: &crate::progress::Bar,
) -> Result<FileSummary, InputError> {
    let mut f = CsvFile::open(path, name)?;
    let cols = Columns::find(&f)?;
    let width = f.width();
    let mut summary = FileSummary::new(name);
    let used_before = store.rows_used;
    let mut rec = Record::new();
    let mut cache: Option<(Vec<u8>, Result<usize, String>)> = None;
    let mut last_bytes = 0u64;
    while let Some(next) = f.next_record(&mut rec)? {
        summary.rows += 1;
        if summary.rows.is_multiple_of(4_096) {
            // Bytes read from disk (compressed for gzip), the unit of the bar's total.
            let pos = f.file_bytes.load(std::sync::atomic::Ordering::Relaxed);
            bar.inc(pos.saturating_sub(last_bytes));
            last_bytes = pos;
        }
        let line = match next {
            Ok(line) => line,
            Err(row) => {
                rejects.push(row);
                summary.rejected += 1;
                continue;
            }
        };
        match process(&rec, width, &cols, ctx, store, &mut cache) {
            Ok(()) => store.rows_used += 1,
            Err(((col, val, why), _)) => {
                rejects.push(RejectedRow::new(name, line, col, &val, why));
                summary.rejected += 1;
            }
        }
    }
    check_accounting(
        name,
        f.data_lines(),
        &summary,
        Some(store.rows_used - used_before),
    )?;
    bar.inc(
        std::fs::metadata(path)
            .map_or(0, |m| m.len())
            .saturating_sub(last_bytes),
    );
    Ok(summary)
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
