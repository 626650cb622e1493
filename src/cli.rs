//! Command-line interface: commands and options in the trade's words.

use std::path::PathBuf;

use clap::{Parser, Subcommand};

use crate::demo::DemoSize;

/// Annual traffic statistics for every segment of a road network.
///
/// Reads a study folder (network, stations, permanent and short counts), checks the counts,
/// derives expansion factors from the permanent counters, expands the short counts, estimates
/// uncounted segments, and writes AADT with a 95 % interval, class shares and design-hour
/// figures for every segment.
///
/// Exit codes: 0 done (rejected rows, if any, listed in rejected_rows.csv and within
/// max_rejected_share); 1 done, but an alarm fired (data loss, no usable permanent counter,
/// no count for any segment);
/// 2 could not run, nothing written.
#[derive(Debug, Parser)]
#[command(name = "roadtally", version, about, long_about)]
pub struct Cli {
    /// The command.
    #[command(subcommand)]
    pub command: Command,
    /// No progress bars and no summary on the terminal.
    #[arg(long, short, global = true)]
    pub quiet: bool,
}

/// The commands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Read a study and check its counts: prints rows read and rejected per file and reason,
    /// stations, and station-days accepted, flagged and rejected by quality rule. Writes nothing.
    Check {
        /// The study folder (network/, stations.csv, counts/ ...).
        study: PathBuf,
        /// Study year (overrides `year` in study.toml).
        #[arg(long)]
        year: Option<i32>,
    },
    /// Run the whole job: read, check, factor, expand, estimate, and write the tables.
    Run {
        /// The study folder.
        study: PathBuf,
        /// Folder the tables are written to (created if absent).
        #[arg(long, short)]
        out: PathBuf,
        /// Study year (overrides `year` in study.toml).
        #[arg(long)]
        year: Option<i32>,
    },
    /// Measure the short-count intervals on the study's own permanent counters: simulated
    /// short counts (24, 48, 72 hours, many start days) are drawn from every counter and
    /// expanded with factors computed without it. Prints the table of errors and coverage.
    Calibrate {
        /// The study folder.
        study: PathBuf,
        /// Also write short_count_calibration.csv into this folder.
        #[arg(long, short)]
        out: Option<PathBuf>,
        /// Study year (overrides `year` in study.toml).
        #[arg(long)]
        year: Option<i32>,
    },
    /// Print a complete study.toml with every setting at its default, with comments.
    Config {
        /// Print the defaults (the only mode).
        #[arg(long, default_value_t = true)]
        defaults: bool,
    },
    /// Generate an invented demo study with known true volumes and injected faults.
    Demo {
        /// Folder to write the study into.
        #[arg(long, short)]
        out: PathBuf,
        /// Random seed; the same seed gives byte-identical files.
        #[arg(long, default_value_t = 7)]
        seed: u64,
        /// Size of the study: small (~300 segments, 10 permanent counters, 100 short counts),
        /// large (~3,000 segments, 60 / 1,000), bench (400 permanent counters x 2 directions of
        /// hourly records for a year, ~7 million rows).
        #[arg(long, value_enum, default_value_t = DemoSize::Small)]
        size: DemoSize,
    },
    /// Time reading and quality control on a generated ~7 million-row year (see `bench`).
    Bench {
        /// Folder of the benchmark study (generated there when absent).
        #[arg(long, default_value = crate::bench::DEFAULT_DIR)]
        dir: PathBuf,
        /// Generate the study again even when the folder holds one.
        #[arg(long)]
        regenerate: bool,
    },
}
