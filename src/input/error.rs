//! Errors of the reading layer. Each fatal problem names the file (and column) to fix.

use std::path::PathBuf;

/// A problem that stops the run: exit code 2, no outputs.
#[derive(Debug, thiserror::Error)]
pub enum InputError {
    /// The study folder itself is absent (or not a folder).
    #[error("study folder not found: {path}")]
    StudyNotFound {
        /// The path given.
        path: PathBuf,
    },
    /// A required file is absent.
    #[error("{path}: required file is missing")]
    MissingFile {
        /// File, relative to the study folder.
        path: PathBuf,
    },
    /// The counts folder holds no `*.csv` or `*.csv.gz` file.
    #[error("{path}: no count file (*.csv or *.csv.gz) found")]
    NoCountFiles {
        /// The counts folder.
        path: PathBuf,
    },
    /// A required column is absent from the header row.
    #[error("{path}: required column `{column}` is missing from the header row")]
    MissingColumn {
        /// File, relative to the study folder.
        path: PathBuf,
        /// The column name.
        column: String,
    },
    /// The file is not comma-separated text with a header row.
    #[error("{path}: not a CSV file ({reason})")]
    NotCsv {
        /// File, relative to the study folder.
        path: PathBuf,
        /// What gave it away.
        reason: String,
    },
    /// The file could not be read to its end.
    #[error("{path}: cannot be read to its end ({reason})")]
    Unreadable {
        /// File, relative to the study folder.
        path: PathBuf,
        /// The underlying error.
        reason: String,
    },
    /// The rows reported for a file do not add up to its lines: something was lost.
    #[error(
        "{path}: rows do not add up ({data_lines} data lines, {rows} rows read, {rejected} rejected{}): the file cannot be trusted",
        used.map(|u| format!(", {u} used")).unwrap_or_default()
    )]
    Accounting {
        /// File, relative to the study folder.
        path: PathBuf,
        /// Non-blank lines after the header.
        data_lines: u64,
        /// Rows read.
        rows: u64,
        /// Rows rejected.
        rejected: u64,
        /// Rows used (count files).
        used: Option<u64>,
    },
    /// No segment survived reading.
    #[error("{path}: no segment survives reading (see rejected_rows.csv reasons above)")]
    NoSegments {
        /// The segments file.
        path: PathBuf,
    },
    /// No count row survived reading.
    #[error("{path}: no count row survives reading")]
    NoCountRows {
        /// The counts folder.
        path: PathBuf,
    },
    /// study.toml is not valid.
    #[error("{path}: {reason}")]
    BadConfig {
        /// The settings file.
        path: PathBuf,
        /// What is wrong and where.
        reason: String,
    },
    /// A design table under `factors/` is not valid.
    #[error("{path}{}: {reason}", line.map(|l| format!(", line {l}")).unwrap_or_default())]
    BadTable {
        /// The table file.
        path: PathBuf,
        /// Line of the bad row, the header being line 1; `None` when the table as a whole
        /// is at fault.
        line: Option<u64>,
        /// What is wrong and what to fix.
        reason: String,
    },
}
