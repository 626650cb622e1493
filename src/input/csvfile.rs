//! Opening a CSV (or gzip-compressed CSV) input, finding its columns by name, and reading its
//! records one line at a time.
//!
//! A record is one line: the file is split at `\n` (a `\r` before it is dropped) and each
//! line is split into fields by RFC 4180 quoting on its own. A quoted field therefore cannot
//! span lines. That is the price of the rule that matters more: a quoting fault (an
//! unterminated quote, a stray `"` in an unquoted field, text after a closing quote) costs
//! exactly the row it is on, which is rejected with its line and column, and reading goes on
//! at the next line. A CSV parser that lets a quoted field run across newlines would instead
//! swallow every following line into one bad field. Blank lines are no rows.
//!
//! Every file is accounted for: [`CsvFile::finish`] checks that the data rows reported (used
//! plus rejected) equal the non-blank lines after the header, and makes any gap fatal.

use std::collections::HashMap;
use std::fs::File;
use std::io::{BufRead, BufReader, Read};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::Arc;

use flate2::read::MultiGzDecoder;

use super::error::InputError;
use crate::model::{FileSummary, RejectedRow};

/// Read buffer for inputs; large enough that parsing, not system calls, dominates.
const READ_BUFFER_BYTES: usize = 1 << 20;

/// Splits a byte stream into lines and lines into fields.
pub struct LineReader<R> {
    inner: R,
    buf: Vec<u8>,
    /// Lines consumed so far (the number of the last line returned).
    pub line: u64,
    /// Blank lines skipped so far.
    pub blank: u64,
    /// Bytes consumed so far (after decompression).
    pub bytes: u64,
}

/// A line that is not a valid CSV record: which field and character, and why.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct QuoteFault {
    /// Index of the field at fault (0-based).
    pub field: usize,
    /// Character position of the fault in the line (1-based, in bytes).
    pub at: usize,
    /// What is wrong.
    pub what: &'static str,
}

impl<R: BufRead> LineReader<R> {
    /// A reader at the start of `inner` (line 0: nothing read yet).
    pub fn new(inner: R) -> LineReader<R> {
        LineReader {
            inner,
            buf: Vec::with_capacity(256),
            line: 0,
            blank: 0,
            bytes: 0,
        }
    }

    /// The next non-blank line without its line end, or `None` at the end of the stream.
    /// A read error (a truncated gzip, an unreadable file) is returned as such.
    pub fn next_line(&mut self) -> std::io::Result<Option<&[u8]>> {
        loop {
            self.buf.clear();
            let got = self.inner.read_until(b'\n', &mut self.buf)?;
            if got == 0 {
                return Ok(None);
            }
            self.bytes += got as u64;
            self.line += 1;
            let mut n = self.buf.len();
            if self.buf[n - 1] == b'\n' {
                n -= 1;
            }
            if n > 0 && self.buf[n - 1] == b'\r' {
                n -= 1;
            }
            if n == 0 {
                self.blank += 1;
                continue;
            }
            return Ok(Some(&self.buf[..n]));
        }
    }

    /// The next non-blank line split into `rec`: `Some(Ok(line number))`, or
    /// `Some(Err((line number, fault)))` for a line that is not a valid record.
    pub fn next_record(
        &mut self,
        rec: &mut Record,
    ) -> std::io::Result<Option<(u64, Result<(), QuoteFault>)>> {
        let Some(line) = self.next_line()? else {
            return Ok(None);
        };
        let parsed = split_fields(line, rec);
        Ok(Some((self.line, parsed)))
    }

    /// The raw text of the last line returned (for messages).
    pub fn last_line(&self) -> &[u8] {
        let b = self.buf.as_slice();
        let b = b.strip_suffix(b"\n").unwrap_or(b);
        b.strip_suffix(b"\r").unwrap_or(b)
    }
}

/// One record's fields: the field bytes back to back and where each ends. Filled by
/// [`split_fields`] without a per-field call into a general CSV record type (the reading hot
/// path: one record per count row).
#[derive(Debug, Default, Clone)]
pub struct Record {
    buf: Vec<u8>,
    ends: Vec<usize>,
}

impl Record {
    /// An empty record.
    pub fn new() -> Record {
        Record::default()
    }

    /// Number of fields.
    pub fn len(&self) -> usize {
        self.ends.len()
    }

    /// Whether the record has no field.
    pub fn is_empty(&self) -> bool {
        self.ends.is_empty()
    }

    /// Field `i`, or `None` past the last field.
    #[inline]
    pub fn get(&self, i: usize) -> Option<&[u8]> {
        let end = *self.ends.get(i)?;
        let start = if i == 0 { 0 } else { self.ends[i - 1] };
        Some(&self.buf[start..end])
    }

    /// The fields in order.
    pub fn iter(&self) -> impl Iterator<Item = &[u8]> {
        (0..self.len()).map(|i| self.get(i).expect("in range"))
    }

    fn clear(&mut self) {
        self.buf.clear();
        self.ends.clear();
    }

    #[inline]
    fn push_field(&mut self, field: &[u8]) {
        self.buf.extend_from_slice(field);
        self.ends.push(self.buf.len());
    }
}

/// Splits one line into fields by RFC 4180 quoting. Lines without a quote (the common case)
/// are split at commas directly.
pub fn split_fields(line: &[u8], rec: &mut Record) -> Result<(), QuoteFault> {
    rec.clear();
    // One pass over the line for commas and quotes; a quote sends it to the full parser.
    let mut from = 0;
    let mut quoted = false;
    for (at, &b) in line.iter().enumerate() {
        if b == b',' {
            rec.push_field(&line[from..at]);
            from = at + 1;
        } else if b == b'"' {
            quoted = true;
            break;
        }
    }
    if !quoted {
        rec.push_field(&line[from..]);
        return Ok(());
    }
    rec.clear();
    let n = line.len();
    let (mut i, mut k) = (0usize, 0usize);
    let mut val = Vec::new();
    loop {
        if i < n && line[i] == b'"' {
            let open = i;
            i += 1;
            val.clear();
            loop {
                let Some(j) = memchr::memchr(b'"', &line[i..]) else {
                    return Err(QuoteFault {
                        field: k,
                        at: open + 1,
                        what: "unterminated quote: the quoted field is not closed on its line",
                    });
                };
                val.extend_from_slice(&line[i..i + j]);
                i += j + 1;
                if i < n && line[i] == b'"' {
                    val.push(b'"');
                    i += 1;
                } else {
                    break;
                }
            }
            if i < n && line[i] != b',' {
                return Err(QuoteFault {
                    field: k,
                    at: i + 1,
                    what: "text after the closing quote of a quoted field",
                });
            }
            rec.push_field(&val);
        } else {
            let end = memchr::memchr(b',', &line[i..]).map_or(n, |j| i + j);
            let field = &line[i..end];
            if let Some(j) = memchr::memchr(b'"', field) {
                return Err(QuoteFault {
                    field: k,
                    at: i + j + 1,
                    what: "stray quote in an unquoted field (quote the whole field and double the quote)",
                });
            }
            rec.push_field(field);
            i = end;
        }
        if i >= n {
            return Ok(());
        }
        // line[i] is the comma ending field k.
        i += 1;
        k += 1;
    }
}

/// An open CSV input: its line reader, its header and the names used in messages.
pub struct CsvFile {
    /// Name relative to the study folder, as logs print it.
    pub name: String,
    /// Full path.
    pub path: PathBuf,
    /// Column name -> index.
    pub columns: HashMap<String, usize>,
    /// Header fields as read (BOM removed, trimmed).
    pub header: Vec<String>,
    /// The line reader, positioned after the header.
    pub lines: LineReader<Box<dyn BufRead + Send>>,
    /// Line number of the header.
    pub header_line: u64,
    /// Bytes read so far from the file on disk: the compressed bytes of a gzip file, so
    /// progress compares like with like against the file's size (the line reader counts
    /// decompressed bytes). Runs ahead of the parser by at most one read buffer.
    pub file_bytes: Arc<AtomicU64>,
}

/// A reader that counts the bytes it hands out into a shared counter.
struct Counting<R> {
    inner: R,
    count: Arc<AtomicU64>,
}

impl<R: Read> Read for Counting<R> {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.count.fetch_add(n as u64, Ordering::Relaxed);
        Ok(n)
    }
}

/// Opens `path` as a byte stream (gzip when `name` ends in `.gz`), buffered.
fn open_stream(
    path: &Path,
    name: &str,
    count: &Arc<AtomicU64>,
) -> Result<Box<dyn BufRead + Send>, InputError> {
    let rel = PathBuf::from(name);
    let meta = std::fs::metadata(path).map_err(|e| {
        if e.kind() == std::io::ErrorKind::NotFound && std::fs::symlink_metadata(path).is_err() {
            InputError::MissingFile { path: rel.clone() }
        } else {
            InputError::Unreadable {
                path: rel.clone(),
                reason: e.to_string(),
            }
        }
    })?;
    if meta.is_dir() {
        return Err(InputError::Unreadable {
            path: rel,
            reason: "it is a folder, not a file".into(),
        });
    }
    let file = File::open(path).map_err(|e| InputError::Unreadable {
        path: rel.clone(),
        reason: e.to_string(),
    })?;
    let file = Counting {
        inner: file,
        count: Arc::clone(count),
    };
    Ok(if name.ends_with(".gz") {
        Box::new(BufReader::with_capacity(
            READ_BUFFER_BYTES,
            MultiGzDecoder::new(BufReader::with_capacity(READ_BUFFER_BYTES, file)),
        ))
    } else {
        Box::new(BufReader::with_capacity(READ_BUFFER_BYTES, file))
    })
}

/// Parses a header line into trimmed names (BOM removed), or says why it is not one.
pub fn parse_header(line: &[u8], rel: &Path) -> Result<Vec<String>, InputError> {
    let not_csv = |reason: String| InputError::NotCsv {
        path: rel.to_path_buf(),
        reason,
    };
    let line = line.strip_prefix(b"\xEF\xBB\xBF").unwrap_or(line);
    let mut rec = Record::new();
    split_fields(line, &mut rec)
        .map_err(|q| not_csv(format!("the header row, character {}: {}", q.at, q.what)))?;
    let mut fields = Vec::with_capacity(rec.len());
    for raw in rec.iter() {
        let text = std::str::from_utf8(raw)
            .map_err(|_| not_csv("the header row is not UTF-8 text".into()))?;
        if text.chars().any(|c| c.is_control() && c != '\t') {
            return Err(not_csv("the header row holds binary data".into()));
        }
        fields.push(text.trim().to_string());
    }
    if fields.iter().all(|f| f.is_empty()) {
        return Err(not_csv("the file has no header row".into()));
    }
    Ok(fields)
}

impl CsvFile {
    /// Opens `path` (gzip when it ends in `.gz`) and reads its header row.
    pub fn open(path: &Path, name: &str) -> Result<CsvFile, InputError> {
        let rel = PathBuf::from(name);
        let file_bytes = Arc::new(AtomicU64::new(0));
        let mut lines = LineReader::new(open_stream(path, name, &file_bytes)?);
        let header = match lines.next_line() {
            Ok(Some(l)) => parse_header(l, &rel)?,
            Ok(None) => {
                return Err(InputError::NotCsv {
                    path: rel,
                    reason: "the file has no header row".into(),
                })
            }
            Err(e) => return Err(unreadable(&rel, &e)),
        };
        let columns = header
            .iter()
            .enumerate()
            .map(|(i, f)| (f.clone(), i))
            .collect();
        let header_line = lines.line;
        Ok(CsvFile {
            name: name.to_string(),
            path: path.to_path_buf(),
            columns,
            header,
            lines,
            header_line,
            file_bytes,
        })
    }

    /// The next record, with its line number: `Ok(Some(Ok(line)))` a record in `rec`,
    /// `Ok(Some(Err(row)))` a line that is not a valid record (the rejected row to log),
    /// `Ok(None)` the end of the file, `Err` a file that cannot be read to its end.
    pub fn next_record(
        &mut self,
        rec: &mut Record,
    ) -> Result<Option<Result<u64, RejectedRow>>, InputError> {
        match self.lines.next_record(rec) {
            Ok(None) => Ok(None),
            Ok(Some((line, Ok(())))) => Ok(Some(Ok(line))),
            Ok(Some((line, Err(q)))) => Ok(Some(Err(self.quote_reject(line, &q)))),
            Err(e) => Err(unreadable(Path::new(&self.name), &e)),
        }
    }

    /// The rejected row for a quoting fault on `line`.
    pub fn quote_reject(&self, line: u64, q: &QuoteFault) -> RejectedRow {
        let (column, value, reason) = quote_fault_parts(&self.header, self.lines.last_line(), q);
        RejectedRow::new(&self.name, line, &column, &value, reason)
    }

    /// Non-blank lines after the header read so far.
    pub fn data_lines(&self) -> u64 {
        self.lines.line - self.lines.blank - self.header_line
    }

    /// The next valid record's line number; lines that are not valid records are logged in
    /// `rejects` and counted in `summary` (as read and rejected) on the way.
    pub fn next_row(
        &mut self,
        rec: &mut Record,
        rejects: &mut Vec<RejectedRow>,
        summary: &mut FileSummary,
    ) -> Result<Option<u64>, InputError> {
        loop {
            match self.next_record(rec)? {
                None => return Ok(None),
                Some(Ok(line)) => return Ok(Some(line)),
                Some(Err(row)) => {
                    rejects.push(row);
                    summary.rows += 1;
                    summary.rejected += 1;
                }
            }
        }
    }

    /// The accounting check at the end of a file: the rows reported must be exactly the
    /// non-blank lines after the header, and no more rejected than read.
    pub fn finish(&self, summary: &FileSummary) -> Result<(), InputError> {
        check_accounting(&self.name, self.data_lines(), summary, None)
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

/// Column name, value (the line as the file has it) and reason of a quoting fault.
pub fn quote_fault_parts(
    header: &[String],
    line: &[u8],
    q: &QuoteFault,
) -> (String, String, String) {
    let column = header.get(q.field).cloned().unwrap_or_default();
    (
        column,
        show(line),
        format!("{} (field {}, character {})", q.what, q.field + 1, q.at),
    )
}

/// Rows reported for a file against its non-blank data lines (and, for count files, rows
/// used plus rejected against rows read); a gap is fatal, never silent loss.
pub fn check_accounting(
    name: &str,
    data_lines: u64,
    summary: &FileSummary,
    used: Option<u64>,
) -> Result<(), InputError> {
    let used_ok = used.is_none_or(|u| u + summary.rejected == summary.rows);
    if summary.rows == data_lines && summary.rejected <= summary.rows && used_ok {
        return Ok(());
    }
    Err(InputError::Accounting {
        path: PathBuf::from(name),
        data_lines,
        rows: summary.rows,
        rejected: summary.rejected,
        used,
    })
}

/// The fatal error of a read that failed part way.
pub fn unreadable(rel: &Path, e: &std::io::Error) -> InputError {
    InputError::Unreadable {
        path: rel.to_path_buf(),
        reason: e.to_string(),
    }
}

/// The text of field `i`, trimmed; `None` when the cell is empty or absent.
pub fn cell(record: &Record, i: usize) -> Option<&[u8]> {
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
