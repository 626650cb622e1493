//! Writers: the only code that writes files. A run's whole output set is written into a
//! temporary folder beside the output folder and moved into place as a set (see
//! [`write::write_all`]), so a failed run never leaves half an output set.

pub mod csv_out;
pub mod geojson_out;
pub mod place;
pub mod publish;
pub mod report;
pub mod run;
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
    #[error("cannot write {path}: {cause}")]
    Io {
        /// The file or folder.
        path: PathBuf,
        /// The system error (in the message, not a separate source, so it prints once).
        cause: std::io::Error,
    },
    /// The output folder is the study folder, lies inside it, or holds it.
    #[error(
        "--out {out} {relation} the study folder {study}: outputs are never written into a study, \
         where a later run could read them back as inputs; choose a folder outside it"
    )]
    OverlapsStudy {
        /// The output folder given.
        out: PathBuf,
        /// The study folder.
        study: PathBuf,
        /// "is", "is inside" or "holds".
        relation: &'static str,
    },
    /// A name the output set needs is taken by something roadtally will not replace.
    #[error("cannot write {path}: {reason}; nothing was changed in the output folder")]
    Occupied {
        /// The path in the output folder.
        path: PathBuf,
        /// What is in the way.
        reason: String,
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
    let io = |cause| OutputError::Io {
        path: path.clone(),
        cause,
    };
    std::fs::write(&tmp, bytes).map_err(io)?;
    std::fs::rename(&tmp, &path).map_err(io)?;
    Ok(path)
}

/// Creates the output folder.
pub fn ensure_dir(dir: &Path) -> Result<(), OutputError> {
    std::fs::create_dir_all(dir).map_err(|cause| OutputError::Io {
        path: dir.to_path_buf(),
        cause,
    })
}
