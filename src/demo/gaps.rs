//! Missing hours in short counts: a portable logger that skipped an hour or two, or a sensor
//! that was down for a morning. Each is recorded in `truth/short_gaps.csv`.
//!
//! # Method
//!
//! Per short count, on its own random stream (the main stream draws the same volumes with or
//! without gaps), before faults are injected: with probability
//! 12 % one hour is missing, 4 % a run of two hours, 2 % an outage of 6-10 hours. The hours
//! go missing in both directions (the logger, not one tube) and always inside the count, with
//! counted hours on both sides: a count that started late or ended early is simply a shorter
//! count. The shares are invented; agencies see a few percent of short counts with missing
//! hours (common practice, no single source).

use std::path::{Path, PathBuf};

use rand::Rng;
use rand_chacha::ChaCha8Rng;

use super::faults::Rec;
use super::sink::CsvSink;
use super::DemoError;

/// Seed offset of the gaps' own random stream.
pub(crate) const STREAM: u64 = 0x6761_7073_0000_0001;

/// One run of missing hours of one short count.
#[derive(Clone, Debug, PartialEq)]
pub(crate) struct GapRow {
    pub station_id: String,
    /// Local start of the first missing hour (RFC 3339).
    pub first: String,
    pub hours: usize,
    /// `missed_hour`, `missed_hours` or `outage`.
    pub kind: &'static str,
}

/// The missing run of a count of `n` hours, as (first index, length, kind), if any.
pub(crate) fn plan(rng: &mut ChaCha8Rng, n: usize) -> Option<(usize, usize, &'static str)> {
    let u: f64 = rng.gen();
    let (len, kind) = if u < 0.12 {
        (1, "missed_hour")
    } else if u < 0.16 {
        (2, "missed_hours")
    } else if u < 0.18 {
        (rng.gen_range(6..=10), "outage")
    } else {
        return None;
    };
    // At least one counted hour on each side.
    if n < len + 2 {
        return None;
    }
    Some((rng.gen_range(1..n - len), len, kind))
}

/// Drops the records of intervals `first..first + len` from both directions.
pub(crate) fn remove(recs: &mut [Vec<Rec>; 2], first: usize, len: usize) {
    for dir in recs.iter_mut() {
        dir.retain(|r| !(first..first + len).contains(&r.interval));
    }
}

/// Writes `truth/short_gaps.csv`.
pub(crate) fn write(out: &Path, rows: &[GapRow]) -> Result<PathBuf, DemoError> {
    let mut sink = CsvSink::create(
        out.join("truth/short_gaps.csv"),
        &["station_id", "first_missing", "hours", "kind"],
    )?;
    for r in rows {
        sink.row([
            r.station_id.as_str(),
            &r.first,
            &r.hours.to_string(),
            r.kind,
        ])?;
    }
    sink.finish()
}
