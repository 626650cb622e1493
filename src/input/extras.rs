//! Reading the optional `history.csv` and `toll.csv`.

use std::path::Path;

use chrono::NaiveDate;

use super::csvfile::{cell, parse_count, show, CsvFile, Record};
use super::error::InputError;
use super::network::parse_number;
use crate::model::FileSummary;
use crate::model::RejectedRow;
use crate::model::{HistoryRecord, Network, SegmentId, TollRecord, VehicleGroup};

/// Relative name of the history file.
pub const HISTORY_FILE: &str = "history.csv";
/// Relative name of the toll file.
pub const TOLL_FILE: &str = "toll.csv";

fn open_optional(root: &Path, name: &str) -> Result<Option<CsvFile>, InputError> {
    let path = root.join(name);
    if !path.exists() {
        return Ok(None);
    }
    CsvFile::open(&path, name).map(Some)
}

fn segment_of(
    net: &Network,
    raw: Option<&[u8]>,
) -> Result<usize, (&'static str, String, &'static str)> {
    let raw = raw.ok_or(("segment_id", String::new(), "segment_id is empty"))?;
    net.segment(&SegmentId(show(raw))).ok_or((
        "segment_id",
        show(raw),
        "unknown segment (not in network/segments.csv or rejected there)",
    ))
}

/// Reads `history.csv` when present.
pub fn read_history(
    root: &Path,
    net: &Network,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
) -> Result<Vec<HistoryRecord>, InputError> {
    let Some(mut f) = open_optional(root, HISTORY_FILE)? else {
        return Ok(Vec::new());
    };
    let (c_seg, c_year, c_aadt) = (
        f.require("segment_id")?,
        f.require("year")?,
        f.require("aadt")?,
    );
    let mut out = Vec::new();
    let mut summary = FileSummary::new(HISTORY_FILE);
    let mut rec = Record::new();
    while let Some(line) = f.next_row(&mut rec, rejects, &mut summary)? {
        summary.rows += 1;
        let parsed = (|| {
            let segment = segment_of(net, cell(&rec, c_seg))?;
            let year = cell(&rec, c_year)
                .and_then(|v| std::str::from_utf8(v).ok()?.parse::<i32>().ok())
                .filter(|y| (1900..=2200).contains(y))
                .ok_or((
                    "year",
                    rec.get(c_year).map(show).unwrap_or_default(),
                    "year is not a whole year",
                ))?;
            let aadt = cell(&rec, c_aadt)
                .and_then(parse_number)
                .filter(|v| *v > 0.0)
                .ok_or((
                    "aadt",
                    rec.get(c_aadt).map(show).unwrap_or_default(),
                    "aadt is not a number > 0",
                ))?;
            Ok(HistoryRecord {
                segment,
                year,
                aadt,
            })
        })();
        match parsed {
            Ok(h) => out.push(h),
            Err((col, val, why)) => {
                rejects.push(RejectedRow::new(HISTORY_FILE, line, col, &val, why));
                summary.rejected += 1;
            }
        }
    }
    f.finish(&summary)?;
    files.push(summary);
    Ok(out)
}

fn parse_date(raw: Option<&[u8]>) -> Option<NaiveDate> {
    NaiveDate::parse_from_str(std::str::from_utf8(raw?).ok()?, "%Y-%m-%d").ok()
}

/// Reads `toll.csv` when present.
pub fn read_toll(
    root: &Path,
    net: &Network,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
) -> Result<Option<Vec<TollRecord>>, InputError> {
    let Some(mut f) = open_optional(root, TOLL_FILE)? else {
        return Ok(None);
    };
    let c_seg = f.require("segment_id")?;
    let c_from = f.require("from_date")?;
    let c_to = f.require("to_date")?;
    let c_group = f.require("vehicle_group")?;
    let c_billed = f.require("billed_vehicles")?;
    let mut out = Vec::new();
    let mut summary = FileSummary::new(TOLL_FILE);
    let mut rec = Record::new();
    while let Some(line) = f.next_row(&mut rec, rejects, &mut summary)? {
        summary.rows += 1;
        let raw = |c: usize| rec.get(c).map(show).unwrap_or_default();
        let parsed = (|| {
            let segment = segment_of(net, cell(&rec, c_seg))?;
            let from_date = parse_date(cell(&rec, c_from)).ok_or((
                "from_date",
                raw(c_from),
                "from_date is not an ISO date (YYYY-MM-DD)",
            ))?;
            let to_date = parse_date(cell(&rec, c_to)).ok_or((
                "to_date",
                raw(c_to),
                "to_date is not an ISO date (YYYY-MM-DD)",
            ))?;
            if to_date < from_date {
                return Err(("to_date", raw(c_to), "to_date is before from_date"));
            }
            let group = match cell(&rec, c_group) {
                Some(b"light") => VehicleGroup::Light,
                Some(b"heavy") => VehicleGroup::Heavy,
                Some(b"all") => VehicleGroup::All,
                _ => {
                    return Err((
                        "vehicle_group",
                        raw(c_group),
                        "vehicle_group is not `light`, `heavy` or `all`",
                    ))
                }
            };
            let billed = cell(&rec, c_billed)
                .ok_or(("billed_vehicles", String::new(), "billed_vehicles is empty"))
                .and_then(|v| {
                    parse_count(v).map_err(|e| ("billed_vehicles", show(v), e.reason()))
                })?;
            Ok(TollRecord {
                line,
                segment,
                from_date,
                to_date,
                group,
                billed_vehicles: billed as u64,
            })
        })();
        match parsed {
            Ok(t) => out.push(t),
            Err((col, val, why)) => {
                rejects.push(RejectedRow::new(TOLL_FILE, line, col, &val, why));
                summary.rejected += 1;
            }
        }
    }
    f.finish(&summary)?;
    files.push(summary);
    Ok(Some(out))
}

/// Relative name of the optional group-assignment override.
pub const ASSIGNMENT_FILE: &str = "factors/group_assignment.csv";

/// Reads `factors/group_assignment.csv` when the study has one (the table `run` writes to
/// `<out>/factors/`, edited). Bad rows are logged in `rejects`.
pub fn read_group_assignment(
    root: &Path,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
) -> Result<Option<Vec<crate::model::AssignmentRow>>, InputError> {
    let Some(mut f) = open_optional(root, ASSIGNMENT_FILE)? else {
        return Ok(None);
    };
    let c_group = f.require("factor_group")?;
    let c_route = f.optional("route");
    let c_fc = f.optional("functional_class");
    let c_area = f.optional("area");
    let mut out = Vec::new();
    let mut summary = FileSummary::new(ASSIGNMENT_FILE);
    let mut rec = Record::new();
    while let Some(line) = f.next_row(&mut rec, rejects, &mut summary)? {
        summary.rows += 1;
        let get = |c: Option<usize>| c.and_then(|c| cell(&rec, c));
        let parsed = (|| {
            let group = cell(&rec, c_group).map(show).ok_or((
                "factor_group",
                String::new(),
                "factor_group is empty",
            ))?;
            let functional_class = match get(c_fc) {
                None => None,
                Some(v) => Some(
                    std::str::from_utf8(v)
                        .ok()
                        .and_then(|t| t.parse::<u8>().ok())
                        .filter(|c| (1..=7).contains(c))
                        .ok_or(("functional_class", show(v), "functional_class is not 1..7"))?,
                ),
            };
            let area = match get(c_area) {
                None => None,
                Some(b"urban") => Some(crate::model::Area::Urban),
                Some(b"rural") => Some(crate::model::Area::Rural),
                Some(v) => return Err(("area", show(v), "area is not `urban` or `rural`")),
            };
            Ok(crate::model::AssignmentRow {
                route: get(c_route).map(show),
                functional_class,
                area,
                group,
            })
        })();
        match parsed {
            Ok(r) => out.push(r),
            Err((col, val, why)) => {
                rejects.push(RejectedRow::new(ASSIGNMENT_FILE, line, col, &val, why));
                summary.rejected += 1;
            }
        }
    }
    f.finish(&summary)?;
    files.push(summary);
    Ok(Some(out))
}
