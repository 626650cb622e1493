//! Reading a large plain count file in byte ranges on the rayon pool and merging the ranges
//! in file order (see the module docs of `counts` for when a merge is exact).

use super::*;

/// A station-day: station index and local date.
pub(super) type DayKey = (usize, NaiveDate);

/// The rows of a plain count file read in byte ranges and merged in file order.
pub(super) struct FileRead {
    /// The file's station-days (indexed like [`CountStore::days`]).
    pub(super) store: CountStore,
    /// Its rejected rows, in line order, with their lines in the whole file.
    pub(super) rejects: Vec<RejectedRow>,
    /// Station-days on which a row was rejected for a reason that depends on the rows read
    /// before it (overlap, UTC offset); merging such a day with earlier rows is not exact.
    pub(super) fold_keys: HashSet<DayKey>,
    /// Rows read and rejected.
    pub(super) summary: FileSummary,
}

/// One byte range of a file, parsed on its own as if it were a whole file.
pub(super) struct Part {
    pub(super) store: CountStore,
    /// (line within the range, column, value, reason, station-day for faults that depend on
    /// earlier rows).
    pub(super) rejects: Vec<(u64, String, String, String, Option<DayKey>)>,
    pub(super) rows: u64,
    /// Lines in the range (to turn its line numbers into the file's).
    pub(super) newlines: u64,
    /// Blank lines in the range.
    pub(super) blank: u64,
}

/// Reads a plain count file in byte ranges on the rayon pool, merging the ranges in file
/// order. Ranges start after a newline that ends a non-empty record line, so each range
/// parser starts exactly where the sequential reader would start a record, and line numbers
/// are the range's own plus the newlines before it. A record is one line (see `csvfile`), so
/// quotes and line ends need no special care. `None` means "read it sequentially": the file
/// is too small to split, a range could not be read, or two ranges share a station-day in a
/// way that cannot be merged exactly as the sequential reader would fold it.
/// Fatal errors of the header are returned as the sequential reader would return them.
pub(super) fn read_parallel(
    path: &Path,
    name: &str,
    len: u64,
    ctx: &Ctx,
    split: Split,
    bar: &crate::progress::Bar,
) -> Result<Option<FileRead>, InputError> {
    let f = CsvFile::open(path, name)?;
    let cols = Columns::find(&f)?;
    let width = f.width();
    let header = f.header.clone();
    drop(f);
    let stations = ctx.stations;
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
    let mut data_lines = 0u64;
    for batch in ranges.chunks(split.workers.max(1)) {
        let parts: Vec<Option<Part>> = batch
            .par_iter()
            .map(|&(a, b)| parse_range(path, a, b, width, &header, &cols, ctx, empty()))
            .collect();
        for part in parts {
            let Some(part) = part else {
                return Ok(None);
            };
            let keys: HashSet<DayKey> = part.rejects.iter().filter_map(|r| r.4).collect();
            if !absorb_check(&acc.store, &part.store, &keys) {
                return Ok(None);
            }
            absorb(&mut acc.store, part.store);
            acc.fold_keys.extend(keys);
            acc.summary.rows += part.rows;
            acc.summary.rejected += part.rejects.len() as u64;
            for (line, col, val, why, _) in part.rejects {
                acc.rejects
                    .push(RejectedRow::new(name, line + line_offset, &col, &val, why));
            }
            line_offset += part.newlines;
            data_lines += part.newlines - part.blank;
        }
        // The bar advances batch by batch, so a large file moves it while it is read.
        bar.inc(batch.iter().map(|(a, b)| b - a).sum());
    }
    check_accounting(name, data_lines, &acc.summary, Some(acc.store.rows_used))?;
    Ok(Some(acc))
}

/// Range boundaries `[header end, ..., len]` of a plain file, or `None` when it cannot (or
/// need not) be split: the header line is not a plain record line, or only one range results.
pub(super) fn range_bounds(path: &Path, len: u64, range_bytes: u64) -> Option<Vec<u64>> {
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
    // The header must be the first line (a blank first line moves it).
    if head[..nl]
        .strip_suffix(b"\r")
        .unwrap_or(&head[..nl])
        .is_empty()
    {
        return None;
    }
    let header_end = nl as u64 + 1;
    let body = len.saturating_sub(header_end);
    let n = body.div_ceil(range_bytes.max(1));
    let mut bounds = vec![header_end];
    for i in 1..n {
        let target = header_end + body * i / n;
        // A boundary b: byte b-1 is `\n`, so b starts a line.
        let from = target.max(*bounds.last()? + 1) - 1;
        let chunk = read_at(from)?;
        let hit = (1..chunk.len()).find(|&k| chunk[k - 1] == b'\n');
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

/// Parses bytes `a..b` of a file into `store`; `None` when the range cannot be read.
#[allow(clippy::too_many_arguments)]
pub(super) fn parse_range(
    path: &Path,
    a: u64,
    b: u64,
    width: usize,
    header: &[String],
    cols: &Columns,
    ctx: &Ctx,
    mut store: CountStore,
) -> Option<Part> {
    use std::io::{Seek, SeekFrom};
    let mut file = std::fs::File::open(path).ok()?;
    file.seek(SeekFrom::Start(a)).ok()?;
    let mut lines = LineReader::new(std::io::BufReader::with_capacity(
        1 << 20,
        std::io::Read::take(file, b - a),
    ));
    let mut rec = Record::new();
    let mut cache: Option<(Vec<u8>, Result<usize, String>)> = None;
    let mut rejects = Vec::new();
    let mut rows = 0u64;
    while let Some((line, parsed)) = lines.next_record(&mut rec).ok()? {
        rows += 1;
        if let Err(q) = parsed {
            let (col, val, why) = quote_fault_parts(header, lines.last_line(), &q);
            rejects.push((line, col, val, why, None));
            continue;
        }
        match process(&rec, width, cols, ctx, &mut store, &mut cache) {
            Ok(()) => store.rows_used += 1,
            Err(((col, val, why), key)) => rejects.push((line, col.to_string(), val, why, key)),
        }
    }
    Some(Part {
        store,
        rejects,
        rows,
        newlines: lines.line,
        blank: lines.blank,
    })
}

/// Whether `later` (read after `earlier`) can be merged into it exactly as folding its rows
/// one by one would: every shared station-day must be mergeable by [`merge_day_check`] and
/// carry no row rejected for a reason that depends on earlier rows.
pub(super) fn absorb_check(
    earlier: &CountStore,
    later: &CountStore,
    fold_keys: &HashSet<DayKey>,
) -> bool {
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
pub(super) fn absorb(earlier: &mut CountStore, later: CountStore) {
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
pub(super) fn day_shift(a: &DayCounts, b: &DayCounts) -> Option<(i64, i64)> {
    let diff = b.anchor_utc_min - a.anchor_utc_min;
    (diff % 60 == 0).then_some((diff / 15, diff / 60))
}

/// A quarter mask moved by `q` slots; `None` when a slot would leave the day's axis.
pub(super) fn shift_mask(m: u128, q: i64) -> Option<u128> {
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
pub(super) fn merge_day_check(a: &DayCounts, b: &DayCounts) -> bool {
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
pub(super) fn merge_day(a: &mut DayCounts, b: DayCounts) {
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
