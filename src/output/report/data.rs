//! What the report shows, as plain records the pipeline's results fill: the map segments,
//! factor series, result tables and text. Charts and the page are drawn from these.

use crate::output::table::Table;

/// Most rows of one table shown in the report; longer tables end with a note that the full
/// table is in its CSV file.
pub const TABLE_ROWS_MAX: usize = 100;

/// One segment on the report's map, with the figures its info panel and table row show.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct MapSegment {
    /// Segment id.
    pub id: String,
    /// Route name, empty when the network gives none.
    pub route: String,
    /// Functional class code (1 interstate ... 7 local) and area, e.g. `3 urban`.
    pub class: String,
    /// Factor group.
    pub group: String,
    /// Length, km.
    pub length_km: f64,
    /// Heavy-vehicle share of AADT (0-1), NaN when the study has none.
    pub heavy_share: f64,
    /// K-factor (design-hour share of AADT), NaN when none.
    pub k_factor: f64,
    /// D-factor (heavier direction's share of the design hour), NaN when none.
    pub d_factor: f64,
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

/// A count location drawn on the map: a permanent counter or a short-count station, placed
/// at the middle of its segment (stations.csv gives the segment, not coordinates).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct MapMarker {
    /// Station id.
    pub id: String,
    /// Segment id it stands on.
    pub segment_id: String,
    /// (lon, lat) decimal degrees WGS 84.
    pub at: (f64, f64),
    /// `true` for a permanent counter, `false` for a short-count station.
    pub continuous: bool,
}

/// How quality control treated one station-day (both directions together: the worst of
/// them).
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Default)]
pub enum DayStatus {
    /// No record on that day.
    #[default]
    Missing,
    /// Accepted without a flag.
    Accepted,
    /// Accepted with a flag.
    Flagged,
    /// Rejected (in at least one direction).
    Rejected,
}

/// One station's row of the QC calendar: a status per day of the study year, 1 January first.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct CalendarRow {
    /// Station id.
    pub station: String,
    /// One status per day of the year.
    pub days: Vec<DayStatus>,
}

/// Curves of one factor group, one per counter: hourly profiles (each counter's weekday share of
/// daily volume per clock hour, 24 values, 0-1) or ranked-hour K-values (highest first).
#[derive(Debug, Clone, PartialEq, Default)]
pub struct GroupCurves {
    /// Factor group name.
    pub group: String,
    /// The counters' profiles, named by station id.
    pub counters: Vec<Series>,
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
    /// Permanent counters and short-count stations on the map.
    pub markers: Vec<MapMarker>,
    /// Ranked-hour curves per factor group: per counter, the K-values of its highest hours.
    pub ranked_hours: Vec<GroupCurves>,
    /// Weekday hourly profiles per factor group and counter.
    pub hourly_profiles: Vec<GroupCurves>,
    /// The QC calendar, one row per station with counts in the study year.
    pub qc_calendar: Vec<CalendarRow>,
    /// The permanent-counter table (two-way rows of `station_statistics.csv`, key columns).
    pub stations: Option<Table>,
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
