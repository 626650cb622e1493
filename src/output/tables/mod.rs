//! The tables `run` writes, built from stage outputs.

mod expansion;
mod factors;
mod quality;
mod segments;
mod spatial;
mod stations;
mod toll;

use super::table::{Cell, Column, Format};

pub use expansion::{calibration_table, short_counts};
pub use factors::{factor_groups, factors_table, group_assignment};
pub use quality::{diagnostics, network_findings, qc_log, qc_summary, rejected_rows};
pub use segments::segment_statistics;
pub use spatial::{cross_validation, spatial_model};
pub use stations::{hourly_distribution, ranked_hours, station_statistics};
pub use toll::{toll_reconciliation, toll_summary};

/// A column; shorthand for [`Column::new`] in the table builders.
pub(crate) fn col(name: &str, unit: &'static str, format: Format) -> Column {
    Column::new(name, unit, format)
}

fn opt(v: Option<f64>) -> Cell {
    Cell::from(v)
}
