//! The log of input rows that were not used.

use std::path::Path;

/// Longest value kept in the log; longer values are shortened with an ellipsis.
const MAX_VALUE_CHARS: usize = 60;

/// One input row that was not used, as `rejected_rows.csv` lists it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RejectedRow {
    /// Input file, relative to the study folder, `/`-separated.
    pub file: String,
    /// Line number in that file, the header being line 1.
    pub line: u64,
    /// Column at fault; empty where the whole row is at fault.
    pub column: String,
    /// The offending value, shortened if long.
    pub value: String,
    /// Why the row was not used.
    pub reason: String,
}

impl RejectedRow {
    /// A rejected row; `value` is shortened to a readable length.
    pub fn new(
        file: &str,
        line: u64,
        column: &str,
        value: &str,
        reason: impl Into<String>,
    ) -> Self {
        RejectedRow {
            file: file.to_string(),
            line,
            column: column.to_string(),
            value: shorten(value),
            reason: reason.into(),
        }
    }
}

fn shorten(value: &str) -> String {
    if value.chars().count() <= MAX_VALUE_CHARS {
        value.to_string()
    } else {
        let mut s: String = value.chars().take(MAX_VALUE_CHARS - 1).collect();
        s.push('…');
        s
    }
}

/// Relative, `/`-separated name of `path` under `root`.
pub fn relative_name(root: &Path, path: &Path) -> String {
    let rel = path.strip_prefix(root).unwrap_or(path);
    rel.components()
        .map(|c| c.as_os_str().to_string_lossy())
        .collect::<Vec<_>>()
        .join("/")
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn long_values_are_shortened() {
        let r = RejectedRow::new("a.csv", 2, "x", &"9".repeat(200), "why");
        assert_eq!(r.value.chars().count(), MAX_VALUE_CHARS);
        assert!(r.value.ends_with('…'));
    }
}
