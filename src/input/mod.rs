//! Reading a study folder: the only code that reads input files.
//!
//! Every bad row is logged as a [`RejectedRow`](crate::model::RejectedRow) with file, line, column and reason, and the
//! run goes on; only the problems the data contract calls fatal return an [`InputError`].

pub mod counts;
pub mod csvfile;
pub mod design_tables;
pub mod error;
pub mod extras;
pub mod network;
pub mod rejects;
pub mod stations;
pub mod time;

use std::path::{Path, PathBuf};

pub use design_tables::read_design_tables;
pub use error::InputError;

use crate::model::StudyData;
use crate::progress::Progress;

/// Name of the optional settings file.
pub const SETTINGS_FILE: &str = "study.toml";

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

/// How to read what the files leave open.
#[derive(Debug, Clone, Default)]
pub struct ReadOptions {
    /// The zone of count timestamps written without a UTC offset (IANA name in
    /// study.toml's `time_zone`); `None`: such timestamps are rejected.
    pub time_zone: Option<chrono_tz::Tz>,
}

/// Reads the whole study folder with default [`ReadOptions`].
pub fn read_study(root: &Path, progress: &Progress) -> Result<StudyData, InputError> {
    read_study_with(root, &ReadOptions::default(), progress)
}

/// Reads the whole study folder: network, stations, history, toll, counts and every
/// `factors/` table (group assignment and design tables; a `factors/*.csv` it does not know is
/// refused), and takes the SHA-256 of each file read.
pub fn read_study_with(
    root: &Path,
    options: &ReadOptions,
    progress: &Progress,
) -> Result<StudyData, InputError> {
    if !root.is_dir() {
        return Err(InputError::StudyNotFound {
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
        options,
    )?;
    let mut known = vec![extras::ASSIGNMENT_FILE];
    known.extend(design_tables::DESIGN_TABLE_FILES);
    design_tables::refuse_unknown_factor_files(root, &known)?;
    let assignment = extras::read_group_assignment(root, &mut rejected, &mut files)?;
    let design_tables = read_design_tables(root, &mut files)?;
    // Checksums of exactly the files read, so `check` and the run manifest agree; one file
    // per thread, as the count files are read.
    {
        use rayon::prelude::*;
        files
            .par_iter_mut()
            .for_each(|f| f.sha256 = sha256_of(root, &f.file));
    }
    let settings_sha256 = root
        .join(SETTINGS_FILE)
        .exists()
        .then(|| sha256_of(root, SETTINGS_FILE));
    Ok(StudyData {
        root: root.to_path_buf(),
        network,
        stations,
        counts,
        history,
        toll,
        assignment,
        design_tables,
        settings_sha256,
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
