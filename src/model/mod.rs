//! Typed records shared by every stage: ids, the road network, stations, the per station-day
//! count summaries that the reader builds while streaming the counts, the other records a study
//! folder holds, and the design default tables. The lowest layer: it imports no other module
//! of the crate.

pub mod counts;
pub mod design_tables;
pub mod diagnostics;
pub mod ids;
pub mod network;
pub mod records;
pub mod station;
pub mod study;
pub mod views;

pub use counts::{CountHour, DayCounts, Direction, DirectionDay, StationDayKey, MAX_DAY_HOURS};
pub use design_tables::{
    DesignTables, Facility, HcmDefault, HcmDefaults, LaneDistribution, LaneDistributionRow,
    LoadEquivalency, TableError, TruckFactorRow,
};
pub use diagnostics::{DiagnosticCount, StageDiagnostics};
pub use ids::{NodeId, SegmentId, StationId};
pub use network::{Area, FunctionalClass, Network, Node, Segment};
pub use records::{AssignmentRow, HistoryRecord, RejectedRow, TollRecord, VehicleGroup};
pub use station::{Station, StationKind, StationList};
pub use study::{CountStore, FileSummary, StudyData};

/// Number of FHWA vehicle classes (the 13-category scheme).
pub const CLASS_COUNT: usize = 13;

/// FHWA class groups as used by HPMS: light 1-3, single-unit 4-7, combination 8-13.
///
/// Source: HPMS Field Manual vehicle groupings (SU = 4-7, CU = 8-13); light = 1-3 is common practice.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum ClassGroup {
    /// Classes 1-3: motorcycles, passenger cars, other two-axle four-tyre vehicles.
    Light,
    /// Classes 4-7: buses and single-unit trucks.
    SingleUnit,
    /// Classes 8-13: combination trucks.
    Combination,
}

impl ClassGroup {
    /// The group of FHWA class `class` (1-based, 1..=13).
    pub fn of_class(class: usize) -> ClassGroup {
        match class {
            1..=3 => ClassGroup::Light,
            4..=7 => ClassGroup::SingleUnit,
            _ => ClassGroup::Combination,
        }
    }
}
