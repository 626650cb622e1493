//! The reading + quality-control benchmark (`roadtally bench`, `cargo bench --bench read_qc`).
//!
//! # What is measured
//!
//! On the demo study of size [`DemoSize::Bench`] (400 permanent counters x 2 directions of
//! hourly records for a year, about 7 million count rows, about 400 MB of plain CSV), generated
//! into the benchmark folder when it is absent:
//!
//! 1. **Baseline**: the raw bytes of every count file are read in 1 MiB blocks and their
//!    newlines counted. This is the I/O and a line scan with no parsing, measured in the same
//!    run so that the other figures can be given as ratios against it. The files are read once
//!    untimed first, so that both the baseline and the reader find them in the page cache.
//! 2. **Read**: [`input::read_study`], the whole study folder (network, stations, history, toll
//!    and every count file) into per station-day summaries.
//! 3. **QC**: [`qc::run`] with the study's settings, over the store the read produced.
//!
//! Each step runs [`REPEATS`] times and the fastest run is reported (the machine may be
//! shared). Rates are count rows (data rows of the files under `counts/`, headers excluded)
//! per second of wall-clock time, measured with [`Instant`]; read + QC is rows over the two
//! fastest times added. The CPU seconds of each step (user + system over every thread, from
//! `/proc/self/stat`) are shown beside the wall clock, to tell a slow step from a busy
//! machine.
//!
//! # Memory
//!
//! The peak resident set (`VmHWM` in `/proc/self/status`) is reset through
//! `/proc/self/clear_refs` just before the read (where the kernel allows it), so that the
//! generator and the baseline do not count; the peak after QC, less the resident set before the
//! read, is set against the number of station-days and of rows. The reader keeps no rows, so
//! this should track station-days (about the size of one [`DayCounts`] with its directions,
//! which is also computed and reported), not rows.

use std::fmt;
use std::io::Read;
use std::path::{Path, PathBuf};
use std::time::Instant;

use anyhow::Context;

use crate::config::Config;
use crate::demo::{self, DemoParams, DemoSize};
use crate::input::{self, counts::count_files};
use crate::model::counts::DirectionDay;
use crate::model::DayCounts;
use crate::progress::Progress;
use crate::qc;

/// Seed of the generated benchmark study.
pub const BENCH_SEED: u64 = 7;

/// Default benchmark folder (relative to the working directory).
pub const DEFAULT_DIR: &str = "target/bench-study";

/// The figures of one benchmark run.
#[derive(Debug, Clone, PartialEq)]
pub struct BenchReport {
    /// The benchmark study folder.
    pub dir: PathBuf,
    /// Bytes in the count files.
    pub bytes: u64,
    /// Count rows (data rows of the count files).
    pub rows: u64,
    /// Count rows the baseline line scan found (newlines less one header line per file).
    pub baseline_rows: u64,
    /// Count rows rejected by the reader.
    pub rejected: u64,
    /// Station-days in the store.
    pub station_days: usize,
    /// Direction-days in the store.
    pub direction_days: usize,
    /// Worker threads rayon uses.
    pub threads: usize,
    /// Times each step was run (the fastest run is reported).
    pub repeats: usize,
    /// The baseline (read the bytes, count the newlines).
    pub baseline: Timing,
    /// [`input::read_study`].
    pub read: Timing,
    /// [`qc::run`].
    pub qc: Timing,
    /// Resident set before the read, bytes.
    pub rss_before: Option<u64>,
    /// Peak resident set (VmHWM) after QC, bytes.
    pub peak_rss: Option<u64>,
    /// Whether the peak was reset before the read (else it covers the whole process).
    pub peak_reset: bool,
    /// Bytes the store's day summaries take (computed from the type sizes, no map overhead).
    pub store_bytes: u64,
}

/// Times of one step: the fastest of the runs, wall clock and CPU (all threads).
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct Timing {
    /// Wall-clock seconds of the fastest run.
    pub secs: f64,
    /// CPU seconds (user + system, every thread of the process) of that run.
    pub cpu_secs: f64,
    /// Runs seen.
    pub runs: usize,
}

impl Timing {
    fn keep(&mut self, t: Timing) {
        if self.runs == 0 || t.secs < self.secs {
            (self.secs, self.cpu_secs) = (t.secs, t.cpu_secs);
        }
        self.runs += 1;
    }
}

/// Runs of each step; the fastest is reported, which damps the noise of a shared machine.
pub const REPEATS: usize = 3;

/// Wall clock and process CPU time at a start.
struct Timer(Instant, Option<f64>);

impl Timer {
    fn start() -> Timer {
        Timer(Instant::now(), cpu_seconds())
    }

    fn stop(self) -> Timing {
        let secs = self.0.elapsed().as_secs_f64();
        let cpu_secs = match (self.1, cpu_seconds()) {
            (Some(a), Some(b)) => b - a,
            _ => f64::NAN,
        };
        Timing {
            secs,
            cpu_secs,
            runs: 1,
        }
    }
}

/// User + system CPU seconds of the whole process, from `/proc/self/stat` (clock ticks of
/// 1/100 s, the Linux `USER_HZ`).
fn cpu_seconds() -> Option<f64> {
    let text = std::fs::read_to_string("/proc/self/stat").ok()?;
    // Fields after the command name (which is in parentheses and may hold spaces).
    let rest = text.rsplit_once(')')?.1;
    let f: Vec<&str> = rest.split_whitespace().collect();
    let (utime, stime): (u64, u64) = (f.get(11)?.parse().ok()?, f.get(12)?.parse().ok()?);
    Some((utime + stime) as f64 / 100.0)
}

impl BenchReport {
    fn rate(&self, rows: u64, secs: f64) -> f64 {
        rows as f64 / secs.max(1e-9)
    }

    /// Baseline rows per second.
    pub fn baseline_rate(&self) -> f64 {
        self.rate(self.baseline_rows, self.baseline.secs)
    }

    /// Read rows per second.
    pub fn read_rate(&self) -> f64 {
        self.rate(self.rows, self.read.secs)
    }

    /// QC rows per second.
    pub fn qc_rate(&self) -> f64 {
        self.rate(self.rows, self.qc.secs)
    }

    /// Read + QC rows per second (the fastest read plus the fastest QC).
    pub fn total_rate(&self) -> f64 {
        self.rate(self.rows, self.read.secs + self.qc.secs)
    }

    /// Growth of the resident set over the read and QC (peak less the resident set before).
    pub fn rss_growth(&self) -> Option<u64> {
        Some(self.peak_rss?.saturating_sub(self.rss_before?))
    }
}

impl fmt::Display for BenchReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        const MB: f64 = 1024.0 * 1024.0;
        writeln!(
            f,
            "benchmark study {}: {} count rows ({} rejected), {:.0} MB of count files, \
             {} station-days, {} direction-days; {} threads",
            self.dir.display(),
            self.rows,
            self.rejected,
            self.bytes as f64 / MB,
            self.station_days,
            self.direction_days,
            self.threads
        )?;
        writeln!(
            f,
            "fastest of {} runs per step; CPU = user + system seconds over all threads",
            self.repeats
        )?;
        writeln!(
            f,
            "{:<34}{:>9}{:>9}{:>14}{:>18}",
            "step", "seconds", "CPU s", "rows/s", "x baseline rate"
        )?;
        let base = self.baseline_rate();
        let line = |f: &mut fmt::Formatter<'_>, name: &str, t: Timing, rate: f64| {
            writeln!(
                f,
                "{name:<34}{:>9.3}{:>9.2}{rate:>14.0}{:>18.3}",
                t.secs,
                t.cpu_secs,
                rate / base.max(1e-9)
            )
        };
        line(f, "baseline (read bytes, count lines)", self.baseline, base)?;
        line(f, "read (input::read_study)", self.read, self.read_rate())?;
        line(f, "qc (qc::run)", self.qc, self.qc_rate())?;
        let both = Timing {
            secs: self.read.secs + self.qc.secs,
            cpu_secs: self.read.cpu_secs + self.qc.cpu_secs,
            runs: self.repeats,
        };
        line(f, "read + qc", both, self.total_rate())?;
        let million_rows = self.rows as f64 / 1e6;
        match (self.peak_rss, self.rss_growth()) {
            (Some(peak), Some(growth)) => writeln!(
                f,
                "memory: peak resident {:.0} MB{}; growth over read + qc {:.0} MB = {:.1} MB per \
                 million rows = {:.0} bytes per station-day (day summaries alone: {:.0} bytes \
                 per station-day)",
                peak as f64 / MB,
                if self.peak_reset {
                    " (reset before the read)"
                } else {
                    " (whole process)"
                },
                growth as f64 / MB,
                growth as f64 / MB / million_rows.max(1e-9),
                growth as f64 / self.station_days.max(1) as f64,
                self.store_bytes as f64 / self.station_days.max(1) as f64,
            ),
            _ => writeln!(f, "memory: /proc/self/status not readable"),
        }
    }
}

/// The file that marks a folder as a generated benchmark study, which `bench` may replace.
pub const BENCH_MARKER: &str = ".roadtally-bench";

/// Generates the benchmark study into `dir` when it has no count files (or when `regenerate`),
/// then measures the baseline, the read and QC [`REPEATS`] times each. See the module docs.
pub fn run_bench(dir: &Path, regenerate: bool) -> anyhow::Result<BenchReport> {
    let has_counts = count_files(dir).is_ok();
    if regenerate || !has_counts {
        let marker = dir.join(BENCH_MARKER);
        let empty = std::fs::read_dir(dir).map_or(true, |mut d| d.next().is_none());
        if dir.exists() && !empty {
            // Only a folder this command generated (it carries the marker) is ever removed.
            anyhow::ensure!(
                marker.is_file(),
                "{} is not a benchmark study made by `roadtally bench` (no {BENCH_MARKER} in it): \
                 refusing to replace it; give an empty or new folder",
                dir.display()
            );
            std::fs::remove_dir_all(dir)
                .with_context(|| format!("removing the old benchmark study {}", dir.display()))?;
        }
        demo::generate(&DemoParams::new(BENCH_SEED, DemoSize::Bench), dir)
            .with_context(|| format!("generating the benchmark study into {}", dir.display()))?;
        std::fs::write(
            &marker,
            "generated by `roadtally bench`; the folder may be replaced\n",
        )
        .with_context(|| format!("writing {}", marker.display()))?;
    }
    let config = Config::new(dir, None, None, true)?;
    let files: Vec<PathBuf> = count_files(dir)?.into_iter().map(|(p, _)| p).collect();

    // Warm the page cache, then time the baseline.
    scan_lines(&files)?;
    let mut baseline = Timing::default();
    let mut scanned = (0, 0);
    for _ in 0..REPEATS {
        let t = Timer::start();
        scanned = scan_lines(&files)?;
        baseline.keep(t.stop());
    }
    let (bytes, lines) = scanned;
    let baseline_rows = lines.saturating_sub(files.len() as u64);

    let rss_before = status_kb("VmRSS");
    let peak_reset = std::fs::write("/proc/self/clear_refs", "5").is_ok();

    let (mut read, mut check) = (Timing::default(), Timing::default());
    let mut last = None;
    for _ in 0..REPEATS {
        // The previous run's data is freed first, so runs do not add up in memory.
        drop(last.take());
        let t = Timer::start();
        let data = input::read_study(dir, &Progress::hidden())?;
        read.keep(t.stop());
        let t = Timer::start();
        let input = qc::QcInput {
            counts: &data.counts,
            stations: &data.stations,
            network: &data.network,
            history: &data.history,
        };
        let qc_out = qc::run(&input, &config.settings.qc);
        check.keep(t.stop());
        last = Some((data, qc_out));
    }
    let peak_rss = status_kb("VmHWM");
    let (data, qc_out) = last.expect("at least one run");

    let counted = data
        .files
        .iter()
        .filter(|f| f.file.starts_with(input::counts::COUNTS_DIR));
    let rows = counted.clone().map(|f| f.rows).sum();
    let rejected = counted.map(|f| f.rejected).sum();
    let direction_days: usize = data
        .counts
        .iter()
        .map(|d| d.dirs.iter().flatten().count())
        .sum();
    let station_days = data.counts.days.iter().map(|d| d.len()).sum();
    let store_bytes = (station_days * std::mem::size_of::<DayCounts>()
        + direction_days * std::mem::size_of::<DirectionDay>()) as u64;
    debug_assert!(qc_out.summary.direction_days <= direction_days);
    Ok(BenchReport {
        dir: dir.to_path_buf(),
        bytes,
        rows,
        baseline_rows,
        rejected,
        station_days,
        direction_days,
        threads: rayon::current_num_threads(),
        repeats: REPEATS,
        baseline,
        read,
        qc: check,
        rss_before,
        peak_rss,
        peak_reset,
        store_bytes,
    })
}

/// Reads every file in 1 MiB blocks and counts its newlines: (bytes, lines).
fn scan_lines(files: &[PathBuf]) -> anyhow::Result<(u64, u64)> {
    let mut buf = vec![0u8; 1 << 20];
    let (mut bytes, mut lines) = (0u64, 0u64);
    for path in files {
        let mut f =
            std::fs::File::open(path).with_context(|| format!("opening {}", path.display()))?;
        let mut last = b'\n';
        loop {
            let n = f
                .read(&mut buf)
                .with_context(|| format!("reading {}", path.display()))?;
            if n == 0 {
                break;
            }
            bytes += n as u64;
            lines += buf[..n].iter().filter(|&&b| b == b'\n').count() as u64;
            last = buf[n - 1];
        }
        if last != b'\n' {
            lines += 1;
        }
    }
    Ok((bytes, lines))
}

/// A `kB` field of `/proc/self/status`, in bytes.
fn status_kb(field: &str) -> Option<u64> {
    let text = std::fs::read_to_string("/proc/self/status").ok()?;
    text.lines()
        .find_map(|l| l.strip_prefix(field)?.strip_prefix(':'))
        .and_then(|v| v.trim().strip_suffix("kB"))
        .and_then(|v| v.trim().parse::<u64>().ok())
        .map(|kb| kb * 1024)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn line_scan_counts_a_last_line_without_newline() {
        let dir = tempfile::tempdir().unwrap();
        let a = dir.path().join("a.csv");
        std::fs::write(&a, "h\n1\n2").unwrap();
        let b = dir.path().join("b.csv");
        std::fs::write(&b, "h\n1\n").unwrap();
        assert_eq!(scan_lines(&[a, b]).unwrap(), (9, 5));
    }

    #[test]
    fn status_fields_are_read_on_linux() {
        if cfg!(target_os = "linux") {
            assert!(status_kb("VmRSS").is_some_and(|b| b > 0));
        }
    }
}
