//! Reading `stations.csv`.

use std::path::Path;

use super::csvfile::{cell, show, CsvFile, Record};
use super::error::InputError;
use crate::model::FileSummary;
use crate::model::RejectedRow;
use crate::model::{Network, SegmentId, Station, StationId, StationKind, StationList};

/// Relative name of the stations file.
pub const STATIONS_FILE: &str = "stations.csv";

/// Reads `stations.csv`.
pub fn read_stations(
    root: &Path,
    net: &Network,
    rejects: &mut Vec<RejectedRow>,
    files: &mut Vec<FileSummary>,
) -> Result<StationList, InputError> {
    let mut f = CsvFile::open(&root.join(STATIONS_FILE), STATIONS_FILE)?;
    let (c_id, c_seg, c_kind) = (
        f.require("station_id")?,
        f.require("segment_id")?,
        f.require("kind")?,
    );
    let mut list = StationList::default();
    let mut summary = FileSummary::new(STATIONS_FILE);
    let mut rec = Record::new();
    let name = f.name.clone();
    while let Some(line) = f.next_row(&mut rec, rejects, &mut summary)? {
        summary.rows += 1;
        let Some(id) = cell(&rec, c_id).map(|v| StationId(show(v))) else {
            rejects.push(RejectedRow::new(
                &name,
                line,
                "station_id",
                "",
                "station_id is empty",
            ));
            summary.rejected += 1;
            continue;
        };
        let fault = if list.index.contains_key(&id) || list.rejected.contains_key(&id) {
            Some((
                "station_id",
                id.0.clone(),
                "duplicate station_id (the first row is kept)",
            ))
        } else {
            None
        };
        let seg_raw = cell(&rec, c_seg).map(show).unwrap_or_default();
        let segment = net.segment(&SegmentId(seg_raw.clone()));
        let kind = match cell(&rec, c_kind) {
            Some(b"continuous") => Some(StationKind::Continuous),
            Some(b"short") => Some(StationKind::Short),
            _ => None,
        };
        let fault = fault.or_else(|| match (segment, kind) {
            (None, _) => Some((
                "segment_id",
                seg_raw.clone(),
                "unknown segment (not in network/segments.csv or rejected there)",
            )),
            (_, None) => Some((
                "kind",
                rec.get(c_kind).map(show).unwrap_or_default(),
                "kind is not `continuous` or `short`",
            )),
            _ => None,
        });
        match (fault, segment, kind) {
            (None, Some(segment), Some(kind)) => {
                list.index.insert(id.clone(), list.stations.len());
                list.stations.push(Station {
                    id,
                    segment_id: SegmentId(seg_raw),
                    segment,
                    kind,
                });
            }
            (Some((col, val, why)), _, _) => {
                if !list.index.contains_key(&id) {
                    list.rejected
                        .entry(id)
                        .or_insert_with(|| format!("{why} in {STATIONS_FILE} line {line}"));
                }
                rejects.push(RejectedRow::new(&name, line, col, &val, why));
                summary.rejected += 1;
            }
            _ => unreachable!("a station without fault has a segment and a kind"),
        }
    }
    f.finish(&summary)?;
    files.push(summary);
    Ok(list)
}
