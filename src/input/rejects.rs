//! The log of input rows that were not used.

use std::path::Path;

/// Relative, `/`-separated name of `path` under `root`.
pub fn relative_name(root: &Path, path: &Path) -> String {
    let rel = path.strip_prefix(root).unwrap_or(path);
    rel.components()
        .map(|c| c.as_os_str().to_string_lossy())
        .collect::<Vec<_>>()
        .join("/")
}
