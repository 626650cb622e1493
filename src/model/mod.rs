//! Typed records shared by every stage: ids, the road network, stations and the
//! per station-day count summaries that the reader builds while streaming the counts.

pub mod counts;
pub mod ids;
pub mod network;
pub mod station;
pub mod views;

pub use counts::{DayCounts, Direction, DirectionDay, StationDayKey, MAX_DAY_HOURS};
pub use ids::{NodeId, SegmentId, StationId};
pub use network::{Area, FunctionalClass, Network, Node, Segment};
pub use station::{Station, StationKind};

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
