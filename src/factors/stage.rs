//! The factor stage: factor groups, their factors and their precision, for every segment.
//!
//! # Method
//! Groups are formed by rule (FHWA functional class x area, with a recreational group for
//! counters whose seasonal amplitude is high; see [`rule_group`]) — the TMG's "traditional"
//! grouping. Segments without a permanent counter take their group from an editable
//! assignment table (functional class, area, optionally route): a route that carries a
//! recreational counter sends its segments to the recreational group (the TMG's "same road"
//! application). Ward clustering of the counters' factor profiles is reported beside the rule
//! groups as a check on them.
//!
//! Each group's day-of-week-by-month factor is the arithmetic mean of its stations' factors
//! (common practice), with the between-station CV per cell. A group without a usable counter
//! borrows the factors of the same road type in the other area, else of every counter; the
//! output says so.
//!
//! # References
//! FHWA *Traffic Monitoring Guide* 2016 §3 (factor groups; from memory); NCHRP Research
//! Report 1124 (2024) on grouping methods.

use std::collections::BTreeMap;

use serde::{Deserialize, Serialize};

use super::groups::{rule_group, FactorProfile, RuleGroup, RuleGroupParams};
use super::growth::{growth_with_fallback, GrowthFit, GrowthObservation, NO_HISTORY_SLOPE_SE};
use super::precision::FactorStats;
use super::{cluster_profiles, ClusterParams, Clustering, GroupSummary};
use super::{FactorError, GroupFactors};
use crate::continuous::stage::{ContinuousOutput, StationStats};
use crate::model::{Area, AssignmentRow, HistoryRecord, Network, StationList};

/// Settings of the factor stage (`[factors]` in study.toml).
#[derive(Debug, Clone, Serialize, Deserialize, PartialEq)]
#[serde(default, deny_unknown_fields)]
pub struct FactorParams {
    /// Grouping by rule.
    pub rule: RuleGroupParams,
    /// Precision a group's factors should reach at 95 % confidence. Default 0.10 (TMG ±10 %).
    pub target_precision: f64,
    /// Largest number of clusters tried by the clustering check. Default 8.
    pub cluster_k_max: usize,
    /// Fewest stations per cluster. Default 3.
    pub cluster_n_min: usize,
    /// Standard error of the yearly log growth when no history exists. Default 0.02.
    pub no_history_slope_se: f64,
    /// Which day-of-week-by-month factors expand short counts (see [`CellFactors`]).
    /// Default `smoothed`.
    pub cell_factors: CellFactors,
    /// Fewest counters whose factors a group averages: a smaller group is pooled with its
    /// neighbouring groups (same area first). Default 2 (a single counter gives no spread).
    pub min_group_counters: usize,
    /// Rural segments within this distance (km, straight line between midpoints) of a
    /// recreational counter, and not sent elsewhere by a route row, join the recreational
    /// group: recreational traffic belongs to places (lakes, coasts, mountains), and the TMG
    /// treats recreational groups as geographic. 0 turns it off. Default 10 (project choice).
    pub recreational_radius_km: f64,
}

/// How the 7 x 12 day-of-week-by-month factors are formed from a counter's year.
///
/// A single cell is the mean of only four or five days, so with few counters per group its
/// day-to-day noise (several per cent) passes straight into every count it expands. The
/// product of the monthly and day-of-week factors (the TMG's `M x D` application) is far less
/// noisy but assumes the weekly pattern is the same in every month. `smoothed`, the default,
/// keeps the product and restores the seasonal difference between working days and weekends:
/// `F_ij = MF_j · DF_i · r_{t(i),j}`, where `r_tj` is the ratio of the mean cell factor to the
/// mean product over the weekdays of type t (Monday-Friday, or Saturday-Sunday) in month j.
#[derive(Debug, Clone, Copy, Serialize, Deserialize, PartialEq, Eq, Default)]
#[serde(rename_all = "snake_case")]
pub enum CellFactors {
    /// The 84 cell factors `F_ij = AADT / MADW_ij` as measured.
    Cell,
    /// `MF_j × DF_i`.
    Product,
    /// The product with a working-day / weekend seasonal correction (default).
    #[default]
    Smoothed,
}

/// A counter's 7 x 12 factors in the chosen form.
#[allow(clippy::needless_range_loop)] // indices i (weekday) and j (month) mirror the formula
pub fn cell_factors(f: &crate::continuous::StationFactors, how: CellFactors) -> [[f64; 12]; 7] {
    let product = |i: usize, j: usize| f.monthly[j] * f.day_of_week[i];
    let mut out = [[0.0; 12]; 7];
    for j in 0..12 {
        for (days, range) in [(5.0, 0..5usize), (2.0, 5..7usize)] {
            let cell: f64 = range.clone().map(|i| f.dow_by_month[i][j]).sum::<f64>() / days;
            let prod: f64 = range.clone().map(|i| product(i, j)).sum::<f64>() / days;
            let r = if prod > 0.0 { cell / prod } else { 1.0 };
            for i in range {
                out[i][j] = match how {
                    CellFactors::Cell => f.dow_by_month[i][j],
                    CellFactors::Product => product(i, j),
                    CellFactors::Smoothed => product(i, j) * r,
                };
            }
        }
    }
    out
}

impl Default for FactorParams {
    fn default() -> Self {
        FactorParams {
            rule: RuleGroupParams::default(),
            target_precision: 0.10,
            cluster_k_max: 8,
            cluster_n_min: 3,
            no_history_slope_se: NO_HISTORY_SLOPE_SE,
            cell_factors: CellFactors::default(),
            recreational_radius_km: 10.0,
            min_group_counters: 2,
        }
    }
}

/// A factor group and everything estimated for it.
#[derive(Debug, Clone)]
pub struct Group {
    /// Name (a [`RuleGroup`] name).
    pub name: String,
    /// Permanent counters in the group (station indices), usable for factors or not.
    pub members: Vec<usize>,
    /// The counters whose factors were averaged (its own, or borrowed ones).
    pub factor_stations: Vec<usize>,
    /// Where the factors came from: `own`, or `borrowed from <group>`.
    pub source: String,
    /// Factors for expansion.
    pub factors: Option<GroupFactors>,
    /// Heavy-vehicle factors, from classifying counters.
    pub heavy_factors: Option<GroupFactors>,
    /// Monthly and weekday factor statistics with precision.
    pub summary: Option<GroupSummary>,
    /// Axle-correction factor (mean of station factors) and its CV.
    pub acf: Option<(f64, f64)>,
    /// Growth fit.
    pub growth: GrowthFit,
    /// K30 over the group's counters.
    pub k30: Option<FactorStats>,
    /// D over the group's counters (measured splits only).
    pub d: Option<FactorStats>,
    /// Peak-hour factor over counters with 15-minute data.
    pub phf: Option<FactorStats>,
    /// Heavy share over classifying counters.
    pub heavy_share: Option<FactorStats>,
    /// Single-unit share over classifying counters.
    pub single_unit_share: Option<FactorStats>,
    /// Combination share over classifying counters.
    pub combination_share: Option<FactorStats>,
    /// Mean weekday hourly distribution (shares of the day per clock hour) of its counters.
    pub weekday_profile: Option<[f64; 24]>,
    /// K30 over the mean working-day peak-hour share, per counter: relates a short count's
    /// own peak hour to the design hour (the group's ranked-hour curve at rank 30).
    pub peak_ratio: Option<FactorStats>,
}

/// What the stage produced.
#[derive(Debug, Clone)]
pub struct FactorOutput {
    /// Groups, in a stable order.
    pub groups: Vec<Group>,
    /// Group index of every segment.
    pub segment_group: Vec<usize>,
    /// Rule group and cluster label of each permanent counter with a factor profile.
    pub station_groups: Vec<StationGroup>,
    /// The clustering check, when there were enough counters.
    pub clustering: Option<Clustering>,
    /// The assignment table used.
    pub assignment: Vec<AssignmentRow>,
    /// Segments grouped, and those that fell to the default group because no assignment row
    /// matched them.
    pub diagnostics: crate::model::StageDiagnostics,
}

/// A permanent counter's grouping.
#[derive(Debug, Clone)]
pub struct StationGroup {
    /// Station index.
    pub station: usize,
    /// Its factor profile.
    pub profile: FactorProfile,
    /// Group index.
    pub group: usize,
    /// Ward cluster label, when clustering ran.
    pub cluster: Option<usize>,
}

impl FactorOutput {
    /// Group index by name.
    pub fn group_index(&self, name: &str) -> Option<usize> {
        self.groups.iter().position(|g| g.name == name)
    }
}

/// Cell-wise mean and between-station CV of several counters' 7 x 12 factor tables.
fn average_tables(f: &[[[f64; 12]; 7]]) -> Option<GroupFactors> {
    if f.is_empty() {
        return None;
    }
    let mut out = GroupFactors::flat(None, f.len());
    for i in 0..7 {
        for j in 0..12 {
            let v: Vec<f64> = f.iter().map(|x| x[i][j]).collect();
            if let Some(st) = FactorStats::from_values(&v) {
                out.dow_month[i][j] = st.mean;
                out.dow_month_cv[i][j] = (st.n >= 2).then_some(st.cv);
            }
        }
    }
    Some(out)
}

/// Group factors for expansion from a set of counters: the cell-wise mean of their 7 x 12
/// factors, the between-station CV per cell, and the pooled day-to-day CV.
pub fn group_factors(stats: &[&StationStats], how: CellFactors) -> Option<GroupFactors> {
    let f: Vec<[[f64; 12]; 7]> = stats
        .iter()
        .filter_map(|s| s.aadt.factors())
        .map(|f| cell_factors(&f, how))
        .collect();
    let mut out = average_tables(&f)?;
    let cvs: Vec<f64> = stats.iter().filter_map(|s| s.day_cv).collect();
    if !cvs.is_empty() {
        out.day_cv = Some((cvs.iter().map(|c| c * c).sum::<f64>() / cvs.len() as f64).sqrt());
    }
    Some(out)
}

/// Heavy-vehicle group factors from classifying counters.
fn heavy_group_factors(stats: &[&StationStats], how: CellFactors) -> Option<GroupFactors> {
    let f: Vec<[[f64; 12]; 7]> = stats
        .iter()
        .filter_map(|s| s.classes.as_ref()?.heavy_factors())
        .map(|f| cell_factors(&f, how))
        .collect();
    average_tables(&f)
}

/// The default assignment table: one row per class and area, plus a row per route and area
/// that carries permanent counters, giving the group most of them are in.
pub fn default_assignment(
    net: &Network,
    station_groups: &[(usize, RuleGroup)],
    params: &FactorParams,
) -> Vec<AssignmentRow> {
    let mut rows = Vec::new();
    for fc in 1..=7u8 {
        for area in [Area::Urban, Area::Rural] {
            let g = rule_group(fc, area, None, &params.rule).expect("valid class");
            rows.push(AssignmentRow {
                route: None,
                functional_class: Some(fc),
                area: Some(area),
                group: g.name().to_string(),
            });
        }
    }
    // The TMG's "same road" application: a route keeps the group of the counters on it, per
    // area (a route that runs from town into the country changes pattern at the boundary).
    let mut by_route: BTreeMap<(String, Area), BTreeMap<&'static str, usize>> = BTreeMap::new();
    for (seg, g) in station_groups {
        let s = &net.segments[*seg];
        if let Some(r) = &s.route {
            *by_route
                .entry((r.clone(), s.area))
                .or_default()
                .entry(g.name())
                .or_default() += 1;
        }
    }
    for ((route, area), votes) in by_route {
        let group = votes
            .iter()
            .max_by_key(|(name, n)| (**n, std::cmp::Reverse(**name)))
            .map(|(name, _)| name.to_string())
            .expect("a route with counters has votes");
        rows.push(AssignmentRow {
            route: Some(route),
            functional_class: None,
            area: Some(area),
            group,
        });
    }
    rows
}

/// The group name the table gives a segment: a matching route row first, then the class and
/// area row.
pub fn assigned_group<'a>(rows: &'a [AssignmentRow], net: &Network, seg: usize) -> Option<&'a str> {
    let s = &net.segments[seg];
    let fits = |r: &AssignmentRow| {
        r.functional_class
            .is_none_or(|c| c == s.functional_class.code())
            && r.area.is_none_or(|a| a == s.area)
    };
    rows.iter()
        .find(|r| r.route.is_some() && r.route == s.route && fits(r))
        .or_else(|| rows.iter().find(|r| r.route.is_none() && fits(r)))
        .map(|r| r.group.as_str())
}

fn stats_of(values: impl Iterator<Item = f64>) -> Option<FactorStats> {
    let v: Vec<f64> = values.filter(|x| x.is_finite()).collect();
    FactorStats::from_values(&v)
}

/// What the stage reads.
#[derive(Debug, Clone, Copy)]
pub struct FactorInput<'a> {
    /// The network (class, area and route of every segment).
    pub network: &'a Network,
    /// Every station.
    pub stations: &'a StationList,
    /// Published AADT of earlier years, for growth.
    pub history: &'a [HistoryRecord],
    /// The permanent counters' statistics.
    pub continuous: &'a ContinuousOutput,
    /// The study year.
    pub year: i32,
    /// The study's group assignment table, which overrides the default one.
    pub assignment: Option<&'a [AssignmentRow]>,
}

/// Runs the stage. Fails only on a functional class the grouping rule does not know.
pub fn run(input: &FactorInput, params: &FactorParams) -> Result<FactorOutput, FactorError> {
    let (data, cont, year) = (input, input.continuous, input.year);
    let net = input.network;
    let seg_of = |st: usize| data.stations.stations[st].segment;
    // 1. Rule group of every permanent counter (its own profile decides recreational).
    let mut counter_groups: Vec<(usize, RuleGroup, Option<FactorProfile>)> = Vec::new();
    for s in &cont.stations {
        let seg = &net.segments[seg_of(s.station)];
        let profile = s.aadt.factors().map(|f| {
            FactorProfile::from_factors(data.stations.stations[s.station].id.as_str(), &f)
        });
        let g = rule_group(
            seg.functional_class.code(),
            seg.area,
            profile.as_ref(),
            &params.rule,
        )?;
        counter_groups.push((s.station, g, profile));
    }
    let seg_groups: Vec<(usize, RuleGroup)> = counter_groups
        .iter()
        .map(|(st, g, _)| (seg_of(*st), *g))
        .collect();
    let assignment = input.assignment.map_or_else(
        || default_assignment(net, &seg_groups, params),
        <[_]>::to_vec,
    );
    // 2. Group of every segment: its counter's group, else the table's.
    let mut names: Vec<String> = RuleGroup::ALL
        .iter()
        .map(|g| g.name().to_string())
        .collect();
    for r in &assignment {
        if !names.contains(&r.group) {
            names.push(r.group.clone());
        }
    }
    let index_of = |n: &str| names.iter().position(|x| x == n);
    let mut segment_group = vec![usize::MAX; net.segments.len()];
    for (seg, g) in &seg_groups {
        segment_group[*seg] = index_of(g.name()).expect("rule groups are named");
    }
    let mids = net.midpoints_km();
    let rec_sites: Vec<[f64; 2]> = seg_groups
        .iter()
        .filter(|(_, g)| *g == RuleGroup::Recreational)
        .map(|(seg, _)| mids[*seg])
        .collect();
    let near_recreation = |i: usize| {
        net.segments[i].area == Area::Rural
            && rec_sites.iter().any(|p| {
                (p[0] - mids[i][0]).hypot(p[1] - mids[i][1]) <= params.recreational_radius_km
            })
    };
    let mut diagnostics = crate::model::StageDiagnostics::new("factors", "segments");
    for (i, sg) in segment_group.iter_mut().enumerate() {
        let mut by_default = false;
        if *sg == usize::MAX {
            let s = &net.segments[i];
            let route_row = assignment.iter().any(|r| {
                r.route.is_some() && r.route == s.route && r.area.is_none_or(|a| a == s.area)
            });
            let name = if !route_row && near_recreation(i) {
                RuleGroup::Recreational.name()
            } else {
                assigned_group(&assignment, net, i).unwrap_or_else(|| {
                    by_default = true;
                    RuleGroup::ArterialUrban.name()
                })
            };
            *sg = index_of(name).expect("assignment groups are named");
        }
        diagnostics.record(
            by_default.then_some(("no assignment row: default group arterial_urban", true)),
        );
    }
    // 3. Members and estimates.
    let by_station: BTreeMap<usize, &StationStats> =
        cont.stations.iter().map(|s| (s.station, s)).collect();
    let members: Vec<Vec<usize>> = (0..names.len())
        .map(|g| {
            counter_groups
                .iter()
                .filter(|(st, _, _)| segment_group[seg_of(*st)] == g)
                .map(|(st, _, _)| *st)
                .collect()
        })
        .collect();
    let usable = |st: &usize| by_station[st].aadt.sufficiency.usable_for_factors();
    let all_usable: Vec<usize> = by_station.keys().copied().filter(usable).collect();
    let network_obs = growth_observations(data, cont, year, None, &segment_group);
    let mut groups = Vec::new();
    for (g, name) in names.iter().enumerate() {
        let own: Vec<usize> = members[g].iter().copied().filter(usable).collect();
        // A group with too few counters of its own is pooled with its neighbours (in
        // [`borrow_order`]) until it has `min_group_counters`; with none anywhere near, with
        // every counter.
        let mut factor_stations = own.clone();
        let mut pooled: Vec<&str> = Vec::new();
        for o in borrow_order(name) {
            if factor_stations.len() >= params.min_group_counters {
                break;
            }
            if let Some(oi) = index_of(o) {
                let st: Vec<usize> = members[oi].iter().copied().filter(usable).collect();
                if !st.is_empty() {
                    factor_stations.extend(st);
                    pooled.push(o);
                }
            }
        }
        let source = if factor_stations.is_empty() {
            factor_stations = all_usable.clone();
            "borrowed from all counters".to_string()
        } else if pooled.is_empty() {
            "own".to_string()
        } else if own.is_empty() {
            format!("borrowed from {}", pooled.join(" + "))
        } else {
            format!("own pooled with {}", pooled.join(" + "))
        };
        let fstats: Vec<&StationStats> = factor_stations.iter().map(|s| by_station[s]).collect();
        let profiles: Vec<&FactorProfile> = counter_groups
            .iter()
            .filter(|(st, _, _)| factor_stations.contains(st))
            .filter_map(|(_, _, p)| p.as_ref())
            .collect();
        let summary = GroupSummary::new(&profiles, params.target_precision).ok();
        let acfs: Vec<f64> = fstats.iter().filter_map(|s| station_acf(s)).collect();
        let acf = stats_of(acfs.into_iter()).map(|s| (s.mean, if s.n >= 2 { s.cv } else { 0.05 }));
        let obs = growth_observations(data, cont, year, Some(g), &segment_group);
        let growth = growth_with_fallback(&obs, &network_obs, params.no_history_slope_se)
            .unwrap_or_else(|_| GrowthFit::no_history(params.no_history_slope_se));
        groups.push(Group {
            name: name.clone(),
            members: members[g].clone(),
            factor_stations,
            source,
            factors: group_factors(&fstats, params.cell_factors),
            heavy_factors: heavy_group_factors(&fstats, params.cell_factors),
            summary,
            acf,
            growth,
            k30: stats_of(
                fstats
                    .iter()
                    .filter_map(|s| s.design.as_ref().map(|d| d.k30)),
            ),
            d: stats_of(
                fstats
                    .iter()
                    .filter(|s| s.d_measured)
                    .filter_map(|s| s.design.as_ref().map(|d| d.d)),
            ),
            phf: stats_of(fstats.iter().filter_map(|s| s.phf)),
            heavy_share: stats_of(
                fstats
                    .iter()
                    .filter_map(|s| s.classes.as_ref()?.heavy_share),
            ),
            single_unit_share: stats_of(
                fstats
                    .iter()
                    .filter_map(|s| s.classes.as_ref()?.single_unit_share),
            ),
            combination_share: stats_of(
                fstats
                    .iter()
                    .filter_map(|s| s.classes.as_ref()?.combination_share),
            ),
            weekday_profile: mean_profile(&fstats),
            peak_ratio: stats_of(fstats.iter().filter_map(|s| {
                Some(s.design.as_ref()?.k30 / s.daily_peak_share.filter(|p| *p > 0.0)?)
            })),
        });
    }
    // 4. Clustering check.
    let profiles: Vec<FactorProfile> = counter_groups
        .iter()
        .filter_map(|(_, _, p)| p.clone())
        .collect();
    let cparams = ClusterParams {
        k_max: params.cluster_k_max,
        n_min: params.cluster_n_min,
        ..ClusterParams::default()
    };
    let clustering = (profiles.len() >= 2 * params.cluster_n_min)
        .then(|| cluster_profiles(&profiles, &cparams).ok())
        .flatten();
    let mut k = 0;
    let station_groups = counter_groups
        .iter()
        .filter_map(|(st, _, p)| {
            let p = p.clone()?;
            let cluster = clustering.as_ref().map(|c| c.labels[k]);
            k += 1;
            Some(StationGroup {
                station: *st,
                profile: p,
                group: segment_group[seg_of(*st)],
                cluster,
            })
        })
        .collect();
    Ok(FactorOutput {
        groups,
        segment_group,
        station_groups,
        clustering,
        assignment,
        diagnostics,
    })
}

/// Typical axles per vehicle of each FHWA class, from the class definitions (classes that
/// span a range take a value inside it: 4 buses 2.2, 7 "four or more" 4, 8 "four or fewer" 3.5,
/// 10 "six or more" 6, 11 "five or fewer" 5, 13 "seven or more" 7). Common practice, used only
/// when a counter records classes but not axles.
pub const AXLES_PER_CLASS: [f64; 13] = [
    2.0, 2.0, 2.0, 2.2, 2.0, 3.0, 4.0, 3.5, 5.0, 6.0, 5.0, 6.0, 7.0,
];

/// A counter's axle-correction factor, vehicles per axle pair (TMG: ACF = vehicles / (axles / 2)):
/// from vehicles and axles counted together where it has both, else from its class mix and
/// [`AXLES_PER_CLASS`].
pub fn station_acf(s: &StationStats) -> Option<f64> {
    if let Some(a) = s.axles.and_then(|a| a.acf()) {
        return Some(a);
    }
    let c = s.classes.as_ref()?;
    let (mut veh, mut axles) = (0.0, 0.0);
    for (k, v) in c.per_class.iter().enumerate() {
        if let Some(v) = v {
            veh += v;
            axles += v * AXLES_PER_CLASS[k];
        }
    }
    crate::continuous::axle_correction_factor(veh, axles)
}

/// The mean weekday hourly distribution of a set of counters.
fn mean_profile(stats: &[&StationStats]) -> Option<[f64; 24]> {
    let p: Vec<&[f64; 24]> = stats
        .iter()
        .filter_map(|s| s.distribution.as_ref()?.shares[0].as_ref())
        .collect();
    if p.is_empty() {
        return None;
    }
    let mut out = [0.0; 24];
    for q in &p {
        for (o, v) in out.iter_mut().zip(q.iter()) {
            *o += v / p.len() as f64;
        }
    }
    Some(out)
}

/// Where a group without a usable counter borrows its factors, in order: the neighbouring
/// road types of the same area first (the urban/rural split separates commuter from intercity
/// patterns more than road type does), then the same road type in the other area.
fn borrow_order(name: &str) -> Vec<&'static str> {
    use RuleGroup::*;
    let urban = [FreewayUrban, ArterialUrban, CollectorLocalUrban];
    let rural = [FreewayRural, ArterialRural, CollectorLocalRural];
    for (same, other) in [(urban, rural), (rural, urban)] {
        if let Some(k) = same.iter().position(|g| g.name() == name) {
            let mut order: Vec<usize> = (0..3).filter(|&j| j != k).collect();
            order.sort_by_key(|&j| (j as i64 - k as i64).abs());
            let mut out: Vec<&'static str> = order.iter().map(|&j| same[j].name()).collect();
            out.push(other[k].name());
            return out;
        }
    }
    Vec::new()
}

/// Growth observations: published AADT of earlier years (history.csv) and this year's
/// permanent-counter AADT, per segment; for one group, or for all when `group` is None.
fn growth_observations(
    data: &FactorInput,
    cont: &ContinuousOutput,
    year: i32,
    group: Option<usize>,
    segment_group: &[usize],
) -> Vec<GrowthObservation> {
    let keep = |seg: usize| group.is_none_or(|g| segment_group[seg] == g);
    let mut obs: Vec<GrowthObservation> = data
        .history
        .iter()
        .filter(|h| keep(h.segment) && h.year != year)
        .map(|h| GrowthObservation {
            unit: data.network.segments[h.segment].id.0.clone(),
            year: h.year,
            aadt: h.aadt,
        })
        .collect();
    for s in &cont.stations {
        let seg = data.stations.stations[s.station].segment;
        if keep(seg) && s.aadt.sufficiency.usable_for_factors() {
            let unit = data.network.segments[seg].id.0.clone();
            if !obs.iter().any(|o| o.unit == unit && o.year == year) {
                obs.push(GrowthObservation {
                    unit,
                    year,
                    aadt: s.aadt_value,
                });
            }
        }
    }
    obs.sort_by(|a, b| (&a.unit, a.year).cmp(&(&b.unit, b.year)));
    obs
}
