//! The design stage: pavement and capacity inputs for every segment from its statistics.
//!
//! Inputs per segment: AADT and heavy share with their intervals, the HPMS class-group split,
//! lanes, the D-factor, and the segment's group growth rate with its interval. The default
//! tables (AASHTO 1993 lane distribution, per-class truck factors, HCM defaults) are the
//! shipped `factors/` files; a study may override them with its own `factors/` copies.

use serde::{Deserialize, Serialize};

use super::{
    capacity_inputs, pavement_inputs, CapacityData, CapacityInputs, DesignError, DesignTables,
    Facility, HeavyMix, PavementInputs, PavementType, SegmentDesignInput,
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

/// Why a segment has no pavement or capacity inputs.
#[derive(Debug, Clone, PartialEq)]
pub enum DesignGap {
    /// The segment row carries no figure the maths needs (named).
    MissingInput(&'static str),
    /// The design maths refused an input out of its domain.
    Refused(DesignError),
}

impl DesignGap {
    /// Whether the segment lacked a figure (rather than the maths refusing one).
    pub fn is_missing_input(&self) -> bool {
        matches!(self, DesignGap::MissingInput(_))
    }

    /// The gap without its values, for counting kinds.
    pub fn kind(&self) -> String {
        match self {
            DesignGap::MissingInput(what) => format!("no {what}"),
            DesignGap::Refused(DesignError::BadInput { name, .. }) => {
                format!("{name} out of its domain")
            }
        }
    }
}

impl std::fmt::Display for DesignGap {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        match self {
            DesignGap::MissingInput(what) => write!(f, "no {what} for this segment"),
            DesignGap::Refused(e) => write!(f, "{e}"),
        }
    }
}

/// One segment's design inputs.
#[derive(Debug, Clone)]
pub struct DesignRow {
    /// Segment index.
    pub segment: usize,
    /// Pavement inputs, or why there are none.
    pub pavement: Result<PavementInputs, DesignGap>,
    /// Capacity inputs, or why there are none.
    pub capacity: Result<CapacityInputs, DesignGap>,
    /// Growth rate used, per year.
    pub growth_rate: f64,
}

/// What the stage produced.
#[derive(Debug, Clone)]
pub struct DesignOutput {
    /// One row per segment.
    pub rows: Vec<DesignRow>,
    /// Segments handled. Fallbacks: an input the design maths refused, the HCM default
    /// design-hour heavy share. Reported only: a segment without the figures the maths needs
    /// (no heavy share, no K and D: nothing in the study supports them), the HCM default PHF
    /// (the HCM's own advice where no 15-minute data exist).
    pub diagnostics: crate::model::StageDiagnostics,
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
/// K or D, a value out of its domain) gets the reason in place of its pavement or capacity
/// inputs, counted in the diagnostics; the stage as a whole cannot fail.
pub fn run(input: &DesignInput, params: &DesignParams) -> DesignOutput {
    let rows = design_rows(input, params);
    let mut diagnostics = crate::model::StageDiagnostics::new("design", "segments");
    for r in &rows {
        let pavement = r
            .pavement
            .as_ref()
            .err()
            .map(|g| format!("pavement: {}", g.kind()));
        let capacity = r
            .capacity
            .as_ref()
            .err()
            .map(|g| format!("capacity: {}", g.kind()));
        let (hv_default, phf_default) = r.capacity.as_ref().map_or((false, false), |c| {
            (
                c.hv_source == super::HvSource::HcmDefault,
                c.phf_source == super::PhfSource::HcmDefault,
            )
        });
        // A figure the whole study cannot support (no classified count: no heavy share) is a
        // gap the contract allows, reported; an input the maths refuses is a fallback.
        let refused = |g: &DesignGap| matches!(g, DesignGap::Refused(_));
        let pav_refused = r.pavement.as_ref().err().is_some_and(refused);
        let cap_refused = r.capacity.as_ref().err().is_some_and(refused);
        diagnostics.record(
            [
                pavement.as_deref().map(|k| (k, pav_refused)),
                capacity.as_deref().map(|k| (k, cap_refused)),
                hv_default.then_some(("capacity: HCM default design-hour heavy share", true)),
                phf_default.then_some(("capacity: HCM default peak-hour factor", false)),
            ]
            .into_iter()
            .flatten(),
        );
    }
    DesignOutput { rows, diagnostics }
}

fn design_rows(input: &DesignInput, params: &DesignParams) -> Vec<DesignRow> {
    let (data, rows, factors, tables) = (input, input.segments, input.factors, input.tables);
    rows.iter()
        .map(|r| {
            let seg = &data.network.segments[r.segment];
            let group = &factors.groups[factors.segment_group[r.segment]];
            let g = &group.growth;
            let pavement = r
                .heavy
                .as_ref()
                .ok_or(DesignGap::MissingInput("heavy share"))
                .and_then(|h| {
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
                    pavement_inputs(&input, &tables.lanes, &tables.trucks)
                        .map_err(DesignGap::Refused)
                });
            let capacity =
                r.k.as_ref()
                    .zip(r.d.as_ref())
                    .ok_or(DesignGap::MissingInput("K-factor and D-factor"))
                    .and_then(|(k, d)| {
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
                        capacity_inputs(&data, &tables.hcm).map_err(DesignGap::Refused)
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
