//! Atomic CSV files: rows go to `<name>.tmp`, which is renamed over `<name>` only once every
//! row is written, so a reader never sees half a file.

use std::fs::File;
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

use flate2::write::GzEncoder;
use flate2::Compression;

use super::DemoError;

/// The byte stream under the CSV writer: plain or gzip.
pub(crate) enum Stream {
    Plain(BufWriter<File>),
    Gzip(Box<GzEncoder<BufWriter<File>>>),
}

impl Write for Stream {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        match self {
            Stream::Plain(w) => w.write(buf),
            Stream::Gzip(w) => w.write(buf),
        }
    }

    fn flush(&mut self) -> io::Result<()> {
        match self {
            Stream::Plain(w) => w.flush(),
            Stream::Gzip(w) => w.flush(),
        }
    }
}

/// A CSV file being written to its temporary twin.
pub(crate) struct CsvSink {
    path: PathBuf,
    tmp: PathBuf,
    writer: csv::Writer<Stream>,
    /// Data rows written so far (the header not counted).
    pub rows: u64,
}

impl CsvSink {
    /// Creates `path` (gzip-compressed when `path` ends in `.gz`) and writes the header.
    pub(crate) fn create(path: PathBuf, header: &[&str]) -> Result<Self, DemoError> {
        let mut tmp = path.clone().into_os_string();
        tmp.push(".tmp");
        let tmp = PathBuf::from(tmp);
        let file = File::create(&tmp).map_err(|source| io_err(&tmp, source))?;
        let buf = BufWriter::with_capacity(1 << 16, file);
        let gzip = path.extension().is_some_and(|e| e == "gz");
        // GzEncoder::new writes no file name and a zero mtime, so output stays reproducible.
        let stream = if gzip {
            Stream::Gzip(Box::new(GzEncoder::new(buf, Compression::new(4))))
        } else {
            Stream::Plain(buf)
        };
        let writer = csv::WriterBuilder::new()
            .flexible(false)
            .from_writer(stream);
        let mut sink = CsvSink {
            path,
            tmp,
            writer,
            rows: 0,
        };
        sink.writer
            .write_record(header)
            .map_err(|source| sink.csv_err(source))?;
        Ok(sink)
    }

    /// Writes one data row.
    pub(crate) fn row<I, T>(&mut self, fields: I) -> Result<(), DemoError>
    where
        I: IntoIterator<Item = T>,
        T: AsRef<[u8]>,
    {
        match self.writer.write_record(fields) {
            Ok(()) => {
                self.rows += 1;
                Ok(())
            }
            Err(source) => Err(self.csv_err(source)),
        }
    }

    /// Line number (header = line 1) that the next row will get.
    pub(crate) fn next_line(&self) -> u64 {
        self.rows + 2
    }

    /// Flushes, finishes the gzip stream and renames the file into place.
    pub(crate) fn finish(self) -> Result<PathBuf, DemoError> {
        let CsvSink {
            path, tmp, writer, ..
        } = self;
        let stream = writer
            .into_inner()
            .map_err(|e| io_err(&path, io::Error::other(e.to_string())))?;
        let mut buf = match stream {
            Stream::Plain(w) => w,
            Stream::Gzip(w) => w.finish().map_err(|e| io_err(&path, e))?,
        };
        buf.flush().map_err(|e| io_err(&path, e))?;
        drop(buf);
        std::fs::rename(&tmp, &path).map_err(|e| io_err(&path, e))?;
        Ok(path)
    }

    fn csv_err(&self, source: csv::Error) -> DemoError {
        DemoError::Csv {
            path: self.path.clone(),
            source,
        }
    }
}

/// Writes a small text file atomically.
pub(crate) fn write_text(path: PathBuf, text: &str) -> Result<PathBuf, DemoError> {
    let mut tmp = path.clone().into_os_string();
    tmp.push(".tmp");
    let tmp = PathBuf::from(tmp);
    std::fs::write(&tmp, text).map_err(|e| io_err(&tmp, e))?;
    std::fs::rename(&tmp, &path).map_err(|e| io_err(&path, e))?;
    Ok(path)
}

pub(crate) fn io_err(path: &Path, source: io::Error) -> DemoError {
    DemoError::Io {
        path: path.to_path_buf(),
        source,
    }
}
