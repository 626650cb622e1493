//! Opening a CSV (or gzip-compressed CSV) input and finding its columns by name.

use std::collections::HashMap;
use std::fs::File;
use std::io::{BufReader, Read};
use std::path::{Path, PathBuf};

use flate2::read::MultiGzDecoder;

use super::error::InputError;

/// Read buffer for inputs; large enough that CSV parsing, not system calls, dominates.
const READ_BUFFER_BYTES: usize = 1 << 20;

/// An open CSV input: its reader, its header and the names used in messages.
pub struct CsvFile {
    /// Name relative to the study folder, as logs print it.
    pub name: String,
    /// Full path.
    pub path: PathBuf,
    /// Column name -> index.
    pub columns: HashMap<String, usize>,
    /// Header fields as read (BOM removed, trimmed).
    pub header: Vec<String>,
    /// The record reader, positioned after the header.
    pub reader: csv::Reader<Box<dyn Read + Send>>,
}

impl CsvFile {
    /// Opens `path` (gzip when it ends in `.gz`) and reads its header row.
    pub fn open(path: &Path, name: &str) -> Result<CsvFile, InputError> {
        let rel = PathBuf::from(name);
        let file = File::open(path).map_err(|e| {
            if e.kind() == std::io::ErrorKind::NotFound {
                InputError::MissingFile { path: rel.clone() }
            } else {
                InputError::Unreadable {
                    path: rel.clone(),
                    reason: e.to_string(),
                }
            }
        })?;
        let raw: Box<dyn Read + Send> = if name.ends_with(".gz") {
            Box::new(MultiGzDecoder::new(BufReader::with_capacity(
                READ_BUFFER_BYTES,
                file,
            )))
        } else {
            Box::new(file)
        };
        let mut reader = csv::ReaderBuilder::new()
            .has_headers(true)
            .flexible(true)
            .buffer_capacity(READ_BUFFER_BYTES)
            .from_reader(raw);
        let header = reader
            .byte_headers()
            .map_err(|e| read_error(&rel, e))?
            .clone();
        let mut fields = Vec::with_capacity(header.len());
        for (i, raw) in header.iter().enumerate() {
            let raw = if i == 0 {
                raw.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(raw)
            } else {
                raw
            };
            let text = std::str::from_utf8(raw).map_err(|_| InputError::NotCsv {
                path: rel.clone(),
                reason: "the header row is not UTF-8 text".into(),
            })?;
            if text.chars().any(|c| c.is_control() && c != '\t') {
                return Err(InputError::NotCsv {
                    path: rel.clone(),
                    reason: "the header row holds binary data".into(),
                });
            }
            fields.push(text.trim().to_string());
        }
        if fields.iter().all(|f| f.is_empty()) {
            return Err(InputError::NotCsv {
                path: rel,
                reason: "the file has no header row".into(),
            });
        }
        let columns = fields
            .iter()
            .enumerate()
            .map(|(i, f)| (f.clone(), i))
            .collect();
        Ok(CsvFile {
            name: name.to_string(),
            path: path.to_path_buf(),
            columns,
            header: fields,
            reader,
        })
    }

    /// Index of a required column, or the fatal error naming it.
    pub fn require(&self, column: &str) -> Result<usize, InputError> {
        self.columns
            .get(column)
            .copied()
            .ok_or_else(|| InputError::MissingColumn {
                path: PathBuf::from(&self.name),
                column: column.to_string(),
            })
    }

    /// Index of an optional column.
    pub fn optional(&self, column: &str) -> Option<usize> {
        self.columns.get(column).copied()
    }

    /// Number of header fields.
    pub fn width(&self) -> usize {
        self.header.len()
    }
}

/// Maps a CSV read error to the fatal error kind.
pub fn read_error(path: &Path, e: csv::Error) -> InputError {
    match e.kind() {
        csv::ErrorKind::Io(_) => InputError::Unreadable {
            path: path.to_path_buf(),
            reason: e.to_string(),
        },
        _ => InputError::NotCsv {
            path: path.to_path_buf(),
            reason: e.to_string(),
        },
    }
}

/// The text of field `i`, trimmed; `None` when the cell is empty or absent.
pub fn cell(record: &csv::ByteRecord, i: usize) -> Option<&[u8]> {
    let raw = record.get(i)?;
    let t = raw.trim_ascii();
    (!t.is_empty()).then_some(t)
}

/// A field as text for messages (lossy).
pub fn show(raw: &[u8]) -> String {
    String::from_utf8_lossy(raw).into_owned()
}

/// How a whole-number count cell failed to parse.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum CountError {
    /// Not a number at all.
    NotNumeric,
    /// Below zero.
    Negative,
    /// Has a fractional part.
    Fractional,
    /// Does not fit in 32 bits.
    TooLarge,
}

impl CountError {
    /// A reason for the log.
    pub fn reason(self) -> &'static str {
        match self {
            CountError::NotNumeric => "not a number",
            CountError::Negative => "negative count",
            CountError::Fractional => "fractional count (counts are whole numbers)",
            CountError::TooLarge => "count does not fit in 32 bits",
        }
    }
}

/// Parses a whole, non-negative count that fits in 32 bits (fast path for plain digits).
pub fn parse_count(raw: &[u8]) -> Result<u32, CountError> {
    if !raw.is_empty() && raw.len() <= 9 && raw.iter().all(u8::is_ascii_digit) {
        return Ok(raw.iter().fold(0u32, |a, &b| a * 10 + (b - b'0') as u32));
    }
    let text = std::str::from_utf8(raw).map_err(|_| CountError::NotNumeric)?;
    let v: f64 = text.parse().map_err(|_| CountError::NotNumeric)?;
    if !v.is_finite() {
        return Err(CountError::NotNumeric);
    }
    if v < 0.0 {
        return Err(CountError::Negative);
    }
    if v.fract() != 0.0 {
        return Err(CountError::Fractional);
    }
    if v > u32::MAX as f64 {
        return Err(CountError::TooLarge);
    }
    Ok(v as u32)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn counts_parse_and_fail_for_the_right_reason() {
        assert_eq!(parse_count(b"0"), Ok(0));
        assert_eq!(parse_count(b"4294967295"), Ok(u32::MAX));
        assert_eq!(parse_count(b"12.0"), Ok(12));
        assert_eq!(parse_count(b"-3"), Err(CountError::Negative));
        assert_eq!(parse_count(b"2.5"), Err(CountError::Fractional));
        assert_eq!(parse_count(b"abc"), Err(CountError::NotNumeric));
        assert_eq!(parse_count(b"4294967296"), Err(CountError::TooLarge));
        assert_eq!(parse_count(b"NaN"), Err(CountError::NotNumeric));
    }
}
