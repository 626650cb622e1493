//! The design stage: pavement and capacity inputs for every segment from its statistics.
//!
//! Inputs per segment: AADT and heavy share with their intervals, the HPMS class-group split,
//! lanes, the D-factor, and the segment's group growth rate with its interval. The default
//! tables (AASHTO 1993 lane distribution, per-class truck factors, HCM defaults) are the
//! shipped `factors/` files; a study may override them with its own `factors/` copies.

use serde::{Deserialize, Serialize};

use super::{
    capacity_inputs, pavement_inputs, CapacityData, CapacityInputs, DesignTables, Facility,
    HeavyMix, PavementInputs, PavementType, SegmentDesignInput,
};
use crate::factors::stage::FactorOutput;
use crate::model::Network;
use crate::segments::SegmentRow;

/// Settings of the design stage (`[design]` in study.toml).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(default, deny_unknown_fields)]
pub struct DesignParams {
    /// Design period, years. Default 20 (a common pavement design period).
    pub design_years: u32,
    /// `flexible` or `rigid` truck factors. Default flexible.
    pub rigid: bool,
}

impl Default for DesignParams {
    fn default() -> Self {
        DesignParams {
            design_years: 20,
            rigid: false,
        }
    }
}

/// One segment's design inputs.
#[derive(Debug, Clone)]
pub struct DesignRow {
    /// Segment index.
    pub segment: usize,
    /// Pavement inputs, when the segment has a heavy share.
    pub pavement: Option<PavementInputs>,
    /// Capacity inputs, when the segment has K and D.
    pub capacity: Option<CapacityInputs>,
    /// Growth rate used, per year.
    pub growth_rate: f64,
}

/// What the stage reads.
#[derive(Debug, Clone, Copy)]
pub struct DesignInput<'a> {
    /// The network (functional class and area of each segment).
    pub network: &'a Network,
    /// The published segment rows.
    pub segments: &'a [SegmentRow],
    /// The factor groups (growth rate of each segment's group).
    pub factors: &'a FactorOutput,
    /// The default tables (lane distribution, truck factors, HCM defaults).
    pub tables: &'a DesignTables,
}

/// Runs the stage. A segment whose inputs the design maths cannot take (no heavy share, no
/// K or D) gets no pavement or capacity inputs; the stage as a whole cannot fail.
pub fn run(input: &DesignInput, params: &DesignParams) -> Vec<DesignRow> {
    let (data, rows, factors, tables) = (input, input.segments, input.factors, input.tables);
    rows.iter()
        .map(|r| {
            let seg = &data.network.segments[r.segment];
            let group = &factors.groups[factors.segment_group[r.segment]];
            let g = &group.growth;
            let pavement = r.heavy.as_ref().and_then(|h| {
                let su = r.single_unit.as_ref().map_or(0.5 * h.value, |x| x.value);
                let input = SegmentDesignInput {
                    aadt: r.aadt.value,
                    aadt_lo95: r.aadt.lo95,
                    aadt_hi95: r.aadt.hi95,
                    heavy_share: h.value,
                    heavy_share_lo95: h.lo95.min(h.value),
                    heavy_share_hi95: h.hi95.max(h.value),
                    heavy_mix: HeavyMix::Groups {
                        single_unit_fraction: if h.value > 0.0 {
                            (su / h.value).clamp(0.0, 1.0)
                        } else {
                            0.5
                        },
                    },
                    lanes_total: seg.lanes,
                    oneway: seg.oneway,
                    d_factor: None,
                    growth_rate: g.rate,
                    growth_rate_lo95: g.rate_lo95.min(g.rate),
                    growth_rate_hi95: g.rate_hi95.max(g.rate),
                    design_years: params.design_years,
                    pavement: if params.rigid {
                        PavementType::Rigid
                    } else {
                        PavementType::Flexible
                    },
                };
                pavement_inputs(&input, &tables.lanes, &tables.trucks).ok()
            });
            let capacity = r.k.as_ref().zip(r.d.as_ref()).and_then(|(k, d)| {
                let dhv = k.value * r.aadt.value;
                let data = CapacityData {
                    dhv,
                    dhv_lo95: k.lo95 * r.aadt.lo95,
                    dhv_hi95: k.hi95 * r.aadt.hi95,
                    d_factor: d.value,
                    measured_phf: r
                        .phf
                        .as_ref()
                        .filter(|p| p.source == "counter")
                        .map(|p| p.value),
                    measured_heavy_share: r.design_hour_heavy,
                    group_heavy_share: r.heavy.as_ref().map(|h| h.value),
                    facility: Facility::of_functional_class(seg.functional_class.code()),
                    area: seg.area,
                };
                capacity_inputs(&data, &tables.hcm).ok()
            });
            DesignRow {
                segment: r.segment,
                pavement,
                capacity,
                growth_rate: g.rate,
            }
        })
        .collect()
}
