//! roadtally: annual traffic statistics for every segment of a road network.
//!
//! The pipeline, in the order [`pipeline::compute`] runs it ([`output::write_all`] then writes
//! the results):
//!
//! 1. [`input`] reads the study folder (network, stations, counts, history, toll) into
//!    typed records and per station-day summaries, logging every rejected row.
//! 2. [`qc`] applies count quality rules per station x direction x local date.
//! 3. [`continuous`] turns permanent-counter days into AADT, MADT, factors and design hours.
//! 4. [`factors`] forms factor groups and growth factors.
//! 5. [`expansion`] expands short counts to AADT with 95 % intervals.
//! 6. [`spatial`] estimates uncounted segments by kriging with external drift.
//! 7. [`output`] writes the tables, workbook, map and report.
//!
//! [`demo`] generates an invented study with known truth for tests and demonstrations.

pub mod bench;
pub mod cli;
pub mod config;
pub mod continuous;
pub mod demo;
pub mod design;
pub mod expansion;
pub mod factors;
pub mod input;
mod layers;
pub mod model;
pub mod output;
pub mod pipeline;
pub mod progress;
pub mod qc;
pub mod segments;
pub mod spatial;
pub mod toll;
pub mod totals;
