//! Pavement and capacity design inputs per segment: heavy AADT by class group, directional
//! and lane distribution, annual and cumulative 18-kip ESALs with 95 % intervals, and the
//! design-hour inputs of a capacity analysis (DDHV, PHF, design-hour heavy share).
//!
//! # Method
//! - [`crate::model::design_tables`]: the editable default tables (lane distribution, truck
//!   factors, HCM defaults), read from the top-level `factors/` folder by the input layer;
//!   [`load_equivalency`]: the AASHTO 1993 Appendix D load-equivalency equations
//!   ([`lef_flexible`], [`lef_rigid`]).
//! - [`pavement`]: `w18 = 365 · AADT · T · TF · D_D · D_L · GF` (AASHTO 1993 Part II
//!   §2.1.3 and App. D; tests/fixtures/REFERENCES.md §5.1, §5.4) with the compound growth factor
//!   `GF = ((1+g)^n − 1)/g`; intervals from the AADT, heavy-share and growth-rate intervals,
//!   combined in log space in quadrature (see [`pavement`] for the stated assumption).
//! - [`capacity`]: `DDHV = DHV · D`; measured PHF and design-hour heavy share where the
//!   15-minute / classified data support them, otherwise the HCM defaults by facility and
//!   area type, each result saying where it came from.
//!
//! # Units
//! Vehicles/day (AADT), vehicles/hour (DHV, DDHV), fractions (shares, factors, rates per
//! year), years (design period), kips (axle loads), inches (slab thickness), ESALs
//! (18-kip equivalent single-axle loads).
//!
//! # References
//! - AASHTO, *Guide for Design of Pavement Structures*, 1993: Part II §2.1.3 (D_D, D_L
//!   table) and Appendix D (load-equivalency equations). Values from memory in
//!   `tests/fixtures/REFERENCES.md` §5, reproduced by computation where marked.
//! - Transportation Research Board, *Highway Capacity Manual*, 6th ed., 2016 (defaults from
//!   memory, tests/fixtures/REFERENCES.md §3.2; they trace to NCHRP Report 599, 2008).
//! - FHWA *Traffic Monitoring Guide* (TMG) 2013/2016/2022: vehicle classes and groups
//!   (tests/fixtures/REFERENCES.md §4).

pub mod capacity;
pub mod load_equivalency;
pub mod pavement;
pub mod stage;

pub use capacity::{capacity_inputs, CapacityData, CapacityInputs, HvSource, PhfSource};
pub use load_equivalency::{
    lef_flexible, lef_rigid, truck_factor_flexible, truck_factor_rigid, AxleType,
};
pub use pavement::{
    growth_factor, pavement_inputs, HeavyMix, PavementInputs, PavementType, SegmentDesignInput,
};
// The default tables are records (model); re-exported here where designers look for them.
pub use crate::model::design_tables::{
    DesignTables, Facility, HcmDefault, HcmDefaults, LaneDistribution, LaneDistributionRow,
    LoadEquivalency, TruckFactorRow,
};

use thiserror::Error;

/// Errors of the design-input maths.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum DesignError {
    /// An input value is out of its domain.
    #[error("{name} = {value} is not valid: {expected}")]
    BadInput {
        /// The input's name.
        name: &'static str,
        /// Its value.
        value: f64,
        /// The valid domain.
        expected: &'static str,
    },
}

/// Checks that `value` is finite and within `[lo, hi]`.
pub(crate) fn check_range(
    name: &'static str,
    value: f64,
    lo: f64,
    hi: f64,
    expected: &'static str,
) -> Result<f64, DesignError> {
    if value.is_finite() && value >= lo && value <= hi {
        Ok(value)
    } else {
        Err(DesignError::BadInput {
            name,
            value,
            expected,
        })
    }
}
