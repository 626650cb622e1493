//! Capacity-analysis inputs per segment: DDHV with its 95 % interval, peak hour factor and
//! design-hour heavy-vehicle share, each saying whether it was measured or a default.
//!
//! # Method
//! - `DDHV = DHV · D` (tests/fixtures/REFERENCES.md §3.1; AASHTO Green Book ch. 2). Its interval is the DHV
//!   interval times `D`: `D` is taken as known, since it comes from the same design hour
//!   as DHV and, on a one-way segment, is exactly 1.
//! - PHF: the measured value (`V_hour / (4 · V_15max)` from 15-minute data, computed by the
//!   continuous stage) where given; otherwise the HCM default for the facility and area
//!   ([`HcmDefaults`], HCM 6th ed., from memory), marked [`PhfSource::HcmDefault`].
//! - Design-hour heavy share: measured (the design hour's own classified count), else the
//!   factor group's design-hour heavy share, else the HCM default, marked accordingly.
//!
//! # Units
//! Vehicles/hour (DHV, DDHV); PHF and shares are fractions.
//!
//! # References
//! - TRB, *Highway Capacity Manual*, 6th ed., 2016 (defaults from memory; tests/fixtures/REFERENCES.md §3.2).
//! - AASHTO, *A Policy on Geometric Design of Highways and Streets*, ch. 2 (K, D, DHV).

use super::{check_range, DesignError};
use crate::model::design_tables::{Facility, HcmDefaults};
use crate::model::Area;

/// Where a peak hour factor came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum PhfSource {
    /// Measured from the segment's own 15-minute data.
    Measured,
    /// The HCM default for the facility and area type.
    HcmDefault,
}

impl PhfSource {
    /// Spelling for output tables.
    pub fn as_str(self) -> &'static str {
        match self {
            PhfSource::Measured => "measured",
            PhfSource::HcmDefault => "hcm_default",
        }
    }
}

/// Where a design-hour heavy-vehicle share came from.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum HvSource {
    /// Measured in the segment's own design hour.
    Measured,
    /// The factor group's design-hour heavy share.
    Group,
    /// The HCM default for the facility and area type.
    HcmDefault,
}

impl HvSource {
    /// Spelling for output tables.
    pub fn as_str(self) -> &'static str {
        match self {
            HvSource::Measured => "measured",
            HvSource::Group => "group",
            HvSource::HcmDefault => "hcm_default",
        }
    }
}

/// What is known about a segment's design hour.
#[derive(Debug, Clone, PartialEq)]
pub struct CapacityData {
    /// Design-hour volume (both directions), vehicles/hour.
    pub dhv: f64,
    /// Lower end of its 95 % interval.
    pub dhv_lo95: f64,
    /// Upper end of its 95 % interval.
    pub dhv_hi95: f64,
    /// Heavier direction's share of the design hour (1 on one-way segments).
    pub d_factor: f64,
    /// PHF measured from 15-minute data, if any.
    pub measured_phf: Option<f64>,
    /// Heavy share measured in the design hour, if any.
    pub measured_heavy_share: Option<f64>,
    /// Design-hour heavy share of the segment's factor group, if any.
    pub group_heavy_share: Option<f64>,
    /// Facility kind for the HCM default.
    pub facility: Facility,
    /// Area type for the HCM default.
    pub area: Area,
}

/// Capacity-analysis inputs of one segment.
#[derive(Debug, Clone, PartialEq)]
pub struct CapacityInputs {
    /// Directional design-hour volume, vehicles/hour.
    pub ddhv: f64,
    /// Lower end of its 95 % interval.
    pub ddhv_lo95: f64,
    /// Upper end of its 95 % interval.
    pub ddhv_hi95: f64,
    /// Peak hour factor.
    pub phf: f64,
    /// Where the PHF came from.
    pub phf_source: PhfSource,
    /// Heavy-vehicle share in the design hour, fraction.
    pub design_hour_heavy_share: f64,
    /// Where the heavy share came from.
    pub hv_source: HvSource,
}

/// Capacity-analysis inputs from what is known of the design hour.
///
/// ```
/// use roadtally::design::{capacity_inputs, CapacityData, Facility, HcmDefaults, PhfSource};
/// use roadtally::model::Area;
/// let data = CapacityData {
///     dhv: 1500.0, dhv_lo95: 1400.0, dhv_hi95: 1600.0, d_factor: 0.6,
///     measured_phf: None, measured_heavy_share: None, group_heavy_share: Some(0.08),
///     facility: Facility::Freeway, area: Area::Urban,
/// };
/// let c = capacity_inputs(&data, &HcmDefaults::hcm6()).unwrap();
/// assert!((c.ddhv - 900.0).abs() < 1e-9);
/// assert_eq!((c.phf, c.phf_source), (0.94, PhfSource::HcmDefault));
/// ```
pub fn capacity_inputs(
    data: &CapacityData,
    defaults: &HcmDefaults,
) -> Result<CapacityInputs, DesignError> {
    check_range("dhv", data.dhv, 0.0, f64::MAX, "a finite volume >= 0")?;
    check_range("dhv_lo95", data.dhv_lo95, 0.0, data.dhv, "in [0, dhv]")?;
    check_range(
        "dhv_hi95",
        data.dhv_hi95,
        data.dhv,
        f64::MAX,
        "at least dhv",
    )?;
    check_range("d_factor", data.d_factor, 0.0, 1.0, "a fraction in [0, 1]")?;
    let default = defaults.get(data.facility, data.area);
    let (phf, phf_source) = match data.measured_phf {
        Some(p) => (
            check_range("measured_phf", p, 0.25, 1.0, "a PHF in [0.25, 1]")?,
            PhfSource::Measured,
        ),
        None => (default.phf, PhfSource::HcmDefault),
    };
    let share = |name, v| check_range(name, v, 0.0, 1.0, "a fraction in [0, 1]");
    let (hv, hv_source) = match (data.measured_heavy_share, data.group_heavy_share) {
        (Some(h), _) => (share("measured_heavy_share", h)?, HvSource::Measured),
        (None, Some(h)) => (share("group_heavy_share", h)?, HvSource::Group),
        (None, None) => (default.heavy_share, HvSource::HcmDefault),
    };
    Ok(CapacityInputs {
        ddhv: data.dhv * data.d_factor,
        ddhv_lo95: data.dhv_lo95 * data.d_factor,
        ddhv_hi95: data.dhv_hi95 * data.d_factor,
        phf,
        phf_source,
        design_hour_heavy_share: hv,
        hv_source,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use approx::assert_relative_eq;

    fn data() -> CapacityData {
        // References §3.3: AADT 10,000, V30 1,500, 900 in the peak direction → D 0.60, DDHV 900.
        CapacityData {
            dhv: 1500.0,
            dhv_lo95: 1350.0,
            dhv_hi95: 1700.0,
            d_factor: 0.6,
            measured_phf: Some(1000.0 / (4.0 * 300.0)),
            measured_heavy_share: Some(0.10),
            group_heavy_share: Some(0.07),
            facility: Facility::Freeway,
            area: Area::Rural,
        }
    }

    #[test]
    fn measured_values_are_used_and_marked() {
        let c = capacity_inputs(&data(), &HcmDefaults::hcm6()).unwrap();
        assert_relative_eq!(c.ddhv, 900.0, max_relative = 1e-12);
        assert_relative_eq!(c.ddhv_lo95, 810.0, max_relative = 1e-12);
        assert_relative_eq!(c.ddhv_hi95, 1020.0, max_relative = 1e-12);
        // References §3.3: 15-min counts 220/240/300/240 → PHF 0.8333.
        assert_relative_eq!(c.phf, 0.8333, max_relative = 1e-4);
        assert_eq!(c.phf_source, PhfSource::Measured);
        assert_relative_eq!(c.design_hour_heavy_share, 0.10, max_relative = 1e-12);
        assert_eq!(c.hv_source.as_str(), "measured");
    }

    /// HCM 6th ed. defaults (from memory, tests/fixtures/REFERENCES.md §3.2): rural freeway PHF 0.88, heavy
    /// vehicles 12 %; urban other roads PHF 0.92.
    #[test]
    fn hcm_defaults_fill_gaps_and_are_marked() {
        let d = HcmDefaults::hcm6();
        let mut x = data();
        x.measured_phf = None;
        x.measured_heavy_share = None;
        let c = capacity_inputs(&x, &d).unwrap();
        assert_relative_eq!(c.phf, 0.88, max_relative = 1e-12);
        assert_eq!(c.phf_source.as_str(), "hcm_default");
        assert_relative_eq!(c.design_hour_heavy_share, 0.07, max_relative = 1e-12);
        assert_eq!(c.hv_source, HvSource::Group);
        x.group_heavy_share = None;
        x.facility = Facility::Other;
        x.area = Area::Urban;
        let c = capacity_inputs(&x, &d).unwrap();
        assert_relative_eq!(c.phf, 0.92, max_relative = 1e-12);
        assert_relative_eq!(c.design_hour_heavy_share, 0.05, max_relative = 1e-12);
        assert_eq!(c.hv_source, HvSource::HcmDefault);
    }

    #[test]
    fn bad_inputs_are_errors() {
        let d = HcmDefaults::hcm6();
        let mut x = data();
        x.d_factor = 1.2;
        assert!(capacity_inputs(&x, &d).is_err());
        let mut x = data();
        x.measured_phf = Some(1.3);
        assert!(capacity_inputs(&x, &d).is_err());
        let mut x = data();
        x.dhv_lo95 = 2000.0;
        assert!(capacity_inputs(&x, &d).is_err());
    }
}
