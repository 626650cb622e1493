//! Reading a study folder: the only code that reads input files.
//!
//! Every bad row is logged as a [`RejectedRow`] with file, line, column and reason, and the
//! run goes on; only the problems the data contract calls fatal return an [`InputError`].

pub mod counts;
pub mod csvfile;
pub mod error;
pub mod extras;
pub mod network;
pub mod rejects;
pub mod stations;
pub mod time;

use std::path::{Path, PathBuf};

pub use counts::CountStore;
pub use error::InputError;
pub use extras::{HistoryRecord, TollRecord, VehicleGroup};
pub use rejects::RejectedRow;
pub use stations::StationList;

use crate::model::Network;
use crate::progress::Progress;

/// Name of the optional settings file.
pub const SETTINGS_FILE: &str = "study.toml";

/// Rows read and rejected in one input file.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FileSummary {
    /// File, relative to the study folder.
    pub file: String,
    /// Data rows read (header excluded).
    pub rows: u64,
    /// Rows rejected.
    pub rejected: u64,
}

impl FileSummary {
    /// An empty summary for `file`.
    pub fn new(file: &str) -> FileSummary {
        FileSummary {
            file: file.to_string(),
            rows: 0,
            rejected: 0,
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
    /// Every row that was not used.
    pub rejected: Vec<RejectedRow>,
    /// Per-file row tallies, in reading order.
    pub files: Vec<FileSummary>,
}

impl StudyData {
    /// Rows read over every file.
    pub fn rows_read(&self) -> u64 {
        self.files.iter().map(|f| f.rows).sum()
    }
}

/// The text of `study.toml`, when the study has one.
pub fn read_settings_text(root: &Path) -> Result<Option<String>, InputError> {
    let path = root.join(SETTINGS_FILE);
    if !path.exists() {
        return Ok(None);
    }
    std::fs::read_to_string(&path)
        .map(Some)
        .map_err(|e| InputError::Unreadable {
            path: PathBuf::from(SETTINGS_FILE),
            reason: e.to_string(),
        })
}

/// Reads the whole study folder.
pub fn read_study(root: &Path, progress: &Progress) -> Result<StudyData, InputError> {
    if !root.is_dir() {
        return Err(InputError::MissingFile {
            path: root.to_path_buf(),
        });
    }
    let mut rejected = Vec::new();
    let mut files = Vec::new();
    let network = network::read_network(root, &mut rejected, &mut files)?;
    let stations = stations::read_stations(root, &network, &mut rejected, &mut files)?;
    let history = extras::read_history(root, &network, &mut rejected, &mut files)?;
    let toll = extras::read_toll(root, &network, &mut rejected, &mut files)?;
    let counts = counts::read_counts(
        root,
        &network,
        &stations,
        &mut rejected,
        &mut files,
        progress,
    )?;
    Ok(StudyData {
        root: root.to_path_buf(),
        network,
        stations,
        counts,
        history,
        toll,
        rejected,
        files,
    })
}

/// SHA-256 of an input file (hex), for the run manifest; empty when it cannot be read.
pub fn sha256_of(root: &Path, rel: &str) -> String {
    use sha2::{Digest, Sha256};
    let Ok(mut f) = std::fs::File::open(root.join(rel)) else {
        return String::new();
    };
    let mut h = Sha256::new();
    if std::io::copy(&mut f, &mut h).is_err() {
        return String::new();
    }
    h.finalize().iter().map(|b| format!("{b:02x}")).collect()
}

/// The design tables of a study: its own `factors/` copies where present, else the shipped
/// defaults (AASHTO 1993 lane distribution, truck factors, HCM defaults).
pub fn read_design_tables(root: &Path) -> Result<crate::design::stage::DesignTables, InputError> {
    use crate::design::{load_hcm_defaults, load_lane_distribution, load_truck_factors};
    let mut t = crate::design::stage::DesignTables::default();
    let bad = |name: &str, e: crate::design::DesignError| InputError::BadConfig {
        path: PathBuf::from(format!("factors/{name}")),
        reason: e.to_string(),
    };
    let p = root.join("factors/lane_distribution.csv");
    if p.exists() {
        t.lanes = load_lane_distribution(&p).map_err(|e| bad("lane_distribution.csv", e))?;
    }
    let p = root.join("factors/truck_factors.csv");
    if p.exists() {
        t.trucks = load_truck_factors(&p).map_err(|e| bad("truck_factors.csv", e))?;
    }
    let p = root.join("factors/hcm_defaults.csv");
    if p.exists() {
        t.hcm = load_hcm_defaults(&p).map_err(|e| bad("hcm_defaults.csv", e))?;
    }
    Ok(t)
}
