//! Counting stations.

use std::collections::HashMap;

use super::ids::{SegmentId, StationId};

/// How a station counts.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub enum StationKind {
    /// A permanent counter that runs all year.
    Continuous,
    /// A short-duration count, typically 24 to 72 hours.
    Short,
}

impl StationKind {
    /// The contract's spelling.
    pub fn as_str(self) -> &'static str {
        match self {
            StationKind::Continuous => "continuous",
            StationKind::Short => "short",
        }
    }
}

/// A station of `stations.csv`, with the index of its segment in [`crate::model::Network::segments`].
#[derive(Debug, Clone)]
pub struct Station {
    /// Station id.
    pub id: StationId,
    /// Segment the counter stands on.
    pub segment_id: SegmentId,
    /// Index of that segment in the network.
    pub segment: usize,
    /// Continuous or short.
    pub kind: StationKind,
}

/// Stations read, and the ids of stations that were rejected with their reason (so that
/// their count rows can be rejected with it too).
#[derive(Debug, Default)]
pub struct StationList {
    /// Accepted stations in file order.
    pub stations: Vec<Station>,
    /// Station id -> index into `stations`.
    pub index: HashMap<StationId, usize>,
    /// Rejected station id -> reason.
    pub rejected: HashMap<StationId, String>,
}
