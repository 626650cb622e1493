//! Everything read from a study folder, as the stages receive it.

use std::collections::BTreeMap;
use std::path::PathBuf;

use chrono::NaiveDate;

use super::design_tables::DesignTables;
use super::{
    AssignmentRow, DayCounts, HistoryRecord, Network, RejectedRow, StationKind, StationList,
    TollRecord,
};

/// Rows read and rejected in one input file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FileSummary {
    /// File, relative to the study folder.
    pub file: String,
    /// Data rows read (header excluded).
    pub rows: u64,
    /// Rows rejected.
    pub rejected: u64,
    /// SHA-256 of the file's bytes (hex), taken when the study was read; empty until then.
    pub sha256: String,
}

impl FileSummary {
    /// An empty summary for `file`.
    pub fn new(file: &str) -> FileSummary {
        FileSummary {
            file: file.to_string(),
            rows: 0,
            rejected: 0,
            sha256: String::new(),
        }
    }
}

/// Everything read from a study folder.
#[derive(Debug)]
pub struct StudyData {
    /// The study folder.
    pub root: PathBuf,
    /// The road network.
    pub network: Network,
    /// Stations, and the ids of rejected ones.
    pub stations: StationList,
    /// Count summaries per station-day.
    pub counts: CountStore,
    /// Published AADT of earlier years.
    pub history: Vec<HistoryRecord>,
    /// Billing rows, when the study has a toll.csv.
    pub toll: Option<Vec<TollRecord>>,
    /// The study's own group assignment (`factors/group_assignment.csv`), when it has one.
    pub assignment: Option<Vec<AssignmentRow>>,
    /// Design tables: the study's `factors/` copies where present, else the shipped defaults.
    pub design_tables: DesignTables,
    /// SHA-256 of `study.toml` (hex), when the study has one.
    pub settings_sha256: Option<String>,
    /// Every row that was not used.
    pub rejected: Vec<RejectedRow>,
    /// Per-file row tallies and checksums, in reading order: every file read, `factors/`
    /// tables included.
    pub files: Vec<FileSummary>,
}

impl StudyData {
    /// Rows read over every file.
    pub fn rows_read(&self) -> u64 {
        self.files.iter().map(|f| f.rows).sum()
    }
}

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
