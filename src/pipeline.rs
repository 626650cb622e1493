//! The only place that knows the order of the stages.

use std::collections::BTreeMap;
use std::fmt;
use std::path::PathBuf;

use crate::config::Config;
use crate::input::{self, FileSummary, InputError, StudyData};
use crate::output::{self, csv_out, tables, OutputError};
use crate::progress::Progress;

/// Why a run could not finish (exit code 2).
#[derive(Debug, thiserror::Error)]
pub enum PipelineError {
    /// Reading failed.
    #[error(transparent)]
    Input(#[from] InputError),
    /// Writing failed.
    #[error(transparent)]
    Output(#[from] OutputError),
    /// `run` was called without an output folder.
    #[error("no output folder given (use --out <dir>)")]
    NoOutput,
}

/// What reading and checking found.
#[derive(Debug, Clone)]
pub struct CheckReport {
    /// Rows read and rejected per file.
    pub files: Vec<FileSummary>,
    /// Rejected rows per reason.
    pub rejected_by_reason: BTreeMap<String, u64>,
    /// Stations accepted.
    pub stations: usize,
    /// Segments accepted.
    pub segments: usize,
    /// Station-days with any count.
    pub station_days: usize,
    /// Count rows used.
    pub count_rows_used: u64,
    /// The study year.
    pub year: Option<i32>,
}

impl CheckReport {
    /// Rows read over every file.
    pub fn rows_read(&self) -> u64 {
        self.files.iter().map(|f| f.rows).sum()
    }

    /// Rows rejected over every file.
    pub fn rows_rejected(&self) -> u64 {
        self.files.iter().map(|f| f.rejected).sum()
    }

    /// The contract's exit code: 0 when every row was used, 1 when some were rejected.
    pub fn exit_code(&self) -> i32 {
        i32::from(self.rows_rejected() > 0)
    }
}

/// Groups a rejection reason: the text before any parenthesised detail.
fn reason_key(reason: &str) -> String {
    reason
        .split(" (")
        .next()
        .unwrap_or(reason)
        .trim()
        .to_string()
}

fn report(data: &StudyData, year: Option<i32>) -> CheckReport {
    let mut by_reason = BTreeMap::new();
    for r in &data.rejected {
        *by_reason.entry(reason_key(&r.reason)).or_insert(0) += 1;
    }
    CheckReport {
        files: data.files.clone(),
        rejected_by_reason: by_reason,
        stations: data.stations.stations.len(),
        segments: data.network.segments.len(),
        station_days: data.counts.days.iter().map(|d| d.len()).sum(),
        count_rows_used: data.counts.rows_used,
        year,
    }
}

/// The study year: the setting, else the year with most permanent-counter records.
fn study_year(config: &Config, data: &StudyData) -> Option<i32> {
    config
        .settings
        .year
        .or_else(|| data.counts.busiest_continuous_year())
}

/// Reads and checks a study without writing anything.
pub fn check(config: &Config) -> Result<CheckReport, PipelineError> {
    let progress = Progress::new(config.quiet);
    let data = input::read_study(&config.study, &progress)?;
    let year = study_year(config, &data);
    Ok(report(&data, year))
}

/// What a run wrote.
#[derive(Debug, Clone)]
pub struct RunReport {
    /// The reading summary.
    pub check: CheckReport,
    /// Files written.
    pub written: Vec<PathBuf>,
}

/// Runs the whole pipeline and writes the outputs.
pub fn run(config: &Config) -> Result<RunReport, PipelineError> {
    let out = config.out.clone().ok_or(PipelineError::NoOutput)?;
    let progress = Progress::new(config.quiet);
    let data = input::read_study(&config.study, &progress)?;
    let year = study_year(config, &data);
    let check = report(&data, year);
    output::ensure_dir(&out)?;
    let written = vec![csv_out::write(
        &out,
        &tables::rejected_rows(&data.rejected),
    )?];
    Ok(RunReport { check, written })
}

impl fmt::Display for CheckReport {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        writeln!(f, "{:<32} {:>12} {:>10}", "file", "rows read", "rejected")?;
        for s in &self.files {
            writeln!(f, "{:<32} {:>12} {:>10}", s.file, s.rows, s.rejected)?;
        }
        writeln!(
            f,
            "{:<32} {:>12} {:>10}",
            "total",
            self.rows_read(),
            self.rows_rejected()
        )?;
        if !self.rejected_by_reason.is_empty() {
            writeln!(f, "\nrejected rows by reason:")?;
            for (why, n) in &self.rejected_by_reason {
                writeln!(f, "  {n:>8}  {why}")?;
            }
        }
        writeln!(
            f,
            "\nsegments {}, stations {}, station-days counted {}, count rows used {}",
            self.segments, self.stations, self.station_days, self.count_rows_used
        )?;
        match self.year {
            Some(y) => writeln!(f, "study year {y}"),
            None => writeln!(
                f,
                "study year: none (no permanent-counter records and no `year` in study.toml)"
            ),
        }
    }
}
