//! What the report shows, as plain records the pipeline's results fill: the map segments,
//! factor series, result tables and text. Charts and the page are drawn from these.

use crate::output::table::Table;

/// Most rows of one table shown in the report; longer tables end with a note that the full
/// table is in its CSV file.
pub const TABLE_ROWS_MAX: usize = 100;

/// One segment on the report's map.
#[derive(Debug, Clone, PartialEq)]
pub struct MapSegment {
    /// From node, (lon, lat) decimal degrees WGS 84.
    pub from: (f64, f64),
    /// To node, (lon, lat) decimal degrees WGS 84.
    pub to: (f64, f64),
    /// AADT, veh/day.
    pub aadt: f64,
    /// Lower end of the 95 % interval, veh/day.
    pub lo95: f64,
    /// Upper end of the 95 % interval, veh/day.
    pub hi95: f64,
    /// `continuous`, `short_count` or `estimated`; estimated segments are drawn dashed.
    pub basis: String,
    /// Tooltip label, e.g. the segment id and route.
    pub label: String,
}

/// A named series of values, e.g. the 12 monthly factors of one factor group.
#[derive(Debug, Clone, PartialEq)]
pub struct Series {
    /// Group name.
    pub name: String,
    /// Values (dimensionless factors); a non-finite value is a gap.
    pub values: Vec<f64>,
}

/// Everything the report shows; the pipeline fills it from stage outputs.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct ReportData {
    /// Page title.
    pub title: String,
    /// The study year.
    pub study_year: i32,
    /// Tool and version, e.g. "roadtally 0.1.0" (no wall clock, so outputs are reproducible).
    pub generated_by: String,
    /// Key facts as label and text: counts used, segments, stations ...
    pub summary: Vec<(String, String)>,
    /// Segments to map.
    pub map: Vec<MapSegment>,
    /// Monthly factors per factor group (12 values, January first).
    pub monthly_factors: Vec<Series>,
    /// Weekday factors per factor group (7 values, Monday first).
    pub weekday_factors: Vec<Series>,
    /// Short-count calibration table (error and coverage by count length and class group).
    pub calibration: Option<Table>,
    /// Cross-validation table of the spatial estimates.
    pub cross_validation: Option<Table>,
    /// Quality-control summary (`qc_summary.csv`): direction-days, accepted (flags included),
    /// flagged and rejected per station.
    pub qc_summary: Option<Table>,
    /// Network totals (vehicle-km, segments by basis ...).
    pub network_totals: Option<Table>,
    /// Further tables shown as they are (design, toll reconciliation ...), at most
    /// [`TABLE_ROWS_MAX`] rows each.
    pub extra_tables: Vec<Table>,
    /// Method sections: heading and paragraph.
    pub methods: Vec<(String, String)>,
    /// The caution: figures are estimates with stated uncertainty; design follows local
    /// codes and a licensed engineer's judgement.
    pub caution: String,
}

/// One bar of a bar chart.
#[derive(Debug, Clone, PartialEq)]
pub struct Bar {
    /// Category label.
    pub label: String,
    /// Value in the chart's unit.
    pub value: f64,
}

/// One row of the QC chart: a label and direction-days `[accepted without a flag, flagged,
/// rejected]`, which sum to the row's direction-days.
pub type QcRow = (String, [f64; 3]);
