//! Writers: the only code that writes files. Every file is written to a temporary name in
//! the output folder and renamed into place, so a failed run never leaves half a table.

pub mod csv_out;
pub mod geojson_out;
pub mod publish;
pub mod report;
pub mod table;
pub mod tables;
pub mod write;
pub mod xlsx;

use std::path::{Path, PathBuf};

pub use table::{Cell, Column, Format, Table};
pub use write::{write_all, RunReport};

/// A problem writing outputs.
#[derive(Debug, thiserror::Error)]
pub enum OutputError {
    /// The output folder or a file in it could not be written.
    #[error("cannot write {path}: {source}")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// The system error.
        #[source]
        source: std::io::Error,
    },
    /// A writer library failed.
    #[error("cannot write {path}: {reason}")]
    Format {
        /// The file.
        path: PathBuf,
        /// What failed.
        reason: String,
    },
}

/// Writes `bytes` to `dir/name` atomically: a temporary file in the same folder, then rename.
pub fn write_atomic(dir: &Path, name: &str, bytes: &[u8]) -> Result<PathBuf, OutputError> {
    let path = dir.join(name);
    let tmp = dir.join(format!(".{name}.tmp"));
    let io = |source| OutputError::Io {
        path: path.clone(),
        source,
    };
    std::fs::write(&tmp, bytes).map_err(io)?;
    std::fs::rename(&tmp, &path).map_err(io)?;
    Ok(path)
}

/// Creates the output folder.
pub fn ensure_dir(dir: &Path) -> Result<(), OutputError> {
    std::fs::create_dir_all(dir).map_err(|source| OutputError::Io {
        path: dir.to_path_buf(),
        source,
    })
}
